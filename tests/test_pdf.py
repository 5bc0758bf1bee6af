"""report.pdf and the table exports, end to end with the real command.

The PDF is read back with pypdfium2 (a test-only dependency): pages, text,
font sizes, image objects and page sizes. The demo is invented: it is used
for the report's structure (pages, headings, marks, tables), never as check
values; numbers are checked against the build's own results.json, and the
public-weather project (pvlib's Greensboro TMY3 file) is built as well.
"""

from __future__ import annotations

import csv
import html
import json
import re
import shutil
from pathlib import Path
from types import SimpleNamespace

import pytest

from calcs.cli import EXIT_BAD_INPUT, main
from calcs.errors import FreerunError
from calcs.exports import INDEX, WORKBOOK, cell_value, write_exports
from calcs.pdf import paper_of, write_pdf
from calcs.present import num
from calcs.project import load_project
from calcs.report import lookup
from calcs.summary import executive_summary, read_defaults
from conftest import DEMO, project_dict, toml_dumps

import openpyxl
import pypdfium2 as pdfium
import pypdfium2.raw as raw

pytestmark = pytest.mark.slow

MM = 72 / 25.4  # PDF points per millimetre
STAGE_HEADINGS = ("1. Climate", "2. Heat gains and loads", "3. Ventilation openings", "4. Comfort hours",
                  "5. Energy savings")


