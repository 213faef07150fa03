"""The HTML report: self-contained, renders in a real browser, and shows the result tables' numbers."""

from __future__ import annotations

import dataclasses
import json
import math
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from casekit import make_case_dir, tiny_rows
from geographiclib.geodesic import Geodesic

from netopt.api import Result
from netopt.data.io import load_case
from netopt.data.result_views import COMPARISON_VIEW
from netopt.data.results_schema import label_of
from netopt.present.files import DISCLAIMER, write_run
from netopt.present.formats import kpi_label
from netopt.present.report import map_layout, project, render_report, site_table, write_report
from netopt.present.report.charts import frontier_figure, frontier_points
from netopt.studies.frontier import frontier
from netopt.studies.resilience import run_sweep
from netopt.studies.scenarios import run_scenarios

DEMO = Path(__file__).resolve().parent.parent / "cases" / "brackenholt"

HYPER = '=HYPERLINK("http://example.invalid/x","click")'  # a customer code a spreadsheet would run
ODD_DC = "DC-PAR <i>&$x$</i>"  # HTML markup and matplotlib mathtext in a DC code
FAR = ("GAD-FAR", 22.54, 114.06)  # a gadget supplier in south China, far from the European network

SCENARIOS = """
[[scenario]]
name = "fra_closed"
description = "The candidate DC stays closed"
  [[scenario.change]]
  kind = "force_dc"
  dc = "DC-FRA"
  to = "closed"

[[scenario]]
name = "demand_up"
description = "Demand 20% higher"
resolve = "both"
  [[scenario.change]]
  kind = "scale_demand"
  factor = 1.2
"""


def report_case_dir(tmp_path) -> Path:
    """The tiny case with a far supplier, odd site codes and two scenarios."""
    rows = tiny_rows()
    for r in rows["dcs"]:
        if r["dc"] == "DC-PAR":
            r["dc"] = ODD_DC
    for table in ("customers", "demand"):
        for r in rows[table]:
            if r["customer"] == "CU-BRU":
                r["customer"] = HYPER
    rows["suppliers"].append(
        {
            "supplier": FAR[0],
            "product": "gadget",
            "lat": str(FAR[1]),
            "lon": str(FAR[2]),
            "region": "asia",
            "capacity": "150",
            "unit_cost": "12",
            "lead_time_sd_days": "4",
        }
    )
    return make_case_dir(tmp_path, name="report_case", scenarios=SCENARIOS, **rows)


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    return load_case(report_case_dir(tmp_path_factory.mktemp("case")))


@pytest.fixture(scope="module")
def run(case):
    return run_scenarios(case)


@pytest.fixture(scope="module")
def out(run, tmp_path_factory):
    folder = tmp_path_factory.mktemp("out") / "results"
    write_run(run, folder)
    return folder


@pytest.fixture(scope="module")
def page(out):
    return (out / "report.html").read_text(encoding="utf-8")


# ----------------------------------------------------------------------------- parsing helpers


