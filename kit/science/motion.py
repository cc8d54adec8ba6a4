"""Front motion: tracks over lead time, speed three ways, geostrophic wind.

Sign convention (kept everywhere in the kit, DESIGN.md): a front-normal speed
is **positive toward the cold side**. A warm front, whose warm air advances into
the cold air, therefore has a positive speed; a cold front, whose cold air
advances into the warm air, a negative one. ``Front.normal_east/north`` point
to the cold side, so a speed is the component of a motion (or a wind) along
that normal.

Three speeds are given for every front at every valid time, because a
forecaster trusts a timing only when independent estimates agree:

``speed_tracked_ms``
    Displacement of the line itself between valid times, measured along the
    front normal at each vertex (centred difference where the track has a
    neighbour on both sides, one-sided at its ends); the front's value is the
    length-weighted median over its vertices.
``speed_wind_ms``
    The wind component normal to the front at the steering level (850 hPa by
    default), length-weighted along the line, the speed used by Berry, Reeder
    & Jakob (2011) [Berry2011].
``speed_geostrophic_rule_ms``
    The isobar rule of the trade: the geostrophic wind from the mean-sea-level
    pressure gradient, measured over a forecaster-like distance (250 km) along
    the front, its component normal to the front, times 2/3 for a warm front
    and 1 for a cold front (common practice, no source).

Where the three disagree by more than a stated fraction (35 % by default)
``speed_flag`` says so in plain words, with the likely reason.

Decision support only: the official forecast, local regulations and licensed
or authorised practice take precedence.
"""

from __future__ import annotations

from collections import defaultdict

import numpy as np
import xarray as xr

from kit.constants import G0, OMEGA, RD
from kit.errors import InputError
from kit.model import FrontMotion, TrackLink, json_float
from kit.science.geo import (
    PointSampler,
    destination,
    direction_bearing_deg,
    gradient,
    great_circle_km,
    local_east_north_km,
    vertex_weights_km,
)

__all__ = [
    "MIN_ABS_LAT_DEG",
    "coriolis_parameter",
    "geostrophic_wind",
    "geostrophic_speed",
    "track_fronts",
    "speeds_three_ways",
]

#: geostrophic winds are NaN equatorward of this latitude [degrees]
MIN_ABS_LAT_DEG = 10.0

#: multipliers of the front-normal geostrophic wind in the isobar rule
#: (common practice, no source)
RULE_FACTOR = {"warm": 2.0 / 3.0, "cold": 1.0}


# --------------------------------------------------------------------------
# geostrophic wind
# --------------------------------------------------------------------------
def coriolis_parameter(lat):
    r"""Coriolis parameter.

    Parameters
    ----------
    lat : array_like or xarray.DataArray
        Latitude [degrees].

    Returns
    -------
    same kind as ``lat``
        :math:`f = 2 \Omega \sin\varphi` [s-1], negative in the southern
        hemisphere.

    Examples
    --------
    >>> round(float(coriolis_parameter(45.0)) * 1e4, 4)
    1.0313
    """
    if isinstance(lat, xr.DataArray):
        return 2.0 * OMEGA * np.sin(np.deg2rad(lat))
    return 2.0 * OMEGA * np.sin(np.deg2rad(np.asarray(lat, dtype=float)))


def geostrophic_speed(dp_pa, dist_km, lat, rho=1.25):
    r"""Geostrophic wind speed from a pressure difference over a distance.

    The forecaster's reading of an isobar spacing.

    Parameters
    ----------
    dp_pa : float or array_like
        Pressure difference [Pa] across ``dist_km``.
    dist_km : float or array_like
        Distance across the isobars [km].
    lat : float or array_like
        Latitude [degrees].
    rho : float
        Air density [kg m-3].

    Returns
    -------
    ndarray or float
        :math:`V_g = |\Delta p / \Delta n| / (\rho |f|)` [m s-1]; NaN
        equatorward of :data:`MIN_ABS_LAT_DEG`.

    Examples
    --------
    4 hPa over 200 km at 50 N (REFERENCES.md, Front motion):
    >>> round(float(geostrophic_speed(400.0, 200.0, 50.0)), 1)
    14.3
    """
    lat = np.asarray(lat, dtype=float)
    f = np.abs(coriolis_parameter(lat))
    with np.errstate(divide="ignore", invalid="ignore"):
        v = np.abs(np.asarray(dp_pa, float)) / (np.asarray(dist_km, float) * 1e3) / (rho * f)
    v = np.where(np.abs(lat) < MIN_ABS_LAT_DEG, np.nan, v)
    return v[()] if np.ndim(v) == 0 else v


