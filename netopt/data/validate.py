"""Checks of a whole case against the declared schema: the entry points of validation.

Everything is driven by :mod:`netopt.data.schema` and :mod:`netopt.data.settings_schema`:
types, required columns, defaults, ranges, allowed values, keys and references.  Typing is
in :mod:`netopt.data.coerce`, the rules that span tables (one namespace of site codes,
coordinates that agree across a site's rows, lanes that start and end at the right kind of
site) in :mod:`netopt.data.rules`, every demand reachable from a source in
:mod:`netopt.data.reach`.  Every problem is collected; nothing stops at the first one.

Tables may be given as text (as read from a CSV file or a workbook sheet) or
already typed (a :class:`~netopt.data.case.Case`'s tables): values are turned into text
and parsed again, so both give the same answer.  A table's index is the row number
the user sees (CSV line, header = line 1; or workbook sheet row).
"""

from __future__ import annotations

from collections.abc import Callable

import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.coerce import coerce_settings, coerce_table
from netopt.data.lane_matrix import matrix_problems
from netopt.data.reach import unreachable_demand
from netopt.data.rules import cross_table_problems
from netopt.data.schema import TABLES
from netopt.data.text import close_match_hint

_LANE_BUILDER: list[Callable] = []  # set by netopt.network.lanes on import (the stage after this one)


def register_lane_builder(build: Callable) -> None:
    """Let validation check demand reachability with the network stage's lane builder.

    The data stage never imports the network stage; the network stage registers its
    builder here when it is imported (``import netopt`` always imports it).
    """
    _LANE_BUILDER[:] = [build]


_CASE_CHECKS: list[Callable] = []  # more checks of a whole typed case, registered by later stages


def register_case_check(check: Callable) -> None:
    """Add ``check(tables, settings) -> list[Problem]``, run on every case that has no errors."""
    if check not in _CASE_CHECKS:
        _CASE_CHECKS.append(check)


def _lane_builder() -> Callable | None:
    """The registered lane builder, or None when the network stage is not imported."""
    return _LANE_BUILDER[0] if _LANE_BUILDER else None


def validate_and_coerce(
    tables: dict[str, pd.DataFrame | None],
    settings: dict | None,
    sources: dict[str, str] | None = None,
    *,
    settings_rows: dict[tuple[str, str], int] | None = None,
    reachability: bool = True,
    built: dict | None = None,
) -> tuple[dict[str, pd.DataFrame], dict, list[Problem]]:
    """Type and check a whole case.

    Args:
        tables: table name → DataFrame (text or typed; index = user row numbers).
            Names not declared in the schema are reported as warnings.
        settings: ``{section: {name: value}}`` (raw or typed); None = all defaults.
        sources: table name → where it was read from (e.g. ``demand.csv``); a table
            absent from ``sources`` counts as not given (None: every table in
            ``tables`` counts as given).  ``sources["settings"]`` names the settings
            origin used in settings problems (default ``settings.toml``).
        settings_rows: sheet row of each ``(section, name)`` when read from a workbook.
        reachability: run the demand reachability check (needs the lane builder) when
            nothing else is wrong.
        built: when given, receives ``built["lanes"]``, the lane table the reachability
            check built (so the solve that follows need not build it again).

    Returns:
        ``(typed tables, typed settings, problems)``: every declared table typed with
        defaults filled (empty when not given), settings with defaults, and every
        problem found (errors and warnings).
    """
    problems: list[Problem] = []
    sources = dict(sources) if sources is not None else {k: k for k, v in tables.items() if v is not None}
    label = sources.get("settings", "settings.toml")
    given = {n for n in TABLES if n in sources and tables.get(n) is not None}

    for n in tables:
        if n not in TABLES:
            problems.append(Problem(n, None, None, "unknown table (ignored)" + close_match_hint(n, TABLES), "warning"))

    typed: dict[str, pd.DataFrame] = {}
    usable: set[str] = set()  # given and with every required column
    for name, t in TABLES.items():
        frame = tables.get(name) if name in given else None
        if (
            frame is None and t.required and name not in sources
        ):  # a table given but unreadable is reported by the reader
            problems.append(
                Problem(
                    name,
                    None,
                    None,
                    f"required table is missing (expected {t.file_name} in the case folder "
                    f"or a sheet '{name}' in the workbook)",
                )
            )
        typed[name], probs = coerce_table(name, frame)
        problems += probs
        if frame is not None and not any(
            p.severity == "error" and p.row is None and p.column in t.column_names for p in probs
        ):
            usable.add(name)
    typed_settings, probs = coerce_settings(settings, label, settings_rows)
    problems += probs

    problems += cross_table_problems(typed, typed_settings, given, usable, label, settings_rows)
    problems += matrix_problems(typed, usable)
    if "demand" in usable and typed["demand"].empty:
        problems.append(Problem("demand", None, None, "no demand rows: there is nothing to plan", "warning"))

    if reachability and not any(p.severity == "error" for p in problems):
        build_lanes = _lane_builder()
        if build_lanes is None:
            problems.append(
                Problem(
                    "lanes", None, None, "demand reachability not checked: the lane builder is not available", "warning"
                )
            )
        else:
            try:
                lanes = build_lanes(Case("(validation)", typed, typed_settings))
            except CaseError as e:
                problems += e.problems + e.warnings
            else:
                problems += unreachable_demand(typed, lanes)
                if built is not None:
                    built["lanes"] = lanes
    if not any(p.severity == "error" for p in problems):
        for check in _CASE_CHECKS:
            problems += check(typed, typed_settings)
    return typed, typed_settings, sort_problems(problems)


def sort_problems(problems: list[Problem]) -> list[Problem]:
    """Problems in reading order: settings first, then tables in schema order, by row (stable)."""
    order = {name: i for i, name in enumerate(TABLES)}

    def key(p: Problem):
        if p.table.startswith("settings"):
            rank = -1
        else:
            rank = order.get(p.table, len(order))
        return (rank, p.row if p.row is not None else 0)

    return sorted(problems, key=key)


def validate(
    tables: dict[str, pd.DataFrame | None], settings: dict | None, sources: dict[str, str] | None = None
) -> list[Problem]:
    """Every problem of a case at once (errors and warnings); see :func:`validate_and_coerce`."""
    return validate_and_coerce(tables, settings, sources)[2]
