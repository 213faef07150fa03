"""Rules of the launch tables that span tables: a launch's probabilities add up to one, its new product
has no demand of its own while its analogue has some, a Bass launch has its coefficients, an adjustment
names one region or one customer, and a past launch's actuals can be divided by."""

from __future__ import annotations

import pandas as pd

from netopt.data.case import Problem
from netopt.data.text import row_number

PROBABILITY_TOLERANCE = 1e-6
"""How far a launch's probabilities may sum from 1."""


def launch_problems(tables: dict[str, pd.DataFrame], usable: set[str]) -> list[Problem]:
    """Problems of the launch tables that their own declarations cannot see."""
    problems: list[Problem] = []
    if "launches" in usable:
        problems += _launch_rows(tables)
    if "launch_adjustments" in usable:
        problems += _adjustment_rows(tables)
    if "past_launches" in usable:
        past = tables["past_launches"]
        for r in past.index[past["actual"].astype(float) <= 0]:
            problems.append(
                Problem(
                    "past_launches",
                    row_number(r),
                    "actual",
                    f"actual of '{past.at[r, 'product']}' in '{past.at[r, 'period']}' is 0: the percentage "
                    "error divides by it (leave the period out)",
                )
            )
    return problems


def _launch_rows(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    out: list[Problem] = []
    la = tables["launches"]
    dem = tables["demand"]
    units = dem.groupby("product")["quantity"].sum() if len(dem) else pd.Series(dtype=float)
    kinds = tables["products"].set_index("product")["kind"] if len(tables["products"]) else pd.Series(dtype=str)
    for r in la.index:
        row, name = row_number(r), la.at[r, "launch"]
        new, ana = str(la.at[r, "product"]), str(la.at[r, "analogue"])
        if new == ana:
            out.append(Problem("launches", row, "analogue", f"launch '{name}': the analogue is the new product itself"))
        if float(units.get(new, 0.0)) > 0 or (len(dem) and dem["product"].eq(new).any()):
            out.append(
                Problem(
                    "launches",
                    row,
                    "product",
                    f"launch '{name}': product '{new}' has demand rows; a launch's demand comes from its scenarios "
                    "(remove the product's rows from demand)",
                )
            )
        if float(units.get(ana, 0.0)) <= 0:
            out.append(Problem("launches", row, "analogue", f"launch '{name}': analogue '{ana}' has no demand"))
        for col, p in (("product", new), ("analogue", ana)):
            if str(kinds.get(p, "finished")) != "finished":
                out.append(
                    Problem("launches", row, col, f"launch '{name}': '{p}' is a material, not a finished product")
                )
        total = sum(float(la.at[r, c]) for c in ("prob_low", "prob_base", "prob_high"))
        if abs(total - 1.0) > PROBABILITY_TOLERANCE:
            out.append(
                Problem(
                    "launches",
                    row,
                    "prob_base",
                    f"launch '{name}': prob_low + prob_base + prob_high = {total:g}, not 1",
                )
            )
        if str(la.at[r, "method"]) == "bass":
            for col in ("bass_p", "market_size"):
                if not float(la.at[r, col]) > 0:
                    out.append(Problem("launches", row, col, f"launch '{name}': method bass needs {col} above 0"))
    return out


def _adjustment_rows(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    out: list[Problem] = []
    adj = tables["launch_adjustments"]
    regions = set(tables["customers"]["region"].astype(str)) if len(tables["customers"]) else set()
    for r in adj.index:
        row = row_number(r)
        region, customer = str(adj.at[r, "region"]), str(adj.at[r, "customer"])
        if bool(region) == bool(customer):
            out.append(
                Problem(
                    "launch_adjustments",
                    row,
                    "region" if not region else "customer",
                    "give a region or a customer, not both" if region else "give a region or a customer",
                )
            )
        elif region and region not in regions:
            out.append(Problem("launch_adjustments", row, "region", f"no customer is in region '{region}'"))
    return out
