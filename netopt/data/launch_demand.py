"""A new product's demand as named scenarios with probabilities (``netopt robust``'s first step).

Two routes to a launch's demand level (table ``launches``, one row per launch):

* **analogue**: the new product's demand at customer c in case s is

      d_{c,s} = a_c · f_s · α_c

  a_c the analogue product's demand at c (units/yr), f_s the case's scale factor (low, base, high) and
  α_c the product of the ``launch_adjustments`` factors that meet on c (its region's and its own; 1
  when none).
* **bass**: the Bass diffusion (Bass 1969, Management Science 15): the share of the market m that has
  adopted by time t (years) is

      F(t) = (1 − e^{−(p+q)t}) / (1 + (q/p) e^{−(p+q)t})

  and the adopters of year t are m (F(t) − F(t−1)).  The peak year's adopters D* (the most of years
  1 … ``bass_years``, one unit each) are the level, spread over the customers as the analogue's demand
  is: d_{c,s} = D* · (a_c / Σ a) · f_s · α_c.

Forecast accuracy of past launches (table ``past_launches``): per product, over its n periods,
MAPE = 1/n Σ |A_t − F_t| / A_t (a share) and bias = 1/n Σ (F_t − A_t) (positive: forecast too high).
"""

from __future__ import annotations

import copy

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem

LEVELS = ("low", "base", "high")
"""The cases of every launch, in order; each is a scenario of ``netopt robust``."""

SCENARIO_COLUMNS = ["scenario", "probability", "customer", "product", "demand"]


def bass_cumulative(p: float, q: float, t) -> np.ndarray:
    """F(t), the share of the market adopted by time ``t`` (years) in the Bass model."""
    t = np.asarray(t, dtype=float)
    e = np.exp(-(p + q) * t)
    return (1.0 - e) / (1.0 + (q / p) * e)


def bass_adoption(p: float, q: float, m: float, years: int) -> pd.DataFrame:
    """Year by year (1 … ``years``): cumulative share F(t), adopters m(F(t) − F(t−1)) and cumulative
    adopters m F(t) (units)."""
    t = np.arange(0, years + 1, dtype=float)
    f = bass_cumulative(p, q, t)
    return pd.DataFrame(
        {
            "year": np.arange(1, years + 1),
            "cumulative_share": f[1:],
            "adopters": m * np.diff(f),
            "cumulative": m * f[1:],
        }
    )


def peak_year(p: float, q: float, m: float, years: int) -> tuple[int, float]:
    """The year with the most adopters (first of equals) and their number (units)."""
    a = bass_adoption(p, q, m, years)
    k = int(a["adopters"].to_numpy().argmax())
    return int(a["year"].iloc[k]), float(a["adopters"].iloc[k])


def choose_launch(case: Case, name: str = "") -> pd.Series:
    """The launch row named ``name`` (blank: the case's only launch); CaseError naming the table otherwise."""
    la = case.tables["launches"]
    if la.empty:
        raise CaseError([Problem("launches", None, None, "the case has no launches table (launches.csv)")])
    if not name:
        if len(la) > 1:
            names = ", ".join(la["launch"].astype(str))
            raise CaseError(
                [Problem("settings", None, "robust.launch", f"the case has {len(la)} launches ({names}): name one")]
            )
        return la.iloc[0]
    hit = la[la["launch"].astype(str) == name]
    if hit.empty:
        raise CaseError([Problem("settings", None, "robust.launch", f"no launch '{name}' in launches")])
    return hit.iloc[0]


def _adjustment(case: Case, launch: str, customers: pd.Series) -> np.ndarray:
    adj = case.tables["launch_adjustments"]
    alpha = np.ones(len(customers))
    if adj.empty:
        return alpha
    mine = adj[adj["launch"].astype(str) == launch]
    region = customers.map(case.tables["customers"].drop_duplicates("customer").set_index("customer")["region"])
    for reg, cust, f in zip(mine["region"].astype(str), mine["customer"].astype(str), mine["factor"].astype(float)):
        hit = (region == reg).to_numpy() if reg else (customers == cust).to_numpy()
        alpha[hit] *= f
    return alpha


