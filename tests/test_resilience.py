"""Single-point-of-failure sweep: equal to one-at-a-time scenario runs, same on a pool and a Dask cluster,
resumable after a kill, and a hand-computable recovery cost."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pandas as pd
import pytest
from randcase import lane_loss_case, random_case

from netopt.api import load_case, solve
from netopt.data.case import CaseError
from netopt.data.frames import make_case
from netopt.present.stress import stress, stress_command, summary_lines
from netopt.studies.changes import element_changes
from netopt.studies.resilience import run_sweep, sweep_elements
from netopt.studies.scenarios import Scenario, priced_label, run_scenarios
from netopt.studies.sweep_exec import JOURNAL, read_journal

ROOT = Path(__file__).resolve().parents[1]


DEMO = Path(__file__).resolve().parents[1] / "cases" / "brackenholt"


@pytest.fixture(scope="module")
def solved():
    case = random_case(11, n_dcs=5, n_customers=10)
    base = solve(case, mip_gap=1e-9)
    assert base.has_solution and base.verification.passed
    return case, base


@pytest.fixture(scope="module")
def inline_table(solved):
    case, base = solved
    table, info = run_sweep(case, base, workers=0, progress=False)
    assert info["run"] == info["tasks"] == len(table) and not info["not_optimal"]
    return table


def _frame(t: pd.DataFrame) -> pd.DataFrame:
    return t.sort_values("id").reset_index(drop=True)


# --------------------------------------------------------------------------- equals the scenario machinery


def answered(comp, name: str):
    """The comparison row of scenario ``name`` with a plan: the row itself, or (when it is infeasible
    because the settings forbid lost demand) the priced alternative beside it.  The stress sweep
    measures lost demand by design, so it compares with the priced alternative."""
    row = comp.loc[name]
    return row if row["status"] != "infeasible" else comp.loc[priced_label(name)]


def test_sweep_equals_one_at_a_time_scenario_runs(solved, inline_table):
    """Each row equals the scenario machinery's hold-the-network run of the same change (site_out /
    close_lane): total cost, lost units and lost value."""
    case, base = solved
    assert float(base.tables["unmet"]["lost_units"].sum()) == 0.0
    el = sweep_elements(case, base)
    assert set(el["type"]) == {"supplier", "plant", "dc", "lane"}
    scenarios = [
        Scenario(e["id"].replace(":", "_").replace(">", "_"), element_changes(e), resolve="hold")
        for e in el.to_dict("records")
    ]
    run = run_scenarios(case, base=base, scenarios=scenarios)
    comp = run.comparison.set_index("scenario")
    t = inline_table.set_index("id")
    for e, s in zip(el.to_dict("records"), scenarios):
        row, ref = t.loc[e["id"]], answered(comp, s.name)
        assert ref["method"].startswith("warm LP")
        assert row["total_cost"] == pytest.approx(ref["total_cost"], rel=1e-7), e["id"]
        assert row["lost_units"] == pytest.approx(ref["lost_units"], abs=1e-4), e["id"]
        assert row["lost_value"] == pytest.approx(ref["lost_value"], abs=1e-2), e["id"]
        assert row["delta_objective"] == pytest.approx(ref["delta_cost"], rel=1e-6, abs=1e-3), e["id"]


def test_demo_site_outages_cost_the_same_in_stress_and_in_a_held_scenario():
    """The demo (safety stock on, priced late delivery): each plant and open DC taken out through
    `netopt stress` and through a hold-the-network scenario gives the same total cost, recovery cost
    (Δ cost less Δ lost-demand penalty) and lost units; a DC out stays paid for in both."""
    case = load_case(DEMO)
    assert case.settings["inventory"]["safety_stock"]
    base = solve(case)
    table, _ = run_sweep(case, base, workers=0, progress=False, elements=["dc", "plant"], rules="hard")
    el = sweep_elements(case, base, ["dc", "plant"])
    scenarios = [Scenario(e["id"].replace(":", "_"), element_changes(e), resolve="hold") for e in el.to_dict("records")]
    comp = run_scenarios(case, base=base, scenarios=scenarios).comparison.set_index("scenario")
    t = table.set_index("id")
    for e, s in zip(el.to_dict("records"), scenarios):
        ref, row = answered(comp, s.name), t.loc[e["id"]]
        assert row["total_cost"] == pytest.approx(ref["total_cost"], rel=1e-7), e["id"]
        recovery = ref["delta_cost"] - ref["delta_unmet_penalty"]
        assert row["recovery_cost"] == pytest.approx(recovery, rel=1e-7, abs=1e-3), e["id"]
        assert row["lost_units"] == pytest.approx(ref["lost_units"], abs=1e-4), e["id"]


def test_redesign_equals_scenario_redesign(solved):
    case, base = solved
    el = sweep_elements(case, base, ["dc", "plant"])
    table, _ = run_sweep(case, base, workers=0, progress=False, redesign=True, elements=["dc", "plant"])
    scenarios = [Scenario(e["id"].replace(":", "_"), element_changes(e)) for e in el.to_dict("records")]
    comp = run_scenarios(case, base=base, scenarios=scenarios).comparison.set_index("scenario")
    t = table.set_index("id")
    for e, s in zip(el.to_dict("records"), scenarios):
        assert t.loc[e["id"], "redesign_total_cost"] == pytest.approx(answered(comp, s.name)["total_cost"], rel=1e-7)
        # Redesign can only do as well as holding the network or better.
        assert t.loc[e["id"], "redesign_total_cost"] <= t.loc[e["id"], "total_cost"] * (1 + 1e-7)


def test_recovery_cost_of_losing_a_lane_closed_form():
    """One plant, one customer, demand q = 1,000 units/yr; direct road lane at 2.00/unit, air at 7.00/unit,
    transit 0 days.  Losing the road lane moves everything to air: recovery cost = q × (7 − 2) = 5,000/yr
    and air takes over all 1,000 units.  Losing the plant loses all q units at the penalty 2 × unit value
    = 20/unit (policy default): lost value 20,000; the 2,000/yr of road freight is no longer spent
    (recovery cost −2,000), so the impact is 18,000."""
    case = lane_loss_case()
    base = solve(case, mip_gap=1e-9)
    t, _ = run_sweep(case, base, workers=0, progress=False)
    t = t.set_index("id")
    road = t.loc["lane:F>C>road"]
    assert road["recovery_cost"] == pytest.approx(5000.0) and road["lost_units"] == pytest.approx(0.0, abs=1e-9)
    assert road["took_over"] == "F → C (air) +1,000" and road["took_over_units"] == pytest.approx(1000.0)
    assert road["customers_affected"] == 0  # same origin, another mode: not rerouted to another site
    plant = t.loc["plant:F"]
    assert plant["lost_units"] == pytest.approx(1000.0) and plant["lost_value"] == pytest.approx(20_000.0)
    assert plant["recovery_cost"] == pytest.approx(-2000.0) and plant["impact"] == pytest.approx(18_000.0)
    assert plant["customers_short"] == 1
    assert list(t.sort_values("rank").index[:1]) == ["plant:F"]


def test_priced_rules_bend_a_service_window_instead_of_losing_demand():
    """A customer promised 100 % of its demand within 1 day; its only fast lane is lost.  With hard rules
    no plan keeps the promise (it counts on-time units against demand, so losing the demand does not
    keep it either): the re-solve is infeasible.  With priced rules the slow lane serves it, the window
    rule is reported as bent, and no demand is lost (common practice, no source: a disruption delays
    deliveries rather than cancelling them).  Holding rate 0: no pipeline cost."""
    case = make_case(
        {
            "products": [{"product": "P", "unit_weight_kg": 1.0, "unit_value": 10.0, "holding_rate": 0.0}],
            "suppliers": [],
            "plants": [{"plant": "F", "product": "P", "lat": 48.0, "lon": 2.0}],
            "dcs": [{"dc": "D", "lat": 45.0, "lon": 5.0, "fixed_cost": 1e9}],
            "customers": [{"customer": "C", "lat": 48.5, "lon": 2.5}],
            "demand": [{"customer": "C", "product": "P", "quantity": 1000.0}],
            "modes": [
                {"mode": "road", "cost_per_tonne_km": 0.1, "speed_km_per_day": 500, "generate_lanes": False},
                {"mode": "barge", "cost_per_tonne_km": 0.1, "speed_km_per_day": 50, "generate_lanes": False},
            ],
            "lanes": [
                {"origin": "F", "destination": "C", "mode": "road", "cost_per_unit": 3.0, "transit_days": 0.5},
                {"origin": "F", "destination": "C", "mode": "barge", "cost_per_unit": 1.0, "transit_days": 4.0},
            ],
        },
        {
            "lanes": {"legs": ["plant-customer", "plant-dc", "dc-customer"], "prune_dominated": False},
            "inventory": {"safety_stock": False},
            "policy": {"allow_unmet_demand": True, "service_max_days": 1.0, "service_target_share": 1.0},
        },
    )
    base = solve(case, mip_gap=1e-9)
    assert base.tables["flows"]["mode"].tolist() == ["road"]  # the promise forces the dearer road lane
    hard = run_sweep(case, base, workers=0, progress=False, rules="hard", elements=["lane"])[0].iloc[0]
    priced = run_sweep(case, base, workers=0, progress=False, rules="priced", elements=["lane"])[0].iloc[0]
    assert hard["status"] == "infeasible" and pd.isna(hard["lost_units"])
    assert priced["lost_units"] == pytest.approx(0.0, abs=1e-9)
    assert priced["recovery_cost"] == pytest.approx(1000.0 * (1.0 - 3.0))  # barge is cheaper, only late
    assert priced["rules_bent"] == "service_window ×1 (C: 1,000 units)"
    # The bent promise is priced at the row's shadow price in the base (plus a 1e-4 tie-breaker).  The
    # base is a degenerate vertex (the promise and the demand row both bind at road = 1,000), so the
    # shadow price is any optimal dual of the row: at least what relaxing the promise by a unit saves
    # (3 − 1 = 2, ship it by barge) and at most what a unit delivered on time costs (3).
    per_unit = priced["rule_relief_cost"] / 1000.0
    assert 2.0 + 1e-4 - 1e-9 <= per_unit <= 3.0 + 1e-4 + 1e-9
    assert priced["impact"] == pytest.approx(
        priced["recovery_cost"] + priced["lost_value"] + priced["rule_relief_cost"], rel=1e-12
    )
    assert priced["took_over"] == "F → C (barge) +1,000"


def test_unknown_filter_named():
    case = random_case(11, n_dcs=5, n_customers=10)
    base = solve(case, mip_gap=1e-9)
    with pytest.raises(CaseError) as e:
        sweep_elements(case, base, ["warehouses", "S0"])
    assert "'warehouses'" in e.value.report() and "'S0'" not in e.value.report()
    assert set(sweep_elements(case, base, ["dcs"])["type"]) == {"dc"}


# --------------------------------------------------------------------------- executors give the same table


def test_local_pool_gives_the_same_table(solved, inline_table):
    case, base = solved
    table, info = run_sweep(case, base, workers=2, progress=False)
    pd.testing.assert_frame_equal(_frame(table), _frame(inline_table), check_exact=False, rtol=1e-9, atol=1e-6)
    assert info["executor"] == "local pool (2 workers)"
    assert info["ran_on"] and all(r.startswith("pid ") and r != f"pid {os.getpid()}" for r in info["ran_on"])


@pytest.mark.parametrize("processes", [False, True], ids=["threads", "processes"])
def test_dask_local_cluster_gives_the_same_table(solved, inline_table, processes):
    distributed = pytest.importorskip("distributed")
    case, base = solved
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=processes, dashboard_address=None) as cl:
        table, info = run_sweep(case, base, scheduler=cl.scheduler_address, progress=False)
        workers = set(cl.scheduler.workers)
    pd.testing.assert_frame_equal(_frame(table), _frame(inline_table), check_exact=False, rtol=1e-9, atol=1e-6)
    # The tasks really ran on the cluster's workers.
    assert info["executor"].startswith("dask")
    ran = {r.removeprefix("dask ") for r in info["ran_on"]}
    assert ran and ran <= workers


# --------------------------------------------------------------------------- journal and resume

_CHILD = textwrap.dedent("""
    import sys, time
    sys.path.insert(0, {tests!r})
    from randcase import random_case
    from netopt.api import load_case, solve
    from netopt.studies.resilience import run_sweep

    def main():
        case = random_case(11, n_dcs=5, n_customers=10)
        base = solve(case, mip_gap=1e-9)
        run_sweep(case, base, workers=1, progress=False, journal={journal!r},
                  on_row=lambda row: time.sleep(0.4))

    if __name__ == "__main__":
        main()
