"""Fourfold's look: Fusion style with a light and a dark palette of our own, following the system.

The light palette is a warm paper grey with ink-dark text; the dark one a blue-black slate.
Both share one accent (a deep teal) and the table's own tints: computed cells, the solved cell
of each row, the binding-metric marker and the colour of cells that cannot be computed.
Contrast of body text on its background is above 7:1 in both palettes.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QGuiApplication, QIcon, QPainter, QPainterPath, QPalette, QPixmap
from PySide6.QtWidgets import QApplication

from fourfold.figures.style import TINTS, Tints

_LIGHT = {
    "window": "#f2f1ec", "base": "#ffffff", "alternate": "#f7f6f2", "text": "#1c2126",
    "button": "#e9e7e0", "highlight": "#2d6a6f", "highlighted_text": "#ffffff",
    "mid": "#c9c6bc", "dark": "#9c998f", "link": "#1f5f8b", "tooltip": "#fffdf3",
    "placeholder": "#7a7d80", "disabled": "#9a9a96",
}
_DARK = {
    "window": "#1d2127", "base": "#23282f", "alternate": "#282e36", "text": "#e7e8ea",
    "button": "#2c323a", "highlight": "#4f9ea3", "highlighted_text": "#0f1418",
    "mid": "#3d444d", "dark": "#14171b", "link": "#8cc4e6", "tooltip": "#2c323a",
    "placeholder": "#8d939a", "disabled": "#6b7178",
}


def system_is_dark() -> bool:
    """Whether the desktop asks for a dark colour scheme (Qt ≥ 6.5; light when unknown)."""
    hints = QGuiApplication.styleHints()
    return hints.colorScheme() == Qt.ColorScheme.Dark


def palette(dark: bool) -> QPalette:
    """The palette of one scheme."""
    colours = _DARK if dark else _LIGHT
    result = QPalette()
    role = QPalette.ColorRole
    pairs = {
        role.Window: "window", role.WindowText: "text", role.Base: "base",
        role.AlternateBase: "alternate", role.Text: "text", role.Button: "button",
        role.ButtonText: "text", role.Highlight: "highlight",
        role.HighlightedText: "highlighted_text", role.Mid: "mid", role.Dark: "dark",
        role.Link: "link", role.ToolTipBase: "tooltip", role.ToolTipText: "text",
        role.PlaceholderText: "placeholder", role.BrightText: "highlighted_text",
    }
    for colour_role, name in pairs.items():
        result.setColor(colour_role, QColor(colours[name]))
    for colour_role in (role.WindowText, role.Text, role.ButtonText):
        result.setColor(QPalette.ColorGroup.Disabled, colour_role, QColor(colours["disabled"]))
    return result


def tints(dark: bool | None = None) -> Tints:
    """The table tints of a scheme (the current system scheme when ``dark`` is None)."""
    return TINTS[system_is_dark() if dark is None else dark]


def apply(app: QApplication, dark: bool | None = None) -> bool:
    """Give ``app`` the Fusion style and the palette of the system's scheme; returns ``dark``."""
    dark = system_is_dark() if dark is None else dark
    app.setStyle("Fusion")
    app.setPalette(palette(dark))
    return dark


def app_icon() -> QIcon:
    """The application icon, drawn here: a square cut into four, one quarter lifted.

    The same drawing is kept as ``assets/icon.svg``.
    """
    icon = QIcon()
    for size in (16, 32, 64, 128, 256):
        pixmap = QPixmap(size, size)
        pixmap.fill(Qt.GlobalColor.transparent)
        painter = QPainter(pixmap)
        painter.setRenderHint(QPainter.RenderHint.Antialiasing)
        scale = size / 64.0
        painter.scale(scale, scale)
        back = QPainterPath()
        back.addRoundedRect(QRectF(2, 2, 60, 60), 12, 12)
        painter.fillPath(back, QColor("#2d6a6f"))
        quarters = ((10, 10), (34, 10), (10, 34))
        for x, y in quarters:
            tile = QPainterPath()
            tile.addRoundedRect(QRectF(x, y, 20, 20), 4, 4)
            painter.fillPath(tile, QColor("#f2f1ec"))
        lifted = QPainterPath()
        lifted.addRoundedRect(QRectF(QPointF(36, 32), QPointF(56, 52)), 4, 4)
        painter.fillPath(lifted, QColor("#f3b84a"))
        painter.end()
        icon.addPixmap(pixmap)
    return icon
