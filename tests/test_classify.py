"""ABC / XYZ classification (netopt.studies.classify, ``netopt classify``).

The rule (stated in the module): items ranked largest first, equal values by code; by value share an
item is A while the share before it is below a, B while below b; by item share the same on the share
of items; a tie group takes the class of its first member.  The 80 / 95 % and 20 / 50 % boundaries
are common practice, no source.  Expected classes below are worked by hand from that rule.
"""

from __future__ import annotations

import math
import shutil
from pathlib import Path

import pandas as pd
import pytest
from scipy.stats import norm

import netopt
from netopt.cli import main
from netopt.data.case import CaseError
from netopt.model.safety_stock import curves
from netopt.network.arcs import build_network
from netopt.studies.classify import Rule, abc_classes, classes_into_case, classify_items, parse_class_map

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"


def run(argv) -> int:
    with pytest.raises(SystemExit) as e:
        main(argv)
    return int(e.value.code)


def test_value_share_boundaries_on_a_hand_list_with_a_tie():
    # Values 50, 20, 10, 10, 5, 3, 2 (total 100).  Share before each item: 0, .50, .70, .80, .90, .95, .98.
    # By hand: A A A (.70 < .80) | the second 10 has .80 before it (B by itself) but ties the first 10,
    # so it is A too | 5 → B (.90 < .95) | 3 → C (.95 is not below .95) | 2 → C.
    df = abc_classes([10, 50, 3, 10, 20, 2, 5], ["q", "a", "f", "p", "b", "g", "e"], Rule("value", 0.8, 0.95))
    assert list(df["item"]) == ["a", "b", "p", "q", "e", "f", "g"]  # equal values ranked by code
    assert list(df["class"]) == ["A", "A", "A", "A", "B", "C", "C"]
    assert list(df["share"]) == pytest.approx([0.5, 0.2, 0.1, 0.1, 0.05, 0.03, 0.02])
    assert list(df["cumulative_share"]) == pytest.approx([0.5, 0.7, 0.8, 0.9, 0.95, 0.98, 1.0])


def test_item_share_boundaries_and_zero_values():
    # Ten items 10, 9, …, 1 and one 0: item share before = 0, 1/11, 2/11, …; with 0.2 / 0.5: A while
    # below 0.2 (first 3: 0, .09, .18), B while below 0.5 (next 3: .27, .36, .45), C the rest; 0 is C.
    vals = list(range(10, 0, -1)) + [0]
    df = abc_classes(vals, [f"i{v:02d}" for v in vals], Rule("items", 0.2, 0.5))
    assert "".join(df["class"]) == "AAABBBCCCCC"
    assert df["item_share"].iloc[-1] == pytest.approx(1.0)


def test_all_equal_values_take_one_class():
    # A boundary never splits equal values: five equal items are all A (the first one's class).
    df = abc_classes([7, 7, 7, 7, 7], list("edcba"), Rule("value", 0.8, 0.95))
    assert set(df["class"]) == {"A"} and list(df["item"]) == list("abcde")


def test_measures_and_pooled_cv_on_the_tiny_case(tiny_case_dir):
    # Tiny case: widget 1,500 units × 80, gadget 200 × 45; BRU buys 1,000 widgets + 200 gadgets, MUC 500
    # widgets.  Usage value (hand): widget 120,000, gadget 9,000; BRU 89,000, MUC 40,000.  Pooled CV of
    # independent rows: √Σ(cv q)² / Σq (variance of a sum of independent demands, handbook formula):
    # BRU √(300² + 100²)/1,200 = 0.26352, MUC 0.3, widget √(300² + 150²)/1,500 = 0.22361, gadget 0.5.
    case = netopt.load_case(tiny_case_dir)
    p = classify_items(case, "products", "usage_value", Rule(), xyz=(0.25, 0.5)).set_index("item")
    assert p.loc["widget", "usage_value"] == pytest.approx(120_000) and p.loc["gadget", "usage_value"] == 9_000
    assert p.loc["widget", "demand_cv"] == pytest.approx(math.sqrt(300**2 + 150**2) / 1500)
    assert (p.loc["widget", "xyz"], p.loc["gadget", "xyz"]) == ("X", "Y")
    # share before gadget = 120,000 / 129,000 = 0.930: below 0.95, so B (by hand)
    assert p.loc["widget", "class"] == "A" and p.loc["gadget", "class"] == "B"
    c = classify_items(case, "customers", "volume", Rule(), xyz=(0.25, 0.5)).set_index("item")
    assert c.loc["CU-BRU", "units"] == 1200 and c.loc["CU-MUC", "units"] == 500
    assert c.loc["CU-BRU", "demand_cv"] == pytest.approx(math.sqrt(300**2 + 100**2) / 1200)
    assert c.loc["CU-BRU", "xyz"] == "Y" and c.loc["CU-MUC", "xyz"] == "Y"


def test_revenue_needs_a_price_for_every_product_sold(tiny_case_dir):
    case = netopt.load_case(tiny_case_dir)
    with pytest.raises(CaseError) as e:
        classify_items(case, "products", "revenue")
    probs = e.value.problems
    assert {(p.table, p.column) for p in probs} == {("products", "unit_price")}
    assert {p.row for p in probs} == {2, 3}  # widget and gadget; steel is a material without demand


def test_margin_with_prices(tiny_case_dir):
    case = netopt.load_case(tiny_case_dir)
    case.tables["products"]["unit_price"] = [100.0, 90.0, float("nan")]
    p = classify_items(case, "products", "margin").set_index("item")
    # hand: widget 1,500 × (100 − 80) = 30,000; gadget 200 × (90 − 45) = 9,000
    assert p.loc["widget", "margin"] == pytest.approx(30_000) and p.loc["gadget", "margin"] == pytest.approx(9_000)
    assert p.loc["widget", "revenue"] == pytest.approx(150_000)


