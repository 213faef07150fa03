"""Loading and writing cases: CSV folders, workbooks, settings, scenarios, row numbers.

Row numbers are checked against the file text or the workbook as openpyxl reads it
(independently of netopt's reader); settings against Python's own TOML parser.
"""

from __future__ import annotations

import math

import openpyxl
import pandas as pd
import pytest
import tomllib
from casekit import TINY, TINY_SETTINGS, make_case_dir, tiny_rows, write_rows
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pandas.testing import assert_frame_equal

from netopt import Case, CaseError, load_case
from netopt.data.io import case_from_tables
from netopt.data.schema import TABLES
from netopt.data.settings_schema import SETTINGS, setting_defaults
from netopt.data.writing import settings_toml, write_case_csv, write_case_workbook


def errors_of(path):
    with pytest.raises(CaseError) as info:
        load_case(path)
    return info.value.problems


def find(problems, table, row, column, text=None):
    hits = [
        p
        for p in problems
        if (p.table, p.row, p.column) == (table, row, column) and (text is None or text in p.message)
    ]
    assert hits, f"no problem at {table}/{row}/{column} ~ {text!r}; got:\n" + "\n".join(map(str, problems))
    return hits[0]


def assert_same_case(a: Case, b: Case):
    assert set(a.tables) == set(b.tables) == set(TABLES)
    for name in TABLES:
        assert_frame_equal(a.tables[name], b.tables[name], check_index_type=False, obj=name)
    assert a.settings == b.settings
    assert a.name == b.name


# --------------------------------------------------------------------------- loading a folder


def test_load_types_defaults_and_row_numbers(tiny_case_dir):
    case = load_case(tiny_case_dir)
    assert isinstance(case, Case) and case.path == tiny_case_dir
    for name, t in TABLES.items():
        assert list(case.tables[name].columns) == t.column_names
    demand = case.tables["demand"]
    assert list(demand.index) == [2, 3, 4]  # header = line 1, first data row = line 2
    assert demand["quantity"].tolist() == [1000.0, 200.0, 500.0]
    sup = case.tables["suppliers"]
    assert sup.loc[2, "capacity"] == math.inf  # blank capacity = no limit
    assert sup.loc[3, "lead_time_sd_days"] == 0.0  # blank → schema default
    prods = case.tables["products"]
    assert math.isnan(prods.loc[2, "holding_rate"])  # optional, no default: stays blank
    modes = case.tables["modes"]
    assert modes["generate_lanes"].tolist() == [True, True]  # "true" and "yes"
    assert modes["generate_lanes"].dtype == bool
    assert case.tables["customers"].loc[3, "service_class"] == "standard"  # blank → default
    assert case.tables["dc_sizes"].empty and case.tables["lanes"].empty


def test_settings_defaults_filled(tiny_case_dir):
    case = load_case(tiny_case_dir)
    defaults = setting_defaults()
    assert set(case.settings) == set(defaults)
    for s in SETTINGS:
        expected = TINY_SETTINGS.get(s.section, {}).get(s.name, s.default)
        assert case.settings[s.section][s.name] == expected, (s.section, s.name)
    assert case.name == "tiny"


def test_case_name_falls_back_to_folder(tmp_path):
    case = load_case(make_case_dir(tmp_path, name="north-sea", settings={"case": {"name": ""}}))
    assert case.name == "north-sea"


def test_bom_whitespace_crlf_and_trailing_rows(tmp_path):
    text = (
        "\ufeff customer , product,quantity ,demand_cv\r\n"
        "CU-BRU ,  widget,1000,\r\n"
        " CU-BRU,gadget , 200 ,0.5\r\n"
        "CU-MUC,widget,500,\r\n"
        ",,,\r\n"
        "\r\n"
        ",,,\r\n"
    )
    case = load_case(make_case_dir(tmp_path, demand=text))
    d = case.tables["demand"]
    assert list(d.index) == [2, 3, 4]
    assert d["customer"].tolist() == ["CU-BRU", "CU-BRU", "CU-MUC"]
    assert d["product"].tolist() == ["widget", "gadget", "widget"]
    assert d["quantity"].tolist() == [1000.0, 200.0, 500.0]


