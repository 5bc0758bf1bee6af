"""Outdoor climate of the site, seen from the point of view of mixed-mode operation.

Pure, vectorised functions on an hourly typical-year weather series:

* occupancy calendar (:func:`occupied_hours`);
* daily statistics (:func:`daily_mean`, :func:`daily_max`, :func:`daily_min`) and
  their broadcast back onto hours (:func:`hourly_from_daily`);
* the running mean outdoor temperature of EN 16798-1 (:func:`running_mean_en16798`)
  and the prevailing mean outdoor temperature of ASHRAE 55
  (:func:`prevailing_mean_ashrae55`);
* hour-by-hour suitability of the outdoor air for natural ventilation
  (:func:`outdoor_suitability`), summarised per month (:func:`monthly_summary`) and
  per year (:func:`annual_summary`);
* the potential for night cooling (:func:`night_cooling_potential`);
* a plain-English narrative of the monthly figures (:func:`describe_climate`).

Time-series conventions (shared by the whole package)
------------------------------------------------------
An hourly series is a :class:`pandas.Series` on a naive :class:`pandas.DatetimeIndex` in
local standard time; each hour is labelled by its START (00:00 is the hour 00:00–01:00).
Functions marked "one calendar year" need the whole of one year, hour by hour:
8760 hours, or 8784 when 29 February is kept; in a leap year 29 February may also be
left out (8760 hours with a 25-hour step from 28 Feb 23:00 to 1 Mar 00:00). A daily series
holds one value per calendar day, labelled by the day's start (00:00).

Errors
------
Bad settings (a threshold, a calendar, a smoothing constant: things that come from the
project file) raise :class:`calcs.errors.ProjectError`; bad data (wrong index, missing
values, misaligned series) raise :class:`calcs.errors.WeatherError`. Both derive from
:class:`calcs.errors.FreerunError`.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass

import numpy as np
import pandas as pd

from calcs.errors import ProjectError, WeatherError

__all__ = [
    "DAY_NAMES",
    "DEFAULT_BAND",
    "DEFAULT_DEW_MAX",
    "DEFAULT_WIND_MAX",
    "DEFAULT_RAIN_MAX",
    "EN16798_START_WEIGHTS",
    "occupied_hours",
    "daily_mean",
    "daily_max",
    "daily_min",
    "hourly_from_daily",
    "running_mean_en16798",
    "prevailing_mean_ashrae55",
    "outdoor_suitability",
    "monthly_summary",
    "AnnualClimateSummary",
    "annual_summary",
    "NightCoolingResult",
    "night_cooling_potential",
    "describe_climate",
]

#: Three-letter day names accepted by :func:`occupied_hours`, Monday first
#: (index = :meth:`datetime.date.weekday`).
DAY_NAMES = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")

#: Outdoor dry-bulb band in which opening windows is comfortable [°C].
#: Common practice, no source.
DEFAULT_BAND = (16.0, 26.0)

#: Highest outdoor dew point at which outdoor air is let in [°C]. Common practice, no
#: source. It sits close to the 0.012 kg/kg humidity-ratio limit that ASHRAE 55-2004
#: §5.2.2 set [MEM], which is a dew point of about 16.8 °C at 101.325 kPa.
DEFAULT_DEW_MAX = 17.0

#: Highest weather-station wind speed (10 m) at which windows stay open [m s⁻¹].
#: Common practice, no source.
DEFAULT_WIND_MAX = 10.0

#: Highest hourly rain at which windows stay open [mm h⁻¹]. Common practice, no source
#: (0.5 mm h⁻¹ is the upper end of "slight rain" in UK Met Office usage [MEM]).
DEFAULT_RAIN_MAX = 0.5

#: Weights of the EN 16798-1 / EN 15251 seven-day start-up formula, yesterday first;
#: their sum is the divisor 3.8.
EN16798_START_WEIGHTS = (1.0, 0.8, 0.6, 0.5, 0.4, 0.3, 0.2)

_MONTH_ABBR = ("Jan", "Feb", "Mar", "Apr", "May", "Jun",
               "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


# --------------------------------------------------------------------------------------
# Validation helpers
# --------------------------------------------------------------------------------------

def _describe_index(index: pd.DatetimeIndex) -> str:
    if len(index) == 0:
        return "an empty index"
    return f"{len(index)} timestamps from {index[0]} to {index[-1]}"


def _check_datetime_index(index, what: str) -> pd.DatetimeIndex:
    if not isinstance(index, pd.DatetimeIndex):
        msg = (f"{what}: index must be a pandas DatetimeIndex, "
               f"got {type(index).__name__}")
        raise WeatherError(msg)
    if index.tz is not None:
        msg = (f"{what}: index must be naive local standard time, got time zone "
               f"{index.tz}; drop it with .tz_localize(None)")
        raise WeatherError(msg)
    if index.hasnans:
        msg = f"{what}: index contains missing timestamps (NaT)"
        raise WeatherError(msg)
    return index


def _expected_year_index(year: int, freq: str, unit: str,
                         drop_leap_day: bool) -> pd.DatetimeIndex:
    last = "23:00" if freq == "h" else "00:00"
    expected = pd.date_range(f"{year}-01-01 00:00", f"{year}-12-31 {last}",
                             freq=freq, unit=unit)
    if drop_leap_day:
        expected = expected[~((expected.month == 2) & (expected.day == 29))]
    return expected


def _check_one_year(index: pd.DatetimeIndex, what: str, freq: str) -> int:
    """Check that ``index`` covers one calendar year hour by hour (``freq='h'``) or day
    by day (``freq='D'``); return the year."""
    _check_datetime_index(index, what)
    step = "hour by hour" if freq == "h" else "day by day"
    if len(index) == 0:
        msg = f"{what}: index must cover one calendar year {step}, got an empty index"
        raise WeatherError(msg)
    year = int(index[0].year)
    full = _expected_year_index(year, freq, index.unit, drop_leap_day=False)
    if index.equals(full):
        return year
    if len(full) in (8784, 366):
        without = _expected_year_index(year, freq, index.unit, drop_leap_day=True)
        if index.equals(without):
            return year
    n = "8760 h (8784 h with 29 Feb)" if freq == "h" else "365 days (366 with 29 Feb)"
    msg = (f"{what}: index must cover one calendar year {step}, labelled by the start "
           f"of each {'hour' if freq == 'h' else 'day'} ({n}; in a leap year 29 Feb may "
           f"be left out), got {_describe_index(index)}")
    raise WeatherError(msg)


def _check_numeric_series(x, what: str, *, lower: float | None = None,
                          upper: float | None = None) -> pd.Series:
    """Return ``x`` as a float Series; reject non-Series, non-numeric and missing data."""
    if not isinstance(x, pd.Series):
        msg = (f"{what} must be a pandas Series on an hourly DatetimeIndex, "
               f"got {type(x).__name__}")
        raise WeatherError(msg)
    if pd.api.types.is_bool_dtype(x.dtype) or not pd.api.types.is_numeric_dtype(x.dtype):
        msg = f"{what} must hold numbers, got dtype {x.dtype}"
        raise WeatherError(msg)
    values = x.astype(float)
    _check_values(values.to_numpy(), what, values.index, lower=lower, upper=upper)
    return values


def _check_values(values: np.ndarray, what: str, index=None, *,
                  lower: float | None = None, upper: float | None = None) -> None:
    def where(mask: np.ndarray) -> str:
        first = int(np.flatnonzero(mask)[0])
        label = index[first] if index is not None else f"position {first}"
        return f"{int(mask.sum())} value(s), first at {label}"

    missing = ~np.isfinite(values)
    if missing.any():
        msg = f"{what} has missing or non-finite values: {where(missing)}"
        raise WeatherError(msg)
    if lower is not None and (values < lower).any():
        bad = values < lower
        msg = (f"{what} must be >= {lower:g}, got {values[bad][0]:g} in {where(bad)} "
               f"(a missing-value code of the weather file?)")
        raise WeatherError(msg)
    if upper is not None and (values > upper).any():
        bad = values > upper
        msg = (f"{what} must be <= {upper:g}, got {values[bad][0]:g} in {where(bad)} "
               f"(a missing-value code of the weather file?)")
        raise WeatherError(msg)


def _check_bool_series(x, what: str) -> pd.Series:
    if not isinstance(x, pd.Series) or not pd.api.types.is_bool_dtype(x.dtype):
        got = x.dtype if isinstance(x, pd.Series) else type(x).__name__
        msg = f"{what} must be a boolean pandas Series (e.g. from occupied_hours), got {got}"
        raise WeatherError(msg)
    if x.isna().any():
        msg = f"{what} has missing values"
        raise WeatherError(msg)
    return x.astype(bool)


def _check_same_index(reference: pd.Index, other: pd.Index, what: str,
                      ref_name: str) -> None:
    if not other.equals(reference):
        msg = (f"{what}: index must be the same as that of {ref_name} "
               f"({_describe_index(reference)}), got {_describe_index(other)}")
        raise WeatherError(msg)


def _check_real(value, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        msg = f"{what} must be a number, got {value!r}"
        raise ProjectError(msg)
    value = float(value)
    if not math.isfinite(value):
        msg = f"{what} must be a finite number, got {value}"
        raise ProjectError(msg)
    return value


def _check_int(value, what: str, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        msg = f"{what} must be a whole number from {low} to {high}, got {value!r}"
        raise ProjectError(msg)
    if not low <= int(value) <= high:
        msg = f"{what} must be a whole number from {low} to {high}, got {value}"
        raise ProjectError(msg)
    return int(value)


def _check_band(band, what: str = "band") -> tuple[float, float]:
    try:
        low, high = band
    except (TypeError, ValueError):
        msg = f"{what} must be a pair (lower, upper) [°C], got {band!r}"
        raise ProjectError(msg) from None
    low = _check_real(low, f"{what} lower limit")
    high = _check_real(high, f"{what} upper limit")
    if not low < high:
        msg = f"{what} must have lower < upper [°C], got ({low:g}, {high:g})"
        raise ProjectError(msg)
    return low, high


def _check_daily_year(daily, what: str) -> pd.Series:
    values = _check_numeric_series(daily, what)
    _check_one_year(values.index, what, "D")
    return values


# --------------------------------------------------------------------------------------
# Occupancy
# --------------------------------------------------------------------------------------

def occupied_hours(index, days: Iterable[str] = ("mon", "tue", "wed", "thu", "fri"),
                   start_hour: int = 8, end_hour: int = 18,
                   holidays: Iterable = ()) -> pd.Series:
    """Flag the occupied hours of a calendar.

    Parameters
    ----------
    index : pandas.DatetimeIndex or pandas.Series or pandas.DataFrame
        Hourly timestamps, naive local standard time, each labelling the start of its
        hour. A Series or DataFrame contributes its index. Any span is accepted.
    days : iterable of str, default Monday to Friday
        Occupied weekdays as three-letter names ``"mon"`` ... ``"sun"`` (any case).
    start_hour : int, default 8
        First occupied hour of the day, 0–23 [h].
    end_hour : int, default 18
        End of occupancy, 1–24, greater than ``start_hour``; the hour starting at
        ``end_hour`` is not occupied [h].
    holidays : iterable of date-like, default none
        Dates (``"2026-12-25"``, :class:`datetime.date`, :class:`pandas.Timestamp`) on
        which the building is empty. Each must fall within the dates of ``index``.

    Returns
    -------
    pandas.Series
        Boolean, named ``"occupied"``, on ``index``.

    Raises
    ------
    calcs.errors.ProjectError
        Unknown day name, hours out of range or ``start_hour >= end_hour`` (occupancy
        across midnight is not supported), unreadable holiday or one outside the
        calendar.
    calcs.errors.WeatherError
        ``index`` is not a naive DatetimeIndex.

    Notes
    -----
    An hour starting at time t is occupied when
    ``weekday(t) in days and date(t) not in holidays and start_hour <= hour(t) < end_hour``.
    """
    if isinstance(index, (pd.Series, pd.DataFrame)):
        index = index.index
    index = _check_datetime_index(index, "occupied_hours")

    if isinstance(days, str):
        days = (days,)
    weekday_numbers = []
    for day in days:
        name = str(day).strip().lower()
        if name not in DAY_NAMES:
            msg = (f"occupancy days: unknown day {day!r}; allowed are "
                   f"{', '.join(DAY_NAMES)}")
            raise ProjectError(msg)
        weekday_numbers.append(DAY_NAMES.index(name))

    start_hour = _check_int(start_hour, "occupancy start_hour", 0, 23)
    end_hour = _check_int(end_hour, "occupancy end_hour", 1, 24)
    if start_hour >= end_hour:
        msg = (f"occupancy start_hour must be < end_hour (occupancy across midnight is "
               f"not supported), got start_hour={start_hour}, end_hour={end_hour}")
        raise ProjectError(msg)

    if isinstance(holidays, (str, _dt.date)):
        holidays = (holidays,)
    holiday_days = []
    first_day = index.min().normalize() if len(index) else None
    last_day = index.max().normalize() if len(index) else None
    for holiday in holidays:
        try:
            day = pd.Timestamp(holiday)
        except (TypeError, ValueError):
            day = pd.NaT
        if day is pd.NaT:
            msg = f"occupancy holidays: cannot read {holiday!r} as a date (use YYYY-MM-DD)"
            raise ProjectError(msg)
        day = day.normalize()
        if first_day is None or not first_day <= day <= last_day:
            msg = (f"occupancy holidays: {holiday!r} is outside the calendar "
                   f"({first_day:%Y-%m-%d} to {last_day:%Y-%m-%d})"
                   if first_day is not None else
                   f"occupancy holidays: {holiday!r} given for an empty calendar")
            raise ProjectError(msg)
        holiday_days.append(day)

    occupied = (np.isin(index.day_of_week, weekday_numbers)
                & (index.hour >= start_hour) & (index.hour < end_hour))
    if holiday_days:
        occupied &= ~index.normalize().isin(pd.DatetimeIndex(holiday_days))
    return pd.Series(np.asarray(occupied, dtype=bool), index=index, name="occupied")


# --------------------------------------------------------------------------------------
# Daily statistics
# --------------------------------------------------------------------------------------

def _daily_groups(temp_air, what: str = "temp_air"):
    values = _check_numeric_series(temp_air, what)
    index = _check_datetime_index(values.index, what)
    if not index.is_monotonic_increasing or not index.is_unique:
        msg = f"{what}: index must be increasing with no repeated timestamps"
        raise WeatherError(msg)
    if ((index.minute != 0) | (index.second != 0) | (index.microsecond != 0)
            | (index.nanosecond != 0)).any():
        msg = f"{what}: timestamps must be whole hours (hour-start labels)"
        raise WeatherError(msg)
    days = index.normalize()
    counts = pd.Series(1, index=days).groupby(level=0).size()
    short = counts[counts != 24]
    if len(short):
        msg = (f"{what}: every day must have 24 hourly values, "
               f"{short.index[0]:%Y-%m-%d} has {int(short.iloc[0])} "
               f"({len(short)} incomplete day(s))")
        raise WeatherError(msg)
    day_index = pd.DatetimeIndex(days, name=index.name)
    return values.groupby(day_index, sort=True)


def daily_mean(temp_air) -> pd.Series:
    """Daily mean of an hourly series.

    Parameters
    ----------
    temp_air : pandas.Series
        Hourly values (usually outdoor dry-bulb temperature) on a naive DatetimeIndex of
        hour-start labels; every calendar day present must have 24 values [°C].

    Returns
    -------
    pandas.Series
        One value per calendar day, indexed by the day's start (00:00), same name [°C].

    Notes
    -----
    θ_ed = (1/24)·Σ θ_h over the 24 hours starting 00:00 … 23:00 of the day.
    """
    return _daily_groups(temp_air).mean()


def daily_max(temp_air) -> pd.Series:
    """Daily maximum of an hourly series; see :func:`daily_mean` for the input [°C]."""
    return _daily_groups(temp_air).max()


def daily_min(temp_air) -> pd.Series:
    """Daily minimum of an hourly series; see :func:`daily_mean` for the input [°C]."""
    return _daily_groups(temp_air).min()


def hourly_from_daily(daily, index) -> pd.Series:
    """Broadcast a daily series onto hours.

    Parameters
    ----------
    daily : pandas.Series
        One value per calendar day, indexed by day start (e.g. from :func:`daily_mean`
        or :func:`running_mean_en16798`). Any dtype.
    index : pandas.DatetimeIndex or pandas.Series or pandas.DataFrame
        Target hourly timestamps (a Series or DataFrame contributes its index). Every
        date in it must be in ``daily``.

    Returns
    -------
    pandas.Series
        On ``index``; each hour carries the value of its calendar day. Same name and
        dtype as ``daily``.
    """
    if isinstance(index, (pd.Series, pd.DataFrame)):
        index = index.index
    index = _check_datetime_index(index, "hourly_from_daily index")
    if not isinstance(daily, pd.Series):
        msg = f"daily must be a pandas Series indexed by day, got {type(daily).__name__}"
        raise WeatherError(msg)
    day_index = _check_datetime_index(daily.index, "daily")
    if not day_index.is_unique or (day_index != day_index.normalize()).any():
        msg = "daily: index must hold unique day starts (00:00)"
        raise WeatherError(msg)
    positions = day_index.get_indexer(index.normalize())
    if (positions < 0).any():
        first = index[np.flatnonzero(positions < 0)[0]]
        msg = f"daily has no value for {first:%Y-%m-%d}, needed by the hourly index"
        raise WeatherError(msg)
    return pd.Series(daily.to_numpy()[positions], index=index, name=daily.name)


# --------------------------------------------------------------------------------------
# Running means
# --------------------------------------------------------------------------------------

def running_mean_en16798(daily_mean, alpha: float = 0.8, *,
                         start: str = "seven_day") -> pd.Series:
    """Exponentially weighted running mean outdoor temperature of EN 16798-1.

    Parameters
    ----------
    daily_mean : pandas.Series
        Daily mean outdoor temperatures of one calendar year, indexed by day start
        (from :func:`daily_mean`) [°C].
    alpha : float, default 0.8
        Smoothing constant, 0 <= alpha < 1; EN 16798-1 recommends 0.8 [-].
    start : {"seven_day", "periodic"}, default "seven_day"
        How the first day of the year is started. ``"seven_day"``: the standard's
        seven-day formula (see Notes). ``"periodic"``: the exact value for a year that
        repeats itself forever (the infinite exponential sum over the cyclic history).

    Returns
    -------
    pandas.Series
        θ_rm for each day, named ``"running_mean"``, on the daily index [°C].

    Raises
    ------
    calcs.errors.ProjectError
        ``alpha`` outside [0, 1) or unknown ``start``.
    calcs.errors.WeatherError
        ``daily_mean`` does not cover one calendar year day by day, or has gaps.

    Notes
    -----
    The running mean of day d is computed from the daily means θ_ed of the PREVIOUS
    days only:

        θ_rm(d) = (1 − α)·θ_ed(d−1) + α·θ_rm(d−1)

    equivalently θ_rm(d) = (1 − α)·(θ_ed(d−1) + α·θ_ed(d−2) + α²·θ_ed(d−3) + …).

    Start (``"seven_day"``), for the first day of the year, with α = 0.8:

        θ_rm = (θ_ed−1 + 0.8θ_ed−2 + 0.6θ_ed−3 + 0.5θ_ed−4 + 0.4θ_ed−5 + 0.3θ_ed−6
                + 0.2θ_ed−7) / 3.8

    For α ≠ 0.8 the published weights do not apply; this function then uses the
    truncated exponential weights α⁰ … α⁶ normalised by their sum (our choice; at
    α = 0 it gives θ_ed−1, as the recursion does).

    Start (``"periodic"``): θ_rm(0) = (1 − α)·Σ_{k=1..N} α^(k−1)·θ_ed(−k) / (1 − α^N)
    over the N days of the year taken cyclically, which is the limit of an infinitely
    repeated year.

    Assumption (typical year wraps): a typical-year weather file stands for any year,
    so the days before 1 January are taken cyclically from the end of the same year
    (θ_ed−1 = 31 December, θ_ed−2 = 30 December, …). Where 29 February has been left out
    of a leap year, 1 March follows 28 February directly.

    References
    ----------
    EN 16798-1:2019, Energy performance of buildings — Ventilation for buildings —
    Part 1, Annex B.2.2 (running mean outdoor temperature) [MEM]; the same formulas
    appear in EN 15251:2007 Annex A.2 and CIBSE TM52:2013 Eq. 2.2 and 2.3.
    """
    values = _check_daily_year(daily_mean, "daily_mean")
    alpha = _check_real(alpha, "alpha")
    if not 0.0 <= alpha < 1.0:
        msg = f"alpha must be in [0, 1) (EN 16798-1 recommends 0.8), got {alpha:g}"
        raise ProjectError(msg)
    if start not in ("seven_day", "periodic"):
        msg = f"start must be 'seven_day' or 'periodic', got {start!r}"
        raise ProjectError(msg)

    theta = values.to_numpy()
    n = theta.size
    # previous days, yesterday first, taken cyclically from the end of the year
    history = theta[::-1]
    if start == "seven_day":
        if alpha == 0.8:
            weights = np.asarray(EN16798_START_WEIGHTS)
        else:
            weights = alpha ** np.arange(7)
        first = float(np.dot(weights, history[:7]) / weights.sum())
    else:
        weights = alpha ** np.arange(n)
        first = float((1.0 - alpha) * np.dot(weights, history) / (1.0 - alpha ** n))

    out = np.empty(n)
    out[0] = first
    # recurrence over days (365 steps); each step depends on the previous one
    for d in range(1, n):
        out[d] = (1.0 - alpha) * theta[d - 1] + alpha * out[d - 1]
    return pd.Series(out, index=values.index, name="running_mean")


def prevailing_mean_ashrae55(daily_mean, days: int = 7) -> pd.Series:
    """Prevailing mean outdoor temperature of ASHRAE 55 (simple arithmetic mean).

    Parameters
    ----------
    daily_mean : pandas.Series
        Daily mean outdoor temperatures of one calendar year, indexed by day start
        [°C].
    days : int, default 7
        Number of sequential previous days averaged, 7 to 30 [d].

    Returns
    -------
    pandas.Series
        t_pma(out) for each day, named ``"prevailing_mean"``, on the daily index [°C].

    Notes
    -----
    t_pma(out)(d) = (1/n)·Σ_{k=1..n} θ_ed(d−k), with n = ``days``; the day itself is
    not included. As in :func:`running_mean_en16798`, the days before 1 January are
    taken cyclically from the end of the same (typical) year.

    References
    ----------
    ANSI/ASHRAE Standard 55-2020, Thermal Environmental Conditions for Human
    Occupancy, §5.4.2.1 (no fewer than 7 and no more than 30 sequential days prior to
    the day in question) [MEM].
    """
    values = _check_daily_year(daily_mean, "daily_mean")
    days = _check_int(days, "days (ASHRAE 55 averaging period)", 7, 30)
    theta = values.to_numpy()
    extended = np.concatenate([theta[-days:], theta])  # cyclic history before 1 Jan
    csum = np.concatenate([[0.0], np.cumsum(extended)])
    # day d (position days + d in extended) averages extended[d : d + days]
    n = theta.size
    out = (csum[days:days + n] - csum[0:n]) / days
    return pd.Series(out, index=values.index, name="prevailing_mean")


# --------------------------------------------------------------------------------------
# Hourly suitability of outdoor air
# --------------------------------------------------------------------------------------

def _aligned_arrays(inputs: dict[str, object]) -> tuple[dict[str, np.ndarray], pd.Index]:
    index = None
    ref_name = None
    for name, x in inputs.items():
        if isinstance(x, pd.Series):
            if index is None:
                index, ref_name = x.index, name
            else:
                _check_same_index(index, x.index, name, ref_name)
    arrays = {}
    for name, x in inputs.items():
        if isinstance(x, pd.Series):
            if pd.api.types.is_bool_dtype(x.dtype) or not pd.api.types.is_numeric_dtype(x.dtype):
                msg = f"{name} must hold numbers, got dtype {x.dtype}"
                raise WeatherError(msg)
            arrays[name] = x.astype(float).to_numpy()
        else:
            try:
                arrays[name] = np.asarray(x, dtype=float)
            except (TypeError, ValueError):
                msg = f"{name} must be numbers (scalar, array or Series), got {x!r}"
                raise WeatherError(msg) from None
    try:
        broadcast = np.broadcast_arrays(*arrays.values())
    except ValueError:
        shapes = ", ".join(f"{k} {np.shape(v)}" for k, v in arrays.items())
        msg = f"inputs must have the same length, got {shapes}"
        raise WeatherError(msg) from None
    arrays = {k: np.atleast_1d(v) for k, v in zip(arrays, broadcast, strict=True)}
    shape = next(iter(arrays.values())).shape
    if len(shape) != 1:
        msg = f"inputs must be one-dimensional, got shape {shape}"
        raise WeatherError(msg)
    if index is None:
        index = pd.RangeIndex(shape[0])
    elif len(index) != shape[0]:
        msg = f"inputs must have the same length as the Series ({len(index)}), got {shape[0]}"
        raise WeatherError(msg)
    return arrays, index


def outdoor_suitability(temp_air, temp_dew, wind_speed, rain=None, *,
                        band: tuple[float, float] = DEFAULT_BAND,
                        dew_max: float = DEFAULT_DEW_MAX,
                        wind_max: float = DEFAULT_WIND_MAX,
                        rain_max: float = DEFAULT_RAIN_MAX) -> pd.DataFrame:
    """Hour-by-hour test of whether outdoor air suits natural ventilation.

    Parameters
    ----------
    temp_air : array_like or pandas.Series
        Outdoor dry-bulb temperature [°C].
    temp_dew : array_like or pandas.Series
        Outdoor dew-point temperature [°C].
    wind_speed : array_like or pandas.Series
        Wind speed at the weather station, usually 10 m, >= 0 [m s⁻¹].
    rain : array_like or pandas.Series, optional
        Rain in the hour, >= 0 [mm h⁻¹]. ``None`` means rain is not assessed.
    band : (float, float), default (16.0, 26.0)
        Outdoor dry-bulb band in which opening up is comfortable, ends included [°C].
        The default is common practice, no source.
    dew_max : float, default 17.0
        Highest acceptable dew point, included [°C]. Common practice, no source.
    wind_max : float, default 10.0
        Highest acceptable wind speed, included, >= 0 [m s⁻¹]. Common practice, no
        source.
    rain_max : float, default 0.5
        Highest acceptable rain, included, >= 0 [mm h⁻¹]. Common practice, no source.

    Returns
    -------
    pandas.DataFrame
        On the inputs' index (the Series index, else a RangeIndex), boolean columns:

        - ``below_band``: temp_air < band lower limit;
        - ``above_band``: temp_air > band upper limit;
        - ``in_band``: lower <= temp_air <= upper;
        - ``dew_ok``: temp_dew <= dew_max;
        - ``wind_ok``: wind_speed <= wind_max;
        - ``rain_ok``: rain <= rain_max (all True when rain is not assessed);
        - ``suitable``: in_band & dew_ok & wind_ok & rain_ok.

        ``DataFrame.attrs`` records the settings: ``rain_assessed`` (False when
        ``rain`` is None), ``band``, ``dew_max``, ``wind_max``, ``rain_max``.

    Raises
    ------
    calcs.errors.ProjectError
        Bad band or thresholds.
    calcs.errors.WeatherError
        Missing values, negative wind or rain (often a missing-value code), Series with
        different indexes or inputs of different lengths.

    Notes
    -----
    The band judges outdoor air only; indoor comfort is the comfort stage's business.
    """
    low, high = _check_band(band)
    dew_max = _check_real(dew_max, "dew_max")
    wind_max = _check_real(wind_max, "wind_max")
    rain_max = _check_real(rain_max, "rain_max")
    if wind_max < 0:
        msg = f"wind_max must be >= 0 m s⁻¹, got {wind_max:g}"
        raise ProjectError(msg)
    if rain_max < 0:
        msg = f"rain_max must be >= 0 mm h⁻¹, got {rain_max:g}"
        raise ProjectError(msg)

    inputs = {"temp_air": temp_air, "temp_dew": temp_dew, "wind_speed": wind_speed}
    if rain is not None:
        inputs["rain"] = rain
    arrays, index = _aligned_arrays(inputs)
    _check_values(arrays["temp_air"], "temp_air", index)
    _check_values(arrays["temp_dew"], "temp_dew", index)
    _check_values(arrays["wind_speed"], "wind_speed", index, lower=0.0)
    if rain is not None:
        _check_values(arrays["rain"], "rain", index, lower=0.0)

    t = arrays["temp_air"]
    below = t < low
    above = t > high
    in_band = ~below & ~above
    dew_ok = arrays["temp_dew"] <= dew_max
    wind_ok = arrays["wind_speed"] <= wind_max
    rain_ok = arrays["rain"] <= rain_max if rain is not None else np.ones(t.shape, bool)
    frame = pd.DataFrame({
        "below_band": below, "above_band": above, "in_band": in_band,
        "dew_ok": dew_ok, "wind_ok": wind_ok, "rain_ok": rain_ok,
        "suitable": in_band & dew_ok & wind_ok & rain_ok,
    }, index=index)
    frame.attrs.update(rain_assessed=rain is not None, band=(low, high),
                       dew_max=dew_max, wind_max=wind_max, rain_max=rain_max)
    return frame


# --------------------------------------------------------------------------------------
# Monthly and annual summaries
# --------------------------------------------------------------------------------------

_SUITABILITY_COLUMNS = ("below_band", "above_band", "in_band", "suitable")


def _summary_inputs(temp_air, temp_dew, relative_humidity, wind_speed, occupied,
                    suitability):
    t = _check_numeric_series(temp_air, "temp_air")
    _check_one_year(t.index, "temp_air", "h")
    series = {"temp_air": t}
    for name, x, kw in (("temp_dew", temp_dew, {}),
                        ("relative_humidity", relative_humidity,
                         {"lower": 0.0, "upper": 100.0}),
                        ("wind_speed", wind_speed, {"lower": 0.0})):
        s = _check_numeric_series(x, name, **kw)
        _check_same_index(t.index, s.index, name, "temp_air")
        series[name] = s
    occ = _check_bool_series(occupied, "occupied")
    _check_same_index(t.index, occ.index, "occupied", "temp_air")
    if not isinstance(suitability, pd.DataFrame):
        msg = ("suitability must be the DataFrame returned by outdoor_suitability, "
               f"got {type(suitability).__name__}")
        raise WeatherError(msg)
    missing = [c for c in _SUITABILITY_COLUMNS if c not in suitability.columns]
    if missing:
        msg = (f"suitability lacks column(s) {', '.join(missing)}; "
               "pass the DataFrame returned by outdoor_suitability")
        raise WeatherError(msg)
    _check_same_index(t.index, suitability.index, "suitability", "temp_air")
    return series, occ, suitability


def _pct(part, whole):
    """100·part/whole, NaN where whole == 0 (callers flag those rows)."""
    part = np.asarray(part, dtype=float)
    whole = np.asarray(whole, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(whole > 0, 100.0 * part / np.where(whole > 0, whole, 1.0), np.nan)


def monthly_summary(temp_air, temp_dew, relative_humidity, wind_speed, occupied,
                    suitability) -> pd.DataFrame:
    """Monthly climate statistics and the share of occupied hours fit for opening up.

    Parameters
    ----------
    temp_air : pandas.Series
        Hourly outdoor dry-bulb temperature of one calendar year [°C].
    temp_dew : pandas.Series
        Hourly outdoor dew point, same index [°C].
    relative_humidity : pandas.Series
        Hourly outdoor relative humidity, same index, 0–100 [%].
    wind_speed : pandas.Series
        Hourly wind speed at the weather station, same index [m s⁻¹].
    occupied : pandas.Series of bool
        Occupied hours, same index (from :func:`occupied_hours`).
    suitability : pandas.DataFrame
        Hourly suitability, same index (from :func:`outdoor_suitability`).

    Returns
    -------
    pandas.DataFrame
        Index ``month`` 1–12. Columns (unit after the last underscore; ``pct`` = % of
        the month's OCCUPIED hours):

        - ``hours``: hours in the month [h];
        - ``mean_C``: mean dry-bulb temperature [°C];
        - ``mean_daily_max_C``, ``mean_daily_min_C``: mean of the daily maxima /
          minima of the month's days [°C];
        - ``mean_diurnal_range_K``: mean of (daily max − daily min) [K];
        - ``mean_relative_humidity_pct``: mean relative humidity [%] (of all hours);
        - ``mean_dew_point_C``: mean dew point [°C];
        - ``mean_wind_speed_m_s``: mean wind speed [m s⁻¹];
        - ``occupied_hours``: occupied hours [h];
        - ``occupied_in_band_hours``, ``occupied_nv_suitable_hours``: occupied hours
          in the band / suitable for natural ventilation [h];
        - ``occupied_in_band_pct``, ``occupied_below_band_pct``,
          ``occupied_above_band_pct``, ``occupied_nv_suitable_pct``: the same as shares
          of occupied hours [%];
        - ``no_occupied_hours``: True for a month without occupied hours; its ``_pct``
          columns are then NaN (0/0) and this flag is the reason.

        ``attrs`` carries ``suitability.attrs`` (band, thresholds, ``rain_assessed``).

    Notes
    -----
    Daily statistics group the 24 hours 00:00–23:00 of each calendar day; a day belongs
    to the month of its date. "Suitable" is the ``suitable`` column of
    :func:`outdoor_suitability`.
    """
    series, occ, suit = _summary_inputs(temp_air, temp_dew, relative_humidity,
                                        wind_speed, occupied, suitability)
    t = series["temp_air"]
    month = pd.Index(t.index.month, name="month")
    dmax = daily_max(t)
    dmin = daily_min(t)
    day_month = pd.Index(dmax.index.month, name="month")

    def occ_sum(mask) -> pd.Series:
        return pd.Series(np.asarray(mask, bool) & occ.to_numpy(),
                         index=t.index).groupby(month).sum()

    out = pd.DataFrame({
        "hours": t.groupby(month).size(),
        "mean_C": t.groupby(month).mean(),
        "mean_daily_max_C": dmax.groupby(day_month).mean(),
        "mean_daily_min_C": dmin.groupby(day_month).mean(),
        "mean_diurnal_range_K": (dmax - dmin).groupby(day_month).mean(),
        "mean_relative_humidity_pct": series["relative_humidity"].groupby(month).mean(),
        "mean_dew_point_C": series["temp_dew"].groupby(month).mean(),
        "mean_wind_speed_m_s": series["wind_speed"].groupby(month).mean(),
        "occupied_hours": occ_sum(np.ones(len(t), bool)),
        "occupied_in_band_hours": occ_sum(suit["in_band"]),
        "occupied_nv_suitable_hours": occ_sum(suit["suitable"]),
    })
    below = occ_sum(suit["below_band"])
    above = occ_sum(suit["above_band"])
    out = out.reindex(pd.RangeIndex(1, 13, name="month"))
    for col in ("hours", "occupied_hours", "occupied_in_band_hours",
                "occupied_nv_suitable_hours"):
        out[col] = out[col].astype("int64")
    occupied_n = out["occupied_hours"].to_numpy()
    out["occupied_in_band_pct"] = _pct(out["occupied_in_band_hours"], occupied_n)
    out["occupied_below_band_pct"] = _pct(below.reindex(out.index), occupied_n)
    out["occupied_above_band_pct"] = _pct(above.reindex(out.index), occupied_n)
    out["occupied_nv_suitable_pct"] = _pct(out["occupied_nv_suitable_hours"], occupied_n)
    out["no_occupied_hours"] = occupied_n == 0
    out.attrs.update(dict(suit.attrs))
    return out


@dataclass(frozen=True)
class AnnualClimateSummary:
    """Whole-year climate figures; field names carry their unit as in the monthly table.

    ``*_pct`` fields are shares of the year's OCCUPIED hours [%]; they are NaN only when
    ``no_occupied_hours`` is True.
    """

    year: int
    hours: int
    mean_C: float
    min_C: float
    max_C: float
    mean_daily_max_C: float
    mean_daily_min_C: float
    mean_diurnal_range_K: float
    mean_relative_humidity_pct: float
    mean_dew_point_C: float
    mean_wind_speed_m_s: float
    occupied_hours: int
    occupied_in_band_hours: int
    occupied_nv_suitable_hours: int
    occupied_in_band_pct: float
    occupied_below_band_pct: float
    occupied_above_band_pct: float
    occupied_nv_suitable_pct: float
    no_occupied_hours: bool
    rain_assessed: bool

    def as_dict(self) -> dict:
        """Plain dict of the fields (for results.json)."""
        return asdict(self)


def annual_summary(temp_air, temp_dew, relative_humidity, wind_speed, occupied,
                   suitability) -> AnnualClimateSummary:
    """Whole-year climate figures; inputs as for :func:`monthly_summary`.

    Returns
    -------
    AnnualClimateSummary
        ``hours`` [h]; ``mean_C``, ``min_C``, ``max_C`` of the hourly dry bulb [°C];
        ``mean_daily_max_C``, ``mean_daily_min_C``, ``mean_diurnal_range_K`` over all
        days; mean relative humidity [%], dew point [°C] and wind speed [m s⁻¹];
        occupied, in-band and suitable occupied hours [h] and their shares of occupied
        hours [%]; ``no_occupied_hours`` flag; ``rain_assessed`` (from
        ``suitability.attrs``; False if absent).
    """
    series, occ, suit = _summary_inputs(temp_air, temp_dew, relative_humidity,
                                        wind_speed, occupied, suitability)
    t = series["temp_air"]
    dmax = daily_max(t)
    dmin = daily_min(t)
    o = occ.to_numpy()
    n_occ = int(o.sum())

    def share(column: str) -> float:
        return float(_pct((suit[column].to_numpy(bool) & o).sum(), n_occ))

    return AnnualClimateSummary(
        year=int(t.index[0].year),
        hours=int(len(t)),
        mean_C=float(t.mean()),
        min_C=float(t.min()),
        max_C=float(t.max()),
        mean_daily_max_C=float(dmax.mean()),
        mean_daily_min_C=float(dmin.mean()),
        mean_diurnal_range_K=float((dmax - dmin).mean()),
        mean_relative_humidity_pct=float(series["relative_humidity"].mean()),
        mean_dew_point_C=float(series["temp_dew"].mean()),
        mean_wind_speed_m_s=float(series["wind_speed"].mean()),
        occupied_hours=n_occ,
        occupied_in_band_hours=int((suit["in_band"].to_numpy(bool) & o).sum()),
        occupied_nv_suitable_hours=int((suit["suitable"].to_numpy(bool) & o).sum()),
        occupied_in_band_pct=share("in_band"),
        occupied_below_band_pct=share("below_band"),
        occupied_above_band_pct=share("above_band"),
        occupied_nv_suitable_pct=share("suitable"),
        no_occupied_hours=n_occ == 0,
        rain_assessed=bool(suit.attrs.get("rain_assessed", False)),
    )


# --------------------------------------------------------------------------------------
# Night cooling
# --------------------------------------------------------------------------------------

@dataclass(frozen=True)
class NightCoolingResult:
    """Result of :func:`night_cooling_potential`.

    Attributes
    ----------
    daily : pandas.DataFrame
        Index = day start. ``night_min_C``: minimum outdoor temperature of the night
        before the day [°C]; ``cool_night``: night_min_C < threshold; ``occupied_day``:
        the day has at least one occupied hour.
    monthly : pandas.DataFrame
        Index ``month`` 1–12. ``occupied_days`` [d]; ``cool_night_days``: occupied days
        after a cool night [d]; ``cool_night_pct``: their share of occupied days [%],
        NaN only where ``no_occupied_days`` is True.
    occupied_days : int
        Occupied days in the year [d].
    cool_night_days : int
        Occupied days whose previous night was cool [d].
    cool_night_pct : float
        cool_night_days / occupied_days [%]; NaN only when occupied_days == 0.
    threshold : float
        Night minimum below which a night counts as cool [°C].
    night_start_hour, night_end_hour : int
        Night window, from night_start_hour of the previous day up to (not including)
        the hour starting at night_end_hour of the day [h].
    """

    daily: pd.DataFrame
    monthly: pd.DataFrame
    occupied_days: int
    cool_night_days: int
    cool_night_pct: float
    threshold: float
    night_start_hour: int
    night_end_hour: int


def night_cooling_potential(temp_air, occupied, *, night_start_hour: int = 22,
                            night_end_hour: int = 7,
                            threshold: float = 18.0) -> NightCoolingResult:
    """Share of occupied days that follow a night cool enough to purge the building.

    Parameters
    ----------
    temp_air : pandas.Series
        Hourly outdoor dry-bulb temperature of one calendar year [°C].
    occupied : pandas.Series of bool
        Occupied hours, same index (from :func:`occupied_hours`).
    night_start_hour : int, default 22
        First hour of the night, on the previous day, 12–24 (24 = the night starts at
        midnight) [h].
    night_end_hour : int, default 7
        End of the night on the day itself, 0–12; the hour starting at night_end_hour is
        not part of the night [h].
    threshold : float, default 18.0
        A night is cool when its minimum is strictly below this [°C]. Common practice,
        no source.

    Returns
    -------
    NightCoolingResult

    Notes
    -----
    For day d the night is the hours starting at night_start_hour … 23 of day d−1 and
    00 … night_end_hour−1 of day d (with the defaults 22:00–07:00, 9 hours);
    night_min(d) = min θ over those hours and day d is counted when it is occupied and
    night_min(d) < threshold. The night before 1 January is taken from the evening of
    31 December of the same year (a typical year wraps, as for the running mean).
    Where 29 February has been left out of a leap year, 28 February precedes 1 March.
    """
    t = _check_numeric_series(temp_air, "temp_air")
    _check_one_year(t.index, "temp_air", "h")
    occ = _check_bool_series(occupied, "occupied")
    _check_same_index(t.index, occ.index, "occupied", "temp_air")
    night_start_hour = _check_int(night_start_hour, "night_start_hour", 12, 24)
    night_end_hour = _check_int(night_end_hour, "night_end_hour", 0, 12)
    if night_start_hour == 24 and night_end_hour == 0:
        msg = "night window is empty: night_start_hour=24 with night_end_hour=0"
        raise ProjectError(msg)
    threshold = _check_real(threshold, "threshold")

    by_hour = t.to_numpy().reshape(-1, 24)  # one row per day, hours 00..23
    day_index = pd.DatetimeIndex(t.index[::24], name=t.index.name)
    evening = np.roll(by_hour, 1, axis=0)[:, night_start_hour:]  # previous day, cyclic
    morning = by_hour[:, :night_end_hour]
    night_min = np.concatenate([evening, morning], axis=1).min(axis=1)
    cool = night_min < threshold
    occ_day = occ.to_numpy().reshape(-1, 24).any(axis=1)

    daily = pd.DataFrame({"night_min_C": night_min, "cool_night": cool,
                          "occupied_day": occ_day}, index=day_index)
    month = pd.Index(day_index.month, name="month")
    monthly = pd.DataFrame({
        "occupied_days": pd.Series(occ_day, index=day_index).groupby(month).sum(),
        "cool_night_days": pd.Series(occ_day & cool, index=day_index).groupby(month).sum(),
    }).reindex(pd.RangeIndex(1, 13, name="month")).astype("int64")
    monthly["cool_night_pct"] = _pct(monthly["cool_night_days"], monthly["occupied_days"])
    monthly["no_occupied_days"] = monthly["occupied_days"].to_numpy() == 0

    n_occ = int(occ_day.sum())
    n_cool = int((occ_day & cool).sum())
    return NightCoolingResult(daily=daily, monthly=monthly, occupied_days=n_occ,
                              cool_night_days=n_cool,
                              cool_night_pct=float(_pct(n_cool, n_occ)),
                              threshold=threshold, night_start_hour=night_start_hour,
                              night_end_hour=night_end_hour)


# --------------------------------------------------------------------------------------
# Narrative
# --------------------------------------------------------------------------------------

def _month_ranges(months: Sequence[int]) -> str:
    """``[5, 6, 7, 9, 12, 1]`` → ``"Dec–Jan, May–Jul, Sep"`` (runs wrap over the year end)."""
    chosen = sorted(set(int(m) for m in months))
    if not chosen:
        return ""
    if len(chosen) == 12:
        return "all months"
    runs: list[list[int]] = []
    for m in chosen:
        if runs and m == runs[-1][-1] + 1:
            runs[-1].append(m)
        else:
            runs.append([m])
    if len(runs) > 1 and runs[0][0] == 1 and runs[-1][-1] == 12:
        runs[0] = runs.pop() + runs[0]  # e.g. Nov–Feb, listed first
    parts = []
    for run in runs:
        first, last = _MONTH_ABBR[run[0] - 1], _MONTH_ABBR[run[-1] - 1]
        parts.append(first if len(run) == 1 else f"{first}–{last}")
    return ", ".join(parts)


_MONTHLY_NEEDED = ("occupied_hours", "occupied_nv_suitable_hours",
                   "occupied_in_band_pct", "occupied_below_band_pct",
                   "occupied_above_band_pct", "occupied_nv_suitable_pct",
                   "no_occupied_hours")


def describe_climate(monthly: pd.DataFrame, band: tuple[float, float] = DEFAULT_BAND,
                     *, open_pct: float = 50.0, mostly_pct: float = 50.0) -> str:
    """A short plain-English account of the monthly figures.

    Parameters
    ----------
    monthly : pandas.DataFrame
        From :func:`monthly_summary`.
    band : (float, float), default (16.0, 26.0)
        The outdoor band used for ``monthly`` (quoted in the text) [°C].
    open_pct : float, default 50
        A month "can run on natural ventilation" when at least this share of its
        occupied hours is suitable [%].
    mostly_pct : float, default 50
        A month is "mostly above (below) the band" when at least this share of its
        occupied hours is above (below) it [%].

    Returns
    -------
    str
        A few sentences, one per group of months. Every month with occupied hours is
        put in exactly one group, tried in this order: can open up; mostly above the
        band (needs cooling); mostly below the band (needs heating); in the band but
        held back by humidity, wind or rain (in-band share >= open_pct); mixed.

    Notes
    -----
    Wording only; all numbers come from ``monthly``.
    """
    if not isinstance(monthly, pd.DataFrame):
        msg = f"monthly must be the DataFrame from monthly_summary, got {type(monthly).__name__}"
        raise WeatherError(msg)
    missing = [c for c in _MONTHLY_NEEDED if c not in monthly.columns]
    if missing:
        msg = (f"monthly lacks column(s) {', '.join(missing)}; "
               "pass the DataFrame from monthly_summary")
        raise WeatherError(msg)
    if list(monthly.index) != list(range(1, 13)):
        msg = f"monthly must be indexed by month 1..12, got {list(monthly.index)}"
        raise WeatherError(msg)
    low, high = _check_band(band)
    open_pct = _check_real(open_pct, "open_pct")
    mostly_pct = _check_real(mostly_pct, "mostly_pct")
    for name, value in (("open_pct", open_pct), ("mostly_pct", mostly_pct)):
        if not 0.0 < value <= 100.0:
            msg = f"{name} must be in (0, 100] %, got {value:g}"
            raise ProjectError(msg)

    groups: dict[str, list[int]] = {k: [] for k in
                                    ("open", "warm", "cool", "held", "mixed", "empty")}
    for m, row in monthly.iterrows():
        if bool(row["no_occupied_hours"]):
            groups["empty"].append(m)
        elif row["occupied_nv_suitable_pct"] >= open_pct:
            groups["open"].append(m)
        elif row["occupied_above_band_pct"] >= mostly_pct:
            groups["warm"].append(m)
        elif row["occupied_below_band_pct"] >= mostly_pct:
            groups["cool"].append(m)
        elif row["occupied_in_band_pct"] >= open_pct:
            groups["held"].append(m)
        else:
            groups["mixed"].append(m)

    n_occ = int(monthly["occupied_hours"].sum())
    n_nv = int(monthly["occupied_nv_suitable_hours"].sum())
    band_text = f"{low:g}–{high:g} °C"
    rain_assessed = monthly.attrs.get("rain_assessed")
    if rain_assessed is False:
        limits = "within the humidity and wind limits; rain not assessed"
    else:
        limits = "within the humidity, wind and rain limits"
    sentences = []
    if n_occ > 0:
        sentences.append(
            f"Over the year, {100.0 * n_nv / n_occ:.0f} % of occupied hours ({n_nv} of "
            f"{n_occ} h) have outdoor air suitable for natural ventilation "
            f"(dry bulb {band_text}, {limits}).")
    else:
        sentences.append("The calendar has no occupied hours, so no share can be given.")
    if groups["open"]:
        sentences.append(
            f"Natural ventilation can carry the building (at least {open_pct:g} % of "
            f"occupied hours suitable) in {_month_ranges(groups['open'])}.")
    elif n_occ > 0:
        sentences.append(
            f"No month has at least {open_pct:g} % of its occupied hours suitable.")
    if groups["warm"]:
        sentences.append(
            f"{_month_ranges(groups['warm'])}: mostly warmer than {high:g} °C (at least "
            f"{mostly_pct:g} % of occupied hours), so air-conditioning or other cooling "
            f"is needed.")
    if groups["cool"]:
        sentences.append(
            f"{_month_ranges(groups['cool'])}: mostly cooler than {low:g} °C (at least "
            f"{mostly_pct:g} % of occupied hours), so heating is needed and windows "
            f"stay closed apart from minimum fresh air.")
    if groups["held"]:
        sentences.append(
            f"{_month_ranges(groups['held'])}: the temperature is within the band for at "
            f"least {open_pct:g} % of occupied hours, but humidity, wind or rain rule out "
            f"opening for much of that time.")
    if groups["mixed"]:
        sentences.append(
            f"{_month_ranges(groups['mixed'])}: mixed, with changeover between natural "
            f"ventilation and air-conditioning or heating.")
    if groups["empty"]:
        sentences.append(f"No occupied hours in {_month_ranges(groups['empty'])}.")
    return " ".join(sentences)
