"""Planning over periods: phasing of DCs, present value, seasonal stock (``netopt.engine.horizon``).

References: the present value of an annuity, Σ_{j=1..n} (1+r)^−(t+j), and of a one-off amount at t,
(1+r)^−t (standard discounting; e.g. Brealey, Myers & Allen, Principles of Corporate Finance, ch. 2 —
from memory); scipy.optimize.linprog for the seasonal LP; brute force over every opening schedule
(each period an independent one-year solve with its DCs forced) for the phasing.
"""

from __future__ import annotations

import itertools
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from randcase import random_case
from scipy.optimize import linprog

from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.data.periods import horizon
from netopt.engine.baseline import cost_current_flows
from netopt.engine.highs import SolveInfo
from netopt.engine.horizon import PERIODS_BOUND_USED, periods_bound, with_periods_bound
from netopt.engine.solve import solve
from netopt.present.report import render_report
from netopt.studies.comparison import cost_comparable_to_today


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


def _with_periods(case, periods: pd.DataFrame, **settings):
    c = case.copy()
    c.tables["periods"] = periods
    c.settings["periods"].update(settings)
    return c


def test_weights_follow_the_discounting_formulas():
    # Present value of an annuity paid at each year's end and of a one-off at the period's start
    # (standard discounting, from memory), with periods of 1, 2 and 0.5 years at r = 8 %.
    case = _with_periods(random_case(1), _periods(["a", "b", "c"], [1.0, 2.0, 0.5]), discount_rate=0.08)
    h = horizon(case)
    r = 0.08
    assert h["start_year"].tolist() == [0.0, 1.0, 3.0]
    assert h["annual_weight"].iloc[0] == pytest.approx(1 / (1 + r))
    assert h["annual_weight"].iloc[1] == pytest.approx((1 + r) ** -2 + (1 + r) ** -3)
    assert h["annual_weight"].iloc[2] == pytest.approx(((1 + r) ** -3 - (1 + r) ** -3.5) / r)
    assert h["one_off_weight"].tolist() == pytest.approx([1.0, (1 + r) ** -1, (1 + r) ** -3])
    given = _with_periods(
        random_case(1), _periods(["a", "b"], [1.0, 2.0], discount_factor=[1.0, 0.9], cost_index=[1.0, 1.1])
    )
    g = horizon(given)
    assert g["annual_weight"].tolist() == pytest.approx([1.0, 1.1 * 2.0 * 0.9])
    assert g["one_off_weight"].tolist() == pytest.approx([1.0, 0.9])


@pytest.mark.parametrize("seed", [3, 7])
def test_one_period_plan_equals_the_plan_without_periods(seed):
    # The same case with one period of one year at today's prices: the same objective and decisions.
    base = random_case(seed, n_dcs=4)
    one = _with_periods(base, _periods(["only"]))
    a, b = solve(base), solve(one)
    assert a.status == b.status == "optimal"
    assert b.verification.passed, b.verification.largest_violation_rule
    assert b.objective == pytest.approx(a.objective, rel=1e-7)
    da = a.tables["dcs"].set_index("dc")["open"]
    db = b.tables["dcs"].set_index("dc")["open"]
    assert (da == db.reindex(da.index)).all()
    fa = a.tables["flows"].groupby(["origin", "destination", "product"])["quantity"].sum()
    fb = b.tables["flows"].groupby(["origin", "destination", "product"])["quantity"].sum()
    assert np.allclose(fa.to_numpy(), fb.reindex(fa.index).fillna(0).to_numpy(), atol=1e-6 * fa.max())
    assert set(b.tables["phasing"].columns) >= {"dc", "period", "open", "state"}
    assert "period" in b.tables["dcs"].columns


