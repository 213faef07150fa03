"""The Excel workbook of results: sheets, formats, and text that never turns into a formula."""

from __future__ import annotations

import math
import zipfile
from pathlib import Path
from xml.etree import ElementTree

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from netopt.present.files import write_result, write_run, write_workbook

MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"

# Text a spreadsheet program would run as a formula: a leading =, +, -, @ (and tab / CR before one).
# Sources: OWASP ASVS 4.0.3 requirement 5.3.10 / ASVS 5 requirement 1.2.10 ("=", "+", "-", "@", tab, null as a
# field's first character must be escaped in CSV, XLS, XLSX and ODF exports); MITRE CWE-1236.
HOSTILE = ['=HYPERLINK("http://example.invalid/x","click")', "+1+1", "-2+3", "@SUM(1,1)", "=1+1", "\t=1+1", "\r=1+1"]


def raw_sheets(path: Path) -> dict[str, ElementTree.Element]:
    """Each worksheet's XML as stored in the file (ECMA-376 SpreadsheetML, read without openpyxl)."""
    with zipfile.ZipFile(path) as z:
        return {n: ElementTree.fromstring(z.read(n)) for n in z.namelist() if n.startswith("xl/worksheets/sheet")}


def formula_elements(path: Path) -> int:
    # In SpreadsheetML a formula is an <f> element inside a cell <c>; a string cell holds <is>/<t> or a
    # shared-string index and no <f> (ECMA-376 Part 1, §18.3.1.4 c and §18.3.1.40 f; from memory).
    return sum(len(root.findall(f".//{MAIN}c/{MAIN}f")) for root in raw_sheets(path).values())


def quote_prefixed_styles(path: Path) -> set[int]:
    """Indices of cell formats (cellXfs) with quotePrefix="1" in styles.xml."""
    with zipfile.ZipFile(path) as z:
        root = ElementTree.fromstring(z.read("xl/styles.xml"))
    xfs = root.find(f"{MAIN}cellXfs")
    return {i for i, xf in enumerate(xfs) if xf.get("quotePrefix") in ("1", "true")}


@pytest.fixture
def hostile_book(tmp_path):
    df = pd.DataFrame({"site": HOSTILE, "total_cost": np.arange(len(HOSTILE), dtype=float) * 1000.5})
    path = tmp_path / "hostile.xlsx"
    write_workbook({"sites": df, "=header": pd.DataFrame({"=1+1": ["x"]})}, path, notes="=NOTE()\nplain")
    return path


def test_formula_like_text_comes_back_as_the_same_text(hostile_book):
    wb = load_workbook(hostile_book)
    ws = wb["sites"]
    for i, text in enumerate(HOSTILE, start=2):
        cell = ws.cell(row=i, column=1)
        # Unchanged: no apostrophe added to the content. An XML parser reads a stored CR as LF (W3C XML 1.0,
        # §2.11 End-of-Line Handling), so only that character may differ.
        assert cell.value == text.replace("\r", "\n")
        assert cell.data_type == "s"  # a string cell, not a formula ("f")
    assert wb["=header"].cell(row=1, column=1).value == "=1+1"
    assert wb["about"].cell(row=1, column=1).value == "=NOTE()"


def test_no_formula_is_stored_in_the_file(hostile_book):
    assert formula_elements(hostile_book) == 0


def test_formula_like_text_is_quote_prefixed(hostile_book):
    # Excel and LibreOffice keep a quote-prefixed cell as text even when it is edited (the stored form of a
    # leading apostrophe typed into a cell; see libxlsxwriter issue #385, "Add support for quotePrefix").
    prefixed = quote_prefixed_styles(hostile_book)
    sheets = raw_sheets(hostile_book)
    wb = load_workbook(hostile_book)
    names = {ws.title: f"xl/worksheets/sheet{k}.xml" for k, ws in enumerate(wb.worksheets, start=1)}
    root = sheets[names["sites"]]
    cells = {c.get("r"): int(c.get("s", "0")) for c in root.iter(f"{MAIN}c")}
    for i in range(2, 2 + len(HOSTILE)):
        assert cells[f"A{i}"] in prefixed, f"A{i} is not quote-prefixed"
    assert cells["B2"] not in prefixed  # numbers are left alone


def test_control_characters_are_dropped_not_fatal(tmp_path):
    # XML 1.0 cannot hold most C0 control characters (W3C XML 1.0, §2.2 Char); openpyxl refuses them.
    path = tmp_path / "ctl.xlsx"
    write_workbook({"t": pd.DataFrame({"site": ["A\x07B", "\x00=1+1"]})}, path)
    ws = load_workbook(path)["t"]
    assert [ws["A2"].value, ws["A3"].value] == ["AB", "=1+1"]
    assert formula_elements(path) == 0


