"""The infeasibility diagnosis names the capacity that keeps demand from being served.

Hand-checked case (common practice, no source): one plant makes the only finished product with
capacity 100 units/yr, demand is 150 units/yr: 50 units cannot be delivered, and the plant's
capacity is the binding one (serving all demand needs 150 there, 50 more than it has).
"""

from __future__ import annotations

from casekit import make_case_dir, tiny_rows

from netopt.data.io import load_case
from netopt.engine.solve import solve


def test_one_plant_short_of_capacity_is_named(tmp_path):
    rows = tiny_rows()
    rows["products"] = [p for p in rows["products"] if p["product"] != "gadget"]
    rows["suppliers"] = [s for s in rows["suppliers"] if s["product"] != "gadget"]
    rows["plants"][0]["capacity"] = "100"
    rows["demand"] = [{"customer": "CU-BRU", "product": "widget", "quantity": "150", "demand_cv": ""}]
    r = solve(load_case(make_case_dir(tmp_path, **rows)))
    assert r.status == "infeasible"
    d = r.diagnosis
    unmet = d[d["rule"] == "demand_met"]
    assert len(unmet) == 1 and abs(float(unmet["amount"].iloc[0]) - 50.0) < 1e-6
    plant = d[d["rule"] == "plant_capacity"]
    assert len(plant) == 1
    assert plant["where"].iloc[0] == "plant PL-LYON, product widget"
    assert abs(float(plant["amount"].iloc[0]) - 50.0) < 1e-6
    assert "100 units/yr" in plant["meaning"].iloc[0] and "needs 150 units/yr" in plant["meaning"].iloc[0]


def test_a_supplier_short_of_capacity_is_named(tmp_path):
    """Both steel suppliers capped at 100 units/yr, a widget needs 10 of steel: the supply is binding."""
    rows = tiny_rows()
    for s in rows["suppliers"]:
        if s["product"] == "steel":
            s["capacity"] = "100"
    r = solve(load_case(make_case_dir(tmp_path, **rows)))
    d = r.diagnosis
    assert r.status == "infeasible" and (d["rule"] == "demand_met").any()
    named = d[d["rule"] == "supplier_capacity"]
    assert len(named) and named["where"].str.contains("steel").all()
    assert (named["amount"] > 0).any()
