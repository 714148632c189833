"""Plan files: round trip, strict reading, atomic saving (Fourfold's own format; no outside
source beyond the JSON standard, RFC 8259)."""

import dataclasses
import json
import os

import pytest
from stored_checks import STORED_CHECK

from fourfold.plan import (
    METRIC_FIELDS,
    SETTINGS_FIELDS,
    Metric,
    Plan,
    PlanError,
    Scenario,
    Settings,
    dumps,
    load,
    loads,
    sample_path,
    save,
    storage,
)


def _full_plan() -> Plan:
    """A plan where every field differs from its default, so a dropped field shows."""
    settings = Settings(
        title="Seed-packet test", description="Invented.\nTwo lines.", alpha=0.01, power=0.9,
        arms=3, ratio=1.5, allocation="sqrt-k", correction="sidak", daily_units=1234.5,
        share=0.25, whole_weeks=False, runtime_days=21.0, looks=3, spending="hsd",
        futility=True, traffic="reach", reach=((1, 900.0), (2, 1500.0)), reach_source="typed",
        ramp=((2, 0.1),), burn_in=1,
    )
    metric = Metric(
        name="Basket value", role="guardrail", kind="mean", method="t", baseline=41.5, sd=12.25,
        unit="$", better="lower", denominator=0.034, numerator_sd=0.61, denominator_sd=0.19,
        correlation=0.8, quantile_level=0.95, density=0.09, second_level=0.5, second_value=1.7,
        effect=-0.5, relative=False, alternative="less", margin=0.75, alpha=0.02, power=0.85,
        rho=0.4, cluster_size=3.5, icc=0.01, cluster_cv=0.6, solve="power", n=9000.0,
        notes="ünïcode “quotes” and\nnewlines", simulation=dict(STORED_CHECK),
        windowed=True, windows=({"days": 7, "baseline": 40.0, "sd": 11.5},),
    )
    return Plan(settings, [metric, Metric()])


def _document(**changes) -> dict:
    data = json.loads(dumps(_full_plan()))
    data.update(changes)
    return data


def test_full_plan_differs_from_defaults_in_every_field():
    plan = _full_plan()
    for name in SETTINGS_FIELDS:
        assert getattr(plan.settings, name) != getattr(Settings(), name), name
    for name in METRIC_FIELDS:
        assert getattr(plan.metrics[0], name) != getattr(Metric(), name), name


def test_round_trip_keeps_every_field(tmp_path):
    plan = _full_plan()
    path = tmp_path / "plan.json"
    save(plan, path)
    again = load(path)
    assert again == plan
    assert _fields(again) == _fields(plan)
    assert loads(dumps(plan)) == plan


def _fields(plan: Plan) -> dict:
    """Every field of the plan but the rows' ids (a file without scenarios has none)."""
    data = dataclasses.asdict(plan)
    for row in data["metrics"]:
        del row["id"]
    return data


def test_file_header_and_all_fields_written():
    data = json.loads(dumps(_full_plan()))
    assert data["format"] == "fourfold-plan"
    assert data["schema_version"] == storage.SCHEMA_VERSION == storage.TRAFFIC_VERSION == 4
    assert list(data["settings"]) == list(SETTINGS_FIELDS)
    assert list(data["metrics"][0]) == ["id", *METRIC_FIELDS]


def test_a_plan_without_what_version_3_added_is_written_as_before():
    # What an older Fourfold reads: version 1, none of the version-3 fields.
    plan = _without_traffic(_full_plan())
    plan.settings.allocation = "fixed"
    plan.metrics[0] = dataclasses.replace(
        plan.metrics[0], unit="", better="higher", denominator=None, numerator_sd=None,
        denominator_sd=None, correlation=None, quantile_level=None, density=None,
        second_level=None, second_value=None)
    data = json.loads(dumps(plan))
    assert data["schema_version"] == storage.PLAIN_VERSION == 1
    assert not set(storage.KINDS_METRIC_FIELDS) & set(data["metrics"][0])
    assert "allocation" not in data["settings"]
    assert loads(dumps(plan)) == plan
    plan.settings.correction = "dunnett"  # Dunnett alone needs version 3
    assert json.loads(dumps(plan))["schema_version"] == 3


