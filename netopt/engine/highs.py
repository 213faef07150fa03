"""Hand the Pyomo model to HiGHS and read the answer back as arrays.

Route (fastest measured for this model shape): Pyomo's ``LinearStandardFormCompiler``
(mixed form) → one ``highspy.passModel``.  The ``Highs`` object and the column map
are kept, so a hold-the-network LP can be re-solved warm after bound changes.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import highspy
import numpy as np
import pandas as pd
from pyomo.repn.plugins.standard_form import LinearStandardFormCompiler
from scipy import sparse

from netopt.engine.highs_check import ModelRejected, number_trouble, rejected, require_ok
from netopt.model.core import Builder

INF = highspy.kHighsInf


def _new_highs() -> highspy.Highs:
    """A Highs instance; its once-per-process banner on C stdout is silenced (it would break --json)."""
    global _BANNER_DONE
    if _BANNER_DONE:
        return highspy.Highs()
    import os
    import sys

    sys.stdout.flush()
    saved = os.dup(1)
    try:
        with open(os.devnull, "w") as null:
            os.dup2(null.fileno(), 1)
            h = highspy.Highs()
    finally:
        os.dup2(saved, 1)
        os.close(saved)
    _BANNER_DONE = True
    return h


_BANNER_DONE = False


@dataclass
class SolveInfo:
    """Solver outcome. Times in seconds; ``gap`` relative (0.01 = 1 %)."""

    status: str  # optimal | time_limit | infeasible | unbounded | interrupted | … | error (HiGHS failed)
    objective: float
    bound: float
    gap: float
    solver_seconds: float
    nodes: int = 0
    iterations: int = 0
    has_solution: bool = False
    message: str = ""


@dataclass
class HighsModel:
    """A compiled model held in HiGHS, with its column/row maps back to variable blocks."""

    builder: Builder
    highs: highspy.Highs
    col_of: dict[str, np.ndarray]  # block → column index per variable (−1: not in the model)
    row_of: dict[int, int]  # id(ConstraintData) → row
    integrality: np.ndarray
    objective_offset: float
    compile_seconds: float
    pass_seconds: float
    timings: dict = field(default_factory=dict)
    row_index: dict[str, np.ndarray] = field(default_factory=dict, repr=False)  # rows_of cache
    pyomo_rows: list = field(default_factory=list, repr=False)  # ConstraintData of each compiled Pyomo row

    # ---------------------------------------------------------------- solve
    def solve(
        self, time_limit: float | None = None, mip_gap: float | None = None, threads: int | None = None, progress=None
    ) -> SolveInfo:
        h = self.highs
        if time_limit is not None:
            h.setOptionValue("time_limit", float(time_limit))
        if mip_gap is not None:
            h.setOptionValue("mip_rel_gap", float(mip_gap))
        if threads is not None:
            h.setOptionValue("threads", int(threads))
        if progress is not None:
            _attach_progress(h, progress)
        t0 = h.getRunTime()
        run_status = h.run()
        if self._answer_is_stale():  # solved afresh: HiGHS re-solving a changed MIP kept an old plan
            h.clearSolver()
            run_status = h.run()
        elapsed = h.getRunTime() - t0
        return self._info(elapsed, run_failed=run_status == highspy.HighsStatus.kError)

    def _answer_is_stale(self) -> bool:
        """A MIP answer whose plan does not cost what HiGHS reports (seen with highspy 1.16 re-solving a
        MIP after a bound was loosened to ∞: presolve kept the old plan and reported another objective)."""
        h = self.highs
        info = h.getInfo()
        if not self.integrality.any() or info.primal_solution_status != 2:
            return False
        lp = h.getLp()
        x = np.asarray(h.getSolution().col_value, dtype=float)
        cost = float(np.asarray(lp.col_cost_, dtype=float) @ x + lp.offset_)
        reported = float(info.objective_function_value)
        return abs(cost - reported) > 1e-7 * max(1.0, abs(reported))

    def _info(self, elapsed: float, run_failed: bool = False) -> SolveInfo:
        h = self.highs
        ms = h.getModelStatus()
        info = h.getInfo()
        is_mip = bool(self.integrality.any())
        name = {
            highspy.HighsModelStatus.kOptimal: "optimal",
            highspy.HighsModelStatus.kTimeLimit: "time_limit",
            highspy.HighsModelStatus.kInfeasible: "infeasible",
            highspy.HighsModelStatus.kUnboundedOrInfeasible: "infeasible",
            highspy.HighsModelStatus.kUnbounded: "unbounded",
            highspy.HighsModelStatus.kInterrupt: "interrupted",
            highspy.HighsModelStatus.kIterationLimit: "iteration_limit",
            highspy.HighsModelStatus.kSolutionLimit: "solution_limit",
        }.get(ms, "error")
        message = h.modelStatusToString(ms)
        if run_failed or name == "error":
            name = "error"
            message = (
                f"HiGHS failed: its run {'returned an error' if run_failed else 'ended'} with model status "
                f"'{message}', so there is no usable plan"
            )
            trouble = self.number_trouble()
            if trouble:
                message += f"; {trouble}"
        has_sol = info.primal_solution_status == 2 and name != "error"  # kSolutionStatusFeasible
        obj = float(info.objective_function_value) if has_sol else float("nan")
        if is_mip:
            bound = float(info.mip_dual_bound)
            gap = float(info.mip_gap) if has_sol else float("inf")
            nodes = int(info.mip_node_count)
        else:
            bound = obj
            gap = 0.0 if name == "optimal" else float("inf")
            nodes = 0
        if name == "optimal" and is_mip and has_sol:
            gap = max(0.0, abs(obj - bound) / max(1.0, abs(obj)))
        return SolveInfo(
            status=name,
            objective=obj,
            bound=bound,
            gap=gap,
            solver_seconds=elapsed,
            nodes=nodes,
            iterations=int(info.simplex_iteration_count),
            has_solution=has_sol,
            message=message,
        )

    def number_trouble(self) -> str | None:
        """The first number of the model now in HiGHS that HiGHS cannot take (text), or None."""
        lp = self.highs.getLp()
        m, n = int(lp.num_row_), int(lp.num_col_)
        A = sparse.csc_matrix(
            (np.asarray(lp.a_matrix_.value_), np.asarray(lp.a_matrix_.index_), np.asarray(lp.a_matrix_.start_)),
            shape=(m, n),
        )
        return number_trouble(
            np.asarray(lp.col_cost_),
            A,
            np.asarray(lp.row_lower_),
            np.asarray(lp.row_upper_),
            np.asarray(lp.col_lower_),
            np.asarray(lp.col_upper_),
            float(lp.offset_),
            _namer(self.builder, self.col_of, self.pyomo_rows, self.row_index),
        )

    # ---------------------------------------------------------------- values
    def values(self) -> dict[str, np.ndarray]:
        """Solution value of every variable block (units as declared by each block)."""
        x = np.asarray(self.highs.getSolution().col_value, dtype=float)
        if len(x) < len(self.integrality):
            raise ModelRejected("HiGHS holds no solution of the model (its run gave none); no values to read")
        out = {}
        for name, cols in self.col_of.items():
            v = np.zeros(len(cols))
            m = cols >= 0
            v[m] = x[cols[m]]
            out[name] = v
        return out

    # ---------------------------------------------------------------- changes
    def set_bounds(self, block: str, idx: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> None:
        """Change bounds of variables ``block[idx]`` (inf = none)."""
        cols = self.col_of[block][np.asarray(idx, int)]
        m = cols >= 0
        if not m.any():
            return
        lo = np.where(np.isinf(lower), -INF, lower)[m] if np.ndim(lower) else np.full(m.sum(), float(lower))
        hi = (
            np.where(np.isinf(upper), INF, upper)[m]
            if np.ndim(upper)
            else np.full(m.sum(), INF if np.isinf(upper) else float(upper))
        )
        require_ok(
            self.highs.changeColsBounds(
                int(m.sum()), cols[m].astype(np.int32), np.asarray(lo, float), np.asarray(hi, float)
            ),
            f"change the bounds of variables '{block}'",
        )

    def free_rows(self, rows: np.ndarray) -> None:
        """Make rows ``rows`` free (no bounds): left to HiGHS's presolve to remove; indices stay valid."""
        rows = np.asarray(rows, dtype=np.int32)
        if len(rows):
            k = len(rows)
            self.highs.changeRowsBounds(k, rows, np.full(k, -INF), np.full(k, INF))  # type: ignore[attr-defined]

    def set_plan_start(self, values: dict[str, np.ndarray]) -> None:
        """Hand HiGHS a whole plan as its first incumbent: the value of every variable, by block
        (as :meth:`values` returns them from a model with the same blocks and index sets)."""
        n = len(self.integrality)
        x = np.zeros(n)
        for name, cols in self.col_of.items():
            v = values.get(name)
            if v is None or len(v) != len(cols):
                raise ValueError(f"start plan: block '{name}' missing or of another size")
            m = cols >= 0
            x[cols[m]] = np.asarray(v, dtype=float)[m]
        sol = highspy.HighsSolution()
        sol.col_value = x.tolist()
        sol.value_valid = True
        self.highs.setSolution(sol)

    def set_start(self, block: str, values: np.ndarray) -> None:
        """Hand HiGHS a partial start: the values of ``block`` only (HiGHS completes the rest by
        solving the model with those values fixed, and keeps the result as its first incumbent)."""
        cols = self.col_of[block]
        m = cols >= 0
        if m.any():
            self.highs.setSolution(int(m.sum()), cols[m].astype(np.int32), np.asarray(values, dtype=float)[m])

    def relax_integrality(self) -> None:
        """Make every column continuous (after fixing the binaries, the model is an LP)."""
        n = len(self.integrality)
        if self.integrality.any():
            require_ok(
                self.highs.changeColsIntegrality(n, np.arange(n, dtype=np.int32), np.zeros(n, dtype=np.uint8)),
                "make the columns continuous",
            )
            self.integrality = np.zeros(n, dtype=np.uint8)  # now reported as an LP: bound = objective, gap 0

    def row(self, constraint) -> int:
        return self.row_of.get(id(constraint), -1)

    def rows_of(self, name: str) -> np.ndarray:
        """HiGHS row of each label row of constraint family ``name`` (−1 where the row was skipped)."""
        cache = self.row_index
        if name not in cache:
            comp = getattr(self.builder.model, name, None)
            n = len(self.builder.row_labels.get(name, []))
            r = -np.ones(n, dtype=np.int64)
            if comp is not None:
                for k in range(n):
                    if k in comp:
                        r[k] = self.row(comp[k])
            cache[name] = r
        return cache[name]


