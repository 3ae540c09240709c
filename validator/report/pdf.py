"""The PDF dossier: WeasyPrint's layout in worker processes, in one piece or, for a large dossier, in parts.

WeasyPrint lays a document out in one thread and holds every page's boxes until the PDF is written:
a 300-analyte dossier in one piece ran for over 15 minutes and past 6.9 GB (docs/performance.md).
A large dossier is therefore laid out in parts (the front matter, the contents, a few analytes at
a time, the appendices), each at a page break the one-piece layout also has, in two worker
processes, each part written to PDF and dropped before the next. The parent process then joins
the parts with pypdf and gives the joined document what each part could not know by itself:

- the page header and footer ("page 7 of 1,520"): the parts are laid out without them, and one
  cheap document of as many empty pages, with only the header and footer, is laid over them;
- the contents' page numbers: the contents are laid out once with placeholder numbers (to count
  their pages) and again with the numbers of the laid-out parts;
- the links between parts (summary to analyte sections, contents): WeasyPrint drops a link
  whose target is in another part; they are added again, with one table of named destinations
  for the whole document;
- the outline (bookmarks), nested as WeasyPrint nests it.

The layout runs in worker processes whatever the size, so that a run stopped during the layout
(SIGTERM, Ctrl-C) ends them at once (SIGKILL is not needed: they die with their parent, and
:func:`_workers` terminates them when the run unwinds) instead of waiting for WeasyPrint.
"""

from __future__ import annotations

import html as html_lib
import io
import os
import re
from contextlib import contextmanager

__all__ = ["PART", "SPLIT", "write_pdf", "write_pdf_in_parts", "url_fetcher"]

# the marker the dossier template writes (when asked) at each page break a part may start at
PART = "<!--validator:part-->"
# where the back matter (appendices) may begin a new part: between two analytes' blocks of an
# appendix (the section is closed there and opened again in the next part) or between sections;
# without it the appendices of a large study were one WeasyPrint document of hundreds of pages
# (300 analytes: 2.8 GB in one layout worker)
SPLIT = "<!--validator:split-->"
# analytes laid out together in one part (a part's fixed cost against its memory and the balance
# of the two workers)
ANALYTES_PER_PART = 6

# CSS of every part: no header or footer (laid over afterwards), the contents' numbers from data-page
_PART_CSS = """<style>
@page { @top-left { content: none; } @top-right { content: none; }
        @bottom-center { content: none; } @bottom-right { content: none; } }
@media print { .toc li > a::after { content: leader(".") " " attr(data-page); } }
</style>
"""
# the header-and-footer document: its first page carries the cover's title and identifier,
# hidden, for the running headers (string-set), and nothing else is drawn
_FRAME_CSS = "<style>.frame { visibility: hidden; margin: 0; }</style>\n"


def url_fetcher():
    """A WeasyPrint URL fetcher that serves only inline ``data:`` URLs.

    Everything else (file://, http(s)://, relative paths) is refused, so the
    PDF step can read nothing but what is inside the HTML.
    """
    from weasyprint.urls import URLFetcher

    class InlineOnlyFetcher(URLFetcher):
        refused: list = []

        def fetch(self, url, headers=None):
            if url.startswith("data:"):
                return super().fetch(url, headers)
            InlineOnlyFetcher.refused.append(url)
            raise ValueError(f"validator: external resource refused: {url}")

    return InlineOnlyFetcher(allowed_protocols=("data",))


def _weasyprint():
    import logging

    import weasyprint

    logging.getLogger("weasyprint").setLevel(logging.CRITICAL)
    return weasyprint


# --- worker processes -------------------------------------------------------------------------

def _worker_start(parent: int) -> None:
    """A layout worker: default SIGTERM (die at once when terminated: the handler inherited from
    the CLI would unwind through WeasyPrint), SIGINT ignored (the run's own Ctrl-C unwinds the
    parent, which terminates the workers), and ended with its parent (see plots._die_with_parent)."""
    import signal

    from .plots import _die_with_parent, _sigint_off

    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    _sigint_off()
    _die_with_parent(parent)


@contextmanager
def _workers(processes: int, start: str = "fork"):
    """``run(function, tasks, on_done=None)`` -> ``[function(t) for t in tasks]``, computed in
    ``processes`` worker processes.

    ``start``: "fork" (quick to start: the one-piece layout of a small dossier) or "spawn" (a
    fresh interpreter, about 1 s to start: the parts of a large dossier, whose run holds several
    hundred MB that forked workers would share at first and copy as Python touches it).
    Whatever ends the wait (SIGTERM, Ctrl-C, an error), the workers are terminated before the
    exception goes on, so nothing outlives the run and the run ends promptly.
    """
    import multiprocessing

    if start == "fork":
        _weasyprint()         # imported once, before the workers are forked
    from .plots import sigint_ignored_in_new_workers

    pool = None

    def run(function, tasks, on_done=None):
        out = []
        for value in pool.imap(function, tasks):
            out.append(value)
            if on_done is not None:
                on_done(len(out), len(tasks))
        return out
    try:
        with sigint_ignored_in_new_workers():     # no worker ever sees a Ctrl-C (no traceback from one)
            pool = multiprocessing.get_context(start).Pool(processes=processes, initializer=_worker_start,
                                                           initargs=(os.getpid(),))
        yield run
        pool.close()
    finally:
        if pool is not None:
            pool.terminate()
            pool.join()


