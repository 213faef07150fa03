"""CLI verbs of landed cost as it is priced today: ``netopt baseline`` (today's flows costed, nothing optimised)."""

from __future__ import annotations

import argparse
import json
import sys

from netopt.cli.common import COMMON, EXIT_OK, EXIT_SOLVER, print_warnings, say
from netopt.data.io import load_case
from netopt.engine.baseline import baseline_summary, cost_current_flows, cost_verified
from netopt.present.files import _jsonable, atomic_folder, write_result_files
from netopt.present.report import write_report
from netopt.present.terminal import print_baseline


def add_baseline(sub) -> None:
    p = sub.add_parser(
        "baseline",
        parents=[COMMON],
        help="cost today's flows (table current_flows) with the model, to calibrate it before any saving",
        description="Cost the network as it runs today: the lanes, modes and volumes of the case's current_flows "
        "table priced with the same cost model as a solve (supply, production, DC fixed and handling, freight, "
        "inventory, carbon), nothing optimised. Each cost component is set beside the actual spend the "
        "settings' [actual_spend] states (difference in %), and the rules of the case that today's flows do "
        "not meet are listed. Writes baseline_cost.csv, baseline_rules.csv, the usual result tables, "
        "results.xlsx, summary.json and an HTML report.",
    )
    p.add_argument("case", metavar="CASE", help="case folder (settings.toml + CSV tables) or .xlsx workbook")
    p.add_argument(
        "--out",
        required=True,
        metavar="DIR",
        help="results folder (written completely or not at all; replaces only a folder netopt wrote, "
        "never a case or other files)",
    )
    p.add_argument("--json", action="store_true", help="print the summary as JSON on stdout instead of tables")
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_baseline)


def cmd_baseline(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    r = cost_current_flows(case)
    extra = baseline_summary(r)
    with atomic_folder(args.out) as tmp:
        write_result_files(r, tmp, summary_extra=extra)
        if not args.no_report:
            write_report(r, tmp / "report.html")
    if args.json:
        print(json.dumps(_jsonable(r.summary() | extra), indent=2))
    elif not args.quiet:
        print_baseline(r)
        say(args, f"results written to {args.out}")
    if not cost_verified(r):
        print("error: the independent recomputation of today's cost disagrees with the model's", file=sys.stderr)
        return EXIT_SOLVER
    return EXIT_OK
