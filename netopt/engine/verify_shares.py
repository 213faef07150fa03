"""The independent check's share rules of single sites: each supplier's least share of a site's supply,
and each DC's most share of a customer region's demand, from the result flows and the input tables
(the shares themselves by the one rule of :mod:`netopt.network.sourcing_caps`)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.network.sourcing_caps import region_caps, share_floors


def min_share_rows(case: Case, lanes: pd.DataFrame, flows: pd.DataFrame) -> pd.DataFrame:
    """Per (site, product, supplier) with a least share μ > 0 and a supplier lane into the site:
    ``quantity`` from the supplier, ``required`` = μ × the site's supplier inflow of the product (units/yr)."""
    t = case.tables
    sup = t["suppliers"][["supplier", "product"]].astype(str)
    sl = lanes[lanes["origin_kind"] == "supplier"][["origin", "destination", "product"]].astype(str)
    generic = sl[sl["product"] == ""].drop(columns="product").merge(sup, left_on="origin", right_on="supplier")
    specific = sl[sl["product"] != ""].merge(sup, left_on=["origin", "product"], right_on=["supplier", "product"])
    pairs = pd.concat([generic, specific])[["destination", "product", "supplier"]].drop_duplicates()
    pairs = pairs.rename(columns={"destination": "site"}).reset_index(drop=True)
    pairs["floor"] = share_floors(t["suppliers"], pairs, t["sourcing_shares"])
    pairs = pairs[pairs["floor"] > 0].reset_index(drop=True)
    if pairs.empty:
        return pairs.assign(quantity=[], required=[], total=[])
    sf = flows[flows["origin_kind"] == "supplier"]
    got = sf.groupby(["destination", "product", "origin"])["quantity"].sum()
    total = sf.groupby(["destination", "product"])["quantity"].sum()
    pairs["quantity"] = (
        got.reindex(pd.MultiIndex.from_frame(pairs[["site", "product", "supplier"]])).fillna(0.0).to_numpy()
    )
    pairs["total"] = total.reindex(pd.MultiIndex.from_frame(pairs[["site", "product"]])).fillna(0.0).to_numpy()
    pairs["required"] = pairs["floor"] * pairs["total"]
    return pairs


def region_share_rows(case: Case, flows: pd.DataFrame) -> pd.DataFrame:
    """Per (DC, customer region) with a cap ψ_d < 1: ``delivered`` (units/yr, all products) and
    ``allowed`` = ψ_d × the region's demand."""
    t = case.tables
    psi = region_caps(t["dcs"])
    psi = psi[psi < 1.0 - 1e-12]
    cols = ["dc", "region", "delivered", "allowed"]
    if psi.empty:
        return pd.DataFrame(columns=cols)
    region = t["customers"].set_index(t["customers"]["customer"].astype(str))["region"].astype(str)
    dem = t["demand"][t["demand"]["quantity"] > 0]
    d_r = dem.groupby(dem["customer"].astype(str).map(region).fillna(""))["quantity"].sum()
    grid = pd.MultiIndex.from_product([psi.index, [r for r in d_r.index if r]], names=["dc", "region"]).to_frame(
        index=False
    )
    out = flows[(flows["origin_kind"] == "dc") & (flows["destination_kind"] == "customer")]
    out = out.assign(region=out["destination"].astype(str).map(region).fillna(""))
    sent = out.groupby(["origin", "region"])["quantity"].sum()
    grid["delivered"] = sent.reindex(pd.MultiIndex.from_frame(grid[["dc", "region"]])).fillna(0.0).to_numpy(float)
    grid["allowed"] = grid["dc"].map(psi).to_numpy(float) * grid["region"].map(d_r).to_numpy(float)
    return grid[cols]


def share_rule_checks(case: Case, lanes: pd.DataFrame, flows: pd.DataFrame) -> list[tuple]:
    """``(rule, lhs, rhs, scale, where)`` of each share rule of single sites, each to hold as lhs ≤ rhs."""
    out = []
    mins = min_share_rows(case, lanes, flows)
    if len(mins):
        out.append(
            (
                "min supplier share",
                mins["required"].to_numpy(float),
                mins["quantity"].to_numpy(float),
                mins["total"].to_numpy(float),
                (mins["site"] + "/" + mins["product"] + "/" + mins["supplier"]).to_numpy(),
            )
        )
    reg = region_share_rows(case, flows)
    if len(reg):
        out.append(
            (
                "DC max share of a customer region (units)",
                reg["delivered"].to_numpy(float),
                reg["allowed"].to_numpy(float),
                np.maximum(reg["allowed"].to_numpy(float), 1.0),
                (reg["dc"] + "/" + reg["region"]).to_numpy(),
            )
        )
    return out
