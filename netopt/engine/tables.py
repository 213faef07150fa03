"""Result tables: tidy DataFrames built from the solution arrays and the prepared network.

Every table and column, with its unit, is declared in :mod:`netopt.data.results_schema`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.results_schema import RESULT_TABLES
from netopt.engine.inventory_report import inventory_kpis, pipeline_table, safety_stock_table
from netopt.engine.mode_economics import mode_economics
from netopt.network.arcs import Network
from netopt.network.sourcing_caps import share_caps, share_floors

TABLE_DOCS = {name: t.meaning for name, t in RESULT_TABLES.items()}
"""Each result table's meaning, from the declared output schema (:mod:`netopt.data.results_schema`)."""

EPS = 1e-7


def in_service(dcs: pd.DataFrame) -> pd.Series:
    """DCs open and working in a result's ``dcs`` table: open, and not taken out (a DC out may be
    open, i.e. still paid for, with nothing moving through it).  "DCs open" counts these."""
    return dcs["open"].astype(bool) & dcs["decision"].ne("out")


def flows_table(net: Network, flow: np.ndarray) -> pd.DataFrame:
    """Positive flows with their costs (currency/yr), CO2e (kg/yr) and transport work."""
    a = net.arcs
    keep = flow > EPS
    f = a.loc[
        keep,
        [
            "origin",
            "origin_kind",
            "destination",
            "destination_kind",
            "leg",
            "mode",
            "product",
            "distance_km",
            "transit_days",
        ],
    ].copy()
    q = flow[keep]
    f.insert(7, "quantity", q)
    w = f["product"].map(net.products.set_index("product")["unit_weight_kg"]).to_numpy(float)
    f["tonnes"] = q * w / 1000.0
    f["tonne_km"] = f["tonnes"] * f["distance_km"]
    for col, src in (
        ("supply_cost", "supply_per_unit"),
        ("freight_cost", "freight_per_unit"),
        ("handling_cost", "handling_per_unit"),
        ("duty_cost", "duty_per_unit"),
        ("pipeline_cost", "pipeline_per_unit"),
        ("carbon_cost", "carbon_per_unit"),
        ("co2_kg", "co2_kg_per_unit"),
    ):
        f[col] = q * a.loc[keep, src].to_numpy(float)
    f["within_window"] = a.loc[keep, "within_window"].to_numpy(bool)
    return f.reset_index(drop=True)