def _call(task):
    """``function(argument)`` for ``task = (function, argument)``: two kinds of task in one pool."""
    function, argument = task
    return function(argument)


# --- one piece ----------------------------------------------------------------------------------

def _lay_out_whole(task) -> list:
    html, target = task
    weasyprint = _weasyprint()
    fetcher = url_fetcher()
    type(fetcher).refused = []
    weasyprint.HTML(string=html, base_url=None, url_fetcher=fetcher).write_pdf(
        str(target), pdf_identifier=b"validator-dossier", uncompressed_pdf=False)
    return list(type(fetcher).refused)


def write_pdf(html: str, target) -> list:
    """Render the HTML to PDF in one piece (in a worker process); returns the list of refused URLs."""
    with _workers(1) as run:
        return run(_lay_out_whole, [(html, str(target))])[0]


# --- in parts -----------------------------------------------------------------------------------

def _lay_out_part(html: str) -> dict:
    """One part laid out and written to PDF: its bytes and what joining the parts needs (points in
    CSS pixels from the top left of the part's page, as WeasyPrint gives them)."""
    weasyprint = _weasyprint()
    fetcher = url_fetcher()
    type(fetcher).refused = []
    document = weasyprint.HTML(string=html, base_url=None, url_fetcher=fetcher).render()
    anchors, links, bookmarks = {}, [], []
    for number, page in enumerate(document.pages):
        for name, (x, y, *_) in page.anchors.items():
            anchors.setdefault(name, (number, x, y))
        bookmarks += [(number, level, label, x, y) for level, label, (x, y), _ in page.bookmarks]
        links += [(number, rect, target) for kind, target, rect, _ in page.links if kind == "internal"]
    pdf = document.write_pdf(pdf_identifier=b"validator-dossier", uncompressed_pdf=False)
    return {"pdf": pdf, "pages": len(document.pages), "anchors": anchors, "bookmarks": bookmarks,
            "links": [(n, rect, t) for n, rect, t in links if t not in anchors],
            "refused": list(type(fetcher).refused)}


def _split(html: str) -> tuple:
    """(head up to and including ``<body>``, the body's parts between the markers, the tail)."""
    start = html.index("<body>") + len("<body>")
    end = html.rindex("</body>")
    return html[:start], html[start:end].split(PART), html[end:]


def _with_numbers(toc_part: str, pages: dict | None) -> str:
    """The contents part with each entry's page number as ``data-page`` (a placeholder when
    ``pages`` is None: its width counts, not its value)."""
    nav_end = toc_part.index("</nav>")

    def number(m):
        shown = "0000" if pages is None else str(pages.get(html_lib.unescape(m[1]), ""))
        return f'<a href="#{m[1]}" data-page="{shown}">'
    return re.sub(r'<a href="#([^"]+)">', number, toc_part[:nav_end]) + toc_part[nav_end:]


def _frame(head: str, front: str, total: int) -> str:
    """The header-and-footer document: ``total`` empty pages."""
    doc_id = re.search(r'<p class="doc-id[^"]*">.*?</p>', front, re.S)
    title = re.search(r'<h1 id="title">.*?</h1>', front, re.S)
    shown = ((doc_id[0].replace('class="', 'class="frame ', 1) if doc_id else "")
             + (title[0].replace('<h1 id="title">', '<h1 id="title" class="frame">', 1) if title else ""))
    body = shown + '<div style="break-before: page"></div>' * (total - 1)
    return head.replace("</head>", _FRAME_CSS + "</head>", 1) + body + "</body></html>"


def _lay_out_frame(html: str) -> bytes:
    weasyprint = _weasyprint()
    return weasyprint.HTML(string=html, base_url=None, url_fetcher=url_fetcher()).write_pdf(
        pdf_identifier=b"validator-dossier", uncompressed_pdf=False)