def _lat_like(field, ds):
    """Latitude [degrees] broadcast to the trailing (Y, X) axes of ``field``."""
    lat = ds["lat"]
    if isinstance(field, xr.DataArray):
        return lat
    lat = np.asarray(lat.values, dtype=float)
    if lat.ndim == 1:
        lat = lat[:, None]
    return lat


def geostrophic_wind(
    height_or_pressure,
    ds,
    kind="height",
    *,
    rho=1.25,
    min_abs_lat_deg=MIN_ABS_LAT_DEG,
):
    r"""Geostrophic wind from a geopotential-height or a pressure field.

    Parameters
    ----------
    height_or_pressure : xarray.DataArray or ndarray
        Geopotential height [m] (``kind="height"``) on a pressure level, or
        mean-sea-level pressure [Pa] (``kind="mslp"``); trailing dimensions
        (Y, X) of the grid of ``ds``.
    ds : xarray.Dataset
        Canonical dataset (DEVELOPERS.md) giving the grid (``lat``, ``lon``
        or projected ``y``, ``x``).
    kind : {"height", "mslp"}
        What the field is.
    rho : float, array_like, xarray.DataArray or "from_t"
        Air density [kg m-3] for ``kind="mslp"``; ``"from_t"`` takes
        :math:`\rho = p / (R_d T)` with ``t2m`` (or ``t`` on the
        highest-pressure level) of ``ds``, which must then have the same
        dimensions as the field.
    min_abs_lat_deg : float
        The wind is NaN where :math:`|\varphi|` is below this [degrees]:
        :math:`f` vanishes at the equator and geostrophic balance is a poor
        description of tropical flow (10 degrees: common practice, no source).

    Returns
    -------
    (ug, vg) : same kind as the input
        Eastward and northward geostrophic wind [m s-1].

    Notes
    -----
    .. math::
        u_g = -\frac{g_0}{f}\frac{\partial z}{\partial y},\quad
        v_g = \frac{g_0}{f}\frac{\partial z}{\partial x}
        \qquad\text{or}\qquad
        u_g = -\frac{1}{\rho f}\frac{\partial p}{\partial y},\quad
        v_g = \frac{1}{\rho f}\frac{\partial p}{\partial x}

    with :math:`f = 2\Omega\sin\varphi` (any dynamics text; Eq. Vg,
    [REFERENCES, Front motion]). Gradients come from
    :func:`kit.science.geo.gradient` (on the sphere, or on the projection).
    """
    if kind not in ("height", "mslp"):
        raise InputError(f"geostrophic_wind: kind={kind!r} unknown; expected 'height' or 'mslp'")
    d_east, d_north = gradient(height_or_pressure, ds)
    lat = _lat_like(height_or_pressure, ds)
    f = coriolis_parameter(lat)
    if kind == "mslp" and isinstance(rho, str):
        if rho != "from_t":
            raise InputError(f"geostrophic_wind: rho={rho!r}; expected a number or 'from_t'")
        rho = _density_from_t(height_or_pressure, ds)
    if isinstance(height_or_pressure, xr.DataArray) and isinstance(rho, np.ndarray) and rho.ndim:
        rho = xr.DataArray(rho, dims=height_or_pressure.dims[-rho.ndim :])
    with np.errstate(divide="ignore", invalid="ignore"):
        fac = G0 / f if kind == "height" else 1.0 / (rho * f)
        ug = -fac * d_north
        vg = fac * d_east
    if isinstance(ug, xr.DataArray):
        keep = np.abs(lat) >= min_abs_lat_deg
        ug = ug.where(keep)
        vg = vg.where(keep)
        ug.attrs.update(units="m s-1", long_name="eastward geostrophic wind")
        vg.attrs.update(units="m s-1", long_name="northward geostrophic wind")
    else:
        keep = np.broadcast_to(np.abs(lat) >= min_abs_lat_deg, np.shape(ug))
        ug = np.where(keep, ug, np.nan)
        vg = np.where(keep, vg, np.nan)
    return ug, vg


