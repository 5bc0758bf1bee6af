"""Incremental builds: a changed input re-runs exactly the stages downstream of it.

The stage cache (calcs/cache.py) lives beside the build folders (``.stage-cache``); these tests
read which stages were executed from each build's manifest (``stages.<stage>.reused``).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from calcs.cache import STAGE_SECTIONS
from calcs.cli import main
from calcs.paths import STAGES

pytestmark = pytest.mark.slow


def _build(folder: Path, out: Path, *extra: str) -> dict:
    assert main(["build", str(folder), "--out", str(out), "--quiet", "--no-pdf", *extra]) == 0
    return json.loads((out / "manifest.json").read_text(encoding="utf-8"))


def _executed(manifest: dict) -> list[str]:
    return [s for s in STAGES if not manifest["stages"][s]["reused"]]


@pytest.fixture(scope="module")
def project(tmp_path_factory, greensboro_epw):
    import shutil

    from conftest import project_dict, toml_dumps

    epw, site = greensboro_epw
    folder = tmp_path_factory.mktemp("cache") / "project"
    (folder / "weather").mkdir(parents=True)
    shutil.copy(epw, folder / "weather" / epw.name)
    (folder / "project.toml").write_text(toml_dumps(project_dict(site, epw.name)), encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def root(project):
    """One cache shared by the tests below; the first build fills it."""
    folder = project.parent / "builds"
    first = _build(project, folder / "P01")
    assert _executed(first) == list(STAGES)
    return folder


def test_rebuilds_reuse_exactly_the_unchanged_stages(project, root):
    first = json.loads((root / "P01" / "manifest.json").read_text(encoding="utf-8"))
    again = _build(project, root / "P01")
    assert _executed(again) == []
    assert again["digest"] == first["digest"]  # the same calculation, reused stage by stage
    tariff = _build(project, root / "P01-tariff", "--set", "energy.electricity_price=0.31")
    assert _executed(tariff) == ["energy"]
    sizing = _build(project, root / "P01-sizing", "--set", "sizing.delta_t=4")
    assert _executed(sizing) == ["openings", "comfort", "energy"]
    band = _build(project, root / "P01-band", "--set", "outdoor.band_high=27")
    assert _executed(band) == list(STAGES)  # the climate stage reads it, so everything downstream runs
    report = (root / "P01-tariff" / "report.html").read_text(encoding="utf-8")
    assert "reused from the stage cache" in report


def test_cached_results_equal_a_fresh_build(project, root):
    cached = _build(project, root / "b")
    assert _executed(cached) == []
    fresh = _build(project, root / "c", "--fresh")
    assert _executed(fresh) == list(STAGES)
    assert (root / "b" / "results.json").read_bytes() == (root / "c" / "results.json").read_bytes()
    assert (root / "P01" / "results.json").read_bytes() == (root / "c" / "results.json").read_bytes()


def test_ordinary_kernels_give_the_same_build_as_forked_ones(project, root, monkeypatch):
    """Builds fork the kernels of the stages they start ahead (calcs/kernel_forks.py); started
    the usual way instead, every stage's outputs and the results are the same bytes."""
    from calcs import kernel_forks

    assert kernel_forks.enabled()  # the first build (fixture ``root``) forked its kernels
    monkeypatch.setenv(kernel_forks.ENV, "0")
    plain = _build(project, root / "plain", "--fresh")
    assert _executed(plain) == list(STAGES)
    first = json.loads((root / "P01" / "manifest.json").read_text(encoding="utf-8"))
    assert {s: plain["stages"][s]["outputs_digest"] for s in STAGES} == {
        s: first["stages"][s]["outputs_digest"] for s in STAGES}
    assert (root / "plain" / "results.json").read_bytes() == (root / "P01" / "results.json").read_bytes()


def test_a_corrupted_cache_entry_is_detected_and_rebuilt(project, root):
    design_key = json.loads((root / "P01" / "manifest.json").read_text(encoding="utf-8"))["stages"]["loads"]["key"]
    entries = [root / ".stage-cache" / "loads" / design_key]
    victim = entries[0] / "stage" / "zones.csv"
    victim.write_text(victim.read_text(encoding="utf-8").replace("4", "5", 1), encoding="utf-8")
    again = _build(project, root / "d")
    assert _executed(again) == ["loads"]  # its outputs come out identical, so later stages stay reused
    assert (root / "P01" / "results.json").read_bytes() == (root / "d" / "results.json").read_bytes()
    # the later stages' kernels were started ahead while loads ran, then told to end: their
    # notebooks are the cached ones, and nothing of the kernels that ended is left behind
    for stage in ("openings", "comfort", "energy"):
        key = again["stages"][stage]["key"]
        cached = root / ".stage-cache" / stage / key / "notebook.ipynb"
        assert (root / "d" / "notebooks" / f"{stage}.ipynb").read_bytes() == cached.read_bytes(), stage
    hidden = [p.relative_to(root / "d").as_posix() for p in (root / "d").rglob(".*")]
    assert hidden == []  # no .gates folder, no .<stage>.running.ipynb


def test_kernels_start_ahead_but_read_nothing_before_their_upstream_stages_end(project, root):
    """In a fresh build every later stage's kernel starts before the stage it waits for has ended,
    and its first cell (imports, then open_stage, which waits at the gate) ends after it."""
    from datetime import datetime

    _build(project, root / "ahead", "--fresh")

    def times(stage):
        nb = json.loads((root / "ahead" / "notebooks" / f"{stage}.ipynb").read_text(encoding="utf-8"))
        opening = next(c for c in nb["cells"] if c["cell_type"] == "code" and "open_stage(" in "".join(c["source"]))
        parse = datetime.fromisoformat
        return (parse(nb["metadata"]["papermill"]["start_time"]), parse(opening["metadata"]["papermill"]["end_time"]),
                parse(nb["metadata"]["papermill"]["end_time"]))

    t = {stage: times(stage) for stage in STAGES}
    from calcs.paths import STAGE_UPSTREAM

    for stage in STAGES[1:]:
        last_upstream_end = max(t[u][2] for u in STAGE_UPSTREAM[stage])
        assert t[stage][1] >= last_upstream_end, f"{stage} went past its gate before its upstream stages ended"
    assert t["energy"][0] < t["climate"][2]  # started ahead: its kernel was up while climate still ran


def test_changing_the_weather_reruns_everything(project, tmp_path):
    import shutil

    root = tmp_path / "builds"
    other = tmp_path / "other"
    shutil.copytree(project, other)
    _build(other, root / "a")
    epw = next((other / "weather").glob("*.epw"))
    lines = epw.read_text(encoding="latin-1").splitlines()
    fields = lines[4000].split(",")
    fields[6] = f"{float(fields[6]) + 0.1:.1f}"  # one dry-bulb value 0.1 K warmer
    lines[4000] = ",".join(fields)
    epw.write_text("\n".join(lines) + "\n", encoding="latin-1")
    again = _build(other, root / "b")
    assert _executed(again) == list(STAGES)


def test_every_stage_declares_its_sections():
    assert set(STAGE_SECTIONS) == set(STAGES)