def write_pdf_in_parts(html: str, target, *, analytes_per_part: int = ANALYTES_PER_PART,
                       progress=None) -> list:
    """Render a dossier whose HTML carries :data:`PART` markers to one PDF, laid out in parts.

    The body must be: front matter (cover and summary), PART, contents (``nav.toc``) and what
    follows it up to the first analyte, then one PART before each analyte's sections, then PART
    before the appendices. Returns the refused URLs.
    """
    head, parts, tail = _split(html)
    head = head.replace("</head>", _PART_CSS + "</head>", 1)
    front, toc, *analytes, back = parts
    groups = ["".join(analytes[i:i + analytes_per_part]) for i in range(0, len(analytes), analytes_per_part)]

    def document(body: str) -> str:
        return head + body + tail

    tasks = ([document(front), document(_with_numbers(toc, None))] + [document(g) for g in groups]
             + [document(b) for b in _back_parts(back, analytes_per_part)])
    done = (lambda k, n: progress("laying out the PDF in parts", k, n + 1)) if progress else None
    with _workers(2, start="spawn") as run:
        laid = run(_lay_out_part, tasks, done)
        for _ in range(3):
            # the contents again with the page numbers, and the header-and-footer document, which
            # assumes that the contents keep their page count (they cannot grow, but it is checked)
            first = _first_pages([p["pages"] for p in laid])
            pages = {name: first[i] + number + 1 for i, p in enumerate(laid)
                     for name, (number, _, _) in p["anchors"].items()}
            total = sum(p["pages"] for p in laid)
            toc_laid, frame = run(_call, [(_lay_out_part, document(_with_numbers(toc, pages))),
                                          (_lay_out_frame, _frame(head.replace(_PART_CSS, ""), front, total))])
            same = toc_laid["pages"] == laid[1]["pages"]
            laid[1] = toc_laid
            if same:
                break
        else:
            raise RuntimeError("the contents of the PDF changed their page count three times")
    if progress is not None:
        progress("laying out the PDF in parts", len(tasks) + 1, len(tasks) + 1)
    _join(laid, frame, target)
    return sorted({url for p in laid for url in p["refused"]})


def _back_parts(back: str, per_part: int) -> list:
    """The back matter cut at every ``per_part``-th :data:`SPLIT` marker; a section open at a cut is
    closed before it and opened again (the same tag) after it, so each part is whole HTML."""
    pieces = back.split(SPLIT)
    parts, current, count = [], pieces[0], 0
    for piece in pieces[1:]:
        count += 1
        if count < per_part:
            current += piece
            continue
        opened = re.findall(r"<section\b[^>]*>", current)
        still_open = len(opened) > current.count("</section>")
        parts.append(current + ("</section>" if still_open else ""))
        current = (opened[-1] if still_open else "") + piece
        count = 0
    return parts + [current]


def _first_pages(counts: list) -> list:
    """The index, in the whole document, of each part's first page."""
    out, at = [], 0
    for n in counts:
        out.append(at)
        at += n
    return out


def _join(laid: list, frame: bytes, target) -> None:
    """The parts' pages in order, the header and footer laid over each, the named destinations,
    the links between parts and the outline; written to ``target``."""
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import (ArrayObject, ByteStringObject, DictionaryObject, FloatObject, Fit,
                               NameObject, NumberObject, TextStringObject)

    writer = PdfWriter()
    first = _first_pages([p["pages"] for p in laid])
    metadata = PdfReader(io.BytesIO(laid[0]["pdf"])).metadata      # title, creator, dates: the cover's part
    if metadata:
        writer.add_metadata(dict(metadata))
    for part in laid:
        for page in PdfReader(io.BytesIO(part["pdf"])).pages:
            writer.add_page(page)
        part["pdf"] = None           # the bytes are not needed any more
    heights = [float(p.mediabox.height) for p in writer.pages]
    for page, over in zip(writer.pages, PdfReader(io.BytesIO(frame)).pages):
        page.merge_page(over)

    def point(number: int, x: float, y: float) -> tuple:
        # WeasyPrint's CSS pixels (top left origin) to PDF points (bottom left): 1 px = 0.75 pt
        return 0.75 * x, heights[number] - 0.75 * y

    names = {}
    for i, part in enumerate(laid):
        for name, (number, x, y) in part["anchors"].items():
            names.setdefault(name, (first[i] + number, *point(first[i] + number, x, y)))
    tree = writer.get_named_dest_root()
    for name in sorted(names):
        number, x, y = names[name]
        tree.extend([TextStringObject(name), ArrayObject([writer.pages[number].indirect_reference, NameObject("/XYZ"),
                                                          FloatObject(x), FloatObject(y), NumberObject(0)])])
    for i, part in enumerate(laid):
        for number, (left, top, right, bottom), name in part["links"]:
            if name not in names:
                continue
            n = first[i] + number
            x1, y1 = point(n, left, top)
            x2, y2 = point(n, right, bottom)
            writer.add_annotation(n, DictionaryObject({
                NameObject("/Type"): NameObject("/Annot"), NameObject("/Subtype"): NameObject("/Link"),
                NameObject("/Rect"): ArrayObject([FloatObject(v) for v in (x1, y2, x2, y1)]),
                NameObject("/BS"): DictionaryObject({NameObject("/W"): NumberObject(0)}),
                NameObject("/Dest"): TextStringObject(name)}))
    parents = []              # (level, outline item) of the open branches
    for i, part in enumerate(laid):
        for number, level, label, x, y in part["bookmarks"]:
            while parents and parents[-1][0] >= level:
                parents.pop()
            n = first[i] + number
            left, top = point(n, x, y)
            item = writer.add_outline_item(label, n, parent=parents[-1][1] if parents else None,
                                           fit=Fit.xyz(left=left, top=top, zoom=0))
            parents.append((level, item))
    writer._ID = ArrayObject([ByteStringObject(b"validator-dossier")] * 2)   # reproducible, as WeasyPrint's
    with open(target, "wb") as f:
        writer.write(f)
