"""The supplier share cap and floor of each (receiving site, product, supplier), and each DC's cap on a
customer region: one rule, used by the model, the result tables and the independent check.

    σ_{j,p,s} = min(σ, σ_{s,p}, σ_j, σ_{s,j,p})          μ_{j,p,s} = max(μ_{s,p}, μ_{s,j,p})

| symbol | meaning | unit | from |
|---|---|---|---|
| σ | most one supplier may provide of a site's supply of a product (every site) | share | setting ``policy.max_supplier_share`` |
| σ_{s,p} | most supplier s may provide of any one site's supply of p | share | ``suppliers.max_share`` (1 = none) |
| σ_j | most any one supplier may provide of site j's supply of a product | share | ``plants.max_supplier_share`` (the smallest of the plant's rows), ``dcs.max_supplier_share`` (1 = none) |
| σ_{s,j,p} | most supplier s may provide of site j's supply of p | share | ``sourcing_shares.max_share`` (the row of p, else the row for every product; 1 = none) |
| μ_{s,p} | least supplier s must provide of every site's supply of p it has a lane to (none while its offer has no capacity, e.g. taken out) | share | ``suppliers.min_share`` (0 = none) |
| μ_{s,j,p} | least supplier s must provide of site j's supply of p | share | ``sourcing_shares.min_share`` (as σ_{s,j,p}; 0 = none) |
| ψ_d | most DC d may deliver of any one customer region's demand (all products) | share | ``dcs.max_region_share`` (1 = none) |
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def site_share_caps(tables: dict[str, pd.DataFrame]) -> pd.Series:
    """σ_j per receiving site (plant or DC code → share); sites without their own cap have 1."""
    parts = []
    for table, col in (("plants", "plant"), ("dcs", "dc")):
        df = tables.get(table)
        if df is not None and len(df) and "max_supplier_share" in df:
            parts.append(df.groupby(df[col].astype(str))["max_supplier_share"].min())
    return pd.concat(parts) if parts else pd.Series(dtype=float)


def _pair_values(pair_table: pd.DataFrame | None, pairs: pd.DataFrame, column: str) -> np.ndarray:
    """The ``sourcing_shares`` value of ``column`` for each (site, product, supplier) of ``pairs``: the row of
    the product, else the row for every product; NaN where none."""
    out = np.full(len(pairs), np.nan)
    if pair_table is None or pair_table.empty or not len(pairs):
        return out
    tab = pair_table.set_index(
        [pair_table["supplier"].astype(str), pair_table["site"].astype(str), pair_table["product"].astype(str)]
    )[column].astype(float)
    s, j = pairs["supplier"].astype(str).to_numpy(), pairs["site"].astype(str).to_numpy()
    for p in (pairs["product"].astype(str).to_numpy(), np.full(len(pairs), "")):
        hit = tab.reindex(pd.MultiIndex.from_arrays([s, j, p])).to_numpy(float)
        out = np.where(np.isnan(out), hit, out)
    return out


def share_caps(
    policy_share: float,
    suppliers: pd.DataFrame,
    site_caps: pd.Series,
    pairs: pd.DataFrame,
    pair_table: pd.DataFrame | None = None,
) -> np.ndarray:
    """σ_{j,p,s} for each row of ``pairs`` (columns site, product, supplier), as shares; ``pair_table`` is
    the case's ``sourcing_shares`` table."""
    if not len(pairs):
        return np.zeros(0)
    by_supplier = _offer_values(suppliers, pairs, "max_share")
    by_site = (
        pairs["site"].astype(str).map(site_caps).to_numpy(float) if len(site_caps) else np.full(len(pairs), np.nan)
    )
    caps = np.fmin(np.fmin(np.full(len(pairs), float(policy_share)), by_supplier), by_site)
    caps = np.fmin(caps, _pair_values(pair_table, pairs, "max_share"))
    return np.minimum(caps, 1.0)


def _offer_values(suppliers: pd.DataFrame, pairs: pd.DataFrame, column: str) -> np.ndarray:
    """The suppliers table's ``column`` for each row's (supplier, product) offer (NaN where not given)."""
    if column not in suppliers:
        return np.full(len(pairs), np.nan)
    own = suppliers.set_index([suppliers["supplier"].astype(str), suppliers["product"].astype(str)])[column]
    keys = pd.MultiIndex.from_arrays([pairs["supplier"].astype(str), pairs["product"].astype(str)])
    return own.reindex(keys).to_numpy(float) if len(own) else np.full(len(pairs), np.nan)


def share_floors(suppliers: pd.DataFrame, pairs: pd.DataFrame, pair_table: pd.DataFrame | None = None) -> np.ndarray:
    """μ_{j,p,s} for each row of ``pairs`` (columns site, product, supplier), as shares (0 = none)."""
    if not len(pairs):
        return np.zeros(0)
    keys = pd.MultiIndex.from_arrays([pairs["supplier"].astype(str), pairs["product"].astype(str)])
    by_supplier = _offer_values(suppliers, pairs, "min_share")
    floors = np.fmax(by_supplier, _pair_values(pair_table, pairs, "min_share"))
    # An offer without capacity (a supplier taken out) holds no floor: it cannot deliver its share.
    cap = suppliers.set_index([suppliers["supplier"].astype(str), suppliers["product"].astype(str)])["capacity"]
    out = cap.reindex(keys).to_numpy(float) <= 0
    return np.where(out, 0.0, np.clip(np.nan_to_num(floors), 0.0, 1.0))


def region_caps(dcs: pd.DataFrame) -> pd.Series:
    """ψ_d per DC code (share; 1 where the DC has none)."""
    if dcs.empty or "max_region_share" not in dcs:
        return pd.Series(dtype=float)
    return dcs.set_index(dcs["dc"].astype(str))["max_region_share"].astype(float).fillna(1.0)
