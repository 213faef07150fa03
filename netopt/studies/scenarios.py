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

Change kinds (see :data:`netopt.studies.changes.CHANGE_KINDS`, where each kind's two meanings live): add_dc, force_dc, close_lane, cap_lane,
site_out, policy, setting, scale_demand, scale_cost, set_capacity.

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
from netopt.data.limits import MAX_FRONTIER_POINTS
from netopt.data.names import folder_clashes, label_problem, name_problem, shown
from netopt.data.scenario_sheet import SHEET
from netopt.data.text import close_match_hint
from netopt.data.validate import validate_and_coerce
from netopt.engine.held import HeldNetwork, held_decisions, settings_with_lost_demand
from netopt.engine.result import Result
from netopt.engine.solve import solve
from netopt.studies.case_edit import CaseEdit, site_kinds
from netopt.studies.changes import CHANGE_KINDS, check_change, resolve_held
from netopt.studies.comparison import comparison_row, dc_decisions, share_changes
from netopt.studies.frontier import scenario_frontier

RESOLVE = ("redesign", "hold", "both")


# ---------------------------------------------------------------------------------- parsing


@dataclass
class Scenario:
    """One named scenario: its changes (dicts with a ``kind``) and how to re-solve it."""

    name: str
    changes: list[dict]
    description: str = ""
    based_on: str = ""
    resolve: str = "redesign"
    frontier_points: int = 0  # ≥ 2: also sweep this scenario's cost–CO2 frontier (netopt.studies.frontier)
    source: str = "scenarios.toml"  # where it was read: named in its problems


SCENARIO_ENTRIES = ("name", "description", "based_on", "resolve", "change", "frontier_points")
"""What a ``[[scenario]]`` table may hold; anything else is refused (a typo would be ignored silently)."""


def _changes(sc: dict, where: str, label: str, problems: list[Problem]) -> list[dict]:
    """The scenario's changes, each checked (:func:`check_change`); a single ``[scenario.change]``
    table counts as one change."""
    changes = sc.get("change", [])
    if isinstance(changes, dict):
        changes = [changes]
    if not isinstance(changes, list):
        msg = f"{where}: change must be tables written as [[scenario.change]], not {shown(changes)}"
        problems.append(Problem(label, None, None, msg))
        return []
    for i, ch in enumerate(changes, start=1):
        kind = ch.get("kind") if isinstance(ch, dict) else None
        head = f"{where}, change {i}" + (f" ({kind})" if isinstance(kind, str) and kind.strip() in CHANGE_KINDS else "")
        problems += [Problem(label, None, None, f"{head}: {p}") for p in check_change(ch)]
    return [dict(c, kind=str(c["kind"]).strip()) for c in changes if isinstance(c, dict) and "kind" in c]


def _frontier_points(sc: dict, where: str, label: str, problems: list[Problem]) -> int:
    """frontier_points: 0 (none) or a whole number from 2 to :data:`MAX_FRONTIER_POINTS` (one solve each)."""
    points = sc.get("frontier_points", 0)
    bad = isinstance(points, bool) or not isinstance(points, int) or (points != 0 and points < 2)
    if bad or points > MAX_FRONTIER_POINTS:
        limit = f"from 2 to {MAX_FRONTIER_POINTS} (each point is one full solve), or 0 for none"
        problems.append(
            Problem(label, None, None, f"{where}: frontier_points must be a whole number {limit}, not {shown(points)}")
        )
        return 0
    return points


def _text_entries(sc: dict, where: str, label: str, problems: list[Problem]) -> tuple[str, str, str]:
    """description, based_on and resolve, each checked: text, based_on a scenario name, resolve a choice."""
    out = []
    for key, default in (("description", ""), ("based_on", ""), ("resolve", "redesign")):
        value = sc.get(key, default)
        if not isinstance(value, str):
            problems.append(Problem(label, None, None, f"{where}: {key} must be text in quotes, not {shown(value)}"))
            value = default
        out.append(value if key == "description" else value.strip() or default)
    description, based_on, resolve = out
    if based_on and (bad := name_problem(based_on, "based_on")):
        problems.append(Problem(label, None, None, f"{where}: {bad}"))
        based_on = ""
    if resolve not in RESOLVE:
        problems.append(
            Problem(label, None, None, f"{where}: resolve must be one of {', '.join(RESOLVE)}, not {shown(resolve)}")
        )
    return description, based_on, resolve


def scenario_source(case: Case) -> str:
    """Where ``case``'s scenarios were read: ``scenarios.toml``, or the workbook's scenarios sheet."""
    return SHEET if case.path is not None and case.path.suffix.lower() in (".xlsx", ".xlsm") else "scenarios.toml"


def parse_scenarios(raw: list[dict] | dict | None, label: str = "scenarios.toml") -> list[Scenario]:
    """Scenario definitions from the TOML structure (or the workbook's scenarios sheet, ``label`` naming
    it); every problem reported at once, before anything is solved."""
    if raw is None:
        return []
    if isinstance(raw, dict):
        raw = raw.get("scenario", [])
    if not isinstance(raw, list):
        msg = f"expected an array of tables written as [[scenario]], not {shown(raw)}"
        raise CaseError([Problem(label, None, None, msg)])
    problems: list[Problem] = []
    out: list[Scenario] = []
    seen: dict[str, int] = {}
    for k, sc in enumerate(raw, start=1):
        if not isinstance(sc, dict):
            msg = f"scenario {k} must be a table written as [[scenario]], not {shown(sc)}"
            problems.append(Problem(label, None, None, msg))
            continue
        bad = name_problem(sc["name"]) if "name" in sc else "every scenario needs a name"
        name = sc["name"].strip() if bad is None else ""
        where = f"scenario {k}" + (f" '{name}'" if name else "")
        if bad is None and (name in seen or name.casefold() == "base"):
            bad = f"the name is used twice or is 'base' ({f'scenario {seen[name]} has it too' if name in seen else 'reserved'})"
        if bad is not None:
            problems.append(Problem(label, None, None, f"{where}: {bad}"))
        seen.setdefault(name, k)
        description, based_on, resolve = _text_entries(sc, where, label, problems)
        changes = _changes(sc, where, label, problems)
        points = _frontier_points(sc, where, label, problems)
        for u in sorted(set(sc) - set(SCENARIO_ENTRIES), key=str):
            hint = close_match_hint(str(u), SCENARIO_ENTRIES)
            msg = f"{where}: unknown entry {shown(u)}{hint} (a scenario takes: {', '.join(SCENARIO_ENTRIES)})"
            problems.append(Problem(label, None, None, msg))
        if name and bad is None:
            out.append(Scenario(name, changes, description, based_on, resolve, points, label))
    problems += [Problem(label, None, None, m) for m in label_problems(out)]
    names = {s.name for s in out}
    for s in out:
        if s.based_on and s.based_on not in names:
            problems.append(
                Problem(label, None, None, f"scenario '{s.name}': based_on '{s.based_on}' is not a scenario")
            )
    # cycles
    by = {s.name: s for s in out}
    for s in out:
        chain: list[str] = []
        cur: Scenario | None = s
        while cur is not None and cur.based_on:
            if cur.name in chain:
                problems.append(
                    Problem(label, None, None, f"scenario '{s.name}': based_on forms a loop ({' → '.join(chain)})")
                )
                break
            chain.append(cur.name)
            cur = by.get(cur.based_on)
    if any(p.severity == "error" for p in problems):
        raise CaseError(problems)
    return out


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


def scenario_chain(scenarios: list[Scenario], name: str) -> list[Scenario]:
    """Scenario ``name`` and the scenarios it is ``based_on``, the first of the chain first."""
    by = {s.name: s for s in scenarios}
    chain: list[Scenario] = []
    cur: Scenario | None = by[name]
    while cur is not None:
        chain.append(cur)
        cur = by.get(cur.based_on) if cur.based_on else None
    return chain[::-1]


def scenario_case(case: Case, scenarios: list[Scenario], name: str) -> Case:
    """The case of scenario ``name``, its based_on chain applied first."""
    out = case
    for sc in scenario_chain(scenarios, name):
        out = apply_changes(out, sc)
    return out


def scenario_cases(case: Case, scenarios: list[Scenario], chosen: list[Scenario] | None = None) -> dict[str, Case]:
    """The case of each chosen scenario (all by default), every problem of every scenario at once."""
    cases: dict[str, Case] = {}
    problems: list[Problem] = []
    for sc in scenarios if chosen is None else chosen:
        try:
            cases[sc.name] = scenario_case(case, scenarios, sc.name)
        except CaseError as e:
            problems += e.problems
    if problems:
        raise CaseError(problems)
    return cases


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


PRICED_SUFFIX = "lost demand priced"
"""Label part of the priced alternative's row: ``name [hold, lost demand priced]``."""


def solve_labels(s: Scenario) -> list[tuple[str, str]]:
    """(re-solve, comparison label) of each solve of ``s``: its name, or ``name [hold]`` and
    ``name [redesign]`` when it asks for both."""
    modes = ["hold", "redesign"] if s.resolve == "both" else [s.resolve]
    return [(how, s.name if len(modes) == 1 else f"{s.name} [{how}]") for how in modes]


def label_problems(scenarios: list[Scenario]) -> list[str]:
    """Labels of the rows a run may write (each solve and its priced alternative) that give no folder,
    too long a folder or the folder of another label (:mod:`netopt.data.names`); frontier files are
    named by the scenario names, so those may not share a folder name either."""
    labels = [(lab, s.name) for s in scenarios for _, row in solve_labels(s) for lab in (row, priced_label(row))]
    out = [f"scenario {shown(s)}: {p}" for lab, s in labels if (p := label_problem(lab)) is not None]
    places = [(lab, s, "scenarios/") for lab, s in labels] + [(s.name, s.name, "frontier_") for s in scenarios]
    return out + folder_clashes(places)


def priced_label(label: str) -> str:
    """The comparison label of the priced alternative beside infeasible row ``label``."""
    if label.endswith("]"):
        return f"{label[:-1]}, {PRICED_SUFFIX}]"
    return f"{label} [{PRICED_SUFFIX}]"


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
    run.dc_decisions = pd.concat(decisions, ignore_index=True)
    if shares:
        run.supplier_share_changes = pd.concat([s for s, _ in shares], ignore_index=True)
        run.mode_mix_changes = pd.concat([m for _, m in shares], ignore_index=True)
    return run
