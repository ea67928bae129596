"""The PDF page layout engine of the report: blocks flowed down letter pages.

The report (:mod:`trimlog.views.report`) describes its content as a list of blocks
(:class:`Heading`, :class:`Para`, :class:`Table`, :class:`Plot`,
:class:`Break`); :func:`render_pdf` wraps the text, sizes the tables to the
page width, starts a new page when one is full (repeating a table's header)
and numbers the pages, one matplotlib Figure per page; :func:`save_pdf`
writes them with :class:`matplotlib.backends.backend_pdf.PdfPages`.
"""

from __future__ import annotations

import contextlib
import io
import logging
import os
import signal
import tempfile
import textwrap
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

from matplotlib import rc_context
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle
from matplotlib.ticker import FixedFormatter

from trimlog.views.forking import fork_may_help

PAGE_IN = (8.5, 11.0)  # US letter, portrait
MARGIN_IN = (0.75, 0.75, 0.7, 0.85)  # left, right, top, bottom
PT_PER_IN = 72.0
BODY_PT = 9.5
SMALL_PT = 8.0
#: Average advance of DejaVu Sans, in em (for wrapping; measured on prose).
SANS_EM = 0.53
SANS_BOLD_EM = 0.60
#: Advance of DejaVu Sans Mono, in em (exact).
MONO_EM = 0.602
TABLE_PT = (7.5, 7.0, 6.5, 6.0)
#: Narrowest a table column is wrapped to before the type is made smaller [characters].
MIN_WRAP_CHARS = 18


# --------------------------------------------------------------------------- blocks


@dataclass(frozen=True)
class Heading:
    """A heading; level 0 is the report title, 1 a section, 2 a subsection."""

    text: str
    level: int = 1


@dataclass(frozen=True)
class Para:
    """A paragraph of text, wrapped to the page width."""

    text: str
    kind: str = "body"  # body | small | strong | box | bullet


@dataclass(frozen=True)
class Table:
    """A table of text cells in monospace type, its header repeated on each page."""

    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    #: Columns that may wrap to fit the page (default: the last one).
    wrap: tuple[int, ...] = (-1,)


@dataclass(frozen=True)
class Plot:
    """A figure on a page of its own: ``draw(fig, rect)`` draws it into ``rect``."""

    title: str
    draw: Callable[[Figure, tuple[float, float, float, float]], Any]
    caption: str
    tall: bool = False


@dataclass(frozen=True)
class Break:
    """Start a new page."""


# --------------------------------------------------------------------------- PDF layout


def _wrap(text: str, chars: int) -> list[str]:
    return textwrap.wrap(text, max(chars, 1), break_on_hyphens=False,
                         break_long_words=True) or [""]


