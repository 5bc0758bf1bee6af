"""End-to-end builds with the real command: report content, results, audit files, failures.

The climate numbers are checked against independent pandas computations on
public data (pvlib's Greensboro NC TMY3 file, NREL), not against the invented demo.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import html
import json
import re
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from calcs.cli import EXIT_STAGE_FAILED, main
from calcs.paths import TEMPLATES_ENV, templates_dir
from conftest import DEMO, toml_dumps
from public_data import tmy3_frame

pytestmark = pytest.mark.slow

CLIMATE_KEYS = ("hours", "annual_mean_C", "monthly_mean_C", "occupied_hours", "band_C",
                "occupied_in_band_pct", "occupied_nv_suitable_pct")


def _build(args, capsys) -> tuple[int, str, str]:
    code = main(["build", *args, "--quiet"])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


@pytest.fixture(scope="module")
def demo_build(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("demo") / "P01"
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    return out


def _text(page: str) -> str:
    """Visible text of the report, tags stripped, entities decoded, spaces collapsed."""
    return re.sub(r"\s+", " ", html.unescape(re.sub(r"<[^>]+>", " ", page)))


def test_demo_report_sections_and_cautions(demo_build):
    page = (demo_build / "report.html").read_text(encoding="utf-8")
    text = _text(page)
    for heading in ("Contents", "Important notes on this estimate", "1. Climate", "2. Heat gains and loads",
                    "3. Ventilation openings", "4. Comfort hours", "5. Energy savings", "Decision log",
                    "Audit appendix", "The year at a glance", "Monthly climate"):
        assert heading in text, heading
    for caution in ("not a compliance assessment", "fire and smoke", "security", "acoustics",
                    "outdoor air quality", "licensed or chartered engineer", "building codes"):
        assert caution in text, caution
    assert "Status: DRAFT" in text
    assert "invented" in text  # the demo says it is invented
    assert "Not yet calculated." not in text  # every stage calculates


def test_demo_report_is_self_contained(demo_build):
    page = (demo_build / "report.html").read_text(encoding="utf-8")
    assert "<script" not in page.lower()
    assert not re.search(r"""(src|href)\s*=\s*["']?https?:""", page, re.I)
    assert "<link" not in page.lower()
    assert page.count('src="data:image/png;base64,') == 13  # climate 3, loads 2, openings 2, comfort 3, energy 3
    assert "Traceback" not in page and "stderr" not in page


def test_demo_results_keys_and_report_numbers(demo_build):
    results = json.loads((demo_build / "results.json").read_text(encoding="utf-8"))
    climate = results["climate"]
    for key in CLIMATE_KEYS:
        assert key in climate, key
    assert climate["hours"] == 8760
    assert len(climate["monthly_mean_C"]) == 12
    assert climate["band_C"] == [16.0, 26.0]
    assert 0 <= climate["occupied_nv_suitable_pct"] <= climate["occupied_in_band_pct"] <= 100
    text = _text((demo_build / "report.html").read_text(encoding="utf-8"))
    assert f"{climate['occupied_nv_suitable_pct']:.1f} % of the {climate['occupied_hours']:,} occupied hours" in text
    assert f"{climate['occupied_in_band_pct']:.1f} % of occupied hours have an outdoor dry bulb" in text
    assert f"Annual mean dry bulb {climate['annual_mean_C']:.1f} °C" in text
    # the decision log prints the results it relied on
    assert f"climate.occupied_in_band_pct = {climate['occupied_in_band_pct']:,.1f}" in text


