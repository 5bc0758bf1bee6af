"""Stage cache for fast rebuilds.

Each stage's outputs (its folder in the build and its executed notebook) are stored under a key
made of:

* the template's bytes;
* the calculation code's version: the bytes of every ``calcs/*.py`` module;
* the stage's own inputs: the project sections the stage reads (:data:`STAGE_SECTIONS`), the
  defaults used within them, and for the climate stage the weather file's digest;
* the digests of the upstream stages' outputs.

A rebuild re-executes only the stages whose key changed: a new tariff changes the ``energy``
section, so only ``energy`` runs again; a new weather file changes the climate outputs, and so
every key downstream. A cache entry records the SHA-256 of each of its files; an entry whose files
no longer match is discarded and the stage re-executed.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from pathlib import Path
from typing import Any

from .audit import sha256_file
from .paths import STAGE_UPSTREAM, stage_template

#: Project sections each stage reads (its own inputs).
STAGE_SECTIONS: dict[str, tuple[str, ...]] = {
    "climate": ("site", "occupancy", "outdoor"),
    "loads": ("site", "occupancy", "zones"),
    "openings": ("sizing", "zones"),
    "comfort": ("operation", "outdoor", "sizing", "zones"),
    "energy": ("energy", "uncertainty", "operation", "outdoor", "sizing", "zones"),
}
ENTRY_MANIFEST = "entry.json"


def code_version() -> str:
    """SHA-256 over the calculation package's source files (names and bytes)."""
    digest = hashlib.sha256()
    for path in sorted(Path(__file__).resolve().parent.glob("*.py")):
        digest.update(path.name.encode())
        digest.update(path.read_bytes())
    return digest.hexdigest()


def folder_digest(folder: Path) -> str:
    """SHA-256 over every file of a folder (relative names and contents)."""
    digest = hashlib.sha256()
    for path in sorted(p for p in folder.rglob("*") if p.is_file()):
        digest.update(path.relative_to(folder).as_posix().encode())
        digest.update(sha256_file(path).encode())
    return digest.hexdigest()


def stage_key(stage: str, resolved: dict[str, Any], defaults: list[dict[str, Any]], weather_sha: str,
              upstream: dict[str, str], code: str) -> str:
    """The cache key of one stage (see the module docstring)."""
    sections = STAGE_SECTIONS[stage]
    own = {name: resolved.get(name) for name in sections}
    own_defaults = [d for d in defaults if d["key"].split(".")[0].split("[")[0] in sections]
    payload = {
        "stage": stage,
        "template": sha256_file(stage_template(stage)),
        "code": code,
        "inputs": own,
        "defaults": own_defaults,
        "weather": weather_sha if stage == "climate" else "",
        "upstream": {s: upstream[s] for s in STAGE_UPSTREAM[stage]},
    }
    return hashlib.sha256(json.dumps(payload, sort_keys=True, default=str).encode()).hexdigest()


class StageCache:
    """A folder of cached stage outputs, ``<root>/<stage>/<key>/``."""

    def __init__(self, root: Path) -> None:
        self.root = Path(root)

    def _entry(self, stage: str, key: str) -> Path:
        return self.root / stage / key

    def fetch(self, stage: str, key: str, work: Path) -> bool:
        """Copy a valid cached entry into the build folder; False when absent or corrupted (then removed)."""
        entry = self._entry(stage, key)
        manifest = entry / ENTRY_MANIFEST
        if not manifest.is_file():
            return False
        try:
            recorded = json.loads(manifest.read_text(encoding="utf-8"))["files"]
        except (ValueError, KeyError):
            shutil.rmtree(entry, ignore_errors=True)
            return False
        for name, digest in recorded.items():
            path = entry / name
            if not path.is_file() or sha256_file(path) != digest:
                shutil.rmtree(entry, ignore_errors=True)
                return False
        shutil.copytree(entry / "stage", work / stage, dirs_exist_ok=True)
        (work / "notebooks").mkdir(parents=True, exist_ok=True)
        shutil.copy2(entry / "notebook.ipynb", work / "notebooks" / f"{stage}.ipynb")
        return True

    def store(self, stage: str, key: str, work: Path) -> None:
        """Store a freshly executed stage (written to a temporary folder, then renamed into place)."""
        entry = self._entry(stage, key)
        if entry.exists():
            return
        tmp = entry.parent / f".{key}.tmp-{os.getpid()}"
        if tmp.exists():
            shutil.rmtree(tmp)
        shutil.copytree(work / stage, tmp / "stage")
        shutil.copy2(work / "notebooks" / f"{stage}.ipynb", tmp / "notebook.ipynb")
        files = {p.relative_to(tmp).as_posix(): sha256_file(p) for p in sorted(tmp.rglob("*")) if p.is_file()}
        (tmp / ENTRY_MANIFEST).write_text(json.dumps({"stage": stage, "key": key, "files": files}, indent=1),
                                          encoding="utf-8")
        try:
            os.replace(tmp, entry)
        except OSError:  # another build stored it first
            shutil.rmtree(tmp, ignore_errors=True)


class DigestedFiles:
    """Byte strings by key in a folder, for the caches beside the stage cache (laid-out PDF parts,
    rendered charts).

    An entry ``<key><suffix>`` holds the SHA-256 of the bytes (32 bytes), then the bytes; one
    that does not match its digest is not returned (its maker renders it again). Written under a
    temporary name, then renamed, so a reader never sees half an entry; beyond ``entries`` the
    least recently used go first. A folder that cannot be written only costs time.
    """

    def __init__(self, folder: str | os.PathLike, suffix: str, entries: int) -> None:
        self.folder = Path(folder)
        self._suffix = suffix
        self._entries = entries

    def _path(self, key: str) -> Path:
        return self.folder / f"{key}{self._suffix}"

    def has(self, key: str) -> bool:
        """Whether an entry ``key`` is there (its digest is checked by :meth:`get`)."""
        return self._path(key).is_file()

    def get(self, key: str) -> bytes | None:
        path = self._path(key)
        try:
            data = path.read_bytes()
            if hashlib.sha256(data[32:]).digest() != data[:32]:
                return None
            os.utime(path)  # recently used
        except OSError:
            return None
        return data[32:]

    def put(self, key: str, data: bytes) -> None:
        path = self._path(key)
        tmp = path.with_name(f".{path.name}.{os.getpid()}")
        try:
            self.folder.mkdir(parents=True, exist_ok=True)
            tmp.write_bytes(hashlib.sha256(data).digest() + data)
            os.replace(tmp, path)
            entries = sorted(self.folder.glob(f"*{self._suffix}"), key=lambda p: p.stat().st_mtime)
            for old in entries[:-self._entries]:
                old.unlink(missing_ok=True)
        except OSError:
            tmp.unlink(missing_ok=True)
