"""Reading cases: a folder of CSV files plus TOML settings, or one workbook (writing: :mod:`netopt.data.writing`).

A case folder holds ``settings.toml``, one ``<table>.csv`` per table and optionally
``scenarios.toml`` (its ``[[scenario]]`` entries are kept as given).  A case workbook
(``.xlsx``) holds one sheet per table, a sheet ``settings`` with columns
section, name, value, optionally a ``scenarios`` sheet (:mod:`netopt.data.scenario_sheet`) and a
``schema`` sheet (ignored); the workbook itself is read by :mod:`netopt.data.workbook_read`.
Every file is read within the limits of :mod:`netopt.data.limits` (file size, rows, columns, cell
length), and a file, sheet, header or setting name that matches a known one but for case, spacing or
invisible characters is an error (:mod:`netopt.data.header_names`).

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

from netopt.data import limits
from netopt.data.case import Case, CaseError, Problem
from netopt.data.header_names import resemblance_message, resembled
from netopt.data.records import frame_from_records
from netopt.data.schema import TABLES
from netopt.data.text import close_match_hint
from netopt.data.validate import sort_problems, validate_and_coerce
from netopt.data.workbook_read import IGNORED_SHEETS, SCENARIOS_FILE, SETTINGS_SHEET, read_workbook

SETTINGS_FILE = "settings.toml"
_SPACE = re.compile(r"[^\S\r\n]")
_EDGE_SPACE = re.compile(r"(?:^|[,\r])[^\S\r\n]|[^\S\r\n](?:[,\r]|$)", re.MULTILINE)


def _may_need_trim(text: str) -> bool:
    """Whether a cell of this CSV text may have something to trim at an end: the text holds a quote (a cell
    may then hold any text), a byte-order mark, or white space (``\\s``: what ``str.strip`` removes) other
    than a line end next to a comma or a line's start or end (a line ends at ``\\n``, ``\\r`` or both,
    as the csv reader splits them)."""
    if '"' in text or "\ufeff" in text:
        return True
    return _SPACE.search(text) is not None and _EDGE_SPACE.search(text) is not None


__all__ = [
    "IGNORED_SHEETS",
    "SCENARIOS_FILE",
    "SETTINGS_FILE",
    "SETTINGS_SHEET",
    "case_from_tables",
    "load_case",
    "read_csv_table",
]


# --------------------------------------------------------------------------- reading


def _decode(path: Path, label: str, most: int) -> tuple[str | None, list[Problem]]:
    """The file's text (UTF-8), refused unread when larger than ``most`` bytes."""
    try:
        size = path.stat().st_size
        if size > most:
            return None, [Problem(label, None, None, f"file holds {size:,} bytes; at most {most:,} are read")]
        data = path.read_bytes()
    except OSError as e:
        return None, [Problem(label, None, None, f"cannot read the file: {e.strerror or e}")]
    try:
        return data.decode("utf-8-sig"), []
    except UnicodeDecodeError as e:
        line = data[: e.start].count(b"\n") + 1
        return None, [Problem(label, line, None, "the file is not UTF-8 text (save it as 'CSV UTF-8')")]


def read_csv_table(path: Path, table: str) -> tuple[pd.DataFrame | None, list[Problem]]:
    """One CSV file as a text table indexed by file line (header = line 1), within the size limits
    (:data:`~netopt.data.limits.MAX_CSV_FILE_BYTES`, :data:`~netopt.data.limits.MAX_TABLE_ROWS`,
    :data:`~netopt.data.limits.MAX_TABLE_COLUMNS`)."""
    text, problems = _decode(path, table, limits.MAX_CSV_FILE_BYTES)
    if text is None:
        return None, problems
    records = []
    reader = csv.reader(_stdio.StringIO(text, newline=""))
    last = 0
    rows_most, cols_most = limits.MAX_TABLE_ROWS, limits.MAX_TABLE_COLUMNS
    try:
        for cells in reader:
            records.append((last + 1, cells))
            last = reader.line_num
            if len(records) > rows_most + 1:
                return None, [Problem(table, None, None, f"file has more than {rows_most:,} rows (MAX_TABLE_ROWS)")]
            if len(cells) > cols_most:
                return None, [Problem(table, last, None, f"row has more than {cols_most:,} values (MAX_TABLE_COLUMNS)")]
    except csv.Error as e:
        if "field larger than field limit" in str(e):  # the csv module stops long before a cell is read whole
            msg = f"a cell holds more than {csv.field_size_limit():,} characters; at most {limits.MAX_CELL_CHARS:,} are read"
            return None, [Problem(table, last + 1, None, msg + " (MAX_CELL_CHARS)")]
        return None, [Problem(table, last + 1, None, f"not readable as CSV: {e}")]
    return frame_from_records(table, records, trimmed=not _may_need_trim(text))


def _read_toml(path: Path, label: str) -> tuple[dict | None, list[Problem]]:
    text, problems = _decode(path, label, limits.MAX_TOML_FILE_BYTES)
    if text is None:
        return None, problems
    try:
        return tomllib.loads(text), []
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        return None, [Problem(label, int(m.group(1)) if m else None, None, f"not valid TOML: {e}")]
    except RecursionError:
        return None, [Problem(label, None, None, "not valid TOML: arrays or tables nested too deeply to read")]
    except ValueError as e:  # e.g. an integer of more digits than Python converts
        return None, [Problem(label, None, None, f"not valid TOML: {str(e)[:200]}")]


def _scenarios_from_toml(data: dict, label: str) -> tuple[list[dict], list[Problem]]:
    items = data.get("scenario", [])
    if not isinstance(items, list) or not all(isinstance(x, dict) for x in items):
        return [], [Problem(label, None, "[[scenario]]", "expected an array of tables written as [[scenario]]")]
    probs = [
        Problem(
            label,
            None,
            k,
            f"unknown entry outside [[scenario]]: {label} holds only [[scenario]] tables"
            + close_match_hint(str(k), ["scenario"]),
        )
        for k in data
        if k != "scenario"
    ]
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
        sources[name] = t.file_name  # given, even when unreadable (its problems say why)
        if frame is not None:
            tables[name] = frame
    known = {t.file_name for t in TABLES.values()}
    for fname in sorted(files):
        like = resembled(fname, known | {SETTINGS_FILE, SCENARIOS_FILE}) if fname not in known else None
        if like is not None and like not in files:
            problems.append(Problem(fname, None, None, resemblance_message(fname, like, "case file")))
        elif fname.lower().endswith(".csv") and fname not in known:
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
        tables, settings, sources, rows, scenarios, problems = read_workbook(p)
        name = p.stem
    else:
        raise CaseError(
            [Problem(p.name, None, None, "a case is a folder of CSV files with settings.toml, or one .xlsx workbook")]
        )
    return case_from_tables(
        tables, settings, name=name, path=p, sources=sources, scenarios=scenarios, settings_rows=rows, problems=problems
    )
