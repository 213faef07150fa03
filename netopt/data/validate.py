"""Checks of a case's tables and settings against the declared schema.

Everything is driven by :mod:`netopt.schema`: types, required columns, defaults,
ranges, allowed values, keys and references.  A few rules that span tables (one
namespace of site codes, coordinates that agree across a site's rows, lanes that
start and end at the right kind of site, every demand reachable from a source) are
written out here.  Every problem is collected; nothing stops at the first one.

Tables may be given as text (as read from a CSV file or a workbook sheet) or
already typed (a :class:`~netopt.case.Case`'s tables): values are turned into text
and parsed again, so both give the same answer.  A table's index is the row number
the user sees (CSV line, header = line 1; or workbook sheet row).
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.schema import INF, LEGS, SETTINGS, TABLES, Column, Setting

SITE_TABLES = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))
"""The four tables whose codes share one namespace of sites, with their code column."""

ORIGIN_KINDS = ("supplier", "plant", "dc")
DESTINATION_KINDS = ("plant", "dc", "customer")

_MISSING_WORDS = {"nan", "na", "n/a", "null", "none", "-nan"}  # read as blank in number columns
_TRUE_WORDS = {"true", "yes", "y", "t", "1", "1.0"}
_FALSE_WORDS = {"false", "no", "n", "f", "0", "0.0"}
_SETTING_CHOICES = {("lanes", "legs"): LEGS}


# --------------------------------------------------------------------------- text helpers


def format_number(value: float) -> str:
    """Shortest text that reads back as the same float; whole numbers without '.0'."""
    v = float(value)
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    if v.is_integer() and abs(v) < 1e16:
        return str(int(v))
    return repr(v)


def as_text(value) -> str:
    """One cell as the text a user would type: blank for missing, true/false for flags."""
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, str):
        return value.strip().lstrip("\ufeff").strip()
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (float, np.floating)):
        return format_number(value)
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    try:
        if pd.isna(value):
            return ""
    except (TypeError, ValueError):
        pass
    return str(value).strip()


def _texts(series: pd.Series) -> pd.Series:
    """A column as stripped text (object dtype), same index."""
    return pd.Series([as_text(v) for v in series.tolist()], index=series.index, dtype=object)


def close_match_hint(name: str, known, cutoff: float = 0.6) -> str:
    """'; did you mean 'x'?' for the closest known name, or ''."""
    close = difflib.get_close_matches(name, list(known), n=1, cutoff=cutoff)
    if not close:
        low = {k.lower(): k for k in known}
        if name.lower() in low:
            close = [low[name.lower()]]
    return f"; did you mean '{close[0]}'?" if close else ""


def range_text(item, with_unit: bool = True) -> str:
    """'at least 0 kg/unit', 'between 0 and 1 share', 'greater than 0 km/day' for a Column or Setting."""
    lo, hi = item.min, item.max
    unit = f" {item.unit}" if item.unit and with_unit else ""
    if lo is not None and 0 < lo < 1e-6:
        text = "greater than 0" + (f" and at most {format_number(hi)}" if hi is not None else "")
    elif lo is not None and hi is not None:
        text = f"between {format_number(lo)} and {format_number(hi)}"
    elif lo is not None:
        text = f"at least {format_number(lo)}"
    else:
        text = f"at most {format_number(hi)}"
    return text + unit


def _row(idx) -> int | None:
    try:
        return int(idx)
    except (TypeError, ValueError):
        return None


def _parse_float(text: str) -> float | None:
    """Float of a text, None when it is not a number (NaN words count as missing, not here)."""
    try:
        v = float(text)
    except ValueError:
        return None
    return None if math.isnan(v) else v


def _number_message(text: str, what: str = "number") -> str:
    msg = f"{what} expected, got '{text}'"
    if "," in text and _parse_float(text.replace(",", ".")) is not None:
        msg += " (use a dot for decimals and no thousands separators)"
    return msg


# --------------------------------------------------------------------------- one table


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


def coerce_column(table: str, col: Column, series: pd.Series) -> tuple[pd.Series, list[Problem]]:
    """Parse one column by its declared type; blanks take the declared default.

    Returns the typed column (bad cells become the default or NaN) and the problems:
    blank in a required column, text where a number or true/false is expected,
    values outside the declared range, values not among the declared choices.
    Infinity is accepted only in columns whose default is "no limit" (inf).
    """
    problems: list[Problem] = []
    idx = series.index
    if (
        (col.type == "float"
        and pd.api.types.is_float_dtype(series.dtype))
        or (col.type in ("float", "int") and pd.api.types.is_integer_dtype(series.dtype))
    ):
        values = [None if pd.isna(v) else float(v) for v in series.tolist()]
        texts = [format_number(v) if v is not None else "" for v in values]
    else:
        texts = [as_text(v) for v in series.tolist()]
        values = None

    out: list = []
    for i, (row, text) in enumerate(zip(idx, texts)):
        r = _row(row)
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
            v = None if blank else _parse_float(text)
            if not blank and v is None:
                what = "whole number" if col.type == "int" else "number"
                problems.append(Problem(table, r, col.name, _number_message(text, what)))
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
        if math.isinf(v) and not (col.default == INF and v > 0):
            problems.append(Problem(table, r, col.name, f"finite number expected, got '{text}'"))
            out.append(None)
            continue
        if col.type == "int":
            if not float(v).is_integer():
                problems.append(Problem(table, r, col.name, f"whole number expected, got '{text}'"))
                out.append(None)
                continue
            v = int(v)
        if (col.min is not None and v < col.min) or (col.max is not None and v > col.max):
            problems.append(Problem(table, r, col.name, f"must be {range_text(col)}, got {format_number(v)}"))
            out.append(None)
            continue
        out.append(v)
    return _typed(col, out, idx), problems


def coerce_table(name: str, frame: pd.DataFrame | None) -> tuple[pd.DataFrame, list[Problem]]:
    """Type one table by the schema and fill defaults.

    Args:
        name: table name declared in ``netopt.schema.TABLES``.
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
        cname = as_text(c)
        if cname not in t.column_names:
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
    typed.index.name = "row"
    return typed, problems


