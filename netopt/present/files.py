"""Writing results to disk: CSVs, one formatted Excel workbook (:mod:`netopt.present.workbook`), ``summary.json``.

Everything is written into a temporary sibling folder first and moved into place at
the end, so an interrupted run never leaves a half-written results folder and an
earlier complete one is only replaced by a complete new one.
"""

from __future__ import annotations

import contextlib
import glob
import json
import math
import os
import shutil
import uuid
from pathlib import Path

import numpy as np
import pandas as pd

from netopt.data.io import SETTINGS_FILE
from netopt.data.names import folder_name
from netopt.data.result_views import COMPARISON_VIEW
from netopt.data.results_schema import label_of
from netopt.data.schema import TABLES
from netopt.present.formats import cell_text, column_kind
from netopt.present.labels import DISCLAIMER, comparison_notes
from netopt.present.report import write_report
from netopt.present.workbook import safe_text, write_workbook
from netopt.studies.comparison import dc_decision_matrix, largest_share_changes, mode_mix_matrix

OUTPUT_MARK = ".netopt-results"  # file in every folder netopt writes: only such a folder is ever replaced
MARK_TEXT = "Results written by netopt; netopt may replace this folder.\n"
CASE_MARKS = {SETTINGS_FILE} | {t.file_name for t in TABLES.values() if t.required}  # files of a case folder


class OutputRefused(Exception):
    """A results path netopt will not write to (it would replace what it did not write, or cannot write there)."""


class OutputFailed(Exception):
    """Writing the results failed (disk full, read-only, no permission); the earlier results are kept."""


def check_output_folder(target: str | Path, case: str | Path | None = None) -> Path:
    """``target`` as a results folder netopt may (re)place, or :class:`OutputRefused` saying why.

    Allowed: a path that does not exist, an empty folder, or a folder netopt wrote before (it holds
    ``OUTPUT_MARK``), in a folder netopt can write to.  Refused: a file, a folder holding anything else
    (a user's documents, a case), the case folder itself or a folder that contains it, and a target whose
    parent folder cannot be written (read-only, no permission, full disk: checked with a probe file).
    """
    target = Path(target)
    full = target.resolve()
    if case is not None:
        c = Path(case).resolve()
        c = c if c.is_dir() else c.parent
        if full == c or full in c.parents:
            raise OutputRefused(f"--out {target} is the case folder or holds it: choose a separate results folder")
    if full == Path.cwd().resolve() or full == Path(full.anchor):
        raise OutputRefused(f"--out {target} is the current or root folder: choose a results folder inside it")
    if full.is_file() or (full.exists() and not full.is_dir()):
        raise OutputRefused(f"--out {target} is a file: give a folder path for the results")
    if full.is_dir():
        entries = [e.name for e in full.iterdir()]
        if entries and OUTPUT_MARK not in entries and not _older_results(full):
            what = "a case" if any(m in entries for m in CASE_MARKS) else f"{len(entries)} item(s) netopt did not write"
            raise OutputRefused(
                f"--out {target} already holds {what}: choose a new or empty folder, or one netopt wrote before"
            )
    _probe_writable(target, full.parent)
    return target


def _probe_writable(target: Path, parent: Path) -> None:
    """Create and remove a probe file in ``parent`` (or its nearest existing ancestor, where the missing
    folders would be made): :class:`OutputRefused` when that fails, before any work is done."""
    where = parent
    while not where.exists() and where != where.parent:
        where = where.parent
    probe = where / f".netopt-probe-{os.getpid()}-{uuid.uuid4().hex[:8]}"
    try:
        fd = os.open(probe, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
        try:
            os.write(fd, b"netopt")
        finally:
            os.close(fd)
        os.unlink(probe)
    except OSError as e:
        raise OutputRefused(
            f"--out {target}: cannot write in {where} ({e.strerror or e}): choose a folder you can write to"
        ) from e


def _older_results(folder: Path) -> bool:
    """A results folder an earlier netopt wrote before folders were marked: its summary.json carries the disclaimer."""
    try:
        return "disclaimer" in json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError, TypeError):
        return False


