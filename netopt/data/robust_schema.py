"""The declared output tables of the robust-network study (``netopt robust``): the launch's demand
scenarios, every candidate plan's DC decisions, its cost and regret in each scenario, the regret
table (one row per candidate plan), the Bass adoption curve and past launches' forecast accuracy.
Registered with :mod:`netopt.data.result_registry`; :mod:`netopt.data.results_schema` imports this
module."""

from __future__ import annotations

from netopt.data.result_columns import CUSTOMER, DC, DCS_OPEN_NAMES, PRODUCT, STATUS, VERIFIED
from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import result_column as _c

SCENARIO = _c("scenario", "str", "text", "scenario", "Demand scenario: a case of the launch (low, base, high)")
PROBABILITY = _c("probability", "float", "share", "probability", "Probability of the scenario")
PLAN = _c(
    "plan",
    "str",
    "text",
    "plan",
    "Candidate plan: own:<scenario> (that scenario's own optimum), mean_value (the plan for the mean demand), "
    "stochastic (the two-stage plan of least expected cost), robust (the two-stage plan as the settings ask)",
)

_table(
    "scenario_demand",
    "The new product's demand in each scenario, by customer (the launch's analogue route or Bass diffusion)",
    "netopt robust",
    SCENARIO,
    PROBABILITY,
    CUSTOMER,
    PRODUCT,
    _c("demand", "float", "units/yr", "demand", "Units of the new product per year in the scenario"),
)
_table(
    "regret",
    "One row per candidate plan: its cost held in every scenario against each scenario's optimum",
    "netopt robust",
    PLAN,
    _c("kind", "str", "text", "kind", "own, mean_value or two_stage"),
    DCS_OPEN_NAMES,
    _c(
        "expected_cost",
        "float",
        "currency/yr",
        "expected cost",
        "Probability-weighted cost over the scenarios",
        sense=1,
    ),
    _c(
        "worst_cost",
        "float",
        "currency/yr",
        "worst cost",
        "Largest cost over the scenarios (blank: infeasible in one)",
        sense=1,
    ),
    _c("expected_regret", "float", "currency/yr", "expected regret", "Probability-weighted regret", sense=1),
    _c("max_regret", "float", "currency/yr", "max regret", "Largest regret over the scenarios", sense=1),
    _c(
        "min_max_regret",
        "bool",
        "flag",
        "min-max regret",
        "The plan of least maximum regret (ties: least expected cost; every plan with the same DCs is marked)",
    ),
    _c(
        "regret_<scenario>",
        "float",
        "currency/yr",
        "regret <scenario>",
        "Cost in the scenario minus the scenario's optimum (blank: the plan cannot serve it)",
        sense=1,
    ),
)
_table(
    "plan_costs",
    "Every candidate plan held in every scenario: its cost, the scenario's optimum and the regret",
    "netopt robust",
    PLAN,
    SCENARIO,
    PROBABILITY,
    _c(
        "cost",
        "float",
        "currency/yr",
        "cost",
        "Annual cost of the scenario with the plan's DCs held (blank: infeasible)",
        sense=1,
    ),
    _c("scenario_optimum", "float", "currency/yr", "optimum", "Least cost of any candidate plan in the scenario"),
    _c("regret", "float", "currency/yr", "regret", "cost − scenario_optimum", sense=1),
    STATUS,
    VERIFIED,
    _c(
        "method",
        "str",
        "text",
        "method",
        "warm LP (a held re-solve) or rebuilt (the scenario solved with the DCs fixed; also when a warm "
        "answer failed its check)",
    ),
)
_table(
    "plan_dcs",
    "The DC decisions of every candidate plan",
    "netopt robust",
    PLAN,
    DC,
    _c("open", "bool", "flag", "open", "The DC is open in the plan"),
    _c("size", "str", "text", "size", "Size option chosen (blank: the DC has no sizes, or is closed)"),
)
_table(
    "launch_adoption",
    "Bass diffusion of the launch year by year (method bass): share adopted, adopters, cumulative adopters",
    "netopt robust",
    _c("year", "int", "count", "year", "Year since launch"),
    _c("cumulative_share", "float", "share", "adopted", "F(t): share of the market adopted by the end of the year"),
    _c("adopters", "float", "units/yr", "adopters", "m (F(t) − F(t−1)): adopters (units) in the year"),
    _c("cumulative", "float", "units", "cumulative", "m F(t): adopters by the end of the year"),
)
_table(
    "forecast_accuracy",
    "Forecasts of past launches against actuals: mean absolute percentage error and bias",
    "netopt robust",
    _c("product", "str", "text", "past launch", "Past launch (past_launches.product)"),
    _c("periods", "int", "count", "periods", "Periods compared"),
    _c("mape", "float", "share", "MAPE", "Mean of |actual − forecast| / actual", sense=1),
    _c("bias", "float", "units", "bias", "Mean of forecast − actual (positive: forecast too high)", signed=True),
    _c("bias_share", "float", "share", "bias %", "Σ (forecast − actual) / Σ actual", signed=True),
)
