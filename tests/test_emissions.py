"""Emissions: default factors and their sources, CO2e per lane, carbon price and CO2 cap.

Sources beside each check; published values from /work/shared/notes/trade-facts.md §1.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from netopt import load_case
from netopt.api import solve
from netopt.data.emission_factors import DEFAULT_FACTORS, default_factor, emission_factors_frame
from netopt.data.frames import make_case
from netopt.data.schema import TABLES

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"


# ----------------------------------------------------------------------------- default factors


def test_default_factors_order_air_road_rail_ocean():
    # Common practice (trade-facts §1 "Ordering and ranges"): air ≫ road > rail > sea per tonne-km.
    f = {m: default_factor(m) for m in ("air", "road", "road_ltl", "rail", "ocean", "short_sea")}
    assert f["air"] > 4 * f["road"]
    assert f["road"] > f["rail"] > f["ocean"]
    assert f["road_ltl"] > f["road"]  # part loads emit more per tonne-km than full artics
    assert f["short_sea"] > f["ocean"]


@pytest.mark.parametrize(
    "mode,value,where",
    [
        ("air", 0.498, "GLEC Framework v3.0"),  # GLEC v3.0 (2023) Table 1, freighter > 1,500 km, TTW
        ("road", 0.08473, "Table 7e"),  # Defra/DECC 2012 Annex 7 Table 7e, artic > 33 t, direct
        ("road_ltl", 0.12366, "Table 7e"),  # same table, all HGVs, direct
        ("rail", 0.03159, "Mode Shift Centre"),  # Defra direct factor quoted by the Mode Shift Centre
        ("ocean", 0.01536, "Mode Shift Centre"),  # same page, deep-sea container >= 3,000 TEU
        ("short_sea", 0.029703, "Mode Shift Centre"),  # same page, short-sea container < 3,000 TEU
    ],
)
def test_default_factors_are_the_published_values(mode, value, where):
    # Values as listed in trade-facts §1 with their edition and table.
    row = next(r for r in DEFAULT_FACTORS if r["mode"] == mode)
    assert row["kg_co2e_per_tkm"] == value
    assert where in row["source"]
    assert row["scope"] and row["distance_basis"] and row["confidence"] in ("high", "medium")


def test_factor_ranges_of_the_trade():
    # trade-facts §1 ranges: road artic 0.06–0.15, rail 0.01–0.035, deep-sea container 0.008–0.016 kg/t·km.
    assert 0.06 <= default_factor("road") <= 0.15
    assert 0.01 <= default_factor("rail") <= 0.035
    assert 0.008 <= default_factor("ocean") <= 0.016
    frame = emission_factors_frame()
    assert list(frame["mode"]) == [r["mode"] for r in DEFAULT_FACTORS]


def test_schema_documents_the_sources():
    meaning = TABLES["modes"].column("co2_kg_per_tonne_km").meaning
    for text in ("GLEC Framework v3.0", "Table 1", "Table 7e", "tank-to-wheel", "+ 95 km"):
        assert text in meaning


def test_demo_modes_use_the_default_factors():
    # The demo case rounds the published values to 4 decimals (cases/brackenholt/README.md, emission factors).
    modes = load_case(DEMO).tables["modes"].set_index("mode")["co2_kg_per_tonne_km"]
    for mode, value in modes.items():
        assert value == round(default_factor(mode), 4), mode


# ----------------------------------------------------------------------------- one lane, two modes


def _lane_case(policy: dict | None = None, **settings):
    """Plant F → customer C, 1,000 units/yr of 20 kg over 1,000 km: road 0.10 EUR/t·km and 0.1 kg CO2e/t·km,
    rail 0.12 EUR/t·km and 0.03 kg CO2e/t·km, both 1 day in transit."""
    s = {
        "lanes": {"legs": ["plant-customer"], "prune_dominated": False},
        "solver": {"mip_gap": 1e-9},
        "policy": dict(policy or {}),
    }
    s.update(settings)
    return make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 20.0, "unit_value": 10.0}],
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
                {"origin": "F", "destination": "C", "mode": m, "distance_km": 1000.0, "transit_days": 1.0}
                for m in ("road", "rail")
            ],
        },
        s,
    )


def test_co2e_per_lane_is_tonnes_times_km_times_factor():
    # GLEC / ISO 14083 activity-based method: emissions = tonne-km × intensity factor (trade-facts §1).
    r = solve(_lane_case())
    f = r.tables["flows"].iloc[0]
    assert f["mode"] == "road"
    assert f["co2_kg"] == pytest.approx(1000 * 20.0 / 1000 * 1000.0 * 0.10, rel=1e-12)  # 2,000 kg
    mm = r.tables["mode_mix"].set_index("mode")
    assert mm.loc["road", "co2_kg"] == pytest.approx(mm.loc["road", "tonne_km"] * 0.10, rel=1e-12)
    k = dict(zip(r.tables["kpis"]["kpi"], r.tables["kpis"]["value"]))
    assert k["co2e_tonnes"] == pytest.approx(2.0, rel=1e-12)


def test_carbon_price_switches_the_mode_at_the_break_even_price():
    """Rail costs 0.4 EUR/unit more and saves 1.4 kg CO2e/unit: break-even price = 0.4 / 0.0014 t
    = 285.71 EUR/t (arithmetic).  Below it road stays, above it rail wins, and the carbon cost
    component is tonnes × price."""
    below = solve(_lane_case({"carbon_price_per_tonne": 280.0}))
    above = solve(_lane_case({"carbon_price_per_tonne": 290.0}))
    assert set(below.tables["flows"]["mode"]) == {"road"}
    assert set(above.tables["flows"]["mode"]) == {"rail"}
    assert below.cost["carbon"] == pytest.approx(2.0 * 280.0, rel=1e-12)
    assert above.cost["carbon"] == pytest.approx(0.6 * 290.0, rel=1e-12)
    assert below.verification.passed and above.verification.passed


def test_co2_cap_binds_and_splits_the_lane():
    """Cap 1.3 t: CO2e = 2 − 0.0014·rail_units ≤ 1.3 → at least 500 units by rail; the cheapest split
    is exactly 500/500 (cost 2,000 + 0.4 × 500 freight)."""
    r = solve(_lane_case({"co2_cap_tonnes": 1.3}))
    f = r.tables["flows"].set_index("mode")["quantity"]
    assert f["rail"] == pytest.approx(500.0, rel=1e-7)
    assert f["road"] == pytest.approx(500.0, rel=1e-7)
    assert r.cost["transport"] == pytest.approx(2200.0, rel=1e-9)
    k = dict(zip(r.tables["kpis"]["kpi"], r.tables["kpis"]["value"]))
    assert k["co2e_tonnes"] == pytest.approx(1.3, rel=1e-7)
    assert r.verification.passed
    checks = r.verification.checks.set_index("rule")
    assert "CO2e cap (t)" in checks.index


def test_co2_cap_below_the_cleanest_network_is_infeasible_and_diagnosed():
    r = solve(_lane_case({"co2_cap_tonnes": 0.5}))  # all rail still emits 0.6 t
    assert r.status == "infeasible"
    assert r.diagnosis is not None
    hit = r.diagnosis[r.diagnosis["rule"] == "co2_cap"]
    assert len(hit) == 1 and hit["amount"].iloc[0] == pytest.approx(0.1, rel=1e-6)


def test_verifier_catches_a_broken_cap():
    # Independent verification recomputes CO2e from inputs: a solution over the cap fails it.
    from netopt.engine.verify import verify

    capped = _lane_case({"co2_cap_tonnes": 1.0})
    free = solve(_lane_case())
    v = verify(capped, free.lanes, free.tables, free.objective)
    assert not v.passed and v.largest_violation_rule == "CO2e cap (t)"
    assert isinstance(v.checks, pd.DataFrame)
