"""Plausibility warnings for the first ``netopt check``: the mistakes analysts make with valid-looking data.

- Coordinates that look swapped (lat ↔ lon) or sign-lost: a site far from every other site of the
  case (more than :data:`FAR_KM` and :data:`FAR_FACTOR` × the typical nearest-site distance) that,
  read with lat and lon swapped or with a sign flipped, would lie near the others.
- A site on the other side of the equator (or of the prime meridian) than every other site of its
  region, by more than :data:`REGION_MARGIN_DEG` beyond their span and more than
  :data:`REGION_FAR_KM` from the nearest of them: a lost minus sign, or a wrong region.
- Unit weights and values outside the ranges of :data:`UNIT_RANGES`.
- Demand concentrated on one customer (more than :data:`CONCENTRATED_SHARE` of the total among
  at least :data:`CONCENTRATION_MIN_CUSTOMERS` customers).

The thresholds are common practice, no source; each is a warning, never an error: an unusual
network can be right.  The check registers itself with the data stage's validation, so it runs in
the same pass as every other check.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Problem
from netopt.data.validate import register_case_check
from netopt.network.geo import pairwise_km

SITE_TABLES = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))
FAR_KM = 1500.0  # km: a nearest other site further than this (and FAR_FACTOR × typical) is suspicious
FAR_FACTOR = 5.0
FITS_FACTOR = 0.2  # a reading of the coordinates fits when its nearest site is this close relative to as given
UNIT_RANGES = {  # (table, column): (low, high, unit) a unit of a manufactured or distributed product lies in
    ("products", "unit_weight_kg"): (0.001, 2000.0, "kg"),
    ("products", "unit_value"): (0.01, 1_000_000.0, "currency"),
}
REGION_MARGIN_DEG = 10.0  # degrees beyond the span of the region's other sites
REGION_FAR_KM = 3000.0  # km from the nearest other site of the region (Porto is 2,300 km from Brno)
REGION_MIN_SITES = 3  # a region needs this many other sites before its side of the globe is judged
CONCENTRATED_SHARE = 0.5
CONCENTRATION_MIN_CUSTOMERS = 5


def _sites(tables: dict[str, pd.DataFrame]) -> pd.DataFrame:
    parts = []
    for table, col in SITE_TABLES:
        t = tables.get(table)
        if t is None or t.empty or not {"lat", "lon"} <= set(t.columns):
            continue
        first = t[~t[col].duplicated()]
        parts.append(
            pd.DataFrame(
                {
                    "table": table,
                    "row": first.index,
                    "code": first[col].astype(str),
                    "lat": pd.to_numeric(first["lat"], errors="coerce"),
                    "lon": pd.to_numeric(first["lon"], errors="coerce"),
                    "region": first["region"].astype(str).str.strip() if "region" in first else "",
                }
            )
        )
    s = (
        pd.concat(parts, ignore_index=True)
        if parts
        else pd.DataFrame(columns=["table", "row", "code", "lat", "lon", "region"])
    )
    return s.dropna(subset=["lat", "lon"]).reset_index(drop=True)


def coordinate_warnings(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """Sites whose coordinates look swapped or sign-lost (see the module docstring)."""
    s = _sites(tables)
    if len(s) < 4:
        return []
    lat, lon = s["lat"].to_numpy(float), s["lon"].to_numpy(float)
    d = pairwise_km(lat, lon, lat, lon)
    np.fill_diagonal(d, np.inf)
    nearest = d.min(axis=1)
    typical = float(np.median(nearest))
    out = []
    for i in np.flatnonzero(nearest > max(FAR_KM, FAR_FACTOR * typical)).tolist():
        others = np.arange(len(s)) != i
        readings = {
            "lat and lon swapped": (lon[i], lat[i]),
            "latitude sign lost": (-lat[i], lon[i]),
            "longitude sign lost": (lat[i], -lon[i]),
        }
        best = None
        for what, (la, lo) in readings.items():
            if not -90.0 <= la <= 90.0 or (la == lat[i] and lo == lon[i]):
                continue
            alt = float(pairwise_km([la], [lo], lat[others], lon[others]).min())
            if alt <= FITS_FACTOR * nearest[i] and (best is None or alt < best[1]):
                best = (what, alt, la, lo)
        if best is None:
            continue
        what, alt, la, lo = best
        r = s.iloc[i]
        out.append(
            Problem(
                str(r["table"]),
                int(r["row"]),
                "lat",
                f"coordinates of '{r['code']}' look {what}: as given ({lat[i]:g}, {lon[i]:g}) the nearest other site "
                f"is {nearest[i]:,.0f} km away, read as ({la:g}, {lo:g}) it would be {alt:,.0f} km",
                "warning",
            )
        )
    return out


def region_side_warnings(tables: dict[str, pd.DataFrame], skip: set[tuple[str, int]] | None = None) -> list[Problem]:
    """Sites on the other side of the equator or prime meridian than all other sites of their region.

    ``skip``: (table, row) already warned about (a site flagged as far from every site is not flagged twice).
    """
    s = _sites(tables)
    out = []
    sides = (("lat", "south", "north", "the equator"), ("lon", "west", "east", "the prime meridian"))
    for region, g in s[s["region"].ne("")].groupby("region"):
        if len(g) < REGION_MIN_SITES + 1:
            continue
        for i, r in g.iterrows():
            if (str(r["table"]), int(r["row"])) in (skip or set()):
                continue
            others = g.drop(index=i)
            for col, neg, pos, line in sides:
                v, o = float(r[col]), others[col].to_numpy(float)
                lo, hi = float(o.min()), float(o.max())
                one_side = (lo > 0 and v < 0 and v < lo - REGION_MARGIN_DEG) or (
                    hi < 0 and v > 0 and v > hi + REGION_MARGIN_DEG
                )
                if not one_side:
                    continue
                d0 = float(pairwise_km([r["lat"]], [r["lon"]], others["lat"], others["lon"]).min())
                if d0 <= REGION_FAR_KM:
                    continue
                out.append(
                    Problem(
                        str(r["table"]),
                        int(r["row"]),
                        col,
                        f"'{r['code']}' (region '{region}') is {neg if v < 0 else pos} of {line} ({col} {v:g}) while "
                        f"the other {len(others)} sites of the region are all {pos if v < 0 else neg} ({col} "
                        f"{lo:g} to {hi:g}), the nearest {d0:,.0f} km away: a lost minus sign, or the wrong region?",
                        "warning",
                    )
                )
                break
    return out


def magnitude_warnings(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """Unit weights and values outside :data:`UNIT_RANGES`."""
    out = []
    for (table, col), (lo, hi, unit) in UNIT_RANGES.items():
        t = tables.get(table)
        if t is None or t.empty or col not in t:
            continue
        v = pd.to_numeric(t[col], errors="coerce")
        bad = (v > hi) | ((v > 0) & (v < lo))
        for row, x in v[bad].items():
            out.append(
                Problem(
                    table,
                    int(row),
                    col,
                    f"{x:g} {unit} is outside the plausible range for one unit ({lo:g}–{hi:g} {unit}); "
                    "check the unit of measure",
                    "warning",
                )
            )
    return out


def concentration_warnings(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """One customer holding more than :data:`CONCENTRATED_SHARE` of all demand."""
    dem = tables.get("demand")
    if dem is None or dem.empty:
        return []
    by = pd.to_numeric(dem["quantity"], errors="coerce").groupby(dem["customer"].astype(str)).sum()
    total = float(by.sum())
    if len(by) < CONCENTRATION_MIN_CUSTOMERS or total <= 0:
        return []
    top = by.idxmax()
    share = float(by.max()) / total
    if share <= CONCENTRATED_SHARE:
        return []
    row = int(dem.index[dem["customer"].astype(str) == top][0])
    return [
        Problem(
            "demand",
            row,
            "quantity",
            f"customer '{top}' holds {share:.0%} of all demand: check units and duplicated rows",
            "warning",
        )
    ]


def plausibility_warnings(tables: dict[str, pd.DataFrame], settings: dict) -> list[Problem]:
    """Every plausibility warning of a case (coordinates, sides of the globe, magnitudes, concentration)."""
    far = coordinate_warnings(tables)
    seen = {(p.table, int(p.row)) for p in far if p.row is not None}
    return far + region_side_warnings(tables, seen) + magnitude_warnings(tables) + concentration_warnings(tables)


register_case_check(plausibility_warnings)
