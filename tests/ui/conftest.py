"""Fixtures for the window tests: a temporary QSettings file and data folder, never the user's."""

from __future__ import annotations

import pytest
from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QMessageBox

from fourfold.plan import load, sample_path


@pytest.fixture
def qsettings(tmp_path):
    """Settings in an ini file under the test's temporary folder."""
    return QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)


@pytest.fixture
def make_window(qtbot, qsettings, tmp_path):
    """Build MainWindows on a plan; dialogs are replaced by recorders (no modal boxes)."""
    from fourfold.ui.main_window import MainWindow

    windows = []

    def build(plan=None, path=None, settings=None, data_dir=None):
        window = MainWindow(plan if plan is not None else load(sample_path()), path,
                            settings if settings is not None else qsettings,
                            data_dir=data_dir if data_dir is not None else tmp_path / "data")
        window.errors = []
        window.show_error = lambda title, text, w=window: w.errors.append((title, text))
        window.ask_to_save = lambda: QMessageBox.StandardButton.Discard
        window.autosave_timer.stop()
        qtbot.addWidget(window)
        windows.append(window)
        return window

    yield build
    for window in windows:
        window.document.stack.mark_clean()


@pytest.fixture
def panel(qtbot):
    """A shown plot panel of a fixed size."""
    from fourfold.ui.plots import PlotPanel

    widget = PlotPanel()
    qtbot.addWidget(widget)
    widget.resize(720, 640)
    widget.show()
    return widget
