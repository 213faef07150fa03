"""Reading a case workbook (``.xlsx``): bounded, streamed, and without trusting cached formula values.

Before anything is decompressed the zip directory's total uncompressed size is checked against
:data:`~netopt.data.limits.MAX_WORKBOOK_UNCOMPRESSED_BYTES`; each sheet read is opened in openpyxl's
read-only (streaming) mode, its declared dimension checked against
:data:`~netopt.data.limits.MAX_TABLE_ROWS` and :data:`~netopt.data.limits.MAX_TABLE_COLUMNS`, and the
rows actually streamed are counted against the same limits (a dimension can lie or be missing).
Formula cells are refused one by one: their cached value may be stale or planted, so the user is asked
to enter the value.
"""

from __future__ import annotations

import datetime as _dt
import math
import zipfile
from pathlib import Path

import openpyxl

from netopt.data import limits
from netopt.data.case import CaseError, Problem
from netopt.data.header_names import resemblance_message, resembled
from netopt.data.records import column_label, frame_from_records, header_names, settings_from_frame
from netopt.data.scenario_sheet import SHEET as SCENARIO_SHEET
from netopt.data.scenario_sheet import scenarios_from_sheet
from netopt.data.schema import TABLES
from netopt.data.text import close_match_hint, format_number

SETTINGS_SHEET = "settings"
IGNORED_SHEETS = ("schema",)
SCENARIOS_FILE = "scenarios.toml"
KNOWN_SHEETS = (*TABLES, SETTINGS_SHEET, SCENARIO_SHEET, *IGNORED_SHEETS)


def _refuse(path: Path, message: str) -> CaseError:
    return CaseError([Problem(path.name, None, None, message)])


def _check_zip(path: Path) -> None:
    """Refuse a file that is no zip archive, or whose parts would unpack beyond the size limit."""
    try:
        with zipfile.ZipFile(path) as z:
            total = sum(i.file_size for i in z.infolist())
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError, EOFError) as e:
        raise _refuse(path, f"cannot read the workbook: it is not an .xlsx (zip) file ({e})") from None
    most = limits.MAX_WORKBOOK_UNCOMPRESSED_BYTES
    if total > most:
        raise _refuse(
            path,
            f"the workbook's parts unpack to {total:,} bytes uncompressed; at most {most:,} are read "
            "(MAX_WORKBOOK_UNCOMPRESSED_BYTES): split the case or save the tables as CSV",
        )


def _cell_text(cell) -> tuple[str, str | None]:
    """A cell as the text a user would type, and why it cannot be read (or None)."""
    if getattr(cell, "data_type", None) == "f":
        return "", f"holds a formula ({str(cell.value)[:60]}); enter the value"
    v = cell.value
    if v is None:
        return "", None
    if isinstance(v, str):
        return v, None
    if isinstance(v, bool):
        return ("true" if v else "false"), None
    if isinstance(v, int):
        if v.bit_length() > 1023:
            return "", "number too large (beyond the range of a float)"
        return str(v), None
    if isinstance(v, float):
        if not math.isfinite(v):
            return "", "number too large (beyond the range of a float)"
        return format_number(v), None
    if isinstance(v, (_dt.datetime, _dt.date, _dt.time, _dt.timedelta)):
        return str(v), None
    return str(v).strip(), None


def _sheet_records(ws, label: str) -> tuple[list[tuple[int, list[str]]] | None, list[Problem]]:
    """Rows of one sheet as (sheet row, texts), streamed within the limits; problems name sheet, row, column."""
    rows_most, cols_most = limits.MAX_TABLE_ROWS, limits.MAX_TABLE_COLUMNS
    declared_rows, declared_cols = ws.max_row or 0, ws.max_column or 0
    if declared_rows > rows_most + 1 or declared_cols > cols_most:
        return None, [
            Problem(
                label,
                None,
                None,
                f"sheet declares {declared_rows:,} rows × {declared_cols:,} columns; at most {rows_most:,} rows "
                f"(MAX_TABLE_ROWS) and {cols_most:,} columns (MAX_TABLE_COLUMNS) are read",
            )
        ]
    ws.reset_dimensions()  # stream what is there, not what the dimension says (it can be wrong)
    records: list[tuple[int, list[str]]] = []
    bad: list[tuple[int, int, str]] = []  # (row, column position, why)
    try:
        for n, row in enumerate(ws.iter_rows(), start=1):
            if n > rows_most + 1:
                return None, [Problem(label, None, None, f"sheet has more than {rows_most:,} rows (MAX_TABLE_ROWS)")]
            if len(row) > cols_most:
                return None, [Problem(label, n, None, f"row has more than {cols_most:,} columns (MAX_TABLE_COLUMNS)")]
            texts = []
            for j, cell in enumerate(row):
                text, why = _cell_text(cell)
                if why is not None:
                    bad.append((n, j, why))
                texts.append(text)
            records.append((n, texts))
    except Exception as e:  # openpyxl raises many kinds on damaged sheet xml
        return None, [Problem(label, None, None, f"cannot read the sheet: {type(e).__name__}: {str(e)[:200]}")]
    hrow, header = header_names(records)
    problems = []
    for n, j, why in bad:
        name = header[j] if n != hrow and j < len(header) and header[j] else f"(column {column_label(j)})"
        problems.append(Problem(label, n, name, why))
    return records, problems


def read_workbook(path: Path):
    """Tables, settings, sources, settings rows, scenarios and problems of a case workbook.

    Raises:
        CaseError: the file is no workbook, or unpacks beyond the size limit.
    """
    _check_zip(path)
    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=False)
    except Exception as e:  # openpyxl raises many kinds on a damaged or foreign file
        raise _refuse(path, f"cannot read the workbook: {type(e).__name__}: {str(e)[:200]}") from None
    try:
        return _read_sheets(path, wb)
    finally:
        wb.close()


def _read_sheets(path: Path, wb):
    problems: list[Problem] = []
    tables: dict = {}
    scenarios: list[dict] = []
    sources: dict[str, str] = {"settings": SETTINGS_SHEET}
    settings: dict = {}
    rows: dict = {}
    names = [str(ws.title).strip() for ws in wb.worksheets]
    for i, (ws, sheet) in enumerate(zip(wb.worksheets, names)):
        if sheet in IGNORED_SHEETS:
            continue
        if sheet in names[:i]:
            problems.append(
                Problem(sheet, None, None, f"two sheets are named '{sheet}' (spaces around a name do not count)")
            )
            continue
        if sheet not in KNOWN_SHEETS:
            like = resembled(sheet, KNOWN_SHEETS)
            if like is not None and like not in names:
                problems.append(Problem(sheet, None, None, resemblance_message(sheet, like, "sheet")))
            else:
                hint = close_match_hint(sheet, TABLES)
                problems.append(Problem(sheet, None, None, "unknown sheet (ignored)" + hint, "warning"))
            continue
        records, probs = _sheet_records(ws, sheet)
        problems += probs
        if records is None:
            continue
        frame, probs = frame_from_records(sheet, records)
        problems += probs
        if frame is None:
            continue
        if sheet in TABLES:
            tables[sheet] = frame
            sources[sheet] = f"sheet {sheet}"
        elif sheet == SETTINGS_SHEET:
            settings, rows, probs = settings_from_frame(frame, SETTINGS_SHEET)
            problems += probs
        else:
            scenarios, probs = scenarios_from_sheet(frame)
            problems += probs
    if SETTINGS_SHEET not in names:
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
