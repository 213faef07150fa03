"""Writing results to disk: CSVs, one formatted Excel workbook, ``summary.json``.

Everything is written into a temporary sibling folder first and moved into place at
the end, so an interrupted run never leaves a half-written results folder and an
earlier complete one is only replaced by a complete new one.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

from netopt.present.labels import DAY_HINTS, DISCLAIMER, MONEY_HINTS, SHARE_HINTS
from netopt.present.report import write_report


@contextlib.contextmanager
def atomic_folder(target: str | Path):
    """Yield a temporary folder that replaces ``target`` only if the block completes."""
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{target.name}.tmp-", dir=target.parent))
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = None
    if target.exists():
        old = target.parent / f".{target.name}.old-{os.getpid()}"
        if old.exists():
            shutil.rmtree(old)
        target.rename(old)
    tmp.rename(target)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


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


def _number_format(col: str, currency: str = "") -> str | None:
    """Excel number format for a column, from its name: shares as %, days with 2 decimals, money."""
    c = col.lower()
    if any(h in c for h in SHARE_HINTS):
        return "0.0%"
    if any(h in c for h in DAY_HINTS):
        return '0.00" d"'
    if any(h in c for h in MONEY_HINTS):
        return f'#,##0" {currency}"' if currency else "#,##0"
    return None


def _unit_format(unit: str, currency: str = "") -> str:
    """Excel number format for a value whose unit is given as text (e.g. the kpis table)."""
    u = str(unit)
    if "share" in u:
        return "0.0%"
    if u.startswith("days"):
        return '0.00" d"'
    if "currency" in u:
        return "#,##0.00" if "/unit" in u else (f'#,##0" {currency}"' if currency else "#,##0")
    return "#,##0.##" if u != "count" else "0"


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


def write_workbook(
    sheets: dict[str, pd.DataFrame], path: str | Path, notes: str | None = None, currency: str = ""
) -> None:
    """One sheet per table: bold header, frozen header row, number formats, column widths; values only.

    Number formats follow column names (shares as %, days, money in ``currency``); a table
    with ``value`` and ``unit`` columns is formatted row by row from the unit.  Text is
    always stored as text, never as a formula (see :func:`_text_cell`).
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill

    wb = Workbook()
    wb.remove(wb.active)
    header_fill = PatternFill("solid", fgColor="DCE6E4")
    taken: set[str] = set()
    if notes:
        ws = wb.create_sheet(_sheet_name("about", taken))
        for i, line in enumerate(notes.splitlines(), start=1):
            _text_cell(ws, i, 1, line)
        ws.column_dimensions["A"].width = 120
    for name, df in sheets.items():
        ws = wb.create_sheet(_sheet_name(name, taken))
        cols = [str(c) for c in df.columns]
        for j, c in enumerate(cols, start=1):
            cell = _text_cell(ws, 1, j, c)
            cell.font = Font(bold=True)
            cell.fill = header_fill
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        fmts = [_number_format(c, currency) for c in cols]
        row_units = df["unit"].astype(str).tolist() if {"value", "unit"} <= set(cols) else None
        value_col = cols.index("value") if row_units is not None else -1
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
                f = _unit_format(row_units[i - 2], currency) if j - 1 == value_col else fmts[j - 1]
                if f and isinstance(v, (int, float)) and not isinstance(v, bool):
                    cell.number_format = f
        ws.freeze_panes = "A2"
        for j, c in enumerate(cols, start=1):
            sample = [len(str(c))] + [_shown_len(x) for x in values[:200, j - 1]] if len(values) else [len(str(c))]
            extra = len(currency) + 1 if fmts[j - 1] and currency and '#,##0"' in fmts[j - 1] else 0
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


def _currency_of(result) -> str:
    """The case currency of a result (from its network's settings), or ""."""
    try:
        return str(result.network.settings["case"]["currency"])
    except (AttributeError, KeyError, TypeError):
        return ""


def _jsonable(obj):
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, (np.floating, float)):
        f = float(obj)
        return None if (math.isnan(f) or math.isinf(f)) else f
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    return obj


