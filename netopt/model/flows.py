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
    b.add_rows("demand_met", dem[["customer", "product"]], terms, "==", dem["quantity"].to_numpy(float), elastic=False)

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
