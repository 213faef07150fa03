"""Studies on a plan over periods: scenarios (hold keeps the phasing), grow_demand, the comparison,
the stress sweep's year, the frontier's refusal, the time tables' checks and the horizon's verification.

References: compound growth q·(1+g)^t (standard formula); each comparison figure against an
independent recomputation from the result tables; invented small cases (tests/randcase.py).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from randcase import random_case

from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.engine.solve import solve
from netopt.engine.verify import Verification
from netopt.engine.verify_horizon import verify_horizon
from netopt.studies.frontier import sweep
from netopt.studies.period_study import year_of_plan
from netopt.studies.scenarios import Scenario, apply_changes, run_scenarios


def _periods(names, years=None, **cols) -> pd.DataFrame:
    n = len(names)
    p = pd.DataFrame(
        {
            "period": list(names),
            "years": list(years or [1.0] * n),
            "discount_factor": [np.nan] * n,
            "cost_index": [1.0] * n,
            "max_openings": [-1] * n,
            "opening_budget": [np.inf] * n,
        }
    )
    for k, v in cols.items():
        p[k] = v
    return p


def _three_years(seed: int = 5):
    c = random_case(seed, n_dcs=3, n_customers=6)
    c.tables["periods"] = _periods(["Y1", "Y2", "Y3"])
    c.tables["dcs"]["capacity"] = np.inf
    c.tables["suppliers"]["capacity"] = np.inf
    c.settings["periods"]["discount_rate"] = 0.05
    return c


@pytest.fixture(scope="module")
def plan_case():
    return _three_years()


@pytest.fixture(scope="module")
def plan(plan_case):
    r = solve(plan_case, mip_gap=1e-9)
    assert r.status == "optimal" and r.verification.passed, r.verification.largest_violation_rule
    return r


def test_grow_demand_compounds_per_period(plan_case):
    # Demand of period k × (1 + g)^t_k with t_k the years before it starts (compound growth).
    c = apply_changes(plan_case, Scenario("grow", [{"kind": "grow_demand", "rate": 0.1, "region": "north"}]))
    north = set(plan_case.tables["customers"].query("region == 'north'")["customer"])
    dem = c.tables["demand"]
    base = plan_case.tables["demand"].set_index(["customer", "product"])["quantity"]
    for (cust, prod, per), q in dem.set_index(["customer", "product", "period"])["quantity"].items():
        t = {"Y1": 0, "Y2": 1, "Y3": 2}.get(per)
        if cust in north:
            assert t is not None
            assert q == pytest.approx(base[(cust, prod)] * 1.1**t)
        else:
            assert per == "" and q == pytest.approx(base[(cust, prod)])


def test_grow_demand_needs_periods():
    with pytest.raises(CaseError) as e:
        apply_changes(random_case(5), Scenario("grow", [{"kind": "grow_demand", "rate": 0.1}]))
    assert "periods" in str(e.value)


def test_hold_keeps_the_phasing_and_redesign_is_never_dearer(plan_case, plan):
    scenarios = [
        Scenario("boom", [{"kind": "grow_demand", "rate": 0.3}], resolve="both"),
    ]
    run = run_scenarios(plan_case, scenarios=scenarios, base=plan)
    held, redesigned = run.results["boom [hold]"], run.results["boom [redesign]"]
    assert held.verification.passed and redesigned.verification.passed
    keep = plan.tables["phasing"].set_index(["dc", "period"])["open"]
    got = held.tables["phasing"].set_index(["dc", "period"])["open"]
    assert (got.reindex(keep.index) == keep).all()
    assert redesigned.objective <= held.objective * (1 + 1e-6)
    comp = run.comparison.set_index("scenario")
    # Money columns are present values: each row's total is the sum of its period columns and of its
    # cost table, recomputed here from the result's own period_cost table.
    for label in ("base", "boom [hold]", "boom [redesign]"):
        r = run.results[label]
        pv = r.tables["period_cost"].groupby("period")["present_value"].sum()
        assert comp.loc[label, "total_cost"] == pytest.approx(pv.sum())
        for p, v in pv.items():
            assert comp.loc[label, f"period_{p}"] == pytest.approx(v)
    d = run.dc_decisions
    assert set(d["period"]) == {"Y1", "Y2", "Y3"}
    assert set(d["decision"]) <= {"opens", "open", "closes", "closed"}


def test_stress_year_holds_the_phasing_of_its_period(plan_case, plan):
    year, note = year_of_plan(plan_case, plan)
    assert year.tables["periods"].empty and "Y3" in note and "phasing held" in year.name
    last = plan.tables["phasing"].query("period == 'Y3'").set_index("dc")["open"]
    forced = year.tables["dcs"].set_index("dc")["force"]
    assert all(forced[dc] == ("open" if o else "closed") for dc, o in last.items())
    r = solve(year)
    assert r.verification.passed
    assert set(r.tables["dcs"].query("open")["dc"]) == set(last[last].index)


def test_frontier_refuses_a_case_with_periods(plan_case):
    with pytest.raises(CaseError) as e:
        sweep(plan_case, points=3)
    assert "one year" in str(e.value)


def test_horizon_verification_catches_a_reopened_dc(plan_case, plan):
    # The independent check reads the phasing table: a candidate closed again after opening breaks
    # "once open stays open", whatever the solver said.
    tables = {k: v.copy() for k, v in plan.tables.items()}
    ph = tables["phasing"]
    opened = ph[(ph["status"] == "candidate") & ph["open"] & (ph["period"] == "Y2")]
    if opened.empty:  # make one: open a candidate in Y2 only
        pick = ph[(ph["status"] == "candidate") & (ph["period"] == "Y2")].index[0]
        ph.loc[pick, "open"] = True
    else:
        ph.loc[ph.index[(ph["dc"] == opened["dc"].iloc[0]) & (ph["period"] == "Y3")], "open"] = False
    per = plan.periods
    periods = [
        Verification(
            True, 0.0, "", {}, 0.0, 0.0, 0.0, pd.DataFrame(columns=["rule", "violation", "relative_violation", "where"])
        )
        for _ in range(len(per))
    ]
    v = verify_horizon(plan_case, tables, per, periods, 0.0)
    assert not v.passed
    assert "stays open" in v.largest_violation_rule or "recomputed" in v.largest_violation_rule
    bad = v.checks.set_index("rule")["relative_violation"]
    assert bad["a candidate DC once open stays open"] > 0


def test_time_tables_are_checked_with_table_row_and_column():
    base = random_case(2)
    t = {k: v for k, v in base.tables.items() if len(v)}
    t["demand"] = t["demand"].assign(period="Y9")  # no periods table
    dcs = t["dcs"].copy()
    dcs["earliest_period"] = ["Y1"] + [""] * (len(dcs) - 1)  # D0 is existing
    t["dcs"] = dcs
    t["periods"] = _periods(["Y1"])
    t["capacity_by_period"] = pd.DataFrame({"site": ["NOPE"], "period": ["Y1"], "capacity_factor": [0.5]})
    t["opening_stock"] = pd.DataFrame({"site": ["C0"], "product": ["P"], "quantity": [10.0]})
    with pytest.raises(CaseError) as e:
        make_case(t, base.settings)
    where = {(p.table, p.column) for p in e.value.problems}
    assert ("demand", "period") in where  # Y9 is not a period
    assert ("dcs", "earliest_period") in where  # set on an existing DC
    assert ("capacity_by_period", "site") in where
    assert ("opening_stock", "site") in where  # a customer holds no stock
    del t["periods"]
    t["dcs"] = base.tables["dcs"]
    t.pop("capacity_by_period")
    t.pop("opening_stock")
    with pytest.raises(CaseError) as e:
        make_case(t, base.settings)
    assert any("no periods table" in p.message for p in e.value.problems)


def test_capacity_by_period_limits_that_period_only():
    # A factor 0 on the plant in Y2 with no stock carried: Y2 cannot be served; with a factor 0.5 the
    # plant makes at most half its capacity in Y2 (checked from the production table).
    c = random_case(4, n_dcs=3)
    c.tables["plants"]["capacity"] = 30_000.0
    c.tables["periods"] = _periods(["Y1", "Y2"])
    c.tables["capacity_by_period"] = pd.DataFrame({"site": ["F"], "period": ["Y2"], "capacity_factor": [0.5]})
    total = float(c.tables["demand"]["quantity"].sum())
    r = solve(c)
    if total <= 15_000.0:
        assert r.verification.passed
        prod = r.tables["production"].set_index("period")["quantity"]
        assert prod["Y2"] <= 15_000.0 + 1e-6
    else:
        assert r.status == "infeasible" and (r.diagnosis["period"] == "Y2").any()


def test_opening_stock_feeds_the_first_period():
    # Chain of two one-year periods from 500 units on hand at the DC: the plant makes 500 fewer units in
    # the first period (demand − stock on hand), since holding costs more than nothing and stock at the
    # end is charged (hand formula).
    rows = {
        "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": 40.0, "holding_rate": 0.2}],
        "plants": [{"plant": "F", "product": "P", "lat": 50.0, "lon": 8.0, "unit_cost": 5.0}],
        "dcs": [{"dc": "D", "lat": 50.0, "lon": 8.0, "status": "existing"}],
        "customers": [{"customer": "C", "lat": 50.0, "lon": 8.0}],
        "demand": [{"customer": "C", "product": "P", "quantity": 2_000.0}],
        "modes": [{"mode": "road", "cost_per_tonne_km": 0.0, "fixed_cost_per_unit": 1.0, "speed_km_per_day": 600}],
        "periods": _periods(["Y1", "Y2"]).to_dict("records"),
        "opening_stock": [{"site": "D", "product": "P", "quantity": 500.0}],
    }
    settings = {
        "lanes": {"legs": ["plant-dc", "dc-customer"]},
        "inventory": {"safety_stock": False},
        "periods": {"carry_stock": True},
    }
    r = solve(make_case(rows, settings, name="on-hand"))
    assert r.verification.passed, r.verification.largest_violation_rule
    prod = r.tables["production"].set_index("period")["quantity"]
    assert prod["Y1"] == pytest.approx(1_500.0)
    assert prod["Y2"] == pytest.approx(2_000.0)
    st = r.tables["stock"].groupby("period")[["opening", "closing"]].sum()
    assert st.loc["Y1", "opening"] == pytest.approx(500.0) and st.loc["Y1", "closing"] == pytest.approx(0.0)
