"""``solve(case)`` → :class:`~netopt.engine.result.Result` with tidy DataFrames.

A one-year case (no ``periods`` table) is solved by :func:`netopt.engine.one_year.solve_year`: lanes →
network index sets → Pyomo model → plan search (``netopt.engine.plan_search``) → HiGHS from its plan →
:func:`~netopt.engine.extract.extract` (cost components, result tables, independent verification); an
infeasible case is re-solved elastically to say which demands and rules cannot be met and by how much.
A case with periods is solved by :func:`netopt.engine.horizon.solve_horizon`: every period's network in
one model, linked by the phasing of the DCs and carried stock.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.periods import has_periods
from netopt.engine.diagnose import diagnose_infeasibility
from netopt.engine.horizon import solve_horizon
from netopt.engine.one_year import solve_year
from netopt.engine.result import Result, fixed_options

__all__ = ["Result", "diagnose_infeasibility", "fixed_options", "solve"]


def solve(
    case: Case,
    *,
    time_limit: float | None = None,
    mip_gap: float | None = None,
    threads: int | None = None,
    formulation: str = "tight",
    hold: dict | None = None,
    progress=None,
    lanes: pd.DataFrame | None = None,
    keep_model: bool = False,
    diagnose: bool = True,
    start: dict[str, str | bool] | None = None,
    start_plan: dict[str, np.ndarray] | None = None,
) -> Result:
    """Solve the network design for ``case`` (see :func:`netopt.engine.one_year.solve_year` for the arguments).

    In a case with periods ``hold`` is period → DC decisions (``Result.held_openings()`` of a plan over
    periods: the phasing kept) and ``start_plan`` a whole plan of the same case over periods (e.g. its hold);
    ``start`` (openings alone) is not needed there: without a ``start_plan`` the first plan is built from
    each period's own solve (``netopt.engine.horizon.start_phasing``).
    """
    if not has_periods(case):
        return solve_year(
            case,
            time_limit=time_limit,
            mip_gap=mip_gap,
            threads=threads,
            formulation=formulation,
            hold=hold,
            progress=progress,
            lanes=lanes,
            keep_model=keep_model,
            diagnose=diagnose,
            start=start,
            start_plan=start_plan,
        )
    sset = case.settings["solver"]
    return solve_horizon(
        case,
        time_limit=float(sset["time_limit_s"] if time_limit is None else time_limit),
        mip_gap=float(sset["mip_gap"] if mip_gap is None else mip_gap),
        threads=int(sset["threads"] if threads is None else threads),
        formulation=formulation,
        hold=hold,
        progress=progress,
        lanes=lanes,
        keep_model=keep_model,
        diagnose=diagnose,
        start_plan=start_plan,
    )
