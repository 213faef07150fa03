"""A network that holds up across demand scenarios: the two-stage plan, its value (VSS, EVPI) and the
regret of every candidate plan (``netopt robust``).

Steps: the launch's demand scenarios (``netopt.data.launch_demand``) → one case per scenario and the
mean-value case (probability-weighted mean demand) → each solved on its own (its own optimal plan) →
the two-stage model (``netopt.engine.two_stage``: DC decisions shared, flows per scenario; expected cost,
and the settings' worst case or cost bound when asked) → every candidate plan held in every scenario
(held re-solves through the sweep pool, :func:`evaluate_plan`) → the cost matrix C[plan, s].

From it (Birge & Louveaux, Introduction to Stochastic Programming, ch. 4):

    WS   = Σ_s π_s min_plan C[plan, s]        (each scenario's own optimum, wait-and-see)
    RP   = Σ_s π_s C[stochastic, s]           (the two-stage plan held in every scenario)
    EEV  = Σ_s π_s C[mean_value, s]           (the mean-value problem's plan held in every scenario)
    VSS  = EEV − RP,   EVPI = RP − WS,   regret[plan, s] = C[plan, s] − min_plan' C[plan', s]

A scenario's optimum is the cheapest candidate in it (its own plan, unless another candidate is cheaper
there: then its own solve stopped at the gap, and the summary says so); RP is the cheapest expected
cost of the candidates when one is cheaper than the two-stage plan (said likewise).
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.launch_demand import (
    bass_adoption,
    choose_launch,
    forecast_accuracy,
    launch_scenarios,
    mean_demand,
    peak_year,
    with_launch_demand,
)
from netopt.data.periods import has_periods
from netopt.engine.bounds import ABOVE, USED, above_note, stronger_bound, weighted_bound
from netopt.engine.held import HeldNetwork
from netopt.engine.solve import solve
from netopt.engine.two_stage import TwoStageOutcome, solve_two_stage
from netopt.network.lanes import case_lanes
from netopt.studies.changes import resolve_held
from netopt.studies.sweep_exec import check_workers, run_inline, run_local

EVALUATIONS = ("auto", "warm", "rebuilt")
"""How a plan is held in a scenario: warm LP re-solves on one held model per plan (``warm``), a solve of the
scenario's case with the openings fixed (``rebuilt``, exact with the safety-stock curve), or ``auto``
(warm unless the case holds safety stock)."""

TOLERANCE = 1e-6
"""Relative difference below which two costs are the same."""


@dataclass
class RobustStudy:
    """The study's tables (DataFrames, declared in ``netopt.data.robust_schema``) and its summary."""

    scenario_demand: pd.DataFrame
    plan_dcs: pd.DataFrame
    plan_costs: pd.DataFrame
    regret: pd.DataFrame
    launch_adoption: pd.DataFrame | None = None
    forecast_accuracy: pd.DataFrame | None = None
    summary: dict = field(default_factory=dict)

    @property
    def tables(self) -> dict[str, pd.DataFrame]:
        out = {
            "scenario_demand": self.scenario_demand,
            "regret": self.regret,
            "plan_costs": self.plan_costs,
            "plan_dcs": self.plan_dcs,
        }
        if self.launch_adoption is not None:
            out["launch_adoption"] = self.launch_adoption
        if self.forecast_accuracy is not None:
            out["forecast_accuracy"] = self.forecast_accuracy
        return out


def robust_settings(case: Case) -> dict:
    """The case's [robust] settings, checked (CaseError naming the setting)."""
    r = dict(case.settings["robust"])
    problems = []
    if r["objective"] not in ("expected", "worst_case"):
        problems.append(f"robust.objective is '{r['objective']}': expected or worst_case")
    if r["evaluation"] not in EVALUATIONS:
        problems.append(f"robust.evaluation is '{r['evaluation']}': one of {', '.join(EVALUATIONS)}")
    if problems:
        raise CaseError([Problem("settings", None, None, p) for p in problems])
    r["cost_bound"] = float(r["cost_bound"]) if float(r["cost_bound"]) >= 0 else math.inf
    r["scenarios"] = [str(s).strip() for s in r["scenarios"] if str(s).strip()]
    solver = case.settings["solver"]
    r["time_limit_s"] = float(r["time_limit_s"]) if float(r["time_limit_s"]) > 0 else float(solver["time_limit_s"])
    r["mip_gap"] = float(r["mip_gap"]) if float(r["mip_gap"]) >= 0 else float(solver["mip_gap"])
    return r