def _schedule_cost(case, per, names, schedule):
    """Present value of a schedule {dc: opening period index or None} by independent one-year solves."""
    total = 0.0
    dcs = case.tables["dcs"].set_index("dc")
    for k, p in enumerate(names):
        c = case.copy()
        c.tables["periods"] = c.tables["periods"].iloc[0:0]
        for dc, at in schedule.items():
            c.tables["dcs"].loc[c.tables["dcs"]["dc"] == dc, "force"] = (
                "open" if at is not None and at <= k else "closed"
            )
        c.tables["dcs"]["opening_cost"] = 0.0
        c.tables["dcs"]["closing_cost"] = 0.0
        dem = case.tables["demand"]
        c.tables["demand"] = dem[dem["period"] == p].assign(period="")
        r = solve(c)
        if r.status != "optimal":
            return np.inf
        total += float(per["annual_weight"].iloc[k]) * r.objective
    for dc, at in schedule.items():
        if at is not None:
            total += float(per["one_off_weight"].iloc[at]) * float(dcs.loc[dc, "opening_cost"])
    return total


def _growing_case(seed: int, growth: list[float]):
    base = random_case(seed, n_dcs=3, n_customers=6)
    t = base.tables
    dem = t["demand"]
    t["demand"] = pd.concat(
        [dem.assign(period=p, quantity=dem["quantity"] * g) for p, g in zip(["Y1", "Y2", "Y3"], growth)]
    )
    t["demand"] = t["demand"].reset_index(drop=True)
    t["dcs"]["opening_cost"] = 20_000.0
    t["dcs"]["capacity"] = np.inf  # every schedule feasible in every period (demand grows 2.4-fold)
    t["suppliers"]["capacity"] = np.inf
    return base


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_phasing_equals_brute_force_over_opening_schedules(seed):
    # Every schedule of the candidate DCs (open from Y1, Y2, Y3 or never; once open they stay open), each
    # period an independent one-year solve with those DCs forced: the cheapest equals netopt's plan.
    case = _growing_case(seed, [1.0, 1.6, 2.4])
    case = _with_periods(case, _periods(["Y1", "Y2", "Y3"]), discount_rate=0.1)
    case.tables["dcs"]["status"] = ["existing", "candidate", "candidate"]
    per = horizon(case)
    names = ["Y1", "Y2", "Y3"]
    cands = ["D1", "D2"]
    best, best_sched = np.inf, None
    for combo in itertools.product([0, 1, 2, None], repeat=len(cands)):
        sched = dict(zip(cands, combo))
        cost = _schedule_cost(case, per, names, sched)
        if cost < best:
            best, best_sched = cost, sched
    r = solve(case)
    assert r.status == "optimal" and r.verification.passed, r.verification.largest_violation_rule
    assert r.objective == pytest.approx(best, rel=1e-6)
    ph = r.tables["phasing"]
    assert set(ph["state"]) <= {"opens", "open", "closes", "closed"}
    assert best_sched is not None


@pytest.mark.parametrize("seed", [11, 13])
def test_periods_own_optima_bound_the_plan_from_below(seed):
    # A relaxation bounds a minimum from below (e.g. Wolsey, Integer Programming, 1998, ch. 2 — from
    # memory): dropping the rows that link the periods and the one-off costs leaves each period's own
    # one-year problem, so Σ_k w_k OPT_k ≤ the brute-force optimum over every opening schedule.
    case = _growing_case(seed, [1.0, 1.6, 2.4])
    case = _with_periods(case, _periods(["Y1", "Y2", "Y3"]), discount_rate=0.1)
    case.tables["dcs"]["status"] = ["existing", "candidate", "candidate"]
    per = horizon(case)
    names = ["Y1", "Y2", "Y3"]
    w = per["annual_weight"].to_numpy(float)
    # Each period alone (its own one-year optimum OPT_k, currency/yr): _schedule_cost weights it by w_k.
    own = [_schedule_cost(case, per.iloc[[k]].reset_index(drop=True), [p], {}) / w[k] for k, p in enumerate(names)]
    bound = periods_bound(SimpleNamespace(var_labels={}), own, w)
    best = min(
        _schedule_cost(case, per, names, dict(zip(["D1", "D2"], combo)))
        for combo in itertools.product([0, 1, 2, None], repeat=2)
    )
    assert bound <= best * (1 + 1e-9)
    r = solve(case)
    assert r.status == "optimal" and r.objective >= bound * (1 - 1e-9)
    # With stock carried the periods are linked the other way: no such bound.
    with_stock = SimpleNamespace(var_labels={"stock": pd.DataFrame()})
    assert periods_bound(with_stock, own, w) == -np.inf


