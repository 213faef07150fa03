"""The sweep's worker side: what each worker keeps (the held model, base values, group codes) and
the priced relief of policy rules in a disruption.

Each worker process (or Dask worker thread) builds its held model once per sweep key
(:func:`worker_state`) and re-solves every element warm from the base basis.
"""

from __future__ import annotations

import hashlib
import json
import threading
import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.held import HeldNetwork, safety_stock_lines_of
from netopt.engine.relief import add_slack
from netopt.studies.sweep_exec import JOURNAL_FORMAT

TOL = 1e-6  # units/yr: smaller changes count as none
RULES = ("priced", "hard")
POLICY_ROWS = ("service_window", "max_supplier_share", "max_region_share", "co2_cap")
"""Rule families that a disruption may bend in ``rules="priced"`` mode (at the base's shadow price)."""
RELIEF_EPS = 1e-4  # currency per unit added to each shadow price, so the undisrupted base stays the unique choice


def _lane_label(o: str, d: str, m: str) -> str:
    return f"{o} → {d} ({m})"


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
    safety_stock_lines: pd.DataFrame = field(default_factory=pd.DataFrame)  # engine.held.safety_stock_lines_of


def make_spec(case: Case, base, redesign: bool = False, rules: str = "priced") -> SweepSpec:
    """The sweep spec of a solved base; ``key`` identifies case, held network and options."""
    if rules not in RULES:
        raise ValueError(f"rules must be one of {', '.join(RULES)}, not {rules!r}")
    held = dict(base.held_openings())
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
        safety_stock_lines=safety_stock_lines_of(case, base),
    )


@dataclass
class Groups:
    """Integer group codes of the held model's arcs, precomputed once per worker (for fast summaries)."""

    names: dict[str, np.ndarray]  # kind → label of each group
    codes: dict[str, np.ndarray]  # kind → group of each arc (−1 = not in any), or of each make row for "plant"
    lane_leg: np.ndarray  # leg of each lane group
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
    return Groups(
        names=names,
        codes=codes,
        lane_leg=lane_leg,
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
    """Add one priced relief column per policy row of the held LP (see :data:`POLICY_ROWS`; service
    windows only where the target is hard: a priced target already has its late-delivery units).

    Each column enters its row in the direction that loosens it and costs the row's shadow
    price in the base solution plus :data:`RELIEF_EPS`.  By LP duality the base stays
    optimal (no rule is bent without a disruption), and a disruption may deliver late or
    buy beyond a share limit when that costs less than losing the demand.
    """
    dual = np.asarray(held.hm.highs.getSolution().row_dual, float)
    families = [f for f in POLICY_ROWS if f in held.builder.row_labels]
    only = {}
    if "service_window" in families:
        # A customer whose class prices late delivery already has its priced shortfall (the model's
        # ``late`` units); only hard targets get relief, so a late unit means the same as in a scenario.
        late = held.net.customers.set_index("customer")["late_cost"]
        labels = held.builder.row_labels["service_window"]["customer"]
        only["service_window"] = labels.map(late).fillna(0.0).to_numpy(float) <= 0
    slack = add_slack(held.hm, families, lambda rows: np.abs(dual[rows]) + RELIEF_EPS, only=only)
    labels = [str(held.builder.row_labels[f].iloc[k, 0]) for f, k in zip(slack.family, slack.row)]
    return Relief(cols=slack.cols, family=slack.family, label=np.array(labels, dtype=object), price=slack.price)


@dataclass
class WorkerState:
    """One worker's kept model: the held network (safety stock on its held lines, as every held
    network prices it) and base arrays."""

    spec: SweepSpec
    held: HeldNetwork
    basis: object
    base_values: dict
    base_cost: dict
    base_total: float
    build_seconds: float
    groups: Groups
    relief: Relief | None = None


_LOCAL = threading.local()  # per worker thread (Dask threads) or process (pool): {key: WorkerState}


def worker_state(spec: SweepSpec) -> WorkerState:
    """This thread's kept model for ``spec`` (built on first use, then reused)."""
    cache = getattr(_LOCAL, "states", None)
    if cache is None:
        cache = _LOCAL.states = {}
    st = cache.get(spec.key)
    if st is None:
        cache.clear()  # one case at a time per worker
        t0 = time.perf_counter()
        held = HeldNetwork(spec.case, held=spec.held, lanes=spec.lanes, safety_stock_lines=spec.safety_stock_lines)
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


def activity(st: WorkerState, kind: str, values: dict) -> np.ndarray:
    """Volume (units/yr) of each group of ``kind`` (supplier, plant, dc, lane) in a solution."""
    g = st.groups
    x = values["make"] if kind == "plant" else values["flow"]
    c = g.codes[kind]
    m = c >= 0
    return np.bincount(c[m], weights=x[m], minlength=len(g.names[kind]))


def took_over(st: WorkerState, el: dict, values: dict) -> tuple[str, float]:
    """The comparable elements whose volume rose most (text, top 3) and the total rise (units/yr)."""
    g = st.groups
    kind = el["type"]
    diff = activity(st, kind, values) - activity(st, kind, st.base_values)
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


def customers_touched(st: WorkerState, values: dict) -> tuple[set, set]:
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


def rules_bent(relief: Relief | None, bent: np.ndarray) -> str:
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
