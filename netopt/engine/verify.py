"""Independent verification of a solution.

Recomputes every rule and every cost component from the *result tables* (flows,
production, DCs, unmet demand) and the *input tables* (case tables and lanes) alone —
never from the Pyomo model or the solver — and reports the largest violation and the
recomputed objective.  A failed check is an error, never silently passed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.verify_cost import recompute_cost, service_shortfall
from netopt.engine.verify_duties import with_crossings
from netopt.engine.verify_shares import share_rule_checks
from netopt.network.sourcing_caps import share_caps, site_share_caps

REL_TOL = 1e-6


@dataclass
class Verification:
    """Outcome of :func:`verify`. Violations are in the rule's own unit (units/yr, share…)."""

    passed: bool
    largest_violation: float  # relative to the rule's scale
    largest_violation_rule: str
    recomputed_cost: dict[str, float]
    recomputed_objective: float
    solver_objective: float
    objective_rel_diff: float
    checks: pd.DataFrame = field(default_factory=pd.DataFrame)

    def as_dict(self) -> dict:
        return {
            "verified": self.passed,
            "largest_violation": self.largest_violation,
            "largest_violation_rule": self.largest_violation_rule,
            "recomputed_objective": self.recomputed_objective,
            "objective_rel_diff": self.objective_rel_diff,
        }


class _Checks:
    def __init__(self):
        self.rows = []

    def le(self, rule: str, lhs, rhs, scale=None, where=None):
        """Record max relative excess of lhs over rhs (elementwise)."""
        lhs = np.asarray(lhs, float)
        rhs = np.asarray(rhs, float)
        if lhs.size == 0:
            self.rows.append((rule, 0.0, 0.0, ""))
            return
        sc = np.maximum(1.0, np.abs(np.asarray(scale if scale is not None else rhs, float)))
        sc = np.where(np.isfinite(sc), sc, 1.0)
        excess = np.where(np.isinf(rhs), 0.0, lhs - rhs)
        rel = excess / sc
        k = int(np.argmax(rel))
        loc = "" if where is None else str(where[k])
        self.rows.append((rule, float(max(0.0, excess[k])), float(max(0.0, rel[k])), loc))

    def eq(self, rule: str, lhs, rhs, scale=None, where=None):
        lhs = np.asarray(lhs, float)
        rhs = np.asarray(rhs, float)
        if lhs.size == 0:
            self.rows.append((rule, 0.0, 0.0, ""))
            return
        sc = np.maximum(1.0, np.abs(np.asarray(scale if scale is not None else rhs, float)))
        dev = np.abs(lhs - rhs)
        rel = dev / sc
        k = int(np.argmax(rel))
        loc = "" if where is None else str(where[k])
        self.rows.append((rule, float(dev[k]), float(rel[k]), loc))

    def frame(self) -> pd.DataFrame:
        return pd.DataFrame(self.rows, columns=["rule", "violation", "relative_violation", "where"])


def _sum_by(frame: pd.DataFrame, keys: list[str], col: str = "quantity") -> pd.Series:
    if frame.empty:
        return pd.Series(dtype=float, index=pd.MultiIndex.from_tuples([], names=keys) if len(keys) > 1 else None)
    return frame.groupby(keys)[col].sum()


def _stock_change(tables: dict[str, pd.DataFrame], kind: str) -> pd.Series:
    """Stock built per (site, product) over the period of a case with periods (units/yr: (closing −
    opening) / years); empty when stock is not carried."""
    st = tables.get("stock")
    if st is None or st.empty:
        return pd.Series(dtype=float, index=pd.MultiIndex.from_tuples([], names=["site", "product"]))
    st = st[st["site_kind"] == kind]
    rate = (st["closing"].to_numpy(float) - st["opening"].to_numpy(float)) / st["years"].to_numpy(float)
    return pd.Series(rate, index=pd.MultiIndex.from_frame(st[["site", "product"]])).groupby(level=[0, 1]).sum()


