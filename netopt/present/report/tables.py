"""HTML tables of the report: cells formatted by their declared unit, comparison colours."""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.result_views import COMPARISON_VIEW, KPIS
from netopt.data.results_schema import column_of, label_of
from netopt.present.formats import cell_text, column_kind, kpi_kind, kpi_label, unit_text

MAX_TABLE_ROWS = 60


def table(
    df: pd.DataFrame,
    source: str = "",
    columns: list[str] | None = None,
    tid: str = "",
    max_rows: int | None = MAX_TABLE_ROWS,
    labels: dict[str, str] | None = None,
    kinds: dict[str, str] | None = None,
) -> dict:
    """A table for the template: header labels and rows of (text, css class).

    Labels and number formats are those declared for the columns of result table ``source``;
    ``labels`` and ``kinds`` override them for columns made on the page.
    """
    columns = [c for c in (list(df.columns) if columns is None else columns) if c in df.columns]
    labels, kinds = labels or {}, kinds or {}
    shown = df if max_rows is None else df.head(max_rows)
    col_kinds = [kinds.get(c) or column_kind(source, c) for c in columns]
    rows = []
    for rec in shown[columns].itertuples(index=False):
        cells = []
        for v, k in zip(rec, col_kinds):
            num = isinstance(v, (int, float, np.number)) and not isinstance(v, (bool, np.bool_))
            cells.append((cell_text(v, k), "num" if num else ""))
        rows.append(cells)
    return {
        "id": tid,
        "headers": [
            (
                labels.get(c) or label_of(source, c),
                "num" if pd.api.types.is_numeric_dtype(df[c]) and not pd.api.types.is_bool_dtype(df[c]) else "",
            )
            for c in columns
        ],
        "rows": rows,
        "total_rows": len(df),
        "shown": len(shown),
    }


def service_class_table(service: pd.DataFrame) -> dict | None:
    """Per service class: window (days), target and achieved share within the window, units/yr."""
    need = {"service_class", "max_days", "target_share", "delivered", "within_window", "demand"}
    if service.empty or not need <= set(service.columns):
        return None
    sv = service.assign(service_class=service["service_class"].fillna("").astype(str).replace("", "(none)"))
    g = sv.groupby(["service_class", "max_days", "target_share"], as_index=False, dropna=False).agg(
        customers=("demand", "size"),
        demand=("demand", "sum"),
        delivered=("delivered", "sum"),
        within=("within_window", "sum"),
        met=("target_met", "sum"),
    )
    # As the service table: units within the window ÷ demand, never ÷ what is delivered.
    g["share_within_window"] = np.where(g["demand"] > 0, g["within"] / g["demand"].where(g["demand"] > 0), np.nan)
    return table(
        g,
        "service",
        ["service_class", "max_days", "target_share", "share_within_window", "customers", "met"],
        tid="service-classes",
        labels={"customers": "customers", "met": "meeting target"},
        kinds={"customers": "count", "met": "count"},
    )


def kpi_table(kpis: pd.DataFrame, currency: str) -> dict:
    """The indicator table, each value formatted by its declared unit (shares as %, days, money)."""
    rows = []
    for name, v in zip(kpis["kpi"], kpis["value"]):
        k = KPIS.get(str(name))
        rows.append(
            [
                (kpi_label(str(name)), ""),
                (cell_text(float(v), kpi_kind(str(name))), "num"),
                (unit_text(k.unit, currency) if k is not None else "", ""),
                (k.meaning if k is not None else "", ""),
            ]
        )
    return {
        "id": "kpi-table",
        "headers": [("indicator", ""), ("value", "num"), ("unit", ""), ("meaning", "")],
        "rows": rows,
        "total_rows": len(rows),
        "shown": len(rows),
    }


MONEY_COLUMNS = ("total_cost", "delta_cost", "delta_pct")


def money_tolerance(comp: pd.DataFrame, row) -> float:
    """The row's ``gap_tolerance`` (currency/yr, from the comparison table): cost changes smaller than
    this are within the optimality gaps of the base and of the row's solve, and are not coloured."""
    v = pd.to_numeric(pd.Series([row.get("gap_tolerance", np.nan)]), errors="coerce").iloc[0]
    return float(v) if np.isfinite(v) else 0.5


def comparison_table(comp: pd.DataFrame) -> dict:
    """The scenario comparison with changes against the base coloured (red worse, green better).

    A cost change is coloured when it is larger than the optimality gap allows (see
    :func:`money_tolerance`); other columns when their shown value differs from the base's.
    """
    cols = [
        (c, label_of("comparison", c), column_kind("comparison", c), getattr(column_of("comparison", c), "sense", 0))
        for c in COMPARISON_VIEW
        if c in comp.columns
    ]
    if "status" in comp and comp["status"].eq("optimal").all():
        cols = [c for c in cols if c[0] != "status"]
    base = comp.iloc[0]
    base_total = float(base.get("total_cost", np.nan))
    rows = []
    for _, r in comp.iterrows():
        cells = []
        for c, _, k, sense in cols:
            v = r[c]
            cls = "num" if k not in ("text", "flag") else ""
            if c == "verified":
                ok = isinstance(v, (bool, np.bool_)) and bool(v)  # NaN (no plan to check) is not a pass
                cls = "ok" if ok else "bad"
                text = "yes" if ok else "no"
            elif c == "status":
                text = str(v)
                cls = "" if v == "optimal" else "warn"
            else:
                text = cell_text(v, k)
            numeric = isinstance(v, (int, float, np.number)) and not isinstance(v, (bool, np.bool_))
            if sense and r.name != comp.index[0] and numeric and np.isfinite(float(v)):
                if c in MONEY_COLUMNS:
                    d = float(r["total_cost"]) - base_total if c != "total_cost" else float(v) - base_total
                    changed = abs(d) > money_tolerance(comp, r)
                else:
                    b = base[c]
                    d = float(v) - float(b) if b is not None and np.isfinite(float(b)) else 0.0
                    changed = text != cell_text(b, k)
                if changed and d:
                    cls += " worse" if d * sense > 0 else " better"
            cells.append((text, cls.strip()))
        rows.append(cells)
    return {
        "id": "comparison-table",
        "headers": [(n, "" if k in ("text", "flag") else "num") for _, n, k, _ in cols],
        "rows": rows,
        "total_rows": len(comp),
        "shown": len(comp),
    }
