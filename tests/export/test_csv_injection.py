"""Formula text in every disguise a spreadsheet still runs (OWASP Foundation, "CSV Injection",
https://owasp.org/www-community/attacks/CSV_Injection; the full-width and whitespace variants
from the adversarial pass of issue 17): prefixed with a quote in the exported CSV, while
numbers stay numbers.
"""

from __future__ import annotations

import csv
import dataclasses
import unicodedata

from hypothesis import given, settings
from hypothesis import strategies as st

from fourfold.export.csv import neutralise, write_csv
from fourfold.plan import load, sample_path

VARIANTS = [
    "=1+1", "＝1+1", "＋1+cmd", "－1+cmd", "＠SUM(A1)", "﹦1+1",
    " =1+1", "\u00a0=1+1", "\u200b=1+1", "\ufeff=1+1", "\n=1+1", "\t=1+1", "\r=1+1",
    " \u00a0\u200b＝HYPERLINK(\"http://x\")", "|calc", " |calc", "＋", "@", "-",
]
HARMLESS = ["Checkout conversion", "a=b", "pre-period revenue", "3 % lift", "", "   ",
            "\u200b", "(=)", "'=already quoted"]


def _exported(tmp_path, names):
    plan = load(sample_path())
    template = plan.metrics[0]
    plan.metrics = [dataclasses.replace(template, name=f"row {i}", notes=text)
                    for i, text in enumerate(names)]
    plan.settings.description = names[0]
    path, extra = write_csv(plan, tmp_path / "plan.csv")[:2]
    with open(path, encoding="utf-8-sig", newline="") as handle:
        rows = list(csv.DictReader(handle))
    with open(extra, encoding="utf-8-sig", newline="") as handle:
        settings_rows = {row["key"]: row["value"] for row in csv.DictReader(handle)}
    return rows, settings_rows


def test_every_variant_is_quoted_in_the_export_and_numbers_stay_numeric(tmp_path):
    rows, settings_rows = _exported(tmp_path, VARIANTS)
    for text, row in zip(VARIANTS, rows, strict=True):
        assert row["notes"] == "'" + text, text
        assert float(row["baseline"]) == 0.031 and float(row["effect_input_rel_frac"]) == 0.05
        assert row["units_control"].replace(".", "").isdigit()
    assert settings_rows["description"] == "'" + VARIANTS[0]


def test_harmless_text_is_left_alone(tmp_path):
    rows, _ = _exported(tmp_path, HARMLESS)
    assert [row["notes"] for row in rows] == HARMLESS


def _runs(text: str) -> bool:
    """Whether a spreadsheet that drops leading white space and invisible characters and
    reads compatibility forms as their plain letters would see a formula."""
    if text[:1] in ("\t", "\r", "\n"):
        return True
    visible = [c for c in text if not (c.isspace() or unicodedata.category(c) == "Cf")]
    return bool(visible) and unicodedata.normalize("NFKC", visible[0])[:1] in "=+-@|"


@settings(max_examples=300, deadline=None)
@given(st.text(st.sampled_from(list(" \u00a0\u200b\ufeff\t\r\n=+-@|＝＋－＠﹦ab1'")), max_size=8)
       | st.text(max_size=8))
def test_quoted_exactly_when_a_spreadsheet_would_run_it(text):
    out = neutralise(text)
    assert out == ("'" + text if _runs(text) else text)
