"""The headline views of the outputs: the rows of the ``kpis`` table (each indicator's unit, label and
meaning) and the headline columns of the scenario comparison, declared once."""

from __future__ import annotations

from netopt.data.result_types import Kpi

KPIS: dict[str, Kpi] = {
    k.name: k
    for k in (
        Kpi("total_landed_cost", "currency/yr", "landed cost", "Sum of the cost components"),
        Kpi("demand", "units/yr", "demand", "Total demand"),
        Kpi("delivered", "units/yr", "delivered", "Units delivered to customers"),
        Kpi("lost_demand", "units/yr", "lost demand", "Demand not delivered"),
        Kpi("cost_per_unit_delivered", "currency/unit", "cost per unit", "Landed cost / units delivered"),
        Kpi("avg_transit_days_to_customer", "days", "average transit", "Demand-weighted transit of the last leg"),
        Kpi("p95_transit_days_to_customer", "days", "95th percentile transit", "95 % of units arrive within"),
        Kpi(
            "share_within_service_window",
            "share",
            "within service window",
            "On-time units ÷ demand (lost units count as late)",
        ),
        Kpi("dcs_open", "count", "DCs open", "DCs open and working in the plan (a DC taken out is not counted)"),
        Kpi("in_transit_inventory_units", "units", "units in transit", "Average stock in transit"),
        Kpi("in_transit_inventory_value", "currency", "value in transit", "Average stock in transit at unit value"),
        Kpi("in_transit_inventory_days", "days", "days in transit", "In-transit value in days of sales"),
        Kpi("co2e_tonnes", "t CO2e/yr", "CO2e", "Transport CO2e"),
        Kpi("safety_stock_units", "units", "safety stock", "Exact formula, customers served"),
        Kpi("safety_stock_cost_model", "currency/yr", "safety stock cost", "Piecewise-linear, in the objective"),
        Kpi("safety_stock_cost_exact", "currency/yr", "safety stock cost (exact)", "Exact formula"),
        Kpi("safety_stock_pwl_max_rel_error", "ratio", "safety stock approx. error", "Curve vs. its linear form"),
        Kpi("network_inventory_value", "currency", "inventory value", "Safety + in-transit stock"),
        Kpi("network_inventory_days", "days", "inventory days", "Days of sales at unit value"),
        Kpi("network_inventory_turns", "per year", "inventory turns", "Turns per year"),
    )
}


COMPARISON_VIEW = (
    "scenario",
    "resolve",
    "status",
    "total_cost",
    "delta_cost",
    "delta_pct",
    "saving_vs_today",
    "delta_operating",
    "delta_penalty",
    "within_gap",
    "dcs_open",
    "share_within_window",
    "avg_transit_days",
    "max_supplier_share",
    "lost_units",
    "lost_value",
    "co2e_tonnes",
    "verified",
)
"""The headline columns of the comparison, in order: Markdown, terminal and report show these."""

TERMINAL_VIEW = tuple(
    c
    for c in COMPARISON_VIEW
    if c not in ("delta_pct", "saving_vs_today", "avg_transit_days", "max_supplier_share", "lost_value")
)
"""The headline columns that fit a terminal line (same labels; the others are in comparison.md and the report)."""
