"""Terminal tables written to a pipe or a file keep every column readable (no terminal to wrap for).

A table wider than the console is printed at its natural width instead of being squeezed until its
text columns vanish (common practice for logs, no source)."""

from __future__ import annotations

import io

import pandas as pd
from rich.console import Console

from netopt.present.terminal import print_comparison, print_dc_matrix


def _piped(width: int = 80) -> tuple[Console, io.StringIO]:
    buf = io.StringIO()
    return Console(file=buf, width=width, force_terminal=False, highlight=False), buf


def test_wide_comparison_keeps_scenario_names_and_money_whole():
    names = ["base", "no_northampton", "nordic_boom [redesign]"]
    comparison = pd.DataFrame(
        {
            "scenario": names,
            "resolve": ["design", "redesign", "redesign"],
            "status": ["optimal"] * 3,
            "total_cost": [255_079_850.0, 279_259_135.0, 260_115_471.0],
            "delta_cost": [0.0, 24_179_286.0, 5_035_622.0],
            "delta_operating": [0.0, -5_662_693.0, 7_118_575.0],
            "delta_penalty": [0.0, 29_841_979.0, -2_082_953.0],
            "within_gap": [True, False, False],
            "dcs_open": [4, 3, 5],
            "verified": [True, True, True],
        }
    )
    con, buf = _piped()
    print_comparison(comparison, console=con)
    text = buf.getvalue()
    for n in names:
        assert n in text
    assert "279,259,135" in text and "+24,179,286" in text
    assert con.width == 80  # the console is left as it was


def test_dc_decisions_over_periods_are_one_row_per_dc_and_period():
    matrix = pd.DataFrame(
        {
            "dc": ["DC_NORTHAMPTON", "DC_NORTHAMPTON"],
            "period": ["2027", "2028"],
            "base": ["closed · 0", "opens · 338,421"],
            "no_northampton": ["closed · 0", "closed · 0"],
        }
    )
    con, buf = _piped()
    print_dc_matrix(matrix, console=con)
    lines = [ln for ln in buf.getvalue().splitlines() if "DC_NORTHAMPTON" in ln]
    assert len(lines) == 2 and "2028" in lines[1] and "opens · 338,421" in lines[1]
