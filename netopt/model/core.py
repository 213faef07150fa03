"""Model builder: variable blocks, rows from index arrays, cost components.

Each concept module (openings, flows, capacity, sourcing, service, transport,
inventory) receives a :class:`Builder` and adds its variables, constraints and cost
terms from prepared index arrays.  Rows are built as one ``LinearExpression`` per
row from sorted COO arrays, so there is no per-element filtering in Python.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyomo.environ as pyo
from pyomo.core.expr.numeric_expr import LinearExpression, MonomialTermExpression

from netopt.network.arcs import Network


@dataclass
class Term:
    """Part of a row or of a cost component: ``coef[k] * block[idx[k]]`` (for row ``row[k]``)."""

    block: str
    idx: np.ndarray
    coef: np.ndarray
    row: np.ndarray | None = None


@dataclass
class MatrixRows:
    """A row family kept as index arrays and handed to HiGHS as a matrix (no Pyomo objects):
    ``Σ_k coef[k] · block_k[idx[k]]`` over the entries of row ``row[k]``, (sense) ``rhs``."""

    n: int
    terms: list[Term]
    sense: np.ndarray  # "<=", "==", ">=" per row
    rhs: np.ndarray


@dataclass
class Builder:
    """Holds the Pyomo model and the bookkeeping that maps it back to tables."""

    net: Network
    model: pyo.ConcreteModel = field(default_factory=pyo.ConcreteModel)
    vars: dict[str, list] = field(default_factory=dict)  # block → list of VarData in index order
    var_labels: dict[str, pd.DataFrame] = field(default_factory=dict)
    cost: dict[str, list[Term]] = field(default_factory=dict)
    cost_constant: dict[str, float] = field(default_factory=dict)
    row_labels: dict[str, pd.DataFrame] = field(default_factory=dict)
    elastic: bool = False  # the diagnosis' model shape: unmet demand allowed at elastic_penalty
    elastic_penalty: float = 1e6
    relaxable: dict[str, bool] = field(default_factory=dict)  # row family → relaxed in the diagnosis
    empty_infeasible: list[tuple[str, int]] = field(default_factory=list)
    dc_big_m: float = float("inf")  # units/yr standing in for unlimited DC capacity
    matrix_rows: dict[str, MatrixRows] = field(default_factory=dict)  # families passed as matrices, not Pyomo
    var_bounds: dict[str, tuple[np.ndarray, np.ndarray, bool]] = field(default_factory=dict)  # block → (lb, ub, binary)
    suffix: str = ""  # appended to the model's component names (a period's builder in a model of several periods)

    # ------------------------------------------------------------------ variables
    def add_vars(self, name: str, labels: pd.DataFrame, lb=0.0, ub=None, binary: bool = False) -> list:
        """Add a block of ``len(labels)`` variables; bounds may be arrays (inf = none)."""
        n = len(labels)
        domain = pyo.Binary if binary else pyo.NonNegativeReals
        var = pyo.Var(range(n), domain=domain)
        self.model.add_component(name + self.suffix, var)
        vlist = list(var.values())
        lb_arr = np.broadcast_to(np.asarray(lb, dtype=float), (n,))
        ub_arr = np.broadcast_to(np.asarray(np.inf if ub is None else ub, dtype=float), (n,))
        for v, lo, hi in zip(vlist, lb_arr.tolist(), ub_arr.tolist()):
            if lo != 0.0:
                v.setlb(lo)
            if hi != np.inf:
                v.setub(hi)
        self.vars[name] = vlist
        self.var_labels[name] = labels.reset_index(drop=True)
        lo_b, hi_b = (np.maximum(lb_arr, 0.0), np.minimum(ub_arr, 1.0)) if binary else (lb_arr.copy(), ub_arr.copy())
        self.var_bounds[name] = (lo_b, hi_b, bool(binary))  # as the domain bounds them (binary: within [0, 1])
        return vlist

    def has(self, name: str) -> bool:
        return name in self.vars and len(self.vars[name]) > 0

    # ------------------------------------------------------------------ rows
    def add_rows(
        self,
        name: str,
        labels: pd.DataFrame,
        terms: list[Term],
        sense,
        rhs,
        elastic: bool | None = None,
        matrix: bool = False,
    ) -> None:
        """Add one constraint per row of ``labels``: Σ terms (sense) rhs.

        ``sense`` is "<=", "==" or ">=" (or an array of them); ``rhs`` a scalar or array.
        ``elastic=False`` marks a family the infeasibility diagnosis never relaxes (definitions
        and linking rows); every other family gets penalised slack there
        (``netopt.engine.relief``, added to the compiled model in HiGHS).
        ``matrix=True`` keeps the family as index arrays (:class:`MatrixRows`), appended to the
        compiled matrix by ``netopt.engine.highs.compile_model`` without a Pyomo object per row: for
        the largest, simplest families (demand met, DC balance, the strong linking rows).
        """
        n = len(labels)
        if n == 0:
            return
        rhs = np.broadcast_to(np.asarray(rhs, dtype=float), (n,)).copy()
        senses = np.broadcast_to(np.asarray(sense, dtype=object), (n,))
        terms = [t for t in terms if len(t.idx)]
        self.relaxable[name] = True if elastic is None else bool(elastic)
        if matrix:
            count = np.bincount(np.concatenate([t.row for t in terms]), minlength=n) if terms else np.zeros(n, int)
            for r in np.flatnonzero(count == 0).tolist():
                if _empty_row_fails(senses[r], rhs[r]):
                    self.empty_infeasible.append((name, r))
            self.matrix_rows[name] = MatrixRows(n, terms, np.asarray(senses), rhs)
            self.row_labels[name] = labels.reset_index(drop=True)
            return
        # Entries with a zero coefficient are no entries (the compiler drops them too): a row left with
        # none is a constant row, caught below as an empty row that cannot hold (not a compiler error).
        terms = [t for t in (_nonzero(t) for t in terms) if len(t.idx)]
        row = np.concatenate([t.row for t in terms]) if terms else np.zeros(0, int)
        coef = np.concatenate([t.coef for t in terms]).astype(float) if terms else np.zeros(0)
        vs: list = []
        for t in terms:
            block = self.vars[t.block]
            vs.extend(block[i] for i in t.idx.tolist())
        order = np.argsort(row, kind="stable")
        starts = np.searchsorted(row[order], np.arange(n + 1))
        order_l = order.tolist()
        coef_l = coef.tolist()
        starts_l = starts.tolist()
        rhs_l = rhs.tolist()
        sense_l = list(senses)

        def rule(m, r):
            a, b = starts_l[r], starts_l[r + 1]
            if a == b:
                if _empty_row_fails(sense_l[r], rhs_l[r]):
                    self.empty_infeasible.append((name, r))
                return pyo.Constraint.Skip
            expr = LinearExpression([MonomialTermExpression((coef_l[k], vs[k])) for k in order_l[a:b]])
            s = sense_l[r]
            if s == "<=":
                return expr <= rhs_l[r]
            if s == ">=":
                return expr >= rhs_l[r]
            return expr == rhs_l[r]

        self.model.add_component(name + self.suffix, pyo.Constraint(range(n), rule=rule))
        self.row_labels[name] = labels.reset_index(drop=True)

    # ------------------------------------------------------------------ cost
    def add_cost(self, component: str, term: Term, constant: float = 0.0) -> None:
        """Add ``Σ coef·var`` (and a constant) to cost component ``component`` (currency/yr)."""
        self.cost.setdefault(component, []).append(term)
        self.cost_constant[component] = self.cost_constant.get(component, 0.0) + float(constant)

    def finish(self) -> None:
        """Objective: minimise the total annual landed cost, the sum of every cost component.

            min  Σ_{k ∈ K} C[k]

        K is ``COST_COMPONENTS`` (``netopt.model``); each C[k] = Σ coef · variable + constant
        (currency/yr) is added by the concept module that owns it (``add_cost``) and reported
        separately.  In the elastic diagnosis (``build_model(elastic=True)``, then
        ``netopt.engine.relief.add_slack`` on the compiled model) each row r of a family not
        marked † gets a slack per direction that loosens it, and their penalty joins the objective:

            Σ terms_r + σ⁺_r − σ⁻_r  (≤ | = | ≥)  rhs_r,    σ⁺_r = 0 on ≤ rows, σ⁻_r = 0 on ≥ rows

            C[elastic_slack] = P Σ_r (σ⁺_r + σ⁻_r)

        | symbol | meaning | unit | name in code |
        |---|---|---|---|
        | C[k] | cost component k | currency/yr | ``Builder.cost[k]``, ``Builder.cost_constant[k]`` |
        | σ⁺_r, σ⁻_r | slack raising / lowering the left side of row r | the row's unit | ``Slack`` columns of ``netopt.engine.relief`` (sign +1 / −1) |
        | P | penalty per unit of slack (and of unmet demand) in the diagnosis | currency/unit | ``Builder.elastic_penalty`` |
        """
        coefs: list[float] = []
        vs: list = []
        for terms in self.cost.values():
            for t in terms:
                block = self.vars[t.block]
                nz = np.nonzero(t.coef)[0]
                coefs.extend(t.coef[nz].astype(float).tolist())
                vs.extend(block[i] for i in t.idx[nz].tolist())
        const = float(sum(self.cost_constant.values()))
        expr = LinearExpression([MonomialTermExpression((c, v)) for c, v in zip(coefs, vs)])
        self.model.total_cost = pyo.Objective(expr=expr + const, sense=pyo.minimize)

    def component_values(self, values: dict[str, np.ndarray]) -> dict[str, float]:
        """Evaluate every cost component at a solution (``block → value array``)."""
        out = {}
        for comp, terms in self.cost.items():
            total = self.cost_constant.get(comp, 0.0)
            for t in terms:
                total += float(np.dot(t.coef, values[t.block][t.idx]))
            out[comp] = total
        for comp, c in self.cost_constant.items():
            out.setdefault(comp, c)
        return out


def _nonzero(t: Term) -> Term:
    """``t`` without its zero-coefficient entries."""
    coef = np.broadcast_to(np.asarray(t.coef, dtype=float), np.shape(t.idx))
    keep = coef != 0.0
    if keep.all():
        return t
    return Term(t.block, np.asarray(t.idx)[keep], coef[keep], None if t.row is None else np.asarray(t.row)[keep])


def _empty_row_fails(sense: str, rhs: float) -> bool:
    """A row with no variable (0 sense rhs) that cannot hold."""
    return (sense == "<=" and rhs < -1e-9) or (sense == ">=" and rhs > 1e-9) or (sense == "==" and abs(rhs) > 1e-9)


def group_index(frame: pd.DataFrame, keys: list[str]) -> tuple[pd.DataFrame, np.ndarray]:
    """Group rows of ``frame`` by ``keys``: returns (one label row per group, group id per row)."""
    if frame.empty:
        return pd.DataFrame(columns=keys), np.zeros(0, dtype=int)
    # One sorted factorisation per key column, combined: the groups in lexicographic key order.
    per = [pd.factorize(frame[k].to_numpy(), sort=True) for k in keys]
    if any((c < 0).any() for c, _ in per):  # a missing key value: the general (slower) route
        codes_, uniques = pd.factorize(pd.MultiIndex.from_frame(frame[keys]), sort=True)
        labels = uniques.to_frame(index=False)
        labels.columns = keys
        return labels, codes_.astype(int)
    combined = np.ravel_multi_index(tuple(c for c, _ in per), tuple(max(len(u), 1) for _, u in per))
    first, codes = np.unique(combined, return_inverse=True)
    parts = np.unravel_index(first, tuple(max(len(u), 1) for _, u in per))
    labels = pd.DataFrame({k: np.asarray(u, dtype=object)[p] for k, (_, u), p in zip(keys, per, parts)})
    for k in keys:
        if frame[k].dtype != object:
            labels[k] = labels[k].astype(frame[k].dtype)
    return labels, codes.astype(int).ravel()


def lookup(
    labels: pd.DataFrame, frame: pd.DataFrame, keys: list[str], frame_keys: list[str] | None = None
) -> np.ndarray:
    """Position of each ``frame`` row's key in ``labels`` (−1 where absent)."""
    frame_keys = frame_keys or keys
    pos = pd.Series(np.arange(len(labels)), index=pd.MultiIndex.from_frame(labels[keys]))
    idx = pd.MultiIndex.from_frame(frame[frame_keys].set_axis(keys, axis=1))
    return pos.reindex(idx).fillna(-1).to_numpy(int)
