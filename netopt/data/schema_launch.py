"""The declared launch tables of a case: new products forecast from an analogue or by diffusion, their
adjustments by region or customer, and past launches' forecasts against actuals (registered by
:mod:`netopt.data.schema`; their cross-table rules in :mod:`netopt.data.rules_launch`).

They feed ``netopt robust`` (:mod:`netopt.data.launch_demand` turns a launch into named demand
scenarios with probabilities); every other verb ignores them.
"""

from __future__ import annotations

from netopt.data.declarations import Reference, Table
from netopt.data.declarations import column as _c

LAUNCH_METHODS = ("analogue", "bass")
"""How a launch's demand level is set: its analogue's demand, or the peak year of a Bass diffusion."""

LAUNCHES = Table(
    "launches",
    "New products to launch (optional, for netopt robust): demand from an analogue product's demand by "
    "customer, scaled by a low, base and high factor, each with its probability; or (method bass) the peak "
    "year of a Bass diffusion spread over the customers as the analogue's demand is.",
    (
        _c("launch", "str", "", True, None, "Launch name"),
        _c("product", "str", "", True, None, "The new product (from products; it has no demand rows of its own)"),
        _c("analogue", "str", "", True, None, "Existing product whose demand by customer the launch follows"),
        _c(
            "method",
            "str",
            "",
            False,
            "analogue",
            "analogue: demand = analogue's × factor; bass: demand = Bass peak-year adopters × factor, spread "
            "over the customers by the analogue's shares",
            choices=LAUNCH_METHODS,
        ),
        _c("low", "float", "ratio", True, None, "Scale factor of the low case", min=0),
        _c("base", "float", "ratio", True, None, "Scale factor of the base case", min=0),
        _c("high", "float", "ratio", True, None, "Scale factor of the high case", min=0),
        _c("prob_low", "float", "probability", False, 0.25, "Probability of the low case", min=0, max=1),
        _c("prob_base", "float", "probability", False, 0.5, "Probability of the base case", min=0, max=1),
        _c("prob_high", "float", "probability", False, 0.25, "Probability of the high case", min=0, max=1),
        _c("bass_p", "float", "per year", False, 0.0, "Bass coefficient of innovation p (method bass)", min=0, max=1),
        _c("bass_q", "float", "per year", False, 0.0, "Bass coefficient of imitation q (method bass)", min=0, max=5),
        _c(
            "market_size",
            "float",
            "units",
            False,
            0.0,
            "Bass market size m: adopters over the life (method bass)",
            min=0,
        ),
        _c(
            "bass_years",
            "int",
            "years",
            False,
            10,
            "Years of the diffusion searched for the peak year (method bass)",
            min=1,
            max=100,
        ),
    ),
    key=("launch",),
    required=False,
    references=(Reference("product", "products", "product"), Reference("analogue", "products", "product")),
)

LAUNCH_ADJUSTMENTS = Table(
    "launch_adjustments",
    "Adjustments of a launch's demand against its analogue's (optional): a factor on one region or one "
    "customer (a different target market or marketing push); factors that meet on a customer multiply.",
    (
        _c("launch", "str", "", True, None, "Launch (from launches)"),
        _c("region", "str", "", False, "", "Customer region the factor applies to (blank: give a customer)"),
        _c("customer", "str", "", False, "", "Customer the factor applies to (blank: give a region)"),
        _c("factor", "float", "ratio", True, None, "Factor on the launch's demand there", min=0),
    ),
    key=("launch", "region", "customer"),
    required=False,
    references=(
        Reference("launch", "launches", "launch"),
        Reference("customer", "customers", "customer", allow_blank=True),
    ),
)

PAST_LAUNCHES = Table(
    "past_launches",
    "Forecasts of past launches against what sold (optional): netopt robust reports each one's mean "
    "absolute percentage error and bias.",
    (
        _c("product", "str", "", True, None, "Past launch (any name; need not be in products)"),
        _c("period", "str", "", True, None, "Period of the figures (e.g. a year)"),
        _c("forecast", "float", "units", True, None, "Units forecast for the period", min=0),
        _c("actual", "float", "units", True, None, "Units sold in the period", min=0),
    ),
    key=("product", "period"),
    required=False,
)
