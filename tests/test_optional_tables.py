"""Tables a case does not need may be left out: suppliers when none exist, plants when suppliers sell the
finished products.  Objectives are hand computed (no outside source); each one is also checked by the
independent verification."""

from __future__ import annotations

import pytest
from casekit import write_rows

from netopt.api import solve
from netopt.data.case import CaseError
from netopt.data.io import load_case
from netopt.data.schema import TABLES

# 10 units from supplier S (2 a unit) via DC D1 (fixed cost 100, a candidate) to customer C1; freight 1 a
# unit S → D1 and 0.5 a unit D1 → C1; no value, so no stock costs: 100 + 10 × (2 + 1 + 0.5) = 135.
ROWS = {
    "products": [{"product": "A", "unit_weight_kg": "1", "unit_value": "0"}],
    "suppliers": [{"supplier": "S", "product": "A", "lat": "50", "lon": "5", "unit_cost": "2"}],
    "dcs": [{"dc": "D1", "lat": "50", "lon": "6", "status": "candidate", "fixed_cost": "100"}],
    "customers": [{"customer": "C1", "lat": "50.5", "lon": "7"}],
    "demand": [{"customer": "C1", "product": "A", "quantity": "10"}],
    "modes": [{"mode": "road", "cost_per_tonne_km": "0.1", "speed_km_per_day": "500", "generate_lanes": "false"}],
    "lanes": [
        {"origin": "S", "destination": "D1", "mode": "road", "cost_per_unit": "1"},
        {"origin": "D1", "destination": "C1", "mode": "road", "cost_per_unit": "0.5"},
    ],
}
SETTINGS = "[inventory]\nsafety_stock = false\n"


def write_folder(folder, rows: dict, settings: str):
    """A case folder of ``rows`` (one CSV per table given) and ``settings`` (TOML text)."""
    folder.mkdir(parents=True)
    for table, table_rows in rows.items():
        write_rows(folder / f"{table}.csv", table_rows)
    (folder / "settings.toml").write_text(settings, encoding="utf-8")
    return folder


def test_a_case_without_plants_solves(tmp_path):
    assert not TABLES["plants"].required and not TABLES["suppliers"].required
    folder = write_folder(tmp_path / "case", ROWS, SETTINGS)
    assert not (folder / "plants.csv").exists()
    case = load_case(folder)
    assert case.tables["plants"].empty
    res = solve(case, mip_gap=1e-9)
    assert res.status == "optimal" and res.verification.passed, res.verification.checks
    assert res.objective == pytest.approx(135.0, rel=1e-9)


def test_a_case_with_neither_plants_nor_suppliers_is_refused_clearly(tmp_path):
    # Reachability's own message (netopt.data.reach); no outside source.
    rows = {k: v for k, v in ROWS.items() if k != "suppliers"}
    rows["lanes"] = [r for r in ROWS["lanes"] if r["origin"] != "S"]
    with pytest.raises(CaseError) as err:
        load_case(write_folder(tmp_path / "case", rows, SETTINGS))
    where = [(p.table, p.row, p.column) for p in err.value.problems]
    assert where == [("demand", 2, "product")]
    assert "no plant makes and no supplier offers 'A'" in err.value.problems[0].message
