"""The building blocks of the case schema: a table column, a reference, a table, a setting.

The declarations themselves are in :mod:`netopt.data.schema` (tables) and
:mod:`netopt.data.settings_schema` (settings).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from netopt.data.limits import MAX_DAYS, MAX_MAGNITUDE

INF = math.inf  # a float column default meaning "no limit" when left blank


@dataclass(frozen=True)
class Column:
    """One column of a case table."""

    name: str
    type: str  # "str" | "float" | "int" | "bool"
    unit: str
    required: bool
    default: object
    meaning: str
    min: float | None = None  # smallest allowed value (numbers)
    max: float | None = None  # largest allowed value (numbers)
    choices: tuple[str, ...] | None = None  # allowed values (text)
    max_is_limit: bool = False  # max is a resource limit of netopt (:mod:`netopt.data.limits`), not a range

    def __post_init__(self) -> None:
        _bound_numbers(self)


@dataclass(frozen=True)
class Reference:
    """Values of ``column`` in this table must appear in ``table.target_column``."""

    column: str
    table: str
    target_column: str
    allow_blank: bool = False


@dataclass(frozen=True)
class Table:
    """One case table: a CSV file in a case folder or a sheet of a case workbook."""

    name: str
    meaning: str
    columns: tuple[Column, ...]
    key: tuple[str, ...]
    required: bool = True
    references: tuple[Reference, ...] = field(default_factory=tuple)
    open_columns: Column | None = None
    """A wide table's other columns (beyond ``columns``): each is named by the user (e.g. a destination
    site code) and typed and ranged as this column; None: a column not declared is unknown."""

    @property
    def file_name(self) -> str:
        return f"{self.name}.csv"

    def column(self, name: str) -> Column:
        for c in self.columns:
            if c.name == name:
                return c
        raise KeyError(f"{self.name} has no column {name!r}")

    @property
    def column_names(self) -> list[str]:
        return [c.name for c in self.columns]

    def open_names(self, names) -> list[str]:
        """The names among ``names`` that are this wide table's own columns (none unless ``open_columns``)."""
        if self.open_columns is None:
            return []
        declared = set(self.column_names)
        return [n for n in names if n not in declared]


@dataclass(frozen=True)
class Setting:
    """One entry of the case's settings file (TOML ``[section] name = value``)."""

    section: str
    name: str
    type: str  # "float" | "int" | "bool" | "str" | "list"
    unit: str
    default: object
    meaning: str
    min: float | None = None
    max: float | None = None
    max_is_limit: bool = False  # max is a resource limit of netopt (:mod:`netopt.data.limits`), not a range

    def __post_init__(self) -> None:
        _bound_numbers(self)


def _bound_numbers(item: Column | Setting) -> None:
    """A number column or setting declared without a maximum gets one from :mod:`netopt.data.limits`:
    :data:`~netopt.data.limits.MAX_DAYS` when it counts days, else :data:`~netopt.data.limits.MAX_MAGNITUDE`."""
    if item.type in ("float", "int") and item.max is None:
        object.__setattr__(item, "max", MAX_DAYS if item.unit == "days" else MAX_MAGNITUDE)
        object.__setattr__(item, "max_is_limit", True)


def column(name, type_, unit, required, default, meaning, **kw) -> Column:
    """A :class:`Column`, positional in the order every table declaration reads."""
    return Column(name, type_, unit, required, default, meaning, **kw)
