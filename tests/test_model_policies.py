"""Policy rules of the model: behaviour, hand-computed optima and monotonicity.

Every case here is small and built through ``make_case`` with explicit lanes, so each
expected number is worked out by hand in the comment beside it.  Monotonicity checks
rest on the fact that adding or tightening a constraint of a minimisation problem can
never lower its optimum (common practice, no source).  Unit value 0 and transit 0 days
unless a test says otherwise, so pipeline cost is 0; safety stock is switched off.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from netopt.api import solve
from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.engine.verify import verify
from netopt.studies.scenarios import Scenario, apply_changes


def lane(o, d, cost=None, mode="m", days=0.0, km=0.0, **kw):
    """An explicit lane row (cost None = from the mode's rate, weight and distance)."""
    row = {"origin": o, "destination": d, "mode": mode, "transit_days": float(days), "distance_km": float(km)}
    if cost is not None:
        row["cost_per_unit"] = float(cost)
    row.update(kw)
    return row


def site(code_col, code, **kw):
    return {code_col: code, "lat": 0.0, "lon": 0.0, **kw}


def flat_mode(name="m", **kw):
    return {"mode": name, "cost_per_tonne_km": 0.0, "speed_km_per_day": 1.0, "generate_lanes": False, **kw}


def build(tables: dict, **settings) -> object:
    """make_case with defaults: no suppliers/DCs unless given; ``settings`` as section={...}."""
    t = {"suppliers": [], "dcs": [], "modes": [flat_mode()], **tables}
    s = {"inventory": {"safety_stock": False}}
    for sec, vals in settings.items():
        s.setdefault(sec, {}).update(vals)
    return make_case(t, s)


def widget(value=0.0, weight=0.0, **kw):
    return {"product": "widget", "unit_weight_kg": weight, "unit_value": value, **kw}


# ----------------------------------------------------------------------------- sourcing


def sourcing_case(**policy):
    """Plants PA (demand 100) and PB (demand 50) make widgets from 2 steel each (BOM).

    Steel from S1 at 1, S2 at 2 (both region north), S3 at 4 (south); freight 0.
    Steel needed: PA 200, PB 100, total 300.
    """
    return build(
        {
            "products": [widget(), {"product": "steel", "kind": "material", "unit_weight_kg": 0.0, "unit_value": 0.0}],
            "suppliers": [
                site("supplier", s, product="steel", unit_cost=c, region=r)
                for s, c, r in [("S1", 1.0, "north"), ("S2", 2.0, "north"), ("S3", 4.0, "south")]
            ],
            "plants": [site("plant", p, product="widget") for p in ("PA", "PB")],
            "bill_of_materials": [{"product": "widget", "material": "steel", "quantity_per_unit": 2.0}],
            "customers": [site("customer", c) for c in ("CA", "CB")],
            "demand": [
                {"customer": "CA", "product": "widget", "quantity": 100.0},
                {"customer": "CB", "product": "widget", "quantity": 50.0},
            ],
            "lanes": [lane(s, p, 0.0) for s in ("S1", "S2", "S3") for p in ("PA", "PB")]
            + [lane("PA", "CA", 0.0), lane("PB", "CB", 0.0)],
        },
        policy=policy,
    )


def share_unit_cost(s: float) -> float:
    """Cheapest steel price per unit when no supplier may exceed share s (prices 1, 2, 4).

    Fill the cheapest supplier to s, the next to min(s, 1 − s), the rest from the dearest.
    """
    a = min(s, 1.0)
    b = min(s, 1.0 - a)
    return 1.0 * a + 2.0 * b + 4.0 * (1.0 - a - b)


def test_tighter_supplier_share_never_lowers_cost_and_cap_holds_per_site_and_material():
    # Hand computation: supply cost = 300 units × share_unit_cost(s):
    # s=1 → 1.0, 0.7 → 1.3, 0.5 → 1.5, 0.4 → 0.4+0.8+0.8 = 2.0, 0.34 → 0.34+0.68+1.28 = 2.30.
    last = -np.inf
    for s in (1.0, 0.7, 0.5, 0.4, 0.34):
        res = solve(sourcing_case(max_supplier_share=s))
        assert res.status == "optimal" and res.verification.passed
        assert res.cost["supply"] == pytest.approx(300.0 * share_unit_cost(s), rel=1e-7)
        assert res.objective >= last - 1e-6
        last = res.objective
        sh = res.tables["supplier_shares"]
        assert set(sh["site"]) == {"PA", "PB"} and set(sh["product"]) == {"steel"}
        assert (sh["share"] <= s + 1e-7).all()
        # shares are per (site, material): they add up to 1 at each site
        assert sh.groupby(["site", "product"])["share"].sum().to_numpy() == pytest.approx([1.0, 1.0])
        # the share column is recomputed here from the quantities
        q = sh.groupby(["site", "product"])["quantity"].transform("sum")
        assert (sh["quantity"] / q).to_numpy() == pytest.approx(sh["share"].to_numpy())


def test_supplier_share_below_one_over_supplier_count_is_infeasible_and_diagnosed():
    # Hand computation: 3 suppliers × 0.3 = 0.9 < 1, so no split can satisfy the cap.
    res = solve(sourcing_case(max_supplier_share=0.3))
    assert res.status == "infeasible"
    assert "max_supplier_share" in set(res.diagnosis["rule"])


def test_region_share_respected():
    # Regions: north = {S1, S2}, south = {S3}. Cap 0.6 per region: north 0.6 from S1 (price 1),
    # south 0.4 from S3 (price 4) → 0.6 + 1.6 = 2.2 per unit × 300 = 660.
    res = solve(sourcing_case(max_region_share=0.6))
    assert res.status == "optimal" and res.verification.passed
    assert res.cost["supply"] == pytest.approx(660.0, rel=1e-7)
    sh = res.tables["supplier_shares"]
    by_region = sh.groupby(["site", "product", "region"])["share"].sum()
    assert (by_region <= 0.6 + 1e-7).all()
    assert by_region.xs("south", level="region").to_numpy() == pytest.approx([0.4, 0.4])


def _with(case, table: str, key: str, code: str, column: str, value: float):
    t = case.tables[table]
    t.loc[t[key] == code, column] = value
    return case


@pytest.mark.parametrize(
    "policy,own,unit",
    [
        (1.0, 0.5, 0.5 * 1 + 0.5 * 2),  # S1's own cap binds: half from S1 (1), half from S2 (2)
        (0.7, 0.8, 0.7 * 1 + 0.3 * 2),  # the policy's 0.7 is the smaller and counts
        (0.6, 0.3, 0.3 * 1 + 0.6 * 2 + 0.1 * 4),  # own 0.3 for S1, policy 0.6 for S2, rest from S3
    ],
)
def test_a_suppliers_own_share_cap_beside_the_policy(policy, own, unit):
    """suppliers.max_share caps that supplier at every site; the smaller of it and the policy counts.
    Hand computation: supply cost = 300 units of steel × the unit price of the cheapest split."""
    case = _with(sourcing_case(max_supplier_share=policy), "suppliers", "supplier", "S1", "max_share", own)
    res = solve(case)
    assert res.status == "optimal" and res.verification.passed
    assert res.cost["supply"] == pytest.approx(300.0 * unit, rel=1e-7)
    sh = res.tables["supplier_shares"].set_index(["site", "supplier"])
    for site_ in ("PA", "PB"):
        assert sh.loc[(site_, "S1"), "share"] == pytest.approx(min(own, policy), abs=1e-7)
        assert sh.loc[(site_, "S1"), "max_share"] == pytest.approx(min(own, policy))
        assert sh.loc[(site_, "S2"), "max_share"] == pytest.approx(policy)


def test_a_sites_own_share_cap_binds_at_that_site_only():
    """plants.max_supplier_share = 0.5 at PA: PA buys 200 steel half from S1, half from S2 (1.5/unit);
    PB keeps its 100 all from S1 (1/unit): 300 + 100 = 400."""
    case = _with(sourcing_case(), "plants", "plant", "PA", "max_supplier_share", 0.5)
    res = solve(case)
    assert res.status == "optimal" and res.verification.passed
    assert res.cost["supply"] == pytest.approx(400.0, rel=1e-7)
    sh = res.tables["supplier_shares"].set_index(["site", "supplier"])
    assert sh.loc[("PA", "S1"), "share"] == pytest.approx(0.5, abs=1e-7)
    assert sh.loc[("PB", "S1"), "share"] == pytest.approx(1.0, abs=1e-7)
    assert set(sh.xs("PA", level="site")["max_share"]) == {0.5}


def test_the_independent_check_reads_the_own_caps():
    """A plan made without S1's own cap breaks it: the check of that plan against the capped case fails."""
    free = solve(sourcing_case())
    capped = _with(sourcing_case(), "suppliers", "supplier", "S1", "max_share", 0.5)
    v = verify(capped, free.lanes, free.tables, free.objective)
    assert not v.passed and v.largest_violation_rule == "max supplier share"


def test_share_caps_as_scenario_changes():
    """kind = "share_cap" sets a supplier's own cap (supplier=) or a site's (site=): the same hand figures."""
    base = sourcing_case()
    by_supplier = apply_changes(base, Scenario("s1", [{"kind": "share_cap", "supplier": "S1", "max_share": 0.5}]))
    assert solve(by_supplier).cost["supply"] == pytest.approx(450.0, rel=1e-7)
    by_site = apply_changes(base, Scenario("pb", [{"kind": "share_cap", "site": "PB", "max_share": 0.4}]))
    # PB: 0.4 × 1 + 0.4 × 2 + 0.2 × 4 = 2.0/unit × 100; PA 200 × 1.
    assert solve(by_site).cost["supply"] == pytest.approx(400.0, rel=1e-7)
    with pytest.raises(CaseError) as e:
        apply_changes(base, Scenario("bad", [{"kind": "share_cap", "site": "S1", "max_share": 1.5}]))
    assert "max_share" in str(e.value)
    with pytest.raises(CaseError) as e:
        apply_changes(base, Scenario("bad", [{"kind": "share_cap", "site": "S1", "max_share": 0.5}]))
    assert "not a plant or DC" in str(e.value)


@pytest.mark.parametrize("k,min_share,unit", [(2, 0.1, 0.9 * 1 + 0.1 * 2), (3, 0.2, 0.6 * 1 + 0.2 * 2 + 0.2 * 4)])
def test_min_active_suppliers(k, min_share, unit):
    # Hand computation: the cheapest way to keep k suppliers active at share ≥ min_share is to
    # give the k−1 dearer ones exactly min_share: k=2 → 0.9·1 + 0.1·2 = 1.1; k=3 → 0.6 + 0.4 + 0.8 = 1.8.
    base = solve(sourcing_case())
    res = solve(sourcing_case(min_active_suppliers=k, min_share_when_active=min_share), mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed
    assert res.cost["supply"] == pytest.approx(300.0 * unit, rel=1e-7)
    assert res.objective >= base.objective
    sh = res.tables["supplier_shares"]
    active = sh[sh["share"] >= min_share - 1e-7].groupby(["site", "product"])["supplier"].nunique()
    assert len(active) == 2 and (active >= k).all()


# ----------------------------------------------------------------------------- service


def service_case(target: float, classes: list[dict] | None = None):
    """Customer CU (100 units) via DC FAST (1 day, cost 10/unit) or DC SLOW (5 days, cost 2/unit)."""
    tables = {
        "products": [widget()],
        "plants": [site("plant", "PL", product="widget")],
        "dcs": [site("dc", "FAST"), site("dc", "SLOW")],
        "customers": [site("customer", "CU", service_class="standard" if classes is None else "express")],
        "demand": [{"customer": "CU", "product": "widget", "quantity": 100.0}],
        "lanes": [
            lane("PL", "FAST", 0.0),
            lane("PL", "SLOW", 0.0),
            lane("FAST", "CU", 10.0, days=1.0),
            lane("SLOW", "CU", 2.0, days=5.0),
        ],
    }
    if classes is not None:
        tables["service_classes"] = classes
    return build(tables, policy={"service_max_days": 2.0, "service_target_share": target})


def test_higher_service_target_never_lowers_cost():
    # Hand computation: a share τ must come through FAST (1 day ≤ 2-day window):
    # cost = 100 × (10 τ + 2 (1 − τ)) = 200 + 800 τ.
    last = -np.inf
    for tau in (0.0, 0.25, 0.5, 0.9, 1.0):
        res = solve(service_case(tau))
        assert res.status == "optimal" and res.verification.passed
        assert res.objective == pytest.approx(200.0 + 800.0 * tau, rel=1e-7)
        assert res.objective >= last - 1e-6
        last = res.objective
        sv = res.tables["service"].set_index("customer")
        assert sv.loc["CU", "share_within_window"] >= tau - 1e-7


def test_service_class_table_overrides_settings():
    # The class "express" (window 2 days, target 0.75) replaces the settings' target 0:
    # cost = 200 + 800 × 0.75 = 800.
    res = solve(service_case(0.0, classes=[{"service_class": "express", "max_days": 2.0, "target_share": 0.75}]))
    assert res.status == "optimal"
    assert res.objective == pytest.approx(800.0, rel=1e-7)


def short_fast_case(late_cost: float = 0.0, allow_unmet: bool = True):
    """The service case with DC FAST limited to 40 units/yr and a 0.75 target: only 40 of the 75
    units the target asks for can arrive within the window.  Lost demand costs 1000/unit."""
    tables = {
        "products": [widget()],
        "plants": [site("plant", "PL", product="widget")],
        "dcs": [site("dc", "FAST", capacity=40.0), site("dc", "SLOW")],
        "customers": [site("customer", "CU", service_class="express")],
        "demand": [{"customer": "CU", "product": "widget", "quantity": 100.0}],
        "service_classes": [
            {"service_class": "express", "max_days": 2.0, "target_share": 0.75, "late_cost_per_unit": late_cost}
        ],
        "lanes": [
            lane("PL", "FAST", 0.0),
            lane("PL", "SLOW", 0.0),
            lane("FAST", "CU", 10.0, days=1.0),
            lane("SLOW", "CU", 2.0, days=5.0),
        ],
    }
    return build(tables, policy={"allow_unmet_demand": allow_unmet, "unmet_penalty_per_unit": 1000.0})


def test_losing_demand_never_helps_a_service_target():
    # The target counts on-time units against demand (100), not against what is delivered.  Measured
    # against deliveries, the model could meet 0.75 by delivering only 40 / 0.75 = 53.3 units and losing
    # 46.7.  Measured against demand, 75 on-time units are needed and FAST carries 40: no plan meets a
    # hard target, lost demand allowed or not.
    res = solve(short_fast_case(late_cost=0.0, allow_unmet=True))
    assert res.status == "infeasible"
    assert "service_window" in set(res.diagnosis["rule"])
    short = res.diagnosis[res.diagnosis["rule"] == "service_window"]["amount"].sum()
    assert short == pytest.approx(35.0, rel=1e-6)  # 75 required − 40 possible


def test_priced_service_shortfall_costs_late_delivery_not_lost_demand():
    # Late delivery priced at κ = 20/unit: each unit through FAST costs 8 more than through SLOW and
    # saves 20 of late cost, so FAST is filled (40) and SLOW carries the other 60; the 75 − 40 = 35
    # units short of the target are paid as late: cost = 40 × 10 + 60 × 2 + 35 × 20 = 1220 (all
    # through SLOW would cost 200 + 75 × 20 = 1700; losing a unit costs 1000), nothing lost.
    res = solve(short_fast_case(late_cost=20.0))
    assert res.status == "optimal" and res.verification.passed
    assert res.objective == pytest.approx(1220.0, rel=1e-7)
    assert res.cost["late_delivery"] == pytest.approx(700.0, rel=1e-7)
    assert res.tables["unmet"].empty
    cheap = solve(short_fast_case(late_cost=5.0))  # κ = 5 < 8: all through SLOW, 75 late: 200 + 375 = 575
    assert cheap.objective == pytest.approx(575.0, rel=1e-7) and cheap.verification.passed
    sv = res.tables["service"].set_index("customer").loc["CU"]
    assert sv["late_units"] == pytest.approx(35.0) and sv["share_within_window"] == pytest.approx(0.40)
    kpi = dict(zip(res.tables["kpis"]["kpi"], res.tables["kpis"]["value"]))
    assert kpi["share_within_service_window"] == pytest.approx(0.40)  # on-time ÷ demand


# ----------------------------------------------------------------------------- DC decisions


def three_dc_case(force: dict[str, str] | None = None):
    """Customers C1..C4 (demand 40, 30, 20, 10) and DCs A, B, C with fixed costs 300, 200, 250.

    Lane costs DC→customer differ per pair; plant→DC lanes cost 1.
    """
    force = force or {}
    fixed = {"A": 300.0, "B": 200.0, "C": 250.0}
    cost = {
        ("A", "C1"): 1,
        ("A", "C2"): 6,
        ("A", "C3"): 9,
        ("A", "C4"): 4,
        ("B", "C1"): 7,
        ("B", "C2"): 1,
        ("B", "C3"): 3,
        ("B", "C4"): 8,
        ("C", "C1"): 5,
        ("C", "C2"): 4,
        ("C", "C3"): 1,
        ("C", "C4"): 1,
    }
    dem = {"C1": 40.0, "C2": 30.0, "C3": 20.0, "C4": 10.0}
    return build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "dcs": [site("dc", d, fixed_cost=f, force=force.get(d, "")) for d, f in fixed.items()],
            "customers": [site("customer", c) for c in dem],
            "demand": [{"customer": c, "product": "widget", "quantity": q} for c, q in dem.items()],
            "lanes": [lane("PL", d, 1.0) for d in fixed] + [lane(d, c, v) for (d, c), v in cost.items()],
        }
    )


