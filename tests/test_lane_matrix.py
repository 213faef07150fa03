"""The lane matrix (table lane_matrix): explicit lanes as origin × destination matrices.

Outside reference: the OR-Library capacitated warehouse location instances and their published optima
(Beasley, "OR-Library: distributing test problems by electronic mail", JORS 41 (1990); instances of
Beasley 1988; tests/data/orlib/SOURCES.md), the same data the reference tests give as one lane per row.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from orlib import DATA, cap_case, read_cap, read_capopt

from netopt.api import solve
from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.data.io import load_case
from netopt.data.writing import write_case_csv, write_case_workbook
from netopt.network.lanes import case_lanes
from netopt.studies.scenarios import Scenario, apply_changes

CAPOPT = read_capopt()


def _plain(case) -> dict:
    """The case's given tables as plain frames (empty optional tables left out)."""
    return {k: v.reset_index(drop=True) for k, v in case.tables.items() if len(v)}


def _wide(origins, destinations, measures: dict[str, np.ndarray], mode: str = "given") -> pd.DataFrame:
    """One row per origin and measure, one column per destination (the matrix as an analyst writes it)."""
    parts = []
    for measure, values in measures.items():
        w = pd.DataFrame(values, columns=destinations)
        w.insert(0, "measure", measure)
        w.insert(0, "mode", mode)
        w.insert(0, "origin", origins)
        parts.append(w)
    return pd.concat(parts, ignore_index=True)


def cap_matrix_case(name: str):
    """The OR-Library instance ``name`` with its warehouse → customer lanes as a cost matrix (and distance
    and transit matrices of zeros), the plant → warehouse lanes in the lanes table; and the same instance
    written one lane per row (tests/orlib.cap_case)."""
    rows = cap_case(DATA / "cap" / f"{name}.txt")
    d = read_cap(DATA / "cap" / f"{name}.txt")
    wh = [f"W{i + 1}" for i in range(d["m"])]
    cu = [f"C{j + 1}" for j in range(d["n"])]
    zero = np.zeros((d["m"], d["n"]))
    tables = _plain(rows)
    tables["lanes"] = tables["lanes"][tables["lanes"]["origin"] == "PLANT"]
    # c_ij is the cost of serving all of customer j's demand d_j from warehouse i: per unit c_ij / d_j.
    costs = d["cost"] / d["demand"][None, :]
    tables["lane_matrix"] = _wide(wh, cu, {"cost_per_unit": costs, "distance_km": zero, "transit_days": zero})
    return make_case(tables, rows.settings, name=name), rows


@pytest.mark.parametrize("name", ["cap71", "cap101"])
def test_matrix_gives_the_lanes_and_the_published_optimum_of_the_lane_rows(name):
    # OR-Library capopt.txt (Beasley 1990): the split-demand optimum; the same data one lane per row is
    # checked against it in test_model_reference.  Tolerance as there (values carry 3 decimals).
    matrix, rows = cap_matrix_case(name)
    pd.testing.assert_frame_equal(case_lanes(matrix), case_lanes(rows))
    res = solve(matrix, mip_gap=1e-9)
    assert res.status == "optimal"
    assert res.objective == pytest.approx(CAPOPT[name], abs=1.5e-3)
    assert res.verification.passed, res.verification.checks


def test_matrix_read_from_a_folder_and_a_workbook(tmp_path):
    # Reference: the OR-Library cap41 instance (Beasley 1990) one lane per row (tests/orlib.cap_case).
    # The wide table through the readers: CSV (one column per destination) and a workbook sheet.
    matrix, rows = cap_matrix_case("cap41")
    folder = write_case_csv(matrix, tmp_path / "case")
    header = (folder / "lane_matrix.csv").read_text(encoding="utf-8").splitlines()[0].split(",")
    assert header[:4] == ["origin", "mode", "measure", "product"] and header[4:6] == ["C1", "C2"]
    book = write_case_workbook(matrix, tmp_path / "case.xlsx")
    for path in (folder, book):
        pd.testing.assert_frame_equal(case_lanes(load_case(path)), case_lanes(rows))


