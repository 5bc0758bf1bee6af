"""Future climate: morph a present-day weather year by monthly changes that the project states.

The dry bulb is morphed by the shift-and-stretch method of Belcher, Hacker and Powell (2005):
each month's hourly temperatures are moved by the change in the monthly mean and their spread
about the monthly mean is scaled so that the mean daily range changes by the change in mean
daily maximum minus the change in mean daily minimum. The changes themselves (12 monthly values
each for the mean, the mean daily maximum and the mean daily minimum, in K) come from the
project, with a statement of their source (a climate model, a scenario, a period, a grid cell).

What is changed and what is not
-------------------------------
* ``temp_air``: shift and stretch (:func:`morph_factors`, :func:`morph_weather`).
* ``temp_dew``: shifted by a monthly change, by default the monthly mean dry-bulb change (see
  :func:`morph_weather` for the reasoning); capped at the morphed dry bulb.
* ``relative_humidity``: recomputed from the morphed dry bulb and dew point (Magnus form,
  :mod:`calcs.weather`), so it stays consistent with them.
* ``wind_speed``: unchanged unless monthly percentage changes are given, then stretched.
* ``ghi``, ``dni``, ``dhi``, ``pressure``, ``wind_direction``, ``rain``: unchanged. freerun
  has no input for changes in irradiance, pressure or rain; a morphed year keeps today's sun
  and rain.

Pure functions: no file I/O except :func:`load_future_climate`, which reads the small TOML
file given to ``freerun screen --future`` (the same keys as a project's ``[future_climate]``
table).

References
----------
.. [1] Belcher, S. E., Hacker, J. N. and Powell, D. S. (2005). Constructing design weather data
   for future climates. Building Services Engineering Research & Technology 26(1), 49–61.
   :doi:`10.1191/0143624405bt112oa`
"""

from __future__ import annotations

import dataclasses
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pydantic
from pydantic import BaseModel, ConfigDict, Field, field_validator

from calcs import climate
from calcs.errors import ProjectError, WeatherError
from calcs.weather import Weather

__all__ = [
    "MONTHS",
    "FutureClimate",
    "load_future_climate",
    "future_climate_from_dict",
    "morph_factors",
    "morph_weather",
]

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")

#: Largest monthly temperature change accepted [K]. A plausibility limit (common practice, no
#: source): projected monthly changes for this century are a few kelvin; a larger number is
#: usually an absolute temperature typed where a change was meant.
MAX_DELTA_K = 15.0

# Magnus-form coefficients over water, as in calcs.weather (Alduchov & Eskridge 1996 [MEM]).
_MAGNUS_B = 17.625
_MAGNUS_C = 243.04  # [°C]


def _f(default: Any = ..., meaning: str = "", unit: str = "", source: str = "", **kw: Any) -> Any:
    """A schema field: default, meaning, unit and the source of the default (as calcs.project)."""
    extra = {"unit": unit, "source": source}
    return Field(default, description=meaning, json_schema_extra=extra, **kw)


def _twelve(value: tuple[float, ...], unit: str, low: float, high: float) -> tuple[float, ...]:
    if len(value) != 12:
        msg = f"must be 12 monthly values, Jan–Dec, in {unit} (got {len(value)} values)"
        raise ValueError(msg)
    bad = [(MONTHS[i], v) for i, v in enumerate(value) if not (low <= v <= high) or v != v]
    if bad:
        month, v = bad[0]
        msg = f"{month} value {v:g} {unit} is outside {low:g} to {high:g} {unit}"
        raise ValueError(msg)
    return value


