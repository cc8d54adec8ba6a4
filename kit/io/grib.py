"""GRIB files (editions 1 and 2): check them, then open them as a CF-like Dataset.

A GRIB file is read with cfgrib (ecCodes underneath) into the same "as
stored" form :mod:`kit.io.netcdf` gives for a NetCDF file, so the rest of the
loader (:mod:`kit.io.runs`) makes it canonical the same way. What this module
does on top of cfgrib, and why:

* **Header walk first.** Every message's section 0 is read (a seek per
  message, no decoding): an empty file, a file with no GRIB message, a
  truncated last message (its stated length runs past the end of the file or
  it does not end in ``7777``) and a GRIB1 message without a grid description
  section (a predefined grid number only) each give one line naming the file
  and the message.
* **One scan, many subsets.** The file is indexed once (cfgrib's
  ``FileIndex``, ``indexpath=''``, so no ``.idx`` file is ever written, beside
  the data or anywhere: a read-only folder works). Each wanted quantity is then
  opened from a sub-index of that one scan: the pressure-level fields one
  short name at a time (each keeps its own level set, so ``r`` on fewer levels
  than ``t`` does not clash), and a short list of near-surface fields each on
  its own. Fields the kit does not use (cloud-top temperature, winds at the
  tropopause, ...) are never opened, so their names cannot collide with ``t``
  or ``u``.
* **Levels in hPa or Pa.** ecCodes files pressure levels that are not whole
  hectopascals under ``isobaricInPa``; they are turned into hPa and joined to
  the ``isobaricInhPa`` levels of the same quantity.
* **u and v in pairs.** Some centres pack u and v into one multi-field
  message; cfgrib reads those with ecCodes' multi-field support. The levels of
  u and v must then agree: a v missing on some level (a reader that dropped
  the second field) is an error, not a silent NaN.
* **Grids.** Regular latitude/longitude and regular Gaussian grids come as
  1-D latitude/longitude. Lambert conformal, polar stereographic, rotated
  latitude/longitude (and the other projections ecCodes describes with a
  ``projString``) get a CF grid mapping built by pyproj from that string, and
  1-D projection coordinates: metres for projections (the 2-D latitudes and
  longitudes ecCodes computes are projected and must lie on a regular grid
  within 1 % of a grid length), rotated degrees from the GRIB keys for rotated
  grids. Reduced (quasi-regular) Gaussian and latitude/longitude grids,
  spherical harmonics and unstructured grids are refused: interpolating them
  would change the fronts the kit finds, so the forecaster chooses how, before.
* **Grid-relative winds.** ecCodes' ``uvRelativeToGrid`` flag is kept as the
  attribute ``GRIB_uvRelativeToGrid`` that :mod:`kit.io.cf_grid` reads to turn
  the winds to earth-relative.
* **Accumulations.** A field with ``stepType`` ``accum`` carries CF time bounds
  (start = reference time + ``startStep``), so :mod:`kit.io.precip` knows over
  what each amount was accumulated (since the run's start, or a bucket).
* **Members.** The GRIB ``number`` is cfgrib's ``number`` dimension (or scalar),
  which :mod:`kit.io.members` turns into ``member``.
"""

import warnings

import numpy as np
import xarray as xr
from pyproj import CRS, Transformer

from kit.constants import GRIB_SPHERE_RADIUS_M
from kit.io.discover import GRIB_MAGIC, LEAD_IN_BYTES
from kit.io.messages import input_error, join_names
from kit.io.netcdf import SMALL_FILE_BYTES

__all__ = ["GRIB_GRID_TYPES", "open_grib", "walk_messages"]

#: ecCodes grid types read (refused otherwise, with the reason)
GRIB_GRID_TYPES = (
    "regular_ll",
    "regular_gg",
    "lambert",
    "polar_stereographic",
    "rotated_ll",
    "lambert_azimuthal_equal_area",
    "albers",
    "mercator",
)

