"""Colours, text sizes and line widths of the figures, for the screen or for paper.

:class:`Style` is what the trade-off figures are drawn with; :func:`style_from_palette` derives
it from a widget palette (light or dark) and :func:`paper` is the light palette of a printed
page. :data:`TINTS` holds the colours the window's table and summary use on top of a palette;
the figures take their problem colour from there too.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6.QtGui import QColor, QFont, QPalette


@dataclass(frozen=True)
class Tints:
    """Colours the plan table and summary use on top of the palette."""

    computed: QColor
    solved: QColor
    solved_text: QColor
    binding: QColor
    problem: QColor
    muted: QColor
    accent: QColor


TINTS = {
    False: Tints(QColor("#eaf0f2"), QColor("#fbe7b5"), QColor("#3b2a00"), QColor("#b0532c"),
                 QColor("#a8332b"), QColor("#5f6670"), QColor("#2d6a6f")),
    True: Tints(QColor("#27323a"), QColor("#5a4a1c"), QColor("#fff3cf"), QColor("#e58a5f"),
                QColor("#f08a80"), QColor("#a3abb4"), QColor("#6fb7bc")),
}
"""The tints of the light (``False``) and the dark (``True``) scheme."""


@dataclass(frozen=True)
class Style:
    """Colours, text sizes and line widths of the figures.

    ``pen_scale`` multiplies line widths, for painting onto devices with more dots per inch
    than a screen (lines are drawn in device pixels; markers are scaled by the export mode of
    :func:`paint_tradeoffs`). ``pixel_dpi``, when set, gives fonts a pixel size for that many
    pixels per inch instead of a point size: text that the axes draw straight onto a page's
    painter would otherwise be sized for the page's resolution (1200 dpi for a PDF) and then
    scaled once more by the painter's transform, while pixel-sized text follows the transform
    like every other part of the figure.
    """

    background: QColor
    foreground: QColor
    muted: QColor
    grid: QColor
    curve: QColor
    neighbour: QColor
    point: QColor
    marks: QColor
    text_scale: float = 1.0
    pen_scale: float = 1.0
    pixel_dpi: float | None = None

    def font(self, points: float) -> QFont:
        font = QFont()
        if self.pixel_dpi is None:
            font.setPointSizeF(points * self.text_scale)
        else:
            font.setPixelSize(max(1, round(points * self.text_scale * self.pixel_dpi / 72.0)))
        return font

    def size(self, points: float) -> str:
        return f"{points * self.text_scale:.1f}pt"


def style_from_palette(palette: QPalette, text_scale: float = 1.0, pen_scale: float = 1.0,
                       pixel_dpi: float | None = None) -> Style:
    """The figures' style for a widget palette: light or dark follows the palette's base colour.

    The curves take the palette's highlight colour (the application's accent); the design point
    is a warm amber and the weekly marks a violet, both lighter on dark backgrounds.
    """
    background = palette.color(QPalette.ColorRole.Base)
    foreground = palette.color(QPalette.ColorRole.WindowText)
    dark = background.lightness() < 128
    curve = QColor(palette.color(QPalette.ColorRole.Highlight))
    if dark:
        curve = curve.lighter(125)
    neighbour = QColor(curve)
    neighbour.setAlpha(120)
    muted = QColor(foreground)
    muted.setAlpha(170)
    grid = QColor(foreground)
    grid.setAlpha(60)
    return Style(
        background=background,
        foreground=foreground,
        muted=muted,
        grid=grid,
        curve=curve,
        neighbour=neighbour,
        point=QColor("#f4b045") if dark else QColor("#b5560d"),
        marks=QColor("#b8a4ef") if dark else QColor("#5b3f9e"),
        text_scale=text_scale,
        pen_scale=pen_scale,
        pixel_dpi=pixel_dpi,
    )


def paper() -> QPalette:
    """A light palette for printed figures, independent of the window's scheme."""
    palette = QPalette()
    palette.setColor(QPalette.ColorRole.Base, QColor("#ffffff"))
    palette.setColor(QPalette.ColorRole.Window, QColor("#ffffff"))
    palette.setColor(QPalette.ColorRole.WindowText, QColor("#1c2126"))
    palette.setColor(QPalette.ColorRole.Highlight, QColor("#2d6a6f"))
    return palette


SCREEN_DPI = 96.0
"""The resolution a pixel of the screen figures is drawn at; a page scales lines by its own."""


def begin_painting(painter, points: float) -> tuple[float, QFont]:
    """Start a plain-QPainter figure: save the painter, antialias, set its font to ``points``.

    Returns the screen pixel's size on the painter's device (≥ 1; lines and gaps are sized in
    it, so a figure looks alike on the screen and on a 300 dpi page) and the font. The caller
    restores the painter when done.
    """
    from PySide6.QtGui import QPainter

    px = max(1.0, painter.device().logicalDpiX() / SCREEN_DPI)
    painter.save()
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    font = QFont(painter.font())
    font.setPointSizeF(points)
    painter.setFont(font)
    return px, font
