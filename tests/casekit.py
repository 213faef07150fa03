"""A tiny valid case for tests: invented firms at real city coordinates.

``make_case_dir(tmp_path, **overrides)`` writes it as a case folder and returns the
folder.  Each override is a table name (or ``settings`` / ``scenarios``) with:

- a list of row dicts: replaces the table (columns = union of the dicts' keys, in order);
- a str: written as the raw file text (CSV, or TOML for settings/scenarios);
- None: the file is left out;
- for ``settings`` a nested dict ``{section: {name: value}}`` merged over the tiny
  case's settings.

Rows numbers of a table written from ``TINY[table]`` are 2, 3, ... (header = line 1).
"""

from __future__ import annotations

import copy
import csv
from pathlib import Path

from netopt.data.writing import scenarios_toml, toml_value

TINY: dict[str, list[dict]] = {
    "products": [
        {
            "product": "widget",
            "kind": "finished",
            "unit_weight_kg": "12",
            "unit_value": "80",
            "holding_rate": "",
            "demand_cv": "0.3",
        },
        {
            "product": "gadget",
            "kind": "finished",
            "unit_weight_kg": "3.5",
            "unit_value": "45",
            "holding_rate": "0.2",
            "demand_cv": "",
        },
        {
            "product": "steel",
            "kind": "material",
            "unit_weight_kg": "1",
            "unit_value": "0.9",
            "holding_rate": "",
            "demand_cv": "",
        },
    ],
    "suppliers": [
        {
            "supplier": "ORE-N",
            "product": "steel",
            "lat": "51.43",
            "lon": "6.76",
            "region": "west",
            "capacity": "",
            "unit_cost": "0.8",
            "lead_time_sd_days": "2",
        },
        {
            "supplier": "ORE-S",
            "product": "steel",
            "lat": "48.31",
            "lon": "14.29",
            "region": "east",
            "capacity": "50000",
            "unit_cost": "0.85",
            "lead_time_sd_days": "",
        },
        {
            "supplier": "GAD-CO",
            "product": "gadget",
            "lat": "45.46",
            "lon": "9.19",
            "region": "south",
            "capacity": "",
            "unit_cost": "30",
            "lead_time_sd_days": "1",
        },
    ],
    "plants": [
        {
            "plant": "PL-LYON",
            "product": "widget",
            "lat": "45.76",
            "lon": "4.84",
            "capacity": "20000",
            "unit_cost": "15",
        },
    ],
    "bill_of_materials": [
        {"product": "widget", "material": "steel", "quantity_per_unit": "10"},
    ],
    "dcs": [
        {
            "dc": "DC-PAR",
            "lat": "48.86",
            "lon": "2.35",
            "status": "existing",
            "fixed_cost": "250000",
            "capacity": "",
            "handling_cost": "1.5",
            "closing_cost": "100000",
            "region": "west",
            "force": "",
            "time_to_recover_days": "",
        },
        {
            "dc": "DC-FRA",
            "lat": "50.11",
            "lon": "8.68",
            "status": "candidate",
            "fixed_cost": "200000",
            "capacity": "30000",
            "handling_cost": "1.2",
            "closing_cost": "",
            "region": "east",
            "force": "",
            "time_to_recover_days": "21",
        },
    ],
    "customers": [
        {"customer": "CU-BRU", "lat": "50.85", "lon": "4.35", "region": "west", "service_class": "standard"},
        {"customer": "CU-MUC", "lat": "48.14", "lon": "11.58", "region": "east", "service_class": ""},
    ],
    "demand": [
        {"customer": "CU-BRU", "product": "widget", "quantity": "1000", "demand_cv": ""},
        {"customer": "CU-BRU", "product": "gadget", "quantity": "200", "demand_cv": "0.5"},
        {"customer": "CU-MUC", "product": "widget", "quantity": "500", "demand_cv": ""},
    ],
    "modes": [
        {
            "mode": "road",
            "cost_per_tonne_km": "0.09",
            "fixed_cost_per_unit": "0.2",
            "speed_km_per_day": "600",
            "handling_days": "0.5",
            "circuity": "1.2",
            "co2_kg_per_tonne_km": "0.1",
            "min_km": "",
            "max_km": "",
            "generate_lanes": "true",
            "legs": "",
        },
        {
            "mode": "rail",
            "cost_per_tonne_km": "0.04",
            "fixed_cost_per_unit": "0.5",
            "speed_km_per_day": "400",
            "handling_days": "2",
            "circuity": "1.3",
            "co2_kg_per_tonne_km": "0.03",
            "min_km": "300",
            "max_km": "",
            "generate_lanes": "yes",
            "legs": "supplier-plant|plant-dc",
        },
    ],
}

TINY_SETTINGS: dict[str, dict[str, object]] = {
    "case": {"name": "tiny", "currency": "EUR"},
    "solver": {"time_limit_s": 30.0},
    "policy": {"max_open_dcs": 2},
}


def tiny_rows() -> dict[str, list[dict]]:
    """A fresh deep copy of the tiny case's rows (all values as text)."""
    return copy.deepcopy(TINY)


def write_rows(path: Path, rows: list[dict]) -> None:
    """Rows of dicts as a CSV file (columns = union of keys in first-seen order)."""
    cols: list[str] = []
    for r in rows:
        for k in r:
            if k not in cols:
                cols.append(k)
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(cols)
        for r in rows:
            w.writerow(["" if r.get(c) is None else r.get(c) for c in cols])


def _merge(base: dict, extra: dict) -> dict:
    out = copy.deepcopy(base)
    for sec, entries in extra.items():
        if isinstance(entries, dict):
            out.setdefault(sec, {}).update(entries)
        else:
            out[sec] = entries
    return out


def settings_text(settings: dict) -> str:
    """Nested ``{section: {name: value}}`` as TOML."""
    lines = []
    for sec, entries in settings.items():
        if not isinstance(entries, dict):
            lines.insert(0, f"{sec} = {toml_value(entries)}")
            continue
        lines.append(f"[{sec}]")
        lines += [f"{k} = {toml_value(v)}" for k, v in entries.items()]
        lines.append("")
    return "\n".join(lines)


def make_case_dir(tmp_path, name: str = "tiny", **overrides) -> Path:
    """Write the tiny case (with overrides) as a case folder ``tmp_path/name``; return the folder."""
    folder = Path(tmp_path) / name
    folder.mkdir(parents=True, exist_ok=False)
    tables = tiny_rows()
    for table, rows in list(tables.items()) + [(k, v) for k, v in overrides.items() if k not in tables]:
        if table in ("settings", "scenarios"):
            continue
        rows = overrides.get(table, rows)
        if rows is None:
            continue
        path = folder / f"{table}.csv"
        if isinstance(rows, str):
            path.write_text(rows, encoding="utf-8")
        else:
            write_rows(path, rows)
    settings = overrides.get("settings", {})
    if isinstance(settings, str):
        (folder / "settings.toml").write_text(settings, encoding="utf-8")
    elif settings is not None:
        (folder / "settings.toml").write_text(settings_text(_merge(TINY_SETTINGS, settings)), encoding="utf-8")
    scenarios = overrides.get("scenarios")
    if isinstance(scenarios, str):
        (folder / "scenarios.toml").write_text(scenarios, encoding="utf-8")
    elif scenarios:
        (folder / "scenarios.toml").write_text(scenarios_toml(scenarios), encoding="utf-8")
    return folder
