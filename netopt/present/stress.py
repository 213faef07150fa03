"""``netopt stress``: solve the base, run the single-point-of-failure sweep and the exposure, write the folder.

The sweep itself is :func:`netopt.studies.resilience.run_sweep`; the time-to-survive /
time-to-recover exposure is :func:`netopt.studies.exposure.exposure`.  This module puts
them together and writes ``spof_ranking.csv``, ``exposure.csv``, ``stress.xlsx``,
``summary.json``, the journal and the base's tables, atomically.
"""

from __future__ import annotations

import json
import math
import shutil
import sys
import time
from collections.abc import Callable
from pathlib import Path

import pandas as pd

from netopt.data.case import Case
from netopt.data.io import load_case
from netopt.data.limits import CONNECT_TIMEOUT_S
from netopt.data.periods import has_periods
from netopt.engine.solve import solve
from netopt.present.files import (
    DISCLAIMER,
    _jsonable,
    atomic_folder,
    check_output_folder,
    work_file,
    write_result_csv,
    write_result_files,
    write_workbook,
)
from netopt.present.report import write_report
from netopt.studies.exposure import exposure
from netopt.studies.period_study import year_of_plan
from netopt.studies.resilience import StressError, run_sweep
from netopt.studies.sweep_exec import JOURNAL, SchedulerUnreachable, connect_scheduler


def stress(
    case: Case,
    out_dir: str | Path,
    *,
    workers: int | None = None,
    scheduler=None,
    redesign: bool = False,
    elements: list[str] | None = None,
    progress: bool = True,
    base=None,
    fresh: bool = False,
    rules: str = "priced",
    say: Callable[[str], None] | None = None,
    report: bool = True,
) -> dict[str, pd.DataFrame]:
    """Solve the base, run the single-point-of-failure sweep and the TTS/TTR exposure; write ``out_dir``.

    Written (atomically): ``spof_ranking.csv``, ``exposure.csv``, ``stress.xlsx``, ``summary.json``,
    ``report.html``, ``sweep_journal.jsonl`` and the base solve's tables in ``base/``.  While the sweep runs,
    its journal is a hidden sibling of ``out_dir`` (:func:`running_journal`): an earlier result there is
    left whole until the new one replaces it.  Raises :class:`StressError` when the base has no
    solution.

    Returns:
        {"spof": ranked sweep table, "exposure": exposure table, "info": run facts (key, value)}.
    """
    tell = say or (lambda s: None)
    out = check_output_folder(out_dir)  # refuse before the base is solved
    t0 = time.perf_counter()
    if base is None:
        tell("solving the base case …")
        base = solve(case)
    if not base.has_solution:
        raise StressError(f"the base case has no solution to stress ({base.status}): {base.message}", base.status)
    base_seconds = time.perf_counter() - t0
    jpath = running_journal(out, fresh)
    spof, info = run_sweep(
        case,
        base,
        workers=workers,
        scheduler=scheduler,
        redesign=redesign,
        elements=elements,
        progress=progress,
        journal=jpath,
        fresh=fresh,
        rules=rules,
    )
    t1 = time.perf_counter()
    expo, note = exposure(case, base)
    exposure_seconds = time.perf_counter() - t1
    base_total = float(sum(base.cost.values()))
    facts = {
        "case": case.name,
        "base_status": base.status,
        "base_total_cost": base_total,
        "base_seconds": base_seconds,
        "sweep_elements": info["tasks"],
        "sweep_reused_from_journal": info["reused"],
        "sweep_resolved_now": info["run"],
        "sweep_seconds": info["seconds"],
        "sweep_resolves_per_second": info["resolves_per_second"],
        "sweep_executor": info["executor"],
        "sweep_not_optimal": "; ".join(info["not_optimal"]),
        "sweep_redesign": bool(redesign),
        "hold_assumption": "DC decisions and safety-stock positions held at the base's; flows re-routed",
        "sweep_rules": rules,
        "exposure_nodes": len(expo),
        "exposure_stock": note,
        "exposure_seconds": exposure_seconds,
        "exposure_nodes_tts_below_ttr": int(expo["tts_below_ttr"].sum()) if len(expo) else 0,
        "currency": case.settings["case"].get("currency", ""),
    }
    info_df = pd.DataFrame({"key": list(facts), "value": [str(v) for v in facts.values()]})
    tables = {"spof": spof, "exposure": expo, "info": info_df}
    with atomic_folder(out) as tmp:
        write_result_csv(spof, tmp / "spof_ranking.csv")
        write_result_csv(expo, tmp / "exposure.csv")
        write_workbook(
            {"spof_ranking": spof, "exposure": expo, "run": info_df},
            tmp / "stress.xlsx",
            notes=STRESS_NOTES + "\n\n" + DISCLAIMER,
        )
        summary = {
            "facts": facts,
            "top_spof": spof.head(10).to_dict("records"),
            "exposure_at_risk": expo[expo["tts_below_ttr"]].to_dict("records") if len(expo) else [],
            "disclaimer": DISCLAIMER,
        }
        (tmp / "summary.json").write_text(json.dumps(_jsonable(summary), indent=2))
        if jpath.exists():
            shutil.copy2(jpath, tmp / JOURNAL)
        write_result_files(base, tmp / "base", workbook=False)
        if report:
            write_report(base, tmp / "report.html", extra={"spof": spof, "exposure": expo})
    jpath.unlink(missing_ok=True)  # its rows are in the results folder now
    return tables


