"""Lane generation (netopt.network.lanes): legs, range pruning, road graphs and explicit lanes."""

import math

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

from netopt.data.case import Case, CaseError
from netopt.data.schema import TABLES
from netopt.data.settings_schema import setting_defaults
from netopt.network.lanes import LANE_COLUMNS, build_lanes, lane_summary

R = 6371.0088  # mean Earth radius, km (IUGG R1 of WGS84, Moritz 1980)
DEG_KM = R * math.pi / 180  # one degree along a meridian on that sphere: R·Δφ = 111.19508 km


def make_case(settings=None, **tables):
    """A Case from partial tables: missing columns get the schema default, index = rows 2, 3, ..."""
    out = {}
    for name, t in TABLES.items():
        df = pd.DataFrame(tables.get(name, {}))
        for c in t.columns:
            if c.name not in df.columns:
                if c.required and len(df):
                    raise ValueError(f"test case: {name}.{c.name} is required")
                df[c.name] = c.default if c.default is not None else (np.nan if c.type in ("float", "int") else "")
            if c.type == "float":
                df[c.name] = df[c.name].astype(float)
            elif c.type == "bool":
                df[c.name] = df[c.name].astype(bool)
            elif c.type == "str":
                df[c.name] = df[c.name].astype(str)
        df = df[t.column_names]
        df.index = range(2, 2 + len(df))
        out[name] = df
    s = setting_defaults()
    for section, values in (settings or {}).items():
        s[section] = {**s[section], **values}
    return Case("test", out, s)


ROAD = {
    "mode": "road",
    "cost_per_tonne_km": 0.1,
    "speed_km_per_day": 600.0,
    "handling_days": 0.5,
    "circuity": 1.2,
    "max_km": 700.0,
}
AIR = {"mode": "air", "cost_per_tonne_km": 1.0, "speed_km_per_day": 8000.0, "handling_days": 1.0, "min_km": 500.0}


def base_tables(modes=(ROAD, AIR)):
    """F1 is made at plant P1 from material M1 (supplier S1); M2 (S2) is used by nothing; S3 sells F2.

    DCs D1 (0, 0) and D2 (0, 5); customers along the meridian lon 0 at 1°, 3°, 6° north (C4 at 2°
    has no demand), so DC D1 → Ck great-circle km = DEG_KM × latitude.
    """
    return dict(
        products=[
            {"product": "F1", "unit_weight_kg": 10.0, "unit_value": 50.0},
            {"product": "F2", "unit_weight_kg": 5.0, "unit_value": 20.0},
            {"product": "M1", "kind": "material", "unit_weight_kg": 1.0, "unit_value": 2.0},
            {"product": "M2", "kind": "material", "unit_weight_kg": 1.0, "unit_value": 2.0},
        ],
        bill_of_materials=[{"product": "F1", "material": "M1", "quantity_per_unit": 2.0}],
        suppliers=[
            {"supplier": "S1", "product": "M1", "lat": 10.0, "lon": 0.0, "unit_cost": 1.0},
            {"supplier": "S2", "product": "M2", "lat": 10.0, "lon": 1.0, "unit_cost": 1.0},
            {"supplier": "S3", "product": "F2", "lat": 10.0, "lon": 2.0, "unit_cost": 9.0},
        ],
        plants=[{"plant": "P1", "product": "F1", "lat": 5.0, "lon": 0.0}],
        dcs=[{"dc": "D1", "lat": 0.0, "lon": 0.0}, {"dc": "D2", "lat": 0.0, "lon": 5.0}],
        customers=[
            {"customer": "C1", "lat": 1.0, "lon": 0.0},
            {"customer": "C2", "lat": 3.0, "lon": 0.0},
            {"customer": "C3", "lat": 6.0, "lon": 0.0},
            {"customer": "C4", "lat": 2.0, "lon": 0.0},
        ],
        demand=[
            {"customer": "C1", "product": "F1", "quantity": 100.0},
            {"customer": "C2", "product": "F2", "quantity": 50.0},
            {"customer": "C3", "product": "F1", "quantity": 70.0},
        ],
        modes=list(modes),
    )


