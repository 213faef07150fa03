"""Plan search: the DC decisions improved by drop, add and swap moves, each priced by a warm LP re-solve.

Method: the classic local search for facility location — greedy drop from every DC open,
then drop, add and interchange (swap) moves until none improves (Kuehn & Hamburger,
Management Science 9(4), 1963, for add; Teitz & Bart, Operations Research 16(5), 1968, for
interchange; both from memory) — with two changes that make it usable on netopt's whole
model, whatever its echelons, products, modes and rules:

- A plan's cost is the optimum of the model's own linear program with the openings fixed
  (the compiled model, its integer columns held at y, the strong linking rows left out since
  fixed openings make them bounds), re-solved warm by dual simplex after each move; so every
  accepted plan is feasible for the whole model, and its cost is that model's cost.
- Moves are ranked by linear-programming duals before any is priced.  A DC not chosen keeps a
  sliver ε of its capacity in the priced program, so its throughput row has a dual λ_d (the value
  of one more unit through d) and its outbound arcs reduced costs r_a:

        drop d:  Δ ≈ −c_d + Σ_{a ∈ out(d)} x_a · min_{a' ≠ a into head(a, p), origin open} r_{a'}
        add d:   Δ ≈  c_d − max_{z} Σ_{a ∈ out(d) to customers} (λ_d − r_a) z_a,  Σ z_a ≤ U_d, 0 ≤ z_a ≤ q_a
        swap:    Δ ≈ Δ_drop(i) + Δ_add(k)

  Moves are priced exactly in rank order (``PRICED_PER_ROUND`` a round, more when none of them
  improves) and the first that lowers the cost is taken; the neighbourhood is every drop and add
  and the ``SWAPS_PRICED`` best-ranked swaps.  The returned plan is the best one re-solved with
  ε = 0 (the ranking program's cost differs from it by O(ε)).

Start: the tight relaxation (the LP with the strong linking rows added as they are violated,
Kelley's cutting-plane loop over a known family; stopped at tailing-off), rounded up at the
``ROUNDING`` thresholds, the cheapest feasible rounding; or the openings of a plan the caller
hands over.

Rules that involve only the openings (open-count limits, one size per DC, forced-open sizes)
are checked on y directly; the search never accepts a plan breaking them.  It runs only when the
openings are the model's only integer decisions (safety-stock curves add others; then the MIP
search alone decides) and stops at a local optimum or at its time budget.

| symbol | meaning | unit | name in code |
|---|---|---|---|
| y_o | opening option o chosen | 0/1 | columns of block ``open`` |
| c_d | objective coefficient of DC d's chosen option (fixed cost less closing cost) | currency/yr | LP column cost |
| x_a, r_a | flow on arc a; its reduced cost | units/yr; currency/unit | LP solution, ``col_dual`` |
| λ_d | dual of DC d's throughput row | currency/unit | ``row_dual`` of ``dc_throughput`` |
| U_d, q_a | capacity of the option to add; demand at the head of customer arc a | units/yr | ``options.capacity``; ``demand.quantity`` |
| ε | capacity share left to a DC not chosen in the ranking program | – | ``SLIVER`` |
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import highspy
import numpy as np
import pandas as pd

from netopt.engine.highs import HighsModel, SolveInfo
from netopt.engine.openings_lp import OpeningsProgram, reduced_cost_fixing

SLIVER = 1e-6
FEAS_TOL = 1e-7
PRICED_PER_ROUND = 6
ROUNDING = (1e-6, 0.1, 0.3, 0.5)  # thresholds at which the relaxation's openings are rounded up
SWAPS_PRICED = 24  # best-ranked swaps in the neighbourhood (all drops and adds are in it)
SEARCH_PLAN_KEPT = (
    "the plan search's plan kept"  # moves priced exactly before the ranking is refreshed, when none improves
)


@dataclass
class SearchOutcome:
    """Best plan the search found (block values of the compiled model), or why there is none."""

    values: dict[str, np.ndarray] | None
    cost: float
    open_count: int = 0
    evaluations: int = 0
    moves: dict[str, int] = field(default_factory=dict)
    seconds: float = 0.0
    end: str = "time budget reached"  # or "local optimum", or "moves gain less than the MIP gap"
    note: str = ""
    bound: float = -np.inf  # lower bound from the strong relaxation (−inf: not computed)
    fixed_closed: np.ndarray = field(
        default_factory=lambda: np.zeros(0, dtype=np.int64)
    )  # options no better plan opens
    fixed_open: np.ndarray = field(
        default_factory=lambda: np.zeros(0, dtype=np.int64)
    )  # options every better plan keeps
    relaxation: dict = field(default_factory=dict)  # seconds, linking rows added, rounds

    def summary(self) -> str:
        """One line for the solve's message."""
        if self.values is None:
            return f"plan search: {self.note}"
        made = ", ".join(f"{k} {v}" for k, v in self.moves.items() if v)
        end = self.end
        fixed = len(self.fixed_closed) + len(self.fixed_open)
        return (
            f"plan search: {self.cost:,.2f} with {self.open_count} DC(s) open after {self.evaluations} priced plans "
            f"({made or 'no moves'}; {end}) in {self.seconds:.1f} s"
            + (f"; tight relaxation bound {self.bound:,.2f}" if np.isfinite(self.bound) else "")
            + (f"; {fixed} DC option(s) fixed by reduced cost" if fixed else "")
        )


