"""The one declared schema of netopt's outputs.

Every result table netopt writes (one solve's tables, the verification, the scenario
comparison, the cost–CO2 frontier, the stress tables), every column of it (type, unit,
short label, meaning) lives here and nowhere else (the ``kpis`` rows and the comparison's
headline columns: :mod:`netopt.data.result_views`).
Workbook number formats, terminal and report labels and ``docs/outputs.md`` are read
from these declarations.

Units are the words of :data:`UNITS`; each has a *kind* that says how a value is shown
(money, share, days, …).  A column name with ``<…>`` is a pattern for columns made
per component or mode, e.g. ``cost_<component>``.
"""

from __future__ import annotations

from netopt.data.result_columns import (
    CARBON_COST,
    CO2_KG,
    CUSTOMER,
    DC,
    DCS_OPEN,
    DCS_OPEN_NAMES,
    DESTINATION,
    DISTANCE,
    FREIGHT_COST,
    GAP,
    LEG,
    LOST_UNITS,
    LOST_VALUE,
    MODE,
    MODE_MIX,
    ORIGIN,
    PIPELINE_COST,
    PRODUCT,
    QUANTITY,
    REGION,
    STATUS,
    TOTAL_COST,
    TRANSIT,
    UTILISATION,
    VERIFIED,
    WITHIN,
)
from netopt.data.result_registry import RESULT_TABLES, column_of, label_of, result_table
from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import UNITS, Kpi, ResultColumn
from netopt.data.result_types import result_column as _c

DEARER = {"signed": True, "sense": 1}  # a signed change where up is worse


