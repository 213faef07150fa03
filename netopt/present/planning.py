"""``netopt classify`` and ``netopt sites``: run the planning study, write its folder, print its tables.

The studies are :mod:`netopt.studies.classify`, :mod:`netopt.studies.sites` and
:mod:`netopt.studies.dc_count`; this module writes their tables (CSV and one workbook), the report
page (:mod:`netopt.present.report.study_page`), ``summary.json`` and, when asked, the case with the
classes written back — all in one results folder, atomically.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pandas as pd

from netopt.data.case import Case
from netopt.data.results_schema import label_of
from netopt.data.writing import write_case_csv
from netopt.network.cities import CITY_SOURCE
from netopt.present.files import _jsonable, atomic_folder, write_result_csv, write_workbook
from netopt.present.formats import cell_text, column_kind
from netopt.present.report.study_page import classify_sections, sites_sections, write_study
from netopt.present.terminal import new_console, show
from netopt.studies.classify import Rule, class_summary, classes_into_case, classify_items
from netopt.studies.dc_count import dc_count_curve
from netopt.studies.sites import add_dc_changes, cluster_sweep, demand_points, propose_sites

ABC_SHOWN = ["rank", "item", "units", "usage_value", "revenue", "margin", "share", "cumulative_share", "class", "xyz"]


def print_table(df: pd.DataFrame, source: str, title: str, columns: list[str] | None = None, rows: int = 30) -> None:
    """A declared result table on the terminal (labels and number formats from its schema)."""
    from rich.markup import escape
    from rich.table import Table

    cols = [c for c in (columns or list(df.columns)) if c in df.columns and df[c].astype(str).ne("").any()]
    cols = [c for c in cols if not (df[c].dtype.kind == "f" and df[c].isna().all())]
    t = Table(title=title + (f" (first {rows} of {len(df)})" if len(df) > rows else ""))
    for c in cols:
        t.add_column(label_of(source, c), justify="right" if df[c].dtype.kind in "fi" else "left")
    for rec in df[cols].head(rows).itertuples(index=False):
        t.add_row(*[escape(cell_text(v, column_kind(source, c))) for v, c in zip(rec, cols)])
    show(new_console(), t)


def run_classify(
    case: Case,
    out: str | Path,
    measure: str = "usage_value",
    rule: Rule | None = None,
    xyz: tuple[float, float] | None = None,
    service_by_class: dict | None = None,
    csl_by_class: dict | None = None,
    report: bool = True,
    quiet: bool = False,
) -> dict[str, pd.DataFrame]:
    """Classify products and customers, write ``out`` (abc_products.csv, abc_customers.csv,
    abc_summary.csv, classes.xlsx, summary.json, report.html and, with a class map, ``case/``)."""
    rule = rule or Rule()
    tables = {
        "abc_products": classify_items(case, "products", measure, rule, xyz),
        "abc_customers": classify_items(case, "customers", measure, rule, xyz),
    }
    tables["abc_summary"] = pd.concat(
        [
            class_summary(tables["abc_products"], "products", rule),
            class_summary(tables["abc_customers"], "customers", rule),
        ],
        ignore_index=True,
    )
    classed = None
    if service_by_class is not None or csl_by_class is not None:
        classed = classes_into_case(
            case, tables["abc_customers"], tables["abc_products"], service_by_class, csl_by_class
        )
    with atomic_folder(out) as tmp:
        for name, df in tables.items():
            write_result_csv(df, tmp / f"{name}.csv")
        write_workbook(tables, tmp / "classes.xlsx")
        facts: dict[str, object] = {
            "case": case.name,
            "measure": measure,
            "rule": rule.text(),
            "xyz": list(xyz) if xyz else None,
        }
        if classed is not None:
            write_case_csv(classed, tmp / "case")
            facts["case_with_classes"] = "case/"
            facts["service_class_by_abc"] = service_by_class
            facts["cycle_service_level_by_abc"] = csl_by_class
        (tmp / "summary.json").write_text(json.dumps(_jsonable(facts), indent=2), encoding="utf-8")
        if report:
            write_study(
                tmp / "report.html",
                case.name,
                "ABC classification",
                [("measure", measure.replace("_", " ")), ("boundaries", rule.text())],
                classify_sections(tables),
            )
    if not quiet:
        for scope in ("products", "customers"):
            print_table(tables[f"abc_{scope}"], f"abc_{scope}", f"ABC of {scope} by {measure}", ABC_SHOWN)
        print_table(
            tables["abc_summary"], "abc_summary", "Classes", ["scope", "class", "items", "item_share", "value_share"]
        )
    return tables


def run_sites(
    case: Case,
    out: str | Path,
    k: int | None = None,
    from_regions: bool = False,
    weight_basis: str = "tonnes",
    tol_km: float = 1e-3,
    min_city_population: int = 0,
    costs: dict | None = None,
    max_dcs: int = 0,
    k_sweep: int = 0,
    workers: int | None = None,
    report: bool = True,
    quiet: bool = False,
    say: Callable[[str], None] | None = None,
) -> dict[str, pd.DataFrame]:
    """Propose candidate sites, (``k_sweep`` ≥ 1) sweep k = 1 … k_sweep clusters and (``max_dcs`` ≥ 1) solve
    the DC-count curve with the proposed sites added; write ``out`` (candidate_sites.csv,
    site_proposals.csv, gravity_centres.csv, cluster_sweep.csv, dc_count_curve.csv, sites.xlsx,
    summary.json, report.html)."""
    tell = say or (lambda s: None)
    prop = propose_sites(case, k, from_regions, weight_basis, tol_km, min_city_population, costs)
    tables = {"candidate_sites": prop.candidates, "site_proposals": prop.proposals, "gravity_centres": prop.centres}
    if k_sweep >= 1:
        tables["cluster_sweep"] = cluster_sweep(case, k_sweep, weight_basis, tol_km)
    if max_dcs >= 1:
        tell(f"solving the network with exactly 1 … {max_dcs} open DCs (proposed sites added) …")
        tables["dc_count_curve"] = dc_count_curve(case, max_dcs, add_dc_changes(prop.candidates), workers=workers)
    currency = str(case.settings["case"]["currency"])
    with atomic_folder(out) as tmp:
        for name, df in tables.items():
            write_result_csv(df, tmp / f"{name}.csv")
        write_workbook(tables, tmp / "sites.xlsx")
        basis = str(prop.proposals["cost_basis"].iloc[0]) if len(prop.proposals) else ""
        facts = {
            "case": case.name,
            "method": "centre of gravity per region" if from_regions else f"{len(prop.candidates)} weighted clusters",
            "weight_basis": weight_basis,
            "tolerance_km": tol_km,
            "city_list": CITY_SOURCE,
            "cost_basis": basis,
            "dc_count_curve": max_dcs >= 1,
        }
        (tmp / "summary.json").write_text(json.dumps(_jsonable(facts), indent=2), encoding="utf-8")
        if report:
            write_study(
                tmp / "report.html",
                case.name,
                "candidate sites",
                [("weighted by", weight_basis), ("city list", CITY_SOURCE), ("cost figures", basis)],
                sites_sections(tables, demand_points(case, weight_basis), case.tables["dcs"], currency),
            )
    if not quiet:
        print_table(
            prop.proposals,
            "site_proposals",
            "Proposed sites",
            ["dc", "method", "region", "customers", "city", "country", "snap_km", "mean_km"],
        )
        print(f"cost figures of the proposed sites: {basis}")
        print(f"city names: {CITY_SOURCE}")
        if "cluster_sweep" in tables:
            print_table(tables["cluster_sweep"], "cluster_sweep", "Clusters swept (km to the nearest centre)")
        if "dc_count_curve" in tables:
            print_table(
                tables["dc_count_curve"],
                "dc_count_curve",
                f"DC-count curve ({currency} per year)",
                ["n_dcs", "status", "total_cost", "delta_to_best", "best", "dcs_open_names", "verified"],
            )
    return tables