def build_tables(net: Network, values: dict[str, np.ndarray], cost: dict[str, float]) -> dict[str, pd.DataFrame]:
    """Every result table from the solution (``block → array``) and cost components."""
    flow = values["flow"]
    flows = flows_table(net, flow)

    t: dict[str, pd.DataFrame] = {"flows": flows}

    make = net.make.copy()
    make["quantity"] = values["make"]
    make["utilisation"] = np.where(
        np.isfinite(make["capacity"]) & (make["capacity"] > 0),
        make["quantity"] / make["capacity"].replace(0, np.nan),
        np.nan,
    )
    make["cost"] = make["quantity"] * make["unit_cost"]
    t["production"] = make[["plant", "product", "quantity", "capacity", "utilisation", "cost"]]

    # DCs
    opt = net.options.copy()
    opt["open"] = values["open"] > 0.5
    chosen = opt[opt["open"]].drop_duplicates("dc").set_index("dc")
    inflow = flows[flows["destination_kind"] == "dc"].groupby("destination")["quantity"].sum()
    d = net.dcs[["dc", "status", "lat", "lon", "region", "fixed_cost", "capacity"]].copy()
    d["open"] = d["dc"].isin(chosen.index)
    out = d["dc"].map(net.options.drop_duplicates("dc").set_index("dc")["force"]).astype(str).eq("out")
    d["decision"] = np.select(
        [out, d["status"].eq("existing") & d["open"], d["status"].eq("existing"), d["open"]],
        ["out", "keep", "close", "open"],
        "stay closed",
    )
    d["size"] = d["dc"].map(chosen["size"]).astype(object).fillna("")
    d["capacity"] = np.where(d["open"], d["dc"].map(chosen["capacity"]), 0.0)
    d["fixed_cost"] = np.where(d["open"], d["dc"].map(chosen["fixed_cost"]), 0.0)
    d["throughput"] = d["dc"].map(inflow).fillna(0.0)
    d["utilisation"] = np.where(
        d["open"] & np.isfinite(d["capacity"].astype(float)) & (d["capacity"] > 0),
        d["throughput"] / d["capacity"].replace(0, np.nan),
        np.nan,
    )
    t["dcs"] = d[
        [
            "dc",
            "status",
            "decision",
            "open",
            "size",
            "region",
            "lat",
            "lon",
            "capacity",
            "throughput",
            "utilisation",
            "fixed_cost",
        ]
    ]

    # Supplier shares per receiving site and material.
    s = flows[flows["origin_kind"] == "supplier"]
    if len(s):
        g = s.groupby(["destination", "destination_kind", "product", "origin"], as_index=False)["quantity"].sum()
        g["share"] = g["quantity"] / g.groupby(["destination", "product"])["quantity"].transform("sum")
        region = net.suppliers.drop_duplicates("supplier").set_index("supplier")["region"]
        g["region"] = g["origin"].map(region)
        g = g.rename(columns={"destination": "site", "destination_kind": "site_kind", "origin": "supplier"})
        g["max_share"] = share_caps(
            float(net.settings["policy"]["max_supplier_share"]),
            net.suppliers,
            net.site_share_caps,
            g,
            net.sourcing_shares,
        )
        g["min_share"] = share_floors(net.suppliers, g, net.sourcing_shares)
        t["supplier_shares"] = g[
            ["site", "site_kind", "product", "supplier", "region", "quantity", "share", "max_share", "min_share"]
        ]
    else:
        t["supplier_shares"] = pd.DataFrame(
            columns=[
                "site",
                "site_kind",
                "product",
                "supplier",
                "region",
                "quantity",
                "share",
                "max_share",
                "min_share",
            ]
        )

    # Mode mix.
    mm = flows.groupby("mode", as_index=False)[["quantity", "tonnes", "tonne_km", "freight_cost", "co2_kg"]].sum()
    mm["share_of_tonne_km"] = mm["tonne_km"] / max(mm["tonne_km"].sum(), EPS)
    t["mode_mix"] = mm.rename(columns={"quantity": "units"})

    # Service per customer.
    dem = net.demand.copy()
    dem["unmet"] = values.get("unmet", 0.0)
    last = flows[flows["destination_kind"] == "customer"]
    by_c = last.groupby("destination").agg(delivered=("quantity", "sum"))
    win = last[last["within_window"]].groupby("destination")["quantity"].sum()
    wdays = (last["quantity"] * last["transit_days"]).groupby(last["destination"]).sum()
    sv = net.customers.copy()
    sv["demand"] = sv["customer"].map(dem.groupby("customer")["quantity"].sum()).fillna(0.0)
    sv["delivered"] = sv["customer"].map(by_c["delivered"]).fillna(0.0)
    sv["unmet"] = sv["customer"].map(dem.groupby("customer")["unmet"].sum()).fillna(0.0)
    sv["within_window"] = sv["customer"].map(win).fillna(0.0)
    # Service is measured against demand, never against what is delivered.
    sv["share_within_window"] = np.where(
        sv["demand"] > EPS, sv["within_window"] / sv["demand"].where(sv["demand"] > EPS), np.nan
    )
    sv["late_units"] = np.maximum(0.0, sv["target_share"] * sv["demand"] - sv["within_window"])
    sv.loc[sv["target_share"] <= 0, "late_units"] = 0.0
    sv["avg_transit_days"] = np.where(
        sv["delivered"] > EPS,
        sv["customer"].map(wdays).fillna(0.0) / sv["delivered"].where(sv["delivered"] > EPS),
        np.nan,
    )
    sv["target_met"] = sv["late_units"] <= 1e-6 * np.maximum(1.0, sv["demand"])
    t["service"] = sv[sv["demand"] > 0].reset_index(drop=True)

    un = dem[dem["unmet"] > EPS].copy()
    un["value"] = un["unmet"] * un["penalty"]
    t["unmet"] = (
        un[["customer", "product", "quantity", "unmet", "penalty", "value"]]
        .rename(columns={"quantity": "demand", "unmet": "lost_units"})
        .reset_index(drop=True)
    )

    cost_tab = pd.DataFrame({"component": list(cost), "amount": list(cost.values())})
    t["cost"] = cost_tab
    t["safety_stock"] = safety_stock_table(net, flows, values)
    t["pipeline"] = pipeline_table(net, flows)
    t["inventory_kpis"] = inventory_kpis(net, flows, t["safety_stock"], t["pipeline"])
    t["mode_economics"] = mode_economics(net, flows)
    t["kpis"] = kpis(net, t, cost)
    return t