_REFUSED_GRIDS = {
    "reduced_gg": "a reduced (quasi-regular) Gaussian grid",
    "reduced_ll": "a reduced latitude/longitude grid",
    "reduced_rotated_gg": "a reduced rotated Gaussian grid",
    "sh": "spherical harmonics",
    "rotated_sh": "rotated spherical harmonics",
    "unstructured_grid": "an unstructured grid",
    "healpix": "a HEALPix grid",
    "space_view": "a satellite view",
}

#: pressure-level quantities opened (ecCodes short names); others are never read
_LEVEL_SHORT_NAMES = ("t", "dpt", "r", "q", "gh", "z", "u", "v")
_PRESSURE_LEVEL_TYPES = {"isobaricInhPa": 1.0, "isobaricInPa": 0.01}

#: near-surface quantities: (ecCodes short name, type of level or None for any,
#: name given in the Dataset); the first of a group present wins
_SURFACE_FIELDS = (
    (("prmsl", "meanSea", "prmsl"), ("msl", None, "msl"), ("mslet", "meanSea", "mslet")),
    (("sp", "surface", "sp"),),
    (("orog", "surface", "orog"), ("z", "surface", "zsfc")),
    (("2t", None, "t2m"),),
    (("2d", None, "d2m"), ("2r", None, "r2"), ("2sh", None, "q2")),
    (("10u", None, "u10"),),
    (("10v", None, "v10"),),
    (("tp", "surface", "tp"), ("prate", "surface", "prate")),
)

#: CF standard names of the near-surface fields (cfgrib gives some none, or
#: "unknown", or a name of the upper-air quantity: orography as geopotential height)
_SURFACE_STANDARD_NAMES = {
    "prmsl": "air_pressure_at_mean_sea_level",
    "msl": "air_pressure_at_mean_sea_level",
    "mslet": "air_pressure_at_mean_sea_level",
    "sp": "surface_air_pressure",
    "orog": "surface_altitude",
    "zsfc": "surface_geopotential",
    "tp": "precipitation_amount",
    "prate": "precipitation_flux",
}

#: GRIB sections 0 and the edition-1 flag byte
_GRIB = GRIB_MAGIC
_END = b"7777"


def _read_exact(fh, n):
    data = fh.read(n)
    return data if len(data) == n else None


def walk_messages(path):
    """Walk a GRIB file's messages by their section-0 lengths (nothing decoded).

    Parameters
    ----------
    path : pathlib.Path
        The file.

    Returns
    -------
    list of tuple
        ``(offset, length, edition)`` of each message.

    Raises
    ------
    kit.errors.InputError
        Empty or unreadable file, no GRIB message, a truncated message, a
        message not ending in ``7777``, or a GRIB1 message without a grid
        description section.
    """
    try:
        size = path.stat().st_size
        fh = open(path, "rb")
    except OSError as exc:
        raise input_error(path, f"cannot be read ({exc.strerror or exc})") from None
    if size == 0:
        raise input_error(path, "empty file (0 bytes); expected a GRIB or NetCDF file")
    out = []
    with fh:
        pos = 0
        while pos < size:
            fh.seek(pos)
            chunk = fh.read(LEAD_IN_BYTES if not out else 64)
            at = chunk.find(_GRIB)
            if at < 0:
                if not out:
                    raise input_error(path, "no GRIB message found; expected a GRIB file")
                if chunk.strip(b"\x00\r\n \t"):
                    raise input_error(
                        path,
                        f"unreadable bytes after message {len(out)} (at byte {pos}); "
                        "expected another GRIB message or the end of the file",
                    )
                break
            pos += at
            fh.seek(pos)
            head = _read_exact(fh, 16)
            if head is None:
                raise _truncated(path, len(out) + 1, pos, 16, size)
            edition = head[7]
            if edition == 1:
                length = int.from_bytes(head[4:7], "big")
                _check_grib1_grid(path, fh, pos, len(out) + 1, size)
            elif edition == 2:
                length = int.from_bytes(head[8:16], "big")
            else:
                raise input_error(
                    path,
                    f"message {len(out) + 1} (at byte {pos}) says GRIB edition {edition}; "
                    "expected edition 1 or 2",
                )
            if length < 16 or pos + length > size:
                raise _truncated(path, len(out) + 1, pos, length, size)
            fh.seek(pos + length - 4)
            if fh.read(4) != _END:
                raise input_error(
                    path,
                    f"message {len(out) + 1} (at byte {pos}, {length} bytes) does not end in "
                    "'7777': corrupt; expected complete GRIB messages (copy the file again)",
                )
            out.append((pos, length, edition))
            pos += length
    return out


