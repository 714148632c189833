"""The engine's start-up path: scipy.special only, no scipy.stats, no pandas, no Qt."""

import subprocess
import sys


def test_import_engine_keeps_heavy_modules_out():
    code = (
        "import sys, fourfold.engine as e; e.sample_size('mean', 0.0, 0.5, sd=1.0, method='t');"
        "e.problems('power', 'proportion', 0.1, effect=0.01, n=100.0);"
        "print(sorted(m for m in ('scipy.stats', 'pandas', 'PySide6', 'pyqtgraph')"
        " if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"