def test_the_periods_bound_tightens_the_gap_and_says_so():
    info = SolveInfo("time_limit", 100.0, -np.inf, np.inf, 1.0, has_solution=True, message="time limit")
    out = with_periods_bound(info, 99.0)
    assert out.bound == 99.0 and out.gap == pytest.approx(0.01) and PERIODS_BOUND_USED in out.message
    assert with_periods_bound(info, -np.inf) is info  # no bound: nothing changes
    above = with_periods_bound(info, 101.0)  # cannot be; never used, and said
    assert above.bound == -np.inf and "not used" in above.message


def test_baseline_of_a_plan_over_periods_is_its_first_year():
    # The calibration identity of the baseline (today's flows = the plan's own flows cost the plan's
    # cost, to 1e-9) for the first period of a plan over periods: a baseline is one year, the first.
    case = _with_periods(_growing_case(12, [1.0, 1.6, 2.4]), _periods(["Y1", "Y2", "Y3"]), discount_rate=0.1)
    case.tables["dcs"]["status"] = ["existing", "candidate", "candidate"]
    r = solve(case)
    assert r.status == "optimal"
    f = r.tables["flows"]
    today = case.copy()
    today.tables["current_flows"] = f[f["period"] == "Y1"][["origin", "destination", "mode", "product", "quantity"]]
    res = cost_current_flows(today)
    assert res.verification.passed and "first period" in res.message
    assert res.objective == pytest.approx(cost_comparable_to_today(r), rel=1e-9)


