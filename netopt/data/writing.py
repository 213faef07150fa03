"""Writing cases: a folder of CSV files plus TOML settings, or one workbook (reading: :mod:`netopt.data.io`).

Every file is written under a temporary name beside its final place and renamed into
place, so a reader never sees half a case.
"""

from __future__ import annotations

import csv
import math
import os
import re
import shutil
import tempfile
from dataclasses import replace
from pathlib import Path

import pandas as pd

from netopt.data.case import Case
from netopt.data.io import SCENARIOS_FILE, SETTINGS_FILE, SETTINGS_SHEET
from netopt.data.scenario_sheet import SHEET as SCENARIO_SHEET
from netopt.data.scenario_sheet import scenarios_sheet
from netopt.data.schema import INF, TABLES
from netopt.data.settings_schema import SETTINGS
from netopt.data.text import as_text, format_number, range_text

LIST_SEPARATOR = "|"  # joins the items of a list setting in a settings sheet cell


def format_cell(value, column) -> str:
    """A typed value as CSV text: blank for missing and for 'no limit' where that is the default."""
    if column.type == "float":
        if value is None or pd.isna(value):
            return ""
        v = float(value)
        if math.isinf(v) and v > 0 and column.default == INF:
            return ""
        return format_number(v)
    return as_text(value)


def _sheet_cell(value, column):
    """A typed value as a workbook cell: numbers stay numbers, text stays text."""
    if column.type in ("float", "int"):
        if value is None or pd.isna(value):
            return None
        v = float(value)
        if math.isinf(v):
            return None if (v > 0 and column.default == INF) else format_number(v)
        return int(v) if column.type == "int" else v
    if column.type == "bool":
        return None if value is None or pd.isna(value) else bool(value)
    text = as_text(value)
    return text if text != "" else None


def format_setting(value, type_: str) -> str:
    """A setting as the text of a settings sheet cell (lists joined with '|')."""
    if type_ == "list":
        return LIST_SEPARATOR.join(as_text(v) for v in value)
    return as_text(value)


