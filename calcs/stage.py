"""What a stage template needs around its calculations.

A template opens its stage with :func:`open_stage`, which validates the
project, finds the build folder and gives the stage a place for its
outputs. Stage outputs are open files (CSV tables, PNG charts and a
``results.json`` fragment) in ``<build_dir>/<stage>/``; later stages read
earlier stages' outputs from there and never reach forward.

When a template is run on its own (for example by ``pytest --nbval-lax
templates/``) and an earlier stage's outputs are missing from its build
folder, :meth:`Stage.upstream` runs that earlier template first with the
same parameters, so each template runs on its defaults.
"""

from __future__ import annotations

import json
import math
import os
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from .errors import StageError
from .paths import STAGE_UPSTREAM, STAGES, stage_dir, stage_template
from .project import DEFAULTS_FILE, Project, defaults_used, load_project

RESULTS_FILE = "results.json"
#: Folder of a build's stage gates (``<build>/.gates/<stage>``), present only while a build runs.
GATES_DIR = ".gates"
GATE_RUN, GATE_SKIP = "run", "skip"


class StageSkipped(StageError):
    """A build started this stage's kernel ahead and then did not need it (see :func:`wait_for_gate`)."""


@dataclass
class Stage:
    """One stage's view of the project and its build folder."""

    name: str
    project: Project
    project_file: Path
    build_dir: Path
    _charts: Any = field(default=None, init=False, repr=False, compare=False)

    @property
    def project_dir(self) -> Path:
        return self.project_file.parent

    @property
    def out(self) -> Path:
        """This stage's output folder (created on first use)."""
        path = stage_dir(self.build_dir, self.name)
        path.mkdir(parents=True, exist_ok=True)
        return path

    # ----------------------------------------------------------------- inputs
    def weather_path(self) -> Path:
        return self.project_dir / self.project.site.weather_file

    def weather(self):
        """The validated weather year (see :func:`calcs.weather.read_weather`)."""
        from .weather import read_weather

        site = self.project.site
        return read_weather(self.weather_path(), year=self.project.occupancy.calendar_year, leap_day=site.leap_day)

    def defaults_used(self) -> list[dict[str, str]]:
        """Values the project file left to defaults (key, value, unit, meaning, source)."""
        recorded = self.project_dir / DEFAULTS_FILE
        if recorded.is_file():
            return json.loads(recorded.read_text(encoding="utf-8"))["defaults_used"]
        return defaults_used(self.project)

    def upstream(self, stage: str) -> Path:
        """Output folder of an earlier stage, running it first if it has no results yet."""
        if stage not in STAGE_UPSTREAM.get(self.name, ()):
            allowed = ", ".join(STAGE_UPSTREAM.get(self.name, ())) or "none"
            msg = (f"stage '{self.name}' may only read the stages it depends on ({allowed}; "
                   f"calcs.paths.STAGE_UPSTREAM), not '{stage}'")
            raise StageError(msg)
        folder = stage_dir(self.build_dir, stage)
        if not (folder / RESULTS_FILE).is_file():
            run_template(stage, self.project_file, self.build_dir)
        return folder

    def read_table(self, stage: str, name: str, **kwargs: Any) -> pd.DataFrame:
        """An earlier stage's CSV table, with a datetime index where it has one."""
        path = self.upstream(stage) / f"{name}.csv"
        return read_table(path, **kwargs)

    def read_results(self, stage: str) -> dict[str, Any]:
        return json.loads((self.upstream(stage) / RESULTS_FILE).read_text(encoding="utf-8"))

    # ----------------------------------------------------------------- outputs
    def save_table(self, frame: pd.DataFrame, name: str, *, index: bool = True) -> Path:
        """Write a table as CSV into this stage's folder (deterministic: no timestamps)."""
        path = self.out / f"{name}.csv"
        frame.to_csv(path, index=index, lineterminator="\n")
        return path

    def save_results(self, results: dict[str, Any]) -> Path:
        """Write this stage's part of results.json (keys sorted, numbers as plain JSON)."""
        path = self.out / RESULTS_FILE
        path.write_text(dump_json({self.name: results}), encoding="utf-8")
        return path

    def save_png(self, data: bytes, name: str) -> Path:
        path = self.out / f"{name}.png"
        path.write_bytes(data)
        return path

    def show_chart(self, chart: Any, name: str, alt_text: str) -> None:
        """Render a chart to ``<stage>/<name>.png`` and show it, without holding up the kernel.

        The rendering runs in a background thread (:class:`calcs.charts.BackgroundCharts`);
        the template's last cell calls :meth:`finish`, which waits for it.
        """
        from .charts import BackgroundCharts

        if self._charts is None:
            self._charts = BackgroundCharts()
        self._charts.show(chart, self.out / f"{name}.png", alt_text)

    def finish(self) -> None:
        """Wait for the charts still rendering (the last call of a template)."""
        if self._charts is not None:
            self._charts.wait()


