"""CSV export: read back with pandas and the csv module, compared with the plan's evaluation.

Outside references: pandas 3.1 (``read_csv``) and Python's ``csv`` module as independent readers;
OWASP Foundation, "CSV Injection" (https://owasp.org/www-community/attacks/CSV_Injection) for
the characters that make a spreadsheet run a cell as a formula (= + - @ tab CR).
"""

from __future__ import annotations

import csv
import dataclasses
import math
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.export.csv import neutralise, settings_path, write_csv
from fourfold.export.files import ExportError
from fourfold.plan import CHOICES, load, sample_path
from fourfold.plan.evaluation import evaluate

# CSV column → evaluate() column, for every number the file holds (the scheme is documented in
# fourfold.export.csv).
NUMERIC = {
    "baseline": "baseline",
    "sd": "sd",
    "alpha_override_frac": "alpha_override",
    "power_override_frac": "power_override",
    "cuped_rho": "rho",
    "cluster_size_units": "cluster_size",
    "icc": "icc",
    "cluster_cv": "cluster_cv",
    "design_factor": "design_factor",
    "n_input_control_units": "n",
    "alpha_frac": "alpha",
    "power_frac": "power",
    "effect_abs": "effect_abs",
    "effect_rel_frac": "effect_rel",
    "margin_abs": "margin_abs",
    "margin_rel_frac": "margin_rel",
    "power_at_duration_frac": "power_at_duration",
    "units_control": "units_control",
    "units_treatment_per_arm": "units_treatment",
    "units_total": "units_total",
    "days": "days",
    "units_max": "units_max",
    "units_expected_h1": "units_expected_h1",
    "days_expected_h1": "days_expected_h1",
}
TEXT = {"name": "name", "role": "role", "kind": "kind", "solve": "solve", "solved": "solved",
        "alternative": "alternative", "notes": "notes", "reason": "reason"}
PAYLOADS = ('=HYPERLINK("http://example.invalid/x","click")', "+1", "-2+3", "@SUM(A1:A9)",
            "\tTabbed", "\rReturned")


def _floats(values) -> np.ndarray:
    return np.array([math.nan if v is None else float(v) for v in values], dtype=float)


def _texts(column) -> list[str]:
    return ["" if pd.isna(value) else value for value in column]


def _sample():
    return load(sample_path())


def _read(path):
    with open(path, encoding="utf-8-sig", newline="") as handle:
        return list(csv.reader(handle))


def test_numbers_read_back_by_pandas_equal_evaluate_exactly(tmp_path):
    plan = _sample()
    path, *_ = write_csv(plan, tmp_path / "plan.csv")
    back = pd.read_csv(path, keep_default_na=False, na_values=[""])
    frame = evaluate(plan)
    assert len(back) == len(frame) == len(plan.metrics)
    for column, source in NUMERIC.items():
        assert back[column].dtype.kind in "fi", column
        np.testing.assert_array_equal(back[column].to_numpy(), _floats(frame[source]),
                                      err_msg=column)
    assert list(back["row"]) == list(range(1, len(plan.metrics) + 1))
    assert list(back["binding"]) == list(frame["binding"])
    for column, source in TEXT.items():
        assert _texts(back[column]) == _texts(frame[source]), column
    defaults = [m if isinstance(m, str) else CHOICES["method"][k][0]
                for k, m in zip(frame["kind"], frame["method"], strict=True)]
    assert list(back["method"]) == defaults
    assert list(back["relative_input"]) == list(frame["relative"])


def test_effect_and_margin_as_entered_go_to_the_column_of_their_unit(tmp_path):
    """A relative input is a fraction of the baseline, an absolute one in the metric's unit:
    never both in one column (the sample's page-load row is absolute, the others relative)."""
    plan = _sample()
    path, *_ = write_csv(plan, tmp_path / "plan.csv")
    rows = _read(path)
    header = rows[0]
    assert "effect_input" not in header and "margin_input" not in header
    for metric, row in zip(plan.metrics, rows[1:], strict=True):
        for field in ("effect", "margin"):
            relative = row[header.index(f"{field}_input_rel_frac")]
            absolute = row[header.index(f"{field}_input_abs")]
            entered, other = (relative, absolute) if metric.relative else (absolute, relative)
            assert (float(entered), other) == (getattr(metric, field), ""), (metric.name, field)
    names = [row[header.index("name")] for row in rows[1:]]
    load = rows[1 + names.index("Page load time (s)")]
    assert (load[header.index("margin_input_abs")], load[header.index("margin_input_rel_frac")]) \
        == ("0.02", "")


def test_unit_counts_are_written_as_integers(tmp_path):
    plan = _sample()
    plan.settings.correction = "bonferroni"
    plan.metrics[1].n = 5000.0
    path, extra, *_ = write_csv(plan, tmp_path / "plan.csv")
    rows = _read(path)
    header = rows[0]
    frame = evaluate(plan)
    for column in ("units_control", "units_treatment_per_arm", "units_total", "units_max",
                   "units_expected_h1"):
        source = {"units_treatment_per_arm": "units_treatment"}.get(column, column)
        assert [row[header.index(column)] for row in rows[1:]] == [
            str(int(value)) for value in frame[source]], column
    assert rows[2][header.index("n_input_control_units")] == "5000"
    values = {key: value for key, value, _ in _read(extra)[1:]}
    assert values["total_units"] == "730302" and values["daily_units"] == "42000"


