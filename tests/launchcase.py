"""Seeded small launch cases for the robust-network tests (invented data): plants → candidate DCs →
customers on explicit lanes, an existing product A and a new product N launched like A."""

from __future__ import annotations

import numpy as np

from netopt.data.frames import make_case

MODE = "truck"
K = ("A", "N")  # A: the analogue (has demand), N: the new product


def random_launch(seed: int, factors=(0.5, 1.0, 2.0), probs=(0.3, 0.5, 0.2)) -> dict:
    """Plants → candidate DCs → customers, explicit lanes, integer data; N launched like A."""
    rng = np.random.default_rng(seed)
    P = ["P0", "P1"]
    D = [f"D{i}" for i in range(int(rng.integers(3, 5)))]
    C = [f"C{i}" for i in range(int(rng.integers(4, 7)))]
    dem = {c: float(rng.integers(20, 100)) for c in C}
    tot = sum(dem.values())
    return dict(
        P=P,
        D=D,
        C=C,
        dem=dem,
        factors=factors,
        probs=probs,
        pcap={(p, k): tot * (1.0 if k == "A" else max(factors)) for p in P for k in K},
        pcost={(p, k): float(rng.integers(1, 10)) for p in P for k in K},
        dcap={d: float(rng.integers(int(0.5 * tot), int(1.6 * tot))) for d in D},
        fixed={d: float(rng.integers(300, 2000)) for d in D},
        pd={(p, d): float(rng.integers(1, 20)) for p in P for d in D},
        dc={(d, c): float(rng.integers(1, 30)) for d in D for c in C},
    )


def _lane(o, d, cost):
    return {"origin": o, "destination": d, "mode": MODE, "cost_per_unit": cost, "transit_days": 0.0, "distance_km": 0.0}


def launch_case(g: dict, robust: dict | None = None, **extra):
    """The case of ``g``; with ``g["penalty"]`` lost demand is allowed at that penalty (currency/unit)."""
    f, pr = g["factors"], g["probs"]
    tables = {
        "products": [{"product": k, "unit_weight_kg": 0.0, "unit_value": 0.0} for k in K],
        "suppliers": [],
        "plants": [
            {
                "plant": p,
                "product": k,
                "lat": 0.0,
                "lon": 0.0,
                "capacity": g["pcap"][p, k],
                "unit_cost": g["pcost"][p, k],
            }
            for p in g["P"]
            for k in K
        ],
        "dcs": [
            {"dc": d, "lat": 0.0, "lon": 0.0, "fixed_cost": g["fixed"][d], "capacity": g["dcap"][d]} for d in g["D"]
        ],
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0, "region": "R" + c[-1]} for c in g["C"]],
        "demand": [{"customer": c, "product": "A", "quantity": q} for c, q in g["dem"].items()],
        "modes": [{"mode": MODE, "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False}],
        "lanes": [_lane(p, d, c) for (p, d), c in g["pd"].items()] + [_lane(d, c, x) for (d, c), x in g["dc"].items()],
        "launches": [
            {
                "launch": "L",
                "product": "N",
                "analogue": "A",
                "low": f[0],
                "base": f[1],
                "high": f[2],
                "prob_low": pr[0],
                "prob_base": pr[1],
                "prob_high": pr[2],
            }
        ],
        **extra,
    }
    settings = {
        "inventory": {"holding_rate": 0.0, "safety_stock": False},
        "solver": {"mip_gap": 1e-9},
        "robust": robust or {},
    }
    if g.get("penalty"):
        settings["policy"] = {"allow_unmet_demand": True, "unmet_penalty_per_unit": g["penalty"]}
    return make_case(tables, settings)
