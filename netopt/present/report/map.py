"""The network map: equirectangular projection, far sites pinned to the edge, flows by mode (inline SVG)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.present.report.style import (
    GRID,
    INK,
    MUTED,
    SITE_STYLE,
    chart_rc,
    note_at,
    plain,
    short_number,
    to_svg,
)

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
    base = np.where(s["kind"].eq("supplier"), np.where(s["site"].isin(used), "supplier", "supplier_idle"), s["kind"])
    dec = {str(k): str(v) for k, v in zip(d["dc"], d["decision"])}
    s["style"] = [
        {"keep": "dc_keep", "open": "dc_open", "close": "dc_close"}.get(dec.get(str(site), ""), "dc_idle")
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
        ax.set_xticks([(lo - lon0) * k for lo in lons], [deg_label(lo, "E", "W") for lo in lons])
        ax.set_yticks(list(lats), [deg_label(la, "N", "S") for la in lats])
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
    with matplotlib.rc_context(chart_rc()):
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
            note_at(
                ax,
                plain(r.site),
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
            note_at(
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
            note_at(
                ax,
                plain(
                    f"{r.site}\n{deg_label(round(r.lat, 1), 'N', 'S')} {deg_label(round(r.lon, 1), 'E', 'W')}, off map"
                ),
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
            [Line2D([], [], color=colours.get(m, MUTED), lw=3, label=plain(m)) for m in sorted(set(lines["mode"]))],
        )
        section(
            "Flow volume",
            [
                Line2D([], [], color=INK, lw=float(width(v)), label=f"{short_number(v)} t/yr")
                for v in _nice_samples(vmax)
            ],
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
            f"Projection: equirectangular, true scale at {deg_label(round(lay['lat0'], 1), 'N', 'S')}. "
            "Line width in proportion to tonnes/yr, summed over products; lines bend to the left of "
            "their direction of travel."
        )
        if far:
            caption += (
                " Sites far outside the region are pinned to the map edge in their true direction, with "
                "their coordinates; the overview shows every site at its true position."
            )
        return to_svg(fig), caption


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
        marker, face, edge, _size, _ = SITE_STYLE[st]
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
