"""Open model runs (CF NetCDF) as the canonical Dataset of the kit.

:func:`open_run` takes one file, a list of files, a glob or a folder holding
the files of ONE model run (one file per step, one file for the whole run, or
one file per ensemble member) and returns the canonical Dataset described in
DEVELOPERS.md: known variable names (``t, td, u, v, z`` on pressure levels;
optional ``mslp, t2m, td2m, u10, v10, precip``), SI units, ``level`` in hPa
(1000 first), valid ``time`` with a scalar ``reference_time``, latitude
ascending, longitudes continuous, projected grids described by ``y, x`` in
metres with 2-D ``lat``/``lon``. Arrays stay dask-backed (lazy) unless
``chunks=None``.

How variables are found
-----------------------
1. by CF ``standard_name`` (``air_temperature``, ``relative_humidity``,
   ``geopotential``, ``x_wind`` ...);
2. then by the short names common in reanalyses and model output
   (``t, ta, TMP, r, hur, q, hus, z, gh, msl, prmsl, tp, t2m, 2t, u10 ...``),
   exact first, then ignoring case.

A variable with a pressure-level dimension fills the upper-air role
(``t``); the same quantity without one (a 2 m or 10 m height coordinate or
none) fills the near-surface role (``t2m``).

Units
-----
Each variable's ``units`` attribute is parsed with pint (MetPy's registry) and
converted once, here, into the kit's units: K, m s-1, m, Pa, hPa (levels),
mm h-1 (precipitation) and kg kg-1 / fraction for humidity. Whether ``z`` is
geopotential [m2 s-2] (divided by g0 = 9.80665 m s-2) or geopotential height
[m] is decided from its units, never from the name. A unit that cannot be
parsed or converted raises :class:`~kit.errors.InputError`.

Where a variable has NO units attribute the loader assumes the kit's unit for
that role and checks that the values are plausible in it, with three
documented exceptions decided from the values: relative humidity (any value
above 1.5 means percent), geopotential vs geopotential height (ratio to the
ICAO standard-atmosphere height of the level, about 1 or about 9.8) and
pressure levels (a largest level above 1100 means Pa). Precipitation without
units is an error (mm, m and rates cannot be told apart).

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

Precipitation
-------------
Fluxes and rates (kg m-2 s-1, mm h-1, m s-1) are converted to mm h-1 at the
valid time. Accumulations (kg m-2, mm, m of water) become the mean rate over
the step ENDING at ``time`` [mm h-1]: with CF time bounds the accumulation
start of each step is known exactly (since run start, per step, or buckets
that restart); without bounds an accumulation that never decreases over the
run is taken as accumulated since ``reference_time``, otherwise as accumulated
over each output step. Where the start of the first step is unknown (a run
whose first valid time is its reference time) the first rate is NaN.
Deciding this reads the precipitation field (a 2-D field per step) once.

Grids
-----
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
  attributes are kept on a scalar coordinate ``crs``.
* Winds on projected grids: when the file says they are grid-relative
  (``standard_name`` ``x_wind``/``y_wind`` or ``grid_eastward_wind``/
  ``grid_northward_wind``, or an attribute ``GRIB_uvRelativeToGrid`` /
  ``uv_relative_to_grid`` that is true) they are rotated to earth-relative
  with the local angle of the grid's x axis, measured on the ellipsoid with
  pyproj between neighbouring points. Otherwise they are taken as
  earth-relative. ``attrs["wind_rotation"]`` says which was done.

Time
----
Valid time is taken from ``valid_time``, from ``time`` or from a reference
time plus a lead (``step``, ``forecast_period``, ``lead_time``). The run's
``reference_time`` (scalar coordinate) comes from a
``forecast_reference_time``/``reference_time`` coordinate or attribute, else
it is the first valid time. A folder of analyses (each file's reference time
equal to its valid time) is accepted as one sequence with the first valid
time as ``reference_time``. ``attrs["run"]`` is a label like
``2027-01-14T00Z``.

Several files of one run are combined by valid time (and by member where each
file holds one member); files on different grids, levels or members raise an
InputError naming both files and what differs. An optional field missing from
some files (precipitation at lead 0, say) is NaN there (an accumulation is 0
at the run start). Valid times out of order are sorted; a valid time given
twice is an error.

Attributes of the result
------------------------
``run`` (label), ``source`` (file names), ``grid`` (``latlon`` or
``projected``), ``dx_m``/``dy_m`` [m] on projected grids, ``wind_rotation``
(what was done to the winds), ``variables_from`` (``t<-TMP, ...``: which file
variable filled each role) and ``kind == "analyses"`` for a folder of
analyses. A file's scalar ensemble coordinate (e.g. ``number`` of a single
member) is kept as a scalar ``member`` coordinate.
"""

import functools
import glob
import os
import re
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr

from kit.errors import InputError

__all__ = [
    "G0",
    "CANONICAL_UNITS",
    "expand_run_arg",
    "open_run",
    "open_runs",
    "to_canonical",
    "run_label",
]

#: Standard gravity g0 [m s-2] (WMO/CGPM conventional value), geopotential -> height.
G0 = 9.80665

#: Units of the canonical variables (pint-readable strings).
CANONICAL_UNITS = {
    "t": "K",
    "td": "K",
    "u": "m s-1",
    "v": "m s-1",
    "z": "m",
    "mslp": "Pa",
    "t2m": "K",
    "td2m": "K",
    "u10": "m s-1",
    "v10": "m s-1",
    "precip": "mm h-1",
}

_LONG_NAMES = {
    "t": ("air_temperature", "air temperature"),
    "td": ("dew_point_temperature", "dew point"),
    "u": ("eastward_wind", "eastward wind (earth-relative)"),
    "v": ("northward_wind", "northward wind (earth-relative)"),
    "z": ("geopotential_height", "geopotential height"),
    "mslp": ("air_pressure_at_mean_sea_level", "mean sea-level pressure"),
    "t2m": ("air_temperature", "2 m air temperature"),
    "td2m": ("dew_point_temperature", "2 m dew point"),
    "u10": ("eastward_wind", "10 m eastward wind (earth-relative)"),
    "v10": ("northward_wind", "10 m northward wind (earth-relative)"),
    "precip": ("lwe_precipitation_rate", "precipitation rate over the step ending at time"),
}

_NC_SUFFIXES = (".nc", ".nc4", ".netcdf", ".cdf")
_MAGIC = (b"CDF\x01", b"CDF\x02", b"CDF\x05")
_HDF5 = b"\x89HDF\r\n\x1a\n"

