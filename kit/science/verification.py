"""Verification of past events: observed passages, timing and position errors.

An *event folder* holds what one past event needs (README, "Event folders")::

    EVENT/runs/<run>/...nc     forecast runs (a folder of files per run)
    EVENT/analyses/...nc       verifying analyses at the forecast valid times
    EVENT/stations/<site>.csv  station series (units in the header)
    EVENT/sites.csv            name,lat,lon[,elevation_m]

Observed passages are found in each station series by detecting each surface
signal on its own - a theta-w (or dew-point) step, a wind turn, a pressure
trough - and combining the signals that fall within a lag window, because the
wind shift and the pressure trough can lead the temperature change by hours
(Sanders 1999; Schultz 2004). Forecast passages come from
:func:`kit.products.arrivals.arrival_table`; forecast lines are compared with the lines
located on the verifying analyses by mean distance and the modified Hausdorff
distance (Dubuisson & Jain 1994).
"""

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from kit.constants import MS_PER_KT, T0_K
from kit.errors import InputError
from kit.science.geo import local_east_north_km
from kit.science.thermo import wet_bulb_potential_temperature
from kit.timefmt import iso_minutes, iso_seconds

__all__ = [
    "StationSeries",
    "read_station_series",
    "detect_passages",
    "line_distances",
    "match_lines",
    "timing_pairs",
    "position_pairs",
    "summarise_timing",
    "summarise_position",
]

# Column name stems and their accepted unit suffixes -> converter to kit units.
_COLUMNS = {
    "pressure": {"hpa": lambda x: x, "mb": lambda x: x, "pa": lambda x: x / 100.0,
                 "kpa": lambda x: x * 10.0},
    "temperature": {"c": lambda x: x, "k": lambda x: x - T0_K,
                    "f": lambda x: (x - 32.0) * 5.0 / 9.0},
    "dewpoint": {"c": lambda x: x, "k": lambda x: x - T0_K,
                 "f": lambda x: (x - 32.0) * 5.0 / 9.0},
    "wind_dir": {"deg": lambda x: x},
    "wind_speed": {"kt": lambda x: x * MS_PER_KT, "ms": lambda x: x,
                   "m_s": lambda x: x, "kmh": lambda x: x / 3.6},
    "precip": {"mm_h": lambda x: x, "mmh": lambda x: x},
}
_REQUIRED = ("pressure", "temperature", "dewpoint", "wind_dir", "wind_speed")
PASSAGE_COLUMNS = ["site", "passage_utc", "front_kind", "theta_w_change_k", "wind_turn_deg",
                    "pressure_trough", "signals", "lead_of_wind_h", "confidence"]


@dataclass
class StationSeries:
    """A cleaned station series and what was wrong with the raw one.

    Attributes
    ----------
    name : str
        Site name (from the file name).
    data : pandas.DataFrame
        Indexed by UTC time; columns ``pressure_hpa``, ``temperature_c``,
        ``dewpoint_c``, ``wind_dir_deg``, ``wind_speed_ms`` (and
        ``precip_mm_h`` when given), sorted, duplicates dropped.
    problems : list of str
        Plain-words report of gaps, duplicate times and garbage rows.
    """

    name: str
    data: pd.DataFrame
    problems: list


def _parse_header(columns, path):
    """Map raw CSV columns to (stem, unit) pairs; one-line error if unusable."""
    found, time_col = {}, None
    for col in columns:
        key = col.strip().lower()
        if key in ("time", "time_utc", "valid_time", "datetime"):
            time_col = col
            continue
        for stem, units in _COLUMNS.items():
            if key.startswith(stem + "_"):
                unit = key[len(stem) + 1:]
                if unit not in units:
                    raise InputError(
                        f"{path}: column '{col}' has unit '{unit}'; expected one of "
                        f"{', '.join(stem + '_' + u for u in units)}"
                    )
                found[stem] = (col, unit)
    missing = [s for s in _REQUIRED if s not in found]
    if time_col is None or missing:
        need = (["time_utc"] if time_col is None else []) + [f"{s}_<unit>" for s in missing]
        raise InputError(
            f"{path}: station series lacks {', '.join(need)}; found columns {', '.join(columns)}"
        )
    return time_col, found


