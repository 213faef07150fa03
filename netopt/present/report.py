"""The analyst's report: one self-contained HTML file with a network map, charts and tables.

:func:`write_report` takes a :class:`~netopt.scenarios.ScenarioRun` (base and scenarios)
or a single :class:`~netopt.engine.solve.Result` and writes ``report.html``: every chart is inline
SVG drawn with matplotlib, the page is a Jinja2 template with its CSS inlined, and nothing
is fetched from the network when the file is opened.  Money is in the case currency per
year, volumes in units/yr or tonnes/yr, times in days.
"""

from __future__ import annotations

import io
import itertools
import math
import os
import re
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

from netopt.present.labels import DISCLAIMER, MONEY_HINTS, SHARE_HINTS

# ----------------------------------------------------------------------------- design

INK = "#1c2a35"
MUTED = "#66737d"
GRID = "#d9dedb"
ACCENT = "#0e6f68"
WARN = "#b5651d"
BAD = "#b3261e"
GOOD = "#2e7d4f"

SITE_STYLE = {
    # key: (marker, face, edge, size pt^2, legend label)
    "supplier": ("^", "#94703f", "white", 70, "supplier"),
    "supplier_idle": ("^", "none", "#94703f", 50, "supplier, not used"),
    "plant": ("s", "#433d7a", "white", 90, "plant"),
    "dc_keep": ("H", ACCENT, "white", 190, "DC kept open"),
    "dc_open": ("H", "#e3a21a", INK, 190, "DC newly opened"),
    "dc_close": ("X", BAD, "white", 120, "DC closed"),
    "dc_idle": ("H", "none", "#8d979e", 150, "candidate DC, not opened"),
    "customer": ("o", "#5f86ab", "white", None, "customer (area ∝ demand)"),
}

MODE_HINTS = [  # (name fragment, colour): common mode names get familiar colours
    ("ltl", "#e1a82c"),
    ("parcel", "#e1a82c"),
    ("courier", "#e1a82c"),
    ("ocean", "#1f5ea6"),
    ("sea", "#1f5ea6"),
    ("ship", "#1f5ea6"),
    ("rail", "#7c3f98"),
    ("train", "#7c3f98"),
    ("air", "#c0392b"),
    ("barge", "#2a9d8f"),
    ("inland", "#2a9d8f"),
    ("river", "#2a9d8f"),
    ("road", "#d8772a"),
    ("truck", "#d8772a"),
]
FALLBACK = ["#3a7d44", "#9c4f76", "#5a6f8f", "#b38b2d", "#4a9bb0", "#8a5a3c", "#6c7a2a", "#a04545"]

COST_COLOURS = {
    "supply": "#8a6a3d",
    "production": "#433d7a",
    "dc_fixed": "#0e6f68",
    "dc_closing": "#6aa39d",
    "dc_handling": "#9cc7bf",
    "transport": "#d8772a",
    "pipeline_inventory": "#5f86ab",
    "safety_stock": "#a7c1da",
    "carbon": "#5b8a3a",
    "unmet_penalty": "#b3261e",
}

KNOWN_EXTRA = {  # extra table name → section title and one line on what it shows
    "frontier": ("Cost–CO2e frontier", "Least landed cost at each level of CO2e (or each carbon price)."),
    "safety_stock": ("Safety stock", "Safety stock held at each DC and product (units) and its yearly cost."),
    "spof": (
        "Single points of failure",
        "Each element taken out on its own, ranked by the yearly impact of "
        "its loss (recovery cost plus lost demand value).",
    ),
    "spof_ranking": (
        "Single points of failure",
        "Each element taken out on its own, ranked by the yearly "
        "impact of its loss (recovery cost plus lost demand value).",
    ),
    "exposure": (
        "Time to survive and time to recover",
        "Per node: how long the network lasts with it down (time to survive) against how long it takes to recover.",
    ),
    "pipeline": (
        "Pipeline stock",
        "Stock in transit per lane, mode and product (Little's law: units/yr × transit days ÷ 365).",
    ),
    "inventory_kpis": (
        "Inventory indicators",
        "Safety and pipeline stock per DC and for the network, in days of throughput and turns per year.",
    ),
    "mode_economics": (
        "Mode economics",
        "Every admissible mode of the busiest lanes: yearly cost and CO2e if the "
        "lane's whole volume went by that mode, and the cost of switching to it.",
    ),
}
KNOWN_COLUMNS = {  # extra table name → the columns worth showing on the page (all are in the workbook)
    "safety_stock": [
        "dc",
        "product",
        "throughput",
        "customers_served",
        "lead_days",
        "ss_units_model",
        "ss_units_exact",
        "pwl_rel_error",
        "cost_model",
    ],
    "spof": [
        "rank",
        "element",
        "type",
        "base_units",
        "recovery_cost",
        "lost_units",
        "lost_value",
        "impact",
        "customers_affected",
        "took_over",
    ],
    "exposure": ["rank", "node", "type", "ttr_days", "tts_days", "lost_units", "lost_value", "rei", "tts_below_ttr"],
    "pipeline": [
        "origin",
        "destination",
        "mode",
        "product",
        "quantity",
        "transit_days",
        "in_transit_units",
        "in_transit_value",
    ],
    "inventory_kpis": [
        "level",
        "dc",
        "throughput_units",
        "safety_stock_units",
        "safety_stock_value",
        "pipeline_value",
        "inventory_value",
        "days_on_hand",
        "days_incl_transit",
        "turns",
    ],
    "mode_economics": [
        "origin",
        "destination",
        "product",
        "mode",
        "chosen",
        "share",
        "transit_days",
        "total_cost",
        "co2_kg",
        "switch_cost",
        "cost_per_t_co2_saved",
    ],
}
KNOWN_ORDER = {  # extra table name → (sort columns, ascending, rows shown): the largest first
    "pipeline": (["in_transit_value"], [False], 25),
    "mode_economics": (
        ["quantity", "origin", "destination", "product", "total_cost"],
        [False, True, True, True, True],
        30,
    ),
}
KNOWN_COLUMNS["spof_ranking"] = KNOWN_COLUMNS["spof"]
STANDARD_TABLES = {"flows", "production", "dcs", "supplier_shares", "mode_mix", "service", "unmet", "cost", "kpis"}
MAX_TABLE_ROWS = 60
ASSETS = Path(__file__).resolve().parent / "report_assets"


# ----------------------------------------------------------------------------- matplotlib helpers


def _rc():
    return {
        "font.family": "DejaVu Sans",
        "font.size": 9,
        "axes.edgecolor": GRID,
        "axes.labelcolor": INK,
        "xtick.color": MUTED,
        "ytick.color": MUTED,
        "text.color": INK,
        "axes.titleweight": "bold",
        "axes.titlesize": 10,
        "axes.titlelocation": "left",
        "svg.fonttype": "none",
        "svg.hashsalt": "netopt",
        "axes.spines.top": False,
        "axes.spines.right": False,
        "legend.frameon": False,
    }


_svg_counter = itertools.count(1)


def _svg(fig) -> str:
    """The figure as an inline <svg> element; ids made unique so several SVGs share one page."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", facecolor="none", edgecolor="none", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg") :]
    pre = f"f{next(_svg_counter)}-"
    text = re.sub(r'\bid="', f'id="{pre}', text)
    text = re.sub(r"url\(#", f"url(#{pre}", text)
    text = re.sub(r'xlink:href="#', f'xlink:href="#{pre}', text)
    width = re.search(r'<svg[^>]*?\swidth="([\d.]+)pt"', text)
    text = re.sub(r'(<svg[^>]*?)\swidth="[^"]*"\s+height="[^"]*"', r"\1", text, count=1)
    style = f' style="max-width:{float(width.group(1)) * 4 / 3:.0f}px"' if width else ""
    return text.replace("<svg ", f'<svg role="img"{style} ', 1)


def _chart(w: float, h: float, left: float = 0.8, right: float = 0.2, top: float = 0.2, bottom: float = 0.5):
    """A figure of w × h inches with one axes and fixed margins (inches); no layout engine (fast)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(w, h))
    ax = fig.add_axes((left / w, bottom / h, max(w - left - right, 0.5) / w, max(h - top - bottom, 0.3) / h))
    return fig, ax


