"""Charts of the planning studies (inline SVG): the ABC Pareto curve, the map of proposed sites and the
DC-count curve."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.data.results_schema import label_of
from netopt.present.report.land import LAND_NOTE, draw_land
from netopt.present.report.style import (
    ACCENT,
    COST_COLOURS,
    FALLBACK,
    GOOD,
    INK,
    MUTED,
    WARN,
    chart_rc,
    new_chart,
    short_ticks,
    to_svg,
)

CLASS_COLOURS = {"A": ACCENT, "B": WARN, "C": MUTED}


def pareto_svg(ranked: pd.DataFrame, title: str) -> str:
    """Pareto chart of one ABC table: bars of each item's share (coloured by class) and the cumulative
    share against the share of items ("" without rows)."""
    import matplotlib

    if ranked.empty:
        return ""
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(11.0, 3.2, left=0.7, right=0.7, top=0.4, bottom=0.55)
        x = ranked["item_share"].to_numpy(float) * 100
        width = 100.0 / len(ranked)
        ax.bar(
            x - width / 2,
            ranked["share"].to_numpy(float) * 100,
            width=width * 0.9,
            color=[CLASS_COLOURS.get(c, INK) for c in ranked["class"]],
        )
        ax.set_ylabel("share of measure, %")
        ax.set_xlabel("share of items, %  (ranked, largest first)")
        ax2 = ax.twinx()
        ax2.plot(np.r_[0, x], np.r_[0, ranked["cumulative_share"].to_numpy(float) * 100], color=INK, lw=1.4)
        ax2.set_ylim(0, 102)
        ax2.set_ylabel("cumulative share, %")
        ax2.spines["right"].set_visible(True)
        ax.set_xlim(0, 100)
        ax.set_title(title)
        from matplotlib.patches import Patch

        ax.legend(
            handles=[Patch(color=c, label=f"class {k}") for k, c in CLASS_COLOURS.items()],
            ncols=3,
            loc="lower right",
            bbox_to_anchor=(1.0, 1.0),
            fontsize=7.5,
        )
        return to_svg(fig)


def sites_map_svg(customers: pd.DataFrame, dcs: pd.DataFrame, proposed: pd.DataFrame, centres: pd.DataFrame) -> str:
    """Map of customers (area ∝ weight), the case's DCs, the region centres of gravity and the proposed
    sites (equirectangular about the map centre, coastlines and borders behind)."""
    import matplotlib

    lats = np.r_[customers["lat"], dcs["lat"] if len(dcs) else [], proposed["lat"]].astype(float)
    lons = np.r_[customers["lon"], dcs["lon"] if len(dcs) else [], proposed["lon"]].astype(float)
    lat0, lon0 = float((lats.min() + lats.max()) / 2), float((lons.min() + lons.max()) / 2)
    k = math.cos(math.radians(lat0))

    def xy(df):
        return (df["lon"].to_numpy(float) - lon0) * k, df["lat"].to_numpy(float)

    xs, ys = (lons - lon0) * k, lats
    pad = 0.08 * max(np.ptp(xs), np.ptp(ys), 1.0)
    extent = (xs.min() - pad, xs.max() + pad, ys.min() - pad, ys.max() + pad)
    w_in = 9.0
    h_in = max(3.0, min(9.0, w_in * (extent[3] - extent[2]) / max(extent[1] - extent[0], 1e-9)))
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(w_in, h_in + 0.5, left=0.1, right=0.1, top=0.5, bottom=0.1)
        draw_land(ax, extent, lat0, lon0)
        wt = customers["weight"].to_numpy(float)
        cx, cy = xy(customers)
        ax.scatter(cx, cy, s=8 + 220 * wt / max(wt.max(), 1e-9), color=MUTED, alpha=0.55, lw=0, label="customers")
        if len(dcs):
            dx, dy = xy(dcs)
            ax.scatter(dx, dy, marker="s", s=36, color=INK, label="DCs of the case")
        if len(centres):
            gx, gy = xy(centres)
            ax.scatter(gx, gy, marker="+", s=70, color=WARN, lw=1.6, label="region centres of gravity")
        px, py = xy(proposed)
        ax.scatter(px, py, marker="*", s=160, color=GOOD, edgecolor="white", lw=0.6, label="proposed sites")
        for x_, y_, name in zip(px, py, proposed["dc"].astype(str)):
            ax.annotate(name, (x_, y_), xytext=(5, 4), textcoords="offset points", fontsize=7.5, color=INK)
        ax.set_xlim(extent[0], extent[1])
        ax.set_ylim(extent[2], extent[3])
        ax.set_xticks([])
        ax.set_yticks([])
        ax.set_aspect("equal")
        ax.legend(ncols=4, loc="lower left", bbox_to_anchor=(0.0, 1.0), fontsize=7.5)
        return to_svg(fig)


MAP_NOTE = LAND_NOTE


def dc_count_svg(curve: pd.DataFrame, currency: str) -> str:
    """Total cost against the number of open DCs (the least total circled) above the cost components
    that change with N; components equal at every point are named in the lower panel's title."""
    import matplotlib

    ok = curve[curve["total_cost"].notna()]
    if ok.empty:
        return ""
    comps = [c for c in curve.columns if c.startswith("cost_") and ok[c].abs().max() > 0.5]
    scale = max(float(ok["total_cost"].abs().max()), 1.0)
    moving = [c for c in comps if float(ok[c].max() - ok[c].min()) > 1e-6 * scale]
    flat = [label_of("dc_count_curve", c) for c in comps if c not in moving]
    spare = iter(FALLBACK)
    n = ok["n_dcs"].to_numpy(int)
    with matplotlib.rc_context(chart_rc()):
        from matplotlib.figure import Figure

        fig = Figure(figsize=(11.0, 5.2))
        top = fig.add_axes((0.9 / 11, 0.56, 7.6 / 11, 0.38))
        low = fig.add_axes((0.9 / 11, 0.1, 7.6 / 11, 0.36), sharex=top)
        top.plot(n, ok["total_cost"], marker="o", lw=2.2, color=INK, label="total cost")
        best = ok[ok["best"].astype(bool)]
        if len(best):
            bx, by = int(best["n_dcs"].iloc[0]), float(best["total_cost"].iloc[0])
            top.scatter([bx], [by], s=140, facecolor="none", edgecolor=GOOD, lw=2.0, zorder=5)
            top.annotate(f"least: {bx} DCs", (bx, by), xytext=(8, 10), textcoords="offset points", color=GOOD)
        top.set_title(f"total cost, {currency}/yr")
        for c in moving:
            name = c[len("cost_") :]
            colour = COST_COLOURS.get(name) or next(spare)
            low.plot(n, ok[c], marker="o", ms=3, lw=1.2, color=colour, label=label_of("dc_count_curve", c))
        low.set_title(
            f"components that change with the DC count, {currency}/yr"
            + (f" (the same at every point: {', '.join(flat)})" if flat else ""),
            fontsize=8.5,
        )
        low.set_xticks(n)
        low.set_xlabel("open DCs")
        for ax in (top, low):
            short_ticks(ax.yaxis)
        if moving:
            low.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), fontsize=7.5)
        return to_svg(fig)


