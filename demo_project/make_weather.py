"""Make the INVENTED demo weather file for the demo project.

Writes ``demo_project/weather/port_merrow_invented.epw``: one synthetic year
of hourly weather for "Port Merrow (invented)", an invented warm-temperate
coastal site. **Nothing here is measured data.** The coordinates (36.5° N,
12.5° W, UTC−1, 20 m) were chosen for their latitude only, so that the sun's
path is realistic; they are not a real place. Use the file to try freerun,
never for design.

Run from the repository root::

    python demo_project/make_weather.py

The generator is seeded (``numpy.random.default_rng(SEED)``) and writes the
same file byte for byte on every run.

How the year is made (all figures invented to look plausible, not fitted to
any station):

* Dry bulb: a sinusoidal annual cycle of daily means (mean 17.2 °C before noise and warm spells,
  amplitude 6.1 K, warmest on day 205, about 4.7 weeks after the June
  solstice), day-to-day AR(1) weather noise, four summer warm spells of
  3–6 days, and a diurnal cycle with its minimum near 06:00 and its maximum
  near 15:00 whose range (about 5–9 K) is larger in summer and smaller on
  cloudy days.
* Dew point: its own annual cycle and AR(1) noise, kept at least 0.3 K
  below the dry bulb; relative humidity follows from the two through the
  Magnus formula (:func:`calcs.weather.relative_humidity_magnus_alduchov96`).
* Wind: a Weibull distribution (shape 2) with serial correlation through a
  Gaussian AR(1) process, stronger in winter and on wet days, plus an
  afternoon sea breeze from the west-north-west on sunny summer days.
* Rain: a two-state (wet day / dry day) Markov chain whose wet-day chance
  peaks in winter, so that rain falls mostly from October to April; each
  wet day has one rain spell of 2–9 hours.
* Sun: pvlib solar position and the Ineichen–Perez clear-sky model (Linke
  turbidity from pvlib's bundled climatology) evaluated at mid-hour, times a
  cloud factor 1 − 0.75·N^3.4 (Kasten & Czeplak 1980, N cloud fraction
  [MEM]) from a seeded daily-and-hourly cloudiness series, split into
  direct normal and diffuse with pvlib's Erbs model. Zero at night.
* Pressure: the standard atmosphere at 20 m (ASHRAE Handbook Fundamentals,
  ch. 1, Eq. 3 [MEM]) plus day-to-day AR(1) variation, lower on wet days.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
from scipy.special import ndtr

from calcs.weather import relative_humidity_magnus_alduchov96, write_epw

SEED = 7301
YEAR = 2001  # nominal year written in the file (a non-leap year)
SITE = {
    "location": "Port Merrow (invented)",
    "latitude": 36.5,
    "longitude": -12.5,
    "utc_offset": -1.0,
    "elevation": 20.0,
}
OUTPUT = Path(__file__).resolve().parent / "weather" / "port_merrow_invented.epw"
COMMENT = (
    "INVENTED demo weather for the invented site Port Merrow - synthetic, not measured, "
    "not for design. Coordinates chosen for their latitude only; not a real place.\n"
    f"Made by demo_project/make_weather.py with seed {SEED} (freerun demo project)."
)


def _ar1(rng, n, phi, sd):
    """Stationary AR(1) series with lag-one correlation ``phi`` and standard deviation ``sd``."""
    e = rng.standard_normal(n) * sd * np.sqrt(1.0 - phi**2)
    x = np.empty(n)
    x[0] = rng.standard_normal() * sd
    for i in range(1, n):  # a time recurrence: one loop over the year
        x[i] = phi * x[i - 1] + e[i]
    return x


def _daily_to_hourly(daily, hours_of_year):
    """Linear interpolation of daily values (placed at noon) to hours, cyclic over the year."""
    day_centres = np.arange(len(daily)) * 24.0 + 12.0
    return np.interp(hours_of_year, day_centres, daily, period=24.0 * len(daily))


def _diurnal_shape(hour_of_day):
    """−0.5 at 06:00, +0.5 at 15:00, cosine rise over 9 h and fall over 15 h; daily mean 0."""
    x = np.asarray(hour_of_day, dtype=float)
    rising = (x >= 6.0) & (x < 15.0)
    s_rise = -0.5 * np.cos(np.pi * (x - 6.0) / 9.0)
    s_fall = 0.5 * np.cos(np.pi * ((x - 15.0) % 24.0) / 15.0)
    return np.where(rising, s_rise, s_fall)


def generate(seed=SEED):
    """Make the invented year.

    Parameters
    ----------
    seed : int
        Seed of the random generator.

    Returns
    -------
    pandas.DataFrame
        8760 hourly rows indexed by hour start (naive local standard time),
        columns temp_air, temp_dew, relative_humidity, pressure, wind_speed,
        wind_direction, ghi, dni, dhi, rain.
    """
    rng = np.random.default_rng(seed)
    index = pd.date_range(f"{YEAR}-01-01", periods=8760, freq="h", name="time")
    n_days = 365
    doy = np.arange(1, n_days + 1)
    hours = np.arange(8760) + 0.5  # mid-hour, hours since Jan 1 00:00
    hod = hours % 24.0
    day_of_hour = np.arange(8760) // 24
    summer = np.cos(2 * np.pi * (doy - 205) / 365.0)  # +1 late July, −1 late January
    winter_weight = 0.5 * (1.0 + np.cos(2 * np.pi * (doy - 20) / 365.0))  # 1 mid-January

    # --- rain days: two-state Markov chain, wet chance peaking in winter
    p_wet_after_dry = 0.015 + 0.32 * winter_weight**1.5
    p_wet_after_wet = 0.35 + 0.30 * winter_weight
    draws = rng.random(n_days)
    wet = np.zeros(n_days, dtype=bool)
    for d in range(n_days):  # a time recurrence over days
        p = p_wet_after_wet[d] if d > 0 and wet[d - 1] else p_wet_after_dry[d]
        wet[d] = draws[d] < p
    rain = np.zeros(8760)
    starts = rng.integers(0, 24, n_days)
    lengths = rng.integers(2, 10, n_days)
    intensity = rng.exponential(1.4, 8760)
    for d in np.flatnonzero(wet):
        first = d * 24 + starts[d]
        span = np.arange(first, first + lengths[d]) % 8760
        rain[span] = np.round(intensity[span], 1) + 0.1

    # --- cloudiness: daily logistic AR(1), cloudier in winter and on wet days
    cloud_mean = 0.19 + 0.34 * winter_weight
    logit = np.log(cloud_mean / (1.0 - cloud_mean)) + _ar1(rng, n_days, 0.6, 1.1)
    cloud_day = 1.0 / (1.0 + np.exp(-logit))
    cloud_day = np.where(wet, np.maximum(cloud_day, 0.8), cloud_day)
    cloud_hour = np.clip(
        _daily_to_hourly(cloud_day, hours) + _ar1(rng, 8760, 0.8, 0.10), 0.0, 1.0
    )

    # --- dry bulb
    spells = np.zeros(n_days)
    # one spell in each of four 26-day blocks from day 160 (Jun 9) to day 263 (Sep 20)
    spell_starts = np.array([160, 186, 212, 238]) + rng.integers(0, 18, 4)
    for s in spell_starts:
        length = int(rng.integers(3, 7))
        amplitude = rng.uniform(2.0, 3.0)
        ramp = np.sin(np.pi * (np.arange(length) + 0.5) / length)
        spells[s : s + length] = amplitude * ramp
    daily_mean = 17.2 + 6.1 * summer + _ar1(rng, n_days, 0.7, 1.4) + spells
    daily_range = (7.25 + 1.25 * summer) * (1.15 - 0.45 * cloud_day) + 0.2 * spells
    temp_air = (
        _daily_to_hourly(daily_mean, hours)
        + _daily_to_hourly(daily_range, hours) * _diurnal_shape(hod)
        + _ar1(rng, 8760, 0.85, 0.35)
    )

    # --- dew point and relative humidity
    dew_daily = 12.0 + 4.6 * np.cos(2 * np.pi * (doy - 205) / 365.0) + _ar1(rng, n_days, 0.75, 1.6)
    dew_daily = dew_daily + np.where(wet, 1.0, 0.0) - 0.15 * spells
    temp_dew = (
        _daily_to_hourly(dew_daily, hours)
        + 0.5 * _diurnal_shape(hod)
        + _ar1(rng, 8760, 0.9, 0.5)
    )
    temp_dew = np.minimum(temp_dew, temp_air - 0.3)
    relative_humidity = np.clip(relative_humidity_magnus_alduchov96(temp_air, temp_dew), 0.0, 100.0)

    # --- pressure: standard atmosphere at the site elevation, plus weather
    p_site = 101325.0 * (1.0 - 2.25577e-5 * SITE["elevation"]) ** 5.2559
    p_daily = p_site + _ar1(rng, n_days, 0.8, 650.0) - np.where(wet, 700.0, 0.0)
    pressure = _daily_to_hourly(p_daily, hours)

    # --- sun
    times_mid = pd.DatetimeIndex(index + pd.Timedelta(minutes=30)).tz_localize("Etc/GMT+1")
    site = pvlib.location.Location(
        SITE["latitude"], SITE["longitude"], tz="Etc/GMT+1", altitude=SITE["elevation"]
    )
    solpos = site.get_solarposition(times_mid)
    clear = site.get_clearsky(times_mid, model="ineichen", solar_position=solpos)
    ghi = clear["ghi"].to_numpy() * (1.0 - 0.75 * cloud_hour**3.4)
    zenith = solpos["zenith"].to_numpy()
    ghi = np.where(zenith < 90.0, ghi, 0.0)
    split = pvlib.irradiance.erbs(ghi, zenith, times_mid.day_of_year.to_numpy())
    dni = np.nan_to_num(np.asarray(split["dni"], dtype=float))
    dhi = np.nan_to_num(np.asarray(split["dhi"], dtype=float))

    # --- wind: correlated Weibull speeds plus an afternoon sea breeze
    scale = _daily_to_hourly(4.5 + 0.6 * np.cos(2 * np.pi * (doy - 20) / 365.0), hours)
    scale = scale * np.where(wet[day_of_hour], 1.25, 1.0)
    u = np.clip(ndtr(_ar1(rng, 8760, 0.93, 1.0)), 1e-9, 1 - 1e-9)
    synoptic = scale * (-np.log(1.0 - u)) ** (1.0 / 2.0)
    breeze_hours = np.clip(np.sin(np.pi * (hod - 10.0) / 9.0), 0.0, None) * ((hod >= 10) & (hod <= 19))
    breeze = (
        1.8
        * breeze_hours
        * (1.0 - cloud_hour)
        * _daily_to_hourly(0.5 + 0.5 * summer, hours)
    )
    wind_speed = np.clip(synoptic + breeze, 0.0, 30.0)
    heading = np.deg2rad(345.0 + np.rad2deg(_ar1(rng, 8760, 0.97, 0.7)))
    sea = np.deg2rad(285.0)
    east = synoptic * np.sin(heading) + breeze * np.sin(sea)
    north = synoptic * np.cos(heading) + breeze * np.cos(sea)
    wind_direction = np.rad2deg(np.arctan2(east, north)) % 360.0

    return pd.DataFrame(
        {
            "temp_air": temp_air,
            "temp_dew": temp_dew,
            "relative_humidity": relative_humidity,
            "pressure": pressure,
            "wind_speed": wind_speed,
            "wind_direction": wind_direction,
            "ghi": ghi,
            "dni": dni,
            "dhi": dhi,
            "rain": rain,
        },
        index=index,
    )


def main(path=OUTPUT, seed=SEED):
    """Generate the invented year and write it as EPW to ``path``."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    data = generate(seed)
    write_epw(data, path, comment=COMMENT, **SITE)
    monthly = data["temp_air"].groupby(data.index.month).mean()
    print(f"wrote {path} (INVENTED data)")
    print(f"annual mean dry bulb {data['temp_air'].mean():.1f} °C; monthly means "
          + " ".join(f"{v:.1f}" for v in monthly))
    return path


if __name__ == "__main__":
    main()
