"""Vertical cross-sections through a run: between two points or across a front.

A section is a :class:`xarray.Dataset` with dimensions ``level`` [hPa] and
``distance`` [km along the section from its start]. It holds the fields a
forecaster reads on a cross-section (theta-w, relative humidity, wind, the
0 C and wet-bulb 0 C levels, potential vorticity and the dynamic tropopause,
heights) and the frontal surface located on each level with its fitted slope.

A thin run (``ds.attrs["thin"]``) gives a section without invented humidity:
with no dew point on the levels the section holds no ``td``, ``tw``,
``theta_w``, ``rh`` or wet-bulb 0 C level, and the frontal surface is located
in theta, the field the run's fronts were found in (Thomas & Schultz 2019);
``attrs["thermal_field"]`` is then ``"theta"`` and ``attrs["thin"]`` says what
the run lacks. Geostrophic winds (``u.attrs["derived"]``) are named as such
(``attrs["wind"] == "geostrophic"``). A section needs at least
:data:`MIN_SECTION_LEVELS` pressure levels (:func:`check_section_levels`).

Orientation (our choice): a section cut across a front runs **from the cold
side to the warm side**, so the cold air is on the left of a figure and the
frontal surface always leans up toward the left, for warm and cold fronts
alike. Ahead of a warm front and behind a cold front are then both to the
left of the surface front.

The points follow the great circle on the kit's sphere
(:data:`kit.constants.EARTH_RADIUS_M`, :mod:`kit.science.geo`), as MetPy's
``cross_section`` follows the geodesic of the grid's Earth model (within about
0.5 % of the WGS84 geodesic); values are bilinear in latitude/longitude on
regular grids and bilinear in ``x``/``y`` on projected grids
(:class:`kit.science.geo.PointSampler`; points placed through the CF grid
mapping when the run has one).
"""

import math

import numpy as np
import pandas as pd
import xarray as xr
from pyproj import CRS, Transformer
from scipy.ndimage import gaussian_filter1d

from kit import CAUTION
from kit.constants import (
    EARTH_RADIUS_KM,
    EARTH_RADIUS_M,
    G0,
    NM_KM,
    OMEGA,
    RD,
    TYPICAL_SLOPE_1_IN,
    ZONE_CENTRE_FACTOR,
)
from kit.errors import InputError
from kit.science import thermo
from kit.science.geo import (
    PointSampler,
    bearing_deg,
    destination,
    gradient,
    great_circle_km,
    local_east_north_km,
)
from kit.timefmt import iso_minutes

__all__ = [
    "section_points",
    "section_between",
    "section_across_front",
    "section_for_site",
    "pick_front",
    "potential_vorticity",
    "locate_frontal_surface",
    "front_slope_1_in",
    "zone_centre_offset_km",
    "MAX_CENTRE_KM",
    "surface_pressure_hpa",
    "surface_front_1d",
    "grid_km",
    "normal_through",
    "near_surface_profile",
    "surface_smoothing_km",
    "SURFACE_SEARCH_KM",
    "GROUND_REFERRAL_MAX_1_IN",
    "refer_to_height",
    "fit_frontal_slope",
    "compass_point",
    "select_time",
    "check_section_levels",
    "thermal_field",
    "MIN_SECTION_LEVELS",
    "JET_MIN_MS",
    "RULE_ZONES_NM",
]

#: lowest core speed called a jet [m s-1]; WMO definition, 30 m/s (from memory)
JET_MIN_MS = 30.0
#: dynamic tropopause [PVU]; Hoskins, McIntyre & Robertson (1985); sign flips in the south
TROPOPAUSE_PVU = 2.0
#: rule-of-thumb precipitation zones [nautical miles from the surface front], common
#: practice, no source: rain begins 200-300 nm ahead of a warm front; the main band
#: lies within 50-100 nm behind a cold front. Both are on the cold side.
RULE_ZONES_NM = {"warm": (200.0, 300.0), "cold": (50.0, 100.0)}

#: fewest pressure levels a section is drawn from [1]: with two there is one layer,
#: no frontal surface to fit and nothing to contour between them (our choice)
MIN_SECTION_LEVELS = 3

_REQUIRED = ("t", "u", "v", "z")
#: words for the thermal field of a section
_FIELD_WORDS = {"theta_w": "theta-w", "theta": "theta"}
_COMPASS = ("N", "NE", "E", "SE", "S", "SW", "W", "NW")


