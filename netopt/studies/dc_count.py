"""The DC-count curve: the network solved with exactly N open DCs for N = 1 … N_max.

Each point is one scenario of the case's own vocabulary: the proposed sites added (``add_dc``, when
given) and ``policy`` with ``min_open_dcs = max_open_dcs = N``, applied by
:func:`netopt.studies.scenarios.apply_changes` and solved by :func:`netopt.engine.solve.solve` (verified
like every solve).  The points are independent solves; they run on the local process pool of the
sweeps (:func:`netopt.studies.sweep_exec.run_local`) or in this process.  ``best`` marks the least
total cost among the points with a plan (``delta_to_best`` = total − that least, currency/yr).
"""

from __future__ import annotations

import os

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.engine.solve import solve
from netopt.engine.tables import in_service
from netopt.model import COST_COMPONENTS
from netopt.studies.scenario_defs import Scenario
from netopt.studies.scenarios import apply_changes
from netopt.studies.sweep_exec import check_workers, run_inline, run_local


def count_case(case: Case, n: int, added: list[dict] | None = None) -> Case:
    """The case with the proposed sites added and exactly ``n`` DCs required to be open."""
    changes = [*(added or []), {"kind": "policy", "min_open_dcs": int(n), "max_open_dcs": int(n)}]
    return apply_changes(case, Scenario(f"{n} DCs", changes, source="netopt sites"))


def curve_point(spec: tuple[Case, list[dict]], el: dict) -> dict:
    """One point of the curve (a sweep task: module-level so it pickles): solve with exactly ``el['n']`` DCs."""
    case, added = spec
    n = int(el["n"])
    r = solve(count_case(case, n, added))
    row: dict = {"n_dcs": n, "status": r.status, "total_cost": np.nan, "gap": r.gap}
    row.update({f"cost_{c}": np.nan for c in COST_COMPONENTS})
    row.update({"dcs_open": np.nan, "dcs_open_names": "", "verified": False})
    if r.has_solution:
        cost = r.cost
        row["total_cost"] = float(sum(cost.values()))
        row.update({f"cost_{c}": float(cost.get(c, 0.0)) for c in COST_COMPONENTS})
        d = r.tables["dcs"]
        row["dcs_open"] = int(in_service(d).sum())
        row["dcs_open_names"] = " ".join(d.loc[in_service(d), "dc"].astype(str))
        row["verified"] = bool(r.verification is not None and r.verification.passed)
    return row


def dc_count_curve(
    case: Case, max_dcs: int, added: list[dict] | None = None, workers: int | None = None, min_dcs: int = 1
) -> pd.DataFrame:
    """The ``dc_count_curve`` table for N = ``min_dcs`` … ``max_dcs`` (declared in :mod:`netopt.data.sites_schema`).

    Args:
        added: ``add_dc`` changes of proposed sites (None: the case's DCs only).
        workers: local pool processes (None: one per point up to the cores; 0: in this process).
    """
    check_workers(workers)
    count_case(case, int(max_dcs), added)  # every problem (e.g. more DCs asked than may open) before any solve
    todo = [{"id": n, "n": n} for n in range(int(min_dcs), int(max_dcs) + 1)]
    rows: dict[int, dict] = {}
    spec = (case, list(added or []))
    n_workers = min(len(todo), os.cpu_count() or 1) if workers is None else workers

    def done(el: dict, row: dict) -> None:
        rows[int(el["n"])] = row

    if n_workers <= 1 or len(todo) <= 1:
        run_inline(curve_point, spec, todo, done)
    else:
        run_local(curve_point, spec, todo, n_workers, done)
    table = pd.DataFrame([rows[n] for n in sorted(rows)])
    planned = table["total_cost"].notna()
    least = float(table.loc[planned, "total_cost"].min()) if planned.any() else np.nan
    table["delta_to_best"] = table["total_cost"] - least
    table["best"] = False
    if planned.any():
        table.loc[table.loc[planned, "total_cost"].idxmin(), "best"] = True
    n_case = len(case.tables["dcs"])
    table["dc_set"] = f"the case's {n_case} DCs" + (f" + {len(added)} proposed sites" if added else "")
    order = ["n_dcs", "status", "total_cost", *[f"cost_{c}" for c in COST_COMPONENTS], "delta_to_best", "best"]
    return table[order + ["dcs_open", "dcs_open_names", "gap", "verified", "dc_set"]]
