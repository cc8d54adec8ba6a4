"""Open model runs (CF NetCDF or GRIB) as the canonical Dataset of the kit.

:func:`open_run` takes one file, a list of files, a glob or a folder holding
the files of ONE model run (one file per step, one file for the whole run, or
one file per ensemble member) and returns the canonical Dataset described in
DEVELOPERS.md: known variable names (``t, td, u, v, z`` on pressure levels;
optional ``mslp, t2m, td2m, u10, v10, precip``), SI units, ``level`` in hPa
(1000 first), valid ``time`` with a scalar ``reference_time``, latitude
ascending, longitudes continuous, projected grids described by ``y, x`` in
metres with 2-D ``lat``/``lon``. Arrays stay dask-backed (lazy) unless
``chunks=None``.

This module assembles the run; each step is documented where it is done:

* :mod:`kit.io.discover` -- which files a RUN argument (file, glob, folder) names,
  and whether each is GRIB or NetCDF (by content, not name);
* :mod:`kit.io.netcdf` -- checking and opening one NetCDF file lazily;
* :mod:`kit.io.grib` -- checking one GRIB file and opening it with cfgrib in
  the same CF-like form;
* :mod:`kit.io.cf_time` -- valid time, reference time and lead time;
* :mod:`kit.io.cf_levels` -- pressure levels [hPa];
* :mod:`kit.io.cf_roles` -- which variable is temperature, wind, height ...
  (by CF ``standard_name``, then by common short names);
* :mod:`kit.io.cf_units` -- unit conversion into the kit's units (pint) and the
  sample-based value checks;
* :mod:`kit.io.cf_grid` -- regular and projected grids, earth-relative winds;
* :mod:`kit.io.members` -- ensemble members;
* :mod:`kit.io.precip` -- precipitation amounts to rates over the step ending
  at ``time`` [mm h-1].

Values are sanity-checked on a small sample of the first valid time of the
first file only, so a large run is not read whole: a required field that is
entirely NaN there raises InputError; an optional field that is entirely NaN
there is dropped with a warning. All-NaN later steps pass through as NaN.

Dew point
---------
``td`` is taken as given when the file has dew point; otherwise it is derived
from relative humidity (clipped to 0.001..1, so super-saturation gives td = t)
or from specific humidity (floored at 1e-7 kg kg-1) with
:func:`kit.science.thermo.dewpoint_from_relative_humidity` /
:func:`kit.science.thermo.dewpoint_from_specific_humidity` (Bolton 1980, Eq. 10
inverted). ``td2m`` likewise from 2 m humidity.

Several files
-------------
Several files of one run are combined by valid time (and by member where each
file holds one member); files on different grids, levels or members raise an
InputError naming both files and what differs. An optional field missing from
some files (precipitation at lead 0, say) is NaN there (an accumulation is 0
at the run start). Valid times out of order are sorted; a valid time given
twice is an error. A folder of analyses (each file's reference time equal to
its valid time) is accepted as one sequence with the first valid time as
``reference_time``; without any reference time the first valid time is the
run's. ``attrs["run"]`` is a label like ``2027-01-14T00Z``.

Attributes of the result
------------------------
``run`` (label), ``source`` (file names), ``source_format`` (``NetCDF`` or
``GRIB edition 2`` ...), ``grid`` (``latlon`` or
``projected``), ``dx_m``/``dy_m`` [m] on projected grids, ``wind_rotation``
(what was done to the winds), ``variables_from`` (``t<-TMP, ...``: which file
variable filled each role) and ``kind == "analyses"`` for a folder of
analyses. A file's scalar ensemble coordinate (e.g. ``number`` of a single
member) is kept as a scalar ``member`` coordinate.
"""

import os

import numpy as np
import pandas as pd
import xarray as xr

