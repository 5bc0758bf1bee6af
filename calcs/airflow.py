"""Natural-ventilation airflow, ventilation requirements, opening sizing and rules of thumb.

Everything here is a pure, vectorised function: no file I/O, printing or plotting.
Every function accepts scalars, numpy arrays and pandas Series (broadcast together);
a Series' index is kept on the way out; scalar inputs give a Python ``float``.

Sign and unit conventions
-------------------------
* Flows are volume flows in [m³ s⁻¹] unless a function says otherwise. The
  requirement functions of ASHRAE 62.1 and EN 16798-1 return [L s⁻¹], the unit
  in which those standards tabulate their rates.
* Natural-ventilation flows are magnitudes (≥ 0). A reversed wind or
  temperature difference changes the direction of the flow, not its size.
* Temperatures enter as [°C]; the functions convert to kelvin where a method
  needs absolute temperatures (mean temperature T̄ = mean of inside and outside).
* ``rho`` defaults to 1.2 kg m⁻³ and ``g`` is 9.81 m s⁻².

Validity
--------
Inputs a method does not cover raise :class:`calcs.errors.ProjectError`
(bad arguments) or emit :class:`AirflowValidityWarning` (inputs outside the
range a published method covers, or cases with no finite answer, which are
returned as ``inf`` rather than ``NaN``).

Open question resolved here: wind/stack crossover of BS 5925
---------------------------------------------------------------
BS 5925:1991 Fig. 8(c) chooses the stack flow Q_b below a critical value of
U_r/√ΔT and the wind flow Q_w above it. The crossover is, by construction, the
point where the two flows are equal. Equating Fig. 8(a) and 8(b)::

    C_d·A_w·U_r·√ΔC_p = C_d·A_b·√(2·g·H1·ΔT/T̄)
    U_r/√ΔT = √(2g/T̄) · (A_b/A_w)¹ · √(H1/ΔC_p)

so the exponent on A_b/A_w is **1**, and √(2g/T̄) = 0.260 at T̄ = 290 K (0.26 is
the printed constant). A printed exponent of 0.5 would put the switch at a
point where Q_b ≠ Q_w unless A_b = A_w, making the method jump there. We
therefore use the derived form: the constant is computed from the actual T̄
and the exponent is 1. The rule is then identical to ``Q = max(Q_b, Q_w)``
and continuous at the crossover. :func:`wind_stack_crossover_bs5925` returns
the critical U_r/√ΔT so that a report can show which mechanism governs.

Safety
------
These are feasibility estimates. Ventilation openings interact with fire and
smoke control, security, rain and noise, and outdoor air quality; a passed
rule-of-thumb check does not show compliance. Local building codes and
licensed practice govern the design.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from calcs.errors import ProjectError

__all__ = [
    "AirflowValidityWarning",
    "RuleCheck",
    "GRAVITY",
    "RHO_AIR",
    "orifice_flow",
    "effective_area_series",
    "effective_area_parallel",
    "cross_wind_bs5925",
    "stack_two_openings_bs5925",
    "wind_stack_crossover_bs5925",
    "wind_and_stack_bs5925",
    "stack_ashrae",
    "wind_ashrae",
    "wind_and_stack_quadrature",
    "single_sided_wind_warren",
    "single_sided_stack_bs5925",
    "single_sided_two_openings_bs5925",
    "single_sided_gids_phaff",
    "wind_speed_at_height_bs5925",
    "wind_speed_at_height_ashrae",
    "cp_swami_chandra",
    "fresh_air_ashrae62",
    "fresh_air_en16798",
    "co2_rise_steady",
    "flow_per_person_for_co2_rise",
    "flow_to_remove_heat",
    "required_free_area",
    "check_free_area_share",
    "check_plan_depth",
]

GRAVITY = 9.81  # [m s⁻²]
RHO_AIR = 1.2  # [kg m⁻³]
_KELVIN = 273.15
_CD_ORIFICE = 0.61  # sharp-edged orifice, BS 5925:1991 [MEM]


class AirflowValidityWarning(UserWarning):
    """An input lies outside the range a published method covers, or has no finite answer."""


# --------------------------------------------------------------------------------------
# helpers: broadcasting with index preservation, argument checks
# --------------------------------------------------------------------------------------


def _broadcast(**values: Any) -> tuple[pd.Index | None, dict[str, np.ndarray]]:
    """Broadcast named inputs to float arrays; return the shared Series index (or None)."""
    index = None
    index_owner = None
    for name, value in values.items():
        if isinstance(value, pd.Series):
            if index is None:
                index, index_owner = value.index, name
            elif not value.index.equals(index):
                msg = (
                    f"{name} is a Series whose index differs from that of {index_owner}; "
                    "Series inputs must share one index"
                )
                raise ProjectError(msg)
    arrays = {}
    for name, value in values.items():
        try:
            arrays[name] = np.asarray(value, dtype=float)
        except (TypeError, ValueError) as exc:
            msg = f"{name} must be numeric, got {value!r}"
            raise ProjectError(msg) from exc
    try:
        shaped = np.broadcast_arrays(*arrays.values())
    except ValueError as exc:
        shapes = ", ".join(f"{k} {v.shape}" for k, v in arrays.items())
        msg = f"inputs cannot be broadcast together: {shapes}"
        raise ProjectError(msg) from exc
    return index, dict(zip(arrays.keys(), shaped))


def _wrap(result: np.ndarray, index: pd.Index | None, name: str | None = None):
    """Re-wrap a result as a Series (if an input was one), a float (if 0-d) or an array."""
    result = np.asarray(result)
    if index is not None:
        return pd.Series(result, index=index, name=name)
    if result.ndim == 0:
        return result.item()
    return result


def _first_bad(arr: np.ndarray, bad: np.ndarray) -> str:
    values = np.asarray(arr)[bad]
    n = values.size
    first = values.flat[0]
    return f"{first:g}" if n == 1 else f"{first:g} (first of {n} offending values)"


def _require_nonnegative(name: str, arr: np.ndarray, unit: str) -> None:
    bad = arr < 0
    if np.any(bad):
        msg = f"{name} must be ≥ 0 {unit}, got {_first_bad(arr, bad)}"
        raise ProjectError(msg)


def _require_positive(name: str, arr: np.ndarray, unit: str) -> None:
    bad = arr <= 0
    if np.any(bad):
        msg = f"{name} must be > 0 {unit}, got {_first_bad(arr, bad)}"
        raise ProjectError(msg)


def _require_unit_interval(name: str, arr: np.ndarray) -> None:
    bad = (arr <= 0) | (arr > 1)
    if np.any(bad):
        msg = f"{name} must be in (0, 1], got {_first_bad(arr, bad)}"
        raise ProjectError(msg)


def _require_celsius(name: str, arr: np.ndarray) -> None:
    bad = arr <= -_KELVIN
    if np.any(bad):
        msg = f"{name} must be above absolute zero (> -273.15 °C), got {_first_bad(arr, bad)}"
        raise ProjectError(msg)


def _lookup(name: str, key: Any, table: dict) -> Any:
    if not isinstance(key, str) or key not in table:
        allowed = ", ".join(repr(k) for k in table)
        msg = f"{name} must be one of {allowed}, got {key!r}"
        raise ProjectError(msg)
    return table[key]


def _stack_terms(temp_in: np.ndarray, temp_air: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return |ΔT| [K] and the mean absolute temperature T̄ [K]."""
    _require_celsius("temp_in", temp_in)
    _require_celsius("temp_air", temp_air)
    delta_t = np.abs(temp_in - temp_air)
    temp_mean = 0.5 * (temp_in + temp_air) + _KELVIN
    return delta_t, temp_mean