def running_journal(out: Path, fresh: bool = False) -> Path:
    """Where the sweep journals while it runs: a hidden sibling of ``out`` (``.OUT.sweep_journal.jsonl``), so
    the earlier results in ``out`` stay whole until the new ones replace them, and a killed sweep resumes from
    it.  A new running journal starts as a copy of the earlier results' journal (read only), which the sweep
    reuses only when it belongs to the same case, settings and options (its key), else starts afresh."""
    jpath = work_file(out, JOURNAL)
    done = out / JOURNAL
    if not fresh and not jpath.exists() and done.is_file():
        shutil.copyfile(done, jpath)
    return jpath


STRESS_NOTES = """netopt stress: single points of failure and time-to-survive exposure.
spof_ranking: each supplier, plant, open DC and used lane taken out on its own, the network re-solved holding the
base's DC decisions and safety-stock positions. recovery_cost = change in landed cost per year of outage (the
element's own fixed cost counted as still paid; negative when lost units no longer incur their landed cost);
lost_units / lost_value = demand no longer served (units/yr) and its penalty value; rules_bent = service windows,
share limits or CO2 cap exceeded in the disruption, priced at each rule's shadow price in the base
(rule_relief_cost); impact = recovery_cost + lost_value + rule_relief_cost (the ranking key);
customers_affected = customers short of demand or served in other volumes from a site; took_over = the comparable
elements whose volume rose most (units/yr).
exposure: per supplier, plant and open DC, time-to-survive (days all base deliveries can still be met with the node
down, from the stock the base holds and the remaining capacity; a linear program) and the demand lost over the
node's time-to-recover (a linear program); rei = lost value / largest lost value; tts_below_ttr flags nodes that
need mitigation. Method: Simchi-Levi, Schmidt & Wei (Harvard Business Review, 2014); Simchi-Levi et al.
(Interfaces 45(5), 2015)."""


def stress_command(
    case_path: str,
    out_dir: str,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    redesign: bool = False,
    only: list[str] | None = None,
    fresh: bool = False,
    rules: str = "priced",
    quiet: bool = False,
    report: bool = True,
    connect_timeout_s: float = CONNECT_TIMEOUT_S,
) -> int:
    """``netopt stress CASE --out DIR``: load, stress, print the summary; the exit code.

    0 done; 2 the scheduler cannot be reached (checked within ``connect_timeout_s`` seconds, before
    the base is solved); 3 the base is infeasible; 4 the base has no solution for another reason
    (time limit, solver error).  Bad input raises :class:`CaseError` (the CLI's exit code 2).
    """
    case = load_case(case_path)
    say = (lambda s: None) if quiet else (lambda s: print(s, file=sys.stderr))
    if has_periods(case):
        plan = solve(case)
        if not plan.has_solution:
            print(f"error: the plan over periods has no solution ({plan.status}); nothing to stress", file=sys.stderr)
            return 3 if plan.status in ("infeasible", "unbounded") else 4
        case, note = year_of_plan(case, plan)
        print(f"note: {note}", file=sys.stderr)  # said even with -q: it changes what is studied
    if case.warnings:
        say(f"{len(case.warnings)} warning(s):")
        for p in case.warnings:
            say(f"  {p}")
    client = None
    if scheduler is not None:
        try:
            client = connect_scheduler(scheduler, connect_timeout_s)
        except SchedulerUnreachable as e:
            print(f"error: {e}", file=sys.stderr)
            return 2
    try:
        tables = stress(
            case,
            out_dir,
            workers=workers,
            scheduler=client,
            redesign=redesign,
            elements=only,
            progress=not quiet,
            fresh=fresh,
            rules=rules,
            say=say,
            report=report,
        )
    except StressError as e:
        print(f"error: {e}", file=sys.stderr)
        return 3 if e.status in ("infeasible", "unbounded") else 4
    finally:
        if client is not None:
            client.close()
    if not quiet:
        for line in summary_lines(tables):
            print(line)
        print(f"results written to {out_dir}")
    return 0