def toml_value(value) -> str:
    """A TOML literal for a str, bool, int, float, list or dict value."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        out = value.replace("\\", "\\\\").replace('"', '\\"')
        for ch, esc in (("\n", "\\n"), ("\t", "\\t"), ("\r", "\\r")):
            out = out.replace(ch, esc)
        out = "".join(c if ord(c) >= 0x20 and ord(c) != 0x7F else f"\\u{ord(c):04x}" for c in out)
        return f'"{out}"'
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{_toml_key(k)} = {toml_value(v)}" for k, v in value.items()) + " }"
    raise TypeError(f"cannot write {type(value).__name__} to TOML")


def _toml_key(key: str) -> str:
    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else toml_value(str(key))


def settings_toml(settings: dict, comments: bool = False) -> str:
    """The settings as TOML text; with ``comments``, each entry is preceded by its meaning and unit."""
    lines = ["# netopt case settings: [section] name = value. Missing entries take their default."]
    if comments:
        lines.append("# Each entry below shows its default; change what your case needs.")
    section = None
    for s in SETTINGS:
        if s.section != section:
            section = s.section
            lines += ["", f"[{section}]"]
        value = settings.get(s.section, {}).get(s.name, s.default)
        if comments:
            extra = "; ".join(
                x
                for x in (s.unit, range_text(s, with_unit=False) if s.min is not None or s.max is not None else "")
                if x
            )
            lines.append(f"# {s.meaning}" + (f" [{extra}]" if extra else ""))
        lines.append(f"{s.name} = {toml_value(value)}")
    return "\n".join(lines) + "\n"


def scenarios_toml(scenarios: list[dict]) -> str:
    """Scenarios as a TOML array of tables ``[[scenario]]``."""
    lines = []
    for sc in scenarios:
        lines.append("[[scenario]]")
        lines += [f"{_toml_key(k)} = {toml_value(v)}" for k, v in sc.items()]
        lines.append("")
    return "\n".join(lines)


def _table_rows(case: Case, name: str):
    t = TABLES[name]
    df = case.tables.get(name)
    if df is None:
        return [], []
    cols = [c for c in t.columns if c.name in df.columns]
    if t.open_columns is not None:  # a wide table's own columns (the lane matrix's destinations)
        cols += [replace(t.open_columns, name=n) for n in t.open_names([str(c) for c in df.columns])]
    return cols, [[rec[c.name] for c in cols] for _, rec in df.iterrows()]


def _publish_dir(tmp: Path, final: Path, overwrite: bool) -> None:
    """Rename a finished temp folder into place (replacing ``final`` only when allowed)."""
    if final.exists():
        if final.is_dir() and not any(final.iterdir()):
            final.rmdir()
        elif not overwrite:
            shutil.rmtree(tmp, ignore_errors=True)
            raise FileExistsError(f"{final} exists and is not empty")
        else:
            old = final.with_name(final.name + f".old-{os.getpid()}")
            final.rename(old)
            tmp.rename(final)
            shutil.rmtree(old, ignore_errors=True)
            return
    tmp.rename(final)


def temp_dir_beside(final: Path) -> Path:
    """A fresh temporary folder next to ``final`` (same file system, so renaming is atomic)."""
    final.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{final.name}.tmp-", dir=final.parent))
    os.chmod(tmp, 0o777 & ~_umask())  # mkdtemp makes it private; give it the usual permissions
    return tmp


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_csv(path: Path, header: list[str], rows: list[list[str]]) -> None:
    """A UTF-8 CSV file with ``\\n`` line ends."""
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


def write_case_csv(case: Case, folder: str | os.PathLike, overwrite: bool = False) -> Path:
    """Write a case as a folder: ``settings.toml``, ``<table>.csv`` files, ``scenarios.toml``.

    Required tables are always written; optional ones only when they have rows.  The
    folder is written under a temporary name and renamed into place.

    Raises:
        FileExistsError: ``folder`` exists, is not empty and ``overwrite`` is false.
    """
    final = Path(folder)
    tmp = temp_dir_beside(final)
    try:
        for name, t in TABLES.items():
            df = case.tables.get(name)
            if df is None or (df.empty and not t.required):
                continue
            cols, rows = _table_rows(case, name)
            write_csv(
                tmp / t.file_name, [c.name for c in cols], [[format_cell(v, c) for v, c in zip(r, cols)] for r in rows]
            )
        (tmp / SETTINGS_FILE).write_text(settings_toml(case.settings), encoding="utf-8")
        if case.scenarios:
            (tmp / SCENARIOS_FILE).write_text(scenarios_toml(case.scenarios), encoding="utf-8")
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    _publish_dir(tmp, final, overwrite)
    return final


def _append_literal(ws, values: list) -> None:
    """Append a row; text starting with '=' stays text (openpyxl would store it as a formula)."""
    ws.append(values)
    for cell in ws[ws.max_row]:
        if isinstance(cell.value, str) and cell.value.startswith("="):
            cell.data_type = "s"


def write_case_workbook(case: Case, path: str | os.PathLike, overwrite: bool = False) -> Path:
    """Write a case as one ``.xlsx`` workbook: a sheet per table plus a ``settings`` sheet.

    Numbers are written as numbers, text as text, "no limit" capacities as blank cells
    and lists of the settings joined with '|'.  Written to a temporary file and renamed.
    The case's scenarios go to a ``scenarios`` sheet (one row per change).

    Raises:
        FileExistsError: ``path`` exists and ``overwrite`` is false.
    """
    from openpyxl import Workbook

    final = Path(path)
    if final.exists() and not overwrite:
        raise FileExistsError(f"{final} exists")
    wb = Workbook()
    wb.remove(wb.active)
    for name, t in TABLES.items():
        df = case.tables.get(name)
        if df is None or (df.empty and not t.required):
            continue
        ws = wb.create_sheet(name)
        cols, rows = _table_rows(case, name)
        ws.append([c.name for c in cols])
        for r in rows:
            _append_literal(ws, [_sheet_cell(v, c) for v, c in zip(r, cols)])
    ws = wb.create_sheet(SETTINGS_SHEET)
    ws.append(["section", "name", "value"])
    for s in SETTINGS:
        value = case.settings.get(s.section, {}).get(s.name, s.default)
        cell = value if s.type in ("float", "int", "bool") else format_setting(value, s.type)
        _append_literal(ws, [s.section, s.name, cell if cell != "" else None])
    if case.scenarios:
        sheet = scenarios_sheet(case.scenarios)
        ws = wb.create_sheet(SCENARIO_SHEET)
        ws.append(list(sheet.columns))
        for rec in sheet.itertuples(index=False):
            _append_literal(ws, [None if v == "" else v for v in rec])
    final.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp_name = tempfile.mkstemp(prefix=f".{final.name}.tmp-", suffix=".xlsx", dir=final.parent)
    os.close(fd)
    try:
        os.chmod(tmp_name, 0o666 & ~_umask())
        wb.save(tmp_name)
        os.replace(tmp_name, final)
    except BaseException:
        Path(tmp_name).unlink(missing_ok=True)
        raise
    return final
