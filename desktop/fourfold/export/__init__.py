"""Exports of a plan: the plan table as CSV and a PDF report to attach to a test proposal.

- :func:`fourfold.export.csv.write_csv` writes ``NAME.csv`` (one row per metric, every input
  and result in full precision) and ``NAME-settings.csv`` (plan settings and results as
  ``key,value,unit``); no Qt.
- :func:`fourfold.export.pdf.write_pdf` writes the report with Qt's PDF writer.
- :func:`fourfold.export.comparison.write_comparison` writes the scenarios side by side
  (``NAME-scenarios.csv``, also written by ``write_csv`` for a plan with scenarios); no Qt.
- :func:`export_file` is the headless entry point of ``fourfold export``, and
  :func:`compare_file` of ``fourfold compare``.

Every export writes to a temporary file beside its target and renames it on success, so a
failed export never leaves a half-written file or touches an existing one.
"""

from __future__ import annotations

import os
from pathlib import Path

from fourfold.errors import FourfoldError
from fourfold.export.files import ExportError

FORMATS = (".csv", ".pdf")
PAGES = ("a4", "letter")

__all__ = ["FORMATS", "PAGES", "ExportError", "IncompletePlanError", "compare_file",
           "export_file"]


class IncompletePlanError(FourfoldError):
    """An incomplete plan that the export was not allowed to write; the message names every
    primary or guardrail row that cannot be computed, with its reason."""


def export_file(plan_path: os.PathLike | str, output: os.PathLike | str,
                page: str = "a4", scenario: str | None = None, *,
                allow_incomplete: bool = False) -> list[Path]:
    """Load a plan file and export it; the format comes from the output's extension.

    An incomplete plan (a primary or guardrail row that cannot be computed, see
    :mod:`fourfold.plan.evaluation`) is refused unless ``allow_incomplete``: its outputs would
    have no duration. Allowed, every output says "incomplete" and names the rows.

    Parameters
    ----------
    plan_path : path-like
        A plan file (JSON, as saved by Fourfold).
    output : path-like
        ``*.csv`` (the settings file goes beside it as ``*-settings.csv``) or ``*.pdf``.
    page : {"a4", "letter"}
        Paper size of a PDF.
    scenario : str, optional
        The scenario to export (default: the base).
    allow_incomplete : bool
        Write an incomplete plan too (its outputs say "incomplete").

    Returns
    -------
    list of pathlib.Path
        The files written.

    Raises
    ------
    fourfold.errors.FourfoldError
        For an unknown extension or page size, a missing or malformed plan file
        (:class:`fourfold.plan.PlanError`) or an output that cannot be written
        (:class:`ExportError`), or an incomplete plan without ``allow_incomplete``
        (:class:`IncompletePlanError`). No output file is created or changed then.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from fourfold.plan import sample_path
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.csv"
    >>> [p.name for p in export_file(sample_path(), out)]
    ['plan.csv', 'plan-settings.csv', 'plan-scenarios.csv']
    >>> export_file(sample_path(), out.with_suffix(".xlsx"))
    Traceback (most recent call last):
    ...
    fourfold.export.files.ExportError: cannot tell which format to write for plan.xlsx: \
the output file must end in .csv or .pdf
    """
    output = Path(output)
    suffix = output.suffix.lower()
    if suffix not in FORMATS:
        raise ExportError(f"cannot tell which format to write for {output.name}: the output "
                          f"file must end in {' or '.join(FORMATS)}")
    if page not in PAGES:
        raise ExportError(f"page must be one of {', '.join(PAGES)}; got {page!r}")
    from fourfold.plan import effective, load

    plan = load(plan_path)
    chosen = effective(plan, scenario)  # an unknown scenario is refused before any output
    if not allow_incomplete:
        from fourfold.plan.evaluation import compute

        result = compute(chosen)
        if result.incomplete:
            which = "" if scenario is None else f" (scenario {scenario!r})"
            raise IncompletePlanError(
                f"{Path(plan_path).name}{which} is an incomplete plan: "
                f"{result.incomplete_text()}. Every primary and guardrail row must be computed "
                "for the plan to have a duration; mend these rows, or export anyway with "
                "--allow-incomplete (every output then says \"incomplete\")")
    if suffix == ".csv":
        from fourfold.export.csv import write_csv

        return list(write_csv(plan, output, scenario))
    from fourfold.export.pdf import write_pdf

    return [write_pdf(plan, output, page=page, scenario=scenario)]


def compare_file(plan_path: os.PathLike | str, output: os.PathLike | str | None = None) -> str:
    """Load a plan file and compare its base and scenarios (``fourfold compare``).

    Parameters
    ----------
    plan_path : path-like
        A plan file.
    output : path-like, optional
        A ``.csv`` file to write the comparison to
        (:func:`fourfold.export.comparison.write_comparison`).

    Returns
    -------
    str
        The comparison as aligned text (without ``output``) or a line naming the file.

    Raises
    ------
    fourfold.errors.FourfoldError
        For a missing or malformed plan file, an output not ending in ``.csv`` or one that
        cannot be written (nothing is written then).

    Examples
    --------
    >>> from fourfold.plan import sample_path
    >>> compare_file(sample_path()).splitlines()[0].split("   ")[-1]
    'Returning visitors, ramp-up to all traffic'
    """
    if output is not None and Path(output).suffix.lower() != ".csv":
        raise ExportError(f"cannot tell which format to write for {Path(output).name}: the "
                          "comparison is written as .csv")
    from fourfold.export.comparison import text_table, write_comparison
    from fourfold.plan import load
    from fourfold.plan.comparison import outcomes

    plan = load(plan_path)
    if output is not None:
        return f"wrote {write_comparison(plan, output)}\n"
    return text_table(outcomes(plan))
