"""Pressure centres: lows and highs of mean-sea-level pressure, tracked over lead time.

A centre is a local extremum of MSLP (3 x 3 neighbourhood) around which at
least one closed isobar lies within a search radius: the closed-contour idea
of Wernli & Schwierz (2006), applied to lows and, with the sign turned, to
highs. Its position and pressure are refined by a quadratic through the 3 x 3
neighbourhood. Centres of successive valid times of one run (per member) are
joined by nearest-neighbour matching with a first guess from the previous
motion; each tracked centre carries its tendency, its deepening rate and the
explosive-deepening measure of Sanders & Gyakum (1980).

Computation only: no graphics, no files. Records are frozen
(:class:`Centre`, :class:`CentreTrack`); :attr:`Centre.props` is the flat
mapping of a GeoJSON Point feature (:func:`centres_geojson_features`).

Units: pressure in Pa on input (the canonical ``mslp``), hPa in the records
(``pressure_hpa``, ``depth_hpa``, ``tendency_hpa_3h``, ``deepening_hpa_24h``),
distances in km, speeds in m s-1, positions in degrees (longitude -180..180).

References
----------
Wernli, H., and C. Schwierz, 2006: Surface cyclones in the ERA-40 dataset
(1958-2001). Part I: Novel identification method and global climatology.
J. Atmos. Sci., 63, 2486-2507.

Sanders, F., and J. R. Gyakum, 1980: Synoptic-dynamic climatology of the
"bomb". Mon. Wea. Rev., 108, 1589-1606.

Murray, R. J., and I. Simmonds, 1991: A numerical scheme for tracking cyclone
centres from digital data. Part I: Development and operation of the scheme.
Aust. Meteor. Mag., 39, 155-166 (the Laplacian criterion; not implemented
here, named as the alternative).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import xarray as xr
from scipy import ndimage
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from kit.constants import EARTH_RADIUS_KM
from kit.errors import InputError
from kit.model import json_float
from kit.science.geo import (
    bearing_deg,
    great_circle_km,
    grid_of,
    local_east_north_km,
    local_to_lonlat,
)
from kit.timefmt import iso_seconds

__all__ = [
    "BERGERON_HPA_24H",
    "BERGERON_LAT_DEG",
    "CentreSettings",
    "Centre",
    "CentreTrack",
    "find_centres",
    "find_run_centres",
    "track_centres",
    "explosive_threshold_hpa_24h",
    "bergerons",
    "centres_geojson_features",
    "LOW_FRONT_KM",
    "assign_lows",
]

#: deepening of one "bergeron" [hPa per 24 h] at :data:`BERGERON_LAT_DEG`: the
#: explosive-deepening rate of Sanders & Gyakum (1980), from memory
BERGERON_HPA_24H = 24.0
#: latitude at which one bergeron is :data:`BERGERON_HPA_24H` [degrees]
#: (Sanders & Gyakum 1980, from memory)
BERGERON_LAT_DEG = 60.0

KINDS = ("low", "high")
_PA_PER_HPA = 100.0
_S_PER_H = 3600.0
#: a 3 x 3 neighbourhood: 8-connected regions (a leak through a corner counts)
_EIGHT = np.ones((3, 3), dtype=bool)


# --------------------------------------------------------------------------- settings
@dataclass(frozen=True)
class CentreSettings:
    """Parameters of centre finding and tracking, each stated where it comes from.

    Attributes
    ----------
    contour_interval_hpa : float
        Isobar interval of the closed-contour test [hPa]; a centre needs the
        isobar one interval above (low) or below (high) its own grid value to
        be closed around it (Wernli & Schwierz 2006 test closed contours; the
        2 hPa default is common practice on charts, no source).
    search_radius_km : float
        The closed isobar must lie within this distance of the centre [km]
        (the limit on the contour's extent is in the spirit of Wernli &
        Schwierz 2006, who bound the contour length, from memory; 1000 km is
        our choice).
    max_surface_m : float
        No centre where the model surface height ``zsfc`` exceeds this [m]:
        pressure reduced to sea level under high ground makes spurious
        extrema (common practice, no source). Only applied where the run
        has a surface height; the record says whether it was.
    edge_km : float
        No centre within this distance of the edge of a limited-area grid
        [km]; at least one grid length always (an extremum on the edge is
        not a centre). Our choice, no source.
    polar_lat : float
        Poleward of this latitude on a global grid [degrees] the position is
        the grid point (the quadratic in grid indices degenerates as the
        meridians converge); the closed-contour test is made across the pole.
    max_speed_ms : float
        Fastest motion a track may have between two valid times [m s-1]
        (40 m/s: common practice, no source).
    bergeron_min_lat : float
        Equatorward of this latitude [degrees] no bergerons are given: the
        sin(lat) normalisation of Sanders & Gyakum (1980) is meant for
        extratropical lows and diverges at the equator (our choice, no source).
    kinds : tuple of str
        Which centres to find: ``"low"``, ``"high"`` or both.
    """

    contour_interval_hpa: float = 2.0
    search_radius_km: float = 1000.0
    max_surface_m: float = 1000.0
    edge_km: float = 300.0
    polar_lat: float = 85.0
    max_speed_ms: float = 40.0
    bergeron_min_lat: float = 20.0
    kinds: tuple = KINDS

    def __post_init__(self):
        positive = ("contour_interval_hpa", "search_radius_km", "max_speed_ms")
        for name in positive + ("max_surface_m", "edge_km", "polar_lat", "bergeron_min_lat"):
            value = getattr(self, name)
            try:
                value = float(value)
            except (TypeError, ValueError):
                raise InputError(
                    f"centre settings: {name}={value!r}; expected a number"
                ) from None
            bad = math.isnan(value) or (name in positive and (value <= 0 or math.isinf(value)))
            if not bad and name not in positive and name != "max_surface_m":
                bad = value < 0 or math.isinf(value)
            if bad:
                expected = "a finite number > 0" if name in positive else "a number >= 0"
                raise InputError(f"centre settings: {name}={value!r}; expected {expected}")
            object.__setattr__(self, name, value)
        kinds = (self.kinds,) if isinstance(self.kinds, str) else tuple(self.kinds)
        if not kinds or any(k not in KINDS for k in kinds):
            raise InputError(
                f"centre settings: kinds={self.kinds!r}; expected 'low', 'high' or both"
            )
        object.__setattr__(self, "kinds", kinds)

    def criterion_text(self):
        """One line naming the criterion and its parameters (for every record)."""
        return (
            f"closed isobar at {self.contour_interval_hpa:g} hPa within "
            f"{self.search_radius_km:g} km (after Wernli & Schwierz 2006)"
        )


# --------------------------------------------------------------------------- records
@dataclass(frozen=True)
class Centre:
    """One low or high at one valid time.

    Attributes
    ----------
    kind : str
        ``"low"`` or ``"high"``.
    lon, lat : float
        Position [degrees], longitude in -180..180, refined between grid points.
    pressure_hpa : float
        Central pressure [hPa] from the quadratic through the 3 x 3
        neighbourhood (at or below the grid value for a low, at or above for a high).
    depth_hpa : float
        The criterion value [hPa]: how far above (low) or below (high) the grid
        extremum the outermost closed isobar within the search radius lies
        (the pressure where the region around the centre first leaks beyond
        the radius, off the grid or to a deeper centre, minus the extremum).
    closed_isobars : int
        Number of closed isobars at the contour interval, counted from the
        extremum (``floor(depth / interval)``, at least 1).
    grid_pressure_hpa : float
        Pressure at the extremal grid point [hPa].
    grid_km : float
        Local grid length sqrt(dx dy) at the centre [km]: the position is good
        to a fraction of it, never better than the field allows.
    valid_time : numpy.datetime64 or None
        Valid time (UTC).
    member : int or None
        Ensemble member, where the run has several.
    refined : bool
        True when the quadratic fit gave the position and pressure; False
        where the grid point was kept (poleward of ``polar_lat`` on a global
        grid, or a fit that was not a proper extremum).
    criterion, mask : str
        The criterion with its parameters, and the masks applied (surface
        height threshold or the note that the run has no surface height,
        distance from the domain edge).
    j, i : float
        Fractional grid indices of the centre (along Y and X).
    track : int or None
        Track id, shared over the valid times of one run and member.
    tendency_hpa_3h : float or None
        Central pressure tendency [hPa per 3 h], centred difference where
        the track has a time either side.
    deepening_hpa_24h : float or None
        Fall of central pressure [hPa per 24 h] (positive: a low deepens, a
        high weakens), over a window centred on the time, up to 24 h long.
    deepening_window_h : float or None
        Length of the window the deepening was measured over [h].
    bergerons : float or None
        Deepening in bergerons (Sanders & Gyakum 1980): lows poleward of
        ``bergeron_min_lat`` only.
    explosive : bool or None
        ``bergerons >= 1``.
    speed_ms : float or None
        Speed of the centre along the track [m s-1], centred where possible.
    heading_deg : float or None
        Direction it moves toward, clockwise from north [degrees].
    """

    kind: str
    lon: float
    lat: float
    pressure_hpa: float
    depth_hpa: float
    closed_isobars: int
    grid_pressure_hpa: float
    grid_km: float
    valid_time: np.datetime64 | None = None
    member: int | None = None
    refined: bool = True
    criterion: str = ""
    mask: str = ""
    j: float = math.nan
    i: float = math.nan
    track: int | None = None
    tendency_hpa_3h: float | None = None
    deepening_hpa_24h: float | None = None
    deepening_window_h: float | None = None
    bergerons: float | None = None
    explosive: bool | None = None
    speed_ms: float | None = None
    heading_deg: float | None = None

    def replace(self, **changes):
        """Return a copy with some fields changed (records are never written into)."""
        return dataclasses.replace(self, **changes)

    @property
    def props(self):
        """Flat mapping for a GeoJSON Point feature (fresh dict; None where not known)."""
        return {
            "kind": self.kind,
            "pressure_hpa": json_float(self.pressure_hpa, 2),
            "depth_hpa": json_float(self.depth_hpa, 2),
            "closed_isobars": int(self.closed_isobars),
            "valid_time": None if self.valid_time is None else iso_seconds(self.valid_time),
            "member": None if self.member is None else int(self.member),
            "track": None if self.track is None else int(self.track),
            "tendency_hpa_3h": json_float(self.tendency_hpa_3h, 2),
            "deepening_hpa_24h": json_float(self.deepening_hpa_24h, 2),
            "bergerons": json_float(self.bergerons, 2),
            "explosive": None if self.explosive is None else bool(self.explosive),
            "speed_ms": json_float(self.speed_ms, 1),
            "heading_deg": json_float(self.heading_deg, 0),
            "grid_km": json_float(self.grid_km, 1),
            "criterion": self.criterion,
            "mask": self.mask,
        }


@dataclass(frozen=True)
class CentreTrack:
    """One low or high followed over the valid times of a run (one member).

    Attributes
    ----------
    track : int
        Track id (also in every centre's ``track``).
    kind : str
        ``"low"`` or ``"high"``.
    member : int or None
        Ensemble member.
    centres : tuple of Centre
        The centre at each valid time, in time order, with the tracked
        quantities filled in.
    """

    track: int
    kind: str
    member: int | None
    centres: tuple

    @property
    def valid_times(self):
        """Valid times (datetime64[ns])."""
        return np.array([c.valid_time for c in self.centres], dtype="datetime64[ns]")

    @property
    def lon(self):
        """Longitudes [degrees, -180..180]."""
        return np.array([c.lon for c in self.centres], dtype=float)

    @property
    def lat(self):
        """Latitudes [degrees]."""
        return np.array([c.lat for c in self.centres], dtype=float)

    @property
    def pressure_hpa(self):
        """Central pressures [hPa]."""
        return np.array([c.pressure_hpa for c in self.centres], dtype=float)

    @property
    def max_bergerons(self):
        """Largest deepening in bergerons along the track, or None."""
        b = [c.bergerons for c in self.centres if c.bergerons is not None]
        return max(b) if b else None

    @property
    def explosive(self):
        """True when the centre deepened explosively at some time of the track."""
        return any(bool(c.explosive) for c in self.centres)


# --------------------------------------------------------------------------- explosive deepening
def explosive_threshold_hpa_24h(lat):
    r"""Deepening rate of one bergeron at a latitude [hPa per 24 h].

    Parameters
    ----------
    lat : float or array_like
        Latitude [degrees]; either hemisphere (its absolute value is used).

    Returns
    -------
    float or ndarray
        Threshold [hPa per 24 h]; 0 at the equator.

    Notes
    -----
    Sanders & Gyakum (1980), from memory: a low deepens explosively when its
    central pressure falls at least 24 hPa in 24 h at 60 degrees, scaled by
    the latitude's sine (geostrophically equivalent rate):

    .. math:: \Delta p_{crit} = 24\,\mathrm{hPa}\,\frac{\sin|\varphi|}{\sin 60^\circ}

    Examples
    --------
    >>> round(explosive_threshold_hpa_24h(60.0), 6), round(explosive_threshold_hpa_24h(-40.0), 2)
    (24.0, 17.81)
    """
    s = np.sin(np.deg2rad(np.abs(np.asarray(lat, dtype=float))))
    out = BERGERON_HPA_24H * (s / np.sin(np.deg2rad(BERGERON_LAT_DEG)))
    return float(out) if np.ndim(out) == 0 else out


def bergerons(deepening_hpa_24h, lat):
    """Deepening rate in bergerons (Sanders & Gyakum 1980, from memory).

    Parameters
    ----------
    deepening_hpa_24h : float or array_like
        Fall of central pressure [hPa per 24 h], positive when deepening.
    lat : float or array_like
        Latitude of the low [degrees]; either hemisphere.

    Returns
    -------
    float or ndarray
        Deepening / (24 hPa sin|lat| / sin 60) [1]; 1 or more is explosive.
        NaN at the equator.

    Examples
    --------
    >>> bergerons(24.0, 60.0), bergerons(24.0, -60.0)
    (1.0, 1.0)
    """
    thr = np.asarray(explosive_threshold_hpa_24h(lat), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(thr > 0, np.asarray(deepening_hpa_24h, float) / thr, np.nan)
    return float(out) if np.ndim(out) == 0 else out


# --------------------------------------------------------------------------- finding
def _grid_lat_lon(grid):
    """2-D latitude and longitude of every grid point [degrees]."""
    if grid.kind == "latlon":
        lat = np.broadcast_to(np.asarray(grid.lat, float)[:, None], tuple(grid.shape))
        lon = np.broadcast_to(np.asarray(grid.lon, float)[None, :], tuple(grid.shape))
        return lat, lon
    return np.asarray(grid.lat, float), np.asarray(grid.lon, float)


def _polar_rows(grid):
    """(south, north): whether the first/last row of a global grid reaches a pole."""
    if grid.kind != "latlon" or not grid.periodic:
        return False, False
    lat = np.asarray(grid.lat, float)
    step = float(np.median(np.abs(np.diff(lat))))
    near = [abs(abs(lat[k]) - 90.0) < 1.5 * step for k in (0, -1)]
    return bool(near[0]), bool(near[1])


def _edge_distance_km(grid):
    """Distance of every point from the nearest open edge of the grid [km] (inf: none)."""
    ny, nx = grid.shape
    dx = np.abs(np.broadcast_to(np.asarray(grid.dx, float), (ny, nx))) / 1000.0
    dy = np.abs(np.broadcast_to(np.asarray(grid.dy, float), (ny, nx))) / 1000.0
    jj, ii = np.mgrid[0:ny, 0:nx]
    dist = np.full((ny, nx), np.inf)
    south_pole, north_pole = _polar_rows(grid)
    if not south_pole:
        dist = np.minimum(dist, jj * dy)
    if not north_pole:
        dist = np.minimum(dist, (ny - 1 - jj) * dy)
    if not grid.periodic:
        dist = np.minimum(dist, ii * dx)
        dist = np.minimum(dist, (nx - 1 - ii) * dx)
    return dist


def _as_field(msl, grid, what="mslp"):
    """Float (Y, X) array of a pressure field [Pa], checked."""
    arr = np.asarray(getattr(msl, "values", msl), dtype=float)
    if arr.ndim != 2 or arr.shape != tuple(grid.shape):
        raise InputError(
            f"{what}: field of shape {arr.shape}; expected one (Y, X) field on the grid "
            f"{tuple(grid.shape)} (select one time and member first)"
        )
    finite = arr[np.isfinite(arr)]
    if finite.size == 0:
        raise InputError(f"{what}: field has no finite value; expected pressures in Pa")
    med = float(np.median(finite))
    if not 80000.0 <= med <= 110000.0:
        raise InputError(
            f"{what}: median value {med:g}; expected mean-sea-level pressure in Pa "
            "(about 101325; the canonical 'mslp' of kit.open_run)"
        )
    return arr


class _Finder:
    """Centre search on one grid: the candidate, window and closed-contour steps."""

    def __init__(self, grid, settings):
        self.g = grid
        self.s = settings
        self.lat2, self.lon2 = _grid_lat_lon(grid)
        ny, nx = grid.shape
        dx = np.abs(np.broadcast_to(np.asarray(grid.dx, float), (ny, nx)))
        dy = np.abs(np.broadcast_to(np.asarray(grid.dy, float), (ny, nx)))
        self.dx_km, self.dy_km = dx / 1000.0, dy / 1000.0
        self.edge_km = _edge_distance_km(grid)
        self.polar = _polar_rows(grid)
        self.global_grid = grid.kind == "latlon" and grid.periodic
        self.mode = ["nearest", "wrap"] if grid.periodic else "nearest"

    # ------------------------------------------------------------------ candidates
    def candidates(self, p, allowed):
        """(j, i) of 3 x 3 minima of ``p`` (one per plateau), where allowed."""
        finite = np.isfinite(p)
        work = np.where(finite, p, np.inf)
        low = (work == ndimage.minimum_filter(work, size=3, mode=self.mode)) & finite
        all_finite = ndimage.minimum_filter(finite.astype(np.uint8), size=3, mode=self.mode)
        low &= all_finite.astype(bool) & allowed
        lab, n = ndimage.label(low, structure=_EIGHT)
        if n == 0:
            return []
        first = ndimage.minimum_position(np.arange(lab.size).reshape(lab.shape), lab,
                                         np.arange(1, n + 1))
        out = [(int(j), int(i)) for j, i in first]
        out.sort(key=lambda ji: p[ji])
        return out

    # ------------------------------------------------------------------ window
    def window(self, j0, i0):
        """Rows, columns and masks of the neighbourhood the closed-contour test needs."""
        g, s = self.g, self.s
        ny, nx = g.shape
        radius = s.search_radius_km
        if g.kind == "latlon":
            lat = np.asarray(g.lat, float)
            dlat = float(np.median(np.abs(np.diff(lat))))
            dlon = float(np.median(np.abs(np.diff(np.asarray(g.lon, float)))))
            rdeg = math.degrees(radius / EARTH_RADIUS_KM)
            rows = np.flatnonzero(np.abs(lat - lat[j0]) <= rdeg + 1.5 * dlat)
            rows = np.arange(rows.min(), rows.max() + 1)
            sin_d = math.sin(min(radius / EARTH_RADIUS_KM, math.pi / 2))
            cos0 = math.cos(math.radians(lat[j0]))
            reach_pole = (self.polar[0] and rows[0] == 0) or (self.polar[1] and rows[-1] == ny - 1)
            if sin_d < cos0 and not reach_pole:
                half = math.degrees(math.asin(sin_d / cos0)) + 1.5 * dlon
                n = int(math.ceil(half / dlon)) + 1
            else:
                n = nx
            if g.periodic and 2 * n + 1 >= nx:
                cols = np.arange(nx)
                ring = True
            else:
                cols = np.arange(i0 - n, i0 + n + 1)
                cols = cols % nx if g.periodic else cols[(cols >= 0) & (cols < nx)]
                ring = False
        else:
            # the shortest grid length anywhere: map factors vary across the window
            step = float(min(self.dx_km.min(), self.dy_km.min()))
            n = int(math.ceil(1.05 * radius / step)) + 1
            rows = np.arange(max(j0 - n, 0), min(j0 + n, ny - 1) + 1)
            cols = np.arange(max(i0 - n, 0), min(i0 + n, nx - 1) + 1)
            ring = False
        sub_lat = self.lat2[np.ix_(rows, cols)]
        sub_lon = self.lon2[np.ix_(rows, cols)]
        dist = great_circle_km(self.lon2[j0, i0], self.lat2[j0, i0], sub_lon, sub_lat)
        leak = dist > radius
        # open edges of the grid: a region reaching one is not closed on this grid
        if rows[0] == 0 and not self.polar[0]:
            leak[0, :] = True
        if rows[-1] == ny - 1 and not self.polar[1]:
            leak[-1, :] = True
        if not g.periodic:
            leak[:, cols == 0] = True
            leak[:, cols == nx - 1] = True
        # edges of the window inside the grid lie beyond the radius by construction;
        # marked anyway so a region can never run out of the window unseen
        if rows[0] != 0:
            leak[0, :] = True
        if rows[-1] != ny - 1:
            leak[-1, :] = True
        if not ring:
            if cols[0] != 0 or g.periodic:
                leak[:, 0] = True
            if cols[-1] != nx - 1 or g.periodic:
                leak[:, -1] = True
        links = self._links(rows, cols, ring)
        seed = (int(np.flatnonzero(rows == j0)[0]), int(np.flatnonzero(cols == i0)[0]))
        return rows, cols, leak, links, seed

    def _links(self, rows, cols, ring):
        """Pairs of window cells that touch across the periodic seam or a pole."""
        pairs = []
        if not ring:
            return pairs
        nr, nc = len(rows), len(cols)
        r = np.arange(nr)
        for dr in (-1, 0, 1):
            ok = (r + dr >= 0) & (r + dr < nr)
            pairs.append((r[ok], np.zeros(ok.sum(), int), r[ok] + dr, np.full(ok.sum(), nc - 1)))
        ny = self.g.shape[0]
        half = nc // 2
        k = np.arange(nc)
        if self.polar[0] and rows[0] == 0 and nc % 2 == 0:
            pairs.append((np.zeros(nc, int), k, np.zeros(nc, int), (k + half) % nc))
        if self.polar[1] and rows[-1] == ny - 1 and nc % 2 == 0:
            last = np.full(nc, nr - 1)
            pairs.append((last, k, last, (k + half) % nc))
        return pairs

    # ------------------------------------------------------------------ closed contour
    @staticmethod
    def _component(inside, seed, links):
        """Boolean mask of the 8-connected region of ``inside`` holding ``seed``."""
        lab, n = ndimage.label(inside, structure=_EIGHT)
        own = lab[seed]
        if own == 0:
            return np.zeros(inside.shape, dtype=bool)
        if links:
            a = np.concatenate([lab[r1, c1] for r1, c1, _, _ in links])
            b = np.concatenate([lab[r2, c2] for _, _, r2, c2 in links])
            keep = (a > 0) & (b > 0)
            if keep.any():
                graph = coo_matrix(
                    (np.ones(int(keep.sum())), (a[keep], b[keep])), shape=(n + 1, n + 1)
                )
                _, comp = connected_components(graph, directed=False)
                return comp[lab] == comp[own]
        return lab == own

    def closed(self, sub, nan, level, seed, leak, links, deeper, strict):
        """Tell whether the region below ``level`` around ``seed`` is closed in the window."""
        inside = (sub < level) if strict else (sub <= level)
        inside |= nan
        comp = self._component(inside, seed, links)
        return not (comp & (leak | nan | deeper)).any()

    def depth(self, p, j0, i0, high_ground):
        """Closed-contour depth of the minimum at (j0, i0) [field units], or None."""
        rows, cols, leak, links, seed = self.window(j0, i0)
        sub = p[np.ix_(rows, cols)]
        nan = ~np.isfinite(sub)
        pc = p[j0, i0]
        # a lower point inside the isobar makes it the deeper centre's, not this one's;
        # reduced pressure under masked high ground vetoes nothing
        deeper = (sub < pc) & ~high_ground[np.ix_(rows, cols)]
        ci = self.s.contour_interval_hpa * _PA_PER_HPA
        if not self.closed(sub, nan, pc + ci, seed, leak, links, deeper, strict=True):
            return None
        # spill level: the lowest value whose inclusion makes the region leak
        levels = np.unique(sub[~nan & (sub >= pc + ci)])
        if levels.size == 0:
            return ci
        lo, hi = 0, levels.size - 1

        def closed_at(k):
            return self.closed(sub, nan, levels[k], seed, leak, links, deeper, strict=False)

        if closed_at(hi):
            return float(levels[hi] - pc)
        while lo < hi:
            mid = (lo + hi) // 2
            if closed_at(mid):
                lo = mid + 1
            else:
                hi = mid
        return float(levels[lo] - pc)

    # ------------------------------------------------------------------ refinement
    def refine(self, p, j0, i0):
        """Fractional offset (dj, di) and value of the quadratic's extremum, or None."""
        g = self.g
        ny, nx = g.shape
        if j0 == 0 or j0 == ny - 1:
            return None
        if self.global_grid and abs(self.lat2[j0, i0]) > self.s.polar_lat:
            return None
        cols = np.array([i0 - 1, i0, i0 + 1])
        if g.periodic:
            cols %= nx
        elif i0 == 0 or i0 == nx - 1:
            return None
        v = p[np.ix_([j0 - 1, j0, j0 + 1], cols)]
        if not np.all(np.isfinite(v)):
            return None
        # second-order Taylor polynomial from centred differences over the 3 x 3 points
        bx = (v[1, 2] - v[1, 0]) / 2.0
        by = (v[2, 1] - v[0, 1]) / 2.0
        hxx = v[1, 2] - 2.0 * v[1, 1] + v[1, 0]
        hyy = v[2, 1] - 2.0 * v[1, 1] + v[0, 1]
        hxy = (v[2, 2] - v[2, 0] - v[0, 2] + v[0, 0]) / 4.0
        det = hxx * hyy - hxy * hxy
        if not (hxx > 0 and det > 0):  # a minimum needs a positive definite Hessian
            return None
        di = -(hyy * bx - hxy * by) / det
        dj = -(hxx * by - hxy * bx) / det
        if abs(di) > 1.0 or abs(dj) > 1.0:
            return None
        value = v[1, 1] + 0.5 * (bx * di + by * dj)
        return dj, di, value

    def position(self, j0, i0, dj, di):
        """Longitude and latitude [degrees] of a fractional grid position."""
        g = self.g
        ny, nx = g.shape
        if g.kind == "latlon":
            lat_axis = np.asarray(g.lat, float)
            lat = float(np.interp(j0 + dj, np.arange(ny), lat_axis))
            lon_axis = np.asarray(g.lon, float)
            k = i0 + 1 if di >= 0 else i0 - 1
            step = (lon_axis[k % nx] - lon_axis[i0]) if (g.periodic or 0 <= k < nx) else 0.0
            step = (step + 180.0) % 360.0 - 180.0
            lon = lon_axis[i0] + abs(di) * step
        else:
            j1 = min(max(int(math.floor(j0 + dj)), 0), ny - 2)
            i1 = min(max(int(math.floor(i0 + di)), 0), nx - 2)
            fj, fi = j0 + dj - j1, i0 + di - i1
            la = self.lat2[j1:j1 + 2, i1:i1 + 2]
            lo = self.lon2[j1:j1 + 2, i1:i1 + 2]
            ref = self.lon2[j0, i0]
            lo = ref + (lo - ref + 180.0) % 360.0 - 180.0
            w = np.array([[(1 - fj) * (1 - fi), (1 - fj) * fi], [fj * (1 - fi), fj * fi]])
            lat, lon = float(np.sum(w * la)), float(np.sum(w * lo))
        if abs(lat) >= 90.0 - 1e-9:
            lon = 0.0
        return float((lon + 180.0) % 360.0 - 180.0), lat

    # ------------------------------------------------------------------ one field
    def find(self, p_pa, zsfc, valid_time, member):
        """Every centre of one field [Pa] as Centre records."""
        s = self.s
        allowed = self.edge_km >= max(s.edge_km, 0.0)
        edge_cells = np.maximum(self.dx_km, self.dy_km)
        allowed &= self.edge_km >= edge_cells  # never on the outermost row or column
        high_ground = np.zeros(self.g.shape, dtype=bool)
        if zsfc is not None:
            high_ground = np.nan_to_num(zsfc, nan=np.inf) > s.max_surface_m
            allowed &= ~high_ground
            mask = f"no centre over surface height > {s.max_surface_m:g} m (zsfc)"
        else:
            mask = "no surface height in the run: reduced pressure over high ground not masked"
        if not self.global_grid:
            mask += f"; none within {s.edge_km:g} km of the domain edge"
        criterion = s.criterion_text()
        out = []
        ci = s.contour_interval_hpa
        for kind in s.kinds:
            sign = 1.0 if kind == "low" else -1.0
            p = sign * p_pa
            for j0, i0 in self.candidates(p, allowed):
                d = self.depth(p, j0, i0, high_ground)
                if d is None:
                    continue
                fit = self.refine(p, j0, i0)
                if fit is None:
                    dj = di = 0.0
                    value = p[j0, i0]
                else:
                    dj, di, value = fit
                lon, lat = self.position(j0, i0, dj, di)
                depth_hpa = d / _PA_PER_HPA
                out.append(
                    Centre(
                        kind=kind,
                        lon=lon,
                        lat=lat,
                        pressure_hpa=float(sign * value / _PA_PER_HPA),
                        depth_hpa=float(depth_hpa),
                        closed_isobars=max(1, int(math.floor(depth_hpa / ci + 1e-9))),
                        grid_pressure_hpa=float(p_pa[j0, i0] / _PA_PER_HPA),
                        grid_km=float(math.sqrt(self.dx_km[j0, i0] * self.dy_km[j0, i0])),
                        valid_time=valid_time,
                        member=member,
                        refined=fit is not None,
                        criterion=criterion,
                        mask=mask,
                        j=float(j0 + dj),
                        i=float(i0 + di),
                    )
                )
        out.sort(key=lambda c: (KINDS.index(c.kind), c.pressure_hpa * (1 if c.kind == "low"
                                                                         else -1)))
        return out


def _scalar_coord(obj, name):
    """Value of a scalar coordinate of a DataArray, or None."""
    if isinstance(obj, (xr.DataArray, xr.Dataset)) and name in obj.coords:
        c = obj.coords[name]
        if c.ndim == 0:
            return c.values[()]
    return None


def _time_value(t):
    if t is None:
        return None
    try:
        return np.datetime64(t, "ns")
    except (TypeError, ValueError):
        raise InputError(
            f"centres: valid_time={t!r}; expected a datetime64 or an ISO time"
        ) from None


def find_centres(msl, ds=None, *, zsfc=None, valid_time=None, member=None, settings=None):
    r"""Lows and highs of one mean-sea-level pressure field.

    Parameters
    ----------
    msl : xarray.DataArray or ndarray (Y, X)
        Mean-sea-level pressure [Pa] at one valid time (and member), on the
        grid of ``ds``: a regular latitude/longitude grid (global periodic in
        0..360 or -180..180 longitudes, or regional) or a projected grid with
        2-D ``lat``/``lon``.
    ds : xarray.Dataset or xarray.DataArray, optional
        Carries the grid (canonical Dataset of :func:`kit.open_run`); default
        ``msl`` itself. When a Dataset holds ``zsfc`` [m] and ``zsfc`` is
        not given, it is used for the high-ground mask.
    zsfc : xarray.DataArray or ndarray (Y, X), optional
        Model surface height [m].
    valid_time : datetime64 or str, optional
        Valid time; default the scalar ``time`` coordinate of ``msl``.
    member : int, optional
        Ensemble member; default the scalar ``member`` coordinate of ``msl``.
    settings : CentreSettings, optional
        Parameters; default :class:`CentreSettings()`.

    Returns
    -------
    list of Centre
        Lows (deepest first), then highs (strongest first).

    Notes
    -----
    Closed-contour criterion after Wernli & Schwierz (2006), from memory for
    its details; the contour interval and radius are ours
    (:class:`CentreSettings`):

    1. candidates are the minima (lows) and maxima (highs) of the 3 x 3
       neighbourhood (wrapping round a periodic longitude axis), one per
       plateau, with every neighbour defined;
    2. a candidate is a centre when the 8-connected region where
       :math:`p < p_c + \Delta p` (:math:`\Delta p` the contour interval) that
       holds it lies wholly within ``search_radius_km`` of it, touches no open
       grid edge and no missing value, and holds no lower point (points
       under masked high ground excepted): the isobar
       :math:`p_c + \Delta p` is then closed round it and it is the deepest
       point inside (two minima in one closed isobar are one centre, the
       deeper). Highs: the same with the sign of :math:`p` turned;
    3. ``depth_hpa`` is the pressure at which that region first leaks (beyond
       the radius, off the grid or to a deeper point) minus :math:`p_c`: the
       outermost closed isobar within the radius lies just below it;
    4. the position and pressure are the extremum of the second-order Taylor
       polynomial of :math:`p` in grid indices, from centred differences over
       the 3 x 3 points (cross term from the corners):

       .. math:: \delta = -H^{-1}\nabla p,\qquad
                 p_{centre} = p_c + \tfrac12 \nabla p\cdot\delta

       kept only when :math:`H` is definite and :math:`|\delta| \le 1`;
       otherwise the grid point and its value are kept (``refined`` False).

    Masks (stated in each record's ``mask``): no centre where ``zsfc`` >
    ``max_surface_m`` (reduced pressure under high ground; common practice,
    no source), none within ``edge_km`` (at least one grid length) of the
    edge of a limited-area grid. On a global grid, the rows next to a pole
    are joined across it (and the seam across the periodic longitude) in the
    closed-contour test, so a centre poleward of ``polar_lat`` counts only
    when closed there, as everywhere; its position is the grid point (the
    quadratic in grid indices degenerates where meridians converge) and a
    centre on a pole row gets longitude 0. The isobars round a centre may
    pass over high ground: only the centre itself is masked.

    The Laplacian criterion of Murray & Simmonds (1991) is the alternative
    named in the issue; it is not implemented here.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": np.arange(30.0, 70.5, 0.5),
    ...                         "lon": np.arange(-40.0, 40.5, 0.5)})
    >>> d = great_circle_km(0.0, 50.0, ds.lon.values[None, :], ds.lat.values[:, None])
    >>> p = 101000.0 - 2000.0 * np.exp(-0.5 * (d / 400.0) ** 2)
    >>> [(c.kind, round(c.lon, 2), round(c.lat, 2), round(c.pressure_hpa, 2))
    ...  for c in find_centres(p, ds)]
    [('low', 0.0, 50.0, 990.0)]
    """
    settings = CentreSettings() if settings is None else settings
    if not isinstance(settings, CentreSettings):
        raise InputError(
            f"centres: settings of type {type(settings).__name__}; expected CentreSettings"
        )
    holder = msl if ds is None else ds
    if not isinstance(holder, (xr.Dataset, xr.DataArray)):
        raise InputError(
            "centres: no grid; expected msl as a DataArray with lat/lon coordinates, "
            "or ds (the canonical Dataset) beside a numpy field"
        )
    grid = grid_of(holder)
    p = _as_field(msl, grid)
    if zsfc is None and isinstance(ds, xr.Dataset) and "zsfc" in ds:
        zs = ds["zsfc"]
        t = valid_time if valid_time is not None else _scalar_coord(msl, "time")
        if "time" in zs.dims:
            zs = zs.sel(time=t) if t is not None else zs.isel(time=0)
        if "member" in zs.dims:
            zs = zs.isel(member=0)
        zsfc = zs
    zs_arr = None
    if zsfc is not None:
        zs_arr = np.asarray(getattr(zsfc, "values", zsfc), dtype=float)
        if zs_arr.shape != tuple(grid.shape):
            raise InputError(
                f"centres: zsfc of shape {zs_arr.shape}; expected the surface height [m] "
                f"on the grid {tuple(grid.shape)}"
            )
    if valid_time is None:
        valid_time = _scalar_coord(msl, "time")
    if member is None:
        m = _scalar_coord(msl, "member")
        member = None if m is None else int(m)
    return _Finder(grid, settings).find(p, zs_arr, _time_value(valid_time), member)


def find_run_centres(ds, *, settings=None):
    """Centres at every valid time (and member) of a run.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical Dataset with ``mslp`` [Pa] (dims ``[member,] time, Y, X``)
        and optionally ``zsfc`` [m].
    settings : CentreSettings, optional
        Parameters of :func:`find_centres`.

    Returns
    -------
    list of Centre
        In the order member, time, then as :func:`find_centres` gives them.
    """
    settings = CentreSettings() if settings is None else settings
    if not isinstance(ds, xr.Dataset) or "mslp" not in ds:
        raise InputError(
            "centres: the run has no 'mslp'; expected mean-sea-level pressure "
            "(air_pressure_at_mean_sea_level) in the canonical Dataset"
        )
    grid = grid_of(ds)
    finder = _Finder(grid, settings)
    msl = ds["mslp"]
    members = list(msl["member"].values) if "member" in msl.dims else [None]
    times = list(msl["time"].values) if "time" in msl.dims else [None]
    zs = ds["zsfc"] if "zsfc" in ds else None
    scalar_member = _scalar_coord(msl, "member")
    out = []
    for m in members:
        for k, t in enumerate(times):
            sel = {}
            if m is not None:
                sel["member"] = members.index(m)
            if t is not None:
                sel["time"] = k
            field = _as_field(msl.isel(sel), grid)
            z = None
            if zs is not None:
                zsel = {d: sel[d] for d in sel if d in zs.dims}
                zsub = zs.isel(zsel)
                if "member" in zsub.dims:
                    zsub = zsub.isel(member=0)
                if "time" in zsub.dims:
                    zsub = zsub.isel(time=0)
                z = np.asarray(zsub.values, dtype=float)
            if t is None:
                t = _scalar_coord(msl, "time")
            mem = m if m is not None else scalar_member
            out.extend(
                finder.find(field, z, _time_value(t), None if mem is None else int(mem))
            )
    return out


# --------------------------------------------------------------------------- tracking
def _hours(times):
    t = np.asarray(times, dtype="datetime64[ns]")
    return (t - t[0]).astype("timedelta64[ns]").astype(np.float64) / 3.6e12


def _window_rate(t_h, values, k, half_h):
    """Rate of change per hour at index ``k``, over a window centred on it.

    The window is ``2 * half_h`` long where the series reaches that far either
    side (values between times linearly interpolated), shrunk symmetrically
    near the ends; at an end of the series, one-sided over up to ``2 * half_h``.
    Returns (rate per hour, window length [h]) or (None, None).
    """
    if len(t_h) < 2:
        return None, None
    tk = t_h[k]
    h = min(half_h, tk - t_h[0], t_h[-1] - tk)
    if h > 1e-9:
        a, b = tk - h, tk + h
    elif k == 0:
        a, b = tk, min(tk + 2 * half_h, t_h[-1])
    else:
        a, b = max(tk - 2 * half_h, t_h[0]), tk
    if b - a <= 1e-9:
        return None, None
    va, vb = np.interp([a, b], t_h, values)
    return float((vb - va) / (b - a)), float(b - a)


def _motion(track, k, t_h):
    """Centred speed [m s-1] and heading [degrees] at step ``k`` of a track."""
    n = len(track)
    if n < 2:
        return None, None
    a, b = (max(k - 1, 0), min(k + 1, n - 1))
    ca, cb = track[a], track[b]
    dt_s = (t_h[b] - t_h[a]) * _S_PER_H
    dist_m = great_circle_km(ca.lon, ca.lat, cb.lon, cb.lat) * 1000.0
    speed = dist_m / dt_s
    heading = bearing_deg(ca.lon, ca.lat, cb.lon, cb.lat) if dist_m > 0 else None
    return float(speed), heading


def _link(centres, settings):
    """Greedy nearest-neighbour matching of one member's centres of one kind."""
    times = sorted({c.valid_time for c in centres})
    by_time = {t: [c for c in centres if c.valid_time == t] for t in times}
    tracks = []  # lists of centres
    active = []  # (track index, first guess lon, lat)
    for k, t in enumerate(times):
        now = by_time[t]
        used_c, used_t = set(), set()
        if k > 0 and active:
            dt_h = float((np.datetime64(t, "ns") - np.datetime64(times[k - 1], "ns"))
                         / np.timedelta64(1, "h"))
            reach_km = settings.max_speed_ms * dt_h * _S_PER_H / 1000.0
            pairs = []
            for a, (ti, glon, glat) in enumerate(active):
                last = tracks[ti][-1]
                for b, c in enumerate(now):
                    moved = great_circle_km(last.lon, last.lat, c.lon, c.lat)
                    if moved <= reach_km:
                        pairs.append((great_circle_km(glon, glat, c.lon, c.lat), a, b))
            pairs.sort()
            for _, a, b in pairs:
                if a in used_t or b in used_c:
                    continue
                used_t.add(a)
                used_c.add(b)
                tracks[active[a][0]].append(now[b])
        continued = {active[a][0] for a in used_t}
        for b, c in enumerate(now):
            if b not in used_c:
                tracks.append([c])
                continued.add(len(tracks) - 1)
        # first guesses for the next time: persistence, or the last motion carried on
        active = []
        nxt = times[k + 1] if k + 1 < len(times) else None
        for ti in sorted(continued):
            tr = tracks[ti]
            last = tr[-1]
            glon, glat = last.lon, last.lat
            if len(tr) >= 2 and nxt is not None:
                prev = tr[-2]
                span = float((np.datetime64(last.valid_time, "ns")
                              - np.datetime64(prev.valid_time, "ns")) / np.timedelta64(1, "h"))
                ahead = float((np.datetime64(nxt, "ns") - np.datetime64(last.valid_time, "ns"))
                              / np.timedelta64(1, "h"))
                e, n = local_east_north_km(last.lon, last.lat, prev.lon, prev.lat)
                f = ahead / span if span > 0 else 0.0
                glon, glat = local_to_lonlat(e * f, n * f, last.lon, last.lat)
            active.append((ti, float(glon), float(glat)))
    return tracks


def track_centres(centres, *, settings=None):
    r"""Follow lows and highs over the valid times of one run, per member.

    Parameters
    ----------
    centres : iterable of Centre, or xarray.Dataset
        Centres of several valid times (:func:`find_run_centres`), or the
        canonical Dataset of a run (its centres are found first).
    settings : CentreSettings, optional
        ``max_speed_ms`` and ``bergeron_min_lat`` are used here.

    Returns
    -------
    list of CentreTrack
        Ordered by member, kind, first time and first longitude; track ids
        count from 1. Every centre appears in exactly one track.

    Notes
    -----
    Per member and kind, valid times in order. The first guess of a track at
    the next time is its last position moved on by its last displacement
    (scaled to the time step), or the last position itself for a track of one
    point. Pairs of (track, centre) are allowed when the centre lies within
    ``max_speed_ms`` times the step of the track's last position (40 m/s by
    default: common practice, no source) and are taken greedily, nearest
    to the first guess first; a centre left over starts a new track, a track
    left over ends (no gaps are bridged).

    Along each track, at time :math:`t_k` with central pressure :math:`p`:

    - ``tendency_hpa_3h`` = 3 h :math:`\times\, dp/dt`, centred difference
      over the neighbouring times (one-sided at the ends);
    - ``deepening_hpa_24h`` = :math:`-(p(t_k + h) - p(t_k - h)) \\cdot 24 / 2h`
      with :math:`h` = 12 h where the track reaches that far either side
      (linear between times), shrunk symmetrically near its ends, and
      one-sided at an end (``deepening_window_h`` says how long);
    - ``bergerons`` = deepening / (24 hPa sin|lat| / sin 60 deg) and
      ``explosive`` = bergerons >= 1 (Sanders & Gyakum 1980, from memory),
      for lows poleward of ``bergeron_min_lat``; None for highs;
    - ``speed_ms`` and ``heading_deg`` from the great circle between the
      neighbouring positions (centred where possible).
    """
    settings = CentreSettings() if settings is None else settings
    if isinstance(centres, xr.Dataset):
        centres = find_run_centres(centres, settings=settings)
    centres = list(centres)
    for c in centres:
        if not isinstance(c, Centre):
            raise InputError(
                f"track_centres: got {type(c).__name__}; expected Centre records "
                "(find_run_centres) or a canonical Dataset"
            )
        if c.valid_time is None:
            raise InputError(
                "track_centres: a centre without valid_time; expected centres of known "
                "valid times"
            )
    groups = {}
    for c in centres:
        key = (-1 if c.member is None else int(c.member), KINDS.index(c.kind))
        groups.setdefault(key, []).append(c)
    raw = []
    for key in sorted(groups):
        for tr in _link(groups[key], settings):
            raw.append((key, tr))
    raw.sort(key=lambda kt: (kt[0], np.datetime64(kt[1][0].valid_time, "ns"), kt[1][0].lon))
    out = []
    for tid, (_, tr) in enumerate(raw, start=1):
        t_h = _hours([c.valid_time for c in tr])
        p = np.array([c.pressure_hpa for c in tr], dtype=float)
        filled = []
        for k, c in enumerate(tr):
            tend, _ = _window_rate(t_h, p, k, 1.5)
            rate, window = _window_rate(t_h, p, k, 12.0)
            deepening = None if rate is None else -24.0 * rate
            berg = explosive = None
            if (c.kind == "low" and deepening is not None
                    and abs(c.lat) >= settings.bergeron_min_lat):
                berg = bergerons(deepening, c.lat)
                explosive = bool(berg >= 1.0)
            speed, heading = _motion(tr, k, t_h)
            filled.append(
                c.replace(
                    track=tid,
                    tendency_hpa_3h=None if tend is None else 3.0 * tend,
                    deepening_hpa_24h=deepening,
                    deepening_window_h=window,
                    bergerons=berg,
                    explosive=explosive,
                    speed_ms=speed,
                    heading_deg=heading,
                )
            )
        out.append(CentreTrack(track=tid, kind=tr[0].kind, member=tr[0].member,
                               centres=tuple(filled)))
    return out


# --------------------------------------------------------------------------- GeoJSON
def centres_geojson_features(centres):
    """GeoJSON (RFC 7946) Point features of centres.

    Parameters
    ----------
    centres : iterable of Centre or CentreTrack
        Centres, or tracks (all their centres).

    Returns
    -------
    list of dict
        ``{"type": "Feature", "geometry": {"type": "Point", "coordinates":
        [lon, lat]}, "properties": centre.props}`` with longitude in
        -180..180 [degrees]; no NaN (missing values are None).

    Examples
    --------
    >>> c = Centre("low", -20.0, 55.0, 978.4, 12.0, 6, 978.6, 27.8)
    >>> f = centres_geojson_features([c])[0]
    >>> f["geometry"], f["properties"]["kind"]
    ({'type': 'Point', 'coordinates': [-20.0, 55.0]}, 'low')
    """
    out = []
    for item in centres:
        items = item.centres if isinstance(item, CentreTrack) else (item,)
        for c in items:
            if not isinstance(c, Centre):
                raise InputError(
                    f"centres_geojson_features: got {type(c).__name__}; expected Centre "
                    "or CentreTrack records"
                )
            lon = (float(c.lon) + 180.0) % 360.0 - 180.0
            out.append(
                {
                    "type": "Feature",
                    "geometry": {
                        "type": "Point",
                        "coordinates": [json_float(lon, 4), json_float(c.lat, 4)],
                    },
                    "properties": c.props,
                }
            )
    return out


# --------------------------------------------------------------------------- fronts and lows
#: farthest a front's nearest vertex may lie from a low's centre for the front
#: to belong to it [km] (common practice, no source: the fronts of a mature
#: low meet at its triple point, within about 1000 km of the centre)
LOW_FRONT_KM = 1200.0


def assign_lows(fronts, tracks, max_km=LOW_FRONT_KM):
    """Give each front the low it belongs to (``Front.low_track``), where one does.

    A front belongs to the low of the same valid time and member whose
    centre is nearest any of its vertices, within ``max_km``; the deepest of
    equally near lows wins. Lows need two or more closed isobars, so a weak
    dimple in a trough does not claim the fronts.

    Parameters
    ----------
    fronts : iterable of kit.model.Front
    tracks : iterable of CentreTrack
        From :func:`track_centres`.
    max_km : float
        Largest distance from the centre to the front's nearest vertex [km].

    Returns
    -------
    list of kit.model.Front
        New fronts (``replace``), in the order given; ``low_track`` None where
        no low is near.
    """
    lows = {}
    for tr in tracks:
        if tr.kind != "low":
            continue
        for c in tr.centres:
            if c.closed_isobars >= 2:
                key = (np.datetime64(c.valid_time, "ns"), c.member)
                lows.setdefault(key, []).append((tr.track, c))
    out = []
    for fr in fronts:
        best = None
        for tid, c in lows.get((np.datetime64(fr.valid_time, "ns"), fr.member), ()):
            d = float(np.min(great_circle_km(np.asarray(fr.lon), np.asarray(fr.lat),
                                             c.lon, c.lat)))
            if d <= max_km and (best is None or (d, c.pressure_hpa) < best[:2]):
                best = (d, c.pressure_hpa, tid)
        low = None if best is None else int(best[2])
        out.append(fr if fr.low_track == low else fr.replace(low_track=low))
    return out
