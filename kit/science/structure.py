"""Front structure: the slope of the frontal surface.

Two estimates of how steeply a front leans, shown beside the trade's typical
values:

``slope_1_in``
    From the 3-D model field: the front is located on several pressure levels
    along each vertex's normal (the warm edge of the frontal zone in potential
    temperature, where the thermal front parameter of Renard & Clarke (1965)
    peaks, as in Hewson (1998)), and the horizontal offset of those positions
    is regressed against their geopotential height. ``N`` of "1 in N" is the horizontal distance per
    unit rise; the frontal surface rises over the cold air, so offsets grow
    toward the cold side (the front normal).
``slope_margules_1_in``
    Margules (1906): the slope a sharp front in geostrophic and hydrostatic
    balance must have, given the temperatures and along-front geostrophic winds
    on both sides.
``slope_typical_1_in``
    Warm front about 1 in 150, cold front about 1 in 50 (common practice, no
    source).

Decision support only: the official forecast, local regulations and licensed
or authorised practice take precedence.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from kit.constants import G0, TYPICAL_SLOPE_1_IN
from kit.errors import InputError
from kit.model import FrontStructure, json_float
from kit.science.fronts import effective_smoothing_km
from kit.science.geo import (
    PointSampler,
    destination,
    direction_bearing_deg,
    gradient,
    grid_length_km,
    smooth,
)
from kit.science.motion import (
    coriolis_parameter,
    geostrophic_wind,
    select_field,
)
from kit.science.thermo import level_field

__all__ = [
    "DEFAULT_LEVELS",
    "margules_slope",
    "front_slope",
    "front_margules_slope",
    "add_slopes",
]

#: levels the front is looked for to measure its slope [hPa]
DEFAULT_LEVELS = (925.0, 850.0, 700.0, 600.0, 500.0)
#: first guess of N when stepping from the front's level to the next one
_FIRST_GUESS_1_IN = {"warm": 150.0, "cold": 50.0, "quasi-stationary": 100.0}


def margules_slope(t_cold, t_warm, v_cold, v_warm, lat):
    r"""Slope of a sharp front in geostrophic balance (Margules 1906).

    Parameters
    ----------
    t_cold, t_warm : float or array_like
        Temperature of the cold and of the warm air mass at the same level [K].
    v_cold, v_warm : float or array_like
        Along-front geostrophic wind in each air mass [m s-1], the component
        90 degrees to the left of the cold-to-warm direction (see Notes).
    lat : float or array_like
        Latitude [degrees].

    Returns
    -------
    ndarray or float
        :math:`\tan\alpha` [1]; positive where the surface rises over the
        cold air (cyclonic shear), ``1 / tan(alpha)`` is ``N`` of 1 in N.

    Notes
    -----
    .. math::
        \tan\alpha = \frac{f\,(T_1 v_2 - T_2 v_1)}{g\,(T_2 - T_1)}
        \approx \frac{f \bar T}{g}\frac{\Delta v}{\Delta T}

    Eq. Margules, [Margules1906]; index 1 the colder, 2 the warmer side. The
    horizontal axis runs from the cold to the warm air and ``v`` is the wind
    component 90 degrees to the left of that axis (right-handed axes, z up).
    With :math:`f` signed the formula holds in both hemispheres.

    Examples
    --------
    50 N, mean temperature 280 K, 10 m/s shear, 5 K contrast
    (REFERENCES.md, Front structure): about 1 in 157.

    >>> tan = margules_slope(277.5, 282.5, -5.0, 5.0, 50.0)
    >>> round(float(tan), 4), round(1 / float(tan))
    (0.0064, 157)
    """
    t1, t2 = np.asarray(t_cold, float), np.asarray(t_warm, float)
    v1, v2 = np.asarray(v_cold, float), np.asarray(v_warm, float)
    f = coriolis_parameter(lat)
    with np.errstate(divide="ignore", invalid="ignore"):
        tan = f * (t1 * v2 - t2 * v1) / (G0 * (t2 - t1))
    return tan[()] if np.ndim(tan) == 0 else tan


# --------------------------------------------------------------------------
# fields on levels
# --------------------------------------------------------------------------
def _sub(ds, time, member):
    out = ds
    if "member" in out.dims:
        out = out.isel(member=0) if member is None else out.sel(member=member)
    if "time" in out.dims:
        out = out.sel(time=np.datetime64(time, "ns"))
    return out


def _levels_present(ds, levels):
    have = np.asarray(ds["level"].values, float)
    return [float(lv) for lv in levels if np.any(np.abs(have - float(lv)) < 0.5)]


def _smoothing_km(ds, settings):
    """Smoothing scale [km]: the fronts' own (fronts.effective_smoothing_km) where known."""
    if settings is None or hasattr(settings, "smoothing_grid_lengths"):
        return float(effective_smoothing_km(ds, settings))
    scale = getattr(settings, "smoothing_km", None)
    if scale is None or not np.isfinite(scale):
        scale = max(75.0, 2.0 * float(np.nanmedian(grid_length_km(ds))))
    return float(scale)


