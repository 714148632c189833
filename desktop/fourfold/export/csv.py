"""The plan table as CSV: one file of metric rows, one file of plan-level settings and results.

``write_csv(plan, "checkout.csv")`` writes two UTF-8 files (with a byte-order mark, so that
spreadsheets detect the encoding), and a third for a plan with scenarios:

``checkout.csv``
    One header row, then one row per metric row of the plan, in plan order, holding every input
    and every computed result.
``checkout-settings.csv``
    Three columns ``key,value,unit``: the plan's settings, then the plan-level results
    (duration, total units, binding metric, notes) and, with interim looks, the looks of the
    binding row (else the first row with looks): ``looks_row`` and per look k ``look_k_day``,
    ``look_k_units`` (total units), ``look_k_efficacy_z``, ``look_k_nominal_p``,
    ``look_k_futility_z`` (empty without a futility bound), ``look_k_alpha_spent_frac``,
    ``look_k_stop_h0_frac`` and ``look_k_stop_h1_frac`` (the chance of stopping there with no
    effect and with the planned effect). z is oriented in the direction of the effect.
    A plan with scenarios also has a ``scenario`` row: the scenario written ("Base" or its
    name).
``checkout-scenarios.csv``
    Only for a plan with scenarios: one row per scenario, base first — see
    :func:`fourfold.export.comparison.write_comparison`.
``checkout-traffic.csv``
    Only for a plan that uses the traffic model beyond constant daily units (a reach curve, a
    ramp-up, a burn-in) or rows that follow their history windows: the day-by-day traffic
    (:mod:`fourfold.export.traffic`); the settings file then adds the model's rows
    (``traffic``, ``traffic_model``, ``ramp``, ``burn_in_days``, ``reach_days``,
    ``reach_units``, ``reach_fit``, ``reach_fit_error_frac``, ``duration_extrapolated``,
    ``duration_stated_error_frac``, ``window_days``). A plan with rows that follow their
    history windows has a ``window_days`` column after ``sd_used``: the window whose figures
    such a row used (its ``baseline`` and ``sd`` are those figures).

Column names
------------
Names are ``snake_case``; a suffix names the unit of the numbers in the column:

``_units``
    a count of experiment units (visitors, users…); results are whole units as the evaluation
    rounds them up, written as integers, inputs (``n_input_control_units``,
    ``cluster_size_units``) as entered (whole numbers as integers);
``_days``
    days of traffic;
``_frac``
    a fraction: 0.05 means 5 %;
no suffix
    the metric's own unit (``baseline``, ``sd``, ``effect_abs``; for a proportion that is a
    fraction of units, for a rate a count per unit), a dimensionless number (``cuped_rho``,
    ``icc``, ``cluster_cv``, ``design_factor``), a flag (``true``/``false``) or text.

``unit`` is the metric's unit as text and ``better`` its good direction (``higher`` or
``lower``). Ratio rows fill ``ratio_denominator`` (the denominator's mean per unit),
``ratio_numerator_sd``, ``ratio_denominator_sd`` and ``ratio_correlation``; quantile rows
``quantile_level_frac`` (0.95 for the p95), ``quantile_density`` (the density at the quantile,
per unit of the metric) or the second percentile of their log-normal
(``quantile_second_level_frac``, ``quantile_second_value``). ``sd_used`` is the per-unit sd
the computation used: the delta method's for a ratio, √(p(1 − p))/density for a quantile,
``sd`` otherwise. With the √k allocation the settings file adds what equal allocation would
need: ``equal_allocation_total_units`` and ``equal_allocation_duration_days``.

The effect and the margin as entered go to one of two columns each, by their unit:
``effect_input_rel_frac`` and ``margin_input_rel_frac`` (fractions of the baseline) when
``relative_input`` is true, ``effect_input_abs`` and ``margin_input_abs`` (the metric's unit)
otherwise; the other column of the pair is empty. ``effect_abs`` / ``effect_rel_frac`` and
``margin_abs`` / ``margin_rel_frac`` are the effect and the H0 margin the row was computed with,
both ways: given, or solved (the detectable effect; for a margin row with ``solved`` =
``detectable_margin`` the tightest margin it rules out). ``power_frac`` is the row's power (given
or solved), ``power_at_duration_frac`` its power with the units of the plan's whole duration
(empty when the plan has none). ``units_control`` is the control arm,
``units_treatment_per_arm`` each treatment arm, ``units_total`` all arms together. With interim
looks, ``units_max`` and ``units_expected_h1`` are totals over all arms (the most the test can
need, and what it needs on average if the effect is real) and ``look_days`` lists the day of
each look, separated by ``;``; for a fixed design they repeat ``units_total`` and ``days``.
An empty cell is a missing value (an input left to the plan's default, or a result that cannot
be computed; ``reason`` then says why).

Incomplete plans
----------------
A plan in which a primary or guardrail row cannot be computed is incomplete (see
:mod:`fourfold.plan.evaluation`): every row's ``plan_status`` column says ``incomplete`` (else
``complete``), the settings file's ``status`` row too, followed by one ``incomplete_k`` row per
such row ("row 1 (Checkout conversion): …"), and ``duration_days``, ``total_units`` and the
binding row are empty.

Numbers are written in full precision (Python's shortest round-trip form), so reading the file
back gives exactly the values of :func:`fourfold.plan.evaluation.evaluate`. Text cells that a
spreadsheet would run as a formula — beginning with ``=``, ``+``, ``-``, ``@``, ``|``, a tab or
a line break, also after white space or invisible characters or in full-width form — are
prefixed with a single quote (OWASP, "CSV Injection", see :func:`neutralise`); numeric cells
are never altered.

References
----------
OWASP Foundation, "CSV Injection", https://owasp.org/www-community/attacks/CSV_Injection

Examples
--------
>>> neutralise("=HYPERLINK(\\"http://x\\")")
'\\'=HYPERLINK("http://x")'
>>> neutralise("Checkout conversion")
'Checkout conversion'
>>> cell(0.1 + 0.2), cell(float("nan")), cell(True), cell(None)
('0.30000000000000004', '', 'true', '')
"""

