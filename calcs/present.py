"""Showing results in a stage template: text, tables and charts.

Everything a template shows goes through these helpers so that the report
reads the same everywhere and text from the project file is always escaped
(a zone named ``<b>x</b>`` shows as those characters and runs nothing).
Charts are rendered to static PNG images (vl-convert), so the report needs
no script and opens offline.
"""

from __future__ import annotations

import html
import re
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import pandas as pd

_MD_SPECIAL = re.compile(r"([\\`*_{}\[\]()#+\-.!|<>&~])")


def esc(text: Any) -> str:
    """Escape project text for insertion into HTML."""
    return html.escape(str(text), quote=True)


def md_esc(text: Any) -> str:
    """Escape project text for insertion into Markdown (no markup survives)."""
    return _MD_SPECIAL.sub(r"\\\1", html.escape(str(text), quote=False))


def num(value: Any, digits: int = 1, unit: str = "") -> str:
    """A number with a fixed count of decimals and its unit; '–' for missing."""
    if value is None or (isinstance(value, float) and value != value):
        return "–"
    text = f"{value:,.{digits}f}"
    if text in ("-0", "-0.0", "-0.00"):
        text = text[1:]
    return f"{text} {unit}".strip() if unit else text


def show_markdown(text: str) -> None:
    """Display Markdown written by the template (escape project text with :func:`md_esc`)."""
    from IPython.display import Markdown, display

    display(Markdown(text))


def show_html(fragment: str) -> None:
    from IPython.display import HTML, display

    display(HTML(fragment))


def table_html(
    frame: pd.DataFrame,
    *,
    caption: str,
    columns: Mapping[str, str] | None = None,
    formats: Mapping[str, Callable[[Any], str] | int] | None = None,
    index: bool = True,
    index_label: str = "",
    notes: Sequence[str] = (),
) -> str:
    """An escaped HTML table with a caption, header labels (with units) and number formats.

    Parameters
    ----------
    frame : DataFrame
        Data to show.
    caption : str
        Table caption (plain text).
    columns : mapping, optional
        Column name → header label (e.g. ``{"mean_C": "Mean [°C]"}``); columns not named are dropped.
    formats : mapping, optional
        Column name → decimals (int) or a formatting function.
    """
    columns = dict(columns) if columns else {c: str(c) for c in frame.columns}
    formats = dict(formats or {})
    head = "".join(f"<th>{esc(label)}</th>" for label in columns.values())
    if index:
        head = f"<th>{esc(index_label)}</th>" + head
    rows = []
    for key, row in frame.iterrows():
        cells = []
        if index:
            cells.append(f'<th scope="row">{esc(key)}</th>')
        for col in columns:
            value = row[col]
            fmt = formats.get(col)
            if callable(fmt):
                text = fmt(value)
            elif isinstance(value, bool) or (hasattr(value, "dtype") and value.dtype == bool):
                text = "yes" if value else "no"
            elif isinstance(value, (int, float)) and not isinstance(value, bool):
                text = num(value, fmt if isinstance(fmt, int) else 1)
            else:
                text = str(value)
            klass = ' class="num"' if isinstance(value, (int, float)) and not isinstance(value, bool) else ""
            cells.append(f"<td{klass}>{esc(text)}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    foot = "".join(f"<p class=\"table-note\">{esc(n)}</p>" for n in notes)
    return (
        f'<table class="data"><caption>{esc(caption)}</caption>'
        f"<thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>{foot}"
    )


def show_table(frame: pd.DataFrame, **kwargs: Any) -> None:
    """Display :func:`table_html` in the notebook (and so in the report)."""
    show_html(table_html(frame, **kwargs))


def show_png(data: bytes, alt: str) -> None:
    """Display a PNG image with alternative text (kept in the report)."""
    import base64

    from IPython.display import display

    display({"image/png": base64.b64encode(data).decode("ascii"), "text/plain": alt}, raw=True)


_ITEM_KEY = re.compile(r"\[('(?:[^'\\]|\\.)*'|\"(?:[^\"\\]|\\.)*\")\]")


def defaults_frame(rows: Sequence[Mapping[str, str]]) -> pd.DataFrame:
    """Defaults used, with the same default in several zones shown once and the zones listed.

    ``rows`` are as from :func:`calcs.project.defaults_used`; a key such as
    ``zones['north'].wall_u`` is shown as ``zones[].wall_u`` with "north" under "Where".
    """
    grouped: dict[tuple[str, str], dict[str, Any]] = {}
    for row in rows:
        labels = [m.group(1)[1:-1] for m in _ITEM_KEY.finditer(row["key"])]
        generic = _ITEM_KEY.sub("[]", row["key"])
        entry = grouped.setdefault((generic, row["value"]), {**row, "key": generic, "where": []})
        if labels:
            entry["where"].append(" / ".join(labels))
    frame = pd.DataFrame(
        [{**v, "where": ", ".join(v["where"]) or "project"} for v in grouped.values()],
        columns=["key", "value", "unit", "where", "source"],
    )
    return frame.set_index("key")


def show_defaults(rows: Sequence[Mapping[str, str]], caption: str) -> None:
    """Show the defaults used (grouped by :func:`defaults_frame`), or say that none was used."""
    if not rows:
        show_markdown(f"{caption}: none — every value was given in the project file.")
        return
    show_table(defaults_frame(rows), caption=caption,
               columns={"value": "Value", "unit": "Unit", "where": "Where", "source": "Source"}, index_label="Key")
