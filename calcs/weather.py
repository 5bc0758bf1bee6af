"""Weather input: read, check, repair small gaps in and write one year of hourly weather.

Two file formats are read:

* **EPW** (the open EnergyPlus weather format): 8 header lines, then one line
  of 35 comma-separated fields per hour. Field meanings and missing-value
  markers follow the EPW data dictionary in the EnergyPlus "Auxiliary
  Programs" documentation, chapter "Weather Converter Program".
* **freerun weather CSV** (our own format, described below).

Whatever the input, :func:`read_weather` returns a :class:`Weather` whose
``data`` is a DataFrame with an hourly, naive :class:`pandas.DatetimeIndex`
in local standard time, each hour labelled by its **start** (EPW hour 1,
00:00–01:00, is labelled 00:00). A typical-year file is stamped onto the
calendar year ``year`` given by the caller: month, day and hour come from the
file, the year is replaced, so weekdays are well defined.

Columns of ``data`` (glossary names), in this order when present:

===================  ==========  =====================================================
column               unit        meaning
===================  ==========  =====================================================
temp_air             [°C]        dry-bulb air temperature
temp_dew             [°C]        dew-point temperature
relative_humidity    [%]         relative humidity
pressure             [Pa]        atmospheric station pressure (optional)
wind_speed           [m s⁻¹]     wind speed at the weather station (usually 10 m)
wind_direction       [°]         direction the wind blows from, clockwise from north
                                 (optional)
ghi, dni, dhi        [W m⁻²]     global horizontal, direct normal and diffuse
                                 horizontal irradiance, mean over the hour
rain                 [mm h⁻¹]    liquid precipitation depth over the hour (optional)
===================  ==========  =====================================================

Required: temp_air, relative_humidity, wind_speed, ghi, dni, dhi. temp_dew is
computed from temp_air and relative_humidity where the file lacks it. An
optional column that is entirely missing (or has a gap longer than 6 hours)
is left out of ``data`` and listed in ``qa.unavailable``.

The freerun weather CSV format
------------------------------
A UTF-8 text file::

    # location: Example site (invented)
    # latitude: 36.5
    # longitude: -12.5
    # utc_offset: -1
    # elevation: 20
    time,temp_air [°C],temp_dew [°C],relative_humidity [%],wind_speed [m/s],wind_direction [deg],ghi [W/m2],dni [W/m2],dhi [W/m2],rain [mm/h]
    2023-01-01T00:00,11.2,8.1,81,4.3,340,0,0,0,0.0
    ...

* Leading comment lines ``# key: value``. Keys: ``latitude`` [° north],
  ``longitude`` [° east, west negative], ``utc_offset`` [h, local standard
  time minus UTC] (these three are required), ``elevation`` [m] (0 m assumed
  if absent, with a note) and ``location`` (the file name if absent). Other
  comment lines are ignored.
* One header row. ``time`` first is customary; every other column is a
  glossary name followed by its unit in square brackets. Accepted units:
  temperatures ``°C`` or ``C`` (``°F``/``F`` is refused: convert to °C first);
  relative_humidity ``%``; wind_speed ``m/s``; wind_direction ``deg`` or
  ``°``; ghi, dni, dhi ``W/m2`` or ``W/m²``; rain ``mm/h``; pressure ``Pa``.
  temp_dew, wind_direction, rain and pressure may be omitted.
* One row per hour: ``time`` is the ISO 8601 local standard time of the
  **start** of the hour, without a UTC offset (``2023-07-01T13:00`` or
  ``2023-07-01 13:00``); any year, it is replaced by ``year``. Values are
  plain numbers, no quoting; an empty cell is a gap.
* 8760 rows, or 8784 when Feb 29 is present; every hour of the year once.

Checks made on every file (each failure raises :class:`~calcs.errors.WeatherError`
with a one-line message naming the file, the field and the bad value)
--------------------------------------------------------------------------
* 8760 hourly rows, or 8784 including Feb 29; no duplicated or missing hour.
  Feb 29 is dropped by default (``leap_day="drop"``); ``leap_day="keep"``
  keeps it, which needs a leap ``year``.
* Units: a file whose header says °F, or whose annual mean dry bulb is above
  40 °C, is refused as looking like °F.
* Plausible ranges (freerun's plausibility limits, common practice, no
  source, except pressure): temp_air and temp_dew −60…60 °C,
  relative_humidity 0…100 %, wind_speed 0…60 m s⁻¹, wind_direction 0…360°,
  ghi, dni, dhi 0…1500 W m⁻², rain ≥ 0, pressure 31 000…120 000 Pa (the
  EPW data dictionary's valid range).
* Gaps (empty cells, EPW missing-value markers) of up to 6 consecutive hours
  are filled by linear interpolation (wind direction through its sine and
  cosine, so 350° and 10° interpolate through north) and counted in
  ``qa.filled_hours``; the year is treated as cyclic, so a gap at the start
  of January interpolates from the end of December. Longer gaps in a required
  column are refused (common practice, no source, for the 6-hour limit).
  Missing dew points are computed from dry bulb and relative humidity instead.
"""

from __future__ import annotations

import calendar
import csv
import datetime
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from calcs.errors import WeatherError

__all__ = [
    "COLUMNS",
    "REQUIRED_COLUMNS",
    "OPTIONAL_COLUMNS",
    "MAX_FILLED_GAP",
    "Weather",
    "WeatherQA",
    "read_weather",
    "read_epw",
    "read_weather_csv",
    "write_epw",
    "write_weather_csv",
    "dew_point_magnus_alduchov96",
    "relative_humidity_magnus_alduchov96",
]

#: Data columns in their fixed order.
COLUMNS = (
    "temp_air",
    "temp_dew",
    "relative_humidity",
    "pressure",
    "wind_speed",
    "wind_direction",
    "ghi",
    "dni",
    "dhi",
    "rain",
)
#: Columns without which a file is refused (temp_dew can be computed).
REQUIRED_COLUMNS = ("temp_air", "relative_humidity", "wind_speed", "ghi", "dni", "dhi")
#: Columns that may be unavailable; then they are absent from ``Weather.data``.
OPTIONAL_COLUMNS = ("pressure", "wind_direction", "rain")
#: Longest run of missing hours filled by interpolation [h] (common practice, no source).
MAX_FILLED_GAP = 6
#: Annual mean dry bulb above which a file is taken to be in °F [°C] (common practice, no source).
FAHRENHEIT_MEAN_LIMIT = 40.0