def test_blank_lines_keep_file_line_numbers(tmp_path):
    text = "customer,product,quantity\nCU-BRU,widget,1000\n\n\nCU-BRU,gadget,200\n,,\nCU-MUC,widget,oops\n"
    folder = make_case_dir(tmp_path, demand=text)
    # the line of 'oops' counted in the text itself
    line = text.split("oops")[0].count("\n") + 1
    assert line == 7
    find(errors_of(folder), "demand", line, "quantity", "'oops'")


def test_quoted_cell_over_two_lines_is_located_at_its_first_line(tmp_path):
    text = 'customer,product,quantity,demand_cv\nCU-BRU,widget,1000,\n"CU-\nBRU",gadget,bad,\nCU-MUC,widget,-4,\n'
    probs = errors_of(make_case_dir(tmp_path, demand=text))
    find(probs, "demand", 3, "quantity", "'bad'")
    find(probs, "demand", 5, "quantity", "at least 0")  # after the two-line record


def test_extra_values_beyond_header(tmp_path):
    text = "customer,product,quantity\nCU-BRU,widget,1000\nCU-BRU,gadget,200,7,8\nCU-MUC,widget,500,,\n"
    probs = errors_of(make_case_dir(tmp_path, demand=text))
    p = find(probs, "demand", 3, None, "5 values")
    assert "3 columns" in p.message
    assert not [q for q in probs if q.row == 4]  # trailing empty cells are fine


def test_duplicate_header_column(tmp_path):
    text = "customer,product,quantity,quantity\nCU-BRU,widget,1000,1\n"
    find(errors_of(make_case_dir(tmp_path, demand=text)), "demand", None, "quantity", "more than once")


def test_not_utf8(tmp_path):
    folder = make_case_dir(tmp_path)
    (folder / "customers.csv").write_bytes("customer,lat,lon\nK\xf6ln,50.94,6.96\n".encode("latin-1"))
    find(errors_of(folder), "customers", 2, None, "not UTF-8")


def test_nul_byte(tmp_path):
    folder = make_case_dir(tmp_path)
    (folder / "customers.csv").write_bytes(b"customer,lat,lon\nCU\x00-BRU,50.85,4.35\n")
    find(errors_of(folder), "customers", 2, "customer", "control character (code 0)")


def test_empty_file_has_no_header(tmp_path):
    find(errors_of(make_case_dir(tmp_path, plants="")), "plants", None, None, "no header")


def test_unknown_csv_file_is_a_warning(tmp_path):
    folder = make_case_dir(tmp_path)
    write_rows(folder / "demands.csv", TINY["demand"])
    case = load_case(folder)
    w = find(case.warnings, "demands.csv", None, None, "unknown table file")
    assert "demand.csv" in w.message


def test_missing_settings_file_uses_defaults(tmp_path):
    case = load_case(make_case_dir(tmp_path, settings=None))
    find(case.warnings, "settings.toml", None, None, "takes its default")
    assert case.settings == setting_defaults()


def test_toml_syntax_error_names_the_line(tmp_path):
    text = '[case]\nname = "x"\n[solver]\ntime_limit_s = = 3\n'
    with pytest.raises(tomllib.TOMLDecodeError) as ref:  # Python's own parser agrees it is broken
        tomllib.loads(text)
    p = find(errors_of(make_case_dir(tmp_path, settings=text)), "settings.toml", 4, None, "not valid TOML")
    assert str(ref.value) in p.message


def test_scenarios_kept_raw(tmp_path):
    text = (
        '[[scenario]]\nname = "no Paris"\nclose = ["DC-PAR"]\n\n'
        '[[scenario]]\nname = "demand +10%"\ndemand_factor = 1.1\n[scenario.settings]\nmip_gap = 0.01\n'
    )
    case = load_case(make_case_dir(tmp_path, scenarios=text))
    assert case.scenarios == tomllib.loads(text)["scenario"]


def test_bad_scenarios_file(tmp_path):
    find(errors_of(make_case_dir(tmp_path, scenarios="scenario = 3\n")), "scenarios.toml", None, "[[scenario]]")