# --------------------------------------------------------------------------- variable tables
# role -> (standard names, short names); "lev" roles are on pressure levels,
# "sfc" roles near the surface. Quantities decide the unit family.
_LEVEL_ROLES = {
    "t": (("air_temperature",), ("t", "ta", "T", "TMP", "temp", "air", "tmp", "TT", "tmpprs")),
    "td": (("dew_point_temperature",), ("d", "dpt", "td", "DPT", "dewpoint", "Td")),
    "rh": (("relative_humidity",), ("r", "rh", "hur", "RH", "rhum", "relhum", "rhprs")),
    "q": (("specific_humidity",), ("q", "hus", "QV", "SPFH", "shum", "qv", "spfhprs")),
    "u": (
        ("eastward_wind", "x_wind", "grid_eastward_wind"),
        ("u", "ua", "U", "UGRD", "uwnd", "ugrdprs"),
    ),
    "v": (
        ("northward_wind", "y_wind", "grid_northward_wind"),
        ("v", "va", "V", "VGRD", "vwnd", "vgrdprs"),
    ),
    "z": (
        ("geopotential_height", "geopotential"),
        (
            "z",
            "gh",
            "zg",
            "HGT",
            "hgt",
            "Z",
            "phi",
            "geopotential",
            "gph",
            "hgt_isobaric",
            "fi",
            "H",
            "hgtprs",
        ),
    ),
}
_SURFACE_ROLES = {
    "t2m": (
        ("air_temperature",),
        ("t2m", "2t", "tas", "T2", "TMP_2maboveground", "t2", "tmp2m", "t_2m"),
    ),
    "td2m": (
        ("dew_point_temperature",),
        ("d2m", "2d", "tdps", "td2m", "DPT_2maboveground", "td2", "dpt2m", "td_2m"),
    ),
    "rh2m": (
        ("relative_humidity",),
        ("r2", "rh2m", "hurs", "RH_2maboveground", "rh2", "relhum_2m"),
    ),
    "q2m": (("specific_humidity",), ("q2", "q2m", "huss", "SPFH_2maboveground", "QV2M", "qv_2m")),
    "u10": (
        ("eastward_wind", "x_wind", "grid_eastward_wind"),
        ("u10", "10u", "uas", "U10", "UGRD_10maboveground", "u10m", "ugrd10m", "u_10m"),
    ),
    "v10": (
        ("northward_wind", "y_wind", "grid_northward_wind"),
        ("v10", "10v", "vas", "V10", "VGRD_10maboveground", "v10m", "vgrd10m", "v_10m"),
    ),
    "mslp": (
        ("air_pressure_at_mean_sea_level", "air_pressure_at_sea_level"),
        (
            "msl",
            "mslp",
            "prmsl",
            "PRMSL",
            "slp",
            "MSLP",
            "PMSL",
            "MSL",
            "psl",
            "mslet",
            "pmsl",
            "prmslmsl",
            "pres_msl",
        ),
    ),
    "ps": (
        ("surface_air_pressure",),
        ("sp", "ps", "PRES_surface", "psfc", "PSFC", "pres_sfc", "PS"),
    ),
    "precip": (
        (
            "precipitation_amount",
            "lwe_thickness_of_precipitation_amount",
            "precipitation_flux",
            "lwe_precipitation_rate",
            "thickness_of_rainfall_amount",
            "rainfall_flux",
            "lwe_thickness_of_precipitation_amount_accumulated",
        ),
        (
            "tp",
            "pr",
            "precip",
            "apcp",
            "APCP",
            "prate",
            "PRATE",
            "tprate",
            "precipitation",
            "TP",
            "apcpsfc",
            "pratesfc",
            "tot_prec",
            "PRECTOT",
            "PRECTOTCORR",
        ),
    ),
}
# names that mean "this quantity near the surface" for level-role short names
# found without a level dimension
_SURFACE_OF = {"t": "t2m", "td": "td2m", "rh": "rh2m", "q": "q2m", "u": "u10", "v": "v10"}
_GRID_RELATIVE_STD = {"x_wind", "y_wind", "grid_eastward_wind", "grid_northward_wind"}

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
_MEMBER_NAMES = (
    "member",
    "number",
    "realization",
    "ens",
    "ensemble",
    "ensemble_member",
    "realisation",
    "mem",
)
_REF_NAMES = (
    "reference_time",
    "forecast_reference_time",
    "analysis_time",
    "init_time",
    "run_time",
    "initial_time",
    "initialization_time",
)
_LEAD_NAMES = ("step", "forecast_period", "lead_time", "leadtime", "forecast_hour")
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

# unit spellings pint does not read the CF/GRIB way
_UNIT_ALIASES = {
    "c": "degC",
    "deg c": "degC",
    "degc": "degC",
    "deg_c": "degC",
    "degrees c": "degC",
    "degrees_celsius": "degC",
    "degree_celsius": "degC",
    "celsius": "degC",
    "°c": "degC",
    "degrees celsius": "degC",
    "f": "degF",
    "degrees_fahrenheit": "degF",
    "(0 - 1)": "1",
    "0-1": "1",
    "(0-1)": "1",
    "fraction": "1",
    "proportion": "1",
    "1": "1",
    "dimensionless": "1",
    "-": "1",
    "none": "1",
    "mb": "mbar",
    "millibars": "mbar",
    "gp m": "m",
    "gpm": "m",
    "m gp": "m",
    "gpdm": "dam",
    "dagpm": "dam",
    "gp dam": "dam",
    "m of water equivalent": "m",
    "mm of water equivalent": "mm",
    "kg m**-2": "kg m-2",
    "kg/m^2": "kg m-2",
    "kg/m2": "kg m-2",
    "kg m^-2": "kg m-2",
    "kg/m^2/s": "kg m-2 s-1",
    "kg m^-2 s^-1": "kg m-2 s-1",
    "kg/m2/s": "kg m-2 s-1",
    "mm/h": "mm h-1",
    "mm/hr": "mm h-1",
    "mm hr-1": "mm h-1",
    "mm/hour": "mm h-1",
    "kt": "knot",
    "kts": "knot",
    "knots": "knot",
    "m2/s2": "m2 s-2",
}

# physical ranges used to check a sample after conversion (median of the sample)
_PLAUSIBLE = {
    "t": (150.0, 350.0, "K"),
    "td": (100.0, 350.0, "K"),
    "t2m": (180.0, 345.0, "K"),
    "td2m": (150.0, 340.0, "K"),
    "u": (-150.0, 150.0, "m s-1"),
    "v": (-150.0, 150.0, "m s-1"),
    "u10": (-80.0, 80.0, "m s-1"),
    "v10": (-80.0, 80.0, "m s-1"),
    "mslp": (85000.0, 110000.0, "Pa"),
    "ps": (30000.0, 110000.0, "Pa"),
    "rh": (0.0, 1.5, "fraction"),
    "rh2m": (0.0, 1.5, "fraction"),
    "q": (0.0, 0.1, "kg kg-1"),
    "q2m": (0.0, 0.1, "kg kg-1"),
    "precip": (0.0, 500.0, "mm h-1 (or mm per step)"),
}
_REQUIRED = ("t", "u", "v", "z")
_NOT_PRESSURE_STD = (
    "atmosphere_hybrid_sigma_pressure_coordinate",
    "model_level_number",
    "atmosphere_sigma_coordinate",
    "atmosphere_hybrid_height_coordinate",
    "altitude",
    "atmosphere_sleve_coordinate",
    "air_potential_temperature",
)


# --------------------------------------------------------------------------- small helpers
def _err(where, message):
    """InputError with one line ``where: message`` (newlines flattened)."""
    text = f"{where}: {message}" if where else str(message)
    return InputError(" ".join(str(text).split()))


def _join(names, limit=12):
    names = [str(n) for n in names]
    if len(names) > limit:
        return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
    return ", ".join(names) if names else "nothing"


def _fmt_time(t):
    return pd.Timestamp(t).strftime("%Y-%m-%dT%H:%MZ")


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


@functools.lru_cache(maxsize=256)
def _pint_quantity(text):
    from metpy.units import units as ureg

    parsed = ureg(text)
    return ureg.Quantity(1.0, parsed.units) * float(parsed.magnitude)


@functools.lru_cache(maxsize=256)
def _pint_scale_offset(text, target):
    from metpy.units import units as ureg

    q = _pint_quantity(text)
    zero = ureg.Quantity(0.0, q.units).to(target).magnitude
    one = ureg.Quantity(float(q.magnitude), q.units).to(target).magnitude
    return float(one - zero), float(zero)


def _unit_text(units_str):
    raw = str(units_str).strip()
    text = _UNIT_ALIASES.get(raw.lower(), _UNIT_ALIASES.get(raw, raw))
    return text.replace("^", "**")


def _parse_units(units_str, where, name, expected):
    """Pint quantity of a units string, or InputError naming what was found."""
    try:
        return _pint_quantity(_unit_text(units_str))
    except Exception:  # pint raises several types for unreadable strings
        raise _err(
            where,
            f"variable '{name}' has unit '{str(units_str).strip()}' which is not understood; "
            f"expected {expected}",
        ) from None


def _linear_conversion(q_from, target, where, name, expected):
    """(scale, offset) so that value_in_target = scale * value + offset."""
    text = q_from if isinstance(q_from, str) else f"{q_from.units}"
    try:
        if isinstance(q_from, str):
            return _pint_scale_offset(_unit_text(q_from), target)
        scale, offset = _pint_scale_offset(text, target)
        return scale * float(q_from.magnitude), offset
    except Exception:
        raise _err(
            where,
            f"variable '{name}' has unit '{text}' which cannot be converted to "
            f"{target}; expected {expected}",
        ) from None


def _convert(da, target, where, name, expected, units_str):
    """Lazily convert a DataArray from ``units_str`` into ``target``."""
    _parse_units(units_str, where, name, expected)
    scale, offset = _linear_conversion(str(units_str), target, where, name, expected)
    if scale == 1.0 and offset == 0.0:
        return da
    out = da * scale + offset if offset else da * scale
    return out.astype(da.dtype) if da.dtype.kind == "f" else out


def _dimensionality(units_str, where, name, expected):
    q = _parse_units(units_str, where, name, expected)
    return q, dict(q.dimensionality)


