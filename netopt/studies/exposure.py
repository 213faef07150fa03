"""Time-to-survive and time-to-recover exposure: how long the network lasts with a node down, and what it loses.

The method is the risk-exposure analysis of Simchi-Levi, Schmidt & Wei (Harvard Business
Review, Jan–Feb 2014) and Simchi-Levi et al. (Interfaces 45(5), 2015):

- *time-to-recover* (TTR, days): how long node n stays down — an input (the
  ``time_to_recover_days`` columns of suppliers, plants and dcs; blank = the settings'
  ``resilience.time_to_recover_days``);
- *performance impact*: the least value of demand lost while n is down for its TTR,
  using the stock on hand and every other node's capacity — a linear program;
- *risk-exposure index* (REI): the impact over the largest impact of all nodes;
- *time-to-survive* (TTS, days): the longest time all demand can still be met with n
  down — the same linear program with no lost demand and the horizon t maximised.
  A node whose TTS is shorter than its TTR needs mitigation.

Two versions live here:

- :func:`netopt.studies.exposure_tier.single_tier_exposure` — the published single-tier LP (suppliers × products,
  links switched off per scenario), exactly as published, for the worked example;
- :func:`exposure` — a network (multi-echelon) version built from a solved base: the
  base's open DCs, every lane of the held network, plant bills of materials, and the
  stock the base holds (pipeline stock in transit into each site, plus safety stock
  where a ``safety_stock`` result table exists).

Like the published model, flows inside the horizon are cumulative quantities (units over
the t days); transit times enter only through the pipeline stock already on its way.
Sourcing shares and service windows are not enforced in an emergency.
"""

from __future__ import annotations

import highspy
import numpy as np
import pandas as pd
from scipy import sparse

from netopt.data.case import Case
from netopt.network.arcs import build_network
from netopt.studies.exposure_tier import _highs, _run

INF = highspy.kHighsInf
DAYS_PER_YEAR = 365.0
EPS = 1e-9


