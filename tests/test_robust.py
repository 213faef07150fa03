"""The robust-network study (``netopt robust``): the two-stage model against brute force, VSS and EVPI,
the regret table, the launch's demand scenarios and their checks.

References: brute force over every opening set, each scenario's transportation LP written here from
scratch and solved with scipy.optimize.linprog; the definitions WS, RP, EEV, VSS = EEV − RP ≥ 0 and
EVPI = RP − WS ≥ 0 (Birge & Louveaux, Introduction to Stochastic Programming, ch. 4); regret as cost
minus the scenario's optimum (Savage's minimax regret, common practice, no source).
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pandas as pd
import pytest
from launchcase import K, launch_case, random_launch
from scipy.optimize import linprog

from netopt.api import run_robust, solve
from netopt.data.case import CaseError
from netopt.data.launch_demand import launch_scenarios, with_launch_demand
from netopt.engine.two_stage import TwoStageOutcome
from netopt.studies.robust import SCENARIOS_BOUND_USED, scenarios_bound, with_scenarios_bound


def lp_cost(g: dict, S: tuple[str, ...], n_factor: float) -> float:
    """The transportation LP of opening set S with N's demand = A's × n_factor (scipy linprog), plus the
    fixed costs; inf when infeasible.  x[p,d,k] plant→DC, y[d,c,k] DC→customer, u[c,k] lost at the
    penalty when ``g["penalty"]`` is set (units/yr)."""
    P, C = g["P"], g["C"]
    demand = {(c, "A"): g["dem"][c] for c in C} | {(c, "N"): g["dem"][c] * n_factor for c in C}
    cols = [("x", p, d, k) for p in P for d in S for k in K] + [("y", d, c, k) for d in S for c in C for k in K]
    pen = g.get("penalty")
    if pen:
        cols += [("u", c, k) for c in C for k in K]
    idx = {v: i for i, v in enumerate(cols)}
    price = {"x": lambda v: g["pd"][v[1], v[2]] + g["pcost"][v[1], v[3]], "y": lambda v: g["dc"][v[1], v[2]]}
    cost = np.array([pen if v[0] == "u" else price[v[0]](v) for v in cols])
    n = len(cols)
    A_eq, b_eq, A_ub, b_ub = [], [], [], []
    for (c, k), q in demand.items():
        row = np.zeros(n)
        for d in S:
            row[idx["y", d, c, k]] = 1
        if pen:
            row[idx["u", c, k]] = 1
        A_eq.append(row)
        b_eq.append(q)
    for d in S:
        for k in K:
            row = np.zeros(n)
            for p in P:
                row[idx["x", p, d, k]] = 1
            for c in C:
                row[idx["y", d, c, k]] = -1
            A_eq.append(row)
            b_eq.append(0.0)
        row = np.zeros(n)
        for p in P:
            for k in K:
                row[idx["x", p, d, k]] = 1
        A_ub.append(row)
        b_ub.append(g["dcap"][d])
    for p in P:
        for k in K:
            row = np.zeros(n)
            for d in S:
                row[idx["x", p, d, k]] = 1
            A_ub.append(row)
            b_ub.append(g["pcap"][p, k])
    if not S:
        return math.inf
    r = linprog(cost, A_ub=np.array(A_ub), b_ub=b_ub, A_eq=np.array(A_eq), b_eq=b_eq, bounds=(0, None), method="highs")
    if r.status == 2:
        return math.inf
    assert r.status == 0, r.message
    return float(r.fun) + sum(g["fixed"][d] for d in S)


def brute_force(g: dict) -> dict:
    """RP, WS, EEV, the worst-case optimum and each opening set's scenario costs, by enumeration."""
    f, pi = np.array(g["factors"]), np.array(g["probs"])
    subsets = [S for k in range(1, len(g["D"]) + 1) for S in itertools.combinations(g["D"], k)]
    cost = {S: np.array([lp_cost(g, S, x) for x in f]) for S in subsets}
    expected = {S: float(pi @ c) if np.isfinite(c).all() else math.inf for S, c in cost.items()}
    mean = {S: lp_cost(g, S, float(pi @ f)) for S in subsets}
    mv = min(mean, key=lambda S: mean[S])
    best = np.min(np.vstack(list(cost.values())), axis=0)
    return {
        "rp": min(expected.values()),
        "ws": float(pi @ best),
        "eev": expected[mv],
        "worst": min(float(c.max()) for c in cost.values()),
        "cost": cost,
        "expected": expected,
        "best": best,
    }


