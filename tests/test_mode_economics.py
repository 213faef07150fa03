"""Mode economics per lane: hand-computed costs, switching cost, abatement cost = break-even carbon
price, the optimal choice is the cheapest admissible mode, and the demo's table."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from randcase import random_case

from netopt import load_case
from netopt.api import solve
from netopt.data.frames import make_case

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"
DAYS = 365.0


def _lane_case(carbon_price: float = 0.0):
    """Plant F → customer C, 1,000 units/yr of 20 kg (value 50, holding 25 %/yr) over 1,000 km:
    road 0.10 EUR/t·km, 1 day, 0.1 kg CO2e/t·km; rail 0.12 EUR/t·km, 3 days, 0.03 kg CO2e/t·km."""
    return make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 20.0, "unit_value": 50.0}],
            "suppliers": [],
            "plants": [{"plant": "F", "product": "P", "lat": 49.0, "lon": 7.0}],
            "dcs": [{"dc": "D", "lat": 48.0, "lon": 8.0, "fixed_cost": 1e9}],
            "customers": [{"customer": "C", "lat": 47.5, "lon": 8.2}],
            "demand": [{"customer": "C", "product": "P", "quantity": 1000.0}],
            "modes": [
                {
                    "mode": "road",
                    "cost_per_tonne_km": 0.10,
                    "speed_km_per_day": 600,
                    "generate_lanes": False,
                    "co2_kg_per_tonne_km": 0.10,
                },
                {
                    "mode": "rail",
                    "cost_per_tonne_km": 0.12,
                    "speed_km_per_day": 400,
                    "generate_lanes": False,
                    "co2_kg_per_tonne_km": 0.03,
                },
            ],
            "lanes": [
                {"origin": "F", "destination": "C", "mode": "road", "distance_km": 1000.0, "transit_days": 1.0},
                {"origin": "F", "destination": "C", "mode": "rail", "distance_km": 1000.0, "transit_days": 3.0},
            ],
        },
        {
            "lanes": {"legs": ["plant-customer"]},
            "inventory": {"holding_rate": 0.25},
            "policy": {"carbon_price_per_tonne": carbon_price},
            "solver": {"mip_gap": 1e-9},
        },
    )


def test_single_lane_by_hand():
    """Freight = t × km × rate; pipeline = value × rate × days/365 (trade-facts §5); CO2e = t·km × factor."""
    r = solve(_lane_case())
    me = r.tables["mode_economics"].set_index("mode")
    assert set(me.index) == {"road", "rail"}
    road_total = 0.02 * 1000 * 0.10 + 50 * 0.25 * 1 / DAYS
    rail_total = 0.02 * 1000 * 0.12 + 50 * 0.25 * 3 / DAYS
    assert me.loc["road", "freight"] == pytest.approx(2.0, rel=1e-12)
    assert me.loc["rail", "pipeline"] == pytest.approx(50 * 0.25 * 3 / DAYS, rel=1e-12)
    assert me.loc["road", "total"] == pytest.approx(road_total, rel=1e-12)
    assert me.loc["rail", "total_cost"] == pytest.approx(1000 * rail_total, rel=1e-12)
    assert bool(me.loc["road", "chosen"]) and not bool(me.loc["rail", "chosen"])
    assert me.loc["road", "switch_cost"] == pytest.approx(0.0, abs=1e-9)
    assert me.loc["rail", "switch_cost"] == pytest.approx(1000 * (rail_total - road_total), rel=1e-12)
    assert me.loc["rail", "switch_co2_kg"] == pytest.approx(1000 * 0.02 * 1000 * (0.03 - 0.10), rel=1e-12)
    assert me.loc["rail", "cost_per_t_co2_saved"] == pytest.approx((rail_total - road_total) / 0.0014, rel=1e-12)
    assert bool(me.loc["road", "cheapest"]) and bool(me.loc["rail", "lowest_co2"])


def test_abatement_cost_is_the_break_even_carbon_price():
    # Definition: at a carbon price p the modes tie when p × tonnes saved = extra cost; just above p rail wins.
    p = float(solve(_lane_case()).tables["mode_economics"].set_index("mode").loc["rail", "cost_per_t_co2_saved"])
    below = solve(_lane_case(0.99 * p)).tables["mode_economics"].set_index("mode")
    above = solve(_lane_case(1.01 * p)).tables["mode_economics"].set_index("mode")
    assert bool(below.loc["road", "chosen"]) and not bool(below.loc["rail", "chosen"])
    assert bool(above.loc["rail", "chosen"]) and not bool(above.loc["road", "chosen"])
    # With the price in the cost, switching back to road costs money and emits more.
    assert above.loc["road", "switch_cost"] > 0 and above.loc["road", "switch_co2_kg"] > 0
    assert above.loc["road", "carbon"] == pytest.approx(0.02 * 1000 * 0.10 / 1000 * 1.01 * p, rel=1e-12)


@pytest.mark.parametrize("seed", [0, 4])
def test_without_binding_rules_the_chosen_mode_is_the_cheapest(seed):
    # LP optimality (common practice, no source): with no lane capacities, service windows or CO2 cap,
    # moving a lane's flow to a cheaper mode is feasible and saves money, so no switch can save money.
    r = solve(random_case(seed, settings={"lanes": {"prune_dominated": False}}))
    me = r.tables["mode_economics"]
    scale = me["total_cost"].abs().max()
    assert (me["switch_cost"] >= -1e-7 * scale).all()
    g = me.groupby(["origin", "destination", "product"])
    assert g["flow"].sum().to_numpy() == pytest.approx(g["quantity"].first().to_numpy())
    assert g["chosen"].any().all()
    assert g["share"].sum().to_numpy() == pytest.approx(1.0)


def test_pruned_modes_still_appear():
    # A mode that costs more, is slower and dirtier is pruned before the solve but shown in the table.
    case = _lane_case()
    case.tables["modes"].loc[case.tables["modes"]["mode"] == "rail", "co2_kg_per_tonne_km"] = 0.2
    r = solve(case)
    me = r.tables["mode_economics"].set_index("mode")
    assert r.model_size["pruned_arcs"] == 1
    assert bool(me.loc["rail", "pruned"]) and not bool(me.loc["road", "pruned"])
    assert me.loc["rail", "switch_cost"] > 0


def test_demo_mode_table_covers_every_used_lane():
    r = solve(load_case(DEMO))
    me = r.tables["mode_economics"]
    f = r.tables["flows"]
    used = set(map(tuple, f[["origin", "destination", "product"]].drop_duplicates().to_numpy()))
    assert set(map(tuple, me[["origin", "destination", "product"]].drop_duplicates().to_numpy())) == used
    # Each used pair: its modes' flows add up to the pair's quantity; every chosen mode carries flow.
    g = me.groupby(["origin", "destination", "product"])
    assert g["flow"].sum().to_numpy() == pytest.approx(g["quantity"].first().to_numpy(), rel=1e-9)
    # Intercontinental supply lanes offer ocean, rail and air; air is never chosen and costs more.
    sp = me[(me["leg"] == "supplier-plant") & (me["origin"] == "SUP_NINGBO")]
    assert {"ocean", "air"} <= set(sp["mode"])
    air = sp[sp["mode"] == "air"]
    assert not air["chosen"].any() and (air["switch_cost"] > 0).all() and (air["switch_co2_kg"] > 0).all()
    # Service windows are stated on last legs only.
    assert me.loc[me["leg"].str.endswith("customer"), "within_window"].notna().all()
    assert me.loc[~me["leg"].str.endswith("customer"), "within_window"].isna().all()
    assert np.isfinite(me["total"]).all()
