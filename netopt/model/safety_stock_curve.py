"""Safety-stock curve of a DC: the square-root law as a piecewise-linear function of throughput.

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
- ``z = Φ⁻¹(CSL_p)`` (``statistics.NormalDist``), ``CSL_p`` the product's ``products.cycle_service_level``
  (blank = the setting ``inventory.cycle_service_level``).

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

The model's rows built on these curves are in :mod:`netopt.model.safety_stock`.

Limits, stated: the curve prices a DC's pooled variance as α × T, the average variance per unit
of the customers it can reach.  Under a constant coefficient of variation a large customer
carries more variance per unit than a small one, so for one DC the curve can be well off the
exact pooled figure of the customers it actually serves (on the demo case the exact figure is
34 % below to 42 % above the curve for single DCs and products, 1 % above it in total); the
report shows both.  Customers split between DCs are
pooled in the exact figure as fixed fractions of each day's demand.
"""

from __future__ import annotations

from statistics import NormalDist

import numpy as np
import pandas as pd

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
    csl = net.products.set_index("product")["cycle_service_level"]
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
        z = z_value(float(csl.loc[r.product]))
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
