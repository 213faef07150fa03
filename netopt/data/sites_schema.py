"""The declared output tables of candidate-site finding (``netopt sites``): centres of gravity per
region, proposed candidate DCs (``candidate_sites.csv`` has the columns of the ``dcs`` input table, so
its rows can be pasted into a case), how each was found, and the DC-count curve.  Registered with
:mod:`netopt.data.result_registry`; :mod:`netopt.data.results_schema` imports this module."""

from __future__ import annotations

from netopt.data.result_columns import DCS_OPEN, DCS_OPEN_NAMES, GAP, REGION, STATUS, TOTAL_COST, VERIFIED
from netopt.data.result_registry import declare_table as _table
from netopt.data.result_types import result_column as _c

LAT = _c("lat", "float", "degrees", "lat", "Latitude (WGS84)")
LON = _c("lon", "float", "degrees", "lon", "Longitude (WGS84)")

_table(
    "gravity_centres",
    "Per customer region: the demand-weighted point of least great-circle distance (Weiszfeld on the sphere)",
    "netopt sites",
    REGION,
    LAT,
    LON,
    _c("customers", "int", "count", "customers", "Customers in the region"),
    _c("weight", "float", "ratio", "weight", "Demand weighting the centre (units/yr or t/yr: see weight_basis)"),
    _c("weight_basis", "str", "text", "weighted by", "units (annual demand) or tonnes"),
    _c("mean_km", "float", "km", "mean km", "Demand-weighted mean great-circle km from the centre"),
    _c("iterations", "int", "count", "iterations", "Weiszfeld iterations taken"),
    _c("converged", "bool", "flag", "converged", "The last step moved less than the tolerance"),
    _c("at_customer", "str", "text", "at customer", "The customer the optimum sits on (blank: none)"),
)
_table(
    "candidate_sites",
    "Proposed candidate DCs in the columns of the dcs input table (paste the rows into dcs.csv)",
    "netopt sites",
    _c("dc", "str", "text", "DC", "Proposed DC code"),
    LAT,
    LON,
    _c("status", "str", "text", "status", "Always candidate"),
    _c("fixed_cost", "float", "currency/yr", "fixed cost", "Annual fixed cost if opened (see site_proposals)"),
    _c("capacity", "float", "units/yr", "capacity", "Throughput capacity (see site_proposals)"),
    _c("handling_cost", "float", "currency/unit", "handling cost", "Handling cost per unit (see site_proposals)"),
    _c("closing_cost", "float", "currency/yr", "closing cost", "0: a candidate is not closed"),
    REGION,
)
_table(
    "site_proposals",
    "How each proposed site was found: method, snapped city, distances and where its cost figures came from",
    "netopt sites",
    _c("dc", "str", "text", "DC", "Proposed DC code"),
    _c("method", "str", "text", "method", "centre_of_gravity (per region) or cluster (k weighted clusters)"),
    REGION,
    _c("cluster", "int", "count", "cluster", "Cluster number (0 for a region's centre)"),
    _c("customers", "int", "count", "customers", "Customers the site was placed for"),
    _c("weight", "float", "ratio", "weight", "Their demand (units/yr or t/yr: see weight_basis)"),
    _c("weight_basis", "str", "text", "weighted by", "units or tonnes"),
    _c("centre_lat", "float", "degrees", "centre lat", "Latitude of the unsnapped optimum"),
    _c("centre_lon", "float", "degrees", "centre lon", "Longitude of the unsnapped optimum"),
    _c("city", "str", "text", "city", "Nearest city of the offline city list (GeoNames, CC BY 4.0)"),
    _c("country", "str", "text", "country", "ISO country code of that city"),
    _c("city_population", "int", "count", "population", "Its population in the city list"),
    _c("snap_km", "float", "km", "snap km", "Great-circle km from the optimum to the city"),
    _c("mean_km", "float", "km", "mean km", "Demand-weighted mean km from the snapped site to its customers"),
    _c("cost_basis", "str", "text", "cost basis", "Where fixed cost, capacity and handling cost came from"),
)
_table(
    "cluster_sweep",
    "k weighted clusters of the customers for k = 1 … K: how far demand is from its nearest cluster centre",
    "netopt sites",
    _c("k", "int", "count", "k", "Clusters (sites)"),
    _c("mean_km", "float", "km", "mean km", "Demand-weighted mean great-circle km to the nearest centre"),
    _c("max_km", "float", "km", "max km", "Farthest customer from its centre"),
    _c("gain_km", "float", "km", "gain km", "Drop of mean km against k − 1 clusters (blank for k = 1)"),
    _c("converged", "bool", "flag", "converged", "Cooper's alternation ended with no customer changing cluster"),
)
_table(
    "dc_count_curve",
    "The network solved with exactly N open DCs, for each N: total cost and its components",
    "netopt sites",
    _c("n_dcs", "int", "count", "DCs", "Open DCs required (policy min_open_dcs = max_open_dcs = N)"),
    STATUS,
    TOTAL_COST,
    _c("cost_<component>", "float", "currency/yr", "<component> cost", "One cost component"),
    _c("delta_to_best", "float", "currency/yr", "Δ to best", "Total cost − the least total on the curve", signed=True),
    _c("best", "bool", "flag", "best", "The least total cost on the curve"),
    DCS_OPEN,
    DCS_OPEN_NAMES,
    GAP,
    VERIFIED,
    _c("dc_set", "str", "text", "DCs offered", "Which DCs the solves could open: the case's, plus proposed sites"),
)
