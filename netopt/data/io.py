"""Reading cases: a folder of CSV files plus TOML settings, or one workbook (writing: :mod:`netopt.data.writing`).

A case folder holds ``settings.toml``, one ``<table>.csv`` per table and optionally
``scenarios.toml`` (its ``[[scenario]]`` entries are kept as given).  A case workbook
(``.xlsx``) holds one sheet per table, a sheet ``settings`` with columns
section, name, value, optionally a ``scenarios`` sheet (:mod:`netopt.data.scenario_sheet`) and a
``schema`` sheet (ignored).

Every cell is read as text and then typed by the schema, so a wrong value becomes a
:class:`~netopt.data.case.Problem` naming its table, row and column rather than an
exception.  Row numbers are those the user sees: the CSV line (header = line 1) or
the sheet row.
"""

from __future__ import annotations

import csv
import io as _stdio
import os
import re

try:
    import tomllib  # type: ignore[import-not-found, unused-ignore]  # Python 3.11+
except ModuleNotFoundError:  # Python 3.10: the same parser, as the tomli package
    import tomli as tomllib
from pathlib import Path

import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.scenario_sheet import SHEET as SCENARIO_SHEET
from netopt.data.scenario_sheet import scenarios_from_sheet
from netopt.data.schema import TABLES
from netopt.data.text import as_text, close_match_hint
from netopt.data.validate import sort_problems, validate_and_coerce

SETTINGS_FILE = "settings.toml"
SCENARIOS_FILE = "scenarios.toml"
SETTINGS_SHEET = "settings"
IGNORED_SHEETS = ("schema",)


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
    scenarios: list[dict] = []
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
        elif sheet == SCENARIO_SHEET:
            frame, probs = _frame_from_records(SCENARIO_SHEET, records)
            problems += probs
            if frame is not None:
                scenarios, probs = scenarios_from_sheet(frame)
                problems += probs
        elif sheet not in IGNORED_SHEETS:
            problems.append(
                Problem(sheet, None, None, "unknown sheet (ignored)" + close_match_hint(sheet, TABLES), "warning")
            )
    if SETTINGS_SHEET not in by_name:
        problems.append(
            Problem(SETTINGS_SHEET, None, None, "no settings sheet: every setting takes its default", "warning")
        )
    beside = path.parent / SCENARIOS_FILE
    if beside.exists():
        problems.append(
            Problem(
                SCENARIOS_FILE,
                None,
                None,
                f"{beside} is not read with the workbook {path.name}: a workbook case keeps its scenarios in its "
                f"'{SCENARIO_SHEET}' sheet (netopt export converts a case folder with its scenarios.toml)",
            )
        )
    return tables, settings, sources, rows, scenarios, problems


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
        sources: see :func:`netopt.data.validate.validate_and_coerce`.
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