from kit.io.cf_grid import canonical_horizontal_grid, find_lat_lon, rotate_winds_to_earth
from kit.io.cf_levels import canonical_levels, onto_levels, pressure_level_dims
from kit.io.cf_roles import CANONICAL_NAMES, UPPER_AIR_ROLES, check_required_roles, find_roles
from kit.io.cf_time import to_valid_time
from kit.io.cf_units import (
    CANONICAL_UNITS,
    check_sample_values,
    to_geopotential_height,
    to_humidity_fraction,
    to_kelvin,
    to_metres_per_second,
    to_pascal,
    to_specific_humidity,
)
from kit.io.discover import check_one_kind, expand_run_arg
from kit.io.grib import open_grib
from kit.io.members import canonical_member, select_member
from kit.io.messages import input_error, join_names
from kit.io.netcdf import open_netcdf
from kit.io.precip import accumulation_starts, convert_precip, rate_from_accumulation
from kit.science import thermo
from kit.science.motion import geostrophic_wind

__all__ = [
    "CANONICAL_UNITS",
    "expand_run_arg",
    "open_run",
    "open_runs",
    "to_canonical",
    "run_label",
    "reference_time",
    "oldest_first",
]

#: coordinates a canonical field keeps (the rest of a file's coordinates are dropped)
_KEPT_COORDS = (
    "lat",
    "lon",
    "x",
    "y",
    "crs",
    "rlon",
    "rlat",
    "map_factor",
    "map_factor_x",
    "map_factor_y",
)


def _fmt_time(t):
    return pd.Timestamp(t).strftime("%Y-%m-%dT%H:%MZ")


def reference_time(ds):
    """Return the reference time of a canonical run [datetime64[ns]]; NaT when it has none.

    Examples
    --------
    >>> import xarray as xr
    >>> str(reference_time(xr.Dataset(coords={"reference_time": np.datetime64("2027-01-14")})))
    '2027-01-14T00:00:00.000000000'
    """
    if "reference_time" in ds.coords:
        return np.datetime64(ds["reference_time"].values, "ns")
    return np.datetime64("NaT", "ns")


def oldest_first(runs):
    """Order of runs by reference time, oldest first (the last is the newest).

    "Newest" is the latest reference time everywhere in the kit (commands,
    shift products, panels); runs of one reference time (members in separate
    folders) keep the order given.

    Parameters
    ----------
    runs : list of xarray.Dataset

    Returns
    -------
    list of int
        Indices into ``runs``.
    """
    return sorted(range(len(runs)), key=lambda i: (reference_time(runs[i]), i))


def run_label(reference_time):
    """Run label of a reference time, as the kit prints it.

    Parameters
    ----------
    reference_time : datetime-like
        Run start (analysis time) [UTC].

    Returns
    -------
    str
        ``YYYY-MM-DDTHHZ``, or ``YYYY-MM-DDTHHMMZ`` when the minutes are not 0.

    Examples
    --------
    >>> run_label("2027-01-14T00:00")
    '2027-01-14T00Z'
    """
    ts = pd.Timestamp(reference_time)
    if ts.tzinfo is not None:
        ts = ts.tz_convert("UTC").tz_localize(None)
    return ts.strftime("%Y-%m-%dT%HZ" if ts.minute == 0 else "%Y-%m-%dT%H%MZ")


