"""CLI verb of the robust-network study: ``netopt robust`` (a thin layer over :mod:`netopt.present.robust`)."""

from __future__ import annotations

import argparse
import sys

from netopt.cli.common import COMMON, EXIT_INFEASIBLE, EXIT_OK, EXIT_SOLVER, number_option, print_warnings, say
from netopt.data.io import load_case
from netopt.data.limits import MAX_WORKERS
from netopt.present.robust import run_robust_folder


def add_robust(sub) -> None:
    p = sub.add_parser(
        "robust",
        parents=[COMMON],
        help="a network that holds up across a new product's demand scenarios: two-stage plan, VSS, EVPI, regret",
        description="Turn the case's launch (launches.csv: a new product, its analogue, low/base/high factors and "
        "probabilities; or a Bass diffusion) into demand scenarios, solve the two-stage model (DC decisions "
        "shared by every scenario, flows per scenario; [robust] objective = expected or worst_case, cost_bound), "
        "hold every candidate plan (each scenario's own, the mean-value plan, the two-stage plan) in every "
        "scenario, and write summary.json (objective, vss, evpi in currency per year), regret.csv (one row per "
        "candidate plan), plan_costs.csv, plan_dcs.csv, scenario_demand.csv, robust.xlsx and a report.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument("--out", required=True, metavar="DIR", help="results folder (written completely or not at all)")
    p.add_argument(
        "--workers",
        type=number_option("workers", "int", "", 0, MAX_WORKERS, "0 = in this process"),
        default=0,
        metavar="N",
        help="local processes holding the candidate plans in the scenarios (default 0: in this process)",
    )
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_robust)


def cmd_robust(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    study = run_robust_folder(
        case, args.out, workers=args.workers, report=not args.no_report, quiet=args.quiet, say=lambda s: say(args, s)
    )
    say(args, f"results written to {args.out}")
    if study.summary.get("objective") is None:
        print("error: the two-stage model has no plan; see summary.json", file=sys.stderr)
        return EXIT_INFEASIBLE
    pc = study.plan_costs
    if not pc.loc[pc["cost"].notna(), "verified"].astype(bool).all():
        print("error: an independent check of a held plan failed; see plan_costs.csv", file=sys.stderr)
        return EXIT_SOLVER
    return EXIT_OK
