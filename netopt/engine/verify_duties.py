"""The independent check's own arithmetic for duties and border crossings: from the input tables (site
countries, ``duties``, ``borders``, prices) and the matched flows, never from the network's arc columns.

Rules (as :mod:`netopt.network.borders` states them): a flow between two different stated countries
crosses a border; the borders row of its direction, else the reverse row marked both_ways, adds its days
to the transit time and cost_per_unit + cost_per_tonne × tonnes per unit to the freight; the duties row
of (origin country, destination country, product), else (country, every product), else (origin region,
product), else (region, every product) charges ad_valorem × customs value + per_unit."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case

_SITE_TABLES = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))


def with_crossings(case: Case, lane_rows: pd.DataFrame) -> pd.DataFrame:
    """``lane_rows`` (flows matched to their lanes) with border days added to ``_lane_transit`` and the
    columns ``_border_days``, ``_border_cost`` and ``_duty`` (currency/unit) for the cost recomputation."""
    t = case.tables
    f = lane_rows.copy()
    n = len(f)
    f["_border_days"] = 0.0
    f["_border_cost"] = 0.0
    f["_duty"] = 0.0
    if n == 0 or (t["borders"].empty and t["duties"].empty):
        return f
    country: dict[str, str] = {}
    region: dict[str, str] = {}
    for name, col in _SITE_TABLES:
        country.update({str(k): str(v) for k, v in zip(t[name][col], t[name]["country"]) if str(k) not in country})
        if "region" in t[name].columns and name in ("suppliers", "dcs"):
            region.update({str(k): str(v) for k, v in zip(t[name][col], t[name]["region"]) if str(k) not in region})
    f["_oc"] = f["origin"].astype(str).map(country).fillna("")
    f["_dc"] = f["destination"].astype(str).map(country).fillna("")
    f["_or"] = f["origin"].astype(str).map(region).fillna("")
    cross = (f["_oc"] != "") & (f["_dc"] != "") & (f["_oc"] != f["_dc"])

    b = t["borders"]
    if len(b):
        fwd = b.rename(columns={"origin_country": "_oc", "destination_country": "_dc"})
        rev = b[b["both_ways"].astype(bool)].rename(columns={"origin_country": "_dc", "destination_country": "_oc"})
        rows = pd.concat([fwd.assign(_pri=1), rev.assign(_pri=2)], ignore_index=True)
        rows = rows.sort_values("_pri").groupby(["_oc", "_dc"], as_index=False).first()
        m = f[["_oc", "_dc"]].merge(rows, on=["_oc", "_dc"], how="left")
        kg = f["product"].map(t["products"].set_index("product")["unit_weight_kg"]).to_numpy(float)
        days = m["days"].fillna(0.0).to_numpy(float)
        cost = m["cost_per_unit"].fillna(0.0).to_numpy(float) + m["cost_per_tonne"].fillna(0.0).to_numpy(float) * (
            kg / 1000.0
        )
        f["_border_days"] = np.where(cross, days, 0.0)
        f["_border_cost"] = np.where(cross, cost, 0.0)
        f["_lane_transit"] = f["_lane_transit"].astype(float) + f["_border_days"]

    d = t["duties"]
    if len(d):
        rate = pd.Series(np.nan, index=f.index)
        unit = pd.Series(np.nan, index=f.index)
        for origin_col, by_product in (("_oc", True), ("_oc", False), ("_or", True), ("_or", False)):
            key = pd.DataFrame(
                {
                    "origin": f[origin_col].to_numpy(),
                    "destination": f["_dc"].to_numpy(),
                    "product": f["product"].astype(str).to_numpy() if by_product else "",
                }
            )
            m = key.merge(d[["origin", "destination", "product", "ad_valorem", "per_unit"]], how="left")
            m.index = f.index
            take = rate.isna() & m["ad_valorem"].notna()
            rate[take] = m.loc[take, "ad_valorem"]
            unit[take] = m.loc[take, "per_unit"]
        value = f["product"].map(t["products"].set_index("product")["unit_value"]).astype(float)
        sup = f["origin_kind"] == "supplier"
        if sup.any():
            price = f.loc[sup, ["origin", "product"]].merge(
                t["suppliers"][["supplier", "product", "unit_cost"]].rename(columns={"supplier": "origin"}),
                how="left",
                on=["origin", "product"],
            )
            value[sup] = price["unit_cost"].to_numpy(float)
        if bool(case.settings["duties"]["customs_value_includes_freight"]):
            value = value + freight_per_unit(case, f)
        duty = rate.fillna(0.0) * value + unit.fillna(0.0)
        f["_duty"] = np.where(cross, duty.to_numpy(float), 0.0)
    return f.drop(columns=["_oc", "_dc", "_or"])


def freight_per_unit(case: Case, f: pd.DataFrame) -> np.ndarray:
    """Freight per unit of each matched flow (currency/unit): the lane's cost per unit where given, else
    weight (t) × km × rate per t·km (the rate tier's, or its minimum charge per shipment spread over the
    units of an average shipment when that is more; the mode's own rate outside every tier) + the mode's
    per-unit charge; plus the border crossing's cost."""
    prod = case.tables["products"].set_index("product")
    modes = case.tables["modes"].set_index("mode")
    w = f["product"].map(prod["unit_weight_kg"]).to_numpy(float)
    dist = f["_lane_distance"].to_numpy(float)
    rate = f["mode"].map(modes["cost_per_tonne_km"]).to_numpy(float)
    fix = f["mode"].map(modes["fixed_cost_per_unit"]).to_numpy(float)
    given = f["_lane_cost"].to_numpy(float)
    border = f["_border_cost"].to_numpy(float) if "_border_cost" in f.columns else 0.0
    haul = w / 1000 * dist * rate
    tiers = case.tables["rate_tiers"]
    if len(tiers) and len(f):
        # The rate card: the tier holding the lane's km and the mode's shipment weight (largest band start first).
        ship = f["mode"].map(modes["shipment_kg"].astype(float))
        q = pd.DataFrame({"_i": np.arange(len(f)), "mode": f["mode"].to_numpy(), "_km": dist, "_kg": ship.to_numpy()})
        c = q.merge(tiers, on="mode")
        kg = c["_kg"].to_numpy(float)
        no_kg = np.isnan(kg) & (c["min_kg"].to_numpy(float) <= 0) & np.isinf(c["max_kg"].to_numpy(float))
        fits = (
            (c["_km"] >= c["min_km"]) & (c["_km"] < c["max_km"]) & (no_kg | ((kg >= c["min_kg"]) & (kg < c["max_kg"])))
        )
        best = c[fits].sort_values(["_i", "min_km", "min_kg"], ascending=[True, False, False]).drop_duplicates("_i")
        i = best["_i"].to_numpy(int)
        by_weight = w[i] / 1000 * dist[i] * best["cost_per_tonne_km"].to_numpy(float)
        shipment = best["_kg"].to_numpy(float)
        minimum = np.where(
            np.isfinite(shipment), best["min_charge"].to_numpy(float) * w[i] / np.nan_to_num(shipment, nan=1.0), 0.0
        )
        haul = haul.copy()
        haul[i] = np.maximum(by_weight, minimum)
    return np.where(np.isnan(given), haul + fix, given) + border
