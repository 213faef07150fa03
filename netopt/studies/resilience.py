"""Resilience: single-point-of-failure sweep and time-to-survive exposure, locally or on a Dask cluster.

**Sweep.** Each supplier, plant, open DC and used lane (origin, destination, mode) of the
solved base is taken out on its own — the scenario changes ``site_out`` and
``close_lane`` — and the network is re-solved holding the base's DC decisions (and,
optionally, redesigned).  Per element (money in currency/yr of outage, units/yr):

- *recovery cost*: the change in landed cost.  The element's own DC fixed cost counts
  as still paid and no closing cost arises (it is out, not closed).  Negative when
  demand is lost: lost units no longer incur their landed cost;
- *lost units / lost value*: demand no longer served and its penalty value
  (``policy.unmet_penalty_per_unit``, 0 = 2 × unit value);
- *rules bent* (``rules="priced"``, the default): in a disruption, service windows,
  supplier and region share limits and the CO2 cap may be exceeded, each unit priced at
  its rule's shadow price in the base (plus a tie-breaking 1e-4).  By LP duality the base
  stays optimal, so nothing is bent without a disruption, and late delivery or a larger
  share from one supplier is chosen only where it costs less than losing demand.
  ``rules="hard"`` keeps every rule, exactly as a scenario's hold-the-network re-solve;
- *impact* = recovery cost + lost value + rule relief cost (the ranking key; ≥ 0 up to
  the tie-breaker with priced rules);
- *customers affected*: customers short of demand or served in other volumes from a site;
- *took over*: the elements of the same kind (suppliers, plants, DCs or plants serving
  customers directly, lanes of the same leg) whose volume rose most.

Holding the network keeps the base's safety-stock positions: the worker model is the
held network without the safety-stock cost curve (its cost stays at the base's value),
so each re-solve is a linear program with one element's bounds changed.  Each worker
process (or Dask worker thread) builds that model once and re-solves every element warm
from the base basis.

**Execution.** A local process pool (all cores by default, forkserver start so no worker
is forked from a process holding solver threads; a progress bar with done/total and
ETA) or, given a scheduler address, the same task function on a Dask distributed
cluster.  Every finished re-solve is appended (flushed and fsynced) to a journal in the
output folder; a restarted sweep skips the elements already in it.  The final tables do
not depend on where or in which order tasks ran: every re-solve starts from the base basis.

**Exposure.** Time-to-survive and time-to-recover per node: :mod:`netopt.exposure`.
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import multiprocessing as mp
import os
import shutil
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import highspy
import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.io import load_case
from netopt.engine.solve import solve
from netopt.present.files import DISCLAIMER, _jsonable, atomic_folder, write_result_files, write_workbook
from netopt.studies.exposure import exposure
from netopt.studies.scenarios import HeldNetwork, Scenario, _solve_or_lose, apply_changes

ELEMENT_TYPES = ("supplier", "plant", "dc", "lane")
JOURNAL = "sweep_journal.jsonl"
JOURNAL_FORMAT = "netopt stress sweep journal v1"
TOL = 1e-6  # units/yr: smaller changes count as none
RULES = ("priced", "hard")
POLICY_ROWS = ("service_window", "max_supplier_share", "max_region_share", "co2_cap")
"""Rule families that a disruption may bend in ``rules="priced"`` mode (at the base's shadow price)."""
RELIEF_EPS = 1e-4  # currency per unit added to each shadow price, so the undisrupted base stays the unique choice

SPOF_COLUMNS = [
    "rank",
    "element",
    "type",
    "base_units",
    "recovery_cost",
    "lost_units",
    "lost_value",
    "impact",
    "customers_affected",
    "customers_short",
    "took_over",
    "took_over_units",
    "rules_bent",
    "rule_relief_units",
    "rule_relief_cost",
    "total_cost",
    "delta_objective",
    "status",
    "id",
]
REDESIGN_COLUMNS = [
    "redesign_status",
    "redesign_total_cost",
    "redesign_recovery_cost",
    "redesign_lost_units",
    "redesign_lost_value",
    "redesign_dc_changes",
]


class StressError(Exception):
    """The base case has no solution to stress (``status``: infeasible, time_limit, error, …)."""

    def __init__(self, message: str, status: str):
        super().__init__(message)
        self.status = status


# ---------------------------------------------------------------------------------- elements


def _lane_label(o: str, d: str, m: str) -> str:
    return f"{o} → {d} ({m})"


def sweep_elements(case: Case, base, only: list[str] | None = None) -> pd.DataFrame:
    """The elements to take out, one row each: id, type, element, origin, destination, mode,
    base_units (units/yr through it in the base), own_fixed_cost, own_closing_cost (currency).

    Every supplier and plant of the case, each DC open in the base, each lane and mode with
    flow in the base.  ``only``: element types (supplier, plant, dc, lane; plurals accepted),
    element ids (``dc:DC_X``, ``lane:O>D>mode``) or site codes; unknown names raise CaseError.
    """
    t = case.tables
    f = base.tables["flows"]
    rows = []
    out_by_site = f.groupby("origin")["quantity"].sum()
    for s in t["suppliers"]["supplier"].astype(str).unique():
        rows.append(
            {
                "id": f"supplier:{s}",
                "type": "supplier",
                "element": s,
                "origin": s,
                "base_units": float(out_by_site.get(s, 0.0)),
            }
        )
    made = base.tables["production"].groupby("plant")["quantity"].sum()
    for p in t["plants"]["plant"].astype(str).unique():
        rows.append(
            {"id": f"plant:{p}", "type": "plant", "element": p, "origin": p, "base_units": float(made.get(p, 0.0))}
        )
    d = base.tables["dcs"]
    dct = t["dcs"].set_index("dc")
    for r in d[d["open"]].itertuples():
        existing = str(dct.loc[r.dc, "status"]) == "existing"
        rows.append(
            {
                "id": f"dc:{r.dc}",
                "type": "dc",
                "element": r.dc,
                "origin": r.dc,
                "base_units": float(r.throughput),
                "own_fixed_cost": float(r.fixed_cost),
                "own_closing_cost": float(dct.loc[r.dc, "closing_cost"]) if existing else 0.0,
            }
        )
    lanes = f.groupby(["origin", "destination", "mode"], as_index=False)["quantity"].sum()
    for r in lanes[lanes["quantity"] > TOL].itertuples():
        rows.append(
            {
                "id": f"lane:{r.origin}>{r.destination}>{r.mode}",
                "type": "lane",
                "element": _lane_label(r.origin, r.destination, r.mode),
                "origin": r.origin,
                "destination": r.destination,
                "mode": r.mode,
                "base_units": float(r.quantity),
            }
        )
    el = pd.DataFrame(
        rows,
        columns=[
            "id",
            "type",
            "element",
            "origin",
            "destination",
            "mode",
            "base_units",
            "own_fixed_cost",
            "own_closing_cost",
        ],
    )
    el[["destination", "mode"]] = el[["destination", "mode"]].fillna("")
    el[["own_fixed_cost", "own_closing_cost"]] = el[["own_fixed_cost", "own_closing_cost"]].fillna(0.0)
    if only:
        keep = pd.Series(False, index=el.index)
        bad = []
        for name in only:
            n = str(name).strip()
            typ = n[:-1] if n.endswith("s") and n[:-1] in ELEMENT_TYPES else n
            m = (el["type"] == typ) | (el["id"] == n) | ((el["type"] != "lane") & (el["element"] == n))
            if not m.any():
                bad.append(n)
            keep |= m
        if bad:
            raise CaseError(
                [
                    Problem(
                        "--only",
                        None,
                        None,
                        f"'{b}' is neither an element type ({', '.join(ELEMENT_TYPES)}) nor an element "
                        "of the solved base (a supplier, plant, open DC or used lane)",
                    )
                    for b in bad
                ]
            )
        el = el[keep]
    return el.reset_index(drop=True)


def element_changes(el: dict) -> list[dict]:
    """The scenario changes that take element ``el`` out (``site_out`` or ``close_lane``)."""
    if el["type"] == "lane":
        return [{"kind": "close_lane", "origin": el["origin"], "destination": el["destination"], "mode": el["mode"]}]
    return [{"kind": "site_out", "site": el["origin"]}]


# ---------------------------------------------------------------------------------- spec and worker state


def case_fingerprint(case: Case) -> str:
    """SHA-256 of a case's tables and settings (stable across processes and runs)."""
    h = hashlib.sha256()
    for name in sorted(case.tables):
        df = case.tables[name]
        h.update(name.encode())
        h.update(df.to_csv(index=True).encode())
    h.update(json.dumps(case.settings, sort_keys=True, default=str).encode())
    return h.hexdigest()


@dataclass
class SweepSpec:
    """What every worker needs: the case, the held DC decisions, the lanes and the base costs."""

    key: str
    case: Case
    held: dict
    lanes: pd.DataFrame
    base_cost: dict[str, float] = field(default_factory=dict)
    base_lost_units: float = 0.0
    base_dcs_open: tuple[str, ...] = ()
    redesign: bool = False
    rules: str = "priced"


def make_spec(case: Case, base, redesign: bool = False, rules: str = "priced") -> SweepSpec:
    """The sweep spec of a solved base; ``key`` identifies case, held network and options."""
    if rules not in RULES:
        raise ValueError(f"rules must be one of {', '.join(RULES)}, not {rules!r}")
    held = {k: v for k, v in base.held_openings().items()}
    key = hashlib.sha256(
        json.dumps(
            {
                "case": case_fingerprint(case),
                "held": held,
                "redesign": bool(redesign),
                "rules": rules,
                "journal": JOURNAL_FORMAT,
            },
            sort_keys=True,
            default=str,
        ).encode()
    ).hexdigest()
    d = base.tables["dcs"]
    un = base.tables["unmet"]
    return SweepSpec(
        key=key,
        case=case,
        held=held,
        lanes=base.lanes,
        base_cost=dict(base.cost),
        base_lost_units=float(un["lost_units"].sum()) if len(un) else 0.0,
        base_dcs_open=tuple(d.loc[d["open"], "dc"]),
        redesign=bool(redesign),
        rules=rules,
    )


@dataclass
class Groups:
    """Integer group codes of the held model's arcs, precomputed once per worker (for fast summaries)."""

    names: dict[str, np.ndarray]  # kind → label of each group
    codes: dict[str, np.ndarray]  # kind → group of each arc (−1 = not in any), or of each make row for "plant"
    lane_leg: np.ndarray  # leg of each lane group
    out_arcs: dict[str, np.ndarray]  # site → arcs leaving it
    lane_arcs: dict[tuple, np.ndarray]  # (origin, destination, mode) → arcs
    make_rows: dict[str, np.ndarray]  # plant → make rows
    option_rows: dict[str, np.ndarray]  # dc → opening options
    route_customer: np.ndarray  # customer code of each (origin, customer, product) route group
    customers: np.ndarray  # customer names
    demand_customer: np.ndarray  # customer code of each demand row


def _codes(labels) -> tuple[np.ndarray, np.ndarray]:
    codes, uniq = pd.factorize(pd.Series(labels, dtype=object), sort=True)
    return codes.astype(np.int64), np.asarray(uniq, dtype=object)


def _groups(held) -> Groups:
    net = held.net
    a = net.arcs
    n = len(a)
    o = a["origin"].astype(str).to_numpy()
    d = a["destination"].astype(str).to_numpy()
    md = a["mode"].astype(str).to_numpy()
    ok = a["origin_kind"].to_numpy()
    last = a["destination_kind"].eq("customer").to_numpy()
    names, codes = {}, {}
    sup = ok == "supplier"
    c = -np.ones(n, np.int64)
    c[sup], names["supplier"] = _codes(o[sup])
    codes["supplier"] = c
    codes["plant"], names["plant"] = _codes(net.make["plant"].astype(str).to_numpy())
    c = -np.ones(n, np.int64)
    lab = np.where(ok[last] == "plant", np.char.add(o[last].astype(str), " (direct)"), o[last])
    c[last], names["dc"] = _codes(lab)
    codes["dc"] = c
    lane_lab = np.array([_lane_label(x, y, z) for x, y, z in zip(o, d, md)], dtype=object)
    codes["lane"], names["lane"] = _codes(lane_lab)
    leg = a["leg"].astype(str).to_numpy()
    lane_leg = np.empty(len(names["lane"]), dtype=object)
    lane_leg[codes["lane"]] = leg
    c = -np.ones(n, np.int64)
    route = np.array(
        [f"{x}\x1f{y}\x1f{z}" for x, y, z in zip(o[last], d[last], a["product"].astype(str).to_numpy()[last])],
        dtype=object,
    )
    c[last], route_names = _codes(route)
    codes["route"] = c
    cust_all, customers = _codes(
        np.concatenate(
            [
                net.demand["customer"].astype(str).to_numpy(),
                np.array([r.split("\x1f")[1] for r in route_names], dtype=object),
            ]
        )
    )
    nd = len(net.demand)
    idx = np.arange(n)
    out_arcs = {k: v.to_numpy() for k, v in pd.Series(idx).groupby(o).groups.items()} if n else {}
    out_arcs = {k: np.asarray(v, np.int64) for k, v in out_arcs.items()}
    lane_arcs = {k: np.asarray(v, np.int64) for k, v in pd.Series(idx).groupby([o, d, md]).groups.items()} if n else {}
    mk = net.make["plant"].astype(str).to_numpy()
    make_rows = {k: np.flatnonzero(mk == k) for k in np.unique(mk)}
    opt = net.options["dc"].astype(str).to_numpy()
    option_rows = {k: np.flatnonzero(opt == k) for k in np.unique(opt)}
    return Groups(
        names=names,
        codes=codes,
        lane_leg=lane_leg,
        out_arcs=out_arcs,
        lane_arcs=lane_arcs,
        make_rows=make_rows,
        option_rows=option_rows,
        route_customer=cust_all[nd:],
        customers=customers,
        demand_customer=cust_all[:nd],
    )


@dataclass
class Relief:
    """Extra columns that let policy rows be bent in a disruption, each priced at its row's base shadow price."""

    cols: np.ndarray  # HiGHS column of each relief variable
    family: np.ndarray  # rule family of each (service_window, max_supplier_share, …)
    label: np.ndarray  # where: the row's first label (customer, site, …)
    price: np.ndarray  # currency per unit of relief


def add_relief(held) -> Relief:
    """Add one priced relief column per policy row of the held LP (see :data:`POLICY_ROWS`).

    Each column enters its row in the direction that loosens it and costs the row's shadow
    price in the base solution plus :data:`RELIEF_EPS`.  By LP duality the base stays
    optimal (no rule is bent without a disruption), and a disruption may deliver late or
    buy beyond a share limit when that costs less than losing the demand.
    """
    h = held.hm.highs
    dual = np.asarray(h.getSolution().row_dual, float)
    lp = h.getLp()
    row_lo = np.asarray(lp.row_lower_, float)
    cols, fam, lab, price, rows_all, sign_all = [], [], [], [], [], []
    n0 = int(lp.num_col_)
    for name in POLICY_ROWS:
        if name not in held.builder.row_labels:
            continue
        rows = held.rows_of(name)
        labels = held.builder.row_labels[name]
        ok = np.flatnonzero(rows >= 0)
        for k in ok:
            r = int(rows[k])
            rows_all.append(r)
            sign_all.append(1.0 if row_lo[r] > -highspy.kHighsInf else -1.0)  # ≥ rows gain, ≤ rows lose
            fam.append(name)
            lab.append(str(labels.iloc[k, 0]))
            price.append(abs(float(dual[r])) + RELIEF_EPS)
    n = len(rows_all)
    if n:
        h.addCols(
            n,
            np.array(price),
            np.zeros(n),
            np.full(n, highspy.kHighsInf),
            n,
            np.arange(n, dtype=np.int32),
            np.array(rows_all, dtype=np.int32),
            np.array(sign_all),
        )
    return Relief(
        cols=np.arange(n0, n0 + n),
        family=np.array(fam, dtype=object),
        label=np.array(lab, dtype=object),
        price=np.array(price),
    )


@dataclass
class WorkerState:
    """One worker's kept model: the held network (safety stock at base levels) and base arrays."""

    spec: SweepSpec
    held: object
    basis: object
    base_values: dict
    base_cost: dict
    base_total: float
    build_seconds: float
    groups: Groups | None = None
    relief: Relief | None = None


_LOCAL = threading.local()  # per worker thread (Dask threads) or process (pool): {key: WorkerState}


def held_case(case: Case) -> Case:
    """The case as the sweep's held model sees it: safety stock kept at the base's levels (no cost curve)."""
    settings = copy.deepcopy(case.settings)
    settings["inventory"]["safety_stock"] = False
    return Case(case.name, case.tables, settings, case.path)


def worker_state(spec: SweepSpec) -> WorkerState:
    """This thread's kept model for ``spec`` (built on first use, then reused)."""
    cache = getattr(_LOCAL, "states", None)
    if cache is None:
        cache = _LOCAL.states = {}
    st = cache.get(spec.key)
    if st is None:
        cache.clear()  # one case at a time per worker
        t0 = time.perf_counter()
        held = HeldNetwork(held_case(spec.case), held=spec.held, lanes=spec.lanes)
        if not held.base_info.has_solution:
            raise RuntimeError(f"the held base network has no solution ({held.base_info.status})")
        hm = held.hm
        relief = None
        if spec.rules == "priced" and held.is_lp:
            relief = add_relief(held)
            if len(relief.cols):
                info = hm.solve()
                if info.status != "optimal" or abs(info.objective - held.base_info.objective) > 1e-6 * max(
                    1.0, abs(held.base_info.objective)
                ):
                    raise RuntimeError(
                        f"priced rule relief changed the held base ({info.status}, "
                        f"{info.objective} vs {held.base_info.objective})"
                    )
        vals = hm.values()
        cost = held.builder.component_values(vals)
        st = WorkerState(
            spec=spec,
            held=held,
            basis=hm.highs.getBasis(),
            base_values=vals,
            base_cost=cost,
            base_total=float(sum(cost.values())),
            build_seconds=time.perf_counter() - t0,
            groups=_groups(held),
            relief=relief,
        )
        cache[spec.key] = st
    return st


def _element_bounds(st: WorkerState, el: dict) -> np.ndarray:
    """HiGHS columns fixed at 0 to take ``el`` out of the held model (the scenario changes' meaning).

    ``site_out``: flows leaving the site, its production and its DC opening.
    ``close_lane``: flows on the lane and mode (every product).
    """
    g = st.groups
    col = st.held.hm.col_of
    parts = []
    if el["type"] == "lane":
        parts.append(col["flow"][g.lane_arcs.get((el["origin"], el["destination"], el["mode"]), np.zeros(0, int))])
    else:
        site = el["origin"]
        parts.append(col["flow"][g.out_arcs.get(site, np.zeros(0, int))])
        if "make" in col:
            parts.append(col["make"][g.make_rows.get(site, np.zeros(0, int))])
        if "open" in col:
            parts.append(col["open"][g.option_rows.get(site, np.zeros(0, int))])
    c = np.concatenate(parts) if parts else np.zeros(0, np.int64)
    return np.unique(c[c >= 0]).astype(np.int32)


# ---------------------------------------------------------------------------------- one task


def _activity(st: WorkerState, kind: str, values: dict) -> np.ndarray:
    """Volume (units/yr) of each group of ``kind`` (supplier, plant, dc, lane) in a solution."""
    g = st.groups
    x = values["make"] if kind == "plant" else values["flow"]
    c = g.codes[kind]
    m = c >= 0
    return np.bincount(c[m], weights=x[m], minlength=len(g.names[kind]))


def _took_over(st: WorkerState, el: dict, values: dict) -> tuple[str, float]:
    """The comparable elements whose volume rose most (text, top 3) and the total rise (units/yr)."""
    g = st.groups
    kind = el["type"]
    diff = _activity(st, kind, values) - _activity(st, kind, st.base_values)
    names = g.names[kind]
    keep = names != el["element"]
    if kind == "lane":
        own = np.flatnonzero(names == el["element"])
        keep &= g.lane_leg == (g.lane_leg[own[0]] if len(own) else None)
    keep &= diff > TOL
    idx = np.flatnonzero(keep)
    idx = idx[np.lexsort((names[idx].astype(str), -diff[idx]))]  # largest first, ties by name
    text = "; ".join(f"{names[i]} +{diff[i]:,.0f}" for i in idx[:3])
    return text, float(diff[idx].sum())


def _customers(st: WorkerState, values: dict) -> tuple[set, set]:
    """(customers short of demand vs the base, customers served from a different origin)."""
    g = st.groups
    nd = len(g.demand_customer)
    un_new = values.get("unmet", np.zeros(nd))
    un_old = st.base_values.get("unmet", np.zeros(nd))
    short = set(g.demand_customer[(un_new - un_old) > TOL].tolist())
    c = g.codes["route"]
    m = c >= 0
    d = np.bincount(c[m], weights=values["flow"][m] - st.base_values["flow"][m], minlength=len(g.route_customer))
    rerouted = set(g.route_customer[np.abs(d) > TOL].tolist())  # (origin, customer, product) volume changed
    return short, rerouted


def hold_resolve(st: WorkerState, el: dict) -> dict:
    """Re-solve the held model with ``el`` out, warm from the base basis; one result row."""
    held = st.held
    hm = held.hm
    h = hm.highs
    ci = _element_bounds(st, el)
    lo0, hi0 = held.col_lo[ci], held.col_hi[ci]
    t0 = time.perf_counter()
    if len(ci):
        h.changeColsBounds(len(ci), ci, np.zeros(len(ci)), np.zeros(len(ci)))
    try:
        h.setBasis(st.basis)
        info = hm.solve()
        values = hm.values() if info.has_solution else None
        bent = (
            np.asarray(h.getSolution().col_value, float)[st.relief.cols]
            if values is not None and st.relief is not None and len(st.relief.cols)
            else np.zeros(0)
        )
    finally:
        if len(ci):
            h.changeColsBounds(len(ci), ci, lo0, hi0)
    row = {"status": info.status, "seconds": time.perf_counter() - t0}
    if values is None:
        return row
    cost = held.builder.component_values(values)
    total = float(sum(cost.values()))
    pen_new, pen_old = cost.get("unmet_penalty", 0.0), st.base_cost.get("unmet_penalty", 0.0)
    dem = held.net.demand
    un = values.get("unmet", np.zeros(len(dem)))
    un0 = st.base_values.get("unmet", np.zeros(len(dem)))
    delta = total - st.base_total
    recovery = delta - (pen_new - pen_old) + el.get("own_fixed_cost", 0.0) - el.get("own_closing_cost", 0.0)
    short, rerouted = _customers(st, values)
    took, took_units = _took_over(st, el, values)
    # Safety stock is held at the base's level: its cost is the base's in both totals.
    ss = float(st.spec.base_cost.get("safety_stock", 0.0))
    row.update(
        {
            "total_cost": total + ss,
            "delta_objective": delta,
            "recovery_cost": recovery,
            "lost_units": float(un.sum() - un0.sum()),
            "lost_value": float(pen_new - pen_old),
            "customers_affected": len(short | rerouted),
            "customers_short": len(short),
            "took_over": took,
            "took_over_units": took_units,
            "rules_bent": _rules_bent(st.relief, bent),
            "rule_relief_units": float(bent.sum()),
            "rule_relief_cost": float(bent @ st.relief.price) if len(bent) else 0.0,
        }
    )
    row["impact"] = row["recovery_cost"] + row["lost_value"] + row["rule_relief_cost"]
    return row


def _rules_bent(relief: Relief | None, bent: np.ndarray) -> str:
    """Which policy rules a re-solve bent: family, how many rows, units of relief."""
    if relief is None or not len(bent):
        return ""
    m = bent > TOL
    parts = []
    for fam in POLICY_ROWS:
        f = m & (relief.family == fam)
        if f.any():
            where = ", ".join(sorted(set(relief.label[f].tolist()))[:3]) + (" …" if f.sum() > 3 else "")
            parts.append(f"{fam} ×{int(f.sum())} ({where}: {bent[f].sum():,.0f} units)")
    return "; ".join(parts)


def redesign_resolve(spec: SweepSpec, el: dict) -> dict:
    """Redesign with ``el`` out (openings re-optimised, a MIP); result columns prefixed ``redesign_``."""
    sc_case = apply_changes(spec.case, Scenario(el["id"], element_changes(el), resolve="redesign"))
    r, _ = _solve_or_lose(sc_case)
    out = {"redesign_status": r.status}
    if not r.has_solution:
        return out
    cost = r.cost
    total = float(sum(cost.values()))
    base_total = float(sum(spec.base_cost.values()))
    pen_new, pen_old = cost.get("unmet_penalty", 0.0), spec.base_cost.get("unmet_penalty", 0.0)
    un = r.tables["unmet"]
    d = r.tables["dcs"]
    now = set(d.loc[d["open"], "dc"])
    was = set(spec.base_dcs_open)
    changes = [f"opens {x}" for x in sorted(now - was)] + [f"closes {x}" for x in sorted(was - now - {el["origin"]})]
    out.update(
        {
            "redesign_total_cost": total,
            "redesign_recovery_cost": total
            - base_total
            - (pen_new - pen_old)
            + el.get("own_fixed_cost", 0.0)
            - el.get("own_closing_cost", 0.0),
            "redesign_lost_units": (float(un["lost_units"].sum()) if len(un) else 0.0) - spec.base_lost_units,
            "redesign_lost_value": float(pen_new - pen_old),
            "redesign_dc_changes": "; ".join(changes),
        }
    )
    return out


def run_task(spec: SweepSpec, el: dict) -> dict:
    """Take one element out and re-solve (hold, and redesign if asked): the journal row.

    The same pure function runs in a local pool worker, a Dask worker or in-process;
    each keeps its held model in a per-thread cache keyed by ``spec.key``.
    """
    st = worker_state(spec)
    cpu0 = time.process_time()
    row = {"id": el["id"], "type": el["type"], "element": el["element"], "base_units": el["base_units"]}
    row.update(hold_resolve(st, el))
    if spec.redesign:
        row.update(redesign_resolve(spec, el))
    row["ran_on"] = _where()
    row["cpu_seconds"] = time.process_time() - cpu0  # this process's CPU time for the task
    return row


def _where() -> str:
    try:
        from distributed import get_worker

        return f"dask {get_worker().address}"
    except (ImportError, ValueError):
        return f"pid {os.getpid()}"


# pool plumbing: the spec is installed once per worker process by the initializer
_POOL_SPEC: SweepSpec | None = None


def _pool_init(spec: SweepSpec) -> None:
    global _POOL_SPEC
    _POOL_SPEC = spec
    worker_state(spec)  # build the held model now, not inside the first task


def _pool_task(el: dict) -> dict:
    return run_task(_POOL_SPEC, el)


# ---------------------------------------------------------------------------------- journal


def read_journal(path: Path, key: str) -> tuple[dict[str, dict], bool]:
    """Finished rows by element id and whether the journal belongs to ``key`` (a torn last line is ignored)."""
    if not path.exists():
        return {}, True
    rows: dict[str, dict] = {}
    with open(path, encoding="utf-8") as fh:
        lines = fh.read().split("\n")
    if not lines or not lines[0].strip():
        return {}, False
    try:
        head = json.loads(lines[0])
    except json.JSONDecodeError:
        return {}, False
    if head.get("journal") != JOURNAL_FORMAT or head.get("key") != key:
        return {}, False
    for line in lines[1:]:
        if not line.strip():
            continue
        try:
            r = json.loads(line)
        except json.JSONDecodeError:
            continue  # a line torn by a kill mid-write
        rows[r["id"]] = r
    return rows, True


def open_journal(path: Path, key: str, fresh: bool):
    """Open the journal for appending (new file with a header line when ``fresh``)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    if fresh or not path.exists():
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(
                json.dumps({"journal": JOURNAL_FORMAT, "key": key, "started": time.strftime("%Y-%m-%d %H:%M:%S")})
                + "\n"
            )
            fh.flush()
            os.fsync(fh.fileno())
    else:
        # Cut a torn last line so the next row starts on a line of its own.
        with open(path, "rb+") as fh:
            data = fh.read()
            if data and not data.endswith(b"\n"):
                fh.truncate(data.rfind(b"\n") + 1)
    return open(path, "a", encoding="utf-8")


def _append(fh, row: dict) -> None:
    fh.write(json.dumps(row) + "\n")
    fh.flush()
    os.fsync(fh.fileno())


# ---------------------------------------------------------------------------------- executors


def _pool_context():
    """Start method for pool workers: forkserver where available (no fork of a process holding HiGHS threads)."""
    methods = mp.get_all_start_methods()
    ctx = mp.get_context("forkserver" if "forkserver" in methods else "spawn")
    if ctx.get_start_method() == "forkserver":
        ctx.set_forkserver_preload(["netopt.resilience", "netopt.scenarios", "netopt.engine.solve"])
    return ctx


def _run_local(spec, todo, workers, done_cb):
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    ex = ProcessPoolExecutor(max_workers=workers, mp_context=_pool_context(), initializer=_pool_init, initargs=(spec,))
    futs = {}
    try:
        futs = {ex.submit(_pool_task, el): el for el in todo}
        pending = set(futs)
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for f in sorted(done, key=lambda f: futs[f]["id"]):
                done_cb(futs[f], f.result())
    except BaseException:
        for f in futs:
            f.cancel()
        ex.shutdown(wait=False, cancel_futures=True)
        raise
    ex.shutdown(wait=True)


def _run_dask(spec, todo, scheduler, done_cb):
    try:
        from distributed import Client, as_completed
    except ImportError as e:  # pragma: no cover - the cluster extra is not installed
        raise RuntimeError(
            "running on a Dask cluster needs the 'distributed' package (pip install 'netopt[cluster]')"
        ) from e
    own = isinstance(scheduler, str)
    client = Client(scheduler) if own else scheduler
    futs = []
    try:
        token = uuid.uuid4().hex[:12]
        spec_f = client.scatter(spec, broadcast=True, hash=False)
        futs = [
            client.submit(run_task, spec_f, el, pure=False, key=f"netopt-sweep-{token}-{i}")
            for i, el in enumerate(todo)
        ]
        by_key = {f.key: el for f, el in zip(futs, todo)}
        for f in as_completed(futs):
            done_cb(by_key[f.key], f.result())
    except BaseException:
        client.cancel(futs)
        raise
    finally:
        if own:
            client.close()


def _run_inline(spec, todo, done_cb):
    for el in todo:
        done_cb(el, run_task(spec, el))


def _progress_bar(total: int, completed: int, label: str):
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeElapsedColumn,
        TimeRemainingColumn,
    )

    p = Progress(
        TextColumn("{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TextColumn("elapsed"),
        TimeElapsedColumn(),
        TextColumn("ETA"),
        TimeRemainingColumn(),
        console=Console(stderr=True),
        transient=False,
    )
    task = p.add_task(label, total=total, completed=completed)
    return p, task


# ---------------------------------------------------------------------------------- the sweep


def rank_rows(rows: list[dict], redesign: bool = False) -> pd.DataFrame:
    """The ranked single-point-of-failure table from journal rows (order of completion irrelevant)."""
    cols = SPOF_COLUMNS + (REDESIGN_COLUMNS if redesign else [])
    if not rows:
        return pd.DataFrame(columns=cols)
    df = pd.DataFrame(rows)
    for c in cols:
        if c not in df:
            df[c] = np.nan
    df = df.sort_values(
        ["impact", "lost_units", "id"], ascending=[False, False, True], kind="stable", na_position="last"
    ).reset_index(drop=True)
    df["rank"] = np.arange(1, len(df) + 1)
    return df[cols]


def run_sweep(
    case: Case,
    base,
    *,
    workers: int | None = None,
    scheduler=None,
    redesign: bool = False,
    elements: list[str] | None = None,
    progress: bool = True,
    journal: str | Path | None = None,
    fresh: bool = False,
    rules: str = "priced",
    on_row: Callable[[dict], None] | None = None,
) -> tuple[pd.DataFrame, dict]:
    """Take each element out one at a time and re-solve; the ranked table and run facts.

    Args:
        workers: local pool size (None = all cores; 0 = in this process, no pool).
        scheduler: Dask scheduler address (or a ``distributed.Client``): run the tasks there.
        redesign: also re-solve each disruption with openings re-optimised (a MIP each).
        elements: filter (types, ids or site codes), see :func:`sweep_elements`.
        progress: show a progress bar (done/total, elapsed, ETA) on stderr.
        journal: JSONL file each finished row is appended to; finished rows there are not redone.
        fresh: ignore (and restart) an existing journal.
        rules: "priced" (a disruption may bend service windows, supplier/region share limits and the
            CO2 cap at each rule's base shadow price, rather than lose demand) or "hard" (every rule
            holds, exactly as a scenario's hold-the-network re-solve).
        on_row: called with each new row after it is journaled.

    Returns:
        (table, info): the ranked table (:data:`SPOF_COLUMNS`) and a dict with tasks, reused,
        run, seconds, resolves_per_second, executor, journal.
    """
    spec = make_spec(case, base, redesign, rules)
    el = sweep_elements(case, base, elements)
    todo_all = el.to_dict("records")
    done: dict[str, dict] = {}
    stale = False
    fh = None
    if journal is not None:
        journal = Path(journal)
        if not fresh:
            done, ok = read_journal(journal, spec.key)
            stale = not ok
        fh = open_journal(journal, spec.key, fresh or stale or not journal.exists())
    ids = {e["id"] for e in todo_all}
    reused = {k: v for k, v in done.items() if k in ids}
    todo = [e for e in todo_all if e["id"] not in reused]
    new_rows: list[dict] = []
    errors: list[str] = []
    if scheduler is not None:
        executor = f"dask ({scheduler if isinstance(scheduler, str) else 'client'})"
    elif workers == 0:
        executor = "in-process"
    else:
        workers = workers or os.cpu_count() or 1
        executor = f"local pool ({workers} worker{'s' if workers != 1 else ''})"
    bar = task = None
    if progress and todo_all:
        bar, task = _progress_bar(len(todo_all), len(reused), "re-solves")
        bar.start()

    def done_cb(e, row):
        new_rows.append(row)
        if fh is not None:
            _append(fh, row)
        if bar is not None:
            bar.advance(task)
        if on_row is not None:
            on_row(row)

    t0 = time.perf_counter()
    try:
        if todo:
            if scheduler is not None:
                _run_dask(spec, todo, scheduler, done_cb)
            elif workers == 0:
                _run_inline(spec, todo, done_cb)
            else:
                _run_local(spec, todo, workers, done_cb)
    finally:
        if bar is not None:
            bar.stop()
        if fh is not None:
            fh.close()
    seconds = time.perf_counter() - t0
    rows = list(reused.values()) + new_rows
    for r in rows:
        if r.get("status") not in ("optimal",):
            errors.append(f"{r['id']}: {r.get('status')}")
    table = rank_rows(rows, redesign)
    info = {
        "tasks": len(todo_all),
        "reused": len(reused),
        "run": len(new_rows),
        "seconds": seconds,
        "resolves_per_second": (len(new_rows) / seconds) if seconds > 0 and new_rows else float("nan"),
        "executor": executor,
        "journal": str(journal) if journal is not None else "",
        "stale_journal_replaced": stale,
        "not_optimal": errors,
        "ran_on": sorted({r.get("ran_on", "") for r in new_rows}),
    }
    return table, info


# ---------------------------------------------------------------------------------- stress: sweep + exposure


def stress(
    case: Case,
    out_dir: str | Path,
    *,
    workers: int | None = None,
    scheduler=None,
    redesign: bool = False,
    elements: list[str] | None = None,
    progress: bool = True,
    base=None,
    fresh: bool = False,
    rules: str = "priced",
    say: Callable[[str], None] | None = None,
) -> dict[str, pd.DataFrame]:
    """Solve the base, run the single-point-of-failure sweep and the TTS/TTR exposure; write ``out_dir``.

    Written (atomically, the journal excepted while running): ``spof_ranking.csv``,
    ``exposure.csv``, ``stress.xlsx``, ``summary.json``, ``sweep_journal.jsonl`` and the
    base solve's tables in ``base/``.  Raises :class:`StressError` when the base has no
    solution.

    Returns:
        {"spof": ranked sweep table, "exposure": exposure table, "info": run facts (key, value)}.
    """
    tell = say or (lambda s: None)
    out = Path(out_dir)
    t0 = time.perf_counter()
    if base is None:
        tell("solving the base case …")
        base = solve(case)
    if not base.has_solution:
        raise StressError(f"the base case has no solution to stress ({base.status}): {base.message}", base.status)
    base_seconds = time.perf_counter() - t0
    out.mkdir(parents=True, exist_ok=True)
    jpath = out / JOURNAL
    spof, info = run_sweep(
        case,
        base,
        workers=workers,
        scheduler=scheduler,
        redesign=redesign,
        elements=elements,
        progress=progress,
        journal=jpath,
        fresh=fresh,
        rules=rules,
    )
    t1 = time.perf_counter()
    expo, note = exposure(case, base)
    exposure_seconds = time.perf_counter() - t1
    base_total = float(sum(base.cost.values()))
    facts = {
        "case": case.name,
        "base_status": base.status,
        "base_total_cost": base_total,
        "base_seconds": base_seconds,
        "sweep_elements": info["tasks"],
        "sweep_reused_from_journal": info["reused"],
        "sweep_resolved_now": info["run"],
        "sweep_seconds": info["seconds"],
        "sweep_resolves_per_second": info["resolves_per_second"],
        "sweep_executor": info["executor"],
        "sweep_not_optimal": "; ".join(info["not_optimal"]),
        "sweep_redesign": bool(redesign),
        "hold_assumption": "DC decisions and safety-stock positions held at the base's; flows re-routed",
        "sweep_rules": rules,
        "exposure_nodes": len(expo),
        "exposure_stock": note,
        "exposure_seconds": exposure_seconds,
        "exposure_nodes_tts_below_ttr": int(expo["tts_below_ttr"].sum()) if len(expo) else 0,
        "currency": case.settings["case"].get("currency", ""),
    }
    info_df = pd.DataFrame({"key": list(facts), "value": [str(v) for v in facts.values()]})
    tables = {"spof": spof, "exposure": expo, "info": info_df}
    with atomic_folder(out) as tmp:
        spof.to_csv(tmp / "spof_ranking.csv", index=False)
        expo.to_csv(tmp / "exposure.csv", index=False)
        write_workbook(
            {"spof_ranking": spof, "exposure": expo, "run": info_df},
            tmp / "stress.xlsx",
            notes=STRESS_NOTES + "\n\n" + DISCLAIMER,
        )
        summary = {
            "facts": facts,
            "top_spof": spof.head(10).to_dict("records"),
            "exposure_at_risk": expo[expo["tts_below_ttr"]].to_dict("records") if len(expo) else [],
            "disclaimer": DISCLAIMER,
        }
        (tmp / "summary.json").write_text(json.dumps(_jsonable(summary), indent=2))
        if jpath.exists():
            shutil.copy2(jpath, tmp / JOURNAL)
        write_result_files(base, tmp / "base", workbook=False)
    return tables


STRESS_NOTES = """netopt stress: single points of failure and time-to-survive exposure.
spof_ranking: each supplier, plant, open DC and used lane taken out on its own, the network re-solved holding the
base's DC decisions and safety-stock positions. recovery_cost = change in landed cost per year of outage (the
element's own fixed cost counted as still paid; negative when lost units no longer incur their landed cost);
lost_units / lost_value = demand no longer served (units/yr) and its penalty value; rules_bent = service windows,
share limits or CO2 cap exceeded in the disruption, priced at each rule's shadow price in the base
(rule_relief_cost); impact = recovery_cost + lost_value + rule_relief_cost (the ranking key);
customers_affected = customers short of demand or served in other volumes from a site; took_over = the comparable
elements whose volume rose most (units/yr).
exposure: per supplier, plant and open DC, time-to-survive (days all base deliveries can still be met with the node
down, from the stock the base holds and the remaining capacity; a linear program) and the demand lost over the
node's time-to-recover (a linear program); rei = lost value / largest lost value; tts_below_ttr flags nodes that
need mitigation. Method: Simchi-Levi, Schmidt & Wei (Harvard Business Review, 2014); Simchi-Levi et al.
(Interfaces 45(5), 2015)."""


def stress_command(
    case_path: str,
    out_dir: str,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    redesign: bool = False,
    only: list[str] | None = None,
    fresh: bool = False,
    rules: str = "priced",
    quiet: bool = False,
) -> int:
    """``netopt stress CASE --out DIR``: load, stress, print the summary; the exit code.

    0 done; 3 the base is infeasible; 4 the base has no solution for another reason
    (time limit, solver error).  Bad input raises :class:`CaseError` (the CLI's exit code 2).
    """
    import sys

    case = load_case(case_path)
    say = (lambda s: None) if quiet else (lambda s: print(s, file=sys.stderr))
    if case.warnings:
        say(f"{len(case.warnings)} warning(s):")
        for p in case.warnings:
            say(f"  {p}")
    try:
        tables = stress(
            case,
            out_dir,
            workers=workers,
            scheduler=scheduler,
            redesign=redesign,
            elements=only,
            progress=not quiet,
            fresh=fresh,
            rules=rules,
            say=say,
        )
    except StressError as e:
        print(f"error: {e}", file=sys.stderr)
        return 3 if e.status in ("infeasible", "unbounded") else 4
    if not quiet:
        for line in summary_lines(tables):
            print(line)
        print(f"results written to {out_dir}")
    return 0


def _fmt_money(x) -> str:
    if x is None or (isinstance(x, float) and (math.isnan(x) or math.isinf(x))):
        return "-"
    return f"{x:,.0f}"


def summary_lines(tables: dict[str, pd.DataFrame], top: int = 10) -> list[str]:
    """Terminal summary of :func:`stress`: the top single points of failure and the at-risk nodes."""
    spof = tables["spof"]
    expo = tables["exposure"]
    facts = dict(zip(tables["info"]["key"], tables["info"]["value"])) if "info" in tables else {}
    cur = facts.get("currency", "")
    lines = []
    if facts:
        lines.append(
            f"base total landed cost {float(facts['base_total_cost']):,.0f} {cur}/yr; "
            f"{facts['sweep_elements']} elements swept ({facts['sweep_resolved_now']} re-solved now, "
            f"{facts['sweep_reused_from_journal']} from the journal) on {facts['sweep_executor']}"
        )
    lines.append(f"top {min(top, len(spof))} single points of failure (per year of outage, {cur}):")
    hdr = (
        f"{'#':>3}  {'element':<44} {'type':<8} {'recovery':>12} {'lost units':>11} {'lost value':>12} "
        f"{'custs':>5}  took over"
    )
    lines.append(hdr)
    for r in spof.head(top).itertuples():
        lines.append(
            f"{r.rank:>3}  {str(r.element)[:44]:<44} {r.type:<8} {_fmt_money(r.recovery_cost):>12} "
            f"{_fmt_money(r.lost_units):>11} {_fmt_money(r.lost_value):>12} {int(r.customers_affected):>5}  "
            f"{str(r.took_over)[:60] if isinstance(r.took_over, str) else ''}"
        )
    if len(expo):
        risk = expo[expo["tts_below_ttr"]]
        lines.append(
            f"time-to-survive vs time-to-recover: {len(risk)} of {len(expo)} nodes survive shorter than "
            f"they take to recover ({facts.get('exposure_stock', '')})"
        )
        for r in expo.head(top).itertuples():
            tts = f">={r.tts_days:,.0f}" if r.tts_capped else f"{r.tts_days:,.1f}"
            flag = "  AT RISK" if r.tts_below_ttr else ""
            lines.append(
                f"{r.rank:>3}  {r.node:<24} {r.type:<8} TTS {tts:>7} d  TTR {r.ttr_days:>5,.1f} d  "
                f"lost {_fmt_money(r.lost_units):>9} units  {_fmt_money(r.lost_value):>12} {cur}  "
                f"REI {r.rei:.2f}{flag}"
            )
    return lines


def markdown_top(spof: pd.DataFrame, top: int = 10, currency: str = "") -> str:
    """The top rows of the sweep as a Markdown table (for a case README)."""

    def text(x, n=2):
        if not isinstance(x, str) or not x:
            return "–"
        return "; ".join(x.split("; ")[:n])

    out = [
        f"| # | element | type | impact ({currency}/yr) | recovery cost ({currency}/yr) | lost units/yr "
        f"| lost value ({currency}/yr) | rules bent | customers affected | took over (units/yr) |",
        "|---:|---|---|---:|---:|---:|---:|---|---:|---|",
    ]
    for r in spof.head(top).itertuples():
        out.append(
            f"| {r.rank} | {r.element} | {r.type} | {_fmt_money(r.impact)} | {_fmt_money(r.recovery_cost)} "
            f"| {_fmt_money(r.lost_units)} | {_fmt_money(r.lost_value)} | {text(r.rules_bent, 1)} "
            f"| {int(r.customers_affected)} | {text(r.took_over)} |"
        )
    return "\n".join(out)