class Tables(HTMLParser):
    """Every <table id=...> of a page as rows of cell texts, plus elements' text by id (stdlib parser)."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[list[str]]] = {}
        self.by_id: dict[str, str] = {}
        self.urls: list[tuple[str, str, str]] = []  # (tag, attribute, value) of every src/href-like attribute
        self.tags: list[str] = []
        self._table = None
        self._row = None
        self._cell = None
        self._ids: list[tuple[str, int]] = []
        self._depth = 0
        self._text: dict[str, list[str]] = {}

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        for k, v in attrs:
            if k in ("src", "href", "xlink:href", "srcset", "data", "poster", "action", "background"):
                self.urls.append((tag, k, v or ""))
        if tag in ("br", "img", "meta", "link", "input", "hr", "source"):
            return
        self._depth += 1
        if a.get("id"):
            self._ids.append((a["id"], self._depth))
            self._text[a["id"]] = []
        if tag == "table":
            self._table = a.get("id", f"table-{len(self.tables)}")
            self.tables[self._table] = []
        elif tag == "tr" and self._table is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("br", "img", "meta", "link", "input", "hr", "source"):
            return
        if tag in ("td", "th") and self._cell is not None:
            self._row.append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.tables[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None
        while self._ids and self._ids[-1][1] == self._depth:
            i, _ = self._ids.pop()
            self.by_id[i] = " ".join("".join(self._text[i]).split())
        self._depth -= 1

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        for i, _ in self._ids:
            self._text[i].append(data)


def parse(html: str) -> Tables:
    p = Tables()
    p.feed(html)
    p.close()
    return p


def num(text: str) -> float:
    """A number as the report shows it: thousands separators, %, a minus or a plus sign."""
    t = text.replace(",", "").replace("−", "-").replace("+", "").strip()
    if t in ("–", ""):
        return float("nan")
    if t.endswith("%"):
        return float(t[:-1]) / 100.0
    return float(t)


def records(table: list[list[str]]) -> list[dict[str, str]]:
    head, *body = table
    return [dict(zip(head, row)) for row in body]


# ----------------------------------------------------------------------------- self-contained


def test_report_is_written_beside_the_run_outputs(out):
    assert (out / "report.html").is_file()
    assert (out / "results.xlsx").is_file() and (out / "comparison.csv").is_file()
    assert not list(out.parent.glob(".results.tmp-*")), "the temporary folder was left behind"


def test_report_is_self_contained(page):
    p = parse(page)
    # Nothing to fetch: no scripts, style sheets, frames or images by reference; the only references are
    # in-page anchors (#...) of the table of contents and of the SVGs' own definitions.
    assert not {"script", "link", "iframe", "img", "object", "embed"} & set(p.tags)
    assert p.urls, "the page should at least have its table-of-contents anchors"
    assert all(v.startswith("#") for _, _, v in p.urls), [u for u in p.urls if not u[2].startswith("#")]
    assert not re.search(r"url\(\s*['\"]?(?!#)", page), "CSS url() other than an in-page reference"
    assert "@import" not in page
    assert page.count("<svg") >= 6, "the map and the charts are inline SVG"


def test_header_names_case_status_gap_check_and_caution(run, page):
    base = run.base
    p = parse(page)
    assert f"<h1>{base.case_name}</h1>" in page
    assert p.by_id["solver-status"] == base.status
    assert num(p.by_id["solver-gap"]) == pytest.approx(base.gap, abs=5e-6)  # shown as % with 3 decimals
    v = base.verification
    assert p.by_id["verification"].startswith("passed" if v.passed else "FAILED")
    assert DISCLAIMER in " ".join(p.by_id["disclaimer"].split())
    assert re.search(r"\d{4}-\d{2}-\d{2} \d{2}:\d{2}", page), "the date it was written"


def test_site_codes_are_escaped_in_html_and_svg(page):
    # The odd DC code is shown as text in the tables and on the map, never as markup.
    assert "<i>&" not in page and "<i>" not in page
    assert "DC-PAR &lt;i&gt;&amp;$x$&lt;/i&gt;" in page
    assert page.count("&lt;i&gt;") >= 2  # table and map label


# ----------------------------------------------------------------------------- numbers


def test_cost_table_matches_the_result(run, page):
    rows = {r["component"]: r for r in records(parse(page).tables["cost-table"])}
    cost = run.base.cost
    total = sum(cost.values())
    currency = next(k for k in rows[next(iter(rows))] if k.endswith("/yr"))
    for k, v in cost.items():
        shown = rows[k.replace("_", " ")]
        assert num(shown[currency]) == pytest.approx(v, abs=0.5)  # whole currency units
        assert num(shown["share"]) == pytest.approx(v / total, abs=5e-4)
    assert num(rows["total"][currency]) == pytest.approx(total, abs=0.5)


def test_dc_table_matches_the_result(run, page):
    shown = {r["DC"]: r for r in records(parse(page).tables["dc-table"])}
    d = run.base.tables["dcs"]
    assert set(shown) == set(d["dc"])
    for r in d.itertuples(index=False):
        s = shown[r.dc]
        assert s["decision"] == r.decision
        assert num(s["throughput"]) == pytest.approx(r.throughput, abs=0.5)
        assert (
            num(s["capacity"]) == pytest.approx(r.capacity, abs=0.5)
            if math.isfinite(r.capacity)
            else s["capacity"] == "no limit"
        )
        if r.open and np.isfinite(r.utilisation):
            assert num(s["utilisation"]) == pytest.approx(r.utilisation, abs=5e-4)
        else:
            assert s["utilisation"] == "–"


def test_comparison_table_matches_the_run(run, page):
    table = parse(page).tables["comparison-table"]
    shown = {r[label_of("comparison", "scenario")]: r for r in records(table)}
    comp = run.comparison
    assert list(shown) == list(comp["scenario"])
    # The headers are the declared labels of the declared headline columns, in order (status is left out
    # when every solve is optimal).
    expected = [c for c in COMPARISON_VIEW if c in comp.columns and not (c == "status" and comp[c].eq("optimal").all())]
    assert table[0] == [label_of("comparison", c) for c in expected]

    def cell(s, column):
        return num(s[label_of("comparison", column)])

    for r in comp.itertuples(index=False):
        s = shown[r.scenario]
        assert cell(s, "total_cost") == pytest.approx(r.total_cost, abs=0.5)
        assert cell(s, "delta_cost") == pytest.approx(r.delta_cost, abs=0.5)
        assert cell(s, "delta_pct") == pytest.approx(r.delta_pct, abs=5e-5)
        assert cell(s, "share_within_window") == pytest.approx(r.share_within_window, abs=5e-4)
        assert cell(s, "avg_transit_days") == pytest.approx(r.avg_transit_days, abs=5e-3)
        assert cell(s, "lost_units") == pytest.approx(r.lost_units, abs=0.5)
        assert cell(s, "co2e_tonnes") == pytest.approx(r.co2e_tonnes, abs=0.5)
        assert s[label_of("comparison", "verified")] == ("yes" if r.verified else "no")


def test_comparison_colours_changes_beyond_the_gap(run, page):
    # The demand scenario costs more than the base by far more than the optimality gap: its cost cells are red.
    comp = run.comparison.set_index("scenario")
    up = "demand_up [redesign]"
    assert comp.loc[up, "delta_cost"] > 1e-3 * comp.loc["base", "total_cost"]
    head = parse(page).tables["comparison-table"][0]
    at = head.index(label_of("comparison", "total_cost")) - 1  # cells after the scenario's own cell
    row = re.search(r"<tr><td[^>]*>demand_up \[redesign\]</td>(.*?)</tr>", page, re.S).group(1)
    cells = re.findall(r'<td(?: class="([^"]*)")?>([^<]*)</td>', row)
    total_cls = cells[at][0]
    assert "worse" in total_cls.split()
    base_row = re.search(r"<tr><td[^>]*>base</td>(.*?)</tr>", page, re.S).group(1)
    assert "worse" not in base_row and "better" not in base_row


def test_kpis_mode_mix_and_service_match(run, page):
    p = parse(page)
    k = run.base.tables["kpis"]
    shown = {r["indicator"]: r for r in records(p.tables["kpi-table"])}
    for r in k.itertuples(index=False):
        s = shown[kpi_label(r.kpi)]
        tol = 5e-4 if "share" in r.unit else 5e-3 if abs(r.value) < 100 else 0.5
        assert num(s["value"]) == pytest.approx(r.value, abs=tol), r.kpi
    mm = {r["mode"]: r for r in records(p.tables["mode-table"])}
    for r in run.base.tables["mode_mix"].itertuples(index=False):
        assert num(mm[r.mode][label_of("mode_mix", "tonne_km")]) == pytest.approx(r.tonne_km, abs=0.5)
        assert num(mm[r.mode][label_of("mode_mix", "units")]) == pytest.approx(r.units, abs=0.5)
    # The share within the window, recomputed here from the flows (units to customers on in-window lanes).
    f = run.base.tables["flows"]
    last = f[f["destination_kind"] == "customer"]
    share = last.loc[last["within_window"], "quantity"].sum() / last["quantity"].sum()
    assert num(p.by_id["within-share"]) == pytest.approx(share, abs=5e-4)


def test_map_shows_sites_modes_and_the_far_supplier(run, page):
    svg = re.search(r'<section id="network".*?</section>', page, re.S).group(0)
    for m in run.base.tables["mode_mix"]["mode"]:
        assert f">{m}<" in svg, f"mode {m} missing from the legend"
    assert "GAD-FAR" in svg and "off map" in svg, "the far supplier is pinned to the edge with a label"
    assert "Overview" in svg
    for dc in run.base.tables["dcs"].query("open")["dc"]:
        assert dc.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;") in svg


# ----------------------------------------------------------------------------- map geometry


def test_projection_keeps_shape_near_the_centre():
    # Equirectangular with x = Δlon·cos(lat0): at the centre, one degree east over one degree north must
    # have the true ratio of ground distances. Reference: geodesics on the WGS84 ellipsoid (geographiclib,
    # Karney 2013); the sphere's cos(lat0) differs from it by under 0.7% (ellipsoid flattening 1/298.257).
    g = Geodesic.WGS84
    for lat0, lon0 in ((49.8, 10.0), (5.0, 100.0), (-33.9, 18.4), (64.1, -21.9)):
        x, y = project([lat0, lat0, lat0 + 0.01], [lon0, lon0 + 0.01, lon0], lat0, lon0)
        ratio_map = (x[1] - x[0]) / (y[2] - y[0])
        east = g.Inverse(lat0, lon0, lat0, lon0 + 0.01)["s12"]
        north = g.Inverse(lat0 - 0.005, lon0, lat0 + 0.005, lon0)["s12"]
        assert ratio_map == pytest.approx(east / north, rel=7e-3)


def test_projection_wraps_longitude_across_the_date_line():
    # 179°E and 179°W are 2° of longitude apart (common practice, no source: longitudes are modulo 360°).
    x, _ = project([0.0, 0.0], [179.0, -179.0], 0.0, 179.0)
    assert x[1] - x[0] == pytest.approx(2.0)


def test_far_sites_are_pinned_to_the_map_edge_in_their_direction(run):
    s = site_table(run.base)
    lay = map_layout(s)
    sites, (x0, x1, y0, y1) = lay["sites"], lay["extent"]
    far = sites[sites["far"]]
    assert list(far["site"]) == [FAR[0]], "only the supplier in China is far from the European network"
    near = sites[~sites["far"]]
    assert near["x"].between(x0, x1).all() and near["y"].between(y0, y1).all()
    assert (near["px"] == near["x"]).all() and (near["py"] == near["y"]).all()
    r = far.iloc[0]
    assert x0 < r.px < x1 and y0 < r.py < y1
    # On the edge it points to: near the east side of the frame, since China lies east of Europe.
    assert x1 - r.px < 0.05 * (x1 - x0)
    # Same bearing from the frame's centre as the true position (within the spreading of crowded edges).
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    true = math.atan2(r.y - cy, r.x - cx)
    drawn = math.atan2(r.py - cy, r.px - cx)
    assert abs(true - drawn) < math.radians(2)


# ----------------------------------------------------------------------------- other inputs


def test_single_result_report(run, tmp_path):
    path = write_report(run.base, tmp_path / "report.html")
    page = path.read_text(encoding="utf-8")
    p = parse(page)
    assert "comparison-table" not in p.tables
    assert "cost-table" in p.tables and "dc-table" in p.tables
    assert not list(tmp_path.glob(".report.html.tmp-*"))


def test_an_empty_table_says_it_has_no_rows(run):
    # A table the plan leaves empty (marginal values not computed, say) is said to be empty, not shown
    # as headers without rows.
    base = dataclasses.replace(run.base, tables=dict(run.base.tables), message="marginal values not computed")
    base.tables["shadow_prices"] = base.tables["shadow_prices"].iloc[0:0]
    page = render_report(base)
    at = page.index('id="extra-shadow-prices"')
    section = page[at : page.index("</section>", at)]
    assert "No rows in this plan" in section and "table-shadow_prices" not in section


@pytest.fixture(scope="module")
def demo_frontier():
    """The demo case's cost–CO2 frontier, three points, solved for real."""
    return frontier(load_case(DEMO), points=3)


