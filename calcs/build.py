"""``freerun build``: project file in, report out.

1. Validate the project file (with any ``--set`` overrides) and the weather file.
2. Copy the inputs into a fresh temporary build folder beside the target and
   write the resolved project (every parameter as used).
3. Execute the five stage templates with papermill, each as soon as the stages it
   reads are done (comfort and energy side by side), or reuse them from the stage
   cache; each writes its tables, charts and results fragment into ``<build>/<stage>/``.
4. Merge the fragments into ``results.json``, write ``manifest.json`` and
   render ``report.html``.
5. Only then move the finished folder into place. A failed stage leaves the
   partial folder as ``<revision>.failed/`` for inspection and the previous
   report of that revision untouched.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import json
import os
import re
import shutil
import sys
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import audit
from .errors import FreerunError, StageError
from .paths import STAGE_UPSTREAM, STAGES
from .project import DEFAULTS_FILE, PROJECT_FILE, RESOLVED_FILE, Project, defaults_used, flatten, load_project
from .report import render_report
from .stage import dump_json, run_template

RESULTS_FILE = "results.json"
INPUTS = "inputs"


@dataclass
class BuildResult:
    """What a build produced and how long each part took."""

    folder: Path
    results: dict[str, Any]
    manifest: dict[str, Any]
    stage_seconds: dict[str, float] = field(default_factory=dict)
    total_seconds: float = 0.0
    render_seconds: float = 0.0  # report.html, exports and report.pdf


def default_out(project: Project, root: Path | None = None) -> Path:
    """``build/<job number>/<revision>/`` under the current folder."""
    root = root or Path.cwd() / "build"
    return root / project.project.job_number / project.project.revision


def _now() -> str:
    return dt.datetime.now(dt.timezone.utc).replace(microsecond=0).isoformat()


def prepare_inputs(project_file: Path, project: Project, folder: Path, overrides: Sequence[str]) -> dict[str, str]:
    """Copy the inputs into ``folder/inputs`` and write the resolved project; return their digests.

    Given a build's recorded ``inputs/project.resolved.json`` (as ``freerun verify`` does), the
    recorded inputs folder is copied verbatim, so the calculation re-runs on exactly those files.
    """
    inputs = folder / INPUTS
    if is_recorded_inputs(project_file):
        shutil.copytree(project_file.parent, inputs)
        return audit.hash_inputs(inputs)
    (inputs / "weather").mkdir(parents=True)
    shutil.copy2(project_file, inputs / PROJECT_FILE)
    weather_src = (project_file.parent / project.site.weather_file).resolve()
    weather_dst = inputs / "weather" / weather_src.name
    shutil.copy2(weather_src, weather_dst)
    resolved = project.model_dump(mode="json")
    resolved["site"]["weather_file"] = f"weather/{weather_src.name}"
    (inputs / RESOLVED_FILE).write_text(dump_json(resolved), encoding="utf-8")
    (inputs / DEFAULTS_FILE).write_text(dump_json({"defaults_used": defaults_used(project)}), encoding="utf-8")
    if overrides:
        (inputs / "overrides.json").write_text(dump_json({"overrides": list(overrides)}), encoding="utf-8")
    return audit.hash_inputs(inputs)  # every input: project and weather files, resolved project, overrides


def is_recorded_inputs(project_file: Path) -> bool:
    """True for a build's ``inputs/project.resolved.json`` (beside its copied project.toml)."""
    return project_file.name == RESOLVED_FILE and (project_file.parent / PROJECT_FILE).is_file()


