"""The formulation page states every row family, variable block and cost component the model builds.

``docs/formulation.md`` is generated from the docstrings of ``netopt/model/``; these tests fail when
the page is stale, when the model creates a row family, variable block or cost component the
docstrings do not state (read from built models: ``Builder.row_labels`` and the Pyomo
constraints), when the docstrings state a family no model creates, and when the † mark
(never relaxed in the elastic diagnosis) disagrees with the slacks the elastic build adds.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pyomo.environ as pyo
import pytest

from netopt.data.frames import make_case
from netopt.data.periods import horizon, period_case
from netopt.model import COST_COMPONENTS, build_model
from netopt.model.formulation import (
    DOC_PATH,
    documented_costs,
    documented_rows,
    documented_variables,
    fixed_rows,
    formulation_markdown,
    write_formulation,
)
from netopt.model.phasing import stack
from netopt.model.scenario_copies import stack_scenarios
from netopt.network.arcs import build_network

MODEL_DIR = Path(__file__).resolve().parents[1] / "netopt" / "model"


def every_rule_case():
    """Invented data with every policy switched on: 3 suppliers of a material (two regions) → 1 plant →
    3 DCs (one existing, one forced open with two sizes and a cap on its share of the customers' region, one
    more; every DC with a capacity) → 4 customers; road everywhere, rail on supplier and plant legs; one lane
    with a capacity; a supplier with a least share and a duty on its material; safety stock on."""
    customers = [
        ("C0", 48.1, 11.6, 1200.0),
        ("C1", 50.1, 8.7, 800.0),
        ("C2", 52.5, 13.4, 1500.0),
        ("C3", 48.8, 2.3, 600.0),
    ]
    tables = {
        "products": [
            {"product": "P", "unit_weight_kg": 8.0, "unit_value": 60.0, "demand_cv": 0.3},
            {"product": "M", "kind": "material", "unit_weight_kg": 2.0, "unit_value": 2.0},
        ],
        "bill_of_materials": [{"product": "P", "material": "M", "quantity_per_unit": 2.0}],
        "suppliers": [
            {
                "supplier": "S0",
                "product": "M",
                "lat": 51.4,
                "lon": 6.8,
                "region": "R0",
                "capacity": 1e6,
                "unit_cost": 1.5,
                "lead_time_sd_days": 2.0,
            },
            {
                "supplier": "S1",
                "product": "M",
                "lat": 45.5,
                "lon": 9.2,
                "region": "R1",
                "unit_cost": 1.8,
                "min_share": 0.1,
                "country": "IT",
            },
            {"supplier": "S2", "product": "M", "lat": 50.9, "lon": 4.4, "region": "R0", "unit_cost": 2.1},
        ],
        "plants": [
            {"plant": "F", "product": "P", "lat": 49.0, "lon": 8.4, "unit_cost": 4.0, "capacity": 1e6, "country": "DE"}
        ],
        "duties": [{"origin": "IT", "destination": "DE", "ad_valorem": 0.01}],
        "dcs": [
            {
                "dc": "D0",
                "lat": 50.1,
                "lon": 8.6,
                "status": "existing",
                "fixed_cost": 20000.0,
                "closing_cost": 5000.0,
                "capacity": 50000.0,
            },
            {"dc": "D1", "lat": 48.1, "lon": 11.5, "fixed_cost": 15000.0, "force": "open", "max_region_share": 0.9},
            {"dc": "D2", "lat": 52.4, "lon": 13.1, "fixed_cost": 18000.0, "capacity": 5000.0},
        ],
        "dc_sizes": [
            {"dc": "D1", "size": "small", "capacity": 2000.0, "fixed_cost": 10000.0},
            {"dc": "D1", "size": "large", "capacity": 6000.0, "fixed_cost": 16000.0},
        ],
        "customers": [{"customer": c, "lat": a, "lon": o, "region": "south"} for c, a, o, _ in customers],
        "demand": [{"customer": c, "product": "P", "quantity": q} for c, _, _, q in customers],
        "modes": [
            {
                "mode": "road",
                "cost_per_tonne_km": 0.1,
                "fixed_cost_per_unit": 0.1,
                "speed_km_per_day": 600,
                "co2_kg_per_tonne_km": 0.09,
            },
            {
                "mode": "rail",
                "cost_per_tonne_km": 0.04,
                "fixed_cost_per_unit": 0.3,
                "speed_km_per_day": 350,
                "co2_kg_per_tonne_km": 0.03,
                "legs": "supplier-plant|plant-dc",
            },
        ],
        "lanes": [{"origin": "F", "destination": "D0", "mode": "road", "capacity": 100000.0}],
    }
    settings = {
        "lanes": {"legs": ["supplier-plant", "plant-dc", "dc-customer"], "prune_dominated": False},
        "policy": {
            "max_supplier_share": 0.7,
            "max_region_share": 0.9,
            "min_active_suppliers": 2,
            "min_open_dcs": 1,
            "max_open_dcs": 3,
            "single_sourcing": True,
            "one_mode_per_lane": True,
            "co2_cap_tonnes": 1e6,
            "carbon_price_per_tonne": 50.0,
            "service_max_days": 2.0,
            "service_target_share": 0.5,
        },
        "inventory": {"safety_stock": True},
    }
    return make_case(tables, settings, name="every-rule")


@pytest.fixture(scope="module")
def built():
    """The tight and the elastic model of the every-rule case."""
    net = build_network(every_rule_case())
    return build_model(net), build_model(net, elastic=True)


@pytest.fixture(scope="module")
def stacked():
    """The every-rule case over two periods with stock carried, an openings limit and an opening budget:
    the stacked model of ``netopt.model.phasing`` (its names without the ``@k`` of each period)."""
    case = every_rule_case()
    case.tables["periods"] = pd.DataFrame(
        {
            "period": ["Y1", "Y2"],
            "years": [1.0, 1.0],
            "discount_factor": [np.nan, np.nan],
            "cost_index": [1.0, 1.0],
            "max_openings": [1, -1],
            "opening_budget": [np.inf, 5e4],
        }
    )
    case.settings["periods"]["carry_stock"] = True
    per = horizon(case)
    model = pyo.ConcreteModel()
    builders = [
        build_model(build_network(period_case(case, p, k)), model=model, suffix=f"@{k}", objective=False)
        for k, p in enumerate(per["period"])
    ]
    return stack(builders, per, case.settings, case.tables["dcs"], case.tables["opening_stock"])


@pytest.fixture(scope="module")
def scenario_stacked():
    """The every-rule case under two demand scenarios (the second's demand × 1.2), worst case with a cost
    bound: the two-stage model of ``netopt.model.scenario_copies``."""
    case = every_rule_case()
    high = case.copy()
    high.tables["demand"] = high.tables["demand"].assign(quantity=high.tables["demand"]["quantity"] * 1.2)
    model = pyo.ConcreteModel()
    builders = [
        build_model(build_network(c), model=model, suffix=f"@{k}", objective=False) for k, c in enumerate([case, high])
    ]
    return stack_scenarios(builders, ["base", "high"], np.array([0.5, 0.5]), "worst_case", 1e12)


def _plain(names) -> set[str]:
    return {re.sub(r"@\d+$", "", n) for n in names}


def _literal_names(call: str) -> set[str]:
    """First string-literal argument of every ``.call("name", ...)`` in netopt/model/."""
    pat = re.compile(rf'\.{call}\(\s*"([a-z_0-9]+)"')
    return {n for p in MODEL_DIR.glob("*.py") for n in pat.findall(p.read_text(encoding="utf-8"))}


def _row_families(b) -> set[str]:
    """Row families of a built model: Builder bookkeeping, the Pyomo constraints (one family each) and
    the families handed over as matrices (``Builder.matrix_rows``, no Pyomo object)."""
    pyomo_names = {c.name for c in b.model.component_objects(pyo.Constraint)}
    assert not pyomo_names & set(b.matrix_rows)
    assert pyomo_names | set(b.matrix_rows) == set(b.row_labels)
    return pyomo_names | set(b.matrix_rows)


def test_page_matches_docstrings():
    assert DOC_PATH.read_text(encoding="utf-8") == formulation_markdown(), (
        "docs/formulation.md is stale: run `python -m netopt.model.formulation`"
    )


def test_write_formulation_round_trip(tmp_path):
    out = write_formulation(tmp_path / "f.md")
    assert out.read_text(encoding="utf-8") == formulation_markdown()


def test_every_built_row_family_has_maths(built, stacked, scenario_stacked):
    page = formulation_markdown()
    tight, _ = built
    created = _row_families(tight) | _plain(_row_families(stacked)) | _plain(_row_families(scenario_stacked))
    assert created - documented_rows(page) == set(), "row families without maths in their module's add()"
    # Every family the docs state is created on this case (no stale maths), and the static calls agree.
    assert documented_rows(page) - created == set()
    assert _literal_names("add_rows") <= documented_rows(page)


def test_every_variable_block_and_cost_component_is_stated(built, stacked, scenario_stacked):
    page = formulation_markdown()
    tight, elastic = built
    blocks = {re.sub(r"^(slack_(?:lo|hi)__).+$", r"\1<family>", n) for n in set(tight.vars) | set(elastic.vars)}
    blocks |= _plain(stacked.vars) | _plain(scenario_stacked.vars)
    assert blocks - documented_variables(page) == set()
    assert _literal_names("add_vars") <= documented_variables(page)
    costs = set(tight.cost) | set(tight.cost_constant) | set(elastic.cost) | set(COST_COMPONENTS)
    assert costs - documented_costs(page) == set()


def test_dagger_marks_the_rows_the_elastic_diagnosis_never_relaxes(built):
    page = formulation_markdown()
    _, elastic = built
    relaxed = {name for name, r in elastic.relaxable.items() if r}
    created = _row_families(elastic)
    assert relaxed == created - fixed_rows(page)
