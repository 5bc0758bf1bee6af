"""Tests of calcs.comfort.

Sources of the expected values (named again beside each check):

* VDC: the validation tables used by pythermalcomfort's own tests,
  ``ts_adaptive_ashrae.json`` and ``ts_adaptive_en.json``
  (FedericoTartarini/validation-data-comfort-models), tabulated in
  ``tests/data/comfort_adaptive_cases.json`` with a source per row.
* PTC: pythermalcomfort 4.8.1, used only here as an independent oracle
  (``adaptive_ashrae``, ``adaptive_en``, ``operative_tmp``) over a constructed
  year of 8760 hours.
* Published definitions whose numbers are worked by hand in the comments:
  ASHRAE 55 Appendix A and Table 5.4.2.4, EN 16798-1 Annex B, CIBSE TM52:2013
  §6.1.2 and Eqs. 1, 6, 8, 9 (as quoted in REFERENCES §1-3). Facts written from
  memory of a standard are marked [MEM].
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from calcs.comfort import (
    CRITERIA,
    OutOfRangeWarning,
    Tm52Result,
    adaptive_ashrae55,
    adaptive_en16798,
    criteria_summary,
    evaluate_criteria,
    fixed_band,
    operative_temperature,
    outdoor_band,
    tm52_assessment,
)
from calcs.errors import ProjectError

CASES = json.loads(
    (Path(__file__).parent / "data" / "comfort_adaptive_cases.json").read_text(encoding="utf-8")
)
FT_PER_S = 0.3048  # m s⁻¹ per ft s⁻¹ (exact by definition)


def f_to_c(t_f):
    return (t_f - 32.0) / 1.8


def _case_inputs(case, rm_key):
    """Inputs of a tabulated case in SI, and the tolerance in K."""
    inp = case["inputs"]
    if case["units"] == "IP":
        # 0.1 °F display rounding -> ±0.05 °F = ±0.0278 K
        return (
            f_to_c(inp["t_db"]),
            f_to_c(inp["t_r"]),
            f_to_c(inp[rm_key]),
            inp["v"] * FT_PER_S,
            case["tolerance"] / 1.8 + 1e-6,
        )
    return inp["t_db"], inp["t_r"], inp[rm_key], inp["v"], case["tolerance"] + 1e-6


def _expected_si(case, key):
    value = case["expected"][key]
    return f_to_c(value) if case["units"] == "IP" else value


# =========================================================================== operative


def test_operative_ashrae55_published_case():
    # VDC ts_adaptive_ashrae.json row 6: t_db 30, t_r 26, v 0.1 -> A = 0.5, t_o = 28
    assert operative_temperature(30.0, 26.0, 0.1) == pytest.approx(28.0, abs=1e-12)


@pytest.mark.parametrize(
    ("v", "a"),
    [(0.0, 0.5), (0.19, 0.5), (0.2, 0.6), (0.59, 0.6), (0.6, 0.7), (1.0, 0.7)],
)
def test_operative_ashrae55_weighting_steps(v, a):
    # ASHRAE 55-2020 Normative Appendix A: A = 0.5 (v < 0.2), 0.6 (0.2-0.6), 0.7 (0.6-1.0)
    # [REFERENCES §1, DOC PTC operative_tmp]. t_a 30, t_r 20 -> t_o = 20 + 10·A by hand.
    assert operative_temperature(30.0, 20.0, v) == pytest.approx(20.0 + 10.0 * a, abs=1e-12)


def test_operative_ashrae55_warns_beyond_table():
    # Appendix A's table ends at 1.0 m s⁻¹ [REFERENCES §1]; beyond it A = 0.7 with a warning.
    with pytest.warns(OutOfRangeWarning, match="1.0 m s"):
        t_o = operative_temperature(30.0, 20.0, 1.2)
    assert t_o == pytest.approx(27.0, abs=1e-12)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        operative_temperature(30.0, 20.0, 1.0)  # at the end of the table: no warning


def test_operative_iso7726_formula_by_hand():
    # ISO 7726 / CIBSE form (REFERENCES §2): v = 0.4 -> √(10v) = 2; t_o = (30·2 + 24)/3 = 28
    assert operative_temperature(30.0, 24.0, 0.4, method="iso7726") == pytest.approx(28.0, abs=1e-12)
    # v = 0.1 -> √1 = 1: plain mean (30 + 24)/2 = 27
    assert operative_temperature(30.0, 24.0, 0.1, method="iso7726") == pytest.approx(27.0, abs=1e-12)


@pytest.mark.parametrize("v", [0.0, 0.05, 0.099])
def test_operative_iso7726_still_air_is_plain_mean(v):
    # CIBSE Guide A [MEM]: below 0.1 m s⁻¹ the dry resultant temperature is (t_a + t_r)/2.
    assert operative_temperature(30.0, 24.0, v, method="iso7726") == pytest.approx(27.0, abs=1e-12)


# =========================================================================== ASHRAE 55


@pytest.mark.parametrize("case", CASES["ashrae55"], ids=lambda c: c["id"])
def test_adaptive_ashrae55_published_cases(case):
    # VDC ts_adaptive_ashrae.json and the PTC docstring (source per row in the JSON file)
    t_db, t_r, t_pma, v, tol = _case_inputs(case, "t_pma")
    t_op = operative_temperature(t_db, t_r, v, method="ashrae55")
    row = adaptive_ashrae55(t_op, t_pma, v).iloc[0]
    for key, expected in case["expected"].items():
        if isinstance(expected, bool):
            assert bool(row[key]) is expected, key
        elif expected is None:
            # published as undefined: the model is out of range there
            assert not row["in_range"]
        else:
            assert_allclose(row[key], _expected_si(case, key), atol=tol, rtol=0, err_msg=key)


def test_adaptive_ashrae55_unrounded_limits():
    # REFERENCES §1 rounding trap: at t_pma 25, t_cmf = 0.31·25 + 17.8 = 25.55 (shown 25.6),
    # 80 % limits 22.05 / 29.05 from the unrounded t_cmf (hand arithmetic).
    row = adaptive_ashrae55(25.0, 25.0).iloc[0]
    assert_allclose(
        row[["comfort_temp", "lower_80", "upper_80", "lower_90", "upper_90"]].to_numpy(float),
        [25.55, 22.05, 29.05, 23.05, 28.05],
        atol=1e-9,
    )


def test_adaptive_ashrae55_band_ends_are_acceptable():
    # ASHRAE 55 §5.4.2.2: limits inclusive (VDC row 1 accepts t_o 19.6 at the rounded
    # lower 80 % limit 23.1 - 3.5 = 19.6). Exactly on each end: ok; one ulp outside: not.
    res = adaptive_ashrae55(20.0, 20.0).iloc[0]
    for level in ("80", "90"):
        lo, hi = res[f"lower_{level}"], res[f"upper_{level}"]
        assert adaptive_ashrae55(lo, 20.0).iloc[0][f"ok_{level}"]
        assert adaptive_ashrae55(hi, 20.0).iloc[0][f"ok_{level}"]
        assert not adaptive_ashrae55(np.nextafter(lo, -np.inf), 20.0).iloc[0][f"ok_{level}"]
        assert not adaptive_ashrae55(np.nextafter(hi, np.inf), 20.0).iloc[0][f"ok_{level}"]


@pytest.mark.parametrize(
    ("v", "t_op", "increase"),
    [
        (0.1, 28.0, 0.0),
        (0.59, 28.0, 0.0),
        (0.6, 28.0, 1.2),
        (0.89, 28.0, 1.2),
        (0.9, 28.0, 1.8),
        (1.19, 28.0, 1.8),
        (1.2, 28.0, 2.2),
        (1.3, 28.0, 2.2),  # table ends at 1.2 m s⁻¹; not extrapolated
        (1.2, 25.0, 0.0),  # only when t_o > 25 °C (the standard's "greater than") [MEM]
        (1.2, 25.01, 2.2),
    ],
)
def test_adaptive_ashrae55_air_speed_increase(v, t_op, increase):
    # ASHRAE 55 Table 5.4.2.4 [MEM; REFERENCES §1]: 0.6 -> 1.2 K, 0.9 -> 1.8 K, 1.2 -> 2.2 K,
    # upper limits only. At t_pma 20 the still-air limits are 27.5 / 26.5 (PTC docstring).
    row = adaptive_ashrae55(t_op, 20.0, v).iloc[0]
    assert row["air_speed_increase"] == pytest.approx(increase, abs=1e-12)
    assert row["upper_80"] == pytest.approx(27.5 + increase, abs=1e-9)
    assert row["upper_90"] == pytest.approx(26.5 + increase, abs=1e-9)
    assert row["lower_80"] == pytest.approx(20.5, abs=1e-9)  # lower limits unchanged


@pytest.mark.parametrize(("t_pma", "in_range"), [(9.99, False), (10.0, True), (33.5, True), (33.51, False)])
def test_adaptive_ashrae55_validity_ends(t_pma, in_range):
    # Validity 10 ≤ t_pma ≤ 33.5 °C (REFERENCES §1; VDC accepts t_pma = 10). Out of range: never ok.
    row = adaptive_ashrae55(0.31 * t_pma + 17.8, t_pma).iloc[0]  # t_op at the comfort temperature
    assert bool(row["in_range"]) is in_range
    assert bool(row["ok_80"]) is in_range
    assert bool(row["ok_90"]) is in_range


# =========================================================================== EN 16798-1


@pytest.mark.parametrize("case", CASES["en16798"], ids=lambda c: c["id"])
def test_adaptive_en16798_published_cases(case):
    # VDC ts_adaptive_en.json (source per row in the JSON file)
    t_db, t_r, t_rm, v, tol = _case_inputs(case, "t_rm")
    t_op = operative_temperature(t_db, t_r, v, method="iso7726")
    row = adaptive_en16798(t_op, t_rm, v).iloc[0]
    for key, expected in case["expected"].items():
        if isinstance(expected, bool):
            assert bool(row[key]) is expected, key
        elif expected is None:
            assert not row["in_range_upper"] and not row["in_range_lower"]
            assert row[["out_of_range_cat1", "out_of_range_cat2", "out_of_range_cat3"]].all()
        else:
            assert_allclose(row[key], _expected_si(case, key), atol=tol, rtol=0, err_msg=key)


@pytest.mark.parametrize(
    ("t_rm", "upper", "lower"),
    [(10.0, False, False), (10.01, True, False), (15.0, True, False), (15.01, True, True),
     (29.99, True, True), (30.0, False, False)],
)
def test_adaptive_en16798_validity_flags(t_rm, upper, lower):
    # EN 16798-1 Annex B.2 [MEM]: upper limits for 10 < θrm < 30 °C, lower for 15 < θrm < 30 °C.
    row = adaptive_en16798(25.0, t_rm).iloc[0]
    assert bool(row["in_range_upper"]) is upper
    assert bool(row["in_range_lower"]) is lower


def test_adaptive_en16798_judged_on_the_deciding_side():
    # θrm 12 (upper limits valid, lower not [MEM]): θc = 0.33·12 + 18.8 = 22.76;
    # cat II upper = 25.76 (hand). t_op 27: above the valid upper limit -> judged, not ok.
    # t_op 23: within the upper limit; acceptability needs the lower limit -> out of range.
    res = adaptive_en16798(pd.Series([27.0, 23.0]), 12.0)
    assert_allclose(res["upper_cat2"], [25.76, 25.76], atol=1e-9)
    assert_array_equal(res["out_of_range_cat2"], [False, True])
    assert_array_equal(res["ok_cat2"], [False, False])
    # cat III upper = 26.76: t_op 27 still above -> judged not ok
    assert_array_equal(res["out_of_range_cat3"], [False, True])


def test_adaptive_en16798_missing_temp_op_is_out_of_range():
    res = adaptive_en16798(np.nan, 20.0).iloc[0]
    assert res[["out_of_range_cat1", "out_of_range_cat2", "out_of_range_cat3"]].all()
    assert not res[["ok_cat1", "ok_cat2", "ok_cat3"]].any()


# =========================================================================== oracle: a year


N_HOURS = 8760
HOURS_25 = np.arange(940, 946)  # t_db = t_r = 25.0 exactly, v ≥ 0.6, θrm ≈ 10.9
V_25 = np.array([0.6, 0.9, 1.2, 0.6, 0.9, 1.2])
STEP_25 = np.array([1.2, 1.8, 2.2, 1.2, 1.8, 2.2])  # Table 5.4.2.4 steps
HOURS_ASHRAE_EDGE = np.arange(2030, 2034)  # t_o exactly on lower/upper 80 %, lower/upper 90 %
HOURS_EN_EDGE = np.arange(2040, 2046)  # t_o exactly on the six EN limits
RM_PLANTED = {10.0: np.arange(200, 204), 15.0: np.arange(204, 208),
              30.0: np.arange(4380, 4384), 33.5: np.arange(4384, 4388)}


@pytest.fixture(scope="module")
def year():
    """8760 constructed hours: θrm / t_pma from 8 to 35 °C, v 0.1-1.3 m s⁻¹.

    Operative targets scatter ±8 K about the comfort temperature; t_db and t_r
    scatter ±1.5 K about the target. Planted hours: exact validity ends
    (RM_PLANTED), t_o exactly 25 °C with elevated air speed (HOURS_25) and t_o
    exactly on a limit (HOURS_*_EDGE).
    """
    rng = np.random.default_rng(55_16798)
    h = np.arange(N_HOURS)
    rm = 8.0 + 27.0 * 0.5 * (1.0 - np.cos(2.0 * np.pi * h / N_HOURS))
    for value, hours in RM_PLANTED.items():
        rm[hours] = value
    v_grid = np.round(np.arange(0.10, 1.301, 0.05), 2)  # includes 0.6, 0.9, 1.2 exactly
    v = rng.choice(v_grid, N_HOURS)
    target = 0.32 * rm + 18.3 + rng.uniform(-8.0, 8.0, N_HOURS)
    t_db = target + rng.uniform(-1.5, 1.5, N_HOURS)
    t_r = target + rng.uniform(-1.5, 1.5, N_HOURS)
    t_db[HOURS_25] = t_r[HOURS_25] = 25.0
    v[HOURS_25] = V_25
    v[HOURS_ASHRAE_EDGE] = v[HOURS_EN_EDGE] = 0.1  # A = 0.5 and √(10v) = 1: t_o = t_db exactly
    c_a = 0.31 * rm[HOURS_ASHRAE_EDGE] + 17.8
    t_db[HOURS_ASHRAE_EDGE] = c_a + np.array([-3.5, 3.5, -2.5, 2.5])
    c_e = 0.33 * rm[HOURS_EN_EDGE] + 18.8
    t_db[HOURS_EN_EDGE] = c_e + np.array([-3.0, 2.0, -4.0, 3.0, -5.0, 4.0])
    t_r[HOURS_ASHRAE_EDGE] = t_db[HOURS_ASHRAE_EDGE]
    t_r[HOURS_EN_EDGE] = t_db[HOURS_EN_EDGE]
    assert (t_db > 10).all() and (t_db < 40).all() and (t_r > 10).all() and (t_r < 40).all()
    return {"rm": rm, "v": v, "t_db": t_db, "t_r": t_r}


@pytest.fixture(scope="module")
def ptc():
    pytest.importorskip("pythermalcomfort")
    from pythermalcomfort.environment import operative_tmp
    from pythermalcomfort.models import adaptive_ashrae, adaptive_en

    return {"ashrae": adaptive_ashrae, "en": adaptive_en, "operative": operative_tmp}


def _quiet(fn, *args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*args, **kwargs)


def _near_any(x, limits, tol=1e-6):
    return np.any([np.abs(x - lim) < tol for lim in limits], axis=0)


def test_operative_matches_pythermalcomfort_over_a_year(year, ptc):
    # PTC operative_tmp (ISO and ASHRAE weighting), all 8760 hours (v ≥ 0.1 throughout)
    for ours, theirs in (("ashrae55", "ashrae"), ("iso7726", "iso")):
        mine = _quiet(operative_temperature, year["t_db"], year["t_r"], year["v"], method=ours)
        ref = ptc["operative"](year["t_db"], year["t_r"], year["v"], standard=theirs)
        assert_allclose(mine, ref, atol=1e-9, rtol=0)


def test_ashrae55_matches_pythermalcomfort_over_a_year(year, ptc):
    # PTC adaptive_ashrae, unrounded (round_output=False): same formulas, so atol 1e-6.
    t_op = _quiet(operative_temperature, year["t_db"], year["t_r"], year["v"], method="ashrae55")
    ours = adaptive_ashrae55(t_op, year["rm"], year["v"])
    ref = _quiet(ptc["ashrae"], year["t_db"], year["t_r"], year["rm"], year["v"], round_output=False)
    in_range = ours["in_range"].to_numpy()

    # Validity: both use 10 ≤ t_pma ≤ 33.5 inclusive; PTC gives NaN exactly where we flag.
    assert_array_equal(np.isnan(ref.tmp_cmf), ~in_range)
    assert not ours.loc[~in_range, ["ok_80", "ok_90"]].to_numpy().any()

    # Documented difference: PTC raises the upper limits from t_o ≥ 25 °C, the standard
    # (and freerun) from t_o > 25 °C. Planted hours at exactly 25 °C show it:
    near_25 = (np.abs(t_op - 25.0) < 1e-6) & (year["v"] >= 0.6)
    assert_array_equal(np.flatnonzero(near_25), HOURS_25)  # 6 hours excluded, all planted
    assert_allclose(ours["air_speed_increase"].to_numpy()[HOURS_25], 0.0, atol=0)
    assert_allclose(np.asarray(ref.tmp_cmf_80_up)[HOURS_25] - ours["upper_80"].to_numpy()[HOURS_25],
                    STEP_25, atol=1e-9)
    # at θrm ≈ 10.9 the still-air upper 80 % limit is ≈ 24.7 < 25: PTC accepts, freerun does not
    assert (np.asarray(ref.acceptability_80)[HOURS_25] == 1).all()
    assert not ours["ok_80"].to_numpy()[HOURS_25].any()

    # Hours within 1e-6 of a band end are excluded from the boolean comparison.
    edge = _near_any(t_op, [ours[c].to_numpy() for c in ("lower_80", "upper_80", "lower_90", "upper_90")])
    assert_array_equal(np.flatnonzero(edge & in_range), HOURS_ASHRAE_EDGE)  # 4 excluded, all planted
    # both take the ends as acceptable
    assert ours["ok_80"].to_numpy()[HOURS_ASHRAE_EDGE[:2]].all()
    assert ours["ok_90"].to_numpy()[HOURS_ASHRAE_EDGE[2:]].all()
    assert (np.asarray(ref.acceptability_80)[HOURS_ASHRAE_EDGE[:2]] == 1).all()
    assert (np.asarray(ref.acceptability_90)[HOURS_ASHRAE_EDGE[2:]] == 1).all()

    cmp = in_range & ~near_25
    for mine, theirs in (("comfort_temp", "tmp_cmf"), ("lower_80", "tmp_cmf_80_low"),
                         ("upper_80", "tmp_cmf_80_up"), ("lower_90", "tmp_cmf_90_low"),
                         ("upper_90", "tmp_cmf_90_up")):
        assert_allclose(ours[mine].to_numpy()[cmp], np.asarray(getattr(ref, theirs))[cmp],
                        atol=1e-6, rtol=0, err_msg=mine)
    cmp_bool = cmp & ~edge
    assert cmp_bool.sum() == int(in_range.sum()) - 6 - 4
    assert cmp_bool.sum() > 5000  # two thirds of the year are compared
    for mine, theirs in (("ok_80", "acceptability_80"), ("ok_90", "acceptability_90")):
        assert_array_equal(ours[mine].to_numpy()[cmp_bool], np.asarray(getattr(ref, theirs))[cmp_bool] == 1)
    # the year exercises both answers and the air-speed increase
    assert 0.2 < ours["ok_80"].to_numpy()[cmp_bool].mean() < 0.9
    assert (ours["air_speed_increase"].to_numpy()[cmp_bool] > 0).sum() > 500

    # PTC's displayed (rounded to 0.1) limits stay within 0.05 K of ours
    shown = _quiet(ptc["ashrae"], year["t_db"], year["t_r"], year["rm"], year["v"])
    assert_allclose(ours["upper_80"].to_numpy()[cmp], np.asarray(shown.tmp_cmf_80_up)[cmp],
                    atol=0.05 + 1e-9, rtol=0)


def test_en16798_matches_pythermalcomfort_where_validity_agrees(year, ptc):
    # PTC adaptive_en, unrounded. PTC 4.8.1 applies 10 ≤ θrm ≤ 30 to both limits; freerun
    # uses 10 < θrm < 30 (upper) and 15 < θrm < 30 (lower) [MEM]. Compare only where both judge.
    t_op = operative_temperature(year["t_db"], year["t_r"], year["v"], method="iso7726")
    ours = adaptive_en16798(t_op, year["rm"], year["v"])
    ref = _quiet(ptc["en"], year["t_db"], year["t_r"], year["rm"], year["v"], round_output=False)
    rm = year["rm"]
    ptc_valid = ~np.isnan(np.asarray(ref.tmp_cmf))
    assert_array_equal(ptc_valid, (rm >= 10) & (rm <= 30))

    near_25 = (np.abs(t_op - 25.0) < 1e-6) & (year["v"] >= 0.6)
    assert_array_equal(np.flatnonzero(near_25), HOURS_25)  # 6 excluded (≥ 25 vs > 25)
    assert_allclose(np.asarray(ref.tmp_cmf_cat_ii_up)[HOURS_25] - ours["upper_cat2"].to_numpy()[HOURS_25],
                    STEP_25, atol=1e-9)

    limits = [ours[f"{s}_cat{c}"].to_numpy() for c in (1, 2, 3) for s in ("lower", "upper")]
    edge = _near_any(t_op, limits)
    assert_array_equal(np.flatnonzero(edge & ptc_valid), HOURS_EN_EDGE)  # 6 excluded, all planted

    up = ours["in_range_upper"].to_numpy() & ~near_25
    lo = ours["in_range_lower"].to_numpy() & ~near_25
    for c, name in ((1, "i"), (2, "ii"), (3, "iii")):
        assert_allclose(ours[f"upper_cat{c}"].to_numpy()[up],
                        np.asarray(getattr(ref, f"tmp_cmf_cat_{name}_up"))[up], atol=1e-6, rtol=0)
        assert_allclose(ours[f"lower_cat{c}"].to_numpy()[lo],
                        np.asarray(getattr(ref, f"tmp_cmf_cat_{name}_low"))[lo], atol=1e-6, rtol=0)

        oor = ours[f"out_of_range_cat{c}"].to_numpy()
        acc = np.asarray(getattr(ref, f"acceptability_cat_{name}"))
        up_ref = np.asarray(getattr(ref, f"tmp_cmf_cat_{name}_up"))
        # where PTC has no answer, freerun flags the hour too
        assert oor[~ptc_valid].all()
        # hours PTC judges but freerun does not (validity rules differ), counted independently:
        # θrm exactly 10 or 30, and 10 < θrm ≤ 15 with t_o not above the upper limit
        base = ~near_25 & ~edge
        expected_diff = base & (((rm == 10) | (rm == 30))
                                | ((rm > 10) & (rm <= 15) & (t_op <= up_ref)))
        assert_array_equal(base & ptc_valid & oor, expected_diff)
        assert expected_diff.sum() > 100  # spring hours with θrm 10-15 °C exist in the year
        cmp = base & ~oor
        assert ptc_valid[cmp].all()
        assert cmp.sum() > 3000
        assert_array_equal(ours[f"ok_cat{c}"].to_numpy()[cmp], acc[cmp] == 1)


# =========================================================================== bands


def test_fixed_and_outdoor_bands_inclusive():
    # Bands 20-24 °C and 16-26 °C: common practice, no source; ends inclusive by definition.
    assert_array_equal(fixed_band([19.99, 20.0, 24.0, 24.01, np.nan]), [False, True, True, False, False])
    assert_array_equal(outdoor_band([15.99, 16.0, 26.0, 26.01]), [False, True, True, False])
    assert_array_equal(fixed_band([21.0, 23.0], low=22.0, high=23.0), [False, True])


# =========================================================================== eight criteria


@pytest.fixture
def small_case():
    idx = pd.date_range("2025-06-02 08:00", periods=8, freq="h")
    return {
        "temp_op": pd.Series([21.0, 23.0, 27.0, 28.0, 30.0, 25.0, 24.0, np.nan], idx),
        "temp_air": pd.Series([15.0, 18.0, 22.0, 26.0, 27.0, 20.0, 16.0, 21.0], idx),
        "running_mean": pd.Series([20.0, 20.0, 20.0, 20.0, 12.0, 9.0, 20.0, 20.0], idx),
        "prevailing_mean": pd.Series([20.0, 20.0, 20.0, 20.0, 20.0, 9.0, 20.0, 20.0], idx),
        "occupied": pd.Series([True] * 6 + [False, True], idx),
    }


# Counted by hand from the definitions (ASHRAE 55: t_pma 20 -> 80 % 20.5-27.5, 90 % 21.5-26.5,
# PTC docstring; fans 0.9 m s⁻¹ add 1.8 K above 25 °C -> 29.3. EN 16798-1: θrm 20 -> I 22.4-27.4,
# II 21.4-28.4, III 20.4-29.4, VDC; θrm 12 -> uppers 24.76/25.76/26.76, 30 °C is above all of
# them so the hour is judged. θrm / t_pma 9: out of range. Hour 7: temp_op missing.)
#   hour:        0     1     2     3     4     5    (6 unocc.)  7
#   temp_op:     21    23    27    28    30    25     24       NaN
#   outdoor:     15F   18T   22T   26T   27F   20T    16T      21T
#   fixed:       T     T     F     F     F     F      T        oor
#   ash80:       T     T     T     F     F     oor    T        oor
#   ash90:       F     T     F     F     F     oor    T        oor
#   ash80 fans:  T     T     T     T     F     oor    T        oor
#   en cat1:     F     T     T     F     F     oor    T        oor
#   en cat2:     F     T     T     T     F     oor    T        oor
#   en cat3:     T     T     T     T     F     oor    T        oor
HAND_COUNTS = {  # (ok hours, out-of-range hours) among the 7 occupied hours
    "outdoor_band": (5, 0),
    "fixed_indoor": (2, 1),
    "ashrae55_80": (3, 2),
    "ashrae55_90": (1, 2),
    "ashrae55_80_fans": (4, 2),
    "en16798_cat1": (2, 2),
    "en16798_cat2": (3, 2),
    "en16798_cat3": (4, 2),
}


def test_evaluate_criteria_columns_and_index(small_case):
    ev = evaluate_criteria(**small_case, fan_air_speed=0.9)
    expected_cols = ["occupied"] + [f"{c}_{s}" for c in CRITERIA for s in ("ok", "out_of_range")]
    assert list(ev.columns) == expected_cols
    assert ev.index.equals(small_case["temp_op"].index)
    assert all(ev[c].dtype == bool for c in expected_cols)
    for c in CRITERIA:  # never ok while out of range
        assert not (ev[f"{c}_ok"] & ev[f"{c}_out_of_range"]).any()
    # hour 4 (θrm 12, 30 °C) judged by EN upper limits, not out of range
    assert not ev["en16798_cat3_out_of_range"].iloc[4]


def test_criteria_summary_counted_by_hand(small_case):
    ev = evaluate_criteria(**small_case, fan_air_speed=0.9)
    summary = criteria_summary(ev, small_case["occupied"])
    assert list(summary.index) == list(CRITERIA)
    assert summary.index.name == "criterion"
    for name, (ok_h, oor_h) in HAND_COUNTS.items():
        row = summary.loc[name]
        assert row["occupied_hours"] == 7
        assert row["ok_hours"] == ok_h, name
        assert row["out_of_range_hours"] == oor_h, name
        assert_allclose(row["ok_pct"], 100.0 * ok_h / 7, atol=1e-9, err_msg=name)
        assert_allclose(row["out_of_range_pct"], 100.0 * oor_h / 7, atol=1e-9, err_msg=name)


def test_fans_default_to_no_fans(small_case):
    # fan_air_speed None: the fans criterion uses air_speed and equals ashrae55_80
    ev = evaluate_criteria(**small_case)
    assert_array_equal(ev["ashrae55_80_fans_ok"], ev["ashrae55_80_ok"])


def test_out_of_range_hours_counted_separately():
    # 10 occupied hours, 3 with running mean and prevailing mean 8 °C (below 10 °C, outside
    # both models), all at the comfort temperature of θrm 20 (25.4 °C, in every EN category
    # and ASHRAE 80 %: 20.5-27.5).
    rm = np.array([8.0] * 3 + [20.0] * 7)
    ev = evaluate_criteria(np.full(10, 25.4), np.full(10, 20.0), rm, rm, np.ones(10, bool))
    s = criteria_summary(ev, np.ones(10, bool))
    for name in ("ashrae55_80", "en16798_cat1", "en16798_cat2", "en16798_cat3"):
        assert s.loc[name, "out_of_range_hours"] == 3
        assert s.loc[name, "ok_hours"] == 7
        assert_allclose(s.loc[name, ["ok_pct", "out_of_range_pct"]].to_numpy(float), [70.0, 30.0], atol=1e-9)
    assert s.loc["fixed_indoor", "out_of_range_hours"] == 0
    assert s.loc["fixed_indoor", "ok_hours"] == 0  # 25.4 is above 24


# =========================================================================== TM52

# T_rm = 20 °C throughout: T_max (cat II) = 0.33·20 + 18.8 + 3 = 28.4 °C (TM52 Eq. 8 / Table 2).
# Base temp_op 25.4 °C gives ΔT = -3 (no exceedance). Occupied: 2-11 June, 08:00-17:00,
# 10 days × 10 h = 100 assessed hours. Out-of-season occupied hours (30 Apr, 1 Oct) and an
# unoccupied June hour run at 40 °C (ΔT 12); they must be ignored.
DAYS = pd.date_range("2025-06-02", periods=10, freq="D")


def _tm52_inputs(hot=None, base=25.4):
    idx = pd.date_range("2025-01-01", periods=8760, freq="h")
    t_op = pd.Series(base, index=idx)
    occ = pd.Series(False, index=idx)
    for day in DAYS:
        occ[day + pd.Timedelta(hours=8): day + pd.Timedelta(hours=17)] = True
    for ts in ("2025-04-30 12:00", "2025-10-01 12:00"):
        occ[pd.Timestamp(ts)] = True
        t_op[pd.Timestamp(ts)] = 40.0
    t_op[pd.Timestamp("2025-06-01 12:00")] = 40.0  # unoccupied
    for (day, hour), value in (hot or {}).items():
        t_op[DAYS[day] + pd.Timedelta(hours=hour)] = value
    return t_op, pd.Series(20.0, index=idx), occ


def test_tm52_cool_season_and_ignored_hours():
    res = tm52_assessment(*_tm52_inputs())
    assert isinstance(res, Tm52Result)
    assert res.occupied_hours_assessed == 100  # the 40 °C April/October hours are not assessed
    assert res.hours_exceeding == 0
    assert res.max_delta_t == -3  # not 12: out-of-season and unoccupied hours ignored
    assert res.max_daily_weighted_exceedance == 0
    assert (res.criterion1_pass, res.criterion2_pass, res.criterion3_pass) == (True, True, True)
    assert res.failed_criteria == 0 and res.passed


@pytest.mark.parametrize(
    ("t_op", "delta_t", "crit3"),
    [
        (28.89999999, 0, True),  # ΔT 0.49999999 -> 0
        (28.9, 1, True),  # ΔT 0.5 (computed 0.4999999999999964) -> 1 (half up)
        (29.9, 2, True),  # 1.5 -> 2
        (30.9, 3, True),  # 2.5 -> 3 (Python round() would give 2)
        (32.8, 4, True),  # 4.4 -> 4: criterion 3 passes
        (32.9, 5, False),  # 4.5 -> 5: criterion 3 fails
    ],
)
def test_tm52_delta_t_rounding(t_op, delta_t, crit3):
    # TM52 Eq. 9: ΔT rounded to the nearest whole degree, 0.5 upwards (REFERENCES §3)
    res = tm52_assessment(*_tm52_inputs({(0, 12): t_op}))
    assert res.max_delta_t == delta_t
    assert res.criterion3_pass is crit3
    assert res.hours_exceeding == (1 if delta_t >= 1 else 0)
    assert res.max_daily_weighted_exceedance == max(delta_t, 0)


@pytest.mark.parametrize(("n_hot", "pct", "passes"), [(3, 3.0, True), (4, 4.0, False)])
def test_tm52_criterion1_three_percent(n_hot, pct, passes):
    # TM52 §6.1.2a: hours with ΔT ≥ 1 must not exceed 3 % of occupied hours.
    # One hour at ΔT 1 (28.9 °C) on each of n_hot days: n_hot of 100 hours.
    res = tm52_assessment(*_tm52_inputs({(d, 12): 28.9 for d in range(n_hot)}))
    assert res.hours_exceeding == n_hot
    assert_allclose(res.hours_exceedance_pct, pct, atol=1e-12)
    assert res.criterion1_pass is passes
    assert res.criterion2_pass and res.criterion3_pass  # W_e 1 per day, ΔT 1


@pytest.mark.parametrize(
    ("temps", "w_e", "passes"),
    [((28.9, 29.9, 30.9), 6, True), ((28.9, 29.9, 30.9, 28.9), 7, False)],
)
def test_tm52_criterion2_daily_weighted_exceedance(temps, w_e, passes):
    # TM52 §6.1.2b: W_e = Σ max(ΔT, 0) over the day's occupied hours ≤ 6.
    # ΔT 1 + 2 + 3 = 6 passes; 1 + 2 + 3 + 1 = 7 fails (on day 0).
    res = tm52_assessment(*_tm52_inputs({(0, 9 + i): t for i, t in enumerate(temps)}))
    assert res.max_daily_weighted_exceedance == w_e
    assert res.criterion2_pass is passes
    assert res.days_over_weighted_limit == (0 if passes else 1)


@pytest.mark.parametrize(
    ("hot", "fails", "passed"),
    [
        # one hour ΔT 5: crit1 1 % ok, W_e 5 ok, crit3 fails -> 1 failed, passes
        ({(0, 12): 32.9}, (False, False, True), True),
        # ΔT 1 on four days: crit1 4 % fails only -> passes
        ({(d, 12): 28.9 for d in range(4)}, (True, False, False), True),
        # ΔT 1, 2, 3, 1 on one day: crit1 4 % fails, W_e 7 fails -> fails
        ({(0, 9): 28.9, (0, 10): 29.9, (0, 11): 30.9, (0, 12): 28.9}, (True, True, False), False),
        # ΔT 5 and 2 on one day: crit1 2 % ok, W_e 7 fails, crit3 fails -> fails
        ({(0, 9): 32.9, (0, 10): 29.9}, (False, True, True), False),
        # ΔT 5, 1, 1, 1: crit1 4 %, W_e 8, ΔT 5 -> all three fail
        ({(0, 9): 32.9, (0, 10): 28.9, (0, 11): 28.9, (0, 12): 28.9}, (True, True, True), False),
    ],
)
def test_tm52_two_of_three_verdict(hot, fails, passed):
    # TM52 §6.1.2: a room fails if it fails any two of the three criteria.
    res = tm52_assessment(*_tm52_inputs(hot))
    got = (not res.criterion1_pass, not res.criterion2_pass, not res.criterion3_pass)
    assert got == fails
    assert res.failed_criteria == sum(fails)
    assert res.passed is passed


def test_tm52_season_boundaries():
    # May-September only: 1 May 00:00 and 30 Sep 23:00 (hour starts) are in, 30 Apr 23:00 and
    # 1 Oct 00:00 are out. Inside-boundary hours at ΔT 1, outside ones at 40 °C.
    t_op, t_rm, occ = _tm52_inputs()
    for ts, value in (("2025-05-01 00:00", 28.9), ("2025-09-30 23:00", 28.9),
                      ("2025-04-30 23:00", 40.0), ("2025-10-01 00:00", 40.0)):
        occ[pd.Timestamp(ts)] = True
        t_op[pd.Timestamp(ts)] = value
    res = tm52_assessment(t_op, t_rm, occ)
    assert res.occupied_hours_assessed == 102
    assert res.hours_exceeding == 2
    assert res.max_delta_t == 1


@pytest.mark.parametrize(("category", "delta_t"), [("I", 2), ("II", 1), ("III", 0)])
def test_tm52_categories(category, delta_t):
    # TM52 Table 2: T_max = 0.33·T_rm + 18.8 + 2 / 3 / 4 -> 27.4 / 28.4 / 29.4 at T_rm 20.
    # 28.9 °C: ΔT 1.5 -> 2 (I); 0.5 -> 1 (II); -0.5 -> 0 (III, half up).
    res = tm52_assessment(*_tm52_inputs({(0, 12): 28.9}), category=category)
    assert res.max_delta_t == delta_t
    assert res.category == category


def test_tm52_air_speed_allowance():
    # TM52 Eq. 1 [DOC via a secondary source]: ΔT_v = 7 - 50/(4 + 10·v^0.5), v > 0.1 m s⁻¹.
    # v 0.8: √0.8 = 0.894427; 4 + 8.94427 = 12.94427; 50/12.94427 = 3.862712; ΔT_v = 3.137288 K.
    inputs = _tm52_inputs({(0, 12): 32.0})  # still air: ΔT 3.6 -> 4
    assert tm52_assessment(*inputs).max_delta_t == 4
    res = tm52_assessment(*inputs, air_speed=0.8)
    assert_allclose(res.max_air_speed_allowance, 3.137288, atol=1e-6)
    assert res.max_delta_t == 0  # 32.0 - (28.4 + 3.137) = 0.46 -> 0
    assert res.hours_air_speed_capped == 0
    # v = 0.1: no allowance (only above 0.1 m s⁻¹)
    assert tm52_assessment(*inputs, air_speed=0.1).max_air_speed_allowance == 0.0
    # v = 1.0: held at the 0.8 m s⁻¹ value [MEM limit], hours counted
    capped = tm52_assessment(*inputs, air_speed=1.0)
    assert_allclose(capped.max_air_speed_allowance, 3.137288, atol=1e-6)
    assert capped.hours_air_speed_capped == 100


def test_tm52_missing_data_and_running_mean_range():
    t_op, t_rm, occ = _tm52_inputs()
    t_op[DAYS[0] + pd.Timedelta(hours=12)] = np.nan
    t_rm[DAYS[1]: DAYS[1] + pd.Timedelta(hours=23)] = 8.0  # below 10 °C [MEM validity]
    res = tm52_assessment(t_op, t_rm, occ)
    assert res.occupied_hours_assessed == 99
    assert res.occupied_hours_missing == 1
    assert res.hours_running_mean_out_of_range == 10


# =========================================================================== input types

KINDS = ["scalar", "list", "array", "series"]


def _as_kind(kind, value, n=2):
    if kind == "scalar":
        return value
    if kind == "list":
        return [value] * n
    if kind == "array":
        return np.full(n, value)
    return pd.Series(np.full(n, value), index=pd.date_range("2025-07-01", periods=n, freq="h"))


@pytest.mark.parametrize("kind", KINDS)
def test_input_types(kind):
    # PTC docstring case: t 25, t_pma 20 -> t_cmf 24.0, 80 % 20.5-27.5; VDC EN row 2: θc 25.4
    t = _as_kind(kind, 25.0)
    a = adaptive_ashrae55(t, 20.0)
    e = adaptive_en16798(t, _as_kind(kind, 20.0))
    n = 1 if kind == "scalar" else 2
    assert isinstance(a, pd.DataFrame) and len(a) == n and len(e) == n
    assert_allclose(a["comfort_temp"], 24.0, atol=1e-9)
    assert_allclose(e["comfort_temp"], 25.4, atol=1e-9)
    op = operative_temperature(t, t, 0.1)
    band = fixed_band(t)
    if kind == "series":
        assert a.index.equals(t.index) and e.index.equals(t.index)
        assert isinstance(op, pd.Series) and op.index.equals(t.index)
        assert isinstance(band, pd.Series) and band.index.equals(t.index)
    elif kind == "scalar":
        assert np.ndim(op) == 0 and np.ndim(band) == 0
    else:
        assert isinstance(op, np.ndarray) and op.shape == (2,)
    assert_allclose(op, 25.0, atol=1e-12)
    assert np.all(~np.asarray(band))  # 25 °C is above 24 °C


def test_misaligned_series_rejected():
    a = pd.Series([25.0, 26.0], index=[0, 1])
    b = pd.Series([20.0, 20.0], index=[1, 2])
    with pytest.raises(ProjectError, match="same index"):
        adaptive_ashrae55(a, b)
    with pytest.raises(ProjectError, match="same length"):
        adaptive_en16798([25.0, 26.0], [20.0, 20.0, 20.0])


# =========================================================================== bad arguments


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: operative_temperature(25, 25, 0.1, method="mean"), "method"),
        (lambda: operative_temperature(25, 25, -0.1), "air_speed"),
        (lambda: adaptive_ashrae55(25, 20, air_speed=np.nan), "air_speed"),
        (lambda: adaptive_en16798("warm", 20), "temp_op"),
        (lambda: adaptive_en16798(np.ones((2, 2)), 20), "temp_op"),
        (lambda: adaptive_ashrae55(np.inf, 20), "temp_op"),
        (lambda: fixed_band(22, low=25, high=20), "fixed band"),
        (lambda: outdoor_band(22, low=np.nan), "outdoor band"),
        (lambda: evaluate_criteria(25, 20, 20, 20, True, fixed=(20,)), "fixed"),
        (lambda: evaluate_criteria(25, 20, 20, 20, 2), "occupied"),
        (lambda: evaluate_criteria(25, 20, 20, 20, True, fan_air_speed=-1), "fan_air_speed"),
        (lambda: criteria_summary(pd.DataFrame({"x": [True]}), [True]), "evaluated"),
        (lambda: criteria_summary(evaluate_criteria(25, 20, 20, 20, False), [False]), "occupied"),
        (lambda: tm52_assessment(np.full(3, 25.0), 20, True), "DatetimeIndex"),
        (lambda: tm52_assessment(*_tm52_inputs(), category="IV"), "category"),
        (lambda: tm52_assessment(_tm52_inputs()[0], 20.0, False), "May to September"),
    ],
)
def test_bad_arguments(call, match):
    with pytest.raises(ProjectError, match=match):
        call()


def test_criteria_summary_ok_hours_exclude_out_of_range(small_case):
    # Bookkeeping rule of the summary: an hour flagged both ok and out of range (a frame not
    # produced by evaluate_criteria) counts as out of range only.
    ev = evaluate_criteria(**small_case, fan_air_speed=0.9)
    ev.loc[ev.index[1], ["fixed_indoor_ok", "fixed_indoor_out_of_range"]] = True
    s = criteria_summary(ev, small_case["occupied"])
    assert s.loc["fixed_indoor", "ok_hours"] == 1  # 2 by hand, minus the forced hour
    assert s.loc["fixed_indoor", "out_of_range_hours"] == 2
