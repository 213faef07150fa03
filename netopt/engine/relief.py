"""Penalised slack on rows of a model already in HiGHS: one mechanism, two uses.

- the infeasibility diagnosis (:mod:`netopt.engine.diagnose`): every row of every family the
  model marks relaxable gets slack at a large penalty, and the slack the optimum needs names
  what cannot be met and by how much;
- the stress sweep's priced rule relief (:mod:`netopt.studies.sweep_worker`): policy rows of a
  held network get slack priced at each row's shadow price in the base, so a disruption may
  bend a rule where that costs less than losing demand.

Each slack column enters its row once, in a direction that loosens it:

    Σ terms_r + s⁺_r − s⁻_r  (≤ | = | ≥)  rhs_r,     s⁺ only on ≥ and = rows, s⁻ only on ≤ and = rows

| symbol | meaning | unit | name in code |
|---|---|---|---|
| s⁺_r | slack raising the left side of row r (a shortfall below a requirement) | the row's unit | ``Slack.sign == +1`` |
| s⁻_r | slack lowering the left side of row r (an excess over a limit) | the row's unit | ``Slack.sign == −1`` |
| price_r | objective cost per unit of slack | currency/unit | ``Slack.price`` |
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass

import highspy
import numpy as np

from netopt.engine.highs import HighsModel
from netopt.engine.highs_check import require_ok

INF = highspy.kHighsInf


@dataclass
class Slack:
    """Slack columns added to a model in HiGHS, one per (row, loosening direction)."""

    cols: np.ndarray  # HiGHS column of each slack
    family: np.ndarray  # row family of each (demand_met, service_window, …)
    row: np.ndarray  # row of the family's label table
    hrow: np.ndarray  # HiGHS row
    sign: np.ndarray  # +1: raises the row's left side (≥, =); −1: lowers it (≤, =)
    price: np.ndarray  # currency per unit of slack

    def values(self, x: np.ndarray) -> np.ndarray:
        """Slack values in a solution (``x``: every column's value)."""
        return np.asarray(x, dtype=float)[self.cols] if len(self.cols) else np.zeros(0)


def add_slack(
    hm: HighsModel,
    families: Iterable[str],
    price: Callable[[np.ndarray], np.ndarray],
    only: dict[str, np.ndarray] | None = None,
) -> Slack:
    """Add one slack column per row of each family and per direction that loosens it.

    ``price(hrows)`` gives the cost per unit of slack of each HiGHS row (currency/unit);
    ``only[family]``, where given, is a mask over the family's label rows: rows to relax.
    """
    h = hm.highs
    lp = h.getLp()
    lo = np.asarray(lp.row_lower_, dtype=float)
    hi = np.asarray(lp.row_upper_, dtype=float)
    fam, row, hrow, sign = [], [], [], []
    for name in families:
        rows = hm.rows_of(name)
        keep = rows >= 0
        if only is not None and name in only:
            keep &= np.asarray(only[name], dtype=bool)
        for k in np.flatnonzero(keep).tolist():
            r = int(rows[k])
            for s, loosens in ((1.0, lo[r] > -INF), (-1.0, hi[r] < INF)):
                if loosens:
                    fam.append(name)
                    row.append(k)
                    hrow.append(r)
                    sign.append(s)
    n = len(hrow)
    n0 = int(lp.num_col_)
    hrows = np.array(hrow, dtype=np.int32)
    prices = np.asarray(price(hrows), dtype=float) if n else np.zeros(0)
    if n:
        require_ok(
            h.addCols(
                n,
                prices,
                np.zeros(n),
                np.full(n, INF),
                n,
                np.arange(n, dtype=np.int32),
                hrows,
                np.array(sign, dtype=float),
            ),
            "add the slack columns (a slack price may be too large)",
        )
    return Slack(
        cols=np.arange(n0, n0 + n),
        family=np.array(fam, dtype=object),
        row=np.array(row, dtype=np.int64),
        hrow=hrows,
        sign=np.array(sign, dtype=float),
        price=prices,
    )
