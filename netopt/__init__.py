"""netopt: supply-chain network and sourcing design with Pyomo and HiGHS.

Load a case with :func:`load_case` (a folder of CSV files with ``settings.toml``, or
one ``.xlsx`` workbook); bad input raises :class:`CaseError` listing every problem.
"""

from netopt.case import Case, CaseError, Problem
from netopt.io import load_case

__version__ = "0.1.0"

__all__ = ["Case", "CaseError", "Problem", "load_case", "make_case", "solve", "Result", "run_scenarios", "__version__"]

# --- further public entry points (solve, run, stress, ...) are added below this line.
from netopt.api import Result, solve  # noqa: E402
from netopt.frames import make_case  # noqa: E402
from netopt.scenarios import run_scenarios  # noqa: E402