def write_result_files(result, folder: Path, workbook: bool = True) -> None:
    """Write one result's tables (CSV), ``results.xlsx`` and ``summary.json`` into ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, df in result.tables.items():
        df.to_csv(folder / f"{name}.csv", index=False)
    if result.verification is not None:
        result.verification.checks.to_csv(folder / "verification.csv", index=False)
    if result.diagnosis is not None:
        result.diagnosis.to_csv(folder / "diagnosis.csv", index=False)
    summary = result.summary()
    summary["disclaimer"] = DISCLAIMER
    (folder / "summary.json").write_text(json.dumps(_jsonable(summary), indent=2))
    if workbook:
        sheets = dict(result.tables)
        if result.verification is not None:
            sheets["verification"] = result.verification.checks
        if result.diagnosis is not None:
            sheets["diagnosis"] = result.diagnosis
        write_workbook(sheets, folder / "results.xlsx", notes=DISCLAIMER, currency=_currency_of(result))


def write_result(result, out: str | Path, workbook: bool = True) -> Path:
    """Write a single solve's outputs to ``out`` atomically; returns the folder."""
    out = Path(out)
    with atomic_folder(out) as tmp:
        write_result_files(result, tmp, workbook=workbook)
    return out


def markdown_table(df: pd.DataFrame, floatfmt: str = ",.0f") -> str:
    """A GitHub-style Markdown table (numbers formatted, text escaped)."""

    def fmt(v, col):
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return ""
        if isinstance(v, (bool, np.bool_)):
            return "yes" if v else "no"
        if isinstance(v, (float, np.floating)):
            c = col.lower()
            if any(h in c for h in SHARE_HINTS):
                return f"{float(v):.1%}"
            if "days" in c or "seconds" in c:
                return f"{float(v):.2f}"
            return format(float(v), floatfmt)
        return str(v).replace("|", "\\|")

    cols = [str(c) for c in df.columns]
    lines = ["| " + " | ".join(cols) + " |", "|" + "|".join("---" for _ in cols) + "|"]
    for row in df.itertuples(index=False):
        lines.append("| " + " | ".join(fmt(v, c) for v, c in zip(row, cols)) + " |")
    return "\n".join(lines) + "\n"


def _label_folder(label: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_" else "_" for ch in label).strip("_")


def write_run(run, out: str | Path, extra_sheets: dict[str, pd.DataFrame] | None = None, report: bool = True) -> Path:
    """Write a base-plus-scenarios run atomically.

    Layout: ``comparison.csv``, ``comparison.md``, ``results.xlsx`` (comparison and the
    base's tables), ``summary.json``, ``base/`` and ``scenarios/<name>/`` with each
    solve's full results, and ``report.html`` when the report module is available.
    """
    out = Path(out)
    with atomic_folder(out) as tmp:
        run.comparison.to_csv(tmp / "comparison.csv", index=False)
        (tmp / "comparison.md").write_text(
            f"# Scenario comparison: {run.base.case_name}\n\n"
            + markdown_table(comparison_view(run.comparison))
            + "\n"
            + DISCLAIMER
            + "\n"
        )
        write_result_files(run.base, tmp / "base")
        for label, r in run.results.items():
            if label == "base":
                continue
            write_result_files(r, tmp / "scenarios" / _label_folder(label), workbook=False)
        frontiers = {
            f"frontier_{_label_folder(name)}": df
            for name, df in getattr(run, "frontiers", {}).items()
            if df is not None
        }
        for name, df in frontiers.items():
            df.to_csv(tmp / f"{name}.csv", index=False)
        sheets = {"comparison": run.comparison}
        sheets.update(frontiers)
        sheets.update({f"base_{k}": v for k, v in run.base.tables.items()})
        sheets.update(extra_sheets or {})
        write_workbook(sheets, tmp / "results.xlsx", notes=DISCLAIMER, currency=_currency_of(run.base))
        summary = {
            "case": run.base.case_name,
            "disclaimer": DISCLAIMER,
            "scenarios": _jsonable(run.comparison.to_dict(orient="records")),
            "base": _jsonable(run.base.summary()),
        }
        (tmp / "summary.json").write_text(json.dumps(summary, indent=2))
        if report:
            extra = {("frontier" if len(frontiers) == 1 else k): v for k, v in frontiers.items()}
            write_report(run, tmp / "report.html", extra=extra or None)
    return out


COMPARISON_VIEW = [
    ("scenario", "scenario"),
    ("resolve", "re-solve"),
    ("total_cost", "total cost"),
    ("delta_cost", "Δ vs base"),
    ("delta_pct", "Δ share"),
    ("dcs_open", "DCs"),
    ("share_within_window", "within window share"),
    ("avg_transit_days", "avg transit days"),
    ("max_supplier_share", "max supplier share"),
    ("lost_units", "lost units"),
    ("lost_value", "lost value"),
    ("co2e_tonnes", "CO2e t"),
    ("status", "status"),
    ("verified", "verified"),
]


def comparison_view(comparison: pd.DataFrame) -> pd.DataFrame:
    """The comparison's headline columns with readable names (for Markdown and terminal)."""
    cols = [(c, n) for c, n in COMPARISON_VIEW if c in comparison.columns]
    return comparison[[c for c, _ in cols]].rename(columns=dict(cols))
