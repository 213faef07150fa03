"""The types of netopt's output schema: units, result columns, tables, KPI rows.

The declarations themselves are in :mod:`netopt.data.results_schema`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

UNITS: dict[str, tuple[str, str]] = {  # unit → (kind, meaning)
    "text": ("text", "words or codes"),
    "flag": ("flag", "true or false"),
    "count": ("count", "a whole number of things"),
    "currency/yr": ("money", "case currency per year"),
    "currency": ("money", "case currency (a stock's value, a one-off cost, or a present value over periods)"),
    "currency/unit": ("rate", "case currency per unit"),
    "currency/unit/yr": ("rate", "case currency per unit of stock per year"),
    "currency/t CO2e": ("rate", "case currency per tonne of CO2e"),
    "units/yr": ("volume", "product units per year"),
    "units": ("volume", "product units (a stock)"),
    "t/yr": ("volume", "tonnes per year"),
    "t·km/yr": ("volume", "tonne-kilometres per year"),
    "km": ("volume", "kilometres"),
    "kg CO2e/yr": ("volume", "kilograms of CO2 equivalent per year"),
    "kg CO2e/unit": ("decimal", "kilograms of CO2 equivalent per unit"),
    "t CO2e/yr": ("volume", "tonnes of CO2 equivalent per year"),
    "share": ("share", "a fraction, 0–1 (shown as %)"),
    "share/yr": ("share", "a fraction of value per year"),
    "days": ("days", "days"),
    "years": ("decimal", "years"),
    "ratio": ("decimal", "a plain number"),
    "per year": ("decimal", "times per year"),
    "degrees": ("coordinate", "WGS84 degrees"),
    "seconds": ("decimal", "seconds of wall-clock time"),
}


@dataclass(frozen=True)
class ResultColumn:
    """One column of a result table; ``name`` may be a pattern such as ``cost_<component>``."""

    name: str
    type: str  # "str" | "float" | "int" | "bool"
    unit: str  # a key of UNITS
    label: str  # short human label (terminal, report, Markdown)
    meaning: str
    signed: bool = False  # a change: shown with its sign
    sense: int = 0  # +1: higher is worse, -1: higher is better, 0: neither (comparison colours)

    @property
    def kind(self) -> str:
        return UNITS[self.unit][0]

    @property
    def is_pattern(self) -> bool:
        return "<" in self.name

    def match(self, name: str) -> str | None:
        """The part of ``name`` the pattern's ``<…>`` stands for ("" for an exact name), or None."""
        if not self.is_pattern:
            return "" if name == self.name else None
        head, rest = self.name.split("<", 1)
        tail = rest.split(">", 1)[1]
        m = re.fullmatch(re.escape(head) + "(.+)" + re.escape(tail), name)
        return m.group(1) if m else None

    def label_for(self, name: str) -> str:
        """The label of actual column ``name`` (a pattern's ``<…>`` replaced by the matched part)."""
        part = self.match(name)
        return re.sub(r"<[^>]*>", (part or "").replace("_", " "), self.label) if self.is_pattern else self.label


@dataclass(frozen=True)
class ResultTable:
    """One output table: a CSV file and a workbook sheet."""

    name: str
    meaning: str
    written_by: str  # the command or call that writes it
    columns: tuple[ResultColumn, ...]
    aliases: tuple[str, ...] = field(default_factory=tuple)  # other names it is written under

    def find(self, name: str) -> ResultColumn | None:
        """The declaration of column ``name`` (exact names first, then patterns; ``period``, which every
        table of a plan over periods carries, is :data:`PERIOD`), or None."""
        if name == PERIOD.name and all(c.name != name for c in self.columns):
            return PERIOD
        for c in self.columns:
            if not c.is_pattern and c.name == name:
                return c
        return next((c for c in self.columns if c.is_pattern and c.match(name) is not None), None)

    def column(self, name: str) -> ResultColumn:
        c = self.find(name)
        if c is None:
            raise KeyError(f"result table {self.name} declares no column {name!r}")
        return c

    @property
    def column_names(self) -> list[str]:
        return [c.name for c in self.columns]


@dataclass(frozen=True)
class Kpi:
    """One row of the ``kpis`` table: its unit (a key of UNITS), label and meaning."""

    name: str
    unit: str
    label: str
    meaning: str


def result_column(name, type_, unit, label, meaning, **kw) -> ResultColumn:
    """A :class:`ResultColumn` from positional fields (short declarations)."""
    return ResultColumn(name, type_, unit, label, meaning, **kw)


PERIOD = ResultColumn(
    "period",
    "str",
    "text",
    "period",
    "Planning period the row is for (from the case's periods table); every table of a plan over periods "
    "whose values vary by period carries it",
)
"""The one ``period`` column of every result table of a plan over periods."""