def _without_traffic(plan: Plan) -> Plan:
    """``plan`` without anything version 4 added."""
    plan.settings = dataclasses.replace(plan.settings, **{
        name: getattr(Settings(), name) for name in storage.TRAFFIC_SETTINGS_FIELDS})
    plan.metrics = [dataclasses.replace(metric, windowed=False, windows=())
                    for metric in plan.metrics]
    return plan


def test_a_plan_without_what_version_4_added_is_written_as_before():
    plan = _without_traffic(_full_plan())
    data = json.loads(dumps(plan))
    assert data["schema_version"] == storage.KINDS_VERSION == 3
    assert not set(storage.TRAFFIC_METRIC_FIELDS) & set(data["metrics"][0])
    assert not set(storage.TRAFFIC_SETTINGS_FIELDS) & set(data["settings"])
    assert loads(dumps(plan)) == plan
    for changed in ({"burn_in": 2}, {"ramp": ((3, 0.5),)}, {"traffic": "reach"}):
        moved = dataclasses.replace(plan.settings, **changed)
        assert json.loads(dumps(Plan(moved, plan.metrics)))["schema_version"] == 4, changed
    windowed = [dataclasses.replace(plan.metrics[0], windowed=True), *plan.metrics[1:]]
    assert json.loads(dumps(Plan(plan.settings, windowed)))["schema_version"] == 4


def test_a_scenario_that_changes_the_traffic_needs_version_4():
    plan = _without_traffic(_full_plan())
    plan.scenarios.append(Scenario("Returning visitors", settings={"traffic": "reach"}))
    data = json.loads(dumps(plan))
    assert data["schema_version"] == 4 and data["settings"]["traffic"] == "constant"
    assert loads(dumps(plan)) == plan


def test_missing_optional_fields_take_defaults():
    plan = loads(json.dumps({
        "format": "fourfold-plan", "schema_version": 1,
        "metrics": [{"name": "Conversion", "kind": "proportion", "baseline": 0.05}],
    }))
    assert plan.settings == Settings()
    assert plan.metrics == [Metric(name="Conversion", baseline=0.05)]


@pytest.mark.parametrize(
    ("text", "named"),
    [
        ("{not json", "line 1, column 2"),
        ("[1, 2]", "plan must be a JSON object"),
        (json.dumps({"schema_version": 1}), "format"),
        (json.dumps({"format": "some-other-tool", "schema_version": 1}), "format"),
        (json.dumps({"format": "fourfold-plan"}), "schema_version"),
        (json.dumps({"format": "fourfold-plan", "schema_version": "1"}), "schema_version"),
        (json.dumps({"format": "fourfold-plan", "schema_version": 5}), "newer"),
        (json.dumps({"format": "fourfold-plan", "schema_version": 1, "extra": 1}), "extra"),
        (json.dumps({"format": "fourfold-plan", "schema_version": 1, "metrics": {}}),
         "metrics must be a JSON list"),
        (json.dumps({"format": "fourfold-plan", "schema_version": 1, "settings": []}),
         "settings must be a JSON object"),
    ],
)
def test_malformed_or_foreign_text_is_rejected(text, named):
    with pytest.raises(PlanError, match=named):
        loads(text)


