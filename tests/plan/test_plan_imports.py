"""The document layer stays light: no Qt, no plotting, no pandas until asked (project rule)."""

import subprocess
import sys

CHECK = """
import sys
def loaded():
    return [name for name in ("PySide6", "pyqtgraph", "pandas", "scipy.stats")
            if name in sys.modules]
import fourfold.engine, fourfold.plan, fourfold.plan.commands, fourfold.plan.evaluation
print(",".join(loaded()))
plan = fourfold.plan.load(fourfold.plan.sample_path())
fourfold.plan.compute(plan)
print(",".join(loaded()))
"""


def _run(code):
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    return [line.split(",") if line else [] for line in done.stdout.splitlines()]


def test_plan_and_engine_import_without_qt_pandas_or_scipy_stats():
    after_import, after_compute = _run(CHECK)
    assert after_import == []
    assert not {"PySide6", "pyqtgraph", "pandas"} & set(after_compute)


def test_evaluate_brings_pandas_in_lazily():
    after_import, after_evaluate = _run(CHECK.replace("plan.compute(", "plan.evaluate("))
    assert after_import == []
    assert "pandas" in after_evaluate
