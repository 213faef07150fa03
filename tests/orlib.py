"""OR-Library reference instances → netopt cases (for the reference tests).

Files live in ``tests/data/orlib/`` (provenance and citations in its ``SOURCES.md``;
layouts in ``cap/FORMAT.md`` and ``pmed/FORMAT.md``).  Every case is built through
:func:`netopt.frames.make_case` with explicit lanes only, so the netopt model is the
textbook facility-location model on exactly the published data:

- cap (Beasley 1988): warehouses → candidate DCs (fixed cost, capacity); one plant
  with unlimited capacity and cost 0 ships to every DC at cost 0; DC→customer lanes
  cost ``c_ij / d_j`` per unit, because ``c_ij`` is the cost of serving all of j's
  demand d_j from i.  Split demand is allowed, as in capopt.
- pmed (Beasley 1985): every vertex is a customer (demand 1) and a candidate DC
  (fixed cost 0, no capacity limit); DC→customer cost = shortest-path length over the
  file's graph, repeated edges resolved "last edge wins" (pmedinfo); exactly p open.

All lanes have transit 0 days and products have unit value 0 and weight 0, so pipeline
inventory, CO2 and carbon cost are 0 and the objective is fixed cost + allocation cost.
"""

from __future__ import annotations

from pathlib import Path

import networkx as nx
import numpy as np

from netopt.data.case import Case
from netopt.data.frames import make_case

DATA = Path(__file__).parent / "data" / "orlib"
CAP_NAMES = [
    "cap41",
    "cap42",
    "cap43",
    "cap44",
    "cap51",
    "cap61",
    "cap62",
    "cap63",
    "cap64",
    "cap71",
    "cap72",
    "cap73",
    "cap74",
    "cap101",
    "cap102",
    "cap103",
    "cap104",
]
PMED_NAMES = [f"pmed{i}" for i in range(1, 11)]

_PRODUCT = "unit"
_MODE = "given"
_PLANT = "PLANT"


def read_cap(path: Path) -> dict:
    """Parse an OR-Library capNN file (one whitespace token stream, see cap/FORMAT.md).

    Returns:
        dict with m, n, capacity (m,), fixed_cost (m,), demand (n,), and cost (m, n)
        where cost[i, j] is the cost of serving all of customer j's demand from
        warehouse i (currency).
    """
    tok = Path(path).read_text().split()
    m, n = int(tok[0]), int(tok[1])
    k = 2
    capacity = np.empty(m)
    fixed = np.empty(m)
    for i in range(m):
        capacity[i], fixed[i] = float(tok[k]), float(tok[k + 1])
        k += 2
    demand = np.empty(n)
    cost = np.empty((m, n))
    for j in range(n):
        demand[j] = float(tok[k])
        cost[:, j] = [float(x) for x in tok[k + 1 : k + 1 + m]]
        k += 1 + m
    if k != len(tok):
        raise ValueError(f"{path}: {len(tok) - k} tokens left after {m} warehouses and {n} customers")
    return {"m": m, "n": n, "capacity": capacity, "fixed_cost": fixed, "demand": demand, "cost": cost}


def read_capopt(path: Path = DATA / "cap" / "capopt.txt") -> dict[str, float]:
    """Published optimal values of capopt.txt: name → value (the four-line capa/b/c rows are skipped)."""
    out = {}
    for line in Path(path).read_text().splitlines()[1:]:
        parts = line.split()
        if len(parts) == 2 and parts[0].startswith("cap"):
            out[parts[0]] = float(parts[1])
    return out


