"""Cost to serve: the landed cost of each customer's demand of each product along its actual paths.

Every unit carries the cost of the path it took.  With x_a the flow on arc a and C_{a,k} its cost of
component k (currency/yr, from the flows table), the unit cost u_{n,k} of product p held at node
n = (site, p) ready to ship is the inflow-weighted average of what arrived, plus what the site adds:

    supplier s:   u_{s,k} = 0                               (the price is on the supplier's arcs)
    plant f, p:   u_{f,p,k} = c^prod_{f,p} [k = production] + Σ_r β_{p,r} ū_{f,r,k}
                  ū_{f,r,k} = Σ_{a ∈ in(f,r)} (x_a u_{o(a),r,k} + C_{a,k}) / Σ_{a ∈ in(f,r)} x_a
    DC d, p:      I_{d,p} u_{d,p,k} = Σ_{a ∈ in(d,p)} (x_a u_{o(a),p,k} + C_{a,k}) + E_{d,p,k}

    E_{d,p,dc_fixed} = F_d × I_{d,p} / Σ_q I_{d,q}            (DC fixed cost allocated by throughput)
    E_{d,p,safety_stock} = the safety-stock cost of (d, p)    (its share of the component)

The DC rows are one sparse linear system (a DC may feed another).  A customer's cost of product p is
Σ_{a ∈ in(c,p)} (x_a u_{o(a),p,k} + C_{a,k}), plus its late-delivery cost (split over its products by
demand) and its lost demand at the penalty.  What no path carries (opening and closing costs, the
fixed cost of a DC without throughput, the holding cost of stock carried between periods) is
``overhead``, allocated in proportion to demand.

In a period of a plan over periods stock carried between periods enters the balance (s⁰, s¹: opening
and closing units of the period, n its length in years).  What a node has to ship per year is its
inflow plus the opening stock, A = I + s⁰/n, so a DC's unit cost is (Σ_in + E) / A and the cost of the
units left in closing stock, (s¹/n) u, goes to ``stock_built`` (it serves later periods; the opening
stock's cost was counted in the period that built it).  At a plant the unit cost per unit made,
u_f, is spread over the units it can ship, u'_f = u_f P / (P + s⁰/n), with P = shipped + (s¹ − s⁰)/n
made per year.  ``stock_built`` is allocated in proportion to demand.  Transport is split by leg
(``transport_<leg>``).  Flow conservation at every site makes the rows sum to the total landed cost
(of the period, in a plan over periods).
With an optional ``price`` per demand row: revenue = delivered × price, margin = revenue − cost, ranked by
margin share = margin / revenue (least profitable first).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

from netopt.network.arcs import Network

OVERHEAD_COMPONENTS = ("dc_opening", "dc_closing", "stock_holding")
"""Cost components no path carries, allocated to the rows in proportion to demand."""

ARC_COMPONENTS = {  # component → flows-table column carrying it
    "supply": "supply_cost",
    "duties": "duty_cost",
    "dc_handling": "handling_cost",
    "pipeline_inventory": "pipeline_cost",
    "carbon": "carbon_cost",
}


def _components(flows: pd.DataFrame) -> list[str]:
    legs = sorted(flows["leg"].astype(str).unique()) if len(flows) else []
    return (
        ["supply", "production"]
        + [f"transport_{leg}" for leg in legs]
        + [
            "duties",
            "dc_handling",
            "dc_fixed",
            "pipeline_inventory",
            "safety_stock",
            "carbon",
        ]
    )


def _arc_costs(flows: pd.DataFrame, comps: list[str]) -> np.ndarray:
    """C_{a,k}: each flow's cost per component (currency/yr), one column per component."""
    out = np.zeros((len(flows), len(comps)))
    for k, c in enumerate(comps):
        if c in ARC_COMPONENTS:
            out[:, k] = flows[ARC_COMPONENTS[c]].to_numpy(float)
        elif c.startswith("transport_"):
            out[:, k] = np.where(flows["leg"].astype(str).eq(c[len("transport_") :]), flows["freight_cost"], 0.0)
    return out


