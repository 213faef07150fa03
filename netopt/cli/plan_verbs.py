"""CLI verbs of the planning studies: ``netopt classify`` (ABC/XYZ classes) and ``netopt sites``
(candidate DC sites and the DC-count curve).  Thin layers over :mod:`netopt.present.planning`."""

from __future__ import annotations

import argparse
import sys

from netopt.cli.common import COMMON, EXIT_INVALID, EXIT_OK, EXIT_SOLVER, number_option, print_warnings, say
from netopt.data.io import load_case
from netopt.data.limits import MAX_WORKERS
from netopt.network.centres import DEFAULT_TOLERANCE_KM
from netopt.present.planning import run_classify, run_sites
from netopt.studies.classify import DEFAULT_ITEM_BOUNDS, DEFAULT_VALUE_BOUNDS, MEASURES, Rule, parse_class_map
from netopt.studies.sites import WEIGHT_BASES


def _pair(text: str, what: str, top: float = 1.0) -> tuple[float, float]:
    parts = [p.strip() for p in str(text).split(",")]
    try:
        a, b = (float(p) for p in parts)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{what}: give two shares as A,B (e.g. 0.8,0.95), not {text!r}") from None
    if not 0 < a < b <= top:
        raise argparse.ArgumentTypeError(
            f"{what}: need 0 < {a:g} < {b:g}" + (f" ≤ {top:g}" if top < float("inf") else "")
        )
    return a, b


def add_classify(sub) -> None:
    p = sub.add_parser(
        "classify",
        parents=[COMMON],
        help="ABC (and XYZ) classes of products and customers by usage value, revenue, margin or volume",
        description="Rank the finished products and the customers by annual usage value (demand × unit value), "
        "revenue or margin (needs products.unit_price) or volume, and split them into classes A, B and C by "
        "share of the measure (default 80 % / 95 %) or by share of items; optionally XYZ by demand "
        "variability. Writes abc_products.csv, abc_customers.csv, abc_summary.csv, classes.xlsx and a "
        "Pareto report; --service-by-class / --csl-by-class also write the case with the classes as its "
        "customers' service classes and its products' cycle service levels (safety stock follows the class).",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument("--out", required=True, metavar="DIR", help="results folder (written completely or not at all)")
    p.add_argument(
        "--measure", choices=MEASURES, default="usage_value", help="what ranks the items (default usage_value)"
    )
    p.add_argument(
        "--by-items",
        action="store_true",
        help=f"set class boundaries by share of items (default {DEFAULT_ITEM_BOUNDS[0]:g},{DEFAULT_ITEM_BOUNDS[1]:g}) "
        f"instead of share of the measure (default {DEFAULT_VALUE_BOUNDS[0]:g},{DEFAULT_VALUE_BOUNDS[1]:g})",
    )
    p.add_argument(
        "--bounds",
        metavar="A,B",
        help="the two class boundaries as shares, e.g. 0.8,0.95 (A below the first, B below the second)",
    )
    p.add_argument(
        "--xyz", metavar="X,Y", nargs="?", const="0.25,0.5", help="also XYZ by demand CV (bounds, default 0.25,0.5)"
    )
    p.add_argument(
        "--service-by-class",
        metavar="A=CLS,B=CLS,C=CLS",
        help="write case/ with each customer in the service class of its ABC class (classes of service_classes.csv)",
    )
    p.add_argument(
        "--csl-by-class",
        metavar="A=0.98,B=0.95,C=0.9",
        help="write case/ with each product's cycle service level set by its ABC class (its safety stock follows)",
    )
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_classify)


def cmd_classify(args: argparse.Namespace) -> int:
    try:
        basis = "items" if args.by_items else "value"
        a, b = (
            _pair(args.bounds, "--bounds")
            if args.bounds
            else (DEFAULT_ITEM_BOUNDS if args.by_items else DEFAULT_VALUE_BOUNDS)
        )
        xyz = _pair(args.xyz, "--xyz", float("inf")) if args.xyz else None  # a CV may exceed 1
        service = parse_class_map(args.service_by_class, "--service-by-class", False) if args.service_by_class else None
        csl = parse_class_map(args.csl_by_class, "--csl-by-class", True) if args.csl_by_class else None
    except (argparse.ArgumentTypeError, ValueError) as e:
        print(f"error: {e}", file=sys.stderr)
        return EXIT_INVALID
    case = load_case(args.case)
    print_warnings(args, case)
    run_classify(case, args.out, args.measure, Rule(basis, a, b), xyz, service, csl, not args.no_report, args.quiet)
    say(args, f"results written to {args.out}" + (" (with case/: the case with its classes)" if service or csl else ""))
    return EXIT_OK