def kpis(net: Network, t: dict[str, pd.DataFrame], cost: dict[str, float]) -> pd.DataFrame:
    """Headline KPIs: cost per unit, transit days, service, in-transit inventory, DCs."""
    flows = t["flows"]
    last = flows[flows["destination_kind"] == "customer"]
    delivered = float(last["quantity"].sum())
    total = float(sum(cost.values()))
    demand = net.total_demand
    if delivered > 0:
        days = last["transit_days"].to_numpy(float)
        q = last["quantity"].to_numpy(float)
        order = np.argsort(days)
        cum = np.cumsum(q[order]) / q.sum()
        p95 = float(days[order][np.searchsorted(cum, 0.95 - 1e-12)])
        avg_days = float(np.dot(days, q) / q.sum())
    else:
        p95 = avg_days = float("nan")
    # On-time units over demand (never over what is delivered: lost units count as not on time).
    within = float(last.loc[last["within_window"], "quantity"].sum() / demand) if demand > 0 else float("nan")
    value = flows["product"].map(net.products.set_index("product")["unit_value"]).to_numpy(float)
    in_transit_units = float((flows["quantity"] * flows["transit_days"]).sum() / 365.0)
    in_transit_value = float(
        (flows["quantity"].to_numpy(float) * value * flows["transit_days"].to_numpy(float)).sum() / 365.0
    )
    sold_value = float(
        (
            last["quantity"].to_numpy(float)
            * last["product"].map(net.products.set_index("product")["unit_value"]).to_numpy(float)
        ).sum()
    )
    rows = [
        ("total_landed_cost", total, "currency/yr"),
        ("demand", demand, "units/yr"),
        ("delivered", delivered, "units/yr"),
        ("lost_demand", float(t["unmet"]["lost_units"].sum()), "units/yr"),
        ("cost_per_unit_delivered", total / delivered if delivered else float("nan"), "currency/unit"),
        ("avg_transit_days_to_customer", avg_days, "days (demand-weighted)"),
        ("p95_transit_days_to_customer", p95, "days"),
        ("share_within_service_window", within, "share of demand"),
        ("dcs_open", float(in_service(t["dcs"]).sum()), "count"),
        ("in_transit_inventory_units", in_transit_units, "units (average)"),
        ("in_transit_inventory_value", in_transit_value, "currency (average)"),
        (
            "in_transit_inventory_days",
            in_transit_value / (sold_value / 365.0) if sold_value else float("nan"),
            "days of sales at unit value",
        ),
        ("co2e_tonnes", float(flows["co2_kg"].sum() / 1000.0), "t CO2e/yr"),
    ]
    ss = t.get("safety_stock")
    if ss is not None:
        rows += [
            ("safety_stock_units", float(ss["ss_units_exact"].sum()), "units (exact formula, customers served)"),
            (
                "safety_stock_cost_model",
                float(ss["cost_model"].sum()),
                "currency/yr (piecewise-linear, in the objective)",
            ),
            ("safety_stock_cost_exact", float(ss["cost_exact"].sum()), "currency/yr (exact formula)"),
            (
                "safety_stock_pwl_max_rel_error",
                float(ss["max_rel_error"].max()) if len(ss) else 0.0,
                "ratio (curve vs. its piecewise-linear form, over the breakpoint range)",
            ),
        ]
    inv = t.get("inventory_kpis")
    if inv is not None and len(inv):
        nw = inv[inv["level"] == "network"].iloc[0]
        rows += [
            ("network_inventory_value", float(nw["inventory_value"]), "currency (safety + in-transit stock)"),
            ("network_inventory_days", float(nw["days_incl_transit"]), "days of sales at unit value"),
            ("network_inventory_turns", float(nw["turns"]), "per year"),
        ]
    return pd.DataFrame(rows, columns=["kpi", "value", "unit"])
