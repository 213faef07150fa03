"""Command line: ``netopt <verb> ...``.

Each verb is two functions: ``add_<verb>(subparsers)`` declares its arguments and
sets ``func=cmd_<verb>``; ``cmd_<verb>(args) -> int`` does the work and returns the
exit code.  To add a verb, write both and append the ``add_`` function to
:data:`VERBS`.  :func:`main` turns a :class:`~netopt.case.CaseError` into a report
on stderr and exit code 2 (never a traceback).

Exit codes: 0 ok, 2 invalid input, 3 infeasible, 4 solver failure.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from pathlib import Path

from netopt.case import Case, CaseError

EXIT_OK = 0
EXIT_INVALID = 2
EXIT_INFEASIBLE = 3
EXIT_SOLVER = 4

COMMON = argparse.ArgumentParser(add_help=False)
COMMON.add_argument("-q", "--quiet", action="store_true",
                    help="print only errors (and what a script needs), no summary or warnings")


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


# --------------------------------------------------------------------------- template

def add_template(sub) -> None:
    p = sub.add_parser(
        "template", parents=[COMMON],
        help="write a blank case folder to fill in",
        description="Write a blank case: one CSV file per table (suppliers, plants, DCs, customers, products, "
                    "demand, modes, lanes, ...) with its header row, and settings.toml listing every setting "
                    "at its default with its meaning and unit.  See data_templates/schema.md for every column.")
    p.add_argument("dir", metavar="DIR", help="folder to create (must not exist or be empty)")
    p.set_defaults(func=cmd_template)


def cmd_template(args: argparse.Namespace) -> int:
    from netopt.schema import TABLES
    from netopt.templates import write_blank_case

    try:
        out = write_blank_case(args.dir)
    except FileExistsError:
        print(f"error: {args.dir} exists and is not empty; choose a new folder", file=sys.stderr)
        return EXIT_INVALID
    required = [t.file_name for t in TABLES.values() if t.required]
    say(args, f"blank case written to {out}")
    say(args, f"  fill in at least: {', '.join(required)}; the other tables are optional")
    say(args, f"  then run: netopt check {out}")
    return EXIT_OK


# --------------------------------------------------------------------------- check

def add_check(sub) -> None:
    p = sub.add_parser(
        "check", parents=[COMMON],
        help="validate a case and summarise the network",
        description="Load a case (a folder of CSV files with settings.toml, or one .xlsx workbook), check every "
                    "table against the schema and the links between them (products, sites, lanes, modes), check "
                    "that every customer's demand can be reached from a plant or supplier, and print a summary: "
                    "suppliers, plants, existing and candidate DCs, customers, products, total demand and lanes "
                    "by mode.  Every problem is reported at once with its table, row and column; exit code 2 "
                    "when any error is found.")
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.set_defaults(func=cmd_check)


def _lanes_by_mode(case: Case):
    """Lane rows per mode from the lane builder, or None when it is not available."""
    from netopt.validate import _lane_builder

    build_lanes = _lane_builder()
    if build_lanes is None:
        return None
    lanes = build_lanes(case)
    return lanes.groupby("mode", sort=True).size() if len(lanes) else {}


def case_summary(case: Case) -> list[str]:
    """Lines describing the size of a case's network (counts, units/year)."""
    t = case.tables
    n = lambda df, col: int(df[col].nunique()) if len(df) else 0  # noqa: E731
    dcs = t["dcs"]
    existing = int((dcs["status"] == "existing").sum())
    products = t["products"]
    materials = int((products["kind"] == "material").sum())
    demand = t["demand"]
    currency = case.setting("case", "currency")
    lines = [
        f"case '{case.name}'" + (f" ({case.path})" if case.path else "") + ": no errors",
        f"  suppliers   {n(t['suppliers'], 'supplier'):>7,}   ({len(t['suppliers']):,} supplier-product offers)",
        f"  plants      {n(t['plants'], 'plant'):>7,}",
        f"  DCs         {len(dcs):>7,}   ({existing:,} existing, {len(dcs) - existing:,} candidate"
        + (f"; {len(t['dc_sizes']):,} size options" if len(t["dc_sizes"]) else "") + ")",
        f"  customers   {n(t['customers'], 'customer'):>7,}",
        f"  products    {len(products):>7,}   ({len(products) - materials:,} finished, {materials:,} materials)",
        f"  demand      {demand['quantity'].sum():>15,.0f} units/year over {len(demand):,} customer-product rows",
        f"  modes       {len(t['modes']):>7,}" + (f"   ({', '.join(t['modes']['mode'].astype(str))})"
                                                   if len(t["modes"]) else ""),
    ]
    if len(t["lanes"]):
        lines.append(f"  explicit lanes {len(t['lanes']):>4,}")
    by_mode = _lanes_by_mode(case)
    if by_mode is None:
        lines.append("  lanes       not built (the lane builder is not available)")
    else:
        total = int(sum(by_mode.values)) if len(by_mode) else 0
        detail = ", ".join(f"{m} {int(k):,}" for m, k in by_mode.items()) if len(by_mode) else "none"
        lines.append(f"  lanes       {total:>7,}   by mode: {detail}")
    lines.append(f"  currency    {currency}")
    return lines


def cmd_check(args: argparse.Namespace) -> int:
    from netopt.io import load_case

    case = load_case(args.case)
    print_warnings(args, case)
    for line in case_summary(case):
        say(args, line)
    return EXIT_OK


# --------------------------------------------------------------------------- main

def _solving_verbs() -> list[Callable]:
    """Verbs that solve live in netopt.commands (imported late: it imports this module)."""
    from netopt.commands import add_frontier, add_run, add_solve, add_stress

    return [add_solve, add_run, add_stress, add_frontier]


VERBS: list[Callable] = [add_template, add_check]
"""Functions that each add one verb's subparser (in the order shown by --help)."""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb of :data:`VERBS`."""
    from netopt import __version__

    parser = argparse.ArgumentParser(
        prog="netopt",
        description="Supply-chain network and sourcing design: which DCs to open, which suppliers and plants "
                    "serve which customers, and by which transport mode, at the least total landed cost "
                    "(supply, production, DC fixed and handling, freight, inventory, carbon) within capacity, "
                    "sourcing and service rules.",
        epilog="Exit codes: 0 ok, 2 invalid input, 3 infeasible, 4 solver failure.")
    parser.add_argument("--version", action="version", version=f"netopt {__version__}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in VERBS + _solving_verbs():
        add(sub)
    return parser


def main(argv: list[str] | None = None) -> None:
    """Run one verb and exit with its code (SystemExit)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "func", None) is None:
        parser.print_help(sys.stderr)
        raise SystemExit(EXIT_INVALID)
    try:
        code = args.func(args)
    except CaseError as e:
        print(e.report(), file=sys.stderr)
        code = EXIT_INVALID
    except (FileNotFoundError, PermissionError, IsADirectoryError, NotADirectoryError) as e:
        print(f"error: {e.strerror or e}: {e.filename or ''}", file=sys.stderr)
        code = EXIT_INVALID
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        code = 130
    raise SystemExit(code)


if __name__ == "__main__":
    main()