# ---------------------------------------------------------------------------
# points and interpolation
# ---------------------------------------------------------------------------
def compass_point(bearing):
    """Eight-point compass name of a bearing.

    Parameters
    ----------
    bearing : float
        Bearing clockwise from true north [degrees].

    Returns
    -------
    str
        One of N, NE, E, SE, S, SW, W, NW.

    Examples
    --------
    >>> compass_point(130.0)
    'SE'
    """
    return _COMPASS[int(((bearing % 360.0) + 22.5) // 45.0) % 8]


def _check_point(point, what):
    try:
        lat, lon = (float(v) for v in point)
    except (TypeError, ValueError):
        raise InputError(f"{what} {point!r}: expected a (lat, lon) pair in degrees") from None
    if not (np.isfinite(lat) and np.isfinite(lon) and -90.0 <= lat <= 90.0):
        raise InputError(f"{what} ({lat}, {lon}): expected latitude -90..90 and a finite longitude")
    return lat, ((lon + 180.0) % 360.0) - 180.0


def section_points(start, end, *, steps=None, spacing_km=10.0):
    """Points along the great circle from ``start`` to ``end``, both included.

    Parameters
    ----------
    start, end : (float, float)
        ``(lat, lon)`` of the ends [degrees].
    steps : int, optional
        Number of points (at least 3); overrides ``spacing_km``.
    spacing_km : float
        Wanted spacing of the points [km] when ``steps`` is not given.

    Returns
    -------
    lat, lon, distance_km, bearing_deg : ndarray
        Point coordinates [degrees], distance from ``start`` [km] and the
        local bearing of the section at each point [degrees clockwise from
        north], all of length ``steps``; the points are equally spaced on the
        great circle of the sphere of :data:`kit.constants.EARTH_RADIUS_M`.
    """
    lat0, lon0 = _check_point(start, "section start")
    lat1, lon1 = _check_point(end, "section end")
    total_m = great_circle_km(lon0, lat0, lon1, lat1) * 1000.0
    if total_m < 1000.0:
        raise InputError(
            f"section from ({lat0}, {lon0}) to ({lat1}, {lon1}): ends are {total_m:.0f} m apart;"
            " expected at least 1 km"
        )
    if steps is None:
        if not spacing_km or spacing_km <= 0:
            raise InputError(f"spacing_km={spacing_km}: expected a positive spacing in km")
        steps = int(math.ceil(total_m / 1000.0 / spacing_km)) + 1
    steps = int(steps)
    if steps < 3 or steps > 5001:
        raise InputError(f"steps={steps}: expected 3 to 5001 points along the section")
    dist = np.linspace(0.0, total_m / 1000.0, steps)
    lon, lat = destination(np.full(steps - 2, lon0), np.full(steps - 2, lat0),
                           bearing_deg(lon0, lat0, lon1, lat1), dist[1:-1])
    lon = np.concatenate([[lon0], lon, [lon1]])
    lat = np.concatenate([[lat0], lat, [lat1]])
    # local bearing: toward the end along the great circle; at the end, away from the start
    bearing = np.append(bearing_deg(lon[:-1], lat[:-1], lon1, lat1),
                        (bearing_deg(lon1, lat1, lon0, lat0) + 180.0) % 360.0)
    return lat, lon, dist, bearing


def _is_projected(ds):
    return ds.attrs.get("grid") == "projected" or ("x" in ds.dims and "y" in ds.dims)


def _horizontal_dims(ds):
    return ("y", "x") if _is_projected(ds) else ("lat", "lon")


def grid_km(ds):
    """Typical grid length of a run [km] (the x spacing, or the latitude spacing)."""
    return _grid_km(ds)


def _grid_km(ds):
    """Typical grid length [km]."""
    if _is_projected(ds):
        dx = ds.attrs.get("dx_m") or float(abs(ds["x"].values[1] - ds["x"].values[0]))
        return float(dx) / 1000.0
    dlat = float(np.abs(np.diff(ds["lat"].values)).mean())
    return float(np.deg2rad(dlat) * EARTH_RADIUS_KM)


def _grid_crs(ds):
    """Return the CF grid mapping of a projected run as a pyproj CRS, or None."""
    gm_name = None
    for name in ("t", "u", "z"):
        if name in ds and "grid_mapping" in ds[name].attrs:
            gm_name = ds[name].attrs["grid_mapping"]
            break
    for cand in (gm_name, "crs", "grid_mapping", "projection"):
        if cand and cand in ds.variables and "grid_mapping_name" in ds[cand].attrs:
            try:
                return CRS.from_cf(dict(ds[cand].attrs))
            except Exception:  # noqa: BLE001 - fall back to the 2-D lat/lon
                return None
    return None


def _coord_index(coord, value):
    """Fractional index of values in a monotonic 1-D coordinate; NaN outside."""
    coord = np.asarray(coord, float)
    idx = np.arange(float(coord.size))
    if coord[-1] < coord[0]:
        coord, idx = coord[::-1], idx[::-1]
    return np.interp(np.asarray(value, float), coord, idx, left=np.nan, right=np.nan)


def _grid_index(ds, lat, lon):
    """Fractional (row, column) of the section points on the grid; NaN outside.

    A projected run with a CF grid mapping places the points exactly through
    pyproj (then bilinear in x/y); every other grid through
    :class:`kit.science.geo.PointSampler`.
    """
    if _is_projected(ds) and "x" in ds.dims and "y" in ds.dims:
        crs = _grid_crs(ds)
        if crs is not None:
            x, y = Transformer.from_crs("EPSG:4326", crs, always_xy=True).transform(lon, lat)
            return _coord_index(ds["y"].values, y), _coord_index(ds["x"].values, x)
    return PointSampler(ds).index(lon, lat)


def select_time(ds, time):
    """Return the valid time of ``ds`` matching ``time`` (within one minute).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    time : str, datetime-like or None
        Wanted valid time (UTC; ISO 8601 such as ``2027-01-14T06:00Z``). None
        is allowed when the run has a single valid time.

    Returns
    -------
    numpy.datetime64
        The matching valid time as stored in ``ds``.
    """
    times = np.atleast_1d(ds["time"].values).astype("datetime64[ns]")
    run = ds.attrs.get("run", "?")
    span = f"{iso_minutes(times[0])} to {iso_minutes(times[-1])}"
    if time is None:
        if times.size == 1:
            return times[0]
        raise InputError(f"run {run}: no valid time given; expected one of {times.size} times "
                         f"from {span}")
    try:
        ts = pd.Timestamp(time)
    except (TypeError, ValueError):
        raise InputError(f"time {time!r}: not a date-time; expected ISO 8601 UTC such as "
                         "2027-01-14T06:00Z") from None
    if ts.tzinfo is not None:
        ts = ts.tz_convert("UTC").tz_localize(None)
    want = np.datetime64(ts.to_datetime64(), "ns")
    diff = np.abs(times - want)
    k = int(np.argmin(diff))
    if diff[k] > np.timedelta64(60, "s"):
        raise InputError(f"time {iso_minutes(want)}: not a valid time of run {run}; the run covers "
                         f"{span} ({times.size} times)")
    return times[k]


def _select_member(ds, member):
    if "member" not in ds.dims:
        return ds
    members = [int(m) for m in ds["member"].values]
    if member is None:
        if len(members) == 1:
            return ds.isel(member=0)
        raise InputError(f"run {ds.attrs.get('run', '?')}: has {len(members)} members; choose "
                         f"one of {members}")
    if int(member) not in members:
        raise InputError(f"member {member}: not in run {ds.attrs.get('run', '?')}; expected one "
                         f"of {members}")
    return ds.sel(member=int(member))


def thermal_field(ds):
    """Thermal field a section of ``ds`` shows: ``theta_w``, or ``theta`` without humidity.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run or a section.

    Returns
    -------
    str
        ``"theta_w"`` when the run has dew point on its levels, else ``"theta"``
        (a thin run; Thomas & Schultz 2019 find fronts in theta as well).
    """
    field = getattr(ds, "attrs", {}).get("thermal_field")
    if field:
        return str(field)
    return "theta_w" if "td" in ds else "theta"


def check_section_levels(ds):
    """One-line error when a run has too few pressure levels for a section.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.

    Raises
    ------
    kit.errors.InputError
        Fewer than :data:`MIN_SECTION_LEVELS` levels: the message names the
        run's levels and what a section needs.
    """
    run = ds.attrs.get("run", "?")
    if "level" not in ds.dims:
        raise InputError(f"run {run}: no pressure levels; a section needs at least "
                         f"{MIN_SECTION_LEVELS}: expected a 'level' dimension [hPa]")
    n = int(ds.sizes["level"])
    if n < MIN_SECTION_LEVELS:
        have = ", ".join(f"{p:g}" for p in np.asarray(ds["level"].values, float))
        raise InputError(f"run {run}: only {n} pressure level{'s' if n != 1 else ''} ({have} "
                         f"hPa); a cross-section needs at least {MIN_SECTION_LEVELS} from near "
                         "the ground upward (e.g. 1000, 850, 700, 500 hPa): expected a run with "
                         "more levels (its fronts and arrival table need only the front level)")


def _at_time(ds, time, member):
    """Load the run at one valid time (and member), with the needed fields checked."""
    missing = [n for n in _REQUIRED if n not in ds]
    if missing:
        raise InputError(f"run {ds.attrs.get('run', '?')}: variable(s) {', '.join(missing)} "
                         "missing; expected t, u, v, z (and td where the run has humidity) on "
                         "pressure levels (canonical Dataset)")
    check_section_levels(ds)
    ds = _select_member(ds, member)
    t = select_time(ds, time)
    keep = [n for n in ("t", "td", "u", "v", "z", "precip", "t2m", "td2m", "ps", "mslp", "zsfc")
            if n in ds]
    # the CF grid-mapping variable of a projected grid, for exact point placement
    keep += sorted({ds[n].attrs["grid_mapping"] for n in _REQUIRED
                    if ds[n].attrs.get("grid_mapping") in ds.variables})
    one = ds[keep].sel(time=t) if "time" in ds.dims else ds[keep]
    one = one.sortby("level", ascending=False)  # 1000 hPa first, as the canonical Dataset
    if "time" in one.coords:
        one = one.drop_vars("time")
    return one, t


def _window(ds, j, i, margin=3):
    """Cut the grid to the section's box plus ``margin`` points (lazy), for large grids.

    PV needs centred differences around the points used by the bilinear
    interpolation, hence the margin. A section through the wrapping cell of a
    global grid keeps all longitudes. Returns the cut grid and the fractional
    indices of the points on it.
    """
    ydim, xdim = _horizontal_dims(ds)
    ny, nx = ds.sizes[ydim], ds.sizes[xdim]
    ok = np.isfinite(j) & np.isfinite(i)
    if not ok.any():
        return ds, j, i
    j0 = max(int(np.floor(j[ok].min())) - margin, 0)
    j1 = min(int(np.ceil(j[ok].max())) + 1 + margin, ny)
    i0 = max(int(np.floor(i[ok].min())) - margin, 0)
    i1 = min(int(np.ceil(i[ok].max())) + 1 + margin, nx)
    if i[ok].max() > nx - 1:
        i0, i1 = 0, nx
    return ds.isel({ydim: slice(j0, j1), xdim: slice(i0, i1)}), j - j0, i - i0


# ---------------------------------------------------------------------------
# derived fields
# ---------------------------------------------------------------------------
def potential_vorticity(theta, u, v, grid):
    r"""Baroclinic (Ertel) potential vorticity on pressure levels.

    Parameters
    ----------
    theta : xarray.DataArray (level, Y, X)
        Potential temperature [K] at one time.
    u, v : xarray.DataArray (level, Y, X)
        Eastward and northward wind [m s-1].
    grid : xarray.Dataset
        The canonical Dataset these fields come from (for the grid geometry).

    Returns
    -------
    xarray.DataArray (level, Y, X)
        Potential vorticity [PVU] (1 PVU = 1e-6 K m2 kg-1 s-1).

    Notes
    -----
    .. math::

        PV = -g \left[(f + \zeta)\frac{\partial\theta}{\partial p}
             - \frac{\partial v}{\partial p}\frac{\partial\theta}{\partial x}
             + \frac{\partial u}{\partial p}\frac{\partial\theta}{\partial y}\right]

    with relative vorticity :math:`\zeta = \partial v/\partial x - \partial u/\partial y
    + (u/a)\tan\varphi` on a latitude/longitude grid (the last term is the metric
    term of the sphere): Ertel's potential vorticity in the hydrostatic form on
    pressure levels, as used by [Hoskins1985]. Horizontal derivatives come from
    :func:`kit.science.geo.gradient`; the pressure derivative is second order with
    one-sided ends, ``p`` in Pa. MetPy's ``potential_vorticity_baroclinic`` is a
    second implementation (tests/test_sections.py).
    """
    p_pa = theta["level"].astype(float) * 100.0

    def ddp(f):
        ax = f.get_axis_num("level")
        return f.copy(data=np.gradient(f.values, p_pa.values, axis=ax, edge_order=2))

    dth_e, dth_n = gradient(theta, grid)
    du_e, du_n = gradient(u, grid)
    dv_e, dv_n = gradient(v, grid)
    lat = grid["lat"]
    zeta = dv_e - du_n
    if not _is_projected(grid):
        zeta = zeta + u * np.tan(np.deg2rad(lat)) / EARTH_RADIUS_M
    f = 2.0 * OMEGA * np.sin(np.deg2rad(lat))
    pv = -G0 * ((f + zeta) * ddp(theta) - ddp(v) * dth_e + ddp(u) * dth_n)
    pv = (pv / 1e-6).transpose(*theta.dims)
    pv.name = "pv"
    pv.attrs = {"units": "1e-6 K m2 kg-1 s-1",
                "long_name": "potential vorticity (1 PVU = 1e-6 K m2 kg-1 s-1)"}
    return pv


def _nan_gaussian_1d(y, sigma_pts):
    """NaN-aware Gaussian smoothing of a 1-D profile (normalised convolution)."""
    if sigma_pts <= 0:
        return y.copy()
    ok = np.isfinite(y)
    num = gaussian_filter1d(np.where(ok, y, 0.0), sigma_pts, mode="nearest")
    den = gaussian_filter1d(ok.astype(float), sigma_pts, mode="nearest")
    with np.errstate(invalid="ignore", divide="ignore"):
        out = num / den
    out[~ok] = np.nan
    return out


def _front_candidates(tau, dist_km, smoothing_km):
    """Warm edges of the gradient zones along one profile.

    Returns a list of (position_km, peak_gradient [K m-1], warm_sign) where
    ``warm_sign`` is +1 when warmer air lies toward larger distance.

    The 1-D form of Hewson (1998): with ``g = dtau/ds`` the thermal front
    parameter along the section is ``TFP = -d|g|/ds * sign(g)`` and the
    locating function ``dTFP/ds * sign(g)``; the front is the zero of the
    locating function with TFP > 0, on the warm side of the peak of ``|g|``.
    """
    ds_km = float(np.median(np.diff(dist_km)))
    tau_s = _nan_gaussian_1d(np.asarray(tau, float), smoothing_km / ds_km)
    s_m = dist_km * 1000.0
    g = np.gradient(tau_s, s_m)
    a = np.abs(g)
    sg = np.sign(g)
    tfp = -np.gradient(a, s_m) * sg
    loc = np.gradient(tfp, s_m) * sg
    if not np.isfinite(a).any() or np.nanmax(a) <= 0:
        return []
    amax = np.nanmax(a)
    n = a.size
    # a zone whose peak lies within two smoothing scales of an end (or of missing
    # data) is cut by the section's edge: its warm edge cannot be placed
    edge = max(2, int(math.ceil(2.0 * smoothing_km / ds_km)))
    bad = ~np.isfinite(tau_s)
    near_bad = np.convolve(bad.astype(float), np.ones(2 * edge + 1), mode="same") > 0
    out = []
    for m in range(edge, n - edge):
        if near_bad[m] or not (a[m] >= a[m - 1] and a[m] > a[m + 1]):
            continue
        if a[m] < 0.25 * amax:
            continue
        step = 1 if sg[m] > 0 else -1
        i = m
        found = None
        while 0 <= i + step < n and np.isfinite(a[i + step]) and a[i] >= 0.05 * a[m]:
            j = i + step
            if j < edge or j >= n - edge or near_bad[j]:
                break
            if tfp[i] > 0 and tfp[j] > 0 and loc[i] > 0 >= loc[j]:
                w = loc[i] / (loc[i] - loc[j])
                found = dist_km[i] + w * (dist_km[j] - dist_km[i])
                break
            i = j
        if found is not None:
            out.append((float(found), float(a[m]), int(step)))
    return out


def surface_smoothing_km(grid_km):
    """Smoothing of near-surface profiles [km]: 25 km, never under one grid length."""
    return max(25.0, float(grid_km))


#: how far from its first guess the surface front is looked for [km]
SURFACE_SEARCH_KM = 300.0


#: the flattest frontal surface the ground referral believes, 1 in N (a warm
#: front's 1:100-1:300, from memory): a flatter fitted slope would move 500 m
#: of ground by more than 150 km
GROUND_REFERRAL_MAX_1_IN = 300.0


def refer_to_height(tau, dist_km, ground_m, reference_m, slope_1_in, warm_sign):
    """Resample a near-surface profile as if the ground were at one height [K].

    A frontal surface of slope 1 in N meets ground h metres higher N h metres
    further toward the cold side, so over hills and valleys the 2-m zone is
    bent and its gradient stretched or squeezed by the ground's slope (by
    1 - N dh/ds: with N = 150 and 300 m over 30 km, a factor of 2.5). The point
    at ``s`` on ground ``h(s)`` is moved to ``s + warm_sign N (h(s) - h_ref)``
    and the profile read back on the even distances, so the zone lies where
    the frontal surface meets ``reference_m``, the ground at the site: what the
    site will see. Flat ground, a missing ground or slope leave it unchanged.

    Parameters
    ----------
    tau, dist_km, ground_m : array_like
        Profile [K], its even distances [km] and the ground under it [m].
    reference_m : float
        Height the profile is referred to [m] (the site's ground).
    slope_1_in : float
        The front's slope N (1 in N); capped at :data:`GROUND_REFERRAL_MAX_1_IN`.
    warm_sign : int
        +1 when the warm side is toward larger distance, -1 otherwise.

    Returns
    -------
    numpy.ndarray
        The profile on ``dist_km``; NaN where no moved point covers it.
    """
    tau = np.asarray(tau, float)
    dist_km = np.asarray(dist_km, float)
    if ground_m is None or not (np.isfinite(reference_m) and np.isfinite(slope_1_in)):
        return tau
    ground_m = np.asarray(ground_m, float)
    n = min(abs(float(slope_1_in)), GROUND_REFERRAL_MAX_1_IN)
    moved = dist_km + warm_sign * n * (ground_m - float(reference_m)) / 1000.0
    ok = np.isfinite(tau) & np.isfinite(moved)
    if ok.sum() < 5:
        return tau
    order = np.argsort(moved[ok], kind="stable")
    xs, ys = moved[ok][order], tau[ok][order]
    return np.interp(dist_km, xs, ys, left=np.nan, right=np.nan)


def surface_front_1d(tau, dist_km, smoothing_km, guess_km, warm_sign,
                     window_km=SURFACE_SEARCH_KM, *, ground_m=None, reference_m=np.nan,
                     slope_1_in=np.nan):
    """Position of the surface front on a near-surface profile: the zone's centre [km].

    THE definition of the surface front of every product (table, section,
    timeline): the centre of the near-surface thermal gradient zone (2-m
    theta-w, or theta on a thin run), i.e. the maximum of the smoothed
    gradient ``|dtau/ds|``, the middle of the temperature change, where a
    station sees the step (the 850-hPa locating line marks the zone's warm
    edge instead, Hewson 1998). Among the gradient maxima of at least a
    quarter of the profile's largest, with warmer air toward ``warm_sign``,
    the one nearest ``guess_km`` within ``window_km`` is taken; the maximum is
    refined with a parabola through its neighbours. Over uneven ground the
    profile is first referred to the site's ground (:func:`refer_to_height`,
    with ``ground_m``, ``reference_m`` and the front's ``slope_1_in``), so the
    centre is where the frontal surface meets the ground at the site.

    Parameters
    ----------
    tau : array_like
        Near-surface thermal field along the profile [K] (NaN where missing).
    dist_km : array_like
        Distance along the profile, evenly spaced [km].
    smoothing_km : float
        Gaussian smoothing scale [km].
    guess_km : float
        Where the surface front is expected [km].
    warm_sign : int
        +1 when the warm side is toward larger distance, -1 otherwise.
    window_km : float
        Largest distance from the guess [km].
    ground_m, reference_m, slope_1_in : array_like, float, float, optional
        The ground under the profile [m], the site's ground [m] and the
        front's slope (1 in N); see :func:`refer_to_height`.

    Returns
    -------
    float
        Position [km]; NaN when no zone centre lies within the window.
    """
    dist_km = np.asarray(dist_km, float)
    tau = refer_to_height(tau, dist_km, ground_m, reference_m, slope_1_in, warm_sign)
    if tau.size < 5 or not np.isfinite(guess_km) or np.isfinite(tau).sum() < 5:
        return np.nan
    ds_km = float(np.median(np.diff(dist_km)))
    tau_s = _nan_gaussian_1d(tau, smoothing_km / ds_km)
    g = np.gradient(tau_s, dist_km * 1000.0) * warm_sign  # > 0 where warmer ahead
    if not np.isfinite(g).any() or np.nanmax(g) <= 0:
        return np.nan
    gmax = np.nanmax(g)
    cands = []  # (position, gradient) of the maxima within the window
    for m in range(1, g.size - 1):
        a, b, c = g[m - 1], g[m], g[m + 1]
        if not (np.isfinite(a) and np.isfinite(b) and np.isfinite(c)):
            continue
        if b < 0.25 * gmax or not (b >= a and b > c):
            continue
        den = a - 2.0 * b + c
        pos = dist_km[m] + (0.5 * (a - c) / den * ds_km if den < 0 else 0.0)
        if abs(pos - guess_km) <= window_km:
            cands.append((float(pos), float(b)))
    if not cands:
        return np.nan
    return min(cands, key=lambda c: abs(c[0] - guess_km))[0]


def locate_frontal_surface(sec, *, field="theta_w", reference_km=None, reference_hpa=850.0,
                           smoothing_km=None, top_hpa=500.0):
    """Position of the frontal surface on each level of a section.

    Parameters
    ----------
    sec : xarray.Dataset
        A section (dims ``level``, ``distance``) holding ``field`` and ``z``.
    field : str
        Thermal field the front is drawn on [K] (``theta_w`` or ``theta``).
    reference_km : float, optional
        Where the front crosses the section on ``reference_hpa`` [km]; the
        candidate nearest to it is taken there. Default: the strongest zone.
    reference_hpa : float
        Level the reference applies to [hPa].
    smoothing_km : float, optional
        Gaussian smoothing scale along the section [km]; default the larger of
        25 km and the grid length.
    top_hpa : float
        Highest level searched [hPa].

    Returns
    -------
    position_km : ndarray (level,)
        Distance of the frontal surface on each level [km]; NaN where not found.
    cold_sign : int
        -1 when the cold side is toward smaller distance, +1 otherwise, 0 if
        no front was found.

    Notes
    -----
    On each level the frontal surface is the warm edge of the gradient zone
    (Hewson 1998) along the section. From the reference level the search
    walks up and down level by level and keeps the candidate nearest the
    level before, allowing a shift of at most 500 km per km of height (a
    shallower surface than 1:500 is not taken for a front) and requiring the
    surface to lean over the cold air (a small backward step of 30 km is
    tolerated for noise).
    """
    levels = sec["level"].values.astype(float)
    dist = sec["distance"].values.astype(float)
    if smoothing_km is None:
        smoothing_km = max(25.0, float(sec.attrs.get("grid_km", 0.0)))
    tau = sec[field].transpose("level", "distance").values
    zmean = np.nanmean(sec["z"].transpose("level", "distance").values, axis=1)
    cands = [
        _front_candidates(tau[k], dist, smoothing_km) if levels[k] >= top_hpa else []
        for k in range(levels.size)
    ]
    pos = np.full(levels.size, np.nan)
    kref = int(np.argmin(np.abs(levels - reference_hpa)))
    if not cands[kref]:
        usable = [k for k in range(levels.size) if cands[k]]
        if not usable:
            return pos, 0
        kref = min(usable, key=lambda k: abs(levels[k] - reference_hpa))
    if reference_km is None:
        first = max(cands[kref], key=lambda c: c[1])
    else:
        first = min(cands[kref], key=lambda c: abs(c[0] - reference_km))
    pos[kref] = first[0]
    cold = -first[2]

    def walk(order):
        prev = kref
        for k in order:
            dz_km = abs(zmean[k] - zmean[prev]) / 1000.0
            if not np.isfinite(dz_km):
                break
            best = None
            for c in cands[k]:
                if c[2] != first[2]:
                    continue
                shift = (c[0] - pos[prev]) * cold  # >0 toward the cold side
                upward = zmean[k] > zmean[prev]
                lean = shift if upward else -shift
                if lean < -30.0 or abs(shift) > 500.0 * dz_km + 50.0:
                    continue
                if best is None or abs(c[0] - pos[prev]) < abs(best - pos[prev]):
                    best = c[0]
            if best is None:
                break
            pos[k] = best
            prev = k

    walk(range(kref + 1, levels.size))
    walk(range(kref - 1, -1, -1))
    return pos, int(cold)


def fit_frontal_slope(position_km, height_m):
    """Least-squares slope of a frontal surface.

    Parameters
    ----------
    position_km : array_like
        Distance of the surface on each level [km] (NaN where not found).
    height_m : array_like
        Height of the surface on each level [m].

    Returns
    -------
    dict
        ``slope_1_in`` (N of 1:N, horizontal over vertical) [1],
        ``shift_km_per_km`` (signed d position / d height) [1],
        ``scatter_km`` (rms horizontal residual) [km], ``n_levels`` [1].
        NaN values when fewer than 3 levels were located.

    Notes
    -----
    Position is regressed on height (heights are known exactly on pressure
    levels); N = |d s / d z| with both in the same unit. Own regression:
    :mod:`kit.science.structure` fits fronts on the grid, not along a section.
    """
    s = np.asarray(position_km, float)
    z = np.asarray(height_m, float) / 1000.0
    ok = np.isfinite(s) & np.isfinite(z)
    if ok.sum() < 3 or np.ptp(z[ok]) < 0.3:
        return {"slope_1_in": np.nan, "shift_km_per_km": np.nan, "scatter_km": np.nan,
                "n_levels": int(ok.sum())}
    b, a = np.polyfit(z[ok], s[ok], 1)
    resid = s[ok] - (a + b * z[ok])
    return {"slope_1_in": float(abs(b)), "shift_km_per_km": float(b),
            "scatter_km": float(np.sqrt(np.mean(resid**2))), "n_levels": int(ok.sum())}


# ---------------------------------------------------------------------------
# sections
# ---------------------------------------------------------------------------
def _build(ds, lat, lon, dist, bearing, time, member, *, reference_km=None,
           reference_hpa=850.0, front_kind=None, smoothing_km=None, front_slope=None,
           ground_at_km=None, centre_km=np.nan):
    one, t_valid = _at_time(ds, time, member)
    j, i = _grid_index(one, lat, lon)
    one, j, i = _window(one, j, i)
    one = one.load()

    levels = one["level"].values.astype(float)
    p = xr.DataArray(levels, dims="level", coords={"level": levels})
    theta3 = thermo.potential_temperature(one["t"], p)
    pv3 = potential_vorticity(theta3, one["u"], one["v"], one)
    one = one.assign(pv=pv3)
    flat = PointSampler(one).sample_dataset(one, index=(j, i), nan="propagate", dim="distance")
    dims2 = ("level", "distance")
    drop = [c for c in flat.coords if c not in ("level",)]
    flat = flat.drop_vars(drop).assign_coords(distance=("distance", dist))
    sec = xr.Dataset(coords={"level": ("level", levels, {"units": "hPa",
                                                         "long_name": "pressure level"}),
                             "distance": ("distance", dist, {"units": "km", "long_name":
                                          "distance along the section from its start"}),
                             "lat": ("distance", lat, {"units": "degrees_north"}),
                             "lon": ("distance", lon, {"units": "degrees_east"})})
    humid = "td" in one  # a thin run without humidity: no dew point, theta instead of theta-w
    geo_wind = one["u"].attrs.get("derived") == "geostrophic"
    wind_word = "geostrophic wind" if geo_wind else "wind"
    for name, unit, long in (("t", "K", "air temperature"), ("td", "K", "dew point"),
                             ("u", "m s-1", f"eastward {wind_word}"),
                             ("v", "m s-1", f"northward {wind_word}"),
                             ("z", "m", "geopotential height"), ("pv", "1e-6 K m2 kg-1 s-1",
                              "potential vorticity (1 PVU = 1e-6 K m2 kg-1 s-1)")):
        if name == "td" and not humid:
            continue
        sec[name] = flat[name].transpose(*dims2).astype(float)
        sec[name].attrs = {"units": unit, "long_name": long}
    if not np.isfinite(sec["t"].values).any():
        raise InputError(f"section ({lat[0]:.2f}, {lon[0]:.2f}) to ({lat[-1]:.2f}, "
                         f"{lon[-1]:.2f}): lies outside the grid of run "
                         f"{ds.attrs.get('run', '?')}; expected points inside the model domain")

    pp = sec["level"]
    if humid:
        sec["theta_w"] = thermo.wet_bulb_potential_temperature(sec["t"], sec["td"], pp)
        sec["theta_w"].attrs = {"units": "K", "long_name": "wet-bulb potential temperature"}
    sec["theta"] = thermo.potential_temperature(sec["t"], pp)
    sec["theta"].attrs = {"units": "K", "long_name": "potential temperature"}
    if humid:
        sec["rh"] = thermo.relative_humidity(sec["t"], sec["td"])
        sec["rh"].attrs = {"units": "1", "long_name": "relative humidity (fraction, cloud proxy)"}
        sec["tw"] = thermo.wet_bulb_temperature(sec["t"], sec["td"], pp)
        sec["tw"].attrs = {"units": "K", "long_name": "wet-bulb temperature"}
    for name in [n for n in ("theta_w", "theta", "rh", "tw") if n in sec]:
        sec[name] = sec[name].transpose(*dims2)

    b = np.deg2rad(xr.DataArray(bearing, dims="distance"))
    sec["wind_speed"] = np.hypot(sec["u"], sec["v"]).transpose(*dims2)
    sec["wind_speed"].attrs = {"units": "m s-1", "long_name": f"{wind_word} speed"}
    sec["v_along"] = (sec["u"] * np.sin(b) + sec["v"] * np.cos(b)).transpose(*dims2)
    sec["v_along"].attrs = {"units": "m s-1", "long_name": "wind component along the section, "
                            "positive toward its end (front-normal wind on a section cut "
                            "across a front; positive toward the warm side)"}
    sec["v_across"] = (sec["u"] * np.cos(b) - sec["v"] * np.sin(b)).transpose(*dims2)
    sec["v_across"].attrs = {"units": "m s-1", "long_name": "wind component across the section, "
                             "positive to the right looking toward its end (along-front wind "
                             "on a section cut across a front)"}
    sec["bearing"] = ("distance", bearing, {"units": "degrees", "long_name":
                                           "local bearing of the section, clockwise from north"})

    zz = sec["z"].values
    pp3 = np.broadcast_to(levels[:, None], zz.shape)
    hemi = np.where(lat < 0, -1.0, 1.0)
    crossings = [
        ("freezing_level", lambda: thermo.freezing_level(sec["t"].values, zz, dim=0, p=pp3),
         "0 C level (highest 0 C crossing; the lowest level where the column is below 0 C)"),
        ("wet_bulb_freezing_level",
         lambda: thermo.freezing_level(sec["tw"].values, zz, dim=0, p=pp3),
         "wet-bulb 0 C level (highest crossing; the lowest level where the column is below 0 C)"),
        ("dynamic_tropopause",
         lambda: thermo.level_crossing(sec["pv"].values * hemi[None, :], zz, TROPOPAUSE_PVU,
                                       dim=0, p=pp3),
         "dynamic tropopause: highest crossing of 2 PVU (-2 PVU south of the "
         "equator), Hoskins, McIntyre & Robertson (1985)"
         + ("; PV of the geostrophic wind" if geo_wind else "")),
    ]
    for name, crossing, long in crossings:
        if name == "wet_bulb_freezing_level" and not humid:
            continue
        zc, pc = crossing()
        sec[f"{name}_m"] = ("distance", zc, {"units": "m", "long_name": long})
        sec[f"{name}_hpa"] = ("distance", pc, {"units": "hPa", "long_name": long})
    sec["pv_hemispheric"] = (sec["pv"] * xr.DataArray(hemi, dims="distance")).transpose(*dims2)
    sec["pv_hemispheric"].attrs = {"units": "1e-6 K m2 kg-1 s-1",
                                   "long_name": "potential vorticity times the "
                                   "sign of latitude (2 on the dynamic tropopause)"}

    if "zsfc" in flat:
        sec["ground_m"] = ("distance", np.asarray(flat["zsfc"].values, float),
                           {"units": "m", "long_name": "height of the model surface"})
    if "precip" in flat:
        sec["precip"] = ("distance", flat["precip"].values.astype(float),
                         {"units": "mm h-1", "long_name": "surface precipitation "
                         "rate over the model step ending at the valid time"})
    psfc, p_words = surface_pressure_hpa(flat, dist.shape)
    if humid and "t2m" in flat and "td2m" in flat:
        sec["theta_w_surface"] = ("distance", np.asarray(thermo.wet_bulb_potential_temperature(
            flat["t2m"].values, flat["td2m"].values, psfc), float),
            {"units": "K", "long_name": f"wet-bulb potential temperature at 2 m ({p_words})"})
    elif not humid and "t2m" in flat:
        sec["theta_surface"] = ("distance", np.asarray(thermo.potential_temperature(
            flat["t2m"].values, psfc), float),
            {"units": "K", "long_name": f"potential temperature at 2 m ({p_words})"})

    ws = sec["wind_speed"].values
    attrs = {
        "title": "frontshift vertical cross-section",
        "run": str(ds.attrs.get("run", "")),
        "source": str(ds.attrs.get("source", "")),
        "valid_time": iso_minutes(t_valid),
        "caution": CAUTION,
        "grid_km": _grid_km(one),
        "start_lat": float(lat[0]), "start_lon": float(lon[0]),
        "end_lat": float(lat[-1]), "end_lon": float(lon[-1]),
        "length_km": float(dist[-1]),
        "points_outside_grid": int((~np.isfinite(sec["t"].values).any(axis=0)).sum()),
    }
    mid = len(lat) // 2
    attrs["compass_start"] = compass_point(bearing_deg(lon[mid], lat[mid], lon[0], lat[0]))
    attrs["compass_end"] = compass_point(bearing_deg(lon[mid], lat[mid], lon[-1], lat[-1]))
    if "reference_time" in ds.coords:
        rt = np.datetime64(ds["reference_time"].values, "ns")
        attrs["reference_time"] = iso_minutes(rt)
        attrs["lead_h"] = float((t_valid - rt) / np.timedelta64(1, "h"))
    if np.isfinite(ws).any():
        k, j = np.unravel_index(np.nanargmax(ws), ws.shape)
        attrs.update(jet_core_speed_ms=float(ws[k, j]), jet_core_hpa=float(levels[k]),
                     jet_core_km=float(dist[j]), jet_core_is_jet=int(ws[k, j] >= JET_MIN_MS))
    if member is not None or "member" in ds.dims:
        attrs["member"] = int(member) if member is not None else int(
            np.atleast_1d(ds["member"].values)[0])
    if ds.attrs.get("thin"):  # what a thin run lacks and what was done instead
        attrs["thin"] = str(ds.attrs["thin"])
    if not humid:
        attrs["thermal_field"] = "theta"
    if geo_wind:
        attrs["wind"] = "geostrophic"
    sec.attrs = attrs

    _add_frontal_surface(sec, reference_km=reference_km, reference_hpa=reference_hpa,
                         front_kind=front_kind, smoothing_km=smoothing_km,
                         front_slope=front_slope, ground_at_km=ground_at_km,
                         centre_km=centre_km)
    sec["level"].attrs.update(units="hPa", long_name="pressure level")
    sec["distance"].attrs.update(units="km", long_name="distance along the section from its start")
    return sec


def front_slope_1_in(front):
    """Slope N (1 in N) of a front's surface for the surface-front estimate, and its source.

    The front's own slope (:mod:`kit.science.structure`) where it is plausible
    (1 in 10 to 1 in 1000), else the typical slope of its kind
    (:data:`kit.constants.TYPICAL_SLOPE_1_IN`); ``(nan, "none")`` without either.
    """
    n = front.props.get("slope_1_in") if front.props else None
    try:
        n = float(n)
    except (TypeError, ValueError):
        n = np.nan
    if np.isfinite(n) and 10.0 <= abs(n) <= 1000.0:
        return abs(n), "front"
    typ = TYPICAL_SLOPE_1_IN.get(front.kind)
    return (typ, "typical") if typ else (np.nan, "none")


#: largest distance from a locating line to its zone's centre that is believed [km]
MAX_CENTRE_KM = 300.0


def zone_centre_offset_km(front):
    """Distance from the locating line to the frontal zone's centre, toward the cold side [km].

    The locating line lies on the warm edge of the frontal zone (Hewson 1998).
    For a tanh zone of half-width L the line is at 0.658 L from the centre,
    where |grad tau| / TFP = 0.866 L; so the centre lies
    :data:`kit.constants.ZONE_CENTRE_FACTOR` |grad tau| / TFP = 0.760 |grad tau| / TFP
    on the cold side (derived from the analytic zone of REFERENCES.md). The
    median over the vertices is used; NaN when the front carries no usable
    ``grad``/``tfp``.
    """
    grad = np.asarray(front.grad, dtype=float)
    tfp = np.asarray(front.tfp, dtype=float)
    ok = np.isfinite(grad) & np.isfinite(tfp) & (tfp > 0) & (grad > 0)
    if not ok.any():
        return np.nan
    km = ZONE_CENTRE_FACTOR * float(np.median(grad[ok] / tfp[ok])) / 1000.0
    return km if 0.0 < km <= MAX_CENTRE_KM else np.nan


def _surface_guess_km(sec, reference_km, reference_hpa, slope_1_in, cold, pos, zpos,
                      ground_at_km=None, centre_km=np.nan):
    """Return where the surface front is expected on a section [km].

    The front line's crossing on its level (``reference_km``; else the lowest
    located level of the frontal surface) moved toward the warm side by the
    slope times the level's height above the ground (at ``ground_at_km``, the
    site, when given) and toward the cold side by the line's zone-centre
    offset: the estimate the arrival table starts from too
    (:func:`kit.science.passages.find_passages`), so both look for the same
    zone. None when there is nothing to start from.
    """
    dist = sec["distance"].values
    if reference_km is not None and np.isfinite(reference_km):
        ref = float(reference_km)
        k = int(np.argmin(np.abs(sec["level"].values - float(reference_hpa))))
        z_ref = float(np.interp(ref, dist, sec["z"].values[k]))
    elif np.isfinite(pos).any():
        k = int(np.flatnonzero(np.isfinite(pos))[0])
        ref, z_ref = float(pos[k]), float(zpos[k])
    else:
        return None
    at = ref if ground_at_km is None else float(ground_at_km)
    ground = float(np.interp(at, dist, sec["ground_m"].values)) if "ground_m" in sec else 0.0
    above = max(z_ref - ground, 0.0) if np.isfinite(z_ref) else 0.0
    if np.isfinite(slope_1_in):
        ref = ref - cold * above * float(slope_1_in) / 1000.0
    if np.isfinite(centre_km):
        ref = ref + cold * float(centre_km)
    return ref


def _add_frontal_surface(sec, *, reference_km, reference_hpa, front_kind, smoothing_km,
                         front_slope=None, ground_at_km=None, centre_km=np.nan):
    field = thermal_field(sec)
    pos, cold = locate_frontal_surface(sec, field=field, reference_km=reference_km,
                                       reference_hpa=reference_hpa, smoothing_km=smoothing_km)
    dist = sec["distance"].values
    zpos = np.array([np.interp(pk, dist, sec["z"].values[k]) if np.isfinite(pk) else np.nan
                     for k, pk in enumerate(pos)])
    sec["frontal_surface_km"] = ("level", pos, {"units": "km", "long_name":
                                 f"distance of the frontal surface (warm edge of the "
                                 f"{_FIELD_WORDS[field]} gradient zone) on each level"})
    sec["frontal_surface_z"] = ("level", zpos, {"units": "m", "long_name":
                                "height of the frontal surface on each level"})
    fit = fit_frontal_slope(pos, zpos)
    sec.attrs["frontal_slope_1_in"] = fit["slope_1_in"]
    sec.attrs["frontal_slope_scatter_km"] = fit["scatter_km"]
    sec.attrs["frontal_slope_levels"] = fit["n_levels"]
    leans = np.isfinite(fit["shift_km_per_km"]) and cold != 0 and \
        np.sign(fit["shift_km_per_km"]) == cold
    sec.attrs["frontal_surface_leans_over_cold_air"] = int(bool(leans))
    sec.attrs["cold_side"] = {-1: "start", 1: "end"}.get(cold, "")

    # surface front (surface_front_1d, the one definition of every product): the
    # centre of the 2 m theta-w (theta on a thin run) zone when the run has it,
    # nearest the frontal surface's lowest located level; else that level
    surf, how = np.nan, ""
    surface = f"{field}_surface"
    if surface in sec and cold != 0:
        slope = front_slope if front_slope is not None and np.isfinite(front_slope) else \
            TYPICAL_SLOPE_1_IN.get(front_kind, np.nan)
        ref = _surface_guess_km(sec, reference_km, reference_hpa, slope, cold, pos, zpos,
                                ground_at_km=ground_at_km, centre_km=centre_km)
        if ref is not None:
            ground = sec["ground_m"].values if "ground_m" in sec else None
            at = ref if ground_at_km is None else float(ground_at_km)
            site_m = float(np.interp(at, dist, ground)) if ground is not None else np.nan
            surf = surface_front_1d(sec[surface].values, dist,
                                    smoothing_km or surface_smoothing_km(sec.attrs["grid_km"]),
                                    float(ref), -cold, ground_m=ground, reference_m=site_m,
                                    slope_1_in=slope)
            if np.isfinite(surf):
                how = f"centre of the 2 m {_FIELD_WORDS[field]} zone"
    if not np.isfinite(surf) and np.isfinite(pos).any():
        k = int(np.flatnonzero(np.isfinite(pos))[0])
        surf, how = float(pos[k]), f"lowest located level ({sec['level'].values[k]:.0f} hPa)"
    sec.attrs["surface_front_km"] = float(surf)
    sec.attrs["surface_front_from"] = how

    zone = np.zeros(dist.size, dtype="int8")
    if front_kind in RULE_ZONES_NM and np.isfinite(surf) and cold != 0:
        near, far = (x * NM_KM for x in RULE_ZONES_NM[front_kind])
        off = (dist - surf) * cold  # >0 on the cold side
        if front_kind == "warm":  # rain from 200-300 nm ahead up to the front
            zone[(off >= 0) & (off <= far)] = 1
            zone[(off >= 0) & (off <= near)] = 2
        else:  # main band 50-100 nm behind the front
            zone[(off >= near) & (off <= far)] = 2
        sec.attrs["rule_zone_kind"] = front_kind
        sec.attrs["rule_zone_near_km"] = float(surf + cold * near)
        sec.attrs["rule_zone_far_km"] = float(surf + cold * far)
    sec["rule_zone"] = ("distance", zone, {"long_name": "rule-of-thumb precipitation zone "
                        "(common practice, no source): warm front, 2 = from the surface front "
                        "to 200 nm ahead, 1 = 200-300 nm ahead (where rain typically begins); "
                        "cold front, 2 = the main band 50-100 nm behind; 0 = outside"})


def section_between(ds, start, end, *, steps=None, spacing_km=10.0, time=None, member=None,
                    smoothing_km=None):
    """Vertical section along the geodesic between two points at one valid time.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run (:func:`kit.io.runs.open_run`), regular or projected grid.
    start, end : (float, float)
        ``(lat, lon)`` of the ends [degrees].
    steps : int, optional
        Number of points including both ends; default from ``spacing_km``.
    spacing_km : float
        Point spacing when ``steps`` is not given [km].
    time : str or datetime-like, optional
        Valid time (UTC); required when the run has several.
    member : int, optional
        Ensemble member; required when the run has several.
    smoothing_km : float, optional
        Smoothing scale for locating the frontal surface [km].

    Returns
    -------
    xarray.Dataset
        Dims ``level`` [hPa] and ``distance`` [km]; fields ``t``, ``td``,
        ``tw``, ``theta``, ``theta_w`` [K], ``rh`` [1], ``u``, ``v``,
        ``wind_speed``, ``v_along``, ``v_across`` [m s-1], ``z`` [m],
        ``pv``, ``pv_hemispheric`` [PVU]; along distance ``lat``, ``lon``,
        ``bearing`` [degrees], ``freezing_level_m``/``_hpa``,
        ``wet_bulb_freezing_level_m``/``_hpa``, ``dynamic_tropopause_m``/``_hpa``,
        ``precip`` [mm h-1] when the run has it, ``rule_zone``; per level
        ``frontal_surface_km`` and ``frontal_surface_z``. Attributes: run,
        source, valid_time, lead_h, caution, compass ends, jet core, fitted
        frontal slope ``frontal_slope_1_in``, ``surface_front_km``. On a run
        without humidity: no ``td``, ``tw``, ``theta_w``, ``rh`` or wet-bulb
        0 C level, the frontal surface in ``theta`` and the attributes
        ``thermal_field`` ("theta") and ``thin``; ``wind`` ("geostrophic")
        when the winds are geostrophic.

    Notes
    -----
    The slope is measured along the section: a section cutting a front at an
    angle a (from the front's normal) shows it shallower by 1 / cos(a); cut
    across the front with :func:`section_across_front` for its true slope.

    Examples
    --------
    >>> sec = section_between(ds, (52.0, -20.0), (48.0, -5.0), time="2027-01-14T06:00Z")
    ... # doctest: +SKIP
    """
    lat, lon, dist, bearing = section_points(start, end, steps=steps, spacing_km=spacing_km)
    return _build(ds, lat, lon, dist, bearing, time, member, smoothing_km=smoothing_km)


def _point_of(site_or_point):
    """(lat, lon, name) from a (lat, lon) pair, a dict or a pandas row."""
    if site_or_point is None:
        return None
    if isinstance(site_or_point, (dict, pd.Series)):
        try:
            lat, lon = float(site_or_point["lat"]), float(site_or_point["lon"])
        except (KeyError, TypeError, ValueError):
            raise InputError(f"site {site_or_point!r}: expected 'lat' and 'lon' in degrees") \
                from None
        name = str(site_or_point.get("name", "")) or ""
        lat, lon = _check_point((lat, lon), f"site {name}")
        return lat, lon, name
    lat, lon = _check_point(site_or_point, "point")
    return lat, lon, ""


def normal_through(front, lat, lon):
    """Return the front's normal through a point: bearing toward the warm side, crossing.

    The normal is that of the line's segment nearest the point (the way
    :func:`section_across_front` and the arrival table's surface front both
    cut across a front).

    Returns
    -------
    bearing : float
        Direction toward the warm side [degrees clockwise from north].
    s_front : float
        Where the line crosses the normal, from the point toward the warm side [km].
    """
    x, y = local_east_north_km(np.asarray(front.lon, float), np.asarray(front.lat, float),
                               lon, lat)
    _, px, py, i, t = _nearest_on_line(x, y)
    tx, ty = x[i + 1] - x[i], y[i + 1] - y[i]
    tl = math.hypot(tx, ty)
    if tl == 0:
        raise InputError("front: repeated vertices; expected a front line")
    nx, ny = -ty / tl, tx / tl
    ne = np.asarray(front.normal_east, float)
    nn = np.asarray(front.normal_north, float)
    ce = (1 - t) * ne[i] + t * ne[i + 1]
    cn = (1 - t) * nn[i] + t * nn[i + 1]
    if nx * ce + ny * cn < 0:
        nx, ny = -nx, -ny  # (nx, ny) now points to the cold side
    wx, wy = -nx, -ny  # toward the warm side
    return math.degrees(math.atan2(wx, wy)) % 360.0, float(px * wx + py * wy)


#: fields the surface pressure of a near-surface profile is taken from
SURFACE_PRESSURE_FIELDS = ("ps", "mslp", "zsfc")
#: lapse rate of the reduction of sea-level pressure to the model surface [K m-1]
#: (the standard atmosphere's 6.5 K/km, ICAO 1993; the usual reduction, common practice)
_REDUCTION_LAPSE = 0.0065


def surface_pressure_hpa(flat, shape):
    """Pressure at the 2-m surface of near-surface samples [hPa], and how it was had.

    The run's surface pressure where it has one; else its mean-sea-level
    pressure taken down to the model surface (``zsfc``) by the hypsometric
    equation with the layer's mean temperature, the 2-m temperature plus half
    the standard lapse over the height (Wallace & Hobbs 2006, Eq. 3.29; number
    from memory); else mean-sea-level pressure, else 1013.25 hPa. Over high
    ground sea-level pressure instead of the surface's makes 2-m theta-w several
    kelvin too cold (about 1 K per 100 m), a terrain step a front finder
    would take for a front.

    Parameters
    ----------
    flat : xarray.Dataset
        Samples along a ``distance`` dimension (``ps``, ``mslp`` [Pa], ``zsfc`` [m], ``t2m`` [K]).
    shape : tuple
        Shape of the samples.

    Returns
    -------
    (numpy.ndarray, str)
    """
    if "ps" in flat:
        return np.asarray(flat["ps"].values, float) / 100.0, "surface pressure"
    if "mslp" not in flat:
        return np.full(shape, 1013.25), "1013.25 hPa as surface pressure"
    p = np.asarray(flat["mslp"].values, float) / 100.0
    if "zsfc" not in flat or "t2m" not in flat:
        return p, "mslp as surface pressure"
    z = np.clip(np.asarray(flat["zsfc"].values, float), 0.0, None)
    t_mean = np.asarray(flat["t2m"].values, float) + 0.5 * _REDUCTION_LAPSE * z
    return p * np.exp(-G0 * z / (RD * t_mean)), "mslp taken down to the model surface"


def near_surface_profile(one, lat, lon, field, *, with_ground=False):
    """Sample the near-surface thermal field along points, as a section does [K].

    Parameters
    ----------
    one : xarray.Dataset
        The run at one valid time and member (``t2m``, ``td2m``, ``mslp``).
    lat, lon : array_like
        The points [degrees].
    field : {"theta_w", "theta"}
        2-m theta-w or 2-m theta, at the surface pressure of
        :func:`surface_pressure_hpa`.
    with_ground : bool
        Also return the model surface height at the points [m] (None without
        ``zsfc``).

    Returns
    -------
    numpy.ndarray or None
        NaN outside the grid; None when the run lacks the 2-m fields. With
        ``with_ground``, the pair (profile, ground).
    """
    need = ["t2m", "td2m"] if field == "theta_w" else ["t2m"]
    if any(n not in one for n in need):
        return (None, None) if with_ground else None
    keep = need + [n for n in SURFACE_PRESSURE_FIELDS if n in one]
    keep += sorted({one[n].attrs["grid_mapping"] for n in need
                    if one[n].attrs.get("grid_mapping") in one.variables})
    sub = one[keep]
    j, i = _grid_index(sub, np.asarray(lat, float), np.asarray(lon, float))
    flat = PointSampler(sub).sample_dataset(sub, index=(j, i), nan="propagate", dim="distance")
    psfc, _ = surface_pressure_hpa(flat, (np.asarray(lat).size,))
    if field == "theta_w":
        tau = np.asarray(thermo.wet_bulb_potential_temperature(
            flat["t2m"].values, flat["td2m"].values, psfc), float)
    else:
        tau = np.asarray(thermo.potential_temperature(flat["t2m"].values, psfc), float)
    if not with_ground:
        return tau
    ground = np.asarray(flat["zsfc"].values, float) if "zsfc" in flat else None
    return tau, ground


def _nearest_on_line(x, y):
    """Nearest point of polyline (x, y) [km] to the origin: (px, py, seg index, t)."""
    best = (np.inf, 0.0, 0.0, 0, 0.0)
    for i in range(len(x) - 1):
        ax, ay, bx, by = x[i], y[i], x[i + 1], y[i + 1]
        dx, dy = bx - ax, by - ay
        L2 = dx * dx + dy * dy
        t = 0.0 if L2 == 0 else min(1.0, max(0.0, -(ax * dx + ay * dy) / L2))
        px, py = ax + t * dx, ay + t * dy
        d = math.hypot(px, py)
        if d < best[0]:
            best = (d, px, py, i, t)
    return best


def _front_distance_km(front, lat, lon):
    x, y = local_east_north_km(np.asarray(front.lon, float), np.asarray(front.lat, float),
                               lon, lat)
    if len(x) == 1:
        return float(math.hypot(x[0], y[0]))
    return float(_nearest_on_line(x, y)[0])


def pick_front(fronts, point, *, kind="nearest", time=None):
    """Return the front of ``kind`` nearest to ``point`` at ``time``.

    Parameters
    ----------
    fronts : list of kit.science.fronts.Front
        Candidate fronts.
    point : (float, float)
        ``(lat, lon)`` [degrees].
    kind : {"nearest", "warm", "cold", "quasi-stationary"}
        Wanted front type; ``nearest`` takes any.
    time : datetime-like, optional
        Valid time the front must have.

    Returns
    -------
    kit.science.fronts.Front
    """
    if kind not in ("nearest", "warm", "cold", "quasi-stationary"):
        raise InputError(f"front kind {kind!r}: expected warm, cold, quasi-stationary or nearest")
    lat, lon, _ = _point_of(point)
    pool = list(fronts)
    if time is not None:
        want = np.datetime64(pd.Timestamp(time).tz_localize(None) if pd.Timestamp(time).tzinfo
                             is None else pd.Timestamp(time).tz_convert("UTC").tz_localize(None),
                             "ns")
        pool = [f for f in pool if abs(np.datetime64(f.valid_time, "ns") - want)
                <= np.timedelta64(60, "s")]
    found = pool
    if kind != "nearest":
        found = [f for f in pool if f.kind == kind]
    found = [f for f in found if len(f.lon) >= 2]
    if not found:
        have = ", ".join(f"{sum(f.kind == k for f in pool)} {k}"
                         for k in ("warm", "cold", "quasi-stationary"))
        when = f" at {iso_minutes(want)}" if time is not None else ""
        raise InputError(f"no {'' if kind == 'nearest' else kind + ' '}front{when}; fronts "
                         f"found there: {have}")
    return min(found, key=lambda f: _front_distance_km(f, lat, lon))


def section_across_front(ds, front, site_or_point=None, *, length_km=1200.0, spacing_km=10.0,
                         steps=None, smoothing_km=None):
    """Section normal to a front through a site, from the cold to the warm side.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run the front was found in.
    front : kit.science.fronts.Front
        The front to cut across; its valid time and member select the fields.
    site_or_point : (lat, lon), dict or pandas row, optional
        Site or point the section passes through [degrees]; default the
        middle vertex of the front.
    length_km : float
        Section length [km].
    spacing_km : float
        Point spacing [km] (``steps`` overrides).
    steps : int, optional
        Number of points.
    smoothing_km : float, optional
        Smoothing scale for locating the frontal surface [km].

    Returns
    -------
    xarray.Dataset
        As :func:`section_between`, with attributes ``front_kind``,
        ``front_level_hpa``, ``front_km`` (where the front line crosses the
        section), ``site_km``/``site_name`` and ``rule_zone_*``; and the
        fields ``wind_normal_to_front`` (positive toward the cold side, as
        :attr:`kit.science.fronts.Front.vn`) and ``wind_along_front`` [m s-1].

    Notes
    -----
    The section is normal to the front where the front is nearest to the
    site, and passes through the site. It is centred on the crossing with the
    front unless the site is more than 0.4 ``length_km`` away, then on the
    mid-point between site and front. The start is on the cold side.
    """
    if not (np.isfinite(length_km) and 50.0 <= float(length_km) <= 10000.0):
        raise InputError(f"length_km={length_km}: expected 50 to 10000 km")
    if len(front.lon) < 2:
        raise InputError("front: has fewer than 2 vertices; expected a front line")
    p = _point_of(site_or_point)
    if p is None:
        m = len(front.lon) // 2
        p = (float(front.lat[m]), float(front.lon[m]), "")
    slat, slon, sname = p
    bearing, s_front = normal_through(front, slat, slon)
    L = float(length_km)
    c = s_front if abs(s_front) <= 0.4 * L else 0.5 * s_front
    s0, s1 = c - L / 2.0, c + L / 2.0

    def at(s):
        lo, la = destination(slon, slat, bearing, s)  # s < 0: the other way
        return la, lo

    lat, lon, dist, brg = section_points(at(s0), at(s1), steps=steps, spacing_km=spacing_km)
    front_km = s_front - s0
    sec = _build(ds, lat, lon, dist, brg, front.valid_time, front.member,
                 reference_km=front_km, reference_hpa=float(front.level_hpa),
                 front_kind=front.kind, smoothing_km=smoothing_km,
                 front_slope=front_slope_1_in(front)[0],
                 ground_at_km=None if p[2] == "" and site_or_point is None else -s0,
                 centre_km=zone_centre_offset_km(front))
    sec["wind_normal_to_front"] = -sec["v_along"]
    sec["wind_normal_to_front"].attrs = {"units": "m s-1", "long_name": "wind component normal "
                                         "to the front, positive toward the cold side (as "
                                         "kit.science.fronts.Front.vn)"}
    sec["wind_along_front"] = sec["v_across"]
    sec["wind_along_front"].attrs = {"units": "m s-1", "long_name": "wind component along the "
                                     "front, positive to the right looking from the cold side "
                                     "toward the warm side"}
    sec.attrs.update(front_kind=str(front.kind), front_level_hpa=float(front.level_hpa),
                     front_km=float(front_km), site_km=float(-s0), site_name=sname,
                     site_lat=slat, site_lon=slon, section_bearing_deg=float(bearing))
    if front.track is not None:
        sec.attrs["front_track"] = int(front.track)
    speed = front.motion_speed_ms
    if speed is not None and np.isfinite(speed):
        sec.attrs["front_speed_ms"] = float(speed)
    return sec


def section_for_site(ds, site, time, *, fronts, front="nearest", length_km=1200.0,
                     spacing_km=10.0, level=850.0, member=None):
    """Section through a site across the chosen front at one valid time.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    site : dict or pandas row or (lat, lon)
        The site [degrees]; ``name`` is used in labels when present.
    time : str or datetime-like
        Valid time (UTC).
    front : {"nearest", "warm", "cold", "quasi-stationary"}
        Which front to cut across.
    fronts : list of kit.model.Front
        The fronts of the shift's analysis (:func:`kit.pipeline.analyse`); the
        section never looks for fronts of its own, so it shows the fronts the
        map and the arrival table show.
    length_km, spacing_km : float
        Section length and point spacing [km].
    level : float
        Level the fronts are found on [hPa].
    member : int, optional
        Ensemble member.

    Returns
    -------
    xarray.Dataset
        As :func:`section_across_front`. When ``front="nearest"`` and the run
        has no front at that time, the section runs through the site along the
        ``level`` theta-w gradient (theta on a run without humidity; cold to
        warm) and ``front_kind`` is "".
    """
    t = select_time(_select_member(ds, member), time)
    _require_data_at(_select_member(ds, member), t)
    if member is None and "member" in ds.dims and ds.sizes["member"] == 1:
        member = int(ds["member"].values[0])
    if fronts is None or isinstance(fronts, (str, bytes)):
        raise InputError(
            "section_for_site: no fronts given; expected the fronts of the shift's analysis "
            "(kit.analyse(run).fronts)"
        )
    fronts = list(fronts)
    pt = _point_of(site)
    try:
        f = pick_front(fronts, (pt[0], pt[1]), kind=front, time=t)
    except InputError:
        if front != "nearest":
            raise
        return _section_along_gradient(ds, site, t, member, length_km, spacing_km, level)
    return section_across_front(ds, f, site, length_km=length_km, spacing_km=spacing_km)


def _require_data_at(ds, t):
    """One-line error when every temperature value at valid time ``t`` is missing."""
    if bool(ds["t"].sel(time=t).notnull().any()):
        return
    have = ds["t"].notnull().any([d for d in ds["t"].dims if d != "time"]).values
    good = [iso_minutes(x) for x, ok in zip(ds["time"].values, have, strict=True) if ok]
    listed = ", ".join(good[:6]) + (" ..." if len(good) > 6 else "")
    raise InputError(
        f"--time {iso_minutes(t)}: no data at this valid time (all values missing) in run "
        f"{ds.attrs.get('run', '?')}; expected a time with data: {listed or 'none'}"
    )


def _section_along_gradient(ds, site, t, member, length_km, spacing_km, level):
    """Fallback without a front: through the site along the theta-w (or theta) gradient."""
    slat, slon, sname = _point_of(site)
    # probe theta-w 100 km east/west/north/south of the site on `level`
    lon, lat = destination(np.full(4, slon), np.full(4, slat),
                           np.array([90.0, 270.0, 0.0, 180.0]), 100.0)
    probe = _build(ds, lat, lon, np.array([0.0, 200.0, 400.0, 600.0]), np.zeros(4), t, member)
    field = thermal_field(probe)
    tw = probe[field].sel(level=level, method="nearest").values
    ge, gn = tw[0] - tw[1], tw[2] - tw[3]
    bearing = math.degrees(math.atan2(ge, gn)) % 360.0 if np.isfinite([ge, gn]).all() and \
        (ge or gn) else 90.0
    half = length_km / 2.0
    a = destination(slon, slat, bearing, -half)
    b = destination(slon, slat, bearing, half)
    sec = section_between(ds, (a[1], a[0]), (b[1], b[0]), spacing_km=spacing_km, time=t,
                          member=member)
    sec.attrs.update(front_kind="", site_km=float(half), site_name=sname, site_lat=slat,
                     site_lon=slon, section_bearing_deg=float(bearing),
                     note=f"no front at {iso_minutes(t)}; section along the {level:.0f} hPa "
                     f"{_FIELD_WORDS[field]} gradient, cold to warm")
    return sec