from __future__ import annotations

import csv
import io
import math
import numbers
import os
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from fourfold import __version__
from fourfold.export.files import ExportError, write_parts
from fourfold.plan import CHOICES
from fourfold.plan.arms import equal_allocation_saving, treatment_ratio
from fourfold.plan.kinds import DERIVED_SD, unit_sd
from fourfold.plan.windows import evaluated, follows, uses_windows

FORMULA_STARTS = ("=", "+", "-", "@", "|", "\t", "\r", "\n")
ENCODING = "utf-8-sig"
_RUNS = frozenset("=+-@|")


def _skipped(character: str) -> bool:
    """Characters a spreadsheet may drop before it looks for a formula: white space (space,
    no-break space, line breaks) and invisible format characters (zero-width space, BOM)."""
    return character.isspace() or unicodedata.category(character) == "Cf"


def neutralise(text: str) -> str:
    """Prefix text that a spreadsheet would evaluate as a formula with a single quote.

    Parameters
    ----------
    text : str
        A text cell.

    Returns
    -------
    str
        ``"'" + text`` when ``text`` begins with ``=``, ``+``, ``-``, ``@``, ``|``, a tab, a
        carriage return or a line feed — also when that sign comes after white space or
        invisible characters (space, no-break space, zero-width space, byte-order mark) or in
        a compatibility form that reads as it (full-width ``＝ ＋ － ＠``, small ``﹦``);
        ``text`` unchanged otherwise.

    References
    ----------
    OWASP Foundation, "CSV Injection".

    Examples
    --------
    >>> neutralise("-2+3"), neutralise("@SUM(A1:A2)"), neutralise("a-b")
    ("'-2+3", "'@SUM(A1:A2)", 'a-b')
    >>> neutralise("\u00a0=1+1"), neutralise("＝1+1"), neutralise("|calc")
    ("'\xa0=1+1", "'＝1+1", "'|calc")
    """
    if text.startswith(FORMULA_STARTS):
        return "'" + text
    for character in text:
        if _skipped(character):
            continue
        return "'" + text if unicodedata.normalize("NFKC", character)[:1] in _RUNS else text
    return text


def cell(value: Any) -> str:
    """Format one value for the CSV: numbers in full precision, text neutralised.

    ``None`` and nan become an empty cell, booleans ``true``/``false``, other numbers their
    shortest round-trip decimal form (``repr``), sequences of numbers a ``;``-separated list.

    Examples
    --------
    >>> cell(3), cell(2.5e-7), cell(float("inf")), cell((7.0, 14.0)), cell("+1")
    ('3', '2.5e-07', 'inf', '7.0;14.0', "'+1")
    """
    if value is None:
        return ""
    if isinstance(value, str):
        return neutralise(value)
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        number = float(value)
        return "" if math.isnan(number) else repr(number)
    if isinstance(value, (list, tuple, np.ndarray)):
        return ";".join(cell(item) for item in value)
    return neutralise(str(value))


