"""Hourly thermal response of zones: ISO 13790:2008 simple hourly method (5R1C).

The zone is the five-resistance, one-capacitance network of ISO 13790:2008
Annex C: an air node, a combined internal-surface node ("star" node) and one
thermal-mass node, joined to the outdoor air by ventilation, windows and opaque
elements. The mass node is marched with the Crank–Nicolson scheme of Annex C
(equation C.4) with a one-hour step; heating and cooling needs follow the
interpolation procedure of §C.4.2 (equation C.13).

Every function works on a batch of ``n`` independent zones (zones × design
variants) at once: zone parameters are arrays of shape ``(n,)``, hourly inputs
are arrays of shape ``(T, n)``. The time recurrence loops once over the hours
for the whole batch; there is no Python loop over zones.

Public functions
----------------
zone_parameters        5R1C parameters from floor area, UA values and mass class
ventilation_heat_transfer  H_ve from an outdoor-air flow
step_crank_nicolson    one hour of Annex C (C.1–C.12), literal form
simulate               hourly run with optional set-point control (§C.4.2)
steady_state           closed-form steady solution of the same network
energy_balance         heat-balance terms of a run, for closure checks
simulate_loop_reference  plain scalar per-hour loop for one zone (tests, benchmark)

Symbols follow ISO 13790:2008 (H_tr,is, H_tr,w, H_tr,ms, H_tr,em, H_ve, C_m,
A_m, A_t, φ_ia, φ_st, φ_m); they are spelt ``h_tr_is`` etc. in code.

Sources: the equations C.1–C.13, the constants 4.5, 3.45, 9.1 and 10 W m⁻²
and the mass classes of Table 12 (§12.3.1.2) are as digested in
REFERENCES.md §7 [DOC]; other clause and equation numbers quoted here
(§7.2.2.2, §9.3.1, §12.2.2, Eqs. 9, 21, 63, 64) are from memory [MEM] and
should be checked against the standard.

A feature of the standard worth knowing: the gain split C.1–C.3 delivers
φ_int + φ_sol − H_tr,w/(9.1·A_t)·(0.5·φ_int + φ_sol) to the nodes; the
remainder is treated as leaving through the glazing. :func:`energy_balance`
reports it as ``gains_not_delivered``.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from calcs.errors import ProjectError

__all__ = [
    "AIR_HEAT_CAPACITY",
    "COEFF_AIR_SURFACE",
    "COEFF_SURFACE_MASS",
    "MASS_CLASSES",
    "MIN_ZONES_PER_THREAD",
    "SURFACE_AREA_RATIO",
    "STEP_SECONDS",
    "TEST_POWER_DENSITY",
    "EnergyBalance",
    "MassClass",
    "SimulationResult",
    "SteadyState",
    "StepResult",
    "ZoneParameters",
    "energy_balance",
    "simulate",
    "simulate_loop_reference",
    "steady_state",
    "step_crank_nicolson",
    "thread_count",
    "ventilation_heat_transfer",
    "zone_parameters",
]

# ---------------------------------------------------------------------------
# Constants of ISO 13790:2008 (see the digest in REFERENCES.md §7)
# ---------------------------------------------------------------------------

#: Λ_at, ratio of the area of all surfaces facing the zone to the floor area
#: [–] (ISO 13790:2008 §7.2.2.2).
SURFACE_AREA_RATIO = 4.5

#: h_is, heat transfer coefficient between the air node and the surface node
#: [W m⁻² K⁻¹] (ISO 13790:2008 §7.2.2.2).
COEFF_AIR_SURFACE = 3.45

#: h_ms, heat transfer coefficient between the surface node and the mass node
#: [W m⁻² K⁻¹] (ISO 13790:2008 §12.2.2).
COEFF_SURFACE_MASS = 9.1

#: φ_HC,10 / A_f, the trial heating power density of the §C.4.2 procedure
#: [W m⁻²].
TEST_POWER_DENSITY = 10.0

#: ρ_a·c_a, volumetric heat capacity of air used for H_ve [J m⁻³ K⁻¹]
#: (ISO 13790:2008 §9.3.1).
AIR_HEAT_CAPACITY = 1200.0

#: Length of one time step [s]. The method is hourly.
STEP_SECONDS = 3600.0

#: Weight of the air temperature in the operative temperature, C.12 [–].
_OPERATIVE_AIR_WEIGHT = 0.3


@dataclass(frozen=True)
class MassClass:
    """Default effective mass area and internal heat capacity of a mass class.

    Attributes
    ----------
    area_ratio : float
        A_m / A_f, effective mass area per floor area [–].
    capacity_per_area : float
        C_m / A_f, internal heat capacity per floor area [J K⁻¹ m⁻²].
    """

    area_ratio: float
    capacity_per_area: float


#: Mass classes of ISO 13790:2008 §12.3.1.2, Table 12 (defaults of A_m and C_m
#: per floor area).
MASS_CLASSES: Mapping[str, MassClass] = MappingProxyType(
    {
        "very_light": MassClass(2.5, 80_000.0),
        "light": MassClass(2.5, 110_000.0),
        "medium": MassClass(2.5, 165_000.0),
        "heavy": MassClass(3.0, 260_000.0),
        "very_heavy": MassClass(3.5, 370_000.0),
    }
)


# ---------------------------------------------------------------------------
# Zone parameters
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class ZoneParameters:
    """Parameters of the 5R1C network for a batch of ``n`` zones.

    Every attribute is a float array of shape ``(n,)``. Build instances with
    :func:`zone_parameters`, which checks the values.

    Attributes
    ----------
    floor_area : ndarray
        A_f, conditioned floor area [m²].
    area_internal : ndarray
        A_t, area of all surfaces facing the zone [m²].
    area_mass : ndarray
        A_m, effective mass area [m²].
    capacity : ndarray
        C_m, internal heat capacity [J K⁻¹].
    h_tr_op : ndarray
        H_tr,op, transmission heat transfer coefficient of the opaque
        elements [W K⁻¹].
    h_tr_em : ndarray
        H_tr,em, outdoor-to-mass part of H_tr,op [W K⁻¹].
    h_tr_w : ndarray
        H_tr,w, transmission heat transfer coefficient of windows, doors and
        other elements without mass [W K⁻¹].
    h_tr_is : ndarray
        H_tr,is, coupling between air node and surface node [W K⁻¹].
    h_tr_ms : ndarray
        H_tr,ms, coupling between surface node and mass node [W K⁻¹].
    """

    floor_area: np.ndarray
    area_internal: np.ndarray
    area_mass: np.ndarray
    capacity: np.ndarray
    h_tr_op: np.ndarray
    h_tr_em: np.ndarray
    h_tr_w: np.ndarray
    h_tr_is: np.ndarray
    h_tr_ms: np.ndarray

    @property
    def n_zones(self) -> int:
        """Number of zones in the batch."""
        return int(self.floor_area.shape[0])

    @property
    def share_mass(self) -> np.ndarray:
        """A_m / A_t, share of the non-air gains given to the mass node, C.2 [–]."""
        return self.area_mass / self.area_internal

    @property
    def share_returned(self) -> np.ndarray:
        """H_tr,w / (h_ms·A_t), share of the non-air gains that C.3 gives to no
        node (it leaves through the glazing) [–]."""
        return self.h_tr_w / (COEFF_SURFACE_MASS * self.area_internal)

    @property
    def share_surface(self) -> np.ndarray:
        """1 − A_m/A_t − H_tr,w/(h_ms·A_t), share given to the surface node, C.3 [–]."""
        return 1.0 - self.share_mass - self.share_returned


def _zone_array(value, name: str, where: str) -> np.ndarray:
    """Float array of dimension ≤ 1 with finite values, else ProjectError."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        msg = f"{where}: {name} must be a number or a 1-D array of numbers, got {value!r}"
        raise ProjectError(msg) from None
    if arr.ndim > 1:
        msg = f"{where}: {name} must be a scalar or a 1-D array over zones, got shape {arr.shape}"
        raise ProjectError(msg)
    if not np.all(np.isfinite(arr)):
        bad = int(np.count_nonzero(~np.isfinite(arr)))
        msg = f"{where}: {name} must be finite, got {bad} value(s) NaN or inf"
        raise ProjectError(msg)
    return arr