# --------------------------------------------------------------------------- one file
def _canonicalise_file(raw, where):
    """Turn one opened file into canonical fields; returns (ds, info).

    Time, levels, roles, grid and members are made canonical and every field
    converted into the kit's units; dew point is not derived yet (``_rh``,
    ``_q`` ... carry the humidity) and precipitation may still be an amount.
    ``info`` holds what combining the files needs: reference time, precipitation
    kind and time bounds, scalar member, wind rotation and the roles found.
    """
    ds = raw
    # promote 2-D lat/lon data variables to coordinates
    lat_name, lon_name = find_lat_lon(ds)
    promote = [n for n in (lat_name, lon_name) if n and n in ds.data_vars]
    if promote:
        ds = ds.set_coords(promote)
    ds, ref = to_valid_time(ds, where)
    level_dims = pressure_level_dims(ds, where)
    roles, candidates = find_roles(ds, level_dims, where)
    check_required_roles(ds, roles, candidates, level_dims, where)
    # the level dimension of t defines the levels
    ds, levels, main_level_dim, level_dims = canonical_levels(ds, roles["t"][0], level_dims, where)
    ds, ydim, xdim, angle = canonical_horizontal_grid(ds, where)
    ds, member_scalar = canonical_member(ds, where)
    out, extra, precip_kind = _fields_in_kit_units(
        ds, roles, levels, main_level_dim, level_dims, (ydim, xdim), where
    )
    winds = {r: ds[roles[r][0]] for r in ("u", "v", "u10", "v10") if r in roles}
    out, rotation = rotate_winds_to_earth(out, winds, angle, where)
    info = {
        "ref": ref,
        "precip_kind": precip_kind,
        "member_scalar": member_scalar,
        "rotation": rotation,
        "roles": {k: v[0] for k, v in roles.items()},
    }
    if precip_kind == "amount":
        info["precip_lower"] = accumulation_starts(raw, where)
    for k, (da, _name) in extra.items():
        out[f"_{k}"] = da
    for k, da in out.items():
        order = [d for d in ("member", "time", "level", ydim, xdim) if d in da.dims]
        if list(da.dims) != order:
            out[k] = da.transpose(*order)
    res = xr.Dataset(out)
    # level coordinate
    if "level" not in res.coords:
        res = res.assign_coords(level=("level", np.asarray(levels, dtype=np.float64)))
    lv = res["level"].values
    if lv.size > 1 and np.any(np.diff(lv) >= 0):
        res = res.isel(level=np.argsort(-lv, kind="stable"))
    res.attrs = {
        k: v
        for k, v in ds.attrs.items()
        if k in ("grid", "dx_m", "dy_m", "grid_mapping_name", "native_grid_unit", "source_format")
    }
    return res, info


def _fields_in_kit_units(ds, roles, levels, main_level_dim, level_dims, grid_dims, where):
    """Each role's variable on canonical dimensions, converted into the kit's units.

    Returns ``(fields, humidity, precip_kind)``: the canonical fields by role;
    the humidity to derive dew points from (``{"rh": (values, name)}`` and so
    on, when the file has no dew point); and ``"amount"``, ``"rate"`` or None.
    """
    ydim, xdim = grid_dims
    out = {}

    def prep(role):
        name = roles[role][0]
        da = ds[name]
        # extra size-1 dimensions (height, a single level of a surface field ...)
        for d in list(da.dims):
            if d in ("time", ydim, xdim, "member") or d == main_level_dim:
                continue
            if d in level_dims and role in UPPER_AIR_ROLES:
                continue
            if da.sizes[d] == 1:
                da = da.isel({d: 0}, drop=True)
            else:
                raise input_error(
                    where,
                    f"variable '{name}' has an extra dimension '{d}' of {da.sizes[d]}; "
                    f"expected dimensions [member,] time, [level,] {ydim}, {xdim}",
                )
        if role in UPPER_AIR_ROLES:
            da = onto_levels(da, name, levels, main_level_dim, level_dims, where)
        drop = [c for c in da.coords if c not in da.dims and c not in _KEPT_COORDS]
        return da.drop_vars(drop), name

    for role in ("t", "td", "t2m", "td2m"):
        if role in roles:
            da, name = prep(role)
            out[role] = to_kelvin(da, where, name, role)
    for role in ("u", "v", "u10", "v10"):
        if role in roles:
            da, name = prep(role)
            out[role] = to_metres_per_second(da, where, name)
    da, name = prep("z")
    out["z"] = to_geopotential_height(da, where, name, levels)
    if "mslp" in roles:
        da, name = prep("mslp")
        out["mslp"] = to_pascal(da, where, name)
    # the model surface, for masking pressure levels below the ground
    if "ps" in roles:
        da, name = prep("ps")
        out["ps"] = to_pascal(da, where, name)
    if "zsfc" in roles:
        da, name = prep("zsfc")
        out["zsfc"] = to_geopotential_height(da, where, name, None)
    extra = {}
    if "td" not in out:
        if "rh" in roles:
            da, name = prep("rh")
            extra["rh"] = (to_humidity_fraction(da, where, name), name)
        elif "q" in roles:
            da, name = prep("q")
            extra["q"] = (to_specific_humidity(da, where, name), name)
    if "td2m" not in out and "t2m" in out:
        if "rh2m" in roles:
            da, name = prep("rh2m")
            extra["rh2m"] = (to_humidity_fraction(da, where, name), name)
        elif "q2m" in roles and "ps" in roles:
            da, name = prep("q2m")
            extra["q2m"] = (to_specific_humidity(da, where, name), name)
            dp, pname = prep("ps")
            extra["ps"] = (to_pascal(dp, where, pname), pname)
    precip_kind = None
    if "precip" in roles:
        da, name = prep("precip")
        out["precip"], precip_kind = convert_precip(da, where, name)
    return out, extra, precip_kind


