"""Tests of calcs.solar.

Outside references used here:
- the TMY3 file bundled with pvlib (723170TYA.CSV, Greensboro NC), read with
  pvlib.iotools.read_tmy3: an open data set;
- pvlib called directly in the test, from the file's own hour-ending
  time stamps, as an oracle for sun position and transposition;
- hand-computed shadow geometry, and the textbook view factor of two
  perpendicular plates sharing an edge (Incropera & DeWitt, Fundamentals of
  Heat and Mass Transfer, Table 13.1 [MEM]) and Hottel's crossed-string rule
  [MEM] for the diffuse factors.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest
from numpy.testing import assert_allclose
from pvlib.iotools import read_tmy3

from calcs import solar
from calcs.errors import ProjectError

TMY3 = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"


@pytest.fixture(scope="module")
def tmy():
    """TMY3 weather on hour-start naive local standard time labels.

    read_tmy3 labels each hour by its END (01:00 = 00:00–01:00) in the file's
    fixed offset; coerce_year makes the year monotonic.
    """
    data, meta = read_tmy3(TMY3, coerce_year=2023, map_variables=True)
    index = (data.index - pd.Timedelta(hours=1)).tz_localize(None)
    weather = data.set_axis(index)
    pos = solar.solar_position(
        index, meta["latitude"], meta["longitude"], meta["TZ"], meta["altitude"]
    )
    return {"raw": data, "meta": meta, "index": index, "weather": weather, "pos": pos}


def _oracle(raw, meta, surface_azimuth, surface_tilt, model):
    """pvlib directly, from the file's hour-ending stamps minus 30 minutes."""
    times = raw.index - pd.Timedelta(minutes=30)
    sp = pvlib.solarposition.get_solarposition(
        times, meta["latitude"], meta["longitude"], altitude=meta["altitude"]
    )
    zen, azi = sp["apparent_zenith"].to_numpy(), sp["azimuth"].to_numpy()
    kwargs = {}
    if model in ("perez", "haydavies"):
        kwargs["dni_extra"] = pvlib.irradiance.get_extra_radiation(times.day_of_year.to_numpy())
    if model == "perez":
        kwargs["airmass"] = pvlib.atmosphere.get_relative_airmass(zen)
    # plain arrays: the weather (hour-end stamps) and the sun (midpoints) must
    # not be aligned by pandas on their differing labels
    irr = pvlib.irradiance.get_total_irradiance(
        surface_tilt, surface_azimuth, zen, azi,
        raw["dni"].to_numpy(), raw["ghi"].to_numpy(), raw["dhi"].to_numpy(),
        albedo=0.2, model=model, **kwargs,
    )
    irr = {k: np.asarray(v, dtype=float) for k, v in irr.items()}
    aoi = np.asarray(pvlib.irradiance.aoi(surface_tilt, surface_azimuth, zen, azi))
    return sp, irr, aoi


# --------------------------------------------------------------------------
# solar position
# --------------------------------------------------------------------------
def test_solar_position_matches_pvlib_at_hour_midpoints(tmy):
    # oracle: pvlib SPA at (hour end - 30 min) from the TMY3 file's own stamps
    sp, _, _ = _oracle(tmy["raw"], tmy["meta"], 180, 90, "isotropic")
    pos = tmy["pos"]
    assert pos.index.equals(tmy["index"])
    assert list(pos.columns) == ["apparent_zenith", "zenith", "azimuth", "elevation"]
    for col in pos.columns:
        assert_allclose(pos[col].to_numpy(), sp[col].to_numpy(), atol=1e-6)


def test_solar_position_june_solstice_noon(tmy):
    # hand: max altitude = 90 - latitude + declination, declination 23.44° at
    # the June solstice (Earth's obliquity [MEM]); the hourly midpoint misses
    # solar noon by <= 30 min, tolerance 1°.
    pos = tmy["pos"].loc["2023-06-21"]
    lat = tmy["meta"]["latitude"]
    assert_allclose(pos["elevation"].max(), 90 - lat + 23.44, atol=1.0)
    # hand: solar noon at longitude -79.95 in UTC-5 is about 12:20 local
    # standard time (4 min per degree west of -75°, equation of time ~ -1.6 min
    # on 21 June [MEM]); the nearest midpoint is 12:30, the hour starting 12:00.
    assert pos["elevation"].idxmax() == pd.Timestamp("2023-06-21 12:00")


