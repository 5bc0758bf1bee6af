"""report.pdf laid out in parts, two processes at once, and put together as one document.

WeasyPrint lays a document out in one Python thread: about 4 s for the demo report, on one
core, while the machine's other core waits; and after a rebuild most of the report is what it
was. This module cuts the report page at page breaks that the print style sheet forces anyway
(each top-level block of ``report.html`` follows a ``<!--freerun-part-->`` mark, :data:`MARK`)
into parts (:func:`plan`): the cover and the executive summary; then one part at each sizable
block that starts a page — each stage section, the parameter list — after the **contents**,
which is laid out once every part's pages are known, with the page numbers they give. A
**footer layer** — one empty page per page of the report, carrying only "page N of M" — is laid
over the pages at the end.

Two helper processes (:class:`Printer`, :func:`start`; a build starts them with its stages, at
a low priority, so their import of WeasyPrint is done by the time the PDF is due) take the parts
largest first, then the contents and the footer layer side by side. Parts come from, and go to,
a cache of laid-out parts (:class:`PartCache`, keyed by their HTML), so a rebuild lays out only
the parts that changed. The parts are laid out without the page number; :func:`assemble`
(pikepdf) copies the pages in order, lays the footer layer over each page, and rebuilds the
named destinations (every ``id``; links point at them by name) and the bookmarks from the
parts' own, so links, bookmarks and page numbers are those of the report laid out as one
document. Each part repeats the DRAFT mark (between the :data:`COMMON` marks in the cover; every
block opens with its own running-header strings), and a link whose target is in another part
gets a hidden stand-in anchor so that WeasyPrint keeps it.

The tests hold the result against WeasyPrint's one-document layout (same pages, text, pixels,
links, bookmarks and destinations). Anything unexpected — no marks, a helper gone or failing, a
part whose bookmarks do not match — falls back to the one-document layout
(:func:`calcs.pdf.render_whole`); ``FREERUN_PDF_PARTS=0`` always does.

Run as ``python -m calcs.pdf_parts`` by :class:`Printer` only: it reads jobs (length-prefixed
JSON) on standard input and answers on standard output; it ends when its input closes.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import signal
import struct
import subprocess
import sys
import tempfile
import threading
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Any

# calcs.pdf imports WeasyPrint itself only on first use
from .pdf import warm_up, weasy_document, writing

#: Put before every top-level block of the report page by ``templates/report.html.j2``.
MARK = "<!--freerun-part-->"
#: Around what every part repeats (the DRAFT mark, until the report is approved), in the cover.
#: Every block starts with its own ``p.print-strings`` (the running-header strings), so that each
#: part's first block has the boxes it has in the one-document layout.
COMMON = ("<!--freerun-common-->", "<!--/freerun-common-->")
#: ``FREERUN_PDF_PARTS=0`` lays the PDF out as one document, in this process.
ENV = "FREERUN_PDF_PARTS"
#: Blocks that start on a new page (``templates/report.css``: ``section.stage, section.decisions,
#: section.audit, section.parameters, section.changes { break-before: page }``): a part may begin
#: at one of them.
PAGE_STARTS = ("stage", "decisions", "audit", "parameters", "changes")
#: Blocks that a build has laid out while its stages run (:func:`ahead`): their HTML depends only
#: on the inputs (:func:`calcs.report.render_parameters_page`).
AHEAD = ("parameters",)
#: The contents block (its own page or pages: the summary breaks after, the contents too).
CONTENTS = "contents"
#: A part after the contents takes the next page-starting block too while both are smaller than
#: this share of the page's text (each laid-out document costs ≈ 0.1 s of its own).
MIN_SHARE = 0.10
#: Laid-out parts kept in a build's cache folder (the least recently used go first).
CACHE_ENTRIES = 64
#: Resource name of the footer layer of page N: this + N.
LAYER = "/FreerunPageNumber"
#: Niceness the helpers take: they import WeasyPrint while the stages run.
NICE = 10

_LEN = struct.Struct("<I")
_PID = struct.Struct("<i")
_ID = re.compile(r'\bid="([^"]+)"')
_HREF = re.compile(r'href="#([^"]+)"')
_DATA_URI = re.compile(r'data:[^"]*')
_CONTENTS_LINK = re.compile(r'<a href="#([^"]+)"')

#: Style for the parts: no page number (the footer layer brings it).
PART_CSS = "@page { @bottom-right { content: none; } }"
#: Style for the footer layer: nothing but the page number, on a transparent page.
FOOTER_CSS = ("@page { @top-left { content: none; border: none; } @top-right { content: none; border: none; }"
              " @bottom-left { content: none; } }"
              " @page cover { @top-left { content: none; border: none; } @top-right { content: none; border: none; } }"
              " html, body { background: none !important; }")
#: Style for the contents page laid out on its own: the page numbers are given, not counted.
CONTENTS_CSS = '@media print { .contents a::after { content: leader(". ") attr(data-page); } }'


def enabled() -> bool:
    """Whether report.pdf is laid out in parts (``FREERUN_PDF_PARTS`` unset or not ``0``; pikepdf present)."""
    if os.environ.get(ENV, "1").strip() == "0":
        return False
    from importlib.util import find_spec

    return find_spec("pikepdf") is not None  # found, not imported: see import_pikepdf


def import_pikepdf() -> None:
    """Import pikepdf (≈ 0.1 s), which :func:`assemble` uses; a build does it in a thread while its stages run."""
    with contextlib.suppress(ImportError):
        import pikepdf  # noqa: F401


# ----------------------------------------------------------------------------- the helper process


class Printer:
    """A PDF helper: a process that imports WeasyPrint as it starts and lays out what it is sent.

    It lowers its own priority (:data:`NICE`) before it imports anything heavy. ``twin``: the
    two ends (job pipe's read end, answer pipe's write end) that the helper hands, once it has
    imported WeasyPrint, to a copy of itself (:class:`Twin`, :func:`start`).
    """

    def __init__(self, twin: tuple[int, int] | None = None) -> None:
        self._process = subprocess.Popen([sys.executable, "-m", "calcs.pdf_parts", *map(str, twin or ())],
                                         stdin=subprocess.PIPE, stdout=subprocess.PIPE, close_fds=True,
                                         pass_fds=twin or ())
        self._in, self._out = self._process.stdin, self._process.stdout
        self.ahead: Ahead | None = None  # what it lays out ahead of the report (:func:`ahead`)

    @property
    def pid(self) -> int | None:
        return self._process.pid

    def submit(self, job: dict[str, Any]) -> None:
        """Send one job (``kind`` part, contents or footer; see :func:`_serve`)."""
        _send(self._in, job)

    def reply(self) -> dict[str, Any]:
        """The helper's next answer; raises ``OSError`` if it is gone, ``RuntimeError`` if the part failed."""
        answer = _receive(self._out)
        if "error" in answer:
            raise RuntimeError(answer["error"])
        return answer

    def alive(self) -> bool:
        return self._process.poll() is None

    def close(self) -> None:
        """End the helper (idempotent)."""
        with contextlib.suppress(OSError):
            if not self._in.closed:
                self._in.close()
        if self.alive():
            self._end()
        self._wait()
        if self.ahead is not None:
            self.ahead.thread.join()  # it ends once its helper has: no reply comes
        self._out.close()

    def _end(self) -> None:
        self._process.terminate()

    def _wait(self) -> None:
        self._process.wait()