# Plausibility limits (lower, upper, unit label). Common practice, no source,
# except pressure: EPW data dictionary, field "Atmospheric Station Pressure".
_LIMITS = {
    "temp_air": (-60.0, 60.0, "°C"),
    "temp_dew": (-60.0, 60.0, "°C"),
    "relative_humidity": (0.0, 100.0, "%"),
    "pressure": (31000.0, 120000.0, "Pa"),
    "wind_speed": (0.0, 60.0, "m/s"),
    "wind_direction": (0.0, 360.0, "°"),
    "ghi": (0.0, 1500.0, "W/m²"),
    "dni": (0.0, 1500.0, "W/m²"),
    "dhi": (0.0, 1500.0, "W/m²"),
    "rain": (0.0, math.inf, "mm/h"),
}

# EPW data field positions (0-based) and missing-value markers. A value at or
# above the marker is missing (EPW data dictionary, "\missing" convention).
_EPW_N_FIELDS = 35
_EPW_FIELDS = {
    "temp_air": (6, 99.9),
    "temp_dew": (7, 99.9),
    "relative_humidity": (8, 999.0),
    "pressure": (9, 999999.0),
    "ghi": (13, 9999.0),
    "dni": (14, 9999.0),
    "dhi": (15, 9999.0),
    "wind_direction": (20, 999.0),
    "wind_speed": (21, 999.0),
    "rain": (33, 999.0),
}
_EPW_RAIN_PERIOD = (34, 99.0)  # liquid precipitation quantity [h]
# Decimal places written by write_epw (common EPW practice, no source).
_EPW_DECIMALS = {
    "temp_air": 1,
    "temp_dew": 1,
    "relative_humidity": 0,
    "pressure": 0,
    "ghi": 0,
    "dni": 0,
    "dhi": 0,
    "wind_direction": 0,
    "wind_speed": 1,
    "rain": 1,
}
# Missing markers written for the EPW fields freerun does not carry (EPW data dictionary).
_EPW_UNKNOWN = {
    10: "9999",  # extraterrestrial horizontal radiation
    11: "9999",  # extraterrestrial direct normal radiation
    12: "9999",  # horizontal infrared radiation intensity
    16: "999999",  # global horizontal illuminance
    17: "999999",  # direct normal illuminance
    18: "999999",  # diffuse horizontal illuminance
    19: "9999",  # zenith luminance
    22: "99",  # total sky cover
    23: "99",  # opaque sky cover
    24: "9999",  # visibility
    25: "99999",  # ceiling height
    26: "9",  # present weather observation (9 = not made)
    27: "999999999",  # present weather codes
    28: "999",  # precipitable water
    29: ".999",  # aerosol optical depth
    30: "999",  # snow depth
    31: "99",  # days since last snowfall
    32: "999",  # albedo
}

# freerun CSV: accepted units per column, and their canonical spelling for writing.
_CSV_UNITS = {
    "temp_air": ("°C", "C"),
    "temp_dew": ("°C", "C"),
    "relative_humidity": ("%",),
    "pressure": ("Pa",),
    "wind_speed": ("m/s",),
    "wind_direction": ("deg", "°"),
    "ghi": ("W/m2", "W/m²"),
    "dni": ("W/m2", "W/m²"),
    "dhi": ("W/m2", "W/m²"),
    "rain": ("mm/h",),
}
_FAHRENHEIT_UNITS = ("°F", "F", "degF", "deg F")
_CSV_DECIMALS = {
    "temp_air": 2,
    "temp_dew": 2,
    "relative_humidity": 2,
    "pressure": 0,
    "wind_speed": 2,
    "wind_direction": 1,
    "ghi": 1,
    "dni": 1,
    "dhi": 1,
    "rain": 2,
}
_CSV_REQUIRED_META = ("latitude", "longitude", "utc_offset")
_META_LIMITS = {
    "latitude": (-90.0, 90.0, "°"),
    "longitude": (-180.0, 180.0, "°"),
    "utc_offset": (-12.0, 14.0, "h"),
    "elevation": (-1000.0, 9999.9, "m"),
}
_LEAP_DAY_CHOICES = ("drop", "keep")
_SHOW = 3  # how many offending items an error message lists

# Magnus-form coefficients over liquid water, Alduchov & Eskridge (1996)
# "AERK" set [MEM]: e_s = 6.1094 hPa * exp(17.625 t / (t + 243.04)).
_MAGNUS_B = 17.625
_MAGNUS_C = 243.04  # [°C]


@dataclass(frozen=True)
class WeatherQA:
    """What was found and done while reading a weather file.

    Attributes
    ----------
    source_format : str
        ``"epw"`` or ``"csv"``.
    rows_in_file : int
        Hourly data rows in the file, before any leap day was dropped.
    leap_day_dropped : bool
        True if the file's Feb 29 was dropped.
    filled_hours : dict
        Column name → hours filled (interpolated, or for temp_dew computed
        from temp_air and relative_humidity); only columns with filled hours.
    unavailable : tuple of str
        Columns absent from ``Weather.data``: the file lacks them, or (for
        optional columns) they have a gap longer than :data:`MAX_FILLED_GAP`.
    notes : tuple of str
        Plain-English sentences for the report.
    """

    source_format: str
    rows_in_file: int
    leap_day_dropped: bool
    filled_hours: dict = field(default_factory=dict)
    unavailable: tuple = ()
    notes: tuple = ()


@dataclass(frozen=True, eq=False)
class Weather:
    """One year of checked hourly weather and the site it belongs to.

    Attributes
    ----------
    data : pandas.DataFrame
        Hourly data, naive local standard time, hours labelled by their
        start; columns as in :data:`COLUMNS` (unavailable ones absent).
    location : str
        Site name.
    latitude : float
        Site latitude, north positive [°].
    longitude : float
        Site longitude, east positive [°].
    utc_offset : float
        Local standard time minus UTC [h].
    elevation : float
        Site elevation above sea level [m].
    source_path : str
        The file read.
    qa : WeatherQA
        Checks and repairs made while reading.
    """

    data: pd.DataFrame
    location: str
    latitude: float
    longitude: float
    utc_offset: float
    elevation: float
    source_path: str
    qa: WeatherQA


# ---------------------------------------------------------------------------
# psychrometric helpers


