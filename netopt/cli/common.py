"""What every verb shares: exit codes, the common options, printing that respects ``--quiet``."""

from __future__ import annotations

import argparse
import sys

from netopt.data.case import Case

EXIT_OK = 0
EXIT_INVALID = 2
EXIT_INFEASIBLE = 3
EXIT_SOLVER = 4

COMMON = argparse.ArgumentParser(add_help=False)
COMMON.add_argument(
    "-q", "--quiet", action="store_true", help="print only errors (and what a script needs), no summary or warnings"
)


def say(args: argparse.Namespace, text: str = "") -> None:
    """Print to stdout unless ``--quiet``."""
    if not getattr(args, "quiet", False):
        print(text)


def warn(args: argparse.Namespace, text: str) -> None:
    """Print to stderr unless ``--quiet``."""
    if not getattr(args, "quiet", False):
        print(text, file=sys.stderr)


def print_warnings(args: argparse.Namespace, case: Case) -> None:
    """The case's warnings on stderr (unless ``--quiet``)."""
    if case.warnings:
        warn(args, f"{len(case.warnings)} warning(s):")
        for p in case.warnings:
            warn(args, f"  {p}")
