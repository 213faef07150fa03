"""Blank cases and the ``data_templates/`` folder, generated from the schema.

``write_blank_case(folder)`` writes what ``netopt template DIR`` gives a user: one CSV
per table with its header row and a ``settings.toml`` listing every setting at its
default with its meaning and unit.  ``write_data_templates(folder)`` writes the
reference files kept in the repository (regenerate with
``python -m netopt.templates [FOLDER]``):

- ``<table>.csv`` for every table (header only);
- ``schema.csv`` (table, column, type, unit, required, default, key, meaning);
- ``settings.csv`` (section, name, type, unit, default, meaning);
- ``settings.toml`` (as in a blank case);
- ``schema.md`` (the same, for people);
- ``netopt_case_template.xlsx`` (a sheet per table, ``settings`` filled with the
  defaults, and ``schema``).
"""

from __future__ import annotations

import os
import shutil
import sys
from pathlib import Path

from netopt.data.io import SETTINGS_FILE, SETTINGS_SHEET
from netopt.data.scenario_sheet import SCENARIO_COLUMNS
from netopt.data.scenario_sheet import SHEET as SCENARIO_SHEET
from netopt.data.schema import INF, LEGS, TABLES, schema_frame
from netopt.data.settings_schema import SETTINGS, setting_defaults, settings_frame
from netopt.data.text import format_number
from netopt.data.writing import _publish_dir, format_setting, settings_toml, temp_dir_beside, write_csv

WORKBOOK_NAME = "netopt_case_template.xlsx"
DATA_TEMPLATES = Path(__file__).resolve().parents[2] / "data_templates"
"""The repository's ``data_templates/`` folder."""


def _settings_table():
    """Settings as a table; defaults written as a user would type them (lists joined with '|')."""
    df = settings_frame()
    df["default"] = [format_setting(s.default, s.type) for s in SETTINGS]
    return df


def _range(c) -> str:
    parts = []
    if c.min is not None:
        parts.append(f"≥ {format_number(c.min)}" if not (0 < c.min < 1e-6) else "> 0")
    if c.max is not None:
        parts.append(f"≤ {format_number(c.max)}")
    return ", ".join(parts)


def _md_cell(text: str) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def schema_markdown() -> str:
    """Human-readable documentation of every table, column and setting (Markdown)."""
    out = [
        "# netopt case schema",
        "",
        "Generated from `netopt/data/schema.py` by `python -m netopt.data.templates`; do not edit by hand.",
        "",
        "A case is a folder holding `settings.toml` and one CSV file per table, named `<table>.csv`",
        "(UTF-8, comma-separated, header on line 1), plus optionally `scenarios.toml`; or one `.xlsx`",
        "workbook with one sheet per table (named as the table) and a sheet `settings` with columns",
        "`section`, `name`, `value`.  A blank cell takes the column's default; a blank cell in a",
        "required column is an error.  Site codes must be unique across suppliers, plants, DCs and",
        "customers.  Flags (`bool`) accept true/false, yes/no, 1/0.",
        "",
        "Legs of the network (lanes run only along these): " + ", ".join(f"`{x}`" for x in LEGS) + ".",
        "",
        "## Tables",
        "",
        "| table | required | key | meaning |",
        "|---|---|---|---|",
    ]
    for t in TABLES.values():
        out.append(
            f"| [{t.name}](#{t.name}) | {'yes' if t.required else 'no'} | {', '.join(t.key)} | {_md_cell(t.meaning)} |"
        )
    for t in TABLES.values():
        out += [
            "",
            f"### {t.name}",
            "",
            t.meaning,
            "",
            f"File `{t.file_name}` or sheet `{t.name}`; {'required' if t.required else 'optional'}; "
            f"key: {', '.join(f'`{k}`' for k in t.key)} (unique per row).",
        ]
        if t.references:
            refs = "; ".join(
                f"`{r.column}` must be a `{r.target_column}` of `{r.table}`" + (" (or blank)" if r.allow_blank else "")
                for r in t.references
            )
            out += ["", f"References: {refs}."]
        out += [
            "",
            "| column | type | unit | required | default | allowed | meaning |",
            "|---|---|---|---|---|---|---|",
        ]
        for c in t.columns + ((t.open_columns,) if t.open_columns is not None else ()):
            default = "" if c.default is None else ("no limit" if c.default == INF else str(c.default))
            if c.type == "bool" and c.default is not None:
                default = "true" if c.default else "false"
            elif c.type in ("float", "int") and isinstance(c.default, int | float) and c.default != INF:
                default = format_number(c.default)
            allowed = _range(c)
            if c.choices:
                allowed = ", ".join(v or "(blank)" for v in c.choices)
            out.append(
                f"| `{c.name}` | {c.type} | {_md_cell(c.unit)} | {'yes' if c.required else 'no'} | "
                f"{_md_cell(default)} | {_md_cell(allowed)} | {_md_cell(c.meaning)} |"
            )
    out += [
        "",
        "## Settings",
        "",
        f"File `{SETTINGS_FILE}` (`[section]` headings, `name = value` lines) or the workbook sheet "
        f"`{SETTINGS_SHEET}` (lists written as `a|b|c`).  Every setting is optional.",
        "",
    ]
    section = None
    for s in SETTINGS:
        if s.section != section:
            section = s.section
            out += [
                "",
                f"### [{section}]",
                "",
                "| name | type | unit | default | allowed | meaning |",
                "|---|---|---|---|---|---|",
            ]
        out.append(
            f"| `{s.name}` | {s.type} | {_md_cell(s.unit)} | `{_md_cell(format_setting(s.default, s.type))}` | "
            f"{_md_cell(_range(s))} | {_md_cell(s.meaning)} |"
        )
    return "\n".join(out) + "\n"


