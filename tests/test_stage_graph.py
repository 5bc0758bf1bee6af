"""The stage dependency graph and the background chart rendering (machinery, no numbers).

What is checked here is internal consistency of the build machinery: a stage may read only the
stages it declares, the graph has no cycle and follows the report order, and a chart that fails
to render fails its stage instead of leaving a placeholder in the report.
"""

from __future__ import annotations

import altair as alt
import pandas as pd
import pytest

from calcs import charts
from calcs.errors import StageError
from calcs.paths import STAGE_UPSTREAM, STAGES
from calcs.stage import open_stage
from conftest import DEMO


def test_graph_covers_every_stage_and_points_backwards():
    assert set(STAGE_UPSTREAM) == set(STAGES)
    for stage, upstream in STAGE_UPSTREAM.items():
        assert all(STAGES.index(u) < STAGES.index(stage) for u in upstream), stage
    # comfort and energy need the same three stages and not each other: they can run together
    assert "comfort" not in STAGE_UPSTREAM["energy"] and "energy" not in STAGE_UPSTREAM["comfort"]


def test_a_stage_may_not_read_a_stage_it_does_not_depend_on(tmp_path):
    st = open_stage("energy", DEMO / "project.toml", tmp_path)
    with pytest.raises(StageError, match="may only read the stages it depends on"):
        st.upstream("comfort")
    with pytest.raises(StageError, match="not 'energy'"):
        open_stage("climate", DEMO / "project.toml", tmp_path).upstream("energy")


def test_background_chart_is_written_and_a_failing_one_raises(tmp_path, monkeypatch):
    chart = alt.Chart(pd.DataFrame({"x": [1, 2], "y": [3, 4]})).mark_line().encode(x="x:Q", y="y:Q")
    renderer = charts.BackgroundCharts()
    renderer.show(chart, tmp_path / "ok.png", "a line")
    renderer.wait()
    assert (tmp_path / "ok.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    import vl_convert

    def broken(*args, **kwargs):
        raise ValueError("renderer broke")

    monkeypatch.setattr(vl_convert, "vegalite_to_png", broken)
    renderer.show(chart, tmp_path / "bad.png", "a broken line")
    with pytest.raises(ValueError, match="renderer broke"):
        renderer.wait()
    assert not (tmp_path / "bad.png").exists()


# ------------------------------------------------------------------ gates of kernels started ahead


def test_a_template_run_on_its_own_does_not_wait(tmp_path):
    from calcs.stage import wait_for_gate

    wait_for_gate(tmp_path, "loads")  # no .gates folder: returns at once


def test_a_stage_knows_whether_it_was_started_ahead(tmp_path):
    from calcs.stage import GATES_DIR, started_ahead

    assert not started_ahead("energy", "")  # run on its own, default folder
    assert not started_ahead("energy", tmp_path)  # no gates: not inside a build's stage run
    (tmp_path / GATES_DIR).mkdir()
    assert started_ahead("energy", tmp_path)  # gate not yet decided: the kernel will wait
    (tmp_path / GATES_DIR / "energy").write_text("run", encoding="utf-8")
    assert not started_ahead("energy", tmp_path)


@pytest.mark.parametrize("word", ["run", "skip"])
def test_open_stage_waits_at_its_gate_until_the_build_decides(tmp_path, word):
    import threading
    import time

    from calcs.stage import GATES_DIR, StageSkipped

    gates = tmp_path / GATES_DIR
    gates.mkdir()
    opened = []

    def decide():
        time.sleep(0.3)
        opened.append(time.perf_counter())
        (gates / "loads").write_text(word, encoding="utf-8")

    threading.Thread(target=decide).start()
    t0 = time.perf_counter()
    if word == "run":
        st = open_stage("loads", DEMO / "project.toml", tmp_path)
        assert st.name == "loads"
    else:
        with pytest.raises(StageSkipped, match="not executed"):
            open_stage("loads", DEMO / "project.toml", tmp_path)
    assert opened and time.perf_counter() >= opened[0] >= t0  # it returned only after the gate was written


def test_the_executed_notebook_is_written_once_when_it_ends_even_if_the_kernel_dies(tmp_path, monkeypatch):
    """papermill writes the whole notebook as every cell starts and ends; the build's engine
    (calcs.stage._engine) writes it once, at the end: after the last cell, and also when the
    kernel died mid-notebook, so a failed stage's notebook still shows how far it got."""
    import nbformat
    import papermill
    import papermill.engines

    from calcs.stage import _engine

    writes: list[str] = []
    write = papermill.engines.write_ipynb
    monkeypatch.setattr(papermill.engines, "write_ipynb", lambda nb, path, **kw: (writes.append(path), write(nb, path, **kw)))
    for name, cells, expected in [("fine", ["x = 1", "print(x + 1)", "print('three')"], ["2\n", "three\n"]),
                                  ("dies", ["print('one')", "import os; os._exit(1)", "print('never')"], ["one\n"])]:
        nb = nbformat.v4.new_notebook()
        nb.cells = [nbformat.v4.new_code_cell(source) for source in cells]
        src, out = tmp_path / f"{name}.ipynb", tmp_path / f"{name}.out.ipynb"
        nbformat.write(nb, str(src))
        writes.clear()
        try:
            papermill.execute_notebook(str(src), str(out), kernel_name="python3", progress_bar=False,
                                       engine_name=_engine())
        except Exception as exc:  # noqa: BLE001 - the dead kernel's error, checked below
            assert name == "dies" and "died" in str(exc).lower(), exc
        else:
            assert name == "fine"
        assert writes == [str(out)], "one write by the engine, at the end"
        done = nbformat.read(str(out), as_version=4)
        printed = [o["text"] for c in done.cells for o in c.get("outputs", []) if o.get("name") == "stdout"]
        assert printed == expected