def _sample(da):
    """Small numpy sample of a field: first time/member, strided in space."""
    d = da
    for dim in ("member", "time"):
        if dim in d.dims:
            d = d.isel({dim: 0})
    sel = {}
    for dim in d.dims:
        if dim != "level" and d.sizes[dim] > 48:
            sel[dim] = slice(None, None, int(np.ceil(d.sizes[dim] / 48)))
    return np.asarray(d.isel(sel).values, dtype=np.float64)


def _isa_height_m(p_hpa):
    """ICAO standard-atmosphere height of a pressure [m] (troposphere formula)."""
    return 44330.8 * (1.0 - (np.asarray(p_hpa, dtype=np.float64) / 1013.25) ** 0.190263)


def _units_of(da):
    u = da.attrs.get("units", da.encoding.get("units"))
    if u is None:
        return None
    u = str(u).strip()
    return u if u else None


# --------------------------------------------------------------------------- files
def expand_run_arg(arg):
    """Files of one RUN argument: a NetCDF file, a glob or a folder.

    Parameters
    ----------
    arg : str or os.PathLike
        A file path, a glob pattern (``*``, ``?``, ``[...]``) or a folder; a
        folder gives its ``.nc``/``.nc4``/``.netcdf``/``.cdf`` files (not
        hidden ones, not sub-folders).

    Returns
    -------
    list of pathlib.Path
        Sorted by name.

    Raises
    ------
    kit.errors.InputError
        The path does not exist, the glob matches nothing, or the folder holds
        no NetCDF file.

    Examples
    --------
    >>> expand_run_arg("/no/such/run.nc")  # doctest: +IGNORE_EXCEPTION_DETAIL
    Traceback (most recent call last):
    kit.errors.InputError: /no/such/run.nc: no such file or folder
    """
    if isinstance(arg, (list, tuple)):
        raise _err(str(arg), "expected one file, glob or folder, got a list")
    text = os.path.expanduser(os.fspath(arg))
    path = Path(text)
    if path.is_dir():
        files = sorted(
            p
            for p in path.iterdir()
            if p.is_file() and not p.name.startswith(".") and p.suffix.lower() in _NC_SUFFIXES
        )
        if not files:
            others = sorted(p.name for p in path.iterdir() if not p.name.startswith("."))
            raise _err(
                text,
                f"folder holds no NetCDF file (*.nc, *.nc4); found {_join(others, 6)}",
            )
        return files
    if path.is_file():
        return [path]
    if glob.has_magic(text):
        files = sorted(Path(p) for p in glob.glob(text) if Path(p).is_file())
        if not files:
            raise _err(text, "glob matches no file; expected NetCDF files of one model run")
        return files
    raise _err(text, "no such file or folder; expected a NetCDF file, a glob or a folder")


def _check_netcdf_file(path):
    """Raise a one-line InputError unless ``path`` looks like a whole NetCDF file."""
    try:
        size = path.stat().st_size
        with open(path, "rb") as fh:
            head = fh.read(2048 + 8)
    except OSError as exc:
        raise _err(path, f"cannot be read ({exc.strerror or exc})") from None
    if size == 0:
        raise _err(path, "empty file (0 bytes); expected a NetCDF file")
    if head[:4] in _MAGIC:
        if head[:4] in (b"CDF\x01", b"CDF\x02"):
            _check_classic_complete(path)
        return
    if any(head[o : o + 8] == _HDF5 for o in (0, 512, 1024, 2048)):
        return
    if head[:4] == b"GRIB":
        found = "a GRIB file"
    else:
        printable = head[:24].decode("latin-1")
        if all(ch.isprintable() or ch in "\r\n\t" for ch in printable):
            found = "text starting " + repr(" ".join(printable.split())[:20])
        else:
            found = f"bytes {head[:8]!r}"
    raise _err(path, f"not a NetCDF file: found {found}; expected NetCDF-3 or NetCDF-4 (HDF5)")


def _check_classic_complete(path):
    """Raise unless a NetCDF-3 file is as long as its header says (truncation check)."""
    import gc

    from scipy.io import netcdf_file

    failure = None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            # mapping the variables fails when the file is shorter than its header says
            nc = netcdf_file(path, "r", mmap=True)
            nc.variables.clear()
            nc.close()
        except Exception as exc:  # scipy raises ValueError/TypeError/IndexError here
            failure = f"{type(exc).__name__}: {exc}"
        if failure is not None:
            gc.collect()  # release the half-built file object while warnings are silenced
    if failure is not None:
        raise _err(
            path, f"truncated or corrupt NetCDF-3 file ({failure}); expected a complete file"
        )


#: files smaller than this [bytes] are chunked as stored (one dask chunk per
#: variable and file) when chunks="auto": cheaper to set up, same laziness
_SMALL_FILE_BYTES = 64 * 2**20


def _step_dims(ds):
    """Dimensions that index steps or members (chunked one by one for large files)."""
    names = {"time", "valid_time", "Time", "t", *_LEAD_NAMES, *_MEMBER_NAMES, *_REF_NAMES}
    out = []
    for dim in ds.dims:
        c = ds.coords.get(dim)
        attrs = c.attrs if c is not None else {}
        if (
            dim in names
            or attrs.get("axis") == "T"
            or attrs.get("standard_name") in ("time", "forecast_period", "realization")
        ):
            out.append(dim)
    return out


def _short_reason(exc, path):
    """Return the library's reason without the repeated path and errno noise."""
    text = str(exc).replace(f"'{path}'", "").replace(str(path), "")
    text = re.sub(r"\[Errno -?\d+\]\s*", "", text).strip(" :")
    return text or type(exc).__name__


def _open_file(path, chunks):
    _check_netcdf_file(path)
    kwargs = dict(engine="netcdf4", decode_timedelta=True, mask_and_scale=True)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", category=xr.SerializationWarning)
            ds = xr.open_dataset(path, chunks=None if chunks == "auto" else chunks, **kwargs)
            if isinstance(chunks, str) and chunks == "auto":
                if path.stat().st_size < _SMALL_FILE_BYTES:
                    ds = ds.chunk({})
                else:
                    # one step/member per chunk, dask sizes the rest: reading the
                    # first step (value checks) or one level never reads the file whole
                    plan = {d: "auto" for d in ds.dims}
                    plan.update({d: 1 for d in _step_dims(ds)})
                    ds = ds.chunk(plan)
    except Exception as exc:
        raise _err(
            path,
            "cannot be read as NetCDF, truncated or corrupt "
            f"({_short_reason(exc, path)}); expected a complete NetCDF file (copy it again)",
        ) from None
    return ds


# --------------------------------------------------------------------------- time
def _is_datetime(values):
    v = np.asarray(values)
    if v.dtype.kind == "M":
        return True
    if v.dtype == object and v.size:
        try:
            import cftime

            return isinstance(v.ravel()[0], cftime.datetime)
        except ImportError:  # pragma: no cover - cftime ships with netCDF4
            return False
    return False


def _to_datetime64(values, where, what):
    v = np.asarray(values)
    if v.dtype.kind == "M":
        return v.astype("datetime64[ns]")
    try:
        idx = xr.CFTimeIndex(v.ravel())
        out = np.asarray(idx.to_datetimeindex(time_unit="ns"), dtype="datetime64[ns]")
    except Exception:
        raise _err(
            where,
            f"{what} uses a calendar that cannot be mapped to the real calendar; "
            "expected a standard (gregorian) calendar",
        ) from None
    return out.reshape(v.shape)


def _find_named(ds, names=(), standard_names=(), kinds=("coords", "data_vars")):
    for kind in kinds:
        group = getattr(ds, kind)
        for n in group:
            if group[n].attrs.get("standard_name") in standard_names:
                return n
    for kind in kinds:
        group = getattr(ds, kind)
        for n in names:
            if n in group:
                return n
    return None


def _attr_time(ds, where):
    for key in (
        "forecast_reference_time",
        "reference_time",
        "run_reference_time",
        "analysis_time",
        "initialization_time",
        "init_time",
    ):
        if key in ds.attrs:
            try:
                ts = pd.Timestamp(str(ds.attrs[key]))
            except Exception:
                raise _err(
                    where,
                    f"global attribute {key}={ds.attrs[key]!r} is not a time; "
                    "expected ISO 8601 like 2027-01-14T00:00Z",
                ) from None
            if ts.tzinfo is not None:
                ts = ts.tz_convert("UTC").tz_localize(None)
            return np.datetime64(ts.to_datetime64(), "ns")
    return None


