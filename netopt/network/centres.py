"""Demand-weighted centres: the Weiszfeld point on the plane and on the sphere, and weighted p-median
clusters on a distance matrix, polished on the sphere.

Symbols (units in brackets):

| symbol | meaning | unit |
|---|---|---|
| ``p_i`` | demand point i (plane: x, y; sphere: unit vector of lat, lon) | plane units / degrees |
| ``w_i`` | weight of point i (annual units or tonnes of demand) | units/yr or t/yr |
| ``d(x, p)`` | distance: Euclidean on the plane, great-circle ``R·θ`` on the sphere | plane units / km |
| ``R`` | sphere radius (:data:`netopt.network.geo.EARTH_MEAN_RADIUS_KM`) | km |
| ``F(x)`` | ``Σ_i w_i d(x, p_i)``, the weighted distance sum minimised | weight × distance |

**Weiszfeld step** (Weiszfeld 1937): ``x' = Σ_i (w_i / d_i) p_i / Σ_i (w_i / d_i)``.  On the sphere the
step is taken in the tangent plane at ``x`` (points mapped by the logarithm map, the step mapped back by
the exponential map: the Riemannian form of the iteration, which converges for points within an open
hemisphere).  The plain step is undefined when ``x`` is a demand point ``p_j`` (``d_j = 0``): the sums
then leave ``p_j`` out and the step follows Vardi & Zhang (2000), "The multivariate L1-median and
associated data depth", *PNAS* 97(4):1423–1426: with ``η = w_j``, ``R̃ = Σ_{i≠j} w_i (p_i − x)/d_i``,
``r = ‖R̃‖`` and ``T̃`` the step over ``i ≠ j``, ``x' = (1 − η/r)⁺ T̃ + min(1, η/r) x``.  When ``r ≤ η``
the demand point is the optimum (Kuhn's vertex condition) and the iteration stops there; the condition
is tested at the heaviest point before the first step, at any demand point the iteration comes
within the tolerance of, and at the nearest demand point once it has converged (the plain iteration
only creeps towards such an optimum; a point meeting the condition is the exact optimum, F being convex).  It stops
when a step moves less than the tolerance (plane units, or km on the sphere).

**p-median clusters** (weighted): choose ``k`` of the candidate columns of a distance matrix ``D`` so that
``Σ_i w_i min_{j ∈ S} D_ij`` is least: a greedy start (add the column that lowers the sum most, k times),
then the vertex interchange of Teitz & Bart (1968, *Operations Research* 16(5):955–961): the best swap of
a chosen and an unchosen column, taken while it lowers the sum.  Every swap is priced for all
candidates at once from each point's nearest and second-nearest chosen column.  On the sphere the
clusters are then polished by Cooper's alternation (Cooper 1964, *SIAM Review* 6(1):37–53): each
cluster's centre moved to its Weiszfeld point, points re-assigned to the nearest centre, until no
point changes cluster; the sum never rises.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netopt.network.geo import EARTH_MEAN_RADIUS_KM, pairwise_km

DEFAULT_TOLERANCE_KM = 1e-3
"""Default convergence tolerance of the Weiszfeld iteration on the sphere: 1 m [km]."""
MAX_ITERATIONS = 10_000
"""Most Weiszfeld iterations before the result is reported as not converged."""


@dataclass
class Centre:
    """A Weiszfeld point: where it is, the weighted distance sum there, and how the iteration ended.

    ``point`` is (x, y) on the plane or (lat, lon) in degrees on the sphere; ``objective`` is
    ``Σ w_i d_i`` (weight × plane units, or weight × km); ``at_demand_point`` is the index of the demand
    point the optimum sits on (Kuhn's condition), or -1.
    """

    point: tuple[float, float]
    objective: float
    iterations: int
    converged: bool
    at_demand_point: int = -1


def _modified_step(vec: np.ndarray, dist: np.ndarray, w: np.ndarray, tiny: float) -> tuple[np.ndarray, int, bool]:
    """One Vardi–Zhang step in tangent (or plane) coordinates centred on the current point.

    ``vec`` (n, dim) are the points relative to the current point, ``dist`` their distances.  Returns
    the step (relative to the current point), the demand point it sits on (-1 if none) and whether
    that point is optimal (r ≤ η)."""
    at = dist <= tiny
    far = ~at
    inv = np.where(far, w / np.where(far, dist, 1.0), 0.0)
    s = inv.sum()
    eta = float(w[at].sum())
    j = int(np.flatnonzero(at)[0]) if at.any() else -1
    if s <= 0.0:  # every point sits here
        return np.zeros(vec.shape[1]), j, True
    r_vec = (inv[:, None] * vec).sum(axis=0)  # R̃ = Σ w_i (p_i − x)/d_i
    r = float(np.linalg.norm(r_vec))
    if eta > 0.0 and r <= eta:
        return np.zeros(vec.shape[1]), j, True
    t_rel = r_vec / s  # T̃ − x
    scale = 1.0 - eta / r if eta > 0.0 else 1.0
    return scale * t_rel, j, False


def weiszfeld_plane(xy, weights, tol: float = 1e-9, max_iter: int = MAX_ITERATIONS) -> Centre:
    """Weighted geometric median of points on the plane (Weiszfeld with the Vardi–Zhang step).

    Args:
        xy: (n, 2) coordinates (any length unit); weights: n non-negative weights.
        tol: stop when a step is shorter than this (coordinate units).
    """
    p = np.asarray(xy, dtype=float).reshape(-1, 2)
    w = np.asarray(weights, dtype=float)
    x = (w[:, None] * p).sum(axis=0) / w.sum()
    tiny = 1e-12 * max(1.0, float(np.abs(p).max()))
    for it in range(1, max_iter + 1):
        vec = p - x
        dist = np.linalg.norm(vec, axis=1)
        j = int(np.argmax(w)) if it == 1 else int(np.argmin(dist))
        if it == 1 or dist[j] < tol:  # the heaviest point first, then the one the iteration closes in on
            vj = p - p[j]
            dj = np.linalg.norm(vj, axis=1)
            if _modified_step(vj, dj, w, tiny)[2]:  # Kuhn's condition holds: p_j is the optimum
                return Centre((float(p[j, 0]), float(p[j, 1])), float((w * dj).sum()), it, True, j)
        step, j, stop = _modified_step(vec, dist, w, tiny)
        if stop:
            return Centre((float(x[0]), float(x[1])), float((w * dist).sum()), it, True, j)
        x = x + step
        if np.linalg.norm(step) < tol:
            d = np.linalg.norm(p - x, axis=1)
            j = int(np.argmin(d))  # converged next to a demand point: the exact optimum if Kuhn's condition holds
            vj = p - p[j]
            dj = np.linalg.norm(vj, axis=1)
            if _modified_step(vj, dj, w, tiny)[2]:
                return Centre((float(p[j, 0]), float(p[j, 1])), float((w * dj).sum()), it, True, j)
            return Centre((float(x[0]), float(x[1])), float((w * d).sum()), it, True)
    d = np.linalg.norm(p - x, axis=1)
    return Centre((float(x[0]), float(x[1])), float((w * d).sum()), max_iter, False)


def unit_vectors(lat, lon) -> np.ndarray:
    """(n, 3) unit vectors of points given in degrees."""
    phi, lam = np.radians(np.asarray(lat, float)), np.radians(np.asarray(lon, float))
    return np.column_stack([np.cos(phi) * np.cos(lam), np.cos(phi) * np.sin(lam), np.sin(phi)])


def lat_lon(v: np.ndarray) -> tuple[float, float]:
    """(lat, lon) in degrees of a 3-vector (normalised first)."""
    v = v / np.linalg.norm(v)
    return float(np.degrees(np.arcsin(np.clip(v[2], -1.0, 1.0)))), float(np.degrees(np.arctan2(v[1], v[0])))


def _log_map(x: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Tangent vectors at unit vector ``x`` pointing to each row of ``p``, of length the angle [rad]."""
    cos = np.clip(p @ x, -1.0, 1.0)
    perp = p - cos[:, None] * x[None, :]
    sin = np.linalg.norm(perp, axis=1)
    theta = np.arctan2(sin, cos)
    scale = np.where(sin > 0.0, theta / np.where(sin > 0.0, sin, 1.0), 0.0)
    return perp * scale[:, None], theta


def _exp_map(x: np.ndarray, v: np.ndarray) -> np.ndarray:
    n = float(np.linalg.norm(v))
    if n == 0.0:
        return x
    y = np.cos(n) * x + np.sin(n) * (v / n)
    return y / np.linalg.norm(y)


def weiszfeld_sphere(
    lat,
    lon,
    weights,
    tol_km: float = DEFAULT_TOLERANCE_KM,
    max_iter: int = MAX_ITERATIONS,
    radius_km: float = EARTH_MEAN_RADIUS_KM,
) -> Centre:
    """The point minimising ``Σ w_i · great-circle km to p_i`` (Weiszfeld in the tangent plane, Vardi–Zhang
    step at a demand point).  Starts from the normalised weighted mean of the unit vectors (the classic
    centre of gravity, projected onto the sphere).

    Args:
        lat, lon: demand points, degrees; weights: non-negative, same length.
        tol_km: stop when a step moves the point less than this [km].
    """
    p = unit_vectors(lat, lon)
    w = np.asarray(weights, dtype=float)
    x = (w[:, None] * p).sum(axis=0)
    x = x / np.linalg.norm(x) if np.linalg.norm(x) > 0 else p[int(np.argmax(w))]
    tiny = 1e-12
    for it in range(1, max_iter + 1):
        vec, theta = _log_map(x, p)
        j = int(np.argmax(w)) if it == 1 else int(np.argmin(theta))
        if it == 1 or theta[j] * radius_km < tol_km:  # the heaviest point first, then the nearest one
            vj, tj = _log_map(p[j], p)
            if _modified_step(vj, tj, w, tiny)[2]:  # Kuhn's condition holds: p_j is the optimum
                return Centre(lat_lon(p[j]), float((w * tj).sum() * radius_km), it, True, j)
        step, j, stop = _modified_step(vec, theta, w, tiny)
        if stop:
            return Centre(lat_lon(x), float((w * theta).sum() * radius_km), it, True, j)
        x = _exp_map(x, step)
        if float(np.linalg.norm(step)) * radius_km < tol_km:
            vec, theta = _log_map(x, p)
            j = int(np.argmin(theta))  # converged next to a demand point: the exact optimum if Kuhn's condition holds
            vj, tj = _log_map(p[j], p)
            if _modified_step(vj, tj, w, tiny)[2]:
                return Centre(lat_lon(p[j]), float((w * tj).sum() * radius_km), it, True, j)
            d = pairwise_km(lat, lon, *lat_lon(x), radius_km=radius_km)[:, 0]
            return Centre(lat_lon(x), float((w * d).sum()), it, True)
    d = pairwise_km(lat, lon, *lat_lon(x), radius_km=radius_km)[:, 0]
    return Centre(lat_lon(x), float((w * d).sum()), max_iter, False)


# ----------------------------------------------------------------------------------------- p-median


def _nearest_two(dist: np.ndarray, chosen: list[int]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    sub = dist[:, chosen]
    order = np.argsort(sub, axis=1, kind="stable")
    rows = np.arange(len(dist))
    d1 = sub[rows, order[:, 0]]
    d2 = sub[rows, order[:, 1]] if len(chosen) > 1 else np.full(len(dist), np.inf)
    return np.asarray(chosen)[order[:, 0]], d1, d2


def p_median(dist, weights, k: int) -> tuple[list[int], float]:
    """Weighted p-median of a distance matrix: greedy start, then Teitz–Bart best-swap interchange.

    Args:
        dist: (n points, m candidates) distances; weights: n non-negative weights; k: medians (1 ≤ k ≤ m).

    Returns:
        (the chosen candidate columns, sorted; Σ_i w_i min_{j chosen} dist_ij).
    """
    d = np.asarray(dist, dtype=float)
    w = np.asarray(weights, dtype=float)
    n, m = d.shape
    if not 1 <= k <= m:
        raise ValueError(f"k must be from 1 to the {m} candidates, not {k}")
    chosen: list[int] = []
    best = np.full(n, np.inf)
    for _ in range(k):  # greedy: add the candidate that lowers the weighted sum most
        cost = (w[:, None] * np.minimum(best[:, None], d)).sum(axis=0)
        cost[chosen] = np.inf
        j = int(np.argmin(cost))
        chosen.append(j)
        best = np.minimum(best, d[:, j])
    total = float((w * best).sum())
    while k < m:
        near, d1, d2 = _nearest_two(d, chosen)
        best_gain, move = 1e-9 * max(total, 1.0), None
        for s in chosen:  # price swapping s out against every candidate coming in, all at once
            keep = np.where(near == s, d2, d1)
            cost = (w[:, None] * np.minimum(keep[:, None], d)).sum(axis=0)
            cost[chosen] = np.inf
            j = int(np.argmin(cost))
            if total - cost[j] > best_gain:
                best_gain, move = total - cost[j], (s, j, float(cost[j]))
        if move is None:
            break
        s, j, total = move
        chosen[chosen.index(s)] = j
    return sorted(chosen), total


@dataclass
class Clusters:
    """k weighted clusters on the sphere: centres (lat, lon in degrees), each point's cluster, the
    weighted km sum, and the Cooper alternations taken after the p-median start."""

    lat: np.ndarray
    lon: np.ndarray
    label: np.ndarray
    objective: float
    alternations: int
    converged: bool


def sphere_clusters(lat, lon, weights, k: int, tol_km: float = DEFAULT_TOLERANCE_KM, max_rounds: int = 100) -> Clusters:
    """Weighted k clusters of points on the sphere by great-circle km: p-median of the points among
    themselves, then Cooper's alternation (Weiszfeld centre per cluster, nearest-centre assignment)."""
    la, lo = np.asarray(lat, float), np.asarray(lon, float)
    w = np.asarray(weights, float)
    dist = pairwise_km(la, lo, la, lo)
    cols, _ = p_median(dist, w, k)
    c_lat, c_lon = la[cols].copy(), lo[cols].copy()
    label = np.argmin(pairwise_km(la, lo, c_lat, c_lon), axis=1)
    converged = False
    rounds = 0
    while rounds < max_rounds:
        rounds += 1
        for c in range(k):
            members = label == c
            if members.any() and w[members].sum() > 0:
                cen = weiszfeld_sphere(la[members], lo[members], w[members], tol_km=tol_km)
                c_lat[c], c_lon[c] = cen.point
        new = np.argmin(pairwise_km(la, lo, c_lat, c_lon), axis=1)
        if np.array_equal(new, label):
            converged = True
            break
        label = new
    d = pairwise_km(la, lo, c_lat, c_lon)[np.arange(len(la)), label]
    return Clusters(c_lat, c_lon, label, float((w * d).sum()), rounds, converged)