def open_stage(name: str, project_file: str | Path, build_dir: str | Path = "") -> Stage:
    """Open a stage for a template.

    Parameters
    ----------
    name : str
        One of :data:`calcs.paths.STAGES`.
    project_file : str or Path
        ``project.toml`` (or the resolved JSON a build writes).
    build_dir : str or Path
        Build folder; empty means ``build/template-check`` beside the project folder's parent.
    """
    if name not in STAGES:
        msg = f"unknown stage '{name}' (stages: {', '.join(STAGES)})"
        raise StageError(msg)
    project_path = Path(project_file).resolve()
    project = load_project(project_path)
    folder = Path(build_dir).resolve() if build_dir else (project_path.parent.parent / "build" / "template-check")
    folder.mkdir(parents=True, exist_ok=True)
    from .charts import BackgroundCharts

    charts = BackgroundCharts(warm_up=True)  # vl-convert's engine starts during the gate wait (if it renders here)
    wait_for_gate(folder, name)
    stage = Stage(name=name, project=project, project_file=project_path, build_dir=folder)
    stage._charts = charts
    return stage


def started_ahead(stage: str, build_dir: str | Path) -> bool:
    """True when a build started this stage's kernel ahead and has not yet opened its gate.

    Such a kernel will wait in :func:`open_stage`; a template may start slow preparations that
    need no inputs first (the energy stage's worker pool), so they overlap the wait. False for a
    template run on its own and for a stage whose upstream outputs were ready when it started.
    """
    if not build_dir:
        return False
    gates = Path(build_dir) / GATES_DIR
    return gates.is_dir() and not (gates / stage).exists()


def wait_for_gate(build_dir: str | Path, stage: str, poll: float = 0.01) -> None:
    """Wait until the build running this kernel lets the stage go on (no wait outside a build).

    A build starts the kernels of later stages ahead, while the stages they read are still
    running, so kernel start-up and imports overlap with those stages' calculations; each
    kernel then waits here, in :func:`open_stage`, before it reads anything. The build writes
    ``<build>/.gates/<stage>``: ``run`` once every upstream stage is done and the stage is to be
    executed, ``skip`` when the stage's outputs came from the stage cache after all, or the build
    stopped (then :class:`StageSkipped` is raised and the kernel ends). A template run on its
    own has no gates folder and never waits.
    """
    gates = Path(build_dir) / GATES_DIR
    if not gates.is_dir():
        return
    gate = gates / stage
    parent = os.getppid()
    while True:
        try:
            word = gate.read_text(encoding="utf-8").strip()
        except FileNotFoundError:
            if os.getppid() != parent:  # the build process is gone
                msg = f"stage '{stage}': the build that started this kernel has ended"
                raise StageSkipped(msg) from None
            time.sleep(poll)
            continue
        if word == GATE_RUN:
            return
        msg = f"stage '{stage}': not executed (the build said {word!r})"
        raise StageSkipped(msg)


def run_template(stage: str, project_file: str | Path, build_dir: str | Path, out: str | Path | None = None,
                 low_priority: bool = False, forks: Any = None) -> Path:
    """Execute one stage template with papermill into ``out`` (default ``<build_dir>/notebooks/<stage>.ipynb``).

    ``low_priority``: run the kernel at a lower processor priority (:data:`LOW_PRIORITY`), for a
    kernel a build starts ahead of the stages it waits for, so its start-up and imports yield the
    processor to the stages that are calculating. ``forks``: a :class:`calcs.kernel_forks.ForkServer`
    that makes the kernel process (a build's), instead of a new interpreter.
    """
    import papermill

    out = Path(out) if out else Path(build_dir) / "notebooks" / f"{stage}.ipynb"
    out.parent.mkdir(parents=True, exist_ok=True)
    if forks is not None:
        from .kernel_forks import kernel_manager_class

        extra = {"kernel_manager_class": kernel_manager_class(forks, LOW_PRIORITY if low_priority else 0)}
    else:
        extra = {"kernel_manager_class": _low_priority_kernel_manager() if low_priority else kernel_manager_base()}
    for _ in range(KERNEL_STARTS - 1):
        try:
            _execute(papermill, stage, project_file, build_dir, out, extra)
            return out
        except RuntimeError as exc:
            # a kernel that died before it answered has run no cell: start another. (Seen once in
            # about 30 kernel starts with four kernels starting at once: the local TCP port that
            # jupyter_client had picked for it was taken, in the meantime, as the source port of
            # one of the build's own connections to another kernel.)
            if KERNEL_DIED_AT_START not in str(exc):
                raise
    _execute(papermill, stage, project_file, build_dir, out, extra)  # the last start: its failure is the stage's
    return out


#: How many kernels a stage starts before it gives up on one that dies before answering.
KERNEL_STARTS = 3
KERNEL_DIED_AT_START = "Kernel died before replying to kernel_info"  # jupyter_client's words


