"""Distances between sites: great-circle km on a sphere and shortest paths over a road graph."""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import dijkstra

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


def _mode_rows(edges_df: pd.DataFrame, mode: str | None) -> pd.DataFrame:
    """The ``road_edges`` rows a mode uses: blank mode or this mode; ``None`` keeps every row."""
    if mode is None or "mode" not in edges_df.columns:
        return edges_df
    m = edges_df["mode"].fillna("").astype(str).str.strip()
    return edges_df[((m == "") | (m == mode)).to_numpy()]


def edge_matrix(edges_df: pd.DataFrame, mode: str | None = None) -> tuple[pd.Index, csr_matrix]:
    """Symmetric sparse km matrix from ``road_edges`` rows.

    Args:
        edges_df: rows with ``from_node``, ``to_node``, ``km`` and optionally ``mode``.
        mode: keep rows whose mode is blank or equals this mode; ``None`` keeps every row.

    Returns:
        ``(nodes, matrix)``: node names (row/column order) and an ``(n, n)`` CSR matrix of km,
        entry ``[i, j]`` = ``[j, i]`` = the shortest of the parallel edges between the two nodes.
        A zero-km edge is stored as an explicit zero (an edge to ``scipy.sparse.csgraph``);
        a row from a node to itself only adds the node.
    """
    df = _mode_rows(edges_df, mode)
    u = df["from_node"].astype(str).to_numpy()
    v = df["to_node"].astype(str).to_numpy()
    km = df["km"].astype(float).to_numpy()
    codes, nodes = pd.factorize(np.concatenate([u, v]))
    iu, iv = codes[: len(u)], codes[len(u) :]
    a, b = np.minimum(iu, iv), np.maximum(iu, iv)
    keep = a != b
    a, b, km = a[keep], b[keep], km[keep]
    # shortest parallel edge: sort by (a, b, km) and keep the first of each (a, b)
    order = np.lexsort((km, b, a))
    a, b, km = a[order], b[order], km[order]
    first = np.ones(len(a), dtype=bool)
    first[1:] = (a[1:] != a[:-1]) | (b[1:] != b[:-1])
    a, b, km = a[first], b[first], km[first]
    n = len(nodes)
    rows, cols, data = np.concatenate([a, b]), np.concatenate([b, a]), np.concatenate([km, km])
    # CSR built by hand (not through COO) so that zero-km edges stay stored entries
    order = np.lexsort((cols, rows))
    rows, cols, data = rows[order], cols[order], data[order]
    indptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(rows, minlength=n), out=indptr[1:])
    return pd.Index(nodes), csr_matrix((data, cols, indptr), shape=(n, n))


def shortest_path_km(
    edges_df: pd.DataFrame, sources: Iterable[str], targets: Iterable[str], mode: str | None = None
) -> pd.DataFrame:
    """Shortest-path km over an undirected edge table, from each source to each target.

    Dijkstra from the sources only (``scipy.sparse.csgraph.dijkstra`` with ``indices``).
    Parallel edges: the shortest counts.

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
    nodes, matrix = edge_matrix(edges_df, mode)
    i_src, i_tgt = nodes.get_indexer(src), nodes.get_indexer(tgt)
    rows, cols = np.flatnonzero(i_src >= 0), np.flatnonzero(i_tgt >= 0)
    if len(rows) and len(cols):
        km = dijkstra(matrix, directed=False, indices=i_src[rows])[:, i_tgt[cols]]
        km[np.isinf(km)] = np.nan
        out[np.ix_(rows, cols)] = km
    return pd.DataFrame(out, index=pd.Index(src, name="source"), columns=pd.Index(tgt, name="target"))
