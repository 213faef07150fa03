"""Which capacities keep demand from being served: the binding capacities of an elastic solution.

The elastic diagnosis (:mod:`netopt.engine.diagnose`) says which demand goes unmet; this names
why.  A capacity is a *candidate* when the elastic plan loads it to its limit (within
``AT_LIMIT`` of it): a plant's production capacity (the bound of ``make``), an arc's own
capacity (the bound of ``flow``), a supplier offer (``supplier_capacity``), a DC's throughput
(``dc_throughput``, the open options' capacity) or a lane shared by products (``lane_capacity``).
Every candidate may then be exceeded at ``LIFT_SHARE`` of the elastic penalty per unit — far
below the penalty on unmet demand, far above any cost per unit of the plan — and the elastic model
is re-solved: the plan serves the demand with the least capacity added, and the load a candidate
carries then is what serving the demand *needs* there.  A candidate is *binding* when that need
exceeds its capacity; the amount reported is the capacity missing (units/yr; 0 for a capacity at
its limit that the demand needs no more of).

| symbol | meaning | unit | name in code |
|---|---|---|---|
| U | a capacity | units/yr | ``Limit.capacity`` |
| x | its load in the elastic plan | units/yr | ``Limit.load`` |
| x̂ | its load once every candidate is lifted | units/yr | ``need`` |
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from netopt.engine.highs import INF, HighsModel
from netopt.engine.highs_check import require_ok
from netopt.engine.relief import Slack
from netopt.model.core import Builder

LIFT_SHARE = 1e-3  # price of a unit above a capacity, as a share of the elastic penalty (unmet demand)
AT_LIMIT = 1e-6  # a load within this share of its capacity (and at least 1e-6 units) is at its limit
RULE_OF_BLOCK = {"make": "plant_capacity", "flow": "arc_capacity"}
ROW_FAMILIES = ("supplier_capacity", "lane_capacity", "dc_throughput")


@dataclass
class Limit:
    """A capacity loaded to its limit in the elastic plan."""

    rule: str
    where: str
    capacity: float  # units/yr
    load: float  # units/yr
    block: str = ""  # a variable bound: its block ("" for a rule)
    index: int = -1  # the variable of the block, or the label row of the rule
    row: int = -1  # a rule: its HiGHS row


def _at_limit(load: np.ndarray, cap: np.ndarray) -> np.ndarray:
    finite = np.isfinite(cap)
    c = np.where(finite, cap, 0.0)
    return finite & (load >= c - AT_LIMIT * np.maximum(1.0, np.abs(c)))


def _label(frame: pd.DataFrame, k: int) -> str:
    return ", ".join(f"{c} {frame[c].iloc[k]}" for c in frame.columns)


def _dc_loads(b: Builder, vals: dict[str, np.ndarray], dcs: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Inbound units/yr of each DC of ``dcs`` and its open capacity (inf: unlimited or a big M)."""
    net = b.net
    arcs = net.arcs
    into = arcs["destination_kind"].eq("dc").to_numpy()
    inflow = pd.Series(vals["flow"][into]).groupby(arcs["destination"].to_numpy()[into]).sum()
    o = net.options
    y = vals.get("open", np.zeros(len(o)))
    cap_o = o["capacity"].to_numpy(float)
    opened = y > 0.5
    cap = pd.Series(np.where(opened, cap_o, 0.0)).groupby(o["dc"].to_numpy()).sum()
    names = dcs["dc"].astype(str).to_numpy()
    return (
        inflow.reindex(names).fillna(0.0).to_numpy(float),
        cap.reindex(names).fillna(0.0).to_numpy(float),
    )


def row_loads(hm: HighsModel, slack: Slack, family: str, vals: dict[str, np.ndarray], x: np.ndarray, row_value):
    """(load, capacity) of every label row of a capacity family (nan where the row is not in the model)."""
    b = hm.builder
    labels = b.row_labels[family]
    if family == "dc_throughput":
        return _dc_loads(b, vals, labels)
    rows = hm.rows_of(family)
    ok = rows >= 0
    r = np.where(ok, rows, 0)
    hi = np.asarray(hm.highs.getLp().row_upper_, dtype=float)
    act = np.asarray(row_value, dtype=float)[r]
    # The row's value includes its elastic slack columns (coefficient ±1): the load is the rest.
    extra = np.zeros(len(hi))
    if len(slack.cols):
        np.add.at(extra, slack.hrow, slack.sign * np.asarray(x, dtype=float)[slack.cols])
    load = np.where(ok, act - extra[r], np.nan)
    return load, np.where(ok, hi[r], np.nan)