def _canonical_time(ds, where):
    """Give ``ds`` a ``time`` dimension of valid times; return (ds, reference or None)."""
    # cfgrib style: time = reference, step = lead, valid_time = time + step
    ref_name = _find_named(ds, _REF_NAMES, ("forecast_reference_time",))
    valid_name = "valid_time" if "valid_time" in ds.variables else None
    lead_name = _find_named(ds, _LEAD_NAMES, ("forecast_period",))
    if valid_name and ref_name is None and "time" in ds.variables and "time" != valid_name:
        if lead_name is not None or ds["time"].ndim == 0:
            ref_name = "time"
    if valid_name is None:
        cand = [
            n
            for n in ds.variables
            if n != ref_name
            and (
                n == "time"
                or ds[n].attrs.get("standard_name") == "time"
                or ds[n].attrs.get("axis") == "T"
            )
        ]
        cand += [
            n for n in ds.variables if n not in cand and n != ref_name and n in ("Time", "t_valid")
        ]
        valid_name = cand[0] if cand else None

    ref = None
    ref_values = None
    if ref_name is not None:
        rv = ds[ref_name].values
        if not _is_datetime(rv):
            raise _err(where, f"'{ref_name}' is not a decodable time; expected CF time units")
        ref_values = _to_datetime64(rv, where, ref_name)
    attr_ref = _attr_time(ds, where)

    valid = None
    if valid_name is not None:
        vv = ds[valid_name].values
        if _is_datetime(vv):
            valid = _to_datetime64(vv, where, valid_name)
            vdims = ds[valid_name].dims
        elif np.asarray(vv).dtype.kind == "m":
            lead_name = valid_name
            valid_name = None
        else:
            raise _err(
                where,
                f"time coordinate '{valid_name}' is not a decodable time (units "
                f"{ds[valid_name].attrs.get('units', 'missing')!r}); expected CF units like "
                "'hours since 2027-01-14 00:00'",
            )
    if valid is None:
        if lead_name is None or np.asarray(ds[lead_name].values).dtype.kind != "m":
            raise _err(
                where,
                "no valid time: expected a CF time coordinate 'time' or 'valid_time', or a "
                "reference time with a lead 'step'/'forecast_period'",
            )
        base = (
            ref_values
            if ref_values is not None
            else (np.array(attr_ref) if attr_ref is not None else None)
        )
        if base is None:
            raise _err(
                where,
                f"lead '{lead_name}' without a reference time; expected forecast_reference_time",
            )
        lead = ds[lead_name]
        vda = (
            xr.DataArray(
                np.asarray(base).reshape(()) if np.ndim(base) == 0 else base,
                dims=ds[ref_name].dims if ref_name else (),
            )
            + lead
        )
        valid = np.asarray(vda.values, dtype="datetime64[ns]")
        vdims = vda.dims
        ds = ds.assign_coords(_valid=(vdims, valid))
        valid_name = "_valid"
    else:
        if valid_name != "_valid":
            ds = ds.assign_coords(_valid=(vdims, valid))
            valid_name = "_valid"

    # bring the valid time onto one dimension called time
    vdims = ds["_valid"].dims
    if len(vdims) == 2:
        big = [d for d in vdims if ds.sizes[d] > 1]
        if len(big) == 2:
            raise _err(
                where,
                f"holds several runs ({ds.sizes[vdims[0]]} reference times x {ds.sizes[vdims[1]]} "
                "leads); expected one model run per RUN argument",
            )
        drop = [d for d in vdims if d not in big] if big else [vdims[0]]
        ds = ds.isel({d: 0 for d in drop})
        vdims = ds["_valid"].dims
    if ref_values is not None and ref_values.ndim == 1 and ref_name in ds.dims:
        # several reference times along their own dimension; only ok if also valid times
        if ds.sizes[ref_name] > 1 and ref_name not in vdims:
            raise _err(where, f"holds {ds.sizes[ref_name]} reference times; expected one run")
    if len(vdims) == 0:
        ds = ds.expand_dims("_tdim")
        ds = ds.assign_coords(_valid=("_tdim", np.atleast_1d(ds["_valid"].values)))
        vdims = ("_tdim",)
    tdim = vdims[0]
    ref_per_time = None
    if ref_name is not None:
        rda = ds[ref_name] if ref_name in ds.variables else None
        if rda is not None and rda.ndim == 1 and rda.dims[0] == tdim:
            ref_per_time = _to_datetime64(rda.values, where, ref_name)
        elif rda is not None and rda.ndim == 0:
            ref = _to_datetime64(rda.values, where, ref_name).reshape(())
        elif rda is not None:
            ref = _to_datetime64(rda.values, where, ref_name).ravel()[0]
    drop_vars = [
        n
        for n in (ref_name, lead_name, "valid_time", "time", "step")
        if n and n in ds.variables and n != tdim
    ]
    ds = ds.drop_vars(drop_vars)
    if tdim != "_valid":
        ds = ds.swap_dims({tdim: "_valid"})
        if tdim in ds.variables:
            ds = ds.drop_vars(tdim)
    ds = ds.rename({"_valid": "time"})
    if ref_per_time is not None:
        uniq = np.unique(ref_per_time)
        if uniq.size == 1:
            ref = uniq[0]
        elif np.array_equal(ref_per_time, ds["time"].values):
            ref = ("analyses", ref_per_time)
        else:
            raise _err(where, f"holds {uniq.size} different reference times; expected one run")
    if ref is None and attr_ref is not None:
        ref = attr_ref
    if ref is not None and not isinstance(ref, tuple):
        ref = np.asarray(ref, dtype="datetime64[ns]").reshape(())[()]
    return ds, ref