def _tfp_2d(tau, ds):
    """Thermal front parameter [K m-2] and the gradient of tau [K m-1].

    TFP = -grad|grad tau| . grad tau / |grad tau|  (Renard & Clarke 1965).
    """
    ge, gn = gradient(tau, ds)
    mag = np.hypot(ge, gn)
    me, mn = gradient(mag, ds)
    with np.errstate(divide="ignore", invalid="ignore"):
        tfp = -(me * ge + mn * gn) / mag
    return tfp, ge, gn


class _Fields:
    """Smoothed thermal field, its TFP and z per (member, time, level), computed once."""

    def __init__(self, ds, settings=None, field=None, field_name="theta"):
        self.ds = ds
        self.settings = settings
        self.field = field
        if field_name is None:
            field_name = getattr(settings, "field", "theta_w") or "theta_w"
        self.name = field_name
        if self.name not in ("theta_w", "theta"):
            raise InputError(
                f"slope: thermal field {self.name!r} unknown; expected 'theta_w' or 'theta'"
            )
        self.scale_km = _smoothing_km(ds, settings)
        self.sampler = PointSampler(ds)
        self._cache = {}

    def level(self, time, member, level):
        key = (np.datetime64(time, "ns"), member, float(level))
        if key not in self._cache:
            if self.field is not None:
                tau = select_field(
                    xr.Dataset({"tau": self.field}), "tau", time=time, level=level, member=member
                )
            else:
                tau = np.asarray(
                    level_field(_sub(self.ds, time, member), self.name, level).values, float
                )
            tau = np.asarray(smooth(tau, self.ds, self.scale_km), float)
            tfp, ge, gn = _tfp_2d(tau, self.ds)
            z = select_field(self.ds, "z", time=time, level=level, member=member)
            self._cache[key] = (tfp, ge, gn, z)
        return self._cache[key]


# --------------------------------------------------------------------------
# slope from the 3-D field
# --------------------------------------------------------------------------
def _profile_peaks(s, tfp, along, rel=0.25):
    """Positions [km] and values of TFP maxima on the warm edge of a zone.

    Keeps local maxima with TFP > 0 where the field falls toward +s (the cold
    side), at least ``rel`` times the strongest such peak; parabolic refinement.
    """
    ok = np.isfinite(tfp) & np.isfinite(along)
    if ok.sum() < 3:
        return np.array([]), np.array([])
    t = np.where(ok, tfp, -np.inf)
    i = np.arange(1, s.size - 1)
    peak = (t[i] >= t[i - 1]) & (t[i] > t[i + 1]) & (t[i] > 0) & (along[i] < 0)
    idx = i[peak]
    if idx.size == 0:
        return np.array([]), np.array([])
    vals = t[idx]
    keep = vals >= rel * vals.max()
    idx, vals = idx[keep], vals[keep]
    pos = s[idx].astype(float)
    a, b, c = t[idx - 1], t[idx], t[idx + 1]
    den = a - 2 * b + c
    good = np.isfinite(den) & (den < 0)
    shift = np.where(good, 0.5 * (a - c) / np.where(good, den, 1.0), 0.0)
    pos = pos + np.clip(shift, -0.5, 0.5) * (s[1] - s[0])
    return pos, vals


