"""Planning periods: each period's own case and the weights that turn its costs into a present value.

A case with a ``periods`` table is planned period by period: each period is an ordinary one-year case
(:func:`period_case`) — its own demand, capacities scaled by ``capacity_by_period``, candidate DCs
closed before their ``earliest_period`` — and the periods are linked by the DC decisions and, where the
settings carry stock, by stock (``netopt.model.phasing``).  Rates stay per year inside a period
(demand and capacities in units/yr); a period of ``years`` n lasts n years at those rates.

Present value (:func:`horizon`), with t_k the years before period k starts and n_k its length:

    one-off weight   δ_k = DF_k                                   (opening and closing costs at the period's start)
    annual weight    w_k = I_k · n_k · DF_k                        when the periods table gives DF_k
                     w_k = I_k · ((1+r)^−t_k − (1+r)^−(t_k+n_k)) / r   from the settings' rate r > 0
                     w_k = I_k · n_k                               when r = 0
    DF_k             = (1+r)^−t_k                                  when not given

The rate form is the present value of an annuity paid at the end of each year (standard discounting:
Σ_{j=1..n} (1+r)^−(t+j), written in closed form so that a season's fraction of a year works too).

| symbol | meaning | unit | name in code |
|---|---|---|---|
| n_k | length of period k | years | ``periods.years`` |
| t_k | years before period k starts (Σ of the earlier n) | years | column ``start_year`` |
| r | discount rate | share/yr | settings ``periods.discount_rate`` |
| DF_k | present-value factor at the period's start | ratio | ``periods.discount_factor`` |
| I_k | price level of the period | ratio | ``periods.cost_index`` |
| w_k, δ_k | weight of an annual cost, of a one-off cost | years, ratio | columns ``annual_weight``, ``one_off_weight`` |
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case

CAPACITY_COLUMNS = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("dc_sizes", "dc"))
"""Tables whose ``capacity`` a site's ``capacity_by_period`` factor scales, with their site column."""

ONE_OFF_COLUMNS = ("opening_cost", "closing_cost")
"""DC costs paid once, when a DC opens or closes: the phasing charges them, never a period's own case."""


def has_periods(case: Case) -> bool:
    """Whether ``case`` is planned over periods (it has a non-empty ``periods`` table)."""
    p = case.tables.get("periods")
    return p is not None and not p.empty


def horizon(case: Case) -> pd.DataFrame:
    """The periods in time order with ``start_year``, ``discount_factor``, ``annual_weight`` and
    ``one_off_weight`` (see the module docstring) beside the table's own columns."""
    p = case.tables["periods"].reset_index(drop=True).copy()
    r = float(case.settings["periods"]["discount_rate"])
    n = p["years"].to_numpy(float)
    t = np.concatenate([[0.0], np.cumsum(n)[:-1]])
    given = pd.to_numeric(p["discount_factor"], errors="coerce").to_numpy(float)
    at_start = (1.0 + r) ** -t
    annuity = n if r == 0.0 else ((1.0 + r) ** -t - (1.0 + r) ** -(t + n)) / r
    has = ~np.isnan(given)
    index = p["cost_index"].to_numpy(float)
    p["start_year"] = t
    p["discount_factor"] = np.where(has, given, at_start)
    p["annual_weight"] = index * np.where(has, n * given, annuity)
    p["one_off_weight"] = np.where(has, given, at_start)
    return p


def period_demand(demand: pd.DataFrame, period: str) -> pd.DataFrame:
    """Demand rows of ``period``: its own rows, and the blank-period rows of every (customer, product)
    that has no row of its own in that period.  The ``period`` column is left blank."""
    per = demand["period"].astype(str)
    own = demand[per == period]
    keys = pd.MultiIndex.from_frame(own[["customer", "product"]].astype(str))
    base = demand[per == ""]
    kept = base[~pd.MultiIndex.from_frame(base[["customer", "product"]].astype(str)).isin(keys)]
    out = pd.concat([kept, own]).sort_index()
    return out.assign(period="")


def period_case(case: Case, period: str, order: int) -> Case:
    """The one-year case of ``period`` (the ``order``-th period, from 0): its demand, capacities scaled by
    ``capacity_by_period``, candidate DCs closed before their ``earliest_period``, no one-off DC costs
    (:data:`ONE_OFF_COLUMNS`) and no time tables."""
    c = case.copy()
    t = c.tables
    t["demand"] = period_demand(t["demand"], period)
    factors = t["capacity_by_period"]
    if not factors.empty:
        f = factors[factors["period"].astype(str) == period].set_index("site")["capacity_factor"].astype(float)
        for table, site in CAPACITY_COLUMNS:
            df = t[table]
            if df.empty or "capacity" not in df:
                continue
            scale = df[site].astype(str).map(f).fillna(1.0).to_numpy(float)
            df["capacity"] = df["capacity"].to_numpy(float) * scale
    dcs = t["dcs"]
    names = list(case.tables["periods"]["period"].astype(str))
    first = dcs["earliest_period"].astype(str).map({p: i for i, p in enumerate(names)})
    too_early = first.notna() & (first.fillna(-1).to_numpy() > order)
    dcs.loc[too_early & ~dcs["force"].eq("out"), "force"] = "closed"
    for col in ONE_OFF_COLUMNS:
        dcs[col] = 0.0
    for name in ("periods", "capacity_by_period"):
        t[name] = t[name].iloc[0:0]
    c.name = f"{case.name} · {period}"
    c.generated_lanes = case.generated_lanes
    return c
