"""Validation of case tables and settings: every rule names the table, row and column.

Row numbers are checked against the file itself: the bad value is looked up in the
CSV text written by the test (line = 1 + number of newlines before it), not taken
from the loader.  Reachability is checked against networkx's graph search.
"""

from __future__ import annotations

import math
import subprocess
import sys
import tempfile
from pathlib import Path

import networkx as nx
import pandas as pd
import pytest
from casekit import TINY, make_case_dir, tiny_rows
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netopt.cli import main
from netopt.data.case import CaseError
from netopt.data.coerce import coerce_settings
from netopt.data.io import load_case
from netopt.data.reach import unreachable_demand
from netopt.data.schema import TABLES
from netopt.data.validate import validate

REPO = Path(__file__).resolve().parent.parent


def errors_of(folder) -> list:
    """The errors load_case raises for a folder (fails the test if it loads)."""
    with pytest.raises(CaseError) as info:
        load_case(folder)
    return info.value.problems


def find(problems, table, row, column, text=None):
    """The one problem at (table, row, column) whose message contains ``text``."""
    hits = [
        p
        for p in problems
        if (p.table, p.row, p.column) == (table, row, column) and (text is None or text in p.message)
    ]
    assert hits, f"no problem at {table}/{row}/{column} ~ {text!r}; got:\n" + "\n".join(map(str, problems))
    return hits[0]


def line_of(folder: Path, table: str, needle: str) -> int:
    """Line number of the first line of ``<table>.csv`` containing ``needle`` (header = line 1)."""
    for i, line in enumerate((folder / f"{table}.csv").read_text(encoding="utf-8").splitlines(), start=1):
        if needle in line:
            return i
    raise AssertionError(f"{needle!r} not in {table}.csv")


def with_row(table: str, i: int, **changes) -> list[dict]:
    rows = tiny_rows()[table]
    rows[i].update(changes)
    return rows


# --------------------------------------------------------------------------- the tiny case itself


def test_tiny_case_is_valid(tiny_case_dir):
    case = load_case(tiny_case_dir)
    assert [p for p in case.warnings if p.severity == "error"] == []
    assert case.name == "tiny"


# --------------------------------------------------------------------------- missing tables and columns


def test_missing_required_table(tmp_path):
    probs = errors_of(make_case_dir(tmp_path, demand=None))
    p = find(probs, "demand", None, None, "required table is missing")
    assert "demand.csv" in p.message


def test_missing_optional_table_is_fine(tmp_path):
    case = load_case(make_case_dir(tmp_path, bill_of_materials=None))
    assert case.tables["bill_of_materials"].empty
    assert list(case.tables["bill_of_materials"].columns) == TABLES["bill_of_materials"].column_names


def test_missing_required_column(tmp_path):
    rows = [{k: v for k, v in r.items() if k != "unit_cost"} for r in TINY["suppliers"]]
    find(errors_of(make_case_dir(tmp_path, suppliers=rows)), "suppliers", None, "unit_cost", "required column")


def test_missing_optional_column_takes_default(tmp_path):
    rows = [{k: v for k, v in r.items() if k != "capacity"} for r in TINY["suppliers"]]
    case = load_case(make_case_dir(tmp_path, suppliers=rows))
    assert (case.tables["suppliers"]["capacity"] == math.inf).all()


def test_unknown_column_is_a_warning_with_hint(tmp_path):
    rows = [dict(r, quantiy="1") for r in TINY["demand"]]
    case = load_case(make_case_dir(tmp_path, demand=rows))
    w = find(case.warnings, "demand", None, "quantiy", "unknown column")
    assert w.severity == "warning" and "quantity" in w.message
    assert "quantiy" not in case.tables["demand"].columns


# --------------------------------------------------------------------------- cell types and ranges


def test_text_where_number_expected(tmp_path):
    folder = make_case_dir(tmp_path, demand=with_row("demand", 1, quantity="abc"))
    p = find(errors_of(folder), "demand", line_of(folder, "demand", "abc"), "quantity")
    assert "number expected, got 'abc'" in p.message


def test_decimal_comma_gets_a_hint(tmp_path):
    folder = make_case_dir(tmp_path, products=with_row("products", 0, unit_weight_kg="12,5"))
    p = find(errors_of(folder), "products", line_of(folder, "products", "12,5"), "unit_weight_kg")
    assert "dot for decimals" in p.message


@pytest.mark.parametrize("blank", ["", "   ", "NaN", "nan", "NA"])
def test_blank_or_nan_in_required_number_column(tmp_path, blank):
    folder = make_case_dir(tmp_path, products=with_row("products", 2, unit_value=blank))
    find(errors_of(folder), "products", 4, "unit_value", "required column")


