"""Solving aids for the safety-stock binaries, at the HiGHS level (the model and its optimum are unchanged).

:func:`prepare_solve` gives HiGHS a start network priced at
its true safety-stock cost, and pooling cuts (the greedy/Lovász inequalities of the
submodular set function "cost of the customers a DC serves", :func:`_separate`) separated on
the LP relaxation; without them the relaxation sees only each curve's chord over
[0, t_max] and the demo takes tens of seconds instead of well under one.
"""

from __future__ import annotations

import time

import highspy
import numpy as np
import pandas as pd


def _cut_data(hm) -> list[tuple]:
    """Per curve: HiGHS columns of its segments and DC → customer flows, the customer of each
    flow, customer demands q (units/yr) and the curve as breakpoints/costs (currency/yr)."""
    b = hm.builder
    net = b.net
    seg = b.var_labels["ss_seg"]
    segc = hm.col_of["ss_seg"]
    flowc = hm.col_of["flow"]
    arcs = net.arcs
    out = arcs[arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")]
    dem = net.demand.set_index(["customer", "product"])["quantity"]
    data = []
    for (dc, product), s_ in seg.groupby(["dc", "product"], sort=False):
        sub = out[(out["origin"] == dc) & (out["product"] == product)]
        cust, c_of = np.unique(sub["destination"].to_numpy(), return_inverse=True)
        q = dem.reindex(pd.MultiIndex.from_arrays([cust, np.full(len(cust), product)])).fillna(0.0).to_numpy(float)
        cols_f = flowc[sub.index.to_numpy()]
        cols_s = segc[s_.index.to_numpy()]
        if len(cust) < 2 or (cols_f < 0).any() or (cols_s < 0).any() or (q <= 0).any():
            continue
        bp = np.concatenate([[0.0], (s_["start"] + s_["width"]).to_numpy(float)])
        val = np.concatenate([[0.0], np.cumsum((s_["width"] * s_["cost_per_unit"]).to_numpy(float))])
        data.append((cols_s, s_["cost_per_unit"].to_numpy(float), cols_f, c_of, q, bp, val))
    return data


def _extended(t, bp, val):
    """The curve (currency/yr) at t, extended beyond its last breakpoint by its last slope (still concave)."""
    last = (val[-1] - val[-2]) / (bp[-1] - bp[-2])
    return np.where(t <= bp[-1], np.interp(t, bp, val), val[-1] + last * (t - bp[-1]))


def _separate(x: np.ndarray, data: list[tuple]) -> list[tuple[np.ndarray, np.ndarray]]:
    """Violated pooling cuts at column values ``x``: (columns, coefficients) of rows ``≥ 0``.

    For a curve F (concave, F(0) = 0) the set function g(S) = F(Σ_{c∈S} q_c) is submodular, so for
    any order π of the customers the greedy weights w_k = g(S_k) − g(S_{k−1}) satisfy
    Σ_c w_c x_c/q_c ≤ F(Σ_c x_c) on 0 ≤ x ≤ q (write x/q as a convex combination of 0/1 points
    along the chain of π and use concavity): a valid inequality for every solution of the model.
    Ordering by x_c/q_c (largest first) gives the most violated one (Edmonds' greedy algorithm).
    """
    cuts = []
    for cols_s, cost_s, cols_f, c_of, q, bp, val in data:
        xc = np.bincount(c_of, weights=x[cols_f], minlength=len(q))
        order = np.argsort(-(xc / q), kind="stable")
        w = np.diff(np.concatenate([[0.0], _extended(np.cumsum(q[order]), bp, val)]))
        coef = np.empty(len(q))
        coef[order] = w / q[order]
        rhs = float(coef @ xc)
        lhs = float(cost_s @ x[cols_s])
        if rhs - lhs > 1e-6 * max(1.0, abs(rhs)):
            cuts.append((np.concatenate([cols_s, cols_f]).astype(np.int32), np.concatenate([cost_s, -coef[c_of]])))
    return cuts


def prepare_solve(hm, time_limit: float = 60.0, mip_gap: float = 1e-4, max_rounds: int = 50) -> dict:
    """Solving aids for the safety-stock binaries, applied to a compiled model before its MIP solve.

    The Pyomo model and its optimum are unchanged; only the HiGHS instance gets help:

    1. a start solution: the model with the safety-stock cost set to 0 and ``ss_fill`` relaxed
       (the network without the concave term, quick to solve), its segments then filled in order,
       so HiGHS starts from a feasible network priced with its true safety-stock cost;
    2. pooling cuts (see :func:`_separate`) separated on the LP relaxation until none is violated,
       added as rows: they give the LP the pooled cost of the customer sets each DC serves, where
       the segment formulation alone only sees the chord of each curve over [0, t_max];
    3. RINS/RENS sub-MIP heuristics off (with the start solution they cost more than they find).

    Returns counts and seconds (for timings).  Does nothing without safety-stock variables.
    """
    b = hm.builder
    if not b.has("ss_seg"):
        return {}
    t0 = time.perf_counter()
    h = hm.highs
    lp = h.getLp()
    n = int(lp.num_col_)
    all_cols = np.arange(n, dtype=np.int32)
    cost = np.asarray(lp.col_cost_, dtype=float)
    integ = hm.integrality.copy()
    segc = hm.col_of["ss_seg"]
    segc = segc[segc >= 0].astype(np.int32)
    fillc = hm.col_of.get("ss_fill", np.zeros(0, np.int64))
    info = {"start_objective": float("nan"), "cut_rounds": 0, "cuts": 0}

    # 1. Start: no safety-stock cost, fills relaxed; then fill the segments in order.
    h.setOptionValue("time_limit", float(max(1.0, 0.25 * time_limit)))
    h.setOptionValue("mip_rel_gap", float(max(mip_gap, 1e-3)))
    h.changeColsCost(len(segc), segc, np.zeros(len(segc)))
    relaxed = integ.copy()
    relaxed[fillc[fillc >= 0]] = 0
    h.changeColsIntegrality(n, all_cols, relaxed)
    h.run()
    start = None
    if h.getInfo().primal_solution_status == 2:
        start = np.asarray(h.getSolution().col_value, dtype=float)
        _fill_in_order(hm, start)
        info["start_objective"] = float(cost @ start + lp.offset_)
    h.changeColsCost(len(segc), segc, cost[segc])

    # 2. Pooling cuts on the LP relaxation.
    h.changeColsIntegrality(n, all_cols, integ)
    info.update(add_pooling_cuts(hm, max_rounds=max_rounds))

    # 3. Back to the MIP, with the start solution.
    h.clearSolver()
    h.setOptionValue("mip_heuristic_run_rins", False)
    h.setOptionValue("mip_heuristic_run_rens", False)
    if start is not None:
        sol = highspy.HighsSolution()
        sol.col_value = start.tolist()
        sol.value_valid = True
        h.setSolution(sol)
    info["seconds"] = time.perf_counter() - t0
    return info


def add_pooling_cuts(hm, max_rounds: int = 50) -> dict:
    """Separate pooling cuts (:func:`_separate`) on the LP relaxation of the model as it now stands
    (objective and bounds included) and add them to HiGHS as rows; integrality is restored after.

    Returns ``{"cut_rounds": LP solves, "cuts": rows added}``.  The model's optimum is unchanged
    (the cuts are valid for every solution); call again after changing bounds (e.g. a CO2 cap).
    """
    b = hm.builder
    out = {"cut_rounds": 0, "cuts": 0}
    if not b.has("ss_seg"):
        return out
    h = hm.highs
    n = int(h.getNumCol())
    all_cols = np.arange(n, dtype=np.int32)
    h.changeColsIntegrality(n, all_cols, np.zeros(n, dtype=np.uint8))
    try:
        data = _cut_data(hm)
        for _ in range(max_rounds):
            h.run()
            if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
                break
            cuts = _separate(np.asarray(h.getSolution().col_value, dtype=float), data)
            out["cut_rounds"] += 1
            if not cuts:
                break
            for cols, vals in cuts:
                h.addRow(0.0, highspy.kHighsInf, len(cols), cols, vals)
            out["cuts"] += len(cuts)
    finally:
        h.changeColsIntegrality(n, all_cols, hm.integrality)
    return out


def _fill_in_order(hm, x: np.ndarray) -> None:
    """Rewrite segment and fill columns of ``x`` so each curve's throughput fills its segments in order."""
    b = hm.builder
    seg = b.var_labels["ss_seg"]
    segc = hm.col_of["ss_seg"]
    total = pd.Series(x[segc], index=seg.index).groupby(seg["curve"]).transform("sum").to_numpy(float)
    start = seg["start"].to_numpy(float)
    width = seg["width"].to_numpy(float)
    x[segc] = np.clip(total - start, 0.0, width)
    if b.has("ss_fill"):
        fill = b.var_labels["ss_fill"]
        key = pd.Series(np.arange(len(seg)), index=pd.MultiIndex.from_frame(seg[["dc", "product", "segment"]]))
        nxt = key.reindex(pd.MultiIndex.from_arrays([fill["dc"], fill["product"], fill["segment"] + 1])).to_numpy(int)
        x[hm.col_of["ss_fill"]] = (x[segc][nxt] > 0).astype(float)
