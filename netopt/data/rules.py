"""Rules that span a case's tables: keys, references, one namespace of site codes,
sites whose rows agree, lanes between the right kinds of site, mode ranges, open-DC counts.
"""

from __future__ import annotations

import pandas as pd

from netopt.data.case import Problem
from netopt.data.countries import country_problems
from netopt.data.rate_checks import rate_tier_problems
from netopt.data.rules_launch import launch_problems
from netopt.data.rules_time import time_problems
from netopt.data.schema import LEGS, TABLES
from netopt.data.share_checks import share_rule_problems
from netopt.data.text import as_text, close_match_hint, format_number, row_number

SITE_TABLES = (("suppliers", "supplier"), ("plants", "plant"), ("dcs", "dc"), ("customers", "customer"))
"""The four tables whose codes share one namespace of sites, with their code column."""

ORIGIN_KINDS = ("supplier", "plant", "dc")
DESTINATION_KINDS = ("plant", "dc", "customer")


def _codes(frame: pd.DataFrame, column: str) -> pd.Series:
    """Non-blank codes of a typed text column."""
    if column not in frame.columns or frame.empty:
        return pd.Series([], dtype=str)
    s = frame[column].astype(str)
    return s[s != ""]


def _duplicate_keys(name: str, df: pd.DataFrame) -> list[Problem]:
    t = TABLES[name]
    key = list(t.key)
    if df.empty:
        return []
    keys = df[key].astype(str)
    required_key = [k for k in key if t.column(k).required]
    keys = keys[(keys[required_key] != "").all(axis=1)] if required_key else keys
    dup = keys.duplicated(keep=False)
    if not dup.any():
        return []
    problems = []
    for _, group in keys[dup].groupby(key, sort=False):
        rows = list(group.index)
        first = rows[0]
        what = ", ".join(f"{k}='{group.iloc[0][k]}'" for k in key)
        for r in rows[1:]:
            problems.append(
                Problem(name, row_number(r), key[0], f"duplicate key ({what}): rows {first} and {r} both have it")
            )
    return problems


def _references(name: str, tables: dict[str, pd.DataFrame], usable: set[str]) -> list[Problem]:
    t = TABLES[name]
    df = tables[name]
    problems = []
    for ref in t.references:
        if ref.table not in usable or df.empty:
            continue
        known = set(_codes(tables[ref.table], ref.target_column))
        vals = df[ref.column].astype(str)
        bad = vals[(vals != "") & ~vals.isin(known)]
        for r, v in bad.items():
            problems.append(
                Problem(
                    name,
                    row_number(r),
                    ref.column,
                    f"unknown {ref.target_column} '{v}' (not in table {ref.table})" + close_match_hint(v, known, 0.8),
                )
            )
    return problems


