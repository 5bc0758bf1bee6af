"""Mixed-mode operation: window control for free running, and the changeover to air-conditioning.

Pure, vectorised functions used by the comfort stage:

* :func:`opening_flow_coefficients` and :func:`full_opening_flow` — the airflow through a zone's
  openings fully open, hour by hour, as a function of the indoor temperature (wind part and
  stack part of the zone's published flow method, see :func:`calcs.airflow.arrangement_flow`);
* :func:`window_opening_fraction` — how far the windows open: fully when that cools the room
  and the outdoor air is acceptable, partly to avoid overcooling, closed otherwise;
* :func:`criterion_limits` — lower and upper limits of one comfort criterion hour by hour;
* :func:`changeover_modes` — natural ventilation or air-conditioning for every occupied hour,
  with a dead band so the mode does not flap from hour to hour.

The control rules are design assumptions of ours, stated in each docstring; they are not
taken from a standard.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from . import airflow, comfort
from .errors import ProjectError

KELVIN = 273.15
_REF_DELTA_T = 1.0  # K, reference difference for the stack coefficient
_REF_TEMP_IN = 21.0  # °C


@dataclass(frozen=True)
class FlowCoefficients:
    """Unit-area flow coefficients of a batch of zones (n zones).

    ``wind`` (T, n): flow per m² of free area from wind alone [m³ s⁻¹ m⁻²];
    ``stack`` (n,): flow per m² at a 1 K difference and mean absolute temperature
    ``ref_temp`` [m³ s⁻¹ m⁻² K⁻⁰·⁵]; the stack flow scales as √(ΔT/T̄).
    """

    wind: np.ndarray
    stack: np.ndarray
    ref_temp: float


def opening_flow_coefficients(arrangements, *, wind_speed_met, wind_speed_building, opening_height,
                              stack_height, cp_windward, cp_leeward, discharge_coefficient) -> FlowCoefficients:
    """Split each zone's flow method into a wind part and a stack part.

    Parameters
    ----------
    arrangements : sequence of str
        Ventilation arrangement of each of n zones.
    wind_speed_met : array_like (T,)
        Weather-station wind speed at 10 m [m s⁻¹].
    wind_speed_building : array_like (T, n)
        Wind speed at each zone's openings [m s⁻¹].
    opening_height, stack_height, discharge_coefficient : array_like (n,)
        Per zone, as in :func:`calcs.airflow.arrangement_flow` [m], [m], [-].
    cp_windward, cp_leeward : float
        Wind pressure coefficients [-].

    Returns
    -------
    FlowCoefficients

    Notes
    -----
    Every arrangement's method is the larger of a wind-driven flow (no temperature dependence)
    and a stack-driven flow ∝ √(ΔT/T̄) (BS 5925:1991 Fig. 8; Warren & Parkins 1984), or stack
    alone. So q(ΔT) = max(q_wind, q_stack,1K·√(ΔT·T̄_ref/T̄)) with the two parts evaluated once
    by :func:`calcs.airflow.arrangement_flow` itself (wind: ΔT = 0; stack: wind 0, ΔT = 1 K).
    """
    arrangements = list(arrangements)
    n = len(arrangements)
    u_met = np.asarray(wind_speed_met, dtype=float)
    u_bld = np.broadcast_to(np.asarray(wind_speed_building, dtype=float), (u_met.size, n))
    heights = np.broadcast_to(np.asarray(opening_height, dtype=float), (n,))
    stacks = np.broadcast_to(np.asarray(stack_height, dtype=float), (n,))
    cds = np.broadcast_to(np.asarray(discharge_coefficient, dtype=float), (n,))
    wind = np.empty((u_met.size, n))
    stack = np.empty(n)
    for z, arrangement in enumerate(arrangements):
        common = dict(opening_height=heights[z], stack_height=stacks[z], cp_windward=cp_windward,
                      cp_leeward=cp_leeward, discharge_coefficient=cds[z])
        wind[:, z] = airflow.arrangement_flow(arrangement, 1.0, wind_speed_met=u_met, wind_speed_building=u_bld[:, z],
                                              temp_in=_REF_TEMP_IN, temp_air=_REF_TEMP_IN, **common)
        stack[z] = airflow.arrangement_flow(arrangement, 1.0, wind_speed_met=0.0, wind_speed_building=0.0,
                                            temp_in=_REF_TEMP_IN, temp_air=_REF_TEMP_IN - _REF_DELTA_T, **common)
    ref_temp = _REF_TEMP_IN - _REF_DELTA_T / 2 + KELVIN
    return FlowCoefficients(wind=wind, stack=stack, ref_temp=ref_temp)


def full_opening_flow(coefficients: FlowCoefficients, hour: int, free_area, temp_in, temp_air) -> np.ndarray:
    """Flow through each zone's openings fully open in one hour [m³ s⁻¹].

    Parameters
    ----------
    coefficients : FlowCoefficients
        From :func:`opening_flow_coefficients`.
    hour : int
        Hour index into the wind coefficients.
    free_area : array_like (n,)
        Free area of the openings that may open [m²].
    temp_in : array_like (n,)
        Indoor air temperature [°C].
    temp_air : float
        Outdoor air temperature [°C].
    """
    unit = FlowCoefficients(wind=coefficients.wind[hour], stack=coefficients.stack, ref_temp=coefficients.ref_temp)
    return _unit_flow(unit, free_area, temp_in, temp_air)


def window_opening_fraction(temp_in, temp_air, allowed, *, low_setpoint, control_band=2.0):
    """How far the windows open in an hour, 0 (closed) to 1 (fully open).

    Parameters
    ----------
    temp_in : array_like
        Indoor air temperature [°C].
    temp_air : array_like
        Outdoor air temperature [°C].
    allowed : array_like of bool
        Outdoor air acceptable and opening permitted in this hour (dew point, wind, rain limits;
        occupied or night-cooling hours).
    low_setpoint : float or array_like
        Indoor temperature below which windows close to avoid overcooling [°C].
    control_band : float
        Proportional band: fully open at ``low_setpoint + control_band`` [K].

    Returns
    -------
    numpy.ndarray
        f = clip((θ_in − θ_low)/band, 0, 1) where allowed and the outdoor air is cooler than the
        room; 0 otherwise.

    Notes
    -----
    A proportional rule (design assumption of ours, no published source): windows open when
    opening cools the room, throttle as the room approaches ``low_setpoint`` and close below it.
    Being continuous in θ_in, it lets the hourly heat balance and the airflow be solved
    consistently by fixed-point iteration.
    """
    if control_band <= 0:
        msg = f"control_band must be > 0 K, got {control_band!r}"
        raise ProjectError(msg)
    temp_in = np.asarray(temp_in, dtype=float)
    fraction = np.clip((temp_in - np.asarray(low_setpoint, dtype=float)) / control_band, 0.0, 1.0)
    cools = np.asarray(temp_air, dtype=float) < temp_in
    return np.where(np.asarray(allowed, dtype=bool) & cools, fraction, 0.0)


@dataclass(frozen=True)
class WindowVentilation:
    """Ventilation heat transfer of zones with controlled windows, as a function of the indoor air temperature.

    In an hour where the windows may be used (``open_ok``), the outdoor-air flow is

        q = q_base + max(q_floor, f_day·Q_full(A_free) + f_night·Q_full(A_secure))

    with f from :func:`window_opening_fraction` (day windows below ``low_day``, secure night
    openings below ``low_night``) and Q_full from :func:`full_opening_flow`; in other hours it
    is ``sealed``. H_ve = ρ_a·c_a·q (ISO 13790:2008 §9.3.1, 1200 J m⁻³ K⁻¹).

    An instance is the ``h_ve`` callable of :func:`calcs.thermal.simulate` (``law(hour, temp_in)``);
    the compiled loop of :mod:`calcs.kernels` evaluates the same law from
    :meth:`kernel_arguments`. Arrays: (T,) ``temp_out``; (T, n) or broadcastable ``day``,
    ``night``, ``floor``, ``open_ok``, ``sealed``; (n,) areas, ``base``, set-points.
    """

    coefficients: FlowCoefficients
    temp_out: np.ndarray
    free_area: np.ndarray
    secure_area: np.ndarray
    day: np.ndarray
    night: np.ndarray
    low_day: np.ndarray
    low_night: np.ndarray
    band: float
    base: np.ndarray
    floor: np.ndarray
    open_ok: np.ndarray
    sealed: np.ndarray

    def window_flow(self, hour, temp_in) -> np.ndarray:
        """Flow through the opened windows and vents [m³ s⁻¹] in hour(s) ``hour`` (int or index array)."""
        t_out = self.temp_out[hour]
        if np.ndim(t_out):
            t_out = t_out[:, None]
        c = self.coefficients
        f_day = window_opening_fraction(temp_in, t_out, self.day[hour], low_setpoint=self.low_day,
                                        control_band=self.band)
        f_night = window_opening_fraction(temp_in, t_out, self.night[hour], low_setpoint=self.low_night,
                                          control_band=self.band)
        unit = FlowCoefficients(wind=c.wind[hour], stack=c.stack, ref_temp=c.ref_temp)
        return (f_day * _unit_flow(unit, self.free_area, temp_in, t_out)
                + f_night * _unit_flow(unit, self.secure_area, temp_in, t_out))

    def flow(self, hour, temp_in) -> np.ndarray:
        """Total outdoor-air flow [m³ s⁻¹] at indoor air temperature ``temp_in``."""
        windows = self.window_flow(hour, temp_in)
        return np.where(self.open_ok[hour], self.base + np.maximum(self.floor[hour], windows), self.sealed[hour])

    def __call__(self, hour: int, temp_in: np.ndarray) -> np.ndarray:
        from . import thermal

        return thermal.ventilation_heat_transfer(self.flow(hour, temp_in))

    def take_hours(self, idx) -> "WindowVentilation":
        """The same law for the hours ``idx`` (warm-up days)."""
        c = self.coefficients
        return WindowVentilation(
            FlowCoefficients(wind=c.wind[idx], stack=c.stack, ref_temp=c.ref_temp), self.temp_out[idx],
            self.free_area, self.secure_area, self.day[idx], self.night[idx], self.low_day, self.low_night,
            self.band, self.base, self.floor[idx], self.open_ok[idx], self.sealed[idx])

    def kernel_arguments(self, shape) -> tuple:
        """Arguments of :func:`calcs.kernels.march_windows` for a (T, n) run."""
        n = shape[1]
        c = self.coefficients

        def zone(x):
            return np.broadcast_to(np.asarray(x, dtype=float), (n,))

        def rows(x, dtype=float):
            return np.broadcast_to(np.asarray(x, dtype=dtype), shape)

        return (np.asarray(self.temp_out, dtype=float), rows(c.wind), zone(c.stack), float(c.ref_temp),
                zone(self.free_area), zone(self.secure_area), rows(self.day, bool), rows(self.night, bool),
                zone(self.low_day), zone(self.low_night), float(self.band), zone(self.base), rows(self.floor),
                rows(self.open_ok, bool), rows(self.sealed))


def _unit_flow(coefficients: FlowCoefficients, free_area, temp_in, temp_air) -> np.ndarray:
    """:func:`full_opening_flow` for wind coefficients already taken at the hour(s)."""
    temp_in = np.asarray(temp_in, dtype=float)
    delta = np.abs(temp_in - temp_air)
    mean_abs = (temp_in + temp_air) / 2 + KELVIN
    stack = coefficients.stack * np.sqrt(delta / _REF_DELTA_T * coefficients.ref_temp / mean_abs)
    return np.asarray(free_area, dtype=float) * np.maximum(coefficients.wind, stack)


@dataclass(frozen=True)
class Limits:
    """Hourly limits of one comfort criterion: the value judged, lower and upper limit, validity."""

    value: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    in_range: np.ndarray
    judged: str


def criterion_limits(criterion, *, temp_op, temp_air, running_mean, prevailing_mean, air_speed=0.1,
                     fan_air_speed=None, fixed=(20.0, 24.0), band=(16.0, 26.0)) -> Limits:
    """Lower and upper limits of one of the eight comfort criteria, hour by hour.

    Parameters
    ----------
    criterion : str
        One of :data:`calcs.comfort.CRITERIA`.
    temp_op, temp_air, running_mean, prevailing_mean : array_like
        Operative, outdoor, EN 16798-1 running mean and ASHRAE 55 prevailing mean temperatures [°C].
    air_speed, fan_air_speed : float or array_like
        Indoor air speed without and with ceiling fans [m s⁻¹].
    fixed, band : tuple of float
        Fixed indoor band and outdoor band [°C].

    Returns
    -------
    Limits
        ``value`` is the temperature the criterion judges (operative, or outdoor dry bulb for
        ``outdoor_band``); limits as in :mod:`calcs.comfort` (ASHRAE 55-2020 §5.4, EN 16798-1:2019
        Annex B.2); ``in_range`` False where the adaptive model does not apply. For EN 16798-1,
        where the running mean is below the range of the lower limit (θrm ≤ 15 °C [from memory])
        but within that of the upper limit, the lower limit is the fixed indoor lower limit
        ``fixed[0]`` — the heating set-point of a mixed-mode building (design assumption, no
        published source); ``in_range`` then follows the upper limit's validity.
    """
    temp_op = np.asarray(temp_op, dtype=float)
    n = temp_op.shape
    if criterion == "outdoor_band":
        value = np.broadcast_to(np.asarray(temp_air, dtype=float), n)
        return Limits(value, np.full(n, band[0]), np.full(n, band[1]), np.ones(n, bool), "outdoor dry bulb")
    if criterion == "fixed_indoor":
        return Limits(temp_op, np.full(n, fixed[0]), np.full(n, fixed[1]), np.ones(n, bool), "operative")
    if criterion.startswith("ashrae55"):
        speed = fan_air_speed if (criterion.endswith("_fans") and fan_air_speed is not None) else air_speed
        level = "90" if criterion == "ashrae55_90" else "80"
        lower, upper, in_range = comfort.ashrae55_limits(temp_op, prevailing_mean, speed, level)
        return Limits(temp_op, np.broadcast_to(lower, n), np.broadcast_to(upper, n), np.broadcast_to(in_range, n),
                      "operative")
    if criterion.startswith("en16798_cat"):
        lower, upper, lower_valid, upper_valid = comfort.en16798_limits(temp_op, running_mean, air_speed,
                                                                        criterion[-1])
        lower = np.where(lower_valid, lower, fixed[0])
        return Limits(temp_op, np.broadcast_to(lower, n), np.broadcast_to(upper, n), np.broadcast_to(upper_valid, n),
                      "operative")
    msg = f"criterion must be one of {', '.join(comfort.CRITERIA)}, got {criterion!r}"
    raise ProjectError(msg)


def changeover_modes(limits: Limits, occupied, days, *, dead_band=1.0) -> np.ndarray:
    """Natural ventilation (True) or air-conditioning (False) for each occupied hour.

    Parameters
    ----------
    limits : Limits
        Hourly limits of the chosen criterion, arrays of shape (T,) or (T, n), judged on the
        free-running temperatures.
    occupied : array_like of bool, shape (T,) or (T, n)
        Occupied hours.
    days : array_like (T,)
        Day label of each hour (e.g. the date); each day starts in natural ventilation.
    dead_band : float
        Return to natural ventilation only when the value is at least this far inside both
        limits [K].

    Returns
    -------
    numpy.ndarray of bool, shape like ``limits.value``
        True = natural-ventilation mode, False = air-conditioning mode (heating or cooling).
        Unoccupied hours are False and carry no mode (mask them with ``occupied``).

    Notes
    -----
    Rule (design assumption of ours, no published source): in an occupied hour, natural
    ventilation switches to air-conditioning when the value leaves the band [lower, upper]
    or the adaptive model does not apply (it cannot then vouch for comfort); it returns to
    natural ventilation only when lower + dead_band ≤ value ≤ upper − dead_band. The mode
    starts each day in natural ventilation. The hours are judged on free-running temperatures:
    the cooler room that air-conditioning leaves behind is not fed back (the energy stage
    simulates the operating year with its set-points).
    """
    if dead_band < 0:
        msg = f"dead_band must be ≥ 0 K, got {dead_band!r}"
        raise ProjectError(msg)
    value = np.asarray(limits.value, dtype=float)
    shape = value.shape
    occ = np.broadcast_to(np.asarray(occupied, dtype=bool), shape)
    inside = (value >= limits.lower) & (value <= limits.upper) & limits.in_range
    well_inside = (value >= limits.lower + dead_band) & (value <= limits.upper - dead_band) & limits.in_range
    from . import kernels  # numba: imported only by the stages that simulate

    day = pd.factorize(np.asarray(days))[0]
    new_day = np.ones(shape[0], dtype=bool)
    new_day[1:] = day[1:] != day[:-1]

    def columns(a):  # (T,) or (T, n) as (T, n) for the compiled loop
        return np.asarray(a, dtype=bool).reshape(shape[0], -1)

    modes = np.zeros(columns(inside).shape, dtype=bool)
    kernels.changeover_march(columns(inside), columns(well_inside), columns(occ), new_day, modes)
    return modes.reshape(shape)


@dataclass(frozen=True)
class FreeRunningYear:
    """Free-running simulation of n zones with window control (arrays (T, n))."""

    result: object  # calcs.thermal.SimulationResult
    flow: np.ndarray  # total outdoor-air flow (infiltration + background + windows) [m³ s⁻¹]
    window_flow: np.ndarray  # flow through the opened windows and vents [m³ s⁻¹]


def simulate_free_running(params, *, temp_air, gains_internal, gains_solar, coefficients: FlowCoefficients,
                          free_area, secure_area, infiltration_flow, background_flow, allowed_day,
                          allowed_night, low_setpoint, night_low_setpoint, control_band=2.0,
                          temp_m_initial=None, tolerance=0.01, engine="compiled", threads=None) -> FreeRunningYear:
    """Hourly free-running temperatures with windows controlled as in :func:`window_opening_fraction`.

    Parameters
    ----------
    params : calcs.thermal.ZoneParameters
        5R1C network of n zones.
    temp_air : array_like (T,)
        Outdoor air temperature [°C].
    gains_internal, gains_solar : array_like (T, n)
        Internal and solar heat gains [W].
    coefficients : FlowCoefficients
        From :func:`opening_flow_coefficients`.
    free_area, secure_area : array_like (n,)
        Free area of all openable openings, and of those secure enough to leave open at night [m²].
    infiltration_flow : array_like (n,)
        Infiltration with windows closed [m³ s⁻¹].
    background_flow : array_like (T, n)
        Minimum fresh air delivered with windows closed (e.g. trickle vents), occupied hours [m³ s⁻¹].
    allowed_day, allowed_night : array_like of bool (T, n)
        Hours in which the windows, and at night the secure openings, may open.
    low_setpoint, night_low_setpoint : float
        Indoor air temperatures below which the windows throttle and close, day and night [°C].
    control_band : float
        Proportional band of the window control [K].
    temp_m_initial : array_like (n,), optional
        Starting mass temperature; default: the thermal model's warm-up [°C].
    tolerance : float
        Fixed-point tolerance on the indoor air temperature in each hour [K].
    engine : {"compiled", "numpy"}
        Loop of :func:`calcs.thermal.simulate` (same numbers within ``tolerance``).
    threads : int, optional
        Threads of the compiled loop, as for :func:`calcs.thermal.simulate` (speed only).

    Returns
    -------
    FreeRunningYear

    Notes
    -----
    Each hour the outdoor-air flow is q = q_inf + max(q_background, f_day·Q_full(A) + f_night·Q_full(A_secure)),
    with Q_full from :func:`full_opening_flow` at that hour's wind and indoor–outdoor temperature
    difference, and H_ve = ρ_a·c_a·q (ISO 13790, 1200 J m⁻³ K⁻¹). Because q depends on the indoor
    temperature and the indoor temperature on q, :func:`calcs.thermal.simulate` solves each hour by
    fixed-point iteration to ``tolerance`` and counts any hour that does not converge.
    """
    from . import thermal

    temp_air = np.asarray(temp_air, dtype=float)
    free_area = np.asarray(free_area, dtype=float)
    secure_area = np.asarray(secure_area, dtype=float)
    base = np.asarray(infiltration_flow, dtype=float)
    background = np.asarray(background_flow, dtype=float)
    day = np.asarray(allowed_day, dtype=bool)
    night = np.asarray(allowed_night, dtype=bool)

    t_len, n = np.shape(gains_internal)[0], params.n_zones
    law = WindowVentilation(coefficients, temp_air, free_area, secure_area, day, night,
                            np.broadcast_to(np.asarray(low_setpoint, dtype=float), (n,)),
                            np.broadcast_to(np.asarray(night_low_setpoint, dtype=float), (n,)),
                            float(control_band), base, background, np.broadcast_to(True, (t_len, n)),
                            np.broadcast_to(0.0, (t_len, n)))
    result = thermal.simulate(params, temp_air, gains_internal, gains_solar, law, temp_m_initial=temp_m_initial,
                              tolerance=tolerance, engine=engine, threads=threads)
    flow = np.asarray(result.h_ve) / thermal.AIR_HEAT_CAPACITY
    windows = result.window_flow
    if windows is None:
        windows = law.window_flow(np.arange(temp_air.size), result.temp_air_in)
    return FreeRunningYear(result=result, flow=flow, window_flow=windows)


@dataclass(frozen=True)
class OperatingYears:
    """Ideal-load simulations of the same zones: full air-conditioning and mixed mode (arrays (T, n))."""

    baseline: object  # calcs.thermal.SimulationResult, sealed and air-conditioned in occupied hours
    mixed: object  # calcs.thermal.SimulationResult, air-conditioning only in its air-conditioning hours
    mechanical_flow: np.ndarray  # outdoor air moved by fans in the mixed-mode year [m³ s⁻¹]


NO_COOLING = 1000.0  # °C: a cooling set-point no hour reaches (cooling off)


def simulate_operating_years(params, *, temp_air, gains_internal, gains_solar, coefficients: FlowCoefficients,
                             free_area, secure_area, infiltration_flow, fresh_air_flow, occupied, nv_mode,
                             allowed_day, allowed_night, heating_setpoint, cooling_setpoint, heat_recovery=0.0,
                             low_setpoint=21.0, night_low_setpoint=19.0, control_band=2.0,
                             max_heating=np.inf, max_cooling=np.inf, tolerance=0.01,
                             engine="compiled", threads=None) -> OperatingYears:
    """The two years the energy comparison needs, with the same weather, gains and model.

    Parameters
    ----------
    params : calcs.thermal.ZoneParameters
        5R1C network of n zones (zones × variants).
    temp_air : array_like (T,)
        Outdoor air temperature [°C].
    gains_internal, gains_solar : array_like (T, n)
        Heat gains [W].
    coefficients, free_area, secure_area, infiltration_flow, allowed_day, allowed_night :
        As for :func:`simulate_free_running`.
    fresh_air_flow : array_like (T, n)
        Minimum outdoor air in occupied hours [m³ s⁻¹] (mechanical when air-conditioned).
    occupied : array_like of bool (T, n)
        Hours in which the set-points apply.
    nv_mode : array_like of bool (T, n)
        Natural-ventilation hours of the mixed-mode year (from :func:`changeover_modes`).
    heating_setpoint, cooling_setpoint : float
        Air-temperature set-points in occupied hours [°C].
    heat_recovery : float
        Sensible efficiency of heat recovery on the mechanical outdoor air [-].
    max_heating, max_cooling : float or array_like (n,)
        Plant capacity limits [W].
    engine : {"compiled", "numpy"}
        Loop of :func:`calcs.thermal.simulate` (same numbers within ``tolerance``).
    threads : int, optional
        Threads of the compiled loops, as for :func:`calcs.thermal.simulate` (speed only).

    Returns
    -------
    OperatingYears

    Notes
    -----
    Baseline: windows shut all year; outdoor air q = q_inf + q_fresh (occupied) with the
    mechanical part tempered by heat recovery, H_ve = ρc·(q_inf + (1 − η_hr)·q_fresh);
    heating and cooling to the set-points in occupied hours (ISO 13790 §C.4.2 ideal loads).
    Mixed mode: in air-conditioning hours the same as the baseline; in natural-ventilation
    hours windows are controlled as in :func:`simulate_free_running`, there is no cooling and
    the heating set-point still applies. Unoccupied hours float freely (night cooling if allowed).
    """
    from . import thermal

    temp_air = np.asarray(temp_air, dtype=float)
    nv = np.asarray(nv_mode, dtype=bool)
    occ = np.asarray(occupied, dtype=bool)
    base = np.asarray(infiltration_flow, dtype=float)
    fresh = np.asarray(fresh_air_flow, dtype=float)
    eta = float(heat_recovery)
    if not 0.0 <= eta < 1.0:
        msg = f"heat_recovery must be between 0 and 1 (exclusive), got {heat_recovery!r}"
        raise ProjectError(msg)
    sealed_flow = base + (1.0 - eta) * np.where(occ, fresh, 0.0)
    baseline = thermal.simulate(params, temp_air, gains_internal, gains_solar,
                                thermal.ventilation_heat_transfer(sealed_flow), heating_setpoint=heating_setpoint,
                                cooling_setpoint=cooling_setpoint, occupied=occ, max_heating=max_heating,
                                max_cooling=max_cooling, engine=engine, threads=threads)
    day = np.asarray(allowed_day, dtype=bool) & nv
    night = np.asarray(allowed_night, dtype=bool)

    n = params.n_zones
    h_ve = WindowVentilation(coefficients, temp_air, np.asarray(free_area, dtype=float),
                             np.asarray(secure_area, dtype=float), day, night,
                             np.broadcast_to(np.asarray(low_setpoint, dtype=float), (n,)),
                             np.broadcast_to(np.asarray(night_low_setpoint, dtype=float), (n,)),
                             float(control_band), base, np.where(occ, fresh, 0.0), nv, sealed_flow)

    cooling = np.where(nv, NO_COOLING, cooling_setpoint)
    mixed = thermal.simulate(params, temp_air, gains_internal, gains_solar, h_ve, heating_setpoint=heating_setpoint,
                             cooling_setpoint=cooling, occupied=occ, max_heating=max_heating,
                             max_cooling=max_cooling, tolerance=tolerance, engine=engine, threads=threads)
    mechanical = np.where(occ & ~nv, fresh, 0.0)
    return OperatingYears(baseline=baseline, mixed=mixed, mechanical_flow=mechanical)