class Twin(Printer):
    """The second helper: a copy that the first forks once WeasyPrint is imported and its fonts are
    loaded (so that import, ≈ 0.9 s of processor time, is paid once while the stages run).

    It is not this process's child: it tells its process id first, on its answer pipe, and is
    reaped by the first helper (or, once that has ended, by the system). If the first helper
    ends before it forks, the answer pipe closes: the twin counts as ended.
    """

    def __init__(self, jobs: int, answers: int) -> None:  # the build's ends of the twin's pipes
        self._in, self._out = os.fdopen(jobs, "wb"), os.fdopen(answers, "rb")
        self._pid: int | None = None
        self._told = False
        self.ahead = None

    @property
    def pid(self) -> int | None:
        """The twin's process id (waits until the first helper has forked it); None if it never was."""
        if not self._told:
            self._told = True
            with contextlib.suppress(OSError, ValueError):
                head = self._out.read(_PID.size)
                if len(head) == _PID.size:
                    (self._pid,) = _PID.unpack(head)
        return self._pid

    def submit(self, job: dict[str, Any]) -> None:
        self.pid  # noqa: B018 - its process id comes first on the answer pipe
        super().submit(job)

    def alive(self) -> bool:
        pid = self.pid
        if pid is None:
            return False
        try:
            with open(f"/proc/{pid}/stat", encoding="ascii") as handle:
                return handle.read().rsplit(")", 1)[1].split()[0] != "Z"  # a zombie has ended
        except (OSError, IndexError):
            return False

    def _end(self) -> None:
        with contextlib.suppress(OSError, TypeError):
            os.kill(self.pid, signal.SIGTERM)

    def _wait(self) -> None:
        import time

        deadline = time.monotonic() + 5
        while self.alive() and time.monotonic() < deadline:
            time.sleep(0.005)


def _send(stream: Any, message: dict[str, Any]) -> None:
    body = json.dumps(message).encode("utf-8")
    stream.write(_LEN.pack(len(body)) + body)
    stream.flush()


