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


_WORD = (1 << 64) - 1


def _reference_hash(text: str) -> int:
    """One id's hash as :func:`hash_ids` defines it, in Python integers: splitmix64 (Steele,
    Lea & Flood 2014, the constants of its finaliser) of the UTF-8 length xor the seed, then
    of each 8-byte little-endian word of the bytes (the last one zero-padded) xor the state."""
    def mix(h: int) -> int:
        h ^= h >> 30
        h = (h * 0xBF58476D1CE4E5B9) & _WORD
        h ^= h >> 27
        h = (h * 0x94D049BB133111EB) & _WORD
        return h ^ (h >> 31)

    data = text.encode("utf-8")
    h = mix(len(data) ^ 0x9E3779B97F4A7C15)
    for j in range(0, len(data), 8):
        h = mix(h ^ int.from_bytes(data[j:j + 8], "little"))
    return h


def test_ids_of_every_length_hash_as_the_reference_says():
    ids = [("a" * n)[:-1] + "z" for n in range(1, 42)] + ["é" * n for n in range(1, 12)]
    ids += [f"synthetic-{i}" for i in (7, 70, 700, 7_000_000)]
    expected = [_reference_hash(text) for text in ids]
    assert hash_ids(pd.Series(ids), "u", str).tolist() == expected
    # A chunk whose ids share one length takes the path without masks.
    for length in (3, 8, 11, 16, 17):
        same = [text for text in ids if len(text.encode()) == length]
        assert same and hash_ids(pd.Series(same), "u", str).tolist() == [
            _reference_hash(text) for text in same]


def _first_days_so_far(frames: list[pd.DataFrame]) -> pd.Series:
    """Each key's earliest day over the chunks so far (pandas ``groupby().min()``)."""
    return pd.concat(frames).groupby("key")["day"].min()


def test_locate_gives_each_rows_days_since_its_units_first_day():
    rng = np.random.default_rng(8)
    table = UnitTable(limit=1 << 16)
    frames = []
    for chunk in range(24):
        keys = mix64(rng.integers(1, 2_000, 600).astype(np.uint64))
        if chunk < 12:  # in time order: each chunk's days come after the last chunk's
            days = 3 * chunk + rng.integers(0, 3, keys.size)
        else:  # then rows from before their units' first days, within and across chunks
            days = rng.integers(-20, 40, keys.size)
        index, since = table.locate(keys, days)
        frames.append(pd.DataFrame({"key": keys, "day": days}))
        first = _first_days_so_far(frames)
        assert since.tolist() == (days - first.loc[keys].to_numpy()).tolist()
        assert table.first_days(index).tolist() == first.loc[keys].tolist()
        assert table.out_of_order == (chunk >= 12)
    # Without adding, unknown keys get no unit and no days.
    unknown = mix64(np.array([10**9, 10**9 + 1], np.uint64))
    keys = np.concatenate([unknown, frames[0]["key"].to_numpy()[:3]])
    index, since = table.locate(keys, np.full(keys.size, 45), add=False)
    assert index[:2].tolist() == [-1, -1] and since[:2].tolist() == [0, 0]
    assert since[2:].tolist() == (45 - _first_days_so_far(frames).loc[keys[2:]]).tolist()


def test_locate_follows_the_sampled_units_from_their_first_row():
    rng = np.random.default_rng(9)
    table = UnitTable(limit=1_000)
    frames = []
    for chunk in range(20):
        keys = mix64(rng.integers(1, 8_000, 500).astype(np.uint64))
        days = chunk + rng.integers(0, 2, keys.size)
        index, since = table.locate(keys, days, on_full=table.raise_level)
        frames.append(pd.DataFrame({"key": keys, "day": days}))
        held = index >= 0
        assert (held == table.sampled(keys)).all() and not since[~held].any()
        first = _first_days_so_far(frames).loc[keys[held]].to_numpy()
        assert since[held].tolist() == (days[held] - first).tolist()
    assert table.level >= 2 and table.size <= table.limit
