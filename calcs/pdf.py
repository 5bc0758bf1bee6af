"""``report.pdf``: the report page printed with WeasyPrint, and the renderings written together.

The PDF is the same HTML as ``report.html`` laid out with the print rules of
``templates/report.css``: cover page, executive summary, contents with page
numbers, running header (title, job number, revision), footer with the
status and "page N of M", a diagonal DRAFT mark on every page until the
report is approved, tables whose header row repeats on each page they span,
and charts as the same static PNG images. Only this module adds the page
size (``report.paper`` of the project, "A4" unless "Letter").

Nothing is fetched: the page carries its CSS inline and its images as data
URIs, and the URL fetcher refuses anything else. Fonts are DejaVu (installed
with the system's font packages).

:func:`write_renderings` writes report.html, report.pdf and the table exports
(:mod:`calcs.exports`) of one rendering, each to a temporary name first and
replaced only when all of them were rendered, so a failure leaves the
previous files as they were. :func:`write_pdf` re-renders report.pdf alone
from a build's report.html; :func:`refresh` re-writes the PDF (if the build
has one) and the exports from it.
"""

from __future__ import annotations

import contextlib
import json
import logging
import os
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from .errors import FreerunError

PDF_FILE = "report.pdf"
HTML_FILE = "report.html"
PAPERS = {"a4": "A4", "letter": "Letter"}
DEFAULT_PAPER = "A4"


def paper_of(project: Any) -> str:
    """Page size from the project: ``project.report.paper`` when the schema has it, else A4.

    Raises
    ------
    FreerunError
        For a value other than A4 or Letter (one line naming the key).
    """
    value = getattr(getattr(project, "report", None), "paper", None)
    return _paper(value, "project.toml")


def _paper(value: Any, where: str) -> str:
    if value is None or value == "":
        return DEFAULT_PAPER
    paper = PAPERS.get(str(value).strip().lower())
    if paper is None:
        msg = f"{where}: report.paper = {value!r}: allowed values are 'A4' and 'Letter'"
        raise FreerunError(msg)
    return paper


def paper_of_build(build_dir: str | Path) -> str:
    """Page size recorded in a build's ``inputs/project.resolved.json`` (A4 when not recorded)."""
    path = Path(build_dir) / "inputs" / "project.resolved.json"
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return DEFAULT_PAPER
    report = data.get("report") if isinstance(data, dict) else None
    return _paper(report.get("paper") if isinstance(report, dict) else None, str(path))


def _fetcher() -> Any:
    """A URL fetcher for data URIs only: the PDF is made from the page's own content and fetches nothing."""
    try:
        from weasyprint.urls import URLFetcher
    except ImportError:  # WeasyPrint before the URLFetcher class: a plain function
        from weasyprint.urls import default_url_fetcher

        def fetch(url: str, *args: Any, **kwargs: Any) -> Any:
            if url.startswith("data:"):
                return default_url_fetcher(url, *args, **kwargs)
            msg = f"the report refers to an outside resource ({url[:80]}); it must be self-contained"
            raise ValueError(msg)

        return fetch
    return URLFetcher(allowed_protocols={"data"})


_TAG = re.compile(r"(<[^>]*>)")
_LONG = re.compile(r"[^\s<>&]{24,}")
_JOINT = re.compile(r"(?<=[._/])(?=[^\s])")


def break_long_words(page: str) -> str:
    """Let long unspaced words (key paths such as ``zones[].facades[].shading.fin_depth_ratio``) wrap.

    A ``<wbr>`` goes after each '.', '_' and '/' inside words of 24 characters or more in the
    page's text (never inside tags, attributes or the style sheet), so narrow table columns wrap
    at the joints instead of widening the table off the page. The text itself is unchanged.
    """
    parts = _TAG.split(page)
    out = []
    in_style = False
    for part in parts:
        if part.startswith("<"):
            name = part[1:].split(None, 1)[0].lower().rstrip(">") if len(part) > 2 else ""
            if name in ("style", "title"):
                in_style = True
            elif name in ("/style", "/title"):
                in_style = False
            out.append(part)
        elif in_style or len(part) < 24:
            out.append(part)
        else:
            out.append(_LONG.sub(lambda m: _JOINT.sub("<wbr>", m.group(0)), part))
    return "".join(out)


@contextlib.contextmanager
def writing() -> Iterator[None]:
    """WeasyPrint quiet (CSS it does not know — screen-only rules — is not the user's business) and
    reproducible: embedded font subsets carry a timestamp (fontTools honours SOURCE_DATE_EPOCH),
    fixed here so that the same page gives the same PDF bytes."""
    quiet = logging.getLogger("weasyprint")
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = epoch or "946684800"
    try:
        yield
    finally:
        quiet.setLevel(level)
        if epoch is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)


def weasy_document(page: str, paper: str, *, base_url: str, font_config: Any = None) -> Any:
    """WeasyPrint's laid-out document of one page of HTML text (long words made breakable).

    ``font_config``: a ``weasyprint.text.fonts.FontConfiguration`` to share between documents
    (each new one loads the fonts again); it must outlive the documents.
    """
    import weasyprint

    size = weasyprint.CSS(string=f"@page {{ size: {_paper(paper, 'paper')}; }}")
    return weasyprint.HTML(string=break_long_words(page), base_url=base_url, url_fetcher=_fetcher()).render(
        stylesheets=[size], font_config=font_config)


