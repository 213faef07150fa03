"""Flows and balances: lane flows, production, demand met (or unmet), balance at plants and DCs.

Variables: ``flow[a]`` units/yr per arc (lane × mode × product); ``make[k]`` units/yr per
(plant, product); ``unmet[k]`` units/yr per (customer, product), only when the policy
allows lost demand (or in elastic diagnosis).
Cost: ``production`` (make × conversion cost) and ``unmet_penalty``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term, group_index, lookup


def add(b: Builder) -> None:
    """Flows and balances: demand met or lost, conservation at DCs, plant output and materials.

    Rows marked † are never relaxed in the elastic diagnosis.

        demand_met †:       Σ_{a ∈ in(c,p)} x_a + u_{c,p} = q_{c,p}                 ∀ (c, p) ∈ Q
        dc_balance †:       Σ_{a ∈ in(d,p)} x_a − Σ_{a ∈ out(d,p)} x_a = 0          ∀ DC d, product p with an arc into or out of d
        plant_output †:     Σ_{a ∈ out(f,p)} x_a − w_{f,p} = 0                      ∀ (f, p) ∈ W
        plant_materials †:  Σ_{a ∈ in(f,r)} x_a − Σ_p β_{p,r} w_{f,p} = 0           ∀ plant f, material r of a product f makes

        0 ≤ x_a ≤ u_a,   0 ≤ w_{f,p} ≤ W_{f,p},   0 ≤ u_{c,p} ≤ q_{c,p}

        C[production]    = Σ_{(f,p) ∈ W} c_{f,p} w_{f,p}
        C[unmet_penalty] = Σ_{(c,p) ∈ Q} π_{c,p} u_{c,p}

    u_{c,p} exists only when ``policy.allow_unmet_demand`` is on (or in the elastic diagnosis,
    where π is the elastic penalty P); otherwise demand is met in full.

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | x_a | flow on arc a | units/yr | variable block ``flow`` |
    | u_a | capacity of a product-specific lane row (∞ otherwise) | units/yr | arc column ``capacity`` |
    | in(n,p), out(n,p) | arcs into / out of site n carrying product p | | arc columns ``destination``, ``origin``, ``product`` |
    | Q, q_{c,p} | demand rows with quantity > 0, their quantity | units/yr | ``net.demand``, column ``quantity`` |
    | u_{c,p} | demand of (c, p) not delivered | units/yr | variable block ``unmet`` |
    | π_{c,p} | penalty per unit not delivered | currency/unit | ``demand.penalty`` |
    | W, w_{f,p} | (plant, product) pairs; units made | units/yr | ``net.make``; variable block ``make`` |
    | W_{f,p} | production capacity | units/yr | ``make.capacity`` |
    | c_{f,p} | conversion cost per unit made | currency/unit | ``make.unit_cost`` |
    | β_{p,r} | units of material r per unit of product p | units/unit | ``bom.quantity_per_unit`` |
    """
    net = b.net
    arcs = net.arcs
    b.add_vars("flow", arcs[["origin", "destination", "mode", "product"]], ub=arcs["capacity"].to_numpy(float))
    make = net.make
    b.add_vars("make", make[["plant", "product"]], ub=make["capacity"].to_numpy(float))
    dem = net.demand
    allow = bool(net.settings["policy"]["allow_unmet_demand"]) or b.elastic
    if allow:
        b.add_vars("unmet", dem[["customer", "product"]], ub=dem["quantity"].to_numpy(float))

    # Demand: Σ deliveries + unmet = demand (units/yr).
    last = np.flatnonzero(arcs["destination_kind"].eq("customer").to_numpy())
    row = lookup(dem, arcs.iloc[last], ["customer", "product"], ["destination", "product"])
    ok = row >= 0
    terms = [Term("flow", last[ok], np.ones(ok.sum()), row[ok])]
    if allow:
        terms.append(Term("unmet", np.arange(len(dem)), np.ones(len(dem)), np.arange(len(dem))))
        pen = np.full(len(dem), b.elastic_penalty) if b.elastic else dem["penalty"].to_numpy(float)
        b.add_cost("unmet_penalty", Term("unmet", np.arange(len(dem)), pen))
    b.add_rows(
        "demand_met",
        dem[["customer", "product"]],
        terms,
        "==",
        dem["quantity"].to_numpy(float),
        elastic=False,
        matrix=True,
    )

    # DC balance per (dc, product): inflow − outflow = 0.
    into = arcs["destination_kind"].eq("dc").to_numpy()
    out = arcs["origin_kind"].eq("dc").to_numpy()
    pairs = pd.concat(
        [
            arcs.loc[into, ["destination", "product"]].set_axis(["dc", "product"], axis=1),
            arcs.loc[out, ["origin", "product"]].set_axis(["dc", "product"], axis=1),
        ]
    )
    labels, _ = group_index(pairs.drop_duplicates(), ["dc", "product"])
    ii = np.flatnonzero(into)
    oo = np.flatnonzero(out)
    r_in = lookup(labels, arcs.iloc[ii], ["dc", "product"], ["destination", "product"])
    r_out = lookup(labels, arcs.iloc[oo], ["dc", "product"], ["origin", "product"])
    b.add_rows(
        "dc_balance",
        labels,
        [Term("flow", ii, np.ones(len(ii)), r_in), Term("flow", oo, -np.ones(len(oo)), r_out)],
        "==",
        0.0,
        elastic=False,
        matrix=True,
    )

    # Plant output: Σ shipments of a product = units made.
    po = np.flatnonzero(arcs["origin_kind"].eq("plant").to_numpy())
    r = lookup(make, arcs.iloc[po], ["plant", "product"], ["origin", "product"])
    k = np.arange(len(make))
    b.add_rows(
        "plant_output",
        make[["plant", "product"]],
        [Term("flow", po[r >= 0], np.ones((r >= 0).sum()), r[r >= 0]), Term("make", k, -np.ones(len(k)), k)],
        "==",
        0.0,
        elastic=False,
        matrix=True,
    )

    # Plant materials: Σ material received = Σ_products bill-of-materials use × units made.
    if len(net.bom):
        use = make.reset_index().rename(columns={"index": "mk"}).merge(net.bom, on="product")
        labels, r_use = group_index(use, ["plant", "material"])
        pi = np.flatnonzero(arcs["destination_kind"].eq("plant").to_numpy())
        r_in = lookup(labels, arcs.iloc[pi], ["plant", "material"], ["destination", "product"])
        okk = r_in >= 0
        b.add_rows(
            "plant_materials",
            labels,
            [
                Term("flow", pi[okk], np.ones(okk.sum()), r_in[okk]),
                Term("make", use["mk"].to_numpy(int), -use["quantity_per_unit"].to_numpy(float), r_use),
            ],
            "==",
            0.0,
            elastic=False,
        )

    b.add_cost("production", Term("make", k, make["unit_cost"].to_numpy(float)))
