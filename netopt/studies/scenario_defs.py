"""Scenario definitions read and checked: ``[[scenario]]`` tables (or the workbook's scenarios sheet)
into :class:`Scenario` objects, and the labels of the rows a run writes for each.

Every problem is found here, before the case is touched or anything is solved: each change is
checked against its kind's declared fields (:func:`netopt.studies.changes.check_change`), names
against :mod:`netopt.data.names` (and no two rows may write the same folder), ``frontier_points``
against :data:`netopt.data.limits.MAX_FRONTIER_POINTS`.  The file format is described in
:mod:`netopt.studies.scenarios`.
"""

from __future__ import annotations

from dataclasses import dataclass

from netopt.data.case import Case, CaseError, Problem
from netopt.data.limits import MAX_FRONTIER_POINTS, MAX_SCENARIOS
from netopt.data.names import folder_clashes, label_problem, name_problem, shown
from netopt.data.scenario_sheet import SHEET
from netopt.data.text import close_match_hint
from netopt.studies.changes import CHANGE_KINDS, check_change

RESOLVE = ("redesign", "hold", "both")


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


def _loops(scenarios: list[Scenario]) -> list[str]:
    """One message per based_on loop (each scenario visited once, however long the chains)."""
    by = {s.name: s for s in scenarios}
    done: set[str] = set()
    out = []
    for s in scenarios:
        path: dict[str, int] = {}  # name → position on this walk
        cur: Scenario | None = s
        while cur is not None and cur.name not in done and cur.name not in path:
            path[cur.name] = len(path)
            cur = by.get(cur.based_on) if cur.based_on else None
        if cur is not None and cur.name in path:
            loop = list(path)[path[cur.name] :]
            shown_loop = [*loop, cur.name] if len(loop) <= 8 else [*loop[:4], f"… {len(loop) - 4} more", cur.name]
            out.append(f"scenario {shown(cur.name)}: based_on forms a loop ({' → '.join(shown_loop)})")
        done.update(path)
    return out


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
    if len(raw) > MAX_SCENARIOS:
        msg = f"{len(raw)} scenarios, more than the {MAX_SCENARIOS:,} one case may hold (split them into several cases)"
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
    problems += [Problem(label, None, None, m) for m in _loops(out)]
    if any(p.severity == "error" for p in problems):
        raise CaseError(problems)
    return out


def scenario_chain(scenarios: list[Scenario], name: str) -> list[Scenario]:
    """Scenario ``name`` and the scenarios it is ``based_on``, the first of the chain first."""
    by = {s.name: s for s in scenarios}
    chain: list[Scenario] = []
    cur: Scenario | None = by[name]
    while cur is not None:
        chain.append(cur)
        cur = by.get(cur.based_on) if cur.based_on else None
    return chain[::-1]


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
