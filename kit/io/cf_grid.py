"""Horizontal grids: regular latitude/longitude or projected, and earth-relative winds.

* Regular latitude/longitude (also Gaussian): 1-D ``lat`` ascending,
  ``lon`` increasing and continuous. A grid that closes the circle is rolled
  to start at or after -180 (so it runs -180..180); a duplicated cyclic column
  is dropped. A regional grid keeps its own extent, shifted by a multiple of
  360 so its WESTERN edge lies in -180..180; it then runs eastward
  continuously and may pass 180 (a domain 170E..170W comes out as 170..190).
* Projected (``attrs["grid"] == "projected"``): a CF ``grid_mapping``
  (Lambert conformal, polar stereographic, rotated pole, any projection pyproj
  reads with ``CRS.from_cf``). ``x``, ``y`` are 1-D in metres (rotated pole:
  metres along the rotated equator, R times the rotated angle; the rotated
  degrees are kept as ``rlon``/``rlat``), ``lat``/``lon`` are 2-D in degrees
  (taken from the file, or computed with pyproj when absent; longitudes
  wrapped into -180..180), ``attrs["dx_m"]``, ``attrs["dy_m"]`` are the
  nominal grid lengths [m]. A conformal projection gets a 2-D coordinate
  ``map_factor`` [1] (physical length = grid length / map_factor, measured
  on the ellipsoid with pyproj); a non-conformal one (rotated pole) gets
  ``map_factor_x`` and ``map_factor_y`` instead. The CF grid-mapping
  attributes are kept on a scalar coordinate ``crs``. A projection without an
  ellipsoid is taken on the GRIB sphere (:data:`kit.constants.GRIB_SPHERE_RADIUS_M`).
* Winds on projected grids: when the file says they are grid-relative
  (``standard_name`` ``x_wind``/``y_wind`` or ``grid_eastward_wind``/
  ``grid_northward_wind``, or an attribute ``GRIB_uvRelativeToGrid`` /
  ``uv_relative_to_grid`` that is true) they are rotated to earth-relative
  with the local angle of the grid's x axis, measured on the ellipsoid with
  pyproj between neighbouring points. Otherwise they are taken as
  earth-relative.
"""

import numpy as np
import xarray as xr
from pyproj import CRS, Geod, Transformer
from pyproj.exceptions import CRSError

from kit.constants import GRIB_SPHERE_RADIUS_M
from kit.io.cf_units import linear_conversion, parse_units, units_of
from kit.io.messages import input_error, join_names

__all__ = ["find_lat_lon", "canonical_horizontal_grid", "rotate_winds_to_earth"]

_LAT_NAMES = (
    "lat",
    "latitude",
    "nav_lat",
    "XLAT",
    "LAT",
    "Latitude",
    "g0_lat_0",
    "gridlat_0",
    "y_lat",
)


_LON_NAMES = (
    "lon",
    "longitude",
    "nav_lon",
    "XLONG",
    "LON",
    "Longitude",
    "g0_lon_1",
    "gridlon_0",
    "x_lon",
)


_LAT_UNITS = {"degrees_north", "degree_north", "degree_N", "degrees_N", "degreeN", "degreesN"}


_LON_UNITS = {"degrees_east", "degree_east", "degree_E", "degrees_E", "degreeE", "degreesE"}

#: standard names that say a wind component is along the grid axes, not east/north
_GRID_RELATIVE_STD = {"x_wind", "y_wind", "grid_eastward_wind", "grid_northward_wind"}


def find_lat_lon(ds):
    """Names of a file's latitude and longitude variables (1-D or 2-D).

    Found by ``standard_name``, then by units (``degrees_north`` ...), then
    by the common names (``lat``, ``latitude``, ``XLAT`` ...).

    Parameters
    ----------
    ds : xarray.Dataset
        One file.

    Returns
    -------
    lat, lon : str or None
        Variable names (coordinates or data variables); None where not found.
    """

    def pick(names, units_set, std):
        for n in list(ds.coords) + list(ds.data_vars):
            if ds[n].attrs.get("standard_name") == std:
                return n
        for n in list(ds.coords) + list(ds.data_vars):
            if str(ds[n].attrs.get("units", "")) in units_set:
                return n
        for n in names:
            if n in ds.variables:
                return n
        return None

    lat = pick(_LAT_NAMES, _LAT_UNITS, "latitude")
    lon = pick(_LON_NAMES, _LON_UNITS, "longitude")
    return lat, lon


