"""What-if scenarios: changes to the base case, hold-the-network and redesign re-solves, comparison.

A case may hold ``scenarios.toml`` with ``[[scenario]]`` entries::

    [[scenario]]
    name = "lane_out_ningbo_poznan"
    description = "Ocean lane Ningbo → Poznań lost for the year"
    based_on = ""            # optional: another scenario whose changes come first
    resolve = "both"         # redesign (default) | hold | both
    frontier_points = 5      # optional: also the cost–CO2 frontier of this scenario (netopt.frontier)

      [[scenario.change]]
      kind = "close_lane"
      origin = "SUP_NINGBO"
      destination = "PLANT_POZNAN"
      mode = "ocean"         # blank or absent = every mode

Change kinds (see :data:`CHANGE_KINDS`): add_dc, force_dc, close_lane, cap_lane,
site_out, policy, setting, scale_demand, scale_cost, set_capacity.

*Hold the network* keeps the base's DC decisions and re-routes only (short-term
recovery); DCs taken out are closed.  With openings fixed the model is a linear
program, re-solved warm from the base basis in one kept HiGHS instance whenever the
scenario's changes are bound changes; other changes rebuild with the openings held.
*Redesign* re-optimises openings too (the long-term answer).  When a scenario cannot
serve all demand it is re-solved with lost demand allowed at the penalty and
reported as lost units and value, never as a failed run.
"""

from __future__ import annotations

import copy
import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.schema import TABLES
from netopt.data.validate import validate_and_coerce
from netopt.engine.highs import compile_model
from netopt.engine.solve import Result, _fixed_options, solve
from netopt.engine.tables import build_tables
from netopt.engine.verify import verify
from netopt.model import COST_COMPONENTS, build_model
from netopt.model.safety_stock import add_held_lines, held_lines, held_lines_cost, prepare_solve
from netopt.network.arcs import build_network
from netopt.network.lanes import build_lanes, case_lanes
from netopt.studies.frontier import scenario_frontier

CHANGE_KINDS = {
    "add_dc": "Add a candidate DC: dc, lat, lon and any dcs column (fixed_cost, capacity, handling_cost, …)",
    "force_dc": "Force a DC's decision: dc, to = open | closed | free",
    "close_lane": "Remove a lane: origin, destination, mode (blank = every mode), product (blank = all)",
    "cap_lane": "Cap a lane: origin, destination, mode (blank = every mode), capacity (units/yr)",
    "site_out": "Take a supplier, plant or DC out for the year: site",
    "policy": "Change policy settings: any [policy] name = value (e.g. max_supplier_share = 0.6)",
    "setting": "Change any setting: section, then name = value",
    "scale_demand": "Scale demand: factor; optional region, customer, product filters",
    "scale_cost": "Scale a cost: factor and target = mode_rate (mode) | supplier_price (supplier, product) | "
    "dc_fixed_cost (dc) | production_cost (plant, product) | handling_cost (dc)",
    "set_capacity": "Change a capacity: site (supplier, plant or DC), optional product, capacity or factor",
}
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
    frontier_points: int = 0  # ≥ 2: also sweep this scenario's cost–CO2 frontier (netopt.frontier)


