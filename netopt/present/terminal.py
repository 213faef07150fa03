"""Terminal output of a solve, a run and a frontier: rich tables with the declared labels and units.

Every text that may hold user input (names, codes, the currency, messages) is escaped with
``rich.markup.escape`` before it reaches rich, so "[red]" or "[/bold]" in a site code is shown as
written, never read as console markup.
"""

from __future__ import annotations

import math
import os
import shutil
import sys

import numpy as np
import pandas as pd

from netopt.data.result_views import KPIS, TERMINAL_VIEW
from netopt.data.results_schema import label_of
from netopt.present.formats import cell_text, column_kind, kpi_kind, kpi_label, unit_text
from netopt.present.labels import comparison_notes
from netopt.studies.comparison import is_over_periods


def new_console():
    """A rich console; as wide as the terminal, or $COLUMNS (at least 120) when writing to a pipe."""
    from rich.console import Console

    width = (
        None
        if sys.stdout.isatty()
        else int(os.environ.get("COLUMNS", 0)) or max(120, shutil.get_terminal_size((120, 24)).columns)
    )
    return Console(highlight=False, width=width)


def show(con, table) -> None:
    """Print ``table``; written to a pipe or file (no terminal to wrap for), at its natural width, so a
    wide table is never squeezed until its columns vanish."""
    from rich.measure import Measurement

    if con.is_terminal:
        con.print(table)
        return
    need = Measurement.get(con, con.options.update_width(100_000), table).maximum
    was = con.width
    con.width = max(was, need)  # print() clamps its width to the console's
    try:
        con.print(table)
    finally:
        con.width = was


def money_text(x) -> str:
    """Money with thousands separators, no decimals; '–' when blank or infinite."""
    if x is None or (isinstance(x, float) and (math.isnan(x) or math.isinf(x))):
        return "–"
    return f"{x:,.0f}"


def _currency(result) -> str:
    try:
        return str(result.network.settings["case"]["currency"])
    except (AttributeError, KeyError, TypeError):
        return ""


def print_result(result, console=None) -> None:
    """Readable terminal summary of one solve: status, cost breakdown, DCs, KPIs."""
    from rich.markup import escape
    from rich.table import Table

    con = console or new_console()
    status = result.status + (
        "" if result.status == "optimal" else "  (best plan found, not proven optimal)" if result.has_solution else ""
    )
    con.print(
        f"[bold]{escape(result.case_name)}[/bold]: {status}; cost {money_text(result.objective)}, "
        f"bound {money_text(result.bound)}, gap {result.gap:.4%}"
        if result.has_solution and math.isfinite(result.gap)
        else f"[bold]{escape(result.case_name)}[/bold]: {status}"
    )
    if result.diagnosis is not None:
        t = Table(title="What cannot be met (elastic re-solve)")
        for c in result.diagnosis.columns:
            t.add_column(label_of("diagnosis", str(c)))
        for row in result.diagnosis.itertuples(index=False):
            t.add_row(*[escape(f"{v:,.1f}") if isinstance(v, float) else escape(str(v)) for v in row])
        show(con, t)
        return
    if not result.has_solution:
        if result.message:  # why there is no plan (e.g. HiGHS rejected the model)
            con.print(escape(result.message))
        return
    currency = _currency(result)
    if getattr(result, "periods", None) is not None:
        _print_horizon(result, con, currency)
        _print_check(result, con)
        return
    t = Table(title=escape(f"Annual landed cost ({unit_text('currency/yr', currency)})"))
    t.add_column(label_of("cost", "component"))
    t.add_column(label_of("cost", "amount"), justify="right")
    t.add_column("share", justify="right")
    total = sum(result.cost.values())
    for k, v in result.cost.items():
        if abs(v) > 0.5:
            t.add_row(escape(k.replace("_", " ")), money_text(v), f"{v / total:.1%}" if total else "")
    t.add_row("[bold]total[/bold]", f"[bold]{money_text(total)}[/bold]", "100%")
    show(con, t)
    d = result.tables["dcs"]
    t = Table(title="DCs")
    cols = ("dc", "status", "decision", "throughput", "utilisation")
    for c in cols:
        t.add_column(label_of("dcs", c), justify="right" if c in ("throughput", "utilisation") else "left")
    for row in d[list(cols)].itertuples(index=False):
        t.add_row(*[escape(cell_text(v, column_kind("dcs", c))) for v, c in zip(row, cols)])
    show(con, t)
    k = result.tables["kpis"]
    t = Table(title="Key indicators")
    t.add_column("indicator")
    t.add_column("value", justify="right")
    t.add_column("unit")
    for row in k.itertuples(index=False):
        kind = kpi_kind(row.kpi)
        t.add_row(
            escape(kpi_label(row.kpi)),
            escape(cell_text(row.value, kind)),
            escape(unit_text(_kpi_unit(row.kpi, row.unit), currency)),
        )
    show(con, t)
    _print_check(result, con)


