"""Fronts as files: RFC 7946 GeoJSON LineStrings, cut at the antimeridian.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from kit import CAUTION
from kit.errors import InputError
from kit.model import Analysis, Front, front_properties, json_clean
from kit.science.plausibility import plausibility_report, pooled_summary

__all__ = [
    "fronts_to_geojson",
    "split_antimeridian",
    "plausibility",
    "plausibility_notes",
    "plausibility_metadata",
    "plausibility_text",
]


def plausibility(analyses):
    """Plausibility report of one or more analyses (:mod:`kit.science.plausibility`).

    Parameters
    ----------
    analyses : kit.model.Analysis or list of them

    Returns
    -------
    pandas.DataFrame
        One row per run, member and valid time (a ``run`` column first).
    """
    items = [analyses] if isinstance(analyses, Analysis) else list(analyses)
    reports = []
    for a in items:
        if not isinstance(a, Analysis):
            raise InputError(f"plausibility: got {type(a).__name__}; expected kit.Analysis")
        r = plausibility_report(a.dataset, a.fronts, level=a.level_hpa, settings=a.settings)
        r.insert(0, "run", a.run)
        reports.append(r)
    out = pd.concat(reports, ignore_index=True) if reports else pd.DataFrame()
    out.attrs["pooled"] = pooled_summary(reports) if reports else {}
    out.attrs["caution"] = CAUTION
    # the thermal field of the fronts: theta on a thin run without humidity
    out.attrs["fields"] = sorted({a.settings.field for a in items})
    return out


def plausibility_notes(report):
    """Plain-words notes a product must carry: masking not possible, tropics only."""
    notes = []
    for run, grp in report.groupby("run", sort=False):
        if (grp["below_ground_source"] == "none").all():
            notes.append(
                f"run {run}: no surface pressure or surface height in the run; below-ground "
                "masking was not possible (missing values only)"
            )
        if (grp["masked_tropics_share"] >= 0.999).all():
            notes.append(
                f"run {run}: the whole domain lies equatorward of the fronts' latitude limit; "
                "no fronts are looked for there (FrontSettings.tropics_lat)"
            )
    return notes


def plausibility_metadata(report):
    """Return the report as JSON-clean metadata: rows and the pooled figures."""
    return {
        "rows": [{k: json_clean(v) for k, v in row.items()} for row in report.to_dict("records")],
        "pooled": {k: json_clean(v) for k, v in report.attrs.get("pooled", {}).items()},
        "lift": "(share - baseline) / (1 - baseline); baseline: random points with the "
        f"same {_field_words(report)} gradient distribution",
    }


def _field_words(report):
    """``theta-w``, ``theta`` or both: the thermal field(s) of the report's fronts."""
    fields = report.attrs.get("fields") or ["theta_w"]
    return " or ".join({"theta_w": "theta-w"}.get(f, f) for f in fields)


def plausibility_text(report):
    """Return a compact fixed-width table of the report for a terminal."""
    if report.empty:
        return "plausibility: nothing analysed"
    cols = {
        "run": "run",
        "member": "member",
        "valid_time": "valid",
        "n_fronts": "fronts",
        "fronts_per_1e7_km2": "/1e7km2",
        "vorticity_lift": "vort.lift",
        "shear_lift": "shear.lift",
        "trough_lift": "trough.lift",
        "tropical_share": "tropics",
        "below_ground_share": "below.gnd",
        "edge_share": "edge",
        "short_share": "short",
        "masked_below_ground_share": "masked.gnd",
    }
    keep = [c for c in cols if c in report]
    if "member" in keep and report["member"].isna().all():
        keep.remove("member")
    df = report[keep].rename(columns=cols)
    text = df.to_string(index=False, float_format=lambda v: f"{v:.2f}", na_rep="-")
    p = report.attrs.get("pooled", {})
    if p:
        text += (
            f"\npooled: {p['n_fronts']} fronts, {p['line_km']:.0f} km of line; lifts "
            f"vorticity {p['vorticity_lift']:.2f}, shear {p['shear_lift']:.2f}, trough "
            f"{p['trough_lift']:.2f}; shares tropics {p['tropical_share']:.2f}, below ground "
            f"{p['below_ground_share']:.2f}, edge {p['edge_share']:.2f}, short pieces "
            f"{p['short_share']:.2f}"
        )
    return text


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
