"""Inventory: pipeline (in-transit) stock holding cost.

By Little's law the units in transit on an arc equal flow × transit time, so the
annual holding cost is flow × unit value × holding rate × transit days / 365.
Cost: ``pipeline_inventory`` (currency/yr).
"""

from __future__ import annotations

import numpy as np

from netopt.model.core import Builder, Term


def add(b: Builder) -> None:
    arcs = b.net.arcs
    b.add_cost("pipeline_inventory", Term("flow", np.arange(len(arcs)), arcs["pipeline_per_unit"].to_numpy(float)))
