"""report.pdf laid out in two processes at once, then put together as one document.

WeasyPrint lays a document out in one Python thread: about 4 s for the demo report, on one
core, while the machine's other core waits. This module cuts the report page at page breaks
that the print style sheet forces anyway (each top-level block of ``report.html`` follows a
``<!--freerun-part-->`` mark, :data:`MARK`) into

* part **A**: the cover, the executive summary, the notes and the first stage sections;
* part **B**: the remaining stage sections and the appendices (about :data:`B_SHARE` of the text);
* the **contents** page, laid out once both parts are, with the page numbers they give;
* a **footer layer**: one empty page per page of the report carrying only "page N of M".

Two helper processes (:class:`Printer`, :func:`start`; a build starts them with its stages, at
a low priority, so their import of WeasyPrint is done by the time the PDF is due) lay out A and
B at the same time; A's helper then lays out the contents and the footer layer while B's writes
B. The parts are laid out without the page number; :func:`assemble` (pikepdf) copies the pages
in order — A up to the contents, the contents, the rest of A, B — lays the footer layer over
each page, and rebuilds the named destinations (every ``id``; links point at them by name) and
the bookmarks from the parts' own, so links, bookmarks and page numbers are those of the report
laid out as one document. Each part repeats the running-header strings and the DRAFT mark (the
cover's text between the :data:`COMMON` marks), and a link whose target is in another part gets
a hidden stand-in anchor so that WeasyPrint keeps it.

The tests hold the result against WeasyPrint's one-document layout (same pages, text, pixels,
links, bookmarks and destinations). Anything unexpected — no marks, a helper gone or failing, a
part whose bookmarks do not match — falls back to the one-document layout
(:func:`calcs.pdf.render_whole`); ``FREERUN_PDF_PARTS=0`` always does.

Run as ``python -m calcs.pdf_parts`` by :class:`Printer` only: it reads jobs (length-prefixed
JSON) on standard input and answers on standard output; it ends when its input closes.
"""

from __future__ import annotations

import json
import os
import re
import struct
import subprocess
import sys
import tempfile
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Any

#: Put before every top-level block of the report page by ``templates/report.html.j2``.
MARK = "<!--freerun-part-->"
#: Around what every part repeats (the running-header strings and the DRAFT mark), in the cover.
COMMON = ("<!--freerun-common-->", "<!--/freerun-common-->")
#: ``FREERUN_PDF_PARTS=0`` lays the PDF out as one document, in this process.
ENV = "FREERUN_PDF_PARTS"
#: Blocks that start on a new page (``templates/report.css``: ``section.stage, section.decisions,
#: section.audit, section.changes { break-before: page }``): part B may begin at one of them.
PAGE_STARTS = ("stage", "decisions", "audit", "changes")
#: The contents block (its own page or pages: the summary breaks after, the contents too).
CONTENTS = "contents"
#: Share of the page's text that part B takes, at most: the parent also lays out the contents
#: and the footer layer and puts the document together.
B_SHARE = 0.58
#: Resource name of the footer layer of page N: this + N.
LAYER = "/FreerunPageNumber"
#: Niceness of the helper: it imports WeasyPrint while the stages run.
NICE = 10

_LEN = struct.Struct("<I")
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
    try:
        import pikepdf  # noqa: F401
    except ImportError:
        return False
    return True


# ----------------------------------------------------------------------------- the helper process


class Printer:
    """The build's PDF helper: a process with WeasyPrint imported that lays out part B on request."""

    def __init__(self) -> None:
        self._process = subprocess.Popen([sys.executable, "-m", "calcs.pdf_parts"], stdin=subprocess.PIPE,
                                         stdout=subprocess.PIPE, close_fds=True,
                                         preexec_fn=lambda: os.nice(NICE))  # noqa: PLW1509 - no threads yet in the child

    def submit(self, job: dict[str, Any]) -> None:
        """Send one part to lay out and write (``html``, ``paper``, ``out``)."""
        _send(self._process.stdin, job)

    def reply(self) -> dict[str, Any]:
        """The helper's next answer; raises ``OSError`` if it is gone, ``RuntimeError`` if the part failed."""
        answer = _receive(self._process.stdout)
        if "error" in answer:
            raise RuntimeError(answer["error"])
        return answer

    def alive(self) -> bool:
        return self._process.poll() is None

    def close(self) -> None:
        """End the helper (idempotent)."""
        try:
            if self._process.stdin is not None and not self._process.stdin.closed:
                self._process.stdin.close()
        except OSError:
            pass
        if self._process.poll() is None:
            self._process.terminate()
        self._process.wait()
        if self._process.stdout is not None:
            self._process.stdout.close()


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


