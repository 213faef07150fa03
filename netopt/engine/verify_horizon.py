"""Independent verification of a plan over periods, from its result tables and the case's input tables.

Each period is verified as a case of its own by ``netopt.engine.verify`` (in the one post-solve path);
this module checks what links the periods — the DC phasing rules, the carried stock and the present
value of the whole horizon — and folds every period's checks into one :class:`Verification`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.verify import REL_TOL, Verification, _Checks


def verify_horizon(
    case: Case, tables: dict[str, pd.DataFrame], per: pd.DataFrame, periods: list[Verification], objective: float
) -> Verification:
    """Checks of the phasing, the stock chain and the horizon's cost, folded with every period's own
    verification (``periods``, whose recomputed annual cost enters the present value)."""
    ck = _Checks()
    names = per["period"].astype(str).tolist()
    order = {p: i for i, p in enumerate(names)}
    dcs = case.tables["dcs"].set_index("dc")
    ph = tables["phasing"].assign(k=lambda d: d["period"].map(order)).sort_values(["dc", "k"])
    is_open = ph["open"].astype(bool).to_numpy()
    prev = ph.groupby("dc")["open"].shift(1)
    existing = ph["dc"].map(dcs["status"]).eq("existing").to_numpy()
    before = prev.where(prev.notna(), pd.Series(existing, index=ph.index)).astype(bool).to_numpy()
    where = (ph["dc"] + " in " + ph["period"]).to_numpy()
    if not bool(case.settings["periods"]["dc_reopening"]):
        ck.le("a candidate DC once open stays open", (before & ~is_open & ~existing).astype(float), 0.0, where=where)
        ck.le("an existing DC once closed stays closed", (~before & is_open & existing).astype(float), 0.0, where=where)
        size_changed = ph.groupby("dc")["size"].shift(1).fillna(ph["size"]).ne(ph["size"]) & before & is_open
        ck.le("an open DC keeps its size", size_changed.astype(float).to_numpy(), 0.0, where=where)
    earliest = ph["dc"].map(dcs["earliest_period"]).map(order)
    early = is_open & earliest.notna().to_numpy() & (ph["k"].to_numpy() < earliest.fillna(0).to_numpy())
    ck.le("no DC open before its earliest period", early.astype(float), 0.0, where=where)
    opens = ph[is_open & ~before]
    count = opens.groupby("period").size().reindex(names).fillna(0).to_numpy(float)
    most = per["max_openings"].to_numpy(float)
    ck.le("openings per period", count, np.where(most >= 0, most, np.inf), where=names)
    spend = opens["dc"].map(dcs["opening_cost"]).groupby(opens["period"]).sum().reindex(names).fillna(0.0)
    ck.le("opening budget per period", spend.to_numpy(float), per["opening_budget"].to_numpy(float), where=names)

    stock = tables.get("stock")
    if stock is not None and len(stock):
        _check_stock(case, stock, names, tables["phasing"], ck)

    w = per["annual_weight"].to_numpy(float)
    delta = per["one_off_weight"].to_numpy(float)
    pv: dict[str, float] = {}
    for k, v in enumerate(periods):
        for c, x in v.recomputed_cost.items():
            if c not in ("dc_opening", "dc_closing"):
                pv[c] = pv.get(c, 0.0) + w[k] * x
    for c, col, mask in (
        ("dc_opening", "opening_cost", is_open & ~before),
        ("dc_closing", "closing_cost", ~is_open & before),
    ):
        spent = ph.loc[mask, "dc"].map(dcs[col]).groupby(ph.loc[mask, "k"]).sum()
        pv[c] = float(sum(delta[int(k)] * x for k, x in spent.items()))
    total = float(sum(pv.values()))
    checks = ck.frame()
    diff = abs(total - objective) / max(1.0, abs(objective))
    checks.loc[len(checks)] = ["recomputed present value = solver objective", abs(total - objective), diff, ""]
    parts = [v.checks.assign(rule=lambda d, p=p: f"{p}: " + d["rule"]) for p, v in zip(names, periods)]
    everything = pd.concat([*parts, checks], ignore_index=True)
    worst = everything.loc[everything["relative_violation"].idxmax()]
    return Verification(
        passed=bool((everything["relative_violation"] <= REL_TOL).all()),
        largest_violation=float(worst["relative_violation"]),
        largest_violation_rule=str(worst["rule"]),
        recomputed_cost=pv,
        recomputed_objective=total,
        solver_objective=float(objective),
        objective_rel_diff=diff,
        checks=everything,
    )


def _check_stock(case: Case, stock: pd.DataFrame, names: list[str], phasing: pd.DataFrame, ck: _Checks) -> None:
    order = {p: i for i, p in enumerate(names)}
    st = stock.assign(k=stock["period"].map(order)).sort_values(["site", "product", "k"])
    where = (st["site"] + "/" + st["product"] + " in " + st["period"]).to_numpy()
    ck.le("stock non-negative (units)", -st["closing"].to_numpy(float), np.zeros(len(st)), where=where)
    prev = st.groupby(["site", "product"])["closing"].shift(1)
    first = prev.isna().to_numpy()
    if bool(case.settings["periods"]["repeat_year"]):
        last = st.groupby(["site", "product"])["closing"].transform("last")
        expected = np.where(first, last.to_numpy(float), prev.to_numpy(float))
    else:
        on_hand = case.tables["opening_stock"]
        s0 = (
            on_hand.set_index(["site", "product"])["quantity"].reindex(
                pd.MultiIndex.from_frame(st[["site", "product"]])
            )
            if len(on_hand)
            else pd.Series(0.0, index=st.index)
        )
        expected = np.where(first, np.nan_to_num(np.asarray(s0, float)), prev.to_numpy(float))
    ck.eq("stock carried: opening = previous closing (units)", st["opening"].to_numpy(float), expected, where=where)
    dc = st[st["site_kind"] == "dc"]
    held = dc.groupby(["site", "period"])["closing"].sum()
    open_ = phasing.set_index(["dc", "period"])["open"].astype(bool).reindex(held.index).fillna(False).to_numpy()
    cap = held.index.get_level_values(0).map(case.tables["dcs"].set_index("dc")["storage_capacity"]).to_numpy(float)
    ck.le(
        "DC storage capacity, stock only at an open DC (units)",
        held.to_numpy(float),
        np.where(open_, cap, 0.0),
        where=[f"{d} in {p}" for d, p in held.index],
    )
    plant = st[st["site_kind"] == "plant"]
    if len(plant):
        pcap = (
            case.tables["plants"]
            .set_index(["plant", "product"])["storage_capacity"]
            .reindex(pd.MultiIndex.from_frame(plant[["site", "product"]]))
        )
        ck.le("plant storage capacity (units)", plant["closing"].to_numpy(float), pcap.to_numpy(float))