def whole(value: Any) -> Any:
    """A whole-numbered count as an ``int`` (written without ``.0``), anything else unchanged.

    Examples
    --------
    >>> whole(1234.0), whole(2.5), whole(None)
    (1234, 2.5, None)
    """
    if isinstance(value, numbers.Real) and not isinstance(value, bool) and \
            math.isfinite(value) and value == int(value):
        return int(value)
    return value


def _entered(metric, value, relative: bool) -> Any:
    """``value`` when the row's effect and margin are entered relative (or not) as asked."""
    return value if metric.relative == relative else None


def _method(metric) -> str:
    return metric.method if metric.method is not None else CHOICES["method"][metric.kind][0]


def _sd_used(metric) -> float | None:
    """The per-unit sd the engine used: derived for ratio and quantile rows, else ``sd``."""
    return unit_sd(metric) if metric.kind in DERIVED_SD else metric.sd


#: The metric-row columns in file order: (name, how to get the value from (index, metric, row
#: result, plan result)).
COLUMNS: tuple[tuple[str, Callable[[int, Any, Any, Any], Any]], ...] = (
    ("row", lambda i, m, r, p: i + 1),
    ("name", lambda i, m, r, p: m.name),
    ("role", lambda i, m, r, p: m.role),
    ("kind", lambda i, m, r, p: m.kind),
    ("method", lambda i, m, r, p: _method(m)),
    ("solve", lambda i, m, r, p: m.solve),
    ("baseline", lambda i, m, r, p: m.baseline),
    ("sd", lambda i, m, r, p: m.sd),
    ("unit", lambda i, m, r, p: m.unit),
    ("better", lambda i, m, r, p: m.better),
    ("ratio_denominator", lambda i, m, r, p: m.denominator),
    ("ratio_numerator_sd", lambda i, m, r, p: m.numerator_sd),
    ("ratio_denominator_sd", lambda i, m, r, p: m.denominator_sd),
    ("ratio_correlation", lambda i, m, r, p: m.correlation),
    ("quantile_level_frac", lambda i, m, r, p: m.quantile_level),
    ("quantile_density", lambda i, m, r, p: m.density),
    ("quantile_second_level_frac", lambda i, m, r, p: m.second_level),
    ("quantile_second_value", lambda i, m, r, p: m.second_value),
    ("sd_used", lambda i, m, r, p: _sd_used(m)),
    ("effect_input_rel_frac", lambda i, m, r, p: _entered(m, m.effect, True)),
    ("effect_input_abs", lambda i, m, r, p: _entered(m, m.effect, False)),
    ("margin_input_rel_frac", lambda i, m, r, p: _entered(m, m.margin, True)),
    ("margin_input_abs", lambda i, m, r, p: _entered(m, m.margin, False)),
    ("relative_input", lambda i, m, r, p: m.relative),
    ("alternative", lambda i, m, r, p: m.alternative),
    ("alpha_override_frac", lambda i, m, r, p: m.alpha),
    ("power_override_frac", lambda i, m, r, p: m.power),
    ("cuped_rho", lambda i, m, r, p: m.rho),
    ("cluster_size_units", lambda i, m, r, p: whole(m.cluster_size)),
    ("icc", lambda i, m, r, p: m.icc),
    ("cluster_cv", lambda i, m, r, p: m.cluster_cv),
    ("design_factor", lambda i, m, r, p: r.design_factor),
    ("n_input_control_units", lambda i, m, r, p: whole(m.n)),
    ("solved", lambda i, m, r, p: r.solved),
    ("alpha_frac", lambda i, m, r, p: r.alpha),
    ("power_frac", lambda i, m, r, p: r.power),
    ("power_at_duration_frac", lambda i, m, r, p: p.duration_powers[i]),
    ("effect_abs", lambda i, m, r, p: r.effect_abs),
    ("effect_rel_frac", lambda i, m, r, p: r.effect_rel),
    ("margin_abs", lambda i, m, r, p: r.margin_abs),
    ("margin_rel_frac", lambda i, m, r, p: r.margin_rel),
    ("units_control", lambda i, m, r, p: whole(r.units_control)),
    ("units_treatment_per_arm", lambda i, m, r, p: whole(r.units_treatment)),
    ("units_total", lambda i, m, r, p: whole(r.units_total)),
    ("days", lambda i, m, r, p: r.days),
    ("units_max", lambda i, m, r, p: whole(r.units_max)),
    ("units_expected_h1", lambda i, m, r, p: whole(r.units_expected_h1)),
    ("days_expected_h1", lambda i, m, r, p: r.days_expected_h1),
    ("look_days", lambda i, m, r, p: r.look_days),
    ("binding", lambda i, m, r, p: p.binding_index == i),
    ("plan_status", lambda i, m, r, p: p.status),
    ("reason", lambda i, m, r, p: r.reason),
    ("notes", lambda i, m, r, p: m.notes),
)

