"""Solve a case with periods: every period's network in one MIP, linked by the phasing of DCs and stock.

``solve`` hands a case with a ``periods`` table here.  Stages: each period's case
(``netopt.data.periods.period_case``) → its network and model (one Pyomo model, names ``…@k``) →
``netopt.model.phasing.stack`` → HiGHS → per period, the one post-solve path
(``netopt.engine.extract``: that period's tables, verified against that period's case) → the
horizon's own tables (phasing, cost per period, stock) verified by ``netopt.engine.verify_horizon``.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np
import pandas as pd
import pyomo.environ as pyo

from netopt.data.case import Case
from netopt.data.periods import horizon, period_case
from netopt.engine.bounds import KEPT, USED, above_note, stronger_bound, weighted_bound
from netopt.engine.diagnose import diagnose_infeasibility
from netopt.engine.extract import cost_components, extract
from netopt.engine.highs import SolveInfo, compile_model
from netopt.engine.highs_check import ModelRejected
from netopt.engine.marginal_values import REDUCED_COLUMNS, SHADOW_COLUMNS
from netopt.engine.one_year import solve_year
from netopt.engine.result import Result, fixed_options
from netopt.engine.verify_horizon import verify_horizon
from netopt.model import build_model
from netopt.model.phasing import ONE_OFF_COMPONENTS, block, holding_cost_per_unit, stack
from netopt.network.arcs import build_network
from netopt.network.lanes import case_lanes

PER_PERIOD_TABLES = ("cost",)
"""Period tables the horizon replaces by its own (the cost of the horizon: ``period_cost`` and ``cost``)."""


def solve_horizon(
    case: Case,
    *,
    time_limit: float,
    mip_gap: float,
    threads: int,
    formulation: str = "tight",
    hold: dict[str, dict[str, str | bool]] | None = None,
    progress=None,
    lanes: pd.DataFrame | None = None,
    keep_model: bool = False,
    diagnose: bool = True,
    start_plan: dict[str, np.ndarray] | None = None,
) -> Result:
    """Plan every period of ``case`` at once (see the module docstring).

    ``hold``: the DC decisions to keep, per period (``Result.held_phasing()`` of a base): re-routing only.
    Money in the result: ``objective`` and the ``cost`` table are present values over the horizon
    (currency); ``period_cost`` gives each period's annual, undiscounted and present-value cost.
    """
    say = progress or (lambda stage, info=None: None)
    timings: dict[str, float] = {}
    t_run = t0 = time.perf_counter()
    if lanes is None:
        lanes = case_lanes(case)
    timings["lanes"] = time.perf_counter() - t0
    say("lanes", {"lanes": len(lanes), "seconds": timings["lanes"]})

    t0 = time.perf_counter()
    per = horizon(case)
    names = per["period"].astype(str).tolist()
    cases = [period_case(case, p, k) for k, p in enumerate(names)]
    model = pyo.ConcreteModel()
    nets, builders = [], []
    for k, ck in enumerate(cases):
        net = build_network(ck, lanes, prune=None if formulation == "tight" else False)
        fixed = fixed_options(net, None if hold is None else hold.get(names[k], {}))
        nets.append(net)
        builders.append(
            build_model(net, formulation=formulation, fixed_open=fixed, model=model, suffix=f"@{k}", objective=False)
        )
    top = stack(builders, per, case.settings, case.tables["dcs"], case.tables["opening_stock"])
    timings["build"] = time.perf_counter() - t0
    say("build", {"arcs": int(sum(len(n.arcs) for n in nets)), "seconds": timings["build"]})

    try:
        hm = compile_model(top)
    except ModelRejected as e:
        info = SolveInfo("error", float("nan"), float("nan"), float("inf"), 0.0, message=str(e))
        return Result.of(case.name, info, timings=timings, message=info.message, network=nets[0], lanes=lanes)
    timings["compile"], timings["handover"] = hm.compile_seconds, hm.pass_seconds
    lp = hm.highs.getLp()
    size = {
        "periods": len(names),
        "columns": int(lp.num_col_),
        "rows": int(lp.num_row_),
        "nonzeros": len(lp.a_matrix_.value_),
        "binaries": int(hm.integrality.sum()),
        "arcs": int(sum(len(n.arcs) for n in nets)),
    }
    say("solve", {"columns": size["columns"], "rows": size["rows"], "binaries": size["binaries"]})
    if top.empty_infeasible:
        info = SolveInfo(
            "infeasible",
            float("nan"),
            float("nan"),
            float("inf"),
            0.0,
            message=f"{len(top.empty_infeasible)} rule(s) with no variable cannot hold",
        )
    else:
        cb = None
        if progress is not None:

            def cb(d):
                say("progress", dict(d, method="MIP search", elapsed=time.perf_counter() - t_run))

        plans = [] if start_plan is None else [start_plan]
        own_bound = -np.inf
        if (hold is not None or bool(case.settings["solver"]["plan_search"])) and hm.integrality.any():
            t0 = time.perf_counter()
            budget = float(case.settings["solver"]["plan_search_share"]) * time_limit
            own, own_bound = start_phasing(case, cases, lanes, nets, top, budget, mip_gap, threads, hold=hold)
            if own is not None and keeps_phasing_limits(top, per, own, case.tables["dcs"]):
                plans.append(own)
            timings["plan_search"] = time.perf_counter() - t0
            say("plan search", {"message": "each period planned on its own, made a phasing"})
        if plans:  # the cheapest plan known starts the MIP search (a caller's plan is never replaced by a dearer one)
            hm.set_plan_start(min(plans, key=lambda v: sum(top.component_values(v).values())))
        left = max(time_limit - (time.perf_counter() - t_run), 0.05 * time_limit)
        try:
            info = hm.solve(time_limit=left, mip_gap=mip_gap, threads=threads, progress=cb)
        except ModelRejected as e:
            info = SolveInfo("error", float("nan"), float("nan"), float("inf"), 0.0, message=str(e))
        info = with_periods_bound(info, own_bound)
    timings["highs"] = info.solver_seconds
    res = Result.of(
        case.name, info, timings=timings, model_size=size, message=info.message, network=nets[-1], lanes=lanes
    )
    res.periods = per
    not_carried = stock_not_carried(case, top)
    if not_carried:
        res.message = "; ".join(x for x in (res.message, not_carried) if x)
    if info.has_solution:
        values = hm.values()
        t0 = time.perf_counter()
        res.tables, res.verification = _horizon_tables(
            case, cases, lanes, nets, builders, top, per, values, info.objective
        )
        timings["results"] = time.perf_counter() - t0
        if bool(case.settings["solver"]["marginal_values"]):
            res.tables["shadow_prices"] = pd.DataFrame(columns=SHADOW_COLUMNS)
            res.tables["lane_reduced_costs"] = pd.DataFrame(columns=REDUCED_COLUMNS)
            res.message = "; ".join(x for x in (res.message, MARGINAL_VALUES_NOT_OVER_PERIODS) if x)
        res.plan_values = values
        say("verified", {"passed": res.verification.passed, "largest": res.verification.largest_violation})
    elif info.status in ("infeasible", "unbounded") and diagnose:
        say("diagnose", {})
        res.diagnosis = _diagnose_periods(cases, lanes, names, formulation)
    if keep_model:
        res.highs_model = hm
    return res


def start_phasing(case, cases, lanes, nets, top, budget_s: float, mip_gap: float, threads: int, hold=None):
    """A whole first plan of the stacked model (every block's values, or None) and a lower bound of the
    stacked model from the periods' own solves (−inf when there is none; see :func:`periods_bound`).

    Each period is planned as a case of its own (the one-year solve with its plan search); the plans are
    made to keep the phasing rules (a candidate open from the first period a plan opened it, an existing DC
    closed from the first period a plan closed it); a period whose openings that changed is re-routed with
    them held.  Stock starts at zero (always feasible).  HiGHS takes the plan as its first incumbent when
    it keeps every rule (the openings limits per period may refuse it).  With ``hold`` (period → DC
    decisions) each period is re-routed with its decisions held."""
    nk = len(cases)
    each = max(budget_s / max(2 * nk, 1), 1.0)
    o = nets[0].options
    existing = o["status"].eq("existing").to_numpy()
    reopening = bool(case.settings["periods"]["dc_reopening"])
    plans: list[dict[str, np.ndarray]] = []
    opens: list[np.ndarray] = []
    names = [str(p) for p in case.tables["periods"]["period"]]
    weights = horizon(case)["annual_weight"].to_numpy(float)
    bounds: list[float] = []
    for k, ck in enumerate(cases):
        held_k = None if hold is None else hold.get(names[k], {})
        r = solve_year(ck, time_limit=each, mip_gap=mip_gap, threads=threads, lanes=lanes, hold=held_k, diagnose=False)
        bounds.append(float(r.bound) if r.bound is not None else -np.inf)
        if not r.has_solution or r.plan_values is None:
            return None, periods_bound(top, bounds, weights)
        y = np.asarray(r.plan_values["open"], float).round()
        if not reopening and k > 0 and hold is None:
            y = np.where(existing, np.minimum(y, opens[-1]), np.maximum(y, opens[-1]))
        if not np.array_equal(y, np.asarray(r.plan_values["open"], float).round()):
            held = {dc: (size or True) for dc, size, v in zip(o["dc"], o["size"], y) if v > 0.5}
            r = solve_year(
                ck, time_limit=each, mip_gap=mip_gap, threads=threads, lanes=lanes, hold=held, diagnose=False
            )
            if not r.has_solution or r.plan_values is None:
                return None, periods_bound(top, bounds, weights)
        plans.append(dict(r.plan_values or {}))
        opens.append(y)
    values: dict[str, np.ndarray] = {}
    for name, labels in top.var_labels.items():
        values[name] = np.zeros(len(labels))
    for k, plan in enumerate(plans):
        for name, v in plan.items():
            key = block(name, k)
            if key in values and len(values[key]) == len(v):
                values[key] = np.asarray(v, float)
    dcs = top.var_labels["opened"]["dc"].to_numpy()[: len(set(o["dc"]))]
    z = np.array([[y[(o["dc"] == d).to_numpy()].sum() for d in dcs] for y in opens])
    first = pd.Series(existing, index=o["dc"]).groupby(level=0).first().reindex(dcs).to_numpy(float)
    before = np.vstack([first, z[:-1]])
    values["opened"] = np.maximum(z - before, 0.0).ravel()
    values["closed"] = np.maximum(before - z, 0.0).ravel()
    return values, periods_bound(top, bounds, weights)


PERIODS_BOUND_USED = "bound from the periods' own solves (stronger than the MIP search's)"


def with_periods_bound(info: SolveInfo, bound: float) -> SolveInfo:
    """``info`` with the periods' bound (:func:`periods_bound`) when it is stronger than the MIP search's;
    the gap is recomputed from it and the message says so."""
    if not info.has_solution:
        return info
    new, gap, what = stronger_bound(info.objective, info.bound, info.gap, bound)
    if what == KEPT:
        return info
    said = PERIODS_BOUND_USED if what == USED else above_note("the periods'", bound)
    message = "; ".join(m for m in (info.message, said) if m)
    return dataclasses.replace(info, bound=new, gap=gap, message=message)


def periods_bound(top, bounds: list[float], weights: np.ndarray) -> float:
    """A lower bound of the stacked model from each period's own lower bound LB_k (currency/yr):
    Σ_k w_k LB_k.  Dropping the rows that link the periods (DC phasing, openings limits) and the one-off
    costs (≥ 0) relaxes the plan into the periods' own one-year problems, whose costs the stack weights
    by w_k (``periods.annual_weight``, > 0).  Valid only when no stock is carried between periods (the
    stock rows link them the other way: a period alone may be dearer or infeasible); −inf otherwise or
    when a period has no bound."""
    return -np.inf if "stock" in top.var_labels else weighted_bound(bounds, weights)


def stock_not_carried(case: Case, top) -> str:
    """A sentence naming the stock on hand the plan cannot carry (a site and product without a balance row
    in every period), or ""."""
    on_hand = case.tables["opening_stock"]
    if on_hand.empty or "stock" not in top.var_labels or bool(case.settings["periods"]["repeat_year"]):
        return ""
    carried = set(zip(top.var_labels["stock"]["site"], top.var_labels["stock"]["product"]))
    pairs = zip(on_hand["site"], on_hand["product"], on_hand["quantity"])
    left = [f"{s}/{p}" for s, p, q in pairs if q > 0 and (s, p) not in carried]
    if not left:
        return ""
    return (
        f"stock on hand not used ({', '.join(left[:5])}{' …' if len(left) > 5 else ''}): the site does not handle "
        "the product in every period"
    )


def keeps_phasing_limits(top, per: pd.DataFrame, values: dict[str, np.ndarray], dcs: pd.DataFrame) -> bool:
    """Whether a plan from :func:`start_phasing` keeps the openings limit and the opening budget of every
    period (its other rows hold by construction)."""
    u = values["opened"].reshape(len(per), -1)
    most = per["max_openings"].to_numpy(float)
    if ((most >= 0) & (u.sum(axis=1) > most + 1e-9)).any():
        return False
    cost = top.var_labels["opened"]["dc"].iloc[: u.shape[1]].map(dcs.set_index("dc")["opening_cost"]).to_numpy(float)
    return bool((u @ cost <= per["opening_budget"].to_numpy(float) * (1 + 1e-9)).all())


def stock_table(top, per: pd.DataFrame, values: dict, k: int, opening_stock: pd.DataFrame, repeat: bool):
    """The stock of period ``k`` (site, site_kind, product, opening, closing, years: units; holding_cost:
    currency/yr), from the stacked model's ``stock`` block; None when stock is not carried."""
    if "stock" not in values:
        return None
    nk = len(per)
    s = values["stock"].reshape(nk, -1)
    ns = s.shape[1]
    sites = top.var_labels["stock"].iloc[:ns][["site", "site_kind", "product"]].reset_index(drop=True)
    if k > 0:
        opening = s[k - 1]
    elif repeat:
        opening = s[nk - 1]
    elif len(opening_stock):
        on_hand = opening_stock.set_index(["site", "product"])["quantity"]
        opening = on_hand.reindex(pd.MultiIndex.from_frame(sites[["site", "product"]])).fillna(0.0).to_numpy(float)
    else:
        opening = np.zeros(ns)
    clean = np.where(np.abs(s[k]) < 1e-9, 0.0, s[k])
    opening = np.where(np.abs(opening) < 1e-9, 0.0, opening)
    out = sites.assign(opening=opening, closing=clean, years=float(per["years"].iloc[k]))
    out["holding_cost"] = clean * holding_cost_per_unit(top, sites)
    return out


def _horizon_tables(case, cases, lanes, nets, builders, top, per, values, objective):
    names = per["period"].astype(str).tolist()
    repeat = bool(case.settings["periods"]["repeat_year"])
    period_tables, verifications, annual = [], [], []
    for k, (ck, net, b) in enumerate(zip(cases, nets, builders)):
        vk = {n: values[block(n, k)] for n in b.vars}
        stock = stock_table(top, per, values, k, case.tables["opening_stock"], repeat)
        cost_k = cost_components(b, vk)
        if stock is not None:
            cost_k["stock_holding"] = float(stock["holding_cost"].sum())
        out = extract(ck, lanes, net, b, vk, float(sum(cost_k.values())), stock=stock)
        period_tables.append(out.tables)
        verifications.append(out.verification)
        annual.append(out.cost)
    tables: dict[str, pd.DataFrame] = {}
    for name in period_tables[0]:
        if name in PER_PERIOD_TABLES:
            continue
        parts = [t[name].assign(period=names[k]) for k, t in enumerate(period_tables) if name in t]
        frame = pd.concat([p for p in parts if len(p)] or parts[:1], ignore_index=True)
        tables[name] = frame[["period", *[c for c in frame.columns if c != "period"]]]
    tables["periods"] = per
    tables["phasing"] = phasing_table(case, tables["dcs"], names)
    tables["period_cost"] = period_cost_table(per, annual, tables["phasing"], case)
    pv = tables["period_cost"].groupby("component", sort=False)["present_value"].sum()
    tables["cost"] = pd.DataFrame({"component": list(pv.index), "amount": pv.to_numpy(float)})
    return tables, verify_horizon(case, tables, per, verifications, objective)


MARGINAL_VALUES_NOT_OVER_PERIODS = (
    "shadow prices and lane reduced costs are not computed for a plan over periods (the held linear program "
    "is one year's); their tables are written empty"
)

PHASING_STATES = ("opens", "open", "closes", "closed")
"""A DC's state in a period: opens (opened at the start of it), open, closes (closed at the start of it), closed."""


def phasing_table(case: Case, dcs: pd.DataFrame, names: list[str]) -> pd.DataFrame:
    """DC × period: open or not and its state (:data:`PHASING_STATES`), from the periods' ``dcs`` tables."""
    d = dcs[["period", "dc", "status", "open", "size"]].copy()
    d["order"] = d["period"].map({p: i for i, p in enumerate(names)})
    d = d.sort_values(["dc", "order"])
    before = d.groupby("dc")["open"].shift(1)
    before = before.where(before.notna(), d["status"].eq("existing")).astype(bool)
    now = d["open"].astype(bool)
    d["state"] = np.select([now & ~before, now, before & ~now], ["opens", "open", "closes"], "closed")
    order = {dc: i for i, dc in enumerate(case.tables["dcs"]["dc"])}
    d = d.sort_values(["dc", "order"], key=lambda c: c.map(order) if c.name == "dc" else c)
    return d[["dc", "period", "status", "open", "size", "state"]].reset_index(drop=True)


def period_cost_table(per: pd.DataFrame, annual: list[dict], phasing: pd.DataFrame, case: Case) -> pd.DataFrame:
    """Period × component: ``annual`` (currency/yr, at the tables' prices), ``undiscounted`` (the period's
    spend: annual × price level × years, or the one-off cost) and ``present_value`` (currency)."""
    dcs = case.tables["dcs"].set_index("dc")
    rows = []
    for k, p in enumerate(per["period"].astype(str)):
        index, years = float(per["cost_index"].iloc[k]), float(per["years"].iloc[k])
        w, delta = float(per["annual_weight"].iloc[k]), float(per["one_off_weight"].iloc[k])
        for comp, amount in annual[k].items():
            if comp in ONE_OFF_COMPONENTS:
                continue
            rows.append((p, comp, amount, amount * index * years, amount * w))
        ph = phasing[phasing["period"] == p]
        opened = float(dcs["opening_cost"].reindex(ph.loc[ph["state"] == "opens", "dc"]).sum())
        closed = float(dcs["closing_cost"].reindex(ph.loc[ph["state"] == "closes", "dc"]).sum())
        rows.append((p, "dc_opening", np.nan, opened, opened * delta))
        rows.append((p, "dc_closing", np.nan, closed, closed * delta))
    return pd.DataFrame(rows, columns=["period", "component", "annual", "undiscounted", "present_value"])


def _diagnose_periods(cases: list[Case], lanes: pd.DataFrame, names: list[str], formulation: str) -> pd.DataFrame:
    """Each period diagnosed as a case of its own (the elastic re-solve of ``netopt.engine.diagnose``)."""
    parts = []
    for p, ck in zip(names, cases):
        net = build_network(ck, lanes, prune=None if formulation == "tight" else False)
        d = diagnose_infeasibility(net, formulation=formulation, fixed=None)
        if d is not None and len(d):
            parts.append(d.assign(period=p))
    if not parts:
        return pd.DataFrame(
            {
                "period": ["(all)"],
                "rule": ["phasing"],
                "message": [
                    "every period can be met on its own: the DC phasing rules (earliest periods, openings "
                    "per period, opening budget, DCs kept open) or the carried stock make the horizon infeasible"
                ],
            }
        )
    out = pd.concat(parts, ignore_index=True)
    return out[["period", *[c for c in out.columns if c != "period"]]]
