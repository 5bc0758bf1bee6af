"""The climate stage's headline figures of one weather year, as one dict.

One function, :func:`climate_key_figures`, runs the :mod:`calcs.climate` functions the way the
climate stage does (occupancy calendar, outdoor suitability, monthly and annual summaries,
night-cooling potential) and returns the same keys as the stage's part of results.json. It is
shared by ``freerun screen`` (one row per weather file) and by the climate stage's comparison of
today's weather with a morphed future year (:mod:`calcs.morph`), so the three agree by
construction. No calculation of its own and no file I/O.
"""

from __future__ import annotations

from typing import Any

import pandas as pd

from calcs import climate
from calcs.project import Occupancy, Outdoor
from calcs.weather import Weather

__all__ = ["MONTHS", "climate_key_figures", "comparison_frame", "COMPARED"]

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def climate_key_figures(weather: Weather, occupancy: Occupancy, outdoor: Outdoor) -> dict[str, Any]:
    """Headline climate figures of a weather year for an occupancy calendar and outdoor limits.

    Parameters
    ----------
    weather : calcs.weather.Weather
        One checked weather year (today's, or a morphed future one).
    occupancy : calcs.project.Occupancy
        Occupied days, hours and holidays (the calendar year is that of ``weather``'s index).
    outdoor : calcs.project.Outdoor
        Band, dew-point, wind and rain limits, night window and threshold, and the share of
        occupied hours that lets a month "open up".

    Returns
    -------
    dict
        The keys of the climate stage's results (DEVELOPERS.md, results.json contract):
        ``hours`` [h], ``annual_mean_C`` and ``monthly_mean_C`` (12) [°C], ``occupied_hours``
        [h], ``band_C`` [°C], ``occupied_in_band_pct``, ``occupied_nv_suitable_pct``,
        ``occupied_below_band_pct``, ``occupied_above_band_pct`` (% of occupied hours),
        ``monthly_occupied_nv_suitable_pct`` (12, None for a month without occupied hours),
        ``months_can_open`` (month abbreviations), ``mean_diurnal_range_K`` [K],
        ``night_cooling_pct`` (% of occupied days), ``rain_assessed``,
        ``weather_filled_hours``, ``leap_day_dropped``.
    """
    w = weather.data
    band = (outdoor.band_low, outdoor.band_high)
    occupied = climate.occupied_hours(w.index, days=occupancy.days, start_hour=occupancy.start_hour,
                                      end_hour=occupancy.end_hour, holidays=occupancy.holidays)
    rain = w["rain"] if "rain" in w.columns else None
    suit = climate.outdoor_suitability(w["temp_air"], w["temp_dew"], w["wind_speed"], rain, band=band,
                                       dew_max=outdoor.dew_point_max, wind_max=outdoor.wind_speed_max,
                                       rain_max=outdoor.rain_max)
    args = (w["temp_air"], w["temp_dew"], w["relative_humidity"], w["wind_speed"], occupied, suit)
    monthly = climate.monthly_summary(*args)
    annual = climate.annual_summary(*args)
    night = climate.night_cooling_potential(w["temp_air"], occupied, night_start_hour=int(outdoor.night_start[:2]),
                                            night_end_hour=int(outdoor.night_end[:2]),
                                            threshold=outdoor.night_cooling_below)
    can_open = [MONTHS[m - 1] for m in monthly.index
                if not monthly.loc[m, "no_occupied_hours"]
                and monthly.loc[m, "occupied_nv_suitable_pct"] >= outdoor.suitable_month_pct]
    return {
        "hours": int(annual.hours),
        "annual_mean_C": float(annual.mean_C),
        "monthly_mean_C": [float(v) for v in monthly["mean_C"]],
        "occupied_hours": int(annual.occupied_hours),
        "band_C": [float(band[0]), float(band[1])],
        "occupied_in_band_pct": float(annual.occupied_in_band_pct),
        "occupied_nv_suitable_pct": float(annual.occupied_nv_suitable_pct),
        "occupied_below_band_pct": float(annual.occupied_below_band_pct),
        "occupied_above_band_pct": float(annual.occupied_above_band_pct),
        "monthly_occupied_nv_suitable_pct": [
            None if monthly.loc[m, "no_occupied_hours"] else float(monthly.loc[m, "occupied_nv_suitable_pct"])
            for m in monthly.index],
        "months_can_open": can_open,
        "mean_diurnal_range_K": float(annual.mean_diurnal_range_K),
        "night_cooling_pct": float(night.cool_night_pct),
        "rain_assessed": bool(annual.rain_assessed),
        "weather_filled_hours": int(sum(weather.qa.filled_hours.values())),
        "leap_day_dropped": bool(weather.qa.leap_day_dropped),
    }


#: Figures compared between today and the future: key → (label, unit, decimals).
COMPARED = {
    "annual_mean_C": ("Annual mean dry bulb", "°C", 1),
    "mean_diurnal_range_K": ("Mean daily range", "K", 1),
    "occupied_below_band_pct": ("Occupied hours below the band", "%", 1),
    "occupied_in_band_pct": ("Occupied hours in the band", "%", 1),
    "occupied_above_band_pct": ("Occupied hours above the band", "%", 1),
    "occupied_nv_suitable_pct": ("Occupied hours suitable for natural ventilation", "%", 1),
    "night_cooling_pct": ("Occupied days after a night cool enough for night cooling", "%", 1),
    "months_can_open": ("Months that can open up", "", 0),
}


def comparison_frame(today: dict[str, Any], future: dict[str, Any]) -> pd.DataFrame:
    """Today against the future, one row per headline figure.

    Parameters
    ----------
    today, future : dict
        From :func:`climate_key_figures` on the present-day and the morphed weather.

    Returns
    -------
    pandas.DataFrame
        Index: figure labels with their unit (e.g. ``"Annual mean dry bulb [°C]"``); columns
        ``today``, ``future`` and ``change`` (future − today; for "Months that can open up" the
        count change). Numbers are floats; the month lists are text (empty list → "none").
    """
    rows = {}
    for key, (label, unit, _) in COMPARED.items():
        name = f"{label} [{unit}]" if unit else label
        a, b = today[key], future[key]
        if key == "months_can_open":
            rows[name] = (", ".join(a) or "none", ", ".join(b) or "none", f"{len(b) - len(a):+d} months")
        else:
            rows[name] = (float(a), float(b), float(b) - float(a))
    return pd.DataFrame.from_dict(rows, orient="index", columns=["today", "future", "change"])
