"""Capacitated facility location: netopt against the textbook model handed straight to HiGHS.

Instances follow the generation scheme of Cornuéjols, Sridharan & Thizy, "A comparison of
heuristics and relaxations for the capacitated plant location problem", EJOR 50 (1991)
(from memory): n facilities and m customers uniform in the unit square; demand
d_j ~ U[5, 35]; capacity s_i ~ U[10, 160], scaled so that Σ s / Σ d = r (the capacity ratio,
3, 5 or 10: 3 is tight); fixed cost f_i = U[0, 90] + U[100, 110] × √s_i; cost of serving all
of j from i c_ij = 10 × Euclidean distance × d_j.  Split demand is allowed.  The OR-Library
capacitated warehouse instances (Beasley 1988; tests/data/orlib/cap) run the same way by name.

Two models of the same instance, each with HiGHS on one thread, side by side in one run:

- **textbook**: assignment shares x_ij ∈ [0, 1], y_i ∈ {0, 1}; Σ_i x_ij = 1; Σ_j d_j x_ij ≤ s_i y_i;
  x_ij ≤ y_i; Σ_i s_i y_i ≥ Σ_j d_j (the strong formulation), built in numpy and passed to highspy;
- **netopt**: the instance as a netopt case (one plant → DCs at no cost → customers at c_ij / d_j per
  unit, explicit lanes) solved by ``netopt.solve`` with its defaults (load and build included in its
  wall time): the tight relaxation with linking rows added as violated, the plan search (drop, add,
  swap on warm LP re-solves), then HiGHS from that plan with only the linking rows the relaxation
  needed (``netopt.engine.plan_search``).

Reported per run: final cost and bound, time to a plan within 1 % and 0.1 % of the best bound
either model proved, and time to proof (gap 0.01 %).

    python benchmarks/cfl.py [--instances cap71,50x500:5,100x1000:3] [--time-limit 120] [--seed 0] [--out FILE]
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

import highspy
import numpy as np
from scipy.sparse import coo_matrix, vstack

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from netopt.api import solve  # noqa: E402
from netopt.data.frames import make_case  # noqa: E402

MIP_GAP = 1e-4
DEFAULT_INSTANCES = "cap71,cap104,50x500:5,100x1000:3,100x1000:5,100x1000:10"


def instance(n: int, m: int, ratio: float, seed: int = 0) -> dict:
    """One instance of the scheme in the module docstring: d (m), s (n), f (n), c (n × m)."""
    rng = np.random.default_rng(seed)
    x, y = rng.uniform(0, 1, n), rng.uniform(0, 1, n)
    cx, cy = rng.uniform(0, 1, m), rng.uniform(0, 1, m)
    d = rng.uniform(5, 35, m)
    s = rng.uniform(10, 160, n)
    s *= ratio * d.sum() / s.sum()
    f = rng.uniform(0, 90, n) + rng.uniform(100, 110, n) * np.sqrt(s)
    c = 10.0 * np.hypot(x[:, None] - cx[None, :], y[:, None] - cy[None, :]) * d[None, :]
    return {"d": d, "s": s, "f": f, "c": c, "name": f"{n}x{m} r{ratio:g} seed {seed}"}


def orlib_instance(name: str) -> dict:
    """OR-Library capacitated warehouse location instance ``name`` (Beasley 1988, tests/data/orlib/cap)."""
    if str(ROOT / "tests") not in sys.path:
        sys.path.insert(0, str(ROOT / "tests"))
    from orlib import DATA, read_cap

    d = read_cap(DATA / "cap" / f"{name}.txt")
    return {"d": d["demand"], "s": d["capacity"], "f": d["fixed_cost"], "c": d["cost"], "name": f"OR-Library {name}"}


def parse_specs(text: str) -> list:
    """``n x m : ratio`` entries (generated) and OR-Library names (``cap41``), comma-separated."""
    specs: list = []
    for part in (p.strip() for p in text.split(",")):
        if not part:
            continue
        if part.startswith("cap"):
            specs.append(part)
            continue
        size, ratio = part.split(":")
        n, m = size.split("x")
        specs.append((int(n), int(m), float(ratio)))
    return specs


def _trace(h: highspy.Highs, t0: float, trace: list) -> None:
    def cb(callback_type, message, data_out, data_in, user_data):
        trace.append((time.perf_counter() - t0, float(data_out.objective_function_value)))

    h.setCallback(cb, None)
    h.startCallback(highspy.cb.HighsCallbackType.kCallbackMipImprovingSolution)


def textbook(inst: dict, time_limit: float) -> dict:
    """The strong textbook formulation in highspy (module docstring); incumbents traced."""
    d, s, f, c = inst["d"], inst["s"], inst["f"], inst["c"]
    n, m = c.shape
    t0 = time.perf_counter()
    N = n + n * m  # columns: y_0..y_{n-1}, then x_ij row-major (i, j)
    k = np.arange(n * m)
    i_of, j_of = k // m, k % m
    blocks = [
        coo_matrix((np.ones(n * m), (j_of, n + k)), shape=(m, N)),  # Σ_i x_ij = 1
        coo_matrix(
            (
                np.concatenate([d[j_of], -s]),
                (np.concatenate([i_of, np.arange(n)]), np.concatenate([n + k, np.arange(n)])),
            ),
            shape=(n, N),
        ),  # Σ_j d_j x_ij − s_i y_i ≤ 0
        coo_matrix(
            (
                np.concatenate([np.ones(n * m), -np.ones(n * m)]),
                (np.concatenate([k, k]), np.concatenate([n + k, i_of])),
            ),
            shape=(n * m, N),
        ),  # x_ij − y_i ≤ 0
        coo_matrix((s, (np.zeros(n, int), np.arange(n))), shape=(1, N)),  # Σ s_i y_i ≥ Σ d_j
    ]
    A = vstack(blocks).tocsc()
    inf = highspy.kHighsInf
    lo = np.concatenate([np.ones(m), np.full(n, -inf), np.full(n * m, -inf), [d.sum()]])
    hi = np.concatenate([np.ones(m), np.zeros(n), np.zeros(n * m), [inf]])
    lp = highspy.HighsLp()
    lp.num_col_, lp.num_row_ = N, A.shape[0]
    lp.col_cost_ = np.concatenate([f, c.ravel()])
    lp.col_lower_, lp.col_upper_ = np.zeros(N), np.ones(N)
    lp.row_lower_, lp.row_upper_ = lo, hi
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_, lp.a_matrix_.index_, lp.a_matrix_.value_ = A.indptr, A.indices, A.data
    lp.integrality_ = [highspy.HighsVarType.kInteger] * n + [highspy.HighsVarType.kContinuous] * (n * m)
    h = highspy.Highs()
    for k_, v in (("output_flag", False), ("threads", 1), ("time_limit", time_limit), ("mip_rel_gap", MIP_GAP)):
        h.setOptionValue(k_, v)
    h.passModel(lp)
    trace: list = []
    _trace(h, t0, trace)
    h.run()
    info = h.getInfo()
    return {
        "method": "textbook (highspy)",
        "cost": float(info.objective_function_value),
        "bound": float(info.mip_dual_bound),
        "wall_s": time.perf_counter() - t0,
        "trace": trace,
        "open": np.round(np.asarray(h.getSolution().col_value[:n])),
    }


def netopt_run(inst: dict, time_limit: float) -> dict:
    """The instance as a netopt case through ``netopt.solve`` (explicit lanes; build included)."""
    d, s, f, c = inst["d"], inst["s"], inst["f"], inst["c"]
    n, m = c.shape
    t0 = time.perf_counter()
    ii, jj = np.meshgrid(np.arange(n), np.arange(m), indexing="ij")
    tables = {
        "products": [{"product": "P", "unit_weight_kg": 0.0, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": "F", "product": "P", "lat": 0.0, "lon": 0.0}],
        "dcs": [{"dc": f"D{i}", "lat": 0.0, "lon": 0.0, "fixed_cost": f[i], "capacity": s[i]} for i in range(n)],
        "customers": [{"customer": f"C{j}", "lat": 0.0, "lon": 0.0} for j in range(m)],
        "demand": [{"customer": f"C{j}", "product": "P", "quantity": d[j]} for j in range(m)],
        "modes": [{"mode": "m", "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False}],
        "lanes": [
            {
                "origin": "F",
                "destination": f"D{i}",
                "mode": "m",
                "distance_km": 0.0,
                "transit_days": 0.0,
                "cost_per_unit": 0.0,
            }
            for i in range(n)
        ]
        + [
            {
                "origin": f"D{i}",
                "destination": f"C{j}",
                "mode": "m",
                "distance_km": 0.0,
                "transit_days": 0.0,
                "cost_per_unit": u,
            }
            for i, j, u in zip(ii.ravel(), jj.ravel(), (c / d[None, :]).ravel())
        ],
    }
    settings = {
        "inventory": {"safety_stock": False},
        "solver": {"time_limit_s": time_limit, "threads": 1, "mip_gap": MIP_GAP},
    }
    case = make_case(tables, settings)
    trace: list = []

    def say(stage, info=None):
        better = stage == "progress" and info and np.isfinite(info.get("objective", np.inf))
        if better and (not trace or info["objective"] < trace[-1][1] - 1e-9):
            trace.append((time.perf_counter() - t0, float(info["objective"])))

    r = solve(case, progress=say)
    if r.has_solution and (not trace or r.objective < trace[-1][1] - 1e-9):
        trace.append((time.perf_counter() - t0, float(r.objective)))
    return {
        "method": "netopt",
        "cost": float(r.objective) if r.has_solution else float("nan"),
        "bound": float(r.bound),
        "wall_s": time.perf_counter() - t0,
        "trace": trace,
        "verified": bool(r.verification.passed) if r.verification else False,
    }


def first_within(trace: list, target: float) -> float:
    """Seconds to the first plan costing at most ``target`` (NaN: never)."""
    return next((t for t, v in trace if v <= target), float("nan"))


def run(specs: list, time_limit: float, seed: int) -> list[dict]:
    """Both models on every instance of ``specs`` (``parse_specs``), side by side."""
    rows = []
    for spec in specs:
        inst = orlib_instance(spec) if isinstance(spec, str) else instance(*spec, seed)
        runs = [textbook(inst, time_limit), netopt_run(inst, time_limit)]
        best = max(r["bound"] for r in runs if np.isfinite(r["bound"]))
        for r in runs:
            rows.append(
                {
                    "instance": inst["name"],
                    "method": r["method"],
                    "cost": r["cost"],
                    "bound": r["bound"],
                    "to_1pct_s": first_within(r["trace"], best * 1.01),
                    "to_0.1pct_s": first_within(r["trace"], best * 1.001),
                    "proof_s": r["wall_s"]
                    if (r["cost"] - r["bound"]) <= MIP_GAP * abs(r["cost"]) + 1e-6
                    else float("nan"),
                    "wall_s": r["wall_s"],
                }
            )
            print(
                f"  {inst['name']:<22} {r['method']:<20} cost {r['cost']:,.2f} bound {r['bound']:,.2f} {r['wall_s']:.1f}s",
                file=sys.stderr,
            )
    return rows


def markdown(rows: list[dict], time_limit: float) -> str:
    head = "| instance | model | cost | bound | to 1 % (s) | to 0.1 % (s) | proof (s) | wall (s) |\n|---|---|---:|---:|---:|---:|---:|---:|\n"

    def s(v):
        return "–" if not np.isfinite(v) else f"{v:.1f}"

    body = "".join(
        f"| {r['instance']} | {r['method']} | {r['cost']:,.2f} | {r['bound']:,.2f} | {s(r['to_1pct_s'])} | "
        f"{s(r['to_0.1pct_s'])} | {s(r['proof_s'])} | {r['wall_s']:.1f} |\n"
        for r in rows
    )
    return (
        f"## Capacitated facility location: netopt against the textbook model\n\n"
        f"HiGHS {highspy.Highs().version()}, one thread, time limit {time_limit:g} s, gap {MIP_GAP:g}; "
        f"targets measured against the best bound either model proved.\n\n" + head + body
    )


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument(
        "--instances",
        default=DEFAULT_INSTANCES,
        help="n x m : capacity ratio, or an OR-Library name (cap41 … cap134), comma-separated",
    )
    ap.add_argument("--time-limit", type=float, default=120.0)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--out", default=str(ROOT / "benchmarks" / "cfl_results.md"))
    a = ap.parse_args(argv)
    md = markdown(run(parse_specs(a.instances), a.time_limit, a.seed), a.time_limit)
    print(md)
    out = Path(a.out)
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", dir=str(out.parent))
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(md)
    os.replace(tmp, out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