def cost_to_serve(
    net: Network, tables: dict[str, pd.DataFrame], cost: dict[str, float], demand: pd.DataFrame | None = None
) -> pd.DataFrame:
    """One row per demand row (customer, product): its landed cost per component (currency/yr) along
    its actual paths, ``cost`` (their sum), cost per unit, and with prices revenue and margin; ranked
    by margin share (least profitable first) when prices are given, else by cost per unit (dearest first)."""
    flows = tables["flows"].reset_index(drop=True)
    comps = _components(flows)
    k_of = {c: k for k, c in enumerate(comps)}
    K = len(comps)
    C = _arc_costs(flows, comps)
    q = flows["quantity"].to_numpy(float)
    org, dst, prod = (flows[c].astype(str).to_numpy() for c in ("origin", "destination", "product"))
    okind, dkind = flows["origin_kind"].to_numpy(), flows["destination_kind"].to_numpy()

    # Plants: materials averaged over what arrived (all from suppliers, unit cost 0 at the origin).
    into_plant = dkind == "plant"
    mat = pd.DataFrame(C[into_plant], columns=comps).assign(
        plant=dst[into_plant], material=prod[into_plant], q=q[into_plant]
    )
    mat = mat.groupby(["plant", "material"]).sum()
    mat_unit = mat[comps].div(mat["q"].where(mat["q"] > 0), axis=0).fillna(0.0)
    make = net.make[["plant", "product", "unit_cost"]].astype({"plant": str, "product": str})
    u_plant = np.zeros((len(make), K))
    u_plant[:, k_of["production"]] = make["unit_cost"].to_numpy(float)
    if len(net.bom) and len(mat_unit):
        use = make.reset_index().merge(net.bom, on="product")
        idx = pd.MultiIndex.from_arrays([use["plant"].astype(str), use["material"].astype(str)])
        per = mat_unit.reindex(idx).fillna(0.0).to_numpy(float) * use["quantity_per_unit"].to_numpy(float)[:, None]
        np.add.at(u_plant, use["index"].to_numpy(int), per)
    plant_pos = pd.Series(np.arange(len(make)), index=pd.MultiIndex.from_frame(make[["plant", "product"]]))
    s0, s1 = _stock_rates(tables.get("stock"))
    built = 0.0
    if len(s0):
        shipped = pd.Series(q[okind == "plant"]).groupby([org[okind == "plant"], prod[okind == "plant"]]).sum()
        key = pd.MultiIndex.from_frame(make[["plant", "product"]])
        ship = shipped.reindex(key).fillna(0.0).to_numpy(float)
        a0, a1 = s0.reindex(key).fillna(0.0).to_numpy(float), s1.reindex(key).fillna(0.0).to_numpy(float)
        can_ship = ship + a1  # = P + s⁰/n
        scale = np.where(can_ship > 0, (can_ship - a0) / np.where(can_ship > 0, can_ship, 1.0), 1.0)
        u_plant = u_plant * scale[:, None]
        built += float((a1[:, None] * u_plant).sum())

    # DCs: one linear system over (DC, product) nodes.
    into_dc = dkind == "dc"
    nodes = pd.MultiIndex.from_arrays([dst[into_dc], prod[into_dc]]).unique()
    node_pos = pd.Series(np.arange(len(nodes)), index=nodes)
    n = len(nodes)
    inflow = np.zeros(n)
    rhs = np.zeros((n, K))
    if n:
        r = node_pos.reindex(pd.MultiIndex.from_arrays([dst[into_dc], prod[into_dc]])).to_numpy(int)
        np.add.at(inflow, r, q[into_dc])
        on_hand = s0.reindex(nodes).fillna(0.0).to_numpy(float) if len(s0) else np.zeros(n)
        left = s1.reindex(nodes).fillna(0.0).to_numpy(float) if len(s1) else np.zeros(n)
        np.add.at(rhs, r, C[into_dc])
        from_plant = okind[into_dc] == "plant"
        if from_plant.any():
            pp = plant_pos.reindex(
                pd.MultiIndex.from_arrays([org[into_dc][from_plant], prod[into_dc][from_plant]])
            ).to_numpy()
            np.add.at(rhs, r[from_plant], q[into_dc][from_plant, None] * u_plant[pp.astype(int)])
        dcs = tables["dcs"].set_index(tables["dcs"]["dc"].astype(str))
        node_dc = nodes.get_level_values(0)
        through = pd.Series(inflow).groupby(np.asarray(node_dc)).transform("sum").to_numpy(float)
        fixed = dcs["fixed_cost"].reindex(node_dc).fillna(0.0).to_numpy(float)
        rhs[:, k_of["dc_fixed"]] += np.where(through > 0, fixed * inflow / np.where(through > 0, through, 1.0), 0.0)
        rhs[:, k_of["safety_stock"]] += _safety_stock_by_node(tables, cost, nodes)
        from_dc = okind[into_dc] == "dc"
        A = sp.diags(inflow + on_hand).tocsr()
        if from_dc.any():
            src = node_pos.reindex(
                pd.MultiIndex.from_arrays([org[into_dc][from_dc], prod[into_dc][from_dc]])
            ).to_numpy()
            A = A - sp.csr_matrix((q[into_dc][from_dc], (r[from_dc], src.astype(int))), shape=(n, n))
        avail = inflow + on_hand
        u_dc = np.asarray(spsolve(A.tocsc(), rhs)).reshape(n, K) if n > 1 else rhs / max(avail[0], 1e-300)
        built += float((left[:, None] * u_dc).sum())
    else:
        u_dc = np.zeros((0, K))

    # Customers: what arrived on the last legs.
    dem = net.demand[["customer", "product", "quantity"]].astype({"customer": str, "product": str})
    dem_pos = pd.Series(np.arange(len(dem)), index=pd.MultiIndex.from_frame(dem[["customer", "product"]]))
    last = dkind == "customer"
    row = dem_pos.reindex(pd.MultiIndex.from_arrays([dst[last], prod[last]])).to_numpy(int)
    per = C[last].copy()
    at_origin = np.zeros_like(per)
    lp = okind[last] == "plant"
    if lp.any():
        pp = plant_pos.reindex(pd.MultiIndex.from_arrays([org[last][lp], prod[last][lp]])).to_numpy(int)
        at_origin[lp] = u_plant[pp]
    ld = okind[last] == "dc"
    if ld.any():
        dd = node_pos.reindex(pd.MultiIndex.from_arrays([org[last][ld], prod[last][ld]])).to_numpy(int)
        at_origin[ld] = u_dc[dd]
    total = np.zeros((len(dem), K))
    np.add.at(total, row, per + q[last, None] * at_origin)
    delivered = np.bincount(row, weights=q[last], minlength=len(dem))

    out = dem.rename(columns={"quantity": "demand"}).copy()
    out["delivered"] = delivered
    for c, k in k_of.items():
        out[c] = total[:, k]
    out["late_delivery"] = _late_by_row(net, tables, dem)
    un = tables["unmet"]
    lost = un.set_index(["customer", "product"])["value"] if len(un) else pd.Series(dtype=float)
    out["unmet_penalty"] = (
        lost.reindex(pd.MultiIndex.from_frame(dem[["customer", "product"]])).fillna(0.0).to_numpy(float)
        if len(lost)
        else 0.0
    )
    share = out["demand"] / out["demand"].sum() if out["demand"].sum() > 0 else 0.0
    out["overhead"] = _overhead(tables, cost) * share
    out["stock_built"] = built * share
    parts = comps + ["late_delivery", "unmet_penalty", "overhead", "stock_built"]
    out["cost"] = out[parts].sum(axis=1)
    out["cost_per_unit"] = out["cost"] / out["delivered"].where(out["delivered"] > 0)
    price = _prices(demand, dem)
    if price is not None:
        out["price"] = price
        out["revenue"] = out["delivered"] * price
        out["margin"] = out["revenue"] - out["cost"]
        out["margin_share"] = out["margin"] / out["revenue"].where(out["revenue"] > 0)
        out = out.sort_values(["margin_share", "margin", "customer", "product"], na_position="last")
    else:
        out = out.sort_values(
            ["cost_per_unit", "customer", "product"], ascending=[False, True, True], na_position="last"
        )
    out.insert(0, "rank", np.arange(1, len(out) + 1))
    return out.reset_index(drop=True)


