"""The ``fourfold`` command line: one parser for the window and the headless sub-commands.

``fourfold [PLAN.json]`` opens the window (on the bundled sample plan when no file is given);
``fourfold export``, ``fourfold compare``, ``fourfold shot`` and ``fourfold history`` run
without a window. Each
sub-command's work lives in its own package and is imported only when it runs, so that
``fourfold --help`` stays instant.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import signal
import sys
from collections.abc import Sequence

from fourfold import __version__
from fourfold.errors import FourfoldError

SUBCOMMANDS = ("open", "export", "compare", "shot", "history")


def _size(text: str) -> tuple[int, int]:
    try:
        width, height = (int(part) for part in text.lower().split("x"))
    except ValueError:
        raise argparse.ArgumentTypeError(f"size must look like 1400x900, not {text!r}") from None
    if not (200 <= width <= 8000 and 200 <= height <= 8000):
        raise argparse.ArgumentTypeError("width and height must be between 200 and 8000 pixels")
    return width, height


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The parser; ``command`` (the sub-command about to run, when known) leaves out the
    options of the others that need imports of their own (``history``'s come from
    :mod:`fourfold.history`, which opening the window never needs)."""
    parser = argparse.ArgumentParser(
        prog="fourfold",
        description=(
            "Plan the sample size of online controlled experiments. "
            "Without a sub-command, opens the window on PLAN (or on the bundled sample plan)."
        ),
    )
    parser.add_argument("--version", action="version", version=f"fourfold {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p_open = sub.add_parser("open", help="open the window (the default command)")
    p_open.add_argument("plan", nargs="?", help="plan file (.json); default: the sample plan")

    p_export = sub.add_parser("export", help="write a plan to CSV or PDF without a window")
    p_export.add_argument("plan", help="plan file (.json)")
    p_export.add_argument(
        "-o", "--output", required=True, help="output file; the format comes from .csv or .pdf"
    )
    p_export.add_argument(
        "--page", choices=("a4", "letter"), default="a4", help="PDF page size (default a4)"
    )
    p_export.add_argument(
        "--scenario", metavar="NAME", default=None,
        help="export this scenario of the plan (default: the base)",
    )
    p_export.add_argument(
        "--allow-incomplete", action="store_true",
        help="export a plan even when a primary or guardrail row cannot be computed (the "
             "outputs then say \"incomplete\" and have no duration); refused by default",
    )

    p_compare = sub.add_parser(
        "compare", help="compare the plan's base and scenarios side by side"
    )
    p_compare.add_argument("plan", help="plan file (.json)")
    p_compare.add_argument(
        "-o", "--output", default=None,
        help="write the comparison to this .csv file instead of printing it",
    )

    p_shot = sub.add_parser("shot", help="render the window offscreen to a PNG")
    p_shot.add_argument("plan", nargs="?", help="plan file (.json); default: the sample plan")
    p_shot.add_argument("-o", "--output", required=True, help="PNG file to write")
    p_shot.add_argument(
        "--size", type=_size, default=(1400, 900), help="window size, e.g. 1400x900"
    )
    p_shot.add_argument("--row", type=int, default=None, help="metric row to select (from 1)")
    p_shot.add_argument("--scenario", metavar="NAME", default=None,
                        help="the scenario to show (Base: the plan as entered)")
    p_shot.add_argument("--tab", choices=("plots", "scenarios"), default="plots",
                        help="the tab under the table (default: plots)")

    p_history = sub.add_parser("history", help="baselines and variances from per-unit history")
    if command in (None, "history"):
        from fourfold.history.cli import configure as configure_history

        configure_history(p_history)
    return parser


def _normalise(argv: Sequence[str]) -> list[str]:
    """``fourfold PLAN.json`` means ``fourfold open PLAN.json``."""
    argv = list(argv)
    if not argv or (argv[0] not in SUBCOMMANDS and not argv[0].startswith("-")):
        return ["open", *argv]
    return argv


@contextlib.contextmanager
def _stop_on_terminate(headless: bool):
    """While a headless command runs, a terminate signal ends it like Ctrl+C does, so that its
    ``finally`` blocks remove the temporary files of an unfinished export."""
    def stop(signum, frame):
        raise KeyboardInterrupt

    previous = None
    if headless:
        with contextlib.suppress(ValueError, OSError, AttributeError):  # not the main thread
            previous = signal.signal(signal.SIGTERM, stop)
    try:
        yield
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _warn_incomplete(plan_path: str, scenario: str | None) -> None:
    """Say on stderr that an exported plan is incomplete (allowed by ``--allow-incomplete``)."""
    from fourfold.plan import compute, effective, load

    result = compute(effective(load(plan_path), scenario))
    if result.incomplete:
        print(f"fourfold: warning: the plan is incomplete: {result.incomplete_text()}",
              file=sys.stderr)


def main(argv: Sequence[str] | None = None) -> int:
    # One BLAS thread (unless the user chose otherwise), set before numpy loads: Fourfold's
    # arrays are small, and OpenBLAS's workers spin after each call, taking the second core
    # of a laptop from the window (an edit's frame took about 1 ms longer).
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    arguments = _normalise(sys.argv[1:] if argv is None else argv)
    parser = build_parser(arguments[0])
    args = parser.parse_args(arguments)
    try:
        with _stop_on_terminate(args.command != "open"):
            return _run(parser, args)
    except BrokenPipeError:
        # The reader of the output left (``fourfold compare PLAN | head``): stop quietly, and
        # point stdout at the null device so that the flush at exit finds no pipe either.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 1


def _run(parser: argparse.ArgumentParser, args: argparse.Namespace) -> int:
    try:
        if args.command == "open":
            from fourfold.ui.app import run_window

            return run_window(args.plan)
        if args.command == "shot":
            from fourfold.ui.app import run_shot

            code = run_shot(args.plan, args.output, size=args.size, row=args.row,
                            scenario=args.scenario, tab=args.tab)
            print(f"wrote {args.output}")
            return code
        if args.command == "export":
            from fourfold.export import export_file

            written = export_file(args.plan, args.output, page=args.page,
                                  scenario=args.scenario,
                                  allow_incomplete=args.allow_incomplete)
            names = [str(path) for path in written]
            print("wrote " + (", ".join(names[:-1]) + " and " if len(names) > 1 else "")
                  + names[-1])
            if args.allow_incomplete:
                _warn_incomplete(args.plan, args.scenario)
            return 0
        if args.command == "compare":
            from fourfold.export import compare_file

            sys.stdout.write(compare_file(args.plan, args.output))
            return 0
        if args.command == "history":
            from fourfold.history.cli import run as run_history

            return run_history(args)
    except FourfoldError as error:
        print(f"fourfold: error: {error}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("fourfold: interrupted; nothing was written", file=sys.stderr)
        return 130
    parser.error(f"unknown command {args.command!r}")
    return 2
