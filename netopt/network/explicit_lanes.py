"""Explicit lanes: the ``lanes`` table and the ``lane_matrix``'s cells, resolved into rows of the lane table.

Both are read whole columns at once (a case may give hundreds of thousands of explicit lanes): site kinds,
legs and coordinates by index look-ups; only rows with a problem are looked at one by one, to word each
problem with the table, row and column the user wrote (a matrix cell's column is its destination).  A row
of the ``lanes`` table replaces the matrix's lane of the same origin, destination, mode and product.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case, Problem
from netopt.data.lane_matrix import KEY, matrix_lanes
from netopt.data.rules import DESTINATION_KINDS, ORIGIN_KINDS
from netopt.data.schema import LEGS

LANE_COLUMNS = [
    "origin",
    "origin_kind",
    "destination",
    "destination_kind",
    "leg",
    "mode",
    "product",
    "distance_km",
    "transit_days",
    "cost_per_unit",
    "capacity",
    "source",
    "origin_lat",
    "origin_lon",
    "destination_lat",
    "destination_lon",
]
"""The columns of the lane table (:func:`netopt.network.lanes.build_lanes` says what each holds)."""

FLOAT_COLUMNS = {
    "distance_km",
    "transit_days",
    "cost_per_unit",
    "capacity",
    "origin_lat",
    "origin_lon",
    "destination_lat",
    "destination_lon",
}


def empty_lanes() -> pd.DataFrame:
    """A lane table with no rows."""
    return pd.DataFrame({c: pd.Series(dtype=float if c in FLOAT_COLUMNS else str) for c in LANE_COLUMNS})


def _given(case: Case) -> pd.DataFrame:
    """The lanes table's rows and the matrix's lanes in one frame, each with where it was written
    (``_table``, ``_row``, ``_dcol``: the column that names the destination)."""
    ex = case.tables["lanes"].sort_index()
    text = {c: ex[c].where(ex[c].notna(), "").astype(str).str.strip() for c in KEY}
    table = pd.DataFrame(
        {
            **{c: v.to_numpy() for c, v in text.items()},
            "distance_km": pd.to_numeric(ex["distance_km"], errors="coerce").to_numpy(float),
            "transit_days": pd.to_numeric(ex["transit_days"], errors="coerce").to_numpy(float),
            "cost_per_unit": pd.to_numeric(ex["cost_per_unit"], errors="coerce").to_numpy(float),
            "capacity": pd.to_numeric(ex["capacity"], errors="coerce").fillna(np.inf).to_numpy(float),
            "available": ex["available"].where(ex["available"].notna(), True).astype(bool).to_numpy(),
            "_table": "lanes",
            "_row": ex.index.to_numpy(),
            "_dcol": "destination",
        }
    )
    given = case.tables.get("lane_matrix")
    mx = matrix_lanes(given) if given is not None else None
    if mx is None or mx.empty:
        return table
    if len(table):  # a row of the lanes table replaces the matrix's lane of the same key
        mx = mx[~pd.MultiIndex.from_frame(mx[KEY]).isin(pd.MultiIndex.from_frame(table[KEY]))]
    matrix = pd.DataFrame(
        {
            **{c: mx[c].to_numpy() for c in KEY},
            "distance_km": mx["distance_km"].to_numpy(float),
            "transit_days": mx["transit_days"].to_numpy(float),
            "cost_per_unit": mx["cost_per_unit"].to_numpy(float),
            "capacity": np.full(len(mx), np.inf),
            "available": np.ones(len(mx), dtype=bool),
            "_table": "lane_matrix",
            "_row": mx["row"].to_numpy(),
            "_dcol": mx["column"].to_numpy(),
        }
    )
    return pd.concat([table, matrix], ignore_index=True) if len(table) else matrix


def explicit_rows(
    case: Case, sites: dict[str, pd.DataFrame], mode_info: dict[str, dict], problems: list[Problem]
) -> pd.DataFrame:
    """The explicit lanes (lanes table and lane matrix) with kinds, leg and coordinates resolved, as rows of
    the lane table plus ``available``; bad rows become problems (table, row, column)."""
    cols = LANE_COLUMNS + ["available"]
    ex = _given(case)
    if ex.empty:
        return empty_lanes().assign(available=pd.Series(dtype=bool))
    kind_of: dict[str, str] = {}
    for k in ("customer", "dc", "plant", "supplier"):  # later kinds win only if codes collide
        kind_of.update(dict.fromkeys(sites[k].index, k))
    o, d, m = ex["origin"], ex["destination"], ex["mode"]
    ok, dk = o.map(kind_of), d.map(kind_of)
    leg = ok.fillna("") + "-" + dk.fillna("")
    bad = (~ok.isin(ORIGIN_KINDS) | ~dk.isin(DESTINATION_KINDS) | ~m.isin(list(mode_info)) | ~leg.isin(LEGS)).to_numpy()
    for i in np.flatnonzero(bad):
        where = (ex.at[i, "_table"], ex.at[i, "_row"], ex.at[i, "_dcol"])
        _row_problems(where, o[i], d[i], m[i], ok[i], dk[i], mode_info, problems)
    ex, ok, dk = ex[~bad], ok[~bad], dk[~bad]
    if ex.empty:
        return empty_lanes().assign(available=pd.Series(dtype=bool))
    out = pd.DataFrame(
        {
            "origin": ex["origin"].to_numpy(),
            "origin_kind": ok.to_numpy(),
            "destination": ex["destination"].to_numpy(),
            "destination_kind": dk.to_numpy(),
            "leg": (ok + "-" + dk).to_numpy(),
            "mode": ex["mode"].to_numpy(),
            "product": ex["product"].to_numpy(),
            "distance_km": ex["distance_km"].to_numpy(float),
            "transit_days": ex["transit_days"].to_numpy(float),
            "cost_per_unit": ex["cost_per_unit"].to_numpy(float),
            "capacity": ex["capacity"].to_numpy(float),
            "source": "explicit",
        }
    )
    for end, code, kind in (("origin", ex["origin"], ok), ("destination", ex["destination"], dk)):
        for c in ("lat", "lon"):
            v = np.full(len(out), np.nan)
            for k in kind.unique():
                at = (kind == k).to_numpy()
                coord = sites[k][c].groupby(level=0).first()
                v[at] = code[at].map(coord).to_numpy(float)
            out[f"{end}_{c}"] = v
    out["available"] = ex["available"].to_numpy(bool)
    return out[cols]


def _row_problems(where, o, d, m, ok, dk, mode_info, problems: list[Problem]) -> None:
    """Every problem of one explicit lane, worded for the user: ``where`` = (table, row, the column that
    names the destination)."""
    table, row, dcol = where
    bad = False
    if not isinstance(ok, str):
        problems.append(Problem(table, row, "origin", f"{o!r} is not a supplier, plant or DC of the case"))
        bad = True
    elif ok not in ORIGIN_KINDS:
        problems.append(Problem(table, row, "origin", f"{o!r} is a {ok}; lanes start at a supplier, plant or DC"))
        bad = True
    if not isinstance(dk, str):
        problems.append(Problem(table, row, dcol, f"{d!r} is not a plant, DC or customer of the case"))
        bad = True
    elif dk not in DESTINATION_KINDS:
        problems.append(Problem(table, row, dcol, f"{d!r} is a {dk}; lanes end at a plant, DC or customer"))
        bad = True
    if m not in mode_info:
        problems.append(Problem(table, row, "mode", f"unknown mode {m!r} (not in modes)"))
        bad = True
    if not bad and f"{ok}-{dk}" not in LEGS:
        problems.append(
            Problem(
                table,
                row,
                dcol,
                f"{ok} {o!r} → {dk} {d!r} is not a leg netopt models; legs are {', '.join(LEGS)}",
            )
        )
