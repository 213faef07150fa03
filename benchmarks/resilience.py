"""Speed of the single-point-of-failure sweep: warm re-solves vs rebuilds, one worker vs all cores.

Usage::

    python benchmarks/resilience.py [--size medium] [--seed 0] [--tasks 150] [--rebuild 4] [--json FILE]

Steps, on ``synthetic_case(size, seed)`` from ``benchmarks/generator.py``:

1. base: solve the design without the safety-stock curve (time limit ``--base-time-limit`` s, gap 1 %;
   only its DC decisions matter);
2. warm: one kept held model (built once, timed apart) re-solves ``--tasks`` elements warm from the
   base basis, in this process — re-solves per second;
3. rebuild: ``--rebuild`` of the same elements done the way a plain scenario run does them without a
   kept model — apply the change to the case, rebuild lanes, network, model, compile, solve cold;
   each rebuilt objective is checked against the warm one;
4. pool: the sweep of the same ``--tasks`` elements on a local process pool of 1 worker and of
   all cores — wall time (with worker start-up and model build) and steady rate (first to last
   finished task).

Targets: warm ≥ 5× rebuild; two workers ≥ 1.8× one (steady rate).  Times depend on the machine
and on what else runs on it: the report prints the load average before and after.
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
from netopt.engine.held import HeldNetwork
from netopt.network.lanes import build_lanes
from netopt.studies.changes import element_changes
from netopt.studies.resilience import hold_resolve, run_sweep, sweep_elements
from netopt.studies.scenarios import Scenario, apply_changes
from netopt.studies.sweep_worker import held_case, make_spec, worker_state


def sample_elements(case, base, n: int, seed: int) -> pd.DataFrame:
    """``n`` elements: every site first, then lanes drawn at random (seeded)."""
    el = sweep_elements(case, base)
    sites = el[el["type"] != "lane"]
    lanes = el[el["type"] == "lane"]
    rng = np.random.default_rng(seed)
    k = min(max(0, n - len(sites)), len(lanes))
    pick = lanes.iloc[np.sort(rng.choice(len(lanes), size=k, replace=False))]
    return pd.concat([sites.head(n), pick]).reset_index(drop=True)


def rebuild_one(case, base, el: dict) -> tuple[float, float]:
    """The element's held re-solve without a kept model: (seconds, objective)."""
    t0 = time.perf_counter()
    changes = element_changes(el)
    sc_case = apply_changes(case, Scenario(el["id"], changes, resolve="hold"))
    held = base.held_openings()
    if el["type"] == "dc":
        held[el["origin"]] = False
    net = HeldNetwork(held_case(sc_case), held=held, lanes=build_lanes(sc_case))
    return time.perf_counter() - t0, float(net.base_info.objective)


def steady_rate(stamps: list[float]) -> float:
    """Tasks per second between the first and the last finished task."""
    if len(stamps) < 2 or stamps[-1] <= stamps[0]:
        return float("nan")
    return (len(stamps) - 1) / (stamps[-1] - stamps[0])