def stock_holding_cost(case: Case, stock: pd.DataFrame) -> float:
    """Cost of holding the stock carried at the end of a period (currency/yr): closing units × the
    product's holding rate (blank: the settings' inventory.holding_rate) × unit value."""
    prod = case.tables["products"].drop_duplicates("product").set_index("product")
    rate = pd.to_numeric(prod["holding_rate"], errors="coerce").fillna(
        float(case.settings["inventory"]["holding_rate"])
    )
    h = stock["product"].map(rate).to_numpy(float) * stock["product"].map(prod["unit_value"]).to_numpy(float)
    return float((stock["closing"].to_numpy(float) * h).sum())


def _at(series: pd.Series, frame: pd.DataFrame, keys: list[str]) -> np.ndarray:
    if len(keys) == 1:
        return series.reindex(frame[keys[0]]).fillna(0.0).to_numpy(float)
    return series.reindex(pd.MultiIndex.from_frame(frame[keys])).fillna(0.0).to_numpy(float)


def verify(
    case: Case,
    lanes: pd.DataFrame,
    tables: dict[str, pd.DataFrame],
    solver_objective: float,
    fixed_open: dict[str, bool] | None = None,
    extra_cost: dict[str, float] | None = None,
) -> Verification:
    """Check a solution's tables against the case; see module docstring.

    ``extra_cost`` holds cost components computed outside the flow model (e.g. safety
    stock) that the verifier accepts as reported, after its own check elsewhere.
    """
    t = case.tables
    s = case.settings
    pol = s["policy"]
    ck = _Checks()
    flows = tables["flows"].copy()
    prod = tables["production"]
    dcs = tables["dcs"]
    unmet = tables["unmet"]

    # --- demand met: deliveries + lost = demand
    dem = t["demand"][t["demand"]["quantity"] > 0]
    last = flows[flows["destination_kind"] == "customer"]
    delivered = _at(
        _sum_by(last, ["destination", "product"]),
        dem.rename(columns={"customer": "destination"}),
        ["destination", "product"],
    )
    lost = (
        _at(_sum_by(unmet, ["customer", "product"], "lost_units"), dem, ["customer", "product"]) if len(unmet) else 0.0
    )
    where = (dem["customer"] + "/" + dem["product"]).to_numpy()
    ck.eq("demand met (units)", delivered + lost, dem["quantity"].to_numpy(float), where=where)
    if not bool(pol["allow_unmet_demand"]):
        ck.le("no lost demand allowed (units)", np.atleast_1d(np.sum(lost)), np.zeros(1))
    ck.le("flows non-negative", -flows["quantity"].to_numpy(float), np.zeros(len(flows)))

    # --- DC balance
    into = _sum_by(flows[flows["destination_kind"] == "dc"], ["destination", "product"])
    out = _sum_by(flows[flows["origin_kind"] == "dc"], ["origin", "product"])
    keys = sorted(set(into.index) | set(out.index))
    if keys:
        k = pd.MultiIndex.from_tuples(keys)
        a = into.reindex(k).fillna(0.0).to_numpy(float)
        b_ = out.reindex(k).fillna(0.0).to_numpy(float)
        built = _stock_change(tables, "dc").reindex(k).fillna(0.0).to_numpy(float)  # stock built, units/yr
        ck.eq(
            "DC balance: in = out + stock built (units)",
            a,
            b_ + built,
            scale=np.maximum(a, b_),
            where=[f"{x}/{y}" for x, y in keys],
        )

    # --- plants: output = production; materials = BOM × production
    pout = _sum_by(flows[flows["origin_kind"] == "plant"], ["origin", "product"])
    built_at_plant = _stock_change(tables, "plant")
    ck.eq(
        "plant output + stock built = production (units)",
        _at(pout, prod.rename(columns={"plant": "origin"}), ["origin", "product"])
        + _at(built_at_plant, prod.rename(columns={"plant": "origin"}), ["origin", "product"]),
        prod["quantity"].to_numpy(float),
        where=(prod["plant"] + "/" + prod["product"]).to_numpy(),
    )
    plants = t["plants"]
    ck.le(
        "plant capacity (units)",
        prod["quantity"].to_numpy(float),
        plants.set_index(["plant", "product"])["capacity"]
        .reindex(pd.MultiIndex.from_frame(prod[["plant", "product"]]))
        .to_numpy(float),
        where=(prod["plant"] + "/" + prod["product"]).to_numpy(),
    )
    ck.eq(
        "reported plant capacity = the case's (units)",
        np.nan_to_num(prod["capacity"].to_numpy(float), posinf=1e30),
        np.nan_to_num(
            plants.set_index(["plant", "product"])["capacity"]
            .reindex(pd.MultiIndex.from_frame(prod[["plant", "product"]]))
            .to_numpy(float),
            posinf=1e30,
        ),
        where=(prod["plant"] + "/" + prod["product"]).to_numpy(),
    )
    if "service" in tables and len(tables["service"]):
        sv = tables["service"]
        want = dem.groupby("customer")["quantity"].sum().reindex(sv["customer"]).fillna(0.0).to_numpy(float)
        ck.eq(
            "reported customer demand = the case's (units)",
            sv["demand"].to_numpy(float),
            want,
            where=sv["customer"].to_numpy(),
        )
    bom = t["bill_of_materials"]
    if len(bom):
        need = prod.merge(bom, on="product")
        need["need"] = need["quantity"] * need["quantity_per_unit"]
        need = need.groupby(["plant", "material"], as_index=False)["need"].sum()
        got = _sum_by(flows[flows["destination_kind"] == "plant"], ["destination", "product"])
        recv = _at(
            got, need.rename(columns={"plant": "destination", "material": "product"}), ["destination", "product"]
        )
        ck.eq(
            "plant materials received = bill of materials × production (units)",
            recv,
            need["need"].to_numpy(float),
            where=(need["plant"] + "/" + need["material"]).to_numpy(),
        )

    # --- supplier capacity
    sup = t["suppliers"]
    sout = _sum_by(flows[flows["origin_kind"] == "supplier"], ["origin", "product"])
    ck.le(
        "supplier capacity (units)",
        _at(sout, sup.rename(columns={"supplier": "origin"}), ["origin", "product"]),
        sup["capacity"].to_numpy(float),
        where=(sup["supplier"] + "/" + sup["product"]).to_numpy(),
    )

    # --- DCs: throughput within the chosen capacity, nothing through a closed DC, forced decisions
    dc_in = _sum_by(flows[flows["destination_kind"] == "dc"], ["destination"])
    dc_out = _sum_by(flows[flows["origin_kind"] == "dc"], ["origin"])
    tin = dc_in.reindex(dcs["dc"]).fillna(0.0).to_numpy(float)
    tout = dc_out.reindex(dcs["dc"]).fillna(0.0).to_numpy(float)
    cap = _dc_capacity(t, dcs)
    ck.le("DC throughput within capacity (units)", tin, cap, where=dcs["dc"].to_numpy())
    ck.le(
        "no flow through a closed DC (units)",
        np.where(dcs["open"], 0.0, tin + tout),
        np.zeros(len(dcs)),
        where=dcs["dc"].to_numpy(),
    )
    forced = t["dcs"].set_index("dc")["force"].reindex(dcs["dc"]).fillna("").to_numpy()
    ck.le(
        "no flow through a DC taken out (units)",
        np.where(forced == "out", tin + tout, 0.0),
        np.zeros(len(dcs)),
        where=dcs["dc"].to_numpy(),
    )
    bad = ((forced == "open") & ~dcs["open"].to_numpy()) | ((forced == "closed") & dcs["open"].to_numpy())
    if fixed_open is not None:
        want = np.array([bool(fixed_open.get(d, o)) for d, o in zip(dcs["dc"], dcs["open"])])
        bad = bad | (want != dcs["open"].to_numpy())
    ck.le("forced/held DC decisions respected (count)", np.atleast_1d(bad.sum()).astype(float), np.zeros(1))
    n_open = float(dcs["open"].sum())
    if fixed_open is None:
        ck.le("min open DCs (count)", np.atleast_1d(float(pol["min_open_dcs"])), np.atleast_1d(n_open))
        if int(pol["max_open_dcs"]) >= 0:
            ck.le("max open DCs (count)", np.atleast_1d(n_open), np.atleast_1d(float(pol["max_open_dcs"])))

    # --- lanes: each flow must use an available lane; lane-and-mode capacity
    lane_rows = with_crossings(case, _match_lanes(flows, lanes))  # border days in the transit time
    ck.le("flows only on available lanes (count)", np.atleast_1d(float(lane_rows["_lane"].isna().sum())), np.zeros(1))
    gen = lane_rows[(lane_rows["_lane_product"] == "")]
    if len(gen):
        used = gen.groupby(["origin", "destination", "mode"]).agg(
            q=("quantity", "sum"), cap=("_lane_capacity", "first")
        )
        ck.le(
            "lane-and-mode capacity (units)",
            used["q"].to_numpy(float),
            used["cap"].to_numpy(float),
            where=["/".join(i) for i in used.index],
        )
    spc = lane_rows[(lane_rows["_lane_product"] != "")]
    if len(spc):
        ck.le(
            "lane capacity for one product (units)",
            spc["quantity"].to_numpy(float),
            spc["_lane_capacity"].to_numpy(float),
        )

    # --- sourcing shares
    sflows = flows[flows["origin_kind"] == "supplier"]
    if len(sflows):
        by_sup = sflows.groupby(["destination", "product", "origin"], as_index=False)["quantity"].sum()
        by_sup["total"] = by_sup.groupby(["destination", "product"])["quantity"].transform("sum")
        pairs = by_sup.rename(columns={"destination": "site", "origin": "supplier"})
        caps = share_caps(
            float(pol["max_supplier_share"]), t["suppliers"], site_share_caps(t), pairs, t["sourcing_shares"]
        )
        ck.le(
            "max supplier share",
            by_sup["quantity"].to_numpy(float),
            caps * by_sup["total"].to_numpy(float),
            scale=by_sup["total"],
            where=(by_sup["destination"] + "/" + by_sup["product"] + "/" + by_sup["origin"]).to_numpy(),
        )
        if float(pol["max_region_share"]) < 1:
            region = sup.drop_duplicates("supplier").set_index("supplier")["region"]
            r = sflows.assign(region=sflows["origin"].map(region))
            by_r = r.groupby(["destination", "product", "region"], as_index=False)["quantity"].sum()
            by_r["total"] = by_r.groupby(["destination", "product"])["quantity"].transform("sum")
            ck.le(
                "max region share",
                by_r["quantity"].to_numpy(float),
                float(pol["max_region_share"]) * by_r["total"].to_numpy(float),
                scale=by_r["total"],
            )
        k_min = int(pol["min_active_suppliers"])
        if k_min >= 2:
            offers = flows_possible_suppliers(lanes, sup)
            ms = float(pol["min_share_when_active"])
            act = by_sup[by_sup["quantity"] >= ms * by_sup["total"] * (1 - 1e-6)]
            n_act = act.groupby(["destination", "product"]).size()
            sites = by_sup.groupby(["destination", "product"])["total"].first()
            need = np.minimum(k_min, offers.reindex(sites.index).fillna(1).to_numpy(float))
            ck.le("min active suppliers (count)", need, n_act.reindex(sites.index).fillna(0).to_numpy(float))

    # --- share rules of single sites: least supplier shares, DC shares of a customer region
    for rule, lhs, rhs, scale, where_ in share_rule_checks(case, lanes, flows):
        ck.le(rule, lhs, rhs, scale=scale, where=where_)

    # --- service window (share of demand, never of what is delivered)
    sv = service_shortfall(case, lane_rows)
    if len(sv):
        hard = sv["late_cost"].to_numpy(float) <= 0
        ck.le(
            "service window: on-time units ≥ target × demand (hard targets)",
            np.where(hard, sv["required"].to_numpy(float), 0.0),
            np.where(hard, sv["on_time"].to_numpy(float), 0.0),
            scale=sv["demand"],
            where=sv["customer"].to_numpy(),
        )

    # --- single sourcing and one mode per lane
    if bool(pol["single_sourcing"]) and len(last):
        n_src = last.groupby(["destination", "product"])["origin"].nunique()
        ck.le("single sourcing: origins per customer and product", n_src.to_numpy(float), np.ones(len(n_src)))
    if bool(pol["one_mode_per_lane"]) and len(flows):
        n_m = flows.groupby(["origin", "destination"])["mode"].nunique()
        ck.le("one mode per lane", n_m.to_numpy(float), np.ones(len(n_m)))

    # --- cost, recomputed from inputs
    cost, co2_kg = recompute_cost(case, lane_rows, tables)
    if float(pol["co2_cap_tonnes"]) >= 0:
        ck.le("CO2e cap (t)", np.atleast_1d(co2_kg / 1000.0), np.atleast_1d(float(pol["co2_cap_tonnes"])))
    if tables.get("stock") is not None and len(tables["stock"]):
        cost["stock_holding"] = stock_holding_cost(case, tables["stock"])
    for k2, v in (extra_cost or {}).items():
        cost[k2] = v
    total = float(sum(cost.values()))
    diff = abs(total - solver_objective) / max(1.0, abs(solver_objective))
    checks = ck.frame()
    checks = pd.concat(
        [
            checks,
            pd.DataFrame(
                [("recomputed cost = solver objective", abs(total - solver_objective), diff, "")],
                columns=checks.columns,
            ),
        ],
        ignore_index=True,
    )
    worst = checks.loc[checks["relative_violation"].idxmax()]
    passed = bool((checks["relative_violation"] <= REL_TOL).all())
    return Verification(
        passed=passed,
        largest_violation=float(worst["relative_violation"]),
        largest_violation_rule=str(worst["rule"]),
        recomputed_cost=cost,
        recomputed_objective=total,
        solver_objective=solver_objective,
        objective_rel_diff=diff,
        checks=checks,
    )


