"""Resource limits and hostile input at the reading layer: every bad input is a clean CaseError naming where.

Checked against the limits stated in ``netopt/data/limits.py`` and the file formats' own readers (openpyxl,
zipfile, tomllib); the size thresholds are common practice, no source.
"""

from __future__ import annotations

import shutil
import time
import zipfile
from pathlib import Path

import openpyxl
import pytest
from casekit import make_case_dir, tiny_rows

from netopt import CaseError, load_case
from netopt.data.case import Problem
from netopt.data.limits import (
    MAX_CELL_CHARS,
    MAX_CSV_FILE_BYTES,
    MAX_ERRORS_PER_COLUMN,
    MAX_MAGNITUDE,
    MAX_PRINTED_PROBLEMS,
    MAX_TABLE_ROWS,
    MAX_WORKBOOK_UNCOMPRESSED_BYTES,
)
from netopt.data.schema import TABLES
from netopt.data.settings_schema import SETTINGS
from netopt.data.writing import write_case_workbook

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"


def problems_of(path) -> CaseError:
    with pytest.raises(CaseError) as info:
        load_case(path)
    return info.value


def find(problems, table, row, column, text=None) -> Problem:
    hits = [
        p
        for p in problems
        if (p.table, p.row, p.column) == (table, row, column) and (text is None or text in p.message)
    ]
    assert hits, f"no problem at {table}/{row}/{column} ~ {text!r}; got:\n" + "\n".join(map(str, problems))
    return hits[0]


def settings_text(extra: str) -> str:
    return "[case]\nname = 'tiny'\n" + extra


# --------------------------------------------------------------------------- counts in settings (defect 3)


def test_every_count_and_time_setting_states_a_maximum():
    for s in SETTINGS:
        if s.type in ("int", "float"):
            assert s.max is not None, f"[{s.section}] {s.name} has no maximum"
    ints = {s.name: s.max for s in SETTINGS if s.type == "int"}
    assert ints["threads"] <= 256 and ints["safety_stock_breakpoints"] <= 200
    times = {s.name: s.max for s in SETTINGS if s.name == "time_limit_s"}
    assert times["time_limit_s"] <= 1e7


@pytest.mark.parametrize(
    "section, name, value",
    [
        ("inventory", "safety_stock_breakpoints", "1000000"),
        ("solver", "threads", "100000"),
        ("solver", "time_limit_s", "1e9"),
        ("policy", "min_active_suppliers", "1000000000"),
        ("policy", "max_open_dcs", "10000000000"),
    ],
)
def test_a_count_setting_beyond_its_maximum_is_an_error_naming_it(tmp_path, section, name, value):
    folder = make_case_dir(tmp_path, settings=settings_text(f"[{section}]\n{name} = {value}\n"))
    p = find(problems_of(folder).problems, "settings.toml", None, f"[{section}] {name}", "must be")
    assert "at most" in p.message or "between" in p.message


# --------------------------------------------------------------------------- numbers too large (defect 4)


@pytest.mark.parametrize(
    "line, column",
    [
        ("[solver]\nmip_gap = 1" + "0" * 400, "[solver] mip_gap"),
        ("[solver]\nthreads = 1" + "0" * 400, "[solver] threads"),
        ("[solver]\ntime_limit_s = -1" + "0" * 400, "[solver] time_limit_s"),
        ("[case]\ncurrency = '" + "x" * 20_000 + "'", "[case] currency"),
        ("[lanes]\nlegs = [1" + "0" * 400 + "]", "[lanes] legs"),
        ("[solver]\nmip_gap = [0.1]", "[solver] mip_gap"),
        ("[solver]\nmip_gap = {a = 1}", "[solver] mip_gap"),
        ("[solver]\nmip_gap = 1979-05-27", "[solver] mip_gap"),
        ("[solver]\nthreads = 1e400", "[solver] threads"),
    ],
)
def test_a_setting_too_large_or_of_the_wrong_kind_is_an_error_naming_it(tmp_path, line, column):
    folder = make_case_dir(tmp_path, settings=line + "\n")
    errors = problems_of(folder).problems
    find(errors, "settings.toml", None, column)


