"""A case copy being edited by scenario changes, the fields each change kind reads, and the helpers
every change kind uses."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import pandas as pd

from netopt.data.case import Case
from netopt.data.names import shown
from netopt.data.schema import TABLES
from netopt.data.text import close_match_hint

Change = dict  # one change: {"kind": ..., field: value, ...}


@dataclass(frozen=True)
class Fields:
    """The fields a change kind reads, checked when scenarios are parsed (before the case is touched).

    ``codes`` are site, product, mode, region or class codes (text, or a number written bare);
    ``choices`` are text from a list; ``numbers`` map a field to its (minimum, maximum), None = no bound.
    ``open`` names the other fields a kind takes, checked when it is applied (dcs columns, settings):
    their values must be plain values (text, numbers, true/false, or a list of them).
    """

    required: tuple[str, ...] = ()
    codes: tuple[str, ...] = ()
    choices: dict[str, tuple[str, ...]] = field(default_factory=dict)
    numbers: dict[str, tuple[float | None, float | None]] = field(default_factory=dict)
    open: str = ""

    @property
    def names(self) -> tuple[str, ...]:
        return (*self.codes, *self.choices, *self.numbers)


def number_problem(key: str, value: object, minimum: float | None = 0.0, maximum: float | None = None) -> str | None:
    """Why field ``key`` = ``value`` is not a number in [minimum, maximum] (None: it is)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return f"{key} must be a number, not {shown(value)}"
    try:
        v = float(value)
    except OverflowError:
        return f"{key} is {shown(value)}, too large for a number"
    if not math.isfinite(v):
        return f"{key} must be a finite number, not {shown(value)}"
    if minimum is not None and v < minimum:
        return f"{key} must be ≥ {minimum:g}, not {shown(value)}"
    if maximum is not None and v > maximum:
        return f"{key} must be ≤ {maximum:g}, not {shown(value)}"
    return None


def code_problem(key: str, value: object) -> str | None:
    """Why field ``key`` = ``value`` is not a code (text, or a number written bare, as a sheet cell reads)."""
    if isinstance(value, str) or (isinstance(value, int) and not isinstance(value, bool) and abs(value) < 10**18):
        return None
    if isinstance(value, float) and math.isfinite(value):
        return None
    return f"{key} must be text (a code), not {shown(value)}"


def plain_problem(key: str, value: object, in_list: bool = False) -> str | None:
    """Why ``value`` of field ``key`` is not a plain value: text, a number, true/false or a list of them."""
    if isinstance(value, list) and not in_list:
        return next((p for v in value if (p := plain_problem(key, v, True)) is not None), None)
    if isinstance(value, (str, bool)):
        return None
    if isinstance(value, (int, float)):
        return number_problem(key, value, None)
    return f"{key} must be text, a number, true/false or a list of them, not {shown(value)}"


def change_problems(ch: object, kind_fields: Fields) -> list[str]:
    """Every problem with change ``ch``'s fields as ``kind_fields`` declares them."""
    if not isinstance(ch, dict):
        return [f"a change must be a table ([[scenario.change]] with a kind), not {shown(ch)}"]
    out: list[str] = []
    for key, value in ch.items():
        if key == "kind":
            continue
        if key in kind_fields.codes:
            out.append(code_problem(key, value) or "")
        elif key in kind_fields.choices:
            allowed = kind_fields.choices[key]
            if not isinstance(value, str) or value.strip() not in allowed:
                out.append(f"{key} must be one of {', '.join(allowed)}, not {shown(value)}")
        elif key in kind_fields.numbers:
            out.append(number_problem(key, value, *kind_fields.numbers[key]) or "")
        elif kind_fields.open:
            out.append(plain_problem(key, value) or "")
        else:
            hint = close_match_hint(str(key), kind_fields.names)
            known = ", ".join(kind_fields.names) or "none"
            out.append(f"unknown field '{key}'{hint} (this kind takes: {known})")
    out += [f"{req} is required" for req in kind_fields.required if req not in ch]
    return [p for p in out if p]


@dataclass
class CaseEdit:
    """A case copy being edited by a scenario's changes, with the look-ups every kind needs."""

    case: Case
    sites: dict[str, str]  # site code → supplier | plant | dc | customer
    modes: set[str]
    lanes_changed: bool = False  # a change edited what the lane table is built from
    errors: list[str] = field(default_factory=list)

    @property
    def tables(self) -> dict[str, pd.DataFrame]:
        return self.case.tables

    def text(self, ch: Change, key: str) -> str:
        """Code field ``key`` (blank when absent), or blank with an error recorded when it is no code."""
        value = ch.get(key, "")
        problem = code_problem(key, value)
        if problem is not None:
            if problem not in self.errors:
                self.errors.append(problem)
            return ""
        return str(value).strip()

    def number(self, ch: Change, key: str, minimum: float = 0.0) -> float | None:
        """Field ``key`` as a finite number ≥ ``minimum``, or None with an error recorded."""
        value = ch.get(key)
        problem = number_problem(key, value, minimum)
        if problem is not None:
            self.errors.append(problem)
            return None
        return float(value)  # type: ignore[arg-type]


def site_kinds(case: Case) -> dict[str, str]:
    """Site code → supplier | plant | dc | customer."""
    t = case.tables
    out = {}
    for table, col, kind in (
        ("suppliers", "supplier", "supplier"),
        ("plants", "plant", "plant"),
        ("dcs", "dc", "dc"),
        ("customers", "customer", "customer"),
    ):
        for s in t[table][col].astype(str):
            out[s] = kind
    return out


def append_row(df: pd.DataFrame, table: str, values: dict) -> pd.DataFrame:
    """``df`` with one more row of ``table`` (schema defaults for absent columns)."""
    t = TABLES[table]
    row = {c.name: values.get(c.name, c.default) for c in t.columns}
    nxt = (int(df.index.max()) + 1) if len(df) else 2
    return pd.concat([df, pd.DataFrame([row], index=[nxt])]).astype(
        {c: df[c].dtype for c in df.columns if c in row}, errors="ignore"
    )