class FutureClimate(BaseModel):
    """Monthly climate changes to morph the weather year by, with their source.

    All temperature changes are future minus present-day baseline of the climate projection,
    per calendar month, Jan–Dec [K].
    """

    model_config = ConfigDict(extra="forbid", frozen=True)

    label: str = _f(meaning="Name of the future climate shown in the report, e.g. a scenario and period",
                    min_length=1, max_length=120)
    source: str = _f(meaning="Where the monthly changes come from: climate model or data set, scenario, "
                             "period against baseline, grid cell or station", min_length=1, max_length=400)
    delta_mean: tuple[float, ...] = _f(meaning="Change in the monthly mean dry-bulb temperature, Jan–Dec",
                                       unit="K")
    delta_max: tuple[float, ...] = _f(meaning="Change in the monthly mean of the daily maximum dry bulb, Jan–Dec",
                                      unit="K")
    delta_min: tuple[float, ...] = _f(meaning="Change in the monthly mean of the daily minimum dry bulb, Jan–Dec",
                                      unit="K")
    delta_dew_point: tuple[float, ...] | None = _f(
        None, meaning="Change in the monthly mean dew point, Jan–Dec; absent = the same as delta_mean "
                      "(relative humidity about unchanged)", unit="K",
        source="constant relative humidity under warming: Held & Soden (2006), J. Climate 19, 5686–5699 [MEM]",
    )
    wind_speed_change: tuple[float, ...] | None = _f(
        None, meaning="Change in the monthly mean wind speed, Jan–Dec; absent = wind unchanged", unit="%",
    )

    @field_validator("delta_mean", "delta_max", "delta_min", "delta_dew_point")
    @classmethod
    def _deltas(cls, value: tuple[float, ...] | None) -> tuple[float, ...] | None:
        return None if value is None else _twelve(value, "K", -MAX_DELTA_K, MAX_DELTA_K)

    @field_validator("wind_speed_change")
    @classmethod
    def _wind(cls, value: tuple[float, ...] | None) -> tuple[float, ...] | None:
        if value is None:
            return None
        value = _twelve(value, "%", -99.0, 200.0)
        return value

    def describe(self) -> str:
        """One sentence for a report or page: label, method and source."""
        return (f"{self.label}: present-day weather morphed by monthly changes (shift and stretch of the dry "
                f"bulb, Belcher, Hacker & Powell 2005); source of the changes: {self.source}")


# --------------------------------------------------------------------------------------
# Reading a future-climate file
# --------------------------------------------------------------------------------------

