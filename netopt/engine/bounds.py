"""Lower bounds from independent parts of a plan, folded into a solver's outcome.

A plan whose parts are linked by a few rows (the periods of a phasing, the demand scenarios of a two-stage
plan) is relaxed by dropping those rows: each part becomes its own problem, solved on its own with a
lower bound LB_i, and the plan's optimum is at least their weighted sum (or their maximum, for a worst
case).  A search that stopped before its own root bound was strong reports its gap against the better of
the two:

    LB = Σ_i w_i LB_i   (weights w_i > 0 of the parts' costs in the plan's objective)
    gap = (objective − max(LB, search bound)) / max(1, |objective|)
"""

from __future__ import annotations

import math

import numpy as np

KEPT, USED, ABOVE = "kept", "used", "above"
"""What :func:`stronger_bound` did with the parts' bound."""


def above_note(parts: str, bound: float) -> str:
    """The sentence for :data:`ABOVE`: ``parts`` names them ("the periods'")."""
    return f"{parts} own bound ({bound:,.2f}) lies above the plan's cost: not used (a defect to report)"


def weighted_bound(bounds: list[float], weights: np.ndarray) -> float:
    """Σ_i w_i LB_i (currency), or −inf when a part has no finite bound."""
    b = np.asarray(bounds, float)
    if len(b) != len(weights) or not len(b) or not np.isfinite(b).all():
        return -math.inf
    return float(np.dot(weights, b))


def stronger_bound(objective: float, bound: float, gap: float, parts_bound: float) -> tuple[float, float, str]:
    """The bound and gap of a plan of cost ``objective`` with ``parts_bound`` folded in, and what happened:
    :data:`KEPT` (the search's own ``bound`` is as strong), :data:`USED` (the parts' bound replaces it) or
    :data:`ABOVE` (the parts' bound lies above the plan's cost: it cannot, a defect; not used)."""
    own = bound if math.isfinite(bound) else -math.inf
    if not (math.isfinite(parts_bound) and parts_bound > own):
        return bound, gap, KEPT
    if parts_bound > objective + 1e-9 * max(1.0, abs(objective)):
        return bound, gap, ABOVE
    new_gap = max(0.0, (objective - parts_bound) / max(1.0, abs(objective)))
    return parts_bound, (min(new_gap, gap) if math.isfinite(gap) else new_gap), USED