def test_class_maps_are_checked():
    assert parse_class_map("A=0.98, b=0.95,C=0.9", "x", True) == {"A": 0.98, "B": 0.95, "C": 0.9}
    with pytest.raises(ValueError, match="no value for class C"):
        parse_class_map("A=1,B=2", "x", True)
    with pytest.raises(ValueError, match="give each"):
        parse_class_map("A=1,A=2,B=1,C=1", "x", True)


def test_safety_stock_follows_the_class_cycle_service_level(tiny_case_dir):
    # Safety stock is z × √(…) with z = Φ⁻¹(CSL) (Chopra & Meindl's formula, as the model states), so
    # setting one product's CSL from 0.95 (the setting) to 0.99 scales every breakpoint of its curves by
    # Φ⁻¹(0.99)/Φ⁻¹(0.95) (scipy.stats.norm as the reference) and leaves the other product's alone.
    case = netopt.load_case(tiny_case_dir)
    case.settings["inventory"].update(safety_stock=True, cycle_service_level=0.95)
    before = curves(build_network(case)).set_index(["dc", "product"])
    prods = classify_items(case, "products")
    classed = classes_into_case(case, None, prods, None, {"A": 0.99, "B": 0.95, "C": 0.9})  # gadget is B
    assert dict(zip(classed.tables["products"]["product"], classed.tables["products"]["cycle_service_level"])) == {
        "widget": 0.99,
        "gadget": 0.95,
        "steel": pytest.approx(float("nan"), nan_ok=True),
    }
    after = curves(build_network(classed)).set_index(["dc", "product"])
    assert len(before) and list(before.index) == list(after.index)
    for key in before.index:
        ratio = norm.ppf(0.99) / norm.ppf(0.95) if key[1] == "widget" else 1.0
        assert after.loc[key, "ss_at_breakpoints"] == pytest.approx(before.loc[key, "ss_at_breakpoints"] * ratio)


def test_unknown_service_class_is_refused(tiny_case_dir):
    case = netopt.load_case(tiny_case_dir)
    cust = classify_items(case, "customers")
    with pytest.raises(CaseError, match="unknown service class 'gold'"):
        classes_into_case(case, cust, None, {"A": "gold", "B": "standard", "C": "standard"}, None)


def test_classify_cli_writes_classes_that_feed_a_case_that_solves(tmp_path):
    out = tmp_path / "classes"
    code = run(
        [
            "classify",
            str(DEMO),
            "--out",
            str(out),
            "--xyz",
            "--service-by-class",
            "A=express,B=standard,C=standard",
            "--csl-by-class",
            "A=0.98,B=0.95,C=0.9",
            "-q",
        ]
    )
    assert code == 0
    for name in ("abc_products.csv", "abc_customers.csv", "abc_summary.csv", "classes.xlsx", "report.html"):
        assert (out / name).is_file()
    cust = pd.read_csv(out / "abc_customers.csv")
    assert set(cust["class"]) == {"A", "B", "C"}
    assert cust["cumulative_share"].iloc[-1] == pytest.approx(1.0)
    # the usage value is recomputed here from the demo's own CSV files: Σ quantity × unit_value
    dem = pd.read_csv(DEMO / "demand.csv").merge(pd.read_csv(DEMO / "products.csv"), on="product")
    assert cust["usage_value"].sum() == pytest.approx((dem["quantity"] * dem["unit_value"]).sum())
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "ABC of customers" in page and "<svg" in page
    written = netopt.load_case(out / "case")
    cls = dict(zip(cust["item"], cust["class"]))
    sc = dict(zip(written.tables["customers"]["customer"], written.tables["customers"]["service_class"]))
    assert all(sc[c] == ("express" if k == "A" else "standard") for c, k in cls.items())
    r = netopt.solve(written)
    assert r.status == "optimal" and r.verification.passed
    ss = r.tables["safety_stock"]  # the demo's three products are all class A: z = Φ⁻¹(0.98) (scipy.stats.norm)
    assert len(ss) > 0
    assert ss["z"].to_numpy() == pytest.approx(norm.ppf(0.98), rel=1e-12)


def test_classify_cli_refuses_bad_options(tmp_path):
    assert run(["classify", str(DEMO), "--out", str(tmp_path / "x"), "--bounds", "0.9,0.5", "-q"]) == 2
    assert run(["classify", str(DEMO), "--out", str(tmp_path / "x"), "--csl-by-class", "A=0.9", "-q"]) == 2
    assert run(["classify", str(DEMO), "--out", str(tmp_path / "y"), "--measure", "revenue", "-q"]) == 2
    assert run(["classify", str(DEMO), "--out", str(tmp_path / "x"), "--xyz", "0.5,0.2", "-q"]) == 2
    assert run(["classify", str(DEMO), "--out", str(tmp_path / "z"), "--xyz", "0.5,1.5", "-q", "--no-report"]) == 0
    assert set(pd.read_csv(tmp_path / "z" / "abc_customers.csv")["xyz"]) == {"X"}  # every zone's CV is below 0.5
    assert not (tmp_path / "x").exists() and not (tmp_path / "y").exists()


def test_case_copy_keeps_demo_untouched(tmp_path):
    # classify never writes into the case it reads (its results folder is elsewhere)
    src = tmp_path / "demo"
    shutil.copytree(DEMO, src)
    before = {p.name: p.read_bytes() for p in src.iterdir()}
    assert run(["classify", str(src), "--out", str(tmp_path / "o"), "--csl-by-class", "A=0.98,B=0.95,C=0.9", "-q"]) == 0
    assert {p.name: p.read_bytes() for p in src.iterdir()} == before