# --------------------------------------------------------------------------- combining
def _grid_signature(ds):
    """1-D grid, level and member coordinates of a file [float64], by name."""
    out = {}
    for c in ("lat", "lon", "x", "y", "level"):
        if c in ds.coords and ds[c].ndim == 1:
            out[c] = np.asarray(ds[c].values, dtype=np.float64)
    if "member" in ds.dims:
        out["member"] = np.asarray(ds["member"].values, dtype=np.float64)
    return out


def _describe(name, arr):
    """Short description of a coordinate for a message: size and range."""
    if arr.size == 0:
        return f"{name}: none"
    return f"{name} {arr.size} values {arr.min():g}..{arr.max():g}"


def _check_same_grid(a, fa, b, fb):
    """Raise unless two files of a run have the same grid, levels, members and variables."""
    sa, sb = _grid_signature(a), _grid_signature(b)
    if a.attrs.get("grid") != b.attrs.get("grid"):
        raise input_error(
            f"{fa} vs {fb}",
            f"different grid types ({a.attrs.get('grid')} vs "
            f"{b.attrs.get('grid')}); expected files of one run on one grid",
        )
    for key in sorted(set(sa) | set(sb)):
        va, vb = sa.get(key), sb.get(key)
        if va is None or vb is None:
            raise input_error(
                f"{fa} vs {fb}", f"'{key}' present in only one file; expected the same grid"
            )
        if va.shape != vb.shape or not np.allclose(
            va, vb, rtol=0, atol=1e-6 * max(1.0, np.nanmax(np.abs(va)))
        ):
            what = "levels" if key == "level" else ("members" if key == "member" else "grid")
            unit = " hPa" if key == "level" else ""
            raise input_error(
                f"{fa} vs {fb}",
                f"different {what}: {_describe(key, va)}{unit} vs {_describe(key, vb)}{unit}; "
                "expected files of one run on the same grid and levels",
            )
    if set(a.data_vars) != set(b.data_vars):
        only_a = sorted(set(a.data_vars) - set(b.data_vars))
        only_b = sorted(set(b.data_vars) - set(a.data_vars))
        raise input_error(
            f"{fa} vs {fb}",
            f"different variables (only in first: {join_names(only_a)}; "
            f"only in second: {join_names(only_b)}); "
            "expected the same variables in every file of a run",
        )


def _harmonise_optional(parts, dropped):
    """Give every file the same variables: drop ``dropped``, fill absent optional ones.

    An optional field (mslp, t2m, precip ...) missing from some files of a run
    (commonly precipitation at lead 0) is added there as NaN; an accumulated
    precipitation missing at the run's reference time is 0 by definition.
    """
    parts = [(d.drop_vars([v for v in dropped if v in d]), inf, p) for d, inf, p in parts]
    names = []
    for d, _inf, _p in parts:
        names += [v for v in d.data_vars if v not in names]
    kinds = {inf["precip_kind"] for _d, inf, _p in parts if inf["precip_kind"]}
    if len(kinds) > 1:
        a = next(p for _d, inf, p in parts if inf["precip_kind"] == "amount")
        b = next(p for _d, inf, p in parts if inf["precip_kind"] == "rate")
        raise input_error(
            f"{a} vs {b}",
            "precipitation is an amount in one file and a rate in the other; expected one kind "
            "per run",
        )
    kind = kinds.pop() if kinds else None
    out = []
    for d, inf, p in parts:
        inf = dict(inf, precip_kind=kind)
        for v in names:
            if v in d.data_vars:
                continue
            if v.lstrip("_") in UPPER_AIR_ROLES:
                other = next(pp for dd, _i, pp in parts if v in dd.data_vars)
                raise input_error(
                    f"{other} vs {p}",
                    f"different variables ('{v.lstrip('_')}' only in the first); expected the "
                    "same upper-air fields in every file of a run",
                )
            template = d["t"].isel(level=0, drop=True)
            fill = np.nan
            ref = inf["ref"]
            if (
                v == "precip"
                and kind == "amount"
                and isinstance(ref, np.datetime64)
                and d["time"].size == 1
                and d["time"].values[0] == ref
            ):
                fill = 0.0
            d = d.assign({v: xr.full_like(template, fill, dtype=np.float64)})
        out.append((d, inf, p))
    return out