def test_candidate_opens_once_demand_has_grown_past_the_threshold():
    # A plant in Berlin, an existing DC in Hamburg and a candidate in Munich beside the customer: the
    # candidate saves the Hamburg detour (about 0.36 per unit) against a fixed cost of 3,000 a year, so it
    # pays once demand passes about 8,300 units a year; the opening period and present value equal the
    # hand computation (every schedule's one-year solves, discounted as stated above).
    rows = {
        "products": [{"product": "P", "unit_weight_kg": 10.0, "unit_value": 50.0}],
        "plants": [{"plant": "F", "product": "P", "lat": 52.52, "lon": 13.40}],  # Berlin
        "dcs": [
            {"dc": "FAR", "lat": 53.55, "lon": 9.99, "status": "existing"},  # Hamburg
            {
                "dc": "NEAR",
                "lat": 48.14,
                "lon": 11.58,
                "status": "candidate",
                "fixed_cost": 3_000.0,
                "opening_cost": 2_000.0,
            },  # Munich
        ],
        "customers": [{"customer": "C", "lat": 48.14, "lon": 11.60}],
        "demand": [
            {"customer": "C", "product": "P", "quantity": q, "period": p}
            for p, q in zip(["Y1", "Y2", "Y3", "Y4"], [2_000.0, 6_000.0, 12_000.0, 20_000.0])
        ],
        "modes": [{"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 600, "co2_kg_per_tonne_km": 0.0}],
        "periods": _periods(["Y1", "Y2", "Y3", "Y4"]).to_dict("records"),
    }
    settings = {
        "lanes": {"legs": ["plant-dc", "dc-customer"]},
        "inventory": {"safety_stock": False, "holding_rate": 0.0},
        "periods": {"discount_rate": 0.05},
        "solver": {"mip_gap": 1e-9},
    }
    case = make_case(rows, settings, name="threshold")
    per = horizon(case)
    names = per["period"].tolist()
    costs = {at: _schedule_cost(case, per, names, {"NEAR": at}) for at in [0, 1, 2, 3, None]}
    expect = min(costs, key=costs.get)
    assert expect not in (0, None), costs  # the data make the saving start part-way through
    r = solve(case)
    assert r.verification.passed, r.verification.largest_violation_rule
    ph = r.tables["phasing"].set_index(["dc", "period"])
    assert ph.loc[("NEAR", names[expect]), "state"] == "opens"
    assert r.objective == pytest.approx(costs[expect], rel=1e-7)
    pc = r.tables["period_cost"]
    one_off = pc[(pc["component"] == "dc_opening") & (pc["period"] == names[expect])]
    assert one_off["undiscounted"].iloc[0] == pytest.approx(2_000.0)
    assert one_off["present_value"].iloc[0] == pytest.approx(2_000.0 * 1.05**-expect)  # (1+r)^−t


def _seasonal_case(cap: float, d1: float, d2: float, h_rate: float = 0.2, value: float = 40.0):
    rows = {
        "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": value, "holding_rate": h_rate}],
        "plants": [{"plant": "F", "product": "P", "lat": 50.0, "lon": 8.0, "capacity": cap, "unit_cost": 5.0}],
        "dcs": [{"dc": "D", "lat": 50.0, "lon": 8.0, "status": "existing", "fixed_cost": 1000.0, "handling_cost": 0.5}],
        "customers": [{"customer": "C", "lat": 50.0, "lon": 8.0}],
        "demand": [
            {"customer": "C", "product": "P", "quantity": d1, "period": "low"},
            {"customer": "C", "product": "P", "quantity": d2, "period": "peak"},
        ],
        "modes": [
            {
                "mode": "road",
                "cost_per_tonne_km": 0.0,
                "fixed_cost_per_unit": 1.0,
                "speed_km_per_day": 600,
                "co2_kg_per_tonne_km": 0.0,
            }
        ],
        "periods": _periods(["low", "peak"], [0.5, 0.5]).to_dict("records"),
    }
    settings = {
        "lanes": {"legs": ["plant-dc", "dc-customer"]},
        "inventory": {"safety_stock": False},
        "periods": {"carry_stock": True, "repeat_year": True},
        "solver": {"mip_gap": 1e-9},
    }
    return make_case(rows, settings, name="seasons")


def test_seasonal_prebuild_carries_the_hand_formula_and_matches_linprog():
    # Plant capacity 10,000 units/yr; demand rates 6,000 (low half) and 13,000 (peak half): the peak needs
    # (13,000 − 10,000) × 0.5 = 1,500 units built ahead in the low season (hand formula), carried at
    # 0.2 × 40 = 8 per unit-year.
    cap, d1, d2 = 10_000.0, 6_000.0, 13_000.0
    r = solve(_seasonal_case(cap, d1, d2))
    assert r.status == "optimal" and r.verification.passed, r.verification.largest_violation_rule
    st = r.tables["stock"]
    carried = st[st["period"] == "low"]["closing"].sum()
    assert carried == pytest.approx((d2 - cap) * 0.5, rel=1e-9)
    assert st[st["period"] == "peak"]["closing"].sum() == pytest.approx(0.0, abs=1e-6)

    # The same year as an LP by hand (scipy linprog): per season k (n = 0.5 yr): make m_k ≤ cap,
    # ship plant→DC x_k, DC→customer y_k = d_k (units/yr), stock at the plant sp_k and at the DC sd_k (units).
    n = 0.5
    h = 0.2 * 40.0
    # columns: m1 m2 x1 x2 y1 y2 sp1 sp2 sd1 sd2
    c = np.array([5 * n, 5 * n, (1 + 0.5) * n, (1 + 0.5) * n, 1 * n, 1 * n, h * n, h * n, h * n, h * n])
    A_eq = [
        [n, 0, -n, 0, 0, 0, -1, 0, 0, 0],  # plant low: make − ship = stock built
        [0, n, 0, -n, 0, 0, 1, -1, 0, 0],  # plant peak (sp2 carries to low: cyclic below)
        [0, 0, n, 0, -n, 0, 0, 0, -1, 0],
        [0, 0, 0, n, 0, -n, 0, 0, 1, -1],
        [0, 0, 0, 0, 1, 0, 0, 0, 0, 0],
        [0, 0, 0, 0, 0, 1, 0, 0, 0, 0],
    ]
    A_eq[0][7] = 1  # + sp2 (the last season's stock opens the year)
    A_eq[2][9] = 1
    b_eq = [0, 0, 0, 0, d1, d2]
    bounds = [(0, cap), (0, cap)] + [(0, None)] * 8
    lp = linprog(c, A_eq=np.array(A_eq, float), b_eq=b_eq, bounds=bounds, method="highs")
    assert lp.status == 0
    assert r.objective == pytest.approx(lp.fun + 1000.0 * 1.0, rel=1e-9)  # + the DC's fixed cost for the year


