"""Excel as a first-class route: template workbook, a scenarios sheet, export both ways, no file silently
ignored.  The reference is the demo case's own CSV folder: what comes back must equal it."""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd
import pytest
from openpyxl import load_workbook

from netopt.api import CaseError, load_case
from netopt.cli import main
from netopt.data.scenario_sheet import scenarios_from_sheet, scenarios_sheet
from netopt.studies.scenarios import parse_scenarios

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"


def _plain(scenarios):
    return [(s.name, s.description, s.based_on, s.resolve, s.frontier_points, s.changes) for s in scenarios]


def test_demo_round_trips_through_a_workbook_with_its_scenarios(tmp_path):
    book = tmp_path / "demo.xlsx"
    with pytest.raises(SystemExit) as e:
        main(["export", str(DEMO), "--xlsx", "--out", str(book)])
    assert e.value.code == 0
    assert "scenarios" in load_workbook(book, read_only=True).sheetnames
    folder, wb = load_case(DEMO), load_case(book)
    assert _plain(parse_scenarios(wb.scenarios)) == _plain(parse_scenarios(folder.scenarios))
    for name in ("customers", "demand", "lanes", "dcs", "service_classes"):
        a, b = folder.tables[name].reset_index(drop=True), wb.tables[name].reset_index(drop=True)
        pd.testing.assert_frame_equal(a, b, check_dtype=False)
    back = tmp_path / "back"
    with pytest.raises(SystemExit) as e:
        main(["export", str(book), "--csv", "--out", str(back)])
    assert e.value.code == 0
    assert _plain(parse_scenarios(load_case(back).scenarios)) == _plain(parse_scenarios(folder.scenarios))


def test_a_scenarios_file_beside_a_workbook_is_an_error_not_ignored(tmp_path):
    book = tmp_path / "demo.xlsx"
    with pytest.raises(SystemExit):
        main(["export", str(DEMO), "--xlsx", "--out", str(book)])
    shutil.copy(DEMO / "scenarios.toml", tmp_path / "scenarios.toml")
    with pytest.raises(CaseError) as e:
        load_case(book)
    assert any(p.table == "scenarios.toml" and "'scenarios' sheet" in p.message for p in e.value.problems)


def test_blank_workbook_template_is_a_case_with_a_scenarios_sheet(tmp_path):
    with pytest.raises(SystemExit) as e:
        main(["template", str(tmp_path / "mine"), "--xlsx"])
    assert e.value.code == 0
    book = tmp_path / "mine.xlsx"
    assert "scenarios" in load_workbook(book, read_only=True).sheetnames
    case = load_case(book)
    assert case.scenarios == [] and all(df.empty for df in case.tables.values())


def test_scenario_sheet_rows_become_changes_and_back():
    sheet = pd.DataFrame(
        {
            "scenario": ["a", "a", "b", ""],
            "resolve": ["both", "", "", ""],
            "kind": ["site_out", "scale_demand", "", ""],
            "site": ["DC_X", "", "", ""],
            "factor": ["", "1.15", "", ""],
        },
        index=[2, 3, 4, 5],
    )
    scenarios, problems = scenarios_from_sheet(sheet)
    assert problems == []
    assert scenarios == [
        {
            "name": "a",
            "change": [{"kind": "site_out", "site": "DC_X"}, {"kind": "scale_demand", "factor": 1.15}],
            "resolve": "both",
        },
        {"name": "b", "change": []},
    ]
    again, _ = scenarios_from_sheet(scenarios_sheet(scenarios).astype(str).set_axis(range(2, 5)))
    assert again == scenarios
    bad = pd.DataFrame({"scenario": ["", "c"], "kind": ["site_out", ""], "site": ["X", "Y"]}, index=[2, 3])
    _, problems = scenarios_from_sheet(bad)
    assert {(p.row, p.column) for p in problems} == {(2, "scenario"), (3, "kind")}