def warm_up() -> Any:
    """Lay out and write a few words in the report's fonts (the first layout in a process loads them);
    returns the font configuration, loaded, to lay out more documents with."""
    from weasyprint.text.fonts import FontConfiguration

    fonts = FontConfiguration()
    with writing():
        weasy_document("<p>a <b>b</b> <i>c</i> <code>d</code></p>", DEFAULT_PAPER, base_url=".",
                       font_config=fonts).write_pdf()
    return fonts


def render_whole(page: str, target: str | Path, *, paper: str = DEFAULT_PAPER) -> Path:
    """Lay out one report page (HTML text) as one document and write it to ``target`` (directly)."""
    target = Path(target)
    try:
        with writing():
            weasy_document(page, paper, base_url=str(target.parent)).write_pdf(str(target))
    except Exception as exc:  # noqa: BLE001 - one line for the user, not a traceback
        msg = f"{target.name}: the PDF could not be rendered ({type(exc).__name__}: {exc}); report.html is unaffected"
        raise FreerunError(msg) from None
    return target


def render_pdf(page: str, target: str | Path, *, paper: str = DEFAULT_PAPER, printers: Any = None,
               cache: str | Path | None = None, meanwhile: Any = None) -> Path:
    """Lay out one report page (HTML text) as a PDF at ``target`` (written directly: callers stage it).

    In parts, two processes at once, where it can be (:mod:`calcs.pdf_parts`; ``printers``: the
    build's helpers, else two are started for this rendering; ``cache``: a folder of laid-out
    parts), else as one document; the pages are the same either way. ``meanwhile()``: work for
    this process while the helpers lay the parts out (it must not raise; called at most once, and
    not when the PDF is laid out here).
    """
    from . import pdf_parts

    if pdf_parts.enabled() and pdf_parts.render(page, target, _paper(paper, "paper"), printers, cache, meanwhile):
        return Path(target)
    return render_whole(page, target, paper=paper)


def write_pdf(build_dir: str | Path, *, paper: str | None = None) -> Path:
    """Re-render ``<build>/report.pdf`` from ``<build>/report.html`` (atomically); return its path.

    ``paper`` defaults to the page size recorded in the build's resolved project.
    """
    folder = Path(build_dir)
    source = folder / HTML_FILE
    try:
        page = source.read_text(encoding="utf-8")
    except OSError as exc:
        msg = f"{source}: cannot be read ({exc.strerror}); build the report first"
        raise FreerunError(msg) from None
    target = folder / PDF_FILE
    tmp = folder / f".{PDF_FILE}.tmp-{os.getpid()}"
    try:
        render_pdf(page, tmp, paper=paper or paper_of_build(folder))
        os.replace(tmp, target)
    except OSError as exc:
        msg = f"{target}: cannot be written ({exc.strerror or exc}); the previous file is unchanged"
        raise FreerunError(msg) from None
    finally:
        tmp.unlink(missing_ok=True)
    return target


def write_renderings(folder: str | Path, page: str, *, pdf: bool | None = None, paper: str = DEFAULT_PAPER,
                     printers: Any = None, cache: str | Path | None = None) -> Path:
    """Write report.html, the exports and (``pdf``; None: when the folder has one already) report.pdf.

    Everything is rendered under temporary names first; the files are replaced only when all
    renderings succeeded. ``printers``, ``cache``: the build's PDF helpers
    (:func:`calcs.pdf_parts.start`) and folder of laid-out parts (:func:`render_pdf`).
    Returns the path of report.html.
    """
    from .exports import stage_exports, swap_exports

    folder = Path(folder)
    html_path = folder / HTML_FILE
    pdf_path = folder / PDF_FILE
    want_pdf = pdf_path.exists() if pdf is None else pdf
    html_tmp = folder / f".{HTML_FILE}.tmp-{os.getpid()}"
    pdf_tmp = folder / f".{PDF_FILE}.tmp-{os.getpid()}"
    exports: list[Any] = []  # (the staged exports folder or None, an error or None), once made

    def export() -> None:
        try:
            exports.append((stage_exports(folder, page), None))
        except BaseException as exc:  # noqa: BLE001 - raised below, once the PDF is done
            exports.append((None, exc))

    try:
        html_tmp.write_text(page, encoding="utf-8")
        if want_pdf:  # the exports (≈ 0.3 s in this process) while the PDF helpers lay the parts out
            render_pdf(page, pdf_tmp, paper=paper, printers=printers, cache=cache, meanwhile=export)
        if not exports:
            export()
        staged, error = exports[0]
        if error is not None:
            raise error
        swap_exports(folder, staged)
        exports.clear()  # in place now
        if want_pdf:
            os.replace(pdf_tmp, pdf_path)
        os.replace(html_tmp, html_path)
    except OSError as exc:
        msg = f"{folder}: the report could not be written ({exc.strerror or exc})"
        raise FreerunError(msg) from None
    finally:
        html_tmp.unlink(missing_ok=True)
        pdf_tmp.unlink(missing_ok=True)
        if exports and exports[0][0] is not None:  # staged, but something after it failed
            import shutil

            shutil.rmtree(exports[0][0], ignore_errors=True)
    return html_path


def refresh(build_dir: str | Path) -> None:
    """Re-write a build's renderings from its report.html: report.pdf (if it has one) and the exports."""
    from .exports import write_exports

    folder = Path(build_dir)
    if (folder / PDF_FILE).exists():
        write_pdf(folder)
    write_exports(folder)
