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


def test_a_corrupted_cache_entry_is_detected_and_rebuilt(project, root):
    design_key = json.loads((root / "P01" / "manifest.json").read_text(encoding="utf-8"))["stages"]["loads"]["key"]
    entries = [root / ".stage-cache" / "loads" / design_key]
    victim = entries[0] / "stage" / "zones.csv"
    victim.write_text(victim.read_text(encoding="utf-8").replace("4", "5", 1), encoding="utf-8")
    again = _build(project, root / "d")
    assert _executed(again) == ["loads"]  # its outputs come out identical, so later stages stay reused
    assert (root / "P01" / "results.json").read_bytes() == (root / "d" / "results.json").read_bytes()


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
