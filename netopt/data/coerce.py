"""Typing a case's tables and settings by the declared schema.

Values are turned into text and parsed again, so a table read from a CSV file and a
typed table give the same answer; blanks take the declared default and every bad
cell becomes a :class:`~netopt.data.case.Problem` naming its table, row and column.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pandas as pd

from netopt.data.case import Problem
from netopt.data.declarations import Column, Setting
from netopt.data.header_names import resemblance_message, resembled
from netopt.data.limits import MAX_CELL_CHARS
from netopt.data.names import shown
from netopt.data.schema import INF, LEGS, TABLES
from netopt.data.settings_schema import SETTINGS
from netopt.data.text import (
    as_text,
    close_match_hint,
    format_number,
    number_message,
    parse_float,
    range_text,
    row_number,
)

_MISSING_WORDS = {"nan", "na", "n/a", "null", "none", "-nan"}  # read as blank in number columns
_TRUE_WORDS = {"true", "yes", "y", "t", "1", "1.0"}
_FALSE_WORDS = {"false", "no", "n", "f", "0", "0.0"}
_SETTING_CHOICES = {("lanes", "legs"): LEGS}
_INF_WORDS = {"inf", "infinity"}  # with an optional sign: the only texts read as infinite in a number column


def bound_text(item: Column | Setting, v: float) -> str:
    """The bound ``v`` breaks, in words: the declared range, or, for netopt's own resource limit on the
    largest value (``max_is_limit``), only the side broken."""
    if not item.max_is_limit:
        return range_text(item)
    if item.min is not None and v < item.min:
        return range_text(SimpleNamespace(min=item.min, max=None, unit=item.unit))
    return f"at most {format_number(float(item.max or 0))} {item.unit}".rstrip() + " (the largest netopt accepts here)"


def _empty_column(col: Column, n_index: pd.Index) -> pd.Series:
    return _typed(col, [col.default] * len(n_index), n_index)


def _typed(col: Column, values: list, index: pd.Index) -> pd.Series:
    if col.type == "str":
        return pd.Series(["" if v is None else v for v in values], index=index, dtype=str)
    if col.type == "float":
        return pd.Series([np.nan if v is None else v for v in values], index=index, dtype=float)
    if col.type == "int":
        if any(v is None for v in values):
            return pd.Series(values, index=index, dtype="Int64")
        return pd.Series(values, index=index, dtype="int64")
    if col.type == "bool":
        return pd.Series([bool(v) if v is not None else False for v in values], index=index, dtype=bool)
    raise ValueError(f"unknown column type {col.type!r}")  # a schema bug, not user input


_PLAIN_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"


def _plain_float_column(col: Column, series: pd.Series) -> pd.Series | None:
    """A float column typed in one pass when every cell is a plain finite number or a blank the
    column allows, within the declared range; None when any cell needs a closer look (the cell-by-cell
    path then words each problem)."""
    if col.type != "float":
        return None
    if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series.dtype):
        v = series.to_numpy(float)
    elif series.dtype == object and series.map(type).eq(str).all():
        s = series.str.strip()
        blank = s.eq("") | s.str.lower().isin(_MISSING_WORDS)
        if not (blank | s.str.fullmatch(_PLAIN_NUMBER)).all():
            return None
        v = pd.to_numeric(s.where(~blank, None), errors="coerce").to_numpy(float)
    else:
        return None
    blank = np.isnan(v)
    seen = v[~blank]
    if (blank.any() and col.required) or np.isinf(seen).any():
        return None
    if (col.min is not None and (seen < col.min).any()) or (col.max is not None and (seen > col.max).any()):
        return None
    default = np.nan if col.default is None else float(col.default)  # type: ignore[arg-type]
    return pd.Series(np.where(blank, default, v), index=series.index, dtype=float)


def _plain_text_column(col: Column, series: pd.Series) -> pd.Series | None:
    """A text column typed in one pass when no cell needs a word of its own (no blank in a required
    column, no control character, every value among the declared choices); None otherwise (the
    cell-by-cell path then words each problem).  Same result as that path: trimmed text, choices in
    their declared spelling, blanks as the default."""
    if col.type != "str" or series.dtype != object or not series.map(type).eq(str).all():
        return None
    s = series
    # One regex pass: a cell to trim, a byte-order mark or a control character needs the cell-by-cell path.
    if s.str.contains(r"^\s|\s$|\ufeff|[\x00-\x1f\x7f]", regex=True).any():
        return None
    blank = s.eq("")
    if blank.any() and col.required:
        return None
    if col.choices is not None:
        spelled = s.str.lower().map({c.lower(): c for c in col.choices})
        if spelled[~blank].isna().any():
            return None
        s = s.where(blank, spelled)
    return pd.Series(s.where(~blank, "" if col.default is None else col.default), index=series.index, dtype=str)


def coerce_column(table: str, col: Column, series: pd.Series) -> tuple[pd.Series, list[Problem]]:
    """Parse one column by its declared type; blanks take the declared default.

    Returns the typed column (bad cells become the default or NaN) and the problems:
    blank in a required column, text where a number or true/false is expected,
    values outside the declared range, values not among the declared choices.
    Infinity is accepted only in columns whose default is "no limit" (inf).
    """
    fast = _plain_float_column(col, series)
    if fast is None:
        fast = _plain_text_column(col, series)
    if fast is not None:
        return fast, []
    problems: list[Problem] = []
    idx = series.index
    if (col.type == "float" and pd.api.types.is_float_dtype(series.dtype)) or (
        col.type in ("float", "int") and pd.api.types.is_integer_dtype(series.dtype)
    ):
        values = [None if pd.isna(v) else float(v) for v in series.tolist()]
        texts = [format_number(v) if v is not None else "" for v in values]
    else:
        texts = [as_text(v) for v in series.tolist()]
        values = None

    out: list = []
    for i, (row, text) in enumerate(zip(idx, texts)):
        r = row_number(row)
        if col.type == "str":
            if text == "":
                if col.required:
                    problems.append(Problem(table, r, col.name, "blank value in a required column"))
                out.append("" if col.default is None else col.default)
                continue
            bad = next((ch for ch in text if ord(ch) < 32 or ord(ch) == 127), None)
            if bad is not None:
                problems.append(
                    Problem(table, r, col.name, f"contains an invisible control character (code {ord(bad)}): {text!r}")
                )
                out.append(col.default if col.default is not None else "")
                continue
            if col.choices is not None:
                match = [c for c in col.choices if c.lower() == text.lower()]
                if not match:
                    allowed = ", ".join(c if c else "(blank)" for c in col.choices)
                    problems.append(Problem(table, r, col.name, f"'{text}' is not one of: {allowed}"))
                    out.append(col.default)
                    continue
                text = match[0]
            out.append(text)
            continue
        if col.type == "bool":
            low = text.lower()
            if low == "":
                if col.required or col.default is None:
                    problems.append(
                        Problem(table, r, col.name, "blank value in a required column (true or false expected)")
                    )
                    out.append(False)
                else:
                    out.append(bool(col.default))
            elif low in _TRUE_WORDS:
                out.append(True)
            elif low in _FALSE_WORDS:
                out.append(False)
            else:
                problems.append(Problem(table, r, col.name, f"true or false expected, got '{text}'"))
                out.append(bool(col.default) if col.default is not None else False)
            continue
        # numbers
        if values is not None:
            v = values[i]
            blank = v is None
        else:
            blank = text == "" or text.lower() in _MISSING_WORDS
            v = None if blank else parse_float(text)
            if not blank and v is None:
                what = "whole number" if col.type == "int" else "number"
                problems.append(Problem(table, r, col.name, number_message(text, what)))
                out.append(None)
                continue
        if blank:
            if col.required:
                what = "whole number" if col.type == "int" else "number"
                problems.append(
                    Problem(table, r, col.name, f"blank or NaN value in a required column ({what} expected)")
                )
            out.append(col.default)
            continue
        assert v is not None  # parsed above; None only for blanks, handled above
        if math.isinf(v) and values is None and text.lower().lstrip("+-") not in _INF_WORDS:
            problems.append(
                Problem(table, r, col.name, f"number too large (beyond the range of a float), got {shown(text)}")
            )
            out.append(None)
            continue
        if math.isinf(v) and not (col.default == INF and v > 0):
            problems.append(Problem(table, r, col.name, f"finite number expected, got '{text}'"))
            out.append(None)
            continue
        if math.isinf(v):  # "no limit", allowed above
            out.append(v)
            continue
        if col.type == "int":
            if not float(v).is_integer():
                problems.append(Problem(table, r, col.name, f"whole number expected, got '{text}'"))
                out.append(None)
                continue
            v = int(v)
        if (col.min is not None and v < col.min) or (col.max is not None and v > col.max):
            problems.append(Problem(table, r, col.name, f"must be {bound_text(col, v)}, got {format_number(v)}"))
            out.append(None)
            continue
        out.append(v)
    return _typed(col, out, idx), problems


def coerce_table(name: str, frame: pd.DataFrame | None) -> tuple[pd.DataFrame, list[Problem]]:
    """Type one table by the schema and fill defaults.

    Args:
        name: table name declared in ``netopt.data.schema.TABLES``.
        frame: the table as read (text or typed), index = user row numbers; None
            when the table was not given.

    Returns:
        The typed table with exactly the declared columns (in declared order) and
        the problems found: missing required columns (error), unknown columns
        (warning, dropped), cell problems from :func:`coerce_column`.
    """
    t = TABLES[name]
    problems: list[Problem] = []
    if frame is None:
        frame = pd.DataFrame(columns=t.column_names)
    index = frame.index
    columns = {}
    for c in frame.columns:
        cname = c.strip() if isinstance(c, str) else as_text(c)  # a byte-order mark in a header stays
        like = resembled(cname, t.column_names) if cname not in t.column_names else None
        if like is not None:
            problems.append(Problem(name, None, cname, resemblance_message(cname, like, "column")))
        elif cname not in t.column_names and t.open_columns is None:
            problems.append(
                Problem(
                    name,
                    None,
                    cname or "(no header)",
                    "unknown column (ignored)" + close_match_hint(cname, t.column_names),
                    "warning",
                )
            )
    for col in t.columns:
        if col.name not in frame.columns:
            if col.required:
                problems.append(Problem(name, None, col.name, "required column is missing"))
            columns[col.name] = _empty_column(col, index)
            continue
        series = frame[col.name]
        if isinstance(series, pd.DataFrame):  # duplicated header
            problems.append(Problem(name, None, col.name, "column appears more than once in the header"))
            series = series.iloc[:, 0]
        columns[col.name], probs = coerce_column(name, col, series)
        problems += probs
    typed = pd.DataFrame(columns, index=index)
    if t.open_columns is not None:
        typed, probs = _with_open_columns(name, t.open_columns, typed, frame)
        problems += probs
    typed.index.name = "row"
    return typed, problems


def _with_open_columns(
    name: str, col: Column, typed: pd.DataFrame, frame: pd.DataFrame
) -> tuple[pd.DataFrame, list[Problem]]:
    """A wide table's own columns (every column not declared, e.g. one per destination site) typed as
    ``col``, all cells in one pass; each problem names its row and the column it is in."""
    declared = set(typed.columns)
    names: list[tuple[int, str]] = []
    problems: list[Problem] = []
    seen: set[str] = set()
    for j, c in enumerate(frame.columns):
        cname = c.strip() if isinstance(c, str) else as_text(c)
        if cname in declared or resembled(cname, list(declared)) is not None:
            continue
        if cname in seen:
            problems.append(Problem(name, None, cname, "column appears more than once in the header"))
            continue
        seen.add(cname)
        names.append((j, cname))
    if not names:
        return typed, problems
    rows, width = len(frame), len(names)
    parts = [frame.iloc[:, j].reset_index(drop=True) for j, _ in names]
    cells = pd.concat(parts, ignore_index=True) if rows else pd.Series([], dtype=object)
    values, probs = coerce_column(name, col, cells.set_axis(pd.RangeIndex(len(cells))))
    for p in probs:  # position k is row k % rows of column k // rows
        k = int(p.row or 0)
        problems.append(Problem(name, row_number(typed.index[k % rows]), names[k // rows][1], p.message, p.severity))
    block = pd.DataFrame(
        values.to_numpy(float).reshape(width, rows).T, index=typed.index, columns=[n for _, n in names]
    )
    return pd.concat([typed, block], axis=1), problems


# --------------------------------------------------------------------------- settings


def _setting_problem(label, rows, s: Setting, message, severity="error") -> Problem:
    return Problem(label, (rows or {}).get((s.section, s.name)), f"[{s.section}] {s.name}", message, severity)


def coerce_setting(s: Setting, value) -> tuple[object, str | None]:
    """Parse one setting value by its declared type; returns (value, error message or None)."""
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 1023:
        return s.default, f"number too large (beyond the range of a float), got {shown(value)}"
    if isinstance(value, str) and len(value) > MAX_CELL_CHARS:
        return s.default, f"{len(value):,} characters; at most {MAX_CELL_CHARS:,} are accepted"
    if s.type == "str":
        if not isinstance(value, str):
            return s.default, f"text expected (in quotes), got {shown(value)}"
        return as_text(value), None
    if s.type == "list":
        if isinstance(value, str):
            items = [p.strip() for p in value.replace(",", "|").split("|") if p.strip()]
        elif isinstance(value, (list, tuple)):
            items = [as_text(p) for p in value]
            if any(isinstance(p, (list, dict)) for p in value):
                return s.default, f"list of names expected, got {shown(value)}"
        else:
            return s.default, f'list of names expected (e.g. ["a", "b"] or a|b), got {shown(value)}'
        allowed = _SETTING_CHOICES.get((s.section, s.name))
        if allowed is not None:
            bad = [p for p in items if p not in allowed]
            if bad:
                return s.default, f"unknown value(s) {', '.join(shown(b) for b in bad)}; allowed: {', '.join(allowed)}"
        return items, None
    if s.type == "bool":
        if isinstance(value, (bool, np.bool_)):
            return bool(value), None
        if isinstance(value, (int, float, str)):
            low = as_text(value).lower()
            if low in _TRUE_WORDS:
                return True, None
            if low in _FALSE_WORDS:
                return False, None
        return s.default, f"true or false expected, got {shown(value)}"
    # numbers
    if isinstance(value, (bool, np.bool_, list, dict)):
        return s.default, f"{'whole number' if s.type == 'int' else 'number'} expected, got {shown(value)}"
    if isinstance(value, str):
        v = parse_float(value.strip())
        if v is None:
            return s.default, number_message(value.strip(), "whole number" if s.type == "int" else "number")
    elif isinstance(value, (int, float, np.integer, np.floating)):
        v = float(value)
    else:
        return s.default, f"number expected, got {shown(value)}"
    if math.isinf(v) and isinstance(value, str) and value.strip().lower().lstrip("+-") not in _INF_WORDS:
        return s.default, f"number too large (beyond the range of a float), got {shown(value.strip())}"
    if math.isnan(v) or math.isinf(v):
        return s.default, f"finite number expected, got {shown(value)}"
    if s.type == "int":
        if not v.is_integer():
            return s.default, f"whole number expected, got {shown(value)}"
        v = int(v)
    if (s.min is not None and v < s.min) or (s.max is not None and v > s.max):
        return s.default, f"must be {bound_text(s, v)}, got {format_number(v)}"
    return v, None


def coerce_settings(
    raw: dict | None, label: str = "settings.toml", rows: dict[tuple[str, str], int] | None = None
) -> tuple[dict, list[Problem]]:
    """Settings with defaults filled, typed by the schema.

    Args:
        raw: ``{section: {name: value}}`` as read from TOML or a settings sheet.
        label: where the settings came from, used as the problem's table
            (``settings.toml`` or the workbook sheet ``settings``).
        rows: optional sheet row of each ``(section, name)``.

    Returns:
        ``({section: {name: value}}, problems)``. Unknown sections and names are
        warnings; wrong types and out-of-range values are errors naming ``[section] name``.
    """
    problems: list[Problem] = []
    out: dict[str, dict[str, object]] = {}
    declared = {(s.section, s.name): s for s in SETTINGS}
    sections = {s.section for s in SETTINGS}
    for setting in SETTINGS:
        out.setdefault(setting.section, {})[setting.name] = (
            list(setting.default) if isinstance(setting.default, list) else setting.default
        )
    for section, entries in (raw or {}).items():
        if not isinstance(entries, dict):
            if section in sections:
                problems.append(
                    Problem(
                        label,
                        None,
                        f"[{section}]",
                        f"{section} is a section: write it as a [{section}] heading with name = value lines, "
                        f"not as a value ({shown(entries)})",
                    )
                )
            else:
                problems.append(
                    Problem(label, None, str(section), "setting outside any [section] (ignored)", "warning")
                )
            continue
        like = resembled(str(section), sections) if section not in sections else None
        if like is not None:
            problems.append(Problem(label, None, f"[{section}]", resemblance_message(str(section), like, "section")))
            continue
        if section not in sections:
            problems.append(
                Problem(
                    label,
                    None,
                    f"[{section}]",
                    "unknown section (ignored)" + close_match_hint(str(section), sections),
                    "warning",
                )
            )
            continue
        names = [n for (sec, n) in declared if sec == section]
        for name, value in entries.items():
            s: Setting | None = declared.get((section, name))
            like = resembled(str(name), names) if s is None else None
            if like is not None:
                problems.append(
                    Problem(
                        label,
                        (rows or {}).get((section, name)),
                        f"[{section}] {name}",
                        resemblance_message(str(name), like, "setting"),
                    )
                )
                continue
            if s is None:
                problems.append(
                    Problem(
                        label,
                        (rows or {}).get((section, name)),
                        f"[{section}] {name}",
                        "unknown setting (ignored)" + close_match_hint(str(name), names),
                        "warning",
                    )
                )
                continue
            v, err = coerce_setting(s, value)
            if err:
                problems.append(_setting_problem(label, rows, s, err))
            out[section][name] = v
    return out, problems
