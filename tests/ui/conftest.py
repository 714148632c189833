"""Fixtures for the window tests: a temporary QSettings file and data folder, never the user's."""

from __future__ import annotations

import pytest
from PySide6.QtCore import QEvent, QObject, QSettings, Qt
from PySide6.QtGui import QAction
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication, QMessageBox

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
    if windows:
        # QTest.keyClick with modifiers (Ctrl+Alt+PageDown, say) leaves the application's
        # modifier state at Ctrl: the next test's setCurrentIndex would add to the selection
        QTest.keyRelease(windows[-1], Qt.Key.Key_Control)
    for window in windows:
        window.document.stack.mark_clean()
        window.close()
        window.deleteLater()
    # gone before the next test: a window closed but not yet deleted (one never shown, say)
    # would still run its timers and take part in the next test's window activation
    QApplication.sendPostedEvents(None, QEvent.Type.DeferredDelete)


@pytest.fixture
def panel(qtbot):
    """A shown plot panel of a fixed size."""
    from fourfold.ui.plots import PlotPanel

    widget = PlotPanel()
    qtbot.addWidget(widget)
    widget.resize(720, 640)
    widget.show()
    return widget



class _ShortcutWatch(QObject):
    """Records the shortcuts that reach actions, and each such action's shortcuts."""

    def __init__(self) -> None:
        super().__init__()
        self.pressed: dict[str, set[str]] = {}
        self.shortcuts: dict[str, set[str]] = {}

    def eventFilter(self, watched, event):  # noqa: N802 (Qt's name)
        if event.type() == QEvent.Type.Shortcut and isinstance(watched, QAction):
            name = watched.objectName()
            self.pressed.setdefault(name, set()).add(event.key().toString())
            self.shortcuts[name] = {key.toString() for key in watched.shortcuts()}
        return False


@pytest.fixture(autouse=True)
def claimed_actions_are_used(request, monkeypatch):
    """Hold a test marked ``triggers(...)`` or ``presses(...)`` to its word.

    ``triggers("paste_action")``: the test calls ``trigger()`` on an action of that object
    name; ``presses("paste_action")``: every shortcut of that action reaches it from a key
    event. ``tests/ui/test_action_registry.py`` checks that every action of the window is
    claimed by some test.
    """
    triggers = {name for mark in request.node.iter_markers("triggers") for name in mark.args}
    presses = {name for mark in request.node.iter_markers("presses") for name in mark.args}
    if not (triggers or presses):
        yield
        return
    triggered: set[str] = set()
    trigger = QAction.trigger

    def recording_trigger(action):
        triggered.add(action.objectName())
        return trigger(action)

    monkeypatch.setattr(QAction, "trigger", recording_trigger)
    watch = _ShortcutWatch()
    app = QApplication.instance() or QApplication([])
    app.installEventFilter(watch)
    try:
        yield
    finally:
        app.removeEventFilter(watch)
    assert triggers <= triggered, f"never triggered: {sorted(triggers - triggered)}"
    for name in sorted(presses):
        pressed = watch.pressed.get(name, set())
        assert pressed and watch.shortcuts[name] <= pressed, (
            f"{name}: shortcuts {sorted(watch.shortcuts.get(name, ()))}, "
            f"pressed {sorted(pressed)}")
