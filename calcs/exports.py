"""Every table of the report as CSV, and all of them in one workbook.

The tables are read back from the rendered ``report.html`` (every ``<table>``:
stage tables, the executive summary, the cover facts and sign-off, the
decision log, the audit appendix), so the exports hold exactly what the
report shows, at the precision it shows. The full-precision data tables of
each stage stay in ``<build>/<stage>/*.csv``.

Written into ``<build>/exports/``:

* ``NN_<name>.csv`` — one file per table, in report order; the first row is
  the header (units in brackets, as in the report), numbers without
  thousands separators, a missing value ("–") as an empty cell;
* ``index.csv`` — sheet name, CSV file, report section and full caption of
  every table;
* ``report_tables.xlsx`` — one sheet per table holding the same values as its
  CSV (numbers as numbers, with the report's decimals as number format), and
  the index as the first sheet.

The exports are renderings of report.html, like report.pdf: they are written
after the manifest, are not part of its digest, and are re-written whenever
the report is re-rendered (on signing). The workbook is written
deterministically (fixed zip times and document dates), so the same report
gives the same bytes.
"""

from __future__ import annotations

import csv
import io
import os
import re
import shutil
import zipfile
from dataclasses import dataclass, field
from html.parser import HTMLParser
from pathlib import Path

from .errors import FreerunError

EXPORTS_DIR = "exports"
WORKBOOK = "report_tables.xlsx"
INDEX = "index.csv"
INDEX_SHEET = "Index"
INDEX_HEADER = ("Sheet", "CSV file", "Section", "Table")
#: Names for tables that have neither caption nor heading of their own, by CSS class.
CLASS_NAMES = {"cover-facts": "Project", "signoff": "Sign-off", "facts": "Build record"}
_FIXED_TIME = (2000, 1, 1, 0, 0, 0)
_NUMBER = re.compile(r"^[-−]?(?:0|[1-9]\d{0,2}(?:,\d{3})+|[1-9]\d*)(?:\.(\d+))?$")
_SHEET_BAD = re.compile(r"[\[\]:*?/\\]")


@dataclass
class Table:
    """One table of the report: where it is, its name, header and rows of cell texts."""

    section: str
    caption: str
    heading: str
    klass: str
    header: list[str] = field(default_factory=list)
    rows: list[list[str]] = field(default_factory=list)

    @property
    def title(self) -> str:
        return self.caption or CLASS_NAMES.get(self.klass, "") or self.heading or self.section or "Table"


