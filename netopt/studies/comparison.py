"""The scenario comparison table: one row per scenario and re-solve, against the base."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.engine.tables import in_service
from netopt.model import PENALTY_COMPONENTS


def gap_tolerance(base_total: float, base_gap: float, total: float, gap: float) -> float:
    """The largest cost change (currency/yr) that two solves can show while both are within their
    proven optimality gaps: (gap of the base + gap of this solve) × the larger total.  A change
    smaller than this is "within the optimality gap", not a finding."""

    def g(v) -> float:
        v = float(v) if v is not None else 0.0
        return v if np.isfinite(v) else 0.0

    scale = max(abs(base_total) if np.isfinite(base_total) else 0.0, abs(total) if np.isfinite(total) else 0.0)
    return max(g(base_gap) + g(gap), 1e-9) * scale


def diagnosis_text(diagnosis: pd.DataFrame | None, most: int = 4) -> str:
    """What an infeasible solve could not meet, in one line: rule, how many rows, where, amount."""
    if diagnosis is None or diagnosis.empty:
        return ""
    parts = []
    for rule, g in diagnosis.groupby("rule", sort=False):
        where = "; ".join(g["where"].astype(str).head(2)) + (" …" if len(g) > 2 else "")
        amount = pd.to_numeric(g["amount"], errors="coerce").sum()
        parts.append(f"{rule} ×{len(g)} ({where}): {amount:,.0f}")
    return " | ".join(parts[:most]) + (f" | +{len(parts) - most} more rules" if len(parts) > most else "")


def lost_where(unmet: pd.DataFrame, most: int = 3) -> str:
    """The customers losing most demand in one line: ``customer units; …`` (units/yr), largest first."""
    if unmet.empty:
        return ""
    by = unmet.groupby("customer")["lost_units"].sum().sort_values(ascending=False)
    by = by[by > 0.5]
    text = "; ".join(f"{c} {v:,.0f}" for c, v in by.head(most).items())
    return text + (f"; +{len(by) - most} more customers" if len(by) > most else "")


PERIOD_COLUMN = "period_{}"
"""The comparison's column of one period's present value (declared as ``period_<period>``)."""


def is_over_periods(comparison: pd.DataFrame) -> bool:
    """Whether a comparison table is of plans over periods (it has a period's present-value column)."""
    prefix = PERIOD_COLUMN.format("")
    return any(str(c).startswith(prefix) for c in comparison.columns)


def cost_comparable_to_today(r) -> float:
    """What a plan costs per year against today's flows (currency/yr): its total, or for a plan over
    periods its first period's annual cost (one-off costs left out), as a baseline is one year."""
    if not r.has_solution:
        return float("nan")
    if r.periods is None:
        return float(r.objective)
    pc = r.tables["period_cost"]
    first = str(r.periods["period"].iloc[0])
    return float(pc.loc[pc["period"].astype(str) == first, "annual"].sum())


def comparison_row(
    name: str,
    based_on: str,
    how: str,
    r,
    base,
    method: str,
    seconds: float,
    description: str,
) -> dict:
    """One row of the comparison table (money in currency/yr)."""
    row = {
        "scenario": name,
        "description": description,
        "based_on": based_on,
        "resolve": how,
        "status": r.status,
        "gap": r.gap,
    }
    if not r.has_solution:
        row.update(
            {
                "total_cost": np.nan,
                "verified": False,
                "method": method + (" (lost demand allowed)" if r.lost_demand_allowed else ""),
                "seconds": seconds,
                "diagnosis": diagnosis_text(r.diagnosis),
            }
        )
        return row
    cost = r.cost
    total = float(sum(cost.values()))
    btotal = float(sum(base.cost.values())) if base.has_solution else np.nan
    row["total_cost"] = total
    row["delta_cost"] = total - btotal
    row["delta_pct"] = (total - btotal) / btotal if btotal else np.nan
    row["gap_tolerance"] = gap_tolerance(btotal, base.gap, total, r.gap)
    row["within_gap"] = bool(abs(total - btotal) <= row["gap_tolerance"])
    # The delta, explained: operating cost versus penalties for rules not met, then each component.
    bcost = base.cost if base.has_solution else {}
    delta = {k: float(v) - float(bcost.get(k, 0.0)) for k, v in cost.items()}
    row["delta_penalty"] = sum(v for k, v in delta.items() if k in PENALTY_COMPONENTS)
    row["delta_operating"] = row["delta_cost"] - row["delta_penalty"]
    for k, v in cost.items():
        row[f"cost_{k}"] = v
    for k, v in delta.items():
        row[f"delta_{k}"] = v
    if r.periods is not None:  # a plan over periods: money is a present value; the rest is its last period
        pc = r.tables["period_cost"]
        for p, v in pc.groupby("period", sort=False)["present_value"].sum().items():
            row[PERIOD_COLUMN.format(p)] = float(v)
        row["phasing"] = r.phasing_text()
        r, base = r.period_view(), base.period_view()
    d = r.tables["dcs"]
    row["dcs_open"] = int(in_service(d).sum())
    row["dcs_open_names"] = " ".join(d.loc[in_service(d), "dc"])
    k = dict(zip(r.tables["kpis"]["kpi"], r.tables["kpis"]["value"]))
    row["share_within_window"] = k.get("share_within_service_window")
    row["avg_transit_days"] = k.get("avg_transit_days_to_customer")
    ss = r.tables["supplier_shares"]
    row["max_supplier_share"] = float(ss["share"].max()) if len(ss) else np.nan
    mm = r.tables["mode_mix"]
    row["mode_mix"] = " / ".join(f"{m} {s:.0%}" for m, s in zip(mm["mode"], mm["share_of_tonne_km"]) if s >= 0.005)
    un = r.tables["unmet"]
    row["lost_units"] = float(un["lost_units"].sum()) if len(un) else 0.0
    row["lost_value"] = float(un["value"].sum()) if len(un) else 0.0
    row["lost_where"] = lost_where(un)
    row["co2e_tonnes"] = k.get("co2e_tonnes")
    row["verified"] = bool(r.verification.passed) if r.verification else False
    row["method"] = method + (" (lost demand allowed)" if r.lost_demand_allowed else "")
    row["seconds"] = seconds
    return row


DC_DECISION_WORDS = {
    ("existing", True): "kept",
    ("existing", False): "closed",
    ("candidate", True): "opened",
    ("candidate", False): "not opened",
}
"""A DC's decision in a solve, from its status and whether it is open; where the scenario takes it
out (or forces it closed) and the base case does not: ``out`` (still paid for, nothing through it)
or ``out, closed`` (an existing DC a redesign closes for good)."""
NO_PLAN = "no plan"
"""Every DC's decision in a solve that found no plan (infeasible as asked)."""


def dc_decisions(label: str, how: str, r, sc_case, base_case) -> pd.DataFrame:
    """One row per DC of one solve: scenario, resolve, dc, decision, throughput (units/yr); a plan over
    periods has a row per DC and period (decision: its state in the phasing)."""
    cols = ["scenario", "resolve", "dc", "decision", "throughput"]
    if not r.has_solution:
        dcs = sc_case.tables["dcs"]["dc"].to_numpy()
        return pd.DataFrame({"scenario": label, "resolve": how, "dc": dcs, "decision": NO_PLAN, "throughput": np.nan})
    if r.periods is not None:  # a plan over periods: one row per DC and period, its state in the phasing
        ph = r.tables["phasing"]
        thr = r.tables["dcs"].set_index(["dc", "period"])["throughput"]
        return pd.DataFrame(
            {
                "scenario": label,
                "resolve": how,
                "dc": ph["dc"].to_numpy(),
                "period": ph["period"].to_numpy(),
                "decision": ph["state"].to_numpy(),
                "throughput": thr.reindex(pd.MultiIndex.from_frame(ph[["dc", "period"]])).to_numpy(float),
            }
        )
    d = r.tables["dcs"]
    forced_now = sc_case.tables["dcs"].set_index("dc")["force"].astype(str)
    forced_base = base_case.tables["dcs"].set_index("dc")["force"].astype(str)
    words = [DC_DECISION_WORDS[(str(s), bool(o))] for s, o in zip(d["status"], d["open"])]
    out = [
        forced_now.get(dc, "") in ("closed", "out") and forced_base.get(dc, "") not in ("closed", "out")
        for dc in d["dc"]
    ]
    # Taken out: still paid for ("out") or, by a redesign, closed for good ("out, closed").
    out_word = np.where(d["open"].astype(bool) & np.asarray(out), "out", "out, closed")
    out_word = np.where(d["status"].eq("existing") | d["open"].astype(bool), out_word, "out")
    return pd.DataFrame(
        {
            "scenario": label,
            "resolve": how,
            "dc": d["dc"].to_numpy(),
            "decision": np.where(out, out_word, words),
            "throughput": d["throughput"].to_numpy(float),
        }
    )[cols]


def dc_decision_matrix(decisions: pd.DataFrame) -> pd.DataFrame:
    """The DC decisions side by side: one row per DC, one column per solve, each cell
    ``decision · throughput`` (units/yr), solves in run order."""
    if decisions.empty:
        return pd.DataFrame(columns=["dc"])
    cell = decisions["decision"] + " · " + decisions["throughput"].map(lambda v: f"{v:,.0f}")
    d = decisions.assign(cell=cell.where(decisions["decision"] != NO_PLAN, NO_PLAN))
    order = list(dict.fromkeys(d["scenario"]))
    index = ["dc", "period"] if "period" in d.columns else ["dc"]
    rows = d[index].drop_duplicates()
    m = d.pivot(index=index, columns="scenario", values="cell").reindex(columns=order).fillna("–")
    m = m.reindex(pd.MultiIndex.from_frame(rows) if len(index) > 1 else rows["dc"])
    return m.reset_index().rename_axis(columns=None)


def share_changes(label: str, how: str, r, base) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Supplier shares and mode mix of one solve against the base's, side by side.

    Returns (supplier share changes: scenario, resolve, site, product, supplier, base_share, share,
    change; mode-mix changes: scenario, resolve, mode, base_share, share, change), shares of the
    site's supply of the material and of all tonne-km; rows where either side is non-zero.
    """
    keys = ["site", "product", "supplier"]
    sup_cols = ["scenario", "resolve", *keys, "base_share", "share", "change"]
    mode_cols = ["scenario", "resolve", "mode", "base_share", "share", "change"]
    if not (r.has_solution and base.has_solution):
        return pd.DataFrame(columns=sup_cols), pd.DataFrame(columns=mode_cols)
    r, base = r.period_view(), base.period_view()  # a plan over periods: its last period

    def side_by_side(now: pd.DataFrame, was: pd.DataFrame, on: list[str], col: str) -> pd.DataFrame:
        m = was[[*on, col]].rename(columns={col: "base_share"}).merge(now[[*on, col]], on=on, how="outer")
        m = m.rename(columns={col: "share"}).fillna({"base_share": 0.0, "share": 0.0})
        m["change"] = m["share"] - m["base_share"]
        m = m[(m["base_share"].abs() > 1e-9) | (m["share"].abs() > 1e-9)].sort_values(on)
        return m.assign(scenario=label, resolve=how)

    sup = side_by_side(r.tables["supplier_shares"], base.tables["supplier_shares"], keys, "share")
    mode = side_by_side(r.tables["mode_mix"], base.tables["mode_mix"], ["mode"], "share_of_tonne_km")
    return sup[sup_cols].reset_index(drop=True), mode[mode_cols].reset_index(drop=True)


def mode_mix_matrix(changes: pd.DataFrame) -> pd.DataFrame:
    """The mode mix side by side: one row per solve (the base first), one column per mode, each cell
    the mode's share of tonne-km in that solve (from :func:`share_changes`' mode rows)."""
    if changes.empty:
        return pd.DataFrame(columns=["scenario"])
    base = changes.drop_duplicates("mode").set_index("mode")["base_share"].rename("base")
    order = list(dict.fromkeys(changes["scenario"]))
    m = changes.pivot_table(index="scenario", columns="mode", values="share", aggfunc="first").reindex(order)
    m = pd.concat([base.to_frame().T, m]).fillna(0.0)
    m = m[sorted(m.columns, key=lambda c: -float(m.loc["base", c]))]
    return m.rename_axis(index="scenario", columns=None).reset_index()


def largest_share_changes(changes: pd.DataFrame, most: int = 15, least: float = 0.005) -> pd.DataFrame:
    """The supplier share changes that matter: |change| ≥ ``least`` (a share), largest first, at most ``most``."""
    if changes.empty:
        return changes
    big = changes[changes["change"].abs() >= least]
    return big.reindex(big["change"].abs().sort_values(ascending=False, kind="stable").index).head(most)