def _unwrap_lon(lon):
    """Continuous eastward longitudes from any storage (0..360, -180..180, wrapped)."""
    lon = np.asarray(lon, dtype=np.float64)
    if lon.size < 2:
        return lon.copy()
    d = np.diff(lon)
    d = (d + 180.0) % 360.0 - 180.0
    return np.concatenate([[lon[0]], lon[0] + np.cumsum(d)])


def _regular_grid(ds, lat_name, lon_name, where):
    """Rename/reorder a regular lat/lon grid: lat ascending, lon continuous."""
    lat_dim = ds[lat_name].dims[0]
    lon_dim = ds[lon_name].dims[0]
    lat = np.asarray(ds[lat_name].values, dtype=np.float64)
    lon = np.asarray(ds[lon_name].values, dtype=np.float64)
    if not (np.all(np.isfinite(lat)) and np.all(np.isfinite(lon))):
        raise input_error(
            where, "latitude/longitude contain missing values; expected finite degrees"
        )
    if np.any(np.abs(lat) > 90.0 + 1e-6):
        raise input_error(
            where, f"latitude '{lat_name}' reaches {np.max(np.abs(lat)):.3f}; expected -90..90"
        )
    dlat = np.diff(lat)
    if lat.size > 1 and np.any(dlat == 0):
        i = int(np.nonzero(dlat == 0)[0][0])
        raise input_error(
            where, f"duplicate latitude {lat[i]:g} in '{lat_name}'; expected distinct values"
        )
    if lat.size > 1 and not (np.all(dlat > 0) or np.all(dlat < 0)):
        raise input_error(where, f"latitude '{lat_name}' is not monotonic; expected sorted values")
    # longitudes: unwrap the stored order, then require one direction
    lon_u = _unwrap_lon(lon)
    dl = np.diff(lon_u)
    if lon.size > 1 and np.any(np.abs(dl) < 1e-9):
        i = int(np.nonzero(np.abs(dl) < 1e-9)[0][0])
        raise input_error(
            where, f"duplicate longitude {lon[i]:g} in '{lon_name}'; expected distinct values"
        )
    if lon.size > 1 and not (np.all(dl > 0) or np.all(dl < 0)):
        raise input_error(where, f"longitude '{lon_name}' is not monotonic; expected sorted values")
    lon_order = np.arange(lon.size)
    if lon.size > 1 and dl[0] < 0:
        lon_order = lon_order[::-1]
        lon_u = lon_u[::-1]
    # a full circle: drop a duplicated cyclic column, roll to start at >= -180
    step = np.median(np.abs(np.diff(lon_u))) if lon.size > 1 else 0.0
    span = lon_u[-1] - lon_u[0] if lon.size > 1 else 0.0
    if lon.size > 2 and abs(span - 360.0) < 0.5 * step:
        lon_order, lon_u = lon_order[:-1], lon_u[:-1]
        span = lon_u[-1] - lon_u[0]
    is_global = lon.size > 2 and abs(span + step - 360.0) < 0.5 * step
    if is_global:
        wrapped = (lon_u + 180.0) % 360.0 - 180.0
        order = np.argsort(wrapped, kind="stable")
        lon_order, lon_u = lon_order[order], wrapped[order]
    else:
        shift = -360.0 * np.floor((lon_u[0] + 180.0) / 360.0)
        lon_u = lon_u + shift
    lat_order = np.arange(lat.size)
    if lat.size > 1 and dlat[0] < 0:
        lat_order = lat_order[::-1]
    sel = {}
    if not np.array_equal(lat_order, np.arange(lat.size)):
        sel[lat_dim] = lat_order
    if not np.array_equal(lon_order, np.arange(lon.size)):
        sel[lon_dim] = lon_order
    if sel:
        ds = ds.isel(sel)
    drop = [n for n in (lat_name, lon_name) if n not in (lat_dim, lon_dim)]
    ds = ds.drop_vars(drop)
    ds = ds.rename({lat_dim: "lat", lon_dim: "lon"}) if (lat_dim, lon_dim) != ("lat", "lon") else ds
    ds = ds.assign_coords(
        lat=("lat", lat[lat_order]),
        lon=("lon", lon_u),
    )
    ds["lat"].attrs = {"standard_name": "latitude", "units": "degrees_north"}
    ds["lon"].attrs = {"standard_name": "longitude", "units": "degrees_east"}
    ds.attrs["grid"] = "latlon"
    return ds


