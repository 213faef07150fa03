"""The lane matrix (table ``lane_matrix``): explicit lanes given as origin × destination matrices.

One row per origin, mode, measure and product; every column not declared is named by a destination site
and holds the row's measure (cost per unit, km or transit days) for the lane from the row's origin to that
destination; a blank cell is no lane (:data:`netopt.data.schema_transport.LANE_MATRIX`).  Its checks name
the matrix's row and column: an unknown origin once on its row, an unknown destination once on its column,
a cell that is no lane (a site to itself, a pair that is not a leg) on its row and column.
:func:`matrix_lanes` turns it into the long form of the lanes table, whole columns at once.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Problem
from netopt.data.limits import MAX_DAYS
from netopt.data.rules import destination_message, origin_message, pair_message, site_kinds
from netopt.data.schema import LEGS, TABLES
from netopt.data.schema_transport import MEASURES
from netopt.data.text import format_number, row_number

TABLE = "lane_matrix"
KEY = ["origin", "destination", "mode", "product"]


def destinations(frame: pd.DataFrame) -> list[str]:
    """The matrix's destination columns (every column the schema does not declare)."""
    return TABLES[TABLE].open_names([str(c) for c in frame.columns])


def _groups(frame: pd.DataFrame) -> tuple[np.ndarray, pd.DataFrame]:
    """Each matrix row's lane group (origin, mode, product: the rows of its measures), numbered in the
    order of the group's first row; and one row per group (its key columns and first row number)."""
    keys = frame[["origin", "mode", "product"]].astype(str)
    g, _ = pd.MultiIndex.from_frame(keys).factorize()
    first = pd.Series(np.arange(len(frame))).groupby(g).min().to_numpy()
    heads = keys.iloc[first].assign(row=frame.index.to_numpy()[first])
    return g, heads.reset_index(drop=True)


def matrix_lanes(frame: pd.DataFrame) -> pd.DataFrame:
    """One row per lane of the matrix (an origin, mode and product with a filled cell in any of its
    measure rows): origin, destination, mode, product, one column per measure (NaN where that measure's row
    is missing or its cell blank), and ``row``/``column``, where it was written (the group's first row and
    the destination's column).  Rows in the matrix's order: by first row, then column."""
    cols = ["row", "column", *KEY, *MEASURES]
    dest = destinations(frame)
    if frame.empty or not dest:
        return pd.DataFrame({c: pd.Series(dtype=float if c in MEASURES else object) for c in cols})
    values = frame[dest].to_numpy(float)
    g, heads = _groups(frame)
    measure = frame["measure"].astype(str).to_numpy()
    by_measure = {}
    for m in MEASURES:  # one (groups × destinations) block per measure; a key given twice is an error already
        block = np.full((len(heads), len(dest)), np.nan)
        at = measure == m
        block[g[at]] = values[at]
        by_measure[m] = block
    filled = np.zeros((len(heads), len(dest)), dtype=bool)
    for block in by_measure.values():
        filled |= ~np.isnan(block)
    gi, j = np.nonzero(filled)
    codes = np.asarray(dest, dtype=object)
    out = pd.DataFrame(
        {
            "row": heads["row"].to_numpy()[gi],
            "column": codes[j],
            "origin": heads["origin"].to_numpy()[gi],
            "destination": codes[j],
            "mode": heads["mode"].to_numpy()[gi],
            "product": heads["product"].to_numpy()[gi],
            **{m: block[gi, j] for m, block in by_measure.items()},
        }
    )
    return out[cols]


def matrix_problems(tables: dict[str, pd.DataFrame], usable: set[str]) -> list[Problem]:
    """Every problem of the lane matrix's sites and cells (types, keys, modes and products are checked as
    for any table)."""
    frame = tables[TABLE]
    if TABLE not in usable or frame.empty:
        return []
    problems: list[Problem] = []
    dest = destinations(frame)
    if not dest:
        return [
            Problem(
                TABLE,
                None,
                None,
                "no destination columns: name one column per destination site (plant, DC or customer)",
            )
        ]
    kinds = site_kinds(tables)
    bad_dest = set()
    for d in dest:
        msg = destination_message(d, kinds)
        if msg:
            problems.append(Problem(TABLE, None, d, msg))
            bad_dest.add(d)
    origins = frame["origin"].astype(str)
    bad_rows = set()
    for r, o in origins.items():
        msg = origin_message(o, kinds) if o else None
        if msg:
            problems.append(Problem(TABLE, row_number(r), "origin", msg))
        if msg or not o:  # a blank origin is said by the typing (a required column)
            bad_rows.add(r)
    # A filled cell between known ends of the right kinds that is no lane: a site to itself, or not a leg.
    values = frame[dest].to_numpy(float)
    o_kind = origins.map(kinds).fillna("").to_numpy(dtype=object)
    d_kind = np.array([kinds.get(d, "") for d in dest], dtype=object)
    leg_ok = np.array([[f"{a}-{b}" in LEGS for b in d_kind] for a in pd.unique(o_kind)])
    row_of_kind = pd.Index(pd.unique(o_kind)).get_indexer(o_kind)
    itself = origins.to_numpy(dtype=object)[:, None] == np.asarray(dest, dtype=object)[None, :]
    no_lane = (~leg_ok[row_of_kind] | itself) & ~np.isnan(values)
    no_lane[np.array([r in bad_rows for r in frame.index], dtype=bool)] = False
    no_lane[:, np.array([d in bad_dest for d in dest], dtype=bool)] = False
    for i, j in zip(*np.nonzero(no_lane)):
        o, d = origins.iloc[i], dest[j]
        msg = str(pair_message(o, d, kinds)) + ("; leave that cell blank" if o == d else "")
        problems.append(Problem(TABLE, row_number(frame.index[i]), d, msg))
    days = frame[frame["measure"] == "transit_days"]
    if len(days):
        over = days[dest].to_numpy(float) > MAX_DAYS
        for i, j in zip(*np.nonzero(over)):
            v = float(days[dest[j]].iloc[i])
            problems.append(
                Problem(
                    TABLE,
                    row_number(days.index[i]),
                    dest[j],
                    f"transit_days must be at most {format_number(MAX_DAYS)} days, got {format_number(v)}",
                )
            )
    return problems