def _like(template, values, name):
    """Return ``values`` shaped like ``template``: Series keeps its index, scalar → float."""
    if isinstance(template, pd.Series):
        return pd.Series(values, index=template.index, name=name)
    if np.ndim(values) == 0:
        return float(values)
    return values


def dew_point_magnus_alduchov96(temp_air, relative_humidity):
    """Dew-point temperature from dry-bulb temperature and relative humidity.

    Parameters
    ----------
    temp_air : float, array-like or pandas.Series
        Dry-bulb air temperature [°C].
    relative_humidity : float, array-like or pandas.Series
        Relative humidity with respect to liquid water [%]. Values below 1 %
        are taken as 1 % (the dew point tends to −∞ as humidity tends to 0).

    Returns
    -------
    float, numpy.ndarray or pandas.Series
        Dew-point temperature [°C]; a Series keeps the index of ``temp_air``.

    Notes
    -----
    Inverts the Magnus form of the saturation vapour pressure over water,
    :math:`e_s(t) = 6.1094\\,\\exp\\left(\\frac{17.625\\,t}{t + 243.04}\\right)` hPa:

    .. math::

        \\gamma = \\ln\\frac{RH}{100} + \\frac{b\\,t}{c + t}, \\qquad
        t_d = \\frac{c\\,\\gamma}{b - \\gamma}, \\qquad b = 17.625,\\ c = 243.04\\ °C.

    Alduchov & Eskridge give the fit for −40…50 °C. Below 0 °C this is the dew
    point over supercooled water, not the frost point.

    References
    ----------
    .. [1] Alduchov, O. A. and Eskridge, R. E. (1996). Improved Magnus form
       approximation of saturation vapor pressure. Journal of Applied
       Meteorology 35(4), 601–609.
       :doi:`10.1175/1520-0450(1996)035<0601:IMFAOS>2.0.CO;2`
       (coefficients quoted from memory [MEM]).

    Example
    -------
    >>> round(dew_point_magnus_alduchov96(20.0, 50.0), 1)
    9.3
    """
    t = np.asarray(temp_air, dtype=float)
    rh = np.clip(np.asarray(relative_humidity, dtype=float), 1.0, 100.0)
    gamma = np.log(rh / 100.0) + _MAGNUS_B * t / (_MAGNUS_C + t)
    td = _MAGNUS_C * gamma / (_MAGNUS_B - gamma)
    return _like(temp_air, td, "temp_dew")


def relative_humidity_magnus_alduchov96(temp_air, temp_dew):
    """Relative humidity from dry-bulb and dew-point temperatures.

    Parameters
    ----------
    temp_air : float, array-like or pandas.Series
        Dry-bulb air temperature [°C].
    temp_dew : float, array-like or pandas.Series
        Dew-point temperature [°C].

    Returns
    -------
    float, numpy.ndarray or pandas.Series
        Relative humidity with respect to liquid water [%]; above 100 % when
        ``temp_dew`` exceeds ``temp_air`` (not clipped).

    Notes
    -----
    :math:`RH = 100\\,\\exp\\left(\\frac{b\\,t_d}{c + t_d} - \\frac{b\\,t}{c + t}\\right)`,
    with the Magnus coefficients of :func:`dew_point_magnus_alduchov96`.

    References
    ----------
    .. [1] Alduchov & Eskridge (1996), see :func:`dew_point_magnus_alduchov96`.
    """
    t = np.asarray(temp_air, dtype=float)
    td = np.asarray(temp_dew, dtype=float)
    rh = 100.0 * np.exp(_MAGNUS_B * td / (_MAGNUS_C + td) - _MAGNUS_B * t / (_MAGNUS_C + t))
    return _like(temp_air, rh, "relative_humidity")


# ---------------------------------------------------------------------------
# small helpers


def _plural(n, word):
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def _hour_label(month, day, hour):
    """'Jan 05 13:00' for an hour start (no year)."""
    return f"{calendar.month_abbr[int(month)]} {int(day):02d} {int(hour):02d}:00"


def _check_args(name, year, leap_day):
    if isinstance(year, bool) or not isinstance(year, (int, np.integer)):
        msg = f"{name}: year must be a whole number such as 2023, got {year!r}"
        raise WeatherError(msg)
    if not 1800 <= int(year) <= 2200:
        msg = f"{name}: year must be between 1800 and 2200, got {year}"
        raise WeatherError(msg)
    if leap_day not in _LEAP_DAY_CHOICES:
        msg = f"{name}: leap_day must be 'drop' or 'keep', got {leap_day!r}"
        raise WeatherError(msg)


def _read_text(path, name):
    """Read a text file (UTF-8, falling back to Latin-1); refuse missing or empty files."""
    p = Path(path)
    if not p.exists():
        msg = f"{name}: weather file not found"
        raise WeatherError(msg)
    if not p.is_file():
        msg = f"{name}: is not a file"
        raise WeatherError(msg)
    try:
        raw = p.read_bytes()
    except OSError as err:
        msg = f"{name}: cannot be read ({err.strerror or err})"
        raise WeatherError(msg) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    if not text.strip():
        msg = f"{name}: weather file is empty"
        raise WeatherError(msg)
    return text


def _to_float(name, label, strings, linenos):
    """Parse strings to floats; an empty string is a gap (NaN), anything else non-numeric is refused."""
    try:  # fast path: every cell a finite number
        values = np.array(strings, dtype=float)
    except (ValueError, TypeError):
        values = None
    if values is not None and np.isfinite(values).all():
        return values
    stripped = pd.Series(np.asarray(strings, dtype=object), dtype=object).str.strip()
    values = np.array(pd.to_numeric(stripped, errors="coerce"), dtype=float)  # a writable copy
    bad = ~np.isfinite(values) & (stripped.to_numpy() != "")
    values[bad] = np.nan
    if bad.any():
        i = int(np.argmax(bad))
        msg = (
            f"{name}: line {linenos[i]}: {label} value {stripped.iloc[i]!r} is not a finite number "
            f"({int(bad.sum())} such cells); allowed: a number, or an empty cell for a gap"
        )
        raise WeatherError(msg)
    return values


