"""Cost–CO2 trade-off curve by the epsilon-constraint method.

``frontier(case, points=N)`` returns N networks from the cost-optimal one to the CO2-minimal one:

1. the cost-optimal solve (the case's own rules; a CO2 cap in the case stays the loosest cap):
   total cost C* (currency/yr), transport CO2e E_max (t/yr) — or, in a scenario run, the base's
   or scenario's own solve, so the frontier's first point is that row exactly;
2. the CO2-minimal solve: minimise transport CO2e alone, with lost demand held at most at
   the cost-optimal solve's (otherwise dropping demand would be the "greenest" network): E_min;
3. for caps ε between E_min and E_max (evenly spaced; the last is E_min itself), minimise cost
   subject to CO2e ≤ ε.  The caps are solved from the tightest to the loosest, each started from
   the previous (tighter) network, which is feasible for the looser cap, so the costs found never
   rise as the cap loosens: cost is non-decreasing down the table as the cap tightens.

All solves share one compiled model in one HiGHS instance; only the objective, the cap row's
bound and start solutions change.  Every point goes through :func:`netopt.engine.extract.extract` (tables, verification)
against the case with that cap.  Row 0 is the cost-optimal network, row N−1 the CO2-minimal one.

Columns: point, co2_cap_t (t CO2e/yr; the cost-optimal point: the case's cap, NaN if none),
co2_t, total_cost (currency/yr), delta_cost and delta_co2_t against the cost-optimal point,
cost_per_t_abated (currency per t between this point and the previous one), dcs_open,
dcs_open_names, safety_stock_cost, lost_units, tkm_share_<mode> (share of tonne-km by mode),
mode_mix (text), status, gap, verified.

In a ``scenarios.toml`` a scenario may ask for its frontier with ``frontier_points = N``
(:func:`scenario_frontier`).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

import highspy
import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.limits import MAX_FRONTIER_POINTS
from netopt.data.periods import has_periods
from netopt.engine.extract import extract
from netopt.engine.highs import SolveInfo, compile_model
from netopt.engine.result import Result, fixed_options
from netopt.engine.tables import in_service
from netopt.model import build_model
from netopt.model.safety_stock import add_pooling_cuts, prepare_solve
from netopt.network.arcs import build_network
from netopt.network.lanes import case_lanes

INF = highspy.kHighsInf
CAP_TOL_REL = 1e-9  # slack on each cap (relative), so the previous network stays feasible
CAP_TOL_ABS = 1e-6  # t CO2e


@dataclass
class FrontierRun:
    """The frontier table and each point's result tables (same order)."""

    table: pd.DataFrame
    tables: list[dict[str, pd.DataFrame]] = field(default_factory=list)
    cost_optimal: Result | None = None  # point 0 as a full, verified result (for files and the report)


def _with_cap(case: Case, cap: float) -> Case:
    settings = copy.deepcopy(case.settings)
    settings["policy"]["co2_cap_tonnes"] = float(cap)
    return Case(case.name, case.tables, settings, case.path, case.scenarios, case.warnings)


FRONTIER_ONE_YEAR = (
    "the cost–CO2 frontier plans one year; this case has periods (a CO2e cap per year of a phased plan is not "
    "swept yet): run the frontier on a one-year copy of the case (without periods.csv)"
)
"""Why a frontier refuses a case with periods (said as a problem of the case: exit 2, nothing written)."""