def _brute_three_dc(must_open=(), must_close=()):
    """Enumerate the 7 non-empty subsets by hand rule: each customer from its cheapest open DC."""
    fixed = {"A": 300.0, "B": 200.0, "C": 250.0}
    cost = {"A": [1, 6, 9, 4], "B": [7, 1, 3, 8], "C": [5, 4, 1, 1]}
    dem = [40.0, 30.0, 20.0, 10.0]
    best = np.inf
    for k in range(1, 4):
        for sub in itertools.combinations("ABC", k):
            if set(must_open) - set(sub) or set(must_close) & set(sub):
                continue
            v = sum(fixed[d] for d in sub) + sum(q * (1 + min(cost[d][j] for d in sub)) for j, q in enumerate(dem))
            best = min(best, v)
    return best


def test_forcing_a_dc_open_or_closed_never_lowers_cost():
    # Uncapacitated: each customer takes its cheapest open DC, so every subset's cost is
    # fixed + Σ demand × (1 + cheapest lane) — enumerated by hand in _brute_three_dc.
    base = solve(three_dc_case(), mip_gap=1e-9)
    assert base.objective == pytest.approx(_brute_three_dc(), rel=1e-9)
    opened = set(base.tables["dcs"].loc[base.tables["dcs"]["open"], "dc"])
    for d in "ABC":
        for how in ("open", "closed"):
            res = solve(three_dc_case({d: how}), mip_gap=1e-9)
            assert res.status == "optimal" and res.verification.passed
            assert res.objective >= base.objective - 1e-6
            row = res.tables["dcs"].set_index("dc").loc[d]
            assert bool(row["open"]) == (how == "open")
            exp = _brute_three_dc(must_open=(d,) if how == "open" else (), must_close=(d,) if how == "closed" else ())
            assert res.objective == pytest.approx(exp, rel=1e-9)
            if (how == "open") == (d in opened):
                assert res.objective == pytest.approx(base.objective, rel=1e-9)