def test_demo_build_folder_holds_the_calculation_record(demo_build):
    for stage in ("climate", "loads", "openings", "comfort", "energy"):
        assert (demo_build / "notebooks" / f"{stage}.ipynb").is_file()
        assert (demo_build / stage / "results.json").is_file()
    for table in ("hourly", "daily", "monthly"):
        assert (demo_build / "climate" / f"{table}.csv").is_file()
    hourly = pd.read_csv(demo_build / "climate" / "hourly.csv")
    assert len(hourly) == 8760
    manifest = json.loads((demo_build / "manifest.json").read_text(encoding="utf-8"))
    for key in ("inputs_sha256", "results_sha256", "digest", "tool_version", "overrides"):
        assert key in manifest
    epw = DEMO / "weather" / "port_merrow_invented.epw"
    assert manifest["inputs_sha256"]["weather/port_merrow_invented.epw"] == hashlib.sha256(epw.read_bytes()).hexdigest()
    assert manifest["inputs_sha256"]["project.toml"] == hashlib.sha256((DEMO / "project.toml").read_bytes()).hexdigest()
    results = (demo_build / "results.json").read_bytes()
    assert manifest["results_sha256"] == hashlib.sha256(results).hexdigest()
    text = _text((demo_build / "report.html").read_text(encoding="utf-8"))
    assert manifest["inputs_sha256"]["project.toml"] in text  # audit appendix lists input digests
    assert "outdoor.band_low" in text  # every parameter as used


# ------------------------------------------------------------------ public data, escaping, determinism


def _independent_climate(year: int = 2026) -> dict[str, object]:
    """Climate figures from pvlib's own reading of the TMY3 file, computed with pandas only."""
    frame, _ = tmy3_frame("723170TYA.CSV", year=year)
    t = frame["temp_air"]
    holidays = {dt.date(year, 1, 1), dt.date(year, 12, 25)}
    idx = frame.index
    occupied = (idx.day_of_week < 5) & (idx.hour >= 8) & (idx.hour < 18) & ~pd.Index(idx.date).isin(holidays)
    in_band = (t >= 16.0) & (t <= 26.0)
    rain = frame["rain"].fillna(0.0)
    suitable = in_band & (frame["temp_dew"] <= 17.0) & (frame["wind_speed"] <= 10.0) & (rain <= 0.5)
    return {
        "annual_mean_C": t.mean(),
        "monthly_mean_C": t.groupby(idx.month).mean().to_numpy(),
        "occupied_hours": int(occupied.sum()),
        "occupied_in_band_pct": 100 * in_band[occupied].mean(),
        "occupied_nv_suitable_pct": 100 * suitable[occupied].mean(),
    }


@pytest.fixture(scope="module")
def public_builds(tmp_path_factory, greensboro_epw):
    """Two builds of one project on public weather, with markup in its text, plus a check run."""
    from conftest import project_dict

    epw, site = greensboro_epw
    root = tmp_path_factory.mktemp("public")
    folder = root / "project"
    (folder / "weather").mkdir(parents=True)
    shutil.copy(epw, folder / "weather" / epw.name)
    data = project_dict(site, epw.name)
    data["project"]["title"] = "<script>alert('x')</script> Tower & Annex"
    data["zones"][0]["name"] = "<b>north</b>"
    (folder / "project.toml").write_text(toml_dumps(data), encoding="utf-8")
    original = (folder / "project.toml").read_bytes()
    a, b, check = root / "a", root / "b", root / "check"
    assert main(["build", str(folder), "--out", str(a), "--quiet"]) == 0
    assert main(["build", str(folder), "--out", str(b), "--quiet"]) == 0
    assert main(["build", str(folder), "--out", str(check), "--quiet", "--set", "outdoor.band_high=28"]) == 0
    assert (folder / "project.toml").read_bytes() == original, "a check run never alters the project file"
    return {"a": a, "b": b, "check": check}


def test_climate_results_match_independent_pandas_on_public_data(public_builds):
    climate = json.loads((public_builds["a"] / "results.json").read_text(encoding="utf-8"))["climate"]
    expected = _independent_climate()
    assert climate["occupied_hours"] == expected["occupied_hours"]
    # EPW stores dry bulb to 0.1 °C: means agree to well within the written precision
    assert_allclose(climate["annual_mean_C"], expected["annual_mean_C"], atol=0.01)
    assert_allclose(climate["monthly_mean_C"], expected["monthly_mean_C"], atol=0.01)
    assert_allclose(climate["occupied_in_band_pct"], expected["occupied_in_band_pct"], atol=1e-9)
    assert_allclose(climate["occupied_nv_suitable_pct"], expected["occupied_nv_suitable_pct"], atol=1e-9)


