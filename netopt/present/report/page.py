"""The analyst's report: one self-contained HTML file with a network map, charts and tables.

:func:`write_report` takes a :class:`~netopt.studies.scenarios.ScenarioRun` (base and scenarios)
or a single :class:`~netopt.engine.solve.Result` and writes ``report.html``: every chart is inline
SVG drawn with matplotlib, the page is a Jinja2 template with its CSS inlined, and nothing
is fetched from the network when the file is opened.  Money is in the case currency per
year, volumes in units/yr or tonnes/yr, times in days.
"""

from __future__ import annotations

import copy
import os
import re
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd

from netopt.data.result_views import KPIS
from netopt.data.results_schema import result_table
from netopt.present.formats import cell_text, kpi_kind, kpi_label, unit_text
from netopt.present.labels import DISCLAIMER, comparison_notes
from netopt.present.report.charts import (
    cost_bars_svg,
    dc_utilisation_svg,
    frontier_svg,
    mode_mix_svg,
    ranking_svg,
    supplier_shares_svg,
    transit_histogram_svg,
    waterfall_svg,
)
from netopt.present.report.map import difference_map_svg, land_layer_svg, network_map_svg, run_layout
from netopt.present.report.phasing import phasing_sections
from netopt.present.report.sections import KNOWN_COLUMNS, KNOWN_EXTRA, KNOWN_ORDER, STANDARD_TABLES
from netopt.present.report.style import mode_colours, short_number
from netopt.present.report.tables import (
    MAX_TABLE_ROWS,
    comparison_table,
    kpi_table,
    money_tolerance,
    service_class_table,
    table,
)

ASSETS = Path(__file__).resolve().parents[1] / "report_assets"


# ----------------------------------------------------------------------------- page


def _currency(result) -> str:
    net = getattr(result, "network", None)
    try:
        return str(net.settings["case"]["currency"]) if net is not None else ""
    except (KeyError, TypeError):
        return ""


def _status_class(status: str) -> str:
    return (
        "ok"
        if status in ("optimal", "baseline")
        else "warn"
        if status in ("time_limit", "gap_limit", "feasible")
        else "bad"
    )


TILES = (  # the indicators shown as tiles at the top, in order
    "total_landed_cost",
    "cost_per_unit_delivered",
    "share_within_service_window",
    "avg_transit_days_to_customer",
    "dcs_open",
    "co2e_tonnes",
    "lost_demand",
)


def _kpi_tiles(result, currency: str) -> list[dict]:
    """The headline tiles: each indicator's declared label, its value by its unit's kind, the unit."""
    k = dict(zip(result.tables["kpis"]["kpi"], result.tables["kpis"]["value"]))
    out = []
    for key in TILES:
        v = k.get(key)
        if v is None:
            continue
        v, kind = float(v), kpi_kind(key)
        text = short_number(v) if kind == "money" else cell_text(v, kind)
        unit = KPIS[key].unit
        out.append(
            {
                "label": kpi_label(key),
                "value": text if np.isfinite(v) else "–",
                "unit": "" if kind in ("share", "count") else unit_text(unit, currency).replace("t CO2e", "t"),
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
    rules = result.tables.get("baseline_rules")
    if rules is not None and v.objective_rel_diff <= 1e-6:  # today's flows: the cost checked, the rules are findings
        return {"text": f"cost passed; {len(rules)} rule(s) today's flows do not meet", "cls": "warn"}
    return {"text": f"FAILED: {v.largest_violation_rule} off by {v.largest_violation:.3g}", "cls": "bad"}


def _extra_sections(tables: dict[str, pd.DataFrame], currency: str) -> list[dict]:
    """A titled section per extra table; frontiers and rankings also get a chart."""
    out = []
    for name, df in tables.items():
        if not isinstance(df, pd.DataFrame):
            continue
        source = "frontier" if name.startswith("frontier") else name
        declared = result_table(source)
        title, note = KNOWN_EXTRA.get(
            name, (name.replace("_", " ").capitalize(), declared.meaning + "." if declared is not None else "")
        )
        chart = frontier_svg(df, currency) if source == "frontier" else ranking_svg(df, currency)
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
                "empty": df.empty,
                "table": table(shown, source, tid=f"table-{name}", max_rows=max_rows),
            }
        )
    return out


TIE_NOTE = (
    "This solve costs the same as the base within the optimality gaps: flows that moved may be an "
    "equally cheap alternative (a tie), not an effect of the scenario."
)


def land_symbol(svg: str, symbol_id: str) -> tuple[str, str]:
    """An inline SVG drawn once as a ``<symbol>``, and the ``<svg><use …></svg>`` that shows it
    under each map of the same size."""
    view = re.search(r'viewBox="([^"]+)"', svg)
    style = re.search(r'style="([^"]+)"', svg[: svg.index(">")])
    box = view.group(1) if view else "0 0 100 100"
    inner = svg[svg.index(">", svg.index("<svg")) + 1 : svg.rindex("</svg>")]
    symbol = f'<symbol id="{symbol_id}" viewBox="{box}">{inner}</symbol>'
    use = (
        f'<svg class="land" viewBox="{box}" style="{style.group(1) if style else ""}" aria-hidden="true">'
        f'<use href="#{symbol_id}" width="100%" height="100%"/></svg>'
    )
    return symbol, use