def search_plan(
    hm: HighsModel,
    time_budget: float,
    start_open: np.ndarray | None = None,
    progress: Callable[[dict], None] | None = None,
    min_gain: float = 0.0,
) -> SearchOutcome:
    """Improve the DC decisions of compiled model ``hm`` for at most ``time_budget`` seconds.

    ``min_gain``: stop once an accepted move lowers the cost by less than this share of it (the MIP
    gap: finer polishing is left to the MIP search, whose bound needs the time).

    ``start_open``: 0/1 per opening option to start from (default: every DC that may open, at its
    largest option).  Returns the best plan as block values of ``hm`` (a whole MIP start).
    """
    t0 = time.perf_counter()
    if "open" not in hm.col_of or not (hm.col_of["open"] >= 0).any():
        return SearchOutcome(None, float("inf"), note="no DC decision to search")
    integer = np.flatnonzero(hm.integrality)
    if len(np.setdiff1d(integer, hm.col_of["open"])):
        return SearchOutcome(
            None,
            float("inf"),
            note="skipped (the model has integer decisions besides the DCs; the MIP search alone decides)",
        )
    prog = OpeningsProgram(hm)
    net = hm.builder.net
    opts = net.options.reset_index(drop=True)
    oc = hm.col_of["open"]
    o_lo = np.where(oc >= 0, prog.col_lo[np.maximum(oc, 0)], 0.0)
    o_hi = np.where(oc >= 0, prog.col_hi[np.maximum(oc, 0)], 0.0)
    dc_codes, dc_names = pd.factorize(opts["dc"])
    n_dc = len(dc_names)
    cap = opts["capacity"].to_numpy(float)
    cap_rank = np.where(np.isinf(cap), np.finfo(float).max, cap)
    c_opt = np.where(oc >= 0, prog.cost[np.maximum(oc, 0)], 0.0)

    # Arcs out of each DC, and the arcs into the same head for the drop estimate.
    arcs = net.arcs.reset_index(drop=True)
    fcols = hm.col_of["flow"]
    dc_pos = pd.Series(np.arange(n_dc), index=dc_names)
    origin_dc = arcs["origin"].map(dc_pos).where(arcs["origin_kind"].eq("dc")).fillna(-1).to_numpy(int)
    head, _ = pd.factorize(pd.MultiIndex.from_frame(arcs[["destination", "product"]].astype(str)))
    to_cust = arcs["destination_kind"].eq("customer").to_numpy()
    dem = net.demand.set_index(["customer", "product"])["quantity"]
    q_arc = np.zeros(len(arcs))
    if to_cust.any():
        key = pd.MultiIndex.from_frame(arcs.loc[to_cust, ["destination", "product"]])
        q_arc[to_cust] = dem.reindex(key).fillna(0.0).to_numpy(float)
    thr = hm.rows_of("dc_throughput")
    thr_dc = (
        hm.builder.row_labels["dc_throughput"]["dc"].map(dc_pos).to_numpy(int)
        if "dc_throughput" in hm.builder.row_labels
        else np.zeros(0, int)
    )
    thr_row = -np.ones(n_dc, dtype=np.int64)
    ok = thr >= 0
    thr_row[thr_dc[ok]] = prog.new_row[thr[ok]]
    has_cols = fcols >= 0
    flow_col = np.where(has_cols, fcols, 0)

    def option_of(open_dc: np.ndarray, choice: np.ndarray) -> np.ndarray:
        y = np.zeros(len(opts))
        idx = choice[open_dc]
        y[idx[idx >= 0]] = 1.0
        return np.maximum(np.minimum(y, o_hi), o_lo)

    # Each DC's option when opened: the largest it may take.
    choice = -np.ones(n_dc, dtype=np.int64)
    order = np.lexsort((-cap_rank, dc_codes))
    for k in order[::-1]:
        if o_hi[k] > 0:
            choice[dc_codes[k]] = k
    can_open = choice >= 0
    must_open = np.zeros(n_dc, dtype=bool)
    must_open[dc_codes[o_lo > 0]] = True
    relax_bound, relaxation = -np.inf, {}
    y_relaxed = None
    if start_open is None:
        relax_bound, xr, used, complete, rounds = prog.strong_relaxation(t0 + time_budget / 2)
        relaxation = {
            "seconds": time.perf_counter() - t0,
            "rounds": rounds,
            "complete": complete,
            "linking_rows": len(used),
            "linking_rows_needed": int(used.sum()),
            "unneeded_rows": prog.link_rows[~used],
        }
        if xr is not None:
            y_relaxed = np.where(oc >= 0, xr[np.maximum(oc, 0)], 0.0)
            start_open = y_relaxed > ROUNDING[0]
    if start_open is not None:
        s = np.asarray(start_open, float) > 0.5
        open_dc = np.zeros(n_dc, dtype=bool)
        open_dc[dc_codes[s]] = True
        for k in np.flatnonzero(s):
            choice[dc_codes[k]] = k
        open_dc &= can_open
    else:
        open_dc = can_open.copy()
    open_dc |= must_open

    def bounds(open_mask: np.ndarray, sliver: bool) -> np.ndarray:
        y = option_of(open_mask, choice)
        if sliver:
            closed = can_open & ~open_mask
            y[choice[closed]] = SLIVER
        return y

    def evaluate(open_mask: np.ndarray, sliver: bool = True):
        return prog.price(bounds(open_mask, sliver))

    def fail(note: str) -> SearchOutcome:
        return SearchOutcome(
            None,
            float("inf"),
            evaluations=prog.evaluations,
            seconds=time.perf_counter() - t0,
            note=note,
            bound=relax_bound,
            relaxation=relaxation,
        )

    def violation_of(mask: np.ndarray) -> float:
        return prog.rule_violation(option_of(mask, choice))

    cost, sol = evaluate(open_dc)
    if y_relaxed is not None:
        # Round the relaxation at a few thresholds; start from the cheapest feasible rounding.
        for tau in ROUNDING[1:]:
            m = np.zeros(n_dc, dtype=bool)
            m[dc_codes[y_relaxed > tau]] = True
            m = (m & can_open) | must_open
            c2, s2 = evaluate(m)
            if s2 is not None and (
                sol is None or (violation_of(m) > FEAS_TOL, c2) < (violation_of(open_dc) > FEAS_TOL, cost)
            ):
                open_dc, cost, sol = m, c2, s2
    if sol is None:
        return fail("no feasible start with the DCs open")
    moves = {"drop": 0, "add": 0, "swap": 0}
    deadline = t0 + time_budget
    priced_k = PRICED_PER_ROUND

    def estimates(sol: highspy.HighsSolution):
        x = np.where(has_cols, np.asarray(sol.col_value)[flow_col], 0.0)
        r = np.where(has_cols, np.asarray(sol.col_dual)[flow_col], np.inf)
        rd = np.asarray(sol.row_dual)
        lam = np.where(thr_row >= 0, np.abs(rd[np.maximum(thr_row, 0)]), 0.0)
        # Drop: cheapest alternative into the same head from another open origin.
        usable = (origin_dc < 0) | open_dc[np.maximum(origin_dc, 0)]
        rr = np.where(usable, r, np.inf)
        frame = pd.DataFrame({"head": head, "r": rr, "o": origin_dc})
        frame = frame.sort_values(["head", "r"], kind="stable")
        first = frame.groupby("head", sort=False).head(1).set_index("head")
        second = frame.groupby("head", sort=False).nth(1).set_index("head")
        r1 = first["r"].reindex(range(head.max() + 1 if len(head) else 0)).to_numpy(float)
        o1 = first["o"].reindex(range(len(r1))).fillna(-2).to_numpy(int)
        r2 = second["r"].reindex(range(len(r1))).fillna(np.inf).to_numpy(float)
        alt = np.where(o1[head] == origin_dc, r2[head], r1[head])
        big = np.nanmax(np.where(np.isfinite(r), np.abs(r), 0.0), initial=1.0) * 10 + 1.0
        alt = np.where(np.isfinite(alt), np.maximum(alt, 0.0), big)
        dc_arc = origin_dc >= 0
        reroute = np.bincount(origin_dc[dc_arc], weights=(x * alt)[dc_arc], minlength=n_dc)
        c_dc = np.where(can_open, c_opt[np.maximum(choice, 0)], 0.0)
        drop = -c_dc + reroute
        # Add: fill the option's capacity with the customers it would serve best.
        gain = np.where(dc_arc & to_cust, lam[np.maximum(origin_dc, 0)] - np.where(np.isfinite(r), r, np.inf), 0.0)
        pos = dc_arc & to_cust & (gain > 0)
        g = pd.DataFrame({"dc": origin_dc[pos], "g": gain[pos], "q": q_arc[pos]}).sort_values(
            ["dc", "g"], ascending=[True, False]
        )
        U = np.where(can_open, cap[np.maximum(choice, 0)], 0.0)
        U = np.where(np.isinf(U), net.total_demand, U)
        g["before"] = g.groupby("dc")["q"].cumsum() - g["q"]
        g["z"] = np.clip(U[g["dc"].to_numpy(int)] - g["before"].to_numpy(float), 0.0, g["q"].to_numpy(float))
        saving = np.bincount(g["dc"].to_numpy(int), weights=(g["g"] * g["z"]).to_numpy(float), minlength=n_dc)
        add = c_dc - saving
        return drop, add

    # Reach the rules on the openings (e.g. an open-count limit) from the start, best-ranked first.
    violation = violation_of(open_dc)
    while violation > FEAS_TOL and time.perf_counter() < deadline:
        drop_est, add_est = estimates(sol)
        best = None
        flips = [(d, drop_est[d]) for d in np.flatnonzero(open_dc & ~must_open)]
        flips += [(d, add_est[d]) for d in np.flatnonzero(can_open & ~open_dc)]
        for d, est in flips:  # a drop of an open DC or an add of a closed one
            m = open_dc.copy()
            m[d] = ~m[d]
            v = violation_of(m)
            if v < violation - FEAS_TOL and (best is None or (v, est) < best[:2]):
                best = (v, est, m)
        if best is None:
            return fail("no start meets the open-count rules")
        violation, _, open_dc = best
        cost, sol = evaluate(open_dc)
        if sol is None:
            return fail("no feasible start meets the open-count rules")

    end = "time budget reached"
    while time.perf_counter() < deadline:
        drop_est, add_est = estimates(sol)
        shut = np.flatnonzero(open_dc & ~must_open)
        opn = np.flatnonzero(can_open & ~open_dc)
        cands: list[tuple[float, str, np.ndarray]] = [(drop_est[d], "drop", np.array([d])) for d in shut]
        cands += [(add_est[d], "add", np.array([d])) for d in opn]
        if len(shut) and len(opn):
            pair = drop_est[shut][:, None] + add_est[opn][None, :]
            top = np.argsort(pair, axis=None)[:SWAPS_PRICED]
            for t in top:
                i, k = divmod(int(t), len(opn))
                cands.append((float(pair[i, k]), "swap", np.array([shut[i], opn[k]])))
        cands.sort(key=lambda c: c[0])
        improved = small = False
        tried = 0
        for _est, kind, ds in cands:
            if time.perf_counter() >= deadline or tried >= priced_k:
                break
            m = open_dc.copy()
            m[ds] = ~m[ds]
            if violation_of(m) > FEAS_TOL:
                continue
            tried += 1
            c2, s2 = evaluate(m)
            if s2 is not None and c2 < cost - 1e-7 * max(1.0, abs(cost)):
                small = cost - c2 < min_gain * max(1.0, abs(cost))
                open_dc, cost, sol = m, c2, s2
                moves[kind] += 1
                improved = True
                if progress is not None:
                    gap = (cost - relax_bound) / max(1.0, abs(cost)) if np.isfinite(relax_bound) else np.inf
                    progress({"objective": cost, "bound": relax_bound, "gap": max(gap, 0.0), "method": "plan search"})
                break
        if improved and small:
            end = "moves gain less than the MIP gap"
            break
        if not improved:
            if tried < priced_k or priced_k >= len(cands):
                end = "local optimum"
                break
            priced_k *= 2  # none of the best-ranked moves improves: price more of the neighbourhood
        else:
            priced_k = PRICED_PER_ROUND

    final, fsol = evaluate(open_dc, sliver=False)
    seconds = time.perf_counter() - t0
    if fsol is None:
        return fail("its best plan is infeasible once DCs not chosen carry nothing")
    xv = np.asarray(fsol.col_value, float)
    values: dict[str, np.ndarray] = {}
    for name, cols in hm.col_of.items():
        block = np.zeros(len(cols))
        ok_c = cols >= 0
        block[ok_c] = xv[cols[ok_c]]
        values[name] = block
    values["open"] = np.round(values["open"])
    fix_closed, fix_open = reduced_cost_fixing(prog, oc, y_relaxed, relax_bound, final, o_lo, o_hi)
    return SearchOutcome(
        values,
        final,
        open_count=int(open_dc.sum()),
        evaluations=prog.evaluations,
        moves=moves,
        seconds=seconds,
        end=end,
        bound=relax_bound,
        relaxation=relaxation,
        fixed_closed=fix_closed,
        fixed_open=fix_open,
    )