def evaluate_plan(spec: dict, el: dict) -> dict:
    """Task of the sweep pool: candidate plan ``el["held"]`` held in every scenario of ``spec``.

    Warm: one held network per plan, built on the mean-value case, each scenario's demand set by bound
    changes (the ``scale_demand`` change kind) and re-solved warm; a scenario that is no bound change is
    solved rebuilt, and so is one whose warm answer fails its independent check (the method says so).
    Rebuilt: each scenario's case solved with the openings fixed."""
    rows = []
    held = None
    if spec["evaluation"] == "warm":
        base = None
        if bool(spec["mean"].settings["inventory"]["safety_stock"]):
            base = solve(spec["mean"], hold=el["held"], lanes=spec["lanes"], diagnose=False)
        held = HeldNetwork(
            spec["mean"],
            base=base if base is not None and base.has_solution else None,
            held=el["held"],
            lanes=spec["lanes"],
        )
    for name, ck in zip(spec["names"], spec["cases"]):
        r = resolve_held(held, ck, [{"kind": "scale_demand"}], name=name) if held is not None else None
        how = "warm LP" if r is not None else "rebuilt"
        if r is not None and r.has_solution and not (r.verification is not None and r.verification.passed):
            r, how = None, "rebuilt (the warm re-solve failed its check)"
        if r is None:
            r = solve(ck, hold=el["held"], lanes=spec["lanes"], diagnose=False)
        ok = r.has_solution
        rows.append(
            {
                "plan": el["plan"],
                "scenario": name,
                "cost": float(r.objective) if ok else math.nan,
                "status": r.status,
                "verified": bool(r.verification.passed) if ok and r.verification is not None else False,
                "method": how,
            }
        )
    return {"id": el["id"], "rows": rows}


def _plan_text(held: dict) -> str:
    return " ".join(d if v is True else f"{d}:{v}" for d, v in held.items() if v)


