"""report.pdf laid out in parts (calcs/pdf_parts.py) against WeasyPrint's own one-document layout.

The oracle is WeasyPrint laying the same page out as one document (:func:`calcs.pdf.render_whole`):
the assembled PDF must have the same pages, the same text on each page, the same pixels
(pypdfium2 renders both), the same bookmarks (title, depth, page, position), the same named
destinations, the same links and the same document information. The demo report is invented;
it serves for structure only. A constructed page adds what the demo lacks: a contents list
longer than a page, links across the parts in both directions, skipped heading levels and no
DRAFT mark.
"""

from __future__ import annotations

import os
import re
import signal
from pathlib import Path

import numpy as np
import pikepdf
import pypdfium2 as pdfium
import pytest

from calcs import pdf_parts
from calcs.cli import main
from calcs.pdf import render_pdf, render_whole
from conftest import DEMO

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def demo_page(tmp_path_factory) -> tuple[Path, str]:
    out = tmp_path_factory.mktemp("parts-demo") / "P01"
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    return out, (out / "report.html").read_text(encoding="utf-8")


def _structure(path: Path) -> dict:
    """Bookmarks, destinations, links and document information, with pages as indices."""
    with pikepdf.open(path) as pdf:
        index = {page.objgen: i for i, page in enumerate(pdf.pages)}

        def dest(array) -> tuple:
            return (index[array[0].objgen], str(array[1]), *(round(float(x), 3) for x in list(array)[2:]))

        marks = []

        def walk(item, depth: int) -> None:
            while item is not None:
                marks.append((depth, str(item.Title), dest(item.Dest), int(item.get("/Count", 0))))
                walk(item.get("/First"), depth + 1)
                item = item.get("/Next")

        outlines = pdf.Root.get("/Outlines")
        if outlines is not None:
            walk(outlines.get("/First"), 0)
        flat = pdf.Root.Names.Dests.Names
        dests = {str(flat[i]): dest(flat[i + 1]) for i in range(0, len(flat), 2)}
        links = [(i, str(a.get("/Dest", "")), str(a.get("/A", {}).get("/URI", "")),
                  tuple(round(float(x), 2) for x in a.Rect))
                 for i, page in enumerate(pdf.pages) for a in page.obj.get("/Annots", [])]
        info = {str(k): str(v) for k, v in pdf.docinfo.items()}
        return {"marks": marks, "count": int(outlines.Count) if outlines is not None else 0, "dests": dests,
                "links": links, "info": info, "lang": str(pdf.Root.get("/Lang", "")),
                "sizes": [tuple(round(float(x), 3) for x in page.mediabox) for page in pdf.pages]}


def _assert_same_document(parts: Path, whole: Path) -> None:
    a, b = pdfium.PdfDocument(str(parts)), pdfium.PdfDocument(str(whole))
    assert len(a) == len(b)
    for i in range(len(a)):
        assert a[i].get_textpage().get_text_range() == b[i].get_textpage().get_text_range(), f"text of page {i + 1}"
        pixels_a, pixels_b = a[i].render(scale=0.6).to_numpy(), b[i].render(scale=0.6).to_numpy()
        assert np.array_equal(pixels_a, pixels_b), f"pixels of page {i + 1}"
    assert _structure(parts) == _structure(whole)


def test_demo_in_parts_equals_one_document(demo_page, tmp_path):
    _, page = demo_page
    whole = render_whole(page, tmp_path / "whole.pdf")
    assert pdf_parts.render(page, tmp_path / "parts.pdf", "A4")  # not the fall-back
    _assert_same_document(tmp_path / "parts.pdf", whole)
    text = pdfium.PdfDocument(str(tmp_path / "parts.pdf"))
    count = len(text)
    for i in range(count):  # every page carries its number, from the footer layer
        assert f"page {i + 1} of {count}" in text[i].get_textpage().get_text_range()


def test_the_build_lays_its_pdf_out_in_parts_reproducibly(demo_page, tmp_path):
    out, page = demo_page
    built = (out / "report.pdf").read_bytes()
    pdf_parts.render(page, tmp_path / "again.pdf", "A4")
    assert (tmp_path / "again.pdf").read_bytes() == built, "same page, same bytes (the build used the parts)"
    render_whole(page, tmp_path / "whole.pdf")
    assert (tmp_path / "whole.pdf").read_bytes() != built  # one document embeds its fonts once: other bytes