def flows_possible_suppliers(lanes: pd.DataFrame, sup: pd.DataFrame) -> pd.Series:
    """Number of suppliers with a lane to each (site, product) — for min-active checks."""
    sl = lanes[lanes["origin_kind"] == "supplier"][["origin", "destination", "product"]]
    gen = (
        sl[sl["product"] == ""]
        .drop(columns="product")
        .merge(sup[["supplier", "product"]].rename(columns={"supplier": "origin"}), on="origin")
    )
    allp = pd.concat([gen, sl[sl["product"] != ""]]).drop_duplicates()
    return allp.groupby(["destination", "product"])["origin"].nunique()


def _dc_capacity(t: dict, dcs: pd.DataFrame) -> np.ndarray:
    base = t["dcs"].set_index("dc")["capacity"]
    sizes = t["dc_sizes"]
    cap = []
    for d, o, size in zip(dcs["dc"], dcs["open"], dcs["size"]):
        if not o:
            cap.append(0.0)
        elif size:
            cap.append(float(sizes[(sizes["dc"] == d) & (sizes["size"] == size)]["capacity"].iloc[0]))
        else:
            cap.append(float(base[d]))
    return np.array(cap, dtype=float)


def _match_lanes(flows: pd.DataFrame, lanes: pd.DataFrame) -> pd.DataFrame:
    """Attach to each flow the lane row it uses (product-specific row first, else the generic row)."""
    keys = ["origin", "destination", "mode"]
    cols = keys + ["product", "distance_km", "transit_days", "cost_per_unit", "capacity"]
    ln = lanes[cols].rename(
        columns={
            "product": "_lane_product",
            "distance_km": "_lane_distance",
            "transit_days": "_lane_transit",
            "cost_per_unit": "_lane_cost",
            "capacity": "_lane_capacity",
        }
    )
    spec = flows.merge(
        ln[ln["_lane_product"] != ""], left_on=keys + ["product"], right_on=keys + ["_lane_product"], how="left"
    )
    gen = flows.merge(ln[ln["_lane_product"] == ""], on=keys, how="left")
    out = spec.copy()
    use_gen = out["_lane_product"].isna().to_numpy()
    for c in ["_lane_product", "_lane_distance", "_lane_transit", "_lane_cost", "_lane_capacity"]:
        out.loc[use_gen, c] = gen.loc[use_gen, c].to_numpy()
    out["_lane"] = np.where(out["_lane_product"].isna(), np.nan, 1.0)
    return out
