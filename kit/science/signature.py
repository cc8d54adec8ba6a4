"""Dynamic signature of a front in the low-level flow: vorticity, shear, trough.

A thermal front parameter line marks a gradient zone; a front also has a
kinematic signature: cyclonic relative vorticity along it, cyclonic shear of
the along-front wind across it, and a pressure trough (common practice, no
source; the wind-shift front detection of Simmonds et al. 2012, from memory,
rests on the same signature). This module measures those three at points
with a given front-normal direction, on fields smoothed like the thermal
field, and draws a baseline of random points with the same gradient
distribution, so that a share of line length can be compared with chance.

Computation only: no graphics.

References
----------
Simmonds, I., K. Keay, and J. A. T. Bye, 2012: Identification and
climatology of Southern Hemisphere mobile fronts in a modern reanalysis.
J. Climate, 25 (title and details from memory).
"""

import numpy as np

from kit.constants import EARTH_RADIUS_M
from kit.science import geo
from kit.science.domain import grid_lat

__all__ = ["relative_vorticity_np", "FlowFields", "signature_at", "baseline_points"]


def relative_vorticity_np(u, v, grid):
    r"""Relative vorticity [s-1] of earth-relative winds on a grid.

    .. math:: \zeta = \partial v/\partial x - \partial u/\partial y + u \tan\varphi / a

    (the last term is the spherical metric term of eastward/northward
    components; Holton 2004, section 2.2, from memory). Checked against MetPy's
    ``vorticity`` in tests/test_signature.py.
    """
    vx, _ = geo.gradient_np(np.asarray(v, float), grid)
    _, uy = geo.gradient_np(np.asarray(u, float), grid)
    lat = np.deg2rad(grid_lat(grid))
    with np.errstate(invalid="ignore"):
        return vx - uy + np.asarray(u, float) * np.tan(lat) / EARTH_RADIUS_M


class FlowFields:
    """Smoothed steering-level wind, its vorticity and a pressure field, at one time.

    Parameters
    ----------
    u, v : ndarray (Y, X)
        Earth-relative wind [m s-1] at the steering level (NaN below ground).
    pressure : ndarray (Y, X)
        Mean-sea-level pressure [Pa] or steering-level height [m]: a trough is
        a minimum of either across the front.
    pressure_name : str
        ``"mslp"`` or ``"z<level>"``, for the record.
    grid : kit.science.geo grid
    smoothing_km : float
        Gaussian scale [km] the fields are smoothed with (that of the thermal field).
    sampler : kit.science.geo.PointSampler
    """

    def __init__(self, u, v, pressure, pressure_name, grid, smoothing_km, sampler):
        def sm(a):
            return geo.smooth_np(np.asarray(a, float), grid, smoothing_km)

        self.u, self.v = sm(u), sm(v)
        self.zeta = relative_vorticity_np(self.u, self.v, grid)
        self.pressure = sm(pressure)
        self.pressure_name = pressure_name
        self.sampler = sampler
        #: offset across the front for shear and trough [km]: one grid length, at
        #: least the smoothing scale and 200 km (frontal troughs and shear zones at
        #: 850 hPa are a few hundred km across: common practice, no source; at
        #: 100 km the weak broad trough of a warm front far from its low was missed)
        self.offset_km = max(grid.length_m / 1000.0, float(smoothing_km), 200.0)


def signature_at(flow, lon, lat, normal_east, normal_north):
    """Frontal signature at points whose unit normal points to the cold side.

    Parameters
    ----------
    flow : FlowFields
    lon, lat : array_like
        Points [degrees].
    normal_east, normal_north : array_like
        Unit normal toward the cold side (local east/north components).

    Returns
    -------
    dict of ndarray of bool
        ``vorticity`` (relative vorticity of the sign of f), ``shear``
        (shear vorticity -d(u_t)/dn of the sign of f, with u_t the along-front
        wind, t = n turned 90 degrees clockwise), ``trough`` (pressure at the
        point below the mean of the points ``offset_km`` either side along
        the normal), and ``valid`` (all of them could be evaluated).
    """
    lon, lat = np.asarray(lon, float), np.asarray(lat, float)
    ne, nn = np.asarray(normal_east, float), np.asarray(normal_north, float)
    hemi = np.where(lat >= 0, 1.0, -1.0)
    s = flow.sampler
    d = flow.offset_km
    brg = geo.direction_bearing_deg(ne, nn)
    lo_c, la_c = geo.destination(lon, lat, brg, d)
    lo_w, la_w = geo.destination(lon, lat, brg, -d)
    zeta = s.sample(flow.zeta, lon, lat)
    te, tn = nn, -ne
    ut_c = s.sample(flow.u, lo_c, la_c) * te + s.sample(flow.v, lo_c, la_c) * tn
    ut_w = s.sample(flow.u, lo_w, la_w) * te + s.sample(flow.v, lo_w, la_w) * tn
    shear = -(ut_c - ut_w) / (2 * d * 1e3)
    p0 = s.sample(flow.pressure, lon, lat)
    curv = s.sample(flow.pressure, lo_c, la_c) + s.sample(flow.pressure, lo_w, la_w) - 2 * p0
    valid = np.isfinite(zeta) & np.isfinite(shear) & np.isfinite(curv)
    with np.errstate(invalid="ignore"):
        return {
            "vorticity": valid & (zeta * hemi > 0),
            "shear": valid & (shear * hemi > 0),
            "trough": valid & (curv > 0),
            "valid": valid,
        }


def baseline_points(grad, allowed, weights, vertex_grad, rng, n=2000, bins=10):
    """Random grid points with the gradient distribution of a set of front vertices.

    Parameters
    ----------
    grad : ndarray (Y, X)
        |grad tau| [K m-1] of the analysed field.
    allowed : ndarray of bool (Y, X)
        Points that may be drawn (above ground, extratropical, off the edge).
    weights : ndarray (Y, X)
        Area of each point [m2]: draws are area-weighted.
    vertex_grad : array_like
        |grad tau| at the front vertices (length-weighted draws are the
        caller's business: pass repeated values).
    rng : numpy.random.Generator
    n : int
        Number of points to draw.
    bins : int
        Quantile bins of ``vertex_grad``; each bin gets its share of draws.

    Returns
    -------
    ndarray of int
        Flat indices of the drawn points (empty when nothing can be drawn).
    """
    vg = np.asarray(vertex_grad, float)
    vg = vg[np.isfinite(vg)]
    ok = allowed & np.isfinite(grad)
    if vg.size == 0 or not ok.any():
        return np.empty(0, dtype=int)
    edges = np.unique(np.quantile(vg, np.linspace(0, 1, bins + 1)))
    if edges.size < 2:
        edges = np.array([vg.min() * 0.9, vg.max() * 1.1 + 1e-12])
    counts, _ = np.histogram(vg, edges)
    flat_g = grad.ravel()
    flat_ok = ok.ravel()
    flat_w = np.asarray(weights, float).ravel()
    out = []
    for k, c in enumerate(counts):
        if c == 0:
            continue
        lo, hi = edges[k], edges[k + 1]
        sel = np.flatnonzero(flat_ok & (flat_g >= lo) & (flat_g <= hi))
        if sel.size == 0:
            continue
        w = flat_w[sel]
        w = w / w.sum() if w.sum() > 0 else None
        take = max(1, round(n * c / vg.size))
        out.append(rng.choice(sel, size=take, replace=True, p=w))
    return np.concatenate(out) if out else np.empty(0, dtype=int)