@pytest.mark.parametrize(
    "kwargs, word",
    [
        ({"latitude": 95}, "latitude"),
        ({"longitude": -200}, "longitude"),
        ({"utc_offset": 15}, "utc_offset"),
        ({"elevation": "high"}, "elevation"),
    ],
)
def test_solar_position_bad_arguments(kwargs, word):
    idx = pd.date_range("2023-01-01", periods=3, freq="h")
    args = {"latitude": 50, "longitude": 0, "utc_offset": 0} | kwargs
    with pytest.raises(ProjectError, match=word):
        solar.solar_position(idx, **args)


def test_solar_position_rejects_tz_aware_and_non_datetime_index():
    idx = pd.date_range("2023-01-01", periods=3, freq="h", tz="UTC")
    with pytest.raises(ProjectError, match="naive"):
        solar.solar_position(idx, 50, 0, 0)
    with pytest.raises(ProjectError, match="DatetimeIndex"):
        solar.solar_position(pd.RangeIndex(3), 50, 0, 0)


# --------------------------------------------------------------------------
# façade irradiance
# --------------------------------------------------------------------------
@pytest.mark.parametrize("model", ["perez", "haydavies", "isotropic"])
@pytest.mark.parametrize("surface_azimuth", [180, 90], ids=["south", "east"])
def test_facade_irradiance_matches_pvlib(tmy, model, surface_azimuth):
    w = tmy["weather"]
    res = solar.facade_irradiance(
        tmy["index"], w["ghi"], w["dni"], w["dhi"], tmy["pos"], surface_azimuth, model=model
    )
    _, irr, aoi = _oracle(tmy["raw"], tmy["meta"], surface_azimuth, 90, model)
    dhi0 = tmy["raw"]["dhi"].to_numpy() == 0
    pairs = {
        "poa_global": "poa_global",
        "poa_direct": "poa_direct",
        "poa_sky_diffuse": "poa_sky_diffuse",
        "poa_ground": "poa_ground_diffuse",
        "poa_diffuse": "poa_diffuse",
    }
    for ours, theirs in pairs.items():
        expected = irr[theirs]
        # pvlib's Perez is 0/0 (NaN) where dhi = 0; nowhere else may it be NaN
        assert not np.isnan(expected[~dhi0]).any()
        expected = np.where(dhi0 & np.isnan(expected), res[ours].to_numpy(), expected)
        got = res[ours].to_numpy()
        # annual sums within 0.5 % (brief), hourly within 0.01 W m⁻²
        assert_allclose(got.sum(), expected.sum(), rtol=0.005)
        assert_allclose(got, expected, atol=0.01)
    assert_allclose(res["aoi"].to_numpy(), aoi, atol=1e-6)
    # where dhi = 0 every sky model gives zero sky diffuse
    assert_allclose(res["poa_sky_diffuse"].to_numpy()[dhi0], 0.0, atol=0)
    assert res.attrs["sky_model"] == model
    assert res.attrs["sky_model_source"] == solar.SKY_DIFFUSE_MODELS[model]
    assert not res.drop(columns="beam_with_sun_down").isna().any().any()


def test_horizontal_closure_checks_time_convention(tmy):
    # The TMY3 components close: ghi ≈ dni·cos(zenith) + dhi with the sun at
    # the hour midpoint (a property of the data set). A horizontal plane with
    # the isotropic model must give back the file's ghi. A 30-minute error in
    # the time convention gives ~9 W m⁻² mean error and a ~5 % morning /
    # afternoon bias, so these tolerances catch it.
    w = tmy["weather"]
    res = solar.facade_irradiance(
        tmy["index"], w["ghi"], w["dni"], w["dhi"], tmy["pos"], 180,
        surface_tilt=0, model="isotropic",
    )
    err = res["poa_global"] - w["ghi"]
    assert err.abs().mean() < 2.0  # W m⁻²
    morning = w.index.hour < 12
    assert abs(err[morning].sum() / w["ghi"][morning].sum()) < 0.01
    assert abs(err[~morning].sum() / w["ghi"][~morning].sum()) < 0.01


