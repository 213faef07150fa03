"""Templates generated from the schema: data_templates/ in sync, blank cases, `netopt template`."""

from __future__ import annotations

import csv
from pathlib import Path

import openpyxl
import pytest
import tomllib

from netopt import load_case
from netopt.cli import main
from netopt.data.schema import TABLES, schema_frame
from netopt.data.settings_schema import SETTINGS, setting_defaults
from netopt.data.templates import WORKBOOK_NAME, schema_markdown, write_data_templates

REPO = Path(__file__).resolve().parent.parent
DATA_TEMPLATES = REPO / "data_templates"
TEXT_FILES = [t.file_name for t in TABLES.values()] + ["schema.csv", "settings.csv", "settings.toml", "schema.md"]


def _sheets(path: Path) -> dict[str, list[list]]:
    wb = openpyxl.load_workbook(path, read_only=True)
    return {ws.title: [list(r) for r in ws.iter_rows(values_only=True)] for ws in wb.worksheets}


def test_data_templates_in_sync_with_schema(tmp_path):
    fresh = write_data_templates(tmp_path / "dt")
    assert sorted(p.name for p in fresh.iterdir()) == sorted(p.name for p in DATA_TEMPLATES.iterdir()), (
        "run `python -m netopt.templates` to regenerate data_templates/"
    )
    for name in TEXT_FILES:
        assert (fresh / name).read_text(encoding="utf-8") == (DATA_TEMPLATES / name).read_text(encoding="utf-8"), (
            f"data_templates/{name} is stale: run `python -m netopt.templates`"
        )
    mine, committed = _sheets(fresh / WORKBOOK_NAME), _sheets(DATA_TEMPLATES / WORKBOOK_NAME)
    assert list(mine) == list(committed)
    for name in mine:
        assert mine[name][:1] == committed[name][:1], f"sheet {name} header differs"


def test_table_csvs_are_the_schema_headers():
    for t in TABLES.values():
        with open(DATA_TEMPLATES / t.file_name, newline="", encoding="utf-8") as f:
            assert list(csv.reader(f)) == [t.column_names]


def test_schema_csv_lists_every_column():
    with open(DATA_TEMPLATES / "schema.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    assert list(rows[0]) == ["table", "column", "type", "unit", "required", "default", "key", "meaning"]
    declared = [
        (t.name, c.name)
        for t in TABLES.values()
        for c in t.columns + ((t.open_columns,) if t.open_columns is not None else ())
    ]
    assert [(r["table"], r["column"]) for r in rows] == declared
    assert ("lane_matrix", "<destination>") in declared  # a wide table's own columns are described too
    assert len(rows) == len(schema_frame())


def test_settings_csv_and_toml_hold_every_default():
    with open(DATA_TEMPLATES / "settings.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    assert [(r["section"], r["name"]) for r in rows] == [(s.section, s.name) for s in SETTINGS]
    legs = next(r for r in rows if r["name"] == "legs")
    assert legs["default"].split("|") == setting_defaults()["lanes"]["legs"]
    # Python's own TOML parser reads the commented template back to the schema defaults
    assert tomllib.loads((DATA_TEMPLATES / "settings.toml").read_text(encoding="utf-8")) == setting_defaults()


def test_schema_markdown_documents_everything():
    md = schema_markdown()
    for t in TABLES.values():
        assert f"### {t.name}" in md
        for c in t.columns:
            assert f"| `{c.name}` |" in md
    for s in SETTINGS:
        assert f"| `{s.name}` |" in md
    assert md.count("| `capacity` |") == sum("capacity" in t.column_names for t in TABLES.values())


def test_template_workbook_sheets_and_settings():
    sheets = _sheets(DATA_TEMPLATES / WORKBOOK_NAME)
    assert list(sheets) == list(TABLES) + ["settings", "scenarios", "schema"]
    assert sheets["scenarios"][0] == ["scenario", "description", "based_on", "resolve", "frontier_points", "kind"]
    for t in TABLES.values():
        assert sheets[t.name] == [t.column_names]
    st = sheets["settings"]
    assert st[0][:3] == ["section", "name", "value"]
    assert [(r[0], r[1]) for r in st[1:]] == [(s.section, s.name) for s in SETTINGS]
    assert sheets["schema"][0] == list(schema_frame().columns)


def test_template_workbook_loads_as_a_case_with_default_settings():
    case = load_case(DATA_TEMPLATES / WORKBOOK_NAME)
    assert case.settings == setting_defaults()
    assert all(case.tables[n].empty for n in TABLES)


def test_cli_template_writes_a_blank_case_that_checks(tmp_path, capsys):
    target = tmp_path / "new-case"
    with pytest.raises(SystemExit) as info:
        main(["template", str(target)])
    assert info.value.code == 0
    assert sorted(p.name for p in target.iterdir()) == sorted(
        [t.file_name for t in TABLES.values()] + ["settings.toml"]
    )
    text = (target / "settings.toml").read_text(encoding="utf-8")
    assert tomllib.loads(text) == setting_defaults()
    for s in SETTINGS:  # every setting is explained beside its value
        assert f"# {s.meaning}" in text
    capsys.readouterr()
    with pytest.raises(SystemExit) as info:
        main(["check", str(target)])
    assert info.value.code == 0
    assert "no demand rows" in capsys.readouterr().err


def test_cli_template_refuses_a_folder_in_use(tmp_path, capsys):
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "notes.txt").write_text("keep me")
    with pytest.raises(SystemExit) as info:
        main(["template", str(tmp_path / "busy")])
    assert info.value.code == 2
    assert "not empty" in capsys.readouterr().err
    assert (tmp_path / "busy" / "notes.txt").read_text() == "keep me"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["busy"]  # no temp folder left


def test_cli_template_into_empty_existing_folder(tmp_path):
    (tmp_path / "empty").mkdir()
    with pytest.raises(SystemExit) as info:
        main(["template", "--quiet", str(tmp_path / "empty")])
    assert info.value.code == 0
    assert (tmp_path / "empty" / "demand.csv").exists()
