"""Maps: land and borders from shipped map data, per-scenario maps and maps against the base.

Outside references: geography (which city coordinates are on land, which points are at sea;
city coordinates from memory), and each solve's own result tables (flows, DCs, lost demand)
for what a difference map shows.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from matplotlib.path import Path as MplPath
from randcase import random_case

from netopt.api import solve
from netopt.present.report import render_report
from netopt.present.report.land import LAND, outlines
from netopt.present.report.map import difference_styles, flow_changes, network_map_svg, run_layout
from netopt.present.report.map_layout import site_table
from netopt.studies.scenarios import Scenario, apply_changes, run_scenarios

CITIES_ON_LAND = {  # lat, lon (from memory)
    "Madrid": (40.42, -3.70),
    "Warsaw": (52.23, 21.01),
    "Chicago": (41.88, -87.63),
    "São Paulo": (-23.55, -46.63),
    "Shanghai inland (Suzhou)": (31.30, 120.62),
}
POINTS_AT_SEA = {  # open water, well away from any coast (from memory)
    "mid-Atlantic": (40.0, -35.0),
    "North Sea": (56.0, 3.0),
    "western Mediterranean": (38.5, 5.0),
    "Bay of Biscay": (45.5, -5.0),
}


def on_land(lat: float, lon: float) -> bool:
    levels, shapes, boxes = outlines("gshhs")
    hit = np.flatnonzero(
        (levels == LAND) & (boxes[:, 0] <= lon) & (boxes[:, 1] >= lon) & (boxes[:, 2] <= lat) & (boxes[:, 3] >= lat)
    )
    return any(MplPath(shapes[i]).contains_point((lon, lat)) for i in hit)


@pytest.mark.parametrize("name", sorted(CITIES_ON_LAND))
def test_shipped_shorelines_put_cities_on_land(name):
    assert on_land(*CITIES_ON_LAND[name])


@pytest.mark.parametrize("name", sorted(POINTS_AT_SEA))
def test_shipped_shorelines_leave_open_sea_as_sea(name):
    assert not on_land(*POINTS_AT_SEA[name])


def test_a_land_border_runs_through_a_border_town():
    """The France–Spain border passes Le Perthus (42.46 N, 2.86 E, from memory): a border vertex lies within
    0.15° of it, and none within 0.15° of Madrid, far from any border."""
    _levels, shapes, _boxes = outlines("countries")
    pts = np.vstack(shapes)

    def nearest(lat, lon):
        return float(np.min(np.hypot(pts[:, 0] - lon, pts[:, 1] - lat)))

    assert nearest(42.46, 2.86) < 0.15
    assert nearest(40.42, -3.70) > 0.15


# ----------------------------------------------------------------------------- against the base


@pytest.fixture(scope="module")
def solved():
    case = random_case(3)
    base = solve(case, mip_gap=1e-9)
    d = base.tables["dcs"]
    shut = str(d.loc[d["open"], "dc"].iloc[0])
    sc_case = apply_changes(case, Scenario("shut", [{"kind": "force_dc", "dc": shut, "to": "closed"}]))
    return case, base, solve(sc_case, mip_gap=1e-9), shut


def test_flow_changes_are_each_lanes_tonnes_now_less_in_the_base(solved):
    """Per lane (origin → destination, all modes and products): tonnes in the scenario's flows table minus
    tonnes in the base's, summed here from each result's own flows table."""
    _case, base, r, _shut = solved
    ch = flow_changes(base, r).set_index(["origin", "destination"])

    def tonnes(res):
        return res.tables["flows"].groupby(["origin", "destination"])["tonnes"].sum()

    was, now = tonnes(base), tonnes(r)
    for lane in set(was.index) | set(now.index):
        expect = float(now.get(lane, 0.0)) - float(was.get(lane, 0.0))
        assert ch.loc[lane, "change"] == pytest.approx(expect, abs=1e-9)
    assert set(ch.index) == set(was.index) | set(now.index)


def test_difference_styles_follow_each_results_dc_table(solved):
    _case, base, r, shut = solved
    sites = pd.concat([site_table(r), site_table(base)], ignore_index=True).drop_duplicates("site")
    style = dict(zip(sites["site"], difference_styles(base, r, sites)))
    was = dict(zip(base.tables["dcs"]["dc"], base.tables["dcs"]["open"]))
    now = dict(zip(r.tables["dcs"]["dc"], r.tables["dcs"]["open"]))
    assert style[shut] == "dc_lost"
    for dc in was:
        expect = {(True, True): "dc_both", (False, True): "dc_gained", (True, False): "dc_lost"}.get(
            (bool(was[dc]), bool(now[dc])), "dc_idle"
        )
        assert style[dc] == expect, dc


def test_customers_losing_demand_are_marked_against_the_base():
    """With the only plant out and lost demand allowed, every customer loses demand (its unmet table)."""
    case = random_case(3)
    base = solve(case, mip_gap=1e-9)
    out = apply_changes(
        case,
        Scenario("out", [{"kind": "site_out", "site": "F"}, {"kind": "policy", "allow_unmet_demand": True}]),
    )
    r = solve(out, mip_gap=1e-9)
    sites = pd.concat([site_table(r), site_table(base)], ignore_index=True).drop_duplicates("site")
    styles = difference_styles(base, r, sites)
    losing = set(r.tables["unmet"].query("lost_units > 0.5")["customer"])
    assert losing and set(sites.loc[styles == "customer_short", "site"]) == losing


def test_maps_of_one_run_share_one_frame(solved):
    _case, base, r, _shut = solved
    lay = run_layout([base, r])
    a, _ = network_map_svg(base, {}, layout=lay, compact=True, land=False)
    b, _ = network_map_svg(r, {}, layout=lay, compact=True, land=False)
    box = re.compile(r'viewBox="([^"]+)"')
    assert box.search(a).group(1) == box.search(b).group(1)


def test_report_has_a_map_pair_per_solved_scenario_over_one_land_layer():
    case = random_case(3)
    d = solve(case).tables["dcs"]
    shut = str(d.loc[d["open"], "dc"].iloc[0])
    run = run_scenarios(
        case,
        scenarios=[
            Scenario("shut", [{"kind": "force_dc", "dc": shut, "to": "closed"}], resolve="both"),
            Scenario("out", [{"kind": "site_out", "site": "F"}], resolve="hold"),  # infeasible: lost demand not allowed
        ],
    )
    page = render_report(run)
    solved = [lab for lab, r in run.results.items() if lab != "base" and r.has_solution]
    assert "out" in run.results and not run.results["out"].has_solution
    assert "out [lost demand priced]" in solved
    maps = re.findall(r'<details class="scenario-map" id="scenario-map-\d+"[^>]*>\s*<summary>([^<(]+)', page)
    assert [m.strip() for m in maps] == solved
    assert page.count('<symbol id="scenario-land"') == 1
    assert page.count('href="#scenario-land"') == 2 * len(solved)
