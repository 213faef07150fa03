"""The declared output tables of ABC/XYZ classification (``netopt classify``): one row per ranked
product or customer, and the classes' totals.  Registered with :mod:`netopt.data.result_registry`;
:mod:`netopt.data.results_schema` imports this module so every declaration is present wherever the
schema is read."""

from __future__ import annotations

from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import result_column as _c

_RANKED = (
    _c("rank", "int", "count", "rank", "Position by the ranking measure, 1 = largest (ties: by code)"),
    _c("item", "str", "text", "item", "Product or customer code"),
    _c("measure", "str", "text", "measure", "What ranks the items: usage_value, revenue, margin or volume"),
    _c("units", "float", "units/yr", "units/yr", "Annual demand"),
    _c("usage_value", "float", "currency/yr", "usage value", "Annual demand × unit value"),
    _c("revenue", "float", "currency/yr", "revenue", "Annual demand × unit price (blank: no prices given)"),
    _c("margin", "float", "currency/yr", "margin", "Revenue − usage value (blank: no prices given)"),
    _c("share", "float", "share", "share", "The item's share of the measure's total"),
    _c("cumulative_share", "float", "share", "cumulative share", "Share of the measure down to this item"),
    _c("item_share", "float", "share", "share of items", "Share of the items down to this one"),
    _c("class", "str", "text", "class", "ABC class: A, B or C"),
    _c("demand_cv", "float", "ratio", "demand CV", "Coefficient of variation of the item's annual demand"),
    _c("xyz", "str", "text", "XYZ", "Variability class: X (steadiest), Y or Z (blank: not asked)"),
)

_table(
    "abc_products",
    "Finished products ranked by the chosen measure, with their ABC (and XYZ) class",
    "netopt classify",
    *_RANKED,
)
_table(
    "abc_customers",
    "Customers ranked by the chosen measure, with their ABC (and XYZ) class",
    "netopt classify",
    *_RANKED,
)
_table(
    "abc_summary",
    "Per ranked set and class: items, their share of all items and of the measure",
    "netopt classify",
    _c("scope", "str", "text", "ranked", "products or customers"),
    _c("class", "str", "text", "class", "ABC class: A, B or C"),
    _c("items", "int", "count", "items", "Items in the class"),
    _c("item_share", "float", "share", "share of items", "Items in the class ÷ all items"),
    _c("value", "float", "ratio", "measure", "The class's total of the ranking measure (its unit: see measure)"),
    _c("value_share", "float", "share", "share of measure", "The class's share of the measure"),
    _c("measure", "str", "text", "measure", "The ranking measure"),
    _c("rule", "str", "text", "rule", "How the boundaries were set (value or item share, thresholds)"),
)