@pytest.mark.parametrize(
    ("where", "key", "value", "place"),
    [
        ("settings", "alpha", 0.7, "settings.alpha"),
        ("settings", "arms", "two", "settings.arms"),
        ("settings", "colour", "green", "settings.colour"),
        ("metric", "power", 1.5, "metrics[1].power"),
        ("metric", "kind", "share", "metrics[1].kind"),
        ("metric", "better", "up", "metrics[1].better"),
        ("metric", "correlation", 1.5, "metrics[1].correlation"),
        ("metric", "unit", "m\ns", "metrics[1].unit"),
        ("settings", "allocation", "square-root", "settings.allocation"),
        ("metric", "method", "t", "metrics[1].method"),
        ("metric", "relative", "yes", "metrics[1].relative"),
        ("metric", "sd", -1, "metrics[1].sd"),
        ("metric", "typo", 1, "metrics[1].typo"),
    ],
)
def test_bad_field_is_named_by_its_place(where, key, value, place):
    data = _document()
    target = data["settings"] if where == "settings" else data["metrics"][1]
    target[key] = value
    with pytest.raises(PlanError) as caught:
        loads(json.dumps(data))
    assert caught.value.field == place
    assert str(caught.value).startswith(place)


@pytest.mark.parametrize("key", ["name", "kind", "baseline"])
def test_required_metric_field_missing(key):
    data = _document()
    del data["metrics"][0][key]
    with pytest.raises(PlanError, match=rf"metrics\[0\]\.{key}: missing"):
        loads(json.dumps(data))


def test_load_names_the_file(tmp_path):
    path = tmp_path / "broken.json"
    path.write_text('{"format": "fourfold-plan", "schema_version": 9}', encoding="utf-8")
    with pytest.raises(PlanError, match=r"^broken\.json: schema_version 9 is newer"):
        load(path)
    with pytest.raises(PlanError, match="cannot read"):
        load(tmp_path / "absent.json")


def _old_file(tmp_path):
    path = tmp_path / "plan.json"
    save(Plan.empty(), path)
    os.chmod(path, 0o640)
    return path, path.read_bytes()


def test_failed_replace_keeps_the_old_file(tmp_path, monkeypatch):
    path, before = _old_file(tmp_path)

    def refuse(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(storage.os, "replace", refuse)
    with pytest.raises(PlanError, match="disk full"):
        save(_full_plan(), path)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json"]


def test_failed_serialisation_keeps_the_old_file(tmp_path, monkeypatch):
    path, before = _old_file(tmp_path)

    def explode(plan):
        raise ValueError("cannot serialise")

    monkeypatch.setattr(storage, "dumps", explode)
    with pytest.raises(PlanError, match="cannot serialise"):
        save(_full_plan(), path)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plan.json"]


def test_save_replaces_and_keeps_permissions(tmp_path):
    path, before = _old_file(tmp_path)
    save(_full_plan(), path)
    assert path.read_bytes() != before
    assert load(path) == _full_plan()
    assert os.stat(path).st_mode & 0o777 == 0o640


def test_save_into_missing_folder_is_a_plan_error(tmp_path):
    with pytest.raises(PlanError, match="cannot save"):
        save(Plan.empty(), tmp_path / "no-such-folder" / "plan.json")


def test_sample_plan_loads_and_is_the_invented_scenario():
    path = sample_path()
    assert path.is_file()
    plan = load(path)
    assert "Quillmoss" in plan.settings.title
    assert plan.settings.arms == 2 and plan.settings.daily_units == 42_000
    assert plan.settings.share == 0.6 and plan.settings.whole_weeks
    roles = [metric.role for metric in plan.metrics]
    assert roles.count("primary") == 1 and roles.count("guardrail") == 3 and len(roles) == 7
    assert {"mean", "proportion", "rate", "ratio", "quantile"} == {m.kind for m in plan.metrics}
    assert path.read_text(encoding="utf-8") == dumps(plan)


def test_save_through_a_symlink_keeps_the_link(tmp_path):
    target = tmp_path / "real.json"
    save(Plan.empty(), target)
    link = tmp_path / "link.json"
    link.symlink_to(target)
    save(_full_plan(), link)
    assert link.is_symlink() and load(target) == _full_plan()


def test_load_accepts_a_byte_order_mark(tmp_path):
    path = tmp_path / "bom.json"
    path.write_text(dumps(_full_plan()), encoding="utf-8-sig")
    assert load(path) == _full_plan()