def test_blank_in_required_text_column(tmp_path):
    folder = make_case_dir(tmp_path, customers=with_row("customers", 1, customer=""))
    find(errors_of(folder), "customers", 3, "customer", "blank value")


def test_negative_value(tmp_path):
    folder = make_case_dir(tmp_path, suppliers=with_row("suppliers", 2, unit_cost="-3"))
    p = find(errors_of(folder), "suppliers", line_of(folder, "suppliers", "-3"), "unit_cost")
    assert "at least 0" in p.message and "-3" in p.message


@pytest.mark.parametrize("column,value", [("lat", "90.5"), ("lat", "-91"), ("lon", "180.01"), ("lon", "-200")])
def test_coordinates_out_of_range(tmp_path, column, value):
    # Latitude lies in [-90, 90] and longitude in [-180, 180] degrees (WGS84; common practice, no source).
    folder = make_case_dir(tmp_path, customers=with_row("customers", 0, **{column: value}))
    find(errors_of(folder), "customers", 2, column, "between")


def test_share_above_one(tmp_path):
    rows = [{"service_class": "standard", "max_days": "3", "target_share": "1.2"}]
    find(
        errors_of(make_case_dir(tmp_path, service_classes=rows)),
        "service_classes",
        2,
        "target_share",
        "between 0 and 1",
    )


def test_zero_speed_rejected(tmp_path):
    folder = make_case_dir(tmp_path, modes=with_row("modes", 1, speed_km_per_day="0"))
    find(errors_of(folder), "modes", 3, "speed_km_per_day", "greater than 0")


def test_infinity_only_where_it_means_no_limit(tmp_path):
    folder = make_case_dir(tmp_path, suppliers=with_row("suppliers", 0, unit_cost="inf", capacity="inf"))
    probs = errors_of(folder)
    find(probs, "suppliers", 2, "unit_cost", "finite number")
    assert not [p for p in probs if p.column == "capacity"]


def test_value_not_among_choices(tmp_path):
    folder = make_case_dir(tmp_path, dcs=with_row("dcs", 1, status="planned"))
    p = find(errors_of(folder), "dcs", 3, "status")
    assert "'planned' is not one of: existing, candidate" in p.message


def test_choices_ignore_case(tmp_path):
    case = load_case(make_case_dir(tmp_path, dcs=with_row("dcs", 1, status="Existing", force="OPEN")))
    assert case.tables["dcs"].loc[3, "status"] == "existing" and case.tables["dcs"].loc[3, "force"] == "open"


def test_flag_not_true_or_false(tmp_path):
    folder = make_case_dir(tmp_path, modes=with_row("modes", 0, generate_lanes="maybe"))
    find(errors_of(folder), "modes", 2, "generate_lanes", "true or false expected, got 'maybe'")


def test_unknown_leg_of_a_mode(tmp_path):
    folder = make_case_dir(tmp_path, modes=with_row("modes", 1, legs="plant-dc|dc-moon"))
    find(errors_of(folder), "modes", 3, "legs", "'dc-moon'")


def test_mode_min_km_above_max_km(tmp_path):
    folder = make_case_dir(tmp_path, modes=with_row("modes", 1, min_km="500", max_km="100"))
    find(errors_of(folder), "modes", 3, "min_km", "greater than max_km")


# --------------------------------------------------------------------------- keys


def test_duplicate_key_names_both_rows(tmp_path):
    rows = tiny_rows()["demand"] + [dict(TINY["demand"][2], quantity="7")]
    p = find(errors_of(make_case_dir(tmp_path, demand=rows)), "demand", 5, "customer", "duplicate key")
    assert "rows 4 and 5" in p.message and "CU-MUC" in p.message and "widget" in p.message


def test_duplicate_single_key(tmp_path):
    rows = tiny_rows()["products"] + [dict(TINY["products"][0])]
    p = find(errors_of(make_case_dir(tmp_path, products=rows)), "products", 5, "product", "duplicate key")
    assert "rows 2 and 5" in p.message


# --------------------------------------------------------------------------- references