def parse_scenarios(raw: list[dict] | dict | None, label: str = "scenarios.toml") -> list[Scenario]:
    """Scenario definitions from the TOML structure; every problem reported at once."""
    if raw is None:
        return []
    if isinstance(raw, dict):
        raw = raw.get("scenario", [])
    problems: list[Problem] = []
    out: list[Scenario] = []
    seen: set[str] = set()
    for k, sc in enumerate(raw, start=1):
        name = str(sc.get("name", "")).strip()
        where = f"scenario {k}" + (f" '{name}'" if name else "")
        if not name:
            problems.append(Problem(label, None, None, f"{where}: every scenario needs a name"))
            continue
        if name in seen or name == "base":
            problems.append(
                Problem(label, None, None, f"{where}: the name is used twice (or is 'base', which is reserved)")
            )
        seen.add(name)
        resolve = str(sc.get("resolve", "redesign")).strip() or "redesign"
        if resolve not in RESOLVE:
            problems.append(
                Problem(label, None, None, f"{where}: resolve must be one of {', '.join(RESOLVE)}, not '{resolve}'")
            )
        changes = sc.get("change", [])
        if isinstance(changes, dict):
            changes = [changes]
        for i, ch in enumerate(changes, start=1):
            kind = str(ch.get("kind", "")).strip()
            if kind not in CHANGE_KINDS:
                problems.append(
                    Problem(
                        label,
                        None,
                        None,
                        f"{where}, change {i}: unknown kind '{kind}' (one of: {', '.join(CHANGE_KINDS)})",
                    )
                )
        unknown = set(sc) - {"name", "description", "based_on", "resolve", "change", "frontier_points"}
        points = sc.get("frontier_points", 0)
        if isinstance(points, bool) or not isinstance(points, int) or (points != 0 and points < 2):
            problems.append(
                Problem(
                    label,
                    None,
                    None,
                    f"{where}: frontier_points must be a whole number ≥ 2 (or 0 for none), not {points!r}",
                )
            )
            points = 0
        for u in sorted(unknown):
            problems.append(Problem(label, None, None, f"{where}: unknown entry '{u}' (ignored)", "warning"))
        out.append(
            Scenario(
                name,
                [dict(c) for c in changes],
                str(sc.get("description", "")),
                str(sc.get("based_on", "")).strip(),
                resolve,
                points,
            )
        )
    names = {s.name for s in out}
    for s in out:
        if s.based_on and s.based_on not in names:
            problems.append(
                Problem(label, None, None, f"scenario '{s.name}': based_on '{s.based_on}' is not a scenario")
            )
    # cycles
    by = {s.name: s for s in out}
    for s in out:
        chain, cur = [], s
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


def _sites(case: Case) -> dict[str, str]:
    t = case.tables
    out = {}
    for table, col, kind in (
        ("suppliers", "supplier", "supplier"),
        ("plants", "plant", "plant"),
        ("dcs", "dc", "dc"),
        ("customers", "customer", "customer"),
    ):
        for s in t[table][col].astype(str):
            out[s] = kind
    return out


def _num(value, what: str, err: list[str], minimum: float = 0.0):
    try:
        v = float(value)
    except (TypeError, ValueError):
        err.append(f"{what} must be a number, not {value!r}")
        return None
    if np.isnan(v) or v < minimum:
        err.append(f"{what} must be ≥ {minimum:g}, not {value!r}")
        return None
    return v


def _append_row(df: pd.DataFrame, table: str, values: dict) -> pd.DataFrame:
    t = TABLES[table]
    row = {c.name: values.get(c.name, c.default) for c in t.columns}
    nxt = (int(df.index.max()) + 1) if len(df) else 2
    return pd.concat([df, pd.DataFrame([row], index=[nxt])]).astype(
        {c: df[c].dtype for c in df.columns if c in row}, errors="ignore"
    )


