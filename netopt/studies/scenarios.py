"""What-if scenarios: changes to the base case, hold-the-network and redesign re-solves, comparison.

A case may hold ``scenarios.toml`` with ``[[scenario]]`` entries::

    [[scenario]]
    name = "lane_out_ningbo_poznan"
    description = "Ocean lane Ningbo → Poznań lost for the year"
    based_on = ""            # optional: another scenario whose changes come first
    resolve = "both"         # redesign (default) | hold | both
    frontier_points = 5      # optional: also the cost–CO2 frontier of this scenario (netopt.studies.frontier)

      [[scenario.change]]
      kind = "close_lane"
      origin = "SUP_NINGBO"
      destination = "PLANT_POZNAN"
      mode = "ocean"         # blank or absent = every mode

Change kinds (see :data:`netopt.studies.changes.CHANGE_KINDS`, where each kind's fields and two meanings
live): add_dc, force_dc, close_lane, cap_lane, site_out, policy, setting, service_class, scale_demand,
scale_cost, share_cap, set_capacity.  A single ``[scenario.change]`` table counts as one change.  The
definitions are read and checked (names, fields, limits, result folders) in
:mod:`netopt.studies.scenario_defs`, before anything is solved.

*Hold the network* keeps the base's DC decisions and re-routes only (short-term
recovery); DCs taken out are closed.  With openings fixed the model is a linear
program, re-solved warm from the base basis in one kept HiGHS instance whenever the
scenario's changes are bound changes; other changes rebuild with the openings held.
*Redesign* re-optimises openings too (the long-term answer).  Lost demand is allowed
only where the scenario's settings allow it.  A scenario that cannot serve all demand
without it is reported *infeasible*, with the diagnosis (which rules, where, how much),
and its priced alternative — the same solve with lost demand allowed at the penalty — is
a comparison row of its own beside it (labelled :data:`PRICED_SUFFIX`, ``alternative_to``
naming the infeasible row), never substituted for it.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.periods import has_periods
from netopt.data.validate import validate_and_coerce
from netopt.engine.baseline import cost_current_flows
from netopt.engine.held import HeldNetwork, held_decisions, settings_with_lost_demand
from netopt.engine.result import Result
from netopt.engine.solve import solve
from netopt.studies.case_edit import CaseEdit, site_kinds
from netopt.studies.changes import CHANGE_KINDS, resolve_held
from netopt.studies.comparison import comparison_row, cost_comparable_to_today, dc_decisions, share_changes
from netopt.studies.frontier import FRONTIER_ONE_YEAR, scenario_frontier
from netopt.studies.scenario_defs import (  # the definitions are read there; callers may import them from here
    PRICED_SUFFIX,  # noqa: F401
    RESOLVE,  # noqa: F401
    Scenario,
    parse_scenarios,
    priced_label,
    scenario_chain,
    scenario_source,
    solve_labels,
)

# ---------------------------------------------------------------------------------- applying


def apply_changes(case: Case, sc: Scenario, changes: list[dict] | None = None) -> Case:
    """A new case with the scenario's changes applied (the base is untouched).

    Each change is applied by its kind's ``edit_case`` (:mod:`netopt.studies.changes`); every
    problem of every change is reported at once.  The lane table is shared with ``case``
    unless a change edits what lanes are built from.
    """
    c = case.copy()
    ed = CaseEdit(c, site_kinds(case), set(c.tables["modes"]["mode"].astype(str)))
    c.generated_lanes = case.generated_lanes
    problems: list[Problem] = []
    for i, ch in enumerate(changes if changes is not None else sc.changes, start=1):
        kind = CHANGE_KINDS.get(str(ch.get("kind", "")))
        ed.errors = []
        if kind is None:
            ed.errors.append(f"unknown kind '{ch.get('kind')}' (one of: {', '.join(CHANGE_KINDS)})")
        else:
            kind.edit_case(ed, ch)
            ed.lanes_changed |= kind.edits_lanes
        for e in ed.errors:
            problems.append(Problem(sc.source, None, None, f"scenario '{sc.name}', change {i} ({ch.get('kind')}): {e}"))
    if problems:
        raise CaseError(problems)
    typed, typed_settings, probs = validate_and_coerce(c.tables, c.settings, reachability=False)
    errors = [p for p in probs if p.severity == "error"]
    if errors:
        raise CaseError([Problem(p.table, p.row, p.column, f"after scenario '{sc.name}': {p.message}") for p in errors])
    lanes = None if ed.lanes_changed else case.generated_lanes
    return Case(c.name, typed, typed_settings, c.path, c.scenarios, c.warnings, lanes)


def scenario_case(case: Case, scenarios: list[Scenario], name: str) -> Case:
    """The case of scenario ``name``, its based_on chain applied first."""
    out = case
    for sc in scenario_chain(scenarios, name):
        out = apply_changes(out, sc)
    return out


def scenario_cases(case: Case, scenarios: list[Scenario], chosen: list[Scenario] | None = None) -> dict[str, Case]:
    """The case of each chosen scenario (all by default), every problem of every scenario at once.

    A based_on parent's case is made once and shared by its children (a long chain costs one edit per
    link, and a parent's problems are reported once)."""
    by = {s.name: s for s in scenarios}
    built: dict[str, Case | None] = {}
    problems: list[Problem] = []
    for sc in scenarios if chosen is None else chosen:
        todo: list[Scenario] = []  # sc and its parents not made yet, the nearest first
        cur: Scenario | None = sc
        while cur is not None and cur.name not in built:
            todo.append(cur)
            cur = by[cur.based_on] if cur.based_on else None
        for link in reversed(todo):
            parent = built[link.based_on] if link.based_on else case
            built[link.name] = None
            if parent is not None:
                try:
                    built[link.name] = apply_changes(parent, link)
                except CaseError as e:
                    problems += e.problems
    if problems:
        raise CaseError(problems)
    return {sc.name: c for sc in (scenarios if chosen is None else chosen) if (c := built[sc.name]) is not None}


