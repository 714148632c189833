"""The dialog's first guess of a mapping (rules of thumb: common practice, no source)."""

from pathlib import Path

import pytest

from fourfold.history import HistoryError, guess_mapping

SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "quillmoss-history.csv"


def test_the_sample_is_guessed_kind_by_kind():
    header, mapping = guess_mapping(SAMPLE)
    assert header[0] == "visitor"
    found = {spec.column: (spec.kind, spec.pre) for spec in mapping}
    assert "visitor" not in found and "pre_revenue" not in found
    assert found["converted"] == ("proportion", None)
    assert found["added_to_cart"] == ("proportion", None)  # true/false text
    assert found["revenue"] == ("mean", "pre_revenue")
    assert found["items"] == ("count", None)
    assert found["page_load_s"] == ("mean", "pre_page_load_s")


def test_a_numeric_column_with_a_stray_cell_is_still_offered(tmp_path):
    rows = ["id,spend"] + [f"u{i},{i * 0.5}" for i in range(40)]
    rows[10] = "u9,lots"
    path = tmp_path / "h.csv"
    path.write_text("\n".join(rows) + "\n")
    _, mapping = guess_mapping(path)
    assert [(spec.kind, spec.column) for spec in mapping] == [("mean", "spend")]


def test_a_header_without_rows(tmp_path):
    path = tmp_path / "h.csv"
    path.write_text("a,b\n")
    with pytest.raises(HistoryError, match="no rows"):
        guess_mapping(path)