def test_sun_behind_facade_gives_no_direct(tmy):
    # hand: a vertical south façade gets no beam when the sun is north of its
    # plane (|sun azimuth - 180| >= 90°)
    w = tmy["weather"]
    res = solar.facade_irradiance(tmy["index"], w["ghi"], w["dni"], w["dhi"], tmy["pos"], 180)
    behind = (tmy["pos"]["azimuth"] - 180).abs() >= 90
    assert behind.sum() > 1000  # the case is exercised
    assert_allclose(res.loc[behind, "poa_direct"].to_numpy(), 0.0, atol=0)


@pytest.mark.parametrize("kind", ["series", "array", "list"])
def test_facade_irradiance_input_types(tmy, kind):
    idx = tmy["index"][4000:4048]
    w = tmy["weather"].loc[idx]
    pos = tmy["pos"].loc[idx]
    ref = solar.facade_irradiance(idx, w["ghi"], w["dni"], w["dhi"], pos, 135)
    conv = {"series": lambda s: s, "array": lambda s: s.to_numpy(),
            "list": lambda s: s.tolist()}[kind]
    got = solar.facade_irradiance(idx, conv(w["ghi"]), conv(w["dni"]), conv(w["dhi"]), pos, 135)
    assert got.index.equals(idx)
    assert_allclose(got["poa_global"].to_numpy(), ref["poa_global"].to_numpy(), atol=1e-9)


@pytest.mark.parametrize(
    "change, word",
    [
        ({"model": "klucher2"}, "model"),
        ({"surface_azimuth": 400}, "surface_azimuth"),
        ({"surface_tilt": -5}, "surface_tilt"),
        ({"albedo": 1.5}, "albedo"),
        ({"ghi": -1.0}, "ghi"),
        ({"dni": np.nan}, "dni"),
        ({"dhi": [1.0, 2.0]}, "dhi"),
    ],
)
def test_facade_irradiance_bad_arguments(change, word):
    idx = pd.date_range("2023-06-01 10:00", periods=3, freq="h")
    pos = solar.solar_position(idx, 51.5, 0.0, 0)
    args = {"ghi": 500.0, "dni": 400.0, "dhi": 100.0, "surface_azimuth": 180,
            "surface_tilt": 90, "albedo": 0.2, "model": "perez"} | change
    with pytest.raises(ProjectError, match=word):
        solar.facade_irradiance(idx, solar_pos=pos, **args)


def test_facade_irradiance_misaligned_inputs():
    idx = pd.date_range("2023-06-01 10:00", periods=3, freq="h")
    pos = solar.solar_position(idx, 51.5, 0.0, 0)
    shifted = pd.Series([1.0, 2.0, 3.0], index=idx + pd.Timedelta(hours=1))
    with pytest.raises(ProjectError, match="ghi"):
        solar.facade_irradiance(idx, shifted, 1.0, 1.0, pos, 180)
    with pytest.raises(ProjectError, match="solar_pos"):
        solar.facade_irradiance(idx, 1.0, 1.0, 1.0, pos.iloc[:2], 180)


# --------------------------------------------------------------------------
# shading geometry (hand-computed cases)
# --------------------------------------------------------------------------
def _sun(altitude, azimuth):
    """A hand-made solar_pos frame (refraction ignored: apparent = true)."""
    altitude = np.atleast_1d(np.asarray(altitude, dtype=float))
    azimuth = np.broadcast_to(np.asarray(azimuth, dtype=float), altitude.shape)
    return pd.DataFrame({"apparent_zenith": 90 - altitude, "azimuth": azimuth})


