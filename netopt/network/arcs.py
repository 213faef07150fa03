"""Prepared network: the arc table and index sets every model module reads.

An *arc* is one (lane, mode, product) on which a flow variable may exist.  All
per-arc numbers (freight, pipeline, supply price, CO2, handling) are computed here
once, vectorised, so the model modules only group arc indices and never filter
sets inside rules.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.network.borders import border_crossings, duty_per_unit
from netopt.network.lanes import case_lanes
from netopt.network.rates import freight_from_rates
from netopt.network.sourcing_caps import site_share_caps


@dataclass
class Network:
    """Index sets and per-element data for one model build.

    Attributes (all DataFrames have a 0..n-1 RangeIndex used as variable index):
        arcs: one row per flow variable; columns origin, origin_kind, destination,
            destination_kind, leg, mode, product, distance_km, transit_days,
            capacity (units/yr, this product alone), lane_capacity (units/yr, all products
            of the lane and mode), freight_per_unit, pipeline_per_unit, supply_per_unit,
            handling_per_unit, co2_kg_per_unit, carbon_per_unit, duty_per_unit, customs_value,
            border_days (in transit_days), border_per_unit (in freight_per_unit)
            (:mod:`netopt.network.borders`), unit_cost (sum of all per-unit costs, currency/unit),
            within_window (bool, last legs only).
        make: one row per (plant, product): capacity, unit_cost.
        options: one row per DC opening option: dc, size, capacity, fixed_cost, status,
            closing_cost, opening_cost, force.
        demand: one row per (customer, product): quantity, penalty (currency/unit),
            demand_cv (ratio: the demand row's, else the product's, else 0; for safety stock).
        arcs_all: the arcs before dominated modes were pruned (same columns as ``arcs``),
            for reports that show every admissible mode of a lane.
        customers: customer, service_class, max_days, target_share, late_cost (currency per unit
            short of the target within the window; 0 = the target is hard).
        bom: product, material, quantity_per_unit.
        total_demand: units/yr of all finished products.
    """

    arcs: pd.DataFrame
    make: pd.DataFrame
    options: pd.DataFrame
    demand: pd.DataFrame
    customers: pd.DataFrame
    bom: pd.DataFrame
    dcs: pd.DataFrame
    products: pd.DataFrame
    suppliers: pd.DataFrame
    site_share_caps: pd.Series  # σ_j: receiving site → its own supplier share cap (netopt.network.sourcing_caps)
    settings: dict
    pruned: dict = field(default_factory=dict)
    arcs_all: pd.DataFrame | None = None
    sourcing_shares: pd.DataFrame = field(default_factory=pd.DataFrame)  # σ_{s,j,p}, μ_{s,j,p} (sourcing_caps)
    customers_region: pd.Series = field(default_factory=lambda: pd.Series(dtype=str))  # customer → region

    @property
    def total_demand(self) -> float:
        return float(self.demand["quantity"].sum())


def _holding_rate(products: pd.DataFrame, settings: dict) -> pd.Series:
    rate = pd.to_numeric(products["holding_rate"], errors="coerce")
    return rate.fillna(float(settings["inventory"]["holding_rate"]))


def _cycle_service_level(products: pd.DataFrame, settings: dict) -> pd.Series:
    """Each product's cycle service level [share]: its own, blank = the settings' (one rule for safety stock)."""
    given = products["cycle_service_level"] if "cycle_service_level" in products else pd.Series(np.nan, products.index)
    return pd.to_numeric(given, errors="coerce").fillna(float(settings["inventory"]["cycle_service_level"]))


def expand_arcs(case: Case, lanes: pd.DataFrame) -> pd.DataFrame:
    """Expand lanes (product "" = every product) into one row per usable product.

    A product-specific lane row replaces the every-product row for that product on
    the same (origin, destination, mode).  Products are kept only where the origin
    can ship them and the destination can use them.
    """
    t = case.tables
    products = t["products"]
    finished = set(products.loc[products["kind"] == "finished", "product"])
    demand = t["demand"][t["demand"]["quantity"] > 0]
    bom = t["bill_of_materials"]

    # What each site can ship and receive, as (site, product) pairs.
    ships = pd.concat(
        [
            t["suppliers"][["supplier", "product"]].set_axis(["site", "product"], axis=1),
            t["plants"][["plant", "product"]].set_axis(["site", "product"], axis=1),
        ]
    )
    sold = set(demand["product"])
    # A DC may stock every finished product that has demand.
    dc_products = sorted(finished & sold)
    ships = pd.concat(
        [ships, pd.DataFrame([(d, p) for d in t["dcs"]["dc"] for p in dc_products], columns=["site", "product"])]
    )
    plant_needs = t["plants"][["plant", "product"]].merge(bom, on="product")[["plant", "material"]]
    receives = pd.concat(
        [
            plant_needs.set_axis(["site", "product"], axis=1),
            pd.DataFrame([(d, p) for d in t["dcs"]["dc"] for p in dc_products], columns=["site", "product"]),
            demand[["customer", "product"]].set_axis(["site", "product"], axis=1),
        ]
    ).drop_duplicates()

    generic = lanes[lanes["product"] == ""].drop(columns="product")
    specific = lanes[lanes["product"] != ""]
    gen = generic.merge(ships.drop_duplicates().rename(columns={"site": "origin"}), on="origin")
    arcs = pd.concat([gen.assign(_specific=False), specific.assign(_specific=True)], ignore_index=True)
    arcs = arcs.merge(receives.rename(columns={"site": "destination"}), on=["destination", "product"])
    # Specific rows win over the generic row of the same lane, mode and product.
    arcs = (
        arcs.sort_values("_specific", ascending=False)
        .drop_duplicates(["origin", "destination", "mode", "product"], keep="first")
        .drop(columns="_specific")
    )
    return arcs.sort_values(["leg", "origin", "destination", "product", "mode"]).reset_index(drop=True)


def prune_dominated(arcs: pd.DataFrame, whole_lane: bool = False) -> tuple[pd.DataFrame, int]:
    """Drop arcs another mode beats on the same origin, destination and product.

    Arc a is dominated by arc b when b is uncapacitated and no worse in unit cost,
    transit days and CO2, and strictly better in one of them (ties: keep the first
    mode by name).  Any flow on a can then move to b without raising cost, slowing
    service or adding CO2, so the optimum is unchanged.

    With ``whole_lane`` (one mode per lane) a mode is dropped from a lane only when one
    other mode dominates it for every product it carries there: moving a single
    product to another mode would put two modes on the lane.
    """
    if arcs.empty:
        return arcs, 0
    keys = ["origin", "destination", "product"]
    a = arcs.reset_index().rename(columns={"index": "_i"})
    multi = a.groupby(keys)["mode"].transform("size") > 1
    a = a[multi]
    if a.empty:
        return arcs, 0
    cols = keys + ["_i", "mode", "unit_cost", "transit_days", "co2_kg_per_unit", "capacity", "lane_capacity"]
    pairs = a[cols].merge(a[cols], on=keys, suffixes=("", "_b"))
    pairs = pairs[pairs["_i"] != pairs["_i_b"]]
    eps = 1e-12
    no_worse = (
        (pairs["unit_cost_b"] <= pairs["unit_cost"] + eps)
        & (pairs["transit_days_b"] <= pairs["transit_days"] + eps)
        & (pairs["co2_kg_per_unit_b"] <= pairs["co2_kg_per_unit"] + eps)
        & np.isinf(pairs["capacity_b"])
        & np.isinf(pairs["lane_capacity_b"])
    )
    strictly = (
        (pairs["unit_cost_b"] < pairs["unit_cost"] - eps)
        | (pairs["transit_days_b"] < pairs["transit_days"] - eps)
        | (pairs["co2_kg_per_unit_b"] < pairs["co2_kg_per_unit"] - eps)
        | (pairs["mode_b"] < pairs["mode"])
    )
    dom = pairs[no_worse & strictly]
    if whole_lane and len(dom):
        lane_mode = ["origin", "destination", "mode"]
        carried = arcs.groupby(lane_mode).size().rename("_n")
        by = dom.groupby(lane_mode + ["mode_b"]).size().rename("_k").reset_index().join(carried, on=lane_mode)
        beaten = by.loc[by["_k"] == by["_n"], lane_mode].drop_duplicates()
        dom = dom.merge(beaten, on=lane_mode)
    dominated = set(dom["_i"])
    keep = ~arcs.index.isin(list(dominated))
    return arcs[keep].reset_index(drop=True), len(dominated)


def build_network(case: Case, lanes: pd.DataFrame | None = None, prune: bool | None = None) -> Network:
    """Prepare every index set and per-element number the model needs (vectorised)."""
    t = case.tables
    s = case.settings
    if lanes is None:
        lanes = case_lanes(case)
    if prune is None:
        prune = bool(s["lanes"]["prune_dominated"])

    products = t["products"].copy()
    products["holding_rate"] = _holding_rate(products, s)
    products["cycle_service_level"] = _cycle_service_level(products, s)
    pinfo = products.set_index("product")
    modes = t["modes"].set_index("mode")

    arcs = expand_arcs(case, lanes)
    out = set(t["dcs"].loc[t["dcs"]["force"].astype(str).eq("out"), "dc"].astype(str))
    if out:  # a DC out (site_out): nothing moves through it; its opening stays a decision (keep paying, or close)
        arcs = arcs[~(arcs["origin"].isin(out) | arcs["destination"].isin(out))].reset_index(drop=True)
    # Border crossings add days to the transit time (service, stock in transit) and cost to the freight.
    border_days, border_cost = border_crossings(case, arcs)
    arcs["border_days"] = border_days
    arcs["transit_days"] = arcs["transit_days"].to_numpy(float) + border_days
    arcs["border_per_unit"] = border_cost
    w = arcs["product"].map(pinfo["unit_weight_kg"]).to_numpy(float)
    v = arcs["product"].map(pinfo["unit_value"]).to_numpy(float)
    h = arcs["product"].map(pinfo["holding_rate"]).to_numpy(float)
    co2f = arcs["mode"].map(modes["co2_kg_per_tonne_km"]).to_numpy(float)
    dist = arcs["distance_km"].to_numpy(float)
    given = arcs["cost_per_unit"].to_numpy(float)
    arcs["freight_per_unit"] = np.where(np.isnan(given), freight_from_rates(case, arcs), given) + border_cost
    arcs["duty_per_unit"], arcs["customs_value"] = duty_per_unit(case, arcs, arcs["freight_per_unit"].to_numpy(float))
    # Little's law: units in transit = flow × transit time; cost = value × rate × days/365.
    arcs["pipeline_per_unit"] = v * h * arcs["transit_days"].to_numpy(float) / 365.0
    arcs["co2_kg_per_unit"] = w / 1000.0 * dist * co2f
    carbon_price = float(s["policy"]["carbon_price_per_tonne"])
    arcs["carbon_per_unit"] = arcs["co2_kg_per_unit"] / 1000.0 * carbon_price
    sup_cost = t["suppliers"].set_index(["supplier", "product"])["unit_cost"]
    is_sup = arcs["origin_kind"].eq("supplier").to_numpy()
    arcs["supply_per_unit"] = 0.0
    if is_sup.any():
        idx = pd.MultiIndex.from_frame(arcs.loc[is_sup, ["origin", "product"]])
        arcs.loc[is_sup, "supply_per_unit"] = sup_cost.reindex(idx).to_numpy(float)
    handling = t["dcs"].set_index("dc")["handling_cost"]
    is_dc_in = arcs["destination_kind"].eq("dc").to_numpy()
    arcs["handling_per_unit"] = 0.0
    arcs.loc[is_dc_in, "handling_per_unit"] = arcs.loc[is_dc_in, "destination"].map(handling).to_numpy(float)
    arcs["unit_cost"] = (
        arcs["freight_per_unit"]
        + arcs["pipeline_per_unit"]
        + arcs["carbon_per_unit"]
        + arcs["supply_per_unit"]
        + arcs["handling_per_unit"]
        + arcs["duty_per_unit"]
    )
    # Capacity of a product-specific row binds that product; a generic row's binds the lane and mode.
    arcs["lane_capacity"] = arcs["capacity"]
    arcs["capacity"] = np.inf
    lane_keys = lanes[["origin", "destination", "mode", "product"]]
    spec = lane_keys[lane_keys["product"] != ""].assign(_spec=True)
    hit = arcs[["origin", "destination", "mode", "product"]].merge(
        spec, how="left", on=["origin", "destination", "mode", "product"]
    )
    is_spec = hit["_spec"].fillna(False).astype(bool).to_numpy()
    arcs.loc[is_spec, "capacity"] = arcs.loc[is_spec, "lane_capacity"]
    arcs.loc[is_spec, "lane_capacity"] = np.inf

    # Service window of the destination customer (last legs only).
    customers = t["customers"][["customer", "service_class"]].copy()
    classes = t["service_classes"]
    if len(classes):
        cls = classes.set_index("service_class")
        customers["max_days"] = customers["service_class"].map(cls["max_days"]).astype(float)
        customers["target_share"] = customers["service_class"].map(cls["target_share"]).astype(float)
    else:
        customers["max_days"] = float(s["policy"]["service_max_days"])
        customers["target_share"] = float(s["policy"]["service_target_share"])
    customers["max_days"] = customers["max_days"].fillna(0.0)
    customers["target_share"] = customers["target_share"].fillna(0.0)
    late = float(s["policy"]["late_cost_per_unit"])
    if len(classes):
        by_class = pd.to_numeric(classes.set_index("service_class")["late_cost_per_unit"], errors="coerce")
        customers["late_cost"] = customers["service_class"].map(by_class).astype(float).fillna(late)
    else:
        customers["late_cost"] = late
    window = arcs["destination"].map(customers.set_index("customer")["max_days"])
    arcs["within_window"] = arcs["destination_kind"].eq("customer") & (arcs["transit_days"] <= window + 1e-9)

    pruned = {}
    arcs_all = arcs
    if prune:
        arcs, n = prune_dominated(arcs, whole_lane=bool(s["policy"]["one_mode_per_lane"]))
        pruned["dominated_mode_arcs"] = n

    make = t["plants"][["plant", "product", "capacity", "unit_cost"]].reset_index(drop=True)

    dcs = t["dcs"].reset_index(drop=True)
    sizes = t["dc_sizes"]
    base_opt = dcs.loc[
        ~dcs["dc"].isin(sizes["dc"]) if len(sizes) else slice(None), ["dc", "capacity", "fixed_cost"]
    ].assign(size="")
    options = pd.concat([base_opt, sizes[["dc", "size", "capacity", "fixed_cost"]]], ignore_index=True)
    options = options.merge(dcs[["dc", "status", "closing_cost", "opening_cost", "force"]], on="dc")
    order = {d: i for i, d in enumerate(dcs["dc"])}
    options = options.sort_values(["dc", "size"], key=lambda c: c.map(order) if c.name == "dc" else c)
    options = options.reset_index(drop=True)

    dem = t["demand"][t["demand"]["quantity"] > 0][["customer", "product", "quantity", "demand_cv"]].reset_index(
        drop=True
    )
    product_cv = pd.to_numeric(dem["product"].map(pinfo["demand_cv"]), errors="coerce")
    dem["demand_cv"] = pd.to_numeric(dem["demand_cv"], errors="coerce").fillna(product_cv).fillna(0.0).astype(float)
    dem["penalty"] = lost_sale_cost(t["products"], float(s["policy"]["unmet_penalty_per_unit"]), dem["product"])

    return Network(
        arcs=arcs,
        make=make,
        options=options,
        demand=dem,
        customers=customers,
        bom=t["bill_of_materials"][["product", "material", "quantity_per_unit"]].reset_index(drop=True),
        dcs=dcs,
        products=products.reset_index(drop=True),
        suppliers=t["suppliers"].reset_index(drop=True),
        site_share_caps=site_share_caps(t),
        settings=s,
        pruned=pruned,
        arcs_all=arcs_all,
        sourcing_shares=t["sourcing_shares"].reset_index(drop=True),
        customers_region=t["customers"].set_index("customer")["region"].astype(str),
    )


def lost_sale_cost(products: pd.DataFrame, policy_penalty: float, product: pd.Series) -> np.ndarray:
    """Cost of one unit of lost demand of each ``product`` (currency/unit): the product's ``lost_sale_cost``
    where given, else the policy's ``unmet_penalty_per_unit`` when above 0, else 2 × the unit value."""
    info = products.drop_duplicates("product").set_index("product")
    own = pd.to_numeric(product.map(info["lost_sale_cost"]), errors="coerce") if "lost_sale_cost" in info else None
    fallback = policy_penalty if policy_penalty > 0 else 2.0 * product.map(info["unit_value"]).astype(float)
    out = pd.Series(fallback, index=product.index, dtype=float)
    if own is not None:
        out = own.fillna(out)
    return out.to_numpy(float)