def _site_namespace(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    first_seen: dict[str, tuple[str, int | None]] = {}
    problems = []
    for table, col in SITE_TABLES:
        codes = _codes(tables[table], col)
        mine: dict[str, int | None] = {}
        for r, code in codes.items():
            mine.setdefault(code, row_number(r))
        for code, r in mine.items():
            if code in first_seen:
                other, orow = first_seen[code]
                problems.append(
                    Problem(
                        table,
                        r,
                        col,
                        f"site code '{code}' is already used in {other} (row {orow}); supplier, "
                        "plant, DC and customer codes must all differ",
                    )
                )
        for code, r in mine.items():
            first_seen.setdefault(code, (table, r))
    return problems


def _consistent_site_rows(
    table: str, col: str, df: pd.DataFrame, kind: str, attrs: tuple[str, ...] = ("lat", "lon")
) -> list[Problem]:
    """Rows of one site (e.g. a plant making several products) must agree on its location."""
    problems: list[Problem] = []
    if df.empty:
        return problems
    d = df[df[col].astype(str) != ""]
    for code, group in d.groupby(col, sort=False):
        if len(group) < 2:
            continue
        first_row = group.index[0]
        ref = group.iloc[0]
        for r, row in group.iloc[1:].iterrows():
            for a in attrs:
                x, y = ref[a], row[a]
                if (pd.isna(x) and pd.isna(y)) or x == y:
                    continue
                if pd.isna(x) or pd.isna(y):
                    continue
                if len(attrs) == 1:
                    shown, shown0 = f"'{as_text(row[a])}'", f"'{as_text(ref[a])}'"
                else:
                    shown = "(" + ", ".join(as_text(row[b]) for b in attrs) + ")"
                    shown0 = "(" + ", ".join(as_text(ref[b]) for b in attrs) + ")"
                problems.append(
                    Problem(
                        table,
                        row_number(r),
                        a,
                        f"{kind} '{code}' has {'/'.join(attrs)} {shown} here but {shown0} on row "
                        f"{first_row}; every row of one site must agree",
                    )
                )
                break
    return problems


def site_kinds(tables: dict[str, pd.DataFrame]) -> dict[str, str]:
    """Every site code of the case → its kind (supplier, plant, dc, customer; the first table wins)."""
    kinds: dict[str, str] = {}
    for table, col in SITE_TABLES:
        for code in _codes(tables[table], col):
            kinds.setdefault(code, col)
    return kinds


def origin_message(o: str, kinds: dict[str, str]) -> str | None:
    """What is wrong with ``o`` as the origin of a lane (None: nothing)."""
    kind = kinds.get(o)
    if kind is None:
        return f"unknown origin site '{o}' (not a supplier, plant or DC)" + close_match_hint(o, kinds, 0.8)
    if kind not in ORIGIN_KINDS:
        return f"origin '{o}' is a {kind}; lanes start at a supplier, plant or DC"
    return None


def destination_message(d: str, kinds: dict[str, str]) -> str | None:
    """What is wrong with ``d`` as the destination of a lane (None: nothing)."""
    kind = kinds.get(d)
    if kind is None:
        return f"unknown destination site '{d}' (not a plant, DC or customer)" + close_match_hint(d, kinds, 0.8)
    if kind not in DESTINATION_KINDS:
        return f"destination '{d}' is a {kind}; lanes end at a plant, DC or customer"
    return None


def pair_message(o: str, d: str, kinds: dict[str, str]) -> str | None:
    """What is wrong with a lane between two known ends of the right kinds (None: nothing)."""
    if o == d:
        return f"lane from '{o}' to itself"
    if f"{kinds[o]}-{kinds[d]}" not in LEGS:
        return f"a lane from a {kinds[o]} to a {kinds[d]} is not a leg of the network; legs are: {', '.join(LEGS)}"
    return None


def _lane_sites(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    lanes = tables["lanes"]
    if lanes.empty:
        return []
    kinds = site_kinds(tables)
    problems = []
    # Whole columns first; only the rows with something to report are looked at one by one.
    o_all, d_all = lanes["origin"].astype(str), lanes["destination"].astype(str)
    ok_all, dk_all = o_all.map(kinds), d_all.map(kinds)
    suspect = (
        (o_all.ne("") & ~ok_all.isin(ORIGIN_KINDS))
        | (d_all.ne("") & ~dk_all.isin(DESTINATION_KINDS))
        | (o_all.eq(d_all) & o_all.ne(""))
        | ~(ok_all.fillna("") + "-" + dk_all.fillna("")).isin(LEGS)
    )
    for r, o, d in zip(lanes.index[suspect.to_numpy()], o_all[suspect], d_all[suspect]):
        o_msg = origin_message(o, kinds) if o else None
        d_msg = destination_message(d, kinds) if d else None
        if o_msg:
            problems.append(Problem("lanes", row_number(r), "origin", o_msg))
        if d_msg:
            problems.append(Problem("lanes", row_number(r), "destination", d_msg))
        if o_msg or d_msg or not o or not d:
            continue
        msg = pair_message(o, d, kinds)
        if msg:
            problems.append(Problem("lanes", row_number(r), "destination", msg))
    return problems


def _mode_rules(tables: dict[str, pd.DataFrame]) -> list[Problem]:
    modes = tables["modes"]
    problems = []
    for r, row in modes.iterrows():
        legs = [p.strip() for p in str(row["legs"]).replace(",", "|").split("|") if p.strip()]
        bad = [p for p in legs if p not in LEGS]
        if bad:
            problems.append(
                Problem(
                    "modes",
                    row_number(r),
                    "legs",
                    f"unknown leg(s) {', '.join(repr(b) for b in bad)}; legs are: {', '.join(LEGS)}",
                )
            )
        lo, hi = row["min_km"], row["max_km"]
        if pd.notna(lo) and pd.notna(hi) and lo > hi:
            problems.append(
                Problem(
                    "modes",
                    row_number(r),
                    "min_km",
                    f"min_km {format_number(lo)} is greater than max_km {format_number(hi)}",
                )
            )
    return problems


def _rows_where(name: str, df: pd.DataFrame, mask: pd.Series, column: str, message) -> list[Problem]:
    return [Problem(name, row_number(r), column, message(row)) for r, row in df[mask].iterrows()]


def _other_rules(tables: dict[str, pd.DataFrame], given: set[str], usable: set[str]) -> list[Problem]:
    problems = []
    products = tables["products"]
    if "products" in usable and "demand" in usable:
        materials = set(_codes(products[products["kind"] == "material"], "product"))
        d = tables["demand"]
        problems += _rows_where(
            "demand",
            d,
            d["product"].isin(materials),
            "product",
            lambda row: (
                f"'{row['product']}' is a material (products.kind = material); demand must be for finished products"
            ),
        )
    bom = tables["bill_of_materials"]
    problems += _rows_where(
        "bill_of_materials",
        bom,
        (bom["product"] == bom["material"]) & (bom["product"] != ""),
        "material",
        lambda row: f"'{row['product']}' cannot be a material of itself",
    )
    if "service_classes" in given and not tables["service_classes"].empty and "customers" in usable:
        classes = set(_codes(tables["service_classes"], "service_class"))
        c = tables["customers"]
        problems += _rows_where(
            "customers",
            c,
            (c["service_class"] != "") & ~c["service_class"].isin(classes),
            "service_class",
            lambda row: f"unknown service class '{row['service_class']}' (not in table service_classes)",
        )
    edges = tables["road_edges"]
    if not edges.empty:
        modes = set(_codes(tables["modes"], "mode"))
        problems += _rows_where(
            "road_edges",
            edges,
            (edges["mode"] != "") & ~edges["mode"].isin(modes),
            "mode",
            lambda row: f"unknown mode '{row['mode']}' (not in table modes)",
        )
        problems += _rows_where(
            "road_edges",
            edges,
            (edges["from_node"] == edges["to_node"]) & (edges["from_node"] != ""),
            "to_node",
            lambda row: f"edge from '{row['from_node']}' to itself",
        )
    return problems


def _dc_count_rules(tables: dict[str, pd.DataFrame], settings: dict, label: str, rows) -> list[Problem]:
    policy = settings.get("policy", {})
    lo, hi = int(policy.get("min_open_dcs", 0)), int(policy.get("max_open_dcs", -1))
    problems = []
    where = rows or {}
    if hi >= 0 and lo > hi:
        problems.append(
            Problem(
                label,
                where.get(("policy", "min_open_dcs")),
                "[policy] min_open_dcs",
                f"min_open_dcs ({lo}) is greater than max_open_dcs ({hi})",
            )
        )
    dcs = tables["dcs"]
    names = dcs.drop_duplicates("dc") if not dcs.empty else dcs
    can_open = int((names["force"] != "closed").sum()) if not names.empty else 0
    forced_open = int((names["force"] == "open").sum()) if not names.empty else 0
    if lo > can_open:
        problems.append(
            Problem(
                label,
                where.get(("policy", "min_open_dcs")),
                "[policy] min_open_dcs",
                f"min_open_dcs ({lo}) is more than the {can_open} DC(s) that may be open "
                "(table dcs, force not 'closed')",
            )
        )
    if hi >= 0 and forced_open > hi:
        problems.append(
            Problem(
                label,
                where.get(("policy", "max_open_dcs")),
                "[policy] max_open_dcs",
                f"max_open_dcs ({hi}) is less than the {forced_open} DC(s) forced open in table dcs",
            )
        )
    return problems


def cross_table_problems(
    tables: dict[str, pd.DataFrame],
    settings: dict,
    given: set[str],
    usable: set[str],
    label: str,
    settings_rows: dict[tuple[str, str], int] | None,
) -> list[Problem]:
    """Every cross-table problem of typed ``tables`` and ``settings``.

    ``given``: tables the user supplied; ``usable``: given and with every required column
    (keys and references are checked only there); ``label``/``settings_rows``: where the
    settings came from, for settings problems.
    """
    problems: list[Problem] = []
    for name in TABLES:
        if name in usable:
            problems += _duplicate_keys(name, tables[name])
            problems += _references(name, tables, usable)
    problems += _site_namespace(tables)
    problems += _consistent_site_rows("suppliers", "supplier", tables["suppliers"], "supplier", ("lat", "lon"))
    problems += _consistent_site_rows("suppliers", "supplier", tables["suppliers"], "supplier", ("region",))
    problems += _consistent_site_rows("plants", "plant", tables["plants"], "plant", ("lat", "lon"))
    problems += _consistent_site_rows("suppliers", "supplier", tables["suppliers"], "supplier", ("country",))
    problems += _consistent_site_rows("plants", "plant", tables["plants"], "plant", ("country",))
    problems += country_problems(tables)
    problems += share_rule_problems(tables)
    problems += rate_tier_problems(tables)
    problems += _lane_sites(tables)
    problems += _mode_rules(tables)
    problems += _other_rules(tables, given, usable)
    problems += time_problems(tables, given, usable, settings)
    problems += launch_problems(tables, usable)
    problems += _dc_count_rules(tables, settings, label, settings_rows)
    return problems
