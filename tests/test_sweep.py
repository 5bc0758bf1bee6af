"""Sweeps on a local process pool and on a Dask cluster give the same numbers as one process.

The oracle for the batch figures is the same calculation run in one process, column by column
independent (calcs.batch.run_variants on the whole list of variants); the local pool and a Dask
LocalCluster on this machine must reproduce it exactly, whatever the chunking.
"""

from __future__ import annotations

import dataclasses
import json
import os
import shutil

import numpy as np
import pytest
from pandas.testing import assert_frame_equal

from calcs import batch, sweep
from calcs.build import build
from calcs.errors import ProjectError
from calcs.project import load_project
from calcs.stage import read_table, run_template
from conftest import DEMO

pytestmark = pytest.mark.slow


def _square_sum(context, chunk):
    return [context * x * x for x in chunk]


def test_map_chunks_keeps_order_and_context_on_every_runner():
    chunks = [[1, 2], [3], [4, 5, 6], [7]]
    want = [[3 * x * x for x in c] for c in chunks]
    assert sweep.map_chunks(_square_sum, chunks, context=3, jobs=1) == want
    assert sweep.map_chunks(_square_sum, chunks, context=3, jobs=2) == want
    pytest.importorskip("dask.distributed")
    assert sweep.map_chunks(_square_sum, chunks, context=3, scheduler=sweep.LOCAL_CLUSTER, jobs=2) == want


@pytest.mark.parametrize("scheduler", ["nowhere", "tcp//x", "http:/bad"])
def test_bad_scheduler_is_one_clear_error(scheduler):
    with pytest.raises(ProjectError, match="not a scheduler address; allowed"):
        sweep.map_chunks(_square_sum, [[1]], scheduler=scheduler)


def test_unreachable_scheduler_is_one_clear_error():
    pytest.importorskip("dask.distributed")
    with pytest.raises(ProjectError, match="cannot connect to a Dask scheduler"):
        sweep.map_chunks(_square_sum, [[1]], scheduler="tcp://127.0.0.1:9")


def test_environment_passes_scheduler_and_jobs(monkeypatch):
    monkeypatch.setenv(sweep.SCHEDULER_ENV, "")
    monkeypatch.setenv(sweep.JOBS_ENV, "")
    assert sweep.from_environment() == (None, None)
    monkeypatch.setenv(sweep.SCHEDULER_ENV, "local-cluster")
    monkeypatch.setenv(sweep.JOBS_ENV, "3")
    assert sweep.from_environment() == ("local-cluster", 3)
    monkeypatch.setenv(sweep.JOBS_ENV, "many")
    with pytest.raises(ProjectError, match="FREERUN_JOBS"):
        sweep.from_environment()


@pytest.fixture(scope="module")
def demo_build(tmp_path_factory):
    before = os.getcwd()
    folder = build(DEMO, tmp_path_factory.mktemp("sweep") / "P01", pdf=False).folder
    # stages run in threads side by side: none may change the process's working folder
    assert os.getcwd() == before
    return folder


def _inputs(folder):
    project = load_project(folder / "inputs" / "project.resolved.json")
    return batch.StageInputs(
        project, read_table(folder / "climate" / "hourly.csv"), read_table(folder / "loads" / "hourly_gains.csv"),
        json.loads((folder / "loads" / "results.json").read_text())["loads"],
        read_table(folder / "openings" / "zones.csv", index_col="zone"))


VARIANTS = [{}, {"gains_scale": 1.2}, {"area_scale": 0.7, "price_scale": 1.1}, {"mass_class": "heavy"},
            {"fans": True}, {"seer_scale": 0.8}, {"end_shift": 1}, {"solar_scale": 1.3, "criterion": "ashrae55_80"}]


def test_sweep_equals_one_batch_in_one_process_for_any_chunking(demo_build):
    inputs = _inputs(demo_build)
    b, modes, _, acc = batch.run_variants(inputs, VARIANTS)
    whole = batch.variant_totals(b, modes, acc)
    whole.index.name = "variant"
    one_per_chunk = batch.sweep_totals(inputs, VARIANTS, jobs=1, chunk_columns=1)
    assert_frame_equal(one_per_chunk, whole, rtol=1e-12, atol=1e-9)
    assert (whole["baseline_kWh"] > whole["mixed_kWh"]).all()
    # a cheaper tariff changes the cost, not the energy
    assert whole.loc[2, "baseline_cost"] != whole.loc[0, "baseline_cost"]


