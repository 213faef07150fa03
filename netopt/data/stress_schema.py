"""The declared output tables of the stress study (``netopt stress``): single points of
failure, time to survive against time to recover, and the run's facts.  Registered with
:mod:`netopt.data.result_registry`; :mod:`netopt.data.results_schema` imports this module so
every declaration is present wherever the schema is read."""

from __future__ import annotations

from netopt.data.result_columns import (
    LOST_UNITS,
    LOST_VALUE,
    RANK,
    STATUS,
    TYPE,
)
from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import result_column as _c

_table(
    "spof_ranking",
    "Single points of failure: each element out on its own, the network re-solved holding the base's DCs",
    "netopt stress",
    RANK,
    _c("element", "str", "text", "element", "The supplier, plant, DC or lane taken out"),
    TYPE,
    _c("base_units", "float", "units/yr", "base units/yr", "Units through it in the base"),
    _c("recovery_cost", "float", "currency/yr", "recovery cost", "Change in landed cost per year of outage"),
    LOST_UNITS,
    LOST_VALUE,
    _c("impact", "float", "currency/yr", "impact", "recovery cost + lost value + rule relief cost"),
    _c("customers_affected", "int", "count", "customers affected", "Customers short or served differently"),
    _c("customers_short", "int", "count", "customers short", "Customers short of demand"),
    _c("took_over", "str", "text", "took over", "Elements of the same kind whose volume rose most"),
    _c("took_over_units", "float", "units/yr", "took over units/yr", "Their added units/yr"),
    _c("rules_bent", "str", "text", "rules bent", "Rules exceeded in the disruption, at base shadow prices"),
    _c("rule_relief_units", "float", "units/yr", "rule relief units", "Units beyond the rules"),
    _c("rule_relief_cost", "float", "currency/yr", "rule relief cost", "Those units at the rules' shadow prices"),
    _c("total_cost", "float", "currency/yr", "total cost", "Landed cost of the disrupted network"),
    _c("delta_objective", "float", "currency/yr", "Δ objective", "Objective change", signed=True),
    STATUS,
    _c("id", "str", "text", "id", "Element id (type:code)"),
    _c("redesign_status", "str", "text", "redesign status", "Status of the redesign re-solve (--redesign)"),
    _c("redesign_total_cost", "float", "currency/yr", "redesign total cost", "Landed cost when redesigned"),
    _c("redesign_recovery_cost", "float", "currency/yr", "redesign recovery cost", "Recovery cost when redesigned"),
    _c("redesign_lost_units", "float", "units/yr", "redesign lost units/yr", "Lost units when redesigned"),
    _c("redesign_lost_value", "float", "currency/yr", "redesign lost value", "Lost value when redesigned"),
    _c("redesign_dc_changes", "str", "text", "redesign DC changes", "DCs opened or closed by the redesign"),
    aliases=("spof",),
)
_table(
    "exposure",
    "Per supplier, plant and open DC: time to survive against time to recover, and the demand lost",
    "netopt stress",
    RANK,
    _c("node", "str", "text", "node", "Supplier, plant or DC"),
    _c("type", "str", "text", "type", "supplier, plant or dc"),
    _c("ttr_days", "float", "days", "TTR days", "Time to recover: how long the node stays down"),
    _c("tts_days", "float", "days", "TTS days", "Time to survive: how long all demand is still met"),
    _c("tts_capped", "bool", "flag", "TTS capped", "TTS reached the horizon (the loss never hurts)"),
    _c("lost_units", "float", "units", "lost units", "Units lost over the TTR"),
    _c("lost_value", "float", "currency", "lost value", "Value lost over the TTR"),
    _c("rei", "float", "ratio", "REI", "Risk-exposure index: lost value / the largest lost value"),
    _c("customers_short", "int", "count", "customers short", "Customers short of demand"),
    _c("shortage_days", "float", "days", "shortage days", "max(TTR − TTS, 0)"),
    _c("tts_below_ttr", "bool", "flag", "at risk", "TTS shorter than TTR: needs mitigation"),
    _c("stock_units", "float", "units", "stock units", "Stock held at or travelling into the node"),
)
_table(
    "stress_run",
    "Facts of a stress run (key, value as text)",
    "netopt stress",
    _c("key", "str", "text", "fact", "Name of the fact"),
    _c("value", "str", "text", "value", "Its value, as text"),
    aliases=("run", "info"),
)
