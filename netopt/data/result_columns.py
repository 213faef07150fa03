"""Result columns shared by several output tables: one declaration each (see :mod:`netopt.data.results_schema`)."""

from __future__ import annotations

from netopt.data.result_types import result_column as _c

ORIGIN = _c("origin", "str", "text", "from", "Site the flow leaves")
DESTINATION = _c("destination", "str", "text", "to", "Site the flow reaches")
LEG = _c("leg", "str", "text", "leg", "Kind of lane, e.g. dc-customer")
MODE = _c("mode", "str", "text", "mode", "Transport mode")
PRODUCT = _c("product", "str", "text", "product", "Product or material")
QUANTITY = _c("quantity", "float", "units/yr", "units/yr", "Units moved or made per year")
DISTANCE = _c("distance_km", "float", "km", "distance km", "Lane distance")
TRANSIT = _c("transit_days", "float", "days", "transit days", "Door-to-door transit time")
DC = _c("dc", "str", "text", "DC", "Distribution centre")
CUSTOMER = _c("customer", "str", "text", "customer", "Customer")
REGION = _c("region", "str", "text", "region", "Region of the site")
UTILISATION = _c("utilisation", "float", "share", "utilisation", "Throughput over capacity (blank: no limit)")
CO2_KG = _c("co2_kg", "float", "kg CO2e/yr", "CO2e kg/yr", "Transport CO2e")
FREIGHT_COST = _c("freight_cost", "float", "currency/yr", "freight cost", "Freight cost")
PIPELINE_COST = _c("pipeline_cost", "float", "currency/yr", "pipeline cost", "Holding cost of stock in transit")
CARBON_COST = _c("carbon_cost", "float", "currency/yr", "carbon cost", "CO2e times the carbon price")
TOTAL_COST = _c("total_cost", "float", "currency/yr", "total cost", "Total landed cost", sense=1)
STATUS = _c("status", "str", "text", "status", "Solver status (optimal, time_limit, infeasible, …)")
GAP = _c("gap", "float", "share", "gap", "Proven optimality gap of the solve")
VERIFIED = _c("verified", "bool", "flag", "checked", "The independent check of the plan passed")
DCS_OPEN = _c(
    "dcs_open", "int", "count", "DCs open", "DCs open and working in the plan (a DC taken out is not counted)"
)
DCS_OPEN_NAMES = _c("dcs_open_names", "str", "text", "open DCs", "Codes of the open DCs, space-separated")
LOST_UNITS = _c("lost_units", "float", "units/yr", "lost units/yr", "Demand not delivered", sense=1)
LOST_VALUE = _c("lost_value", "float", "currency/yr", "lost value", "Penalty value of the demand lost", sense=1)
MODE_MIX = _c("mode_mix", "str", "text", "mode mix", "Share of tonne-km by mode, as text")
RANK = _c("rank", "int", "count", "rank", "Position in the ranking, 1 = largest impact")
TYPE = _c("type", "str", "text", "type", "Kind of element: supplier, plant, dc or lane")
WITHIN = _c("within_window", "bool", "flag", "in window", "Transit within the customer's service window")