# --------------------------------------------------------------------------- settings


def _setting_problem(label, rows, s: Setting, message, severity="error") -> Problem:
    return Problem(label, (rows or {}).get((s.section, s.name)), f"[{s.section}] {s.name}", message, severity)


def coerce_setting(s: Setting, value) -> tuple[object, str | None]:
    """Parse one setting value by its declared type; returns (value, error message or None)."""
    if s.type == "str":
        if isinstance(value, (dict, list)):
            return s.default, f"text expected, got {value!r}"
        return as_text(value), None
    if s.type == "list":
        if isinstance(value, str):
            items = [p.strip() for p in value.replace(",", "|").split("|") if p.strip()]
        elif isinstance(value, (list, tuple)):
            items = [as_text(p) for p in value]
            if any(isinstance(p, (list, dict)) for p in value):
                return s.default, f"list of names expected, got {value!r}"
        else:
            return s.default, f'list of names expected (e.g. ["a", "b"] or a|b), got {value!r}'
        allowed = _SETTING_CHOICES.get((s.section, s.name))
        if allowed is not None:
            bad = [p for p in items if p not in allowed]
            if bad:
                return s.default, f"unknown value(s) {', '.join(repr(b) for b in bad)}; allowed: {', '.join(allowed)}"
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
        return s.default, f"true or false expected, got {value!r}"
    # numbers
    if isinstance(value, (bool, np.bool_)) or isinstance(value, (list, dict)):
        return s.default, f"{'whole number' if s.type == 'int' else 'number'} expected, got {value!r}"
    if isinstance(value, str):
        v = _parse_float(value.strip())
        if v is None:
            return s.default, _number_message(value.strip(), "whole number" if s.type == "int" else "number")
    elif isinstance(value, (int, float, np.integer, np.floating)):
        v = float(value)
    else:
        return s.default, f"number expected, got {value!r}"
    if math.isnan(v) or math.isinf(v):
        return s.default, f"finite number expected, got {value!r}"
    if s.type == "int":
        if not v.is_integer():
            return s.default, f"whole number expected, got {value!r}"
        v = int(v)
    if (s.min is not None and v < s.min) or (s.max is not None and v > s.max):
        return s.default, f"must be {range_text(s)}, got {format_number(v)}"
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
    for s in SETTINGS:
        out.setdefault(s.section, {})[s.name] = list(s.default) if isinstance(s.default, list) else s.default
    for section, entries in (raw or {}).items():
        if not isinstance(entries, dict):
            problems.append(Problem(label, None, str(section), "setting outside any [section] (ignored)", "warning"))
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
            s = declared.get((section, name))
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


