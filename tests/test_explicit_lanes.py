"""Explicit lanes read whole columns at once (netopt.network.explicit_lanes, netopt.data.rules): the same
lane table and the same problems (table, row, column) as a plain loop over the rows written in the test.

Outside reference for distances: geographiclib's geodesic on a sphere of the mean Earth radius
(Karney, "Algorithms for geodesics", J. Geodesy 87 (2013)); R = 6371.0088 km (IUGG mean radius R1 of
WGS84, Moritz 1980).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.data.schema import LEGS
from netopt.network.lanes import case_lanes

R_KM = 6371.0088
SPHERE = Geodesic(R_KM * 1000, 0)
MODES = {
    "road": {"speed": 600.0, "handling": 0.5, "circuity": 1.2},
    "rail": {"speed": 400.0, "handling": 2.0, "circuity": 1.3},
}


def _sites(rng):
    """Suppliers, plants, DCs and customers at random points; codes tell their kind."""
    out = {}
    for kind, n in (("supplier", 3), ("plant", 2), ("dc", 4), ("customer", 8)):
        lat, lon = rng.uniform(35, 60, n), rng.uniform(-10, 30, n)
        out[kind] = {f"{kind[0].upper()}{i}": (float(lat[i]), float(lon[i])) for i in range(n)}
    return out


def _tables(sites, lanes):
    s, p, d, c = (sites[k] for k in ("supplier", "plant", "dc", "customer"))
    return {
        "products": [
            {"product": "F", "unit_weight_kg": 1.0, "unit_value": 10.0},
            {"product": "G", "unit_weight_kg": 2.0, "unit_value": 5.0},
        ],
        "suppliers": [
            {"supplier": k, "product": "G", "lat": v[0], "lon": v[1], "unit_cost": 1.0} for k, v in s.items()
        ],
        "plants": [{"plant": k, "product": "F", "lat": v[0], "lon": v[1]} for k, v in p.items()],
        "dcs": [{"dc": k, "lat": v[0], "lon": v[1]} for k, v in d.items()],
        "customers": [{"customer": k, "lat": v[0], "lon": v[1]} for k, v in c.items()],
        "demand": [{"customer": k, "product": "F", "quantity": 1.0} for k in c]
        + [{"customer": k, "product": "G", "quantity": 1.0} for k in c],
        "modes": [
            {
                "mode": m,
                "cost_per_tonne_km": 0.1,
                "speed_km_per_day": v["speed"],
                "handling_days": v["handling"],
                "circuity": v["circuity"],
                "generate_lanes": False,
            }
            for m, v in MODES.items()
        ],
        "lanes": lanes,
    }


def _random_lanes(rng, sites, n):
    """``n`` distinct lanes along the legs, each blank or given in distance, transit and cost at random,
    plus every plant → DC, supplier → DC and DC → customer lane by road (so every demand is reachable)."""
    kind = {code: k for k, codes in sites.items() for code in codes}
    rows, seen = [], set()
    for p in [*sites["plant"], *sites["supplier"]]:
        for d in sites["dc"]:
            rows.append({"origin": p, "destination": d, "mode": "road"})
            seen.add((p, d, "road", ""))
    for d in sites["dc"]:
        for c in sites["customer"]:
            rows.append({"origin": d, "destination": c, "mode": "road"})
            seen.add((d, c, "road", ""))
    codes = list(kind)
    while len(rows) < n:
        o, d = rng.choice(codes), rng.choice(codes)
        mode, product = str(rng.choice(list(MODES))), str(rng.choice(["", "F", "G"]))
        if o == d or f"{kind[o]}-{kind[d]}" not in LEGS or (o, d, mode, product) in seen:
            continue
        seen.add((o, d, mode, product))
        row = {"origin": o, "destination": d, "mode": mode, "product": product}
        for col, hi in (("distance_km", 3000.0), ("transit_days", 9.0), ("cost_per_unit", 4.0)):
            if rng.random() < 0.5:
                row[col] = round(float(rng.uniform(0, hi)), 3)
        if rng.random() < 0.3:
            row["capacity"] = round(float(rng.uniform(1, 100)), 1)
        rows.append(row)
    return rows


def _reference(sites, lanes) -> dict:
    """One lane per row, by a plain loop: kinds, leg and coordinates looked up, blanks filled."""
    kind = {code: k for k, codes in sites.items() for code in codes}
    coords = {code: xy for codes in sites.values() for code, xy in codes.items()}
    out = {}
    for r in lanes:
        o, d, m = r["origin"], r["destination"], r["mode"]
        (olat, olon), (dlat, dlon) = coords[o], coords[d]
        gc = SPHERE.Inverse(olat, olon, dlat, dlon)["s12"] / 1000
        km = r.get("distance_km", gc * MODES[m]["circuity"])
        days = r.get("transit_days", km / MODES[m]["speed"] + MODES[m]["handling"])
        out[(o, d, m, r.get("product", ""))] = {
            "origin_kind": kind[o],
            "destination_kind": kind[d],
            "leg": f"{kind[o]}-{kind[d]}",
            "distance_km": km,
            "transit_days": days,
            "cost_per_unit": r.get("cost_per_unit", np.nan),
            "capacity": r.get("capacity", np.inf),
            "origin_lat": olat,
            "origin_lon": olon,
            "destination_lat": dlat,
            "destination_lon": dlon,
        }
    return out


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_explicit_lanes_match_a_row_by_row_reference(seed):
    rng = np.random.default_rng(seed)
    sites = _sites(rng)
    rows = _random_lanes(rng, sites, 120)
    lanes = case_lanes(make_case(_tables(sites, rows), {"inventory": {"safety_stock": False}}))
    expected = _reference(sites, rows)
    got = lanes.set_index(["origin", "destination", "mode", "product"])
    assert set(got.index) == set(expected) and len(got) == len(expected)
    assert set(lanes["source"]) == {"explicit"}
    for key, want in expected.items():
        row = got.loc[key]
        for col, v in want.items():
            if isinstance(v, str):
                assert row[col] == v, (key, col)
            elif np.isnan(v):
                assert np.isnan(row[col]), (key, col)
            else:
                assert row[col] == pytest.approx(v, rel=1e-9), (key, col)


def test_bad_lane_rows_named_by_row_and_column_like_a_row_by_row_check():
    # A plain loop over the rows states what each bad row is (the rules of schema.md: lanes start at a
    # supplier, plant or DC, end at a plant, DC or customer, along a leg, between two different sites).
    rng = np.random.default_rng(7)
    sites = _sites(rng)
    kind = {code: k for k, codes in sites.items() for code in codes}
    good = _random_lanes(rng, sites, 60)
    bad = [
        {"origin": "X1", "destination": "C0", "mode": "road"},
        {"origin": "C1", "destination": "D0", "mode": "road"},
        {"origin": "D0", "destination": "S1", "mode": "road"},
        {"origin": "D1", "destination": "D1", "mode": "road"},
        {"origin": "S0", "destination": "C2", "mode": "road"},
        {"origin": "P0", "destination": "P1", "mode": "rail"},
        {"origin": "X2", "destination": "Y2", "mode": "road"},
    ]
    rows = good[:20] + bad[:4] + good[20:] + bad[4:]
    expected = set()
    for i, r in enumerate(rows):
        line = i + 2  # header = line 1
        o, d = r["origin"], r["destination"]
        ok, dk = kind.get(o), kind.get(d)
        if ok not in ("supplier", "plant", "dc"):
            expected.add(("lanes", line, "origin"))
        if dk not in ("plant", "dc", "customer"):
            expected.add(("lanes", line, "destination"))
        ends_known = ok in ("supplier", "plant", "dc") and dk in ("plant", "dc", "customer")
        if ends_known and (o == d or f"{ok}-{dk}" not in LEGS):
            expected.add(("lanes", line, "destination"))
    with pytest.raises(CaseError) as err:
        make_case(_tables(sites, rows))
    assert {(p.table, p.row, p.column) for p in err.value.problems} == expected
    assert len(expected) == 8  # X2 → Y2 counts twice (both ends unknown)
    msg = {(p.row, p.column): p.message for p in err.value.problems}
    assert "unknown origin site 'X1'" in msg[(22, "origin")]
    assert "'C1' is a customer" in msg[(23, "origin")] and "'S1' is a supplier" in msg[(24, "destination")]
    assert "to itself" in msg[(25, "destination")] and "not a leg" in msg[(len(rows), "destination")]


def test_explicit_lanes_and_the_same_lanes_as_a_matrix_agree():
    # The lane matrix is the same data one cell per lane: the explicit DC → customer rows written as a
    # cost and a distance matrix give the same lane table (blank transit computed in both).
    rng = np.random.default_rng(5)
    sites = _sites(rng)
    dcs, customers = list(sites["dc"]), list(sites["customer"])
    cost = rng.uniform(1, 5, (len(dcs), len(customers))).round(3)
    km = rng.uniform(10, 900, (len(dcs), len(customers))).round(1)
    cost[0, 1] = km[0, 1] = np.nan  # no lane D0 → C1
    head = [{"origin": p, "destination": d, "mode": "road"} for p in [*sites["plant"], *sites["supplier"]] for d in dcs]
    rows = head + [
        {"origin": d, "destination": c, "mode": "rail", "cost_per_unit": cost[i, j], "distance_km": km[i, j]}
        for i, d in enumerate(dcs)
        for j, c in enumerate(customers)
        if not np.isnan(cost[i, j])
    ]
    rows += [{"origin": "D1", "destination": "C1", "mode": "road"}]  # D0 → C1 missing: C1 reached via D1
    by_rows = case_lanes(make_case(_tables(sites, rows)))
    parts = []
    for measure, values in (("cost_per_unit", cost), ("distance_km", km)):
        w = pd.DataFrame(values, columns=customers)
        w.insert(0, "measure", measure)
        w.insert(0, "mode", "rail")
        w.insert(0, "origin", dcs)
        parts.append(w)
    t = _tables(sites, head + rows[-1:])
    t["lane_matrix"] = pd.concat(parts, ignore_index=True)
    pd.testing.assert_frame_equal(case_lanes(make_case(t)), by_rows)
