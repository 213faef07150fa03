"""The declared tables of a netopt case (the settings are in :mod:`netopt.data.settings_schema`).

Every table a case may hold, every column of it (type, unit, required or not,
default, meaning), each table's key and the references between tables live
here and nowhere else.  Templates, loading, default filling, validation and the
documentation in ``data_templates/`` are all generated from these declarations.

Types: ``str`` (text), ``float`` (number), ``int`` (whole number), ``bool``
(true/false, yes/no, 1/0).  A ``float`` column whose default is ``inf`` means
"no limit" when left blank.
"""

from __future__ import annotations

from netopt.data.declarations import INF, Reference, Table
from netopt.data.declarations import column as _c
from netopt.data.schema_landed import BORDERS, COUNTRY, CURRENT_FLOWS, DEMAND_PRICE, DUTIES
from netopt.data.schema_launch import LAUNCH_ADJUSTMENTS, LAUNCHES, PAST_LAUNCHES
from netopt.data.schema_rates import RATE_TIERS
from netopt.data.schema_shares import DC_REGION_SHARE, SOURCING_SHARES, SUPPLIER_MIN_SHARE
from netopt.data.schema_time import CAPACITY_BY_PERIOD, DEMAND_PERIOD, OPENING_STOCK, PERIODS
from netopt.data.schema_transport import LANE_MATRIX, LANES, LEGS, MODES, ROAD_EDGES

LAT = _c("lat", "float", "degrees", True, None, "Latitude, WGS84, north positive", min=-90, max=90)
LON = _c("lon", "float", "degrees", True, None, "Longitude, WGS84, east positive", min=-180, max=180)

TABLES: dict[str, Table] = {}


def _table(t: Table) -> Table:
    TABLES[t.name] = t
    return t


_table(
    Table(
        "products",
        "Finished products sold to customers and materials bought from suppliers.",
        (
            _c("product", "str", "", True, None, "Product or material code"),
            _c(
                "kind",
                "str",
                "",
                False,
                "finished",
                "finished (made or bought, sold to customers) or material (used by plants)",
                choices=("finished", "material"),
            ),
            _c("unit_weight_kg", "float", "kg/unit", True, None, "Shipping weight of one unit", min=0),
            _c(
                "unit_value",
                "float",
                "currency/unit",
                True,
                None,
                "Value of one unit held in stock or in transit",
                min=0,
            ),
            _c(
                "holding_rate",
                "float",
                "share of value per year",
                False,
                None,
                "Annual inventory carrying rate; blank = the settings' inventory.holding_rate",
                min=0,
                max=5,
            ),
            _c(
                "lost_sale_cost",
                "float",
                "currency/unit",
                False,
                None,
                "Cost of each unit of this product's demand not served (where lost demand is allowed and in the "
                "resilience study); blank = the settings' policy.unmet_penalty_per_unit, or 2 × unit_value",
                min=0,
            ),
            _c(
                "demand_cv",
                "float",
                "ratio",
                False,
                0.0,
                "Coefficient of variation of annual demand per customer (for safety stock)",
                min=0,
            ),
            _c(
                "cycle_service_level",
                "float",
                "share",
                False,
                None,
                "Chance of no stock-out in a replenishment cycle, for this product's safety stock; blank = "
                "the settings' inventory.cycle_service_level (netopt classify can set it per ABC class)",
                min=0.5,
                max=0.99999,
            ),
            _c(
                "unit_price",
                "float",
                "currency/unit",
                False,
                None,
                "Selling price of one unit, for ranking by revenue or margin (netopt classify); blank = not given",
                min=0,
            ),
        ),
        key=("product",),
    )
)

_table(
    Table(
        "suppliers",
        "A supplier's offer of one product or material (one row per supplier and product; optional: a "
        "network without suppliers leaves the file out).",
        (
            _c("supplier", "str", "", True, None, "Supplier site code"),
            _c("product", "str", "", True, None, "Product or material offered"),
            LAT,
            LON,
            COUNTRY,
            _c("region", "str", "", False, "", "Supplier region, for diversification by region"),
            _c(
                "capacity",
                "float",
                "units/year",
                False,
                INF,
                "Most units this supplier can deliver per year; blank = no limit",
                min=0,
            ),
            _c("unit_cost", "float", "currency/unit", True, None, "Purchase price per unit, at the supplier", min=0),
            _c(
                "lead_time_sd_days",
                "float",
                "days",
                False,
                0.0,
                "Standard deviation of this supplier's lead time",
                min=0,
            ),
            _c(
                "time_to_recover_days",
                "float",
                "days",
                False,
                None,
                "Days to restore this supplier after a disruption (rows of one supplier: the longest counts); "
                "blank = settings' resilience.time_to_recover_days",
                min=0,
            ),
            _c(
                "max_share",
                "float",
                "share",
                False,
                1.0,
                "Most this supplier may provide of any one site's supply of the product, beside the "
                "policy's max_supplier_share (the smaller counts); blank = 1, no cap of its own",
                min=0,
                max=1,
            ),
            SUPPLIER_MIN_SHARE,
        ),
        key=("supplier", "product"),
        required=False,
        references=(Reference("product", "products", "product"),),
    )
)