def _print_check(result, con) -> None:
    from rich.markup import escape

    v = result.verification
    if v is not None:
        con.print(
            f"Independent check: {'[green]passed[/green]' if v.passed else '[red]FAILED[/red]'} — recomputed cost "
            f"{money_text(v.recomputed_objective)}, largest violation {v.largest_violation:.2e} "
            f"({escape(str(v.largest_violation_rule))})"
        )


def _print_horizon(result, con, currency: str) -> None:
    """A plan over periods: cost per period (spend and present value), the DC phasing, KPIs per period."""
    from rich.markup import escape
    from rich.table import Table

    names = [str(p) for p in result.periods["period"]]
    pc = result.tables["period_cost"]
    t = Table(
        title=escape(f"Cost per period ({unit_text('currency', currency)}; the plan's cost is the present value)")
    )
    t.add_column(label_of("period_cost", "component"))
    for p in names:
        t.add_column(escape(p), justify="right")
    t.add_column("present value", justify="right")
    spend = pc.pivot_table(index="component", columns="period", values="undiscounted", aggfunc="sum", sort=False)
    pv = pc.groupby("component", sort=False)["present_value"].sum()
    for comp in pv.index:
        if spend.loc[comp].abs().max() > 0.5:
            row = [money_text(spend.loc[comp].get(p, 0.0)) for p in names]
            t.add_row(escape(comp.replace("_", " ")), *row, money_text(pv[comp]))
    totals = spend.sum()
    t.add_row(
        "[bold]total[/bold]", *[money_text(totals.get(p, 0.0)) for p in names], f"[bold]{money_text(pv.sum())}[/bold]"
    )
    show(con, t)
    ph = result.tables["phasing"]
    t = Table(title="DC phasing (state in each period)")
    t.add_column(label_of("phasing", "dc"))
    t.add_column(label_of("phasing", "status"))
    for p in names:
        t.add_column(escape(p))
    for dc, g in ph.groupby("dc", sort=False):
        states = dict(zip(g["period"].astype(str), g["state"]))
        t.add_row(escape(str(dc)), escape(str(g["status"].iloc[0])), *[escape(states.get(p, "")) for p in names])
    show(con, t)
    k = result.tables["kpis"]
    t = Table(title="Key indicators per period")
    t.add_column("indicator")
    for p in names:
        t.add_column(escape(p), justify="right")
    t.add_column("unit")
    for kpi, g in k.groupby("kpi", sort=False):
        vals = dict(zip(g["period"].astype(str), g["value"]))
        kind = kpi_kind(kpi)
        t.add_row(
            escape(kpi_label(kpi)),
            *[escape(cell_text(vals.get(p, float("nan")), kind)) for p in names],
            escape(unit_text(_kpi_unit(kpi, g["unit"].iloc[0]), currency)),
        )
    show(con, t)


def _kpi_unit(kpi: str, written: str) -> str:
    """The declared unit of an indicator (the unit written in the table for an undeclared one)."""
    k = KPIS.get(kpi)
    return k.unit if k is not None else str(written)


def print_comparison(comparison, console=None) -> None:
    """The scenario comparison as a terminal table: the declared headline columns and labels."""
    from rich.markup import escape
    from rich.table import Table
    from rich.text import Text

    con = console or new_console()
    cols = [c for c in TERMINAL_VIEW if c in comparison.columns]
    money = "money as present values over the periods" if is_over_periods(comparison) else "money per year"
    t = Table(title=f"Scenario comparison ({money}; Δ = recovery cost for disruptions)")
    rows = []
    within = comparison["within_gap"] if "within_gap" in comparison else pd.Series(False, index=comparison.index)
    for (_, row), in_gap in zip(comparison[cols].iterrows(), within):
        cells = []
        for c, v in row.items():
            kind = column_kind("comparison", c)
            text = escape(cell_text(v, kind))
            if c == "verified" and isinstance(v, (bool, np.bool_)) and not v:
                text = "[red]NO[/red]"
            elif kind == "delta" and not in_gap and isinstance(v, float) and math.isfinite(v) and abs(v) > 0.5:
                colour = "red" if v > 0 else "green"
                text = f"[{colour}]{text}[/{colour}]"
            cells.append(text)
        rows.append(cells)
    for j, c in enumerate(cols):
        # Numbers are never cut short: their columns are as wide as their widest cell; names wrap instead.
        is_text = column_kind("comparison", c) == "text"
        widest = max((Text.from_markup(r[j]).cell_len for r in rows), default=0)
        t.add_column(
            label_of("comparison", c),
            justify="left" if is_text else "right",
            no_wrap=not is_text,
            min_width=min(widest, 24) if is_text else widest,
            overflow="fold",
        )
    for cells in rows:
        t.add_row(*cells)
    show(con, t)
    for note in comparison_notes(comparison):
        con.print(f"[yellow]![/yellow] {escape(note)}")