def cluster_sweep_svg(sweep: pd.DataFrame) -> str:
    """Demand-weighted mean km (and the farthest customer's km) to the nearest centre against k."""
    import matplotlib

    if sweep.empty:
        return ""
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(11.0, 3.0, left=0.8, right=2.4, top=0.3, bottom=0.55)
        k = sweep["k"].to_numpy(int)
        ax.plot(k, sweep["mean_km"], marker="o", lw=2.0, color=INK, label=label_of("cluster_sweep", "mean_km"))
        ax.plot(k, sweep["max_km"], marker="o", ms=3, lw=1.0, color=MUTED, label=label_of("cluster_sweep", "max_km"))
        ax.set_xticks(k)
        ax.set_xlabel("clusters k")
        ax.set_ylabel("km")
        ax.set_ylim(bottom=0)
        ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), fontsize=7.5)
        return to_svg(fig)


def cost_by_scenario_svg(plan_costs: pd.DataFrame, currency: str) -> str:
    """Cost of each candidate plan (bar groups) in each scenario (bars) above its regret there (the cost
    minus the scenario's optimum, where the plans differ); a plan that cannot serve a scenario has no bar."""
    import matplotlib

    if plan_costs.empty:
        return ""
    plans = list(dict.fromkeys(plan_costs["plan"]))
    scenarios = list(dict.fromkeys(plan_costs["scenario"]))
    spare = iter(FALLBACK * 4)
    colour = {s: next(spare) for s in scenarios}
    width = 0.8 / max(len(scenarios), 1)
    x = np.arange(len(plans))
    with matplotlib.rc_context(chart_rc()):
        from matplotlib.figure import Figure

        fig = Figure(figsize=(11.0, 5.4))
        top = fig.add_axes((0.9 / 11, 0.58, 8.4 / 11, 0.36))
        low = fig.add_axes((0.9 / 11, 0.14, 8.4 / 11, 0.34), sharex=top)
        for j, s in enumerate(scenarios):
            sub = plan_costs[plan_costs["scenario"] == s].set_index("plan").reindex(plans)
            pos = x - 0.4 + width * (j + 0.5)
            top.bar(pos, sub["cost"].to_numpy(float), width=width * 0.92, color=colour[s], label=s)
            low.bar(pos, sub["regret"].to_numpy(float), width=width * 0.92, color=colour[s])
        top.set_title(f"cost in each scenario, {currency}/yr")
        low.set_title(f"regret: cost − the scenario's optimum, {currency}/yr", fontsize=8.5)
        low.set_xticks(x, plans, rotation=12, fontsize=8)
        for ax in (top, low):
            short_ticks(ax.yaxis)
        top.legend(title="scenario", fontsize=7.5, loc="upper left", bbox_to_anchor=(1.01, 1.0))
        return to_svg(fig)