def _density_from_t(p, ds):
    """Air density [kg m-3] from pressure ``p`` [Pa] and the lowest temperature of ``ds``."""
    if "t2m" in ds:
        t = ds["t2m"]
    elif "t" in ds:
        t = ds["t"].isel(level=0)
    else:
        raise InputError("geostrophic_wind: rho='from_t' needs 't2m' or 't' in the dataset")
    if not isinstance(p, xr.DataArray):
        t = np.asarray(t.values, float)
        if t.shape != np.shape(p):
            raise InputError(
                f"geostrophic_wind: rho='from_t' with a {np.shape(p)} array needs a temperature "
                f"of the same shape, got {t.shape}; pass a DataArray or a number"
            )
    return p / (RD * t)


def _weighted_mean(values, weights):
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    ok = np.isfinite(v) & (w > 0)
    if not ok.any():
        return float("nan")
    return float(np.sum(v[ok] * w[ok]) / np.sum(w[ok]))


def _weighted_median(values, weights):
    """Length-weighted median of the finite values (NaN if none)."""
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    ok = np.isfinite(v) & (w > 0)
    if not ok.any():
        return float("nan")
    v, w = v[ok], w[ok]
    order = np.argsort(v)
    v, w = v[order], w[order]
    cw = np.cumsum(w)
    k = int(np.searchsorted(cw, 0.5 * cw[-1]))
    return float(v[min(k, v.size - 1)])


# --------------------------------------------------------------------------
# sampling a gridded field at points
# --------------------------------------------------------------------------
def select_field(ds, name, *, time=None, level=None, member=None):
    """2-D numpy (Y, X) slice of a canonical variable; one-line InputError if missing."""
    if name not in ds:
        raise InputError(
            f"dataset {ds.attrs.get('run', '')!r}: variable {name!r} missing; "
            "expected the canonical names of DEVELOPERS.md"
        )
    da = ds[name]
    if "member" in da.dims:
        if member is None:
            da = da.isel(member=0)
        else:
            da = da.sel(member=member)
    if "time" in da.dims and time is not None:
        try:
            da = da.sel(time=np.datetime64(time, "ns"))
        except KeyError:
            raise InputError(f"variable {name!r}: valid time {time} not in the dataset") from None
    if "level" in da.dims:
        if level is None:
            raise InputError(f"variable {name!r}: a pressure level is needed")
        lev = np.asarray(da["level"].values, float)
        k = int(np.argmin(np.abs(lev - float(level))))
        if abs(lev[k] - float(level)) > 0.5:
            raise InputError(
                f"variable {name!r}: level {float(level):g} hPa not in the dataset "
                f"(levels {', '.join(f'{x:g}' for x in lev)} hPa)"
            )
        da = da.isel(level=k)
    if da.ndim != 2:
        raise InputError(
            f"variable {name!r}: expected a (Y, X) field after selection, got dims {da.dims}"
        )
    return np.asarray(da.values, float)


# --------------------------------------------------------------------------
# tracking
# --------------------------------------------------------------------------
def _normal_offsets_km(front_a, front_b, max_gap_km, *, min_normal_dot=0.0):
    """Offsets [km] of line B along the normal of line A, one per vertex of A.

    A line is cast from every vertex of A along A's unit normal (toward the
    cold side positive) in that vertex's azimuthal-equidistant plane; the
    nearest crossing with a segment of B within ``max_gap_km`` whose own
    normal points the same way (dot > ``min_normal_dot``) is the offset. NaN
    where the cast line misses B.
    """
    la, pa = np.asarray(front_a.lon, float), np.asarray(front_a.lat, float)
    lb, pb = np.asarray(front_b.lon, float), np.asarray(front_b.lat, float)
    if lb.size < 2:
        return np.full(la.size, np.nan)
    x, y = local_east_north_km(lb[None, :], pb[None, :], la[:, None], pa[:, None])  # (K, M)
    px, py = x[:, :-1], y[:, :-1]
    dx, dy = x[:, 1:] - px, y[:, 1:] - py
    nx = np.asarray(front_a.normal_east, float)[:, None]
    ny = np.asarray(front_a.normal_north, float)[:, None]
    den = nx * dy - ny * dx
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (px * dy - py * dx) / den
        t = (px * ny - py * nx) / den
    nbe = np.asarray(front_b.normal_east, float)
    nbn = np.asarray(front_b.normal_north, float)
    seg_ne = (nbe[:-1] + nbe[1:])[None, :]
    seg_nn = (nbn[:-1] + nbn[1:])[None, :]
    same_side = (seg_ne * nx + seg_nn * ny) > min_normal_dot
    ok = (np.abs(den) > 1e-12) & (t >= 0) & (t <= 1) & (np.abs(s) <= max_gap_km) & same_side
    s = np.where(ok, s, np.nan)
    absmin = np.nanmin(np.where(ok, np.abs(s), np.inf), axis=1)
    k = np.argmin(np.where(ok, np.abs(s), np.inf), axis=1)
    out = s[np.arange(s.shape[0]), k]
    return np.where(np.isfinite(absmin), out, np.nan)


