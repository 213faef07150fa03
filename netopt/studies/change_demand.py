"""Change kinds of demand: scale it now, grow it over the periods (how each edits a case copy and, where
it is a bound change, a held network; registered in :data:`netopt.studies.changes.CHANGE_KINDS`)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.periods import horizon
from netopt.engine.held import BoundPlan, HeldNetwork
from netopt.studies.case_edit import CaseEdit, Change


def edit_scale_demand(ed: CaseEdit, ch: Change) -> None:
    f = ed.number(ch, "factor")
    dem = ed.tables["demand"]
    mask = _demand_rows(ed, ch, dem)
    if not ed.errors and f is not None:
        dem.loc[mask, "quantity"] = dem.loc[mask, "quantity"] * f


def edit_grow_demand(ed: CaseEdit, ch: Change) -> None:
    """Demand of period k × (1 + rate)^t_k, t_k the years before the period starts (the first period
    unchanged); a row for every period replaces a chosen blank-period row, so each period grows its own."""
    rate = ed.number(ch, "rate")
    t = ed.tables
    if t["periods"].empty:
        ed.errors.append("grow_demand needs a periods table (use scale_demand for a one-year case)")
        return
    dem = t["demand"]
    mask = _demand_rows(ed, ch, dem)
    if ed.errors or rate is None:
        return
    per = horizon(ed.case)
    start = dict(zip(per["period"].astype(str), per["start_year"].astype(float)))
    blank = mask & dem["period"].astype(str).eq("")
    own = set(zip(dem["customer"], dem["product"], dem["period"].astype(str)))
    spread = pd.concat([dem.loc[blank].assign(period=p) for p in start])
    keys = zip(spread["customer"], spread["product"], spread["period"])
    spread = spread[[k not in own for k in keys]]
    grown = pd.concat([dem[mask & ~blank], spread])
    grown["quantity"] = grown["quantity"].to_numpy(float) * (1.0 + rate) ** grown["period"].map(start).to_numpy(float)
    rest = dem[~mask]
    t["demand"] = pd.concat([rest, grown])
    t["demand"].index = range(2, 2 + len(t["demand"]))


def _demand_rows(ed: CaseEdit, ch: Change, dem: pd.DataFrame) -> pd.Series:
    """Demand rows a change's optional region, customer and product filters choose (problems to ``ed.errors``)."""
    t = ed.tables
    mask = pd.Series(True, index=dem.index)
    if ed.text(ch, "region"):
        if ed.text(ch, "region") not in set(t["customers"]["region"].astype(str)):
            ed.errors.append(f"unknown region '{ed.text(ch, 'region')}'")
        cust = t["customers"].loc[t["customers"]["region"] == ed.text(ch, "region"), "customer"]
        mask &= dem["customer"].isin(cust)
    if ed.text(ch, "customer"):
        if ed.sites.get(ed.text(ch, "customer")) != "customer":
            ed.errors.append(f"unknown customer '{ed.text(ch, 'customer')}'")
        mask &= dem["customer"] == ed.text(ch, "customer")
    if ed.text(ch, "product"):
        if ed.text(ch, "product") not in set(t["products"]["product"]):
            ed.errors.append(f"unknown product '{ed.text(ch, 'product')}'")
        mask &= dem["product"] == ed.text(ch, "product")
    return mask


def held_scale_demand(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan | None:
    """Demand rows set to the scenario's quantities; lost demand bounded by them; each service window's
    target on the customer's new demand."""
    net = held.net
    q_new = sc_case.tables["demand"].set_index(["customer", "product"])["quantity"]
    if q_new.sum() > held.builder.dc_big_m / 2:
        return None  # beyond the big M standing in for unlimited DC capacity
    q = q_new.reindex(pd.MultiIndex.from_frame(net.demand[["customer", "product"]])).fillna(0.0).to_numpy(float)
    plan = BoundPlan()
    rows = held.rows_of("demand_met")
    for k in np.flatnonzero(np.abs(q - net.demand["quantity"].to_numpy(float)) > 0):
        if rows[k] >= 0:
            plan.rows[int(rows[k])] = (q[k], q[k])
        plan.set_cols(held.cols("unmet", np.array([k])), 0.0, q[k])
    labels = held.builder.row_labels.get("service_window")
    if labels is not None and len(labels):  # on-time units ≥ τ_c × the customer's (new) demand
        per_customer = pd.Series(q, index=net.demand["customer"].to_numpy()).groupby(level=0).sum()
        need = labels["target_share"].to_numpy(float) * labels["customer"].map(per_customer).fillna(0.0).to_numpy(float)
        rows = held.rows_of("service_window")
        for k in np.flatnonzero(rows >= 0):
            plan.rows[int(rows[k])] = (float(need[k]), np.inf)
    return plan


# ---------------------------------------------------------------------------------- the registry