def read_station_series(path, name=None):
    """Read a station series CSV with the units in the header.

    Parameters
    ----------
    path : str or Path
        CSV with a time column (``time_utc``) and ``pressure_hpa``,
        ``temperature_c``, ``dewpoint_c``, ``wind_dir_deg``, ``wind_speed_kt``
        (other unit suffixes: ``_pa``, ``_k``, ``_f``, ``_ms``, ``_kmh``) and
        optionally ``precip_mm_h``.
    name : str, optional
        Site name; default the file stem.

    Returns
    -------
    StationSeries
        Gaps (longer than three typical intervals), duplicate times and
        garbage rows are listed in ``problems``, not fatal.
    """
    path = Path(path)
    try:
        raw = pd.read_csv(path, dtype=str, skipinitialspace=True, comment="#")
    except FileNotFoundError:
        raise InputError(f"{path}: station series not found") from None
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: not a readable CSV station series ({exc})") from None
    time_col, found = _parse_header(list(raw.columns), path)
    problems = []
    times = pd.to_datetime(raw[time_col], errors="coerce", utc=True)
    out = pd.DataFrame(index=raw.index)
    for stem, (col, unit) in found.items():
        values = pd.to_numeric(raw[col], errors="coerce")
        out[_canonical_column(stem)] = _COLUMNS[stem][unit](values.astype(float))
    bad = times.isna() | out[[_canonical_column(s) for s in _REQUIRED]].isna().any(axis=1)
    bad |= ~_plausible(out)
    if bad.any():
        rows = (np.flatnonzero(bad.to_numpy()) + 2).tolist()  # +2: header, 1-based
        shown = ", ".join(map(str, rows[:8])) + (" ..." if len(rows) > 8 else "")
        problems.append(f"{int(bad.sum())} garbage or implausible row(s) dropped (lines {shown})")
    out = out[~bad.to_numpy()]
    out.index = pd.DatetimeIndex(times[~bad]).tz_convert(None)
    out.index.name = "time"
    dup = out.index.duplicated(keep="first")
    if dup.any():
        problems.append(f"{int(dup.sum())} duplicate time(s) dropped (first kept)")
    out = out[~dup].sort_index()
    if len(out) < 4:
        raise InputError(f"{path}: only {len(out)} usable rows; need at least 4 timed observations")
    step = out.index.to_series().diff().median()
    gaps = out.index.to_series().diff()
    for t_end, gap in gaps[gaps > 3 * step].items():
        problems.append(
            f"gap of {gap / pd.Timedelta(hours=1):.1f} h ending {iso_minutes(t_end)}"
        )
    return StationSeries(name or path.stem, out, problems)


def _canonical_column(stem):
    return {
        "pressure": "pressure_hpa",
        "temperature": "temperature_c",
        "dewpoint": "dewpoint_c",
        "wind_dir": "wind_dir_deg",
        "wind_speed": "wind_speed_ms",
        "precip": "precip_mm_h",
    }[stem]


def _plausible(df):
    """Physically possible surface values (garbage filter, not quality control)."""
    ok = df["pressure_hpa"].between(500, 1100) & df["temperature_c"].between(-90, 60)
    ok &= df["dewpoint_c"].between(-100, 40) & (df["dewpoint_c"] <= df["temperature_c"] + 0.5)
    ok &= df["wind_dir_deg"].between(0, 360) & df["wind_speed_ms"].between(0, 120)
    return ok.fillna(False)


# --------------------------------------------------------------------------
# Observed passages
# --------------------------------------------------------------------------

def _regular(series, step):
    """Put a series on a regular time axis, gaps left as NaN (never bridged)."""
    t0, t1 = series.index[0].floor(step), series.index[-1].ceil(step)
    axis = pd.date_range(t0, t1, freq=step)
    return series.reindex(axis, method="nearest", tolerance=step / 2)


def _window_change(values, half):
    """Mean of the ``half`` samples after minus mean of the ``half`` before each point."""
    n = len(values)
    out = np.full(n, np.nan)
    for i in range(half, n - half):
        before = values[i - half:i]
        after = values[i:i + half]
        enough = half // 2 + 1
        if np.isfinite(before).sum() >= enough and np.isfinite(after).sum() >= enough:
            out[i] = np.nanmean(after) - np.nanmean(before)
    return out