def zone_parameters(
    floor_area,
    h_tr_op,
    h_tr_w,
    mass_class: str | Sequence[str] = "medium",
    *,
    area_internal=None,
    area_mass=None,
    capacity=None,
) -> ZoneParameters:
    """5R1C parameters of ISO 13790:2008 for a batch of zones.

    Parameters
    ----------
    floor_area : float or array_like, shape (n,)
        A_f, conditioned floor area, > 0 [m²].
    h_tr_op : float or array_like, shape (n,)
        H_tr,op, heat transfer coefficient of the opaque elements (Σ U·A with
        adjustment factors), ≥ 0 and < H_tr,ms [W K⁻¹].
    h_tr_w : float or array_like, shape (n,)
        H_tr,w, heat transfer coefficient of windows and other elements
        without mass, ≥ 0 [W K⁻¹].
    mass_class : str or sequence of str, default "medium"
        One of :data:`MASS_CLASSES` (``very_light``, ``light``, ``medium``,
        ``heavy``, ``very_heavy``), one for all zones or one per zone.
    area_internal : float or array_like, optional
        A_t, area of all surfaces facing the zone [m²]. Default
        Λ_at·A_f = 4.5·A_f. Give the measured area to override.
    area_mass : float or array_like, optional
        A_m, effective mass area [m²]; overrides the mass-class default.
    capacity : float or array_like, optional
        C_m, internal heat capacity [J K⁻¹]; overrides the mass-class default.

    Returns
    -------
    ZoneParameters
        Arrays of shape (n,), n being the broadcast length of the inputs.

    Raises
    ------
    ProjectError
        A value is not finite or out of range, shapes do not broadcast, an
        unknown mass class is named, A_m ≥ A_t, H_tr,op ≥ H_tr,ms (H_tr,em
        would not be positive) or the surface share of C.3 is negative.

    Notes
    -----
    ISO 13790:2008:

    - A_t = Λ_at·A_f, Λ_at = 4.5 (§7.2.2.2)
    - H_tr,is = h_is·A_t, h_is = 3.45 W m⁻² K⁻¹ (§7.2.2.2, Eq. 9)
    - A_m, C_m from Table 12 by mass class (§12.3.1.2)
    - H_tr,ms = h_ms·A_m, h_ms = 9.1 W m⁻² K⁻¹ (§12.2.2, Eq. 64)
    - H_tr,em = 1 / (1/H_tr,op − 1/H_tr,ms) (§12.2.2, Eq. 63); H_tr,em = 0
      when H_tr,op = 0.

    References
    ----------
    ISO 13790:2008, Energy performance of buildings — Calculation of energy
    use for space heating and cooling, §7.2.2.2, §12.2.2, §12.3.1.2 Table 12.

    Example
    -------
    >>> p = zone_parameters(100.0, 60.0, 80.0, "heavy")
    >>> float(p.capacity[0])
    26000000.0
    """
    where = "zone_parameters"
    f_area = _zone_array(floor_area, "floor_area", where)
    h_op = _zone_array(h_tr_op, "h_tr_op", where)
    h_w = _zone_array(h_tr_w, "h_tr_w", where)

    if isinstance(mass_class, str):
        classes = [mass_class]
    else:
        classes = list(mass_class)
        if not classes:
            msg = f"{where}: mass_class must name at least one class, got an empty sequence"
            raise ProjectError(msg)
    unknown = sorted({c for c in classes if c not in MASS_CLASSES}, key=str)
    if unknown:
        msg = (
            f"{where}: mass_class {unknown[0]!r} is not known; "
            f"allowed: {', '.join(MASS_CLASSES)}"
        )
        raise ProjectError(msg)
    ratio = np.array([MASS_CLASSES[c].area_ratio for c in classes])
    cap_per_area = np.array([MASS_CLASSES[c].capacity_per_area for c in classes])
    if isinstance(mass_class, str):
        ratio, cap_per_area = ratio[0], cap_per_area[0]

    overrides = {
        "area_internal": area_internal,
        "area_mass": area_mass,
        "capacity": capacity,
    }
    over = {k: (None if v is None else _zone_array(v, k, where)) for k, v in overrides.items()}

    shapes = [a.shape for a in (f_area, h_op, h_w, np.asarray(ratio))]
    shapes += [a.shape for a in over.values() if a is not None]
    try:
        shape = np.broadcast_shapes(*shapes)
    except ValueError:
        msg = f"{where}: the zone inputs must share one length n (or be scalars), got shapes {shapes}"
        raise ProjectError(msg) from None
    if shape == ():
        shape = (1,)

    def full(a):
        return np.array(np.broadcast_to(a, shape), dtype=float)

    f_area, h_op, h_w = full(f_area), full(h_op), full(h_w)
    if np.any(f_area <= 0):
        msg = f"{where}: floor_area must be > 0 m², got {f_area.min()}"
        raise ProjectError(msg)
    if np.any(h_op < 0):
        msg = f"{where}: h_tr_op must be ≥ 0 W K⁻¹, got {h_op.min()}"
        raise ProjectError(msg)
    if np.any(h_w < 0):
        msg = f"{where}: h_tr_w must be ≥ 0 W K⁻¹, got {h_w.min()}"
        raise ProjectError(msg)

    a_t = SURFACE_AREA_RATIO * f_area if over["area_internal"] is None else full(over["area_internal"])
    a_m = full(ratio) * f_area if over["area_mass"] is None else full(over["area_mass"])
    c_m = full(cap_per_area) * f_area if over["capacity"] is None else full(over["capacity"])
    for name, arr, unit in (("area_internal", a_t, "m²"), ("area_mass", a_m, "m²"), ("capacity", c_m, "J K⁻¹")):
        if np.any(arr <= 0):
            msg = f"{where}: {name} must be > 0 {unit}, got {arr.min()}"
            raise ProjectError(msg)
    if np.any(a_m >= a_t):
        i = int(np.argmax(a_m >= a_t))
        msg = (
            f"{where}: area_mass must be < area_internal (A_m < A_t), "
            f"got A_m = {a_m[i]} m², A_t = {a_t[i]} m² in zone {i}"
        )
        raise ProjectError(msg)

    h_is = COEFF_AIR_SURFACE * a_t
    h_ms = COEFF_SURFACE_MASS * a_m
    if np.any(h_op >= h_ms):
        i = int(np.argmax(h_op >= h_ms))
        msg = (
            f"{where}: h_tr_op must be < H_tr,ms = 9.1·A_m = {h_ms[i]} W K⁻¹ "
            f"so that H_tr,em > 0, got {h_op[i]} W K⁻¹ in zone {i}"
        )
        raise ProjectError(msg)
    with np.errstate(divide="ignore"):
        h_em = np.where(h_op > 0, 1.0 / (1.0 / np.where(h_op > 0, h_op, 1.0) - 1.0 / h_ms), 0.0)

    params = ZoneParameters(
        floor_area=f_area,
        area_internal=a_t,
        area_mass=a_m,
        capacity=c_m,
        h_tr_op=h_op,
        h_tr_em=h_em,
        h_tr_w=h_w,
        h_tr_is=h_is,
        h_tr_ms=h_ms,
    )
    share = params.share_surface
    if np.any(share < 0):
        i = int(np.argmin(share))
        msg = (
            f"{where}: the surface share of the gains, 1 − A_m/A_t − H_tr,w/(9.1·A_t) "
            f"(ISO 13790 C.3), must be ≥ 0, got {share[i]:.4f} in zone {i}; "
            "reduce h_tr_w or area_mass, or give a larger area_internal"
        )
        raise ProjectError(msg)
    return params


def ventilation_heat_transfer(flow, heat_capacity_air: float = AIR_HEAT_CAPACITY):
    """Ventilation heat transfer coefficient H_ve of an outdoor-air flow.

    Parameters
    ----------
    flow : float or array_like
        Outdoor-air volume flow entering the zone, ≥ 0 [m³ s⁻¹].
    heat_capacity_air : float, default 1200
        ρ_a·c_a, volumetric heat capacity of air [J m⁻³ K⁻¹].

    Returns
    -------
    float or ndarray
        H_ve [W K⁻¹], same shape as ``flow``.

    Notes
    -----
    H_ve = ρ_a·c_a·q_ve (ISO 13790:2008 §9.3.1, Eq. 21, with b_ve = 1).

    References
    ----------
    ISO 13790:2008 §9.3.1.
    """
    q = np.asarray(flow, dtype=float)
    if np.any(~np.isfinite(q)) or np.any(q < 0):
        msg = f"ventilation_heat_transfer: flow must be finite and ≥ 0 m³ s⁻¹, got min {np.nanmin(q)}"
        raise ProjectError(msg)
    out = heat_capacity_air * q
    return float(out) if out.ndim == 0 else out


# ---------------------------------------------------------------------------
# One hour, literal Annex C
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class StepResult:
    """Node temperatures of one hour of the 5R1C network.

    Attributes
    ----------
    temp_air_in : ndarray
        θ_air, indoor air temperature, C.11 [°C].
    temp_surface : ndarray
        θ_s, surface-node temperature, C.10 [°C].
    temp_mass : ndarray
        θ_m, mass temperature averaged over the hour, C.9 [°C].
    temp_mass_end : ndarray
        θ_m,t, mass temperature at the end of the hour, C.4 [°C].
    temp_op : ndarray
        θ_op, operative temperature, C.12 [°C].
    """

    temp_air_in: np.ndarray
    temp_surface: np.ndarray
    temp_mass: np.ndarray
    temp_mass_end: np.ndarray
    temp_op: np.ndarray


