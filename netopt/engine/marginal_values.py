"""Marginal values of the solved network, from its held linear program (:class:`~netopt.engine.held.HeldNetwork`):
what one more unit of capacity is worth, and what it would take for an unused lane to be used.

The held LP keeps the plan's DC decisions (and, when the model has other yes/no decisions, their
values in the plan) and relaxes nothing else; its optimum is the plan's cost.  By LP duality:

    shadow price of capacity row r  = −y_r      (currency/yr saved per unit/yr more capacity; ≥ 0)
    shadow price of a bounded column = −d_j at its upper bound   (plant capacity, one product's lane capacity)
    reduced cost of an unused arc   =  d_j ≥ 0  (how much its cost per unit must fall before it carries flow;
                                                  arcs through a DC the plan keeps closed are left out)

with y the row duals and d the column duals (reduced costs) HiGHS reports.  Capacities: supplier offers
(``supplier_capacity`` rows), plants (bounds of ``make``), open DCs (``dc_throughput`` rows, finite
capacity only) and lanes (``lane_capacity`` rows; bounds of a product's own lane).  A shadow price holds
for small changes: past the next change of basis the value of capacity steps down (a convex, piecewise
linear cost of capacity).  Where the case allows lost demand it is priced at its penalty, so a capacity's
value is never above what losing demand would cost; where it does not, every unit must be delivered.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.held import HeldNetwork
from netopt.engine.result import Result

EPS = 1e-7
SHADOW_COLUMNS = ["type", "element", "product", "capacity", "used", "shadow_price", "binding"]
REDUCED_COLUMNS = ["origin", "destination", "mode", "product", "leg", "unit_cost", "reduced_cost"]


def held_lp(case: Case, base: Result) -> tuple[HeldNetwork, str]:
    """The held LP of ``base`` solved to optimality, and a note of what was held beyond the DCs ("" if nothing)."""
    held = HeldNetwork(case, base)
    note = ""
    if not bool(case.settings["policy"]["allow_unmet_demand"]):  # the case's own rule: every unit delivered
        cols = held.hm.col_of.get("unmet", np.zeros(0, dtype=np.int64))
        cols = cols[cols >= 0].astype(np.int32)
        if len(cols):
            held.hm.highs.changeColsBounds(len(cols), cols, np.zeros(len(cols)), np.zeros(len(cols)))
            held.base_info = held.hm.solve()
    if not held.is_lp:  # other yes/no decisions (single sourcing, one mode per lane, …): fix them as solved
        hm = held.hm
        x = np.asarray(hm.highs.getSolution().col_value, dtype=float)
        ints = np.flatnonzero(hm.integrality)
        if len(x) == len(hm.integrality) and len(ints):
            v = np.round(x[ints])
            hm.highs.changeColsBounds(len(ints), ints.astype(np.int32), v, v)
        hm.relax_integrality()
        held.base_info = hm.solve()
        note = "the plan's yes/no decisions (sourcing, modes, safety-stock segments) held as solved"
    return held, note


def marginal_values(case: Case, base: Result) -> tuple[pd.DataFrame, pd.DataFrame, str]:
    """``(shadow_prices, lane_reduced_costs, note)`` of ``base`` (see the module docstring); the note says
    what was held or why nothing could be priced."""
    held, note = held_lp(case, base)
    if held.base_info.status != "optimal":
        return (
            pd.DataFrame(columns=SHADOW_COLUMNS),
            pd.DataFrame(columns=REDUCED_COLUMNS),
            f"marginal values not computed: the held linear program ended {held.base_info.status}",
        )
    gap = abs(held.base_info.objective - base.objective) / max(1.0, abs(base.objective))
    if gap > 1e-6:
        note = "; ".join(
            n for n in (note, f"the held linear program costs {gap:.2%} less than the plan (within its MIP gap)") if n
        )
    sol = held.hm.highs.getSolution()
    rd = np.asarray(sol.row_dual, dtype=float)
    cd = np.asarray(sol.col_dual, dtype=float)
    x = np.asarray(sol.col_value, dtype=float)
    net, b = held.net, held.builder
    arcs = net.arcs
    flow_col = held.hm.col_of["flow"]
    flow = np.where(flow_col >= 0, x[np.maximum(flow_col, 0)], 0.0)
    parts = []

    def rows(family: str, kind: str, element, product, capacity, used, keep=None) -> None:
        r = held.rows_of(family)
        ok = (r >= 0) & (True if keep is None else keep)
        dual = np.where(ok, rd[np.maximum(r, 0)], 0.0)
        parts.append(
            pd.DataFrame(
                {
                    "type": kind,
                    "element": np.asarray(element, dtype=object),
                    "product": np.asarray(product, dtype=object),
                    "capacity": np.asarray(capacity, dtype=float),
                    "used": np.asarray(used, dtype=float),
                    "shadow_price": np.maximum(0.0, -dual),
                }
            )[ok]
        )

    if "supplier_capacity" in b.row_labels:
        lab = b.row_labels["supplier_capacity"]
        sup = arcs["origin_kind"].eq("supplier").to_numpy()
        out = (
            pd.Series(flow[sup])
            .groupby([arcs.loc[sup, "origin"].to_numpy(), arcs.loc[sup, "product"].to_numpy()])
            .sum()
        )
        cap = net.suppliers.set_index(["supplier", "product"])["capacity"]
        idx = pd.MultiIndex.from_frame(lab[["supplier", "product"]])
        rows(
            "supplier_capacity",
            "supplier",
            lab["supplier"],
            lab["product"],
            cap.reindex(idx).to_numpy(float),
            out.reindex(idx).fillna(0.0).to_numpy(float),
        )
    if "dc_throughput" in b.row_labels:
        lab = b.row_labels["dc_throughput"]
        dcs = base.tables["dcs"].set_index("dc")
        cap = dcs["capacity"].reindex(lab["dc"]).to_numpy(float)
        keep = dcs["open"].reindex(lab["dc"]).fillna(False).to_numpy(bool) & np.isfinite(cap)
        into = arcs["destination_kind"].eq("dc").to_numpy()
        thr = pd.Series(flow[into]).groupby(arcs.loc[into, "destination"].to_numpy()).sum()
        rows("dc_throughput", "dc", lab["dc"], "", cap, thr.reindex(lab["dc"]).fillna(0.0).to_numpy(float), keep)
    if "lane_capacity" in b.row_labels:
        lab = b.row_labels["lane_capacity"]
        keys = ["origin", "destination", "mode"]
        used = pd.Series(flow).groupby([arcs[k].to_numpy() for k in keys]).sum()
        idx = pd.MultiIndex.from_frame(lab[keys])
        cap = arcs.drop_duplicates(keys).set_index(keys)["lane_capacity"].reindex(idx).to_numpy(float)
        rows(
            "lane_capacity",
            "lane",
            lab["origin"] + " → " + lab["destination"] + " by " + lab["mode"],
            "",
            cap,
            used.reindex(idx).fillna(0.0).to_numpy(float),
        )
    # Bounded columns: plant capacity (make ≤ W) and a product's own lane capacity (flow ≤ L).
    make_col = held.hm.col_of["make"]
    finite = np.isfinite(net.make["capacity"].to_numpy(float)) & (make_col >= 0)
    if finite.any():
        mc = make_col[finite]
        parts.append(
            pd.DataFrame(
                {
                    "type": "plant",
                    "element": net.make.loc[finite, "plant"].to_numpy(object),
                    "product": net.make.loc[finite, "product"].to_numpy(object),
                    "capacity": net.make.loc[finite, "capacity"].to_numpy(float),
                    "used": x[mc],
                    "shadow_price": np.maximum(0.0, -cd[mc]),
                }
            )
        )
    own = np.isfinite(arcs["capacity"].to_numpy(float)) & (flow_col >= 0)
    if own.any():
        fc = flow_col[own]
        a = arcs[own]
        parts.append(
            pd.DataFrame(
                {
                    "type": "lane",
                    "element": (a["origin"] + " → " + a["destination"] + " by " + a["mode"]).to_numpy(object),
                    "product": a["product"].to_numpy(object),
                    "capacity": a["capacity"].to_numpy(float),
                    "used": x[fc],
                    "shadow_price": np.maximum(0.0, -cd[fc]),
                }
            )
        )
    shadow = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=SHADOW_COLUMNS[:-1])
    shadow = shadow.astype({"capacity": float, "used": float, "shadow_price": float})
    shadow["binding"] = shadow["used"].to_numpy(float) >= shadow["capacity"].to_numpy(float) * (1 - 1e-9) - EPS
    shadow = shadow.sort_values(["shadow_price", "type", "element"], ascending=[False, True, True])

    # Arcs through a DC the plan keeps closed cannot carry flow at any cost: not listed.
    closed = set(base.tables["dcs"].loc[~base.tables["dcs"]["open"].astype(bool), "dc"].astype(str))
    through_closed = arcs["origin"].astype(str).isin(closed) | arcs["destination"].astype(str).isin(closed)
    unused = (flow_col >= 0) & (flow <= EPS) & ~through_closed.to_numpy()
    a = arcs[unused]
    reduced = pd.DataFrame(
        {
            "origin": a["origin"].to_numpy(object),
            "destination": a["destination"].to_numpy(object),
            "mode": a["mode"].to_numpy(object),
            "product": a["product"].to_numpy(object),
            "leg": a["leg"].to_numpy(object),
            "unit_cost": a["unit_cost"].to_numpy(float),
            "reduced_cost": np.maximum(0.0, cd[flow_col[unused]]),
        }
    ).sort_values(["reduced_cost", "origin", "destination", "mode", "product"])
    return shadow[SHADOW_COLUMNS].reset_index(drop=True), reduced.reset_index(drop=True), note
