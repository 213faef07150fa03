"""Scenario copies: one model of a network under several demand scenarios, the DC decisions shared.

The two-stage stochastic program (first stage: which DCs open, at which size; second stage: every
flow, production and lost unit, per scenario).  Each scenario s is built as an ordinary one-year model
(``build_model`` of its own case, its names ending in ``@s``); :func:`stack_scenarios` gathers them in
one Builder (``netopt.model.phasing.copy_blocks``) and ties their opening decisions together.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.model.core import Builder, Term
from netopt.model.phasing import block, copy_blocks, renamed_terms

OBJECTIVE_KINDS = ("expected", "worst_case")
"""What the two-stage model minimises: the probability-weighted cost, or the largest scenario cost."""


def stack_scenarios(
    builders: list[Builder],
    names: list[str],
    probabilities: np.ndarray,
    objective: str = "expected",
    cost_bound: float = math.inf,
) -> Builder:
    """One model of every scenario's builder (blocks renamed ``name@s``) with their DC decisions shared.

    Objective, ``expected``:  min Σ_s π_s C_s;  or ``worst_case``:  min η, with the epigraph variable η

        worst_case_cost †:    C_s − η ≤ 0               ∀ s        (worst_case only)

    where C_s = Σ_c C_s[c] is scenario s's whole annual cost (its own model's cost components,
    constants included).  Shared DC decisions (non-anticipativity) and, where given, a cost bound:

        same_dcs †:           y_{o,s} − y_{o,0} = 0     ∀ opening option o, s ≥ 1
        scenario_cost_bound:  C_s ≤ B                   ∀ s        where B < ∞

    | symbol | meaning | unit | name in code |
    |---|---|---|---|
    | s, π_s | scenario, its probability | probability | ``names``, ``probabilities`` |
    | C_s[c] | cost component c of scenario s's model | currency/yr | the scenario builder's ``cost`` |
    | y_{o,s} | option o chosen in scenario s | binary | blocks ``open@s`` |
    | η | the largest scenario cost | currency/yr | variable block ``worst_case`` |
    | B | most any scenario may cost | currency/yr | setting ``robust.cost_bound`` |
    """
    if objective not in OBJECTIVE_KINDS:
        raise ValueError(f"objective must be one of {OBJECTIVE_KINDS}, not {objective!r}")
    top = Builder(net=builders[0].net, model=builders[0].model)
    pi = np.asarray(probabilities, float)
    for s, b in enumerate(builders):
        copy_blocks(top, b, s, (lambda comp, s=s: pi[s]) if objective == "expected" else None)
    _same_dcs(top, builders, names)
    labels = pd.DataFrame({"scenario": list(names)})
    cost_terms = [_on_row(t, s) for s, b in enumerate(builders) for t in renamed_terms(b, s)]
    constants = np.array([sum(b.cost_constant.values()) for b in builders], float)
    if objective == "worst_case":
        top.add_vars("worst_case", pd.DataFrame({"scenario": ["(all)"]}))
        eta = Term(
            "worst_case", np.zeros(len(builders), dtype=np.int64), -np.ones(len(builders)), np.arange(len(builders))
        )
        top.add_rows("worst_case_cost", labels, [*cost_terms, eta], "<=", -constants, elastic=False, matrix=True)
        top.add_cost("worst_case", Term("worst_case", np.zeros(1, dtype=np.int64), np.ones(1)))
    if math.isfinite(cost_bound):
        top.add_rows("scenario_cost_bound", labels, cost_terms, "<=", cost_bound - constants, matrix=True)
    top.finish()
    return top


def _on_row(t: Term, s: int) -> Term:
    return Term(t.block, t.idx, np.asarray(t.coef, float), np.full(len(t.idx), s, dtype=np.int64))


def _same_dcs(top: Builder, builders: list[Builder], names: list[str]) -> None:
    o = builders[0].net.options
    for b in builders[1:]:
        if not b.net.options[["dc", "size"]].equals(o[["dc", "size"]]):
            raise ValueError("the scenarios' DC options differ: every scenario must have the same DCs and sizes")
    ns, no = len(builders), len(o)
    if ns < 2 or no == 0:
        return
    labels = pd.concat([o[["dc", "size"]].assign(scenario=names[s]) for s in range(1, ns)]).reset_index(drop=True)
    rows = np.arange((ns - 1) * no).reshape(ns - 1, no)
    terms = []
    for s in range(1, ns):
        terms.append(Term(block("open", s), np.arange(no), np.ones(no), rows[s - 1]))
        terms.append(Term(block("open", 0), np.arange(no), -np.ones(no), rows[s - 1]))
    top.add_rows("same_dcs", labels, terms, "==", 0.0, elastic=False)
