"""Grid lengths, gradients, smoothing and distances on the sphere or a projection.

Two kinds of grid are understood, as the canonical Dataset defines them
(DEVELOPERS.md):

* **regular latitude/longitude**: 1-D ``lat`` (ascending or not) and ``lon``
  coordinates in degrees. Longitudes may run past 180 (contiguous across the
  dateline); a grid that closes the circle (``n * dlon == 360``) is treated
  as periodic in longitude, so gradients and smoothing wrap around.
* **projected**: ``ds.attrs["grid"] == "projected"``, 2-D ``lat``/``lon``,
  grid lengths ``ds.attrs["dx_m"]`` and ``["dy_m"]`` (or 1-D ``x``/``y``
  coordinates in metres). Map factors are ignored unless the Dataset carries
  a ``map_factor`` coordinate (or ``map_factor_x`` and ``map_factor_y``, as
  :func:`kit.io.runs.open_run` writes them) or one is passed; gradients are rotated from the
  grid axes to earth-relative east/north with the local grid convergence taken
  from the 2-D latitude/longitude.

Every distance, bearing and local plane of the kit is on the sphere of the mean
Earth radius :data:`kit.constants.EARTH_RADIUS_M`, and only here (great circles,
destinations, the azimuthal equidistant local plane, point sampling). Great-circle
distances on it differ from WGS84 geodesics by at most about 0.5 %
(tests/test_geometry.py, pyproj Geod as independent implementation).

All field functions work on the last two axes (``Y, X``) of a numpy array or an
xarray DataArray, broadcast over any leading axes (member, time, level), and
return the same kind they were given. Missing values (NaN) stay missing and do
not spread further than one grid length.
"""

import collections
import threading

import numpy as np
import xarray as xr
from scipy import fft as sp_fft
from scipy import ndimage
from scipy.spatial import cKDTree

from kit.constants import EARTH_RADIUS_KM, EARTH_RADIUS_M
from kit.errors import InputError

__all__ = [
    "grid_spacing",
    "grid_length_km",
    "is_periodic",
    "gradient",
    "smooth",
    "great_circle_km",
    "line_length_km",
    "destination",
    "bearing_deg",
    "direction_bearing_deg",
    "local_east_north_km",
    "local_to_lonlat",
    "PointSampler",
    "grid_extent_text",
    "vertex_weights_km",
]

_POLE_COS = 1e-6  # cos(lat) below this is treated as the pole: east derivative undefined


# --------------------------------------------------------------------------- grid description
class _Grid:
    """What the field functions need to know about a grid (private)."""

    __slots__ = (
        "kind",
        "lat",
        "lon",
        "dx",
        "dy",
        "periodic",
        "rot_cos",
        "rot_sin",
        "shape",
        "map_factor",
        "lat_rad",
        "lon_rad",
        "fx",
        "fy",
        "_length_m",
        "cache",
    )

    def __init__(self, ds, map_factor=None):
        if isinstance(ds, _Grid):
            for name in self.__slots__:
                setattr(self, name, getattr(ds, name))
            return
        self._length_m = None
        self.cache = {}
        if not isinstance(ds, (xr.Dataset, xr.DataArray)):
            raise InputError(
                f"grid: got {type(ds).__name__}; expected an xarray Dataset or DataArray "
                "with lat/lon coordinates"
            )
        for name in ("lat", "lon"):
            if name not in ds.coords and not (isinstance(ds, xr.Dataset) and name in ds):
                raise InputError(
                    f"grid: no '{name}' coordinate; expected the canonical Dataset "
                    "(lat/lon in degrees, see kit.io.runs.open_run)"
                )
        lat = np.asarray(ds["lat"].values, dtype=np.float64)
        lon = np.asarray(ds["lon"].values, dtype=np.float64)
        projected = ds.attrs.get("grid") == "projected" or lat.ndim == 2
        self.rot_cos = self.rot_sin = None
        self.map_factor = None
        if not projected:
            if lat.ndim != 1 or lon.ndim != 1 or lat.size < 2 or lon.size < 2:
                raise InputError(
                    f"grid: lat/lon have shapes {lat.shape}/{lon.shape}; expected 1-D "
                    "coordinates of at least 2 points, or a projected grid with 2-D lat/lon"
                )
            if not (np.all(np.isfinite(lat)) and np.all(np.isfinite(lon))):
                raise InputError("grid: lat/lon coordinates contain NaN; expected finite degrees")
            if np.any(np.abs(lat) > 90.0 + 1e-9):
                raise InputError(
                    f"grid: latitude {np.max(np.abs(lat)):.3f} out of range; "
                    "expected -90..90 degrees"
                )
            dlon = np.diff(lon)
            if not (np.all(dlon > 0) or np.all(dlon < 0)):
                raise InputError(
                    "grid: longitudes are not monotonic; expected a contiguous longitude "
                    "axis (0..360 data shifted so the dateline is continuous)"
                )
            dlat = np.diff(lat)
            if not (np.all(dlat > 0) or np.all(dlat < 0)):
                raise InputError(
                    "grid: latitudes are not strictly monotonic; expected a sorted axis"
                )
            self.kind = "latlon"
            self.lat, self.lon = lat, lon
            self.lat_rad = np.deg2rad(lat)
            self.lon_rad = np.deg2rad(lon)
            step = abs(dlon[0])
            self.periodic = bool(
                np.allclose(np.abs(dlon), step, rtol=1e-4, atol=1e-6)
                and abs(step * lon.size - 360.0) < 1e-3 * step
            )
            coslat = np.cos(self.lat_rad)
            dxr = _centred_spacing(self.lon_rad, self.periodic)
            dyr = _centred_spacing(self.lat_rad, False)
            self.dx = EARTH_RADIUS_M * np.abs(np.outer(coslat, dxr))
            self.dy = EARTH_RADIUS_M * np.abs(np.broadcast_to(dyr[:, None], self.dx.shape))
            self.shape = (lat.size, lon.size)
            # factors turning a two-step difference a[i+1] - a[i-1] into a
            # derivative [m-1]: 0.5 / (metres per index step); NaN on pole rows
            with np.errstate(divide="ignore", invalid="ignore"):
                inv_cos = np.where(np.abs(coslat) > _POLE_COS, 1.0 / coslat, np.nan)
            if np.allclose(dxr, dxr[0], rtol=1e-6, atol=0):
                self.fx = (0.5 / (EARTH_RADIUS_M * dxr[0]) * inv_cos)[:, None]
            else:
                self.fx = (
                    0.5 / (EARTH_RADIUS_M * np.outer(coslat, dxr)) * np.isfinite(inv_cos)[:, None]
                )
                self.fx[~np.isfinite(inv_cos)] = np.nan
            self.fy = (0.5 / (EARTH_RADIUS_M * dyr))[:, None]
        else:
            if lat.ndim != 2 or lon.shape != lat.shape:
                raise InputError(
                    f"grid: projected grid with lat/lon shapes {lat.shape}/{lon.shape}; "
                    "expected 2-D lat and lon of the same shape (y, x)"
                )
            dx_m = ds.attrs.get("dx_m")
            dy_m = ds.attrs.get("dy_m")
            if dx_m is None and "x" in ds.coords and ds["x"].size > 1:
                dx_m = float(np.mean(np.diff(ds["x"].values)))
            if dy_m is None and "y" in ds.coords and ds["y"].size > 1:
                dy_m = float(np.mean(np.diff(ds["y"].values)))
            try:
                dx_m, dy_m = float(dx_m), float(dy_m)
            except (TypeError, ValueError):
                raise InputError(
                    "grid: projected grid without grid lengths; expected attrs dx_m and dy_m "
                    "[m] or x/y coordinates in metres"
                ) from None
            if not (np.isfinite(dx_m) and np.isfinite(dy_m)) or dx_m == 0 or dy_m == 0:
                raise InputError(
                    f"grid: projected grid lengths dx_m={dx_m}, dy_m={dy_m}; "
                    "expected non-zero metres"
                )
            self.kind = "projected"
            self.lat, self.lon = lat, lon
            self.lat_rad = np.deg2rad(lat)
            self.lon_rad = np.deg2rad(lon)
            self.periodic = False
            self.shape = lat.shape
            mfx = mfy = None
            if map_factor is not None:
                mfx = mfy = np.asarray(map_factor, dtype=np.float64)
            elif "map_factor" in ds.coords or (isinstance(ds, xr.Dataset) and "map_factor" in ds):
                mfx = mfy = np.asarray(ds["map_factor"].values, dtype=np.float64)
            elif "map_factor_x" in ds.coords and "map_factor_y" in ds.coords:
                mfx = np.asarray(ds["map_factor_x"].values, dtype=np.float64)
                mfy = np.asarray(ds["map_factor_y"].values, dtype=np.float64)
            for mf in (mfx, mfy):
                if mf is not None and (
                    mf.shape not in ((), tuple(self.shape))
                    or not np.all(np.isfinite(mf) & (mf > 0))
                ):
                    raise InputError(
                        f"grid: map factor of shape {mf.shape} with non-positive or missing "
                        f"values; expected positive numbers on the grid {tuple(self.shape)}"
                    )
            self.map_factor = mfx
            mfx = 1.0 if mfx is None else mfx
            mfy = 1.0 if mfy is None else mfy
            # signed spacings: the sign of dx_m/dy_m says which way the axis runs
            self.dx = np.broadcast_to(dx_m / mfx, self.shape).astype(np.float64)
            self.dy = np.broadcast_to(dy_m / mfy, self.shape).astype(np.float64)
            self.fx = 0.5 / self.dx
            self.fy = 0.5 / self.dy
            if np.all(self.fx == self.fx.flat[0]) and np.all(self.fy == self.fy.flat[0]):
                self.fx, self.fy = float(self.fx.flat[0]), float(self.fy.flat[0])
            # local direction of the grid +x axis in earth east/north (grid convergence)
            lon_u = np.unwrap(self.lon_rad, axis=1)
            dlon_dx = _diff_axis(lon_u, axis=1, periodic=False)
            dlat_dx = _diff_axis(self.lat_rad, axis=1, periodic=False)
            ex = dlon_dx * np.cos(self.lat_rad) * np.sign(dx_m)
            ny_ = dlat_dx * np.sign(dx_m)
            norm = np.hypot(ex, ny_)
            with np.errstate(invalid="ignore", divide="ignore"):
                self.rot_cos = np.where(norm > 0, ex / norm, 1.0)
                self.rot_sin = np.where(norm > 0, ny_ / norm, 0.0)

    @property
    def length_m(self):
        """Typical grid length [m]: median of sqrt(dx dy) (|lat| < 60 on lat/lon grids)."""
        if self._length_m is None:
            if self.kind == "latlon":
                g = np.sqrt(np.abs(self.dx[:, 0]) * np.abs(self.dy[:, 0]))
                keep = (np.abs(self.lat) < 60.0) & np.isfinite(g) & (g > 0)
                g = g[keep] if keep.any() else g[np.isfinite(g) & (g > 0)]
            else:
                g = np.sqrt(np.abs(self.dx) * np.abs(self.dy)).ravel()
            self._length_m = float(np.median(g))
        return self._length_m