def _constructed_page(demo: str, *, draft: bool) -> str:
    """A report page of our own blocks, in the template's marks, with the demo's style sheet."""
    head = demo[:demo.index("</head>")]
    mark = pdf_parts.MARK
    common = ('<p class="print-strings" aria-hidden="true"><span class="ps-job">T-1</span> '
              '<span class="ps-title">Constructed page</span> <span class="ps-rev">A</span> '
              '<span class="ps-status">CHECKED</span></p>'
              + ('<div class="draft-mark" aria-hidden="true">DRAFT</div>' if draft else ""))
    words = " ".join(f"word{i}" for i in range(400))
    contents = "".join(f'<li class="toc-l3"><a href="#s{k}-{j}">Entry {k}.{j} with a longer title</a></li>'
                       for k in range(6) for j in range(14))
    sections = []
    for k in range(6):
        body = "".join(f'<h3 id="s{k}-{j}">Part {k}.{j}</h3><p>{words[: 600 + 97 * j]}</p>'
                       + (f'<h5 id="deep{k}-{j}">Skipped level {k}.{j}</h5><p>Back to <a href="#summary">the summary'
                          "</a>.</p>" if j % 5 == 0 else "")
                       for j in range(14))
        sections.append(f'{mark}<section class="stage" id="stage{k}"><h2 class="stage-title">{k + 1}. Stage {k}</h2>'
                        f"{body}</section>\n")
    return (head + '</head>\n<body class="status-checked">\n'
            + f'{mark}<section class="cover" id="cover">\n<!--freerun-common-->{common}<!--/freerun-common-->'
            + "<h1>Constructed page</h1><p>cover</p></section>\n"
            + f'{mark}<section class="summary" id="summary"><h2>Summary</h2><p>See <a href="#deep5-10">the last '
            + 'stage</a> and <a href="#stage2">stage 3</a>.</p></section>\n'
            + f'{mark}<nav class="contents" id="contents"><h2>Contents</h2><ol>{contents}</ol></nav>\n'
            + f'{mark}<section class="cautions" id="cautions"><h2>Notes</h2><p>{words}</p></section>\n'
            + "".join(sections)
            + f'{mark}<section class="audit" id="audit"><h2>Appendix</h2><p>{words}</p></section>\n'
            + "</body>\n</html>\n")


@pytest.mark.parametrize("draft", [True, False])
def test_constructed_page_in_parts_equals_one_document(demo_page, tmp_path, draft):
    _, demo = demo_page
    page = _constructed_page(demo, draft=draft)
    whole = render_whole(page, tmp_path / "whole.pdf", paper="Letter")
    assert pdf_parts.render(page, tmp_path / "parts.pdf", "Letter")
    _assert_same_document(tmp_path / "parts.pdf", whole)
    structure = _structure(whole)
    contents_pages = {i for i, dest, _, _ in structure["links"] if dest.startswith("s")}
    assert len(contents_pages) >= 2, "the constructed contents list runs over more than one page"
    assert any(depth == 3 for depth, *_ in structure["marks"]), "a skipped heading level is in the outline"
    text = pdfium.PdfDocument(str(tmp_path / "parts.pdf"))
    assert ("DRAFT" in text[len(text) - 1].get_textpage().get_text_range()) is draft


def test_cut_refuses_pages_it_cannot_cut(demo_page):
    _, page = demo_page
    assert pdf_parts.cut_page(page) is not None
    assert pdf_parts.cut_page(page.replace(pdf_parts.MARK, "")) is None  # an older page: no marks
    assert pdf_parts.cut_page(page.replace(pdf_parts.COMMON[0], "")) is None
    cut = pdf_parts.cut_page(page)
    front, contents, after = pdf_parts.plan(cut)
    assert contents.id == "contents" and [b.id for b in front] == ["cover", "summary"]
    assert [b.id for b in front + [contents] + [b for part in after for b in part]] == [b.id for b in cut.blocks]
    assert all(part[0].kind in pdf_parts.PAGE_STARTS for part in after[1:])
    stages = [b.id for part in after for b in part if b.kind == "stage"]
    assert len(after) >= 4 and any(part == [next(b for b in cut.blocks if b.id == "energy")] for part in after), \
        "the energy section is a part of its own (a tariff rebuild lays out that part again)"
    assert stages == ["climate", "loads", "openings", "comfort", "energy"]