class _PdfLayout:
    """Flows blocks down letter pages, one Figure per page, a new page when one is full."""

    def __init__(self) -> None:
        self.pages: list[Figure] = []
        self.fig: Figure | None = None
        self.y = 0.0
        self.left = MARGIN_IN[0] * PT_PER_IN
        self.width = (PAGE_IN[0] - MARGIN_IN[0] - MARGIN_IN[1]) * PT_PER_IN
        self.top = MARGIN_IN[2] * PT_PER_IN
        self.bottom = (PAGE_IN[1] - MARGIN_IN[3]) * PT_PER_IN

    # ---- primitives (points measured from the page's top-left corner)
    def _new_page(self) -> None:
        self.fig = Figure(figsize=PAGE_IN)
        self.pages.append(self.fig)
        self.y = self.top

    def _room(self, height: float) -> None:
        if self.fig is None or self.y + height > self.bottom:
            self._new_page()

    def _fx(self, x: float) -> float:
        return x / (PAGE_IN[0] * PT_PER_IN)

    def _fy(self, y: float) -> float:
        return 1.0 - y / (PAGE_IN[1] * PT_PER_IN)

    def _text(self, x: float, y: float, text: str, size: float, **kw: Any) -> None:
        self.fig.text(self._fx(x), self._fy(y), text, fontsize=size, va="top", ha="left", **kw)

    def _rect(self, x: float, y: float, w: float, h: float, **kw: Any) -> None:
        self.fig.patches.append(Rectangle((self._fx(x), self._fy(y + h)),
                                          w / (PAGE_IN[0] * PT_PER_IN),
                                          h / (PAGE_IN[1] * PT_PER_IN),
                                          transform=self.fig.transFigure, **kw))

    # ---- blocks
    def add(self, block: Any) -> None:
        """Lay out one block below the previous one."""
        if isinstance(block, Heading):
            self._heading(block)
        elif isinstance(block, Para):
            self._para(block)
        elif isinstance(block, Table):
            self._table(block)
        elif isinstance(block, Plot):
            self._plot(block)
        else:
            self.fig = None

    def _heading(self, block: Heading) -> None:
        size = {0: 17.0, 1: 14.0}.get(block.level, 11.0)
        lines = _wrap(block.text, int(self.width / (SANS_EM * 1.1 * size)))
        height = len(lines) * size * 1.3
        self._room(height + 4 * BODY_PT * 1.35)  # keep a heading with what follows
        if self.y > self.top:
            self.y += 0.8 * size
        for line in lines:
            self._text(self.left, self.y, line, size, fontweight="bold")
            self.y += size * 1.3
        self.y += 3.0

    def _para(self, block: Para) -> None:
        size = SMALL_PT if block.kind == "small" else BODY_PT
        lead = 1.35 * size
        indent = 14.0 if block.kind == "bullet" else (8.0 if block.kind == "box" else 0.0)
        width = self.width - 2 * indent if block.kind == "box" else self.width - indent
        em = SANS_BOLD_EM if block.kind in ("box", "strong") else SANS_EM
        lines = _wrap(block.text, int(width / (em * size)))
        if block.kind == "box":
            height = len(lines) * lead + 2 * indent
            self._room(height + 6)
            self._rect(self.left, self.y, self.width, height, facecolor="#f2f2f2",
                       edgecolor="black", linewidth=1.0)
            y = self.y + indent
            for line in lines:
                self._text(self.left + indent, y, line, size, fontweight="bold")
                y += lead
            self.y += height + 8
            return
        for i, line in enumerate(lines):
            self._room(lead)
            if i == 0 and block.kind == "bullet":
                self._text(self.left + 3, self.y, "\u2022", size)
            self._text(self.left + indent, self.y, line, size,
                       color="#333333" if block.kind == "small" else "black",
                       fontweight="bold" if block.kind == "strong" else "normal")
            self.y += lead
        self.y += 0.45 * size

    def _table(self, block: Table) -> None:
        ncol = len(block.headers)
        natural = [max([len(block.headers[i])] + [len(r[i]) for r in block.rows])
                   for i in range(ncol)]
        gap = 2
        wrappable = sorted({i % ncol for i in block.wrap})
        # The largest type at which wrapping the text columns keeps them readable; at the
        # smallest type any column wraps.
        for size in TABLE_PT:
            chars = int(self.width / (MONO_EM * size))
            columns = wrappable if size != TABLE_PT[-1] else list(range(ncol))
            widths = list(natural)
            while sum(widths) + gap * (ncol - 1) > chars:
                widest = max(columns, key=lambda i: widths[i])
                if widths[widest] <= MIN_WRAP_CHARS and size != TABLE_PT[-1]:
                    break
                widths[widest] -= 1
            if sum(widths) + gap * (ncol - 1) <= chars:
                break
        lead = 1.3 * size

        def cell_lines(cells: Sequence[str]) -> list[str]:
            wrapped = [_wrap(c, w) if len(c) > w else [c] for c, w in zip(cells, widths,
                                                                         strict=True)]
            depth = max(len(w) for w in wrapped)
            return [(" " * gap).join((w[k] if k < len(w) else "").ljust(widths[i])
                                     for i, w in enumerate(wrapped)).rstrip()
                    for k in range(depth)]

        header = cell_lines(block.headers)
        row_width = (sum(widths) + gap * (ncol - 1)) * MONO_EM * size

        def draw_header() -> None:
            for line in header:
                self._text(self.left, self.y, line, size, family="monospace",
                           fontweight="bold")
                self.y += lead
            self.fig.add_artist(_rule(self, self.y - 0.15 * lead, row_width))
            self.y += 0.25 * lead

        self._room((len(header) + 2) * lead)
        draw_header()
        for n, row in enumerate(block.rows):
            lines = cell_lines(row)
            if self.y + len(lines) * lead > self.bottom:
                self._new_page()
                draw_header()
            if n % 2:
                self._rect(self.left - 2, self.y - 0.15 * lead, row_width + 4,
                           len(lines) * lead, facecolor="#eeeeee", edgecolor="none")
            for line in lines:
                self._text(self.left, self.y, line, size, family="monospace")
                self.y += lead
        self.y += 0.8 * BODY_PT

    def _plot(self, block: Plot) -> None:
        self._new_page()
        self._heading(Heading(block.title, 1))
        page_w, page_h = PAGE_IN
        top_in = 1.45
        height_in = 7.0 if block.tall else 6.0
        rect = (1.05 / page_w, 1.0 - (top_in + height_in) / page_h,
                (page_w - 1.05 - 0.55) / page_w, height_in / page_h)
        block.draw(self.fig, rect)
        self.y = (top_in + height_in + 0.95) * PT_PER_IN  # clear of the tick labels
        self._para(Para(block.caption))
        self.fig = None

    def footers(self, left: str) -> None:
        """Put ``left``, the page number and the estimate statement at the foot of each page."""
        total = len(self.pages)
        for i, fig in enumerate(self.pages, start=1):
            y = self._fy(self.bottom + 0.35 * PT_PER_IN)
            fig.text(self._fx(self.left), y, left, fontsize=7, color="#555555", va="top")
            fig.text(self._fx(self.left + self.width), y, f"page {i} of {total}", fontsize=7,
                     color="#555555", va="top", ha="right")
            fig.text(0.5, y - 0.014, "Estimates from your own flight data, not an approval.",
                     fontsize=7, color="#555555", va="top", ha="center")


