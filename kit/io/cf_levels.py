"""Pressure levels: find a file's pressure-level dimension, in hPa, and put fields on it.

The canonical ``level`` coordinate holds pressure [hPa, float64], sorted from
high to low pressure (1000 first). A level dimension is recognised by
``standard_name`` ``air_pressure``, by pressure units or by its name
(``level``, ``isobaricInhPa``, ``plev`` ...); without units a largest level
above 1100 means Pa. Other vertical coordinates (model levels, height,
potential temperature) are refused with a message saying to interpolate to
pressure levels first. A single-level file may carry its level as a scalar
pressure coordinate instead.
"""

import numpy as np

from kit.errors import InputError
from kit.io.cf_units import linear_conversion, parse_units, units_of
from kit.io.messages import input_error, join_names

__all__ = [
    "pressure_level_dims",
    "scalar_pressure_hpa",
    "surface_height_m",
    "canonical_levels",
    "onto_levels",
]

_LEVEL_DIM_NAMES = (
    "level",
    "isobaricInhPa",
    "isobaricInPa",
    "pressure",
    "plev",
    "lev",
    "pressure_level",
    "pressure_levels",
    "isobaric",
    "lv_ISBL0",
    "lv_ISBL1",
    "air_pressure",
    "p",
    "levels",
    "plevel",
    "pres",
)


_NOT_PRESSURE_STD = (
    "atmosphere_hybrid_sigma_pressure_coordinate",
    "model_level_number",
    "atmosphere_sigma_coordinate",
    "atmosphere_hybrid_height_coordinate",
    "altitude",
    "atmosphere_sleve_coordinate",
    "air_potential_temperature",
)


def pressure_level_dims(ds, where):
    """Map each pressure-level dimension name to its values in hPa.

    Parameters
    ----------
    ds : xarray.Dataset
        One file.
    where : str
        File named in error messages.

    Returns
    -------
    dict
        ``{dimension name: levels [hPa] as float64 array}``, in file order.

    Raises
    ------
    kit.errors.InputError
        A vertical coordinate is not pressure (model levels, height,
        potential temperature), or a level coordinate has non-pressure units.
    """
    found = {}
    for dim in ds.dims:
        if dim not in ds.coords:
            continue
        c = ds.coords[dim]
        if c.ndim != 1:
            continue
        std = c.attrs.get("standard_name", "")
        units = units_of(c)
        pressure_units = False
        if units is not None:
            try:
                q = parse_units(units, where, dim, "Pa or hPa")
                pressure_units = dict(q.dimensionality) == {
                    "[mass]": 1,
                    "[length]": -1,
                    "[time]": -2,
                }
            except InputError:
                pressure_units = False
        named = dim in _LEVEL_DIM_NAMES or dim.lower() in {n.lower() for n in _LEVEL_DIM_NAMES}
        if std in _NOT_PRESSURE_STD:
            raise input_error(
                where,
                f"vertical coordinate '{dim}' is {std}, not pressure; expected pressure levels "
                "(standard_name air_pressure, in hPa or Pa): interpolate to pressure levels first",
            )
        if std == "air_pressure" or pressure_units or (named and units is None):
            if units is not None and not pressure_units:
                raise input_error(
                    where, f"level coordinate '{dim}' has unit '{units}'; expected Pa or hPa"
                )
            vals = np.asarray(c.values, dtype=np.float64)
            if units is None:
                hpa = vals / 100.0 if np.nanmax(vals) > 1100.0 else vals
            else:
                scale, _ = linear_conversion(
                    parse_units(units, where, dim, "Pa or hPa"), "hPa", where, dim, "Pa or hPa"
                )
                hpa = vals * scale
            found[dim] = hpa
        elif named or (c.attrs.get("axis") == "Z" and dim not in ("height", "heightAboveGround")):
            if std in ("height",) or dim in (
                "height",
                "heightAboveGround",
                "height2m",
                "height10m",
            ):
                continue
            what = std or c.attrs.get("long_name") or f"unit '{units}'"
            raise input_error(
                where,
                f"vertical coordinate '{dim}' is {what}, not pressure; expected pressure levels "
                "(standard_name air_pressure, in hPa or Pa): interpolate to pressure levels first",
            )
    return found


def scalar_pressure_hpa(da, where):
    """Pressure of a variable's scalar pressure coordinate [hPa], or None.

    Parameters
    ----------
    da : xarray.DataArray
        A variable of a single-level file.
    where : str
        File named in error messages.

    Returns
    -------
    float or None
        [hPa]; without units a value above 1100 is taken as Pa.
    """
    for name, c in da.coords.items():
        if c.ndim != 0 or name in da.dims:
            continue
        std = c.attrs.get("standard_name", "")
        units = units_of(c)
        if std == "air_pressure" or name in _LEVEL_DIM_NAMES:
            try:
                val = float(c.values)
            except (TypeError, ValueError):
                continue
            if units is None:
                return val / 100.0 if val > 1100.0 else val
            scale, off = linear_conversion(
                parse_units(units, where, name, "Pa or hPa"), "hPa", where, name, "Pa or hPa"
            )
            return val * scale + off
    return None


