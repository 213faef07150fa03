"""The declared output tables of landed cost as practitioners price it: the as-is baseline
(``netopt baseline``).  Registered with :mod:`netopt.data.result_registry`;
:mod:`netopt.data.results_schema` imports this module so every declaration is present wherever
the schema is read."""

from __future__ import annotations

from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import result_column as _c

_table(
    "baseline_cost",
    "Today's flows costed with the solve's cost model, per component, against the actual spend stated in "
    "the settings' [actual_spend]",
    "netopt baseline",
    _c("component", "str", "text", "component", "Cost component (supply, transport, dc_fixed, …)"),
    _c("model_cost", "float", "currency/yr", "model cost", "The component's cost of today's flows in the model"),
    _c("actual_spend", "float", "currency/yr", "actual spend", "The spend the accounts show (blank: not given)"),
    _c(
        "difference",
        "float",
        "currency/yr",
        "model − actual",
        "Model cost minus actual spend (blank: not given)",
        signed=True,
    ),
    _c(
        "difference_share",
        "float",
        "share",
        "model vs actual",
        "(model cost − actual spend) / actual spend (blank: not given or zero)",
        signed=True,
    ),
)
_table(
    "baseline_rules",
    "Rules of the case that today's flows do not meet (capacities, share caps, demand…), from the "
    "independent check; a finding about today, not corrected",
    "netopt baseline",
    _c("rule", "str", "text", "rule", "The rule today's flows break"),
    _c("violation", "float", "ratio", "violation", "Largest violation in the rule's own unit"),
    _c("relative_violation", "float", "ratio", "relative violation", "Violation over the rule's scale"),
    _c("where", "str", "text", "where", "The row of the largest violation"),
)
_table(
    "cost_to_serve",
    "Landed cost of each customer's demand of each product along its actual paths, by component; rows sum "
    "to the total landed cost; ranked (least profitable first with prices, else dearest per unit first)",
    "netopt solve / run",
    _c("rank", "int", "count", "rank", "1 = least profitable by margin share (with prices), else dearest per unit"),
    _c("customer", "str", "text", "customer", "Customer"),
    _c("product", "str", "text", "product", "Product"),
    _c("demand", "float", "units/yr", "demand units/yr", "Demand of the customer for the product"),
    _c("delivered", "float", "units/yr", "delivered units/yr", "Units delivered"),
    _c("supply", "float", "currency/yr", "supply", "Purchase price of the materials or goods in the units"),
    _c("production", "float", "currency/yr", "production", "Conversion at the plants that made them"),
    _c("transport_<leg>", "float", "currency/yr", "transport <leg>", "Freight on that leg of the paths"),
    _c("duties", "float", "currency/yr", "duties", "Import duties along the paths"),
    _c("dc_handling", "float", "currency/yr", "DC handling", "Handling at the DCs passed"),
    _c("dc_fixed", "float", "currency/yr", "DC fixed", "The DCs' fixed cost, allocated by throughput"),
    _c("pipeline_inventory", "float", "currency/yr", "pipeline stock", "Holding the units in transit"),
    _c("safety_stock", "float", "currency/yr", "safety stock", "The DCs' safety stock of the product, by throughput"),
    _c("carbon", "float", "currency/yr", "carbon", "Carbon price of the paths' CO2e"),
    _c("late_delivery", "float", "currency/yr", "late delivery", "The customer's late-delivery cost, by demand"),
    _c("unmet_penalty", "float", "currency/yr", "lost demand", "Demand not delivered, at the penalty"),
    _c(
        "overhead",
        "float",
        "currency/yr",
        "overhead",
        "Opening and closing costs, idle DCs' fixed cost and the holding of carried stock, by demand",
    ),
    _c(
        "stock_built",
        "float",
        "currency/yr",
        "stock built",
        "Cost of the period's units left in closing stock for later periods, by demand (0 in one year)",
    ),
    _c("cost", "float", "currency/yr", "cost to serve", "Sum of the components"),
    _c("cost_per_unit", "float", "currency/unit", "cost per unit", "Cost to serve per unit delivered"),
    _c("price", "float", "currency/unit", "price", "Net selling price (demand.price)"),
    _c("revenue", "float", "currency/yr", "revenue", "Delivered units × price"),
    _c("margin", "float", "currency/yr", "margin", "Revenue − cost to serve", signed=True, sense=-1),
    _c(
        "margin_share", "float", "share", "margin %", "Margin / revenue: the ranking with prices", signed=True, sense=-1
    ),
)
_table(
    "shadow_prices",
    "What one more unit/yr of each capacity is worth (supplier offers, plants, open DCs, capacitated lanes), "
    "from the held linear program of the plan; valid for small changes",
    "netopt solve / run",
    _c("type", "str", "text", "type", "supplier, plant, dc or lane"),
    _c("element", "str", "text", "element", "The supplier, plant, DC or lane (origin → destination by mode)"),
    _c("product", "str", "text", "product", "Product of the offer, plant row or product lane (blank: all)"),
    _c("capacity", "float", "units/yr", "capacity units/yr", "The capacity"),
    _c("used", "float", "units/yr", "used units/yr", "What the plan uses of it"),
    _c("shadow_price", "float", "currency/unit", "value per unit", "Cost saved per year by one more unit/yr"),
    _c("binding", "bool", "flag", "binding", "The plan uses all of it"),
)
_table(
    "lane_reduced_costs",
    "Every unused admissible arc (lane, mode, product) with the cut in its cost per unit that would bring it "
    "into use (reduced cost, from the held linear program of the plan); dominated modes included, arcs through "
    "a DC the plan keeps closed left out",
    "netopt solve / run",
    _c("origin", "str", "text", "from", "Site the arc leaves"),
    _c("destination", "str", "text", "to", "Site the arc reaches"),
    _c("mode", "str", "text", "mode", "Transport mode"),
    _c("product", "str", "text", "product", "Product or material"),
    _c("leg", "str", "text", "leg", "Kind of lane, e.g. dc-customer"),
    _c("unit_cost", "float", "currency/unit", "cost per unit", "The arc's cost per unit (all components)"),
    _c("reduced_cost", "float", "currency/unit", "reduced cost", "Cut in cost per unit before it would carry flow"),
)
