"""The declared freight rates as carriers quote them: rate tiers per mode by distance band and shipment
weight, with a minimum charge per shipment, and the average shipment size of a mode (registered in order
by :mod:`netopt.data.schema`; the rule is :mod:`netopt.network.rates`)."""

from __future__ import annotations

from netopt.data.declarations import INF, Reference, Table
from netopt.data.declarations import column as _c

SHIPMENT_KG = _c(
    "shipment_kg",
    "float",
    "kg",
    False,
    None,
    "Average shipment weight on this mode: picks the rate tier's weight break and spreads its minimum charge "
    "over the units of a shipment; blank = not stated (needed when the mode's rate_tiers have weight breaks or "
    "minimum charges)",
    min=1e-9,
)
"""Column of ``modes``."""

RATE_TIERS = Table(
    "rate_tiers",
    "Freight rate tiers (optional): a mode's rate per tonne-km by distance band and shipment weight, with a "
    "minimum charge per shipment; a lane priced from distance takes the tier holding its distance and its "
    "mode's shipment_kg (else the mode's own cost_per_tonne_km).",
    (
        _c("mode", "str", "", True, None, "Transport mode"),
        _c("min_km", "float", "km", False, 0.0, "Shortest lane of the band (included)", min=0),
        _c("max_km", "float", "km", False, INF, "Longest lane of the band (excluded); blank = no limit", min=0),
        _c("min_kg", "float", "kg", False, 0.0, "Lightest shipment of the weight break (included)", min=0),
        _c(
            "max_kg", "float", "kg", False, INF, "Heaviest shipment of the weight break (excluded); blank = none", min=0
        ),
        _c("cost_per_tonne_km", "float", "currency/(t·km)", True, None, "Rate of the tier", min=0),
        _c("min_charge", "float", "currency", False, 0.0, "Least freight charged per shipment", min=0),
    ),
    key=("mode", "min_km", "min_kg"),
    required=False,
    references=(Reference("mode", "modes", "mode"),),
)
