"""Phasing over periods: one model of every period's network, linked by DC decisions and carried stock.

Each period k is built as an ordinary one-year model (``build_model`` of its own case, its names
ending in ``@k``); :func:`stack` gathers them in one Builder whose objective is the present value of
every period's annual costs plus the one-off opening and closing costs, and adds the rows that link
the periods.  ``netopt.data.periods`` derives each period's case and the weights.

Variables: the periods' own blocks (``open@k``, ``flow@k``, …); ``opened``/``closed`` per DC and period
(0–1, the DC opens / closes at the start of k); ``stock`` per site, product and period (units at the
end of k), only when the settings carry stock.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, MatrixRows, Term, group_index, lookup

ONE_OFF_COMPONENTS = ("dc_opening", "dc_closing")
"""Cost components charged once, when a DC opens or closes (weighted δ_k, not w_k)."""


def block(name: str, k: int) -> str:
    """Name of block ``name`` of period ``k`` in the stacked model."""
    return f"{name}@{k}"


def _renamed(t: Term, k: int, scale: float = 1.0) -> Term:
    return Term(block(t.block, k), t.idx, np.asarray(t.coef, float) * scale, t.row)


def copy_blocks(top: Builder, b: Builder, k: int, weight=None) -> None:
    """Copy builder ``b``'s variable blocks, row families and cost terms into ``top``, renamed ``name@k``;
    each cost component c weighted by ``weight(c)`` (None: the costs are not copied).  How one model of
    several copies of a network is gathered (the periods here, the scenarios of
    ``netopt.model.scenario_copies``)."""
    for name in b.vars:
        top.vars[block(name, k)] = b.vars[name]
        top.var_labels[block(name, k)] = b.var_labels[name]
        top.var_bounds[block(name, k)] = b.var_bounds[name]
    for name, frame in b.row_labels.items():
        top.row_labels[block(name, k)] = frame
        top.relaxable[block(name, k)] = b.relaxable[name]
    for name, mr in b.matrix_rows.items():
        terms = [_renamed(t, k) for t in mr.terms]
        top.matrix_rows[block(name, k)] = MatrixRows(mr.n, terms, mr.sense, mr.rhs.copy())
    top.empty_infeasible += [(block(n, k), r) for n, r in b.empty_infeasible]
    top.dc_big_m = b.dc_big_m
    if weight is None:
        return
    for comp, terms in b.cost.items():
        wc = float(weight(comp))
        for t in terms:
            top.add_cost(comp, _renamed(t, k, wc))
        top.cost_constant[comp] = top.cost_constant.get(comp, 0.0) + wc * b.cost_constant.get(comp, 0.0)


def renamed_terms(b: Builder, k: int) -> list[Term]:
    """Every cost term of builder ``b`` renamed to copy ``k``'s blocks (unweighted)."""
    return [_renamed(t, k) for terms in b.cost.values() for t in terms]