def _receive(stream: Any) -> dict[str, Any]:
    head = stream.read(_LEN.size)
    if len(head) < _LEN.size:
        msg = "the PDF helper ended"
        raise OSError(msg)
    (length,) = _LEN.unpack(head)
    body = stream.read(length)
    if len(body) < length:
        msg = "the PDF helper ended mid-answer"
        raise OSError(msg)
    return json.loads(body.decode("utf-8"))


def _serve(twin: tuple[int, int] | None = None) -> None:
    """The helper's loop: ``part``, ``contents`` and ``footer`` jobs, one at a time.

    ``twin``: pipe ends for a copy of this helper, forked once WeasyPrint is loaded (:class:`Twin`).
    """
    fonts = warm_up()  # one font configuration for every document this helper lays out
    if twin is not None:
        sys.stdout.flush()
        signal.signal(signal.SIGCHLD, signal.SIG_IGN)  # the twin is reaped as it ends
        if os.fork() == 0:  # the twin: the same loaded fonts, its own pipes (this process has one thread)
            signal.signal(signal.SIGCHLD, signal.SIG_DFL)
            os.dup2(twin[0], 0)
            os.dup2(twin[1], 1)
            os.write(1, _PID.pack(os.getpid()))
        os.close(twin[0])
        os.close(twin[1])
    inp, out = sys.stdin.buffer, sys.stdout.buffer
    jobs = {"part": _part, "contents": _contents, "footer": _footer}
    while True:
        try:
            job = _receive(inp)
        except OSError:
            return  # the build closed our input
        try:
            jobs[job["kind"]](job, out, fonts)
        except Exception as exc:  # noqa: BLE001 - sent back; the build falls back to one document
            _send(out, {"error": f"{type(exc).__name__}: {exc}"})


def _part(job: dict[str, Any], out: Any, fonts: Any) -> None:
    """Lay out one part; answer its pages, anchors and bookmark levels; write it; answer again."""
    with writing():
        document = weasy_document(job["html"], job["paper"], base_url=job["base_url"], font_config=fonts)
        _send(out, {"pages": len(document.pages), "anchors": _anchor_pages(document), "levels": _levels(document)})
        document.write_pdf(job["out"])
    _send(out, {"written": True})


def _contents(job: dict[str, Any], out: Any, fonts: Any) -> None:
    """Lay out and write the contents: ``candidates[k - 1]`` has the page numbers the parts get when
    the contents is k pages long; the first that is as long as it assumes is the one."""
    with writing():
        for length, html in enumerate(job["candidates"], start=1):
            document = weasy_document(html, job["paper"], base_url=job["base_url"], font_config=fonts)
            if len(document.pages) == length:
                break
        else:
            msg = "the contents does not settle on a length"
            raise RuntimeError(msg)
        document.write_pdf(job["out"])
    _send(out, {"pages": length, "levels": _levels(document)})


def _footer(job: dict[str, Any], out: Any, fonts: Any) -> None:
    """Lay out and write the footer layer of ``count`` pages."""
    with writing():
        layer = weasy_document(footer_html(job["head"], job["count"]), job["paper"], base_url=job["base_url"],
                               font_config=fonts)
        if len(layer.pages) != job["count"]:
            msg = f"the footer layer has {len(layer.pages)} pages, not {job['count']}"
            raise RuntimeError(msg)
        layer.write_pdf(job["out"])
    _send(out, {"pages": job["count"]})


# ----------------------------------------------------------------------------- cutting the page


@dataclass
class Block:
    """One top-level block of the report page: its ``id``, its first class and its HTML."""

    id: str
    kind: str
    html: str


@dataclass
class Cut:
    """The report page in pieces: what surrounds the blocks, and the blocks."""

    head: str  # up to </head>, without it
    body_tag: str  # "<body …>"
    prefix: str  # what every part repeats (between the COMMON marks)
    blocks: list[Block]
    tail: str  # from </body>


_TAG = re.compile(r'\s*<(section|nav)\b([^>]*)>')
_STRINGS = re.compile(r'\s*<p class="print-strings"[^>]*>')
_CLASS = re.compile(r'\bclass="([^"]+)"')


