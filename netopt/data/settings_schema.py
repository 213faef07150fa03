"""The declared settings of a netopt case: ``[section] name = value`` entries of ``settings.toml``.

Each :class:`~netopt.data.declarations.Setting` has a type, unit, default, meaning and range (every number
has a maximum: its own, or the general one of :mod:`netopt.data.limits`);
loading, validation, templates and the settings documentation are generated from them.
"""

from __future__ import annotations

import pandas as pd

from netopt.data.declarations import Setting
from netopt.data.limits import MAX_SAFETY_STOCK_BREAKPOINTS, MAX_SITE_COUNT, MAX_THREADS, MAX_TIME_LIMIT_S
from netopt.data.schema import LEGS

ACTUAL_SPEND = (
    ("supply", "purchases from suppliers"),
    ("production", "conversion at the plants"),
    ("dc_fixed", "DC fixed cost"),
    ("dc_closing", "DC closing"),
    ("dc_handling", "DC handling"),
    ("transport", "freight"),
    ("duties", "import duties"),
    ("pipeline_inventory", "holding stock in transit"),
    ("safety_stock", "holding safety stock"),
    ("carbon", "carbon charges"),
)
"""Cost components (names of ``netopt.model.COST_COMPONENTS``) whose actual spend a case may state in
``[actual_spend]``, with what each one is in the accounts."""