def apply_changes(case: Case, sc: Scenario, changes: list[dict] | None = None) -> Case:
    """A new case with the scenario's changes applied (the base is untouched)."""
    c = case.copy()
    t = c.tables
    s = c.settings
    sites = _sites(case)
    modes = set(t["modes"]["mode"].astype(str))
    problems: list[Problem] = []
    for i, ch in enumerate(changes if changes is not None else sc.changes, start=1):
        kind = ch.get("kind")
        err: list[str] = []
        g = lambda k, d="": str(ch.get(k, d)).strip()  # noqa: E731
        if kind == "add_dc":
            dc = g("dc")
            if not dc:
                err.append("dc is required")
            elif dc in sites:
                err.append(f"site '{dc}' already exists")
            else:
                vals = {k: v for k, v in ch.items() if k != "kind"}
                vals.setdefault("status", "candidate")
                bad = set(vals) - set(TABLES["dcs"].column_names)
                if bad:
                    err.append(f"unknown dcs column(s): {', '.join(sorted(bad))}")
                for req in ("lat", "lon"):
                    if req not in vals:
                        err.append(f"{req} is required")
                if not err:
                    t["dcs"] = _append_row(t["dcs"], "dcs", vals)
                    sites[dc] = "dc"
        elif kind == "force_dc":
            dc, to = g("dc"), g("to")
            if sites.get(dc) != "dc":
                err.append(f"'{dc}' is not a DC")
            if to not in ("open", "closed", "free"):
                err.append(f"to must be open, closed or free, not '{to}'")
            if not err:
                t["dcs"].loc[t["dcs"]["dc"] == dc, "force"] = "" if to == "free" else to
        elif kind in ("close_lane", "cap_lane"):
            o, d, m, p = g("origin"), g("destination"), g("mode"), g("product")
            if o not in sites:
                err.append(f"unknown origin site '{o}'")
            if d not in sites:
                err.append(f"unknown destination site '{d}'")
            if m and m not in modes:
                err.append(f"unknown mode '{m}'")
            cap = _num(ch.get("capacity"), "capacity", err) if kind == "cap_lane" else None
            if not err:
                lanes = build_lanes(c)
                hit = lanes[
                    (lanes["origin"] == o) & (lanes["destination"] == d) & ((lanes["mode"] == m) if m else True)
                ]
                if hit.empty:
                    err.append(f"there is no lane {o} → {d}" + (f" by {m}" if m else ""))
                else:
                    ex = t["lanes"]
                    for mode in sorted(set(hit["mode"])):
                        mask = (
                            (ex["origin"] == o) & (ex["destination"] == d) & (ex["mode"] == mode) & (ex["product"] == p)
                        )
                        if kind == "close_lane":
                            if mask.any():
                                ex.loc[mask, "available"] = False
                            else:
                                ex = _append_row(
                                    ex,
                                    "lanes",
                                    {"origin": o, "destination": d, "mode": mode, "product": p, "available": False},
                                )
                        else:
                            if mask.any():
                                ex.loc[mask, "capacity"] = cap
                            else:
                                row = hit[(hit["mode"] == mode)].iloc[0]
                                ex = _append_row(
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
                    t["lanes"] = ex
        elif kind == "site_out":
            site = g("site")
            k = sites.get(site)
            if k == "supplier":
                t["suppliers"].loc[t["suppliers"]["supplier"] == site, "capacity"] = 0.0
            elif k == "plant":
                t["plants"].loc[t["plants"]["plant"] == site, "capacity"] = 0.0
            elif k == "dc":
                t["dcs"].loc[t["dcs"]["dc"] == site, "force"] = "closed"
            elif k == "customer":
                err.append(f"'{site}' is a customer: use scale_demand with factor 0 to drop its demand")
            else:
                err.append(f"unknown site '{site}'")
        elif kind in ("policy", "setting"):
            section = "policy" if kind == "policy" else g("section")
            if section not in s:
                err.append(f"unknown settings section '{section}'")
            else:
                for k2, v in ch.items():
                    if k2 in ("kind", "section"):
                        continue
                    if k2 not in s[section]:
                        err.append(f"unknown setting [{section}] {k2}")
                    else:
                        s[section][k2] = v
        elif kind == "scale_demand":
            f = _num(ch.get("factor"), "factor", err)
            dem = t["demand"]
            mask = pd.Series(True, index=dem.index)
            if g("region"):
                regions = set(t["customers"]["region"].astype(str))
                if g("region") not in regions:
                    err.append(f"unknown region '{g('region')}'")
                cust = t["customers"].loc[t["customers"]["region"] == g("region"), "customer"]
                mask &= dem["customer"].isin(cust)
            if g("customer"):
                if sites.get(g("customer")) != "customer":
                    err.append(f"unknown customer '{g('customer')}'")
                mask &= dem["customer"] == g("customer")
            if g("product"):
                if g("product") not in set(t["products"]["product"]):
                    err.append(f"unknown product '{g('product')}'")
                mask &= dem["product"] == g("product")
            if not err:
                dem.loc[mask, "quantity"] = dem.loc[mask, "quantity"] * f
        elif kind == "scale_cost":
            f = _num(ch.get("factor"), "factor", err)
            target = g("target")
            if target == "mode_rate":
                if g("mode") not in modes:
                    err.append(f"unknown mode '{g('mode')}'")
                elif f is not None:
                    mm = t["modes"]["mode"] == g("mode")
                    t["modes"].loc[mm, "cost_per_tonne_km"] *= f
                    t["modes"].loc[mm, "fixed_cost_per_unit"] *= f
                    ex = t["lanes"]
                    em = (ex["mode"] == g("mode")) & ex["cost_per_unit"].notna()
                    ex.loc[em, "cost_per_unit"] = ex.loc[em, "cost_per_unit"] * f
            elif target == "supplier_price":
                sp = t["suppliers"]
                mask = sp["supplier"] == g("supplier")
                if g("product"):
                    mask &= sp["product"] == g("product")
                if not mask.any():
                    err.append(
                        f"no supplier offer for '{g('supplier')}'" + (f" / '{g('product')}'" if g("product") else "")
                    )
                elif f is not None:
                    sp.loc[mask, "unit_cost"] *= f
            elif target in ("dc_fixed_cost", "handling_cost"):
                col = "fixed_cost" if target == "dc_fixed_cost" else "handling_cost"
                mask = (t["dcs"]["dc"] == g("dc")) if g("dc") else pd.Series(True, index=t["dcs"].index)
                if g("dc") and sites.get(g("dc")) != "dc":
                    err.append(f"'{g('dc')}' is not a DC")
                elif f is not None:
                    t["dcs"].loc[mask, col] *= f
                    if target == "dc_fixed_cost" and len(t["dc_sizes"]):
                        sm = (t["dc_sizes"]["dc"] == g("dc")) if g("dc") else slice(None)
                        t["dc_sizes"].loc[sm, "fixed_cost"] *= f
            elif target == "production_cost":
                pl = t["plants"]
                mask = pd.Series(True, index=pl.index)
                if g("plant"):
                    mask &= pl["plant"] == g("plant")
                if g("product"):
                    mask &= pl["product"] == g("product")
                if not mask.any():
                    err.append("no plant row matches")
                elif f is not None:
                    pl.loc[mask, "unit_cost"] *= f
            else:
                err.append(
                    f"target must be mode_rate, supplier_price, dc_fixed_cost, production_cost or handling_cost, not '{target}'"
                )
        elif kind == "set_capacity":
            site = g("site")
            k = sites.get(site)
            table, col = {"supplier": ("suppliers", "supplier"), "plant": ("plants", "plant"), "dc": ("dcs", "dc")}.get(
                k, (None, None)
            )
            if table is None:
                err.append(f"'{site}' is not a supplier, plant or DC")
            else:
                df = t[table]
                mask = df[col] == site
                if g("product") and table != "dcs":
                    mask &= df["product"] == g("product")
                if not mask.any():
                    err.append("no row matches")
                if "capacity" in ch:
                    v = _num(ch.get("capacity"), "capacity", err)
                    if not err:
                        df.loc[mask, "capacity"] = v
                elif "factor" in ch:
                    v = _num(ch.get("factor"), "factor", err)
                    if not err:
                        df.loc[mask, "capacity"] = df.loc[mask, "capacity"] * v
                else:
                    err.append("give capacity or factor")
        for e in err:
            problems.append(Problem("scenarios.toml", None, None, f"scenario '{sc.name}', change {i} ({kind}): {e}"))
    if problems:
        raise CaseError(problems)
    typed, typed_settings, probs = validate_and_coerce(t, s, reachability=False)
    errors = [p for p in probs if p.severity == "error"]
    if errors:
        raise CaseError([Problem(p.table, p.row, p.column, f"after scenario '{sc.name}': {p.message}") for p in errors])
    return Case(c.name, typed, typed_settings, c.path, c.scenarios, c.warnings)


def scenario_case(case: Case, scenarios: list[Scenario], name: str) -> Case:
    """The case of scenario ``name``, its based_on chain applied first."""
    by = {s.name: s for s in scenarios}
    chain = []
    cur = by[name]
    while cur is not None:
        chain.append(cur)
        cur = by.get(cur.based_on) if cur.based_on else None
    out = case
    for sc in reversed(chain):
        out = apply_changes(out, sc)
    return out


def all_changes(scenarios: list[Scenario], name: str) -> list[dict]:
    by = {s.name: s for s in scenarios}
    chain, cur = [], by[name]
    while cur is not None:
        chain.append(cur)
        cur = by.get(cur.based_on) if cur.based_on else None
    return [c for sc in reversed(chain) for c in sc.changes]


# ---------------------------------------------------------------------------------- warm hold


class HeldNetwork:
    """The base network with its DC decisions held, kept in HiGHS for warm LP re-solves.

    Lost demand is always allowed here (at the penalty), so a disruption is reported
    as lost units rather than as an infeasible run.
    """

    BIG_M_FACTOR = 20.0
    WARM_KINDS = {"close_lane", "site_out", "scale_demand", "cap_lane", "set_capacity", "force_dc"}

    def __init__(self, case: Case, base=None, *, held: dict | None = None, lanes: pd.DataFrame | None = None):
        """Hold ``base``'s DC decisions (a Result), or ``held`` (dc → size/True/False) with ``lanes``."""
        self.case = case
        settings = copy.deepcopy(case.settings)
        settings["policy"]["allow_unmet_demand"] = True
        self.case_unmet = Case(case.name, case.tables, settings, case.path)
        if base is not None:
            held = base.held_openings()
            lanes = base.lanes if lanes is None else lanes
        if held is None:
            raise ValueError("HeldNetwork needs a base result or the held DC decisions")
        self.lanes = case_lanes(case) if lanes is None else lanes
        # Safety stock is priced on one line per curve at the base throughput (not the curve's
        # binaries), so the held model stays a linear program; see safety_stock.held_lines.
        model_settings = copy.deepcopy(settings)
        ss_on = bool(settings["inventory"]["safety_stock"])
        model_settings["inventory"]["safety_stock"] = False
        self.net = build_network(Case(case.name, case.tables, model_settings, case.path), self.lanes)
        self.ss_lines = pd.DataFrame()
        if ss_on:
            if base is None or not base.has_solution:
                raise ValueError("HeldNetwork with safety stock needs the base result (its throughput per DC)")
            self.ss_lines = held_lines(self.net, base.tables["flows"])
        self.held = dict(held)
        fixed = _fixed_options(self.net, self.held)
        self.fixed = fixed
        t0 = time.perf_counter()
        # Openings are fixed, so the strong linking rows are redundant ("plain"), and a generous
        # big M for unlimited DC capacity lets demand be scaled by bound changes alone.
        self.builder = build_model(
            self.net,
            formulation="plain",
            fixed_open=fixed,
            big_m_factor=self.BIG_M_FACTOR,
            extra=lambda b: add_held_lines(b, self.ss_lines),
        )
        self.hm = compile_model(self.builder)
        self.is_lp = set(self.builder.vars) <= {"flow", "make", "unmet", "open"}
        # With openings fixed and no other binaries the model is an LP: solve it once, cold,
        # so every later re-solve starts from this basis.
        if self.is_lp:
            self.hm.relax_integrality()
        else:
            prepare_solve(
                self.hm,
                time_limit=float(case.settings["solver"]["time_limit_s"]),
                mip_gap=float(case.settings["solver"]["mip_gap"]),
            )  # safety-stock binaries only
        self.build_seconds = time.perf_counter() - t0
        info = self.hm.solve(
            time_limit=float(case.settings["solver"]["time_limit_s"]), mip_gap=float(case.settings["solver"]["mip_gap"])
        )
        self.base_info = info
        lp = self.hm.highs.getLp()
        self.col_lo = np.array(lp.col_lower_, dtype=float)
        self.col_hi = np.array(lp.col_upper_, dtype=float)
        self.row_lo = np.array(lp.row_lower_, dtype=float)
        self.row_hi = np.array(lp.row_upper_, dtype=float)
        self._rows: dict[str, np.ndarray] = {}

    def rows_of(self, name: str) -> np.ndarray:
        """HiGHS row of each label row of constraint family ``name`` (−1 when skipped)."""
        if name not in self._rows:
            comp = getattr(self.builder.model, name, None)
            n = len(self.builder.row_labels.get(name, []))
            r = -np.ones(n, dtype=np.int64)
            if comp is not None:
                for k in range(n):
                    if k in comp:
                        r[k] = self.hm.row(comp[k])
            self._rows[name] = r
        return self._rows[name]

    def bound_changes(self, sc_case: Case, changes: list[dict]):
        """Column and row bound changes that express ``changes`` on the held model, or None."""
        if not self.is_lp or any(c.get("kind") not in self.WARM_KINDS for c in changes):
            return None
        net = self.net
        arcs = net.arcs
        cols: dict[int, tuple[float, float]] = {}
        rows: dict[int, tuple[float, float]] = {}
        col = self.hm.col_of

        def set_col(block, idx, lo, hi):
            for i in np.atleast_1d(idx):
                c = int(col[block][i])
                if c >= 0:
                    cols[c] = (lo, hi)

        for ch in changes:
            kind = ch["kind"]
            g = lambda k: str(ch.get(k, "")).strip()  # noqa: E731
            if kind == "close_lane":
                m = (arcs["origin"] == g("origin")) & (arcs["destination"] == g("destination"))
                if g("mode"):
                    m &= arcs["mode"] == g("mode")
                if g("product"):
                    m &= arcs["product"] == g("product")
                set_col("flow", np.flatnonzero(m.to_numpy()), 0.0, 0.0)
            elif kind == "site_out":
                site = g("site")
                set_col("flow", np.flatnonzero((arcs["origin"] == site).to_numpy()), 0.0, 0.0)
                set_col("make", np.flatnonzero((net.make["plant"] == site).to_numpy()), 0.0, 0.0)
                set_col("open", np.flatnonzero((net.options["dc"] == site).to_numpy()), 0.0, 0.0)
            elif kind == "force_dc":
                if g("to") == "closed":
                    set_col("open", np.flatnonzero((net.options["dc"] == g("dc")).to_numpy()), 0.0, 0.0)
                else:
                    return None
            elif kind == "scale_demand":
                dem_new = sc_case.tables["demand"].set_index(["customer", "product"])["quantity"]
                if dem_new.sum() > self.builder.dc_big_m / 2:
                    return None
                q = dem_new.reindex(pd.MultiIndex.from_frame(net.demand[["customer", "product"]])).to_numpy(float)
                r = self.rows_of("demand_met")
                for k in np.flatnonzero(np.abs(q - net.demand["quantity"].to_numpy(float)) > 0):
                    if r[k] >= 0:
                        rows[int(r[k])] = (q[k], q[k])
                    set_col("unmet", k, 0.0, q[k])
            elif kind == "cap_lane":
                m = (arcs["origin"] == g("origin")) & (arcs["destination"] == g("destination"))
                if g("mode"):
                    m &= arcs["mode"] == g("mode")
                idx = np.flatnonzero(m.to_numpy())
                cap = float(ch["capacity"])
                by_mode = arcs.iloc[idx].groupby("mode").size()
                if (by_mode <= 1).all():
                    set_col("flow", idx, 0.0, cap)
                else:
                    return None
            elif kind == "set_capacity":
                site = g("site")
                if (net.make["plant"] == site).any():
                    pm = net.make["plant"] == site
                    if g("product"):
                        pm &= net.make["product"] == g("product")
                    newcap = sc_case.tables["plants"].set_index(["plant", "product"])["capacity"]
                    for k in np.flatnonzero(pm.to_numpy()):
                        v = float(newcap.loc[(site, net.make["product"].iloc[k])])
                        set_col("make", k, 0.0, v)
                else:
                    return None
        return cols, rows

    def solve(self, sc_case: Case, changes: list[dict], name: str = ""):
        """Warm re-solve of ``sc_case`` if its changes are bound changes, else None."""
        plan = self.bound_changes(sc_case, changes)
        if plan is None:
            return None
        cols, rows = plan
        h = self.hm.highs
        t0 = time.perf_counter()
        ci = np.array(sorted(cols), dtype=np.int32)
        ri = np.array(sorted(rows), dtype=np.int32)
        if len(ci):
            h.changeColsBounds(len(ci), ci, np.array([cols[c][0] for c in ci]), np.array([cols[c][1] for c in ci]))
        if len(ri):
            h.changeRowsBounds(len(ri), ri, np.array([rows[r][0] for r in ri]), np.array([rows[r][1] for r in ri]))
        try:
            info = self.hm.solve()
            values = self.hm.values() if info.has_solution else None
        finally:
            if len(ci):
                h.changeColsBounds(len(ci), ci, self.col_lo[ci], self.col_hi[ci])
            if len(ri):
                h.changeRowsBounds(len(ri), ri, self.row_lo[ri], self.row_hi[ri])
        seconds = time.perf_counter() - t0
        res = Result(
            case_name=name,
            status=info.status,
            objective=info.objective,
            bound=info.bound,
            gap=info.gap,
            timings={"highs": info.solver_seconds, "total": seconds},
            message=info.message + " (warm re-solve)",
        )
        if values is None:
            return res
        net_view = copy.copy(self.net)
        dem = self.net.demand.copy()
        q = sc_case.tables["demand"].set_index(["customer", "product"])["quantity"]
        dem["quantity"] = q.reindex(pd.MultiIndex.from_frame(dem[["customer", "product"]])).fillna(0.0).to_numpy(float)
        net_view.demand = dem
        cost = self.builder.component_values(values)
        cost = {k: float(cost.get(k, 0.0)) for k in COST_COMPONENTS}
        res.tables = build_tables(net_view, values, cost)

        lanes = case_lanes(sc_case)
        held = dict(self.held)
        for ch in changes:
            if ch["kind"] == "site_out" and ch.get("site") in held:
                held[ch["site"]] = False
            if ch["kind"] == "force_dc" and ch.get("to") == "closed":
                held[ch["dc"]] = False
        sc_unmet = Case(sc_case.name, sc_case.tables, copy.deepcopy(sc_case.settings), sc_case.path)
        sc_unmet.settings["policy"]["allow_unmet_demand"] = True

        res.verification = verify(
            sc_unmet,
            lanes,
            res.tables,
            info.objective,
            fixed_open={d: bool(v) for d, v in held.items()},
            extra_cost={"safety_stock": held_lines_cost(self.ss_lines, res.tables)},
        )
        res.lanes = lanes
        return res


# ---------------------------------------------------------------------------------- running


@dataclass
class ScenarioRun:
    """Base and scenario results with the comparison table (one row per scenario and re-solve)."""

    base: object
    results: dict[str, object] = field(default_factory=dict)
    comparison: pd.DataFrame = field(default_factory=pd.DataFrame)
    scenarios: list[Scenario] = field(default_factory=list)
    frontiers: dict[str, pd.DataFrame] = field(default_factory=dict)  # scenario → cost–CO2 frontier table


def _solve_or_lose(case: Case, **kw):
    """Solve; if infeasible, solve again with lost demand allowed at the penalty."""
    r = solve(case, diagnose=False, **kw)
    if r.has_solution or r.status not in ("infeasible", "unbounded"):
        return r, False
    c2 = Case(case.name, case.tables, copy.deepcopy(case.settings), case.path)
    c2.settings["policy"]["allow_unmet_demand"] = True
    r2 = solve(c2, **kw)
    r2.message = (r2.message + "; infeasible without lost demand, so re-solved with lost demand at the penalty").strip(
        "; "
    )
    return r2, True


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
    scenarios = scenarios if scenarios is not None else parse_scenarios(case.scenarios)
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
    # Validate every scenario before solving anything: all errors at once.
    cases: dict[str, Case] = {}
    problems: list[Problem] = []
    for s in chosen:
        try:
            cases[s.name] = scenario_case(case, scenarios, s.name)
        except CaseError as e:
            problems += e.problems
    if problems:
        raise CaseError(problems)

    t0 = time.perf_counter()
    say("start", {"name": "base", "resolve": "redesign"})
    if base is None:
        base = solve(case, keep_model=False)
    say("done", {"name": "base", "status": base.status, "seconds": time.perf_counter() - t0})
    run = ScenarioRun(base=base, scenarios=chosen)
    run.results["base"] = base
    rows = [comparison_row("base", "", "design", base, base, "mip", time.perf_counter() - t0, "the base case")]
    held: HeldNetwork | None = None
    for s in chosen:
        sc_case = cases[s.name]
        modes = ["hold", "redesign"] if s.resolve == "both" else [s.resolve]
        for how in modes:
            label = s.name if len(modes) == 1 else f"{s.name} [{how}]"
            say("start", {"name": label, "resolve": how})
            t1 = time.perf_counter()
            lost_allowed = False
            if how == "hold":
                r = None
                method = "rebuilt"
                if warm and base.has_solution:
                    if held is None:
                        held = HeldNetwork(case, base)
                    r = held.solve(sc_case, all_changes(scenarios, s.name), name=label)
                    method = "warm LP"
                if r is None:
                    hold = base.held_openings()
                    for ch in all_changes(scenarios, s.name):
                        if ch.get("kind") == "site_out" and ch.get("site") in hold:
                            hold[ch["site"]] = False
                        if ch.get("kind") == "force_dc" and ch.get("dc") in hold and ch.get("to") == "closed":
                            hold[ch["dc"]] = False
                    for d in set(sc_case.tables["dcs"]["dc"]) - set(hold):
                        hold[d] = False
                    r, lost_allowed = _solve_or_lose(sc_case, hold=hold)
                    method = "rebuilt"
            else:
                r, lost_allowed = _solve_or_lose(sc_case)
                method = "mip"
            sec = time.perf_counter() - t1
            run.results[label] = r
            rows.append(
                comparison_row(label, s.based_on, how, r, base, method, sec, s.description, lost_allowed=lost_allowed)
            )
            say("done", {"name": label, "status": r.status, "seconds": sec})
        if s.frontier_points:
            say("frontier_start", {"name": s.name, "points": s.frontier_points})
            t1 = time.perf_counter()
            run.frontiers[s.name] = scenario_frontier(sc_case, s)
            say("frontier_done", {"name": s.name, "points": s.frontier_points, "seconds": time.perf_counter() - t1})
    run.comparison = pd.DataFrame(rows)
    return run


def comparison_row(
    name: str,
    based_on: str,
    how: str,
    r,
    base,
    method: str,
    seconds: float,
    description: str,
    lost_allowed: bool = False,
) -> dict:
    """One row of the comparison table (money in currency/yr)."""
    row = {
        "scenario": name,
        "description": description,
        "based_on": based_on,
        "resolve": how,
        "status": r.status,
        "gap": r.gap,
    }
    if not r.has_solution:
        row.update({"total_cost": np.nan, "verified": False, "method": method, "seconds": seconds})
        return row
    cost = r.cost
    total = float(sum(cost.values()))
    btotal = float(sum(base.cost.values())) if base.has_solution else np.nan
    row["total_cost"] = total
    row["delta_cost"] = total - btotal
    row["delta_pct"] = (total - btotal) / btotal if btotal else np.nan
    for k, v in cost.items():
        row[f"cost_{k}"] = v
    d = r.tables["dcs"]
    row["dcs_open"] = int(d["open"].sum())
    row["dcs_open_names"] = " ".join(d.loc[d["open"], "dc"])
    k = dict(zip(r.tables["kpis"]["kpi"], r.tables["kpis"]["value"]))
    row["share_within_window"] = k.get("share_within_service_window")
    row["avg_transit_days"] = k.get("avg_transit_days_to_customer")
    ss = r.tables["supplier_shares"]
    row["max_supplier_share"] = float(ss["share"].max()) if len(ss) else np.nan
    mm = r.tables["mode_mix"]
    row["mode_mix"] = " / ".join(f"{m} {s:.0%}" for m, s in zip(mm["mode"], mm["share_of_tonne_km"]) if s >= 0.005)
    un = r.tables["unmet"]
    row["lost_units"] = float(un["lost_units"].sum()) if len(un) else 0.0
    row["lost_value"] = float(un["value"].sum()) if len(un) else 0.0
    row["co2e_tonnes"] = k.get("co2e_tonnes")
    row["verified"] = bool(r.verification.passed) if r.verification else False
    row["method"] = method + (" (lost demand allowed)" if lost_allowed else "")
    row["seconds"] = seconds
    return row
