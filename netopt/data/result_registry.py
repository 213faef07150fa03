"""The register of declared output tables: each table declared once, looked up by name or alias.

The declarations themselves are in :mod:`netopt.data.results_schema` (one solve's tables and a
run's) and :mod:`netopt.data.stress_schema` (the stress study's), :mod:`netopt.data.classify_schema`
(ABC/XYZ classes) and :mod:`netopt.data.sites_schema` (candidate sites, the DC-count curve).
"""

from __future__ import annotations

from netopt.data.result_types import ResultColumn, ResultTable

RESULT_TABLES: dict[str, ResultTable] = {}


def declare_table(name, meaning, written_by, *columns, aliases=()) -> ResultTable:
    """Declare output table ``name``: its meaning, which command writes it and its columns."""
    t = ResultTable(name, meaning, written_by, tuple(columns), tuple(aliases))
    RESULT_TABLES[name] = t
    return t


def result_table(name: str) -> ResultTable | None:
    """The declaration of a table written as ``name`` (its name or an alias), or None."""
    if name in RESULT_TABLES:
        return RESULT_TABLES[name]
    return next((t for t in RESULT_TABLES.values() if name in t.aliases), None)


def column_of(table: str, column: str) -> ResultColumn | None:
    """The declaration of ``column`` of the table written as ``table``, or None."""
    t = result_table(table)
    return t.find(column) if t is not None else None


def label_of(table: str, column: str) -> str:
    """The short label of a column (the name with spaces for an undeclared one)."""
    c = column_of(table, column)
    return c.label_for(column) if c is not None else str(column).replace("_", " ")
