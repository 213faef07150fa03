"""Inventory: z-values, the safety-stock formula, its piecewise-linear form, the square-root law,
pipeline stock by Little's law, and the demo's inventory report.

Sources are named beside each check (see /work/shared/notes/trade-facts.md §4 and §5).
"""

from __future__ import annotations

import itertools
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import minimize_scalar
from scipy.stats import norm

from netopt import load_case
from netopt.api import solve
from netopt.data.frames import make_case
from netopt.model.safety_stock import breakpoints, max_rel_error, ss_units, ss_units_exact, z_value

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"
DAYS = 365.0


# ----------------------------------------------------------------------------- z-values


@pytest.mark.parametrize("csl", [0.8, 0.9, 0.95, 0.975, 0.98, 0.99, 0.995, 0.999])
def test_z_equals_scipy_normal_quantile(csl):
    # Reference library: scipy.stats.norm.ppf (scipy 1.17).
    assert z_value(csl) == pytest.approx(norm.ppf(csl), rel=1e-12)


def test_z_matches_the_printed_table_values():
    # Printed normal tables (Chopra & Meindl's safety-inventory chapter and most texts): 1.645 and 2.326.
    assert round(z_value(0.95), 3) == 1.645
    assert round(z_value(0.99), 3) == 2.326


# ----------------------------------------------------------------------------- the formula


def test_demand_uncertainty_worked_example():
    """Chopra & Meindl, safety-inventory chapter, demand-uncertainty example (attribution from memory;
    numbers reproduced in trade-facts §4): weekly demand 2,500, σ 500 per week, L = 2 weeks, CSL 90 %
    gives ss = Φ⁻¹(0.9)·√2·500 = 906.  The formula has no time unit, so one 'day' of netopt's
    function is one week here: annual variance = 500² × 365, throughput = 2,500 × 365."""
    ss = ss_units_exact(500.0**2 * DAYS, 2500.0 * DAYS, 2.0, 0.0, z_value(0.90))
    assert round(float(ss)) == 906
    assert float(ss) == pytest.approx(906.19, abs=0.01)


def test_lead_time_uncertainty_worked_example():
    """Chopra & Meindl, lead-time-uncertainty example (attribution from memory; numbers reproduced in
    trade-facts §4): D = 2,500/day, σ_D = 500, L = 7 days, s_L = 7 days, CSL 90 % →
    σ of lead-time demand = √(7·500² + 2500²·7²) = 17,550 and ss = 22,491."""
    sigma = ss_units_exact(500.0**2 * DAYS, 2500.0 * DAYS, 7.0, 7.0, 1.0)
    assert round(float(sigma)) == 17550
    ss = ss_units_exact(500.0**2 * DAYS, 2500.0 * DAYS, 7.0, 7.0, z_value(0.90))
    assert float(ss) == pytest.approx(22491.14, abs=0.01)


def test_exercise_lead_time_demand_sigma():
    """Chopra & Meindl, Exercise 11-4, published solution (trade-facts §4, high confidence): weekly σ 150,
    L = 2 weeks → σ of demand over the lead time = 212 (212.132)."""
    sigma = ss_units_exact(150.0**2 * DAYS, 250.0 * DAYS, 2.0, 0.0, 1.0)
    assert float(sigma) == pytest.approx(212.132, abs=1e-3)


def test_model_curve_is_the_formula_with_variance_alpha_times_throughput():
    # The model's curve SS(T) with pooled annual variance α·T is the same formula (consistency of the two functions).
    alpha, t, L, sdl, z = 1800.0, 250_000.0, 2.5, 1.5, z_value(0.97)
    assert float(ss_units(t, alpha, L, sdl, z)) == pytest.approx(
        float(ss_units_exact(alpha * t, t, L, sdl, z)), rel=1e-12
    )


def test_curve_with_lead_time_spread_is_concave():
    # f = √(aT + bT²) has f'' = −a²/(4 f³) ≤ 0 (derived in netopt.model.safety_stock); checked numerically.
    t = np.linspace(1.0, 1e6, 20001)
    f = ss_units(t, 2000.0, 3.0, 2.0, 1.645)
    assert np.all(np.diff(f, 2) <= 1e-9)


# ----------------------------------------------------------------------------- the piecewise-linear form