def run_robust(case: Case, *, workers: int | None = 0, say=None) -> RobustStudy:
    """The robust-network study of ``case`` (a one-year case with a launches table), as its [robust]
    settings ask; ``workers``: local pool processes for the plan evaluations (0: in this process)."""
    tell = say or (lambda s: None)
    check_workers(workers)
    if has_periods(case):
        raise CaseError([Problem("periods", None, None, "netopt robust plans one year: the case has a periods table")])
    t_run = time.perf_counter()
    rs = robust_settings(case)
    messages: list[str] = []
    launch = choose_launch(case, str(rs["launch"]))
    sc = launch_scenarios(case, str(launch["launch"]), rs["scenarios"])
    names = list(dict.fromkeys(sc["scenario"]))
    probs = sc.drop_duplicates("scenario").set_index("scenario")["probability"].reindex(names).to_numpy(float)
    if rs["scenarios"] and len(names) < 3:
        messages.append(
            f"only the cases {names} were asked (robust.scenarios): their probabilities were divided by their sum"
        )
    keep = probs > 0
    if not keep.all():
        dropped = [n for n, k in zip(names, keep) if not k]
        messages.append(f"cases with probability 0 left out: {dropped}")
        names = [n for n, k in zip(names, keep) if k]
        probs = probs[keep]
        sc = sc[sc["scenario"].isin(names)].reset_index(drop=True)
    cases = [
        with_launch_demand(case, sc[sc["scenario"] == n], f"{case.name} · {n}", str(launch["analogue"])) for n in names
    ]
    mean = with_launch_demand(case, mean_demand(sc).assign(), f"{case.name} · mean value", str(launch["analogue"]))
    lanes = case_lanes(mean)
    timings: dict[str, float] = {}

    t0 = time.perf_counter()
    own = {}
    for n, ck in zip(names, cases):
        tell(f"solving case '{n}' on its own …")
        own[n] = solve(ck, lanes=lanes, diagnose=False)
    tell("solving the mean-value case …")
    mv = solve(mean, lanes=lanes, diagnose=False)
    timings["own_solves"] = time.perf_counter() - t0

    plans: list[tuple[str, str, dict]] = []
    for n in names:
        if own[n].has_solution:
            plans.append((f"own:{n}", "own", own[n].held_openings()))
        else:
            messages.append(f"case '{n}' on its own: {own[n].status} (no plan)")
    if mv.has_solution:
        plans.append(("mean_value", "mean_value", mv.held_openings()))
    else:
        messages.append(f"the mean-value case: {mv.status} (no plan)")
    t0 = time.perf_counter()
    spec = evaluation_spec(names, cases, mean, lanes, rs["evaluation"])
    costs = _evaluate(plans, spec, workers, tell)
    timings["evaluation"] = time.perf_counter() - t0

    # The two-stage solve starts from the candidate of least expected cost (HiGHS completes its flows).
    start = _cheapest(costs, names, probs)
    held_start = next((h for p, _, h in plans if p == start), None)
    tell(f"solving the two-stage model ({len(names)} scenarios, DC decisions shared, started from '{start}') …")
    solver = {"lanes": lanes, "start": held_start, "time_limit": rs["time_limit_s"], "mip_gap": rs["mip_gap"]}
    stoch = solve_two_stage(cases, names, probs, "expected", **solver)
    timings["two_stage"] = stoch.seconds
    chosen = stoch
    kind = str(rs["objective"])
    asked_other = kind != "expected" or math.isfinite(rs["cost_bound"])
    if asked_other:
        tell(f"solving the two-stage model as asked ({kind}, cost bound {rs['cost_bound']:g}) …")
        chosen = solve_two_stage(cases, names, probs, kind, rs["cost_bound"], **solver)
        timings["two_stage_as_asked"] = chosen.seconds
        if not chosen.has_plan:
            messages.append(f"the two-stage model as asked ({kind}, cost bound) has no plan: {chosen.status}")
    own_bounds = [float(own[n].bound) if own[n].bound is not None else -math.inf for n in names]
    stoch = with_scenarios_bound(stoch, scenarios_bound(own_bounds, probs, "expected"), messages)
    chosen = (
        stoch if not asked_other else with_scenarios_bound(chosen, scenarios_bound(own_bounds, probs, kind), messages)
    )
    for label, out in (("", stoch), (" as asked", chosen)):
        if out.has_plan and out.status != "optimal":
            messages.append(f"the two-stage model{label} stopped {out.status} at gap {out.gap:.2%}")
    more = []
    if stoch.has_plan:
        more.append(("stochastic", "two_stage", stoch.held))
    else:
        messages.append(f"the two-stage model: {stoch.status} (no plan)")
    if asked_other and chosen.has_plan:
        more.append(("robust", "two_stage", chosen.held))
    t0 = time.perf_counter()
    costs = pd.concat([costs, _evaluate(more, spec, workers, tell, known=(plans, costs))], ignore_index=True)
    plans += more
    timings["evaluation"] += time.perf_counter() - t0
    method = ", ".join(dict.fromkeys(costs["method"].astype(str))) if len(costs) else ""
    study = _figures(case, costs, plans, names, probs, stoch, chosen, messages)
    study.summary["objective"] = held_objective(study.regret, "robust" if asked_other else "stochastic", kind)
    study.scenario_demand = sc
    row = launch
    if str(row["method"]) == "bass":
        p, q, m, yrs = float(row["bass_p"]), float(row["bass_q"]), float(row["market_size"]), int(row["bass_years"])
        study.launch_adoption = bass_adoption(p, q, m, yrs)
        study.summary["bass_peak"] = dict(zip(("year", "adopters"), peak_year(p, q, m, yrs)))
    if not case.tables["past_launches"].empty:
        study.forecast_accuracy = forecast_accuracy(case.tables["past_launches"])
    timings["total"] = time.perf_counter() - t_run
    study.summary.update(
        {
            "case": case.name,
            "currency": str(case.settings["case"]["currency"]),
            "launch": str(row["launch"]),
            "product": str(row["product"]),
            "analogue": str(row["analogue"]),
            "demand_method": str(row["method"]),
            "scenarios": dict(zip(names, (float(p) for p in probs))),
            "objective_kind": kind,
            "cost_bound": rs["cost_bound"] if math.isfinite(rs["cost_bound"]) else None,
            "evaluation": method,
            "two_stage": {
                "status": stoch.status,
                "objective": stoch.objective,
                "bound": stoch.bound,
                "gap": stoch.gap,
                "size": stoch.size,
                "seconds": stoch.seconds,
            },
            "timings_s": {k: round(v, 3) for k, v in timings.items()},
        }
    )
    return study