def cut_page(page: str) -> Cut | None:
    """The page's blocks at :data:`MARK`; None when the page is not laid out that way."""
    head_end = page.find("</head>")
    body_at = page.find("<body", head_end)
    if head_end < 0 or body_at < 0:
        return None
    body_open = page.index(">", body_at) + 1
    tail_at = page.rfind("</body>")
    pieces = page[body_open:tail_at].split(MARK)
    start, end = page.find(COMMON[0]), page.find(COMMON[1])
    if len(pieces) < 2 or tail_at < 0 or not 0 <= start < end:
        return None
    if pieces[0].strip() not in ("", page[start:end + len(COMMON[1])]):  # a page of some blocks: the marks first
        return None
    blocks = []
    for piece in pieces[1:]:
        tag = _TAG.match(piece)
        ident = _ID.search(tag.group(2)) if tag else None
        kind = _CLASS.search(tag.group(2)) if tag else None
        if ident is None or kind is None:
            return None
        blocks.append(Block(ident.group(1), kind.group(1).split()[0], piece))
    return Cut(page[:head_end], page[body_at:body_open], page[start + len(COMMON[0]):end], blocks, page[tail_at:])


def plan(cut: Cut) -> tuple[list[Block], Block, list[list[Block]]] | None:
    """(the blocks before the contents, the contents, the parts after it), or None when the page has no contents.

    After the contents a part starts at each block that starts a page (:data:`PAGE_STARTS`),
    unless both the part so far and that block are less than :data:`MIN_SHARE` of the page's
    text: each sizable stage section (and the parameter list) is a part of its own, so a rebuild
    that changed one stage lays out that part again and takes the others from the cache. The
    parts depend on the page only.
    """
    ids = [b.id for b in cut.blocks]
    if CONTENTS not in ids or ids.index(CONTENTS) == 0:
        return None
    at = ids.index(CONTENTS)
    weight = {id(b): _weight(b.html) for b in cut.blocks}
    total = sum(weight.values())
    parts: list[list[Block]] = []
    for block in cut.blocks[at + 1:]:
        sizable = max(sum(weight[id(b)] for b in parts[-1]) if parts else 0, weight[id(block)]) >= MIN_SHARE * total
        if not parts or (block.kind in PAGE_STARTS and sizable):
            parts.append([block])
        else:
            parts[-1].append(block)
    if not parts:
        return None
    return cut.blocks[:at], cut.blocks[at], parts


def _weight(html: str) -> int:
    """Rough layout work of some HTML: its length without embedded images."""
    return len(_DATA_URI.sub("", html))


def part_html(cut: Cut, blocks: list[Block], css: str, *, pages: dict[str, int] | None = None) -> str:
    """One part as a page of its own, with the prefix, stand-in anchors and the extra ``css``.

    ``pages``: for the contents, the page number of each link target (written in ``data-page``).
    """
    html = "".join(b.html for b in blocks)
    if pages is not None:
        html = _CONTENTS_LINK.sub(lambda m: f'<a href="#{m.group(1)}" data-page="{pages.get(m.group(1), "")}"',
                                  html)
    defined = set(_ID.findall(html)) | set(_ID.findall(cut.prefix))
    missing = sorted(set(_HREF.findall(html)) - defined)
    stand_ins = "".join(f'<span id="{name}"></span>' for name in missing)
    at = _TAG.match(html).end()
    strings = _STRINGS.match(html, at)
    if strings is not None:  # the block's own running-header strings (every block of the template has them)
        close = html.index("</p>", strings.end())
        html = html[:close] + stand_ins + html[close:]
    elif stand_ins:  # a page of other making: a hidden paragraph of their own
        html = html[:at] + f'<p class="print-strings" aria-hidden="true">{stand_ins}</p>' + html[at:]
    inner = "" if COMMON[0] in html else cut.prefix  # the DRAFT mark (out of the flow: it moves nothing)
    return (cut.head + f"<style>{css}</style></head>\n" + cut.body_tag + html[:at] + inner + html[at:]
            + cut.tail)


def defined_ids(cut: Cut, blocks: list[Block]) -> set[str]:
    """The ``id``s that really are in ``blocks`` (and the prefix): the part's own destinations."""
    return set(_ID.findall("".join(b.html for b in blocks))) | set(_ID.findall(cut.prefix))


def footer_html(head: str, count: int) -> str:
    """The footer layer: ``count`` empty pages with only "page N of M" (``head``: the page's, up to </head>)."""
    pages = "<div></div>" + '<div style="break-before: page"></div>' * (count - 1)
    return head + f"<style>{FOOTER_CSS}</style></head>\n<body>{pages}</body></html>"


# ----------------------------------------------------------------------------- laying out and putting together


def _anchor_pages(document: Any) -> dict[str, int]:
    """First page (0-based) of every anchor of a laid-out WeasyPrint document."""
    found: dict[str, int] = {}
    for index, page in enumerate(document.pages):
        for name in page.anchors:
            found.setdefault(name, index)
    return found


def _levels(document: Any) -> list[int]:
    """Bookmark levels of a laid-out document, in document order (its outline's pre-order)."""
    return [mark[0] for page in document.pages for mark in page.bookmarks]


