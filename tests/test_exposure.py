"""Time-to-survive / time-to-recover exposure: the published worked example, hand-computable cases, monotonicity.

Published source of the method and the worked example: Simchi-Levi, Schmidt & Wei, "From Superstorms to
Factory Fires", Harvard Business Review, Jan–Feb 2014; Simchi-Levi et al., "Identifying Risks and Mitigating
Disruptions in the Automotive Supply Chain", Interfaces 45(5):375–390, 2015 (single-tier TTR and TTS LPs).
The worked example (3 suppliers, 2 products) and its printed results are those of the public course notebook
that transcribes the Interfaces model (GitHub acedesci/scanalytics_cases, "Case 3.1 Disruption Risk
Analytics"), as recorded in the project's trade-facts note §6.
"""

from __future__ import annotations

import pandas as pd
import pytest
from randcase import random_case

from netopt.api import solve
from netopt.data.frames import make_case
from netopt.studies.exposure import base_stock, exposure, time_to_recover
from netopt.studies.exposure_tier import single_tier_exposure

# --------------------------------------------------------------------------- published worked example

SUPPLIERS = {"S1": 30.0, "S2": 45.0, "S3": 60.0}  # capacity per period
DEMAND = {"P1": 75.0, "P2": 50.0}  # per period
INVENTORY = {"P1": 20.0, "P2": 25.0}
LOSS = {"P1": 5000.0, "P2": 6500.0}  # profit margin lost per unit
ALL_LINKS = {(i, j) for i in SUPPLIERS for j in DEMAND}  # every supplier can make every product

# Published outputs (notebook printouts; trade-facts §6): performance impact, lost units, REI, TTS.
PUBLISHED = {
    "0": (0.0, 0.0, 0.0, 999.0),  # no disruption: TTS reaches the notebook's cap of 999
    "1": (0.0, 0.0, 0.0, 2.25),  # S1 out
    "2": (125_000.0, 25.0, 0.455, 45.0 / 35.0),  # S2 out: 1.286 periods
    "3": (275_000.0, 55.0, 1.000, 0.900),  # S3 out
}


def test_published_single_tier_example_reproduced_exactly():
    active = {"0": ALL_LINKS}
    for n, s in enumerate(SUPPLIERS, start=1):
        active[str(n)] = {lk for lk in ALL_LINKS if lk[0] != s}
    out = single_tier_exposure(
        SUPPLIERS, DEMAND, INVENTORY, LOSS, active, dict.fromkeys(active, 2.0), tts_cap=999.0
    ).set_index("scenario")
    for n, (impact, lost, rei, tts) in PUBLISHED.items():
        assert out.loc[n, "performance_impact"] == pytest.approx(impact, abs=1e-6)
        assert out.loc[n, "lost_units"] == pytest.approx(lost, abs=1e-9)
        assert out.loc[n, "rei"] == pytest.approx(rei, abs=5e-4)  # published to 3 decimals
        assert out.loc[n, "tts"] == pytest.approx(tts, rel=1e-9)
    # Shortage periods max(TTR − TTS, 0) as published: 0, 0, 0.714, 1.100.
    assert list(out["shortage_periods"].round(3)) == [0.0, 0.0, 0.714, 1.1]
    # Closed form from the same note: TTS = Σs / (Σd − Σ surviving capacity) = 45 / (125 − c_rest).
    assert out.loc["2", "tts"] == pytest.approx(45.0 / (125.0 - 90.0))


