"""Duties: import duty on lanes between countries, its own cost component (never folded into freight).

The duty per unit of each arc (ad valorem on the customs value and/or per unit) is computed once per
arc from the sites' countries and the ``duties`` table (:mod:`netopt.network.borders`).
Cost: ``duties`` (currency/yr).
"""

from __future__ import annotations

import numpy as np

from netopt.model.core import Builder, Term


def add(b: Builder) -> None:
    """Duties: import duty on arcs from one country into another, linear in the flow.

        C[duties] = Σ_{a ∈ A} τ_a x_a,    τ_a = ρ_a V_a + σ_a

    τ_a = 0 where the arc stays within one country, a country is not stated or no duties row matches.

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | ρ_a | ad valorem rate of the duties row matching the arc (origin country or region, destination country, product) | share | ``duties.ad_valorem`` |
    | σ_a | per-unit (specific) duty of that row | currency/unit | ``duties.per_unit`` |
    | V_a | customs value of one unit: the supplier's price on supplier arcs, else the product's unit value; plus the arc's freight per unit with ``duties.customs_value_includes_freight`` | currency/unit | arc column ``customs_value`` |
    | τ_a | duty per unit shipped on arc a | currency/unit | arc column ``duty_per_unit`` |
    """
    duty = b.net.arcs["duty_per_unit"].to_numpy(float)
    nz = np.flatnonzero(duty)
    if len(nz):
        b.add_cost("duties", Term("flow", nz, duty[nz]))