""")


def test_killed_sweep_resumes_without_redoing_finished_elements(solved, inline_table, tmp_path):
    case, base = solved
    journal = tmp_path / JOURNAL
    script = tmp_path / "child.py"
    script.write_text(_CHILD.format(tests=str(ROOT / "tests"), journal=str(journal)))
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.Popen(
        [sys.executable, str(script)],
        cwd=tmp_path,
        env=env,
        start_new_session=True,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    k = 3
    deadline = time.time() + 180
    try:
        while time.time() < deadline:
            if journal.exists() and len(journal.read_text().splitlines()) >= 1 + k:
                break
            if proc.poll() is not None:
                pytest.fail(f"the sweep ended before it was killed: {proc.stderr.read().decode()[-2000:]}")
            time.sleep(0.05)
        else:
            pytest.fail("the sweep did not write k rows in time")
    finally:
        os.killpg(proc.pid, signal.SIGKILL)  # the sweep and its pool worker, mid-run
        proc.wait()
        if proc.stderr is not None:
            proc.stderr.close()
    with open(journal, "a") as fh:
        fh.write('{"id": "lane:torn')  # a row torn by the kill
    from netopt.studies.sweep_worker import make_spec

    done, ok = read_journal(journal, make_spec(case, base).key)
    assert ok and k <= len(done) < len(inline_table)
    table, info = run_sweep(case, base, workers=0, progress=False, journal=journal)
    assert info["reused"] == len(done)
    assert info["run"] == len(inline_table) - len(done)  # only the remaining tasks
    pd.testing.assert_frame_equal(_frame(table), _frame(inline_table), check_exact=False, rtol=1e-9, atol=1e-6)
    # Every element is in the journal exactly once; the torn line was cut.
    lines = journal.read_text().splitlines()
    ids = [json.loads(x)["id"] for x in lines[1:]]
    assert sorted(ids) == sorted(inline_table["id"]) and len(ids) == len(set(ids))
    # A second restart has nothing left to do.
    _, info2 = run_sweep(case, base, workers=0, progress=False, journal=journal)
    assert info2["run"] == 0 and info2["reused"] == len(inline_table)


def test_journal_of_another_case_is_replaced(solved, tmp_path):
    case, base = solved
    journal = tmp_path / JOURNAL
    journal.write_text(
        json.dumps({"journal": "netopt stress sweep journal v1", "key": "other"})
        + "\n"
        + json.dumps({"id": "dc:D0", "status": "optimal", "impact": 1e99})
        + "\n"
    )
    table, info = run_sweep(case, base, workers=0, progress=False, journal=journal, elements=["dc"])
    assert info["stale_journal_replaced"] and info["reused"] == 0 and table["impact"].max() < 1e99


# --------------------------------------------------------------------------- stress end to end


def test_stress_writes_results_and_summary(solved, tmp_path):
    case, base = solved
    out = tmp_path / "stress"
    tables = stress(case, out, workers=0, progress=False, base=base)
    for f in ("spof_ranking.csv", "exposure.csv", "stress.xlsx", "summary.json", JOURNAL, "base/flows.csv"):
        assert (out / f).exists(), f
    spof = pd.read_csv(out / "spof_ranking.csv")
    assert len(spof) == len(tables["spof"]) and list(spof["rank"]) == list(range(1, len(spof) + 1))
    assert (spof["impact"].diff().dropna() <= 1e-9).all()
    assert not list(tmp_path.glob(".stress.tmp-*"))  # written aside, then renamed into place
    text = "\n".join(summary_lines(tables))
    assert "single points of failure" in text and "time-to-survive" in text
    # Run again: every re-solve is taken from the journal.
    tables2 = stress(case, out, workers=0, progress=False, base=base)
    facts = dict(zip(tables2["info"]["key"], tables2["info"]["value"]))
    assert facts["sweep_resolved_now"] == "0"
    pd.testing.assert_frame_equal(tables2["spof"], tables["spof"])


def test_stress_command_exit_codes(tiny_case_dir, tmp_path, capsys):
    """0 with results written; 3 when the base is infeasible (plant capacity 100 < demand 1,500 widgets,
    lost demand not allowed), with nothing written."""
    out = tmp_path / "ok"
    assert stress_command(str(tiny_case_dir), str(out), workers=0) == 0
    assert (out / "spof_ranking.csv").exists() and "single points of failure" in capsys.readouterr().out
    plants = tiny_case_dir / "plants.csv"
    plants.write_text(plants.read_text().replace(",20000,", ",100,"))
    bad = tmp_path / "bad"
    assert stress_command(str(tiny_case_dir), str(bad), workers=0, quiet=True) == 3
    assert not (bad / "spof_ranking.csv").exists()


@pytest.mark.parametrize("rules", ["hard", "priced"])
def test_the_same_outage_costs_the_same_in_run_and_stress(rules):
    """A lane lost means the same change in both studies (close_lane on the held network): the scenario's
    hold delta equals the sweep's recovery cost + lost value + rule relief (the sweep splits the same
    number; a lane has no fixed cost of its own), and the lost units agree."""
    case = random_case(11, n_dcs=5, n_customers=10, settings={"policy": {"allow_unmet_demand": True}})
    base = solve(case, mip_gap=1e-9)
    el = sweep_elements(case, base, ["lane"]).sort_values("base_units", ascending=False).iloc[0]
    change = element_changes(el.to_dict())[0]
    run = run_scenarios(case, base=base, scenarios=[Scenario("out", [change], resolve="hold")])
    row = run.comparison.set_index("scenario").loc["out"]
    swept = run_sweep(case, base, workers=0, progress=False, rules=rules, elements=[el["id"]])[0].iloc[0]
    assert swept["rule_relief_cost"] == pytest.approx(0.0, abs=1e-6)  # no policy rule binds in this case
    total = swept["recovery_cost"] + swept["lost_value"] + swept["rule_relief_cost"]
    assert total == pytest.approx(row["delta_cost"], rel=1e-9, abs=1e-6)
    assert swept["lost_units"] == pytest.approx(row["lost_units"], abs=1e-6)
