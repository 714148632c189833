"""Every signal connection of the window is safe from the ``triggered(bool)`` trap.

A signal hands its arguments to the slot's parameters in order: ``QAction.triggered`` and
``QAbstractButton.clicked`` carry a ``checked`` flag, so a slot such as ``paste(text=None)``
receives ``False`` as its text (Edit → Paste once did nothing but print a traceback). The rule
checked here over the whole package: a signal connects to a lambda (whose parameters are in
plain sight) or to a function of Fourfold's whose parameters, past ``self``, all lack defaults
(the signal fills them) or are ``*args``. No outside source: Qt's documented signal
signatures, and the project's rule in /work/shared notes.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[2] / "desktop" / "fourfold"


def _trees() -> dict[Path, ast.Module]:
    return {path: ast.parse(path.read_text(encoding="utf-8"), str(path))
            for path in PACKAGE.rglob("*.py")}


def _defaulted(function: ast.FunctionDef) -> list[str]:
    """Positional parameters with a default value (where a signal's arguments would land)."""
    arguments = function.args
    positional = arguments.posonlyargs + arguments.args
    return [parameter.arg for parameter in positional[len(positional)
                                                      - len(arguments.defaults):]]


def _connections(tree: ast.Module):
    """Calls of ``connect`` with a slot: a database's ``connect(":memory:")`` is not one."""
    for node in ast.walk(tree):
        if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute)
                and node.func.attr == "connect" and node.args
                and not isinstance(node.args[0], ast.Constant)):
            yield node, node.args[0]


def test_no_slot_takes_a_signals_argument_for_an_optional_parameter():
    trees = _trees()
    functions: dict[str, list[tuple[Path, ast.FunctionDef]]] = {}
    for path, tree in trees.items():
        for node in ast.walk(tree):
            if isinstance(node, ast.FunctionDef):
                functions.setdefault(node.name, []).append((path, node))
    problems, checked = [], 0
    for path, tree in trees.items():
        for call, slot in _connections(tree):
            where = f"{path.relative_to(PACKAGE)}:{call.lineno}"
            if isinstance(slot, ast.Lambda):
                continue
            if not isinstance(slot, ast.Attribute):
                problems.append(f"{where}: connect a lambda or a method, not {ast.unparse(slot)}")
                continue
            for source, function in functions.get(slot.attr, []):
                checked += 1
                defaulted = _defaulted(function)
                if defaulted:
                    problems.append(f"{where}: {ast.unparse(slot)} has optional {defaulted} "
                                    f"({source.relative_to(PACKAGE)}:{function.lineno})")
    assert checked > 20  # the audit did look at the window's connections
    assert problems == []


def test_the_audit_catches_the_paste_trap():
    tree = ast.parse("class View:\n"
                     "    def paste(self, text=None):\n"
                     "        return text\n"
                     "action.triggered.connect(view.paste)\n")
    function = next(node for node in ast.walk(tree) if isinstance(node, ast.FunctionDef))
    assert _defaulted(function) == ["text"]
    assert [ast.unparse(slot) for _, slot in _connections(tree)] == ["view.paste"]
