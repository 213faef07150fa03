"""Rows of cells into tables: the step shared by the CSV and workbook readers.

A reader hands over ``(row number, cells)`` records, the first non-blank one being the header; the
table comes back indexed by those row numbers, with every problem of shape (cells past the header,
duplicated or blank headers, a cell longer than :data:`~netopt.data.limits.MAX_CELL_CHARS`) named by
table, row and column.
"""

from __future__ import annotations

import pandas as pd

from netopt.data import limits
from netopt.data.case import Problem
from netopt.data.text import as_text


def column_label(j: int) -> str:
    """A 0-based column position as a spreadsheet letter: 0 → A, 26 → AA."""
    out = ""
    j += 1
    while j:
        j, r = divmod(j - 1, 26)
        out = chr(65 + r) + out
    return out


def header_names(records: list[tuple[int, list[str]]]) -> tuple[int | None, list[str]]:
    """The header's row number and its cleaned names (the first record with a non-blank cell)."""
    for n, cells in records:
        names = [c.strip().lstrip("\ufeff").strip() for c in cells]
        if any(names):
            return n, names
    return None, []


def _long_cells(label: str, records: list[tuple[int, list[str]]]) -> list[Problem]:
    """A cell longer than the limit, named by table, row and column; the cell is blanked in ``records``."""
    most = limits.MAX_CELL_CHARS
    problems: list[Problem] = []
    _, header = header_names(records)
    for n, cells in records:
        if max(map(len, cells), default=0) <= most:
            continue
        for j, c in enumerate(cells):
            if len(c) > most:
                name = header[j] if j < len(header) and header[j] and len(header[j]) <= most else None
                problems.append(
                    Problem(
                        label,
                        n,
                        name or f"(column {column_label(j)})",
                        f"cell holds {len(c):,} characters; at most {most:,} are read (MAX_CELL_CHARS)",
                    )
                )
                cells[j] = ""
    return problems


def frame_from_records(
    label: str, records: list[tuple[int, list[str]]], trimmed: bool = False
) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Table from (row number, cells) records; the first record is the header.

    Blank records are skipped (their row numbers stay unused); cells past the header
    must be blank; short records are padded with blanks; a cell beyond the length limit is an
    error (and read as blank).  Cells are trimmed of spaces and byte-order marks at their ends;
    ``trimmed``: the reader knows no cell has any (the trim is then skipped).
    """
    problems: list[Problem] = _long_cells(label, records)
    raw = dict(records)
    if not trimmed:
        records = [(n, [c.strip().lstrip("\ufeff").strip() for c in cells]) for n, cells in records]
    records = [(n, cells) for n, cells in records if any(cells)]
    if not records:
        problems.append(Problem(label, None, None, "no header row: the first line must name the columns"))
        return None, problems
    hrow, header = records[0]
    # A byte-order mark inside a header cell stays (the decoder drops the file's own): the column is then
    # reported as resembling the known one, not silently renamed.
    header = [c.strip() if h else "" for c, h in zip(raw[hrow], header)]
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


def settings_from_frame(frame: pd.DataFrame, label: str):
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
