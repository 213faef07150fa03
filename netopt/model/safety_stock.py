"""Safety stock at DCs: a concave cost of each DC's throughput (square-root law), piecewise linear.

Per DC ``d`` and finished product ``p`` (units in brackets):

- ``T``: throughput, the units/yr of p that d delivers to customers (Σ of its DC → customer
  flows over all modes) [units/yr].  Transfers to other DCs are not counted: the receiving
  DC holds the safety stock for the customers it serves.
- ``σ_c``: standard deviation of customer c's annual demand = demand_cv × quantity
  [units/yr] (``demand.demand_cv``, blank = ``products.demand_cv``).
- ``α``: variance per unit of demand = Σ_c σ_c² / Σ_c q_c over the customers d can reach by a
  lane [units/yr].  The pooled annual variance of what d serves is taken as α × T, so the
  pooled standard deviation grows with √T: the square-root law's assumption (variance in
  proportion to volume, independent customers).  The report gives the exact pooled value
  Σ_c (cv_c × flow_c)² of the chosen flows beside it.
- daily demand ``d̄ = T/365`` [units/day]; daily variance ``σ_d² = α T / 365`` [units²/day²]
  (the variance of a year of independent days is 365 × the daily variance).
- ``L``: replenishment lead time = transit days of the fastest lane (any mode) that can
  bring p into d [days].  It is fixed per DC and product so that the cost stays a function of
  T alone; a slower inbound mode's larger need is shown in the report
  (``ss_units_actual_lead_time``), not optimised.
- ``σ_L``: lead-time standard deviation = ``suppliers.lead_time_sd_days`` of that fastest
  lane's origin when it is a supplier, 0 when it is a plant or DC [days].
- ``z = Φ⁻¹(inventory.cycle_service_level)`` (``statistics.NormalDist``).

Safety stock ``SS(T) = z √(L σ_d² + d̄² σ_L²) = z √(L α T/365 + T² σ_L²/365²)`` [units]
(Chopra & Meindl's demand and lead-time uncertainty formula), held all year, costs
``SS(T) × unit_value × holding_rate`` [currency/yr].

SS(T) is concave in T even with the lead-time term: with ``g = aT + bT²`` and ``f = √g``,
``f'' = (2 g g'' − g'²) / (4 g^1.5) = −a² / (4 g^1.5) ≤ 0``.  So one concave curve carries
both terms (pure √T when σ_L = 0, linear in T when there is no demand variance).

The curve is interpolated between breakpoints ``0, t_min … t_max`` spaced geometrically
(``inventory.safety_stock_breakpoints`` points in all, 0 included): ``t_min`` is the
smallest single customer demand d can serve, ``t_max`` the least of d's largest capacity and
all the demand it can reach.  Geometric spacing bounds the relative error the same way on
every segment (for √T it depends only on the ratio between breakpoints); chords of a
concave curve lie below it, so the model's cost under-states SS between breakpoints by at
most the reported ``max_rel_error`` on ``[t_min, t_max]``.  Below ``t_min`` (a DC serving
part of one customer) the chord through 0 may under-state it more; the report flags that.

Minimising a concave piecewise-linear cost needs binaries (HiGHS has no SOS): the
incremental ("delta") formulation with ``ss_seg[k]`` units/yr on segment k and binary
``ss_fill[k]`` = segment k is full, so that segment k+1 may be used:
``ss_seg[k] ≥ Δ_k ss_fill[k]``, ``ss_seg[k+1] ≤ Δ_{k+1} ss_fill[k]``,
``Σ_k ss_seg[k] = T`` and ``ss_seg[0] ≤ Δ_0 × Σ_options open[d]`` (no stock at a closed DC).
Cost ``safety_stock`` = Σ_k slope_k × ss_seg[k] × unit_value × holding_rate [currency/yr].
Controlled by ``inventory.safety_stock``.

Limits, stated: the curve prices a DC's pooled variance as α × T, the average variance per unit
of the customers it can reach.  Under a constant coefficient of variation a large customer
carries more variance per unit than a small one, so for one DC the curve can be well off the
exact pooled figure of the customers it actually serves (on the demo case the exact figure is
34 % below to 42 % above the curve for single DCs and products, 1 % above it in total); the
report shows both.  Customers split between DCs are
pooled in the exact figure as fixed fractions of each day's demand.

Solving aids (:func:`prepare_solve`, HiGHS level, optimum unchanged): a start network priced at
its true safety-stock cost, and pooling cuts (the greedy/Lovász inequalities of the
submodular set function "cost of the customers a DC serves", :func:`_separate`) separated on
the LP relaxation; without them the relaxation sees only each curve's chord over
[0, t_max] and the demo takes tens of seconds instead of well under one.
"""