def _num(x):
    return math.inf if x is None else x


@pytest.mark.parametrize("seed,penalty", [(0, None), (3, None), (1, 40.0), (2, 60.0), (4, 80.0)])
def test_two_stage_equals_brute_force_and_vss_evpi_are_not_negative(seed, penalty):
    # Brute force over every opening set (scipy linprog per scenario) gives RP, WS and EEV (Birge & Louveaux);
    # with lost demand forbidden the mean-value plan may not serve the high case (EEV infinite, said so).
    g = random_launch(seed) | {"penalty": penalty}
    ref = brute_force(g)
    st = run_robust(launch_case(g))
    s = st.summary
    assert s["two_stage"]["objective"] == pytest.approx(ref["rp"], rel=1e-7)
    assert s["objective"] == pytest.approx(ref["rp"], rel=1e-7)  # the plan held exactly: its expected cost
    assert s["two_stage"]["bound"] <= ref["rp"] * (1 + 1e-7)  # a lower bound, whichever one it is
    assert s["rp"] == pytest.approx(ref["rp"], rel=1e-7)
    assert s["ws"] == pytest.approx(ref["ws"], rel=1e-7)
    assert _num(s["eev"]) == pytest.approx(ref["eev"], rel=1e-7)
    if math.isfinite(ref["eev"]):
        assert s["vss"] == pytest.approx(ref["eev"] - ref["rp"], rel=1e-6, abs=1e-6)
        assert s["vss"] >= -1e-6
    else:
        assert s["vss"] is None and any("mean-value plan cannot serve" in m for m in s["messages"])
    assert s["evpi"] == pytest.approx(ref["rp"] - ref["ws"], rel=1e-6, abs=1e-6)
    assert s["evpi"] >= -1e-6


def test_worst_case_and_cost_bound_equal_brute_force():
    # min over opening sets of the largest scenario cost; and the least expected cost among the opening
    # sets whose every scenario costs at most B (brute force, scipy linprog).
    g = random_launch(5)
    ref = brute_force(g)
    worst = run_robust(launch_case(g, {"objective": "worst_case"}))
    assert worst.summary["objective"] == pytest.approx(ref["worst"], rel=1e-7)
    robust_row = worst.regret.set_index("plan").loc["robust"]
    assert robust_row["worst_cost"] == pytest.approx(ref["worst"], rel=1e-7)
    bound = ref["worst"] * 1.02
    ok = [S for S, c in ref["cost"].items() if c.max() <= bound]
    expect = min(ref["expected"][S] for S in ok)
    bounded = run_robust(launch_case(g, {"cost_bound": bound}))
    assert bounded.summary["objective"] == pytest.approx(expect, rel=1e-7)
    assert bounded.regret.set_index("plan").loc["robust", "worst_cost"] <= bound * (1 + 1e-9)


def test_one_scenario_plan_is_the_deterministic_plan():
    # With one scenario the two-stage model is the deterministic one: the same DCs and cost as solve().
    g = random_launch(7)
    case = launch_case(g, {"scenarios": ["base"]})
    st = run_robust(case)
    sc = launch_scenarios(case, "L", ["base"])
    det = solve(with_launch_demand(case, sc, "base", "A"))
    assert st.summary["objective"] == pytest.approx(det.objective, rel=1e-9)
    plans = st.summary["plans"]
    assert plans["stochastic"] == plans["own:base"]
    assert st.summary["vss"] == pytest.approx(0.0, abs=1e-6) and st.summary["evpi"] == pytest.approx(0.0, abs=1e-6)
    assert any("divided by their sum" in m for m in st.summary["messages"])