def stack(
    builders: list[Builder], periods: pd.DataFrame, settings: dict, dcs: pd.DataFrame, opening_stock: pd.DataFrame
) -> Builder:
    """One model of every period's builder (their blocks renamed ``name@k``) with the phasing rows.

    ``dcs``: the case's DC table (its one-off ``opening_cost`` and ``closing_cost``, which the periods'
    own cases leave at 0); ``opening_stock``: the case's stock on hand.

    Objective: the present value of every period's annual cost components (its own model's) and of
    the one-off opening and closing costs:

        min  Σ_k w_k Σ_c C_k[c]  +  C[dc_opening] + C[dc_closing] + C[stock_holding]

    DC decisions (z_{d,k} = Σ_{o ∈ O(d)} y_{o,k}; z_{d,−1} = 1 for an existing DC, 0 for a candidate):

        dc_stays_decided:     y_{o,k} ≥ y_{o,k−1} (candidate DC),  y_{o,k} ≤ y_{o,k−1} (existing DC)
                              ∀ option o, k ≥ 1, unless ``periods.dc_reopening`` (a DC keeps its size)
        dc_opened_at †:       u_{d,k} ≥ z_{d,k} − z_{d,k−1}      ∀ DC d, period k
        dc_closed_at †:       v_{d,k} ≥ z_{d,k−1} − z_{d,k}      ∀ DC d, period k
        openings_per_period:  Σ_d u_{d,k} ≤ N_k                  where N_k ≥ 0
        opening_budget:       Σ_d A_d u_{d,k} ≤ B_k              where B_k < ∞

        C[dc_opening] = Σ_k δ_k Σ_d A_d u_{d,k},    C[dc_closing] = Σ_k δ_k Σ_d K_d v_{d,k}

    Stock carried between periods (settings ``periods.carry_stock``), per site n (DC or plant), product p:
    each period's balance rows gain the change of stock spread over the period, and stock is held only
    at an open DC.  Stock is carried at (n, p) when every period has a balance row for it (n handles p
    in every period):

        dc_balance †:    Σ_in x − Σ_out x − (s_{n,p,k} − s_{n,p,k−1}) / n_k = 0
        plant_output †:  Σ_out x − w_{n,p} + (s_{n,p,k} − s_{n,p,k−1}) / n_k = 0
        dc_storage:      Σ_p s_{d,p,k} ≤ S_d z_{d,k}   (S_d = storage capacity, else the horizon's demand)

        s_{n,p,−1} = s⁰_{n,p} (opening stock), or s_{n,p,K−1} when the periods repeat as a year
        C[stock_holding] = Σ_k w_k Σ h_p s_{n,p,k}     (end-of-period stock, held over the period)

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | k, K | period, number of periods | | ``periods`` rows |
    | w_k, δ_k | weights of annual and one-off costs | years, ratio | ``annual_weight``, ``one_off_weight`` |
    | C_k[c] | cost component c of period k's model | currency/yr | the period builder's ``cost`` |
    | y_{o,k}, z_{d,k} | option o chosen in k; DC d open in k | binary | blocks ``open@k`` |
    | u_{d,k}, v_{d,k} | DC d opens / closes at the start of k | 0–1 | variable blocks ``opened``, ``closed`` |
    | A_d, K_d | one-off opening / closing cost | currency | ``dcs.opening_cost``, ``dcs.closing_cost`` |
    | N_k, B_k | most openings, most opening spend in k | DCs, currency | ``periods.max_openings``, ``opening_budget`` |
    | s_{n,p,k} | stock of p at site n at the end of k | units | variable block ``stock`` |
    | n_k | period length | years | ``periods.years`` |
    | S_d | stock a DC may hold | units | ``dcs.storage_capacity`` |
    | h_p | holding cost | currency/(unit·yr) | holding rate × ``products.unit_value`` |
    """
    top = Builder(net=builders[0].net, model=builders[0].model)
    w = periods["annual_weight"].to_numpy(float)
    delta = periods["one_off_weight"].to_numpy(float)
    for k, b in enumerate(builders):
        copy_blocks(top, b, k, lambda comp, k=k: delta[k] if comp in ONE_OFF_COMPONENTS else w[k])
    _phase_dcs(top, builders, periods, dcs, bool(settings["periods"]["dc_reopening"]))
    if bool(settings["periods"]["carry_stock"]):
        _carry_stock(top, builders, periods, bool(settings["periods"]["repeat_year"]), opening_stock)
    top.finish()
    return top