def _small(**extra):
    """Plant P → DCs D1, D2 → customers C1, C2 on the equator (1° apart), one product."""
    tables = {
        "products": [{"product": "A", "unit_weight_kg": 1.0, "unit_value": 1.0}],
        "plants": [{"plant": "P", "product": "A", "lat": 0.0, "lon": 0.0}],
        "dcs": [{"dc": "D1", "lat": 0.0, "lon": 1.0}, {"dc": "D2", "lat": 0.0, "lon": 2.0}],
        "customers": [{"customer": "C1", "lat": 0.0, "lon": 3.0}, {"customer": "C2", "lat": 0.0, "lon": 4.0}],
        "demand": [{"customer": c, "product": "A", "quantity": 10.0} for c in ("C1", "C2")],
        "modes": [
            {
                "mode": "road",
                "cost_per_tonne_km": 0.1,
                "speed_km_per_day": 500.0,
                "handling_days": 1.0,
                "generate_lanes": False,
            }
        ],
        "lanes": [{"origin": "P", "destination": d, "mode": "road"} for d in ("D1", "D2")],
    }
    tables.update(extra)
    return tables


def _lane(lanes, o, d):
    sel = lanes[(lanes["origin"] == o) & (lanes["destination"] == d)]
    assert len(sel) == 1, sel
    return sel.iloc[0]


def test_blank_cells_are_no_lane_and_missing_measures_are_computed():
    # A cost matrix with a blank cell and a distance matrix: a lane where either is filled; a measure left
    # blank is computed as for a blank in the lanes table (transit = km / speed + handling days).
    mx = pd.DataFrame(
        [
            {"origin": "D1", "mode": "road", "measure": "cost_per_unit", "C1": 2.5, "C2": None},
            {"origin": "D1", "mode": "road", "measure": "distance_km", "C1": 300.0, "C2": 400.0},
            {"origin": "D2", "mode": "road", "measure": "cost_per_unit", "C1": None, "C2": 1.5},
        ]
    )
    lanes = case_lanes(make_case(_small(lane_matrix=mx)))
    dc = lanes[lanes["leg"] == "dc-customer"]
    assert set(zip(dc["origin"], dc["destination"])) == {("D1", "C1"), ("D1", "C2"), ("D2", "C2")}
    a, b, c = _lane(lanes, "D1", "C1"), _lane(lanes, "D1", "C2"), _lane(lanes, "D2", "C2")
    assert (a["cost_per_unit"], a["distance_km"], a["transit_days"]) == (2.5, 300.0, pytest.approx(300 / 500 + 1))
    assert np.isnan(b["cost_per_unit"]) and b["distance_km"] == 400.0
    # D2 (0°, 2°) → C2 (0°, 4°): 2° of the equator on the mean-radius sphere, circuity 1 (hand computed).
    assert c["distance_km"] == pytest.approx(2 * 6371.0088 * np.pi / 180, rel=1e-9) and c["cost_per_unit"] == 1.5
    assert set(lanes["source"]) == {"explicit"}


def test_a_lanes_row_replaces_the_matrix_lane():
    # The precedence the schema states (lane_matrix's meaning); no outside source.
    mx = pd.DataFrame([{"origin": "D1", "mode": "road", "measure": "cost_per_unit", "C1": 2.0, "C2": 3.0}])
    t = _small(lane_matrix=mx)
    t["lanes"] = t["lanes"] + [
        {"origin": "D1", "destination": "C1", "mode": "road", "cost_per_unit": 9.0},
        {"origin": "D1", "destination": "C2", "mode": "road", "available": False},
        {"origin": "D2", "destination": "C2", "mode": "road", "cost_per_unit": 1.0},
    ]
    lanes = case_lanes(make_case(t))
    dc = lanes[lanes["leg"] == "dc-customer"]
    assert dict(zip(zip(dc["origin"], dc["destination"]), dc["cost_per_unit"])) == {
        ("D1", "C1"): 9.0,
        ("D2", "C2"): 1.0,
    }