@pytest.fixture(scope="module")
def demo(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("pdf-demo") / "P01"
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    return out


@pytest.fixture(scope="module")
def public(tmp_path_factory, greensboro_epw) -> Path:
    """A project on public weather, built with --no-pdf."""
    epw, site = greensboro_epw
    root = tmp_path_factory.mktemp("pdf-public")
    folder = root / "project"
    (folder / "weather").mkdir(parents=True)
    shutil.copy(epw, folder / "weather" / epw.name)
    (folder / "project.toml").write_text(toml_dumps(project_dict(site, epw.name)), encoding="utf-8")
    out = root / "build"
    assert main(["build", str(folder), "--out", str(out), "--quiet", "--no-pdf"]) == 0
    return out


def _norm(text: str) -> str:
    return re.sub(r"\s+", " ", text.replace("\u200b", "")).strip()


def _pages(path: Path) -> list[str]:
    pdf = pdfium.PdfDocument(str(path))
    return [_norm(pdf[i].get_textpage().get_text_range()) for i in range(len(pdf))]


def _large_draft(page) -> bool:
    """True when the page carries the word DRAFT set large (the diagonal mark, not the footer's status)."""
    text = page.get_textpage()
    search = text.search("DRAFT", match_case=True)
    while (hit := search.get_next()) is not None:
        if raw.FPDFText_GetFontSize(text.raw, hit[0]) > 50:
            return True
    return False


def _headings(page_html: str) -> set[str]:
    body = page_html.split("</style>", 1)[1]
    found = re.findall(r"<h([2-4])[^>]*>(.*?)</h\1>", body, re.S)
    return {_norm(html.unescape(re.sub(r"<[^>]+>", "", text))) for _, text in found}


def _last_body_line(page) -> str:
    """The lowest line of text inside the page's content box (header, footer and the large mark left out)."""
    width, height = page.get_size()
    text = page.get_textpage()
    bottom_limit, top_limit = 17 * MM, height - 19 * MM
    boxes = []
    for i in range(text.count_chars()):
        if raw.FPDFText_GetFontSize(text.raw, i) > 50 or not text.get_text_range(i, 1).strip():
            continue
        left, bottom, right, top = text.get_charbox(i)
        if bottom_limit < bottom and top < top_limit:
            boxes.append((bottom, top))
    if not boxes:
        return ""
    low = min(b for b, _ in boxes)
    top = max(t for b, t in boxes if b - low < 2.0)
    return _norm(text.get_text_bounded(left=0, bottom=low - 1, right=width, top=top + 0.5))


# ------------------------------------------------------------------ the PDF of the demo


def test_pdf_has_cover_summary_contents_sections_and_cautions(demo):
    pages = _pages(demo / "report.pdf")
    assert 15 <= len(pages) <= 80, len(pages)
    assert "Mixed-mode ventilation feasibility".upper() in pages[0].upper()
    assert "Status: DRAFT" in pages[0] and "Job number DEMO-001" in pages[0]
    assert pages[1].startswith("Executive summary")
    assert pages[2].startswith("Contents")
    whole = " ".join(pages)
    for heading in ("Important notes on this estimate", *STAGE_HEADINGS, "Decision log", "Audit appendix"):
        assert heading in whole, heading
    for caution in ("not a compliance assessment", "fire and smoke", "security", "acoustics",
                    "outdoor air quality", "licensed or chartered engineer", "building codes"):
        assert caution in whole, caution
    assert "invented" in pages[0]


def test_contents_page_numbers_point_at_the_sections(demo):
    pages = _pages(demo / "report.pdf")
    pdf = pdfium.PdfDocument(str(demo / "report.pdf"))
    lines = pdf[2].get_textpage().get_text_range().splitlines()
    numbers = {}
    for line in lines:
        line = re.sub(r"\s*DRAFT$", "", line.strip())  # the diagonal mark's text may join a line
        match = re.match(r"^(.*?)[\s.]*\.\s*(\d+)$", line)
        if match:
            numbers[_norm(match.group(1))] = int(match.group(2))
    targets = {"Executive summary": "Executive summary", "Important notes on this estimate": "Important notes",
               "Climate": "1. Climate", "Heat gains and loads": "2. Heat gains and loads",
               "Ventilation openings": "3. Ventilation openings", "Comfort hours": "4. Comfort hours",
               "Energy savings": "5. Energy savings", "Decision log": "Decision log", "Audit appendix": "Audit appendix"}
    for entry, heading in targets.items():
        assert entry in numbers, (entry, sorted(numbers))
        assert pages[numbers[entry] - 1].startswith(heading), (entry, numbers[entry])
    assert sorted(numbers[e] for e in targets) == [numbers[e] for e in targets], "contents in page order"


def test_running_header_and_footer_on_every_page(demo):
    pages = _pages(demo / "report.pdf")
    title = load_project(demo / "inputs" / "project.toml").project.title
    n = len(pages)
    for i, text in enumerate(pages, start=1):
        assert "DEMO-001 · rev P01 · DRAFT" in text, i
        assert f"page {i} of {n}" in text, i
        if i > 1:  # the cover carries the title itself, without the running header
            assert title in text and "Job DEMO-001 · rev P01" in text, i
    assert "page 1 of" in pages[0]


def test_draft_mark_on_every_page_until_approved(demo, tmp_path):
    pdf = pdfium.PdfDocument(str(demo / "report.pdf"))
    assert all(_large_draft(pdf[i]) for i in range(len(pdf)))

    signed = tmp_path / "P01"
    shutil.copytree(demo, signed)
    for role, name in (("prepared", "A. Preparer"), ("checked", "B. Checker")):
        assert main(["sign", str(signed), "--role", role, "--name", name]) == 0
    pdf = pdfium.PdfDocument(str(signed / "report.pdf"))
    assert all(_large_draft(pdf[i]) for i in range(len(pdf))), "checked is not yet approved"
    assert "DEMO-001 · rev P01 · CHECKED" in _pages(signed / "report.pdf")[1]

    assert main(["sign", str(signed), "--role", "approved", "--name", "C. Approver"]) == 0
    pdf = pdfium.PdfDocument(str(signed / "report.pdf"))
    assert not any(_large_draft(pdf[i]) for i in range(len(pdf)))
    pages = _pages(signed / "report.pdf")
    assert all("· APPROVED ·" in p for p in pages)
    assert "Status: APPROVED" in pages[0] and "C. Approver" in pages[0]
    # the exports are re-written with the report: the sign-off table names the signatories
    with open(signed / "exports" / "02_sign_off.csv", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    assert [r[1] for r in rows[1:]] == ["A. Preparer", "B. Checker", "C. Approver"]


def test_summary_page_numbers_equal_results(demo):
    results = json.loads((demo / "results.json").read_text(encoding="utf-8"))
    page = _pages(demo / "report.pdf")[1]
    for part in ("The three largest risks", "Decisions asked of the client", "Headline numbers", "Verdict rule"):
        assert part in page, part
    # independent of calcs.summary: the figures a reader looks for, at the printed precision
    climate, comfort, energy = results["climate"], results["comfort"], results["energy"]
    assert f"{climate['occupied_nv_suitable_pct']:.1f} %" in page
    assert f"{len(climate['months_can_open'])} of 12" in page
    assert f"{comfort['building']['nv_mode_pct']:.1f} % of occupied hours" in page
    if "savings_pct_p50" in energy:
        assert f"{energy['savings_pct_p50']:.0f} %" in page
        assert f"P10–P90 {energy['savings_pct_p10']:.0f}–{energy['savings_pct_p90']:.0f} %" in page
        assert f"{energy['simple_payback_years']:.1f} years" in page
    else:
        assert "waits for the energy stage" in page
    peak = max(v["peak_sensible_W_m2"] for v in results["loads"].values() if isinstance(v, dict) and "peak_sensible_W_m2" in v)
    assert f"{peak:.1f} W/m²" in page
    # every number the summary prints is a results.json value, shown on the page at its precision
    summary = executive_summary(results, load_project(demo / "inputs" / "project.toml"), read_defaults(demo))
    assert len(summary.printed) >= 6
    for printed in summary.printed:
        assert lookup(results, printed.key) == printed.value, printed.key
        assert num(printed.value, printed.digits) in page, printed


def test_tables_split_across_pages_repeat_their_header(demo):
    pages = _pages(demo / "report.pdf")
    audit = next(i for i, p in enumerate(pages) if p.startswith("Audit appendix"))
    assert pages[audit + 1].startswith("Every parameter as used"), "the parameter list starts its own page"
    following = pages[audit + 2:]
    assert following, "the parameter table runs over several pages"
    for text in following:
        assert text.startswith("Key Value"), text[:60]


def test_no_page_ends_with_a_lone_heading(demo):
    headings = _headings((demo / "report.html").read_text(encoding="utf-8"))
    assert "Executive summary" in headings and "Monthly climate" in headings
    pdf = pdfium.PdfDocument(str(demo / "report.pdf"))
    for i in range(len(pdf)):
        last = _last_body_line(pdf[i])
        assert last and last not in headings, (i + 1, last)


def test_charts_are_images_fonts_are_dejavu_and_the_pdf_is_a4(demo):
    import ctypes

    page_html = (demo / "report.html").read_text(encoding="utf-8")
    pdf = pdfium.PdfDocument(str(demo / "report.pdf"))
    images = sum(len(list(pdf[i].get_objects(filter=[raw.FPDF_PAGEOBJ_IMAGE]))) for i in range(len(pdf)))
    assert images == page_html.count('src="data:image/png;base64,') >= 10
    fonts = set()
    for i in range(len(pdf)):
        for obj in pdf[i].get_objects(filter=[raw.FPDF_PAGEOBJ_TEXT]):
            font = raw.FPDFTextObj_GetFont(obj.raw)
            size = raw.FPDFFont_GetBaseFontName(font, None, 0)
            buf = ctypes.create_string_buffer(size)
            raw.FPDFFont_GetBaseFontName(font, buf, size)
            fonts.add(buf.value.decode().split("+")[-1])
    assert fonts and all(f.startswith("DejaVu") for f in fonts), fonts
    width, height = pdf[0].get_size()
    assert abs(width - 210 * MM) < 1 and abs(height - 297 * MM) < 1  # ISO 216 A4


def test_pdf_is_reproducible_and_atomic(demo, tmp_path, monkeypatch):
    copy = tmp_path / "P01"
    shutil.copytree(demo, copy)
    before = (copy / "report.pdf").read_bytes()
    write_pdf(copy)
    assert (copy / "report.pdf").read_bytes() == before, "the same report.html gives the same PDF"

    import weasyprint

    def broken(self, *args, **kwargs):
        raise RuntimeError("deliberate failure for the test")

    monkeypatch.setenv("FREERUN_PDF_PARTS", "0")  # laid out here, as one document (parts fall back to that)
    monkeypatch.setattr(weasyprint.Document, "write_pdf", broken)
    html_before = (copy / "report.html").read_bytes()
    with pytest.raises(FreerunError, match="could not be rendered"):
        write_pdf(copy)
    from calcs.build import render_into

    project = load_project(copy / "inputs" / "project.toml")
    results = json.loads((copy / "results.json").read_text(encoding="utf-8"))
    manifest = json.loads((copy / "manifest.json").read_text(encoding="utf-8"))
    with pytest.raises(FreerunError):
        render_into(copy, project, results, manifest, signatures=[{"role": "prepared", "name": "X", "note": "", "time":
                                                                 "2026-12-02T00:00:00+00:00", "digest": "0" * 64}])
    assert (copy / "report.pdf").read_bytes() == before
    assert (copy / "report.html").read_bytes() == html_before, "a failed PDF leaves report.html as it was"
    assert sorted(p.name for p in copy.iterdir() if p.name.startswith(".")) == []


# ------------------------------------------------------------------ exports


def _csv_rows(path: Path) -> list[list[str]]:
    with open(path, encoding="utf-8", newline="") as handle:
        return list(csv.reader(handle))


def test_every_report_table_is_exported_and_the_workbook_matches(demo):
    exports = demo / "exports"
    page_html = (demo / "report.html").read_text(encoding="utf-8")
    index = _csv_rows(exports / INDEX)
    assert index[0] == ["Sheet", "CSV file", "Section", "Table"]
    assert len(index) - 1 == page_html.count("<table")
    captions = [html.unescape(c) for c in re.findall(r"<caption>(.*?)</caption>", page_html)]
    assert set(captions) <= {row[3] for row in index[1:]}
    book = openpyxl.load_workbook(exports / WORKBOOK)
    assert book.sheetnames == ["Index", *[row[0] for row in index[1:]]]
    assert all(len(name) <= 31 for name in book.sheetnames)
    sheets = [("Index", INDEX)] + [(row[0], row[1]) for row in index[1:]]
    for sheet, file in sheets:
        rows = _csv_rows(exports / file)
        cells = [list(r) for r in book[sheet].iter_rows(values_only=True)]
        assert len(cells) == len(rows), sheet
        assert [str(c) for c in cells[0]] == rows[0], sheet
        for want, got in zip(rows[1:], cells[1:]):
            for text, value in zip(want, got):
                expected = cell_value(text) if sheet != "Index" else (text or None)
                if isinstance(expected, (int, float)):
                    assert isinstance(value, (int, float)) and not isinstance(value, bool), (sheet, text, value)
                    assert value == expected, (sheet, text, value)
                else:
                    assert value == expected, (sheet, text, value)

    # the exported numbers are the report's, which are results.json at the printed precision; units in headers
    results = json.loads((demo / "results.json").read_text(encoding="utf-8"))
    monthly = next(r for r in index[1:] if r[3].startswith("Monthly outdoor climate"))
    rows = _csv_rows(exports / monthly[1])
    column = rows[0].index("Mean [°C]")
    assert [float(r[column]) for r in rows[1:]] == [float(f"{v:.1f}") for v in results["climate"]["monthly_mean_C"]]
    sheet = book[monthly[0]]
    assert [sheet.cell(row=r, column=column + 1).value for r in range(2, 14)] == \
        [float(f"{v:.1f}") for v in results["climate"]["monthly_mean_C"]]


def test_exports_are_reproducible(demo, tmp_path):
    copy = tmp_path / "P01"
    shutil.copytree(demo, copy)
    before = {p.name: p.read_bytes() for p in (copy / "exports").iterdir()}
    write_exports(copy)
    after = {p.name: p.read_bytes() for p in (copy / "exports").iterdir()}
    assert before == after
    assert sorted(p.name for p in copy.iterdir() if p.name.startswith(".")) == []


# ------------------------------------------------------------------ --no-pdf, paper size, bad input


def test_no_pdf_build_then_pdf_on_letter(public):
    assert (public / "report.html").is_file() and (public / "exports" / WORKBOOK).is_file()
    assert not (public / "report.pdf").exists()
    path = write_pdf(public)
    pdf = pdfium.PdfDocument(str(path))
    width, height = pdf[0].get_size()
    assert abs(width - 210 * MM) < 1 and abs(height - 297 * MM) < 1
    results = json.loads((public / "results.json").read_text(encoding="utf-8"))
    summary_page = _norm(pdf[1].get_textpage().get_text_range())
    assert summary_page.startswith("Executive summary")
    assert f"{results['climate']['occupied_nv_suitable_pct']:.1f} %" in summary_page
    assert "page 1 of" in _norm(pdf[0].get_textpage().get_text_range())
    write_pdf(public, paper="Letter")
    width, height = pdfium.PdfDocument(str(path))[0].get_size()
    assert abs(width - 8.5 * 72) < 1 and abs(height - 11 * 72) < 1  # US Letter 8.5 × 11 in


def test_paper_size_from_the_project(capsys, tmp_path):
    assert paper_of(SimpleNamespace()) == "A4"
    assert paper_of(SimpleNamespace(report=SimpleNamespace(paper="letter"))) == "Letter"
    with pytest.raises(FreerunError, match=r"report\.paper = 'B5': allowed values are 'A4' and 'Letter'"):
        paper_of(SimpleNamespace(report=SimpleNamespace(paper="B5")))
    # through the command: one line, exit code 2, nothing written
    out = tmp_path / "never"
    code = main(["build", str(DEMO), "--out", str(out), "--quiet", "--set", "report.paper=B5"])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT
    assert err.startswith("freerun: ") and err.count("\n") == 1 and "Traceback" not in err
    assert not out.exists() and not list(tmp_path.iterdir())


@pytest.mark.parametrize("allow_break", [False, True])
def test_a_heading_moves_to_the_next_page_with_its_text(tmp_path, allow_break):
    """The house print rules keep a heading with what follows; the check above sees it when they do not."""
    from calcs.paths import templates_dir
    from calcs.pdf import render_pdf

    css = (templates_dir() / "report.css").read_text(encoding="utf-8")
    loose = ' style="break-after: auto; page-break-after: auto"' if allow_break else ""
    loose_p = ' style="break-before: auto; orphans: 1"' if allow_break else ""
    body = ('<div style="height: 246mm"></div>'
            f'<h3{loose}>A heading near the foot</h3><p{loose_p}>' + "Words that follow the heading. " * 60 + "</p>")
    page = f"<!DOCTYPE html><html><head><style>{css}</style></head><body>{body}</body></html>"
    path = render_pdf(page, tmp_path / "probe.pdf")
    pdf = pdfium.PdfDocument(str(path))
    assert len(pdf) == 2
    last = _last_body_line(pdf[0])
    if allow_break:
        assert last == "A heading near the foot"  # the probe can see a lone heading ...
    else:
        assert last != "A heading near the foot"  # ... and the house style prevents one
        assert _norm(pdf[1].get_textpage().get_text_range()).startswith("A heading near the foot")
