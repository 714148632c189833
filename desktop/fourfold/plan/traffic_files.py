"""Reach curves and history windows from files: a history import's JSON, or a typed table.

``fourfold history DATA --unit COL --time COL … --json`` (a file, DuckDB or a warehouse's
``--query-result``; :meth:`fourfold.history.HistorySummary.to_dict`) writes the reach curve as
``"reach": [{"day": 1, "units": N1}, …]`` beside each metric's figures over each unit's first
days (``"windows": [{"days": 7, "units": …, "n": …, "mean": …, "sd": …, "rho": …}, …]``, a
ratio's inputs too; a window without figures has a ``"problem"`` instead).
:func:`read_reach` takes the curve from such a file (:func:`history_reach` from the parsed
object), or from a table of two columns — day and distinct units — as a spreadsheet writes it
(comma, semicolon or tab separated, an optional header); :func:`history_windows` turns a
metric's windows into a row's :attr:`fourfold.plan.Metric.windows`. The traffic dialog's
*Load file…* and the history import dialog (which reads the same object from its result) go
through these functions, so the JSON is the one format between history and plan. No Qt.

Examples
--------
>>> parse_reach("day,units\\n1,1200\\n2,1900\\n7,4100\\n", "typed.csv")
((1, 1200.0), (2, 1900.0), (7, 4100.0))
>>> parse_reach('{"reach": [{"day": 1, "units": 5}, {"day": 2, "units": 8}]}', "h.json")
((1, 5.0), (2, 8.0))
"""

from __future__ import annotations

import json
import os
import pathlib
import re
from typing import Any

from fourfold.plan.fields import PlanError, validate_field

MAX_BYTES = 16 << 20
"""The largest curve file read (a curve is at most 3,650 days)."""

DERIVED = ("proportion", "ratio")
"""Plan kinds whose sd follows from other inputs (a window gives none)."""
_PARTS = ("denominator", "numerator_sd", "denominator_sd", "correlation")


def _checked(pairs: list, source: str) -> tuple[tuple[float, float], ...]:
    try:
        return validate_field("reach", pairs, settings=True)
    except PlanError as error:
        raise PlanError(f"{source}: {error}", "reach") from None


def parse_reach(text: str, source: str) -> tuple[tuple[float, float], ...]:
    """The reach curve in ``text``: a history import's JSON, or a day/units table.

    Raises
    ------
    PlanError
        Naming ``source`` and what is wrong (no curve, a line that is not two numbers, days
        that do not increase, units that fall).
    """
    stripped = text.lstrip("\ufeff").strip()
    if stripped.startswith("{"):
        try:
            data = json.loads(stripped)
        except json.JSONDecodeError as error:
            raise PlanError(f"{source}: not valid JSON ({error.msg}, line {error.lineno})",
                            "reach") from None
        return history_reach(data, source)
    pairs = []
    for number, line in enumerate(stripped.splitlines(), start=1):
        cells = [cell.strip() for cell in re.split(r"[,;\t]", line) if cell.strip()]
        if not cells:
            continue
        try:
            values = [float(cell.replace("_", "").replace(" ", "")) for cell in cells]
        except ValueError:
            if number == 1 and not pairs:
                continue  # a header
            raise PlanError(f"{source}, line {number}: expected a day and its distinct units, "
                            f"got {line.strip()!r}", "reach") from None
        if len(values) != 2:
            raise PlanError(f"{source}, line {number}: expected two numbers (day, units), got "
                            f"{len(values)}", "reach")
        pairs.append(values)
    if not pairs:
        raise PlanError(f"{source}: no days in it (one line per day: day, distinct units)",
                        "reach")
    return _checked(pairs, source)


def history_reach(data: Any, source: str) -> tuple[tuple[float, float], ...]:
    """The reach curve of a history import's JSON (parsed): its ``"reach"`` list of
    ``{"day": d, "units": N}``, as the plan's ``reach`` pairs; PlanError naming ``source``.

    Examples
    --------
    >>> history_reach({"reach": [{"day": 1, "units": 5}, {"day": 2, "units": 8}]}, "h.json")
    ((1, 5.0), (2, 8.0))
    """
    reach = data.get("reach") if isinstance(data, dict) else None
    if not isinstance(reach, list) or not reach:
        raise PlanError(f"{source}: no reach curve in it (a history import with unit and "
                        "time columns writes one: fourfold history DATA --unit COL --time "
                        "COL … --json)", "reach")
    pairs = []
    for place, point in enumerate(reach):
        if not isinstance(point, dict) or "day" not in point or "units" not in point:
            raise PlanError(f"{source}: reach[{place}] must hold a day and its units",
                            "reach")
        pairs.append([point["day"], point["units"]])
    return _checked(pairs, source)


def read_reach(path: str | os.PathLike) -> tuple[tuple[float, float], ...]:
    """:func:`parse_reach` of a file (UTF-8; PlanError naming the file when unreadable)."""
    path = pathlib.Path(path)
    try:
        if path.stat().st_size > MAX_BYTES:
            raise PlanError(f"{path.name}: larger than a reach curve can be "
                            f"({MAX_BYTES >> 20} MB)", "reach")
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as error:
        raise PlanError(f"cannot read {path.name}: {error}", "reach") from None
    return parse_reach(text, path.name)


def history_windows(data: Any, name: str) -> tuple[dict, ...]:
    """Metric ``name``'s windows in a history import's JSON (parsed) as a row's windows.

    Each window gives the row's baseline (the mean), its sd (not for a proportion or ratio,
    whose sd follows from other inputs), ρ and a ratio's inputs where the file has them;
    windows without figures are skipped.

    Examples
    --------
    >>> data = {"spend": {"plan_kind": "mean", "windows": [
    ...     {"days": 7, "units": 90, "mean": 2.0, "sd": 9.0},
    ...     {"days": 14, "units": 80, "problem": "no figures"}]}}
    >>> history_windows(data, "spend")
    ({'days': 7, 'baseline': 2.0, 'sd': 9.0},)
    """
    entry = data.get(name) if isinstance(data, dict) else None
    if not isinstance(entry, dict) or not isinstance(entry.get("windows"), list):
        raise PlanError(f"the history has no windows for {name!r} (import it with unit and "
                        "time columns)", "windows")
    derived = entry.get("plan_kind") in DERIVED
    windows = []
    for window in entry["windows"]:
        if not isinstance(window, dict) or window.get("mean") is None:
            continue
        fields: dict[str, Any] = {"days": window.get("days"), "baseline": window["mean"]}
        if not derived and window.get("sd") is not None:
            fields["sd"] = window["sd"]
        for key in ("rho", *_PARTS):
            if window.get(key) is not None:
                fields[key] = window[key]
        windows.append(fields)
    return validate_field("windows", windows)
