"""Comfort criteria: operative temperature, adaptive limits and overheating checks.

Pure, vectorised functions for one zone. Inputs are scalars, numpy arrays or
pandas Series (hourly values); a Series' index is kept on the way out. The
caller loops over zones.

Contents
--------
operative_temperature
    Operative temperature from air and mean radiant temperature.
adaptive_ashrae55
    ASHRAE 55 adaptive model: comfort temperature, 80 % and 90 %
    acceptability limits, elevated-air-speed increase, validity flag.
adaptive_en16798
    EN 16798-1 adaptive model: comfort temperature, category I-III limits,
    validity flags for the upper and the lower limits.
fixed_band, outdoor_band
    Fixed indoor band (air-conditioned design) and outdoor band (weather
    suitable for opening windows).
evaluate_criteria, criteria_summary
    The eight comfort criteria hour by hour, and their share of occupied hours.
tm52_assessment
    CIBSE TM52:2013 overheating criteria for free-running buildings.

Conventions
-----------
* Acceptability limits are computed unrounded; both ends of a band count as
  acceptable (inclusive comparison).
* An hour outside a model's range of validity is flagged (``in_range`` /
  ``out_of_range`` columns, or a count in a result); it is never reported as
  comfortable and never turned into a silent NaN.
* A missing (NaN) temperature makes an hour out of range in
  :func:`evaluate_criteria`; it is never comfortable.
* Bad arguments raise :class:`calcs.errors.ProjectError` naming the parameter,
  the value and what is allowed.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from calcs.errors import ProjectError

__all__ = [
    "CRITERIA",
    "OutOfRangeWarning",
    "Tm52Result",
    "adaptive_ashrae55",
    "adaptive_en16798",
    "criteria_summary",
    "evaluate_criteria",
    "fixed_band",
    "operative_temperature",
    "outdoor_band",
    "tm52_assessment",
]

#: The eight comfort criteria, in report order.
CRITERIA: tuple[str, ...] = (
    "outdoor_band",
    "fixed_indoor",
    "ashrae55_80",
    "ashrae55_90",
    "ashrae55_80_fans",
    "en16798_cat1",
    "en16798_cat2",
    "en16798_cat3",
)

# ASHRAE 55 adaptive model (55-2020 §5.4.2) [DOC pythermalcomfort; MEM standard]
_ASHRAE_SLOPE = 0.31
_ASHRAE_INTERCEPT = 17.8
_ASHRAE_HALF_WIDTH = {"80": 3.5, "90": 2.5}
_ASHRAE_VALID = (10.0, 33.5)  # inclusive

# EN 16798-1:2019 Annex B.2 adaptive model [DOC pythermalcomfort; MEM standard]
_EN_SLOPE = 0.33
_EN_INTERCEPT = 18.8
# category: (below comfort temperature, above comfort temperature) [K]
_EN_OFFSETS = {1: (3.0, 2.0), 2: (4.0, 3.0), 3: (5.0, 4.0)}
_EN_VALID_UPPER = (10.0, 30.0)  # exclusive, upper limits [MEM]
_EN_VALID_LOWER = (15.0, 30.0)  # exclusive, lower limits [MEM]

# Elevated air speed: ASHRAE 55 Table 5.4.2.4 [MEM]; same steps in EN 16798-1 [DOC PTC]
# (air speed threshold [m s⁻¹], increase of the upper limits [K]), highest first.
_AIR_SPEED_STEPS = ((1.2, 2.2), (0.9, 1.8), (0.6, 1.2))
_AIR_SPEED_TEMP_OP = 25.0  # increase applies only when temp_op > 25 °C

# CIBSE TM52:2013 [DOC via a secondary source quoting it]
_TM52_OFFSETS = {"I": 2.0, "II": 3.0, "III": 4.0}
_TM52_MONTHS = (5, 6, 7, 8, 9)  # May to September
_TM52_CRIT1_MAX_PCT = 3  # % of occupied hours with ΔT ≥ 1 K
_TM52_CRIT2_MAX = 6  # daily weighted exceedance
_TM52_CRIT3_MAX = 4  # ΔT [K]
_TM52_AIR_SPEED_MIN = 0.1  # allowance only above this [m s⁻¹]
_TM52_AIR_SPEED_MAX = 0.8  # allowance not extrapolated above this [m s⁻¹] [MEM]
# Float guard before half-up rounding of ΔT: removes representation error such as
# 28.9 - (0.33 * 20 + 21.8) = 0.4999999999999964 (about 1e-14 K) but keeps a real difference of
# 1e-8 K. A coarser guard (6 decimals) would turn 0.49999999 into 0.5.
_TM52_GUARD_DECIMALS = 9


class OutOfRangeWarning(UserWarning):
    """An input lies outside the range a published method covers."""


# --------------------------------------------------------------------------- helpers


def _to_float(name: str, value) -> np.ndarray:
    """Return ``value`` as a float array (0-d or 1-d) or raise ProjectError."""
    if isinstance(value, pd.DataFrame):
        msg = f"{name} must be a number, an array or a Series, got a DataFrame"
        raise ProjectError(msg)
    raw = value.to_numpy() if isinstance(value, pd.Series) else value
    try:
        arr = np.asarray(raw, dtype=float)
    except (TypeError, ValueError):
        msg = f"{name} must be numeric, got {value!r:.80}"
        raise ProjectError(msg) from None
    if arr.ndim > 1:
        msg = f"{name} must be a number or one-dimensional, got shape {arr.shape}"
        raise ProjectError(msg)
    if np.isinf(arr).any():
        msg = f"{name} must be finite, got {arr[np.isinf(arr)][0]}"
        raise ProjectError(msg)
    return arr


def _to_bool(name: str, value) -> np.ndarray:
    """Return ``value`` as a bool array; only True/False or 1/0 are allowed."""
    raw = value.to_numpy() if isinstance(value, pd.Series) else value
    arr = np.asarray(raw)
    if arr.ndim > 1:
        msg = f"{name} must be one-dimensional, got shape {arr.shape}"
        raise ProjectError(msg)
    if arr.dtype == bool:
        return arr
    try:
        num = arr.astype(float)
    except (TypeError, ValueError):
        msg = f"{name} must be True/False (or 1/0) per hour, got {value!r:.80}"
        raise ProjectError(msg) from None
    bad = ~np.isin(num, (0.0, 1.0))
    if bad.any():
        msg = f"{name} must be True/False (or 1/0) per hour, got {num[bad][0]}"
        raise ProjectError(msg)
    return num.astype(bool)


def _common(
    bools: tuple[str, ...] = (), **named
) -> tuple[dict[str, np.ndarray], pd.Index | None, bool]:
    """Broadcast the inputs together.

    Returns the arrays (all of one shape), the index of the Series inputs
    (``None`` if there is none) and whether every input was a scalar. Series
    must share one index. Names in ``bools`` are read as True/False per hour,
    the others as numbers.
    """
    index = None
    index_name = None
    arrays: dict[str, np.ndarray] = {}
    for name, value in named.items():
        if isinstance(value, pd.Series):
            if index is None:
                index, index_name = value.index, name
            elif not value.index.equals(index):
                msg = (
                    f"{name} must have the same index as {index_name} "
                    f"(same hours, same order)"
                )
                raise ProjectError(msg)
        if name in bools:
            arrays[name] = _to_bool(name, value)
        else:
            arrays[name] = _to_float(name, value)
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        shapes = ", ".join(f"{k} {v.shape}" for k, v in arrays.items())
        msg = f"inputs must have the same length or be scalars, got {shapes}"
        raise ProjectError(msg) from None
    if index is not None and shape != (len(index),):
        msg = f"inputs must have the length of {index_name} ({len(index)}), got shape {shape}"
        raise ProjectError(msg)
    scalar = shape == ()
    out = {k: np.broadcast_to(v, shape if shape else (1,)) for k, v in arrays.items()}
    return out, index, scalar


def _check_air_speed(name: str, v: np.ndarray) -> None:
    bad = np.isnan(v) | (v < 0)
    if bad.any():
        msg = f"{name} must be ≥ 0 m s⁻¹ (and not missing), got {v[bad][0]}"
        raise ProjectError(msg)


def _check_band(name: str, low: float, high: float) -> tuple[float, float]:
    try:
        low, high = float(low), float(high)
    except (TypeError, ValueError):
        msg = f"{name} must be two temperatures (low, high) in °C, got ({low!r}, {high!r})"
        raise ProjectError(msg) from None
    if not (np.isfinite(low) and np.isfinite(high)) or low > high:
        msg = f"{name} must have finite low ≤ high [°C], got low={low}, high={high}"
        raise ProjectError(msg)
    return low, high


def _frame(columns: dict[str, np.ndarray], index: pd.Index | None) -> pd.DataFrame:
    return pd.DataFrame(columns, index=index)


def _wrap(values: np.ndarray, index: pd.Index | None, scalar: bool, name: str):
    if index is not None:
        return pd.Series(values, index=index, name=name)
    if scalar:
        return values[0]
    return np.asarray(values)


def _air_speed_increase(air_speed: np.ndarray, temp_op: np.ndarray) -> np.ndarray:
    """Increase of the upper adaptive limits for elevated air speed [K] (shapes broadcast)."""
    step = np.zeros_like(air_speed, dtype=float)
    for threshold, increase in reversed(_AIR_SPEED_STEPS):
        step = np.where(air_speed >= threshold, increase, step)
    if not step.any():
        return np.zeros(np.broadcast_shapes(step.shape, np.shape(temp_op)))
    return np.where(temp_op > _AIR_SPEED_TEMP_OP, step, 0.0)


# --------------------------------------------------------------------------- operative


def operative_temperature(temp_in, temp_rad, air_speed, method: str = "ashrae55"):
    """Operative temperature from indoor air and mean radiant temperature.

    Parameters
    ----------
    temp_in : float, array-like or pandas.Series
        Indoor air temperature [°C].
    temp_rad : float, array-like or pandas.Series
        Mean radiant temperature [°C].
    air_speed : float, array-like or pandas.Series
        Average air speed at the occupant [m s⁻¹], ≥ 0.
    method : {"ashrae55", "iso7726"}
        Weighting to use (see Notes).

    Returns
    -------
    float, numpy.ndarray or pandas.Series
        Operative temperature temp_op [°C]; a Series keeps the input index.

    Warns
    -----
    OutOfRangeWarning
        ``method="ashrae55"`` with an air speed above 1.0 m s⁻¹, where the
        weighting table ends; A = 0.7 is then used.

    Notes
    -----
    ``"ashrae55"``: :math:`t_o = A\\,t_a + (1 - A)\\,t_r` with A = 0.5 for
    v < 0.2 m s⁻¹, 0.6 for 0.2 ≤ v < 0.6 and 0.7 for 0.6 ≤ v ≤ 1.0. A step
    belongs to the higher band at its boundary (v = 0.2 → 0.6), as
    pythermalcomfort does; the standard writes the bands as "0.2 to 0.6".

    ``"iso7726"``: :math:`t_o = (t_a\\sqrt{10v} + t_r)/(1 + \\sqrt{10v})`.
    Below 0.1 m s⁻¹ the formula would weight the radiant temperature ever more
    heavily (t_o → t_r as v → 0); CIBSE Guide A uses the plain mean
    :math:`(t_a + t_r)/2` there [MEM], which is what this function returns
    (the formula gives the plain mean at exactly 0.1 m s⁻¹, so the result is
    continuous).

    References
    ----------
    ANSI/ASHRAE Standard 55-2020, Normative Appendix A (operative temperature).
    ISO 7726:1998, Annex G; CIBSE Guide A (2015), §1 (dry resultant
    temperature) [MEM].
    """
    arrays, index, scalar = _common(temp_in=temp_in, temp_rad=temp_rad, air_speed=air_speed)
    t_a, t_r, v = arrays["temp_in"], arrays["temp_rad"], arrays["air_speed"]
    _check_air_speed("air_speed", v)
    if method == "ashrae55":
        if (v > 1.0).any():
            msg = (
                f"air_speed up to {v.max():.2f} m s⁻¹ exceeds the 1.0 m s⁻¹ end of "
                "the ASHRAE 55 Appendix A weighting table; A = 0.7 used"
            )
            warnings.warn(msg, OutOfRangeWarning, stacklevel=2)
        a = np.where(v < 0.2, 0.5, np.where(v < 0.6, 0.6, 0.7))
        t_o = a * t_a + (1.0 - a) * t_r
    elif method == "iso7726":
        s = np.sqrt(10.0 * np.maximum(v, 0.1))
        t_o = (t_a * s + t_r) / (1.0 + s)
    else:
        msg = f"method must be 'ashrae55' or 'iso7726', got {method!r}"
        raise ProjectError(msg)
    return _wrap(t_o, index, scalar, "temp_op")


# --------------------------------------------------------------------------- adaptive


def adaptive_ashrae55(temp_op, prevailing_mean, air_speed=0.1) -> pd.DataFrame:
    """ASHRAE 55 adaptive comfort limits and acceptability, hour by hour.

    Parameters
    ----------
    temp_op : float, array-like or pandas.Series
        Indoor operative temperature [°C].
    prevailing_mean : float, array-like or pandas.Series
        Prevailing mean outdoor temperature t_pma(out) [°C].
    air_speed : float, array-like or pandas.Series, default 0.1
        Average air speed at the occupants [m s⁻¹]; sets the increase of the
        upper limits (see Notes).

    Returns
    -------
    pandas.DataFrame
        One row per hour (index of the Series input, else 0..n-1):

        ``comfort_temp``
            Neutral temperature t_cmf [°C].
        ``lower_80``, ``upper_80``, ``lower_90``, ``upper_90``
            Acceptability limits [°C]; the upper ones include the air-speed
            increase.
        ``air_speed_increase``
            Increase added to the upper limits [K].
        ``ok_80``, ``ok_90``
            temp_op within the limits (inclusive) **and** the hour in range.
        ``in_range``
            10 ≤ t_pma(out) ≤ 33.5 °C.

    Notes
    -----
    .. math::

        t_{cmf} = 0.31\\,t_{pma(out)} + 17.8

    80 % acceptability: t_cmf ± 3.5 K; 90 %: t_cmf ± 2.5 K. Limits are not
    rounded. Elevated air speed (Table 5.4.2.4) raises both upper limits by
    1.2 K for 0.6 ≤ v < 0.9 m s⁻¹, 1.8 K for 0.9 ≤ v < 1.2 and 2.2 K for
    v ≥ 1.2 (not extrapolated further), only when t_o > 25 °C. The
    standard writes "greater than 25 °C" [MEM]; pythermalcomfort 4.8.1 applies
    the increase from t_o ≥ 25 °C, so the two differ only at exactly 25 °C.

    The model applies to occupant-controlled naturally conditioned spaces with
    no mechanical cooling or heating in operation, occupants at 1.0–1.5 met
    [DOC pythermalcomfort; 1.0–1.3 in 55-2010 MEM] free to adapt clothing.
    Outside 10 ≤ t_pma(out) ≤ 33.5 °C the limits are still shown (formula
    extrapolated) but ``in_range`` is False and ``ok_*`` is False. The standard's
    wording may make the ends exclusive [MEM]; they are kept inclusive here as
    in the pythermalcomfort validation table (t_pma = 10 °C is valid).

    References
    ----------
    ANSI/ASHRAE Standard 55-2020, §5.4 (occupant-controlled naturally
    conditioned spaces), §5.4.2.1 (prevailing mean outdoor temperature),
    Table 5.4.2.4 (increases in acceptable operative temperature limits).
    """
    arrays, index, _ = _common(
        temp_op=temp_op, prevailing_mean=prevailing_mean, air_speed=air_speed
    )
    t_o, t_pma, v = arrays["temp_op"], arrays["prevailing_mean"], arrays["air_speed"]
    _check_air_speed("air_speed", v)

    cols: dict[str, np.ndarray] = {"comfort_temp": _ASHRAE_SLOPE * t_pma + _ASHRAE_INTERCEPT}
    for level in _ASHRAE_HALF_WIDTH:
        cols[f"lower_{level}"], cols[f"upper_{level}"], in_range = ashrae55_limits(t_o, t_pma, v, level)
    cols["air_speed_increase"] = _air_speed_increase(v, t_o)
    for level in _ASHRAE_HALF_WIDTH:
        within = (t_o >= cols[f"lower_{level}"]) & (t_o <= cols[f"upper_{level}"])
        cols[f"ok_{level}"] = within & in_range
    cols["in_range"] = in_range
    return _frame(cols, index)


def ashrae55_limits(temp_op, prevailing_mean, air_speed, level: str = "80"):
    """Lower and upper limits of ASHRAE 55 adaptive comfort, broadcasting (no frame, no checks).

    The array core of :func:`adaptive_ashrae55` for large batches: ``temp_op`` (any shape)
    only decides the air-speed increase (above 25 °C operative); ``prevailing_mean`` and
    ``air_speed`` broadcast against it. Returns (lower, upper, in_range) arrays [°C], [°C], bool.
    """
    t_pma = np.asarray(prevailing_mean, dtype=float)
    comfort = _ASHRAE_SLOPE * t_pma + _ASHRAE_INTERCEPT
    half = _ASHRAE_HALF_WIDTH[level]
    increase = _air_speed_increase(np.asarray(air_speed, dtype=float), np.asarray(temp_op, dtype=float))
    in_range = (t_pma >= _ASHRAE_VALID[0]) & (t_pma <= _ASHRAE_VALID[1])
    return comfort - half, comfort + half + increase, in_range


def en16798_limits(temp_op, running_mean, air_speed, category=2):
    """Lower and upper limits of EN 16798-1 adaptive comfort, broadcasting (no frame, no checks).

    The array core of :func:`adaptive_en16798` for large batches (as :func:`ashrae55_limits`).
    Returns (lower, upper, in_range_lower, in_range_upper).
    """
    t_rm = np.asarray(running_mean, dtype=float)
    comfort = _EN_SLOPE * t_rm + _EN_INTERCEPT
    below, above = _EN_OFFSETS[int(category)]
    increase = _air_speed_increase(np.asarray(air_speed, dtype=float), np.asarray(temp_op, dtype=float))
    in_upper = (t_rm > _EN_VALID_UPPER[0]) & (t_rm < _EN_VALID_UPPER[1])
    in_lower = (t_rm > _EN_VALID_LOWER[0]) & (t_rm < _EN_VALID_LOWER[1])
    return comfort - below, comfort + above + increase, in_lower, in_upper


def adaptive_en16798(temp_op, running_mean, air_speed=0.1) -> pd.DataFrame:
    """EN 16798-1 adaptive comfort limits by category, hour by hour.

    Parameters
    ----------
    temp_op : float, array-like or pandas.Series
        Indoor operative temperature [°C].
    running_mean : float, array-like or pandas.Series
        Exponentially weighted running mean outdoor temperature θ_rm [°C].
    air_speed : float, array-like or pandas.Series, default 0.1
        Average air speed at the occupants [m s⁻¹]; sets the increase of the
        upper limits (same steps as :func:`adaptive_ashrae55`).

    Returns
    -------
    pandas.DataFrame
        One row per hour:

        ``comfort_temp``
            θ_c [°C].
        ``lower_cat1``, ``upper_cat1``, ``lower_cat2``, ``upper_cat2``, ``lower_cat3``, ``upper_cat3``
            Category limits [°C]; upper ones include the air-speed increase.
        ``air_speed_increase``
            Increase added to the upper limits [K].
        ``ok_cat1``, ``ok_cat2``, ``ok_cat3``
            temp_op within the category limits (inclusive) and the hour
            judged (not ``out_of_range_cat*``).
        ``out_of_range_cat1``, ``out_of_range_cat2``, ``out_of_range_cat3``
            The model cannot judge the hour for that category (see Notes).
        ``in_range_upper``
            10 < θ_rm < 30 °C: the upper limits apply.
        ``in_range_lower``
            15 < θ_rm < 30 °C: the lower limits apply.

    Notes
    -----
    .. math::

        θ_c = 0.33\\,θ_{rm} + 18.8

    Category I: θ_c − 3 ≤ θ_o ≤ θ_c + 2; II: −4/+3; III: −5/+4 [K].

    Validity [MEM]: the upper limits apply for 10 < θ_rm < 30 °C, the lower
    limits for 15 < θ_rm < 30 °C. pythermalcomfort 4.8.1 uses 10 ≤ θ_rm ≤ 30
    for both. An hour is judged on the side that decides it:

    * θ_rm outside (10, 30): out of range.
    * θ_rm in (10, 15]: an hour above the upper limit is judged (not ok); any
      other hour would need the lower limit, so it is out of range.
    * θ_rm in (15, 30): judged on both limits.

    A missing temp_op makes the hour out of range.

    References
    ----------
    EN 16798-1:2019, Annex B.2.2 (adaptive criteria for buildings without
    mechanical cooling), Table B.7 [MEM: table number not verified]; same model
    as EN 15251:2007 Annex A.2.
    """
    arrays, index, _ = _common(temp_op=temp_op, running_mean=running_mean, air_speed=air_speed)
    t_o, t_rm, v = arrays["temp_op"], arrays["running_mean"], arrays["air_speed"]
    _check_air_speed("air_speed", v)

    cols: dict[str, np.ndarray] = {"comfort_temp": _EN_SLOPE * t_rm + _EN_INTERCEPT}
    for cat in _EN_OFFSETS:
        cols[f"lower_cat{cat}"], cols[f"upper_cat{cat}"], in_lower, in_upper = en16798_limits(t_o, t_rm, v, cat)
    cols["air_speed_increase"] = _air_speed_increase(v, t_o)
    for cat in _EN_OFFSETS:
        lower, upper = cols[f"lower_cat{cat}"], cols[f"upper_cat{cat}"]
        above_upper = t_o > upper  # False for NaN
        out = ~in_upper | (~in_lower & ~above_upper) | np.isnan(t_o)
        cols[f"ok_cat{cat}"] = (t_o >= lower) & (t_o <= upper) & ~out
        cols[f"out_of_range_cat{cat}"] = out
    cols["in_range_upper"] = in_upper
    cols["in_range_lower"] = in_lower
    return _frame(cols, index)


# --------------------------------------------------------------------------- bands


def fixed_band(temp_op, low: float = 20.0, high: float = 24.0):
    """Operative temperature within a fixed indoor band (inclusive).

    Parameters
    ----------
    temp_op : float, array-like or pandas.Series
        Indoor operative temperature [°C].
    low, high : float, default 20.0, 24.0
        Band [°C]; 20–24 °C is typical of air-conditioned design (common
        practice, no source).

    Returns
    -------
    bool, numpy.ndarray or pandas.Series
        True where low ≤ temp_op ≤ high; False for a missing value.

    Notes
    -----
    A static band, the usual design basis for air-conditioned offices.
    Not an adaptive model and not tied to a standard.

    References
    ----------
    Common practice, no source.
    """
    low, high = _check_band("fixed band", low, high)
    arrays, index, scalar = _common(temp_op=temp_op)
    t = arrays["temp_op"]
    return _wrap((t >= low) & (t <= high), index, scalar, "fixed_indoor")


def outdoor_band(temp_air, low: float = 16.0, high: float = 26.0):
    """Outdoor dry-bulb temperature within a band suited to natural ventilation.

    Parameters
    ----------
    temp_air : float, array-like or pandas.Series
        Outdoor dry-bulb temperature [°C].
    low, high : float, default 16.0, 26.0
        Band [°C] (common practice, no source).

    Returns
    -------
    bool, numpy.ndarray or pandas.Series
        True where low ≤ temp_air ≤ high; False for a missing value.

    Notes
    -----
    A screening measure of the hours in which outdoor air is mild enough to
    be brought in directly through windows.

    References
    ----------
    Common practice, no source.
    """
    low, high = _check_band("outdoor band", low, high)
    arrays, index, scalar = _common(temp_air=temp_air)
    t = arrays["temp_air"]
    return _wrap((t >= low) & (t <= high), index, scalar, "outdoor_band")


# --------------------------------------------------------------------------- criteria


def evaluate_criteria(
    temp_op,
    temp_air,
    running_mean,
    prevailing_mean,
    occupied,
    *,
    air_speed=0.1,
    fan_air_speed=None,
    fixed=(20.0, 24.0),
    band=(16.0, 26.0),
) -> pd.DataFrame:
    """The eight comfort criteria, hour by hour, for one zone.

    Parameters
    ----------
    temp_op : array-like or pandas.Series
        Indoor operative temperature [°C].
    temp_air : array-like or pandas.Series
        Outdoor dry-bulb temperature [°C].
    running_mean : float, array-like or pandas.Series
        EN 16798-1 running mean outdoor temperature [°C].
    prevailing_mean : float, array-like or pandas.Series
        ASHRAE 55 prevailing mean outdoor temperature [°C].
    occupied : bool array-like or pandas.Series
        True in occupied hours.
    air_speed : float, array-like or pandas.Series, default 0.1
        Air speed without fans [m s⁻¹], used by the ASHRAE 55 and EN 16798-1
        criteria.
    fan_air_speed : float, array-like or pandas.Series, optional
        Air speed with ceiling or desk fans running [m s⁻¹], used by
        ``ashrae55_80_fans`` only. ``None`` means no fans: the criterion then
        uses ``air_speed`` and equals ``ashrae55_80``.
    fixed : (float, float), default (20, 24)
        Fixed indoor band [°C] (common practice, no source).
    band : (float, float), default (16, 26)
        Outdoor band [°C] (common practice, no source).

    Returns
    -------
    pandas.DataFrame
        Column ``occupied`` and, for each criterion in :data:`CRITERIA`,
        ``<criterion>_ok`` and ``<criterion>_out_of_range`` (bool). An hour
        out of range is never ok.

    Notes
    -----
    ========================  =====================================================
    criterion                 ok when
    ========================  =====================================================
    ``outdoor_band``          band[0] ≤ temp_air ≤ band[1]
    ``fixed_indoor``          fixed[0] ≤ temp_op ≤ fixed[1]
    ``ashrae55_80``           ASHRAE 55 80 % limits, ``air_speed``
    ``ashrae55_90``           ASHRAE 55 90 % limits, ``air_speed``
    ``ashrae55_80_fans``      ASHRAE 55 80 % limits, ``fan_air_speed``
    ``en16798_cat1..3``       EN 16798-1 category I, II, III limits, ``air_speed``
    ========================  =====================================================

    Out of range: a missing temperature the criterion needs; for ASHRAE 55,
    t_pma(out) outside 10–33.5 °C; for EN 16798-1, see
    :func:`adaptive_en16798`.

    References
    ----------
    See :func:`adaptive_ashrae55`, :func:`adaptive_en16798`,
    :func:`fixed_band`, :func:`outdoor_band`.
    """
    if not isinstance(fixed, (tuple, list)) or len(fixed) != 2:
        msg = f"fixed must be (low, high) in °C, got {fixed!r}"
        raise ProjectError(msg)
    if not isinstance(band, (tuple, list)) or len(band) != 2:
        msg = f"band must be (low, high) in °C, got {band!r}"
        raise ProjectError(msg)
    fixed = _check_band("fixed", *fixed)
    band = _check_band("band", *band)
    if fan_air_speed is None:
        fan_air_speed = air_speed
    arrays, index, _ = _common(
        bools=("occupied",),
        temp_op=temp_op,
        temp_air=temp_air,
        running_mean=running_mean,
        prevailing_mean=prevailing_mean,
        occupied=occupied,
        air_speed=air_speed,
        fan_air_speed=fan_air_speed,
    )
    occ = arrays["occupied"]
    _check_air_speed("air_speed", arrays["air_speed"])
    _check_air_speed("fan_air_speed", arrays["fan_air_speed"])

    t_o, t_out = arrays["temp_op"], arrays["temp_air"]
    op_missing = np.isnan(t_o)
    ash = adaptive_ashrae55(t_o, arrays["prevailing_mean"], arrays["air_speed"])
    ash_fan = adaptive_ashrae55(t_o, arrays["prevailing_mean"], arrays["fan_air_speed"])
    en = adaptive_en16798(t_o, arrays["running_mean"], arrays["air_speed"])
    ash_out = ~ash["in_range"].to_numpy() | op_missing

    flags: dict[str, tuple[np.ndarray, np.ndarray]] = {
        "outdoor_band": (outdoor_band(t_out, *band), np.isnan(t_out)),
        "fixed_indoor": (fixed_band(t_o, *fixed), op_missing),
        "ashrae55_80": (ash["ok_80"].to_numpy(), ash_out),
        "ashrae55_90": (ash["ok_90"].to_numpy(), ash_out),
        "ashrae55_80_fans": (ash_fan["ok_80"].to_numpy(), ash_out),
    }
    for cat in (1, 2, 3):
        flags[f"en16798_cat{cat}"] = (
            en[f"ok_cat{cat}"].to_numpy(),
            en[f"out_of_range_cat{cat}"].to_numpy(),
        )
    cols: dict[str, np.ndarray] = {"occupied": occ.copy()}
    for name in CRITERIA:
        ok, out = flags[name]
        cols[f"{name}_ok"] = np.asarray(ok, dtype=bool) & ~out
        cols[f"{name}_out_of_range"] = np.asarray(out, dtype=bool)
    return _frame(cols, index)


def criteria_summary(evaluated: pd.DataFrame, occupied) -> pd.DataFrame:
    """Share of occupied hours meeting each criterion.

    Parameters
    ----------
    evaluated : pandas.DataFrame
        Output of :func:`evaluate_criteria`.
    occupied : bool array-like or pandas.Series
        True in occupied hours; same length (and index, for a Series) as
        ``evaluated``.

    Returns
    -------
    pandas.DataFrame
        Index ``criterion`` (the names in :data:`CRITERIA`), columns:

        ``ok_pct``
            Occupied hours that are ok and in range, % of occupied hours.
        ``out_of_range_pct``
            Occupied hours out of the model's range, % of occupied hours.
        ``ok_hours``, ``out_of_range_hours``
            The same as counts [h].
        ``occupied_hours``
            Number of occupied hours (the base of both percentages) [h].

    Notes
    -----
    The remainder, 100 − ok_pct − out_of_range_pct, is the share of occupied
    hours judged and found not acceptable.

    References
    ----------
    None (bookkeeping).
    """
    if not isinstance(evaluated, pd.DataFrame):
        msg = f"evaluated must be the DataFrame from evaluate_criteria, got {type(evaluated).__name__}"
        raise ProjectError(msg)
    needed = [f"{c}_{s}" for c in CRITERIA for s in ("ok", "out_of_range")]
    missing = [c for c in needed if c not in evaluated.columns]
    if missing:
        msg = f"evaluated lacks columns {missing}; pass the output of evaluate_criteria"
        raise ProjectError(msg)
    occ = _to_bool("occupied", occupied)
    if isinstance(occupied, pd.Series) and not occupied.index.equals(evaluated.index):
        msg = "occupied must have the same index as evaluated (same hours, same order)"
        raise ProjectError(msg)
    if occ.shape != (len(evaluated),):
        msg = f"occupied must have {len(evaluated)} values, got shape {occ.shape}"
        raise ProjectError(msg)
    n_occ = int(occ.sum())
    if n_occ == 0:
        msg = "occupied must contain at least one occupied hour, got none"
        raise ProjectError(msg)
    rows = []
    for name in CRITERIA:
        ok = evaluated[f"{name}_ok"].to_numpy(dtype=bool)
        out = evaluated[f"{name}_out_of_range"].to_numpy(dtype=bool)
        ok_h = int((ok & ~out & occ).sum())
        out_h = int((out & occ).sum())
        rows.append((100.0 * ok_h / n_occ, 100.0 * out_h / n_occ, ok_h, out_h, n_occ))
    return pd.DataFrame(
        rows,
        index=pd.Index(CRITERIA, name="criterion"),
        columns=["ok_pct", "out_of_range_pct", "ok_hours", "out_of_range_hours", "occupied_hours"],
    )


# --------------------------------------------------------------------------- TM52


@dataclass(frozen=True)
class Tm52Result:
    """CIBSE TM52:2013 overheating assessment of one zone.

    Attributes
    ----------
    category : str
        Building category used ("I", "II" or "III").
    occupied_hours_assessed : int
        Occupied hours May–September with data [h].
    occupied_hours_missing : int
        Occupied hours May–September without temp_op or running mean [h]
        (left out, as TM52 allows for partial data).
    hours_running_mean_out_of_range : int
        Assessed hours with the running mean outside 10 < T_rm < 30 °C, the
        validity of the EN 16798-1 upper limit [MEM]; assessed anyway [h].
    hours_exceeding : int
        Assessed hours with ΔT ≥ 1 K [h].
    hours_exceedance_pct : float
        The same as % of assessed hours [%].
    criterion1_pass : bool
        hours_exceedance_pct ≤ 3 %.
    max_daily_weighted_exceedance : int
        Largest daily weighted exceedance W_e [K h].
    days_over_weighted_limit : int
        Days with W_e > 6.
    criterion2_pass : bool
        W_e ≤ 6 on every day.
    max_delta_t : int
        Largest rounded ΔT [K].
    criterion3_pass : bool
        max_delta_t ≤ 4 K.
    failed_criteria : int
        Number of criteria failed (0–3).
    passed : bool
        True unless two or more criteria fail.
    max_air_speed_allowance : float
        Largest elevated-air-speed allowance added to T_max [K] (0 without).
    hours_air_speed_capped : int
        Assessed hours whose air speed exceeded 0.8 m s⁻¹ and was capped [h].
    """

    category: str
    occupied_hours_assessed: int
    occupied_hours_missing: int
    hours_running_mean_out_of_range: int
    hours_exceeding: int
    hours_exceedance_pct: float
    criterion1_pass: bool
    max_daily_weighted_exceedance: int
    days_over_weighted_limit: int
    criterion2_pass: bool
    max_delta_t: int
    criterion3_pass: bool
    failed_criteria: int
    passed: bool
    max_air_speed_allowance: float
    hours_air_speed_capped: int


def _round_half_up(x: np.ndarray) -> np.ndarray:
    """Half-up rounding to whole numbers after a float guard."""
    return np.floor(np.round(x, _TM52_GUARD_DECIMALS) + 0.5)


def tm52_assessment(temp_op, running_mean, occupied, category="II", air_speed=None) -> Tm52Result:
    """CIBSE TM52 overheating criteria for a free-running zone.

    Parameters
    ----------
    temp_op : pandas.Series
        Hourly indoor operative temperature [°C] with a DatetimeIndex (hour
        start, local time).
    running_mean : float, array-like or pandas.Series
        Exponentially weighted running mean outdoor temperature T_rm [°C].
    occupied : bool array-like or pandas.Series
        True in occupied hours.
    category : {"I", "II", "III"}, default "II"
        Building category (II for new buildings and refurbishments).
    air_speed : float, array-like or pandas.Series, optional
        Elevated air speed at the occupants [m s⁻¹]; adds the allowance ΔT_v
        to T_max where v > 0.1 m s⁻¹. ``None``: no allowance.

    Returns
    -------
    Tm52Result
        The three criteria and the verdict.

    Notes
    -----
    Only occupied hours from May to September are assessed.

    .. math::

        T_{max} = 0.33\\,T_{rm} + 18.8 + k + ΔT_v, \\quad k = 2, 3, 4
        \\text{ for categories I, II, III}

        ΔT = \\lfloor (T_{op} - T_{max}) + 0.5 \\rfloor

    (half-up rounding to whole kelvin, applied after rounding the difference to
    9 decimals to remove floating-point error, so T_op = 28.9 °C at T_rm = 20 °C,
    category II, gives 1).

    1. Hours of exceedance: hours with ΔT ≥ 1 K must not exceed 3 % of the
       assessed occupied hours.
    2. Daily weighted exceedance: :math:`W_e = \\sum \\max(ΔT, 0)` over the
       occupied hours of each day must be ≤ 6 on every day.
    3. Upper limit: ΔT must not exceed 4 K in any assessed hour.

    The zone fails if it fails two or more criteria.

    Elevated air speed, TM52 Eq. 1 [DOC via a secondary source]:
    :math:`ΔT_v = 7 - 50/(4 + 10\\,v^{0.5})` for v > 0.1 m s⁻¹. Above
    0.8 m s⁻¹ [MEM] the allowance is held at its 0.8 m s⁻¹ value (3.14 K)
    and the hours are counted in ``hours_air_speed_capped``. TM52 does not
    write ΔT_v into its Eq. 8 explicitly; adding it to T_max follows the
    secondary source.

    References
    ----------
    CIBSE TM52:2013, The limits of thermal comfort: avoiding overheating in
    European buildings, §3.2.2 Eq. 1, §6.1.2 (criteria), Eqs. 6, 8, 9.
    BS EN 15251:2007, Annex A.2 (running mean and category limits).
    """
    if not isinstance(temp_op, pd.Series) or not isinstance(temp_op.index, pd.DatetimeIndex):
        got = type(temp_op.index).__name__ if isinstance(temp_op, pd.Series) else type(temp_op).__name__
        msg = f"temp_op must be a pandas Series with a DatetimeIndex, got {got}"
        raise ProjectError(msg)
    if category not in _TM52_OFFSETS:
        msg = f"category must be one of {sorted(_TM52_OFFSETS)}, got {category!r}"
        raise ProjectError(msg)
    v_in = 0.0 if air_speed is None else air_speed
    arrays, index, _ = _common(
        bools=("occupied",),
        temp_op=temp_op,
        running_mean=running_mean,
        occupied=occupied,
        air_speed=v_in,
    )
    occ = arrays["occupied"]
    t_op, t_rm, v = arrays["temp_op"], arrays["running_mean"], arrays["air_speed"]
    _check_air_speed("air_speed", v)

    in_season = np.isin(index.month, _TM52_MONTHS)
    candidate = occ & in_season
    have = ~np.isnan(t_op) & ~np.isnan(t_rm)
    assessed = candidate & have
    n = int(assessed.sum())
    if n == 0:
        msg = "temp_op has no occupied hours with data from May to September; TM52 needs some"
        raise ProjectError(msg)

    v_eff = np.minimum(v, _TM52_AIR_SPEED_MAX)
    allowance = np.where(
        v_eff > _TM52_AIR_SPEED_MIN, 7.0 - 50.0 / (4.0 + 10.0 * np.sqrt(v_eff)), 0.0
    )
    t_max = _EN_SLOPE * t_rm + _EN_INTERCEPT + _TM52_OFFSETS[category] + allowance
    with np.errstate(invalid="ignore"):
        delta = _round_half_up(t_op - t_max)
    d = delta[assessed]

    n_exceed = int((d >= 1).sum())
    pct = 100.0 * n_exceed / n
    crit1 = 100 * n_exceed <= _TM52_CRIT1_MAX_PCT * n  # exact in integers

    days = index[assessed].normalize()
    daily = pd.Series(np.maximum(d, 0.0)).groupby(np.asarray(days)).sum()
    max_we = int(daily.max())
    days_over = int((daily > _TM52_CRIT2_MAX).sum())
    crit2 = days_over == 0

    max_dt = int(d.max())
    crit3 = max_dt <= _TM52_CRIT3_MAX

    failed = int(not crit1) + int(not crit2) + int(not crit3)
    return Tm52Result(
        category=category,
        occupied_hours_assessed=n,
        occupied_hours_missing=int((candidate & ~have).sum()),
        hours_running_mean_out_of_range=int(
            (assessed & ~((t_rm > _EN_VALID_UPPER[0]) & (t_rm < _EN_VALID_UPPER[1]))).sum()
        ),
        hours_exceeding=n_exceed,
        hours_exceedance_pct=pct,
        criterion1_pass=bool(crit1),
        max_daily_weighted_exceedance=max_we,
        days_over_weighted_limit=days_over,
        criterion2_pass=bool(crit2),
        max_delta_t=max_dt,
        criterion3_pass=bool(crit3),
        failed_criteria=failed,
        passed=failed < 2,
        max_air_speed_allowance=float(allowance[assessed].max()),
        hours_air_speed_capped=int((assessed & (v > _TM52_AIR_SPEED_MAX)).sum()),
    )
