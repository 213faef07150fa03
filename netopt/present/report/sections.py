"""The catalogue of the report's extra sections: each extra table's title, one line on what it shows,
the columns worth showing on the page (all are in the workbook) and the order and number of rows shown."""

from __future__ import annotations

KNOWN_EXTRA = {  # extra table name → section title and one line on what it shows
    "dc_decision_matrix": (
        "DC decisions by scenario",
        "What each solve does with each DC (kept, closed, opened, not opened, out) and its throughput in units/yr.",
    ),
    "mode_mix_matrix": (
        "Mode mix by scenario",
        "Each mode's share of all tonne-km in each solve, the base first.",
    ),
    "supplier_share_changes": (
        "Supplier share changes",
        "Where a scenario moves supply between suppliers: each supplier's share of a site's supply "
        "of a material in the base and in the scenario (changes of half a percentage point or more, largest first).",
    ),
    "frontier": ("Cost–CO2e frontier", "Least landed cost at each level of CO2e (or each carbon price)."),
    "safety_stock": ("Safety stock", "Safety stock held at each DC and product (units) and its yearly cost."),
    "spof": (
        "Single points of failure",
        "Each element taken out on its own, ranked by the yearly impact of "
        "its loss (recovery cost plus lost demand value).",
    ),
    "spof_ranking": (
        "Single points of failure",
        "Each element taken out on its own, ranked by the yearly "
        "impact of its loss (recovery cost plus lost demand value).",
    ),
    "exposure": (
        "Time to survive and time to recover",
        "Per node: how long the network lasts with it down (time to survive) against how long it takes to recover.",
    ),
    "pipeline": (
        "Pipeline stock",
        "Stock in transit per lane, mode and product (Little's law: units/yr × transit days ÷ 365).",
    ),
    "inventory_kpis": (
        "Inventory indicators",
        "Safety and pipeline stock per DC and for the network, in days of throughput and turns per year.",
    ),
    "mode_economics": (
        "Mode economics",
        "Every admissible mode of the busiest lanes: yearly cost and CO2e if the "
        "lane's whole volume went by that mode, and the cost of switching to it.",
    ),
}
KNOWN_COLUMNS = {  # extra table name → the columns worth showing on the page (all are in the workbook)
    "safety_stock": [
        "dc",
        "product",
        "throughput",
        "customers_served",
        "lead_days",
        "ss_units_model",
        "ss_units_exact",
        "pwl_rel_error",
        "cost_model",
    ],
    "spof": [
        "rank",
        "element",
        "type",
        "base_units",
        "recovery_cost",
        "lost_units",
        "lost_value",
        "impact",
        "customers_affected",
        "took_over",
    ],
    "exposure": ["rank", "node", "type", "ttr_days", "tts_days", "lost_units", "lost_value", "rei", "tts_below_ttr"],
    "pipeline": [
        "origin",
        "destination",
        "mode",
        "product",
        "quantity",
        "transit_days",
        "in_transit_units",
        "in_transit_value",
    ],
    "inventory_kpis": [
        "level",
        "dc",
        "throughput_units",
        "safety_stock_units",
        "safety_stock_value",
        "pipeline_value",
        "inventory_value",
        "days_on_hand",
        "days_incl_transit",
        "turns",
    ],
    "mode_economics": [
        "origin",
        "destination",
        "product",
        "mode",
        "chosen",
        "share",
        "transit_days",
        "total_cost",
        "co2_kg",
        "switch_cost",
        "cost_per_t_co2_saved",
    ],
}
KNOWN_ORDER = {  # extra table name → (sort columns, ascending, rows shown): the largest first
    "pipeline": (["in_transit_value"], [False], 25),
    "mode_economics": (
        ["quantity", "origin", "destination", "product", "total_cost"],
        [False, True, True, True, True],
        30,
    ),
}
KNOWN_COLUMNS["spof_ranking"] = KNOWN_COLUMNS["spof"]
# Cost to serve and marginal values (every solve).
KNOWN_EXTRA["cost_to_serve"] = (
    "Cost to serve",
    "The landed cost of each customer's demand of each product along its actual paths (DC fixed cost allocated "
    "by throughput); least profitable first where prices are given, else dearest per unit first. The rows sum to "
    "the total landed cost.",
)
KNOWN_EXTRA["shadow_prices"] = (
    "What more capacity is worth",
    "Cost saved per year by one more unit/yr of each capacity (shadow prices of the held linear program; valid "
    "for small changes), largest first.",
)
KNOWN_EXTRA["lane_reduced_costs"] = (
    "Unused lanes: how close to use",
    "How much each unused lane's cost per unit must fall before it would carry flow (reduced cost), closest first.",
)
KNOWN_COLUMNS["cost_to_serve"] = [
    "rank",
    "customer",
    "product",
    "delivered",
    "supply",
    "production",
    "duties",
    "dc_fixed",
    "late_delivery",
    "cost",
    "cost_per_unit",
    "revenue",
    "margin",
    "margin_share",
]
KNOWN_ORDER["cost_to_serve"] = (["rank"], [True], 25)
KNOWN_ORDER["shadow_prices"] = (["shadow_price"], [False], 25)
KNOWN_ORDER["lane_reduced_costs"] = (["reduced_cost"], [True], 25)
STANDARD_TABLES = {"flows", "production", "dcs", "supplier_shares", "mode_mix", "service", "unmet", "cost", "kpis"}
