"""Share rules of single sites: a supplier's least share (suppliers.min_share), a supplier's own cap and
floor at one site (sourcing_shares), a DC's most share of a customer region (dcs.max_region_share).

Each rule on a hand-checkable case (the split follows from the prices: the cheaper option takes all the
rule allows), its cost against the hand figure, and the independent check shown to catch a plan that
breaks it (the plan solved without the rule, checked against the case with it).
"""

from __future__ import annotations

import pytest

import netopt
from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.engine.verify import verify

Q = 1_000.0
PRICE_A, PRICE_B = 10.0, 14.0


def _case(sup_extra=None, pairs=(), dc_extra=None, two_dcs=False):
    sups = [
        {"supplier": "A", "product": "m", "lat": 0.0, "lon": 0.0, "unit_cost": PRICE_A},
        {"supplier": "B", "product": "m", "lat": 0.0, "lon": 0.0, "unit_cost": PRICE_B},
    ]
    for s in sups:
        s.update((sup_extra or {}).get(s["supplier"], {}))
    lanes = [{"origin": s, "destination": "F", "mode": "truck", "cost_per_unit": 1.0} for s in ("A", "B")]
    dcs = [{"dc": "D1", "lat": 0.0, "lon": 0.0, "fixed_cost": 0.0, "status": "existing"}]
    if two_dcs:
        dcs.append({"dc": "D2", "lat": 0.0, "lon": 0.0, "fixed_cost": 0.0, "status": "existing"})
    for d in dcs:
        d.update((dc_extra or {}).get(d["dc"], {}))
    customers = [{"customer": c, "lat": 0.0, "lon": 0.0, "region": "north"} for c in ("C1", "C2")]
    for d, cost in (("D1", 1.0), ("D2", 3.0))[: len(dcs)]:
        lanes.append({"origin": "F", "destination": d, "mode": "truck", "cost_per_unit": 0.5})
        lanes += [{"origin": d, "destination": c, "mode": "truck", "cost_per_unit": cost} for c in ("C1", "C2")]
    for ln in lanes:
        ln.update(distance_km=10.0, transit_days=0.0)
    tables = {
        "products": [
            {"product": "x", "kind": "finished", "unit_weight_kg": 1.0, "unit_value": 0.0},
            {"product": "m", "kind": "material", "unit_weight_kg": 1.0, "unit_value": 0.0},
        ],
        "suppliers": sups,
        "plants": [{"plant": "F", "product": "x", "lat": 0.0, "lon": 0.0, "unit_cost": 0.0}],
        "bill_of_materials": [{"product": "x", "material": "m", "quantity_per_unit": 1.0}],
        "dcs": dcs,
        "customers": customers,
        "demand": [{"customer": c, "product": "x", "quantity": Q / 2} for c in ("C1", "C2")],
        "modes": [{"mode": "truck", "cost_per_tonne_km": 0.0, "speed_km_per_day": 500.0, "generate_lanes": False}],
        "lanes": lanes,
        "sourcing_shares": list(pairs),
    }
    settings = {
        "inventory": {"safety_stock": False, "holding_rate": 0.0},
        "lanes": {"legs": ["supplier-plant", "plant-dc", "dc-customer"]},
    }
    return make_case(tables, settings)


def _solve(case):
    r = netopt.solve(case)
    assert r.status == "optimal" and r.verification.passed, r.verification.checks
    return r


def _share_of(r, supplier):
    s = r.tables["supplier_shares"].set_index("supplier")
    return float(s["share"].get(supplier, 0.0))


def _caught(plan, case, rule):
    """The independent check of ``plan``'s tables against ``case`` names ``rule`` as broken."""
    v = verify(case, netopt.solve(case).lanes, plan.tables, plan.objective)
    row = v.checks.set_index("rule").loc[rule]
    return row["relative_violation"] > 1e-6