def _grid_mapping_of(ds, where):
    """Name of the CF grid-mapping variable the data variables point to, or None."""
    names = set()
    for v in ds.data_vars.values():
        gm = v.attrs.get("grid_mapping", v.encoding.get("grid_mapping"))
        if gm:
            names.add(str(gm).split(":")[0].strip())
    names = {n for n in names if n in ds.variables}
    if not names:
        for n in ds.variables:
            if "grid_mapping_name" in ds[n].attrs:
                names.add(n)
    if len(names) > 1:
        raise input_error(
            where, f"several grid mappings ({join_names(sorted(names))}); expected one grid"
        )
    return names.pop() if names else None


def _geographic_of(crs):
    """Longitude/latitude CRS on the ellipsoid of ``crs`` (the GRIB sphere when it has none)."""
    ell = crs.ellipsoid
    if ell is None:
        return CRS.from_proj4(f"+proj=longlat +R={GRIB_SPHERE_RADIUS_M!r} +no_defs")
    return CRS.from_proj4(
        f"+proj=longlat +a={ell.semi_major_metre!r} +b={ell.semi_minor_metre!r} +no_defs"
    )


def _axis_geometry(crs, xn, yn, unit_m, step):
    """Local grid geometry on the ellipsoid from the projection, by finite steps.

    Parameters
    ----------
    crs : pyproj.CRS
    xn, yn : ndarray
        Native projection coordinates (2-D, broadcast).
    unit_m : float
        Metres per native unit along the nominal grid (1 for projected metres,
        R pi/180 for rotated degrees).
    step : float
        Grid length in native units.

    Returns
    -------
    angle : ndarray
        Direction of the +x axis, counter-clockwise from local east [rad].
    mx, my : ndarray
        Map factors along x and y [1] (nominal length / true length).
    """
    geo = _geographic_of(crs)
    tr = Transformer.from_crs(crs, geo, always_xy=True)
    ell = crs.ellipsoid
    geod = (
        Geod(a=ell.semi_major_metre, b=ell.semi_minor_metre)
        if ell
        else Geod(a=GRIB_SPHERE_RADIUS_M, b=GRIB_SPHERE_RADIUS_M)
    )
    # finite step: 1e-4 of the grid length (native units), small against curvature,
    # large against the rounding of degrees in double precision
    h = 1e-4 * step
    h_m = h * unit_m
    lon_a, lat_a = tr.transform(xn - h, yn)
    lon_b, lat_b = tr.transform(xn + h, yn)
    az_a, az_back, dist_x = geod.inv(lon_a, lat_a, lon_b, lat_b)
    # azimuth at the middle point: mean of the forward azimuths at both ends
    az_b = np.asarray(az_back) + 180.0
    ra, rb = np.deg2rad(np.asarray(az_a)), np.deg2rad(az_b)
    az_x = np.rad2deg(np.arctan2(np.sin(ra) + np.sin(rb), np.cos(ra) + np.cos(rb)))
    lon_c, lat_c = tr.transform(xn, yn - h)
    lon_d, lat_d = tr.transform(xn, yn + h)
    _, _, dist_y = geod.inv(lon_c, lat_c, lon_d, lat_d)
    angle = np.deg2rad(90.0 - np.asarray(az_x))
    with np.errstate(divide="ignore", invalid="ignore"):
        mx = 2.0 * h_m / np.asarray(dist_x)
        my = 2.0 * h_m / np.asarray(dist_y)
    return angle, mx, my


