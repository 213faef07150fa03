"""The as-is baseline: today's flows (table ``current_flows``) costed with a solve's own cost model.

Nothing is optimised.  Today's units per (origin, destination, mode, product) become the values of
the model's flow variables, and every other variable the cost components read is set from them by
the model's own rules:

    x_a    = today's units on arc a                                         (units/yr)
    w_{f,p} = Σ_{a ∈ out(f,p)} x_a                      units made = units shipped (plant_output)
    y_o    = 1 for one option of each DC in use (carrying flow in or out, or forced open):
             its only option, else the cheapest size whose capacity holds today's inflow
             (the largest when none does), 0 otherwise
    u_{c,p} = max(0, q_{c,p} − Σ_{a ∈ A_C(c,p)} x_a)     lost demand, where the case allows it
    l_c    = max(0, τ_c D_c − Σ_{a ∈ A_C(c)} ω_a x_a)   units short of the service target (priced)
    s_{d,p,k} = min(Δ_k, max(0, T_{d,p} − b_k))          safety-stock segments filled in order

The cost components are then the model's own terms at those values (``Builder.component_values``),
so a baseline and a solve price one plan identically; :func:`netopt.engine.extract.extract` builds
the usual tables and the independent check recomputes every component from the tables and the
case.  A rule today's flows do not meet (a capacity, a share cap, the demand) is reported by that
check as a finding about today, never corrected.  Arcs are built without pruning dominated modes,
so a flow on a dearer mode is costed as it runs.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.periods import has_periods, horizon, period_case
from netopt.data.settings_schema import ACTUAL_SPEND
from netopt.data.text import row_number
from netopt.engine.extract import extract
from netopt.engine.highs import SolveInfo
from netopt.engine.result import Result
from netopt.engine.verify import REL_TOL
from netopt.model import build_model
from netopt.model.core import Builder
from netopt.network.arcs import Network, build_network
from netopt.network.lanes import case_lanes

ARC_KEYS = ["origin", "destination", "mode", "product"]
TODAY_IS_FIRST_PERIOD = "a case with periods: today's flows costed against the first period's demand and capacities"
BASELINE_STATUS = "baseline"
"""Status of a baseline result: today's flows costed, not a solve."""


def arc_positions(case: Case, net: Network) -> np.ndarray:
    """Position in ``net.arcs`` of each ``current_flows`` row; every row without an arc is a problem (raised)."""
    cur = case.tables["current_flows"]
    pos = pd.Series(np.arange(len(net.arcs)), index=pd.MultiIndex.from_frame(net.arcs[ARC_KEYS].astype(str)))
    at = pos.reindex(pd.MultiIndex.from_frame(cur[ARC_KEYS].astype(str))).to_numpy()
    missing = np.flatnonzero(np.isnan(at))
    if len(missing):
        sites = {
            str(s)
            for n, c in (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))
            for s in case.tables[n][c]
        }
        problems = []
        for k in missing.tolist():
            row = cur.iloc[k]
            r = row_number(cur.index[k])
            o, d, m, p = (str(row[c]) for c in ARC_KEYS)
            if o not in sites:
                problems.append(Problem("current_flows", r, "origin", f"unknown site '{o}'"))
            elif d not in sites:
                problems.append(Problem("current_flows", r, "destination", f"unknown site '{d}'"))
            else:
                problems.append(
                    Problem(
                        "current_flows",
                        r,
                        "mode",
                        f"the case has no lane from '{o}' to '{d}' by {m} that carries {p} (generated or in "
                        "lanes; a DC taken out carries nothing): add the lane to lanes to cost today's flow",
                    )
                )
        raise CaseError(problems)
    return at.astype(int)


def check_current_flows(case: Case) -> None:
    """Raise :class:`~netopt.data.case.CaseError` naming every ``current_flows`` row without a lane of the case
    (nothing to check when the table is empty)."""
    if not case.tables["current_flows"].empty:
        arc_positions(case, build_network(case, case_lanes(case), prune=False))


