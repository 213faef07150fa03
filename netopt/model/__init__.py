"""The network MIP, one module per modelling concept.

``build_model`` is the recipe: it reads top to bottom as the formulation.
"""

from __future__ import annotations

import numpy as np

from netopt.model import capacity, flows, inventory, openings, safety_stock, service, sourcing, transport
from netopt.model.core import Builder
from netopt.network.arcs import Network

COST_COMPONENTS = (
    "supply",
    "production",
    "dc_fixed",
    "dc_closing",
    "dc_handling",
    "transport",
    "pipeline_inventory",
    "safety_stock",
    "carbon",
    "unmet_penalty",
)


def build_model(
    net: Network,
    formulation: str = "tight",
    elastic: bool = False,
    fixed_open: np.ndarray | None = None,
    big_m_factor: float = 1.0,
    extra=None,
) -> Builder:
    """Build the Pyomo model of ``net``.

    Args:
        formulation: "tight" (strong linking inequalities) or "plain" (aggregate
            throughput linking only), for benchmarks.
        elastic: let capacity, sourcing and service rows be violated at a penalty,
            to diagnose an infeasible case.
        fixed_open: 0/1 per opening option to hold the network (re-route only).
        big_m_factor: multiplies the demand-based bound used for unlimited DC capacity
            (a held network raises it so demand can be scaled by bound changes alone).
        extra: optional callable(builder) adding further terms before the objective is made.
    """
    b = Builder(net=net, elastic=elastic)
    openings.add(b, fixed_open=fixed_open)
    flows.add(b)
    capacity.add(b, formulation=formulation, big_m_factor=big_m_factor)
    sourcing.add(b)
    service.add(b)
    transport.add(b)
    inventory.add(b)
    safety_stock.add(b)
    if extra is not None:
        extra(b)
    b.finish()
    return b
