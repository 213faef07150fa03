"""CLI verbs that solve: ``netopt solve`` (one case) and ``netopt run`` (base and scenarios).

Thin layers over :func:`netopt.solve` and :func:`netopt.studies.scenarios.run_scenarios`; the
terminal output is rich tables, with ``--quiet`` and ``--json`` for scripts.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import time

from netopt.cli.common import (
    COMMON,
    EXIT_INFEASIBLE,
    EXIT_OK,
    EXIT_SOLVER,
    number_option,
    print_warnings,
    say,
    setting_option,
    warn,
)
from netopt.data.io import load_case
from netopt.data.limits import CONNECT_TIMEOUT_S, MAX_FRONTIER_POINTS, MAX_WORKERS
from netopt.engine.solve import solve
from netopt.present.files import (
    _jsonable,
    atomic_folder,
    write_result_csv,
    write_result_files,
    write_run,
    write_workbook,
)
from netopt.present.report import write_report
from netopt.present.stress import stress_command
from netopt.present.terminal import (
    money_text,
    print_comparison,
    print_dc_matrix,
    print_frontier,
    print_mix_changes,
    print_result,
)
from netopt.studies.comparison import dc_decision_matrix, largest_share_changes, mode_mix_matrix
from netopt.studies.frontier import sweep
from netopt.studies.scenarios import parse_scenarios, run_scenarios, scenario_source

SOLVER_OPTIONS = argparse.ArgumentParser(add_help=False)
SOLVER_OPTIONS.add_argument(
    "--out",
    required=True,
    metavar="DIR",
    help="results folder (written completely or not at all; replaces only a folder netopt wrote, "
    "never a case or other files)",
)
SOLVER_OPTIONS.add_argument(
    "--time-limit",
    type=setting_option("solver", "time_limit_s"),
    metavar="S",
    help="time limit of the whole solve in seconds (lanes, model, plan search and the MIP search); the best "
    "plan found is kept with its proven gap (default: settings)",
)
SOLVER_OPTIONS.add_argument(
    "--gap",
    type=setting_option("solver", "mip_gap"),
    metavar="G",
    help="stop when the plan is proven within G of the best possible cost, e.g. 0.001 = 0.1%% (default: settings)",
)
SOLVER_OPTIONS.add_argument(
    "--threads",
    type=setting_option("solver", "threads"),
    metavar="N",
    help="solver threads (default: settings, usually 1)",
)
SOLVER_OPTIONS.add_argument(
    "--json", action="store_true", help="print the summary as JSON on stdout (for scripts) instead of tables"
)
SOLVER_OPTIONS.add_argument("--no-report", action="store_true", help="skip the HTML report")


def _progress_printer(args):
    """Progress lines: one per stage, and one live line for the search (elapsed, best plan, bound, gap, and
    which method found the plan), rewritten in place on a terminal and printed every 5 s otherwise."""
    if getattr(args, "quiet", False) or getattr(args, "json", False):
        return None
    t0 = time.perf_counter()
    live = sys.stdout.isatty()
    last = [-math.inf]
    pending = [False]  # a live line is showing and needs a line break before the next stage line

    def progress(stage, info=None):
        now = time.perf_counter() - t0
        info = info or {}
        if stage == "progress":
            if now - last[0] < (0.5 if live else 5.0):
                return
            last[0] = now
            gap = info.get("gap")
            bound = info.get("bound")
            line = (
                f"[{now:7.1f}s]   searching: best plan {money_text(info.get('objective'))}"
                + (f" ({info['method']})" if info.get("method") else "")
                + (f", bound {money_text(bound)}" if isinstance(bound, float) and math.isfinite(bound) else "")
                + (f", gap {gap:.3%}" if isinstance(gap, float) and math.isfinite(gap) else "")
            )
            if live:
                print("\r" + line.ljust(100), end="", flush=True)
                pending[0] = True
            else:
                print(line, flush=True)
            return
        text = {
            "lanes": lambda: f"lanes: {info.get('lanes', 0):,} lanes generated and read",
            "build": lambda: f"model: {info.get('arcs', 0):,} flow arcs",
            "solve": lambda: (
                f"solving: {info.get('columns', 0):,} variables ({info.get('binaries', 0):,} yes/no), "
                f"{info.get('rows', 0):,} constraints"
            ),
            "plan search": lambda: str(info.get("message", "")),
            "verified": lambda: (
                f"verification: {'passed' if info.get('passed') else 'FAILED'} "
                f"(largest violation {info.get('largest', 0):.2e})"
            ),
            "diagnose": lambda: "no feasible plan: re-solving with penalised slack to find what cannot be met",
        }.get(stage)
        if text:
            if pending[0]:
                print(flush=True)
                pending[0] = False
            print(f"[{now:7.1f}s] {text()}", flush=True)

    return progress


# --------------------------------------------------------------------------- solve


def add_solve(sub) -> None:
    p = sub.add_parser(
        "solve",
        parents=[COMMON, SOLVER_OPTIONS],
        help="design the network for one case and write the results",
        description="Choose DC openings, supplier splits and transport modes at the least total landed cost for "
        "the case, check the plan independently, and write flows, DC decisions, supplier shares, "
        "mode mix, service, cost breakdown and KPIs as CSV files, an Excel workbook, summary.json "
        "and an HTML report.",
    )
    p.add_argument("case", metavar="CASE", help="case folder (settings.toml + CSV tables) or .xlsx workbook")
    p.set_defaults(func=cmd_solve)


def cmd_solve(args: argparse.Namespace) -> int:
    t0 = time.perf_counter()
    case = load_case(args.case)
    load_s = time.perf_counter() - t0
    print_warnings(args, case)
    r = solve(
        case, time_limit=args.time_limit, mip_gap=args.gap, threads=args.threads, progress=_progress_printer(args)
    )
    r.timings = {"load": load_s, **r.timings}  # every stage timed in summary.json, reading the case first
    with atomic_folder(args.out) as tmp:
        write_result_files(r, tmp)
        if r.has_solution and not args.no_report:
            write_report(r, tmp / "report.html")
    if args.json:
        print(json.dumps(_json(r.summary()), indent=2))
    elif not args.quiet:
        print_result(r)
        say(args, f"results written to {args.out}")
    if r.diagnosis is not None or r.status in ("infeasible", "unbounded"):
        rows = 0 if r.diagnosis is None else len(r.diagnosis)
        print(  # said even with -q: the verdict is the answer
            f"infeasible: the case cannot be met as stated; {rows} diagnosis row(s) in {args.out}/diagnosis.csv",
            file=sys.stderr,
        )
        return EXIT_INFEASIBLE
    if not r.has_solution:
        print(f"error: no plan ({r.status}): {r.message}", file=sys.stderr)
        return EXIT_SOLVER
    if r.verification is not None and not r.verification.passed:
        print(
            f"error: the independent check failed ({r.verification.largest_violation_rule}: "
            f"{r.verification.largest_violation:.3g})",
            file=sys.stderr,
        )
        return EXIT_SOLVER
    return EXIT_OK


def _json(obj):
    return _jsonable(obj)


# --------------------------------------------------------------------------- run


def add_run(sub) -> None:
    p = sub.add_parser(
        "run",
        parents=[COMMON, SOLVER_OPTIONS],
        help="solve the base case and every what-if scenario, and compare them side by side",
        description="Solve the base case and the scenarios in the case's scenarios.toml (new DCs, closures, lost "
        "lanes, suppliers or plants, supplier caps, demand and cost changes). Disruptions can be "
        "re-solved holding the network (short-term recovery, DC decisions kept) and redesigning "
        "(long-term). Writes comparison.csv/.md, results.xlsx, summary.json, report.html and one "
        "sub-folder per scenario.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument("--only", metavar="NAMES", help="comma-separated scenario names to run (the base always runs)")
    p.add_argument(
        "--cold",
        action="store_true",
        help="rebuild every hold-the-network re-solve instead of re-solving warm (for comparisons)",
    )
    p.add_argument("--list", action="store_true", help="list the scenarios and exit")
    p.set_defaults(func=cmd_run)


def cmd_run(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    scenarios = parse_scenarios(case.scenarios, scenario_source(case))
    if args.list:
        for s in scenarios:
            print(f"{s.name:32s} {s.resolve:9s} {s.description}")
        return EXIT_OK
    names = [n.strip() for n in args.only.split(",") if n.strip()] if args.only else None
    if case.settings["solver"] is not None:
        if args.time_limit is not None:
            case.settings["solver"]["time_limit_s"] = args.time_limit
        if args.gap is not None:
            case.settings["solver"]["mip_gap"] = args.gap
        if args.threads is not None:
            case.settings["solver"]["threads"] = args.threads
    n_total = 1 + sum(2 if s.resolve == "both" else 1 for s in scenarios if names is None or s.name in names)
    quiet = args.quiet or args.json
    if quiet:
        run = run_scenarios(case, names=names, scenarios=scenarios, warm=not args.cold)
    else:
        from rich.markup import escape
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

        with Progress(
            TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(), transient=False
        ) as bar:
            task = bar.add_task("scenarios", total=n_total)

            def progress(event, info):
                if event == "start":
                    bar.update(task, description=escape(f"solving {info['name']}"))
                elif event == "done":
                    bar.advance(task)
                    bar.console.print(escape(f"  {info['name']}: {info['status']} in {info['seconds']:.1f}s"))

            run = run_scenarios(case, names=names, scenarios=scenarios, progress=progress, warm=not args.cold)
    write_run(run, args.out, report=not args.no_report)
    if args.json:
        print(json.dumps(_json(run.comparison.to_dict(orient="records")), indent=2))
    elif not args.quiet:
        print_comparison(run.comparison)
        print_dc_matrix(dc_decision_matrix(run.dc_decisions))
        print_mix_changes(mode_mix_matrix(run.mode_mix_changes), largest_share_changes(run.supplier_share_changes, 10))
        say(
            args,
            f"results written to {args.out} (comparison.csv, comparison.md, comparison.xlsx, results.xlsx, report.html)",
        )
    if not run.base.has_solution:
        print(f"error: the base case has no plan ({run.base.status}): {run.base.message}", file=sys.stderr)
        return EXIT_INFEASIBLE if run.base.status in ("infeasible", "unbounded") else EXIT_SOLVER
    comp = run.comparison
    planned = comp["total_cost"].notna()
    if not comp.loc[planned, "verified"].fillna(False).astype(bool).all():
        print("error: an independent check failed; see verification.csv in the scenario folders", file=sys.stderr)
        return EXIT_SOLVER
    for _, row in comp[~planned].iterrows():
        warn(
            args,
            f"{row['scenario']}: {row['status']}, no plan" + (f" ({row['diagnosis']})" if row.get("diagnosis") else ""),
        )
    return EXIT_OK


# --------------------------------------------------------------------------- stress


def add_stress(sub) -> None:
    p = sub.add_parser(
        "stress",
        parents=[COMMON],
        help="single points of failure and time-to-survive exposure of the base network",
        description="Take each supplier, plant, open DC and used lane out of the solved base network one at a "
        "time, re-route holding the network (and optionally redesign), and rank them by recovery cost "
        "and lost demand. Then, per site, the time the network survives on its stock (time to "
        "survive) against the time to restore it (time to recover), and the demand lost meanwhile. "
        "Runs on all local cores, or on a Dask cluster; an interrupted sweep resumes where it stopped.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument(
        "--out",
        required=True,
        metavar="DIR",
        help="results folder (spof_ranking.csv, exposure.csv, stress.xlsx, summary.json; the sweep journal lets an interrupted run resume)",
    )
    p.add_argument(
        "--workers",
        type=number_option("workers", "int", "", 0, MAX_WORKERS, "0 = in this process"),
        metavar="N",
        help=f"local worker processes, 0 to {MAX_WORKERS} (default: all cores; 0 = in this process); each ends "
        "when this process ends",
    )
    p.add_argument(
        "--scheduler",
        metavar="ADDR",
        help="address of a running Dask scheduler (e.g. tcp://10.0.0.5:8786) to run the sweep there; "
        "connected before the base is solved",
    )
    p.add_argument(
        "--connect-timeout",
        type=number_option("connect-timeout", "float", "s", 1e-9, None, "time to reach the scheduler"),
        default=CONNECT_TIMEOUT_S,
        metavar="S",
        help=f"seconds to reach the --scheduler before giving up with exit code 2 (default {CONNECT_TIMEOUT_S:g})",
    )
    p.add_argument("--redesign", action="store_true", help="also re-optimise DC decisions for each loss (slower)")
    p.add_argument("--only", metavar="TYPES", help="comma-separated element types to sweep: supplier,plant,dc,lane")
    p.add_argument("--fresh", action="store_true", help="ignore the journal of an earlier, interrupted sweep")
    p.add_argument(
        "--hard-rules",
        action="store_true",
        help="never bend service windows, share limits or the CO2 cap during a disruption "
        "(default: bending is allowed at each rule's base shadow price, and reported; a service class "
        "that prices late delivery is never bent, its late units are priced as in `netopt run`)",
    )
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_stress)


def cmd_stress(args: argparse.Namespace) -> int:
    only = [x.strip() for x in args.only.split(",") if x.strip()] if args.only else None
    return stress_command(
        args.case,
        args.out,
        workers=args.workers,
        scheduler=args.scheduler,
        redesign=args.redesign,
        only=only,
        fresh=args.fresh,
        rules="hard" if args.hard_rules else "priced",
        quiet=args.quiet,
        report=not args.no_report,
        connect_timeout_s=args.connect_timeout,
    )


# --------------------------------------------------------------------------- frontier


def add_frontier(sub) -> None:
    p = sub.add_parser(
        "frontier",
        parents=[COMMON],
        help="cost–CO2 trade-off curve: the cheapest network at each CO2 level",
        description="Solve the cost-optimal and the CO2-minimal network, then the cheapest network at N-2 CO2e caps "
        "evenly between them (epsilon constraint). Each point lists total cost, CO2e, DCs open and the "
        "mode mix, and the cost per tonne abated. A scenario can ask for the same with "
        "frontier_points = N in scenarios.toml (then `netopt run` writes it).",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument(
        "--out", required=True, metavar="DIR", help="results folder (frontier.csv, frontier.xlsx, report.html)"
    )
    p.add_argument(
        "--points",
        type=number_option("points", "int", "", 2, MAX_FRONTIER_POINTS, "each point is one full solve"),
        default=5,
        metavar="N",
        help=f"points on the curve, ends included, 2 to {MAX_FRONTIER_POINTS} (default 5)",
    )
    p.add_argument("--json", action="store_true", help="print the frontier as JSON on stdout")
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_frontier)


def cmd_frontier(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    curve = sweep(case, points=args.points)
    table = curve.table
    with atomic_folder(args.out) as tmp:
        write_result_csv(table, tmp / "frontier.csv")
        write_workbook({"frontier": table}, tmp / "frontier.xlsx")
        if curve.cost_optimal is not None and not args.no_report:
            write_report(curve.cost_optimal, tmp / "report.html", extra={"frontier": table})
    if args.json:
        print(json.dumps(_json(table.to_dict(orient="records")), indent=2))
    elif not args.quiet:
        print_frontier(table)
        say(args, f"results written to {args.out}")
    return EXIT_OK if table["status"].isin(["optimal", "time_limit"]).all() else EXIT_SOLVER
