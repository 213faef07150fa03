"""The scenario change vocabulary: each change kind once, with both of its meanings.

A change (one ``[[scenario.change]]`` table: ``kind`` plus its fields) means two things:

- ``edit_case``: how it edits a copy of the case's tables and settings, for a solve from
  scratch (redesign, or a hold rebuilt with the openings fixed);
- ``held_bounds``: how it edits the bounds of a held network already in HiGHS, for a warm
  re-solve (None where the change is not a bound change: the hold is then rebuilt).

``netopt run`` (scenarios), ``netopt stress`` (the single-point-of-failure sweep) and the
frontier all use these objects, so a lane, supplier, plant or DC lost means the same in
every study.  To add a change kind: write its two functions here and register a
:class:`ChangeKind` in :data:`CHANGE_KINDS`; the scenario parser, ``netopt check`` and the
docs read the registry.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.names import shown
from netopt.data.schema import TABLES
from netopt.engine.held import BoundPlan, HeldNetwork
from netopt.engine.result import Result
from netopt.network.lanes import build_lanes
from netopt.studies.case_edit import CaseEdit, Fields, append_row, change_problems
from netopt.studies.change_costs import (
    COST_TARGETS,
    edit_scale_cost,
    edit_set_capacity,
    edit_share_cap,
    held_set_capacity,
)
from netopt.studies.change_demand import edit_grow_demand, edit_scale_demand, held_scale_demand

Change = dict  # one change: {"kind": ..., field: value, ...}


@dataclass(frozen=True)
class ChangeKind:
    """One change kind: its fields (for help and checks) and its two meanings."""

    name: str
    help: str
    edit_case: Callable[[CaseEdit, Change], None]
    held_bounds: Callable[[HeldNetwork, Change, Case], BoundPlan | None] | None = None
    edits_lanes: bool = False  # the lane table must be rebuilt after this change
    fields: Fields = field(default_factory=Fields)  # what the parser checks before the case is touched


# ---------------------------------------------------------------------------------- sites


def _edit_add_dc(ed: CaseEdit, ch: Change) -> None:
    dc = ed.text(ch, "dc")
    if not dc:
        ed.errors.append("dc is required")
        return
    if dc in ed.sites:
        ed.errors.append(f"site '{dc}' already exists")
        return
    vals = {k: v for k, v in ch.items() if k != "kind"}
    vals.setdefault("status", "candidate")
    bad = set(vals) - set(TABLES["dcs"].column_names)
    if bad:
        ed.errors.append(f"unknown dcs column(s): {', '.join(sorted(bad))}")
    ed.errors.extend(f"{req} is required" for req in ("lat", "lon") if req not in vals)
    if not ed.errors:
        ed.tables["dcs"] = append_row(ed.tables["dcs"], "dcs", vals)
        ed.sites[dc] = "dc"


def _edit_force_dc(ed: CaseEdit, ch: Change) -> None:
    dc, to = ed.text(ch, "dc"), ed.text(ch, "to")
    if ed.sites.get(dc) != "dc":
        ed.errors.append(f"'{dc}' is not a DC")
    if to not in ("open", "closed", "free"):
        ed.errors.append(f"to must be open, closed or free, not '{to}'")
    if not ed.errors:
        d = ed.tables["dcs"]
        d.loc[d["dc"] == dc, "force"] = "" if to == "free" else to


def _held_force_dc(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan | None:
    dc, to = str(ch.get("dc", "")).strip(), str(ch.get("to", "")).strip()
    plan = BoundPlan()
    opts = held.option_rows(dc)
    if to == "closed":
        plan.set_cols(held.cols("open", opts), 0.0, 0.0)
        return plan
    is_open = bool(held.held.get(dc, False))
    if (to == "open" and is_open) or to == "free":
        return plan  # the held network already has it so (free: the hold keeps the base's decision)
    return None  # opening a DC the base kept closed is a new network: rebuild


def _edit_site_out(ed: CaseEdit, ch: Change) -> None:
    site = ed.text(ch, "site")
    kind = ed.sites.get(site)
    t = ed.tables
    if kind == "supplier":
        t["suppliers"].loc[t["suppliers"]["supplier"] == site, "capacity"] = 0.0
    elif kind == "plant":
        t["plants"].loc[t["plants"]["plant"] == site, "capacity"] = 0.0
    elif kind == "dc":
        t["dcs"].loc[t["dcs"]["dc"] == site, "force"] = "out"
    elif kind == "customer":
        ed.errors.append(f"'{site}' is a customer: use scale_demand with factor 0 to drop its demand")
    else:
        ed.errors.append(f"unknown site '{site}'")


def _held_site_out(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan:
    """Flows leaving the site and its production fixed at 0.  A DC out keeps its held opening: a
    site down for the year is still paid for (fixed cost) and not closed (no closing cost)."""
    site = str(ch.get("site", "")).strip()
    plan = BoundPlan()
    plan.set_cols(held.cols("flow", held.arcs_from(site)), 0.0, 0.0)
    plan.set_cols(held.cols("make", held.make_rows(site)), 0.0, 0.0)
    if "min_supplier_share" in held.builder.row_labels:  # a supplier out holds no least share
        rows = held.rows_of("min_supplier_share")
        mine = held.builder.row_labels["min_supplier_share"]["supplier"].astype(str).eq(site).to_numpy() & (rows >= 0)
        plan.rows.update({int(r): (-np.inf, np.inf) for r in rows[mine]})
    return plan


# ---------------------------------------------------------------------------------- lanes


def _lane_target(ed: CaseEdit, ch: Change) -> tuple[str, str, str, str, pd.DataFrame | None]:
    o, d, m, p = (ed.text(ch, k) for k in ("origin", "destination", "mode", "product"))
    if o not in ed.sites:
        ed.errors.append(f"unknown origin site '{o}'")
    if d not in ed.sites:
        ed.errors.append(f"unknown destination site '{d}'")
    if m and m not in ed.modes:
        ed.errors.append(f"unknown mode '{m}'")
    if ed.errors:
        return o, d, m, p, None
    lanes = ed.case.generated_lanes
    if lanes is None or ed.lanes_changed:
        from_case = Case(ed.case.name, ed.tables, ed.case.settings, ed.case.path)
        lanes = build_lanes(from_case)
    hit = lanes[(lanes["origin"] == o) & (lanes["destination"] == d) & ((lanes["mode"] == m) if m else True)]
    if hit.empty:
        ed.errors.append(f"there is no lane {o} → {d}" + (f" by {m}" if m else ""))
        return o, d, m, p, None
    return o, d, m, p, hit


def _edit_close_lane(ed: CaseEdit, ch: Change) -> None:
    o, d, _, p, hit = _lane_target(ed, ch)
    if hit is None:
        return
    ex = ed.tables["lanes"]
    for mode in sorted(set(hit["mode"])):
        mask = (ex["origin"] == o) & (ex["destination"] == d) & (ex["mode"] == mode) & (ex["product"] == p)
        if mask.any():
            ex.loc[mask, "available"] = False
        else:
            ex = append_row(
                ex, "lanes", {"origin": o, "destination": d, "mode": mode, "product": p, "available": False}
            )
    ed.tables["lanes"] = ex


def _held_close_lane(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan:
    """Flows on the lane (one mode or all, one product or all) fixed at 0."""
    g = {k: str(ch.get(k, "")).strip() for k in ("origin", "destination", "mode", "product")}
    plan = BoundPlan()
    plan.set_cols(held.cols("flow", held.arcs_on(g["origin"], g["destination"], g["mode"], g["product"])), 0.0, 0.0)
    return plan


def _edit_cap_lane(ed: CaseEdit, ch: Change) -> None:
    cap = ed.number(ch, "capacity")
    o, d, _, p, hit = _lane_target(ed, ch)
    if hit is None or cap is None:
        return
    ex = ed.tables["lanes"]
    for mode in sorted(set(hit["mode"])):
        mask = (ex["origin"] == o) & (ex["destination"] == d) & (ex["mode"] == mode) & (ex["product"] == p)
        if mask.any():
            ex.loc[mask, "capacity"] = cap
        else:
            row = hit[hit["mode"] == mode].iloc[0]
            ex = append_row(
                ex,
                "lanes",
                {
                    "origin": o,
                    "destination": d,
                    "mode": mode,
                    "product": p,
                    "distance_km": row["distance_km"],
                    "transit_days": row["transit_days"],
                    "cost_per_unit": row["cost_per_unit"],
                    "capacity": cap,
                },
            )
    ed.tables["lanes"] = ex


def _held_cap_lane(held: HeldNetwork, ch: Change, sc_case: Case) -> BoundPlan | None:
    """A lane mode carrying one product: the cap is that arc's upper bound (several products share a row)."""
    g = {k: str(ch.get(k, "")).strip() for k in ("origin", "destination", "mode")}
    idx = held.arcs_on(g["origin"], g["destination"], g["mode"])
    modes = held.net.arcs["mode"].to_numpy()[idx]
    if len(idx) and (pd.Series(modes).value_counts() > 1).any():
        return None
    plan = BoundPlan()
    plan.set_cols(held.cols("flow", idx), 0.0, float(ch["capacity"]))
    return plan