def step_crank_nicolson(
    params: ZoneParameters,
    temp_m_prev,
    temp_air,
    temp_sup,
    h_ve,
    gains_internal,
    gains_solar,
    phi_hc=0.0,
) -> StepResult:
    """One hour of the ISO 13790:2008 Annex C network, equations C.1–C.12.

    Written equation by equation as in the standard; :func:`simulate` uses an
    algebraically equal, faster form.

    Parameters
    ----------
    params : ZoneParameters
        Network of n zones.
    temp_m_prev : array_like, shape (n,) or scalar
        θ_m,t−1, mass temperature at the start of the hour [°C].
    temp_air : array_like
        θ_e, outdoor air temperature [°C].
    temp_sup : array_like or None
        θ_sup, supply (ventilation inlet) air temperature [°C]; None means
        θ_sup = θ_e.
    h_ve : array_like
        H_ve, ventilation heat transfer coefficient, > 0 [W K⁻¹].
    gains_internal : array_like
        φ_int, internal heat gains [W].
    gains_solar : array_like
        φ_sol, solar heat gains [W].
    phi_hc : array_like, default 0
        φ_HC, heating (> 0) or cooling (< 0) power given to the air node [W].

    Returns
    -------
    StepResult

    Notes
    -----
    ISO 13790:2008 Annex C, Δt = 3600 s:

    - C.1  φ_ia = 0.5·φ_int
    - C.2  φ_m = (A_m/A_t)·(0.5·φ_int + φ_sol)
    - C.3  φ_st = (1 − A_m/A_t − H_tr,w/(9.1·A_t))·(0.5·φ_int + φ_sol)
    - C.6  H_tr,1 = 1 / (1/H_ve + 1/H_tr,is)
    - C.7  H_tr,2 = H_tr,1 + H_tr,w
    - C.8  H_tr,3 = 1 / (1/H_tr,2 + 1/H_tr,ms)
    - C.5  φ_m,tot = φ_m + H_tr,em·θ_e + H_tr,3·[φ_st + H_tr,w·θ_e
      + H_tr,1·((φ_ia + φ_HC)/H_ve + θ_sup)] / H_tr,2
    - C.4  θ_m,t = [θ_m,t−1·(C_m/Δt − ½(H_tr,3 + H_tr,em)) + φ_m,tot]
      / [C_m/Δt + ½(H_tr,3 + H_tr,em)]
    - C.9  θ_m = (θ_m,t + θ_m,t−1)/2
    - C.10 θ_s = [H_tr,ms·θ_m + φ_st + H_tr,w·θ_e + H_tr,1·(θ_sup
      + (φ_ia + φ_HC)/H_ve)] / (H_tr,ms + H_tr,w + H_tr,1)
    - C.11 θ_air = [H_tr,is·θ_s + H_ve·θ_sup + φ_ia + φ_HC] / (H_tr,is + H_ve)
    - C.12 θ_op = 0.3·θ_air + 0.7·θ_s

    The heating/cooling power enters the air node (φ_HC added to φ_ia), as in
    the standard.

    References
    ----------
    ISO 13790:2008 Annex C, §C.2–C.3.
    """
    p = params
    theta_e = np.asarray(temp_air, dtype=float)
    theta_sup = theta_e if temp_sup is None else np.asarray(temp_sup, dtype=float)
    h_ve = np.asarray(h_ve, dtype=float)
    if np.any(h_ve <= 0):
        msg = f"step_crank_nicolson: h_ve must be > 0 W K⁻¹, got {np.min(h_ve)}"
        raise ProjectError(msg)
    phi_int = np.asarray(gains_internal, dtype=float)
    phi_sol = np.asarray(gains_solar, dtype=float)
    phi_hc = np.asarray(phi_hc, dtype=float)
    theta_m_prev = np.asarray(temp_m_prev, dtype=float)

    phi_ia = 0.5 * phi_int  # C.1
    phi_m = p.area_mass / p.area_internal * (0.5 * phi_int + phi_sol)  # C.2
    phi_st = (  # C.3
        1.0 - p.area_mass / p.area_internal - p.h_tr_w / (COEFF_SURFACE_MASS * p.area_internal)
    ) * (0.5 * phi_int + phi_sol)
    h_tr_1 = 1.0 / (1.0 / h_ve + 1.0 / p.h_tr_is)  # C.6
    h_tr_2 = h_tr_1 + p.h_tr_w  # C.7
    h_tr_3 = 1.0 / (1.0 / h_tr_2 + 1.0 / p.h_tr_ms)  # C.8
    phi_m_tot = (  # C.5
        phi_m
        + p.h_tr_em * theta_e
        + h_tr_3 * (phi_st + p.h_tr_w * theta_e + h_tr_1 * ((phi_ia + phi_hc) / h_ve + theta_sup)) / h_tr_2
    )
    cap = p.capacity / STEP_SECONDS
    theta_m_t = (theta_m_prev * (cap - 0.5 * (h_tr_3 + p.h_tr_em)) + phi_m_tot) / (
        cap + 0.5 * (h_tr_3 + p.h_tr_em)
    )  # C.4
    theta_m = 0.5 * (theta_m_t + theta_m_prev)  # C.9
    theta_s = (
        p.h_tr_ms * theta_m + phi_st + p.h_tr_w * theta_e + h_tr_1 * (theta_sup + (phi_ia + phi_hc) / h_ve)
    ) / (p.h_tr_ms + p.h_tr_w + h_tr_1)  # C.10
    theta_air = (p.h_tr_is * theta_s + h_ve * theta_sup + phi_ia + phi_hc) / (p.h_tr_is + h_ve)  # C.11
    theta_op = _OPERATIVE_AIR_WEIGHT * theta_air + (1.0 - _OPERATIVE_AIR_WEIGHT) * theta_s  # C.12
    return StepResult(
        temp_air_in=theta_air,
        temp_surface=theta_s,
        temp_mass=theta_m,
        temp_mass_end=theta_m_t,
        temp_op=theta_op,
    )


# ---------------------------------------------------------------------------
# Steady state
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class SteadyState:
    """Steady node temperatures of the 5R1C network under constant inputs.

    Attributes
    ----------
    temp_air_in, temp_surface, temp_mass, temp_op : ndarray
        θ_air, θ_s, θ_m, θ_op [°C].
    """

    temp_air_in: np.ndarray
    temp_surface: np.ndarray
    temp_mass: np.ndarray
    temp_op: np.ndarray


def steady_state(
    params: ZoneParameters,
    temp_air,
    gains_internal,
    gains_solar,
    h_ve,
    temp_sup=None,
    phi_hc=0.0,
) -> SteadyState:
    """Closed-form steady solution of the 5R1C network under constant inputs.

    Parameters
    ----------
    params : ZoneParameters
        Network of n zones.
    temp_air : array_like
        θ_e, outdoor air temperature [°C].
    gains_internal, gains_solar : array_like
        φ_int and φ_sol [W].
    h_ve : array_like
        H_ve, > 0 [W K⁻¹].
    temp_sup : array_like, optional
        θ_sup [°C]; default θ_e.
    phi_hc : array_like, default 0
        φ_HC given to the air node [W].

    Returns
    -------
    SteadyState

    Notes
    -----
    With θ_m,t = θ_m,t−1 = θ_m, equation C.4 of ISO 13790:2008 reduces to

        θ_m = φ_m,tot / (H_tr,3 + H_tr,em)

    (φ_m,tot from C.5; H_tr,1…3 from C.6–C.8); θ_s and θ_air then follow from
    C.10 and C.11 and θ_op from C.12. The result does not depend on C_m or on
    the time step: a Crank–Nicolson march with constant inputs converges to
    it.

    References
    ----------
    ISO 13790:2008 Annex C, Eqs. C.4–C.12.
    """
    p = params
    theta_e = np.asarray(temp_air, dtype=float)
    theta_sup = theta_e if temp_sup is None else np.asarray(temp_sup, dtype=float)
    h_ve = np.asarray(h_ve, dtype=float)
    if np.any(h_ve <= 0):
        msg = f"steady_state: h_ve must be > 0 W K⁻¹, got {np.min(h_ve)}"
        raise ProjectError(msg)
    phi_int = np.asarray(gains_internal, dtype=float)
    phi_sol = np.asarray(gains_solar, dtype=float)
    phi_hc = np.asarray(phi_hc, dtype=float)
    phi_ia = 0.5 * phi_int
    base = 0.5 * phi_int + phi_sol
    phi_m = p.share_mass * base
    phi_st = p.share_surface * base
    h_tr_1 = 1.0 / (1.0 / h_ve + 1.0 / p.h_tr_is)
    h_tr_2 = h_tr_1 + p.h_tr_w
    h_tr_3 = 1.0 / (1.0 / h_tr_2 + 1.0 / p.h_tr_ms)
    q_air = phi_ia + phi_hc
    phi_m_tot = phi_m + p.h_tr_em * theta_e + h_tr_3 * (
        phi_st + p.h_tr_w * theta_e + h_tr_1 * (q_air / h_ve + theta_sup)
    ) / h_tr_2
    theta_m = phi_m_tot / (h_tr_3 + p.h_tr_em)
    theta_s = (p.h_tr_ms * theta_m + phi_st + p.h_tr_w * theta_e + h_tr_1 * (theta_sup + q_air / h_ve)) / (
        p.h_tr_ms + p.h_tr_w + h_tr_1
    )
    theta_air = (p.h_tr_is * theta_s + h_ve * theta_sup + q_air) / (p.h_tr_is + h_ve)
    theta_op = _OPERATIVE_AIR_WEIGHT * theta_air + (1.0 - _OPERATIVE_AIR_WEIGHT) * theta_s
    return SteadyState(temp_air_in=theta_air, temp_surface=theta_s, temp_mass=theta_m, temp_op=theta_op)


# ---------------------------------------------------------------------------
# Hourly simulation
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class SimulationResult:
    """Hourly results of :func:`simulate` for n zones over T hours.

    Attributes
    ----------
    temp_air_in : ndarray, shape (T, n)
        θ_air, indoor air temperature [°C].
    temp_surface : ndarray, shape (T, n)
        θ_s, surface-node temperature [°C].
    temp_mass : ndarray, shape (T, n)
        θ_m, mass temperature averaged over each hour (C.9) [°C].
    temp_op : ndarray, shape (T, n)
        θ_op, operative temperature (C.12) [°C].
    heating_need : ndarray, shape (T, n)
        Heating power given to the air node, ≥ 0 [W].
    cooling_need : ndarray, shape (T, n)
        Cooling power taken from the air node, ≥ 0 [W].
    h_ve : ndarray, shape (T, n)
        H_ve used in each hour (after the fixed-point iteration when H_ve
        depends on the indoor temperature) [W K⁻¹].
    temp_mass_initial : ndarray, shape (n,)
        θ_m at the start of the first hour (after warm-up) [°C].
    temp_mass_final : ndarray, shape (n,)
        θ_m at the end of the last hour [°C].
    unconverged_hours : ndarray of int, shape (n,)
        Hours in which the indoor-temperature-dependent H_ve did not
        converge within the tolerance (always 0 for array H_ve).
    window_flow : ndarray, shape (T, n), or None
        With a :class:`calcs.operation.WindowVentilation` law and the compiled
        engine: the flow through the opened windows at the reported air
        temperature [m³ s⁻¹]; otherwise None.
    """

    temp_air_in: np.ndarray
    temp_surface: np.ndarray
    temp_mass: np.ndarray
    temp_op: np.ndarray
    heating_need: np.ndarray
    cooling_need: np.ndarray
    h_ve: np.ndarray
    temp_mass_initial: np.ndarray
    temp_mass_final: np.ndarray
    unconverged_hours: np.ndarray
    window_flow: np.ndarray | None = None


