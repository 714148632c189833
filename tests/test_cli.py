"""The command line's own behaviour: one parser, the default command, errors on stderr."""

import os
import subprocess
import sys

import pytest

from fourfold import __version__, cli


def test_plan_path_alone_means_open():
    assert cli._normalise(["plan.json"]) == ["open", "plan.json"]
    assert cli._normalise([]) == ["open"]
    assert cli._normalise(["export", "p.json", "-o", "x.csv"])[0] == "export"


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as stop:
        cli.main(["--version"])
    assert stop.value.code == 0
    assert __version__ in capsys.readouterr().out
    with pytest.raises(SystemExit):
        cli.main(["--help"])
    out = capsys.readouterr().out
    for command in ("export", "shot", "history"):
        assert command in out


def test_bad_size_is_refused_on_stderr(capsys):
    with pytest.raises(SystemExit) as stop:
        cli.main(["shot", "-o", "x.png", "--size", "wide"])
    assert stop.value.code == 2
    assert "1400x900" in capsys.readouterr().err


def test_help_does_not_import_the_heavy_libraries():
    code = (
        "import sys; from fourfold import cli; cli.build_parser(); "
        "print(sorted(m for m in ('PySide6', 'pyqtgraph', 'pandas', 'scipy') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_one_blas_thread_unless_the_user_chose(monkeypatch):
    # Set before numpy loads in a fresh process (a fact of OpenBLAS: it reads the variable at
    # load time; common practice, no source); a user's own setting is kept.
    monkeypatch.delenv("OPENBLAS_NUM_THREADS", raising=False)
    with pytest.raises(SystemExit):
        cli.main(["--version"])
    assert os.environ["OPENBLAS_NUM_THREADS"] == "1"
    monkeypatch.setenv("OPENBLAS_NUM_THREADS", "2")
    with pytest.raises(SystemExit):
        cli.main(["--version"])
    assert os.environ["OPENBLAS_NUM_THREADS"] == "2"


def test_a_reader_that_left_stops_the_output_quietly():
    # `fourfold history --sql … | head`: the pipe closes before the query is printed. Common
    # practice (no source): a command line tool stops without a traceback on a broken pipe.
    read_end, write_end = os.pipe()
    os.close(read_end)
    try:
        done = subprocess.run([sys.executable, "-m", "fourfold", "history", "--sql", "visits",
                               "--mean", "revenue"], stdout=write_end, stderr=subprocess.PIPE,
                              text=True, timeout=60)
    finally:
        os.close(write_end)
    assert done.stderr == ""
    assert done.returncode == 1


def test_opening_the_window_does_not_import_the_history_reader():
    code = (
        "import sys; from fourfold import cli; cli.build_parser('open'); "
        "print(sorted(m for m in sys.modules if m.startswith('fourfold.history')))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_the_window_imports_its_models_before_pyside6():
    # PySide6's import hook reads the source of every module imported after it: the window's
    # start-up imports numpy, scipy.special and the plan first (the command's order).
    code = (
        "import sys\n"
        "order = []\n"
        "class Seen:\n"
        "    def find_spec(self, name, path=None, target=None):\n"
        "        order.append(name)\n"
        "sys.meta_path.insert(0, Seen())\n"
        "from fourfold import cli\n"
        "from fourfold.ui.app import run_window\n"
        "print(' '.join(order))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    order = out.stdout.split()
    assert "PySide6" in order
    for model in ("numpy", "scipy.special", "fourfold.plan", "fourfold.engine"):
        assert order.index(model) < order.index("PySide6"), model


def test_history_help_lists_its_options(capsys):
    with pytest.raises(SystemExit) as stop:
        cli.main(["history", "--help"])
    assert stop.value.code == 0
    out = capsys.readouterr().out
    for option in ("--mean", "--proportion", "--sql", "--query-result"):
        assert option in out