def test_falls_back_to_one_document(demo_page, tmp_path, monkeypatch):
    _, page = demo_page
    whole = render_whole(page, tmp_path / "whole.pdf").read_bytes()
    # a page without the marks
    assert not pdf_parts.render(page.replace(pdf_parts.MARK, ""), tmp_path / "x.pdf", "A4")
    assert not (tmp_path / "x.pdf").exists()
    # a helper that is gone: one document, and no folder of parts left behind
    printers = pdf_parts.start()
    os.kill(printers[1].pid, signal.SIGKILL)
    while printers[1].alive():  # the first helper reaps its twin
        pass
    render_pdf(page, tmp_path / "dead.pdf", printers=printers)
    assert (tmp_path / "dead.pdf").read_bytes() == whole
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []
    assert not any(p.alive() for p in printers), "after a failure the helpers are ended"
    # switched off
    monkeypatch.setenv(pdf_parts.ENV, "0")
    assert not pdf_parts.enabled()
    render_pdf(page, tmp_path / "off.pdf")
    assert (tmp_path / "off.pdf").read_bytes() == whole


def test_a_part_that_fails_in_the_helper_falls_back(demo_page, tmp_path):
    _, page = demo_page
    printer = pdf_parts.Printer()
    try:
        printer.submit({"kind": "part", "html": "<html>", "paper": "no such paper", "out": str(tmp_path / "b.pdf"),
                        "base_url": str(tmp_path)})
        with pytest.raises(RuntimeError, match="paper"):
            printer.reply()
        assert printer.alive(), "the helper goes on after a failed part"
    finally:
        printer.close()
    assert not printer.alive()


def test_outline_nesting_matches_weasyprint_for_skipped_levels(tmp_path):
    """Heading levels h1, h3, h2, h5, h4, h2: WeasyPrint's own outline of a one-document page."""
    from calcs.pdf import weasy_document, writing

    levels = [1, 3, 2, 5, 4, 2, 6, 1]
    page = "<html><body>" + "".join(f"<h{lv}>T{i}</h{lv}>" for i, lv in enumerate(levels)) + "</body></html>"
    with writing():
        document = weasy_document(page, "A4", base_url=str(tmp_path))
        document.write_pdf(str(tmp_path / "w.pdf"))
    expected = _structure_marks(tmp_path / "w.pdf")
    with pikepdf.open(tmp_path / "w.pdf") as pdf:
        dest = pikepdf.Array([pdf.pages[0].obj, pikepdf.Name.XYZ, 0, 0, 0])
        pdf_parts._write_outline(pdf, [(lv, f"T{i}", dest, False) for i, lv in enumerate(levels)])
        pdf.save(tmp_path / "o.pdf")
    got = _structure_marks(tmp_path / "o.pdf")
    assert [(d, t, c) for d, t, c in got] == [(d, t, c) for d, t, c in expected]


def _structure_marks(path: Path) -> list[tuple[int, str, int]]:
    with pikepdf.open(path) as pdf:
        out = []

        def walk(item, depth):
            while item is not None:
                out.append((depth, str(item.Title), int(item.get("/Count", 0))))
                walk(item.get("/First"), depth + 1)
                item = item.get("/Next")

        walk(pdf.Root.Outlines.get("/First"), 0)
        return out


def test_stand_in_anchors_only_where_a_link_leaves_its_part(demo_page):
    _, page = demo_page
    cut = pdf_parts.cut_page(page)
    back = pdf_parts.plan(cut)[2][-1]
    html = pdf_parts.part_html(cut, back, pdf_parts.PART_CSS)
    defined = set(re.findall(r'id="([^"]+)"', "".join(b.html for b in back)))
    stand_ins = set(re.findall(r'<span id="([^"]+)"></span>', html))
    assert stand_ins == set(re.findall(r'href="#([^"]+)"', "".join(b.html for b in back))) - defined
    assert html.count(pdf_parts.COMMON[0]) == 0 and 'class="ps-title"' in html  # the running-header strings


