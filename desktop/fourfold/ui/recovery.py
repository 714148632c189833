"""Crash recovery: a periodic copy of the unsaved plan in the application's data folder.

The window writes the copy every minute while there are unsaved changes and deletes it on a
clean save or exit. On the next start a copy that is still there — and newer than the file it
came from — is offered back. The copy is written atomically (a temporary file, then a rename),
so a crash while writing never leaves half a file behind.
"""

from __future__ import annotations

import json
import os
import pathlib
import tempfile
from dataclasses import dataclass

from fourfold.errors import FourfoldError
from fourfold.plan import Plan, dumps, loads

FORMAT = "fourfold-recovery"
FILE_NAME = "recovery.json"


@dataclass(frozen=True)
class Recovered:
    """A plan found in the recovery file, and the file it was being edited from (if any)."""

    plan: Plan
    source: pathlib.Path | None
    saved_at: float


class Recovery:
    """The recovery file in ``directory``.

    Examples
    --------
    >>> import tempfile
    >>> from fourfold.plan import Plan
    >>> folder = tempfile.mkdtemp()
    >>> recovery = Recovery(folder)
    >>> recovery.write(Plan.empty(), None)
    >>> recovery.find().plan.metrics[0].role
    'primary'
    >>> recovery.discard(); recovery.find() is None
    True
    """

    def __init__(self, directory: str | os.PathLike) -> None:
        self.directory = pathlib.Path(directory)
        self.path = self.directory / FILE_NAME

    def write(self, plan: Plan, source: pathlib.Path | None) -> None:
        """Store ``plan`` (being edited from ``source``) atomically."""
        self.directory.mkdir(parents=True, exist_ok=True)
        payload = {
            "format": FORMAT,
            "source": None if source is None else str(source),
            "plan": json.loads(dumps(plan)),
        }
        handle, temporary = tempfile.mkstemp(dir=self.directory, suffix=".tmp")
        try:
            with os.fdopen(handle, "w", encoding="utf-8") as stream:
                json.dump(payload, stream)
            os.replace(temporary, self.path)
        except BaseException:
            pathlib.Path(temporary).unlink(missing_ok=True)
            raise

    def find(self) -> Recovered | None:
        """The stored plan if it is worth offering: readable and newer than its source file."""
        try:
            saved_at = self.path.stat().st_mtime
            payload = json.loads(self.path.read_text(encoding="utf-8"))
            if not isinstance(payload, dict) or payload.get("format") != FORMAT:
                return None
            plan = loads(json.dumps(payload["plan"]))
        except (OSError, ValueError, KeyError, FourfoldError):
            return None
        source = payload.get("source")
        source = pathlib.Path(source) if isinstance(source, str) else None
        if source is not None and source.exists() and source.stat().st_mtime >= saved_at:
            return None
        return Recovered(plan, source, saved_at)

    def discard(self) -> None:
        """Delete the recovery file (after a clean save or exit)."""
        self.path.unlink(missing_ok=True)
