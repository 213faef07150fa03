"""The network maps (inline SVG): one solve's network, and a solve against the base.

Both draw on land, sea and borders (:mod:`netopt.present.report.land`), in a frame from
:mod:`netopt.present.report.map_layout`; the maps of one run's scenarios share one frame
(:func:`run_layout`) so they can be compared side by side.  Line widths are in proportion to
tonnes/yr summed over products (for a difference map: to the change in tonnes/yr).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.present.report.land import LAND_NOTE, draw_land
from netopt.present.report.map_layout import curve, deg_label, draw_graticule, flow_lines, map_layout, site_table
from netopt.present.report.style import (
    FLOW_GAINED,
    FLOW_LOST,
    FLOW_SAME,
    INK,
    MUTED,
    SITE_STYLE,
    chart_rc,
    note_at,
    plain,
    short_number,
    to_svg,
)

NETWORK_ORDER = [
    "customer",
    "supplier_idle",
    "supplier",
    "plant",
    "dc_idle",
    "dc_out",
    "dc_close",
    "dc_keep",
    "dc_open",
]
DIFFERENCE_ORDER = ["customer", "customer_short", "supplier_idle", "supplier", "plant", "dc_idle", "dc_out", "dc_lost"]
DIFFERENCE_ORDER += ["dc_both", "dc_gained"]
LABELLED = {"plant", "dc_keep", "dc_open", "dc_close", "dc_out", "dc_gained", "dc_lost", "dc_both"}


def run_layout(results) -> dict:
    """One frame for every solve of a run: the layout of all their sites together."""
    tables = [site_table(r) for r in results if r.has_solution]
    return map_layout(pd.concat(tables, ignore_index=True).drop_duplicates("site").reset_index(drop=True))


def _placed(sites: pd.DataFrame, lay: dict) -> pd.DataFrame:
    """``sites`` with the positions the layout gives them (x, y true; px, py drawn; far)."""
    where = lay["sites"][["site", "x", "y", "px", "py", "far"]]
    return sites.merge(where, on="site", how="inner")


def _frame(lay: dict, compact: bool, land: bool = True):
    """Figure, map axes (land and graticule drawn) and legend axes for the frame of ``lay``.

    ``land=False``: a transparent map over a land layer drawn once for many maps (:func:`land_layer_svg`).
    """
    from matplotlib.figure import Figure

    x0, x1, y0, y1 = lay["extent"]
    fig_w, map_w = (8.2, 5.9) if compact else (11.0, 8.3)
    map_h = map_w * (y1 - y0) / (x1 - x0)
    fig_h = max(map_h + 0.45, 4.6 if compact else 6.0)
    fig = Figure(figsize=(fig_w, fig_h))
    ax = fig.add_axes((0.45 / fig_w, 0.35 / fig_h, map_w / fig_w, map_h / fig_h))
    lax = fig.add_axes(((0.45 + map_w + 0.2) / fig_w, 0.02, 1 - (0.45 + map_w + 0.25) / fig_w, 0.96))
    lax.axis("off")
    if land:
        draw_land(ax, lay["extent"], lay["lat0"], lay["lon0"], detail=320.0 if compact else 650.0)
    else:
        ax.set_facecolor("none")
    draw_graticule(ax, lay["extent"], lay["lat0"], lay["lon0"])
    for sp in ax.spines.values():
        sp.set_visible(True)
        sp.set_color("#b9c2bd")
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.tick_params(labelsize=7, length=0)
    return fig, ax, lax, (map_w, fig_w, fig_h)


def land_layer_svg(lay: dict, compact: bool = True) -> str:
    """The land under the maps drawn with ``land=False`` in frame ``lay``: the same figure, land only."""
    import matplotlib

    with matplotlib.rc_context(chart_rc()):
        fig, ax, _lax, _ = _frame(lay, compact)
        ax.set_xticks([])
        ax.set_yticks([])
        return to_svg(fig)


def _draw_lines(ax, pos: dict, lines: pd.DataFrame, colours: list[str], widths, alpha: float = 0.85) -> None:
    from matplotlib.collections import LineCollection

    if len(lines):
        ax.add_collection(
            LineCollection(
                [curve(pos[o], pos[d]) for o, d in zip(lines["origin"], lines["destination"])],
                colors=colours,
                linewidths=widths,
                alpha=alpha,
                capstyle="round",
                joinstyle="round",
                zorder=2,
            )
        )


def _draw_sites(ax, s: pd.DataFrame, order: list[str], compact: bool) -> None:
    """Markers by style (customers sized by demand, first; DCs on top) and labels of plants and DCs."""
    customers = s["style"].isin(["customer", "customer_short"])
    cmax = float(s.loc[customers, "size"].max()) if customers.any() else 1.0
    for z, st in enumerate(order):
        g = s[s["style"] == st]
        if g.empty:
            continue
        marker, face, edge, size, _ = SITE_STYLE[st]
        sizes = (12 + 260 * g["size"] / (cmax or 1.0)) if size is None else size
        ax.scatter(
            g["px"],
            g["py"],
            s=sizes * (0.7 if compact else 1.0),
            marker=marker,
            c=face if face != "none" else "none",
            edgecolors=edge,
            linewidths=1.3 if face == "none" else 0.8,
            alpha=0.75 if size is None else 1.0,
            zorder=5 + z,
        )
    halo = {"boxstyle": "round,pad=0.12", "fc": "white", "ec": "none", "alpha": 0.75}
    for r in s[s["style"].isin(LABELLED) & ~s["far"]].itertuples():
        note_at(
            ax,
            plain(r.site),
            (r.px, r.py),
            xytext=(7, 5),
            textcoords="offset points",
            fontsize=6.5 if compact else 7.5,
            color=INK,
            bbox=halo,
            zorder=20,
        )


def _draw_far(ax, s: pd.DataFrame, extent) -> None:
    """Far sites: pinned to the edge, an arrow outwards and their coordinates."""
    x0, x1, y0, y1 = extent
    mx, my = (x0 + x1) / 2, (y0 + y1) / 2
    near = s[~s["far"]]
    lw_, lh_ = 0.2 * (x1 - x0), 0.06 * (y1 - y0)  # a far site's label box, in map units (roughly)
    halo = {"boxstyle": "round,pad=0.12", "fc": "white", "ec": "none", "alpha": 0.75}
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
            plain(f"{r.site}\n{deg_label(round(r.lat, 1), 'N', 'S')} {deg_label(round(r.lon, 1), 'E', 'W')}, off map"),
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


def _site_handles(s: pd.DataFrame, order: list[str]) -> list:
    from matplotlib.lines import Line2D

    out = []
    for st in [st for st in order if (s["style"] == st).any()]:
        marker, face, edge, size, label = SITE_STYLE[st]
        out.append(
            Line2D(
                [],
                [],
                marker=marker,
                ls="",
                markersize=7 if size is None else 8,
                markerfacecolor=face,
                markeredgecolor=edge,
                label=label,
                markeredgewidth=1.2 if face == "none" else 0.8,
            )
        )
    return out


def _legend(lax, sections: list[tuple[str, list]], fontsize: float = 8) -> None:
    """One legend of titled sections (bold headings) in the legend axes."""
    from matplotlib.lines import Line2D

    head = Line2D([], [], ls="", marker="")
    handles, labels, heads = [], [], []
    for title, items in sections:
        if items:
            handles.append(head)
            labels.append(title)
            heads.append(len(labels) - 1)
            for h in items:
                handles.append(h)
                labels.append(h.get_label())
    leg = lax.legend(
        handles,
        labels,
        loc="upper left",
        bbox_to_anchor=(0.0, 1.0),
        fontsize=fontsize,
        handlelength=2.4,
        borderaxespad=0.0,
        labelspacing=0.55,
    )
    for i, t in enumerate(leg.get_texts()):
        if i in heads:
            t.set_fontweight("bold")
            t.set_position((-28, 0))


def _width_scale(vmax: float):
    vmax = vmax if vmax > 0 else 1.0
    return lambda t: 0.5 + 7.5 * np.asarray(t, float) / vmax


def _volume_handles(vmax: float, width, colour: str = INK) -> list:
    from matplotlib.lines import Line2D

    return [
        Line2D([], [], color=colour, lw=float(width(v)), label=f"{short_number(v)} t/yr") for v in _nice_samples(vmax)
    ]


def _caption(lay: dict, far: bool) -> str:
    text = (
        f"Projection: equirectangular, true scale at {deg_label(round(lay['lat0'], 1), 'N', 'S')}. "
        "Lines bend to the left of their direction of travel. " + LAND_NOTE
    )
    if far:
        text += (
            " Sites far outside the region are pinned to the map edge in their true direction, with "
            "their coordinates; the overview shows every site at its true position."
        )
    return text


def network_map_svg(
    result, colours: dict[str, str], layout: dict | None = None, compact: bool = False, land: bool = True
):
    """One solve's network: sites by type and decision, flows by mode, width ∝ tonnes/yr.

    ``layout``: a frame shared with other maps (:func:`run_layout`); the solve's own when None.
    ``compact``: a smaller map without the overview inset (for one map per scenario).
    ``land``: draw land and sea (False: transparent, over :func:`land_layer_svg`).

    Returns:
        (svg, caption): the map and a sentence on its projection and conventions.
    """
    import matplotlib
    from matplotlib.lines import Line2D

    sites = site_table(result)
    if sites.empty:
        return "", ""
    lay = layout if layout is not None else map_layout(sites)
    s = _placed(sites, lay)
    pos = dict(zip(s["site"], zip(s["px"], s["py"])))
    lines = flow_lines(result.tables["flows"])
    lines = lines[lines["origin"].isin(pos.keys()) & lines["destination"].isin(pos.keys())]
    vmax = float(lines["tonnes"].max()) if len(lines) else 1.0
    width = _width_scale(vmax)
    far = bool(s["far"].any())
    with matplotlib.rc_context(chart_rc()):
        fig, ax, lax, (map_w, fig_w, fig_h) = _frame(lay, compact, land)
        ordered = lines.sort_values("tonnes", ascending=False)
        _draw_lines(ax, pos, ordered, [colours.get(m, MUTED) for m in ordered["mode"]], width(ordered["tonnes"]))
        _draw_sites(ax, s, NETWORK_ORDER, compact)
        _draw_far(ax, s, lay["extent"])
        modes = sorted(set(lines["mode"]))
        _legend(
            lax,
            [
                ("Sites", _site_handles(s, NETWORK_ORDER)),
                ("Flows by mode", [Line2D([], [], color=colours.get(m, MUTED), lw=3, label=plain(m)) for m in modes]),
                ("Flow volume", _volume_handles(vmax, width)),
            ],
            fontsize=7 if compact else 8,
        )
        if far and not compact:
            _overview(
                fig,
                s,
                lay,
                lines,
                colours,
                box=((0.45 + map_w + 0.2) / fig_w, 0.35 / fig_h, 1 - (0.45 + map_w + 0.3) / fig_w),
            )
        caption = "Line width in proportion to tonnes/yr, summed over products. " + _caption(lay, far and not compact)
        return to_svg(fig), caption


def flow_changes(base, result) -> pd.DataFrame:
    """Tonnes/yr per lane (origin → destination, all modes and products) in the base and in ``result``:
    origin, destination, base_tonnes, tonnes, change."""

    def by_lane(r) -> pd.Series:
        f = flow_lines(r.tables["flows"])
        return f.groupby(["origin", "destination"])["tonnes"].sum()

    m = pd.concat([by_lane(base).rename("base_tonnes"), by_lane(result).rename("tonnes")], axis=1).fillna(0.0)
    m["change"] = m["tonnes"] - m["base_tonnes"]
    return m.reset_index()


def difference_styles(base, result, sites: pd.DataFrame) -> pd.Series:
    """Each site's style against the base: DCs open in both, only here, only in the base, neither;
    customers losing more demand than in the base marked."""

    def open_dcs(r) -> set[str]:  # open and working (a DC out is paid for, but nothing moves through it)
        d = r.tables["dcs"]
        return set(d.loc[d["open"].astype(bool) & d["decision"].ne("out"), "dc"].astype(str))

    out = set(result.tables["dcs"].query("decision == 'out'")["dc"].astype(str))

    def short(r) -> pd.Series:
        u = r.tables["unmet"]
        return u.groupby("customer")["lost_units"].sum() if len(u) else pd.Series(dtype=float)

    now, was = open_dcs(result), open_dcs(base)
    lost_more = short(result).sub(short(base), fill_value=0.0)
    losing = set(lost_more[lost_more > 0.5].index.astype(str))
    style = []
    for site, kind, st in zip(sites["site"].astype(str), sites["kind"], sites["style"]):
        if kind == "dc":
            style.append(
                "dc_out"
                if site in out
                else "dc_both"
                if site in now and site in was
                else "dc_gained"
                if site in now
                else "dc_lost"
                if site in was
                else "dc_idle"
            )
        elif kind == "customer":
            style.append("customer_short" if site in losing else "customer")
        else:
            style.append(st)
    return pd.Series(style, index=sites.index)


def difference_map_svg(base, result, layout: dict | None = None, compact: bool = True, land: bool = True):
    """A solve against the base: lanes whose flow grew or fell (width ∝ change in tonnes/yr), lanes
    unchanged in grey, DCs opened or closed against the base, customers losing demand.

    Returns:
        (svg, caption).
    """
    import matplotlib
    from matplotlib.lines import Line2D

    both = pd.concat([site_table(result), site_table(base)], ignore_index=True).drop_duplicates("site")
    if both.empty:
        return "", ""
    lay = layout if layout is not None else map_layout(both.reset_index(drop=True))
    s = _placed(both.reset_index(drop=True), lay)
    s["style"] = difference_styles(base, result, s)
    pos = dict(zip(s["site"], zip(s["px"], s["py"])))
    ch = flow_changes(base, result)
    ch = ch[ch["origin"].isin(pos.keys()) & ch["destination"].isin(pos.keys())]
    scale = float(max(ch["base_tonnes"].max(), ch["tonnes"].max())) if len(ch) else 1.0
    tol = 0.01 * scale  # changes under 1 % of the largest lane are drawn as unchanged
    moved = ch[ch["change"].abs() > tol].sort_values("change", key=np.abs, ascending=False)
    same = ch[(ch["change"].abs() <= tol) & (ch["tonnes"] > 0)]
    vmax = float(moved["change"].abs().max()) if len(moved) else 1.0
    width = _width_scale(vmax)
    with matplotlib.rc_context(chart_rc()):
        fig, ax, lax, _ = _frame(lay, compact, land)
        _draw_lines(ax, pos, same, [FLOW_SAME] * len(same), 0.8, alpha=0.7)
        colour = [FLOW_GAINED if c > 0 else FLOW_LOST for c in moved["change"]]
        _draw_lines(ax, pos, moved, colour, width(moved["change"].abs()))
        _draw_sites(ax, s, DIFFERENCE_ORDER, compact)
        _draw_far(ax, s, lay["extent"])
        _legend(
            lax,
            [
                ("Sites against the base", _site_handles(s, DIFFERENCE_ORDER)),
                (
                    "Flow against the base",
                    [
                        Line2D([], [], color=FLOW_GAINED, lw=3, label="more"),
                        Line2D([], [], color=FLOW_LOST, lw=3, label="less"),
                        Line2D([], [], color=FLOW_SAME, lw=1.5, label="unchanged (within 1 %)"),
                    ],
                ),
                ("Change in volume", _volume_handles(vmax, width)),
            ],
            fontsize=7 if compact else 8,
        )
        caption = (
            "Against the base: line width in proportion to the change in tonnes/yr on the lane (all modes "
            "and products); a change under 1 % of the busiest lane is drawn as unchanged. " + _caption(lay, False)
        )
        return to_svg(fig), caption


def _nice_samples(vmax: float) -> list[float]:
    if vmax <= 0:
        return []
    mag = 10 ** math.floor(math.log10(vmax))
    top = max(m * mag for m in (1, 2, 5, 10) if m * mag <= vmax) if vmax >= mag else vmax
    return sorted({top, top / 2, top / 10} - {0})


def _overview(fig, s: pd.DataFrame, lay: dict, lines: pd.DataFrame, colours: dict, box) -> None:
    """A small map of every site at its true position, the main map framed (figure fractions ``box`` = x, y, w)."""
    from matplotlib.collections import LineCollection
    from matplotlib.patches import Rectangle

    x0, x1, y0, y1 = lay["extent"]
    X0, X1, Y0, Y1 = float(s["x"].min()), float(s["x"].max()), float(s["y"].min()), float(s["y"].max())
    pad = 0.08 * max(X1 - X0, Y1 - Y0)
    X0, X1, Y0, Y1 = X0 - pad, X1 + pad, Y0 - pad, Y1 + pad
    fw, fh = fig.get_size_inches()
    bx, by, bw = box
    bh = bw * fw * (Y1 - Y0) / (X1 - X0) / fh
    ins = fig.add_axes((bx, by, bw, min(bh, 0.45)))
    draw_land(ins, (X0, X1, Y0, Y1), lay["lat0"], lay["lon0"], detail=120.0, borders=False)
    draw_graticule(ins, (X0, X1, Y0, Y1), lay["lat0"], lay["lon0"], step=30.0, labels=False)
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