@pytest.fixture(scope="module")
def spof(case, run):
    """The single-point-of-failure ranking of the report case's base (DCs and plants), swept in this process."""
    table, _ = run_sweep(case, run.base, workers=0, elements=["dc", "plant"], progress=False)
    return table


def test_frontier_chart_plots_each_networks_co2_against_its_cost(demo_frontier):
    table = demo_frontier
    # The demo sets no CO2 cap, so the cost-optimal point's cap is blank; it must be plotted all the same.
    assert math.isnan(table.loc[table["point"] == 0, "co2_cap_t"].iloc[0])
    expected = table.sort_values("co2_t")
    pts = frontier_points(table)
    assert list(pts["point"]) == list(expected["point"]) and 0 in set(pts["point"])
    np.testing.assert_array_equal(pts["co2_t"].to_numpy(), expected["co2_t"].to_numpy())
    np.testing.assert_array_equal(pts["total_cost"].to_numpy(), expected["total_cost"].to_numpy())
    # The chart draws exactly those points: x = each network's own CO2e (t/yr), y = its total cost.
    (line,) = frontier_figure(table, "EUR").axes[0].lines
    np.testing.assert_array_equal(line.get_xdata(), expected["co2_t"].to_numpy())
    np.testing.assert_array_equal(line.get_ydata(), expected["total_cost"].to_numpy())
    # The cost-optimal network emits the most and costs the least: it is the right-hand end of the curve.
    assert line.get_xdata()[-1] == table["co2_t"].max() == table.loc[0, "co2_t"]
    assert line.get_ydata()[-1] == table["total_cost"].min()


