"""The declared time tables of a case: planning periods, site capacity by period and stock on hand
(registered in order by :mod:`netopt.data.schema`, where the other tables are declared).

A case without a ``periods`` table plans one average year, exactly as before.  With one, every
period is planned as a year (or a season) of its own, linked by the DC decisions that carry from one
period to the next and, where the settings say so, by stock carried between periods
(:mod:`netopt.data.periods` derives each period's own case).
"""

from __future__ import annotations

from netopt.data.declarations import INF, Reference, Table
from netopt.data.declarations import column as _c

DEMAND_PERIOD = _c(
    "period",
    "str",
    "",
    False,
    "",
    "Period this row is for (from periods); blank = every period without a row of its own",
)
"""The demand table's optional period column."""

PERIODS = Table(
    "periods",
    "Planning periods in time order (optional): years of a multi-year phasing plan, or seasons of one year.",
    (
        _c("period", "str", "", True, None, "Period name (e.g. 2027, or spring); rows are taken in time order"),
        _c(
            "years",
            "float",
            "years",
            True,
            None,
            "Length of the period in years (1 for a year, 0.25 for a quarter); rates per year apply within it",
            min=1e-6,
            max=100,
        ),
        _c(
            "discount_factor",
            "float",
            "ratio",
            False,
            None,
            "Present-value factor of the period's costs; blank = from the settings' periods.discount_rate",
            min=0,
            max=1,
        ),
        _c(
            "cost_index",
            "float",
            "ratio",
            False,
            1.0,
            "Price level of the period against the tables' costs (1.05 = every cost 5 % dearer)",
            min=0,
        ),
        _c(
            "max_openings",
            "int",
            "DCs",
            False,
            -1,
            "Most DCs that may open in this period; -1 = no limit",
            min=-1,
        ),
        _c(
            "opening_budget",
            "float",
            "currency",
            False,
            INF,
            "Most one-off opening cost (dcs.opening_cost, undiscounted) spent in this period; blank = no limit",
            min=0,
        ),
    ),
    key=("period",),
    required=False,
)

CAPACITY_BY_PERIOD = Table(
    "capacity_by_period",
    "Capacity of a supplier, plant or DC in one period against its tables' capacity (optional).",
    (
        _c("site", "str", "", True, None, "Supplier, plant or DC code"),
        _c("period", "str", "", True, None, "Period (from periods)"),
        _c(
            "capacity_factor",
            "float",
            "ratio",
            True,
            None,
            "Multiplies every capacity of the site in that period (0 = not available; 1.2 = 20 % more)",
            min=0,
        ),
    ),
    key=("site", "period"),
    required=False,
    references=(Reference("period", "periods", "period"),),
)

OPENING_STOCK = Table(
    "opening_stock",
    "Stock on hand at the start, per site and product (optional): the first period's opening stock when "
    "stock is carried between periods, and stock the resilience study can draw on.",
    (
        _c("site", "str", "", True, None, "Plant or DC code"),
        _c("product", "str", "", True, None, "Product held"),
        _c("quantity", "float", "units", True, None, "Units on hand", min=0),
    ),
    key=("site", "product"),
    required=False,
    references=(Reference("product", "products", "product"),),
)
