"""Sun position, irradiance on façades, external shading and glazing solar gain.

Time convention (used by every function here)
---------------------------------------------
Hourly series carry a naive :class:`pandas.DatetimeIndex` in local *standard*
time, each hour labelled by its start (the 00:00 row is the hour 00:00–01:00).
The sun's position for an hour is taken at the hour's midpoint (start + 30 min),
localised to the fixed UTC offset of the site (no daylight saving).  The
midpoint stands in for the average over the hour; near sunrise and sunset the
two differ, and those hours are flagged rather than hidden (see
:func:`facade_irradiance`).

Units: irradiance [W m⁻²]; angles [°]; azimuth clockwise from north
(180 = south-facing); tilt from horizontal (90 = vertical wall).
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence

import numpy as np
import pandas as pd
import pvlib

from calcs.errors import ProjectError

#: Sky-diffuse models accepted by :func:`facade_irradiance`, with the paper
#: each one follows (the names are pvlib's, which are the trade's names).
SKY_DIFFUSE_MODELS: dict[str, str] = {
    "perez": (
        "Perez, R., Ineichen, P., Seals, R., Michalsky, J., Stewart, R. (1990). "
        "Modeling daylight availability and irradiance components from direct and "
        "global irradiance. Solar Energy 44(5), 271-289, "
        "doi:10.1016/0038-092X(90)90055-H; coefficient set 'allsitescomposite1990'"
    ),
    "haydavies": (
        "Hay, J.E., Davies, J.A. (1980). Calculation of the solar radiation incident "
        "on an inclined surface. Proc. First Canadian Solar Radiation Data Workshop, "
        "59-72"
    ),
    "isotropic": (
        "Liu, B.Y.H., Jordan, R.C. (1963). The long-term average performance of "
        "flat-plate solar-energy collectors. Solar Energy 7(2), 53-74, "
        "doi:10.1016/0038-092X(63)90006-9"
    ),
}

#: Angular factor F_w: ratio of the time-averaged to the normal-incidence
#: g-value of a window. [MEM] ISO 13790:2008 §11.4.2 gives F_w = 0.9 for
#: non-scattering glazing; check against the original.
ANGULAR_FACTOR_DEFAULT = 0.9
ANGULAR_FACTOR_SOURCE = "ISO 13790:2008 §11.4.2, F_w = 0.9 [MEM]"

#: Frame area fraction F_F: frame area / overall window area.
#: [MEM] ISO 13790:2008 §11.4.5 gives 0.3 where no better value is known;
#: check against the original.
FRAME_FRACTION_DEFAULT = 0.3
FRAME_FRACTION_SOURCE = "ISO 13790:2008 §11.4.5, F_F = 0.3 [MEM]"

#: Ground reflectance used when the project gives none.
ALBEDO_DEFAULT = 0.2
ALBEDO_SOURCE = (
    "common practice for grass or mixed ground (0.2); no single published source"
)


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------
def _check_index(index) -> pd.DatetimeIndex:
    if not isinstance(index, pd.DatetimeIndex):
        msg = f"index must be a pandas DatetimeIndex, got {type(index).__name__}"
        raise ProjectError(msg)
    if index.tz is not None:
        msg = (
            f"index must be naive local standard time (no time zone), got tz={index.tz}; "
            "convert with index.tz_convert(<fixed offset>).tz_localize(None)"
        )
        raise ProjectError(msg)
    return index


def _check_number(name: str, value, low: float, high: float, unit: str = "") -> float:
    try:
        value = float(value)
    except (TypeError, ValueError):
        msg = f"{name} must be a number{unit and ' [' + unit + ']'}, got {value!r}"
        raise ProjectError(msg) from None
    if not (np.isfinite(value) and low <= value <= high):
        msg = f"{name} must be between {low} and {high}{unit and ' ' + unit}, got {value}"
        raise ProjectError(msg)
    return value


def _hour_midpoints(index: pd.DatetimeIndex, utc_offset: float) -> pd.DatetimeIndex:
    """Hour-start naive local standard times → tz-aware hour midpoints."""
    tz = _dt.timezone(_dt.timedelta(hours=utc_offset))
    return (index + pd.Timedelta(minutes=30)).tz_localize(tz)


def _as_hourly(name: str, value, index: pd.DatetimeIndex) -> np.ndarray:
    """Series/array/scalar → float array of len(index); checks alignment."""
    if isinstance(value, pd.Series):
        if not value.index.equals(index):
            msg = f"{name} is a Series whose index differs from index; align it first"
            raise ProjectError(msg)
        arr = value.to_numpy(dtype=float)
    else:
        arr = np.asarray(value, dtype=float)
        if arr.ndim == 0:
            arr = np.full(len(index), float(arr))
    if arr.shape != (len(index),):
        msg = f"{name} must have {len(index)} values (one per hour), got shape {arr.shape}"
        raise ProjectError(msg)
    return arr


def _check_irradiance(name: str, arr: np.ndarray, index: pd.DatetimeIndex) -> None:
    bad = ~np.isfinite(arr) | (arr < 0)
    if bad.any():
        first = index[np.flatnonzero(bad)[0]]
        msg = (
            f"{name} must be finite and >= 0 W m⁻²; {int(bad.sum())} hours are not "
            f"(first at {first}, value {arr[bad][0]})"
        )
        raise ProjectError(msg)


def _check_solar_pos(solar_pos, index: pd.DatetimeIndex) -> pd.DataFrame:
    if not isinstance(solar_pos, pd.DataFrame):
        msg = "solar_pos must be the DataFrame returned by solar_position()"
        raise ProjectError(msg)
    missing = {"apparent_zenith", "azimuth"} - set(solar_pos.columns)
    if missing:
        msg = f"solar_pos lacks column(s) {sorted(missing)}; use solar_position()"
        raise ProjectError(msg)
    if index is not None and not solar_pos.index.equals(index):
        msg = "solar_pos index differs from index; compute it on the same hours"
        raise ProjectError(msg)
    return solar_pos


def _wrap(values: np.ndarray, like, name: str | None = None):
    """Return a Series on like's index if like is a Series, else an array."""
    if isinstance(like, pd.Series):
        return pd.Series(values, index=like.index, name=name)
    return values