def pairs(lanes, mode=None, leg=None):
    sel = lanes
    if mode is not None:
        sel = sel[sel["mode"] == mode]
    if leg is not None:
        sel = sel[sel["leg"] == leg]
    return set(zip(sel["origin"], sel["destination"]))


def one(lanes, origin, destination, mode, product=""):
    sel = lanes[
        (lanes["origin"] == origin)
        & (lanes["destination"] == destination)
        & (lanes["mode"] == mode)
        & (lanes["product"] == product)
    ]
    assert len(sel) == 1, sel
    return sel.iloc[0]


def test_columns_and_hand_checked_lane():
    lanes = build_lanes(make_case(**base_tables()))
    assert list(lanes.columns) == LANE_COLUMNS
    r = one(lanes, "D1", "C1", "road")
    # By hand: D1 (0°, 0°) → C1 (1°N, 0°) along a meridian: R·Δφ = 6371.0088 × π/180 = 111.19508 km;
    # × road circuity 1.2 = 133.43410 km; transit = 133.43410 / 600 km/day + 0.5 handling = 0.72239 days.
    assert r["distance_km"] == pytest.approx(133.4340962802395, rel=1e-12)
    assert r["transit_days"] == pytest.approx(0.7223901604670658, rel=1e-12)
    assert (r["origin_kind"], r["destination_kind"], r["leg"], r["source"]) == (
        "dc",
        "customer",
        "dc-customer",
        "generated",
    )
    assert np.isnan(r["cost_per_unit"]) and r["capacity"] == np.inf
    assert (r["origin_lat"], r["origin_lon"], r["destination_lat"], r["destination_lon"]) == (0, 0, 1, 0)
    # the off-meridian lane D2 (0°, 5°E) → C1 agrees with geographiclib's geodesic on the same sphere
    # (Karney 2013, "Algorithms for geodesics"; flattening 0 = great circle)
    ref_km = Geodesic(R * 1000, 0).Inverse(0, 5, 1, 0)["s12"] / 1000
    assert one(lanes, "D2", "C1", "road")["distance_km"] == pytest.approx(1.2 * ref_km, rel=1e-9)


def test_range_pruning_by_min_and_max_km():
    lanes = build_lanes(make_case(**base_tables()))
    # road: circuity 1.2, max 700 km → D1→C1 133 km and D1→C2 400 km kept, D1→C3 800.6 km pruned.
    assert ("D1", "C1") in pairs(lanes, "road") and ("D1", "C2") in pairs(lanes, "road")
    assert ("D1", "C3") not in pairs(lanes, "road")
    # air: circuity 1, min 500 km → only D1→C3 (667 km) among D1's customers.
    assert {d for o, d in pairs(lanes, "air", "dc-customer") if o == "D1"} == {"C3"}
    assert one(lanes, "D1", "C3", "air")["distance_km"] == pytest.approx(6 * DEG_KM, rel=1e-12)
    # every kept generated lane lies in its mode's range
    road = lanes[lanes["mode"] == "road"]
    air = lanes[lanes["mode"] == "air"]
    assert road["distance_km"].max() <= 700 and air["distance_km"].min() >= 500


def test_prefilters_drop_lanes_that_cannot_carry_anything():
    t = base_tables()
    t["plants"] = t["plants"] + [{"plant": "P2", "product": "F2", "lat": 4.0, "lon": 1.0}]
    lanes = build_lanes(make_case(**t))
    # S1's M1 is a material of F1 made at P1 (not of F2 made at P2); S2's M2 is in no bill of materials;
    # S3 sells finished F2.
    assert pairs(lanes, leg="supplier-plant") == {("S1", "P1")}
    assert ("P2", "C2") in pairs(lanes, leg="plant-customer") and ("P2", "C1") not in pairs(lanes)
    assert {o for o, _ in pairs(lanes, leg="supplier-dc")} == {"S3"}
    # P1 makes F1, wanted by C1 and C3 only; C4 has no demand and gets no lane at all.
    assert {d for o, d in pairs(lanes, leg="plant-customer") if o == "P1"} <= {"C1", "C3"}
    assert ("P1", "C1") in pairs(lanes, "road", "plant-customer")
    assert "C4" not in set(lanes["destination"])
    # default legs exclude dc-dc
    assert pairs(lanes, leg="dc-dc") == set()