def test_max_relative_error_of_geometric_breakpoints_matches_closed_form():
    """For √T interpolated between breakpoints a and r·a the largest relative gap is at T = a·√r and
    equals 1 − 2 r^¼ / (1 + √r) (calculus, derived here; e.g. r = 2 → 1.48 %)."""
    bp = breakpoints(1000.0, 1000.0 * 2.0**10, 12)
    r = bp[2] / bp[1]
    assert r == pytest.approx(2.0)
    expected = 1 - 2 * r**0.25 / (1 + math.sqrt(r))
    assert max_rel_error(bp, bp[1], 1500.0, 2.0, 0.0, 1.645) == pytest.approx(expected, rel=1e-6)
    assert expected == pytest.approx(0.01483, abs=1e-5)


def test_reported_error_matches_scipy_maximisation_with_lead_time_spread():
    # scipy.optimize.minimize_scalar finds each segment's worst relative gap independently.
    alpha, L, sdl, z = 1700.0, 2.2, 1.5, 1.645
    bp = breakpoints(900.0, 600_000.0, 12)
    f = lambda t: float(ss_units(t, alpha, L, sdl, z))  # noqa: E731
    vals = ss_units(bp, alpha, L, sdl, z)
    worst = 0.0
    for a, b in itertools.pairwise(bp[1:]):
        gap = lambda t, a=a, b=b: -(f(t) - np.interp(t, bp, vals)) / f(t)  # noqa: E731
        res = minimize_scalar(gap, bounds=(a, b), method="bounded", options={"xatol": 1e-6 * a})
        worst = max(worst, -res.fun)
    assert max_rel_error(bp, bp[1], alpha, L, sdl, z) == pytest.approx(worst, rel=1e-4)


# ----------------------------------------------------------------------------- constructed cases


def _pool_case(
    groups: list[list[int]],
    n_customers: int,
    *,
    q: float = 36_500.0,
    cv: float = 0.3,
    lead_days: float = 3.0,
    settings: dict | None = None,
):
    """One plant, DCs D0.. each serving the customers of its group (explicit lanes only), identical
    independent customers C0.. (demand q units/yr, cv), the same inbound lead time for every DC."""
    dcs, lanes = [], []
    for g, members in enumerate(groups):
        dcs.append({"dc": f"D{g}", "lat": 48.0 + 0.1 * g, "lon": 8.0, "force": "open"})
        lanes.append(
            {
                "origin": "F",
                "destination": f"D{g}",
                "mode": "truck",
                "cost_per_unit": 1.0,
                "transit_days": lead_days,
                "distance_km": 300.0,
            }
        )
        for c in members:
            lanes.append(
                {
                    "origin": f"D{g}",
                    "destination": f"C{c}",
                    "mode": "truck",
                    "cost_per_unit": 1.0,
                    "transit_days": 0.5,
                    "distance_km": 50.0,
                }
            )
    customers = [{"customer": f"C{c}", "lat": 47.0 + 0.1 * c, "lon": 9.0} for c in range(n_customers)]
    s = {
        "lanes": {"legs": ["plant-dc", "dc-customer"], "prune_dominated": False},
        "inventory": {"safety_stock": True, "safety_stock_breakpoints": 12, "cycle_service_level": 0.95},
        "solver": {"mip_gap": 1e-9},
    }
    for sec, vals in (settings or {}).items():
        s.setdefault(sec, {}).update(vals)
    return make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 5.0, "unit_value": 100.0, "demand_cv": cv}],
            "suppliers": [],
            "plants": [{"plant": "F", "product": "P", "lat": 49.0, "lon": 7.0}],
            "dcs": dcs,
            "customers": customers,
            "demand": [{"customer": f"C{c}", "product": "P", "quantity": q} for c in range(n_customers)],
            "modes": [{"mode": "truck", "cost_per_tonne_km": 0.1, "speed_km_per_day": 600, "generate_lanes": False}],
            "lanes": lanes,
        },
        s,
    )


