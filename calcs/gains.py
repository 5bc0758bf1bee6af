"""Internal heat gains, heat transfer coefficients and a simple peak cooling load.

Hourly series carry a naive :class:`pandas.DatetimeIndex` in local standard
time, each hour labelled by its start (the 00:00 row is 00:00–01:00).

Every default a function may fall back on is a module constant holding its
value, unit and source (:class:`Default`, :class:`DailyProfiles`), collected
in :data:`GAINS_DEFAULTS`, so the report can list each assumption it used.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from calcs.errors import ProjectError


# --------------------------------------------------------------------------
# defaults with their sources
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Default:
    """A default input value with its unit and where it comes from."""

    value: float
    unit: str
    source: str


@dataclass(frozen=True)
class DailyProfiles:
    """A pair of 24-value daily profiles (hour-start 00:00 … 23:00) [-]."""

    weekday: tuple[float, ...]
    weekend: tuple[float, ...]
    source: str


@dataclass(frozen=True)
class PersonGain:
    """Heat given off by one person [W]."""

    sensible: float
    latent: float
    description: str
    source: str


_ASHRAE_TABLE = (
    "ASHRAE Handbook—Fundamentals (SI) 2009 and 2013, ch.18 Table 1, adjusted "
    "(mixed male/female) sensible and latent values, room air at 24 °C"
)

#: Heat gain per person by activity (our own keys).
PEOPLE_GAINS: dict[str, PersonGain] = {
    "seated_very_light": PersonGain(
        70.0, 45.0, "Seated, very light work (offices)", _ASHRAE_TABLE
    ),
    "office_moderately_active": PersonGain(
        75.0, 55.0, "Moderately active office work", _ASHRAE_TABLE
    ),
    "standing_light_or_walking": PersonGain(
        75.0, 55.0, "Standing, light work; walking", _ASHRAE_TABLE
    ),
    "seated_theatre_night": PersonGain(70.0, 35.0, "Seated at theatre, night", _ASHRAE_TABLE),
}

#: Room temperatures between which the people-gain split is adjusted [°C].
PEOPLE_TABLE_TEMPERATURE = 24.0
PEOPLE_WARM_TEMPERATURE = 27.0
#: Share by which sensible heat falls (and latent rises) at 27 °C [-].
PEOPLE_WARM_SENSIBLE_DROP = Default(
    0.20,
    "-",
    "ASHRAE Handbook—Fundamentals ch.18 Table 1 note: at 27 °C sensible heat "
    "falls by about 20 % and latent rises accordingly [MEM]; linear between "
    "24 and 27 °C: common practice, no source",
)

DEFAULT_ACTIVITY = "seated_very_light"
DEFAULT_PEOPLE_DENSITY = Default(
    10.0,
    "m² per person",
    "UK office design occupancy density, 10 m² per person [MEM]",
)
DEFAULT_LIGHTING = Default(
    8.0,
    "W m⁻²",
    "LED office lighting, typical 6–10 W m⁻² (CIBSE Guide A benchmark range "
    "8–12 W m⁻², LED lower) [MEM]",
)
DEFAULT_EQUIPMENT = Default(
    15.0,
    "W m⁻²",
    "UK National Calculation Methodology activity data, open-plan office "
    "equipment gain 15 W m⁻² [DOC: NCM table excerpt]",
)
DEFAULT_COOLING_SETPOINT = Default(
    24.0,
    "°C",
    "UK National Calculation Methodology open-plan office cooling set-point "
    "24 °C [DOC: NCM table excerpt]",
)
AIR_DENSITY = Default(
    1.2,
    "kg m⁻³",
    "dry air near 20 °C and 101.325 kPa (1.20 kg m⁻³) [MEM]",
)
AIR_SPECIFIC_HEAT = Default(
    1005.0,
    "J kg⁻¹ K⁻¹",
    "dry air near 20 °C, specific heat at constant pressure 1005 J kg⁻¹ K⁻¹ [MEM]",
)

_NO_SOURCE = "common practice, no source"
# Hour-start 00:00 … 23:00.
OFFICE_OCCUPANCY = DailyProfiles(
    weekday=(0, 0, 0, 0, 0, 0, 0, 0.1, 0.5, 1, 1, 1, 0.8, 1, 1, 1, 1, 0.5, 0.1, 0, 0, 0, 0, 0),
    weekend=(0.0,) * 24,
    source=_NO_SOURCE + " (office open 07:00–19:00 weekdays, lunch dip at 12:00)",
)
OFFICE_LIGHTING_USE = DailyProfiles(
    weekday=(
        0.05, 0.05, 0.05, 0.05, 0.05, 0.05, 0.05, 0.3, 0.8, 1, 1, 1,
        1, 1, 1, 1, 1, 0.8, 0.3, 0.05, 0.05, 0.05, 0.05, 0.05,
    ),
    weekend=(0.05,) * 24,
    source=_NO_SOURCE + " (lights follow occupancy, 5 % left on out of hours)",
)
OFFICE_EQUIPMENT_USE = DailyProfiles(
    weekday=(
        0.2, 0.2, 0.2, 0.2, 0.2, 0.2, 0.2, 0.4, 0.8, 1, 1, 1,
        1, 1, 1, 1, 1, 0.8, 0.4, 0.2, 0.2, 0.2, 0.2, 0.2,
    ),
    weekend=(0.2,) * 24,
    source=_NO_SOURCE + " (small power follows occupancy, 20 % standby base load)",
)

#: Every default this module may use, by name, for the report.
GAINS_DEFAULTS: dict[str, Default | DailyProfiles] = {
    "activity_sensible_drop_at_27C": PEOPLE_WARM_SENSIBLE_DROP,
    "people_density": DEFAULT_PEOPLE_DENSITY,
    "lighting": DEFAULT_LIGHTING,
    "equipment": DEFAULT_EQUIPMENT,
    "cooling_setpoint": DEFAULT_COOLING_SETPOINT,
    "air_density": AIR_DENSITY,
    "air_specific_heat": AIR_SPECIFIC_HEAT,
    "office_occupancy": OFFICE_OCCUPANCY,
    "office_lighting_use": OFFICE_LIGHTING_USE,
    "office_equipment_use": OFFICE_EQUIPMENT_USE,
}


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------
def _positive(name: str, value, unit: str, allow_zero: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        msg = f"{name} must be a number [{unit}], got {value!r}"
        raise ProjectError(msg) from None
    ok = np.isfinite(v) and (v >= 0 if allow_zero else v > 0)
    if not ok:
        rel = ">= 0" if allow_zero else "> 0"
        msg = f"{name} must be {rel} {unit}, got {value}"
        raise ProjectError(msg)
    return v


def _nonneg_array(name: str, value, unit: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if np.any(~np.isfinite(arr) | (arr < 0)):
        msg = f"{name} must be finite and >= 0 {unit}, got {value!r}"
        raise ProjectError(msg)
    return arr


def _wrap(values, like, name: str):
    if isinstance(like, pd.Series):
        return pd.Series(values, index=like.index, name=name)
    if np.ndim(values) == 0:
        return float(values)
    return values


def _profile(name: str, values) -> np.ndarray:
    arr = np.asarray(values, dtype=float).ravel()
    if arr.shape != (24,):
        msg = f"{name} must have 24 hourly values (00:00 to 23:00), got {arr.size}"
        raise ProjectError(msg)
    bad = ~np.isfinite(arr) | (arr < 0) | (arr > 1)
    if bad.any():
        hours = np.flatnonzero(bad).tolist()
        msg = f"{name} values must lie in [0, 1]; hour(s) {hours} give {arr[bad].tolist()}"
        raise ProjectError(msg)
    return arr


def _check_index(index) -> pd.DatetimeIndex:
    if not isinstance(index, pd.DatetimeIndex):
        msg = f"index must be a pandas DatetimeIndex, got {type(index).__name__}"
        raise ProjectError(msg)
    return index


def _fraction_series(name: str, value, index: pd.DatetimeIndex) -> np.ndarray:
    if isinstance(value, pd.Series):
        if not value.index.equals(index):
            msg = f"{name} is a Series whose index differs from index; align it first"
            raise ProjectError(msg)
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        arr = np.full(len(index), float(arr))
    if arr.shape != (len(index),):
        msg = f"{name} must have {len(index)} values (one per hour), got shape {arr.shape}"
        raise ProjectError(msg)
    if np.any(~np.isfinite(arr) | (arr < 0) | (arr > 1)):
        msg = f"{name} fractions must lie in [0, 1]"
        raise ProjectError(msg)
    return arr


# --------------------------------------------------------------------------
# people, schedules, internal gains
# --------------------------------------------------------------------------
def people_gain(activity: str, room_temperature: float | None = None) -> PersonGain:
    """Sensible and latent heat from one person.

    Parameters
    ----------
    activity : str
        A key of :data:`PEOPLE_GAINS`.
    room_temperature : float, optional
        Room air temperature [°C]. None uses the table values (24 °C).

    Returns
    -------
    PersonGain
        ``sensible`` and ``latent`` [W] per person.

    Notes
    -----
    The table holds values for a room at 24 °C. With a room temperature t
    the sensible share is reduced by k = 0.20·clip((t − 24)/3, 0, 1) and the
    latent share raised by the same watts, keeping the total:
    q_s = (1 − k)·q_s,24 and q_l = q_l,24 + k·q_s,24. The 20 % at 27 °C is
    the table's note [MEM]; the straight line between is common practice, no
    source. Outside 24–27 °C the nearer end value is used and a warning says so.

    References
    ----------
    ASHRAE Handbook—Fundamentals (SI) 2009/2013, ch.18 Table 1.
    """
    if activity not in PEOPLE_GAINS:
        msg = f"activity must be one of {sorted(PEOPLE_GAINS)}, got {activity!r}"
        raise ProjectError(msg)
    base = PEOPLE_GAINS[activity]
    if room_temperature is None:
        return base
    try:
        t = float(room_temperature)
    except (TypeError, ValueError):
        msg = f"room_temperature must be a number [°C], got {room_temperature!r}"
        raise ProjectError(msg) from None
    if not np.isfinite(t):
        msg = f"room_temperature must be finite [°C], got {room_temperature}"
        raise ProjectError(msg)
    lo, hi = PEOPLE_TABLE_TEMPERATURE, PEOPLE_WARM_TEMPERATURE
    if not lo <= t <= hi:
        warnings.warn(
            f"room_temperature {t} °C is outside the 24–27 °C range the people-gain "
            f"adjustment covers; using the {lo if t < lo else hi:g} °C values",
            UserWarning,
            stacklevel=2,
        )
    k = PEOPLE_WARM_SENSIBLE_DROP.value * min(max((t - lo) / (hi - lo), 0.0), 1.0)
    return PersonGain(
        sensible=(1.0 - k) * base.sensible,
        latent=base.latent + k * base.sensible,
        description=f"{base.description}, room at {t:g} °C",
        source=f"{base.source}; {PEOPLE_WARM_SENSIBLE_DROP.source}",
    )


def hourly_schedule(index, weekday_profile, weekend_profile, holidays=()) -> pd.Series:
    """Hourly fraction from a weekday and a weekend daily profile.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Hour-start timestamps (local standard time).
    weekday_profile, weekend_profile : sequence of 24 floats
        Fraction for the hours starting 00:00 … 23:00 [-], each in [0, 1].
    holidays : iterable of date-like, optional
        Days (any time of day is ignored) that follow the weekend profile.

    Returns
    -------
    pandas.Series
        Fraction [-] on ``index``, name ``fraction``.

    Notes
    -----
    Saturday and Sunday, and every day in ``holidays``, use the weekend
    profile; Monday to Friday use the weekday profile. The value for a row
    is the profile entry of the row's start hour.
    """
    index = _check_index(index)
    wd = _profile("weekday_profile", weekday_profile)
    we = _profile("weekend_profile", weekend_profile)
    if isinstance(holidays, (str, pd.Timestamp)) or not isinstance(holidays, Iterable):
        holidays = [holidays]
    try:
        hol = pd.DatetimeIndex(pd.to_datetime(list(holidays))).normalize()
    except (TypeError, ValueError) as exc:
        msg = f"holidays must be dates (e.g. '2023-12-25'), got {holidays!r}: {exc}"
        raise ProjectError(msg) from None
    if hol.tz is not None:
        hol = hol.tz_localize(None)
    days = index.normalize()
    if days.tz is not None:
        days = days.tz_localize(None)
    weekend = (index.day_of_week.to_numpy() >= 5) | days.isin(hol)
    hours = index.hour.to_numpy()
    values = np.where(weekend, we[hours], wd[hours])
    return pd.Series(values, index=index, name="fraction")


def internal_gains(
    index,
    floor_area,
    people_density=DEFAULT_PEOPLE_DENSITY.value,
    activity=DEFAULT_ACTIVITY,
    lighting=DEFAULT_LIGHTING.value,
    equipment=DEFAULT_EQUIPMENT.value,
    occupancy=None,
    lighting_use=None,
    equipment_use=None,
    holidays=(),
    room_temperature=None,
) -> pd.DataFrame:
    """Hourly internal heat gains of a zone.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Hour-start timestamps (local standard time).
    floor_area : float
        Zone floor area [m²].
    people_density : float, default 10
        Floor area per person at full occupancy [m² per person].
    activity : str, default "seated_very_light"
        Key of :data:`PEOPLE_GAINS`.
    lighting : float, default 8
        Installed lighting heat gain at full use [W m⁻²].
    equipment : float, default 15
        Equipment (small power) heat gain at full use [W m⁻²].
    occupancy, lighting_use, equipment_use : float, array_like or Series, optional
        Hourly fraction of the full value [-]. None uses
        :data:`OFFICE_OCCUPANCY`, :data:`OFFICE_LIGHTING_USE` and
        :data:`OFFICE_EQUIPMENT_USE` through :func:`hourly_schedule`.
    holidays : iterable of date-like, optional
        Days that follow the weekend profile (default schedules only).
    room_temperature : float, optional
        Room air temperature for the people sensible/latent split [°C]
        (see :func:`people_gain`).

    Returns
    -------
    pandas.DataFrame
        On ``index``: ``people_sensible``, ``people_latent``, ``lighting``,
        ``equipment``, ``total_sensible`` [W]. ``attrs["assumptions"]`` maps
        each input to the value used and its source (for the report).

    Notes
    -----
    N(t) = A_f / a_p · f_occ(t);  q_people,s = N·q_s;  q_people,l = N·q_l;
    q_light = A_f·p_light·f_light(t);  q_equip = A_f·p_equip·f_equip(t);
    total_sensible = q_people,s + q_light + q_equip. All lighting and
    equipment power is taken as a sensible gain to the room air and surfaces
    (no heat extracted through luminaires).
    """
    index = _check_index(index)
    area = _positive("floor_area", floor_area, "m²")
    density = _positive("people_density", people_density, "m² per person")
    p_light = _positive("lighting", lighting, "W m⁻²", allow_zero=True)
    p_equip = _positive("equipment", equipment, "W m⁻²", allow_zero=True)
    person = people_gain(activity, room_temperature)

    assumptions: dict[str, dict] = {}

    def note(name, value, default: Default):
        src = default.source if value == default.value else "project input"
        assumptions[name] = {"value": value, "unit": default.unit, "source": src}

    note("people_density", density, DEFAULT_PEOPLE_DENSITY)
    note("lighting", p_light, DEFAULT_LIGHTING)
    note("equipment", p_equip, DEFAULT_EQUIPMENT)
    assumptions["people_gain"] = {
        "value": (person.sensible, person.latent),
        "unit": "W per person (sensible, latent)",
        "source": f"{person.description}: {person.source}",
    }

    fractions = {}
    for name, given, default in (
        ("occupancy", occupancy, OFFICE_OCCUPANCY),
        ("lighting_use", lighting_use, OFFICE_LIGHTING_USE),
        ("equipment_use", equipment_use, OFFICE_EQUIPMENT_USE),
    ):
        if given is None:
            fractions[name] = hourly_schedule(
                index, default.weekday, default.weekend, holidays
            ).to_numpy()
            assumptions[name] = {"value": "default office profile", "unit": "-",
                                 "source": default.source}
        else:
            fractions[name] = _fraction_series(name, given, index)
            assumptions[name] = {"value": "project schedule", "unit": "-",
                                 "source": "project input"}

    people = area / density * fractions["occupancy"]
    out = pd.DataFrame(
        {
            "people_sensible": people * person.sensible,
            "people_latent": people * person.latent,
            "lighting": area * p_light * fractions["lighting_use"],
            "equipment": area * p_equip * fractions["equipment_use"],
        },
        index=index,
    )
    out["total_sensible"] = out["people_sensible"] + out["lighting"] + out["equipment"]
    out.attrs["assumptions"] = assumptions
    return out


# --------------------------------------------------------------------------
# heat transfer coefficients
# --------------------------------------------------------------------------
def fabric_htc(areas_and_u_values) -> float:
    """Transmission heat transfer coefficient of the fabric, Σ U·A.

    Parameters
    ----------
    areas_and_u_values : mapping or iterable
        Either ``{name: (area, u_value)}`` or an iterable of
        ``(area, u_value)`` pairs; area [m²], U-value [W m⁻² K⁻¹] (0–20).

    Returns
    -------
    float
        H_tr [W K⁻¹].

    Notes
    -----
    H_tr = Σ_k U_k·A_k. Thermal bridges, if wanted, enter as extra
    (length·ψ, 1) pairs; no ground or adjacent-space b-factors are applied.

    References
    ----------
    ISO 13790:2008 §8.3 (H_tr,op and H_tr,w as Σ U·A) [MEM].
    """
    if isinstance(areas_and_u_values, Mapping):
        items = list(areas_and_u_values.items())
    elif isinstance(areas_and_u_values, Iterable) and not isinstance(areas_and_u_values, str):
        items = list(enumerate(areas_and_u_values))
    else:
        msg = (
            "areas_and_u_values must be a mapping {name: (area, U)} or a list of "
            f"(area, U) pairs, got {areas_and_u_values!r}"
        )
        raise ProjectError(msg)
    total = 0.0
    for name, pair in items:
        try:
            area, u = (float(x) for x in pair)
        except (TypeError, ValueError):
            msg = f"fabric element {name!r} must be an (area, U) pair, got {pair!r}"
            raise ProjectError(msg) from None
        if not (np.isfinite(area) and area >= 0):
            msg = f"fabric element {name!r}: area must be >= 0 m², got {area}"
            raise ProjectError(msg)
        if not (np.isfinite(u) and 0 <= u <= 20):
            msg = f"fabric element {name!r}: U-value must be 0–20 W m⁻² K⁻¹, got {u}"
            raise ProjectError(msg)
        total += area * u
    return total


def infiltration_htc(volume, ach, rho=AIR_DENSITY.value, cp=AIR_SPECIFIC_HEAT.value):
    """Heat transfer coefficient of air leakage given in air changes per hour.

    Parameters
    ----------
    volume : float, array_like or Series
        Air volume of the zone [m³].
    ach : float, array_like or Series
        Air change rate [h⁻¹].
    rho : float, default 1.2
        Air density [kg m⁻³].
    cp : float, default 1005
        Specific heat of air [J kg⁻¹ K⁻¹].

    Returns
    -------
    float, numpy.ndarray or Series
        H_inf [W K⁻¹]; keeps a Series' index (of ``ach`` first, then ``volume``).

    Notes
    -----
    H = ρ·c_p·V·n/3600. The defaults give ρ·c_p = 1206 J m⁻³ K⁻¹, the
    properties of air near 20 °C; ISO 13790:2008 §9.3 rounds this to
    1200 J m⁻³ K⁻¹ [MEM] (0.5 % lower). We keep the physical values because
    the same ρ and c_p serve the airflow and ventilation calculations; pass
    ``rho=1.2, cp=1000`` to reproduce the ISO 13790 figure.
    """
    rho = _positive("rho", rho, "kg m⁻³")
    cp = _positive("cp", cp, "J kg⁻¹ K⁻¹")
    v = _nonneg_array("volume", volume, "m³")
    n = _nonneg_array("ach", ach, "h⁻¹")
    try:
        h = rho * cp * v * n / 3600.0
    except ValueError:
        msg = f"volume {v.shape} and ach {n.shape} must have matching lengths"
        raise ProjectError(msg) from None
    return _wrap(h, ach if isinstance(ach, pd.Series) else volume, "infiltration_htc")


def ventilation_htc(flow, rho=AIR_DENSITY.value, cp=AIR_SPECIFIC_HEAT.value):
    """Heat transfer coefficient of an outdoor-air flow.

    Parameters
    ----------
    flow : float, array_like or Series
        Outdoor air volume flow [m³ s⁻¹].
    rho : float, default 1.2
        Air density [kg m⁻³].
    cp : float, default 1005
        Specific heat of air [J kg⁻¹ K⁻¹].

    Returns
    -------
    float, numpy.ndarray or Series
        H_ve = ρ·c_p·q [W K⁻¹]; keeps a Series' index.

    Notes
    -----
    Same air properties as :func:`infiltration_htc` (see there for the
    ISO 13790 1200 J m⁻³ K⁻¹ alternative).
    """
    rho = _positive("rho", rho, "kg m⁻³")
    cp = _positive("cp", cp, "J kg⁻¹ K⁻¹")
    q = _nonneg_array("flow", flow, "m³ s⁻¹")
    return _wrap(rho * cp * q, flow, "ventilation_htc")


# --------------------------------------------------------------------------
# simple peak cooling load
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class PeakCoolingLoad:
    """Result of :func:`peak_sensible_cooling_load` (all [W] but ``time``)."""

    peak: float
    time: object
    internal: float
    solar: float
    transmission: float
    air: float
    hourly: pd.Series


def peak_sensible_cooling_load(
    internal_sensible,
    solar_gain,
    temp_air,
    fabric_htc,
    air_htc,
    indoor_setpoint=DEFAULT_COOLING_SETPOINT.value,
    hours=None,
) -> PeakCoolingLoad:
    """A simple, non-dynamic design figure for the sensible cooling load.

    Parameters
    ----------
    internal_sensible : array_like or Series
        Sensible internal gains per hour [W] (e.g. ``total_sensible`` of
        :func:`internal_gains`).
    solar_gain : array_like or Series
        Solar gain through glazing per hour [W].
    temp_air : array_like or Series
        Outdoor dry-bulb temperature per hour [°C].
    fabric_htc : float
        Σ U·A of walls, roof, floor and windows [W K⁻¹].
    air_htc : float
        Infiltration plus ventilation heat transfer coefficient [W K⁻¹].
    indoor_setpoint : float, default 24
        Room air temperature held by cooling [°C].
    hours : array_like of bool, optional
        Hours over which to search for the peak (e.g. occupied hours).
        None: all hours.

    Returns
    -------
    PeakCoolingLoad
        ``peak`` load and its ``time`` (index label of the hour), the
        ``internal``, ``solar``, ``transmission`` and ``air`` components at
        that hour [W], and the ``hourly`` load over all hours [W].

    Notes
    -----
    Q(t) = Φ_int(t) + Φ_sol(t) + (H_tr + H_air)·(θ_e(t) − θ_set), and the
    figure is max Q(t) over the chosen hours. Conduction is steady-state and
    instantaneous: no thermal mass, no time lag or damping of solar and
    internal gains, no sol-air temperature on opaque surfaces and no latent
    load. It is a quick order-of-magnitude design figure for sizing a
    comparison AC system, not a cooling-load calculation. Hours with
    θ_e < θ_set reduce the load (negative conduction is kept).

    References
    ----------
    Steady-state heat balance; common practice, no source.
    """
    like = next(
        (x for x in (internal_sensible, solar_gain, temp_air) if isinstance(x, pd.Series)),
        None,
    )
    arrays = {}
    for name, value in (
        ("internal_sensible", internal_sensible),
        ("solar_gain", solar_gain),
        ("temp_air", temp_air),
    ):
        arr = np.asarray(value, dtype=float)
        if arr.ndim != 1 or not np.isfinite(arr).all():
            msg = f"{name} must be a one-dimensional hourly series of finite values"
            raise ProjectError(msg)
        if isinstance(value, pd.Series) and like is not None and not value.index.equals(like.index):
            msg = f"{name} is a Series whose index differs from the others; align it first"
            raise ProjectError(msg)
        arrays[name] = arr
    n = {a.size for a in arrays.values()}
    if len(n) != 1:
        msg = f"internal_sensible, solar_gain and temp_air lengths differ: {sorted(n)}"
        raise ProjectError(msg)
    h_tr = _positive("fabric_htc", fabric_htc, "W K⁻¹", allow_zero=True)
    h_air = _positive("air_htc", air_htc, "W K⁻¹", allow_zero=True)
    try:
        setpoint = float(indoor_setpoint)
    except (TypeError, ValueError):
        setpoint = np.nan
    if not (np.isfinite(setpoint) and 10 <= setpoint <= 35):
        msg = f"indoor_setpoint must be 10–35 °C, got {indoor_setpoint!r}"
        raise ProjectError(msg)
    size = n.pop()
    if hours is None:
        mask = np.ones(size, dtype=bool)
    else:
        mask = np.asarray(hours)
        if mask.dtype != bool or mask.shape != (size,):
            msg = f"hours must be {size} booleans (one per hour), got {mask.dtype} {mask.shape}"
            raise ProjectError(msg)
        if not mask.any():
            msg = "hours selects no hour; the peak cooling load is undefined"
            raise ProjectError(msg)
    dt = arrays["temp_air"] - setpoint
    transmission = h_tr * dt
    air = h_air * dt
    load = arrays["internal_sensible"] + arrays["solar_gain"] + transmission + air
    labels = like.index if like is not None else pd.RangeIndex(size)
    i = int(np.flatnonzero(mask)[np.argmax(load[mask])])
    return PeakCoolingLoad(
        peak=float(load[i]),
        time=labels[i],
        internal=float(arrays["internal_sensible"][i]),
        solar=float(arrays["solar_gain"][i]),
        transmission=float(transmission[i]),
        air=float(air[i]),
        hourly=pd.Series(load, index=labels, name="sensible_cooling_load"),
    )


#: Out-of-hours fractions used when a zone gives no profile of its own.
OUT_OF_HOURS_LIGHTING = Default(0.05, "-", _NO_SOURCE + " (5 % of lighting left on out of hours)")
OUT_OF_HOURS_EQUIPMENT = Default(0.2, "-", _NO_SOURCE + " (20 % standby base load of small power)")


def calendar_fractions(occupied, profile=None, out_of_hours=0.0) -> pd.Series:
    """Hourly use fractions that follow a project's occupancy calendar.

    Parameters
    ----------
    occupied : pandas.Series of bool
        Occupied hours on an hourly index (see :func:`calcs.climate.occupied_hours`).
    profile : sequence of 24 floats, optional
        Fractions by hour of day (hour starting 00:00 … 23:00) on days that have
        occupied hours [-]. None: 1 in occupied hours.
    out_of_hours : float
        Fraction in the hours the profile does not cover: every hour of an
        unoccupied day, and (without a profile) the unoccupied hours of an
        occupied day [-].

    Returns
    -------
    pandas.Series
        Fraction 0…1 on the index of ``occupied``, named "fraction".

    Notes
    -----
    f(t) = profile[hour(t)] on occupied days, out_of_hours otherwise; without a
    profile f(t) = 1 if occupied(t) else out_of_hours. A profile value lower
    than ``out_of_hours`` is kept as given (the profile rules on occupied days).
    """
    if not isinstance(occupied, pd.Series) or not isinstance(occupied.index, pd.DatetimeIndex):
        msg = f"occupied must be a pandas Series on an hourly DatetimeIndex, got {type(occupied).__name__}"
        raise ProjectError(msg)
    base = float(out_of_hours)
    if not 0.0 <= base <= 1.0:
        msg = f"out_of_hours must be between 0 and 1, got {out_of_hours!r}"
        raise ProjectError(msg)
    flags = occupied.to_numpy(dtype=bool)
    if profile is None or len(profile) == 0:
        values = np.where(flags, 1.0, base)
    else:
        shape = _profile("profile", profile)
        day = occupied.index.normalize()
        occupied_day = pd.Series(flags, index=occupied.index).groupby(day).transform("any").to_numpy()
        values = np.where(occupied_day, shape[occupied.index.hour], base)
    return pd.Series(values, index=occupied.index, name="fraction")
