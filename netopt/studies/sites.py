"""Candidate DC sites from the demand map: centres of gravity per region and k weighted clusters, each
snapped to the nearest listed city, written as rows of the ``dcs`` table.

Symbols (units in brackets): ``w_c`` the weight of customer c, its annual demand in units [units/yr]
or in tonnes ``Σ_p q_cp × unit_weight_kg_p / 1000`` [t/yr] (freight is paid per tonne-km, so tonnes
is the default); ``d`` great-circle km.  The maths of the centres and clusters is in
:mod:`netopt.network.centres`; the city list in :mod:`netopt.network.cities`.

A proposed site needs a fixed cost, a capacity and a handling cost before a solve can weigh it.
They are the user's (``fixed_cost``, ``capacity``, ``handling_cost``) or, for each one not given, the
median of the case's candidate DCs (of all its DCs when it has no candidate); ``site_proposals``
names the basis of every figure, and the command line prints it.  A region's centre keeps the
region's name; a cluster's site takes the region of the customer nearest to it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.limits import MAX_CLUSTER_POINTS
from netopt.network.centres import DEFAULT_TOLERANCE_KM, sphere_clusters, weiszfeld_sphere
from netopt.network.cities import nearest_cities
from netopt.network.geo import pairwise_km

WEIGHT_BASES = ("tonnes", "units")
COST_FIELDS = ("fixed_cost", "capacity", "handling_cost")
CANDIDATE_COLUMNS = ["dc", "lat", "lon", "status", "fixed_cost", "capacity", "handling_cost", "closing_cost", "region"]


@dataclass
class SiteProposal:
    """What ``propose_sites`` returns: the paste-ready candidates, how each was found, the region centres."""

    candidates: pd.DataFrame  # candidate_sites (the dcs table's columns)
    proposals: pd.DataFrame  # site_proposals
    centres: pd.DataFrame  # gravity_centres


def demand_points(case: Case, weight_basis: str = "tonnes") -> pd.DataFrame:
    """Customers with demand: customer, lat, lon (degrees), region, weight (units/yr or t/yr)."""
    if weight_basis not in WEIGHT_BASES:
        raise CaseError([Problem("sites", None, None, f"weight must be one of {', '.join(WEIGHT_BASES)}")])
    t = case.tables
    d = t["demand"][["customer", "product", "quantity"]]
    if weight_basis == "tonnes":
        kg = d["product"].map(t["products"].set_index("product")["unit_weight_kg"]).astype(float)
        w = d["quantity"].astype(float) * kg / 1000.0
    else:
        w = d["quantity"].astype(float)
    weight = w.groupby(d["customer"]).sum()
    c = t["customers"][["customer", "lat", "lon", "region"]].copy()
    c["weight"] = c["customer"].map(weight).fillna(0.0).astype(float)
    c = c[c["weight"] > 0].reset_index(drop=True)
    if c.empty:
        why = (
            " weighing more than 0 kg (products.unit_weight_kg; or weigh by units)" if weight_basis == "tonnes" else ""
        )
        msg = f"no customer has demand{why}: there is nothing to place sites for"
        raise CaseError([Problem("demand", None, "quantity", msg)])
    c["region"] = c["region"].fillna("").astype(str)
    return c


def gravity_centres(points: pd.DataFrame, weight_basis: str, tol_km: float = DEFAULT_TOLERANCE_KM) -> pd.DataFrame:
    """The ``gravity_centres`` table: per region, the Weiszfeld point on the sphere of its customers."""
    rows = []
    for region, g in points.groupby("region", sort=True):
        cen = weiszfeld_sphere(g["lat"], g["lon"], g["weight"], tol_km=tol_km)
        w = float(g["weight"].sum())
        rows.append(
            {
                "region": region,
                "lat": cen.point[0],
                "lon": cen.point[1],
                "customers": len(g),
                "weight": w,
                "weight_basis": weight_basis,
                "mean_km": cen.objective / w,
                "iterations": cen.iterations,
                "converged": cen.converged,
                "at_customer": str(g["customer"].iloc[cen.at_demand_point]) if cen.at_demand_point >= 0 else "",
            }
        )
    return pd.DataFrame(rows)


def cost_figures(case: Case, given: dict[str, float | None]) -> tuple[dict[str, float], str]:
    """Fixed cost, capacity and handling cost of a proposed site, and the words saying where each came from."""
    dcs = case.tables["dcs"]
    pool = dcs[dcs["status"].astype(str).eq("candidate")] if len(dcs) else dcs
    label = f"median of the case's {len(pool)} candidate DCs"
    if pool.empty:
        pool, label = dcs, f"median of the case's {len(dcs)} DCs"
    out, said = {}, []
    for f in COST_FIELDS:
        v = given.get(f)
        if v is not None:
            out[f] = float(v)
            said.append(f"{f} given ({out[f]:g})")
            continue
        col = pd.to_numeric(pool[f], errors="coerce").replace(np.inf, np.nan).dropna() if len(pool) else pd.Series()
        if col.empty:
            raise CaseError(
                [Problem("dcs", None, f, f"no DC of the case gives a {f} to copy: give the proposed sites' {f}")]
            )
        out[f] = float(f"{float(col.median()):.12g}")  # the median, without float noise (0.6, not 0.6000000000000001)
        said.append(f"{f} {label} ({out[f]:g})")
    return out, "; ".join(said)


def _code(city: str, taken: set[str]) -> str:
    base = "SITE_" + (re.sub(r"[^A-Z0-9]+", "_", city.upper()).strip("_") or "X")
    code, i = base, 2
    while code in taken:
        code, i = f"{base}_{i}", i + 1
    taken.add(code)
    return code


def propose_sites(
    case: Case,
    k: int | None = None,
    from_regions: bool = False,
    weight_basis: str = "tonnes",
    tol_km: float = DEFAULT_TOLERANCE_KM,
    min_city_population: int = 0,
    costs: dict[str, float | None] | None = None,
) -> SiteProposal:
    """Candidate sites: k weighted clusters of all customers (``k`` default: one per customer region), or
    the centre of gravity of each region (``from_regions``); each snapped to the nearest listed city."""
    pts = demand_points(case, weight_basis)
    centres = gravity_centres(pts, weight_basis, tol_km)
    if from_regions:
        c_lat, c_lon = centres["lat"].to_numpy(), centres["lon"].to_numpy()
        label = pts["region"].map({r: i for i, r in enumerate(centres["region"])}).to_numpy()
        method, cluster = "centre_of_gravity", np.zeros(len(centres), dtype=int)
    else:
        # customers at one location are one point of the clustering, with their weights summed
        loc = pts.groupby(["lat", "lon"], sort=True, as_index=False)["weight"].sum()
        k = int(k) if k is not None else len(centres)
        if not 1 <= k <= len(loc):
            msg = f"k must be from 1 to the {len(loc)} customer locations with demand, not {k}"
            raise CaseError([Problem("sites", None, None, msg)])
        if len(loc) > MAX_CLUSTER_POINTS:
            msg = (
                f"{len(loc):,} customer locations: clustering takes at most MAX_CLUSTER_POINTS = {MAX_CLUSTER_POINTS:,}"
            )
            raise CaseError([Problem("customers", None, None, msg + " (use --from-regions, or group customers)")])
        cl = sphere_clusters(loc["lat"], loc["lon"], loc["weight"], k, tol_km=tol_km)
        c_lat, c_lon = cl.lat, cl.lon
        label = np.argmin(pairwise_km(pts["lat"], pts["lon"], c_lat, c_lon), axis=1)  # each customer's cluster
        method, cluster = "cluster", np.arange(1, k + 1)
    snap = nearest_cities(c_lat, c_lon, min_city_population)
    figures, basis = cost_figures(case, costs or {})
    taken = set(case.tables["dcs"]["dc"].astype(str))
    rows, info = [], []
    for i in range(len(c_lat)):
        members = pts[label == i]
        w = float(members["weight"].sum())
        s_lat, s_lon = float(snap.loc[i, "city_lat"]), float(snap.loc[i, "city_lon"])
        km = pairwise_km(members["lat"], members["lon"], [s_lat], [s_lon])[:, 0] if len(members) else np.zeros(0)
        region = (  # a cluster's site takes the region of its nearest customer
            str(centres["region"].iloc[i])
            if from_regions
            else (str(members["region"].iloc[int(np.argmin(km))]) if len(members) else "")
        )
        code = _code(str(snap.loc[i, "city"]), taken)
        rows.append([code, round(s_lat, 4), round(s_lon, 4), "candidate", *figures.values(), 0.0, region])
        info.append(
            {
                "dc": code,
                "method": method,
                "region": region,
                "cluster": int(cluster[i]),
                "customers": len(members),
                "weight": w,
                "weight_basis": weight_basis,
                "centre_lat": float(c_lat[i]),
                "centre_lon": float(c_lon[i]),
                "city": str(snap.loc[i, "city"]),
                "country": str(snap.loc[i, "country"]),
                "city_population": int(snap.loc[i, "city_population"]),
                "snap_km": float(snap.loc[i, "snap_km"]),
                "mean_km": float((members["weight"].to_numpy() * km).sum() / w) if w > 0 else np.nan,
                "cost_basis": basis,
            }
        )
    cand = pd.DataFrame(rows, columns=["dc", "lat", "lon", "status", *COST_FIELDS, "closing_cost", "region"])
    return SiteProposal(cand[CANDIDATE_COLUMNS], pd.DataFrame(info), centres)


def add_dc_changes(candidates: pd.DataFrame) -> list[dict]:
    """The proposed sites as ``add_dc`` scenario changes (the scenario vocabulary's way to add a DC)."""
    return [
        {"kind": "add_dc", **{k: (v.item() if hasattr(v, "item") else v) for k, v in row.items()}}
        for row in candidates[CANDIDATE_COLUMNS].to_dict(orient="records")
    ]


def cluster_sweep(case: Case, k_max: int, weight_basis: str = "tonnes", tol_km: float = DEFAULT_TOLERANCE_KM):
    """The ``cluster_sweep`` table: k weighted clusters of the customer locations for k = 1 … ``k_max``."""
    pts = demand_points(case, weight_basis)
    loc = pts.groupby(["lat", "lon"], sort=True, as_index=False)["weight"].sum()
    if not 1 <= k_max <= len(loc):
        msg = f"the sweep's largest k must be from 1 to the {len(loc)} customer locations with demand, not {k_max}"
        raise CaseError([Problem("sites", None, None, msg)])
    if len(loc) > MAX_CLUSTER_POINTS:
        msg = f"{len(loc):,} customer locations: clustering takes at most MAX_CLUSTER_POINTS = {MAX_CLUSTER_POINTS:,}"
        raise CaseError([Problem("customers", None, None, msg)])
    w = loc["weight"].to_numpy(float)
    rows = []
    for k in range(1, int(k_max) + 1):
        cl = sphere_clusters(loc["lat"], loc["lon"], w, k, tol_km=tol_km)
        d = pairwise_km(loc["lat"], loc["lon"], cl.lat, cl.lon).min(axis=1)
        rows.append(
            {"k": k, "mean_km": float((w * d).sum() / w.sum()), "max_km": float(d.max()), "converged": cl.converged}
        )
    out = pd.DataFrame(rows)
    out.insert(3, "gain_km", -out["mean_km"].diff())
    return out
