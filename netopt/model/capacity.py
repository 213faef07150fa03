"""Capacities: supplier offers, DC throughput tied to opening, lane-and-mode limits.

Also the strong linking inequalities of the tight formulation: the flow of a product
from DC d to customer c over all modes ≤ that demand × open[d].  They are valid
for every integer solution and make the LP bound far stronger than the aggregate
throughput row alone.
Cost: ``dc_handling`` (handling cost per unit into a DC).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index, lookup
from netopt.model.openings import option_terms


def add(b: Builder, formulation: str = "tight", big_m_factor: float = 1.0) -> None:
    """Capacities: supplier offers, DC throughput tied to the opening, lane-and-mode limits.

    Rows marked † are never relaxed in the elastic diagnosis.

        supplier_capacity:   Σ_{a ∈ out(s,p)} x_a ≤ U_{s,p}                          ∀ offer (s, p) with U_{s,p} < ∞
        dc_throughput:       Σ_{a ∈ in(d)} x_a − Σ_{o ∈ O(d)} Ū_o y_o ≤ 0            ∀ DC d with an inbound arc
        dc_customer_link †:  Σ_m x_{(d,c,m,p)} − q_{c,p} Σ_{o ∈ O(d)} y_o ≤ 0         ∀ (d, c, p) with a DC → customer arc (tight only)
        dc_capacity_cover †: Σ_{o ∈ O} U_o y_o + Σ_{(c,p) ∈ Q_D} u_{c,p} ≥ Σ_{(c,p) ∈ Q_D} q_{c,p}   (tight only, every U_o < ∞)
        lane_capacity:       Σ_p x_{(i,j,m,p)} ≤ L_{i,j,m}                            ∀ lane (i, j) and mode m with L_{i,j,m} < ∞

        Ū_o = U_o if finite, else M = (Σ q) × (2 if any DC → DC arc, else 1) × big_m_factor

        C[dc_handling] = Σ_{a ∈ A_{→D}} h_a x_a

    ``dc_customer_link`` is valid for every integer solution (a DC that is closed delivers
    nothing, and no customer takes more than its demand) and makes the LP bound far stronger
    than ``dc_throughput`` alone; the "plain" formulation (benchmarks) leaves it out.
    ``dc_capacity_cover`` is the total-capacity row of the textbook capacitated facility-location
    model: every unit of Q_D passes through the inbound of at least one open DC, so the open
    capacity covers it (less what is lost); it cuts LP solutions that open fractions of DCs.

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | U_{s,p} | capacity of supplier s's offer of p | units/yr | ``suppliers.capacity`` |
    | U_o | capacity of opening option o (∞ = unlimited) | units/yr | ``options.capacity`` |
    | M | big M standing in for unlimited DC capacity | units/yr | ``Builder.dc_big_m`` |
    | in(d) | arcs into DC d, every product | | arc column ``destination_kind`` = dc |
    | L_{i,j,m} | capacity of a lane and mode shared by all products (∞ = none) | units/yr | arc column ``lane_capacity`` |
    | Q_D | demand rows (customer, product) that only DC → customer arcs deliver | | ``net.demand`` |
    | q_{c,p}, u_{c,p} | demand; its lost units (when lost demand is allowed) | units/yr | ``net.demand.quantity``; block ``unmet`` |
    | A_{→D}, h_a | arcs into a DC; handling cost of the receiving DC | currency/unit | arc column ``handling_per_unit`` |
    """
    net = b.net
    arcs = net.arcs
    flow_idx = np.arange(len(arcs))

    # Supplier capacity per (supplier, product) offer.
    sup = net.arcs["origin_kind"].eq("supplier").to_numpy()
    si = flow_idx[sup]
    offers, r = group_index(arcs.iloc[si], ["origin", "product"])
    if len(offers):
        cap = _supplier_capacity(b, offers)
        fin = np.isfinite(cap)
        if fin.any():
            keep = np.flatnonzero(fin)
            remap = -np.ones(len(offers), int)
            remap[keep] = np.arange(len(keep))
            rr = remap[r]
            m = rr >= 0
            b.add_rows(
                "supplier_capacity",
                offers.iloc[keep].set_axis(["supplier", "product"], axis=1),
                [Term("flow", si[m], np.ones(m.sum()), rr[m])],
                "<=",
                cap[keep],
            )

    # DC throughput: Σ inbound units ≤ Σ_options capacity × open (big M = all demand if unlimited).
    di = flow_idx[arcs["destination_kind"].eq("dc").to_numpy()]
    dcs, r = group_index(arcs.iloc[di], ["destination"])
    if len(dcs):
        big_m = net.total_demand * (2.0 if arcs["leg"].eq("dc-dc").any() else 1.0) * big_m_factor
        b.dc_big_m = big_m
        rows = np.arange(len(dcs))
        b.add_rows(
            "dc_throughput",
            dcs.set_axis(["dc"], axis=1),
            [
                Term("flow", di, np.ones(len(di)), r),
                option_terms(
                    b, dcs["destination"].to_numpy(), rows, -np.ones(len(rows)), use_capacity=True, big_m=big_m
                ),
            ],
            "<=",
            0.0,
        )
        b.add_cost("dc_handling", Term("flow", di, arcs["handling_per_unit"].to_numpy(float)[di]))

    # Strong linking: Σ_modes flow(d→c, p) ≤ demand(c, p) × open[d].
    if formulation == "tight":
        lk = flow_idx[(arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")).to_numpy()]
        groups, r = group_index(arcs.iloc[lk], ["origin", "destination", "product"])
        if len(groups):
            dem = lookup(net.demand, groups, ["customer", "product"], ["destination", "product"])
            q = net.demand["quantity"].to_numpy(float)[dem]
            rows = np.arange(len(groups))
            b.add_rows(
                "dc_customer_link",
                groups.set_axis(["dc", "customer", "product"], axis=1),
                [Term("flow", lk, np.ones(len(lk)), r), option_terms(b, groups["origin"].to_numpy(), rows, -q)],
                "<=",
                0.0,
                elastic=False,
                matrix=True,
            )

    # Capacity cover: the open DCs' capacity must carry the demand only DCs can deliver.
    if formulation == "tight" and len(dcs) and np.isfinite(net.options["capacity"].to_numpy(float)).all():
        to_cust = arcs[arcs["destination_kind"].eq("customer")]
        direct = to_cust[to_cust["origin_kind"].ne("dc")][["destination", "product"]].drop_duplicates()
        dem = net.demand.reset_index(drop=True)
        keys = pd.MultiIndex.from_frame(dem[["customer", "product"]].astype(str))
        only_dc = ~keys.isin(pd.MultiIndex.from_frame(direct.astype(str))) & (dem["quantity"].to_numpy(float) > 0)
        need = float(dem.loc[only_dc, "quantity"].sum())
        if need > 0:
            terms = [option_terms(b, dcs["destination"].to_numpy(), np.zeros(len(dcs), int), np.ones(len(dcs)), True)]
            if "unmet" in b.vars:
                k = np.flatnonzero(only_dc)
                terms.append(Term("unmet", k, np.ones(len(k)), np.zeros(len(k), int)))
            b.add_rows(
                "dc_capacity_cover", pd.DataFrame({"rule": ["open DC capacity"]}), terms, ">=", need, elastic=False
            )

    # Lane-and-mode capacity shared by all products.
    lc = arcs["lane_capacity"].to_numpy(float)
    li = flow_idx[np.isfinite(lc)]
    lanes, r = group_index(arcs.iloc[li], ["origin", "destination", "mode"])
    if len(lanes):
        cap = pd.Series(lc[li]).groupby(r).first().to_numpy(float)
        b.add_rows("lane_capacity", lanes, [Term("flow", li, np.ones(len(li)), r)], "<=", cap)


def _supplier_capacity(b: Builder, offers: pd.DataFrame) -> np.ndarray:
    sup = b.net.suppliers
    cap = sup.set_index(["supplier", "product"])["capacity"]
    return cap.reindex(pd.MultiIndex.from_frame(offers)).to_numpy(float)