def test_missing_path_and_wrong_file_kind(tmp_path):
    find(errors_of(tmp_path / "nothing"), str(tmp_path / "nothing"), None, None, "no such")
    f = tmp_path / "case.csv"
    f.write_text("a,b\n")
    find(errors_of(f), "case.csv", None, None, ".xlsx workbook")


def test_broken_workbook(tmp_path):
    f = tmp_path / "case.xlsx"
    f.write_bytes(b"this is not a zip file")
    find(errors_of(f), "case.xlsx", None, None, "cannot read the workbook")


def test_case_from_tables_accepts_text_frames():
    tables = {name: pd.DataFrame(rows, index=range(2, 2 + len(rows))) for name, rows in TINY.items()}
    case = case_from_tables(tables, TINY_SETTINGS, name="mem")
    assert case.name == "tiny" and case.tables["demand"]["quantity"].sum() == 1700.0
    tables["demand"] = tables["demand"].assign(quantity=["1", "x", "3"])
    with pytest.raises(CaseError) as info:
        case_from_tables(tables, TINY_SETTINGS)
    find(info.value.problems, "demand", 3, "quantity", "'x'")


# --------------------------------------------------------------------------- workbooks


def _workbook(path, sheets: dict[str, list[list]]):
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, grid in sheets.items():
        ws = wb.create_sheet(name)
        for r, row in enumerate(grid, start=1):
            for c, v in enumerate(row, start=1):
                if v is not None:
                    ws.cell(row=r, column=c, value=v)
    wb.save(path)
    return path


def _tiny_sheets():
    sheets = {}
    for name, rows in TINY.items():
        cols = list(rows[0])
        sheets[name] = [cols] + [[r[c] if r[c] != "" else None for c in cols] for r in rows]
    sheets["settings"] = [
        ["section", "name", "value"],
        ["case", "name", "tiny wb"],
        ["solver", "threads", 2],
        ["policy", "single_sourcing", True],
        ["lanes", "legs", "plant-dc|dc-customer|supplier-dc|supplier-plant|plant-customer"],
    ]
    return sheets


def test_workbook_loads_with_sheet_rows_and_typed_cells(tmp_path):
    sheets = _tiny_sheets()
    # numbers as numbers (openpyxl writes them as numeric cells), a blank row in the middle
    sheets["demand"] = [
        ["customer", "product", "quantity"],
        ["CU-BRU", "widget", 1000],
        [None, None, None],
        ["CU-BRU", "gadget", 200.0],
        ["CU-MUC", "widget", "lots"],
    ]
    path = _workbook(tmp_path / "case.xlsx", sheets)
    probs = errors_of(path)
    # locate 'lots' with openpyxl itself
    ws = openpyxl.load_workbook(path)["demand"]
    row = next(c.row for r in ws.iter_rows() for c in r if c.value == "lots")
    assert row == 5
    find(probs, "demand", row, "quantity", "'lots'")
    sheets["demand"][4][2] = 500
    case = load_case(_workbook(tmp_path / "case2.xlsx", sheets))
    assert list(case.tables["demand"].index) == [2, 4, 5]
    assert case.name == "tiny wb" and case.settings["solver"]["threads"] == 2
    assert case.settings["policy"]["single_sourcing"] is True
    assert case.settings["lanes"]["legs"][:2] == ["plant-dc", "dc-customer"]


def test_workbook_settings_problem_names_sheet_row_and_entry(tmp_path):
    sheets = _tiny_sheets()
    sheets["settings"] += [["solver", "mip_gap", "tiny"], ["solver", "mip_gap", 0.1], ["nowhere", "x", 1]]
    path = _workbook(tmp_path / "case.xlsx", sheets)
    with pytest.raises(CaseError) as info:
        load_case(path)
    find(info.value.problems, "settings", 6, "[solver] mip_gap", "number expected, got 'tiny'")
    find(info.value.problems, "settings", 7, "name", "given twice")
    find(info.value.warnings, "settings", None, "[nowhere]", "unknown section")


