"""One long unbroken word in a report: it wraps like ordinary text (the time it takes is in
``tests/bench/bench_pdf_words.py``, not here). Qt's ``QTextLayout`` wraps a word wider than
its line anywhere, but searches for the break quadratically in the word's length (measured
here: 1 MB took 15 s, 4 MB 83 s), so the report gives long words break opportunities first.
"""

from __future__ import annotations

import re

from hypothesis import given, settings
from hypothesis import strategies as st
from pypdf import PdfReader

from fourfold.export.pdf import write_pdf
from fourfold.export.pdf.flow import clean
from fourfold.plan import load, sample_path


@settings(max_examples=200, deadline=None)
@given(st.text(st.sampled_from("ab \n\t\u00a0é🌱\u200b"), max_size=200)
       | st.sampled_from(["x" * 10_000, "a b " + "é" * 300 + "\n🌱"]))
def test_no_run_of_the_laid_out_text_is_longer_than_a_piece(text):
    laid_out = clean(text)
    runs = re.split(r"[\s\u200b]+", laid_out)
    assert max((len(run) for run in runs), default=0) <= 64
    original = text.replace("\r\n", "\n").replace("\n", "\u2028").replace("\t", " ")
    assert laid_out.replace("\u200b", "") == original.replace("\u200b", "")


def test_a_long_word_wraps_inside_the_page(tmp_path):
    plan = load(sample_path())
    word = "quillmoss" * 500  # 4,500 characters, no space
    plan.settings.description = f"Before {word} after."
    path = write_pdf(plan, tmp_path / "long.pdf")
    reader = PdfReader(path)
    text = "".join(page.extract_text() for page in reader.pages).replace("\u200b", "")
    assert "quillmossquillmossquillmoss" in text and "after." in text
    lines = reader.pages[0].extract_text().splitlines()
    assert sum("quillmoss" in line for line in lines) > 20  # wrapped over many lines
    assert max(len(line) for line in lines) < 200  # none runs off the page