def all_changes(scenarios: list[Scenario], name: str) -> list[dict]:
    """Every change of scenario ``name``, its based_on chain's first."""
    return [c for sc in scenario_chain(scenarios, name) for c in sc.changes]


# ---------------------------------------------------------------------------------- running


@dataclass
class ScenarioRun:
    """Base and scenario results with the comparison table (one row per scenario and re-solve)."""

    base: Result
    results: dict[str, Result] = field(default_factory=dict)
    comparison: pd.DataFrame = field(default_factory=pd.DataFrame)
    scenarios: list[Scenario] = field(default_factory=list)
    frontiers: dict[str, pd.DataFrame] = field(default_factory=dict)  # scenario → cost–CO2 frontier table
    dc_decisions: pd.DataFrame = field(default_factory=pd.DataFrame)  # DC × solve: decision, throughput
    supplier_share_changes: pd.DataFrame = field(default_factory=pd.DataFrame)  # each solve against the base
    mode_mix_changes: pd.DataFrame = field(default_factory=pd.DataFrame)  # each solve against the base
    today: Result | None = None  # the case's current_flows costed (netopt baseline), when it has them


def _infeasible(r: Result) -> bool:
    return not r.has_solution and r.status in ("infeasible", "unbounded")


def priced(r: Result) -> Result:
    """Mark ``r`` as the priced alternative: lost demand allowed at the penalty although the settings do not."""
    lost = float(r.tables["unmet"]["lost_units"].sum()) if r.has_solution and len(r.tables["unmet"]) else 0.0
    r.lost_demand_allowed = True
    note = f"priced alternative: lost demand allowed at the penalty ({lost:,.0f} units/yr lost)"
    r.message = f"{r.message}; {note}".strip("; ") if note not in r.message else r.message
    return r


SEED_GAP = 1e-9  # optimality gap of the hold's plan completed in the full model (a redesign's start)