def test_formats_header_freeze_and_widths(tmp_path):
    # A comparison sheet: each column formatted by its declared unit (netopt.data.results_schema).
    df = pd.DataFrame(
        {
            "scenario": ["C1", "C2"],
            "total_cost": [1234567.25, 89.0],
            "share_within_window": [0.9876, 1.0],
            "avg_transit_days": [1.4137, 2.0],
            "lost_units": [np.inf, np.nan],
            "verified": [True, False],
            "not_declared": [1.5, 2.5],
        }
    )
    path = tmp_path / "f.xlsx"
    write_workbook({"comparison": df, "again": df}, path, currency="EUR", tables={"again": "comparison"})
    for sheet in ("comparison", "again"):
        ws = load_workbook(path)[sheet]
        assert ws.freeze_panes == "A2"
        assert all(ws.cell(row=1, column=j).font.b for j in range(1, 8))
        # Excel number-format codes (ECMA-376 Part 1, §18.8.31 numFmts; from memory): thousands separators,
        # a literal currency suffix, percent with one decimal, two decimals with a literal " d".
        assert ws["B2"].number_format == '#,##0" EUR"' and ws["B2"].value == 1234567.25
        assert ws["C2"].number_format == "0.0%" and ws["C2"].value == pytest.approx(0.9876)
        assert ws["D2"].number_format == '0.00" d"'
        assert ws["E2"].value == "no limit" and ws["E3"].value is None  # infinity and NaN: no #NUM! in Excel
        assert ws["F2"].value is True
        assert ws["G2"].number_format == "General"  # a column the schema does not declare is left alone
        assert ws.column_dimensions["B"].width >= len("1,234,567.25 EUR")
        assert ws.column_dimensions["A"].width >= 9


def test_values_not_formulas_and_per_unit_formats_for_indicators(tmp_path):
    kpis = pd.DataFrame(
        {
            "kpi": [
                "total_landed_cost",
                "share_within_service_window",
                "avg_transit_days_to_customer",
                "cost_per_unit_delivered",
            ],
            "value": [70032930.0, 0.9895, 1.41, 37.86],
            "unit": ["currency/yr", "share of delivered units", "days (demand-weighted)", "currency/unit"],
        }
    )
    path = tmp_path / "k.xlsx"
    write_workbook({"kpis": kpis}, path, currency="EUR")
    ws = load_workbook(path)["kpis"]
    assert [ws.cell(row=i, column=2).number_format for i in range(2, 6)] == [
        '#,##0" EUR"',
        "0.0%",
        '0.00" d"',
        "#,##0.00",
    ]
    assert formula_elements(path) == 0


def test_sheet_names_are_made_valid_and_unique(tmp_path):
    # Excel sheet names: at most 31 characters, none of : \ / ? * [ ] (common practice, no source).
    path = tmp_path / "n.xlsx"
    long = "a_very_long_table_name_that_goes_on_and_on"
    write_workbook(
        {
            long: pd.DataFrame({"x": [1]}),
            long + "_2": pd.DataFrame({"x": [2]}),
            "what/if?[1]": pd.DataFrame({"x": [3]}),
        },
        path,
    )
    names = load_workbook(path).sheetnames
    assert len(names) == len({n.lower() for n in names}) == 3
    assert all(len(n) <= 31 and not set(n) & set(":\\/?*[]") for n in names)


# ----------------------------------------------------------------------------- from a solve and a run


@pytest.fixture(scope="module")
def seeded_run(tmp_path_factory):
    """The tiny case with a customer code that a spreadsheet would run, solved with one scenario."""
    from casekit import make_case_dir, tiny_rows

    from netopt.data.io import load_case
    from netopt.studies.scenarios import run_scenarios

    rows = tiny_rows()
    for table in ("customers", "demand"):
        for r in rows[table]:
            if r["customer"] == "CU-BRU":
                r["customer"] = HOSTILE[0]
    scen = '[[scenario]]\nname = "demand_up"\n  [[scenario.change]]\n  kind = "scale_demand"\n  factor = 1.1\n'
    case = load_case(make_case_dir(tmp_path_factory.mktemp("wb"), scenarios=scen, **rows))
    return run_scenarios(case)


def test_run_workbook_has_the_expected_sheets_and_keeps_the_site_name_as_text(seeded_run, tmp_path):
    out = write_run(seeded_run, tmp_path / "run", report=False)
    path = out / "results.xlsx"
    wb = load_workbook(path)
    expected = ["about", "comparison", "dc_decisions", "supplier_share_changes", "mode_mix_changes"] + [
        f"base_{k}" for k in seeded_run.base.tables
    ]
    assert wb.sheetnames[: len(expected)] == expected
    ws = wb["base_service"]
    head = [c.value for c in ws[1]]
    col = head.index("customer") + 1
    names = [ws.cell(row=i, column=col) for i in range(2, ws.max_row + 1)]
    hit = [c for c in names if c.value == HOSTILE[0]]
    assert hit and all(c.data_type == "s" for c in hit)
    assert formula_elements(path) == 0
    # Values, not formulas, and they are the run's numbers.
    comp = wb["comparison"]
    head = [c.value for c in comp[1]]
    tc = head.index("total_cost") + 1
    assert [comp.cell(row=i, column=tc).value for i in range(2, comp.max_row + 1)] == pytest.approx(
        list(seeded_run.comparison["total_cost"])
    )
    assert comp.cell(row=2, column=tc).number_format == '#,##0" EUR"'


def test_single_solve_workbook(seeded_run, tmp_path):
    out = write_result(seeded_run.base, tmp_path / "one")
    path = out / "results.xlsx"
    wb = load_workbook(path)
    for name in seeded_run.base.tables:
        assert name in wb.sheetnames
    cost = wb["cost"]
    got = {cost.cell(row=i, column=1).value: cost.cell(row=i, column=2).value for i in range(2, cost.max_row + 1)}
    assert got == pytest.approx(seeded_run.base.cost)
    assert math.isclose(sum(got.values()), sum(seeded_run.base.cost.values()))
    assert formula_elements(path) == 0
