"""Freight rates as carriers quote them: a mode's rate tiers by distance band and shipment weight, with a
minimum charge per shipment, turned into one freight cost per unit of each arc (so the model stays linear).

For an arc a of mode m over d_a km carrying a product of w_p kg, with the mode's average shipment S_m kg,
the tier is the row of ``rate_tiers`` of mode m whose band holds the lane and whose weight break holds the
shipment (min_km ≤ d_a < max_km, min_kg ≤ S_m < max_kg; the largest min_km, then the largest min_kg, where
rows overlap).  Then

    f_a = max(w_p / 1000 × d_a × r_tier,  M_tier × w_p / S_m) + c^fix_m          (currency/unit)

i.e. a shipment pays its weight × distance × rate, or the minimum charge when that is more, spread over
the S_m / w_p units of an average shipment.  An arc of a mode without tiers, or outside every tier of its
mode, is priced at the mode's own cost_per_tonne_km: f_a = w_p / 1000 × d_a × r_m + c^fix_m.  A lane whose
cost_per_unit is given keeps it.

| symbol | meaning | unit | name in code |
|---|---|---|---|
| d_a | lane distance | km | arc column ``distance_km`` |
| w_p | unit weight | kg | ``products.unit_weight_kg`` |
| S_m | average shipment weight of the mode | kg | ``modes.shipment_kg`` |
| r_tier, M_tier | the tier's rate and minimum charge per shipment | currency/(t·km), currency | ``rate_tiers`` |
| r_m, c^fix_m | the mode's own rate and per-unit charge | currency/(t·km), currency/unit | ``modes.cost_per_tonne_km``, ``modes.fixed_cost_per_unit`` |
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from netopt.data.case import Case


def tier_of(case: Case, mode: np.ndarray, km: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The tier's rate r (currency/(t·km), NaN where no tier applies) and minimum charge M (currency per
    shipment) of each (mode, distance)."""
    n = len(mode)
    tiers = case.tables["rate_tiers"]
    rate, charge = np.full(n, np.nan), np.zeros(n)
    if tiers.empty or n == 0:
        return rate, charge
    ship = case.tables["modes"].set_index("mode")["shipment_kg"].astype(float)
    s = pd.Series(mode).map(ship).to_numpy(float)
    order = tiers.sort_values(["min_km", "min_kg"], ascending=False)
    for t in order.itertuples(index=False):  # tiers are few (a carrier's rate card), arcs are vectorised
        shipment_ok = (np.isnan(s) & (t.min_kg <= 0) & np.isinf(t.max_kg)) | ((s >= t.min_kg) & (s < t.max_kg))
        hit = np.isnan(rate) & (mode == t.mode) & (km >= t.min_km) & (km < t.max_km) & shipment_ok
        rate[hit] = t.cost_per_tonne_km
        charge[hit] = t.min_charge
    return rate, charge


def freight_from_rates(case: Case, arcs: pd.DataFrame) -> np.ndarray:
    """f_a of each arc from its distance, weight and mode (see the module docstring), before any lane's own
    cost_per_unit or border cost."""
    modes = case.tables["modes"].set_index("mode")
    w = arcs["product"].map(case.tables["products"].set_index("product")["unit_weight_kg"]).to_numpy(float)
    km = arcs["distance_km"].to_numpy(float)
    m = arcs["mode"].astype(str).to_numpy()
    own = arcs["mode"].map(modes["cost_per_tonne_km"]).to_numpy(float)
    fixed = arcs["mode"].map(modes["fixed_cost_per_unit"]).to_numpy(float)
    rate, charge = tier_of(case, m, km)
    ship = arcs["mode"].map(modes["shipment_kg"].astype(float)).to_numpy(float)
    per_unit_min = np.where((charge > 0) & np.isfinite(ship), charge * w / np.where(np.isfinite(ship), ship, 1.0), 0.0)
    haul = w / 1000.0 * km * np.where(np.isnan(rate), own, rate)
    return np.maximum(haul, np.where(np.isnan(rate), 0.0, per_unit_min)) + fixed
