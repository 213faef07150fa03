"""The report of a plan over periods: the phasing of the DCs and the cost of each period.

The rest of the report shows one period's network (``Result.period_view``, the last period: the
network the phasing leads to); the phasing section shows every period.
"""

from __future__ import annotations

from netopt.present.report.charts import cost_bars_svg
from netopt.present.report.tables import table


def phasing_sections(result, currency: str) -> list[dict]:
    """Report sections (as ``_extra_sections`` makes them): the DC phasing matrix with the spend per
    period charted, and the cost per period with present values."""
    ph = result.tables["phasing"]
    names = [str(p) for p in result.periods["period"]]
    matrix = ph.pivot(index="dc", columns="period", values="state").reindex(columns=names)
    matrix = matrix.loc[list(dict.fromkeys(ph["dc"]))].reset_index()
    pc = result.tables["period_cost"]
    spend = [dict(zip(g["component"], g["undiscounted"])) for _, g in pc.groupby("period", sort=False)]
    chart = cost_bars_svg(names, spend, currency, tol=float("inf"), axis="spend in the period, {} (undiscounted)")
    totals = pc.groupby("period", sort=False)[["undiscounted", "present_value"]].sum().reset_index()
    return [
        {
            "id": "phasing",
            "title": "Phasing of the DCs",
            "note": "Each DC in each period: opens (at the period's start), open, closes or closed. The chart is "
            f"each period's spend by component ({currency}, undiscounted); the network above is the last period's.",
            "chart": chart,
            "table": table(matrix, "phasing", tid="phasing-table", max_rows=None),
        },
        {
            "id": "period-cost",
            "title": "Cost per period",
            "note": f"Spend in each period and its present value ({currency}); the plan's objective is the sum of "
            "the present values. period_cost.csv has every component.",
            "chart": "",
            "table": table(totals, "period_cost", tid="period-cost-table", max_rows=None),
        },
    ]