def test_overhang_profile_45_ratio_1_fully_shades():
    # hand: sun normal to a south façade at 45° → profile angle 45°, shadow
    # depth = P·tan45° = H for P/H = 1 with the overhang at the window head.
    res = solar.overhang_fin_shading(_sun(45, 180), 180, overhang_depth_ratio=1.0)
    assert_allclose(res["profile_angle"], 45.0, atol=1e-9)
    assert_allclose(res["sunlit_fraction"], 0.0, atol=1e-12)


@pytest.mark.parametrize(
    "depth, gap, expected",
    [
        (0.5, 0.0, 0.5),   # hand: 0.5·tan45 = 0.5 of the height shaded
        (1.0, 0.5, 0.5),   # hand: 1·tan45 − 0.5 = 0.5 shaded
        (1.0, 1.0, 1.0),   # hand: shadow ends at the window head
        (2.0, 0.0, 0.0),   # hand: shadow deeper than the window
    ],
)
def test_overhang_normal_sun_cases(depth, gap, expected):
    res = solar.overhang_fin_shading(_sun(45, 180), 180, depth, gap)
    assert_allclose(res["sunlit_fraction"], expected, atol=1e-12)


def test_oblique_sun_overhang_and_fins():
    # hand: altitude 30°, sun 60° east of the façade normal (south façade,
    # sun azimuth 120°): tan Ω = tan30°/cos60° = 1.154701, |tan γ| = tan60° = 1.732051
    sun = _sun(30, 120)
    ov = solar.overhang_fin_shading(sun, 180, overhang_depth_ratio=0.5)
    assert_allclose(ov["horizontal_shadow_angle"], -60.0, atol=1e-9)
    assert_allclose(ov["profile_angle"], np.degrees(np.arctan(1.154701)), atol=1e-4)
    assert_allclose(ov["sunlit_fraction"], 1 - 0.5 * 1.154701, atol=1e-6)  # 0.422650
    fin = solar.overhang_fin_shading(sun, 180, fin_depth_ratio=0.5)
    assert_allclose(fin["sunlit_fraction"], 1 - 0.5 * 1.732051, atol=1e-6)  # 0.133975
    both = solar.overhang_fin_shading(sun, 180, 0.5, 0.0, 0.5)
    assert_allclose(both["sunlit_fraction"], 0.422650 * 0.133975, atol=1e-6)


def test_fin_has_no_effect_on_normal_sun():
    # hand: γ = 0 → fins cast their shadow on themselves only
    res = solar.overhang_fin_shading(_sun(40, 180), 180, fin_depth_ratio=3.0)
    assert_allclose(res["sunlit_fraction"], 1.0, atol=1e-12)


@pytest.mark.parametrize("azimuth", [0.0, 270.0, 300.0, 30.0])
def test_sun_behind_facade_no_sunlit_area(azimuth):
    # hand: south façade, sun at or behind its plane (|γ| >= 90°)
    res = solar.overhang_fin_shading(_sun(30, azimuth), 180)
    assert_allclose(res["sunlit_fraction"], 0.0, atol=0)


def test_no_devices_fully_sunlit_when_sun_in_front(tmy):
    pos = tmy["pos"]
    res = solar.overhang_fin_shading(pos, 180)
    front = (pos["azimuth"] - 180).abs() < 90
    assert_allclose(res.loc[front, "sunlit_fraction"], 1.0, atol=0)
    assert_allclose(res["sky_diffuse_factor"], 1.0, atol=0)
    assert_allclose(res["ground_diffuse_factor"], 1.0, atol=0)


def test_unshaded_window_gain_equals_unshaded_beam(tmy):
    # with no devices, sunlit_fraction × poa_direct must equal poa_direct
    # (includes the sunrise/sunset hours flagged beam_with_sun_down)
    w = tmy["weather"]
    irr = solar.facade_irradiance(tmy["index"], w["ghi"], w["dni"], w["dhi"], tmy["pos"], 90)
    sh = solar.overhang_fin_shading(tmy["pos"], 90)
    assert irr["beam_with_sun_down"].sum() > 0
    assert_allclose(sh["sunlit_fraction"] * irr["poa_direct"], irr["poa_direct"], atol=1e-9)


