"""Transport: mode per lane, freight cost, emissions.

- Freight cost per arc (currency/unit) comes from the lane table: weight × km × rate
  (a rate tier's where the mode has them, :mod:`netopt.network.rates`) + fixed per unit, or the
  explicit lane's cost per unit.
- Optional one mode per lane: binary ``mode_on`` per (origin, destination, mode),
  Σ_modes ≤ 1, flow ≤ M × mode_on.
- CO2e: weight × km × mode factor; carbon price in cost (``carbon``), optional cap.
Cost: ``transport`` and ``carbon``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index


def add(b: Builder) -> None:
    """Transport: freight and carbon cost, one mode per lane, CO2e cap.

    The rows of one mode per lane exist only with ``policy.one_mode_per_lane``, for lanes that
    have two or more modes; the cap only when E ≥ 0.  The row marked † is never relaxed in the
    elastic diagnosis.

        mode_on_link †:     Σ_p x_{(i,j,m,p)} − M_{i,j,m} λ_{i,j,m} ≤ 0      ∀ lane (i, j), mode m
        one_mode_per_lane:  Σ_m λ_{i,j,m} ≤ 1                                ∀ lane (i, j)
        co2_cap:            Σ_{a ∈ A} (e_a / 1000) x_a ≤ E

        M_{i,j,m} = min(L_{i,j,m}, max(1, B_j)),   B_j = Σ_p q_{j,p} if j is a customer,
                                                    else max(Σ q, Σ_{p,r} β_{p,r} Σ_c q_{c,p})

        C[transport] = Σ_{a ∈ A} c^fr_a x_a
        C[carbon]    = Σ_{a ∈ A} c^co2_a x_a

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | c^fr_a | freight: weight × km × rate (the mode's rate tier by distance band and shipment weight, at least its minimum charge per shipment spread over the units of an average shipment: ``netopt.network.rates``) + fixed per unit, or the lane's cost per unit; plus the border crossing's cost b_a on a lane between countries (``netopt.network.borders``) | currency/unit | arc column ``freight_per_unit`` |
    | e_a | CO2e: weight × km × mode factor | kg CO2e/unit | arc column ``co2_kg_per_unit`` |
    | c^co2_a | e_a / 1000 × carbon price | currency/unit | arc column ``carbon_per_unit`` (``policy.carbon_price_per_tonne``) |
    | E | cap on transport CO2e | t CO2e/yr | setting ``policy.co2_cap_tonnes`` |
    | λ_{i,j,m} | mode m used on lane (i, j) | binary | variable block ``mode_on`` |
    """
    net = b.net
    arcs = net.arcs
    idx = np.arange(len(arcs))
    b.add_cost("transport", Term("flow", idx, arcs["freight_per_unit"].to_numpy(float)))
    carbon = arcs["carbon_per_unit"].to_numpy(float)
    if np.any(carbon):
        b.add_cost("carbon", Term("flow", idx, carbon))
    pol = net.settings["policy"]

    if bool(pol["one_mode_per_lane"]):
        lm, g = group_index(arcs, ["origin", "destination", "mode"])
        lanes, l_of = group_index(lm, ["origin", "destination"])
        n_modes = np.bincount(l_of, minlength=len(lanes))
        multi = n_modes[l_of] > 1
        if multi.any():
            keep = np.flatnonzero(multi)
            remap = -np.ones(len(lm), int)
            remap[keep] = np.arange(len(keep))
            b.add_vars("mode_on", lm.iloc[keep], binary=True)
            sel = remap[g] >= 0
            big = _lane_bound(b, lm.iloc[keep])
            rows = np.arange(len(keep))
            b.add_rows(
                "mode_on_link",
                lm.iloc[keep],
                [Term("flow", idx[sel], np.ones(sel.sum()), remap[g][sel]), Term("mode_on", rows, -big, rows)],
                "<=",
                0.0,
                elastic=False,
            )
            lsel, lrow = group_index(lm.iloc[keep], ["origin", "destination"])
            b.add_rows("one_mode_per_lane", lsel, [Term("mode_on", rows, np.ones(len(rows)), lrow)], "<=", 1.0)

    cap = float(pol["co2_cap_tonnes"])
    if cap >= 0:
        co2 = arcs["co2_kg_per_unit"].to_numpy(float) / 1000.0
        nz = np.flatnonzero(co2)
        b.add_rows(
            "co2_cap",
            pd.DataFrame({"rule": ["transport CO2e cap"]}),
            [Term("flow", nz, co2[nz], np.zeros(len(nz), int))],
            "<=",
            cap,
        )


def _lane_bound(b: Builder, lm: pd.DataFrame) -> np.ndarray:
    """Most units/yr a lane can carry: its capacity, or the demand it can serve."""
    net = b.net
    arcs = net.arcs
    cap = arcs.groupby(["origin", "destination", "mode"])["lane_capacity"].first()
    c = cap.reindex(pd.MultiIndex.from_frame(lm[["origin", "destination", "mode"]])).to_numpy(float)
    by_cust = net.demand.groupby("customer")["quantity"].sum()
    total = net.total_demand
    if len(net.bom):
        # Into a plant: every material of every product's bill, for all demand (one lane
        # may carry several materials, so the largest quantity per unit is not enough).
        by_product = net.demand.groupby("product")["quantity"].sum()
        bom = net.bom
        need = float(
            (
                bom["quantity_per_unit"].to_numpy(float) * bom["product"].map(by_product).fillna(0.0).to_numpy(float)
            ).sum()
        )
        total = max(total, need)
    dest_bound = lm["destination"].map(by_cust).fillna(total).to_numpy(float)
    return np.minimum(np.where(np.isfinite(c), c, np.inf), np.maximum(dest_bound, 1.0))