def _label_inches(labels, size: float = 8.0) -> float:
    """Room for the widest of ``labels`` at ``size`` points (DejaVu Sans character widths, roughly)."""

    def em(ch: str) -> float:
        return 0.72 if ch.isupper() or ch in "_MW@%" else 0.64 if ch.isdigit() else 0.36 if ch in " .,:;|il'" else 0.58

    longest = max((sum(em(c) for c in str(x)) for x in labels), default=0.0)
    return 0.15 + longest * size / 72.0


def _hbars(ax, y, width, left=0.0, colour=INK, height=0.66, edge="white", lw=0.5) -> None:
    """Horizontal bars as one collection (much faster than one patch per bar)."""
    from matplotlib.collections import PolyCollection

    y = np.atleast_1d(np.asarray(y, float))
    width = np.broadcast_to(np.asarray(width, float), y.shape)
    left = np.broadcast_to(np.asarray(left, float), y.shape)
    keep = np.abs(width) > 0
    if not keep.any():
        return
    y, width, left = y[keep], width[keep], left[keep]
    colours = (
        np.broadcast_to(np.asarray(colour, dtype=object), keep.shape)[keep] if not isinstance(colour, str) else colour
    )
    h = height / 2
    verts = [[(x, yy - h), (x + w, yy - h), (x + w, yy + h), (x, yy + h)] for yy, w, x in zip(y, width, left)]
    ax.add_collection(PolyCollection(verts, facecolors=colours, edgecolors=edge, linewidths=lw), autolim=True)


def _txt(ax, *args, **kw):
    """Text inside the axes, left out of the layout computation (fast, and never shrinks the plot)."""
    t = ax.text(*args, **kw)
    t.set_in_layout(False)
    return t


def _ann(ax, *args, **kw):
    t = ax.annotate(*args, **kw)
    t.set_in_layout(False)
    return t


def _t(s) -> str:
    """Text safe for matplotlib (no mathtext)."""
    return str(s).replace("$", r"\$")


def _short(x: float) -> str:
    """Money or volume in short form: 1.2 M, 35 k (no currency)."""
    if x is None or not np.isfinite(x):
        return "–"
    a = abs(x)
    if a >= 1e9:
        return f"{x / 1e9:.2f} bn"
    if a >= 1e6:
        return f"{x / 1e6:.2f} M"
    if a >= 1e4:
        return f"{x / 1e3:.0f} k"
    if a >= 1e3:
        return f"{x / 1e3:.1f} k"
    return f"{x:.0f}"


def _ticks(axis) -> None:
    """Tick labels in short form scaled to the axis (12 M, 350 k, 1,200), never repeating a label."""
    import matplotlib.ticker as mt

    def fmt_tick(v, _pos):
        if v == 0:
            return "0"
        lo, hi = axis.get_view_interval()
        top = max(abs(lo), abs(hi))
        if top >= 1e6:
            return f"{v / 1e6:,.6g} M"
        if top >= 1e4:
            return f"{v / 1e3:,.6g} k"
        return f"{v:,.6g}"

    axis.set_major_formatter(mt.FuncFormatter(fmt_tick))


def mode_colours(modes) -> dict[str, str]:
    """A colour per mode name: familiar colours for common names, then a fixed palette."""
    out, spare = {}, iter(FALLBACK * 4)
    for m in sorted(set(map(str, modes))):
        low = m.lower()
        hit = next((c for frag, c in MODE_HINTS if frag in low), None)
        out[m] = hit if hit and hit not in out.values() else next(spare)
    return out


# ----------------------------------------------------------------------------- map geometry


def project(lat, lon, lat0: float, lon0: float):
    """Equirectangular projection centred on (lat0, lon0): x = Δlon·cos(lat0), y = lat (degrees).

    True to scale along the centre parallel and along meridians; longitudes are wrapped
    so Δlon is within ±180°.
    """
    lat = np.asarray(lat, float)
    dlon = (np.asarray(lon, float) - lon0 + 180.0) % 360.0 - 180.0
    return dlon * math.cos(math.radians(lat0)), lat


def site_table(result) -> pd.DataFrame:
    """Every site with coordinates, kind and map style: site, kind, lat, lon, style, size (units/yr)."""
    parts = []
    lanes = getattr(result, "lanes", None)
    if lanes is not None and len(lanes) and "origin_lat" in lanes.columns:
        for end in ("origin", "destination"):
            parts.append(
                lanes[[end, f"{end}_kind", f"{end}_lat", f"{end}_lon"]].set_axis(["site", "kind", "lat", "lon"], axis=1)
            )
    d = result.tables["dcs"]
    parts.append(pd.DataFrame({"site": d["dc"], "kind": "dc", "lat": d["lat"], "lon": d["lon"]}))
    s = pd.concat(parts, ignore_index=True).dropna(subset=["lat", "lon"]).drop_duplicates("site")
    s = s.reset_index(drop=True)
    flows = result.tables["flows"]
    used = set(flows["origin"])
    style = np.where(s["kind"].eq("supplier"), np.where(s["site"].isin(used), "supplier", "supplier_idle"), s["kind"])
    dec = dict(zip(d["dc"], d["decision"]))
    style = [
        {"keep": "dc_keep", "open": "dc_open", "close": "dc_close"}.get(dec.get(site), "dc_idle") if k == "dc" else st
        for site, k, st in zip(s["site"], s["kind"], style)
    ]
    s["style"] = style
    demand = result.tables["service"].set_index("customer")["demand"] if len(result.tables["service"]) else {}
    s["size"] = s["site"].map(demand).fillna(0.0).astype(float)
    return s


def map_layout(sites: pd.DataFrame, margin: float = 0.06, far_factor: float = 0.45) -> dict:
    """Place sites on the main map; sites far outside the region are pinned to its edge.

    The region is the bounding box of customers, DCs and plants (all sites when there are
    none).  A site more than ``far_factor`` × the region's size outside it is *far*: it is
    drawn on the map edge in its true direction from the region's centre, with its
    coordinates as a label, and shown in the overview inset.

    Returns:
        dict with ``sites`` (input plus x, y = true projected position, px, py = drawn
        position, far), ``extent`` (x0, x1, y0, y1) and the projection centre lat0, lon0.
    """
    s = sites.copy()
    core = s[s["kind"].isin(["customer", "dc", "plant"])]
    if core.empty:
        core = s
    lat0 = float(np.median(core["lat"]))
    lon0 = float(np.median(core["lon"]))
    s["x"], s["y"] = project(s["lat"], s["lon"], lat0, lon0)
    cx, cy = project(core["lat"], core["lon"], lat0, lon0)
    x0, x1, y0, y1 = float(np.min(cx)), float(np.max(cx)), float(np.min(cy)), float(np.max(cy))
    w, h = max(x1 - x0, 2.0), max(y1 - y0, 2.0)
    fx0, fx1, fy0, fy1 = x0 - far_factor * w, x1 + far_factor * w, y0 - far_factor * h, y1 + far_factor * h
    s["far"] = ~(s["x"].between(fx0, fx1) & s["y"].between(fy0, fy1))
    near = s[~s["far"]]
    x0, x1, y0, y1 = float(near["x"].min()), float(near["x"].max()), float(near["y"].min()), float(near["y"].max())
    w, h = max(x1 - x0, 2.0), max(y1 - y0, 2.0)
    # Room for the labels of far sites on the side they are pinned to.
    x0, x1, y0, y1 = x0 - margin * w, x1 + margin * w, y0 - margin * h, y1 + margin * h
    if s["far"].any():
        mx, my = (x0 + x1) / 2, (y0 + y1) / 2
        fx, fy = s.loc[s["far"], "x"] - mx, s.loc[s["far"], "y"] - my
        pad_x, pad_y = 0.10 * (x1 - x0), 0.10 * (y1 - y0)
        x1 += pad_x if (fx > 0).any() else 0.0
        x0 -= pad_x if (fx < 0).any() else 0.0
        y1 += pad_y if (fy > 0).any() else 0.0
        y0 -= pad_y if (fy < 0).any() else 0.0
    # Not too tall or too flat for a page.
    w, h = x1 - x0, y1 - y0
    if h < 0.55 * w:
        grow = (0.55 * w - h) / 2
        y0, y1 = y0 - grow, y1 + grow
    elif w < 0.8 * h:
        grow = (0.8 * h - w) / 2
        x0, x1 = x0 - grow, x1 + grow
    s["px"], s["py"] = s["x"].astype(float), s["y"].astype(float)
    if s["far"].any():
        _pin_to_edge(s, (x0, x1, y0, y1))
    return {"sites": s, "extent": (x0, x1, y0, y1), "lat0": lat0, "lon0": lon0}


