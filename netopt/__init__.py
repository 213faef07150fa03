"""netopt: supply-chain network and sourcing design with Pyomo and HiGHS.

Load a case with :func:`load_case` (a folder of CSV files with ``settings.toml``, or
one ``.xlsx`` workbook); bad input raises :class:`CaseError` listing every problem.
Then :func:`solve` it, or :func:`run_scenarios` for the base and its what-ifs;
:func:`classify_items` (ABC/XYZ), :func:`propose_sites` and :func:`dc_count_curve` plan before that.

The package reads as the pipeline (each stage imports only the stages before it):
``data`` (schema, reading, checks) → ``network`` (distances, lanes, arc table) →
``model`` (one module per modelling concept) → ``engine`` (hand-over to HiGHS, solve,
held networks, result tables, verification) → ``studies`` (scenarios, frontier,
resilience) → ``present`` (files, workbook, terminal, report) → ``cli``.

The names below are loaded from :mod:`netopt.api` on first use, so ``import netopt.cli`` (the
command line) does not import pandas and Pyomo before it can catch Ctrl-C.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from netopt.api import (
        Case,
        CaseError,
        Problem,
        Result,
        classify_items,
        cost_current_flows,
        dc_count_curve,
        load_case,
        make_case,
        propose_sites,
        run_scenarios,
        solve,
    )

__version__ = "0.1.0"

__all__ = [
    "Case",
    "CaseError",
    "Problem",
    "Result",
    "__version__",
    "classify_items",
    "cost_current_flows",
    "dc_count_curve",
    "load_case",
    "make_case",
    "propose_sites",
    "run_scenarios",
    "solve",
]


def __getattr__(name: str):
    """``netopt.solve`` and the other names of :data:`__all__`, from :mod:`netopt.api` on first use."""
    if name in __all__:
        value = getattr(importlib.import_module("netopt.api"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'netopt' has no attribute {name!r}")
