"""The supplier share cap of each (receiving site, product, supplier): one rule, used by the model,
the result tables and the independent check.

    σ_{j,p,s} = min(σ, σ_{s,p}, σ_j)

| symbol | meaning | unit | from |
|---|---|---|---|
| σ | most one supplier may provide of a site's supply of a product (every site) | share | setting ``policy.max_supplier_share`` |
| σ_{s,p} | most supplier s may provide of any one site's supply of p | share | ``suppliers.max_share`` (1 = none) |
| σ_j | most any one supplier may provide of site j's supply of a product | share | ``plants.max_supplier_share`` (the smallest of the plant's rows), ``dcs.max_supplier_share`` (1 = none) |
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


def share_caps(policy_share: float, suppliers: pd.DataFrame, site_caps: pd.Series, pairs: pd.DataFrame) -> np.ndarray:
    """σ_{j,p,s} for each row of ``pairs`` (columns site, product, supplier), as shares."""
    if not len(pairs):
        return np.zeros(0)
    own = (
        suppliers.set_index([suppliers["supplier"].astype(str), suppliers["product"].astype(str)])["max_share"]
        if "max_share" in suppliers
        else pd.Series(dtype=float)
    )
    keys = pd.MultiIndex.from_arrays([pairs["supplier"].astype(str), pairs["product"].astype(str)])
    by_supplier = own.reindex(keys).to_numpy(float) if len(own) else np.full(len(pairs), np.nan)
    by_site = (
        pairs["site"].astype(str).map(site_caps).to_numpy(float) if len(site_caps) else np.full(len(pairs), np.nan)
    )
    caps = np.fmin(np.fmin(np.full(len(pairs), float(policy_share)), by_supplier), by_site)
    return np.minimum(caps, 1.0)
