"""Plausibility warnings in the first `netopt check`: swapped and sign-lost coordinates, implausible
magnitudes, concentrated demand.  The coordinates are those of real cities in the demo case (Stockholm
59.33 N 18.07 E, Madrid 40.42 N 3.70 W; common knowledge of the map, from memory)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd

from netopt.api import load_case

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
    assert not [w for w in load_case(DEMO).warnings if "look" in w.message or "plausible" in w.message]


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