def validate_inputs(project_dir: str | Path, overrides: Sequence[str] = ()) -> tuple[Path, Project]:
    """Validate project and weather before anything is written (errors → exit 2)."""
    from .weather import read_weather

    path = Path(project_dir)
    project_file = path / PROJECT_FILE if path.is_dir() else path
    project = load_project(project_file, overrides)
    weather = (project_file.parent / project.site.weather_file)
    if not weather.is_file():
        msg = f"{project_file.name}: site.weather_file = {project.site.weather_file!r}: file not found at {weather}"
        raise FreerunError(msg)
    data = read_weather(weather, year=project.occupancy.calendar_year, leap_day=project.site.leap_day)
    if abs(data.utc_offset - project.site.utc_offset) > 1e-9:
        msg = (
            f"{project_file.name}: site.utc_offset = {project.site.utc_offset:g} does not match the weather file "
            f"{weather.name} (time zone {data.utc_offset:g} h); weather hours are in the file's standard time"
        )
        raise FreerunError(msg)
    return project_file.resolve(), project


def build(
    project_dir: str | Path,
    out: str | Path | None = None,
    *,
    overrides: Sequence[str] = (),
    new_revision: str | None = None,
    pdf: bool = True,
    fresh: bool = False,
    progress: Callable[[str], None] | None = None,
    scheduler: str | None = None,
    jobs: int | None = None,
) -> BuildResult:
    """Build the report of a project folder. See the module docstring for the steps.

    ``project_dir`` may also be a build's ``inputs/project.resolved.json`` (re-execution of a
    recorded calculation; no overrides then). ``new_revision`` builds the project as revision
    ``new_revision`` (recorded in the manifest as ``revision_override``). A build folder holding
    signatures is never rebuilt (:func:`calcs.signoff.refuse_if_signed`). ``scheduler`` and
    ``jobs`` say where the energy stage's sensitivity and uncertainty batches run
    (:func:`calcs.sweep.map_chunks`; default a local process pool); they never change a result.
    """
    from .compare import record_history
    from .signoff import refuse_if_signed

    say = progress or (lambda text: None)
    started_wall = time.perf_counter()
    started = _now()
    if overrides and is_recorded_inputs(Path(project_dir)):
        msg = (f"{project_dir}: --set cannot be applied to a build's recorded inputs; build the project "
               "folder with --set instead (nothing was changed)")
        raise FreerunError(msg)
    if new_revision is not None and not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]{0,63}", new_revision):
        msg = (f"--new-revision {new_revision!r}: a revision is 1–64 letters, digits, '.', '_' or '-' "
               "starting with a letter or digit (it names a folder)")
        raise FreerunError(msg)
    from . import sweep

    sweep.check_scheduler(scheduler)
    sweep.check_jobs(jobs)
    if scheduler is not None:
        try:
            import dask.distributed  # noqa: F401
        except ImportError:
            msg = ("--scheduler needs the optional Dask extra, which is not installed: "
                   "pip install 'freerun[dask]' (or build without --scheduler for the local process pool)")
            raise FreerunError(msg) from None
    revision_set = [f"project.revision={json.dumps(new_revision)}"] if new_revision is not None else []
    project_file, project = validate_inputs(project_dir, [*overrides, *revision_set])
    from .pdf import paper_of

    paper_of(project)  # a bad page size is refused before anything is written
    target = Path(out) if out else default_out(project)
    if overrides and out is None:
        target = target.parent / f"{target.name}-check"
    target = target.resolve()
    refuse_if_signed(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    work = target.parent / f".{target.name}.partial-{os.getpid()}"
    if work.exists():
        shutil.rmtree(work)
    work.mkdir()
    printers = None
    with contextlib.ExitStack() as ends:  # ends the PDF helper, whatever happens
        try:
            inputs_sha = prepare_inputs(project_file, project, work, overrides)
            resolved = work / INPUTS / RESOLVED_FILE
            seconds: dict[str, float] = {}
            store = "" if fresh else str(target.parent / CACHE_DIR / "sweeps")
            if pdf:  # the PDF's helpers import WeasyPrint while the stages run (≈ 1 s), at a low priority
                printers = _start_printers(ends)
                if printers is not None and not fresh:  # then lay out the parameter list (it needs no results)
                    _lay_out_ahead(printers, project, work, target)
            with _sweep_environment(scheduler, jobs, store):
                stages = _run_stages(work, resolved, target, inputs_sha, fresh, seconds, say)
            results = merge_results(work)
            (work / RESULTS_FILE).write_text(dump_json(results), encoding="utf-8")
            manifest = write_manifest(work, project, inputs_sha, overrides, started,
                                      extra={"revision_override": new_revision, "stages": stages,
                                             "batches_ran_on": sweep.describe(scheduler, jobs)})
            manifest = record_history(work, target, manifest)
            say("rendering report" + (", PDF" if pdf else "") + " and table exports ...")
            t0 = time.perf_counter()
            render_into(work, project, results, manifest, pdf=pdf, printers=printers, fresh=fresh)
            render_seconds = time.perf_counter() - t0
            say(f"rendered in {render_seconds:.1f} s")
            refuse_if_signed(target)  # signed while this build ran: keep the signed one
        except BaseException:
            _keep_failed(work, target)
            raise
    _swap_into_place(work, target)
    total = time.perf_counter() - started_wall
    say(f"report written to {target / 'report.html'} in {total:.1f} s")
    return BuildResult(folder=target, results=results, manifest=manifest, stage_seconds=seconds, total_seconds=total,
                       render_seconds=render_seconds)


CACHE_DIR = ".stage-cache"
#: Laid-out parts of report.pdf (:class:`calcs.pdf_parts.PartCache`), in the stage cache folder.
PDF_PARTS_DIR = "pdf-parts"
#: Rendered charts (:class:`calcs.chart_renderer.ChartCache`), in the stage cache folder.
CHARTS_DIR = "charts"


def _sweep_environment(scheduler: str | None, jobs: int | None, store: str):
    """Tell the stage kernels (child processes) where to run their batches and keep their
    price-independent tables, for this build only."""
    from . import sweep

    return _environment({sweep.SCHEDULER_ENV: scheduler or "", sweep.JOBS_ENV: "" if jobs is None else str(jobs),
                         sweep.STORE_ENV: store})


@contextlib.contextmanager
def _environment(values: dict[str, str]):
    """Set environment variables for the kernels this build starts; restore them afterwards."""
    saved = {k: os.environ.get(k) for k in values}
    os.environ.update(values)
    try:
        yield
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def _start_printers(ends: contextlib.ExitStack) -> Any:
    """The PDF helpers of :mod:`calcs.pdf_parts`; where the PDF is laid out as one document, here,
    None, and WeasyPrint's import and fonts (≈ 0.8 s) are loaded in a thread meanwhile."""
    from . import pdf_parts

    if not pdf_parts.enabled():
        threading.Thread(target=_warm_up_pdf, name="freerun-pdf-import", daemon=True).start()
        return None
    printers = pdf_parts.start()
    ends.callback(pdf_parts.close, printers)
    threading.Thread(target=pdf_parts.import_pikepdf, name="freerun-pdf-import", daemon=True).start()  # pikepdf's import
    return printers


def _lay_out_ahead(printers: Any, project: Project, work: Path, target: Path) -> None:
    """Have a PDF helper lay out the report's parameter list into the part cache while the stages run
    (:func:`calcs.pdf_parts.ahead`): the page :func:`render_into` makes has that block as it is here."""
    from . import pdf_parts
    from .pdf import paper_of
    from .report import render_parameters_page

    pdf_parts.ahead(printers, lambda: render_parameters_page(project=project, parameters=flatten(project)),
                    paper_of(project), str(work), target.parent / CACHE_DIR / PDF_PARTS_DIR)


def _warm_up_pdf() -> None:
    try:
        from .pdf import warm_up

        warm_up()
    except Exception:  # noqa: BLE001, S110 - reported where the PDF is rendered
        pass


def _start_chart_renderer(ends: contextlib.ExitStack, cache: Path | None) -> None:
    """Start the process that renders this build's charts (:mod:`calcs.chart_renderer`; ``cache``:
    its folder of rendered charts) and tell the kernels started from now on where it is; ``ends``
    ends it and restores the environment."""
    from .chart_renderer import ENV, ChartRenderer

    renderer = ChartRenderer(cache)
    ends.callback(renderer.close)
    ends.enter_context(_environment({ENV: renderer.address}))  # restored before the renderer ends


def _run_stages(work: Path, resolved: Path, target: Path, inputs_sha: dict[str, str], fresh: bool,
                seconds: dict[str, float], say: Callable[[str], None]) -> dict[str, dict[str, Any]]:
    """Run (or reuse from the stage cache) every stage; return {stage: {key, reused, outputs_digest}}.

    A stage executes once the stages it reads (:data:`calcs.paths.STAGE_UPSTREAM`) are done, so
    independent stages (comfort and energy) execute at the same time, each in its own kernel.
    A stage whose upstream stages are still running has its kernel started ahead: start-up and
    imports overlap with the upstream calculations, and the kernel waits at its gate
    (:func:`calcs.stage.wait_for_gate`) until the build has the upstream digests and so the
    stage's cache key; then the build either lets it run or, when the cache holds that key after
    all, fetches the outputs and tells the kernel to end. The cache sits beside the build folders
    (``<parent>/.stage-cache``); ``fresh`` executes every stage (and still refreshes the cache).
    See :mod:`calcs.cache`. If a stage fails, the stages already running finish, the kernels
    waiting at their gates end, and the first failure is raised. ``seconds`` receives, per
    stage, the time from the decision to execute (or fetch) to its end.
    """
    from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

    from . import cache
    from .stage import GATE_RUN, GATE_SKIP, GATES_DIR

    store = cache.StageCache(target.parent / CACHE_DIR)
    data = json.loads(resolved.read_text(encoding="utf-8"))
    defaults = json.loads((resolved.parent / DEFAULTS_FILE).read_text(encoding="utf-8"))["defaults_used"]
    weather_sha = next(v for k, v in inputs_sha.items() if k.startswith("weather/"))
    code = cache.code_version()
    gates = work / GATES_DIR
    gates.mkdir()
    upstream: dict[str, str] = {}  # digests of the finished stages' outputs
    record: dict[str, dict[str, Any]] = {}
    keys: dict[str, str] = {}
    decided: dict[str, str] = {}  # stage → GATE_RUN or GATE_SKIP
    started: dict[str, float] = {}
    running: dict[Any, str] = {}
    failure: BaseException | None = None
    total = len(STAGES)

    def number(stage: str) -> str:
        return f"[{STAGES.index(stage) + 1}/{total}] {stage}"

    def open_gate(stage: str, word: str) -> None:
        tmp = gates / f".{stage}.tmp"
        tmp.write_text(word, encoding="utf-8")
        os.replace(tmp, gates / stage)
        decided[stage] = word

    def skip_undecided() -> None:
        for stage in set(running.values()) - set(decided):
            open_gate(stage, GATE_SKIP)  # kernels still waiting at their gates end

    def finished(stage: str, reused: bool) -> None:
        upstream[stage] = cache.folder_digest(work / stage)
        record[stage] = {"key": keys[stage], "reused": reused, "outputs_digest": upstream[stage]}
        seconds[stage] = time.perf_counter() - started[stage]

    def launch(stage: str, ahead: bool) -> None:
        if not renderer:  # the build's first kernel: the chart renderer starts first (none when all is reused)
            _start_chart_renderer(ends, None if fresh else target.parent / CACHE_DIR / CHARTS_DIR)
            renderer.append(True)
        running[pool.submit(_run_stage, stage, resolved, work, ahead, fork_server() if ahead else None)] = stage

    def step(stage: str) -> None:
        """Take one stage as far as the finished upstream stages allow."""
        launched = stage in running.values()
        if not all(u in upstream for u in STAGE_UPSTREAM[stage]):
            if not launched:  # start its kernel ahead, at a lower priority; it waits at its gate
                launch(stage, ahead=True)
            return
        keys[stage] = cache.stage_key(stage, data, defaults, weather_sha, upstream, code)
        started[stage] = time.perf_counter()
        if not fresh and store.fetch(stage, keys[stage], work):
            if launched:
                open_gate(stage, GATE_SKIP)
            say(f"{number(stage)} reused from the stage cache")
            finished(stage, reused=True)
            return
        say(f"{number(stage)} ...")
        open_gate(stage, GATE_RUN)
        if not launched:
            launch(stage, ahead=False)

    from . import kernel_forks

    forks: list[Any] = []
    renderer: list[bool] = []

    def fork_server():
        """The build's kernel fork server, started with the first kernel started ahead (None where off).

        A kernel that can run at once starts the usual way: the server's imports would only delay it.
        """
        if not forks and kernel_forks.enabled():
            forks.append(kernel_forks.ForkServer())
            ends.callback(forks[0].close)  # after the pool has ended: every kernel has ended by then
        return forks[0] if forks else None

    with contextlib.ExitStack() as ends, ThreadPoolExecutor(max_workers=len(STAGES)) as pool:
        try:
            while True:
                before = -1
                while failure is None and before != len(record) + len(decided):
                    before = len(record) + len(decided)
                    for stage in STAGES:
                        if stage not in record and decided.get(stage) != GATE_RUN:
                            step(stage)
                if not running:
                    break
                done, _ = wait(running, return_when=FIRST_COMPLETED)
                for future in done:
                    stage = running.pop(future)
                    try:
                        future.result()
                    except BaseException as exc:  # noqa: BLE001 - re-raised once the others finish
                        if decided.get(stage) == GATE_RUN:
                            failure = failure or exc
                        continue
                    store.store(stage, keys[stage], work)
                    finished(stage, reused=False)
                    say(f"{number(stage)} done in {seconds[stage]:.1f} s")
                if failure is not None:
                    skip_undecided()
        finally:
            skip_undecided()
    shutil.rmtree(gates, ignore_errors=True)
    if failure is not None:
        raise failure
    return {stage: record[stage] for stage in STAGES}


def _run_stage(stage: str, resolved: Path, work: Path, ahead: bool = False, forks: Any = None) -> None:
    """Execute one stage notebook; a failed cell becomes one StageError line.

    The notebook is written as ``notebooks/.<stage>.running.ipynb`` and renamed to
    ``<stage>.ipynb`` when it ends (a failed one too, for inspection); the notebook of a kernel
    the build ended at its gate (:class:`calcs.stage.StageSkipped`) is deleted. ``ahead``: the
    kernel is started ahead of its upstream stages, at a lower processor priority.
    """
    import papermill

    running = work / "notebooks" / f".{stage}.running.ipynb"
    final = work / "notebooks" / f"{stage}.ipynb"
    try:
        run_template(stage, resolved, work, out=running, low_priority=ahead, forks=forks)
    except papermill.PapermillExecutionError as exc:
        if exc.ename == "StageSkipped":
            running.unlink(missing_ok=True)
            raise
        _keep_notebook(running, final)
        cell = exc.cell_index + 1 if isinstance(exc.cell_index, int) else "?"
        evalue = str(exc.evalue).strip().splitlines()[0] if str(exc.evalue).strip() else ""
        msg = f"stage '{stage}' failed in cell {cell}: {exc.ename}: {evalue}"
        raise StageError(msg) from None
    except RuntimeError as exc:
        from .stage import KERNEL_DIED_AT_START, KERNEL_STARTS

        _keep_notebook(running, final)
        if KERNEL_DIED_AT_START not in str(exc):
            raise
        msg = f"stage '{stage}': {KERNEL_STARTS} notebook kernels in a row ended before they answered ({exc})"
        raise StageError(msg) from None
    except BaseException:
        _keep_notebook(running, final)
        raise
    _keep_notebook(running, final)


def _keep_notebook(running: Path, final: Path) -> None:
    if running.exists():
        os.replace(running, final)


def merge_results(work: Path) -> dict[str, Any]:
    """Merge every stage's results fragment into one dict (stage name → results)."""
    merged: dict[str, Any] = {}
    for stage in STAGES:
        path = work / stage / RESULTS_FILE
        if not path.is_file():
            msg = f"stage '{stage}' wrote no {RESULTS_FILE}; its template must call save_results()"
            raise StageError(msg)
        merged.update(json.loads(path.read_text(encoding="utf-8")))
    return merged


def write_manifest(
    work: Path, project: Project, inputs_sha: dict[str, str], overrides: Sequence[str], started: str,
    extra: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """Write manifest.json: digests of inputs and outputs, versions, times, overrides (+ ``extra`` keys)."""
    outputs = audit.hash_tree(work, tuple(STAGES) + ("notebooks", RESULTS_FILE))
    env = audit.environment()
    manifest = {
        "job_number": project.project.job_number,
        "revision": project.project.revision,
        "tool_version": env["tool_version"],
        "git_commit": env["git_commit"],
        "python": env["python"],
        "platform": env["platform"],
        "packages": env["packages"],
        "inputs_sha256": inputs_sha,
        "outputs_sha256": outputs,
        "results_sha256": outputs[RESULTS_FILE],
        "digest": audit.calculation_digest(inputs_sha, outputs),
        "overrides": list(overrides),
        **(extra or {}),
        "started": started,
        "finished": _now(),
    }
    (work / audit.MANIFEST_FILE).write_text(dump_json(manifest), encoding="utf-8")
    return manifest


def render_into(folder: Path, project: Project, results: dict[str, Any], manifest: dict[str, Any],
                signatures: list[dict[str, Any]] | None = None, *, pdf: bool | None = None,
                printers: Any = None, fresh: bool = False) -> Path:
    """Render report.html, its table exports and report.pdf into a build folder.

    ``pdf``: write report.pdf (None: re-write it when the folder has one, as on signing). All are
    rendered first and replace the previous files only when every one succeeded
    (:func:`calcs.pdf.write_renderings`). ``printers``: the build's PDF helpers; the PDF's parts
    come from (and go to) the cache of laid-out parts beside the stage cache, unless ``fresh``.
    """
    audit_info = {
        **{k: manifest[k] for k in ("tool_version", "git_commit", "python", "packages", "inputs_sha256",
                                    "digest", "overrides", "started", "finished")},
        "parameters": flatten(project),
        "stages": manifest.get("stages", {}),
    }
    extra = []
    if manifest["overrides"]:
        extra.append("CHECK RUN with overrides: " + "; ".join(manifest["overrides"]))
    if manifest.get("revision_override"):
        extra.append(f"Revision {manifest['revision_override']} was given on the command line (--new-revision); "
                     "the project file was not changed")
    from .compare import with_entered_revisions

    shown = with_entered_revisions(project, manifest.get("decisions_entered"))
    page = render_report(build_dir=folder, project=shown, results=results, audit=audit_info,
                         signatures=signatures, extra_cover=extra, changes=manifest.get("changes_since_previous"))
    from .pdf import paper_of, write_renderings

    parts = folder.parent / CACHE_DIR / PDF_PARTS_DIR  # laid-out PDF parts, beside the stage cache
    return write_renderings(folder, page, pdf=pdf, paper=paper_of(project), printers=printers,
                            cache=None if fresh else parts)


def _keep_failed(work: Path, target: Path) -> None:
    if not work.exists():
        return
    failed = target.parent / f"{target.name}.failed"
    if failed.exists():
        shutil.rmtree(failed)
    os.replace(work, failed)
    print(f"freerun: the partly built folder is kept for inspection at {failed}", file=sys.stderr)


def _swap_into_place(work: Path, target: Path) -> None:
    """Replace the target folder by the finished build in two renames."""
    old = None
    if target.exists():
        old = target.parent / f".{target.name}.old-{os.getpid()}"
        os.replace(target, old)
    os.replace(work, target)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    failed = target.parent / f"{target.name}.failed"
    if failed.exists():
        shutil.rmtree(failed, ignore_errors=True)
