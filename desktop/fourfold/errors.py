"""Errors that carry a message meant for the user.

The command line prints them on stderr and exits non-zero; the window shows them in a dialog
or the status line. Anything else escaping is a bug.
"""


class FourfoldError(Exception):
    """A problem the user can act on; ``str(error)`` is the message to show."""
