"""The Bass diffusion and forecast accuracy of ``netopt.data.launch_demand``.

References: the Bass model (Bass 1969, Management Science 15): dF/dt = (p + qF)(1 − F), F(0) = 0, with the
closed form F(t) = (1 − e^−(p+q)t)/(1 + (q/p)e^−(p+q)t), its peak time t* = ln(q/p)/(p + q) and peak
adoption rate f(t*) = (p + q)²/(4q) (both in Bass 1969); the ODE solved by scipy.integrate.solve_ivp.
MAPE and bias as defined in Hyndman & Athanasopoulos, Forecasting: Principles and Practice, §5.8 (mean
absolute percentage error; bias as the mean forecast error, here forecast − actual).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from launchcase import launch_case, random_launch
from scipy.integrate import solve_ivp

from netopt.data.launch_demand import bass_adoption, bass_cumulative, forecast_accuracy, launch_scenarios, peak_year

PARAMS = [(0.03, 0.38), (0.01, 0.5), (0.2, 0.1), (0.05, 0.0)]


@pytest.mark.parametrize("p,q", PARAMS)
def test_cumulative_adoption_is_the_closed_form(p, q):
    # Bass 1969: F(t) = (1 − e^−(p+q)t) / (1 + (q/p) e^−(p+q)t), written out here.
    t = np.linspace(0.0, 30.0, 121)
    e = np.exp(-(p + q) * t)
    assert bass_cumulative(p, q, t) == pytest.approx((1 - e) / (1 + (q / p) * e), rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("p,q", PARAMS)
def test_cumulative_adoption_solves_the_bass_ode(p, q):
    # scipy.integrate.solve_ivp of dF/dt = (p + qF)(1 − F), F(0) = 0 (Bass 1969).
    t = np.linspace(0.0, 25.0, 51)
    sol = solve_ivp(lambda _t, f: (p + q * f) * (1 - f), (0.0, 25.0), [0.0], t_eval=t, rtol=1e-10, atol=1e-12)
    assert sol.success
    assert bass_cumulative(p, q, t) == pytest.approx(sol.y[0], abs=1e-8)


def test_yearly_adopters_and_peak_year_follow_the_ode():
    # Adopters of year t = m (F(t) − F(t−1)), F from solve_ivp; the peak year is the one with the most.
    p, q, m, years = 0.03, 0.38, 2.0e6, 15
    t = np.arange(0, years + 1, dtype=float)
    sol = solve_ivp(lambda _t, f: (p + q * f) * (1 - f), (0.0, years), [0.0], t_eval=t, rtol=1e-11, atol=1e-13)
    yearly = m * np.diff(sol.y[0])
    a = bass_adoption(p, q, m, years)
    assert a["adopters"].to_numpy() == pytest.approx(yearly, rel=1e-6)
    assert a["cumulative"].iloc[-1] == pytest.approx(m * sol.y[0][-1], rel=1e-8)
    year, units = peak_year(p, q, m, years)
    assert year == int(np.argmax(yearly)) + 1
    assert units == pytest.approx(yearly.max(), rel=1e-6)


def test_peak_time_and_rate_are_bass_formulas():
    # Bass 1969: the adoption rate f = dF/dt peaks at t* = ln(q/p)/(p + q), where f(t*) = (p + q)²/(4q).
    p, q = 0.03, 0.38
    t = np.linspace(0.0, 20.0, 200_001)
    f = np.gradient(bass_cumulative(p, q, t), t)
    k = int(np.argmax(f))
    assert t[k] == pytest.approx(math.log(q / p) / (p + q), abs=1e-3)
    assert f[k] == pytest.approx((p + q) ** 2 / (4 * q), rel=1e-6)


def test_mape_and_bias_are_the_textbook_measures():
    # Hyndman & Athanasopoulos §5.8: MAPE = mean |A − F| / A; bias = mean (F − A); by hand below.
    past = pd.DataFrame(
        {
            "product": ["X", "X", "X", "Y", "Y"],
            "period": ["1", "2", "3", "1", "2"],
            "forecast": [110.0, 90.0, 100.0, 50.0, 70.0],
            "actual": [100.0, 100.0, 80.0, 40.0, 70.0],
        }
    )
    acc = forecast_accuracy(past).set_index("product")
    assert acc.at["X", "periods"] == 3
    assert acc.at["X", "mape"] == pytest.approx((10 / 100 + 10 / 100 + 20 / 80) / 3)
    assert acc.at["X", "bias"] == pytest.approx((10 - 10 + 20) / 3)
    assert acc.at["X", "bias_share"] == pytest.approx(20 / 280)
    assert acc.at["Y", "mape"] == pytest.approx((10 / 40 + 0) / 2)
    assert acc.at["Y", "bias"] == pytest.approx(5.0)


def test_bass_launch_demand_is_the_peak_year_spread_like_the_analogue():
    # Level = the peak year's adopters m (F(t) − F(t−1)) (Bass 1969, F from solve_ivp here), spread over
    # the customers in proportion to the analogue's demand, × each case's factor (the definition).
    g = random_launch(6)
    p, q, m = 0.02, 0.45, 50_000.0
    launch = {"method": "bass", "bass_p": p, "bass_q": q, "market_size": m, "bass_years": 12}
    case = launch_case(g)
    case.tables["launches"] = case.tables["launches"].assign(**launch)
    t = np.arange(0, 13, dtype=float)
    sol = solve_ivp(lambda _t, f: (p + q * f) * (1 - f), (0.0, 12.0), [0.0], t_eval=t, rtol=1e-11, atol=1e-13)
    level = m * np.diff(sol.y[0]).max()
    sc = launch_scenarios(case, "L")
    total = sum(g["dem"].values())
    for lv, f in zip(("low", "base", "high"), g["factors"]):
        d = sc[sc["scenario"] == lv].set_index("customer")["demand"]
        assert d.sum() == pytest.approx(level * f, rel=1e-6)
        assert d["C0"] == pytest.approx(level * f * g["dem"]["C0"] / total, rel=1e-6)