def _serve() -> None:
    """The helper's loop: ``part`` jobs (lay out, answer, write, answer) and ``finish`` jobs."""
    from .pdf import warm_up

    warm_up()
    inp, out = sys.stdin.buffer, sys.stdout.buffer
    while True:
        try:
            job = _receive(inp)
        except OSError:
            return  # the build closed our input
        try:
            if "finish" in job:
                _send(out, _finish(job))
            else:
                _part(job, out)
        except Exception as exc:  # noqa: BLE001 - sent back; the build falls back to one document
            _send(out, {"error": f"{type(exc).__name__}: {exc}"})


def _part(job: dict[str, Any], out: Any) -> None:
    """Lay out one part; answer its pages, anchors and bookmark levels; write it; answer again."""
    from .pdf import weasy_document, writing

    with writing():
        document = weasy_document(job["html"], job["paper"], base_url=job["base_url"])
        _send(out, {"pages": len(document.pages), "anchors": _anchor_pages(document), "levels": _levels(document)})
        document.write_pdf(job["out"])
    _send(out, {"written": True})


def _finish(job: dict[str, Any]) -> dict[str, Any]:
    """Lay out and write the contents page(s) and the footer layer.

    ``candidates[k - 1]`` is the contents with the page numbers it gives when it is k pages
    long; the first that is as long as it assumes is the one. ``around``: the pages of the
    parts; the footer layer has ``around`` + the contents' pages.
    """
    from .pdf import weasy_document, writing

    with writing():
        for length, html in enumerate(job["candidates"], start=1):
            contents = weasy_document(html, job["paper"], base_url=job["base_url"])
            if len(contents.pages) == length:
                break
        else:
            msg = "the contents does not settle on a length"
            raise RuntimeError(msg)
        contents.write_pdf(job["contents_out"])
        total = job["around"] + length
        layer = weasy_document(footer_html(job["head"], total), job["paper"], base_url=job["base_url"])
        if len(layer.pages) != total:
            msg = f"the footer layer has {len(layer.pages)} pages, not {total}"
            raise RuntimeError(msg)
        layer.write_pdf(job["footer_out"])
    return {"contents_pages": length, "levels": _levels(contents)}


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
    if len(pieces) < 4 or tail_at < 0 or pieces[0].strip() or not 0 <= start < end:
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


def choose_split(cut: Cut) -> tuple[list[Block], Block, list[Block], list[Block]] | None:
    """(A before the contents, the contents, A after it, B), or None when no split fits."""
    ids = [b.id for b in cut.blocks]
    if CONTENTS not in ids:
        return None
    at = ids.index(CONTENTS)
    weights = [len(_DATA_URI.sub("", b.html)) for b in cut.blocks]
    total = sum(weights)
    best = None
    for k in range(at + 2, len(cut.blocks)):
        if cut.blocks[k].kind in PAGE_STARTS and sum(weights[k:]) <= B_SHARE * total:
            best = k
            break
    if best is None:
        return None
    return cut.blocks[:at], cut.blocks[at], cut.blocks[at + 1:best], cut.blocks[best:]


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
    tag = _TAG.match(html)
    at = tag.end()
    inner = ("" if COMMON[0] in html else cut.prefix) \
        + (f'<p class="print-strings" aria-hidden="true">{stand_ins}</p>' if stand_ins else "")
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
    """The two helpers a rendering uses (a build starts them ahead, with its stages)."""
    return Printer(), Printer()


def close(printers: tuple[Printer, Printer]) -> None:
    for printer in printers:
        printer.close()


def render(page: str, target: str | Path, paper: str, printers: tuple[Printer, Printer] | None = None) -> bool:
    """Lay ``page`` out in parts and write the assembled PDF to ``target``; False when it cannot be done so.

    ``printers``: the build's helpers (:func:`start`, started ahead); None starts two for this
    rendering. A False return leaves nothing behind; the caller then lays the page out as one
    document.
    """
    cut = cut_page(page)
    split = choose_split(cut) if cut is not None else None
    if split is None:
        return False
    own = printers is None
    pair = start() if printers is None else printers
    folder = Path(tempfile.mkdtemp(prefix=".pdf-parts-", dir=str(Path(target).parent)))
    done = False
    try:
        done = _render(cut, *split, Path(target), paper, pair, folder)
    except Exception:  # noqa: BLE001 - the one-document layout follows, and reports its own failure
        done = False
    finally:
        if own or not done:
            close(pair)  # after a failure their state is unknown: later renderings start their own
        import shutil

        shutil.rmtree(folder, ignore_errors=True)
    return done