def test_process_pool_and_dask_give_the_same_numbers_as_one_process(demo_build):
    inputs = _inputs(demo_build)
    local = batch.sweep_totals(inputs, VARIANTS, jobs=1, chunk_columns=6)
    pool = batch.sweep_totals(inputs, VARIANTS, jobs=2, chunk_columns=6)
    assert_frame_equal(pool, local, check_exact=True)
    pytest.importorskip("dask.distributed")
    dask = batch.sweep_totals(inputs, VARIANTS, scheduler=sweep.LOCAL_CLUSTER, jobs=2, chunk_columns=6)
    assert_frame_equal(dask, local, check_exact=True)


def test_energy_stage_on_a_dask_cluster_writes_the_same_results(demo_build, tmp_path, monkeypatch):
    """The whole energy template, its batches on a Dask LocalCluster, against the default build."""
    pytest.importorskip("dask.distributed")
    copy = tmp_path / "P01"
    shutil.copytree(demo_build, copy)
    shutil.rmtree(copy / "energy")
    monkeypatch.setenv(sweep.SCHEDULER_ENV, sweep.LOCAL_CLUSTER)
    monkeypatch.setenv(sweep.JOBS_ENV, "2")
    run_template("energy", copy / "inputs" / "project.resolved.json", copy)
    for name in ("results.json", "monte_carlo.csv", "sensitivity.csv", "zones.csv", "monthly.csv"):
        assert (copy / "energy" / name).read_bytes() == (demo_build / "energy" / name).read_bytes(), name
    assert json.loads((demo_build / "manifest.json").read_text())["batches_ran_on"].startswith("local process pool")
    assert os.environ[sweep.SCHEDULER_ENV] == sweep.LOCAL_CLUSTER  # the test's own setting, restored after


def test_build_refuses_a_bad_scheduler_before_writing_anything(tmp_path):
    with pytest.raises(ProjectError, match="not a scheduler address"):
        build(DEMO, tmp_path / "P01", scheduler="not an address")
    assert not (tmp_path / "P01").exists()
    with pytest.raises(ProjectError, match="--jobs"):
        build(DEMO, tmp_path / "P01", jobs=0)


def test_store_reprices_a_tariff_change_and_recomputes_a_damaged_entry(demo_build, tmp_path):
    inputs = _inputs(demo_build)
    store = sweep.SweepStore(tmp_path / "sweeps")
    first = batch.sweep_totals(inputs, VARIANTS, jobs=1, store=store)
    assert store.reused == 0 and len(list((tmp_path / "sweeps").glob("*.parquet"))) == 1
    # a new tariff: the same key, the stored table re-priced, equal to a run without the store
    dear = dataclasses.replace(inputs, project=inputs.project.model_copy(
        update={"energy": inputs.project.energy.model_copy(update={"electricity_price": 0.4, "gas_carbon": 0.25})}))
    assert batch.sweep_key(dear, VARIANTS) == batch.sweep_key(inputs, VARIANTS)
    repriced = batch.sweep_totals(dear, VARIANTS, jobs=1, store=store)
    assert store.reused == 1
    assert_frame_equal(repriced, batch.sweep_totals(dear, VARIANTS, jobs=1), check_exact=True)
    assert (repriced["baseline_cost"] > first["baseline_cost"]).all()
    assert_frame_equal(repriced[["baseline_kWh", "mixed_kWh", "nv_mode_pct"]],
                       first[["baseline_kWh", "mixed_kWh", "nv_mode_pct"]], check_exact=True)
    # a change the simulation sees gets its own key
    efficient = dataclasses.replace(inputs, project=inputs.project.model_copy(
        update={"energy": inputs.project.energy.model_copy(update={"cooling_seer": 5.0})}))
    assert batch.sweep_key(efficient, VARIANTS) != batch.sweep_key(inputs, VARIANTS)
    # a damaged entry is found by its digest, removed and recomputed
    entry = next((tmp_path / "sweeps").glob("*.parquet"))
    entry.write_bytes(entry.read_bytes()[:-10] + b"0123456789")
    again = batch.sweep_totals(inputs, VARIANTS, jobs=1, store=store)
    assert store.reused == 1  # not reused this time
    assert_frame_equal(again, first, check_exact=True)


