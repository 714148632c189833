"""The conftest's guard: an exception that Qt, a thread or a finalizer swallowed fails the test.

Each check runs a small test file in a pytest session of its own (pytest's ``pytester``) with
the project's root ``conftest.py`` and its Qt logging settings, and reads the outcome: the
inner test must fail, naming the exception. No outside source: this is the project's own rule
(DEVELOPERS.md, "Testing the way users go").
"""

from __future__ import annotations

from pathlib import Path

import pyqtgraph  # noqa: F401 - loaded once here: numpy cannot be loaded again by each inner run
import pytest

ROOT = Path(__file__).resolve().parents[1]

ACTION_SLOT = """
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QApplication


def paste(text=None):
    return text.replace("a", "b")


def test_a_menu_action():
    app = QApplication.instance() or QApplication([])
    action = QAction("Paste", None)
    action.triggered.connect(paste)
    action.trigger()
"""

VIRTUAL_METHOD = """
from PySide6.QtWidgets import QApplication, QWidget


class Broken(QWidget):
    def paintEvent(self, event):
        raise ValueError("painting went wrong")


def test_a_repaint():
    app = QApplication.instance() or QApplication([])
    widget = Broken()
    widget.resize(40, 30)
    widget.grab()
"""

QUEUED_TIMER = """
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication


def later():
    raise KeyError("a timer's slot")


def test_a_zero_delay_timer():
    app = QApplication.instance() or QApplication([])
    QTimer.singleShot(0, later)
"""

DRAG_HANDLER = """
import pyqtgraph as pg
from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtTest import QTest
from PySide6.QtWidgets import QApplication


class Handle(pg.InfiniteLine):
    def mouseDragEvent(self, event):
        raise ZeroDivisionError("dragging went wrong")


def test_a_drag():
    app = QApplication.instance() or QApplication([])
    view = pg.PlotWidget()
    view.resize(300, 200)
    view.show()
    line = Handle(pos=0.5, movable=True)
    view.addItem(line)
    view.setRange(xRange=(0, 1), yRange=(0, 1), padding=0)
    app.processEvents()
    viewport = view.viewport()
    start = view.mapFromScene(view.plotItem.vb.mapViewToScene(QPointF(0.5, 0.5)))
    QTest.mousePress(viewport, Qt.MouseButton.LeftButton, pos=start)
    for step in range(1, 6):
        QTest.mouseMove(viewport, start + QPoint(8 * step, 0))
    QTest.mouseRelease(viewport, Qt.MouseButton.LeftButton, pos=start + QPoint(40, 0))
    view.close()
"""

THREAD = """
import threading


def work():
    raise OSError("a worker thread")


def test_a_thread():
    worker = threading.Thread(target=work)
    worker.start()
    worker.join()
"""

FINALIZER = """
import gc


class Leaky:
    def __del__(self):
        raise RuntimeError("a finalizer")


def test_a_finalizer():
    Leaky()
    gc.collect()
"""

QT_WARNING = """
from PySide6.QtWidgets import QApplication, QTableView
from PySide6.QtGui import QStandardItemModel


def test_a_qt_warning():
    app = QApplication.instance() or QApplication([])
    view = QTableView()
    view.setModel(QStandardItemModel(2, 2))
    view.edit(view.model().index(5, 5))
"""

EXPECTED = """
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication


def test_an_expected_error(fail_on_swallowed_errors):
    app = QApplication.instance() or QApplication([])
    QTimer.singleShot(0, lambda: 1 / 0)
    app.processEvents()
    assert "ZeroDivisionError" in fail_on_swallowed_errors[0]
    fail_on_swallowed_errors.clear()
"""


CASES = {  # test name: the text its failure must show
    "test_a_menu_action": "'bool' object has no attribute 'replace'",
    "test_a_repaint": "painting went wrong",
    "test_a_zero_delay_timer": "a timer's slot",
    "test_a_drag": "dragging went wrong",
    "test_a_thread": "a worker thread",
    "test_a_finalizer": "a finalizer",
}
SOURCES = (ACTION_SLOT, VIRTUAL_METHOD, QUEUED_TIMER, DRAG_HANDLER, THREAD, FINALIZER)


@pytest.fixture
def inner(pytester, request):
    """Run test files in a session of their own with the project's conftest and Qt settings."""
    pytester.makeconftest((ROOT / "conftest.py").read_text(encoding="utf-8"))
    config = request.config
    ignored = "\n    ".join(config.getini("qt_log_ignore"))
    warnings = "\n    ".join(config.getini("filterwarnings"))
    pytester.makeini(f"""
[pytest]
qt_log_level_fail = {config.getini("qt_log_level_fail")}
qt_log_ignore =
    {ignored}
filterwarnings =
    {warnings}
""")

    def run(*options: str, **sources: str):
        pytester.makepyfile(**sources)
        return pytester.runpytest_inprocess("-p", "no:cacheprovider", "-rfE", *options)

    return run


def _failures(result) -> dict[str, str]:
    """The failure report of each failed test, by test name."""
    text = result.stdout.str()
    reports = {}
    for name in CASES:
        marker = f" {name} _"
        if marker in text:
            start = text.index(marker)
            reports[name] = text[start:text.find("\n____", start + len(marker))]
    return reports


@pytest.mark.no_qt_log  # the inner session's Qt messages are the inner session's business
@pytest.mark.parametrize("pytest_qt", ["with pytest-qt", "without pytest-qt"])
def test_every_kind_of_swallowed_exception_fails_its_test(inner, pytest_qt):
    options = () if pytest_qt == "with pytest-qt" else ("-p", "no:pytest-qt")
    sources = {f"test_{number}": source for number, source in enumerate(SOURCES)}
    result = inner(*options, **sources)
    result.assert_outcomes(failed=len(CASES))
    reports = _failures(result)
    for name, text in CASES.items():
        assert text in reports.get(name, ""), (name, result.stdout.str())


def test_it_also_fails_a_test_that_turned_pytest_qts_capture_off(inner):
    marked = ACTION_SLOT.replace("def test_a_menu_action", "import pytest\n\n\n"
                                 "@pytest.mark.qt_no_exception_capture\n"
                                 "def test_a_menu_action")
    result = inner(test_marked=marked)
    result.assert_outcomes(failed=1)
    assert "has no attribute 'replace'" in result.stdout.str()


def test_a_qt_warning_fails_the_test(inner):
    result = inner(test_warning=QT_WARNING)
    result.assert_outcomes(failed=1)
    assert "edit: editing failed" in result.stdout.str()


def test_a_test_may_take_an_error_it_expects(inner):
    inner(test_expected=EXPECTED).assert_outcomes(passed=1)
