"""Future-climate morphing (calcs.morph) against the shift-and-stretch equations.

Reference: Belcher, Hacker & Powell (2005), BSERT 26(1) 49–61, doi:10.1191/0143624405bt112oa,
dry bulb T = T0 + ΔTmean_m + α_m (T0 − ⟨T0⟩_m), α_m = (ΔTmax_m − ΔTmin_m)/(⟨T0max⟩_m − ⟨T0min⟩_m)
[MEM: the form is quoted from memory of the paper]. The checks use a constructed year whose
monthly statistics are known in closed form (a sinusoidal diurnal cycle sampled at whole hours,
with zero-mean day-to-day offsets), and pvlib's public Greensboro TMY3 year.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import psychrolib
import pydantic
import pytest
from numpy.testing import assert_allclose

from calcs.cli import EXIT_BAD_INPUT, main
from calcs.errors import ProjectError
from calcs.morph import FutureClimate, future_climate_from_dict, load_future_climate, morph_factors, morph_weather
from calcs.weather import Weather, WeatherQA, read_weather, relative_humidity_magnus_alduchov96

YEAR = 2026
# Constructed year: month m has base temperature BASE[m], diurnal amplitude AMP[m] (half the range).
BASE = np.array([2.0, 3.0, 6.0, 9.0, 13.0, 17.0, 20.0, 19.0, 16.0, 11.0, 6.0, 3.0])
AMP = np.array([3.0, 3.5, 4.0, 5.0, 5.5, 6.0, 6.5, 6.0, 5.0, 4.0, 3.5, 3.0])
DAY_SWING = 2.0  # amplitude of the day-to-day offsets [K]


def constructed_weather(humidity_gap: float = 5.0) -> Weather:
    """A constructed (not measured) year: T0 = BASE_m + offset_d + AMP_m sin(2π(h − 9)/24).

    Over a day's 24 whole hours the sine sums to zero and reaches +1 at 15:00 and −1 at 03:00,
    so the daily mean is BASE_m + offset_d, the daily range exactly 2·AMP_m. The offsets are
    DAY_SWING cos(2π k / n_m) for day k of a month of n_m days: zero sum over each month.
    Dew point T0 − humidity_gap, and RH its Magnus value; wind 3 m/s; rain 0.2 mm/h; sun made up.
    """
    index = pd.date_range(f"{YEAR}-01-01", f"{YEAR}-12-31 23:00", freq="h")
    m = index.month.to_numpy() - 1
    k = index.day.to_numpy() - 1
    n = index.days_in_month.to_numpy()
    h = index.hour.to_numpy()
    t0 = BASE[m] + DAY_SWING * np.cos(2 * np.pi * k / n) + AMP[m] * np.sin(2 * np.pi * (h - 9) / 24)
    td0 = t0 - humidity_gap
    data = pd.DataFrame({
        "temp_air": t0, "temp_dew": td0, "relative_humidity": relative_humidity_magnus_alduchov96(t0, td0),
        "pressure": 101325.0, "wind_speed": 3.0 + np.sin(2 * np.pi * h / 24), "wind_direction": 180.0,
        "ghi": np.maximum(0, 500 * np.sin(np.pi * (h - 6) / 12)), "dni": 0.0, "dhi": 0.0, "rain": 0.2,
    }, index=index)
    qa = WeatherQA(source_format="constructed", rows_in_file=8760, leap_day_dropped=False)
    return Weather(data=data, location="Constructed test year (invented)", latitude=50.0, longitude=0.0,
                   utc_offset=0.0, elevation=0.0, source_path="constructed", qa=qa)


D_MAX = np.array([1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 3.5, 3.4, 2.8, 2.0, 1.5, 1.2])
D_MIN = np.array([2.0, 1.8, 1.5, 1.2, 1.0, 1.5, 2.0, 2.0, 1.8, 1.6, 1.9, 2.1])


def future(**kw) -> FutureClimate:
    values = dict(label="Test changes (invented)", source="invented for a unit test",
                  delta_mean=tuple((D_MAX + D_MIN) / 2), delta_max=tuple(D_MAX), delta_min=tuple(D_MIN))
    values.update(kw)
    return FutureClimate(**values)


def monthly(series: pd.Series, how: str) -> np.ndarray:
    daily = getattr(series.groupby(series.index.normalize()), how)()
    return daily.groupby(daily.index.month).mean().to_numpy()


def test_stretch_factor_equals_the_published_ratio_by_hand():
    # α_m = (ΔTmax − ΔTmin)/(⟨T0max⟩ − ⟨T0min⟩); the constructed range is exactly 2·AMP_m.
    f = morph_factors(constructed_weather().data["temp_air"], future())
    assert_allclose(f["mean_daily_range_K"], 2 * AMP, atol=1e-12)
    assert_allclose(f["mean_C"], BASE, atol=1e-12)
    assert_allclose(f["stretch"], (D_MAX - D_MIN) / (2 * AMP), rtol=0, atol=1e-12)


def test_every_hour_follows_the_shift_and_stretch_equation():
    w = constructed_weather()
    fc = future()
    out = morph_weather(w, fc).data["temp_air"].to_numpy()
    t0 = w.data["temp_air"].to_numpy()
    m = w.data.index.month.to_numpy() - 1
    alpha = (D_MAX - D_MIN) / (2 * AMP)
    dm = (D_MAX + D_MIN) / 2
    expected = t0 + dm[m] + alpha[m] * (t0 - BASE[m])  # BASE_m is ⟨T0⟩_m in closed form
    assert_allclose(out, expected, rtol=0, atol=1e-12)


def test_monthly_mean_shifts_by_delta_mean_and_range_by_delta_max_minus_delta_min():
    w = constructed_weather()
    fc = future(delta_mean=tuple(np.full(12, 2.7)))  # mean change not the average of max and min
    t0, t = w.data["temp_air"], morph_weather(w, fc).data["temp_air"]
    mean_shift = t.groupby(t.index.month).mean().to_numpy() - t0.groupby(t0.index.month).mean().to_numpy()
    assert_allclose(mean_shift, 2.7, atol=1e-12)
    range_change = (monthly(t, "max") - monthly(t, "min")) - (monthly(t0, "max") - monthly(t0, "min"))
    assert_allclose(range_change, D_MAX - D_MIN, atol=1e-12)


def test_symmetric_cycle_moves_mean_daily_max_and_min_by_their_deltas():
    # With ΔTmean = (ΔTmax + ΔTmin)/2 and a cycle symmetric about the mean, the mean daily max
    # moves by ΔTmean + α·AMP = ΔTmax, the mean daily min by ΔTmin (algebra of the equation).
    w = constructed_weather()
    t0, t = w.data["temp_air"], morph_weather(w, future()).data["temp_air"]
    assert_allclose(monthly(t, "max") - monthly(t0, "max"), D_MAX, atol=1e-12)
    assert_allclose(monthly(t, "min") - monthly(t0, "min"), D_MIN, atol=1e-12)


def test_zero_changes_give_the_original_year_exactly():
    w = constructed_weather()
    zero = (0.0,) * 12
    out = morph_weather(w, future(delta_mean=zero, delta_max=zero, delta_min=zero))
    pd.testing.assert_frame_equal(out.data, w.data, check_exact=True)


def test_zero_changes_on_public_greensboro_give_the_file_back(greensboro_epw):
    w = read_weather(greensboro_epw[0], YEAR)
    zero = (0.0,) * 12
    out = morph_weather(w, future(delta_mean=zero, delta_max=zero, delta_min=zero))
    pd.testing.assert_frame_equal(out.data, w.data, check_exact=True)


def test_public_greensboro_monthly_mean_and_range_follow_the_deltas(greensboro_epw):
    # pvlib's Greensboro TMY3 (NREL), a real year: the two identities of the method hold exactly.
    w = read_weather(greensboro_epw[0], YEAR)
    fc = future()
    t0, t = w.data["temp_air"], morph_weather(w, fc).data["temp_air"]
    shift = t.groupby(t.index.month).mean().to_numpy() - t0.groupby(t0.index.month).mean().to_numpy()
    assert_allclose(shift, fc.delta_mean, atol=1e-9)
    change = (monthly(t, "max") - monthly(t, "min")) - (monthly(t0, "max") - monthly(t0, "min"))
    assert_allclose(change, D_MAX - D_MIN, atol=1e-9)


def test_dew_point_shifts_with_the_mean_change_and_rh_is_recomputed():
    w = constructed_weather()
    fc = future()
    out = morph_weather(w, fc).data
    m = w.data.index.month.to_numpy() - 1
    dm = (D_MAX + D_MIN) / 2
    assert_allclose(out["temp_dew"], w.data["temp_dew"] + dm[m], atol=1e-12)
    # Consistent with the morphed dry bulb and dew point: Magnus form (calcs.weather), exactly,
    assert_allclose(out["relative_humidity"], relative_humidity_magnus_alduchov96(out["temp_air"], out["temp_dew"]),
                    rtol=1e-12)
    # and within 1 % RH of ASHRAE's Hyland–Wexler saturation pressure (psychrolib, an outside oracle;
    # tolerance: Magnus fits agree with it to a few tenths of a per cent over 0…40 °C [MEM]). Hours
    # with a dew point below 0 °C are left out: psychrolib then uses saturation over ice, Magnus over water.
    psychrolib.SetUnitSystem(psychrolib.SI)
    sample = out[out["temp_dew"] >= 0.0].iloc[::53]
    assert len(sample) > 50
    oracle = [100 * psychrolib.GetRelHumFromTDewPoint(t, min(td, t)) for t, td in
              zip(sample["temp_air"], sample["temp_dew"])]
    assert_allclose(sample["relative_humidity"], oracle, atol=1.0)


def test_stated_dew_point_changes_are_used():
    w = constructed_weather()
    dd = np.linspace(0.5, 1.6, 12)
    out = morph_weather(w, future(delta_dew_point=tuple(dd))).data
    m = w.data.index.month.to_numpy() - 1
    assert_allclose(out["temp_dew"], w.data["temp_dew"] + dd[m], atol=1e-12)


def test_dew_point_is_capped_at_the_morphed_dry_bulb():
    # Saturated air today (dew point = dry bulb) and nights warming less than the mean: without the
    # cap the shifted dew point would exceed the night dry bulb.
    w = constructed_weather(humidity_gap=0.0)
    out = morph_weather(w, future(delta_mean=(2.0,) * 12, delta_max=(3.0,) * 12, delta_min=(1.0,) * 12))
    assert (out.data["temp_dew"] <= out.data["temp_air"]).all()
    assert out.data["relative_humidity"].max() <= 100.0
    assert (out.data["relative_humidity"] >= 99.999).mean() > 0.3  # the capped hours are saturated
    assert any("capped" in n for n in out.qa.notes)


def test_wind_stretch_and_unchanged_columns():
    w = constructed_weather()
    change = np.arange(12) * 2.0 - 10.0  # −10 … +12 %
    out = morph_weather(w, future(wind_speed_change=tuple(change))).data
    ratio = out["wind_speed"].groupby(out.index.month).mean() / w.data["wind_speed"].groupby(w.data.index.month).mean()
    assert_allclose(ratio, 1 + change / 100, rtol=1e-12)
    for col in ("ghi", "dni", "dhi", "pressure", "wind_direction", "rain"):
        pd.testing.assert_series_equal(out[col], w.data[col], check_exact=True)
    # without a wind change the wind is untouched
    pd.testing.assert_series_equal(morph_weather(w, future()).data["wind_speed"], w.data["wind_speed"],
                                   check_exact=True)


def test_note_names_label_method_and_source():
    out = morph_weather(constructed_weather(), future())
    note = out.qa.notes[-1]
    assert "Test changes (invented)" in note and "Belcher, Hacker & Powell 2005" in note
    assert "invented for a unit test" in note


def test_a_stretch_that_inverts_the_daily_cycle_is_refused():
    # March range is 2·4 = 8 K; ΔTmax − ΔTmin = −8 K would flatten it (α = −1).
    d_min = list(D_MIN)
    d_max = list(D_MAX)
    d_max[2], d_min[2] = -4.0, 4.0
    with pytest.raises(ProjectError, match=r"in Mar delta_max − delta_min = -8 K would remove or invert"):
        morph_weather(constructed_weather(), future(delta_max=tuple(d_max), delta_min=tuple(d_min)))


def test_constant_month_with_a_range_change_is_refused():
    w = constructed_weather()
    data = w.data.copy()
    data.loc[data.index.month == 4, "temp_air"] = 10.0
    with pytest.raises(ProjectError, match="Apr has no daily temperature range"):
        morph_factors(data["temp_air"], future())
    assert morph_factors(data["temp_air"], future(delta_max=(1.0,) * 12, delta_min=(1.0,) * 12)).loc[4, "stretch"] == 0


# --------------------------------------------------------------------------- future-climate files

GOOD = """label = "Test changes (invented)"
source = "invented for a unit test"
delta_mean = [2, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2]
delta_max = [2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5]
delta_min = [1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5]
"""


def test_future_climate_file_reads_flat_and_as_a_table(tmp_path):
    flat = tmp_path / "flat.toml"
    flat.write_text(GOOD, encoding="utf-8")
    table = tmp_path / "table.toml"
    table.write_text("[future_climate]\n" + GOOD, encoding="utf-8")
    a, b = load_future_climate(flat), load_future_climate(table)
    assert a == b
    assert a.delta_max == (2.5,) * 12 and a.delta_dew_point is None


BAD_FILES = {
    "eleven values": (GOOD.replace("delta_max = [2.5, ", "delta_max = ["),
                      "delta_max = [2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5, 2.5]: must be 12 monthly "
                      "values, Jan–Dec, in K (got 11 values)"),
    "unknown key": (GOOD + "delta_rain = [0]\n", "unknown key 'delta_rain' (allowed: label, source, delta_mean"),
    "missing key": (GOOD.replace('source = "invented for a unit test"\n', ""), "required key 'source' is missing"),
    "absolute temperature typed": (GOOD.replace("delta_mean = [2, ", "delta_mean = [25, "),
                                   "delta_mean = [25, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2, 2]: Jan value 25 K is outside "
                                   "-15 to 15 K"),
    "text in a list": (GOOD.replace("delta_min = [1.5, ", 'delta_min = ["warm", '),
                       "delta_min.0 (Jan) = 'warm': Input should be a valid number"),
    "not TOML": ("label = \n", "not valid TOML"),
}


@pytest.mark.parametrize("case", sorted(BAD_FILES))
def test_bad_future_climate_file_gives_one_line(tmp_path, case):
    text, expected = BAD_FILES[case]
    path = tmp_path / "future.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ProjectError) as info:
        load_future_climate(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(str(path))
    assert expected in message


def test_out_of_range_month_is_named(tmp_path):
    with pytest.raises(ProjectError, match=r"Jan value 25 K is outside -15 to 15 K"):
        future_climate_from_dict({**future().model_dump(), "delta_mean": [25] + [2] * 11}, "x.toml")


def test_bad_future_file_through_the_command_line(tmp_path, greensboro_epw, capsys):
    path = tmp_path / "future.toml"
    path.write_text(BAD_FILES["eleven values"][0], encoding="utf-8")
    out = tmp_path / "screen_out"
    code = main(["screen", str(greensboro_epw[0]), "--future", str(path), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT
    assert err.count("\n") == 1 and "got 11 values" in err and "Traceback" not in err
    assert not out.exists()  # nothing written


def test_future_climate_model_is_frozen_and_forbids_extras():
    fc = future()
    with pytest.raises(pydantic.ValidationError):
        fc.label = "x"  # type: ignore[misc]
    with pytest.raises(pydantic.ValidationError):
        FutureClimate(**{**fc.model_dump(), "extra": 1})
