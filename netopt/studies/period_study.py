"""Studies of one year run on a plan over periods: the year they look at and the network they hold.

The stress sweep (and any other study of a one-year network) runs on a case with periods by taking
one period — the last by default, the network the phasing leads to — as a one-year case
(``netopt.data.periods.period_case``) with the DC decisions of the phasing in that period fixed
(``dcs.force``), so the study stresses the planned network, not a network re-designed for one year.
"""

from __future__ import annotations

from netopt.data.case import Case
from netopt.data.periods import period_case
from netopt.engine.result import Result


def year_of_plan(case: Case, plan: Result, period: str | None = None) -> tuple[Case, str]:
    """The one-year case of ``period`` of a solved plan over periods (default: the last), its DCs fixed
    open or closed as the phasing has them, and a sentence saying so for every output of the study."""
    names = [str(p) for p in case.tables["periods"]["period"]]
    period = names[-1] if period is None else period
    if period not in names:
        raise ValueError(f"no period '{period}' (periods: {', '.join(names)})")
    year = period_case(case, period, names.index(period))
    ph = plan.tables["phasing"]
    now = ph[ph["period"].astype(str) == period].set_index("dc")["open"].astype(bool)
    dcs = year.tables["dcs"]
    keep_out = dcs["force"].eq("out")
    dcs.loc[~keep_out, "force"] = (
        dcs.loc[~keep_out, "dc"].map(now).map({True: "open", False: "closed"}).fillna("closed")
    )
    year.name = f"{case.name} · {period} (phasing held)"
    note = (
        f"a plan over periods: this study runs on period {period} as a one-year case, with the DCs the phasing "
        f"has open in {period} fixed open and the others closed (a redesign re-routes and re-sources only)"
    )
    return year, note