from __future__ import annotations

import time
from statistics import NormalDist

import highspy
import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term
from netopt.model.openings import option_terms

DAYS_PER_YEAR = 365.0


def z_value(cycle_service_level: float) -> float:
    """Safety factor z = Φ⁻¹(CSL) of the standard normal distribution (dimensionless)."""
    return float(NormalDist().inv_cdf(float(cycle_service_level)))


def ss_units(t, alpha, lead_days, lead_sd_days, z):
    """Safety stock [units] at throughput ``t`` [units/yr] by the model's pooling (variance α·t).

    ``alpha`` [units/yr] is the variance per unit of annual demand; lead times in days.
    """
    t = np.asarray(t, dtype=float)
    var = lead_days * alpha * t / DAYS_PER_YEAR + (t / DAYS_PER_YEAR) ** 2 * lead_sd_days**2
    return z * np.sqrt(np.maximum(var, 0.0))


def ss_units_exact(annual_variance, t, lead_days, lead_sd_days, z):
    """Safety stock [units] = z √(L σ_d² + d̄² σ_L²) from a pooled annual variance [units²/yr²].

    σ_d² = annual_variance / 365 (independent days), d̄ = t / 365 [units/day].
    """
    var = (
        lead_days * np.asarray(annual_variance, float) / DAYS_PER_YEAR
        + (np.asarray(t, float) / DAYS_PER_YEAR) ** 2 * lead_sd_days**2
    )
    return z * np.sqrt(np.maximum(var, 0.0))


def breakpoints(t_min: float, t_max: float, count: int) -> np.ndarray:
    """Throughputs [units/yr] of the curve's breakpoints: 0, then geometric from t_min to t_max."""
    count = max(2, int(count))
    if count == 2 or not (0 < t_min < t_max):
        return np.array([0.0, float(t_max)])
    return np.concatenate([[0.0], np.geomspace(float(t_min), float(t_max), count - 1)])


def max_rel_error(
    bp: np.ndarray, t_lo: float, alpha: float, lead_days: float, lead_sd_days: float, z: float, samples: int = 400
) -> float:
    """Largest (curve − chord)/curve [ratio] of the interpolation through ``bp`` over [t_lo, bp[-1]].

    Sampled geometrically, ``samples`` points per segment (the error is smooth inside a segment).
    """
    t_hi = float(bp[-1])
    if not (0 < t_lo < t_hi):
        return 0.0
    x = np.unique(np.concatenate([np.geomspace(t_lo, t_hi, samples * (len(bp) - 1)), bp[(bp >= t_lo)]]))
    f = ss_units(x, alpha, lead_days, lead_sd_days, z)
    chord = np.interp(x, bp, ss_units(bp, alpha, lead_days, lead_sd_days, z))
    ok = f > 0
    return float(np.max((f[ok] - chord[ok]) / f[ok])) if ok.any() else 0.0


