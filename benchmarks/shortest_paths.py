"""Road-graph shortest paths: networkx (one Dijkstra per source) against scipy.sparse.csgraph.dijkstra.

Builds a planar-ish road graph (random points in a 1000 × 1000 km box, Delaunay triangulation,
edge km = straight distance × U(1.0, 1.3), 15 % of the triangulation's edges dropped so that
paths bend, plus 5 % parallel edges), picks sources and targets among its nodes and times:

- ``networkx``: the former netopt implementation (``networkx.Graph`` with the shortest parallel
  edge, ``single_source_dijkstra_path_length`` per source), kept here as the reference;
- ``csgraph``: :func:`netopt.network.geo.shortest_path_km` (``scipy.sparse.csgraph.dijkstra``
  with ``indices=`` the sources).

Each time is the best of ``--repeats`` runs and includes building the graph from the edge table.
The two results are compared element by element (largest relative difference, and whether they
are bit-identical).

    .venv/bin/python benchmarks/shortest_paths.py [--nodes 60,300,2000,5000] [--sources 100] [--targets 400]
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable, Iterable

import networkx as nx
import numpy as np
import pandas as pd
from scipy.spatial import Delaunay

from netopt.network.geo import shortest_path_km


def road_edges(n: int, seed: int = 0) -> pd.DataFrame:
    """A ``road_edges`` table of a planar-ish graph with ``n`` nodes (km, blank mode)."""
    rng = np.random.default_rng(seed)
    xy = rng.uniform(0.0, 1000.0, size=(n, 2))
    tri = Delaunay(xy)
    pairs = set()
    for a, b, c in tri.simplices:
        for u, v in ((a, b), (b, c), (a, c)):
            pairs.add((min(u, v), max(u, v)))
    edges = np.array(sorted(pairs))
    edges = edges[rng.random(len(edges)) >= 0.15]
    extra = edges[rng.random(len(edges)) < 0.05]
    edges = np.vstack([edges, extra])
    km = np.hypot(*(xy[edges[:, 0]] - xy[edges[:, 1]]).T) * rng.uniform(1.0, 1.3, len(edges))
    names = np.array([f"J{i}" for i in range(n)])
    return pd.DataFrame({"from_node": names[edges[:, 0]], "to_node": names[edges[:, 1]], "km": km, "mode": ""})


def networkx_km(edges: pd.DataFrame, sources: Iterable[str], targets: Iterable[str]) -> pd.DataFrame:
    """Reference: the networkx implementation netopt used before (same output layout)."""
    src = list(dict.fromkeys(str(s) for s in sources))
    tgt = list(dict.fromkeys(str(t) for t in targets))
    g = nx.Graph()
    for u, v, km in zip(edges["from_node"].astype(str), edges["to_node"].astype(str), edges["km"].astype(float)):
        if u == v:
            g.add_node(u)
        elif g.has_edge(u, v):
            g[u][v]["km"] = min(g[u][v]["km"], km)
        else:
            g.add_edge(u, v, km=km)
    out = np.full((len(src), len(tgt)), np.nan)
    col = {t: j for j, t in enumerate(tgt)}
    for i, s in enumerate(src):
        if s in g:
            for node, km in nx.single_source_dijkstra_path_length(g, s, weight="km").items():
                j = col.get(node)
                if j is not None:
                    out[i, j] = km
    return pd.DataFrame(out, index=pd.Index(src, name="source"), columns=pd.Index(tgt, name="target"))


def best_time(fn: Callable[[], pd.DataFrame], repeats: int) -> tuple[float, pd.DataFrame]:
    best, result = float("inf"), pd.DataFrame()
    for _ in range(repeats):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
    return best, result


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--nodes", default="60,300,2000,5000", help="comma-separated node counts")
    ap.add_argument("--sources", type=int, default=100)
    ap.add_argument("--targets", type=int, default=400)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args()

    print("| nodes | edges | sources | targets | networkx s | csgraph s | speed-up | max rel diff | identical |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|---|")
    for n in (int(x) for x in args.nodes.split(",")):
        edges = road_edges(n, args.seed)
        rng = np.random.default_rng(args.seed + 1)
        names = np.array([f"J{i}" for i in range(n)])
        sources = list(rng.choice(names, min(args.sources, n), replace=False))
        targets = list(rng.choice(names, min(args.targets, n), replace=False))
        t_nx, ref = best_time(lambda e=edges, s=sources, t=targets: networkx_km(e, s, t), args.repeats)
        t_cs, got = best_time(lambda e=edges, s=sources, t=targets: shortest_path_km(e, s, t), args.repeats)
        a, b = ref.to_numpy(), got.to_numpy()
        same_nan = bool((np.isnan(a) == np.isnan(b)).all())
        both = ~np.isnan(a)
        rel = float(np.max(np.abs(a[both] - b[both]) / np.maximum(np.abs(a[both]), 1e-300))) if both.any() else 0.0
        identical = same_nan and bool((a[both] == b[both]).all())
        print(
            f"| {n} | {len(edges)} | {len(sources)} | {len(targets)} | {t_nx:.3f} | {t_cs:.3f} "
            f"| {t_nx / t_cs:.1f}x | {rel:.1e} | {'yes' if identical else 'no'} |"
        )


if __name__ == "__main__":
    main()