_table(
    Table(
        "plants",
        "A plant's ability to make one finished product (one row per plant and product; optional: a "
        "network without plants, where suppliers sell the finished products, leaves the file out).",
        (
            _c("plant", "str", "", True, None, "Plant site code"),
            _c("product", "str", "", True, None, "Finished product made here"),
            LAT,
            LON,
            COUNTRY,
            _c(
                "capacity",
                "float",
                "units/year",
                False,
                INF,
                "Most units of this product the plant can make per year",
                min=0,
            ),
            _c(
                "unit_cost",
                "float",
                "currency/unit",
                False,
                0.0,
                "Conversion cost per unit made (materials excluded)",
                min=0,
            ),
            _c(
                "storage_capacity",
                "float",
                "units",
                False,
                INF,
                "Most units of this product the plant may hold as stock carried between periods",
                min=0,
            ),
            _c(
                "time_to_recover_days",
                "float",
                "days",
                False,
                None,
                "Days to restore this plant after a disruption (rows of one plant: the longest counts); "
                "blank = settings' resilience.time_to_recover_days",
                min=0,
            ),
            _c(
                "max_supplier_share",
                "float",
                "share",
                False,
                1.0,
                "Most any one supplier may provide of this plant's supply of a material, beside the policy's "
                "max_supplier_share (the smaller counts; rows of one plant: the smallest); blank = 1, none",
                min=0,
                max=1,
            ),
        ),
        key=("plant", "product"),
        required=False,
        references=(Reference("product", "products", "product"),),
    )
)

_table(
    Table(
        "bill_of_materials",
        "Materials used per unit of a finished product (optional).",
        (
            _c("product", "str", "", True, None, "Finished product"),
            _c("material", "str", "", True, None, "Material consumed"),
            _c(
                "quantity_per_unit",
                "float",
                "units of material per unit of product",
                True,
                None,
                "Material units consumed per product unit made",
                min=0,
            ),
        ),
        key=("product", "material"),
        required=False,
        references=(Reference("product", "products", "product"), Reference("material", "products", "product")),
    )
)

_table(
    Table(
        "dcs",
        "Existing and candidate distribution centres.",
        (
            _c("dc", "str", "", True, None, "DC site code"),
            LAT,
            LON,
            COUNTRY,
            _c(
                "status",
                "str",
                "",
                False,
                "candidate",
                "existing (may be kept or closed) or candidate (may be opened)",
                choices=("existing", "candidate"),
            ),
            _c("fixed_cost", "float", "currency/year", False, 0.0, "Annual cost of running the DC while open", min=0),
            _c(
                "capacity",
                "float",
                "units/year",
                False,
                INF,
                "Most units the DC can handle (throughput) per year",
                min=0,
            ),
            _c("handling_cost", "float", "currency/unit", False, 0.0, "Cost per unit passing through the DC", min=0),
            _c(
                "closing_cost",
                "float",
                "currency",
                False,
                0.0,
                "One-off cost of closing an existing DC, counted once: in the period it closes (a case "
                "without periods counts it in its one year, so annualise it there)",
                min=0,
            ),
            _c(
                "opening_cost",
                "float",
                "currency",
                False,
                0.0,
                "One-off cost of opening a candidate DC, counted once like closing_cost",
                min=0,
            ),
            _c(
                "earliest_period",
                "str",
                "",
                False,
                "",
                "First period in which a candidate DC may be open; blank = any (needs a periods table)",
            ),
            _c(
                "storage_capacity",
                "float",
                "units",
                False,
                INF,
                "Most units the DC may hold as stock carried between periods (all products)",
                min=0,
            ),
            _c("region", "str", "", False, "", "Region the DC belongs to"),
            _c(
                "force",
                "str",
                "",
                False,
                "",
                "open or closed to fix the decision; out: unavailable (nothing moves through it) while "
                "keeping it paid or closing it stays a decision; blank lets the model choose",
                choices=("", "open", "closed", "out"),
            ),
            _c(
                "time_to_recover_days",
                "float",
                "days",
                False,
                None,
                "Days to restore this DC after a disruption; blank = settings' resilience.time_to_recover_days",
                min=0,
            ),
            _c(
                "max_supplier_share",
                "float",
                "share",
                False,
                1.0,
                "Most any one supplier may provide of this DC's supply of a product, beside the policy's "
                "max_supplier_share (the smaller counts); blank = 1, none",
                min=0,
                max=1,
            ),
            DC_REGION_SHARE,
        ),
        key=("dc",),
        references=(Reference("earliest_period", "periods", "period", allow_blank=True),),
    )
)