@pytest.mark.parametrize("n_before,n_after", [(4, 1), (8, 2)])
def test_square_root_law_on_consolidation(n_before, n_after):
    """Square-root law (Maister 1976, 'Centralisation of inventories and the square root law'):
    with equal, independent demands total safety stock scales with √(number of stock points),
    X2 = X1·√(n2/n1); e.g. 8 → 2 warehouses halves it (the published 2 → 8 example doubles 4,000 to 8,000)."""
    n_c = 8 if n_before == 8 else 4
    per_before = n_c // n_before
    per_after = n_c // n_after
    before = solve(_pool_case([list(range(k * per_before, (k + 1) * per_before)) for k in range(n_before)], n_c))
    after = solve(_pool_case([list(range(k * per_after, (k + 1) * per_after)) for k in range(n_after)], n_c))
    for r in (before, after):
        assert r.status == "optimal" and r.verification.passed
    ss_b = before.tables["safety_stock"]
    ss_a = after.tables["safety_stock"]
    assert len(ss_b) == n_before and len(ss_a) == n_after
    ratio = ss_b["ss_units_exact"].sum() / ss_a["ss_units_exact"].sum()
    assert ratio == pytest.approx(math.sqrt(n_before / n_after), rel=1e-9)
    # The model's piecewise-linear figure is within its reported error of the exact one.
    for ss in (ss_b, ss_a):
        rel = (ss["ss_units_exact"] - ss["ss_units_model"]) / ss["ss_units_exact"]
        assert (rel >= -1e-9).all() and (rel <= ss["max_rel_error"] + 1e-9).all()
        assert (ss["max_rel_error"] < 0.02).all()


def test_safety_stock_of_one_dc_by_hand():
    """One DC, four customers of 36,500 units/yr (100/day), cv 0.3, L = 3 days, CSL 95 %:
    pooled daily σ = √(4·(0.3·36,500)²/365) and SS = z·√L·σ (formula of trade-facts §4, z from scipy)."""
    r = solve(_pool_case([[0, 1, 2, 3]], 4))
    ss = r.tables["safety_stock"].iloc[0]
    sigma_day = math.sqrt(4 * (0.3 * 36_500.0) ** 2 / DAYS)
    expected = norm.ppf(0.95) * math.sqrt(3.0) * sigma_day
    assert ss["ss_units_exact"] == pytest.approx(expected, rel=1e-12)
    assert ss["ss_units_curve"] == pytest.approx(expected, rel=1e-12)  # one DC serving all: α·T is exact
    # Holding cost = SS × unit value × holding rate (25 %/yr default) in the objective.
    assert r.cost["safety_stock"] == pytest.approx(ss["ss_units_model"] * 100.0 * 0.25, rel=1e-9)
    assert r.verification.passed


def test_lead_time_spread_from_the_supplier_enters_the_formula():
    """A DC bought from a supplier with lead_time_sd_days = 2: SS = z·√(L·σ_d² + d̄²·σ_L²) (trade-facts §4)."""
    case = make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 5.0, "unit_value": 100.0, "demand_cv": 0.3}],
            "suppliers": [
                {"supplier": "S", "product": "P", "lat": 50.0, "lon": 8.0, "unit_cost": 40.0, "lead_time_sd_days": 2.0}
            ],
            "plants": [],
            "dcs": [{"dc": "D", "lat": 48.0, "lon": 8.0, "force": "open"}],
            "customers": [{"customer": "C", "lat": 47.5, "lon": 8.2}],
            "demand": [{"customer": "C", "product": "P", "quantity": 36_500.0}],
            "modes": [{"mode": "truck", "cost_per_tonne_km": 0.1, "speed_km_per_day": 600, "generate_lanes": False}],
            "lanes": [
                {"origin": "S", "destination": "D", "mode": "truck", "cost_per_unit": 1.0, "transit_days": 4.0},
                {"origin": "D", "destination": "C", "mode": "truck", "cost_per_unit": 1.0, "transit_days": 0.5},
            ],
        },
        {"lanes": {"legs": ["supplier-dc", "dc-customer"]}, "solver": {"mip_gap": 1e-9}},
    )
    r = solve(case)
    ss = r.tables["safety_stock"].iloc[0]
    d, sigma_d = 100.0, 0.3 * 36_500.0 / math.sqrt(DAYS)
    expected = norm.ppf(0.95) * math.sqrt(4.0 * sigma_d**2 + d**2 * 2.0**2)
    assert ss["lead_sd_days"] == 2.0 and ss["lead_days"] == 4.0
    assert ss["ss_units_exact"] == pytest.approx(expected, rel=1e-12)
    assert r.verification.passed