# --------------------------------------------------------------------------
# sun position and irradiance
# --------------------------------------------------------------------------
def solar_position(index, latitude, longitude, utc_offset, elevation=0.0) -> pd.DataFrame:
    """Sun position at the midpoint of each hour.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Naive hour-start timestamps in local standard time.
    latitude : float
        Site latitude, north positive [°].
    longitude : float
        Site longitude, east positive [°].
    utc_offset : float
        Offset of local standard time from UTC, e.g. -5 for US Eastern [h].
    elevation : float, default 0
        Site height above sea level [m].

    Returns
    -------
    pandas.DataFrame
        On ``index``, columns ``apparent_zenith``, ``zenith``, ``azimuth``
        and ``elevation`` [°]. ``apparent_zenith`` includes atmospheric
        refraction; ``elevation`` is the true (unrefracted) solar altitude.
        ``attrs["time_convention"]`` records the midpoint rule.

    Notes
    -----
    Each hour ``t`` (start label) is evaluated at ``t + 30 min`` localised to
    the fixed offset ``utc_offset``. The algorithm is NREL's Solar Position
    Algorithm as implemented in pvlib (``method='nrel_numpy'``), with the
    pressure estimated from ``elevation``.

    References
    ----------
    Reda, I., Andreas, A. (2004). Solar position algorithm for solar radiation
    applications. Solar Energy 76(5), 577-589, doi:10.1016/j.solener.2003.12.003.
    """
    index = _check_index(index)
    latitude = _check_number("latitude", latitude, -90, 90, "°")
    longitude = _check_number("longitude", longitude, -180, 180, "°")
    utc_offset = _check_number("utc_offset", utc_offset, -12, 14, "h")
    elevation = _check_number("elevation", elevation, -500, 9000, "m")
    times = _hour_midpoints(index, utc_offset)
    sp = pvlib.solarposition.get_solarposition(
        times, latitude, longitude, altitude=elevation
    )
    out = pd.DataFrame(
        {
            "apparent_zenith": sp["apparent_zenith"].to_numpy(),
            "zenith": sp["zenith"].to_numpy(),
            "azimuth": sp["azimuth"].to_numpy(),
            "elevation": sp["elevation"].to_numpy(),
        },
        index=index,
    )
    out.attrs["time_convention"] = (
        f"hour-start labels, local standard time; sun at hour midpoint, UTC{utc_offset:+g} h"
    )
    return out


