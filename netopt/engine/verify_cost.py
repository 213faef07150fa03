"""The independent check's own arithmetic: every cost component and the service shortfall,
recomputed from the input tables and the result quantities (never from the model)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.verify_duties import freight_per_unit
from netopt.network.arcs import lost_sale_cost


def recompute_cost(
    case: Case, lane_rows: pd.DataFrame, tables: dict[str, pd.DataFrame]
) -> tuple[dict[str, float], float]:
    """Every cost component (currency/yr) from input tables and result quantities; also CO2e kg/yr."""
    t = case.tables
    s = case.settings
    f = lane_rows
    prod = t["products"].set_index("product")
    modes = t["modes"].set_index("mode")
    w = f["product"].map(prod["unit_weight_kg"]).to_numpy(float)
    v = f["product"].map(prod["unit_value"]).to_numpy(float)
    hr = (
        f["product"]
        .map(prod["holding_rate"])
        .astype(float)
        .fillna(float(s["inventory"]["holding_rate"]))
        .to_numpy(float)
    )
    q = f["quantity"].to_numpy(float)
    dist = f["_lane_distance"].to_numpy(float)
    days = f["_lane_transit"].to_numpy(float)  # border days included (verify_duties.with_crossings)
    freight = freight_per_unit(case, f)
    co2 = q * w / 1000 * dist * f["mode"].map(modes["co2_kg_per_tonne_km"]).to_numpy(float)
    sup = t["suppliers"].set_index(["supplier", "product"])["unit_cost"]
    sf = f[f["origin_kind"] == "supplier"]
    supply = float(
        (
            sf["quantity"].to_numpy(float)
            * sup.reindex(pd.MultiIndex.from_frame(sf[["origin", "product"]])).to_numpy(float)
        ).sum()
    )
    plants = t["plants"].set_index(["plant", "product"])["unit_cost"]
    pr = tables["production"]
    production = float(
        (
            pr["quantity"].to_numpy(float)
            * plants.reindex(pd.MultiIndex.from_frame(pr[["plant", "product"]])).to_numpy(float)
        ).sum()
    )
    dcs = tables["dcs"]
    base = t["dcs"].set_index("dc")
    sizes = t["dc_sizes"].set_index(["dc", "size"]) if len(t["dc_sizes"]) else None
    fixed = 0.0
    for d, o, size in zip(dcs["dc"], dcs["open"], dcs["size"]):
        if o:
            fixed += (
                float(sizes.loc[(d, size), "fixed_cost"])
                if size and sizes is not None
                else float(base.loc[d, "fixed_cost"])
            )
    closing = float(
        base.loc[dcs.loc[~dcs["open"].to_numpy(bool), "dc"]].query("status == 'existing'")["closing_cost"].sum()
    )
    opening = float(
        base.loc[dcs.loc[dcs["open"].to_numpy(bool), "dc"]].query("status == 'candidate'")["opening_cost"].sum()
    )
    into_dc = f[f["destination_kind"] == "dc"]
    handling = float(
        (into_dc["quantity"].to_numpy(float) * into_dc["destination"].map(base["handling_cost"]).to_numpy(float)).sum()
    )
    un = tables["unmet"]
    pen = float(s["policy"]["unmet_penalty_per_unit"])
    unmet_cost = (
        float((un["lost_units"].to_numpy(float) * lost_sale_cost(t["products"], pen, un["product"])).sum())
        if len(un)
        else 0.0
    )
    late = service_shortfall(case, f)
    cost = {
        "supply": supply,
        "production": production,
        "dc_fixed": fixed,
        "dc_closing": closing,
        "dc_opening": opening,
        "dc_handling": handling,
        "transport": float((q * freight).sum()),
        "duties": float((q * f["_duty"].to_numpy(float)).sum()) if "_duty" in f.columns else 0.0,
        "pipeline_inventory": float((q * v * hr * days / 365.0).sum()),
        "carbon": float(co2.sum() / 1000.0 * float(s["policy"]["carbon_price_per_tonne"])),
        "late_delivery": float((late["short"] * late["late_cost"]).sum()),
        "unmet_penalty": unmet_cost,
    }
    return cost, float(co2.sum())


def service_shortfall(case: Case, lane_rows: pd.DataFrame) -> pd.DataFrame:
    """Per customer with a service target, from the input tables and the matched flows: demand,
    required on-time units (target × demand), on-time units (last-leg lane transit within the
    window), short = max(0, required − on-time) (units/yr), and the late cost per unit."""
    t = case.tables
    pol = case.settings["policy"]
    cust = t["customers"][["customer", "service_class"]]
    classes = t["service_classes"]
    if len(classes):
        c = cust.merge(classes, on="service_class", how="left")
        c["late_cost"] = pd.to_numeric(c["late_cost_per_unit"], errors="coerce")
    else:
        c = cust.assign(max_days=float(pol["service_max_days"]), target_share=float(pol["service_target_share"]))
        c["late_cost"] = np.nan
    c = c.fillna({"max_days": 0.0, "target_share": 0.0, "late_cost": float(pol["late_cost_per_unit"])})
    dem = t["demand"]
    c["demand"] = c["customer"].map(dem[dem["quantity"] > 0].groupby("customer")["quantity"].sum()).fillna(0.0)
    c = c[(c["target_share"] > 0) & (c["demand"] > 0)].reset_index(drop=True)
    last = lane_rows[lane_rows["destination_kind"] == "customer"]
    window = last["destination"].map(c.set_index("customer")["max_days"])
    on_time = last.loc[last["_lane_transit"] <= window + 1e-9].groupby("destination")["quantity"].sum()
    c["on_time"] = c["customer"].map(on_time).fillna(0.0)
    c["required"] = c["target_share"] * c["demand"]
    c["short"] = np.maximum(0.0, c["required"] - c["on_time"])
    return c[["customer", "demand", "required", "on_time", "short", "late_cost"]]
