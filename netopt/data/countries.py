"""Country codes: ISO 3166-1 alpha-2 (an open standard), read from the ``pycountry`` package's copy of
the ISO list, and the checks of every column that holds one (site countries, duties, borders)."""

from __future__ import annotations

import pandas as pd
import pycountry

from netopt.data.case import Problem
from netopt.data.text import row_number

ISO_ALPHA2: frozenset[str] = frozenset(c.alpha_2 for c in pycountry.countries)
"""Every officially assigned ISO 3166-1 alpha-2 code."""

SITE_COUNTRY_TABLES = ("suppliers", "plants", "dcs", "customers")
"""Site tables with a ``country`` column."""


def _bad_code(code: str) -> str | None:
    """Why ``code`` is not an ISO 3166-1 alpha-2 code, or None when it is one."""
    if code in ISO_ALPHA2:
        return None
    if code.upper() in ISO_ALPHA2:
        return f"'{code}' is not an ISO 3166-1 alpha-2 code: write it in capitals, '{code.upper()}'"
    if code == "UK":  # ISO reserves UK; the United Kingdom is GB (common practice, no source)
        return "'UK' is not an ISO 3166-1 alpha-2 code: the United Kingdom is 'GB'"
    return f"'{code}' is not an ISO 3166-1 alpha-2 country code"


def _column(table: str, df: pd.DataFrame, column: str, also: set[str] | None = None, what: str = "") -> list[Problem]:
    """A problem per row whose ``column`` is neither blank, an ISO code nor one of ``also``."""
    if df.empty or column not in df.columns:
        return []
    vals = df[column].astype(str)
    suspect = vals.ne("") & ~vals.isin(ISO_ALPHA2) & ~vals.isin(also or set())
    out = []
    for r, code in vals[suspect].items():
        why = _bad_code(code) or ""
        out.append(Problem(table, row_number(r), column, why + (f" {what}" if what else "")))
    return out


def country_problems(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    """Every country code that is not ISO 3166-1 alpha-2: site countries, the duties' destinations (and
    origins that are not a region of the suppliers or DCs) and both countries of each border."""
    problems: list[Problem] = []
    for t in SITE_COUNTRY_TABLES:
        problems += _column(t, tables[t], "country")
    regions = {str(r) for t in ("suppliers", "dcs") for r in tables[t]["region"] if str(r)}
    problems += _column("duties", tables["duties"], "origin", regions, "nor a region of the suppliers or DCs")
    problems += _column("duties", tables["duties"], "destination")
    problems += _column("borders", tables["borders"], "origin_country")
    problems += _column("borders", tables["borders"], "destination_country")
    return problems