def facade_irradiance(
    index,
    ghi,
    dni,
    dhi,
    solar_pos,
    surface_azimuth,
    surface_tilt=90.0,
    albedo=ALBEDO_DEFAULT,
    model="perez",
) -> pd.DataFrame:
    """Irradiance on a plane (a façade by default) from the weather components.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Naive hour-start timestamps in local standard time.
    ghi, dni, dhi : array_like or pandas.Series
        Global horizontal, direct normal and diffuse horizontal irradiance,
        one value per hour of ``index`` [W m⁻²].
    solar_pos : pandas.DataFrame
        Output of :func:`solar_position` on the same ``index``.
    surface_azimuth : float
        Direction the surface faces, clockwise from north (180 = south) [°].
    surface_tilt : float, default 90
        Tilt from horizontal (90 = vertical) [°].
    albedo : float, default 0.2
        Ground reflectance [-].
    model : {"perez", "haydavies", "isotropic"}
        Sky-diffuse transposition model.

    Returns
    -------
    pandas.DataFrame
        On ``index``: ``poa_global``, ``poa_direct``, ``poa_diffuse`` (sky +
        ground), ``poa_sky_diffuse``, ``poa_ground`` [W m⁻²]; ``aoi`` angle of
        incidence of the beam [°]; ``beam_with_sun_down`` (bool), True where the
        weather gives dni > 0 but the sun is below the horizon at the hour's
        midpoint (the beam is then treated as pvlib does, from the midpoint
        geometry; such hours deserve a note in the report). ``attrs`` holds
        ``sky_model`` and ``sky_model_source``.

    Notes
    -----
    poa_direct = dni·max(cos θ, 0); poa_ground = ghi·ρ·(1 − cos β)/2;
    poa_sky_diffuse from the chosen model. The apparent (refracted) zenith is
    used for the transposition, as pvlib's own model chain does. The Perez and
    Hay–Davies models need the extraterrestrial normal irradiance (Spencer
    1971, evaluated at the hour midpoint); Perez also needs the relative air
    mass (Kasten & Young 1989), which is undefined with the sun below the
    horizon; pvlib then sets the Perez sky diffuse to zero. Where dhi = 0 the
    sky diffuse is set to 0 (every model is proportional to dhi; Perez's
    brightness index is 0/0 there and pvlib 0.16 returns NaN).

    References
    ----------
    See :data:`SKY_DIFFUSE_MODELS` for the sky models. Kasten, F., Young, A.T.
    (1989). Revised optical air mass tables and approximation formula. Applied
    Optics 28(22), 4735-4738, doi:10.1364/AO.28.004735.
    """
    index = _check_index(index)
    solar_pos = _check_solar_pos(solar_pos, index)
    if model not in SKY_DIFFUSE_MODELS:
        msg = f"model must be one of {sorted(SKY_DIFFUSE_MODELS)}, got {model!r}"
        raise ProjectError(msg)
    surface_azimuth = _check_number("surface_azimuth", surface_azimuth, 0, 360, "°")
    surface_tilt = _check_number("surface_tilt", surface_tilt, 0, 180, "°")
    albedo = _check_number("albedo", albedo, 0, 1)
    arrays = {}
    for name, value in (("ghi", ghi), ("dni", dni), ("dhi", dhi)):
        arrays[name] = _as_hourly(name, value, index)
        _check_irradiance(name, arrays[name], index)

    zen = solar_pos["apparent_zenith"].to_numpy(dtype=float)
    azi = solar_pos["azimuth"].to_numpy(dtype=float)
    dni_extra = airmass = None
    if model in ("perez", "haydavies"):
        # day of year of the hour midpoint, local standard time
        doy = (index + pd.Timedelta(minutes=30)).day_of_year.to_numpy()
        dni_extra = pvlib.irradiance.get_extra_radiation(doy)
    if model == "perez":
        airmass = pvlib.atmosphere.get_relative_airmass(zen)
    irr = pvlib.irradiance.get_total_irradiance(
        surface_tilt,
        surface_azimuth,
        zen,
        azi,
        arrays["dni"],
        arrays["ghi"],
        arrays["dhi"],
        dni_extra=dni_extra,
        airmass=airmass,
        albedo=albedo,
        model=model,
    )
    aoi = pvlib.irradiance.aoi(surface_tilt, surface_azimuth, zen, azi)
    direct = np.asarray(irr["poa_direct"], dtype=float)
    ground = np.asarray(irr["poa_ground_diffuse"], dtype=float)
    sky = np.asarray(irr["poa_sky_diffuse"], dtype=float)
    # Every sky model is proportional to dhi; with dhi = 0 the Perez
    # brightness terms are 0/0 and pvlib returns NaN. The sky diffuse is 0.
    sky = np.where(arrays["dhi"] == 0, 0.0, sky)
    out = pd.DataFrame(
        {
            "poa_global": direct + sky + ground,
            "poa_direct": direct,
            "poa_diffuse": sky + ground,
            "poa_sky_diffuse": sky,
            "poa_ground": ground,
            "aoi": np.asarray(aoi, dtype=float),
            "beam_with_sun_down": (arrays["dni"] > 0) & (zen >= 90),
        },
        index=index,
    )
    numeric = out.drop(columns="beam_with_sun_down")
    if numeric.isna().any().any():  # pragma: no cover - guard for pvlib changes
        msg = f"sky model {model!r} returned undefined values; check the weather inputs"
        raise ProjectError(msg)
    out.attrs["sky_model"] = model
    out.attrs["sky_model_source"] = SKY_DIFFUSE_MODELS[model]
    out.attrs["albedo"] = albedo
    return out