def test_cache_lays_out_only_the_parts_that_changed(demo_page, tmp_path, monkeypatch):
    _, page = demo_page
    cache = tmp_path / "cache"
    jobs: list[str] = []
    submit = pdf_parts.Printer.submit
    monkeypatch.setattr(pdf_parts.Printer, "submit", lambda self, job: (jobs.append(job["kind"]), submit(self, job))[1])
    parts = 1 + len(pdf_parts.plan(pdf_parts.cut_page(page))[2])
    assert pdf_parts.render(page, tmp_path / "first.pdf", "A4", cache=cache)
    assert sorted(jobs) == ["contents", "footer"] + ["part"] * parts
    jobs.clear()
    assert pdf_parts.render(page, tmp_path / "again.pdf", "A4", cache=cache)
    assert jobs == [], "nothing changed: every part, the contents and the footer layer come from the cache"
    assert (tmp_path / "again.pdf").read_bytes() == (tmp_path / "first.pdf").read_bytes()

    # one more paragraph at the end of the energy section: that part only is laid out again
    energy = next(b for b in pdf_parts.cut_page(page).blocks if b.id == "energy").html
    end = energy.rindex("</section>")
    changed = page.replace(energy, energy[:end] + "<p>One more paragraph, for the test.</p>" + energy[end:])
    jobs.clear()
    assert pdf_parts.render(changed, tmp_path / "changed.pdf", "A4", cache=cache)
    assert jobs.count("part") == 1
    _assert_same_document(tmp_path / "changed.pdf", render_whole(changed, tmp_path / "changed-whole.pdf"))

    # a damaged entry is found by its digest and laid out again
    entry = max((p for p in cache.glob("*.part")), key=lambda p: p.stat().st_size)
    entry.write_bytes(entry.read_bytes()[:-100])
    jobs.clear()
    assert pdf_parts.render(page, tmp_path / "mended.pdf", "A4", cache=cache)
    assert jobs == ["part"]
    assert (tmp_path / "mended.pdf").read_bytes() == (tmp_path / "first.pdf").read_bytes()


def test_a_rebuild_with_nothing_changed_lays_out_only_the_audit_facts(tmp_path, monkeypatch):
    out = tmp_path / "build" / "P01"
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    jobs: list[str] = []
    submit = pdf_parts.Printer.submit
    monkeypatch.setattr(pdf_parts.Printer, "submit", lambda self, job: (jobs.append(job.get("html", job["kind"])),
                                                                        submit(self, job))[1])
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    assert len(jobs) == 1 and 'id="audit"' in jobs[0], "only the part with the build's times is laid out again"
    assert _structure(out / "report.pdf")["sizes"]  # a whole report, put together from the cache
    whole = render_whole((out / "report.html").read_text(encoding="utf-8"), tmp_path / "whole.pdf")
    _assert_same_document(out / "report.pdf", whole)


def _parameters_part(page: str) -> str:
    """The part of ``page`` that holds the parameter list, as the rendering lays it out."""
    cut = pdf_parts.cut_page(page)
    part = next(p for p in pdf_parts.plan(cut)[2] if any(b.kind == "parameters" for b in p))
    assert [b.kind for b in part] == ["parameters"], "the parameter list is a part of its own"
    return pdf_parts.part_html(cut, part, pdf_parts.PART_CSS)


