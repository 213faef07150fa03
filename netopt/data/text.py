"""Cells as text: the one way a value is written, parsed and named in a problem message.

Shared by coercion, the cross-table rules, reading and writing cases.
"""

from __future__ import annotations

import difflib
import math

import numpy as np
import pandas as pd


def format_number(value: float) -> str:
    """Shortest text that reads back as the same float; whole numbers without '.0'."""
    v = float(value)
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    if v.is_integer() and abs(v) < 1e16:
        return str(int(v))
    return repr(v)


def as_text(value) -> str:
    """One cell as the text a user would type: blank for missing, true/false for flags."""
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, str):
        return value.strip().lstrip("\ufeff").strip()
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (float, np.floating)):
        return format_number(float(value))
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    try:
        if pd.isna(value):
            return ""
    except (TypeError, ValueError):
        pass
    return str(value).strip()


def close_match_hint(name: str, known, cutoff: float = 0.6) -> str:
    """'; did you mean 'x'?' for the closest known name, or ''."""
    close = difflib.get_close_matches(name, list(known), n=1, cutoff=cutoff)
    if not close:
        low = {k.lower(): k for k in known}
        if name.lower() in low:
            close = [low[name.lower()]]
    return f"; did you mean '{close[0]}'?" if close else ""


def range_text(item, with_unit: bool = True) -> str:
    """'at least 0 kg/unit', 'between 0 and 1 share', 'greater than 0 km/day' for a Column or Setting."""
    lo, hi = item.min, item.max
    unit = f" {item.unit}" if item.unit and with_unit else ""
    if lo is not None and 0 < lo < 1e-6:
        text = "greater than 0" + (f" and at most {format_number(hi)}" if hi is not None else "")
    elif lo is not None and hi is not None:
        text = f"between {format_number(lo)} and {format_number(hi)}"
    elif lo is not None:
        text = f"at least {format_number(lo)}"
    else:
        text = f"at most {format_number(hi)}"
    return text + unit


def row_number(idx) -> int | None:
    """A table index value as the user's row number, None when it is not one."""
    try:
        return int(idx)
    except (TypeError, ValueError):
        return None


def parse_float(text: str) -> float | None:
    """Float of a text, None when it is not a number (NaN words count as missing, not here)."""
    try:
        v = float(text)
    except ValueError:
        return None
    return None if math.isnan(v) else v


def number_message(text: str, what: str = "number") -> str:
    """'number expected, got ...', with a hint when a decimal comma was used."""
    msg = f"{what} expected, got '{text}'"
    if "," in text and parse_float(text.replace(",", ".")) is not None:
        msg += " (use a dot for decimals and no thousands separators)"
    return msg