# --------------------------------------------------------------------------
# shading
# --------------------------------------------------------------------------
def shading_angles(solar_pos, surface_azimuth) -> pd.DataFrame:
    """Profile angle and horizontal shadow angle of the sun on a vertical façade.

    Parameters
    ----------
    solar_pos : pandas.DataFrame
        Columns ``apparent_zenith`` and ``azimuth`` [°] (see :func:`solar_position`).
    surface_azimuth : float
        Direction the façade faces, clockwise from north [°].

    Returns
    -------
    pandas.DataFrame
        On ``solar_pos.index``: ``horizontal_shadow_angle`` γ in [−180, 180)
        (sun azimuth − façade azimuth, positive clockwise) [°];
        ``profile_angle`` Ω, the vertical shadow angle, in (−180, 180] (0–90
        for a sun above the horizon in front of the façade, above 90 when it is
        behind, negative below the horizon) [°]; ``sun_in_front`` (bool), True
        where the sun is in front of the façade's plane (|γ| < 90°), whether
        above the horizon or (in a sunrise or sunset hour) just below it.

    Notes
    -----
    With solar altitude α: tan Ω = tan α / cos γ, computed as
    Ω = atan2(sin α, cos α·cos γ) so that it stays finite at γ = ±90°.

    References
    ----------
    ASHRAE Handbook—Fundamentals (SI), ch.15 "Fenestration", shading geometry
    of exterior overhangs and fins [MEM: chapter as recalled].
    """
    solar_pos = _check_solar_pos(solar_pos, None)
    surface_azimuth = _check_number("surface_azimuth", surface_azimuth, 0, 360, "°")
    alt = np.radians(90.0 - solar_pos["apparent_zenith"].to_numpy(dtype=float))
    gamma = (solar_pos["azimuth"].to_numpy(dtype=float) - surface_azimuth + 180.0) % 360.0 - 180.0
    g = np.radians(gamma)
    profile = np.degrees(np.arctan2(np.sin(alt), np.cos(alt) * np.cos(g)))
    in_front = np.abs(gamma) < 90.0
    return pd.DataFrame(
        {"horizontal_shadow_angle": gamma, "profile_angle": profile, "sun_in_front": in_front},
        index=solar_pos.index,
    )