def best_of(info: SolveInfo, search: SearchOutcome) -> tuple[SolveInfo, bool]:
    """The MIP search's outcome with the plan search folded in, and whether the search's plan is kept.

    The plan returned is never dearer than the search's (its plan is kept when the MIP search ends
    without a cheaper one), and the bound is the larger of the MIP's and the tight relaxation's (both
    are lower bounds of the same model)."""
    bound = max(info.bound if np.isfinite(info.bound) else -np.inf, search.bound)
    keep = search.values is not None and (
        not info.has_solution or info.objective > search.cost + 1e-9 * max(1.0, abs(search.cost))
    )
    objective = search.cost if keep else info.objective
    has = info.has_solution or keep
    message = f"{SEARCH_PLAN_KEPT} (the MIP search found none cheaper); {info.message}" if keep else info.message
    status = info.status
    if keep and status not in ("time_limit", "interrupted", "iteration_limit", "solution_limit"):
        status = "time_limit"
    gap = max(0.0, (objective - bound) / max(1.0, abs(objective))) if has and np.isfinite(bound) else info.gap
    outcome = dataclasses.replace(
        info,
        status=status,
        objective=objective,
        bound=bound,
        gap=gap if status != "optimal" else min(gap, info.gap),
        has_solution=has,
        message=f"{message}; {search.summary()}",
    )
    return outcome, keep
