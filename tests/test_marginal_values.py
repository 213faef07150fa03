"""Cost to serve and marginal values of a solved network.

Cost to serve: its rows sum to the total landed cost (flow conservation at every site; demo, random
cases, a held plan with a closed DC and late deliveries); a two-customer case allocated by hand (DC fixed
cost by throughput); prices give margins, least profitable first.

Shadow prices against finite differences of independent re-solves: one unit of capacity more and less,
the network held (openings fixed) and re-solved from a rebuilt case.  The value of capacity is convex and
piecewise linear, so the dual lies between the two one-sided differences, and equals them (within 1e-6)
where they agree (LP sensitivity analysis, e.g. Bertsimas & Tsitsiklis, Introduction to Linear
Optimization, 1997, §5.2; from memory).  Reduced costs: an unused arc comes into use once its cost falls
by more than its reduced cost.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from randcase import random_case

import netopt
from netopt.data.frames import make_case

FAST = {"solver": {"marginal_values": False}}


def _rebuilt(case, edit=None, settings=None):
    tables = {k: v.copy() for k, v in case.tables.items()}
    if edit:
        edit(tables)
    s = {sec: dict(v) for sec, v in case.settings.items()}
    for sec, v in (settings or {}).items():
        s.setdefault(sec, {}).update(v)
    return make_case(tables, s, name=case.name)


def _components_sum(c: pd.DataFrame) -> float:
    return float(c["cost"].sum())


# ----------------------------------------------------------------------------- cost to serve


def test_cost_to_serve_sums_to_the_objective_on_the_demo():
    r = netopt.solve(netopt.load_case("cases/brackenholt"))
    c = r.tables["cost_to_serve"]
    assert len(c) == len(r.network.demand)
    assert _components_sum(c) == pytest.approx(r.objective, rel=1e-9)
    # Each component's column sums to the component (duties, supply, safety stock travel with the units).
    for comp in ("supply", "production", "duties", "dc_handling", "dc_fixed", "safety_stock", "pipeline_inventory"):
        assert c[comp].sum() == pytest.approx(r.cost[comp], rel=1e-9, abs=1e-6), comp
    transport = c[[k for k in c.columns if k.startswith("transport_")]].to_numpy().sum()
    assert transport == pytest.approx(r.cost["transport"], rel=1e-9)


def test_cost_to_serve_with_closing_costs_late_deliveries_and_lost_demand():
    case = netopt.load_case("cases/brackenholt")
    d = case.tables["dcs"]
    hold = {dc: (st == "existing" and dc != "DC_PIACENZA") for dc, st in zip(d["dc"], d["status"])}
    r = netopt.solve(case, hold=hold)
    c = r.tables["cost_to_serve"]
    assert r.cost["late_delivery"] > 0 and r.cost["dc_closing"] > 0
    assert c["late_delivery"].sum() == pytest.approx(r.cost["late_delivery"], rel=1e-9)
    assert c["overhead"].sum() == pytest.approx(r.cost["dc_closing"], rel=1e-9)
    assert _components_sum(c) == pytest.approx(r.objective, rel=1e-9)


def test_cost_to_serve_carries_opening_costs_as_overhead():
    # An opening cost no path carries: it is overhead, and the rows still sum to the objective.
    case = _rebuilt(
        netopt.load_case("cases/brackenholt"),
        edit=lambda t: t["dcs"].__setitem__("opening_cost", 250_000.0),
        settings=FAST,
    )
    d = case.tables["dcs"]
    hold = {dc: st == "existing" or dc == "DC_ORLEANS" for dc, st in zip(d["dc"], d["status"])}
    r = netopt.solve(case, hold=hold)
    c = r.tables["cost_to_serve"]
    assert r.cost["dc_opening"] == pytest.approx(250_000.0)
    assert c["overhead"].sum() == pytest.approx(r.cost["dc_opening"] + r.cost.get("dc_closing", 0.0), rel=1e-9)
    assert _components_sum(c) == pytest.approx(r.objective, rel=1e-9)


@pytest.mark.parametrize("seed", [1, 7, 19])
def test_cost_to_serve_sums_to_the_objective_on_random_cases(seed):
    r = netopt.solve(random_case(seed, settings=FAST))
    assert _components_sum(r.tables["cost_to_serve"]) == pytest.approx(r.objective, rel=1e-9)


def _two_customers(prices=(None, None)):
    demand = [
        {"customer": "C1", "product": "x", "quantity": 300.0},
        {"customer": "C2", "product": "x", "quantity": 100.0},
    ]
    for row, p in zip(demand, prices):
        if p is not None:
            row["price"] = p
    lanes = [
        {"origin": "F", "destination": "D", "mode": "truck", "cost_per_unit": 2.0},
        {"origin": "D", "destination": "C1", "mode": "truck", "cost_per_unit": 1.0},
        {"origin": "D", "destination": "C2", "mode": "truck", "cost_per_unit": 5.0},
    ]
    for ln in lanes:
        ln.update(distance_km=10.0, transit_days=0.0)
    tables = {
        "products": [{"product": "x", "unit_weight_kg": 1.0, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": "F", "product": "x", "lat": 0.0, "lon": 0.0, "unit_cost": 10.0}],
        "dcs": [{"dc": "D", "lat": 0.0, "lon": 0.0, "fixed_cost": 800.0, "handling_cost": 0.5, "status": "existing"}],
        "customers": [{"customer": c, "lat": 0.0, "lon": 0.0} for c in ("C1", "C2")],
        "demand": demand,
        "modes": [{"mode": "truck", "cost_per_tonne_km": 0.0, "speed_km_per_day": 500.0, "generate_lanes": False}],
        "lanes": lanes,
    }
    settings = {
        "inventory": {"safety_stock": False, "holding_rate": 0.0},
        "lanes": {"legs": ["plant-dc", "dc-customer"]},
    }
    return make_case(tables, settings)


def test_cost_to_serve_by_hand():
    r = netopt.solve(_two_customers())
    c = r.tables["cost_to_serve"].set_index("customer")
    # C1: 300 × (10 make + 2 trunk + 0.5 handling + 1 delivery) + 3/4 of the DC's 800 by throughput.
    assert c.loc["C1", "cost"] == pytest.approx(300 * 13.5 + 600.0)
    assert c.loc["C2", "cost"] == pytest.approx(100 * 17.5 + 200.0)
    assert c.loc["C1", "dc_fixed"] == pytest.approx(600.0)
    assert c.loc["C2", "transport_dc-customer"] == pytest.approx(500.0)
    assert list(r.tables["cost_to_serve"]["customer"]) == ["C2", "C1"]  # dearest per unit first


def test_prices_rank_the_least_profitable_first():
    r = netopt.solve(_two_customers(prices=(15.0, 30.0)))
    c = r.tables["cost_to_serve"]
    assert list(c["customer"]) == ["C1", "C2"]  # C1 loses 300·15 − 4650 = −150; C2 earns 3000 − 1950
    assert c.set_index("customer").loc["C1", "margin"] == pytest.approx(300 * 15.0 - (300 * 13.5 + 600.0))
    assert c.set_index("customer").loc["C2", "margin_share"] == pytest.approx((3000.0 - 1950.0) / 3000.0)


# ----------------------------------------------------------------------------- shadow prices


def _tight(seed):
    """A random case whose suppliers and plant bind: each supplier holds 45 % of the material need."""
    case = random_case(seed, settings={"policy": {"allow_unmet_demand": True, "unmet_penalty_per_unit": 500.0}})
    total = float(case.tables["demand"]["quantity"].sum())

    def edit(t):
        t["suppliers"]["capacity"] = 0.45 * 2 * total
        t["plants"]["capacity"] = 1.02 * total

    return _rebuilt(case, edit)


def _held_objective(case, hold, table, key, column, value):
    def edit(t):
        df = t[table]
        t[table].loc[(df[list(key)] == pd.Series(key)).all(axis=1), column] = value

    r = netopt.solve(_rebuilt(case, edit, FAST), hold=hold)
    assert r.status == "optimal"
    return r.objective


@pytest.mark.parametrize("seed", [2, 5, 13])
def test_shadow_prices_match_finite_differences_of_independent_resolves(seed):
    case = _tight(seed)
    base = netopt.solve(case)
    hold = base.held_openings()
    sp = base.tables["shadow_prices"]
    checked = 0
    for row in sp.itertuples(index=False):
        if row.type == "supplier":
            table, key = "suppliers", {"supplier": row.element, "product": row.product}
        elif row.type == "plant":
            table, key = "plants", {"plant": row.element, "product": row.product}
        elif row.type == "dc":
            table, key = "dcs", {"dc": row.element}
        else:
            continue
        up = _held_objective(case, hold, table, key, "capacity", row.capacity + 1.0)
        down = _held_objective(case, hold, table, key, "capacity", row.capacity - 1.0)
        s_plus, s_minus = base.objective - up, down - base.objective  # saving per unit added / lost
        assert s_plus - 1e-6 <= row.shadow_price <= s_minus + 1e-6, (row, s_plus, s_minus)
        if abs(s_minus - s_plus) < 1e-9:
            assert row.shadow_price == pytest.approx(s_plus, abs=1e-6)
        checked += int(row.shadow_price > 0)
    assert checked >= 1  # some capacity binds with a positive value


def test_reduced_cost_of_an_unused_lane_is_the_cut_that_brings_it_into_use():
    def case_with(freight_b):
        lanes = [
            {"origin": "A", "destination": "F", "mode": "truck", "cost_per_unit": 4.0},
            {"origin": "B", "destination": "F", "mode": "truck", "cost_per_unit": freight_b},
            {"origin": "F", "destination": "C", "mode": "truck", "cost_per_unit": 1.0},
        ]
        for ln in lanes:
            ln.update(distance_km=10.0, transit_days=0.0)
        tables = {
            "products": [
                {"product": "x", "unit_weight_kg": 1.0, "unit_value": 0.0},
                {"product": "m", "kind": "material", "unit_weight_kg": 1.0, "unit_value": 0.0},
            ],
            "suppliers": [
                {"supplier": s, "product": "m", "lat": 0.0, "lon": 0.0, "unit_cost": p}
                for s, p in (("A", 5.0), ("B", 6.0))
            ],
            "plants": [{"plant": "F", "product": "x", "lat": 0.0, "lon": 0.0, "unit_cost": 1.0}],
            "bill_of_materials": [{"product": "x", "material": "m", "quantity_per_unit": 1.0}],
            "dcs": [],
            "customers": [{"customer": "C", "lat": 0.0, "lon": 0.0}],
            "demand": [{"customer": "C", "product": "x", "quantity": 100.0}],
            "modes": [{"mode": "truck", "cost_per_tonne_km": 0.0, "speed_km_per_day": 500.0, "generate_lanes": False}],
            "lanes": lanes,
        }
        s = {"inventory": {"safety_stock": False}, "lanes": {"legs": ["supplier-plant", "plant-customer"]}}
        return make_case(tables, s)

    r = netopt.solve(case_with(5.0))
    rc = r.tables["lane_reduced_costs"].set_index("origin")
    assert rc.loc["B", "reduced_cost"] == pytest.approx((6.0 + 5.0) - (5.0 + 4.0))  # 2 per unit dearer
    assert "B" not in set(r.tables["flows"]["origin"])
    used = netopt.solve(case_with(5.0 - 2.01)).tables["flows"]  # cut by just over the reduced cost
    assert "B" in set(used["origin"])
    assert np.isfinite(r.tables["shadow_prices"]["shadow_price"]).all()
