"""Every action of the window is exercised the way a user reaches it.

The registry is the tests themselves: a test marked ``@pytest.mark.triggers("paste_action")``
runs that action through ``QAction.trigger()`` (as a menu click does) and checks what it did
to the plan; ``@pytest.mark.presses("paste_action")`` presses each of its shortcuts on the
focused widget. The ``claimed_actions_are_used`` fixture (``tests/ui/conftest.py``) holds each
marked test to its word while it runs; the checks here read the markers from the test sources
and compare them with the actions of a live window — its menus, the table's context menu,
Open recent's entries and its dialogs — so that a new action without such a test fails here.
No outside source: the project's rule (DEVELOPERS.md, "Testing the way users go").
"""

from __future__ import annotations

import ast
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QToolBar

from fourfold.plan import save
from fourfold.ui.history_dialog import HistoryDialog
from fourfold.ui.simulation_dialog import SimulationDialog

TESTS = Path(__file__).resolve().parents[1]


def claims(marker: str) -> dict[str, list[str]]:
    """Action names claimed by tests marked ``@pytest.mark.<marker>(...)``, with the tests."""
    found: dict[str, list[str]] = {}
    for path in sorted(TESTS.rglob("test_*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"), str(path))
        for node in ast.walk(tree):
            if not isinstance(node, ast.FunctionDef):
                continue
            for decorator in node.decorator_list:
                if (isinstance(decorator, ast.Call) and isinstance(decorator.func, ast.Attribute)
                        and decorator.func.attr == marker
                        and ast.unparse(decorator.func.value) == "pytest.mark"):
                    for argument in decorator.args:
                        found.setdefault(ast.literal_eval(argument), []).append(
                            f"{path.relative_to(TESTS.parent)}::{node.name}")
    return found


def live_actions(window, tmp_path) -> list[QAction]:
    """The window's actions a user can reach, with Open recent filled and the dialogs built."""
    save(window.document.plan, tmp_path / "recent.json")
    window.remember_recent(tmp_path / "recent.json")
    window.recent_menu.aboutToShow.emit()
    dialogs = [HistoryDialog(window.document, window), SimulationDialog(window.document, [0],
                                                                        window)]
    # a tool bar's own show/hide entry is offered only for the main window's own tool bars
    internal = {bar.toggleViewAction() for bar in window.findChildren(QToolBar)
                if window.toolBarArea(bar) == Qt.ToolBarArea.NoToolBarArea}
    actions = [action for action in window.findChildren(QAction)
               if not action.isSeparator() and action.menu() is None
               and action not in internal]
    for dialog in dialogs:
        dialog.deleteLater()
    return actions


def test_every_action_has_a_name(make_window, tmp_path):
    unnamed = [action.text() for action in live_actions(make_window(), tmp_path)
               if not action.objectName()]
    assert unnamed == [], "keep the action as self.<name>_action (or give it an object name)"


def test_every_action_is_triggered_by_a_test(make_window, tmp_path):
    actions = {action.objectName() for action in live_actions(make_window(), tmp_path)}
    missing = sorted(actions - set(claims("triggers")))
    assert missing == [], "add a test marked @pytest.mark.triggers(NAME) for each"


def test_every_shortcut_is_pressed_by_a_test(make_window, tmp_path):
    actions = {action.objectName() for action in live_actions(make_window(), tmp_path)
               if action.shortcuts()}
    missing = sorted(actions - set(claims("presses")))
    assert missing == [], "add a test marked @pytest.mark.presses(NAME) for each"


def test_the_registry_names_only_live_actions(make_window, tmp_path):
    actions = {action.objectName() for action in live_actions(make_window(), tmp_path)}
    actions.add("no_recent_action")  # Open recent's entry while there are no recent files
    stale = {name: tests for marker in ("triggers", "presses")
             for name, tests in claims(marker).items() if name not in actions}
    assert stale == {}


def test_the_registry_reads_the_markers():
    triggered = claims("triggers")
    assert "tests/ui/test_actions_edit.py::test_edit_paste_pastes_the_clipboard" in \
        triggered["paste_action"]
