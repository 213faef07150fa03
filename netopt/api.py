"""The Python API in one place: load a case, solve it, run its scenarios.

Every name here is defined in its pipeline stage and only re-exported, so
``from netopt.api import solve`` and ``netopt.solve`` are the same function.
"""

from netopt.data.case import Case, CaseError, Problem
from netopt.data.frames import make_case
from netopt.data.io import load_case
from netopt.engine.solve import Result, solve
from netopt.studies.scenarios import run_scenarios

__all__ = ["Case", "CaseError", "Problem", "Result", "load_case", "make_case", "run_scenarios", "solve"]