def _truncated(path, number, pos, length, size):
    return input_error(
        path,
        f"truncated GRIB: message {number} at byte {pos} needs {length} bytes but the file "
        f"ends after {size - pos}; expected complete messages (copy the file again)",
    )


def _check_grib1_grid(path, fh, pos, number, size):
    """Raise when a GRIB1 message has no grid description section (GDS)."""
    fh.seek(pos + 8)
    pds_head = _read_exact(fh, 8)
    if pds_head is None:
        raise _truncated(path, number, pos, 16, size)
    flags, grid_number = pds_head[7], pds_head[6]
    if not flags & 0x80:
        raise input_error(
            path,
            f"GRIB1 message {number} has no grid description section (only the predefined "
            f"grid number {grid_number}); expected messages that describe their grid",
        )


# --------------------------------------------------------------------------- cfgrib
def _cfgrib():
    """Import cfgrib's dataset builder and xarray store (on the first GRIB file)."""
    try:
        import cfgrib.dataset as cfd  # optional: loads ecCodes, only for GRIB files
        import cfgrib.messages as cfm  # optional
        from cfgrib.xarray_plugin import ECCODES_LOCK, CfGribDataStore  # optional
    except Exception as exc:  # ImportError, or ecCodes' library missing (RuntimeError)
        raise input_error(
            "GRIB", f"cannot read GRIB: cfgrib/ecCodes unavailable ({exc}); expected the "
            "packages of pyproject.toml installed"
        ) from None
    return cfd, cfm, CfGribDataStore, ECCODES_LOCK


#: the types of level the kit reads fields on (ECMWF GRIB1 puts 2 m and 10 m
#: fields on "surface"; others on "heightAboveGround")
_CANDIDATE_LEVELS = frozenset(_PRESSURE_LEVEL_TYPES) | {"surface", "meanSea", "heightAboveGround"}


def _wanted(short, level_type):
    """Whether the kit reads a field (so only those fields are indexed)."""
    if level_type in _PRESSURE_LEVEL_TYPES:
        return short in _LEVEL_SHORT_NAMES
    return any(
        short == s and (tol is None or tol == level_type)
        for group in _SURFACE_FIELDS
        for s, tol, _name in group
    )


def _index(path):
    """One cfgrib index of the fields the kit reads (no index file written).

    Returns ``(index, seen)``: the index, and every ``(shortName, typeOfLevel)``
    of the file (for messages naming what a file holds instead).
    """
    cfd, cfm, _store, _lock = _cfgrib()
    extra = {"shortName", "startStep", "resolutionAndComponentFlags"}
    keys = sorted(set(cfd.compute_index_keys()) | extra)
    seen = set()

    def items(stream):
        for fid, msg in stream.items():
            # the type of level is cheap to read, the short name is not (an ecCodes
            # concept): fields on other levels are passed over by level type alone
            level_type = msg["typeOfLevel"]
            if level_type not in _CANDIDATE_LEVELS:
                seen.add(("", level_type))
                continue
            short = msg["shortName"]
            seen.add((short, level_type))
            if _wanted(short, level_type):
                yield fid, msg

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        stream = cfm.FileStream(str(path), errors="raise")
        try:
            index = cfm.FileIndex.from_fieldset_and_iteritems(
                stream, items(stream), keys, cfd.cfmessage.COMPUTED_KEYS
            )
        except Exception as exc:
            raise input_error(
                path, f"cannot be indexed as GRIB ({type(exc).__name__}: {exc}); expected "
                "readable GRIB messages"
            ) from None
    return index, seen