def surface_height_m(da):
    """Height above ground of a near-surface variable [m] from its coordinates, or None.

    Parameters
    ----------
    da : xarray.DataArray
        A variable with a scalar or size-1 ``height``-like coordinate (2 m, 10 m).

    Returns
    -------
    float or None
        [m] as stored (no unit conversion).
    """
    for name, c in da.coords.items():
        if c.attrs.get("standard_name") == "height" or name in (
            "height",
            "heightAboveGround",
            "height2m",
            "height10m",
            "height_above_ground",
        ):
            vals = np.atleast_1d(np.asarray(c.values, dtype=np.float64))
            if vals.size == 1:
                return float(vals[0])
    return None


def canonical_levels(ds, t_name, level_dims, where):
    """Make the pressure levels of temperature the file's ``level`` dimension [hPa].

    Parameters
    ----------
    ds : xarray.Dataset
        One file.
    t_name : str
        The file variable that is air temperature on pressure levels; its
        level dimension (or scalar pressure) defines the levels.
    level_dims : dict
        Pressure-level dimensions of the file and their values [hPa], from
        :func:`pressure_level_dims`.
    where : str
        File named in error messages.

    Returns
    -------
    ds : xarray.Dataset
        Temperature's level dimension renamed ``level``, values in hPa, sorted
        1000 first.
    levels : numpy.ndarray
        The levels [hPa], in that order.
    main_level_dim : str or None
        ``"level"``, or None when temperature has a scalar pressure only.
    level_dims : dict
        ``level_dims`` with the renamed dimension.

    Raises
    ------
    kit.errors.InputError
        A level appears twice.
    """
    t_var = ds[t_name]
    tdims = [d for d in t_var.dims if d in level_dims]
    if tdims:
        main_level_dim = tdims[0]
        levels = level_dims[main_level_dim]
    else:
        main_level_dim = None
        levels = np.array([scalar_pressure_hpa(t_var, where)])
    if np.unique(levels).size != levels.size:
        raise input_error(
            where,
            f"duplicate pressure levels in '{main_level_dim}' ({join_names(levels)} hPa); "
            "expected distinct levels",
        )
    if main_level_dim is not None:
        # one rename for the whole file; variables on it need no per-variable work
        lev_order = np.argsort(-levels, kind="stable")
        if main_level_dim in ds.coords:
            ds = ds.drop_vars(main_level_dim)
        if main_level_dim != "level":
            if "level" in ds.variables:
                ds = ds.drop_vars("level")
            ds = ds.rename({main_level_dim: "level"})
        levels = levels[lev_order]
        if not np.array_equal(lev_order, np.arange(levels.size)):
            ds = ds.isel(level=lev_order)
        ds = ds.assign_coords(level=("level", levels))
        level_dims = {("level" if k == main_level_dim else k): v for k, v in level_dims.items()}
        level_dims["level"] = levels
        main_level_dim = "level"
    return ds, levels, main_level_dim, level_dims


def onto_levels(da, name, levels, main_dim, level_dims, where):
    """Put an upper-air variable on the ``level`` dimension with t's levels [hPa].

    Parameters
    ----------
    da : xarray.DataArray
        An upper-air variable of the file.
    name : str
        Its file name, for error messages.
    levels : array_like
        Temperature's levels [hPa], 1000 first.
    main_dim : str or None
        Temperature's level dimension (``"level"`` after :func:`canonical_levels`).
    level_dims : dict
        Pressure-level dimensions of the file [hPa].
    where : str
        File named in error messages.

    Returns
    -------
    xarray.DataArray
        On ``level`` = ``levels``; levels temperature has and ``da`` lacks are NaN.

    Raises
    ------
    kit.errors.InputError
        ``da`` has no pressure level, or shares none with temperature.
    """
    dims = [d for d in da.dims if d in level_dims]
    if dims == [main_dim] and main_dim == "level":
        return da
    if not dims:
        p = scalar_pressure_hpa(da, where)
        if p is None:
            raise input_error(
                where, f"variable '{name}' has no pressure level; expected it on pressure levels"
            )
        da = da.expand_dims(level=[p])
        own = np.array([p])
        dim = "level"
    else:
        dim = dims[0]
        own = level_dims[dim]
        if dim in da.coords:
            da = da.drop_vars(dim)
        da = da.rename({dim: "level"}) if dim != "level" else da
        da = da.assign_coords(level=("level", own))
    levels = np.asarray(levels, dtype=np.float64)
    if own.size == levels.size and np.allclose(own, levels):
        return da.assign_coords(level=("level", levels))
    if own.size == levels.size and np.allclose(np.sort(own), np.sort(levels)):
        idx = [int(np.argmin(np.abs(own - lv))) for lv in levels]
        return da.isel(level=idx).assign_coords(level=("level", levels))
    common = np.intersect1d(np.round(own, 6), np.round(levels, 6))
    if common.size == 0:
        raise input_error(
            where,
            f"variable '{name}' is on levels {join_names(own)} hPa and temperature on "
            f"{join_names(levels)} hPa; "
            "expected shared pressure levels",
        )
    da = da.assign_coords(level=np.round(own, 6))
    return da.reindex(level=np.round(np.asarray(levels, dtype=np.float64), 6))
