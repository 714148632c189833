"""Hostile files met by the window: a plan that is refused where the user opens it, and damaged
recovery copies found when the real window starts (``fourfold open`` through ``cli.main``)."""

from __future__ import annotations

import json

import pytest
from PySide6.QtWidgets import QApplication, QMessageBox

from fourfold import cli
from fourfold.plan import dumps, load, sample_path
from fourfold.ui.main_window import MainWindow

SAMPLE = sample_path().read_text(encoding="utf-8")

HOSTILE = {
    "a number above 1e308": (SAMPLE.replace('"baseline": 0.031', '"baseline": 1' + "0" * 400),
                             "metrics[0].baseline"),
    "a 4,400-digit integer": (SAMPLE.replace('"baseline": 0.031', '"baseline": 1' + "0" * 4400),
                              "metrics[0].baseline"),
    "deep nesting": ("[" * 100_000, "nested too deeply"),
    "a duplicate key": (SAMPLE.rstrip()[:-1] + ', "metrics": []}', "'metrics' appears twice"),
    "a foreign simulation object": (SAMPLE.replace('"simulation": null', '"simulation": {"x": 1}',
                                                   1), "metrics[0].simulation"),
    "an unpaired surrogate": (SAMPLE.replace('"Checkout conversion"', '"Checkout \\ud800"'),
                              "unpaired surrogate"),
}


@pytest.mark.parametrize("name", list(HOSTILE), ids=list(HOSTILE))
def test_opening_a_hostile_plan_shows_why_and_keeps_the_plan(make_window, tmp_path, name):
    text, words = HOSTILE[name]
    assert text != SAMPLE
    path = tmp_path / "hostile.json"
    path.write_text(text, encoding="utf-8")
    window = make_window()
    before = dumps(window.document.plan)
    assert window.open_path(str(path)) is False
    title, message = window.errors[-1]
    assert title == "Cannot open the plan" and words in message
    assert dumps(window.document.plan) == before


def _recovery_copy(plan_text: str) -> str:
    return ('{"format": "fourfold-recovery", "source": null, "plan": ' + plan_text + "}")


@pytest.fixture
def started(monkeypatch, tmp_path, qapp):
    """Start the real window with ``fourfold open``; return (exit code, status line, data)."""
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "share"))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "config"))
    from fourfold.ui.app import application
    from fourfold.ui.window_recovery import data_directory

    application()
    data = data_directory()
    data.mkdir(parents=True)
    seen = {}

    def run_until_shown(app):
        app.processEvents()
        window = next(w for w in QApplication.topLevelWidgets()
                      if isinstance(w, MainWindow) and w.isVisible())
        seen["status"] = window.statusBar().currentMessage()
        seen["title"] = window.document.plan.settings.title
        window.ask_to_save = lambda: QMessageBox.StandardButton.Discard
        window.close()
        return 0

    monkeypatch.setattr(QApplication, "exec", run_until_shown)

    def start():
        code = cli.main(["open", str(sample_path())])
        return code, seen.get("status", ""), seen.get("title")

    return data, start


@pytest.mark.parametrize("damage", ["1" + "0" * 400, "1" + "0" * 4400, "[" * 100_000,
                                    '{"format": "fourfold-plan"', "\udcff"],
                         ids=["above 1e308", "4,400 digits", "deep nesting", "cut off",
                              "undecodable byte"])
def test_a_damaged_recovery_copy_is_set_aside_and_the_window_starts(started, damage):
    data, start = started
    copy = data / "recovery-crashed.json"
    text = _recovery_copy(SAMPLE.replace('"baseline": 0.031', f'"baseline": {damage}'))
    copy.write_bytes(text.encode("utf-8", errors="surrogateescape"))
    code, status, title = start()
    assert code == 0 and title == load(sample_path()).settings.title
    aside = data / "recovery-crashed.json.damaged"
    assert not copy.exists() and aside.read_bytes() == text.encode("utf-8", "surrogateescape")
    assert status.startswith(f"A damaged recovery copy was set aside as {aside}: ")
    # the next start is not bothered again
    code, status, _ = start()
    assert code == 0 and "damaged" not in status


def test_a_good_copy_is_still_offered_beside_a_damaged_one(started, monkeypatch):
    data, start = started
    plan = load(sample_path())
    plan.settings.title = "Unsaved work"
    (data / "recovery-good.json").write_text(_recovery_copy(dumps(plan)), encoding="utf-8")
    (data / "recovery-bad.json").write_text("{", encoding="utf-8")
    monkeypatch.setattr(MainWindow, "_ask_recover", lambda self, found, *rest: True)
    code, status, title = start()
    assert code == 0 and title == "Unsaved work"
    assert status.startswith("Restored the unsaved plan from the last session. A damaged "
                             "recovery copy was set aside")
    assert json.loads((data / "recovery-bad.json.damaged").read_text() + "}") == {}
