"""The compiled model as a linear program over fixed openings, and its tight relaxation.

:class:`OpeningsProgram` copies the compiled MIP (same columns) into its own HiGHS without the
strong linking rows (``dc_customer_link``): with the openings y fixed they are bounds, so a plan's
cost is this LP's optimum, re-solved warm by dual simplex after each change of y.  Rows on the
openings alone (open-count limits, one size per DC) are free here and checked on y directly.

:meth:`OpeningsProgram.strong_relaxation` solves the LP relaxation of the whole tight model without
building it: it starts from the aggregate rows and adds the linking rows the optimum violates, round
after round (Kelley's cutting-plane method over a known family of valid rows, J. SIAM 8(4), 1960,
from memory), until none is violated or a round raises the bound by less than ``TAIL_OFF``.  Every
round's optimum is a lower bound of the MIP.  :func:`reduced_cost_fixing` then fixes the openings
its reduced costs prove no cheaper plan changes.

| symbol | meaning | unit | name in code |
|---|---|---|---|
| z_LP | the relaxation's optimum (a lower bound) | currency/yr | ``strong_relaxation()[0]`` |
| r_o | reduced cost of opening option o there | currency/yr | ``OpeningsProgram.reduced_cost`` |
| z* | cost of the best known plan | currency/yr | ``best`` |
"""

from __future__ import annotations

import time

import highspy
import numpy as np
from scipy import sparse

from netopt.engine.highs import HighsModel, pass_matrices
from netopt.engine.highs_check import require_ok

TAIL_OFF = 1e-5  # the relaxation stops adding linking rows once a round raises its bound by less (relative)