def test_design_years_from_the_store_are_the_simulated_ones_to_the_last_bit(demo_build, tmp_path):
    """A tariff rebuild prices the design case's stored years instead of simulating them
    (batch.design_run); everything computed from them must be what the simulation gives."""
    inputs = _inputs(demo_build)
    b0, modes0, years0, acc0 = batch.run_variants(inputs, [{}])
    store = sweep.SweepStore(tmp_path / "sweeps")
    runs = [batch.design_run(inputs, store), batch.design_run(inputs, store)]
    assert store.reused == 2  # the second run read both tables of the first
    for b, modes, years, acc in runs:
        assert np.array_equal(modes, modes0)
        assert np.array_equal(years.mechanical_flow, years0.mechanical_flow)
        for scheme in ("baseline", "mixed"):
            for name in batch._HOURLY_FIELDS + batch._ZONE_FIELDS:
                got, want = getattr(getattr(years, scheme), name), getattr(getattr(years0, scheme), name)
                assert (got is None) == (want is None), (scheme, name)
                if want is not None:  # same values, dtype and layout (sums run in the same order)
                    assert np.array_equal(got, want) and got.dtype == want.dtype, (scheme, name)
                    assert got.flags["C_CONTIGUOUS"] == want.flags["C_CONTIGUOUS"], (scheme, name)
        assert_frame_equal(batch.variant_totals(b, modes, acc), batch.variant_totals(b0, modes0, acc0),
                           check_exact=True)
    # a damaged entry is recomputed, not read
    entry = next((tmp_path / "sweeps").glob("*-design-hours.parquet"))
    entry.write_bytes(entry.read_bytes()[:-10] + b"0123456789")
    again = batch.design_run(inputs, store)
    assert store.reused == 3  # the zones table was still good; the hours table was not
    assert np.array_equal(again[2].mixed.temp_op, years0.mixed.temp_op)


def test_tariff_rebuild_reprices_and_equals_a_fresh_build(demo_build, tmp_path):
    """A tariff-only rebuild next to the cold build reuses the stored sweep; the numbers equal a fresh build."""
    override = ["energy.electricity_price=0.31"]
    quick = build(DEMO, demo_build.parent / "P01-tariff", pdf=False, overrides=override)
    assert [s for s, r in quick.manifest["stages"].items() if not r["reused"]] == ["energy"]
    notebook = (quick.folder / "notebooks" / "energy.ipynb").read_text(encoding="utf-8")
    assert "reused from the sweep store" in notebook
    fresh = build(DEMO, tmp_path / "P01-tariff", pdf=False, overrides=override, fresh=True)
    for name in ("results.json", "monte_carlo.csv", "sensitivity.csv", "zones.csv"):
        assert (quick.folder / "energy" / name).read_bytes() == (fresh.folder / "energy" / name).read_bytes(), name


def _double(context, chunk):
    return context * chunk


def _children():
    import psutil

    return [p for p in psutil.Process().children(recursive=True) if p.is_running() and p.status() != "zombie"]


def test_pre_started_workers_run_the_map_and_leave_no_process_behind():
    """Started from a thread (as in a notebook kernel, which has threads: the forkserver path)."""
    import threading

    holder = threading.Event()
    threading.Thread(target=holder.wait, daemon=True).start()
    try:
        with sweep.LocalWorkers(2, preload=["calcs.batch"]) as workers:
            assert workers.map(_double, [1, 2, 3], 10) == [10, 20, 30]
            assert workers.map(_double, ["a"], 2) == ["aa"]  # a second map sends its own context
        assert _children() == []  # a kernel's shutdown would otherwise wait for them
        unused = sweep.LocalWorkers(2, preload=["calcs.batch"])
        unused.close()  # a stage that found its sweep in the store never maps
        unused.close()  # idempotent
        assert _children() == []
    finally:
        holder.set()


def test_start_workers_has_nothing_to_start_for_dask_or_one_job():
    assert sweep.start_workers("local-cluster", None) is None
    assert sweep.start_workers(None, 1) is None
    with pytest.raises(ProjectError, match="--jobs"):
        sweep.start_workers(None, 0)