def sweep(
    case: Case,
    points: int = 5,
    *,
    time_limit: float | None = None,
    mip_gap: float | None = None,
    progress=None,
    cost_optimal: Result | None = None,
) -> FrontierRun:
    """Solve the epsilon-constraint sweep (see module docstring); 2 ≤ ``points`` ≤ MAX_FRONTIER_POINTS networks.

    ``cost_optimal``: an existing cost-optimal solve of ``case`` (a run's base or scenario row).
    It *is* point 0 (its tables and figures, not a second solve that could land elsewhere within
    the gap); the CO2-minimal solve holds lost demand at its lost units and starts from its DCs.
    """
    points = int(points)
    if not 2 <= points <= MAX_FRONTIER_POINTS:
        raise ValueError(
            f"a frontier needs 2 to {MAX_FRONTIER_POINTS} points (the cost-optimal and the CO2-minimal network "
            f"and caps between them, one full solve each), not {points}"
        )
    if has_periods(case):
        raise CaseError([Problem("periods", None, None, FRONTIER_ONE_YEAR)])
    say = progress or (lambda event, info=None: None)
    sset = case.settings["solver"]
    time_limit = float(sset["time_limit_s"] if time_limit is None else time_limit)
    mip_gap = float(sset["mip_gap"] if mip_gap is None else mip_gap)
    case_cap = float(case.settings["policy"]["co2_cap_tonnes"])

    lanes = case_lanes(case)
    # Build with a cap row (its bound is set per solve below).
    net = build_network(_with_cap(case, 1e15), lanes)
    b = build_model(net)
    hm = compile_model(b)
    h = hm.highs
    if b.empty_infeasible:
        return FrontierRun(pd.DataFrame([{"point": 0, "status": "infeasible", "verified": False}]))
    prepare_solve(hm, time_limit=time_limit, mip_gap=mip_gap)
    comp = getattr(b.model, "co2_cap", None)
    row = hm.row(comp[0]) if comp is not None and 0 in comp else -1
    flow_cols = hm.col_of["flow"]
    co2_t = net.arcs["co2_kg_per_unit"].to_numpy(float) / 1000.0
    lp = h.getLp()
    n = int(lp.num_col_)
    cost_vec = np.asarray(lp.col_cost_, dtype=float)

    def set_cap(cap: float) -> None:
        if row >= 0:
            h.changeRowBounds(row, -INF, INF if cap < 0 else cap * (1 + CAP_TOL_REL) + CAP_TOL_ABS)

    def co2_of(x: np.ndarray) -> float:
        m = flow_cols >= 0
        return float(co2_t[m] @ x[flow_cols[m]])

    def run(start: np.ndarray | None, cuts: bool = False):
        if cuts:  # pooling cuts at the LP optimum under the new cap (safety-stock models only)
            add_pooling_cuts(hm)
        if start is not None:
            sol = highspy.HighsSolution()
            sol.col_value = start.tolist()
            sol.value_valid = True
            h.setSolution(sol)
        return hm.solve(time_limit=time_limit, mip_gap=mip_gap)

    results: list[tuple[float, SolveInfo, np.ndarray | None]] = []  # (cap, info, x)

    unmet_cols = hm.col_of.get("unmet", np.zeros(0, np.int64))
    unmet_rows = np.flatnonzero(unmet_cols >= 0)
    unmet_cols = unmet_cols[unmet_rows].astype(np.int32)
    # 1. Cost-optimal under the case's own rules (or the solve handed in).
    given = cost_optimal is not None and cost_optimal.has_solution
    info0: SolveInfo | None = None
    x0: np.ndarray | None = None
    if cost_optimal is not None and given:
        e_max = float(cost_optimal.tables["flows"]["co2_kg"].sum() / 1000.0)
        un = cost_optimal.tables["unmet"]
        lost = un.set_index(["customer", "product"])["lost_units"] if len(un) else pd.Series(dtype=float)
        keys = pd.MultiIndex.from_frame(net.demand[["customer", "product"]].astype(str))
        lost0 = lost.reindex(keys).fillna(0.0).to_numpy(float)[unmet_rows]
    else:
        set_cap(case_cap)
        say("frontier", {"point": "cost-optimal"})
        info0 = run(None)
        if not info0.has_solution:
            return FrontierRun(pd.DataFrame([{"point": 0, "status": info0.status, "verified": False}]))
        x0 = np.asarray(h.getSolution().col_value, dtype=float)
        e_max = co2_of(x0)
        lost0 = x0[unmet_cols]

    # 2. CO2-minimal: objective = t CO2e, lost demand held at the cost optimum's.
    say("frontier", {"point": "CO2-minimal"})
    co2_obj = np.zeros(n)
    m = flow_cols >= 0
    co2_obj[flow_cols[m]] = co2_t[m]
    all_cols = np.arange(n, dtype=np.int32)
    h.changeColsCost(n, all_cols, co2_obj)
    lo = np.asarray(lp.col_lower_, dtype=float)
    hi = np.asarray(lp.col_upper_, dtype=float)
    if len(unmet_cols):
        h.changeColsBounds(len(unmet_cols), unmet_cols, lo[unmet_cols], np.minimum(hi[unmet_cols], lost0))
    set_cap(case_cap)
    if cost_optimal is not None and given:
        start_open = fixed_options(net, cost_optimal.held_openings())
        if start_open is not None:
            hm.set_start("open", start_open)
    info_min = run(x0)
    x_min = np.asarray(h.getSolution().col_value, dtype=float) if info_min.has_solution else x0
    if x_min is None:
        return FrontierRun(pd.DataFrame([{"point": 0, "status": info_min.status, "verified": False}]))
    h.changeColsCost(n, all_cols, cost_vec)
    if len(unmet_cols):
        h.changeColsBounds(len(unmet_cols), unmet_cols, lo[unmet_cols], hi[unmet_cols])
    e_min = min(co2_of(x_min), e_max)

    # 3. Caps from the tightest to the loosest, each started from the previous network.
    caps = [e_max + (e_min - e_max) * k / (points - 1) for k in range(points)]
    start = x_min
    for k in range(points - 1, 0, -1):
        say("frontier", {"point": k, "cap_t": caps[k]})
        set_cap(caps[k])
        info = run(start, cuts=True)
        x = np.asarray(h.getSolution().col_value, dtype=float) if info.has_solution else None
        results.append((caps[k], info, x))
        if x is not None:
            start = x
    results.append((case_cap if case_cap >= 0 else np.nan, info0, x0))  # type: ignore[arg-type]
    results.reverse()

    rows: list[dict] = []
    point_tables: list[dict[str, pd.DataFrame]] = []
    point0: Result | None = cost_optimal if given else None
    base_cost: float | None = None
    base_co2 = 0.0
    for k, (cap, info, x) in enumerate(results):
        if k == 0 and cost_optimal is not None and given:
            row_ = {"point": 0, "co2_cap_t": cap, "status": cost_optimal.status, "gap": cost_optimal.gap}
            cost, tables = cost_optimal.cost, cost_optimal.tables
            ver = cost_optimal.verification
        else:
            row_ = {"point": k, "co2_cap_t": cap, "status": info.status, "gap": info.gap}
            if x is None:
                rows.append(row_ | {"verified": False})
                point_tables.append({})
                continue
            values = {name: np.where(cols >= 0, x[np.maximum(cols, 0)], 0.0) for name, cols in hm.col_of.items()}
            check_case = _with_cap(case, cap * (1 + CAP_TOL_REL) + CAP_TOL_ABS) if cap == cap else case
            out = extract(check_case, lanes, net, b, values, float(info.objective))
            cost, tables, ver = out.cost, out.tables, out.verification
        total = float(sum(cost.values()))
        co2 = float(tables["flows"]["co2_kg"].sum() / 1000.0)
        if base_cost is None:
            base_cost, base_co2 = total, co2
        d = tables["dcs"]
        mm = tables["mode_mix"]
        row_.update(
            {
                "co2_t": co2,
                "total_cost": total,
                "delta_cost": total - base_cost,
                "delta_co2_t": co2 - base_co2,
                "dcs_open": int(in_service(d).sum()),
                "dcs_open_names": " ".join(d.loc[in_service(d), "dc"]),
                "safety_stock_cost": cost.get("safety_stock", 0.0),
                "lost_units": float(tables["unmet"]["lost_units"].sum()) if len(tables["unmet"]) else 0.0,
            }
        )
        for mode, share in zip(mm["mode"], mm["share_of_tonne_km"]):
            row_[f"tkm_share_{mode}"] = float(share)
        row_["mode_mix"] = " / ".join(
            f"{mo} {s:.0%}" for mo, s in zip(mm["mode"], mm["share_of_tonne_km"]) if s >= 0.005
        )
        row_["verified"] = bool(ver.passed) if ver is not None else False
        rows.append(row_)
        point_tables.append(tables)
        if k == 0 and not given:
            point0 = Result.of(
                case.name,
                info,
                tables=tables,
                verification=ver,
                message=info.message + " (the frontier's cost-optimal point)",
                lanes=lanes,
                network=net,
            )
    table = pd.DataFrame(rows)
    if "total_cost" in table:
        d_cost = table["total_cost"].diff()
        d_co2 = -table["co2_t"].diff()
        table["cost_per_t_abated"] = np.where(d_co2 > 1e-9, d_cost / d_co2.where(d_co2 > 1e-9), np.nan)
        share_cols = sorted(c for c in table.columns if c.startswith("tkm_share_"))
        table[share_cols] = table[share_cols].fillna(0.0)
        first = [
            "point",
            "co2_cap_t",
            "co2_t",
            "total_cost",
            "delta_cost",
            "delta_co2_t",
            "cost_per_t_abated",
            "dcs_open",
            "dcs_open_names",
            "safety_stock_cost",
            "lost_units",
        ]
        rest = [c for c in table.columns if c not in first and c not in share_cols]
        table = table[first + share_cols + rest]
    return FrontierRun(table, point_tables, point0)


def frontier(case: Case, points: int = 5, **kw) -> pd.DataFrame:
    """The cost–CO2 frontier of ``case`` as a table (see module docstring); ``kw`` go to :func:`sweep`."""
    return sweep(case, points, **kw).table


def scenario_frontier(case: Case, scenario, cost_optimal: Result | None = None) -> pd.DataFrame | None:
    """The frontier a scenario asks for with ``frontier_points = N`` (None when it asks for none);
    ``cost_optimal``: the scenario's own redesign solve, which is then point 0 (see :func:`sweep`)."""
    n = int(getattr(scenario, "frontier_points", 0) or 0)
    return frontier(case, points=n, cost_optimal=cost_optimal) if n >= 2 else None