def print_frontier(table, console=None) -> None:
    """The cost–CO2 frontier as a terminal table (per year)."""
    from rich.markup import escape
    from rich.table import Table

    cols = [c for c in ("point", "co2_t", "total_cost", "cost_per_t_abated", "dcs_open", "mode_mix") if c in table]
    t = Table(title="Cost–CO2 frontier (per year)")
    for c in cols:
        t.add_column(label_of("frontier", c), justify="left" if c == "mode_mix" else "right")
    for row in table[cols].itertuples(index=False):
        t.add_row(*[escape(cell_text(v, column_kind("frontier", c))) for v, c in zip(row, cols)])
    show(console or new_console(), t)


def print_dc_matrix(matrix, console=None) -> None:
    """The DC decisions side by side: one row per solve, one column per DC (decision · units/yr)."""
    from rich.markup import escape
    from rich.table import Table

    if matrix.empty:
        return
    con = console or new_console()
    t = Table(title="DC decisions by scenario (decision · throughput units/yr)")
    if "period" in matrix.columns:  # a plan over periods: one row per DC and period, one column per solve
        for c in matrix.columns:
            t.add_column(escape(str(c)), no_wrap=True)
        for row in matrix.itertuples(index=False):
            t.add_row(*(escape(str(v)) for v in row))
    else:
        by_solve = matrix.set_index("dc").T
        t.add_column("scenario", overflow="fold", min_width=min(24, max(len(str(s)) for s in by_solve.index)))
        for dc in by_solve.columns:
            t.add_column(escape(str(dc)), overflow="fold")
        for solve, row in by_solve.iterrows():
            t.add_row(escape(str(solve)), *(escape(str(v)) for v in row))
    show(con, t)


def print_mix_changes(mode_matrix, share_changes, console=None) -> None:
    """The mode mix per solve (share of tonne-km) and the largest supplier share changes against the base."""
    from rich.markup import escape
    from rich.table import Table

    con = console or new_console()
    if not mode_matrix.empty:
        t = Table(title="Mode mix by scenario (share of tonne-km)")
        t.add_column("scenario", overflow="fold")
        for m in mode_matrix.columns[1:]:
            t.add_column(escape(str(m)), justify="right")
        for row in mode_matrix.itertuples(index=False):
            t.add_row(escape(str(row[0])), *(cell_text(v, "share") for v in row[1:]))
        show(con, t)
    if not share_changes.empty:
        cols = ["scenario", "site", "product", "supplier", "base_share", "share", "change"]
        t = Table(title="Largest supplier share changes against the base (share of the site's supply)")
        for c in cols:
            t.add_column(
                label_of("supplier_share_changes", c),
                justify="right" if c.endswith("share") or c == "change" else "left",
            )
        for row in share_changes[cols].itertuples(index=False):
            t.add_row(
                *(escape(str(v)) for v in row[:4]),
                *(cell_text(v, column_kind("supplier_share_changes", c)) for v, c in zip(row[4:], cols[4:])),
            )
        show(con, t)


def print_baseline(result, console=None) -> None:
    """Terminal summary of a baseline: today's flows costed per component, against the actual spend
    where the settings state it, what netopt decided that the flows do not state, and the rules
    today's flows do not meet."""
    from rich.markup import escape
    from rich.table import Table

    con = console or new_console()
    con.print(
        f"[bold]{escape(result.case_name)}[/bold]: today's flows costed with the model (nothing optimised); "
        f"cost {money_text(result.objective)}"
    )
    currency = _currency(result)
    bc = result.tables["baseline_cost"]
    cols = ("component", "model_cost", "actual_spend", "difference", "difference_share")
    t = Table(title=escape(f"Today's annual landed cost ({unit_text('currency/yr', currency)})"))
    for c in cols:
        t.add_column(label_of("baseline_cost", c), justify="left" if c == "component" else "right")
    for row in bc[list(cols)].itertuples(index=False):
        if abs(row.model_cost) > 0.5 or not pd.isna(row.actual_spend):
            t.add_row(*[escape(cell_text(v, column_kind("baseline_cost", c))) for v, c in zip(row, cols)])
    t.add_row("[bold]total[/bold]", f"[bold]{money_text(bc['model_cost'].sum())}[/bold]", "", "", "")
    show(con, t)
    for note in [n for n in result.message.split("; ") if n]:
        con.print(escape(f"note: {note}"))
    rules = result.tables["baseline_rules"]
    if len(rules):
        t = Table(title="Rules of the case today's flows do not meet")
        for c in rules.columns:
            t.add_column(label_of("baseline_rules", str(c)))
        for row in rules.itertuples(index=False):
            t.add_row(*[escape(cell_text(v, column_kind("baseline_rules", c))) for v, c in zip(row, rules.columns)])
        show(con, t)
    v = result.verification
    if v is not None:
        ok = v.objective_rel_diff <= 1e-6
        con.print(
            f"Independent check of the cost: {'[green]passed[/green]' if ok else '[red]FAILED[/red]'} — recomputed "
            f"{money_text(v.recomputed_objective)} (relative difference {v.objective_rel_diff:.2e})"
        )
