"""Checks of the share rules of single sites (:mod:`netopt.data.schema_shares`): a pair's site is a plant
or DC, and no floor lies above its own cap."""

from __future__ import annotations

import pandas as pd

from netopt.data.case import Problem
from netopt.data.text import format_number, row_number


def share_rule_problems(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """Every row of ``sourcing_shares`` whose site is not a plant or DC, and every row (there or in
    ``suppliers``) whose min_share is above its max_share."""
    problems: list[Problem] = []
    pairs = tables["sourcing_shares"]
    sites = set(tables["plants"]["plant"].astype(str)) | set(tables["dcs"]["dc"].astype(str))
    if len(pairs):
        bad = pairs[~pairs["site"].astype(str).isin(sites) & pairs["site"].astype(str).ne("")]
        for r, site in bad["site"].items():
            problems.append(Problem("sourcing_shares", row_number(r), "site", f"'{site}' is not a plant or DC"))
    for name in ("sourcing_shares", "suppliers"):
        df = tables[name]
        if df.empty or "min_share" not in df:
            continue
        lo, hi = df["min_share"].astype(float), df["max_share"].astype(float)
        for r in df.index[lo > hi + 1e-12]:
            problems.append(
                Problem(
                    name,
                    row_number(r),
                    "min_share",
                    f"min_share {format_number(lo[r])} is above this row's max_share {format_number(hi[r])}",
                )
            )
    return problems