def test_pooling_can_close_a_dc():
    """DC count trades transport against safety stock.  Two customers, each with its own DC nearby
    (fixed cost 100/yr each); serving both from one DC costs 0.10/unit more freight on 36,500 units
    (3,650/yr) but pools the stock: z·√L·σ_day·(2 − √2) ≈ 957 units × 500 × 25 % ≈ 120,000/yr saved
    (σ_day = 0.3 × 36,500 / √365, L = 3 days, z = Φ⁻¹(0.95)).
    Without safety stock both DCs stay open; with it one DC serves both."""

    def case(ss_on: bool):
        lanes = [
            {"origin": "F", "destination": d, "mode": "truck", "cost_per_unit": 1.0, "transit_days": 3.0}
            for d in ("D0", "D1")
        ]
        lanes += [
            {"origin": "D0", "destination": "C0", "mode": "truck", "cost_per_unit": 1.0, "transit_days": 0.5},
            {"origin": "D1", "destination": "C1", "mode": "truck", "cost_per_unit": 1.0, "transit_days": 0.5},
            {"origin": "D0", "destination": "C1", "mode": "truck", "cost_per_unit": 1.1, "transit_days": 0.5},
            {"origin": "D1", "destination": "C0", "mode": "truck", "cost_per_unit": 1.1, "transit_days": 0.5},
        ]
        return make_case(
            {
                "products": [{"product": "P", "unit_weight_kg": 5.0, "unit_value": 500.0, "demand_cv": 0.3}],
                "suppliers": [],
                "plants": [{"plant": "F", "product": "P", "lat": 49.0, "lon": 7.0}],
                "dcs": [
                    {"dc": "D0", "lat": 48.0, "lon": 8.0, "fixed_cost": 100.0},
                    {"dc": "D1", "lat": 48.2, "lon": 8.0, "fixed_cost": 100.0},
                ],
                "customers": [{"customer": "C0", "lat": 47.5, "lon": 8.2}, {"customer": "C1", "lat": 47.7, "lon": 8.2}],
                "demand": [
                    {"customer": "C0", "product": "P", "quantity": 36_500.0},
                    {"customer": "C1", "product": "P", "quantity": 36_500.0},
                ],
                "modes": [
                    {"mode": "truck", "cost_per_tonne_km": 0.1, "speed_km_per_day": 600, "generate_lanes": False}
                ],
                "lanes": lanes,
            },
            {
                "lanes": {"legs": ["plant-dc", "dc-customer"]},
                "inventory": {"safety_stock": ss_on},
                "solver": {"mip_gap": 1e-9},
            },
        )

    without, with_ = solve(case(False)), solve(case(True))
    assert without.tables["dcs"]["open"].sum() == 2
    assert with_.tables["dcs"]["open"].sum() == 1
    assert with_.verification.passed and without.verification.passed
    # With safety stock off the report still gives the exact figure but charges nothing.
    ss_off = without.tables["safety_stock"]
    assert len(ss_off) == 2 and not ss_off["in_objective"].any() and without.cost["safety_stock"] == 0.0


# ----------------------------------------------------------------------------- pipeline stock