#: The settings file's rows: (key, unit, how to get the value from (settings, plan result)).
SETTINGS: tuple[tuple[str, str, Callable[[Any, Any], Any]], ...] = (
    ("title", "text", lambda s, p: s.title),
    ("description", "text", lambda s, p: s.description),
    ("alpha", "fraction", lambda s, p: s.alpha),
    ("power", "fraction", lambda s, p: s.power),
    ("arms", "treatment arms", lambda s, p: s.arms),
    ("ratio", "treatment units per control unit, each arm", lambda s, p: s.ratio),
    ("allocation", "text", lambda s, p: s.allocation),
    ("treatment_ratio", "treatment units per control unit, each arm, as allocated",
     lambda s, p: treatment_ratio(s)),
    ("correction", "text", lambda s, p: s.correction),
    ("daily_units", "units per day", lambda s, p: whole(s.daily_units)),
    ("share", "fraction", lambda s, p: s.share),
    ("whole_weeks", "flag", lambda s, p: s.whole_weeks),
    ("runtime_days", "days", lambda s, p: s.runtime_days),
    ("looks", "count", lambda s, p: s.looks),
    ("spending", "text", lambda s, p: s.spending),
    ("futility", "flag", lambda s, p: s.futility),
    ("duration_days", "days", lambda s, p: p.duration_days),
    ("total_units", "units", lambda s, p: whole(p.total_units)),
    ("binding_row", "row number", lambda s, p: _row_number(p.binding_index)),
    ("binding_name", "text", lambda s, p: p.binding_name),
    ("status", "text", lambda s, p: p.status),
)


def _row_number(index: int | None) -> int | None:
    return None if index is None else index + 1


def settings_path(path: os.PathLike | str) -> Path:
    """The settings file written beside ``path``: ``plan.csv`` → ``plan-settings.csv``.

    Examples
    --------
    >>> settings_path("out/checkout.csv").as_posix()
    'out/checkout-settings.csv'
    """
    path = Path(path)
    return path.with_name(f"{path.stem}-settings{path.suffix or '.csv'}")


WINDOW_COLUMN = ("window_days", lambda i, m, r, p: p.window_days if follows(m) else None)
"""After ``sd_used``, only for a plan with rows that follow their history windows."""


def _columns(plan) -> tuple:
    """The metric file's columns: :data:`COLUMNS`, with ``window_days`` for a plan that
    uses history windows (a plan without them is written as before)."""
    if not uses_windows(plan):
        return COLUMNS
    place = [name for name, _ in COLUMNS].index("sd_used") + 1
    return (*COLUMNS[:place], WINDOW_COLUMN, *COLUMNS[place:])


def metric_rows(plan, result) -> list[list[str]]:
    """The metric file as lists of cells, header first (see the module docstring)."""
    columns = _columns(plan)
    lines = [[name for name, _ in columns]]
    for index, (metric, row) in enumerate(zip(plan.metrics, result.rows, strict=True)):
        lines.append([cell(get(index, metric, row, result)) for _, get in columns])
    return lines


def settings_rows(plan, result) -> list[list[str]]:
    """The settings file as lists of cells, header ``key,value,unit`` first."""
    from fourfold.export import traffic

    lines = [["key", "value", "unit"]]
    lines += [[key, cell(get(plan.settings, result)), unit] for key, unit, get in SETTINGS]
    lines += [[key, cell(value), unit] for key, value, unit in traffic.settings_rows(plan, result)]
    lines += [[f"incomplete_{k}", cell(f"row {item.index + 1} ({item.name}): {item.reason}"),
               "text"] for k, item in enumerate(result.incomplete, 1)]
    lines += [[f"note_{i}", cell(note), "text"] for i, note in enumerate(result.notes, 1)]
    saving = equal_allocation_saving(plan, result)
    if saving is not None:
        lines += [["equal_allocation_total_units", cell(saving.equal_units), "units"],
                  ["equal_allocation_duration_days", cell(saving.equal_days), "days"]]
    lines += _look_rows(plan, result)
    lines.append(["fourfold_version", cell(__version__), "text"])
    return lines


