"""``fourfold history``: baselines and variances from a per-unit history file.

Only argparse at import time; the reader is imported when the command runs.
"""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("data", help="per-unit history: CSV (or Parquet with pyarrow installed)")
    parser.add_argument("--mean", action="append", default=[], metavar="COL",
                        help="numeric column: mean and standard deviation")
    parser.add_argument("--proportion", action="append", default=[], metavar="COL",
                        help="0/1 or true/false column: rate and its variance")
    parser.add_argument("--count", action="append", default=[], metavar="COL",
                        help="count column: rate per unit and its over-dispersion")
    parser.add_argument("--ratio", action="append", default=[], metavar="NUM:DEN",
                        help="ratio of sums with its delta-method variance")
    parser.add_argument("--pre", action="append", default=[], metavar="COL:PRECOL",
                        help="pre-period column of a metric, for CUPED's correlation")
    parser.add_argument("--cap", type=float, default=None, metavar="PERCENTILE",
                        help="cap heavy tails at this percentile (e.g. 99.9)")
    parser.add_argument("--json", action="store_true", help="print one JSON object")


def run(args: argparse.Namespace) -> int:
    raise NotImplementedError
