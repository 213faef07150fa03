"""Share rules of single sites beside the global policy: a supplier's least share of a site's supply, and
a DC's most share of a customer region's demand (dual sourcing of regions).

The shares come from :mod:`netopt.network.sourcing_caps` (one rule for model, tables and check); the
supplier caps σ_{j,p,s} are rows of :mod:`netopt.model.sourcing`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index
from netopt.network.sourcing_caps import region_caps, share_floors


def add(b: Builder) -> None:
    """Share rules: least supplier shares; most share of a customer region per DC.

    A_S(j,p) are the arcs from suppliers into site j carrying p, A_S(j,p,s) those from supplier s;
    A_{D→C}(d,R) the arcs from DC d to the customers of region R (every product).  Rows exist only
    where μ_{j,p,s} > 0, and where ψ_d < 1 and D_R > 0 (named regions only).  The region rule is
    measured against demand, never against what is delivered, so losing demand cannot help meet it.

        min_supplier_share:  Σ_{a ∈ A_S(j,p,s)} x_a − μ_{j,p,s} Σ_{a ∈ A_S(j,p)} x_a ≥ 0     ∀ (j, p, s): μ_{j,p,s} > 0
        dc_region_share:     Σ_{a ∈ A_{D→C}(d,R)} x_a ≤ ψ_d D_R                              ∀ (d, R): ψ_d < 1

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | μ_{j,p,s} | least share supplier s provides of site j's supplier inflow of p: max(μ_{s,p}, μ_{s,j,p}) | share | ``netopt.network.sourcing_caps.share_floors`` (``suppliers.min_share``, ``sourcing_shares.min_share``) |
    | ψ_d | most share of one customer region's demand DC d may deliver | share | ``dcs.max_region_share`` |
    | D_R | demand of the customers of region R, all products | units/yr | ``demand.quantity``, ``customers.region`` |
    """
    net = b.net
    arcs = net.arcs
    si = np.flatnonzero(arcs["origin_kind"].eq("supplier").to_numpy())
    if len(si):
        sub = arcs.iloc[si]
        groups, g = group_index(sub, ["destination", "product", "origin"])
        labels = groups.rename(columns={"destination": "site", "origin": "supplier"})
        floors = share_floors(net.suppliers, labels, net.sourcing_shares)
        keep = floors > 1e-12
        if keep.any():
            row_of = np.cumsum(keep) - 1
            _sites, s_of_arc = group_index(sub, ["destination", "product"])
            g_site = pd.Series(s_of_arc).groupby(g).first().to_numpy(int)
            cross = pd.DataFrame({"site": g_site[keep], "row": row_of[keep], "floor": floors[keep]}).merge(
                pd.DataFrame({"site": s_of_arc, "arc": si}), on="site"
            )
            own = keep[g]
            b.add_rows(
                "min_supplier_share",
                labels[keep].reset_index(drop=True).assign(min_share=floors[keep]),
                [
                    Term("flow", si[own], np.ones(int(own.sum())), row_of[g[own]]),
                    Term(
                        "flow", cross["arc"].to_numpy(int), -cross["floor"].to_numpy(float), cross["row"].to_numpy(int)
                    ),
                ],
                ">=",
                0.0,
            )

    psi = region_caps(net.dcs)
    out = np.flatnonzero((arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")).to_numpy())
    if not len(out) or not (psi < 1.0 - 1e-12).any():
        return
    region = net.customers_region
    sub = arcs.iloc[out].assign(region=arcs["destination"].iloc[out].map(region).fillna("").to_numpy())
    sub = sub.assign(cap=sub["origin"].map(psi).fillna(1.0).to_numpy(float))
    ok = (sub["region"].to_numpy() != "") & (sub["cap"].to_numpy(float) < 1.0 - 1e-12)
    if not ok.any():
        return
    sub, idx = sub[ok], out[ok]
    groups, g = group_index(sub, ["origin", "region"])
    demand = net.demand.assign(region=net.demand["customer"].map(region).fillna("")).groupby("region")["quantity"].sum()
    d_r = groups["region"].map(demand).fillna(0.0).to_numpy(float)
    cap = groups["origin"].map(psi).to_numpy(float)
    b.add_rows(
        "dc_region_share",
        groups.rename(columns={"origin": "dc"}).assign(max_region_share=cap, region_demand=d_r),
        [Term("flow", idx, np.ones(len(idx)), g)],
        "<=",
        cap * d_r,
    )