def capacities_at_limit(
    hm: HighsModel, slack: Slack, vals: dict[str, np.ndarray], x: np.ndarray, row_value
) -> list[Limit]:
    """Every finite capacity the elastic plan ``vals`` loads to its limit (none whose own slack is used)."""
    b = hm.builder
    net = b.net
    out: list[Limit] = []
    for block, frame, cap in (
        ("make", net.make[["plant", "product"]], net.make["capacity"].to_numpy(float)),
        ("flow", net.arcs[["origin", "destination", "mode", "product"]], net.arcs["capacity"].to_numpy(float)),
    ):
        if block not in vals:
            continue
        for k in np.flatnonzero(_at_limit(vals[block], cap)).tolist():
            out.append(Limit(RULE_OF_BLOCK[block], _label(frame, k), float(cap[k]), float(vals[block][k]), block, k))
    slacked = set(slack.hrow[np.asarray(x, dtype=float)[slack.cols] > 1e-6].tolist()) if len(slack.cols) else set()
    for family in ROW_FAMILIES:
        if family not in b.row_labels:
            continue
        load, cap = row_loads(hm, slack, family, vals, x, row_value)
        rows = hm.rows_of(family)
        for k in np.flatnonzero(_at_limit(np.nan_to_num(load, nan=-np.inf), cap)).tolist():
            if int(rows[k]) in slacked or (cap[k] <= 0 and family == "dc_throughput"):
                continue
            row = int(rows[k]) if k < len(rows) else -1
            out.append(Limit(family, _label(b.row_labels[family], k), float(cap[k]), float(load[k]), "", k, row))
    return out


def lift(hm: HighsModel, slack: Slack, limits: list[Limit], price: float) -> None:
    """Let every capacity of ``limits`` be exceeded at ``price`` per unit (currency/unit) in the model in HiGHS.

    A variable bound x ≤ U becomes x − e ≤ U with a new column e ≥ 0 at ``price``; a rule's own slack
    column (the excess over its limit) gets ``price`` instead of the elastic penalty.
    """
    h = hm.highs
    for block in RULE_OF_BLOCK:
        picked = [lim for lim in limits if lim.block == block]
        if not picked:
            continue
        idx = np.array([lim.index for lim in picked], dtype=np.int64)
        cols = hm.col_of[block][idx]
        ok = cols >= 0
        idx, cols, cap = idx[ok], cols[ok].astype(np.int32), np.array([lim.capacity for lim in picked])[ok]
        k = len(cols)
        if not k:
            continue
        first = int(h.getNumCol())
        zero = np.zeros(0, dtype=np.int32)
        require_ok(
            h.addCols(k, np.full(k, price), np.zeros(k), np.full(k, INF), 0, zero, zero, np.zeros(0)),
            "add the capacity excess columns",
        )
        starts = np.arange(0, 2 * k, 2, dtype=np.int32)
        index = np.column_stack([cols, np.arange(first, first + k, dtype=np.int32)]).ravel()
        value = np.tile([1.0, -1.0], k)
        require_ok(h.addRows(k, np.full(k, -INF), cap, 2 * k, starts, index, value), "add the capacity excess rows")
        hm.set_bounds(block, idx, hm.builder.var_bounds[block][0][idx], np.full(k, np.inf))
    rows = {lim.row for lim in limits if not lim.block and lim.row >= 0}
    own = np.flatnonzero(np.isin(slack.hrow, list(rows)) & (slack.sign < 0)) if rows else np.zeros(0, int)
    if len(own):
        require_ok(
            h.changeColsCost(len(own), slack.cols[own].astype(np.int32), np.full(len(own), price)),
            "price the excess over the capacities",
        )


def binding_rows(hm: HighsModel, slack: Slack, limits: list[Limit], vals: dict[str, np.ndarray], x, row_value):
    """Diagnosis rows of the capacities of ``limits``, the ones the lifted plan ``vals`` exceeds first."""
    need_of: dict[str, np.ndarray] = {}
    rows: list[dict] = []
    binding: list[bool] = []
    for lim in limits:
        if lim.block:
            need = float(vals[lim.block][lim.index])
        else:
            if lim.rule not in need_of:
                need_of[lim.rule] = row_loads(hm, slack, lim.rule, vals, x, row_value)[0]
            need = float(need_of[lim.rule][lim.index])
        short = need > lim.capacity + AT_LIMIT * max(1.0, abs(lim.capacity))
        rows.append(
            {
                "rule": lim.rule,
                "where": lim.where,
                "amount": max(need - lim.capacity, 0.0),
                "meaning": (
                    f"binding capacity: {lim.capacity:,.6g} units/yr, loaded to its limit; serving the demand "
                    f"needs {need:,.6g} units/yr here (amount: the capacity missing, units/yr)"
                    if short
                    else f"capacity {lim.capacity:,.6g} units/yr, loaded to its limit (serving the demand with the "
                    f"least capacity added needs {need:,.6g} units/yr here)"
                ),
            }
        )
        binding.append(short)
    order = sorted(range(len(rows)), key=lambda i: not binding[i])  # the binding ones first
    return [rows[i] for i in order]