def compile_model(b: Builder, options: dict | None = None) -> HighsModel:
    """Compile the Pyomo model to matrices and pass them to a new HiGHS instance."""
    t0 = time.perf_counter()
    order = [v for vs in b.vars.values() for v in vs]
    info = LinearStandardFormCompiler().write(b.model, mixed_form=True, column_order=order)
    t1 = time.perf_counter()
    cols = info.columns
    pos = {id(v): k for k, v in enumerate(cols)}
    col_of = {
        name: np.fromiter((pos.get(id(v), -1) for v in vs), dtype=np.int64, count=len(vs))
        for name, vs in b.vars.items()
    }
    n = len(cols)
    lb, ub, integ = np.zeros(n), np.full(n, INF), np.zeros(n, dtype=np.uint8)
    for name, k in col_of.items():  # bounds as add_vars declared them, by whole blocks
        lo, hi, binary = b.var_bounds[name]
        m = k >= 0
        lb[k[m]] = np.where(np.isneginf(lo), -INF, lo)[m]
        ub[k[m]] = np.where(np.isposinf(hi), INF, hi)[m]
        integ[k[m]] = 1 if binary else 0
    A = info.A.tocsc()
    rhs = np.asarray(info.rhs, dtype=float)
    sense = np.array([s for _, s in info.rows], dtype=int)
    row_lo = np.where(sense == 1, -INF, rhs)  # sense: 1 ≤, 0 =, −1 ≥
    row_hi = np.where(sense == -1, INF, rhs)
    c = np.asarray(info.c.toarray()).ravel() if info.c.shape[0] else np.zeros(n)
    if len(c) < n:
        c = np.concatenate([c, np.zeros(n - len(c))])
    offset = float(info.c_offset[0]) if len(info.c_offset) else 0.0
    row_index: dict[str, np.ndarray] = {}
    if b.matrix_rows:
        # Families kept as index arrays: appended below the Pyomo rows; a variable only they use
        # becomes a new column (the compiler leaves out variables no Pyomo row or cost mentions).
        extra = sorted(
            {
                (t.block, int(i))
                for mr in b.matrix_rows.values()
                for t in mr.terms
                for i in t.idx[col_of[t.block][t.idx] < 0]
            }
        )
        for name, i in extra:
            lo, hi, binary = b.var_bounds[name]
            col_of[name][i] = n
            lb = np.append(lb, -INF if np.isneginf(lo[i]) else lo[i])
            ub = np.append(ub, INF if np.isposinf(hi[i]) else hi[i])
            integ = np.append(integ, np.uint8(1 if binary else 0))
            c = np.append(c, 0.0)
            n += 1
        blocks, los, his = [], [], []
        start = A.shape[0]
        for name, mr in b.matrix_rows.items():
            r = np.concatenate([t.row for t in mr.terms]) if mr.terms else np.zeros(0, int)
            k = np.concatenate([col_of[t.block][t.idx] for t in mr.terms]) if mr.terms else np.zeros(0, int)
            v = np.concatenate([t.coef for t in mr.terms]).astype(float) if mr.terms else np.zeros(0)
            used = np.bincount(r, minlength=mr.n) > 0  # rows without a term are left out, as Pyomo skips them
            local = np.cumsum(used) - 1
            m_used = int(used.sum())
            blocks.append(sparse.csr_matrix((v, (local[r], k)), shape=(m_used, n)))
            s_ = mr.sense[used]
            los.append(np.where(s_ == "<=", -INF, mr.rhs[used]))
            his.append(np.where(s_ == ">=", INF, mr.rhs[used]))
            row_index[name] = np.where(used, start + local, -1)
            start += m_used
        top = A.tocsr()
        top.resize((top.shape[0], n))  # the new columns have no entry in the Pyomo rows
        A = sparse.vstack([top, *blocks]).tocsc()
        row_lo = np.concatenate([row_lo, *los])
        row_hi = np.concatenate([row_hi, *his])

    pyomo_rows = [cd for cd, _ in info.rows]
    h = pass_matrices(
        c,
        A,
        row_lo,
        row_hi,
        lb,
        ub,
        integrality=integ,
        offset=offset,
        options=options,
        name=_namer(b, col_of, pyomo_rows, row_index),
    )
    t2 = time.perf_counter()
    row_of = {id(cd): k for k, (cd, _) in enumerate(info.rows)}
    return HighsModel(
        builder=b,
        highs=h,
        col_of=col_of,
        row_of=row_of,
        integrality=integ,
        objective_offset=offset,
        compile_seconds=t1 - t0,
        pass_seconds=t2 - t1,
        row_index=row_index,
        pyomo_rows=pyomo_rows,
    )


