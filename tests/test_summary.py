"""The executive summary's logic: what it says as stages are calculated or not.

These results dicts are made up to exercise the wording and the rules (which
stage is pending, which tier the screening rule gives, which risks rank
first); they are not calculation check values. The numbers printed on a real
build's summary page are checked against its results.json in test_pdf.py.
"""

from __future__ import annotations

from calcs.present import num
from calcs.report import lookup
from calcs.summary import MARGINAL_PCT, WORTH_PCT, executive_summary

PENDING = {"status": "not yet calculated"}


def _climate(share: float) -> dict:
    return {"occupied_nv_suitable_pct": share, "monthly_occupied_nv_suitable_pct": [None, 10.0, 80.0],
            "months_can_open": ["Mar"], "occupied_above_band_pct": 4.0}


def _comfort(share: float, tm52_pass: bool = True) -> dict:
    zone = {"nv_mode_pct": share, "max_operative_C": 29.0, "tm52": {"pass": tm52_pass}}
    return {"a": zone, "b": {**zone, "nv_mode_pct": share - 10}, "building": {"nv_mode_pct": share},
            "method": {"changeover_criterion": "en16798_cat2"}}


def test_only_the_climate_stage_calculated():
    results = {"climate": _climate(40.0), "loads": PENDING, "openings": PENDING, "comfort": PENDING,
               "energy": PENDING}
    s = executive_summary(results)
    assert "outdoor air alone" in s.verdict and "40.0 %" in s.verdict
    assert "the verdict on running-cost savings waits for the energy stage" in s.verdict
    assert [p.split(":")[0] for p in s.pending] == ["Heat gains and loads", "Ventilation openings", "Comfort hours",
                                                   "Energy savings"]
    values = {f.label: f for f in s.figures}
    assert values["Occupied hours with outdoor air suitable for natural ventilation"].range == "months 10.0–80.0 %"
    assert values["Energy saving against full air-conditioning"].value == "not yet calculated"
    assert len(s.risks) <= 3 and any("energy stage" in r for r in s.risks)


def test_nothing_calculated_gives_no_verdict():
    s = executive_summary({})
    assert s.verdict.startswith("No verdict yet")
    assert len(s.pending) == 5 and s.printed == ()


def test_comfort_and_energy_keys_are_picked_up_when_present():
    energy = {"savings_pct_p10": 20.0, "savings_pct_p50": 30.0, "savings_pct_p90": 40.0,
              "simple_payback_years": 7.25, "nv_mode_pct_p10": 55.0, "nv_mode_pct_p90": 70.0}
    results = {"climate": _climate(40.0), "comfort": _comfort(62.0), "energy": energy}
    s = executive_summary(results)
    assert s.verdict.startswith("Mixed mode looks worth pursuing here")
    assert "62.0 % of occupied hours in the simulated operating year" in s.verdict
    assert "EN 16798-1 adaptive category II" in s.verdict
    assert "by 30 % (median)" in s.verdict and "7.2 years" in s.verdict  # 7.25 printed at 0.1 (round half even)
    assert not any(p.startswith(("Comfort", "Energy")) for p in s.pending)
    figures = {f.label: f for f in s.figures}
    assert figures["Energy saving against full air-conditioning (median)"].range == "P10–P90 20–40 %"
    assert figures["Occupied hours run in natural ventilation"].range.startswith("P10–P90 55.0–70.0 %")
    for printed in s.printed:
        assert lookup(results, printed.key) == printed.value
        assert printed.text.startswith(num(printed.value, printed.digits))


def test_screening_tiers_and_overrides():
    def verdict(share: float, energy: dict | None = None) -> str:
        return executive_summary({"climate": _climate(share), "comfort": _comfort(share),
                                  "energy": energy or PENDING}).verdict

    assert verdict(WORTH_PCT).startswith("Mixed mode looks worth pursuing")
    assert verdict(WORTH_PCT - 0.1).startswith("Mixed mode may be worth pursuing here, but the case is marginal")
    assert verdict(MARGINAL_PCT).startswith("Mixed mode may be worth pursuing")
    assert verdict(MARGINAL_PCT - 0.1).startswith("Mixed mode looks unlikely to be worth pursuing")
    assert verdict(80.0, {"savings_pct_p50": -1.0}).startswith("Mixed mode looks unlikely to pay here")
    assert verdict(80.0, {"savings_pct_p50": 10.0, "npv": -5.0}).startswith("Mixed mode may be worth pursuing")


def test_overheating_ranks_first_among_at_most_three_risks():
    openings = {"a": {"area_ok": False, "provided_free_area_m2": 1.0, "required_free_area_m2": 4.0,
                      "depth_ok": False, "code_share_ok": False},
                "b": {"area_ok": True, "depth_ok": True, "code_share_ok": True}}
    results = {"climate": _climate(20.0), "openings": openings, "comfort": _comfort(30.0, tm52_pass=False),
               "energy": PENDING}
    s = executive_summary(results)
    assert len(s.risks) == 3
    assert s.risks[0].startswith("Overheating without cooling: 2 of 2 zones fail CIBSE TM52")
    assert s.risks[1].startswith("Openings too small: 1 of 2 zones")
    assert "1.0 m² of free area against 4.0 m² needed" in s.risks[1]
    assert any(d.startswith("Accept larger openable areas in a") for d in s.decisions)
    assert len(s.decisions) <= 5