def redesign(case: Case, hold: dict[str, str | bool] | None, diagnose: bool = True) -> Result:
    """Re-optimise the openings of ``case``, started from the held decisions ``hold``.

    The hold's plan is first completed in the full model (a solve with those openings fixed)
    and handed to HiGHS whole, as its first incumbent, so the redesign is never dearer than
    keeping the network, whatever the gap (a partial start of the openings alone is completed by
    HiGHS with limited effort and could land above it).
    """
    plan = None
    if hold:
        # Solved to a tight gap: with the openings fixed only safety-stock segment choices are left,
        # and a seed at the usual gap could sit above the held network's own (exact LP) answer.
        seed = solve(case, hold=hold, diagnose=False, mip_gap=SEED_GAP)
        plan = seed.plan_values if seed.has_solution else None
    return solve(case, start=hold or None, start_plan=plan, diagnose=diagnose)


def solve_or_lose(case: Case, hold: dict[str, str | bool] | None = None) -> Result:
    """Redesign (from ``hold``); if infeasible, again with lost demand allowed at the penalty.

    For studies that measure lost demand by design (the stress sweep's redesigns); a scenario
    run keeps the infeasible answer and shows this one beside it (:func:`solve_as_asked`).
    """
    r = redesign(case, hold, diagnose=False)
    if not _infeasible(r):
        return r
    return priced(redesign(settings_with_lost_demand(case), hold, diagnose=False))


def solve_as_asked(
    sc_case: Case,
    how: str,
    base: Result,
    held: HeldNetwork | None,
    changes: list[dict],
    label: str,
    warm: bool = True,
) -> list[tuple[str, Result, str, str]]:
    """One scenario solve as its settings ask: rows of (label, result, method, alternative_to).

    Hold: warm on ``held`` where the changes are bound changes, else rebuilt with the openings
    fixed.  Redesign: a MIP started from the hold's whole plan (the base's DCs less those the
    scenario closes, :func:`redesign`), so a redesign is never dearer than holding the network.  An
    infeasible result carries its diagnosis (from the full model, rebuilt if the warm re-solve
    was infeasible), and is followed by its priced alternative, solved the same way.
    """
    if not changes and base.has_solution:
        return [(label, base, "the base (no changes)", "")]  # the same case: its solve is the base's
    hold = held_decisions(base.held_openings(), sc_case) if base.has_solution else {}
    strict = not bool(sc_case.settings["policy"]["allow_unmet_demand"])
    alt: Result | None = None
    if how == "hold":
        r = resolve_held(held, sc_case, changes, name=label) if warm and held is not None else None
        method = "warm LP" if r is not None else "rebuilt"
        if r is not None and _infeasible(r):
            method = "warm LP infeasible; diagnosed on a rebuild"
        if r is None or _infeasible(r):
            r = solve(sc_case, hold=hold, diagnose=True)
        if _infeasible(r) and strict:
            alt = resolve_held(held, sc_case, changes, name=label, lost_demand=True) if held is not None else None
            alt_method = "warm LP" if alt is not None else "rebuilt"
            alt = alt if alt is not None else solve(settings_with_lost_demand(sc_case), hold=hold)
    else:
        method = alt_method = "mip"
        r = redesign(sc_case, hold)
        if _infeasible(r) and strict:
            alt = redesign(settings_with_lost_demand(sc_case), hold)
    rows = [(label, r, method, "")]
    if alt is not None:
        rows.append((priced_label(label), priced(alt), alt_method, label))
    return rows