@pytest.mark.parametrize(
    "table,i,column,value",
    [
        ("demand", 0, "customer", "CU-NOWHERE"),
        ("demand", 2, "product", "sprocket"),
        ("suppliers", 1, "product", "copper"),
        ("plants", 0, "product", "sprocket"),
        ("bill_of_materials", 0, "material", "copper"),
        ("bill_of_materials", 0, "product", "sprocket"),
    ],
)
def test_reference_does_not_resolve(tmp_path, table, i, column, value):
    folder = make_case_dir(tmp_path, **{table: with_row(table, i, **{column: value})})
    p = find(errors_of(folder), table, i + 2, column, f"'{value}'")
    assert "unknown" in p.message


def test_dc_size_for_unknown_dc(tmp_path):
    rows = [
        {"dc": "DC-PAR", "size": "S", "capacity": "1000", "fixed_cost": "1"},
        {"dc": "DC-ROM", "size": "L", "capacity": "9000", "fixed_cost": "5"},
    ]
    find(errors_of(make_case_dir(tmp_path, dc_sizes=rows)), "dc_sizes", 3, "dc", "unknown dc 'DC-ROM'")


def _lane(**kw):
    row = {
        "origin": "DC-PAR",
        "destination": "CU-BRU",
        "mode": "road",
        "product": "",
        "distance_km": "",
        "cost_per_unit": "",
        "transit_days": "",
        "capacity": "",
        "available": "",
    }
    row.update(kw)
    return row


@pytest.mark.parametrize(
    "lane,column,text",
    [
        (_lane(mode="barge"), "mode", "unknown mode 'barge'"),
        (_lane(product="sprocket"), "product", "unknown product 'sprocket'"),
        (_lane(origin="XX-1"), "origin", "unknown origin site 'XX-1'"),
        (_lane(destination="XX-2"), "destination", "unknown destination site 'XX-2'"),
        (_lane(origin="CU-MUC"), "origin", "is a customer"),
        (_lane(destination="ORE-N"), "destination", "is a supplier"),
        (_lane(origin="PL-LYON", destination="PL-LYON"), "destination", "to itself"),
        (_lane(origin="ORE-N", destination="CU-BRU"), "destination", "not a leg"),
    ],
)
def test_bad_explicit_lane(tmp_path, lane, column, text):
    rows = [_lane(), lane]
    find(errors_of(make_case_dir(tmp_path, lanes=rows)), "lanes", 3, column, text)


def test_good_explicit_lane_is_accepted(tmp_path):
    case = load_case(make_case_dir(tmp_path, lanes=[_lane(capacity="100", transit_days="1")]))
    assert case.tables["lanes"].loc[2, "capacity"] == 100.0


def test_site_code_reused_across_tables(tmp_path):
    folder = make_case_dir(
        tmp_path, customers=with_row("customers", 1, customer="ORE-S"), demand=with_row("demand", 2, customer="ORE-S")
    )
    p = find(errors_of(folder), "customers", 3, "customer", "already used in suppliers (row 3)")
    assert "ORE-S" in p.message


def test_plant_rows_disagree_on_location(tmp_path):
    rows = tiny_rows()["plants"] + [dict(TINY["plants"][0], product="gadget", lon="4.9")]
    p = find(errors_of(make_case_dir(tmp_path, plants=rows)), "plants", 3, "lon", "PL-LYON")
    assert "row 2" in p.message


def test_supplier_rows_disagree_on_location_and_region(tmp_path):
    rows = tiny_rows()["suppliers"] + [dict(TINY["suppliers"][0], product="gadget", lat="51.5", region="north")]
    probs = errors_of(make_case_dir(tmp_path, suppliers=rows))
    find(probs, "suppliers", 5, "lat", "ORE-N")
    find(probs, "suppliers", 5, "region", "'north'")


def test_demand_for_a_material(tmp_path):
    rows = tiny_rows()["demand"] + [{"customer": "CU-MUC", "product": "steel", "quantity": "5", "demand_cv": ""}]
    find(errors_of(make_case_dir(tmp_path, demand=rows)), "demand", 5, "product", "is a material")


def test_unknown_service_class(tmp_path):
    classes = [{"service_class": "standard", "max_days": "2", "target_share": "0.9"}]
    folder = make_case_dir(tmp_path, service_classes=classes, customers=with_row("customers", 1, service_class="gold"))
    find(errors_of(folder), "customers", 3, "service_class", "unknown service class 'gold'")


def test_road_edge_of_unknown_mode(tmp_path):
    edges = [{"from_node": "DC-PAR", "to_node": "J1", "km": "10", "mode": "hover"}]
    find(errors_of(make_case_dir(tmp_path, road_edges=edges)), "road_edges", 2, "mode", "unknown mode 'hover'")


# --------------------------------------------------------------------------- settings