def _rule(layout: _PdfLayout, y: float, width: float) -> Line2D:
    x0 = layout._fx(layout.left)
    return Line2D([x0, x0 + width / (PAGE_IN[0] * PT_PER_IN)], [layout._fy(y)] * 2,
                  transform=layout.fig.transFigure, color="black", linewidth=0.6)


def render_pdf(blocks: Sequence[Any], footer: str) -> list[Figure]:
    """Lay out the blocks on letter pages, one Figure per page, each with ``footer``."""
    layout = _PdfLayout()
    for block in blocks:
        layout.add(block)
    layout.footers(footer)
    return layout.pages


def _page_strings(page: Figure) -> Iterator[str]:
    """Every string a page shows: its texts, and each axes' titles, labels, legend, texts.

    Numeric tick labels are left out: they are ASCII once the Unicode minus is off.
    """
    yield from (t.get_text() for t in page.texts)
    for legend in page.legends:
        yield from (t.get_text() for t in legend.get_texts())
    for ax in page.axes:
        yield from (t.get_text() for t in ax.texts)
        yield from (ax.get_title(loc) for loc in ("left", "center", "right"))
        yield ax.get_xlabel()
        yield ax.get_ylabel()
        legend = ax.get_legend()
        if legend is not None:
            yield legend.get_title().get_text()
            yield from (t.get_text() for t in legend.get_texts())
        for axis in (ax.xaxis, ax.yaxis):
            formatter = axis.get_major_formatter()
            if isinstance(formatter, FixedFormatter):
                yield from (str(label) for label in formatter.seq)


def _core_fonts_suffice(pages: Sequence[Figure]) -> bool:
    """Whether every text on the pages is in the PDF core fonts' Windows-1252 repertoire."""
    try:
        for page in pages:
            for text in _page_strings(page):
                text.encode("cp1252")
    except UnicodeEncodeError:
        return False
    return True