def _fmt_money(x) -> str:
    if x is None or (isinstance(x, float) and (math.isnan(x) or math.isinf(x))):
        return "-"
    return f"{x:,.0f}"


def summary_lines(tables: dict[str, pd.DataFrame], top: int = 10) -> list[str]:
    """Terminal summary of :func:`stress`: the top single points of failure and the at-risk nodes."""
    spof = tables["spof"]
    expo = tables["exposure"]
    facts = dict(zip(tables["info"]["key"], tables["info"]["value"])) if "info" in tables else {}
    cur = facts.get("currency", "")
    lines = []
    if facts:
        lines.append(
            f"base total landed cost {float(facts['base_total_cost']):,.0f} {cur}/yr; "
            f"{facts['sweep_elements']} elements swept ({facts['sweep_resolved_now']} re-solved now, "
            f"{facts['sweep_reused_from_journal']} from the journal) on {facts['sweep_executor']}"
        )
    lines.append(f"top {min(top, len(spof))} single points of failure (per year of outage, {cur}):")
    hdr = (
        f"{'#':>3}  {'element':<44} {'type':<8} {'recovery':>12} {'lost units':>11} {'lost value':>12} "
        f"{'custs':>5}  took over"
    )
    lines.append(hdr)
    for r in spof.head(top).itertuples():
        lines.append(
            f"{r.rank:>3}  {str(r.element)[:44]:<44} {r.type:<8} {_fmt_money(r.recovery_cost):>12} "
            f"{_fmt_money(r.lost_units):>11} {_fmt_money(r.lost_value):>12} {int(r.customers_affected):>5}  "
            f"{str(r.took_over)[:60] if isinstance(r.took_over, str) else ''}"
        )
    if len(expo):
        risk = expo[expo["tts_below_ttr"]]
        lines.append(
            f"time-to-survive vs time-to-recover: {len(risk)} of {len(expo)} nodes survive shorter than "
            f"they take to recover ({facts.get('exposure_stock', '')})"
        )
        for r in expo.head(top).itertuples():
            tts = f">={r.tts_days:,.0f}" if r.tts_capped else f"{r.tts_days:,.1f}"
            flag = "  AT RISK" if r.tts_below_ttr else ""
            lines.append(
                f"{r.rank:>3}  {r.node:<24} {r.type:<8} TTS {tts:>7} d  TTR {r.ttr_days:>5,.1f} d  "
                f"lost {_fmt_money(r.lost_units):>9} units  {_fmt_money(r.lost_value):>12} {cur}  "
                f"REI {r.rei:.2f}{flag}"
            )
    return lines


def markdown_top(spof: pd.DataFrame, top: int = 10, currency: str = "") -> str:
    """The top rows of the sweep as a Markdown table (for a case README)."""

    def text(x, n=2):
        if not isinstance(x, str) or not x:
            return "–"
        return "; ".join(x.split("; ")[:n])

    out = [
        f"| # | element | type | impact ({currency}/yr) | recovery cost ({currency}/yr) | lost units/yr "
        f"| lost value ({currency}/yr) | rules bent | customers affected | took over (units/yr) |",
        "|---:|---|---|---:|---:|---:|---:|---|---:|---|",
    ]
    for r in spof.head(top).itertuples():
        out.append(
            f"| {r.rank} | {r.element} | {r.type} | {_fmt_money(r.impact)} | {_fmt_money(r.recovery_cost)} "
            f"| {_fmt_money(r.lost_units)} | {_fmt_money(r.lost_value)} | {text(r.rules_bent, 1)} "
            f"| {int(r.customers_affected)} | {text(r.took_over)} |"
        )
    return "\n".join(out)