_table(
    Table(
        "dc_sizes",
        "Size options of a DC (optional): at most one size is chosen per site, replacing the dcs row's capacity and fixed cost.",
        (
            _c("dc", "str", "", True, None, "DC site code"),
            _c("size", "str", "", True, None, "Name of the size option"),
            _c("capacity", "float", "units/year", True, None, "Throughput capacity of this size", min=0),
            _c("fixed_cost", "float", "currency/year", True, None, "Annual fixed cost of this size", min=0),
        ),
        key=("dc", "size"),
        required=False,
        references=(Reference("dc", "dcs", "dc"),),
    )
)

_table(
    Table(
        "customers",
        "Customer demand zones.",
        (
            _c("customer", "str", "", True, None, "Customer zone code"),
            LAT,
            LON,
            COUNTRY,
            _c("region", "str", "", False, "", "Sales region (for demand scaling and reports)"),
            _c(
                "service_class",
                "str",
                "",
                False,
                "standard",
                "Service class; its window and target are in service_classes",
            ),
        ),
        key=("customer",),
    )
)

_table(
    Table(
        "demand",
        "Annual demand by customer and product.",
        (
            _c("customer", "str", "", True, None, "Customer zone"),
            _c("product", "str", "", True, None, "Finished product"),
            _c("quantity", "float", "units/year", True, None, "Annual demand (a rate per year within a period)", min=0),
            DEMAND_PERIOD,
            _c(
                "demand_cv",
                "float",
                "ratio",
                False,
                None,
                "Coefficient of variation of this demand; blank = the product's demand_cv",
                min=0,
            ),
            DEMAND_PRICE,
        ),
        key=("customer", "product", "period"),
        references=(
            Reference("customer", "customers", "customer"),
            Reference("product", "products", "product"),
            Reference("period", "periods", "period", allow_blank=True),
        ),
    )
)

_table(
    Table(
        "service_classes",
        "Service windows and targets per class (optional; without it the settings' policy.service_* apply to all).",
        (
            _c("service_class", "str", "", True, None, "Service class name"),
            _c("max_days", "float", "days", True, None, "Delivery window: transit days of the last leg", min=0),
            _c(
                "target_share",
                "float",
                "share of demand",
                True,
                None,
                "Least share of each customer's demand that must arrive within the window",
                min=0,
                max=1,
            ),
            _c(
                "late_cost_per_unit",
                "float",
                "currency/unit",
                False,
                None,
                "Cost of each unit of demand short of the target within the window (late delivery); "
                "blank = the settings' policy.late_cost_per_unit; 0 = the target is a hard rule",
                min=0,
            ),
        ),
        key=("service_class",),
        required=False,
    )
)

_LATER: tuple[Table, ...] = (PERIODS, CAPACITY_BY_PERIOD, OPENING_STOCK, MODES, RATE_TIERS, LANES)
_LATER += (LANE_MATRIX, ROAD_EDGES, SOURCING_SHARES, DUTIES, BORDERS, CURRENT_FLOWS)
_LATER += (LAUNCHES, LAUNCH_ADJUSTMENTS, PAST_LAUNCHES)
for _t in _LATER:  # in schema order
    _table(_t)


def schema_frame():
    """The whole table schema as one DataFrame (one row per table column)."""
    import pandas as pd

    rows = []
    for t in TABLES.values():
        for c in t.columns + ((t.open_columns,) if t.open_columns is not None else ()):
            rows.append(
                {
                    "table": t.name,
                    "column": c.name,
                    "type": c.type,
                    "unit": c.unit,
                    "required": "yes" if c.required else "no",
                    "default": "" if c.default is None else ("no limit" if c.default == INF else str(c.default)),
                    "key": "yes" if c.name in t.key else "no",
                    "meaning": c.meaning
                    + (f" (one of: {', '.join(v or '(blank)' for v in c.choices)})" if c.choices else ""),
                }
            )
    return pd.DataFrame(rows)


__all__ = ["INF", "LAT", "LEGS", "LON", "TABLES", "schema_frame"]