_LOOK_CELLS = (
    ("day", "days", lambda look: look.day),
    ("units", "units", lambda look: whole(look.units)),
    ("efficacy_z", "z", lambda look: look.z_efficacy),
    ("nominal_p", "p-value", lambda look: look.p_efficacy),
    ("futility_z", "z", lambda look: look.z_futility),
    ("alpha_spent_frac", "fraction", lambda look: look.alpha_spent),
    ("stop_h0_frac", "fraction", lambda look: look.stop_h0),
    ("stop_h1_frac", "fraction", lambda look: look.stop_h1),
)


def _look_rows(plan, result) -> list[list[str]]:
    """The interim looks of the reported row as settings-file rows (none for a fixed design)."""
    from fourfold.plan.sequential import looks_row, row_looks

    index = looks_row(plan, result)
    if index is None:
        return []
    lines = [["looks_row", cell(index + 1), "row number"]]
    for look in row_looks(plan, result, index):
        lines += [[f"look_{look.look}_{name}", cell(get(look)), unit]
                  for name, unit, get in _LOOK_CELLS]
    return lines


def encoded(path: Path, lines: Iterable[Sequence[str]]) -> bytes:
    """The CSV file's bytes (UTF-8 with a byte-order mark, CRLF line ends).

    Raises
    ------
    fourfold.export.files.ExportError
        When a text cell is not valid Unicode (an unpaired surrogate), naming the file.
    """
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\r\n").writerows(lines)
    try:
        return buffer.getvalue().encode(ENCODING)
    except UnicodeEncodeError as error:
        bad = error.object[error.start:error.end].encode("unicode_escape").decode("ascii")
        raise ExportError(f"cannot write {path}: its text holds {bad}, which is not a "
                          "character (an unpaired surrogate)") from None


def write_csv(plan, path: os.PathLike | str, scenario: str | None = None) -> tuple[Path, ...]:
    """Write the plan's metric table to ``path`` and its settings beside it.

    Parameters
    ----------
    plan : fourfold.plan.Plan
        The plan; it is evaluated here with :func:`fourfold.plan.compute`.
    path : path-like
        The metric file. The settings go to :func:`settings_path` of it; for a plan with
        scenarios the comparison goes to ``NAME-scenarios.csv``
        (:func:`fourfold.export.comparison.write_comparison`).
    scenario : str, optional
        The scenario whose rows and settings to write (default: the base); with scenarios,
        the settings file names it in its ``scenario`` row.

    Returns
    -------
    tuple of pathlib.Path
        The metric file, the settings file, for a plan with scenarios the comparison and, for a
        plan that uses the traffic model, its day-by-day table
        (:mod:`fourfold.export.traffic`).

    Raises
    ------
    fourfold.export.files.ExportError
        When a file cannot be written; every file is then left as it was.
    fourfold.plan.PlanError
        When the plan has no scenario called ``scenario``.

    References
    ----------
    OWASP Foundation, "CSV Injection" (the neutralised text cells).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from fourfold.plan import load, sample_path
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.csv"
    >>> [p.name for p in write_csv(load(sample_path()), out)]
    ['plan.csv', 'plan-settings.csv', 'plan-scenarios.csv']
    """
    from fourfold.export import traffic
    from fourfold.export.comparison import scenario_rows, scenarios_path
    from fourfold.plan.evaluation import compute
    from fourfold.plan.scenarios import BASE, effective

    shown = effective(plan, scenario)
    result = compute(shown)
    shown = evaluated(shown, result)  # rows that follow their windows: the figures used
    path = Path(path)
    targets = [path, settings_path(path)]
    settings = settings_rows(shown, result)
    if plan.scenarios:
        settings.insert(3, ["scenario", cell(scenario or BASE), "text"])
        targets.append(scenarios_path(path))
    if traffic.uses(shown):
        targets.append(traffic.traffic_path(path))
    contents = {targets[0]: encoded(targets[0], metric_rows(shown, result)),
                targets[1]: encoded(targets[1], settings)}
    if plan.scenarios:
        contents[targets[2]] = encoded(targets[2], scenario_rows(plan))
    if traffic.uses(shown):
        contents[targets[-1]] = encoded(targets[-1], traffic.table_rows(shown, result))
    write_parts(contents)
    return tuple(targets)