def sized_case(demand: float):
    """DC DX with sizes S (100 units, 100), M (200, 150), L (400, 400), lane cost 1;
    DC DY unlimited, fixed 0, lane cost 3."""
    return build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "dcs": [site("dc", "DX", fixed_cost=999.0, capacity=1.0), site("dc", "DY")],
            "dc_sizes": [
                {"dc": "DX", "size": s, "capacity": c, "fixed_cost": f}
                for s, c, f in [("S", 100.0, 100.0), ("M", 200.0, 150.0), ("L", 400.0, 400.0)]
            ],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": demand}],
            "lanes": [lane("PL", "DX", 0.0), lane("PL", "DY", 0.0), lane("DX", "CU", 1.0), lane("DY", "CU", 3.0)],
        }
    )


@pytest.mark.parametrize(
    "demand,size,cost",
    [
        # 180: M 150 + 180 = 330; S 100 + 100 + 80×3 = 440; L 400 + 180 = 580; none 540 → M, 330.
        (180.0, "M", 330.0),
        # 280: M 150 + 200 + 80×3 = 590; L 400 + 280 = 680; S 100 + 100 + 180×3 = 740; none 840 → M, 590.
        # S+M together would cost 250 + 280 = 530 — cheaper, so only "at most one size" prevents it.
        (280.0, "M", 590.0),
        # 390: L 400 + 390 = 790; M 150 + 200 + 190×3 = 920 → L, 790.
        (390.0, "L", 790.0),
    ],
)
def test_dc_sizes_pick_at_most_one_size(demand, size, cost):
    res = solve(sized_case(demand), mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed
    assert res.objective == pytest.approx(cost, rel=1e-9)
    dx = res.tables["dcs"].set_index("dc").loc["DX"]
    assert dx["open"] and dx["size"] == size
    sizes = {"S": (100.0, 100.0), "M": (200.0, 150.0), "L": (400.0, 400.0)}
    assert (dx["capacity"], dx["fixed_cost"]) == sizes[size]
    assert dx["throughput"] <= dx["capacity"] + 1e-7


def closing_case(closing_cost: float):
    """Existing DC OLD (fixed 1000, lane 1/unit) or candidate NEW (fixed 200, lane 2/unit); demand 100."""
    return build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "dcs": [
                site("dc", "OLD", status="existing", fixed_cost=1000.0, closing_cost=closing_cost),
                site("dc", "NEW", fixed_cost=200.0),
            ],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": 100.0}],
            "lanes": [lane("PL", "OLD", 0.0), lane("PL", "NEW", 0.0), lane("OLD", "CU", 1.0), lane("NEW", "CU", 2.0)],
        }
    )


