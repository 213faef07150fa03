"""Published freight emission factors (kg CO2e per tonne-km) to use in ``modes.co2_kg_per_tonne_km``.

netopt computes CO2e per flow as tonnes × route km × the mode's factor.  The case states the
factor per mode; this table gives defaults with their sources, so a case (and the documentation
of the data templates) can name where each number comes from.

All rows are *direct* (tank-to-wheel) factors: fuel burned in the vehicle, no upstream fuel
production, no radiative forcing for air.  Mixing scopes distorts comparisons by 20–90 %
(well-to-wheel adds roughly 20–25 % for diesel; radiative forcing about doubles air), so keep
one scope per case.  Distance basis: road and rail factors are per actual route km (netopt: great
circle × circuity); GLEC's air factor assumes great-circle distance + 95 km.

Confidence: "high" = read in a copy of the primary table; "medium" = read through a secondary
page that cites the table and edition (the primary file was not available); no value here is
recalled from memory.
"""

from __future__ import annotations

DEFRA_2012_7E = (
    "Defra/DECC, 2012 Guidelines to Defra/DECC's GHG Conversion Factors for Company Reporting "
    "(April 2012), Annex 7, Table 7e"
)
DEFRA_DIRECT_MSC = (
    "Defra 'direct' freight factors as quoted by the Mode Shift Centre (Freight Transport "
    "Association) water-freight page; edition year not stated there (about 2012)"
)
GLEC_V3 = "GLEC Framework v3.0 (Smart Freight Centre, 2023), Table 1 'Air transport emission intensity factors'"

#: Default factors.  ``mode`` is the suggested mode name in ``modes.csv``.
DEFAULT_FACTORS: tuple[dict, ...] = (
    {
        "mode": "air",
        "kg_co2e_per_tkm": 0.498,
        "vehicle": "freighter aircraft, > 1,500 km (IATA RP1678 basis)",
        "scope": "tank-to-wheel",
        "distance_basis": "great-circle km + 95 km",
        "source": GLEC_V3,
        "confidence": "medium",
    },
    {
        "mode": "road",
        "kg_co2e_per_tkm": 0.08473,
        "vehicle": "articulated HGV > 33 t, UK average load (62 %)",
        "scope": "direct (tank-to-wheel)",
        "distance_basis": "actual road km",
        "source": DEFRA_2012_7E,
        "confidence": "high",
    },
    {
        "mode": "road_ltl",
        "kg_co2e_per_tkm": 0.12366,
        "vehicle": "all HGVs, UK average load (57 %)",
        "scope": "direct (tank-to-wheel)",
        "distance_basis": "actual road km",
        "source": DEFRA_2012_7E,
        "confidence": "high",
    },
    {
        "mode": "rail",
        "kg_co2e_per_tkm": 0.03159,
        "vehicle": "rail freight (diesel and electric mix)",
        "scope": "direct",
        "distance_basis": "actual rail km",
        "source": DEFRA_DIRECT_MSC,
        "confidence": "medium",
    },
    {
        "mode": "ocean",
        "kg_co2e_per_tkm": 0.01536,
        "vehicle": "deep-sea container ship >= 3,000 TEU",
        "scope": "direct",
        "distance_basis": "actual sea km",
        "source": DEFRA_DIRECT_MSC,
        "confidence": "medium",
    },
    {
        "mode": "short_sea",
        "kg_co2e_per_tkm": 0.029703,
        "vehicle": "short-sea container ship < 3,000 TEU",
        "scope": "direct",
        "distance_basis": "actual sea km",
        "source": DEFRA_DIRECT_MSC,
        "confidence": "medium",
    },
)


def emission_factors_frame():
    """The default factors as a DataFrame (kg CO2e per tonne-km, with vehicle, scope, distance basis, source)."""
    import pandas as pd

    return pd.DataFrame(list(DEFAULT_FACTORS))


def default_factor(mode: str) -> float | None:
    """The default kg CO2e per tonne-km for a suggested mode name, or None when there is none."""
    for row in DEFAULT_FACTORS:
        if row["mode"] == mode:
            return float(row["kg_co2e_per_tkm"])
    return None


def schema_note() -> str:
    """One-paragraph summary of the defaults for the schema's column meaning (and so the template docs)."""
    parts = [f"{r['mode']} {r['kg_co2e_per_tkm']:g}" for r in DEFAULT_FACTORS]
    return (
        "Direct (tank-to-wheel) defaults, kg CO2e/(t·km): "
        + ", ".join(parts)
        + ". Sources: road = Defra/DECC 2012 GHG conversion factors, Annex 7, Table 7e (articulated HGV > 33 t, "
        "average load; road_ltl = all HGVs); rail, ocean (container >= 3,000 TEU), short_sea = Defra direct "
        "factors as quoted by the Mode Shift Centre (edition about 2012); air = GLEC Framework v3.0 (2023), "
        "Table 1, freighter > 1,500 km, great-circle km + 95 km. Table with scope and confidence: "
        "netopt.emission_factors"
    )