class _Tables(HTMLParser):
    """Collects tables, their captions, the nearest heading and the enclosing section."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tables: list[Table] = []
        self.sections: list[str] = []
        self.heading = ""
        self._heading_text: list[str] | None = None
        self._table: Table | None = None
        self._depth = 0  # nested tables are read as text of their cell
        self._in_head = False
        self._row: list[str] | None = None
        self._row_in_head = False
        self._cell: list[str] | None = None
        self._caption: list[str] | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag in ("section", "nav"):
            self.sections.append(a.get("id") or "")
        elif tag in ("h1", "h2", "h3", "h4") and self._table is None:
            self._heading_text = []
        elif tag == "table":
            self._depth += 1
            if self._depth == 1:
                klass = (a.get("class") or "").split()
                main = next((k for k in klass if k in CLASS_NAMES), klass[0] if klass else "")
                self._table = Table(section=self._section(), caption="", heading=self.heading, klass=main)
        elif self._depth == 1 and self._table is not None:
            if tag == "caption":
                self._caption = []
            elif tag == "thead":
                self._in_head = True
            elif tag == "tr":
                self._row, self._row_in_head = [], self._in_head
            elif tag in ("td", "th") and self._row is not None:
                self._cell = []
            elif tag == "br" and self._cell is not None:
                self._cell.append("; ")

    def handle_endtag(self, tag: str) -> None:
        if tag in ("section", "nav") and self.sections:
            self.sections.pop()
        elif tag in ("h1", "h2", "h3", "h4") and self._heading_text is not None:
            self.heading = _clean("".join(self._heading_text))
            self._heading_text = None
        elif tag == "table":
            if self._depth == 1 and self._table is not None:
                self.tables.append(self._table)
                self._table = None
            self._depth = max(self._depth - 1, 0)
        elif self._depth == 1 and self._table is not None:
            if tag == "caption" and self._caption is not None:
                self._table.caption = _clean("".join(self._caption))
                self._caption = None
            elif tag == "thead":
                self._in_head = False
            elif tag in ("td", "th") and self._cell is not None and self._row is not None:
                self._row.append(_clean("".join(self._cell)))
                self._cell = None
            elif tag == "tr" and self._row is not None:
                if self._row_in_head and not self._table.header:
                    self._table.header = self._row
                elif self._row:
                    self._table.rows.append(self._row)
                self._row = None

    def handle_data(self, data: str) -> None:
        if self._heading_text is not None:
            self._heading_text.append(data)
        if self._caption is not None:
            self._caption.append(data)
        elif self._cell is not None:
            self._cell.append(data)

    def _section(self) -> str:
        return next((s for s in reversed(self.sections) if s), "")


def _clean(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip().strip(";").strip()


def report_tables(page: str) -> list[Table]:
    """Every table of a rendered report, in order, with a header row (made up when the report has none)."""
    parser = _Tables()
    parser.feed(page)
    parser.close()
    tables = []
    for table in parser.tables:
        width = max([len(table.header), *(len(r) for r in table.rows)], default=0)
        if width == 0:
            continue
        if not table.header:
            table.header = ["Item", "Value"] if width == 2 else [f"Column {i + 1}" for i in range(width)]
        table.header = [h or ("Item" if i == 0 else "Value" if width == 2 else f"Column {i + 1}")
                        for i, h in enumerate(table.header)]
        table.header += [f"Column {i + 1}" for i in range(len(table.header), width)]
        table.rows = [r + [""] * (width - len(r)) for r in table.rows]
        tables.append(table)
    return tables


def cell_value(text: str) -> str | int | float | None:
    """A cell as data: numbers as int/float (thousands separators dropped), '–' or '' as None, else text."""
    if text in ("", "–", "—"):
        return None
    match = _NUMBER.match(text)
    if not match:
        return text
    plain = text.replace(",", "").replace("−", "-")
    return float(plain) if match.group(1) is not None else int(plain)


def _decimals(text: str) -> int:
    match = _NUMBER.match(text)
    return len(match.group(1)) if match and match.group(1) else 0


def _csv_text(text: str) -> str:
    value = cell_value(text)
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    return text.replace(",", "").replace("−", "-")


def sheet_names(titles: list[str]) -> list[str]:
    """Excel sheet names from table titles: ≤ 31 characters, no []:*?/\\, unique (case-insensitive)."""
    taken = {INDEX_SHEET.lower()}
    names = []
    for title in titles:
        base = _SHEET_BAD.sub(" ", title).strip().strip("'") or "Table"
        base = re.sub(r"\s+", " ", base)
        name, n = _cut(base, 31), 1
        while name.lower() in taken:
            n += 1
            suffix = f" ({n})"
            name = _cut(base, 31 - len(suffix)) + suffix
        taken.add(name.lower())
        names.append(name)
    return names


def _cut(text: str, limit: int) -> str:
    """``text`` shortened to ``limit`` characters, at a word boundary when one is near."""
    if len(text) <= limit:
        return text
    head = text[:limit + 1]
    space = head.rfind(" ")
    cut = head[:space] if space >= limit // 2 else text[:limit]
    return cut.rstrip(" ,;:-–(")


def _slug(text: str) -> str:
    slug = re.sub(r"[^a-z0-9]+", "_", text.lower()).strip("_")
    return slug[:48].rstrip("_") or "table"


def write_exports(build_dir: str | Path, page: str | None = None) -> Path:
    """Write ``<build>/exports/`` from the report (``page``, or the build's report.html); return the folder.

    The folder is built beside the old one and swapped in only when complete.
    """
    folder = Path(build_dir)
    if page is None:
        path = folder / "report.html"
        try:
            page = path.read_text(encoding="utf-8")
        except OSError as exc:
            msg = f"{path}: cannot be read ({exc.strerror}); build the report first"
            raise FreerunError(msg) from None
    try:
        staged = stage_exports(folder, page)
        return swap_exports(folder, staged)
    except OSError as exc:
        msg = f"{folder / EXPORTS_DIR}: cannot be written ({exc.strerror or exc}); the previous exports are unchanged"
        raise FreerunError(msg) from None


def stage_exports(folder: Path, page: str) -> Path:
    """Write the exports into a temporary folder beside ``<build>/exports`` and return it."""
    staged = folder / f".{EXPORTS_DIR}.partial-{os.getpid()}"
    if staged.exists():
        shutil.rmtree(staged)
    staged.mkdir()
    try:
        tables = report_tables(page)
        names = sheet_names([t.title for t in tables])
        files = [f"{i:02d}_{_slug(name)}.csv" for i, name in enumerate(names, start=1)]
        index_rows = [[name, file, table.section, table.title] for name, file, table in zip(names, files, tables)]
        _write_csv(staged / INDEX, [list(INDEX_HEADER), *index_rows])
        for table, file in zip(tables, files):
            _write_csv(staged / file, [table.header, *[[_csv_text(c) for c in row] for row in table.rows]])
        _write_workbook(staged / WORKBOOK, tables, names, index_rows)
    except BaseException:
        shutil.rmtree(staged, ignore_errors=True)
        raise
    return staged


def swap_exports(folder: Path, staged: Path) -> Path:
    """Put a staged exports folder in place of ``<build>/exports`` (two renames)."""
    target = folder / EXPORTS_DIR
    old = None
    if target.exists():
        old = folder / f".{EXPORTS_DIR}.old-{os.getpid()}"
        if old.exists():
            shutil.rmtree(old)
        os.replace(target, old)
    os.replace(staged, target)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return target


def _write_csv(path: Path, rows: list[list[str]]) -> None:
    with open(path, "w", encoding="utf-8", newline="") as handle:
        csv.writer(handle, lineterminator="\n").writerows(rows)


def _write_workbook(path: Path, tables: list[Table], names: list[str], index_rows: list[list[str]]) -> None:
    import datetime as dt

    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    book = Workbook()
    bold = Font(bold=True)

    def sheet(ws, header: list[str], rows: list[list[str]], as_data: bool) -> None:
        ws.append(header)
        for cell in ws[1]:
            cell.font = bold
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        widths = [min(max(len(h), 8), 40) for h in header]
        for r, row in enumerate(rows, start=2):
            for c, text in enumerate(row, start=1):
                value = cell_value(text) if as_data else text
                cell = ws.cell(row=r, column=c, value=value)
                if isinstance(value, (int, float)):
                    places = _decimals(text)
                    cell.number_format = ("#,##0" if "," in text else "0") + ("." + "0" * places if places else "")
                widths[c - 1] = min(max(widths[c - 1], len(text)), 60)
        for c, width in enumerate(widths, start=1):
            ws.column_dimensions[get_column_letter(c)].width = width + 2
        ws.freeze_panes = "A2"

    index = book.active
    index.title = INDEX_SHEET
    sheet(index, list(INDEX_HEADER), index_rows, as_data=False)
    for table, name in zip(tables, names):
        sheet(book.create_sheet(name), table.header, table.rows, as_data=True)
    fixed = dt.datetime(*_FIXED_TIME)
    book.properties.creator = "freerun"
    book.properties.created = fixed
    book.properties.modified = fixed
    raw = io.BytesIO()
    book.save(raw)
    _deterministic_zip(raw.getvalue(), path)


def _deterministic_zip(data: bytes, path: Path) -> None:
    """Re-write an xlsx with fixed member times and document dates, so equal content gives equal bytes."""
    stamp = "2000-01-01T00:00:00Z"
    with zipfile.ZipFile(io.BytesIO(data)) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            content = src.read(item.filename)
            if item.filename == "docProps/core.xml":
                text = content.decode("utf-8")
                text = re.sub(r"(<dcterms:(?:created|modified)[^>]*>)[^<]*(</dcterms:)", rf"\g<1>{stamp}\g<2>", text)
                content = text.encode("utf-8")
            info = zipfile.ZipInfo(item.filename, date_time=_FIXED_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o600 << 16
            dst.writestr(info, content)