def test_project_text_is_escaped(public_builds):
    page = (public_builds["a"] / "report.html").read_text(encoding="utf-8")
    assert "<script" not in page.lower()
    assert "&lt;script&gt;alert(" in page
    assert "<b>north</b>" not in page
    assert "&lt;b&gt;north&lt;/b&gt;" in page


def test_two_builds_are_byte_identical(public_builds):
    a, b = public_builds["a"], public_builds["b"]
    assert (a / "results.json").read_bytes() == (b / "results.json").read_bytes()
    for table in sorted((a / "climate").glob("*.csv")):
        assert table.read_bytes() == (b / "climate" / table.name).read_bytes(), table.name
    digest = [json.loads((p / "manifest.json").read_text(encoding="utf-8"))["digest"] for p in (a, b)]
    assert digest[0] == digest[1]
    assert str(a) not in (a / "results.json").read_text(encoding="utf-8")


def test_check_run_records_overrides(public_builds):
    check = public_builds["check"]
    manifest = json.loads((check / "manifest.json").read_text(encoding="utf-8"))
    assert manifest["overrides"] == ["outdoor.band_high=28"]
    results = json.loads((check / "results.json").read_text(encoding="utf-8"))
    assert results["climate"]["band_C"] == [16.0, 28.0]
    text = _text((check / "report.html").read_text(encoding="utf-8"))
    assert "CHECK RUN with overrides: outdoor.band_high=28" in text
    resolved = json.loads((check / "inputs" / "project.resolved.json").read_text(encoding="utf-8"))
    assert resolved["outdoor"]["band_high"] == 28


# ------------------------------------------------------------------ a failing stage


def _build_helpers(since: float) -> list[str]:
    """Processes a build started that are still running: the kernel fork server, kernels forked
    from it (a fork keeps the server's command line), the chart renderer and the PDF helper."""
    import time

    import psutil

    deadline = time.monotonic() + 10  # papermill's kill and the helpers' own exit take a moment
    while True:
        left = []
        for proc in psutil.process_iter(["cmdline", "create_time", "status"]):
            line = " ".join(proc.info["cmdline"] or [])
            if (any(m in line for m in ("calcs.kernel_forks", "calcs.chart_renderer", "calcs.pdf_parts"))
                    and proc.info["create_time"] >= since
                    and proc.info["status"] != psutil.STATUS_ZOMBIE):
                left.append(line)
        if not left or time.monotonic() > deadline:
            return left
        time.sleep(0.1)


def test_failing_stage_keeps_previous_report(make_project, tmp_path, capsys, monkeypatch):
    import time

    since = time.time() - 1
    folder = make_project()
    out = tmp_path / "build" / "P01"
    code, _, err = _build([str(folder), "--out", str(out)], capsys)
    assert code == 0, err
    assert _build_helpers(since) == []  # forked kernels, their server and the chart renderer have all ended
    before = {p.name: p.read_bytes() for p in (out / "report.html", out / "results.json")}

    broken = tmp_path / "templates"
    shutil.copytree(templates_dir(), broken)
    nb = json.loads((broken / "loads.ipynb").read_text(encoding="utf-8"))
    nb["cells"].append({"cell_type": "code", "id": "deliberate-failure", "metadata": {}, "outputs": [], "execution_count": None,
                        "source": "raise RuntimeError('deliberate failure for the test')"})
    (broken / "loads.ipynb").write_text(json.dumps(nb), encoding="utf-8")
    monkeypatch.setenv(TEMPLATES_ENV, str(broken))

    code, _, err = _build([str(folder), "--out", str(out)], capsys)
    assert code == EXIT_STAGE_FAILED
    assert "stage 'loads' failed in cell" in err and "deliberate failure for the test" in err
    assert "Traceback" not in err
    assert {p.name: p.read_bytes() for p in (out / "report.html", out / "results.json")} == before
    failed = tmp_path / "build" / "P01.failed" / "notebooks" / "loads.ipynb"
    assert failed.is_file(), "the partly executed notebook is kept for inspection"
    assert "deliberate failure" in failed.read_text(encoding="utf-8")
    leftovers = [p.name for p in (tmp_path / "build").iterdir() if p.name.startswith(".") and p.name != ".stage-cache"]
    assert leftovers == []  # no partial build folder is left behind (the stage cache is meant to stay)
    assert _build_helpers(since) == []  # also when a stage failed and the kernels at their gates were sent home


