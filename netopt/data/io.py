"""Reading and writing cases: a folder of CSV files plus TOML settings, or one workbook.

A case folder holds ``settings.toml``, one ``<table>.csv`` per table and optionally
``scenarios.toml`` (its ``[[scenario]]`` entries are kept as given).  A case workbook
(``.xlsx``) holds one sheet per table, a sheet ``settings`` with columns
section, name, value, and optionally sheets ``scenarios`` and ``schema`` (ignored).

Every cell is read as text and then typed by the schema, so a wrong value becomes a
:class:`~netopt.case.Problem` naming its table, row and column rather than an
exception.  Row numbers are those the user sees: the CSV line (header = line 1) or
the sheet row.
"""

from __future__ import annotations

import csv
import io as _stdio
import math
import os
import re
import shutil
import tempfile

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10: the same parser, as the tomli package
    import tomli as tomllib
from pathlib import Path

import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.schema import INF, SETTINGS, TABLES
from netopt.data.validate import (
    as_text,
    close_match_hint,
    format_number,
    range_text,
    sort_problems,
    validate_and_coerce,
)

SETTINGS_FILE = "settings.toml"
SCENARIOS_FILE = "scenarios.toml"
SETTINGS_SHEET = "settings"
IGNORED_SHEETS = ("scenarios", "schema")
LIST_SEPARATOR = "|"


# --------------------------------------------------------------------------- reading