@pytest.mark.parametrize(
    "closing,decision,total",
    [
        # keep OLD: 1000 + 100 = 1100; close it and open NEW: 300 + 200 + 200 = 700 → close.
        (300.0, "close", 700.0),
        # closing 2000: keep 1100 < 2000 + 400 = 2400 → keep, nothing charged for closing.
        (2000.0, "keep", 1100.0),
    ],
)
def test_closing_an_existing_dc_charges_its_closing_cost(closing, decision, total):
    res = solve(closing_case(closing), mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed
    assert res.objective == pytest.approx(total, rel=1e-9)
    assert res.tables["dcs"].set_index("dc").loc["OLD", "decision"] == decision
    assert res.cost["dc_closing"] == pytest.approx(closing if decision == "close" else 0.0)


# ----------------------------------------------------------------------------- inventory in transit


def test_pipeline_inventory_cost_is_littles_law():
    # Little's law L = λW (Little 1961, Oper. Res. 9(3):383–387; trade-facts §5): units in
    # transit = flow × transit time, annual cost = flow × value × holding rate × days / 365.
    # widget: 1000/yr, value 80, rate 0.25 (settings default), 7 days → 1000·80·0.25·7/365
    # gadget: 500/yr, value 45, its own rate 0.2, 3 days → 500·45·0.2·3/365
    case = build(
        {
            "products": [
                widget(value=80.0),
                {"product": "gadget", "unit_weight_kg": 0.0, "unit_value": 45.0, "holding_rate": 0.2},
            ],
            "plants": [site("plant", "PL", product="widget"), site("plant", "PL", product="gadget")],
            "customers": [site("customer", "CW"), site("customer", "CG")],
            "demand": [
                {"customer": "CW", "product": "widget", "quantity": 1000.0},
                {"customer": "CG", "product": "gadget", "quantity": 500.0},
            ],
            "lanes": [lane("PL", "CW", 0.0, days=7.0), lane("PL", "CG", 0.0, days=3.0)],
        },
        inventory={"holding_rate": 0.25},
    )
    res = solve(case)
    assert res.status == "optimal" and res.verification.passed
    w = 1000 * 80 * 0.25 * 7 / 365
    g = 500 * 45 * 0.2 * 3 / 365
    assert res.cost["pipeline_inventory"] == pytest.approx(w + g, rel=1e-12)
    f = res.tables["flows"].set_index("product")
    assert f.loc["widget", "pipeline_cost"] == pytest.approx(w, rel=1e-12)
    assert f.loc["gadget", "pipeline_cost"] == pytest.approx(g, rel=1e-12)
    k = res.tables["kpis"].set_index("kpi")["value"]
    # L = λW in units: (1000·7 + 500·3)/365 units on the way on average.
    assert k["in_transit_inventory_units"] == pytest.approx((1000 * 7 + 500 * 3) / 365, rel=1e-12)
    # Same cost, computed the other way round (trade-facts §5): average units × value × rate.
    assert k["in_transit_inventory_value"] == pytest.approx((1000 * 7 * 80 + 500 * 3 * 45) / 365, rel=1e-12)


# ----------------------------------------------------------------------------- single sourcing, modes


def single_source_case(on: bool):
    """DC D1 (capacity 60, lanes 1/unit) and D2 (unlimited, lanes 5/unit); C1, C2 demand 50 each."""
    return build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "dcs": [site("dc", "D1", capacity=60.0), site("dc", "D2")],
            "customers": [site("customer", c) for c in ("C1", "C2")],
            "demand": [{"customer": c, "product": "widget", "quantity": 50.0} for c in ("C1", "C2")],
            "lanes": [lane("PL", "D1", 0.0), lane("PL", "D2", 0.0)]
            + [lane("D1", c, 1.0) for c in ("C1", "C2")]
            + [lane("D2", c, 5.0) for c in ("C1", "C2")],
        },
        policy={"single_sourcing": on},
    )