# --------------------------------------------------------------------------- levels
def _level_dims(ds, where):
    """Map each pressure-level dimension name to its values in hPa."""
    found = {}
    for dim in ds.dims:
        if dim not in ds.coords:
            continue
        c = ds.coords[dim]
        if c.ndim != 1:
            continue
        std = c.attrs.get("standard_name", "")
        units = _units_of(c)
        pressure_units = False
        if units is not None:
            try:
                q = _parse_units(units, where, dim, "Pa or hPa")
                pressure_units = dict(q.dimensionality) == {
                    "[mass]": 1,
                    "[length]": -1,
                    "[time]": -2,
                }
            except InputError:
                pressure_units = False
        named = dim in _LEVEL_DIM_NAMES or dim.lower() in {n.lower() for n in _LEVEL_DIM_NAMES}
        if std in _NOT_PRESSURE_STD:
            raise _err(
                where,
                f"vertical coordinate '{dim}' is {std}, not pressure; expected pressure levels "
                "(standard_name air_pressure, in hPa or Pa): interpolate to pressure levels first",
            )
        if std == "air_pressure" or pressure_units or (named and units is None):
            if units is not None and not pressure_units:
                raise _err(
                    where, f"level coordinate '{dim}' has unit '{units}'; expected Pa or hPa"
                )
            vals = np.asarray(c.values, dtype=np.float64)
            if units is None:
                hpa = vals / 100.0 if np.nanmax(vals) > 1100.0 else vals
            else:
                scale, _ = _linear_conversion(
                    _parse_units(units, where, dim, "Pa or hPa"), "hPa", where, dim, "Pa or hPa"
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
            raise _err(
                where,
                f"vertical coordinate '{dim}' is {what}, not pressure; expected pressure levels "
                "(standard_name air_pressure, in hPa or Pa): interpolate to pressure levels first",
            )
    return found


def _scalar_pressure(da, where):
    """HPa value of a scalar pressure coordinate of a variable, or None."""
    for name, c in da.coords.items():
        if c.ndim != 0 or name in da.dims:
            continue
        std = c.attrs.get("standard_name", "")
        units = _units_of(c)
        if std == "air_pressure" or name in _LEVEL_DIM_NAMES:
            try:
                val = float(c.values)
            except (TypeError, ValueError):
                continue
            if units is None:
                return val / 100.0 if val > 1100.0 else val
            scale, off = _linear_conversion(
                _parse_units(units, where, name, "Pa or hPa"), "hPa", where, name, "Pa or hPa"
            )
            return val * scale + off
    return None


def _surface_height(da):
    """Height above ground of a near-surface variable [m] from its coordinates, or None."""
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


# --------------------------------------------------------------------------- horizontal grid
def _find_latlon(ds, where):
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
        raise _err(where, "latitude/longitude contain missing values; expected finite degrees")
    if np.any(np.abs(lat) > 90.0 + 1e-6):
        raise _err(
            where, f"latitude '{lat_name}' reaches {np.max(np.abs(lat)):.3f}; expected -90..90"
        )
    dlat = np.diff(lat)
    if lat.size > 1 and np.any(dlat == 0):
        i = int(np.nonzero(dlat == 0)[0][0])
        raise _err(
            where, f"duplicate latitude {lat[i]:g} in '{lat_name}'; expected distinct values"
        )
    if lat.size > 1 and not (np.all(dlat > 0) or np.all(dlat < 0)):
        raise _err(where, f"latitude '{lat_name}' is not monotonic; expected sorted values")
    # longitudes: unwrap the stored order, then require one direction
    lon_u = _unwrap_lon(lon)
    dl = np.diff(lon_u)
    if lon.size > 1 and np.any(np.abs(dl) < 1e-9):
        i = int(np.nonzero(np.abs(dl) < 1e-9)[0][0])
        raise _err(
            where, f"duplicate longitude {lon[i]:g} in '{lon_name}'; expected distinct values"
        )
    if lon.size > 1 and not (np.all(dl > 0) or np.all(dl < 0)):
        raise _err(where, f"longitude '{lon_name}' is not monotonic; expected sorted values")
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
        raise _err(where, f"several grid mappings ({_join(sorted(names))}); expected one grid")
    return names.pop() if names else None


def _geographic_of(crs):
    from pyproj import CRS

    ell = crs.ellipsoid
    if ell is None:
        return CRS.from_proj4("+proj=longlat +R=6371229 +no_defs")
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
    from pyproj import Geod, Transformer

    geo = _geographic_of(crs)
    tr = Transformer.from_crs(crs, geo, always_xy=True)
    ell = crs.ellipsoid
    geod = (
        Geod(a=ell.semi_major_metre, b=ell.semi_minor_metre)
        if ell
        else Geod(a=6371229.0, b=6371229.0)
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
    from pyproj import CRS, Transformer
    from pyproj.exceptions import CRSError

    gm_name = _grid_mapping_of(ds, where)
    if gm_name is None:
        raise _err(
            where,
            "2-D latitude/longitude without a CF grid_mapping; expected a grid_mapping "
            "variable (e.g. lambert_conformal_conic) or a regular latitude/longitude grid",
        )
    gm_attrs = dict(ds[gm_name].attrs)
    try:
        crs = CRS.from_cf(gm_attrs)
    except (CRSError, Exception) as exc:
        raise _err(
            where,
            f"grid mapping '{gm_name}' "
            f"({gm_attrs.get('grid_mapping_name', 'no grid_mapping_name')}) "
            f"is not understood by pyproj ({exc}); expected CF grid-mapping attributes",
        ) from None
    rotated = gm_attrs.get("grid_mapping_name") == "rotated_latitude_longitude"
    radius = crs.ellipsoid.semi_major_metre if crs.ellipsoid else 6371229.0
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
        raise _err(where, "projected grid without data on it; expected (y, x) fields")
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
                u = _units_of(ds[arr]) or "m"
                scale, _ = _linear_conversion(
                    _parse_units(u, where, arr, "m or km"), "m", where, arr, "m or km"
                )
                if nm == "x":
                    xv = xv * scale
                else:
                    yv = yv * scale
    else:
        if lat_name is None or lon_name is None:
            raise _err(where, "projected grid without x/y coordinates or 2-D latitude/longitude")
        tr = Transformer.from_crs(_geographic_of(crs), crs, always_xy=True)
        xx, yy = tr.transform(np.asarray(ds[lon_name].values), np.asarray(ds[lat_name].values))
        xv = np.nanmean(xx, axis=0)
        yv = np.nanmean(yy, axis=1)
        if np.nanmax(np.abs(xx - xv[None, :])) > 1e-3 * max(
            np.nanmax(np.abs(np.diff(xv))), 1e-12
        ) or np.nanmax(np.abs(yy - yv[:, None])) > 1e-3 * max(
            np.nanmax(np.abs(np.diff(yv))), 1e-12
        ):
            raise _err(
                where,
                f"2-D latitude/longitude do not lie on a regular grid of '{gm_name}'; "
                "expected x/y coordinates or lat/lon matching the grid mapping",
            )
    for nm, arr in (("x", xv), ("y", yv)):
        d = np.diff(arr)
        if arr.size > 1 and np.any(d == 0):
            raise _err(where, f"duplicate {nm} coordinate values; expected distinct values")
        if arr.size > 1 and not (np.all(d > 0) or np.all(d < 0)):
            raise _err(where, f"{nm} coordinate is not monotonic; expected sorted values")
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


# --------------------------------------------------------------------------- roles
def _classify(ds, level_dims, where):
    """Map canonical roles to variable names: {role: (name, via)}."""
    roles = {}
    skip = set()
    for n, v in ds.data_vars.items():
        if "grid_mapping_name" in v.attrs or n.endswith(("_bnds", "_bounds")) or v.ndim < 2:
            skip.add(n)
    candidates = [n for n in ds.data_vars if n not in skip]

    surface_names = {x.lower() for _s, names in _SURFACE_ROLES.values() for x in names}

    def on_levels(n):
        v = ds[n]
        if any(d in level_dims for d in v.dims):
            return True
        # a single-level file: its scalar pressure coordinate is shared by every
        # variable, so near-surface fields are told apart by height or name
        if _surface_height(v) is not None or n.lower() in surface_names:
            return False
        return _scalar_pressure(v, where) is not None

    def assign(role, n, via):
        if role not in roles:
            roles[role] = (n, via)

    # 1. standard names
    for n in candidates:
        std = ds[n].attrs.get("standard_name")
        if not std:
            continue
        lev = on_levels(n)
        table = _LEVEL_ROLES if lev else _SURFACE_ROLES
        for role, (stds, _names) in table.items():
            if std in stds:
                assign(role, n, "standard_name")
                break
    used = {v[0] for v in roles.values()}
    # 2. short names, exact then case-insensitive
    for exact in (True, False):
        for n in candidates:
            if n in used:
                continue
            lev = on_levels(n)
            hit = None
            for table, is_level_table in ((_LEVEL_ROLES, True), (_SURFACE_ROLES, False)):
                for role, (_stds, names) in table.items():
                    match = n in names if exact else n.lower() in {x.lower() for x in names}
                    if match:
                        hit = (role, is_level_table)
                        break
                if hit:
                    break
            if hit is None:
                continue
            role, is_level_table = hit
            if is_level_table and not lev:
                role = _SURFACE_OF.get(role)
                if role is None:  # z without levels: a surface height, not used
                    continue
            elif not is_level_table and lev and role in _SURFACE_OF.values():
                continue
            if role in roles or not _name_match_allowed(ds[n], role):
                continue
            assign(role, n, "name")
            used.add(n)
    return roles, candidates


_ROLE_DIMENSIONS = {
    "temperature": [{"[temperature]": 1}],
    "fraction": [{}],
    "speed": [{"[length]": 1, "[time]": -1}],
    "height": [{"[length]": 1}, {"[length]": 2, "[time]": -2}],
    "pressure": [{"[mass]": 1, "[length]": -1, "[time]": -2}],
    "precip": [
        {"[length]": 1},
        {"[mass]": 1, "[length]": -2},
        {"[length]": 1, "[time]": -1},
        {"[mass]": 1, "[length]": -2, "[time]": -1},
    ],
}
_ROLE_QUANTITY = {
    "t": "temperature",
    "td": "temperature",
    "t2m": "temperature",
    "td2m": "temperature",
    "rh": "fraction",
    "q": "fraction",
    "rh2m": "fraction",
    "q2m": "fraction",
    "u": "speed",
    "v": "speed",
    "u10": "speed",
    "v10": "speed",
    "z": "height",
    "mslp": "pressure",
    "ps": "pressure",
    "precip": "precip",
}


def _name_match_allowed(da, role):
    """Whether a short-name match may fill ``role``.

    Not when the variable's own standard_name says it is something else
    (ERA5's ``d`` is divergence, not dew point), nor when its units cannot be
    the role's quantity. A standard_name or unit that fits, or none, is fine.
    """
    std = da.attrs.get("standard_name")
    if std:
        stds = (_LEVEL_ROLES.get(role) or _SURFACE_ROLES.get(role) or ((),))[0]
        if std not in stds:
            return False
    units = _units_of(da)
    if units is None:
        return True
    try:
        dims = dict(_pint_quantity(_unit_text(units)).dimensionality)
    except Exception:  # unreadable unit: let the conversion report it
        return True
    return dims in _ROLE_DIMENSIONS[_ROLE_QUANTITY[role]]


def _is_grid_relative(da):
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


# --------------------------------------------------------------------------- conversion per role
def _temperature(da, where, name, role):
    units = _units_of(da)
    if units is None:
        units = "K"
    q, dim = _dimensionality(units, where, name, "K or degC")
    if dim != {"[temperature]": 1}:
        raise _err(where, f"variable '{name}' ({role}) has unit '{units}'; expected K or degC")
    return _convert(da, "K", where, name, "K or degC", units)


def _speed(da, where, name, role):
    units = _units_of(da) or "m s-1"
    return _convert(da, "m/s", where, name, "m s-1 (or knots, km h-1)", units)


def _pressure(da, where, name, role):
    units = _units_of(da)
    if units is None:
        s = _sample(da)
        med = np.nanmedian(s) if np.any(np.isfinite(s)) else np.nan
        units = "hPa" if med < 2000.0 else "Pa"
    return _convert(da, "Pa", where, name, "Pa or hPa", units)


def _humidity_fraction(da, where, name):
    units = _units_of(da)
    if units is None:
        s = _sample(da)
        finite = s[np.isfinite(s)]
        if finite.size and np.nanmax(finite) > 1.5:
            return da / 100.0
        return da
    return _convert(da, "dimensionless", where, name, "% or fraction (0..1)", units)


def _specific_humidity(da, where, name):
    units = _units_of(da) or "kg kg-1"
    return _convert(da, "dimensionless", where, name, "kg kg-1 or g kg-1", units)


def _height(da, where, name, level_hpa):
    """Geopotential height [m] from geopotential or height, decided by units."""
    units = _units_of(da)
    if units is None:
        std = da.attrs.get("standard_name")
        s = _sample(da)
        if "level" in da.dims and level_hpa is not None:
            lev_axis = da.dims.index("level") - sum(
                d in ("time", "member") for d in da.dims[: da.dims.index("level")]
            )
            isa = _isa_height_m(level_hpa)
            use = isa > 700.0
            if np.any(use) and np.any(np.isfinite(s)):
                prof = np.nanmedian(np.moveaxis(s, lev_axis, 0).reshape(len(level_hpa), -1), axis=1)
                ratio = np.nanmedian(prof[use] / isa[use])
                if 0.5 < ratio < 2.0:
                    units = "m"
                elif 0.5 * G0 < ratio < 2.0 * G0:
                    units = "m2 s-2"
        if units is None and std == "geopotential":
            units = "m2 s-2"
        if units is None and std == "geopotential_height":
            units = "m"
        if units is None:
            raise _err(
                where,
                f"variable '{name}' (geopotential/height) has no units; expected m (height) "
                "or m2 s-2 (geopotential)",
            )
    q, dim = _dimensionality(units, where, name, "m or m2 s-2")
    if dim == {"[length]": 1}:
        return _convert(da, "m", where, name, "m or m2 s-2", units)
    if dim == {"[length]": 2, "[time]": -2}:
        return _convert(da, "m**2/s**2", where, name, "m or m2 s-2", units) / G0
    raise _err(
        where,
        f"variable '{name}' has unit '{units}'; expected m (geopotential height) or m2 s-2 "
        "(geopotential)",
    )


def _precip(da, where, name):
    """(values, kind) with kind 'rate' [mm h-1] or 'amount' [mm]."""
    units = _units_of(da)
    if units is None:
        raise _err(
            where,
            f"precipitation '{name}' has no units; expected an amount (mm, m, kg m-2) "
            "or a rate (mm h-1, kg m-2 s-1)",
        )
    q, dim = _dimensionality(units, where, name, "mm, m, kg m-2, mm h-1 or kg m-2 s-1")
    expected = "an amount (mm, m, kg m-2) or a rate (mm h-1, kg m-2 s-1, m s-1)"
    water = 1.0  # kg m-2 of water per mm (density 1000 kg m-3)
    if dim == {"[length]": 1}:
        return _convert(da, "mm", where, name, expected, units), "amount"
    if dim == {"[mass]": 1, "[length]": -2}:
        return _convert(da, "kg/m**2", where, name, expected, units) / water, "amount"
    if dim == {"[length]": 1, "[time]": -1}:
        return _convert(da, "mm/hour", where, name, expected, units), "rate"
    if dim == {"[mass]": 1, "[length]": -2, "[time]": -1}:
        return _convert(da, "kg/m**2/hour", where, name, expected, units) / water, "rate"
    raise _err(where, f"precipitation '{name}' has unit '{units}'; expected {expected}")


def _time_bounds_lower(ds_raw, da, where):
    """Lower time bounds for an accumulated field, if the file gives them."""
    for cname in ("time", "valid_time"):
        if cname in ds_raw.variables:
            b = ds_raw[cname].attrs.get("bounds") or ds_raw[cname].encoding.get("bounds")
            if b and b in ds_raw.variables:
                vals = ds_raw[b].values
                if _is_datetime(vals):
                    return _to_datetime64(vals, where, b)[..., 0].ravel()
    for b in ("time_bnds", "time_bounds", "valid_time_bnds"):
        if b in ds_raw.variables and _is_datetime(ds_raw[b].values):
            return _to_datetime64(ds_raw[b].values, where, b)[..., 0].ravel()
    return None


# --------------------------------------------------------------------------- one file
def _canonical_one(raw, where, member):
    """Canonicalise one opened file; returns (ds, info)."""
    ds = raw
    # promote 2-D lat/lon data variables to coordinates
    lat_name, lon_name = _find_latlon(ds, where)
    promote = [n for n in (lat_name, lon_name) if n and n in ds.data_vars]
    if promote:
        ds = ds.set_coords(promote)
    ds, ref = _canonical_time(ds, where)
    level_dims = _level_dims(ds, where)
    roles, candidates = _classify(ds, level_dims, where)
    found = ", ".join(candidates) if candidates else "no data variables"
    missing = [r for r in _REQUIRED if r not in roles]
    need = {
        "t": "air_temperature on pressure levels (t, ta, TMP)",
        "u": "eastward_wind on pressure levels (u, ua, UGRD)",
        "v": "northward_wind on pressure levels (v, va, VGRD)",
        "z": "geopotential or geopotential_height on pressure levels (z, gh, zg, HGT)",
    }
    if not level_dims and not any(_scalar_pressure(ds[n], where) is not None for n in candidates):
        raise _err(
            where,
            f"no pressure levels: expected a pressure-level dimension (level, isobaricInhPa, "
            f"plev, pressure; standard_name air_pressure) on t, u, v, z; found variables {found} "
            f"with dimensions {_join(ds.dims)}",
        )
    if missing:
        r = missing[0]
        raise _err(where, f"no {r} variable: need {need[r]}; found {found}")
    if not any(r in roles for r in ("td", "rh", "q")):
        raise _err(
            where,
            "no humidity variable: need relative_humidity, specific_humidity or "
            f"dew_point_temperature on pressure levels; found {found}",
        )
    # the level dimension of t defines the levels
    t_var = ds[roles["t"][0]]
    tdims = [d for d in t_var.dims if d in level_dims]
    if tdims:
        main_level_dim = tdims[0]
        levels = level_dims[main_level_dim]
    else:
        main_level_dim = None
        levels = np.array([_scalar_pressure(t_var, where)])
    if np.unique(levels).size != levels.size:
        raise _err(
            where,
            f"duplicate pressure levels in '{main_level_dim}' ({_join(levels)} hPa); "
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
    # horizontal grid
    lat_name, lon_name = _find_latlon(ds, where)
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
        raise _err(
            where,
            "no latitude/longitude coordinates; expected 1-D lat/lon (standard_name latitude, "
            "longitude) or 2-D lat/lon with a CF grid_mapping",
        )
    ny, nx = ds.sizes[ydim], ds.sizes[xdim]
    if ny < 3 or nx < 3:
        raise _err(where, f"grid is {ny} x {nx} points; expected at least 3 x 3")
    # member dimension
    mem_name = None
    for n in list(ds.dims) + [c for c in ds.coords if ds[c].ndim == 0]:
        if n in _MEMBER_NAMES or (
            n in ds.variables and ds[n].attrs.get("standard_name") == "realization"
        ):
            mem_name = n
            break
    member_scalar = None
    if mem_name is not None and mem_name in ds.dims:
        mv = ds[mem_name].values if mem_name in ds.coords else np.arange(ds.sizes[mem_name])
        try:
            mvi = np.asarray(mv).astype(np.int64)
            if not np.array_equal(mvi, np.asarray(mv).astype(np.float64)):
                raise ValueError
        except (TypeError, ValueError):
            mvi = np.arange(ds.sizes[mem_name])
        if np.unique(mvi).size != mvi.size:
            raise _err(
                where, f"duplicate ensemble members in '{mem_name}'; expected distinct numbers"
            )
        if mem_name in ds.coords:
            ds = ds.drop_vars(mem_name)
        ds = ds.rename({mem_name: "member"}).assign_coords(member=("member", mvi))
    elif mem_name is not None:
        try:
            member_scalar = int(np.asarray(ds[mem_name].values))
        except (TypeError, ValueError):
            member_scalar = None
        ds = ds.drop_vars(mem_name)

    # build the canonical variables
    out = {}
    where_t = where

    def prep(role):
        name = roles[role][0]
        da = ds[name]
        # extra size-1 dimensions (height, a single level of a surface field ...)
        for d in list(da.dims):
            if d in ("time", ydim, xdim, "member") or d == main_level_dim:
                continue
            if d in level_dims and role in ("t", "td", "rh", "q", "u", "v", "z"):
                continue
            if da.sizes[d] == 1:
                da = da.isel({d: 0}, drop=True)
            else:
                raise _err(
                    where_t,
                    f"variable '{name}' has an extra dimension '{d}' of {da.sizes[d]}; "
                    f"expected dimensions [member,] time, [level,] {ydim}, {xdim}",
                )
        if role in ("t", "td", "rh", "q", "u", "v", "z"):
            da = _onto_levels(da, name, levels, main_level_dim, level_dims, where_t)
        drop = [
            c
            for c in da.coords
            if c not in da.dims
            and c
            not in (
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
        ]
        return da.drop_vars(drop), name

    for role in ("t", "td", "t2m", "td2m"):
        if role in roles:
            da, name = prep(role)
            out[role] = _temperature(da, where, name, role)
    for role in ("u", "v", "u10", "v10"):
        if role in roles:
            da, name = prep(role)
            out[role] = _speed(da, where, name, role)
    da, name = prep("z")
    out["z"] = _height(da, where, name, levels)
    if "mslp" in roles:
        da, name = prep("mslp")
        out["mslp"] = _pressure(da, where, name, "mslp")
    extra = {}
    if "td" not in out:
        if "rh" in roles:
            da, name = prep("rh")
            extra["rh"] = (_humidity_fraction(da, where, name), name)
        elif "q" in roles:
            da, name = prep("q")
            extra["q"] = (_specific_humidity(da, where, name), name)
    if "td2m" not in out and "t2m" in out:
        if "rh2m" in roles:
            da, name = prep("rh2m")
            extra["rh2m"] = (_humidity_fraction(da, where, name), name)
        elif "q2m" in roles and "ps" in roles:
            da, name = prep("q2m")
            extra["q2m"] = (_specific_humidity(da, where, name), name)
            dp, pname = prep("ps")
            extra["ps"] = (_pressure(dp, where, pname, "ps"), pname)
    precip_kind = None
    if "precip" in roles:
        da, name = prep("precip")
        out["precip"], precip_kind = _precip(da, where, name)
    # wind rotation on projected grids
    rotation = "none needed (latitude/longitude grid)"
    if ydim == "y":
        rotation = "none: winds taken as earth-relative"
        for uu, vv in (("u", "v"), ("u10", "v10")):
            if uu in out and vv in out:
                gu, gv = _is_grid_relative(ds[roles[uu][0]]), _is_grid_relative(ds[roles[vv][0]])
                if gu != gv:
                    raise _err(
                        where,
                        f"'{roles[uu][0]}' and '{roles[vv][0]}' disagree on grid-relative "
                        "winds; expected both grid-relative or both earth-relative",
                    )
                if gu:
                    ca = xr.DataArray(np.cos(angle), dims=("y", "x"))
                    sa = xr.DataArray(np.sin(angle), dims=("y", "x"))
                    ug, vg = out[uu], out[vv]
                    out[uu] = ug * ca - vg * sa
                    out[vv] = ug * sa + vg * ca
                    rotation = "grid-relative winds rotated to earth-relative"
    info = {
        "ref": ref,
        "precip_kind": precip_kind,
        "member_scalar": member_scalar,
        "rotation": rotation,
        "roles": {k: v[0] for k, v in roles.items()},
    }
    if precip_kind == "amount":
        info["precip_lower"] = _time_bounds_lower(raw, ds, where)
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
        if k in ("grid", "dx_m", "dy_m", "grid_mapping_name", "native_grid_unit")
    }
    return res, info


def _onto_levels(da, name, levels, main_dim, level_dims, where):
    """Put an upper-air variable on the ``level`` dimension with t's levels [hPa]."""
    dims = [d for d in da.dims if d in level_dims]
    if dims == [main_dim] and main_dim == "level":
        return da
    if not dims:
        p = _scalar_pressure(da, where)
        if p is None:
            raise _err(
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
        raise _err(
            where,
            f"variable '{name}' is on levels {_join(own)} hPa and temperature on "
            f"{_join(levels)} hPa; "
            "expected shared pressure levels",
        )
    da = da.assign_coords(level=np.round(own, 6))
    return da.reindex(level=np.round(np.asarray(levels, dtype=np.float64), 6))


# --------------------------------------------------------------------------- value checks
def _check_values(ds, where):
    """Sample-based checks on the first valid time: all-NaN and plausible ranges."""
    for role in list(ds.data_vars):
        key = role.lstrip("_")
        s = _sample(ds[role])
        finite = s[np.isfinite(s)]
        if finite.size == 0:
            if key in ("t", "u", "v", "z", "rh", "q", "td"):
                raise _err(
                    where,
                    f"field '{key}' is missing everywhere (all NaN / fill value) at the first "
                    "valid time; expected data",
                )
            warnings.warn(
                f"{where}: optional field '{key}' is all NaN at the first valid time; dropped",
                UserWarning,
                stacklevel=3,
            )
            ds = ds.drop_vars(role)
            continue
        if key == "z":
            levels = ds["level"].values
            isa = _isa_height_m(levels)
            use = isa > 700.0
            if np.any(use):
                lev_axis = (
                    list(ds[role].dims[-3:]).index("level") if "level" in ds[role].dims else None
                )
                if lev_axis is not None:
                    prof = np.nanmedian(np.moveaxis(s, 0, 0).reshape(levels.size, -1), axis=1)
                    ratio = np.nanmedian(prof[use] / isa[use])
                    if not 0.5 < ratio < 2.0:
                        raise _err(
                            where,
                            f"geopotential height is {ratio:.2f} times the standard-atmosphere "
                            "height of its levels after unit conversion; expected about 1: check "
                            "the units attribute (m for height, m2 s-2 for geopotential)",
                        )
            continue
        rng = _PLAUSIBLE.get(key)
        if rng is None:
            continue
        med = float(np.median(finite))
        if key == "precip":
            med = float(np.max(finite))
            if med < -0.5 or med > 2000.0:
                raise _err(
                    where,
                    f"precipitation reaches {med:g} after unit conversion; expected "
                    "0..2000 (mm per hour or per step): check the units attribute",
                )
            continue
        if not rng[0] <= med <= rng[1]:
            raise _err(
                where,
                f"field '{key}' has median {med:.4g} {rng[2]} after unit conversion; expected "
                f"{rng[0]:g}..{rng[1]:g} {rng[2]}: check its units attribute",
            )
    return ds


# --------------------------------------------------------------------------- combining
def _grid_signature(ds):
    out = {}
    for c in ("lat", "lon", "x", "y", "level"):
        if c in ds.coords and ds[c].ndim == 1:
            out[c] = np.asarray(ds[c].values, dtype=np.float64)
    if "member" in ds.dims:
        out["member"] = np.asarray(ds["member"].values, dtype=np.float64)
    return out


def _describe(name, arr):
    if arr.size == 0:
        return f"{name}: none"
    return f"{name} {arr.size} values {arr.min():g}..{arr.max():g}"


def _compare_grids(a, fa, b, fb):
    sa, sb = _grid_signature(a), _grid_signature(b)
    if a.attrs.get("grid") != b.attrs.get("grid"):
        raise _err(
            f"{fa} vs {fb}",
            f"different grid types ({a.attrs.get('grid')} vs "
            f"{b.attrs.get('grid')}); expected files of one run on one grid",
        )
    for key in sorted(set(sa) | set(sb)):
        va, vb = sa.get(key), sb.get(key)
        if va is None or vb is None:
            raise _err(f"{fa} vs {fb}", f"'{key}' present in only one file; expected the same grid")
        if va.shape != vb.shape or not np.allclose(
            va, vb, rtol=0, atol=1e-6 * max(1.0, np.nanmax(np.abs(va)))
        ):
            what = "levels" if key == "level" else ("members" if key == "member" else "grid")
            unit = " hPa" if key == "level" else ""
            raise _err(
                f"{fa} vs {fb}",
                f"different {what}: {_describe(key, va)}{unit} vs {_describe(key, vb)}{unit}; "
                "expected files of one run on the same grid and levels",
            )
    if set(a.data_vars) != set(b.data_vars):
        only_a = sorted(set(a.data_vars) - set(b.data_vars))
        only_b = sorted(set(b.data_vars) - set(a.data_vars))
        raise _err(
            f"{fa} vs {fb}",
            f"different variables (only in first: {_join(only_a)}; "
            f"only in second: {_join(only_b)}); "
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
        raise _err(
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
            if v.lstrip("_") in ("t", "td", "u", "v", "z", "rh", "q"):
                other = next(pp for dd, _i, pp in parts if v in dd.data_vars)
                raise _err(
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


def _precip_rate(acc, times, ref, lower, where):
    """Rate over the step ending at each time [mm h-1] from an accumulation [mm]."""
    n = times.size
    if lower is not None and lower.size == n:
        starts = lower
    else:
        since_start = True
        if n > 1:
            d = acc.diff("time")
            mind = float(d.min().values) if d.size else 0.0
            scale = float(abs(acc).max().values) if acc.size else 0.0
            since_start = mind >= -max(1e-3, 1e-4 * scale)
        if since_start:
            starts = np.full(
                n, ref if ref is not None else np.datetime64("NaT"), dtype="datetime64[ns]"
            )
        else:
            starts = np.concatenate(
                [[ref if ref is not None else np.datetime64("NaT")], times[:-1]]
            ).astype("datetime64[ns]")
    hours = (times - starts) / np.timedelta64(1, "h")
    same = np.zeros(n, dtype=bool)
    same[1:] = (starts[1:] == starts[:-1]) & ~np.isnat(starts[1:])
    dt = np.full(n, np.nan)
    dt[1:] = (times[1:] - times[:-1]) / np.timedelta64(1, "h")
    with np.errstate(invalid="ignore", divide="ignore"):
        div = np.where(same, dt, np.where(np.isfinite(hours) & (hours > 0), hours, np.nan))
    prev = acc.isel(time=np.r_[0, np.arange(n - 1)]).assign_coords(time=acc["time"])
    base = prev * xr.DataArray(same.astype(np.float64), dims="time", coords={"time": acc["time"]})
    out = ((acc - base) / xr.DataArray(div, dims="time", coords={"time": acc["time"]})).clip(
        min=0.0
    )
    return out.assign_coords(time=times)


def _finish(parts, ref, where_all, member, chunks):
    """Concatenate per-file canonical datasets and finish the canonical Dataset."""
    # group by scalar member (one file per member) then by time
    groups = {}
    for ds, info, path in parts:
        groups.setdefault(info["member_scalar"], []).append((ds, info, path))
    first_ds, first_info, first_path = parts[0]
    for ds, _info, path in parts[1:]:
        _compare_grids(first_ds, first_path, ds, path)
    combined = []
    for mkey, items in groups.items():
        seen = {}
        for ds, _info, path in items:
            for t in ds["time"].values:
                if t in seen:
                    other = seen[t]
                    where = f"{other} vs {path}" if other != path else str(path)
                    raise _err(
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
            raise _err(
                where_all,
                "files disagree on ensemble member (some have none); expected one member "
                "per file or none",
            )
        t0 = combined[0][1]["time"].values
        for k, d in combined[1:]:
            if not np.array_equal(d["time"].values, t0):
                raise _err(
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
    times = np.asarray(ds["time"].values, dtype="datetime64[ns]")
    # precipitation accumulations -> rates
    if any(info["precip_kind"] == "amount" for _d, info, _p in parts) and "precip" in ds:
        lowers = [info.get("precip_lower") for _, info, _ in parts]
        lower = None
        if all(lw is not None for lw in lowers):
            cat = np.concatenate(lowers) if len(groups) == 1 else lowers[0]
            ptimes = (
                np.concatenate([p[0]["time"].values for p in parts]) if len(groups) == 1 else times
            )
            order = np.argsort(ptimes)
            cat = cat[order] if cat.size == order.size else None
            lower = cat
        ref_for = ref if isinstance(ref, np.datetime64) else None
        ds["precip"] = _precip_rate(ds["precip"], times, ref_for, lower, where_all)
    # derived dew points
    from kit.science import thermo

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
    # member selection
    if member is not None:
        if "member" in ds.dims:
            avail = [int(m) for m in ds["member"].values]
            if int(member) not in avail:
                raise _err(where_all, f"no ensemble member {member}; found members {_join(avail)}")
            ds = ds.sel(member=int(member))
        elif mscalar is not None and int(mscalar) == int(member):
            ds = ds.assign_coords(member=int(member))
        else:
            raise _err(
                where_all,
                f"member={member} asked for but the run has no ensemble member "
                "dimension; expected member=None",
            )
    elif mscalar is not None:
        ds = ds.assign_coords(member=int(mscalar))
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
        raise _err(source, f"expected an xarray.Dataset, got {type(raw).__name__}")
    ds, info = _canonical_one(raw, source, member)
    ds = _check_values(ds, source)
    return _assemble([(ds, info, source)], source, member, chunks=None)


def _assemble(parts, where_all, member, chunks):
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
                raise _err(
                    f"{a} vs {b}",
                    f"different runs (reference times {_fmt_time(uniq[0])} and "
                    f"{_fmt_time(uniq[1])}); "
                    "expected the files of one run",
                )
            analyses = True
    ds, times = _finish(parts, ref, where_all, member, chunks)
    if ref is None or analyses:
        ref = times[0]
    ref = np.datetime64(ref, "ns")
    if not analyses and times[0] < ref:
        raise _err(
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
        std, long = _LONG_NAMES.get(name, (None, name))
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
        variables_from=", ".join(f"{k}<-{v}" for k, v in first_info["roles"].items()),
    )
    if analyses:
        ds.attrs["kind"] = "analyses"
    return ds


# --------------------------------------------------------------------------- public
def open_run(paths, *, member=None, chunks="auto"):
    """Open the files of one model run as the canonical Dataset.

    Parameters
    ----------
    paths : str, os.PathLike or list of them
        One NetCDF file, a glob, a folder, or a list of any of these, all of
        ONE model run (a file per step, one file, or a file per member).
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
        raise _err("open_run", "no files given; expected a NetCDF file, glob or folder")
    files = []
    for a in args:
        for f in expand_run_arg(a):
            if f not in files:
                files.append(f)
    where_all = str(args[0]) if len(args) == 1 else f"{args[0]} (+{len(args) - 1})"
    parts = []
    dropped = set()
    for i, f in enumerate(files):
        raw = _open_file(f, chunks)
        ds, info = _canonical_one(raw, str(f), member)
        before = list(ds.data_vars)
        if i == 0:
            ds = _check_values(ds, str(f))
        parts.append((ds, info, str(f)))
        if i == 0:
            dropped = set(before) - set(ds.data_vars)
    parts = _harmonise_optional(parts, dropped)
    ds = _assemble(parts, where_all, member, chunks)
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
        raise _err("open_runs", "no runs given; expected at least one RUN (file, glob or folder)")
    return [open_run(a, member=member, chunks=chunks) for a in args]