def test_supplier_min_share_takes_its_share_at_the_dearer_price():
    free = _solve(_case())
    assert _share_of(free, "A") == pytest.approx(1.0)
    case = _case({"B": {"min_share": 0.3}})
    r = _solve(case)
    assert _share_of(r, "B") == pytest.approx(0.3)
    assert r.objective - free.objective == pytest.approx(0.3 * Q * (PRICE_B - PRICE_A), rel=1e-9)
    assert r.tables["supplier_shares"].set_index("supplier").loc["B", "min_share"] == pytest.approx(0.3)
    assert _caught(free, case, "min supplier share")


def test_pair_rules_at_one_site_count_beside_the_suppliers_own():
    case = _case(pairs=[{"supplier": "A", "site": "F", "max_share": 0.6}])
    r = _solve(case)
    assert _share_of(r, "A") == pytest.approx(0.6)
    assert r.tables["supplier_shares"].set_index("supplier").loc["A", "max_share"] == pytest.approx(0.6)
    assert _caught(_solve(_case()), case, "max supplier share")
    # The tighter of the supplier's own floor and the pair's counts (max of floors, min of caps).
    both = _case({"B": {"min_share": 0.2}}, pairs=[{"supplier": "B", "site": "F", "product": "m", "min_share": 0.45}])
    assert _share_of(_solve(both), "B") == pytest.approx(0.45)


def test_raising_a_floor_never_lowers_cost():
    costs = [_solve(_case({"B": {"min_share": m}})).objective for m in (0.0, 0.2, 0.5, 0.8)]
    assert costs == sorted(costs)


def test_dc_max_share_of_a_customer_region_splits_the_region():
    free = _solve(_case(two_dcs=True))
    thr = free.tables["dcs"].set_index("dc")["throughput"]
    assert thr["D1"] == pytest.approx(Q) and thr["D2"] == pytest.approx(0.0)
    case = _case(two_dcs=True, dc_extra={"D1": {"max_region_share": 0.7}})
    r = _solve(case)
    thr = r.tables["dcs"].set_index("dc")["throughput"]
    assert thr["D1"] == pytest.approx(0.7 * Q) and thr["D2"] == pytest.approx(0.3 * Q)
    assert r.objective - free.objective == pytest.approx(0.3 * Q * (3.0 - 1.0), rel=1e-9)
    assert _caught(free, case, "DC max share of a customer region (units)")


def test_share_rule_rows_are_checked_on_input():
    with pytest.raises(CaseError) as e:
        _case(
            {"B": {"min_share": 0.5, "max_share": 0.4}},
            pairs=[{"supplier": "A", "site": "C1", "max_share": 0.5}, {"supplier": "Z", "site": "F"}],
        )
    where = {(p.table, p.row, p.column) for p in e.value.problems}
    assert ("suppliers", 3, "min_share") in where
    assert ("sourcing_shares", 2, "site") in where
    assert ("sourcing_shares", 3, "supplier") in where


def test_a_supplier_taken_out_holds_no_least_share():
    # Held (warm, bounds) and redesigned (the case edited): the floor of a supplier that cannot deliver
    # does not force the site's supply to zero; the other supplier takes over and nothing is lost.
    from netopt.studies.scenarios import parse_scenarios, run_scenarios

    case = _case({"B": {"min_share": 0.3}})
    scs = parse_scenarios(
        {"scenario": [{"name": "b_out", "resolve": "both", "change": [{"kind": "site_out", "site": "B"}]}]}
    )
    run = run_scenarios(case, scenarios=scs)
    rows = run.comparison[run.comparison["scenario"].str.startswith("b_out")]
    assert len(rows) == 2 and (rows["status"] == "optimal").all()
    assert rows["lost_units"].fillna(0.0).max() == 0.0
    # Back at the base's cost with everything from A: the floor's extra cost disappears.
    free = _solve(_case())
    assert rows["total_cost"].to_numpy(float) == pytest.approx(free.objective, rel=1e-9)