def test_a_toml_integer_with_more_digits_than_python_reads_is_a_toml_error(tmp_path):
    folder = make_case_dir(tmp_path, settings="[solver]\nthreads = 1" + "0" * 5000 + "\n")
    find(problems_of(folder).problems, "settings.toml", None, None, "not valid TOML")


@pytest.mark.parametrize("text", ["1e400", "9" * 400, "1e15", "-1e400"])
def test_demand_beyond_the_largest_number_is_an_error_naming_the_cell(tmp_path, text):
    rows = tiny_rows()
    rows["demand"][0]["quantity"] = text
    find(problems_of(make_case_dir(tmp_path, **rows)).problems, "demand", 2, "quantity")


def test_absurd_magnitudes_in_any_number_column_are_refused(tmp_path):
    rows = tiny_rows()
    rows["bill_of_materials"][0]["quantity_per_unit"] = "1e308"
    rows["dcs"][0]["fixed_cost"] = "1e13"
    rows["suppliers"][0]["capacity"] = "9" * 400  # overflows to infinity: not the word 'inf'
    errors = problems_of(make_case_dir(tmp_path, **rows)).problems
    find(errors, "bill_of_materials", 2, "quantity_per_unit")
    find(errors, "dcs", 2, "fixed_cost", "at most 1000000000000 currency/year")
    find(errors, "suppliers", 2, "capacity", "too large")


def test_every_number_column_states_a_maximum_and_no_limit_still_reads():
    for t in TABLES.values():
        for c in t.columns:
            if c.type in ("int", "float"):
                assert c.max is not None and c.max <= MAX_MAGNITUDE, (t.name, c.name)


def test_blank_and_inf_capacity_still_mean_no_limit_and_the_demo_validates(tmp_path):
    rows = tiny_rows()
    rows["suppliers"][0]["capacity"] = "inf"
    rows["suppliers"][1]["capacity"] = ""
    case = load_case(make_case_dir(tmp_path, **rows))
    assert case.tables["suppliers"]["capacity"].iloc[:2].tolist() == [float("inf")] * 2
    load_case(DEMO)


# --------------------------------------------------------------------------- headers that nearly match (defect 6)


@pytest.mark.parametrize(
    "header",
    ["Capacity", "CAPACITY", "capa city", "capacity\u200b", "cap\u200bacity", "\u00a0Capacity", "\ufeffcapacity"],
)
def test_a_header_differing_from_a_column_only_in_case_spacing_or_invisibles_is_an_error(tmp_path, header):
    rows = tiny_rows()
    for r in rows["suppliers"]:
        r[header] = r.pop("capacity")
    p = find(problems_of(make_case_dir(tmp_path, **rows)).problems, "suppliers", None, header.strip())
    assert "'capacity'" in p.message


def test_underscore_versus_space_header_is_an_error_naming_the_column(tmp_path):
    rows = tiny_rows()
    for r in rows["suppliers"]:
        r["lead time sd days"] = r.pop("lead_time_sd_days")
    p = find(problems_of(make_case_dir(tmp_path, **rows)).problems, "suppliers", None, "lead time sd days")
    assert "'lead_time_sd_days'" in p.message


def test_an_unknown_column_resembling_nothing_stays_a_warning(tmp_path):
    rows = tiny_rows()
    for r in rows["suppliers"]:
        r["notes"] = "x"
    case = load_case(make_case_dir(tmp_path, **rows))
    find(case.warnings, "suppliers", None, "notes", "unknown column")


def _tiny_workbook(tmp_path) -> Path:
    return write_case_workbook(load_case(make_case_dir(tmp_path / "src")), tmp_path / "case.xlsx")


def test_a_workbook_header_differing_only_in_case_is_an_error(tmp_path):
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book)
    ws = wb["suppliers"]
    cell = next(c for c in ws[1] if c.value == "capacity")
    cell.value = "Capacity"
    wb.save(book)
    p = find(problems_of(book).problems, "suppliers", None, "Capacity")
    assert "'capacity'" in p.message


def test_two_sheets_of_one_name_but_for_spaces_are_an_error(tmp_path):
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book)
    wb.copy_worksheet(wb["demand"]).title = " demand "
    wb.save(book)
    find(problems_of(book).problems, "demand", None, None, "two sheets")


# --------------------------------------------------------------------------- formulas in workbooks (defect 6)


