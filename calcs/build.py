"""``freerun build``: project file in, report out.

1. Validate the project file (with any ``--set`` overrides) and the weather file.
2. Copy the inputs into a fresh temporary build folder beside the target and
   write the resolved project (every parameter as used).
3. Execute the five stage templates in order with papermill; each writes its
   tables, charts and results fragment into ``<build>/<stage>/``.
4. Merge the fragments into ``results.json``, write ``manifest.json`` and
   render ``report.html``.
5. Only then move the finished folder into place. A failed stage leaves the
   partial folder as ``<revision>.failed/`` for inspection and the previous
   report of that revision untouched.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import shutil
import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import audit
from .errors import FreerunError, StageError
from .paths import STAGES
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


def default_out(project: Project, root: Path | None = None) -> Path:
    """``build/<job number>/<revision>/`` under the current folder."""
    root = root or Path.cwd() / "build"
    return root / project.project.job_number / project.project.revision


def _now() -> str:
    return dt.datetime.now(dt.timezone.utc).replace(microsecond=0).isoformat()


def prepare_inputs(project_file: Path, project: Project, folder: Path, overrides: Sequence[str]) -> dict[str, str]:
    """Copy the inputs into ``folder/inputs`` and write the resolved project; return their digests."""
    inputs = folder / INPUTS
    (inputs / "weather").mkdir(parents=True)
    shutil.copy2(project_file, inputs / PROJECT_FILE)
    weather_src = (project_file.parent / project.site.weather_file).resolve()
    weather_dst = inputs / "weather" / weather_src.name
    shutil.copy2(weather_src, weather_dst)
    resolved = project.model_dump(mode="json")
    resolved["site"]["weather_file"] = f"weather/{weather_src.name}"
    (inputs / RESOLVED_FILE).write_text(dump_json(resolved), encoding="utf-8")
    (inputs / DEFAULTS_FILE).write_text(dump_json({"defaults_used": defaults_used(project)}), encoding="utf-8")
    digests = {
        PROJECT_FILE: audit.sha256_file(project_file),
        f"weather/{weather_src.name}": audit.sha256_file(weather_src),
    }
    if overrides:
        (inputs / "overrides.json").write_text(dump_json({"overrides": list(overrides)}), encoding="utf-8")
    return digests


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
    progress: Callable[[str], None] | None = None,
) -> BuildResult:
    """Build the report of a project folder. See the module docstring for the steps."""
    say = progress or (lambda text: None)
    started_wall = time.perf_counter()
    started = _now()
    project_file, project = validate_inputs(project_dir, overrides)
    target = Path(out) if out else default_out(project)
    if overrides and out is None:
        target = target.parent / f"{target.name}-check"
    target = target.resolve()
    target.parent.mkdir(parents=True, exist_ok=True)
    work = target.parent / f".{target.name}.partial-{os.getpid()}"
    if work.exists():
        shutil.rmtree(work)
    work.mkdir()
    try:
        inputs_sha = prepare_inputs(project_file, project, work, overrides)
        resolved = work / INPUTS / RESOLVED_FILE
        seconds: dict[str, float] = {}
        for number, stage in enumerate(STAGES, start=1):
            say(f"[{number}/{len(STAGES)}] {stage} ...")
            t0 = time.perf_counter()
            _run_stage(stage, resolved, work)
            seconds[stage] = time.perf_counter() - t0
            say(f"[{number}/{len(STAGES)}] {stage} done in {seconds[stage]:.1f} s")
        results = merge_results(work)
        (work / RESULTS_FILE).write_text(dump_json(results), encoding="utf-8")
        manifest = write_manifest(work, project, inputs_sha, overrides, started)
        say("rendering report ...")
        render_into(work, project, results, manifest)
    except BaseException:
        _keep_failed(work, target)
        raise
    _swap_into_place(work, target)
    total = time.perf_counter() - started_wall
    say(f"report written to {target / 'report.html'} in {total:.1f} s")
    return BuildResult(folder=target, results=results, manifest=manifest, stage_seconds=seconds, total_seconds=total)


def _run_stage(stage: str, resolved: Path, work: Path) -> None:
    import papermill

    try:
        run_template(stage, resolved, work)
    except papermill.PapermillExecutionError as exc:
        cell = exc.cell_index + 1 if isinstance(exc.cell_index, int) else "?"
        evalue = str(exc.evalue).strip().splitlines()[0] if str(exc.evalue).strip() else ""
        msg = f"stage '{stage}' failed in cell {cell}: {exc.ename}: {evalue}"
        raise StageError(msg) from None


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
    work: Path, project: Project, inputs_sha: dict[str, str], overrides: Sequence[str], started: str
) -> dict[str, Any]:
    """Write manifest.json: digests of inputs and outputs, versions, times, overrides."""
    outputs = audit.hash_tree(work, tuple(STAGES) + ("notebooks", RESULTS_FILE))
    deterministic = {k: v for k, v in outputs.items() if k.endswith((".csv", ".json"))}
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
        "digest": audit.combined_digest(inputs_sha, deterministic),
        "overrides": list(overrides),
        "started": started,
        "finished": _now(),
    }
    (work / audit.MANIFEST_FILE).write_text(dump_json(manifest), encoding="utf-8")
    return manifest


def render_into(folder: Path, project: Project, results: dict[str, Any], manifest: dict[str, Any],
                signatures: list[dict[str, Any]] | None = None) -> Path:
    """Render report.html into a build folder (atomically replacing any previous one)."""
    audit_info = {
        **{k: manifest[k] for k in ("tool_version", "git_commit", "python", "packages", "inputs_sha256",
                                    "digest", "overrides", "started", "finished")},
        "parameters": flatten(project),
    }
    extra = []
    if manifest["overrides"]:
        extra.append("CHECK RUN with overrides: " + "; ".join(manifest["overrides"]))
    page = render_report(build_dir=folder, project=project, results=results, audit=audit_info,
                         signatures=signatures, extra_cover=extra)
    path = folder / "report.html"
    tmp = path.with_suffix(".html.tmp")
    tmp.write_text(page, encoding="utf-8")
    os.replace(tmp, path)
    return path


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