def _projected_grid(ds, lat_name, lon_name, where):
    """Describe a projected grid: y, x in metres, 2-D lat/lon, dx_m/dy_m, map factors."""
    gm_name = _grid_mapping_of(ds, where)
    if gm_name is None:
        raise input_error(
            where,
            "2-D latitude/longitude without a CF grid_mapping; expected a grid_mapping "
            "variable (e.g. lambert_conformal_conic) or a regular latitude/longitude grid",
        )
    gm_attrs = dict(ds[gm_name].attrs)
    try:
        crs = CRS.from_cf(gm_attrs)
    except (CRSError, Exception) as exc:
        raise input_error(
            where,
            f"grid mapping '{gm_name}' "
            f"({gm_attrs.get('grid_mapping_name', 'no grid_mapping_name')}) "
            f"is not understood by pyproj ({exc}); expected CF grid-mapping attributes",
        ) from None
    rotated = gm_attrs.get("grid_mapping_name") == "rotated_latitude_longitude"
    radius = crs.ellipsoid.semi_major_metre if crs.ellipsoid else GRIB_SPHERE_RADIUS_M
    # the two grid dimensions: those of the first data variable with a grid mapping
    ref_var = next(
        (
            v
            for v in ds.data_vars.values()
            if v.attrs.get("grid_mapping", v.encoding.get("grid_mapping")) and v.ndim >= 2
        ),
        None,
    )
    if lat_name is not None and ds[lat_name].ndim == 2:
        ydim, xdim = ds[lat_name].dims
    elif ref_var is not None:
        ydim, xdim = ref_var.dims[-2:]
    else:
        raise input_error(where, "projected grid without data on it; expected (y, x) fields")
    if (
        ref_var is not None
        and tuple(ref_var.dims[-2:]) != (ydim, xdim)
        and set(ref_var.dims[-2:]) == {ydim, xdim}
    ):
        pass  # transposed; fixed later by the final transpose

    def native(dim, std_want, rot_std):
        for n, c in ds.coords.items():
            if c.dims == (dim,) and c.attrs.get("standard_name") in (std_want, rot_std):
                return n
        if dim in ds.coords and ds.coords[dim].ndim == 1:
            return dim
        return None

    xname = native(xdim, "projection_x_coordinate", "grid_longitude")
    yname = native(ydim, "projection_y_coordinate", "grid_latitude")
    if rotated:
        unit_m = radius * np.pi / 180.0
        native_unit = "degrees"
    else:
        unit_m = 1.0
        native_unit = "m"
    if xname is not None and yname is not None:
        xv = np.asarray(ds[xname].values, dtype=np.float64)
        yv = np.asarray(ds[yname].values, dtype=np.float64)
        if not rotated:
            for nm, arr in (("x", xname), ("y", yname)):
                u = units_of(ds[arr]) or "m"
                scale, _ = linear_conversion(
                    parse_units(u, where, arr, "m or km"), "m", where, arr, "m or km"
                )
                if nm == "x":
                    xv = xv * scale
                else:
                    yv = yv * scale
    else:
        if lat_name is None or lon_name is None:
            raise input_error(
                where, "projected grid without x/y coordinates or 2-D latitude/longitude"
            )
        tr = Transformer.from_crs(_geographic_of(crs), crs, always_xy=True)
        xx, yy = tr.transform(np.asarray(ds[lon_name].values), np.asarray(ds[lat_name].values))
        xv = np.nanmean(xx, axis=0)
        yv = np.nanmean(yy, axis=1)
        if np.nanmax(np.abs(xx - xv[None, :])) > 1e-3 * max(
            np.nanmax(np.abs(np.diff(xv))), 1e-12
        ) or np.nanmax(np.abs(yy - yv[:, None])) > 1e-3 * max(
            np.nanmax(np.abs(np.diff(yv))), 1e-12
        ):
            raise input_error(
                where,
                f"2-D latitude/longitude do not lie on a regular grid of '{gm_name}'; "
                "expected x/y coordinates or lat/lon matching the grid mapping",
            )
    for nm, arr in (("x", xv), ("y", yv)):
        d = np.diff(arr)
        if arr.size > 1 and np.any(d == 0):
            raise input_error(where, f"duplicate {nm} coordinate values; expected distinct values")
        if arr.size > 1 and not (np.all(d > 0) or np.all(d < 0)):
            raise input_error(where, f"{nm} coordinate is not monotonic; expected sorted values")
    # order ascending
    sel = {}
    if xv.size > 1 and xv[1] < xv[0]:
        sel[xdim] = np.arange(xv.size)[::-1]
        xv = xv[::-1]
    if yv.size > 1 and yv[1] < yv[0]:
        sel[ydim] = np.arange(yv.size)[::-1]
        yv = yv[::-1]
    if sel:
        ds = ds.isel(sel)
    xn, yn = np.meshgrid(xv, yv)
    if lat_name is not None and lon_name is not None and ds[lat_name].ndim == 2:
        lat2 = ds[lat_name].transpose(ydim, xdim).values.astype(np.float64)
        lon2 = ds[lon_name].transpose(ydim, xdim).values.astype(np.float64)
    else:
        tr = Transformer.from_crs(crs, _geographic_of(crs), always_xy=True)
        lon2, lat2 = tr.transform(xn, yn)
    lon2 = (np.asarray(lon2) + 180.0) % 360.0 - 180.0
    gstep = float(np.median(np.abs(np.diff(xv)))) if xv.size > 1 else 1.0
    angle, mx, my = _axis_geometry(crs, xn, yn, unit_m, gstep)
    drop = [n for n in (lat_name, lon_name, xname, yname, gm_name) if n and n in ds.variables]
    ds = ds.drop_vars(drop)
    ds = ds.rename({ydim: "y", xdim: "x"}) if (ydim, xdim) != ("y", "x") else ds
    x_m, y_m = xv * unit_m, yv * unit_m
    coords = {
        "x": ("x", x_m, {"standard_name": "projection_x_coordinate", "units": "m"}),
        "y": ("y", y_m, {"standard_name": "projection_y_coordinate", "units": "m"}),
        "lat": (
            ("y", "x"),
            np.asarray(lat2),
            {"standard_name": "latitude", "units": "degrees_north"},
        ),
        "lon": (
            ("y", "x"),
            np.asarray(lon2),
            {"standard_name": "longitude", "units": "degrees_east"},
        ),
        "crs": ((), 0, gm_attrs),
    }
    if rotated:
        coords["rlon"] = ("x", xv, {"standard_name": "grid_longitude", "units": "degrees"})
        coords["rlat"] = ("y", yv, {"standard_name": "grid_latitude", "units": "degrees"})
    fin = np.isfinite(mx) & np.isfinite(my)
    if np.max(np.abs(mx - my)[fin], initial=0.0) < 1e-3 * np.max(np.abs(mx)[fin], initial=1.0):
        coords["map_factor"] = (
            ("y", "x"),
            0.5 * (mx + my),
            {"long_name": "map scale factor (grid length / true length)", "units": "1"},
        )
    else:
        coords["map_factor_x"] = (
            ("y", "x"),
            mx,
            {"long_name": "map scale factor along x", "units": "1"},
        )
        coords["map_factor_y"] = (
            ("y", "x"),
            my,
            {"long_name": "map scale factor along y", "units": "1"},
        )
    ds = ds.assign_coords({k: xr.Variable(v[0], v[1], v[2]) for k, v in coords.items()})
    ds.attrs["grid"] = "projected"
    ds.attrs["dx_m"] = float(np.median(np.diff(x_m))) if x_m.size > 1 else float("nan")
    ds.attrs["dy_m"] = float(np.median(np.diff(y_m))) if y_m.size > 1 else float("nan")
    ds.attrs["grid_mapping_name"] = str(gm_attrs.get("grid_mapping_name", ""))
    ds.attrs["native_grid_unit"] = native_unit
    return ds, angle