def test_the_parameter_list_laid_out_ahead_is_the_part_of_the_report(demo_page):
    """What a build lays out while its stages run (render_parameters_page) is byte for byte the
    part that the finished report page gives, so the rendering finds it in the cache."""
    from calcs.build import validate_inputs
    from calcs.project import flatten
    from calcs.report import render_parameters_page

    _, page = demo_page
    _, project = validate_inputs(DEMO)
    early = render_parameters_page(project=project, parameters=flatten(project))
    cut = pdf_parts.cut_page(early)
    assert [b.kind for b in cut.blocks] == ["parameters"] and pdf_parts.plan(cut) is None
    assert pdf_parts.part_html(cut, cut.blocks, pdf_parts.PART_CSS) == _parameters_part(page)
    checked = render_parameters_page(project=project, parameters=flatten(project), status="CHECKED")
    assert pdf_parts.part_html(pdf_parts.cut_page(checked), pdf_parts.cut_page(checked).blocks,
                               pdf_parts.PART_CSS) != _parameters_part(page), "the status is in the running header"


def _recording(monkeypatch) -> list[tuple[str, str, str]]:
    """(kind, the first block's id, the submitting thread's name) of every job sent to a helper."""
    import threading

    jobs: list[tuple[str, str, str]] = []
    submit = pdf_parts.Printer.submit

    def record(self, job):
        found = re.search(r'<(?:section|nav) class="[^"]*" id="([^"]+)"', job.get("html", ""))
        jobs.append((job["kind"], found.group(1) if found else "", threading.current_thread().name))
        return submit(self, job)

    monkeypatch.setattr(pdf_parts.Printer, "submit", record)
    return jobs


def test_a_build_lays_out_the_parameter_list_while_its_stages_run(tmp_path, monkeypatch):
    jobs = _recording(monkeypatch)
    out = tmp_path / "build" / "P01"
    assert main(["build", str(DEMO), "--out", str(out), "--quiet"]) == 0
    laid = [(kind, block, thread) for kind, block, thread in jobs if block == "parameters"]
    assert laid == [("part", "parameters", "freerun-pdf-ahead")], "once, ahead, and not again at the end"
    charts = out.parent / ".stage-cache" / "charts"
    cold_charts = set(charts.glob("*.chart"))
    assert len(cold_charts) == len(list(out.glob("*/*.png"))), "every chart of the report rendered once, and kept"
    # a tariff changed: the parameter list (it shows the tariff) ahead again; at the end only the
    # parts whose content changed: the front (the summary's figures), the energy section, the audit facts
    jobs.clear()
    check = out.parent / "P01-tariff"
    assert main(["build", str(DEMO), "--out", str(check), "--quiet", "--set", "energy.electricity_price=0.31"]) == 0
    assert sorted(b for k, b, t in jobs if t == "freerun-pdf-ahead") == ["parameters"]
    assert sorted(b for k, b, t in jobs if t != "freerun-pdf-ahead") == ["cover", "decisions", "energy"]
    assert len(set(charts.glob("*.chart")) - cold_charts) == 1, \
        "of the energy stage's charts only the tornado (running costs) is rendered again"
    whole = render_whole((check / "report.html").read_text(encoding="utf-8"), tmp_path / "whole.pdf")
    _assert_same_document(check / "report.pdf", whole)


def test_a_part_laid_out_ahead_that_turns_out_different_is_laid_out_again(demo_page, tmp_path, monkeypatch):
    out, page = demo_page
    built = (out / "report.pdf").read_bytes()
    jobs = _recording(monkeypatch)
    parameters = next(b for b in pdf_parts.cut_page(page).blocks if b.kind == "parameters").html
    other = page.replace(parameters, parameters.replace("</tbody>", "<tr><td>x</td><td>1</td></tr></tbody>"))
    for n, page_of in enumerate((lambda: other, lambda: 1 / 0)):  # a different list; a page that cannot be made
        jobs.clear()
        printers = pdf_parts.start()
        try:
            pdf_parts.ahead(printers, page_of, "A4", str(tmp_path), tmp_path / f"cache{n}")
            assert pdf_parts.render(page, tmp_path / "parts.pdf", "A4", printers, tmp_path / f"cache{n}")
        finally:
            pdf_parts.close(printers)
        assert (tmp_path / "parts.pdf").read_bytes() == built
        assert ("part", "parameters", "freerun-pdf-part") in jobs, "laid out with the rest"
        assert [j for j in jobs if j[2] == "freerun-pdf-ahead"] == ([("part", "parameters", "freerun-pdf-ahead")]
                                                                    if n == 0 else [])