@pytest.mark.parametrize("surface_azimuth", [180, 90, 250])
def test_deeper_devices_never_increase_sunlit_fraction(tmy, surface_azimuth):
    pos = tmy["pos"]
    depths = [0.0, 0.1, 0.25, 0.5, 1.0, 2.0, 5.0]
    ov = np.array([solar.overhang_fin_shading(pos, surface_azimuth, d)["sunlit_fraction"]
                   for d in depths])
    fin = np.array([solar.overhang_fin_shading(pos, surface_azimuth, 0, 0, d)["sunlit_fraction"]
                    for d in depths])
    gaps = np.array([solar.overhang_fin_shading(pos, surface_azimuth, 1.0, g)["sunlit_fraction"]
                     for g in depths])
    assert (np.diff(ov, axis=0) <= 1e-12).all()
    assert (np.diff(fin, axis=0) <= 1e-12).all()
    assert (np.diff(gaps, axis=0) >= -1e-12).all()  # a higher overhang shades less
    assert (np.diff(ov, axis=0) < -1e-6).any()  # the depths do change something
    for arr in (ov, fin, gaps):
        assert ((arr >= 0) & (arr <= 1)).all()
    sky = [solar.overhang_fin_shading(pos.iloc[:1], surface_azimuth, d)["sky_diffuse_factor"]
           .iloc[0] for d in depths]
    assert (np.diff(sky) < 0).all()


def _crossed_strings_window_to_overhang(h, p, g):
    """Hottel's crossed-string rule [MEM] for window a-b and overhang c-d (2-D)."""
    a, b = np.array([0.0, 0.0]), np.array([0.0, h])
    c, d = np.array([0.0, h + g]), np.array([p, h + g])
    dist = lambda u, v: float(np.hypot(*(u - v)))  # noqa: E731
    return (dist(a, c) + dist(b, d) - dist(b, c) - dist(a, d)) / (2 * h)


@pytest.mark.parametrize("p", [0.25, 0.5, 1.0, 2.0])
def test_overhang_sky_factor_perpendicular_plates(p):
    # Perpendicular plates with a common edge, infinitely long (Incropera
    # Table 13.1 [MEM]): F_12 = (1 + w - sqrt(1 + w²))/2 with w = P/H. The
    # window sees the sky through half its view minus the overhang:
    # share of the unshaded sky view = (0.5 - F_12)/0.5.
    f12 = (1 + p - np.sqrt(1 + p**2)) / 2
    res = solar.overhang_fin_shading(_sun(30, 180), 180, overhang_depth_ratio=p)
    assert_allclose(res["sky_diffuse_factor"], (0.5 - f12) / 0.5, atol=1e-12)
    assert_allclose(res["ground_diffuse_factor"], 1.0, atol=0)


@pytest.mark.parametrize("p, g", [(0.5, 0.2), (1.0, 0.5), (2.0, 1.0)])
def test_overhang_sky_factor_with_gap_crossed_strings(p, g):
    f12 = _crossed_strings_window_to_overhang(1.0, p, g)
    res = solar.overhang_fin_shading(_sun(30, 180), 180, p, g)
    assert_allclose(res["sky_diffuse_factor"], (0.5 - f12) / 0.5, atol=1e-12)


@pytest.mark.parametrize("f", [0.2, 0.5, 1.0])
def test_fin_diffuse_factors_perpendicular_plates(f):
    # each fin is a perpendicular plate on the window's edge (Incropera
    # Table 13.1 [MEM]); two fins take 2·F_12 of the window's whole view
    f12 = (1 + f - np.sqrt(1 + f**2)) / 2
    res = solar.overhang_fin_shading(_sun(30, 180), 180, fin_depth_ratio=f)
    assert_allclose(res["ground_diffuse_factor"], 1 - 2 * f12, atol=1e-12)
    assert_allclose(res["sky_diffuse_factor"], 1 - 2 * f12, atol=1e-12)


