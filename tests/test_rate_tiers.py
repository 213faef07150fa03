"""Freight rate tiers: distance bands, weight breaks and a minimum charge per shipment, priced per unit.

Hand formula (common practice, no source: a carrier's rate card charges weight × distance × the band's
rate, at least the minimum charge per shipment; an average shipment of S kg holds S / w units):

    freight per unit = max(w / 1000 × km × rate, minimum charge × w / S) + per-unit charge
"""

from __future__ import annotations

import pytest

import netopt
from netopt.data.case import CaseError
from netopt.data.frames import make_case

W, FIX = 10.0, 0.05


def _case(km: dict[str, float], tiers, shipment_kg=None):
    mode = {"mode": "truck", "cost_per_tonne_km": 0.5, "fixed_cost_per_unit": FIX, "speed_km_per_day": 500.0}
    mode["generate_lanes"] = False
    if shipment_kg is not None:
        mode["shipment_kg"] = shipment_kg
    lanes = [
        {"origin": "F", "destination": c, "mode": "truck", "distance_km": d, "transit_days": 0.0} for c, d in km.items()
    ]
    tables = {
        "products": [{"product": "x", "unit_weight_kg": W, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": "F", "product": "x", "lat": 0.0, "lon": 0.0, "unit_cost": 1.0}],
        "dcs": [],
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0} for c in km],
        "demand": [{"customer": c, "product": "x", "quantity": 100.0} for c in km],
        "modes": [mode],
        "rate_tiers": list(tiers),
        "lanes": lanes,
    }
    s = {"inventory": {"safety_stock": False}, "lanes": {"legs": ["plant-customer"]}}
    return make_case(tables, s)


def _per_unit(case) -> dict[str, float]:
    r = netopt.solve(case)
    assert r.status == "optimal" and r.verification.passed, r.verification.checks
    f = r.tables["flows"].set_index("destination")
    return (f["freight_cost"] / f["quantity"]).to_dict()


BANDS = [
    {"mode": "truck", "min_km": 0, "max_km": 500, "cost_per_tonne_km": 0.20},
    {"mode": "truck", "min_km": 500, "cost_per_tonne_km": 0.10},
]


def test_a_lane_takes_the_rate_of_the_band_holding_its_distance():
    got = _per_unit(_case({"C1": 499.0, "C2": 500.0, "C3": 800.0}, BANDS))
    assert got["C1"] == pytest.approx(W / 1000 * 499.0 * 0.20 + FIX, rel=1e-12)
    assert got["C2"] == pytest.approx(W / 1000 * 500.0 * 0.10 + FIX, rel=1e-12)  # the boundary starts the next band
    assert got["C3"] == pytest.approx(W / 1000 * 800.0 * 0.10 + FIX, rel=1e-12)


def test_outside_every_band_the_modes_own_rate_applies():
    got = _per_unit(_case({"C1": 300.0}, [{"mode": "truck", "min_km": 500, "cost_per_tonne_km": 0.1}]))
    assert got["C1"] == pytest.approx(W / 1000 * 300.0 * 0.5 + FIX, rel=1e-12)


def test_minimum_charge_per_shipment_matches_the_hand_formula():
    tier = [{"mode": "truck", "cost_per_tonne_km": 0.1, "min_charge": 60.0}]
    got = _per_unit(_case({"C1": 100.0, "C2": 2000.0}, tier, shipment_kg=400.0))
    # 100 km: 10 kg × 100 km × 0.1 /1000 = 0.1 per unit < 60 × 10 / 400 = 1.5: the minimum charge.
    assert got["C1"] == pytest.approx(60.0 * W / 400.0 + FIX, rel=1e-12)
    # 2,000 km: 2.0 per unit by weight, above the minimum.
    assert got["C2"] == pytest.approx(W / 1000 * 2000.0 * 0.1 + FIX, rel=1e-12)


def test_weight_break_picked_by_the_average_shipment():
    tiers = [
        {"mode": "truck", "max_kg": 1000, "cost_per_tonne_km": 0.2},
        {"mode": "truck", "min_kg": 1000, "cost_per_tonne_km": 0.1},
    ]
    light = _per_unit(_case({"C1": 400.0}, tiers, shipment_kg=400.0))["C1"]
    heavy = _per_unit(_case({"C1": 400.0}, tiers, shipment_kg=1500.0))["C1"]
    assert light == pytest.approx(W / 1000 * 400.0 * 0.2 + FIX, rel=1e-12)
    assert heavy == pytest.approx(W / 1000 * 400.0 * 0.1 + FIX, rel=1e-12)


def test_tiers_that_need_a_shipment_size_or_hold_nothing_are_refused():
    with pytest.raises(CaseError) as e:
        _case(
            {"C1": 100.0},
            [
                {"mode": "truck", "cost_per_tonne_km": 0.1, "min_charge": 60.0},
                {"mode": "truck", "min_km": 900, "max_km": 800, "cost_per_tonne_km": 0.1},
            ],
        )
    where = {(p.table, p.row, p.column) for p in e.value.problems}
    assert where == {("rate_tiers", 2, "mode"), ("rate_tiers", 3, "max_km")}
