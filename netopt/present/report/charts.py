"""The report's charts (inline SVG): cost bars and waterfall, transit, DC utilisation, supplier shares,
mode mix, the cost–CO2 frontier and rankings."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from netopt.data.results_schema import label_of
from netopt.present.report.style import (
    ACCENT,
    BAD,
    COST_COLOURS,
    FALLBACK,
    GOOD,
    GRID,
    INK,
    MUTED,
    WARN,
    chart_rc,
    hbars,
    label_inches,
    new_chart,
    note_at,
    plain,
    short_number,
    short_ticks,
    text_in,
    to_svg,
)

# ----------------------------------------------------------------------------- charts


def cost_bars_svg(
    labels: list[str], costs: list[dict[str, float]], currency: str, tol: float = 0.5, axis: str = "landed cost, {}/yr"
) -> str:
    """Stacked horizontal bars of the cost components per scenario (currency/yr; ``axis`` words the
    axis, ``{}`` standing for the currency).

    Changes against the first bar (the base) larger than ``tol`` (currency/yr) are coloured.
    """
    import matplotlib
    from matplotlib.patches import Patch

    keys = dict.fromkeys(k for c in costs for k in c)
    comps = [k for k in keys if any(abs(c.get(k, 0.0)) > 0.5 for c in costs)]
    spare = iter(FALLBACK)
    col = {k: COST_COLOURS.get(k) or next(spare) for k in comps}
    base_total = sum(costs[0].values()) if costs else 0.0
    with matplotlib.rc_context(chart_rc()):
        rows = math.ceil(len(comps) / 5)
        fig, ax = new_chart(
            11.0,
            0.75 + 0.22 * rows + 0.34 * len(labels),
            left=label_inches(labels, 8),
            top=0.12 + 0.24 * rows,
            bottom=0.5,
        )
        y = np.arange(len(labels))[::-1]
        left_pos = np.zeros(len(labels))
        left_neg = np.zeros(len(labels))
        for k in comps:
            v = np.array([c.get(k, 0.0) for c in costs])
            pos_v, neg_v = np.where(v > 0, v, 0.0), np.where(v < 0, v, 0.0)
            hbars(ax, y, pos_v, left_pos, col[k], height=0.68)
            hbars(ax, y, neg_v, left_neg, col[k], height=0.68)
            left_pos += pos_v
            left_neg += neg_v
        totals = [sum(c.values()) for c in costs]
        xmax = max(left_pos.max() if len(left_pos) else 1.0, 1.0)
        for yi, tot, lp in zip(y, totals, left_pos):
            d = tot - base_total
            txt = short_number(tot) + (
                "" if abs(d) < 0.5 or yi == y[0] else f"  ({'+' if d > 0 else '−'}{short_number(abs(d))})"
            )
            text_in(
                ax,
                lp + 0.01 * xmax,
                yi,
                txt,
                va="center",
                fontsize=7.5,
                color=BAD if d > tol and yi != y[0] else GOOD if d < -tol else INK,
            )
        ax.set_yticks(y, [plain(s) for s in labels], fontsize=8)
        ax.set_ylim(-0.6, len(labels) - 0.4)
        ax.set_xlim(min(left_neg.min() * 1.05, 0), xmax * 1.16)
        short_ticks(ax.xaxis)
        ax.set_xlabel(axis.format(currency).strip(", "))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        ax.legend(
            handles=[Patch(color=col[k], label=k.replace("_", " ")) for k in comps],
            ncols=min(5, len(comps)),
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize=7.5,
        )
        return to_svg(fig)


def waterfall_svg(cost: dict[str, float], currency: str) -> str:
    """Cost components cascading to the total (currency/yr)."""
    import matplotlib

    items = [(k, v) for k, v in cost.items() if abs(v) > 0.5]
    total = sum(cost.values())
    spare = iter(FALLBACK)
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(6.6, 3.4, left=0.75, bottom=0.6, top=0.15, right=0.1)
        run = 0.0
        for i, (k, v) in enumerate(items):
            ax.bar(i, v, bottom=run, color=COST_COLOURS.get(k) or next(spare), width=0.7)
            text_in(ax, i, run + max(v, 0) + 0.01 * total, short_number(v), ha="center", va="bottom", fontsize=7.5)
            if i:
                ax.plot([i - 1.35, i - 0.35], [run, run], color=MUTED, lw=0.6)
            run += v
        n = len(items)
        ax.bar(n, total, color=INK, width=0.7)
        text_in(ax, n, total * 1.01, short_number(total), ha="center", va="bottom", fontsize=8, fontweight="bold")
        ax.set_xticks(range(n + 1), [k.replace("_", "\n") for k, _ in items] + ["total"], fontsize=7)
        short_ticks(ax.yaxis)
        ax.set_ylim(0, total * 1.1 if total > 0 else 1)
        ax.grid(axis="y", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return to_svg(fig)


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
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(6.6, 3.4, left=0.8, bottom=0.5, top=0.35)
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
                text_in(ax, d, ymax * 0.97, plain(f" {cls} ≤ {d:g} d"), fontsize=7, va="top", color=INK)
        ax.set_xlabel("transit days to customer (last leg)")
        ax.set_ylabel("units/yr")
        short_ticks(ax.yaxis)
        ax.legend(fontsize=7.5, loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=2)
        ax.grid(axis="y", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return to_svg(fig)


def dc_utilisation_svg(result) -> str:
    """Throughput over capacity per DC; closed DCs listed without a bar."""
    import matplotlib

    d = result.tables["dcs"]
    if d.empty:
        return ""
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(6.0, 0.7 + 0.33 * len(d), left=label_inches(d["dc"], 8), bottom=0.5, top=0.1)
        y = np.arange(len(d))[::-1]
        for yi, r in zip(y, d.itertuples(index=False)):
            u = float(r.utilisation) if r.utilisation is not None and np.isfinite(r.utilisation) else np.nan
            if not r.open:
                text_in(
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
                text_in(
                    ax, 0.01, yi, f"{short_number(r.throughput)} units/yr, no capacity limit", va="center", fontsize=7.5
                )
                continue
            colour = GOOD if u < 0.85 else WARN if u <= 1.0 + 1e-9 else BAD
            hbars(ax, yi, u, colour=colour, height=0.62, lw=0)
            text_in(
                ax,
                u + 0.015,
                yi,
                f"{u:.0%}  ({short_number(r.throughput)} / {short_number(r.capacity)})",
                va="center",
                fontsize=7.5,
            )
        ax.axvline(1.0, color=INK, lw=0.9, ls=(0, (4, 2)))
        ax.set_yticks(y, [plain(x) for x in d["dc"]], fontsize=8)
        ax.set_ylim(-0.6, len(d) - 0.4)
        ax.set_xlim(0, max(1.45, float(np.nanmax(d["utilisation"].to_numpy(float), initial=0.0)) + 0.45))
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.set_xlabel("utilisation (throughput ÷ capacity)")
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return to_svg(fig)


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
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(5.4, 0.75 + 0.26 * len(labels), left=label_inches(labels, 7), bottom=0.5, top=0.1)
        y = np.arange(len(labels))[::-1]
        hbars(ax, y, vals, colour=[WARN if a else "#94703f" for a in at_cap], height=0.66, lw=0)
        for yi, v in zip(y, vals):
            text_in(ax, v + 0.012, yi, f"{v:.0%}", va="center", fontsize=7)
        for e in group_edges:
            ax.axhline(y[e] + 0.5, color=GRID, lw=0.8)
        if cap < 1.0:
            ax.axvline(cap, color=BAD, lw=1.1, ls=(0, (4, 2)))
            text_in(ax, cap, y[0] + 0.6, f" cap {cap:.0%}", color=BAD, fontsize=7.5, va="bottom")
        ax.set_yticks(y, [plain(s) for s in labels], fontsize=7)
        ax.set_xlim(0, 1.12)
        ax.set_ylim(-0.7, len(labels) - 0.2 + (0.6 if cap < 1.0 else 0.0))
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.set_xlabel("share of the site's supply" + ("" if cap < 1.0 else " (no cap set)"))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return to_svg(fig)


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
    with matplotlib.rc_context(chart_rc()):
        lrows = math.ceil(len(mm) / 6)
        fig, ax = new_chart(
            5.4,
            0.55 + 0.24 * lrows + 0.42 * len(rows),
            left=label_inches(["freight cost"], 8),
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
                hbars(ax, yi, share, left, colours.get(m, MUTED), height=0.64, lw=0.6)
                if share >= 0.07:
                    text_in(
                        ax, left + share / 2, yi, f"{share:.0%}", ha="center", va="center", fontsize=7, color="white"
                    )
                left += share
        ax.set_yticks(y, [n for _, n in rows], fontsize=8)
        ax.set_ylim(-0.6, len(rows) - 0.4)
        ax.set_xlim(0, 1)
        ax.xaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0, decimals=0))
        ax.legend(
            handles=[Patch(color=colours.get(m, MUTED), label=plain(m)) for m in mm["mode"]],
            ncols=min(6, len(mm)),
            loc="lower left",
            bbox_to_anchor=(0.0, 1.0),
            fontsize=7.5,
        )
        return to_svg(fig)


def frontier_points(df: pd.DataFrame) -> pd.DataFrame:
    """The points of a frontier table to plot: point, co2_t (t CO2e/yr) and total_cost (currency/yr).

    Every point with a plan, the cost-optimal one (point 0, whose cap may be blank) included,
    ordered by CO2e.  The x value is each network's own CO2e, not the cap it was solved for.
    """
    if not {"co2_t", "total_cost"} <= set(df.columns):
        return pd.DataFrame(columns=["point", "co2_t", "total_cost"])
    d = df.assign(point=df["point"] if "point" in df.columns else np.arange(len(df)))
    d = d[["point", "co2_t", "total_cost"]].dropna(subset=["co2_t", "total_cost"])
    return d.sort_values(["co2_t", "point"], kind="stable").reset_index(drop=True)


def frontier_figure(df: pd.DataFrame, currency: str):
    """The frontier chart as a matplotlib figure: total cost against CO2e, one marker per point, or None."""
    import matplotlib

    d = frontier_points(df)
    if d.empty:
        return None
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(8.0, 3.4, left=0.9, bottom=0.55, top=0.15)
        x, y = d["co2_t"].to_numpy(float), d["total_cost"].to_numpy(float)
        ax.plot(x, y, color=ACCENT, lw=1.6, marker="o", ms=5, mfc="white", mew=1.4)
        for xi, yi, p in zip(x, y, d["point"]):
            note_at(ax, plain(f"{p}"), (xi, yi), xytext=(5, 4), textcoords="offset points", fontsize=7, color=MUTED)
        ax.set_xlabel(plain(label_of("frontier", "co2_t")))
        ax.set_ylabel(plain(f"{label_of('frontier', 'total_cost')}, {currency}/yr".replace(", /yr", " per year")))
        short_ticks(ax.yaxis)
        short_ticks(ax.xaxis)
        ax.grid(color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return fig


def frontier_svg(df: pd.DataFrame, currency: str) -> str:
    """Landed cost against CO2e for each point of a frontier table (inline SVG; "" without points)."""
    import matplotlib

    fig = frontier_figure(df, currency)
    if fig is None:
        return ""
    with matplotlib.rc_context(chart_rc()):
        return to_svg(fig)


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
    labels = [plain(x) for x in d[label].astype(str)]
    colours = {"recovery_cost": WARN, "lost_value": BAD, "rule_relief_cost": "#8d979e"}
    with matplotlib.rc_context(chart_rc()):
        fig, ax = new_chart(11.0, 0.8 + 0.28 * len(d), left=label_inches(labels, 7.5), top=0.35, bottom=0.45)
        y = np.arange(len(d))[::-1]
        if key == "impact" and parts:
            left = np.zeros(len(d))
            for c in parts:
                v = pd.to_numeric(d[c], errors="coerce").fillna(0.0).clip(lower=0.0).to_numpy(float)
                hbars(ax, y, v, left, colours[c], height=0.64, lw=0)
                left += v
            from matplotlib.patches import Patch

            ax.legend(
                handles=[Patch(color=colours[c], label=label_of("spof_ranking", c)) for c in parts],
                ncols=len(parts),
                loc="lower left",
                bbox_to_anchor=(0.0, 1.0),
                fontsize=7.5,
            )
            total = left
        else:
            total = pd.to_numeric(d[key], errors="coerce").fillna(0.0).to_numpy(float)
            hbars(ax, y, total, colour=BAD, height=0.64, lw=0)
        vmax = max(float(total.max()), 1.0)
        for yi, v in zip(y, total):
            text_in(ax, v + 0.01 * vmax, yi, short_number(v), va="center", fontsize=7)
        ax.set_yticks(y, labels, fontsize=7.5)
        ax.set_ylim(-0.6, len(d) - 0.4)
        ax.set_xlim(0, vmax * 1.12)
        short_ticks(ax.xaxis)
        ax.set_xlabel(f"{label_of('spof_ranking', key)}, {currency}/yr".replace(", /yr", " per year"))
        ax.grid(axis="x", color=GRID, lw=0.6)
        ax.set_axisbelow(True)
        return to_svg(fig)
