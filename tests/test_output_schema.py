"""The output schema: docs/outputs.md in sync, and every column netopt writes declared with a unit."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from netopt import load_case, run_scenarios
from netopt.data.result_types import ResultColumn
from netopt.data.result_views import KPIS
from netopt.data.results_schema import RESULT_TABLES, UNITS, column_of, label_of, result_table
from netopt.present.files import write_run
from netopt.present.outputs_doc import OUTPUTS_DOC, outputs_markdown, write_outputs_doc
from netopt.studies.exposure import exposure
from netopt.studies.resilience import run_sweep

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"


def test_outputs_doc_in_sync_with_the_schema(tmp_path):
    fresh = write_outputs_doc(tmp_path / "outputs.md").read_text(encoding="utf-8")
    assert fresh == OUTPUTS_DOC.read_text(encoding="utf-8"), (
        "docs/outputs.md is stale: run `python -m netopt.present.outputs_doc`"
    )


def test_outputs_doc_lists_every_table_column_and_indicator():
    doc = outputs_markdown()
    for t in RESULT_TABLES.values():
        assert f"## {t.name}\n" in doc
        for c in t.columns:
            assert f"| `{c.name}` |" in doc
    for k in KPIS:
        assert f"| `{k}` |" in doc


def test_every_declaration_uses_a_declared_unit_and_has_a_label():
    for t in RESULT_TABLES.values():
        names = [c.name for c in t.columns]
        assert len(names) == len(set(names)), f"{t.name} declares a column twice"
        for c in t.columns:
            assert c.unit in UNITS and c.label and c.meaning, (t.name, c.name)
    for k in KPIS.values():
        assert k.unit in UNITS and k.label and k.meaning, k.name


def test_patterns_match_dynamic_columns_only():
    c = ResultColumn("tkm_share_<mode>", "float", "share", "<mode> share of tonne-km", "")
    assert c.match("tkm_share_road_ltl") == "road_ltl" and c.match("tkm_share_") is None
    assert c.label_for("tkm_share_road_ltl") == "road ltl share of tonne-km"
    assert column_of("comparison", "cost_dc_fixed").unit == "currency/yr"
    assert column_of("comparison", "total_cost").name == "total_cost"  # an exact name wins over a pattern
    assert label_of("frontier", "tkm_share_rail") == "rail share of tonne-km"
    assert column_of("comparison", "no_such_column") is None


def _undeclared(table: str, columns) -> list[str]:
    declared = result_table(table)
    assert declared is not None, f"table {table} is not declared in netopt/data/results_schema.py"
    return [c for c in columns if declared.find(str(c)) is None]


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    """The demo case: the base, a lane loss (hold and redesign) and the base's cost–CO2 frontier, written out."""
    run = run_scenarios(load_case(DEMO), names=["lane_out_ningbo_poznan", "base_co2_frontier"])
    out = write_run(run, tmp_path_factory.mktemp("demo") / "run", report=False)
    return run, out


def test_every_csv_written_for_the_demo_is_declared(demo_run):
    _, out = demo_run
    files = sorted(out.rglob("*.csv"))
    assert len(files) > 20
    seen = set()
    bad = {}
    for path in files:
        name = "frontier" if path.stem.startswith("frontier_") else path.stem
        with open(path, newline="", encoding="utf-8") as f:
            header = next(csv.reader(f))
        seen.add(name)
        if missing := _undeclared(name, header):
            bad[str(path.relative_to(out))] = missing
    assert not bad, f"columns written but not declared in netopt/data/results_schema.py: {bad}"
    assert {"comparison", "frontier", "flows", "kpis", "verification", "mode_economics"} <= seen


def test_every_result_table_and_indicator_of_the_demo_is_declared(demo_run):
    run, _ = demo_run
    for label, r in run.results.items():
        for name, df in r.tables.items():
            assert not _undeclared(name, df.columns), (label, name)
        assert not _undeclared("verification", r.verification.checks.columns)
        for kpi, unit in zip(r.tables["kpis"]["kpi"], r.tables["kpis"]["unit"]):
            assert kpi in KPIS, f"indicator {kpi} is not declared in KPIS"
            # The unit the engine writes beside the value begins with the declared unit.
            assert str(unit).startswith(KPIS[kpi].unit), (kpi, unit, KPIS[kpi].unit)
    assert not _undeclared("comparison", run.comparison.columns)
    for df in run.frontiers.values():
        assert not _undeclared("frontier", df.columns)
        assert any(c.startswith("tkm_share_") for c in df.columns)


def test_stress_tables_are_declared(tiny_case_dir):
    case = load_case(tiny_case_dir)
    run = run_scenarios(case, names=[])
    spof, _ = run_sweep(case, run.base, workers=0, redesign=True, progress=False)
    assert len(spof) and not _undeclared("spof_ranking", spof.columns)
    expo, _ = exposure(case, run.base)
    assert len(expo) and not _undeclared("exposure", expo.columns)
