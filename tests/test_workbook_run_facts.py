"""results.xlsx says how the solve ended: solver status, message, objective, bound, gap, time, check.

Facts checked (common practice, no source): a result file read on its own must say whether the
plan is proven optimal (status, gap) and whether it passed the independent check; an Excel number
format holds a literal text inside double quotes, and a quote inside it is written as \\".
"""

from __future__ import annotations

import json

from casekit import make_case_dir
from openpyxl import load_workbook

from netopt.cli import main
from netopt.data.io import load_case
from netopt.engine.result import Result
from netopt.engine.solve import solve
from netopt.present.formats import excel_format
from netopt.present.labels import DISCLAIMER
from netopt.present.workbook import write_workbook


def _facts(path):
    ws = load_workbook(path)["about"]
    rows = [(ws.cell(r, 1).value, ws.cell(r, 2)) for r in range(1, ws.max_row + 1)]
    return ws, {a: c for a, c in rows if a}


def test_the_first_sheet_states_status_gap_and_check(tmp_path):
    r = solve(load_case(make_case_dir(tmp_path)))
    path = tmp_path / "results.xlsx"
    write_workbook(dict(r.tables), path, notes=DISCLAIMER, currency="EUR", summary=r.summary())
    ws, facts = _facts(path)
    assert ws.cell(1, 1).value == DISCLAIMER.splitlines()[0]
    assert facts["solver status"].value == "optimal"
    assert facts["optimality gap"].value == r.gap and facts["optimality gap"].number_format == "0.00%"
    assert abs(facts["total landed cost (objective), EUR/yr"].value - r.objective) < 1e-6
    assert facts["lower bound, EUR/yr"].value == r.bound
    assert facts["independent check"].value == "passed"
    assert facts["run time, s"].value > 0
    assert facts["solver message"].value == r.message


def test_a_solve_without_a_plan_says_why(tmp_path):
    r = Result("c", "error", float("nan"), float("nan"), float("inf"), message="HiGHS rejected the model: x")
    path = tmp_path / "results.xlsx"
    write_workbook({}, path, notes=DISCLAIMER, summary=r.summary())
    _, facts = _facts(path)
    assert facts["solver status"].value == "error"
    assert facts["solver message"].value == "HiGHS rejected the model: x"
    assert facts["independent check"].value == "not run (no plan)"
    assert facts["optimality gap"].value is None


def test_a_quote_in_the_currency_keeps_the_number_format_whole():
    assert excel_format("money", 'EU"R') == '#,##0" EU"\\""R"'


def test_netopt_solve_writes_the_facts_into_results_xlsx(tmp_path):
    """End to end: the results.xlsx that `netopt solve` writes carries the status and gap of summary.json."""
    out = tmp_path / "out"
    try:
        main(["solve", str(make_case_dir(tmp_path)), "--out", str(out), "-q", "--no-report"])
    except SystemExit as e:
        assert e.code == 0
    summary = json.loads((out / "summary.json").read_text())
    _, facts = _facts(out / "results.xlsx")
    assert facts["solver status"].value == summary["status"]
    assert facts["optimality gap"].value == summary["gap"]
    assert facts["independent check"].value == ("passed" if summary["verified"] else "FAILED")
