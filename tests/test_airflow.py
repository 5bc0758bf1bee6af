"""Tests of calcs.airflow.

Every expected value names its source. Tags: [DOC] read in a public document,
[MEM] from memory of the standard (verify against the original), [CALC]
computed by hand from the published equation (arithmetic shown). Physical
consistency checks (orifice equation in series, ideal-gas stack pressure,
integration over an opening, scaling laws) need no tabulated value.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy.integrate import quad
from scipy.optimize import brentq

from calcs import airflow as af
from calcs.errors import ProjectError

DATA = Path(__file__).parent / "data"
G = 9.81
KELVIN = 273.15
L_PER_CFM = 0.47194745  # 1 cfm = 0.471947 L/s (exact definition of ft³ and minute)
M2_PER_FT2 = 0.09290304  # exact


def _tbar(ti, to):
    return 0.5 * (ti + to) + KELVIN


# ======================================================================================
# worked cases: hand arithmetic from the published equations
# ======================================================================================


def test_orifice_flow_hand_case():
    # BS 5925:1991 cl. 9 Eq. 2 (as amended 1995) [MEM]: Q = Cd·A·√(2ΔP/ρ)
    # 0.6·1·√(2·4/1.2) = 0.6·2.581989 = 1.549193
    assert_allclose(af.orifice_flow(1.0, 4.0, 0.6, 1.2), 1.549193, rtol=1e-6)
    # reversed pressure difference: same magnitude, opposite sign
    assert_allclose(af.orifice_flow(1.0, -4.0, 0.6, 1.2), -1.549193, rtol=1e-6)


def test_cross_wind_bs5925_hand_case():
    # BS 5925:1991 Fig. 8(a) [MEM]: Q = Cd·Aw·U·√ΔCp, 1/Aw² = 1/1² + 1/1² → Aw = 0.707107
    # ΔCp = 0.6 − (−0.3) = 0.9, √0.9 = 0.948683
    # 0.61·0.707107·4·0.948683 = 1.636802
    assert_allclose(af.cross_wind_bs5925(1.0, 1.0, 4.0, 0.6, -0.3), 1.636802, rtol=1e-5)


def test_stack_two_openings_bs5925_hand_case():
    # BS 5925:1991 Fig. 8(b) [MEM]: Q = Cd·Ab·√(2·ΔT·g·H1/T̄)
    # Ab = 0.707107; ΔT = 10 K; T̄ = 293.15 K; 2·10·9.81·3/293.15 = 2.007846, √ = 1.416985
    # 0.61·0.707107·1.416985 = 0.611195
    assert_allclose(af.stack_two_openings_bs5925(1.0, 1.0, 3.0, 25.0, 15.0), 0.611195, rtol=1e-5)


def test_single_sided_stack_bs5925_hand_case():
    # BS 5925:1991 Fig. 8(f) [MEM]: Q = (Cd·A/3)·√(g·h·ΔT/T̄)
    # 9.81·1.5·10/293.15 = 0.501961, √ = 0.708492; 0.61/3·0.708492 = 0.144060
    assert_allclose(af.single_sided_stack_bs5925(1.0, 1.5, 25.0, 15.0), 0.144060, rtol=1e-5)


def test_single_sided_wind_warren_hand_case():
    # Warren & Parkins 1984; BS 5925:1991 Fig. 8(d) [MEM]; AIX WarrenParkins.mo [DOC]:
    # Q = 0.025·A·U → 0.025·2·4 = 0.2
    assert_allclose(af.single_sided_wind_warren(2.0, 4.0), 0.2, rtol=1e-12)


def test_single_sided_gids_phaff_hand_case():
    # de Gids & Phaff 1982 [DOC equation via AIX GidsPhaff.mo]: Q = A/2·√(0.001U² + 0.0035HΔT + 0.01)
    # 0.001·9 + 0.0035·1.5·10 + 0.01 = 0.009 + 0.0525 + 0.01 = 0.0715; √ = 0.267395; /2 = 0.133697
    assert_allclose(af.single_sided_gids_phaff(1.0, 1.5, 3.0, 25.0, 15.0), 0.133697, rtol=1e-5)
    # no wind, no ΔT: the turbulence term alone, 0.5·√0.01 = 0.05 per m²
    assert_allclose(af.single_sided_gids_phaff(2.0, 1.5, 0.0, 20.0, 20.0), 0.1, rtol=1e-12)


def test_stack_ashrae_hand_case():
    # ASHRAE HoF 2009 ch.16 [MEM; DOC via AIX ASHRAE.mo]: Cd = 0.40 + 0.0045·ΔT = 0.445
    # Q = Cd·A·√(2g·ΔH·ΔT/Ti) = 0.445·√(2·9.81·0.75·10/298.15) = 0.445·0.702526 = 0.312624
    assert_allclose(af.stack_ashrae(1.0, 0.75, 25.0, 15.0), 0.312624, rtol=1e-5)
    # outdoor warmer: ASHRAE puts To (the warmer) in the denominator
    # 0.445·√(2·9.81·0.75·10/298.15) again, with To = 25 °C and Ti = 15 °C
    assert_allclose(af.stack_ashrae(1.0, 0.75, 15.0, 25.0), 0.312624, rtol=1e-5)


def test_wind_ashrae_hand_case():
    # ASHRAE HoF 2009 ch.16 [MEM]: Q = Cv·A·U = 0.5·2·3 = 3.0
    assert_allclose(af.wind_ashrae(2.0, 3.0, 0.5), 3.0, rtol=1e-12)


def test_wind_ashrae_warns_outside_published_range():
    # ASHRAE HoF: Cv 0.5–0.6 perpendicular, 0.25–0.35 diagonal [MEM]
    with pytest.warns(af.AirflowValidityWarning, match="0.25–0.6"):
        af.wind_ashrae(1.0, 3.0, 0.9)


def test_quadrature_ashrae():
    # ASHRAE HoF ch.16 [MEM]: Q = √(Qs² + Qw²); √(0.3² + 0.4²) = 0.5
    assert_allclose(af.wind_and_stack_quadrature(0.3, 0.4), 0.5, rtol=1e-12)
    # one mechanism absent → the other alone
    assert_allclose(af.wind_and_stack_quadrature(0.0, 0.4), 0.4, rtol=1e-12)


# ======================================================================================
# physical consistency
# ======================================================================================


@pytest.mark.parametrize(
    ("a1", "a2", "cd1", "cd2", "dp"),
    [(0.5, 1.5, 0.61, 0.61, 10.0), (0.2, 0.3, 0.65, 0.4, 2.5), (1.0, 1.0, 0.61, 0.61, 0.3)],
)
def test_series_area_equals_orifice_with_total_pressure_drop(a1, a2, cd1, cd2, dp):
    # Physics: the same flow passes both openings and the pressure drops add.
    # Solve the split ΔP1 + ΔP2 = ΔP numerically, then compare with one orifice of
    # effective (Cd·A)e from BS 5925 Fig. 8 / CIBSE AM10 rule 1/(CdA)e² = Σ 1/(CdA)i² [MEM].
    def mismatch(dp1):
        return af.orifice_flow(a1, dp1, cd1) - af.orifice_flow(a2, dp - dp1, cd2)

    dp1 = brentq(mismatch, 0.0, dp, xtol=1e-14)
    q_split = af.orifice_flow(a1, dp1, cd1)
    cda_e = af.effective_area_series(cd1 * a1, cd2 * a2)
    q_eff = af.orifice_flow(cda_e, dp, 1.0)
    assert_allclose(q_eff, q_split, rtol=1e-9)


def test_series_with_a_closed_opening_gives_zero_area():
    # Physics: a closed opening in series blocks the path.
    assert af.effective_area_series(1.0, 0.0) == 0.0


def test_parallel_equals_summed_area():
    # Physics: openings side by side under one ΔP; the orifice equation is linear in area.
    q_each = af.orifice_flow(0.4, 6.0) + af.orifice_flow(1.1, 6.0)
    q_sum = af.orifice_flow(af.effective_area_parallel(0.4, 1.1), 6.0)
    assert_allclose(q_sum, q_each, rtol=1e-12)
    assert_allclose(af.effective_area_parallel(0.4, 1.1, 0.5), 2.0, rtol=1e-12)


def test_cross_wind_equals_orifice_with_wind_pressure():
    # Physics: ΔP = ½ρU²ΔCp across the two faces in series (BS 5925 Fig. 8(a) basis).
    u, cpw, cpl, rho = 3.5, 0.45, -0.25, 1.2
    dp = 0.5 * rho * u**2 * (cpw - cpl)
    a_w = af.effective_area_series(0.8, 1.3)
    assert_allclose(
        af.cross_wind_bs5925(0.8, 1.3, u, cpw, cpl), af.orifice_flow(a_w, dp, 0.61, rho), rtol=1e-12
    )


def test_stack_equals_orifice_with_ideal_gas_stack_pressure():
    # Physics: ΔP = (ρo − ρi)·g·H with ideal-gas densities; with ρ = mean of the two
    # densities, (ρo − ρi)/ρ = ΔT/T̄ exactly, so the orifice equation through Ab must
    # reproduce BS 5925 Fig. 8(b).
    ti, to, h, p, r_air = 26.0, 12.0, 4.0, 101325.0, 287.05
    rho_i, rho_o = p / (r_air * (ti + KELVIN)), p / (r_air * (to + KELVIN))
    dp = (rho_o - rho_i) * G * h
    a_b = af.effective_area_series(0.6, 0.9)
    expected = af.orifice_flow(a_b, dp, 0.61, 0.5 * (rho_i + rho_o))
    assert_allclose(af.stack_two_openings_bs5925(0.6, 0.9, h, ti, to), expected, rtol=1e-9)


def test_single_opening_stack_equals_integrated_orifice():
    # Physics: neutral level at mid-height; inflow through the lower half,
    # q = ∫₀^{h/2} Cd·W·√(2·g·z·ΔT/T̄) dz with W = A/h. BS 5925 Fig. 8(f) must match.
    area, h, ti, to, cd = 1.2, 1.8, 27.0, 17.0, 0.61
    width, dt, tbar = area / h, ti - to, _tbar(ti, to)
    q_int, _ = quad(lambda z: cd * width * math.sqrt(2 * G * z * dt / tbar), 0.0, h / 2)
    assert_allclose(af.single_sided_stack_bs5925(area, h, ti, to, cd), q_int, rtol=1e-8)


@pytest.mark.parametrize(("a1", "a2"), [(0.3, 0.3), (0.2, 0.6), (0.9, 0.1)])
def test_single_sided_two_openings_equals_series_stack(a1, a2):
    # Algebra: BS 5925 Fig. 8(e) [MEM] reduces to Fig. 8(b) with the same two areas
    # (A·ε√2/((1+ε)√(1+ε²)) = √2·A1A2/√(A1²+A2²)). Both are [MEM]; agreement is a check on
    # the recalled forms and on the code.
    q_e = af.single_sided_two_openings_bs5925(a1, a2, 1.5, 24.0, 14.0)
    q_b = af.stack_two_openings_bs5925(a1, a2, 1.5, 24.0, 14.0)
    assert_allclose(q_e, q_b, rtol=1e-12)
    # symmetric in ε ↔ 1/ε
    assert_allclose(af.single_sided_two_openings_bs5925(a2, a1, 1.5, 24.0, 14.0), q_e, rtol=1e-12)


@pytest.mark.parametrize(
    "func",
    [
        lambda ti, to: af.stack_two_openings_bs5925(0.5, 0.7, 3.0, ti, to),
        lambda ti, to: af.single_sided_stack_bs5925(0.5, 1.2, ti, to),
        lambda ti, to: af.single_sided_two_openings_bs5925(0.5, 0.7, 1.2, ti, to),
    ],
    ids=["stack_two_openings", "single_sided_stack", "single_sided_two_openings"],
)
def test_stack_flow_scales_with_sqrt_delta_t(func):
    # Physics: stack pressure ∝ ΔT at fixed mean temperature, flow ∝ √ΔP → Q ∝ √ΔT.
    tmean = 20.0
    dts = np.array([1.0, 4.0, 9.0, 16.0])
    q = np.array([func(tmean + d / 2, tmean - d / 2) for d in dts])
    assert_allclose(q / q[0], np.sqrt(dts), rtol=1e-12)


@pytest.mark.parametrize(
    "func",
    [
        lambda u: af.cross_wind_bs5925(0.5, 0.7, u, 0.5, -0.3),
        lambda u: af.single_sided_wind_warren(0.5, u),
        lambda u: af.wind_ashrae(0.5, u, 0.55),
        lambda u: af.wind_speed_at_height_bs5925(u, 12.0, "urban"),
        lambda u: af.wind_speed_at_height_ashrae(u, 12.0, "city"),
    ],
    ids=["cross_wind", "warren", "wind_ashrae", "u_bs5925", "u_ashrae"],
)
def test_wind_flow_is_linear_in_wind_speed(func):
    # Physics: ΔP ∝ U², Q ∝ √ΔP → Q ∝ U; the power-law profiles are linear in U_met.
    us = np.array([1.0, 2.0, 5.0, 7.5])
    q = np.array([func(u) for u in us])
    assert_allclose(q / q[0], us, rtol=1e-12)


def test_stack_flow_zero_without_temperature_difference():
    # Physics: no ΔT, no stack pressure.
    assert af.stack_two_openings_bs5925(1.0, 1.0, 3.0, 20.0, 20.0) == 0.0


# ======================================================================================
# BS 5925 wind + stack rule and its crossover
# ======================================================================================

COMBINED = dict(
    area_windward_low=0.4, area_windward_high=0.2, area_leeward_low=0.3, area_leeward_high=0.5,
    height=3.0, cp_windward=0.5, cp_leeward=-0.3, temp_in=25.0, temp_air=15.0,
)


def _parts(wind_speed):
    c = COMBINED
    q_w = af.cross_wind_bs5925(
        c["area_windward_low"] + c["area_windward_high"],
        c["area_leeward_low"] + c["area_leeward_high"],
        wind_speed, c["cp_windward"], c["cp_leeward"],
    )
    q_b = af.stack_two_openings_bs5925(
        c["area_windward_low"] + c["area_leeward_low"],
        c["area_windward_high"] + c["area_leeward_high"],
        c["height"], c["temp_in"], c["temp_air"],
    )
    return q_w, q_b


def test_combined_bs5925_switches_at_crossover_and_is_continuous():
    # BS 5925:1991 Fig. 8(c) [MEM]: stack below the critical U/√ΔT, wind above.
    # Derivation (module docstring, [CALC]): the critical value is where Qw = Qb.
    crit = af.wind_stack_crossover_bs5925(**COMBINED)
    u_crit = crit * math.sqrt(COMBINED["temp_in"] - COMBINED["temp_air"])
    q_w, q_b = _parts(u_crit)
    assert_allclose(q_w, q_b, rtol=1e-12)  # the two flows meet at the crossover

    below, above = 0.8 * u_crit, 1.25 * u_crit
    assert_allclose(af.wind_and_stack_bs5925(wind_speed=below, **COMBINED), _parts(below)[1],
                    rtol=1e-12)  # stack governs
    assert_allclose(af.wind_and_stack_bs5925(wind_speed=above, **COMBINED), _parts(above)[0],
                    rtol=1e-12)  # wind governs
    # continuity: flow just below and just above differ only by the change in U
    q_minus = af.wind_and_stack_bs5925(wind_speed=u_crit * (1 - 1e-9), **COMBINED)
    q_plus = af.wind_and_stack_bs5925(wind_speed=u_crit * (1 + 1e-9), **COMBINED)
    assert_allclose(q_plus, q_minus, rtol=1e-8)


def test_crossover_constant_matches_printed_026():
    # BS 5925:1991 Fig. 8(c) prints the constant 0.26 [MEM]; √(2g/T̄) at T̄ = 290 K is 0.2601 [CALC].
    c = dict(COMBINED, temp_in=21.85, temp_air=12.85)  # T̄ = 17.35 °C = 290.5 K
    crit = af.wind_stack_crossover_bs5925(**c)
    a_w = af.effective_area_series(0.6, 0.8)
    a_b = af.effective_area_series(0.7, 0.7)
    k = crit / ((a_b / a_w) * math.sqrt(c["height"] / 0.8))
    assert_allclose(k, 0.26, atol=0.005)


def test_crossover_area_ratio_exponent_one_not_half():
    # Open question in REFERENCES §5.5: exponent on Ab/Aw. With Ab/Aw far from 1, the
    # exponent-0.5 criterion would switch where Qw ≠ Qb (a jump by √(Ab/Aw)); exponent 1
    # makes the flows equal. Checked here with the module's own wind and stack flows.
    c = dict(COMBINED, area_windward_low=1.0, area_windward_high=1.0,
             area_leeward_low=0.25, area_leeward_high=0.25)
    a_w = af.effective_area_series(2.0, 0.5)
    a_b = af.effective_area_series(1.25, 1.25)
    ratio = a_b / a_w  # = 1.7185
    k = math.sqrt(2 * G / _tbar(c["temp_in"], c["temp_air"]))
    dt = c["temp_in"] - c["temp_air"]
    geom = math.sqrt(c["height"] / 0.8)
    u_one = k * ratio * geom * math.sqrt(dt)
    u_half = k * math.sqrt(ratio) * geom * math.sqrt(dt)
    q_b = af.stack_two_openings_bs5925(1.25, 1.25, c["height"], c["temp_in"], c["temp_air"])
    assert_allclose(af.cross_wind_bs5925(2.0, 0.5, u_one, 0.5, -0.3), q_b, rtol=1e-12)
    jump = af.cross_wind_bs5925(2.0, 0.5, u_half, 0.5, -0.3) / q_b
    assert_allclose(jump, 1 / math.sqrt(ratio), rtol=1e-12)
    assert abs(jump - 1) > 0.2
    assert_allclose(af.wind_stack_crossover_bs5925(**c), u_one / math.sqrt(dt), rtol=1e-12)


def test_combined_bs5925_is_the_larger_of_wind_and_stack_vectorised():
    # Consequence of the derived crossover: Q = max(Qw, Qb) at every wind speed.
    u = np.linspace(0.0, 6.0, 25)
    q = af.wind_and_stack_bs5925(wind_speed=u, **COMBINED)
    q_w, q_b = _parts(u)
    assert_allclose(q, np.maximum(q_w, q_b), rtol=1e-12)


def test_crossover_infinite_when_no_leeward_openings():
    # No leeward openings: Aw = 0, wind through-flow impossible; the report reads "stack".
    c = dict(COMBINED, area_leeward_low=0.0, area_leeward_high=0.0)
    assert af.wind_stack_crossover_bs5925(**c) == math.inf


# ======================================================================================
# wind speed at height and Cp (tabulated reference cases)
# ======================================================================================

WIND_CASES = pd.read_csv(DATA / "airflow_wind_speed_at_height.csv")


@pytest.mark.parametrize("row", WIND_CASES.to_dict("records"),
                         ids=lambda r: f"{r['method']}-{r['terrain']}-{r['height']}m")
def test_wind_speed_at_height_table(row):
    # source column of tests/data/airflow_wind_speed_at_height.csv (REFERENCES §5 [CALC], U_m = 5)
    func = {"bs5925": af.wind_speed_at_height_bs5925, "ashrae": af.wind_speed_at_height_ashrae}
    got = func[row["method"]](row["wind_speed_met"], row["height"], row["terrain"])
    assert_allclose(got, row["expected"], atol=row["tolerance"])


def test_wind_speed_met_station_reproduces_itself():
    # Physics: at 10 m in the station's own terrain the profile must return the station speed.
    # ASHRAE: exact by construction. BS 5925: 0.68·10^0.17 = 1.0058, within 1 % [CALC].
    assert_allclose(af.wind_speed_at_height_ashrae(4.0, 10.0, "country"), 4.0, rtol=1e-12)
    assert_allclose(af.wind_speed_at_height_bs5925(4.0, 10.0, "open_flat_country"), 4.0, rtol=0.01)


def test_wind_speed_ashrae_warns_above_boundary_layer():
    # ASHRAE HoF ch.24: power law valid below the boundary-layer thickness δ (370 m suburban) [MEM]
    with pytest.warns(af.AirflowValidityWarning, match="boundary-layer"):
        af.wind_speed_at_height_ashrae(5.0, 400.0, "suburban")


CP_CASES = pd.read_csv(DATA / "airflow_cp_swami_chandra.csv")


@pytest.mark.parametrize("row", CP_CASES.to_dict("records"), ids=lambda r: f"{r['incidence']}deg")
def test_cp_swami_chandra_table(row):
    # source column of tests/data/airflow_cp_swami_chandra.csv [DOC]; tolerance covers 3-decimal rounding
    got = af.cp_swami_chandra(row["incidence"], row["side_ratio"])
    assert_allclose(got, row["expected"], atol=row["tolerance"])


def test_cp_swami_chandra_symmetry_and_wrap():
    # Physics: a wall sees the same mean pressure for wind ±β; angles wrap at 360°.
    base = af.cp_swami_chandra(30.0)
    assert_allclose(af.cp_swami_chandra(np.array([-30.0, 330.0, 390.0])), base, rtol=1e-12)


def test_cp_swami_chandra_warns_outside_side_ratio_range():
    with pytest.warns(af.AirflowValidityWarning, match="side_ratio"):
        af.cp_swami_chandra(0.0, side_ratio=6.0)


# ======================================================================================
# ventilation requirements, CO2 and heat removal
# ======================================================================================


def test_fresh_air_ashrae62_office_default_density_si():
    # ASHRAE 62.1-2016 Table 6.2.2.1 office [MEM SI]: Rp 2.5, Ra 0.3, 5 people/100 m²
    # → combined 8.5 L/s·person. 5·2.5 + 100·0.3 = 42.5 L/s
    assert_allclose(af.fresh_air_ashrae62(5, 100.0), 42.5, rtol=1e-12)
    assert_allclose(af.fresh_air_ashrae62(5, 100.0) / 5, 8.5, rtol=1e-12)


def test_fresh_air_ashrae62_office_ip_17_cfm_per_person():
    # ASHRAE 62.1 Table 6.2.2.1 office, IP [DOC]: 5 cfm/person + 0.06 cfm/ft², 5 people per
    # 1000 ft² → 17 cfm/person combined [DOC].
    q = af.fresh_air_ashrae62(
        5, 1000 * M2_PER_FT2, rate_per_person=5 * L_PER_CFM,
        rate_per_area=0.06 * L_PER_CFM / M2_PER_FT2,
    )
    assert_allclose(q / L_PER_CFM / 5, 17.0, rtol=1e-9)


@pytest.mark.parametrize(("category", "expected"), [("I", 2.0), ("II", 1.4), ("III", 0.8)])
def test_fresh_air_en16798_single_office(category, expected):
    # EN 16798-1:2019 Annex B (and EN 15251:2007 Table B.3) example, single office 10 m²/person,
    # low-polluting building [MEM]: I 2.0, II 1.4, III 0.8 L/s·m².
    # e.g. II: (1·7 + 10·0.7)/10 = 1.4
    assert_allclose(af.fresh_air_en16798(1, 10.0, category, "low") / 10.0, expected, rtol=1e-12)


def test_co2_rise_matches_ashrae_faq35():
    # ASHRAE Technical FAQ #35 [DOC]: "about 700 ppm above outdoor indicates ~7.5 L/s/person".
    # 0.0052/0.0075·1e6 = 693 ppm [CALC]; "about" → 2 %.
    assert_allclose(af.co2_rise_steady(7.5), 700.0, rtol=0.02)


@pytest.mark.parametrize(("flow", "rise"), [(7.5, 693.0), (8.5, 612.0), (10.0, 520.0)])
def test_co2_rise_reference_table(flow, rise):
    # REFERENCES §8 CO2 check values [CALC], G = 0.0052 L/s·person; values rounded to 1 ppm.
    assert_allclose(af.co2_rise_steady(flow), rise, atol=0.6)


@pytest.mark.parametrize(("category", "rise"), [("I", 550.0), ("II", 800.0), ("III", 1350.0)])
def test_en16798_method2_consistent_with_method1(category, rise):
    # EN 16798-1:2019 Annex B: method 2 CO2 rises 550/800/1350 ppm with 20 L/h CO2 per person
    # are consistent with method 1 per-person rates 10/7/4 L/s [MEM; REFERENCES §8 gives
    # 10.1/6.94/4.12 CALC]. 4.12 vs 4 → 3 %.
    q = af.flow_per_person_for_co2_rise(rise, generation=20.0 / 3600.0)
    assert_allclose(q, af.fresh_air_en16798(1, 0.0, category), rtol=0.035)


def test_co2_inverse_round_trip():
    q = np.array([4.0, 7.5, 12.0])
    assert_allclose(af.flow_per_person_for_co2_rise(af.co2_rise_steady(q)), q, rtol=1e-12)


def test_co2_zero_flow_warns_and_returns_inf():
    with pytest.warns(af.AirflowValidityWarning, match="zero outdoor airflow"):
        assert af.co2_rise_steady(0.0) == math.inf


def test_flow_to_remove_heat_matches_ashrae_sensible_heat_factor():
    # ASHRAE HoF ch.18 (2009) [MEM]: qs = 1.23·Q·Δt with Q in L/s (standard moist air).
    # 1230 W at 1 K → 1000 L/s. Ours (dry air, ρcp = 1.2·1005 = 1206) gives 1.0199 m³/s → 2.5 %.
    assert_allclose(af.flow_to_remove_heat(1230.0, 1.0), 1.0, rtol=0.025)
    # energy balance exactly: ρ·cp·Q·ΔT = P
    q = af.flow_to_remove_heat(2500.0, 3.0)
    assert_allclose(1.2 * 1005.0 * q * 3.0, 2500.0, rtol=1e-12)


def test_flow_to_remove_heat_refuses_non_positive_delta_t():
    # outdoor not cooler than the indoor limit: no finite flow removes the heat
    with pytest.warns(af.AirflowValidityWarning, match="cannot remove the heat"):
        q = af.flow_to_remove_heat(np.array([1000.0, 1000.0, 1000.0]), np.array([2.0, 0.0, -1.0]))
    assert np.isfinite(q[0]) and q[1] == math.inf and q[2] == math.inf
    # no heat to remove: no flow needed, no warning
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert af.flow_to_remove_heat(0.0, -2.0) == 0.0


# ======================================================================================
# sizing
# ======================================================================================

SIZING_CASES = [
    ("stack_two_openings_bs5925", dict(height=3.0, temp_in=25.0, temp_air=18.0, area_ratio=2.0),
     lambda a, c: af.stack_two_openings_bs5925(a / 3, 2 * a / 3, 3.0, 25.0, 18.0)),
    ("cross_wind_bs5925", dict(wind_speed=3.0, cp_windward=0.5, cp_leeward=-0.3, area_ratio=0.5),
     lambda a, c: af.cross_wind_bs5925(a / 1.5, 0.5 * a / 1.5, 3.0, 0.5, -0.3)),
    ("wind_and_stack_bs5925",
     dict(height=3.0, wind_speed=1.0, cp_windward=0.5, cp_leeward=-0.3, temp_in=25.0,
          temp_air=15.0, area_shares=(1, 1, 2, 2)),
     lambda a, c: af.wind_and_stack_bs5925(a / 6, a / 6, a / 3, a / 3, 3.0, 1.0, 0.5, -0.3,
                                           25.0, 15.0)),
    ("single_sided_wind_warren", dict(wind_speed=2.5),
     lambda a, c: af.single_sided_wind_warren(a, 2.5)),
    ("single_sided_stack_bs5925", dict(height=1.5, temp_in=26.0, temp_air=20.0),
     lambda a, c: af.single_sided_stack_bs5925(a, 1.5, 26.0, 20.0)),
    ("single_sided_two_openings_bs5925",
     dict(height=1.8, temp_in=26.0, temp_air=20.0, area_ratio=3.0),
     lambda a, c: af.single_sided_two_openings_bs5925(a / 4, 3 * a / 4, 1.8, 26.0, 20.0)),
    ("single_sided_gids_phaff", dict(height=1.5, wind_speed=2.0, temp_in=26.0, temp_air=20.0),
     lambda a, c: af.single_sided_gids_phaff(a, 1.5, 2.0, 26.0, 20.0)),
    ("stack_ashrae", dict(height_npl=0.75, temp_in=26.0, temp_air=20.0),
     lambda a, c: af.stack_ashrae(a, 0.75, 26.0, 20.0)),
    ("wind_ashrae", dict(wind_speed=2.0, effectiveness=0.3),
     lambda a, c: af.wind_ashrae(a, 2.0, 0.3)),
]


@pytest.mark.parametrize(("method", "conditions", "forward"), SIZING_CASES,
                         ids=[c[0] for c in SIZING_CASES])
def test_required_free_area_round_trip(method, conditions, forward):
    # Consistency: the sized area, split as stated, delivers the target flow through the
    # forward method.
    target = 0.35
    area = af.required_free_area(target, method, **conditions)
    assert area > 0
    assert_allclose(forward(area, conditions), target, rtol=1e-10)


def test_required_free_area_hand_case_warren():
    # Warren & Parkins / BS 5925 Fig. 8(d) [MEM]: A = Q/(0.025·U) = 0.1/(0.025·4) = 1.0 m²
    assert_allclose(af.required_free_area(0.1, "single_sided_wind_warren", wind_speed=4.0), 1.0,
                    rtol=1e-12)


def test_required_free_area_hand_case_stack_equal_openings():
    # BS 5925 Fig. 8(b) [MEM], equal low/high openings: A_total = 2·Q/(Cd·√(2ΔTgH/T̄)/√2)
    # For Q = 0.611195 (hand case above with 1 m² each) the total is 2 m².
    area = af.required_free_area(0.611195, "stack_two_openings_bs5925", height=3.0,
                                 temp_in=25.0, temp_air=15.0)
    assert_allclose(area, 2.0, rtol=1e-5)


def test_required_free_area_no_driving_force_warns_inf():
    with pytest.warns(af.AirflowValidityWarning, match="no driving force"):
        area = af.required_free_area(np.array([0.2, 0.0]), "stack_two_openings_bs5925",
                                     height=3.0, temp_in=20.0, temp_air=20.0)
    assert area[0] == math.inf and area[1] == 0.0


def test_required_free_area_bad_arguments():
    with pytest.raises(ProjectError, match="method must be one of"):
        af.required_free_area(0.1, "no_such_method", wind_speed=3.0)
    with pytest.raises(ProjectError, match="temp_in"):
        af.required_free_area(0.1, "stack_two_openings_bs5925", height=3.0, temp_air=15.0)
    with pytest.raises(ProjectError, match="wind_speed"):
        af.required_free_area(0.1, "single_sided_stack_bs5925", height=1.5, temp_in=25.0,
                              temp_air=15.0, wind_speed=3.0)
    with pytest.raises(ProjectError, match="area_ratio"):
        af.required_free_area(0.1, "cross_wind_bs5925", wind_speed=3.0, cp_windward=0.5,
                              cp_leeward=-0.3, area_ratio=-1.0)
    with pytest.raises(ProjectError, match="flow must be ≥ 0"):
        af.required_free_area(-0.1, "single_sided_wind_warren", wind_speed=3.0)


# ======================================================================================
# rule-of-thumb checks
# ======================================================================================


@pytest.mark.parametrize(("free_area", "passed"), [(4.0, True), (3.9, False), (6.0, True)])
def test_check_free_area_share_ashrae62(free_area, passed):
    # ASHRAE 62.1-2016 §6.4 [DOC]: openable area ≥ 4 % of net occupiable floor area (100 m²)
    result = af.check_free_area_share(free_area, 100.0)
    assert result.passed is passed
    assert_allclose(result.value, free_area, rtol=1e-12)  # % of 100 m²
    assert result.limit == 4.0
    assert "62.1" in result.source


def test_rule_check_is_frozen():
    result = af.check_free_area_share(5.0, 100.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.passed = False


@pytest.mark.parametrize(
    ("arrangement", "limit"),
    [("single_sided", 5.4), ("single_sided_two_level", 6.75), ("cross", 13.5), ("stack", 13.5)],
)
def test_check_plan_depth_cibse_am10(arrangement, limit):
    # CIBSE AM10:2005 [MEM]: 2H, 2.5H, 5H, 5H with H = 2.7 m → 5.4, 6.75, 13.5, 13.5 m
    ok = af.check_plan_depth(limit, 2.7, arrangement)
    too_deep = af.check_plan_depth(limit + 0.05, 2.7, arrangement)
    assert_allclose(ok.limit, limit, rtol=1e-12)
    assert ok.passed is True and too_deep.passed is False


def test_check_plan_depth_series():
    depth = pd.Series([4.0, 6.0], index=["north", "south"])
    result = af.check_plan_depth(depth, 2.7, "single_sided")
    assert list(result.passed.index) == ["north", "south"]
    assert result.passed.tolist() == [True, False]


# ======================================================================================
# input types
# ======================================================================================

TYPE_CASES = [
    (lambda x: af.stack_two_openings_bs5925(x, 0.8, 3.0, 25.0, 15.0), [0.2, 0.5, 1.0]),
    (lambda x: af.cross_wind_bs5925(0.5, 0.7, x, 0.5, -0.3), [1.0, 3.0, 6.0]),
    (lambda x: af.single_sided_stack_bs5925(0.5, 1.5, x, 15.0), [18.0, 22.0, 30.0]),
    (lambda x: af.wind_speed_at_height_bs5925(x, 15.0, "city"), [2.0, 5.0, 9.0]),
    (lambda x: af.cp_swami_chandra(x), [0.0, 45.0, 170.0]),
    (lambda x: af.fresh_air_en16798(x, 200.0), [5.0, 10.0, 20.0]),
    (lambda x: af.required_free_area(x, "single_sided_wind_warren", wind_speed=3.0),
     [0.05, 0.1, 0.3]),
]


@pytest.mark.parametrize(("func", "values"), TYPE_CASES, ids=range(len(TYPE_CASES)))
def test_input_types_scalar_array_series(func, values):
    scalars = [func(v) for v in values]
    assert all(isinstance(s, float) for s in scalars)
    arr = func(np.array(values))
    assert isinstance(arr, np.ndarray)
    assert_allclose(arr, scalars, rtol=1e-12)
    idx = pd.date_range("2025-07-01", periods=len(values), freq="h")
    ser = func(pd.Series(values, index=idx))
    assert isinstance(ser, pd.Series)
    assert ser.index.equals(idx)
    assert_allclose(ser.to_numpy(), scalars, rtol=1e-12)


def test_series_with_different_indexes_rejected():
    a = pd.Series([0.5, 0.6], index=[0, 1])
    b = pd.Series([0.5, 0.6], index=[1, 2])
    with pytest.raises(ProjectError, match="index"):
        af.stack_two_openings_bs5925(a, b, 3.0, 25.0, 15.0)


# ======================================================================================
# bad arguments
# ======================================================================================


@pytest.mark.parametrize(
    ("call", "pattern"),
    [
        (lambda: af.orifice_flow(-1.0, 5.0), r"area must be ≥ 0 m², got -1"),
        (lambda: af.orifice_flow(1.0, 5.0, 0.0), r"discharge_coefficient must be in \(0, 1\]"),
        (lambda: af.orifice_flow(1.0, 5.0, 1.2), r"discharge_coefficient .* got 1.2"),
        (lambda: af.cross_wind_bs5925(-0.5, 1.0, 3.0, 0.5, -0.3), "area_windward"),
        (lambda: af.cross_wind_bs5925(0.5, 1.0, -3.0, 0.5, -0.3), "wind_speed must be ≥ 0"),
        (lambda: af.stack_two_openings_bs5925(0.5, 0.5, -3.0, 25.0, 15.0), "height"),
        (lambda: af.stack_two_openings_bs5925(0.5, 0.5, 3.0, -300.0, 15.0), "temp_in"),
        (lambda: af.wind_speed_at_height_bs5925(5.0, 10.0, "suburbs"), "terrain must be one of"),
        (lambda: af.wind_speed_at_height_ashrae(5.0, 10.0, "urban"), "terrain must be one of"),
        (lambda: af.fresh_air_en16798(5, 100.0, category="V"), "category must be one of"),
        (lambda: af.fresh_air_en16798(5, 100.0, building="dirty"), "building must be one of"),
        (lambda: af.fresh_air_ashrae62(5, -100.0), "floor_area"),
        (lambda: af.check_free_area_share(4.0, 0.0), "floor_area must be > 0"),
        (lambda: af.check_plan_depth(6.0, 2.7, "atrium"), "arrangement must be one of"),
        (lambda: af.effective_area_series(1.0), "at least 2"),
        (lambda: af.flow_per_person_for_co2_rise(0.0), "co2_rise must be > 0"),
        (lambda: af.single_sided_wind_warren(np.array([1.0, -2.0, -3.0]), 3.0),
         "first of 2 offending"),
    ],
)
def test_bad_arguments_raise_project_error(call, pattern):
    with pytest.raises(ProjectError, match=pattern):
        call()


# ---------------------------------------------------------------- a zone's openings by arrangement

ZONE_CASE = dict(temp_in=26.0, temp_air=23.0, opening_height=1.2, stack_height=2.0)


@pytest.mark.parametrize(
    ("arrangement", "wind_met", "wind_building", "expected"),
    [
        # BS 5925 Fig. 8(f) [MEM formula]: 0.61·10/3·√(9.81·1.2·3/297.65) = 0.7004 (still air: stack wins)
        ("single_sided", 0.0, 0.0, 0.61 * 10 / 3 * np.sqrt(9.81 * 1.2 * 3 / 297.65)),
        # Warren & Parkins 1984 [DOC via REFERENCES §5.7]: 0.025·10·4 = 1.0 (wind wins over 0.70)
        ("single_sided", 4.0, 3.0, 0.025 * 10 * 4),
        # BS 5925 Fig. 8(b) with 5 + 5 m²: A_b = 1/√(1/25 + 1/25); 0.61·A_b·√(2·3·9.81·2/297.65)
        ("stack", 4.0, 3.0, 0.61 / np.sqrt(2 / 25) * np.sqrt(2 * 3 * 9.81 * 2 / 297.65)),
        # BS 5925 Fig. 8(a), windward 5 m², leeward 5 m², ΔCp 0.8: 0.61·A_w·3·√0.8 (wind wins over stack)
        ("cross", 4.0, 3.0, 0.61 / np.sqrt(2 / 25) * 3 * np.sqrt(0.8)),
        # still air, cross with a stack height: the stack branch of Fig. 8(c) alone
        ("cross", 0.0, 0.0, 0.61 / np.sqrt(2 / 25) * np.sqrt(2 * 3 * 9.81 * 2 / 297.65)),
    ],
)
def test_arrangement_flow_hand_cases(arrangement, wind_met, wind_building, expected):
    got = af.arrangement_flow(arrangement, 10.0, wind_speed_met=wind_met, wind_speed_building=wind_building,
                              **ZONE_CASE)
    assert_allclose(got, expected, rtol=1e-3)


@pytest.mark.parametrize("arrangement", sorted(af.ARRANGEMENT_METHODS))
def test_arrangement_flow_is_linear_in_area_and_keeps_index(arrangement):
    wind = pd.Series([0.0, 2.0, 5.0], index=pd.date_range("2026-07-01", periods=3, freq="h"))
    one = af.arrangement_flow(arrangement, 1.0, wind_speed_met=wind, wind_speed_building=wind * 0.7, **ZONE_CASE)
    ten = af.arrangement_flow(arrangement, 10.0, wind_speed_met=wind, wind_speed_building=wind * 0.7, **ZONE_CASE)
    assert isinstance(ten, pd.Series) and ten.index.equals(wind.index)
    assert_allclose(ten.to_numpy(), 10 * one.to_numpy(), rtol=1e-12)
    assert (np.diff(ten.to_numpy()) >= -1e-12).all()  # more wind never reduces the flow


def test_arrangement_flow_unknown_arrangement():
    with pytest.raises(ProjectError, match="arrangement must be one of"):
        af.arrangement_flow("chimney", 1.0, wind_speed_met=1.0, wind_speed_building=1.0, **ZONE_CASE)