def test_cost_to_serve_of_each_season_sums_to_its_cost_with_stock_built_ahead():
    # Cost to serve by flow conservation (the identity the one-year rows obey): per period, the rows sum to
    # the period's annual cost; the low season's units left in stock for the peak are its stock_built,
    # and the peak, drawing on stock paid in the low season, builds none.
    r = solve(_seasonal_case(10_000.0, 6_000.0, 13_000.0))
    assert r.status == "optimal" and r.verification.passed
    cts, pc = r.tables["cost_to_serve"], r.tables["period_cost"]
    for period in ("low", "peak"):
        annual = pc[(pc["period"] == period)]["annual"].sum()
        assert cts[cts["period"] == period]["cost"].sum() == pytest.approx(annual, rel=1e-9)
    built = cts.groupby("period")["stock_built"].sum()
    # 1,500 units over half a year = 3,000 units/yr left in stock, each worth at least the plant's 5 a unit.
    assert built["low"] >= 3_000.0 * 5.0 - 1e-6
    assert built["peak"] == pytest.approx(0.0, abs=1e-6)
    # Marginal values are one year's: over periods they are not computed, and the result says so.
    assert r.tables["shadow_prices"].empty and "not computed for a plan over periods" in r.message


def test_report_of_a_plan_over_periods_shows_the_phasing_and_the_empty_marginal_values():
    # The report renders a plan over periods: its phasing and cost per period, and the marginal-value
    # sections said to be empty (common practice, no source: a report never fails on an empty table).
    r = solve(_seasonal_case(10_000.0, 6_000.0, 13_000.0))
    page = render_report(r)
    assert "Phasing of the DCs" in page and "Cost per period" in page
    at = page.index('id="extra-shadow-prices"')
    assert "No rows in this plan" in page[at : page.index("</section>", at)]


def test_seasonal_peak_without_stock_loses_demand_or_is_infeasible():
    # Without carried stock the peak exceeds the plant's capacity: the case cannot be met as stated.
    case = _seasonal_case(10_000.0, 6_000.0, 13_000.0)
    case.settings["periods"]["carry_stock"] = False
    r = solve(case)
    assert r.status == "infeasible"
    assert r.diagnosis is not None and (r.diagnosis["period"] == "peak").any()


def test_period_tables_are_checked_together(tmp_path):
    base = random_case(2)
    bad = base.copy()
    bad.tables["demand"] = bad.tables["demand"].assign(period="Y9")
    with pytest.raises(CaseError) as e:
        make_case({k: v for k, v in bad.tables.items() if len(v)}, bad.settings)
    assert any(p.table == "demand" and p.column == "period" for p in e.value.problems)