def main(argv: list[str] | None = None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", default="medium")
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--tasks", type=int, default=150, help="elements re-solved warm and on the pools")
    ap.add_argument("--rebuild", type=int, default=4, help="elements rebuilt from scratch")
    ap.add_argument("--base-time-limit", type=float, default=60.0)
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1, help="'all cores' pool size")
    ap.add_argument("--json", help="write the numbers to this file")
    a = ap.parse_args(argv)
    out: dict = {"size": a.size, "seed": a.seed, "cpus": os.cpu_count(), "load_before": os.getloadavg()}

    t0 = time.perf_counter()
    # The sweep holds safety stock at the base's levels, so the base design is solved without the
    # safety-stock cost curve (a MIP of its own): only its DC decisions are used.
    case = held_case(synthetic_case(a.size, a.seed))
    base = solve(case, time_limit=a.base_time_limit, mip_gap=1e-2)
    if not base.has_solution:
        raise SystemExit(f"the base design has no solution within {a.base_time_limit} s ({base.status})")
    out["base"] = {
        "status": base.status,
        "gap": base.gap,
        "seconds": time.perf_counter() - t0,
        "arcs": base.model_size.get("arcs"),
        "dcs_open": int(base.tables["dcs"]["open"].sum()),
    }
    print(
        f"base: {base.status}, gap {base.gap:.4f}, {out['base']['seconds']:.1f} s, {out['base']['arcs']} arcs",
        flush=True,
    )

    el = sample_elements(case, base, a.tasks, a.seed)
    rows = el.to_dict("records")
    out["tasks"] = len(rows)
    out["task_types"] = el["type"].value_counts().to_dict()

    # warm, in process
    spec = make_spec(case, base, rules="hard")
    t0 = time.perf_counter()
    st = worker_state(spec)
    build = time.perf_counter() - t0
    t0 = time.perf_counter()
    warm = {r["id"]: hold_resolve(st, r) for r in rows}
    warm_s = time.perf_counter() - t0
    out["warm"] = {
        "model_build_seconds": build,
        "seconds": warm_s,
        "resolves_per_second": len(rows) / warm_s,
        "mean_highs_seconds": float(np.mean([w["seconds"] for w in warm.values()])),
    }
    print(
        f"warm: model built once in {build:.1f} s; {len(rows)} re-solves in {warm_s:.1f} s = "
        f"{len(rows) / warm_s:.2f}/s",
        flush=True,
    )

    # rebuild, in process (a spread of element types)
    pick = [rows[i] for i in np.linspace(0, len(rows) - 1, num=min(a.rebuild, len(rows))).astype(int)]
    secs, worst = [], 0.0
    for r in pick:
        s, obj = rebuild_one(case, base, r)
        secs.append(s)
        w = warm[r["id"]]["total_cost"] - float(spec.base_cost.get("safety_stock", 0.0))
        worst = max(worst, abs(obj - w) / max(1.0, abs(obj)))
        print(f"  rebuild {r['id']}: {s:.1f} s", flush=True)
    out["rebuild"] = {
        "elements": [r["id"] for r in pick],
        "seconds": secs,
        "resolves_per_second": len(secs) / sum(secs),
        "max_rel_objective_diff_vs_warm": worst,
    }
    out["warm_over_rebuild"] = out["warm"]["resolves_per_second"] / out["rebuild"]["resolves_per_second"]
    print(
        f"rebuild: {np.mean(secs):.1f} s each = {out['rebuild']['resolves_per_second']:.3f}/s; "
        f"warm/rebuild = {out['warm_over_rebuild']:.0f}x; objectives agree to {worst:.1e}",
        flush=True,
    )

    # pools (the forkserver is started first so neither pool's time includes it)
    from concurrent.futures import ProcessPoolExecutor

    from netopt.studies.sweep_exec import pool_context as _pool_context

    t0 = time.perf_counter()
    with ProcessPoolExecutor(1, mp_context=_pool_context()) as ex:
        ex.submit(os.getpid).result()
    out["forkserver_start_seconds"] = time.perf_counter() - t0
    ids = [r["id"] for r in rows]
    for n in sorted({1, a.workers}):
        stamps: list[float] = []
        cpu: list[float] = []

        def seen(row, stamps=stamps, cpu=cpu):
            stamps.append(time.perf_counter())
            cpu.append(row["cpu_seconds"])

        t0 = time.perf_counter()
        _table, info = run_sweep(case, base, workers=n, progress=False, elements=ids, rules="hard", on_row=seen)
        wall = time.perf_counter() - t0
        window = stamps[-1] - stamps[0] if len(stamps) > 1 else float("nan")
        # Share of a CPU each worker got while tasks ran (1.0 = a core of its own): the CPU time of the
        # tasks after the first, over n workers × the time between the first and the last result.
        cpu_share = sum(cpu[1:]) / (n * window) if window > 0 else float("nan")
        out[f"pool_{n}"] = {
            "wall_seconds": wall,
            "wall_rate": len(ids) / wall,
            "steady_rate": steady_rate(stamps),
            "cpu_seconds_per_task": float(np.mean(cpu)),
            "cpu_share_per_worker": cpu_share,
            "ran_on": info["ran_on"],
        }
        print(
            f"pool of {n}: wall {wall:.1f} s ({len(ids) / wall:.2f}/s incl. start-up and model build), "
            f"steady {steady_rate(stamps):.2f}/s, {np.mean(cpu):.3f} CPU s per task, each worker got "
            f"{cpu_share:.0%} of a CPU",
            flush=True,
        )
    if a.workers > 1:
        p1, pn = out["pool_1"], out[f"pool_{a.workers}"]
        out["speedup_steady"] = pn["steady_rate"] / p1["steady_rate"]
        out["speedup_wall"] = pn["wall_rate"] / p1["wall_rate"]
        print(f"{a.workers} workers vs 1: steady {out['speedup_steady']:.2f}x, wall {out['speedup_wall']:.2f}x")
    out["load_after"] = os.getloadavg()
    print(f"load average before {out['load_before']}, after {out['load_after']} on {out['cpus']} CPUs")
    if a.json:
        Path(a.json).write_text(json.dumps(out, indent=2, default=str))
    return out


if __name__ == "__main__":
    main()
