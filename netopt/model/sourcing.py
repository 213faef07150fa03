"""Sourcing: supplier splits and diversification.

Rules per receiving site (plant or DC) and material/product bought from suppliers:
- no one supplier above its cap of the site's supplier inflow: the smallest of
  ``policy.max_supplier_share``, the supplier's own ``suppliers.max_share`` and the site's own
  ``max_supplier_share`` (:mod:`netopt.network.sourcing_caps`);
- no one supplier region above ``policy.max_region_share``;
- at least ``policy.min_active_suppliers`` suppliers active, an active supplier
  delivering at least ``policy.min_share_when_active`` of that inflow (binary ``supplier_active``; the block is not
  named ``active``, a reserved Pyomo block attribute).
Cost: ``supply`` (purchase price × units bought, currency/yr).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index
from netopt.network.sourcing_caps import share_caps


def _share_rows(b: Builder, name: str, si: np.ndarray, by: list[str], share) -> None:
    """Σ flow of each group (site, product, *by) − share_g × Σ flow of (site, product) ≤ 0, for the
    groups whose share is below 1.  ``share``: one share for every group, or a function of the
    groups table (columns site, product, *by) giving one share per group."""
    arcs = b.net.arcs.iloc[si]
    groups, g = group_index(arcs, ["destination", "product"] + by)
    labels = groups.rename(columns={"destination": "site"}).reset_index(drop=True)
    caps = np.asarray(share(labels), dtype=float) if callable(share) else np.full(len(groups), float(share))
    keep = caps < 1.0 - 1e-12
    if not keep.any():
        return
    row_of = np.cumsum(keep) - 1  # group → kept row number
    _sites, s_of_arc = group_index(arcs, ["destination", "product"])
    # Every group row also carries −share × every arc of its site/product.
    g_site = pd.Series(s_of_arc).groupby(g).first().to_numpy(int)
    arc_tab = pd.DataFrame({"site": s_of_arc, "arc": si})
    grp_tab = pd.DataFrame({"site": g_site[keep], "row": row_of[keep], "cap": caps[keep]})
    cross = grp_tab.merge(arc_tab, on="site")
    own = keep[g]
    b.add_rows(
        name,
        labels[keep].reset_index(drop=True),
        [
            Term("flow", si[own], np.ones(int(own.sum())), row_of[g[own]]),
            Term("flow", cross["arc"].to_numpy(int), -cross["cap"].to_numpy(float), cross["row"].to_numpy(int)),
        ],
        "<=",
        0.0,
    )


def add(b: Builder) -> None:
    """Sourcing: purchase cost, supplier and region shares, least number of active suppliers.

    A_S(j,p) are the arcs from suppliers into site j (plant or DC) carrying p, A_S(j,p,s) those
    from supplier s, A_S(j,p,R) those from suppliers of region R.  Share rows exist only when
    the share is below 1; the active-supplier rows only when k ≥ 2.

        max_supplier_share:         Σ_{a ∈ A_S(j,p,s)} x_a − σ_{j,p,s} Σ_{a ∈ A_S(j,p)} x_a ≤ 0         ∀ (j, p, s): σ_{j,p,s} < 1
        max_region_share:           Σ_{a ∈ A_S(j,p,R)} x_a − ρ Σ_{a ∈ A_S(j,p)} x_a ≤ 0                 ∀ (j, p, R)
        active_supplier_link:       Σ_{a ∈ A_S(j,p,s)} x_a − M_{j,p,s} z_{j,p,s} ≤ 0                    ∀ (j, p, s)
        active_supplier_min_share:  Σ_{a ∈ A_S(j,p,s)} x_a − μ Σ_{a ∈ A_S(j,p)} x_a − N_p z_{j,p,s} ≥ −N_p  ∀ (j, p, s)
        min_active_suppliers:       Σ_s z_{j,p,s} ≥ min(k, n_{j,p})                                      ∀ (j, p)

        M_{j,p,s} = min(U_{s,p}, N_p)

        C[supply] = Σ_{a ∈ A_S} c^sup_a x_a

    So an active supplier (z = 1) delivers at least μ of the site's supplier inflow, and an
    inactive one nothing.

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | σ_{j,p,s} | most supplier s may provide of site j's supplier inflow of p: min(σ, σ_{s,p}, σ_j, σ_{s,j,p}) (σ_{s,j,p}: ``sourcing_shares.max_share``) | share | ``netopt.network.sourcing_caps.share_caps`` |
    | σ | most one supplier may provide of a site's supplier inflow | share | setting ``policy.max_supplier_share`` |
    | σ_{s,p} | supplier s's own cap | share | ``suppliers.max_share`` |
    | σ_j | site j's own cap | share | ``plants.max_supplier_share``, ``dcs.max_supplier_share`` |
    | ρ | most one supplier region may provide | share | setting ``policy.max_region_share``; ``suppliers.region`` |
    | k | least number of active suppliers per site and product | suppliers | setting ``policy.min_active_suppliers`` |
    | μ | least share of an active supplier | share | setting ``policy.min_share_when_active`` |
    | z_{j,p,s} | supplier s active for site j and product p | binary | variable block ``supplier_active`` |
    | n_{j,p} | suppliers with an arc into j for p | suppliers | |
    | N_p | bound on a site's inflow of p: its demand plus its use in every bill of materials (≥ 1) | units/yr | ``_site_need_bound`` |
    | c^sup_a | purchase price of the supplier's offer | currency/unit | arc column ``supply_per_unit`` |
    """
    net = b.net
    arcs = net.arcs
    pol = net.settings["policy"]
    si = np.flatnonzero(arcs["origin_kind"].eq("supplier").to_numpy())
    if len(si):
        b.add_cost("supply", Term("flow", si, arcs["supply_per_unit"].to_numpy(float)[si]))
    if not len(si):
        return
    share = float(pol["max_supplier_share"])
    _share_rows(
        b,
        "max_supplier_share",
        si,
        ["origin"],
        lambda g: share_caps(
            share, net.suppliers, net.site_share_caps, g.rename(columns={"origin": "supplier"}), net.sourcing_shares
        ),
    )
    rshare = float(pol["max_region_share"])
    if rshare < 1.0:
        region = net.suppliers.drop_duplicates("supplier").set_index("supplier")["region"]
        net.arcs["supplier_region"] = arcs["origin"].map(region).fillna("")
        _share_rows(b, "max_region_share", si, ["supplier_region"], rshare)
    k = int(pol["min_active_suppliers"])
    if k >= 2:
        sub = arcs.iloc[si]
        groups, g = group_index(sub, ["destination", "product", "origin"])
        sites, s_of_arc = group_index(sub, ["destination", "product"])
        g_site = pd.Series(s_of_arc).groupby(g).first().to_numpy(int)
        n_sup = np.bincount(g_site, minlength=len(sites))
        b.add_vars("supplier_active", groups.rename(columns={"destination": "site", "origin": "supplier"}), binary=True)
        cap = (
            net.suppliers.set_index(["supplier", "product"])["capacity"]
            .reindex(pd.MultiIndex.from_frame(groups[["origin", "product"]]))
            .to_numpy(float)
        )
        need = _site_need_bound(b, sites)
        big = np.minimum(np.where(np.isfinite(cap), cap, np.inf), need[g_site])
        rows = np.arange(len(groups))
        # flow ≤ M × active
        b.add_rows(
            "active_supplier_link",
            groups,
            [Term("flow", si, np.ones(len(si)), g), Term("supplier_active", rows, -big, rows)],
            "<=",
            0.0,
        )
        # flow ≥ min_share × site inflow − M × (1 − active)
        ms = float(pol["min_share_when_active"])
        arc_tab = pd.DataFrame({"site": s_of_arc, "arc": si})
        cross = pd.DataFrame({"site": g_site, "row": rows}).merge(arc_tab, on="site")
        bigm = need[g_site]
        b.add_rows(
            "active_supplier_min_share",
            groups,
            [
                Term("flow", si, np.ones(len(si)), g),
                Term("flow", cross["arc"].to_numpy(int), -ms * np.ones(len(cross)), cross["row"].to_numpy(int)),
                Term("supplier_active", rows, -bigm, rows),
            ],
            ">=",
            -bigm,
        )
        # Σ active ≥ min(k, suppliers available)
        b.add_rows(
            "min_active_suppliers",
            sites.rename(columns={"destination": "site"}),
            [Term("supplier_active", rows, np.ones(len(rows)), g_site)],
            ">=",
            np.minimum(k, n_sup).astype(float),
        )


def _site_need_bound(b: Builder, sites: pd.DataFrame) -> np.ndarray:
    """Upper bound on units/yr a site can receive of a product (for big-M rows)."""
    net = b.net
    total_by_product = net.demand.groupby("product")["quantity"].sum()
    bom = net.bom
    need = []
    for p in sites["product"].tolist():
        direct = float(total_by_product.get(p, 0.0))
        via = 0.0
        if len(bom):
            use = bom[bom["material"] == p]
            via = float(
                (
                    use["quantity_per_unit"].to_numpy(float)
                    * use["product"].map(total_by_product).fillna(0.0).to_numpy(float)
                ).sum()
            )
        need.append(max(direct + via, 1.0))
    return np.array(need)
