"""Great-circle distances and shortest paths (netopt.geo) checked against outside references."""

import math

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from geographiclib.constants import Constants
from geographiclib.geodesic import Geodesic
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import dijkstra

from netopt.network.geo import EARTH_MEAN_RADIUS_KM, haversine_km, pairwise_km, shortest_path_km

# Real city coordinates (degrees), used only as test points.
CITIES = {
    "london": (51.5074, -0.1278),
    "paris": (48.8566, 2.3522),
    "new_york": (40.7128, -74.0060),
    "los_angeles": (34.0522, -118.2437),
    "sydney": (-33.8688, 151.2093),
    "tokyo": (35.6762, 139.6503),
    "singapore": (1.3521, 103.8198),
    "rotterdam": (51.9244, 4.4777),
    "quito": (-0.1807, -78.4678),
    "helsinki": (60.1699, 24.9384),
    "cape_town": (-33.9249, 18.4241),
    "anchorage": (61.2181, -149.9003),
}
PAIRS = [
    ("london", "paris"),
    ("new_york", "los_angeles"),
    ("sydney", "tokyo"),
    ("singapore", "rotterdam"),
    ("quito", "helsinki"),
    ("cape_town", "anchorage"),
    ("london", "cape_town"),
]


def test_mean_radius_is_iugg_r1_of_wgs84():
    # IUGG mean radius R1 = (2a + b)/3 (Moritz 1980, Geodetic Reference System 1980), with the WGS84
    # a and f taken from geographiclib's constants (b = a(1 - f)).
    a = Constants.WGS84_a / 1000.0
    b = a * (1.0 - Constants.WGS84_f)
    assert pytest.approx((2 * a + b) / 3, abs=5e-5) == EARTH_MEAN_RADIUS_KM


@pytest.mark.parametrize("p, q", PAIRS)
def test_haversine_within_half_percent_of_wgs84_geodesic(p, q):
    # Reference: geographiclib Geodesic.WGS84.Inverse, the ellipsoidal geodesic of Karney (2013),
    # "Algorithms for geodesics", J. Geodesy 87:43-55.  A sphere of the mean radius stays within
    # about 0.5 % of the ellipsoid (common practice, no source; the bound is what this test checks).
    (lat1, lon1), (lat2, lon2) = CITIES[p], CITIES[q]
    ref_km = Geodesic.WGS84.Inverse(lat1, lon1, lat2, lon2)["s12"] / 1000.0
    assert float(haversine_km(lat1, lon1, lat2, lon2)) == pytest.approx(ref_km, rel=5e-3)


def test_wellington_salamanca_published_geodesic():
    # GeographicLib documentation example: Wellington (-41.32, 174.81) -> Salamanca (40.96, -5.50) on WGS84
    # is 19,959,679.267 m (see /work/shared/notes/trade-facts.md §3); the sphere is within 0.5 %.
    assert float(haversine_km(-41.32, 174.81, 40.96, -5.50)) == pytest.approx(19959.679267, rel=5e-3)


def test_geopy_readme_great_circle_newport_cleveland():
    # geopy README: great_circle(Newport RI (41.49008, -71.312796), Cleveland OH (41.499498, -81.695391))
    # = 536.997990696 miles, computed by geopy on a sphere of R = 6371.009 km; 1 mi = 1.609344 km exactly
    # (international mile, 1959).
    km = float(haversine_km(41.49008, -71.312796, 41.499498, -81.695391, radius_km=6371.009))
    assert km / 1.609344 == pytest.approx(536.997990696, rel=1e-9)


latitudes = st.floats(min_value=-90, max_value=90, allow_nan=False)
longitudes = st.floats(min_value=-180, max_value=180, allow_nan=False)


@settings(max_examples=300, deadline=None, derandomize=True)
@given(latitudes, longitudes, latitudes, longitudes)
def test_haversine_equals_geodesic_on_a_sphere(lat1, lon1, lat2, lon2):
    # On a sphere (flattening 0) geographiclib's geodesic (Karney 2013) is the great circle itself.
    sphere = Geodesic(EARTH_MEAN_RADIUS_KM * 1000.0, 0.0)
    ref_km = sphere.Inverse(lat1, lon1, lat2, lon2)["s12"] / 1000.0
    assert float(haversine_km(lat1, lon1, lat2, lon2)) == pytest.approx(ref_km, rel=1e-9, abs=2e-4)


def test_meridian_degree_is_radius_times_radian():
    # Arc length on a sphere along a meridian = R · Δφ (radians): one degree = 6371.0088 · π/180 km.
    assert float(haversine_km(0, 0, 1, 0)) == pytest.approx(6371.0088 * math.pi / 180, rel=1e-12)
    assert float(haversine_km(10, 20, 10, 20)) == 0.0


def test_haversine_broadcasts_and_pairwise_shape():
    names = list(CITIES)
    lat = np.array([CITIES[n][0] for n in names])
    lon = np.array([CITIES[n][1] for n in names])
    m = pairwise_km(lat[:5], lon[:5], lat, lon)
    assert m.shape == (5, len(names))
    sphere = Geodesic(EARTH_MEAN_RADIUS_KM * 1000.0, 0.0)
    for i in range(5):
        for j in range(len(names)):
            ref = sphere.Inverse(lat[i], lon[i], lat[j], lon[j])["s12"] / 1000.0
            assert m[i, j] == pytest.approx(ref, rel=1e-9, abs=1e-9)
    # broadcasting a scalar point against an array
    row = haversine_km(lat[0], lon[0], lat, lon)
    assert np.allclose(row, m[0], rtol=1e-12)
    # symmetric
    assert np.allclose(pairwise_km(lat, lon, lat, lon), pairwise_km(lat, lon, lat, lon).T, rtol=1e-12)


