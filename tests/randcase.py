"""Seeded random small networks for property tests (invented data, real-looking coordinates)."""

from __future__ import annotations

import numpy as np

from netopt.data.frames import make_case


def random_case(
    seed: int,
    n_dcs: int = 4,
    n_customers: int = 8,
    n_suppliers: int = 3,
    settings: dict | None = None,
    extra: dict | None = None,
):
    """A valid small case: 3 suppliers of one material → 1 plant → candidate DCs → customers.

    Two modes (road generated everywhere; a cheaper, slower rail on supplier and plant legs),
    DC capacities that bind sometimes, supplier capacities that bind sometimes.
    """
    rng = np.random.default_rng(seed)
    lat = lambda n: rng.uniform(44.0, 53.0, n).round(3)  # noqa: E731
    lon = lambda n: rng.uniform(-1.0, 16.0, n).round(3)  # noqa: E731
    total = 0.0
    customers, demand = [], []
    for i, (a, o) in enumerate(zip(lat(n_customers), lon(n_customers))):
        customers.append({"customer": f"C{i}", "lat": a, "lon": o, "region": "north" if a > 48.5 else "south"})
        q = float(rng.integers(200, 2000))
        total += q
        demand.append({"customer": f"C{i}", "product": "P", "quantity": q})
    dcs = []
    for j, (a, o) in enumerate(zip(lat(n_dcs), lon(n_dcs))):
        dcs.append(
            {
                "dc": f"D{j}",
                "lat": a,
                "lon": o,
                "status": "existing" if j == 0 else "candidate",
                "fixed_cost": float(rng.integers(5_000, 40_000)),
                "closing_cost": 10_000.0,
                "capacity": float(rng.choice([np.inf, 0.5 * total, 0.8 * total])),
                "handling_cost": round(float(rng.uniform(0.2, 1.0)), 2),
            }
        )
    suppliers = []
    for k, (a, o) in enumerate(zip(lat(n_suppliers), lon(n_suppliers))):
        suppliers.append(
            {
                "supplier": f"S{k}",
                "product": "M",
                "lat": a,
                "lon": o,
                "region": f"R{k % 2}",
                "capacity": float(rng.choice([np.inf, 2.5 * total])),
                "unit_cost": round(float(rng.uniform(1.0, 3.0)), 2),
            }
        )
    tables = {
        "products": [
            {"product": "P", "unit_weight_kg": 8.0, "unit_value": 60.0},
            {"product": "M", "kind": "material", "unit_weight_kg": 2.0, "unit_value": 2.0},
        ],
        "bill_of_materials": [{"product": "P", "material": "M", "quantity_per_unit": 2.0}],
        "suppliers": suppliers,
        "plants": [{"plant": "F", "product": "P", "lat": 49.0, "lon": 8.0, "unit_cost": 4.0}],
        "dcs": dcs,
        "customers": customers,
        "demand": demand,
        "modes": [
            {
                "mode": "road",
                "cost_per_tonne_km": 0.1,
                "fixed_cost_per_unit": 0.1,
                "speed_km_per_day": 600,
                "handling_days": 0.5,
                "circuity": 1.2,
                "co2_kg_per_tonne_km": 0.09,
            },
            {
                "mode": "rail",
                "cost_per_tonne_km": 0.04,
                "fixed_cost_per_unit": 0.3,
                "speed_km_per_day": 350,
                "handling_days": 2.0,
                "circuity": 1.3,
                "co2_kg_per_tonne_km": 0.03,
                "legs": "supplier-plant|plant-dc",
            },
        ],
    }
    for k, v in (extra or {}).items():
        tables[k] = v
    s = {
        "lanes": {"legs": ["supplier-plant", "plant-dc", "dc-customer"]},
        "inventory": {"safety_stock": False},
        "solver": {"mip_gap": 1e-9},
    }
    for sec, vals in (settings or {}).items():
        s.setdefault(sec, {}).update(vals)
    return make_case(tables, s, name=f"random-{seed}")


def lane_loss_case():
    """One plant F, one customer C with demand 1,000 units/yr, direct lanes F→C by road at 2.00/unit and
    by air at 7.00/unit, transit 0 days (no pipeline cost), one DC too dear to open, no safety stock.
    Hand-checkable: losing the road lane costs 1,000 × (7 − 2) = 5,000/yr."""
    return make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": 10.0}],
            "suppliers": [],
            "plants": [{"plant": "F", "product": "P", "lat": 48.0, "lon": 2.0}],
            "dcs": [{"dc": "D", "lat": 45.0, "lon": 5.0, "fixed_cost": 1e9}],
            "customers": [{"customer": "C", "lat": 48.5, "lon": 2.5}],
            "demand": [{"customer": "C", "product": "P", "quantity": 1000.0}],
            "modes": [
                {"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 500, "generate_lanes": False},
                {"mode": "air", "cost_per_tonne_km": 1.0, "speed_km_per_day": 5000, "generate_lanes": False},
            ],
            "lanes": [
                {"origin": "F", "destination": "C", "mode": "road", "cost_per_unit": 2.0, "transit_days": 0.0},
                {"origin": "F", "destination": "C", "mode": "air", "cost_per_unit": 7.0, "transit_days": 0.0},
            ],
        },
        {
            "lanes": {"legs": ["plant-customer", "plant-dc", "dc-customer"], "prune_dominated": False},
            "inventory": {"safety_stock": False},
        },
    )