def _peaks(score, threshold, min_sep):
    """Return indices of local maxima of ``score`` above ``threshold``, ``min_sep`` apart."""
    idx = [i for i in np.argsort(-np.nan_to_num(score, nan=-np.inf))
           if np.isfinite(score[i]) and score[i] >= threshold]
    chosen = []
    for i in idx:
        if all(abs(i - j) >= min_sep for j in chosen):
            chosen.append(i)
    return sorted(chosen)


def _refine(score, i):
    """Sub-sample peak position by a parabola through the three samples at ``i``."""
    if 0 < i < len(score) - 1 and np.all(np.isfinite(score[i - 1:i + 2])):
        a, b, c = score[i - 1], score[i], score[i + 1]
        denom = a - 2 * b + c
        if denom < 0:
            return i + 0.5 * (a - c) / denom
    return float(i)


def detect_passages(
    station,
    *,
    window_h=3.0,
    lag_h=4.0,
    theta_w_step_k=1.5,
    wind_turn_deg=30.0,
    trough_hpa=0.6,
    latitude=None,
):
    """Find frontal passages in a station series.

    Each signal is detected on its own, then signals within ``lag_h`` of each
    other are combined into one passage (Schultz 2004: the wind shift and the
    trough may lead the temperature change by hours).

    Parameters
    ----------
    station : StationSeries
    window_h : float
        Length of the before/after windows [h] over which a change is measured.
    lag_h : float
        Largest separation of signals belonging to one passage [h].
    theta_w_step_k : float
        Smallest theta-w change across ``window_h`` counted as a thermal step [K].
    wind_turn_deg : float
        Smallest direction change counted as a wind shift [deg].
    trough_hpa : float
        Smallest pressure rise on both sides of a minimum counted as a trough [hPa].
    latitude : float, optional
        Site latitude [deg]; only used to label the expected turning sense.

    Returns
    -------
    pandas.DataFrame
        One row per passage: ``passage_utc`` (the thermal step when there is
        one, otherwise the wind shift, otherwise the trough), ``front_kind``
        (``warm`` for a theta-w rise, ``cold`` for a fall, ``unknown`` without a
        thermal step), ``theta_w_change_k``, ``wind_turn_deg`` (signed,
        positive clockwise), ``pressure_trough``, ``signals`` (e.g.
        ``"theta-w step, wind turn, trough"``), ``lead_of_wind_h`` (wind shift
        time minus thermal step time), ``confidence`` (0..1).

    Notes
    -----
    A front at the surface shows a strong potential-temperature gradient with
    a pressure trough and a wind shift (Sanders 1999); a passage with the
    thermal step alone, or with two non-thermal signals only, gets a lower
    confidence. Thresholds are defaults chosen for mid-latitude synoptic
    fronts (common practice, no source); tune them per climate.
    """
    df = station.data
    step = df.index.to_series().diff().median()
    if not isinstance(step, pd.Timedelta) or step <= pd.Timedelta(0):
        raise InputError(f"{station.name}: cannot find a regular observation interval")
    reg = _regular(df, step)
    hours = step / pd.Timedelta(hours=1)
    half = max(2, int(round(window_h / hours)))
    theta_w = np.asarray(
        wet_bulb_potential_temperature(
            reg["temperature_c"].to_numpy() + T0_K,
            reg["dewpoint_c"].to_numpy() + T0_K,
            reg["pressure_hpa"].to_numpy(),
        ),
        dtype=float,
    )
    d_theta = _window_change(theta_w, half)
    # wind: change of the speed-weighted mean direction across the window
    rad = np.deg2rad(reg["wind_dir_deg"].to_numpy())
    spd = reg["wind_speed_ms"].to_numpy()
    u, v = -spd * np.sin(rad), -spd * np.cos(rad)
    turn = np.full(len(reg), np.nan)
    for i in range(half, len(reg) - half):
        if not (np.isfinite(u[i - half:i]).any() and np.isfinite(u[i:i + half]).any()):
            continue  # a gap: no wind on one side
        ub, vb = np.nanmean(u[i - half:i]), np.nanmean(v[i - half:i])
        ua, va = np.nanmean(u[i:i + half]), np.nanmean(v[i:i + half])
        if np.hypot(ub, vb) > 1.0 and np.hypot(ua, va) > 1.0:
            # direction the wind comes from, before and after; clockwise positive
            db = np.rad2deg(np.arctan2(-ub, -vb))
            da = np.rad2deg(np.arctan2(-ua, -va))
            turn[i] = (da - db + 180.0) % 360.0 - 180.0
    # trough: a pressure minimum with rises on both sides over the window
    p = reg["pressure_hpa"].to_numpy()
    trough_score = np.full(len(reg), np.nan)
    width = max(3, half // 2) | 1
    smooth_p = pd.Series(p).rolling(width, center=True, min_periods=2).mean().to_numpy()
    for i in range(half, len(reg) - half):
        seg_b, seg_a = smooth_p[i - half:i], smooth_p[i + 1:i + half + 1]
        if np.isfinite(smooth_p[i]) and np.isfinite(seg_b).any() and np.isfinite(seg_a).any():
            trough_score[i] = min(np.nanmax(seg_b) - smooth_p[i], np.nanmax(seg_a) - smooth_p[i])
    min_sep = max(1, int(round(2 * window_h / hours)))
    signals = []
    for i in _peaks(np.abs(d_theta), theta_w_step_k, min_sep):
        signals.append(("theta-w step", _refine(np.abs(d_theta), i), d_theta[i]))
    for i in _peaks(np.abs(turn), wind_turn_deg, min_sep):
        signals.append(("wind turn", _refine(np.abs(turn), i), turn[i]))
    for i in _peaks(trough_score, trough_hpa, min_sep):
        signals.append(("trough", _refine(trough_score, i), trough_score[i]))
    signals.sort(key=lambda s: s[1])
    lag = lag_h / hours
    groups, used = [], [False] * len(signals)
    # thermal steps anchor a passage first; the others join the nearest anchor
    anchors = [k for k, s in enumerate(signals) if s[0] == "theta-w step"]
    anchors += [k for k, s in enumerate(signals) if s[0] == "wind turn"]
    anchors += [k for k, s in enumerate(signals) if s[0] == "trough"]
    for k in anchors:
        if used[k]:
            continue
        group = {signals[k][0]: signals[k]}
        used[k] = True
        for j, s in enumerate(signals):
            if not used[j] and s[0] not in group and abs(s[1] - signals[k][1]) <= lag:
                group[s[0]] = s
                used[j] = True
        groups.append(group)
    rows = []
    t0 = reg.index[0]
    for g in groups:
        if len(g) == 1 and "theta-w step" not in g:
            continue  # a lone wind turn or trough is not a front (Sanders 1999)
        anchor = g.get("theta-w step") or g.get("wind turn") or g.get("trough")
        when = t0 + pd.Timedelta(hours=anchor[1] * hours)
        dth = g["theta-w step"][2] if "theta-w step" in g else np.nan
        kind = "unknown" if np.isnan(dth) else ("warm" if dth > 0 else "cold")
        lead = np.nan
        if "wind turn" in g and "theta-w step" in g:
            lead = (g["wind turn"][1] - g["theta-w step"][1]) * hours
        conf = {"theta-w step": 0.5, "wind turn": 0.3, "trough": 0.2}
        rows.append({
            "site": station.name,
            "passage_utc": when,
            "front_kind": kind,
            "theta_w_change_k": round(float(dth), 2) if np.isfinite(dth) else np.nan,
            "wind_turn_deg": round(float(g["wind turn"][2]), 0) if "wind turn" in g else np.nan,
            "pressure_trough": "trough" in g,
            "signals": ", ".join(s for s in ("theta-w step", "wind turn", "trough") if s in g),
            "lead_of_wind_h": round(float(lead), 2) if np.isfinite(lead) else np.nan,
            "confidence": round(sum(conf[s] for s in g), 2),
        })
    frame = pd.DataFrame(rows, columns=PASSAGE_COLUMNS)
    return frame.sort_values("passage_utc", ignore_index=True)


# --------------------------------------------------------------------------
# Line position errors
# --------------------------------------------------------------------------

def _to_local_km(lon, lat, lon0, lat0):
    """Azimuthal equidistant plane about (lon0, lat0) [km], as (n, 2) points."""
    east, north = local_east_north_km(np.asarray(lon, float), np.asarray(lat, float), lon0, lat0)
    return np.column_stack([east, north])


def _densify(xy, spacing_km):
    """Insert points along each segment so no gap exceeds ``spacing_km``."""
    out = [xy[:1]]
    for a, b in zip(xy[:-1], xy[1:], strict=True):
        n = max(1, int(np.ceil(np.hypot(*(b - a)) / spacing_km)))
        frac = np.arange(1, n + 1)[:, None] / n
        out.append(a + frac * (b - a))
    return np.vstack(out)


def _point_to_polyline(points, line):
    """Shortest distance from each point to a polyline (planar, same units)."""
    a, b = line[:-1], line[1:]
    ab = b - a
    len2 = np.maximum((ab ** 2).sum(axis=1), 1e-12)
    ap = points[:, None, :] - a[None, :, :]
    t = np.clip((ap * ab[None]).sum(axis=2) / len2[None], 0.0, 1.0)
    nearest = a[None] + t[..., None] * ab[None]
    d = np.hypot(*(points[:, None, :] - nearest).transpose(2, 0, 1))
    return d.min(axis=1)


def line_distances(lon_a, lat_a, lon_b, lat_b, *, spacing_km=10.0, within_km=100.0):
    """Distances between two front lines on the sphere.

    Both lines are projected onto an azimuthal equidistant plane centred
    between them (distances from the centre are exact; within 1500 km of it,
    other distances are within about 1 %), densified to ``spacing_km`` and
    compared point-to-polyline.

    Parameters
    ----------
    lon_a, lat_a, lon_b, lat_b : array_like
        Vertices of line A (forecast) and line B (verifying) [degrees].
    spacing_km : float
        Densification step [km].
    within_km : float
        Distance under which a point of A counts as matched [km].

    Returns
    -------
    dict
        ``mean_ab_km`` (mean distance from A to B), ``mean_ba_km``,
        ``mhd_km`` (modified Hausdorff distance, the larger of the two means,
        Dubuisson & Jain 1994), ``hausdorff_km`` (classic, the largest
        point-to-line distance either way), ``frac_within`` (share of A within
        ``within_km`` of B).
    """
    lon_a, lat_a = np.asarray(lon_a, float), np.asarray(lat_a, float)
    lon_b, lat_b = np.asarray(lon_b, float), np.asarray(lat_b, float)
    if lon_a.size < 2 or lon_b.size < 2:
        raise InputError("line_distances: each line needs at least 2 vertices")
    lons = np.concatenate([lon_a, lon_b])
    ref = lons[0]
    lons_c = (lons - ref + 180.0) % 360.0 - 180.0 + ref  # contiguous across the dateline
    lon0 = float(np.mean(lons_c))
    lat0 = float(np.mean(np.concatenate([lat_a, lat_b])))
    xy_a = _densify(_to_local_km(lon_a, lat_a, lon0, lat0), spacing_km)
    xy_b = _densify(_to_local_km(lon_b, lat_b, lon0, lat0), spacing_km)
    d_ab = _point_to_polyline(xy_a, xy_b)
    d_ba = _point_to_polyline(xy_b, xy_a)
    return {
        "mean_ab_km": float(d_ab.mean()),
        "mean_ba_km": float(d_ba.mean()),
        "mhd_km": float(max(d_ab.mean(), d_ba.mean())),
        "hausdorff_km": float(max(d_ab.max(), d_ba.max())),
        "frac_within": float((d_ab <= within_km).mean()),
    }


def match_lines(forecast, verifying, *, max_mhd_km=600.0):
    """Pair forecast fronts with verifying fronts of the same kind and valid time.

    Parameters
    ----------
    forecast, verifying : list of kit.science.fronts.Front
    max_mhd_km : float
        A pair further apart than this (modified Hausdorff) is a miss [km].

    Returns
    -------
    list of (Front or None, Front or None, dict or None)
        Each verifying front once; unmatched forecast fronts appear with
        ``None`` as verifying (false alarms), unmatched verifying fronts with
        ``None`` as forecast (misses).
    """
    pairs, taken = [], set()
    for vf in verifying:
        best, best_d = None, None
        for k, ff in enumerate(forecast):
            if k in taken or ff.kind != vf.kind or ff.valid_time != vf.valid_time:
                continue
            d = line_distances(ff.lon, ff.lat, vf.lon, vf.lat)
            if d["mhd_km"] <= max_mhd_km and (best_d is None or d["mhd_km"] < best_d["mhd_km"]):
                best, best_d = k, d
        if best is None:
            pairs.append((None, vf, None))
        else:
            taken.add(best)
            pairs.append((forecast[best], vf, best_d))
    pairs += [(ff, None, None) for k, ff in enumerate(forecast) if k not in taken]
    return pairs


# --------------------------------------------------------------------------
# Pairs and summaries
# --------------------------------------------------------------------------

_LEAD_BINS_H = (0, 12, 24, 36, 48, 72, 120, 240)


def _lead_bin(lead_h):
    for lo, hi in zip(_LEAD_BINS_H[:-1], _LEAD_BINS_H[1:], strict=True):
        if lo <= lead_h < hi:
            return f"{lo}-{hi} h"
    return f">={_LEAD_BINS_H[-1]} h" if lead_h >= _LEAD_BINS_H[-1] else "<0 h"


def timing_pairs(forecast, observed, reference_times, *, max_error_h=12.0, event=""):
    """Pair forecast passages with observed passages of the same site and kind.

    Parameters
    ----------
    forecast : pandas.DataFrame
        Arrival table rows (``site``, ``front_kind``, ``passage_utc``, ``run``).
    observed : pandas.DataFrame
        Output of :func:`detect_passages` for every site.
    reference_times : dict
        Run label -> reference time, for the lead time.
    max_error_h : float
        Pairs further apart than this count as a miss and a false alarm [h].
    event : str
        Event name written into every row.

    Returns
    -------
    pandas.DataFrame
        One row per pair or unpaired passage: ``event, site, front_kind, run,
        lead_h, lead_bin, forecast_utc, observed_utc, error_h`` (forecast minus
        observed: positive = forecast late) and ``outcome`` (``hit``, ``miss``,
        ``false alarm``).
    """
    rows = []
    # the arrival table leaves passage_utc empty ("") where a front never arrives
    fc = forecast[forecast["passage_utc"].replace("", np.nan).notna()].copy()
    fc["t"] = pd.to_datetime(fc["passage_utc"], utc=True).dt.tz_convert(None)
    ob = observed.copy()
    ob["t"] = pd.to_datetime(ob["passage_utc"], utc=True).dt.tz_convert(None).astype(
        "datetime64[ns]")
    for run, fc_run in fc.groupby("run", sort=True):
        ref = pd.Timestamp(reference_times[run]).tz_localize(None)
        used = set()
        for _, f in fc_run.sort_values("t").iterrows():
            cand = ob[(ob["site"] == f["site"]) & (ob["front_kind"] == f["front_kind"])]
            cand = cand[~cand.index.isin(used)]
            err = (f["t"] - cand["t"]) / pd.Timedelta(hours=1)
            lead = (f["t"] - ref) / pd.Timedelta(hours=1)
            row = {"event": event, "site": f["site"], "front_kind": f["front_kind"], "run": run,
                   "lead_h": round(lead, 2), "lead_bin": _lead_bin(lead),
                   "forecast_utc": iso_seconds(f["t"])}
            if len(cand) and err.abs().min() <= max_error_h:
                k = err.abs().idxmin()
                used.add(k)
                row.update(observed_utc=iso_seconds(cand.loc[k, "t"]),
                           error_h=round(float(err[k]), 2),
                           outcome="hit")
            else:
                row.update(observed_utc="", error_h=np.nan, outcome="false alarm")
            rows.append(row)
        for _, o in ob[~ob.index.isin(used)].iterrows():
            if o["front_kind"] not in ("warm", "cold"):
                continue
            rows.append({"event": event, "site": o["site"], "front_kind": o["front_kind"],
                         "run": run, "lead_h": np.nan, "lead_bin": "",
                         "forecast_utc": "", "observed_utc": iso_seconds(o["t"]), "error_h": np.nan,
                         "outcome": "miss"})
    cols = ["event", "site", "front_kind", "run", "lead_h", "lead_bin", "forecast_utc",
            "observed_utc", "error_h", "outcome"]
    return pd.DataFrame(rows, columns=cols)


def position_pairs(forecast_fronts, verifying_fronts, reference_times, *, event=""):
    """Position errors of forecast lines against lines on the verifying analyses.

    Returns
    -------
    pandas.DataFrame
        One row per pair: ``event, run, member, valid_utc, front_kind, lead_h,
        lead_bin, mean_distance_km, mhd_km, hausdorff_km, frac_within_100km,
        outcome`` (``hit``, ``miss``, ``false alarm``).
    """
    rows = []
    by_run = {}
    for f in forecast_fronts:
        by_run.setdefault((f.run, f.member), []).append(f)
    for (run, member), fronts in sorted(by_run.items(), key=lambda kv: str(kv[0])):
        ref = pd.Timestamp(reference_times[run])
        times = {f.valid_time for f in fronts}
        verifying = [v for v in verifying_fronts if v.valid_time in times]
        for ff, vf, d in match_lines(fronts, verifying):
            f0 = ff if ff is not None else vf
            lead = (pd.Timestamp(f0.valid_time) - ref) / pd.Timedelta(hours=1)
            rows.append({
                "event": event, "run": run, "member": "" if member is None else member,
                "valid_utc": iso_seconds(f0.valid_time), "front_kind": f0.kind,
                "lead_h": round(lead, 2), "lead_bin": _lead_bin(lead),
                "mean_distance_km": round(d["mean_ab_km"], 1) if d else np.nan,
                "mhd_km": round(d["mhd_km"], 1) if d else np.nan,
                "hausdorff_km": round(d["hausdorff_km"], 1) if d else np.nan,
                "frac_within_100km": round(d["frac_within"], 3) if d else np.nan,
                "outcome": "hit" if d else ("miss" if ff is None else "false alarm"),
            })
    cols = ["event", "run", "member", "valid_utc", "front_kind", "lead_h", "lead_bin",
            "mean_distance_km", "mhd_km", "hausdorff_km", "frac_within_100km", "outcome"]
    return pd.DataFrame(rows, columns=cols)


def _outcome_counts(group):
    return {
        "hits": int((group["outcome"] == "hit").sum()),
        "misses": int((group["outcome"] == "miss").sum()),
        "false_alarms": int((group["outcome"] == "false alarm").sum()),
    }


def _summary(pairs, value_cols, *, all_rows):
    """Per (lead_bin, front_kind): n, means of ``value_cols`` over hits, outcome counts."""
    rows = []
    groups = [(key, g) for key, g in pairs[pairs["lead_bin"] != ""].groupby(
        ["lead_bin", "front_kind"], sort=True)]
    if all_rows:
        groups += [(("all", kind), g) for kind, g in pairs.groupby("front_kind", sort=True)]
    for (lead_bin, kind), g in groups:
        hits = g[g["outcome"] == "hit"]
        row = {"lead_bin": lead_bin, "front_kind": kind, "n": len(hits)}
        for name, (col, how) in value_cols.items():
            vals = hits[col].astype(float)
            row[name] = (float(np.mean(np.abs(vals))) if how == "abs" else float(vals.mean())) \
                if len(vals) else np.nan
        row.update(_outcome_counts(g))
        rows.append(row)
    cols = ["lead_bin", "front_kind", "n", *value_cols, "hits", "misses", "false_alarms"]
    return pd.DataFrame(rows, columns=cols)


def summarise_timing(pairs):
    """Bias and mean absolute timing error by lead-time bin and front kind.

    Returns
    -------
    pandas.DataFrame
        ``lead_bin, front_kind, n, bias_h, mae_h, hits, misses, false_alarms``;
        the bin of a miss is unknown, so misses are counted in an ``all`` row
        per kind.
    """
    out = _summary(pairs, {"bias_h": ("error_h", "mean"), "mae_h": ("error_h", "abs")},
                   all_rows=True)
    return out.round({"bias_h": 2, "mae_h": 2})


def summarise_position(pairs):
    """Mean position errors by lead-time bin and front kind (hits only, plus counts)."""
    out = _summary(pairs, {"mean_distance_km": ("mean_distance_km", "mean"),
                           "mhd_km": ("mhd_km", "mean"),
                           "frac_within_100km": ("frac_within_100km", "mean")},
                   all_rows=False)
    return out.round({"mean_distance_km": 1, "mhd_km": 1, "frac_within_100km": 3})
