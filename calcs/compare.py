"""Comparing two builds: inputs that differ and results that moved.

One comparison serves ``freerun compare`` (terminal, HTML page, JSON) and the
report's "changes since the previous revision" section, so the two always
agree.

What is compared
----------------
* **Inputs** — every parameter as used, from each build's
  ``inputs/project.resolved.json``, flattened to key paths written as for
  ``--set`` (``zones.north.floor_area``; items of a list are named by their
  ``name`` or ``id``). Input files other than the project file and the files
  derived from it are compared by SHA-256 (a weather file with the same name
  but other content shows up here). The project file itself is compared
  parameter by parameter, so an edit to its comments alone is no difference.
* **Results** — every leaf of ``results.json``. Numbers are compared exactly;
  each moved number gets its change and its % change (relative to the first
  build; none when that value was 0).
* **Tool** — freerun version, git commit, Python and key package versions,
  listed so a moved result can be put down to a code change.

Headline results (what ``--fail-above`` watches): the numeric values held
directly under a key of results.json — not the elements of lists (monthly
values, bands), not true/false flags, and not counts of hours (keys ending in
``hours``: hours in the year, occupied hours, filled hours), which describe the
weather year and calendar rather than the outcome.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

from .audit import MANIFEST_FILE
from .errors import FreerunError
from .project import DEFAULTS_FILE, PROJECT_FILE, RESOLVED_FILE

RESULTS_FILE = "results.json"
INPUTS = "inputs"
#: Input files whose content the parameter comparison already covers.
DERIVED_INPUTS = {PROJECT_FILE, RESOLVED_FILE, DEFAULTS_FILE, "overrides.json"}
_ABSENT = "(absent)"


# --------------------------------------------------------------------------- reading builds


def read_json(path: Path) -> Any:
    """A JSON file of a build, or one clear error naming it."""
    if not path.is_file():
        msg = f"{path}: not found; is {path.parent} a freerun build folder?"
        raise FreerunError(msg)
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        msg = f"{path}: not valid JSON ({exc}); the build folder is damaged — rebuild it"
        raise FreerunError(msg) from None


def read_build(folder: str | Path) -> dict[str, Any]:
    """A build folder's manifest, resolved project and results (errors name the missing file)."""
    folder = Path(folder)
    if not folder.is_dir():
        msg = f"{folder}: no such build folder (expected a folder written by `freerun build`)"
        raise FreerunError(msg)
    if not (folder / MANIFEST_FILE).is_file():
        msg = f"{folder}: not a freerun build folder (no {MANIFEST_FILE}); give the folder that holds report.html"
        raise FreerunError(msg)
    return {
        "folder": folder,
        "manifest": read_json(folder / MANIFEST_FILE),
        "resolved": read_json(folder / INPUTS / RESOLVED_FILE),
        "results": read_json(folder / RESULTS_FILE),
    }


# --------------------------------------------------------------------------- flattening


def flatten_inputs(node: Any, prefix: str = "") -> dict[str, Any]:
    """Parameters as ``key.path → value``; list items of tables are named by ``name`` or ``id``."""
    out: dict[str, Any] = {}
    if isinstance(node, dict):
        for key, value in node.items():
            out.update(flatten_inputs(value, f"{prefix}.{key}" if prefix else str(key)))
    elif isinstance(node, list) and node and all(isinstance(v, dict) for v in node):
        for index, item in enumerate(node):
            label = item.get("name", item.get("id", index))
            out.update(flatten_inputs(item, f"{prefix}.{label}"))
    else:
        out[prefix] = node
    return out


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def flatten_results(node: Any, prefix: str = "") -> dict[str, tuple[Any, bool]]:
    """Results as ``key → (value, headline)``; lists of numbers are split into ``key[i]``."""
    out: dict[str, tuple[Any, bool]] = {}
    if isinstance(node, dict):
        for key, value in node.items():
            path = f"{prefix}.{key}" if prefix else str(key)
            if isinstance(value, (dict, list)):
                out.update(flatten_results(value, path))
            else:
                out[path] = (value, is_headline(path, value))
    elif isinstance(node, list):
        if all(_is_number(v) or v is None for v in node):
            for index, value in enumerate(node):
                out[f"{prefix}[{index}]"] = (value, False)
        elif all(isinstance(v, dict) for v in node) and node:
            for index, value in enumerate(node):
                out.update(flatten_results(value, f"{prefix}[{index}]"))
        else:
            out[prefix] = (node, False)  # e.g. a list of month names: one value
    else:
        out[prefix] = (node, is_headline(prefix, node))
    return out


def is_headline(key: str, value: Any) -> bool:
    """A number directly under a key, other than a count of hours (see the module docstring)."""
    return _is_number(value) and not key.rsplit(".", 1)[-1].endswith("hours")


# --------------------------------------------------------------------------- formatting


def show_value(value: Any) -> str:
    """A value as the comparison prints it: numbers to 6 significant figures, other values as JSON."""
    if value is None:
        return "null"
    if _is_number(value):
        return f"{value:.6g}" if isinstance(value, float) else str(value)
    return json.dumps(value, ensure_ascii=False)


