"""Resilience: single-point-of-failure sweep and time-to-survive exposure, locally or on a Dask cluster.

**Sweep.** Each supplier, plant, open DC and used lane (origin, destination, mode) of the
solved base is taken out on its own — the scenario changes ``site_out`` and
``close_lane`` — and the network is re-solved holding the base's DC decisions (and,
optionally, redesigned).  Per element (money in currency/yr of outage, units/yr):

- *recovery cost*: the change in landed cost.  The element's own DC fixed cost counts
  as still paid and no closing cost arises (it is out, not closed).  Negative when
  demand is lost: lost units no longer incur their landed cost;
- *lost units / lost value*: demand no longer served and its penalty value
  (``policy.unmet_penalty_per_unit``, 0 = 2 × unit value);
- *rules bent* (``rules="priced"``, the default): in a disruption, service windows,
  supplier and region share limits and the CO2 cap may be exceeded, each unit priced at
  its rule's shadow price in the base (plus a tie-breaking 1e-4).  By LP duality the base
  stays optimal, so nothing is bent without a disruption, and late delivery or a larger
  share from one supplier is chosen only where it costs less than losing demand.
  ``rules="hard"`` keeps every rule, exactly as a scenario's hold-the-network re-solve;
- *impact* = recovery cost + lost value + rule relief cost (the ranking key; ≥ 0 up to
  the tie-breaker with priced rules);
- *customers affected*: customers short of demand or served in other volumes from a site;
- *took over*: the elements of the same kind (suppliers, plants, DCs or plants serving
  customers directly, lanes of the same leg) whose volume rose most.

Holding the network prices safety stock as every held network does, on one line per DC and
product at its base throughput (``netopt.engine.held``), and a DC taken out stays paid for
(``site_out``'s meaning), so a row here equals the hold-the-network scenario of the same
change; each re-solve is a linear program with one element's bounds changed.  Each worker
process (or Dask worker thread) builds that model once and re-solves every element warm
from the base basis.

**Execution.** A local process pool (all cores by default, forkserver start so no worker
is forked from a process holding solver threads; a progress bar with done/total and
ETA) or, given a scheduler address, the same task function on a Dask distributed
cluster.  Every finished re-solve is appended (flushed and fsynced) to a journal (while
``netopt stress`` runs, a hidden sibling of its output folder, then kept in it); a restarted
sweep skips the elements already in it.  Pool workers end when the sweep's process dies.  The final tables do
not depend on where or in which order tasks ran: every re-solve starts from the base basis.

**Exposure.** Time-to-survive and time-to-recover per node: :mod:`netopt.exposure`.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.results_schema import RESULT_TABLES
from netopt.engine.held import held_decisions
from netopt.studies.changes import element_changes, held_plan
from netopt.studies.scenarios import Scenario, apply_changes, solve_or_lose
from netopt.studies.sweep_exec import (
    append_row,
    check_workers,
    open_journal,
    progress_bar,
    read_journal,
    run_dask,
    run_inline,
    run_local,
    where_running,
)
from netopt.studies.sweep_worker import (
    TOL,
    SweepSpec,
    WorkerState,
    _lane_label,
    customers_touched,
    make_spec,
    rules_bent,
    took_over,
    worker_state,
)

ELEMENT_TYPES = ("supplier", "plant", "dc", "lane")
# The ranked table's columns, as declared in the output schema (redesign columns only with --redesign).
_SPOF = [c.name for c in RESULT_TABLES["spof_ranking"].columns]
SPOF_COLUMNS = [c for c in _SPOF if not c.startswith("redesign_")]
REDESIGN_COLUMNS = [c for c in _SPOF if c.startswith("redesign_")]


class StressError(Exception):
    """The base case has no solution to stress (``status``: infeasible, time_limit, error, …)."""

    def __init__(self, message: str, status: str):
        super().__init__(message)
        self.status = status


# ---------------------------------------------------------------------------------- elements


def sweep_elements(case: Case, base, only: list[str] | None = None) -> pd.DataFrame:
    """The elements to take out, one row each: id, type, element, origin, destination, mode,
    base_units (units/yr through it in the base).

    Every supplier and plant of the case, each DC open in the base, each lane and mode with
    flow in the base.  ``only``: element types (supplier, plant, dc, lane; plurals accepted),
    element ids (``dc:DC_X``, ``lane:O>D>mode``) or site codes; unknown names raise CaseError.
    """
    t = case.tables
    f = base.tables["flows"]
    rows = []
    out_by_site = f.groupby("origin")["quantity"].sum()
    for s in t["suppliers"]["supplier"].astype(str).unique():
        rows.append(
            {
                "id": f"supplier:{s}",
                "type": "supplier",
                "element": s,
                "origin": s,
                "base_units": float(out_by_site.get(s, 0.0)),
            }
        )
    made = base.tables["production"].groupby("plant")["quantity"].sum()
    for p in t["plants"]["plant"].astype(str).unique():
        rows.append(
            {"id": f"plant:{p}", "type": "plant", "element": p, "origin": p, "base_units": float(made.get(p, 0.0))}
        )
    d = base.tables["dcs"]
    for r in d[d["open"]].itertuples():
        rows.append(
            {
                "id": f"dc:{r.dc}",
                "type": "dc",
                "element": r.dc,
                "origin": r.dc,
                "base_units": float(r.throughput),
            }
        )
    lanes = f.groupby(["origin", "destination", "mode"], as_index=False)["quantity"].sum()
    for r in lanes[lanes["quantity"] > TOL].itertuples():
        rows.append(
            {
                "id": f"lane:{r.origin}>{r.destination}>{r.mode}",
                "type": "lane",
                "element": _lane_label(r.origin, r.destination, r.mode),
                "origin": r.origin,
                "destination": r.destination,
                "mode": r.mode,
                "base_units": float(r.quantity),
            }
        )
    el = pd.DataFrame(
        rows,
        columns=[
            "id",
            "type",
            "element",
            "origin",
            "destination",
            "mode",
            "base_units",
        ],
    )
    el[["destination", "mode"]] = el[["destination", "mode"]].fillna("")
    if only:
        keep = pd.Series(False, index=el.index)
        bad = []
        for name in only:
            n = str(name).strip()
            typ = n[:-1] if n.endswith("s") and n[:-1] in ELEMENT_TYPES else n
            m = (el["type"] == typ) | (el["id"] == n) | ((el["type"] != "lane") & (el["element"] == n))
            if not m.any():
                bad.append(n)
            keep |= m
        if bad:
            raise CaseError(
                [
                    Problem(
                        "--only",
                        None,
                        None,
                        f"'{b}' is neither an element type ({', '.join(ELEMENT_TYPES)}) nor an element "
                        "of the solved base (a supplier, plant, open DC or used lane)",
                    )
                    for b in bad
                ]
            )
        el = el[keep]
    return el.reset_index(drop=True)


# ---------------------------------------------------------------------------------- one task


def hold_resolve(st: WorkerState, el: dict) -> dict:
    """Re-solve the held model with ``el`` out, warm from the base basis; one result row."""
    held = st.held
    plan = held_plan(held, element_changes(el), st.spec.case)
    if plan is None:
        raise RuntimeError(f"{el['id']}: the held sweep model is not a linear program")
    t0 = time.perf_counter()
    info, values, x = held.resolve(plan, basis=st.basis)
    bent = x[st.relief.cols] if x is not None and st.relief is not None and len(st.relief.cols) else np.zeros(0)
    row: dict[str, Any] = {"status": info.status, "seconds": time.perf_counter() - t0}
    if values is None:
        return row
    cost = held.builder.component_values(values)
    total = float(sum(cost.values()))
    pen_new, pen_old = cost.get("unmet_penalty", 0.0), st.base_cost.get("unmet_penalty", 0.0)
    dem = held.net.demand
    un = values.get("unmet", np.zeros(len(dem)))
    un0 = st.base_values.get("unmet", np.zeros(len(dem)))
    delta = total - st.base_total
    recovery = delta - (pen_new - pen_old)  # a DC out stays paid for in the held model (site_out's meaning)
    short, rerouted = customers_touched(st, values)
    took, took_units = took_over(st, el, values)
    row.update(
        {
            "total_cost": total,
            "delta_objective": delta,
            "recovery_cost": recovery,
            "lost_units": float(un.sum() - un0.sum()),
            "lost_value": float(pen_new - pen_old),
            "customers_affected": len(short | rerouted),
            "customers_short": len(short),
            "took_over": took,
            "took_over_units": took_units,
            "rules_bent": rules_bent(st.relief, bent),
            "rule_relief_units": float(bent.sum()),
            "rule_relief_cost": float(bent @ st.relief.price) if st.relief is not None and len(bent) else 0.0,
        }
    )
    row["impact"] = row["recovery_cost"] + row["lost_value"] + row["rule_relief_cost"]
    return row


def redesign_resolve(spec: SweepSpec, el: dict) -> dict:
    """Redesign with ``el`` out (openings re-optimised, a MIP); result columns prefixed ``redesign_``."""
    sc_case = apply_changes(spec.case, Scenario(el["id"], element_changes(el), resolve="redesign"))
    r = solve_or_lose(sc_case, hold=held_decisions(spec.held, sc_case))
    out: dict[str, Any] = {"redesign_status": r.status}
    if not r.has_solution:
        return out
    cost = r.cost
    total = float(sum(cost.values()))
    base_total = float(sum(spec.base_cost.values()))
    pen_new, pen_old = cost.get("unmet_penalty", 0.0), spec.base_cost.get("unmet_penalty", 0.0)
    un = r.tables["unmet"]
    d = r.tables["dcs"]
    now = set(d.loc[d["open"], "dc"])
    was = set(spec.base_dcs_open)
    changes = [f"opens {x}" for x in sorted(now - was)] + [f"closes {x}" for x in sorted(was - now - {el["origin"]})]
    out.update(
        {
            "redesign_total_cost": total,
            "redesign_recovery_cost": total - base_total - (pen_new - pen_old),
            "redesign_lost_units": (float(un["lost_units"].sum()) if len(un) else 0.0) - spec.base_lost_units,
            "redesign_lost_value": float(pen_new - pen_old),
            "redesign_dc_changes": "; ".join(changes),
        }
    )
    return out


def run_task(spec: SweepSpec, el: dict) -> dict:
    """Take one element out and re-solve (hold, and redesign if asked): the journal row.

    The same pure function runs in a local pool worker, a Dask worker or in-process;
    each keeps its held model in a per-thread cache keyed by ``spec.key``.
    """
    st = worker_state(spec)
    cpu0 = time.process_time()
    row = {"id": el["id"], "type": el["type"], "element": el["element"], "base_units": el["base_units"]}
    row.update(hold_resolve(st, el))
    if spec.redesign:
        row.update(redesign_resolve(spec, el))
    row["ran_on"] = where_running()
    row["cpu_seconds"] = time.process_time() - cpu0  # this process's CPU time for the task
    return row


def rank_rows(rows: list[dict], redesign: bool = False) -> pd.DataFrame:
    """The ranked single-point-of-failure table from journal rows (order of completion irrelevant)."""
    cols = SPOF_COLUMNS + (REDESIGN_COLUMNS if redesign else [])
    if not rows:
        return pd.DataFrame(columns=cols)
    df = pd.DataFrame(rows)
    for c in cols:
        if c not in df:
            df[c] = np.nan
    df = df.sort_values(
        ["impact", "lost_units", "id"], ascending=[False, False, True], kind="stable", na_position="last"
    ).reset_index(drop=True)
    df["rank"] = np.arange(1, len(df) + 1)
    return df[cols]


def run_sweep(
    case: Case,
    base,
    *,
    workers: int | None = None,
    scheduler=None,
    redesign: bool = False,
    elements: list[str] | None = None,
    progress: bool = True,
    journal: str | Path | None = None,
    fresh: bool = False,
    rules: str = "priced",
    on_row: Callable[[dict], None] | None = None,
) -> tuple[pd.DataFrame, dict]:
    """Take each element out one at a time and re-solve; the ranked table and run facts.

    Args:
        workers: local pool size (None = all cores; 0 = in this process, no pool; at most
            :data:`~netopt.studies.sweep_exec.MAX_WORKERS`, else ValueError).
        scheduler: Dask scheduler address (or a ``distributed.Client``): run the tasks there.
        redesign: also re-solve each disruption with openings re-optimised (a MIP each).
        elements: filter (types, ids or site codes), see :func:`sweep_elements`.
        progress: show a progress bar (done/total, elapsed, ETA) on stderr.
        journal: JSONL file each finished row is appended to; finished rows there are not redone.
        fresh: ignore (and restart) an existing journal.
        rules: "priced" (a disruption may bend service windows, supplier/region share limits and the
            CO2 cap at each rule's base shadow price, rather than lose demand) or "hard" (every rule
            holds, exactly as a scenario's hold-the-network re-solve).
        on_row: called with each new row after it is journaled.

    Returns:
        (table, info): the ranked table (:data:`SPOF_COLUMNS`) and a dict with tasks, reused,
        run, seconds, resolves_per_second, executor, journal.
    """
    check_workers(workers)
    spec = make_spec(case, base, redesign, rules)
    el = sweep_elements(case, base, elements)
    todo_all = el.to_dict("records")
    done: dict[str, dict] = {}
    stale = False
    fh = None
    if journal is not None:
        journal = Path(journal)
        if not fresh:
            done, ok = read_journal(journal, spec.key)
            stale = not ok
        fh = open_journal(journal, spec.key, fresh or stale or not journal.exists())
    ids = {e["id"] for e in todo_all}
    reused = {k: v for k, v in done.items() if k in ids}
    todo = [e for e in todo_all if e["id"] not in reused]
    new_rows: list[dict] = []
    errors: list[str] = []
    if scheduler is not None:
        where = scheduler if isinstance(scheduler, str) else getattr(scheduler.scheduler, "address", "client")
        executor = f"dask ({where})"
    elif workers == 0:
        executor = "in-process"
    else:
        workers = workers or os.cpu_count() or 1
        executor = f"local pool ({workers} worker{'s' if workers != 1 else ''})"
    bar = task = None
    if progress and todo_all:
        bar, task = progress_bar(len(todo_all), len(reused), "re-solves")
        bar.start()

    def done_cb(e, row):
        new_rows.append(row)
        if fh is not None:
            append_row(fh, row)
        if bar is not None:
            bar.advance(task)
        if on_row is not None:
            on_row(row)

    t0 = time.perf_counter()
    try:
        if todo:
            if scheduler is not None:
                run_dask(run_task, spec, todo, scheduler, done_cb)
            elif workers == 0:
                run_inline(run_task, spec, todo, done_cb)
            else:
                run_local(run_task, spec, todo, workers or 1, done_cb, prepare=worker_state)
    finally:
        if bar is not None:
            bar.stop()
        if fh is not None:
            fh.close()
    seconds = time.perf_counter() - t0
    rows = list(reused.values()) + new_rows
    for r in rows:
        if r.get("status") not in ("optimal",):
            errors.append(f"{r['id']}: {r.get('status')}")
    table = rank_rows(rows, redesign)
    info = {
        "tasks": len(todo_all),
        "reused": len(reused),
        "run": len(new_rows),
        "seconds": seconds,
        "resolves_per_second": (len(new_rows) / seconds) if seconds > 0 and new_rows else float("nan"),
        "executor": executor,
        "journal": str(journal) if journal is not None else "",
        "stale_journal_replaced": stale,
        "not_optimal": errors,
        "ran_on": sorted({r.get("ran_on", "") for r in new_rows}),
    }
    return table, info


# ---------------------------------------------------------------------------------- stress: sweep + exposure