def test_formula_cells_in_input_sheets_are_refused_cell_by_cell(tmp_path):
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book)
    ws = wb["demand"]
    col = next(c.column for c in ws[1] if c.value == "quantity")
    ws.cell(row=2, column=col).value = "=999999"
    st = wb["settings"]
    row = next(r[0].row for r in st.iter_rows(min_row=2) if r[1].value == "mip_gap")
    st.cell(row=row, column=3).value = "=1/1000"
    wb.save(book)
    errors = problems_of(book).problems
    p = find(errors, "demand", 2, "quantity", "formula")
    assert "enter the value" in p.message
    find(errors, "settings", row, "value", "formula")


def test_text_that_looks_like_a_formula_is_text_not_a_formula(tmp_path):
    rows = tiny_rows()
    for t in ("customers", "demand"):
        for r in rows[t]:
            if r["customer"] == "CU-MUC":
                r["customer"] = "=HYPERLINK(x)"
    case = load_case(make_case_dir(tmp_path / "src", **rows))
    back = load_case(write_case_workbook(case, tmp_path / "c.xlsx"))
    assert "=HYPERLINK(x)" in back.tables["customers"]["customer"].tolist()


# --------------------------------------------------------------------------- sizes of what is read (defect 3)


def _rezip(book: Path, edit) -> None:
    """Rewrite the workbook's zip with ``edit(name, data) -> data`` applied to every member."""
    tmp = book.with_suffix(".tmp")
    with zipfile.ZipFile(book) as src, zipfile.ZipFile(tmp, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            dst.writestr(info.filename, edit(info.filename, src.read(info.filename)))
    tmp.replace(book)


def test_a_sheet_declaring_a_huge_dimension_is_refused_fast(tmp_path):
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book, read_only=True)
    index = wb.sheetnames.index("demand") + 1
    wb.close()

    def edit(name, data):
        if name == f"xl/worksheets/sheet{index}.xml":
            text = data.decode()
            start = text.index("<dimension ref=")
            end = text.index("/>", start) + 2
            return (text[:start] + '<dimension ref="A1:XFD1048576"/>' + text[end:]).encode()
        return data

    _rezip(book, edit)
    t0 = time.perf_counter()
    err = problems_of(book)
    assert time.perf_counter() - t0 < 5
    p = find(err.problems, "demand", None, None, "declares")
    assert f"{MAX_TABLE_ROWS:,}" in p.message


def test_a_sheet_with_more_rows_than_declared_is_stopped_at_the_row_limit(tmp_path, monkeypatch):
    """The dimension can lie: the rows streamed are counted too (here a sheet with no dimension element;
    the limit lowered to 50 rows to keep the test fast)."""
    monkeypatch.setattr("netopt.data.limits.MAX_TABLE_ROWS", 50)
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book, read_only=True)
    index = wb.sheetnames.index("customers") + 1
    wb.close()

    def edit(name, data):
        if name != f"xl/worksheets/sheet{index}.xml":
            return data
        text = data.decode()
        start = text.index("<dimension ref=")
        text = text[:start] + text[text.index("/>", start) + 2 :]
        body = "".join(f'<row r="{i}"><c r="A{i}" t="n"><v>{i}</v></c></row>' for i in range(10, 70))
        return text.replace("</sheetData>", body + "</sheetData>", 1).encode()

    _rezip(book, edit)
    find(problems_of(book).problems, "customers", None, None, "more than 50 rows")


def test_a_workbook_whose_parts_unpack_beyond_the_limit_is_refused_before_unpacking(tmp_path):
    """A zip member's declared uncompressed size (its central directory entry) is forged to 4 GB."""
    book = _tiny_workbook(tmp_path)
    data = bytearray(book.read_bytes())
    at = data.find(b"PK\x01\x02")  # first central directory entry: uncompressed size at offset 24
    data[at + 24 : at + 28] = (0xFFFF_FFF0).to_bytes(4, "little")
    book.write_bytes(bytes(data))
    t0 = time.perf_counter()
    err = problems_of(book)
    assert time.perf_counter() - t0 < 5
    p = find(err.problems, "case.xlsx", None, None, "uncompressed")
    assert f"{MAX_WORKBOOK_UNCOMPRESSED_BYTES:,}" in p.message