def test_extra_tables_get_titled_sections_and_charts(run, demo_frontier, spof, tmp_path):
    page = write_report(run, tmp_path / "r.html", extra={"frontier": demo_frontier, "spof": spof}).read_text("utf-8")
    p = parse(page)
    assert "Cost–CO2e frontier" in page and "Single points of failure" in page
    front = re.search(r'<section id="extra-frontier".*?</section>', page, re.S).group(0)
    assert "<svg" in front, "the frontier is charted"
    shown = records(p.tables["table-frontier"])
    co2 = [num(r[label_of("frontier", "co2_t")]) for r in shown]
    assert co2 == pytest.approx(list(demo_frontier["co2_t"]), abs=0.5)
    spof_sec = re.search(r'<section id="extra-spof".*?</section>', page, re.S).group(0)
    ranked = records(p.tables["table-spof"])
    assert [r[label_of("spof_ranking", "element")] for r in ranked] == list(spof["element"])
    for r, want in zip(ranked, spof.itertuples(index=False)):
        assert num(r[label_of("spof_ranking", "recovery_cost")]) == pytest.approx(want.recovery_cost, abs=0.5)
    if (spof["impact"] > 0).any():
        assert "<svg" in spof_sec and spof["element"].iloc[0] in spof_sec, "a ranking with an impact is charted"


