"""Inventory report of a solution: safety stock per DC and product, pipeline stock, days and turns.

Tables (built from the solution's flows and the prepared network, never from the solver):

- ``safety_stock``: per DC and finished product the DC delivers, the throughput T (units/yr),
  the model's piecewise-linear safety stock (what the MIP charged), the curve it approximates
  (square-root law, variance α·T, see :mod:`netopt.model.safety_stock`), the relative error
  between the two at T and over the curve's range, and the exact formula
  ``SS = z √(L σ_d² + d̄² σ_L²)`` with the daily variance pooled from the customer flows the DC
  actually serves: σ_d² = Σ_c (cv_c × flow_c)² / 365 (each customer's share of its demand
  taken as a fixed fraction of each day's demand).  Units of stock, currency/yr for cost.
- ``pipeline``: in-transit stock per lane, mode and product by Little's law,
  units in transit = flow (units/yr) × transit days / 365, its value and holding cost.
- ``inventory_kpis``: per DC and for the network, safety stock and pipeline value, days of
  throughput and turns per year.  Cycle stock (half an order quantity) is not modelled:
  netopt has no order sizes, so days and turns cover safety and in-transit stock only.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.safety_stock import curves, pwl_units, segment_table, ss_units, ss_units_exact

DAYS = 365.0
EPS = 1e-7

SS_COLUMNS = [
    "dc",
    "product",
    "throughput",
    "customers_served",
    "z",
    "lead_days",
    "lead_sd_days",
    "lead_origin",
    "lead_mode",
    "inbound_days_actual",
    "ss_units_model",
    "ss_units_curve",
    "pwl_rel_error",
    "max_rel_error",
    "below_first_breakpoint",
    "ss_units_exact",
    "ss_units_actual_lead_time",
    "unit_holding",
    "cost_model",
    "cost_pwl",
    "cost_exact",
    "in_objective",
]


def _values_by_curve(net, cv: pd.DataFrame, values: dict | None) -> np.ndarray:
    """The model's safety-stock cost (currency/yr) per curve from the ``ss_seg`` solution values."""
    out = np.zeros(len(cv))
    if not values or "ss_seg" not in values or not len(cv):
        return out
    seg, _ = segment_table(cv)
    v = np.asarray(values["ss_seg"], float)
    if len(v) != len(seg):
        raise ValueError("safety-stock segments of the solution do not match the network's curves")
    np.add.at(out, seg["curve"].to_numpy(int), v * seg["cost_per_unit"].to_numpy(float))
    return out


def safety_stock_table(net, flows: pd.DataFrame, values: dict | None = None) -> pd.DataFrame:
    """Safety stock per (DC, product) with positive deliveries; see the module docstring.

    Columns (units): throughput units/yr; lead_days, lead_sd_days, inbound_days_actual days;
    ss_units_* units; pwl_rel_error, max_rel_error ratios; unit_holding currency per unit per
    year; cost_* currency/yr.  ``cost_model`` is what the MIP charged (0 when
    ``inventory.safety_stock`` is off), ``cost_pwl`` the same curve recomputed from the flows.
    """
    in_obj = bool(net.settings["inventory"]["safety_stock"])
    cv = curves(net)
    model_cost = _values_by_curve(net, cv, values) if in_obj else np.zeros(len(cv))
    out = flows[(flows["origin_kind"] == "dc") & (flows["destination_kind"] == "customer")]
    if out.empty or cv.empty:
        return pd.DataFrame(columns=SS_COLUMNS)
    cvs = net.demand.set_index(["customer", "product"])["demand_cv"]
    per_c = out.groupby(["origin", "product", "destination"], as_index=False)["quantity"].sum()
    per_c["cv"] = cvs.reindex(pd.MultiIndex.from_frame(per_c[["destination", "product"]])).fillna(0.0).to_numpy(float)
    per_c["var"] = (per_c["cv"] * per_c["quantity"]) ** 2
    g = per_c.groupby(["origin", "product"]).agg(
        throughput=("quantity", "sum"), var=("var", "sum"), customers_served=("destination", "nunique")
    )
    inb = flows[flows["destination_kind"] == "dc"]
    w_days = (inb["quantity"] * inb["transit_days"]).groupby([inb["destination"], inb["product"]]).sum()
    q_in = inb.groupby(["destination", "product"])["quantity"].sum()
    rows = []
    for i, c in enumerate(cv.itertuples(index=False)):
        key = (c.dc, c.product)
        if key not in g.index:
            continue
        t = float(g.loc[key, "throughput"])
        if t <= EPS:
            continue
        var = float(g.loc[key, "var"])
        days_in = float(w_days.get(key, np.nan) / q_in.get(key, np.nan)) if q_in.get(key, 0.0) > EPS else np.nan
        pwl = float(pwl_units(c, t))
        curve = float(ss_units(t, c.alpha, c.lead_days, c.lead_sd_days, c.z))
        exact = float(ss_units_exact(var, t, c.lead_days, c.lead_sd_days, c.z))
        exact_actual = float(ss_units_exact(var, t, days_in, c.lead_sd_days, c.z)) if np.isfinite(days_in) else np.nan
        rows.append(
            {
                "dc": c.dc,
                "product": c.product,
                "throughput": t,
                "customers_served": int(g.loc[key, "customers_served"]),
                "z": c.z,
                "lead_days": c.lead_days,
                "lead_sd_days": c.lead_sd_days,
                "lead_origin": c.lead_origin,
                "lead_mode": c.lead_mode,
                "inbound_days_actual": days_in,
                "ss_units_model": pwl,
                "ss_units_curve": curve,
                "pwl_rel_error": (curve - pwl) / curve if curve > 0 else 0.0,
                "max_rel_error": c.max_rel_error,
                "below_first_breakpoint": bool(t < c.t_min - EPS),
                "ss_units_exact": exact,
                "ss_units_actual_lead_time": exact_actual,
                "unit_holding": c.unit_holding,
                "cost_model": float(model_cost[i]),
                "cost_pwl": pwl * c.unit_holding if in_obj else 0.0,
                "cost_exact": exact * c.unit_holding,
                "in_objective": in_obj,
            }
        )
    return pd.DataFrame(rows, columns=SS_COLUMNS)