def test_single_sourcing_one_origin_per_customer_and_product():
    # Split allowed: D1 fills its 60 units (60 × 1) and D2 the other 40 (× 5) = 260; since 60 is not
    # a sum of whole demands, one customer gets two origins. Single sourcing: D1 serves one customer
    # (50 × 1), D2 the other (50 × 5) = 300.
    split = solve(single_source_case(False))
    assert split.objective == pytest.approx(260.0, rel=1e-9)
    last = split.tables["flows"].query("destination_kind == 'customer'")
    assert last.groupby(["destination", "product"])["origin"].nunique().max() == 2
    one = solve(single_source_case(True), mip_gap=1e-9)
    assert one.status == "optimal" and one.verification.passed
    assert one.objective == pytest.approx(300.0, rel=1e-9)
    last = one.tables["flows"].query("destination_kind == 'customer'")
    n = last.groupby(["destination", "product"])["origin"].nunique()
    assert len(n) == 2 and (n == 1).all()


def test_single_sourcing_with_lost_demand_lets_the_one_origin_deliver_part():
    # D1 (capacity 60, 1/unit) and D2 (capacity 30, 5/unit); C1, C2 demand 50; loss allowed at 100/unit.
    # Single sourcing: D1 → one customer 50 × 1 = 50; D2 → the other 30 × 5 = 150 and 20 lost × 100 = 2000;
    # total 2200. (All-or-nothing per customer would lose 50 × 100 instead: 5050.)
    case = build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "dcs": [site("dc", "D1", capacity=60.0), site("dc", "D2", capacity=30.0)],
            "customers": [site("customer", c) for c in ("C1", "C2")],
            "demand": [{"customer": c, "product": "widget", "quantity": 50.0} for c in ("C1", "C2")],
            "lanes": [lane("PL", "D1", 0.0), lane("PL", "D2", 0.0)]
            + [lane("D1", c, 1.0) for c in ("C1", "C2")]
            + [lane("D2", c, 5.0) for c in ("C1", "C2")],
        },
        policy={"single_sourcing": True, "allow_unmet_demand": True, "unmet_penalty_per_unit": 100.0},
    )
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed
    assert res.objective == pytest.approx(2200.0, rel=1e-9)
    assert res.tables["unmet"]["lost_units"].sum() == pytest.approx(20.0)
    last = res.tables["flows"].query("destination_kind == 'customer'")
    assert (last.groupby(["destination", "product"])["origin"].nunique() == 1).all()


