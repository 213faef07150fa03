"""Seeded synthetic network cases for the benchmark suite.

``synthetic_case(size, seed)`` builds a supply network in a Europe-sized box
(about 4000 km east-west × 2500 km north-south) through ``netopt.frames.make_case``:

- suppliers (uniform in the box) offer materials; each supplier offers each
  material with probability 0.4, at least 3 suppliers per material;
- plants (uniform) make finished products (each with probability 0.7, at least
  2 plants per product) from materials through a bill of materials;
- candidate DCs and customer zones cluster around "metro" centres; each metro
  has at least one DC near it;
- each customer buys each product with probability 0.7 (at least one);
- modes, in this order: road-FTL, road-LTL, express, rail (the first ``modes``
  of them); rail only on lanes ≥ 300 km and never on the last mile (its
  ``legs`` column), express only on the last mile;
- DC→customer lanes are limited by ``lanes.max_dc_customer_km``, set to the
  median road distance from a customer to its 12th-nearest DC (raised so every
  customer keeps at least one DC), so the lane builder produces about 12 DCs
  per customer;
- service: a 1.5-day window on the last leg with a target of 85 % of each
  customer's demand; a customer with no DC close enough to meet the window by
  any mode gets target 0 (class ``remote``), so the target is always achievable;
- ``policy.max_supplier_share`` 0.6; explicit capacities on about a quarter of
  the supplier→plant road-FTL lanes;
- DC fixed costs scaled so that roughly 40 % of the DCs open in the optimum;
- ``inventory.safety_stock`` off unless asked for: the benchmark measures the
  network-design MIP (openings, flows, modes, sourcing, service); the safety-stock
  curve adds binaries per DC, product and curve segment and is a separate question.

Everything is vectorised with numpy; the same ``(size, seed)`` gives the same case.
Units: coordinates in degrees, distances km, quantities units/yr, money EUR/yr
or EUR/unit as the schema declares.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.frames import make_case
from netopt.network.geo import pairwise_km

SIZES: dict[str, dict[str, int]] = {
    "tiny": {"suppliers": 6, "plants": 2, "dcs": 5, "customers": 12, "products": 2, "modes": 3},
    "small": {"suppliers": 20, "plants": 5, "dcs": 20, "customers": 200, "products": 3, "modes": 3},
    "medium": {"suppliers": 30, "plants": 6, "dcs": 50, "customers": 1000, "products": 5, "modes": 3},
    "large": {"suppliers": 50, "plants": 10, "dcs": 100, "customers": 3000, "products": 10, "modes": 4},
    "medium-4p": {
        "suppliers": 30,
        "plants": 6,
        "dcs": 50,
        "customers": 1000,
        "products": 5,
        "modes": 3,
        "periods": 4,
    },
}
"""Named sizes: counts of suppliers, plants, candidate DCs, customer zones, finished products, modes (and
optionally ``periods``: a plan over that many one-year periods, demand growing per customer zone)."""

GROWTH_RANGE = (0.0, 0.08)  # per year: each zone's demand growth over the periods of a size with periods
DISCOUNT_RATE = 0.08  # per year, for a size with periods

LAT_RANGE = (37.0, 59.5)  # degrees: 22.5° × 111.2 km ≈ 2500 km north-south
LON_RANGE = (-9.0, 44.7)  # degrees: 53.7° × 74.5 km (at 48° N) ≈ 4000 km east-west
KM_PER_DEG_LAT = 111.2
ROAD_CIRCUITY = 1.2  # road km per great-circle km (all road modes)
NEAREST_DCS = 12  # DCs per customer the distance limit aims at
SERVICE_WINDOW_DAYS = 1.5
SERVICE_TARGET = 0.85
MAX_SUPPLIER_SHARE = 0.6
OPEN_SHARE_TARGET = 0.40  # share of DCs the fixed-cost scale aims to open
FIXED_COST_SCALE = 0.7  # multiplier of the fixed-cost formula in _dc_fixed_costs (tuned on small/medium)

# mode, cost_per_tonne_km, fixed_cost_per_unit, speed_km_per_day, handling_days, co2_kg_per_tonne_km,
# min_km, legs
_MODES = [
    ("road-FTL", 0.060, 0.30, 650.0, 1.0, 0.062, 0.0, "supplier-plant|plant-dc|dc-customer"),
    ("road-LTL", 0.110, 0.80, 550.0, 0.5, 0.095, 0.0, "supplier-plant|plant-dc|dc-customer"),
    ("express", 0.300, 2.00, 900.0, 0.2, 0.180, 0.0, "dc-customer"),
    ("rail", 0.035, 1.00, 400.0, 2.0, 0.025, 300.0, "supplier-plant|plant-dc"),
]

_SIZE_KEYS = ("suppliers", "plants", "dcs", "customers", "products", "modes")


def size_spec(size: str | dict) -> dict[str, int]:
    """Counts for ``size``: a name from :data:`SIZES` or a dict with the same keys.

    Optional dict keys: ``materials`` (default = products), ``metros`` (default
    ≈ √customers / 2, at most the DC count).
    """
    if isinstance(size, str):
        if size not in SIZES:
            raise ValueError(f"unknown size {size!r}; named sizes are {', '.join(SIZES)}")
        spec = dict(SIZES[size])
    else:
        spec = dict(size)
    missing = [k for k in _SIZE_KEYS if k not in spec]
    if missing:
        raise ValueError(f"size is missing {', '.join(missing)}")
    spec = {k: int(v) for k, v in spec.items()}
    spec.setdefault("periods", 1)
    if spec["suppliers"] < 3:
        raise ValueError("size needs at least 3 suppliers (3 per material)")
    if not 2 <= spec["modes"] <= len(_MODES):
        raise ValueError(f"modes must be between 2 and {len(_MODES)}")
    for k in ("plants", "dcs", "customers", "products"):
        if spec[k] < 1:
            raise ValueError(f"size needs at least one of {k}")
    spec.setdefault("materials", spec["products"])
    spec.setdefault("metros", max(2, round(np.sqrt(spec["customers"]) / 2)))
    spec["metros"] = max(1, min(spec["metros"], spec["dcs"]))
    return spec


def _uniform_points(rng: np.random.Generator, n: int, margin: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """``n`` random (lat, lon) points in the box, ``margin`` degrees inside its edges."""
    lat = rng.uniform(LAT_RANGE[0] + margin, LAT_RANGE[1] - margin, n)
    lon = rng.uniform(LON_RANGE[0] + margin, LON_RANGE[1] - margin, n)
    return lat, lon


def _around(
    rng: np.random.Generator, lat0: np.ndarray, lon0: np.ndarray, sd_km: float
) -> tuple[np.ndarray, np.ndarray]:
    """Points scattered (normal, ``sd_km`` km per axis) around the given centres, clipped to the box."""
    lat = lat0 + rng.normal(0.0, sd_km / KM_PER_DEG_LAT, len(lat0))
    lon = lon0 + rng.normal(0.0, sd_km / (KM_PER_DEG_LAT * np.cos(np.radians(lat0))), len(lat0))
    return np.clip(lat, *LAT_RANGE), np.clip(lon, *LON_RANGE)


def _codes(prefix: str, n: int) -> list[str]:
    width = len(str(n))
    return [f"{prefix}{i + 1:0{width}d}" for i in range(n)]


def _at_least(rng: np.random.Generator, member: np.ndarray, k: int) -> np.ndarray:
    """Make every column of boolean ``member`` (rows × cols) hold at least ``min(k, rows)`` Trues."""
    member = member.copy()
    rows = member.shape[0]
    need = min(k, rows)
    for j in np.flatnonzero(member.sum(axis=0) < need):
        free = np.flatnonzero(~member[:, j])
        add = rng.choice(free, size=need - int(member[:, j].sum()), replace=False)
        member[add, j] = True
    return member


def synthetic_case(size: str | dict, seed: int = 0, safety_stock: bool = False) -> Case:
    """A validated synthetic case of ``size`` (name or dict of counts) from ``seed``.

    See the module docstring for the design.  Deterministic for a given
    ``(size, seed)``.  ``safety_stock`` sets ``inventory.safety_stock``.
    """
    spec = size_spec(size)
    rng = np.random.default_rng(seed)
    S, P, D, C = spec["suppliers"], spec["plants"], spec["dcs"], spec["customers"]
    K, M, R = spec["products"], spec["materials"], spec["metros"]

    # ---- products and materials
    prod = _codes("FP", K)
    mat = _codes("RM", M)
    p_weight = rng.uniform(5.0, 30.0, K)  # kg/unit
    p_value = rng.uniform(60.0, 400.0, K)  # EUR/unit
    m_weight = rng.uniform(1.0, 8.0, M)
    m_value = rng.uniform(0.5, 4.0, M)
    products = pd.DataFrame(
        {
            "product": prod + mat,
            "kind": ["finished"] * K + ["material"] * M,
            "unit_weight_kg": np.round(np.concatenate([p_weight, m_weight]), 2),
            "unit_value": np.round(np.concatenate([p_value, m_value]), 2),
            "demand_cv": np.concatenate([np.round(rng.uniform(0.1, 0.5, K), 2), np.zeros(M)]),
        }
    )

    # Bill of materials: product k uses material k mod M, and with probability 0.5 one other material.
    main = np.arange(K) % M
    qty_main = rng.integers(1, 4, K).astype(float)
    extra = rng.integers(0, M, K)
    has_extra = (rng.random(K) < 0.5) & (extra != main)
    qty_extra = rng.integers(1, 3, K).astype(float)
    bom = pd.DataFrame(
        {
            "product": [prod[k] for k in range(K)] + [prod[k] for k in np.flatnonzero(has_extra)],
            "material": [mat[m] for m in main] + [mat[m] for m in extra[has_extra]],
            "quantity_per_unit": np.concatenate([qty_main, qty_extra[has_extra]]),
        }
    )
    use = np.zeros((K, M))
    use[np.arange(K), main] = qty_main
    use[np.flatnonzero(has_extra), extra[has_extra]] += qty_extra[has_extra]

    # ---- geography: metros, customers and DCs clustered around them
    m_lat, m_lon = _uniform_points(rng, R, margin=1.5)
    m_weight_share = rng.gamma(2.0, 1.0, R)
    m_weight_share /= m_weight_share.sum()
    c_metro = rng.choice(R, size=C, p=m_weight_share)
    c_lat, c_lon = _around(rng, m_lat[c_metro], m_lon[c_metro], sd_km=170.0)
    d_metro = np.concatenate([np.arange(R), rng.choice(R, size=D - R, p=m_weight_share)])
    d_lat, d_lon = _around(rng, m_lat[d_metro], m_lon[d_metro], sd_km=130.0)
    s_lat, s_lon = _uniform_points(rng, S)
    p_lat, p_lon = _uniform_points(rng, P, margin=2.0)

    sup_codes, plant_codes = _codes("SUP", S), _codes("PLT", P)
    dc_codes, cust_codes = _codes("DC", D), _codes("CZ", C)

    # ---- demand: each customer buys each product with probability 0.7 (at least one)
    buys = rng.random((C, K)) < 0.7
    none = ~buys.any(axis=1)
    buys[np.flatnonzero(none), rng.integers(0, K, none.sum())] = True
    size_factor = rng.lognormal(0.0, 0.6, C)  # zone size
    qty = np.round(rng.lognormal(np.log(1500.0), 0.7, (C, K)) * size_factor[:, None])
    qty = np.maximum(qty, 10.0) * buys
    ci, ki = np.nonzero(buys)
    demand = pd.DataFrame(
        {"customer": np.asarray(cust_codes)[ci], "product": np.asarray(prod)[ki], "quantity": qty[ci, ki]}
    )
    d_by_product = qty.sum(axis=0)  # units/yr per finished product
    total_demand = float(d_by_product.sum())

    # ---- lane distance limit: median road km to the 12th-nearest DC, covering every customer
    road = pairwise_km(c_lat, c_lon, d_lat, d_lon) * ROAD_CIRCUITY
    road_sorted = np.sort(road, axis=1)
    kth = min(NEAREST_DCS, D) - 1
    limit = float(np.median(road_sorted[:, kth]))
    limit = max(limit, float(road_sorted[:, 0].max()) * 1.001)
    limit = float(np.ceil(limit))

    # ---- service: window 1.5 days; target only where some mode can meet it from a DC within the limit
    modes = list(_MODES[: spec["modes"]])
    last_mile = [m for m in modes if "dc-customer" in m[7]]
    reach = max((SERVICE_WINDOW_DAYS - m[4]) * m[3] for m in last_mile)  # road km within the window
    can_meet = road_sorted[:, 0] <= min(reach, limit)
    customers = pd.DataFrame(
        {
            "customer": cust_codes,
            "lat": np.round(c_lat, 4),
            "lon": np.round(c_lon, 4),
            "region": [f"metro-{i + 1}" for i in c_metro],
            "service_class": np.where(can_meet, "standard", "remote"),
        }
    )
    service_classes = pd.DataFrame(
        {
            "service_class": ["standard", "remote"],
            "max_days": [SERVICE_WINDOW_DAYS, SERVICE_WINDOW_DAYS],
            "target_share": [SERVICE_TARGET, 0.0],
        }
    )

    # ---- plants: each makes each product with probability 0.7, at least 2 plants per product
    makes = _at_least(rng, rng.random((P, K)) < 0.7, 2)
    n_makers = makes.sum(axis=0)
    pi, pk = np.nonzero(makes)
    plant_cap = np.round(d_by_product[pk] * 1.6 / n_makers[pk] * rng.uniform(0.8, 1.2, len(pk)))
    plants = pd.DataFrame(
        {
            "plant": np.asarray(plant_codes)[pi],
            "product": np.asarray(prod)[pk],
            "lat": np.round(p_lat[pi], 4),
            "lon": np.round(p_lon[pi], 4),
            "capacity": plant_cap,
            "unit_cost": np.round(rng.uniform(1.0, 4.0, len(pk)), 2),
        }
    )

    # ---- suppliers: each offers each material with probability 0.4, at least 3 per material
    offers = _at_least(rng, rng.random((S, M)) < 0.4, 3)
    idle = ~offers.any(axis=1)
    offers[np.flatnonzero(idle), rng.integers(0, M, idle.sum())] = True
    n_offers = offers.sum(axis=0)
    need_m = d_by_product @ use  # material units/yr if all demand is made
    si, sm = np.nonzero(offers)
    sup_cap = np.round(need_m[sm] * 2.2 / n_offers[sm] * rng.uniform(0.7, 1.3, len(sm)))
    suppliers = pd.DataFrame(
        {
            "supplier": np.asarray(sup_codes)[si],
            "product": np.asarray(mat)[sm],
            "lat": np.round(s_lat[si], 4),
            "lon": np.round(s_lon[si], 4),
            "region": np.where(s_lon[si] < np.mean(LON_RANGE), "west", "east"),
            "capacity": np.maximum(sup_cap, 1.0),
            "unit_cost": np.round(m_value[sm] * rng.uniform(0.8, 1.2, len(sm)), 3),
            "lead_time_sd_days": np.round(rng.uniform(0.5, 4.0, len(sm)), 1),
        }
    )

    # ---- explicit capacities on about a quarter of the supplier→plant road-FTL lanes
    plant_needs = (makes.astype(float) @ use) > 0  # (P, M)
    pair = (offers.astype(int) @ plant_needs.T.astype(int)) > 0  # (S, P) supplier feeds plant
    cap_pair = pair & (rng.random((S, P)) < 0.25)
    ls, lp = np.nonzero(cap_pair)
    # a plant's likely material intake (units/yr) if production is spread evenly over makers
    plant_intake = (makes / np.maximum(n_makers, 1) * d_by_product) @ use  # (P, M)
    lane_cap = np.round(plant_intake.sum(axis=1)[lp] * rng.uniform(0.15, 0.4, len(lp)))
    lanes = pd.DataFrame(
        {
            "origin": np.asarray(sup_codes)[ls],
            "destination": np.asarray(plant_codes)[lp],
            "mode": "road-FTL",
            "product": "",
            "capacity": np.maximum(lane_cap, 1.0),
        }
    )

    # ---- DCs: capacity ≈ 1.5–2.5 × the average load if 40 % open; fixed cost scaled to open ≈ 40 %
    dc_cap = np.round(total_demand / (OPEN_SHARE_TARGET * D) * rng.uniform(1.5, 2.5, D))
    fixed = _dc_fixed_costs(rng, D, total_demand, float(np.average(p_weight, weights=d_by_product)), limit)
    existing = rng.random(D) < 0.1
    dcs = pd.DataFrame(
        {
            "dc": dc_codes,
            "lat": np.round(d_lat, 4),
            "lon": np.round(d_lon, 4),
            "status": np.where(existing, "existing", "candidate"),
            "fixed_cost": np.round(fixed, -2),
            "capacity": dc_cap,
            "handling_cost": np.round(rng.uniform(0.3, 1.0, D), 2),
            "closing_cost": np.where(existing, np.round(0.3 * fixed, -2), 0.0),
            "region": [f"metro-{i + 1}" for i in d_metro],
        }
    )

    mode_table = pd.DataFrame(
        [
            {
                "mode": m[0],
                "cost_per_tonne_km": m[1],
                "fixed_cost_per_unit": m[2],
                "speed_km_per_day": m[3],
                "handling_days": m[4],
                "circuity": ROAD_CIRCUITY,
                "co2_kg_per_tonne_km": m[5],
                "min_km": m[6],
                "legs": m[7],
            }
            for m in modes
        ]
    )

    name = size if isinstance(size, str) else "custom"
    settings = {
        "case": {"name": f"synthetic-{name}-seed{seed}"},
        "solver": {"threads": 1, "mip_gap": 1e-4, "time_limit_s": 600.0},
        "policy": {"max_supplier_share": MAX_SUPPLIER_SHARE},
        "lanes": {"max_dc_customer_km": limit},
        "inventory": {"safety_stock": bool(safety_stock)},
    }
    tables = {
        "products": products,
        "suppliers": suppliers,
        "plants": plants,
        "bill_of_materials": bom,
        "dcs": dcs,
        "customers": customers,
        "demand": demand,
        "service_classes": service_classes,
        "modes": mode_table,
        "lanes": lanes,
    }
    if spec.get("periods", 1) > 1:
        _add_periods(tables, settings, spec["periods"], seed)
    return make_case(tables, settings, name=settings["case"]["name"])


def _add_periods(tables: dict, settings: dict, n: int, seed: int) -> None:
    """Turn the one-year tables into a plan over ``n`` one-year periods: each zone's demand grows at its
    own rate (uniform in :data:`GROWTH_RANGE`, a separate seeded stream so the one-year data are
    unchanged), candidates cost their annual fixed cost once to open, costs discounted at
    :data:`DISCOUNT_RATE`."""
    rng = np.random.default_rng(seed + 7_919)
    names = [f"Y{k + 1}" for k in range(n)]
    tables["periods"] = pd.DataFrame({"period": names, "years": 1.0})
    dem = pd.DataFrame(tables["demand"])
    zones = dem["customer"].unique()
    growth = pd.Series(rng.uniform(*GROWTH_RANGE, len(zones)), index=zones)
    g = dem["customer"].map(growth).to_numpy(float)
    tables["demand"] = pd.concat(
        [dem.assign(period=p, quantity=dem["quantity"].to_numpy(float) * (1.0 + g) ** k) for k, p in enumerate(names)],
        ignore_index=True,
    )
    dcs = pd.DataFrame(tables["dcs"])
    dcs["opening_cost"] = np.where(dcs.get("status", "candidate") == "candidate", dcs["fixed_cost"], 0.0)
    tables["dcs"] = dcs
    settings["periods"] = {"discount_rate": DISCOUNT_RATE}


def _dc_fixed_costs(
    rng: np.random.Generator, n_dc: int, total_demand: float, mean_weight_kg: float, limit_km: float
) -> np.ndarray:
    """Annual fixed cost per DC, EUR/yr.

    Scale: the outbound road-LTL freight of all demand over a distance of the order of
    the lane limit, shared over the DCs; FIXED_COST_SCALE was tuned so that about 40 %
    of the DCs open.  Each DC gets ±25 % noise.
    """
    ltl_rate = _MODES[1][1]  # EUR per tonne-km
    outbound = total_demand * mean_weight_kg / 1000.0 * ltl_rate * limit_km
    return FIXED_COST_SCALE * outbound / n_dc * rng.uniform(0.75, 1.25, n_dc)
