"""One post-solve path: solution values → cost components → result tables → independent verification.

Every solve goes through :func:`extract` — the cold solve, each held (hold-the-network)
re-solve, each frontier point — so a scenario's tables always come from that scenario's
own case (its capacities, demand, costs and rules) and are verified against that case.

A held re-solve runs in the *base's* model with the scenario's changes as bounds; its
values are mapped onto the scenario's own network by key (:func:`align_values`) before
the tables are built, so nothing of the base (a halved capacity, a scaled demand) leaks
into the scenario's tables.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.cost_to_serve import cost_to_serve
from netopt.engine.inventory_report import safety_stock_extra_cost
from netopt.engine.tables import build_tables
from netopt.engine.verify import Verification, verify
from netopt.model import COST_COMPONENTS
from netopt.model.core import Builder
from netopt.network.arcs import Network

# Variable blocks that carry over between two networks of the same case, with the keys that
# identify an element and the Network frame holding those keys.
ALIGNED_BLOCKS = {
    "flow": ("arcs", ["origin", "destination", "mode", "product"]),
    "make": ("make", ["plant", "product"]),
    "open": ("options", ["dc", "size"]),
    "unmet": ("demand", ["customer", "product"]),
}
ALIGN_TOL = 1e-7  # units/yr: a value this small on an element the target lacks is rounding


@dataclass
class Extracted:
    """What one solution becomes: cost components (currency/yr), result tables and their verification."""

    cost: dict[str, float]
    tables: dict[str, pd.DataFrame]
    verification: Verification
    seconds: dict[str, float]  # "results" (values → tables) and "verify"


def cost_components(builder: Builder, values: dict[str, np.ndarray]) -> dict[str, float]:
    """Every cost component of ``builder`` at ``values`` (currency/yr), in :data:`COST_COMPONENTS` order."""
    cost = builder.component_values(values)
    return {k: float(cost.get(k, 0.0)) for k in COST_COMPONENTS} | {
        k: float(v) for k, v in cost.items() if k not in COST_COMPONENTS
    }


def align_values(values: dict[str, np.ndarray], src: Network, dst: Network) -> dict[str, np.ndarray]:
    """Values of the blocks of :data:`ALIGNED_BLOCKS` moved from network ``src`` onto ``dst`` by key.

    Elements of ``dst`` that ``src`` lacks get 0.  A non-zero value on an element that ``dst``
    lacks means the two networks disagree on what may carry flow: that raises, never drops.
    """
    out: dict[str, np.ndarray] = {}
    for block, (frame, keys) in ALIGNED_BLOCKS.items():
        if block not in values:
            continue
        s, d = getattr(src, frame), getattr(dst, frame)
        v = np.asarray(values[block], dtype=float)
        pos = pd.Series(np.arange(len(d)), index=pd.MultiIndex.from_frame(d[keys].astype(str)))
        at = pos.reindex(pd.MultiIndex.from_frame(s[keys].astype(str))).to_numpy()
        missing = np.isnan(at)
        if (np.abs(v[missing]) > ALIGN_TOL).any():
            k = int(np.flatnonzero(missing & (np.abs(v) > ALIGN_TOL))[0])
            where = ", ".join(f"{c} {s[c].iloc[k]}" for c in keys)
            raise ValueError(f"{block} {v[k]:g} on {where}, which the scenario's network does not have")
        moved = np.zeros(len(d))
        np.add.at(moved, at[~missing].astype(int), v[~missing])
        out[block] = moved
    return out


def extract(
    case: Case,
    lanes: pd.DataFrame,
    net: Network,
    builder: Builder,
    values: dict[str, np.ndarray],
    objective: float,
    *,
    solved_on: Network | None = None,
    held_open: dict[str, bool] | None = None,
    extra_cost: Callable[[dict[str, pd.DataFrame]], dict[str, float]] | None = None,
    stock: pd.DataFrame | None = None,
) -> Extracted:
    """Cost components, result tables and verification of one solution.

    Args:
        case, lanes, net: the case the solution answers, its lane table and its network; the
            tables are built from ``net`` and verified against ``case`` and ``lanes``.
        builder, values: the model that was solved and its values (block → array).
        objective: the solver's objective (currency/yr), checked against the recomputed cost.
        solved_on: the network ``builder`` was built on when it differs from ``net`` (a held
            re-solve in the base's model): values are aligned onto ``net`` first.
        held_open: DC decisions that were held (dc → open), checked in verification.
        extra_cost: cost components recomputed from the tables by the caller's own rule
            (default: the safety-stock curve at each DC's throughput).
        stock: stock carried through this period of a case with periods (site, site_kind, product,
            opening, closing, years, holding_cost); its holding cost is the model's ``stock_holding``.
    """
    t0 = time.perf_counter()
    cost = cost_components(builder, values)
    if stock is not None:
        cost["stock_holding"] = float(stock["holding_cost"].sum())
    if solved_on is not None and solved_on is not net:
        values = align_values(values, solved_on, net)
    tables = build_tables(net, values, cost)
    if stock is not None:
        tables["stock"] = stock
    tables["cost_to_serve"] = cost_to_serve(net, tables, cost, case.tables["demand"])
    t1 = time.perf_counter()
    extra = (extra_cost or safety_stock_extra_cost)(tables)
    verification = verify(case, lanes, tables, float(objective), fixed_open=held_open, extra_cost=extra)
    return Extracted(cost, tables, verification, {"results": t1 - t0, "verify": time.perf_counter() - t1})