def _compact(value, shape: tuple[int, int], name: str, *, dtype=float, finite=True, where="simulate"):
    """``value`` as an array that broadcasts to (T, n), without copying it out.

    Scalars apply to every hour and zone, 1-D arrays of length T are hourly
    series for every zone, 2-D arrays are (T, n), (T, 1) or (1, n).
    """
    try:
        arr = np.asarray(value, dtype=dtype)
    except (TypeError, ValueError):
        msg = f"{where}: {name} must be numeric, got {type(value).__name__}"
        raise ProjectError(msg) from None
    t_len, n = shape
    if arr.ndim == 1:
        if arr.shape[0] != t_len:
            msg = (
                f"{where}: {name} as a 1-D array must have one value per hour "
                f"(length {t_len}), got length {arr.shape[0]}; use shape (1, {n}) for one value per zone"
            )
            raise ProjectError(msg)
        arr = arr[:, None]
    elif arr.ndim > 2:
        msg = f"{where}: {name} must have at most 2 dimensions (hours, zones), got shape {arr.shape}"
        raise ProjectError(msg)
    try:
        if np.broadcast_shapes(arr.shape, shape) != shape:
            raise ValueError
    except ValueError:
        msg = f"{where}: {name} has shape {arr.shape}, which does not fit (hours, zones) = {shape}"
        raise ProjectError(msg) from None
    # one pass: the sum of an array is finite only if every element is
    if finite and dtype is float and not np.isfinite(np.add.reduce(arr, axis=None)):
        msg = f"{where}: {name} must be finite in every hour and zone (no NaN or inf)"
        raise ProjectError(msg)
    return arr


def _time_zone(value, shape: tuple[int, int], name: str, *, dtype=float, allow_none=False, where="simulate"):
    """Read-only view of ``value`` broadcast to (T, n) (see :func:`_compact`)."""
    if value is None and allow_none:
        return None
    return np.broadcast_to(_compact(value, shape, name, dtype=dtype, where=where), shape)