def _concat_files(parts, where_all):
    """Join the files of a run by valid time, then by member (one file per member).

    Returns ``(ds, member_scalar, n_groups)``: the joined fields, the run's
    single member number (None unless every file carries the same scalar
    member) and the number of member groups.
    """
    # group by scalar member (one file per member) then by time
    groups = {}
    for ds, info, path in parts:
        groups.setdefault(info["member_scalar"], []).append((ds, info, path))
    first_ds, _first_info, first_path = parts[0]
    for ds, _info, path in parts[1:]:
        _check_same_grid(first_ds, first_path, ds, path)
    combined = []
    for mkey, items in groups.items():
        seen = {}
        for ds, _info, path in items:
            for t in ds["time"].values:
                if t in seen:
                    other = seen[t]
                    where = f"{other} vs {path}" if other != path else str(path)
                    raise input_error(
                        where,
                        f"duplicate valid time {_fmt_time(t)}; expected each valid "
                        "time once per run",
                    )
                seen[t] = path
        if len(items) == 1:
            merged = items[0][0]
        else:
            merged = xr.concat(
                [it[0] for it in items],
                dim="time",
                data_vars="all",
                coords="minimal",
                compat="override",
                join="override",
            )
        merged = merged.sortby("time")
        combined.append((mkey, merged))
    if len(combined) > 1:
        keys = [k for k, _ in combined]
        if any(k is None for k in keys):
            raise input_error(
                where_all,
                "files disagree on ensemble member (some have none); expected one member "
                "per file or none",
            )
        t0 = combined[0][1]["time"].values
        for k, d in combined[1:]:
            if not np.array_equal(d["time"].values, t0):
                raise input_error(
                    where_all,
                    f"member {k} has other valid times than member {combined[0][0]}; "
                    "expected the same steps for every member",
                )
        order = sorted(combined, key=lambda kv: kv[0])
        ds = xr.concat(
            [d for _, d in order],
            dim="member",
            coords="minimal",
            compat="override",
            join="override",
        )
        ds = ds.assign_coords(member=("member", np.array([k for k, _ in order], dtype=np.int64)))
        mscalar = None
    else:
        ds = combined[0][1]
        mscalar = combined[0][0]
    return ds, mscalar, len(groups)


def _precip_rates(ds, parts, n_groups, times, ref):
    """Precipitation rate of the joined run [mm h-1] from accumulated amounts [mm]."""
    lowers = [info.get("precip_lower") for _, info, _ in parts]
    lower = None
    if all(lw is not None for lw in lowers):
        cat = np.concatenate(lowers) if n_groups == 1 else lowers[0]
        ptimes = np.concatenate([p[0]["time"].values for p in parts]) if n_groups == 1 else times
        order = np.argsort(ptimes)
        cat = cat[order] if cat.size == order.size else None
        lower = cat
    ref_for = ref if isinstance(ref, np.datetime64) else None
    return rate_from_accumulation(ds["precip"], times, ref_for, lower)