def _overhead(tables: dict[str, pd.DataFrame], cost: dict[str, float]) -> float:
    """What no path carries (currency/yr): :data:`OVERHEAD_COMPONENTS` and the fixed cost of open DCs
    without throughput."""
    d = tables["dcs"]
    idle = d["open"].astype(bool) & (d["throughput"].astype(float) <= 0)
    one_off = sum(float(cost.get(c, 0.0)) for c in OVERHEAD_COMPONENTS)
    return one_off + float(d.loc[idle, "fixed_cost"].astype(float).sum())


def _stock_rates(stock: pd.DataFrame | None) -> tuple[pd.Series, pd.Series]:
    """Opening and closing stock per year of the period (s⁰/n, s¹/n, units/yr) by (site, product)."""
    if stock is None or stock.empty:
        return pd.Series(dtype=float), pd.Series(dtype=float)
    by = stock.set_index([stock["site"].astype(str), stock["product"].astype(str)])
    years = by["years"].astype(float)
    return by["opening"].astype(float) / years, by["closing"].astype(float) / years


def _safety_stock_by_node(tables: dict[str, pd.DataFrame], cost: dict[str, float], nodes: pd.MultiIndex) -> np.ndarray:
    """The safety-stock component (currency/yr) spread over (DC, product) nodes by each one's cost at its throughput."""
    total = float(cost.get("safety_stock", 0.0))
    ss = tables.get("safety_stock")
    if not total or ss is None or ss.empty:
        return np.zeros(len(nodes))
    by = ss.set_index([ss["dc"].astype(str), ss["product"].astype(str)])
    w = by["cost_model"].astype(float)
    if w.sum() <= 0:
        w = by["cost_pwl"].astype(float)
    if w.sum() <= 0:
        w = by["throughput"].astype(float)
    at = w.reindex(nodes).fillna(0.0).to_numpy(float)
    return total * at / at.sum() if at.sum() > 0 else np.zeros(len(nodes))