def _centred_spacing(coord, periodic):
    """Centred coordinate step (c[i+1] - c[i-1]) / 2, one-sided at open ends."""
    c = np.asarray(coord, dtype=np.float64)
    out = np.empty_like(c)
    if c.size == 1:
        out[:] = np.nan
        return out
    out[1:-1] = (c[2:] - c[:-2]) / 2.0
    if periodic:
        step = c[1] - c[0]
        out[0] = out[-1] = step
    else:
        out[0] = c[1] - c[0]
        out[-1] = c[-1] - c[-2]
    return out


def _diff_axis(a, axis, periodic):
    """Centred difference per index step along ``axis`` (one-sided at edges)."""
    a = np.moveaxis(a, axis, -1)
    out = np.empty_like(a)
    if periodic:
        out[..., 1:-1] = (a[..., 2:] - a[..., :-2]) / 2.0
        out[..., 0] = (a[..., 1] - a[..., -1]) / 2.0
        out[..., -1] = (a[..., 0] - a[..., -2]) / 2.0
    else:
        out[..., 1:-1] = (a[..., 2:] - a[..., :-2]) / 2.0
        out[..., 0] = a[..., 1] - a[..., 0]
        out[..., -1] = a[..., -1] - a[..., -2]
    return np.moveaxis(out, -1, axis)


_GRID_CACHE = collections.OrderedDict()
_GRID_LOCK = threading.Lock()


def _grid_key(ds):
    """Key telling grids apart by their coordinates (hashes of the values)."""
    try:
        parts = [ds.attrs.get("grid"), ds.attrs.get("dx_m"), ds.attrs.get("dy_m")]
        for name in ("lat", "lon", "x", "y", "map_factor", "map_factor_x", "map_factor_y"):
            present = name in ds.coords or (isinstance(ds, xr.Dataset) and name in ds.variables)
            if present:
                v = np.ascontiguousarray(ds[name].values)
                parts.append((name, v.shape, v.dtype.str, hash(v.tobytes())))
        return tuple(parts)
    except (TypeError, ValueError):
        return None


def grid_of(ds, map_factor=None):
    """Return the grid of ``ds`` (a _Grid), from a small cache of recent grids."""
    if isinstance(ds, _Grid):
        return ds
    key = (
        _grid_key(ds) if map_factor is None and isinstance(ds, (xr.Dataset, xr.DataArray)) else None
    )
    if key is not None:
        with _GRID_LOCK:
            g = _GRID_CACHE.get(key)
            if g is not None:
                _GRID_CACHE.move_to_end(key)
                return g
    g = _Grid(ds, map_factor)
    if key is not None:
        with _GRID_LOCK:
            _GRID_CACHE[key] = g
            while len(_GRID_CACHE) > 6:
                _GRID_CACHE.popitem(last=False)
    return g


