"""``netopt robust``: run the robust-network study, write its folder (CSV tables, one workbook,
``summary.json``, the report page), print its headline figures.

The study is :mod:`netopt.studies.robust`; the page is a study page
(:mod:`netopt.present.report.study_page`) with the plans against each other, VSS, EVPI, the regret
table and a chart of cost by scenario for each plan.
"""

from __future__ import annotations

import json
from pathlib import Path

from netopt.data.case import Case
from netopt.present.files import _jsonable, atomic_folder, write_result_csv, write_workbook
from netopt.present.planning import print_table
from netopt.present.report.study_charts import cost_by_scenario_svg
from netopt.present.report.study_page import Section, write_study
from netopt.studies.robust import RobustStudy, run_robust


def _money(x, currency: str) -> str:
    return "not finite" if x is None else f"{x:,.0f} {currency}/yr"


def robust_sections(study: RobustStudy, currency: str) -> list[Section]:
    """The page's sections: the headline figures, the cost by scenario, the regret table, the plans'
    DCs, the scenarios' demand (and, when given, the adoption curve and past forecasts' accuracy)."""
    s = study.summary
    wide = (
        study.plan_dcs.pivot(index="dc", columns="plan", values="open").reset_index() if len(study.plan_dcs) else None
    )
    out = [
        Section(
            "Cost of each plan in each scenario",
            f"Each candidate plan's DCs held in every scenario (re-routing only), {currency}/yr, above each "
            f"plan's regret there (its cost minus the scenario's optimum). RP {_money(s.get('rp'), currency)}, "
            f"EEV {_money(s.get('eev'), currency)}, "
            f"WS {_money(s.get('ws'), currency)}: VSS = EEV − RP = {_money(s.get('vss'), currency)} (what planning "
            f"for the scenarios saves against planning for the mean demand), EVPI = RP − WS = "
            f"{_money(s.get('evpi'), currency)} (what knowing the demand in advance would be worth).",
            cost_by_scenario_svg(study.plan_costs, currency),
            study.plan_costs,
            "plan_costs",
        ),
        Section(
            "Regret",
            "Regret = a plan's cost in a scenario minus the scenario's optimum. The min-max-regret choice is "
            f"'{s.get('min_max_regret_plan') or 'none'}'.",
            "",
            study.regret,
            "regret",
            max_rows=None,
        ),
    ]
    if wide is not None:
        out.append(
            Section(
                "The plans' DCs",
                "Open (true) or closed in each plan: the two-stage plan against each scenario's own plan and the "
                "mean-value plan.",
                "",
                wide,
                "plan_dcs",
                max_rows=None,
            )
        )
    out.append(
        Section(
            "Demand scenarios",
            "The new product's demand by customer in each scenario.",
            "",
            study.scenario_demand,
            "scenario_demand",
        )
    )
    if study.launch_adoption is not None:
        out.append(
            Section(
                "Bass adoption", "Adopters per year of the diffusion.", "", study.launch_adoption, "launch_adoption"
            )
        )
    if study.forecast_accuracy is not None:
        out.append(
            Section("Past forecasts", "Past launches: MAPE and bias.", "", study.forecast_accuracy, "forecast_accuracy")
        )
    return out


def write_robust(study: RobustStudy, case: Case, out: str | Path, report: bool = True) -> Path:
    """Write ``out``: every table as CSV and a sheet of robust.xlsx, summary.json and report.html."""
    currency = str(case.settings["case"]["currency"])
    with atomic_folder(out) as tmp:
        for name, df in study.tables.items():
            write_result_csv(df, tmp / f"{name}.csv")
        write_workbook(study.tables, tmp / "robust.xlsx")
        (tmp / "summary.json").write_text(json.dumps(_jsonable(study.summary), indent=2), encoding="utf-8")
        if report:
            s = study.summary
            facts = [
                ("launch", f"{s['launch']} ({s['product']}, like {s['analogue']}; {s['demand_method']})"),
                ("scenarios", ", ".join(f"{k} {v:.0%}" for k, v in s["scenarios"].items())),
                (
                    "objective",
                    s["objective_kind"] + (f", cost bound {s['cost_bound']:,.0f}" if s["cost_bound"] else ""),
                ),
                ("plans held by", str(s["evaluation"])),
            ]
            facts += [("note", m) for m in s.get("messages", [])]
            write_study(tmp / "report.html", case.name, "robust network", facts, robust_sections(study, currency))
    return Path(out)


def run_robust_folder(
    case: Case, out: str | Path, workers: int | None = 0, report: bool = True, quiet: bool = False, say=None
) -> RobustStudy:
    """Run the study and write its folder; print the headline figures unless ``quiet``."""
    study = run_robust(case, workers=workers, say=say)
    write_robust(study, case, out, report)
    if not quiet:
        s, currency = study.summary, str(case.settings["case"]["currency"])
        print_table(
            study.regret,
            "regret",
            f"Candidate plans held in every scenario ({currency} per year)",
            ["plan", "dcs_open_names", "expected_cost", "worst_cost", "max_regret", "min_max_regret"],
        )
        print(f"objective ({s['objective_kind']}): {_money(s.get('objective'), currency)}")
        print(f"VSS = EEV − RP = {_money(s.get('vss'), currency)};  EVPI = RP − WS = {_money(s.get('evpi'), currency)}")
        for m in s.get("messages", []):
            print(f"note: {m}")
    return study
