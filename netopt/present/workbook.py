"""The Excel workbook of results: one sheet per table, number formats from the declared units, values only.

Text is always stored as text, never as a formula (see :func:`_text_cell`).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd

from netopt.data.results_schema import result_table
from netopt.present.formats import column_kind, excel_format, kpi_kind

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def safe_text(value):
    """Text for a CSV cell that a spreadsheet program will not run as a formula (leading =, +, -, @).

    Prefixes an apostrophe, so the text changes; the workbook writer needs no prefix (see
    :func:`_text_cell`).
    """
    if isinstance(value, str) and value[:1] in FORMULA_STARTS:
        return "'" + value
    return value


def _text_cell(ws, row: int, column: int, text: str):
    """Write ``text`` as a plain string cell, never a formula, whatever it starts with.

    openpyxl turns a string starting with "=" into a formula; setting the data type back
    to "s" stores it as text, and the quote-prefix style makes Excel and LibreOffice keep
    it text when the cell is edited.  Characters XML cannot hold are dropped.
    """
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    text = ILLEGAL_CHARACTERS_RE.sub("", text)
    cell = ws.cell(row=row, column=column)
    cell.value = text
    cell.data_type = "s"
    if text[:1] in FORMULA_STARTS:
        cell.quotePrefix = True
    return cell


def _sheet_name(name: str, taken: set[str]) -> str:
    """A valid, unique sheet name: no []:*?/\\, at most 31 characters."""
    base = "".join("_" if ch in "[]:*?/\\" else ch for ch in str(name)).strip("'") or "sheet"
    base = base[:31]
    out, k = base, 2
    while out.lower() in taken:
        suffix = f"~{k}"
        out, k = base[: 31 - len(suffix)] + suffix, k + 1
    taken.add(out.lower())
    return out


def run_facts(summary: dict) -> list[tuple[str, object, str | None]]:
    """(fact, value, Excel number format with ``{cur}``) of a solve, from its ``Result.summary()``:
    the solver's status and message, objective, bound, gap, time and the independent check."""
    timings = summary.get("timings_s") or {}
    checked = summary.get("largest_violation") is not None
    check = ("passed" if summary.get("verified") else "FAILED") if checked else "not run (no plan)"
    return [
        ("case", summary.get("case"), None),
        ("solver status", summary.get("status"), None),
        ("solver message", summary.get("message"), None),
        ("total landed cost (objective), {cur}/yr", summary.get("objective"), "#,##0"),
        ("lower bound, {cur}/yr", summary.get("bound"), "#,##0"),
        ("optimality gap", summary.get("gap"), "0.00%"),
        ("run time, s", float(sum(timings.values())) if timings else None, "0.0"),
        ("independent check", check, None),
        ("recomputed cost, {cur}/yr", summary.get("recomputed_objective"), "#,##0"),
        ("largest violation (the rule's own unit)", summary.get("largest_violation"), "0.00E+00"),
        ("rule of the largest violation", summary.get("largest_violation_rule"), None),
        ("lost demand allowed by netopt (not by the settings)", bool(summary.get("lost_demand_allowed")), None),
    ]


def _write_about(ws, notes: str | None, summary: dict | None, currency: str) -> None:
    """The first sheet: the notes (the disclaimer), then the solve's facts (:func:`run_facts`)."""
    from openpyxl.styles import Font

    row = 1
    for line in (notes or "").splitlines():
        _text_cell(ws, row, 1, line)
        row += 1
    ws.column_dimensions["A"].width = 120 if summary is None else 52
    if summary is None:
        return
    row += 1 if notes else 0
    _text_cell(ws, row, 1, "this solve").font = Font(bold=True)
    for fact, value, fmt in run_facts(summary):
        row += 1
        _text_cell(ws, row, 1, fact.replace("{cur}", currency or "currency"))
        if isinstance(value, str):
            _text_cell(ws, row, 2, value)
        elif value is not None:
            cell = ws.cell(row=row, column=2, value=value)
            if fmt and not isinstance(value, bool):
                cell.number_format = fmt
    ws.column_dimensions["B"].width = 60