SETTINGS: tuple[Setting, ...] = (
    Setting("case", "name", "str", "", "", "Case name shown in reports"),
    Setting("case", "currency", "str", "", "EUR", "Currency label for all money columns"),
    Setting(
        "solver",
        "time_limit_s",
        "float",
        "s",
        300.0,
        "Stop the MIP search after this many seconds",
        min=0.1,
        max=MAX_TIME_LIMIT_S,
        max_is_limit=True,
    ),
    Setting(
        "solver",
        "marginal_values",
        "bool",
        "",
        True,
        "After a solve, price one more unit of each capacity (shadow prices) and each unused lane's cost gap "
        "(reduced costs) from the held linear program of the plan: shadow_prices.csv, lane_reduced_costs.csv",
    ),
    Setting("solver", "mip_gap", "float", "ratio", 1e-4, "Stop when (cost − bound)/cost is below this", min=0, max=1),
    Setting(
        "solver",
        "threads",
        "int",
        "",
        1,
        "Solver threads (1 keeps runs reproducible)",
        min=1,
        max=MAX_THREADS,
        max_is_limit=True,
    ),
    Setting(
        "solver",
        "plan_search",
        "bool",
        "",
        True,
        "Before the MIP search, find a good plan: the tight relaxation, then drop, add and swap moves on the DCs "
        "priced by warm LP re-solves; the best plan starts the MIP search (only when the DCs are the only "
        "integer decisions)",
    ),
    Setting(
        "solver",
        "plan_search_share",
        "float",
        "share",
        0.4,
        "Most share of the time limit the plan search may take (it stops earlier at a local optimum)",
        min=0.0,
        max=0.9,
    ),
    Setting(
        "solver",
        "lazy_linking_rows_share",
        "float",
        "share",
        0.1,
        "When the tight relaxation needed at most this share of the DC-to-customer linking rows, hand the "
        "MIP search only those (the rest are valid but slack at its optimum and cost LP time); above it, "
        "every row, whose bound HiGHS's tree gains from (0: every row always; 1: only the needed ones)",
        min=0.0,
        max=1.0,
    ),
    Setting(
        "policy",
        "max_supplier_share",
        "float",
        "share",
        1.0,
        "Most any one supplier may provide of a site's supply of a material",
        min=0,
        max=1,
    ),
    Setting(
        "policy",
        "max_region_share",
        "float",
        "share",
        1.0,
        "Most any one supplier region may provide of a site's supply of a material",
        min=0,
        max=1,
    ),
    Setting(
        "policy",
        "min_active_suppliers",
        "int",
        "",
        1,
        "Least number of suppliers actually used per site and material (where that many exist)",
        min=1,
        max=MAX_SITE_COUNT,
        max_is_limit=True,
    ),
    Setting(
        "policy",
        "min_share_when_active",
        "float",
        "share",
        0.1,
        "With min_active_suppliers ≥ 2: least share a supplier must deliver to count as active",
        min=0,
        max=1,
    ),
    Setting(
        "policy", "min_open_dcs", "int", "", 0, "Least number of DCs open", min=0, max=MAX_SITE_COUNT, max_is_limit=True
    ),
    Setting(
        "policy",
        "max_open_dcs",
        "int",
        "",
        -1,
        "Most DCs open; -1 = no limit",
        min=-1,
        max=MAX_SITE_COUNT,
        max_is_limit=True,
    ),
    Setting("policy", "single_sourcing", "bool", "", False, "Each customer and product served from one DC only"),
    Setting("policy", "one_mode_per_lane", "bool", "", False, "Each lane uses at most one mode"),
    Setting("policy", "allow_unmet_demand", "bool", "", False, "Allow demand to go unserved at the penalty below"),
    Setting(
        "policy",
        "unmet_penalty_per_unit",
        "float",
        "currency/unit",
        0.0,
        "Cost of one unit of lost demand; 0 = 2 × the product's unit value",
        min=0,
    ),
    Setting(
        "policy",
        "service_max_days",
        "float",
        "days",
        0.0,
        "Delivery window (last-leg transit days) when no service_classes table is given; 0 = no service rule",
        min=0,
    ),
    Setting(
        "policy",
        "service_target_share",
        "float",
        "share",
        0.0,
        "Least share of each customer's demand within the window",
        min=0,
        max=1,
    ),
    Setting(
        "policy",
        "late_cost_per_unit",
        "float",
        "currency/unit",
        0.0,
        "Cost of each unit of demand short of the service target within the window (late delivery); "
        "0 = the target is a hard rule",
        min=0,
    ),
    Setting("policy", "carbon_price_per_tonne", "float", "currency/t CO2e", 0.0, "Carbon price added to cost", min=0),
    Setting("policy", "co2_cap_tonnes", "float", "t CO2e/year", -1.0, "Cap on transport CO2e; -1 = no cap", min=-1),
    Setting(
        "inventory",
        "holding_rate",
        "float",
        "share of value per year",
        0.25,
        "Annual inventory carrying rate (capital, storage, risk)",
        min=0,
        max=5,
    ),
    Setting(
        "inventory",
        "cycle_service_level",
        "float",
        "probability",
        0.95,
        "Chance of no stock-out per replenishment cycle, for safety stock",
        min=0.5,
        max=0.99999,
    ),
    Setting(
        "inventory",
        "safety_stock",
        "bool",
        "",
        True,
        "Include safety stock at DCs in the cost: z·√(L·σd² + d²·σL²) per DC and product, pooled over the "
        "customers served (square-root law), as a piecewise-linear curve of the DC's throughput. The curve adds "
        "yes/no variables per DC and product and can slow the search several-fold on large networks: switch it "
        "off for screening runs",
    ),
    Setting(
        "inventory",
        "safety_stock_breakpoints",
        "int",
        "",
        12,
        "Breakpoints of each DC's piecewise-linear safety-stock curve, 0 included, spaced geometrically from the "
        "smallest customer demand to the DC's largest throughput; more = smaller error (reported), slower solve",
        min=2,
        max=MAX_SAFETY_STOCK_BREAKPOINTS,
        max_is_limit=True,
    ),
    Setting(
        "lanes",
        "legs",
        "list",
        "",
        ["supplier-plant", "supplier-dc", "plant-dc", "plant-customer", "dc-customer"],
        "Legs for which lanes are generated from coordinates: " + ", ".join(LEGS),
    ),
    Setting(
        "lanes",
        "max_dc_customer_km",
        "float",
        "km",
        -1.0,
        "Do not generate DC→customer or plant→customer lanes longer than this; -1 = no limit",
        min=-1,
    ),
    Setting(
        "lanes",
        "prune_dominated",
        "bool",
        "",
        True,
        "Drop a mode on a lane when another mode there is cheaper, no slower, no dirtier and uncapacitated",
    ),
    Setting(
        "duties",
        "customs_value_includes_freight",
        "bool",
        "",
        False,
        "The customs value an ad valorem duty is levied on: false = the goods' value only (the supplier's price "
        "on supplier lanes, else the product's unit_value); true = that value plus the lane's freight per unit "
        "(goods delivered to the destination)",
    ),
    *(
        Setting(
            "actual_spend",
            component,
            "float",
            "currency/year",
            -1.0,
            f"What the accounts show was spent on {what} last year; `netopt baseline` reports the model's "
            "cost of today's flows against it (difference in %); -1 = not given",
            min=-1,
        )
        for component, what in ACTUAL_SPEND
    ),
    Setting(
        "resilience",
        "time_to_recover_days",
        "float",
        "days",
        28.0,
        "Default days to restore a site after a disruption",
        min=0,
    ),
    Setting(
        "periods",
        "discount_rate",
        "float",
        "share per year",
        0.0,
        "Rate for the present value of later periods' costs, where the periods table gives no discount_factor",
        min=0,
        max=1,
    ),
    Setting(
        "periods",
        "carry_stock",
        "bool",
        "",
        False,
        "Carry stock from one period to the next at plants and DCs, so a peak can be built ahead; the first "
        "period starts from the opening_stock table",
    ),
    Setting(
        "periods",
        "repeat_year",
        "bool",
        "",
        False,
        "The periods are the seasons of a repeating year: with carry_stock the last period's closing stock is "
        "the first period's opening stock (opening_stock then not used)",
    ),
    Setting(
        "periods",
        "dc_reopening",
        "bool",
        "",
        False,
        "Let a DC close and open again between periods (off: a DC once opened stays open and an existing DC "
        "closes at most once)",
    ),
    Setting(
        "robust",
        "objective",
        "str",
        "",
        "expected",
        "What netopt robust's plan minimises: expected (the probability-weighted cost over the demand scenarios) "
        "or worst_case (the largest scenario cost); the expected-cost plan is always solved too, for VSS and EVPI",
    ),
    Setting(
        "robust",
        "cost_bound",
        "float",
        "currency/year",
        -1.0,
        "Most any demand scenario may cost with the plan (a bound on every scenario's cost); -1 = no bound",
        min=-1,
    ),
    Setting(
        "robust",
        "launch",
        "str",
        "",
        "",
        "Launch (from launches) whose demand scenarios are planned; blank = the only one",
    ),
    Setting(
        "robust",
        "scenarios",
        "list",
        "",
        [],
        "Cases of the launch to plan for (low, base, high); empty = all three (a subset's probabilities are divided "
        "by their sum)",
    ),
    Setting(
        "robust",
        "time_limit_s",
        "float",
        "s",
        -1.0,
        "Time limit of each two-stage solve (the scenario copies in one MIP); -1 = solver.time_limit_s",
        min=-1,
        max=MAX_TIME_LIMIT_S,
        max_is_limit=True,
    ),
    Setting(
        "robust",
        "mip_gap",
        "float",
        "ratio",
        -1.0,
        "Optimality gap of the two-stage solves (the scenario copies multiply the model: a looser gap than the "
        "one-year solve's may be worth it); -1 = solver.mip_gap",
        min=-1,
        max=1,
    ),
    Setting(
        "robust",
        "evaluation",
        "str",
        "",
        "auto",
        "How each candidate plan is held in each scenario: warm (LP re-solves of one held model per plan), rebuilt "
        "(each scenario solved with the openings fixed; exact with the safety-stock curve) or auto (warm unless "
        "the case holds safety stock)",
    ),
)


def setting_defaults() -> dict[str, dict[str, object]]:
    """Nested dict ``{section: {name: default}}`` of every setting."""
    out: dict[str, dict[str, object]] = {}
    for s in SETTINGS:
        out.setdefault(s.section, {})[s.name] = s.default
    return out


def settings_frame():
    """Every setting as one DataFrame."""
    return pd.DataFrame(
        [
            {
                "section": s.section,
                "name": s.name,
                "type": s.type,
                "unit": s.unit,
                "default": str(s.default),
                "meaning": s.meaning,
            }
            for s in SETTINGS
        ]
    )
