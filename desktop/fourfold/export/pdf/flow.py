"""A small page-flow engine for the PDF report: paragraphs, tables and figures over pages.

Everything is measured in device pixels of the paint device (``resolution()`` pixels per inch)
and fonts are sized in points, so the layout is the same at any resolution. Laying out records
paint operations per page; :meth:`Flow.paint` replays them once the page count is known, so
every page can say "page 2 of 5". Text wraps at word boundaries, and inside a word only when a
word is wider than its column; table rows never split, and a table's header is repeated on every
page it continues on.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import (
    QColor,
    QFont,
    QFontMetricsF,
    QPaintDevice,
    QPainter,
    QPen,
    QTextLayout,
    QTextOption,
)

from fourfold.export.report import Table

INK = QColor("#1d2430")
MUTED = QColor("#5a6473")
ACCENT = QColor("#2b5c7e")
RULE = QColor("#c3cad4")
SHADE = QColor("#f0f3f6")
MARK = QColor("#fdf1d2")
WARNING = QColor("#a3341f")
FAMILIES = ["DejaVu Sans", "Liberation Sans", "Arial", "Helvetica"]

Op = Callable[[QPainter], None]
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f]")
_WORDS = re.compile(r"[\s\u200b]+")


def font(points: float, *, bold: bool = False, italic: bool = False) -> QFont:
    """The report's sans-serif font at ``points`` points, without ligatures (so that text copied
    or searched in the PDF reads "ffi", not one glyph)."""
    result = QFont()
    result.setFamilies(FAMILIES)
    result.setStyleHint(QFont.StyleHint.SansSerif)
    result.setPointSizeF(points)
    result.setBold(bold)
    result.setItalic(italic)
    result.setFeature(QFont.Tag("liga"), 0)
    return result


def clean(text: str) -> str:
    r"""Text safe to lay out: line breaks kept as line separators, other control characters
    (tabs, carriage returns) as spaces, and a break opportunity (a zero-width space) every
    :data:`WORD_PIECE` characters of a word longer than that, so that one long unbroken word
    wraps in linear time (Qt's line breaking searches a long word quadratically).

    Examples
    --------
    >>> clean("a\tb\nc")
    'a b\u2028c'
    >>> clean("x" * 70).count("\u200b")
    2
    """
    text = text.replace("\r\n", "\n").replace("\n", "\u2028").replace("\t", " ")
    return _LONG_WORD.sub(_pieces, _CONTROL.sub(" ", text))


WORD_PIECE = 32
_LONG_WORD = re.compile(rf"[^\s\u200b]{{{WORD_PIECE + 1},}}")


def _pieces(found: re.Match) -> str:
    word = found.group()
    return "\u200b".join(word[i:i + WORD_PIECE] for i in range(0, len(word), WORD_PIECE))


class Text:
    """One piece of text laid out in lines of a given width.

    Parameters
    ----------
    text : str
        The text; newlines start new lines.
    face : QFont
        Its font.
    width : float
        Line width in device pixels.
    device : QPaintDevice
        The device whose resolution the font is measured at.
    align : Qt.AlignmentFlag
        Horizontal alignment within the width.
    spacing : float
        Line pitch as a multiple of the font's line height.
    """

    def __init__(self, text: str, face: QFont, width: float, device: QPaintDevice,
                 align=Qt.AlignmentFlag.AlignLeft, spacing: float = 1.0) -> None:
        self.layout = QTextLayout(clean(text), face, device)
        option = QTextOption(align)
        option.setWrapMode(QTextOption.WrapMode.WrapAtWordBoundaryOrAnywhere)
        self.layout.setTextOption(option)
        self.lines = []
        y = 0.0
        self.layout.beginLayout()
        while True:
            line = self.layout.createLine()
            if not line.isValid():
                break
            line.setLineWidth(width)
            line.setPosition(QPointF(0, y))
            pitch = line.height() * spacing
            self.lines.append((line, y, pitch))
            y += pitch
        self.layout.endLayout()
        self.height = y

    def draw(self, painter: QPainter, x: float, y: float, color: QColor) -> None:
        """Draw every line with the block's top-left corner at (x, y)."""
        painter.setPen(color)
        self.layout.draw(painter, QPointF(x, y))

    def draw_line(self, painter: QPainter, index: int, x: float, top: float,
                  color: QColor) -> None:
        """Draw line ``index`` alone with its top at (x, top)."""
        line, y, _ = self.lines[index]
        painter.setPen(color)
        line.draw(painter, QPointF(x, top - y))


def allocate(natural: Sequence[float], minimum: Sequence[float], width: float,
             stretch: bool) -> list[float]:
    """Column widths that fill ``width``: natural widths when they fit, else shrink the
    columns that can wrap towards their minimum.

    Examples
    --------
    >>> allocate([10, 30], [10, 10], 60, stretch=True)
    [15.0, 45.0]
    >>> allocate([10, 30], [10, 10], 30, stretch=True)
    [10.0, 20.0]
    """
    total = sum(natural)
    if total <= width:
        extra = (width - total) if stretch else 0.0
        return [n + extra * n / total for n in natural]
    least = sum(minimum)
    if least >= width:
        return [m * width / least for m in minimum]
    give = (width - least) / (total - least)
    return [m + (n - m) * give for n, m in zip(natural, minimum, strict=True)]


class Flow:
    """Lay blocks out from top to bottom over as many pages as they need.

    Parameters
    ----------
    device : QPaintDevice
        The PDF writer (or any paint device) the text is measured for.
    width, height : float
        The paint area of one page in device pixels (inside the margins).
    top_first, top : float
        Where content starts on the first page and on later pages (below a running header).
    bottom : float
        Where content must end on every page (above the footer).
    """

    def __init__(self, device: QPaintDevice, *, width: float, top_first: float, top: float,
                 bottom: float) -> None:
        self.device = device
        self.dpi = device.logicalDpiY()
        self.width = width
        self.top = top
        self.bottom = bottom
        self.pages: list[list[Op]] = [[]]
        self.y = top_first

    def pt(self, points: float) -> float:
        """Points → device pixels."""
        return points * self.dpi / 72.0

    def text(self, text: str, face: QFont, width: float | None = None,
             align=Qt.AlignmentFlag.AlignLeft, spacing: float = 1.0) -> Text:
        """Lay ``text`` out without placing it."""
        return Text(text, face, self.width if width is None else width, self.device, align,
                    spacing)

    # -- placing -------------------------------------------------------------------------------

    def add(self, op: Op) -> None:
        """Record a paint operation on the current page."""
        self.pages[-1].append(op)

    def new_page(self) -> None:
        """Continue on a new page, below its running header."""
        self.pages.append([])
        self.y = self.top

    def at_top(self) -> bool:
        """Whether nothing has been placed on the current page yet."""
        return self.y <= self.top + 1e-6

    def ensure(self, height: float) -> None:
        """Start a new page unless ``height`` fits below the cursor."""
        if self.y + height > self.bottom and not self.at_top():
            self.new_page()

    def space(self, points: float) -> None:
        """Vertical space of ``points`` points (none at the top of a page)."""
        if not self.at_top():
            self.y = min(self.y + self.pt(points), self.bottom)

    def paragraph(self, text: str, face: QFont, color: QColor = INK, *, indent: float = 0.0,
                  spacing: float = 1.2, after: float = 4.0) -> None:
        """Place text, line by line, breaking to the next page where it runs out of room."""
        if not text.strip():
            return
        block = self.text(text, face, self.width - self.pt(indent), spacing=spacing)
        x = self.pt(indent)
        for index, (line, _, pitch) in enumerate(block.lines):
            self.ensure(line.height())
            top = self.y
            self.add(lambda p, i=index, top=top: block.draw_line(p, i, x, top, color))
            self.y += pitch
        self.space(after)

    def heading(self, text: str, level: int = 1) -> None:
        """A section heading, kept on the same page as at least ~5 lines of what follows."""
        size = {1: 13.0, 2: 10.5}[level]
        block = self.text(text, font(size, bold=True))
        self.space(10 if level == 1 else 6)
        self.ensure(block.height + self.pt(60))
        top = self.y
        self.add(lambda p: block.draw(p, 0, top, ACCENT if level == 1 else INK))
        self.y += block.height
        if level == 1:
            rule_y = self.y + self.pt(2)
            self.add(lambda p: hline(p, 0, self.width, rule_y, ACCENT, self.pt(0.8)))
            self.y += self.pt(4)
        self.y += self.pt(4)

    def figure(self, height: float, paint: Callable[[QPainter, QRectF], None]) -> None:
        """Reserve ``height`` device pixels across the full width and paint there."""
        self.ensure(height)
        rect = QRectF(0, self.y, self.width, height)
        self.add(lambda p: paint(p, rect))
        self.y += height

    # -- tables --------------------------------------------------------------------------------

    def cards(self, figures: Sequence[tuple[str, str, str]]) -> None:
        """Key figures side by side on shaded cards: label, large value, a line of detail."""
        pad = self.pt(7)
        gap = self.pt(6)
        width = (self.width - gap * (len(figures) - 1)) / len(figures)
        inner = width - 2 * pad
        faces = (font(7, bold=True), font(12.5, bold=True), font(7.5))
        blocks = [(self.text(label.upper(), faces[0], inner),
                   self.text(value, faces[1], inner, spacing=1.05),
                   self.text(detail, faces[2], inner, spacing=1.15))
                  for label, value, detail in figures]
        step = self.pt(3)
        height = max(sum(b.height for b in group) for group in blocks) + 2 * step + 2 * pad
        self.ensure(height)
        top = self.y
        for i, (label, value, detail) in enumerate(blocks):
            left = i * (width + gap)

            def draw(p, left=left, label=label, value=value, detail=detail):
                p.fillRect(QRectF(left, top, width, height), SHADE)
                p.fillRect(QRectF(left, top, self.pt(2.2), height), ACCENT)
                y = top + pad
                label.draw(p, left + pad, y, MUTED)
                y += label.height + step
                value.draw(p, left + pad, y, INK)
                detail.draw(p, left + pad, y + value.height + step, MUTED)

            self.add(draw)
        self.y += height

    def keep(self, height: float) -> None:
        """Keep the next ``height`` device pixels on one page (when they fit on any page)."""
        if height <= self.bottom - self.top:
            self.ensure(height)

    def measure(self, text: str, face: QFont, *, indent: float = 0.0, spacing: float = 1.2,
                after: float = 4.0) -> float:
        """The height :meth:`paragraph` would take with the same arguments."""
        if not text.strip():
            return 0.0
        block = self.text(text, face, self.width - self.pt(indent), spacing=spacing)
        return block.height + self.pt(after)

    def key_values(self, pairs: Sequence[tuple[str, str]], size: float = 8.5) -> None:
        """Label–value pairs in two columns, rows ruled lightly."""
        table = Table(header=("", ""), rows=tuple(pairs), align=("l", "l"))
        self.table(table, size=size, header=False, stretch=False, label_column=True)

    def table(self, table: Table, *, size: float = 7.5, header: bool = True,
              stretch: bool = True, label_column: bool = False) -> None:
        """Place a table; rows that do not fit start a new page under a repeated header.

        A table never leaves one row alone on a page: its first row goes with the second
        (under the header), its last with the one before.
        """
        body, strong, head = font(size), font(size, bold=True), font(size - 0.5, bold=True)
        pad_x, pad_y = self.pt(3), self.pt(2.2)
        columns = len(table.align)
        widths = self._widths(table, body, strong, head, pad_x, header, stretch)
        aligns = [Qt.AlignmentFlag.AlignRight if a == "r" else Qt.AlignmentFlag.AlignLeft
                  for a in table.align]
        lefts = [sum(widths[:c]) for c in range(columns)]
        total = sum(widths)

        def cells(texts, faces):
            blocks = [self.text(t, f, widths[c] - 2 * pad_x, aligns[c])
                      for c, (t, f) in enumerate(zip(texts, faces, strict=True))]
            return blocks, max(b.height for b in blocks) + 2 * pad_y

        head_blocks, head_height = cells(table.header, [head] * columns)

        def place_header() -> None:
            top = self.y

            def draw(p):
                p.fillRect(QRectF(0, top, total, head_height), SHADE)
                for c, block in enumerate(head_blocks):
                    block.draw(p, lefts[c] + pad_x, top + pad_y, MUTED)
                hline(p, 0, total, top + head_height, INK, self.pt(0.6))

            self.add(draw)
            self.y += head_height

        laid = [cells(row, [strong if (r, c) in table.bold or (label_column and c == 0)
                            else body for c in range(columns)])
                for r, row in enumerate(table.rows)]
        count = len(laid)
        for r, (blocks, height) in enumerate(laid):
            first = r == 0
            need = height + (head_height if header and first else 0)
            if r + 2 == count or (first and count > 1):
                need += laid[r + 1][1]  # no row alone at the end or the start of a page
            if self.y + need > self.bottom and not self.at_top():
                self.new_page()
                first = True
            if header and first:
                place_header()
            top = self.y
            shade = MARK if r in table.marked else (SHADE if r % 2 and header else None)
            color = [MUTED if label_column and c == 0 else INK for c in range(columns)]

            def draw(p, top=top, height=height, blocks=blocks, shade=shade, color=color):
                if shade is not None:
                    inset = self.pt(0.4)
                    p.fillRect(QRectF(0, top + inset, total, height - inset), shade)
                for c, block in enumerate(blocks):
                    block.draw(p, lefts[c] + pad_x, top + pad_y, color[c])
                hline(p, 0, total, top + height, RULE, self.pt(0.3))

            self.add(draw)
            self.y += height

    def _widths(self, table, body, strong, head, pad_x, header, stretch) -> list[float]:
        metrics = {id(f): QFontMetricsF(f, self.device) for f in (body, strong, head)}

        def advance(face, text):
            return max((metrics[id(face)].horizontalAdvance(part)
                        for part in clean(text).split("\u2028")), default=0.0)

        def longest_word(face, text):
            return max((metrics[id(face)].horizontalAdvance(w)
                        for w in _WORDS.split(clean(text)) if w), default=0.0)

        natural, minimum = [], []
        for c, align in enumerate(table.align):
            texts = [row[c] for row in table.rows]
            cell_width = max((advance(strong, t) for t in texts), default=0.0)
            head_width = advance(head, table.header[c]) if header else 0.0
            head_word = longest_word(head, table.header[c]) if header else 0.0
            natural.append(max(cell_width, head_width) + 2 * pad_x + self.pt(0.5))
            if align == "r":
                least = max(cell_width, head_word)
            else:
                word = max((longest_word(strong, t) for t in texts), default=0.0)
                least = min(max(word, head_word), self.width * 0.3)
            minimum.append(least + 2 * pad_x + self.pt(0.5))
        return allocate(natural, minimum, self.width, stretch)

    # -- painting ------------------------------------------------------------------------------

    def paint(self, painter: QPainter, next_page: Callable[[], None],
              decorate: Callable[[QPainter, int, int], None]) -> None:
        """Replay every page's operations; ``decorate(painter, index, count)`` adds the running
        header and footer; ``next_page()`` is called between pages."""
        count = len(self.pages)
        for index, ops in enumerate(self.pages):
            if index:
                next_page()
            for op in (*ops, lambda p, index=index: decorate(p, index, count)):
                painter.save()
                try:
                    op(painter)
                finally:  # also when interrupted, so the painter can end cleanly
                    painter.restore()


def hline(painter: QPainter, x0: float, x1: float, y: float, color: QColor,
          width: float) -> None:
    """A horizontal rule from x0 to x1 at y, ``width`` device pixels thick."""
    pen = QPen(color)
    pen.setWidthF(width)
    painter.setPen(pen)
    painter.drawLine(QPointF(x0, y), QPointF(x1, y))