def test_setting_wrong_type_names_file_and_entry(tmp_path):
    probs = errors_of(make_case_dir(tmp_path, settings={"solver": {"time_limit_s": "soon"}}))
    find(probs, "settings.toml", None, "[solver] time_limit_s", "number expected, got 'soon'")


@pytest.mark.parametrize(
    "section,name,value,text",
    [
        ("solver", "mip_gap", 2.0, "between 0 and 1"),
        ("solver", "threads", 0, "at least 1"),
        ("solver", "threads", 1.5, "whole number"),
        ("policy", "single_sourcing", "perhaps", "true or false"),
        ("inventory", "cycle_service_level", 1.0, "between 0.5 and 0.99999"),
        ("lanes", "legs", ["dc-customer", "dc-moon"], "'dc-moon'"),
        ("policy", "max_open_dcs", True, "whole number expected"),
    ],
)
def test_setting_out_of_range_or_type(tmp_path, section, name, value, text):
    probs = errors_of(make_case_dir(tmp_path, settings={section: {name: value}}))
    find(probs, "settings.toml", None, f"[{section}] {name}", text)


def test_unknown_setting_section_and_name_are_warnings(tmp_path):
    case = load_case(make_case_dir(tmp_path, settings={"solvr": {"x": 1}, "solver": {"time_limt_s": 5}}))
    find(case.warnings, "settings.toml", None, "[solvr]", "unknown section")
    w = find(case.warnings, "settings.toml", None, "[solver] time_limt_s", "unknown setting")
    assert "time_limit_s" in w.message
    assert case.settings["solver"]["time_limit_s"] == 30.0


def test_settings_defaults_and_lenient_types():
    s, probs = coerce_settings(
        {
            "solver": {"threads": 2.0, "time_limit_s": 5},
            "policy": {"single_sourcing": "yes"},
            "lanes": {"legs": "dc-customer|plant-dc"},
        }
    )
    assert probs == []
    assert s["solver"]["threads"] == 2 and isinstance(s["solver"]["threads"], int)
    assert s["solver"]["time_limit_s"] == 5.0 and s["policy"]["single_sourcing"] is True
    assert s["lanes"]["legs"] == ["dc-customer", "plant-dc"]
    assert s["inventory"]["holding_rate"] == 0.25  # schema default


def test_min_open_dcs_above_max(tmp_path):
    probs = errors_of(make_case_dir(tmp_path, settings={"policy": {"min_open_dcs": 2, "max_open_dcs": 1}}))
    find(probs, "settings.toml", None, "[policy] min_open_dcs", "greater than max_open_dcs")


def test_min_open_dcs_with_no_max_is_fine(tmp_path):
    case = load_case(make_case_dir(tmp_path, settings={"policy": {"min_open_dcs": 2, "max_open_dcs": -1}}))
    assert case.settings["policy"]["min_open_dcs"] == 2


def test_more_dcs_forced_open_than_allowed(tmp_path):
    dcs = tiny_rows()["dcs"]
    for r in dcs:
        r["force"] = "open"
    probs = errors_of(make_case_dir(tmp_path, dcs=dcs, settings={"policy": {"max_open_dcs": 1}}))
    find(probs, "settings.toml", None, "[policy] max_open_dcs", "2 DC(s) forced open")


# --------------------------------------------------------------------------- all at once


def test_every_problem_reported_at_once(tmp_path):
    r = tiny_rows()
    r["demand"][0]["quantity"] = "abc"
    r["customers"][1]["lat"] = "123"
    r["dcs"][1]["status"] = "maybe"
    folder = make_case_dir(
        tmp_path, demand=r["demand"], customers=r["customers"], dcs=r["dcs"], settings={"solver": {"mip_gap": -1}}
    )
    probs = errors_of(folder)
    find(probs, "demand", 2, "quantity")
    find(probs, "customers", 3, "lat")
    find(probs, "dcs", 3, "status")
    find(probs, "settings.toml", None, "[solver] mip_gap")


def test_validate_accepts_typed_tables_of_a_case(tiny_case_dir):
    case = load_case(tiny_case_dir)
    assert [p for p in validate(case.tables, case.settings) if p.severity == "error"] == []
    broken = case.copy()
    broken.tables["demand"].loc[3, "quantity"] = -5.0
    find(validate(broken.tables, broken.settings), "demand", 3, "quantity", "at least 0")


# --------------------------------------------------------------------------- reachability