def _example_as_network():
    """The published example built as a netopt case (one period = one day).

    Suppliers S1–S3 each offer both products without a product limit; the lane from each supplier to
    the one DC carries at most c_i units/day of all products together (the published Σ_j y_ij ≤ c_i).
    Penalty = 2 × unit value (policy default), so unit values 2,500 and 3,250 give losses 5,000 and 6,500.
    """
    sup = [
        {"supplier": s, "product": p, "lat": 50.0 + k, "lon": 5.0, "unit_cost": 1.0}
        for k, s in enumerate(SUPPLIERS)
        for p in DEMAND
    ]
    lanes = [
        {
            "origin": s,
            "destination": "DC",
            "mode": "road",
            "cost_per_unit": 1.0 + 0.1 * k,
            "transit_days": 0.0,
            "capacity": c * 365.0,
        }
        for k, (s, c) in enumerate(SUPPLIERS.items())
    ]
    lanes.append({"origin": "DC", "destination": "C", "mode": "road", "cost_per_unit": 1.0, "transit_days": 0.0})
    return make_case(
        {
            "products": [
                {"product": "P1", "unit_weight_kg": 1.0, "unit_value": 2500.0},
                {"product": "P2", "unit_weight_kg": 1.0, "unit_value": 3250.0},
            ],
            "suppliers": sup,
            "plants": [],
            "dcs": [{"dc": "DC", "lat": 48.0, "lon": 2.0, "status": "existing"}],
            "customers": [{"customer": "C", "lat": 48.5, "lon": 2.5}],
            "demand": [{"customer": "C", "product": p, "quantity": d * 365.0} for p, d in DEMAND.items()],
            "modes": [{"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 500, "generate_lanes": False}],
            "lanes": lanes,
        },
        {
            "lanes": {"legs": ["supplier-dc", "dc-customer"], "prune_dominated": False},
            "inventory": {"safety_stock": False},
            "policy": {"allow_unmet_demand": True},
            "resilience": {"time_to_recover_days": 2.0},
        },
    )


def test_network_model_reproduces_the_published_example():
    """The multi-echelon LP on the example's network gives the published impact, REI and TTS per supplier."""
    case = _example_as_network()
    base = solve(case, mip_gap=1e-9)
    assert base.has_solution and float(base.tables["unmet"]["lost_units"].sum()) == 0.0
    stock = pd.DataFrame({"site": ["DC", "DC"], "product": list(INVENTORY), "units": list(INVENTORY.values())})
    out, note = exposure(case, base, stock=stock, nodes=list(SUPPLIERS), tts_cap_days=999.0)
    out = out.set_index("node")
    for n, s in enumerate(SUPPLIERS, start=1):
        impact, lost, rei, tts = PUBLISHED[str(n)]
        assert out.loc[s, "lost_value"] == pytest.approx(impact, abs=1e-3)
        assert out.loc[s, "lost_units"] == pytest.approx(lost, abs=1e-6)
        assert out.loc[s, "rei"] == pytest.approx(rei, abs=5e-4)
        assert out.loc[s, "tts_days"] == pytest.approx(tts, rel=1e-7)
        assert out.loc[s, "ttr_days"] == 2.0
    assert list(out["tts_below_ttr"]) == [True, True, False]  # ranked S3, S2, S1: TTS 0.9, 1.29 < 2 ≤ 2.25
    assert note == "stock given by the caller"


# --------------------------------------------------------------------------- hand-computable cases


def _one_dc_case(alt_capacity_per_day: float | None, transit_in: float = 0.0, transit_out: float = 0.0):
    """Supplier A (and optionally B with a capacity) → DC → customer; demand D = 100 units/day."""
    sup = [{"supplier": "A", "product": "P", "lat": 51.0, "lon": 4.0, "unit_cost": 10.0}]
    lanes = [
        {"origin": "A", "destination": "DC", "mode": "road", "cost_per_unit": 1.0, "transit_days": transit_in},
        {"origin": "DC", "destination": "C", "mode": "road", "cost_per_unit": 1.0, "transit_days": transit_out},
    ]
    if alt_capacity_per_day is not None:
        sup.append(
            {
                "supplier": "B",
                "product": "P",
                "lat": 52.0,
                "lon": 5.0,
                "unit_cost": 12.0,
                "capacity": alt_capacity_per_day * 365.0,
            }
        )
        lanes.append({"origin": "B", "destination": "DC", "mode": "road", "cost_per_unit": 1.0, "transit_days": 0.0})
    return make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": 50.0}],
            "suppliers": sup,
            "plants": [],
            "dcs": [{"dc": "DC", "lat": 48.0, "lon": 2.0, "status": "existing"}],
            "customers": [{"customer": "C", "lat": 48.5, "lon": 2.5}],
            "demand": [{"customer": "C", "product": "P", "quantity": 100.0 * 365.0}],
            "modes": [{"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 500, "generate_lanes": False}],
            "lanes": lanes,
        },
        {
            "lanes": {"legs": ["supplier-dc", "dc-customer"]},
            "inventory": {"safety_stock": False},
            "policy": {"allow_unmet_demand": True},
        },
    )


def _tts(case, node, stock=None, cap=365.0):
    base = solve(case, mip_gap=1e-9)
    out, _ = exposure(case, base, stock=stock, nodes=[node], tts_cap_days=cap)
    return out.iloc[0]


def test_tts_is_stock_over_demand_rate_without_alternative_source():
    """One DC holding S = 1,500 units, demand D = 100/day, its only source out: TTS = S / D = 15 days
    (common practice, no source: days of cover = stock / daily demand)."""
    stock = pd.DataFrame({"site": ["DC"], "product": ["P"], "units": [1500.0]})
    row = _tts(_one_dc_case(None), "A", stock)
    assert row["tts_days"] == pytest.approx(15.0, rel=1e-9)
    assert bool(row["tts_below_ttr"])  # 15 < the default 28 days to recover
    # Lost over TTR = 28 days: D × TTR − S = 2,800 − 1,500 = 1,300 units at 2 × 50 = 100 each.
    assert row["lost_units"] == pytest.approx(1300.0, rel=1e-9)
    assert row["lost_value"] == pytest.approx(130_000.0, rel=1e-9)


@pytest.mark.parametrize("c", [0.0, 25.0, 60.0, 99.0])
def test_tts_with_an_alternative_source_of_capacity_c(c):
    """Derived formula: over t days the customer needs D·t; stock S and the alternative's c·t are available,
    so S + c·t ≥ D·t ⇔ t ≤ S / (D − c) for c < D (unbounded, i.e. the cap, when c ≥ D).
    D = 100/day, S = 1,500: c = 60 gives 37.5 days."""
    stock = pd.DataFrame({"site": ["DC"], "product": ["P"], "units": [1500.0]})
    row = _tts(_one_dc_case(c), "A", stock, cap=10_000.0)
    assert row["tts_days"] == pytest.approx(1500.0 / (100.0 - c), rel=1e-9)


def test_alternative_at_or_above_demand_survives_to_the_cap():
    stock = pd.DataFrame({"site": ["DC"], "product": ["P"], "units": [0.0]})
    row = _tts(_one_dc_case(100.0), "A", stock, cap=365.0)
    assert row["tts_days"] == pytest.approx(365.0) and bool(row["tts_capped"])
    assert row["lost_units"] == pytest.approx(0.0, abs=1e-9)


def test_pipeline_stock_by_littles_law_gives_tts():
    """Without a stock table the base's pipeline is the stock: flow D × transit days (Little's law,
    Little 1961, Operations Research 9(3)).  Units in transit into the DC (D × 6 days) and on to the
    customer (D × 2 days) last (6 + 2) × D / D = 8 days once the supplier is out."""
    case = _one_dc_case(None, transit_in=6.0, transit_out=2.0)
    base = solve(case, mip_gap=1e-9)
    stock, note = base_stock(base)
    by = stock.set_index("site")["units"]
    assert by["DC"] == pytest.approx(600.0) and by["C"] == pytest.approx(200.0)
    assert "pipeline" in note
    base.tables.pop("safety_stock", None)
    out, _ = exposure(case, base, nodes=["A", "DC"])
    out = out.set_index("node")
    assert out.loc["A", "tts_days"] == pytest.approx(8.0, rel=1e-9)
    # The DC down: what travels into it is stuck there; only the 200 units on the last leg arrive: 2 days.
    assert out.loc["DC", "tts_days"] == pytest.approx(2.0, rel=1e-9)
    # A safety-stock table adds its units at the DC: 300 more units = 3 more days with the supplier out.
    base.tables["safety_stock"] = pd.DataFrame({"dc": ["DC"], "product": ["P"], "ss_units_exact": [300.0]})
    out, note = exposure(case, base, nodes=["A"])
    assert out.iloc[0]["tts_days"] == pytest.approx(11.0, rel=1e-9) and "safety stock" in note


def test_time_to_recover_from_columns_with_settings_default():
    case = _one_dc_case(30.0)
    t = case.tables
    t["suppliers"].loc[t["suppliers"]["supplier"] == "B", "time_to_recover_days"] = 10.0
    t["dcs"]["time_to_recover_days"] = 3.5
    ttr = time_to_recover(case)
    assert ttr["B"] == 10.0 and ttr["DC"] == 3.5
    assert ttr["A"] == case.settings["resilience"]["time_to_recover_days"] == 28.0


# --------------------------------------------------------------------------- monotonicity


@pytest.fixture(scope="module")
def solved_random():
    case = random_case(7, n_dcs=4, n_customers=8)
    return case, solve(case, mip_gap=1e-9)


def test_more_inventory_never_shortens_time_to_survive(solved_random):
    """Adding stock only loosens the TTS LP's rows, so its optimum cannot fall (LP monotonicity)."""
    case, base = solved_random
    stock, _ = base_stock(base)
    dc = base.tables["dcs"].loc[base.tables["dcs"]["open"], "dc"].iloc[0]
    extra = pd.DataFrame({"site": ["F", "F", dc], "product": ["M", "P", "P"], "units": [0.0, 0.0, 0.0]})
    prev = None
    for factor, add in [(1.0, 0.0), (1.5, 0.0), (1.5, 500.0), (3.0, 2000.0), (10.0, 5000.0)]:
        s = pd.concat([stock.assign(units=stock["units"] * factor), extra.assign(units=add)], ignore_index=True)
        out, _ = exposure(case, base, stock=s, tts_cap_days=10_000.0)
        tts = out.set_index("node")["tts_days"].sort_index()
        if prev is not None:
            assert (tts >= prev - 1e-9).all(), (factor, add)
        prev = tts
    assert prev.max() > 0


def test_longer_time_to_recover_never_lowers_lost_demand(solved_random):
    """Lost demand over a longer outage is never smaller: a plan for t' > t scaled by t/t' is feasible for t."""
    case, base = solved_random
    prev = None
    for days in (1.0, 5.0, 14.0, 28.0, 60.0, 200.0):
        out, _ = exposure(case, base, ttr=dict.fromkeys(("F", "D0", "D1", "D2", "D3", "S0", "S1", "S2"), days))
        lost = out.set_index("node")[["lost_units", "lost_value"]].sort_index()
        if prev is not None:
            assert (lost["lost_value"] >= prev["lost_value"] - 1e-6).all(), days
            assert (lost["lost_units"] >= prev["lost_units"] - 1e-6).all(), days  # one product: same order
        prev = lost
    assert prev.loc["F", "lost_units"] > 0  # the only plant: a long outage loses demand


def test_ranking_and_flags(solved_random):
    case, base = solved_random
    out, _ = exposure(case, base)
    assert list(out["rank"]) == list(range(1, len(out) + 1))
    assert (out["lost_value"].diff().dropna() <= 1e-9).all()
    assert ((out["tts_days"] < out["ttr_days"]) == out["tts_below_ttr"]).all()
    assert out["rei"].max() == pytest.approx(1.0)
    assert set(out["type"]) <= {"supplier", "plant", "dc"}
