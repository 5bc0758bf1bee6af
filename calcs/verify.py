"""``freerun verify``: is a build what its manifest says, and does it come out the same again?

Two checks, both must hold:

1. **Files.** Every file the manifest lists (``inputs/…``, the executed
   notebooks, each stage's tables, charts and results, ``results.json``) is
   re-hashed with SHA-256 and compared with ``manifest.json``; a file that is
   missing, changed, or added to those folders is reported by name. The
   manifest's own ``results_sha256`` and ``digest`` are recomputed from its
   file digests, and each signature in ``signatures.json`` must carry this
   build's digest and the SHA-256 of the manifest as it was when signed.
2. **Re-execution.** The calculation is run again from the recorded inputs
   (``inputs/project.resolved.json`` and the copied weather file) into a
   temporary folder, and ``results.json`` must come out identical: every value
   compared exactly (no tolerance — no source of nondeterminism is known; the
   stages use no random numbers, no clock and no parallel reductions), and every
   data table (CSV) and results fragment byte-identical. Re-execution is skipped
   when the files already fail check 1 (the verdict is then known, and tampered
   inputs prove nothing).

Verification never writes into the build it checks.
"""

from __future__ import annotations

import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import audit
from .compare import INPUTS, RESULTS_FILE, flatten_results, read_build, read_json
from .errors import FreerunError
from .project import RESOLVED_FILE

SIGNATURES_FILE = "signatures.json"


@dataclass
class Verification:
    """What ``freerun verify`` found."""

    folder: Path
    files_checked: int = 0
    file_problems: list[str] = field(default_factory=list)
    rerun: str = "not run"  # "identical", "differs", "failed", "skipped", "not run"
    rerun_problems: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    values_compared: int = 0
    tables_compared: int = 0

    @property
    def passed(self) -> bool:
        return not self.file_problems and self.rerun == "identical"


def _digest_table(manifest: dict[str, Any], key: str) -> tuple[dict[str, str], str | None]:
    table = manifest.get(key)
    if not isinstance(table, dict) or not all(isinstance(k, str) and isinstance(v, str) for k, v in table.items()):
        return {}, f"{audit.MANIFEST_FILE}: '{key}' is missing or not a table of file → SHA-256"
    return table, None


def check_files(folder: str | Path, manifest: dict[str, Any] | None = None) -> tuple[list[str], int]:
    """Re-hash a build's files against its manifest; return (problems naming each file, files checked)."""
    folder = Path(folder)
    manifest = manifest if manifest is not None else read_json(folder / audit.MANIFEST_FILE)
    problems: list[str] = []
    inputs, error = _digest_table(manifest, "inputs_sha256")
    if error:
        problems.append(error)
    outputs, error = _digest_table(manifest, "outputs_sha256")
    if error:
        problems.append(error)

    listed = {f"{INPUTS}/{name}": digest for name, digest in inputs.items()} | outputs
    checked = 0
    for rel, digest in listed.items():
        path = folder / rel
        if not path.is_file():
            problems.append(f"{rel}: missing (listed in {audit.MANIFEST_FILE})")
            continue
        checked += 1
        if audit.sha256_file(path) != digest:
            problems.append(f"{rel}: SHA-256 differs from {audit.MANIFEST_FILE} (the file was changed)")

    covered = {INPUTS} | {rel.split("/", 1)[0] for rel in outputs}
    for top in sorted(covered):
        base = folder / top
        if not base.is_dir():
            continue
        for path in sorted(base.rglob("*")):
            rel = path.relative_to(folder).as_posix()
            if path.is_file() and path.name not in audit.NOT_HASHED and rel not in listed:
                problems.append(f"{rel}: not listed in {audit.MANIFEST_FILE} (a file was added)")

    if outputs and manifest.get("results_sha256") != outputs.get(RESULTS_FILE):
        problems.append(f"{audit.MANIFEST_FILE}: results_sha256 does not match its own digest of {RESULTS_FILE}")
    if inputs and outputs and manifest.get("digest") != audit.calculation_digest(inputs, outputs):
        problems.append(f"{audit.MANIFEST_FILE}: 'digest' does not match its file digests (the manifest was edited)")
    problems.extend(_signature_problems(folder, manifest))
    return problems, checked


def _signature_problems(folder: Path, manifest: dict[str, Any]) -> list[str]:
    from .signoff import read_signatures

    path = folder / SIGNATURES_FILE
    if not path.exists():
        return []
    try:
        signatures = read_signatures(folder)
    except FreerunError as exc:
        return [str(exc)]
    manifest_sha = audit.sha256_file(folder / audit.MANIFEST_FILE)
    problems = []
    for s in signatures:
        who = f"the {s['role']} signature ({s['name']})"
        if s["digest"] != manifest.get("digest"):
            problems.append(f"{SIGNATURES_FILE}: {who} is for digest {s['digest'][:16]}, "
                            f"not this build's {str(manifest.get('digest'))[:16]}")
        elif s.get("manifest_sha256") and s["manifest_sha256"] != manifest_sha:
            problems.append(f"{audit.MANIFEST_FILE}: changed since {who} was given")
    return problems


