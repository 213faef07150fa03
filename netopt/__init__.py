"""netopt: supply-chain network and sourcing design with Pyomo and HiGHS.

Load a case with :func:`load_case` (a folder of CSV files with ``settings.toml``, or
one ``.xlsx`` workbook); bad input raises :class:`CaseError` listing every problem.
Then :func:`solve` it, or :func:`run_scenarios` for the base and its what-ifs.

The package reads as the pipeline (each stage imports only the stages before it):
``data`` (schema, reading, checks) → ``network`` (distances, lanes, arc table) →
``model`` (one module per modelling concept) → ``engine`` (hand-over to HiGHS, solve,
held networks, result tables, verification) → ``studies`` (scenarios, frontier,
resilience) → ``present`` (files, workbook, terminal, report) → ``cli``.
"""

from netopt.api import Case, CaseError, Problem, Result, load_case, make_case, run_scenarios, solve

__version__ = "0.1.0"

__all__ = ["Case", "CaseError", "Problem", "Result", "__version__", "load_case", "make_case", "run_scenarios", "solve"]