def start() -> tuple[Printer, Printer]:
    """The two helpers a rendering uses (a build starts them ahead, with its stages): on Linux one
    process and its :class:`Twin`, elsewhere two processes."""
    if not (sys.platform.startswith("linux") and hasattr(os, "fork")):
        return Printer(), Printer()
    jobs_read, jobs_write = os.pipe()
    answers_read, answers_write = os.pipe()
    try:
        first = Printer(twin=(jobs_read, answers_write))
    except BaseException:
        os.close(jobs_write)
        os.close(answers_read)
        raise
    finally:
        os.close(jobs_read)  # the helpers' ends: only they hold them now
        os.close(answers_write)
    return first, Twin(jobs_write, answers_read)


def close(printers: tuple[Printer, Printer]) -> None:
    for printer in printers:
        printer.close()


def render(page: str, target: str | Path, paper: str, printers: tuple[Printer, Printer] | None = None,
           cache: str | Path | None = None, meanwhile: Any = None) -> bool:
    """Lay ``page`` out in parts and write the assembled PDF to ``target``; False when it cannot be done so.

    ``printers``: the build's helpers (:func:`start`, started ahead); None starts two for this
    rendering. ``cache``: a folder of laid-out parts (:class:`PartCache`) to take unchanged parts
    from and to keep new ones in. ``meanwhile()`` is called here once the helpers have their
    first parts (and must not raise). A False return leaves nothing behind; the caller then
    lays the page out as one document.
    """
    cut = cut_page(page)
    layout = plan(cut) if cut is not None else None
    if layout is None:
        return False
    own = printers is None
    pair = start() if printers is None else printers
    folder = Path(tempfile.mkdtemp(prefix=".pdf-parts-", dir=str(Path(target).parent)))
    done = False
    try:
        store = PartCache(Path(cache), paper) if cache is not None else None
        done = _render(cut, *layout, Path(target), paper, pair, folder, store, meanwhile)
    except Exception:  # noqa: BLE001 - the one-document layout follows, and reports its own failure
        done = False
    finally:
        if own or not done:
            close(pair)  # after a failure their state is unknown: later renderings start their own
        import shutil

        shutil.rmtree(folder, ignore_errors=True)
    return done


@dataclass
class Laid:
    """A laid-out part: its PDF and what its helper told of it."""

    path: Path
    info: dict[str, Any]


class PartCache:
    """Laid-out parts by the SHA-256 of what made them (the part's HTML, page size, code versions).

    Entries ``<key>.part`` (:class:`calcs.cache.DigestedFiles`, digest checked on use: a damaged
    entry is laid out again) hold what the helper told of the part (pages, anchors, bookmark
    levels; JSON), a NUL byte, and its PDF. The same HTML gives the same bytes, so a part from
    the cache is the part that would be laid out now.
    """

    def __init__(self, folder: Path, paper: str) -> None:
        from importlib.metadata import version

        from .cache import DigestedFiles, code_version

        self.folder = folder
        self._files = DigestedFiles(folder, ".part", CACHE_ENTRIES)
        self._salt = json.dumps([paper, version("weasyprint"), code_version()])

    def key(self, *texts: str) -> str:
        import hashlib

        digest = hashlib.sha256(self._salt.encode())
        for text in texts:
            digest.update(b"\0" + text.encode("utf-8"))
        return digest.hexdigest()

    def has(self, key: str) -> bool:
        """Whether the cache holds an entry ``key`` (checked on :meth:`fetch`)."""
        return self._files.has(key)

    def fetch(self, key: str, into: Path) -> Laid | None:
        """The entry ``key``, its PDF written into the folder ``into``."""
        data = self._files.get(key)
        if data is None or b"\0" not in data:
            return None
        note, pdf = data.split(b"\0", 1)
        copy = into / f"cached-{key}.pdf"
        try:
            info = json.loads(note.decode("utf-8"))
            copy.write_bytes(pdf)
        except (OSError, ValueError):
            return None
        return Laid(copy, info)

    def put(self, key: str, laid: Laid) -> None:
        try:
            pdf = laid.path.read_bytes()
        except OSError:
            return  # a cache that cannot be written only costs time
        self._files.put(key, json.dumps(laid.info).encode("utf-8") + b"\0" + pdf)