def overhang_fin_shading(
    solar_pos,
    surface_azimuth,
    overhang_depth_ratio=0.0,
    overhang_gap_ratio=0.0,
    fin_depth_ratio=0.0,
) -> pd.DataFrame:
    """Hourly shading of a vertical window by an overhang and side fins.

    Parameters
    ----------
    solar_pos : pandas.DataFrame
        Columns ``apparent_zenith`` and ``azimuth`` [°] (see :func:`solar_position`).
    surface_azimuth : float
        Direction the window faces, clockwise from north [°].
    overhang_depth_ratio : float, default 0
        Horizontal projection of the overhang / window height [-].
    overhang_gap_ratio : float, default 0
        Height from the window head to the underside of the overhang /
        window height [-].
    fin_depth_ratio : float, default 0
        Projection of each side fin / window width [-] (a fin on both jambs).

    Returns
    -------
    pandas.DataFrame
        On ``solar_pos.index``: ``sunlit_fraction`` of the window area for the
        direct beam [-] (0 when the sun is behind the façade's plane);
        ``sky_diffuse_factor`` and ``ground_diffuse_factor`` [-], the share of
        the unshaded window's sky-diffuse and ground-reflected irradiance that
        still reaches it; ``profile_angle`` and ``horizontal_shadow_angle`` [°].
        ``attrs`` records the ratios.

    Notes
    -----
    Direct beam (standard shadow geometry; ASHRAE Fundamentals ch.15 [MEM]).
    With window height H, overhang depth P, gap G, fin depth F, width W,
    profile angle Ω and horizontal shadow angle γ:

    - overhang shadow height on the window: s_o = clip(P·tan Ω − G, 0, H)
    - fin shadow width on the window (fin on the sun's side):
      s_f = clip(F·|tan γ|, 0, W)
    - sunlit fraction = (1 − s_o/H)·(1 − s_f/W)

    The product is exact when the overhang runs far enough past both jambs
    that its shadow covers the window's full width, and the fins run the full
    height of the window up to the overhang: the sunlit patch is then a
    rectangle. Shorter overhangs or fins are not modelled.

    The geometry is evaluated whenever the sun is in front of the façade,
    also when it is just below the horizon at the hour's midpoint (a sunrise
    or sunset hour in which the weather still reports a beam, see
    :func:`facade_irradiance`): the overhang then casts no shadow on the
    window, so an unshaded window always has sunlit fraction 1 in front and
    the product with ``poa_direct`` equals the unshaded beam.

    Diffuse (isotropic sky, two-dimensional view factors, Hottel's
    crossed-string method): an infinitely long overhang leaves the window
    the sky-view share

        f_ov = sqrt(p² + (1 + g)²) − sqrt(p² + g²),  p = P/H, g = G/H,

    of its unshaded sky view (1 at p = 0; equal to the perpendicular-plates
    view factor result sqrt(1 + p²) − p at g = 0). Two full-height fins leave

        f_fin = sqrt(1 + f²) − f,  f = F/W,

    of both the sky and the ground view. The overhang does not hide the
    ground. Sky factor = f_ov·f_fin (product of the separate factors, as
    ISO 13790:2008 §11.4.4 combines overhang and fin factors [MEM]); ground
    factor = f_fin. Real skies are brighter near the sun and the horizon, so
    the isotropic factors are an approximation.

    References
    ----------
    ASHRAE Handbook—Fundamentals (SI), ch.15, exterior shading [MEM].
    Hottel, H.C., Sarofim, A.F. (1967). Radiative Transfer, McGraw-Hill,
    crossed-string method [MEM]. ISO 13790:2008 §11.4.4 [MEM].
    """
    p = _check_number("overhang_depth_ratio", overhang_depth_ratio, 0, 100)
    gap = _check_number("overhang_gap_ratio", overhang_gap_ratio, 0, 100)
    f = _check_number("fin_depth_ratio", fin_depth_ratio, 0, 100)
    ang = shading_angles(solar_pos, surface_azimuth)
    on = ang["sun_in_front"].to_numpy()
    alt = np.radians(90.0 - solar_pos["apparent_zenith"].to_numpy(dtype=float))
    g = np.radians(ang["horizontal_shadow_angle"].to_numpy())
    # cos(alt)·cos(g) > 0 wherever the sun is in front; elsewhere use 1
    # so that nothing is divided by zero (the result is set to 0 there anyway).
    denom = np.where(on, np.cos(alt) * np.cos(g), 1.0)
    tan_profile = np.sin(alt) / denom
    tan_hsa = np.abs(np.sin(g)) / np.where(on, np.cos(g), 1.0)
    shaded_h = np.clip(p * tan_profile - gap, 0.0, 1.0)
    shaded_w = np.clip(f * tan_hsa, 0.0, 1.0)
    sunlit = np.where(on, (1.0 - shaded_h) * (1.0 - shaded_w), 0.0)

    f_ov = np.sqrt(p**2 + (1.0 + gap) ** 2) - np.sqrt(p**2 + gap**2)
    f_fin = np.sqrt(1.0 + f**2) - f
    n = len(solar_pos)
    out = pd.DataFrame(
        {
            "sunlit_fraction": sunlit,
            "sky_diffuse_factor": np.full(n, f_ov * f_fin),
            "ground_diffuse_factor": np.full(n, f_fin),
            "profile_angle": ang["profile_angle"].to_numpy(),
            "horizontal_shadow_angle": ang["horizontal_shadow_angle"].to_numpy(),
        },
        index=solar_pos.index,
    )
    out.attrs.update(
        overhang_depth_ratio=p, overhang_gap_ratio=gap, fin_depth_ratio=f
    )
    return out


