"""Why a case is infeasible: re-solve with penalised slack and name the rules and amounts."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.engine.highs import compile_model
from netopt.model import build_model
from netopt.model.safety_stock import prepare_solve
from netopt.network.arcs import Network


def diagnose_infeasibility(net: Network, formulation: str = "tight", fixed: np.ndarray | None = None) -> pd.DataFrame:
    """Re-solve with penalised slack on demand, capacity, sourcing and service rows.

    Returns one row per violated rule instance: rule, where (the row's labels), and the
    shortfall or excess in the rule's own unit (units/yr, or share-weighted units).
    """
    b = build_model(net, formulation=formulation, elastic=True, fixed_open=fixed)
    hm = compile_model(b)
    prepare_solve(hm, time_limit=120.0, mip_gap=1e-3)  # safety-stock binaries only
    info = hm.solve(time_limit=120.0, mip_gap=1e-3)
    rows = []
    if not info.has_solution:
        return pd.DataFrame(
            [
                {
                    "rule": "model",
                    "where": "",
                    "amount": float("nan"),
                    "meaning": f"no elastic solution either ({info.status})",
                }
            ]
        )
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
    for name, v in vals.items():
        if not name.startswith("slack_"):
            continue
        rule = name.split("__", 1)[1]
        labels = b.var_labels[name]
        for k in np.flatnonzero(v > 1e-6):
            lab = ", ".join(f"{c} {labels[c].iloc[k]}" for c in labels.columns if c != "constraint")
            kind = "excess over the limit" if name.startswith("slack_hi") else "shortfall below the requirement"
            rows.append({"rule": rule, "where": lab, "amount": float(v[k]), "meaning": kind})
    if not rows:
        rows.append(
            {
                "rule": "model",
                "where": "",
                "amount": 0.0,
                "meaning": "the elastic model needs no slack; infeasibility comes from binary/count rules",
            }
        )
    return pd.DataFrame(rows)
