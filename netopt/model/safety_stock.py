"""Safety stock at DCs: a concave cost of each DC's throughput (square-root law), piecewise linear.

The curve (pooling, lead time, breakpoints, error bound) is in :mod:`netopt.model.safety_stock_curve`;
held networks price it on one line per curve (:mod:`netopt.model.safety_stock_held`); the solving
aids for its binaries are in :mod:`netopt.model.safety_stock_aids`.  Every public name of those
modules is importable from here as well.  Controlled by ``inventory.safety_stock``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term
from netopt.model.openings import option_terms
from netopt.model.safety_stock_aids import add_pooling_cuts, prepare_solve
from netopt.model.safety_stock_curve import (
    DAYS_PER_YEAR,
    breakpoints,
    curves,
    max_rel_error,
    pwl_units,
    segment_table,
    ss_units,
    ss_units_exact,
    z_value,
)
from netopt.model.safety_stock_held import add_held_lines, held_lines, held_lines_cost

__all__ = [
    "DAYS_PER_YEAR",
    "add",
    "add_held_lines",
    "add_pooling_cuts",
    "breakpoints",
    "curves",
    "held_lines",
    "held_lines_cost",
    "max_rel_error",
    "prepare_solve",
    "pwl_units",
    "segment_table",
    "ss_units",
    "ss_units_exact",
    "z_value",
]


def add(b: Builder) -> None:
    """Safety stock at DCs: a concave piecewise-linear cost of each DC's deliveries (incremental formulation).

    Only with ``inventory.safety_stock``.  One curve per (DC d, finished product p) that d can
    deliver to customers (see :mod:`netopt.model.safety_stock_curve`):
    SS(T) = z √(L α T / 365 + T² σ_L² / 365²) units at throughput T, interpolated between
    breakpoints b_0 = 0 < b_1 < … < b_K, segment widths Δ_k = b_{k+1} − b_k.  Concave costs need
    binaries to be minimised: segment k+1 may carry throughput only once segment k is full.
    Rows marked † are never relaxed in the elastic diagnosis.

        ss_throughput †:  Σ_k s_{d,p,k} − Σ_{a ∈ A_{D→C}(d,p)} x_a = 0          ∀ curve (d, p)
        ss_open_link †:   s_{d,p,0} − Δ_{d,p,0} Σ_{o ∈ O(d)} y_o ≤ 0             ∀ curve (d, p)
        ss_fill_full †:   s_{d,p,k} − Δ_{d,p,k} f_{d,p,k} ≥ 0                    ∀ curve (d, p), k = 0 … K−2
        ss_fill_next †:   s_{d,p,k+1} − Δ_{d,p,k+1} f_{d,p,k} ≤ 0                ∀ curve (d, p), k = 0 … K−2

        0 ≤ s_{d,p,k} ≤ Δ_{d,p,k}

        C[safety_stock] = Σ_{d,p,k} g_{d,p,k} s_{d,p,k},   g_k = (SS(b_{k+1}) − SS(b_k)) / Δ_k × v_p η_p

    A held network (hold-the-network re-solves) has none of these rows: it prices each curve
    on the line through the segment that holds the base throughput T⁰ (``held_lines``):
    C[safety_stock] = Σ_{d,p} v_p η_p (I_{d,p} Σ_{o ∈ O(d)} y_o + S_{d,p} Σ_{a ∈ A_{D→C}(d,p)} x_a).

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | A_{D→C}(d,p) | arcs from DC d to customers carrying p | | arc columns ``origin_kind`` = dc, ``destination_kind`` = customer |
    | s_{d,p,k} | throughput on segment k of the curve | units/yr | variable block ``ss_seg`` |
    | f_{d,p,k} | segment k is full, so k+1 may be used | binary | variable block ``ss_fill`` |
    | b_k, Δ_{d,p,k} | breakpoints; segment width | units/yr | ``segment_table``: ``start``, ``width`` |
    | g_{d,p,k} | holding cost per unit of throughput on segment k | currency/yr per unit/yr | ``segment_table``: ``cost_per_unit`` |
    | z | safety factor Φ⁻¹(cycle service level) | | ``products.cycle_service_level`` (blank = setting ``inventory.cycle_service_level``) |
    | L, σ_L | lead time of the fastest inbound lane, its standard deviation | days | arc column ``transit_days``; ``suppliers.lead_time_sd_days`` |
    | α | variance per unit of demand of the customers d can reach | units/yr | ``curves``: ``alpha`` (``demand.demand_cv``) |
    | v_p η_p | holding cost of one unit for a year | currency/unit/yr | ``curves``: ``unit_holding`` |
    | I_{d,p}, S_{d,p} | intercept and slope of the held line | units, units per unit/yr | ``held_lines``: ``intercept``, ``slope`` |
    """
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
