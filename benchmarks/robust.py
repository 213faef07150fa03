"""Speed of the two-stage study: the extensive form (every scenario's copy in one MIP) against the held
regret table (every candidate plan held in every scenario by warm LP re-solves).

Usage::

    python benchmarks/robust.py [--size medium] [--scenarios 10] [--seed 0] [--time-limit 600]
                                [--solve-time-limit 120] [--gap 0.001] [--json FILE]

Steps, on ``synthetic_case(size, seed)`` from ``benchmarks/generator.py`` (safety stock off):

1. scenarios: ``--scenarios`` demand scenarios, each product's demand × a seeded factor within
   1 ± ``--spread`` (0.15), equally likely;
2. own plans: each scenario solved on its own and the mean-value case (time limit
   ``--solve-time-limit`` s each, gap ``--gap``) — the candidates of the regret table;
3. held regret: every distinct candidate held in every scenario, warm (``netopt.studies.robust.evaluate_plan``:
   one held model per plan built on the mean-value case, each scenario's demand set by bound changes);
4. extensive form: ``netopt.engine.two_stage.solve_two_stage`` of all scenarios started from the cheapest
   candidate (as ``netopt robust`` does), time limit ``--time-limit`` s, gap ``--gap``; and again cold (no
   start) unless ``--skip-cold``.

Times depend on the machine and on what else runs on it: the report prints the load average before and after.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generator import synthetic_case

from netopt.api import solve
from netopt.data.case import Case
from netopt.engine.two_stage import solve_two_stage
from netopt.network.lanes import case_lanes
from netopt.studies.robust import evaluate_plan, evaluation_spec


def scenario_case(case: Case, factors: dict[str, float], name: str) -> Case:
    """``case`` with each product's demand × its factor."""
    c = case.copy()
    dem = c.tables["demand"]
    c.tables["demand"] = dem.assign(quantity=dem["quantity"] * dem["product"].map(factors).fillna(1.0))
    c.name = name
    return c


def main(argv: list[str] | None = None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", default="medium")
    ap.add_argument("--scenarios", type=int, default=10)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--time-limit", type=float, default=600.0)
    ap.add_argument("--solve-time-limit", type=float, default=120.0)
    ap.add_argument("--gap", type=float, default=1e-3)
    ap.add_argument("--spread", type=float, default=0.15, help="each product's factor is 1 ± up to this")
    ap.add_argument("--skip-cold", action="store_true", help="leave out the extensive form without a start")
    ap.add_argument("--json", default="")
    a = ap.parse_args(argv)
    out: dict = {"size": a.size, "scenarios": a.scenarios, "seed": a.seed, "cpus": os.cpu_count()}
    out["load_before"] = os.getloadavg()
    case = synthetic_case(a.size, a.seed)
    case.settings["solver"]["threads"] = 1
    rng = np.random.default_rng(a.seed + 1)
    products = sorted(set(case.tables["demand"]["product"]))
    names = [f"s{i}" for i in range(a.scenarios)]
    factors = [dict(zip(products, rng.uniform(1 - a.spread, 1 + a.spread, len(products)).round(3))) for _ in names]
    cases = [scenario_case(case, f, n) for f, n in zip(factors, names)]
    probs = np.full(len(names), 1.0 / len(names))
    mean = scenario_case(case, {p: float(np.mean([f[p] for f in factors])) for p in products}, "mean")
    lanes = case_lanes(mean)

    t0 = time.perf_counter()
    plans: dict[str, dict] = {}
    for n, ck in [*zip(names, cases), ("mean_value", mean)]:
        r = solve(ck, lanes=lanes, time_limit=a.solve_time_limit, mip_gap=a.gap, diagnose=False)
        if r.has_solution:
            plans[n] = r.held_openings()
        else:
            out.setdefault("own_without_plan", {})[n] = r.status
    out["own_solves_s"] = time.perf_counter() - t0
    distinct = {" ".join(sorted(d for d, v in h.items() if v)): n for n, h in plans.items()}
    out["candidates"], out["distinct_candidates"] = len(plans), len(distinct)
    print(f"own solves: {out['own_solves_s']:.1f} s, {len(plans)} plans, {len(distinct)} distinct", flush=True)

    spec = evaluation_spec(names, cases, mean, lanes, "warm")
    t0 = time.perf_counter()
    rows = []
    for i, n in enumerate(distinct.values()):
        rows += evaluate_plan(spec, {"id": i, "plan": n, "held": plans[n]})["rows"]
    out["held_regret_s"] = time.perf_counter() - t0
    costs = pd.DataFrame(rows)
    out["held_resolves"] = len(costs)
    out["held_all_verified"] = bool(costs["verified"].all())
    c = costs.pivot(index="plan", columns="scenario", values="cost")[names]
    expected = (c * probs).sum(axis=1, skipna=False).dropna()
    if expected.empty:
        raise SystemExit("no candidate plan serves every scenario: lower --spread")
    out["best_candidate_expected"] = float(expected.min())
    print(f"held regret: {out['held_regret_s']:.1f} s for {len(costs)} re-solves", flush=True)

    runs = [("started", plans[str(expected.idxmin())])] + ([] if a.skip_cold else [("cold", None)])
    for label, start in runs:
        t0 = time.perf_counter()
        ts = solve_two_stage(cases, names, probs, lanes=lanes, time_limit=a.time_limit, mip_gap=a.gap, start=start)
        out[f"extensive_{label}"] = {
            "seconds": time.perf_counter() - t0,
            "status": ts.status,
            "objective": ts.objective,
            "gap": ts.gap,
            "size": ts.size,
        }
        print(f"extensive form ({label}): {out[f'extensive_{label}']}", flush=True)
    out["load_after"] = os.getloadavg()
    print(json.dumps(out, indent=1, default=str))
    if a.json:
        Path(a.json).write_text(json.dumps(out, indent=1, default=str), encoding="utf-8")
    return out


if __name__ == "__main__":
    main()
