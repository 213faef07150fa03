"""Service: share of each customer's demand arriving within its window; single sourcing.

- Window rule per customer with a target τ > 0: Σ deliveries on last-leg arcs whose
  transit days ≤ the class window ≥ τ × the customer's demand.  The target is measured
  against demand, never against what is delivered, so losing units can never help meet
  it.  A shortfall is hard, or, where the class (or ``policy.late_cost_per_unit``) prices
  late delivery, each unit short costs that price (variable ``late``, cost ``late_delivery``).
- Single sourcing: each (customer, product) is served from one origin (DC or plant):
  binary ``assign`` per (origin, customer, product), flow = demand × assign
  (flow ≤ demand × assign when lost demand is allowed).
"""

from __future__ import annotations

import numpy as np

from netopt.model.core import Builder, Term, group_index, lookup
from netopt.model.openings import option_terms


def add(b: Builder) -> None:
    """Service: share of demand delivered within each customer's window; single sourcing.

    A_C(c) are the last-leg arcs into customer c (from a DC or a plant, every mode and
    product); A_C(i,c,p) those from origin i carrying p.  With lost demand allowed (or in the
    elastic diagnosis) the single-sourcing equalities become ≤ (one origin may deliver part of
    the demand, the rest is lost at the penalty).  The row marked † is never relaxed in the
    elastic diagnosis.

        service_window:        Σ_{a ∈ A_C(c)} ω_a x_a + l_c ≥ τ_c D_c                ∀ customer c with τ_c > 0, D_c > 0
        single_source_flow:    Σ_{a ∈ A_C(i,c,p)} x_a − q_{c,p} v_{i,c,p} = 0         ∀ (i, c, p) with a last-leg arc
        single_source_choice:  Σ_i v_{i,c,p} = 1                                       ∀ (c, p) with a candidate origin
        single_source_open †:  v_{i,c,p} − Σ_{o ∈ O(i)} y_o ≤ 0                        ∀ (i, c, p) with i a DC

    l_c exists only where κ_c > 0 (otherwise the target is hard).  The single-sourcing rows and
    binaries exist only with ``policy.single_sourcing``.

        C[late_delivery] = Σ_c κ_c l_c

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | τ_c | least share of c's demand within its window | share | ``customers.target_share`` (service class or ``policy.service_target_share``) |
    | D_c | demand of customer c, all products | units/yr | ``demand.quantity`` summed per customer |
    | l_c | units of c's demand short of the target within the window (late) | units/yr | variable block ``late`` |
    | κ_c | cost per late unit | currency/unit | ``customers.late_cost`` (``service_classes.late_cost_per_unit`` or ``policy.late_cost_per_unit``) |
    | ω_a | 1 if the arc's transit days ≤ the customer's window, else 0 | 0/1 | arc column ``within_window`` (``customers.max_days``) |
    | v_{i,c,p} | customer c gets product p from origin i | binary | variable block ``assign`` |
    """
    net = b.net
    arcs = net.arcs
    cust = net.customers
    last = np.flatnonzero(arcs["destination_kind"].eq("customer").to_numpy())
    targets = cust[cust["target_share"] > 0].reset_index(drop=True)
    demand = net.demand.groupby("customer")["quantity"].sum()
    targets = targets.assign(demand=targets["customer"].map(demand).fillna(0.0).to_numpy(float))
    targets = targets[targets["demand"] > 0].reset_index(drop=True)
    if len(targets) and len(last):
        sub = arcs.iloc[last]
        r = lookup(targets, sub, ["customer"], ["destination"])
        keep = (r >= 0) & sub["within_window"].to_numpy(bool)
        terms = [Term("flow", last[keep], np.ones(int(keep.sum())), r[keep])]
        priced = np.flatnonzero(targets["late_cost"].to_numpy(float) > 0)
        if len(priced):
            b.add_vars("late", targets.iloc[priced][["customer"]])
            terms.append(Term("late", np.arange(len(priced)), np.ones(len(priced)), priced))
            b.add_cost(
                "late_delivery", Term("late", np.arange(len(priced)), targets["late_cost"].to_numpy(float)[priced])
            )
        b.add_rows(
            "service_window",
            targets[["customer", "service_class", "max_days", "target_share"]],
            terms,
            ">=",
            targets["target_share"].to_numpy(float) * targets["demand"].to_numpy(float),
        )

    if bool(net.settings["policy"]["single_sourcing"]) and len(last):
        sub = arcs.iloc[last]
        groups, g = group_index(sub, ["origin", "destination", "product"])
        b.add_vars("assign", groups.rename(columns={"destination": "customer"}), binary=True)
        d = lookup(net.demand, groups, ["customer", "product"], ["destination", "product"])
        q = net.demand["quantity"].to_numpy(float)[d]
        rows = np.arange(len(groups))
        allow = bool(net.settings["policy"]["allow_unmet_demand"]) or b.elastic
        # With lost demand allowed the one origin may deliver part of the demand (the rest is
        # lost at the penalty); "==" would force all-or-nothing per customer and product.
        b.add_rows(
            "single_source_flow",
            groups,
            [Term("flow", last, np.ones(len(last)), g), Term("assign", rows, -q, rows)],
            "<=" if allow else "==",
            0.0,
        )
        dem_rows = np.unique(d)
        remap = -np.ones(len(net.demand), int)
        remap[dem_rows] = np.arange(len(dem_rows))
        b.add_rows(
            "single_source_choice",
            net.demand.iloc[dem_rows][["customer", "product"]],
            [Term("assign", rows, np.ones(len(rows)), remap[d])],
            "<=" if allow else "==",
            1.0,
        )
        from_dc = groups["origin"].isin(net.options["dc"]).to_numpy()
        if from_dc.any():
            rr = np.flatnonzero(from_dc)
            remap2 = -np.ones(len(groups), int)
            remap2[rr] = np.arange(len(rr))
            b.add_rows(
                "single_source_open",
                groups.iloc[rr],
                [
                    Term("assign", rr, np.ones(len(rr)), np.arange(len(rr))),
                    option_terms(b, groups["origin"].to_numpy()[rr], np.arange(len(rr)), -np.ones(len(rr))),
                ],
                "<=",
                0.0,
                elastic=False,
            )