def _to_xarray(path, sub, what):
    """Build the xarray Dataset (lazy) of one cfgrib sub-index."""
    cfd, _cfm, store_cls, lock = _cfgrib()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            cds = cfd.open_from_index(sub, errors="raise")
            store = store_cls.__new__(store_cls)
            store.lock = lock
            store.ds = cds
            variables, attrs = store.load()
            variables, attrs, coord_names = xr.conventions.decode_cf_variables(
                variables, attrs, decode_timedelta=True
            )
            ds = xr.Dataset(variables, attrs=attrs)
            return ds.set_coords(coord_names.intersection(variables))
    except Exception as exc:
        raise input_error(
            path,
            f"GRIB fields of {what} do not form one array ({type(exc).__name__}: "
            f"{str(exc).splitlines()[0][:160]}); expected one grid, one run and each "
            "level/step/member once",
        ) from None


def _open_field(path, sub, what):
    """Open the one field of a sub-index as a DataArray, with its wind-relative flag.

    cfgrib copies ``uvRelativeToGrid`` into the attributes for some grid types
    only; it is set here from the index for every field, so
    :mod:`kit.io.cf_grid` always knows whether winds are grid-relative.
    """
    ds = _to_xarray(path, sub, what)
    da = ds[next(iter(ds.data_vars))]
    flags = {_grid_relative_flag(r) for r in _header_rows(sub)} - {None}
    if len(flags) > 1:
        raise input_error(
            path, f"GRIB {what}: some messages grid-relative, some earth-relative; expected "
            "one kind per field"
        )
    if flags:
        da.attrs["GRIB_uvRelativeToGrid"] = int(flags.pop())
    return da


def _grid_relative_flag(row):
    """Whether a message's u/v are along the grid axes: 1, 0 or None (not said).

    ecCodes names the flag ``uvRelativeToGrid`` for some grid templates only (not
    for GRIB2 polar stereographic in ecCodes 2.50, say); otherwise it is read
    from bit 5 of ``resolutionAndComponentFlags`` (value 8), the same bit in
    GRIB1 (code table 7) and GRIB2 (flag table 3.3).
    """
    flag = row.get("uvRelativeToGrid")
    if flag not in (None, "undef"):
        return int(flag)
    bits = row.get("resolutionAndComponentFlags")
    if bits in (None, "undef"):
        return None
    return int(int(bits) & 8 != 0)


def _header_rows(index):
    """Each distinct header of the index as a dict of its keys."""
    keys = index.index_keys
    return [dict(zip(keys, hv, strict=True)) for hv, _ids in index.field_ids_index]


def _refuse_grids(path, rows):
    kinds = sorted({str(r.get("gridType")) for r in rows})
    for kind in kinds:
        if kind in _REFUSED_GRIDS:
            raise input_error(
                path,
                f"GRIB grid is {_REFUSED_GRIDS[kind]} (gridType {kind}); expected a regular "
                "latitude/longitude, regular Gaussian, Lambert, polar stereographic or rotated "
                "grid (interpolate the file first; the kit does not choose the method for you)",
            )
        if kind not in GRIB_GRID_TYPES:
            raise input_error(
                path,
                f"GRIB gridType {kind} is not read; expected one of {join_names(GRIB_GRID_TYPES)}",
            )


def _one_grid(path, rows):
    """Return the one grid (``md5GridSection``) of the pressure-level fields."""
    grids = {r.get("md5GridSection") for r in rows}
    if len(grids) > 1:
        raise input_error(
            path,
            f"GRIB pressure-level fields on {len(grids)} different grids; expected the fields "
            "of one run on one grid (split the file by grid first)",
        )
    return grids.pop()


