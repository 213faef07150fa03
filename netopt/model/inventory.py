"""Inventory: pipeline (in-transit) stock holding cost.

By Little's law the units in transit on an arc equal flow × transit time, so the
annual holding cost is flow × unit value × holding rate × transit days / 365.
Cost: ``pipeline_inventory`` (currency/yr).
"""

from __future__ import annotations

import numpy as np

from netopt.model.core import Builder, Term


def add(b: Builder) -> None:
    """Inventory in transit: holding cost of pipeline stock (Little's law: units in transit = flow × transit time).

        C[pipeline_inventory] = Σ_{a ∈ A} c^pipe_a x_a,   c^pipe_a = v_p η_p t_a / 365

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | v_p | value of one unit of the arc's product | currency/unit | ``products.unit_value`` |
    | η_p | annual carrying rate | share of value/yr | ``products.holding_rate`` (blank = ``inventory.holding_rate``) |
    | t_a | transit time of the arc, border days δ_a included (``netopt.network.borders``) | days | arc column ``transit_days`` |
    | c^pipe_a | pipeline holding cost per unit shipped | currency/unit | arc column ``pipeline_per_unit`` |
    """
    arcs = b.net.arcs
    b.add_cost("pipeline_inventory", Term("flow", np.arange(len(arcs)), arcs["pipeline_per_unit"].to_numpy(float)))