def _series_effective(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Effective area of two areas in series; zero if either is zero."""
    with np.errstate(divide="ignore"):
        inv = 1.0 / a**2 + 1.0 / b**2
    with np.errstate(divide="ignore"):
        return 1.0 / np.sqrt(inv)


# --------------------------------------------------------------------------------------
# openings and effective areas
# --------------------------------------------------------------------------------------


def orifice_flow(area, delta_p, discharge_coefficient=_CD_ORIFICE, rho=RHO_AIR):
    """Volume flow through a sharp-edged opening driven by a pressure difference.

    Parameters
    ----------
    area : float, array or Series
        Free area of the opening [m²].
    delta_p : float, array or Series
        Pressure difference across the opening [Pa]. The sign gives the
        direction of the flow.
    discharge_coefficient : float, array or Series, default 0.61
        Discharge coefficient C_d, in (0, 1] [-].
    rho : float, array or Series, default 1.2
        Air density [kg m⁻³].

    Returns
    -------
    flow : float, array or Series
        Volume flow, with the sign of ``delta_p`` [m³ s⁻¹].

    Notes
    -----
    Q = C_d·A·√(2·|ΔP|/ρ)·sign(ΔP)

    References
    ----------
    BS 5925:1991 (incorporating Amendment No. 1, 1995), cl. 9, Eq. 2 (orifice
    equation, as corrected by the amendment). CIBSE AM10:2005; ASHRAE Handbook
    Fundamentals ch. 16 [MEM].

    Examples
    --------
    >>> round(orifice_flow(1.0, 4.0, 0.6, 1.2), 4)  # 0.6·√(8/1.2)
    1.5492
    """
    index, v = _broadcast(area=area, delta_p=delta_p, cd=discharge_coefficient, rho=rho)
    _require_nonnegative("area", v["area"], "m²")
    _require_unit_interval("discharge_coefficient", v["cd"])
    _require_positive("rho", v["rho"], "kg m⁻³")
    dp = v["delta_p"]
    flow = np.sign(dp) * v["cd"] * v["area"] * np.sqrt(2.0 * np.abs(dp) / v["rho"])
    return _wrap(flow, index, "flow")


def effective_area_series(*areas):
    """Effective area of openings in series (air passes through each in turn).

    Parameters
    ----------
    *areas : float, array or Series
        Two or more free areas [m²]. If the openings have different discharge
        coefficients, pass the products C_d,i·A_i and the result is (C_d·A)_e.

    Returns
    -------
    area : float, array or Series
        Effective area [m²]; zero when any opening is closed (area 0).

    Notes
    -----
    1/A_e² = Σ 1/A_i²   (1/(C_d·A)_e² = Σ 1/(C_d,i·A_i)² for unequal C_d)

    References
    ----------
    BS 5925:1991, Fig. 8 (a), (b) combination rule; CIBSE AM10:2005 [MEM].
    """
    if len(areas) < 2:
        msg = f"effective_area_series needs at least 2 areas, got {len(areas)}"
        raise ProjectError(msg)
    names = {f"area_{i + 1}": a for i, a in enumerate(areas)}
    index, v = _broadcast(**names)
    for name, arr in v.items():
        _require_nonnegative(name, arr, "m²")
    with np.errstate(divide="ignore"):
        inv = sum(1.0 / arr**2 for arr in v.values())
        result = 1.0 / np.sqrt(inv)
    return _wrap(result, index, "area")


def effective_area_parallel(*areas):
    """Effective area of openings side by side under the same pressure difference.

    Parameters
    ----------
    *areas : float, array or Series
        One or more free areas (or C_d·A products) [m²].

    Returns
    -------
    area : float, array or Series
        Sum of the areas [m²].

    Notes
    -----
    A_e = Σ A_i

    References
    ----------
    BS 5925:1991, Fig. 8 (sums A1 + A2 etc.); CIBSE AM10:2005 [MEM].
    """
    if len(areas) < 1:
        msg = "effective_area_parallel needs at least 1 area, got 0"
        raise ProjectError(msg)
    names = {f"area_{i + 1}": a for i, a in enumerate(areas)}
    index, v = _broadcast(**names)
    for name, arr in v.items():
        _require_nonnegative(name, arr, "m²")
    return _wrap(sum(v.values()), index, "area")


# --------------------------------------------------------------------------------------
# BS 5925 cross ventilation and stack
# --------------------------------------------------------------------------------------


def cross_wind_bs5925(
    area_windward, area_leeward, wind_speed, cp_windward, cp_leeward,
    discharge_coefficient=_CD_ORIFICE,
):
    """Wind-driven cross ventilation through openings on opposite faces (BS 5925).

    Parameters
    ----------
    area_windward : float, array or Series
        Total free area on the windward face, A1 + A2 [m²].
    area_leeward : float, array or Series
        Total free area on the leeward face, A3 + A4 [m²].
    wind_speed : float, array or Series
        Reference wind speed U_r at building height, the speed to which the
        pressure coefficients are referred [m s⁻¹].
    cp_windward, cp_leeward : float, array or Series
        Wind pressure coefficients of the two faces [-].
    discharge_coefficient : float, array or Series, default 0.61
        C_d of the openings [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow through the building [m³ s⁻¹]. A negative ΔC_p (wind from
        the other side) gives the same magnitude in the other direction.

    Notes
    -----
    Q_w = C_d·A_w·U_r·√|ΔC_p|,  1/A_w² = 1/(A1 + A2)² + 1/(A3 + A4)²,
    ΔC_p = C_p,windward − C_p,leeward.
    This is the orifice equation with the wind pressure difference
    ½·ρ·U_r²·ΔC_p across the two faces in series.

    References
    ----------
    BS 5925:1991, Fig. 8(a), wind only [MEM].
    """
    index, v = _broadcast(
        aw=area_windward, al=area_leeward, u=wind_speed,
        cpw=cp_windward, cpl=cp_leeward, cd=discharge_coefficient,
    )
    _require_nonnegative("area_windward", v["aw"], "m²")
    _require_nonnegative("area_leeward", v["al"], "m²")
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    _require_unit_interval("discharge_coefficient", v["cd"])
    a_w = _series_effective(v["aw"], v["al"])
    flow = v["cd"] * a_w * v["u"] * np.sqrt(np.abs(v["cpw"] - v["cpl"]))
    return _wrap(flow, index, "flow")


def stack_two_openings_bs5925(
    area_low, area_high, height, temp_in, temp_air, discharge_coefficient=_CD_ORIFICE,
):
    """Stack-driven flow through low and high openings (cross or same wall), BS 5925.

    Parameters
    ----------
    area_low : float, array or Series
        Total free area of the lower openings, A1 + A3 [m²].
    area_high : float, array or Series
        Total free area of the upper openings, A2 + A4 [m²].
    height : float, array or Series
        Vertical distance H1 between the centres of the lower and upper
        openings [m].
    temp_in : float, array or Series
        Indoor air temperature [°C].
    temp_air : float, array or Series
        Outdoor air temperature [°C].
    discharge_coefficient : float, array or Series, default 0.61
        C_d of the openings [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹] (upward through the room when indoor is warmer).

    Notes
    -----
    Q_b = C_d·A_b·√(2·ΔT·g·H1/T̄),  1/A_b² = 1/(A1 + A3)² + 1/(A2 + A4)²,
    ΔT = |T_i − T_o|, T̄ = mean of the inside and outside absolute temperatures.
    This is the orifice equation with the stack pressure ρ·g·H1·ΔT/T̄ across
    the two openings in series.

    References
    ----------
    BS 5925:1991, Fig. 8(b), temperature difference only [MEM].
    """
    index, v = _broadcast(
        al=area_low, ah=area_high, h=height, ti=temp_in, to=temp_air, cd=discharge_coefficient,
    )
    _require_nonnegative("area_low", v["al"], "m²")
    _require_nonnegative("area_high", v["ah"], "m²")
    _require_nonnegative("height", v["h"], "m")
    _require_unit_interval("discharge_coefficient", v["cd"])
    delta_t, temp_mean = _stack_terms(v["ti"], v["to"])
    a_b = _series_effective(v["al"], v["ah"])
    flow = v["cd"] * a_b * np.sqrt(2.0 * delta_t * GRAVITY * v["h"] / temp_mean)
    return _wrap(flow, index, "flow")


def _bs5925_combined_parts(v):
    a_w = _series_effective(v["a1"] + v["a2"], v["a3"] + v["a4"])
    a_b = _series_effective(v["a1"] + v["a3"], v["a2"] + v["a4"])
    delta_t, temp_mean = _stack_terms(v["ti"], v["to"])
    delta_cp = np.abs(v["cpw"] - v["cpl"])
    return a_w, a_b, delta_t, temp_mean, delta_cp


def _check_four_areas(v):
    for key, name in (
        ("a1", "area_windward_low"), ("a2", "area_windward_high"),
        ("a3", "area_leeward_low"), ("a4", "area_leeward_high"),
    ):
        _require_nonnegative(name, v[key], "m²")
    _require_nonnegative("height", v["h"], "m")


def wind_stack_crossover_bs5925(
    area_windward_low, area_windward_high, area_leeward_low, area_leeward_high,
    height, cp_windward, cp_leeward, temp_in, temp_air,
):
    """Critical value of U_r/√ΔT at which wind takes over from stack (BS 5925).

    Parameters
    ----------
    area_windward_low, area_windward_high : float, array or Series
        Free areas A1 (low) and A2 (high) on the windward face [m²].
    area_leeward_low, area_leeward_high : float, array or Series
        Free areas A3 (low) and A4 (high) on the leeward face [m²].
    height : float, array or Series
        Vertical distance H1 between low and high openings [m].
    cp_windward, cp_leeward : float, array or Series
        Wind pressure coefficients of the two faces [-].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C] (only their mean T̄ enters).

    Returns
    -------
    ratio : float, array or Series
        Critical U_r/√ΔT [m s⁻¹ K⁻⁰·⁵]. Stack governs below it, wind above.
        ``inf`` where ΔC_p = 0 or A_w = 0 (wind can never govern).

    Notes
    -----
    (U_r/√ΔT)_crit = √(2g/T̄)·(A_b/A_w)·√(H1/ΔC_p), with A_w and A_b as in
    :func:`cross_wind_bs5925` and :func:`stack_two_openings_bs5925`.
    Derived by equating Q_w and Q_b (see the module docstring). The printed
    form uses the constant 0.26 (= √(2g/T̄) at T̄ ≈ 290 K); from memory it is
    printed with exponent 0.5 on A_b/A_w, which the derivation does not
    support; exponent 1 is used here.

    References
    ----------
    BS 5925:1991, Fig. 8(c), wind and temperature difference together [MEM];
    derivation [CALC].
    """
    index, v = _broadcast(
        a1=area_windward_low, a2=area_windward_high, a3=area_leeward_low,
        a4=area_leeward_high, h=height, cpw=cp_windward, cpl=cp_leeward,
        ti=temp_in, to=temp_air,
    )
    _check_four_areas(v)
    a_w, a_b, _, temp_mean, delta_cp = _bs5925_combined_parts(v)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.sqrt(2.0 * GRAVITY / temp_mean) * (a_b / a_w) * np.sqrt(v["h"] / delta_cp)
    # 0/0 (no openings, or no height and no ΔCp): wind never beats stack nor the reverse;
    # report inf so that "stack governs" is the reading, both flows being zero there.
    ratio = np.where(np.isnan(ratio), np.inf, ratio)
    return _wrap(ratio, index, "crossover")


def wind_and_stack_bs5925(
    area_windward_low, area_windward_high, area_leeward_low, area_leeward_high,
    height, wind_speed, cp_windward, cp_leeward, temp_in, temp_air,
    discharge_coefficient=_CD_ORIFICE,
):
    """Cross ventilation with wind and stack acting together (BS 5925 rule).

    Parameters
    ----------
    area_windward_low, area_windward_high : float, array or Series
        Free areas A1 (low) and A2 (high) on the windward face [m²].
    area_leeward_low, area_leeward_high : float, array or Series
        Free areas A3 (low) and A4 (high) on the leeward face [m²].
    height : float, array or Series
        Vertical distance H1 between low and high openings [m].
    wind_speed : float, array or Series
        Reference wind speed U_r at building height [m s⁻¹].
    cp_windward, cp_leeward : float, array or Series
        Wind pressure coefficients of the two faces [-].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].
    discharge_coefficient : float, array or Series, default 0.61
        C_d of the openings [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹].

    Notes
    -----
    Q = Q_b if U_r/√ΔT < (U_r/√ΔT)_crit, else Q = Q_w, with Q_w from
    :func:`cross_wind_bs5925` (areas A1 + A2, A3 + A4) and Q_b from
    :func:`stack_two_openings_bs5925` (areas A1 + A3, A2 + A4), and the
    crossover of :func:`wind_stack_crossover_bs5925`. With the derived
    crossover this is Q = max(Q_w, Q_b), continuous at the switch. The
    simplification ignores the interaction of the two mechanisms; it
    under-estimates near the crossover when they assist and over-estimates
    when they oppose. :func:`wind_and_stack_quadrature` is the ASHRAE
    alternative.

    References
    ----------
    BS 5925:1991, Fig. 8(c) [MEM]; crossover derivation [CALC].
    """
    index, v = _broadcast(
        a1=area_windward_low, a2=area_windward_high, a3=area_leeward_low,
        a4=area_leeward_high, h=height, u=wind_speed, cpw=cp_windward, cpl=cp_leeward,
        ti=temp_in, to=temp_air, cd=discharge_coefficient,
    )
    _check_four_areas(v)
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    _require_unit_interval("discharge_coefficient", v["cd"])
    a_w, a_b, delta_t, temp_mean, delta_cp = _bs5925_combined_parts(v)
    flow_wind = v["cd"] * a_w * v["u"] * np.sqrt(delta_cp)
    flow_stack = v["cd"] * a_b * np.sqrt(2.0 * delta_t * GRAVITY * v["h"] / temp_mean)
    flow = np.where(flow_wind >= flow_stack, flow_wind, flow_stack)
    return _wrap(flow, index, "flow")


# --------------------------------------------------------------------------------------
# ASHRAE natural-ventilation equations
# --------------------------------------------------------------------------------------


def stack_ashrae(area, height_npl, temp_in, temp_air, discharge_coefficient=None):
    """Stack-driven flow through an opening below (or above) the neutral pressure level (ASHRAE).

    Parameters
    ----------
    area : float, array or Series
        Free area of the openings on one side of the neutral pressure level
        (use the smaller side) [m²].
    height_npl : float, array or Series
        Height from the mid-point of the lower opening to the neutral pressure
        level [m]; half the opening height for one large opening.
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].
    discharge_coefficient : float, array, Series or None, default None
        C_d [-]. ``None`` uses C_d = 0.40 + 0.0045·|T_i − T_o| (ASHRAE, for
        an opening with two-way flow).

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹].

    Notes
    -----
    Q = C_d·A·√(2·g·ΔH_NPL·|T_i − T_o|/T_w), with T_w the warmer of T_i and
    T_o in kelvin (T_i when indoor is warmer, T_o when outdoor is warmer).

    References
    ----------
    ASHRAE Handbook Fundamentals (2009), ch. 16 "Ventilation and
    infiltration", natural ventilation, stack-driven flow and its C_d
    expression [MEM; equation numbers not verified].
    """
    index, v = _broadcast(
        area=area, h=height_npl, ti=temp_in, to=temp_air,
        cd=np.nan if discharge_coefficient is None else discharge_coefficient,
    )
    _require_nonnegative("area", v["area"], "m²")
    _require_nonnegative("height_npl", v["h"], "m")
    _require_celsius("temp_in", v["ti"])
    _require_celsius("temp_air", v["to"])
    delta_t = np.abs(v["ti"] - v["to"])
    if discharge_coefficient is None:
        cd = 0.40 + 0.0045 * delta_t
        if np.any(cd > 1):
            msg = (
                "stack_ashrae: C_d = 0.40 + 0.0045·ΔT exceeds 1 for ΔT > 133 K; "
                "the temperature difference is outside any practical range"
            )
            raise ProjectError(msg)
    else:
        cd = v["cd"]
        _require_unit_interval("discharge_coefficient", cd)
    temp_warm = np.maximum(v["ti"], v["to"]) + _KELVIN
    flow = cd * v["area"] * np.sqrt(2.0 * GRAVITY * v["h"] * delta_t / temp_warm)
    return _wrap(flow, index, "flow")


def wind_ashrae(area, wind_speed, effectiveness=0.5):
    """Wind-driven flow through inlet openings (ASHRAE).

    Parameters
    ----------
    area : float, array or Series
        Free area of the inlet openings [m²].
    wind_speed : float, array or Series
        Wind speed at the building [m s⁻¹].
    effectiveness : float, array or Series, default 0.5
        Effectiveness of openings C_v [-]: ASHRAE gives 0.5–0.6 for wind
        perpendicular to the openings and 0.25–0.35 for diagonal wind.
        Values outside 0.25–0.6 are accepted with a warning.

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹].

    Notes
    -----
    Q = C_v·A·U

    References
    ----------
    ASHRAE Handbook Fundamentals (2009), ch. 16, natural ventilation,
    wind-driven flow [MEM].
    """
    index, v = _broadcast(area=area, u=wind_speed, cv=effectiveness)
    _require_nonnegative("area", v["area"], "m²")
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    _require_unit_interval("effectiveness", v["cv"])
    if np.any((v["cv"] < 0.25) | (v["cv"] > 0.6)):
        warnings.warn(
            "wind_ashrae: effectiveness of openings outside the ASHRAE range 0.25–0.6",
            AirflowValidityWarning, stacklevel=2,
        )
    return _wrap(v["cv"] * v["area"] * v["u"], index, "flow")


def wind_and_stack_quadrature(flow_stack, flow_wind):
    """Combine stack-driven and wind-driven flows in quadrature (ASHRAE).

    Parameters
    ----------
    flow_stack : float, array or Series
        Flow from stack effect alone [m³ s⁻¹].
    flow_wind : float, array or Series
        Flow from wind alone [m³ s⁻¹].

    Returns
    -------
    flow : float, array or Series
        Combined flow [m³ s⁻¹].

    Notes
    -----
    Q = √(Q_s² + Q_w²)

    References
    ----------
    ASHRAE Handbook Fundamentals (2009), ch. 16, natural ventilation,
    combined wind and stack [MEM].
    """
    index, v = _broadcast(qs=flow_stack, qw=flow_wind)
    _require_nonnegative("flow_stack", v["qs"], "m³ s⁻¹")
    _require_nonnegative("flow_wind", v["qw"], "m³ s⁻¹")
    return _wrap(np.hypot(v["qs"], v["qw"]), index, "flow")


# --------------------------------------------------------------------------------------
# single-sided ventilation
# --------------------------------------------------------------------------------------


def single_sided_wind_warren(area, wind_speed):
    """Single-sided ventilation driven by wind turbulence (Warren & Parkins).

    Parameters
    ----------
    area : float, array or Series
        Free area of the opening [m²].
    wind_speed : float, array or Series
        Wind speed at 10 m height [m s⁻¹] (BS 5925 writes U_r).

    Returns
    -------
    flow : float, array or Series
        Volume flow exchanged through the opening [m³ s⁻¹].

    Notes
    -----
    Q = 0.025·A·U. BS 5925 gives the wind and the stack cases for one opening
    separately; using the larger of the two estimates is common practice, no
    source verified.

    References
    ----------
    Warren, P.R. and Parkins, L.M. (1984), "Single-sided ventilation through
    open windows", Proc. Windows in Building Design and Maintenance,
    Göteborg, 13–15 June 1984, p. 487. BS 5925:1991, Fig. 8(d) [MEM].
    """
    index, v = _broadcast(area=area, u=wind_speed)
    _require_nonnegative("area", v["area"], "m²")
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    return _wrap(0.025 * v["area"] * v["u"], index, "flow")


def single_sided_stack_bs5925(area, height, temp_in, temp_air, discharge_coefficient=_CD_ORIFICE):
    """Single-sided stack ventilation through one tall opening (BS 5925).

    Parameters
    ----------
    area : float, array or Series
        Free area of the opening [m²].
    height : float, array or Series
        Height of the opening (top to bottom of the free area) [m].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].
    discharge_coefficient : float, array or Series, default 0.61
        C_d of the opening [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow in (= out) through the opening [m³ s⁻¹].

    Notes
    -----
    Q = (C_d·A/3)·√(g·h·ΔT/T̄), the orifice equation integrated over the half
    of the opening below the neutral level (at mid-height), with a
    rectangular opening of height h. Wind is ignored.

    References
    ----------
    BS 5925:1991, Fig. 8(f), openings in one wall only, temperature
    difference, one opening [MEM].
    """
    index, v = _broadcast(area=area, h=height, ti=temp_in, to=temp_air, cd=discharge_coefficient)
    _require_nonnegative("area", v["area"], "m²")
    _require_nonnegative("height", v["h"], "m")
    _require_unit_interval("discharge_coefficient", v["cd"])
    delta_t, temp_mean = _stack_terms(v["ti"], v["to"])
    flow = v["cd"] * v["area"] / 3.0 * np.sqrt(GRAVITY * v["h"] * delta_t / temp_mean)
    return _wrap(flow, index, "flow")


def single_sided_two_openings_bs5925(
    area_low, area_high, height, temp_in, temp_air, discharge_coefficient=_CD_ORIFICE,
):
    """Single-sided stack ventilation through two openings at different heights (BS 5925).

    Parameters
    ----------
    area_low, area_high : float, array or Series
        Free areas A1 and A2 of the lower and upper openings [m²].
    height : float, array or Series
        Vertical distance H1 between the centres of the openings [m].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].
    discharge_coefficient : float, array or Series, default 0.61
        C_d of the openings [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹].

    Notes
    -----
    Q = C_d·A·[ε·√2 / ((1 + ε)·(1 + ε²)^½)]·√(ΔT·g·H1/T̄), with ε = A1/A2 and
    A = A1 + A2. Algebraically this equals :func:`stack_two_openings_bs5925`
    with the same two areas (the bracket times A is √2 times their series
    effective area). The formula is symmetric in ε and 1/ε. Wind is ignored.

    References
    ----------
    BS 5925:1991, Fig. 8(e), openings in one wall only, temperature
    difference, two openings [MEM].
    """
    index, v = _broadcast(
        a1=area_low, a2=area_high, h=height, ti=temp_in, to=temp_air, cd=discharge_coefficient,
    )
    _require_nonnegative("area_low", v["a1"], "m²")
    _require_nonnegative("area_high", v["a2"], "m²")
    _require_nonnegative("height", v["h"], "m")
    _require_unit_interval("discharge_coefficient", v["cd"])
    delta_t, temp_mean = _stack_terms(v["ti"], v["to"])
    closed = (v["a1"] == 0) | (v["a2"] == 0)
    a2_safe = np.where(closed, 1.0, v["a2"])
    eps = np.where(closed, 0.0, v["a1"] / a2_safe)
    factor = eps * np.sqrt(2.0) / ((1.0 + eps) * np.sqrt(1.0 + eps**2))
    area_total = v["a1"] + v["a2"]
    flow = v["cd"] * area_total * factor * np.sqrt(delta_t * GRAVITY * v["h"] / temp_mean)
    return _wrap(flow, index, "flow")


def single_sided_gids_phaff(area, height, wind_speed, temp_in, temp_air):
    """Single-sided ventilation through one open window, wind + stack + turbulence (de Gids & Phaff).

    Parameters
    ----------
    area : float, array or Series
        Free area of the opening [m²].
    height : float, array or Series
        Height of the opening [m].
    wind_speed : float, array or Series
        Wind speed at 10 m height [m s⁻¹].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].

    Returns
    -------
    flow : float, array or Series
        Volume flow exchanged through the opening [m³ s⁻¹].

    Notes
    -----
    Q = (A/2)·U_eff,  U_eff = √(C1·U10² + C2·H·ΔT + C3) with C1 = 0.001 [-],
    C2 = 0.0035 [m s⁻² K⁻¹], C3 = 0.01 [m² s⁻²]. The constant C3 gives a
    floor of 0.05·A m³ s⁻¹ with neither wind nor temperature difference.

    References
    ----------
    de Gids, W. and Phaff, H. (1982), "Ventilation rates and energy
    consumption due to open windows: a brief overview of research in the
    Netherlands", Air Infiltration Review 4(1), 4–5 [MEM: citation];
    equation [DOC].
    """
    index, v = _broadcast(area=area, h=height, u=wind_speed, ti=temp_in, to=temp_air)
    _require_nonnegative("area", v["area"], "m²")
    _require_nonnegative("height", v["h"], "m")
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    delta_t, _ = _stack_terms(v["ti"], v["to"])
    u_eff = np.sqrt(0.001 * v["u"] ** 2 + 0.0035 * v["h"] * delta_t + 0.01)
    return _wrap(0.5 * v["area"] * u_eff, index, "flow")


# --------------------------------------------------------------------------------------
# wind at the building and pressure coefficients
# --------------------------------------------------------------------------------------

# (K, a) of U_r = U_m·K·H^a; BS 5925:1991 terrain factors [MEM; table number not verified]
_TERRAIN_BS5925 = {
    "open_flat_country": (0.68, 0.17),
    "scattered_windbreaks": (0.52, 0.20),
    "urban": (0.35, 0.25),
    "city": (0.21, 0.33),
}

# (exponent a, boundary-layer thickness δ [m]); ASHRAE Handbook Fundamentals ch. 24 Table 1 [MEM]
_TERRAIN_ASHRAE = {
    "city": (0.33, 460.0),  # large city centres, ≥ 50 % of buildings taller than 21 m
    "suburban": (0.22, 370.0),  # urban and suburban areas, wooded areas
    "country": (0.14, 270.0),  # open terrain with scattered obstructions (met stations)
    "open_water": (0.10, 210.0),  # flat, unobstructed, exposed to wind over water [MEM]
}


def wind_speed_at_height_bs5925(wind_speed, height, terrain="urban"):
    """Mean wind speed at a height above ground from the meteorological wind speed (BS 5925).

    Parameters
    ----------
    wind_speed : float, array or Series
        Mean wind speed U_m at 10 m in open country (meteorological station)
        [m s⁻¹].
    height : float, array or Series
        Height above ground, usually the building height [m].
    terrain : str, default "urban"
        One of "open_flat_country", "scattered_windbreaks", "urban", "city".

    Returns
    -------
    wind_speed : float, array or Series
        Reference wind speed U_r at the height [m s⁻¹].

    Notes
    -----
    U_r = U_m·K·H^a:

    ===================== ===== =====
    terrain                K     a
    ===================== ===== =====
    open_flat_country      0.68  0.17
    scattered_windbreaks   0.52  0.20
    urban                  0.35  0.25
    city                   0.21  0.33
    ===================== ===== =====

    References
    ----------
    BS 5925:1991, terrain factors for the reference wind speed [MEM; clause
    and table number not verified]; CIBSE Guide A (2006) ch. 4 [MEM].
    """
    k, a = _lookup("terrain", terrain, _TERRAIN_BS5925)
    index, v = _broadcast(u=wind_speed, h=height)
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    _require_nonnegative("height", v["h"], "m")
    return _wrap(v["u"] * k * v["h"] ** a, index, "wind_speed")


def wind_speed_at_height_ashrae(
    wind_speed, height, terrain="suburban", height_met=10.0, terrain_met="country",
):
    """Wind speed at a height above ground from a meteorological station speed (ASHRAE power law).

    Parameters
    ----------
    wind_speed : float, array or Series
        Wind speed U_met measured at the station [m s⁻¹].
    height : float, array or Series
        Height above ground at the building [m].
    terrain : str, default "suburban"
        Terrain at the building: "city", "suburban", "country", "open_water".
    height_met : float, default 10
        Anemometer height at the station [m].
    terrain_met : str, default "country"
        Terrain at the station (same keys).

    Returns
    -------
    wind_speed : float, array or Series
        Wind speed U_H at the height [m s⁻¹].

    Warns
    -----
    AirflowValidityWarning
        If a height exceeds the boundary-layer thickness δ of its terrain,
        where the power law no longer applies.

    Notes
    -----
    U_H = U_met·(δ_met/H_met)^a_met·(H/δ)^a:

    ========== ===== =======
    terrain     a     δ [m]
    ========== ===== =======
    city        0.33  460
    suburban    0.22  370
    country     0.14  270
    open_water  0.10  210
    ========== ===== =======

    References
    ----------
    ASHRAE Handbook Fundamentals (2009/2013), ch. 24 "Airflow around
    buildings", Eq. 4 and Table 1 [MEM].
    """
    a, delta = _lookup("terrain", terrain, _TERRAIN_ASHRAE)
    a_met, delta_met = _lookup("terrain_met", terrain_met, _TERRAIN_ASHRAE)
    index, v = _broadcast(u=wind_speed, h=height, hm=height_met)
    _require_nonnegative("wind_speed", v["u"], "m s⁻¹")
    _require_nonnegative("height", v["h"], "m")
    _require_positive("height_met", v["hm"], "m")
    if np.any(v["h"] > delta) or np.any(v["hm"] > delta_met):
        warnings.warn(
            f"wind_speed_at_height_ashrae: height above the boundary-layer thickness "
            f"({delta:g} m for terrain {terrain!r}, {delta_met:g} m for {terrain_met!r}); "
            "the power law does not apply there",
            AirflowValidityWarning, stacklevel=2,
        )
    result = v["u"] * (delta_met / v["hm"]) ** a_met * (v["h"] / delta) ** a
    return _wrap(result, index, "wind_speed")


def cp_swami_chandra(incidence, side_ratio=1.0, cp_normal=0.6):
    """Surface-averaged wind pressure coefficient of a low-rise wall (Swami & Chandra).

    Parameters
    ----------
    incidence : float, array or Series
        Wind incidence angle β measured from the outward normal of the wall
        (0 = wind blowing straight at the wall) [°]. Folded into 0–180° by
        symmetry.
    side_ratio : float, array or Series, default 1.0
        Width of this wall divided by the width of the adjacent wall [-].
        The correlation was fitted for about 0.25–4 [MEM]; outside that a
        warning is issued.
    cp_normal : float, array or Series, default 0.6
        Surface-averaged C_p at normal incidence [-].

    Returns
    -------
    cp : float, array or Series
        Surface-averaged wind pressure coefficient [-].

    Notes
    -----
    C_p = C_p(0)·ln[1.248 − 0.703·sin(β/2) − 1.175·sin²β + 0.131·sin³(2βG)
    + 0.769·cos(β/2) + 0.07·G²·sin²(β/2) + 0.717·cos²(β/2)], G = ln(side_ratio),
    trigonometric arguments in radians. The bracket equals e¹·⁰⁰⁶ at β = 0,
    so C_p(0°) ≈ 1.006·C_p(0). For side_ratio ≠ 1 the sin³(2βG) term is
    used as written, with β in radians [MEM]; only the square-plan values
    have been checked against a table.

    References
    ----------
    Swami, M.V. and Chandra, S. (1988), "Correlations for pressure
    distribution on buildings and calculation of natural-ventilation
    airflow", ASHRAE Transactions 94(1), 243–266 [MEM: formula and
    citation]; square-plan values [DOC].
    """
    index, v = _broadcast(beta=incidence, s=side_ratio, cp0=cp_normal)
    _require_positive("side_ratio", v["s"], "(ratio)")
    if np.any((v["s"] < 0.25) | (v["s"] > 4.0)):
        warnings.warn(
            "cp_swami_chandra: side_ratio outside about 0.25–4, the range of the correlation",
            AirflowValidityWarning, stacklevel=2,
        )
    folded = np.abs(np.mod(v["beta"] + 180.0, 360.0) - 180.0)
    b = np.radians(folded)
    g = np.log(v["s"])
    bracket = (
        1.248 - 0.703 * np.sin(b / 2) - 1.175 * np.sin(b) ** 2
        + 0.131 * np.sin(2 * b * g) ** 3 + 0.769 * np.cos(b / 2)
        + 0.07 * g**2 * np.sin(b / 2) ** 2 + 0.717 * np.cos(b / 2) ** 2
    )
    return _wrap(v["cp0"] * np.log(bracket), index, "cp")


# --------------------------------------------------------------------------------------
# ventilation requirements
# --------------------------------------------------------------------------------------

# EN 16798-1:2019 Annex B, method 1 [MEM]
_EN16798_PER_PERSON = {"I": 10.0, "II": 7.0, "III": 4.0, "IV": 2.5}  # [L s⁻¹ per person]
_EN16798_PER_AREA = {  # [L s⁻¹ m⁻²]
    "very_low": {"I": 0.5, "II": 0.35, "III": 0.2, "IV": 0.15},
    "low": {"I": 1.0, "II": 0.7, "III": 0.4, "IV": 0.3},
    "not_low": {"I": 2.0, "II": 1.4, "III": 0.8, "IV": 0.6},
}


def fresh_air_ashrae62(people, floor_area, rate_per_person=2.5, rate_per_area=0.3):
    """Breathing-zone outdoor airflow (ASHRAE 62.1 ventilation rate procedure).

    Parameters
    ----------
    people : float, array or Series
        Number of occupants P_z [-].
    floor_area : float, array or Series
        Occupiable floor area A_z [m²].
    rate_per_person : float, default 2.5
        R_p [L s⁻¹ per person]; 2.5 for office space.
    rate_per_area : float, default 0.3
        R_a [L s⁻¹ m⁻²]; 0.3 for office space.

    Returns
    -------
    flow : float, array or Series
        Breathing-zone outdoor airflow V_bz [L s⁻¹] (note: litres).

    Notes
    -----
    V_bz = R_p·P_z + R_a·A_z. The zone outdoor airflow is V_bz/E_z with the
    zone air distribution effectiveness E_z, not applied here. Outdoor air
    is assumed acceptable; where it is not, ASHRAE 62.1 and local codes
    require treatment, which natural ventilation cannot provide.

    References
    ----------
    ASHRAE 62.1-2016 (to 2022), Eq. 6.2.2.1 and Table 6.2.2.1, office space:
    5 cfm/person and 0.06 cfm/ft² [DOC]; SI values 2.5 L/s·person and
    0.3 L/s·m² [MEM].
    """
    index, v = _broadcast(p=people, a=floor_area, rp=rate_per_person, ra=rate_per_area)
    _require_nonnegative("people", v["p"], "persons")
    _require_nonnegative("floor_area", v["a"], "m²")
    _require_nonnegative("rate_per_person", v["rp"], "L s⁻¹ per person")
    _require_nonnegative("rate_per_area", v["ra"], "L s⁻¹ m⁻²")
    return _wrap(v["rp"] * v["p"] + v["ra"] * v["a"], index, "flow")


def fresh_air_en16798(people, floor_area, category="II", building="low"):
    """Design outdoor airflow for occupants and building emissions (EN 16798-1 method 1).

    Parameters
    ----------
    people : float, array or Series
        Number of occupants [-].
    floor_area : float, array or Series
        Floor area [m²].
    category : str, default "II"
        Indoor environment category "I", "II", "III" or "IV".
    building : str, default "low"
        Pollution class of the building: "very_low", "low" or "not_low"
        (not low-polluting).

    Returns
    -------
    flow : float, array or Series
        Outdoor airflow [L s⁻¹] (note: litres).

    Notes
    -----
    q = n·q_p + A·q_B with

    ======== ====== ========= ===== =========
    category  q_p    very_low  low   not_low
    ======== ====== ========= ===== =========
    I         10     0.5       1.0   2.0
    II        7      0.35      0.7   1.4
    III       4      0.2       0.4   0.8
    IV        2.5    0.15      0.3   0.6
    ======== ====== ========= ===== =========

    q_p in L s⁻¹ per person, q_B in L s⁻¹ m⁻².

    References
    ----------
    EN 16798-1:2019, Annex B, method 1 (rates for occupants and building
    emissions) [MEM: values and table numbers not verified].
    """
    qp = _lookup("category", category, _EN16798_PER_PERSON)
    qb = _lookup("building", building, _EN16798_PER_AREA)[category]
    index, v = _broadcast(p=people, a=floor_area)
    _require_nonnegative("people", v["p"], "persons")
    _require_nonnegative("floor_area", v["a"], "m²")
    return _wrap(qp * v["p"] + qb * v["a"], index, "flow")


def co2_rise_steady(flow_per_person, generation=0.0052):
    """Steady-state CO2 concentration above outdoor for a given outdoor airflow per person.

    Parameters
    ----------
    flow_per_person : float, array or Series
        Outdoor airflow per person [L s⁻¹ per person].
    generation : float, array or Series, default 0.0052
        CO2 generation per person [L s⁻¹ per person]; 0.0052 for an adult
        at about 1.2 met.

    Returns
    -------
    co2_rise : float, array or Series
        Indoor minus outdoor CO2 concentration [ppm]; ``inf`` (with a
        warning) where the flow is zero.

    Notes
    -----
    ΔC = G/Q·10⁶ (steady-state, well-mixed mass balance). CO2 is an
    indicator of occupant-generated pollutants, not a measure of outdoor
    air quality.

    References
    ----------
    ASHRAE 62.1 informative appendix on CO2 (0.0052 L/s per person)
    [MEM]; ASHRAE Technical FAQ #35: about 700 ppm above outdoor indicates
    about 7.5 L/s per person [DOC].
    """
    index, v = _broadcast(q=flow_per_person, g=generation)
    _require_nonnegative("flow_per_person", v["q"], "L s⁻¹ per person")
    _require_nonnegative("generation", v["g"], "L s⁻¹ per person")
    zero = v["q"] == 0
    if np.any(zero & (v["g"] > 0)):
        warnings.warn(
            "co2_rise_steady: zero outdoor airflow, no steady state; CO2 rise returned as inf",
            AirflowValidityWarning, stacklevel=2,
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        rise = np.where(zero, np.where(v["g"] > 0, np.inf, 0.0), v["g"] / v["q"] * 1e6)
    return _wrap(rise, index, "co2_rise")


def flow_per_person_for_co2_rise(co2_rise, generation=0.0052):
    """Outdoor airflow per person that holds CO2 at a given rise above outdoor (steady state).

    Parameters
    ----------
    co2_rise : float, array or Series
        Allowed indoor minus outdoor CO2 concentration, > 0 [ppm].
    generation : float, array or Series, default 0.0052
        CO2 generation per person [L s⁻¹ per person].

    Returns
    -------
    flow : float, array or Series
        Outdoor airflow per person [L s⁻¹ per person].

    Notes
    -----
    Q = G/ΔC·10⁶ (inverse of :func:`co2_rise_steady`).

    References
    ----------
    Steady-state mass balance, e.g. ASHRAE 62.1 informative appendix on CO2
    [MEM]; EN 16798-1:2019 Annex B, method 2 [MEM].
    """
    index, v = _broadcast(c=co2_rise, g=generation)
    _require_positive("co2_rise", v["c"], "ppm")
    _require_nonnegative("generation", v["g"], "L s⁻¹ per person")
    return _wrap(v["g"] / v["c"] * 1e6, index, "flow")


def flow_to_remove_heat(power, delta_t, rho=RHO_AIR, cp=1005.0):
    """Outdoor airflow that removes a heat gain for a given air temperature rise.

    Parameters
    ----------
    power : float, array or Series
        Sensible heat gain to remove [W]. Zero or negative needs no flow.
    delta_t : float, array or Series
        Allowed indoor temperature minus outdoor (supply) air temperature [K].
    rho : float, default 1.2
        Air density [kg m⁻³].
    cp : float, default 1005
        Specific heat capacity of air [J kg⁻¹ K⁻¹].

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹]; ``inf`` (with a warning) where heat must be
        removed but delta_t ≤ 0, i.e. the outdoor air is no cooler than the
        indoor limit and ventilation cannot remove the heat.

    Notes
    -----
    Q = P/(ρ·c_p·ΔT). A steady-state balance: it ignores thermal mass and
    gives no assurance against overheating, which needs a dynamic
    assessment against the criteria the local code or client requires.

    References
    ----------
    Sensible heat balance of an air stream, e.g. CIBSE Guide A (2015) and
    ASHRAE Handbook Fundamentals (2009) ch. 18, q_s = 1.23·Q·Δt with Q in
    L/s [MEM].
    """
    index, v = _broadcast(p=power, dt=delta_t, rho=rho, cp=cp)
    _require_positive("rho", v["rho"], "kg m⁻³")
    _require_positive("cp", v["cp"], "J kg⁻¹ K⁻¹")
    need = v["p"] > 0
    impossible = need & (v["dt"] <= 0)
    if np.any(impossible):
        warnings.warn(
            f"flow_to_remove_heat: delta_t ≤ 0 K in {int(np.sum(impossible))} case(s) with a "
            "heat gain to remove; outdoor air is not cooler than the indoor limit, so "
            "ventilation cannot remove the heat (flow returned as inf)",
            AirflowValidityWarning, stacklevel=2,
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        flow = np.where(
            need, np.where(impossible, np.inf, v["p"] / (v["rho"] * v["cp"] * v["dt"])), 0.0
        )
    return _wrap(flow, index, "flow")


# --------------------------------------------------------------------------------------
# sizing: invert a flow method for the free area
# --------------------------------------------------------------------------------------


def _unit_flow_stack_two(area_ratio=1.0, discharge_coefficient=_CD_ORIFICE, *, height,
                         temp_in, temp_air):
    r = np.asarray(area_ratio, dtype=float)
    return stack_two_openings_bs5925(
        1.0 / (1.0 + r), r / (1.0 + r), height, temp_in, temp_air, discharge_coefficient
    )


def _unit_flow_cross_wind(area_ratio=1.0, discharge_coefficient=_CD_ORIFICE, *, wind_speed,
                          cp_windward, cp_leeward):
    r = np.asarray(area_ratio, dtype=float)
    return cross_wind_bs5925(
        1.0 / (1.0 + r), r / (1.0 + r), wind_speed, cp_windward, cp_leeward,
        discharge_coefficient,
    )


def _unit_flow_combined(area_shares=(0.25, 0.25, 0.25, 0.25), discharge_coefficient=_CD_ORIFICE,
                        *, height, wind_speed, cp_windward, cp_leeward, temp_in, temp_air):
    shares = tuple(area_shares)
    if len(shares) != 4 or any(np.any(np.asarray(s) < 0) for s in shares):
        msg = (
            "area_shares must be 4 non-negative shares (windward low, windward high, "
            f"leeward low, leeward high), got {area_shares!r}"
        )
        raise ProjectError(msg)
    total = sum(np.asarray(s, dtype=float) for s in shares)
    if np.any(total <= 0):
        msg = f"area_shares must not all be zero, got {area_shares!r}"
        raise ProjectError(msg)
    s1, s2, s3, s4 = (np.asarray(s, dtype=float) / total for s in shares)
    return wind_and_stack_bs5925(
        s1, s2, s3, s4, height, wind_speed, cp_windward, cp_leeward, temp_in, temp_air,
        discharge_coefficient,
    )


def _unit_flow_single_wind(*, wind_speed):
    return single_sided_wind_warren(1.0, wind_speed)


def _unit_flow_single_stack(discharge_coefficient=_CD_ORIFICE, *, height, temp_in, temp_air):
    return single_sided_stack_bs5925(1.0, height, temp_in, temp_air, discharge_coefficient)


def _unit_flow_single_two(area_ratio=1.0, discharge_coefficient=_CD_ORIFICE, *, height,
                          temp_in, temp_air):
    r = np.asarray(area_ratio, dtype=float)
    return single_sided_two_openings_bs5925(
        1.0 / (1.0 + r), r / (1.0 + r), height, temp_in, temp_air, discharge_coefficient
    )


def _unit_flow_gids_phaff(*, height, wind_speed, temp_in, temp_air):
    return single_sided_gids_phaff(1.0, height, wind_speed, temp_in, temp_air)


def _unit_flow_stack_ashrae(discharge_coefficient=None, *, height_npl, temp_in, temp_air):
    return stack_ashrae(1.0, height_npl, temp_in, temp_air, discharge_coefficient)


def _unit_flow_wind_ashrae(effectiveness=0.5, *, wind_speed):
    return wind_ashrae(1.0, wind_speed, effectiveness)


# method -> (unit-area flow function, required conditions, optional conditions)
_SIZING = {
    "stack_two_openings_bs5925": (
        _unit_flow_stack_two, ("height", "temp_in", "temp_air"),
        ("area_ratio", "discharge_coefficient"),
    ),
    "cross_wind_bs5925": (
        _unit_flow_cross_wind, ("wind_speed", "cp_windward", "cp_leeward"),
        ("area_ratio", "discharge_coefficient"),
    ),
    "wind_and_stack_bs5925": (
        _unit_flow_combined,
        ("height", "wind_speed", "cp_windward", "cp_leeward", "temp_in", "temp_air"),
        ("area_shares", "discharge_coefficient"),
    ),
    "single_sided_wind_warren": (_unit_flow_single_wind, ("wind_speed",), ()),
    "single_sided_stack_bs5925": (
        _unit_flow_single_stack, ("height", "temp_in", "temp_air"), ("discharge_coefficient",),
    ),
    "single_sided_two_openings_bs5925": (
        _unit_flow_single_two, ("height", "temp_in", "temp_air"),
        ("area_ratio", "discharge_coefficient"),
    ),
    "single_sided_gids_phaff": (
        _unit_flow_gids_phaff, ("height", "wind_speed", "temp_in", "temp_air"), (),
    ),
    "stack_ashrae": (
        _unit_flow_stack_ashrae, ("height_npl", "temp_in", "temp_air"),
        ("discharge_coefficient",),
    ),
    "wind_ashrae": (_unit_flow_wind_ashrae, ("wind_speed",), ("effectiveness",)),
}


def required_free_area(flow, method="stack_two_openings_bs5925", **conditions):
    """Total free area of openings that delivers a target flow with a chosen flow method.

    Parameters
    ----------
    flow : float, array or Series
        Target volume flow [m³ s⁻¹].
    method : str, default "stack_two_openings_bs5925"
        The flow function to invert, by name: "stack_two_openings_bs5925",
        "cross_wind_bs5925", "wind_and_stack_bs5925",
        "single_sided_wind_warren", "single_sided_stack_bs5925",
        "single_sided_two_openings_bs5925", "single_sided_gids_phaff",
        "stack_ashrae", "wind_ashrae".
    **conditions
        The driving conditions, named as in the flow function (e.g.
        ``height``, ``temp_in``, ``temp_air``, ``wind_speed``,
        ``cp_windward``, ``cp_leeward``, ``height_npl``,
        ``discharge_coefficient``, ``effectiveness``), plus the split of the
        area between openings:

        * ``area_ratio`` [-], default 1, for two-opening methods: upper/lower
          (stack and single-sided two openings) or leeward/windward (cross
          wind).
        * ``area_shares``, default (0.25, 0.25, 0.25, 0.25), for
          "wind_and_stack_bs5925": relative shares of windward low, windward
          high, leeward low and leeward high openings.

    Returns
    -------
    free_area : float, array or Series
        Total free area of all openings together [m²]; with ratio r the two
        openings are A/(1 + r) and r·A/(1 + r). ``inf`` (with a warning)
        where the conditions give no driving force.

    Notes
    -----
    Every method here is proportional to the total area when the split
    between openings is fixed (Q = A·q₁, q₁ = flow per m² of total area;
    for the BS 5925 combined rule both branches are proportional, so their
    maximum is too). Hence A = Q/q₁, with q₁ computed by the flow function
    itself at A = 1 m². For the single-opening stack methods the opening
    height is an input, so the result is the area at that height.

    The area is the free (effective aerodynamic) area. Whether openings of
    that size are safe and acceptable (fall from height, security, rain,
    noise, outdoor air quality, fire and smoke strategy) is for local codes
    and licensed practice.

    References
    ----------
    As for each flow function; inversion [CALC].

    Examples
    --------
    >>> required_free_area(0.1, "single_sided_wind_warren", wind_speed=4.0)  # 0.1/(0.025·4)
    1.0
    """
    entry = _lookup("method", method, _SIZING)
    func, required, optional = entry
    allowed = set(required) | set(optional)
    unknown = sorted(set(conditions) - allowed)
    if unknown:
        msg = (
            f"required_free_area: condition(s) {', '.join(unknown)} not used by method "
            f"{method!r}; allowed: {', '.join(required + optional)}"
        )
        raise ProjectError(msg)
    missing = [k for k in required if k not in conditions]
    if missing:
        msg = (
            f"required_free_area: method {method!r} needs condition(s) {', '.join(missing)}"
        )
        raise ProjectError(msg)
    if "area_ratio" in conditions:
        _require_positive("area_ratio", np.asarray(conditions["area_ratio"], dtype=float), "(ratio)")
    unit_flow = func(**conditions)
    index, v = _broadcast(flow=flow, q1=unit_flow)
    _require_nonnegative("flow", v["flow"], "m³ s⁻¹")
    no_drive = (v["q1"] <= 0) & (v["flow"] > 0)
    if np.any(no_drive):
        warnings.warn(
            f"required_free_area: no driving force for method {method!r} in "
            f"{int(np.sum(no_drive))} case(s) (no wind, no temperature difference or "
            "no height); free area returned as inf",
            AirflowValidityWarning, stacklevel=2,
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        area = np.where(v["flow"] == 0, 0.0, np.where(no_drive, np.inf, v["flow"] / v["q1"]))
    return _wrap(area, index, "free_area")


# --------------------------------------------------------------------------------------
# rule-of-thumb checks
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RuleCheck:
    """Result of a rule-of-thumb check.

    Attributes
    ----------
    value : float, array or Series
        The quantity checked (unit as stated in ``rule``).
    limit : float, array or Series
        The limit it is compared with (same unit).
    passed : bool, array or Series
        Whether the rule is met.
    rule : str
        The rule in words.
    source : str
        Where the rule comes from, with its provenance tag.
    """

    value: Any
    limit: Any
    passed: Any
    rule: str
    source: str


def check_free_area_share(free_area, floor_area, minimum_pct=4.0):
    """Check openable free area against a minimum share of the floor area.

    Parameters
    ----------
    free_area : float, array or Series
        Openable free area to outdoors [m²].
    floor_area : float, array or Series
        Net occupiable floor area served [m²], > 0.
    minimum_pct : float, default 4.0
        Minimum share [%]. 4 % is the ASHRAE 62.1 natural ventilation
        procedure value; local codes differ (e.g. 5 % or more in some
        jurisdictions) and govern.

    Returns
    -------
    RuleCheck
        value = 100·free_area/floor_area [%], limit = minimum_pct [%],
        passed = value ≥ limit.

    Notes
    -----
    A prescriptive screening rule. Meeting it does not show that the room
    will not overheat, that the openings are secure or safe from falls, that
    outdoor air is clean and quiet enough to open windows, or that the fire
    and smoke strategy is met: those are for local codes and licensed
    practice. ASHRAE 62.1 also limits the distance from the openings (see
    :func:`check_plan_depth`) and sets separate rules for interior rooms
    ventilated through an adjoining room (8 % and at least 2.3 m²).

    References
    ----------
    ASHRAE 62.1-2016, §6.4 natural ventilation procedure: openable area ≥ 4 %
    of the net occupiable floor area [DOC].
    """
    index, v = _broadcast(a=free_area, f=floor_area, m=minimum_pct)
    _require_nonnegative("free_area", v["a"], "m²")
    _require_positive("floor_area", v["f"], "m²")
    _require_nonnegative("minimum_pct", v["m"], "%")
    share = 100.0 * v["a"] / v["f"]
    passed = share >= v["m"]
    return RuleCheck(
        value=_wrap(share, index, "free_area_share"),
        limit=_wrap(v["m"], index, "minimum_pct"),
        passed=_wrap_bool(passed, index),
        rule=(
            "openable free area to outdoors ≥ "
            f"{_describe(minimum_pct)} % of the net occupiable floor area"
        ),
        source="ASHRAE 62.1-2016 §6.4 natural ventilation procedure (4 %) [DOC]",
    )


# arrangement -> (depth / ceiling height limit, rule text)
_DEPTH_RULES = {
    "single_sided": (2.0, "single-sided ventilation, openings at one level: depth ≤ 2 × H"),
    "single_sided_two_level": (
        2.5, "single-sided ventilation, openings at two levels: depth ≤ 2.5 × H",
    ),
    "cross": (5.0, "cross ventilation: depth between opposite facades ≤ 5 × H"),
    "stack": (5.0, "stack ventilation: distance from inlet facade to the stack ≤ 5 × H"),
}


def check_plan_depth(depth, ceiling_height, arrangement):
    """Check a room's plan depth against the limit for its ventilation arrangement.

    Parameters
    ----------
    depth : float, array or Series
        Plan depth [m]: from the openings for single-sided, between opposite
        facades for cross ventilation, from the inlet facade to the stack for
        stack ventilation.
    ceiling_height : float, array or Series
        Floor-to-ceiling height H [m], > 0.
    arrangement : str
        "single_sided", "single_sided_two_level", "cross" or "stack".

    Returns
    -------
    RuleCheck
        value = depth [m], limit = factor·H [m], passed = depth ≤ limit.

    Notes
    -----
    Limits: single-sided 2·H, single-sided with openings at two levels
    2.5·H, cross 5·H, stack 5·H. A rule of thumb for early design: passing
    does not show adequate summer comfort (overheating needs a dynamic
    assessment to the criteria of the local code or client), and stacks and
    open routes through a building affect fire and smoke spread, which the
    fire strategy under local codes and licensed practice must address.

    References
    ----------
    CIBSE AM10:2005, Natural ventilation in non-domestic buildings, design
    rules for plan depth [MEM: values from memory, clause not verified];
    CIBSE Guide A [MEM]. ASHRAE 62.1-2016 §6.4 uses 2H (single side) and 5H
    (opposite sides) similarly [MEM].
    """
    factor, text = _lookup("arrangement", arrangement, _DEPTH_RULES)
    index, v = _broadcast(d=depth, h=ceiling_height)
    _require_nonnegative("depth", v["d"], "m")
    _require_positive("ceiling_height", v["h"], "m")
    limit = factor * v["h"]
    return RuleCheck(
        value=_wrap(v["d"], index, "depth"),
        limit=_wrap(limit, index, "depth_limit"),
        passed=_wrap_bool(v["d"] <= limit, index),
        rule=f"{text} (H = floor-to-ceiling height)",
        source="CIBSE AM10:2005 plan-depth rules of thumb [MEM]",
    )


def _wrap_bool(passed: np.ndarray, index: pd.Index | None):
    if index is not None:
        return pd.Series(passed, index=index, name="passed")
    if np.ndim(passed) == 0:
        return bool(passed)
    return passed


def _describe(value: Any) -> str:
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0 or np.all(arr == arr.flat[0]):
        return f"{float(arr.flat[0]):g}"
    return "the given"


# --------------------------------------------------------------------------------------
# a zone's openings as a whole, by ventilation arrangement
# --------------------------------------------------------------------------------------

#: Ventilation arrangements of a zone and the published method used for each.
ARRANGEMENT_METHODS = {
    "single_sided": "larger of single-sided wind (Warren & Parkins 1984, BS 5925 Fig. 8(d)) and "
                    "single-opening stack (BS 5925:1991 Fig. 8(f))",
    "single_sided_two_level": "larger of single-sided wind (Warren & Parkins 1984) and two-opening "
                              "single-sided stack, equal areas (BS 5925:1991 Fig. 8(e))",
    "cross": "BS 5925:1991 Fig. 8(c) wind and stack combined (larger of cross wind, Fig. 8(a), and stack, "
             "Fig. 8(b)), area split equally windward/leeward and low/high",
    "stack": "stack through low inlets and high outlets, equal areas (BS 5925:1991 Fig. 8(b)); wind ignored",
}


def arrangement_flow(arrangement, free_area, *, wind_speed_met, wind_speed_building, temp_in, temp_air,
                     opening_height, stack_height=0.0, cp_windward=0.5, cp_leeward=-0.3,
                     discharge_coefficient=_CD_ORIFICE):
    """Airflow through all of a zone's openings for its ventilation arrangement.

    Parameters
    ----------
    arrangement : str
        "single_sided", "single_sided_two_level", "cross" or "stack".
    free_area : float, array or Series
        Total free area of the zone's openings [m²].
    wind_speed_met : float, array or Series
        Weather-station wind speed at 10 m (single-sided wind methods) [m s⁻¹].
    wind_speed_building : float, array or Series
        Mean wind speed at the openings' height (cross ventilation) [m s⁻¹].
    temp_in, temp_air : float, array or Series
        Indoor and outdoor air temperatures [°C].
    opening_height : float
        Height of one opening (single-opening stack) [m].
    stack_height : float
        Vertical distance between low and high opening centres [m].
    cp_windward, cp_leeward : float
        Wind pressure coefficients (cross ventilation) [-].
    discharge_coefficient : float
        Cd of the openings [-].

    Returns
    -------
    flow : float, array or Series
        Volume flow [m³ s⁻¹].

    Notes
    -----
    Every method is proportional to the total free area once the split
    between openings is fixed: Q = A·q₁(conditions). The methods used are
    listed in :data:`ARRANGEMENT_METHODS`. Taking the larger of wind- and
    stack-driven flow follows BS 5925:1991 for single-sided and cross
    ventilation [from memory].

    References
    ----------
    BS 5925:1991, clause 9 and Fig. 8; Warren, P.R. & Parkins, L.M. (1984),
    "Single-sided ventilation through open windows", ASHRAE/DOE conference
    on thermal performance of building envelopes.
    """
    area = np.asarray(free_area, dtype=float)
    if arrangement == "single_sided":
        q1 = np.maximum(_unit_flow_single_wind(wind_speed=wind_speed_met),
                        _unit_flow_single_stack(discharge_coefficient, height=opening_height,
                                                temp_in=temp_in, temp_air=temp_air))
    elif arrangement == "single_sided_two_level":
        q1 = np.maximum(_unit_flow_single_wind(wind_speed=wind_speed_met),
                        _unit_flow_single_two(1.0, discharge_coefficient, height=stack_height,
                                              temp_in=temp_in, temp_air=temp_air))
    elif arrangement == "cross":
        if np.all(np.asarray(stack_height) == 0):
            q1 = _unit_flow_cross_wind(1.0, discharge_coefficient, wind_speed=wind_speed_building,
                                       cp_windward=cp_windward, cp_leeward=cp_leeward)
        else:
            q1 = _unit_flow_combined((0.25, 0.25, 0.25, 0.25), discharge_coefficient, height=stack_height,
                                     wind_speed=wind_speed_building, cp_windward=cp_windward,
                                     cp_leeward=cp_leeward, temp_in=temp_in, temp_air=temp_air)
    elif arrangement == "stack":
        q1 = _unit_flow_stack_two(1.0, discharge_coefficient, height=stack_height, temp_in=temp_in,
                                  temp_air=temp_air)
    else:
        msg = f"arrangement must be one of {', '.join(ARRANGEMENT_METHODS)}, got {arrangement!r}"
        raise ProjectError(msg)
    result = area * np.asarray(q1, dtype=float)
    for value in (free_area, wind_speed_met, wind_speed_building, temp_in, temp_air):
        if isinstance(value, pd.Series):
            return pd.Series(np.broadcast_to(result, value.shape), index=value.index, name="flow")
    return float(result) if np.ndim(result) == 0 else result
