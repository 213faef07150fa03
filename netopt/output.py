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

DISCLAIMER = ("netopt results are decision support, not decisions. They are only as good as the input data "
              "(demand, costs, capacities, lanes) and the assumptions in the settings. Legal, safety, customs "
              "and labour rules (driving hours, site permits, works councils, consultation duties) are the "
              "user's to check locally before acting on any plan.")

MONEY_HINTS = ("cost", "amount", "value", "penalty", "objective", "delta", "price")
SHARE_HINTS = ("share", "utilisation", "pct", "gap")
DAY_HINTS = ("days",)


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


def safe_text(value):
    """Text that a spreadsheet program will not run as a formula (leading =, +, -, @)."""
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value


def _number_format(col: str) -> str | None:
    c = col.lower()
    if any(h in c for h in SHARE_HINTS):
        return "0.0%"
    if any(h in c for h in DAY_HINTS):
        return "0.00"
    if any(h in c for h in MONEY_HINTS):
        return "#,##0"
    return None


def write_workbook(sheets: dict[str, pd.DataFrame], path: str | Path, notes: str | None = None) -> None:
    """One sheet per table: bold header, frozen header row, number formats, column widths; values only."""
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font, PatternFill

    wb = Workbook()
    wb.remove(wb.active)
    header_fill = PatternFill("solid", fgColor="DCE6E4")
    if notes:
        ws = wb.create_sheet("about")
        for i, line in enumerate(notes.splitlines(), start=1):
            ws.cell(row=i, column=1, value=safe_text(line))
        ws.column_dimensions["A"].width = 120
    for name, df in sheets.items():
        ws = wb.create_sheet(name[:31])
        cols = [str(c) for c in df.columns]
        for j, c in enumerate(cols, start=1):
            cell = ws.cell(row=1, column=j, value=safe_text(c))
            cell.font = Font(bold=True)
            cell.fill = header_fill
            cell.alignment = Alignment(wrap_text=True, vertical="top")
        fmts = [_number_format(c) for c in cols]
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
                cell = ws.cell(row=i, column=j, value=safe_text(v))
                if cell.data_type == "s":
                    cell.data_type = "s"  # stored as text, never as a formula
                f = fmts[j - 1]
                if f and isinstance(v, (int, float)) and not isinstance(v, bool):
                    cell.number_format = f
        ws.freeze_panes = "A2"
        for j, c in enumerate(cols, start=1):
            sample = [len(str(c))] + [len(str(x)) for x in values[:200, j - 1]] if len(values) else [len(str(c))]
            ws.column_dimensions[ws.cell(row=1, column=j).column_letter].width = min(45, max(9, max(sample) + 2))
    wb.save(path)


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
        write_workbook(sheets, folder / "results.xlsx", notes=DISCLAIMER)


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


def write_run(run, out: str | Path, extra_sheets: dict[str, pd.DataFrame] | None = None,
              report: bool = True) -> Path:
    """Write a base-plus-scenarios run atomically.

    Layout: ``comparison.csv``, ``comparison.md``, ``results.xlsx`` (comparison and the
    base's tables), ``summary.json``, ``base/`` and ``scenarios/<name>/`` with each
    solve's full results, and ``report.html`` when the report module is available.
    """
    out = Path(out)
    with atomic_folder(out) as tmp:
        run.comparison.to_csv(tmp / "comparison.csv", index=False)
        (tmp / "comparison.md").write_text(
            f"# Scenario comparison: {run.base.case_name}\n\n" + markdown_table(comparison_view(run.comparison))
            + "\n" + DISCLAIMER + "\n")
        write_result_files(run.base, tmp / "base")
        for label, r in run.results.items():
            if label == "base":
                continue
            write_result_files(r, tmp / "scenarios" / _label_folder(label), workbook=False)
        sheets = {"comparison": run.comparison}
        sheets.update({f"base_{k}": v for k, v in run.base.tables.items()})
        sheets.update(extra_sheets or {})
        write_workbook(sheets, tmp / "results.xlsx", notes=DISCLAIMER)
        summary = {"case": run.base.case_name, "disclaimer": DISCLAIMER,
                   "scenarios": _jsonable(run.comparison.to_dict(orient="records")),
                   "base": _jsonable(run.base.summary())}
        (tmp / "summary.json").write_text(json.dumps(summary, indent=2))
        if report:
            try:
                from netopt.report import write_report
            except ImportError:
                pass
            else:
                write_report(run, tmp / "report.html")
    return out


COMPARISON_VIEW = [("scenario", "scenario"), ("resolve", "re-solve"), ("total_cost", "total cost"),
                   ("delta_cost", "Δ vs base"), ("delta_pct", "Δ share"), ("dcs_open", "DCs"),
                   ("share_within_window", "within window share"), ("avg_transit_days", "avg transit days"),
                   ("max_supplier_share", "max supplier share"), ("lost_units", "lost units"),
                   ("lost_value", "lost value"), ("co2e_tonnes", "CO2e t"), ("status", "status"),
                   ("verified", "verified")]


def comparison_view(comparison: pd.DataFrame) -> pd.DataFrame:
    """The comparison's headline columns with readable names (for Markdown and terminal)."""
    cols = [(c, n) for c, n in COMPARISON_VIEW if c in comparison.columns]
    return comparison[[c for c, _ in cols]].rename(columns=dict(cols))