def _values(field):
    """(ndarray float, wrap function) for a numpy array or DataArray."""
    if isinstance(field, xr.DataArray):
        arr = np.asarray(field.values)
        if not np.issubdtype(arr.dtype, np.floating):
            arr = arr.astype(np.float64)

        def wrap(a, name=None, units=None):
            out = field.copy(data=a)
            out.name = name
            out.attrs = {} if units is None else {"units": units}
            return out

        return arr, wrap
    arr = np.asarray(field)
    if not np.issubdtype(arr.dtype, np.floating):
        arr = arr.astype(np.float64)
    return arr, lambda a, name=None, units=None: a


def _check_shape(arr, grid, what):
    if arr.ndim < 2 or arr.shape[-2:] != tuple(grid.shape):
        raise InputError(
            f"{what}: field of shape {arr.shape} does not end in the grid shape "
            f"{tuple(grid.shape)}; expected (..., Y, X) on the Dataset's grid"
        )


# --------------------------------------------------------------------------- public: grid
def grid_spacing(ds, *, map_factor=None):
    """Physical grid lengths of a regular latitude/longitude or projected grid.

    Parameters
    ----------
    ds : xarray.Dataset or xarray.DataArray
        Canonical Dataset (or a field of it) carrying the grid coordinates.
    map_factor : array_like, optional
        Map scale factor m [1] of a projected grid (physical length =
        grid length / m); default: the Dataset's ``map_factor`` variable if
        there is one, else 1.

    Returns
    -------
    dx_m, dy_m : ndarray (Y, X)
        Centred grid lengths along the X and Y axes [m], positive. On a
        latitude/longitude grid dx = R cos(lat) dlon and dy = R dlat (both
        zero at a pole row).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": [0.0, 1.0, 2.0], "lon": [10.0, 11.0]})
    >>> dx, dy = grid_spacing(ds)
    >>> round(float(dy[1, 0]) / 1000, 1)
    111.2
    """
    g = grid_of(ds, map_factor)
    return np.abs(np.array(g.dx, dtype=np.float64)), np.abs(np.array(g.dy, dtype=np.float64))


def grid_length_km(ds):
    """Typical grid length X of the grid [km]: median of sqrt(dx dy) (|lat| < 60 on lat/lon grids).

    Parameters
    ----------
    ds : xarray.Dataset or xarray.DataArray
        Canonical Dataset.

    Returns
    -------
    float
        Grid length [km]; 1 degree of latitude is 111.2 km.
    """
    return grid_of(ds).length_m / 1000.0


def is_periodic(ds):
    """Tell whether a regular grid's longitudes close the full circle (gradients wrap)."""
    return grid_of(ds).periodic


# --------------------------------------------------------------------------- public: fields
def _diff2(a, axis, periodic, rows=None, out=None):
    """Two-step difference a[i+1] - a[i-1] along the last (-1) or second-last (-2) axis.

    At open edges and next to missing values the one-sided difference is
    used, doubled (so the same factor turns it into a derivative); NaN where
    the point itself is missing or both neighbours are. ``rows`` are the
    indices along the second-last axis where missing values can matter
    (None: there are none), so a field with a few NaN rows (poles) is cheap.
    """
    n = a.shape[axis]
    if out is None:
        out = np.empty(a.shape, dtype=a.dtype)
    if n < 2:
        out[...] = np.nan
        return out

    def at(sl):
        return (Ellipsis, sl) if axis == -1 else (Ellipsis, sl, slice(None))

    np.subtract(a[at(slice(2, None))], a[at(slice(None, -2))], out=out[at(slice(1, -1))])
    if periodic and n > 2:
        np.subtract(a[at(slice(1, 2))], a[at(slice(-1, None))], out=out[at(slice(0, 1))])
        np.subtract(a[at(slice(0, 1))], a[at(slice(-2, -1))], out=out[at(slice(-1, None))])
    else:
        out[at(0)] = 2.0 * (a[at(1)] - a[at(0)])
        out[at(-1)] = 2.0 * (a[at(-1)] - a[at(-2)])
    if rows is None or not len(rows):
        return out
    sub_a = a[..., rows, :]
    sub_out = out[..., rows, :]
    missing = np.isnan(sub_a)
    bad = np.isnan(sub_out) & ~missing
    if bad.any():
        # one-sided differences at the points next to a gap only
        idx = list(np.nonzero(bad))
        idx[-2] = rows[idx[-2]]
        idx = tuple(idx)
        ax = a.ndim + axis
        i = idx[ax]

        def neighbour(offset):
            j = i + offset
            if periodic:
                ok = np.ones(j.shape, dtype=bool)
                j = j % n
            else:
                ok = (j >= 0) & (j < n)
                j = np.clip(j, 0, n - 1)
            jj = list(idx)
            jj[ax] = j
            v = a[tuple(jj)].astype(a.dtype, copy=True)
            v[~ok] = np.nan
            return v

        centre = a[idx]
        fwd = 2.0 * (neighbour(1) - centre)
        bwd = 2.0 * (centre - neighbour(-1))
        out[idx] = np.where(np.isnan(fwd), bwd, fwd)
    if missing.any():
        sub_out = out[..., rows, :]
        sub_out[missing] = np.nan
        out[..., rows, :] = sub_out
    return out


def _nan_rows(arr):
    """Flag the rows (second-last axis) holding a NaN; None if there are none."""
    if not arr.size:
        return None
    ny = arr.shape[-2]
    row_any = np.isnan(arr).any(axis=-1).reshape(-1, ny).any(axis=0)
    if not row_any.any():
        return None
    return row_any


def gradient_np(arr, g, out=None):
    """Gradient of a float ndarray on a _Grid: (d_east, d_north) [m-1].

    ``out`` is an optional pair of buffers like ``arr`` for the result.
    """
    row_any = _nan_rows(arr)
    rows_x = rows_y = None
    if row_any is not None:
        rows_x = np.flatnonzero(row_any)
        near = row_any.copy()
        near[1:] |= row_any[:-1]
        near[:-1] |= row_any[1:]
        rows_y = np.flatnonzero(near)
    dt = arr.dtype
    bx, by = (None, None) if out is None else out
    gx = _diff2(arr, -1, g.periodic, rows_x, bx)
    gx *= np.asarray(g.fx, dtype=dt)
    gy = _diff2(arr, -2, False, rows_y, by)
    gy *= np.asarray(g.fy, dtype=dt)
    if g.kind == "latlon":
        return gx, gy
    c = g.rot_cos.astype(dt, copy=False)
    s = g.rot_sin.astype(dt, copy=False)
    # grid x axis points (c, s) in (east, north); y axis is (-s, c)
    east = gx * c - gy * s
    gy *= c
    gx *= s
    gy += gx  # north = gx s + gy c
    np.copyto(gx, east)
    return gx, gy


