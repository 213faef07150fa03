"""Every change kind means the same warm and cold: a held warm re-solve and a rebuild from the changed case
agree on every result table, column by column.

The reference for the warm path is the cold rebuild: the scenario's case built and solved from scratch with
the base's DC decisions fixed (the textbook meaning of holding a network), solved to a 1e-9 gap.  Both are
linear programs over the same feasible set, so their optimal tables must be equal (common practice, no
source: an LP optimum with a unique solution does not depend on the route that found it).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from randcase import random_case

from netopt.api import solve
from netopt.engine.held import HeldNetwork, held_decisions
from netopt.studies.changes import CHANGE_KINDS, resolve_held
from netopt.studies.scenarios import Scenario, apply_changes

TOL = 1e-6
SETTINGS = {"inventory": {"safety_stock": False}, "policy": {"allow_unmet_demand": True}}
# Tables whose rows are decisions and flows of the solution (not run facts like timings).
COMPARED = ("flows", "production", "dcs", "supplier_shares", "mode_mix", "service", "unmet", "cost", "kpis")


@pytest.fixture(scope="module")
def solved():
    case = random_case(21, n_dcs=4, n_customers=9, settings=SETTINGS)
    base = solve(case, mip_gap=1e-9)
    assert base.has_solution and base.verification.passed
    return case, base, HeldNetwork(case, base)


def _changes(base) -> dict[str, list[dict]]:
    """One scenario per change kind that has a warm meaning, built on the solved base."""
    f = base.tables["flows"]
    d = base.tables["dcs"]
    open_dcs = d.loc[d["open"], "dc"].tolist()
    last = f[f["destination_kind"] == "customer"].sort_values("quantity", ascending=False).iloc[0]
    supply = f[f["origin_kind"] == "supplier"].sort_values("quantity", ascending=False).iloc[0]
    made = float(base.tables["production"]["quantity"].sum())
    return {
        "close_lane": [{"kind": "close_lane", "origin": last.origin, "destination": last.destination}],
        "cap_lane": [
            {
                "kind": "cap_lane",
                "origin": supply.origin,
                "destination": supply.destination,
                "mode": supply["mode"],
                "capacity": 0.4 * float(supply.quantity),
            }
        ],
        "site_out": [{"kind": "site_out", "site": supply.origin}],
        "force_dc": [{"kind": "force_dc", "dc": open_dcs[0], "to": "closed"}],
        "scale_demand": [{"kind": "scale_demand", "factor": 1.15, "customer": last.destination}],
        "set_capacity": [{"kind": "set_capacity", "site": "F", "product": "P", "capacity": 0.5 * made}],
    }


def _sorted(df: pd.DataFrame) -> pd.DataFrame:
    keys = [c for c in df.columns if df[c].dtype == object or df[c].dtype == bool]
    return df.sort_values(keys).reset_index(drop=True) if keys and len(df) else df.reset_index(drop=True)


def _assert_tables_equal(warm: dict, cold: dict, what: str) -> None:
    for name in COMPARED:
        a, b = _sorted(warm[name]), _sorted(cold[name])
        assert list(a.columns) == list(b.columns), f"{what}: {name} columns differ"
        assert len(a) == len(b), f"{what}: {name} has {len(a)} rows warm, {len(b)} cold"
        for col in a.columns:
            x, y = a[col], b[col]
            if pd.api.types.is_numeric_dtype(x) and not pd.api.types.is_bool_dtype(x):
                xv, yv = x.to_numpy(float), y.to_numpy(float)
                both_nan = np.isnan(xv) & np.isnan(yv)
                same_inf = np.isinf(xv) & (xv == yv)
                scale = np.maximum(1.0, np.abs(np.where(np.isfinite(yv), yv, 0.0)))
                with np.errstate(invalid="ignore"):
                    diff = np.where(both_nan | same_inf, 0.0, np.abs(xv - yv) / scale)
                assert np.nanmax(diff, initial=0.0) <= TOL, f"{what}: {name}.{col} differs: {xv} vs {yv}"
            else:
                assert x.astype(str).tolist() == y.astype(str).tolist(), f"{what}: {name}.{col} differs"


@pytest.mark.parametrize("kind", ["close_lane", "cap_lane", "site_out", "force_dc", "scale_demand", "set_capacity"])
def test_held_warm_resolve_equals_cold_rebuild(solved, kind):
    case, base, held = solved
    assert CHANGE_KINDS[kind].held_bounds is not None
    changes = _changes(base)[kind]
    sc_case = apply_changes(case, Scenario(kind, changes))
    warm = resolve_held(held, sc_case, changes, name=kind)
    assert warm is not None, f"{kind} should be a warm re-solve"
    assert warm.verification.passed, warm.verification.table
    cold = solve(sc_case, hold=held_decisions(base.held_openings(), sc_case), mip_gap=1e-9)
    assert cold.has_solution and cold.verification.passed
    assert warm.objective == pytest.approx(cold.objective, rel=1e-9)
    _assert_tables_equal(warm.tables, cold.tables, kind)


def test_held_resolve_reports_the_scenarios_own_capacity(solved):
    """A plant capacity halved in a scenario is reported halved in the held re-solve's production table
    (it used to report the base's capacity and its utilisation against it)."""
    case, base, held = solved
    changes = _changes(base)["set_capacity"]
    new_cap = changes[0]["capacity"]
    sc_case = apply_changes(case, Scenario("half", changes))
    warm = resolve_held(held, sc_case, changes)
    prod = warm.tables["production"].set_index(["plant", "product"])
    assert prod.loc[("F", "P"), "capacity"] == pytest.approx(new_cap)
    assert prod.loc[("F", "P"), "quantity"] <= new_cap * (1 + 1e-9)
    assert prod.loc[("F", "P"), "utilisation"] == pytest.approx(prod.loc[("F", "P"), "quantity"] / new_cap)


def test_kinds_without_a_warm_meaning_rebuild(solved):
    """A change that is not a bound change (a new DC, a policy, a cost) is never forced into the held model."""
    case, _base, held = solved
    for kind in ("add_dc", "policy", "setting", "scale_cost"):
        assert CHANGE_KINDS[kind].held_bounds is None
    changes = [{"kind": "scale_cost", "target": "mode_rate", "mode": "road", "factor": 1.5}]
    sc_case = apply_changes(case, Scenario("dear_road", changes))
    assert resolve_held(held, sc_case, changes) is None