def _show_change(change: float | None) -> str:
    return "" if change is None else f"{change:+.6g}"


def _show_pct(row: dict[str, Any]) -> str:
    if row["pct"] is not None:
        return f"{row['pct']:+.2f} %"
    return "from 0" if row.get("from_zero") else ""


# --------------------------------------------------------------------------- comparing


def _label(build: dict[str, Any], name: str | None = None) -> dict[str, Any]:
    m = build["manifest"]
    return {
        "folder": name or Path(build["folder"]).name,
        "job_number": m.get("job_number", ""),
        "revision": m.get("revision", ""),
        "digest": m.get("digest", ""),
        "finished": m.get("finished", ""),
        "overrides": list(m.get("overrides", [])),
    }


def compare_builds(a: dict[str, Any], b: dict[str, Any], *, name_a: str | None = None,
                   name_b: str | None = None) -> dict[str, Any]:
    """Compare two builds read by :func:`read_build`; the answer is plain JSON-ready data."""
    pa, pb = flatten_inputs(a["resolved"]), flatten_inputs(b["resolved"])
    inputs = []
    for key in [*pa, *(k for k in pb if k not in pa)]:
        old, new = pa.get(key, _ABSENT), pb.get(key, _ABSENT)
        if old != new or (key in pa) != (key in pb):
            inputs.append({"key": key,
                           "old": _ABSENT if key not in pa else show_value(old),
                           "new": _ABSENT if key not in pb else show_value(new)})

    fa, fb = a["manifest"].get("inputs_sha256", {}), b["manifest"].get("inputs_sha256", {})
    files = [
        {"file": name, "old": fa.get(name, _ABSENT), "new": fb.get(name, _ABSENT)}
        for name in sorted(set(fa) | set(fb))
        if name not in DERIVED_INPUTS and fa.get(name) != fb.get(name)
    ]

    tool = []
    for key in ("tool_version", "git_commit", "python"):
        if a["manifest"].get(key) != b["manifest"].get(key):
            tool.append({"key": key, "old": str(a["manifest"].get(key, "")), "new": str(b["manifest"].get(key, ""))})
    ka, kb = a["manifest"].get("packages", {}), b["manifest"].get("packages", {})
    for name in sorted(set(ka) | set(kb)):
        if ka.get(name) != kb.get(name):
            tool.append({"key": f"packages.{name}", "old": ka.get(name, _ABSENT), "new": kb.get(name, _ABSENT)})

    ra, rb = flatten_results(a["results"]), flatten_results(b["results"])
    results = []
    for key in [*ra, *(k for k in rb if k not in ra)]:
        old, old_head = ra.get(key, (None, False))
        new, new_head = rb.get(key, (None, False))
        if key in ra and key in rb and type(old) is type(new) and old == new:
            continue
        if key in ra and key in rb and _is_number(old) and _is_number(new) and old == new:
            continue  # 2 and 2.0: the same number
        row: dict[str, Any] = {
            "key": key,
            "old": old if key in ra else None, "new": new if key in rb else None,
            "old_text": show_value(old) if key in ra else _ABSENT,
            "new_text": show_value(new) if key in rb else _ABSENT,
            "change": None, "pct": None, "from_zero": False,
            "headline": bool(old_head or new_head) and key in ra and key in rb,
        }
        if key in ra and key in rb and _is_number(old) and _is_number(new):
            row["change"] = new - old
            if old != 0:
                row["pct"] = 100.0 * (new - old) / abs(old)
            else:
                row["from_zero"] = True
        row["change_text"] = _show_change(row["change"])
        row["pct_text"] = _show_pct(row)
        results.append(row)

    return {
        "a": _label(a, name_a),
        "b": _label(b, name_b),
        "inputs": inputs,
        "files": files,
        "tool": tool,
        "results": results,
        "results_compared": len(set(ra) | set(rb)),
        "headline_compared": sum(1 for _, head in {**ra, **rb}.values() if head),
    }


def above(comparison: dict[str, Any], pct: float) -> list[dict[str, Any]]:
    """Headline results that moved by more than ``pct`` % (any move away from 0 counts), largest first."""
    out = []
    for row in comparison["results"]:
        if not row["headline"] or row["change"] is None:
            continue
        moved = math.inf if row["from_zero"] else abs(row["pct"])
        if moved > pct:
            out.append((moved, row))
    return [row for _, row in sorted(out, key=lambda item: -item[0])]


