"""User text reaches the terminal and the report's charts as written: no markup, no TeX, no traceback.

Facts checked (common practice, no source): rich reads "[...]" as console markup and matplotlib reads
"$...$" as mathtext; a site code or currency holding them must be shown literally, and the HTML
report must escape them (the browser reads "<" as markup).
"""

from __future__ import annotations

import io

import pytest
from casekit import make_case_dir, tiny_rows
from rich.console import Console

from netopt.data.io import load_case
from netopt.engine.solve import solve
from netopt.present.report import write_report
from netopt.present.terminal import print_result

DC_CODE = "DC_ZARAGOZA[/bold]"
CUSTOMER_CODE = "[red]x $x^$"
CURRENCY = "$\\frac$[/]"


def _renamed_case(tmp_path, dc: str, customer: str, currency: str):
    rows = tiny_rows()
    for r in rows["dcs"]:
        if r["dc"] == "DC-PAR":
            r["dc"] = dc
    for table in ("customers", "demand"):
        for r in rows[table]:
            if r["customer"] == "CU-BRU":
                r["customer"] = customer
    return make_case_dir(
        tmp_path, settings={"case": {"name": "hostile [link=file:///etc]", "currency": currency}}, **rows
    )


@pytest.fixture(scope="module")
def hostile_result(tmp_path_factory):
    case = load_case(_renamed_case(tmp_path_factory.mktemp("hostile"), DC_CODE, CUSTOMER_CODE, CURRENCY))
    r = solve(case)
    assert r.has_solution
    return r


def test_terminal_summary_shows_markup_literally(hostile_result):
    out = io.StringIO()
    print_result(hostile_result, console=Console(file=out, width=200, highlight=False))
    text = out.getvalue()
    assert DC_CODE in text
    assert "hostile [link=file:///etc]" in text
    assert CURRENCY in text  # in the cost table's title and the indicators' units


def test_no_plan_prints_why_as_written():
    """A result without a plan prints its message (e.g. HiGHS's refusal), markup in it shown literally."""
    from netopt.engine.result import Result

    r = Result("c[/b]", "error", float("nan"), float("nan"), float("inf"), message="HiGHS rejected [/bold] x")
    out = io.StringIO()
    print_result(r, console=Console(file=out, width=200))
    assert "c[/b]: error" in out.getvalue() and "HiGHS rejected [/bold] x" in out.getvalue()


def test_report_with_tex_currency_and_dollar_codes_renders(hostile_result, tmp_path):
    path = write_report(hostile_result, tmp_path / "report.html")
    html = path.read_text(encoding="utf-8")
    assert "<svg" in html
    assert "[/bold]" in html and "&lt;" not in DC_CODE
    assert CURRENCY in html  # the currency, as written


def test_html_in_a_name_is_escaped_in_the_report(tmp_path):
    case = load_case(_renamed_case(tmp_path, "DC<b>\"q'</b>", "CU<script>alert(1)</script>", "EUR"))
    r = solve(case)
    html = write_report(r, tmp_path / "report.html").read_text(encoding="utf-8")
    assert "<script>alert(1)</script>" not in html
    assert 'DC<b>"q' not in html
    assert "DC&lt;b&gt;" in html  # shown, escaped (tables and SVG text)


@pytest.mark.parametrize("currency", ["$\\frac$", "$x^$", "$"])
def test_charts_draw_tex_looking_currency_and_names_as_written(currency):
    """The run report's cost bars, the frontier and the stress ranking put the currency in an axis
    label and names in tick labels; mathtext raised on "$\\frac$" and nothing was written."""
    import pandas as pd

    from netopt.present.report.charts import cost_bars_svg, frontier_svg, ranking_svg

    svg = cost_bars_svg(["base", "lost $x^$ [hold]"], [{"supply": 10.0}, {"supply": 12.0}], currency)
    assert "<svg" in svg and currency in svg
    frontier = pd.DataFrame({"point": [0, 1], "co2_t": [5.0, 3.0], "total_cost": [100.0, 120.0]})
    assert currency in frontier_svg(frontier, currency)
    ranking = pd.DataFrame({"element": ["DC $\\frac$", "lane a-b"], "impact": [50.0, 20.0]})
    svg = ranking_svg(ranking, currency)
    assert currency in svg and "DC $\\frac$" in svg
