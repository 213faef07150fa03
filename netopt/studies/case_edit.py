"""A case copy being edited by scenario changes, and the helpers every change kind uses."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from netopt.data.case import Case
from netopt.data.schema import TABLES

Change = dict  # one change: {"kind": ..., field: value, ...}


@dataclass
class CaseEdit:
    """A case copy being edited by a scenario's changes, with the look-ups every kind needs."""

    case: Case
    sites: dict[str, str]  # site code → supplier | plant | dc | customer
    modes: set[str]
    lanes_changed: bool = False  # a change edited what the lane table is built from
    errors: list[str] = field(default_factory=list)

    @property
    def tables(self) -> dict[str, pd.DataFrame]:
        return self.case.tables

    def text(self, ch: Change, key: str) -> str:
        return str(ch.get(key, "")).strip()

    def number(self, ch: Change, key: str, minimum: float = 0.0) -> float | None:
        """Field ``key`` as a number ≥ ``minimum``, or None with an error recorded."""
        value = ch.get(key)
        try:
            v = float(value)  # type: ignore[arg-type]
        except (TypeError, ValueError, OverflowError):
            self.errors.append(f"{key} must be a number, not {value!r}")
            return None
        if np.isnan(v) or v < minimum:
            self.errors.append(f"{key} must be ≥ {minimum:g}, not {value!r}")
            return None
        return v


def site_kinds(case: Case) -> dict[str, str]:
    """Site code → supplier | plant | dc | customer."""
    t = case.tables
    out = {}
    for table, col, kind in (
        ("suppliers", "supplier", "supplier"),
        ("plants", "plant", "plant"),
        ("dcs", "dc", "dc"),
        ("customers", "customer", "customer"),
    ):
        for s in t[table][col].astype(str):
            out[s] = kind
    return out


def append_row(df: pd.DataFrame, table: str, values: dict) -> pd.DataFrame:
    """``df`` with one more row of ``table`` (schema defaults for absent columns)."""
    t = TABLES[table]
    row = {c.name: values.get(c.name, c.default) for c in t.columns}
    nxt = (int(df.index.max()) + 1) if len(df) else 2
    return pd.concat([df, pd.DataFrame([row], index=[nxt])]).astype(
        {c: df[c].dtype for c in df.columns if c in row}, errors="ignore"
    )
