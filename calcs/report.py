"""Assemble the HTML report from the executed stage notebooks.

Only what a stage chose to show reaches the report: Markdown cells and the
rich outputs (HTML tables, Markdown, PNG charts) of code cells. Code, its
prompts, stdout and stderr stay in the executed notebooks, which are the
calculation record. The page is self-contained: CSS inline, images as data
URIs, no script at all, so it opens offline and prints as it shows.
"""

from __future__ import annotations

import functools
import html
import re
from pathlib import Path
from typing import Any

import jinja2
import mistune
import nbformat

from .paths import STAGE_TITLES, STAGES, templates_dir
from .present import esc

_UNSAFE = re.compile(r"<\s*(script|iframe|object|embed|link|meta|base|form)\b|\son\w+\s*=|javascript:", re.I)
_HEADING = re.compile(r"<h([1-4])>(.*?)</h\1>", re.S)

_markdown = mistune.create_markdown(escape=True, plugins=["table"])


def _markdown_html(text: str) -> str:
    return str(_markdown(text))


def _safe(fragment: str) -> str:
    """A fragment with anything executable in it is shown as text instead."""
    if _UNSAFE.search(fragment):
        return f"<pre class=\"escaped\">{html.escape(fragment)}</pre>"
    return fragment


def _output_html(output: dict[str, Any]) -> str:
    if output.get("output_type") not in ("display_data", "execute_result"):
        return ""  # streams (stdout/stderr) and errors stay in the notebook
    data = output.get("data", {})
    if "image/png" in data:
        alt = esc(data.get("text/plain", "chart"))
        png = data["image/png"].replace("\n", "")
        return f'<figure><img src="data:image/png;base64,{png}" alt="{alt}"></figure>'
    if "text/html" in data:
        text = data["text/html"]
        return _safe("".join(text) if isinstance(text, list) else text)
    if "text/markdown" in data:
        text = data["text/markdown"]
        return _markdown_html("".join(text) if isinstance(text, list) else text)
    return ""


def notebook_html(path: str | Path) -> str:
    """The report content of one executed stage notebook."""
    nb = nbformat.read(str(path), as_version=4)
    parts: list[str] = []
    for cell in nb.cells:
        tags = cell.get("metadata", {}).get("tags", [])
        if "report-skip" in tags:
            continue
        if cell.cell_type == "markdown":
            parts.append(_markdown_html(cell.source))
        elif cell.cell_type == "code":
            parts.extend(_output_html(o) for o in cell.get("outputs", []))
    return "\n".join(p for p in parts if p)


def _shift_headings(fragment: str, section: str, toc: list[dict[str, Any]]) -> str:
    """Notebook headings move one level down in the report; collect the contents.

    A notebook's own title (its first '#' heading) is dropped: the report titles each stage itself.
    """
    fragment = re.sub(r"<h1>.*?</h1>", "", fragment, count=1, flags=re.S)
    counter = {"n": 0}

    def repl(match: re.Match[str]) -> str:
        level = min(int(match.group(1)) + 1, 5)
        counter["n"] += 1
        anchor = f"{section}-{counter['n']}"
        text = match.group(2)
        if level <= 3:
            toc.append({"level": level, "anchor": anchor, "text": re.sub(r"<[^>]+>", "", text)})
        return f'<h{level} id="{anchor}">{text}</h{level}>'

    return _HEADING.sub(repl, fragment)


def render_report(
    *,
    build_dir: Path,
    project: Any,
    results: dict[str, Any],
    audit: dict[str, Any],
    signatures: list[dict[str, Any]] | None = None,
    extra_cover: list[str] | None = None,
    changes: dict[str, Any] | None = None,
) -> str:
    """Render the whole report as one HTML string.

    Parameters
    ----------
    build_dir : Path
        Build folder holding ``notebooks/<stage>.ipynb``.
    project : calcs.project.Project
        The validated project (text is escaped by the template).
    results : dict
        The merged results.json content.
    audit : dict
        Tool and package versions, input digests, build times and parameters, for the appendix.
    signatures : list of dict, optional
        Signatures from ``signatures.json`` (role, name, note, time, digest), for the cover.
    changes : dict, optional
        Comparison with the previous revision (:func:`calcs.compare.compare_builds`), shown as
        "Changes since revision …" when given.
    """
    toc: list[dict[str, Any]] = []
    sections = []
    for stage in STAGES:
        nb = build_dir / "notebooks" / f"{stage}.ipynb"
        body = notebook_html(nb) if nb.is_file() else ""
        toc.append({"level": 2, "anchor": stage, "text": STAGE_TITLES[stage]})
        sections.append({"id": stage, "title": STAGE_TITLES[stage], "body": _shift_headings(body, stage, toc)})
    signatures = signatures or []
    status = status_of(signatures)
    decisions = _decisions(project, results)
    from .summary import executive_summary, read_defaults

    return _page(
        project=project,
        status=status,
        parameters_only=False,
        sections=[{**s, "body": jinja2.utils.markupsafe.Markup(s["body"])} for s in sections],
        toc=toc,
        signatures={s["role"]: s for s in signatures},
        decisions=decisions,
        audit=audit,
        extra_cover=extra_cover or [],
        changes=changes,
        summary=executive_summary(results, project, defaults=read_defaults(build_dir)),
    )


def render_parameters_page(*, project: Any, parameters: list[tuple[str, str]], status: str = "DRAFT") -> str:
    """The report page with its parameter list alone: the same HTML as that block of :func:`render_report`.

    The list depends only on the inputs, so a build has it laid out while the stages run
    (:func:`calcs.pdf_parts.ahead`). ``parameters``: :func:`calcs.project.flatten` of the project;
    ``status``: the report's (a build's is DRAFT).
    """
    return _page(project=project, status=status, parameters_only=True, audit={"parameters": parameters})


def _page(*, project: Any, **context: Any) -> str:
    css = (templates_dir() / "report.css").read_text(encoding="utf-8")
    return (_environment(str(templates_dir())).get_template("report.html.j2")
            .render(project=project, info=project.project, css=css, **context))


@functools.lru_cache(maxsize=4)
def _environment(folder: str) -> jinja2.Environment:
    """The report templates' environment, one per folder: it compiles each template once (≈ 0.05 s)
    and again only when the file changes."""
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(folder),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def status_of(signatures: list[dict[str, Any]]) -> str:
    """DRAFT until checked; CHECKED once checked; APPROVED once approved."""
    roles = {s["role"] for s in signatures}
    if "approved" in roles:
        return "APPROVED"
    if "checked" in roles:
        return "CHECKED"
    return "DRAFT"


def lookup(results: dict[str, Any], key: str) -> Any:
    """Value at a dotted key path in results.json, or None when absent."""
    node: Any = results
    for part in key.split("."):
        if not isinstance(node, dict) or part not in node:
            return None
        node = node[part]
    return node


def _decisions(project: Any, results: dict[str, Any]) -> list[dict[str, Any]]:
    rows = []
    for d in project.decisions:
        relied = []
        for key in d.relies_on:
            value = lookup(results, key)
            if isinstance(value, float):
                value = f"{value:,.1f}"
            relied.append({"key": key, "value": "not in results" if value is None else value})
        rows.append(
            {
                "id": d.id,
                "date": d.date.isoformat(),
                "by": d.by,
                "decision": d.decision,
                "rationale": d.rationale,
                "revision": d.revision or project.project.revision,
                "relies_on": relied,
            }
        )
    return rows
