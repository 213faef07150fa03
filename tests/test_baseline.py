"""The as-is baseline (``netopt baseline``): today's flows costed with the solve's own cost model.

Checks: (1) the optimised plan's own flows given as today's flows cost exactly the solve's objective
(every component; the issue's calibration test, to 1e-9 relative); (2) a one-lane case costed by
hand from the trade's formulas; (3) the model-vs-actual difference; (4) a rule today's flows
break is reported, not corrected; (5) a row without a lane is refused with table, row and column.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from randcase import random_case

import netopt
from netopt.cli.app import main
from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.engine.baseline import cost_current_flows, spend_comparison

DEMO = "cases/brackenholt"
KEYS = ["origin", "destination", "mode", "product", "quantity"]


def _with_current(case, flows: pd.DataFrame, settings: dict | None = None):
    tables = {k: v for k, v in case.tables.items() if k != "current_flows"}
    tables["current_flows"] = flows[KEYS]
    s = {sec: dict(v) for sec, v in case.settings.items()}
    for sec, v in (settings or {}).items():
        s.setdefault(sec, {}).update(v)
    return make_case(tables, s, name=case.name)


def _same_cost(res, base):
    for k, v in base.cost.items():
        assert res.cost[k] == pytest.approx(v, rel=1e-9, abs=1e-6), k
    assert res.objective == pytest.approx(base.objective, rel=1e-9)


# ----------------------------------------------------------------------------- (1) the base's own flows


def test_the_base_plans_own_flows_cost_its_objective():
    # The calibration test: costing the optimised base's flows as today's gives its objective (1e-9).
    case = netopt.load_case(DEMO)
    base = netopt.solve(case)
    assert base.status == "optimal"
    res = cost_current_flows(_with_current(case, base.tables["flows"]))
    assert res.status == "baseline" and res.verification.passed
    _same_cost(res, base)
    assert len(res.tables["baseline_rules"]) == 0


def test_held_plan_with_a_closed_dc_and_late_deliveries_costs_its_objective():
    # A plan with an existing DC closed (closing cost) and targets missed (late delivery): both are
    # derived from the flows alone, as the optimiser prices them.
    case = netopt.load_case(DEMO)
    d = case.tables["dcs"]
    hold = {dc: (st == "existing" and dc != "DC_PIACENZA") for dc, st in zip(d["dc"], d["status"])}
    base = netopt.solve(case, hold=hold)
    assert base.cost["dc_closing"] > 0 and base.cost["late_delivery"] > 0
    res = cost_current_flows(_with_current(case, base.tables["flows"]))
    _same_cost(res, base)
    assert "DC_PIACENZA" in res.message  # said: an existing DC without today's flow is costed as closed


@pytest.mark.parametrize("seed", [3, 11, 29])
def test_random_cases_base_flows_cost_their_objective(seed):
    case = random_case(seed)
    base = netopt.solve(case)
    res = cost_current_flows(_with_current(case, base.tables["flows"]))
    _same_cost(res, base)


# ----------------------------------------------------------------------------- (2) by hand

W_KG, VALUE, HOLD, KM, RATE, FIX, SPEED, PRICE, HANDLE, DC_FIXED, Q = (
    20.0,
    150.0,
    0.2,
    400.0,
    0.1,
    0.5,
    400.0,
    60.0,
    1.5,
    10_000.0,
    1_000.0,
)


def _hand_case(quantity: float = Q, sup_cap: float | None = None, actual: dict | None = None):
    sup = {"supplier": "S1", "product": "p", "lat": 0.0, "lon": 0.0, "unit_cost": PRICE}
    if sup_cap is not None:
        sup["capacity"] = sup_cap
    lanes = [
        {"origin": "S1", "destination": "D1", "mode": "truck", "distance_km": KM, "transit_days": 1.0},
        {"origin": "D1", "destination": "C1", "mode": "truck", "distance_km": KM, "transit_days": 1.0},
    ]
    tables = {
        "products": [{"product": "p", "unit_weight_kg": W_KG, "unit_value": VALUE, "holding_rate": HOLD}],
        "suppliers": [sup],
        "plants": [],
        "dcs": [
            {"dc": "D1", "lat": 0.0, "lon": 0.0, "fixed_cost": DC_FIXED, "handling_cost": HANDLE},
        ],
        "customers": [{"customer": "C1", "lat": 0.0, "lon": 0.0}],
        "demand": [{"customer": "C1", "product": "p", "quantity": Q}],
        "modes": [
            {
                "mode": "truck",
                "cost_per_tonne_km": RATE,
                "fixed_cost_per_unit": FIX,
                "speed_km_per_day": SPEED,
                "generate_lanes": False,
            }
        ],
        "lanes": lanes,
        "current_flows": [
            {"origin": "S1", "destination": "D1", "mode": "truck", "product": "p", "quantity": quantity},
            {"origin": "D1", "destination": "C1", "mode": "truck", "product": "p", "quantity": quantity},
        ],
    }
    settings = {"inventory": {"safety_stock": False}, "lanes": {"legs": ["supplier-dc", "dc-customer"]}}
    if actual:
        settings["actual_spend"] = actual
    return make_case(tables, settings)


def test_one_lane_case_matches_the_hand_formulas():
    res = cost_current_flows(_hand_case())
    c = res.cost
    # Freight per unit = weight (t) × km × rate per t·km + per-unit charge (the modes table's formula;
    # common practice, no source), on two legs.
    freight = 2 * Q * (W_KG / 1000 * KM * RATE + FIX)
    assert c["transport"] == pytest.approx(freight, rel=1e-12)
    assert c["supply"] == pytest.approx(Q * PRICE, rel=1e-12)
    assert c["dc_handling"] == pytest.approx(Q * HANDLE, rel=1e-12)
    assert c["dc_fixed"] == pytest.approx(DC_FIXED, rel=1e-12)
    # In-transit stock by Little's law (L = λW; Little 1961): units/yr × days/365, at value × holding rate.
    assert c["pipeline_inventory"] == pytest.approx(2 * Q * 1.0 / 365 * VALUE * HOLD, rel=1e-12)
    assert res.verification.passed


def test_model_vs_actual_difference_is_relative_to_the_actual_spend():
    res = cost_current_flows(_hand_case(actual={"transport": 10_000.0, "supply": 0.0}))
    bc = res.tables["baseline_cost"].set_index("component")
    freight = 2 * Q * (W_KG / 1000 * KM * RATE + FIX)
    assert bc.loc["transport", "difference"] == pytest.approx(freight - 10_000.0)
    assert bc.loc["transport", "difference_share"] == pytest.approx((freight - 10_000.0) / 10_000.0)
    assert np.isnan(bc.loc["supply", "difference_share"])  # zero spend: no relative difference
    assert np.isnan(bc.loc["dc_fixed", "actual_spend"])  # not given
    assert list(spend_comparison({"transport": 1.0}, res.network.settings)["component"]) == ["transport"]


# ----------------------------------------------------------------------------- (4), (5) findings and refusals


def test_a_rule_todays_flows_break_is_reported_not_corrected():
    res = cost_current_flows(_hand_case(sup_cap=600.0))
    rules = res.tables["baseline_rules"]
    assert "supplier capacity (units)" in set(rules["rule"])
    assert res.tables["flows"]["quantity"].max() == pytest.approx(Q)  # costed as it runs
    assert res.verification.objective_rel_diff <= 1e-9


def test_no_current_flows_and_a_row_without_lane_are_refused():
    case = _hand_case()
    with pytest.raises(CaseError) as e:
        cost_current_flows(_with_current(case, case.tables["current_flows"].iloc[:0]))
    assert "current_flows" in str(e.value)
    bad = pd.concat(
        [
            case.tables["current_flows"],
            pd.DataFrame([{"origin": "C1", "destination": "D1", "mode": "truck", "product": "p", "quantity": 1.0}]),
        ]
    )
    with pytest.raises(CaseError) as e:
        cost_current_flows(_with_current(case, bad))
    (p,) = e.value.problems
    assert (p.table, p.column) == ("current_flows", "mode") and "'C1' to 'D1'" in p.message


def test_cli_baseline_writes_the_tables_and_says_what_it_is(tmp_path, capsys):
    out = tmp_path / "bl"
    with pytest.raises(SystemExit) as e:
        main(["baseline", DEMO, "--out", str(out), "-q", "--no-report"])
    assert e.value.code == 0
    summary = json.loads((out / "summary.json").read_text())
    assert summary["status"] == "baseline" and summary["baseline"]["nothing_optimised"]
    assert summary["baseline"]["cost_verified"]
    bc = pd.read_csv(out / "baseline_cost.csv")
    cost = pd.read_csv(out / "cost.csv")
    assert bc["model_cost"].sum() == pytest.approx(cost["amount"].sum(), rel=1e-12)
    assert set(summary["baseline"]["difference_share"]) == set(bc.loc[bc["actual_spend"].notna(), "component"])


def test_the_comparison_shows_the_saving_against_today():
    # The ask: savings against today's flows as well as against the optimised base.
    from netopt.studies.scenarios import run_scenarios

    case = netopt.load_case(DEMO)
    run = run_scenarios(case, scenarios=[])
    today = cost_current_flows(case)
    row = run.comparison.set_index("scenario").loc["base"]
    assert row["saving_vs_today"] == pytest.approx(today.objective - row["total_cost"], rel=1e-12)
    assert row["saving_vs_today"] > 0  # the optimised base is cheaper than today
    assert run.today is not None and run.today.objective == pytest.approx(today.objective, rel=1e-12)
