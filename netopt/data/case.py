"""The in-memory case: validated tables plus settings, and the error type for bad input."""

from __future__ import annotations

import copy
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from netopt.data.limits import MAX_ERRORS_PER_COLUMN, MAX_PRINTED_PROBLEMS


@dataclass(frozen=True)
class Problem:
    """One thing wrong (or worth a warning) in the input, located as the user sees it.

    ``row`` is the line of the CSV file (header = line 1) or the row of the workbook
    sheet; ``None`` when the problem concerns a whole table or column.
    """

    table: str
    row: int | None
    column: str | None
    message: str
    severity: str = "error"  # "error" | "warning"

    def __str__(self) -> str:
        where = self.table
        if self.row is not None:
            where += f", row {self.row}"
        if self.column:
            where += f", column '{self.column}'"
        return f"{self.severity.upper():7s} {where}: {self.message}"


class CaseError(Exception):
    """Raised with every problem found at once; the CLI prints them and exits 2."""

    def __init__(self, problems: list[Problem]):
        self.problems = [p for p in problems if p.severity == "error"]
        self.warnings = [p for p in problems if p.severity != "error"]
        super().__init__(self.report())

    def report(self) -> str:
        """Every error, then every warning, one per line; capped as :func:`problem_lines` says
        (``problems`` and ``warnings`` still hold them all)."""
        lines = [f"{len(self.problems)} error(s) in the case data:"]
        room = MAX_PRINTED_PROBLEMS
        shown = problem_lines(self.problems, room)
        lines += shown
        if self.warnings:
            lines.append(f"{len(self.warnings)} warning(s):")
            lines += problem_lines(self.warnings, max(room - len(shown), 0))
        return "\n".join(lines)


_VARIABLE = re.compile(r"'[^']*'|\"[^\"]*\"|[-+]?\d[\d.,eE+-]*")


def _kind(message: str) -> str:
    """A message with its quoted values and numbers blanked: messages of one kind share it."""
    return _VARIABLE.sub("…", message)


def problem_lines(problems: list[Problem], room: int = MAX_PRINTED_PROBLEMS) -> list[str]:
    """Problems as indented report lines: at most :data:`~netopt.data.limits.MAX_ERRORS_PER_COLUMN` per
    table, column and kind of message, each group's rest counted in one line, and at most ``room`` lines
    of problems in all, the rest counted in a last line."""
    groups = Counter((p.table, p.column, p.severity, _kind(p.message)) for p in problems)
    seen: Counter = Counter()
    lines: list[str] = []
    told = 0  # problems printed or counted in a group's line
    for p in problems:
        key = (p.table, p.column, p.severity, _kind(p.message))
        seen[key] += 1
        if seen[key] > MAX_ERRORS_PER_COLUMN or len(lines) >= room:
            continue
        lines.append(f"  {p}")
        told += 1
        if seen[key] == MAX_ERRORS_PER_COLUMN and groups[key] > MAX_ERRORS_PER_COLUMN:
            rest = groups[key] - MAX_ERRORS_PER_COLUMN
            where = f"table {p.table}" + (f", column {p.column}" if p.column else "")
            lines.append(f"  … and {rest:,} more in {where} (like the one above)")
            told += rest
    hidden = len(problems) - told
    if hidden:
        lines.append(f"  … and {hidden:,} more not shown (at most {room:,} lines are printed)")
    return lines


@dataclass
class Case:
    """A validated case.

    ``tables`` maps table name → DataFrame whose index is the row number the user sees
    (CSV line or sheet row); optional tables that were not given are empty DataFrames
    with the declared columns.  ``settings`` is ``{section: {name: value}}`` with every
    default filled in and each value coerced to its declared type (number, text, bool or
    list, so typed ``Any``).  ``scenarios`` holds the raw scenario definitions (if any).
    """

    name: str
    tables: dict[str, pd.DataFrame]
    settings: dict[str, dict[str, Any]]
    path: Path | None = None
    scenarios: list[dict] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)
    generated_lanes: pd.DataFrame | None = field(default=None, repr=False, compare=False)
    """The lane table (``netopt.network.lanes.case_lanes``), built once per case and shared by
    every solve and study of it; :meth:`copy` drops it, since a copy is made to be changed."""

    def __getattr__(self, item: str) -> pd.DataFrame:
        tables = self.__dict__.get("tables", {})
        if item in tables:
            return tables[item]
        raise AttributeError(item)

    def setting(self, section: str, name: str) -> Any:
        return self.settings[section][name]

    def copy(self) -> Case:
        """Deep copy (tables and settings), for scenario changes."""
        return Case(
            self.name,
            {k: v.copy() for k, v in self.tables.items()},
            copy.deepcopy(self.settings),
            self.path,
            copy.deepcopy(self.scenarios),
            list(self.warnings),
        )
