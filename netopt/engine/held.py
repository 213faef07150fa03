"""A held network: the base's DC decisions fixed, kept in HiGHS for warm linear-program re-solves.

Holding the network (short-term recovery) keeps the base's openings and re-routes only.
With the openings fixed the model is a linear program; it is built once, solved once
cold, and every later re-solve changes bounds (a :class:`BoundPlan`) and starts from the
previous basis.  The model always carries lost-demand columns (at the penalty); a re-solve
bounds them to zero unless the scenario's settings allow lost demand or the caller asks for
the priced alternative (``lost_demand=True``), so a held disruption that cannot serve all demand
is reported infeasible, never served silently by losing units.

Safety stock is priced on one line per curve at the base throughput (not the curve's
binaries, see ``netopt.model.safety_stock.held_lines``), so the held model stays a
linear program: exact at the base, above the concave curve elsewhere.

What a scenario change *means* on this model (which bounds it sets) is declared with
the change kind (``netopt.studies.changes``); this module only provides the index look-ups
(:meth:`HeldNetwork.arcs_from`, :meth:`HeldNetwork.arcs_on`, …) and the re-solve.
"""

from __future__ import annotations

import copy
import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.periods import has_periods, period_case
from netopt.engine.extract import extract
from netopt.engine.highs import SolveInfo, compile_model
from netopt.engine.highs_check import ModelRejected, require_ok
from netopt.engine.result import Result, fixed_options
from netopt.model import build_model
from netopt.model.safety_stock import add_held_lines, held_lines, held_lines_cost, prepare_solve
from netopt.network.arcs import Network, build_network
from netopt.network.lanes import case_lanes

NO_INDEX = np.zeros(0, dtype=np.int64)


@dataclass
class BoundPlan:
    """Bound changes on a held model: HiGHS column → (lower, upper), row → (lower, upper)."""

    cols: dict[int, tuple[float, float]] = field(default_factory=dict)
    rows: dict[int, tuple[float, float]] = field(default_factory=dict)

    def set_cols(self, cols: np.ndarray, lower: float | np.ndarray, upper: float | np.ndarray) -> None:
        """Bounds for HiGHS columns ``cols`` (−1 entries, variables not in the model, are skipped)."""
        cols = np.atleast_1d(np.asarray(cols, dtype=np.int64))
        lo = np.broadcast_to(np.asarray(lower, dtype=float), cols.shape)
        hi = np.broadcast_to(np.asarray(upper, dtype=float), cols.shape)
        for c, a, b in zip(cols.tolist(), lo.tolist(), hi.tolist()):
            if c >= 0:
                self.cols[c] = (a, b)

    def merge(self, other: BoundPlan) -> None:
        self.cols.update(other.cols)
        self.rows.update(other.rows)


def settings_with_lost_demand(case: Case) -> Case:
    """``case`` with lost demand allowed (at the penalty): how a held network answers."""
    settings = copy.deepcopy(case.settings)
    settings["policy"]["allow_unmet_demand"] = True
    return Case(case.name, case.tables, settings, case.path, case.scenarios, case.warnings, case.generated_lanes)


def _model_case(case: Case) -> Case:
    """The case as the held model is built: lost demand allowed, safety stock off (held lines instead)."""
    c = settings_with_lost_demand(case)
    c.settings["inventory"]["safety_stock"] = False
    return c


def safety_stock_lines_of(
    case: Case, base: Result | None, lanes: pd.DataFrame | None = None, net: Network | None = None
) -> pd.DataFrame:
    """The held safety-stock lines of ``base`` (one per DC and product, at its base throughput), or an
    empty table when the case holds no safety stock: how every held network prices safety stock.
    ``net``: the held network's own (built here from ``lanes`` when not given)."""
    if not bool(case.settings["inventory"]["safety_stock"]):
        return pd.DataFrame()
    if base is None or not base.has_solution:
        raise ValueError("held safety-stock lines need the base result (its throughput per DC)")
    if net is None:
        net = build_network(_model_case(case), base.lanes if lanes is None else lanes, prune=False)
    return held_lines(net, base.tables["flows"])


def held_decisions(held: dict, sc_case: Case) -> dict:
    """Held DC decisions as a hold of scenario case ``sc_case`` (:func:`held_decisions_of_year`); in a case
    with periods ``held`` is period → decisions (the phasing), each period's read against that period's case
    (a DC forced closed before its earliest period stays closed there)."""
    if not has_periods(sc_case):
        return held_decisions_of_year(held, sc_case)
    names = [str(p) for p in sc_case.tables["periods"]["period"]]
    return {p: held_decisions_of_year(held.get(p, {}), period_case(sc_case, p, k)) for k, p in enumerate(names)}


