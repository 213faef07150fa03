"""Why a case is infeasible: re-solve with penalised slack and name the rules and amounts."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.engine.binding import LIFT_SHARE, binding_rows, capacities_at_limit, lift
from netopt.engine.highs import compile_model
from netopt.engine.highs_check import ModelRejected
from netopt.engine.relief import add_slack
from netopt.model import build_model
from netopt.model.safety_stock import prepare_solve
from netopt.network.arcs import Network

TIME_LIMIT_S = 120.0  # each elastic re-solve of the diagnosis (s)


def diagnose_infeasibility(net: Network, formulation: str = "tight", fixed: np.ndarray | None = None) -> pd.DataFrame:
    """Re-solve with penalised slack on demand, capacity, sourcing and service rows.

    Returns one row per violated rule instance: rule, where (the row's labels), and the
    shortfall or excess in the rule's own unit (units/yr, or share-weighted units); then one row
    per binding capacity (``netopt.engine.binding``): the capacity missing, units/yr.
    """
    b = build_model(net, formulation=formulation, elastic=True, fixed_open=fixed)
    try:
        hm = compile_model(b)
        slack = add_slack(
            hm, [f for f, relaxed in b.relaxable.items() if relaxed], lambda r: np.full(len(r), b.elastic_penalty)
        )
        prepare_solve(hm, time_limit=TIME_LIMIT_S, mip_gap=1e-3)  # safety-stock binaries only
        info = hm.solve(time_limit=TIME_LIMIT_S, mip_gap=1e-3)
    except ModelRejected as e:
        return pd.DataFrame([{"rule": "model", "where": "", "amount": float("nan"), "meaning": str(e)}])
    rows = [
        {
            "rule": name,
            "where": _where(b.row_labels[name], k),
            "amount": float("nan"),
            "meaning": "no variable can satisfy this rule (it has no terms)",
        }
        for name, k in b.empty_infeasible
    ]
    if not info.has_solution:
        rows.append(
            {
                "rule": "model",
                "where": "",
                "amount": float("nan"),
                "meaning": f"no elastic solution either ({info.status})",
            }
        )
        return pd.DataFrame(rows)
    vals = hm.values()
    if "unmet" in vals:
        dem = net.demand
        for k in np.flatnonzero(vals["unmet"] > 1e-6):
            rows.append(
                {
                    "rule": "demand_met",
                    "where": f"customer {dem['customer'].iloc[k]}, product {dem['product'].iloc[k]}",
                    "amount": float(vals["unmet"][k]),
                    "meaning": "units/yr of demand that cannot be delivered",
                }
            )
    sol = hm.highs.getSolution()
    x = np.asarray(sol.col_value, dtype=float)
    v = slack.values(x)
    for i in np.flatnonzero(v > 1e-6).tolist():
        name = str(slack.family[i])
        kind = "shortfall below the requirement" if slack.sign[i] > 0 else "excess over the limit"
        rows.append(
            {
                "rule": name,
                "where": _where(b.row_labels[name], int(slack.row[i])),
                "amount": float(v[i]),
                "meaning": kind,
            }
        )
    if rows:
        rows += _binding_capacities(hm, slack, vals, x, sol.row_value)
    else:
        rows.append(
            {
                "rule": "model",
                "where": "",
                "amount": 0.0,
                "meaning": "the elastic model needs no slack; infeasibility comes from binary/count rules",
            }
        )
    return pd.DataFrame(rows)


def _binding_capacities(hm, slack, vals, x, row_value) -> list[dict]:
    """Rows naming each capacity at its limit that serving the demand needs more of (see ``netopt.engine.binding``)."""
    limits = capacities_at_limit(hm, slack, vals, x, row_value)
    if not limits:
        return []
    try:
        lift(hm, slack, limits, LIFT_SHARE * hm.builder.elastic_penalty)
        # A fresh MIP solve: HiGHS re-running a MIP after bound changes was seen to report the old
        # plan with an objective that is not that plan's (highspy 1.16).
        hm.highs.clearSolver()
        info = hm.solve(time_limit=TIME_LIMIT_S, mip_gap=1e-3)
    except ModelRejected:
        info = None
    if info is None or not info.has_solution:
        return [
            {
                "rule": lim.rule,
                "where": lim.where,
                "amount": float("nan"),
                "meaning": f"capacity {lim.capacity:,.6g} units/yr, loaded to its limit (the re-solve allowing more of it "
                "gave no plan, so the need is not known)",
            }
            for lim in limits
        ]
    sol = hm.highs.getSolution()
    x2 = np.asarray(sol.col_value, dtype=float)
    return binding_rows(hm, slack, limits, hm.values(), x2, sol.row_value)


def _where(labels: pd.DataFrame, k: int) -> str:
    """A row's labels as text: ``customer C1, product P``."""
    return ", ".join(f"{c} {labels[c].iloc[k]}" for c in labels.columns)