def _derive_dew_points(ds):
    """Dew points ``td``/``td2m`` [K] from the humidity a run carries instead of them."""
    if "_rh" in ds:
        rh = ds["_rh"].clip(min=0.001, max=1.0)
        ds["td"] = thermo.dewpoint_from_relative_humidity(ds["t"], rh)
        ds = ds.drop_vars("_rh")
    elif "_q" in ds:
        q = ds["_q"].clip(min=1e-7)
        ds["td"] = thermo.dewpoint_from_specific_humidity(q, ds["level"])
        ds = ds.drop_vars("_q")
    if "_rh2m" in ds:
        ds["td2m"] = thermo.dewpoint_from_relative_humidity(
            ds["t2m"], ds["_rh2m"].clip(min=0.001, max=1.0)
        )
        ds = ds.drop_vars("_rh2m")
    elif "_q2m" in ds:
        ds["td2m"] = thermo.dewpoint_from_specific_humidity(
            ds["_q2m"].clip(min=1e-7), ds["_ps"] / 100.0
        )
        ds = ds.drop_vars(["_q2m", "_ps"])
    return ds


def _combine_files(parts, ref, where_all, member):
    """Join the canonical fields of a run's files and finish the fields.

    Files are joined by time and member, accumulated precipitation becomes a
    rate, dew points are derived and the ``member`` asked for is kept. Returns
    ``(ds, times)`` with the sorted valid times [datetime64[ns]].
    """
    ds, mscalar, n_groups = _concat_files(parts, where_all)
    times = np.asarray(ds["time"].values, dtype="datetime64[ns]")
    if any(info["precip_kind"] == "amount" for _d, info, _p in parts) and "precip" in ds:
        ds["precip"] = _precip_rates(ds, parts, n_groups, times, ref)
    ds = _derive_dew_points(ds)
    ds = select_member(ds, member, mscalar, where_all)
    return ds, times


def to_canonical(raw, *, source="dataset", member=None):
    """Canonicalise an already opened xarray Dataset of one model run.

    Parameters
    ----------
    raw : xarray.Dataset
        One model run as read from CF NetCDF (any of the layouts
        :func:`open_run` accepts).
    source : str, optional
        Name used in error messages and ``attrs["source"]``.
    member : int, optional
        Ensemble member to select.

    Returns
    -------
    xarray.Dataset
        The canonical Dataset (see the module docstring and DEVELOPERS.md).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> def field(value, units, std):
    ...     return (("time", "plev", "lat", "lon"), np.full((1, 2, 3, 3), value),
    ...             {"units": units, "standard_name": std})
    >>> raw = xr.Dataset(
    ...     {"ta": field(5.0, "degC", "air_temperature"),
    ...      "hur": field(80.0, "%", "relative_humidity"),
    ...      "ua": field(10.0, "knots", "eastward_wind"),
    ...      "va": field(0.0, "m s-1", "northward_wind"),
    ...      "zg": field(1400.0, "m", "geopotential_height")},
    ...     coords={"time": [np.datetime64("2027-01-14T06", "ns")],
    ...             "plev": ("plev", [85000.0, 100000.0], {"units": "Pa"}),
    ...             "lat": [52.0, 51.0, 50.0], "lon": [0.0, 1.0, 2.0]})
    >>> ds = to_canonical(raw)
    >>> ds["level"].values.tolist(), ds["lat"].values.tolist()
    ([1000.0, 850.0], [50.0, 51.0, 52.0])
    >>> round(float(ds["t"][0, 0, 0, 0]), 2), round(float(ds["u"][0, 0, 0, 0]), 3)
    (278.15, 5.144)
    >>> ds.attrs["run"]
    '2027-01-14T06Z'
    """
    if not isinstance(raw, xr.Dataset):
        raise input_error(source, f"expected an xarray.Dataset, got {type(raw).__name__}")
    ds, info = _canonicalise_file(raw, source)
    ds = check_sample_values(ds, source)
    return _assemble_run([(ds, info, source)], source, member)


