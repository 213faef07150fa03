"""How output values are shown, read from the declared units of :mod:`netopt.data.results_schema`.

A column's *kind* (money, share, days, volume, …) comes from its unit; a change (a declared
``signed`` column) is shown with its sign.  :func:`cell_text` gives the text of a value for
the report, the terminal and Markdown; :func:`excel_format` the workbook's number format.
"""

from __future__ import annotations

import math

import numpy as np

from netopt.data.result_views import KPIS
from netopt.data.results_schema import UNITS, ResultColumn, column_of, label_of

EXCEL_FORMATS = {  # kind → Excel number format ({cur}: the case currency as a literal suffix)
    "money": '#,##0" {cur}"',
    "rate": "#,##0.00",
    "volume": "#,##0",
    "share": "0.0%",
    "days": '0.00" d"',
    "count": "0",
    "decimal": "0.00##",
    "coordinate": "0.0000",
}


def unit_kind(unit: str) -> str:
    """The kind of a declared unit ("number" for a unit netopt does not declare)."""
    return UNITS[unit][0] if unit in UNITS else "number"


def display_kind(col: ResultColumn | None) -> str:
    """How a column's values are shown: its unit's kind; ``delta`` / ``delta_share`` for a change."""
    if col is None:
        return "number"
    if col.signed:
        return "delta_share" if col.kind == "share" else "delta"
    return col.kind


def column_kind(table: str, column: str) -> str:
    """The display kind of a column of a declared table."""
    return display_kind(column_of(table, column))


def kpi_kind(kpi: str) -> str:
    """The display kind of a row of the ``kpis`` table."""
    k = KPIS.get(kpi)
    return unit_kind(k.unit) if k is not None else "number"


def kpi_label(kpi: str) -> str:
    k = KPIS.get(kpi)
    return k.label if k is not None else kpi.replace("_", " ")


def unit_text(unit: str, currency: str = "") -> str:
    """A unit as shown to people: ``currency`` replaced by the case currency."""
    return unit.replace("currency", currency or "currency") if unit not in ("text", "flag") else ""


def excel_format(kind: str, currency: str = "") -> str | None:
    """The Excel number format of a display kind (None: text, flags, general numbers)."""
    signed = kind.startswith("delta")
    base = {"delta": "money", "delta_share": "share"}.get(kind, kind)
    f = EXCEL_FORMATS.get(base)
    if f is None:
        return None
    # The currency sits inside a quoted literal: a quote in it closes the literal, so it is written escaped.
    f = f.replace("{cur}", currency.replace('"', '"\\""')) if currency else f.replace('" {cur}"', "")
    return f"+{f};-{f};{f}" if signed else f


def cell_text(v, kind: str = "number") -> str:
    """A value's text: thousands separators, shares as %, days with 2 decimals, changes signed; '–' if blank."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "–"
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)) and kind not in ("share", "delta_share", "delta"):
        return f"{int(v):,}"
    if isinstance(v, (int, float, np.integer, np.floating)):
        v = float(v)
        if math.isinf(v):
            return "no limit" if v > 0 else "−∞"
        if kind == "share":
            return f"{v:.1%}"
        if kind in ("days", "rate"):
            return f"{v:,.2f}"
        if kind == "coordinate":
            return f"{v:.4f}"
        if kind == "delta":
            return f"{v:+,.0f}"
        if kind == "delta_share":
            return f"{v:+.2%}"
        if kind in ("money", "count") or abs(v) >= 100 or v == round(v):
            return f"{v:,.0f}"
        return f"{v:,.3g}" if abs(v) < 1 else f"{v:,.2f}"
    return str(v)


__all__ = [
    "cell_text",
    "column_kind",
    "display_kind",
    "excel_format",
    "kpi_kind",
    "kpi_label",
    "label_of",
    "unit_kind",
    "unit_text",
]