def _render(cut: Cut, front: list[Block], contents: Block, rest: list[Block], back: list[Block], target: Path,
            paper: str, pair: tuple[Printer, Printer], folder: Path) -> bool:
    """A (before and after the contents) in one helper, B in the other, then the contents and the footer layer."""
    first, second = pair
    base = str(target.parent)
    a_path, b_path, c_path, f_path = (folder / f"{n}.pdf" for n in "abcf")
    second.submit({"html": part_html(cut, back, PART_CSS), "paper": paper, "out": str(b_path), "base_url": base})
    first.submit({"html": part_html(cut, front + rest, PART_CSS), "paper": paper, "out": str(a_path),
                  "base_url": base})
    a_info, b_info = first.reply(), second.reply()
    a_count, b_count = a_info["pages"], b_info["pages"]
    split_at = a_info["anchors"].get(rest[0].id) if rest else a_count
    if split_at is None:
        return False

    def numbers(length: int) -> dict[str, int]:
        """Page number of every anchor when the contents is ``length`` pages long."""
        found = {name: index + 1 + (length if index >= split_at else 0) for name, index in a_info["anchors"].items()}
        found.update({name: a_count + length + index + 1 for name, index in b_info["anchors"].items()})
        return found

    candidates = [part_html(cut, [contents], PART_CSS + CONTENTS_CSS, pages=numbers(n)) for n in (1, 2, 3)]
    first.reply()  # A is written: its helper lays out the contents and the footer layer while B is written
    first.submit({"finish": True, "candidates": candidates, "head": cut.head, "around": a_count + b_count,
                  "paper": paper, "contents_out": str(c_path), "footer_out": str(f_path), "base_url": base})
    c_info = first.reply()
    second.reply()  # B is written
    own_ids = (defined_ids(cut, front + rest), defined_ids(cut, [contents]), defined_ids(cut, back))
    return assemble(a_path, c_path, b_path, f_path, target, split_at=split_at,
                    levels=(a_info["levels"], c_info["levels"], b_info["levels"]), ids=own_ids)


def assemble(a_path: Path, c_path: Path, b_path: Path, f_path: Path, target: Path, *, split_at: int,
             levels: tuple[list[int], list[int], list[int]], ids: tuple[set[str], set[str], set[str]]) -> bool:
    """Put the parts together (pages of A before ``split_at``, contents, rest of A, B) under the footer layer."""
    import pikepdf

    with pikepdf.open(a_path) as pdf, pikepdf.open(c_path) as c_pdf, pikepdf.open(b_path) as b_pdf, \
            pikepdf.open(f_path) as f_pdf:
        parts = (pdf, c_pdf, b_pdf)
        marks = [_outline_entries(p) for p in parts]
        if any(len(m) != len(lv) for m, lv in zip(marks, levels)):
            return False
        names = [_destinations(p) for p in parts]
        a_count, c_count = len(pdf.pages), len(c_pdf.pages)
        with warnings.catch_warnings():  # "named destinations are not copied": they are rebuilt below
            warnings.simplefilter("ignore", getattr(pikepdf, "PageCopyWarning", UserWarning))
            for i, page in enumerate(c_pdf.pages):
                pdf.pages.insert(split_at + i, page)
            pdf.pages.extend(b_pdf.pages)
        if len(pdf.pages) != len(f_pdf.pages):
            return False
        offsets = {id(pdf): None, id(c_pdf): split_at, id(b_pdf): a_count + c_count}
        index_of = {id(p): {page.objgen: i for i, page in enumerate(p.pages)} for p in (c_pdf, b_pdf)}

        def local(part: Any, dest: Any) -> Any:
            """``dest`` (page, /XYZ, x, y, zoom) of a part, pointing at that page in the document."""
            if part is pdf:
                return dest  # part A is the document: its pages are the same objects
            page = pdf.pages[offsets[id(part)] + index_of[id(part)][dest[0].objgen]]
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
        # bookmarks in page order: A before the contents, the contents, the rest of A, B
        a_marks = list(zip(levels[0], marks[0]))
        order = [m for m in a_marks if m[1][1] < split_at] + list(zip(levels[1], marks[1])) \
            + [m for m in a_marks if m[1][1] >= split_at] + list(zip(levels[2], marks[2]))
        _write_outline(pdf, [(level, title, local(part, dest), closed)
                             for (level, (title, _, dest, closed, part)) in order])
        # the footer layer over each page, under a fixed name per page (WeasyPrint's pages share one
        # resource dictionary, and a fixed name gives the same bytes for the same page)
        for number, (page, layer) in enumerate(zip(pdf.pages, f_pdf.pages), start=1):
            name = f"{LAYER}{number}"
            page.add_resource(pdf.copy_foreign(layer.as_form_xobject()), pikepdf.Name.XObject, pikepdf.Name(name))
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
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the build, which then ends us
    _serve()
