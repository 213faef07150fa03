"""Build a validated case from Python data (DataFrames or lists of dicts), for scripts and tests."""

from __future__ import annotations

import copy

import pandas as pd

from netopt.data.case import Case, CaseError
from netopt.data.schema import TABLES
from netopt.data.settings_schema import setting_defaults
from netopt.data.validate import validate_and_coerce


def make_case(
    tables: dict[str, pd.DataFrame | list[dict]],
    settings: dict | None = None,
    name: str = "case",
    reachability: bool = True,
) -> Case:
    """Validate ``tables`` (missing optional tables and columns get schema defaults) into a Case.

    ``settings`` is ``{section: {name: value}}`` overriding the defaults.  Rows are
    numbered from 2, as they would be in a CSV file.  Raises :class:`CaseError` with
    every problem at once.
    """
    frames = {}
    for k, v in tables.items():
        df = pd.DataFrame(v) if not isinstance(v, pd.DataFrame) else v.copy()
        if df.empty and len(df.columns) == 0 and k in TABLES:
            df = pd.DataFrame(columns=TABLES[k].column_names)
        df.index = range(2, 2 + len(df))
        frames[k] = df
    merged = copy.deepcopy(setting_defaults())
    for sec, vals in (settings or {}).items():
        merged.setdefault(sec, {}).update(vals)
    built: dict = {}
    typed, typed_settings, problems = validate_and_coerce(frames, merged, reachability=reachability, built=built)
    if any(p.severity == "error" for p in problems):
        raise CaseError(problems)
    if not typed_settings["case"].get("name"):
        typed_settings["case"]["name"] = name
    return Case(
        name,
        typed,
        typed_settings,
        warnings=[p for p in problems if p.severity != "error"],
        generated_lanes=built.get("lanes"),
    )