def test_legs_from_settings_and_from_the_mode():
    t = base_tables(modes=(ROAD, {**AIR, "legs": "dc-customer"}))
    lanes = build_lanes(make_case(settings={"lanes": {"legs": ["plant-dc", "dc-customer", "dc-dc"]}}, **t))
    assert set(lanes.loc[lanes["mode"] == "road", "leg"]) == {"plant-dc", "dc-customer", "dc-dc"}
    assert set(lanes.loc[lanes["mode"] == "air", "leg"]) == {"dc-customer"}
    # dc-dc: both directions, never a DC to itself
    assert pairs(lanes, "road", "dc-dc") == {("D1", "D2"), ("D2", "D1")}


def test_generate_lanes_false_keeps_only_explicit_lanes():
    t = base_tables(modes=(ROAD, {**AIR, "generate_lanes": False}))
    t["lanes"] = [{"origin": "D1", "destination": "C1", "mode": "air"}]
    lanes = build_lanes(make_case(**t))
    air = lanes[lanes["mode"] == "air"]
    assert pairs(air) == {("D1", "C1")} and set(air["source"]) == {"explicit"}
    # explicit lanes are not range-pruned: 111 km < air min_km 500; blank distance = great circle × circuity 1
    assert air.iloc[0]["distance_km"] == pytest.approx(DEG_KM, rel=1e-12)
    assert air.iloc[0]["transit_days"] == pytest.approx(DEG_KM / 8000 + 1.0, rel=1e-12)


def test_max_dc_customer_km_setting():
    lanes = build_lanes(make_case(settings={"lanes": {"max_dc_customer_km": 200.0}}, **base_tables()))
    to_customers = lanes[lanes["destination_kind"] == "customer"]
    assert to_customers["distance_km"].max() <= 200
    # D1 (0°) → C1 (1°N) and P1 (5°N) → C3 (6°N): both 1.2 × 111.2 = 133 km by road; the rest is longer
    assert pairs(to_customers) == {("D1", "C1"), ("P1", "C3")}
    # other legs are not limited by it
    assert (lanes.loc[lanes["leg"] == "supplier-plant", "distance_km"] > 200).all()


def test_explicit_row_overrides_generated_row():
    t = base_tables()
    t["lanes"] = [
        {
            "origin": "D1",
            "destination": "C1",
            "mode": "road",
            "distance_km": 150.0,
            "cost_per_unit": 2.5,
            "capacity": 1000.0,
        },
        # beyond road max_km 700 (800.6 km), still kept because the user asked for it
        {"origin": "D1", "destination": "C3", "mode": "road"},
    ]
    lanes = build_lanes(make_case(**t))
    r = one(lanes, "D1", "C1", "road")
    assert r["source"] == "explicit" and r["distance_km"] == 150 and r["cost_per_unit"] == 2.5
    assert r["capacity"] == 1000
    assert r["transit_days"] == pytest.approx(150 / 600 + 0.5)  # distance / speed + handling
    r3 = one(lanes, "D1", "C3", "road")
    assert r3["distance_km"] == pytest.approx(1.2 * 6 * DEG_KM, rel=1e-12)
    assert np.isnan(r3["cost_per_unit"]) and r3["capacity"] == np.inf
    # no duplicate keys
    assert not lanes.duplicated(["origin", "destination", "mode", "product"]).any()


def test_explicit_transit_days_kept():
    t = base_tables()
    t["lanes"] = [{"origin": "D1", "destination": "C2", "mode": "road", "transit_days": 4.0}]
    r = one(build_lanes(make_case(**t)), "D1", "C2", "road")
    assert r["transit_days"] == 4.0 and r["distance_km"] == pytest.approx(1.2 * 3 * DEG_KM, rel=1e-12)


def test_product_specific_explicit_lane_adds_a_row():
    t = base_tables()
    t["lanes"] = [
        {"origin": "D1", "destination": "C1", "mode": "road", "product": "F1", "capacity": 100.0, "cost_per_unit": 0.8}
    ]
    lanes = build_lanes(make_case(**t))
    general = one(lanes, "D1", "C1", "road", "")
    specific = one(lanes, "D1", "C1", "road", "F1")
    assert general["source"] == "generated" and specific["source"] == "explicit"
    assert specific["capacity"] == 100 and specific["cost_per_unit"] == 0.8
    assert specific["distance_km"] == pytest.approx(general["distance_km"], rel=1e-12)