def _pin_to_edge(s: pd.DataFrame, extent) -> None:
    """Move far sites to where the ray from the map centre towards them leaves the map (in place)."""
    x0, x1, y0, y1 = extent
    inset = 0.035
    ix0, ix1 = x0 + inset * (x1 - x0), x1 - inset * (x1 - x0)
    iy0, iy1 = y0 + inset * (y1 - y0), y1 - inset * (y1 - y0)
    mx, my = (x0 + x1) / 2, (y0 + y1) / 2
    hx, hy = (ix1 - ix0) / 2, (iy1 - iy0) / 2
    far = s.index[s["far"]]
    pts = {}
    for i in far:
        vx, vy = s.at[i, "x"] - mx, s.at[i, "y"] - my
        t = min(hx / abs(vx) if vx else np.inf, hy / abs(vy) if vy else np.inf)
        pts[i] = (mx + vx * t, my + vy * t)
    # Spread points that share an edge so markers and labels do not overlap.
    gap_y, gap_x = 0.075 * (y1 - y0), 0.16 * (x1 - x0)
    for edge in ("left", "right", "bottom", "top"):
        if edge in ("left", "right"):
            xe = ix0 if edge == "left" else ix1
            ids = [i for i, (px, py) in pts.items() if abs(px - xe) < 1e-9]
            _spread(pts, ids, axis=1, gap=gap_y, lo=iy0, hi=iy1)
        else:
            ye = iy0 if edge == "bottom" else iy1
            ids = [
                i
                for i, (px, py) in pts.items()
                if abs(py - ye) < 1e-9 and not (abs(px - ix0) < 1e-9 or abs(px - ix1) < 1e-9)
            ]
            _spread(pts, ids, axis=0, gap=gap_x, lo=ix0, hi=ix1)
    for i, (px, py) in pts.items():
        s.at[i, "px"], s.at[i, "py"] = px, py


def _spread(pts: dict, ids: list, axis: int, gap: float, lo: float, hi: float) -> None:
    """Push positions along one axis apart to at least ``gap``, kept within [lo, hi]."""
    if len(ids) < 2:
        return
    gap = min(gap, (hi - lo) / max(len(ids) - 1, 1))
    ids = sorted(ids, key=lambda i: pts[i][axis])
    v = [pts[i][axis] for i in ids]
    for k in range(1, len(v)):
        v[k] = max(v[k], v[k - 1] + gap)
    over = v[-1] - hi
    if over > 0:
        v = [x - over for x in v]
        for k in range(len(v) - 2, -1, -1):
            v[k] = min(v[k], v[k + 1] - gap)
    v = [min(max(x, lo), hi) for x in v]
    for i, x in zip(ids, v):
        p = list(pts[i])
        p[axis] = x
        pts[i] = tuple(p)


def _graticule_step(span_deg: float) -> float:
    for step in (1, 2, 5, 10, 15, 30, 60):
        if span_deg / step <= 8:
            return float(step)
    return 90.0


def _deg(v: float, pos: str, neg: str) -> str:
    v = (v + 180.0) % 360.0 - 180.0 if pos == "E" else v
    if abs(v) < 1e-9:
        return "0°"
    return f"{abs(v):g}°{pos if v > 0 else neg}"


def _draw_graticule(ax, extent, lat0, lon0, step=None, labels=True):
    x0, x1, y0, y1 = extent
    k = math.cos(math.radians(lat0))
    lon_lo, lon_hi = lon0 + x0 / k, lon0 + x1 / k
    step = step or _graticule_step(max(lon_hi - lon_lo, y1 - y0))
    lons = np.arange(math.ceil(lon_lo / step) * step, lon_hi + 1e-9, step)
    lats = np.arange(math.ceil(y0 / step) * step, y1 + 1e-9, step)
    lats = lats[(lats >= -90) & (lats <= 90)]
    for lo in lons:
        ax.axvline((lo - lon0) * k, color=GRID, lw=0.6, zorder=0)
    for la in lats:
        ax.axhline(la, color=GRID, lw=0.6, zorder=0)
    if labels:
        ax.set_xticks([(lo - lon0) * k for lo in lons], [_deg(lo, "E", "W") for lo in lons])
        ax.set_yticks(list(lats), [_deg(la, "N", "S") for la in lats])
    else:
        ax.set_xticks([])
        ax.set_yticks([])


def _flow_lines(flows: pd.DataFrame) -> pd.DataFrame:
    """Flows summed over products per (origin, destination, mode): units/yr and tonnes/yr."""
    if flows.empty:
        return pd.DataFrame(columns=["origin", "destination", "mode", "units", "tonnes"])
    return flows.groupby(["origin", "destination", "mode"], as_index=False).agg(
        units=("quantity", "sum"), tonnes=("tonnes", "sum")
    )


_BEZ = np.linspace(0.0, 1.0, 17)


def _curve(p, q, bend=0.10) -> np.ndarray:
    """Points of a gentle quadratic arc from p to q, bending to the left of the direction of travel."""
    (xa, ya), (xb, yb) = p, q
    dx, dy = xb - xa, yb - ya
    cx, cy = (xa + xb) / 2 - bend * dy, (ya + yb) / 2 + bend * dx
    t = _BEZ[:, None]
    return (1 - t) ** 2 * np.array([xa, ya]) + 2 * (1 - t) * t * np.array([cx, cy]) + t**2 * np.array([xb, yb])


