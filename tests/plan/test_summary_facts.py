"""The summary's facts of every row read column by column are those read row by row.

:class:`fourfold.plan.summary.RowFacts` reads a plan's rows as columns when it is made (a new
plan or new settings: every row) and row by row where a row cache names rows that changed
(:meth:`~fourfold.plan.summary.RowFacts.reread`). The reference is the row-by-row read of every
row (a consistency check, no outside source).
"""

import dataclasses

import numpy as np
import pytest
from test_duration_powers_rows import _varied

from fourfold.plan import Metric, Plan, compute, load, sample_path
from fourfold.plan.summary import RowFacts


def _texts(texts) -> dict:
    return dict(sorted(texts.texts.items()))


@pytest.mark.parametrize("looks", [1, 3])
def test_facts_read_as_columns_are_the_facts_read_row_by_row(looks):
    tail = Metric(name="Load p99.9", kind="quantile", baseline=2.0, quantile_level=0.999,
                  density=0.5, effect=0.5, relative=False, role="secondary", solve="power",
                  n=2000.0)
    rows = [*_varied(), tail, dataclasses.replace(tail, name="Odd role", role="observer")]
    plan = Plan(dataclasses.replace(load(sample_path()).settings, looks=looks), rows)
    result = compute(plan).rows
    columns = RowFacts(plan.metrics, result)
    one_by_one = RowFacts([], [])
    for name in ("role", "asks_units", "failed", "sample", "days", "units"):
        setattr(one_by_one, name, np.zeros_like(getattr(columns, name)))
    one_by_one.reread(plan.metrics, result, range(len(result)))
    assert columns.failed.any() and (columns.role == -1).any() and columns.tails.texts
    for name in ("role", "asks_units", "failed", "sample", "days", "units"):
        np.testing.assert_array_equal(getattr(columns, name), getattr(one_by_one, name),
                                      err_msg=name)
    for name in ("tails", "failures", "unfinished", "gaps"):
        assert _texts(getattr(columns, name)) == _texts(getattr(one_by_one, name)), name
