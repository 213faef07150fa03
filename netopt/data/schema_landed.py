"""The declared tables of landed cost as practitioners price it: import duties, border crossings and the
as-is flows a baseline costs (registered in order by :mod:`netopt.data.schema`, where the other tables are
declared), and the country column every site table carries."""

from __future__ import annotations

from netopt.data.declarations import Reference, Table
from netopt.data.declarations import column as _c

COUNTRY = _c(
    "country",
    "str",
    "",
    False,
    "",
    "ISO 3166-1 alpha-2 code of the site's country (e.g. DE, CN, GB); duties and borders apply between "
    "countries; blank = not stated (no duty or border applies to its lanes)",
)
"""The country column of every site table (suppliers, plants, dcs, customers)."""

DEMAND_PRICE = _c(
    "price",
    "float",
    "currency/unit",
    False,
    None,
    "Net selling price per unit (optional): cost_to_serve.csv then gives revenue and margin and ranks the "
    "least profitable customers first; blank = not given",
    min=0,
)
"""Column of ``demand``."""

DUTIES = Table(
    "duties",
    "Import duties (optional): what a product pays on lanes from an origin country (or an origin site's "
    "region) into a destination country, ad valorem on the customs value and/or per unit; its own cost "
    "component, duties.",
    (
        _c(
            "origin",
            "str",
            "",
            True,
            None,
            "Origin country (ISO 3166-1 alpha-2) or the region of the origin site (suppliers.region, dcs.region); "
            "a country row wins over a region row",
        ),
        _c("destination", "str", "", True, None, "Destination country (ISO 3166-1 alpha-2)"),
        _c(
            "product",
            "str",
            "",
            False,
            "",
            "Product or material the duty applies to; blank = every product (a product's own row wins)",
        ),
        _c(
            "ad_valorem",
            "float",
            "share",
            False,
            0.0,
            "Duty as a share of the customs value (0.05 = 5 %); the customs value is set by duties.customs_value",
            min=0,
            max=10,
        ),
        _c("per_unit", "float", "currency/unit", False, 0.0, "Duty per unit (specific duty)", min=0),
    ),
    key=("origin", "destination", "product"),
    required=False,
    references=(Reference("product", "products", "product", allow_blank=True),),
)

BORDERS = Table(
    "borders",
    "Border crossings (optional): days and cost a lane from one country into another adds (customs "
    "clearance, waiting, fees), on top of its transit time and freight; border days count in transit time, "
    "so service windows and stock in transit see them.",
    (
        _c("origin_country", "str", "", True, None, "Country the lane leaves (ISO 3166-1 alpha-2)"),
        _c("destination_country", "str", "", True, None, "Country the lane enters (ISO 3166-1 alpha-2)"),
        _c("days", "float", "days", False, 0.0, "Days the crossing adds to the lane's transit time", min=0),
        _c("cost_per_unit", "float", "currency/unit", False, 0.0, "Crossing cost per unit moved", min=0),
        _c("cost_per_tonne", "float", "currency/t", False, 0.0, "Crossing cost per tonne moved", min=0),
        _c(
            "both_ways",
            "bool",
            "",
            False,
            True,
            "true: the row also applies from destination_country into origin_country (a row of the reverse "
            "direction wins)",
        ),
    ),
    key=("origin_country", "destination_country"),
    required=False,
)

CURRENT_FLOWS = Table(
    "current_flows",
    "Today's flows (optional): the lanes, modes and annual volumes the network runs now; "
    "`netopt baseline` costs them with the same cost model as a solve, without optimising.",
    (
        _c("origin", "str", "", True, None, "Origin site (supplier, plant or DC)"),
        _c("destination", "str", "", True, None, "Destination site (plant, DC or customer)"),
        _c("mode", "str", "", True, None, "Transport mode used today"),
        _c("product", "str", "", True, None, "Product or material moved"),
        _c("quantity", "float", "units/year", True, None, "Units moved per year today", min=0),
    ),
    key=("origin", "destination", "mode", "product"),
    required=False,
    references=(Reference("mode", "modes", "mode"), Reference("product", "products", "product")),
)
