"""The declared transport tables of a case: modes, lanes and road or rail edges (registered in
order by :mod:`netopt.data.schema`, where the other tables are declared)."""

from __future__ import annotations

from netopt.data.declarations import INF, Reference, Table
from netopt.data.declarations import column as _c
from netopt.data.emission_factors import schema_note as emission_schema_note
from netopt.data.limits import MAX_DAYS
from netopt.data.schema_rates import SHIPMENT_KG

LEGS = ("supplier-plant", "supplier-dc", "plant-dc", "plant-customer", "dc-customer", "dc-dc")
"""The kinds of lane netopt models, in their order in the lane table."""

MODES = Table(
    "modes",
    "Transport modes with their rates, speeds and emission factors.",
    (
        _c("mode", "str", "", True, None, "Mode name (e.g. road, rail, ocean, air)"),
        _c("cost_per_tonne_km", "float", "currency/(t·km)", True, None, "Freight rate per tonne-kilometre", min=0),
        _c(
            "fixed_cost_per_unit",
            "float",
            "currency/unit",
            False,
            0.0,
            "Per-unit charge independent of distance",
            min=0,
        ),
        _c("speed_km_per_day", "float", "km/day", True, None, "Door-to-door travelling speed", min=1e-9),
        _c(
            "handling_days",
            "float",
            "days",
            False,
            0.0,
            "Days added per shipment for loading, transfer, customs",
            min=0,
        ),
        _c("circuity", "float", "ratio", False, 1.0, "Route km per great-circle km", min=1),
        _c(
            "co2_kg_per_tonne_km",
            "float",
            "kg CO2e/(t·km)",
            False,
            0.0,
            "Emission factor per tonne-km of route distance (CO2e = tonnes × km × factor); blank = 0. "
            + emission_schema_note(),
            min=0,
        ),
        _c("min_km", "float", "km", False, 0.0, "Shortest lane this mode is used on", min=0),
        _c("max_km", "float", "km", False, INF, "Longest lane this mode is used on", min=0),
        _c(
            "generate_lanes",
            "bool",
            "",
            False,
            True,
            "true: lanes of this mode are generated from coordinates; false: only explicit lanes",
        ),
        _c(
            "legs",
            "str",
            "",
            False,
            "",
            "Legs the mode may serve, separated by |, from: " + ", ".join(LEGS) + "; blank = the settings' lanes.legs",
        ),
        SHIPMENT_KG,
    ),
    key=("mode",),
)


LANES = Table(
    "lanes",
    "Explicit lanes (optional): add to or override the lanes generated from coordinates.",
    (
        _c("origin", "str", "", True, None, "Origin site (supplier, plant or DC)"),
        _c("destination", "str", "", True, None, "Destination site (plant, DC or customer)"),
        _c("mode", "str", "", True, None, "Transport mode"),
        _c("product", "str", "", False, "", "Product this row applies to; blank = every product"),
        _c("distance_km", "float", "km", False, None, "Route distance; blank = great-circle × circuity", min=0),
        _c(
            "cost_per_unit",
            "float",
            "currency/unit",
            False,
            None,
            "Freight cost per unit; blank = from distance, weight and rate",
            min=0,
        ),
        _c(
            "transit_days",
            "float",
            "days",
            False,
            None,
            "Transit time; blank = distance / speed + handling days",
            min=0,
        ),
        _c(
            "capacity",
            "float",
            "units/year",
            False,
            INF,
            "Most units per year on this lane and mode (all products)",
            min=0,
        ),
        _c("available", "bool", "", False, True, "false removes the lane (also a generated one)"),
    ),
    key=("origin", "destination", "mode", "product"),
    required=False,
    references=(Reference("mode", "modes", "mode"), Reference("product", "products", "product", allow_blank=True)),
)


MEASURES = ("cost_per_unit", "distance_km", "transit_days")
"""What a row of the lane matrix holds, each as the lanes table's column of the same name."""

LANE_MATRIX = Table(
    "lane_matrix",
    "Explicit lanes as a matrix (optional): one row per origin, mode and measure, one column per destination "
    "(a cost, distance or transit-time matrix as a rate sheet or a published set gives it).  A filled cell is "
    "a lane of that mode from the row's origin to the column's destination; a blank cell is no lane.  Rows of "
    "several measures for one origin and mode describe the same lanes (a measure left out, or blank where "
    "another is filled, is computed as for a blank in the lanes table).  A row of the lanes table replaces the "
    "matrix's lane of the same origin, destination, mode and product.  The lanes table is the same data one "
    "row per lane.",
    (
        _c("origin", "str", "", True, None, "Origin site (supplier, plant or DC)"),
        _c("mode", "str", "", True, None, "Transport mode"),
        _c(
            "measure",
            "str",
            "",
            True,
            None,
            "What the row's cells hold: cost_per_unit (currency/unit), distance_km (km) or transit_days (days)",
            choices=MEASURES,
        ),
        _c("product", "str", "", False, "", "Product the row's lanes apply to; blank = every product"),
    ),
    key=("origin", "mode", "measure", "product"),
    required=False,
    references=(Reference("mode", "modes", "mode"), Reference("product", "products", "product", allow_blank=True)),
    open_columns=_c(
        "<destination>",
        "float",
        "",
        False,
        None,
        "Every other column is named by a destination site (plant, DC or customer); a cell is the row's "
        f"measure for the lane from the row's origin to that destination (transit days at most {MAX_DAYS:,.0f}); blank = no lane",
        min=0,
    ),
)


ROAD_EDGES = Table(
    "road_edges",
    "Road or rail network edges (optional): distances become shortest paths over this graph.",
    (
        _c("from_node", "str", "", True, None, "A site code or a junction name"),
        _c("to_node", "str", "", True, None, "A site code or a junction name"),
        _c("km", "float", "km", True, None, "Edge length", min=0),
        _c("mode", "str", "", False, "", "Mode using this edge; blank = every generated mode"),
    ),
    key=("from_node", "to_node", "mode"),
    required=False,
)