def test_results_are_not_rounded_away(tmp_path):
    """Full precision: the file holds Python's shortest round-trip repr of each float."""
    plan = _sample()
    plan.settings.whole_weeks = False
    path, *_ = write_csv(plan, tmp_path / "plan.csv")
    rows = _read(path)
    header = rows[0]
    frame = evaluate(plan)
    days = [row[header.index("days")] for row in rows[1:]]
    assert days == [repr(float(value)) for value in frame["days"]]


def test_settings_file_holds_settings_and_plan_results(tmp_path):
    plan = _sample()
    path, extra, *_ = write_csv(plan, tmp_path / "checkout.csv")
    assert extra == tmp_path / "checkout-settings.csv" == settings_path(path)
    rows = _read(extra)
    assert rows[0] == ["key", "value", "unit"]
    values = {key: value for key, value, _ in rows[1:]}
    attrs = evaluate(plan).attrs
    for key, value in attrs["settings"].items():
        if isinstance(value, bool):
            assert values[key] == ("true" if value else "false"), key
        elif isinstance(value, (int, float)):
            assert float(values[key]) == value, key
        elif value is None:
            assert values[key] == "", key
        else:
            assert values[key] == value, key
    assert float(values["duration_days"]) == attrs["duration_days"]
    assert float(values["total_units"]) == attrs["total_units"]
    assert int(values["binding_row"]) == attrs["binding_index"] + 1
    assert values["binding_name"] == attrs["binding_name"]
    notes = [value for key, value in values.items() if key.startswith("note_")]
    assert notes == attrs["notes"]


def test_formula_text_is_neutralised_and_numbers_untouched(tmp_path):
    plan = _sample()
    template = plan.metrics[0]
    plan.metrics = [
        dataclasses.replace(template, name=payload, notes=payload, effect=-0.05, margin=-0.01)
        for payload in PAYLOADS
    ]
    plan.settings.title = "=1+1"
    path, extra, *_ = write_csv(plan, tmp_path / "plan.csv")
    rows = _read(path)
    header = rows[0]
    for payload, row in zip(PAYLOADS, rows[1:], strict=True):
        assert row[header.index("name")] == "'" + payload
        assert row[header.index("notes")] == "'" + payload
        assert row[header.index("effect_input_rel_frac")] == "-0.05"
        assert row[header.index("margin_input_rel_frac")] == "-0.01"
    for row in rows[1:]:
        text_cells = [row[header.index(c)] for c in ("name", "notes", "role", "kind")]
        assert not any(c.startswith(("=", "+", "-", "@", "\t", "\r")) for c in text_cells)
    settings_rows = {key: value for key, value, _ in _read(extra)[1:]}
    assert settings_rows["title"] == "'=1+1"


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=12))
def test_neutralised_text_never_starts_a_formula(text):
    out = neutralise(text)
    assert out in (text, "'" + text)
    assert not out.startswith(("=", "+", "-", "@", "\t", "\r"))


def test_failed_write_keeps_the_old_files_and_leaves_no_temporary(tmp_path, monkeypatch):
    plan = _sample()
    path, extra = tmp_path / "plan.csv", tmp_path / "plan-settings.csv"
    path.write_text("old table", encoding="utf-8")
    extra.write_text("old settings", encoding="utf-8")

    def broken(*_):
        raise RuntimeError("disk trouble")

    monkeypatch.setattr("fourfold.export.csv.settings_rows", broken)
    with pytest.raises(RuntimeError):
        write_csv(plan, path)
    assert path.read_text(encoding="utf-8") == "old table"
    assert extra.read_text(encoding="utf-8") == "old settings"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan-settings.csv", "plan.csv"]


def test_missing_folder_is_a_user_error(tmp_path):
    with pytest.raises(ExportError, match="does not exist"):
        write_csv(_sample(), tmp_path / "nowhere" / "plan.csv")
    assert list(tmp_path.iterdir()) == []


def test_csv_export_loads_neither_qt_nor_pandas(tmp_path):
    """Project rule (DEVELOPERS.md): fourfold.export.csv is Qt-free; pandas is not needed."""
    code = (
        "import sys; from fourfold.export import export_file; "
        "from fourfold.plan import sample_path; "
        f"export_file(sample_path(), {str(tmp_path / 'p.csv')!r}); "
        "print(sorted(m for m in ('PySide6', 'pyqtgraph', 'pandas') if m in sys.modules))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    assert done.stdout.strip() == "[]"


def test_the_exported_power_at_the_duration_is_a_probability_with_interim_looks(tmp_path):
    """The sample plan with three interim looks, exported through the command line: every
    row's power at the duration is at most 1 (a probability; common practice, no source). The
    group sequential grid's sum of crossings overshot 1 by ~4e-8 for rows far past their
    needed size before powers were capped."""
    from fourfold.plan import save

    sample = load(sample_path())
    path = tmp_path / "three-looks.json"
    save(dataclasses.replace(sample, settings=dataclasses.replace(sample.settings, looks=3)),
         path)
    done = subprocess.run([sys.executable, "-m", "fourfold", "export", str(path), "-o",
                           str(tmp_path / "plan.csv")], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    with open(tmp_path / "plan.csv", encoding="utf-8-sig", newline="") as handle:
        powers = [float(row["power_at_duration_frac"]) for row in csv.DictReader(handle)]
    assert len(powers) == len(sample.metrics)
    assert max(powers) == 1.0