def add_sites(sub) -> None:
    p = sub.add_parser(
        "sites",
        parents=[COMMON],
        help="candidate DC sites from the demand map, and the cost of 1, 2, … N open DCs",
        description="Find each customer region's demand-weighted centre of gravity (Weiszfeld on the sphere) and "
        "k weighted clusters of customers by great-circle distance, snap each proposed site to the nearest "
        "city of an offline list (GeoNames, CC BY 4.0), and write them as dcs.csv rows "
        "(candidate_sites.csv). With --max-dcs N, solve the network with the proposed sites added and "
        "exactly 1 … N DCs open (dc_count_curve.csv), and mark the cheapest.",
    )
    p.add_argument("case", metavar="CASE", help="case folder or .xlsx workbook")
    p.add_argument("--out", required=True, metavar="DIR", help="results folder (written completely or not at all)")
    p.add_argument(
        "--k",
        type=number_option("k", "int", "", 1, None, "one proposed site per cluster"),
        metavar="N",
        help="clusters, i.e. proposed sites (default: one per customer region)",
    )
    p.add_argument(
        "--from-regions", action="store_true", help="propose each region's centre of gravity instead of clusters"
    )
    p.add_argument(
        "--weight", choices=WEIGHT_BASES, default="tonnes", help="weight customers by tonnes (default) or units"
    )
    p.add_argument(
        "--tolerance-km",
        type=number_option("tolerance-km", "float", "km", 1e-9, 1000, "the Weiszfeld step that ends the iteration"),
        default=DEFAULT_TOLERANCE_KM,
        metavar="KM",
        help=f"stop the Weiszfeld iteration when a step is shorter than this (default {DEFAULT_TOLERANCE_KM:g} km)",
    )
    p.add_argument(
        "--min-population",
        type=number_option("min-population", "int", "", 0, None, "inhabitants of a city a site may snap to"),
        default=0,
        metavar="N",
        help="snap only to cities of at least N inhabitants (the list holds cities of 15,000+)",
    )
    for f, unit in (("fixed-cost", "currency/yr"), ("capacity", "units/yr"), ("handling-cost", "currency/unit")):
        p.add_argument(
            f"--{f}",
            type=number_option(f, "float", unit, 0, None, "a proposed site's figure"),
            metavar="X",
            help=f"{f.replace('-', ' ')} of each proposed site, {unit} (default: median of the case's candidate DCs)",
        )
    p.add_argument(
        "--k-sweep",
        type=number_option("k-sweep", "int", "", 0, None, "one clustering per k"),
        default=0,
        metavar="K",
        help="also cluster for k = 1 … K and tabulate the demand-weighted km to the nearest centre "
        "(cluster_sweep.csv), to choose --k (default 0: no sweep)",
    )
    p.add_argument(
        "--max-dcs",
        type=number_option("max-dcs", "int", "", 0, None, "each point is one full solve"),
        default=0,
        metavar="N",
        help="also solve with exactly 1 … N open DCs, the proposed sites added (default 0: no curve)",
    )
    p.add_argument(
        "--workers",
        type=number_option("workers", "int", "", 0, MAX_WORKERS, "0 = in this process"),
        metavar="N",
        help="local processes for the curve's solves (default: one per point up to the cores; 0 = in this process)",
    )
    p.add_argument("--no-report", action="store_true", help="skip the HTML report")
    p.set_defaults(func=cmd_sites)


def cmd_sites(args: argparse.Namespace) -> int:
    case = load_case(args.case)
    print_warnings(args, case)
    costs = {"fixed_cost": args.fixed_cost, "capacity": args.capacity, "handling_cost": args.handling_cost}
    tables = run_sites(
        case,
        args.out,
        k=args.k,
        from_regions=args.from_regions,
        weight_basis=args.weight,
        tol_km=args.tolerance_km,
        min_city_population=args.min_population,
        costs=costs,
        max_dcs=args.max_dcs,
        k_sweep=args.k_sweep,
        workers=args.workers,
        report=not args.no_report,
        quiet=args.quiet,
        say=lambda s: say(args, s),
    )
    say(args, f"results written to {args.out}")
    curve = tables.get("dc_count_curve")
    if curve is not None and not curve.loc[curve["total_cost"].notna(), "verified"].astype(bool).all():
        print("error: an independent check of a curve point failed; see dc_count_curve.csv", file=sys.stderr)
        return EXIT_SOLVER
    return EXIT_OK