def _run_reference_time(parts):
    """Find the reference time a run's files share: ``(reference or None, analyses)``.

    ``analyses`` is True for a sequence of analyses (each file's reference time
    its own valid time); files of different runs raise InputError.
    """
    refs = [info["ref"] for _, info, _ in parts]
    ref = None
    analyses = False
    plain = [r for r in refs if r is not None and not isinstance(r, tuple)]
    if any(isinstance(r, tuple) for r in refs):
        analyses = True
    if plain:
        uniq = np.unique(np.asarray(plain, dtype="datetime64[ns]"))
        if uniq.size == 1:
            ref = uniq[0]
        else:
            # a folder of analyses: each file's reference equals its valid time
            each = all(
                r is not None
                and not isinstance(r, tuple)
                and ds["time"].size == 1
                and np.datetime64(r, "ns") == ds["time"].values[0]
                for ds, info, _ in parts
                for r in [info["ref"]]
            )
            if not each:
                a = next(p for p in parts if p[1]["ref"] == uniq[0])[2]
                b = next(p for p in parts if p[1]["ref"] == uniq[1])[2]
                raise input_error(
                    f"{a} vs {b}",
                    f"different runs (reference times {_fmt_time(uniq[0])} and "
                    f"{_fmt_time(uniq[1])}); "
                    "expected the files of one run",
                )
            analyses = True
    return ref, analyses


def _assemble_run(parts, where_all, member):
    """Build the canonical Dataset of a run from its files' canonical fields."""
    ref, analyses = _run_reference_time(parts)
    ds, times = _combine_files(parts, ref, where_all, member)
    if ref is None or analyses:
        ref = times[0]
    ref = np.datetime64(ref, "ns")
    if not analyses and times[0] < ref:
        raise input_error(
            where_all,
            f"first valid time {_fmt_time(times[0])} is before the reference time "
            f"{_fmt_time(ref)}; expected valid times at or after the run start",
        )
    ds = ds.assign_coords(reference_time=ref)
    ds["reference_time"].attrs = {
        "standard_name": "forecast_reference_time",
        "long_name": "run start",
    }
    ds["time"].attrs = {"standard_name": "time", "long_name": "valid time (UTC)"}
    ds["level"].attrs = {
        "standard_name": "air_pressure",
        "units": "hPa",
        "long_name": "pressure level",
    }
    # order of dimensions and attributes
    ydim, xdim = ("y", "x") if ds.attrs.get("grid") == "projected" else ("lat", "lon")
    for name in list(ds.data_vars):
        da = ds[name]
        order = [d for d in ("member", "time", "level", ydim, xdim) if d in da.dims]
        if list(da.dims) != order:
            ds[name] = da.transpose(*order)
        std, long = CANONICAL_NAMES.get(name, (None, name))
        attrs = {"units": CANONICAL_UNITS.get(name, ""), "long_name": long}
        if std:
            attrs["standard_name"] = std
        ds[name].attrs = attrs
        ds[name].encoding = {}
    canonical_order = [n for n in CANONICAL_UNITS if n in ds.data_vars]
    ds = ds[canonical_order]
    first_info = parts[0][1]
    sources = [os.path.basename(str(p)) for _, _, p in parts]
    ds.attrs.update(
        run=run_label(ref),
        source=", ".join(sources)
        if len(sources) <= 6
        else f"{sources[0]} .. {sources[-1]} ({len(sources)} files)",
        wind_rotation=first_info["rotation"],
        source_format=parts[0][0].attrs.get("source_format", "NetCDF"),
        variables_from=", ".join(f"{k}<-{v}" for k, v in first_info["roles"].items()),
    )
    if analyses:
        ds.attrs["kind"] = "analyses"
    return _thin_run(ds)


def _thin_run(ds):
    """Complete a run without winds or humidity on its levels, and say what was done.

    No winds: geostrophic winds from the heights (:func:`kit.science.motion.
    geostrophic_wind`), NaN within 10 degrees of the equator, where geostrophy
    fails. No humidity: no dew point; the fronts are then found in theta
    (Thomas & Schultz 2019), by :func:`kit.pipeline.analyse`. ``attrs["thin"]``
    lists what the run lacks and what was done instead (empty when nothing).
    """
    thin = []
    if "u" not in ds or "v" not in ds:
        ug, vg = geostrophic_wind(ds["z"], ds, "height")
        ds["u"] = ug.transpose(*ds["z"].dims)
        ds["v"] = vg.transpose(*ds["z"].dims)
        for name in ("u", "v"):
            std, long = CANONICAL_NAMES[name]
            ds[name].attrs = {
                "units": "m s-1",
                "standard_name": std,
                "long_name": f"geostrophic {long} from geopotential height",
                "derived": "geostrophic",
            }
        ds = ds[[n for n in CANONICAL_UNITS if n in ds.data_vars]]
        thin.append(
            "no wind on pressure levels: geostrophic wind from the heights "
            "(none within 10 degrees of the equator)"
        )
    if "td" not in ds:
        thin.append("no humidity on pressure levels: fronts found in theta, not theta-w")
    if "mslp" not in ds:
        thin.append("no mean-sea-level pressure: troughs looked for in the 850-hPa height")
    ds.attrs["thin"] = "; ".join(thin)
    return ds


