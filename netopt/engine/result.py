"""A solve's outcome: :class:`Result` (status, objective, tables, verification, timings).

Money in the case currency per year; times in seconds.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from netopt.engine.highs import HighsModel, SolveInfo
from netopt.engine.verify import Verification
from netopt.network.arcs import Network

HORIZON_TABLES = ("periods", "phasing", "period_cost", "stock")
"""Tables of a plan over periods that are the horizon's own (not one period's)."""


@dataclass
class Result:
    """Outcome of one solve. Money in the case currency per year; times in seconds."""

    case_name: str
    status: str  # optimal | time_limit | infeasible | error | …
    objective: float
    bound: float
    gap: float
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)
    verification: Verification | None = None
    diagnosis: pd.DataFrame | None = None
    timings: dict[str, float] = field(default_factory=dict)
    model_size: dict[str, int] = field(default_factory=dict)
    message: str = ""
    lost_demand_allowed: bool = False  # netopt allowed lost demand although the settings do not
    network: Network | None = None
    highs_model: HighsModel | None = None
    plan_values: dict[str, np.ndarray] | None = None  # every variable block's values (a start for another solve)
    lanes: pd.DataFrame | None = None
    periods: pd.DataFrame | None = None  # the planning periods with their weights (a case with periods)

    @classmethod
    def of(cls, case_name: str, info: SolveInfo, **fields) -> Result:
        """A result carrying the solver's outcome ``info`` (status, objective, bound, gap) and ``fields``."""
        return cls(
            case_name=case_name, status=info.status, objective=info.objective, bound=info.bound, gap=info.gap, **fields
        )

    def __getattr__(self, item):
        tables = self.__dict__.get("tables", {})
        if item in tables:
            return tables[item]
        raise AttributeError(item)

    @property
    def has_solution(self) -> bool:
        return bool(self.tables)

    @property
    def cost(self) -> dict[str, float]:
        if "cost" not in self.tables:
            return {}
        return dict(zip(self.tables["cost"]["component"], self.tables["cost"]["amount"]))

    def held_openings(self) -> dict:
        """DC decisions of this solution, to hold the network in a re-solve: dc → size name, True (open, no
        size options) or False; in a case with periods, period → those decisions (the phasing)."""
        d = self.tables["dcs"]
        if "period" in d.columns:
            return {str(p): _decisions(g) for p, g in d.groupby("period", sort=False)}
        return _decisions(d)

    def period_view(self, period: str | None = None) -> Result:
        """This plan over periods seen in one ``period`` (default: the last, the network the phasing
        leads to): a copy holding that period's tables without their ``period`` column, its ``cost``
        table the period's annual cost (currency/yr).  A one-year plan is returned as it is."""
        if self.periods is None:
            return self
        names = [str(p) for p in self.periods["period"]]
        period = names[-1] if period is None else period
        tables = {}
        for name, df in self.tables.items():
            if name in HORIZON_TABLES:
                continue
            if "period" in df.columns:
                df = df[df["period"].astype(str) == period].drop(columns="period").reset_index(drop=True)
            tables[name] = df
        pc = self.tables["period_cost"]
        own = pc[(pc["period"].astype(str) == period) & pc["annual"].notna()]
        tables["cost"] = pd.DataFrame(
            {"component": own["component"].to_numpy(), "amount": own["annual"].to_numpy(float)}
        )
        return replace(self, tables=tables, periods=None, case_name=f"{self.case_name} · {period}", highs_model=None)

    def phasing_text(self) -> str:
        """The DC openings and closings of a plan over periods in words ("DC_A opens 2028; DC_B closes 2027")."""
        if self.periods is None or "phasing" not in self.tables:
            return ""
        ph = self.tables["phasing"]
        moves = ph[ph["state"].isin(["opens", "closes"])]
        return "; ".join(f"{d} {s} {p}" for d, s, p in zip(moves["dc"], moves["state"], moves["period"]))

    @property
    def is_multi_period(self) -> bool:
        """Whether this plan covers several periods (its money is then a present value, currency)."""
        return self.periods is not None

    def summary(self) -> dict:
        """JSON-ready summary: status, objective, bound, gap, cost breakdown, verification."""
        v = self.verification
        out = {
            "case": self.case_name,
            "status": self.status,
            "objective": _num(self.objective),
            "bound": _num(self.bound),
            "gap": _num(self.gap),
            "cost": {k: _num(x) for k, x in self.cost.items()},
            "verified": bool(v.passed) if v else False,
            "largest_violation": _num(v.largest_violation) if v else None,
            "largest_violation_rule": v.largest_violation_rule if v else None,
            "recomputed_objective": _num(v.recomputed_objective) if v else None,
            "timings_s": {k: round(x, 4) for k, x in self.timings.items()},
            "model_size": self.model_size,
            "message": self.message,
            "lost_demand_allowed": self.lost_demand_allowed,
        }
        if "kpis" in self.tables:
            kp = self.tables["kpis"]
            if "period" in kp.columns:
                out["kpis"] = {
                    str(p): {k: _num(x) for k, x in zip(g["kpi"], g["value"])}
                    for p, g in kp.groupby("period", sort=False)
                }
            else:
                out["kpis"] = {k: _num(x) for k, x in zip(kp["kpi"], kp["value"])}
        if self.periods is not None:
            out["periods"] = [str(p) for p in self.periods["period"]]
            out["money"] = "present value over the periods (currency); period_cost.csv gives each period's"
            if "period_cost" in self.tables:
                pc = self.tables["period_cost"].groupby("period", sort=False)[["undiscounted", "present_value"]].sum()
                out["cost_per_period"] = {
                    str(p): {"spend": _num(r["undiscounted"]), "present_value": _num(r["present_value"])}
                    for p, r in pc.iterrows()
                }
                out["spend_undiscounted"] = _num(pc["undiscounted"].sum())
                out["phasing"] = self.phasing_text()
        return out


def _decisions(d: pd.DataFrame) -> dict[str, str | bool]:
    return {dc: ((size or True) if o else False) for dc, o, size in zip(d["dc"], d["open"], d["size"])}


def _num(x):
    if x is None:
        return None
    x = float(x)
    return None if np.isnan(x) or np.isinf(x) else x


def fixed_options(net: Network, held: dict[str, str | bool] | None) -> np.ndarray | None:
    """0/1 per opening option from ``dc → size/True/False`` (DCs not named: closed)."""
    if held is None:
        return None
    o = net.options
    val = np.zeros(len(o))
    for k, (dc, size) in enumerate(zip(o["dc"], o["size"])):
        h = held.get(dc, False)
        if h is True:
            val[k] = 1.0 if (o["dc"] == dc).sum() == 1 or size == o.loc[o["dc"] == dc, "size"].iloc[0] else 0.0
        elif h:
            val[k] = 1.0 if size == h else 0.0
    return val
