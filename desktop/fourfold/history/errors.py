"""Errors of the history import."""

from fourfold.errors import FourfoldError


class HistoryError(FourfoldError, ValueError):
    """A history file or a column mapping that cannot be read; the message names the column."""


class HistoryCancelled(FourfoldError):
    """The import was cancelled by its caller; nothing was produced."""