def test_pipeline_stock_is_demand_rate_times_transit_time():
    """Little's law L = λW (Little 1961, Operations Research 9(3)); trade-facts §5 example: 500 units/week
    in transit for 5 weeks → 2,500 units.  Annual holding cost: (D·L_days/365)·v·r, the same as
    v·r·L_days/365 per unit shipped (trade-facts §5, both forms)."""
    weekly, weeks = 500.0, 5.0
    case = make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": 40.0}],
            "suppliers": [],
            "plants": [{"plant": "F", "product": "P", "lat": 49.0, "lon": 7.0}],
            "dcs": [{"dc": "D", "lat": 48.0, "lon": 8.0, "fixed_cost": 1e9}],
            "customers": [{"customer": "C", "lat": 47.5, "lon": 8.2}],
            "demand": [{"customer": "C", "product": "P", "quantity": weekly * DAYS / 7.0}],
            "modes": [{"mode": "ship", "cost_per_tonne_km": 0.01, "speed_km_per_day": 100, "generate_lanes": False}],
            "lanes": [
                {"origin": "F", "destination": "C", "mode": "ship", "cost_per_unit": 1.0, "transit_days": weeks * 7.0}
            ],
        },
        {"lanes": {"legs": ["plant-customer"]}, "inventory": {"holding_rate": 0.2}},
    )
    r = solve(case)
    pipe = r.tables["pipeline"]
    assert len(pipe) == 1
    assert pipe["in_transit_units"].iloc[0] == pytest.approx(2500.0, rel=1e-12)
    annual = weekly * DAYS / 7.0
    assert pipe["pipeline_cost"].iloc[0] == pytest.approx(annual * weeks * 7 / DAYS * 40.0 * 0.2, rel=1e-12)
    assert pipe["pipeline_cost"].iloc[0] == pytest.approx(annual * (40.0 * 0.2 * weeks * 7 / DAYS), rel=1e-12)
    assert r.cost["pipeline_inventory"] == pytest.approx(pipe["pipeline_cost"].iloc[0], rel=1e-12)
    net = r.tables["inventory_kpis"].set_index("level").loc["network"]
    assert net["pipeline_value"] == pytest.approx(2500.0 * 40.0, rel=1e-12)
    assert net["days_incl_transit"] == pytest.approx(weeks * 7.0, rel=1e-12)  # all stock is the 35 days in transit


# ----------------------------------------------------------------------------- the demo case


@pytest.fixture(scope="module")
def demo():
    return solve(load_case(DEMO))


def test_demo_reports_safety_stock_pipeline_and_kpis(demo):
    t = demo.tables
    assert demo.status == "optimal" and demo.verification.passed
    for name in ("safety_stock", "pipeline", "inventory_kpis", "mode_economics"):
        assert name in t and len(t[name]) > 0
    ss = t["safety_stock"]
    # Every open DC that delivers has a row per product it delivers.
    out = t["flows"][t["flows"]["origin_kind"] == "dc"]
    assert set(map(tuple, ss[["dc", "product"]].to_numpy())) == set(
        map(tuple, out[["origin", "product"]].drop_duplicates().to_numpy())
    )
    # The model's cost is the curve recomputed from the flows, and its error stays below 2 %.
    assert ss["cost_model"].sum() == pytest.approx(demo.cost["safety_stock"], rel=1e-9)
    assert ss["cost_pwl"].to_numpy() == pytest.approx(ss["cost_model"].to_numpy(), rel=1e-6, abs=1e-3)
    assert ss["max_rel_error"].max() < 0.02
    inside = ~ss["below_first_breakpoint"].astype(bool)
    assert (ss.loc[inside, "pwl_rel_error"] <= ss.loc[inside, "max_rel_error"] + 1e-9).all()
    k = dict(zip(t["kpis"]["kpi"], t["kpis"]["value"]))
    assert k["safety_stock_pwl_max_rel_error"] < 0.02
    assert k["safety_stock_cost_exact"] > 0 and k["safety_stock_units"] > 0
    # Pipeline cost per lane adds up to the model's pipeline component.
    assert t["pipeline"]["pipeline_cost"].sum() == pytest.approx(demo.cost["pipeline_inventory"], rel=1e-9)
    inv = t["inventory_kpis"]
    assert set(inv.loc[inv["level"] == "dc", "dc"]) == set(t["dcs"].loc[t["dcs"]["open"], "dc"])
    assert (inv["turns"] > 0).all()
    assert inv["turns"].to_numpy() == pytest.approx(DAYS / inv["days_incl_transit"].to_numpy())


def test_verification_prices_safety_stock_from_the_flows(demo):
    # The verifier's safety-stock cost is the curve at each DC's throughput from the flows table, not the
    # solver's value; the solver's objective must agree with it (relative 1e-6).
    from netopt.engine.verify import verify

    v = demo.verification
    assert v.recomputed_cost["safety_stock"] == pytest.approx(demo.tables["safety_stock"]["cost_pwl"].sum(), rel=1e-12)
    assert v.objective_rel_diff < 1e-6
    # Leaving safety stock out of the recomputation leaves a gap of exactly that cost.
    bare = verify(load_case(DEMO), demo.lanes, demo.tables, demo.objective)
    assert not bare.passed
    assert demo.objective - bare.recomputed_objective == pytest.approx(demo.cost["safety_stock"], rel=1e-6)