def test_every_matrix_problem_named_by_row_and_column_at_once():
    # The rules of the schema (data_templates/schema.md: legs, site kinds, measures); no outside source.
    mx = pd.DataFrame(
        [
            {"origin": "D1", "mode": "road", "measure": "cost_per_unit", "C1": "2", "CX": "1", "D1": "1", "P": ""},
            {"origin": "DX", "mode": "road", "measure": "cost_per_unit", "C1": "2", "CX": "", "D1": "", "P": ""},
            {"origin": "D2", "mode": "ship", "measure": "cost_per_unit", "C1": "-1", "CX": "", "D1": "", "P": "4"},
            {"origin": "C2", "mode": "road", "measure": "transit_days", "C1": "abc", "CX": "", "D1": "", "P": ""},
            {"origin": "D1", "mode": "road", "measure": "cost_per_unit", "C1": "3", "CX": "", "D1": "", "P": ""},
            {"origin": "D2", "mode": "road", "measure": "time", "C1": "1", "CX": "", "D1": "", "P": ""},
        ]
    )
    with pytest.raises(CaseError) as err:
        make_case(_small(lane_matrix=mx))
    got = {(p.table, p.row, p.column) for p in err.value.problems}
    assert got == {
        ("lane_matrix", None, "CX"),  # no such site: once, on its column
        ("lane_matrix", 2, "D1"),  # D1 → D1: a site to itself
        ("lane_matrix", 3, "origin"),  # no such site: once, on its row
        ("lane_matrix", 4, "mode"),  # not in modes
        ("lane_matrix", 4, "C1"),  # below the column's minimum 0
        ("lane_matrix", 4, "P"),  # a DC does not ship to a plant: not a leg
        ("lane_matrix", 5, "C1"),  # not a number
        ("lane_matrix", 5, "origin"),  # a customer cannot ship
        ("lane_matrix", 6, "origin"),  # the key (D1, road, cost_per_unit) again
        ("lane_matrix", 7, "measure"),  # not one of the measures
    }
    msg = {(p.row, p.column): p.message for p in err.value.problems}
    assert "unknown destination site 'CX'" in msg[(None, "CX")]
    assert "unknown origin site 'DX'" in msg[(3, "origin")] and "'C2' is a customer" in msg[(5, "origin")]
    assert "to itself" in msg[(2, "D1")] and "'abc'" in msg[(5, "C1")]
    assert "rows 2 and 6" in msg[(6, "origin")]


def test_a_matrix_pair_that_is_not_a_leg_is_named_at_its_cell():
    # D2 → P: a DC does not ship to a plant (the legs of schema.LEGS); the blank cell of D1 is no lane.
    mx = pd.DataFrame([{"origin": "D2", "mode": "road", "measure": "cost_per_unit", "C1": 1.0, "P": 4.0}])
    with pytest.raises(CaseError) as err:
        make_case(_small(lane_matrix=mx))
    assert [(p.table, p.row, p.column) for p in err.value.problems] == [("lane_matrix", 2, "P")]
    assert "not a leg" in err.value.problems[0].message


def test_mode_rate_scales_the_matrix_costs():
    # scale_cost mode_rate multiplies every given lane cost of the mode (its help text); no outside source.
    mx = pd.DataFrame(
        [
            {"origin": "D1", "mode": "road", "measure": "cost_per_unit", "C1": 2.0, "C2": 3.0},
            {"origin": "D1", "mode": "road", "measure": "distance_km", "C1": 100.0, "C2": 200.0},
        ]
    )
    case = make_case(_small(lane_matrix=mx))
    change = {"kind": "scale_cost", "target": "mode_rate", "mode": "road", "factor": 2.0}
    lanes = case_lanes(apply_changes(case, Scenario("dear", [change])))
    assert _lane(lanes, "D1", "C1")["cost_per_unit"] == 4.0 and _lane(lanes, "D1", "C2")["distance_km"] == 200.0


def test_a_blank_origin_is_said_once_and_its_cells_are_not_judged():
    # A required column's blank is one problem (schema.md); no outside source.
    mx = pd.DataFrame(
        [
            {"origin": "", "mode": "road", "measure": "cost_per_unit", "C1": "1", "D1": "2"},
            {"origin": "D2", "mode": "road", "measure": "cost_per_unit", "C1": "1", "D1": "2"},
            {"origin": "D2", "mode": "road", "measure": "distance_km", "C1": "10", "D1": ""},
        ]
    )
    with pytest.raises(CaseError) as err:
        make_case(_small(lane_matrix=mx))
    got = [(p.table, p.row, p.column) for p in err.value.problems]
    assert got == [("lane_matrix", 2, "origin")]
    assert "blank value in a required column" in err.value.problems[0].message