def _phase_dcs(
    top: Builder, builders: list[Builder], periods: pd.DataFrame, case_dcs: pd.DataFrame, reopening: bool
) -> None:
    o = builders[0].net.options
    for b in builders[1:]:
        if not b.net.options[["dc", "size"]].equals(o[["dc", "size"]]):
            raise ValueError("the periods' DC options differ: every period must have the same DCs and sizes")
    nk, no = len(builders), len(o)
    dcs, dc_of = group_index(o, ["dc"])
    first = case_dcs.drop_duplicates("dc").set_index("dc").loc[dcs["dc"]]
    existing = first["status"].eq("existing").to_numpy()
    opening = first["opening_cost"].to_numpy(float)
    closing = first["closing_cost"].to_numpy(float)
    nd = len(dcs)
    if not reopening and nk > 1:
        cand = ~existing[dc_of]
        labels = pd.concat([o[["dc", "size"]].assign(period=periods["period"].iloc[k]) for k in range(1, nk)])
        labels = labels.reset_index(drop=True)
        rows = np.arange(len(labels)).reshape(nk - 1, no)
        direction = np.where(cand, 1.0, -1.0)  # candidate: y_k − y_{k−1} ≥ 0; existing: y_{k−1} − y_k ≥ 0
        terms = []
        for k in range(1, nk):
            terms.append(Term(block("open", k), np.arange(no), direction, rows[k - 1]))
            terms.append(Term(block("open", k - 1), np.arange(no), -direction, rows[k - 1]))
        top.add_rows("dc_stays_decided", labels, terms, ">=", 0.0)

    labels = pd.concat([dcs.assign(period=periods["period"].iloc[k]) for k in range(nk)]).reset_index(drop=True)
    top.add_vars("opened", labels, ub=1.0)
    top.add_vars("closed", labels, ub=1.0)
    rows = np.arange(nk * nd).reshape(nk, nd)
    for name, sign in (("opened", 1.0), ("closed", -1.0)):
        # u_{d,k} − z_{d,k} + z_{d,k−1} ≥ 0  (v: + z_{d,k} − z_{d,k−1});  z_{d,−1} is a constant
        terms = [Term(name, rows.ravel(), np.ones(nk * nd), rows.ravel())]
        for k in range(nk):
            terms.append(Term(block("open", k), np.arange(no), np.full(no, -sign), rows[k][dc_of]))
            if k > 0:
                terms.append(Term(block("open", k - 1), np.arange(no), np.full(no, sign), rows[k][dc_of]))
        rhs = np.zeros(nk * nd)
        rhs[rows[0]] = -sign * existing.astype(float)  # z_{d,−1} moved to the right-hand side
        top.add_rows(f"dc_{name}_at", labels, terms, ">=", rhs, elastic=False)
    top.add_cost("dc_opening", Term("opened", rows.ravel(), np.outer(periods["one_off_weight"], opening).ravel()))
    top.add_cost("dc_closing", Term("closed", rows.ravel(), np.outer(periods["one_off_weight"], closing).ravel()))

    most = periods["max_openings"].to_numpy(int)
    limited = np.flatnonzero(most >= 0)
    if len(limited):
        idx = rows[limited].ravel()
        top.add_rows(
            "openings_per_period",
            periods.iloc[limited][["period"]],
            [Term("opened", idx, np.ones(len(idx)), np.repeat(np.arange(len(limited)), nd))],
            "<=",
            most[limited].astype(float),
        )
    budget = periods["opening_budget"].to_numpy(float)
    limited = np.flatnonzero(np.isfinite(budget))
    if len(limited):
        idx = rows[limited].ravel()
        top.add_rows(
            "opening_budget",
            periods.iloc[limited][["period"]],
            [Term("opened", idx, np.tile(opening, len(limited)), np.repeat(np.arange(len(limited)), nd))],
            "<=",
            budget[limited],
        )


def _stock_sites(builders: list[Builder]) -> pd.DataFrame:
    """Every (site, product) with a balance row in every period: DCs from ``dc_balance``, plants from ``make``."""
    common = None
    for b in builders:
        parts = [b.net.make[["plant", "product"]].rename(columns={"plant": "site"}).assign(site_kind="plant")]
        if "dc_balance" in b.row_labels:
            parts.append(b.row_labels["dc_balance"].rename(columns={"dc": "site"}).assign(site_kind="dc"))
        here = pd.concat(parts).drop_duplicates(["site", "product"])
        common = here if common is None else common.merge(here, on=["site", "product", "site_kind"])
    assert common is not None
    return common.sort_values(["site_kind", "site", "product"]).reset_index(drop=True)[["site", "site_kind", "product"]]