def write_workbook(
    sheets: dict[str, pd.DataFrame],
    path: str | Path,
    notes: str | None = None,
    currency: str = "",
    tables: dict[str, str] | None = None,
    summary: dict | None = None,
) -> None:
    """One sheet per table: bold header, frozen header row, number formats, column widths; values only.

    Number formats follow each column's declared unit (:mod:`netopt.data.results_schema`): shares
    as %, days, money in ``currency``; the ``kpis`` sheet is formatted row by row from each
    indicator's unit.  ``tables`` maps a sheet name to the declared table it holds (default: the
    sheet name itself, e.g. ``comparison``, ``spof_ranking``); undeclared columns stay unformatted.
    ``notes`` (the disclaimer) and a solve's ``summary`` (``Result.summary()``: status, message,
    objective, bound, gap, time, the independent check) go on a first sheet, "about".
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill

    wb = Workbook()
    wb.remove(wb.active)
    header_fill = PatternFill("solid", fgColor="DCE6E4")
    taken: set[str] = set()
    if notes or summary is not None:
        _write_about(wb.create_sheet(_sheet_name("about", taken)), notes, summary, currency)
    for name, df in sheets.items():
        ws = wb.create_sheet(_sheet_name(name, taken))
        cols = [str(c) for c in df.columns]
        for j, c in enumerate(cols, start=1):
            cell = _text_cell(ws, 1, j, c)
            cell.font = Font(bold=True)
            cell.fill = header_fill
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        declared = result_table((tables or {}).get(name, name))
        kind = declared.name if declared is not None else ""
        fmts = [excel_format(column_kind(kind, c), currency) for c in cols]
        row_kinds = df["kpi"].astype(str).map(kpi_kind).tolist() if kind == "kpis" and "kpi" in cols else None
        value_col = cols.index("value") if row_kinds is not None and "value" in cols else -1
        values = df.to_numpy(dtype=object)
        for i, row in enumerate(values, start=2):
            for j, v in enumerate(row, start=1):
                if isinstance(v, (np.floating, float)):
                    v = float(v)
                    if math.isnan(v):
                        v = None
                    elif math.isinf(v):
                        v = "no limit" if v > 0 else "-inf"
                elif isinstance(v, (np.integer,)):
                    v = int(v)
                elif isinstance(v, (np.bool_,)):
                    v = bool(v)
                elif v is not None and not isinstance(v, (str, int, float, bool)):
                    v = str(v)
                if isinstance(v, str):
                    _text_cell(ws, i, j, v)
                    continue
                cell = ws.cell(row=i, column=j, value=v)
                f = excel_format(row_kinds[i - 2], currency) if row_kinds and j - 1 == value_col else fmts[j - 1]
                if f and isinstance(v, (int, float)) and not isinstance(v, bool):
                    cell.number_format = f
        ws.freeze_panes = "A2"
        for j, c in enumerate(cols, start=1):
            sample = [len(str(c))] + [_shown_len(x) for x in values[:200, j - 1]] if len(values) else [len(str(c))]
            fj = fmts[j - 1] or ""
            extra = len(currency) + 1 if currency and '#,##0"' in fj else 0
            width = min(45, max(9, max(sample) + 2 + extra))
            ws.column_dimensions[ws.cell(row=1, column=j).column_letter].width = width
    wb.save(path)


def _shown_len(v) -> int:
    """Characters a value takes on screen (numbers with thousands separators, 2 decimals at most)."""
    if isinstance(v, (float, np.floating)) and math.isfinite(float(v)):
        return len(f"{float(v):,.2f}")
    if isinstance(v, (int, np.integer)) and not isinstance(v, (bool, np.bool_)):
        return len(f"{int(v):,}")
    return len(str(v))