class Ahead:
    """The parts that one helper lays out into the part cache while a build's stages run (:func:`ahead`).

    A thread of the build waits for the helper's answers. ``keys`` (set once ``keyed`` is) are
    the cache keys it lays out; the rendering leaves those parts to that helper, which takes them
    from the cache once ``thread`` has ended (or lays them out then, if they failed).
    """

    def __init__(self, printer: Printer, page_of: Any, paper: str, base_url: str, store: PartCache) -> None:
        self.keys: set[str] = set()
        self.keyed = threading.Event()
        self.thread = threading.Thread(target=self._run, args=(printer, page_of, paper, base_url, store),
                                       name="freerun-pdf-ahead", daemon=True)
        self.thread.start()

    def _run(self, printer: Printer, page_of: Any, paper: str, base_url: str, store: PartCache) -> None:
        jobs: list[tuple[str, str]] = []
        try:
            cut = cut_page(page_of())
            for block in cut.blocks if cut is not None else []:
                if block.kind in AHEAD:
                    html = part_html(cut, [block], PART_CSS)
                    key = store.key(html)
                    if not store.has(key):
                        jobs.append((key, html))
            self.keys = {key for key, _ in jobs}
        except Exception:  # noqa: BLE001, S110 - nothing is laid out ahead; the rendering lays out all
            pass
        finally:
            self.keyed.set()
        for key, html in jobs:
            out = store.folder / f".ahead-{os.getpid()}-{key}.pdf"
            try:
                store.folder.mkdir(parents=True, exist_ok=True)
                printer.submit({"kind": "part", "html": html, "paper": paper, "base_url": base_url, "out": str(out)})
                info = printer.reply()
                printer.reply()  # written
                store.put(key, Laid(out, info))
            except RuntimeError:  # that part failed in the helper, which goes on; the rendering tries again
                continue
            except OSError:  # the helper is gone (the rendering finds that out too)
                return
            finally:
                out.unlink(missing_ok=True)


def ahead(printers: tuple[Printer, Printer], page_of: Any, paper: str, base_url: str, cache: str | Path) -> None:
    """Have the first helper lay out, now, the :data:`AHEAD` blocks of the page ``page_of()`` gives.

    ``page_of`` (called in a thread) renders a page with those blocks as the report will have
    them (:func:`calcs.report.render_parameters_page`); the parts go into the cache folder
    ``cache``. :func:`render` takes them from there: a part whose HTML turns out different is
    simply not found, and is laid out with the rest.
    """
    printers[0].ahead = Ahead(printers[0], page_of, paper, base_url, PartCache(Path(cache), paper))


