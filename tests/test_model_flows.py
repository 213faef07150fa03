"""The flow part of the model against independent solvers.

(a) With the DC openings held, the model is a min-cost flow problem; its cost must equal
    ``networkx.min_cost_flow_cost`` (network simplex, a reference implementation independent
    of netopt) on the same graph.
(b) On tiny cases the MIP optimum must equal the best of all 2^D opening subsets, each
    priced by its own transportation LP written here from scratch and solved with
    ``scipy.optimize.linprog`` (so neither the formulation nor the enumeration is netopt's).

Cases are seeded random networks with integer costs/quantities; unit value and holding
rate are 0 so pipeline cost is 0, and every lane has one explicit mode.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
from scipy.optimize import linprog

from netopt.api import solve
from netopt.data.frames import make_case

MODE = "truck"
BASE_SETTINGS = {"inventory": {"holding_rate": 0.0, "safety_stock": False}}


def _tables(products, plants, dcs, customers, demand, lanes):
    return {
        "products": [{"product": p, "unit_weight_kg": 0.0, "unit_value": 0.0} for p in products],
        "suppliers": [],
        "plants": plants,
        "dcs": dcs,
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0} for c in customers],
        "demand": demand,
        "modes": [{"mode": MODE, "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False}],
        "lanes": lanes,
    }


def _lane(o, d, cost, cap=None, product=""):
    row = {
        "origin": o,
        "destination": d,
        "mode": MODE,
        "product": product,
        "cost_per_unit": float(cost),
        "transit_days": 0.0,
        "distance_km": 0.0,
    }
    if cap is not None:
        row["capacity"] = float(cap)
    return row


# ----------------------------------------------------------------------------- (a) min-cost flow


def random_single_product(seed: int) -> dict:
    """Plants → DCs → customers (plus some direct plant → customer and DC → DC lanes), integer data."""
    rng = np.random.default_rng(seed)
    n_p, n_d, n_c = int(rng.integers(2, 4)), int(rng.integers(3, 6)), int(rng.integers(6, 11))
    P = [f"P{i}" for i in range(n_p)]
    D = [f"D{i}" for i in range(n_d)]
    C = [f"C{i}" for i in range(n_c)]
    dem = {c: int(rng.integers(10, 100)) for c in C}
    total = sum(dem.values())
    pcap = {p: int(rng.integers(total // n_p + 1, total)) for p in P}
    pcost = {p: int(rng.integers(1, 20)) for p in P}
    dcap = {d: int(rng.integers(total // 3, total)) for d in D}
    hcost = {d: int(rng.integers(0, 5)) for d in D}
    fixed = {d: int(rng.integers(100, 1000)) for d in D}
    pd_lanes = {(p, d): (int(rng.integers(1, 30)), int(rng.integers(total // 4, total))) for p in P for d in D}
    dc_lanes = {
        (d, c): (int(rng.integers(1, 40)), None if rng.random() < 0.5 else int(rng.integers(5, 80)))
        for d in D
        for c in C
        if rng.random() < 0.8
    }
    pc_lanes = {(p, c): (int(rng.integers(30, 80)), None) for p in P for c in C if rng.random() < 0.3}
    dd_lanes = {(a, b): (int(rng.integers(1, 10)), None) for a in D for b in D if a != b and rng.random() < 0.3}
    for c in C:  # every customer reachable from every DC set through a costly direct lane
        pc_lanes.setdefault((P[0], c), (int(rng.integers(60, 90)), None))
    return dict(
        P=P,
        D=D,
        C=C,
        dem=dem,
        pcap=pcap,
        pcost=pcost,
        dcap=dcap,
        hcost=hcost,
        fixed=fixed,
        pd=pd_lanes,
        dc=dc_lanes,
        pc=pc_lanes,
        dd=dd_lanes,
    )


def single_product_case(g: dict):
    plants = [
        {"plant": p, "product": "x", "lat": 0.0, "lon": 0.0, "capacity": g["pcap"][p], "unit_cost": g["pcost"][p]}
        for p in g["P"]
    ]
    dcs = [
        {
            "dc": d,
            "lat": 0.0,
            "lon": 0.0,
            "fixed_cost": g["fixed"][d],
            "capacity": g["dcap"][d],
            "handling_cost": g["hcost"][d],
        }
        for d in g["D"]
    ]
    lanes = [_lane(p, d, c, cap) for (p, d), (c, cap) in g["pd"].items()]
    lanes += [_lane(d, c, cost, cap) for (d, c), (cost, cap) in g["dc"].items()]
    lanes += [_lane(p, c, cost, cap) for (p, c), (cost, cap) in g["pc"].items()]
    lanes += [_lane(a, b, cost, cap) for (a, b), (cost, cap) in g.get("dd", {}).items()]
    demand = [{"customer": c, "product": "x", "quantity": q} for c, q in g["dem"].items()]
    return make_case(_tables(["x"], plants, dcs, g["C"], demand, lanes), BASE_SETTINGS)


def networkx_cost(g: dict, open_dcs: set[str]) -> float | None:
    """Min-cost flow on the same network with networkx (None = infeasible).

    Supersource S supplies all demand; S→plant carries production cost and plant capacity;
    each open DC is split in/out with its throughput capacity (all inbound units, transfers
    included) and handling cost per unit received.
    """
    G = nx.DiGraph()
    total = sum(g["dem"].values())
    G.add_node("S", demand=-total)
    for c, q in g["dem"].items():
        G.add_node(("c", c), demand=q)
    for p in g["P"]:
        G.add_edge("S", ("p", p), capacity=g["pcap"][p], weight=g["pcost"][p])
    for d in open_dcs:
        G.add_edge(("in", d), ("out", d), capacity=g["dcap"][d], weight=g["hcost"][d])
    for (p, d), (cost, cap) in g["pd"].items():
        if d in open_dcs:
            G.add_edge(("p", p), ("in", d), capacity=cap, weight=cost)
    for (d, c), (cost, cap) in g["dc"].items():
        if d in open_dcs:
            G.add_edge(("out", d), ("c", c), weight=cost, **({} if cap is None else {"capacity": cap}))
    for (p, c), (cost, _cap) in g["pc"].items():
        G.add_edge(("p", p), ("c", c), weight=cost)
    for (a, b), (cost, _cap) in g.get("dd", {}).items():  # DC→DC transfer: out of a, into b (handled again)
        if a in open_dcs and b in open_dcs:
            G.add_edge(("out", a), ("in", b), weight=cost)
    try:
        return float(nx.min_cost_flow_cost(G))
    except nx.NetworkXUnfeasible:
        return None


@pytest.mark.parametrize("seed", range(8))
def test_held_network_cost_equals_networkx_min_cost_flow(seed):
    # Reference: networkx.min_cost_flow_cost (network simplex) on the same graph. With the
    # openings held, netopt's production + handling + transport cost must equal it exactly
    # (integer data: the LP optimum is integral, so equality within float round-off).
    g = random_single_product(seed)
    rng = np.random.default_rng(1000 + seed)
    held = {d: bool(rng.random() < 0.7) for d in g["D"]}
    if not any(held.values()):
        held[g["D"][0]] = True
    case = single_product_case(g)
    res = solve(case, hold=held, diagnose=False)
    ref = networkx_cost(g, {d for d, o in held.items() if o})
    if ref is None:
        assert res.status == "infeasible"
        return
    assert res.status == "optimal"
    assert res.verification.passed, res.verification.checks
    cost = res.cost
    flow_cost = cost["production"] + cost["dc_handling"] + cost["transport"]
    assert flow_cost == pytest.approx(ref, rel=1e-9, abs=1e-6)
    # The rest of the objective is the fixed cost of the held DCs, nothing else.
    assert cost["dc_fixed"] == sum(g["fixed"][d] for d, o in held.items() if o)
    assert res.objective == pytest.approx(ref + cost["dc_fixed"], rel=1e-9)
    assert list(res.tables["dcs"].loc[res.tables["dcs"]["open"], "dc"]) == [d for d in g["D"] if held[d]]


def test_held_network_cost_also_detects_infeasibility():
    # networkx raises NetworkXUnfeasible when total capacity is short; netopt must say infeasible.
    # Hand computation: one plant of capacity 50 cannot serve demand 60.
    g = dict(
        P=["P0"],
        D=["D0"],
        C=["C0"],
        dem={"C0": 60},
        pcap={"P0": 50},
        pcost={"P0": 1},
        dcap={"D0": 100},
        hcost={"D0": 0},
        fixed={"D0": 10},
        pd={("P0", "D0"): (1, 100)},
        dc={("D0", "C0"): (1, None)},
        pc={},
    )
    assert networkx_cost(g, {"D0"}) is None
    res = solve(single_product_case(g), hold={"D0": True}, diagnose=False)
    assert res.status == "infeasible"


@pytest.mark.parametrize("seed", range(3))
def test_free_solve_equals_best_networkx_subset_and_hold_round_trip(seed):
    # Enumerate all 2^D opening subsets, price each with networkx min-cost flow + fixed costs;
    # netopt's MIP optimum must be the minimum. Then holding netopt's own openings must
    # reproduce the same cost (Result.held_openings round trip).
    g = random_single_product(50 + seed)
    best = None
    for k in range(len(g["D"]) + 1):
        for sub in itertools.combinations(g["D"], k):
            f = networkx_cost(g, set(sub))
            if f is not None:
                total = f + sum(g["fixed"][d] for d in sub)
                best = total if best is None else min(best, total)
    case = single_product_case(g)
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal"
    assert res.objective == pytest.approx(best, rel=1e-9)
    again = solve(case, hold=res.held_openings())
    assert again.objective == pytest.approx(res.objective, rel=1e-9)


# ----------------------------------------------------------------------------- (b) brute force, 2 products


def random_two_product(seed: int) -> dict:
    """Two products sharing DC throughput and plant→DC lane capacity (not a single-commodity flow)."""
    rng = np.random.default_rng(seed)
    n_p, n_d, n_c = 2, int(rng.integers(3, 7)), int(rng.integers(4, 8))
    K = ["a", "b"]
    P = [f"P{i}" for i in range(n_p)]
    D = [f"D{i}" for i in range(n_d)]
    C = [f"C{i}" for i in range(n_c)]
    dem = {(c, k): float(rng.integers(5, 50)) for c in C for k in K if rng.random() < 0.85}
    tot = sum(dem.values())
    pcap = {(p, k): float(rng.integers(int(tot / 2), int(tot))) for p in P for k in K}
    pcost = {(p, k): float(rng.integers(1, 10)) for p in P for k in K}
    dcap = {d: float(rng.integers(int(tot / 4), int(tot / 1.5))) for d in D}
    hcost = {d: float(rng.integers(0, 4)) for d in D}
    fixed = {d: float(rng.integers(200, 1500)) for d in D}
    pd_l = {(p, d): (float(rng.integers(1, 25)), float(rng.integers(int(tot / 5), int(tot)))) for p in P for d in D}
    dc_l = {(d, c): float(rng.integers(1, 40)) for d in D for c in C}
    pc_l = {(p, c): float(rng.integers(50, 90)) for p in P for c in C if rng.random() < 0.4}
    return dict(
        K=K,
        P=P,
        D=D,
        C=C,
        dem=dem,
        pcap=pcap,
        pcost=pcost,
        dcap=dcap,
        hcost=hcost,
        fixed=fixed,
        pd=pd_l,
        dc=dc_l,
        pc=pc_l,
    )


def two_product_case(g: dict, settings: dict | None = None):
    plants = [
        {"plant": p, "product": k, "lat": 0.0, "lon": 0.0, "capacity": g["pcap"][p, k], "unit_cost": g["pcost"][p, k]}
        for p in g["P"]
        for k in g["K"]
    ]
    dcs = [
        {
            "dc": d,
            "lat": 0.0,
            "lon": 0.0,
            "fixed_cost": g["fixed"][d],
            "capacity": g["dcap"][d],
            "handling_cost": g["hcost"][d],
        }
        for d in g["D"]
    ]
    lanes = [_lane(p, d, c, cap) for (p, d), (c, cap) in g["pd"].items()]
    lanes += [_lane(d, c, cost) for (d, c), cost in g["dc"].items()]
    lanes += [_lane(p, c, cost) for (p, c), cost in g["pc"].items()]
    demand = [{"customer": c, "product": k, "quantity": q} for (c, k), q in g["dem"].items()]
    s = {**BASE_SETTINGS, **(settings or {})}
    return make_case(_tables(g["K"], plants, dcs, g["C"], demand, lanes), s)


def linprog_cost(g: dict, open_dcs: tuple[str, ...]) -> float | None:
    """Transportation LP for one opening subset, written out by hand (None = infeasible).

    Variables: x[p,d,k] plant→DC, y[d,c,k] DC→customer, z[p,c,k] plant→customer (units).
    Rows: demand met; DC balance per product; DC throughput Σ_{p,k} x ≤ cap_d; plant
    capacity per product; plant→DC lane capacity Σ_k x ≤ lane cap.
    """
    K, P, C = g["K"], g["P"], g["C"]
    cols, cost = [], []
    for p in P:
        for d in open_dcs:
            for k in K:
                cols.append(("x", p, d, k))
                cost.append(g["pd"][p, d][0] + g["hcost"][d] + g["pcost"][p, k])
    for d in open_dcs:
        for c in C:
            for k in K:
                if (c, k) in g["dem"]:
                    cols.append(("y", d, c, k))
                    cost.append(g["dc"][d, c])
    for (p, c), lc in g["pc"].items():
        for k in K:
            if (c, k) in g["dem"]:
                cols.append(("z", p, c, k))
                cost.append(lc + g["pcost"][p, k])
    idx = {v: i for i, v in enumerate(cols)}
    n = len(cols)
    A_eq, b_eq, A_ub, b_ub = [], [], [], []
    for (c, k), q in g["dem"].items():
        row = np.zeros(n)
        for v, i in idx.items():
            if v[0] in "yz" and v[2] == c and v[3] == k:
                row[i] = 1
        A_eq.append(row)
        b_eq.append(q)
    for d in open_dcs:
        for k in K:
            row = np.zeros(n)
            for v, i in idx.items():
                if v[0] == "x" and v[2] == d and v[3] == k:
                    row[i] = 1
                if v[0] == "y" and v[1] == d and v[3] == k:
                    row[i] = -1
            A_eq.append(row)
            b_eq.append(0.0)
        row = np.zeros(n)
        for v, i in idx.items():
            if v[0] == "x" and v[2] == d:
                row[i] = 1
        A_ub.append(row)
        b_ub.append(g["dcap"][d])
        for p in P:
            row = np.zeros(n)
            for k in K:
                row[idx["x", p, d, k]] = 1
            A_ub.append(row)
            b_ub.append(g["pd"][p, d][1])
    for p in P:
        for k in K:
            row = np.zeros(n)
            for v, i in idx.items():
                if v[0] in "xz" and v[1] == p and v[3] == k:
                    row[i] = 1
            A_ub.append(row)
            b_ub.append(g["pcap"][p, k])
    r = linprog(
        cost,
        A_ub=np.array(A_ub) if A_ub else None,
        b_ub=b_ub or None,
        A_eq=np.array(A_eq),
        b_eq=b_eq,
        bounds=(0, None),
        method="highs",
    )
    if r.status == 2:
        return None
    assert r.status == 0, r.message
    return float(r.fun) + sum(g["fixed"][d] for d in open_dcs)


@pytest.mark.parametrize("seed", range(6))
def test_mip_optimum_equals_brute_force_over_all_openings(seed):
    # Reference: exhaustive enumeration of every subset of ≤ 6 candidate DCs, each priced by
    # an independent LP (scipy.optimize.linprog). The best of them is the true optimum.
    g = random_two_product(seed)
    assert len(g["D"]) <= 6
    prices = {}
    for k in range(len(g["D"]) + 1):
        for sub in itertools.combinations(g["D"], k):
            v = linprog_cost(g, sub)
            if v is not None:
                prices[sub] = v
    best = min(prices.values())
    case = two_product_case(g)
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal"
    assert res.verification.passed
    assert res.objective == pytest.approx(best, rel=1e-9, abs=1e-6)
    chosen = tuple(d for d in g["D"] if d in set(res.tables["dcs"].loc[res.tables["dcs"]["open"], "dc"]))
    assert prices[chosen] == pytest.approx(best, rel=1e-9, abs=1e-6)
    # The aggregate-linking ("plain") formulation is the same problem: same optimum.
    plain = solve(case, mip_gap=1e-9, formulation="plain")
    assert plain.objective == pytest.approx(best, rel=1e-9, abs=1e-6)


@pytest.mark.parametrize("seed", range(3))
def test_open_count_limits_equal_brute_force_restricted_to_that_count(seed):
    # Same enumeration, restricted to subsets of exactly 2 DCs (min_open_dcs = max_open_dcs = 2).
    g = random_two_product(100 + seed)
    best = min(v for sub in itertools.combinations(g["D"], 2) if (v := linprog_cost(g, sub)) is not None)
    res = solve(two_product_case(g, {"policy": {"min_open_dcs": 2, "max_open_dcs": 2}}), mip_gap=1e-9)
    assert res.status == "optimal"
    assert int(res.tables["dcs"]["open"].sum()) == 2
    assert res.objective == pytest.approx(best, rel=1e-9, abs=1e-6)
