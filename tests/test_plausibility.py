"""Plausibility warnings in the first `netopt check`: swapped and sign-lost coordinates, implausible
magnitudes, concentrated demand.  The coordinates are those of real cities in the demo case (Stockholm
59.33 N 18.07 E, Madrid 40.42 N 3.70 W; common knowledge of the map, from memory)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd

from netopt.api import load_case
from netopt.network.plausibility import coordinate_warnings, plausibility_warnings, region_side_warnings

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"


def _broken_demo(tmp_path: Path) -> Path:
    case = tmp_path / "case"
    shutil.copytree(DEMO, case)
    c = pd.read_csv(case / "customers.csv", keep_default_na=False)
    c.loc[c["customer"] == "C_STOCKHOLM", ["lat", "lon"]] = [18.07, 59.33]  # lat and lon swapped
    c.loc[c["customer"] == "C_MADRID", "lat"] = -40.42  # the minus sign on the wrong coordinate
    c.to_csv(case / "customers.csv", index=False)
    p = pd.read_csv(case / "products.csv", keep_default_na=False)
    p.loc[p["product"] == "KETTLE", "unit_weight_kg"] = 28000.0  # a kettle of 28 t: grams typed as kg
    p.to_csv(case / "products.csv", index=False)
    return case


def test_demo_has_no_plausibility_warning():
    case = load_case(DEMO)
    assert not plausibility_warnings(case.tables, case.settings)
    assert not case.warnings


def test_swapped_and_sign_lost_coordinates_and_a_28_t_unit_are_flagged_in_one_pass(tmp_path):
    warnings = load_case(_broken_demo(tmp_path)).warnings  # one load: every warning at once
    text = {(w.table, w.column): [] for w in warnings}
    for w in warnings:
        text[(w.table, w.column)].append(w.message)
    coords = " ".join(text.get(("customers", "lat"), []))
    assert "'C_STOCKHOLM' look lat and lon swapped" in coords
    assert "'C_MADRID' look latitude sign lost" in coords
    assert any("28000 kg is outside the plausible range" in m for m in text.get(("products", "unit_weight_kg"), []))
    rows = {w.row for w in warnings if w.table == "customers"}
    c = pd.read_csv(tmp_path / "case" / "customers.csv")
    assert rows == {int(c.index[c["customer"] == n][0]) + 2 for n in ("C_STOCKHOLM", "C_MADRID")}  # CSV lines


CITIES = {  # real city coordinates (lat, lon), from memory; region as an analyst would tag them
    "C_TOKYO": (35.68, 139.69, "east_asia"),
    "C_SEOUL": (37.57, 126.98, "east_asia"),
    "C_SHANGHAI": (31.23, 121.47, "east_asia"),
    "C_MELBOURNE": (-37.81, 144.96, "oceania"),
    "C_BRISBANE": (-27.47, 153.03, "oceania"),
    "C_PERTH": (-31.95, 115.86, "oceania"),
    "C_AUCKLAND": (-36.85, 174.76, "oceania"),
    "C_SYDNEY": (-33.87, 151.21, "oceania"),
    "C_LONDON": (51.51, -0.13, "uk"),  # the UK straddles the prime meridian: no warning
    "C_BRISTOL": (51.45, -2.59, "uk"),
    "C_CAMBRIDGE": (52.21, 0.12, "uk"),
    "C_LEEDS": (53.80, -1.55, "uk"),
}


def _site_tables(**changed) -> dict[str, pd.DataFrame]:
    rows = []
    for code, (lat, lon, region) in CITIES.items():
        lat, lon = changed.get(code, (lat, lon))
        rows.append({"customer": code, "lat": lat, "lon": lon, "region": region})
    return {"customers": pd.DataFrame(rows, index=range(2, 2 + len(rows)))}


def test_a_site_across_the_equator_from_the_rest_of_its_region_is_flagged():
    """Sydney typed without its minus sign lands near Tokyo (about 1,100 km away), so it is not far from
    every site; but every other site of region 'oceania' is south of the equator."""
    tables = _site_tables(C_SYDNEY=(33.87, 151.21))
    assert not coordinate_warnings(tables)  # not far from every site: the first check cannot see it
    w = plausibility_warnings(tables, {})
    assert [(p.row, p.column) for p in w] == [(9, "lat")]
    assert "'C_SYDNEY' (region 'oceania') is north of the equator" in w[0].message


def test_regions_on_both_sides_of_a_line_raise_nothing():
    """As given, no site is across a line from all of its region (the UK straddles the prime meridian)."""
    assert not plausibility_warnings(_site_tables(), {})


def test_a_european_site_west_of_the_meridian_is_not_flagged():
    """Porto (41.15 N, 8.61 W, from memory) with three suppliers in central Europe, all east of the
    meridian: across the line from all of them, but only about 2,300 km from Brno, so no warning."""
    tables = {
        "suppliers": pd.DataFrame(
            [
                {"supplier": "S_PORTO", "lat": 41.15, "lon": -8.61, "region": "Europe"},
                {"supplier": "S_BRNO", "lat": 49.20, "lon": 16.61, "region": "Europe"},
                {"supplier": "S_KATOWICE", "lat": 50.26, "lon": 19.02, "region": "Europe"},
                {"supplier": "S_BUCHAREST", "lat": 44.43, "lon": 26.10, "region": "Europe"},
            ],
            index=range(2, 6),
        )
    }
    assert not region_side_warnings(tables)
