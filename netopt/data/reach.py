"""Demand reachability: every demand row must be reachable from a source over the lanes."""

from __future__ import annotations

import pandas as pd

from netopt.data.case import Problem
from netopt.data.schema import INF
from netopt.data.text import row_number


def _reach(starts: pd.DataFrame, lanes: pd.DataFrame) -> pd.DataFrame:
    """Every (node, item) an item can get to from its start nodes over the lanes.

    ``starts`` has columns node, item.  Start nodes ship their item; DCs pass on what
    reaches them; other nodes (plants, customers) only receive.  A lane row for a named
    product overrides the same origin, destination and mode's "" row for that product;
    rows with capacity ≤ 0 carry nothing.
    """
    cols = ["node", "item"]
    if starts.empty:
        return pd.DataFrame({"node": pd.Series(dtype=object), "item": pd.Series(dtype=object)})
    ln = lanes.assign(
        product=lanes["product"].fillna("").astype(str),
        capacity=pd.to_numeric(lanes["capacity"], errors="coerce").fillna(INF),
    )
    specific = ln[ln["product"] != ""]
    spec_open = specific[specific["capacity"] > 0][["origin", "product", "destination", "destination_kind"]]
    spec_open = spec_open.drop_duplicates()
    blocked = specific[["origin", "destination", "mode", "product"]].drop_duplicates()  # general row overridden
    general = ln[(ln["product"] == "") & (ln["capacity"] > 0)][["origin", "destination", "mode", "destination_kind"]]

    if blocked.empty:  # no per-product overrides: the mode does not matter
        general = general.drop_duplicates(["origin", "destination"])

    reached = starts[cols].drop_duplicates().astype(str)
    frontier = reached
    while not frontier.empty:
        a = frontier.merge(spec_open, left_on=["node", "item"], right_on=["origin", "product"])
        a = a[["destination", "item", "destination_kind"]]
        b = frontier.merge(general, left_on="node", right_on="origin")
        if not b.empty and not blocked.empty:
            b = b.merge(
                blocked.rename(columns={"product": "item"}),
                on=["origin", "destination", "mode", "item"],
                how="left",
                indicator=True,
            )
            b = b[b["_merge"] == "left_only"]
        b = b[["destination", "item", "destination_kind"]]
        new = pd.concat([a, b], ignore_index=True).rename(columns={"destination": "node"})
        new = new.drop_duplicates(cols).astype(str)
        new = new.merge(reached, on=cols, how="left", indicator=True)
        new = new[new["_merge"] == "left_only"].drop(columns="_merge")
        reached = pd.concat([reached, new[cols]], ignore_index=True)
        frontier = new[new["destination_kind"] == "dc"][cols]
    return reached


def _names(values, limit: int = 3) -> str:
    values = sorted(set(values))
    shown = ", ".join(values[:limit])
    return shown + (f" and {len(values) - limit} more" if len(values) > limit else "")


def unreachable_demand(tables: dict[str, pd.DataFrame], lanes: pd.DataFrame) -> list[Problem]:
    """Demand that no source can reach over the lanes.

    A source of a finished product is a plant that makes it (and can receive every
    material of its bill of materials from some supplier over the lanes, possibly via
    a DC) or a supplier that offers it.  Paths may run through any number of DCs and
    use lanes of any mode; DCs forced closed are skipped.  One error per demand row
    with positive quantity that no source reaches.

    Args:
        tables: typed case tables (index = user row numbers).
        lanes: the lane table of ``netopt.network.lanes.build_lanes`` (columns origin,
            origin_kind, destination, destination_kind, mode, product, capacity, ...).
    """
    demand = tables["demand"]
    demand = demand[demand["quantity"] > 0]
    if demand.empty:
        return []
    dcs = tables["dcs"]
    closed = set(dcs.loc[dcs["force"] == "closed", "dc"].astype(str)) if not dcs.empty else set()
    ln = lanes
    if closed:
        ln = ln[~ln["origin"].isin(closed) & ~ln["destination"].isin(closed)]
    ln = ln[["origin", "destination", "destination_kind", "mode", "product", "capacity"]]

    suppliers = tables["suppliers"][["supplier", "product"]].astype(str)
    plants = tables["plants"][["plant", "product"]].astype(str)
    bom = tables["bill_of_materials"][["product", "material"]].astype(str)

    # which plants can get every material of the products they make
    lacking: dict[tuple[str, str], list[str]] = {}
    if not bom.empty and not plants.empty:
        need = plants.merge(bom, on="product")
        if not need.empty:
            mat_starts = suppliers[suppliers["product"].isin(set(need["material"]))]
            got = _reach(mat_starts.rename(columns={"supplier": "node", "product": "item"}), ln)
            chk = need.merge(got, left_on=["plant", "material"], right_on=["node", "item"], how="left", indicator=True)
            for _, row in chk[chk["_merge"] == "left_only"].iterrows():
                lacking.setdefault((row["plant"], row["product"]), []).append(row["material"])
    able = plants[[(p, q) not in lacking for p, q in zip(plants["plant"], plants["product"])]]
    starts = pd.concat(
        [
            able.rename(columns={"plant": "node", "product": "item"}),
            suppliers.rename(columns={"supplier": "node", "product": "item"}),
        ],
        ignore_index=True,
    )
    wanted = set(demand["product"].astype(str))
    starts = starts[starts["item"].isin(wanted)]
    reached = _reach(starts, ln)

    d = demand[["customer", "product"]].astype(str).reset_index(names="_row")
    chk = d.merge(reached, left_on=["customer", "product"], right_on=["node", "item"], how="left", indicator=True)
    missing = chk[chk["_merge"] == "left_only"]
    if missing.empty:
        return []
    makers = plants.groupby("product")["plant"].apply(list).to_dict()
    sellers = suppliers.groupby("product")["supplier"].apply(list).to_dict()
    problems = []
    for _, row in missing.sort_values("_row").iterrows():
        c, p, r = row["customer"], row["product"], row_number(row["_row"])
        mk, sl = makers.get(p, []), sellers.get(p, [])
        if not mk and not sl:
            msg = f"no plant makes and no supplier offers '{p}', so customer '{c}' cannot be served"
            col = "product"
        elif not sl and all((m, p) in lacking for m in mk):
            why = "; ".join(f"{m} lacks {_names(lacking[(m, p)])}" for m in sorted(set(mk))[:3])
            msg = (
                f"'{p}' for customer '{c}' has no source: every plant making it lacks a lane path for a "
                f"material of its bill of materials ({why}) and no supplier offers it"
            )
            col = "product"
        else:
            src = "; ".join(
                x for x in (f"plants: {_names(mk)}" if mk else "", f"suppliers: {_names(sl)}" if sl else "") if x
            )
            msg = (
                f"no lane path reaches customer '{c}' with '{p}' from any source ({src}), directly or via a DC; "
                "check the modes' min_km/max_km and legs, the settings' lanes.legs and lanes.max_dc_customer_km, "
                "DCs forced closed, and lanes with available = false"
            )
            col = "customer"
        problems.append(Problem("demand", r, col, msg))
    return problems
