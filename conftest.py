"""Test set-up shared by the whole tree: Qt runs offscreen, and no error may pass unseen.

Qt calls Python code (slots, timers, overridden virtual methods such as ``paintEvent`` or a
model's ``data``) from C++, where an exception cannot propagate: PySide prints its traceback
through ``sys.excepthook`` and carries on, so the test that caused it would pass. The autouse
fixture :func:`fail_on_swallowed_errors` makes every such exception fail the test it happened
in, whether or not pytest-qt's own capture is active (it is not for a test marked
``qt_no_exception_capture``, or when pytest-qt is not installed), and so do exceptions that
reach ``sys.unraisablehook`` (``__del__``, finalizers) or ``threading.excepthook`` (worker
threads). Qt's own warnings ("edit: editing failed") fail a test through pytest-qt's
``qt_log_level_fail`` (``pyproject.toml``).
"""

from __future__ import annotations

import os
import sys
import threading
import traceback

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

pytest_plugins = ["pytester"]


def _process_qt_events() -> None:
    """Deliver Qt's posted events (queued slots, zero-delay timers) if Qt is in use."""
    widgets = sys.modules.get("PySide6.QtWidgets")
    app = widgets.QApplication.instance() if widgets is not None else None
    if app is not None:
        app.processEvents()


@pytest.fixture(autouse=True)
def fail_on_swallowed_errors():
    """Fail the test if Python raised an exception that Qt (or a thread, or ``__del__``) ate.

    Yields the list of tracebacks caught so far; a test that provokes one on purpose checks it
    and empties the list.
    """
    caught: list[str] = []
    hooks = sys.excepthook, sys.unraisablehook, threading.excepthook

    def on_exception(kind, value, trace) -> None:
        text = "".join(traceback.format_exception(kind, value, trace))
        caught.append(text)
        sys.stderr.write(text)

    def on_unraisable(unraisable) -> None:
        on_exception(type(unraisable.exc_value), unraisable.exc_value,
                     unraisable.exc_traceback)

    def on_thread(arguments) -> None:
        if arguments.exc_type is not SystemExit:
            on_exception(arguments.exc_type, arguments.exc_value, arguments.exc_traceback)

    sys.excepthook, sys.unraisablehook, threading.excepthook = (on_exception, on_unraisable,
                                                                 on_thread)
    try:
        yield caught
        _process_qt_events()
    finally:
        sys.excepthook, sys.unraisablehook, threading.excepthook = hooks
    _fail_if_any(caught)  # what fixtures' teardown caused


def _fail_if_any(caught: list[str]) -> None:
    if caught:
        text = "\n".join(caught)
        caught.clear()
        pytest.fail("Python raised inside Qt (a slot, timer or virtual method), a thread or "
                    "a finalizer, and nothing stopped it:\n" + text, pytrace=False)


@pytest.hookimpl(wrapper=True)
def pytest_runtest_call(item):
    """Fail the test itself (not its teardown) for what its own steps caused."""
    result = yield
    caught = getattr(item, "funcargs", {}).get("fail_on_swallowed_errors")
    if caught is not None:
        _process_qt_events()
        _fail_if_any(caught)
    return result
