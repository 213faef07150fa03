"""The benchmark generator (benchmarks/generator.py): valid, deterministic, built to its design."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from benchmarks.generator import (  # noqa: E402
    LAT_RANGE,
    LON_RANGE,
    MAX_SUPPLIER_SHARE,
    ROAD_CIRCUITY,
    SERVICE_TARGET,
    SERVICE_WINDOW_DAYS,
    size_spec,
    synthetic_case,
)
from netopt.data.case import Case  # noqa: E402
from netopt.network.lanes import build_lanes  # noqa: E402

TINY = {"suppliers": 6, "plants": 2, "dcs": 5, "customers": 12, "products": 2, "modes": 4}


@pytest.fixture(scope="module")
def tiny() -> Case:
    return synthetic_case(TINY, seed=3)


def test_tiny_case_is_valid_and_has_the_declared_counts(tiny):
    t = tiny.tables
    assert isinstance(tiny, Case)
    assert t["suppliers"]["supplier"].nunique() == 6
    assert t["plants"]["plant"].nunique() == 2
    assert len(t["dcs"]) == 5
    assert len(t["customers"]) == 12
    products = t["products"]
    assert (products["kind"] == "finished").sum() == 2
    assert list(t["modes"]["mode"]) == ["road-FTL", "road-LTL", "express", "rail"]
    # make_case typed it: numbers are floats.
    assert t["demand"]["quantity"].dtype.kind == "f"


def test_same_seed_same_case_other_seed_other_case():
    a = synthetic_case(TINY, seed=11)
    b = synthetic_case(TINY, seed=11)
    c = synthetic_case(TINY, seed=12)
    for name in a.tables:
        pd.testing.assert_frame_equal(a.tables[name], b.tables[name])
    assert a.settings == b.settings
    assert not a.tables["customers"][["lat", "lon"]].equals(c.tables["customers"][["lat", "lon"]])


def test_design_rules_hold(tiny):
    t = tiny.tables
    # At least 3 suppliers per material; every finished product made by at least 2 plants.
    mats = t["products"].loc[t["products"]["kind"] == "material", "product"]
    per_mat = t["suppliers"].groupby("product")["supplier"].nunique()
    assert (per_mat.reindex(mats).fillna(0) >= 3).all()
    per_prod = t["plants"].groupby("product")["plant"].nunique()
    assert (per_prod >= 2).all()
    # Every finished product has a bill of materials, so suppliers feed plants.
    fin = t["products"].loc[t["products"]["kind"] == "finished", "product"]
    assert set(fin) <= set(t["bill_of_materials"]["product"])
    # Every customer buys something; demand only for finished products.
    assert set(t["customers"]["customer"]) == set(t["demand"]["customer"])
    assert set(t["demand"]["product"]) <= set(fin)
    # Sites inside the Europe-sized box.
    for name in ("suppliers", "plants", "dcs", "customers"):
        assert t[name]["lat"].between(*LAT_RANGE).all() and t[name]["lon"].between(*LON_RANGE).all()
    # Policies of the design.
    assert tiny.settings["policy"]["max_supplier_share"] == MAX_SUPPLIER_SHARE
    sc = t["service_classes"].set_index("service_class")
    assert sc.loc["standard", "max_days"] == SERVICE_WINDOW_DAYS
    assert sc.loc["standard", "target_share"] == SERVICE_TARGET
    assert tiny.settings["inventory"]["safety_stock"] is False
    # Some supplier→plant lanes carry an explicit capacity.
    assert len(t["lanes"]) >= 1 and np.isfinite(t["lanes"]["capacity"]).all()


def test_box_is_about_4000_by_2500_km():
    # Geodesic lengths on the WGS84 ellipsoid (geographiclib, Karney 2013) of the box's edges.
    g = Geodesic.WGS84
    mid = (LAT_RANGE[0] + LAT_RANGE[1]) / 2
    ns = g.Inverse(LAT_RANGE[0], 10.0, LAT_RANGE[1], 10.0)["s12"] / 1000.0
    ew = g.Inverse(mid, LON_RANGE[0], mid, LON_RANGE[1])["s12"] / 1000.0
    assert 2300 < ns < 2700
    # A geodesic between two points on one parallel runs poleward of it, so it is a little
    # shorter than the parallel arc; 3600–4200 km covers "about 4000 km".
    assert 3600 < ew < 4200


def test_lane_rules_of_the_modes(tiny):
    lanes = build_lanes(tiny)
    rail = lanes[lanes["mode"] == "rail"]
    assert (rail["distance_km"] >= 300.0).all()
    assert not (rail["leg"] == "dc-customer").any()
    assert set(lanes.loc[lanes["mode"] == "express", "leg"]) <= {"dc-customer"}
    last = lanes[lanes["leg"] == "dc-customer"]
    limit = tiny.settings["lanes"]["max_dc_customer_km"]
    assert (last["distance_km"] <= limit).all()
    # Every customer keeps at least one DC within the limit.
    assert set(last["destination"]) == set(tiny.tables["customers"]["customer"])


def test_lane_limit_aims_at_the_nearest_dcs():
    # small: 20 DCs, so the 12-nearest rule leaves roughly 8–16 DCs per customer on median.
    case = synthetic_case("small", seed=0)
    lanes = build_lanes(case)
    last = lanes[(lanes["leg"] == "dc-customer") & (lanes["mode"] == "road-LTL")]
    per_customer = last.groupby("destination")["origin"].nunique()
    assert 8 <= per_customer.median() <= 16
    # Road distance = great-circle × circuity: check one lane against geographiclib.
    row = last.iloc[0]
    gc = (
        Geodesic.WGS84.Inverse(row["origin_lat"], row["origin_lon"], row["destination_lat"], row["destination_lon"])[
            "s12"
        ]
        / 1000.0
    )
    assert row["distance_km"] == pytest.approx(gc * ROAD_CIRCUITY, rel=0.006)  # sphere vs ellipsoid ≤ 0.5 %


def test_size_spec_rejects_bad_sizes():
    with pytest.raises(ValueError, match="unknown size"):
        size_spec("huge")
    with pytest.raises(ValueError, match="missing"):
        size_spec({"suppliers": 5})
    assert size_spec("medium")["dcs"] == 50