def _meta_float(name, key, text, where):
    try:
        value = float(str(text).strip())
    except ValueError:
        value = None
    if value is None or not math.isfinite(value):
        msg = f"{name}: {where} {key} must be a number, got {str(text).strip()!r}"
        raise WeatherError(msg)
    lo, hi, unit = _META_LIMITS[key]
    if not lo <= value <= hi:
        msg = f"{name}: {where} {key} must be within {lo:g}…{hi:g} {unit}, got {value:g}"
        raise WeatherError(msg)
    return value


# ---------------------------------------------------------------------------
# calendar: row count, duplicates, missing hours, leap day, stamping


def _arrange_calendar(name, month, day, hour, linenos, labels, year, leap_day):
    """Check that the rows cover one year once and stamp them onto ``year``.

    Parameters
    ----------
    month, day, hour : numpy.ndarray of int
        Per row; ``hour`` is the hour start 0…23.
    linenos : numpy.ndarray of int
        File line number of each row, for messages.
    labels : sequence of str
        How each row's time reads in the file, for messages.

    Returns
    -------
    take : numpy.ndarray of int
        Row positions in calendar order, leap day removed if dropped.
    index : pandas.DatetimeIndex
    leap_dropped : bool
    notes : list of str
    """
    n = len(month)
    notes = []
    if n not in (8760, 8784):
        msg = (
            f"{name}: has {n} hourly data rows; a full year needs 8760 rows "
            f"(8784 with Feb 29)"
        )
        raise WeatherError(msg)
    leap_ref = 2000  # any leap year: checks Feb 29 as a valid date
    days_in_month = np.array([calendar.monthrange(leap_ref, m)[1] for m in range(1, 13)])
    bad = (month < 1) | (month > 12) | (hour < 0) | (hour > 23)
    ok_month = np.clip(month, 1, 12)
    bad |= (day < 1) | (day > days_in_month[ok_month - 1])
    if bad.any():
        i = int(np.argmax(bad))
        msg = (
            f"{name}: line {linenos[i]}: {labels[i]} is not a valid date and hour "
            f"({int(bad.sum())} such rows)"
        )
        raise WeatherError(msg)
    key = (month * 32 + day) * 24 + hour
    order = np.argsort(key, kind="stable")
    sorted_key = key[order]
    dup_sorted = np.r_[False, sorted_key[1:] == sorted_key[:-1]]
    if dup_sorted.any():
        dup_rows = np.sort(order[dup_sorted])
        shown = ", ".join(f"{labels[i]} (line {linenos[i]})" for i in dup_rows[:_SHOW])
        msg = (
            f"{name}: duplicated timestamps: {shown}; "
            f"{_plural(len(dup_rows), 'duplicate row')} in all; each hour must appear once"
        )
        raise WeatherError(msg)
    is_feb29 = (month == 2) & (day == 29)
    has_leap = bool(is_feb29.any())
    ref = pd.date_range(f"{2000 if has_leap else 2001}-01-01", periods=8784 if has_leap else 8760, freq="h")
    ref_key = (ref.month.to_numpy() * 32 + ref.day.to_numpy()) * 24 + ref.hour.to_numpy()
    missing = np.setdiff1d(ref_key, key)
    if missing.size:
        shown = ", ".join(
            _hour_label(k // 24 // 32, k // 24 % 32, k % 24) for k in missing[:_SHOW]
        )
        msg = (
            f"{name}: missing hours (local standard time, hour start): {shown}; "
            f"{_plural(missing.size, 'hour')} missing in all; every hour of the year must appear once"
        )
        raise WeatherError(msg)
    if order.tolist() != list(range(n)):
        notes.append("Rows were not in calendar order; sorted by month, day and hour.")
    leap_dropped = False
    take = order
    if has_leap:
        if leap_day == "drop":
            take = order[~is_feb29[order]]
            leap_dropped = True
            notes.append("Feb 29 dropped: 24 hours.")
        elif not calendar.isleap(int(year)):
            msg = (
                f"{name}: the file has Feb 29 but year {year} is not a leap year; "
                f"use leap_day='drop' or a leap year"
            )
            raise WeatherError(msg)
    elif calendar.isleap(int(year)):
        notes.append(f"{year} is a leap year but the file has no Feb 29; the data skip Feb 29.")
    stamp = pd.DataFrame(
        {"year": int(year), "month": month[take], "day": day[take], "hour": hour[take]}
    )
    index = pd.DatetimeIndex(pd.to_datetime(stamp), name="time")
    if len(index) == len(pd.date_range(index[0], index[-1], freq="h")):
        index = pd.DatetimeIndex(index, freq="h", name="time")
    return take, index, leap_dropped, notes


# ---------------------------------------------------------------------------
# values: units, ranges, gaps


def _nan_runs(isnan):
    """Runs of True in a boolean array, the ends joined as one cyclic run.

    Returns a list of (start, length); a run may wrap past the end.
    """
    m = np.concatenate(([0], isnan.astype(np.int8), [0]))
    d = np.diff(m)
    starts = np.flatnonzero(d == 1)
    ends = np.flatnonzero(d == -1)
    runs = [(int(s), int(e - s)) for s, e in zip(starts, ends)]
    n = len(isnan)
    if len(runs) > 1 and runs[0][0] == 0 and runs[-1][0] + runs[-1][1] == n:
        first = runs.pop(0)
        last = runs.pop()
        runs.append((last[0], last[1] + first[1]))
    return runs


def _interpolate_cyclic(values, isnan):
    x = np.arange(len(values))
    out = values.copy()
    out[isnan] = np.interp(x[isnan], x[~isnan], values[~isnan], period=len(values))
    return out


def _fill_wind_direction(values, isnan):
    rad = np.deg2rad(values)
    s = _interpolate_cyclic(np.sin(rad), isnan)
    c = _interpolate_cyclic(np.cos(rad), isnan)
    out = values.copy()
    filled = np.rad2deg(np.arctan2(s[isnan], c[isnan])) % 360.0
    out[isnan] = filled
    return out


def _gap_text(index, start, length):
    n = len(index)
    first = index[start]
    last = index[(start + length - 1) % n]
    return f"{first:%Y-%m-%d %H:%M} to {last:%Y-%m-%d %H:%M} ({length} h)"


def _check_and_fill(name, values, index, linenos):
    """Unit, range and gap checks; fill short gaps; compute missing dew points.

    Parameters
    ----------
    values : dict
        Column → float array in calendar order (NaN = gap), for the columns
        the file provides.
    index : pandas.DatetimeIndex
    linenos : numpy.ndarray
        File line of each row, in the same order.

    Returns
    -------
    data : pandas.DataFrame
    filled : dict
    unavailable : tuple
    notes : list of str
    """
    notes = []
    filled = {}
    present = {c: v for c, v in values.items() if v is not None and not np.isnan(v).all()}
    for c in values:
        if c not in present and c != "temp_dew" and c in COLUMNS:
            notes.append(f"{c} is all missing in the file; treated as unavailable.")
    missing_required = [c for c in REQUIRED_COLUMNS if c not in present]
    if missing_required:
        msg = (
            f"{name}: required {'column' if len(missing_required) == 1 else 'columns'} "
            f"{', '.join(missing_required)} missing or entirely empty; "
            f"required: {', '.join(REQUIRED_COLUMNS)}"
        )
        raise WeatherError(msg)

    mean_air = float(np.nanmean(present["temp_air"]))
    if mean_air > FAHRENHEIT_MEAN_LIMIT:
        msg = (
            f"{name}: temp_air annual mean is {mean_air:.1f}, which looks like °F "
            f"(limit {FAHRENHEIT_MEAN_LIMIT:g} °C); temperatures must be in °C, "
            f"convert them with °C = (°F − 32) / 1.8"
        )
        raise WeatherError(msg)

    for c in COLUMNS:
        if c not in present:
            continue
        v = present[c]
        lo, hi, unit = _LIMITS[c]
        with np.errstate(invalid="ignore"):
            bad = (v < lo) | (v > hi)
        if bad.any():
            i = int(np.argmax(bad))
            allowed = f"≥ {lo:g} {unit}" if math.isinf(hi) else f"{lo:g}…{hi:g} {unit}"
            msg = (
                f"{name}: {c} value {v[i]:g} at {index[i]:%Y-%m-%d %H:%M} (line {linenos[i]}) "
                f"is outside the plausible range {allowed}; "
                f"{_plural(int(bad.sum()), 'row')} out of range"
            )
            raise WeatherError(msg)

    out = {}
    long_gaps = {}
    for c in COLUMNS:
        if c not in present or c == "temp_dew":
            continue
        v = present[c]
        isnan = np.isnan(v)
        if not isnan.any():
            out[c] = v
            continue
        runs = _nan_runs(isnan)
        too_long = [r for r in runs if r[1] > MAX_FILLED_GAP]
        if too_long:
            if c in OPTIONAL_COLUMNS:
                shown = "; ".join(_gap_text(index, s, n) for s, n in too_long[:_SHOW])
                notes.append(
                    f"{c} has {_plural(len(too_long), 'gap')} longer than {MAX_FILLED_GAP} hours "
                    f"({shown}); treated as unavailable."
                )
                continue
            long_gaps[c] = too_long
            continue
        if c == "wind_direction":
            out[c] = _fill_wind_direction(v, isnan)
        else:
            out[c] = _interpolate_cyclic(v, isnan)
        hours = int(isnan.sum())
        filled[c] = hours
        notes.append(
            f"{_plural(hours, 'hour')} of {c} interpolated across {_plural(len(runs), 'gap')}."
        )
    if long_gaps:
        c, runs = next(iter(long_gaps.items()))
        shown = "; ".join(_gap_text(index, s, n) for s, n in runs[:_SHOW])
        others = [k for k in long_gaps if k != c]
        also = f"; also in {', '.join(others)}" if others else ""
        msg = (
            f"{name}: {c} has {_plural(len(runs), 'gap')} longer than {MAX_FILLED_GAP} hours, "
            f"too long to interpolate (up to {MAX_FILLED_GAP} consecutive missing hours are "
            f"filled): {shown}{also}"
        )
        raise WeatherError(msg)

    computed = dew_point_magnus_alduchov96(out["temp_air"], out["relative_humidity"])
    if "temp_dew" in present:
        td = present["temp_dew"].copy()
        isnan = np.isnan(td)
        if isnan.any():
            td[isnan] = computed[isnan]
            filled["temp_dew"] = int(isnan.sum())
            notes.append(
                f"{_plural(int(isnan.sum()), 'hour')} of temp_dew computed from temp_air and "
                f"relative_humidity (Magnus formula, Alduchov & Eskridge 1996)."
            )
        out["temp_dew"] = td
    else:
        out["temp_dew"] = computed
        notes.append(
            "temp_dew not in the file; computed from temp_air and relative_humidity "
            "(Magnus formula, Alduchov & Eskridge 1996)."
        )
    excess = out["temp_dew"] - out["temp_air"]
    above = excess > 0.05
    if above.any():
        notes.append(
            f"temp_dew above temp_air in {_plural(int(above.sum()), 'hour')} "
            f"(largest excess {float(excess.max()):.1f} K); values kept as given."
        )

    data = pd.DataFrame({c: out[c] for c in COLUMNS if c in out}, index=index)
    unavailable = tuple(c for c in COLUMNS if c not in out)
    if unavailable:
        notes.append(f"Not available: {', '.join(unavailable)}.")
    return data, filled, unavailable, notes


# ---------------------------------------------------------------------------
# readers


def read_weather(path, year, leap_day="drop"):
    """Read and check a weather file, choosing the reader by the file suffix.

    Parameters
    ----------
    path : str or pathlib.Path
        An ``.epw`` file or a freerun weather ``.csv`` file.
    year : int
        Calendar year the data are stamped onto.
    leap_day : {"drop", "keep"}
        What to do with Feb 29 if the file has it: drop it (default) or keep
        it (needs a leap ``year``).

    Returns
    -------
    Weather

    Raises
    ------
    calcs.errors.WeatherError
        Unknown suffix, or any problem found by the reader.
    """
    name = str(path)
    suffix = Path(path).suffix.lower()
    if suffix == ".epw":
        return read_epw(path, year, leap_day=leap_day)
    if suffix == ".csv":
        return read_weather_csv(path, year, leap_day=leap_day)
    msg = f"{name}: unknown weather file type {suffix or '(no suffix)'!r}; allowed: .epw, .csv"
    raise WeatherError(msg)


def read_epw(path, year, leap_day="drop"):
    """Read and check an EPW weather file.

    Parameters
    ----------
    path : str or pathlib.Path
        The EPW file.
    year : int
        Calendar year the data are stamped onto.
    leap_day : {"drop", "keep"}
        What to do with Feb 29 if the file has it.

    Returns
    -------
    Weather
        Location from the LOCATION header line (city, region and country
        joined), latitude, longitude, utc_offset (the TimeZone field) and
        elevation from the same line.

    Notes
    -----
    EPW hour *h* covers (h − 1):00 to h:00 and is labelled (h − 1):00.
    Values at or above the field's missing-value marker are gaps: dry bulb
    and dew point 99.9, relative humidity 999, pressure 999999, ghi, dni and
    dhi 9999, wind direction and wind speed 999, liquid precipitation depth
    999. ``rain`` is the liquid precipitation depth field taken as the depth
    over that hour; rows whose precipitation quantity field gives an
    accumulation period other than 1 h are counted in a note, the values are
    not redistributed. Only hourly files (one record per hour) are read.

    References
    ----------
    .. [1] EnergyPlus documentation, Auxiliary Programs, "Weather Converter
       Program", section "EnergyPlus Weather File (EPW) Data Dictionary".
    """
    name = str(path)
    _check_args(name, year, leap_day)
    text = _read_text(path, name)
    lines = text.splitlines()
    head = next(csv.reader([lines[0]]))
    if head[0].strip().upper() != "LOCATION":
        msg = (
            f"{name}: line 1 must be the EPW LOCATION header, got {lines[0][:40]!r}; "
            f"is this an EPW file?"
        )
        raise WeatherError(msg)
    if len(head) < 10:
        msg = (
            f"{name}: the LOCATION line has {len(head)} fields; it needs 10 "
            f"(LOCATION, city, region, country, source, WMO, latitude, longitude, time zone, elevation)"
        )
        raise WeatherError(msg)
    latitude = _meta_float(name, "latitude", head[6], "LOCATION")
    longitude = _meta_float(name, "longitude", head[7], "LOCATION")
    utc_offset = _meta_float(name, "utc_offset", head[8], "LOCATION time zone")
    elevation = _meta_float(name, "elevation", head[9], "LOCATION")
    parts = [p.strip() for p in head[1:4]]
    location = ", ".join(p for p in parts if p and p != "-") or Path(path).stem
    if len(lines) < 9:
        msg = (
            f"{name}: has only {len(lines)} lines; an EPW file has 8 header lines "
            f"followed by one line per hour"
        )
        raise WeatherError(msg)
    periods = next(csv.reader([lines[7]]))
    if periods[0].strip().upper() != "DATA PERIODS":
        msg = f"{name}: line 8 must be the EPW DATA PERIODS header, got {lines[7][:40]!r}"
        raise WeatherError(msg)
    if len(periods) > 2 and periods[2].strip() not in ("1", "1.0"):
        msg = (
            f"{name}: DATA PERIODS gives {periods[2].strip()!r} records per hour; "
            f"only hourly files (1 record per hour) are read"
        )
        raise WeatherError(msg)

    numbered = [(i + 1, s) for i, s in enumerate(lines[8:], start=8) if s.strip()]
    linenos = np.array([i for i, _ in numbered], dtype=int)
    rows = [s.split(",") for _, s in numbered]
    nfields = np.array([len(r) for r in rows], dtype=int)
    short = nfields < _EPW_N_FIELDS
    if short.any():
        i = int(np.argmax(short))
        msg = (
            f"{name}: line {linenos[i]} has {nfields[i]} fields; an EPW data line has "
            f"{_EPW_N_FIELDS} ({int(short.sum())} short lines)"
        )
        raise WeatherError(msg)

    def column(k):
        return [r[k] for r in rows]

    ints = {}
    for label, k in (("month", 1), ("day", 2), ("hour", 3)):
        v = _to_float(name, label, column(k), linenos)
        bad = np.isnan(v) | (v != np.round(v))
        if bad.any():
            i = int(np.argmax(bad))
            msg = f"{name}: line {linenos[i]}: {label} must be a whole number, got {rows[i][k].strip()!r}"
            raise WeatherError(msg)
        ints[label] = v.astype(int)
    labels = [
        f"month {m} day {d} hour {h}" for m, d, h in zip(ints["month"], ints["day"], ints["hour"])
    ]
    take, index, leap_dropped, notes = _arrange_calendar(
        name, ints["month"], ints["day"], ints["hour"] - 1, linenos, labels, year, leap_day
    )
    values = {}
    for c, (k, marker) in _EPW_FIELDS.items():
        v = _to_float(name, f"{c} (field {k + 1})", column(k), linenos)[take]
        v[v >= marker] = np.nan
        values[c] = v
    rain_ok = ~np.isnan(values["rain"])
    if rain_ok.any():
        k, marker = _EPW_RAIN_PERIOD
        period = _to_float(name, f"liquid precipitation quantity (field {k + 1})", column(k), linenos)[take]
        odd = rain_ok & (period < marker) & (period > 1)
        if odd.any():
            notes.append(
                f"Liquid precipitation quantity gives an accumulation period longer than 1 h in "
                f"{_plural(int(odd.sum()), 'row')}; rain taken as given for each hour."
            )
    data, filled, unavailable, more = _check_and_fill(name, values, index, linenos[take])
    qa = WeatherQA(
        source_format="epw",
        rows_in_file=len(rows),
        leap_day_dropped=leap_dropped,
        filled_hours=filled,
        unavailable=unavailable,
        notes=tuple(notes + more),
    )
    return Weather(
        data=data,
        location=location,
        latitude=latitude,
        longitude=longitude,
        utc_offset=utc_offset,
        elevation=elevation,
        source_path=name,
        qa=qa,
    )


_HEADER_RE = re.compile(r"\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[\s*([^\]]*?)\s*\])?\s*")
_META_RE = re.compile(r"#\s*([A-Za-z_]+)\s*:\s*(.*?)\s*$")
_OFFSET_RE = re.compile(r"(Z|[+-]\d\d:?\d\d)$")


def _csv_allowed_header():
    return "time, " + ", ".join(f"{c} [{_CSV_UNITS[c][0]}]" for c in COLUMNS)


def read_weather_csv(path, year, leap_day="drop"):
    """Read and check a freerun weather CSV file.

    The format is described in the module docstring.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file.
    year : int
        Calendar year the data are stamped onto.
    leap_day : {"drop", "keep"}
        What to do with Feb 29 if the file has it.

    Returns
    -------
    Weather
    """
    name = str(path)
    _check_args(name, year, leap_day)
    text = _read_text(path, name)
    lines = text.splitlines()
    meta = {}
    i = 0
    while i < len(lines) and (not lines[i].strip() or lines[i].lstrip().startswith("#")):
        m = _META_RE.match(lines[i].strip())
        if m:
            meta[m.group(1).lower()] = m.group(2)
        i += 1
    if i == len(lines):
        msg = f"{name}: no header row after the comment lines; expected {_csv_allowed_header()}"
        raise WeatherError(msg)
    header_line = i + 1
    header = next(csv.reader([lines[i]]))
    names = []
    for h in header:
        m = _HEADER_RE.fullmatch(h)
        if not m:
            msg = (
                f"{name}: line {header_line}: header cell {h!r} is not 'name [unit]'; "
                f"expected {_csv_allowed_header()}"
            )
            raise WeatherError(msg)
        col, unit = m.group(1).lower(), m.group(2)
        if col == "time":
            names.append(col)
            continue
        if col not in COLUMNS:
            msg = f"{name}: line {header_line}: unknown column {col!r}; allowed: {_csv_allowed_header()}"
            raise WeatherError(msg)
        if unit is None:
            msg = (
                f"{name}: line {header_line}: column {col} has no unit in brackets; "
                f"write it as '{col} [{_CSV_UNITS[col][0]}]'"
            )
            raise WeatherError(msg)
        if col in ("temp_air", "temp_dew") and unit in _FAHRENHEIT_UNITS:
            msg = (
                f"{name}: line {header_line}: column {col} is in {unit}; temperatures must be "
                f"in °C, convert them with °C = (°F − 32) / 1.8"
            )
            raise WeatherError(msg)
        if unit not in _CSV_UNITS[col]:
            msg = (
                f"{name}: line {header_line}: column {col} has unit {unit!r}; "
                f"allowed: {' or '.join(_CSV_UNITS[col])}"
            )
            raise WeatherError(msg)
        names.append(col)
    dups = sorted({c for c in names if names.count(c) > 1})
    if dups:
        msg = f"{name}: line {header_line}: column {', '.join(dups)} appears more than once"
        raise WeatherError(msg)
    if "time" not in names:
        msg = f"{name}: line {header_line}: no 'time' column; expected {_csv_allowed_header()}"
        raise WeatherError(msg)

    missing_meta = [k for k in _CSV_REQUIRED_META if k not in meta]
    if missing_meta:
        shown = ", ".join(f"'# {k}: ...'" for k in missing_meta)
        msg = (
            f"{name}: missing comment line {shown} before the header; "
            f"required: latitude, longitude, utc_offset"
        )
        raise WeatherError(msg)
    latitude = _meta_float(name, "latitude", meta["latitude"], "comment")
    longitude = _meta_float(name, "longitude", meta["longitude"], "comment")
    utc_offset = _meta_float(name, "utc_offset", meta["utc_offset"], "comment")
    early_notes = []
    if "elevation" in meta:
        elevation = _meta_float(name, "elevation", meta["elevation"], "comment")
    else:
        elevation = 0.0
        early_notes.append("No elevation given in the file; 0 m assumed.")
    location = meta.get("location", "").strip() or Path(path).stem

    numbered = [(k + 1, s) for k, s in enumerate(lines[i + 1 :], start=i + 1) if s.strip()]
    if not numbered:
        msg = f"{name}: has a header but no data rows; a full year needs 8760 rows"
        raise WeatherError(msg)
    linenos = np.array([k for k, _ in numbered], dtype=int)
    rows = list(csv.reader([s for _, s in numbered]))
    nfields = np.array([len(r) for r in rows], dtype=int)
    wrong = nfields != len(names)
    if wrong.any():
        k = int(np.argmax(wrong))
        msg = (
            f"{name}: line {linenos[k]} has {nfields[k]} fields; the header has "
            f"{len(names)} columns ({int(wrong.sum())} such lines)"
        )
        raise WeatherError(msg)
    cols = {c: [r[j] for r in rows] for j, c in enumerate(names)}

    times = [t.strip() for t in cols["time"]]
    with_offset = [k for k, t in enumerate(times) if _OFFSET_RE.search(t)]
    if with_offset:
        k = with_offset[0]
        msg = (
            f"{name}: line {linenos[k]}: time {times[k]!r} carries a UTC offset; "
            f"give local standard time without an offset, e.g. 2023-07-01T13:00"
        )
        raise WeatherError(msg)
    parsed = pd.to_datetime(pd.Series(times, dtype=object), format="ISO8601", errors="coerce")
    bad = parsed.isna().to_numpy()
    if bad.any():
        k = int(np.argmax(bad))
        msg = (
            f"{name}: line {linenos[k]}: time {times[k]!r} is not an ISO 8601 date and time; "
            f"expected e.g. 2023-07-01T13:00 ({int(bad.sum())} such rows)"
        )
        raise WeatherError(msg)
    off_hour = ((parsed.dt.minute != 0) | (parsed.dt.second != 0)).to_numpy()
    if off_hour.any():
        k = int(np.argmax(off_hour))
        msg = (
            f"{name}: line {linenos[k]}: time {times[k]!r} is not the start of an hour; "
            f"times must be whole hours (minutes 00)"
        )
        raise WeatherError(msg)
    take, index, leap_dropped, notes = _arrange_calendar(
        name,
        parsed.dt.month.to_numpy(dtype=int),
        parsed.dt.day.to_numpy(dtype=int),
        parsed.dt.hour.to_numpy(dtype=int),
        linenos,
        times,
        year,
        leap_day,
    )
    values = {c: _to_float(name, c, cols[c], linenos)[take] for c in names if c != "time"}
    data, filled, unavailable, more = _check_and_fill(name, values, index, linenos[take])
    qa = WeatherQA(
        source_format="csv",
        rows_in_file=len(rows),
        leap_day_dropped=leap_dropped,
        filled_hours=filled,
        unavailable=unavailable,
        notes=tuple(early_notes + notes + more),
    )
    return Weather(
        data=data,
        location=location,
        latitude=latitude,
        longitude=longitude,
        utc_offset=utc_offset,
        elevation=elevation,
        source_path=name,
        qa=qa,
    )


# ---------------------------------------------------------------------------
# writers


def _prepare_for_writing(data, utc_offset, who):
    """Check a frame for writing; return it with a naive local-standard-time index."""
    if not isinstance(data, pd.DataFrame) or not isinstance(data.index, pd.DatetimeIndex):
        msg = f"{who}: data must be a DataFrame with a DatetimeIndex of hour starts"
        raise WeatherError(msg)
    index = data.index
    if index.tz is not None:
        tz = datetime.timezone(datetime.timedelta(hours=float(utc_offset)))
        index = index.tz_convert(tz).tz_localize(None)
    if len(index) not in (8760, 8784):
        msg = f"{who}: data must have 8760 hourly rows (8784 with Feb 29), got {len(index)}"
        raise WeatherError(msg)
    if index.has_duplicates or (index.minute != 0).any() or (index.second != 0).any():
        msg = f"{who}: the index must hold each hour start once (whole hours, no duplicates)"
        raise WeatherError(msg)
    out = data.copy()
    out.index = index
    return out


def _format_column(values, decimals, missing):
    v = np.round(np.asarray(values, dtype=float), decimals) + 0.0
    fmt = f"{{:.{decimals}f}}"
    return [missing if np.isnan(x) else fmt.format(x) for x in v]


def _clean_text(text):
    return " ".join(str(text).replace(",", ";").split())


def write_epw(data, path, *, location, latitude, longitude, utc_offset, elevation, comment=""):
    """Write hourly weather as an EPW file.

    Parameters
    ----------
    data : pandas.DataFrame
        8760 (or 8784, with Feb 29) hourly rows indexed by hour start, naive
        local standard time (a timezone-aware index is converted to
        ``utc_offset``). Columns from :data:`COLUMNS` are written; missing
        columns, NaN values and all other EPW fields get the EPW
        missing-value markers. Other columns are ignored.
    path : str or pathlib.Path
        File to write (its folder must exist).
    location : str
        Site name, written as the LOCATION city field (commas become ";").
    latitude : float
        North positive [°].
    longitude : float
        East positive [°].
    utc_offset : float
        Local standard time minus UTC [h].
    elevation : float
        Above sea level [m].
    comment : str
        Free text for the COMMENTS 1 line; a second line of text (after a
        newline) goes on COMMENTS 2.

    Notes
    -----
    The hour starting at h:00 is written as EPW hour h + 1, minute 0.
    Precision written (common EPW practice, no source): temperatures, wind
    speed and rain to 0.1; relative humidity, pressure, irradiance and wind
    direction to whole units. Irradiance [W m⁻²] mean over the hour equals
    the EPW hourly energy [Wh m⁻²]. The liquid precipitation quantity is 1 h
    where rain is given.

    References
    ----------
    .. [1] EnergyPlus documentation, Auxiliary Programs, "EnergyPlus Weather
       File (EPW) Data Dictionary".
    """
    frame = _prepare_for_writing(data, utc_offset, "write_epw")
    index = frame.index
    n = len(index)
    comments = [_clean_text(t) for t in (str(comment).split("\n") + ["", ""])[:2]]
    is_leap = bool(((index.month == 2) & (index.day == 29)).any())
    first, last = index[0], index[-1]
    header = [
        ",".join(
            [
                "LOCATION",
                _clean_text(location) or "-",
                "-",
                "-",
                "-",
                "-",
                f"{latitude:.4f}",
                f"{longitude:.4f}",
                f"{utc_offset:.1f}",
                f"{elevation:.1f}",
            ]
        ),
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        f"HOLIDAYS/DAYLIGHT SAVINGS,{'Yes' if is_leap else 'No'},0,0,0",
        f"COMMENTS 1,{comments[0]}",
        f"COMMENTS 2,{comments[1]}",
        f"DATA PERIODS,1,1,Data,{first:%A},{first.month}/{first.day},{last.month}/{last.day}",
    ]
    fields = [None] * _EPW_N_FIELDS
    fields[0] = [str(y) for y in index.year]
    fields[1] = [str(m) for m in index.month]
    fields[2] = [str(d) for d in index.day]
    fields[3] = [str(h + 1) for h in index.hour]
    fields[4] = ["0"] * n
    fields[5] = ["?"] * n
    for c, (k, marker) in _EPW_FIELDS.items():
        missing = f"{marker:g}"
        if c in frame.columns:
            fields[k] = _format_column(frame[c].to_numpy(dtype=float), _EPW_DECIMALS[c], missing)
        else:
            fields[k] = [missing] * n
    if "rain" in frame.columns:
        has_rain = ~np.isnan(frame["rain"].to_numpy(dtype=float))
        fields[34] = ["1" if r else "99" for r in has_rain]
    else:
        fields[34] = ["99"] * n
    for k, marker in _EPW_UNKNOWN.items():
        fields[k] = [marker] * n
    body = [",".join(row) for row in zip(*fields)]
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write("\n".join(header + body) + "\n")


def write_weather_csv(data, path, *, location, latitude, longitude, utc_offset, elevation):
    """Write hourly weather in the freerun weather CSV format (module docstring).

    Parameters
    ----------
    data : pandas.DataFrame
        8760 (or 8784) hourly rows indexed by hour start, naive local
        standard time. Columns from :data:`COLUMNS` present in ``data`` are
        written; NaN becomes an empty cell. Other columns are ignored.
    path : str or pathlib.Path
        File to write.
    location : str
        Site name.
    latitude : float
        North positive [°].
    longitude : float
        East positive [°].
    utc_offset : float
        Local standard time minus UTC [h].
    elevation : float
        Above sea level [m].

    Notes
    -----
    Values are written to 0.01 for temperatures, humidity, wind speed and
    rain, 0.1 for irradiance and wind direction, 1 Pa for pressure.
    """
    frame = _prepare_for_writing(data, utc_offset, "write_weather_csv")
    cols = [c for c in COLUMNS if c in frame.columns]
    lines = [
        f"# location: {' '.join(str(location).split())}",
        f"# latitude: {float(latitude):.10g}",
        f"# longitude: {float(longitude):.10g}",
        f"# utc_offset: {float(utc_offset):.10g}",
        f"# elevation: {float(elevation):.10g}",
        ",".join(["time"] + [f"{c} [{_CSV_UNITS[c][0]}]" for c in cols]),
    ]
    out = [[f"{t:%Y-%m-%dT%H:%M}" for t in frame.index]]
    for c in cols:
        out.append(_format_column(frame[c].to_numpy(dtype=float), _CSV_DECIMALS[c], ""))
    lines += [",".join(row) for row in zip(*out)]
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write("\n".join(lines) + "\n")
