"""The Python API in one place: load a case, solve it, cost today's flows (``cost_current_flows``), run its
scenarios, plan a network for uncertain demand (``run_robust``: the study's tables as DataFrames).

Every name here is defined in its pipeline stage and only re-exported, so
``from netopt.api import solve`` and ``netopt.solve`` are the same function.
"""

from netopt.data.case import Case, CaseError, Problem
from netopt.data.frames import make_case
from netopt.data.io import load_case
from netopt.engine.baseline import cost_current_flows
from netopt.engine.solve import Result, solve
from netopt.studies.classify import classify_items
from netopt.studies.dc_count import dc_count_curve
from netopt.studies.robust import RobustStudy, run_robust
from netopt.studies.scenarios import run_scenarios
from netopt.studies.sites import propose_sites

__all__ = [
    "Case",
    "CaseError",
    "Problem",
    "Result",
    "RobustStudy",
    "classify_items",
    "cost_current_flows",
    "dc_count_curve",
    "load_case",
    "make_case",
    "propose_sites",
    "run_robust",
    "run_scenarios",
    "solve",
]