def _lanes(rows):
    """A hand-made lane table by the lane-table contract (one row per origin, destination, mode, product)."""
    cols = [
        "origin",
        "origin_kind",
        "destination",
        "destination_kind",
        "leg",
        "mode",
        "product",
        "distance_km",
        "transit_days",
        "cost_per_unit",
        "capacity",
        "source",
    ]
    out = []
    for o, ok, d, dk, *rest in rows:
        product = rest[0] if rest else ""
        cap = rest[1] if len(rest) > 1 else math.inf
        mode = rest[2] if len(rest) > 2 else "road"
        out.append([o, ok, d, dk, f"{ok}-{dk}", mode, product, 100.0, 1.0, math.nan, cap, "explicit"])
    return pd.DataFrame(out, columns=cols)


@pytest.fixture
def tiny_tables(tiny_case_dir):
    return load_case(tiny_case_dir).tables


FULL = [
    ("ORE-N", "supplier", "PL-LYON", "plant"),
    ("PL-LYON", "plant", "DC-PAR", "dc"),
    ("DC-PAR", "dc", "CU-BRU", "customer"),
    ("DC-PAR", "dc", "CU-MUC", "customer"),
    ("GAD-CO", "supplier", "DC-FRA", "dc"),
    ("DC-FRA", "dc", "CU-BRU", "customer"),
]


def test_reachable_network_has_no_problem(tiny_tables):
    assert unreachable_demand(tiny_tables, _lanes(FULL)) == []


def test_customer_without_inbound_lane(tiny_tables):
    lanes = _lanes([r for r in FULL if r[2] != "CU-MUC"])
    probs = unreachable_demand(tiny_tables, lanes)
    assert [(p.table, p.row, p.column) for p in probs] == [("demand", 4, "customer")]
    assert "CU-MUC" in probs[0].message and "widget" in probs[0].message


def test_path_through_two_dcs(tiny_tables):
    lanes = _lanes(
        [r for r in FULL if r[2] != "CU-MUC"]
        + [("DC-PAR", "dc", "DC-FRA", "dc"), ("DC-FRA", "dc", "CU-MUC", "customer")]
    )
    assert unreachable_demand(tiny_tables, lanes) == []


def test_dc_forced_closed_carries_nothing(tiny_tables):
    tables = dict(tiny_tables)
    tables["dcs"] = tiny_tables["dcs"].assign(force=["closed", ""])
    probs = unreachable_demand(tables, _lanes(FULL))
    assert {(p.row, p.column) for p in probs} == {(2, "customer"), (4, "customer")}  # the widget rows


def test_plant_without_its_material_is_no_source(tiny_tables):
    probs = unreachable_demand(tiny_tables, _lanes(FULL[1:]))
    assert {(p.row, p.column) for p in probs} == {(2, "product"), (4, "product")}
    assert "steel" in probs[0].message and "PL-LYON" in probs[0].message


def test_product_row_with_zero_capacity_overrides_the_all_products_row(tiny_tables):
    lanes = _lanes(FULL + [("DC-FRA", "dc", "CU-BRU", "customer", "gadget", 0.0)])
    probs = unreachable_demand(tiny_tables, lanes)
    assert [(p.row, p.column) for p in probs] == [(3, "customer")]
    # ... but a second mode's "" row on the same pair still carries it
    lanes = _lanes(
        FULL
        + [
            ("DC-FRA", "dc", "CU-BRU", "customer", "gadget", 0.0),
            ("DC-FRA", "dc", "CU-BRU", "customer", "", math.inf, "rail"),
        ]
    )
    assert unreachable_demand(tiny_tables, lanes) == []


def test_product_without_any_source(tiny_tables):
    tables = dict(tiny_tables)
    tables["suppliers"] = tiny_tables["suppliers"][tiny_tables["suppliers"]["product"] != "gadget"]
    probs = unreachable_demand(tables, _lanes(FULL))
    assert [(p.row, p.column) for p in probs] == [(3, "product")]
    assert "no plant makes and no supplier offers 'gadget'" in probs[0].message


def test_zero_demand_needs_no_path(tiny_tables):
    tables = dict(tiny_tables)
    tables["demand"] = tiny_tables["demand"].assign(quantity=[1000.0, 200.0, 0.0])
    assert unreachable_demand(tables, _lanes([r for r in FULL if r[2] != "CU-MUC"])) == []


