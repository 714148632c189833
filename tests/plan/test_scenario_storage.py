"""Plan files with scenarios: schema version 2 only when there are scenarios, version-1 files
open unchanged, scenario values checked like base values, stale changes kept and reported
(Fourfold's own format; no outside source beyond the JSON standard, RFC 8259)."""

import dataclasses
import json

import pytest

from fourfold.plan import PlanError, compute, dumps, load, loads, sample_path, save
from fourfold.plan import scenarios as sc
from fourfold.plan.model import Metric, Plan, Scenario, Settings


def _plan() -> Plan:
    return Plan(
        Settings(arms=2, share=0.6),
        [Metric(name="Conversion", role="primary", id="conv"),
         Metric(name="Basket", kind="mean", baseline=40.0, sd=12.0, method="t", id="b-2")],
        [Scenario("One arm", settings={"arms": 1, "correction": "sidak"},
                  rows={"b-2": {"method": "z", "sd": 9.5, "effect": None}}),
         Scenario("Only conversion", omitted=["b-2"])],
        active="Only conversion",
    )


def test_a_plan_with_scenarios_round_trips_with_ids_scenarios_and_active(tmp_path):
    plan = _plan()
    path = tmp_path / "plan.json"
    save(plan, path)
    again = load(path)
    assert dataclasses.asdict(again) == dataclasses.asdict(plan)  # ids included
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["schema_version"] == 2
    assert [row["id"] for row in data["metrics"]] == ["conv", "b-2"]
    assert list(data["metrics"][0])[0] == "id"
    assert data["active"] == "Only conversion"
    assert data["scenarios"][0] == {"name": "One arm",
                                    "settings": {"arms": 1, "correction": "sidak"},
                                    "rows": {"b-2": {"method": "z", "sd": 9.5, "effect": None}},
                                    "omitted": []}


def test_a_plan_without_scenarios_is_written_as_version_1_without_ids():
    plan = _plan()
    plan.scenarios, plan.active = [], None
    data = json.loads(dumps(plan))
    assert data["schema_version"] == 1
    assert "scenarios" not in data and "active" not in data
    assert all("id" not in row for row in data["metrics"])


def test_a_version_1_file_opens_unchanged_and_its_rows_get_distinct_ids():
    text = json.dumps({"format": "fourfold-plan", "schema_version": 1,
                       "settings": {"arms": 2},
                       "metrics": [{"name": "A", "kind": "proportion", "baseline": 0.1},
                                   {"name": "B", "kind": "proportion", "baseline": 0.2}]})
    plan = loads(text)
    assert plan.scenarios == [] and plan.active is None
    assert [m.name for m in plan.metrics] == ["A", "B"] and plan.settings.arms == 2
    assert len({m.id for m in plan.metrics}) == 2 and all(m.id for m in plan.metrics)
    assert json.loads(dumps(plan)) == json.loads(dumps(loads(dumps(plan))))


def test_the_version_1_sample_of_an_older_fourfold_still_evaluates_as_before():
    current = load(sample_path())
    data = json.loads(dumps(current))
    old = {key: data[key] for key in ("format", "settings", "metrics")}
    old["schema_version"] = 1
    for row in old["metrics"]:
        del row["id"]
    from fourfold.plan import compute

    assert compute(loads(json.dumps(old))) == compute(current)


def test_version_1_files_may_not_carry_ids_or_scenarios():
    for extra in ({"scenarios": []}, {"active": None}):
        with pytest.raises(PlanError, match="unknown field"):
            loads(json.dumps({"format": "fourfold-plan", "schema_version": 1, **extra}))
    with pytest.raises(PlanError, match=r"metrics\[0\]\.id"):
        loads(json.dumps({"format": "fourfold-plan", "schema_version": 1, "metrics": [
            {"id": "a", "name": "A", "kind": "proportion", "baseline": 0.1}]}))


def _v2(**changes) -> str:
    data = json.loads(dumps(_plan()))
    for path, value in changes.items():
        target = data
        *parents, last = path.split("/")
        for part in parents:
            target = target[int(part) if part.isdigit() else part]
        if value is KeyError:
            del target[last]
        else:
            target[last] = value
    return json.dumps(data)


@pytest.mark.parametrize(("changes", "place"), [
    ({"metrics/0/id": KeyError}, r"metrics\[0\]\.id: missing"),
    ({"metrics/1/id": "conv"}, r"metrics\[1\]\.id: 'conv' is the id of another row"),
    ({"metrics/1/id": "has space"}, r"metrics\[1\]\.id: a row id must be"),
    ({"scenarios": {}}, "scenarios must be a JSON list"),
    ({"scenarios/0/name": "base"}, r"scenarios\[0\]\.name"),
    ({"scenarios/1/name": "ONE ARM"}, r"scenarios\[1\]\.name: .*exists already"),
    ({"scenarios/0/settings/arms": 0}, r"scenarios\[0\]\.settings\.arms: arms must be"),
    ({"scenarios/0/rows/b-2/sd": -1}, r"scenarios\[0\]\.rows\.b-2\.sd: sd must satisfy"),
    ({"scenarios/0/rows/b-2/method": "ranked"}, r"scenarios\[0\]\.rows\.b-2\.method"),
    ({"scenarios/0/rows": []}, r"scenarios\[0\]\.rows must be a JSON object"),
    ({"scenarios/0/omitted": ["a", "a"]}, "names a row twice"),
    ({"scenarios/0/colour": 1}, r"scenarios\[0\]\.colour: unknown field"),
    ({"active": "Nope"}, "active: the plan has no scenario called 'Nope'"),
])
def test_a_bad_version_2_file_is_refused_naming_the_place(changes, place):
    with pytest.raises(PlanError, match=place):
        loads(_v2(**changes))


def test_changes_to_missing_rows_and_unknown_fields_are_kept_and_reported_not_dropped():
    text = _v2(**{"scenarios/0/rows/gone": {"effect": 0.2},
                  "scenarios/0/rows/b-2/sparkle": True,
                  "scenarios/0/settings/colour": "green",
                  "scenarios/1/omitted": ["b-2", "lost"]})
    plan = loads(text)
    problems = sc.problems(plan)
    assert len(problems) == 4
    assert all(p.startswith("Scenario 'One arm'") for p in problems[:3])
    assert "row gone, which is no longer in the plan" in " ".join(problems)
    assert "'sparkle'" in " ".join(problems) and "'colour'" in " ".join(problems)
    assert "leaves out row lost" in problems[3]
    assert json.loads(dumps(plan)) == json.loads(text)  # saved again as they were


def test_the_sample_plan_ships_four_scenarios_that_change_its_duration():
    from fourfold.plan import compare

    plan = load(sample_path())
    assert len(plan.scenarios) == 4 and plan.active is None
    assert sc.problems(plan) == ()
    table = compare(plan)
    assert list(table["status"]) == ["complete"] * 5
    base, *shorter, returning = table["duration_days"]
    assert all(days < base for days in shorter)
    # Returning visitors: over the visitors' own window conversion is higher than per visit,
    # and the test shorter; on the rows' per-visit figures, fewer distinct visitors than
    # days × daily visitors make it longer than the base.
    assert returning < base
    shown = sc.effective(plan, "Returning visitors, ramp-up to all traffic")
    per_visit = [dataclasses.replace(metric, windowed=False) for metric in shown.metrics]
    assert compute(Plan(shown.settings, per_visit)).duration_days > base
