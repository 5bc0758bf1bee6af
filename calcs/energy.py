"""Energy, running cost, carbon and economics of mixed mode against full air-conditioning.

Pure, vectorised functions:

* unit conversions of plant efficiency and fan power (:func:`cop_from_eer`,
  :func:`cop_from_kw_per_ton`, :func:`sfp_w_per_m3s`);
* end-use energy from the hourly ideal loads of the thermal model
  (:func:`cooling_electricity`, :func:`heating_energy`, :func:`fan_energy`);
* tariffs and demand charges (:func:`hourly_price`, :func:`demand_charge`);
* economics (:func:`present_value_factor`, :func:`net_present_value`,
  :func:`simple_payback`, :func:`discounted_payback`);
* summary statistics of a Monte Carlo batch (:func:`percentiles`).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from .errors import ProjectError

W_PER_TON = 3516.85  # 1 ton of refrigeration = 12 000 Btu/h = 3.51685 kW (definition)
BTU_H_PER_W = 3.412142  # 1 W = 3.412142 Btu/h (definition of the IT Btu)


def cop_from_eer(eer):
    """COP [W/W] from an energy efficiency ratio EER [Btu h⁻¹ W⁻¹]: COP = EER / 3.412."""
    return np.asarray(eer, dtype=float) / BTU_H_PER_W if np.ndim(eer) else float(eer) / BTU_H_PER_W


def cop_from_kw_per_ton(kw_per_ton):
    """COP [W/W] from a chiller rating in kW per ton of refrigeration: COP = 3.517 / (kW/ton)."""
    value = np.asarray(kw_per_ton, dtype=float)
    if np.any(value <= 0):
        msg = f"kw_per_ton must be > 0, got {kw_per_ton!r}"
        raise ProjectError(msg)
    out = (W_PER_TON / 1000.0) / value
    return float(out) if np.ndim(out) == 0 else out


def sfp_w_per_m3s(sfp_w_per_l_s):
    """Specific fan power in W/(m³/s) from W/(L/s) (× 1000)."""
    return np.asarray(sfp_w_per_l_s, dtype=float) * 1000.0 if np.ndim(sfp_w_per_l_s) else float(sfp_w_per_l_s) * 1000.0


def cooling_electricity(cooling_need, seer, temp_air=None, *, reference_temp=25.0, slope=0.0):
    """Electricity drawn by cooling plant for an hourly cooling need [W → W].

    Parameters
    ----------
    cooling_need : array_like
        Cooling delivered [W] (≥ 0).
    seer : float
        Seasonal energy efficiency ratio (cooling delivered ÷ electricity) [-].
    temp_air : array_like, optional
        Outdoor temperature, for an efficiency that varies with it [°C].
    reference_temp : float
        Outdoor temperature at which the efficiency equals ``seer`` [°C].
    slope : float
        Relative change of efficiency per kelvin above ``reference_temp`` (e.g. −0.02 = 2 % worse
        per K) [K⁻¹].

    Returns
    -------
    numpy.ndarray
        P_el = Q_c / η(T), η(T) = SEER·max(0.2, 1 + slope·(T − T_ref)) [W].
    """
    if np.any(np.asarray(seer) <= 0):
        msg = f"seer must be > 0, got {seer!r}"
        raise ProjectError(msg)
    need = np.asarray(cooling_need, dtype=float)
    factor = 1.0
    if temp_air is not None and slope != 0.0:
        temp = np.asarray(temp_air, dtype=float)
        if temp.ndim == 1 and need.ndim == 2:
            temp = temp[:, None]
        factor = np.maximum(0.2, 1.0 + slope * (temp - reference_temp))
    return need / (np.asarray(seer, dtype=float) * factor)


def heating_energy(heating_need, efficiency):
    """Delivered energy (fuel or electricity) for an hourly heating need: Q_h / η [W → W]."""
    if np.any(np.asarray(efficiency) <= 0):
        msg = f"heating efficiency must be > 0, got {efficiency!r}"
        raise ProjectError(msg)
    return np.asarray(heating_need, dtype=float) / np.asarray(efficiency, dtype=float)


def fan_energy(flow, sfp, running):
    """Fan electrical power in the hours a mechanical system runs.

    Parameters
    ----------
    flow : array_like
        Air volume flow moved by the fans [m³ s⁻¹].
    sfp : float
        Specific fan power [W/(L/s)] (UK practice; EN 16798-3 classes use W/(m³/s) = 1000 ×).
    running : array_like of bool
        Hours the fans run.

    Returns
    -------
    numpy.ndarray
        P = SFP·1000·q where running, else 0 [W].
    """
    return np.where(np.asarray(running, dtype=bool), sfp_w_per_m3s(sfp) * np.asarray(flow, dtype=float), 0.0)


def hourly_price(index: pd.DatetimeIndex, flat: float, periods: Sequence[tuple[int, int, float]] = ()) -> np.ndarray:
    """Energy price of every hour: ``flat`` unless a (start hour, end hour, price) period covers it.

    Periods apply on every day; a period with start > end runs over midnight.
    """
    hour = index.hour.to_numpy()
    price = np.full(hour.size, float(flat))
    for start, end, value in periods:
        inside = (hour >= start) & (hour < end) if start <= end else (hour >= start) | (hour < end)
        price[inside] = value
    return price


def demand_charge(power, index: pd.DatetimeIndex, rate: float) -> float:
    """Sum over months of the month's peak electrical demand × rate [W → currency].

    Parameters
    ----------
    power : array_like (T,) or (T, n)
        Hourly electrical demand [W]; a 2-D array is summed across columns first.
    rate : float
        Charge per kW of monthly peak [currency kW⁻¹ month⁻¹].
    """
    p = np.asarray(power, dtype=float)
    if p.ndim == 2:
        p = p.sum(axis=1)
    peaks = pd.Series(p, index=index).groupby(index.month).max() / 1000.0
    return float(peaks.sum() * rate)


def present_value_factor(rate, years):
    """Present value of 1 a year for ``years`` years at discount ``rate``: (1 − (1 + r)⁻ⁿ)/r.

    The uniform-series present worth factor (P/A, r, n); equals n when r = 0.
    """
    r = float(rate)
    if r < 0 or years <= 0:
        msg = f"discount rate must be ≥ 0 and life > 0, got rate {rate!r}, life {years!r}"
        raise ProjectError(msg)
    if r == 0:
        return float(years)
    return (1.0 - (1.0 + r) ** -years) / r


def net_present_value(annual_saving, capital, rate, years):
    """NPV = annual_saving·(P/A, r, n) − capital (savings at the end of each year)."""
    return np.asarray(annual_saving, dtype=float) * present_value_factor(rate, years) - np.asarray(capital, dtype=float)


def simple_payback(capital, annual_saving):
    """Years to repay ``capital`` from undiscounted ``annual_saving``; inf when the saving is ≤ 0."""
    saving = np.asarray(annual_saving, dtype=float)
    cap = np.asarray(capital, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(saving > 0, cap / np.where(saving > 0, saving, 1.0), np.inf)
    out = np.where(cap <= 0, 0.0, out)
    return float(out) if out.ndim == 0 else out


def discounted_payback(capital, annual_saving, rate):
    """Years until the discounted savings repay the capital: n = −ln(1 − C·r/S)/ln(1 + r); inf if never."""
    r = float(rate)
    if r == 0:
        return simple_payback(capital, annual_saving)
    cap = np.asarray(capital, dtype=float)
    saving = np.asarray(annual_saving, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        inner = 1.0 - cap * r / np.where(saving > 0, saving, np.nan)
        out = np.where((saving > 0) & (inner > 0), -np.log(inner) / np.log(1.0 + r), np.inf)
    out = np.where(cap <= 0, 0.0, out)
    return float(out) if out.ndim == 0 else out


def percentiles(values, q=(10, 50, 90)) -> dict[str, float]:
    """P10/P50/P90 (by default) of a sample, keyed 'p10', 'p50', 'p90'."""
    arr = np.asarray(values, dtype=float)
    return {f"p{int(k)}": float(np.percentile(arr, k)) for k in q}