def curves(net) -> pd.DataFrame:
    """One safety-stock curve per (DC, finished product) the DC can deliver to customers.

    Columns: dc, product, z, lead_days, lead_sd_days (days), lead_origin, lead_mode (the
    fastest inbound lane), alpha (units/yr), demand_reach (units/yr), t_min, t_max (units/yr),
    unit_holding (currency per unit held per year = unit_value × holding_rate),
    breakpoints (array, units/yr), ss_at_breakpoints (array, units), max_rel_error (ratio).
    Curves whose safety stock is 0 everywhere (no demand variance, no lead-time spread) are left out.
    """
    cols = [
        "dc",
        "product",
        "z",
        "lead_days",
        "lead_sd_days",
        "lead_origin",
        "lead_mode",
        "alpha",
        "demand_reach",
        "t_min",
        "t_max",
        "unit_holding",
        "breakpoints",
        "ss_at_breakpoints",
        "max_rel_error",
    ]
    arcs = net.arcs
    inv = net.settings["inventory"]
    out_arcs = arcs[arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")]
    if out_arcs.empty:
        return pd.DataFrame(columns=cols)
    z = z_value(inv["cycle_service_level"])
    count = int(inv["safety_stock_breakpoints"])
    reach = out_arcs[["origin", "destination", "product"]].drop_duplicates()
    dem = net.demand[["customer", "product", "quantity", "demand_cv"]]
    reach = reach.merge(dem, left_on=["destination", "product"], right_on=["customer", "product"])
    reach = reach[reach["quantity"] > 0]
    reach["var"] = (reach["demand_cv"].to_numpy(float) * reach["quantity"].to_numpy(float)) ** 2
    g = reach.groupby(["origin", "product"]).agg(q=("quantity", "sum"), var=("var", "sum"), t_min=("quantity", "min"))
    g = g.reset_index().rename(columns={"origin": "dc"})

    # Fastest inbound lane per (DC, product); ties go to the cheaper arc.
    inb = arcs[arcs["destination_kind"].eq("dc")][
        ["origin", "origin_kind", "destination", "mode", "product", "transit_days", "unit_cost"]
    ]
    inb = inb.sort_values(["destination", "product", "transit_days", "unit_cost", "origin", "mode"])
    fastest = inb.drop_duplicates(["destination", "product"]).rename(columns={"destination": "dc"})
    g = g.merge(fastest, on=["dc", "product"], how="inner")
    sd = net.suppliers.set_index(["supplier", "product"])["lead_time_sd_days"]
    sd = pd.to_numeric(sd, errors="coerce").fillna(0.0)
    is_sup = g["origin_kind"].eq("supplier").to_numpy()
    g["lead_sd_days"] = 0.0
    if is_sup.any():
        g.loc[is_sup, "lead_sd_days"] = (
            sd.reindex(pd.MultiIndex.from_frame(g.loc[is_sup, ["origin", "product"]])).fillna(0.0).to_numpy(float)
        )

    cap = net.options.groupby("dc")["capacity"].max()
    pinfo = net.products.set_index("product")
    rows = []
    for r in g.itertuples(index=False):
        alpha = float(r.var) / float(r.q) if r.q > 0 else 0.0
        t_max = float(min(float(cap.get(r.dc, np.inf)), float(r.q)))
        if t_max <= 0:
            continue
        lead, lsd = float(r.transit_days), float(r.lead_sd_days)
        if float(ss_units(t_max, alpha, lead, lsd, z)) <= 0:
            continue
        bp = breakpoints(min(float(r.t_min), t_max), t_max, count)
        ssb = ss_units(bp, alpha, lead, lsd, z)
        holding = float(pinfo.loc[r.product, "unit_value"]) * float(pinfo.loc[r.product, "holding_rate"])
        t_lo = min(float(r.t_min), t_max)
        rows.append(
            (
                r.dc,
                r.product,
                z,
                lead,
                lsd,
                r.origin,
                r.mode,
                alpha,
                float(r.q),
                t_lo,
                t_max,
                holding,
                bp,
                ssb,
                max_rel_error(bp, t_lo, alpha, lead, lsd, z),
            )
        )
    return pd.DataFrame(rows, columns=cols)


def pwl_units(curve, t) -> np.ndarray:
    """The model's piecewise-linear safety stock [units] of one curve (a ``curves`` row) at ``t`` [units/yr]."""
    return np.interp(np.asarray(t, float), curve.breakpoints, curve.ss_at_breakpoints)


def segment_table(cv: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The model's segments and fill binaries of every curve, in variable order.

    Segments: dc, product, segment (0 = from zero throughput), curve (row of ``cv``), start and
    width (units/yr), cost_per_unit (currency/yr per unit/yr of throughput on the segment).
    Fills: dc, product, segment, curve, one per segment but the last.
    """
    seg_rows, fill_rows = [], []
    for i, c in enumerate(cv.itertuples(index=False)):
        bp = c.breakpoints
        width = np.diff(bp)
        slope = np.diff(c.ss_at_breakpoints) / width
        for k in range(len(width)):
            seg_rows.append((c.dc, c.product, k, i, float(bp[k]), float(width[k]), float(slope[k]) * c.unit_holding))
            if k < len(width) - 1:
                fill_rows.append((c.dc, c.product, k, i))
    return (
        pd.DataFrame(seg_rows, columns=["dc", "product", "segment", "curve", "start", "width", "cost_per_unit"]),
        pd.DataFrame(fill_rows, columns=["dc", "product", "segment", "curve"]),
    )


def add(b: Builder) -> None:
    """Variables ``ss_seg`` (units/yr per segment), binaries ``ss_fill``; cost ``safety_stock``."""
    net = b.net
    if not bool(net.settings["inventory"]["safety_stock"]):
        return
    cv = curves(net)
    if cv.empty:
        return
    seg, fill = segment_table(cv)
    # Labels keep the segment data (units/yr, currency per unit of throughput) for the solving aids.
    b.add_vars("ss_seg", seg, ub=seg["width"].to_numpy(float))
    si = np.arange(len(seg))
    curve_of = seg["curve"].to_numpy(int)
    labels = cv[["dc", "product"]]

    # Σ segments = the DC's deliveries of the product to customers (units/yr).
    arcs = net.arcs
    out = np.flatnonzero((arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")).to_numpy())
    pos = pd.Series(np.arange(len(cv)), index=pd.MultiIndex.from_frame(labels))
    r_out = pos.reindex(pd.MultiIndex.from_frame(arcs.iloc[out][["origin", "product"]])).fillna(-1).to_numpy(int)
    ok = r_out >= 0
    b.add_rows(
        "ss_throughput",
        labels,
        [Term("ss_seg", si, np.ones(len(si)), curve_of), Term("flow", out[ok], -np.ones(int(ok.sum())), r_out[ok])],
        "==",
        0.0,
        elastic=False,
    )

    # First segment only at an open DC.
    first = np.flatnonzero(seg["segment"].to_numpy(int) == 0)
    rows = np.arange(len(first))
    b.add_rows(
        "ss_open_link",
        labels.iloc[seg["curve"].to_numpy(int)[first]].reset_index(drop=True),
        [
            Term("ss_seg", first, np.ones(len(first)), rows),
            option_terms(b, seg["dc"].to_numpy()[first], rows, -seg["width"].to_numpy(float)[first]),
        ],
        "<=",
        0.0,
        elastic=False,
    )

    # Segments fill in order (incremental formulation).
    if len(fill):
        b.add_vars("ss_fill", fill[["dc", "product", "segment"]], binary=True)
        fi = np.arange(len(fill))
        key = pd.Series(si, index=pd.MultiIndex.from_frame(seg[["curve", "segment"]]))
        this = key.reindex(pd.MultiIndex.from_arrays([fill["curve"], fill["segment"]])).to_numpy(int)
        nxt = key.reindex(pd.MultiIndex.from_arrays([fill["curve"], fill["segment"] + 1])).to_numpy(int)
        w_this = seg["width"].to_numpy(float)[this]
        w_next = seg["width"].to_numpy(float)[nxt]
        lab = fill[["dc", "product", "segment"]]
        b.add_rows(
            "ss_fill_full",
            lab,
            [Term("ss_seg", this, np.ones(len(fi)), fi), Term("ss_fill", fi, -w_this, fi)],
            ">=",
            0.0,
            elastic=False,
        )
        b.add_rows(
            "ss_fill_next",
            lab,
            [Term("ss_seg", nxt, np.ones(len(fi)), fi), Term("ss_fill", fi, -w_next, fi)],
            "<=",
            0.0,
            elastic=False,
        )

    b.add_cost("safety_stock", Term("ss_seg", si, seg["cost_per_unit"].to_numpy(float)))


# ------------------------------------------------------------------ held networks: one line per curve


def held_lines(net, base_flows: pd.DataFrame) -> pd.DataFrame:
    """Safety stock of a held network as one line per curve, taken at the base throughput.

    For each (DC, product) curve the line is the piecewise-linear segment that holds the base's
    throughput ``t0``, extended: ``units(T) = intercept + slope × T``.  The curve is concave, so
    the line lies on or above it everywhere and touches it at ``t0``: a held re-solve prices
    stock exactly at the base and never below the curve elsewhere, and stays a linear program.
    Columns: dc, product, t0 (units/yr), intercept (units), slope (units per unit/yr),
    unit_holding (currency per unit per year).
    """
    cols = ["dc", "product", "t0", "intercept", "slope", "unit_holding"]
    cv = curves(net)
    if cv.empty:
        return pd.DataFrame(columns=cols)
    out = base_flows[(base_flows["origin_kind"] == "dc") & (base_flows["destination_kind"] == "customer")]
    t0 = out.groupby(["origin", "product"])["quantity"].sum()
    rows = []
    for c in cv.itertuples(index=False):
        t = float(t0.get((c.dc, c.product), 0.0))
        bp, ss = np.asarray(c.breakpoints, float), np.asarray(c.ss_at_breakpoints, float)
        k = int(np.clip(np.searchsorted(bp, t, side="right") - 1, 0, len(bp) - 2))
        slope = (ss[k + 1] - ss[k]) / (bp[k + 1] - bp[k])
        rows.append((c.dc, c.product, t, float(ss[k] - slope * bp[k]), float(slope), float(c.unit_holding)))
    return pd.DataFrame(rows, columns=cols)


def add_held_lines(b: Builder, lines: pd.DataFrame) -> None:
    """Cost ``safety_stock`` = Σ holding × (intercept × open[d] + slope × deliveries of d) [currency/yr].

    The intercept rides on the DC's opening options, so a DC taken out (opening bound set to
    0) holds no stock; the slope rides on the DC's deliveries to customers.
    """
    if lines.empty:
        return
    arcs = b.net.arcs
    out = np.flatnonzero((arcs["origin_kind"].eq("dc") & arcs["destination_kind"].eq("customer")).to_numpy())
    key = pd.MultiIndex.from_frame(arcs.iloc[out][["origin", "product"]])
    ln = lines.set_index(["dc", "product"])
    slope = (ln["slope"] * ln["unit_holding"]).reindex(key).fillna(0.0).to_numpy(float)
    nz = slope != 0
    b.add_cost("safety_stock", Term("flow", out[nz], slope[nz]))
    per_dc = (ln["intercept"] * ln["unit_holding"]).groupby(level=0).sum()
    o = b.net.options
    coef = o["dc"].map(per_dc).fillna(0.0).to_numpy(float)
    nzo = np.flatnonzero(coef)
    b.add_cost("safety_stock", Term("open", nzo, coef[nzo]))


def held_lines_cost(lines: pd.DataFrame, tables: dict[str, pd.DataFrame]) -> float:
    """The held network's safety-stock cost recomputed from result tables (currency/yr), for verification."""
    if lines.empty:
        return 0.0
    f = tables["flows"]
    out = f[(f["origin_kind"] == "dc") & (f["destination_kind"] == "customer")]
    t = out.groupby(["origin", "product"])["quantity"].sum()
    open_dcs = set(tables["dcs"].loc[tables["dcs"]["open"], "dc"])
    total = 0.0
    for r in lines.itertuples(index=False):
        units = (r.intercept if r.dc in open_dcs else 0.0) + r.slope * float(t.get((r.dc, r.product), 0.0))
        total += units * r.unit_holding
    return float(total)


# ------------------------------------------------------------------ solving aids (HiGHS level)


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