def _attach_progress(h: highspy.Highs, progress) -> None:
    """Report MIP progress (elapsed s, best cost, bound, gap) through ``progress(dict)``."""
    try:

        def cb(callback_type, message, data_out, data_in, user_data):
            progress(
                {
                    "elapsed": data_out.running_time,
                    "objective": data_out.objective_function_value,
                    "bound": data_out.mip_dual_bound,
                    "gap": data_out.mip_gap,
                }
            )

        h.setCallback(cb, None)
        h.startCallback(highspy.cb.HighsCallbackType.kCallbackMipImprovingSolution)
        h.startCallback(highspy.cb.HighsCallbackType.kCallbackMipLogging)
    except Exception:  # older highspy without callbacks: no progress lines, solve unaffected
        pass


def pass_matrices(
    c: np.ndarray,
    A,
    row_lo: np.ndarray,
    row_hi: np.ndarray,
    col_lo: np.ndarray,
    col_hi: np.ndarray,
    *,
    integrality: np.ndarray | None = None,
    offset: float = 0.0,
    options: dict | None = None,
    name=None,
) -> highspy.Highs:
    """The one hand-over to HiGHS: ``min c·x + offset`` s.t. ``row_lo ≤ A x ≤ row_hi``, column bounds.

    ``A`` is any scipy sparse matrix; ±inf bounds become HiGHS's infinity.  A quiet,
    single-thread instance (``options`` override).  Used by :func:`compile_model` and by
    studies that state a small LP directly as matrices.

    Raises:
        ModelRejected: a number HiGHS cannot take (:func:`~netopt.engine.highs_check.number_trouble`,
            rows and columns named by ``name(kind, index)``), or HiGHS refused the model itself.
    """
    A = sparse.csc_matrix(A)
    trouble = number_trouble(c, A, row_lo, row_hi, col_lo, col_hi, offset, name)
    if trouble:
        raise rejected(trouble)
    n = A.shape[1]
    lp = highspy.HighsLp()
    lp.num_col_ = n
    lp.num_row_ = A.shape[0]
    lp.col_cost_ = np.asarray(c, dtype=float)
    lp.col_lower_ = np.where(np.isneginf(col_lo), -INF, np.asarray(col_lo, dtype=float))
    lp.col_upper_ = np.where(np.isposinf(col_hi), INF, np.asarray(col_hi, dtype=float))
    lp.row_lower_ = np.where(np.isneginf(row_lo), -INF, np.asarray(row_lo, dtype=float))
    lp.row_upper_ = np.where(np.isposinf(row_hi), INF, np.asarray(row_hi, dtype=float))
    lp.offset_ = float(offset)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = A.indptr.astype(np.int32)
    lp.a_matrix_.index_ = A.indices.astype(np.int32)
    lp.a_matrix_.value_ = A.data.astype(float)
    if integrality is not None and np.any(integrality):
        lp.integrality_ = [
            highspy.HighsVarType.kInteger if i else highspy.HighsVarType.kContinuous for i in integrality
        ]
    h = _new_highs()
    h.setOptionValue("output_flag", False)
    h.setOptionValue("threads", 1)
    for k, v in (options or {}).items():
        h.setOptionValue(k, v)
    if h.passModel(lp) == highspy.HighsStatus.kError:
        raise rejected("HiGHS's own check of the model's numbers failed (it holds an empty model)")
    return h


def _namer(b: Builder, col_of: dict[str, np.ndarray], pyomo_rows: list, row_index: dict[str, np.ndarray]):
    """``name(kind, index)``: a compiled row or column in the case's terms (family or block, and its labels)."""

    def labelled(family: str, frame: pd.DataFrame | None, k: int) -> str:
        if frame is None or k >= len(frame):
            return family
        where = ", ".join(f"{c} {v}" for c in frame.columns if str(v := frame[c].iloc[k]) not in ("", "nan"))
        return f"{family} ({where})" if where else family

    def name(kind: str, i: int) -> str:
        if kind == "column":
            for block, cols in col_of.items():
                hit = np.flatnonzero(cols == i)
                if len(hit):
                    return "variable " + labelled(block, b.var_labels.get(block), int(hit[0]))
            return f"column {i}"
        if i < len(pyomo_rows):
            cd = pyomo_rows[i]
            family = cd.parent_component().local_name
            return "rule " + labelled(family, b.row_labels.get(family), int(cd.index()))
        for family, rows in row_index.items():
            hit = np.flatnonzero(rows == i)
            if len(hit):
                return "rule " + labelled(family, b.row_labels.get(family), int(hit[0]))
        return f"row {i}"

    return name