def held_decisions_of_year(held: dict[str, str | bool], sc_case: Case) -> dict[str, str | bool]:
    """Held DC decisions (dc → size/True/False) as a hold of scenario case ``sc_case``: DCs the scenario
    forces closed are closed, DCs it forces open are opened (True: at their first listed size when they
    have sizes, as :func:`~netopt.engine.result.fixed_options` reads it; a DC already open keeps its size),
    DCs the held decisions do not know (added by the scenario) otherwise stay closed; a DC the scenario
    takes out keeps its decision (still paid for; nothing moves through it)."""
    hold = dict(held)
    forced = sc_case.tables["dcs"].set_index("dc")["force"].astype(str)
    for d in sc_case.tables["dcs"]["dc"]:
        f = forced.get(d, "")
        if f == "closed":
            hold[d] = False
        elif f == "open" and not hold.get(d, False):
            hold[d] = True
        elif d not in hold:
            hold[d] = False
    return hold


class HeldNetwork:
    """The base network with its DC decisions held, in one HiGHS instance for warm re-solves."""

    BIG_M_FACTOR = 20.0

    def __init__(
        self,
        case: Case,
        base: Result | None = None,
        *,
        held: dict | None = None,
        lanes: pd.DataFrame | None = None,
        safety_stock_lines: pd.DataFrame | None = None,
    ):
        """Hold ``base``'s DC decisions (a Result), or ``held`` (dc → size/True/False).

        ``safety_stock_lines``: the held safety-stock lines (``held_lines``); computed from
        ``base``'s flows when the case has safety stock on and none are given.
        """
        self.case = case
        if base is not None:
            held = base.held_openings()
            lanes = base.lanes if lanes is None else lanes
        if held is None:
            raise ValueError("HeldNetwork needs a base result or the held DC decisions")
        self.lanes = case_lanes(case) if lanes is None else lanes
        # Every admissible arc, none pruned: a mode dominated in the base may carry flow once the
        # dominating lane is closed.
        self.net: Network = build_network(_model_case(case), self.lanes, prune=False)
        if safety_stock_lines is None:
            safety_stock_lines = safety_stock_lines_of(case, base, net=self.net)
        self.ss_lines = safety_stock_lines
        self.held = dict(held)
        self.fixed = fixed_options(self.net, self.held)
        sset = case.settings["solver"]
        t0 = time.perf_counter()
        # Openings are fixed, so the strong linking rows are redundant ("plain"), and a generous
        # big M for unlimited DC capacity lets demand be scaled by bound changes alone.
        self.builder = build_model(
            self.net,
            formulation="plain",
            fixed_open=self.fixed,
            big_m_factor=self.BIG_M_FACTOR,
            extra=lambda b: add_held_lines(b, self.ss_lines),
        )
        self.hm = compile_model(self.builder)
        self.is_lp = set(self.builder.vars) <= {"flow", "make", "unmet", "late", "open"}
        if self.is_lp:
            self.hm.relax_integrality()
        else:
            prepare_solve(self.hm, time_limit=float(sset["time_limit_s"]), mip_gap=float(sset["mip_gap"]))
        self.build_seconds = time.perf_counter() - t0
        # Solved once, cold, so every later re-solve starts from this basis.
        self.base_info: SolveInfo = self.hm.solve(
            time_limit=float(sset["time_limit_s"]), mip_gap=float(sset["mip_gap"])
        )
        lp = self.hm.highs.getLp()
        self.col_lo = np.array(lp.col_lower_, dtype=float)
        self.col_hi = np.array(lp.col_upper_, dtype=float)
        self.row_lo = np.array(lp.row_lower_, dtype=float)
        self.row_hi = np.array(lp.row_upper_, dtype=float)
        self._index: dict[str, dict] = {}

    # ------------------------------------------------------------------ index look-ups
    def rows_of(self, name: str) -> np.ndarray:
        """HiGHS row of each label row of constraint family ``name`` (−1 when skipped)."""
        return self.hm.rows_of(name)

    def cols(self, block: str, idx: np.ndarray) -> np.ndarray:
        """HiGHS columns of variables ``block[idx]`` (−1: not in the model)."""
        col = self.hm.col_of.get(block)
        if col is None:
            return NO_INDEX
        return col[np.asarray(idx, dtype=np.int64)]

    def _groups(self, name: str, frame: pd.DataFrame, keys: list[str]) -> dict:
        if name not in self._index:
            if len(frame):
                by = [frame[k].astype(str).to_numpy() for k in keys]
                g = pd.Series(np.arange(len(frame))).groupby(by[0] if len(by) == 1 else by).groups
                self._index[name] = {k: np.asarray(v, dtype=np.int64) for k, v in g.items()}
            else:
                self._index[name] = {}
        return self._index[name]

    def arcs_from(self, site: str) -> np.ndarray:
        """Arcs leaving ``site``."""
        return self._groups("from", self.net.arcs, ["origin"]).get(site, NO_INDEX)

    def arcs_on(self, origin: str, destination: str, mode: str = "", product: str = "") -> np.ndarray:
        """Arcs of the lane ``origin → destination`` (blank mode: every mode; blank product: every product)."""
        if mode:
            idx = self._groups("lane", self.net.arcs, ["origin", "destination", "mode"]).get(
                (origin, destination, mode), NO_INDEX
            )
        else:
            idx = self._groups("leg", self.net.arcs, ["origin", "destination"]).get((origin, destination), NO_INDEX)
        if product and len(idx):
            idx = idx[self.net.arcs["product"].to_numpy()[idx] == product]
        return idx

    def make_rows(self, plant: str, product: str = "") -> np.ndarray:
        """Production rows of ``plant`` (one product, or all)."""
        idx = self._groups("make", self.net.make, ["plant"]).get(plant, NO_INDEX)
        if product and len(idx):
            idx = idx[self.net.make["product"].to_numpy()[idx] == product]
        return idx

    def option_rows(self, dc: str) -> np.ndarray:
        """Opening options (sizes) of ``dc``."""
        return self._groups("options", self.net.options, ["dc"]).get(dc, NO_INDEX)

    # ------------------------------------------------------------------ re-solve
    def resolve(self, plan: BoundPlan, basis=None) -> tuple[SolveInfo, dict[str, np.ndarray] | None, np.ndarray | None]:
        """Apply ``plan``, re-solve warm (from ``basis`` when given), restore the bounds.

        Returns the solver outcome, the block values and the raw column values (None without a solution).
        """
        h = self.hm.highs
        ci = np.array(sorted(plan.cols), dtype=np.int32)
        ri = np.array(sorted(plan.rows), dtype=np.int32)
        try:
            if len(ci):
                require_ok(
                    h.changeColsBounds(
                        len(ci), ci, np.array([plan.cols[c][0] for c in ci]), np.array([plan.cols[c][1] for c in ci])
                    ),
                    "change the scenario's variable bounds",
                )
            if len(ri):
                lo, hi = np.array([plan.rows[r][0] for r in ri]), np.array([plan.rows[r][1] for r in ri])
                require_ok(
                    h.changeRowsBounds(len(ri), ri, lo, hi),  # type: ignore[attr-defined]  # in highspy, not in its stubs
                    "change the scenario's rule bounds (a bound may be ≥ 1e20 or not a number)",
                )
            if basis is not None:
                h.setBasis(basis)
            info = self.hm.solve()
            values = self.hm.values() if info.has_solution else None
            x = np.asarray(h.getSolution().col_value, dtype=float) if info.has_solution else None
        except ModelRejected as e:  # HiGHS refused the scenario's bounds: a clear failure, no plan
            info = SolveInfo("error", float("nan"), float("nan"), float("inf"), 0.0, message=str(e))
            values = x = None
        finally:
            if len(ci):
                h.changeColsBounds(len(ci), ci, self.col_lo[ci], self.col_hi[ci])
            if len(ri):
                h.changeRowsBounds(len(ri), ri, self.row_lo[ri], self.row_hi[ri])  # type: ignore[attr-defined]
        return info, values, x

    def result(self, sc_case: Case, plan: BoundPlan, name: str = "", lost_demand: bool | None = None) -> Result:
        """Warm re-solve of scenario case ``sc_case`` under ``plan``: a full, verified :class:`Result`.

        The tables come from the scenario's own network (its capacities, demand and costs),
        the held model's values mapped onto it by key, and are verified against ``sc_case``.
        ``lost_demand``: allow lost demand at the penalty (None: as the scenario's settings say);
        when it is not allowed and the held network cannot serve all demand, the result is
        infeasible (no tables).
        """
        allowed = bool(sc_case.settings["policy"]["allow_unmet_demand"]) if lost_demand is None else lost_demand
        if not allowed:
            hard = BoundPlan(dict(plan.cols), dict(plan.rows))
            hard.set_cols(self.hm.col_of.get("unmet", NO_INDEX), 0.0, 0.0)
            plan = hard
        t0 = time.perf_counter()
        info, values, _ = self.resolve(plan)
        resolve_s = time.perf_counter() - t0
        res = Result.of(
            name,
            info,
            timings={"highs": info.solver_seconds, "resolve": resolve_s},
            message=info.message + " (warm re-solve)",
        )
        if values is None:
            return res
        check_case = settings_with_lost_demand(sc_case)
        lanes = case_lanes(sc_case)
        t1 = time.perf_counter()
        sc_net = build_network(_model_case(sc_case), lanes, prune=False)
        res.timings["network"] = time.perf_counter() - t1
        out = extract(
            check_case,
            lanes,
            sc_net,
            self.builder,
            values,
            info.objective,
            solved_on=self.net,
            held_open={d: bool(v) for d, v in held_decisions(self.held, sc_case).items()},
            extra_cost=lambda tables: {"safety_stock": held_lines_cost(self.ss_lines, tables)},
        )
        res.tables, res.verification = out.tables, out.verification
        res.timings.update(out.seconds)
        lost = float(res.tables["unmet"]["lost_units"].sum()) if len(res.tables["unmet"]) else 0.0
        if allowed and not bool(sc_case.settings["policy"]["allow_unmet_demand"]):
            res.lost_demand_allowed = True
            res.message += f"; lost demand allowed at the penalty: {lost:,.0f} units/yr lost"
        res.lanes = lanes
        res.network = sc_net
        return res
