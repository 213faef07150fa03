"""The published single-tier time-to-survive / time-to-recover LP (suppliers × products).

Simchi-Levi, Schmidt & Wei (Harvard Business Review, Jan–Feb 2014); Simchi-Levi et al.
(Interfaces 45(5), 2015).  The network version is :func:`netopt.studies.exposure.exposure`.
"""

from __future__ import annotations

import highspy
import numpy as np
import pandas as pd
from scipy import sparse

from netopt.engine.highs import pass_matrices

INF = highspy.kHighsInf
EPS = 1e-9


# ---------------------------------------------------------------------------------- LP helper


def _highs(c, A: sparse.spmatrix, row_lo, row_hi, col_lo, col_hi) -> highspy.Highs:
    """``min c·x, row_lo ≤ A x ≤ row_hi, col bounds`` in HiGHS, through the engine's one hand-over."""
    return pass_matrices(c, A, row_lo, row_hi, col_lo, col_hi)


def _run(h: highspy.Highs) -> tuple[str, np.ndarray]:
    h.run()
    ms = h.getModelStatus()
    if ms == highspy.HighsModelStatus.kOptimal:
        return "optimal", np.asarray(h.getSolution().col_value, float)
    if ms in (highspy.HighsModelStatus.kInfeasible, highspy.HighsModelStatus.kUnboundedOrInfeasible):
        return "infeasible", np.array([])
    return h.modelStatusToString(ms), np.array([])


# ---------------------------------------------------------------------------------- single tier


def single_tier_exposure(
    capacity: dict[str, float],
    demand: dict[str, float],
    inventory: dict[str, float],
    loss: dict[str, float],
    active: dict[str, set[tuple[str, str]]],
    ttr: dict[str, float],
    tts_cap: float = 999.0,
) -> pd.DataFrame:
    """The published single-tier TTR and TTS linear programs, one scenario at a time.

    Args:
        capacity: supplier i → c_i, units per period.
        demand: product j → d_j, units per period.
        inventory: product j → s_j, units on hand.
        loss: product j → f_j, money lost per unit of demand not met.
        active: scenario n → set of (supplier, product) links still active (α_ij = 1).
        ttr: scenario n → t⁽ⁿ⁾, periods the disruption lasts.
        tts_cap: upper bound on t in the TTS model (a scenario with no effect reaches it).

    Returns:
        One row per scenario: performance_impact (money), lost_units, rei (impact / largest
        impact), tts (periods), ttr, shortage_periods = max(TTR − TTS, 0).

    TTR model: min Σ_j f_j l_j s.t. Σ_i α_ij y_ij + l_j ≥ d_j t⁽ⁿ⁾ − s_j (∀j),
    Σ_j α_ij y_ij ≤ c_i t⁽ⁿ⁾ (∀i), y, l ≥ 0.
    TTS model: max t s.t. Σ_i α_ij y_ij ≥ d_j t − s_j (∀j), Σ_j α_ij y_ij ≤ c_i t (∀i), y ≥ 0.
    """
    sup = list(capacity)
    prod = list(demand)
    links = [(i, j) for i in sup for j in prod]
    ny, npr, ns = len(links), len(prod), len(sup)
    rows = []
    for n, act in active.items():
        alpha = np.array([1.0 if lk in act else 0.0 for lk in links])
        # Columns: y (ny), l (npr), t (1).  Rows: demand (npr), capacity (ns).
        A = sparse.lil_matrix((npr + ns, ny + npr + 1))
        for k, (i, j) in enumerate(links):
            A[prod.index(j), k] = alpha[k]
            A[npr + sup.index(i), k] = alpha[k]
        for jj, j in enumerate(prod):
            A[jj, ny + jj] = 1.0
            A[jj, ny + npr] = -demand[j]
        for ii, i in enumerate(sup):
            A[npr + ii, ny + npr] = -capacity[i]
        s = np.array([inventory[j] for j in prod], float)
        f = np.array([loss[j] for j in prod], float)
        row_lo = np.concatenate([-s, np.full(ns, -np.inf)])
        row_hi = np.concatenate([np.full(npr, np.inf), np.zeros(ns)])
        t = float(ttr[n])
        # TTR model: t fixed, minimise lost value.
        h = _highs(
            np.concatenate([np.zeros(ny), f, [0.0]]),
            A,
            row_lo,
            row_hi,
            np.zeros(ny + npr + 1),
            np.concatenate([np.full(ny + npr, np.inf), [t]]),
        )
        h.changeColBounds(ny + npr, t, t)
        status, x = _run(h)
        if status != "optimal":
            raise RuntimeError(f"scenario {n}: TTR model {status}")
        impact = float(f @ x[ny : ny + npr])
        lost = float(x[ny : ny + npr].sum())
        # TTS model: no loss allowed, maximise t (capped).
        h = _highs(
            np.concatenate([np.zeros(ny + npr), [-1.0]]),
            A,
            row_lo,
            row_hi,
            np.zeros(ny + npr + 1),
            np.concatenate([np.full(ny, np.inf), np.zeros(npr), [tts_cap]]),
        )
        status, x = _run(h)
        if status != "optimal":
            raise RuntimeError(f"scenario {n}: TTS model {status}")
        tts = float(x[-1])
        rows.append(
            {
                "scenario": n,
                "performance_impact": impact,
                "lost_units": lost,
                "tts": tts,
                "ttr": t,
                "shortage_periods": max(t - tts, 0.0),
            }
        )
    out = pd.DataFrame(rows)
    top = out["performance_impact"].max() if len(out) else 0.0
    out.insert(3, "rei", out["performance_impact"] / top if top > EPS else 0.0)
    return out


# ---------------------------------------------------------------------------------- network inputs