def test_a_kernel_that_dies_before_answering_is_started_again(make_project, tmp_path, capsys, monkeypatch):
    """jupyter_client's "Kernel died before replying to kernel_info" (a kernel that could not bind
    the port picked for it): no cell ran, so the stage starts another kernel; any other failure
    to start, or a third death, is the stage's failure as before."""
    import papermill

    from calcs import stage as stage_module

    real = papermill.execute_notebook
    deaths = {"climate": 1, "openings": 2}  # climate runs at once; openings' kernel is started ahead

    def flaky(template, out, **kwargs):
        name = Path(template).stem
        if deaths.get(name, 0) > 0:
            deaths[name] -= 1
            raise RuntimeError(stage_module.KERNEL_DIED_AT_START)
        return real(template, out, **kwargs)

    monkeypatch.setattr(papermill, "execute_notebook", flaky)
    folder = make_project()
    out = tmp_path / "build" / "P01"
    code, _, err = _build([str(folder), "--out", str(out), "--no-pdf"], capsys)
    assert code == 0, err
    assert deaths == {"climate": 0, "openings": 0}
    assert json.loads((out / "manifest.json").read_text(encoding="utf-8"))["stages"]["climate"]["reused"] is False

    deaths["climate"] = stage_module.KERNEL_STARTS  # dies every time: the stage fails, in one line
    code, _, err = _build([str(folder), "--out", str(tmp_path / "build" / "P02"), "--no-pdf", "--fresh"], capsys)
    assert code == EXIT_STAGE_FAILED and "Kernel died before replying" in err and "Traceback" not in err


def test_default_output_folder(make_project, tmp_path, capsys, monkeypatch):
    folder = make_project()
    monkeypatch.chdir(tmp_path)
    code, out, err = _build([str(folder)], capsys)
    assert code == 0, err
    assert (tmp_path / "build" / "TEST-1" / "P01" / "report.html").is_file()
    assert out.strip().endswith("build/TEST-1/P01/report.html")
    assert np.isfinite(json.loads((tmp_path / "build" / "TEST-1" / "P01" / "results.json").read_text())["climate"]
                       ["annual_mean_C"])


def test_loads_and_openings_results_against_published_rates(public_builds):
    """Defaults of a zone without façades: ASHRAE people gains and ASHRAE 62.1 office rates, by hand."""
    results = json.loads((public_builds["a"] / "results.json").read_text(encoding="utf-8"))
    n_occ = results["climate"]["occupied_hours"]
    n_out = results["climate"]["hours"] - n_occ
    for zone, area in (("<b>north</b>", 400.0), ("south", 200.0)):
        loads, openings = results["loads"][zone], results["openings"][zone]
        people = area / 10.0  # 10 m² per person (default density)
        # ASHRAE Fundamentals ch.18 Table 1: 70 W sensible per person, seated very light work;
        # lighting 8 W/m² (0.05 out of hours), equipment 15 W/m² (0.2 out of hours)
        expected = (70 * people * n_occ + 8 * area * (n_occ + 0.05 * n_out) + 15 * area * (n_occ + 0.2 * n_out)) / 1000
        assert_allclose(loads["annual_internal_gains_kWh"], expected, rtol=1e-9)
        assert loads["annual_solar_gains_kWh"] == 0.0  # no façades given
        # ASHRAE 62.1 Table 6.2.2.1 office: 2.5 L/s per person + 0.3 L/s per m²
        assert_allclose(openings["fresh_air_L_s"], 2.5 * people + 0.3 * area, rtol=1e-12)
        # steady CO2 rise: 0.0052 L/s per person / fresh air per person
        assert_allclose(openings["co2_rise_ppm"], 0.0052 / ((2.5 * people + 0.3 * area) / people) * 1e6, rtol=1e-9)
        assert openings["provided_free_area_m2"] == 0.0 and openings["area_ok"] is False
        assert openings["free_area_pct_floor"] == 0.0
        # default plan depth 6 m, single-sided limit 2 × 2.8 m = 5.6 m (CIBSE AM10 [MEM]): fails
        assert openings["depth_ok"] is False