def canonical_horizontal_grid(ds, where):
    """Describe a file's horizontal grid the canonical way (regular or projected).

    Parameters
    ----------
    ds : xarray.Dataset
        One file.
    where : str
        File named in error messages.

    Returns
    -------
    ds : xarray.Dataset
        On ``lat, lon`` (regular grid: 1-D, lat ascending, lon continuous) or on
        ``y, x`` [m] with 2-D ``lat``/``lon``, map factors and ``crs``
        (projected grid); ``attrs["grid"]`` says which.
    ydim, xdim : str
        ``"lat", "lon"`` or ``"y", "x"``.
    angle : numpy.ndarray or None
        On projected grids, direction of the grid's +x axis counter-clockwise
        from local east [rad] on ``(y, x)``; None on regular grids.

    Raises
    ------
    kit.errors.InputError
        No latitude/longitude, bad coordinates, an unreadable grid mapping,
        or fewer than 3 x 3 points.
    """
    lat_name, lon_name = find_lat_lon(ds)
    angle = None
    if (
        lat_name is not None
        and ds[lat_name].ndim == 1
        and lon_name is not None
        and ds[lon_name].ndim == 1
    ):
        ds = _regular_grid(ds, lat_name, lon_name, where)
        ydim, xdim = "lat", "lon"
    elif (lat_name is not None and ds[lat_name].ndim == 2) or _grid_mapping_of(ds, where):
        if lat_name is not None and ds[lat_name].ndim == 2 and _grid_mapping_of(ds, where) is None:
            lat2 = np.asarray(ds[lat_name].values, dtype=np.float64)
            lon2 = np.asarray(ds[lon_name].values, dtype=np.float64)
            if np.allclose(lat2, lat2[:, :1]) and np.allclose(lon2, lon2[:1, :]):
                ydim, xdim = ds[lat_name].dims
                ds = ds.drop_vars([lat_name, lon_name]).assign_coords(
                    {"_lat1": (ydim, lat2[:, 0]), "_lon1": (xdim, lon2[0, :])}
                )
                ds = _regular_grid(ds, "_lat1", "_lon1", where)
                ydim, xdim = "lat", "lon"
            else:
                ds, angle = _projected_grid(ds, lat_name, lon_name, where)
                ydim, xdim = "y", "x"
        else:
            ds, angle = _projected_grid(ds, lat_name, lon_name, where)
            ydim, xdim = "y", "x"
    else:
        raise input_error(
            where,
            "no latitude/longitude coordinates; expected 1-D lat/lon (standard_name latitude, "
            "longitude) or 2-D lat/lon with a CF grid_mapping",
        )
    ny, nx = ds.sizes[ydim], ds.sizes[xdim]
    if ny < 3 or nx < 3:
        raise input_error(where, f"grid is {ny} x {nx} points; expected at least 3 x 3")
    return ds, ydim, xdim, angle