@pytest.mark.parametrize(
    "kwargs, word",
    [
        ({"overhang_depth_ratio": -0.1}, "overhang_depth_ratio"),
        ({"overhang_gap_ratio": np.nan}, "overhang_gap_ratio"),
        ({"fin_depth_ratio": "deep"}, "fin_depth_ratio"),
        ({"surface_azimuth": -10}, "surface_azimuth"),
    ],
)
def test_shading_bad_arguments(kwargs, word):
    args = {"surface_azimuth": 180} | kwargs
    with pytest.raises(ProjectError, match=word):
        solar.overhang_fin_shading(_sun(30, 180), **args)
    with pytest.raises(ProjectError, match="solar_pos"):
        solar.overhang_fin_shading(pd.DataFrame({"zenith": [30.0]}), 180)


# --------------------------------------------------------------------------
# monthly factor, diffuse factor, glazing gain
# --------------------------------------------------------------------------
def test_monthly_shading_factor_hand_count():
    idx = pd.date_range("2023-01-01", "2023-12-31 23:00", freq="h")
    factors = [0.1 * (m % 10) for m in range(1, 13)]  # arbitrary designer inputs
    res = solar.monthly_shading_factor(idx, factors)
    days = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]  # 2023 calendar
    assert_allclose(res.sum(), sum(24 * d * f for d, f in zip(days, factors)), atol=1e-9)
    assert res.index.equals(idx)
    assert_allclose(res.loc["2023-02-28 23:00"], factors[1], atol=0)
    assert_allclose(res.loc["2023-03-01 00:00"], factors[2], atol=0)


@pytest.mark.parametrize("factors", [[0.5] * 11, [0.5] * 11 + [1.2], [np.nan] * 12])
def test_monthly_shading_factor_bad(factors):
    idx = pd.date_range("2023-01-01", periods=24, freq="h")
    with pytest.raises(ProjectError, match="factors"):
        solar.monthly_shading_factor(idx, factors)


def test_diffuse_shading_factor_hand():
    # hand: (0.6·80 + 0.9·20)/100 = 0.66; zero irradiance → sky factor
    res = solar.diffuse_shading_factor(np.array([80.0, 0.0]), np.array([20.0, 0.0]), 0.6, 0.9)
    assert_allclose(res, [0.66, 0.6], atol=1e-12)
    s = solar.diffuse_shading_factor(pd.Series([80.0], index=["a"]), [20.0], 0.6, 0.9)
    assert list(s.index) == ["a"]
    with pytest.raises(ProjectError, match="sky_diffuse_factor"):
        solar.diffuse_shading_factor([1.0], [1.0], 1.5, 0.9)


# hand: 2 m² × (1 − 0.3) × 0.9 × 0.6 × (0.5·500 + 0.8·100) = 249.48 W
_GAIN_ARGS = dict(window_area=2.0, g_value=0.6, sunlit_fraction=0.5, diffuse_factor=0.8)
_GAIN_EXPECTED = 249.48


@pytest.mark.parametrize("kind", ["scalar", "array", "series"])
def test_glazing_solar_gain_hand_and_types(kind):
    if kind == "scalar":
        res = solar.glazing_solar_gain(500.0, 100.0, **_GAIN_ARGS)
        assert isinstance(res, float)
        assert_allclose(res, _GAIN_EXPECTED, atol=1e-9)
        return
    idx = pd.date_range("2023-07-01 12:00", periods=3, freq="h")
    direct = np.array([500.0, 0.0, 500.0])
    diffuse = np.array([100.0, 100.0, 0.0])
    if kind == "series":
        direct, diffuse = pd.Series(direct, index=idx), pd.Series(diffuse, index=idx)
    res = solar.glazing_solar_gain(direct, diffuse, **_GAIN_ARGS)
    # hand: second hour 2·0.7·0.9·0.6·80 = 60.48; third 2·0.7·0.9·0.6·250 = 189.0
    assert_allclose(np.asarray(res), [_GAIN_EXPECTED, 60.48, 189.0], atol=1e-9)
    if kind == "series":
        assert res.index.equals(idx)