def work_file(target: str | Path, name: str) -> Path:
    """A file a writer keeps while it works on results folder ``target`` (the stress sweep's resume journal):
    a hidden sibling ``.TARGET.NAME``, so the earlier results in ``target`` stay untouched until the new ones
    replace them whole.  ``target`` must pass :func:`check_output_folder`; the parent folder is created."""
    target = check_output_folder(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    return target.parent / f".{target.name}.{name}"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _clear_leftovers(target: Path) -> None:
    """Tidy what a killed earlier write of ``target`` left: its temporary folder is removed, and a previous
    result it had moved aside (``.NAME.old-PID``) is moved back when ``target`` is missing, else removed.
    Only leftovers of processes that no longer run are touched."""
    for p in target.parent.glob(f".{glob.escape(target.name)}.*-*"):
        kind, _, rest = p.name[len(target.name) + 2 :].partition("-")
        pid = rest.split("-", 1)[0]
        if kind not in ("tmp", "old") or not pid.isdigit() or _pid_alive(int(pid)) or not p.is_dir():
            continue
        if kind == "old" and not target.exists():
            p.rename(target)
        else:
            shutil.rmtree(p, ignore_errors=True)


@contextlib.contextmanager
def atomic_folder(target: str | Path):
    """Yield a temporary folder that replaces ``target`` only if the block completes.

    ``target`` must pass :func:`check_output_folder` (checked before and again at the swap); the
    folder written carries ``OUTPUT_MARK``, so a later run may replace it, and has the mode a plain
    ``mkdir`` gives (0o777 less the umask).  An ``OSError`` while writing (disk full, read-only, no
    permission) is raised as :class:`OutputFailed`, the temporary folder removed and ``target`` kept.
    """
    target = check_output_folder(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    _clear_leftovers(target)
    tmp = target.parent / f".{target.name}.tmp-{os.getpid()}-{uuid.uuid4().hex[:8]}"
    tmp.mkdir()
    try:
        yield tmp
        (tmp / OUTPUT_MARK).write_text(MARK_TEXT)
        check_output_folder(target)
        _swap(tmp, target)
    except OSError as e:
        shutil.rmtree(tmp, ignore_errors=True)
        kept = "the earlier results there are kept" if target.exists() else "nothing was written"
        raise OutputFailed(
            f"could not write the results to {target}: {e.strerror or e}"
            + (f" ({e.filename})" if e.filename else "")
            + f"; {kept}"
        ) from e
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def _swap(tmp: Path, target: Path) -> None:
    """Move finished ``tmp`` to ``target``; an existing ``target`` is set aside first and removed after
    (moved back when the second rename fails)."""
    old = None
    if target.exists():
        old = target.parent / f".{target.name}.old-{os.getpid()}"
        if old.exists():
            shutil.rmtree(old)
        target.rename(old)
    try:
        tmp.rename(target)
    except OSError:
        if old is not None:
            old.rename(target)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def write_result_csv(frame: pd.DataFrame, path: Path) -> None:
    """The one CSV writer of every result table: text cells a spreadsheet would run as a formula
    (starting with =, +, -, @, tab or carriage return) get a leading apostrophe (:func:`safe_text`);
    numbers stay numbers."""
    out = frame.copy(deep=False)
    for c in out.columns:
        if not (pd.api.types.is_numeric_dtype(out[c].dtype) or pd.api.types.is_bool_dtype(out[c].dtype)):
            out[c] = out[c].map(safe_text)
    out.to_csv(path, index=False)


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


def write_result_files(result, folder: Path, workbook: bool = True, summary_extra: dict | None = None) -> None:
    """Write one result's tables (CSV), ``results.xlsx`` and ``summary.json`` (with ``summary_extra``'s
    entries added) into ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, df in result.tables.items():
        write_result_csv(df, folder / f"{name}.csv")
    if result.verification is not None:
        write_result_csv(result.verification.checks, folder / "verification.csv")
    if result.diagnosis is not None:
        write_result_csv(result.diagnosis, folder / "diagnosis.csv")
    summary = result.summary() | (summary_extra or {})
    summary["disclaimer"] = DISCLAIMER
    (folder / "summary.json").write_text(json.dumps(_jsonable(summary), indent=2))
    if workbook:
        sheets = dict(result.tables)
        if result.verification is not None:
            sheets["verification"] = result.verification.checks
        if result.diagnosis is not None:
            sheets["diagnosis"] = result.diagnosis
        write_workbook(
            sheets, folder / "results.xlsx", notes=DISCLAIMER, currency=_currency_of(result), summary=summary
        )


def write_result(result, out: str | Path, workbook: bool = True) -> Path:
    """Write a single solve's outputs to ``out`` atomically; returns the folder."""
    out = Path(out)
    with atomic_folder(out) as tmp:
        write_result_files(result, tmp, workbook=workbook)
    return out


def markdown_table(df: pd.DataFrame, table: str = "", labels: dict[str, str] | None = None) -> str:
    """A GitHub-style Markdown table: numbers formatted by the declared unit of ``table``'s columns, text escaped.

    ``labels`` maps column names to the header shown (default: the names).
    """
    cols = [str(c) for c in df.columns]
    kinds = [column_kind(table, c) for c in cols]
    heads = [(labels or {}).get(c, c) for c in cols]

    def text(v, kind):
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return ""
        return cell_text(v, kind).replace("|", "\\|")

    lines = ["| " + " | ".join(heads) + " |", "|" + "|".join("---" for _ in cols) + "|"]
    for row in df.itertuples(index=False):
        lines.append("| " + " | ".join(text(v, k) for v, k in zip(row, kinds)) + " |")
    return "\n".join(lines) + "\n"


def write_run(run, out: str | Path, extra_sheets: dict[str, pd.DataFrame] | None = None, report: bool = True) -> Path:
    """Write a base-plus-scenarios run atomically.

    Layout: ``comparison.csv``, ``comparison.md``, ``comparison.xlsx`` (the comparison and the decisions side by
    side: DC and mode-mix matrices, supplier share changes), ``dc_decisions.csv`` (DC × solve), ``supplier_share_changes.csv`` and
    ``mode_mix_changes.csv`` (each solve against the base), ``results.xlsx`` (comparison and the
    base's tables), ``summary.json``, ``base/`` and ``scenarios/<name>/`` with each
    solve's full results, and ``report.html`` when the report module is available.
    """
    out = Path(out)
    with atomic_folder(out) as tmp:
        write_result_csv(run.comparison, tmp / "comparison.csv")
        write_result_csv(run.dc_decisions, tmp / "dc_decisions.csv")
        write_result_csv(run.supplier_share_changes, tmp / "supplier_share_changes.csv")
        write_result_csv(run.mode_mix_changes, tmp / "mode_mix_changes.csv")
        (tmp / "comparison.md").write_text(
            f"# Scenario comparison: {run.base.case_name}\n\n"
            + markdown_table(comparison_view(run.comparison), "comparison", comparison_labels(run.comparison))
            + "".join(f"\n- **{note}**" for note in comparison_notes(run.comparison))
            + "\n\n"
            + DISCLAIMER
            + "\n"
        )
        write_result_files(run.base, tmp / "base")
        for label, r in run.results.items():
            if label == "base":
                continue
            write_result_files(r, tmp / "scenarios" / folder_name(label), workbook=False)
        frontiers = {
            f"frontier_{folder_name(name)}": df for name, df in getattr(run, "frontiers", {}).items() if df is not None
        }
        for name, df in frontiers.items():
            write_result_csv(df, tmp / f"{name}.csv")
        side_by_side = {
            "comparison": run.comparison,
            "dc_decisions": run.dc_decisions,
            "dc_decision_matrix": dc_decision_matrix(run.dc_decisions),
            "supplier_share_changes": run.supplier_share_changes,
            "mode_mix_changes": run.mode_mix_changes,
            "mode_mix_matrix": mode_mix_matrix(run.mode_mix_changes),
        }
        currency = _currency_of(run.base)
        write_workbook(side_by_side, tmp / "comparison.xlsx", notes=DISCLAIMER, currency=currency)
        sheets = {k: v for k, v in side_by_side.items() if not k.endswith("_matrix")}
        sheets.update(frontiers)
        sheets.update({f"base_{k}": v for k, v in run.base.tables.items()})
        sheets.update(extra_sheets or {})
        kinds = dict.fromkeys(frontiers, "frontier") | {f"base_{k}": k for k in run.base.tables}
        write_workbook(
            sheets, tmp / "results.xlsx", notes=DISCLAIMER, currency=currency, tables=kinds, summary=run.base.summary()
        )
        summary = {
            "case": run.base.case_name,
            "disclaimer": DISCLAIMER,
            "scenarios": _jsonable(run.comparison.to_dict(orient="records")),
            "base": _jsonable(run.base.summary()),
        }
        (tmp / "summary.json").write_text(json.dumps(summary, indent=2))
        if report:
            extra = {("frontier" if len(frontiers) == 1 else k): v for k, v in frontiers.items()}
            if len(run.dc_decisions):
                extra["dc_decision_matrix"] = side_by_side["dc_decision_matrix"]
            if len(run.mode_mix_changes):
                extra["mode_mix_matrix"] = side_by_side["mode_mix_matrix"]
            if len(run.supplier_share_changes):
                extra["supplier_share_changes"] = largest_share_changes(run.supplier_share_changes, most=30)
            write_report(run, tmp / "report.html", extra=extra or None)
    return out


def comparison_view(comparison: pd.DataFrame) -> pd.DataFrame:
    """The comparison's headline columns (:data:`~netopt.data.results_schema.COMPARISON_VIEW`), names kept."""
    return comparison[[c for c in COMPARISON_VIEW if c in comparison.columns]]


def comparison_labels(comparison: pd.DataFrame) -> dict[str, str]:
    """The declared label of each headline column of the comparison."""
    return {c: label_of("comparison", c) for c in COMPARISON_VIEW if c in comparison.columns}


__all__ = [
    "DISCLAIMER",
    "OUTPUT_MARK",
    "OutputFailed",
    "OutputRefused",
    "atomic_folder",
    "check_output_folder",
    "comparison_labels",
    "comparison_view",
    "markdown_table",
    "safe_text",
    "work_file",
    "write_result",
    "write_result_csv",
    "write_result_files",
    "write_run",
    "write_workbook",
]
