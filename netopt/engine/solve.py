"""Python API: ``solve(case)`` → :class:`Result` with tidy DataFrames.

Stages: lanes → network index sets → Pyomo model → HiGHS → result tables →
independent verification.  An infeasible case is re-solved elastically to say which
demands and rules cannot be met and by how much.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.highs import HighsModel, SolveInfo, compile_model
from netopt.engine.inventory_report import safety_stock_extra_cost
from netopt.engine.tables import build_tables
from netopt.engine.verify import Verification, verify
from netopt.model import COST_COMPONENTS, build_model
from netopt.model.safety_stock import prepare_solve
from netopt.network.arcs import Network, build_network
from netopt.network.lanes import case_lanes


@dataclass
class Result:
    """Outcome of one solve. Money in the case currency per year; times in seconds."""

    case_name: str
    status: str  # optimal | time_limit | infeasible | error | …
    objective: float
    bound: float
    gap: float
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)
    verification: Verification | None = None
    diagnosis: pd.DataFrame | None = None
    timings: dict[str, float] = field(default_factory=dict)
    model_size: dict[str, int] = field(default_factory=dict)
    message: str = ""
    network: Network | None = None
    highs_model: HighsModel | None = None
    lanes: pd.DataFrame | None = None

    def __getattr__(self, item):
        tables = self.__dict__.get("tables", {})
        if item in tables:
            return tables[item]
        raise AttributeError(item)

    @property
    def has_solution(self) -> bool:
        return bool(self.tables)

    @property
    def cost(self) -> dict[str, float]:
        if "cost" not in self.tables:
            return {}
        return dict(zip(self.tables["cost"]["component"], self.tables["cost"]["amount"]))

    def held_openings(self) -> dict[str, str | bool]:
        """DC decisions of this solution, to hold the network in a re-solve: dc → size name, True (open, no size options) or False."""
        d = self.tables["dcs"]
        return {dc: ((size or True) if o else False) for dc, o, size in zip(d["dc"], d["open"], d["size"])}

    def summary(self) -> dict:
        """JSON-ready summary: status, objective, bound, gap, cost breakdown, verification."""
        v = self.verification
        out = {
            "case": self.case_name,
            "status": self.status,
            "objective": _num(self.objective),
            "bound": _num(self.bound),
            "gap": _num(self.gap),
            "cost": {k: _num(x) for k, x in self.cost.items()},
            "verified": bool(v.passed) if v else False,
            "largest_violation": _num(v.largest_violation) if v else None,
            "largest_violation_rule": v.largest_violation_rule if v else None,
            "recomputed_objective": _num(v.recomputed_objective) if v else None,
            "timings_s": {k: round(x, 4) for k, x in self.timings.items()},
            "model_size": self.model_size,
            "message": self.message,
        }
        if "kpis" in self.tables:
            out["kpis"] = {k: _num(x) for k, x in zip(self.tables["kpis"]["kpi"], self.tables["kpis"]["value"])}
        return out


def _num(x):
    if x is None:
        return None
    x = float(x)
    return None if np.isnan(x) or np.isinf(x) else x


def _fixed_options(net: Network, held: dict[str, str | bool] | None) -> np.ndarray | None:
    """0/1 per opening option from ``dc → size/True/False`` (DCs not named: closed)."""
    if held is None:
        return None
    o = net.options
    val = np.zeros(len(o))
    for k, (dc, size) in enumerate(zip(o["dc"], o["size"])):
        h = held.get(dc, False)
        if h is True:
            val[k] = 1.0 if (o["dc"] == dc).sum() == 1 or size == o.loc[o["dc"] == dc, "size"].iloc[0] else 0.0
        elif h:
            val[k] = 1.0 if size == h else 0.0
    return val


def solve(
    case: Case,
    *,
    time_limit: float | None = None,
    mip_gap: float | None = None,
    threads: int | None = None,
    formulation: str = "tight",
    hold: dict[str, str | bool] | None = None,
    progress=None,
    lanes: pd.DataFrame | None = None,
    keep_model: bool = False,
    diagnose: bool = True,
) -> Result:
    """Solve the network design for ``case``.

    Args:
        time_limit, mip_gap, threads: override the case's [solver] settings.
        formulation: "tight" (default) or "plain" (no strong linking, no pruning; benchmarks).
        hold: DC decisions to hold (``Result.held_openings()`` of a base), re-routing only.
        progress: callable(stage: str, info: dict) for progress lines.
        keep_model: keep the HiGHS model on the result (for warm re-solves).
        diagnose: on infeasibility, re-solve elastically to name what cannot be met.
    """
    say = progress or (lambda stage, info=None: None)
    sset = case.settings["solver"]
    time_limit = float(sset["time_limit_s"] if time_limit is None else time_limit)
    mip_gap = float(sset["mip_gap"] if mip_gap is None else mip_gap)
    threads = int(sset["threads"] if threads is None else threads)
    timings: dict[str, float] = {}

    t0 = time.perf_counter()
    if lanes is None:
        lanes = case_lanes(case)
    timings["lanes"] = time.perf_counter() - t0
    say("lanes", {"lanes": len(lanes), "seconds": timings["lanes"]})

    t0 = time.perf_counter()
    net = build_network(case, lanes, prune=None if formulation == "tight" else False)
    fixed = _fixed_options(net, hold)
    b = build_model(net, formulation=formulation, fixed_open=fixed)
    timings["build"] = time.perf_counter() - t0
    say("build", {"arcs": len(net.arcs), "seconds": timings["build"]})

    hm = compile_model(b)
    timings["compile"] = hm.compile_seconds
    timings["handover"] = hm.pass_seconds
    lp = hm.highs.getLp()
    size = {
        "columns": int(lp.num_col_),
        "rows": int(lp.num_row_),
        "nonzeros": len(lp.a_matrix_.value_),
        "binaries": int(hm.integrality.sum()),
        "arcs": len(net.arcs),
        "pruned_arcs": int(sum(net.pruned.values())),
    }
    say("solve", {"columns": size["columns"], "rows": size["rows"], "binaries": size["binaries"]})

    cb = None
    if progress is not None:

        def cb(d):
            say("progress", d)

    if b.empty_infeasible:
        info = SolveInfo(
            "infeasible",
            float("nan"),
            float("nan"),
            float("inf"),
            0.0,
            message=f"{len(b.empty_infeasible)} rule(s) with no variable cannot hold",
        )
    else:
        aids = prepare_solve(hm, time_limit=time_limit, mip_gap=mip_gap)  # safety-stock binaries only
        if aids:
            timings["safety_stock_aids"] = aids["seconds"]
            size["pooling_cuts"] = int(aids["cuts"])
        info = hm.solve(time_limit=time_limit, mip_gap=mip_gap, threads=threads, progress=cb)
    timings["highs"] = info.solver_seconds

    res = Result(
        case_name=case.name,
        status=info.status,
        objective=info.objective,
        bound=info.bound,
        gap=info.gap,
        timings=timings,
        model_size=size,
        message=info.message,
        network=net,
        lanes=lanes,
    )
    if info.has_solution:
        t0 = time.perf_counter()
        values = hm.values()
        cost = b.component_values(values)
        cost = {k: float(cost.get(k, 0.0)) for k in COST_COMPONENTS} | {
            k: v for k, v in cost.items() if k not in COST_COMPONENTS
        }
        res.tables = build_tables(net, values, cost)
        timings["results"] = time.perf_counter() - t0
        t0 = time.perf_counter()
        objective = float(info.objective)
        res.verification = verify(
            case,
            lanes,
            res.tables,
            objective,
            fixed_open=None if hold is None else {d: bool(v) for d, v in hold.items()},
            extra_cost=safety_stock_extra_cost(res.tables),
        )
        timings["verify"] = time.perf_counter() - t0
        say("verified", {"passed": res.verification.passed, "largest": res.verification.largest_violation})
    elif info.status in ("infeasible", "unbounded") and diagnose:
        say("diagnose", {})
        res.diagnosis = diagnose_infeasibility(net, formulation=formulation, fixed=fixed)
    if keep_model:
        res.highs_model = hm
    return res


def diagnose_infeasibility(net: Network, formulation: str = "tight", fixed: np.ndarray | None = None) -> pd.DataFrame:
    """Re-solve with penalised slack on demand, capacity, sourcing and service rows.

    Returns one row per violated rule instance: rule, where (the row's labels), and the
    shortfall or excess in the rule's own unit (units/yr, or share-weighted units).
    """
    b = build_model(net, formulation=formulation, elastic=True, fixed_open=fixed)
    hm = compile_model(b)
    prepare_solve(hm, time_limit=120.0, mip_gap=1e-3)  # safety-stock binaries only
    info = hm.solve(time_limit=120.0, mip_gap=1e-3)
    rows = []
    if not info.has_solution:
        return pd.DataFrame(
            [
                {
                    "rule": "model",
                    "where": "",
                    "amount": float("nan"),
                    "meaning": f"no elastic solution either ({info.status})",
                }
            ]
        )
    vals = hm.values()
    if "unmet" in vals:
        dem = net.demand
        for k in np.flatnonzero(vals["unmet"] > 1e-6):
            rows.append(
                {
                    "rule": "demand_met",
                    "where": f"customer {dem['customer'].iloc[k]}, product {dem['product'].iloc[k]}",
                    "amount": float(vals["unmet"][k]),
                    "meaning": "units/yr of demand that cannot be delivered",
                }
            )
    for name, v in vals.items():
        if not name.startswith("slack_"):
            continue
        rule = name.split("__", 1)[1]
        labels = b.var_labels[name]
        for k in np.flatnonzero(v > 1e-6):
            lab = ", ".join(f"{c} {labels[c].iloc[k]}" for c in labels.columns if c != "constraint")
            kind = "excess over the limit" if name.startswith("slack_hi") else "shortfall below the requirement"
            rows.append({"rule": rule, "where": lab, "amount": float(v[k]), "meaning": kind})
    if not rows:
        rows.append(
            {
                "rule": "model",
                "where": "",
                "amount": 0.0,
                "meaning": "the elastic model needs no slack; infeasibility comes from binary/count rules",
            }
        )
    return pd.DataFrame(rows)