def _level_fields(path, index, rows):
    """Pressure-level fields, one short name at a time, each on its own level dimension."""
    out = {}
    for short in _LEVEL_SHORT_NAMES:
        parts = []
        for tol, to_hpa in _PRESSURE_LEVEL_TYPES.items():
            if not any(r["shortName"] == short and r["typeOfLevel"] == tol for r in rows):
                continue
            step_type = min(r["stepType"] for r in rows
                            if r["shortName"] == short and r["typeOfLevel"] == tol)
            sub = index.subindex(shortName=short, typeOfLevel=tol, stepType=step_type)
            da = _open_field(path, sub, f"{short} on {tol}")
            if tol not in da.dims:
                da = da.expand_dims(tol)
            lev = np.atleast_1d(np.asarray(da[tol].values, dtype=np.float64)) * to_hpa
            parts.append(da.rename({tol: "plev"}).assign_coords(plev=lev))
        if not parts:
            continue
        da = parts[0] if len(parts) == 1 else xr.concat(parts, dim="plev").sortby("plev")
        dim = f"plev_{short}"
        da = da.rename(plev=dim)
        da[dim].attrs = {"units": "hPa", "standard_name": "air_pressure", "positive": "down"}
        out[short] = da
    _check_wind_pairs(path, out)
    return out


def _check_wind_pairs(path, fields):
    """Check u and v are on the same levels, or both absent (a multi-field message read in part)."""
    if ("u" in fields) != ("v" in fields):
        have, lack = ("u", "v") if "u" in fields else ("v", "u")
        raise input_error(
            path,
            f"GRIB has {have} on pressure levels but no {lack} (a multi-field u/v message read "
            "in part?); expected both wind components or neither",
        )
    if "u" in fields:
        lu = set(fields["u"]["plev_u"].values.tolist())
        lv = set(fields["v"]["plev_v"].values.tolist())
        if lu != lv:
            raise input_error(
                path,
                f"u and v on different pressure levels (u only at {join_names(sorted(lu - lv))}, "
                f"v only at {join_names(sorted(lv - lu))} hPa); expected both wind components "
                "on the same levels",
            )


def _surface_fields(path, index, rows, grid):
    """Open the near-surface fields the kit uses on the run's grid (first present of a group)."""
    out = {}
    for group in _SURFACE_FIELDS:
        for short, tol, name in group:
            hits = [
                r for r in rows
                if r["shortName"] == short and (tol is None or r["typeOfLevel"] == tol)
                and r.get("md5GridSection") == grid
            ]
            if not hits:
                continue
            query = {"shortName": short, "typeOfLevel": hits[0]["typeOfLevel"],
                     "md5GridSection": grid}
            step_types = sorted({r["stepType"] for r in hits})
            query["stepType"] = "accum" if "accum" in step_types else step_types[0]
            sub = index.subindex(**query)
            da = _open_field(path, sub, f"{short} on {query['typeOfLevel']}")
            scalar = [c for c in da.coords if da[c].ndim == 0 and c == query["typeOfLevel"]]
            da = da.drop_vars(scalar)
            if name in _SURFACE_STANDARD_NAMES:
                da.attrs["standard_name"] = _SURFACE_STANDARD_NAMES[name]
            if query["stepType"] == "accum":
                da.attrs["_start_steps"] = _start_steps(sub)
            out[name] = da.rename(name)
            break
    return out


def _start_steps(sub):
    """``{endStep: startStep}`` [h] of an accumulated field's messages."""
    return {
        float(r["endStep"]): float(r["startStep"])
        for r in _header_rows(sub)
        if r.get("endStep") is not None and r.get("startStep") is not None
    }