def test_demo_loads_and_openings_keys_and_report(demo_build):
    results = json.loads((demo_build / "results.json").read_text(encoding="utf-8"))
    text = _text((demo_build / "report.html").read_text(encoding="utf-8"))
    for zone in ("Level 1 north", "Level 1 south", "Level 2 open plan"):
        for key in ("peak_sensible_W", "annual_internal_gains_kWh", "annual_solar_gains_kWh"):
            assert isinstance(results["loads"][zone][key], float), (zone, key)
        for key in ("fresh_air_L_s", "required_free_area_m2", "provided_free_area_m2", "free_area_pct_floor"):
            assert isinstance(results["openings"][zone][key], float), (zone, key)
        assert isinstance(results["openings"][zone]["depth_ok"], bool)
        assert results["loads"][zone]["annual_solar_gains_kWh"] > 0
        assert f"{results['openings'][zone]['provided_free_area_m2']:.1f}" in text
    # the demo's north zone: 6.5 m deep, single-sided, 2.9 m ceiling: 6.5 > 2 × 2.9 (CIBSE AM10 [MEM])
    assert results["openings"]["Level 1 north"]["depth_ok"] is False
    assert "Heat gains and loads" in text and "Airflow needed and free area" in text
    assert "Openings are more than airflow" in text


CRITERIA = ("outdoor_band", "fixed_indoor", "ashrae55_80", "ashrae55_90", "ashrae55_80_fans",
            "en16798_cat1", "en16798_cat2", "en16798_cat3")


def test_demo_comfort_keys_and_ladder_in_report(demo_build):
    results = json.loads((demo_build / "results.json").read_text(encoding="utf-8"))["comfort"]
    text = _text((demo_build / "report.html").read_text(encoding="utf-8"))
    for zone in ("Level 1 north", "Level 1 south", "Level 2 open plan", "building"):
        for criterion in CRITERIA:
            entry = results[zone][criterion]
            assert 0 <= entry["ok_pct"] <= 100 and 0 <= entry["out_of_range_pct"] <= 100
            assert entry["ok_pct"] + entry["out_of_range_pct"] <= 100 + 1e-9
        tm52 = results[zone]["tm52"]
        for key in ("pass", "hours_exceedance_pct", "max_daily_weighted_exceedance", "max_delta_t"):
            assert key in tm52
        assert isinstance(results[zone]["max_operative_C"], float)
        assert 0 <= results[zone]["nv_mode_pct"] <= 100
    for criterion in CRITERIA:
        assert f"{results['building'][criterion]['ok_pct']:.1f}" in text
    assert "The assumption ladder" in text and "CIBSE TM52" in text
    assert f"{results['building']['nv_mode_pct']:.1f} % of occupied hours" in text
    assert results["method"]["unconverged_hours"] == 0


def test_demo_ashrae55_shares_recomputed_from_the_published_equation(demo_build):
    """ASHRAE 55-2020 §5.4: acceptable (80 %) when 0.31·t_pma + 14.3 ≤ t_o ≤ 0.31·t_pma + 21.3, 10 ≤ t_pma ≤ 33.5."""
    results = json.loads((demo_build / "results.json").read_text(encoding="utf-8"))["comfort"]
    climate = pd.read_csv(demo_build / "climate" / "hourly.csv", index_col="time")
    hourly = pd.read_csv(demo_build / "comfort" / "hourly.csv", index_col="time")
    pm = climate["prevailing_mean_ashrae55_C"]
    occupied = climate["occupied"].astype(bool)
    for zone, rows in hourly.groupby("zone"):
        top = rows["temp_op_C"]
        ok = (pm >= 10) & (pm <= 33.5) & (top >= 0.31 * pm + 14.3) & (top <= 0.31 * pm + 21.3)
        assert_allclose(results[zone]["ashrae55_80"]["ok_pct"], 100 * ok[occupied].mean(), atol=1e-9)
        assert_allclose(results[zone]["max_operative_C"], top[occupied].max(), atol=1e-9)
        nv = (rows["mode"] == "natural ventilation")[occupied.to_numpy()]
        assert_allclose(results[zone]["nv_mode_pct"], 100 * nv.mean(), atol=1e-9)