def launch_scenarios(case: Case, launch: str = "", levels: list[str] | None = None) -> pd.DataFrame:
    """The launch's demand scenarios: one row per scenario (low, base, high, or the ``levels`` asked) and
    customer with ``scenario``, ``probability``, ``customer``, ``product``, ``demand`` (units/yr).

    Probabilities of a subset of the levels are the launch's, divided by their sum (the caller says so)."""
    row = choose_launch(case, launch)
    levels = list(dict.fromkeys(levels)) if levels else list(LEVELS)
    unknown = [lv for lv in levels if lv not in LEVELS]
    if unknown:
        raise CaseError(
            [Problem("settings", None, "robust.scenarios", f"unknown case(s) {unknown}: choose from {list(LEVELS)}")]
        )
    dem = case.tables["demand"]
    ana = dem[dem["product"] == row["analogue"]].groupby("customer", sort=False)["quantity"].sum()
    base = ana.to_numpy(float)
    if str(row["method"]) == "bass":
        _, level = peak_year(
            float(row["bass_p"]), float(row["bass_q"]), float(row["market_size"]), int(row["bass_years"])
        )
        base = level * base / base.sum()
    alpha = _adjustment(case, str(row["launch"]), pd.Series(ana.index, dtype=str))
    probs = np.array([float(row[f"prob_{lv}"]) for lv in levels])
    if probs.sum() <= 0:
        raise CaseError([Problem("launches", None, "prob_base", f"the cases {levels} have probability 0")])
    probs = probs / probs.sum()
    parts = [
        pd.DataFrame(
            {
                "scenario": lv,
                "probability": pr,
                "customer": ana.index.astype(str),
                "product": str(row["product"]),
                "demand": base * float(row[lv]) * alpha,
            }
        )
        for lv, pr in zip(levels, probs)
    ]
    return pd.concat(parts, ignore_index=True)[SCENARIO_COLUMNS]


def with_launch_demand(case: Case, demand: pd.DataFrame, name: str, analogue: str) -> Case:
    """A copy of ``case`` named ``name`` with the launch's demand rows (customer, product, demand) added;
    each new row takes the other columns (demand_cv, price) of ``analogue``'s row at that customer."""
    tables = {k: v.copy() for k, v in case.tables.items()}
    dem = tables["demand"]
    new = demand[demand["demand"] > 0]
    if len(new):
        product = str(new["product"].iloc[0])
        rows = dem[dem["product"] == analogue].drop_duplicates("customer").set_index("customer")
        add = rows.loc[new["customer"]].reset_index()
        add["product"] = product
        add["quantity"] = new["demand"].to_numpy(float)
        tables["demand"] = pd.concat([dem, add[dem.columns]], ignore_index=True)
        tables["demand"].index = range(2, 2 + len(tables["demand"]))
    return Case(
        name, tables, copy.deepcopy(case.settings), case.path, case.scenarios, case.warnings, case.generated_lanes
    )


def mean_demand(scenarios: pd.DataFrame) -> pd.DataFrame:
    """The probability-weighted mean demand of the scenarios (customer, product, demand): the mean-value
    problem's demand."""
    s = scenarios.assign(demand=scenarios["demand"] * scenarios["probability"])
    return s.groupby(["customer", "product"], sort=False, as_index=False)["demand"].sum()


def forecast_accuracy(past: pd.DataFrame) -> pd.DataFrame:
    """Per past launch: ``periods`` (count), ``mape`` (share: mean |A − F| / A), ``bias`` (units: mean
    F − A), ``bias_share`` (share: Σ (F − A) / Σ A)."""
    cols = ["product", "periods", "mape", "bias", "bias_share"]
    if past.empty:
        return pd.DataFrame(columns=cols)
    p = past.assign(err=past["forecast"].astype(float) - past["actual"].astype(float))
    p["ape"] = p["err"].abs() / p["actual"].astype(float)
    g = p.groupby("product", sort=False)
    out = pd.DataFrame(
        {
            "periods": g.size(),
            "mape": g["ape"].mean(),
            "bias": g["err"].mean(),
            "bias_share": g["err"].sum() / g["actual"].sum(),
        }
    ).reset_index()
    return out[cols]
