"""The lane table: which site may ship to which, by which mode, how far and how long.

Lanes are generated from site coordinates for every mode that allows it, pruned to
the distance range each mode serves, and then merged with the explicit ``lanes``
table of the case.  The model consumes the result of :func:`build_lanes`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case, CaseError, Problem
from netopt.data.schema import LEGS
from netopt.data.validate import register_lane_builder
from netopt.network.explicit_lanes import FLOAT_COLUMNS, LANE_COLUMNS, empty_lanes, explicit_rows
from netopt.network.geo import haversine_km, pairwise_km, shortest_path_km

__all__ = ["LANE_COLUMNS", "build_lanes", "case_lanes", "lane_summary"]

_KEY = ["origin", "destination", "mode", "product"]
_ORIGIN_KINDS = ("supplier", "plant", "dc")
_DESTINATION_KINDS = ("plant", "dc", "customer")
_SITE_TABLES = {
    "supplier": ("suppliers", "supplier"),
    "plant": ("plants", "plant"),
    "dc": ("dcs", "dc"),
    "customer": ("customers", "customer"),
}


def _text(s: pd.Series) -> pd.Series:
    return s.fillna("").astype(str).str.strip()


def _sites(case: Case, kind: str) -> pd.DataFrame:
    """One row per site code of ``kind``: index = code, columns lat, lon (first row by row number)."""
    table, col = _SITE_TABLES[kind]
    df = case.tables[table].sort_index()
    if df.empty:
        return pd.DataFrame(
            {"lat": pd.Series(dtype=float), "lon": pd.Series(dtype=float)}, index=pd.Index([], dtype=str)
        )
    codes = _text(df[col])
    out = pd.DataFrame(
        {"code": codes.to_numpy(), "lat": df["lat"].astype(float).to_numpy(), "lon": df["lon"].astype(float).to_numpy()}
    )
    out = out.drop_duplicates("code", keep="first").set_index("code")
    out.index.name = None
    return out


def _incidence(pairs: pd.DataFrame, row_col: str, col_col: str, rows, cols) -> np.ndarray:
    """Boolean matrix (len(rows), len(cols)): True where (row, col) appears in ``pairs``."""
    m = np.zeros((len(rows), len(cols)), dtype=bool)
    if len(pairs) and len(rows) and len(cols):
        r = pd.Index(rows).get_indexer(pairs[row_col])
        c = pd.Index(cols).get_indexer(pairs[col_col])
        ok = (r >= 0) & (c >= 0)
        m[r[ok], c[ok]] = True
    return m


def _parse_legs(value) -> list[str]:
    if isinstance(value, str):
        parts = value.replace(",", "|").split("|")
    else:
        parts = list(value)
    return [str(p).strip() for p in parts if str(p).strip()]


def _leg_masks(case: Case, sites: dict[str, pd.DataFrame]) -> dict[str, np.ndarray]:
    """Pairs worth a lane per leg (cheap prefilters from products, bill of materials and demand)."""
    t = case.tables
    sup = pd.DataFrame({"site": _text(t["suppliers"]["supplier"]), "product": _text(t["suppliers"]["product"])})
    plt = pd.DataFrame({"site": _text(t["plants"]["plant"]), "product": _text(t["plants"]["product"])})
    bom = pd.DataFrame(
        {"product": _text(t["bill_of_materials"]["product"]), "material": _text(t["bill_of_materials"]["material"])}
    )
    dem = pd.DataFrame({"site": _text(t["demand"]["customer"]), "product": _text(t["demand"]["product"])})
    prods = t["products"]
    finished = set(_text(prods["product"])[_text(prods["kind"]).replace("", "finished") == "finished"])

    s_codes, p_codes = sites["supplier"].index, sites["plant"].index
    d_codes, c_codes = sites["dc"].index, sites["customer"].index
    universe = sorted(set(sup["product"]) | set(plt["product"]) | set(bom["material"]) | set(dem["product"]))

    offers = _incidence(sup, "site", "product", s_codes, universe)
    needs_pairs = plt.merge(bom, on="product")[["site", "material"]].rename(columns={"material": "product"})
    needs = _incidence(needs_pairs, "site", "product", p_codes, universe)
    makes = _incidence(plt, "site", "product", p_codes, universe)
    wants = _incidence(dem, "site", "product", c_codes, universe)
    sells_finished = np.asarray(
        _incidence(sup[sup["product"].isin(finished)], "site", "product", s_codes, universe).any(axis=1)
    )
    wanted = np.asarray(wants.any(axis=1))

    return {
        "supplier-plant": (offers.astype(np.int64) @ needs.T.astype(np.int64)) > 0,
        "supplier-dc": np.repeat(sells_finished[:, None], len(d_codes), axis=1),
        "plant-dc": np.ones((len(p_codes), len(d_codes)), dtype=bool),
        "plant-customer": (makes.astype(np.int64) @ wants.T.astype(np.int64)) > 0,
        "dc-customer": np.repeat(wanted[None, :], len(d_codes), axis=0),
        "dc-dc": ~np.eye(len(d_codes), dtype=bool),
    }


def build_lanes(case: Case) -> pd.DataFrame:
    """All usable lanes of a case, one row per (origin, destination, mode, product).

    Generated lanes: for each mode with ``generate_lanes`` true and each leg it serves
    (its ``legs`` column, else the settings' ``lanes.legs``), every origin-destination
    pair of that leg, except pairs that cannot carry anything (supplier→plant when the
    supplier offers no material of any product the plant makes; supplier→DC when it
    offers no finished product; plant→customer when the customer demands nothing the
    plant makes; DC→customer when the customer has no demand; a DC to itself).
    Distance = shortest path over the mode's ``road_edges`` (rows with blank mode or
    this mode) when both ends are connected nodes of that graph, else great-circle km
    (mean Earth radius) × the mode's circuity.  Only pairs with
    ``min_km ≤ distance ≤ max_km`` are kept, and lanes to customers no longer than
    ``lanes.max_dc_customer_km`` when that is ≥ 0.

    Explicit lanes (table ``lanes`` and the cells of ``lane_matrix``, where a lanes row replaces the
    matrix's lane of the same key; :mod:`netopt.network.explicit_lanes`) are not range-pruned.  A row with product ""
    replaces the generated row of the same origin, destination and mode; a row naming
    a product adds a row for that product only — the model uses a product's own row in
    preference to the "" row of the same origin, destination and mode.  Blank
    ``distance_km`` is computed as for generated lanes; blank ``transit_days`` =
    distance / speed + handling days.  ``available = false`` removes the lane of that
    product (blank product: of every product, generated rows included); when only one
    product is barred from a lane that still has a "" row, a row for that product with
    capacity 0 is written so the model cannot ship it there.

    Columns:
        origin: origin site code.
        origin_kind: supplier, plant or dc.
        destination: destination site code.
        destination_kind: plant, dc or customer.
        leg: "<origin_kind>-<destination_kind>", e.g. "dc-customer".
        mode: transport mode.
        product: product the row applies to; "" = every product.
        distance_km: route distance, km.
        transit_days: distance / speed + handling days (or as given), days.
        cost_per_unit: freight cost, currency/unit; NaN = the model computes it per
            product as unit_weight_kg/1000 × distance_km × cost_per_tonne_km + fixed_cost_per_unit.
        capacity: most units per year on the row, units/year; inf = no limit.
        source: "generated" or "explicit".
        origin_lat, origin_lon, destination_lat, destination_lon: site coordinates, degrees.

    Rows are sorted by leg (in the order of ``netopt.data.schema.LEGS``), origin,
    destination, mode and product.

    Raises:
        CaseError: unknown legs, or explicit lanes naming unknown sites or modes or an
            origin/destination pair that is not a leg; every problem at once.
    """
    problems: list[Problem] = []
    sites = {k: _sites(case, k) for k in _SITE_TABLES}
    modes = case.tables["modes"].sort_index()
    lane_settings = case.settings.get("lanes", {})
    default_legs = _parse_legs(lane_settings.get("legs", []))
    for leg in default_legs:
        if leg not in LEGS:
            problems.append(Problem("settings", None, "lanes.legs", f"unknown leg {leg!r}; legs are {', '.join(LEGS)}"))
    cap_customer = float(lane_settings.get("max_dc_customer_km", -1.0))

    mode_info: dict[str, dict] = {}
    for row, m in modes.iterrows():
        name = str(m["mode"]).strip()
        own = _parse_legs("" if pd.isna(m["legs"]) else m["legs"])
        for leg in own:
            if leg not in LEGS:
                problems.append(Problem("modes", row, "legs", f"unknown leg {leg!r}; legs are {', '.join(LEGS)}"))
        gen = m["generate_lanes"]
        mode_info[name] = {
            "speed": float(m["speed_km_per_day"]),
            "handling": 0.0 if pd.isna(m["handling_days"]) else float(m["handling_days"]),
            "circuity": 1.0 if pd.isna(m["circuity"]) else float(m["circuity"]),
            "min_km": 0.0 if pd.isna(m["min_km"]) else float(m["min_km"]),
            "max_km": np.inf if pd.isna(m["max_km"]) else float(m["max_km"]),
            "generate": True if pd.isna(gen) else bool(gen),
            "legs": own or default_legs,
        }

    explicit = explicit_rows(case, sites, mode_info, problems)
    if problems:
        raise CaseError(problems)

    edges = case.tables["road_edges"]
    edge_modes = _text(edges["mode"])
    road_cache: dict[str, pd.DataFrame | None] = {}
    by_edges: dict[tuple, pd.DataFrame | None] = {}  # modes with the same edge rows share one result

    def road(mode: str) -> pd.DataFrame | None:
        """Shortest-path km between all sites on this mode's edges (None when it has none)."""
        if mode not in road_cache:
            sub = edges[((edge_modes == "") | (edge_modes == mode)).to_numpy()]
            key = tuple(sub.index)
            if key not in by_edges:
                result = None
                if not sub.empty:
                    nodes = set(_text(sub["from_node"])) | set(_text(sub["to_node"]))
                    src = [c for k in _ORIGIN_KINDS for c in sites[k].index if c in nodes]
                    dst = [c for k in _DESTINATION_KINDS for c in sites[k].index if c in nodes]
                    result = shortest_path_km(sub, src, dst) if src and dst else None
                by_edges[key] = result
            road_cache[mode] = by_edges[key]
        return road_cache[mode]

    def distances(mode: str, o_codes, d_codes, gc: np.ndarray) -> np.ndarray:
        """Route km for the (len(o), len(d)) grid: road path where connected, else gc × circuity."""
        dist = gc * mode_info[mode]["circuity"]
        sp = road(mode)
        if sp is not None:
            r = sp.reindex(index=pd.Index(o_codes), columns=pd.Index(d_codes)).to_numpy(dtype=float)
            dist = np.where(np.isfinite(r), r, dist)
        return dist

    def row_distances(mode: str, o_codes, d_codes, gc: np.ndarray) -> np.ndarray:
        """Route km for paired origins and destinations (1-D), same rule as :func:`distances`."""
        dist = gc * mode_info[mode]["circuity"]
        sp = road(mode)
        if sp is not None:
            i = sp.index.get_indexer(pd.Index(o_codes))
            j = sp.columns.get_indexer(pd.Index(d_codes))
            found = (i >= 0) & (j >= 0)
            r = np.full(len(dist), np.nan)
            r[found] = sp.to_numpy(dtype=float)[i[found], j[found]]
            dist = np.where(np.isfinite(r), r, dist)
        return dist

    # ---- generated lanes, one distance matrix per leg
    chunks: list[pd.DataFrame] = []
    masks = _leg_masks(case, sites)
    for leg in LEGS:
        users = [n for n, i in mode_info.items() if i["generate"] and leg in i["legs"]]
        ok, dk = leg.split("-")
        o, d = sites[ok], sites[dk]
        if not users or o.empty or d.empty:
            continue
        gc = pairwise_km(o["lat"], o["lon"], d["lat"], d["lon"])
        for name in users:
            info = mode_info[name]
            dist = distances(name, o.index, d.index, gc)
            keep = masks[leg] & (dist >= info["min_km"]) & (dist <= info["max_km"])
            if dk == "customer" and cap_customer >= 0:
                keep &= dist <= cap_customer
            ii, jj = np.nonzero(keep)
            if len(ii) == 0:
                continue
            km = dist[ii, jj]
            chunks.append(
                pd.DataFrame(
                    {
                        "origin": o.index.to_numpy()[ii],
                        "origin_kind": ok,
                        "destination": d.index.to_numpy()[jj],
                        "destination_kind": dk,
                        "leg": leg,
                        "mode": name,
                        "product": "",
                        "distance_km": km,
                        "transit_days": km / info["speed"] + info["handling"],
                        "cost_per_unit": np.nan,
                        "capacity": np.inf,
                        "source": "generated",
                        "origin_lat": o["lat"].to_numpy()[ii],
                        "origin_lon": o["lon"].to_numpy()[ii],
                        "destination_lat": d["lat"].to_numpy()[jj],
                        "destination_lon": d["lon"].to_numpy()[jj],
                    }
                )
            )

    # ---- explicit lanes: fill blanks, override, remove
    avail = explicit[explicit["available"]].copy()
    if len(avail):
        names = avail["mode"].to_numpy()
        gc = haversine_km(avail["origin_lat"], avail["origin_lon"], avail["destination_lat"], avail["destination_lon"])
        gc = np.asarray(gc, dtype=float)
        computed = np.empty(len(avail))
        for name in pd.unique(names):
            sel = names == name
            computed[sel] = row_distances(
                name, avail["origin"].to_numpy()[sel], avail["destination"].to_numpy()[sel], gc[sel]
            )
        given = avail["distance_km"].to_numpy(dtype=float)
        km = np.where(np.isnan(given), computed, given)
        speed = np.array([mode_info[n]["speed"] for n in names])
        handling = np.array([mode_info[n]["handling"] for n in names])
        days = avail["transit_days"].to_numpy(dtype=float)
        avail["distance_km"] = km
        avail["transit_days"] = np.where(np.isnan(days), km / speed + handling, days)
        avail["source"] = "explicit"
        chunks.append(avail[LANE_COLUMNS])

    lanes = pd.concat(chunks, ignore_index=True) if chunks else empty_lanes()
    if len(lanes) and len(avail):
        # an explicit row replaces a generated row with the same key
        explicit_keys = pd.MultiIndex.from_frame(avail[_KEY])
        keys = pd.MultiIndex.from_frame(lanes[_KEY])
        lanes = lanes[~((lanes["source"] == "generated").to_numpy() & keys.isin(explicit_keys))]

    removed = explicit[~explicit["available"]]
    if len(removed) and len(lanes):
        whole = removed[removed["product"] == ""]
        if len(whole):
            k3 = pd.MultiIndex.from_frame(lanes[["origin", "destination", "mode"]])
            lanes = lanes[~k3.isin(pd.MultiIndex.from_frame(whole[["origin", "destination", "mode"]]))]
        one = removed[removed["product"] != ""]
        if len(one) and len(lanes):
            lanes = lanes[~pd.MultiIndex.from_frame(lanes[_KEY]).isin(pd.MultiIndex.from_frame(one[_KEY]))]
            # bar the product from a lane still open to every product
            every = lanes[lanes["product"] == ""]
            bars = every.merge(
                one[["origin", "destination", "mode", "product"]].rename(columns={"product": "barred"}),
                on=["origin", "destination", "mode"],
            )
            if len(bars):
                bars = bars.assign(product=bars["barred"], capacity=0.0, cost_per_unit=np.nan, source="explicit")
                lanes = pd.concat([lanes, bars[LANE_COLUMNS]], ignore_index=True)

    return _sorted(lanes)


def _sorted(lanes: pd.DataFrame) -> pd.DataFrame:
    if lanes.empty:
        return empty_lanes()
    order = {leg: i for i, leg in enumerate(LEGS)}
    lanes = lanes.assign(_leg=lanes["leg"].map(order))
    lanes = lanes.sort_values(["_leg", "origin", "destination", "mode", "product"], kind="mergesort")
    lanes = lanes.drop(columns="_leg").reset_index(drop=True)
    for c in FLOAT_COLUMNS:
        lanes[c] = lanes[c].astype(float)
    return lanes[LANE_COLUMNS]


def lane_summary(lanes: pd.DataFrame) -> pd.DataFrame:
    """Lane counts by leg and mode.

    Returns:
        DataFrame with columns leg, mode, lanes (rows), generated, explicit (rows by
        source), shortest_km and longest_km (distance range, km); sorted by leg then mode.
    """
    cols = ["leg", "mode", "lanes", "generated", "explicit", "shortest_km", "longest_km"]
    if lanes.empty:
        return pd.DataFrame({c: pd.Series(dtype=str if c in ("leg", "mode") else float) for c in cols})
    g = lanes.assign(_gen=lanes["source"] == "generated", _exp=lanes["source"] == "explicit")
    out = (
        g.groupby(["leg", "mode"], sort=False)
        .agg(
            lanes=("origin", "size"),
            generated=("_gen", "sum"),
            explicit=("_exp", "sum"),
            shortest_km=("distance_km", "min"),
            longest_km=("distance_km", "max"),
        )
        .reset_index()
    )
    order = {leg: i for i, leg in enumerate(LEGS)}
    out = out.assign(_o=out["leg"].map(order)).sort_values(["_o", "mode"]).drop(columns="_o")
    for c in ("lanes", "generated", "explicit"):
        out[c] = out[c].astype(int)
    return out.reset_index(drop=True)[cols]


def case_lanes(case: Case) -> pd.DataFrame:
    """The case's lane table, built once per :class:`Case` and kept on it.

    Validation builds it for the reachability check; every solve and study of the same
    case object then reuses it.  ``Case.copy()`` (made to apply scenario changes) drops it.
    """
    if case.generated_lanes is None:
        case.generated_lanes = build_lanes(case)
    return case.generated_lanes


register_lane_builder(build_lanes)