def save_pdf(pages: Sequence[Figure], fh: IO[bytes], title: str) -> None:
    """Write the pages as one PDF to ``fh``, with ``title`` in its metadata.

    Text set in the PDF core fonts (Helvetica, Courier: every reader has
    them, nothing is embedded) when every character is in their repertoire;
    otherwise embedded TrueType (type 42).  Either way the text stays
    searchable and extractable.  The core fonts take matplotlib's PDF writer
    about a third of the time of embedded fonts, which it lays out and
    subsets glyph by glyph.  The layout measures with DejaVu's wider
    advances, so lines and table columns fit either way.

    Where a second core is free (see :func:`_in_two_processes`) the later
    pages are drawn in a forked process at the same time and the two parts
    joined with pypdf; the pages are the same either way.
    """
    metadata = {"Title": title, "Creator": "trimlog"}
    rc = ({"pdf.use14corefonts": True, "axes.unicode_minus": False}
          if _core_fonts_suffice(pages) else {"pdf.fonttype": 42})
    font_log = logging.getLogger("matplotlib.font_manager")
    level = font_log.level
    font_log.setLevel(logging.ERROR)  # "no weight 'normal' for Helvetica, using medium"
    try:
        with rc_context(rc):
            joined = _in_two_processes(pages, metadata)
            if joined is not None:
                fh.write(joined)
            else:
                _write_pages(pages, fh, metadata)
    finally:
        font_log.setLevel(level)


def _write_pages(pages: Sequence[Figure], fh: IO[bytes], metadata: dict[str, str]) -> None:
    with PdfPages(fh, metadata=metadata) as pdf:
        for page in pages:
            pdf.savefig(page)


#: Fewest pages worth a second process (the fork and the join cost ~0.15 s).
MIN_PAGES_TO_SPLIT = 6


def _split_at(pages: Sequence[Figure]) -> int:
    """The first page the second process draws: about half the drawing each.

    A page with plots costs about four times a page of text per axes
    (measured on the demo report); the first process also joins the parts,
    so it takes a little less.
    """
    weights = [1 + 3 * len(page.axes) for page in pages]
    half, done = 0.47 * sum(weights), 0.0
    for k, weight in enumerate(weights):
        if done + weight > half:
            return max(k, 1)
        done += weight
    return len(pages) - 1


def _in_two_processes(pages: Sequence[Figure], metadata: dict[str, str]) -> bytes | None:
    """The PDF drawn by this process and a forked one, or None to draw it here alone.

    Only where :func:`trimlog.views.forking.fork_may_help` says so (a
    command-line report, not the dashboard).  The child draws the later pages
    into a temporary file and leaves with ``os._exit`` (nothing of the
    parent's is flushed or cleaned twice); any failure of the child, or of the
    join, gives None and the whole PDF is then drawn here.
    """
    if len(pages) < MIN_PAGES_TO_SPLIT or not fork_may_help():
        return None
    k = _split_at(pages)
    with tempfile.TemporaryDirectory(prefix="trimlog-pdf-") as folder:
        later = Path(folder) / "later.pdf"
        pid = os.fork()
        if pid == 0:  # the child: draw, write, leave
            code = 1
            try:
                with open(later, "wb") as out:
                    _write_pages(pages[k:], out, metadata)
                code = 0
            finally:
                os._exit(code)
        reaped = False
        try:
            start = time.monotonic()
            first = io.BytesIO()
            _write_pages(pages[:k], first, metadata)
            from pypdf import PdfReader, PdfWriter  # only here: ~0.1 s to import

            # A child that hangs is given up (and killed below): the pages are drawn here.
            status = _wait(pid, deadline=time.monotonic() + max(
                CHILD_WAIT_S, 3.0 * (time.monotonic() - start)))
            reaped = status is not None
            if status is None or not os.WIFEXITED(status) or os.WEXITSTATUS(status) != 0:
                return None
            writer = PdfWriter()
            head = PdfReader(first)
            writer.append(head)
            writer.append(PdfReader(later))
            writer.add_metadata(dict(head.metadata or {}))
            joined = io.BytesIO()
            writer.write(joined)
            return joined.getvalue()
        except Exception:  # noqa: BLE001 - any failure of the join: draw it all here
            logging.getLogger(__name__).debug("two-process PDF failed", exc_info=True)
            return None
        finally:
            if not reaped:
                with contextlib.suppress(OSError):
                    os.kill(pid, signal.SIGKILL)
                    os.waitpid(pid, 0)


#: Least time the forked process is waited for after this one's pages are written [s].
CHILD_WAIT_S = 30.0


def _wait(pid: int, deadline: float) -> int | None:
    """The exit status of child ``pid``, or None if it is still running at ``deadline``."""
    while True:
        done, status = os.waitpid(pid, os.WNOHANG)
        if done:
            return status
        if time.monotonic() > deadline:
            return None
        time.sleep(0.005)