def compare_results(original: Any, again: Any) -> list[str]:
    """Keys of results.json whose values differ (exact comparison, type included)."""
    a, b = flatten_results(original), flatten_results(again)
    out = []
    for key in [*a, *(k for k in b if k not in a)]:
        if key not in b:
            out.append(f"{RESULTS_FILE}: {key} is missing from the re-run")
        elif key not in a:
            out.append(f"{RESULTS_FILE}: {key} appears only in the re-run")
        else:
            old, new = a[key][0], b[key][0]
            if type(old) is not type(new) or old != new:
                out.append(f"{RESULTS_FILE}: {key} = {old!r} in the build, {new!r} on re-running")
    return out


def verify(
    folder: str | Path,
    *,
    files_only: bool = False,
    keep: str | Path | None = None,
    progress: Callable[[str], None] | None = None,
) -> Verification:
    """Check a build's files against its manifest, then re-execute it and compare (see module docstring)."""
    from .build import build

    say = progress or (lambda text: None)
    built = read_build(folder)  # errors (no folder, no manifest) → exit 2
    folder = Path(folder)
    manifest = built["manifest"]
    if keep is not None and Path(keep).exists():
        msg = f"--keep {keep}: already exists; give a new folder for the re-executed build (nothing was changed)"
        raise FreerunError(msg)
    result = Verification(folder=folder)
    result.file_problems, result.files_checked = check_files(folder, manifest)
    env = audit.environment()
    for key, label in (("tool_version", "freerun version"), ("git_commit", "freerun commit")):
        if manifest.get(key) != env[key]:
            result.notes.append(f"built with {label} {manifest.get(key) or '(none)'}, "
                                f"re-executed with {env[key] or '(none)'}")
    if files_only:
        result.rerun = "not run"
        return result
    if result.file_problems:
        result.rerun = "skipped"
        return result

    with tempfile.TemporaryDirectory(prefix="freerun-verify-") as tmp:
        out = Path(keep) if keep is not None else Path(tmp) / folder.name
        say(f"re-executing the calculation from {folder / INPUTS / RESOLVED_FILE} ...")
        try:
            again = build(folder / INPUTS / RESOLVED_FILE, out, pdf=False, fresh=True, progress=say)  # the PDF is no calculation
        except FreerunError as exc:
            result.rerun = "failed"
            result.rerun_problems.append(f"re-execution failed: {exc}")
            return result
        original_bytes = (folder / RESULTS_FILE).read_bytes()
        again_bytes = (again.folder / RESULTS_FILE).read_bytes()
        result.values_compared = len(flatten_results(built["results"]))
        if original_bytes != again_bytes:
            differing = compare_results(built["results"], again.results)
            result.rerun_problems.extend(differing or [f"{RESULTS_FILE}: same values, different bytes"])
        old_out, new_out = manifest.get("outputs_sha256", {}), again.manifest["outputs_sha256"]
        tables = [k for k in old_out if k.endswith((".csv", ".json")) and k != RESULTS_FILE]
        tables += [k for k in new_out if k.endswith((".csv", ".json")) and k != RESULTS_FILE and k not in old_out]
        result.tables_compared = len(tables)
        for rel in tables:
            if rel not in new_out:
                result.rerun_problems.append(f"{rel}: not produced on re-running")
            elif rel not in old_out:
                result.rerun_problems.append(f"{rel}: produced on re-running but not in the build")
            elif old_out[rel] != new_out[rel]:
                result.rerun_problems.append(f"{rel}: re-running gives different content")
        if not result.rerun_problems and again.manifest["digest"] != manifest.get("digest"):
            result.rerun_problems.append(
                f"{audit.MANIFEST_FILE}: re-run digest {again.manifest['digest'][:16]} differs from "
                f"{str(manifest.get('digest'))[:16]}")
    result.rerun = "differs" if result.rerun_problems else "identical"
    return result


def report_lines(result: Verification) -> list[str]:
    """What ``freerun verify`` prints."""
    lines = []
    if result.file_problems:
        lines.append(f"files: {len(result.file_problems)} problem(s) against {audit.MANIFEST_FILE}:")
        lines.extend(f"  TAMPERED {p}" for p in result.file_problems)
    else:
        lines.append(f"files: all {result.files_checked} files match {audit.MANIFEST_FILE}")
    if result.rerun == "identical":
        lines.append(f"re-run: {RESULTS_FILE} identical ({result.values_compared} values compared exactly), "
                     f"{result.tables_compared} tables and fragments identical, same digest")
    elif result.rerun == "skipped":
        lines.append("re-run: skipped — the files must match the manifest first")
    elif result.rerun == "not run":
        lines.append("re-run: not run (--files-only)")
    else:
        lines.append(f"re-run: {len(result.rerun_problems)} difference(s):")
        lines.extend(f"  DIFFERS {p}" for p in result.rerun_problems)
    lines.extend(f"note: {n}" for n in result.notes)
    if result.passed:
        lines.append(f"verify: PASSED {result.folder}")
    elif result.rerun == "not run" and not result.file_problems:
        lines.append(f"verify: files PASSED {result.folder} (re-execution not run: not a full verification)")
    else:
        lines.append(f"verify: FAILED {result.folder}")
    return lines
