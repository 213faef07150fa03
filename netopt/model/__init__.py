"""The network MIP, one module per modelling concept.

``build_model`` is the recipe: it reads top to bottom as the formulation.  Each module's ``add``
states its rows in plain maths; ``docs/formulation.md`` gathers them on one page
(``python -m netopt.model.formulation`` rewrites it from the docstrings).

Sets and indices:

| symbol | meaning | name in code |
|---|---|---|
| S, F, D, C | suppliers, plants, DCs, customers (one namespace of site codes) | tables ``suppliers``, ``plants``, ``dcs``, ``customers`` |
| p, r | a product; a material (a product of kind material, used by plants) | table ``products`` |
| m | a transport mode | table ``modes`` |
| A, a = (i, j, m, p) | arcs: one flow variable per lane (origin i, destination j), mode and product, dominated modes pruned | ``Network.arcs`` (``netopt.network.arcs``) |
| in(n,p), out(n,p), in(n) | arcs into / out of site n carrying p; into n carrying anything | arc columns ``origin``, ``destination``, ``product`` |
| A_S, A_{→D}, A_C, A_{D→C} | arcs from a supplier, into a DC, into a customer, from a DC to a customer | arc columns ``origin_kind``, ``destination_kind`` |
| O, O(d) | DC opening options (a DC, or one of its sizes); those of DC d | ``Network.options`` |
| Q | demand rows (customer c, product p) with quantity > 0 | ``Network.demand`` |
| W | (plant f, product p) pairs a plant can make | ``Network.make`` |

Units: flows, production and throughput in units/yr, costs in currency/yr.
"""

from __future__ import annotations

import numpy as np

from netopt.model import (
    capacity,
    duties,
    flows,
    inventory,
    openings,
    safety_stock,
    service,
    share_rules,
    sourcing,
    transport,
)
from netopt.model.core import Builder
from netopt.network.arcs import Network

COST_COMPONENTS = (
    "supply",
    "production",
    "dc_fixed",
    "dc_closing",
    "dc_opening",
    "dc_handling",
    "transport",
    "duties",
    "pipeline_inventory",
    "safety_stock",
    "carbon",
    "late_delivery",
    "stock_holding",
    "unmet_penalty",
)
PENALTY_COMPONENTS = ("late_delivery", "unmet_penalty")
"""Components that price a rule not met (late delivery, lost demand); every other one is operating cost."""


def build_model(
    net: Network,
    formulation: str = "tight",
    elastic: bool = False,
    fixed_open: np.ndarray | None = None,
    big_m_factor: float = 1.0,
    extra=None,
    model=None,
    suffix: str = "",
    objective: bool = True,
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
        model, suffix, objective: build into ``model`` (a Pyomo model holding other builds too), its
            component names ending in ``suffix``, without an objective of its own (one period of a
            multi-period model, ``netopt.model.phasing``).
    """
    b = Builder(net=net, elastic=elastic, suffix=suffix)
    if model is not None:
        b.model = model
    openings.add(b, fixed_open=fixed_open)
    flows.add(b)
    capacity.add(b, formulation=formulation, big_m_factor=big_m_factor)
    sourcing.add(b)
    share_rules.add(b)
    service.add(b)
    transport.add(b)
    duties.add(b)
    inventory.add(b)
    safety_stock.add(b)
    if extra is not None:
        extra(b)
    if objective:
        b.finish()
    return b