@settings(max_examples=60, deadline=None)
@given(data=st.data())
def test_reachability_agrees_with_networkx(data):
    """Random small networks: our joins against networkx.has_path on the product's own graph."""
    n_s, n_d, n_c = 2, 3, 4
    sups = [f"S{i}" for i in range(n_s)]
    dcs_ = [f"D{i}" for i in range(n_d)]
    custs = [f"C{i}" for i in range(n_c)]
    prods = ["p", "q"]
    kinds = {**dict.fromkeys(sups, "supplier"), **dict.fromkeys(dcs_, "dc"), **dict.fromkeys(custs, "customer")}
    pairs = [(o, d) for o in sups + dcs_ for d in dcs_ + custs if o != d]
    chosen = data.draw(
        st.lists(
            st.tuples(st.sampled_from(pairs), st.sampled_from(["", "p", "q"]), st.sampled_from([0.0, 5.0, math.inf])),
            max_size=25,
        )
    )
    offers = data.draw(
        st.lists(st.tuples(st.sampled_from(sups), st.sampled_from(prods)), min_size=1, max_size=4, unique=True)
    )
    lanes = _lanes([(o, kinds[o], d, kinds[d], p, cap) for (o, d), p, cap in chosen])
    lanes = lanes.drop_duplicates(["origin", "destination", "mode", "product"])
    tables = {name: pd.DataFrame(columns=t.column_names) for name, t in TABLES.items()}
    tables["suppliers"] = pd.DataFrame({"supplier": [s for s, _ in offers], "product": [p for _, p in offers]})
    tables["plants"] = pd.DataFrame(columns=["plant", "product"])
    tables["bill_of_materials"] = pd.DataFrame(columns=["product", "material"])
    tables["dcs"] = pd.DataFrame({"dc": dcs_, "force": [""] * n_d})
    demand = pd.DataFrame([(c, p, 1.0) for c in custs for p in prods], columns=["customer", "product", "quantity"])
    demand.index = range(2, 2 + len(demand))
    tables["demand"] = demand
    got = {(p.row) for p in unreachable_demand(tables, lanes)}

    rows = list(lanes[["origin", "destination", "mode", "product", "capacity"]].itertuples(index=False))
    own_cap = {(o, d, m, p): cap for o, d, m, p, cap in rows if p != ""}
    expected = set()
    for row, (c, p, _) in demand.iterrows():
        g = nx.DiGraph()
        g.add_nodes_from(kinds)
        for o, d, m, prod, cap in rows:
            if prod == "":
                cap = own_cap.get((o, d, m, p), cap)  # a product's own row wins over the "" row
            elif prod != p:
                continue
            # only sources of p and DCs pass goods on
            if cap > 0 and (kinds[o] == "dc" or (o, p) in offers):
                g.add_edge(o, d)
        if not any(nx.has_path(g, s, c) for s, q in offers if q == p):
            expected.add(row)
    assert got == expected


def test_unreachable_customer_through_real_lane_builder(tmp_path):
    """lanes.max_dc_customer_km between the two customers' nearest-source distances cuts off only Munich."""
    from geographiclib.geodesic import Geodesic  # reference geodesics, independent of netopt.geo

    def km(a, b):
        return Geodesic.WGS84.Inverse(a[0], a[1], b[0], b[1])["s12"] / 1000.0

    rows = tiny_rows()
    pos = {
        r[k]: (float(r["lat"]), float(r["lon"]))
        for t, k in (("dcs", "dc"), ("plants", "plant"), ("customers", "customer"))
        for r in rows[t]
    }
    circuity = 1.2  # the road mode of the tiny case
    srcs = ["DC-PAR", "DC-FRA", "PL-LYON"]
    near_bru = min(km(pos[s], pos["CU-BRU"]) for s in srcs) * circuity
    near_muc = min(km(pos[s], pos["CU-MUC"]) for s in srcs) * circuity
    assert near_bru < near_muc - 20  # room for the spherical/ellipsoidal difference (< 0.6 %)
    cut = (near_bru + near_muc) / 2
    folder = make_case_dir(tmp_path, settings={"lanes": {"max_dc_customer_km": cut}})
    probs = errors_of(folder)
    assert [(p.table, p.row, p.column) for p in probs] == [("demand", 4, "customer")]
    assert "CU-MUC" in probs[0].message


# --------------------------------------------------------------------------- mangled cases never crash

NUMERIC = [(t.name, c.name) for t in TABLES.values() for c in t.columns if c.type in ("float", "int")]
JUNK = st.one_of(
    st.sampled_from(
        [
            "",
            " ",
            "nan",
            "NaN",
            "-1",
            "-0.5",
            "abc",
            "1e400",
            "inf",
            "-inf",
            "1,5",
            "true",
            "0",
            "None",
            "\x00",
            "\u00e9t\u00e9",
            '"',
            "\n",
            "x,y",
        ]
    ),
    st.text(max_size=6),
)


