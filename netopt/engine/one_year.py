"""``solve_year(case)``: the solve of a one-year case (a case without periods) → :class:`Result`.

Stages: lanes → network index sets → Pyomo model → plan search (``netopt.engine.plan_search``) →
HiGHS from its plan → :func:`~netopt.engine.extract.extract`
(cost components, result tables, independent verification).  An infeasible case is
re-solved elastically to say which demands and rules cannot be met and by how much.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.diagnose import diagnose_infeasibility
from netopt.engine.extract import extract
from netopt.engine.highs import SolveInfo, compile_model
from netopt.engine.highs_check import ModelRejected
from netopt.engine.marginal_values import marginal_values
from netopt.engine.plan_search import best_of, search_plan
from netopt.engine.result import Result, fixed_options
from netopt.model import build_model
from netopt.model.safety_stock import prepare_solve
from netopt.network.arcs import build_network
from netopt.network.lanes import case_lanes


def solve_year(
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
    start: dict[str, str | bool] | None = None,
    start_plan: dict[str, np.ndarray] | None = None,
) -> Result:
    """Solve the network design of the one-year ``case`` (``netopt.engine.solve.solve`` says which cases).

    Args:
        time_limit, mip_gap, threads: override the case's [solver] settings.  The time limit is the whole
            solve's (lanes, build, plan search, MIP search); the MIP search always gets at least 5 % of it.
        formulation: "tight" (default) or "plain" (no strong linking, no pruning; benchmarks).
        hold: DC decisions to hold (``Result.held_openings()`` of a base), re-routing only.
        progress: callable(stage: str, info: dict) for progress lines.
        keep_model: keep the HiGHS model on the result (for warm re-solves).
        diagnose: on infeasibility, re-solve elastically to name what cannot be met.
        start: DC decisions (as ``hold``) of a known plan, handed to HiGHS as a start: HiGHS
            completes it (the flows for those openings) and never returns a plan dearer than it
            (up to the gap), so a redesign started from its hold is never above the hold.
        start_plan: a whole plan of the same case (every variable block, e.g. ``Result.plan_values``
            of a solve with the openings held): HiGHS takes it as its first incumbent and never
            returns a dearer plan, whatever the gap.
    """
    say = progress or (lambda stage, info=None: None)
    sset = case.settings["solver"]
    time_limit = float(sset["time_limit_s"] if time_limit is None else time_limit)
    mip_gap = float(sset["mip_gap"] if mip_gap is None else mip_gap)
    threads = int(sset["threads"] if threads is None else threads)
    timings: dict[str, float] = {}

    t0 = t_run = time.perf_counter()
    if lanes is None:
        lanes = case_lanes(case)
    timings["lanes"] = time.perf_counter() - t0
    say("lanes", {"lanes": len(lanes), "seconds": timings["lanes"]})

    t0 = time.perf_counter()
    net = build_network(case, lanes, prune=None if formulation == "tight" else False)
    fixed = fixed_options(net, hold)
    b = build_model(net, formulation=formulation, fixed_open=fixed)
    timings["build"] = time.perf_counter() - t0
    say("build", {"arcs": len(net.arcs), "seconds": timings["build"]})

    try:
        hm = compile_model(b)
    except ModelRejected as e:  # a number HiGHS cannot take: a clear failure, no plan
        info = SolveInfo("error", float("nan"), float("nan"), float("inf"), 0.0, message=str(e))
        return Result.of(case.name, info, timings=timings, message=info.message, network=net, lanes=lanes)
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
    search = None
    kept = False  # the plan search's plan is the one returned
    if progress is not None:

        def cb(d):
            # The MIP's own progress, with the plan search's plan and bound folded in (both are of this model).
            d = dict(d)
            if search is not None and "method" not in d:
                d["bound"] = max(d.get("bound", -np.inf), search.bound)
                found = search.values is not None and d.get("objective", np.inf) >= search.cost - 1e-9 * abs(
                    search.cost
                )
                d["method"] = "plan search" if found else "MIP search"
                obj = d.get("objective", np.inf)
                if np.isfinite(obj) and np.isfinite(d["bound"]):
                    d["gap"] = max(0.0, (obj - d["bound"]) / max(1.0, abs(obj)))
            d.setdefault("method", "MIP search")
            d["elapsed"] = time.perf_counter() - t_run  # s since the solve began (lanes, build, search, MIP)
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
        try:
            aids = prepare_solve(hm, time_limit=time_limit, mip_gap=mip_gap)  # safety-stock binaries only
            if aids:
                timings["safety_stock_aids"] = aids["seconds"]
                size["pooling_cuts"] = int(aids["cuts"])
            start_open = fixed_options(net, start)
            if bool(sset["plan_search"]) and hold is None and hm.integrality.any():
                seed = start_plan["open"] if start_plan is not None else start_open
                search = search_plan(
                    hm, float(sset["plan_search_share"]) * time_limit, start_open=seed, progress=cb, min_gain=mip_gap
                )
                timings["plan_search"] = search.seconds
                say("plan search", {"message": search.summary()})
                if search.relaxation:
                    size["linking_rows_needed"] = search.relaxation["linking_rows_needed"]
                    needed = search.relaxation["linking_rows_needed"] / max(1, search.relaxation["linking_rows"])
                    if needed <= float(sset["lazy_linking_rows_share"]) and search.relaxation["linking_rows"]:
                        hm.free_rows(search.relaxation["unneeded_rows"])
                        size["linking_rows_left_out"] = len(search.relaxation["unneeded_rows"])
                if search.values is not None:  # reduced-cost fixing: safe only with the search's plan as incumbent
                    hm.set_bounds(
                        "open",
                        search.fixed_closed,
                        np.zeros(len(search.fixed_closed)),
                        np.zeros(len(search.fixed_closed)),
                    )
                    hm.set_bounds(
                        "open", search.fixed_open, np.ones(len(search.fixed_open)), np.ones(len(search.fixed_open))
                    )
                    size["dc_options_fixed"] = len(search.fixed_closed) + len(search.fixed_open)
            # The caller's plan stays the start when the search's is not cheaper (it may differ by O(ε)).
            if (
                search is not None
                and search.values is not None
                and start_plan is not None
                and sum(b.component_values(start_plan).values()) <= search.cost
            ):
                search.values, search.cost = None, float("inf")
                search.note = "its plan was not cheaper than the plan handed over, which starts the MIP search"
            if search is not None and search.values is not None:
                hm.set_plan_start(search.values)
            elif start_plan is not None:
                hm.set_plan_start(start_plan)
            elif start_open is not None:
                hm.set_start("open", start_open)
            left = max(time_limit - (time.perf_counter() - t_run), 0.05 * time_limit)
            info = hm.solve(time_limit=left, mip_gap=mip_gap, threads=threads, progress=cb)
            if search is not None:
                info, kept = best_of(info, search)
        except ModelRejected as e:  # HiGHS refused a step: a clear failure, no plan
            info = SolveInfo("error", float("nan"), float("nan"), float("inf"), 0.0, message=str(e))
    timings["highs"] = info.solver_seconds

    res = Result.of(
        case.name,
        info,
        timings=timings,
        model_size=size,
        message=info.message,
        network=net,
        lanes=lanes,
    )
    plan = None
    if info.has_solution:
        plan = search.values if kept and search is not None else hm.values()
    if plan is not None:
        out = extract(
            case,
            lanes,
            net,
            b,
            plan,
            info.objective,
            held_open=None if hold is None else {d: bool(v) for d, v in hold.items()},
        )
        res.tables, res.verification = out.tables, out.verification
        timings.update(out.seconds)
        if bool(sset["marginal_values"]):
            t0 = time.perf_counter()
            shadow, reduced, note = marginal_values(case, res)
            res.tables["shadow_prices"], res.tables["lane_reduced_costs"] = shadow, reduced
            if note:
                res.message = "; ".join(m for m in (res.message, note) if m)
            timings["marginal_values"] = time.perf_counter() - t0
        say("verified", {"passed": res.verification.passed, "largest": res.verification.largest_violation})
    elif info.status in ("infeasible", "unbounded") and diagnose:
        say("diagnose", {})
        res.diagnosis = diagnose_infeasibility(net, formulation=formulation, fixed=fixed)
    if plan is not None:
        res.plan_values = plan
    if keep_model:
        res.highs_model = hm
    return res
