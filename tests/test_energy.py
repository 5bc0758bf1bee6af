"""Energy, cost and economics functions against definitions and textbook values.

A published comparative test case for annual heating and cooling needs of a simple box (ANSI/ASHRAE
Standard 140, case 600 family) needs its own weather file (Denver TMY) and acceptance ranges from the
standard, neither of which is stored here (pvlib ships Greensboro, Sand Point and Miami typical years
only), so no such case is tested. What can be tested is: the ISO 13790 Annex C set-point procedure
for the ideal loads (tests/test_thermal.py, step by step and against RC_BuildingSimulator's published
single-hour heating and cooling demands), and here the conversions and economics that turn ideal
loads into energy, cost and payback.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from calcs import energy
from calcs.errors import ProjectError


@pytest.mark.parametrize(
    ("rate", "years", "expected", "atol"),
    [
        (0.05, 20, 12.4622, 1e-4),  # (P/A, 5 %, 20) compound-interest tables [MEM], = (1 − 1.05⁻²⁰)/0.05
        (0.10, 10, 6.1446, 1e-4),  # (P/A, 10 %, 10) compound-interest tables [MEM]
        (0.0, 15, 15.0, 1e-12),  # no discounting: n
    ],
)
def test_present_value_factor_textbook_values(rate, years, expected, atol):
    assert_allclose(energy.present_value_factor(rate, years), expected, atol=atol)


def test_npv_and_paybacks_worked_example():
    # capital 5000, saving 1000 a year, 10 years, 10 %: NPV = 1000·6.1446 − 5000 = 1144.57
    assert_allclose(energy.net_present_value(1000.0, 5000.0, 0.10, 10), 1144.57, atol=0.01)
    assert energy.simple_payback(5000.0, 1000.0) == 5.0
    # discounted payback: n = −ln(1 − C·r/S)/ln(1 + r) = −ln(0.5)/ln(1.1) = 7.2725 years
    n = energy.discounted_payback(5000.0, 1000.0, 0.10)
    assert_allclose(n, 7.2725, atol=1e-4)
    assert_allclose(energy.present_value_factor(0.10, n) * 1000.0, 5000.0, atol=1e-6)  # repaid exactly at n
    assert energy.simple_payback(5000.0, -10.0) == np.inf
    assert energy.discounted_payback(5000.0, 400.0, 0.10) == np.inf  # 400 < 5000·0.1: never repaid
    assert energy.simple_payback(0.0, 100.0) == 0.0


def test_bad_economics_arguments():
    with pytest.raises(ProjectError):
        energy.present_value_factor(-0.1, 10)
    with pytest.raises(ProjectError):
        energy.present_value_factor(0.05, 0)


def test_efficiency_and_fan_power_conversions():
    # ASHRAE 90.1-2019 Table 6.8.1-3: air-cooled chiller EER 10.1 Btu/h/W ≈ COP 2.96 [MEM]
    assert_allclose(energy.cop_from_eer(10.1), 2.96, atol=0.005)
    # 1 ton = 12 000 Btu/h = 3.517 kW: 0.56 kW/ton ≈ COP 6.28
    assert_allclose(energy.cop_from_kw_per_ton(0.56), 3.51685 / 0.56, rtol=1e-9)
    # EN 16798-3 SFP class 4 limit 2000 W/(m³/s) = 2.0 W/(L/s) [MEM]
    assert energy.sfp_w_per_m3s(2.0) == 2000.0
    with pytest.raises(ProjectError):
        energy.cop_from_kw_per_ton(0.0)


def test_end_use_energy_by_definition():
    assert_allclose(energy.cooling_electricity(4000.0, 4.0), 1000.0)
    # efficiency 2 % worse per K above 25 °C: at 35 °C η = 4·0.8 = 3.2
    assert_allclose(energy.cooling_electricity(np.array([3200.0]), 4.0, np.array([35.0]), slope=-0.02), [1000.0])
    assert_allclose(energy.heating_energy(900.0, 0.9), 1000.0)
    # SFP 1.6 W/(L/s) on 0.5 m³/s = 500 L/s → 800 W while running
    assert_allclose(energy.fan_energy([0.5, 0.5], 1.6, [True, False]), [800.0, 0.0])
    with pytest.raises(ProjectError):
        energy.cooling_electricity(100.0, 0.0)


def test_tariff_and_demand_charge():
    index = pd.date_range("2026-01-31 00:00", periods=48, freq="h")  # 31 Jan and 1 Feb
    price = energy.hourly_price(index, 0.20, [(22, 6, 0.10)])  # night rate over midnight
    assert price[23] == 0.10 and price[5] == 0.10 and price[6] == 0.20 and price[21] == 0.20
    power = np.zeros(48)
    power[10], power[30] = 5000.0, 8000.0  # January peak 5 kW, February peak 8 kW
    assert_allclose(energy.demand_charge(power, index, 10.0), (5 + 8) * 10.0)
    assert_allclose(energy.demand_charge(np.column_stack([power / 2, power / 2]), index, 10.0), 130.0)


def test_percentiles_match_numpy():
    values = np.random.default_rng(3).normal(size=501)
    got = energy.percentiles(values)
    assert_allclose([got["p10"], got["p50"], got["p90"]], np.percentile(values, [10, 50, 90]))