def current_values(case: Case, net: Network, builder: Builder) -> tuple[dict[str, np.ndarray], list[str]]:
    """The values of every costed variable block at today's flows (see the module docstring), and notes
    saying what netopt decided that the flows do not state (DC sizes, DCs costed as closed)."""
    arcs = net.arcs
    q = case.tables["current_flows"]["quantity"].to_numpy(float)
    flow = np.zeros(len(arcs))
    np.add.at(flow, arc_positions(case, net), q)
    values: dict[str, np.ndarray] = {"flow": flow}
    notes: list[str] = []

    # Units made = units shipped from each plant.
    plant_out = (
        pd.Series(flow, index=pd.MultiIndex.from_frame(arcs[["origin", "product"]]))[
            arcs["origin_kind"].eq("plant").to_numpy()
        ]
        .groupby(level=[0, 1])
        .sum()
    )
    values["make"] = plant_out.reindex(pd.MultiIndex.from_frame(net.make[["plant", "product"]])).fillna(0.0).to_numpy()

    # DCs in use: one option each.
    into = pd.Series(
        flow[arcs["destination_kind"].eq("dc").to_numpy()],
        index=arcs.loc[arcs["destination_kind"].eq("dc"), "destination"],
    )
    out = pd.Series(
        flow[arcs["origin_kind"].eq("dc").to_numpy()], index=arcs.loc[arcs["origin_kind"].eq("dc"), "origin"]
    )
    inflow = into.groupby(level=0).sum()
    moved = inflow.add(out.groupby(level=0).sum(), fill_value=0.0)
    opt = net.options.reset_index(drop=True).copy()
    opt["_i"] = np.arange(len(opt))
    opt["_through"] = opt["dc"].map(inflow).fillna(0.0).to_numpy(float)
    used = opt["dc"].map(moved).fillna(0.0).to_numpy(float) > 0
    opt = opt[used | opt["force"].astype(str).eq("open").to_numpy()]
    opt = opt.assign(_fits=opt["capacity"].to_numpy(float) >= opt["_through"].to_numpy(float) * (1 - 1e-12))
    # Cheapest size that holds today's inflow; none does: the largest.
    opt = opt.sort_values(["dc", "_fits", "fixed_cost", "capacity"], ascending=[True, False, True, False])
    chosen = opt.drop_duplicates("dc")
    chosen = chosen.assign(_best=np.where(chosen["_fits"], 0, 1))
    big = opt.sort_values(["dc", "capacity"], ascending=[True, False]).drop_duplicates("dc").set_index("dc")["_i"]
    pick = np.where(chosen["_fits"].to_numpy(bool), chosen["_i"].to_numpy(int), chosen["dc"].map(big).to_numpy(int))
    values["open"] = np.zeros(len(net.options))
    values["open"][pick] = 1.0
    sized = net.options.loc[pick]
    sized = sized[sized["size"].astype(str) != ""]
    if len(sized):
        notes.append(
            "DC sizes are not in today's flows; each DC in use is costed at the cheapest size that holds its "
            "inflow: " + ", ".join(f"{d} {s}" for d, s in zip(sized["dc"], sized["size"]))
        )
    idle = net.dcs.loc[~net.dcs["dc"].isin(net.options.loc[pick, "dc"]), ["dc", "status"]]
    idle_existing = idle.loc[idle["status"].eq("existing"), "dc"].tolist()
    if idle_existing:
        notes.append(
            "existing DCs without any of today's flow are costed as closed (their closing cost is paid): "
            + ", ".join(idle_existing)
        )

    # Demand delivered, lost demand where the model has it.
    dem = net.demand
    last = arcs["destination_kind"].eq("customer").to_numpy()
    got = pd.Series(flow[last], index=pd.MultiIndex.from_frame(arcs.loc[last, ["destination", "product"]]))
    got = got.groupby(level=[0, 1]).sum()
    delivered = got.reindex(pd.MultiIndex.from_frame(dem[["customer", "product"]])).fillna(0.0).to_numpy(float)
    if builder.has("unmet"):
        values["unmet"] = np.maximum(0.0, dem["quantity"].to_numpy(float) - delivered)

    # Units short of a priced service target.
    if builder.has("late"):
        late = builder.var_labels["late"]
        cust = net.customers.set_index("customer")
        on_time = pd.Series(
            flow[last] * arcs.loc[last, "within_window"].to_numpy(float), index=arcs.loc[last, "destination"]
        )
        on_time = on_time.groupby(level=0).sum()
        demand = dem.groupby("customer")["quantity"].sum()
        c = late["customer"]
        need = c.map(cust["target_share"]).to_numpy(float) * c.map(demand).fillna(0.0).to_numpy(float)
        values["late"] = np.maximum(0.0, need - c.map(on_time).fillna(0.0).to_numpy(float))

    # Safety-stock segments filled in order up to each DC's deliveries of a product.
    if builder.has("ss_seg"):
        seg = builder.var_labels["ss_seg"]
        dc_out = (arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")).to_numpy()
        through = pd.Series(flow[dc_out], index=pd.MultiIndex.from_frame(arcs.loc[dc_out, ["origin", "product"]]))
        through = through.groupby(level=[0, 1]).sum()
        t = through.reindex(pd.MultiIndex.from_frame(seg[["dc", "product"]])).fillna(0.0).to_numpy(float)
        start, width = seg["start"].to_numpy(float), seg["width"].to_numpy(float)
        values["ss_seg"] = np.minimum(width, np.maximum(0.0, t - start))
        top = (
            seg.assign(_end=start + width, _t=t).groupby(["dc", "product"]).agg(end=("_end", "max"), t=("_t", "first"))
        )
        beyond = top[top["t"] > top["end"] * (1 + 1e-9)]
        if len(beyond):
            notes.append(
                "today's deliveries exceed the safety-stock curve's range at "
                + ", ".join(f"{d}/{p}" for d, p in beyond.index)
                + "; the curve is costed up to its last breakpoint there"
            )
    return values, notes


def cost_current_flows(case: Case, lanes: pd.DataFrame | None = None) -> Result:
    """Today's flows costed with the solve's cost model: a :class:`Result` of status ``baseline``
    whose tables are a solve's (flows, DCs, cost, KPIs…) and whose verification recomputes every
    cost component independently; its ``message`` says what netopt decided that the flows do not state.

    Raises :class:`~netopt.data.case.CaseError` when the case has no ``current_flows`` rows or a row
    has no lane (every such row at once)."""
    if case.tables["current_flows"].empty:
        raise CaseError([Problem("current_flows", None, None, "no current flows: a baseline needs today's flows")])
    year_note = ""
    if has_periods(case):  # today is one year: the plan's first period
        first = str(horizon(case)["period"].iloc[0])
        case = period_case(case, first, 0)
        year_note = f"{TODAY_IS_FIRST_PERIOD} ({first})"
    if lanes is None:
        lanes = case_lanes(case)
    net = build_network(case, lanes, prune=False)  # a dearer mode that runs today is costed as it runs
    b = build_model(net)
    values, notes = current_values(case, net, b)
    total = float(sum(b.component_values(values).values()))
    info = SolveInfo(BASELINE_STATUS, total, float("nan"), float("nan"), 0.0, has_solution=True)
    res = Result.of(case.name, info, message="; ".join(n for n in (year_note, *notes) if n), network=net, lanes=lanes)
    out = extract(case, lanes, net, b, values, total)
    res.tables, res.verification = out.tables, out.verification
    res.tables["baseline_cost"] = spend_comparison(res.cost, case.settings)
    res.tables["baseline_rules"] = rules_not_met(res)
    res.plan_values = values
    res.timings.update(out.seconds)
    return res


def spend_comparison(cost: dict[str, float], settings: dict) -> pd.DataFrame:
    """The model's cost of today's flows per component against the actual spend stated in
    ``[actual_spend]`` (currency/yr; -1 = not given): difference = model − actual, relative to actual."""
    actual = {k: float(settings["actual_spend"][k]) for k, _ in ACTUAL_SPEND}
    rows = pd.DataFrame({"component": list(cost), "model_cost": [float(v) for v in cost.values()]})
    given = rows["component"].map(actual).fillna(-1.0).to_numpy(float)
    rows["actual_spend"] = np.where(given >= 0, given, np.nan)
    rows["difference"] = rows["model_cost"] - rows["actual_spend"]
    with np.errstate(divide="ignore", invalid="ignore"):
        rows["difference_share"] = np.where(rows["actual_spend"] > 0, rows["difference"] / rows["actual_spend"], np.nan)
    return rows


def rules_not_met(res: Result) -> pd.DataFrame:
    """The independent check's rules that today's flows do not meet (relative violation above its tolerance)."""
    if res.verification is None:
        return pd.DataFrame(columns=["rule", "violation", "relative_violation", "where"])
    ch = res.verification.checks
    return ch[(ch["relative_violation"] > REL_TOL) & ~ch["rule"].str.startswith("recomputed cost")].reset_index(
        drop=True
    )


def cost_verified(res: Result) -> bool:
    """The model's cost of today's flows equals the independent recomputation (within the check's tolerance)."""
    if res.verification is None:
        return False
    return bool(res.verification.objective_rel_diff <= REL_TOL)


def baseline_summary(res: Result) -> dict:
    """What ``summary.json`` adds for a baseline: the cost check, the rules not met, netopt's notes and
    the model-vs-actual difference per component where the actual spend is given."""
    bc = res.tables["baseline_cost"]
    given = bc[bc["actual_spend"].notna()]
    return {
        "baseline": {
            "nothing_optimised": True,
            "cost_verified": cost_verified(res),
            "rules_not_met": res.tables["baseline_rules"]["rule"].tolist(),
            "notes": [n for n in res.message.split("; ") if n],
            "difference_share": dict(zip(given["component"], given["difference_share"])),
        }
    }
