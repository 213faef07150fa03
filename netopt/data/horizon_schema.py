"""The declared outputs of a plan over periods (a case with a ``periods`` table): the periods with
their weights, the DC phasing, the cost per period and the stock carried (registered from
:mod:`netopt.data.results_schema`; every other table of such a plan gains the ``period`` column,
:data:`netopt.data.result_types.PERIOD`)."""

from __future__ import annotations

from netopt.data.result_columns import DC, PRODUCT
from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import PERIOD
from netopt.data.result_types import result_column as _c

_table(
    "periods",
    "The planning periods in time order, with the weights that turn their costs into a present value",
    "netopt solve / run (a case with periods)",
    PERIOD,
    _c("years", "float", "years", "years", "Length of the period"),
    _c("discount_factor", "float", "ratio", "discount factor", "Present-value factor at the period's start"),
    _c("cost_index", "float", "ratio", "price level", "Price level of the period against the tables' costs"),
    _c("max_openings", "int", "count", "most openings", "Most DCs that may open in the period (-1 = no limit)"),
    _c("opening_budget", "float", "currency", "opening budget", "Most one-off opening cost spent in the period"),
    _c("start_year", "float", "years", "starts after", "Years before the period starts"),
    _c(
        "annual_weight",
        "float",
        "years",
        "annual weight",
        "Present value of one currency unit per year of annual cost over the period (price level × years × "
        "discounting)",
    ),
    _c("one_off_weight", "float", "ratio", "one-off weight", "Present value of one currency unit spent at its start"),
)
_table(
    "phasing",
    "Each DC in each period: open or not, and whether it opens or closes at the period's start",
    "netopt solve / run (a case with periods)",
    DC,
    PERIOD,
    _c("status", "str", "text", "status", "existing or candidate"),
    _c("open", "bool", "flag", "open", "The DC is open in the period"),
    _c("size", "str", "text", "size", "Size option chosen (blank: the DC has none)"),
    _c("state", "str", "text", "state", "opens, open, closes or closed in this period"),
)
_table(
    "period_cost",
    "Cost of each period by component: the annual rate, the period's spend and its present value",
    "netopt solve / run (a case with periods)",
    PERIOD,
    _c("component", "str", "text", "component", "Cost component (dc_opening and dc_closing are one-off)"),
    _c("annual", "float", "currency/yr", "per year", "Annual cost at the tables' prices (blank for one-off costs)"),
    _c(
        "undiscounted",
        "float",
        "currency",
        "spend",
        "Spend in the period: annual × price level × years, or the one-off cost",
    ),
    _c("present_value", "float", "currency", "present value", "The spend discounted to the first period's start"),
)
_table(
    "stock",
    "Stock carried between periods per site and product (a case whose settings carry stock)",
    "netopt solve / run (a case with periods)",
    PERIOD,
    _c("site", "str", "text", "site", "Plant or DC holding the stock"),
    _c("site_kind", "str", "text", "site kind", "plant or dc"),
    PRODUCT,
    _c("opening", "float", "units", "opening", "Units at the period's start"),
    _c("closing", "float", "units", "closing", "Units at the period's end (carried into the next)"),
    _c("years", "float", "years", "years", "Length of the period"),
    _c("holding_cost", "float", "currency/yr", "holding cost", "Cost of holding the closing stock"),
)
