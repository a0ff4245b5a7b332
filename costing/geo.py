"""Great-circle distance on the mean-radius sphere. Nothing else."""

from __future__ import annotations

import math

# IUGG mean radius R1 = (2a + b) / 3 of the WGS84 ellipsoid, in km.
EARTH_RADIUS_KM = 6371.0088


def great_circle_km(lat1: float, lon1: float, lat2: float, lon2: float) -> float:
    """Haversine distance in km. Within 0.57 % of the WGS84 geodesic for any pair."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp = p2 - p1
    dl = math.radians(lon2 - lon1)
    a = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * EARTH_RADIUS_KM * math.asin(min(1.0, math.sqrt(a)))


def great_circle_km_many(lats, lons, lat0: float, lon0: float):
    """Vectorised haversine from every (lat, lon) to one point; numpy arrays in, out."""
    import numpy as np

    p1 = np.radians(lats)
    p2 = math.radians(lat0)
    dp = p2 - p1
    dl = math.radians(lon0) - np.radians(lons)
    a = np.sin(dp / 2) ** 2 + np.cos(p1) * math.cos(p2) * np.sin(dl / 2) ** 2
    return 2 * EARTH_RADIUS_KM * np.arcsin(np.minimum(1.0, np.sqrt(a)))