def evaluation_spec(names, cases, mean, lanes, evaluation: str) -> dict:
    """What :func:`evaluate_plan` needs: the scenarios' cases, the mean-value case, the lanes and how
    plans are held (``auto`` decided here: rebuilt when the case holds safety stock, else warm)."""
    how = evaluation
    if how == "auto":
        how = "rebuilt" if bool(mean.settings["inventory"]["safety_stock"]) else "warm"
    return {"names": names, "cases": cases, "mean": mean, "lanes": lanes, "evaluation": how}


def _evaluate(plans, spec, workers, tell, known=None) -> pd.DataFrame:
    """C[plan, s] of the candidate plans (rows plan, scenario, cost, status, verified, method); each distinct
    set of DC decisions is held once (``known``: plans already held and their rows, reused)."""
    distinct: dict[str, str] = {}  # plan text → first plan with those decisions
    done_rows = known[1] if known is not None else pd.DataFrame()
    for name, _, held in known[0] if known is not None else []:
        distinct.setdefault(_plan_text(held), name)
    todo: list[dict] = []
    for name, _, held in plans:
        key = _plan_text(held)
        if key not in distinct:
            distinct[key] = name
            todo.append({"id": len(todo), "plan": name, "held": held})
    rows: list[dict] = []
    if todo:
        tell(f"holding {len(todo)} distinct plan(s) in {len(spec['names'])} scenario(s) ({spec['evaluation']}) …")
    done = lambda el, out: rows.extend(out["rows"])  # noqa: E731
    if not workers or len(todo) <= 1:
        run_inline(evaluate_plan, spec, todo, done)
    else:
        run_local(evaluate_plan, spec, todo, min(workers, len(todo)), done)
    by_plan = pd.concat([done_rows, pd.DataFrame(rows)], ignore_index=True)
    parts = []
    for name, _, held in plans:
        src = distinct[_plan_text(held)]
        parts.append(by_plan[by_plan["plan"] == src].assign(plan=name))
    return pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=by_plan.columns)


def _cheapest(costs: pd.DataFrame, names: list[str], probs: np.ndarray) -> str:
    """The candidate plan of least expected cost ("" when none serves every scenario)."""
    if costs.empty:
        return ""
    c = costs.pivot(index="plan", columns="scenario", values="cost").reindex(columns=names)
    e = (c * probs).sum(axis=1, skipna=False).dropna()
    return str(e.idxmin()) if len(e) else ""


def scenarios_bound(bounds: list[float], probs: np.ndarray, kind: str) -> float:
    """A lower bound of the two-stage optimum from each scenario's own lower bound LB_s (currency/yr):
    Σ_s π_s LB_s for the expected cost (wait-and-see ≤ the recourse problem, Birge & Louveaux, ch. 4), or
    max_s LB_s for the worst case (min over plans of a maximum ≥ the maximum of the minima); a cost bound
    per scenario only narrows the plans, so both stay valid.  −inf when a scenario has no bound."""
    if kind == "worst_case":
        b = np.asarray(bounds, float)
        return float(b.max()) if len(b) and np.isfinite(b).all() else -math.inf
    return weighted_bound(bounds, probs)


SCENARIOS_BOUND_USED = "the two-stage model's bound is the scenarios' own (stronger than its search's)"


def with_scenarios_bound(out: TwoStageOutcome, bound: float, messages: list[str]) -> TwoStageOutcome:
    """``out`` with :func:`scenarios_bound` when it is the stronger bound (gap recomputed, said in ``messages``)."""
    if not out.has_plan:
        return out
    new, gap, what = stronger_bound(out.objective, out.bound, out.gap, bound)
    if what == ABOVE:
        messages.append(above_note("the scenarios'", bound))
    if what != USED:
        return out
    if SCENARIOS_BOUND_USED not in messages:
        messages.append(SCENARIOS_BOUND_USED)
    return dataclasses.replace(out, bound=new, gap=gap)


