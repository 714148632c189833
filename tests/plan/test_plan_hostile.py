"""Hostile plan files: every one is refused with a one-line message naming the field, through
``fourfold export`` (exit status 2, nothing written) and ``load`` — never a traceback.

The JSON rules are RFC 8259's (a name should be unique within an object; numbers beyond the
implementation's range) read strictly; the limits of Python's reader (4,300-digit integers,
recursion depth) are CPython 3.11 facts (``sys.int_info``, the recursion limit).
"""

from __future__ import annotations

import json

import pytest
from stored_checks import STORED_CHECK

from fourfold import cli
from fourfold.plan import PlanError, load, loads, sample_path


def _sample() -> dict:
    return json.loads(sample_path().read_text(encoding="utf-8"))


def _text_with(replace: str, by: str) -> str:
    text = json.dumps(_sample())
    assert replace in text
    return text.replace(replace, by, 1)


def _with(change) -> str:
    data = _sample()
    change(data)
    return json.dumps(data)


def _metric(**fields):
    return _with(lambda data: data["metrics"][0].update(fields))


def _check(**changes):
    record = {k: v for k, v in STORED_CHECK.items() if k not in changes}
    record.update({k: v for k, v in changes.items() if v is not None})
    return _metric(simulation=record)


DEEP = "[" * 50_000 + "]" * 50_000

HOSTILE = {
    "integer above 1e308": (_text_with('"baseline": 0.031', '"baseline": 1' + "0" * 400),
                            "metrics[0].baseline", "finite number"),
    "float above 1e308": (_text_with('"baseline": 0.031', '"baseline": 1e400'),
                          "metrics[0].baseline", "finite number"),
    "4,401-digit integer": (_text_with('"daily_units": 42000', '"daily_units": 1' + "0" * 4400),
                            "settings.daily_units", "finite number"),
    "351-digit arms": (_text_with('"arms": 2', '"arms": ' + "9" * 351),
                       "settings.arms", "a whole number of 351 digits"),
    "deep nesting": ("[" * 100_000, "", "nested too deeply"),
    "deep nesting in a field": (_text_with('"title": "', f'"junk": {DEEP}, "title": "'),
                                "", "nested too deeply"),
    "duplicate key": (json.dumps(_sample())[:-1] + ', "metrics": []}', "",
                      "'metrics' appears twice"),
    "duplicate key in a row": (_text_with('"role": "primary"',
                                          '"role": "primary", "role": "secondary"'),
                               "", "'role' appears twice"),
    "unpaired surrogate in a name": (_text_with('"name": "Checkout conversion"',
                                                '"name": "Checkout \\ud800conversion"'),
                                     "metrics[0].name", "unpaired surrogate"),
    "unpaired surrogate in the description": (_with(lambda d: d["settings"].update(
        description="A\udc00B")), "settings.description", "unpaired surrogate"),
    "foreign simulation object": (_metric(simulation={"foo": 1}), "metrics[0].simulation",
                                  "unknown field 'foo'"),
    "simulation without its power": (_check(analytic_power=None), "metrics[0].simulation",
                                     "analytic_power: missing"),
    "simulation with text for a number": (_check(low="low"), "metrics[0].simulation",
                                          "low: must be a number"),
    "simulation with a power of 3": (_check(power=3), "metrics[0].simulation",
                                     "between 0 and 1"),
    "a long list as a number": (_with(lambda d: d["settings"].update(alpha=[0] * 300_000)),
                                "settings.alpha", "a list of 300,000 items"),
}


@pytest.mark.parametrize("name", list(HOSTILE))
def test_a_hostile_plan_is_refused_by_export_with_one_line(tmp_path, capsys, name):
    text, field, words = HOSTILE[name]
    path = tmp_path / "hostile.json"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    for output in ("out.csv", "out.pdf"):
        code = cli.main(["export", str(path), "-o", str(tmp_path / output)])
        out, err = capsys.readouterr()
        assert code == 2 and out == ""
        assert err.startswith("fourfold: error: hostile.json: ") and err.count("\n") == 1, err
        assert field in err and words in err and len(err) < 400, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["hostile.json"]


def test_an_unpaired_surrogate_escape_is_refused_by_loads():
    with pytest.raises(PlanError, match=r"metrics\[0\]\.notes: notes holds an unpaired "
                                        r"surrogate \(\\udfff\) at character 1"):
        loads(_text_with('"notes": "Share', '"notes": "\\udfffShare'))


def test_a_valid_surrogate_pair_is_text_and_survives_save_and_export(tmp_path, capsys):
    path = tmp_path / "emoji.json"
    path.write_text(_text_with('"name": "Checkout conversion"',
                               '"name": "Checkout \\ud83c\\udf31 conversion"'), encoding="utf-8")
    assert load(path).metrics[0].name == "Checkout 🌱 conversion"
    assert cli.main(["export", str(path), "-o", str(tmp_path / "out.csv")]) == 0
    assert "🌱" in (tmp_path / "out.csv").read_text(encoding="utf-8-sig")