def _power_limit(value, n: int, name: str) -> np.ndarray:
    """Available power per zone, shape (n,), ≥ 0, inf allowed."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        msg = f"simulate: {name} must be a number or one number per zone, got {value!r}"
        raise ProjectError(msg) from None
    if arr.ndim > 1 or (arr.ndim == 1 and arr.shape[0] != n):
        msg = f"simulate: {name} must be a scalar or have shape ({n},), got shape {arr.shape}"
        raise ProjectError(msg)
    if np.any(np.isnan(arr)) or np.any(arr < 0):
        msg = f"simulate: {name} must be ≥ 0 W (inf for unlimited), got min {np.min(arr)}"
        raise ProjectError(msg)
    return np.array(np.broadcast_to(arr, (n,)))


class _Network:
    """Constant per-zone terms of the network, shape (n,)."""

    __slots__ = ("n", "h_is", "h_w", "h_ms", "h_em", "cap", "f_m", "f_st", "half_h_ms")

    def __init__(self, p: ZoneParameters):
        self.n = p.n_zones
        self.h_is = p.h_tr_is
        self.h_w = p.h_tr_w
        self.h_ms = p.h_tr_ms
        self.h_em = p.h_tr_em
        self.cap = p.capacity / STEP_SECONDS  # C_m/Δt [W K⁻¹]
        self.f_m = p.share_mass  # C.2
        self.f_st = p.share_surface  # C.3
        self.half_h_ms = 0.5 * p.h_tr_ms


class _Block:
    """Coefficients of a block of hours, computed in place in reusable buffers.

    Equations C.4–C.11 are linear in θ_m,t−1 and in φ_HC. With
    w = 1/(H_ve + H_tr,is), r = H_tr,1/H_ve = H_tr,is·w (C.6),
    d = 1/(H_tr,2 + H_tr,ms) (C.7), so that H_tr,3 = H_tr,ms·H_tr,2·d (C.8),
    and g = 1/(C_m/Δt + ½(H_tr,3 + H_tr,em)), one hour reads

        θ_m,t = a·θ_m,t−1 + b + e·φ_HC          (C.4 with C.5)
        θ_air = k + l·θ_m,t−1 + m·φ_HC          (C.11 with C.9, C.10)

    a = (C_m/Δt − ½(H_tr,3 + H_tr,em))·g
    e = H_tr,ms·d·r·g                  (φ_HC term of C.5, times g)
    l = e·C_m/Δt
    m = w·(1 + H_tr,is·(½·H_tr,ms·d·e + d·r))
    b = [φ_m + H_tr,em·θ_e + H_tr,ms·d·s0]·g
    k = w·(H_tr,is·d·(½·H_tr,ms·b + s0) + H_ve·θ_sup + φ_ia)

    where s0 = φ_st + H_tr,w·θ_e + H_tr,1·θ_sup + r·φ_ia is the numerator of
    C.10 without its mass and φ_HC terms. m > 0 is the rise of θ_air per watt
    given to the air node, so the §C.4.2 interpolation
    φ_HC,10·(θ_set − θ_air,0)/(θ_air,10 − θ_air,0) equals (θ_set − θ_air,0)/m.
    """

    _conductance = ("w", "r", "h2", "d", "md", "g", "a", "e", "l", "m", "inv_m", "q")
    _sources = ("phi_ia", "base", "s0", "b", "vt", "k", "tmp")

    def __init__(self, net: _Network, rows: int, rows_conductance: int):
        n = net.n
        self.net = net
        for name in self._conductance:
            setattr(self, "_" + name, np.empty((rows_conductance, n)))
        for name in self._sources:
            setattr(self, "_" + name, np.empty((rows, n)))

    def conductance(self, v: np.ndarray, control: bool) -> None:
        """Terms depending on H_ve only; ``v`` has 1 or ``rows`` rows."""
        net, size = self.net, v.shape[0]
        w, r, h2, d, md, g, a, e = (getattr(self, "_" + k)[:size] for k in self._conductance[:8])
        mul, add = np.multiply, np.add
        add(v, net.h_is, out=w)
        np.divide(1.0, w, out=w)
        mul(w, net.h_is, out=r)  # H_tr,1 / H_ve
        mul(v, r, out=h2)  # H_tr,1, C.6
        h2 += net.h_w  # C.7
        add(h2, net.h_ms, out=d)
        np.divide(1.0, d, out=d)
        mul(d, net.h_ms, out=md)  # H_tr,3 / H_tr,2 (C.8)
        half = a  # a's buffer holds ½(H_tr,3 + H_tr,em) for a moment
        mul(h2, md, out=half)  # H_tr,3
        half += net.h_em
        half *= 0.5
        add(half, net.cap, out=g)
        np.divide(1.0, g, out=g)
        np.subtract(net.cap, half, out=a)
        a *= g  # C.4
        mul(md, r, out=e)
        e *= g
        self.w, self.r, self.h2, self.d, self.md, self.g, self.a, self.e = w, r, h2, d, md, g, a, e
        self.v = v
        if control:
            ell, m, inv_m, q = (getattr(self, "_" + k)[:size] for k in ("l", "m", "inv_m", "q"))
            mul(e, net.cap, out=ell)
            mul(md, e, out=m)
            m *= 0.5
            m += mul(d, r, out=inv_m)  # inv_m used as scratch
            m *= net.h_is
            m += 1.0
            m *= w
            np.divide(1.0, m, out=inv_m)
            mul(ell, inv_m, out=q)
            self.l, self.m, self.inv_m, self.q = ell, m, inv_m, q

    def sources(self, te, tsup, gi, gs) -> None:
        """Terms depending on the hourly inputs; call after :meth:`conductance`.

        ``tsup`` may be the very object ``te`` (supply air = outdoor air),
        which saves two operations.
        """
        net, size = self.net, te.shape[0]
        phi_ia, base, s0, b, vt, k, tmp = (getattr(self, "_" + x)[:size] for x in self._sources)
        mul = np.multiply
        mul(gi, 0.5, out=phi_ia)  # C.1
        np.add(phi_ia, gs, out=base)  # 0.5·φ_int + φ_sol
        mul(base, net.f_st, out=s0)  # φ_st, C.3
        if tsup is te:
            s0 += mul(self.h2, te, out=tmp)  # (H_tr,w + H_tr,1)·θ_e
        else:
            s0 += mul(te, net.h_w, out=tmp)
            s0 += mul(np.subtract(self.h2, net.h_w, out=tmp), tsup, out=tmp)  # H_tr,1·θ_sup
        s0 += mul(self.r, phi_ia, out=tmp)
        mul(base, net.f_m, out=b)  # φ_m, C.2
        b += mul(te, net.h_em, out=tmp)
        b += mul(self.md, s0, out=tmp)
        b *= self.g  # C.5 (φ_HC = 0) times g
        mul(self.v, tsup, out=vt)
        mul(b, net.half_h_ms, out=k)
        k += s0
        k *= self.d
        k *= net.h_is
        k += vt
        k += phi_ia
        k *= self.w
        self.phi_ia, self.s0, self.b, self.vt, self.k, self.tmp = phi_ia, s0, b, vt, k, tmp

    def temperatures(self, tmh, phi, tm_out, ts_out, ta_out, top_out) -> None:
        """C.9–C.12 from the marched mass temperatures ``tmh`` (rows + 1)."""
        net, tmp = self.net, self.tmp
        np.add(tmh[:-1], tmh[1:], out=tm_out)
        tm_out *= 0.5  # C.9
        np.multiply(tm_out, net.h_ms, out=ts_out)
        ts_out += self.s0
        if phi is not None:
            ts_out += np.multiply(self.r, phi, out=tmp)
        ts_out *= self.d  # C.10
        np.multiply(ts_out, net.h_is, out=ta_out)
        ta_out += self.vt
        ta_out += self.phi_ia
        if phi is not None:
            ta_out += phi
        ta_out *= self.w  # C.11
        np.multiply(ta_out, _OPERATIVE_AIR_WEIGHT, out=top_out)
        top_out += np.multiply(ts_out, 1.0 - _OPERATIVE_AIR_WEIGHT, out=tmp)  # C.12


def _march_arrays(net, hv, te, tsup, gi, gs, sp_h, sp_c, unocc, max_h, max_c, tm0, out, chunk):
    """Time loop for H_ve given as an array; fills ``out`` in place.

    Only the recurrence θ_m,t = a·θ_m,t−1 + b + e·φ_HC(θ_m,t−1) loops over
    hours; everything else is computed for blocks of ``chunk`` hours at once.
    With set-points, one hour of all zones is three stacked rows,

        Y = [a, −q, q]·θ_m,t−1 + [b, p_H, p_C]

    where Y₁ and Y₂ are the unrestricted heating and cooling needs of §C.4.2
    (p_H = (θ_set,H − k)/m, p_C = (k − θ_set,C)/m, q = l/m); they are clipped
    to [0, available power] and θ_m,t = Y₀ + e·(Y₁ − Y₂). A row is −inf
    where its set-point is absent or the zone is unoccupied, which clips to 0.
    """
    t_len, n = te.shape
    heating, cooling = sp_h is not None, sp_c is not None
    control = heating or cooling
    const_hv = hv.strides[0] == 0
    rows = min(chunk, t_len)
    blk = _Block(net, rows, 1 if const_hv else rows)
    if const_hv:
        blk.conductance(hv[:1], control)
    tmh = np.empty((rows + 1, n))
    tmh[0] = tm0
    mul, add, maximum, minimum = np.multiply, np.add, np.maximum, np.minimum
    if control:
        coef = np.empty((rows, 3, n))
        rhs = np.empty((rows, 3, n))
        need = np.empty((rows, 2, n))
        phi = np.empty((rows, n))
        y = np.empty((3, n))
        y_need = y[1:]
        y_free = y[0]
        u = np.empty(n)
        zero = np.zeros((2, n))
        limit = np.stack([max_h, max_c])
        # let the block write a, q and b straight into the stacked rows
        blk._b = rhs[:, 0]
        if not const_hv:
            blk._a = coef[:, 0]
            blk._q = coef[:, 2]
        if not heating:
            rhs[:, 1] = -np.inf
        if not cooling:
            rhs[:, 2] = -np.inf
        if const_hv:
            coef[:, 0] = blk.a
            np.negative(blk.q, out=coef[:, 1])
            coef[:, 2] = blk.q
    for t0 in range(0, t_len, chunk):
        t1 = min(t_len, t0 + chunk)
        size = t1 - t0
        if not const_hv:
            blk.conductance(hv[t0:t1], control)
        te_blk = te[t0:t1]
        tsup_blk = te_blk if tsup is te else tsup[t0:t1]
        blk.sources(te_blk, tsup_blk, gi[t0:t1], gs[t0:t1])
        tm_prev, tm_next = tmh[:size], tmh[1:size + 1]
        if control:
            if not const_hv:
                np.negative(blk.q, out=coef[:size, 1])
            if heating:
                p_h = rhs[:size, 1]
                np.subtract(sp_h[t0:t1], blk.k, out=p_h)
                p_h *= blk.inv_m
            if cooling:
                p_c = rhs[:size, 2]
                np.subtract(blk.k, sp_c[t0:t1], out=p_c)
                p_c *= blk.inv_m
            if unocc is not None:
                np.copyto(rhs[:size, 1:], -np.inf, where=unocc[t0:t1, None, :])
            e = np.broadcast_to(blk.e, (size, n))
            for tp, tn, ci, ri, ni, fi, ei in zip(tm_prev, tm_next, coef, rhs, need, phi, e):
                mul(ci, tp, out=y)
                y += ri
                maximum(y_need, zero, out=ni)
                minimum(ni, limit, out=ni)
                np.subtract(ni[0], ni[1], out=fi)
                add(y_free, mul(ei, fi, out=u), out=tn)
            out["heating_need"][t0:t1] = need[:size, 0]
            out["cooling_need"][t0:t1] = need[:size, 1]
            phi_blk = phi[:size]
        else:
            a = np.broadcast_to(blk.a, (size, n))
            for tp, tn, ai, bi in zip(tm_prev, tm_next, a, blk.b):
                mul(ai, tp, out=tn)
                tn += bi
            phi_blk = None
        blk.temperatures(
            tmh[:size + 1], phi_blk,
            out["temp_mass"][t0:t1], out["temp_surface"][t0:t1],
            out["temp_air_in"][t0:t1], out["temp_op"][t0:t1],
        )
        tmh[0] = tmh[size]
    return tmh[0].copy()


def _call_h_ve(fn, t: int, est: np.ndarray, n: int) -> np.ndarray:
    """Call the ventilation callable and check what it returns."""
    try:
        v = np.asarray(fn(t, est.copy()), dtype=float)
    except ProjectError:
        raise
    except Exception as exc:  # the controller is user code: name it in the message
        msg = f"simulate: the h_ve callable failed at hour {t}: {type(exc).__name__}: {exc}"
        raise ProjectError(msg) from exc
    if v.ndim == 0:
        v = np.full(n, float(v))
    if v.shape != (n,):
        msg = f"simulate: the h_ve callable must return shape ({n},), got {v.shape} at hour {t}"
        raise ProjectError(msg)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        msg = f"simulate: the h_ve callable must return finite values > 0 W K⁻¹, got min {np.min(v)} at hour {t}"
        raise ProjectError(msg)
    return v


def _hour_state(blk: _Block, v, row, tm, sp_h_t, sp_c_t, max_h, max_c):
    """Solve one hour for given H_ve (n,): heating, cooling, θ_air."""
    te_t, tsup_t, gi_t, gs_t = row
    blk.conductance(v[None, :], True)
    blk.sources(te_t, tsup_t, gi_t, gs_t)
    ta0 = blk.k[0] + blk.l[0] * tm  # θ_air,0, §C.4.2 step 1
    heat = np.zeros_like(tm) if sp_h_t is None else np.clip((sp_h_t - ta0) * blk.inv_m[0], 0.0, max_h)
    cool = np.zeros_like(tm) if sp_c_t is None else np.clip((ta0 - sp_c_t) * blk.inv_m[0], 0.0, max_c)
    ta = ta0 + blk.m[0] * (heat - cool)
    return heat, cool, ta


def _march_callable(net, fn, te, tsup, gi, gs, sp_h, sp_c, unocc, max_h, max_c, tm0, out, tolerance, max_iterations):
    """Time loop for H_ve depending on the indoor air temperature.

    Per hour, a safeguarded fixed-point iteration on θ_air: x ← F(x), where
    F(x) is θ_air solved with H_ve = h_ve(t, x). The residual F(x) − x of
    each zone brackets the solution once it has changed sign; an iterate that
    leaves the bracket is replaced by the regula-falsi point of the bracket,
    and every fourth bracketed iterate by its midpoint, so oscillating
    controllers still converge when a consistent temperature exists.
    """
    t_len, n = te.shape
    blk = _Block(net, 1, 1)
    tm = np.array(tm0, dtype=float)
    est = tm.copy()  # first guess of θ_air in hour 0
    unconverged = np.zeros(n, dtype=np.int64)
    hv_out = out["h_ve"]
    tmh = np.empty((2, n))
    for t in range(t_len):
        te_t = te[t:t + 1]
        row = (te_t, te_t if tsup is te else tsup[t:t + 1], gi[t:t + 1], gs[t:t + 1])
        sp_h_t = None if sp_h is None else sp_h[t]
        sp_c_t = None if sp_c is None else sp_c[t]
        if unocc is not None and (sp_h_t is not None or sp_c_t is not None):
            off = unocc[t]
            sp_h_t = None if sp_h_t is None else np.where(off, -np.inf, sp_h_t)
            sp_c_t = None if sp_c_t is None else np.where(off, np.inf, sp_c_t)
        x = est.copy()
        done = np.zeros(n, dtype=bool)
        lo = np.full(n, -np.inf)
        hi = np.full(n, np.inf)
        r_lo = np.zeros(n)
        r_hi = np.zeros(n)
        hv_used = hv_out[t]
        for it in range(max_iterations):
            v = _call_h_ve(fn, t, x, n)
            _, _, fx = _hour_state(blk, v, row, tm, sp_h_t, sp_c_t, max_h, max_c)
            res = fx - x
            todo = ~done
            hv_used[todo] = v[todo]
            done |= np.abs(res) <= tolerance
            if done.all():
                break
            # update the bracket of the root of F(x) − x
            up = todo & (res > 0)
            dn = todo & (res < 0)
            lo[up], r_lo[up] = x[up], res[up]
            hi[dn], r_hi[dn] = x[dn], res[dn]
            nxt = fx.copy()
            both = np.isfinite(lo) & np.isfinite(hi)
            if both.any():
                with np.errstate(invalid="ignore", divide="ignore"):
                    falsi = lo - r_lo * (hi - lo) / (r_hi - r_lo)
                outside = both & ~((nxt > lo) & (nxt < hi))
                nxt[outside] = falsi[outside]
                if it % 4 == 3:
                    nxt[both] = 0.5 * (lo[both] + hi[both])
                bad = both & ~np.isfinite(nxt)
                nxt[bad] = 0.5 * (lo[bad] + hi[bad])
            x = np.where(todo & ~done, nxt, x)
        unconverged += ~done
        heat, cool, _ = _hour_state(blk, hv_used, row, tm, sp_h_t, sp_c_t, max_h, max_c)
        phi = (heat - cool)[None, :]
        tmh[0] = tm
        tmh[1] = blk.a[0] * tm + blk.b[0] + blk.e[0] * phi[0]
        out["heating_need"][t] = heat
        out["cooling_need"][t] = cool
        blk.temperatures(
            tmh, phi,
            out["temp_mass"][t:t + 1], out["temp_surface"][t:t + 1],
            out["temp_air_in"][t:t + 1], out["temp_op"][t:t + 1],
        )
        est = out["temp_air_in"][t].copy()
        tm = tmh[1].copy()
    return tm, unconverged


#: Fewest zones a thread of the compiled loops gets: below this a batch runs in one thread,
#: as the start-up of a thread costs more than it saves.
MIN_ZONES_PER_THREAD = 64


def thread_count(threads: int | None = None) -> int:
    """Threads the compiled loops may use: ``threads`` if given, else ``$FREERUN_THREADS``, else the CPUs.

    The worker processes of a sweep set ``FREERUN_THREADS=1`` (the processes are the
    parallelism there). Raises ProjectError for a value that is not a whole number ≥ 1.
    """
    from calcs.sweep import THREADS_ENV

    where = "simulate: threads"
    if threads is None:
        text = os.environ.get(THREADS_ENV, "").strip()
        if not text:
            return os.cpu_count() or 1
        where = f"environment {THREADS_ENV}"
        try:
            threads = int(text)
        except ValueError:
            threads = text  # reported below
    if isinstance(threads, bool) or not isinstance(threads, int) or threads < 1:
        msg = f"{where}={threads!r}: must be a whole number of threads, 1 or more"
        raise ProjectError(msg)
    return threads


def _column_blocks(n: int, threads: int) -> list[tuple[int, int]]:
    """Split zones 0..n into contiguous (j0, j1) blocks, one per thread, each ≥ MIN_ZONES_PER_THREAD."""
    k = max(1, min(threads, n // MIN_ZONES_PER_THREAD))
    edges = [round(i * n / k) for i in range(k + 1)]
    return list(zip(edges[:-1], edges[1:]))


def _in_column_blocks(kernel, before: tuple, after: tuple, n: int, threads: int) -> None:
    """Run ``kernel(*before, j0, j1, *after)`` over the column blocks, in threads when there are several.

    The compiled loops release the GIL and write disjoint columns, so the blocks run in parallel
    and the result does not depend on the number of threads (each zone's arithmetic is the same).
    """
    blocks = _column_blocks(n, threads)
    if len(blocks) == 1:
        kernel(*before, 0, n, *after)
        return
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(len(blocks)) as pool:
        for f in [pool.submit(kernel, *before, j0, j1, *after) for j0, j1 in blocks]:
            f.result()


def _march_compiled(params, law, hv, te, tsup, gi, gs, sp_h, sp_c, occ, max_h, max_c, tm0, out, tolerance,
                    max_iterations, threads):
    """Run the compiled loop of :mod:`calcs.kernels`; returns (θ_m final, unconverged hours, H_ve used)."""
    from . import kernels

    shape = te.shape
    n = shape[1]
    zone = (params.h_tr_is, params.h_tr_w, params.h_tr_ms, params.h_tr_em, params.capacity / STEP_SECONDS,
            params.share_mass, params.share_surface)
    zone = tuple(np.asarray(z, dtype=float) for z in zone)
    dummy = np.broadcast_to(0.0, shape)
    occupied = np.broadcast_to(True, shape) if occ is None else occ
    setpoints = (dummy if sp_h is None else sp_h, dummy if sp_c is None else sp_c,
                 sp_h is not None, sp_c is not None, occupied, max_h, max_c)
    outputs = tuple(out[k] for k in ("temp_air_in", "temp_surface", "temp_mass", "temp_op", "heating_need",
                                     "cooling_need"))
    tm0 = np.asarray(tm0, dtype=float)
    tm_end = np.empty(n)
    if hv is not None:
        _in_column_blocks(kernels.march_fixed, (hv, te, tsup, gi, gs, *setpoints, *zone, tm0),
                          (*outputs, tm_end), n, threads)
        return tm_end, np.zeros(n, dtype=np.int64), hv
    hv_out = np.empty(shape)
    out["window_flow"] = np.empty(shape)
    unconverged = np.zeros(n, dtype=np.int64)
    est0 = tm0.copy()  # first guess of θ_air in hour 0, as in the numpy loop
    _in_column_blocks(kernels.march_windows,
                      (te, tsup, gi, gs, *setpoints, *zone, tm0, est0, *law.kernel_arguments(shape), tolerance,
                       max_iterations),
                      (*outputs, hv_out, out["window_flow"], unconverged, tm_end), n, threads)
    return tm_end, unconverged, hv_out


def simulate(
    params: ZoneParameters,
    temp_air,
    gains_internal,
    gains_solar,
    h_ve: np.ndarray | float | Callable[[int, np.ndarray], np.ndarray],
    *,
    temp_sup=None,
    heating_setpoint=None,
    cooling_setpoint=None,
    max_heating=np.inf,
    max_cooling=np.inf,
    occupied=None,
    temp_m_initial=None,
    warmup_days: int = 7,
    tolerance: float = 0.01,
    max_iterations: int = 20,
    chunk_hours: int = 24,
    engine: str = "compiled",
    threads: int | None = None,
) -> SimulationResult:
    """Hourly 5R1C simulation of n zones (ISO 13790:2008 Annex C).

    The time loop runs once over the hours for the whole batch of zones.

    Parameters
    ----------
    params : ZoneParameters
        Network of n zones, from :func:`zone_parameters`.
    temp_air : array_like, shape (T,) or (T, n)
        θ_e, outdoor air temperature [°C].
    gains_internal : array_like, shape (T, n), (T,), (1, n) or scalar
        φ_int, internal heat gains [W].
    gains_solar : array_like, same shapes as gains_internal
        φ_sol, solar heat gains entering the zone [W].
    h_ve : array_like or callable
        H_ve, ventilation heat transfer coefficient, > 0 [W K⁻¹]; an array
        of shape (T, n), (T,), (1, n) or a scalar, or a callable
        ``h_ve(hour_index, temp_in_estimate) -> (n,)`` for ventilation that
        depends on the indoor air temperature (see Notes).
    temp_sup : array_like, optional
        θ_sup, supply air temperature [°C]; default θ_e.
    heating_setpoint, cooling_setpoint : array_like, optional
        θ_int,set,H and θ_int,set,C on the air temperature [°C]; shapes as for
        gains (a 1-D array is an hourly series; use (1, n) for one value per
        zone). None disables heating or cooling. Heating ≤ cooling set-point.
    max_heating, max_cooling : float or array_like (n,), default inf
        Available heating and cooling power, ≥ 0 [W].
    occupied : array_like of bool, optional
        Hours in which the set-points apply, shape (T, n), (T,) or (1, n);
        outside them the zone floats freely. Default: every hour.
    temp_m_initial : array_like (n,) or float, optional
        θ_m at the start of hour 0 [°C]. Default: warm-up (see Notes).
    warmup_days : int, default 7
        Days of warm-up when temp_m_initial is None.
    tolerance : float, default 0.01
        Fixed-point tolerance on the air temperature for callable H_ve [K].
    max_iterations : int, default 20
        Fixed-point iterations per hour for callable H_ve.
    chunk_hours : int, default 24
        Hours processed per block by the numpy engine (memory/speed only;
        results do not depend on it).
    engine : {"compiled", "numpy"}, default "compiled"
        "compiled": the numba loops of :mod:`calcs.kernels` for H_ve given
        as an array or as a :class:`calcs.operation.WindowVentilation` law;
        "numpy": the vectorised numpy loop (the reference the compiled loops
        are tested against; always used for a plain callable H_ve). Both give
        the same numbers to rounding (within ``tolerance`` for callable H_ve).
    threads : int, optional
        Threads of the compiled engine; default ``$FREERUN_THREADS`` or the
        number of CPUs (see :func:`thread_count`). The zones are split into
        column blocks of at least ``MIN_ZONES_PER_THREAD``; the numbers do
        not depend on it (speed only).

    Returns
    -------
    SimulationResult
        (T, n) arrays. ``h_ve`` of an array input is a read-only broadcast
        view of that input.

    Raises
    ------
    ProjectError
        Shapes that do not fit (T, n), non-finite inputs, H_ve ≤ 0, a heating
        set-point above the cooling set-point, negative power limits, or a
        failing or ill-shaped H_ve callable.

    Notes
    -----
    Each hour follows ISO 13790:2008 Annex C, C.1–C.12 (see
    :func:`step_crank_nicolson`). Heating and cooling follow §C.4.2: the
    free-floating air temperature θ_air,0 (φ_HC = 0) is compared with the
    set-points; if it is below θ_set,H (above θ_set,C) the unrestricted need
    φ_HC,nd,un = φ_HC,10·(θ_set − θ_air,0)/(θ_air,10 − θ_air,0) (C.13,
    φ_HC,10 = 10 W m⁻²·A_f) is clipped to the available power and the hour is
    solved again with it. The network is linear in φ_HC, so θ_air,10 −
    θ_air,0 = m·φ_HC,10 with a sensitivity m computed from the conductances;
    the code uses this closed form, which gives the same numbers as the
    three-solve procedure (checked against :func:`simulate_loop_reference`).

    Warm-up (when ``temp_m_initial`` is None): θ_m starts from
    :func:`steady_state` for the mean inputs of the first 24 hours; the first
    ``warmup_days`` days are then simulated once with the same controls (a
    run shorter than that is repeated end to end, as for design days) and
    their final θ_m starts the reported run.

    Indoor-temperature-dependent ventilation: for a callable ``h_ve`` each
    hour is solved by fixed-point iteration on θ_air: the estimate (first the
    previous hour's θ_air) is passed to the callable, the hour is solved with
    the returned H_ve, and the new θ_air becomes the next estimate, until
    |θ_air − estimate| ≤ ``tolerance`` in every zone (zones that have
    converged are frozen) or ``max_iterations`` is reached. Zones still apart
    keep the last iterate and are counted in ``unconverged_hours``; nothing
    is dropped silently. The callable may be called several times per hour
    and again for the warm-up days, so it should not keep state between calls.

    References
    ----------
    ISO 13790:2008 Annex C (C.1–C.13) and §C.4.2; §12.3.1.2 Table 12.
    """
    if not isinstance(params, ZoneParameters):
        msg = f"simulate: params must be ZoneParameters (from zone_parameters), got {type(params).__name__}"
        raise ProjectError(msg)
    n = params.n_zones
    te_raw = np.asarray(temp_air, dtype=float)
    if te_raw.ndim not in (1, 2) or te_raw.shape[0] < 1:
        msg = f"simulate: temp_air must have shape (T,) or (T, {n}) with T ≥ 1, got {te_raw.shape}"
        raise ProjectError(msg)
    t_len = te_raw.shape[0]
    shape = (t_len, n)
    te = _time_zone(te_raw, shape, "temp_air")
    tsup = te if temp_sup is None else _time_zone(temp_sup, shape, "temp_sup")
    gi = _time_zone(gains_internal, shape, "gains_internal")
    gs = _time_zone(gains_solar, shape, "gains_solar")
    if callable(h_ve):
        hv = None
    else:
        hv_c = _compact(h_ve, shape, "h_ve")
        if not np.all(hv_c > 0):
            msg = (
                f"simulate: h_ve must be > 0 W K⁻¹ in every hour and zone, got min {hv_c.min()}; "
                "give at least the infiltration of a closed zone"
            )
            raise ProjectError(msg)
        hv = np.broadcast_to(hv_c, shape)
    sp_h = sp_c = None
    if heating_setpoint is not None:
        sp_h_c = _compact(heating_setpoint, shape, "heating_setpoint")
        sp_h = np.broadcast_to(sp_h_c, shape)
    if cooling_setpoint is not None:
        sp_c_c = _compact(cooling_setpoint, shape, "cooling_setpoint")
        sp_c = np.broadcast_to(sp_c_c, shape)
    if sp_h is not None and sp_c is not None and np.any(sp_h_c > sp_c_c):
        msg = "simulate: heating_setpoint must be ≤ cooling_setpoint in every hour and zone"
        raise ProjectError(msg)
    max_h = _power_limit(max_heating, n, "max_heating")
    max_c = _power_limit(max_cooling, n, "max_cooling")
    occ = unocc = None
    if occupied is not None:
        occ_c = _compact(occupied, shape, "occupied", dtype=bool)
        occ = np.broadcast_to(occ_c, shape)
        unocc = np.broadcast_to(~occ_c, shape)
    if not (isinstance(tolerance, (int, float)) and tolerance > 0):
        msg = f"simulate: tolerance must be > 0 K, got {tolerance!r}"
        raise ProjectError(msg)
    if not (isinstance(max_iterations, int) and max_iterations >= 1):
        msg = f"simulate: max_iterations must be an integer ≥ 1, got {max_iterations!r}"
        raise ProjectError(msg)
    if engine not in ("compiled", "numpy"):
        msg = f"simulate: engine must be 'compiled' or 'numpy', got {engine!r}"
        raise ProjectError(msg)
    if not (isinstance(chunk_hours, int) and chunk_hours >= 1):
        msg = f"simulate: chunk_hours must be an integer ≥ 1, got {chunk_hours!r}"
        raise ProjectError(msg)
    threads = thread_count(threads)

    net = _Network(params)

    if temp_m_initial is None:
        if not (isinstance(warmup_days, int) and warmup_days >= 0):
            msg = f"simulate: warmup_days must be an integer ≥ 0, got {warmup_days!r}"
            raise ProjectError(msg)
        day = min(t_len, 24)
        te_mean = te[:day].mean(axis=0)
        hv_mean = _call_h_ve(h_ve, 0, te_mean, n) if hv is None else hv[:day].mean(axis=0)
        tm0 = steady_state(
            params, te_mean, gi[:day].mean(axis=0), gs[:day].mean(axis=0), hv_mean,
            temp_sup=tsup[:day].mean(axis=0),
        ).temp_mass
        n_warm = 24 * warmup_days
        if n_warm > 0:
            # the first warmup_days days; a shorter run is repeated (design days)
            idx = np.arange(n_warm) % t_len

            def pick(a):
                return None if a is None else a[idx]

            if hv is not None:
                warm_h_ve = hv[idx]
            elif hasattr(h_ve, "take_hours"):
                warm_h_ve = h_ve.take_hours(idx)
            else:
                warm_h_ve = lambda t, x: h_ve(int(idx[t]), x)  # noqa: E731
            warm = simulate(
                params, te[idx], gi[idx], gs[idx], warm_h_ve,
                temp_sup=None if temp_sup is None else tsup[idx],
                heating_setpoint=pick(sp_h),
                cooling_setpoint=pick(sp_c),
                max_heating=max_h, max_cooling=max_c,
                occupied=pick(occ),
                temp_m_initial=tm0, tolerance=tolerance, max_iterations=max_iterations,
                chunk_hours=chunk_hours, engine=engine, threads=threads,
            )
            tm0 = warm.temp_mass_final
    else:
        tm0 = np.array(np.broadcast_to(_zone_array(temp_m_initial, "temp_m_initial", "simulate"), (n,)))

    names = ("temp_air_in", "temp_surface", "temp_mass", "temp_op", "heating_need", "cooling_need")
    compiled = engine == "compiled" and (hv is not None or hasattr(h_ve, "kernel_arguments"))
    # the compiled loops write every element (and first-touch the pages in their own threads);
    # the numpy loops add heating and cooling into zeroed arrays
    out = {k: (np.empty if compiled else np.zeros)(shape) for k in names}
    if compiled:
        tm_end, unconverged, h_ve_used = _march_compiled(
            params, h_ve, hv, te, tsup, gi, gs, sp_h, sp_c, occ, max_h, max_c, tm0, out, float(tolerance),
            max_iterations, threads)
    elif hv is None:
        out["h_ve"] = np.empty(shape)
        tm_end, unconverged = _march_callable(
            net, h_ve, te, tsup, gi, gs, sp_h, sp_c, unocc, max_h, max_c, tm0, out, float(tolerance), max_iterations
        )
        h_ve_used = out["h_ve"]
    else:
        tm_end = _march_arrays(net, hv, te, tsup, gi, gs, sp_h, sp_c, unocc, max_h, max_c, tm0, out, chunk_hours)
        unconverged = np.zeros(n, dtype=np.int64)
        h_ve_used = hv
    return SimulationResult(
        temp_air_in=out["temp_air_in"],
        temp_surface=out["temp_surface"],
        temp_mass=out["temp_mass"],
        temp_op=out["temp_op"],
        heating_need=out["heating_need"],
        cooling_need=out["cooling_need"],
        h_ve=h_ve_used,
        temp_mass_initial=np.array(tm0, dtype=float),
        temp_mass_final=tm_end,
        unconverged_hours=unconverged,
        window_flow=out.get("window_flow"),
    )


# ---------------------------------------------------------------------------
# Energy balance
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class EnergyBalance:
    """Heat balance of a run per zone, shape (n,), all [J].

    Supplied = ``gains_internal + gains_solar − gains_not_delivered + heating
    − cooling``; removed = ``transmission_opaque + transmission_windows +
    ventilation + stored``; ``residual`` = supplied − removed.

    Attributes
    ----------
    gains_internal, gains_solar : ndarray
        Σ φ_int·Δt and Σ φ_sol·Δt as supplied.
    gains_not_delivered : ndarray
        Σ H_tr,w/(9.1·A_t)·(0.5·φ_int + φ_sol)·Δt, the part of the gains that
        the split C.1–C.3 gives to no node.
    heating, cooling : ndarray
        Σ heating and cooling need ·Δt (both ≥ 0).
    transmission_opaque : ndarray
        Σ H_tr,em·(θ_m − θ_e)·Δt, with θ_m the hour mean (C.9).
    transmission_windows : ndarray
        Σ H_tr,w·(θ_s − θ_e)·Δt.
    ventilation : ndarray
        Σ H_ve·(θ_air − θ_sup)·Δt.
    stored : ndarray
        C_m·(θ_m,final − θ_m,initial).
    residual : ndarray
        supplied − removed.
    """

    gains_internal: np.ndarray
    gains_solar: np.ndarray
    gains_not_delivered: np.ndarray
    heating: np.ndarray
    cooling: np.ndarray
    transmission_opaque: np.ndarray
    transmission_windows: np.ndarray
    ventilation: np.ndarray
    stored: np.ndarray
    residual: np.ndarray

    @property
    def relative_residual(self) -> np.ndarray:
        """|residual| / Σ|terms| [–]."""
        scale = (
            np.abs(self.gains_internal) + np.abs(self.gains_solar) + np.abs(self.gains_not_delivered)
            + self.heating + self.cooling + np.abs(self.transmission_opaque)
            + np.abs(self.transmission_windows) + np.abs(self.ventilation) + np.abs(self.stored)
        )
        return np.abs(self.residual) / np.where(scale > 0, scale, 1.0)


def energy_balance(
    result: SimulationResult,
    params: ZoneParameters,
    temp_air,
    gains_internal,
    gains_solar,
    temp_sup=None,
) -> EnergyBalance:
    """Heat-balance terms of a run of :func:`simulate`.

    Parameters
    ----------
    result : SimulationResult
        The run.
    params : ZoneParameters
        The network it was run with.
    temp_air, gains_internal, gains_solar, temp_sup : array_like
        The inputs it was run with (same shapes as for :func:`simulate`)
        [°C], [W], [W], [°C].

    Returns
    -------
    EnergyBalance

    Notes
    -----
    Summing the node balances implied by C.4, C.10 and C.11 over the hours
    gives, exactly for the Crank–Nicolson scheme,

        C_m·(θ_m,end − θ_m,start) = Σ [φ_ia + φ_st + φ_m + φ_HC
            + H_tr,em·(θ_e − θ_m) + H_tr,w·(θ_e − θ_s) + H_ve·(θ_sup − θ_air)]·Δt

    with θ_m the hour mean of C.9. φ_ia + φ_st + φ_m is less than
    φ_int + φ_sol by the share H_tr,w/(9.1·A_t) of (0.5·φ_int + φ_sol) that C.3
    assigns to no node; it is reported as ``gains_not_delivered``.

    References
    ----------
    ISO 13790:2008 Annex C, Eqs. C.1–C.11.
    """
    shape = result.temp_air_in.shape
    te = _time_zone(temp_air, shape, "temp_air", where="energy_balance")
    tsup = te if temp_sup is None else _time_zone(temp_sup, shape, "temp_sup", where="energy_balance")
    gi = _time_zone(gains_internal, shape, "gains_internal", where="energy_balance")
    gs = _time_zone(gains_solar, shape, "gains_solar", where="energy_balance")
    dt = STEP_SECONDS
    g_int = gi.sum(axis=0) * dt
    g_sol = gs.sum(axis=0) * dt
    lost = params.share_returned * (0.5 * g_int + g_sol)
    heat = result.heating_need.sum(axis=0) * dt
    cool = result.cooling_need.sum(axis=0) * dt
    tr_op = params.h_tr_em * (result.temp_mass - te).sum(axis=0) * dt
    tr_w = params.h_tr_w * (result.temp_surface - te).sum(axis=0) * dt
    vent = (result.h_ve * (result.temp_air_in - tsup)).sum(axis=0) * dt
    stored = params.capacity * (result.temp_mass_final - result.temp_mass_initial)
    residual = (g_int + g_sol - lost + heat - cool) - (tr_op + tr_w + vent + stored)
    return EnergyBalance(
        gains_internal=g_int,
        gains_solar=g_sol,
        gains_not_delivered=lost,
        heating=heat,
        cooling=cool,
        transmission_opaque=tr_op,
        transmission_windows=tr_w,
        ventilation=vent,
        stored=stored,
        residual=residual,
    )


# ---------------------------------------------------------------------------
# Scalar reference
# ---------------------------------------------------------------------------


def simulate_loop_reference(
    params: ZoneParameters,
    temp_air,
    gains_internal,
    gains_solar,
    h_ve,
    *,
    temp_m_initial: float,
    zone: int = 0,
    temp_sup=None,
    heating_setpoint=None,
    cooling_setpoint=None,
    max_heating: float = math.inf,
    max_cooling: float = math.inf,
    occupied=None,
) -> SimulationResult:
    """Plain per-hour Python loop for one zone, following Annex C literally.

    A slow, scalar reference for :func:`simulate` (tests and benchmark):
    every hour solves C.1–C.12 with Python floats, and set-point control runs
    the three solves of §C.4.2 (φ_HC = 0, φ_HC,10 = 10·A_f, then the clipped
    need from C.13).

    Parameters
    ----------
    params : ZoneParameters
        Network; only zone ``zone`` is used.
    temp_air, gains_internal, gains_solar, h_ve : array_like, shape (T,)
        Hourly inputs of this zone (scalars are repeated) [°C], [W], [W],
        [W K⁻¹].
    temp_m_initial : float
        θ_m at the start of hour 0 [°C] (no warm-up here).
    zone : int, default 0
        Which zone of ``params``.
    temp_sup, heating_setpoint, cooling_setpoint : array_like (T,), optional
        [°C], as in :func:`simulate`.
    max_heating, max_cooling : float, default inf
        Available power, ≥ 0 [W].
    occupied : array_like of bool (T,), optional
        Hours in which the set-points apply.

    Returns
    -------
    SimulationResult
        Arrays of shape (T, 1).

    References
    ----------
    ISO 13790:2008 Annex C, C.1–C.13, §C.4.2.
    """
    te_arr = np.atleast_1d(np.asarray(temp_air, dtype=float))
    t_len = te_arr.shape[0]

    def series(x, default=None):
        if x is None:
            return None if default is None else [default] * t_len
        return np.broadcast_to(np.asarray(x, dtype=float), (t_len,)).tolist()

    te = te_arr.tolist()
    tsup = te if temp_sup is None else series(temp_sup)
    gi, gs, hv = series(gains_internal), series(gains_solar), series(h_ve)
    sp_h, sp_c = series(heating_setpoint), series(cooling_setpoint)
    occ = [True] * t_len if occupied is None else np.broadcast_to(np.asarray(occupied, bool), (t_len,)).tolist()

    j = zone
    a_f = float(params.floor_area[j])
    a_t = float(params.area_internal[j])
    a_m = float(params.area_mass[j])
    cap = float(params.capacity[j]) / STEP_SECONDS
    h_is, h_w = float(params.h_tr_is[j]), float(params.h_tr_w[j])
    h_ms, h_em = float(params.h_tr_ms[j]), float(params.h_tr_em[j])
    phi_10 = TEST_POWER_DENSITY * a_f

    def hour(tm_prev, t_e, t_sup, h_ve_t, phi_int, phi_sol, phi_hc):
        phi_ia = 0.5 * phi_int  # C.1
        phi_m = a_m / a_t * (0.5 * phi_int + phi_sol)  # C.2
        phi_st = (1.0 - a_m / a_t - h_w / (9.1 * a_t)) * (0.5 * phi_int + phi_sol)  # C.3
        h1 = 1.0 / (1.0 / h_ve_t + 1.0 / h_is)  # C.6
        h2 = h1 + h_w  # C.7
        h3 = 1.0 / (1.0 / h2 + 1.0 / h_ms)  # C.8
        phi_m_tot = phi_m + h_em * t_e + h3 * (phi_st + h_w * t_e + h1 * ((phi_ia + phi_hc) / h_ve_t + t_sup)) / h2
        tm_t = (tm_prev * (cap - 0.5 * (h3 + h_em)) + phi_m_tot) / (cap + 0.5 * (h3 + h_em))  # C.4
        tm = 0.5 * (tm_t + tm_prev)  # C.9
        ts = (h_ms * tm + phi_st + h_w * t_e + h1 * (t_sup + (phi_ia + phi_hc) / h_ve_t)) / (h_ms + h_w + h1)
        ta = (h_is * ts + h_ve_t * t_sup + phi_ia + phi_hc) / (h_is + h_ve_t)  # C.11
        return ta, ts, tm, tm_t, 0.3 * ta + 0.7 * ts  # C.12

    rows = []
    tm_prev = float(temp_m_initial)
    for t in range(t_len):
        args = (tm_prev, te[t], tsup[t], hv[t], gi[t], gs[t])
        state = hour(*args, 0.0)
        ta0 = state[0]
        target = None
        if occ[t]:
            if sp_h is not None and ta0 < sp_h[t]:
                target = sp_h[t]
            elif sp_c is not None and ta0 > sp_c[t]:
                target = sp_c[t]
        phi_hc = 0.0
        if target is not None:
            ta10 = hour(*args, phi_10)[0]
            phi_un = phi_10 * (target - ta0) / (ta10 - ta0)  # C.13
            phi_hc = min(max(phi_un, -max_cooling), max_heating)
            state = hour(*args, phi_hc)
        ta, ts, tm, tm_t, top = state
        rows.append((ta, ts, tm, top, max(phi_hc, 0.0), max(-phi_hc, 0.0)))
        tm_prev = tm_t
    cols = np.array(rows, dtype=float).reshape(t_len, 6)
    return SimulationResult(
        temp_air_in=cols[:, 0:1].copy(),
        temp_surface=cols[:, 1:2].copy(),
        temp_mass=cols[:, 2:3].copy(),
        temp_op=cols[:, 3:4].copy(),
        heating_need=cols[:, 4:5].copy(),
        cooling_need=cols[:, 5:6].copy(),
        h_ve=np.asarray(hv, dtype=float)[:, None],
        temp_mass_initial=np.array([float(temp_m_initial)]),
        temp_mass_final=np.array([tm_prev]),
        unconverged_hours=np.zeros(1, dtype=np.int64),
    )