def one_mode_case(on: bool):
    """Plant → customer (demand 100) by road (1/unit, at most 60/yr) or rail (3/unit, no limit)."""
    return build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget")],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": 100.0}],
            "modes": [flat_mode("road"), flat_mode("rail")],
            "lanes": [lane("PL", "CU", 1.0, mode="road", capacity=60.0), lane("PL", "CU", 3.0, mode="rail")],
        },
        policy={"one_mode_per_lane": on},
    )


def test_one_mode_per_lane():
    # Both modes: road 60 × 1 + rail 40 × 3 = 180. One mode: road cannot carry 100, so rail 100 × 3 = 300.
    both = solve(one_mode_case(False))
    assert both.objective == pytest.approx(180.0, rel=1e-9)
    assert both.tables["flows"]["mode"].nunique() == 2
    one = solve(one_mode_case(True), mip_gap=1e-9)
    assert one.status == "optimal" and one.verification.passed
    assert one.objective == pytest.approx(300.0, rel=1e-9)
    assert (one.tables["flows"].groupby(["origin", "destination"])["mode"].nunique() <= 1).all()
    assert set(one.tables["flows"]["mode"]) == {"rail"}


def test_one_mode_per_lane_carrying_several_materials():
    # 100 widgets, each 10 steel + 10 bolts, both from supplier SS over one lane SS→PW: 2000 units
    # on the lane. Mode x: 1/unit, 2 days; mode y: 2/unit, 0 days, at most 5000/yr (kept: faster).
    # One mode per lane → x for both materials: freight 2000 × 1 + purchase 2000 × 1 = 4000.
    mat = lambda p: {"product": p, "kind": "material", "unit_weight_kg": 0.0, "unit_value": 0.0}  # noqa: E731
    case = build(
        {
            "products": [widget(), mat("steel"), mat("bolt")],
            "suppliers": [site("supplier", "SS", product=m, unit_cost=1.0) for m in ("steel", "bolt")],
            "plants": [site("plant", "PW", product="widget")],
            "bill_of_materials": [
                {"product": "widget", "material": m, "quantity_per_unit": 10.0} for m in ("steel", "bolt")
            ],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": 100.0}],
            "modes": [flat_mode("x"), flat_mode("y")],
            "lanes": [
                lane("SS", "PW", 1.0, mode="x", days=2.0),
                lane("SS", "PW", 2.0, mode="y", capacity=5000.0),
                lane("PW", "CU", 0.0, mode="x"),
            ],
        },
        policy={"one_mode_per_lane": True},
    )
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed
    assert res.objective == pytest.approx(4000.0, rel=1e-9)
    f = res.tables["flows"]
    assert f.loc[f["destination"] == "PW", "quantity"].sum() == pytest.approx(2000.0)


@pytest.mark.parametrize("prune", [True, False])
def test_one_mode_per_lane_with_product_specific_costs(prune):
    # One lane PL→CU, 10 widgets and 10 gadgets. widget: x 2, y 1 per unit; gadget: x 1, y 3.
    # Free choice: widget by y, gadget by x = 10 + 10 = 20. One mode for the lane:
    # all x = 20 + 10 = 30, all y = 10 + 30 = 40 → x, 30. Dropping "dominated" modes per product
    # must not change this (y beats x only for widgets), with or without lanes.prune_dominated.
    def case(on):
        return build(
            {
                "products": [widget(), {"product": "gadget", "unit_weight_kg": 0.0, "unit_value": 0.0}],
                "plants": [site("plant", "PL", product="widget"), site("plant", "PL", product="gadget")],
                "customers": [site("customer", "CU")],
                "demand": [{"customer": "CU", "product": p, "quantity": 10.0} for p in ("widget", "gadget")],
                "modes": [flat_mode("x"), flat_mode("y")],
                "lanes": [
                    lane("PL", "CU", 2.0, mode="x", product="widget"),
                    lane("PL", "CU", 1.0, mode="y", product="widget"),
                    lane("PL", "CU", 1.0, mode="x", product="gadget"),
                    lane("PL", "CU", 3.0, mode="y", product="gadget"),
                ],
            },
            policy={"one_mode_per_lane": on},
            lanes={"prune_dominated": prune},
        )

    assert solve(case(False)).objective == pytest.approx(20.0, rel=1e-9)
    one = solve(case(True), mip_gap=1e-9)
    assert one.status == "optimal" and one.verification.passed
    assert one.objective == pytest.approx(30.0, rel=1e-9)
    assert set(one.tables["flows"]["mode"]) == {"x"}