def network_map_svg(result, colours: dict[str, str]) -> tuple[str, str]:
    """The base network: sites by type and decision, flows by mode with width ∝ tonnes/yr.

    Returns:
        (svg, caption): the map and a sentence on its projection and conventions.
    """
    import matplotlib
    from matplotlib.collections import LineCollection
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    sites = site_table(result)
    if sites.empty:
        return "", ""
    lay = map_layout(sites)
    s, (x0, x1, y0, y1) = lay["sites"], lay["extent"]
    pos = dict(zip(s["site"], zip(s["px"], s["py"])))
    lines = _flow_lines(result.tables["flows"])
    lines = lines[lines["origin"].isin(pos.keys()) & lines["destination"].isin(pos.keys())]
    vmax = float(lines["tonnes"].max()) if len(lines) else 1.0
    vmax = vmax if vmax > 0 else 1.0

    def width(t):  # points, linear in tonnes/yr
        return 0.5 + 7.5 * np.asarray(t, float) / vmax

    far = bool(s["far"].any())
    with matplotlib.rc_context(_rc()):
        fig_w, map_w = 11.0, 8.3
        map_h = map_w * (y1 - y0) / (x1 - x0)
        fig_h = max(map_h + 0.45, 6.0)
        fig = Figure(figsize=(fig_w, fig_h))
        ax = fig.add_axes((0.45 / fig_w, 0.35 / fig_h, map_w / fig_w, map_h / fig_h))
        lax = fig.add_axes(((0.45 + map_w + 0.2) / fig_w, 0.02, 1 - (0.45 + map_w + 0.25) / fig_w, 0.96))
        lax.axis("off")
        ax.set_facecolor("#f3f5f2")
        _draw_graticule(ax, (x0, x1, y0, y1), lay["lat0"], lay["lon0"])
        for sp in ax.spines.values():
            sp.set_visible(True)
            sp.set_color("#b9c2bd")
        ordered = lines.sort_values("tonnes", ascending=False)
        if len(ordered):
            ax.add_collection(
                LineCollection(
                    [_curve(pos[o], pos[d]) for o, d in zip(ordered["origin"], ordered["destination"])],
                    colors=[colours.get(m, MUTED) for m in ordered["mode"]],
                    linewidths=width(ordered["tonnes"]),
                    alpha=0.85,
                    capstyle="round",
                    joinstyle="round",
                    zorder=2,
                )
            )
        # Sites: customers first, DCs on top.
        order = ["customer", "supplier_idle", "supplier", "plant", "dc_idle", "dc_close", "dc_keep", "dc_open"]
        cmax = float(s.loc[s["style"] == "customer", "size"].max()) if (s["style"] == "customer").any() else 1.0
        for z, st in enumerate(order):
            g = s[(s["style"] == st)]
            if g.empty:
                continue
            marker, face, edge, size, _ = SITE_STYLE[st]
            sizes = (12 + 260 * g["size"] / (cmax or 1.0)) if st == "customer" else size
            ax.scatter(
                g["px"],
                g["py"],
                s=sizes,
                marker=marker,
                c=face if face != "none" else "none",
                edgecolors=edge,
                linewidths=1.3 if face == "none" else 0.8,
                alpha=0.75 if st == "customer" else 1.0,
                zorder=5 + z,
            )
        halo = {"boxstyle": "round,pad=0.12", "fc": "white", "ec": "none", "alpha": 0.75}
        for r in s[s["style"].isin(["plant", "dc_keep", "dc_open", "dc_close"]) & ~s["far"]].itertuples():
            _ann(
                ax,
                _t(r.site),
                (r.px, r.py),
                xytext=(7, 5),
                textcoords="offset points",
                fontsize=7.5,
                color=INK,
                bbox=halo,
                zorder=20,
            )
        # Far sites: pinned to the edge, an arrow outwards and their coordinates.
        mx, my = (x0 + x1) / 2, (y0 + y1) / 2
        near = s[~s["far"]]
        lw_, lh_ = 0.2 * (x1 - x0), 0.06 * (y1 - y0)  # a far site's label box, in map units (roughly)
        for r in s[s["far"]].itertuples():
            vx, vy = r.x - r.px, r.y - r.py
            n = math.hypot(vx, vy) or 1.0
            step = 0.03 * (x1 - x0)
            _ann(
                ax,
                "",
                xy=(r.px + step * vx / n, r.py + step * vy / n),
                xytext=(r.px, r.py),
                arrowprops={"arrowstyle": "-|>", "color": MUTED, "lw": 1.0},
                zorder=18,
            )
            right = r.px > mx
            bx0, bx1 = (r.px - lw_, r.px) if right else (r.px, r.px + lw_)
            inx = near["px"].between(bx0, bx1)
            crowd_above = int((inx & near["py"].between(r.py, r.py + lh_)).sum())
            crowd_below = int((inx & near["py"].between(r.py - lh_, r.py)).sum())
            top = crowd_below < crowd_above if crowd_below != crowd_above else r.py > my
            _ann(
                ax,
                _t(f"{r.site}\n{_deg(round(r.lat, 1), 'N', 'S')} {_deg(round(r.lon, 1), 'E', 'W')}, off map"),
                (r.px, r.py),
                xytext=(-9 if right else 9, -10 if top else 6),
                textcoords="offset points",
                ha="right" if right else "left",
                va="top" if top else "bottom",
                fontsize=7,
                color=MUTED,
                bbox=halo,
                zorder=20,
            )
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0, y1)
        ax.set_aspect("equal")
        ax.tick_params(labelsize=7, length=0)

        # One legend: sites, modes (colour), volume (width), each under a bold heading.
        head = Line2D([], [], ls="", marker="")
        handles, labels, heads = [], [], []

        def section(title, items):
            if items:
                handles.append(head)
                labels.append(title)
                heads.append(len(labels) - 1)
                for h in items:
                    handles.append(h)
                    labels.append(h.get_label())

        h_sites = []
        for st in [st for st in order if (s["style"] == st).any()]:
            marker, face, edge, size, label = SITE_STYLE[st]
            h_sites.append(
                Line2D(
                    [],
                    [],
                    marker=marker,
                    ls="",
                    markersize=8 if st != "customer" else 7,
                    markerfacecolor=face,
                    markeredgecolor=edge,
                    label=label,
                    markeredgewidth=1.2 if face == "none" else 0.8,
                )
            )
        section("Sites", h_sites)
        section(
            "Flows by mode",
            [Line2D([], [], color=colours.get(m, MUTED), lw=3, label=_t(m)) for m in sorted(set(lines["mode"]))],
        )
        section(
            "Flow volume",
            [Line2D([], [], color=INK, lw=float(width(v)), label=f"{_short(v)} t/yr") for v in _nice_samples(vmax)],
        )
        leg = lax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize=8,
            handlelength=2.4,
            borderaxespad=0.0,
            labelspacing=0.55,
        )
        for i, t in enumerate(leg.get_texts()):
            if i in heads:
                t.set_fontweight("bold")
                t.set_position((-28, 0))
        if far:
            _overview(
                fig,
                s,
                lay,
                lines,
                colours,
                (x0, x1, y0, y1),
                box=((0.45 + map_w + 0.2) / fig_w, 0.35 / fig_h, 1 - (0.45 + map_w + 0.3) / fig_w),
            )
        caption = (
            f"Projection: equirectangular, true scale at {_deg(round(lay['lat0'], 1), 'N', 'S')}. "
            "Line width in proportion to tonnes/yr, summed over products; lines bend to the left of "
            "their direction of travel."
        )
        if far:
            caption += (
                " Sites far outside the region are pinned to the map edge in their true direction, with "
                "their coordinates; the overview shows every site at its true position."
            )
        return _svg(fig), caption


def _nice_samples(vmax: float) -> list[float]:
    if vmax <= 0:
        return []
    mag = 10 ** math.floor(math.log10(vmax))
    top = max(m * mag for m in (1, 2, 5, 10) if m * mag <= vmax) if vmax >= mag else vmax
    return sorted({top, top / 2, top / 10} - {0})


def _overview(fig, s: pd.DataFrame, lay: dict, lines: pd.DataFrame, colours: dict, extent, box) -> None:
    """A small map of every site at its true position, the main map framed (figure fractions ``box`` = x, y, w)."""
    from matplotlib.collections import LineCollection
    from matplotlib.patches import Rectangle

    x0, x1, y0, y1 = extent
    X0, X1, Y0, Y1 = float(s["x"].min()), float(s["x"].max()), float(s["y"].min()), float(s["y"].max())
    pad = 0.08 * max(X1 - X0, Y1 - Y0)
    X0, X1, Y0, Y1 = X0 - pad, X1 + pad, Y0 - pad, Y1 + pad
    fw, fh = fig.get_size_inches()
    bx, by, bw = box
    bh = bw * fw * (Y1 - Y0) / (X1 - X0) / fh
    ins = fig.add_axes((bx, by, bw, min(bh, 0.45)))
    ins.set_facecolor("white")
    _draw_graticule(ins, (X0, X1, Y0, Y1), lay["lat0"], lay["lon0"], step=30.0, labels=False)
    true = dict(zip(s["site"], zip(s["x"], s["y"])))
    if len(lines):
        ins.add_collection(
            LineCollection(
                [[true[o], true[d]] for o, d in zip(lines["origin"], lines["destination"])],
                colors=[colours.get(m, MUTED) for m in lines["mode"]],
                linewidths=0.6,
                alpha=0.6,
                zorder=2,
            )
        )
    for st, g in s.groupby("style"):
        marker, face, edge, size, _ = SITE_STYLE[st]
        ins.scatter(
            g["x"],
            g["y"],
            s=9,
            marker=marker,
            c=face if face != "none" else "none",
            edgecolors=edge if face == "none" else "none",
            linewidths=0.6,
            zorder=3,
        )
    ins.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, ec=INK, lw=0.9, zorder=4))
    ins.set_xlim(X0, X1)
    ins.set_ylim(Y0, Y1)
    ins.set_aspect("equal", anchor="SW")
    ins.set_title("Overview (main map framed)", fontsize=7.5, color=INK, loc="left", pad=3, fontweight="bold")
    for sp in ins.spines.values():
        sp.set_visible(True)
        sp.set_color("#b9c2bd")


# ----------------------------------------------------------------------------- charts