def monthly_shading_factor(index, factors: Sequence[float]) -> pd.Series:
    """Hourly shading factor from one designer-given value per month.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Hour-start timestamps.
    factors : sequence of 12 floats
        Share of solar irradiance reaching the glazing, January to December
        [-], each in [0, 1].

    Returns
    -------
    pandas.Series
        Factor for each hour of ``index`` (name ``shading_factor``).

    Notes
    -----
    A fixed factor applies to direct and diffuse alike (pass it as both
    ``sunlit_fraction`` and ``diffuse_factor`` to :func:`glazing_solar_gain`),
    as the monthly shading reduction factor F_sh,ob of ISO 13790:2008 §11.4.4
    does [MEM].
    """
    if not isinstance(index, pd.DatetimeIndex):
        msg = f"index must be a pandas DatetimeIndex, got {type(index).__name__}"
        raise ProjectError(msg)
    vals = np.asarray(factors, dtype=float).ravel()
    if vals.shape != (12,):
        msg = f"factors must have 12 values (January to December), got {vals.size}"
        raise ProjectError(msg)
    bad = ~np.isfinite(vals) | (vals < 0) | (vals > 1)
    if bad.any():
        months = [i + 1 for i in np.flatnonzero(bad)]
        msg = f"factors must lie in [0, 1]; month(s) {months} give {vals[bad].tolist()}"
        raise ProjectError(msg)
    return pd.Series(vals[index.month.to_numpy() - 1], index=index, name="shading_factor")


def diffuse_shading_factor(
    poa_sky_diffuse, poa_ground, sky_diffuse_factor, ground_diffuse_factor
):
    """Combined hourly factor on the total diffuse irradiance of a window.

    Parameters
    ----------
    poa_sky_diffuse, poa_ground : array_like or pandas.Series
        Unshaded sky-diffuse and ground-reflected irradiance [W m⁻²].
    sky_diffuse_factor, ground_diffuse_factor : float or array_like
        From :func:`overhang_fin_shading` [-].

    Returns
    -------
    numpy.ndarray or pandas.Series
        F_dif = (f_sky·I_sky + f_gnd·I_gnd)/(I_sky + I_gnd) [-]; where both
        irradiances are zero the factor is the sky factor (it then multiplies
        zero). Keeps a Series' index.
    """
    i_s = np.asarray(poa_sky_diffuse, dtype=float)
    i_g = np.asarray(poa_ground, dtype=float)
    f_s = np.asarray(sky_diffuse_factor, dtype=float)
    f_g = np.asarray(ground_diffuse_factor, dtype=float)
    for name, v in (("sky_diffuse_factor", f_s), ("ground_diffuse_factor", f_g)):
        if np.any(~np.isfinite(v) | (v < 0) | (v > 1)):
            msg = f"{name} must lie in [0, 1], got values outside it"
            raise ProjectError(msg)
    total = i_s + i_g
    safe_total = np.where(total > 0, total, 1.0)
    frac = np.where(total > 0, (f_s * i_s + f_g * i_g) / safe_total, f_s)
    return _wrap(np.asarray(frac, dtype=float), poa_sky_diffuse, "diffuse_factor")


