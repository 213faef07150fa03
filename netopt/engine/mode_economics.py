"""Mode economics per lane: every admissible mode of each used origin → destination and product.

For each (origin, destination, product) that carries flow in the solution, one row per mode
the network allows there (dominated modes that were pruned before the solve included), with:

- per unit (currency/unit): ``freight``, ``pipeline`` (in-transit holding: value × holding
  rate × transit days / 365), ``carbon`` (CO2e × carbon price), ``total`` = their sum;
  ``co2_kg_per_unit``; ``transit_days``; ``within_window`` (last legs only, blank on
  other legs: transit within the customer's service window); ``capacity`` (units/yr, lane-and-mode or product limit);
- if the pair's whole quantity went by this mode (currency/yr, kg/yr): ``freight_cost``,
  ``pipeline_cost``, ``carbon_cost``, ``total_cost``, ``co2_kg``;
- against the solution: ``chosen`` (flow on this mode), ``flow`` and ``share`` of the pair's
  units, ``switch_cost`` = total_cost − the pair's actual cost (currency/yr; > 0: switching costs
  more), ``switch_co2_kg`` (kg/yr), ``cost_per_t_co2_saved`` = switch_cost / tonnes saved
  where switching saves CO2e (currency per t, an abatement cost);
- ``pruned``: the mode is no better than another in cost, time and CO2e and was dropped
  before solving.

Purchase price and DC handling do not depend on the mode and are left out.  Safety stock is
left out too: the model ties it to each DC's fastest inbound lane, not to the mode chosen
(see :mod:`netopt.model.safety_stock`).  A switch that breaks a service window or a capacity
is shown with its cost all the same; ``within_window`` and ``capacity`` say why it was not made.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

KEYS = ["origin", "destination", "product"]
COLUMNS = [
    "origin",
    "destination",
    "leg",
    "product",
    "quantity",
    "mode",
    "chosen",
    "flow",
    "share",
    "distance_km",
    "transit_days",
    "within_window",
    "capacity",
    "pruned",
    "freight",
    "pipeline",
    "carbon",
    "total",
    "co2_kg_per_unit",
    "freight_cost",
    "pipeline_cost",
    "carbon_cost",
    "total_cost",
    "co2_kg",
    "switch_cost",
    "switch_co2_kg",
    "cost_per_t_co2_saved",
    "cheapest",
    "lowest_co2",
]


def mode_economics(net, flows: pd.DataFrame) -> pd.DataFrame:
    """The mode table of a solution (see module docstring); one row per used pair, product and admissible mode."""
    if flows.empty:
        return pd.DataFrame(columns=COLUMNS)
    arcs = net.arcs_all if getattr(net, "arcs_all", None) is not None else net.arcs
    used = flows.groupby(KEYS + ["mode"], as_index=False)["quantity"].sum().rename(columns={"quantity": "flow"})
    pairs = used.groupby(KEYS, as_index=False)["flow"].sum().rename(columns={"flow": "quantity"})
    a = arcs[
        KEYS
        + [
            "leg",
            "mode",
            "distance_km",
            "transit_days",
            "within_window",
            "capacity",
            "lane_capacity",
            "freight_per_unit",
            "pipeline_per_unit",
            "carbon_per_unit",
            "co2_kg_per_unit",
        ]
    ]
    t = pairs.merge(a, on=KEYS, how="inner").merge(used, on=KEYS + ["mode"], how="left")
    kept = net.arcs[KEYS + ["mode"]].assign(_kept=True)
    t = t.merge(kept, on=KEYS + ["mode"], how="left")
    t["pruned"] = t["_kept"].isna()
    t["flow"] = t["flow"].fillna(0.0)
    t["chosen"] = t["flow"] > 1e-7
    t["share"] = t["flow"] / t["quantity"]
    t["capacity"] = np.minimum(t["capacity"].to_numpy(float), t["lane_capacity"].to_numpy(float))
    t["within_window"] = t["within_window"].astype("boolean").where(t["leg"].str.endswith("customer"), pd.NA)
    t = t.rename(columns={"freight_per_unit": "freight", "pipeline_per_unit": "pipeline", "carbon_per_unit": "carbon"})
    t["total"] = t["freight"] + t["pipeline"] + t["carbon"]
    q = t["quantity"].to_numpy(float)
    for col, src in (
        ("freight_cost", "freight"),
        ("pipeline_cost", "pipeline"),
        ("carbon_cost", "carbon"),
        ("total_cost", "total"),
        ("co2_kg", "co2_kg_per_unit"),
    ):
        t[col] = q * t[src].to_numpy(float)
    actual = (t["flow"] * t["total"]).groupby([t[k] for k in KEYS]).transform("sum")
    actual_co2 = (t["flow"] * t["co2_kg_per_unit"]).groupby([t[k] for k in KEYS]).transform("sum")
    t["switch_cost"] = t["total_cost"] - actual
    t["switch_co2_kg"] = t["co2_kg"] - actual_co2
    saved_t = -t["switch_co2_kg"] / 1000.0
    t["cost_per_t_co2_saved"] = np.where(saved_t > 1e-9, t["switch_cost"] / saved_t.where(saved_t > 1e-9), np.nan)
    grp = t.groupby(KEYS)
    t["cheapest"] = t["total"] <= grp["total"].transform("min") + 1e-12
    t["lowest_co2"] = t["co2_kg_per_unit"] <= grp["co2_kg_per_unit"].transform("min") + 1e-12
    t = t.sort_values(["leg", "origin", "destination", "product", "total"]).reset_index(drop=True)
    return t[COLUMNS]