def _write_header_csvs(folder: Path) -> None:
    for t in TABLES.values():
        write_csv(folder / t.file_name, t.column_names, [])


def write_blank_case(folder: str | os.PathLike) -> Path:
    """A blank case: header-only CSV per table and a commented ``settings.toml`` of defaults.

    Raises:
        FileExistsError: ``folder`` exists and is not empty.
    """
    final = Path(folder)
    tmp = temp_dir_beside(final)
    try:
        _write_header_csvs(tmp)
        (tmp / SETTINGS_FILE).write_text(settings_toml(setting_defaults(), comments=True), encoding="utf-8")
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    _publish_dir(tmp, final, overwrite=False)
    return final


def write_template_workbook(path: Path) -> None:
    """The case workbook template: a sheet per table (header with notes), settings, scenarios, schema."""
    from openpyxl import Workbook
    from openpyxl.comments import Comment
    from openpyxl.styles import Font

    bold = Font(bold=True)
    wb = Workbook()
    wb.remove(wb.active)
    for t in TABLES.values():
        ws = wb.create_sheet(t.name)
        ws.append(t.column_names)
        for j, c in enumerate(t.columns, start=1):
            cell = ws.cell(row=1, column=j)
            cell.font = bold
            note = c.meaning + (f" [{c.unit}]" if c.unit else "") + ("; required" if c.required else "")
            cell.comment = Comment(note, "netopt")
            ws.column_dimensions[cell.column_letter].width = max(12, len(c.name) + 2)
        ws.freeze_panes = "A2"
    ws = wb.create_sheet(SETTINGS_SHEET)
    ws.append(["section", "name", "value", "type", "unit", "meaning"])
    for s in SETTINGS:
        value = s.default if s.type in ("float", "int", "bool") else format_setting(s.default, s.type)
        ws.append([s.section, s.name, value if value != "" else None, s.type, s.unit, s.meaning])
    ws = wb.create_sheet(SCENARIO_SHEET)
    ws.append([*SCENARIO_COLUMNS, "kind"])
    ws.cell(row=1, column=1).comment = Comment(
        "One row per change: the scenario's name, then its kind and one column per field of the change "
        "(site, origin, destination, mode, factor, ...); add the columns you need.",
        "netopt",
    )
    ws = wb.create_sheet("schema")
    sf = schema_frame()
    ws.append(list(sf.columns))
    for rec in sf.itertuples(index=False):
        ws.append(list(rec))
    for name in (SETTINGS_SHEET, SCENARIO_SHEET, "schema"):
        for cell in wb[name][1]:
            cell.font = bold
        wb[name].freeze_panes = "A2"
    wb.save(path)


def write_data_templates(folder: str | os.PathLike = DATA_TEMPLATES) -> Path:
    """(Re)generate the reference templates in ``folder`` (written aside, then swapped in)."""
    final = Path(folder)
    tmp = temp_dir_beside(final)
    try:
        _write_header_csvs(tmp)
        sf = schema_frame()
        sf.to_csv(tmp / "schema.csv", index=False, lineterminator="\n")
        _settings_table().to_csv(tmp / "settings.csv", index=False, lineterminator="\n")
        (tmp / SETTINGS_FILE).write_text(settings_toml(setting_defaults(), comments=True), encoding="utf-8")
        (tmp / "schema.md").write_text(schema_markdown(), encoding="utf-8")
        write_template_workbook(tmp / WORKBOOK_NAME)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    _publish_dir(tmp, final, overwrite=True)
    return final


def main(argv: list[str] | None = None) -> None:
    """``python -m netopt.templates [FOLDER]``: regenerate the data templates."""
    args = sys.argv[1:] if argv is None else argv
    out = write_data_templates(args[0] if args else DATA_TEMPLATES)
    print(f"data templates written to {out}")


if __name__ == "__main__":
    main()
