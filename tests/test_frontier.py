"""Cost–CO2 frontier (epsilon constraint): monotone, endpoints equal independent solves, scenario option.

Checks against the normal solve path (a separate model build per point) and against the
definition of the epsilon-constraint method: min cost s.t. CO2e ≤ ε, for ε from the cost-optimal
network's CO2e down to the least CO2e possible (Haimes, Lasdon & Wismer 1971 introduced the
method; from memory).
"""

from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest
from randcase import random_case

from netopt import CaseError, load_case
from netopt.api import solve
from netopt.data.case import Case
from netopt.studies.frontier import CAP_TOL_ABS, CAP_TOL_REL, frontier, sweep
from netopt.studies.scenarios import parse_scenarios, run_scenarios

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"
REL = 1e-6


def _with(case: Case, **policy) -> Case:
    s = copy.deepcopy(case.settings)
    s["policy"].update(policy)
    return Case(case.name, case.tables, s, case.path)


def _kpi(result, name: str) -> float:
    return float(dict(zip(result.tables["kpis"]["kpi"], result.tables["kpis"]["value"]))[name])


def _check_frontier(case: Case, table) -> None:
    assert (table["status"] == "optimal").all() and table["verified"].all()
    cost = table["total_cost"].to_numpy(float)
    co2 = table["co2_t"].to_numpy(float)
    # Cost never falls and CO2e never rises as the cap tightens (down the table).
    assert np.all(np.diff(cost) >= -REL * cost[:-1])
    assert np.all(np.diff(co2) <= 1e-9 + REL * co2[:-1])
    # Endpoint 0 = the ordinary cost-optimal solve.
    base = solve(case)
    assert cost[0] == pytest.approx(base.objective, rel=REL)
    assert co2[0] == pytest.approx(_kpi(base, "co2e_tonnes"), rel=1e-4)
    # Last endpoint: the least CO2e, found independently with a prohibitive carbon price.
    green = solve(_with(case, carbon_price_per_tonne=1e7))
    assert co2[-1] == pytest.approx(_kpi(green, "co2e_tonnes"), rel=REL)
    # Every capped point = an ordinary solve with that cap in the case's settings.
    for cap, c in zip(table["co2_cap_t"].iloc[1:], cost[1:]):
        r = solve(_with(case, co2_cap_tonnes=cap * (1 + CAP_TOL_REL) + CAP_TOL_ABS))
        assert r.objective == pytest.approx(c, rel=REL)


@pytest.mark.parametrize("seed", [0, 5])
def test_frontier_is_monotone_with_independent_endpoints(seed):
    case = random_case(seed)
    table = frontier(case, points=5)
    assert list(table["point"]) == [0, 1, 2, 3, 4]
    assert table["co2_t"].iloc[0] > table["co2_t"].iloc[-1]  # a real trade-off in this case
    _check_frontier(case, table)
    # Mode mix columns are shares of tonne-km.
    shares = table[[c for c in table.columns if c.startswith("tkm_share_")]].sum(axis=1)
    assert shares.to_numpy() == pytest.approx(1.0)
    assert table["dcs_open"].min() >= 1


def test_frontier_with_safety_stock_binaries():
    case = random_case(
        1,
        extra={
            "products": [
                {"product": "P", "unit_weight_kg": 8.0, "unit_value": 60.0, "demand_cv": 0.4},
                {"product": "M", "kind": "material", "unit_weight_kg": 2.0, "unit_value": 2.0},
            ]
        },
        settings={"inventory": {"safety_stock": True}},
    )
    run = sweep(case, points=4)
    table = run.table
    assert (table["safety_stock_cost"] > 0).all()
    _check_frontier(case, table)
    assert len(run.tables) == 4 and all("safety_stock" in t for t in run.tables)


def test_frontier_needs_two_points():
    with pytest.raises(ValueError):
        frontier(random_case(0), points=1)


def test_scenario_file_asks_for_a_frontier():
    case = random_case(2)
    case.scenarios = [
        {
            "name": "greener",
            "description": "frontier of the base with rail cheaper",
            "frontier_points": 3,
            "change": [{"kind": "scale_cost", "target": "mode_rate", "mode": "rail", "factor": 0.9}],
        }
    ]
    run = run_scenarios(case)
    assert set(run.frontiers) == {"greener"}
    table = run.frontiers["greener"]
    assert len(table) == 3 and table["verified"].all()
    # The scenario's own redesign solve is the frontier's cost-optimal end: the same figures, not a re-solve.
    row = run.comparison.set_index("scenario").loc["greener"]
    assert table["total_cost"].iloc[0] == pytest.approx(row["total_cost"], rel=1e-9)
    assert table["co2_t"].iloc[0] == pytest.approx(row["co2e_tonnes"], rel=1e-9)


@pytest.mark.parametrize("seed", [0, 3])
def test_a_frontier_of_the_base_starts_at_the_base(seed):
    """A scenario with no changes asks for the base's frontier: its row is the base and the frontier's first
    point is the base's cost and CO2e to 1e-9; costs never fall as the cap tightens (up to the gap)."""
    case = random_case(seed)
    case.scenarios = [{"name": "base_frontier", "frontier_points": 3, "change": []}]
    run = run_scenarios(case)
    comp = run.comparison.set_index("scenario")
    table = run.frontiers["base_frontier"]
    assert comp.loc["base_frontier", "total_cost"] == comp.loc["base", "total_cost"]
    assert table["total_cost"].iloc[0] == pytest.approx(comp.loc["base", "total_cost"], rel=1e-9)
    assert table["co2_t"].iloc[0] == pytest.approx(comp.loc["base", "co2e_tonnes"], rel=1e-9)
    cost = table["total_cost"].to_numpy(float)
    gap = float(case.settings["solver"]["mip_gap"])
    assert np.all(np.diff(cost) >= -gap * cost[:-1] - 1e-6)
    assert table["verified"].all()


@pytest.mark.parametrize("bad", [1, "3", 2.5, True])
def test_scenario_frontier_points_must_be_a_whole_number_of_two_or_more(bad):
    with pytest.raises(CaseError) as e:
        parse_scenarios([{"name": "x", "frontier_points": bad, "change": []}])
    assert "frontier_points" in str(e.value)


def test_demo_frontier_from_the_api():
    case = load_case(DEMO)
    table = frontier(case, points=3)
    assert len(table) == 3 and table["verified"].all()
    assert table["co2_t"].iloc[0] > table["co2_t"].iloc[-1]
    cost = table["total_cost"].to_numpy(float)
    gap = float(case.settings["solver"]["mip_gap"])
    assert np.all(np.diff(cost) >= -gap * cost[:-1])
    assert (table["dcs_open"] >= 1).all()
    assert table["mode_mix"].str.len().min() > 0