# ----------------------------------------------------------------------------- shortest paths


def _edges(rows):
    return pd.DataFrame(rows, columns=["from_node", "to_node", "km", "mode"])


def test_shortest_path_hand_graph():
    # A-B 4 (and a parallel A-B 6, ignored), B-C 3, A-C 10, C-D 2; E-F 1 is a separate component.
    # By hand: A→C = min(10, 4+3) = 7; A→D = 7+2 = 9; B→D = 3+2 = 5; D→A = 9 (undirected);
    # A→F unreachable (NaN); X is not in the graph (NaN); A→A = 0.
    e = _edges(
        [
            ("A", "B", 4, ""),
            ("A", "B", 6, ""),
            ("B", "C", 3, ""),
            ("A", "C", 10, ""),
            ("C", "D", 2, ""),
            ("E", "F", 1, ""),
        ]
    )
    sp = shortest_path_km(e, ["A", "B", "D", "X"], ["A", "C", "D", "F"])
    assert sp.loc["A", "C"] == 7
    assert sp.loc["A", "D"] == 9
    assert sp.loc["B", "D"] == 5
    assert sp.loc["D", "A"] == 9
    assert sp.loc["A", "A"] == 0
    assert np.isnan(sp.loc["A", "F"])
    assert sp.loc["X"].isna().all()


def test_shortest_path_mode_filter():
    # A-B 4 is rail only; the blank-mode edges A-C 5, C-B 5 serve every mode.
    # road: A→B = 5 + 5 = 10; rail: A→B = 4; mode None uses every edge: 4.
    e = _edges([("A", "B", 4, "rail"), ("A", "C", 5, ""), ("C", "B", 5, "")])
    assert shortest_path_km(e, ["A"], ["B"], mode="road").loc["A", "B"] == 10
    assert shortest_path_km(e, ["A"], ["B"], mode="rail").loc["A", "B"] == 4
    assert shortest_path_km(e, ["A"], ["B"]).loc["A", "B"] == 4


def test_shortest_path_zero_km_edge_and_self_loop():
    # A-B 0 km (a junction at the site itself) must count as an edge, not as "no edge"; C-C is a
    # self-loop that only names the node.  By hand: A→C = 0 + 2 = 2; C→C = 0; B→A = 0.
    # Reference for the same graph: networkx.dijkstra_path_length.
    rows = [("A", "B", 0.0, ""), ("B", "C", 2.0, ""), ("C", "C", 5.0, "")]
    sp = shortest_path_km(_edges(rows), ["A", "B", "C"], ["A", "C"])
    assert sp.loc["A", "C"] == 2 and sp.loc["B", "A"] == 0 and sp.loc["C", "C"] == 0
    g = nx.Graph()
    g.add_weighted_edges_from([(a, b, km) for a, b, km, _ in rows if a != b], weight="km")
    for s in ("A", "B", "C"):
        for t in ("A", "C"):
            assert sp.loc[s, t] == nx.dijkstra_path_length(g, s, t, weight="km")


def test_shortest_path_matches_networkx_and_scipy_on_random_graph():
    # References: networkx.dijkstra_path_length on a MultiGraph holding every edge, and scipy's
    # independent csgraph.dijkstra on the symmetric matrix of shortest parallel edges.
    rng = np.random.default_rng(20240611)
    n = 60
    g = nx.gnm_random_graph(n, 150, seed=7)
    rows = [(f"n{u}", f"n{v}", float(rng.uniform(1, 100)), "") for u, v in g.edges()]
    # parallel edges, some shorter and some longer than the first
    for u, v in list(g.edges())[:40]:
        rows.append((f"n{v}", f"n{u}", float(rng.uniform(1, 100)), ""))
    # a separate component, unreachable from the rest
    rows += [("n100", "n101", 3.0, ""), ("n101", "n102", 4.0, "")]
    e = _edges(rows)
    nodes = sorted({r[0] for r in rows} | {r[1] for r in rows}, key=lambda s: int(s[1:]))
    sources, targets = nodes[::3], nodes[1::2]
    sp = shortest_path_km(e, sources, targets)

    mg = nx.MultiGraph()
    mg.add_weighted_edges_from([(a, b, km) for a, b, km, _ in rows], weight="km")
    idx = {name: i for i, name in enumerate(nodes)}
    w = np.full((len(nodes), len(nodes)), np.inf)
    for a, b, km, _ in rows:
        i, j = idx[a], idx[b]
        w[i, j] = w[j, i] = min(w[i, j], km)
    w[np.isinf(w)] = 0.0  # csgraph: 0 = no edge
    ref = dijkstra(csr_matrix(w), directed=False, indices=[idx[s] for s in sources])

    reachable = unreachable = 0
    for i, s in enumerate(sources):
        for t in targets:
            got = sp.loc[s, t]
            if nx.has_path(mg, s, t):
                reachable += 1
                assert got == pytest.approx(nx.dijkstra_path_length(mg, s, t, weight="km"), rel=1e-12)
                assert got == pytest.approx(ref[i, idx[t]], rel=1e-12)
            else:
                unreachable += 1
                assert np.isnan(got) and np.isinf(ref[i, idx[t]])
    assert reachable > 100 and unreachable > 0
