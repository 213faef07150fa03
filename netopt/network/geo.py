"""Distances between sites: great-circle km on a sphere and shortest paths over a road graph."""

from __future__ import annotations

from collections.abc import Iterable

import networkx as nx
import numpy as np
import pandas as pd

# IUGG mean radius R1 = (2a + b)/3 of the WGS84 ellipsoid (Moritz 1980,
# Geodetic Reference System 1980): a = 6378.137 km, b = 6356.752314 km.
EARTH_MEAN_RADIUS_KM = 6371.0088


def haversine_km(lat1, lon1, lat2, lon2, radius_km: float = EARTH_MEAN_RADIUS_KM) -> np.ndarray:
    """Great-circle distance in km between points given in degrees.

    Vectorised: the arguments are numbers or numpy arrays and broadcast against
    each other.  Uses the haversine formula written with ``arctan2``, which stays
    accurate for both nearby and nearly antipodal points.

    Args:
        lat1, lon1: first point(s), degrees (WGS84 latitude, longitude).
        lat2, lon2: second point(s), degrees.
        radius_km: sphere radius, km (default: the mean Earth radius).

    Returns:
        Distance(s) in km, shaped like the broadcast arguments.
    """
    phi1 = np.radians(np.asarray(lat1, dtype=float))
    phi2 = np.radians(np.asarray(lat2, dtype=float))
    dphi = phi2 - phi1
    dlam = np.radians(np.asarray(lon2, dtype=float) - np.asarray(lon1, dtype=float))
    a = np.sin(dphi / 2.0) ** 2 + np.cos(phi1) * np.cos(phi2) * np.sin(dlam / 2.0) ** 2
    a = np.clip(a, 0.0, 1.0)
    return 2.0 * radius_km * np.arctan2(np.sqrt(a), np.sqrt(1.0 - a))


def pairwise_km(lat_a, lon_a, lat_b, lon_b, radius_km: float = EARTH_MEAN_RADIUS_KM) -> np.ndarray:
    """Great-circle km from every point of set A to every point of set B.

    Args:
        lat_a, lon_a: 1-D sequences of length na, degrees.
        lat_b, lon_b: 1-D sequences of length nb, degrees.
        radius_km: sphere radius, km.

    Returns:
        ``(na, nb)`` array of km.
    """
    la = np.asarray(lat_a, dtype=float).reshape(-1, 1)
    oa = np.asarray(lon_a, dtype=float).reshape(-1, 1)
    lb = np.asarray(lat_b, dtype=float).reshape(1, -1)
    ob = np.asarray(lon_b, dtype=float).reshape(1, -1)
    return haversine_km(la, oa, lb, ob, radius_km=radius_km)


def edge_graph(edges_df: pd.DataFrame, mode: str | None = None) -> nx.Graph:
    """Undirected graph (edge attribute ``km``) from ``road_edges`` rows.

    Args:
        edges_df: rows with ``from_node``, ``to_node``, ``km`` and optionally ``mode``.
        mode: keep rows whose mode is blank or equals this mode; ``None`` keeps every row.

    Returns:
        A ``networkx.Graph``; of parallel edges between two nodes the shortest is kept.
    """
    df = edges_df
    if mode is not None and "mode" in df.columns:
        m = df["mode"].fillna("").astype(str).str.strip()
        df = df[(m == "") | (m == mode)]
    g = nx.Graph()
    for u, v, km in zip(df["from_node"].astype(str), df["to_node"].astype(str), df["km"].astype(float)):
        if u == v:
            g.add_node(u)
            continue
        if g.has_edge(u, v):
            if km < g[u][v]["km"]:
                g[u][v]["km"] = km
        else:
            g.add_edge(u, v, km=km)
    return g


def shortest_path_km(
    edges_df: pd.DataFrame, sources: Iterable[str], targets: Iterable[str], mode: str | None = None
) -> pd.DataFrame:
    """Shortest-path km over an undirected edge table, from each source to each target.

    One Dijkstra run per source (networkx).  Parallel edges: the shortest counts.

    Args:
        edges_df: ``road_edges``-like table (``from_node``, ``to_node``, ``km``, ``mode``).
        sources: origin node names.
        targets: destination node names.
        mode: use rows whose mode is blank or equals this; ``None`` = every row.

    Returns:
        DataFrame of km, index = unique sources (given order, name ``source``),
        columns = unique targets (name ``target``); NaN where a node is not in the
        graph or the target cannot be reached.  ``result.loc[s, t]`` is the km.
    """
    src = list(dict.fromkeys(str(s) for s in sources))
    tgt = list(dict.fromkeys(str(t) for t in targets))
    out = np.full((len(src), len(tgt)), np.nan)
    g = edge_graph(edges_df, mode)
    col = {t: j for j, t in enumerate(tgt)}
    for i, s in enumerate(src):
        if s not in g:
            continue
        for node, km in nx.single_source_dijkstra_path_length(g, s, weight="km").items():
            j = col.get(node)
            if j is not None:
                out[i, j] = km
    return pd.DataFrame(out, index=pd.Index(src, name="source"), columns=pd.Index(tgt, name="target"))
