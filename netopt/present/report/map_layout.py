"""Where things go on a map: projection, the sites of a result, the frame, far sites pinned to its edge,
graticule and flow arcs (geometry only; drawing is in :mod:`netopt.present.report.map`)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.present.report.style import GRID


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
    base = np.where(s["kind"].eq("supplier"), np.where(s["site"].isin(used), "supplier", "supplier_idle"), s["kind"])
    dec = {str(k): str(v) for k, v in zip(d["dc"], d["decision"])}
    s["style"] = [
        {"keep": "dc_keep", "open": "dc_open", "close": "dc_close", "out": "dc_out"}.get(
            dec.get(str(site), ""), "dc_idle"
        )
        if k == "dc"
        else st
        for site, k, st in zip(s["site"], s["kind"], base)
    ]
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


def deg_label(v: float, pos: str, neg: str) -> str:
    v = (v + 180.0) % 360.0 - 180.0 if pos == "E" else v
    if abs(v) < 1e-9:
        return "0°"
    return f"{abs(v):g}°{pos if v > 0 else neg}"


def draw_graticule(ax, extent, lat0, lon0, step=None, labels=True):
    """Parallels and meridians every ``step`` degrees (chosen from the span when None), labelled on the axes."""
    x0, x1, y0, y1 = extent
    k = math.cos(math.radians(lat0))
    lon_lo, lon_hi = lon0 + x0 / k, lon0 + x1 / k
    step = step or _graticule_step(max(lon_hi - lon_lo, y1 - y0))
    lons = np.arange(math.ceil(lon_lo / step) * step, lon_hi + 1e-9, step)
    lats = np.arange(math.ceil(y0 / step) * step, y1 + 1e-9, step)
    lats = lats[(lats >= -90) & (lats <= 90)]
    for lo in lons:
        ax.axvline((lo - lon0) * k, color=GRID, lw=0.6, zorder=0.5)
    for la in lats:
        ax.axhline(la, color=GRID, lw=0.6, zorder=0.5)
    if labels:
        ax.set_xticks([(lo - lon0) * k for lo in lons], [deg_label(lo, "E", "W") for lo in lons])
        ax.set_yticks(list(lats), [deg_label(la, "N", "S") for la in lats])
    else:
        ax.set_xticks([])
        ax.set_yticks([])


def flow_lines(flows: pd.DataFrame) -> pd.DataFrame:
    """Flows summed over products per (origin, destination, mode): units/yr and tonnes/yr."""
    if flows.empty:
        return pd.DataFrame(columns=["origin", "destination", "mode", "units", "tonnes"])
    return flows.groupby(["origin", "destination", "mode"], as_index=False).agg(
        units=("quantity", "sum"), tonnes=("tonnes", "sum")
    )


_BEZ = np.linspace(0.0, 1.0, 11)


def curve(p, q, bend=0.10) -> np.ndarray:
    """Points of a gentle quadratic arc from p to q, bending to the left of the direction of travel."""
    (xa, ya), (xb, yb) = p, q
    dx, dy = xb - xa, yb - ya
    cx, cy = (xa + xb) / 2 - bend * dy, (ya + yb) / 2 + bend * dx
    t = _BEZ[:, None]
    return (1 - t) ** 2 * np.array([xa, ya]) + 2 * (1 - t) * t * np.array([cx, cy]) + t**2 * np.array([xb, yb])