def _carry_stock(
    top: Builder, builders: list[Builder], periods: pd.DataFrame, repeat: bool, opening_stock: pd.DataFrame
) -> None:
    net = builders[0].net
    sites = _stock_sites(builders)
    nk, ns = len(builders), len(sites)
    years = periods["years"].to_numpy(float)
    labels = pd.concat([sites.assign(period=periods["period"].iloc[k]) for k in range(nk)]).reset_index(drop=True)
    ub = np.full(nk * ns, np.inf)
    is_plant = sites["site_kind"].eq("plant").to_numpy()
    plants = net.make.set_index(["plant", "product"])
    if "storage_capacity" in plants:
        cap = plants["storage_capacity"].reindex(pd.MultiIndex.from_frame(sites[["site", "product"]])).to_numpy(float)
        ub = np.tile(np.where(is_plant & ~np.isnan(cap), cap, np.inf), nk)
    top.add_vars("stock", labels, ub=ub)
    at = np.arange(nk * ns).reshape(nk, ns)
    s0 = np.zeros(ns)
    if not repeat and len(opening_stock):
        s0 = (
            opening_stock.set_index(["site", "product"])["quantity"]
            .reindex(pd.MultiIndex.from_frame(sites[["site", "product"]]))
            .fillna(0.0)
            .to_numpy(float)
        )
    for k, b in enumerate(builders):
        prev = at[k - 1] if k > 0 else (at[nk - 1] if repeat else None)
        for family, frame_cols, kind, sign in (
            ("dc_balance", ["dc", "product"], "dc", -1.0),
            ("plant_output", ["plant", "product"], "plant", 1.0),
        ):
            mr = top.matrix_rows.get(block(family, k))
            if mr is None:
                continue
            mine = np.flatnonzero(sites["site_kind"].eq(kind).to_numpy())
            row = lookup(b.row_labels[family], sites.iloc[mine], frame_cols, ["site", "product"])
            ok = row >= 0
            idx, r = mine[ok], row[ok]
            mr.terms.append(Term("stock", at[k][idx], np.full(len(idx), sign / years[k]), r))
            if prev is not None:
                mr.terms.append(Term("stock", prev[idx], np.full(len(idx), -sign / years[k]), r))
            else:
                mr.rhs[r] += sign * s0[idx] / years[k]  # the opening stock, a constant, moved right

    # Stock only at an open DC, within its storage capacity.
    dc_rows = np.flatnonzero(~is_plant)
    if len(dc_rows):
        dcs, d_of = group_index(sites.iloc[dc_rows], ["site"])
        store = net.dcs.set_index("dc")["storage_capacity"] if "storage_capacity" in net.dcs else None
        horizon_units = float(sum(b.net.total_demand * years[k] for k, b in enumerate(builders)))
        size = np.full(len(dcs), horizon_units)
        if store is not None:
            given = store.reindex(dcs["site"]).to_numpy(float)
            size = np.where(np.isfinite(given), given, horizon_units)
        o = net.options
        opt_dc = lookup(dcs, o.rename(columns={"dc": "site"}), ["site"])
        okk = opt_dc >= 0
        labels_s = pd.concat([dcs.assign(period=periods["period"].iloc[k]) for k in range(nk)]).reset_index(drop=True)
        rows = np.arange(nk * len(dcs)).reshape(nk, len(dcs))
        terms = []
        for k in range(nk):
            terms.append(Term("stock", at[k][dc_rows], np.ones(len(dc_rows)), rows[k][d_of]))
            terms.append(Term(block("open", k), np.flatnonzero(okk), -size[opt_dc[okk]], rows[k][opt_dc[okk]]))
        top.add_rows("dc_storage", labels_s, terms, "<=", 0.0)

    h = holding_cost_per_unit(builders[0], sites)
    w = periods["annual_weight"].to_numpy(float)
    top.add_cost("stock_holding", Term("stock", at.ravel(), np.concatenate([w[k] * h for k in range(nk)])))


def holding_cost_per_unit(b: Builder, stock_labels: pd.DataFrame) -> np.ndarray:
    """h_p of each stock row (currency per unit and year): holding rate × unit value of its product."""
    info = b.net.products.set_index("product")
    product = stock_labels["product"]
    return (product.map(info["holding_rate"]) * product.map(info["unit_value"])).to_numpy(float)
