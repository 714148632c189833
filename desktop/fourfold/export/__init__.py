"""Exports of a plan: the plan table as CSV and a PDF report to attach to a test proposal.

- :func:`fourfold.export.csv.write_csv` writes ``NAME.csv`` (one row per metric, every input
  and result in full precision) and ``NAME-settings.csv`` (plan settings and results as
  ``key,value,unit``); no Qt.
- :func:`fourfold.export.pdf.write_pdf` writes the report with Qt's PDF writer.
- :func:`export_file` is the headless entry point of ``fourfold export``.

Every export writes to a temporary file beside its target and renames it on success, so a
failed export never leaves a half-written file or touches an existing one.
"""

from __future__ import annotations

import os
from pathlib import Path

from fourfold.export.files import ExportError

FORMATS = (".csv", ".pdf")
PAGES = ("a4", "letter")

__all__ = ["FORMATS", "PAGES", "ExportError", "export_file"]


def export_file(plan_path: os.PathLike | str, output: os.PathLike | str,
                page: str = "a4") -> list[Path]:
    """Load a plan file and export it; the format comes from the output's extension.

    Parameters
    ----------
    plan_path : path-like
        A plan file (JSON, as saved by Fourfold).
    output : path-like
        ``*.csv`` (the settings file goes beside it as ``*-settings.csv``) or ``*.pdf``.
    page : {"a4", "letter"}
        Paper size of a PDF.

    Returns
    -------
    list of pathlib.Path
        The files written.

    Raises
    ------
    fourfold.errors.FourfoldError
        For an unknown extension or page size, a missing or malformed plan file
        (:class:`fourfold.plan.PlanError`) or an output that cannot be written
        (:class:`ExportError`). No output file is created or changed then.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from fourfold.plan import sample_path
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "plan.csv"
    >>> [p.name for p in export_file(sample_path(), out)]
    ['plan.csv', 'plan-settings.csv']
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
    from fourfold.plan import load

    plan = load(plan_path)
    if suffix == ".csv":
        from fourfold.export.csv import write_csv

        return list(write_csv(plan, output))
    from fourfold.export.pdf import write_pdf

    return [write_pdf(plan, output, page=page)]