def time_to_recover(case: Case) -> pd.Series:
    """Days to restore each supplier, plant and DC (site → days).

    From the tables' ``time_to_recover_days`` column where given (a supplier or plant with
    several rows takes the longest given value), else the settings'
    ``resilience.time_to_recover_days``.
    """
    default = float(case.settings["resilience"]["time_to_recover_days"])
    out = {}
    t = case.tables
    for table, col in (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc")):
        df = t[table]
        if not len(df):
            continue
        v = (
            pd.to_numeric(df["time_to_recover_days"], errors="coerce")
            if "time_to_recover_days" in df
            else pd.Series(np.nan, index=df.index)
        )
        g = pd.Series(v.to_numpy(float), index=df[col].astype(str).to_numpy()).groupby(level=0).max()
        for site in df[col].astype(str).unique():
            x = g.get(site, np.nan)
            out[site] = default if pd.isna(x) else float(x)
    return pd.Series(out, name="time_to_recover_days", dtype=float)


SAFETY_STOCK_UNITS = ("ss_units_exact", "safety_stock_units", "ss_units_model", "ss_units", "safety_stock", "units")
"""Units column of a ``safety_stock`` result table, first found wins (the exact formula at the chosen flows first)."""


def base_stock(base, case: Case | None = None) -> tuple[pd.DataFrame, str]:
    """Stock the base solution holds, by site and product (units), and a note on its sources.

    - pipeline: units in transit on each lane into a site = flow (units/yr) × transit days / 365
      (Little's law), counted at the destination it is travelling to;
    - safety stock: from a ``safety_stock`` result table when the base has one (a site or
      dc column, a product column and a units column, see :data:`SAFETY_STOCK_UNITS`);
    - on hand: the ``opening_stock`` table of ``case`` (units per site and product), when given.
    """
    f = base.tables["flows"]
    pipe = f.assign(units=f["quantity"].to_numpy(float) * f["transit_days"].to_numpy(float) / DAYS_PER_YEAR)
    parts = [
        pipe.groupby(["destination", "product"], as_index=False)["units"]
        .sum()
        .rename(columns={"destination": "site"})
        .assign(source="pipeline")
    ]
    note = "pipeline stock only (the base has no safety_stock table)"
    ss = base.tables.get("safety_stock")
    if ss is not None and len(ss):
        site_col = next((c for c in ("site", "dc") if c in ss.columns), None)
        unit_col = next((c for c in SAFETY_STOCK_UNITS if c in ss.columns), None)
        if site_col and unit_col and "product" in ss.columns:
            s = ss[[site_col, "product", unit_col]].set_axis(["site", "product", "units"], axis=1)
            s = s.groupby(["site", "product"], as_index=False)["units"].sum().assign(source="safety_stock")
            parts.append(s)
            note = f"pipeline stock plus safety stock ({unit_col} of the base's safety_stock table)"
        else:
            note = "pipeline stock only (the base's safety_stock table has no site, product and units columns)"
    on_hand = case.tables.get("opening_stock") if case is not None else None
    if on_hand is not None and len(on_hand):
        parts.append(
            on_hand[["site", "product", "quantity"]].rename(columns={"quantity": "units"}).assign(source="on_hand")
        )
        note += ", plus the stock on hand of the case's opening_stock table"
    stock = pd.concat(parts, ignore_index=True)
    return stock[stock["units"] > 0].reset_index(drop=True), note


# ---------------------------------------------------------------------------------- network LP


class ExposureModel:
    """The network TTS/TTR linear program of one solved base, kept in HiGHS for one re-solve per node.

    Columns: y (units moved on each arc over the horizon), u (units made per plant and
    product), l (units of demand lost per customer and product), t (horizon, days).
    Rows (per day rates are annual figures / 365):

    - demand (c, p): Σ_in y + l − d t ≥ −s(c, p)         (d = base delivered per day)
    - DC stock (dc, p): Σ_out y − Σ_in y ≤ s(dc, p)
    - plant output (k, p): Σ_out y − u ≤ s(k, p)
    - plant materials (k, m): Σ_p bom u − Σ_in y ≤ s(k, m)
    - capacities (supplier offers, plant lines, DC throughput, lanes): Σ y (or u) − cap t ≤ 0

    A node taken out has every arc into and out of it (and its production) fixed at 0, so
    the stock held at or travelling into it is unusable.
    """

    def __init__(self, case: Case, base, stock: pd.DataFrame | None = None):
        self.case = case
        if stock is None:
            stock, self.stock_note = base_stock(base, case)
        else:
            self.stock_note = "stock given by the caller"
        self.stock = stock
        net = build_network(case, base.lanes)
        open_dcs = set(base.tables["dcs"].loc[base.tables["dcs"]["open"], "dc"])
        closed = set(net.dcs["dc"]) - open_dcs
        a = net.arcs
        keep = ~(a["origin"].isin(closed) | a["destination"].isin(closed))
        a = a[keep].reset_index(drop=True)
        self.arcs = a
        self.make = net.make
        self.net = net
        ny, nu = len(a), len(net.make)

        # Demand to keep up: what the base delivers (units/day) per customer and product.
        sv = base.tables["flows"]
        last = sv[sv["destination_kind"] == "customer"].groupby(["destination", "product"])["quantity"].sum()
        dem = net.demand[["customer", "product", "penalty"]].copy()
        dem["rate"] = last.reindex(pd.MultiIndex.from_frame(dem[["customer", "product"]])).fillna(0.0).to_numpy(float)
        dem["rate"] /= DAYS_PER_YEAR
        dem = dem[dem["rate"] > 0].reset_index(drop=True)
        self.demand = dem
        nl = len(dem)
        self.n_y, self.n_u, self.n_l = ny, nu, nl
        self.col_t = ny + nu + nl
        ncol = self.col_t + 1

        s = stock.groupby(["site", "product"])["units"].sum()

        def stock_of(sites, products):
            return (
                s.reindex(pd.MultiIndex.from_arrays([np.asarray(sites), np.asarray(products)]))
                .fillna(0.0)
                .to_numpy(float)
            )

        rows_i: list[np.ndarray] = []
        rows_j: list[np.ndarray] = []
        vals: list[np.ndarray] = []
        lo: list[np.ndarray] = []
        hi: list[np.ndarray] = []
        self.row_names: list[str] = []
        nrow = 0

        def add(r, c, v):
            rows_i.append(np.asarray(r, int))
            rows_j.append(np.asarray(c, int))
            vals.append(np.asarray(v, float))

        yi = np.arange(ny)
        # demand rows
        cust_key = pd.MultiIndex.from_frame(dem[["customer", "product"]])
        pos = pd.Series(np.arange(nl), index=cust_key)
        last_arcs = np.flatnonzero(a["destination_kind"].eq("customer").to_numpy())
        r = pos.reindex(pd.MultiIndex.from_frame(a.iloc[last_arcs][["destination", "product"]])).to_numpy()
        ok = ~np.isnan(r)
        add(nrow + r[ok].astype(int), last_arcs[ok], np.ones(ok.sum()))
        add(nrow + np.arange(nl), ny + nu + np.arange(nl), np.ones(nl))
        add(nrow + np.arange(nl), np.full(nl, self.col_t), -dem["rate"].to_numpy(float))
        lo.append(-stock_of(dem["customer"], dem["product"]))
        hi.append(np.full(nl, np.inf))
        nrow += nl

        # DC stock rows
        into = a["destination_kind"].eq("dc").to_numpy()
        out = a["origin_kind"].eq("dc").to_numpy()
        pairs = pd.concat(
            [
                a.loc[into, ["destination", "product"]].set_axis(["site", "product"], axis=1),
                a.loc[out, ["origin", "product"]].set_axis(["site", "product"], axis=1),
            ]
        ).drop_duplicates()
        pairs = pairs.sort_values(["site", "product"]).reset_index(drop=True)
        ppos = pd.Series(np.arange(len(pairs)), index=pd.MultiIndex.from_frame(pairs))
        ri = ppos.reindex(
            pd.MultiIndex.from_frame(a.loc[into, ["destination", "product"]].set_axis(["site", "product"], axis=1))
        ).to_numpy(int)
        ro = ppos.reindex(
            pd.MultiIndex.from_frame(a.loc[out, ["origin", "product"]].set_axis(["site", "product"], axis=1))
        ).to_numpy(int)
        add(nrow + ro, yi[out], np.ones(out.sum()))
        add(nrow + ri, yi[into], -np.ones(into.sum()))
        lo.append(np.full(len(pairs), -np.inf))
        hi.append(stock_of(pairs["site"], pairs["product"]))
        nrow += len(pairs)

        # plant output rows
        mk = net.make
        mpos = pd.Series(np.arange(nu), index=pd.MultiIndex.from_frame(mk[["plant", "product"]]))
        po = np.flatnonzero(a["origin_kind"].eq("plant").to_numpy())
        r = mpos.reindex(pd.MultiIndex.from_frame(a.iloc[po][["origin", "product"]])).to_numpy()
        ok = ~np.isnan(r)
        add(nrow + r[ok].astype(int), po[ok], np.ones(ok.sum()))
        add(nrow + np.arange(nu), ny + np.arange(nu), -np.ones(nu))
        lo.append(np.full(nu, -np.inf))
        hi.append(stock_of(mk["plant"], mk["product"]))
        nrow += nu

        # plant material rows
        bom = net.bom
        if len(bom) and nu:
            use = mk.reset_index(drop=True).reset_index().rename(columns={"index": "mk"}).merge(bom, on="product")
            mats = (
                use[["plant", "material"]].drop_duplicates().sort_values(["plant", "material"]).reset_index(drop=True)
            )
            matpos = pd.Series(np.arange(len(mats)), index=pd.MultiIndex.from_frame(mats))
            ru = matpos.reindex(pd.MultiIndex.from_frame(use[["plant", "material"]])).to_numpy(int)
            add(nrow + ru, ny + use["mk"].to_numpy(int), use["quantity_per_unit"].to_numpy(float))
            pi = np.flatnonzero(a["destination_kind"].eq("plant").to_numpy())
            r = matpos.reindex(
                pd.MultiIndex.from_frame(a.iloc[pi][["destination", "product"]].set_axis(["plant", "material"], axis=1))
            ).to_numpy()
            ok = ~np.isnan(r)
            add(nrow + r[ok].astype(int), pi[ok], -np.ones(ok.sum()))
            lo.append(np.full(len(mats), -np.inf))
            hi.append(stock_of(mats["plant"], mats["material"]))
            nrow += len(mats)

        def cap_rows(members_rows: np.ndarray, members_cols: np.ndarray, caps: np.ndarray):
            """Rows Σ members − cap/365 · t ≤ 0 for the finite caps (one row per group)."""
            nonlocal nrow
            fin = np.flatnonzero(np.isfinite(caps))
            if not len(fin):
                return
            remap = -np.ones(len(caps), int)
            remap[fin] = np.arange(len(fin))
            m = remap[members_rows] >= 0
            add(nrow + remap[members_rows][m], members_cols[m], np.ones(m.sum()))
            add(nrow + np.arange(len(fin)), np.full(len(fin), self.col_t), -caps[fin] / DAYS_PER_YEAR)
            lo.append(np.full(len(fin), -np.inf))
            hi.append(np.zeros(len(fin)))
            nrow += len(fin)

        # supplier offers
        si = np.flatnonzero(a["origin_kind"].eq("supplier").to_numpy())
        if len(si):
            offers = a.iloc[si][["origin", "product"]].drop_duplicates().sort_values(["origin", "product"])
            opos = pd.Series(np.arange(len(offers)), index=pd.MultiIndex.from_frame(offers))
            r = opos.reindex(pd.MultiIndex.from_frame(a.iloc[si][["origin", "product"]])).to_numpy(int)
            caps = (
                net.suppliers.set_index(["supplier", "product"])["capacity"]
                .reindex(pd.MultiIndex.from_frame(offers))
                .to_numpy(float)
            )
            cap_rows(r, si, caps)
        # plant lines
        cap_rows(np.arange(nu), ny + np.arange(nu), mk["capacity"].to_numpy(float))
        # DC throughput (the chosen option's capacity)
        di = np.flatnonzero(into)
        if len(di):
            dcs = sorted(set(a.iloc[di]["destination"]))
            dpos = {d: k for k, d in enumerate(dcs)}
            chosen = base.tables["dcs"].set_index("dc")["capacity"]
            caps = np.array([float(chosen.get(d, np.inf)) for d in dcs])
            cap_rows(np.array([dpos[d] for d in a.iloc[di]["destination"]]), di, caps)
        # lane-and-mode capacity (all products) and product-specific lane capacity
        lc = a["lane_capacity"].to_numpy(float)
        li = np.flatnonzero(np.isfinite(lc))
        if len(li):
            lanes = a.iloc[li][["origin", "destination", "mode"]].drop_duplicates().reset_index(drop=True)
            lpos = pd.Series(np.arange(len(lanes)), index=pd.MultiIndex.from_frame(lanes))
            r = lpos.reindex(pd.MultiIndex.from_frame(a.iloc[li][["origin", "destination", "mode"]])).to_numpy(int)
            caps = pd.Series(lc[li]).groupby(r).first().to_numpy(float)
            cap_rows(r, li, caps)
        pc = a["capacity"].to_numpy(float)
        ci = np.flatnonzero(np.isfinite(pc))
        if len(ci):
            cap_rows(np.arange(len(ci)), ci, pc[ci])

        A = sparse.coo_matrix(
            (np.concatenate(vals), (np.concatenate(rows_i), np.concatenate(rows_j))), shape=(nrow, ncol)
        ).tocsc()
        self.row_lo = np.concatenate(lo)
        self.row_hi = np.concatenate(hi)
        self.col_lo = np.zeros(ncol)
        self.col_hi = np.full(ncol, np.inf)
        self.penalty = dem["penalty"].to_numpy(float)
        self.h = _highs(np.zeros(ncol), A, self.row_lo, self.row_hi, self.col_lo, self.col_hi)

    # ------------------------------------------------------------------ per node
    def node_columns(self, node: str) -> np.ndarray:
        """Columns fixed at 0 when ``node`` is down: its arcs in and out, its production."""
        a = self.arcs
        y = np.flatnonzero(((a["origin"] == node) | (a["destination"] == node)).to_numpy())
        u = self.n_y + np.flatnonzero((self.make["plant"] == node).to_numpy())
        return np.concatenate([y, u]).astype(np.int32)

    def _solve(self, down: np.ndarray, cost: np.ndarray, t_lo: float, t_hi: float, lost_allowed: bool):
        h = self.h
        n = len(cost)
        hi = self.col_hi.copy()
        hi[down] = 0.0
        ls = slice(self.n_y + self.n_u, self.col_t)
        if not lost_allowed:
            hi[ls] = 0.0
        lo = self.col_lo.copy()
        lo[self.col_t] = t_lo
        hi[self.col_t] = t_hi
        idx = np.arange(n, dtype=np.int32)
        h.changeColsBounds(n, idx, lo, np.where(np.isinf(hi), INF, hi))
        h.changeColsCost(n, idx, cost)
        return _run(h)

    def time_to_survive(self, node: str, cap_days: float) -> float:
        """Longest horizon (days, ≤ cap_days) with all base deliveries met while ``node`` is down."""
        cost = np.zeros(self.col_t + 1)
        cost[self.col_t] = -1.0
        status, x = self._solve(self.node_columns(node), cost, 0.0, cap_days, lost_allowed=False)
        if status == "infeasible":  # cannot even start: only when some stock is negative
            return 0.0
        if status != "optimal":
            raise RuntimeError(f"time-to-survive LP for {node}: {status}")
        return float(x[self.col_t])

    def impact(self, node: str, days: float) -> tuple[float, float, int]:
        """Least lost (value, units, customers short) over ``days`` with ``node`` down."""
        cost = np.zeros(self.col_t + 1)
        ls = slice(self.n_y + self.n_u, self.col_t)
        cost[ls] = self.penalty
        status, x = self._solve(self.node_columns(node), cost, days, days, lost_allowed=True)
        if status != "optimal":
            raise RuntimeError(f"performance-impact LP for {node}: {status}")
        lost = np.maximum(x[ls], 0.0)  # solver noise below 0
        short = self.demand.loc[lost > 1e-6, "customer"].nunique()
        return float(self.penalty @ lost), float(lost.sum()), int(short)


def exposure_nodes(case: Case, base) -> pd.DataFrame:
    """Nodes the exposure analysis covers: every supplier and plant, each DC open in the base."""
    t = case.tables
    d = base.tables["dcs"]
    rows = [(s, "supplier") for s in t["suppliers"]["supplier"].astype(str).unique()]
    rows += [(p, "plant") for p in t["plants"]["plant"].astype(str).unique()]
    rows += [(dc, "dc") for dc in d.loc[d["open"], "dc"]]
    return pd.DataFrame(rows, columns=["node", "type"])


def exposure(
    case: Case,
    base,
    *,
    stock: pd.DataFrame | None = None,
    ttr: dict[str, float] | pd.Series | None = None,
    nodes: list[str] | None = None,
    tts_cap_days: float = 365.0,
) -> tuple[pd.DataFrame, str]:
    """Time-to-survive and performance impact of each node of the solved base network.

    Args:
        stock: units on hand per (site, product) (columns site, product, units); default
            :func:`base_stock` of the base.
        ttr: days to recover per node; default :func:`time_to_recover` of the case.
        nodes: node codes to analyse (default every supplier, plant and open DC).
        tts_cap_days: the horizon the TTS LP stops at (a node whose loss never hurts reaches it).

    Returns:
        (table, note): one row per node ranked by lost value (ties: shorter TTS first):
        node, type, ttr_days, tts_days, tts_capped, lost_units, lost_value (currency over the
        TTR), rei, customers_short, shortage_days = max(TTR − TTS, 0), tts_below_ttr,
        stock_units (held at or travelling into the node); and the note on the stock used.
    """
    model = ExposureModel(case, base, stock)
    ttr_all = time_to_recover(case)
    if ttr is not None:
        ttr_all = ttr_all.copy()
        for k, v in dict(ttr).items():
            ttr_all[k] = float(v)
    nd = exposure_nodes(case, base)
    if nodes is not None:
        nd = nd[nd["node"].isin(nodes)].reset_index(drop=True)
    node_stock = model.stock.groupby("site")["units"].sum()
    rows = []
    for node, kind in zip(nd["node"], nd["type"]):
        t_rec = float(ttr_all.get(node, case.settings["resilience"]["time_to_recover_days"]))
        tts = model.time_to_survive(node, tts_cap_days)
        value, units, short = model.impact(node, t_rec)
        rows.append(
            {
                "node": node,
                "type": kind,
                "ttr_days": t_rec,
                "tts_days": tts,
                "tts_capped": tts >= tts_cap_days - 1e-9,
                "lost_units": units,
                "lost_value": value,
                "customers_short": short,
                "shortage_days": max(t_rec - tts, 0.0),
                "tts_below_ttr": tts < t_rec - 1e-9,
                "stock_units": float(node_stock.get(node, 0.0)),
            }
        )
    out = pd.DataFrame(
        rows,
        columns=[
            "node",
            "type",
            "ttr_days",
            "tts_days",
            "tts_capped",
            "lost_units",
            "lost_value",
            "customers_short",
            "shortage_days",
            "tts_below_ttr",
            "stock_units",
        ],
    )
    top = out["lost_value"].max() if len(out) else 0.0
    out.insert(7, "rei", out["lost_value"] / top if top > EPS else 0.0)
    out = out.sort_values(["lost_value", "tts_days", "node"], ascending=[False, True, True], kind="stable")
    out.insert(0, "rank", np.arange(1, len(out) + 1))
    return out.reset_index(drop=True), model.stock_note
