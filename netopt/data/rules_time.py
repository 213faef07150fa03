"""Rules of the time tables that span tables: periods named without a periods table, the sites that
capacity by period and stock on hand may name, and what an earliest opening period may be set on."""

from __future__ import annotations

import pandas as pd

from netopt.data.case import Problem
from netopt.data.text import row_number

PERIOD_COLUMNS = (("demand", "period"), ("dcs", "earliest_period"), ("capacity_by_period", "period"))
"""Every column that names a period of the ``periods`` table."""


def _codes(df: pd.DataFrame, column: str) -> set[str]:
    if df.empty or column not in df:
        return set()
    s = df[column].astype(str)
    return set(s[s != ""])


def time_problems(
    tables: dict[str, pd.DataFrame], given: set[str], usable: set[str], settings: dict | None = None
) -> list[Problem]:
    """Problems of the time tables that their own declarations cannot see."""
    problems: list[Problem] = []
    has_periods = "periods" in given
    if settings is not None and "opening_stock" in given and not tables["opening_stock"].empty and has_periods:
        per = settings.get("periods", {})
        if not per.get("carry_stock", False):
            problems.append(
                Problem(
                    "opening_stock",
                    None,
                    None,
                    "stock on hand is not used in the plan: periods.carry_stock is off (only the resilience study "
                    "draws on it)",
                    "warning",
                )
            )
        elif per.get("repeat_year", False):
            problems.append(
                Problem(
                    "opening_stock",
                    None,
                    None,
                    "stock on hand is not used in the plan: periods.repeat_year starts the year from its last "
                    "period's closing stock (only the resilience study draws on it)",
                    "warning",
                )
            )
    if has_periods and "periods" in usable and tables["periods"].empty:
        problems.append(
            Problem("periods", None, None, "the periods table has no rows: the case is planned as one year", "warning")
        )
    if not has_periods:
        for table, column in PERIOD_COLUMNS:
            df = tables[table]
            if df.empty or column not in df:
                continue
            named = df[column].astype(str) != ""
            for r in df.index[named]:
                problems.append(
                    Problem(
                        table,
                        row_number(r),
                        column,
                        f"period '{df.at[r, column]}' named, but the case has no periods table (periods.csv)",
                    )
                )
    dcs = tables["dcs"]
    if not dcs.empty and "earliest_period" in dcs:
        bad = (dcs["earliest_period"].astype(str) != "") & dcs["status"].astype(str).eq("existing")
        for r in dcs.index[bad]:
            problems.append(
                Problem(
                    "dcs",
                    row_number(r),
                    "earliest_period",
                    f"DC '{dcs.at[r, 'dc']}' is existing: an earliest opening period applies to candidate DCs only",
                )
            )
    sites = {
        "capacity_by_period": (
            _codes(tables["suppliers"], "supplier") | _codes(tables["plants"], "plant") | _codes(dcs, "dc"),
            "a supplier, plant or DC",
        ),
        "opening_stock": (_codes(tables["plants"], "plant") | _codes(dcs, "dc"), "a plant or DC"),
    }
    for table, (known, what) in sites.items():
        df = tables[table]
        if df.empty or table not in usable:
            continue
        site = df["site"].astype(str)
        for r in df.index[(site != "") & ~site.isin(known)]:
            problems.append(Problem(table, row_number(r), "site", f"'{site[r]}' is not {what} of the case"))
    return problems
