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