# --------------------------------------------------------------------------- public
def open_run(paths, *, member=None, chunks="auto"):
    """Open the files of one model run as the canonical Dataset.

    Parameters
    ----------
    paths : str, os.PathLike or list of them
        One NetCDF or GRIB file, a glob, a folder, or a list of any of these,
        all of ONE model run (a file per step, one file, or a file per
        member), all in one format.
    member : int, optional
        Ensemble member to select (the ``member`` dimension is then dropped
        and ``member`` kept as a scalar coordinate). Default: keep all.
    chunks : "auto", dict or None, optional
        dask chunking passed to :func:`xarray.open_dataset`; ``"auto"`` lets
        dask split files of 64 MiB or more and keeps smaller files as stored
        (one chunk per variable and file); ``None`` reads the data into
        memory (numpy).

    Returns
    -------
    xarray.Dataset
        Canonical Dataset: ``t, td, u, v, z`` [K, K, m s-1, m s-1, m] on
        ``(member,) time, level, Y, X`` and the optional near-surface fields
        ``mslp`` [Pa], ``t2m``, ``td2m`` [K], ``u10``, ``v10`` [m s-1],
        ``precip`` [mm h-1]; ``level`` [hPa] 1000 first; scalar
        ``reference_time``; attrs ``run``, ``source``, ``grid`` (and ``dx_m``,
        ``dy_m`` [m] on projected grids). See the module docstring for how
        names, units, grids, time and precipitation are handled.

    Raises
    ------
    kit.errors.InputError
        One line naming the file, what was wrong and what was expected.

    Examples
    --------
    >>> ds = open_run("sample_grids/runs/2027-01-14T00Z")  # doctest: +SKIP
    >>> ds.attrs["run"]  # doctest: +SKIP
    '2027-01-14T00Z'
    """
    args = list(paths) if isinstance(paths, (list, tuple)) else [paths]
    if not args:
        raise input_error("open_run", "no files given; expected a NetCDF file, glob or folder")
    files = []
    for a in args:
        for f in expand_run_arg(a):
            if f not in files:
                files.append(f)
    where_all = str(args[0]) if len(args) == 1 else f"{args[0]} (+{len(args) - 1})"
    kinds = check_one_kind(files, where_all)
    parts = []
    dropped = set()
    for i, f in enumerate(files):
        raw = open_grib(f, chunks) if kinds[f] == "grib" else open_netcdf(f, chunks)
        ds, info = _canonicalise_file(raw, str(f))
        before = list(ds.data_vars)
        if i == 0:
            ds = check_sample_values(ds, str(f))
        parts.append((ds, info, str(f)))
        if i == 0:
            dropped = set(before) - set(ds.data_vars)
    parts = _harmonise_optional(parts, dropped)
    ds = _assemble_run(parts, where_all, member)
    if chunks is None:
        ds = ds.load()
    return ds


def open_runs(args, *, member=None, chunks="auto"):
    """Open several runs (or members) of one event, one canonical Dataset each.

    Parameters
    ----------
    args : list of str or os.PathLike
        One RUN argument per run: a file, glob or folder (see
        :func:`expand_run_arg`).
    member, chunks
        As :func:`open_run`.

    Returns
    -------
    list of xarray.Dataset
        In the order given.
    """
    if isinstance(args, (str, os.PathLike)):
        args = [args]
    if not args:
        raise input_error(
            "open_runs", "no runs given; expected at least one RUN (file, glob or folder)"
        )
    return [open_run(a, member=member, chunks=chunks) for a in args]