class OpeningsProgram:
    """The compiled model as a linear program with the openings fixed, held in its own HiGHS."""

    def __init__(self, hm: HighsModel):
        lp = hm.highs.getLp()
        n, m = int(lp.num_col_), int(lp.num_row_)
        A = sparse.csc_matrix(
            (np.asarray(lp.a_matrix_.value_), np.asarray(lp.a_matrix_.index_), np.asarray(lp.a_matrix_.start_)),
            shape=(m, n),
        )
        self.open_cols = hm.col_of["open"]
        is_open = np.zeros(n, dtype=bool)
        is_open[self.open_cols[self.open_cols >= 0]] = True
        R = A.tocsr()
        nnz_other = np.asarray(R[:, ~is_open].getnnz(axis=1)).ravel() if n else np.zeros(m, int)
        only_open = (nnz_other == 0) & (np.diff(R.indptr) > 0)
        drop = np.zeros(m, dtype=bool)
        link = hm.rows_of("dc_customer_link")
        drop[link[link >= 0]] = True
        keep = np.flatnonzero(~drop)
        self.link = R[drop]  # the strong linking rows left out (≤ 0 each), for the relaxation
        self.link_rows = np.flatnonzero(drop)  # their rows in the compiled model
        self.kept = R[keep]
        self.new_row = -np.ones(m, dtype=np.int64)
        self.new_row[keep] = np.arange(len(keep))
        row_lo, row_hi = np.asarray(lp.row_lower_, float), np.asarray(lp.row_upper_, float)
        # Rules on the openings alone, checked on y: lo ≤ G y ≤ hi.
        self.G = R[only_open][:, self.open_cols].tocsr()
        self.g_lo, self.g_hi = row_lo[only_open], row_hi[only_open]
        self.cost = np.asarray(lp.col_cost_, float)
        self.col_lo, self.col_hi = np.asarray(lp.col_lower_, float), np.asarray(lp.col_upper_, float)
        self.row_lo, self.row_hi, self.offset = row_lo[keep], row_hi[keep], float(lp.offset_)
        self.h = pass_matrices(
            self.cost, self.kept, self.row_lo, self.row_hi, self.col_lo, self.col_hi, offset=self.offset
        )
        # The rules on the openings alone are checked on y (rule_violation): free rows here, so a start
        # that breaks them (every DC open against an open-count limit) can still be priced.
        free = self.new_row[np.flatnonzero(only_open)].astype(np.int32)
        if len(free):
            k = len(free)
            require_ok(
                self.h.changeRowsBounds(k, free, np.full(k, -highspy.kHighsInf), np.full(k, highspy.kHighsInf)),  # type: ignore[attr-defined]
                "free the rows on the openings alone",
            )
        self.h.setOptionValue("presolve", "off")
        self.evaluations = 0
        self.reduced_cost = np.zeros(0)  # the relaxation's reduced costs (reduced-cost fixing)

    def strong_relaxation(self, deadline: float) -> tuple[float, np.ndarray | None, np.ndarray, bool, int]:
        """The LP relaxation of the whole model, strong linking rows added as they are violated.

        Returns (bound, solution, linking row added (per row of ``link``), complete, rounds).  Every round's optimum is a valid lower
        bound of the MIP (a relaxation of it); once no linking row is violated it is the bound of the
        full tight relaxation.  Stops early (still a bound) at ``deadline`` or when a round raises the bound by
        less than ``TAIL_OFF`` (the usual tailing-off of a cutting-plane loop).
        """
        h = pass_matrices(self.cost, self.kept, self.row_lo, self.row_hi, self.col_lo, self.col_hi, offset=self.offset)
        used = np.zeros(self.link.shape[0], dtype=bool)
        rounds, bound, x, last = 0, -np.inf, None, -np.inf
        while True:
            run = h.run()
            rounds += 1
            if run == highspy.HighsStatus.kError or h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
                return -np.inf, None, used, False, rounds
            bound = float(h.getInfo().objective_function_value)
            x = np.asarray(h.getSolution().col_value, float)
            self.reduced_cost = np.asarray(h.getSolution().col_dual, float)  # of this round's optimum
            viol = (self.link @ x > 1e-6) & ~used
            if not viol.any():
                return bound, x, used, True, rounds
            if time.perf_counter() >= deadline or bound - last < TAIL_OFF * max(1.0, abs(bound)):
                return bound, x, used, False, rounds
            last = bound
            sub = self.link[viol].tocsr()
            k = sub.shape[0]
            require_ok(
                h.addRows(
                    k,
                    np.full(k, -highspy.kHighsInf),
                    np.zeros(k),
                    sub.nnz,
                    sub.indptr[:-1].astype(np.int32),
                    sub.indices.astype(np.int32),
                    sub.data.astype(float),
                ),
                "add the violated linking rows",
            )
            used |= viol

    def rule_violation(self, y: np.ndarray) -> float:
        """How far y breaks the rules on the openings alone (0: none)."""
        if self.G.shape[0] == 0:
            return 0.0
        g = self.G @ y
        return float(np.maximum(self.g_lo - g, 0).sum() + np.maximum(g - self.g_hi, 0).sum())

    def price(self, y_bounds: np.ndarray) -> tuple[float, highspy.HighsSolution | None]:
        """Cost of the program with the option columns fixed at ``y_bounds`` (inf: infeasible)."""
        cols = self.open_cols[self.open_cols >= 0].astype(np.int32)
        v = np.asarray(y_bounds, float)[self.open_cols >= 0]
        require_ok(self.h.changeColsBounds(len(cols), cols, v, v), "fix the openings of a plan")
        run = self.h.run()
        self.evaluations += 1
        if run == highspy.HighsStatus.kError or self.h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
            return float("inf"), None
        return float(self.h.getInfo().objective_function_value), self.h.getSolution()


def reduced_cost_fixing(
    prog: OpeningsProgram,
    oc: np.ndarray,
    y: np.ndarray | None,
    bound: float,
    best: float,
    lo: np.ndarray,
    hi: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Opening options no plan cheaper than ``best`` can change, by the relaxation's reduced costs.

    An option at 0 in the relaxation with reduced cost r > 0: every plan opening it costs at least
    bound + r; when that exceeds ``best``, no better plan opens it (and symmetrically an option at 1
    with r < 0 stays open).  Standard reduced-cost fixing (e.g. Nemhauser & Wolsey, Integer and
    Combinatorial Optimization, 1988, from memory).  Returns (options to close, options to keep open).
    """
    none = np.zeros(0, dtype=np.int64)
    if y is None or not np.isfinite(bound) or not len(prog.reduced_cost):
        return none, none
    r = np.where(oc >= 0, prog.reduced_cost[np.maximum(oc, 0)], 0.0)
    margin = best + 1e-6 * max(1.0, abs(best))
    free = hi > lo
    closed = np.flatnonzero(free & (y <= 1e-9) & (bound + r > margin))
    kept = np.flatnonzero(free & (y >= 1 - 1e-9) & (bound - r > margin))
    return closed, kept
