"""Verbs that need no solver: ``netopt template`` and ``netopt check``."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from netopt.cli.common import COMMON, EXIT_INVALID, EXIT_OK, print_warnings, say
from netopt.data.case import Case
from netopt.data.io import load_case
from netopt.data.lane_matrix import destinations
from netopt.data.periods import has_periods, period_demand
from netopt.data.schema import TABLES
from netopt.data.templates import write_blank_case, write_template_workbook
from netopt.data.writing import write_case_csv, write_case_workbook
from netopt.engine.baseline import check_current_flows
from netopt.network.lanes import case_lanes
from netopt.studies.scenarios import parse_scenarios, scenario_cases, scenario_source

# --------------------------------------------------------------------------- template


def add_template(sub) -> None:
    p = sub.add_parser(
        "template",
        parents=[COMMON],
        help="write a blank case folder to fill in",
        description="Write a blank case: one CSV file per table (suppliers, plants, DCs, customers, products, "
        "demand, modes, lanes, ...) with its header row, and settings.toml listing every setting "
        "at its default with its meaning and unit.  See data_templates/schema.md for every column.",
    )
    p.add_argument(
        "dir", metavar="DIR", help="folder to create (must not exist or be empty), or with --xlsx the workbook"
    )
    p.add_argument(
        "--xlsx",
        action="store_true",
        help="write one workbook instead: a sheet per table (header notes give unit and meaning), settings, "
        "scenarios and the schema",
    )
    p.set_defaults(func=cmd_template)


def cmd_template(args: argparse.Namespace) -> int:
    if args.xlsx:
        book = Path(args.dir if str(args.dir).lower().endswith(".xlsx") else f"{args.dir}.xlsx")
        if book.exists():
            print(f"error: {book} exists; choose a new name", file=sys.stderr)
            return EXIT_INVALID
        book.parent.mkdir(parents=True, exist_ok=True)
        write_template_workbook(book)
        say(args, f"blank case workbook written to {book}")
        say(args, f"  fill in the sheets, then run: netopt check {book}")
        return EXIT_OK
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
        "check",
        parents=[COMMON],
        help="validate a case and summarise the network",
        description="Load a case (a folder of CSV files with settings.toml, or one .xlsx workbook), check every "
        "table against the schema and the links between them (products, sites, lanes, modes), check "
        "that every customer's demand can be reached from a plant or supplier, apply every scenario of "
        "scenarios.toml to a copy of the case and check the result, and print a summary: "
        "suppliers, plants, existing and candidate DCs, customers, products, total demand and lanes "
        "by mode.  Every problem is reported at once with its table, row and column; exit code 2 "
        "when any error is found.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.set_defaults(func=cmd_check)


def _lanes_by_mode(case: Case):
    """Lane rows per mode."""
    lanes = case_lanes(case)
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
        + (f"; {len(t['dc_sizes']):,} size options" if len(t["dc_sizes"]) else "")
        + ")",
        f"  customers   {n(t['customers'], 'customer'):>7,}",
        f"  products    {len(products):>7,}   ({len(products) - materials:,} finished, {materials:,} materials)",
        f"  demand      {demand['quantity'].sum():>15,.0f} units/year over {len(demand):,} customer-product rows"
        if not has_periods(case)
        else f"  periods     {len(t['periods']):>7,}   ({', '.join(t['periods']['period'].astype(str))}); demand per "
        "period: "
        + ", ".join(
            f"{p} {period_demand(demand, p)['quantity'].sum():,.0f}" for p in t["periods"]["period"].astype(str)
        )
        + " units/year",
        f"  modes       {len(t['modes']):>7,}"
        + (f"   ({', '.join(t['modes']['mode'].astype(str))})" if len(t["modes"]) else ""),
    ]
    if len(t["lanes"]):
        lines.append(f"  explicit lanes {len(t['lanes']):>4,}")
    mx = t.get("lane_matrix")
    if mx is not None and len(mx):
        cells = int(mx[destinations(mx)].notna().to_numpy().sum())
        lines.append(
            f"  lane matrix {len(mx):>7,} rows × {len(destinations(mx)):,} destinations ({cells:,} filled cells)"
        )
    if len(t["current_flows"]):
        cur = t["current_flows"]
        lines.append(f"  today's flows {len(cur):>5,} rows, {cur['quantity'].sum():,.0f} units/year (netopt baseline)")
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
    case = load_case(args.case)
    scenarios = parse_scenarios(case.scenarios, scenario_source(case))
    scenario_cases(case, scenarios)  # each scenario's changes applied and the result checked, as `run` does
    check_current_flows(case)  # every row of today's flows on a lane of the case, as `baseline` needs
    print_warnings(args, case)
    for line in case_summary(case):
        say(args, line)
    if scenarios:
        say(args, f"  scenarios   {len(scenarios)} checked (every change applied to a copy of the case)")
    return EXIT_OK


# --------------------------------------------------------------------------- export


def add_export(sub) -> None:
    p = sub.add_parser(
        "export",
        parents=[COMMON],
        help="convert a case between a CSV folder and one workbook",
        description="Load and check a case, then write it the other way: a CSV folder (with settings.toml and "
        "scenarios.toml) as one .xlsx workbook (a sheet per table, settings, scenarios), or a workbook as a "
        "CSV folder.  Nothing is written when the case has errors.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument("--out", required=True, metavar="PATH", help="workbook (.xlsx) or folder to write; must not exist")
    form = p.add_mutually_exclusive_group(required=True)
    form.add_argument("--xlsx", action="store_true", help="write one workbook")
    form.add_argument("--csv", action="store_true", help="write a CSV folder")
    p.set_defaults(func=cmd_export)


def cmd_export(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    try:
        out = write_case_workbook(case, args.out) if args.xlsx else write_case_csv(case, args.out)
    except FileExistsError:
        print(f"error: {args.out} exists; choose a new name", file=sys.stderr)
        return EXIT_INVALID
    n = len(case.scenarios)
    say(args, f"case written to {out}" + (f" with {n} scenario(s)" if n else ""))
    return EXIT_OK
