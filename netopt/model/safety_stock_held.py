"""Safety stock of a held network: one line per curve at the base throughput, so a re-solve stays an LP."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term
from netopt.model.safety_stock_curve import curves


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
