"""What the command line says on its own lines: verdicts even under --quiet, warnings capped.

Facts checked (common practice, no source): a script calling a tool with --quiet must still learn
why it failed from stderr, and a report of a million warnings is no report.
"""

from __future__ import annotations

import argparse

from casekit import TINY, make_case_dir

from netopt.cli import main
from netopt.cli.common import print_warnings
from netopt.data.case import Problem
from netopt.data.io import load_case
from netopt.data.limits import MAX_ERRORS_PER_COLUMN


def _run(argv, capsys):
    try:
        main(argv)
    except SystemExit as e:
        code = e.code
    return code, capsys.readouterr()


def test_an_infeasible_solve_says_so_on_stderr_even_when_quiet(tmp_path, capsys):
    """Demand far beyond every supplier's capacity: exit 3 and one line naming the diagnosis file."""
    demand = [dict(row, quantity=str(float(row["quantity"]) * 1e4)) for row in TINY["demand"]]
    suppliers = [dict(row, capacity="1") for row in TINY["suppliers"]]
    case = make_case_dir(tmp_path, demand=demand, suppliers=suppliers)
    code, printed = _run(["solve", str(case), "--out", str(tmp_path / "out"), "-q", "--no-report"], capsys)
    assert code == 3
    assert "infeasible" in printed.err and "diagnosis.csv" in printed.err
    assert (tmp_path / "out" / "diagnosis.csv").exists()


def test_warnings_are_capped_per_table_and_column_with_the_rest_counted(tmp_path, capsys):
    case = load_case(make_case_dir(tmp_path))
    n = MAX_ERRORS_PER_COLUMN + 30
    case.warnings = [Problem("demand", 2 + i, "quantity", "looks odd", "warning") for i in range(n)]
    print_warnings(argparse.Namespace(quiet=False), case)
    err = capsys.readouterr().err
    assert err.count("looks odd") == MAX_ERRORS_PER_COLUMN
    assert "30 more" in err and f"{n} warning(s)" in err