# --------------------------------------------------------------------------- cross-table rules


def _codes(frame: pd.DataFrame, column: str) -> pd.Series:
    """Non-blank codes of a typed text column."""
    if column not in frame.columns or frame.empty:
        return pd.Series([], dtype=str)
    s = frame[column].astype(str)
    return s[s != ""]


def _duplicate_keys(name: str, df: pd.DataFrame) -> list[Problem]:
    t = TABLES[name]
    key = list(t.key)
    if df.empty:
        return []
    keys = df[key].astype(str)
    required_key = [k for k in key if t.column(k).required]
    keys = keys[(keys[required_key] != "").all(axis=1)] if required_key else keys
    dup = keys.duplicated(keep=False)
    if not dup.any():
        return []
    problems = []
    for _, group in keys[dup].groupby(key, sort=False):
        rows = list(group.index)
        first = rows[0]
        what = ", ".join(f"{k}='{group.iloc[0][k]}'" for k in key)
        for r in rows[1:]:
            problems.append(
                Problem(name, _row(r), key[0], f"duplicate key ({what}): rows {first} and {r} both have it")
            )
    return problems


def _references(name: str, tables: dict[str, pd.DataFrame], usable: set[str]) -> list[Problem]:
    t = TABLES[name]
    df = tables[name]
    problems = []
    for ref in t.references:
        if ref.table not in usable or df.empty:
            continue
        known = set(_codes(tables[ref.table], ref.target_column))
        vals = df[ref.column].astype(str)
        bad = vals[(vals != "") & ~vals.isin(known)]
        for r, v in bad.items():
            problems.append(
                Problem(
                    name,
                    _row(r),
                    ref.column,
                    f"unknown {ref.target_column} '{v}' (not in table {ref.table})" + close_match_hint(v, known, 0.8),
                )
            )
    return problems