def cost_bars_svg(labels: list[str], costs: list[dict[str, float]], currency: str, tol: float = 0.5) -> str:
    """Stacked horizontal bars of the cost components per scenario (currency/yr).

    Changes against the first bar (the base) larger than ``tol`` (currency/yr) are coloured.
    """
    import matplotlib
    from matplotlib.patches import Patch

    keys = dict.fromkeys(k for c in costs for k in c)
    comps = [k for k in keys if any(abs(c.get(k, 0.0)) > 0.5 for c in costs)]
    spare = iter(FALLBACK)
    col = {k: COST_COLOURS.get(k) or next(spare) for k in comps}
    base_total = sum(costs[0].values()) if costs else 0.0
    with matplotlib.rc_context(_rc()):
        rows = math.ceil(len(comps) / 5)
        fig, ax = _chart(
            11.0,
            0.75 + 0.22 * rows + 0.34 * len(labels),
            left=_label_inches(labels, 8),
            top=0.12 + 0.24 * rows,
            bottom=0.5,
        )
        y = np.arange(len(labels))[::-1]
        left_pos = np.zeros(len(labels))
        left_neg = np.zeros(len(labels))
        for k in comps:
            v = np.array([c.get(k, 0.0) for c in costs])
            pos_v, neg_v = np.where(v > 0, v, 0.0), np.where(v < 0, v, 0.0)
            _hbars(ax, y, pos_v, left_pos, col[k], height=0.68)
            _hbars(ax, y, neg_v, left_neg, col[k], height=0.68)
            left_pos += pos_v
            left_neg += neg_v
        totals = [sum(c.values()) for c in costs]
        xmax = max(left_pos.max() if len(left_pos) else 1.0, 1.0)
        for yi, tot, lp in zip(y, totals, left_pos):
            d = tot - base_total
            txt = _short(tot) + ("" if abs(d) < 0.5 or yi == y[0] else f"  ({'+' if d > 0 else '−'}{_short(abs(d))})")
            _txt(
                ax,
                lp + 0.01 * xmax,
                yi,
                txt,
                va="center",
                fontsize=7.5,
                color=BAD if d > tol and yi != y[0] else GOOD if d < -tol else INK,
            )
        ax.set_yticks(y, [_t(s) for s in labels], fontsize=8)
        ax.set_ylim(-0.6, len(labels) - 0.4)
        ax.set_xlim(min(left_neg.min() * 1.05, 0), xmax * 1.16)
        _ticks(ax.xaxis)
        ax.set_xlabel(f"landed cost, {currency}/yr".strip(", "))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        ax.legend(
            handles=[Patch(color=col[k], label=k.replace("_", " ")) for k in comps],
            ncols=min(5, len(comps)),
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize=7.5,
        )
        return _svg(fig)


