"""What every verb shares: exit codes, the common options, option types checked like settings, printing
that respects ``--quiet``."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable

from netopt.data.case import Case, problem_lines
from netopt.data.coerce import coerce_setting
from netopt.data.declarations import Setting
from netopt.data.settings_schema import SETTINGS

EXIT_OK = 0
EXIT_INVALID = 2
EXIT_INFEASIBLE = 3
EXIT_SOLVER = 4
EXIT_INTERRUPTED = 130  # Ctrl-C (128 + SIGINT, as a shell reports it)

COMMON = argparse.ArgumentParser(add_help=False)
COMMON.add_argument(
    "-q", "--quiet", action="store_true", help="print only errors (and what a script needs), no summary or warnings"
)


def checked_as(s: Setting, where: str) -> Callable[[str], object]:
    """An argparse ``type=`` that reads an option's text by Setting ``s``'s type and range (the same parser
    and message as ``settings.toml``); argparse then exits 2 naming the option, the range and ``where``."""

    def parse(text: str) -> object:
        value, problem = coerce_setting(s, text)
        if problem:
            raise argparse.ArgumentTypeError(f"{problem} ({where})")
        return value

    parse.__name__ = s.name  # argparse names the type in its own messages
    return parse


def setting_option(section: str, name: str) -> Callable[[str], object]:
    """The ``type=`` of a CLI override of ``[section] name``: checked by the settings schema's declaration,
    so ``--gap`` allows what ``mip_gap`` in settings.toml allows, and no more."""
    s = next(s for s in SETTINGS if (s.section, s.name) == (section, name))
    return checked_as(s, f"as [{section}] {name} in settings.toml")


def number_option(name: str, type_: str, unit: str, low: float | None, high: float | None, why: str):
    """The ``type=`` of an option that is no setting: a number (``type_`` "int" or "float") from ``low`` to
    ``high`` (None: no bound), checked and worded as a setting's range; ``why`` names where the limit is from."""
    return checked_as(Setting("option", name, type_, unit, None, "", min=low, max=high), why)


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
        for line in problem_lines(case.warnings):  # capped per table and column, the rest counted
            warn(args, line)