def _render(cut: Cut, front: list[Block], contents: Block, after: list[list[Block]], target: Path, paper: str,
            pair: tuple[Printer, Printer], folder: Path, store: PartCache | None, meanwhile: Any = None) -> bool:
    """Every part in one of the two helpers (largest first), then the contents and the footer layer side by side."""
    base = str(target.parent)
    parts = [front, *after]  # in page order; the contents goes after the first
    htmls = [part_html(cut, blocks, PART_CSS) for blocks in parts]
    own = [defined_ids(cut, blocks) for blocks in parts]  # a part's other anchors are stand-ins
    laid: dict[Any, Laid] = {}  # part index, "contents" or "footer" → its laid-out PDF
    keys = [store.key(html) if store else "" for html in htmls]
    for i, key in enumerate(keys):
        hit = store.fetch(key, folder) if store else None
        if hit is not None:
            laid[i] = hit
    waiting: dict[int, Printer] = {}  # parts that a helper is laying out ahead (:func:`ahead`)
    for helper in pair:
        if helper.ahead is not None and store is not None:
            helper.ahead.keyed.wait()
            waiting.update({i: helper for i, key in enumerate(keys) if key in helper.ahead.keys and i not in laid})
    todo: list[Any] = sorted((i for i in range(len(parts)) if i not in laid and i not in waiting),
                             key=lambda i: -_weight(htmls[i]))
    todo += ["contents", "footer"]  # once every part's pages are known
    known = threading.Condition()
    failures: list[BaseException] = []

    def settle(helper: Printer) -> None:
        """The parts ``helper`` laid out ahead, from the cache (or, failed, back to be laid out)."""
        if helper.ahead is not None:
            helper.ahead.thread.join()  # a helper answers one job at a time: its earlier one first
        mine = [i for i, h in waiting.items() if h is helper]
        for i in mine:
            del waiting[i]  # only this helper's thread reads or changes its entries
        for i in mine:
            hit = store.fetch(keys[i], folder)
            with known:
                if hit is not None:
                    laid[i] = hit
                else:
                    todo.insert(0, i)
                known.notify_all()

    def counts() -> list[int]:
        return [laid[i].info["pages"] for i in range(len(parts))]

    def numbers(length: int) -> dict[str, int]:
        """Page number of each part's anchors when the contents is ``length`` pages long."""
        found: dict[str, int] = {}
        offset = 0
        for i, pages in enumerate(counts()):
            for name, index in laid[i].info["anchors"].items():
                if name in own[i]:
                    found.setdefault(name, offset + index + 1)
            offset += pages + (length if i == 0 else 0)
        return found

    def job_for(task: Any) -> tuple[dict[str, Any], str]:
        """The helper's job for ``task`` and its cache key."""
        common = {"paper": paper, "base_url": base, "out": str(folder / f"{task}.pdf")}
        if task == "contents":
            candidates = [part_html(cut, [contents], PART_CSS + CONTENTS_CSS, pages=numbers(n)) for n in (1, 2, 3)]
            return {**common, "kind": "contents", "candidates": candidates}, store.key(*candidates) if store else ""
        if task == "footer":  # beside the contents, assuming one page unless it is known (checked below)
            count = sum(counts()) + (laid["contents"].info["pages"] if "contents" in laid else 1)
            return ({**common, "kind": "footer", "head": cut.head, "count": count},
                    store.key("footer", cut.head, str(count)) if store else "")
        return {**common, "kind": "part", "html": htmls[task]}, keys[task]

    def run(helper: Printer, task: Any) -> None:
        job, key = job_for(task)
        hit = store.fetch(key, folder) if store and task in ("contents", "footer") else None
        if hit is None:
            helper.submit(job)
            hit = Laid(Path(job["out"]), helper.reply())
            if task not in ("contents", "footer"):
                with known:  # its pages and anchors are known: the contents may go ahead
                    laid[task] = hit
                    known.notify_all()
                helper.reply()  # written
            if store:
                store.put(key, hit)
        with known:
            laid[task] = hit
            known.notify_all()

    def work(helper: Printer) -> None:
        try:
            settle(helper)
            while True:
                with known:
                    if failures or not todo:
                        return
                    ready = all(i in laid for i in range(len(parts)))
                    task = next((t for t in todo if isinstance(t, int) or ready), None)
                    if task is None:
                        known.wait()
                        continue
                    todo.remove(task)
                run(helper, task)
        except BaseException as exc:  # noqa: BLE001 - reported below; the caller falls back
            with known:
                failures.append(exc)
                known.notify_all()

    threads = [threading.Thread(target=work, args=(h,), name="freerun-pdf-part", daemon=True) for h in pair]
    for thread in threads:
        thread.start()
    if meanwhile is not None:
        meanwhile()
    for thread in threads:
        thread.join()
    if not failures and laid["footer"].info["pages"] != sum(counts()) + laid["contents"].info["pages"]:
        todo.append("footer")  # the contents took more than one page: the footer layer again
        work(pair[0])
    if failures:
        return False
    paths = [laid[0].path, laid["contents"].path, *(laid[i].path for i in range(1, len(parts)))]
    levels = [laid[0].info["levels"], laid["contents"].info["levels"],
              *(laid[i].info["levels"] for i in range(1, len(parts)))]
    return assemble(paths, laid["footer"].path, target, levels=levels,
                    ids=[own[0], defined_ids(cut, [contents]), *own[1:]])


def assemble(paths: list[Path], footer: Path, target: Path, *, levels: list[list[int]],
             ids: list[set[str]]) -> bool:
    """Put the parts together, in page order (the first part, the contents, the others), under the footer layer.

    ``levels``: each part's bookmark levels in document order; ``ids``: each part's own ``id``s
    (its other destinations are stand-ins).
    """
    import pikepdf

    with contextlib.ExitStack() as stack:
        parts = [stack.enter_context(pikepdf.open(path)) for path in paths]
        layer = stack.enter_context(pikepdf.open(footer))
        pdf = parts[0]
        marks = [_outline_entries(p) for p in parts]
        if any(len(m) != len(lv) for m, lv in zip(marks, levels)):
            return False
        names = [_destinations(p) for p in parts]
        offsets = []
        with warnings.catch_warnings():  # "named destinations are not copied": they are rebuilt below
            warnings.simplefilter("ignore", getattr(pikepdf, "PageCopyWarning", UserWarning))
            for part in parts[1:]:
                offsets.append(len(pdf.pages))
                pdf.pages.extend(part.pages)
        if len(pdf.pages) != len(layer.pages):
            return False
        offset_of = {id(part): offset for part, offset in zip(parts[1:], offsets)}
        index_of = {id(p): {page.objgen: i for i, page in enumerate(p.pages)} for p in parts[1:]}

        def local(part: Any, dest: Any) -> Any:
            """``dest`` (page, /XYZ, x, y, zoom) of a part, pointing at that page in the document."""
            if part is pdf:
                return dest  # the first part is the document: its pages are the same objects
            page = pdf.pages[offset_of[id(part)] + index_of[id(part)][dest[0].objgen]]
            return pikepdf.Array([page.obj, *list(dest)[1:]])

        # destinations: each part's own ids (the stand-ins are left out)
        merged: dict[str, Any] = {}
        for part, own, found in zip(parts, ids, names):
            for name, dest in found.items():
                if name in own and name not in merged:
                    merged[name] = local(part, dest)
        flat = pikepdf.Array()
        for name in sorted(merged):
            flat.append(pikepdf.String(name))
            flat.append(merged[name])
        if "/Names" not in pdf.Root:
            pdf.Root.Names = pikepdf.Dictionary()
        pdf.Root.Names.Dests = pikepdf.Dictionary(Names=flat)
        _write_outline(pdf, [(level, title, local(part, dest), closed)
                             for part_levels, part_marks in zip(levels, marks)
                             for level, (title, _, dest, closed, part) in zip(part_levels, part_marks)])
        # the footer layer over each page, under a fixed name per page (WeasyPrint's pages share one
        # resource dictionary, and a fixed name gives the same bytes for the same page)
        for number, (page, sheet) in enumerate(zip(pdf.pages, layer.pages), start=1):
            name = f"{LAYER}{number}"
            page.add_resource(pdf.copy_foreign(sheet.as_form_xobject()), pikepdf.Name.XObject, pikepdf.Name(name))
            page.contents_add(b"q\n", prepend=True)  # WeasyPrint leaves its page transformation set
            page.contents_add(f"\nQ\nq {name} Do Q\n".encode("ascii"))
        pdf.save(target, deterministic_id=True)
    return True