def test_glazing_solar_gain_iso_defaults_named():
    # F_w = 0.9 and F_F = 0.3 as documented [MEM ISO 13790]; unshaded
    # 1 m², g 1: 0.7·0.9·(100 + 100) = 126 W
    assert solar.ANGULAR_FACTOR_DEFAULT == 0.9
    assert solar.FRAME_FRACTION_DEFAULT == 0.3
    assert_allclose(solar.glazing_solar_gain(100.0, 100.0, 1.0, 1.0), 126.0, atol=1e-9)


@pytest.mark.parametrize(
    "change, word",
    [
        ({"g_value": 1.2}, "g_value"),
        ({"window_area": -1}, "window_area"),
        ({"sunlit_fraction": 1.5}, "sunlit_fraction"),
        ({"diffuse_factor": -0.1}, "diffuse_factor"),
        ({"frame_fraction": 2}, "frame_fraction"),
        ({"poa_direct": -5.0}, "poa_direct"),
        ({"poa_diffuse": [1.0, 2.0], "poa_direct": [1.0, 2.0, 3.0]}, "matching"),
    ],
)
def test_glazing_solar_gain_bad(change, word):
    args = {"poa_direct": 500.0, "poa_diffuse": 100.0, "window_area": 2.0, "g_value": 0.6} | change
    with pytest.raises(ProjectError, match=word):
        solar.glazing_solar_gain(**args)


# ---------------------------------------------------------------- one façade's solar gain


def test_facade_solar_gain_composes_the_published_steps(tmy):
    """Gain of a shaded south façade = glazing_solar_gain on pvlib's transposition with the geometry factors."""
    w, pos, index = tmy["weather"], tmy["pos"], tmy["index"]
    got = solar.facade_solar_gain(index, w["ghi"], w["dni"], w["dhi"], pos, surface_azimuth=180.0,
                                  window_area=10.0, g_value=0.5, overhang_depth_ratio=0.5)
    poa = solar.facade_irradiance(index, w["ghi"], w["dni"], w["dhi"], pos, 180.0)
    shade = solar.overhang_fin_shading(pos, 180.0, 0.5)
    f_dif = solar.diffuse_shading_factor(poa["poa_sky_diffuse"], poa["poa_ground"],
                                         shade["sky_diffuse_factor"], shade["ground_diffuse_factor"])
    # ISO 13790 §11.3 form [MEM]: A·(1 − 0.3)·0.9·g·(F_sun·I_dir + F_dif·I_dif)
    expected = 10.0 * 0.7 * 0.9 * 0.5 * (shade["sunlit_fraction"] * poa["poa_direct"] + f_dif * poa["poa_diffuse"])
    assert_allclose(got["solar_gain"].to_numpy(), expected.to_numpy(), atol=1e-9)
    assert got.attrs["sky_model"] == "perez"
    unshaded = solar.facade_solar_gain(index, w["ghi"], w["dni"], w["dhi"], pos, surface_azimuth=180.0,
                                       window_area=10.0, g_value=0.5)
    assert (got["solar_gain"] <= unshaded["solar_gain"] + 1e-9).all()  # an overhang never adds gain
    assert got["solar_gain"].sum() < 0.95 * unshaded["solar_gain"].sum()


def test_facade_solar_gain_monthly_factor_scales_unshaded(tmy):
    w, pos, index = tmy["weather"], tmy["pos"], tmy["index"]
    factors = [0.5] * 6 + [0.8] * 6
    got = solar.facade_solar_gain(index, w["ghi"], w["dni"], w["dhi"], pos, surface_azimuth=90.0,
                                  window_area=4.0, g_value=0.6, monthly_factor=factors)
    bare = solar.facade_solar_gain(index, w["ghi"], w["dni"], w["dhi"], pos, surface_azimuth=90.0,
                                   window_area=4.0, g_value=0.6)
    month_factor = np.where(index.month <= 6, 0.5, 0.8)
    assert_allclose(got["solar_gain"].to_numpy(), bare["solar_gain"].to_numpy() * month_factor, atol=1e-9)
