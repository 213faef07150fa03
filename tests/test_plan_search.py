"""Plan search (drop/add/swap on warm LP re-solves) and lazy strong linking rows.

Outside references: OR-Library cap instances and capopt (Beasley 1988, tests/data/orlib),
pmed instances and pmedopt (Beasley 1985), and exhaustive enumeration of the openings with
each opening set's transportation problem solved by scipy.optimize.linprog.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from orlib import CAP_NAMES, DATA, cap_case, pmed_case, read_capopt, read_pmedopt
from randcase import random_case
from scipy.optimize import linprog

from netopt.api import solve
from netopt.data.frames import make_case
from netopt.engine.extract import extract
from netopt.engine.highs import SolveInfo, compile_model
from netopt.engine.plan_search import SEARCH_PLAN_KEPT, SearchOutcome, best_of, search_plan
from netopt.model import build_model
from netopt.network.arcs import build_network
from netopt.network.lanes import case_lanes

CAPOPT = read_capopt()


def _compiled(case):
    lanes = case_lanes(case)
    net = build_network(case, lanes)
    b = build_model(net)
    return lanes, net, b, compile_model(b)


@pytest.mark.parametrize("name", CAP_NAMES[::4])
def test_search_plan_on_cap_is_feasible_and_priced_as_verified(name):
    # capopt (Beasley 1988): the search's plan can cost no less than the optimum, the tight
    # relaxation's bound no more; the plan passes netopt's independent verification and its
    # recomputed cost equals the cost the search reports.
    case = cap_case(DATA / "cap" / f"{name}.txt")
    lanes, net, b, hm = _compiled(case)
    out = search_plan(hm, 60.0)
    assert out.values is not None, out.note
    assert out.cost >= CAPOPT[name] - 1e-3
    assert out.bound <= CAPOPT[name] + 1e-3
    checked = extract(case, lanes, net, b, out.values, out.cost)
    assert checked.verification.passed, checked.verification.checks
    assert checked.verification.recomputed_objective == pytest.approx(out.cost, rel=1e-9)


@pytest.mark.parametrize(
    "solver",
    [
        {"plan_search": False},
        {"plan_search": True, "lazy_linking_rows_share": 0.0},
        {"plan_search": True, "lazy_linking_rows_share": 1.0},
    ],
    ids=["mip-only", "search+all-rows", "search+lazy-rows"],
)
@pytest.mark.parametrize("name", ["cap41", "cap71", "cap104"])
def test_every_method_matches_capopt(name, solver):
    # capopt (Beasley 1988) through each method: MIP alone, with the plan search's start, with only
    # the linking rows the relaxation needed.
    case = cap_case(DATA / "cap" / f"{name}.txt")
    case.settings["solver"].update(solver)
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal"
    assert res.objective == pytest.approx(CAPOPT[name], abs=1.5e-3)
    assert res.verification.passed


def _small_cfl(seed: int, n: int = 6, m: int = 12):
    rng = np.random.default_rng(seed)
    d = rng.uniform(5, 35, m)
    s = rng.uniform(10, 160, n)
    s *= 2.0 * d.sum() / s.sum()
    f = rng.uniform(0, 90, n) + rng.uniform(100, 110, n) * np.sqrt(s)
    xy, cxy = rng.uniform(0, 1, (n, 2)), rng.uniform(0, 1, (m, 2))
    unit = 10.0 * np.hypot(*(xy[:, None, :] - cxy[None, :, :]).transpose(2, 0, 1))
    return d, s, f, unit


def _cfl_case(d, s, f, unit):
    n, m = unit.shape
    lanes = [
        dict(origin="F", destination=f"D{i}", mode="m", distance_km=0, transit_days=0, cost_per_unit=0)
        for i in range(n)
    ]
    lanes += [
        dict(origin=f"D{i}", destination=f"C{j}", mode="m", distance_km=0, transit_days=0, cost_per_unit=unit[i, j])
        for i in range(n)
        for j in range(m)
    ]
    tables = {
        "products": [{"product": "P", "unit_weight_kg": 0.0, "unit_value": 0.0}],
        "suppliers": [],
        "plants": [{"plant": "F", "product": "P", "lat": 0.0, "lon": 0.0}],
        "dcs": [dict(dc=f"D{i}", lat=0.0, lon=0.0, fixed_cost=f[i], capacity=s[i]) for i in range(n)],
        "customers": [dict(customer=f"C{j}", lat=0.0, lon=0.0) for j in range(m)],
        "demand": [dict(customer=f"C{j}", product="P", quantity=d[j]) for j in range(m)],
        "modes": [dict(mode="m", cost_per_tonne_km=0.0, speed_km_per_day=1.0, generate_lanes=False)],
        "lanes": lanes,
    }
    return make_case(tables, {"inventory": {"safety_stock": False}})


def _enumerated_costs(d, s, f, unit) -> dict[tuple[int, ...], float]:
    """Cost of every feasible opening set: fixed cost + its transportation LP (scipy linprog)."""
    n, m = unit.shape
    costs = {}
    for k in range(1, n + 1):
        for S in itertools.combinations(range(n), k):
            S = list(S)
            if s[S].sum() < d.sum():
                continue
            # x_ij ≥ 0 units; Σ_i x_ij = d_j; Σ_j x_ij ≤ s_i.
            A_eq = np.kron(np.ones(len(S)), np.eye(m))
            A_ub = np.kron(np.eye(len(S)), np.ones(m))
            r = linprog(unit[S].ravel(), A_ub=A_ub, b_ub=s[S], A_eq=A_eq, b_eq=d, bounds=(0, None))
            if r.status == 0:
                costs[tuple(S)] = f[S].sum() + r.fun
    return costs


@pytest.mark.parametrize("seed", range(4))
def test_search_bound_and_solve_against_enumeration(seed):
    # Exhaustive enumeration (scipy linprog per opening set) gives the optimum; the search's plan is
    # never below it, the relaxation never above it, and solve() reaches it.
    d, s, f, unit = _small_cfl(seed)
    costs = _enumerated_costs(d, s, f, unit)
    opt = min(costs.values())
    case = _cfl_case(d, s, f, unit)
    _, _, _, hm = _compiled(case)
    out = search_plan(hm, 30.0)
    assert out.values is not None
    assert out.cost >= opt - 1e-6 * opt
    assert out.bound <= opt + 1e-6 * opt
    # Reduced-cost fixing: every opening set that opens a DC fixed closed (or closes one fixed open)
    # costs more than the search's plan, by enumeration.
    for k in out.fixed_closed:
        assert min(c for S, c in costs.items() if k in S) > out.cost
    for k in out.fixed_open:
        assert min(c for S, c in costs.items() if k not in S) > out.cost
    res = solve(case, mip_gap=1e-9)
    assert res.objective == pytest.approx(opt, rel=1e-7)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_search_on_a_multi_echelon_case_agrees_with_the_mip_alone(seed):
    # Suppliers → plant → DCs → customers with binding capacities (tests/randcase.py): the same optimum
    # with and without the plan search (plain HiGHS on the same model as the reference).
    settings = {"inventory": {"safety_stock": False}}
    base = solve(random_case(seed, n_dcs=5, n_customers=12, settings=settings), mip_gap=1e-9)
    off = random_case(seed, n_dcs=5, n_customers=12, settings=settings)
    off.settings["solver"]["plan_search"] = False
    ref = solve(off, mip_gap=1e-9)
    assert base.status == ref.status == "optimal"
    assert base.objective == pytest.approx(ref.objective, rel=1e-7)
    assert "plan search:" in base.message
    assert base.verification.passed


def test_search_respects_an_exact_open_count():
    # pmed1 (Beasley 1985, pmedopt 5819): exactly p = 5 medians; the search's plan opens 5 and
    # cannot beat the published optimum.
    case, p = pmed_case(DATA / "pmed" / "pmed1.txt")
    _, _, _, hm = _compiled(case)
    out = search_plan(hm, 30.0)
    assert out.values is not None, out.note
    assert out.open_count == p
    assert int(out.values["open"].sum()) == p
    assert out.cost >= read_pmedopt()["pmed1"] - 1e-6


def test_best_of_keeps_the_cheaper_plan_and_the_larger_bound():
    # Hand-checked: MIP ended at 110 with bound 90; the search had 100 and a relaxation bound 95 →
    # the search's plan is kept, bound 95, gap (100 − 95)/100 = 5 %.
    mip = SolveInfo("time_limit", 110.0, 90.0, 0.18, 1.0, has_solution=True, message="Time limit reached")
    search = SearchOutcome({"open": np.ones(1)}, 100.0, open_count=1, bound=95.0)
    out, kept = best_of(mip, search)
    assert kept and (out.objective, out.bound) == (100.0, 95.0)
    assert out.gap == pytest.approx(0.05)
    assert out.message.startswith(SEARCH_PLAN_KEPT)
    cheaper, kept = best_of(SolveInfo("optimal", 99.0, 99.0, 0.0, 1.0, has_solution=True), search)
    assert not kept and (cheaper.objective, cheaper.status) == (99.0, "optimal")


def test_search_skipped_when_other_integer_decisions_exist():
    # Single sourcing adds binaries besides the DCs: the search says so and HiGHS alone decides.
    case = random_case(1, settings={"inventory": {"safety_stock": False}, "policy": {"single_sourcing": True}})
    _, _, _, hm = _compiled(case)
    out = search_plan(hm, 5.0)
    assert (
        out.values is None
        and "integer decisions besides the DCs" in out.note
        and out.summary().startswith("plan search: skipped")
    )


def test_progress_names_the_method_and_never_bounds_above_the_optimum():
    # cap104 (capopt, Beasley 1988): every progress line's bound is a lower bound of the published
    # optimum, every plan reported costs no less than it, and each line names who found the plan.
    case = cap_case(DATA / "cap" / "cap104.txt")
    seen: list[dict] = []
    stages: list[str] = []

    def progress(stage, info=None):
        stages.append(stage)
        if stage == "progress":
            seen.append(dict(info))

    res = solve(case, mip_gap=1e-9, progress=progress)
    assert "plan search" in stages
    assert seen and {d["method"] for d in seen} <= {"plan search", "MIP search"}
    for d in seen:
        if np.isfinite(d.get("bound", -np.inf)):
            assert d["bound"] <= CAPOPT["cap104"] + 1e-3
        if np.isfinite(d.get("objective", np.inf)):
            assert d["objective"] >= CAPOPT["cap104"] - 1e-3
        assert d["elapsed"] >= 0
    assert res.objective == pytest.approx(CAPOPT["cap104"], abs=1.5e-3)
    assert "plan search:" in res.message