# ----------------------------------------------------------------------------- carbon


def carbon_case(**policy):
    """1000 widgets of 10 kg over 1000 km by road or rail (freight and CO2 from the mode rates).

    road: 0.1 /t·km → 10/1000 × 1000 × 0.1 = 1.0 per unit; 0.1 kg/t·km → 1.0 kg CO2e per unit.
    rail: 0.05 /t·km + 2 per unit → 2.5 per unit; 0.02 kg/t·km → 0.2 kg per unit.
    """
    modes = [
        {
            "mode": "road",
            "cost_per_tonne_km": 0.1,
            "speed_km_per_day": 500.0,
            "co2_kg_per_tonne_km": 0.1,
            "generate_lanes": False,
        },
        {
            "mode": "rail",
            "cost_per_tonne_km": 0.05,
            "fixed_cost_per_unit": 2.0,
            "speed_km_per_day": 500.0,
            "co2_kg_per_tonne_km": 0.02,
            "generate_lanes": False,
        },
    ]
    return build(
        {
            "products": [widget(weight=10.0)],
            "plants": [site("plant", "PL", product="widget")],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": 1000.0}],
            "modes": modes,
            "lanes": [lane("PL", "CU", None, mode=m, days=2.0, km=1000.0) for m in ("road", "rail")],
        },
        policy=policy,
    )


def test_co2_cap_respected_and_raises_cost_when_binding():
    # No cap: all road, cost 1000, 1.0 t CO2e. Cap 0.6 t: road r units with r·1.0 + (1000 − r)·0.2 ≤ 600 kg
    # → r = 500, cost 500 × 1 + 500 × 2.5 = 1750. Cap 0.1 t < 1000 × 0.2 kg: infeasible.
    free = solve(carbon_case())
    assert free.objective == pytest.approx(1000.0, rel=1e-9)
    assert free.tables["kpis"].set_index("kpi").loc["co2e_tonnes", "value"] == pytest.approx(1.0)
    loose = solve(carbon_case(co2_cap_tonnes=2.0))
    assert loose.objective == pytest.approx(1000.0, rel=1e-9)
    capped = solve(carbon_case(co2_cap_tonnes=0.6))
    assert capped.status == "optimal" and capped.verification.passed
    assert capped.objective == pytest.approx(1750.0, rel=1e-9)
    assert capped.tables["flows"]["co2_kg"].sum() / 1000 <= 0.6 + 1e-9
    assert capped.objective > free.objective
    assert solve(carbon_case(co2_cap_tonnes=0.1)).status == "infeasible"


@pytest.mark.parametrize("price,mode", [(1800.0, "road"), (1950.0, "rail")])
def test_carbon_price_changes_mode_choice(price, mode):
    # Break-even: rail costs 1.5 more per unit and saves 0.8 kg = 0.0008 t → 1.5 / 0.0008 = 1875 per t.
    # Below it road stays (cost 1 + 0.001 t × price per unit), above it rail wins (2.5 + 0.0002 × price).
    res = solve(carbon_case(carbon_price_per_tonne=price))
    assert res.status == "optimal" and res.verification.passed
    assert set(res.tables["flows"]["mode"]) == {mode}
    per_unit = 1.0 + 0.001 * price if mode == "road" else 2.5 + 0.0002 * price
    assert res.objective == pytest.approx(1000 * per_unit, rel=1e-9)
    assert res.cost["carbon"] == pytest.approx(1000 * (0.001 if mode == "road" else 0.0002) * price, rel=1e-9)


# ----------------------------------------------------------------------------- unmet demand, infeasibility


def short_case(via_dc: bool = False, **policy):
    """Demand 1000 at CU, lane cost 1/unit; only 800 can be made (plant cap) or moved (DC cap)."""
    tables = {
        "products": [widget(value=30.0)],
        "plants": [site("plant", "PL", product="widget", capacity=1e9 if via_dc else 800.0)],
        "customers": [site("customer", "CU")],
        "demand": [{"customer": "CU", "product": "widget", "quantity": 1000.0}],
        "lanes": [lane("PL", "CU", 1.0)],
    }
    if via_dc:
        tables["dcs"] = [site("dc", "DC", capacity=800.0)]
        tables["lanes"] = [lane("PL", "DC", 0.0), lane("DC", "CU", 1.0)]
    return build(tables, policy=policy)