def _outline_entries(pdf: Any) -> list[tuple[str, int, Any, bool, Any]]:
    """(title, page index, destination, closed, pdf) of every bookmark, in pre-order."""
    pages = {page.objgen: index for index, page in enumerate(pdf.pages)}
    out: list[tuple[str, int, Any, bool, Any]] = []
    root = pdf.Root.get("/Outlines")

    def walk(item: Any) -> None:
        while item is not None:
            dest = item.Dest
            out.append((str(item.Title), pages[dest[0].objgen], dest, int(item.get("/Count", 0)) < 0, pdf))
            walk(item.get("/First"))
            item = item.get("/Next")

    if root is not None:
        walk(root.get("/First"))
    return out


def _destinations(pdf: Any) -> dict[str, Any]:
    names = pdf.Root.get("/Names")
    dests = names.get("/Dests") if names is not None else None
    flat = dests.get("/Names") if dests is not None else None
    if flat is None:
        return {}
    return {str(flat[i]): flat[i + 1] for i in range(0, len(flat), 2)}


def _write_outline(pdf: Any, marks: list[tuple[int, str, Any, bool]]) -> None:
    """The document outline from bookmark levels, nested as WeasyPrint nests them (skipped levels kept flat)."""
    import pikepdf

    if "/Outlines" in pdf.Root:
        del pdf.Root["/Outlines"]
    if not marks:
        return
    root = pdf.make_indirect(pikepdf.Dictionary(Type=pikepdf.Name.Outlines))
    # each node: [dictionary, children, closed]
    top: list[list[Any]] = []
    last_by_depth: list[list[list[Any]]] = [top]
    skipped: list[int] = []
    previous = 0
    for level, title, dest, closed in marks:
        if level > previous:
            skipped.append(level - previous - 1)
        else:
            temp = level
            while temp < previous:
                temp += 1 + skipped.pop()
            if temp > previous:
                skipped.append(temp - previous - 1)
        previous = level
        depth = level - sum(skipped)
        node = [pdf.make_indirect(pikepdf.Dictionary(Title=pikepdf.String(title), Dest=dest)), [], closed]
        last_by_depth[depth - 1].append(node)
        del last_by_depth[depth:]
        last_by_depth.append(node[1])

    def link(parent: Any, nodes: list[list[Any]]) -> int:
        """Chain ``nodes`` under ``parent``; the number of visible descendants (PDF /Count)."""
        visible = len(nodes)
        for i, (item, children, closed) in enumerate(nodes):
            item.Parent = parent
            if i:
                item.Prev = nodes[i - 1][0]
            if i + 1 < len(nodes):
                item.Next = nodes[i + 1][0]
            shown = link(item, children)
            item.Count = -shown if closed else shown  # as WeasyPrint writes it (0 for a leaf)
            if not closed:
                visible += shown
        if nodes:
            parent.First, parent.Last = nodes[0][0], nodes[-1][0]
        return visible

    root.Count = link(root, top)
    pdf.Root.Outlines = root


if __name__ == "__main__":
    os.nice(NICE)  # the stages run meanwhile; this one's work is due only at the end
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the build, which then ends us
    _serve((int(sys.argv[1]), int(sys.argv[2])) if len(sys.argv) == 3 else None)