def test_available_false_removes_lanes():
    t = base_tables()
    t["lanes"] = [
        # every product, generated road lane D1→C2 removed; air lanes untouched
        {"origin": "D1", "destination": "C2", "mode": "road", "available": False},
        # only F1 barred from the road lane D1→C1: the "" row stays, an F1 row with capacity 0 bars it
        {"origin": "D1", "destination": "C1", "mode": "road", "product": "F1", "available": False},
    ]
    base = build_lanes(make_case(**base_tables()))
    lanes = build_lanes(make_case(**t))
    assert ("D1", "C2") in pairs(base, "road") and ("D1", "C2") not in pairs(lanes, "road")
    assert pairs(lanes, "air") == pairs(base, "air")
    assert one(lanes, "D1", "C1", "road", "")["source"] == "generated"
    barred = one(lanes, "D1", "C1", "road", "F1")
    assert barred["capacity"] == 0 and barred["source"] == "explicit"
    # nothing else changed: one road lane removed, one bar row added
    assert len(lanes) == len(base) - 1 + 1
    keys = set(zip(lanes["origin"], lanes["destination"], lanes["mode"], lanes["product"]))
    base_keys = set(zip(base["origin"], base["destination"], base["mode"], base["product"]))
    assert keys == base_keys - {("D1", "C2", "road", "")} | {("D1", "C1", "road", "F1")}


def test_available_false_removes_explicit_product_rows_too():
    t = base_tables()
    t["lanes"] = [
        {"origin": "D1", "destination": "C1", "mode": "road", "product": "F1", "capacity": 5.0},
        {"origin": "D1", "destination": "C1", "mode": "road", "available": False},
    ]
    lanes = build_lanes(make_case(**t))
    assert ("D1", "C1") not in pairs(lanes, "road")


def test_road_edges_give_distances():
    t = base_tables()
    t["road_edges"] = [
        {"from_node": "D1", "to_node": "J1", "km": 50.0},  # every mode
        {"from_node": "J1", "to_node": "C2", "km": 60.0},
        {"from_node": "D1", "to_node": "C2", "km": 20.0, "mode": "rail"},  # not for road or air
        {"from_node": "D1", "to_node": "C1", "km": 520.0, "mode": "air"},  # air only
    ]
    lanes = build_lanes(make_case(**t))
    # road D1→C2 = 50 + 60 = 110 km over the graph, no circuity factor (great circle × 1.2 would be 400 km)
    r = one(lanes, "D1", "C2", "road")
    assert r["distance_km"] == pytest.approx(110.0)
    assert r["transit_days"] == pytest.approx(110 / 600 + 0.5)
    # road D1→C1: C1 is only joined by the air edge → great circle × circuity
    assert one(lanes, "D1", "C1", "road")["distance_km"] == pytest.approx(1.2 * DEG_KM, rel=1e-12)
    # air D1→C1 = 520 km over its own edge, so it now passes air's min_km 500 (great circle: 111 km)
    assert one(lanes, "D1", "C1", "air")["distance_km"] == pytest.approx(520.0)
    # air D1→C2: shortest over blank + air edges = 50 + 60 = 110 km < air min_km 500 → pruned
    assert ("D1", "C2") not in pairs(lanes, "air")
    # an explicit lane with blank distance uses the same rule: the road path when connected
    t["lanes"] = [{"origin": "D1", "destination": "C2", "mode": "road", "product": "F2"}]
    assert one(build_lanes(make_case(**t)), "D1", "C2", "road", "F2")["distance_km"] == pytest.approx(110.0)