def _accumulation_bounds(ds, name):
    """CF time bounds of an accumulated field (start = reference + startStep)."""
    starts = ds[name].attrs.pop("_start_steps", None)
    if not starts or "time" not in ds.coords or "valid_time" not in ds.coords:
        return ds
    vt = ds["valid_time"]
    if "step" in ds.coords:
        end_h = np.atleast_1d(ds["step"].values / np.timedelta64(1, "h")).astype(float)
    else:
        return ds
    start_h = np.array([starts.get(float(h), 0.0 if h == 0 else np.nan) for h in end_h])
    if np.isnan(start_h).any():
        return ds
    ref = np.atleast_1d(ds["time"].values).astype("datetime64[ns]")
    if ref.size != 1:
        return ds  # several analyses in one file: the precipitation module decides
    lower = ref[0] + (start_h * 3600e9).astype("timedelta64[ns]")
    upper = np.atleast_1d(vt.values).astype("datetime64[ns]").ravel()
    if upper.size != lower.size:
        return ds
    dims = (*vt.dims, "nv") if vt.ndim else ("nv",)
    bounds = np.stack([lower, upper], axis=-1).reshape((*vt.shape, 2))
    ds = ds.assign_coords(valid_time_bnds=(dims, bounds))
    ds["valid_time"].attrs["bounds"] = "valid_time_bnds"
    return ds


# --------------------------------------------------------------------------- grids
def _first_message_keys(path, offset, keys):
    """Keys of the message at ``offset``, read with ecCodes (the grid's description)."""
    import eccodes  # optional: only for GRIB files

    with open(path, "rb") as fh:
        fh.seek(offset)
        gid = eccodes.codes_new_from_file(fh, eccodes.CODES_PRODUCT_GRIB)
        try:
            out = {}
            for k in keys:
                try:
                    out[k] = eccodes.codes_get(gid, k)
                except eccodes.CodesInternalError:
                    continue  # not defined for this grid (projString of rotated grids)
            return out
        finally:
            eccodes.codes_release(gid)


def _projected(path, ds, offset):
    """Give a 2-D-lat/lon GRIB Dataset its CF grid mapping and 1-D x/y coordinates."""
    keys = _first_message_keys(
        path,
        offset,
        (
            "gridType", "projString", "Nx", "Ny", "iScansNegatively", "jScansPositively",
            "latitudeOfFirstGridPointInDegrees", "longitudeOfFirstGridPointInDegrees",
            "iDirectionIncrementInDegrees", "jDirectionIncrementInDegrees",
            "latitudeOfSouthernPoleInDegrees", "longitudeOfSouthernPoleInDegrees",
            "angleOfRotationInDegrees", "DxInMetres", "DyInMetres",
        ),
    )
    grid_type = keys.get("gridType")
    lat = np.asarray(ds["latitude"].values, dtype=np.float64)
    lon = np.asarray(ds["longitude"].values, dtype=np.float64)
    ydim, xdim = ds["latitude"].dims
    if grid_type == "rotated_ll":
        return _rotated(path, ds, keys, ydim, xdim)
    proj = keys.get("projString")
    if not proj:
        raise input_error(
            path, f"GRIB gridType {grid_type} without a projection description; expected "
            "ecCodes to give its projString"
        )
    try:
        crs = CRS.from_proj4(proj)
        cf = crs.to_cf()
    except Exception as exc:
        raise input_error(
            path, f"GRIB projection '{proj}' not understood by pyproj ({exc}); expected a "
            "Lambert, polar stereographic or other CF projection"
        ) from None
    to_xy = Transformer.from_crs(crs.geodetic_crs, crs, always_xy=True)
    xx, yy = to_xy.transform(lon, lat)
    x = xx.mean(axis=0)
    y = yy.mean(axis=1)
    dx = np.median(np.abs(np.diff(x))) if x.size > 1 else 1.0
    dev = max(np.abs(xx - x[None, :]).max(), np.abs(yy - y[:, None]).max())
    if not np.isfinite(dev) or dev > 0.01 * dx:
        raise input_error(
            path,
            f"GRIB {grid_type} grid: ecCodes' latitudes/longitudes are not a regular grid of "
            f"'{proj}' (off by {dev:.0f} m); expected a regular projected grid",
        )
    gm = {k: v for k, v in cf.items() if k != "crs_wkt"}
    out = ds.assign_coords(
        {
            xdim: (xdim, x, {"standard_name": "projection_x_coordinate", "units": "m"}),
            ydim: (ydim, y, {"standard_name": "projection_y_coordinate", "units": "m"}),
        }
    )
    return _with_mapping(out, gm)