def terminal_lines(comparison: dict[str, Any], names: tuple[str, str]) -> list[str]:
    """The comparison as plain text lines for the terminal."""

    def describe(side: dict[str, Any], name: str) -> str:
        text = f"{name} ({side['job_number']} revision {side['revision']}, digest {side['digest'][:12]}"
        if side["overrides"]:
            text += ", overrides: " + "; ".join(side["overrides"])
        return text + ")"

    c = comparison
    lines = [f"A: {describe(c['a'], names[0])}", f"B: {describe(c['b'], names[1])}"]
    lines.append(f"inputs that differ: {len(c['inputs']) + len(c['files'])}")
    for row in c["inputs"]:
        lines.append(f"  {row['key']}: {row['old']} -> {row['new']}")
    for row in c["files"]:
        lines.append(f"  file inputs/{row['file']} (SHA-256): {row['old'][:12]} -> {row['new'][:12]}")
    lines.append(f"results that moved: {len(c['results'])} of {c['results_compared']} compared "
                 f"(* = headline, {c['headline_compared']} headline results)")
    for row in c["results"]:
        mark = "*" if row["headline"] else " "
        change = f"  change {row['change_text']}" if row["change_text"] else ""
        pct = f" ({row['pct_text']})" if row["pct_text"] else ""
        lines.append(f" {mark} {row['key']}: {row['old_text']} -> {row['new_text']}{change}{pct}")
    if c["tool"]:
        lines.append(f"tool and packages that differ: {len(c['tool'])}")
        for row in c["tool"]:
            lines.append(f"  {row['key']}: {row['old']} -> {row['new']}")
    return lines


def render_page(comparison: dict[str, Any], names: tuple[str, str]) -> str:
    """The comparison as a self-contained HTML page (house style, no scripts)."""
    import jinja2

    from .paths import templates_dir

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(templates_dir())), autoescape=True,
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    css = (templates_dir() / "report.css").read_text(encoding="utf-8")
    return env.get_template("compare.html.j2").render(changes=comparison, names=names, css=css)


# --------------------------------------------------------------------------- revision history


def previous_build(target: Path, job_number: str, revision: str) -> Path | None:
    """The most recently finished build of another revision of the same job beside ``target``.

    Candidates are the sibling folders holding a manifest, results and resolved project,
    excluding hidden (partial) folders, ``*.failed`` folders and check runs (``*-check`` or a
    manifest with overrides), and any build of ``revision`` itself.
    """
    parent = target.parent
    if not parent.is_dir():
        return None
    best: tuple[str, Path] | None = None
    for folder in sorted(parent.iterdir()):
        name = folder.name
        if (not folder.is_dir() or folder == target or name.startswith(".") or name.endswith(".failed")
                or name.endswith("-check")):
            continue
        try:
            manifest = json.loads((folder / MANIFEST_FILE).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if (not isinstance(manifest, dict) or manifest.get("job_number") != job_number
                or manifest.get("revision") == revision or manifest.get("overrides")
                or not (folder / RESULTS_FILE).is_file() or not (folder / INPUTS / RESOLVED_FILE).is_file()):
            continue
        finished = str(manifest.get("finished", ""))
        if best is None or finished > best[0]:
            best = (finished, folder)
    return best[1] if best else None


def decisions_entered(resolved: dict[str, Any], revision: str, previous: dict[str, Any] | None) -> dict[str, str]:
    """The revision at which each decision entered the log.

    A decision's own ``revision`` wins; otherwise the previous revision's record of it; otherwise,
    for a decision the previous revision's project already held, that revision; otherwise this one.
    """
    before: dict[str, str] = {}
    if previous is not None:
        before = {str(k): str(v) for k, v in (previous["manifest"].get("decisions_entered") or {}).items()}
        for d in previous["resolved"].get("decisions", []):
            before.setdefault(str(d.get("id")), d.get("revision") or previous["manifest"].get("revision", ""))
    out = {}
    for d in resolved.get("decisions", []):
        out[str(d["id"])] = d.get("revision") or before.get(str(d["id"])) or revision
    return out


def record_history(work: Path, target: Path, manifest: dict[str, Any]) -> dict[str, Any]:
    """Add the previous-revision comparison and decision revisions to a new build's manifest.

    ``work`` is the build being written (not yet in place), ``target`` the folder it will become.
    Rewrites ``work/manifest.json`` and returns the updated manifest.
    """
    from .stage import dump_json

    current = {"folder": work, "manifest": manifest, "resolved": read_json(work / INPUTS / RESOLVED_FILE),
               "results": read_json(work / RESULTS_FILE)}
    found = previous_build(target, manifest.get("job_number", ""), manifest.get("revision", ""))
    previous = None
    if found is not None:
        try:
            previous = read_build(found)
        except FreerunError:
            previous = None
    manifest = dict(manifest)
    manifest["decisions_entered"] = decisions_entered(current["resolved"], manifest.get("revision", ""), previous)
    manifest["changes_since_previous"] = (
        compare_builds(previous, current, name_b=target.name) if previous is not None else None
    )
    path = work / MANIFEST_FILE
    tmp = path.with_suffix(".json.tmp")
    tmp.write_text(dump_json(manifest), encoding="utf-8")
    tmp.replace(path)
    return manifest


def with_entered_revisions(project: Any, entered: dict[str, str] | None) -> Any:
    """The project with each decision's blank ``revision`` filled from ``entered`` (for the report)."""
    if not entered:
        return project
    decisions = tuple(
        d if d.revision or d.id not in entered else d.model_copy(update={"revision": entered[d.id]})
        for d in project.decisions
    )
    return project.model_copy(update={"decisions": decisions})
