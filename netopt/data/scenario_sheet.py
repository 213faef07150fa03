"""Scenarios as a table: the ``scenarios`` sheet of a case workbook, both ways.

One row per change.  ``scenario`` names the scenario; ``description``, ``based_on``, ``resolve``
and ``frontier_points`` describe it (given once, on any of its rows); ``kind`` is the change kind
and every other column is a field of that change, left blank where the kind does not use it.
A scenario without changes is one row with a blank ``kind``.  The same entries as the
``[[scenario]]`` tables of ``scenarios.toml``; the scenario vocabulary checks them.

    scenario      | resolve | kind      | site     | dc       | to     | factor
    dc_venlo_out  | both    | site_out  | DC_VENLO |          |        |
    more_demand   |         | scale_demand |       |          |        | 1.15
"""

from __future__ import annotations

import math

import pandas as pd

from netopt.data.case import Problem
from netopt.data.names import name_problem

SHEET = "scenarios"
SCENARIO_COLUMNS = ("scenario", "description", "based_on", "resolve", "frontier_points")
"""Columns that describe a scenario; the rest (after ``kind``) are change fields."""
INT_FIELDS = ("frontier_points",)


def _value(text: str):
    """A cell's text as the TOML value it stands for: a whole number, a number, true/false, or text
    (a whole number written with leading zeros or a sign, such as a code ``007``, stays text)."""
    t = text.strip()
    low = t.lower()
    if low in ("true", "false"):
        return low == "true"
    try:
        whole = int(t)
    except ValueError:
        pass
    else:
        return whole if str(whole) == t else t  # "007" stays a code, not the number 7
    try:
        v = float(t)
    except (ValueError, OverflowError):
        return t
    return v if math.isfinite(v) else t


def scenarios_from_sheet(frame: pd.DataFrame) -> tuple[list[dict], list[Problem]]:
    """``[[scenario]]`` entries from the sheet (text cells; index = sheet row); problems named by row."""
    problems: list[Problem] = []
    if "scenario" not in frame.columns:
        return [], [Problem(SHEET, None, "scenario", "the scenarios sheet needs a 'scenario' column")]
    out: dict[str, dict] = {}
    for row, rec in frame.iterrows():
        name = str(rec["scenario"]).strip()
        cells = {str(c).strip(): str(v).strip() for c, v in rec.items() if str(v).strip() != ""}
        if not name:
            if cells:
                problems.append(Problem(SHEET, int(row), "scenario", "a row with values needs a scenario name"))
            continue
        if name not in out and (bad := name_problem(name, "the scenario name")) is not None:
            problems.append(Problem(SHEET, int(row), "scenario", bad))
        sc = out.setdefault(name, {"name": name, "change": []})
        for col in SCENARIO_COLUMNS[1:]:
            if col in cells:
                v = _value(cells[col]) if col in INT_FIELDS else cells[col]
                if col == "based_on" and (bad := name_problem(v, "based_on")) is not None:
                    problems.append(Problem(SHEET, int(row), col, f"scenario '{name}': {bad}"))
                if col in sc and sc[col] != v:
                    problems.append(
                        Problem(SHEET, int(row), col, f"scenario '{name}' has two {col} values: '{sc[col]}' and '{v}'")
                    )
                sc[col] = v
        fields = {c: _value(v) for c, v in cells.items() if c not in SCENARIO_COLUMNS}
        if fields:
            if "kind" not in fields:
                problems.append(Problem(SHEET, int(row), "kind", f"scenario '{name}': a change needs a kind"))
            sc["change"].append(fields)
    return list(out.values()), problems


def scenarios_sheet(scenarios: list[dict]) -> pd.DataFrame:
    """The sheet of ``[[scenario]]`` entries: one row per change (a row per scenario without changes)."""
    rows = []
    for sc in scenarios:
        head = {c: sc.get("name" if c == "scenario" else c, "") for c in SCENARIO_COLUMNS}
        changes = sc.get("change") or [{}]
        if isinstance(changes, dict):
            changes = [changes]
        for i, ch in enumerate(changes):
            rows.append((head if i == 0 else {"scenario": head["scenario"]}) | dict(ch))
    fields = sorted({k for r in rows for k in r} - set(SCENARIO_COLUMNS) - {"kind"})
    return pd.DataFrame(rows, columns=[*SCENARIO_COLUMNS, "kind", *fields]).fillna("")
