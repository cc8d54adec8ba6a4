"""Fronts as files: RFC 7946 GeoJSON LineStrings, cut at the antimeridian.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

import numpy as np

from kit import CAUTION
from kit.errors import InputError
from kit.model import Front, front_properties

__all__ = ["fronts_to_geojson", "split_antimeridian"]


def split_antimeridian(lon, lat):
    """Wrap longitudes to -180..180 and cut the line where it crosses 180."""
    lon = np.rad2deg(np.unwrap(np.deg2rad(np.asarray(lon, dtype=float))))
    lat = np.asarray(lat, dtype=float)
    parts = []
    cur_lon, cur_lat = [lon[0]], [lat[0]]
    k = np.floor((lon[0] + 180.0) / 360.0)
    for i in range(1, lon.size):
        k_i = np.floor((lon[i] + 180.0) / 360.0)
        if k_i != k:
            # crossing at the boundary between the two 360-degree sheets
            edge = 360.0 * max(k, k_i) - 180.0
            frac = (edge - lon[i - 1]) / (lon[i] - lon[i - 1])
            lat_x = lat[i - 1] + frac * (lat[i] - lat[i - 1])
            cur_lon.append(edge)
            cur_lat.append(lat_x)
            parts.append((np.array(cur_lon) - 360.0 * k, np.array(cur_lat)))
            cur_lon, cur_lat = [edge], [lat_x]
            k = k_i
        cur_lon.append(lon[i])
        cur_lat.append(lat[i])
    parts.append((np.array(cur_lon) - 360.0 * k, np.array(cur_lat)))
    out = []
    for plon, plat in parts:
        plon = np.clip(plon, -180.0, 180.0)
        if plon.size >= 2:
            out.append((plon, plat))
    return out


def fronts_to_geojson(fronts):
    """Fronts as an RFC 7946 GeoJSON FeatureCollection of LineStrings.

    Parameters
    ----------
    fronts : list of Front

    Returns
    -------
    dict
        ``{"type": "FeatureCollection", "features": [...], "caution": CAUTION}``.
        Coordinates [lon, lat] in degrees, longitude -180..180, rounded to
        1e-4 degree (about 10 m); a line crossing the antimeridian becomes two
        LineString features with the same properties (``part`` 0 and 1).
        Properties: ``kind``, ``valid_time`` (``YYYY-MM-DDTHH:MM:SSZ``),
        ``level_hpa``, ``length_km``, ``speed_ms`` (positive toward the cold
        side), ``speed_kt``, ``track``, ``run``, ``member`` and every key of
        ``front.props``; no NaN (null instead).
    """
    features = []
    for fr in fronts:
        if not isinstance(fr, Front):
            raise InputError(f"fronts_to_geojson: got {type(fr).__name__}; expected Front objects")
        props = front_properties(fr)
        ok = np.isfinite(fr.lon) & np.isfinite(fr.lat)
        if ok.sum() < 2:
            continue
        parts = split_antimeridian(np.asarray(fr.lon)[ok], np.asarray(fr.lat)[ok])
        for i, (plon, plat) in enumerate(parts):
            p = dict(props)
            if len(parts) > 1:
                p["part"] = i
            coords = [
                [round(float(a), 4), round(float(b), 4)] for a, b in zip(plon, plat, strict=True)
            ]
            features.append(
                {
                    "type": "Feature",
                    "geometry": {"type": "LineString", "coordinates": coords},
                    "properties": p,
                }
            )
    return {"type": "FeatureCollection", "caution": CAUTION, "features": features}