_table(
    "flows",
    "Units/yr per lane, mode and product, with per-flow costs, CO2e and transit days",
    "netopt solve / run",
    ORIGIN,
    _c("origin_kind", "str", "text", "from kind", "supplier, plant or dc"),
    DESTINATION,
    _c("destination_kind", "str", "text", "to kind", "plant, dc or customer"),
    LEG,
    MODE,
    PRODUCT,
    QUANTITY,
    DISTANCE,
    TRANSIT,
    _c("tonnes", "float", "t/yr", "tonnes/yr", "Weight moved"),
    _c("tonne_km", "float", "t·km/yr", "tonne-km/yr", "Transport work: tonnes × km"),
    _c("supply_cost", "float", "currency/yr", "supply cost", "Purchase price of supplier flows"),
    FREIGHT_COST,
    _c("handling_cost", "float", "currency/yr", "handling cost", "DC handling of the units"),
    _c("duty_cost", "float", "currency/yr", "duty", "Import duties of the flow (its own cost component, duties)"),
    PIPELINE_COST,
    CARBON_COST,
    CO2_KG,
    WITHIN,
)
_table(
    "production",
    "Units/yr made per plant and product, against capacity",
    "netopt solve / run",
    _c("plant", "str", "text", "plant", "Plant"),
    PRODUCT,
    QUANTITY,
    _c("capacity", "float", "units/yr", "capacity", "Plant capacity for the product (inf: no limit)"),
    UTILISATION,
    _c("cost", "float", "currency/yr", "production cost", "Units made × unit cost"),
)
_table(
    "dcs",
    "Every DC: decision, chosen size, capacity, throughput and utilisation",
    "netopt solve / run",
    DC,
    _c("status", "str", "text", "status", "existing or candidate"),
    _c(
        "decision",
        "str",
        "text",
        "decision",
        "keep, close, open, stay closed, or out (unavailable: nothing through it; open = still paid for)",
    ),
    _c("open", "bool", "flag", "open", "Open in the plan"),
    _c("size", "str", "text", "size", "Chosen size option (blank: the DC's own row)"),
    REGION,
    _c("lat", "float", "degrees", "lat", "Latitude"),
    _c("lon", "float", "degrees", "lon", "Longitude"),
    _c("capacity", "float", "units/yr", "capacity", "Capacity of the chosen size (0 when closed, inf: no limit)"),
    _c("throughput", "float", "units/yr", "throughput", "Units received per year"),
    UTILISATION,
    _c("fixed_cost", "float", "currency/yr", "fixed cost", "Fixed cost of the chosen size (0 when closed)"),
)
_table(
    "supplier_shares",
    "Share of each receiving site's supplier inflow of a material taken by each supplier",
    "netopt solve / run",
    _c("site", "str", "text", "site", "Receiving plant or DC"),
    _c("site_kind", "str", "text", "site kind", "plant or dc"),
    PRODUCT,
    _c("supplier", "str", "text", "supplier", "Supplier"),
    REGION,
    QUANTITY,
    _c("share", "float", "share", "share", "The supplier's share of the site's inflow of the material"),
    _c(
        "max_share",
        "float",
        "share",
        "max share",
        "This supplier's cap at this site: the smallest of the policy's, the supplier's own, the site's own and "
        "the pair's own (sourcing_shares)",
    ),
    _c(
        "min_share",
        "float",
        "share",
        "min share",
        "Least share this supplier must provide at this site: the larger of the supplier's own and the pair's own",
    ),
)
_table(
    "mode_mix",
    "Units, tonnes, tonne-km, freight cost and CO2e by mode",
    "netopt solve / run",
    MODE,
    _c("units", "float", "units/yr", "units/yr", "Units moved by the mode"),
    _c("tonnes", "float", "t/yr", "tonnes/yr", "Weight moved by the mode"),
    _c("tonne_km", "float", "t·km/yr", "tonne-km/yr", "Transport work of the mode"),
    FREIGHT_COST,
    CO2_KG,
    _c("share_of_tonne_km", "float", "share", "share of tonne-km", "The mode's share of all tonne-km"),
)
_table(
    "service",
    "Per customer: demand, delivered, lost, share of demand delivered within the service window",
    "netopt solve / run",
    CUSTOMER,
    _c("service_class", "str", "text", "class", "Service class of the customer"),
    _c("max_days", "float", "days", "window days", "Service window: longest transit counted as on time"),
    _c("target_share", "float", "share", "target", "Share of demand the class must get within the window"),
    _c("late_cost", "float", "currency/unit", "late cost per unit", "Cost per unit short of the target (0: hard)"),
    _c("demand", "float", "units/yr", "demand units/yr", "Demand of the customer"),
    _c("delivered", "float", "units/yr", "delivered units/yr", "Units delivered"),
    _c("unmet", "float", "units/yr", "lost units/yr", "Demand not delivered"),
    _c("within_window", "float", "units/yr", "in window units/yr", "Units delivered within the window"),
    _c("share_within_window", "float", "share", "achieved", "Units within the window ÷ demand"),
    _c("late_units", "float", "units/yr", "late units/yr", "Units short of target × demand within the window"),
    _c("avg_transit_days", "float", "days", "avg transit days", "Unit-weighted transit time of the last leg"),
    _c("target_met", "bool", "flag", "target met", "The achieved share reaches the target"),
)
_table(
    "unmet",
    "Demand not served and its penalty value",
    "netopt solve / run",
    CUSTOMER,
    PRODUCT,
    _c("demand", "float", "units/yr", "demand units/yr", "Demand of the customer for the product"),
    _c("lost_units", "float", "units/yr", "lost units/yr", "Demand not delivered"),
    _c("penalty", "float", "currency/unit", "penalty per unit", "Penalty per unit not delivered"),
    _c("value", "float", "currency/yr", "lost value", "Lost units × penalty"),
)
_table(
    "cost",
    "Annual landed cost by component; rows sum to the total (a plan over periods: the present value of each "
    "component over all periods, currency; period_cost has each period's)",
    "netopt solve / run",
    _c("component", "str", "text", "component", "Cost component (supply, transport, dc_fixed, …)"),
    _c("amount", "float", "currency/yr", "amount", "The component's cost (a plan over periods: present value)"),
)
_table(
    "kpis",
    "Headline indicators, one row each, with units (the rows are declared in KPIS)",
    "netopt solve / run",
    _c("kpi", "str", "text", "indicator", "Indicator name (see the indicators below)"),
    _c("value", "float", "ratio", "value", "The indicator's value, in the row's unit"),
    _c("unit", "str", "text", "unit", "The row's unit"),
)
_table(
    "safety_stock",
    "Per DC and product: throughput, the model's piecewise-linear safety stock and the exact formula for "
    "the customers served, approximation errors and cost",
    "netopt solve / run",
    DC,
    PRODUCT,
    _c("throughput", "float", "units/yr", "throughput", "Units the DC delivers to customers"),
    _c("customers_served", "int", "count", "customers", "Customers the DC serves with the product"),
    _c("z", "float", "ratio", "z", "Safety factor: standard normal quantile of the cycle service level"),
    _c("lead_days", "float", "days", "lead days", "Replenishment lead time used by the model"),
    _c("lead_sd_days", "float", "days", "lead sd days", "Standard deviation of the lead time"),
    _c("lead_origin", "str", "text", "lead origin", "Source of the lane the lead time is taken from"),
    _c("lead_mode", "str", "text", "lead mode", "Mode of that lane"),
    _c("inbound_days_actual", "float", "days", "actual inbound days", "Unit-weighted transit of the actual inflow"),
    _c("ss_units_model", "float", "units", "safety stock (model)", "Piecewise-linear safety stock the MIP charged"),
    _c("ss_units_curve", "float", "units", "safety stock (curve)", "The curve the model approximates"),
    _c("pwl_rel_error", "float", "ratio", "approx. error", "(curve − piecewise-linear) / curve at the throughput"),
    _c("max_rel_error", "float", "ratio", "max approx. error", "Largest relative error over the curve's range"),
    _c("below_first_breakpoint", "bool", "flag", "below range", "Throughput below the curve's first breakpoint"),
    _c("ss_units_exact", "float", "units", "safety stock (exact)", "Exact formula for the customers served"),
    _c("ss_units_actual_lead_time", "float", "units", "safety stock (actual lead)", "Exact formula, actual inflow"),
    _c("unit_holding", "float", "currency/unit/yr", "holding per unit", "Holding cost of one unit of stock"),
    _c("cost_model", "float", "currency/yr", "cost (model)", "Safety-stock cost in the objective"),
    _c("cost_pwl", "float", "currency/yr", "cost (curve)", "The same curve recomputed from the flows"),
    _c("cost_exact", "float", "currency/yr", "cost (exact)", "Exact safety stock × holding cost"),
    _c("in_objective", "bool", "flag", "in objective", "inventory.safety_stock is on"),
)
_table(
    "pipeline",
    "In-transit stock per lane, mode and product by Little's law: units, value, cost",
    "netopt solve / run",
    ORIGIN,
    DESTINATION,
    LEG,
    MODE,
    PRODUCT,
    QUANTITY,
    TRANSIT,
    _c("in_transit_units", "float", "units", "in transit units", "Units/yr × transit days ÷ 365"),
    _c("unit_value", "float", "currency/unit", "unit value", "Value of one unit"),
    _c("holding_rate", "float", "share/yr", "holding rate", "Holding cost as a share of value per year"),
    _c("in_transit_value", "float", "currency", "in transit value", "Value of the stock in transit"),
    PIPELINE_COST,
)
_table(
    "inventory_kpis",
    "Safety and in-transit stock per DC and for the network: value, days of throughput, turns per year "
    "(cycle stock not modelled)",
    "netopt solve / run",
    _c("level", "str", "text", "level", "dc or network"),
    _c("dc", "str", "text", "DC", "The DC (network: the whole network)"),
    _c("throughput_units", "float", "units/yr", "throughput", "Units delivered to customers"),
    _c("throughput_value", "float", "currency/yr", "throughput value", "The same at unit value"),
    _c("safety_stock_units", "float", "units", "safety stock", "Exact pooled safety stock"),
    _c("safety_stock_value", "float", "currency", "safety stock value", "Safety stock at unit value"),
    _c("inbound_in_transit_value", "float", "currency", "inbound in transit", "Stock in transit into the DC"),
    _c("outbound_in_transit_value", "float", "currency", "outbound in transit", "Stock in transit out of the DC"),
    _c("pipeline_value", "float", "currency", "pipeline value", "All in-transit stock counted"),
    _c("inventory_value", "float", "currency", "inventory value", "Safety plus in-transit stock"),
    _c("days_on_hand", "float", "days", "days on hand", "Safety-stock value / daily throughput value"),
    _c("days_incl_transit", "float", "days", "days incl. transit", "Inventory value / daily throughput value"),
    _c("turns_on_hand", "float", "per year", "turns on hand", "365 / days on hand"),
    _c("turns", "float", "per year", "turns", "365 / days incl. transit"),
)
_table(
    "mode_economics",
    "Every admissible mode of each used lane and product: cost per unit and per year if all went by it, "
    "transit days, CO2e, the chosen mode and the cost of switching",
    "netopt solve / run",
    ORIGIN,
    DESTINATION,
    LEG,
    PRODUCT,
    _c("quantity", "float", "units/yr", "units/yr", "Units of the pair (all modes)"),
    MODE,
    _c("chosen", "bool", "flag", "chosen", "The plan uses this mode"),
    _c("flow", "float", "units/yr", "flow units/yr", "Units on this mode in the plan"),
    _c("share", "float", "share", "share", "This mode's share of the pair's units"),
    DISTANCE,
    TRANSIT,
    _c("within_window", "bool", "flag", "in window", "Within the service window (last legs; blank elsewhere)"),
    _c("capacity", "float", "units/yr", "capacity", "Lane-and-mode or product limit (inf: none)"),
    _c("pruned", "bool", "flag", "pruned", "No better than another mode in cost, time and CO2e; dropped"),
    _c("freight", "float", "currency/unit", "freight per unit", "Freight per unit"),
    _c("pipeline", "float", "currency/unit", "pipeline per unit", "In-transit holding per unit"),
    _c("carbon", "float", "currency/unit", "carbon per unit", "CO2e × carbon price per unit"),
    _c("total", "float", "currency/unit", "total per unit", "Freight + pipeline + carbon per unit"),
    _c("co2_kg_per_unit", "float", "kg CO2e/unit", "CO2e kg/unit", "CO2e per unit"),
    _c("freight_cost", "float", "currency/yr", "freight cost", "Freight if the whole pair went by the mode"),
    _c("pipeline_cost", "float", "currency/yr", "pipeline cost", "Pipeline holding if all went by the mode"),
    _c("carbon_cost", "float", "currency/yr", "carbon cost", "Carbon cost if all went by the mode"),
    _c("total_cost", "float", "currency/yr", "total cost", "Mode-dependent cost if all went by the mode"),
    _c("co2_kg", "float", "kg CO2e/yr", "CO2e kg/yr", "CO2e if all went by the mode"),
    _c("switch_cost", "float", "currency/yr", "switch cost", "total_cost − the pair's actual cost", signed=True),
    _c("switch_co2_kg", "float", "kg CO2e/yr", "switch CO2e kg/yr", "CO2e change of the switch", signed=True),
    _c("cost_per_t_co2_saved", "float", "currency/t CO2e", "cost per t saved", "switch_cost / tonnes saved"),
    _c("cheapest", "bool", "flag", "cheapest", "The cheapest mode of the pair"),
    _c("lowest_co2", "bool", "flag", "lowest CO2e", "The mode of the pair with the least CO2e"),
)
_table(
    "verification",
    "The independent check of a plan: each rule's largest violation",
    "netopt solve / run",
    _c("rule", "str", "text", "rule", "The rule checked"),
    _c("violation", "float", "ratio", "violation", "Largest violation in the rule's own unit"),
    _c("relative_violation", "float", "ratio", "relative violation", "Violation over the rule's scale"),
    _c("where", "str", "text", "where", "The row of the largest violation"),
)
_table(
    "diagnosis",
    "Why no plan exists: the rules an elastic re-solve had to break, and by how much",
    "netopt solve / run (infeasible cases)",
    _c("rule", "str", "text", "rule", "The rule that cannot be met"),
    _c("where", "str", "text", "where", "Its row labels"),
    _c("amount", "float", "ratio", "amount", "Shortfall or excess in the rule's own unit"),
    _c("meaning", "str", "text", "meaning", "What the amount is"),
)
_table(
    "dc_decisions",
    "One row per DC and solve of a run (the base included): what the plan does with the DC",
    "netopt run",
    _c("scenario", "str", "text", "scenario", "Scenario name (base, or with [hold] / [redesign])"),
    _c("resolve", "str", "text", "re-solve", "design (the base), hold or redesign"),
    DC,
    _c(
        "decision",
        "str",
        "text",
        "decision",
        "kept, closed, opened, not opened, out (taken out by the scenario: still paid for, nothing through "
        "it), out, closed (taken out, and closed for good by a redesign), or no plan (the solve is infeasible); "
        "a plan over periods has a row per period: opens, open, closes or closed",
    ),
    _c("throughput", "float", "units/yr", "throughput units/yr", "Units into the DC (blank without a plan)"),
)
_SHARE_SIDE = (
    _c("base_share", "float", "share", "base share", "The share in the base"),
    _c("share", "float", "share", "share", "The share in this solve"),
    _c("change", "float", "share", "change", "share − base share", signed=True),
)
_table(
    "supplier_share_changes",
    "Each solve's supplier shares against the base's: share of a site's supply of a material",
    "netopt run",
    _c("scenario", "str", "text", "scenario", "Scenario name"),
    _c("resolve", "str", "text", "re-solve", "hold or redesign"),
    _c("site", "str", "text", "site", "Receiving plant or DC"),
    PRODUCT,
    _c("supplier", "str", "text", "supplier", "Supplier"),
    *_SHARE_SIDE,
)
_table(
    "mode_mix_changes",
    "Each solve's mode mix against the base's: share of all tonne-km by mode",
    "netopt run",
    _c("scenario", "str", "text", "scenario", "Scenario name"),
    _c("resolve", "str", "text", "re-solve", "hold or redesign"),
    MODE,
    *_SHARE_SIDE,
)
_table(
    "dc_decision_matrix",
    "The DC decisions side by side: one row per DC, one column per solve of a run",
    "netopt run (report and terminal)",
    DC,
    _c("<scenario>", "str", "text", "<scenario>", "Decision in that solve · throughput (units/yr)"),
)
_table(
    "mode_mix_matrix",
    "The mode mix side by side: one row per solve (the base first), one column per mode",
    "netopt run (comparison.xlsx, terminal and report)",
    _c("scenario", "str", "text", "scenario", "The solve"),
    _c("<mode>", "float", "share", "<mode>", "The mode's share of all tonne-km in that solve"),
)
_table(
    "comparison",
    "One row per solve of a run: the base, then each scenario (and each re-solve of it)",
    "netopt run",
    _c("scenario", "str", "text", "scenario", "Scenario name, with [hold] or [redesign] for both re-solves"),
    _c("description", "str", "text", "description", "What the scenario asks"),
    _c("based_on", "str", "text", "based on", "The scenario it builds on"),
    _c("resolve", "str", "text", "re-solve", "hold (DC decisions kept) or redesign"),
    STATUS,
    GAP,
    TOTAL_COST,
    _c("delta_cost", "float", "currency/yr", "Δ vs base", "Total cost − the base's", signed=True, sense=1),
    _c("delta_pct", "float", "share", "Δ %", "delta_cost / the base's total cost", signed=True, sense=1),
    _c(
        "saving_vs_today",
        "float",
        "currency/yr",
        "saving vs today",
        "Today's cost (the case's current_flows costed as netopt baseline does) minus this total (a plan over "
        "periods: minus its first period's annual cost); blank without current_flows",
        signed=True,
        sense=-1,
    ),
    _c("delta_penalty", "float", "currency/yr", "Δ penalties", "Change in penalties for rules not met", **DEARER),
    _c(
        "delta_operating",
        "float",
        "currency/yr",
        "Δ operating",
        "Change in operating cost; + Δ penalties = Δ",
        **DEARER,
    ),
    _c(
        "gap_tolerance", "float", "currency/yr", "gap tolerance", "Largest Δ the gaps allow: (both gaps) × larger total"
    ),
    _c("within_gap", "bool", "flag", "within gap", "Δ vs base is within the optimality gaps: not a finding"),
    _c("cost_<component>", "float", "currency/yr", "<component> cost", "One cost component"),
    _c("delta_<component>", "float", "currency/yr", "Δ <component>", "One cost component − the base's", signed=True),
    _c(
        "period_<period>",
        "float",
        "currency",
        "<period> PV",
        "A plan over periods: present value of that period's cost (the money columns are then present values "
        "over every period, currency; dcs, shares, service, mode mix and CO2e are the last period's)",
    ),
    _c("phasing", "str", "text", "phasing", "A plan over periods: the DCs it opens and closes, and when"),
    DCS_OPEN,
    DCS_OPEN_NAMES,
    _c("share_within_window", "float", "share", "in window", "On-time units ÷ demand", sense=-1),
    _c("avg_transit_days", "float", "days", "avg transit days", "Unit-weighted transit to customers", sense=1),
    _c("max_supplier_share", "float", "share", "max supplier share", "Largest supplier share of a site"),
    MODE_MIX,
    LOST_UNITS,
    LOST_VALUE,
    _c("lost_where", "str", "text", "lost at", "The customers losing most demand: customer units/yr; …"),
    _c("co2e_tonnes", "float", "t CO2e/yr", "CO2e t/yr", "Transport CO2e", sense=1),
    VERIFIED,
    _c("method", "str", "text", "method", "How it was solved (warm re-solve, rebuild, …)"),
    _c(
        "alternative_to",
        "str",
        "text",
        "priced alternative to",
        "For a row solved with lost demand allowed at the penalty: the infeasible row it stands beside",
    ),
    _c(
        "diagnosis",
        "str",
        "text",
        "why no plan",
        "For a solve with no plan: the rules that cannot be met, where, how much",
    ),
    _c("seconds", "float", "seconds", "seconds", "Solve time"),
)
_table(
    "frontier",
    "The cost–CO2 frontier: row 0 the cost-optimal network, the last the CO2-minimal one",
    "netopt frontier; netopt run with frontier_points",
    _c("point", "int", "count", "point", "Point number, 0 = cost-optimal"),
    _c("co2_cap_t", "float", "t CO2e/yr", "CO2e cap t/yr", "The cap solved for (point 0: the case's, blank if none)"),
    _c("co2_t", "float", "t CO2e/yr", "CO2e t/yr", "Transport CO2e of the network"),
    TOTAL_COST,
    _c("delta_cost", "float", "currency/yr", "Δ cost", "Against the cost-optimal point", signed=True),
    _c("delta_co2_t", "float", "t CO2e/yr", "Δ CO2e t/yr", "Against the cost-optimal point", signed=True),
    _c("cost_per_t_abated", "float", "currency/t CO2e", "cost per t abated", "Between this point and the previous"),
    DCS_OPEN,
    DCS_OPEN_NAMES,
    _c("safety_stock_cost", "float", "currency/yr", "safety stock cost", "Safety-stock cost of the network"),
    LOST_UNITS,
    _c("tkm_share_<mode>", "float", "share", "<mode> share of tonne-km", "Share of tonne-km by the mode"),
    STATUS,
    GAP,
    MODE_MIX,
    VERIFIED,
)
# The stress study's tables, registered after the run tables (the order of docs/outputs.md).
from netopt.data import (  # noqa: E402, F401
    classify_schema,
    horizon_schema,
    landed_schema,
    robust_schema,
    sites_schema,
    stress_schema,
)

__all__ = [
    "RESULT_TABLES",
    "UNITS",
    "Kpi",
    "ResultColumn",
    "column_of",
    "label_of",
    "result_table",
]