def _late_by_row(net: Network, tables: dict[str, pd.DataFrame], dem: pd.DataFrame) -> np.ndarray:
    """Each customer's late-delivery cost (late units × its cost per unit) split over its products by demand."""
    sv = tables.get("service")
    if sv is None or sv.empty:
        return np.zeros(len(dem))
    late_cost = net.customers.set_index(net.customers["customer"].astype(str))["late_cost"]
    per = sv.set_index(sv["customer"].astype(str))
    amount = per["late_units"].astype(float) * late_cost.reindex(per.index).fillna(0.0).to_numpy(float)
    share = dem["quantity"] / dem.groupby("customer")["quantity"].transform("sum")
    return dem["customer"].map(amount).fillna(0.0).to_numpy(float) * share.fillna(0.0).to_numpy(float)


def _prices(demand: pd.DataFrame | None, dem: pd.DataFrame) -> np.ndarray | None:
    """The demand table's ``price`` per row of ``dem`` (currency/unit), or None when no price is given."""
    if demand is None or "price" not in demand or not demand["price"].notna().any():
        return None
    p = demand.set_index([demand["customer"].astype(str), demand["product"].astype(str)])["price"].astype(float)
    return p.reindex(pd.MultiIndex.from_frame(dem[["customer", "product"]])).to_numpy(float)
