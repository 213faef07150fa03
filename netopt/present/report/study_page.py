"""The report page of a planning study (``netopt classify``, ``netopt sites``): one self-contained HTML
file of titled sections, each a chart and a table (the tables' labels and formats from their declared
schema), on the same style sheet as the network report."""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

import pandas as pd

from netopt.present.labels import DISCLAIMER
from netopt.present.report.page import ASSETS, _safe_svg
from netopt.present.report.study_charts import MAP_NOTE, cluster_sweep_svg, dc_count_svg, pareto_svg, sites_map_svg
from netopt.present.report.tables import table


@dataclass
class Section:
    """One section: title, a line on what it shows, a chart (SVG), the table and its declared name."""

    title: str
    note: str
    chart: str
    frame: pd.DataFrame | None
    source: str
    caption: str = ""
    max_rows: int | None = 60


def render_study(case_name: str, kind: str, facts: list[tuple[str, str]], sections: list[Section]) -> str:
    """The page as one HTML string."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(ASSETS),
        autoescape=jinja2.select_autoescape(["html", "j2"], default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["safe_svg"] = _safe_svg
    shown = []
    for s in sections:
        sid = "study-" + re.sub(r"[^a-z0-9]+", "-", s.title.lower()).strip("-")
        t = table(s.frame, s.source, tid=f"table-{s.source}", max_rows=s.max_rows) if s.frame is not None else None
        shown.append({"id": sid, "title": s.title, "note": s.note, "chart": s.chart, "caption": s.caption, "table": t})
    return env.get_template("study.html.j2").render(
        case=case_name,
        kind=kind,
        created=datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z").strip(),
        facts=facts,
        disclaimer=DISCLAIMER,
        css=(ASSETS / "report.css").read_text(encoding="utf-8"),
        sections=shown,
    )


def write_study(path: str | Path, case_name: str, kind: str, facts, sections: list[Section]) -> Path:
    """Write the page to ``path`` (beside as a temporary file, then renamed)."""
    path = Path(path)
    tmp = path.with_name(f".{path.name}.tmp-{os.getpid()}")
    tmp.write_text(render_study(case_name, kind, facts, sections), encoding="utf-8")
    os.replace(tmp, path)
    return path


def classify_sections(tables: dict[str, pd.DataFrame]) -> list[Section]:
    """Sections of a classification: per ranked set its Pareto chart and table, then the class totals."""
    out = []
    for scope in ("products", "customers"):
        df = tables.get(f"abc_{scope}")
        if df is None:
            continue
        measure = str(df["measure"].iloc[0]).replace("_", " ") if len(df) else ""
        out.append(
            Section(
                f"ABC of {scope}",
                f"{scope.capitalize()} ranked by {measure}, largest first; bars are each one's share, the line the "
                "cumulative share.",
                pareto_svg(df, f"{scope} by {measure}"),
                df,
                f"abc_{scope}",
            )
        )
    if "abc_summary" in tables:
        s = tables["abc_summary"]
        out.append(Section("Classes", str(s["rule"].iloc[0]) if len(s) else "", "", s, "abc_summary", max_rows=None))
    return out


def sites_sections(
    tables: dict[str, pd.DataFrame], customers: pd.DataFrame, case_dcs: pd.DataFrame, currency: str
) -> list[Section]:
    """Sections of a site study: map, proposed sites, region centres, the DC-count curve."""
    prop, cand, cen = tables["site_proposals"], tables["candidate_sites"], tables["gravity_centres"]
    out = [
        Section(
            "Proposed sites",
            "Customers (area in proportion to demand), the case's DCs, each region's centre of gravity and the "
            "proposed sites, each snapped to the nearest listed city.",
            sites_map_svg(customers, case_dcs, cand, cen),
            prop,
            "site_proposals",
            caption=MAP_NOTE,
        ),
        Section("Candidate rows for dcs.csv", "Paste these rows into the case's dcs.csv.", "", cand, "candidate_sites"),
        Section(
            "Centres of gravity",
            "Per region: the point of least demand-weighted great-circle distance (Weiszfeld on the sphere).",
            "",
            cen,
            "gravity_centres",
        ),
    ]
    sweep = tables.get("cluster_sweep")
    if sweep is not None:
        out.append(
            Section(
                "Clusters swept",
                "k weighted clusters of the customers for each k: how far demand is from its nearest centre "
                "(before snapping to a city).",
                cluster_sweep_svg(sweep),
                sweep,
                "cluster_sweep",
                max_rows=None,
            )
        )
    curve = tables.get("dc_count_curve")
    if curve is not None:
        out.append(
            Section(
                "DC-count curve",
                f"The network solved with exactly N open DCs ({curve['dc_set'].iloc[0] if len(curve) else ''}): "
                f"total cost and its components, {currency}/yr; the least total is circled.",
                dc_count_svg(curve, currency),
                curve,
                "dc_count_curve",
                max_rows=None,
            )
        )
    return out