# ---------------------------------------------------------------------------------- settings


def _edit_settings(ed: CaseEdit, ch: Change, section: str) -> None:
    s = ed.case.settings
    if section not in s:
        ed.errors.append(f"unknown settings section '{section}'")
        return
    for key, v in ch.items():
        if key in ("kind", "section"):
            continue
        if key not in s[section]:
            ed.errors.append(f"unknown setting [{section}] {key}")
        else:
            s[section][key] = v


SERVICE_SETTINGS = ("service_max_days", "service_target_share")


def _edit_policy(ed: CaseEdit, ch: Change) -> None:
    if len(ed.tables["service_classes"]) and any(k in ch for k in SERVICE_SETTINGS):
        ed.errors.append(
            "the case has a service_classes table, so [policy] service_max_days / service_target_share "
            'do not apply; change a class with kind = "service_class"'
        )
        return
    _edit_settings(ed, ch, "policy")


SERVICE_CLASS_FIELDS = ("max_days", "target_share", "late_cost_per_unit")


def _edit_service_class(ed: CaseEdit, ch: Change) -> None:
    classes = ed.tables["service_classes"]
    name = ed.text(ch, "service_class")
    mask = classes["service_class"].astype(str) == name
    if not mask.any():
        known = ", ".join(sorted(classes["service_class"].astype(str))) or "none: the case has no service_classes table"
        ed.errors.append(f"unknown service class '{name}' (known: {known})")
        return
    given = [k for k in SERVICE_CLASS_FIELDS if k in ch]
    if not given:
        ed.errors.append(f"give at least one of {', '.join(SERVICE_CLASS_FIELDS)}")
    bad = set(ch) - {"kind", "service_class", *SERVICE_CLASS_FIELDS}
    if bad:
        ed.errors.append(f"unknown field(s): {', '.join(sorted(bad))}")
    for k in given:
        v = ed.number(ch, k)
        if v is not None:
            classes.loc[mask, k] = v