def _rotated(path, ds, keys, ydim, xdim):
    """Rotated latitude/longitude: rotated degrees from the GRIB keys, CF mapping."""
    need = (
        "Nx", "Ny", "latitudeOfFirstGridPointInDegrees", "longitudeOfFirstGridPointInDegrees",
        "iDirectionIncrementInDegrees", "jDirectionIncrementInDegrees",
        "latitudeOfSouthernPoleInDegrees", "longitudeOfSouthernPoleInDegrees",
    )
    missing = [k for k in need if k not in keys]
    if missing:
        raise input_error(
            path, f"rotated GRIB grid without {join_names(missing)}; expected the rotated "
            "grid's first point, increments and southern pole"
        )
    if float(keys.get("angleOfRotationInDegrees", 0.0) or 0.0) != 0.0:
        raise input_error(
            path, "rotated GRIB grid with an extra angle of rotation; expected rotation by "
            "the pole only (angleOfRotationInDegrees 0)"
        )
    nx, ny = int(keys["Nx"]), int(keys["Ny"])
    di = float(keys["iDirectionIncrementInDegrees"]) * (-1 if keys.get("iScansNegatively") else 1)
    dj = float(keys["jDirectionIncrementInDegrees"]) * (1 if keys.get("jScansPositively") else -1)
    rlon = float(keys["longitudeOfFirstGridPointInDegrees"]) + di * np.arange(nx)
    rlon = (rlon + 180.0) % 360.0 - 180.0
    rlat = float(keys["latitudeOfFirstGridPointInDegrees"]) + dj * np.arange(ny)
    sp_lat = float(keys["latitudeOfSouthernPoleInDegrees"])
    sp_lon = float(keys["longitudeOfSouthernPoleInDegrees"])
    gm = {
        "grid_mapping_name": "rotated_latitude_longitude",
        "grid_north_pole_latitude": -sp_lat,
        "grid_north_pole_longitude": (sp_lon + 180.0 + 180.0) % 360.0 - 180.0,
        "north_pole_grid_longitude": 0.0,
        "earth_radius": GRIB_SPHERE_RADIUS_M,
    }
    out = ds.assign_coords(
        {
            xdim: (xdim, rlon, {"standard_name": "grid_longitude", "units": "degrees"}),
            ydim: (ydim, rlat, {"standard_name": "grid_latitude", "units": "degrees"}),
        }
    )
    return _with_mapping(out, gm)


def _with_mapping(ds, gm):
    ds = ds.assign(crs=((), np.int32(0), gm))
    for name in ds.data_vars:
        if name != "crs":
            ds[name].attrs["grid_mapping"] = "crs"
    return ds


