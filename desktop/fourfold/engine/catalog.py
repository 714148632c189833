"""The names the engine understands: metric kinds, methods per kind, alternatives.

The first method listed for a kind is its default (used when ``method=None``).

Examples
--------
>>> METHODS["proportion"][0]
'pooled'
>>> resolve("mean", None, "two-sided")
('z', 'two-sided')
"""

KINDS = ("mean", "proportion", "rate", "ratio", "quantile")
METHODS = {
    "mean": ("z", "t"),
    "proportion": ("pooled", "unpooled", "arcsine", "pooled-cc"),
    "rate": ("z",),
    "ratio": ("delta",),
    "quantile": ("asymptotic",),
}
ALTERNATIVES = ("two-sided", "greater", "less")
SOLVES = ("sample_size", "power", "detectable_effect", "significance_level", "detectable_margin")


def quoted(values):
    """The names as a quoted, comma-separated list for messages: 'a', 'b'."""
    return ", ".join(f"'{v}'" for v in values)


def resolve(kind, method, alternative):
    """Check the names and return ``(method, alternative)`` with the default method filled in.

    Raises
    ------
    ValueError
        If ``kind``, ``method`` or ``alternative`` is not one of the allowed names.
    """
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {quoted(KINDS)}, not {kind!r}")
    allowed = METHODS[kind]
    if method is None:
        method = allowed[0]
    elif method not in allowed:
        raise ValueError(
            f"method must be one of {quoted(allowed)} for a {kind}, not {method!r}"
        )
    if alternative not in ALTERNATIVES:
        raise ValueError(
            f"alternative must be one of {quoted(ALTERNATIVES)}, not {alternative!r}"
        )
    return method, alternative