def _vertex_choice(n, max_vertices, trim=0.1):
    """Return indices of up to ``max_vertices`` vertices spread along a line, ends trimmed."""
    if n <= 2:
        return np.arange(n)
    lo = int(np.floor(trim * (n - 1)))
    hi = int(np.ceil((1 - trim) * (n - 1)))
    m = min(max_vertices, hi - lo + 1)
    return np.unique(np.round(np.linspace(lo, hi, m)).astype(int))


def front_slope(
    front,
    ds,
    levels=DEFAULT_LEVELS,
    *,
    settings=None,
    field=None,
    half_width_km=900.0,
    step_km=15.0,
    max_vertices=15,
    method="tfp",
    field_name="theta",
    _fields=None,
):
    """Slope of a front from the 3-D thermal field.

    Parameters
    ----------
    front : kit.science.fronts.Front
        The front (its vertices, cold-side normals, valid time, member).
    ds : xarray.Dataset
        Canonical dataset of the run: ``t``, ``td`` (or ``field``) and ``z``
        on ``levels``.
    levels : sequence of float
        Pressure levels to locate the front on [hPa]; those missing from the
        dataset are skipped (at least three are needed).
    settings : kit.science.fronts.FrontSettings, optional
        The smoothing scale of the fronts
        (:func:`kit.science.fronts.effective_smoothing_km`); ``settings.field`` is
        used only when ``field_name`` is None.
    field : xarray.DataArray, optional
        A thermal field [K] with a ``level`` dimension to use instead.
    method : {"tfp", "gradient"}
        Locate the front on a level at the TFP maximum (warm edge of the zone,
        as the fronts) or at the strongest gradient (zone centre).
    field_name : {"theta", "theta_w", None}
        Thermal field the surface is traced in. Default potential temperature:
        the frontal surface is a temperature (density) boundary, while aloft
        theta-w also marks moisture boundaries such as a dry slot behind a
        cold front (Thomas & Schultz 2019), which bend a theta-w surface.
        None follows ``settings.field``.
    half_width_km : float
        How far along the normal, each way, the front is looked for [km]
        (900 km reaches a 1:150 surface 6 km up).
    step_km : float
        Sampling step along the normal [km].
    max_vertices : int
        Vertices used (spread along the line, 10 % trimmed at each end).

    Returns
    -------
    dict
        ``slope_1_in`` (median N of 1 in N over the vertices, NaN where not
        found or not resolved: where the front moves less than one grid length
        from its lowest to its highest level found), ``scatter`` (half the
        inter-quartile range of the vertex
        values of N, NaN with fewer than three), ``n_vertices`` (vertices with
        a slope), ``vertex_slopes_1_in`` (list).

    Notes
    -----
    On each level the thermal field is smoothed as for the fronts, its thermal
    front parameter (TFP, Eq. 1 of [RenardClarke1965]) computed, and sampled
    along the great circle through the vertex in the direction of its normal.
    The front on that level is the TFP maximum on the warm edge of a zone
    whose field falls toward the cold side (the Hewson (1998) line; Eq. TFP,
    [Hewson1998]) nearest the position extrapolated from the levels already
    found, stepping up and down from the front's own level. With offsets
    :math:`s_k` [m] at heights :math:`z_k` [m], the least-squares
    :math:`ds/dz` is ``N``; a surface that leans over the warm side gives
    no slope (NaN).
    """
    fields = _fields if _fields is not None else _Fields(ds, settings, field, field_name)
    levels = sorted(_levels_present(ds, levels), reverse=True)  # 1000 first
    nan = {
        "slope_1_in": float("nan"),
        "scatter": float("nan"),
        "n_vertices": 0,
        "vertex_slopes_1_in": [],
    }
    if len(levels) < 3 or len(front.lon) < 2:
        return nan
    guess = _FIRST_GUESS_1_IN.get(front.kind, 100.0)
    resolved_km = grid_length_km(ds)
    start = int(np.argmin(np.abs(np.asarray(levels) - float(front.level_hpa))))
    s = np.arange(-half_width_km, half_width_km + 0.5 * step_km, step_km)
    sel = _vertex_choice(len(front.lon), max_vertices)
    lon0 = np.asarray(front.lon, float)[sel]
    lat0 = np.asarray(front.lat, float)[sel]
    ne = np.asarray(front.normal_east, float)[sel]
    nn = np.asarray(front.normal_north, float)[sel]
    # sample lines: (vertices, steps)
    lon_l, lat_l = destination(
        lon0[:, None], lat0[:, None], direction_bearing_deg(ne, nn)[:, None], s[None, :], wrap=False
    )
    prof = {}
    for lv in levels:
        tfp, ge, gn, z = fields.level(front.valid_time, front.member, lv)
        smp = fields.sampler
        prof[lv] = (
            smp.sample(tfp, lon_l, lat_l),
            smp.sample(ge, lon_l, lat_l) * ne[:, None] + smp.sample(gn, lon_l, lat_l) * nn[:, None],
            smp.sample(z, lon_l, lat_l),
        )
    out = []
    for k in range(sel.size):
        found = {}
        for order in (range(start, len(levels)), range(start, -1, -1)):
            pts = []  # (z_m, s_km) of levels found on this branch, start first
            for li in order:
                lv = levels[li]
                tp, al, zz = prof[lv][0][k], prof[lv][1][k], prof[lv][2][k]
                if method == "gradient":
                    pos, _ = _profile_peaks(s, -al, al)
                else:
                    pos, _ = _profile_peaks(s, tp, al)
                if pos.size == 0:
                    break
                zpos = np.interp(pos, s, zz)
                if not pts:
                    pred, win = 0.0, 150.0
                    ok = np.abs(pos) <= win
                else:
                    z_prev, s_prev = pts[-1]
                    if len(pts) >= 2:
                        (z_a, s_a), (z_b, s_b) = pts[-2], pts[-1]
                        n_est = (s_b - s_a) / ((z_b - z_a) / 1e3) if z_b != z_a else guess
                        n_est = n_est if 10.0 <= n_est <= 500.0 else guess
                    else:
                        n_est = guess
                    dz_km = (zpos - z_prev) / 1e3
                    pred = s_prev + n_est * dz_km
                    win = 100.0 + 0.6 * np.abs(n_est * dz_km)
                    # the surface rises over the cold air: +s going up, -s going down
                    ok = (np.abs(pos - pred) <= win) & ((pos - s_prev) * np.sign(dz_km) > -50.0)
                if not ok.any():
                    break
                j = int(np.argmin(np.where(ok, np.abs(pos - pred), np.inf)))
                if not np.isfinite(zpos[j]):
                    break
                pts.append((float(zpos[j]), float(pos[j])))
                found[lv] = pts[-1]
        if len(found) >= 3:
            zz = np.array([v[0] for v in found.values()]) / 1e3
            ss = np.array([v[1] for v in found.values()])
            # a displacement smaller than a grid length is not resolved by the
            # grid: no slope then (never the first guess as a result)
            if np.ptp(zz) > 0.5 and np.ptp(ss) >= resolved_km:
                b = np.polyfit(zz, ss, 1)[0]
                out.append(b if b > 0 else np.nan)
                continue
        out.append(np.nan)
    vals = np.asarray(out, float)
    good = vals[np.isfinite(vals)]
    if good.size == 0 or good.size < max(1, sel.size // 3):
        nan["vertex_slopes_1_in"] = [None if not np.isfinite(v) else float(v) for v in vals]
        return nan
    q25, med, q75 = np.percentile(good, [25, 50, 75])
    return {
        "slope_1_in": float(med),
        "scatter": float((q75 - q25) / 2.0) if good.size >= 3 else float("nan"),
        "n_vertices": int(good.size),
        "vertex_slopes_1_in": [None if not np.isfinite(v) else float(v) for v in vals],
    }


def front_margules_slope(front, ds, *, level=None, offset_km=250.0, max_vertices=15, _sampler=None):
    r"""Margules slope of a front from the model's temperature and heights.

    Parameters
    ----------
    front : kit.science.fronts.Front
        The front.
    ds : xarray.Dataset
        Canonical dataset with ``t`` and ``z`` on ``level``.
    level : float, optional
        Level [hPa]; default the front's level.
    offset_km : float
        Distance from the front, each side along its normal, where the two air
        masses are read [km] (beyond a smoothed model frontal zone).
    max_vertices : int
        Vertices used (spread along the line, ends trimmed).

    Returns
    -------
    float
        Median ``N`` of 1 in N [1] over the vertices; NaN where the shear has
        the wrong sense for a balanced front or data are missing.

    Notes
    -----
    :func:`margules_slope` with ``T`` from ``t`` and ``v`` the geostrophic wind
    from ``z`` (:func:`kit.science.motion.geostrophic_wind`) at the two points. The
    Margules axis runs from cold to warm, i.e. along :math:`-\hat n`, so the
    Margules along-front wind is :math:`v = u_g n_n - v_g n_e`.
    """
    level = float(front.level_hpa if level is None else level)
    if not _levels_present(ds, [level]):
        return float("nan")
    sampler = _sampler if _sampler is not None else PointSampler(ds)
    t = select_field(ds, "t", time=front.valid_time, level=level, member=front.member)
    z = select_field(ds, "z", time=front.valid_time, level=level, member=front.member)
    ug, vg = geostrophic_wind(z, ds, kind="height")
    sel = _vertex_choice(len(front.lon), max_vertices)
    lon = np.asarray(front.lon, float)[sel]
    lat = np.asarray(front.lat, float)[sel]
    ne = np.asarray(front.normal_east, float)[sel]
    nn = np.asarray(front.normal_north, float)[sel]
    lo_c, la_c = destination(lon, lat, direction_bearing_deg(ne, nn), offset_km, wrap=False)
    lo_w, la_w = destination(lon, lat, direction_bearing_deg(ne, nn), -offset_km, wrap=False)

    def along(lo, la):
        return sampler.sample(ug, lo, la) * nn - sampler.sample(vg, lo, la) * ne

    tan = margules_slope(
        sampler.sample(t, lo_c, la_c),
        sampler.sample(t, lo_w, la_w),
        along(lo_c, la_c),
        along(lo_w, la_w),
        lat,
    )
    tan = np.where(np.asarray(tan) > 0, tan, np.nan)
    good = tan[np.isfinite(tan)]
    if good.size == 0 or good.size < max(1, sel.size // 3):
        return float("nan")
    return float(1.0 / np.median(good))


def add_slopes(
    fronts,
    ds,
    *,
    settings=None,
    levels=DEFAULT_LEVELS,
    margules_offset_km=250.0,
    field_name="theta",
):
    """Measure the slope of every front: new fronts with ``structure`` filled in.

    Parameters
    ----------
    fronts : list of kit.science.fronts.Front
        Fronts of the run ``ds`` (not changed).
    ds : xarray.Dataset
        Canonical dataset of the run.
    settings : kit.science.fronts.FrontSettings, optional
        As for :func:`front_slope`.
    levels : sequence of float
        Levels for :func:`front_slope` [hPa].
    margules_offset_km : float
        As ``offset_km`` of :func:`front_margules_slope` [km].
    field_name : {"theta", "theta_w", None}
        As for :func:`front_slope`.

    Returns
    -------
    list of kit.science.fronts.Front
        New fronts in the same order with ``front.structure``
        (:class:`kit.model.FrontStructure`): ``slope_1_in``, ``slope_scatter``,
        ``slope_margules_1_in`` and ``slope_typical_1_in`` (N of 1 in N;
        None where not available).
    """
    if not fronts:
        return []
    fields = _Fields(ds, settings, field_name=field_name)
    out = []
    for fr in fronts:
        res = front_slope(fr, ds, levels, settings=settings, _fields=fields)
        margules = front_margules_slope(
            fr, ds, offset_km=margules_offset_km, _sampler=fields.sampler
        )
        out.append(
            fr.replace(
                structure=FrontStructure(
                    slope_1_in=json_float(res["slope_1_in"], 0),
                    slope_scatter=json_float(res["scatter"], 0),
                    slope_margules_1_in=json_float(margules, 0),
                    slope_typical_1_in=json_float(TYPICAL_SLOPE_1_IN.get(fr.kind)),
                )
            )
        )
    return out