def held_objective(regret: pd.DataFrame, plan: str, kind: str) -> float | None:
    """The chosen plan's objective as held exactly in every scenario (currency/yr): its expected cost, or
    its worst scenario's cost for ``worst_case``; None when it has no finite value.  The two-stage MIP's
    own objective (``summary.two_stage.objective``) differs from it by at most that search's gap."""
    row = regret[regret["plan"] == plan]
    if row.empty:
        return None
    value = float(row["worst_cost" if kind == "worst_case" else "expected_cost"].iloc[0])
    return value if math.isfinite(value) else None


def _figures(case, costs, plans, names, probs, stoch, chosen, messages) -> RobustStudy:
    pi = pd.Series(probs, index=names)
    c = costs.pivot(index="plan", columns="scenario", values="cost")
    c = c.reindex(index=[p[0] for p in plans], columns=names).astype(float)
    filled = c.fillna(math.inf)
    optimum = filled.min(axis=0)
    for n in names:
        own_cost = filled.at[f"own:{n}", n] if f"own:{n}" in filled.index else math.inf
        best = filled[n].idxmin()
        if own_cost > optimum[n] * (1 + TOLERANCE) + TOLERANCE:
            messages.append(
                f"in case '{n}' plan '{best}' costs less than the case's own solve (stopped at the gap): its cost "
                "is taken as the case's optimum"
            )
    regret = filled - optimum
    expected = (filled * pi).sum(axis=1)
    ws = float((optimum * pi).sum())
    rp = float(expected.get("stochastic", math.inf))
    if len(expected) and expected.min() < rp * (1 - TOLERANCE) - TOLERANCE:
        messages.append(
            f"plan '{expected.idxmin()}' costs less in expectation than the two-stage plan (the two-stage search "
            "stopped at the gap): RP is taken as its expected cost"
        )
        rp = float(expected.min())
    eev = float(expected.get("mean_value", math.inf))
    if not math.isfinite(eev):
        messages.append("the mean-value plan cannot serve every scenario: EEV and VSS are not finite")
    max_regret = regret.max(axis=1)
    feasible = max_regret[np.isfinite(max_regret)]
    choice = ""
    if len(feasible):
        lowest = feasible[feasible <= feasible.min() * (1 + TOLERANCE) + TOLERANCE]
        choice = str(expected.reindex(lowest.index).idxmin())
    kinds = {p[0]: p[1] for p in plans}
    helds = {p[0]: p[2] for p in plans}
    reg = pd.DataFrame(
        {
            "plan": list(c.index),
            "kind": [kinds[p] for p in c.index],
            "dcs_open_names": [_plan_text(helds[p]) for p in c.index],
            "expected_cost": expected.to_numpy(float),
            "worst_cost": filled.max(axis=1).to_numpy(float),
            "expected_regret": (regret * pi).sum(axis=1).to_numpy(float),
            "max_regret": max_regret.to_numpy(float),
            "min_max_regret": [bool(choice) and _plan_text(helds[p]) == _plan_text(helds[choice]) for p in c.index],
        }
    )
    for n in names:
        reg[f"regret_{n}"] = regret[n].to_numpy(float)
    reg = reg.replace([np.inf, -np.inf], np.nan)
    long = costs.merge(pd.DataFrame({"scenario": names, "probability": probs}), on="scenario")
    long["scenario_optimum"] = long["scenario"].map(optimum).replace(np.inf, np.nan)
    long["regret"] = long["cost"] - long["scenario_optimum"]
    long = long[
        ["plan", "scenario", "probability", "cost", "scenario_optimum", "regret", "status", "verified", "method"]
    ]
    dcs = []
    for p, _, held in plans:
        for d, v in held.items():
            dcs.append({"plan": p, "dc": d, "open": bool(v), "size": v if isinstance(v, str) else ""})
    summary = {
        "objective": chosen.objective if chosen.has_plan else None,
        "expected_cost": rp if math.isfinite(rp) else None,
        "rp": rp if math.isfinite(rp) else None,
        "eev": eev if math.isfinite(eev) else None,
        "ws": ws if math.isfinite(ws) else None,
        "vss": (eev - rp) if math.isfinite(eev) and math.isfinite(rp) else None,
        "evpi": (rp - ws) if math.isfinite(rp) and math.isfinite(ws) else None,
        "min_max_regret_plan": choice or None,
        "plans": {p: _plan_text(h) for p, _, h in plans},
        "messages": messages,
        "money": "currency per year",
    }
    return RobustStudy(pd.DataFrame(), pd.DataFrame(dcs), long, reg, summary=summary)