def gradient(field, ds, *, map_factor=None):
    r"""Horizontal gradient of a scalar field, earth-relative east and north.

    Parameters
    ----------
    field : ndarray or xarray.DataArray (..., Y, X)
        Scalar field [unit] on the grid of ``ds``.
    ds : xarray.Dataset or xarray.DataArray
        Canonical Dataset (or a field of it) carrying the grid.
    map_factor : array_like, optional
        Map factor of a projected grid; see :func:`grid_spacing`.

    Returns
    -------
    d_east, d_north : same kind as ``field``
        Components of grad(field) [unit m-1].

    Notes
    -----
    On the sphere (radius R, latitude phi, longitude lambda)

    .. math:: \partial_e f = \frac{1}{R\cos\phi}\frac{\partial f}{\partial\lambda},
              \quad \partial_n f = \frac{1}{R}\frac{\partial f}{\partial\phi}

    with centred differences (one-sided next to missing values and at open
    edges; wrapping around a periodic longitude axis). The east component is
    NaN on a pole row, where it is undefined. On a projected grid the
    derivatives along the grid axes are rotated to east/north by the local
    angle of the grid's x axis, found from the 2-D latitude/longitude.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": np.arange(-2.0, 3.0), "lon": np.arange(0.0, 5.0)})
    >>> f = np.broadcast_to(ds.lat.values[:, None] * 1.0, (5, 5))   # 1 unit per degree
    >>> de, dn = gradient(f, ds)
    >>> round(float(dn[2, 2]) * 111195, 3)
    1.0
    """
    g = grid_of(ds, map_factor)
    arr, wrap = _values(field)
    _check_shape(arr, g, "gradient")
    d_east, d_north = gradient_np(arr, g)
    units = None
    if isinstance(field, xr.DataArray) and "units" in field.attrs:
        units = f"({field.attrs['units']}) m-1"
    return wrap(d_east, "d_east", units), wrap(d_north, "d_north", units)


def _gauss_axis(a, sigma, axis, mode):
    if sigma < 0.05:
        return a
    return ndimage.gaussian_filter1d(a, sigma, axis=axis, mode=mode, truncate=3.5)


def _runs(rows):
    """Split sorted indices into runs of consecutive ones: list of slices."""
    if rows.size == 0:
        return []
    cut = np.flatnonzero(np.diff(rows) != 1) + 1
    return [slice(int(r[0]), int(r[-1]) + 1) for r in np.split(rows, cut)]


def _smooth_plan(g, scale_km, dtype):
    """Sigmas and (cached) filters of one grid and scale."""
    key = ("smooth", float(scale_km), np.dtype(dtype).str)
    plan = g.cache.get(key)
    if plan is not None:
        return plan
    scale_m = scale_km * 1000.0
    ny, nx = g.shape
    dy = np.abs(g.dy)
    sig_y = scale_m / float(np.median(dy[dy > 0]))
    wy = _gauss_axis(np.ones(ny), sig_y, -1, "constant").astype(dtype)
    dx_row = np.abs(g.dx)
    if g.kind == "latlon":
        dx_row = dx_row[:, 0]
        with np.errstate(divide="ignore"):
            sig_x = np.where(dx_row > 0, scale_m / np.maximum(dx_row, 1e-300), np.inf)
    else:
        sig_x = np.full(ny, scale_m / float(np.median(dx_row)))
    sig_x = np.minimum(sig_x, nx / 6.0)
    plan = {"sig_y": sig_y, "wy": wy[:, None]}
    if g.periodic:
        # Gaussian transfer function per row: the exact periodic kernel of any width
        k = np.fft.rfftfreq(nx)
        plan["transfer"] = np.exp(-2.0 * np.pi**2 * (sig_x[:, None] * k[None, :]) ** 2).astype(
            dtype
        )
    else:
        # rows whose sigmas differ by less than 2 % share one filter call
        key_x = np.round(np.log(np.maximum(sig_x, 1e-3)) / np.log(1.02)).astype(int)
        groups = []
        for kk in np.unique(key_x):
            rows = np.flatnonzero(key_x == kk)
            sg = float(np.mean(sig_x[rows]))
            wx = _gauss_axis(np.ones(nx), sg, -1, "constant").astype(dtype)
            groups.extend((sl, sg, wx) for sl in _runs(rows))
        plan["groups"] = groups
    if len(g.cache) > 8:
        g.cache.clear()
    g.cache[key] = plan
    return plan


def smooth_np(arr, g, scale_km, out=None, tmp=None, cbuf=None):
    """Smooth a float ndarray (..., Y, X) on a _Grid; optional work buffers.

    ``out`` receives the result (may not be ``arr``); ``tmp`` is a buffer
    like ``arr``; ``cbuf`` is accepted for compatibility and not used.
    """
    dtype = arr.dtype
    if out is None:
        out = np.empty(arr.shape, dtype=dtype)
    if tmp is None:
        tmp = np.empty(arr.shape, dtype=dtype)
    plan = _smooth_plan(g, scale_km, dtype)
    valid = np.isfinite(arr)
    any_missing = not valid.all()
    weight = None
    if any_missing:
        work = np.where(valid, arr, 0.0).astype(dtype, copy=False)
        weight = valid.astype(dtype)
    else:
        work = arr
    # Y pass: one sigma; open edges normalised by the filtered weight
    if plan["sig_y"] >= 0.05:
        ndimage.gaussian_filter1d(
            work, plan["sig_y"], axis=-2, output=tmp, mode="constant", truncate=3.5
        )
        if any_missing:
            weight = _gauss_axis(weight, plan["sig_y"], -2, "constant")
        else:
            tmp /= plan["wy"]
    else:
        np.copyto(tmp, work)
    # X pass: sigma per row so the width in km is the same at every latitude
    nx = g.shape[1]
    if g.periodic:
        # scipy's forward real FFT is the faster one here; numpy's inverse
        # writes straight into the output buffer
        cbuf = sp_fft.rfft(tmp, axis=-1)
        cbuf *= plan["transfer"]
        np.fft.irfft(cbuf, n=nx, axis=-1, out=out)
        if any_missing:
            weight = np.fft.irfft(np.fft.rfft(weight, axis=-1) * plan["transfer"], n=nx, axis=-1)
    else:
        for sl, sg, wx in plan["groups"]:
            sel = (Ellipsis, sl, slice(None))
            if sg >= 0.05:
                ndimage.gaussian_filter1d(
                    tmp[sel], sg, axis=-1, output=out[sel], mode="constant", truncate=3.5
                )
                if any_missing:
                    weight[sel] = _gauss_axis(weight[sel], sg, -1, "constant")
                else:
                    out[sel] /= wx
            else:
                out[sel] = tmp[sel]
    if any_missing:
        with np.errstate(invalid="ignore", divide="ignore"):
            np.divide(out, weight, out=out)
        out[~(valid & (weight > 1e-6))] = np.nan
    return out