def _site_namespace(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    first_seen: dict[str, tuple[str, int]] = {}
    problems = []
    for table, col in SITE_TABLES:
        codes = _codes(tables[table], col)
        mine: dict[str, int] = {}
        for r, code in codes.items():
            mine.setdefault(code, _row(r))
        for code, r in mine.items():
            if code in first_seen:
                other, orow = first_seen[code]
                problems.append(
                    Problem(
                        table,
                        r,
                        col,
                        f"site code '{code}' is already used in {other} (row {orow}); supplier, "
                        "plant, DC and customer codes must all differ",
                    )
                )
        for code, r in mine.items():
            first_seen.setdefault(code, (table, r))
    return problems


def _consistent_site_rows(
    table: str, col: str, df: pd.DataFrame, kind: str, attrs: tuple[str, ...] = ("lat", "lon")
) -> list[Problem]:
    """Rows of one site (e.g. a plant making several products) must agree on its location."""
    problems = []
    if df.empty:
        return problems
    d = df[df[col].astype(str) != ""]
    for code, group in d.groupby(col, sort=False):
        if len(group) < 2:
            continue
        first_row = group.index[0]
        ref = group.iloc[0]
        for r, row in group.iloc[1:].iterrows():
            for a in attrs:
                x, y = ref[a], row[a]
                if (pd.isna(x) and pd.isna(y)) or x == y:
                    continue
                if pd.isna(x) or pd.isna(y):
                    continue
                if len(attrs) == 1:
                    shown, shown0 = f"'{as_text(row[a])}'", f"'{as_text(ref[a])}'"
                else:
                    shown = "(" + ", ".join(as_text(row[b]) for b in attrs) + ")"
                    shown0 = "(" + ", ".join(as_text(ref[b]) for b in attrs) + ")"
                problems.append(
                    Problem(
                        table,
                        _row(r),
                        a,
                        f"{kind} '{code}' has {'/'.join(attrs)} {shown} here but {shown0} on row "
                        f"{first_row}; every row of one site must agree",
                    )
                )
                break
    return problems


def _lane_sites(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    lanes = tables["lanes"]
    if lanes.empty:
        return []
    kinds: dict[str, str] = {}
    for table, col in SITE_TABLES:
        for code in _codes(tables[table], col):
            kinds.setdefault(code, col)
    problems = []
    for r, row in lanes.iterrows():
        o, d = str(row["origin"]), str(row["destination"])
        ok_kind, dk_kind = kinds.get(o), kinds.get(d)
        bad = False
        if o and ok_kind is None:
            problems.append(
                Problem(
                    "lanes",
                    _row(r),
                    "origin",
                    f"unknown origin site '{o}' (not a supplier, plant or DC)" + close_match_hint(o, kinds, 0.8),
                )
            )
            bad = True
        elif o and ok_kind not in ORIGIN_KINDS:
            problems.append(
                Problem(
                    "lanes", _row(r), "origin", f"origin '{o}' is a {ok_kind}; lanes start at a supplier, plant or DC"
                )
            )
            bad = True
        if d and dk_kind is None:
            problems.append(
                Problem(
                    "lanes",
                    _row(r),
                    "destination",
                    f"unknown destination site '{d}' (not a plant, DC or customer)" + close_match_hint(d, kinds, 0.8),
                )
            )
            bad = True
        elif d and dk_kind not in DESTINATION_KINDS:
            problems.append(
                Problem(
                    "lanes",
                    _row(r),
                    "destination",
                    f"destination '{d}' is a {dk_kind}; lanes end at a plant, DC or customer",
                )
            )
            bad = True
        if bad or not o or not d:
            continue
        if o == d:
            problems.append(Problem("lanes", _row(r), "destination", f"lane from '{o}' to itself"))
            continue
        leg = f"{ok_kind}-{dk_kind}"
        if leg not in LEGS:
            problems.append(
                Problem(
                    "lanes",
                    _row(r),
                    "destination",
                    f"a lane from a {ok_kind} to a {dk_kind} is not a leg of the network; legs are: {', '.join(LEGS)}",
                )
            )
    return problems


def _mode_rules(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    modes = tables["modes"]
    problems = []
    for r, row in modes.iterrows():
        legs = [p.strip() for p in str(row["legs"]).replace(",", "|").split("|") if p.strip()]
        bad = [p for p in legs if p not in LEGS]
        if bad:
            problems.append(
                Problem(
                    "modes",
                    _row(r),
                    "legs",
                    f"unknown leg(s) {', '.join(repr(b) for b in bad)}; legs are: {', '.join(LEGS)}",
                )
            )
        lo, hi = row["min_km"], row["max_km"]
        if pd.notna(lo) and pd.notna(hi) and lo > hi:
            problems.append(
                Problem(
                    "modes", _row(r), "min_km", f"min_km {format_number(lo)} is greater than max_km {format_number(hi)}"
                )
            )
    return problems


def _rows_where(name: str, df: pd.DataFrame, mask: pd.Series, column: str, message) -> list[Problem]:
    return [Problem(name, _row(r), column, message(row)) for r, row in df[mask].iterrows()]


def _other_rules(tables: dict[str, pd.DataFrame], given: set[str], usable: set[str]) -> list[Problem]:
    problems = []
    products = tables["products"]
    if "products" in usable and "demand" in usable:
        materials = set(_codes(products[products["kind"] == "material"], "product"))
        d = tables["demand"]
        problems += _rows_where(
            "demand",
            d,
            d["product"].isin(materials),
            "product",
            lambda row: (
                f"'{row['product']}' is a material (products.kind = material); demand must be for finished products"
            ),
        )
    bom = tables["bill_of_materials"]
    problems += _rows_where(
        "bill_of_materials",
        bom,
        (bom["product"] == bom["material"]) & (bom["product"] != ""),
        "material",
        lambda row: f"'{row['product']}' cannot be a material of itself",
    )
    if "service_classes" in given and not tables["service_classes"].empty and "customers" in usable:
        classes = set(_codes(tables["service_classes"], "service_class"))
        c = tables["customers"]
        problems += _rows_where(
            "customers",
            c,
            (c["service_class"] != "") & ~c["service_class"].isin(classes),
            "service_class",
            lambda row: f"unknown service class '{row['service_class']}' (not in table service_classes)",
        )
    edges = tables["road_edges"]
    if not edges.empty:
        modes = set(_codes(tables["modes"], "mode"))
        problems += _rows_where(
            "road_edges",
            edges,
            (edges["mode"] != "") & ~edges["mode"].isin(modes),
            "mode",
            lambda row: f"unknown mode '{row['mode']}' (not in table modes)",
        )
        problems += _rows_where(
            "road_edges",
            edges,
            (edges["from_node"] == edges["to_node"]) & (edges["from_node"] != ""),
            "to_node",
            lambda row: f"edge from '{row['from_node']}' to itself",
        )
    return problems


def _dc_count_rules(tables: dict[str, pd.DataFrame], settings: dict, label: str, rows) -> list[Problem]:
    policy = settings.get("policy", {})
    lo, hi = int(policy.get("min_open_dcs", 0)), int(policy.get("max_open_dcs", -1))
    problems = []
    where = rows or {}
    if hi >= 0 and lo > hi:
        problems.append(
            Problem(
                label,
                where.get(("policy", "min_open_dcs")),
                "[policy] min_open_dcs",
                f"min_open_dcs ({lo}) is greater than max_open_dcs ({hi})",
            )
        )
    dcs = tables["dcs"]
    names = dcs.drop_duplicates("dc") if not dcs.empty else dcs
    can_open = int((names["force"] != "closed").sum()) if not names.empty else 0
    forced_open = int((names["force"] == "open").sum()) if not names.empty else 0
    if lo > can_open:
        problems.append(
            Problem(
                label,
                where.get(("policy", "min_open_dcs")),
                "[policy] min_open_dcs",
                f"min_open_dcs ({lo}) is more than the {can_open} DC(s) that may be open "
                "(table dcs, force not 'closed')",
            )
        )
    if hi >= 0 and forced_open > hi:
        problems.append(
            Problem(
                label,
                where.get(("policy", "max_open_dcs")),
                "[policy] max_open_dcs",
                f"max_open_dcs ({hi}) is less than the {forced_open} DC(s) forced open in table dcs",
            )
        )
    return problems


# --------------------------------------------------------------------------- reachability


def _reach(starts: pd.DataFrame, lanes: pd.DataFrame) -> pd.DataFrame:
    """Every (node, item) an item can get to from its start nodes over the lanes.

    ``starts`` has columns node, item.  Start nodes ship their item; DCs pass on what
    reaches them; other nodes (plants, customers) only receive.  A lane row for a named
    product overrides the same origin, destination and mode's "" row for that product;
    rows with capacity ≤ 0 carry nothing.
    """
    cols = ["node", "item"]
    if starts.empty:
        return pd.DataFrame({"node": pd.Series(dtype=object), "item": pd.Series(dtype=object)})
    ln = lanes.assign(
        product=lanes["product"].fillna("").astype(str),
        capacity=pd.to_numeric(lanes["capacity"], errors="coerce").fillna(INF),
    )
    specific = ln[ln["product"] != ""]
    spec_open = specific[specific["capacity"] > 0][["origin", "product", "destination", "destination_kind"]]
    spec_open = spec_open.drop_duplicates()
    blocked = specific[["origin", "destination", "mode", "product"]].drop_duplicates()  # general row overridden
    general = ln[(ln["product"] == "") & (ln["capacity"] > 0)][["origin", "destination", "mode", "destination_kind"]]

    if blocked.empty:  # no per-product overrides: the mode does not matter
        general = general.drop_duplicates(["origin", "destination"])

    reached = starts[cols].drop_duplicates().astype(str)
    frontier = reached
    while not frontier.empty:
        a = frontier.merge(spec_open, left_on=["node", "item"], right_on=["origin", "product"])
        a = a[["destination", "item", "destination_kind"]]
        b = frontier.merge(general, left_on="node", right_on="origin")
        if not b.empty and not blocked.empty:
            b = b.merge(
                blocked.rename(columns={"product": "item"}),
                on=["origin", "destination", "mode", "item"],
                how="left",
                indicator=True,
            )
            b = b[b["_merge"] == "left_only"]
        b = b[["destination", "item", "destination_kind"]]
        new = pd.concat([a, b], ignore_index=True).rename(columns={"destination": "node"})
        new = new.drop_duplicates(cols).astype(str)
        new = new.merge(reached, on=cols, how="left", indicator=True)
        new = new[new["_merge"] == "left_only"].drop(columns="_merge")
        reached = pd.concat([reached, new[cols]], ignore_index=True)
        frontier = new[new["destination_kind"] == "dc"][cols]
    return reached


def _names(values, limit: int = 3) -> str:
    values = sorted(set(values))
    shown = ", ".join(values[:limit])
    return shown + (f" and {len(values) - limit} more" if len(values) > limit else "")


def unreachable_demand(tables: dict[str, pd.DataFrame], lanes: pd.DataFrame) -> list[Problem]:
    """Demand that no source can reach over the lanes.

    A source of a finished product is a plant that makes it (and can receive every
    material of its bill of materials from some supplier over the lanes, possibly via
    a DC) or a supplier that offers it.  Paths may run through any number of DCs and
    use lanes of any mode; DCs forced closed are skipped.  One error per demand row
    with positive quantity that no source reaches.

    Args:
        tables: typed case tables (index = user row numbers).
        lanes: the lane table of ``netopt.lanes.build_lanes`` (columns origin,
            origin_kind, destination, destination_kind, mode, product, capacity, ...).
    """
    demand = tables["demand"]
    demand = demand[demand["quantity"] > 0]
    if demand.empty:
        return []
    dcs = tables["dcs"]
    closed = set(dcs.loc[dcs["force"] == "closed", "dc"].astype(str)) if not dcs.empty else set()
    ln = lanes
    if closed:
        ln = ln[~ln["origin"].isin(closed) & ~ln["destination"].isin(closed)]
    ln = ln[["origin", "destination", "destination_kind", "mode", "product", "capacity"]]

    suppliers = tables["suppliers"][["supplier", "product"]].astype(str)
    plants = tables["plants"][["plant", "product"]].astype(str)
    bom = tables["bill_of_materials"][["product", "material"]].astype(str)

    # which plants can get every material of the products they make
    lacking: dict[tuple[str, str], list[str]] = {}
    if not bom.empty and not plants.empty:
        need = plants.merge(bom, on="product")
        if not need.empty:
            mat_starts = suppliers[suppliers["product"].isin(set(need["material"]))]
            got = _reach(mat_starts.rename(columns={"supplier": "node", "product": "item"}), ln)
            chk = need.merge(got, left_on=["plant", "material"], right_on=["node", "item"], how="left", indicator=True)
            for _, row in chk[chk["_merge"] == "left_only"].iterrows():
                lacking.setdefault((row["plant"], row["product"]), []).append(row["material"])
    able = plants[[(p, q) not in lacking for p, q in zip(plants["plant"], plants["product"])]]
    starts = pd.concat(
        [
            able.rename(columns={"plant": "node", "product": "item"}),
            suppliers.rename(columns={"supplier": "node", "product": "item"}),
        ],
        ignore_index=True,
    )
    wanted = set(demand["product"].astype(str))
    starts = starts[starts["item"].isin(wanted)]
    reached = _reach(starts, ln)

    d = demand[["customer", "product"]].astype(str).reset_index(names="_row")
    chk = d.merge(reached, left_on=["customer", "product"], right_on=["node", "item"], how="left", indicator=True)
    missing = chk[chk["_merge"] == "left_only"]
    if missing.empty:
        return []
    makers = plants.groupby("product")["plant"].apply(list).to_dict()
    sellers = suppliers.groupby("product")["supplier"].apply(list).to_dict()
    problems = []
    for _, row in missing.sort_values("_row").iterrows():
        c, p, r = row["customer"], row["product"], _row(row["_row"])
        mk, sl = makers.get(p, []), sellers.get(p, [])
        if not mk and not sl:
            msg = f"no plant makes and no supplier offers '{p}', so customer '{c}' cannot be served"
            col = "product"
        elif not sl and all((m, p) in lacking for m in mk):
            why = "; ".join(f"{m} lacks {_names(lacking[(m, p)])}" for m in sorted(set(mk))[:3])
            msg = (
                f"'{p}' for customer '{c}' has no source: every plant making it lacks a lane path for a "
                f"material of its bill of materials ({why}) and no supplier offers it"
            )
            col = "product"
        else:
            src = "; ".join(
                x for x in (f"plants: {_names(mk)}" if mk else "", f"suppliers: {_names(sl)}" if sl else "") if x
            )
            msg = (
                f"no lane path reaches customer '{c}' with '{p}' from any source ({src}), directly or via a DC; "
                "check the modes' min_km/max_km and legs, the settings' lanes.legs and lanes.max_dc_customer_km, "
                "DCs forced closed, and lanes with available = false"
            )
            col = "customer"
        problems.append(Problem("demand", r, col, msg))
    return problems


# --------------------------------------------------------------------------- entry points


_LANE_BUILDER: list[Callable] = []  # set by netopt.network.lanes on import (the stage after this one)


def register_lane_builder(build: Callable) -> None:
    """Let validation check demand reachability with the network stage's lane builder.

    The data stage never imports the network stage; the network stage registers its
    builder here when it is imported (``import netopt`` always imports it).
    """
    _LANE_BUILDER[:] = [build]


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
        if frame is None and t.required:
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

    for name in TABLES:
        if name in usable:
            problems += _duplicate_keys(name, typed[name])
            problems += _references(name, typed, usable)
    problems += _site_namespace(typed)
    problems += _consistent_site_rows("suppliers", "supplier", typed["suppliers"], "supplier", ("lat", "lon"))
    problems += _consistent_site_rows("suppliers", "supplier", typed["suppliers"], "supplier", ("region",))
    problems += _consistent_site_rows("plants", "plant", typed["plants"], "plant", ("lat", "lon"))
    problems += _lane_sites(typed)
    problems += _mode_rules(typed)
    problems += _other_rules(typed, given, usable)
    problems += _dc_count_rules(typed, typed_settings, label, settings_rows)
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
