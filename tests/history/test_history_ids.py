"""The distinct-unit machinery: the numpy hash table against a Python dict, the hashed sample,
and HyperLogLog against exactly known counts within its stated error (Flajolet, Fusy, Gandouet
& Meunier 2007: relative standard error 1.04/√m)."""

import numpy as np
import pandas as pd
import pytest

from fourfold.history import HistoryError
from fourfold.history.hll import DailySketch, ranks, relative_error
from fourfold.history.ids import UnitTable, hash_ids, mix64


def test_the_table_agrees_with_a_dict_through_growth_and_disorder():
    rng = np.random.default_rng(3)
    table = UnitTable(limit=1 << 20)
    expected: dict[int, list[int]] = {}
    for _ in range(40):
        keys = mix64(rng.integers(1, 60_000, 5_000).astype(np.uint64))
        days = rng.integers(0, 100, 5_000)
        index = table.index(keys, days)
        for key, i, day in zip(keys.tolist(), index.tolist(), days.tolist(), strict=True):
            if key in expected:
                assert expected[key][0] == i
                expected[key][1] = min(expected[key][1], day)
            else:
                expected[key] = [i, day]
    assert table.size == len(expected)
    first = table.first_days()
    assert all(first[i] == day for i, day in expected.values())
    assert table.out_of_order
    assert table.index(mix64(np.array([10**9], np.uint64)), np.array([0]), add=False)[0] == -1


def test_past_the_limit_a_hashed_sample_is_kept():
    keys = mix64(np.arange(1, 50_001, dtype=np.uint64))
    table = UnitTable(limit=10_000)
    with pytest.raises(HistoryError, match="more than 10,000 distinct units"):
        table.index(keys, np.zeros(keys.size, np.int64))
    table = UnitTable(limit=10_000)
    table.index(keys, np.zeros(keys.size, np.int64), on_full=table.raise_level)
    assert table.level == 3 and table.size <= 10_000
    kept = set(table.keys().tolist())
    assert kept == set(keys[table.sampled(keys)].tolist())
    # About one in eight, as the level says (binomial spread, common practice, no source).
    assert abs(table.size - keys.size / 8) < 5 * np.sqrt(keys.size / 8)


def test_ids_hash_by_their_text():
    ids = pd.Series(["a", "ab", "a", "ä", "a" * 40, "a" * 41, "17"])
    h = hash_ids(ids, "u", str)
    assert h[0] == h[2] and len(set(h.tolist())) == 6
    assert hash_ids(pd.Series([17]), "u", str)[0] == h[6]
    assert hash_ids(pd.Series([17.0, None]).iloc[:1], "u", str)[0] == h[6]


def test_ranks_count_leading_zeros():
    keys = mix64(np.arange(1, 2_000, dtype=np.uint64))
    register, rank = ranks(keys, 14)
    for key, reg, r in zip(keys.tolist(), register.tolist(), rank.tolist(), strict=True):
        rest = (key << 14) & (2**64 - 1)
        zeros = 64 - rest.bit_length() if rest else 64
        assert (reg, r) == (key >> 50, min(zeros, 50) + 1)


@pytest.mark.parametrize("count", [50, 2_000, 30_000, 400_000])
def test_hyperloglog_is_within_its_stated_error(count):
    sketch = DailySketch()
    keys = mix64(np.arange(1, count + 1, dtype=np.uint64) + np.uint64(count << 20))
    days = np.arange(count) % 3
    sketch.add(days, keys)
    sketch.add(days[: count // 2], keys[: count // 2])  # returning units do not count twice
    truth = np.array([(days <= d).sum() for d in range(3)])
    estimate = sketch.reach(0, 3)
    assert np.all(np.abs(estimate / truth - 1) < 4 * relative_error(14))
    assert np.all(np.diff(estimate) >= 0)