def smooth(field, ds, scale_km):
    """NaN-aware Gaussian smoothing with a length scale in kilometres.

    Parameters
    ----------
    field : ndarray or xarray.DataArray (..., Y, X)
        Field on the grid of ``ds``.
    ds : xarray.Dataset or xarray.DataArray
        Canonical Dataset carrying the grid.
    scale_km : float
        Standard deviation of the Gaussian [km]; 0 returns the field unchanged.

    Returns
    -------
    same kind as ``field``
        Smoothed field; NaN wherever the input is NaN.

    Notes
    -----
    The kernel is separable: along Y with sigma = scale / dy grid points, and
    along X, row by row, with sigma = scale / dx(row), so on a
    latitude/longitude grid the smoothing keeps the same physical width at
    every latitude (capped at a sixth of the circle near the poles). The
    filter is normalised by the smoothed weight of the valid points, so
    missing values and open edges neither pull the field toward zero nor
    spread: result = G*(w f) / G*w with w = 1 where f is valid. On a periodic
    longitude axis the X pass multiplies each row's Fourier transform by the
    Gaussian's transfer function exp(-2 pi^2 sigma^2 k^2 / n^2) (the exact
    periodic kernel); elsewhere the kernel is truncated at 3.5 sigma.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": np.arange(40.0, 50.0), "lon": np.arange(0.0, 10.0)})
    >>> f = np.full((10, 10), 5.0); f[3, 3] = np.nan
    >>> s = smooth(f, ds, 150.0)
    >>> bool(np.isnan(s[3, 3])), round(float(s[5, 5]), 6)
    (True, 5.0)
    """
    try:
        scale_km = float(scale_km)
    except (TypeError, ValueError):
        raise InputError(
            f"smooth: scale_km={scale_km!r}; expected a number of kilometres"
        ) from None
    if not np.isfinite(scale_km) or scale_km < 0:
        raise InputError(f"smooth: scale_km={scale_km}; expected a finite length >= 0 km")
    g = grid_of(ds)
    arr, wrap = _values(field)
    _check_shape(arr, g, "smooth")
    if scale_km == 0:
        return wrap(
            arr.copy(), getattr(field, "name", None), getattr(field, "attrs", {}).get("units")
        )
    units = field.attrs.get("units") if isinstance(field, xr.DataArray) else None
    name = field.name if isinstance(field, xr.DataArray) else None
    work = smooth_np(arr, g, scale_km)
    return wrap(work, name, units)


# --------------------------------------------------------------------------- public: distances
def _ll(*args):
    return [np.asarray(a, dtype=np.float64) for a in args]


def great_circle_km(lon1, lat1, lon2, lat2):
    """Great-circle distance on the sphere [km].

    Parameters
    ----------
    lon1, lat1, lon2, lat2 : array_like
        End points [degrees]; broadcast together.

    Returns
    -------
    ndarray or float
        Distance [km] on a sphere of radius :data:`kit.constants.EARTH_RADIUS_M`.

    Notes
    -----
    Central angle from the arctangent form of the great-circle formula
    (the special case of Vincenty 1975 for a sphere, from memory), well
    conditioned for short, long and near-antipodal distances alike. Against
    WGS84 geodesics (pyproj ``Geod``) the
    difference is below about 0.5 %.

    Examples
    --------
    >>> round(float(great_circle_km(0, 0, 1, 0)), 3)
    111.195
    """
    lon1, lat1, lon2, lat2 = (np.deg2rad(a) for a in _ll(lon1, lat1, lon2, lat2))
    dl = lon2 - lon1
    c1, c2, s1, s2 = np.cos(lat1), np.cos(lat2), np.sin(lat1), np.sin(lat2)
    num = np.hypot(c2 * np.sin(dl), c1 * s2 - s1 * c2 * np.cos(dl))
    den = s1 * s2 + c1 * c2 * np.cos(dl)
    d = EARTH_RADIUS_KM * np.arctan2(num, den)
    return d if np.ndim(d) else float(d)


def line_length_km(lon, lat):
    """Length of a polyline along great circles between its vertices [km].

    Parameters
    ----------
    lon, lat : array_like (n,)
        Vertices [degrees]; NaN vertices break the line (their segments are
        not counted).

    Returns
    -------
    float
        Length [km]; 0 for fewer than two vertices.
    """
    lon, lat = _ll(lon, lat)
    if lon.shape != lat.shape or lon.ndim != 1:
        raise InputError(
            f"line_length_km: lon/lat shapes {lon.shape}/{lat.shape}; "
            "expected two 1-D arrays of equal length"
        )
    if lon.size < 2:
        return 0.0
    seg = great_circle_km(lon[:-1], lat[:-1], lon[1:], lat[1:])
    return float(np.nansum(seg))


def vertex_weights_km(lon, lat):
    """Length [km] each vertex of a polyline stands for: half of each adjacent segment.

    Weights for length-weighted means along a line; a single vertex weighs 1.

    Examples
    --------
    >>> vertex_weights_km([0.0, 1.0, 2.0], [0.0, 0.0, 0.0]).round(1).tolist()
    [55.6, 111.2, 55.6]
    """
    lon, lat = np.asarray(lon, float), np.asarray(lat, float)
    if lon.size < 2:
        return np.ones_like(lon)
    seg = great_circle_km(lon[:-1], lat[:-1], lon[1:], lat[1:])
    w = np.zeros(lon.size)
    w[:-1] += seg / 2
    w[1:] += seg / 2
    return w


