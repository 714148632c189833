"""Hostile plan files, generated: the sample plan with fields replaced by any JSON value a file
can hold (numbers past a double or with hundreds of digits, unpaired surrogates, nesting,
lists and objects where numbers belong), keys dropped, added or repeated, and the text cut
short. The only outcomes allowed: a plan that saves, reloads to itself, evaluates without a
warning and exports its CSV text — or a one-line :class:`PlanError`.
"""

from __future__ import annotations

import json
import warnings

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from stored_checks import STORED_CHECK

from fourfold.export.csv import write_csv
from fourfold.plan import PlanError, compute, dumps, loads, sample_path
from fourfold.plan.fields import METRIC_FIELDS, SETTINGS_FIELDS

SAMPLE = json.loads(sample_path().read_text(encoding="utf-8"))
FUZZ = settings(deadline=5000, suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.data_too_large,
                                                      HealthCheck.function_scoped_fixture])

numbers = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False),
    st.integers(-10**6, 10**6),
    st.integers(0, 400).map(lambda digits: 10**digits + 1),
    st.sampled_from([1e-320, 5e-324, 1e308, -1e308, 0.0, -0.0, 2.0**53 + 1]),
)
texts = st.one_of(st.text(max_size=30),
                  st.sampled_from(["\ud800", "a\udfffb", "=1+1", "＝1+1", "x" * 300, ""]))
leaves = st.one_of(st.none(), st.booleans(), numbers, texts)
values = st.recursive(leaves, lambda inner: st.one_of(
    st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=5), inner, max_size=3)),
    max_leaves=6)


def _text_of(data) -> str:
    return json.dumps(data, ensure_ascii=True)  # lone surrogates travel as \\udXXX escapes


@st.composite
def hostile_plans(draw) -> str:
    data = json.loads(json.dumps(SAMPLE))
    for _ in range(draw(st.integers(1, 4))):
        where = draw(st.sampled_from(["settings", "metric", "top", "simulation"]))
        settings_ = data.get("settings")
        rows = [row for row in data.get("metrics") or [] if isinstance(row, dict)] \
            if isinstance(data.get("metrics"), list) else []
        if where == "settings" and isinstance(settings_, dict):
            settings_[draw(st.sampled_from(SETTINGS_FIELDS))] = draw(values)
        elif where == "metric" and rows:
            draw(st.sampled_from(rows))[draw(st.sampled_from(METRIC_FIELDS))] = draw(values)
        elif where == "simulation" and rows:
            check = dict(STORED_CHECK)
            check[draw(st.sampled_from(sorted(check) + ["extra"]))] = draw(values)
            rows[0]["simulation"] = check
        else:
            key = draw(st.sampled_from(["format", "schema_version", "settings", "metrics",
                                        "extra"]))
            if draw(st.booleans()):
                data.pop(key, None)
            else:
                data[key] = draw(values)
    text = _text_of(data)
    damage = draw(st.sampled_from(["none", "cut", "duplicate", "nest", "bytes"]))
    if damage == "cut":
        text = text[: draw(st.integers(0, len(text)))]
    elif damage == "duplicate":
        text = text[:-1] + ', "metrics": []}'
    elif damage == "nest":
        depth = draw(st.integers(1, 3000))
        text = text.replace('"title": ', '"title": ' + "[" * depth, 1) + "]" * depth
    elif damage == "bytes":
        at = draw(st.integers(0, len(text)))
        text = text[:at] + draw(st.text(max_size=5)) + text[at:]
    return text


@FUZZ
@given(hostile_plans())
def test_a_hostile_plan_loads_completely_or_is_refused_in_one_line(tmp_path_factory, text):
    try:
        plan = loads(text)
    except PlanError as error:
        message = str(error)
        assert message and "\n" not in message and len(message) < 600, message
        return
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        again = loads(dumps(plan))
        assert again == plan
        compute(plan)
        write_csv(plan, tmp_path_factory.mktemp("csv") / "plan.csv")