@pytest.mark.parametrize("evaluation", ["warm", "rebuilt"])
def test_regret_diagonal_is_zero_and_entries_equal_independent_held_solves(evaluation):
    # Each entry of the cost matrix is an independent solve of that scenario with the plan's DCs fixed
    # (netopt.solve(case, hold=...)); each scenario's own plan has zero regret there.
    g = random_launch(11)
    case = launch_case(g, {"evaluation": evaluation})
    st = run_robust(case)
    pc = st.plan_costs
    assert set(pc["method"]) == {"warm LP" if evaluation == "warm" else "rebuilt"}
    plans = dict(zip(st.plan_dcs["plan"], [None] * len(st.plan_dcs)))
    scen = launch_scenarios(case, "L")
    for plan in plans:
        held = {d: bool(o) for d, o in st.plan_dcs[st.plan_dcs["plan"] == plan][["dc", "open"]].to_numpy()}
        for s in ("low", "base", "high"):
            ref = solve(with_launch_demand(case, scen[scen["scenario"] == s], s, "A"), hold=held, diagnose=False)
            got = pc[(pc["plan"] == plan) & (pc["scenario"] == s)].iloc[0]
            if ref.has_solution:
                assert got["cost"] == pytest.approx(ref.objective, rel=1e-7)
                assert bool(got["verified"])
            else:
                assert math.isnan(got["cost"])
    reg = st.regret.set_index("plan")
    for s in ("low", "base", "high"):
        assert reg.at[f"own:{s}", f"regret_{s}"] == pytest.approx(0.0, abs=1e-6)
    assert (reg[[f"regret_{s}" for s in ("low", "base", "high")]].fillna(0) >= -1e-6).all().all()
    finite = reg["max_regret"].dropna()
    assert reg["min_max_regret"].sum() >= 1
    assert reg.loc[reg["min_max_regret"], "dcs_open_names"].nunique() == 1  # one choice of DCs
    assert reg.loc[reg["min_max_regret"], "max_regret"].iloc[0] == pytest.approx(finite.min())


def test_analogue_demand_with_adjustments():
    # d = analogue demand × factor × the adjustments that meet on the customer (definition, by hand).
    g = random_launch(2)
    adj = [{"launch": "L", "region": "R0", "factor": 1.5}, {"launch": "L", "customer": "C0", "factor": 2.0}]
    case = launch_case(g, launch_adjustments=adj)
    sc = launch_scenarios(case, "L")
    high = sc[sc["scenario"] == "high"].set_index("customer")["demand"]
    assert high["C0"] == pytest.approx(g["dem"]["C0"] * 2.0 * 1.5 * 2.0)
    assert high["C1"] == pytest.approx(g["dem"]["C1"] * 2.0)
    probs = sc.drop_duplicates("scenario").set_index("scenario")["probability"]
    assert probs.to_dict() == pytest.approx({"low": 0.3, "base": 0.5, "high": 0.2})