ENERGY_KEYS = ("baseline_kWh", "mixed_mode_kWh", "savings_kWh", "savings_pct", "savings_cost_per_year",
               "savings_co2_kg_per_year", "extra_capital_cost", "simple_payback_years", "npv", "savings_pct_p10",
               "savings_pct_p50", "savings_pct_p90", "nv_mode_pct_p10", "nv_mode_pct_p90")


def test_demo_energy_keys_report_and_tornado_signs(demo_build):
    results = json.loads((demo_build / "results.json").read_text(encoding="utf-8"))["energy"]
    for key in ENERGY_KEYS:
        assert key in results, key
    for zone in ("Level 1 north", "Level 1 south", "Level 2 open plan"):
        for key in ("baseline_kWh", "mixed_mode_kWh", "savings_kWh", "savings_pct", "savings_cost_per_year"):
            assert key in results["zones"][zone]
    assert_allclose(results["savings_kWh"], results["baseline_kWh"] - results["mixed_mode_kWh"], rtol=1e-12)
    assert_allclose(sum(z["baseline_kWh"] for z in results["zones"].values()), results["baseline_kWh"], rtol=1e-9)
    assert results["savings_pct_p10"] <= results["savings_pct_p50"] <= results["savings_pct_p90"]
    # payback and NPV by their definitions from the same numbers
    assert_allclose(results["simple_payback_years"], results["extra_capital_cost"] / results["savings_cost_per_year"],
                    rtol=1e-9)
    text = _text((demo_build / "report.html").read_text(encoding="utf-8"))
    assert f"{results['savings_pct']:.1f} %" in text
    assert f"{results['savings_pct_p10']:.1f} %" in text and f"{results['savings_pct_p90']:.1f} %" in text
    assert "Which assumptions move the answer" in text and "How sure is the answer" in text
    # physically sensible directions of the one-at-a-time swings (natural-ventilation hours)
    sens = results["sensitivity"]
    assert sens["Internal gains ±20 %"]["nv_mode_pct_high"] < sens["Internal gains ±20 %"]["nv_mode_pct_low"]
    assert sens["Openable area ±30 %"]["nv_mode_pct_high"] > sens["Openable area ±30 %"]["nv_mode_pct_low"]
    assert sens["Ceiling fans off / on"]["nv_mode_pct_high"] >= sens["Ceiling fans off / on"]["nv_mode_pct_low"]
    crit = sens["Comfort criterion: EN 16798-1 cat. III / cat. I"]
    assert crit["nv_mode_pct_high"] < crit["nv_mode_pct_low"]  # category I is stricter than III
    shade = sens["Solar gains (shading) ±30 %"]
    assert shade["nv_mode_pct_high"] <= shade["nv_mode_pct_low"]
    price = sens["Energy prices ±20 %"]
    assert price["high"] > 0 > price["low"]  # dearer energy, larger money saving


def test_monte_carlo_collapses_to_the_design_case(make_project, tmp_path, capsys):
    """With every spread zero, each sample is the design case: P10 = P50 = P90 = the deterministic saving."""
    folder = make_project()
    out = tmp_path / "zero-spread"
    spreads = ["gains_spread", "solar_spread", "openable_area_spread", "seer_spread", "price_spread"]
    args = [str(folder), "--out", str(out)] + [x for k in spreads for x in ("--set", f"uncertainty.{k}=0")]
    code, _, err = _build(args, capsys)
    assert code == 0, err
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))["energy"]
    for q in ("p10", "p50", "p90"):
        assert_allclose(results[f"savings_pct_{q}"], results["savings_pct"], atol=1e-9)
    assert_allclose(results["nv_mode_pct_p10"], results["nv_mode_pct_p90"], atol=1e-9)
