"""Change kinds for costs, capacities and supplier share caps: how each edits a case copy and,
where it is a bound change, a held network (registered in :data:`netopt.studies.changes.CHANGE_KINDS`)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.lane_matrix import destinations
from netopt.engine.held import BoundPlan, HeldNetwork
from netopt.studies.case_edit import CaseEdit, Change

COST_TARGETS = ("mode_rate", "supplier_price", "dc_fixed_cost", "production_cost", "handling_cost")


def edit_scale_cost(ed: CaseEdit, ch: Change) -> None:
    f = ed.number(ch, "factor")
    t = ed.tables
    target = ed.text(ch, "target")
    if target == "mode_rate":
        mode = ed.text(ch, "mode")
        if mode not in ed.modes:
            ed.errors.append(f"unknown mode '{mode}'")
        elif f is not None:
            mm = t["modes"]["mode"] == mode
            t["modes"].loc[mm, "cost_per_tonne_km"] *= f
            t["modes"].loc[mm, "fixed_cost_per_unit"] *= f
            tiers = t["rate_tiers"]
            tm = tiers["mode"] == mode
            tiers.loc[tm, "cost_per_tonne_km"] *= f
            tiers.loc[tm, "min_charge"] *= f
            ex = t["lanes"]
            em = (ex["mode"] == mode) & ex["cost_per_unit"].notna()
            ex.loc[em, "cost_per_unit"] = ex.loc[em, "cost_per_unit"] * f
            mx = t.get("lane_matrix")  # its cost rows of the mode: every destination column
            if mx is not None and len(mx):
                rows = (mx["mode"] == mode) & (mx["measure"] == "cost_per_unit")
                dest = destinations(mx)
                mx.loc[rows, dest] = mx.loc[rows, dest] * f
            ed.lanes_changed = True
    elif target == "supplier_price":
        sp = t["suppliers"]
        mask = sp["supplier"] == ed.text(ch, "supplier")
        if ed.text(ch, "product"):
            mask &= sp["product"] == ed.text(ch, "product")
        if not mask.any():
            what = f"'{ed.text(ch, 'supplier')}'" + (f" / '{ed.text(ch, 'product')}'" if ed.text(ch, "product") else "")
            ed.errors.append(f"no supplier offer for {what}")
        elif f is not None:
            sp.loc[mask, "unit_cost"] *= f
    elif target in ("dc_fixed_cost", "handling_cost"):
        col = "fixed_cost" if target == "dc_fixed_cost" else "handling_cost"
        dc = ed.text(ch, "dc")
        mask = (t["dcs"]["dc"] == dc) if dc else pd.Series(True, index=t["dcs"].index)
        if dc and ed.sites.get(dc) != "dc":
            ed.errors.append(f"'{dc}' is not a DC")
        elif f is not None:
            t["dcs"].loc[mask, col] *= f
            if target == "dc_fixed_cost" and len(t["dc_sizes"]):
                sm = (t["dc_sizes"]["dc"] == dc) if dc else slice(None)
                t["dc_sizes"].loc[sm, "fixed_cost"] *= f
    elif target == "production_cost":
        pl = t["plants"]
        mask = pd.Series(True, index=pl.index)
        if ed.text(ch, "plant"):
            mask &= pl["plant"] == ed.text(ch, "plant")
        if ed.text(ch, "product"):
            mask &= pl["product"] == ed.text(ch, "product")
        if not mask.any():
            ed.errors.append("no plant row matches")
        elif f is not None:
            pl.loc[mask, "unit_cost"] *= f
    else:
        ed.errors.append(f"target must be {', '.join(COST_TARGETS)}, not '{target}'")


def capacity_rows(ed: CaseEdit, ch: Change) -> tuple[pd.DataFrame | None, pd.Series | None]:
    site = ed.text(ch, "site")
    table, col = {"supplier": ("suppliers", "supplier"), "plant": ("plants", "plant"), "dc": ("dcs", "dc")}.get(
        ed.sites.get(site, ""), ("", "")
    )
    if not table:
        ed.errors.append(f"'{site}' is not a supplier, plant or DC")
        return None, None
    df = ed.tables[table]
    mask = df[col] == site
    if ed.text(ch, "product") and table != "dcs":
        mask &= df["product"] == ed.text(ch, "product")
    if not mask.any():
        ed.errors.append("no row matches")
    return df, mask


def edit_set_capacity(ed: CaseEdit, ch: Change) -> None:
    """A new capacity (units/yr), or the present one times ``factor``; an unlimited capacity has no
    size to scale, so a factor on it is refused."""
    df, mask = capacity_rows(ed, ch)
    if ("capacity" in ch) == ("factor" in ch):
        ed.errors.append("give capacity or factor" + (", not both" if "capacity" in ch else ""))
    elif "capacity" in ch:
        v = ed.number(ch, "capacity")
        if df is not None and not ed.errors:
            df.loc[mask, "capacity"] = v
    else:
        v = ed.number(ch, "factor")
        if df is not None and not ed.errors:
            unlimited = mask & ~np.isfinite(df["capacity"].astype(float))
            if unlimited.any():
                ed.errors.append(
                    f"'{ed.text(ch, 'site')}' has no capacity limit (blank) on {int(unlimited.sum())} row(s): a factor "
                    "cannot scale it; give capacity instead"
                )
            else:
                df.loc[mask, "capacity"] = df.loc[mask, "capacity"] * v


def held_set_capacity(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan | None:
    """A plant's capacity is its production bounds; supplier and DC capacities are rows (rebuild)."""
    site, product = str(ch.get("site", "")).strip(), str(ch.get("product", "")).strip()
    rows = held.make_rows(site, product)
    if not len(rows):
        return None
    cap = sc_case.tables["plants"].set_index(["plant", "product"])["capacity"]
    plan = BoundPlan()
    for k in rows.tolist():
        plan.set_cols(held.cols("make", np.array([k])), 0.0, float(cap.loc[(site, held.net.make["product"].iloc[k])]))
    return plan


def edit_share_cap(ed: CaseEdit, ch: Change) -> None:
    """A supplier's own cap (``suppliers.max_share``, optionally one product) or a receiving site's
    own cap on any one supplier (``plants``/``dcs`` ``max_supplier_share``)."""
    v = ed.number(ch, "max_share")
    if v is not None and v > 1:
        ed.errors.append(f"max_share must be a share between 0 and 1, not {v:g}")
        return
    supplier, site = ed.text(ch, "supplier"), ed.text(ch, "site")
    if bool(supplier) == bool(site):
        ed.errors.append("give either supplier (its own cap at every site) or site (a plant's or DC's cap)")
        return
    if supplier:
        if ed.sites.get(supplier) != "supplier":
            ed.errors.append(f"'{supplier}' is not a supplier")
            return
        df, mask = ed.tables["suppliers"], ed.tables["suppliers"]["supplier"] == supplier
        if ed.text(ch, "product"):
            mask &= df["product"] == ed.text(ch, "product")
        col = "max_share"
    else:
        table = {"plant": "plants", "dc": "dcs"}.get(ed.sites.get(site, ""), "")
        if not table:
            ed.errors.append(f"'{site}' is not a plant or DC")
            return
        df = ed.tables[table]
        mask, col = df["plant" if table == "plants" else "dc"] == site, "max_supplier_share"
    if not mask.any():
        ed.errors.append("no row matches")
    elif v is not None and not ed.errors:
        df.loc[mask, col] = v
