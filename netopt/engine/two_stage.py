"""The two-stage stochastic solve: the DC decisions one plan for every demand scenario, the flows each
scenario's own (the extensive form, ``netopt.model.scenario_copies``), in one MIP.

Each scenario's case is built by the same ``build_network`` / ``build_model`` as a one-year solve, into
one Pyomo model (names ``…@s``), stacked with the DC decisions shared and compiled once.  The outcome is
the plan (its DC decisions, as ``Result.held_openings()`` gives them) and the model's objective; what the
plan costs in each scenario is priced afterwards by held re-solves (``netopt.studies.robust``).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyomo.environ as pyo

from netopt.data.case import Case
from netopt.engine.extract import cost_components
from netopt.engine.highs import HighsModel, compile_model
from netopt.engine.highs_check import ModelRejected
from netopt.engine.one_year import solve_year
from netopt.engine.result import fixed_options
from netopt.model import build_model
from netopt.model.phasing import block
from netopt.model.scenario_copies import stack_scenarios
from netopt.network.arcs import Network, build_network
from netopt.network.lanes import case_lanes


@dataclass
class TwoStageOutcome:
    """The extensive form's outcome: solver status, objective (expected or worst-case cost, currency/yr),
    bound and gap, the DC decisions (dc → size/True/False) and each scenario's cost in the model."""

    status: str
    objective: float
    bound: float
    gap: float
    held: dict[str, str | bool] = field(default_factory=dict)
    scenario_costs: dict[str, float] = field(default_factory=dict)
    seconds: float = 0.0
    size: dict[str, int] = field(default_factory=dict)
    message: str = ""

    @property
    def has_plan(self) -> bool:
        return bool(self.held)


def decisions_of(net: Network, y: np.ndarray) -> dict[str, str | bool]:
    """DC decisions (dc → size, True for a DC without sizes, False) of opening values ``y`` per option."""
    out: dict[str, str | bool] = {}
    for dc, size, v in zip(net.options["dc"], net.options["size"], np.asarray(y, float)):
        if v > 0.5:
            out[str(dc)] = str(size) or True
        else:
            out.setdefault(str(dc), False)
    return out


def solve_two_stage(
    cases: list[Case],
    names: list[str],
    probabilities,
    objective: str = "expected",
    cost_bound: float = math.inf,
    *,
    lanes: pd.DataFrame | None = None,
    time_limit: float | None = None,
    mip_gap: float | None = None,
    threads: int | None = None,
    start: dict[str, str | bool] | None = None,
) -> TwoStageOutcome:
    """Solve the two-stage model of scenario cases ``cases`` (one-year cases differing in demand; the
    same DCs), weighted by ``probabilities``.  ``start``: DC decisions handed to HiGHS as a start (it
    completes the flows).  Solver settings default to the first case's [solver] section."""
    t0 = time.perf_counter()
    sset = cases[0].settings["solver"]
    time_limit = float(sset["time_limit_s"] if time_limit is None else time_limit)
    mip_gap = float(sset["mip_gap"] if mip_gap is None else mip_gap)
    threads = int(sset["threads"] if threads is None else threads)
    lanes = case_lanes(cases[0]) if lanes is None else lanes
    model = pyo.ConcreteModel()
    nets, builders = [], []
    for s, ck in enumerate(cases):
        net = build_network(ck, lanes)
        nets.append(net)
        builders.append(build_model(net, model=model, suffix=f"@{s}", objective=False))
    top = stack_scenarios(builders, names, np.asarray(probabilities, float), objective, cost_bound)
    if top.empty_infeasible:
        return TwoStageOutcome(
            "infeasible",
            math.nan,
            math.nan,
            math.inf,
            seconds=time.perf_counter() - t0,
            message=f"{len(top.empty_infeasible)} rule(s) with no variable cannot hold",
        )
    try:
        hm = compile_model(top)
    except ModelRejected as e:
        return TwoStageOutcome("error", math.nan, math.nan, math.inf, seconds=time.perf_counter() - t0, message=str(e))
    lp = hm.highs.getLp()
    size = {
        "scenarios": len(cases),
        "columns": int(lp.num_col_),
        "rows": int(lp.num_row_),
        "nonzeros": len(lp.a_matrix_.value_),
        "binaries": int(hm.integrality.sum()),
    }
    if start is not None:
        _set_start(hm, top, cases, builders, nets, lanes, start, objective, mip_gap, threads)
    left = max(time_limit - (time.perf_counter() - t0), 0.05 * time_limit)
    try:
        info = hm.solve(time_limit=left, mip_gap=mip_gap, threads=threads)
    except ModelRejected as e:
        return TwoStageOutcome("error", math.nan, math.nan, math.inf, seconds=time.perf_counter() - t0, message=str(e))
    out = TwoStageOutcome(info.status, info.objective, info.bound, info.gap, size=size, message=info.message)
    if info.has_solution:
        values = hm.values()
        out.held = decisions_of(nets[0], values[block("open", 0)])
        for s, b in enumerate(builders):
            vk = {n: values[block(n, s)] for n in b.vars}
            out.scenario_costs[names[s]] = float(sum(cost_components(b, vk).values()))
    out.seconds = time.perf_counter() - t0
    return out


def _set_start(hm: HighsModel, top, cases, builders, nets, lanes, start, objective, mip_gap, threads) -> None:
    """Hand HiGHS the plan of DC decisions ``start`` whole: each scenario's own solve with those decisions
    held gives its block values (the way a phasing's first plan is made from the periods' own solves);
    when a scenario's model differs in shape, only the openings are handed over (HiGHS completes them)."""
    values: dict[str, np.ndarray] = {name: np.zeros(len(labels)) for name, labels in top.var_labels.items()}
    whole = True
    costs = []
    for s, (ck, b) in enumerate(zip(cases, builders)):
        r = solve_year(ck, hold=start, lanes=lanes, diagnose=False, mip_gap=mip_gap, threads=threads)
        if not r.has_solution or r.plan_values is None:
            whole = False
            break
        for name in b.vars:
            v = r.plan_values.get(name)
            if v is None or len(v) != len(values[block(name, s)]):
                whole = False
                break
            values[block(name, s)] = np.asarray(v, float)
        costs.append(float(sum(cost_components(b, {n: values[block(n, s)] for n in b.vars}).values())))
    if whole and "worst_case" in values:
        values["worst_case"] = np.array([max(costs)])
    if whole:
        try:
            hm.set_plan_start(values)
            return
        except ValueError:
            pass
    y = fixed_options(nets[0], start)
    if y is not None:
        cols = np.concatenate([hm.col_of[block("open", s)] for s in range(len(cases))])
        vals = np.tile(y, len(cases))
        m = cols >= 0
        if m.any():
            hm.highs.setSolution(int(m.sum()), cols[m].astype(np.int32), vals[m])