def run_scenarios(
    case: Case,
    names: list[str] | None = None,
    progress=None,
    warm: bool = True,
    base=None,
    scenarios: list[Scenario] | None = None,
) -> ScenarioRun:
    """Solve the base and the chosen scenarios; build the comparison table.

    Args:
        names: scenario names to run (None = all in the case).
        progress: callable(event: str, info: dict) — events "start", "done" (and "frontier_start",
            "frontier_done" for a scenario with ``frontier_points``).
        warm: hold-the-network re-solves warm in a kept HiGHS model where possible.
    """
    say = progress or (lambda e, i=None: None)
    warm = warm and not has_periods(case)  # a plan over periods holds its phasing in a rebuilt model
    scenarios = scenarios if scenarios is not None else parse_scenarios(case.scenarios, scenario_source(case))
    if names:
        known = {s.name for s in scenarios}
        bad = [n for n in names if n not in known]
        if bad:
            raise CaseError(
                [
                    Problem(
                        "scenarios.toml",
                        None,
                        None,
                        f"no scenario named '{n}' (known: {', '.join(sorted(known)) or 'none'})",
                    )
                    for n in bad
                ]
            )
        chosen = [s for s in scenarios if s.name in names]
    else:
        chosen = scenarios
    if has_periods(case) and any(s.frontier_points for s in chosen):
        raise CaseError([Problem(scenario_source(case), None, "frontier_points", FRONTIER_ONE_YEAR)])
    cases = scenario_cases(case, scenarios, chosen)  # every scenario validated before solving anything

    t0 = time.perf_counter()
    say("start", {"name": "base", "resolve": "redesign"})
    if base is None:
        base = solve(case, keep_model=False)
    say("done", {"name": "base", "status": base.status, "seconds": time.perf_counter() - t0})
    run = ScenarioRun(base=base, scenarios=chosen)
    run.results["base"] = base
    rows = [
        {
            **comparison_row("base", "", "design", base, base, "mip", time.perf_counter() - t0, "the base case"),
            "alternative_to": "",
        }
    ]
    decisions = [dc_decisions("base", "design", base, case, case)]
    shares: list[tuple[pd.DataFrame, pd.DataFrame]] = []
    held: HeldNetwork | None = None
    for s in chosen:
        sc_case = cases[s.name]
        for how, label in solve_labels(s):
            say("start", {"name": label, "resolve": how})
            t1 = time.perf_counter()
            if how == "hold" and warm and base.has_solution and held is None:
                held = HeldNetwork(case, base)
            solved = solve_as_asked(sc_case, how, base, held, all_changes(scenarios, s.name), label, warm)
            sec = time.perf_counter() - t1
            for lab, res, method, alternative_to in solved:
                run.results[lab] = res
                row = comparison_row(lab, s.based_on, how, res, base, method, sec, s.description)
                rows.append({**row, "alternative_to": alternative_to})
                decisions.append(dc_decisions(lab, how, res, sc_case, case))
                shares.append(share_changes(lab, how, res, base))
            say("done", {"name": label, "status": solved[0][1].status, "seconds": sec})
        if s.frontier_points:
            say("frontier_start", {"name": s.name, "points": s.frontier_points})
            t1 = time.perf_counter()
            # Point 0 is this scenario's own redesign row (the base itself when nothing changes).
            own = run.results.get(s.name if s.resolve == "redesign" else f"{s.name} [redesign]")
            run.frontiers[s.name] = scenario_frontier(sc_case, s, cost_optimal=own if s.resolve != "hold" else None)
            say("frontier_done", {"name": s.name, "points": s.frontier_points, "seconds": time.perf_counter() - t1})
    run.comparison = pd.DataFrame(rows)
    if not case.tables["current_flows"].empty:  # savings against today as well as against the base
        today = cost_current_flows(case, lanes=base.lanes)
        insert_at = run.comparison.columns.get_loc("delta_pct") + 1 if "delta_pct" in run.comparison else 0
        comparable = run.comparison["scenario"].map(lambda lab: cost_comparable_to_today(run.results[lab]))
        run.comparison.insert(insert_at, "saving_vs_today", today.objective - comparable)
        run.today = today
    run.dc_decisions = pd.concat(decisions, ignore_index=True)
    if shares:
        run.supplier_share_changes = pd.concat([s for s, _ in shares], ignore_index=True)
        run.mode_mix_changes = pd.concat([m for _, m in shares], ignore_index=True)
    return run