def cap_case(path: Path, name: str | None = None) -> Case:
    """The capacitated warehouse location instance of ``path`` as a netopt case (split demand)."""
    d = read_cap(path)
    m, n = d["m"], d["n"]
    wh = [f"W{i + 1}" for i in range(m)]
    cu = [f"C{j + 1}" for j in range(n)]
    lanes = [
        {
            "origin": _PLANT,
            "destination": w,
            "mode": _MODE,
            "cost_per_unit": 0.0,
            "transit_days": 0.0,
            "distance_km": 0.0,
        }
        for w in wh
    ]
    for j in range(n):
        for i in range(m):
            lanes.append(
                {
                    "origin": wh[i],
                    "destination": cu[j],
                    "mode": _MODE,
                    "cost_per_unit": d["cost"][i, j] / d["demand"][j],
                    "transit_days": 0.0,
                    "distance_km": 0.0,
                }
            )
    tables = {
        "products": [{"product": _PRODUCT, "unit_weight_kg": 0.0, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": _PLANT, "product": _PRODUCT, "lat": 0.0, "lon": 0.0, "unit_cost": 0.0}],
        "dcs": [
            {
                "dc": w,
                "lat": 0.0,
                "lon": 0.0,
                "fixed_cost": float(d["fixed_cost"][i]),
                "capacity": float(d["capacity"][i]),
            }
            for i, w in enumerate(wh)
        ],
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0} for c in cu],
        "demand": [{"customer": c, "product": _PRODUCT, "quantity": float(d["demand"][j])} for j, c in enumerate(cu)],
        "modes": [{"mode": _MODE, "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False}],
        "lanes": lanes,
    }
    settings = {"inventory": {"holding_rate": 0.0, "safety_stock": False}}
    return make_case(tables, settings, name=name or Path(path).stem)


def read_pmed(path: Path) -> tuple[int, int, list[tuple[int, int, int]]]:
    """Parse an OR-Library pmedN file: (n vertices, p medians, edges (i, j, cost) 1-based, in file order)."""
    tok = [int(x) for x in Path(path).read_text().split()]
    n, e, p = tok[:3]
    edges = [tuple(tok[3 + 3 * k : 6 + 3 * k]) for k in range(e)]
    if 3 + 3 * e != len(tok):
        raise ValueError(f"{path}: expected {e} edges, found {(len(tok) - 3) / 3}")
    return n, p, edges


def read_pmedopt(path: Path = DATA / "pmed" / "pmedopt.txt") -> dict[str, int]:
    """Published optimal values of pmedopt.txt: name → value."""
    out = {}
    for line in Path(path).read_text().splitlines()[1:]:
        parts = line.split()
        if len(parts) == 2:
            out[parts[0]] = int(parts[1])
    return out


def pmed_distances(n: int, edges: list[tuple[int, int, int]]) -> np.ndarray:
    """All-pairs shortest-path lengths (n, n) with networkx; a repeated edge keeps its LAST cost (pmedinfo)."""
    g = nx.Graph()
    g.add_nodes_from(range(1, n + 1))
    for i, j, c in edges:
        g.add_edge(i, j, weight=c)  # re-adding an edge overwrites its weight: last wins
    dist = nx.floyd_warshall_numpy(g, nodelist=list(range(1, n + 1)), weight="weight")
    if not np.isfinite(dist).all():
        raise ValueError("graph is not connected")
    return dist


def pmed_case(path: Path, name: str | None = None) -> tuple[Case, int]:
    """The p-median instance of ``path`` as a netopt case; returns (case, p)."""
    n, p, edges = read_pmed(path)
    dist = pmed_distances(n, edges)
    dcs = [f"D{i + 1}" for i in range(n)]
    cu = [f"V{j + 1}" for j in range(n)]
    lanes = [
        {
            "origin": _PLANT,
            "destination": d,
            "mode": _MODE,
            "cost_per_unit": 0.0,
            "transit_days": 0.0,
            "distance_km": 0.0,
        }
        for d in dcs
    ]
    for i in range(n):
        for j in range(n):
            lanes.append(
                {
                    "origin": dcs[i],
                    "destination": cu[j],
                    "mode": _MODE,
                    "cost_per_unit": float(dist[i, j]),
                    "transit_days": 0.0,
                    "distance_km": 0.0,
                }
            )
    tables = {
        "products": [{"product": _PRODUCT, "unit_weight_kg": 0.0, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": _PLANT, "product": _PRODUCT, "lat": 0.0, "lon": 0.0, "unit_cost": 0.0}],
        "dcs": [{"dc": d, "lat": 0.0, "lon": 0.0, "fixed_cost": 0.0} for d in dcs],
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0} for c in cu],
        "demand": [{"customer": c, "product": _PRODUCT, "quantity": 1.0} for c in cu],
        "modes": [{"mode": _MODE, "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False}],
        "lanes": lanes,
    }
    settings = {
        "inventory": {"holding_rate": 0.0, "safety_stock": False},
        "policy": {"min_open_dcs": p, "max_open_dcs": p},
    }
    return make_case(tables, settings, name=name or Path(path).stem), p