def destination(lon, lat, bearing_deg, dist_km, *, wrap=True):
    r"""Point reached from (lon, lat) along a great circle.

    Parameters
    ----------
    lon, lat : array_like
        Start [degrees].
    bearing_deg : array_like
        Initial bearing, clockwise from north [degrees]; a direction given as
        local east/north components becomes one with
        :func:`direction_bearing_deg`.
    dist_km : array_like
        Distance [km]; a negative distance goes the opposite way (bearing + 180).
    wrap : bool
        True: longitude of the end point in -180..180. False: kept continuous
        with the start longitude (it may leave -180..180), as line work across
        the dateline needs.

    Returns
    -------
    lon2, lat2 : ndarray or float
        End point [degrees]; all arguments broadcast together.

    Notes
    -----
    Destination on the sphere from the spherical sine and cosine rules
    (standard spherical trigonometry, from memory):
    :math:`\sin\varphi_2 = \sin\varphi_1\cos\delta + \cos\varphi_1\sin\delta\cos\theta`,
    :math:`\Delta\lambda = \operatorname{atan2}(\sin\theta\sin\delta\cos\varphi_1,
    \cos\delta - \sin\varphi_1\sin\varphi_2)` with :math:`\delta` = distance / R.
    pyproj ``Geod.fwd`` on the same sphere is the second implementation in
    tests/test_geometry.py.

    Examples
    --------
    >>> lon2, lat2 = destination(0.0, 0.0, 90.0, 111.19508)
    >>> round(lon2, 4), round(lat2, 4)
    (1.0, 0.0)
    >>> lon2, lat2 = destination(179.5, 0.0, 90.0, 111.19508, wrap=False)
    >>> round(lon2, 4)
    180.5
    """
    lon, lat, brg, dist = _ll(lon, lat, bearing_deg, dist_km)
    phi1, th = np.deg2rad(lat), np.deg2rad(brg)
    delta = dist / EARTH_RADIUS_KM  # negative: the same great circle the other way
    sphi2 = np.sin(phi1) * np.cos(delta) + np.cos(phi1) * np.sin(delta) * np.cos(th)
    phi2 = np.arcsin(np.clip(sphi2, -1.0, 1.0))
    dlam = np.arctan2(
        np.sin(th) * np.sin(delta) * np.cos(phi1), np.cos(delta) - np.sin(phi1) * sphi2
    )
    lon2 = lon + np.rad2deg(dlam)
    if wrap:
        lon2 = (lon2 + 180.0) % 360.0 - 180.0
    lat2 = np.rad2deg(phi2)
    if np.ndim(lon2) == 0:
        return float(lon2), float(lat2)
    return lon2, lat2


def direction_bearing_deg(east, north):
    """Bearing of a direction given by local east/north components [degrees, 0..360).

    Examples
    --------
    >>> direction_bearing_deg(1.0, 0.0), direction_bearing_deg(-1.0, -1.0)
    (90.0, 225.0)
    """
    b = np.rad2deg(np.arctan2(np.asarray(east, float), np.asarray(north, float))) % 360.0
    return b if np.ndim(b) else float(b)


def bearing_deg(lon1, lat1, lon2, lat2):
    """Give the initial great-circle bearing from point 1 to point 2.

    Returns degrees 0..360, clockwise from north.

    Examples
    --------
    >>> round(bearing_deg(0, 0, 0, 1), 6), round(bearing_deg(0, 0, 1, 0), 6)
    (0.0, 90.0)
    """
    lon1, lat1, lon2, lat2 = (np.deg2rad(a) for a in _ll(lon1, lat1, lon2, lat2))
    dl = lon2 - lon1
    y = np.sin(dl) * np.cos(lat2)
    x = np.cos(lat1) * np.sin(lat2) - np.sin(lat1) * np.cos(lat2) * np.cos(dl)
    b = np.rad2deg(np.arctan2(y, x)) % 360.0
    return b if np.ndim(b) else float(b)


def local_east_north_km(lon, lat, lon0, lat0):
    """Project points onto a local plane about (lon0, lat0) for line work.

    Parameters
    ----------
    lon, lat : array_like
        Points [degrees].
    lon0, lat0 : float or array_like
        Origin of the plane [degrees]. Arrays broadcast with the points, so
        origins of shape (K, 1) and points of shape (1, M) give (K, M)
        coordinates: every point seen from every origin.

    Returns
    -------
    east_km, north_km : ndarray or float
        Azimuthal equidistant coordinates [km] on the sphere of
        :data:`kit.constants.EARTH_RADIUS_M`: the distance from the origin
        is the great-circle distance and the direction is the initial bearing,
        so both are exact from the origin, and a line cast from the origin
        along a direction of its east/north frame is exact too; other lengths
        and angles are true to about 1 % within 1000 km. Invert with
        :func:`local_to_lonlat`.

    Notes
    -----
    Azimuthal equidistant projection on the sphere (Snyder 1987, Map
    Projections: A Working Manual, USGS PP 1395, Eqs. 25-2 and 25-3, from
    memory) written as distance and bearing. pyproj's ``aeqd`` on the same
    sphere is the second implementation in tests/test_geometry.py.

    Examples
    --------
    >>> e, n = local_east_north_km(1.0, 0.0, 0.0, 0.0)
    >>> round(e, 2), round(n, 2)
    (111.2, 0.0)
    """
    r = great_circle_km(lon0, lat0, lon, lat)
    b = np.deg2rad(bearing_deg(lon0, lat0, lon, lat))
    e, n = r * np.sin(b), r * np.cos(b)
    if np.ndim(e) == 0:
        return float(e), float(n)
    return e, n


def local_to_lonlat(east_km, north_km, lon0, lat0, *, wrap=True):
    """Inverse of :func:`local_east_north_km` [degrees].

    ``wrap`` as in :func:`destination`: longitude in -180..180, or continuous
    with ``lon0``.
    """
    east_km, north_km, lon0, lat0 = np.broadcast_arrays(*_ll(east_km, north_km, lon0, lat0))
    r = np.hypot(east_km, north_km)
    b = np.rad2deg(np.arctan2(east_km, north_km))
    return destination(lon0, lat0, b, r, wrap=wrap)