def test_report_of_a_run_without_a_plan():
    diag = pd.DataFrame(
        {
            "rule": ["demand_met"],
            "where": ["customer X, product Y"],
            "amount": [120.0],
            "meaning": ["units/yr of demand that cannot be delivered"],
        }
    )
    r = Result(
        case_name="no plan",
        status="infeasible",
        objective=float("nan"),
        bound=float("nan"),
        gap=float("inf"),
        diagnosis=diag,
    )
    p = parse(render_report(r))
    assert p.by_id["solver-status"] == "infeasible"
    assert records(p.tables["diagnosis"])[0]["where"] == "customer X, product Y"


def cli(*argv) -> int:
    """Run the netopt command line in-process; its exit code."""
    from netopt.cli import main

    with pytest.raises(SystemExit) as done:
        main([str(a) for a in argv])
    return int(done.value.code)


def test_solve_verb_writes_report_and_json(tmp_path, capsys):
    case = report_case_dir(tmp_path)
    code = cli("solve", case, "--out", tmp_path / "solved", "--json")
    summary = json.loads(capsys.readouterr().out)  # --json: stdout is JSON and nothing else
    assert summary["status"] == "optimal"
    assert code == (0 if summary["verified"] else 4)
    assert (tmp_path / "solved" / "report.html").is_file()
    assert (tmp_path / "solved" / "results.xlsx").is_file()