def _frame_from_records(label: str, records: list[tuple[int, list[str]]]) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Table from (row number, cells) records; the first record is the header.

    Blank records are skipped (their row numbers stay unused); cells past the header
    must be blank; short records are padded with blanks.
    """
    problems: list[Problem] = []
    records = [(n, [c.strip().lstrip("\ufeff").strip() for c in cells]) for n, cells in records]
    records = [(n, cells) for n, cells in records if any(cells)]
    if not records:
        problems.append(Problem(label, None, None, "no header row: the first line must name the columns"))
        return None, problems
    hrow, header = records[0]
    while header and header[-1] == "":
        header = header[:-1]
    width = len(header)
    rows, index = [], []
    for n, cells in records[1:]:
        if len(cells) > width:
            extra = cells[width:]
            if any(extra):
                problems.append(
                    Problem(
                        label,
                        n,
                        None,
                        f"row has {width + max(i for i, c in enumerate(extra) if c) + 1} values but "
                        f"the header names {width} columns",
                    )
                )
            cells = cells[:width]
        elif len(cells) < width:
            cells = cells + [""] * (width - len(cells))
        rows.append(cells)
        index.append(n)
    seen: set[str] = set()
    keep = []
    for j, name in enumerate(header):
        if name == "":
            if any(r[j] for r in rows):
                problems.append(
                    Problem(
                        label, hrow, f"(column {j + 1})", "values under a column with no header (ignored)", "warning"
                    )
                )
            continue
        if name in seen:
            problems.append(Problem(label, None, name, "column appears more than once in the header"))
            continue
        seen.add(name)
        keep.append(j)
    data = {header[j]: [r[j] for r in rows] for j in keep}
    frame = pd.DataFrame(data, index=pd.Index(index, dtype="int64", name="row"), dtype=object)
    if not keep:
        frame = pd.DataFrame(index=pd.Index(index, dtype="int64", name="row"))
    return frame, problems


def _decode(path: Path, label: str) -> tuple[str | None, list[Problem]]:
    try:
        data = path.read_bytes()
    except OSError as e:
        return None, [Problem(label, None, None, f"cannot read the file: {e.strerror or e}")]
    try:
        return data.decode("utf-8-sig"), []
    except UnicodeDecodeError as e:
        line = data[: e.start].count(b"\n") + 1
        return None, [Problem(label, line, None, "the file is not UTF-8 text (save it as 'CSV UTF-8')")]


def read_csv_table(path: Path, table: str) -> tuple[pd.DataFrame | None, list[Problem]]:
    """One CSV file as a text table indexed by file line (header = line 1)."""
    text, problems = _decode(path, table)
    if text is None:
        return None, problems
    records = []
    reader = csv.reader(_stdio.StringIO(text, newline=""))
    last = 0
    try:
        for cells in reader:
            records.append((last + 1, cells))
            last = reader.line_num
    except csv.Error as e:
        return None, [Problem(table, last + 1, None, f"not readable as CSV: {e}")]
    return _frame_from_records(table, records)


def _read_toml(path: Path, label: str) -> tuple[dict | None, list[Problem]]:
    text, problems = _decode(path, label)
    if text is None:
        return None, problems
    try:
        return tomllib.loads(text), []
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        return None, [Problem(label, int(m.group(1)) if m else None, None, f"not valid TOML: {e}")]


def _scenarios_from_toml(data: dict, label: str) -> tuple[list[dict], list[Problem]]:
    items = data.get("scenario", [])
    if not isinstance(items, list) or not all(isinstance(x, dict) for x in items):
        return [], [Problem(label, None, "[[scenario]]", "expected an array of tables written as [[scenario]]")]
    extra = [k for k in data if k != "scenario"]
    probs = [Problem(label, None, k, "unknown entry outside [[scenario]] (ignored)", "warning") for k in extra]
    return [dict(x) for x in items], probs


def _read_folder(folder: Path):
    tables: dict[str, pd.DataFrame] = {}
    sources: dict[str, str] = {"settings": SETTINGS_FILE}
    problems: list[Problem] = []
    files = {p.name: p for p in folder.iterdir() if p.is_file()}
    for name, t in TABLES.items():
        p = files.get(t.file_name)
        if p is None:
            continue
        frame, probs = read_csv_table(p, name)
        problems += probs
        if frame is not None:
            tables[name] = frame
            sources[name] = t.file_name
    known = {t.file_name for t in TABLES.values()}
    for fname in sorted(files):
        if fname.lower().endswith(".csv") and fname not in known:
            problems.append(
                Problem(fname, None, None, "unknown table file (ignored)" + close_match_hint(fname, known), "warning")
            )
    settings: dict = {}
    if SETTINGS_FILE in files:
        data, probs = _read_toml(files[SETTINGS_FILE], SETTINGS_FILE)
        problems += probs
        settings = data or {}
    else:
        problems.append(
            Problem(SETTINGS_FILE, None, None, "no settings file: every setting takes its default", "warning")
        )
    scenarios: list[dict] = []
    if SCENARIOS_FILE in files:
        data, probs = _read_toml(files[SCENARIOS_FILE], SCENARIOS_FILE)
        problems += probs
        if data is not None:
            scenarios, probs = _scenarios_from_toml(data, SCENARIOS_FILE)
            problems += probs
    return tables, settings, sources, {}, scenarios, problems


def _settings_from_frame(frame: pd.DataFrame, label: str):
    """``{section: {name: value}}`` and the sheet row of each entry, from a section/name/value table."""
    problems = []
    cols = {as_text(c).lower(): c for c in frame.columns}
    missing = [c for c in ("section", "name", "value") if c not in cols]
    if missing:
        return (
            {},
            {},
            [
                Problem(
                    label, None, m, "required column is missing (the settings sheet has columns section, name, value)"
                )
                for m in missing
            ],
        )
    settings: dict[str, dict[str, object]] = {}
    rows: dict[tuple[str, str], int] = {}
    for r, rec in frame.iterrows():
        sec, name, value = as_text(rec[cols["section"]]), as_text(rec[cols["name"]]), as_text(rec[cols["value"]])
        if not sec and not name:
            continue
        if not sec or not name:
            problems.append(Problem(label, int(r), "section" if not sec else "name", "blank section or name"))
            continue
        if (sec, name) in rows:
            problems.append(
                Problem(label, int(r), "name", f"[{sec}] {name} is given twice: rows {rows[(sec, name)]} and {int(r)}")
            )
            continue
        rows[(sec, name)] = int(r)
        if value == "":
            continue  # blank = default
        settings.setdefault(sec, {})[name] = value
    return settings, rows, problems


def _read_workbook(path: Path):
    problems: list[Problem] = []
    try:
        sheets = pd.read_excel(path, sheet_name=None, header=None, dtype=str, keep_default_na=False, engine="openpyxl")
    except Exception as e:  # openpyxl raises many kinds on a damaged or foreign file
        raise CaseError([Problem(path.name, None, None, f"cannot read the workbook: {e}")]) from None
    tables: dict[str, pd.DataFrame] = {}
    sources: dict[str, str] = {"settings": SETTINGS_SHEET}
    settings: dict = {}
    rows: dict = {}
    by_name = {str(k).strip(): v for k, v in sheets.items()}
    for sheet, grid in by_name.items():
        records = [(i + 1, [as_text(v) for v in rec]) for i, rec in enumerate(grid.itertuples(index=False))]
        if sheet in TABLES:
            frame, probs = _frame_from_records(sheet, records)
            problems += probs
            if frame is not None:
                tables[sheet] = frame
                sources[sheet] = f"sheet {sheet}"
        elif sheet == SETTINGS_SHEET:
            frame, probs = _frame_from_records(SETTINGS_SHEET, records)
            problems += probs
            if frame is not None:
                settings, rows, probs = _settings_from_frame(frame, SETTINGS_SHEET)
                problems += probs
        elif sheet not in IGNORED_SHEETS:
            problems.append(
                Problem(sheet, None, None, "unknown sheet (ignored)" + close_match_hint(sheet, TABLES), "warning")
            )
    if SETTINGS_SHEET not in by_name:
        problems.append(
            Problem(SETTINGS_SHEET, None, None, "no settings sheet: every setting takes its default", "warning")
        )
    return tables, settings, sources, rows, [], problems


def case_from_tables(
    tables: dict[str, pd.DataFrame | None],
    settings: dict | None = None,
    *,
    name: str = "case",
    path: Path | None = None,
    sources: dict[str, str] | None = None,
    scenarios: list[dict] | None = None,
    settings_rows: dict[tuple[str, str], int] | None = None,
    problems: list[Problem] | None = None,
) -> Case:
    """Validate tables and settings (text or typed) and return the typed :class:`Case`.

    Args:
        tables: table name → DataFrame, index = user row numbers.
        settings: ``{section: {name: value}}``; missing entries take defaults.
        name: case name used when the settings' ``[case] name`` is blank.
        path: where the case was read from, if anywhere.
        sources: see :func:`netopt.validate.validate_and_coerce`.
        scenarios: raw ``[[scenario]]`` entries, kept as given.
        settings_rows: sheet row of each setting (workbook only).
        problems: problems already found while reading (they count too).

    Raises:
        CaseError: with every error (and warning) when any error exists.
    """
    built: dict = {}
    typed, typed_settings, found = validate_and_coerce(
        tables, settings, sources, settings_rows=settings_rows, built=built
    )
    found = sort_problems(list(problems or []) + found)
    if any(p.severity == "error" for p in found):
        raise CaseError(found)
    case_name = str(typed_settings.get("case", {}).get("name") or "") or name
    return Case(
        case_name,
        typed,
        typed_settings,
        Path(path) if path is not None else None,
        list(scenarios or []),
        [p for p in found if p.severity != "error"],
        built.get("lanes"),
    )


def load_case(path: str | os.PathLike) -> Case:
    """Load and validate a case folder or ``.xlsx`` workbook.

    Raises:
        CaseError: every problem at once (missing files, bad cells, broken references,
            unreachable demand, bad settings); warnings go to ``case.warnings``.
    """
    p = Path(path)
    if not p.exists():
        raise CaseError([Problem(str(p), None, None, "no such case folder or workbook")])
    if p.is_dir():
        tables, settings, sources, rows, scenarios, problems = _read_folder(p)
        name = p.resolve().name
    elif p.suffix.lower() in (".xlsx", ".xlsm"):
        tables, settings, sources, rows, scenarios, problems = _read_workbook(p)
        name = p.stem
    else:
        raise CaseError(
            [Problem(p.name, None, None, "a case is a folder of CSV files with settings.toml, or one .xlsx workbook")]
        )
    return case_from_tables(
        tables, settings, name=name, path=p, sources=sources, scenarios=scenarios, settings_rows=rows, problems=problems
    )


# --------------------------------------------------------------------------- writing


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
    Scenarios are not written (a workbook's ``scenarios`` sheet is not read yet).

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
