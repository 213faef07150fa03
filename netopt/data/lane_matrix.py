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


def matrix_lanes(frame: pd.DataFrame) -> pd.DataFrame:
    """One row per filled cell pair: origin, destination, mode, product, one column per measure (NaN where
    that measure's row is missing or its cell blank), and ``row``/``column``, the matrix cell it came from
    (the first measure's row).  Rows sorted by the matrix's row, then its column order."""
    cols = ["row", "column", *KEY, *MEASURES]
    dest = destinations(frame)
    if frame.empty or not dest:
        return pd.DataFrame({c: pd.Series(dtype=float if c in MEASURES else object) for c in cols})
    values = frame[dest].to_numpy(float)
    r, j = np.nonzero(~np.isnan(values))
    codes = np.asarray(dest, dtype=object)
    cells = pd.DataFrame(
        {
            "row": frame.index.to_numpy()[r],
            "column": codes[j],
            "origin": frame["origin"].to_numpy()[r],
            "destination": codes[j],
            "mode": frame["mode"].to_numpy()[r],
            "product": frame["product"].to_numpy()[r],
            "measure": frame["measure"].to_numpy()[r],
            "value": values[r, j],
        }
    )
    first = cells.groupby(KEY, sort=False)["row"].transform("min").eq(cells["row"])
    wide = cells.pivot_table(index=KEY, columns="measure", values="value", aggfunc="first", sort=False)
    out = cells[first].drop_duplicates(KEY).join(wide, on=KEY)
    for m in MEASURES:
        if m not in out.columns:
            out[m] = np.nan
    return out.sort_values(["row"], kind="mergesort").reset_index(drop=True)[cols]


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
            bad_rows.add(r)
    long = matrix_lanes(frame)
    cells = long[~long["row"].isin(bad_rows) & ~long["column"].isin(bad_dest)]
    o_kind, d_kind = cells["origin"].map(kinds), cells["destination"].map(kinds)
    suspect = cells["origin"].eq(cells["destination"]) | ~(o_kind + "-" + d_kind).isin(LEGS)
    for r, c, o, d in cells.loc[suspect, ["row", "column", "origin", "destination"]].itertuples(index=False):
        problems.append(Problem(TABLE, row_number(r), c, str(pair_message(o, d, kinds))))
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