def _execute(papermill, stage: str, project_file, build_dir, out: Path, extra: dict) -> None:
    papermill.execute_notebook(
        str(stage_template(stage)),
        str(out),
        parameters={"project_file": str(project_file), "build_dir": str(build_dir)},
        kernel_name="python3",
        progress_bar=False,
        # the notebook is written once, when it ends (failed or interrupted too): see _engine
        engine_name=_engine(),
        # the kernel starts in the build folder; papermill's own ``cwd`` would chdir the whole
        # process, which stages running side by side in threads must not do
        resources={"metadata": {"path": str(Path(build_dir).resolve())}},
        # the kernel would otherwise warn on stderr about its local TCP transport
        extra_arguments=["--IPKernelApp.log_level=ERROR"],
        # every output is on disk once the last cell (``st.finish()``) has run; a graceful
        # shutdown would add 0.7–1.3 s per stage of interpreter teardown to the build
        shutdown_kernel="immediate",
        **extra,
    )


_ENGINE = "freerun"
_ENGINE_REGISTERED: list[bool] = []


def _engine() -> str:
    """papermill's nbclient engine, but writing the executed notebook only when it ends.

    papermill writes (and validates) the whole notebook as every cell starts and ends: for the
    energy stage 44 writes, ≈ 0.15 s of the build process's time per stage. This engine writes
    it once, as execution ends — also when a cell failed, the kernel died or the build was
    interrupted (papermill ends every execution with that save), so a failed stage's notebook
    is still kept for inspection.
    """
    from papermill.engines import NBClientEngine, NotebookExecutionManager, papermill_engines

    if _ENGINE_REGISTERED:
        return _ENGINE

    class SavedAtTheEnd(NotebookExecutionManager):
        ending = False

        def save(self, **kwargs: Any) -> None:
            if self.ending:
                super().save(**kwargs)

        def notebook_complete(self, **kwargs: Any) -> None:
            self.ending = True
            super().notebook_complete(**kwargs)

    class Engine(NBClientEngine):
        @classmethod
        def execute_notebook(cls, nb: Any, kernel_name: str, output_path: Any = None, progress_bar: bool = True,
                             log_output: bool = False, autosave_cell_every: int = 30, **kwargs: Any) -> Any:
            # papermill's Engine.execute_notebook, with the manager above
            manager = SavedAtTheEnd(nb, output_path=output_path, progress_bar=progress_bar, log_output=log_output,
                                    autosave_cell_every=autosave_cell_every)
            manager.notebook_start()
            try:
                cls.execute_managed_notebook(manager, kernel_name, log_output=log_output, **kwargs)
            finally:
                manager.cleanup_pbar()
                manager.notebook_complete()
            return manager.nb

    papermill_engines.register(_ENGINE, Engine)  # twice from two threads at once is harmless
    _ENGINE_REGISTERED.append(True)
    return _ENGINE


_MANAGER_BASE: Any = None


def kernel_manager_base():
    """jupyter_client's ``AsyncKernelManager``, but looking every 5 ms, not every 100 ms, whether a
    kernel it ended is gone.

    A stage's kernel is ended at once after its last cell (``shutdown_kernel="immediate"``): a
    kill, then jupyter_client polls until the process is gone — at 100 ms steps, so a stage ended
    ≈ 0.1 s after its kernel had, on the build's critical path once per stage.
    """
    global _MANAGER_BASE
    if _MANAGER_BASE is None:
        from jupyter_client import AsyncKernelManager

        class QuickEndKernelManager(AsyncKernelManager):
            async def _async_wait(self, pollinterval: float = 0.1) -> None:
                await super()._async_wait(pollinterval=min(pollinterval, 0.005))

        _MANAGER_BASE = QuickEndKernelManager
    return _MANAGER_BASE


#: Niceness of a kernel started with ``low_priority`` (POSIX ``nice``; a priority only ever lowered).
LOW_PRIORITY = 10
_LOW_PRIORITY_MANAGER: Any = None


def _low_priority_kernel_manager():
    """A Jupyter kernel manager whose kernels start under ``nice -n LOW_PRIORITY`` (where there is ``nice``)."""
    global _LOW_PRIORITY_MANAGER
    if _LOW_PRIORITY_MANAGER is None:
        import shutil

        nice = shutil.which("nice")

        class LowPriorityKernelManager(kernel_manager_base()):
            def format_kernel_cmd(self, extra_arguments=None):
                cmd = super().format_kernel_cmd(extra_arguments)
                return [nice, "-n", str(LOW_PRIORITY), *cmd] if nice else cmd

        _LOW_PRIORITY_MANAGER = LowPriorityKernelManager
    return _LOW_PRIORITY_MANAGER


def read_table(path: str | Path, **kwargs: Any) -> pd.DataFrame:
    """Read a stage CSV table; a first column named ``time`` becomes a DatetimeIndex."""
    frame = pd.read_csv(path, **kwargs)
    if frame.columns[0] == "time":
        frame["time"] = pd.to_datetime(frame["time"])
        frame = frame.set_index("time")
    return frame


def _clean(value: Any) -> Any:
    """JSON-safe plain values: numpy scalars to Python, NaN to None."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def dump_json(data: dict[str, Any]) -> str:
    """Deterministic JSON text (sorted keys, two-space indent, trailing newline)."""
    return json.dumps(_clean(data), indent=2, sort_keys=True, ensure_ascii=False) + "\n"
