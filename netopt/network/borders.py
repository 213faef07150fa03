"""Duties and border crossings of each arc, from the sites' countries and the ``duties`` and ``borders`` tables.

A lane from site i (country κ_i) to site j (country κ_j ≠ κ_i, both stated) crosses a border:

    border days   δ_a = days of the borders row (κ_i → κ_j), else of the row (κ_j → κ_i) with both_ways
    border cost   b_a = cost_per_unit + cost_per_tonne × w_p / 1000                       (currency/unit)
    duty          τ_a = ρ × V_a + σ                                                       (currency/unit)

where ρ (share) and σ (currency/unit) are the ad valorem rate and the per-unit amount of the duties row
that matches the lane: origin = κ_i, or else the origin site's region; destination = κ_j; the product's
own row, or else the row for every product.  The customs value V_a is the goods' value (the supplier's
price on a supplier lane, else the product's unit_value), plus the lane's freight per unit f_a when
``duties.customs_value_includes_freight``.  Within one country, or where a country is not stated, no
duty or border applies.  δ_a adds to the lane's transit days (so service windows, stock in transit and
safety-stock lead times see it), b_a to its freight (cost component ``transport``), τ_a is the cost
component ``duties`` (:mod:`netopt.model.duties`).

| symbol | meaning | unit | name in code |
|---|---|---|---|
| κ_i | country of site i | ISO 3166-1 alpha-2 | site tables, column ``country`` |
| δ_a, b_a | border days and cost of arc a | days, currency/unit | arc columns ``border_days``, ``border_per_unit`` |
| ρ, σ | ad valorem rate, per-unit duty | share, currency/unit | ``duties.ad_valorem``, ``duties.per_unit`` |
| V_a | customs value of one unit on arc a | currency/unit | arc column ``customs_value`` |
| τ_a | duty per unit on arc a | currency/unit | arc column ``duty_per_unit`` |
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case

SITES = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))


def site_countries(case: Case) -> pd.Series:
    """Site code → its country (blank where not stated)."""
    t = case.tables
    parts = [t[n][[c, "country"]].set_axis(["site", "country"], axis=1) for n, c in SITES]
    s = pd.concat(parts).drop_duplicates("site").set_index("site")["country"].astype(str)
    return s


def site_regions(case: Case) -> pd.Series:
    """Site code → its region where the site table has one (suppliers, DCs); blank otherwise."""
    t = case.tables
    parts = [
        t[n][[c, "region"]].set_axis(["site", "region"], axis=1) for n, c in (("suppliers", "supplier"), ("dcs", "dc"))
    ]
    return pd.concat(parts).drop_duplicates("site").set_index("site")["region"].astype(str)


def arc_countries(case: Case, arcs: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Country of each arc's origin and destination ("" where a site has none)."""
    ctry = site_countries(case)
    o = arcs["origin"].map(ctry).fillna("").astype(str).to_numpy()
    d = arcs["destination"].map(ctry).fillna("").astype(str).to_numpy()
    return o, d


def border_crossings(case: Case, arcs: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Border days δ_a and cost b_a (currency/unit) of each arc (see the module docstring)."""
    n = len(arcs)
    borders = case.tables["borders"]
    if borders.empty or n == 0:
        return np.zeros(n), np.zeros(n)
    o, d = arc_countries(case, arcs)
    b = borders.assign(_cost_t=borders["cost_per_tonne"].astype(float), _cost_u=borders["cost_per_unit"].astype(float))
    ahead = b[["origin_country", "destination_country", "days", "_cost_u", "_cost_t"]]
    back = b.loc[b["both_ways"].astype(bool), ["destination_country", "origin_country", "days", "_cost_u", "_cost_t"]]
    back = back.set_axis(ahead.columns, axis=1)
    rows = pd.concat([ahead.assign(_rank=0), back.assign(_rank=1)]).sort_values("_rank")
    rows = rows.drop_duplicates(["origin_country", "destination_country"]).set_index(
        ["origin_country", "destination_country"]
    )
    hit = rows.reindex(pd.MultiIndex.from_arrays([o, d]))
    crosses = (o != "") & (d != "") & (o != d)
    w = arcs["product"].map(case.tables["products"].set_index("product")["unit_weight_kg"]).to_numpy(float)
    days = np.where(crosses, hit["days"].fillna(0.0).to_numpy(float), 0.0)
    cost = hit["_cost_u"].fillna(0.0).to_numpy(float) + hit["_cost_t"].fillna(0.0).to_numpy(float) * w / 1000.0
    return days, np.where(crosses, cost, 0.0)


def customs_values(case: Case, arcs: pd.DataFrame, freight: np.ndarray) -> np.ndarray:
    """Customs value V_a of one unit on each arc (currency/unit; see the module docstring)."""
    t = case.tables
    value = arcs["product"].map(t["products"].set_index("product")["unit_value"]).to_numpy(float)
    price = t["suppliers"].set_index(["supplier", "product"])["unit_cost"]
    is_sup = arcs["origin_kind"].eq("supplier").to_numpy()
    if is_sup.any():
        at = price.reindex(pd.MultiIndex.from_frame(arcs.loc[is_sup, ["origin", "product"]])).to_numpy(float)
        value = value.copy()
        value[is_sup] = at
    if bool(case.settings["duties"]["customs_value_includes_freight"]):
        value = value + freight
    return value


def duty_rates(case: Case, arcs: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Ad valorem rate ρ and per-unit duty σ of the duties row matching each arc (0 where none does)."""
    n = len(arcs)
    duties = case.tables["duties"]
    if duties.empty or n == 0:
        return np.zeros(n), np.zeros(n)
    o, d = arc_countries(case, arcs)
    reg = arcs["origin"].map(site_regions(case)).fillna("").astype(str).to_numpy()
    p = arcs["product"].astype(str).to_numpy()
    table = duties.set_index(["origin", "destination", "product"])[["ad_valorem", "per_unit"]].astype(float)
    rate = np.full(n, np.nan)
    unit = np.full(n, np.nan)
    # Most specific first: country and product, country, region and product, region.
    for origin, product in ((o, p), (o, np.full(n, "")), (reg, p), (reg, np.full(n, ""))):
        hit = table.reindex(pd.MultiIndex.from_arrays([origin, d, product]))
        free = np.isnan(rate) & hit["ad_valorem"].notna().to_numpy()
        rate[free] = hit["ad_valorem"].to_numpy(float)[free]
        unit[free] = hit["per_unit"].to_numpy(float)[free]
    crosses = (o != "") & (d != "") & (o != d)
    return np.where(crosses, np.nan_to_num(rate), 0.0), np.where(crosses, np.nan_to_num(unit), 0.0)


def duty_per_unit(case: Case, arcs: pd.DataFrame, freight: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Duty τ_a (currency/unit) of each arc and its customs value V_a (currency/unit)."""
    rate, unit = duty_rates(case, arcs)
    value = customs_values(case, arcs, freight)
    return rate * np.nan_to_num(value) + unit, value
