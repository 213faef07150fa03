"""What HiGHS can take, checked before the hand-over, and its own refusals turned into clear failures.

HiGHS refuses a matrix entry above its option ``large_matrix_value`` (1e15) and then holds an empty
model (a later run says "Empty"); it reads a bound or a cost at or beyond ``infinite_bound`` /
``infinite_cost`` (1e20) as infinite, refuses a lower bound of +∞, and takes NaN silently (a NaN cost
solves "optimally" to garbage).  :func:`number_trouble` finds the first such number of a model before
it is passed; :class:`ModelRejected` carries the reason, in the case's terms, to the caller; and
:func:`require_ok` turns a ``HighsStatus.kError`` of any HiGHS call into that failure, so no change
HiGHS ignored is mistaken for one it made.
"""

from __future__ import annotations

from collections.abc import Callable

import highspy
import numpy as np

LARGEST_COEFFICIENT = 1e15  # HiGHS's default large_matrix_value: a larger |matrix entry| is refused
INFINITE = 1e20  # HiGHS's default infinite_bound and infinite_cost: |value| ≥ this reads as ∞
SCALE_HINT = (
    "an input number (a demand quantity, capacity, bill-of-materials quantity, cost, weight or distance) "
    "is too large for the solver: correct it, or state the case in larger units "
    "(e.g. thousands of units)"
)


class ModelRejected(RuntimeError):
    """HiGHS cannot take the model, or refused a call on it; the message says what and why."""


Namer = Callable[[str, int], str]  # ("row" | "column", index) → text naming it in the case's terms


def _plain(kind: str, i: int) -> str:
    return f"{kind} {i}"


def number_trouble(
    c: np.ndarray,
    A,
    row_lo: np.ndarray,
    row_hi: np.ndarray,
    col_lo: np.ndarray,
    col_hi: np.ndarray,
    offset: float = 0.0,
    name: Namer | None = None,
) -> str | None:
    """The first number of ``min c·x + offset, row_lo ≤ A x ≤ row_hi, col_lo ≤ x ≤ col_hi`` HiGHS
    cannot take (as text naming it), or None.  ``A`` is a scipy sparse matrix; ±inf bounds are fine."""
    name = name or _plain
    coo = A.tocoo()
    vals = np.asarray(coo.data, dtype=float)
    bad = np.flatnonzero(~np.isfinite(vals))
    if len(bad):
        k = int(bad[0])
        return (
            f"a coefficient is {vals[k]} (not a finite number) in {name('row', int(coo.row[k]))}, "
            f"{name('column', int(coo.col[k]))}"
        )
    if len(vals) and np.abs(vals).max() > LARGEST_COEFFICIENT:
        k = int(np.abs(vals).argmax())
        return (
            f"a coefficient of {vals[k]:.4g} in {name('row', int(coo.row[k]))}, {name('column', int(coo.col[k]))} "
            f"is beyond the largest HiGHS accepts (±{LARGEST_COEFFICIENT:.0e})"
        )
    c = np.asarray(c, dtype=float)
    bad = np.flatnonzero(~np.isfinite(c) | (np.abs(c) >= INFINITE))
    if len(bad):
        k = int(bad[0])
        return (
            f"the cost per unit of {name('column', k)} is {c[k]:.3g} (HiGHS reads |cost| ≥ {INFINITE:.0e} as infinite)"
        )
    if not np.isfinite(offset):
        return f"the objective's constant is {offset}"
    for kind, lo, hi in (("row", row_lo, row_hi), ("column", col_lo, col_hi)):
        lo, hi = np.asarray(lo, dtype=float), np.asarray(hi, dtype=float)
        bad = np.flatnonzero(np.isnan(lo) | np.isnan(hi))
        if len(bad):
            return f"a bound of {name(kind, int(bad[0]))} is not a number"
        bad = np.flatnonzero(lo >= INFINITE)
        if len(bad):
            k = int(bad[0])
            return f"the lower bound of {name(kind, k)} is {lo[k]:.3g} (HiGHS reads ≥ {INFINITE:.0e} as +∞)"
        bad = np.flatnonzero(hi <= -INFINITE)
        if len(bad):
            k = int(bad[0])
            return f"the upper bound of {name(kind, k)} is {hi[k]:.3g} (HiGHS reads ≤ −{INFINITE:.0e} as −∞)"
    return None


def rejected(reason: str) -> ModelRejected:
    """The failure for a model HiGHS cannot take because of ``reason``."""
    return ModelRejected(f"HiGHS rejected the model: {reason}; {SCALE_HINT}")


def require_ok(status, what: str) -> None:
    """Raise :class:`ModelRejected` when a HiGHS call (``what``) returned ``HighsStatus.kError``."""
    if status == highspy.HighsStatus.kError:
        raise ModelRejected(f"HiGHS refused to {what} (it returned an error and left the model unchanged)")
