"""Faults while writing: a full disk, a target that is not a file, kills and interruptions.

Every writer (plan, recovery copy, CSV pair, PDF, PNG) must leave an existing file as it was
and no temporary file behind when it fails, and fail with one line on stderr and exit status
2. The full disk is a real one where the machine allows it (a 64 KB tmpfs mounted in a private
user and mount namespace with ``unshare -rm``) and otherwise a writer that fails the way a full
disk makes it fail (``/dev/full``, or ``os.write`` raising ENOSPC). Kills are real: a
subprocess saving in a loop gets SIGKILL.
"""

from __future__ import annotations

import errno
import json
import os
import shutil
import signal
import stat
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from fourfold import cli
from fourfold.plan import Plan, PlanError, Settings, dumps, load, sample_path, save

PARTS = ".*.part"


def _leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith((".part", ".tmp")))


def _run(capsys, *argv) -> tuple[int, str, str]:
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line_error(err: str, *words: str) -> None:
    assert err.startswith("fourfold: error: ") and err.count("\n") == 1, err
    assert "Traceback" not in err
    for word in words:
        assert word in err, err


# -- targets that are not regular files -----------------------------------------------------

def _device(folder: Path, name: str) -> Path:
    """A character device to write to: a null device of the test's own where the test may
    make one (as root: a faulty writer then replaces only that), else a link to /dev/null,
    which a process that is not root cannot replace."""
    path = folder / name
    if hasattr(os, "getuid") and os.getuid() == 0:
        os.mknod(path, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
    else:
        path.symlink_to(os.devnull)
    assert path.is_char_device()
    return path


@pytest.mark.parametrize("command, suffix", [("export", ".csv"), ("export", ".pdf"),
                                             ("shot", ".png"), ("compare", ".csv")])
def test_a_device_target_is_refused_and_left_a_device(tmp_path, capsys, command, suffix):
    device = _device(tmp_path, f"out{suffix}")
    argv = ((command, "-o", device) if command == "shot"
            else (command, sample_path(), "-o", device))
    code, _, err = _run(capsys, *argv)
    assert code == 2
    _one_line_error(err, "is a device, not a regular file")
    assert device.is_char_device() and Path(os.devnull).is_char_device()
    assert _leftovers(tmp_path) == []


def test_a_named_pipe_target_is_refused(tmp_path, capsys):
    pipe = tmp_path / "out.csv"
    os.mkfifo(pipe)
    code, _, err = _run(capsys, "export", sample_path(), "-o", pipe)
    assert code == 2
    _one_line_error(err, "named pipe")
    assert pipe.is_fifo()


def test_a_nul_byte_in_the_output_name_is_refused(tmp_path, capsys):
    code, _, err = _run(capsys, "export", sample_path(), "-o", f"{tmp_path}/a\x00b.csv")
    assert code == 2
    _one_line_error(err, "NUL character")
    code, _, err = _run(capsys, "shot", "-o", f"{tmp_path}/a\x00b.png")
    assert code == 2
    _one_line_error(err, "NUL character")
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("argv", [
    ["export", "plan\x00.json", "-o", "out.csv"], ["shot", "plan\x00.json", "-o", "out.png"],
    ["open", "plan\x00.json"], ["history", "data\x00.csv", "--mean", "x"],
    ["history", "--query-result", "result\x00.csv", "--mean", "x"],
], ids=["export", "shot", "open", "history", "query-result"])
def test_a_nul_byte_in_an_input_name_is_refused(tmp_path, capsys, monkeypatch, argv):
    monkeypatch.chdir(tmp_path)
    code, _, err = _run(capsys, *argv)
    assert code == 2
    _one_line_error(err, "NUL character", "\\x00")
    assert list(tmp_path.iterdir()) == []


READ_ONLY = textwrap.dedent("""
    set -u
    mount -t tmpfs -o size=64k tmpfs "$DISK"
    printf 'old table' > "$DISK/plan.csv"
    mount -o remount,ro "$DISK"
    "$PYTHON" -m fourfold export "$PLAN" -o "$DISK/plan.csv"; echo "csv $?"
    "$PYTHON" -m fourfold export "$PLAN" -o "$DISK/plan.pdf"; echo "pdf $?"
    echo "kept $(cat "$DISK/plan.csv")"
""")


def test_an_unwritable_folder_fails_with_one_line_and_keeps_the_old_file(tmp_path, capsys):
    if hasattr(os, "getuid") and os.getuid() != 0:  # permissions hold for this user
        folder = tmp_path / "locked"
        folder.mkdir()
        (folder / "plan.csv").write_text("old table")
        folder.chmod(0o500)
        try:
            code, _, err = _run(capsys, "export", sample_path(), "-o", folder / "plan.csv")
        finally:
            folder.chmod(0o700)
        assert code == 2
        _one_line_error(err, "cannot write", "Permission denied")
        assert (folder / "plan.csv").read_text() == "old table"
        return
    if not _can_mount_tmpfs():  # root ignores permissions: a read-only file system instead
        pytest.skip("no private tmpfs on this machine")
    done = _in_private_tmpfs(tmp_path, READ_ONLY)
    assert done.stdout.split("\n")[:3] == ["csv 2", "pdf 2", "kept old table"], done.stdout
    errors = done.stderr.strip().splitlines()
    assert len(errors) == 2 and all("Read-only file system" in e for e in errors), errors


def test_saving_a_plan_onto_a_device_is_refused(tmp_path):
    device = _device(tmp_path, "plan.json")
    with pytest.raises(PlanError, match="cannot save .*: it is a device"):
        save(Plan.empty(), device)
    assert device.is_char_device() and Path(os.devnull).is_char_device()


# -- a full disk -----------------------------------------------------------------------------

def _can_mount_tmpfs() -> bool:
    if shutil.which("unshare") is None or not sys.platform.startswith("linux"):
        return False
    probe = subprocess.run(["unshare", "-rm", "sh", "-c", "mount -t tmpfs -o size=8k tmpfs /mnt"],
                           capture_output=True)
    return probe.returncode == 0


def _in_private_tmpfs(tmp_path: Path, script: str) -> subprocess.CompletedProcess:
    """Run the shell ``script`` as root of a private user and mount namespace, with ``$DISK``
    an empty folder to mount on, ``$PYTHON`` this interpreter and ``$PLAN`` the sample plan."""
    disk = tmp_path / "disk"
    disk.mkdir()
    env = dict(os.environ, DISK=str(disk), PYTHON=sys.executable, PLAN=str(sample_path()),
               QT_QPA_PLATFORM="offscreen")
    return subprocess.run(["unshare", "-rm", "sh", "-c", script], env=env,
                          capture_output=True, text=True, timeout=120)


FULL_DISK = textwrap.dedent("""
    set -u
    mount -t tmpfs -o size=64k tmpfs "$DISK"
    printf 'old report' > "$DISK/plan.pdf"
    printf 'old table' > "$DISK/plan.csv"
    printf 'old shot' > "$DISK/plan.png"
    head -c 49152 /dev/zero > "$DISK/filler"
    "$PYTHON" -m fourfold export "$PLAN" -o "$DISK/plan.pdf"; echo "pdf $?"
    "$PYTHON" -m fourfold export "$PLAN" -o "$DISK/plan.csv"; echo "csv $?"
    "$PYTHON" -m fourfold shot "$PLAN" -o "$DISK/plan.png"; echo "png $?"
    "$PYTHON" -c "import json
    from fourfold.plan import *
    p = load('$PLAN'); p.settings.description = 'x' * 30000
    try:
        save(p, '$DISK/plan.json')
    except PlanError as e:
        print('plan error:', e)"
    for f in plan.pdf plan.csv plan.png; do echo "$f $(cat "$DISK/$f")"; done
    echo "files: $(ls -A "$DISK" | tr '\\n' ' ')"
""")


@pytest.mark.skipif(not _can_mount_tmpfs(), reason="no private tmpfs on this machine")
def test_a_full_disk_fails_every_writer_and_keeps_the_old_files(tmp_path):
    done = _in_private_tmpfs(tmp_path, FULL_DISK)
    lines = done.stdout.splitlines()
    assert "pdf 2" in lines and "csv 2" in lines and "png 2" in lines, done.stdout
    assert "plan.pdf old report" in lines and "plan.csv old table" in lines
    assert "plan.png old shot" in lines
    assert any(line.startswith("plan error: cannot save") and "No space left" in line
               for line in lines), done.stdout
    assert lines[-1].split() == ["files:", "filler", "plan.csv", "plan.pdf", "plan.png"]
    errors = done.stderr.strip().splitlines()
    assert len(errors) == 3 and all(e.startswith("fourfold: error: cannot write") for e in errors)
    assert "the disk is full" in errors[0] and "PDF came out incomplete" in errors[0]
    assert "Traceback" not in done.stderr


def test_a_pdf_writer_that_cannot_write_fails_and_keeps_the_old_report(tmp_path, capsys,
                                                                      monkeypatch):
    # /dev/full fails every write with ENOSPC, as a full disk does (Linux; the PDF writer
    # reports nothing and leaves an empty or cut-off file).
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full")
    from PySide6.QtGui import QPdfWriter

    import fourfold.export.pdf as pdf

    monkeypatch.setattr(pdf, "QPdfWriter", lambda _name: QPdfWriter("/dev/full"))
    out = tmp_path / "plan.pdf"
    out.write_bytes(b"old report")
    code, out_text, err = _run(capsys, "export", sample_path(), "-o", out)
    assert code == 2 and out_text == ""
    _one_line_error(err, "cannot write", "PDF came out incomplete", "the old file is unchanged")
    assert out.read_bytes() == b"old report"
    assert _leftovers(tmp_path) == []


@pytest.fixture
def full_disk(monkeypatch):
    """``os.write`` stores 1,000 bytes and then fails with ENOSPC, as on a full disk."""
    real = os.write
    room = {"left": 1000}

    def write(handle, data):
        if room["left"] <= 0:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        written = real(handle, bytes(data[:room["left"]]))
        room["left"] -= written
        return written

    monkeypatch.setattr(os, "write", write)
    return room


def test_csv_export_on_a_full_disk_keeps_both_old_files(tmp_path, capsys, full_disk):
    table, settings = tmp_path / "plan.csv", tmp_path / "plan-settings.csv"
    table.write_text("old table")
    settings.write_text("old settings")
    code, _, err = _run(capsys, "export", sample_path(), "-o", table)
    assert code == 2
    _one_line_error(err, "cannot write", "No space left on device")
    assert table.read_text() == "old table" and settings.read_text() == "old settings"
    assert _leftovers(tmp_path) == []


def test_saving_a_plan_on_a_full_disk_keeps_the_old_file(tmp_path, full_disk):
    path = tmp_path / "plan.json"
    path.write_text(dumps(Plan.empty()))
    before = path.read_bytes()
    with pytest.raises(PlanError, match="cannot save .*No space left on device"):
        save(load(sample_path()), path)
    assert path.read_bytes() == before and _leftovers(tmp_path) == []


def test_a_recovery_copy_on_a_full_disk_keeps_the_previous_copy(tmp_path, full_disk):
    from fourfold.ui.recovery import Recovery

    recovery = Recovery(tmp_path)
    full_disk["left"] = 10**9
    recovery.write(Plan.empty(), None)
    before = recovery.path.read_bytes()
    full_disk["left"] = 1000
    with pytest.raises(OSError, match="No space left on device"):
        recovery.write(load(sample_path()), None)
    assert recovery.path.read_bytes() == before and _leftovers(tmp_path) == []
    recovery.discard()


def test_a_writer_that_stops_short_is_caught_by_the_size_check(tmp_path, monkeypatch):
    # A file system that accepts the bytes but keeps fewer (the check after the flush).
    from fourfold import atomic

    path = tmp_path / "plan.json"
    save(Plan.empty(), path)
    before = path.read_bytes()
    real = atomic.write_all

    def short(handle, data):
        real(handle, data[: len(data) // 2])

    monkeypatch.setattr(atomic, "write_all", short)
    with pytest.raises(PlanError, match="came out incomplete"):
        save(load(sample_path()), path)
    assert path.read_bytes() == before and _leftovers(tmp_path) == []


# -- kills and interruptions -----------------------------------------------------------------

SAVE_LOOP = textwrap.dedent("""
    import sys
    from fourfold.plan import Plan, Settings, save
    plan = Plan(Settings(title="big", description="x" * 6_000_000), [])
    print("ready", flush=True)
    while True:
        save(plan, sys.argv[1])
""")

RECOVERY_LOOP = textwrap.dedent("""
    import sys
    from fourfold.plan import Plan, Settings
    from fourfold.ui.recovery import Recovery
    recovery = Recovery(sys.argv[1], token="killed")
    plan = Plan(Settings(title="big", description="x" * 6_000_000), [])
    print("ready", flush=True)
    while True:
        recovery.write(plan, None)
""")


def _kill_while_writing(script: str, target: str, kills: int) -> list[int]:
    """Start ``script`` writing ``target`` in a loop and SIGKILL it mid-way, ``kills`` times."""
    pids = []
    for attempt in range(kills):
        process = subprocess.Popen([sys.executable, "-c", script, target],
                                   stdout=subprocess.PIPE, text=True)
        assert process.stdout.readline().strip() == "ready"
        time.sleep(0.05 + 0.07 * attempt)
        process.send_signal(signal.SIGKILL)
        process.wait()
        process.stdout.close()
        pids.append(process.pid)
    return pids


def test_a_killed_save_never_loses_the_plan_and_its_leftovers_are_cleaned(tmp_path):
    path = tmp_path / "plan.json"
    save(Plan(Settings(title="before"), []), path)
    pids = _kill_while_writing(SAVE_LOOP, str(path), kills=3)
    assert load(path).settings.title in ("before", "big")  # old or new, never half
    # what a kill between creating and renaming leaves behind (the last process's name)
    (tmp_path / f".plan.json.{pids[-1]}.0badf00d.part").write_text("half a plan")
    assert _leftovers(tmp_path)
    save(Plan.empty(), path)
    assert _leftovers(tmp_path) == []
    assert load(path) == Plan.empty()


def test_a_killed_recovery_write_is_cleaned_and_its_last_copy_offered_at_start(tmp_path):
    from fourfold.ui.recovery import Recovery

    pids = _kill_while_writing(RECOVERY_LOOP, str(tmp_path), kills=3)
    (tmp_path / f".recovery-killed.json.{pids[-1]}.0badf00d.part").write_text("half")
    found = Recovery(tmp_path).leftovers()  # what the next window does when it starts
    assert _leftovers(tmp_path) == []
    assert [item.plan.settings.title for item in found] in ([], ["big"])


def test_an_interrupted_export_leaves_no_temporary_file_and_no_traceback(tmp_path):
    plan = load(sample_path())
    plan.settings.description = "word " * 1_600_000  # a long report: time to interrupt it
    source = tmp_path / "long.json"
    save(plan, source)
    out = tmp_path / "out.pdf"
    process = subprocess.Popen([sys.executable, "-m", "fourfold", "export", str(source), "-o",
                                str(out)], stderr=subprocess.PIPE, text=True,
                               env=dict(os.environ, QT_QPA_PLATFORM="offscreen"))
    deadline = time.monotonic() + 30
    while not _leftovers(tmp_path) and time.monotonic() < deadline:
        time.sleep(0.02)
    assert _leftovers(tmp_path), "the export never started writing"
    time.sleep(0.3)  # into the layout of the report
    process.send_signal(signal.SIGTERM)
    err = process.communicate(timeout=60)[1]
    assert process.returncode == 130, err
    assert err.strip() == "fourfold: interrupted; nothing was written"
    assert _leftovers(tmp_path) == [] and not out.exists()


def test_stale_parts_of_other_targets_and_live_processes_are_left_alone(tmp_path):
    mine = tmp_path / f".plan.json.{os.getpid()}.0badf00d.part"
    other = tmp_path / ".other.json.999999999.0badf00d.part"
    for path in (mine, other):
        path.write_text("x")
    save(Plan.empty(), tmp_path / "plan.json")
    assert sorted(_leftovers(tmp_path)) == sorted([mine.name, other.name])
    json.loads((tmp_path / "plan.json").read_text())