def _is_grid_relative(da):
    """Whether a wind component says it is grid-relative (standard_name or GRIB flag)."""
    if da.attrs.get("standard_name") in _GRID_RELATIVE_STD:
        return True
    for key in (
        "GRIB_uvRelativeToGrid",
        "uv_relative_to_grid",
        "grid_relative",
        "uvRelativeToGrid",
    ):
        val = da.attrs.get(key)
        if val is not None:
            if isinstance(val, str):
                return val.strip().lower() in ("1", "true", "yes")
            return bool(np.asarray(val).ravel()[0])
    return False


def rotate_winds_to_earth(fields, sources, angle, where):
    r"""Turn grid-relative wind components to eastward/northward where the file says so.

    Parameters
    ----------
    fields : dict
        Canonical fields by role; the pairs ``u, v`` and ``u10, v10`` present
        are rotated [m s-1].
    sources : dict
        The file variable of each wind role (its name and attributes say
        whether it is grid-relative).
    angle : numpy.ndarray or None
        Direction of the grid's +x axis counter-clockwise from local east
        [rad] on ``(y, x)``; None on a latitude/longitude grid (nothing to do).
    where : str
        File named in error messages.

    Returns
    -------
    fields : dict
        A new dict with earth-relative winds.
    rotation : str
        What was done, for ``attrs["wind_rotation"]``.

    Raises
    ------
    kit.errors.InputError
        The u and v of a pair disagree on being grid-relative.

    Notes
    -----
    With :math:`\alpha` the angle of the grid x axis from east,

    .. math:: u = u_g \cos\alpha - v_g \sin\alpha, \quad
              v = u_g \sin\alpha + v_g \cos\alpha
    """
    out = dict(fields)
    if angle is None:
        return out, "none needed (latitude/longitude grid)"
    rotation = "none: winds taken as earth-relative"
    for uu, vv in (("u", "v"), ("u10", "v10")):
        if uu in out and vv in out:
            gu, gv = _is_grid_relative(sources[uu]), _is_grid_relative(sources[vv])
            if gu != gv:
                raise input_error(
                    where,
                    f"'{sources[uu].name}' and '{sources[vv].name}' disagree on grid-relative "
                    "winds; expected both grid-relative or both earth-relative",
                )
            if gu:
                ca = xr.DataArray(np.cos(angle), dims=("y", "x"))
                sa = xr.DataArray(np.sin(angle), dims=("y", "x"))
                ug, vg = out[uu], out[vv]
                out[uu] = ug * ca - vg * sa
                out[vv] = ug * sa + vg * ca
                rotation = "grid-relative winds rotated to earth-relative"
    return out, rotation