def test_bad_launch_tables_are_reported_at_once():
    g = random_launch(1)
    bad = {
        "launches": [
            {"launch": "L", "product": "A", "analogue": "A", "low": 1, "base": 1, "high": 1},  # itself; has demand
            {"launch": "M", "product": "N", "analogue": "Q", "low": 1, "base": 1, "high": 1},  # unknown analogue
            {
                "launch": "B",
                "product": "N",
                "analogue": "A",
                "method": "bass",
                "low": 1,
                "base": 1,
                "high": 1,
                "prob_low": 0.5,
                "prob_base": 0.5,
                "prob_high": 0.5,
            },
        ],
        "launch_adjustments": [
            {"launch": "B", "region": "R0", "customer": "C0", "factor": 2.0},
            {"launch": "B", "region": "nowhere", "factor": 2.0},
        ],
        "past_launches": [{"product": "X", "period": "1", "forecast": 5.0, "actual": 0.0}],
    }
    with pytest.raises(CaseError) as e:
        launch_case(g, **bad)
    where = {(p.table, p.row, p.column) for p in e.value.problems}
    assert ("launches", 2, "analogue") in where  # the analogue is the product itself
    assert ("launches", 2, "product") in where  # the new product has demand rows
    assert ("launches", 3, "analogue") in where  # unknown product
    assert ("launches", 4, "prob_base") in where  # probabilities sum to 1.5
    assert ("launches", 4, "bass_p") in where and ("launches", 4, "market_size") in where
    assert ("launch_adjustments", 2, "customer") in where  # region and customer both given
    assert ("launch_adjustments", 3, "region") in where  # no such region
    assert ("past_launches", 2, "actual") in where


def test_cli_writes_summary_and_one_regret_row_per_plan(tmp_path):
    from netopt.cli.app import main

    g = random_launch(3)
    case = launch_case(g)
    folder = tmp_path / "case"
    from netopt.data.writing import write_case_csv

    write_case_csv(case, folder)
    out = tmp_path / "out"
    with pytest.raises(SystemExit) as e:
        main(["robust", str(folder), "--out", str(out), "-q"])
    assert e.value.code == 0
    summary = json.loads((out / "summary.json").read_text())
    assert {"objective", "vss", "evpi"} <= set(summary)
    regret = pd.read_csv(out / "regret.csv")
    assert list(regret["plan"]) == ["own:low", "own:base", "own:high", "mean_value", "stochastic"]
    for name in ("plan_costs", "plan_dcs", "scenario_demand"):
        assert (out / f"{name}.csv").exists()
    assert "Regret" in (out / "report.html").read_text()


def test_warm_holds_equal_rebuilt_with_a_service_target():
    # A hard service target (90 % of each customer's demand within its window) is a row on the demand:
    # the warm holds must re-target it per scenario and equal independent rebuilt solves with the DCs fixed.
    g = random_launch(4)
    policy = {"service_max_days": 1.0, "service_target_share": 0.9}
    warm = launch_case(g, {"evaluation": "warm"})
    warm.settings["policy"].update(policy)
    rebuilt = launch_case(g, {"evaluation": "rebuilt"})
    rebuilt.settings["policy"].update(policy)
    a, b = run_robust(warm).plan_costs, run_robust(rebuilt).plan_costs
    assert set(a["method"]) == {"warm LP"} and a.loc[a["cost"].notna(), "verified"].all()
    assert a["cost"].to_numpy() == pytest.approx(b["cost"].to_numpy(), rel=1e-7, nan_ok=True)


def test_scenarios_own_bounds_bound_the_two_stage_plan():
    # Wait-and-see ≤ the recourse problem (Birge & Louveaux, ch. 4): Σ π_s LB_s bounds the expected
    # cost; for the worst case, min over plans of the maximum ≥ the largest scenario minimum.
    probs = np.array([0.3, 0.5, 0.2])
    assert scenarios_bound([10.0, 20.0, 40.0], probs, "expected") == pytest.approx(21.0)
    assert scenarios_bound([10.0, 20.0, 40.0], probs, "worst_case") == 40.0
    assert scenarios_bound([10.0, -math.inf, 40.0], probs, "expected") == -math.inf
    out = TwoStageOutcome("time_limit", 22.0, 1.0, 21.0 / 22.0, held={"D1": True})
    said: list[str] = []
    tighter = with_scenarios_bound(out, 21.0, said)
    assert tighter.bound == 21.0 and tighter.gap == pytest.approx(1.0 / 22.0) and said == [SCENARIOS_BOUND_USED]
    assert with_scenarios_bound(out, 0.5, []) is out  # weaker: the search's bound stays
    above: list[str] = []
    assert with_scenarios_bound(out, 23.0, above) is out and "not used" in above[0]
