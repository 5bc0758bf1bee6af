"""Digests and version records for the audit trail.

``manifest.json`` binds a build's inputs and results together: SHA-256 of
every input file and of every calculation output (executed notebooks, data
tables, charts, results.json), the tool version and git commit, Python and
key package versions, the overrides given, and build times. One digest over
the input and output digests identifies the calculation.
"""

from __future__ import annotations

import hashlib
import platform
import subprocess
from importlib import metadata
from pathlib import Path
from typing import Any

from . import __version__

KEY_PACKAGES = (
    "numpy", "pandas", "pvlib", "pydantic", "papermill", "nbconvert", "nbformat", "ipykernel",
    "altair", "vl-convert-python", "jinja2", "mistune", "weasyprint", "pyarrow",
)
MANIFEST_FILE = "manifest.json"
# Files in a build folder that are not calculation outputs (they change on signing or re-rendering).
NOT_HASHED = {MANIFEST_FILE, "signatures.json", "report.html", "report.pdf"}


def sha256_file(path: str | Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def package_versions(names: tuple[str, ...] = KEY_PACKAGES) -> dict[str, str]:
    out = {}
    for name in names:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def git_commit(folder: Path | None = None) -> str:
    """The commit of the freerun source checkout, or '' when not in a git checkout."""
    folder = folder or Path(__file__).resolve().parent.parent
    if not (folder / ".git").exists():
        return ""
    try:
        done = subprocess.run(
            ["git", "-C", str(folder), "rev-parse", "HEAD"], capture_output=True, text=True, timeout=10, check=False
        )
    except (OSError, subprocess.SubprocessError):
        return ""
    commit = done.stdout.strip()
    if commit and done.returncode == 0:
        dirty = subprocess.run(
            ["git", "-C", str(folder), "status", "--porcelain", "--untracked-files=no", "--", "calcs", "templates"],
            capture_output=True, text=True, timeout=10, check=False,
        ).stdout.strip()
        return commit + ("+modified" if dirty else "")
    return ""


def hash_tree(root: Path, subfolders: tuple[str, ...]) -> dict[str, str]:
    """SHA-256 of every file under the given subfolders of ``root``, keyed by relative path."""
    out: dict[str, str] = {}
    for sub in subfolders:
        base = root / sub
        if base.is_file():
            out[sub] = sha256_file(base)
            continue
        for path in sorted(base.rglob("*")):
            if path.is_file() and path.name not in NOT_HASHED:
                out[path.relative_to(root).as_posix()] = sha256_file(path)
    return out


def hash_inputs(inputs: Path) -> dict[str, str]:
    """SHA-256 of every file in a build's ``inputs/`` folder, keyed by path relative to it."""
    return {
        path.relative_to(inputs).as_posix(): sha256_file(path)
        for path in sorted(inputs.rglob("*"))
        if path.is_file()
    }


def combined_digest(inputs: dict[str, str], outputs: dict[str, str]) -> str:
    """One SHA-256 over the sorted input and output digests: the calculation's identity."""
    digest = hashlib.sha256()
    for label, table in (("inputs", inputs), ("outputs", outputs)):
        for name in sorted(table):
            digest.update(f"{label}\t{name}\t{table[name]}\n".encode())
    return digest.hexdigest()


def calculation_digest(inputs: dict[str, str], outputs: dict[str, str]) -> str:
    """The manifest ``digest``: inputs plus the deterministic outputs (CSV and JSON; not notebooks or charts)."""
    deterministic = {k: v for k, v in outputs.items() if k.endswith((".csv", ".json"))}
    return combined_digest(inputs, deterministic)


def environment() -> dict[str, Any]:
    return {
        "tool_version": __version__,
        "git_commit": git_commit(),
        "python": platform.python_version(),
        "platform": platform.platform(),
        "packages": package_versions(),
    }