def test_a_csv_file_larger_than_the_limit_is_refused_unread(tmp_path):
    folder = make_case_dir(tmp_path)
    with open(folder / "demand.csv", "r+b") as f:
        f.truncate(MAX_CSV_FILE_BYTES + 1)  # sparse: no disk used, nothing to read before the size check
    find(problems_of(folder).problems, "demand", None, None, f"{MAX_CSV_FILE_BYTES:,}")


def test_a_csv_with_more_rows_than_the_limit_is_refused(tmp_path):
    folder = make_case_dir(tmp_path)
    with open(folder / "customers.csv", "a", encoding="utf-8") as f:
        f.write("X,1,1\n" * (MAX_TABLE_ROWS + 1))
    find(problems_of(folder).problems, "customers", None, None, f"more than {MAX_TABLE_ROWS:,} rows")


def test_a_cell_longer_than_the_limit_is_an_error_naming_table_row_and_column(tmp_path):
    rows = tiny_rows()
    rows["customers"][1]["customer"] = "C" * (MAX_CELL_CHARS + 1)
    p = find(problems_of(make_case_dir(tmp_path, **rows)).problems, "customers", 3, "customer", "characters")
    assert len(p.message) < 300


def test_a_cell_beyond_the_csv_readers_own_limit_names_the_cell_limit_not_a_missing_table(tmp_path):
    """A 1 MB cell stops Python's csv reader (its field limit, 131,072 characters): the message states the
    cell limit, and the table is not also reported missing."""
    rows = tiny_rows()
    rows["customers"][1]["customer"] = "C" * 1_000_000
    e = problems_of(make_case_dir(tmp_path, **rows))
    p = find(e.problems, "customers", 3, None, "characters")
    assert f"{MAX_CELL_CHARS:,}" in p.message
    assert not [q for q in e.problems if q.table == "customers" and "missing" in q.message]


def test_a_workbook_cell_longer_than_the_limit_is_an_error(tmp_path):
    book = _tiny_workbook(tmp_path)
    wb = openpyxl.load_workbook(book)
    wb["customers"].cell(row=3, column=1).value = "C" * (MAX_CELL_CHARS + 1)
    wb.save(book)
    find(problems_of(book).problems, "customers", 3, "customer", "characters")


# --------------------------------------------------------------------------- printed errors capped (defect 3)


def test_the_report_caps_lines_per_table_column_and_kind_but_keeps_every_problem():
    many = [Problem("demand", r, "quantity", f"number expected, got 'x{r}'") for r in range(2, 1002)]
    other = [Problem("demand", r, "customer", "blank value in a required column") for r in range(2, 12)]
    err = CaseError(many + other)
    assert len(err.problems) == 1010
    text = err.report()
    lines = text.splitlines()
    assert sum("column 'quantity'" in line for line in lines) == MAX_ERRORS_PER_COLUMN
    assert f"and {1000 - MAX_ERRORS_PER_COLUMN} more in table demand, column quantity" in text
    assert sum("column 'customer'" in line for line in lines) == 10
    assert text.startswith("1010 error(s)")


def test_the_report_caps_its_total_lines():
    probs = [Problem(f"t{i}", 2, f"c{j}", "bad") for i in range(30) for j in range(30)]
    lines = CaseError(probs).report().splitlines()
    assert len(lines) <= MAX_PRINTED_PROBLEMS + 5
    assert any("more" in line and "not shown" in line for line in lines)


# --------------------------------------------------------------------------- never a traceback (item 8)


def _write(folder: Path, name: str, data: bytes) -> None:
    (folder / name).write_bytes(data)


