"""The in-memory case: validated tables plus settings, and the error type for bad input."""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd


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
        lines = [f"{len(self.problems)} error(s) in the case data:"]
        lines += [f"  {p}" for p in self.problems]
        if self.warnings:
            lines.append(f"{len(self.warnings)} warning(s):")
            lines += [f"  {p}" for p in self.warnings]
        return "\n".join(lines)


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