def _bbox_gap_km(a, b):
    """Return the least vertex-to-vertex distance [km] of two lines (subsampled, cheap)."""
    sa = max(1, len(a.lon) // 40)
    sb = max(1, len(b.lon) // 40)
    d = great_circle_km(
        np.asarray(a.lon)[::sa, None],
        np.asarray(a.lat)[::sa, None],
        np.asarray(b.lon)[None, ::sb],
        np.asarray(b.lat)[None, ::sb],
    )
    return float(d.min())


def _time_seconds(t):
    return np.datetime64(t, "ns").astype("int64") / 1e9


def track_fronts(
    fronts,
    *,
    max_gap_km=None,
    max_speed_ms=30.0,
    min_overlap_frac=0.25,
):
    r"""Link fronts over valid times into tracks and measure their displacement speed.

    Fronts are grouped by run, member and level; within a group the lines of
    consecutive valid times are matched by overlap along the front normal.

    Parameters
    ----------
    fronts : list of kit.science.fronts.Front
        Fronts of any runs, members, levels and times (not changed).
    max_gap_km : float, optional
        Largest normal displacement [km] between two consecutive times that
        still links two lines. Default: ``max_speed_ms`` times the time step.
    max_speed_ms : float
        Fastest front motion allowed for [m s-1] when ``max_gap_km`` is not
        given (30 m/s, about 60 kt: common practice, no source).
    min_overlap_frac : float
        Least overlap [1], as a fraction of the shorter line's length, for two
        lines to belong to one track.

    Returns
    -------
    list of kit.science.fronts.Front
        New fronts in the same order, with ``front.track`` (int, unique over
        the list) and ``front.link`` (:class:`kit.model.TrackLink`):
        ``speed_tracked_ms`` [m s-1] (front-normal, positive toward the cold
        side; the length-weighted median of the vertex speeds, so the ends of
        a line and the bend near a triple point, which move differently, do
        not bias it; None where the track has one time only),
        ``vn_tracked`` (per-vertex list [m s-1], None where a vertex has no
        counterpart), ``parent`` and ``event`` (``"new"``,
        ``"continues"``, ``"split"`` or ``"merge"``).

    Notes
    -----
    From every vertex of the line at time :math:`t_i` a line is cast along its
    normal; where it crosses the line of :math:`t_{i+1}` (whose normal must
    point the same way) the crossing distance :math:`s^+` is that vertex's
    forward offset; the offset back to the line of :math:`t_{i-1}` is
    :math:`s^-`. The vertex speed is the centred difference

    .. math:: c = \frac{s^+ - s^-}{t_{i+1} - t_{i-1}}

    where both exist, else the one-sided difference. The length covered by the
    crossings is the overlap of two lines. A line that overlaps several later
    lines (a split) hands its track id to the one with the largest overlap;
    the others start new tracks. A later line overlapping several earlier ones
    (a merge) keeps the oldest track id.
    """
    groups = defaultdict(list)
    track_of, event_of, linked = {}, {}, {}
    for fr in fronts:
        groups[(fr.run, fr.member, float(fr.level_hpa))].append(fr)
    next_id = 1
    for key in sorted(groups, key=lambda k: (str(k[0]), -1 if k[1] is None else k[1], k[2])):
        group = groups[key]
        times = sorted({np.datetime64(f.valid_time, "ns") for f in group})
        by_time = {t: [f for f in group if np.datetime64(f.valid_time, "ns") == t] for t in times}
        track_start = {}
        fwd = {}  # id(front) -> (child, offsets along the front's own normal [km])
        bwd = {}  # id(front) -> (parent, offsets along the front's own normal [km])
        for f in by_time[times[0]]:
            track_of[id(f)] = next_id
            track_start[next_id] = times[0]
            event_of[id(f)] = ("new", None)
            next_id += 1
        for t0, t1 in zip(times[:-1], times[1:], strict=False):
            dt = _time_seconds(t1) - _time_seconds(t0)
            gap = max_gap_km if max_gap_km is not None else max_speed_ms * dt / 1e3
            olds, news = by_time[t0], by_time[t1]
            over = np.zeros((len(olds), len(news)))
            offs = {}
            for a_i, a in enumerate(olds):
                wa = vertex_weights_km(a.lon, a.lat)
                for b_i, b in enumerate(news):
                    if _bbox_gap_km(a, b) > gap + 300.0:
                        continue
                    s_ab = _normal_offsets_km(a, b, gap)
                    s_ba = _normal_offsets_km(b, a, gap)
                    wb = vertex_weights_km(b.lon, b.lat)
                    cov = min(np.sum(wa[np.isfinite(s_ab)]), np.sum(wb[np.isfinite(s_ba)]))
                    short = min(np.sum(wa), np.sum(wb))
                    if short > 0 and cov >= min_overlap_frac * short:
                        over[a_i, b_i] = cov
                        offs[(a_i, b_i)] = (s_ab, s_ba)
            # primary child of each old line
            primary = {}
            for a_i in range(len(olds)):
                if over[a_i].max() > 0:
                    b_i = int(np.argmax(over[a_i]))
                    primary[a_i] = b_i
                    fwd[id(olds[a_i])] = (news[b_i], offs[(a_i, b_i)][0])
            for b_i, b in enumerate(news):
                parents = [a_i for a_i in range(len(olds)) if over[a_i, b_i] > 0]
                heirs = [a_i for a_i in parents if primary.get(a_i) == b_i]
                if parents:
                    best = max(parents, key=lambda a_i: over[a_i, b_i])
                    bwd[id(b)] = (olds[best], offs[(best, b_i)][1])
                if heirs:
                    heir = min(
                        heirs,
                        key=lambda a_i: (track_start[track_of[id(olds[a_i])]], -over[a_i, b_i]),
                    )
                    track_of[id(b)] = track_of[id(olds[heir])]
                    event = "merge" if len(heirs) > 1 else "continues"
                    event_of[id(b)] = (event, track_of[id(olds[heir])])
                else:
                    track_of[id(b)] = next_id
                    track_start[next_id] = t1
                    next_id += 1
                    if parents:
                        parent = olds[max(parents, key=lambda a_i: over[a_i, b_i])]
                        event_of[id(b)] = ("split", track_of[id(parent)])
                    else:
                        event_of[id(b)] = ("new", None)
        for f in group:
            vk = _vertex_speeds(f, fwd.get(id(f)), bwd.get(id(f)))
            w = vertex_weights_km(f.lon, f.lat)
            event, parent = event_of[id(f)]
            linked[id(f)] = f.replace(
                track=track_of[id(f)],
                link=TrackLink(
                    event=event,
                    parent=parent,
                    speed_tracked_ms=json_float(_weighted_median(vk, w)),
                    vn_tracked=tuple(json_float(v, 2) for v in vk),
                ),
            )
    return [linked[id(f)] for f in fronts]


def _vertex_speeds(front, fwd, bwd):
    """Per-vertex normal displacement speed [m s-1] from the linked lines."""
    n = len(front.lon)
    t = _time_seconds(front.valid_time)
    sp = np.full(n, np.nan)
    sf = np.full(n, np.nan)
    sb = np.full(n, np.nan)
    dtf = dtb = np.nan
    if fwd is not None:
        child, s = fwd
        sf = s
        dtf = _time_seconds(child.valid_time) - t
    if bwd is not None:
        parent, s = bwd  # the parent's offsets along this front's own normal
        sb = s
        dtb = t - _time_seconds(parent.valid_time)
    both = np.isfinite(sf) & np.isfinite(sb)
    only_f = np.isfinite(sf) & ~np.isfinite(sb)
    only_b = np.isfinite(sb) & ~np.isfinite(sf)
    sp[both] = (sf[both] - sb[both]) * 1e3 / (dtf + dtb)
    sp[only_f] = sf[only_f] * 1e3 / dtf
    sp[only_b] = -sb[only_b] * 1e3 / dtb
    return sp


# --------------------------------------------------------------------------
# speeds three ways
# --------------------------------------------------------------------------
def _tangent(front):
    """Return the unit along-front direction k x n (east, north) at each vertex."""
    return -np.asarray(front.normal_north, float), np.asarray(front.normal_east, float)


def _rule_factor(kind, vg_n):
    if kind in RULE_FACTOR:
        return RULE_FACTOR[kind]
    # quasi-stationary: warm-front behaviour where the flow pushes toward the
    # cold side, cold-front behaviour otherwise
    return RULE_FACTOR["warm"] if vg_n > 0 else RULE_FACTOR["cold"]


def _speed_flag(tracked, wind, rule, frac, qs, kind=None):
    """Plain-words hint where the three speeds disagree [m s-1]; '' where they agree.

    The track is compared with the wind times the rule factor of the front's
    kind (a warm front moving at about 2/3 of the normal wind is normal).
    """
    hints = []
    if np.isfinite(wind):
        wind = _rule_factor(kind, wind) * wind
    floor = 2.5  # m/s (about 5 kt): differences below it are not worth a flag

    def differ(a, b):
        return (
            np.isfinite(a)
            and np.isfinite(b)
            and abs(a - b) > max(frac * max(abs(a), abs(b)), floor)
        )

    if np.isfinite(wind) and abs(wind) < qs and (not np.isfinite(tracked) or abs(tracked) < 2 * qs):
        hints.append("front-normal wind weak: quasi-stationary, timing uncertain")
    elif differ(tracked, wind):
        if tracked * wind < 0 and min(abs(tracked), abs(wind)) > qs:
            hints.append(
                "tracked motion opposite to the steering wind: check the track and the front type"
            )
        elif abs(tracked) < abs(wind):
            hints.append(
                "tracked speed well below the steering wind: front slowing or a wave developing"
            )
        else:
            hints.append(
                "tracked speed well above the steering wind: front redeveloping ahead "
                "or the line jumped; check the track"
            )
    if differ(rule, tracked if np.isfinite(tracked) else wind):
        hints.append(
            "isobar rule disagrees with the model motion: curved isobars "
            "or ageostrophic flow near the front"
        )
    return "; ".join(hints)


def speeds_three_ways(
    fronts,
    ds,
    *,
    steering_level_hpa=850.0,
    rule_distance_km=250.0,
    rho=1.25,
    disagree_frac=0.35,
    qs_speed_ms=1.5,
    min_abs_lat_deg=MIN_ABS_LAT_DEG,
):
    r"""Front-normal speed from the track, the steering wind and the isobar rule.

    Parameters
    ----------
    fronts : list of kit.science.fronts.Front
        Fronts of the run ``ds`` (tracked first with :func:`track_fronts` for
        ``speed_tracked_ms``); not changed.
    ds : xarray.Dataset
        Canonical dataset of the run (``u``, ``v`` on ``steering_level_hpa``;
        ``mslp`` for the rule, else ``z`` on the highest-pressure level).
    steering_level_hpa : float
        Level of the steering wind [hPa].
    rule_distance_km : float
        Distance along the front over which the pressure gradient is read,
        centred on each vertex [km] (a forecaster reads isobar spacing over
        some 200-300 km: common practice, no source).
    rho : float
        Air density for the isobar rule [kg m-3].
    disagree_frac : float
        Two speeds disagree when they differ by more than this fraction of the
        larger one (and by more than 2.5 m/s) [1]. The tracked speed is held
        against the steering wind times the rule factor (2/3 for a warm front,
        1 for a cold one: common practice, no source), since a warm front
        moving at two thirds of the wind is the normal case, not a warning.
    qs_speed_ms : float
        Quasi-stationary threshold [m s-1] (1.5 m/s, Berry et al. 2011, from
        memory).
    min_abs_lat_deg : float
        Geostrophic values are None equatorward of this latitude [degrees].

    Returns
    -------
    list of kit.science.fronts.Front
        New fronts in the same order with ``front.motion``
        (:class:`kit.model.FrontMotion`): ``speed_tracked_ms`` (kept, or None),
        ``speed_wind_ms``, ``speed_geostrophic_rule_ms``,
        ``speed_geostrophic_normal_ms`` (the normal geostrophic component
        before the 2/3 or 1 factor), ``speed_rule_source`` (``"mslp"`` or
        ``"z<level>"``) and ``speed_flag`` (plain words, or ``""``). All speeds
        in m s-1, positive toward the cold side.

    Notes
    -----
    The geostrophic wind component along the normal :math:`\hat n` depends
    only on the pressure gradient along the front, :math:`\hat t = \hat k
    \times \hat n`:
    .. math:: V_{g,n} = -\frac{1}{\rho f}\frac{\partial p}{\partial t}

    read as :math:`(p(+d/2) - p(-d/2))/d` at each vertex. The rule speed is
    :math:`\tfrac23 V_{g,n}` for a warm front and :math:`V_{g,n}` for a cold
    front (common practice, no source; a quasi-stationary front takes the warm
    factor where :math:`V_{g,n} > 0`, the cold one otherwise).
    """
    sampler = PointSampler(ds)
    cache = {}
    out = []

    def field(name, t, level, member):
        key = (name, np.datetime64(t, "ns"), level, member)
        if key not in cache:
            cache[key] = select_field(ds, name, time=t, level=level, member=member)
        return cache[key]

    if "mslp" in ds:
        rule_name, rule_level, rule_source = "mslp", None, "mslp"
    else:
        rule_name = "z"
        rule_level = float(np.max(ds["level"].values))
        rule_source = f"z{rule_level:g}"
    for fr in fronts:
        lon = np.asarray(fr.lon, float)
        lat = np.asarray(fr.lat, float)
        ne = np.asarray(fr.normal_east, float)
        nn = np.asarray(fr.normal_north, float)
        w = vertex_weights_km(lon, lat)
        u = sampler.sample(field("u", fr.valid_time, steering_level_hpa, fr.member), lon, lat)
        v = sampler.sample(field("v", fr.valid_time, steering_level_hpa, fr.member), lon, lat)
        wind = _weighted_mean(u * ne + v * nn, w)

        te, tn = _tangent(fr)
        half = rule_distance_km / 2.0
        lo_p, la_p = destination(lon, lat, direction_bearing_deg(te, tn), half, wrap=False)
        lo_m, la_m = destination(lon, lat, direction_bearing_deg(te, tn), -half, wrap=False)
        pf = field(rule_name, fr.valid_time, rule_level, fr.member)
        dp = sampler.sample(pf, lo_p, la_p) - sampler.sample(pf, lo_m, la_m)
        f = coriolis_parameter(lat)
        with np.errstate(divide="ignore", invalid="ignore"):
            if rule_name == "mslp":
                vgn = -dp / (rule_distance_km * 1e3) / (rho * f)
            else:
                vgn = -G0 * dp / (rule_distance_km * 1e3) / f
        vgn = np.where(np.abs(lat) < min_abs_lat_deg, np.nan, vgn)
        vg_n = _weighted_mean(vgn, w)
        rule = _rule_factor(fr.kind, vg_n) * vg_n if np.isfinite(vg_n) else float("nan")

        tracked = fr.link.speed_tracked_ms if fr.link is not None else None
        tracked = float("nan") if tracked is None else float(tracked)
        out.append(
            fr.replace(
                motion=FrontMotion(
                    speed_tracked_ms=json_float(tracked),
                    speed_wind_ms=json_float(wind),
                    speed_geostrophic_normal_ms=json_float(vg_n),
                    speed_geostrophic_rule_ms=json_float(rule),
                    speed_rule_source=rule_source,
                    speed_flag=_speed_flag(
                        tracked, wind, rule, disagree_frac, qs_speed_ms, fr.kind
                    ),
                )
            )
        )
    return out
