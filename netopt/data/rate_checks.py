"""Checks of the freight rate tiers (:mod:`netopt.data.schema_rates`): bands and weight breaks that are
ranges, and a shipment size wherever a mode's tiers need one."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Problem
from netopt.data.text import format_number, row_number


def rate_tier_problems(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """Every tier whose band or weight break is empty, and every tier with a weight break or a minimum
    charge on a mode without ``shipment_kg``."""
    tiers = tables["rate_tiers"]
    problems: list[Problem] = []
    if tiers.empty:
        return problems
    for lo, hi in (("min_km", "max_km"), ("min_kg", "max_kg")):
        bad = tiers[tiers[lo].astype(float) >= tiers[hi].astype(float)]
        for r, row in bad.iterrows():
            problems.append(
                Problem(
                    "rate_tiers",
                    row_number(r),
                    hi,
                    f"{hi} {format_number(row[hi])} is not above {lo} {format_number(row[lo])}: the tier holds nothing",
                )
            )
    ship = tables["modes"].set_index("mode")["shipment_kg"].astype(float)
    needs = (
        (tiers["min_kg"].astype(float) > 0)
        | np.isfinite(tiers["max_kg"].astype(float))
        | (tiers["min_charge"].astype(float) > 0)
    )
    missing = needs & tiers["mode"].map(ship).isna()
    for r, mode in tiers.loc[missing, "mode"].items():
        problems.append(
            Problem(
                "rate_tiers",
                row_number(r),
                "mode",
                f"mode '{mode}' has no shipment_kg in modes: a weight break or minimum charge needs the "
                "average shipment weight",
            )
        )
    return problems