def _mangle(rows, data):
    table = data.draw(st.sampled_from(sorted(rows)))
    op = data.draw(st.sampled_from(["drop_column", "set_cell", "duplicate_row", "drop_row", "extra_column"]))
    tr = rows[table]
    if not tr or not tr[0]:
        return table, "none"
    if op == "drop_column":
        col = data.draw(st.sampled_from(list(tr[0])))
        for r in tr:
            r.pop(col, None)
    elif op == "set_cell":
        i = data.draw(st.integers(0, len(tr) - 1))
        col = data.draw(st.sampled_from(list(tr[0])))
        tr[i][col] = data.draw(JUNK)
    elif op == "duplicate_row":
        tr.append(dict(tr[data.draw(st.integers(0, len(tr) - 1))]))
    elif op == "drop_row":
        tr.pop(data.draw(st.integers(0, len(tr) - 1)))
        if not tr:
            rows[table] = [dict.fromkeys(TABLES[table].column_names, "")]
    else:
        for r in tr:
            r["junk col"] = data.draw(JUNK)
    return table, op


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_mangled_case_gives_case_error_or_case(data):
    rows = tiny_rows()
    for _ in range(data.draw(st.integers(1, 3))):
        _mangle(rows, data)
    with tempfile.TemporaryDirectory() as d:
        folder = make_case_dir(d, **rows)
        try:
            case = load_case(folder)
        except CaseError as e:
            assert e.problems and all(p.severity == "error" for p in e.problems)
            assert "error(s) in the case data" in e.report()
        else:
            assert set(case.tables) == set(TABLES)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_bad_number_is_always_named_precisely(data):
    table, column = data.draw(st.sampled_from([tc for tc in NUMERIC if tc[0] in TINY and tc[1] in TINY[tc[0]][0]]))
    rows = tiny_rows()
    i = data.draw(st.integers(0, len(rows[table]) - 1))
    bad = data.draw(st.sampled_from(["abc", "12 kg", "1..2", "--1", "-inf", "1 000"]))
    rows[table][i][column] = bad
    with tempfile.TemporaryDirectory() as d:
        folder = make_case_dir(d, **{table: rows[table]})
        with pytest.raises(CaseError) as info:
            load_case(folder)
        find(info.value.problems, table, i + 2, column)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_dropped_required_column_or_blank_required_cell_is_named(data):
    table = data.draw(st.sampled_from(sorted(TINY)))
    required = [c.name for c in TABLES[table].columns if c.required]
    column = data.draw(st.sampled_from(required))
    rows = tiny_rows()
    blank_cell = data.draw(st.booleans())
    with tempfile.TemporaryDirectory() as d:
        if blank_cell:
            i = data.draw(st.integers(0, len(rows[table]) - 1))
            rows[table][i][column] = data.draw(
                st.sampled_from(["", "  ", "NaN"] if TABLES[table].column(column).type != "str" else ["", "  "])
            )
            where = (table, i + 2, column)
        else:
            for r in rows[table]:
                del r[column]
            where = (table, None, column)
        with pytest.raises(CaseError) as info:
            load_case(make_case_dir(d, **{table: rows[table]}))
        find(info.value.problems, *where)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_duplicated_row_is_a_duplicate_key(data):
    table = data.draw(st.sampled_from(sorted(TINY)))
    rows = tiny_rows()
    i = data.draw(st.integers(0, len(rows[table]) - 1))
    rows[table].append(dict(rows[table][i]))
    with tempfile.TemporaryDirectory() as d:
        with pytest.raises(CaseError) as info:
            load_case(make_case_dir(d, **{table: rows[table]}))
        p = find(info.value.problems, table, len(rows[table]) + 1, TABLES[table].key[0], "duplicate key")
        assert f"rows {i + 2} and {len(rows[table]) + 1}" in p.message


# --------------------------------------------------------------------------- command line


