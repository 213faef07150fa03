"""``docs/outputs.md``, generated from the output schema (regenerate with ``python -m netopt.present.outputs_doc``)."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from netopt.data.result_views import COMPARISON_VIEW, KPIS
from netopt.data.results_schema import RESULT_TABLES, UNITS

OUTPUTS_DOC = Path(__file__).resolve().parents[2] / "docs" / "outputs.md"
"""The repository's ``docs/outputs.md``."""


def _cell(text: str) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def outputs_markdown() -> str:
    """Every result table, column, unit and indicator of netopt's outputs, as Markdown."""
    out = [
        "# netopt outputs",
        "",
        "Generated from `netopt/data/results_schema.py` by `python -m netopt.present.outputs_doc`; do not edit.",
        "",
        "Every table is written as a CSV file and a sheet of `results.xlsx`. Money is in the case currency "
        "(`currency` below); a column name with `<…>` stands for one column per cost component or mode.",
        "",
        "## Units",
        "",
        "| unit | shown as | meaning |",
        "|---|---|---|",
    ]
    out += [f"| {_cell(u)} | {kind} | {_cell(meaning)} |" for u, (kind, meaning) in UNITS.items()]
    for t in RESULT_TABLES.values():
        out += ["", f"## {t.name}", "", _cell(t.meaning) + ".", "", f"Written by: {t.written_by}."]
        if t.aliases:
            out.append("Also written as: " + ", ".join(f"`{a}`" for a in t.aliases) + ".")
        out += ["", "| column | type | unit | label | meaning |", "|---|---|---|---|---|"]
        out += [
            f"| `{_cell(c.name)}` | {c.type} | {_cell(c.unit)} | {_cell(c.label)} | {_cell(c.meaning)} |"
            for c in t.columns
        ]
        if t.name == "comparison":
            out += [
                "",
                "Headline columns (Markdown, terminal, report): " + ", ".join(f"`{c}`" for c in COMPARISON_VIEW),
            ]
        if t.name == "kpis":
            out += ["", "Indicators (rows of `kpis`):", "", "| kpi | unit | label | meaning |", "|---|---|---|---|"]
            out += [f"| `{k.name}` | {_cell(k.unit)} | {_cell(k.label)} | {_cell(k.meaning)} |" for k in KPIS.values()]
    return "\n".join(out) + "\n"


def write_outputs_doc(path: str | os.PathLike = OUTPUTS_DOC) -> Path:
    """(Re)write the outputs reference at ``path``."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(outputs_markdown(), encoding="utf-8")
    return path


def main(argv: list[str] | None = None) -> None:
    """``python -m netopt.present.outputs_doc [FILE]``: regenerate docs/outputs.md."""
    args = sys.argv[1:] if argv is None else argv
    print(f"outputs reference written to {write_outputs_doc(args[0] if args else OUTPUTS_DOC)}")


if __name__ == "__main__":
    main()