def test_bad_legs_and_explicit_lanes_reported_together():
    t = base_tables(modes=(ROAD, {**AIR, "legs": "dc-customer|dc-moon"}))
    t["lanes"] = [
        {"origin": "NOWHERE", "destination": "C1", "mode": "road"},
        {"origin": "C1", "destination": "D1", "mode": "road"},
        {"origin": "S1", "destination": "C1", "mode": "road"},
        {"origin": "D1", "destination": "C1", "mode": "ship"},
    ]
    with pytest.raises(CaseError) as err:
        build_lanes(make_case(settings={"lanes": {"legs": ["dc-customer", "plant-plant"]}}, **t))
    where = {(p.table, p.row, p.column) for p in err.value.problems}
    assert where == {
        ("settings", None, "lanes.legs"),
        ("modes", 3, "legs"),
        ("lanes", 2, "origin"),
        ("lanes", 3, "origin"),
        ("lanes", 4, "destination"),
        ("lanes", 5, "mode"),
    }
    msg = {(p.row, p.column): p.message for p in err.value.problems if p.table == "lanes"}
    assert "not a leg" in msg[(4, "destination")] and "unknown mode 'ship'" in msg[(5, "mode")]
    assert "'dc-moon'" in err.value.report() and "'plant-plant'" in err.value.report()


def test_sorted_deterministically_and_summary():
    case = make_case(
        settings={
            "lanes": {"legs": ["supplier-plant", "supplier-dc", "plant-dc", "plant-customer", "dc-customer", "dc-dc"]}
        },
        **base_tables(),
    )
    lanes = build_lanes(case)
    order = {
        leg: i
        for i, leg in enumerate(["supplier-plant", "supplier-dc", "plant-dc", "plant-customer", "dc-customer", "dc-dc"])
    }
    keys = list(zip(lanes["leg"].map(order), lanes["origin"], lanes["destination"], lanes["mode"], lanes["product"]))
    assert keys == sorted(keys)
    pd.testing.assert_frame_equal(lanes, build_lanes(case))
    s = lane_summary(lanes)
    counts = lanes.groupby(["leg", "mode"]).size()
    assert s["lanes"].sum() == len(lanes)
    for _, row in s.iterrows():
        assert row["lanes"] == counts[(row["leg"], row["mode"])]
        sub = lanes[(lanes["leg"] == row["leg"]) & (lanes["mode"] == row["mode"])]
        assert row["shortest_km"] == sub["distance_km"].min() and row["longest_km"] == sub["distance_km"].max()
    assert list(s["leg"].map(order)) == sorted(s["leg"].map(order))


def test_random_network_matches_brute_force():
    # 300 customers × 20 DCs at random points; reference: a plain loop over every pair with geographiclib's
    # geodesic on the mean-radius sphere (Karney 2013), × circuity, kept when inside the mode's range.
    rng = np.random.default_rng(11)
    nc, nd = 300, 20
    clat, clon = rng.uniform(35, 60, nc), rng.uniform(-10, 30, nc)
    dlat, dlon = rng.uniform(35, 60, nd), rng.uniform(-10, 30, nd)
    t = base_tables(
        modes=(
            {"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 600.0, "circuity": 1.25, "max_km": 900.0},
            {
                "mode": "rail",
                "cost_per_tonne_km": 0.05,
                "speed_km_per_day": 400.0,
                "handling_days": 2.0,
                "circuity": 1.1,
                "min_km": 300.0,
                "max_km": 2500.0,
                "legs": "dc-customer",
            },
        )
    )
    t["dcs"] = [{"dc": f"D{j}", "lat": dlat[j], "lon": dlon[j]} for j in range(nd)]
    t["customers"] = [{"customer": f"C{i}", "lat": clat[i], "lon": clon[i]} for i in range(nc)]
    t["demand"] = [{"customer": f"C{i}", "product": "F1", "quantity": 1.0} for i in range(nc)]
    lanes = build_lanes(make_case(**t))
    dc_cust = lanes[lanes["leg"] == "dc-customer"]
    sphere = Geodesic(R * 1000, 0)
    expected = {}
    for j in range(nd):
        for i in range(nc):
            gc = sphere.Inverse(dlat[j], dlon[j], clat[i], clon[i])["s12"] / 1000
            for mode, circ, lo, hi in (("road", 1.25, 0, 900), ("rail", 1.1, 300, 2500)):
                if lo <= gc * circ <= hi:
                    expected[(f"D{j}", f"C{i}", mode)] = gc * circ
    got = dict(zip(zip(dc_cust["origin"], dc_cust["destination"], dc_cust["mode"]), dc_cust["distance_km"]))
    assert got.keys() == expected.keys()
    assert all(got[k] == pytest.approx(v, rel=1e-9) for k, v in expected.items())