HOSTILE = {
    "nul bytes in a CSV": ("demand.csv", b"customer,product,quantity\nCU-BRU,wid\x00get,10\x00\n"),
    "non-UTF-8 bytes": ("customers.csv", b"customer,lat,lon\nK\xf6ln,50,6\n"),
    "a binary file as CSV": ("dcs.csv", bytes(range(256)) * 8),
    "an empty CSV": ("demand.csv", b""),
    "duplicate headers": ("demand.csv", b"customer,customer,quantity\nCU-BRU,CU-BRU,1\n"),
    "only a header of blanks": ("demand.csv", b",,,\n1,2,3\n"),
    "a lone quote": ("demand.csv", b'customer,product,quantity\n"CU-BRU,widget,1\n'),
    "settings not TOML": ("settings.toml", b"this is = = not toml ["),
    "settings binary": ("settings.toml", bytes(range(256))),
    "settings deeply nested": ("settings.toml", b"a = " + b"[" * 5000 + b"]" * 5000),
    "settings a table for a number": ("settings.toml", b"[solver]\nmip_gap = {x = 1}\n"),
    "settings an array for a flag": ("settings.toml", b"[policy]\nsingle_sourcing = [true]\n"),
    "settings a date for a number": ("settings.toml", b"[solver]\ntime_limit_s = 2024-01-01T00:00:00\n"),
    "settings a section that is a value": ("settings.toml", b"solver = 5\n[policy]\nmin_open_dcs = 'x'\n"),
    "settings an int with 5000 digits": ("settings.toml", b"[solver]\nthreads = " + b"9" * 5000 + b"\n"),
    "scenarios not TOML": ("scenarios.toml", b"[[scenario]\n"),
    "scenarios binary": ("scenarios.toml", b"\xff\xfe\x00\x01"),
    "a number column of huge integers": (
        "demand.csv",
        b"customer,product,quantity\nCU-BRU,widget," + b"9" * 5000 + b"\n",
    ),
}


@pytest.mark.parametrize("what", sorted(HOSTILE))
def test_hostile_folder_input_is_a_case_error_never_a_traceback(tmp_path, what):
    folder = make_case_dir(tmp_path)
    name, data = HOSTILE[what]
    _write(folder, name, data)
    try:
        load_case(folder)
    except CaseError as e:
        assert e.report()
    else:
        pytest.fail(f"{what}: accepted")


WORKBOOK_HOSTILE = {
    "not a zip": lambda p: p.write_bytes(b"PK\x03\x04 not really"),
    "a CSV renamed": lambda p: p.write_bytes(b"customer,lat,lon\n"),
    "empty": lambda p: p.write_bytes(b""),
    "a huge integer cell": lambda p: _rezip(
        p, lambda n, d: d.replace(b"<v>", b"<v>" + b"9" * 5000, 1) if n.startswith("xl/worksheets/") else d
    ),
}


@pytest.mark.parametrize("what", sorted(WORKBOOK_HOSTILE))
def test_hostile_workbooks_are_a_case_error_never_a_traceback(tmp_path, what):
    book = _tiny_workbook(tmp_path)
    WORKBOOK_HOSTILE[what](book)
    with pytest.raises(CaseError):
        load_case(book)


def test_demo_still_loads_as_folder_and_workbook(tmp_path):
    shutil.copytree(DEMO, tmp_path / "demo")
    case = load_case(tmp_path / "demo")
    load_case(write_case_workbook(case, tmp_path / "demo.xlsx"))


# --------------------------------------------------------------------------- entries that would be dropped (defect 6)


def test_a_known_section_written_as_a_value_is_an_error_not_ignored(tmp_path):
    folder = make_case_dir(tmp_path, settings="inventory = 5\n[case]\nname = 'tiny'\n")
    find(problems_of(folder).problems, "settings.toml", None, "[inventory]", "is a section")


def test_an_unknown_value_outside_any_section_stays_a_warning(tmp_path):
    folder = make_case_dir(tmp_path, settings="colour = 5\n[case]\nname = 'tiny'\n")
    find(load_case(folder).warnings, "settings.toml", None, "colour", "outside any [section]")


@pytest.mark.parametrize("value", ["nan", "2024", "true", "[1]"])
def test_a_text_setting_given_no_text_is_an_error(tmp_path, value):
    folder = make_case_dir(tmp_path, settings=f"[case]\nname = {value}\n")
    find(problems_of(folder).problems, "settings.toml", None, "[case] name", "text expected")


@pytest.mark.parametrize(
    "entry, key", [('scenarios = "text"', "scenarios"), ("x = 1", "x"), ("[[scenarios]]\nname = 'a'", "scenarios")]
)
def test_an_entry_outside_the_scenario_tables_is_an_error_not_ignored(tmp_path, entry, key):
    folder = make_case_dir(tmp_path, scenarios=entry + "\n")
    find(problems_of(folder).problems, "scenarios.toml", None, key, "outside [[scenario]]")