def safety_stock_extra_cost(tables: dict[str, pd.DataFrame]) -> dict[str, float]:
    """The ``safety_stock`` cost component recomputed from the flows (currency/yr), for :func:`netopt.engine.verify.verify`.

    It is the model's curve evaluated at each DC's throughput from the flows table, not the
    solver's value, so a formulation error shows up as an objective mismatch in verification.
    """
    ss = tables.get("safety_stock")
    return {"safety_stock": float(ss["cost_pwl"].sum()) if ss is not None and len(ss) else 0.0}


def pipeline_table(net, flows: pd.DataFrame) -> pd.DataFrame:
    """In-transit stock per lane, mode and product (Little's law): units, value (currency), cost (currency/yr)."""
    p = net.products.set_index("product")
    f = flows[["origin", "destination", "leg", "mode", "product", "quantity", "transit_days"]].copy()
    f["in_transit_units"] = f["quantity"] * f["transit_days"] / DAYS
    f["unit_value"] = f["product"].map(p["unit_value"]).astype(float)
    f["holding_rate"] = f["product"].map(p["holding_rate"]).astype(float)
    f["in_transit_value"] = f["in_transit_units"] * f["unit_value"]
    f["pipeline_cost"] = f["in_transit_value"] * f["holding_rate"]
    return f.reset_index(drop=True)


def inventory_kpis(net, flows: pd.DataFrame, ss: pd.DataFrame, pipeline: pd.DataFrame) -> pd.DataFrame:
    """Safety stock and pipeline per DC and for the network, with days of throughput and turns.

    Per DC: throughput to customers (units/yr, and currency/yr at unit value); safety stock
    (exact pooled formula, units and currency); in-transit stock on lanes into and out of the DC
    (currency); ``days_on_hand`` = safety-stock value / daily throughput value;
    ``days_incl_transit`` adds the DC's inbound and outbound pipeline; ``turns`` = 365 /
    days_incl_transit (per year).  The network row: all safety stock plus all pipeline (materials
    included) against the value delivered to customers.
    """
    value = net.products.set_index("product")["unit_value"].astype(float)
    out = flows[(flows["origin_kind"] == "dc") & (flows["destination_kind"] == "customer")]
    thr = out.groupby("origin")["quantity"].sum()
    thr_v = (out["quantity"] * out["product"].map(value)).groupby(out["origin"]).sum()
    ss_u = ss.groupby("dc")["ss_units_exact"].sum() if len(ss) else pd.Series(dtype=float)
    ss_v = (
        (ss["ss_units_exact"] * ss["product"].map(value)).groupby(ss["dc"]).sum() if len(ss) else pd.Series(dtype=float)
    )
    pin = pipeline[pipeline["destination"].isin(net.dcs["dc"])].groupby("destination")["in_transit_value"].sum()
    pout = pipeline[pipeline["origin"].isin(net.dcs["dc"])].groupby("origin")["in_transit_value"].sum()
    dcs = sorted(set(thr.index) | set(ss_u.index))
    rows = []
    for d in dcs:
        tv = float(thr_v.get(d, 0.0))
        sv = float(ss_v.get(d, 0.0))
        transit = float(pin.get(d, 0.0)) + float(pout.get(d, 0.0))
        rows.append(
            _kpi_row(
                "dc",
                d,
                float(thr.get(d, 0.0)),
                tv,
                float(ss_u.get(d, 0.0)),
                sv,
                float(pin.get(d, 0.0)),
                float(pout.get(d, 0.0)),
                sv + transit,
            )
        )
    last = flows[flows["destination_kind"] == "customer"]
    sold_v = float((last["quantity"] * last["product"].map(value)).sum())
    total_ss_v = float(ss_v.sum()) if len(ss_v) else 0.0
    pipe_v = float(pipeline["in_transit_value"].sum())
    rows.append(
        _kpi_row(
            "network",
            "network",
            float(last["quantity"].sum()),
            sold_v,
            float(ss_u.sum()) if len(ss_u) else 0.0,
            total_ss_v,
            np.nan,
            np.nan,
            total_ss_v + pipe_v,
            pipeline_value=pipe_v,
        )
    )
    return pd.DataFrame(rows)


def _kpi_row(level, dc, units, value, ss_units_, ss_value, in_value, out_value, inv_value, pipeline_value=None):
    daily = value / DAYS if value > 0 else np.nan
    days_on_hand = ss_value / daily if daily == daily else np.nan
    days_all = inv_value / daily if daily == daily else np.nan
    return {
        "level": level,
        "dc": dc,
        "throughput_units": units,
        "throughput_value": value,
        "safety_stock_units": ss_units_,
        "safety_stock_value": ss_value,
        "inbound_in_transit_value": in_value,
        "outbound_in_transit_value": out_value,
        "pipeline_value": (in_value + out_value) if pipeline_value is None else pipeline_value,
        "inventory_value": inv_value,
        "days_on_hand": days_on_hand,
        "days_incl_transit": days_all,
        "turns_on_hand": DAYS / days_on_hand if days_on_hand and days_on_hand == days_on_hand else np.nan,
        "turns": DAYS / days_all if days_all and days_all == days_all else np.nan,
    }