# --------------------------------------------------------------------------
# solar gain
# --------------------------------------------------------------------------
def glazing_solar_gain(
    poa_direct,
    poa_diffuse,
    window_area,
    g_value,
    sunlit_fraction=1.0,
    diffuse_factor=1.0,
    frame_fraction=FRAME_FRACTION_DEFAULT,
    angular_factor=ANGULAR_FACTOR_DEFAULT,
):
    """Solar heat gain through a window.

    Parameters
    ----------
    poa_direct : array_like or pandas.Series
        Direct irradiance on the unshaded window plane [W m⁻²].
    poa_diffuse : array_like or pandas.Series
        Diffuse (sky + ground-reflected) irradiance on the window plane [W m⁻²].
    window_area : float
        Overall window area, glass and frame [m²].
    g_value : float
        Total solar energy transmittance of the glazing at normal incidence,
        g⊥ (including any fixed internal or between-pane blind) [-].
    sunlit_fraction : float or array_like, default 1
        Share of the window in sun for the direct beam [-].
    diffuse_factor : float or array_like, default 1
        Share of the diffuse irradiance reaching the window [-].
    frame_fraction : float, default 0.3
        Frame area / overall window area, F_F [-] (ISO 13790 §11.4.5 [MEM]).
    angular_factor : float, default 0.9
        F_w, averaged-over-angles g / g⊥ [-] (ISO 13790 §11.4.2 [MEM]).

    Returns
    -------
    numpy.ndarray or pandas.Series
        Solar heat gain to the room [W]; keeps the index of ``poa_direct``
        when it is a Series.

    Notes
    -----
    Φ_sol = A_w·(1 − F_F)·F_w·g⊥·(F_sun·I_dir + F_dif·I_dif).

    The g-value applies to the *total* incident irradiance with a constant
    angular factor, as in ISO 13790:2008 §11.3.2–11.3.3 / §11.4.2 [MEM]; no
    hour-by-hour angle-of-incidence correction is made, and no long-wave
    radiation to the sky is subtracted (that term of ISO 13790 §11.3.5
    belongs to the opaque fabric balance).

    References
    ----------
    ISO 13790:2008, Energy performance of buildings — Calculation of energy
    use for space heating and cooling, §11.3 and §11.4 [MEM].
    """
    area = _check_number("window_area", window_area, 0, 1e6, "m²")
    g = _check_number("g_value", g_value, 0, 1)
    ff = _check_number("frame_fraction", frame_fraction, 0, 1)
    fw = _check_number("angular_factor", angular_factor, 0, 1)
    i_dir = np.asarray(poa_direct, dtype=float)
    i_dif = np.asarray(poa_diffuse, dtype=float)
    f_sun = np.asarray(sunlit_fraction, dtype=float)
    f_dif = np.asarray(diffuse_factor, dtype=float)
    for name, v in (("poa_direct", i_dir), ("poa_diffuse", i_dif)):
        if np.any(~np.isfinite(v) | (v < 0)):
            msg = f"{name} must be finite and >= 0 W m⁻²"
            raise ProjectError(msg)
    for name, v in (("sunlit_fraction", f_sun), ("diffuse_factor", f_dif)):
        if np.any(~np.isfinite(v) | (v < 0) | (v > 1)):
            msg = f"{name} must lie in [0, 1], got values outside it"
            raise ProjectError(msg)
    try:
        gain = area * (1.0 - ff) * fw * g * (f_sun * i_dir + f_dif * i_dif)
    except ValueError:
        msg = (
            f"poa_direct {i_dir.shape}, poa_diffuse {i_dif.shape}, sunlit_fraction "
            f"{f_sun.shape} and diffuse_factor {f_dif.shape} must have matching lengths"
        )
        raise ProjectError(msg) from None
    like = poa_direct if isinstance(poa_direct, pd.Series) else poa_diffuse
    if gain.ndim == 0:
        return float(gain)
    return _wrap(gain, like, "solar_gain")