def test_workbook_unknown_sheet_warns_schema_sheet_is_ignored_and_scenarios_sheet_is_read(tmp_path):
    sheets = _tiny_sheets()
    sheets["custmers"] = [["customer"]]
    sheets["schema"] = [["table", "column"], ["x", "y"]]
    sheets["scenarios"] = [["scenario", "kind"], ["a", ""]]
    case = load_case(_workbook(tmp_path / "case.xlsx", sheets))
    w = find(case.warnings, "custmers", None, None, "unknown sheet")
    assert "customers" in w.message
    assert not [p for p in case.warnings if p.table in ("schema", "scenarios")]
    assert case.scenarios == [{"name": "a", "change": []}]


# --------------------------------------------------------------------------- writing and round trips


def test_round_trip_csv_folder_workbook_and_back(tiny_case_dir, tmp_path):
    first = load_case(tiny_case_dir)
    book = write_case_workbook(first, tmp_path / "out" / "tiny.xlsx")
    second = load_case(book)
    assert_same_case(first, second)
    # the workbook as openpyxl sees it: one sheet per written table plus settings
    names = openpyxl.load_workbook(book).sheetnames
    assert names == [n for n in TABLES if n in TINY] + ["settings"]
    folder = write_case_csv(second, tmp_path / "again")
    third = load_case(folder)
    assert_same_case(first, third)


def test_written_settings_parse_with_tomllib(tiny_case_dir):
    case = load_case(tiny_case_dir)
    text = settings_toml(case.settings, comments=True)
    assert tomllib.loads(text) == case.settings  # Python's TOML parser reads back every value


NUM = st.floats(min_value=0, max_value=1e12, allow_nan=False, allow_infinity=False)


@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture]
)
@given(
    weights=st.lists(NUM, min_size=3, max_size=3),
    caps=st.lists(st.one_of(NUM, st.just(math.inf)), min_size=3, max_size=3),
    codes=st.lists(
        st.text(
            alphabet=st.characters(
                min_codepoint=33,
                max_codepoint=0x2FFF,
                blacklist_categories=("Cc", "Cs", "Zs", "Zl", "Zp"),
                blacklist_characters=',"|',
            ),
            min_size=1,
            max_size=8,
        ),
        min_size=2,
        max_size=2,
        unique=True,
    ),
)
def test_round_trip_keeps_every_value(tmp_path_factory, weights, caps, codes):
    """Any float (written as the shortest repr) and any code survive CSV → workbook → CSV."""
    rows = tiny_rows()
    for r, w in zip(rows["products"], weights):
        r["unit_weight_kg"] = repr(w)
    for r, c in zip(rows["suppliers"], caps):
        r["capacity"] = "" if c == math.inf else repr(c)
    old = ["CU-BRU", "CU-MUC"]
    for t in ("customers", "demand"):
        for r in rows[t]:
            r["customer"] = codes[old.index(r["customer"])]
    codes_set = set(codes)
    if codes_set & {"ORE-N", "ORE-S", "GAD-CO", "PL-LYON", "DC-PAR", "DC-FRA"}:
        return
    base = tmp_path_factory.mktemp("rt")
    first = load_case(make_case_dir(base, **rows))
    assert first.tables["products"]["unit_weight_kg"].tolist() == weights
    second = load_case(write_case_workbook(first, base / "b.xlsx"))
    third = load_case(write_case_csv(second, base / "c"))
    assert_same_case(first, second)
    assert_same_case(first, third)


def test_write_refuses_to_overwrite(tiny_case_dir, tmp_path):
    case = load_case(tiny_case_dir)
    with pytest.raises(FileExistsError):
        write_case_csv(case, tiny_case_dir)
    out = write_case_csv(case, tmp_path / "copy")
    (out / "marker.txt").write_text("x")
    write_case_csv(case, out, overwrite=True)
    assert not (out / "marker.txt").exists() and (out / "demand.csv").exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no temp folder left behind
    book = write_case_workbook(case, tmp_path / "c.xlsx")
    with pytest.raises(FileExistsError):
        write_case_workbook(case, book)


def test_scenarios_written_and_read_back(tmp_path):
    scen = [{"name": "no Paris", "close": ["DC-PAR"], "factor": 1.1, "settings": {"mip_gap": 0.01}}]
    case = load_case(make_case_dir(tmp_path, scenarios=scen))
    assert case.scenarios == scen
    assert load_case(write_case_csv(case, tmp_path / "out")).scenarios == scen