def scenario_maps(run, colours: dict[str, str]) -> tuple[tuple[str, str], list[dict]]:
    """Per solve of a run (base aside) with a plan: its network map and its map against the base,
    all in one frame over one land layer (drawn once, as a symbol).

    Returns:
        ((the land symbol, the element that shows it), one dict per solve: id, label, delta,
        map, diff and their captions).
    """
    solved = [(lab, r) for lab, r in run.results.items() if lab != "base" and r.has_solution]
    if not solved or not run.base.has_solution:
        return ("", ""), []
    lay = run_layout([run.base] + [r for _, r in solved])
    rows = run.comparison.set_index("scenario")
    out = []
    for k, (lab, r) in enumerate(solved):
        delta = rows["delta_cost"].get(lab, np.nan) if "delta_cost" in rows else np.nan
        tie = bool(rows["within_gap"].get(lab, False)) if "within_gap" in rows else False
        net, net_caption = network_map_svg(r, colours, layout=lay, compact=True, land=False)
        diff, diff_caption = difference_map_svg(run.base, r, layout=lay, compact=True, land=False)
        out.append(
            {
                "id": f"scenario-map-{k + 1}",
                "label": lab,
                "delta": f"{delta:+,.0f}" if np.isfinite(delta) else "",
                "map": net,
                "map_caption": net_caption,
                "diff": diff,
                "diff_caption": (TIE_NOTE + " " if tie else "") + diff_caption,
            }
        )
    return land_symbol(land_layer_svg(lay, compact=True), "scenario-land"), out


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
        "kicker": "today's flows costed, nothing optimised"
        if "baseline_cost" in base.tables
        else "network design report",
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
        planned = comp["total_cost"].notna() if "total_cost" in comp else pd.Series(False, index=comp.index)
        ctx["n_rows"] = int(planned.sum())  # solves with a plan to check
        ctx["n_infeasible"] = int((~planned).sum())
    horizon_sections: list[dict] = []
    if base.has_solution and getattr(base, "periods", None) is not None:
        # A plan over periods: the phasing section shows every period; the rest its last period's network.
        horizon_sections = phasing_sections(base, currency)
        base = base.period_view()
        if run is not None:
            run = copy.copy(run)
            run.results = {k: r.period_view() if r.has_solution else r for k, r in run.results.items()}
            run.base = base
    if base.has_solution:
        t = base.tables
        colours = mode_colours(t["mode_mix"]["mode"] if len(t["mode_mix"]) else [])
        if run is not None:
            labels = [lab for lab in run.comparison["scenario"] if lab in run.results and run.results[lab].has_solution]
            for r in run.results.values():
                if r.has_solution and len(r.tables["mode_mix"]):
                    for m in r.tables["mode_mix"]["mode"]:
                        colours.setdefault(m, mode_colours(list(colours) + [m])[m])
            ctx["comparison"] = comparison_table(run.comparison)
            ctx["comparison_notes"] = comparison_notes(run.comparison)
            ctx["comparison_tol"] = money_tolerance(run.comparison, run.comparison.iloc[0])
            ctx["cost_bars"] = cost_bars_svg(
                labels, [run.results[lab].cost for lab in labels], currency, tol=ctx["comparison_tol"]
            )
            desc = (
                run.comparison[["scenario", "description", "resolve", "method"]].copy()
                if {"description", "method"} <= set(run.comparison.columns)
                else None
            )
            ctx["scenario_notes"] = (
                table(desc, "comparison", tid="scenario-notes", max_rows=None) if desc is not None else None
            )
            (ctx["scenario_land"], ctx["land_use"]), ctx["scenario_maps"] = scenario_maps(run, colours)
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
            "cost",
            ["component", "amount", "share"],
            tid="cost-table",
            labels={"amount": f"{currency}/yr", "share": "share"},
            kinds={"share": "share"},
        )
        ctx["transit"] = transit_histogram_svg(base)
        kpi = dict(zip(t["kpis"]["kpi"], t["kpis"]["value"]))
        ctx["within_share"] = float(kpi.get("share_within_service_window", float("nan")))  # on-time ÷ demand
        sv = t["service"]
        missed = sv[~sv["target_met"].astype(bool)] if "target_met" in sv else sv.iloc[0:0]
        ctx["service_classes"] = service_class_table(sv)
        ctx["service_missed"] = table(
            missed,
            "service",
            ["customer", "service_class", "target_share", "share_within_window", "demand", "unmet"],
            tid="service-missed",
        )
        ctx["dc_chart"] = dc_utilisation_svg(base)
        dcols = ["dc", "decision"]
        if t["dcs"]["size"].astype(str).str.len().gt(0).any():
            dcols.append("size")
        dcols += ["capacity", "throughput", "utilisation", "fixed_cost"]
        ctx["dc_table"] = table(t["dcs"], "dcs", dcols, tid="dc-table")
        ctx["shares_chart"] = supplier_shares_svg(base)
        ctx["mode_chart"] = mode_mix_svg(base, colours)
        ctx["mode_table"] = table(
            t["mode_mix"],
            "mode_mix",
            ["mode", "units", "tonnes", "tonne_km", "freight_cost", "co2_kg"],
            tid="mode-table",
        )
        ctx["kpi_table"] = kpi_table(t["kpis"], currency)
        if len(t["unmet"]):
            ctx["unmet_table"] = table(t["unmet"], "unmet", tid="unmet-table")
        optional = {k: v for k, v in t.items() if k not in STANDARD_TABLES}
        optional.update(extra or {})
        ctx["extras"] = horizon_sections + _extra_sections(optional, currency)
    elif base.diagnosis is not None:
        ctx["diagnosis"] = table(base.diagnosis, "diagnosis", tid="diagnosis")
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


__all__ = ["render_report", "write_report"]