def waterfall_svg(cost: dict[str, float], currency: str) -> str:
    """Cost components cascading to the total (currency/yr)."""
    import matplotlib

    items = [(k, v) for k, v in cost.items() if abs(v) > 0.5]
    total = sum(cost.values())
    spare = iter(FALLBACK)
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(6.6, 3.4, left=0.75, bottom=0.6, top=0.15, right=0.1)
        run = 0.0
        for i, (k, v) in enumerate(items):
            ax.bar(i, v, bottom=run, color=COST_COLOURS.get(k) or next(spare), width=0.7)
            _txt(ax, i, run + max(v, 0) + 0.01 * total, _short(v), ha="center", va="bottom", fontsize=7.5)
            if i:
                ax.plot([i - 1.35, i - 0.35], [run, run], color=MUTED, lw=0.6)
            run += v
        n = len(items)
        ax.bar(n, total, color=INK, width=0.7)
        _txt(ax, n, total * 1.01, _short(total), ha="center", va="bottom", fontsize=8, fontweight="bold")
        ax.set_xticks(range(n + 1), [k.replace("_", "\n") for k, _ in items] + ["total"], fontsize=7)
        _ticks(ax.yaxis)
        ax.set_ylim(0, total * 1.1 if total > 0 else 1)
        ax.grid(axis="y", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


def transit_histogram_svg(result) -> str:
    """Units delivered to customers by transit days, within / outside each customer's window."""
    import matplotlib

    f = result.tables["flows"]
    last = f[f["destination_kind"] == "customer"]
    if last.empty:
        return ""
    days = last["transit_days"].to_numpy(float)
    q = last["quantity"].to_numpy(float)
    hi = float(days.max())
    step = next((s for s in (0.1, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0) if hi / s <= 32), 20.0)
    bins = np.arange(0.0, hi + step + 1e-9, step)
    win = last["within_window"].to_numpy(bool)
    sv = result.tables["service"]
    windows = (
        sv.groupby("max_days")["service_class"].agg(lambda c: ", ".join(sorted(set(map(str, c)))))
        if len(sv) and "max_days" in sv
        else pd.Series(dtype=object)
    )
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(6.6, 3.4, left=0.8, bottom=0.5, top=0.35)
        ax.hist(
            [days[win], days[~win]],
            bins=bins,
            weights=[q[win], q[~win]],
            stacked=True,
            color=[ACCENT, WARN],
            label=["within window", "outside window"],
            edgecolor="white",
            linewidth=0.4,
        )
        ymax = ax.get_ylim()[1]
        for d, cls in windows.items():
            if np.isfinite(d):
                ax.axvline(d, color=INK, lw=1.0, ls=(0, (4, 2)))
                _txt(ax, d, ymax * 0.97, _t(f" {cls} ≤ {d:g} d"), fontsize=7, va="top", color=INK)
        ax.set_xlabel("transit days to customer (last leg)")
        ax.set_ylabel("units/yr")
        _ticks(ax.yaxis)
        ax.legend(fontsize=7.5, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=2)
        ax.grid(axis="y", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


def dc_utilisation_svg(result) -> str:
    """Throughput over capacity per DC; closed DCs listed without a bar."""
    import matplotlib

    d = result.tables["dcs"]
    if d.empty:
        return ""
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(6.0, 0.7 + 0.33 * len(d), left=_label_inches(d["dc"], 8), bottom=0.5, top=0.1)
        y = np.arange(len(d))[::-1]
        for yi, r in zip(y, d.itertuples(index=False)):
            u = float(r.utilisation) if r.utilisation is not None and np.isfinite(r.utilisation) else np.nan
            if not r.open:
                _txt(
                    ax,
                    0.01,
                    yi,
                    "closed" if r.decision == "close" else "not opened",
                    va="center",
                    fontsize=7.5,
                    color=BAD if r.decision == "close" else MUTED,
                    style="italic",
                )
                continue
            if np.isnan(u):
                _txt(ax, 0.01, yi, f"{_short(r.throughput)} units/yr, no capacity limit", va="center", fontsize=7.5)
                continue
            colour = GOOD if u < 0.85 else WARN if u <= 1.0 + 1e-9 else BAD
            _hbars(ax, yi, u, colour=colour, height=0.62, lw=0)
            _txt(
                ax,
                u + 0.015,
                yi,
                f"{u:.0%}  ({_short(r.throughput)} / {_short(r.capacity)})",
                va="center",
                fontsize=7.5,
            )
        ax.axvline(1.0, color=INK, lw=0.9, ls=(0, (4, 2)))
        ax.set_yticks(y, [_t(x) for x in d["dc"]], fontsize=8)
        ax.set_ylim(-0.6, len(d) - 0.4)
        ax.set_xlim(0, max(1.45, float(np.nanmax(d["utilisation"].to_numpy(float), initial=0.0)) + 0.45))
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.set_xlabel("utilisation (throughput ÷ capacity)")
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


def supplier_shares_svg(result, max_rows: int = 40) -> str:
    """Each supplier's share of a site's inflow of a material, against the cap."""
    import matplotlib

    ss = result.tables["supplier_shares"]
    if ss.empty:
        return ""
    ss = ss.sort_values(["site", "product", "share"], ascending=[True, True, False]).head(max_rows)
    cap = float(ss["max_share"].max()) if "max_share" in ss else 1.0
    labels, vals, at_cap, group_edges = [], [], [], []
    prev = None
    for r in ss.itertuples(index=False):
        key = (r.site, r.product)
        if key != prev and prev is not None:
            group_edges.append(len(labels))
        prev = key
        labels.append(f"{r.site} · {r.product} · {r.supplier}")
        vals.append(float(r.share))
        at_cap.append(float(r.share) >= float(r.max_share) - 1e-4 and float(r.max_share) < 1.0)
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(5.4, 0.75 + 0.26 * len(labels), left=_label_inches(labels, 7), bottom=0.5, top=0.1)
        y = np.arange(len(labels))[::-1]
        _hbars(ax, y, vals, colour=[WARN if a else "#94703f" for a in at_cap], height=0.66, lw=0)
        for yi, v in zip(y, vals):
            _txt(ax, v + 0.012, yi, f"{v:.0%}", va="center", fontsize=7)
        for e in group_edges:
            ax.axhline(y[e] + 0.5, color=GRID, lw=0.8)
        if cap < 1.0:
            ax.axvline(cap, color=BAD, lw=1.1, ls=(0, (4, 2)))
            _txt(ax, cap, y[0] + 0.6, f" cap {cap:.0%}", color=BAD, fontsize=7.5, va="bottom")
        ax.set_yticks(y, [_t(s) for s in labels], fontsize=7)
        ax.set_xlim(0, 1.12)
        ax.set_ylim(-0.7, len(labels) - 0.2 + (0.6 if cap < 1.0 else 0.0))
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.set_xlabel("share of the site's supply" + ("" if cap < 1.0 else " (no cap set)"))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


def mode_mix_svg(result, colours: dict[str, str]) -> str:
    """Share of each mode in units, tonnes, tonne-km, freight cost and CO2e (100% bars)."""
    import matplotlib
    from matplotlib.patches import Patch

    mm = result.tables["mode_mix"]
    if mm.empty:
        return ""
    rows = [
        ("units", "units"),
        ("tonnes", "tonnes"),
        ("tonne_km", "tonne-km"),
        ("freight_cost", "freight cost"),
        ("co2_kg", "CO2e"),
    ]
    rows = [(c, n) for c, n in rows if c in mm.columns]
    with matplotlib.rc_context(_rc()):
        lrows = math.ceil(len(mm) / 6)
        fig, ax = _chart(
            5.4,
            0.55 + 0.24 * lrows + 0.42 * len(rows),
            left=_label_inches(["freight cost"], 8),
            top=0.1 + 0.24 * lrows,
            bottom=0.35,
        )
        y = np.arange(len(rows))[::-1]
        for yi, (c, _) in zip(y, rows):
            v = mm[c].to_numpy(float)
            tot = v.sum()
            left = 0.0
            for m, x in zip(mm["mode"], v):
                share = x / tot if tot > 0 else 0.0
                _hbars(ax, yi, share, left, colours.get(m, MUTED), height=0.64, lw=0.6)
                if share >= 0.07:
                    _txt(ax, left + share / 2, yi, f"{share:.0%}", ha="center", va="center", fontsize=7, color="white")
                left += share
        ax.set_yticks(y, [n for _, n in rows], fontsize=8)
        ax.set_ylim(-0.6, len(rows) - 0.4)
        ax.set_xlim(0, 1)
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.legend(
            handles=[Patch(color=colours.get(m, MUTED), label=_t(m)) for m in mm["mode"]],
            ncols=min(6, len(mm)),
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize=7.5,
        )
        return _svg(fig)


def _find_col(df: pd.DataFrame, exact: tuple[str, ...], fragment: str) -> str | None:
    for c in exact:
        if c in df.columns:
            return c
    return next((c for c in df.columns if fragment in str(c).lower() and pd.api.types.is_numeric_dtype(df[c])), None)


def frontier_svg(df: pd.DataFrame, currency: str) -> str:
    """Landed cost against CO2e for each point of a frontier table (needs a cost and a CO2 column)."""
    import matplotlib

    cost = _find_col(df, ("total_cost", "landed_cost", "cost"), "cost")
    co2 = _find_col(df, ("co2e_tonnes", "co2_tonnes", "co2e_t", "co2_kg"), "co2")
    if cost is None or co2 is None:
        return ""
    d = df[[cost, co2] + [c for c in df.columns if c not in (cost, co2)]].dropna(subset=[cost, co2])
    d = d.sort_values(co2)
    if d.empty:
        return ""
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(8.0, 3.4, left=0.9, bottom=0.55, top=0.15)
        ax.plot(d[co2], d[cost], color=ACCENT, lw=1.6, marker="o", ms=5, mfc="white", mew=1.4)
        lab = next(
            (
                c
                for c in d.columns
                if "price" in str(c).lower() or "label" in str(c).lower() or "point" in str(c).lower()
            ),
            None,
        )
        if lab is not None:
            for x, y, v in zip(d[co2], d[cost], d[lab]):
                _ann(
                    ax,
                    _t(f"{v:g}" if isinstance(v, (int, float, np.number)) else v),
                    (x, y),
                    xytext=(5, 4),
                    textcoords="offset points",
                    fontsize=7,
                    color=MUTED,
                )
        ax.set_xlabel(_t(co2.replace("_", " ")))
        ax.set_ylabel(_t(f"{cost.replace('_', ' ')}, {currency}/yr"))
        _ticks(ax.yaxis)
        _ticks(ax.xaxis)
        ax.grid(color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


# ----------------------------------------------------------------------------- tables


def _kind(col: str) -> str:
    c = str(col).lower()
    if any(h in c for h in SHARE_HINTS):
        return "share"
    if "days" in c or "seconds" in c:
        return "days"
    if any(h in c for h in MONEY_HINTS):
        return "money"
    return "number"


def fmt(v, kind: str = "number") -> str:
    """A cell's text: money and volumes with thousands separators, shares as %, days with 2 decimals."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "–"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)) and kind not in ("share",):
        return f"{int(v):,}"
    if isinstance(v, (float, np.floating)):
        v = float(v)
        if math.isinf(v):
            return "no limit" if v > 0 else "−∞"
        if kind == "share":
            return f"{v:.1%}"
        if kind in ("days", "decimal"):
            return f"{v:,.2f}"
        if kind == "delta":
            return f"{v:+,.0f}"
        if kind == "delta_share":
            return f"{v:+.2%}"
        if abs(v) >= 100 or kind == "money" or v == round(v):
            return f"{v:,.0f}"
        return f"{v:,.3g}" if abs(v) < 1 else f"{v:,.2f}"
    return str(v)


def table(
    df: pd.DataFrame,
    columns: list[tuple[str, str, str]] | None = None,
    tid: str = "",
    max_rows: int | None = MAX_TABLE_ROWS,
) -> dict:
    """A table for the template: header labels and rows of (text, css class)."""
    if columns is None:
        columns = [(c, str(c).replace("_", " "), _kind(c)) for c in df.columns]
    columns = [(c, n, k) for c, n, k in columns if c in df.columns]
    shown = df if max_rows is None else df.head(max_rows)
    rows = []
    for rec in shown[[c for c, _, _ in columns]].itertuples(index=False):
        cells = []
        for v, (c, _, k) in zip(rec, columns):
            num = isinstance(v, (int, float, np.number)) and not isinstance(v, (bool, np.bool_))
            cells.append((fmt(v, k), "num" if num else ""))
        rows.append(cells)
    return {
        "id": tid,
        "headers": [
            (n, "num" if pd.api.types.is_numeric_dtype(df[c]) and not pd.api.types.is_bool_dtype(df[c]) else "")
            for c, n, _ in columns
        ],
        "rows": rows,
        "total_rows": len(df),
        "shown": len(shown),
    }


def service_class_table(service: pd.DataFrame) -> dict | None:
    """Per service class: window (days), target and achieved share within the window, units/yr."""
    need = {"service_class", "max_days", "target_share", "delivered", "within_window", "demand"}
    if service.empty or not need <= set(service.columns):
        return None
    sv = service.assign(service_class=service["service_class"].fillna("").astype(str).replace("", "(none)"))
    g = sv.groupby(["service_class", "max_days", "target_share"], as_index=False, dropna=False).agg(
        customers=("demand", "size"),
        demand=("demand", "sum"),
        delivered=("delivered", "sum"),
        within=("within_window", "sum"),
        met=("target_met", "sum"),
    )
    g["achieved"] = np.where(g["delivered"] > 0, g["within"] / g["delivered"].where(g["delivered"] > 0), np.nan)
    return table(
        g,
        [
            ("service_class", "class", "text"),
            ("max_days", "window days", "days"),
            ("target_share", "target", "share"),
            ("achieved", "achieved", "share"),
            ("customers", "customers", "number"),
            ("met", "meeting target", "number"),
        ],
        tid="service-classes",
    )


def kpi_table(kpis: pd.DataFrame, currency: str) -> dict:
    """The indicator table, each value formatted by its unit (shares as %, days, money)."""
    rows = []
    for name, v, unit in zip(kpis["kpi"], kpis["value"], kpis["unit"]):
        u = str(unit)
        v = float(v)
        if "share" in u:
            kind = "share"
        elif u.startswith("days") or "/unit" in u or (abs(v) < 100 and np.isfinite(v) and v != round(v)):
            kind = "decimal"
        else:
            kind = "number"
        rows.append(
            [
                (str(name).replace("_", " "), ""),
                (fmt(float(v), kind), "num"),
                (u.replace("currency", currency or "currency"), ""),
            ]
        )
    return {
        "id": "kpi-table",
        "headers": [("indicator", ""), ("value", "num"), ("unit", "")],
        "rows": rows,
        "total_rows": len(rows),
        "shown": len(rows),
    }


COMPARISON_COLUMNS = [  # column, label, format, sense (+1: higher is worse, -1: higher is better, 0: none)
    ("scenario", "scenario", "text", 0),
    ("status", "status", "text", 0),
    ("total_cost", "total cost", "money", 1),
    ("delta_cost", "Δ vs base", "delta", 1),
    ("delta_pct", "Δ %", "delta_share", 1),
    ("dcs_open", "DCs", "number", 0),
    ("share_within_window", "in window", "share", -1),
    ("avg_transit_days", "avg days", "days", 1),
    ("max_supplier_share", "max share", "share", 0),
    ("lost_units", "lost units/yr", "money", 1),
    ("lost_value", "lost value", "money", 1),
    ("co2e_tonnes", "CO2e t/yr", "money", 1),
    ("verified", "checked", "text", 0),
]
MONEY_COLUMNS = ("total_cost", "delta_cost", "delta_pct")


def _money_tolerance(comp: pd.DataFrame, row) -> float:
    """A cost change smaller than this (currency/yr) is within the optimality gaps of the base and
    of this row's solve: not coloured.  Each row uses its own gap, so one time-limited scenario
    does not hide the changes of the others."""
    base_total = float(comp["total_cost"].iloc[0]) if "total_cost" in comp else float("nan")
    if not np.isfinite(base_total):
        return 0.5

    def gap(v):
        g = pd.to_numeric(pd.Series([v]), errors="coerce").iloc[0]
        return 0.0 if g is None or not np.isfinite(g) else float(g)

    base_gap = gap(comp["gap"].iloc[0]) if "gap" in comp else 0.0
    row_gap = gap(row.get("gap", 0.0))
    total = float(row.get("total_cost", base_total))
    scale = max(abs(base_total), abs(total) if np.isfinite(total) else 0.0)
    return max(base_gap + row_gap, 1e-9) * scale


def comparison_table(comp: pd.DataFrame) -> dict:
    """The scenario comparison with changes against the base coloured (red worse, green better).

    A cost change is coloured when it is larger than the optimality gap allows (see
    :func:`_money_tolerance`); other columns when their shown value differs from the base's.
    """
    cols = [c for c in COMPARISON_COLUMNS if c[0] in comp.columns]
    if "status" in comp and comp["status"].eq("optimal").all():
        cols = [c for c in cols if c[0] != "status"]
    base = comp.iloc[0]
    base_total = float(base.get("total_cost", np.nan))
    rows = []
    for _, r in comp.iterrows():
        cells = []
        for c, _, k, sense in cols:
            v = r[c]
            cls = "num" if k != "text" else ""
            if c == "verified":
                ok = isinstance(v, (bool, np.bool_)) and bool(v)  # NaN (no plan to check) is not a pass
                cls = "ok" if ok else "bad"
                text = "yes" if ok else "no"
            elif c == "status":
                text = str(v)
                cls = "" if v == "optimal" else "warn"
            else:
                text = fmt(v, k)
            numeric = isinstance(v, (int, float, np.number)) and not isinstance(v, (bool, np.bool_))
            if sense and r.name != comp.index[0] and numeric and np.isfinite(float(v)):
                if c in MONEY_COLUMNS:
                    d = float(r["total_cost"]) - base_total if c != "total_cost" else float(v) - base_total
                    changed = abs(d) > _money_tolerance(comp, r)
                else:
                    b = base[c]
                    d = float(v) - float(b) if b is not None and np.isfinite(float(b)) else 0.0
                    changed = text != fmt(b, k)
                if changed and d:
                    cls += " worse" if d * sense > 0 else " better"
            cells.append((text, cls.strip()))
        rows.append(cells)
    return {
        "id": "comparison-table",
        "headers": [(n, "" if k == "text" else "num") for _, n, k, _ in cols],
        "rows": rows,
        "total_rows": len(comp),
        "shown": len(comp),
    }


# ----------------------------------------------------------------------------- page


def _currency(result) -> str:
    net = getattr(result, "network", None)
    try:
        return str(net.settings["case"]["currency"]) if net is not None else ""
    except (KeyError, TypeError):
        return ""


def _status_class(status: str) -> str:
    return "ok" if status == "optimal" else "warn" if status in ("time_limit", "gap_limit", "feasible") else "bad"


def _kpi_tiles(result, currency: str) -> list[dict]:
    k = dict(zip(result.tables["kpis"]["kpi"], result.tables["kpis"]["value"]))
    tiles = [
        ("total_landed_cost", "landed cost", lambda v: f"{_short(v)}", f"{currency}/yr"),
        ("cost_per_unit_delivered", "cost per unit", lambda v: f"{v:,.2f}", f"{currency}/unit"),
        ("share_within_service_window", "within service window", lambda v: f"{v:.1%}", "of units"),
        ("avg_transit_days_to_customer", "average transit", lambda v: f"{v:.2f}", "days"),
        ("dcs_open", "DCs open", lambda v: f"{v:.0f}", ""),
        ("co2e_tonnes", "CO2e", lambda v: f"{v:,.0f}", "t/yr"),
        ("lost_demand", "lost demand", lambda v: f"{v:,.0f}", "units/yr"),
    ]
    out = []
    for key, label, f, unit in tiles:
        v = k.get(key)
        if v is None:
            continue
        v = float(v)
        out.append(
            {
                "label": label,
                "value": f(v) if np.isfinite(v) else "–",
                "unit": unit,
                "cls": "bad" if key == "lost_demand" and v > 0.5 else "",
            }
        )
    return out


def _verification(result) -> dict:
    v = result.verification
    if v is None:
        return {"text": "not checked", "cls": "warn"}
    if v.passed:
        return {"text": f"passed (largest violation {v.largest_violation:.1e})", "cls": "ok"}
    return {"text": f"FAILED: {v.largest_violation_rule} off by {v.largest_violation:.3g}", "cls": "bad"}


def _extra_sections(tables: dict[str, pd.DataFrame], currency: str) -> list[dict]:
    """A titled section per extra table; frontiers and rankings also get a chart."""
    out = []
    for name, df in tables.items():
        if not isinstance(df, pd.DataFrame):
            continue
        title, note = KNOWN_EXTRA.get(name, (name.replace("_", " ").capitalize(), ""))
        chart = frontier_svg(df, currency) if "frontier" in name else ranking_svg(df, currency)
        cols = [c for c in KNOWN_COLUMNS.get(name, []) if c in df.columns]
        trimmed = len(cols) >= 3 and len(cols) < len(df.columns)
        shown = df[cols] if trimmed else df
        max_rows = MAX_TABLE_ROWS
        if name in KNOWN_ORDER and set(KNOWN_ORDER[name][0]) <= set(df.columns):
            by, ascending, max_rows = KNOWN_ORDER[name]
            shown = shown.loc[df.sort_values(by, ascending=ascending, kind="stable").index]
            if len(df) > max_rows:
                note = (note + " " if note else "") + f"The {max_rows} largest rows by {by[0].replace('_', ' ')}."
        if trimmed:
            note = (note + " " if note else "") + "A selection of the columns; every column is in results.xlsx."
        out.append(
            {
                "id": "extra-" + re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-"),
                "title": title,
                "note": note,
                "chart": chart,
                "table": table(shown, tid=f"table-{name}", max_rows=max_rows),
            }
        )
    return out


def ranking_svg(df: pd.DataFrame, currency: str, top: int = 15) -> str:
    """Bars of a ranking's impact (recovery cost + lost value, currency/yr) for its first ``top`` rows.

    Drawn when the table has a label column (element or node) and an impact or lost_value column.
    """
    import matplotlib

    label = next((c for c in ("element", "node") if c in df.columns), None)
    parts = [c for c in ("recovery_cost", "lost_value", "rule_relief_cost") if c in df.columns]
    key = "impact" if "impact" in df.columns else ("lost_value" if "lost_value" in df.columns else None)
    if label is None or key is None or df.empty:
        return ""
    d = df.sort_values(key, ascending=False).head(top)
    if not (pd.to_numeric(d[key], errors="coerce").fillna(0) > 0).any():
        return ""
    labels = [_t(x) for x in d[label].astype(str)]
    colours = {"recovery_cost": WARN, "lost_value": BAD, "rule_relief_cost": "#8d979e"}
    with matplotlib.rc_context(_rc()):
        fig, ax = _chart(11.0, 0.8 + 0.28 * len(d), left=_label_inches(labels, 7.5), top=0.35, bottom=0.45)
        y = np.arange(len(d))[::-1]
        if key == "impact" and parts:
            left = np.zeros(len(d))
            for c in parts:
                v = pd.to_numeric(d[c], errors="coerce").fillna(0.0).clip(lower=0.0).to_numpy(float)
                _hbars(ax, y, v, left, colours[c], height=0.64, lw=0)
                left += v
            from matplotlib.patches import Patch

            ax.legend(
                handles=[Patch(color=colours[c], label=c.replace("_", " ")) for c in parts],
                ncols=len(parts),
                loc="lower left",
                bbox_to_anchor=(0.0, 1.0),
                fontsize=7.5,
            )
            total = left
        else:
            total = pd.to_numeric(d[key], errors="coerce").fillna(0.0).to_numpy(float)
            _hbars(ax, y, total, colour=BAD, height=0.64, lw=0)
        vmax = max(float(total.max()), 1.0)
        for yi, v in zip(y, total):
            _txt(ax, v + 0.01 * vmax, yi, _short(v), va="center", fontsize=7)
        ax.set_yticks(y, labels, fontsize=7.5)
        ax.set_ylim(-0.6, len(d) - 0.4)
        ax.set_xlim(0, vmax * 1.12)
        _ticks(ax.xaxis)
        ax.set_xlabel(f"{key.replace('_', ' ')}, {currency}/yr".replace(", /yr", " per year"))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return _svg(fig)


def render_report(run_or_result, extra: dict[str, pd.DataFrame] | None = None, created: datetime | None = None) -> str:
    """The report page as one HTML string (see :func:`write_report`)."""
    import jinja2

    if hasattr(run_or_result, "comparison"):
        run, base = run_or_result, run_or_result.base
    else:
        run, base = None, run_or_result
    currency = _currency(base)
    created = created or datetime.now().astimezone()
    ctx = {
        "case": base.case_name,
        "created": created.strftime("%Y-%m-%d %H:%M %Z").strip(),
        "currency": currency,
        "status": base.status,
        "status_cls": _status_class(base.status),
        "gap": f"{base.gap:.3%}" if base.gap is not None and np.isfinite(base.gap) else "–",
        "verification": _verification(base) if base.has_solution else {"text": "no plan to check", "cls": "bad"},
        "disclaimer": DISCLAIMER,
        "has_solution": base.has_solution,
        "message": "" if (base.message or "").strip().lower() in ("", base.status.lower(), "optimal") else base.message,
        "css": (ASSETS / "report.css").read_text(encoding="utf-8"),
        "n_scenarios": 0,
        "sections": [],
    }
    if run is not None:
        comp = run.comparison
        ctx["n_scenarios"] = max(len(comp) - 1, 0)
        ctx["n_checked"] = int(comp["verified"].fillna(False).astype(bool).sum()) if "verified" in comp else 0
        ctx["n_rows"] = len(comp)
    if base.has_solution:
        t = base.tables
        colours = mode_colours(t["mode_mix"]["mode"] if len(t["mode_mix"]) else [])
        if run is not None:
            labels = [lab for lab in run.comparison["scenario"] if lab in run.results and run.results[lab].has_solution]
            for lab, r in run.results.items():
                if r.has_solution and len(r.tables["mode_mix"]):
                    for m in r.tables["mode_mix"]["mode"]:
                        colours.setdefault(m, mode_colours(list(colours) + [m])[m])
            ctx["comparison"] = comparison_table(run.comparison)
            ctx["comparison_tol"] = _money_tolerance(run.comparison, run.comparison.iloc[0])
            ctx["cost_bars"] = cost_bars_svg(
                labels, [run.results[lab].cost for lab in labels], currency, tol=ctx["comparison_tol"]
            )
            desc = (
                run.comparison[["scenario", "description", "resolve", "method"]].copy()
                if {"description", "method"} <= set(run.comparison.columns)
                else None
            )
            ctx["scenario_notes"] = table(desc, tid="scenario-notes", max_rows=None) if desc is not None else None
        ctx["kpis"] = _kpi_tiles(base, currency)
        ctx["map"], ctx["map_caption"] = network_map_svg(base, colours)
        ctx["waterfall"] = waterfall_svg(base.cost, currency)
        cost = t["cost"].copy()
        total = float(cost["amount"].sum())
        cost["share"] = cost["amount"] / total if total else np.nan
        cost = pd.concat(
            [cost, pd.DataFrame([{"component": "total", "amount": total, "share": 1.0}])], ignore_index=True
        )
        cost["component"] = cost["component"].str.replace("_", " ")
        ctx["cost_table"] = table(
            cost,
            [("component", "component", "text"), ("amount", f"{currency}/yr", "money"), ("share", "share", "share")],
            tid="cost-table",
        )
        ctx["transit"] = transit_histogram_svg(base)
        last = t["flows"][t["flows"]["destination_kind"] == "customer"]
        delivered = float(last["quantity"].sum())
        ctx["within_share"] = (
            float(last.loc[last["within_window"], "quantity"].sum()) / delivered if delivered > 0 else float("nan")
        )
        sv = t["service"]
        missed = sv[~sv["target_met"].astype(bool)] if "target_met" in sv else sv.iloc[0:0]
        ctx["service_classes"] = service_class_table(sv)
        ctx["service_missed"] = table(
            missed,
            [
                ("customer", "customer", "text"),
                ("service_class", "class", "text"),
                ("target_share", "target", "share"),
                ("share_within_window", "achieved", "share"),
                ("demand", "demand units/yr", "number"),
                ("unmet", "lost units/yr", "number"),
            ],
            tid="service-missed",
        )
        ctx["dc_chart"] = dc_utilisation_svg(base)
        dcols = [("dc", "DC", "text"), ("decision", "decision", "text")]
        if t["dcs"]["size"].astype(str).str.len().gt(0).any():
            dcols.append(("size", "size", "text"))
        dcols += [
            ("capacity", "capacity", "number"),
            ("throughput", "throughput", "number"),
            ("utilisation", "utilisation", "share"),
            ("fixed_cost", "fixed cost", "money"),
        ]
        ctx["dc_table"] = table(t["dcs"], dcols, tid="dc-table")
        ctx["shares_chart"] = supplier_shares_svg(base)
        ctx["mode_chart"] = mode_mix_svg(base, colours)
        ctx["mode_table"] = table(
            t["mode_mix"],
            [
                ("mode", "mode", "text"),
                ("units", "units/yr", "number"),
                ("tonnes", "tonnes/yr", "number"),
                ("tonne_km", "tonne-km/yr", "number"),
                ("freight_cost", f"freight {currency}/yr", "money"),
                ("co2_kg", "CO2e kg/yr", "number"),
            ],
            tid="mode-table",
        )
        ctx["kpi_table"] = kpi_table(t["kpis"], currency)
        if len(t["unmet"]):
            ctx["unmet_table"] = table(t["unmet"], tid="unmet-table")
        optional = {k: v for k, v in t.items() if k not in STANDARD_TABLES}
        optional.update(extra or {})
        ctx["extras"] = _extra_sections(optional, currency)
    elif base.diagnosis is not None:
        ctx["diagnosis"] = table(base.diagnosis, tid="diagnosis")
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(ASSETS),
        autoescape=jinja2.select_autoescape(["html", "j2"], default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["safe_svg"] = _safe_svg
    return env.get_template("report.html.j2").render(**ctx)


def _safe_svg(svg: str):
    """Mark matplotlib's SVG as safe markup (text in it is XML-escaped by matplotlib)."""
    from markupsafe import Markup

    return Markup(svg or "")


def write_report(run_or_result, path: str | Path, extra: dict[str, pd.DataFrame] | None = None) -> Path:
    """Write the self-contained HTML report of a run (base and scenarios) or of one result.

    Args:
        run_or_result: a ScenarioRun or a Result.
        path: the file to write (written beside as a temporary file, then renamed).
        extra: more tables to show, each as a titled section (e.g. ``{"frontier": df, "spof": df}``);
            a ``frontier`` table with cost and CO2 columns is also charted.
    """
    path = Path(path)
    page = render_report(run_or_result, extra=extra)
    tmp = path.with_name(f".{path.name}.tmp-{os.getpid()}")
    tmp.write_text(page, encoding="utf-8")
    os.replace(tmp, path)
    return path


__all__ = ["fmt", "map_layout", "project", "render_report", "site_table", "write_report"]