# --------------------------------------------------------------------------- public
def open_grib(path, chunks):
    """Open one GRIB file of a run as an xarray Dataset, after checking it.

    Parameters
    ----------
    path : pathlib.Path
        The file (GRIB edition 1 or 2; any name).
    chunks : "auto", dict or None
        ``"auto"`` or a dict: dask-backed (one chunk per field, or as the
        dict says); None: numpy arrays read now.

    Returns
    -------
    xarray.Dataset
        CF-like, as :func:`kit.io.netcdf.open_netcdf` gives for a NetCDF file:
        pressure-level fields on ``plev_<name>`` [hPa], near-surface fields
        ``prmsl/msl``, ``sp``, ``orog``/``zsfc``, ``t2m``, ``d2m``/``r2``/``q2``,
        ``u10``, ``v10``, ``tp``/``prate``; cfgrib's ``time``, ``step``,
        ``valid_time`` and ``number``; a CF ``crs`` on projected grids.

    Raises
    ------
    kit.errors.InputError
        One line: empty, truncated or corrupt file, a GRIB1 message without a
        grid, a refused grid, fields on several grids, no pressure-level
        field, u without v.
    """
    messages = walk_messages(path)
    index, seen = _index(path)
    rows = _header_rows(index)
    _refuse_grids(path, rows)
    levels = sorted({tol for _short, tol in seen if tol})
    if not set(levels) & set(_PRESSURE_LEVEL_TYPES):
        found = f"levels found: {join_names(levels, 6)}"
        raise input_error(
            path,
            f"GRIB has no pressure-level fields ({found}); expected t and geopotential "
            "(height) on isobaric levels",
        )
    used = [r for r in rows if r["typeOfLevel"] in _PRESSURE_LEVEL_TYPES]
    grid = _one_grid(path, used) if used else None
    fields = _level_fields(path, index, rows)
    if not fields:
        found = sorted({short for short, tol in seen if tol in _PRESSURE_LEVEL_TYPES})
        raise input_error(
            path,
            f"GRIB pressure levels hold {join_names(found, 8)} but none of "
            f"{join_names(_LEVEL_SHORT_NAMES)}; expected at least t and gh (or z)",
        )
    ds = _join(path, fields, _surface_fields(path, index, rows, grid))
    for name in ("tp",):
        if name in ds:
            ds = _accumulation_bounds(ds, name)
    for name in list(ds.data_vars):
        for key in list(ds[name].attrs):
            if key.startswith("_") or (key == "standard_name" and ds[name].attrs[key] == "unknown"):
                del ds[name].attrs[key]
    if ds["latitude"].ndim == 2:
        ds = _projected(path, ds, _offset_of(index, used[0]))
    ds.attrs = {"source_format": f"GRIB edition {join_names(sorted({e for *_x, e in messages}))}"}
    if chunks is None:
        return ds.load()
    if isinstance(chunks, dict):
        return ds.chunk(chunks)
    if path.stat().st_size < SMALL_FILE_BYTES:
        # files as small as NetCDF keeps in one chunk per variable (kit.io.netcdf);
        # decoding is the cost of GRIB: decode a small file once, not again for
        # the value checks and again for the products
        ds = ds.load()
    return ds.chunk({})


def _join(path, fields, sfc):
    """One Dataset: the pressure-level fields, and the near-surface ones on their steps.

    A near-surface field missing at some steps (accumulated precipitation at
    step 0, commonly) is NaN there; an accumulation missing at step 0 is 0 (it
    starts at the run start).
    """
    try:
        ds = xr.Dataset(fields)
    except Exception as exc:
        raise input_error(
            path,
            f"GRIB pressure-level fields do not share their steps, times or members "
            f"({str(exc).splitlines()[0][:120]}); expected every field at every step",
        ) from None
    for name, da in sfc.items():
        da = da.drop_vars([c for c in ("valid_time",) if c in da.coords])
        for dim in ("time", "step", "number"):
            if dim in ds.dims and dim not in da.dims and dim in da.coords:
                da = da.expand_dims(dim)
        shared = [d for d in ("time", "step", "number") if d in da.dims and d in ds.dims]
        da = da.reindex({d: ds[d] for d in shared})
        if name == "tp" and "step" in da.dims:
            at_start = (da["step"] == np.timedelta64(0, "ns")).values
            if at_start.any():
                da = da.where(~xr.DataArray(at_start, dims="step") | da.notnull(), 0.0)
        ds[name] = da
    return ds


def _offset_of(index, row):
    """File offset of the first message with the header ``row``."""
    keys = index.index_keys
    want = tuple(row[k] for k in keys)
    for hv, ids in index.field_ids_index:
        if tuple(hv) == want:
            mid = ids[0]
            return mid[0] if isinstance(mid, tuple) else int(mid)
    return 0