@pytest.mark.parametrize(
    "penalty,lost,total",
    [
        (50.0, 200.0, 800 * 1 + 200 * 50),  # serving costs 1 < 50: serve the 800 possible, lose 200
        (0.5, 1000.0, 1000 * 0.5),  # losing costs 0.5 < 1: lose everything
        (0.0, 200.0, 800 * 1 + 200 * 60),  # 0 = 2 × unit value (schema) = 60 per lost unit
    ],
)
def test_unmet_demand_only_when_allowed_at_the_penalty(penalty, lost, total):
    res = solve(short_case(allow_unmet_demand=True, unmet_penalty_per_unit=penalty))
    assert res.status == "optimal" and res.verification.passed
    assert res.tables["unmet"]["lost_units"].sum() == pytest.approx(lost)
    assert res.objective == pytest.approx(total, rel=1e-9)
    assert res.cost["unmet_penalty"] == pytest.approx(lost * (penalty or 60.0), rel=1e-9)


def test_no_unmet_demand_when_it_can_be_served():
    # Capacity 800 ≥ demand → nothing lost even though loss is allowed at 50.
    case = build(
        {
            "products": [widget()],
            "plants": [site("plant", "PL", product="widget", capacity=800.0)],
            "customers": [site("customer", "CU")],
            "demand": [{"customer": "CU", "product": "widget", "quantity": 700.0}],
            "lanes": [lane("PL", "CU", 1.0)],
        },
        policy={"allow_unmet_demand": True, "unmet_penalty_per_unit": 50.0},
    )
    res = solve(case)
    assert len(res.tables["unmet"]) == 0 and res.objective == pytest.approx(700.0)


@pytest.mark.parametrize("via_dc", [False, True])
def test_infeasible_case_names_what_cannot_be_met(via_dc):
    # Demand 1000 against 800 of plant (or DC) capacity with no loss allowed: infeasible,
    # and the elastic re-solve must account for the 200 missing units (as lost demand of
    # CU/widget, or as excess over the DC throughput row).
    res = solve(short_case(via_dc=via_dc))
    assert res.status == "infeasible" and not res.has_solution
    d = res.diagnosis
    assert d is not None and len(d)
    binding = d["meaning"].str.startswith("binding capacity")  # the capacity that caused it (issue 13, defect 9)
    assert d.loc[~binding, "amount"].sum() == pytest.approx(200.0, rel=1e-6)
    for _, r in d[~binding].iterrows():
        if r["rule"] == "demand_met":
            assert "CU" in r["where"] and "widget" in r["where"]
        else:
            assert r["rule"] == "dc_throughput" and "DC" in r["where"]
    if not via_dc:  # the plant's capacity (800) is named, 200 units/yr short
        assert d.loc[binding, "rule"].tolist() == ["plant_capacity"]
        assert d.loc[binding, "amount"].iloc[0] == pytest.approx(200.0, rel=1e-6)


# ----------------------------------------------------------------------------- bill of materials


def test_bill_of_materials_inflow_equals_bom_times_production():
    # widget uses 10 steel + 0.5 resin, gadget 3 steel: plant PW makes 100 widgets → 1000 steel, 50 resin;
    # plant PG makes 40 gadgets → 120 steel.
    mat = lambda p: {"product": p, "kind": "material", "unit_weight_kg": 0.0, "unit_value": 0.0}  # noqa: E731
    case = build(
        {
            "products": [
                widget(),
                {"product": "gadget", "unit_weight_kg": 0.0, "unit_value": 0.0},
                mat("steel"),
                mat("resin"),
            ],
            "suppliers": [
                site("supplier", "SS", product="steel", unit_cost=1.0),
                site("supplier", "SR", product="resin", unit_cost=3.0),
            ],
            "plants": [
                site("plant", "PW", product="widget", unit_cost=5.0),
                site("plant", "PG", product="gadget", unit_cost=2.0),
            ],
            "bill_of_materials": [
                {"product": "widget", "material": "steel", "quantity_per_unit": 10.0},
                {"product": "widget", "material": "resin", "quantity_per_unit": 0.5},
                {"product": "gadget", "material": "steel", "quantity_per_unit": 3.0},
            ],
            "customers": [site("customer", "CU")],
            "demand": [
                {"customer": "CU", "product": "widget", "quantity": 100.0},
                {"customer": "CU", "product": "gadget", "quantity": 40.0},
            ],
            "lanes": [
                lane("SS", "PW", 0.0),
                lane("SS", "PG", 0.0),
                lane("SR", "PW", 0.0),
                lane("PW", "CU", 0.0),
                lane("PG", "CU", 0.0),
            ],
        }
    )
    res = solve(case)
    assert res.status == "optimal" and res.verification.passed
    prod = res.tables["production"].set_index(["plant", "product"])["quantity"]
    assert prod[("PW", "widget")] == pytest.approx(100.0) and prod[("PG", "gadget")] == pytest.approx(40.0)
    f = res.tables["flows"]
    got = f[f["destination_kind"] == "plant"].groupby(["destination", "product"])["quantity"].sum()
    bom = pd.DataFrame(
        [("widget", "steel", 10.0), ("widget", "resin", 0.5), ("gadget", "steel", 3.0)],
        columns=["product", "material", "q"],
    )
    need = (
        prod.rename("made")
        .reset_index()
        .merge(bom, on="product")
        .assign(n=lambda x: x["made"] * x["q"])
        .groupby(["plant", "material"])["n"]
        .sum()
    )
    assert dict(got) == pytest.approx({("PW", "steel"): 1000.0, ("PW", "resin"): 50.0, ("PG", "steel"): 120.0})
    assert dict(got) == pytest.approx(dict(need))
    # supply 1120 × 1 + 50 × 3 = 1270; production 100 × 5 + 40 × 2 = 580.
    assert res.cost["supply"] == pytest.approx(1270.0) and res.cost["production"] == pytest.approx(580.0)
