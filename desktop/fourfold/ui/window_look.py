"""The main window's look on top of the palette: style sheet details and the text size.

The text size (View → Larger, Smaller, Normal) scales the table and the plots and is remembered
in the settings.
"""

from __future__ import annotations

from PySide6.QtWidgets import QApplication

from fourfold.ui import theme

SCALE_STEP = 0.1
SCALE_RANGE = (0.6, 2.5)

STYLE = """
QFrame#settingsGroup {{ border: 1px solid {mid}; border-radius: 6px; background: {base}; }}
QLabel#groupHeading {{ color: {accent}; font-weight: 600; font-size: {small}pt;
    letter-spacing: 1px; }}
QLabel#fieldLabel {{ color: {muted}; }}
QLineEdit#planTitle {{ font-size: {title}pt; font-weight: 600; border: none;
    border-bottom: 2px solid {accent}; background: transparent; padding: 2px 0; }}
QPlainTextEdit#planDescription {{ color: {muted}; border: none; background: transparent; }}
QFrame#summaryBar {{ background: {summary}; border-radius: 6px; }}
QLabel#summaryItem {{ font-size: {summary_pt}pt; }}
QLabel#summaryNotes {{ color: {muted}; }}
QLineEdit[changed="true"], QSpinBox[changed="true"], QComboBox[changed="true"],
QCheckBox[changed="true"] {{ background: {changed}; }}
QComboBox#scenarioChoice {{ font-size: {summary_pt}pt; padding: 1px 8px; }}
QComboBox#scenarioChoice[active="true"] {{ background: {accent}; color: #ffffff;
    font-weight: 600; border: 1px solid {accent}; border-radius: 4px; }}
"""
HEADER_STYLE = """
QHeaderView::section {{ padding: 2px 6px; border: none; border-right: 1px solid {mid};
    border-bottom: 1px solid {mid}; background: {button}; font-weight: 600; }}
"""


def _changed_tint(accent) -> str:
    """The accent, faint: the background of a field a scenario changes (as in the table)."""
    return f"rgba({accent.red()}, {accent.green()}, {accent.blue()}, 45)"


class WindowLook:
    """Style sheets and text size of :class:`fourfold.ui.main_window.MainWindow`."""

    def apply_style(self) -> None:
        """Style sheet details on top of the palette (group frames, title, summary, headers).

        The table's cells are left to the plain Fusion style: a style sheet on the table
        itself would slow down every repaint of its cells. The colours come from the scheme's
        palette, not ``self.palette()``: right after a live scheme change the window may still
        hold the old one.
        """
        palette = theme.palette(self.dark)
        tints = theme.tints(self.dark)
        base_pt = max(QApplication.font().pointSizeF(), 9.0)
        sheet = STYLE.format(
            mid=palette.mid().color().name(), base=palette.base().color().name(),
            button=palette.button().color().name(), accent=tints.accent.name(),
            muted=tints.muted.name(), summary=tints.computed.name(),
            small=round(base_pt * 0.8, 1), title=round(base_pt * 1.45, 1),
            summary_pt=round(base_pt * 1.1, 1), changed=_changed_tint(tints.accent),
        )
        self.settings_panel.setStyleSheet(sheet)
        self.summary.setStyleSheet(sheet)
        header = HEADER_STYLE.format(mid=palette.mid().color().name(),
                                     button=palette.button().color().name())
        self.table.horizontalHeader().setStyleSheet(header)
        self.table.verticalHeader().setStyleSheet(header)

    def text_scale(self) -> float:
        """The remembered text scale of the table and plots (1 = normal)."""
        try:
            value = float(self.settings.value("view/text_scale", 1.0))
        except (TypeError, ValueError):
            value = 1.0
        low, high = SCALE_RANGE
        return min(max(value, low), high)

    def set_text_scale(self, scale: float, announce: bool = True) -> None:
        """Scale the text of the table and plots and remember it."""
        low, high = SCALE_RANGE
        scale = round(min(max(scale, low), high), 2)
        self.settings.setValue("view/text_scale", scale)
        font = QApplication.font()
        font.setPointSizeF(font.pointSizeF() * scale)
        self.table.setFont(font)
        self.table.horizontalHeader().setFont(font)
        self.table.verticalHeader().setFont(font)
        self.boundaries.setFont(font)
        self.scenario_panel.set_text_font(font)
        if self.isVisible():  # a window being built is fitted when it is first shown
            self.fit_table()
        self.plots.set_text_scale(scale)
        if announce:
            self.show_message(f"Text size {round(scale * 100)} %")

    def step_text(self, steps: int) -> None:
        """Make the text one step larger (+1) or smaller (−1)."""
        self.set_text_scale(self.text_scale() + steps * SCALE_STEP)
