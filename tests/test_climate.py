"""Tests of calcs.climate.

Reference sources used below:

* [PVLIB-TMY] the typical-year files bundled with pvlib (read by pvlib.iotools):
  723170TYA.CSV (TMY3, Greensboro NC), 703165TY.csv (TMY3, Sand Point AK),
  12839.tm2 (TMY2, Miami FL). Expected values are computed from them in the test with
  plain pandas, independently of calcs.climate.
* [EN16798] EN 16798-1:2019 Annex B.2.2 running mean and its seven-day start formula
  (same as EN 15251:2007 Annex A.2, CIBSE TM52 Eq. 2.2/2.3), as quoted in
  /work/shared/REFERENCES.md §2 [DOC via MFA].
* [ASHRAE55] ASHRAE 55-2020 §5.4.2.1 arithmetic prevailing mean of 7–30 previous
  days [MEM].
* [PTC] pythermalcomfort 4.8.1 ``running_mean_outdoor_temperature`` (``environment``;
  formerly ``utilities``) used as a test oracle (normalised weights α^k, output rounded to 0.1 °C).
* [DATETIME] Python's datetime module for calendar facts.
* [SPEC] the contract stated in the calcs.climate docstrings (ends included, strict
  "below" for night cooling, errors); these are behaviour checks, not external values.

Constructed sequences are test inputs only; every expected value is derived from a
published formula or an independent computation written here.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose, assert_array_equal

import pvlib
from pvlib import iotools

from calcs import climate
from calcs.errors import FreerunError, ProjectError, WeatherError

PVLIB_DATA = Path(pvlib.__file__).parent / "data"
YEAR = 2026
HOLIDAYS = ("2026-01-01", "2026-12-25")  # both weekdays in 2026 [DATETIME]


# --------------------------------------------------------------------------------------
# Weather fixtures [PVLIB-TMY]
# --------------------------------------------------------------------------------------

def _tmy3(name: str) -> pd.DataFrame:
    """TMY3 via pvlib; pvlib labels each hour by its END (first row 01:00, last row
    midnight of the next year), so shift by −1 h to hour-start labels, drop the fixed
    UTC offset (it is local standard time) and stamp on YEAR."""
    data, _ = iotools.read_tmy3(str(PVLIB_DATA / name), coerce_year=YEAR,
                                map_variables=True)
    data.index = (data.index - pd.Timedelta(hours=1)).tz_localize(None)
    return data


def _tmy2(name: str) -> pd.DataFrame:
    """TMY2 via pvlib; pvlib already labels hours by their start (hour field − 1) but
    keeps each month's source year, so stamp every row on YEAR. TMY2 stores dry bulb
    and dew point in tenths of °C and wind speed in tenths of m/s (TMY2 user's manual
    [MEM]; the Miami annual mean of 24.3 °C confirms the scale)."""
    raw, _ = iotools.read_tmy2(str(PVLIB_DATA / name))
    index = pd.DatetimeIndex([t.replace(year=YEAR) for t in raw.index.tz_localize(None)])
    return pd.DataFrame({
        "temp_air": raw["DryBulb"].to_numpy() / 10.0,
        "temp_dew": raw["DewPoint"].to_numpy() / 10.0,
        "relative_humidity": raw["RHum"].to_numpy(dtype=float),
        "wind_speed": raw["Wspd"].to_numpy() / 10.0,
    }, index=index)


@pytest.fixture(scope="module")
def weather() -> dict[str, pd.DataFrame]:
    return {"greensboro_tmy3": _tmy3("723170TYA.CSV"),
            "sand_point_tmy3": _tmy3("703165TY.csv"),
            "miami_tmy2": _tmy2("12839.tm2")}


STATIONS = ("greensboro_tmy3", "sand_point_tmy3", "miami_tmy2")


def _independent_occupancy(index: pd.DatetimeIndex, holidays=HOLIDAYS) -> np.ndarray:
    """Weekdays 08–18 minus holidays, built with the datetime module [DATETIME]."""
    hol = {dt.date.fromisoformat(h) for h in holidays}
    return np.array([t.weekday() < 5 and t.date() not in hol and 8 <= t.hour < 18
                     for t in index.to_pydatetime()])


def _daily_series(values, year: int = YEAR) -> pd.Series:
    values = np.asarray(values, dtype=float)
    return pd.Series(values, index=pd.date_range(f"{year}-01-01", periods=values.size,
                                                 freq="D"))


def _hourly_year(value: float = 25.0, year: int = YEAR) -> pd.Series:
    index = pd.date_range(f"{year}-01-01", f"{year}-12-31 23:00", freq="h")
    return pd.Series(value, index=index, dtype=float)


# --------------------------------------------------------------------------------------
# Monthly and annual summaries on real typical years [PVLIB-TMY] vs plain pandas
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("station", STATIONS)
def test_monthly_summary_matches_independent_pandas(weather, station):
    w = weather[station]
    assert len(w) == 8760  # pvlib read the full typical year
    occ = climate.occupied_hours(w.index, holidays=HOLIDAYS)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    got = climate.monthly_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                  w.wind_speed, occ, suit)

    # independent pandas computations [PVLIB-TMY]
    m = w.index.month
    day = w.temp_air.resample("D")
    dmax, dmin = day.max(), day.min()
    occ_ref = _independent_occupancy(w.index)
    t = w.temp_air.to_numpy()
    in_band = (t >= 16.0) & (t <= 26.0)              # band ends included
    suitable = in_band & (w.temp_dew.to_numpy() <= 17.0) & (w.wind_speed.to_numpy() <= 10.0)
    occ_n = pd.Series(occ_ref, index=w.index).groupby(m).sum()

    def share(mask):
        return 100.0 * pd.Series(mask & occ_ref, index=w.index).groupby(m).sum() / occ_n

    expected = {
        "hours": w.temp_air.groupby(m).size(),
        "mean_C": w.temp_air.groupby(m).mean(),
        "mean_daily_max_C": dmax.groupby(dmax.index.month).mean(),
        "mean_daily_min_C": dmin.groupby(dmin.index.month).mean(),
        "mean_diurnal_range_K": (dmax - dmin).groupby(dmax.index.month).mean(),
        "mean_relative_humidity_pct": w.relative_humidity.groupby(m).mean(),
        "mean_dew_point_C": w.temp_dew.groupby(m).mean(),
        "mean_wind_speed_m_s": w.wind_speed.groupby(m).mean(),
        "occupied_hours": occ_n,
        "occupied_in_band_pct": share(in_band),
        "occupied_below_band_pct": share(t < 16.0),
        "occupied_above_band_pct": share(t > 26.0),
        "occupied_nv_suitable_pct": share(suitable),
        "occupied_nv_suitable_hours": pd.Series(suitable & occ_ref, index=w.index)
        .groupby(m).sum(),
    }
    assert list(got.index) == list(range(1, 13))
    for column, ref in expected.items():
        assert_allclose(got[column].to_numpy(dtype=float), ref.to_numpy(dtype=float),
                        rtol=0, atol=1e-9, err_msg=f"{station}: {column}")
    assert not got["no_occupied_hours"].any()
    # the three shares of occupied hours add up to 100 % (partition of the band test)
    total = got[["occupied_in_band_pct", "occupied_below_band_pct",
                 "occupied_above_band_pct"]].sum(axis=1)
    assert_allclose(total, 100.0, atol=1e-9)
    assert got.attrs["rain_assessed"] is False


@pytest.mark.parametrize("station", STATIONS)
def test_annual_summary_matches_independent_pandas(weather, station):
    w = weather[station]
    occ = climate.occupied_hours(w.index, holidays=HOLIDAYS)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    got = climate.annual_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                 w.wind_speed, occ, suit)
    occ_ref = _independent_occupancy(w.index)
    t = w.temp_air.to_numpy()
    in_band = (t >= 16.0) & (t <= 26.0)
    suitable = in_band & (w.temp_dew.to_numpy() <= 17.0) & (w.wind_speed.to_numpy() <= 10.0)
    day = w.temp_air.resample("D")
    assert got.year == YEAR
    assert got.hours == 8760
    assert got.occupied_hours == int(occ_ref.sum())
    assert_allclose(got.mean_C, w.temp_air.mean(), atol=1e-9)
    assert_allclose([got.min_C, got.max_C], [t.min(), t.max()], atol=1e-12)
    assert_allclose(got.mean_diurnal_range_K, (day.max() - day.min()).mean(), atol=1e-9)
    assert_allclose(got.mean_wind_speed_m_s, w.wind_speed.mean(), atol=1e-9)
    assert_allclose(got.occupied_in_band_pct,
                    100.0 * (in_band & occ_ref).sum() / occ_ref.sum(), atol=1e-9)
    assert_allclose(got.occupied_nv_suitable_pct,
                    100.0 * (suitable & occ_ref).sum() / occ_ref.sum(), atol=1e-9)
    assert got.no_occupied_hours is False
    assert set(got.as_dict()) >= {"occupied_in_band_pct", "occupied_nv_suitable_pct"}


def test_miami_annual_mean_is_plausible(weather):
    # NOAA 1981–2010 normal for Miami Intl: annual mean about 77 °F = 25 °C [MEM]; a
    # typical year of older data runs a little cooler, hence the wide tolerance.
    w = weather["miami_tmy2"]
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    got = climate.annual_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                 w.wind_speed, climate.occupied_hours(w.index), suit)
    assert_allclose(got.mean_C, 25.0, atol=1.5)


def test_suitability_with_rain_matches_pandas(weather):
    # Greensboro TMY3 liquid-precipitation column as read by pvlib (all records have a
    # 1-hour accumulation period); used as the hourly rain input [PVLIB-TMY].
    w = weather["greensboro_tmy3"]
    assert (w["Lprecip quantity (hr)"] == 1).all()
    rain = w["Lprecip depth (mm)"].astype(float)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed, rain,
                                       rain_max=0.5)
    ref = ((w.temp_air >= 16) & (w.temp_air <= 26) & (w.temp_dew <= 17)
           & (w.wind_speed <= 10) & (rain <= 0.5))
    assert_array_equal(suit["suitable"].to_numpy(), ref.to_numpy())
    assert_array_equal(suit["rain_ok"].to_numpy(), (rain <= 0.5).to_numpy())
    assert (~suit["rain_ok"]).sum() == (rain > 0.5).sum() > 0   # rain does bite
    assert suit.attrs["rain_assessed"] is True
    assert suit.index.equals(w.index)


def test_missing_value_code_in_rain_raises(weather):
    # Sand Point TMY3 carries −9900 missing-value codes in its precipitation column.
    w = weather["sand_point_tmy3"]
    assert (w["Lprecip depth (mm)"] == -9900).any()
    with pytest.raises(WeatherError, match="rain must be >= 0"):
        climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed,
                                    w["Lprecip depth (mm)"].astype(float))


@pytest.mark.parametrize("station", STATIONS)
def test_daily_statistics_and_broadcast_match_pandas(weather, station):
    t = weather[station].temp_air
    mean = climate.daily_mean(t)
    assert len(mean) == 365
    assert_allclose(mean.to_numpy(), t.resample("D").mean().to_numpy(), atol=1e-12)
    assert_allclose(climate.daily_max(t).to_numpy(), t.resample("D").max().to_numpy(),
                    atol=0)
    assert_allclose(climate.daily_min(t).to_numpy(), t.resample("D").min().to_numpy(),
                    atol=0)
    assert mean.index.equals(t.resample("D").mean().index)
    hourly = climate.hourly_from_daily(mean, t.index)
    ref = t.groupby(t.index.date).transform("mean")
    assert hourly.index.equals(t.index)
    assert_allclose(hourly.to_numpy(), ref.to_numpy(), atol=1e-12)


# --------------------------------------------------------------------------------------
# Occupancy [DATETIME]
# --------------------------------------------------------------------------------------

def test_occupied_hours_2026_count_against_datetime():
    index = _hourly_year().index
    occ = climate.occupied_hours(index, holidays=HOLIDAYS)
    start = dt.date(YEAR, 1, 1)
    dates = [start + dt.timedelta(days=i) for i in range(365)]
    weekdays = sum(d.weekday() < 5 for d in dates)
    assert weekdays == 261     # 2026 starts on a Thursday: 52 weeks + 1 day [DATETIME]
    holidays_on_weekdays = sum(dt.date.fromisoformat(h).weekday() < 5 for h in HOLIDAYS)
    assert int(occ.sum()) == (weekdays - holidays_on_weekdays) * 10 == 2590
    assert_array_equal(occ.to_numpy(), _independent_occupancy(index))
    assert occ.name == "occupied" and occ.dtype == bool and occ.index.equals(index)


def test_occupied_hours_labels_and_options():
    index = _hourly_year().index
    occ = climate.occupied_hours(index)
    # hour-start labels: the hour starting 08:00 is in, the one starting 18:00 is out
    assert occ[pd.Timestamp("2026-01-05 08:00")]                   # a Monday
    assert occ[pd.Timestamp("2026-01-05 17:00")]
    assert not occ[pd.Timestamp("2026-01-05 07:00")]
    assert not occ[pd.Timestamp("2026-01-05 18:00")]
    # a holiday on a Saturday changes nothing [DATETIME: 2026-12-26 is a Saturday]
    assert dt.date(2026, 12, 26).weekday() == 5
    assert climate.occupied_hours(index, holidays=["2026-12-26"]).sum() == occ.sum()
    # weekend-only calendar, full day, holidays as date objects
    weekend = climate.occupied_hours(index, days=("SAT", "sun"), start_hour=0,
                                     end_hour=24, holidays=[dt.date(2026, 1, 3)])
    n_weekend_days = sum((dt.date(YEAR, 1, 1) + dt.timedelta(days=i)).weekday() >= 5
                         for i in range(365))
    assert int(weekend.sum()) == (n_weekend_days - 1) * 24
    # a Series contributes its index
    series_in = climate.occupied_hours(_hourly_year())
    assert_array_equal(series_in.to_numpy(), occ.to_numpy())


@pytest.mark.parametrize("kwargs, match", [
    ({"days": ("monday",)}, "unknown day"),
    ({"start_hour": 18, "end_hour": 8}, "start_hour must be < end_hour"),
    ({"start_hour": 8, "end_hour": 8}, "start_hour must be < end_hour"),
    ({"start_hour": -1}, "start_hour"),
    ({"end_hour": 25}, "end_hour"),
    ({"start_hour": 8.5}, "whole number"),
    ({"holidays": ["not a date"]}, "cannot read"),
    ({"holidays": [None]}, "cannot read"),
    ({"holidays": ["2025-12-25"]}, "outside the calendar"),
])
def test_occupied_hours_bad_arguments(kwargs, match):
    with pytest.raises(ProjectError, match=match):
        climate.occupied_hours(_hourly_year().index, **kwargs)


def test_occupied_hours_rejects_tz_aware_index():
    index = _hourly_year().index.tz_localize("Etc/GMT+5")
    with pytest.raises(WeatherError, match="naive"):
        climate.occupied_hours(index)


# --------------------------------------------------------------------------------------
# EN 16798-1 running mean [EN16798], [PTC]
# --------------------------------------------------------------------------------------

def test_running_mean_seven_day_start_by_hand():
    # last seven days of the year (26–31 Dec ... ) hold 1..7; 31 Dec = 7 = θed−1
    values = np.full(365, 10.0)
    values[-7:] = [1, 2, 3, 4, 5, 6, 7]
    rm = climate.running_mean_en16798(_daily_series(values))
    # [EN16798] (θ−1 + 0.8θ−2 + 0.6θ−3 + 0.5θ−4 + 0.4θ−5 + 0.3θ−6 + 0.2θ−7)/3.8, by hand:
    # (7 + 4.8 + 3.0 + 2.0 + 1.2 + 0.6 + 0.2)/3.8 = 18.8/3.8
    assert_allclose(rm.iloc[0], 18.8 / 3.8, rtol=0, atol=1e-12)
    assert rm.name == "running_mean"


def test_running_mean_follows_recursion():
    rng = np.random.default_rng(16798)
    theta = rng.normal(12.0, 6.0, 365)
    for alpha in (0.0, 0.5, 0.8, 0.95):
        rm = climate.running_mean_en16798(_daily_series(theta), alpha=alpha).to_numpy()
        # [EN16798] θrm(d) = (1 − α)·θed(d−1) + α·θrm(d−1)
        assert_allclose(rm[1:], (1 - alpha) * theta[:-1] + alpha * rm[:-1],
                        rtol=0, atol=1e-10)
    rm0 = climate.running_mean_en16798(_daily_series(theta), alpha=0.0).to_numpy()
    assert_allclose(rm0[0], theta[-1], atol=1e-12)   # α = 0: yesterday (cyclic)


@pytest.mark.parametrize("start", ["seven_day", "periodic"])
@pytest.mark.parametrize("alpha", [0.0, 0.3, 0.8, 0.95])
def test_running_mean_of_constant_is_constant(alpha, start):
    rm = climate.running_mean_en16798(_daily_series(np.full(365, 21.3)), alpha=alpha,
                                      start=start)
    assert_allclose(rm.to_numpy(), 21.3, rtol=0, atol=1e-10)


@pytest.mark.parametrize("alpha", [0.5, 0.8, 0.9])
def test_running_mean_step_response(alpha):
    # zero until day s, one from day s on; the year end (start history) is zero
    s = 100
    values = np.zeros(365)
    values[s:300] = 1.0
    rm = climate.running_mean_en16798(_daily_series(values), alpha=alpha).to_numpy()
    n = np.arange(1, 150)
    # [EN16798] closed form of the recursion for a unit step: 1 − αⁿ, n days after
    assert_allclose(rm[s + n], 1.0 - alpha ** n, rtol=0, atol=1e-12)
    assert_allclose(rm[: s + 1], 0.0, atol=1e-15)


@pytest.fixture(scope="module")
def ptc_running_mean():
    pytest.importorskip("pythermalcomfort")
    try:  # 4.x home of the function; older releases kept it in utilities
        from pythermalcomfort.environment import running_mean_outdoor_temperature
    except ImportError:
        from pythermalcomfort.utilities import running_mean_outdoor_temperature
    return running_mean_outdoor_temperature


# PTC rounds its result to 0.1 °C, so it can differ from the exact value by 0.05 °C;
# the weight truncation (see each test) is below 1e-4 °C. Tolerance 0.05 + 1e-4.
PTC_ATOL = 0.05 + 1e-4


def test_running_mean_matches_pythermalcomfort_far_into_year(weather, ptc_running_mean):
    dm = climate.daily_mean(weather["greensboro_tmy3"].temp_air)
    rm = climate.running_mean_en16798(dm, alpha=0.8)
    theta = dm.to_numpy()
    for d in (100, 200, 300, 364):
        # PTC: Σ α^k θ(d−1−k) / Σ α^k over the d days of history. The recursion adds
        # α^d·(θrm(0) − that value); 0.8^100 ≈ 2e-10 times a few tens of K: negligible.
        ptc = ptc_running_mean(list(theta[:d][::-1]), alpha=0.8)
        assert_allclose(rm.iloc[d], ptc, rtol=0, atol=PTC_ATOL, err_msg=f"day {d}")


def test_periodic_start_matches_pythermalcomfort_cyclic_history(weather, ptc_running_mean):
    dm = climate.daily_mean(weather["miami_tmy2"].temp_air)
    rm = climate.running_mean_en16798(dm, alpha=0.8, start="periodic")
    theta = dm.to_numpy()
    for d in (0, 1, 45, 200):
        # history: the days before d, then the whole year repeated four times
        # (1460+ days; 0.8^1460 = 0), newest first — the infinite cyclic sum.
        history = np.concatenate([theta[:d][::-1]] + [theta[::-1]] * 4)
        ptc = ptc_running_mean(list(history), alpha=0.8)
        assert_allclose(rm.iloc[d], ptc, rtol=0, atol=PTC_ATOL, err_msg=f"day {d}")


def test_running_mean_start_for_other_alpha():
    # α ≠ 0.8: normalised α^k weights over 7 days (documented choice)
    values = np.full(365, 0.0)
    values[-7:] = [1, 2, 3, 4, 5, 6, 7]
    rm = climate.running_mean_en16798(_daily_series(values), alpha=0.5)
    w = 0.5 ** np.arange(7)
    assert_allclose(rm.iloc[0], np.dot(w, [7, 6, 5, 4, 3, 2, 1]) / w.sum(), atol=1e-12)


@pytest.mark.parametrize("alpha", [-0.1, 1.0, 1.2, float("nan"), "0.8", True])
def test_running_mean_bad_alpha(alpha):
    with pytest.raises(ProjectError, match="alpha"):
        climate.running_mean_en16798(_daily_series(np.zeros(365)), alpha=alpha)


def test_running_mean_bad_start_and_bad_series():
    with pytest.raises(ProjectError, match="start"):
        climate.running_mean_en16798(_daily_series(np.zeros(365)), start="warm")
    with pytest.raises(WeatherError, match="one calendar year"):
        climate.running_mean_en16798(_daily_series(np.zeros(200)))
    gap = _daily_series(np.zeros(365)).drop(pd.Timestamp("2026-06-01"))
    with pytest.raises(WeatherError, match="one calendar year"):
        climate.running_mean_en16798(gap)
    with_nan = _daily_series(np.zeros(365))
    with_nan.iloc[10] = np.nan
    with pytest.raises(WeatherError, match="missing"):
        climate.running_mean_en16798(with_nan)
    with pytest.raises(WeatherError, match="pandas Series"):
        climate.running_mean_en16798(np.zeros(365))


def test_leap_year_with_and_without_29_february():
    rng = np.random.default_rng(2024)
    full = _daily_series(rng.normal(10, 5, 366), year=2024)
    assert len(climate.running_mean_en16798(full)) == 366
    dropped = full.drop(pd.Timestamp("2024-02-29"))
    rm = climate.running_mean_en16798(dropped, alpha=0.8)
    feb28, mar1 = pd.Timestamp("2024-02-28"), pd.Timestamp("2024-03-01")
    # [EN16798] recursion with 28 Feb as the day before 1 Mar
    assert_allclose(rm[mar1], 0.2 * dropped[feb28] + 0.8 * rm[feb28], atol=1e-12)
    # hourly leap year without 29 Feb passes the one-year check
    hours = pd.date_range("2024-01-01", "2024-12-31 23:00", freq="h")
    hours = hours[~((hours.month == 2) & (hours.day == 29))]
    t = pd.Series(np.linspace(0, 20, hours.size), index=hours)
    assert len(climate.night_cooling_potential(t, climate.occupied_hours(t)).daily) == 365


# --------------------------------------------------------------------------------------
# ASHRAE 55 prevailing mean [ASHRAE55]
# --------------------------------------------------------------------------------------

@pytest.mark.parametrize("days", [7, 14, 30])
def test_prevailing_mean_by_hand(days):
    rng = np.random.default_rng(55)
    theta = rng.normal(15.0, 7.0, 365)
    pm = climate.prevailing_mean_ashrae55(_daily_series(theta), days=days)
    # [ASHRAE55] arithmetic mean of the `days` days before the day; the days before
    # 1 January come from the end of the year (documented cyclic assumption)
    for d in (0, 3, days, 100, 364):
        previous = [theta[(d - k) % 365] for k in range(1, days + 1)]
        assert_allclose(pm.iloc[d], sum(previous) / days, rtol=0, atol=1e-10,
                        err_msg=f"day {d}")
    assert pm.name == "prevailing_mean" and pm.index.equals(_daily_series(theta).index)


@pytest.mark.parametrize("days", [6, 31, 7.5, 0])
def test_prevailing_mean_bad_days(days):
    with pytest.raises(ProjectError, match="7 to 30"):
        climate.prevailing_mean_ashrae55(_daily_series(np.zeros(365)), days=days)


# --------------------------------------------------------------------------------------
# Outdoor suitability [SPEC]
# --------------------------------------------------------------------------------------

def test_suitability_band_and_limits_include_their_ends():
    t = [15.99, 16.0, 20.0, 26.0, 26.01]
    s = climate.outdoor_suitability(t, [17.0, 17.0, 17.01, 0.0, 0.0],
                                    [10.0, 10.01, 0.0, 0.0, 0.0])
    assert_array_equal(s["in_band"], [False, True, True, True, False])
    assert_array_equal(s["below_band"], [True, False, False, False, False])
    assert_array_equal(s["above_band"], [False, False, False, False, True])
    assert_array_equal(s["dew_ok"], [True, True, False, True, True])
    assert_array_equal(s["wind_ok"], [True, False, True, True, True])
    assert_array_equal(s["rain_ok"], [True] * 5)
    assert_array_equal(s["suitable"], [False, False, False, True, False])
    assert s.attrs["rain_assessed"] is False
    assert s.attrs["band"] == (16.0, 26.0)


def test_suitability_keeps_series_index_and_broadcasts_scalars():
    t = _hourly_year(20.0).iloc[:48]
    s = climate.outdoor_suitability(t, 5.0, 2.0, rain=0.0, band=(18, 22))
    assert s.index.equals(t.index)
    assert s["suitable"].all() and s.attrs["rain_assessed"] is True


@pytest.mark.parametrize("kwargs, error, match", [
    ({"band": (26, 16)}, ProjectError, "lower < upper"),
    ({"band": (16,)}, ProjectError, "pair"),
    ({"wind_max": -1}, ProjectError, "wind_max"),
    ({"rain_max": -0.1}, ProjectError, "rain_max"),
    ({"dew_max": float("inf")}, ProjectError, "dew_max"),
    ({"temp_dew": [1.0, 2.0]}, WeatherError, "same length"),
    ({"temp_air": [20.0, np.nan, 20.0]}, WeatherError, "temp_air has missing"),
    ({"wind_speed": [1.0, -1.0, 1.0]}, WeatherError, "wind_speed must be >= 0"),
])
def test_suitability_bad_arguments(kwargs, error, match):
    args = {"temp_air": [20.0, 20.0, 20.0], "temp_dew": [5.0, 5.0, 5.0],
            "wind_speed": [1.0, 1.0, 1.0]}
    options = {k: v for k, v in kwargs.items() if k not in args}
    args.update({k: v for k, v in kwargs.items() if k in args})
    with pytest.raises(error, match=match):
        climate.outdoor_suitability(**args, **options)


def test_suitability_rejects_misaligned_series():
    t = _hourly_year(20.0).iloc[:24]
    with pytest.raises(WeatherError, match="same as that of temp_air"):
        climate.outdoor_suitability(t, t.shift(1, freq="h"), t * 0)


# --------------------------------------------------------------------------------------
# Month without occupied hours is flagged [SPEC]
# --------------------------------------------------------------------------------------

def test_month_without_occupied_hours_is_flagged(weather):
    w = weather["greensboro_tmy3"]
    occ = climate.occupied_hours(w.index)
    occ = occ & (w.index.month != 12)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    ms = climate.monthly_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                 w.wind_speed, occ, suit)
    assert_array_equal(ms["no_occupied_hours"], [False] * 11 + [True])
    assert ms.loc[12, "occupied_hours"] == 0
    assert np.isnan(ms.loc[12, "occupied_nv_suitable_pct"])
    assert not ms.loc[1:11, "occupied_nv_suitable_pct"].isna().any()
    text = climate.describe_climate(ms)
    assert "No occupied hours in Dec." in text
    nobody = climate.annual_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                    w.wind_speed, occ & False, suit)
    assert nobody.no_occupied_hours is True and math.isnan(nobody.occupied_in_band_pct)


def test_summary_rejects_bad_inputs(weather):
    w = weather["greensboro_tmy3"]
    occ = climate.occupied_hours(w.index)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    args = [w.temp_air, w.temp_dew, w.relative_humidity, w.wind_speed, occ, suit]
    short = [a.iloc[:-24] for a in args]
    with pytest.raises(WeatherError, match="one calendar year"):
        climate.monthly_summary(*short)
    with pytest.raises(WeatherError, match="boolean"):
        climate.monthly_summary(*args[:4], occ.astype(int), suit)
    with pytest.raises(WeatherError, match="relative_humidity must be <= 100"):
        climate.monthly_summary(w.temp_air, w.temp_dew, w.relative_humidity * 100,
                                w.wind_speed, occ, suit)
    with pytest.raises(WeatherError, match="lacks column"):
        climate.annual_summary(*args[:5], suit.drop(columns="suitable"))


# --------------------------------------------------------------------------------------
# Night cooling on constructed days [SPEC], counts via [DATETIME]
# --------------------------------------------------------------------------------------

@pytest.fixture()
def nights() -> pd.Series:
    t = _hourly_year(25.0)
    t[pd.Timestamp("2026-12-31 22:00")] = 12.0   # night before 1 Jan (cyclic): cool
    t[pd.Timestamp("2026-01-05 23:00")] = 15.0   # night before Tue 6 Jan: cool
    t[pd.Timestamp("2026-01-07 07:00")] = 10.0   # after the 07:00 end, before 22:00: none
    t[pd.Timestamp("2026-01-08 22:00")] = 18.0   # equals threshold, not below: not cool
    t[pd.Timestamp("2026-01-13 06:00")] = 17.9   # last night hour of Tue 13 Jan: cool
    t[pd.Timestamp("2026-01-10 22:00")] = 10.0   # night before Sun 11 Jan: not occupied
    t[pd.Timestamp("2026-01-11 21:00")] = 5.0    # before the 22:00 start: none
    return t


def test_night_cooling_constructed_days(nights):
    occ = climate.occupied_hours(nights.index)
    res = climate.night_cooling_potential(nights, occ)
    cool_days = res.daily.index[res.daily["cool_night"]]
    expected = pd.DatetimeIndex(["2026-01-01", "2026-01-06", "2026-01-11", "2026-01-13"])
    assert cool_days.equals(expected)
    assert_allclose(res.daily.loc["2026-01-06", "night_min_C"], 15.0, atol=0)
    weekdays = [dt.date(YEAR, 1, 1) + dt.timedelta(days=i) for i in range(365)]
    n_occupied = sum(d.weekday() < 5 for d in weekdays)                   # 261
    n_jan = sum(d.weekday() < 5 and d.month == 1 for d in weekdays)       # 22
    assert res.occupied_days == n_occupied
    assert res.cool_night_days == 3                     # 1, 6, 13 Jan (11 Jan is Sunday)
    assert_allclose(res.cool_night_pct, 100.0 * 3 / n_occupied, atol=1e-12)
    assert res.monthly.loc[1, "occupied_days"] == n_jan
    assert_allclose(res.monthly.loc[1, "cool_night_pct"], 100.0 * 3 / n_jan, atol=1e-12)
    assert_allclose(res.monthly.loc[2:12, "cool_night_pct"], 0.0, atol=0)
    assert not res.monthly["no_occupied_days"].any()


def test_night_cooling_custom_window(nights):
    occ = climate.occupied_hours(nights.index)
    res = climate.night_cooling_potential(nights, occ, night_start_hour=24,
                                          night_end_hour=6, threshold=20.0)
    # midnight to 06:00 only: 13 Jan 06:00 and the evenings drop out
    cool_days = res.daily.index[res.daily["cool_night"]]
    assert cool_days.empty
    warm = climate.night_cooling_potential(nights, occ, threshold=30.0)
    assert warm.cool_night_days == warm.occupied_days


@pytest.mark.parametrize("kwargs, match", [
    ({"night_start_hour": 11}, "night_start_hour"),
    ({"night_end_hour": 13}, "night_end_hour"),
    ({"night_start_hour": 24, "night_end_hour": 0}, "empty"),
    ({"threshold": "18"}, "threshold"),
])
def test_night_cooling_bad_arguments(nights, kwargs, match):
    with pytest.raises(ProjectError, match=match):
        climate.night_cooling_potential(nights, climate.occupied_hours(nights), **kwargs)


def test_night_cooling_rejects_misaligned_occupancy(nights):
    occ = climate.occupied_hours(nights.index[:100])
    with pytest.raises(WeatherError, match="occupied"):
        climate.night_cooling_potential(nights, occ)


# --------------------------------------------------------------------------------------
# Narrative, checked against month sets computed with pandas [PVLIB-TMY]
# --------------------------------------------------------------------------------------

_ABBR = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov",
         "Dec"]


def _months_in(text: str) -> set[int]:
    """Expand "Nov–Feb, May, Jul–Aug" into month numbers (written for the test)."""
    months: set[int] = set()
    for part in text.split(","):
        ends = [_ABBR.index(p.strip()) + 1 for p in part.split("–")]
        m = ends[0]
        months.add(m)
        while m != ends[-1]:
            m = m % 12 + 1
            months.add(m)
    return months


@pytest.mark.parametrize("open_pct, mostly_pct", [(50.0, 50.0), (40.0, 75.0)])
@pytest.mark.parametrize("station", ["greensboro_tmy3", "miami_tmy2"])
def test_describe_climate_month_groups(weather, station, open_pct, mostly_pct):
    w = weather[station]
    occ_ref = _independent_occupancy(w.index, holidays=())
    t = w.temp_air.to_numpy()
    suitable = ((t >= 16) & (t <= 26) & (w.temp_dew.to_numpy() <= 17)
                & (w.wind_speed.to_numpy() <= 10))
    m = w.index.month

    def share(mask):
        s = pd.Series(mask & occ_ref, index=w.index).groupby(m).sum()
        return 100.0 * s / pd.Series(occ_ref, index=w.index).groupby(m).sum()

    open_ref = set(share(suitable).index[share(suitable) >= open_pct])
    warm_ref = set(share(t > 26).index[share(t > 26) >= mostly_pct]) - open_ref

    occ = climate.occupied_hours(w.index)
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    ms = climate.monthly_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                 w.wind_speed, occ, suit)
    text = climate.describe_climate(ms, (16.0, 26.0), open_pct=open_pct,
                                    mostly_pct=mostly_pct)
    found_open = re.search(rf"at least {open_pct:g} % of occupied hours suitable\) in "
                           r"([^.]+)\.", text)
    found_warm = re.search(r"(?:^|\. )([A-Za-z–, ]+): mostly warmer", text)
    assert open_ref and warm_ref      # both stations have months of each kind
    assert _months_in(found_open.group(1)) == open_ref
    assert _months_in(found_warm.group(1)) == warm_ref
    pct = 100.0 * (suitable & occ_ref).sum() / occ_ref.sum()
    assert f"Over the year, {pct:.0f} % of occupied hours" in text
    assert "rain not assessed" in text
    # a higher threshold moves months out of the "open" group
    strict = climate.describe_climate(ms, open_pct=100.0)
    assert "No month has at least 100 % of its occupied hours suitable." in strict


def test_describe_climate_bad_arguments(weather):
    w = weather["miami_tmy2"]
    suit = climate.outdoor_suitability(w.temp_air, w.temp_dew, w.wind_speed)
    ms = climate.monthly_summary(w.temp_air, w.temp_dew, w.relative_humidity,
                                 w.wind_speed, climate.occupied_hours(w.index), suit)
    with pytest.raises(ProjectError, match="open_pct"):
        climate.describe_climate(ms, open_pct=0)
    with pytest.raises(ProjectError, match="band"):
        climate.describe_climate(ms, band=(26, 16))
    with pytest.raises(WeatherError, match="lacks column"):
        climate.describe_climate(ms.drop(columns="occupied_hours"))


# --------------------------------------------------------------------------------------
# Index checks shared by the year functions [SPEC]
# --------------------------------------------------------------------------------------

def test_hourly_index_errors():
    t = _hourly_year()
    with pytest.raises(WeatherError, match="24 hourly values"):
        climate.daily_mean(t.iloc[:-1])
    with pytest.raises(WeatherError, match="naive"):
        climate.daily_mean(t.tz_localize("Etc/GMT+5"))
    with pytest.raises(WeatherError, match="whole hours"):
        climate.daily_mean(t.shift(30, freq="min"))
    with pytest.raises(WeatherError, match="numbers"):
        climate.daily_mean(t > 0)
    occ = climate.occupied_hours(t)
    with pytest.raises(WeatherError, match="one calendar year"):
        climate.night_cooling_potential(t.shift(1, freq="D"), occ.shift(1, freq="D"))
    with pytest.raises(WeatherError, match="no value for"):
        climate.hourly_from_daily(climate.daily_mean(t).iloc[:-1], t.index)
    assert issubclass(WeatherError, FreerunError) and issubclass(ProjectError, FreerunError)