# --------------------------------------------------------------------------- public: sampling
class PointSampler:
    """Sample gridded fields of a canonical Dataset at longitude/latitude points.

    The one point sampler of the kit: bilinear (or nearest-point) values of
    fields on the ``Y, X`` grid of ``ds`` at arbitrary points, used for site
    series, sections and line sampling.

    Parameters
    ----------
    ds : xarray.Dataset or xarray.DataArray
        Carries the grid: 1-D ``lat``/``lon`` (regular grid) or 2-D
        ``lat``/``lon`` (projected grid), in degrees.

    Notes
    -----
    Regular grids use the coordinate values directly, in either order of
    latitude, wrapping longitude for global grids (the cell between the last
    and first column is used) and accepting any longitude of a point (shifted
    by 360 into the grid's range). Projected grids find the nearest grid point
    on the unit sphere (k-d tree), then refine the fractional index with
    Newton steps in the local plane (:func:`local_east_north_km`) so that the
    bilinear interpolation of the grid's latitude/longitude reproduces the
    point. Points outside the grid give NaN.

    Values are bilinear in the fractional index: exact for a field linear in
    latitude/longitude (regular grid) or in grid x/y (projected grid).
    ``nan="propagate"`` gives NaN next to a missing value; ``nan="skip"``
    renormalises the weights of the valid corners (NaN only where all four
    are missing), for fields with levels below the ground.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": np.arange(40.0, 45.0), "lon": np.arange(0.0, 5.0)})
    >>> f = np.add.outer(10.0 * ds.lat.values, ds.lon.values)   # 10 lat + lon
    >>> PointSampler(ds).sample(f, [1.5, 2.25], [41.5, 42.0]).round(6).tolist()
    [416.5, 422.25]
    """

    def __init__(self, ds):
        if not isinstance(ds, (xr.Dataset, xr.DataArray)) or "lat" not in ds.coords and not (
            isinstance(ds, xr.Dataset) and "lat" in ds
        ):
            raise InputError(
                "grid: no lat/lon coordinates to sample at points; expected the canonical "
                "Dataset (kit.io.runs.open_run)"
            )
        lat, lon = ds["lat"], ds["lon"]
        self.regular = lat.ndim == 1
        if self.regular:
            self.lat = np.asarray(lat.values, float)
            self.lon = np.asarray(lon.values, float)
            if self.lat.size < 2 or self.lon.size < 2:
                raise InputError(
                    "grid: need at least 2 latitudes and 2 longitudes to sample fields"
                )
            if not (np.all(np.diff(self.lon) > 0)):
                raise InputError(
                    "grid: longitudes not ascending; expected the canonical grid "
                    "(kit.io.runs.open_run)"
                )
            self.shape = (self.lat.size, self.lon.size)
            dlon = float(np.median(np.diff(self.lon)))
            span = self.lon[-1] - self.lon[0] + dlon
            self.periodic = bool(abs(span - 360.0) < 0.5 * dlon)
        else:
            self.lat2 = np.asarray(lat.values, float)
            self.lon2 = np.asarray(lon.values, float)
            if self.lat2.ndim != 2 or self.lon2.shape != self.lat2.shape or min(
                self.lat2.shape
            ) < 2:
                raise InputError(
                    f"grid: projected grid with lat/lon shapes {self.lat2.shape}/"
                    f"{self.lon2.shape}; expected 2-D lat and lon of the same shape (y, x)"
                )
            self.shape = self.lat2.shape
            self._tree = cKDTree(self._xyz(self.lon2.ravel(), self.lat2.ravel()))
            self.periodic = False
        self.dims = tuple(lat.dims) if not self.regular else ("lat", "lon")

    @staticmethod
    def _xyz(lon, lat):
        lo, la = np.deg2rad(lon), np.deg2rad(lat)
        return np.column_stack([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)])

    # ------------------------------------------------------------------ positions
    def index(self, lon, lat):
        """Fractional grid indices of points.

        Parameters
        ----------
        lon, lat : array_like
            Points [degrees]; broadcast together.

        Returns
        -------
        j, i : ndarray
            Fractional index along Y and X [1], of the shape of the points; NaN
            outside the grid. On a periodic grid ``i`` may lie in
            ``(nx - 1, nx]``: the cell that wraps to column 0.
        """
        lon, lat = np.broadcast_arrays(np.asarray(lon, float), np.asarray(lat, float))
        shape = lon.shape
        lon, lat = lon.ravel(), lat.ravel()
        if self.regular:
            j = self._lat_index(lat)
            lon0, lon1 = self.lon[0], self.lon[-1]
            lo = lon0 + np.mod(lon - lon0, 360.0)
            # a point a hair west of the first column (rounding) is on it, not 360 away
            lo = np.where((lo > lon1) & (lo - 360.0 > lon0 - 1e-9), lon0, lo)
            n = self.lon.size
            if self.periodic:
                ext = np.append(self.lon, self.lon[0] + 360.0)
                i = np.interp(lo, ext, np.arange(n + 1.0))
            else:
                i = np.interp(lo, self.lon, np.arange(float(n)), left=np.nan, right=np.nan)
            return j.reshape(shape), i.reshape(shape)
        j, i = self._projected_index(lon, lat)
        return j.reshape(shape), i.reshape(shape)

    def _lat_index(self, lat):
        idx = np.arange(float(self.lat.size))
        if self.lat[0] > self.lat[-1]:
            return np.interp(lat, self.lat[::-1], idx[::-1], left=np.nan, right=np.nan)
        return np.interp(lat, self.lat, idx, left=np.nan, right=np.nan)

    def _projected_index(self, lon, lat):
        ny, nx = self.shape
        if lon.size == 0:
            return np.zeros(0), np.zeros(0)
        _, k = self._tree.query(self._xyz(lon, lat))
        j = (k // nx).astype(float)
        i = (k % nx).astype(float)
        for _ in range(4):
            jj = np.clip(np.round(j).astype(int), 0, ny - 2)
            ii = np.clip(np.round(i).astype(int), 0, nx - 2)
            la0 = self._bilin(self.lat2, j, i)
            lo0 = self._bilin(self.lon2, j, i, wrap_ref=lon)
            # local Jacobian of (east, north) km with respect to (i, j)
            ex, nx_ = local_east_north_km(self.lon2[jj, ii + 1], self.lat2[jj, ii + 1], lo0, la0)
            ey, ny_ = local_east_north_km(self.lon2[jj + 1, ii], self.lat2[jj + 1, ii], lo0, la0)
            e0, n0 = local_east_north_km(self.lon2[jj, ii], self.lat2[jj, ii], lo0, la0)
            a11, a21 = ex - e0, nx_ - n0
            a12, a22 = ey - e0, ny_ - n0
            te, tn = local_east_north_km(lon, lat, lo0, la0)
            det = a11 * a22 - a12 * a21
            with np.errstate(divide="ignore", invalid="ignore"):
                di = (a22 * te - a12 * tn) / det
                dj = (-a21 * te + a11 * tn) / det
            i = i + np.nan_to_num(di)
            j = j + np.nan_to_num(dj)
        outside = (j < -0.01) | (j > ny - 0.99) | (i < -0.01) | (i > nx - 0.99)
        j = np.where(outside, np.nan, np.clip(j, 0, ny - 1))
        i = np.where(outside, np.nan, np.clip(i, 0, nx - 1))
        return j, i

    def _bilin(self, field, j, i, wrap_ref=None):
        """Bilinear value of a 2-D grid array at (j, i); longitudes near ``wrap_ref``."""
        jj, ii, w = self.weights(j, i)
        c = field[jj, ii]
        if wrap_ref is not None:
            ref = np.asarray(wrap_ref, float)[..., None]
            c = ref + np.mod(c - ref + 180.0, 360.0) - 180.0
        return np.where(np.isfinite(w[..., 0]), np.sum(c * np.nan_to_num(w), axis=-1), np.nan)

    def weights(self, j, i):
        """Corner indices and bilinear weights of fractional grid positions.

        Parameters
        ----------
        j, i : array_like
            Fractional indices along Y and X (as :meth:`index` gives them).

        Returns
        -------
        jj, ii : ndarray of int, shape ``j.shape + (4,)``
            Rows and columns of the four corners (the wrapping cell of a
            periodic grid uses column 0); 0 where the position is NaN.
        w : ndarray, shape ``j.shape + (4,)``
            Bilinear weights (sum 1); NaN where the position is NaN.
        """
        j, i = np.broadcast_arrays(np.asarray(j, float), np.asarray(i, float))
        ny, nx = self.shape
        bad = ~(np.isfinite(j) & np.isfinite(i))
        j = np.where(bad, 0.0, j)
        i = np.where(bad, 0.0, i)
        j0 = np.clip(np.floor(j).astype(int), 0, ny - 2)
        if self.periodic:
            i0 = np.clip(np.floor(i).astype(int), 0, nx - 1)
            i1 = (i0 + 1) % nx
        else:
            i0 = np.clip(np.floor(i).astype(int), 0, nx - 2)
            i1 = i0 + 1
        fj, fi = j - j0, i - i0
        jj = np.stack([j0, j0, j0 + 1, j0 + 1], axis=-1)
        ii = np.stack([i0, i1, i0, i1], axis=-1)
        w = np.stack([(1 - fj) * (1 - fi), (1 - fj) * fi, fj * (1 - fi), fj * fi], axis=-1)
        w[bad] = np.nan
        return jj, ii, w

    # ------------------------------------------------------------------ values
    def sample(self, field, lon, lat, *, method="linear", nan="propagate"):
        """Values of a field at points.

        Parameters
        ----------
        field : ndarray or xarray.DataArray (..., Y, X)
            Field on the grid [any unit]; leading axes (level, member, ...) are kept.
        lon, lat : array_like
            Points [degrees]; broadcast together.
        method : {"linear", "nearest"}
            Bilinear interpolation, or the value of the nearest grid point (in index space).
        nan : {"propagate", "skip"}
            Bilinear next to a missing value: NaN, or the renormalised mean of the
            valid corners.

        Returns
        -------
        ndarray (..., *points)
            Values [unit of ``field``]; NaN outside the grid.
        """
        j, i = self.index(lon, lat)
        return self.sample_index(field, j, i, method=method, nan=nan)

    def sample_index(self, field, j, i, *, method="linear", nan="propagate"):
        """Values of a field (..., Y, X) at fractional grid positions; see :meth:`sample`."""
        arr = np.asarray(getattr(field, "values", field), dtype=float)
        if arr.shape[-2:] != tuple(self.shape):
            raise InputError(
                f"sample: field of shape {arr.shape}; expected (..., {self.shape[0]}, "
                f"{self.shape[1]}) on the sampler's grid"
            )
        j, i = np.broadcast_arrays(np.asarray(j, float), np.asarray(i, float))
        if method == "nearest":
            ok = np.isfinite(j) & np.isfinite(i)
            jn = np.where(ok, np.round(np.where(ok, j, 0.0)), 0).astype(int)
            inn = np.where(ok, np.round(np.where(ok, i, 0.0)), 0).astype(int)
            inn = inn % self.shape[1] if self.periodic else np.minimum(inn, self.shape[1] - 1)
            return np.where(ok, arr[..., jn, inn], np.nan)
        if method != "linear":
            raise InputError(f"sample: method={method!r}; expected 'linear' or 'nearest'")
        jj, ii, w = self.weights(j, i)
        return _weighted_corners(arr[..., jj, ii], w, nan)

    def sample_dataset(self, ds, lon=None, lat=None, *, index=None, nan="skip", dim="point"):
        """Every horizontal field of a Dataset at points, reading only the corner columns.

        Parameters
        ----------
        ds : xarray.Dataset
            Fields on the sampler's grid, numpy- or dask-backed: only the four
            corner columns of each point are read (one compute).
        lon, lat : array_like (n,), optional
            Points [degrees].
        index : (j, i), optional
            Fractional grid positions instead of ``lon``/``lat``.
        nan : {"skip", "propagate"}
            As in :meth:`sample`.
        dim : str
            Name of the new point dimension.

        Returns
        -------
        xarray.Dataset
            Each data variable with both horizontal dimensions, sampled, with
            dimension ``dim`` in place of them; attributes and the other
            coordinates kept.
        """
        if index is None:
            j, i = self.index(np.atleast_1d(lon), np.atleast_1d(lat))
        else:
            j, i = (np.atleast_1d(np.asarray(a, float)) for a in index)
        ydim, xdim = _horizontal_dims(ds)
        jj, ii, w = self.weights(j.ravel(), i.ravel())
        names = [n for n, da in ds.data_vars.items() if ydim in da.dims and xdim in da.dims]
        drop = [c for c in ds.coords if ydim in ds[c].dims or xdim in ds[c].dims]
        sel = {ydim: xr.DataArray(jj, dims=(dim, "_corner")),
               xdim: xr.DataArray(ii, dims=(dim, "_corner"))}
        sub = ds[names].drop_vars(drop, errors="ignore").isel(sel).load()
        wa = xr.DataArray(w, dims=(dim, "_corner"))
        out = {}
        for name in names:
            v = sub[name].astype(float)
            if nan == "skip":
                ok = np.isfinite(v)
                wsum = (ok * wa).sum("_corner")
                val = (v.where(ok, 0.0) * wa).sum("_corner") / wsum.where(wsum > 0)
            else:
                val = (v * wa).sum("_corner", skipna=False)
            out[name] = val.where(np.isfinite(wa.isel(_corner=0))).assign_attrs(ds[name].attrs)
        res = xr.Dataset(out, attrs=dict(ds.attrs))
        for c in ds.coords:
            if c not in drop and c not in res.coords:
                res = res.assign_coords({c: ds[c]})
        return res


def _horizontal_dims(ds):
    """Names of the (Y, X) dimensions of a canonical Dataset."""
    if "lat" in ds.dims and "lon" in ds.dims:
        return "lat", "lon"
    if "y" in ds.dims and "x" in ds.dims:
        return "y", "x"
    raise InputError(
        "dataset: no lat/lon or y/x grid dimensions; expected the canonical dataset of kit.open_run"
    )


def _weighted_corners(values, w, nan):
    """Combine corner values (..., *pts, 4) with weights (*pts, 4)."""
    if nan == "skip":
        ok = np.isfinite(values)
        wk = np.where(ok, w, 0.0)
        wsum = wk.sum(axis=-1)
        with np.errstate(invalid="ignore", divide="ignore"):
            out = np.where(ok, values, 0.0) * wk
            out = out.sum(axis=-1) / np.where(wsum > 0, wsum, np.nan)
        return np.where(np.isfinite(w[..., 0]), out, np.nan)
    if nan != "propagate":
        raise InputError(f"sample: nan={nan!r}; expected 'propagate' or 'skip'")
    outside = np.where(np.isfinite(w[..., 0]), 0.0, np.nan)
    return np.sum(values * np.nan_to_num(w), axis=-1) + outside


def grid_extent_text(ds):
    """Latitude/longitude extent of a grid as text, for messages (``lat 40.00..60.00, ...``)."""
    lat = np.asarray(ds["lat"].values, dtype=float)
    lon = np.asarray(ds["lon"].values, dtype=float)
    return (
        f"lat {np.nanmin(lat):.2f}..{np.nanmax(lat):.2f}, "
        f"lon {np.nanmin(lon):.2f}..{np.nanmax(lon):.2f}"
    )
