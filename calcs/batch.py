"""Assemble batches of zones × variants from the project and earlier stages' outputs.

The comfort and energy stages run the thermal model on many columns at once: every zone of
the building, and for the sensitivity and uncertainty studies every variant of it (more or
less internal gain, shading, openable area, another mass class, longer occupied hours, ceiling
fans, another comfort criterion). This module turns the project and the climate, loads and
openings outputs into the arrays those runs need; it holds no physics of its own (it calls
:mod:`calcs.gains`, :mod:`calcs.climate`, :mod:`calcs.airflow`, :mod:`calcs.thermal` and
:mod:`calcs.operation`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from . import airflow, climate, gains, operation, thermal

#: What a variant may change, with the value meaning "as designed".
VARIANT_KEYS: dict[str, Any] = {
    "gains_scale": 1.0,  # internal gains multiplier [-]
    "solar_scale": 1.0,  # solar gains multiplier (shading, g-value) [-]
    "area_scale": 1.0,  # openable free area multiplier [-]
    "end_shift": 0,  # occupied period ends this many hours later [h]
    "mass_class": None,  # thermal mass class for every zone
    "fans": None,  # ceiling fans on/off
    "criterion": None,  # changeover criterion
    "seer_scale": 1.0,  # cooling efficiency multiplier (energy accounts only) [-]
    "price_scale": 1.0,  # energy price multiplier (energy accounts only) [-]
}


@dataclass
class Batch:
    """Arrays for n columns (zones × variants), T hours."""

    zone: np.ndarray  # (n,) zone index of each column
    variant: np.ndarray  # (n,) variant index of each column
    names: list[str]
    areas: np.ndarray  # (n,) floor area [m²]
    params: thermal.ZoneParameters
    occupied: np.ndarray  # (T, n)
    internal: np.ndarray  # (T, n) [W], ceiling-fan power included when fans run
    solar: np.ndarray  # (T, n) [W]
    coefficients: operation.FlowCoefficients
    free_area: np.ndarray  # (n,) [m²]
    secure_area: np.ndarray  # (n,) [m²]
    infiltration: np.ndarray  # (n,) [m³ s⁻¹]
    fresh: np.ndarray  # (T, n) fresh air in occupied hours [m³ s⁻¹]
    allowed_day: np.ndarray  # (T, n)
    allowed_night: np.ndarray  # (T, n)
    fans: np.ndarray  # (n,) bool
    criterion: list[str]  # (n,)
    openings: np.ndarray  # (n,) count of openable openings (actuators)
    variants: list[dict[str, Any]] = field(default_factory=list)
    seer_scale: np.ndarray | float = 1.0  # (n,) cooling efficiency multiplier of each column
    price_scale: np.ndarray | float = 1.0  # (n,) energy price multiplier of each column


def zone_internal_gains(index: pd.DatetimeIndex, occupied: pd.Series, zone: Any) -> pd.DataFrame:
    """Hourly internal gains of one project zone, its schedules following the occupancy calendar.

    People follow ``zone.occupancy_profile`` on occupied days (default: 1 in occupied hours);
    lighting and equipment follow their profiles or the calendar with the out-of-hours
    fractions of :mod:`calcs.gains`. Returns :func:`calcs.gains.internal_gains`' frame.
    """
    fractions = {
        "occupancy": gains.calendar_fractions(occupied, zone.occupancy_profile, 0.0),
        "lighting_use": gains.calendar_fractions(occupied, zone.lighting_profile, gains.OUT_OF_HOURS_LIGHTING.value),
        "equipment_use": gains.calendar_fractions(occupied, zone.equipment_profile,
                                                  gains.OUT_OF_HOURS_EQUIPMENT.value),
    }
    return gains.internal_gains(index, zone.floor_area, zone.people_density, zone.activity, zone.lighting,
                                zone.equipment, **fractions)


def _occupied(project: Any, index: pd.DatetimeIndex, end_shift: int) -> pd.Series:
    occ = project.occupancy
    end = min(24, max(occ.start_hour + 1, occ.end_hour + int(end_shift)))
    return climate.occupied_hours(index, days=occ.days, start_hour=occ.start_hour, end_hour=end,
                                  holidays=occ.holidays)


@dataclass(frozen=True)
class _ZoneBase:
    """What every column of a zone shares, whatever the variant (computed once per set of inputs)."""

    temp_air: np.ndarray  # (T,)
    acceptable: np.ndarray  # (T,) wind and rain allow opening
    night: np.ndarray  # (T,) night-purge hours
    design_occ: np.ndarray  # (T,) occupied hours as designed
    internal: np.ndarray  # (T, z) design internal gains [W]
    solar: np.ndarray  # (T, z) [W]
    coefficients: operation.FlowCoefficients  # of the z zones
    free: np.ndarray  # (z,) openable free area [m²]
    secure: np.ndarray  # (z,) of the secure openings [m²]
    infiltration: np.ndarray  # (z,) [m³ s⁻¹]
    fresh: np.ndarray  # (z,) fresh air in occupied hours [m³ s⁻¹]
    areas: np.ndarray  # (z,) [m²]
    h_op: np.ndarray  # (z,) [W K⁻¹]
    h_w: np.ndarray  # (z,) [W K⁻¹]
    openings: np.ndarray  # (z,) count of openable openings


_BASE_MEMO: list = []  # [(inputs, _ZoneBase)]: the last inputs, kept alive so their ids stay theirs


def _zone_base(project: Any, climate_hourly: pd.DataFrame, gains_hourly: pd.DataFrame, loads: Mapping[str, Any],
               openings: pd.DataFrame) -> _ZoneBase:
    key = (project, climate_hourly, gains_hourly, loads, openings)
    if _BASE_MEMO and all(a is b for a, b in zip(_BASE_MEMO[0][0], key)):
        return _BASE_MEMO[0][1]
    op = project.operation
    index = climate_hourly.index
    zones = list(project.zones)
    names = [z.name for z in zones]
    wind_met = climate_hourly["wind_speed"].to_numpy()
    temp_air = climate_hourly["temp_air"].to_numpy()
    hour = index.hour.to_numpy()
    start, end = int(op.night_purge_start[:2]), int(op.night_purge_end[:2])
    night = (hour >= start) | (hour < end) if start > end else (hour >= start) & (hour < end)

    def by_zone(column: str) -> np.ndarray:
        table = gains_hourly.pivot_table(index=gains_hourly.index, columns="zone", values=column, sort=False)
        return table[names].reindex(index).to_numpy()

    rows = [openings.loc[name] for name in names]
    wind_at_zone = np.column_stack([
        airflow.wind_speed_at_height_bs5925(wind_met, z.height_above_ground, project.sizing.terrain) for z in zones])
    coefficients = operation.opening_flow_coefficients(
        [z.ventilation for z in zones], wind_speed_met=wind_met, wind_speed_building=wind_at_zone,
        opening_height=np.array([float(r["opening_height_m"]) for r in rows]),
        stack_height=np.array([z.stack_height for z in zones]),
        cp_windward=project.sizing.cp_windward, cp_leeward=project.sizing.cp_leeward,
        discharge_coefficient=np.array([float(r["discharge_coefficient"]) for r in rows]),
    )
    base = _ZoneBase(
        temp_air=temp_air,
        acceptable=(climate_hourly["wind_ok"] & climate_hourly["rain_ok"]).astype(bool).to_numpy(),
        night=night,
        design_occ=climate_hourly["occupied"].astype(bool).to_numpy(),
        internal=by_zone("people_sensible") + by_zone("lighting") + by_zone("equipment"),
        solar=by_zone("solar"),
        coefficients=coefficients,
        free=np.array([sum(o.free_area * o.count for o in z.openings) for z in zones], dtype=float),
        secure=np.array([sum(o.free_area * o.count for o in z.openings if o.secure) for z in zones], dtype=float),
        infiltration=np.array([z.infiltration_ach * z.floor_area * z.ceiling_height / 3600 for z in zones]),
        fresh=np.array([float(r["fresh_air_L_s"]) / 1000 for r in rows]),
        areas=np.array([z.floor_area for z in zones], dtype=float),
        h_op=np.array([loads[z.name]["htc_opaque_W_K"] for z in zones], dtype=float),
        h_w=np.array([loads[z.name]["htc_windows_W_K"] for z in zones], dtype=float),
        openings=np.array([sum(o.count for o in z.openings) for z in zones]),
    )
    _BASE_MEMO[:] = [(key, base)]
    return base


def build_batch(project: Any, climate_hourly: pd.DataFrame, gains_hourly: pd.DataFrame, loads: Mapping[str, Any],
                openings: pd.DataFrame, variants: Sequence[Mapping[str, Any]] = ({},)) -> Batch:
    """Columns for every zone of every variant.

    Parameters
    ----------
    project : calcs.project.Project
    climate_hourly : DataFrame
        The climate stage's ``hourly`` table.
    gains_hourly : DataFrame
        The loads stage's ``hourly_gains`` table (long: one block per zone).
    loads : mapping
        The loads stage's results (heat transfer coefficients per zone).
    openings : DataFrame
        The openings stage's ``zones`` table indexed by zone (opening height, Cd, fresh air).
    variants : sequence of mappings
        Changes from the design, keys of :data:`VARIANT_KEYS`; ``{}`` is the design itself.

    Notes
    -----
    Column ``v·z + k`` is zone k of variant v. What depends on the zone only (design gains, flow
    coefficients, areas) is computed once for the same inputs and indexed; a variant scales it.
    """
    op = project.operation
    index = climate_hourly.index
    zones = list(project.zones)
    nz = len(zones)
    base = _zone_base(project, climate_hourly, gains_hourly, loads, openings)
    changes = []
    for raw in variants:
        unknown = set(raw) - set(VARIANT_KEYS)
        if unknown:
            msg = f"unknown variant keys {sorted(unknown)} (allowed: {', '.join(VARIANT_KEYS)})"
            raise ValueError(msg)
        changes.append({**VARIANT_KEYS, **dict(raw)})
    per_variant = lambda key, cast=float: np.array([cast(c[key]) for c in changes])  # noqa: E731
    # occupied hours and internal gains: the design's, or those of each other end of the occupied period
    order = [0] + sorted({int(c["end_shift"]) for c in changes} - {0})
    occ_by_shift, internal_by_shift = [base.design_occ], [base.internal]
    for shift in order[1:]:
        occupied = _occupied(project, index, shift)
        occ_by_shift.append(occupied.to_numpy(dtype=bool))
        internal_by_shift.append(np.column_stack([zone_internal_gains(index, occupied, z)["total_sensible"].to_numpy()
                                                  for z in zones]))
    occ_table, internal_table = np.column_stack(occ_by_shift), np.concatenate(internal_by_shift, axis=1)
    shift_of_variant = np.array([order.index(int(c["end_shift"])) for c in changes], dtype=int)
    n_var = len(changes)
    zone = np.tile(np.arange(nz), n_var)
    variant = np.repeat(np.arange(n_var), nz)
    col_shift = shift_of_variant[variant]
    fans = np.array([op.ceiling_fans if c["fans"] is None else bool(c["fans"]) for c in changes], dtype=bool)[variant]
    columns = lambda table, idx: np.ascontiguousarray(table[:, idx])  # noqa: E731 - (T, n), rows contiguous
    occ = columns(occ_table, col_shift)
    fan_gain = np.where(fans[None, :] & occ, op.fan_power * base.areas[zone][None, :], 0.0)
    gains_scale, solar_scale = per_variant("gains_scale")[variant], per_variant("solar_scale")[variant]
    area_scale = per_variant("area_scale")[variant]
    night_ok = base.night & base.acceptable & (base.temp_air >= op.night_purge_min_outdoor) & bool(op.night_purge)
    mass = [changes[v]["mass_class"] or zones[z].mass_class for v, z in zip(variant, zone)]
    areas = base.areas[zone]
    coefficients = operation.FlowCoefficients(wind=columns(base.coefficients.wind, zone), stack=base.coefficients.stack[zone],
                                              ref_temp=base.coefficients.ref_temp)
    return Batch(
        zone=zone, variant=variant, names=[z.name for z in zones], areas=areas,
        params=thermal.zone_parameters(areas, base.h_op[zone], base.h_w[zone], mass),
        occupied=occ, internal=columns(internal_table, col_shift * nz + zone) * gains_scale[None, :] + fan_gain,
        solar=columns(base.solar, zone) * solar_scale[None, :], coefficients=coefficients,
        free_area=base.free[zone] * area_scale, secure_area=base.secure[zone] * area_scale,
        infiltration=base.infiltration[zone], fresh=occ * base.fresh[zone][None, :],
        allowed_day=occ & base.acceptable[:, None], allowed_night=~occ & night_ok[:, None], fans=fans,
        criterion=[changes[v]["criterion"] or op.changeover_criterion for v in variant],
        openings=base.openings[zone], variants=[dict(v) for v in variants],
        seer_scale=per_variant("seer_scale")[variant], price_scale=per_variant("price_scale")[variant],
    )


def free_running(batch: Batch, project: Any, temp_air: np.ndarray) -> operation.FreeRunningYear:
    """The free-running year of every column (windows controlled, no heating or cooling)."""
    op = project.operation
    return operation.simulate_free_running(
        batch.params, temp_air=temp_air, gains_internal=batch.internal, gains_solar=batch.solar,
        coefficients=batch.coefficients, free_area=batch.free_area, secure_area=batch.secure_area,
        infiltration_flow=batch.infiltration, background_flow=batch.fresh, allowed_day=batch.allowed_day,
        allowed_night=batch.allowed_night, low_setpoint=op.nv_low_setpoint,
        night_low_setpoint=op.night_purge_low_setpoint, control_band=op.control_band,
    )


def changeover(batch: Batch, project: Any, climate_hourly: pd.DataFrame, temp_op: np.ndarray) -> np.ndarray:
    """Natural-ventilation hours (T, n) of each column's operating year, judged on free-running ``temp_op``.

    Humid hours (outdoor dew point above the project's ceiling) go to air-conditioning: natural
    ventilation cannot dehumidify.
    """
    op = project.operation
    ch = climate_hourly
    dry = ch["dew_ok"].astype(bool).to_numpy()[:, None]
    modes = np.zeros(temp_op.shape, dtype=bool)
    days = ch.index.normalize()
    for criterion in sorted(set(batch.criterion)):
        for fans in (False, True):
            cols = np.flatnonzero((np.array(batch.criterion) == criterion) & (batch.fans == fans))
            if cols.size == 0:
                continue
            limits = operation.criterion_limits(
                criterion, temp_op=temp_op[:, cols], temp_air=ch["temp_air"].to_numpy()[:, None],
                running_mean=ch["running_mean_en16798_C"].to_numpy()[:, None],
                prevailing_mean=ch["prevailing_mean_ashrae55_C"].to_numpy()[:, None],
                air_speed=op.fan_air_speed if fans else op.air_speed,
                fan_air_speed=op.fan_air_speed if fans else op.air_speed,
                fixed=(op.fixed_indoor_low, op.fixed_indoor_high),
                band=(project.outdoor.band_low, project.outdoor.band_high),
            )
            limits = operation.Limits(limits.value, limits.lower, limits.upper, limits.in_range & dry, limits.judged)
            modes[:, cols] = operation.changeover_modes(limits, batch.occupied[:, cols], days, dead_band=op.dead_band)
    return modes


def operating_years(batch: Batch, project: Any, temp_air: np.ndarray, nv_mode: np.ndarray) -> operation.OperatingYears:
    """Baseline (full air-conditioning) and mixed-mode years of every column, with the project's set-points."""
    op, en = project.operation, project.energy
    capacity = np.inf if en.cooling_capacity is None else en.cooling_capacity * batch.areas
    return operation.simulate_operating_years(
        batch.params, temp_air=temp_air, gains_internal=batch.internal, gains_solar=batch.solar,
        coefficients=batch.coefficients, free_area=batch.free_area, secure_area=batch.secure_area,
        infiltration_flow=batch.infiltration, fresh_air_flow=batch.fresh, occupied=batch.occupied, nv_mode=nv_mode,
        allowed_day=batch.allowed_day, allowed_night=batch.allowed_night, heating_setpoint=en.heating_setpoint,
        cooling_setpoint=en.cooling_setpoint, heat_recovery=en.heat_recovery, low_setpoint=op.nv_low_setpoint,
        night_low_setpoint=op.night_purge_low_setpoint, control_band=op.control_band, max_cooling=capacity,
    )


END_USES = ("cooling", "heating", "fans", "ceiling_fans", "standby")


@dataclass
class Accounts:
    """Annual energy [kWh], cost [currency] and carbon [kg CO2e] of every column, both schemes.

    ``kwh[scheme][end_use]`` are (n,) arrays for scheme "baseline" and "mixed"; ``monthly_kwh[scheme]``
    is (12, n) total delivered energy; ``cost`` and ``carbon`` are (n,) per scheme (the demand charge is
    per variant, in ``demand_cost`` (variants,) per scheme).
    """

    kwh: dict[str, dict[str, np.ndarray]]
    monthly_kwh: dict[str, np.ndarray]
    cost: dict[str, np.ndarray]
    carbon: dict[str, np.ndarray]
    demand_cost: dict[str, np.ndarray]
    peak_cooling_w: dict[str, np.ndarray]


def _delivered(batch: Batch, project: Any, temp_air: np.ndarray, years: operation.OperatingYears,
               nv_mode: np.ndarray, seer_scale=1.0) -> dict[str, dict[str, Any]]:
    """Hourly delivered electricity and gas [W] of both schemes, with annual kWh by end use.

    Returns ``{scheme: {"electric": (T, n), "gas": (T, n), "kwh": {end_use: (n,)}}}``; nothing here
    depends on a price or a carbon factor (see :func:`calcs.energy` for each conversion).
    """
    from . import energy

    en, op = project.energy, project.operation
    seer = en.cooling_seer * np.asarray(seer_scale, dtype=float) * batch.seer_scale
    occ = batch.occupied
    nv = nv_mode & occ
    out: dict[str, dict[str, Any]] = {}
    for scheme, result, mech in (("baseline", years.baseline, np.where(occ, batch.fresh, 0.0)),
                                 ("mixed", years.mixed, years.mechanical_flow)):
        cooling_el = energy.cooling_electricity(result.cooling_need, seer, temp_air,
                                                slope=en.cooling_efficiency_slope)
        heat = energy.heating_energy(result.heating_need, en.heating_efficiency)
        fans = energy.fan_energy(mech, en.sfp, mech > 0)
        if scheme == "mixed":
            ceiling = np.where(nv & batch.fans[None, :], op.fan_power * batch.areas[None, :], 0.0)
            standby = np.broadcast_to(en.actuator_standby * batch.openings + en.controls_standby, occ.shape)
        else:
            ceiling = np.zeros(occ.shape)
            standby = np.zeros(occ.shape)
        electric = cooling_el + fans + ceiling + standby + (heat if en.heating_fuel == "electricity" else 0.0)
        gas = heat if en.heating_fuel == "gas" else np.zeros(occ.shape)
        kwh = {"cooling": cooling_el.sum(axis=0) / 1000, "heating": heat.sum(axis=0) / 1000,
               "fans": fans.sum(axis=0) / 1000, "ceiling_fans": ceiling.sum(axis=0) / 1000,
               "standby": np.asarray(standby).sum(axis=0) / 1000}
        out[scheme] = {"electric": electric, "gas": gas, "kwh": kwh}
    return out


def _electricity_prices(index: pd.DatetimeIndex, en: Any) -> np.ndarray:
    """The project's electricity price in every hour of ``index`` [currency kWh⁻¹]."""
    from . import energy

    return energy.hourly_price(index, en.electricity_price,
                               [(int(p.start[:2]), int(p.end[:2]), p.price) for p in en.electricity_periods])


def energy_accounts(batch: Batch, project: Any, index: pd.DatetimeIndex, temp_air: np.ndarray,
                    years: operation.OperatingYears, nv_mode: np.ndarray, *, seer_scale=1.0,
                    price_scale=1.0) -> Accounts:
    """Energy by end use, cost and carbon of the baseline and mixed-mode years (see :mod:`calcs.energy`).

    ``seer_scale`` and ``price_scale`` (scalars or (n,) arrays) scale the cooling efficiency and
    every energy price, for the sensitivity and uncertainty studies, on top of the variants' own
    ``seer_scale`` and ``price_scale``.
    """
    from . import energy

    en = project.energy
    price_el = _electricity_prices(index, en)
    scale = np.asarray(price_scale, dtype=float) * batch.price_scale
    month = index.month.to_numpy()
    kwh: dict[str, dict[str, np.ndarray]] = {}
    monthly, cost, carbon, demand, peak = {}, {}, {}, {}, {}
    delivered = _delivered(batch, project, temp_air, years, nv_mode, seer_scale)
    for scheme, result in (("baseline", years.baseline), ("mixed", years.mixed)):
        electric, gas = delivered[scheme]["electric"], delivered[scheme]["gas"]
        kwh[scheme] = delivered[scheme]["kwh"]
        total = electric + gas
        monthly[scheme] = np.stack([total[month == m].sum(axis=0) / 1000 for m in range(1, 13)])
        cost[scheme] = ((price_el[:, None] * electric).sum(axis=0) / 1000
                        + en.gas_price * gas.sum(axis=0) / 1000) * scale
        carbon[scheme] = (en.electricity_carbon * electric.sum(axis=0) + en.gas_carbon * gas.sum(axis=0)) / 1000
        column_scale = np.broadcast_to(scale, batch.variant.shape)
        demand[scheme] = np.array([
            energy.demand_charge(electric[:, batch.variant == v], index, en.demand_charge)
            * column_scale[batch.variant == v][0]
            for v in range(int(batch.variant.max()) + 1)
        ])
        peak[scheme] = result.cooling_need.max(axis=0)
    return Accounts(kwh=kwh, monthly_kwh=monthly, cost=cost, carbon=carbon, demand_cost=demand,
                    peak_cooling_w=peak)


def capital_cost(batch: Batch, project: Any, peak_cooling_baseline_w, peak_cooling_mixed_w) -> np.ndarray:
    """Extra capital of mixed mode per column: openable area, actuators, controls, fans, less smaller plant.

    Capital = A_free·c_area + N_actuators·c_act + c_controls + (fans: A_floor·c_fan)
    − (P_base − P_mixed)/1000·c_plant (the plant may shrink when mixed mode lowers the peak).
    """
    en = project.energy
    fans = np.where(batch.fans, batch.areas * en.ceiling_fan_cost, 0.0)
    plant_saving = np.maximum(np.asarray(peak_cooling_baseline_w) - np.asarray(peak_cooling_mixed_w), 0.0) / 1000
    return (batch.free_area * en.openable_area_cost + batch.openings * en.actuator_cost + en.controls_cost + fans
            - plant_saving * en.plant_cost)


# --------------------------------------------------------------------------- many variants


@dataclass(frozen=True)
class StageInputs:
    """What a run of variants needs from the project and the earlier stages (picklable, sent to workers)."""

    project: Any
    climate_hourly: pd.DataFrame
    gains_hourly: pd.DataFrame
    loads: Mapping[str, Any]
    openings: pd.DataFrame


def _simulate(inputs: StageInputs, variants: Sequence[Mapping[str, Any]], b: Batch | None = None):
    """Batch, free-running year, changeover and operating years of ``variants``: (batch, modes, years)."""
    ch, project = inputs.climate_hourly, inputs.project
    temp_air = ch["temp_air"].to_numpy()
    if b is None:
        b = build_batch(project, ch, inputs.gains_hourly, inputs.loads, inputs.openings, variants)
    free = free_running(b, project, temp_air)
    modes = changeover(b, project, ch, free.result.temp_op)
    return b, modes, operating_years(b, project, temp_air, modes)


def run_variants(inputs: StageInputs, variants: Sequence[Mapping[str, Any]] = ({},)):
    """Every step for the columns of ``variants``: (batch, nv modes, operating years, accounts)."""
    ch = inputs.climate_hourly
    b, modes, years = _simulate(inputs, variants)
    acc = energy_accounts(b, inputs.project, ch.index, ch["temp_air"].to_numpy(), years, modes)
    return b, modes, years, acc


def design_run(inputs: StageInputs, store=None):
    """:func:`run_variants` of the design case alone, its simulated years kept in ``store``.

    ``store`` (a :class:`calcs.sweep.SweepStore`, optional) keeps the changeover modes and the
    two operating years under the design case's :func:`sweep_key`, so that a rebuild after a
    change of prices or carbon factors prices the stored years instead of simulating them again
    (and need not load the compiled loops). The arrays come back with the same values, shapes
    and memory layout, so every figure computed from them is the same to the last bit.
    Returns (batch, nv modes, operating years, accounts), as :func:`run_variants`.
    """
    ch, project = inputs.climate_hourly, inputs.project
    b = build_batch(project, ch, inputs.gains_hourly, inputs.loads, inputs.openings, [{}])
    key = sweep_key(inputs, [{}]) + "-design" if store is not None else None
    kept = _stored_years(store, key, b.areas.size) if store is not None else None
    if kept is None:
        _, modes, years = _simulate(inputs, [{}], b)
        if store is not None:
            hours, zones = _year_tables(modes, years)
            store.put(key + "-hours", hours)
            store.put(key + "-zones", zones)
    else:
        modes, years = kept
    acc = energy_accounts(b, project, ch.index, ch["temp_air"].to_numpy(), years, modes)
    return b, modes, years, acc


_HOURLY_FIELDS = ("temp_air_in", "temp_surface", "temp_mass", "temp_op", "heating_need", "cooling_need", "h_ve",
                  "window_flow")
_ZONE_FIELDS = ("temp_mass_initial", "temp_mass_final", "unconverged_hours")


def _year_tables(modes: np.ndarray, years: operation.OperatingYears) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The modes and operating years as two tables: one column per array and zone (hours), per array (zones)."""
    n = modes.shape[1]
    hours: dict[str, np.ndarray] = {}
    for name, array in (("nv_mode", modes), ("mechanical_flow", years.mechanical_flow)):
        hours.update({f"{name}.{j}": array[:, j] for j in range(n)})
    zones: dict[str, np.ndarray] = {}
    for scheme in _SCHEMES:
        result = getattr(years, scheme)
        for name in _HOURLY_FIELDS:
            array = getattr(result, name)
            if array is not None:
                hours.update({f"{scheme}.{name}.{j}": array[:, j] for j in range(n)})
        zones.update({f"{scheme}.{name}": getattr(result, name) for name in _ZONE_FIELDS})
    return pd.DataFrame(hours), pd.DataFrame(zones)


def _stored_years(store, key: str, n: int):
    """(modes, operating years) from ``store`` (see :func:`design_run`), or None when not kept or damaged."""
    hours, zones = store.fetch(key + "-hours"), store.fetch(key + "-zones")
    if hours is None or zones is None:
        return None

    def stacked(prefix: str) -> np.ndarray:  # (T, n), C order, as the simulation returns them
        return np.ascontiguousarray(np.column_stack([hours[f"{prefix}.{j}"].to_numpy() for j in range(n)]))

    results = {}
    for scheme in _SCHEMES:
        fields: dict[str, Any] = {name: stacked(f"{scheme}.{name}") if f"{scheme}.{name}.0" in hours else None
                                  for name in _HOURLY_FIELDS}
        fields.update({name: zones[f"{scheme}.{name}"].to_numpy().copy() for name in _ZONE_FIELDS})
        results[scheme] = thermal.SimulationResult(**fields)
    years = operation.OperatingYears(baseline=results["baseline"], mixed=results["mixed"],
                                     mechanical_flow=stacked("mechanical_flow"))
    return stacked("nv_mode"), years


#: Columns of :func:`variant_totals`, one row per variant (whole building).
TOTAL_COLUMNS = ("baseline_kWh", "mixed_kWh", "baseline_cost", "mixed_cost", "baseline_co2", "mixed_co2",
                 "nv_mode_pct")


def variant_totals(b: Batch, modes: np.ndarray, acc: Accounts) -> pd.DataFrame:
    """Whole-building annual totals of each variant of a run.

    Delivered energy [kWh], running cost with the demand charge [currency] and carbon [kg CO2e]
    of both schemes, and the natural-ventilation hours as a share of occupied hours [%],
    floor-area weighted over the zones.
    """
    rows = []
    nv = _nv_mode_pct(b, modes)
    for v in range(int(b.variant.max()) + 1):
        cols = np.flatnonzero(b.variant == v)
        row = {}
        for scheme in _SCHEMES:
            row[scheme + "_kWh"] = float(sum(acc.kwh[scheme][u][cols].sum() for u in END_USES))
            row[scheme + "_cost"] = float(acc.cost[scheme][cols].sum() + acc.demand_cost[scheme][v])
            row[scheme + "_co2"] = float(acc.carbon[scheme][cols].sum())
        row["nv_mode_pct"] = float(nv[v])
        rows.append(row)
    return pd.DataFrame(rows, columns=list(TOTAL_COLUMNS))


#: The project's energy keys that only value the energy (prices, carbon factors, capital, life):
#: changing them re-prices a sweep's stored price-independent table instead of re-simulating it.
PRICING_KEYS = frozenset({
    "currency", "electricity_price", "electricity_periods", "demand_charge", "gas_price", "electricity_carbon",
    "gas_carbon", "carbon_source", "openable_area_cost", "actuator_cost", "controls_cost", "ceiling_fan_cost",
    "plant_cost", "plant_space_share", "life", "discount_rate",
})
_SCHEMES = ("baseline", "mixed")


def _physical_of_chunk(inputs: StageInputs, variants: Sequence[Mapping[str, Any]]) -> pd.DataFrame:
    """Price-independent annual figures of each variant (see :func:`price_totals`)."""
    ch = inputs.climate_hourly
    b, modes, years = _simulate(inputs, variants)
    delivered = _delivered(b, inputs.project, ch["temp_air"].to_numpy(), years, modes)
    n_var = int(b.variant.max()) + 1
    assign = np.zeros((b.variant.size, n_var))
    assign[np.arange(b.variant.size), b.variant] = 1.0  # column → variant
    hour = ch.index.hour.to_numpy()
    month = ch.index.month.to_numpy()
    by_hour = (hour[:, None] == np.arange(24)[None, :]).astype(float)  # (T, 24)
    table: dict[str, Any] = {}
    for scheme in _SCHEMES:
        d = delivered[scheme]
        electric = d["electric"] @ assign  # (T, variants) [W]
        table[f"{scheme}_kWh"] = sum(d["kwh"][u] for u in END_USES) @ assign
        for h, column in enumerate((by_hour.T @ electric) / 1000):
            table[f"{scheme}_electric_kWh_h{h:02d}"] = column
        table[f"{scheme}_gas_kWh"] = d["gas"].sum(axis=0) @ assign / 1000
        for m in range(1, 13):
            table[f"{scheme}_peak_kW_m{m:02d}"] = electric[month == m].max(axis=0) / 1000
    table["nv_mode_pct"] = _nv_mode_pct(b, modes)
    return pd.DataFrame(table)


def _nv_mode_pct(b: Batch, modes: np.ndarray) -> np.ndarray:
    """Natural-ventilation hours of each variant [% of occupied hours], floor-area weighted over its zones."""
    out = []
    for v in range(int(b.variant.max()) + 1):
        cols = np.flatnonzero(b.variant == v)
        occ = b.occupied[:, cols]
        weight = b.areas[cols] / b.areas[cols].sum()
        out.append(float(sum(w * 100 * modes[occ[:, i], c].mean() for i, (c, w) in enumerate(zip(cols, weight)))))
    return np.array(out)


def price_totals(physical: pd.DataFrame, project: Any, price_scale) -> pd.DataFrame:
    """:data:`TOTAL_COLUMNS` of each variant from its price-independent figures and the project's tariff.

    ``price_scale`` (variants,) multiplies every energy price of each variant.

    Cost = (Σ_h p_h·E_h + p_gas·G)·s + Σ_months P_peak·r_demand·s, with E_h the electricity
    delivered in hour-of-day h over the year [kWh] (time-of-use periods repeat every day), G the
    gas [kWh], P_peak each month's peak electrical demand [kW] and s the variant's price scale;
    carbon = f_el·E + f_gas·G. The same arithmetic as :func:`energy_accounts`, regrouped.
    """
    en = project.energy
    price_h = _electricity_prices(pd.date_range("2001-01-01", periods=24, freq="h"), en)  # by hour of day
    scale = np.asarray(price_scale, dtype=float)
    out = {}
    for scheme in _SCHEMES:
        elec_h = physical[[f"{scheme}_electric_kWh_h{h:02d}" for h in range(24)]].to_numpy()
        peaks = physical[[f"{scheme}_peak_kW_m{m:02d}" for m in range(1, 13)]].to_numpy()
        gas = physical[f"{scheme}_gas_kWh"].to_numpy()
        out[f"{scheme}_kWh"] = physical[f"{scheme}_kWh"].to_numpy()
        out[f"{scheme}_cost"] = ((elec_h @ price_h + en.gas_price * gas) * scale
                                 + peaks.sum(axis=1) * en.demand_charge * scale)
        out[f"{scheme}_co2"] = en.electricity_carbon * elec_h.sum(axis=1) + en.gas_carbon * gas
    out["nv_mode_pct"] = physical["nv_mode_pct"].to_numpy()
    table = pd.DataFrame(out, columns=list(TOTAL_COLUMNS))
    table.index.name = "variant"
    return table


#: Columns (zones × variants) per chunk of a sweep: big enough to keep the compiled loops busy,
#: small enough that a chunk's hourly arrays stay a few megabytes.
CHUNK_COLUMNS = 96


def sweep_key(inputs: StageInputs, variants: Sequence[Mapping[str, Any]]) -> str:
    """SHA-256 of everything a sweep's price-independent table depends on.

    The project without :data:`PRICING_KEYS`, the earlier stages' tables, the variants without
    their price scale, and the calculation code's version (:func:`calcs.cache.code_version`).
    """
    import hashlib
    import json

    from .cache import code_version

    data = inputs.project.model_dump(mode="json")
    data["energy"] = {k: v for k, v in data["energy"].items() if k not in PRICING_KEYS}
    for name in ("project", "report", "signoff", "decisions"):
        data.pop(name, None)  # titles, people and paper: no calculation reads them
    digest = hashlib.sha256()
    digest.update(json.dumps({"project": data, "loads": inputs.loads, "code": code_version(),
                              "variants": [{k: v for k, v in dict(x).items() if k != "price_scale"} for x in variants]},
                             sort_keys=True, default=str).encode())
    for frame in (inputs.climate_hourly, inputs.gains_hourly, inputs.openings):
        digest.update(pd.util.hash_pandas_object(frame, index=True).to_numpy().tobytes())
        digest.update(",".join(map(str, frame.columns)).encode())
    return digest.hexdigest()


def sweep_totals(inputs: StageInputs, variants: Sequence[Mapping[str, Any]], *, scheduler: str | None = None,
                 jobs: int | None = None, chunk_columns: int = CHUNK_COLUMNS, store=None,
                 workers=None) -> pd.DataFrame:
    """:func:`variant_totals` of many variants, in chunks run by :func:`calcs.sweep.map_chunks`.

    The variants are cut into chunks of about ``chunk_columns`` columns (whole variants: a
    variant's demand charge needs all its zones); each chunk runs every step on its own and
    returns its price-independent figures, which :func:`price_totals` values with the project's
    tariff. The table is the same whichever way the chunks ran (local process pool by default,
    or Dask; ``workers``: a local pool started ahead, :func:`calcs.sweep.start_workers`).
    ``store`` (a :class:`calcs.sweep.SweepStore`, optional) keeps the price-independent
    table under :func:`sweep_key`, so a change of prices or carbon factors re-prices it without
    simulating again. Returns one row per variant, in the order given, index ``variant``.
    """
    from . import sweep

    variants = [dict(v) for v in variants]
    key = sweep_key(inputs, variants) if store is not None else None
    physical = store.fetch(key) if store is not None else None
    if physical is None:
        per_chunk = max(1, chunk_columns // max(1, len(inputs.project.zones)))
        chunks = [variants[i:i + per_chunk] for i in range(0, len(variants), per_chunk)]
        parts = sweep.map_chunks(_physical_of_chunk, chunks, context=inputs, scheduler=scheduler, jobs=jobs,
                                 workers=workers)
        physical = pd.concat(parts, ignore_index=True)
        if store is not None:
            store.put(key, physical)
    scale = [float({**VARIANT_KEYS, **v}["price_scale"]) for v in variants]
    return price_totals(physical, inputs.project, scale)