def test_cli_broken_case_prints_every_error_and_exits_2(tmp_path):
    r = tiny_rows()
    r["demand"][0]["quantity"] = "abc"
    r["dcs"][0]["status"] = "closing"
    folder = make_case_dir(tmp_path, demand=r["demand"], dcs=r["dcs"], products=None)
    proc = subprocess.run(
        [sys.executable, "-m", "netopt.cli", "check", str(folder)],
        capture_output=True,
        text=True,
        cwd=REPO,
        timeout=120,
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr + proc.stdout
    assert "demand, row 2, column 'quantity'" in proc.stderr
    assert "dcs, row 2, column 'status'" in proc.stderr
    assert "products: required table is missing" in proc.stderr.replace("ERROR   ", "")


def test_cli_check_summary(tiny_case_dir, capsys):
    with pytest.raises(SystemExit) as info:
        main(["check", str(tiny_case_dir)])
    assert info.value.code == 0
    out = capsys.readouterr().out
    lines = {line.split()[0]: line for line in out.splitlines()[1:] if line.strip()}
    assert lines["suppliers"].split()[1] == "3" and lines["plants"].split()[1] == "1"
    assert "1 existing, 1 candidate" in lines["DCs"]
    assert lines["customers"].split()[1] == "2"
    assert "2 finished, 1 materials" in lines["products"]
    assert "1,700 units/year" in lines["demand"]  # 1000 + 200 + 500 in the tiny case
    assert "road" in lines["lanes"]


def test_cli_quiet_prints_nothing_on_success(tiny_case_dir, capsys):
    with pytest.raises(SystemExit) as info:
        main(["check", "--quiet", str(tiny_case_dir)])
    assert info.value.code == 0
    cap = capsys.readouterr()
    assert cap.out == "" and cap.err == ""


def test_cli_missing_case_exits_2(tmp_path, capsys):
    with pytest.raises(SystemExit) as info:
        main(["check", str(tmp_path / "nowhere")])
    assert info.value.code == 2
    assert "no such case folder" in capsys.readouterr().err


def test_cli_without_verb_exits_2(capsys):
    with pytest.raises(SystemExit) as info:
        main([])
    assert info.value.code == 2


def test_broken_copy_of_the_demo_case_reports_every_error_and_exits_2(tmp_path):
    """The demo case, copied and broken in three tables at once: one report naming each, exit code 2."""
    import shutil
    import subprocess
    import sys

    demo = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"
    broken = tmp_path / "broken"
    shutil.copytree(demo, broken)
    dem = (broken / "demand.csv").read_text().splitlines()
    cols = dem[0].split(",")
    row = dem[1].split(",")
    row[cols.index("quantity")] = "-40"  # negative demand on line 2
    dem[1] = ",".join(row)
    dem.append(dem[2].replace(dem[2].split(",")[0], "C_NOWHERE", 1))  # unknown customer on the last line
    (broken / "demand.csv").write_text("\n".join(dem) + "\n")
    dcs = (broken / "dcs.csv").read_text().splitlines()
    cols = dcs[0].split(",")
    row = dcs[1].split(",")
    row[cols.index("lat")] = "123.4"  # latitude out of range on line 2
    dcs[1] = ",".join(row)
    (broken / "dcs.csv").write_text("\n".join(dcs) + "\n")
    p = subprocess.run([sys.executable, "-m", "netopt", "check", str(broken)], capture_output=True, text=True)
    assert p.returncode == 2
    assert "Traceback" not in p.stderr
    assert "demand.csv" in p.stderr or "demand" in p.stderr
    assert "row 2, column 'quantity'" in p.stderr
    assert f"row {len(dem)}, column 'customer'" in p.stderr and "C_NOWHERE" in p.stderr
    assert "dcs, row 2, column 'lat'" in p.stderr or ("dcs" in p.stderr and "column 'lat'" in p.stderr)
    assert p.stderr.count("ERROR") >= 3


@pytest.mark.parametrize(
    "table,column,cells",
    [
        ("dcs", "dc", [" D1", "D2 ", "\ufeffD3"]),
        ("dcs", "status", ["Existing", "candidate", ""]),
        ("dcs", "status", ["existing", "closed-ish"]),
        ("dcs", "dc", ["D1", ""]),
        ("dcs", "dc", ["D1", "D\x072"]),
        ("products", "kind", ["MATERIAL", "finished", " material "]),
    ],
)
def test_whole_column_text_typing_equals_cell_by_cell(monkeypatch, table, column, cells):
    # The one-pass text typing gives exactly what the cell-by-cell path gives (values and dtype), and
    # hands every column with a problem to that path so each problem is worded (common practice, no source).
    import netopt.data.coerce as coerce
    from netopt.data.schema import TABLES

    col = TABLES[table].column(column)
    series = pd.Series(cells, index=range(2, 2 + len(cells)), dtype=object)
    fast, fast_problems = coerce.coerce_column(table, col, series)
    monkeypatch.setattr(coerce, "_plain_text_column", lambda c, s: None)
    slow, slow_problems = coerce.coerce_column(table, col, series)
    assert fast.equals(slow) and fast.dtype == slow.dtype
    assert [p.message for p in fast_problems] == [p.message for p in slow_problems]
