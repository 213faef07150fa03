"""The scenario comparison table: one row per scenario and re-solve, against the base."""

from __future__ import annotations

import numpy as np


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
        row.update({"total_cost": np.nan, "verified": False, "method": method, "seconds": seconds})
        return row
    cost = r.cost
    total = float(sum(cost.values()))
    btotal = float(sum(base.cost.values())) if base.has_solution else np.nan
    row["total_cost"] = total
    row["delta_cost"] = total - btotal
    row["delta_pct"] = (total - btotal) / btotal if btotal else np.nan
    for k, v in cost.items():
        row[f"cost_{k}"] = v
    d = r.tables["dcs"]
    row["dcs_open"] = int(d["open"].sum())
    row["dcs_open_names"] = " ".join(d.loc[d["open"], "dc"])
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
    row["co2e_tonnes"] = k.get("co2e_tonnes")
    row["verified"] = bool(r.verification.passed) if r.verification else False
    row["method"] = method + (" (lost demand allowed)" if r.lost_demand_allowed else "")
    row["seconds"] = seconds
    return row