def facade_solar_gain(
    index,
    ghi,
    dni,
    dhi,
    solar_pos,
    *,
    surface_azimuth,
    window_area,
    g_value,
    frame_fraction=FRAME_FRACTION_DEFAULT,
    overhang_depth_ratio=0.0,
    overhang_gap_ratio=0.0,
    fin_depth_ratio=0.0,
    monthly_factor=None,
    model="perez",
    albedo=ALBEDO_DEFAULT,
) -> pd.DataFrame:
    """Hourly solar heat gain through the windows of one vertical façade.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Hour-start timestamps (local standard time).
    ghi, dni, dhi : array_like or pandas.Series
        Weather-file irradiance [W m⁻²].
    solar_pos : pandas.DataFrame
        From :func:`solar_position`.
    surface_azimuth : float
        Direction the façade faces, clockwise from north [°].
    window_area : float
        Total window area of the façade, glass and frame [m²].
    g_value : float
        Glass g-value at normal incidence [-].
    frame_fraction : float
        Frame share of the window area [-].
    overhang_depth_ratio, overhang_gap_ratio, fin_depth_ratio : float
        External shading geometry (see :func:`overhang_fin_shading`) [-].
    monthly_factor : sequence of 12 floats, optional
        Fixed shading factors by month; when given they replace the geometry [-].
    model : str
        Sky-diffuse model for the transposition (see :data:`SKY_DIFFUSE_MODELS`).
    albedo : float
        Ground reflectance [-].

    Returns
    -------
    pandas.DataFrame
        On ``index``: ``solar_gain`` [W], ``poa_global`` (unshaded) [W m⁻²],
        ``sunlit_fraction`` and ``diffuse_factor`` [-]; ``attrs["sky_model"]``
        names the transposition model.

    Notes
    -----
    Φ = A·(1 − F_F)·F_w·g⊥·(F_sun·I_dir + F_dif·I_dif) (see :func:`glazing_solar_gain`),
    with F_sun and F_dif from the overhang/fin geometry each hour, or
    F_sun = F_dif = the month's fixed factor.
    """
    poa = facade_irradiance(index, ghi, dni, dhi, solar_pos, surface_azimuth, 90.0, albedo, model)
    if monthly_factor is not None and len(monthly_factor) > 0:
        fixed = monthly_shading_factor(index, monthly_factor).to_numpy()
        sunlit, diffuse = fixed, fixed
    else:
        shade = overhang_fin_shading(solar_pos, surface_azimuth, overhang_depth_ratio, overhang_gap_ratio,
                                     fin_depth_ratio)
        sunlit = shade["sunlit_fraction"].to_numpy()
        diffuse = np.asarray(diffuse_shading_factor(poa["poa_sky_diffuse"], poa["poa_ground"],
                                                    shade["sky_diffuse_factor"], shade["ground_diffuse_factor"]),
                             dtype=float)
    gain = glazing_solar_gain(poa["poa_direct"].to_numpy(), poa["poa_diffuse"].to_numpy(), window_area, g_value,
                              sunlit, diffuse, frame_fraction)
    out = pd.DataFrame({"solar_gain": np.asarray(gain, dtype=float), "poa_global": poa["poa_global"].to_numpy(),
                        "sunlit_fraction": sunlit, "diffuse_factor": diffuse}, index=poa.index)
    out.attrs["sky_model"] = poa.attrs.get("sky_model", model)
    out.attrs["sky_model_source"] = poa.attrs.get("sky_model_source", "")
    return out