def test_run_verb_json_quiet_and_no_report(tmp_path, capsys):
    case = report_case_dir(tmp_path)
    code = cli("run", case, "--out", tmp_path / "ran", "--only", "fra_closed", "--json")
    rows = json.loads(capsys.readouterr().out)  # --json: the comparison as JSON records, nothing else on stdout
    assert [r["scenario"] for r in rows] == ["base", "fra_closed"]
    assert code == (0 if all(r["verified"] for r in rows) else 4)
    assert (tmp_path / "ran" / "report.html").is_file()
    cli("run", case, "--out", tmp_path / "quiet", "--only", "fra_closed", "--quiet", "--no-report")
    assert capsys.readouterr().out == ""  # --quiet: nothing on stdout
    assert not (tmp_path / "quiet" / "report.html").exists()  # --no-report is honoured
    assert (tmp_path / "quiet" / "results.xlsx").is_file()


def test_run_verb_table_keeps_every_digit(tmp_path, capsys, monkeypatch):
    # Narrow terminal: names may wrap, but no number in the comparison table is cut short.
    monkeypatch.setenv("COLUMNS", "72")
    case = report_case_dir(tmp_path)
    cli("run", case, "--out", tmp_path / "ran", "--only", "fra_closed")
    text = capsys.readouterr().out
    comp = pd.read_csv(tmp_path / "ran" / "comparison.csv")
    for total in comp["total_cost"]:
        assert f"{total:,.0f}" in text
    assert "…" not in text


# ----------------------------------------------------------------------------- in a real browser

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
needs_chromium = pytest.mark.skipif(
    CHROMIUM is None, reason="no browser: install Debian's chromium package (apt-get install chromium) to run this test"
)


def open_headless(html_file: Path, work: Path, height: int = 3000) -> dict:
    """Open a page in headless Chromium; return its screenshot (RGB array), the page's own network
    requests (from Chromium's net log) and its console messages."""
    shot, netlog = work / "shot.png", work / "netlog.json"
    cmd = [
        CHROMIUM,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--hide-scrollbars",
        "--host-resolver-rules=MAP * ~NOTFOUND",
        "--enable-logging=stderr",
        "--v=0",
        f"--log-net-log={netlog}",
        f"--user-data-dir={work / 'profile'}",
        f"--screenshot={shot}",
        f"--window-size=1300,{height}",
        html_file.resolve().as_uri(),
    ]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert shot.is_file(), proc.stderr[-2000:]
    from matplotlib.image import imread

    img = imread(str(shot))[:, :, :3]
    log = json.loads(netlog.read_text(encoding="utf-8"))
    kinds = {v: k for k, v in log["constants"]["logEventTypes"].items()}
    page_requests = set()
    for e in log["events"]:
        p = e.get("params") or {}
        if kinds.get(e["type"]) == "URL_REQUEST_START_JOB" and "url" in p:
            # Requests made for the page carry the page's site (file://) in their isolation key; the
            # browser's own background requests carry none.
            ours = "file://" in str(p.get("network_isolation_key", ""))
            if ours or p.get("initiator") not in (None, "not an origin"):
                page_requests.add(p["url"])
    console = [ln for ln in proc.stderr.splitlines() if ":CONSOLE" in ln]
    return {"image": img, "requests": page_requests, "console": console}


@needs_chromium
def test_report_renders_in_a_browser(out, tmp_path):
    seen = open_headless(out / "report.html", tmp_path)
    img = seen["image"]
    assert img.shape[0] >= 2000 and img.shape[1] == 1300
    # Not blank: many colours, and a good part of the page differs from its most common (background) colour.
    flat = (img * 255).round().astype(np.uint8).reshape(-1, 3)
    colours, counts = np.unique(flat, axis=0, return_counts=True)
    assert len(colours) > 200
    assert 1 - counts.max() / counts.sum() > 0.15
    # The dark header band is drawn at the top (the CSS was applied).
    assert img[20:60, :, :].mean() < 0.35
    assert seen["requests"] == set(), f"the page fetched: {seen['requests']}"
    assert seen["console"] == [], seen["console"]


@needs_chromium
def test_browser_check_catches_fetches_and_errors(tmp_path):
    # The same check on a page that fetches an image and logs an error must report both (so it can fail).
    bad = tmp_path / "bad.html"
    bad.write_text(
        '<!DOCTYPE html><html><body><p>x</p><img src="http://example.invalid/a.png">'
        '<script>console.error("broken")</script></body></html>',
        encoding="utf-8",
    )
    seen = open_headless(bad, tmp_path, height=600)
    assert "http://example.invalid/a.png" in seen["requests"]
    assert any("broken" in ln for ln in seen["console"])
