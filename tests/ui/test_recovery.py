"""Recovery copies with several windows: one copy each, never one that a running window writes.

That a lock file names its holder's process and is stale once that process is gone is Qt's
``QLockFile`` (PySide6 6.11 documentation); the rest is common practice of desktop editors,
no source. A "crashed window" is a real child process that writes its copy and exits without
cleaning up.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap

import pytest

from fourfold.plan import Plan, Settings, dumps, load, sample_path
from fourfold.ui.recovery import LEGACY_NAME, Recovery


def _plan(title: str) -> Plan:
    plan = load(sample_path())
    return Plan(Settings(title=title), plan.metrics)


def _crash(folder, copies: list[tuple[str, float]]) -> list[str]:
    """A process whose windows write their copies, then it dies without discarding them.

    ``copies`` holds (title, modification time) per window; returns the copies' paths.
    """
    script = textwrap.dedent(f"""
        import os
        from fourfold.plan import Plan, Settings, load, sample_path
        from fourfold.ui.recovery import Recovery
        metrics = load(sample_path()).metrics
        for title, _ in {copies!r}:
            recovery = Recovery({str(folder)!r})
            recovery.write(Plan(Settings(title=title), metrics), None)
            print(recovery.path, flush=True)
        os._exit(0)
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    paths = done.stdout.split()
    for path, (_, stamp) in zip(paths, copies, strict=True):
        os.utime(path, (stamp, stamp))
    return paths


def _title(path) -> str:
    with open(path, encoding="utf-8") as stream:
        return json.load(stream)["plan"]["settings"]["title"]


def test_two_windows_write_two_copies_and_never_offer_each_other_while_running(tmp_path):
    first, second = Recovery(tmp_path), Recovery(tmp_path)
    first.write(_plan("First"), None)
    second.write(_plan("Second"), None)
    assert first.path != second.path
    assert _title(first.path) == "First" and _title(second.path) == "Second"
    first.write(_plan("First, later"), None)  # autosave again: only its own copy changes
    assert _title(second.path) == "Second"
    assert first.leftovers() == [] and second.leftovers() == []
    first.discard()
    assert not first.path.exists() and second.path.exists()
    second.discard()
    assert sorted(tmp_path.iterdir()) == []  # copies and locks gone after clean exits


def test_copies_of_crashed_windows_are_offered_newest_first_and_only_once(tmp_path):
    running = Recovery(tmp_path)
    running.write(_plan("Still open"), None)
    older, newer = _crash(tmp_path, [("Older", 1_700_000_000), ("Newer", 1_700_000_600)])
    starting = Recovery(tmp_path)
    found = starting.leftovers()
    assert [str(item.path) for item in found] == [newer, older]
    assert [item.plan.settings.title for item in found] == ["Newer", "Older"]
    # a window starting at the same moment does not offer the copies claimed just now
    assert Recovery(tmp_path).leftovers() == []
    starting.keep(found[1])  # kept for later: the next window may offer it
    assert [str(item.path) for item in Recovery(tmp_path).leftovers()] == [older]
    starting.drop(found[0])
    assert not os.path.exists(newer) and os.path.exists(older)
    assert running.path.exists()


def test_the_old_shared_file_is_offered_and_an_unreadable_copy_is_set_aside(tmp_path):
    legacy = tmp_path / LEGACY_NAME
    payload = {"format": "fourfold-recovery", "source": None,
               "plan": json.loads(dumps(_plan("Before windows had their own")))}
    legacy.write_text(json.dumps(payload), encoding="utf-8")
    broken = tmp_path / "recovery-broken.json"
    broken.write_text("{not json", encoding="utf-8")
    recovery = Recovery(tmp_path)
    found = recovery.leftovers()
    assert [item.path for item in found] == [legacy]
    aside = tmp_path / "recovery-broken.json.damaged"
    assert not broken.exists() and aside.read_text(encoding="utf-8") == "{not json"
    assert [(path, "not valid JSON" in why) for path, why in recovery.set_aside] == [(aside, True)]


def test_a_window_offers_each_copy_restores_one_and_keeps_the_rest(make_window, tmp_path):
    data = tmp_path / "data"
    data.mkdir()
    paths = _crash(data, [("Oldest", 1_700_000_000), ("Middle", 1_700_000_060),
                          ("Newest", 1_700_000_120)])
    window = make_window(data_dir=data)
    answers = iter([False, None, True])
    asked = []

    def ask(found):
        asked.append(found.plan.settings.title)
        return next(answers)

    assert window.offer_recovery(ask=ask) is True
    assert asked == ["Newest", "Middle", "Oldest"]  # newest first, one prompt each
    assert window.document.plan.settings.title == "Oldest"
    assert not os.path.exists(paths[2])  # discarded
    assert not os.path.exists(paths[0])  # restored: this window's own copy took over
    assert window.recovery.path.exists()
    # the copy kept for later is left for the next window, unlocked
    assert [item.plan.settings.title for item in Recovery(data).leftovers()] == ["Middle"]


def test_a_failed_write_keeps_the_previous_copy(tmp_path, monkeypatch):
    recovery = Recovery(tmp_path)
    recovery.write(_plan("Good"), None)

    def broken(*_args, **_kwargs):
        raise OSError("disk full")

    monkeypatch.setattr("fourfold.ui.recovery.os.replace", broken)
    with pytest.raises(OSError, match="disk full"):
        recovery.write(_plan("Never written"), None)
    assert _title(recovery.path) == "Good"
    assert [path.name for path in tmp_path.iterdir() if path.suffix in (".tmp", ".part")] == []
    monkeypatch.undo()
    recovery.discard()