def _edit_setting(ed: CaseEdit, ch: Change) -> None:
    _edit_settings(ed, ch, ed.text(ch, "section"))
    if ed.text(ch, "section") == "lanes":
        ed.lanes_changed = True


# ---------------------------------------------------------------------------------- demand


def table_fields(table: str) -> Fields:
    """The fields of a change that adds a row to ``table``: its columns as the schema declares them
    (ranges are checked with the table once the row is added)."""
    cols = TABLES[table].columns
    return Fields(
        required=tuple(c.name for c in cols if c.required),
        codes=tuple(c.name for c in cols if c.type == "str" and not c.choices),
        choices={c.name: tuple(c.choices) for c in cols if c.type == "str" and c.choices},
        numbers={c.name: (None, None) for c in cols if c.type in ("float", "int")},
    )


LANE_ENDS = ("origin", "destination")
AT_LEAST_0 = (0.0, None)  # (minimum, maximum) of a field that is a count, a capacity or a factor

CHANGE_KINDS: dict[str, ChangeKind] = {
    k.name: k
    for k in (
        ChangeKind(
            "add_dc",
            "Add a candidate DC: dc, lat, lon and any dcs column (fixed_cost, capacity, handling_cost, …)",
            _edit_add_dc,
            edits_lanes=True,
            fields=table_fields("dcs"),
        ),
        ChangeKind(
            "force_dc",
            "Force a DC's decision: dc, to = open | closed | free",
            _edit_force_dc,
            _held_force_dc,
            fields=Fields(required=("dc", "to"), codes=("dc",), choices={"to": ("open", "closed", "free")}),
        ),
        ChangeKind(
            "close_lane",
            "Remove a lane: origin, destination, mode (blank = every mode), product (blank = all)",
            _edit_close_lane,
            _held_close_lane,
            edits_lanes=True,
            fields=Fields(required=LANE_ENDS, codes=(*LANE_ENDS, "mode", "product")),
        ),
        ChangeKind(
            "cap_lane",
            "Cap a lane: origin, destination, mode (blank = every mode), capacity (units/yr)",
            _edit_cap_lane,
            _held_cap_lane,
            edits_lanes=True,
            fields=Fields(
                required=(*LANE_ENDS, "capacity"),
                codes=(*LANE_ENDS, "mode", "product"),
                numbers={"capacity": AT_LEAST_0},
            ),
        ),
        ChangeKind(
            "site_out",
            "Take a supplier, plant or DC out for the year: site (a DC out is still paid for when the network "
            "is held; a redesign may close it)",
            _edit_site_out,
            _held_site_out,
            fields=Fields(required=("site",), codes=("site",)),
        ),
        ChangeKind(
            "policy",
            "Change policy settings: any [policy] name = value (e.g. max_supplier_share = 0.6)",
            _edit_policy,
            fields=Fields(open="[policy] settings"),
        ),
        ChangeKind(
            "setting",
            "Change any setting: section, then name = value",
            _edit_setting,
            fields=Fields(required=("section",), codes=("section",), open="settings of that section"),
        ),
        ChangeKind(
            "service_class",
            "Change a service class: service_class, and max_days (days), target_share (share of demand) "
            "and/or late_cost_per_unit (currency/unit; 0 = hard)",
            _edit_service_class,
            fields=Fields(
                required=("service_class",),
                codes=("service_class",),
                numbers=dict.fromkeys(SERVICE_CLASS_FIELDS, AT_LEAST_0),
            ),
        ),
        ChangeKind(
            "scale_demand",
            "Scale demand: factor; optional region, customer, product filters",
            edit_scale_demand,
            held_scale_demand,
            fields=Fields(
                required=("factor",), codes=("region", "customer", "product"), numbers={"factor": AT_LEAST_0}
            ),
        ),
        ChangeKind(
            "grow_demand",
            "Grow demand over the periods of a case with periods: rate per year (demand of a period × (1 + rate) "
            "to the power of the years before it starts); optional region, customer, product filters",
            edit_grow_demand,
            None,
            fields=Fields(codes=("region", "customer", "product"), numbers={"rate": AT_LEAST_0}, required=("rate",)),
        ),
        ChangeKind(
            "scale_cost",
            "Scale a cost: factor and target = mode_rate (mode) | supplier_price (supplier, product) | "
            "dc_fixed_cost (dc) | production_cost (plant, product) | handling_cost (dc)",
            edit_scale_cost,
            fields=Fields(
                required=("target", "factor"),
                codes=("mode", "supplier", "product", "dc", "plant"),
                choices={"target": COST_TARGETS},
                numbers={"factor": AT_LEAST_0},
            ),
        ),
        ChangeKind(
            "share_cap",
            "Cap one supplier's share: supplier (optional product) for its cap at every site, or site (plant "
            "or DC) for that site's cap on any one supplier; max_share (share); the policy's cap still applies",
            edit_share_cap,
            fields=Fields(
                required=("max_share",), codes=("supplier", "site", "product"), numbers={"max_share": (0.0, 1.0)}
            ),
        ),
        ChangeKind(
            "set_capacity",
            "Change a capacity: site (supplier, plant or DC), optional product, capacity or factor",
            edit_set_capacity,
            held_set_capacity,
            fields=Fields(
                required=("site",), codes=("site", "product"), numbers={"capacity": AT_LEAST_0, "factor": AT_LEAST_0}
            ),
        ),
    )
}


