"""``freerun sign``: signatures on a build, and the immutability of signed builds.

A signature is recorded in ``signatures.json`` in the build folder with the
manifest's calculation digest, the SHA-256 of ``manifest.json`` and the time
(UTC); the report cover is then re-rendered from the build's own notebooks.

Rules
-----
* Roles sign in order: prepared, then checked, then approved; each role once.
* One person signs one role: the checker may not be the preparer, and the
  approver may be neither of them. Names are compared ignoring case and
  repeated spaces.
* Signing is refused when the build's files no longer match its manifest
  (see :func:`calcs.verify.check_files`), and for a check run (a build with
  ``--set`` overrides): only the build of the project file as written is a
  deliverable.
* Status: DRAFT until checked, then CHECKED, then APPROVED
  (:func:`calcs.report.status_of`).
* A build with any signature is never rebuilt in place: ``freerun build``
  refuses and asks for ``--new-revision``.
"""

from __future__ import annotations

import datetime as dt
import json
import os
import re
from pathlib import Path
from typing import Any

from . import audit
from .errors import FreerunError

ROLES: tuple[str, ...] = ("prepared", "checked", "approved")
SIGNATURES_FILE = "signatures.json"
NAME_MAX, NOTE_MAX = 120, 2000
_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


def read_signatures(folder: str | Path) -> list[dict[str, Any]]:
    """The signatures recorded in a build folder (an empty list when none)."""
    path = Path(folder) / SIGNATURES_FILE
    if not path.exists():
        return []
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        msg = f"{path}: not valid JSON ({exc}); it was not written by `freerun sign`"
        raise FreerunError(msg) from None
    items = data.get("signatures") if isinstance(data, dict) else None
    if not isinstance(items, list):
        msg = f"{path}: expected an object with a 'signatures' list; it was not written by `freerun sign`"
        raise FreerunError(msg)
    for i, s in enumerate(items):
        ok = (isinstance(s, dict) and s.get("role") in ROLES
              and all(isinstance(s.get(k), str) for k in ("name", "time", "digest")))
        if not ok:
            msg = (f"{path}: signatures[{i}] needs role ({', '.join(ROLES)}), name, time and digest; "
                   "it was not written by `freerun sign`")
            raise FreerunError(msg)
    return items


def _person(name: str) -> str:
    return " ".join(name.split()).casefold()


def refuse_if_signed(target: Path) -> None:
    """Refuse to rebuild a folder whose build carries any signature."""
    signatures = read_signatures(target) if target.is_dir() else []
    if signatures:
        who = ", ".join(f"{s['role']} by {s['name']}" for s in signatures)
        msg = (f"{target}: this build is signed ({who}); a signed build is never rebuilt — build the next revision "
               "with --new-revision REV, or a check run with --set (nothing was changed)")
        raise FreerunError(msg)


def _clean_text(label: str, value: str, limit: int, required: bool) -> str:
    text = " ".join(value.split()) if label == "--name" else value.strip()
    if required and not text:
        msg = f"{label} {value!r}: give the signatory's name (1–{limit} characters)"
        raise FreerunError(msg)
    if len(text) > limit:
        msg = f"{label}: {len(text)} characters; at most {limit} allowed"
        raise FreerunError(msg)
    if _CONTROL.search(text.replace("\n", " ") if label == "--note" else text):
        msg = f"{label} {value!r}: control characters are not allowed"
        raise FreerunError(msg)
    return text


def sign(folder: str | Path, role: str, name: str, note: str = "", *,
         now: dt.datetime | None = None) -> dict[str, Any]:
    """Record one signature on a build and re-render its report; return the new state.

    Returns
    -------
    dict
        ``signatures`` (all, in order), ``status`` and ``report`` (path of the re-rendered report).

    Raises
    ------
    FreerunError
        One line naming the build folder and why signing is refused; nothing is changed.
    """
    from .build import render_into
    from .compare import read_build
    from .project import RESOLVED_FILE, load_project
    from .report import status_of
    from .stage import dump_json
    from .verify import check_files

    folder = Path(folder)
    if role not in ROLES:
        msg = f"--role {role!r}: must be one of {', '.join(ROLES)}"
        raise FreerunError(msg)
    name = _clean_text("--name", name, NAME_MAX, required=True)
    note = _clean_text("--note", note or "", NOTE_MAX, required=False)
    built = read_build(folder)
    manifest = built["manifest"]
    refused = f"sign refused: {folder}:"
    if manifest.get("overrides"):
        msg = (f"{refused} a check run (overrides: {'; '.join(manifest['overrides'])}); only the build of the "
               "project file as written is signed (nothing was changed)")
        raise FreerunError(msg)
    problems, _ = check_files(folder, manifest)
    if problems:
        more = f" (and {len(problems) - 1} more)" if len(problems) > 1 else ""
        msg = (f"{refused} {problems[0]}{more}; the build's files no longer match its manifest — run "
               "`freerun verify` for the full list and rebuild (nothing was signed)")
        raise FreerunError(msg)
    signatures = read_signatures(folder)
    by_role = {s["role"]: s for s in signatures}
    if role in by_role:
        s = by_role[role]
        msg = f"{refused} already signed as {role} by {s['name']} on {s['time'][:10]}; each role signs once"
        raise FreerunError(msg)
    missing = [r for r in ROLES[: ROLES.index(role)] if r not in by_role]
    if missing:
        msg = (f"{refused} cannot sign as {role} before the build is signed as {missing[0]}; "
               f"roles sign in the order {', '.join(ROLES)}")
        raise FreerunError(msg)
    for s in signatures:
        if _person(s["name"]) == _person(name):
            msg = (f"{refused} --name {name!r} already signed this build as {s['role']}; one person signs one "
                   "role (the checker is not the preparer, the approver neither of them)")
            raise FreerunError(msg)

    when = (now or dt.datetime.now(dt.timezone.utc)).astimezone(dt.timezone.utc).replace(microsecond=0)
    record = {
        "role": role,
        "name": name,
        "note": note,
        "time": when.isoformat(),
        "digest": manifest["digest"],
        "manifest_sha256": audit.sha256_file(folder / audit.MANIFEST_FILE),
    }
    new = [*signatures, record]
    project = load_project(folder / "inputs" / RESOLVED_FILE)
    # the report first (replaced atomically): if it cannot be rendered, nothing is signed
    report = render_into(folder, project, built["results"], manifest, signatures=new)
    path = folder / SIGNATURES_FILE
    tmp = path.with_name(f".{SIGNATURES_FILE}.tmp")
    content = {"job_number": manifest.get("job_number", ""), "revision": manifest.get("revision", ""),
               "digest": manifest["digest"], "signatures": new}
    try:
        tmp.write_text(dump_json(content), encoding="utf-8")
        os.replace(tmp, path)
    except OSError as exc:
        render_into(folder, project, built["results"], manifest, signatures=signatures)
        msg = f"{path}: cannot be written ({exc.strerror}); the signature was not recorded and the report is as before"
        raise FreerunError(msg) from None
    return {"signatures": new, "status": status_of(new), "report": report}