def _short(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def future_climate_from_dict(raw: Any, source: str, prefix: str = "") -> FutureClimate:
    """Validate a plain dict as :class:`FutureClimate`, raising one clear :class:`ProjectError`.

    ``source`` names the file in the message; ``prefix`` is put before key names (e.g.
    ``"future_climate."``).
    """
    if not isinstance(raw, dict):
        msg = f"{source}: {prefix.rstrip('.') or 'the file'} must be a table of keys, got {_short(raw)}"
        raise ProjectError(msg)
    try:
        return FutureClimate.model_validate(raw)
    except pydantic.ValidationError as exc:
        errors = exc.errors()
        err = errors[0]
        loc = [str(p) for p in err["loc"]]
        # a list item's error names the list and the month
        if len(loc) > 1 and loc[-1].isdigit() and int(loc[-1]) < 12:
            loc = loc[:-1] + [f"{loc[-1]} ({MONTHS[int(loc[-1])]})"]
        key = prefix + ".".join(loc) if loc else prefix.rstrip(".") or "(top level)"
        kind = err["type"]
        if kind == "extra_forbidden":
            line = (f"{source}: unknown key '{key}' (allowed: {', '.join(FutureClimate.model_fields)})")
        elif kind == "missing":
            line = f"{source}: required key '{key}' is missing"
        else:
            reason = err["msg"]
            if reason.startswith("Value error, "):
                reason = reason[len("Value error, "):]
            line = f"{source}: {key} = {_short(err.get('input'))}: {reason}"
        if len(errors) > 1:
            line += f" (and {len(errors) - 1} more problem{'s' if len(errors) > 2 else ''}; fix this one first)"
        raise ProjectError(line) from None


def load_future_climate(path: str | Path) -> FutureClimate:
    """Read a future-climate TOML file.

    The file holds the :class:`FutureClimate` keys at its top level, or inside one
    ``[future_climate]`` table (so the table can be copied from a project file)::

        label = "High emissions, 2050s (example)"
        source = "..."
        delta_mean = [1.8, 1.7, 1.9, 2.0, 2.2, 2.6, 3.0, 3.1, 2.7, 2.3, 2.0, 1.9]
        delta_max  = [...]
        delta_min  = [...]

    Raises
    ------
    calcs.errors.ProjectError
        File missing, not UTF-8 TOML, or a key missing, unknown or out of range (one line
        naming the file, the key, the value and what is allowed).
    """
    path = Path(path)
    if not path.is_file():
        msg = f"{path}: future-climate file not found"
        raise ProjectError(msg)
    try:
        raw = tomllib.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError as exc:
        msg = f"{path}: not UTF-8 text (byte {exc.start}); save the future-climate file as UTF-8"
        raise ProjectError(msg) from None
    except tomllib.TOMLDecodeError as exc:
        msg = f"{path}: not valid TOML: {exc}"
        raise ProjectError(msg) from None
    if set(raw) == {"future_climate"}:
        return future_climate_from_dict(raw["future_climate"], str(path), prefix="future_climate.")
    return future_climate_from_dict(raw, str(path))


# --------------------------------------------------------------------------------------
# Morphing
# --------------------------------------------------------------------------------------

def _saturation_exponent(t: np.ndarray) -> np.ndarray:
    """b·t/(c + t) of the Magnus form: e_s(t) = 6.1094 hPa · exp(this)."""
    return _MAGNUS_B * t / (_MAGNUS_C + t)


def morph_factors(temp_air: pd.Series, future: FutureClimate) -> pd.DataFrame:
    """Monthly present-day statistics and the shift and stretch factors of the dry bulb.

    Parameters
    ----------
    temp_air : pandas.Series
        Hourly present-day dry bulb of one calendar year, hour-start labels [°C].
    future : FutureClimate
        The monthly changes.

    Returns
    -------
    pandas.DataFrame
        Index ``month`` 1–12. Columns: ``mean_C`` ⟨T0⟩_m, monthly mean of the hourly dry bulb
        (equal to the mean of the daily means) [°C]; ``mean_daily_max_C`` ⟨T0max⟩_m and
        ``mean_daily_min_C`` ⟨T0min⟩_m [°C]; ``mean_daily_range_K`` their difference [K];
        ``delta_mean_K``, ``delta_max_K``, ``delta_min_K``, ``delta_dew_point_K`` the changes
        applied [K]; ``stretch`` α_m [-]; ``wind_speed_factor`` 1 + change/100 [-].

    Raises
    ------
    calcs.errors.ProjectError
        A month whose stretch would remove or invert the daily cycle (α_m <= −1), or a month
        without any daily range today (constant temperature) for which ΔTmax ≠ ΔTmin.
    calcs.errors.WeatherError
        ``temp_air`` is not one calendar year of hourly values.

    Notes
    -----
    α_m = (ΔTmax_m − ΔTmin_m) / (⟨T0max⟩_m − ⟨T0min⟩_m)

    where ⟨T0max⟩_m and ⟨T0min⟩_m are the month's means of the daily maxima and minima of
    the present-day file (Belcher, Hacker & Powell 2005, section on dry-bulb temperature;
    this form is quoted from memory of the paper [MEM] and should be checked against it).
    Days are calendar days 00:00–23:00 (:func:`calcs.climate.daily_max`).
    """
    t = climate._check_numeric_series(temp_air, "temp_air")
    climate._check_one_year(t.index, "temp_air", "h")
    month = pd.Index(t.index.month, name="month")
    dmax = climate.daily_max(t)
    dmin = climate.daily_min(t)
    day_month = pd.Index(dmax.index.month, name="month")
    out = pd.DataFrame({
        "mean_C": t.groupby(month).mean(),
        "mean_daily_max_C": dmax.groupby(day_month).mean(),
        "mean_daily_min_C": dmin.groupby(day_month).mean(),
    }).reindex(pd.RangeIndex(1, 13, name="month"))
    out["mean_daily_range_K"] = out["mean_daily_max_C"] - out["mean_daily_min_C"]
    out["delta_mean_K"] = np.asarray(future.delta_mean, float)
    out["delta_max_K"] = np.asarray(future.delta_max, float)
    out["delta_min_K"] = np.asarray(future.delta_min, float)
    dew = future.delta_dew_point if future.delta_dew_point is not None else future.delta_mean
    out["delta_dew_point_K"] = np.asarray(dew, float)
    change = out["delta_max_K"].to_numpy() - out["delta_min_K"].to_numpy()
    rng = out["mean_daily_range_K"].to_numpy()
    flat = rng <= 1e-9
    for m in np.flatnonzero(flat & (np.abs(change) > 1e-12)):
        msg = (f"future climate '{future.label}': {MONTHS[m]} has no daily temperature range in the weather "
               f"file, so the change in daily range (delta_max − delta_min = {change[m]:g} K) cannot be applied")
        raise ProjectError(msg)
    alpha = np.where(flat, 0.0, change / np.where(flat, 1.0, rng))
    for m in np.flatnonzero(alpha <= -1.0):
        msg = (f"future climate '{future.label}': in {MONTHS[m]} delta_max − delta_min = {change[m]:g} K would "
               f"remove or invert the present mean daily range of {rng[m]:.2f} K; allowed: more than "
               f"{-rng[m]:.2f} K")
        raise ProjectError(msg)
    out["stretch"] = alpha
    wind = future.wind_speed_change if future.wind_speed_change is not None else (0.0,) * 12
    out["wind_speed_factor"] = 1.0 + np.asarray(wind, float) / 100.0
    return out


def morph_weather(weather: Weather, future: FutureClimate) -> Weather:
    """A future weather year: the present-day year morphed by monthly changes.

    Parameters
    ----------
    weather : calcs.weather.Weather
        Present-day weather (from :func:`calcs.weather.read_weather`).
    future : FutureClimate
        Monthly changes and their source.

    Returns
    -------
    calcs.weather.Weather
        Same site, index, columns and ``source_path``; morphed ``data``; ``qa.notes`` extended
        with one sentence on the morphing (and one on any dew points capped). ``qa`` keeps the
        reading record of the present-day file.

    Notes
    -----
    Dry bulb (Belcher, Hacker & Powell 2005, shift and stretch [MEM]), for hour h of month m:

        T(h) = T0(h) + ΔTmean_m + α_m · (T0(h) − ⟨T0⟩_m)

    with α_m from :func:`morph_factors`. The monthly mean moves by exactly ΔTmean_m; every
    hour's departure from the monthly mean is scaled by (1 + α_m), so for α_m > −1 the daily
    maxima and minima stay the extreme hours and the mean daily range changes by exactly
    ΔTmax_m − ΔTmin_m.

    Dew point: the paper morphs relative humidity by a projected monthly change of relative
    humidity [MEM]. freerun takes temperature changes only, so it shifts the dew point:
    Td(h) = Td0(h) + ΔTd_m, with ΔTd_m = ``delta_dew_point`` when given, else ΔTmean_m. Shifting
    the dew point with the mean temperature keeps the relative humidity of the monthly mean
    state about unchanged, the first-order expectation of climate models under warming (Held
    & Soden 2006 [MEM]); it is a stated assumption, not a projection. Where the stretch would
    put the dew point above the morphed dry bulb (a cool night that becomes cooler relative to
    the mean), the dew point is capped at the dry bulb (saturation) and the hours are counted
    in a note.

    Relative humidity is recomputed from the morphed dry bulb and dew point with the Magnus
    form of :func:`calcs.weather.relative_humidity_magnus_alduchov96`, applied as a ratio to the
    file's own value so that zero changes give the file back exactly:

        RH = RH0 · exp[f(Td) − f(Td0) − f(T) + f(T0)],  f(t) = b·t / (c + t),

    i.e. the vapour pressure changes as e_s(Td)/e_s(Td0) and the saturation pressure as
    e_s(T)/e_s(T0). Where the file's RH0 equals the Magnus value of (T0, Td0) this is exactly
    the Magnus value of (T, Td). The result is limited to 0–100 %.

    Wind speed: u(h) = u0(h) · (1 + Δu_m/100), a stretch, when ``wind_speed_change`` is given;
    otherwise unchanged. Irradiance, pressure, wind direction and rain are unchanged.
    """
    if not isinstance(weather, Weather):
        msg = f"morph_weather needs a Weather (from calcs.weather.read_weather), got {type(weather).__name__}"
        raise WeatherError(msg)
    if not isinstance(future, FutureClimate):
        msg = f"morph_weather needs a FutureClimate, got {type(future).__name__}"
        raise ProjectError(msg)
    data = weather.data
    factors = morph_factors(data["temp_air"], future)
    month = data.index.month.to_numpy() - 1  # 0-based row of factors

    def per_hour(column: str) -> np.ndarray:
        return factors[column].to_numpy()[month]

    t0 = data["temp_air"].to_numpy(float)
    t = t0 + per_hour("delta_mean_K") + per_hour("stretch") * (t0 - per_hour("mean_C"))

    out = data.copy()
    out["temp_air"] = t
    notes = list(weather.qa.notes)
    notes.append(
        f"Future climate '{future.label}': dry bulb morphed by the monthly changes in mean, mean daily maximum "
        f"and mean daily minimum (shift and stretch, Belcher, Hacker & Powell 2005); dew point shifted by "
        + ("the stated monthly dew-point changes" if future.delta_dew_point is not None
           else "the monthly mean change (relative humidity about unchanged)")
        + "; relative humidity recomputed; "
        + ("wind speed scaled by the stated monthly changes; " if future.wind_speed_change is not None
           else "wind speed, ")
        + f"irradiance, pressure and rain unchanged. Source of the changes: {future.source}."
    )
    if "temp_dew" in data.columns:
        td0 = data["temp_dew"].to_numpy(float)
        td = td0 + per_hour("delta_dew_point_K")
        capped = td > t
        td = np.where(capped, t, td)
        rh0 = data["relative_humidity"].to_numpy(float)
        ratio = np.exp(_saturation_exponent(td) - _saturation_exponent(td0)
                       - _saturation_exponent(t) + _saturation_exponent(t0))
        out["temp_dew"] = td
        out["relative_humidity"] = np.clip(rh0 * ratio, 0.0, 100.0)
        if capped.any():
            notes.append(f"Future climate: the dew point was capped at the morphed dry bulb (saturation) in "
                         f"{int(capped.sum())} hours.")
    if "wind_speed" in data.columns and future.wind_speed_change is not None:
        out["wind_speed"] = data["wind_speed"].to_numpy(float) * per_hour("wind_speed_factor")
    qa = dataclasses.replace(weather.qa, notes=tuple(notes))
    return dataclasses.replace(weather, data=out, qa=qa)