def check_change(ch: object) -> list[str]:
    """Every problem with change ``ch`` found without the case: a known kind, its fields present, of the
    right type and in range (a number too large for a float, NaN or infinite is refused)."""
    if not isinstance(ch, dict):
        return change_problems(ch, Fields())
    kind = ch.get("kind")
    if not isinstance(kind, str) or kind.strip() not in CHANGE_KINDS:
        what = "kind is missing" if kind is None else f"unknown kind {shown(kind)}"
        return [f"{what} (one of: {', '.join(CHANGE_KINDS)})"]
    return change_problems(ch, CHANGE_KINDS[kind.strip()].fields)


def held_plan(held: HeldNetwork, changes: list[Change], sc_case: Case) -> BoundPlan | None:
    """The bound changes that express ``changes`` on ``held`` (None: some change is not a bound change)."""
    if not held.is_lp:
        return None
    plan = BoundPlan()
    for ch in changes:
        kind = CHANGE_KINDS[ch["kind"]]
        part = kind.held_bounds(held, ch, sc_case) if kind.held_bounds is not None else None
        if part is None:
            return None
        plan.merge(part)
    return plan


def element_changes(el: dict) -> list[Change]:
    """The changes that take a network element out: a lane → ``close_lane``, a site → ``site_out``."""
    if el["type"] == "lane":
        return [{"kind": "close_lane", "origin": el["origin"], "destination": el["destination"], "mode": el["mode"]}]
    return [{"kind": "site_out", "site": el["origin"]}]


def resolve_held(
    held: HeldNetwork, sc_case: Case, changes: list[Change], name: str = "", lost_demand: bool | None = None
) -> Result | None:
    """Warm re-solve of scenario case ``sc_case`` (made by ``changes``) on ``held``; None when a
    change is not a bound change (the hold must then be rebuilt with the openings fixed).
    ``lost_demand``: as :meth:`HeldNetwork.result` (None: as the scenario's settings say)."""
    plan = held_plan(held, changes, sc_case)
    return None if plan is None else held.result(sc_case, plan, name=name, lost_demand=lost_demand)
