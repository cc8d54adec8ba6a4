#!/usr/bin/env python
"""Derive the small CF-NetCDF subsets in tests/real_data/ from real open model output.

Regression cases and invariants only, NEVER truth.

Sources (downloaded beforehand with the ordinary package clients):

* the cfgrib source archive (``cfgrib-0.9.15.1.tar.gz``), which ships

  - ``nam.t00z.awp21100.tm00.grib2``: NCEP NAM, 2018-09-17 00 UTC, GRIB2 on
    the AWIPS 211 grid (Lambert conformal, 81.271 km, 93 x 65);
  - ``tests/sample-data/era5-levels-members.grib``: ERA5 ensemble of data
    assimilations (10 members), z and t on 850/500 hPa, 4 analysis times;

* Debian's ``grads`` package (``grads_2.2.1-5+b1_amd64.deb``), whose
  ``usr/share/doc/grads/examples/model.ctl`` + ``model.dat`` hold "5 Days of
  Sample Model Output" (GrADS raw binary, 72 x 46 global 5 x 4 degree grid).

Usage::

    python tests/real_data/make_real_data.py --cfgrib-sdist PATH --grads-deb PATH

Nothing is written beside the source files: both archives are unpacked into a
temporary folder, and cfgrib is called with ``indexpath=''`` so no ``.idx``
file is written anywhere.  Needs numpy, xarray, netCDF4, pyproj, cfgrib and
eccodes (``pip install cfgrib eccodes``).
"""

import argparse
import io
import os
import re
import shutil
import tarfile
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr

HERE = Path(__file__).resolve().parent
NOTE = "Regression cases and invariants only, never truth."
KEEP_LEVELS = (1000.0, 925.0, 850.0, 700.0, 500.0)  # hPa, those present are kept
GRIB_COPY_MAX = 1.5e6  # bytes: raw GRIB files up to this size are copied to grib/

NAM_MEMBER = "cfgrib-0.9.15.1/nam.t00z.awp21100.tm00.grib2"
ERA5_MEMBER = "cfgrib-0.9.15.1/tests/sample-data/era5-levels-members.grib"
GRADS_DIR = "usr/share/doc/grads/examples"

# ERA5 window written by default (north-to-south as in the source; crosses 0E)
ERA5_LAT = (80.0, 20.0)
ERA5_LON = (-90.0, 60.0)


# --------------------------------------------------------------------------- helpers
def cfgrib_open(path, **filter_by_keys):
    """One cfgrib dataset; no index file is written (indexpath='')."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ds = xr.open_dataset(
            path,
            engine="cfgrib",
            backend_kwargs={"indexpath": "", "filter_by_keys": filter_by_keys},
        )
        return ds.load()


def cf_time(values, name, standard_name, long_name):
    """A time variable with explicit CF encoding (hours since the first value)."""
    values = pd.to_datetime(np.atleast_1d(values))
    origin = values.min().strftime("%Y-%m-%d %H:%M:%S")
    attrs = {"standard_name": standard_name, "long_name": long_name}
    enc = {"units": f"hours since {origin}", "calendar": "proleptic_gregorian", "dtype": "float64"}
    return attrs, enc


def pressure_levels(values):
    lev = xr.DataArray(
        np.asarray(values, dtype=np.float32),
        dims="level",
        attrs={
            "standard_name": "air_pressure",
            "long_name": "pressure level",
            "units": "hPa",
            "positive": "down",
            "axis": "Z",
        },
    )
    return lev


def field(data, dims, standard_name, units, long_name, **extra):
    attrs = {"standard_name": standard_name, "units": units, "long_name": long_name}
    attrs.update(extra)
    return xr.DataArray(np.asarray(data, dtype=np.float32), dims=dims, attrs=attrs)


def finish(ds, valid, ref):
    """Attach CF-encoded time / reference_time coordinates."""
    valid = pd.to_datetime(np.atleast_1d(valid))
    ds = ds.assign_coords(time=("time", valid.values), reference_time=((), np.datetime64(pd.Timestamp(ref))))
    a, e = cf_time(valid, "time", "time", "valid time")
    ds["time"].attrs.update(a, axis="T")
    ds["time"].encoding.update(e)
    a, e = cf_time([ref], "reference_time", "forecast_reference_time", "run start (reference time)")
    ds["reference_time"].attrs.update(a)
    ds["reference_time"].encoding.update(e)
    ds.attrs["Conventions"] = "CF-1.8"
    ds.attrs["comment"] = NOTE + " " + ds.attrs.get("comment", "")
    ds.attrs["history"] = "derived by tests/real_data/make_real_data.py (see tests/real_data/README.md)"
    return ds


def write(ds, path):
    enc = {}
    for name, var in ds.variables.items():
        e = dict(var.encoding)
        if name in ds.data_vars and var.dtype.kind == "f":
            e.update(zlib=True, complevel=9, shuffle=True, dtype="float32", _FillValue=np.float32(np.nan))
        elif var.dtype.kind == "f" and name not in ("time", "reference_time"):
            e.update(zlib=True, complevel=9, shuffle=True, _FillValue=None)
        else:
            e["_FillValue"] = None  # coordinates and the grid mapping: no fill value
        enc[name] = e
    for name, var in ds.variables.items():
        # the per-variable "coordinates" attribute is read from the dataset's
        # own encoding; everything else is passed explicitly below
        has = "coordinates" in var.encoding
        var.encoding = {"coordinates": var.encoding["coordinates"]} if has else {}
        enc[name].pop("coordinates", None)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.exists():
        path.unlink()
    ds.to_netcdf(path, encoding=enc, format="NETCDF4")
    return path


def keep_levels(available):
    lv = [float(x) for x in available]
    return [x for x in KEEP_LEVELS if x in lv]


# --------------------------------------------------------------------------- unpacking
def unpack_cfgrib(sdist, tmp):
    out = {}
    with tarfile.open(sdist, "r:gz") as tar:
        for key, member in (("nam", NAM_MEMBER), ("era5", ERA5_MEMBER), ("license", "cfgrib-0.9.15.1/LICENSE")):
            dest = tmp / "cfgrib" / Path(member).name
            dest.parent.mkdir(parents=True, exist_ok=True)
            with tar.extractfile(member) as src, open(dest, "wb") as dst:
                shutil.copyfileobj(src, dst)
            out[key] = dest
    return out


def _ar_members(data):
    """Members of a Unix ar archive (a .deb): {name: bytes}."""
    if not data.startswith(b"!<arch>\n"):
        raise ValueError("not an ar archive (.deb)")
    pos, out = 8, {}
    while pos + 60 <= len(data):
        hdr = data[pos : pos + 60]
        name = hdr[:16].decode().strip().rstrip("/")
        size = int(hdr[48:58].decode().strip())
        out[name] = data[pos + 60 : pos + 60 + size]
        pos += 60 + size + (size % 2)
    return out


def unpack_grads(deb, tmp):
    """Extract the example data and the copyright file (pure Python, no dpkg needed)."""
    members = _ar_members(Path(deb).read_bytes())
    data_name = next(n for n in members if n.startswith("data.tar"))
    want = {f"{GRADS_DIR}/model.ctl", f"{GRADS_DIR}/model.dat", "usr/share/doc/grads/copyright"}
    dest = tmp / "grads"
    with tarfile.open(fileobj=io.BytesIO(members[data_name]), mode="r:*") as tar:
        for m in tar.getmembers():
            name = m.name[2:] if m.name.startswith("./") else m.name
            if name in want and m.isfile():
                p = dest / name
                p.parent.mkdir(parents=True, exist_ok=True)
                with tar.extractfile(m) as src, open(p, "wb") as dst:
                    shutil.copyfileobj(src, dst)
    return dest / GRADS_DIR


# --------------------------------------------------------------------------- NAM (Lambert)
def lcc_cone(lat1, lat2):
    p1, p2 = np.radians(lat1), np.radians(lat2)
    if abs(p1 - p2) < 1e-10:
        return np.sin(p1)
    return np.log(np.cos(p1) / np.cos(p2)) / np.log(np.tan(np.pi / 4 + p2 / 2) / np.tan(np.pi / 4 + p1 / 2))


def rotate_grid_to_earth(u, v, lon, lov, cone):
    """Grid-relative (x, y) wind components to earth-relative (east, north).

    On a Lambert conformal grid the local meridian is turned from the grid's
    y axis by the meridian convergence  theta = n * (lon - LoV)  (n: cone
    constant), counter-clockwise east of LoV, so
        u_east  =  cos(theta) u_x + sin(theta) v_y
        v_north = -sin(theta) u_x + cos(theta) v_y
    """
    dlon = (np.asarray(lon) - lov + 180.0) % 360.0 - 180.0
    th = np.radians(cone * dlon)
    c, s = np.cos(th), np.sin(th)
    return c * u + s * v, -s * u + c * v, np.degrees(th)


def check_convergence_numerically(crs, x, y, theta_deg, radius):
    """Angle of the grid x axis from local east, measured with pyproj; must equal -theta."""
    from pyproj import Geod, Transformer

    tr = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    geod = Geod(a=radius, b=radius)
    X, Y = np.meshgrid(x, y)
    h = 1000.0
    lo0, la0 = tr.transform(X - h, Y)
    lo1, la1 = tr.transform(X + h, Y)
    fwd, back, _ = geod.inv(lo0, la0, lo1, la1)
    # azimuth at the midpoint: mean of the forward azimuth and the reversed back azimuth
    az = np.degrees(np.arctan2(np.sin(np.radians(fwd)) + np.sin(np.radians(back + 180.0)),
                               np.cos(np.radians(fwd)) + np.cos(np.radians(back + 180.0))))
    alpha = 90.0 - az  # counter-clockwise from east
    err = np.abs(((alpha + theta_deg) + 180.0) % 360.0 - 180.0)
    return float(err.max())


def build_nam(grib):
    import eccodes
    from pyproj import CRS, Transformer

    # ---- GRIB keys of the grid and run, straight from ecCodes
    with open(grib, "rb") as fh:
        gid = eccodes.codes_grib_new_from_file(fh)
        keys = {
            k: eccodes.codes_get(gid, k)
            for k in (
                "centre", "generatingProcessIdentifier", "typeOfProcessedData", "dataDate", "dataTime",
                "gridType", "Nx", "Ny", "DxInMetres", "DyInMetres", "LaDInDegrees", "LoVInDegrees",
                "Latin1InDegrees", "Latin2InDegrees", "latitudeOfFirstGridPointInDegrees",
                "longitudeOfFirstGridPointInDegrees", "shapeOfTheEarth", "radius", "scanningMode",
                "uvRelativeToGrid",
            )
        }
        eccodes.codes_release(gid)
    assert keys["gridType"] == "lambert" and keys["shapeOfTheEarth"] == 6 and keys["scanningMode"] == 64
    # u and v share GRIB2 messages (multi-field): without multi-field support
    # ecCodes iterates the messages and sees only u. Count fields with it on.
    eccodes.codes_grib_multi_support_on()
    n_u = n_v = 0
    with open(grib, "rb") as fh:
        while True:
            gid = eccodes.codes_grib_new_from_file(fh)
            if gid is None:
                break
            sn = eccodes.codes_get(gid, "shortName")
            n_u += sn == "u"
            n_v += sn == "v"
            eccodes.codes_release(gid)
    eccodes.codes_grib_multi_support_off()
    assert n_u == n_v, (n_u, n_v)

    R = float(keys["radius"])
    lov, lad = float(keys["LoVInDegrees"]), float(keys["LaDInDegrees"])
    lat1, lat2 = float(keys["Latin1InDegrees"]), float(keys["Latin2InDegrees"])
    lov180 = (lov + 180.0) % 360.0 - 180.0
    gm_attrs = {
        "grid_mapping_name": "lambert_conformal_conic",
        "standard_parallel": [lat1, lat2] if lat1 != lat2 else lat1,
        "longitude_of_central_meridian": lov180,
        "latitude_of_projection_origin": lad,
        "false_easting": 0.0,
        "false_northing": 0.0,
        "earth_radius": R,
        "long_name": "NCEP AWIPS grid 211 (Lambert conformal, 81.271 km), sphere R = 6371229 m",
    }
    crs = CRS.from_cf(gm_attrs)
    to_xy = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    x0, y0 = to_xy.transform(float(keys["longitudeOfFirstGridPointInDegrees"]), float(keys["latitudeOfFirstGridPointInDegrees"]))
    nx, ny, dx, dy = int(keys["Nx"]), int(keys["Ny"]), float(keys["DxInMetres"]), float(keys["DyInMetres"])
    x = x0 + dx * np.arange(nx)
    y = y0 + dy * np.arange(ny)  # scanning mode 64: rows south to north

    pl = {sn: cfgrib_open(grib, typeOfLevel="isobaricInhPa", shortName=sn) for sn in ("t", "r", "gh", "u", "v")}
    sfc = cfgrib_open(grib, typeOfLevel="surface", stepType="instant")
    msl = cfgrib_open(grib, typeOfLevel="meanSea")
    h2 = cfgrib_open(grib, typeOfLevel="heightAboveGround", level=2)
    h10 = cfgrib_open(grib, typeOfLevel="heightAboveGround", level=10)

    lat = pl["t"]["latitude"].values
    lon = pl["t"]["longitude"].values
    # the projected grid must reproduce ecCodes' own lat/lon
    back = Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    X, Y = np.meshgrid(x, y)
    plon, plat = back.transform(X, Y)
    dlon = np.abs((plon - lon + 180.0) % 360.0 - 180.0)
    assert np.abs(plat - lat).max() < 1e-3 and dlon.max() < 1e-3, (np.abs(plat - lat).max(), dlon.max())

    for sn, d in pl.items():
        assert int(d[sn].attrs["GRIB_uvRelativeToGrid"]) == int(keys["uvRelativeToGrid"]) or sn not in "uv"
    grid_relative = int(keys["uvRelativeToGrid"]) == 1
    for d, sn in ((pl["u"], "u"), (pl["v"], "v"), (h10, "u10"), (h10, "v10")):
        assert int(d[sn].attrs["GRIB_uvRelativeToGrid"]) == 1

    levels = keep_levels(pl["t"]["isobaricInhPa"].values)
    sel = lambda sn: pl[sn][sn].sel(isobaricInhPa=levels).values[None]  # (time, level, y, x)

    cone = lcc_cone(lat1, lat2)
    u, v, theta = rotate_grid_to_earth(sel("u"), sel("v"), lon, lov, cone)
    u10, v10, _ = rotate_grid_to_earth(h10["u10"].values, h10["v10"].values, lon, lov, cone)
    err = check_convergence_numerically(crs, x, y, theta, R)
    assert err < 0.01, err

    D4, D3 = ("time", "level", "y", "x"), ("time", "y", "x")
    rot = (
        "earth-relative: rotated from the GRIB grid-relative components (uvRelativeToGrid=1) by the "
        f"meridian convergence theta = n*(lon - LoV), n = sin({lat1}) = {cone:.6f}, LoV = {lov}; "
        "u_e = cos(theta) u_x + sin(theta) v_y, v_n = -sin(theta) u_x + cos(theta) v_y"
    )
    ds = xr.Dataset(
        {
            "air_temperature": field(sel("t"), D4, "air_temperature", "K", "temperature", grid_mapping="crs"),
            "relative_humidity": field(sel("r"), D4, "relative_humidity", "%", "relative humidity (with respect to water, NCEP)", grid_mapping="crs"),
            "geopotential_height": field(sel("gh"), D4, "geopotential_height", "m", "geopotential height (GRIB units gpm)", grid_mapping="crs"),
            "eastward_wind": field(u, D4, "eastward_wind", "m s-1", "eastward wind", grid_mapping="crs", comment=rot),
            "northward_wind": field(v, D4, "northward_wind", "m s-1", "northward wind", grid_mapping="crs", comment=rot),
            "air_pressure_at_mean_sea_level": field(msl["prmsl"].values[None], D3, "air_pressure_at_mean_sea_level", "Pa", "pressure reduced to MSL (GRIB prmsl)", grid_mapping="crs"),
            "surface_air_pressure": field(sfc["sp"].values[None], D3, "surface_air_pressure", "Pa", "surface pressure", grid_mapping="crs"),
            "surface_altitude": field(sfc["orog"].values, ("y", "x"), "surface_altitude", "m", "model orography (GRIB orog)", grid_mapping="crs"),
            "t2m": field(h2["t2m"].values[None], D3, "air_temperature", "K", "2 m temperature", grid_mapping="crs"),
            "r2m": field(h2["r2"].values[None], D3, "relative_humidity", "%", "2 m relative humidity", grid_mapping="crs"),
            "u10": field(u10[None], D3, "eastward_wind", "m s-1", "10 m eastward wind", grid_mapping="crs", comment=rot),
            "v10": field(v10[None], D3, "northward_wind", "m s-1", "10 m northward wind", grid_mapping="crs", comment=rot),
        },
        coords={
            "level": pressure_levels(levels),
            "y": ("y", y, {"standard_name": "projection_y_coordinate", "units": "m", "axis": "Y"}),
            "x": ("x", x, {"standard_name": "projection_x_coordinate", "units": "m", "axis": "X"}),
            "lat": (("y", "x"), lat, {"standard_name": "latitude", "units": "degrees_north"}),
            "lon": (("y", "x"), (lon + 180.0) % 360.0 - 180.0, {"standard_name": "longitude", "units": "degrees_east"}),
            "height_2m": ((), 2.0, {"standard_name": "height", "units": "m", "positive": "up", "axis": "Z"}),
            "height_10m": ((), 10.0, {"standard_name": "height", "units": "m", "positive": "up", "axis": "Z"}),
        },
    )
    ds["crs"] = xr.DataArray(np.int32(0), attrs=gm_attrs)
    ds["crs"].encoding["coordinates"] = None  # the grid mapping carries no coordinates
    for n in ds.data_vars:
        if n != "crs":
            own = {"t2m": "height_2m", "r2m": "height_2m", "u10": "height_10m", "v10": "height_10m"}.get(n, "")
            ds[n].encoding["coordinates"] = " ".join(filter(None, ["reference_time lat lon", own]))
    date = f"{keys['dataDate']}"
    ref = pd.Timestamp(f"{date[:4]}-{date[4:6]}-{date[6:]}") + pd.Timedelta(hours=int(keys["dataTime"]) // 100)
    valid = pd.Timestamp(pl["t"]["valid_time"].values)
    assert valid == ref  # step 0
    ds.attrs.update(
        title="NCEP NAM 2018-09-17 00 UTC (step 0) on AWIPS grid 211, subset",
        institution="US National Weather Service - NCEP (GRIB centre kwbc)",
        source=(
            f"NAM (GRIB2 generatingProcessIdentifier {keys['generatingProcessIdentifier']}), "
            f"typeOfProcessedData={keys['typeOfProcessedData']}, step 0; "
            "file nam.t00z.awp21100.tm00.grib2 from the cfgrib 0.9.15.1 source archive"
        ),
        wind_rotation="grid-relative GRIB winds rotated to earth-relative (see the wind variables' comment)",
        comment="Levels kept: " + ", ".join(f"{int(l)}" for l in levels) + " hPa (no 925 hPa in the source).",
    )
    return finish(ds, [valid], ref), {"grid_relative": grid_relative, "levels": levels, "theta_range": (float(theta.min()), float(theta.max())), "rotation_check_deg": err, "n_u_v_fields": (n_u, n_v)}


# --------------------------------------------------------------------------- ERA5 members
def build_era5(grib, full):
    src = cfgrib_open(grib)
    assert int(src["t"].attrs["GRIB_uvRelativeToGrid"]) == 0
    levels = keep_levels(src["isobaricInhPa"].values)
    src = src.sel(isobaricInhPa=levels)
    lon = src["longitude"].values
    if not full:
        lon180 = (lon + 180.0) % 360.0 - 180.0
        order = np.argsort(lon180, kind="stable")
        src = src.isel(longitude=order).assign_coords(longitude=lon180[order])
        src = src.sel(latitude=slice(*ERA5_LAT), longitude=slice(*ERA5_LON))
    lat = src["latitude"].values
    lon = src["longitude"].values
    D = ("realization", "time", "level", "lat", "lon")
    ds = xr.Dataset(
        {
            "air_temperature": field(src["t"].values, D, "air_temperature", "K", "temperature"),
            "geopotential": field(src["z"].values, D, "geopotential", "m2 s-2", "geopotential (GRIB units m**2 s**-2)"),
        },
        coords={
            "realization": ("realization", src["number"].values.astype(np.int32), {"standard_name": "realization", "long_name": "ensemble member number (GRIB number)"}),
            "level": pressure_levels(levels),
            "lat": ("lat", lat, {"standard_name": "latitude", "units": "degrees_north", "axis": "Y"}),
            "lon": ("lon", lon, {"standard_name": "longitude", "units": "degrees_east", "axis": "X"}),
        },
    )
    valid = pd.to_datetime(src["valid_time"].values)
    assert (valid == pd.to_datetime(src["time"].values)).all()  # analyses, step 0
    dom = "global 3 x 3 degree grid" if full else f"window {ERA5_LAT[1]}..{ERA5_LAT[0]}N, {ERA5_LON[0]}..{ERA5_LON[1]}E of the global 3 x 3 degree grid"
    ds.attrs.update(
        title="ERA5 ensemble of data assimilations (10 members), t and z on 850/500 hPa, subset",
        institution="European Centre for Medium-Range Weather Forecasts (GRIB centre ecmf)",
        source="GRIB1 class=ea stream=enda type=an expver=0001; file tests/sample-data/era5-levels-members.grib from the cfgrib 0.9.15.1 source archive",
        kind="analyses",
        comment=(
            f"Domain: {dom}; latitude kept north-to-south as in the source. Each time is its own analysis "
            "(step 0); reference_time is the first analysis time by convention. No humidity, no winds, no "
            "surface pressure or orography in the source."
        ),
    )
    return finish(ds, valid, valid[0]), {"levels": levels}


# --------------------------------------------------------------------------- GrADS model.dat
def read_grads_ctl(ctl_path):
    """Parse a GrADS descriptor: DSET, OPTIONS, UNDEF, TITLE, X/Y/Z/TDEF, VARS."""
    text = Path(ctl_path).read_text()
    lines = [l.strip() for l in text.splitlines() if l.strip() and not l.strip().startswith("*")]
    ctl, i, vars_ = {"options": set()}, 0, []
    while i < len(lines):
        tok = lines[i].split()
        key = tok[0].upper()
        if key == "DSET":
            dset = tok[1]
            ctl["dset"] = Path(ctl_path).parent / dset[1:] if dset.startswith("^") else Path(dset)
        elif key == "OPTIONS":
            ctl["options"] |= {t.lower() for t in tok[1:]}
        elif key == "UNDEF":
            ctl["undef"] = float(tok[1])
        elif key == "TITLE":
            ctl["title"] = lines[i].split(None, 1)[1]
        elif key in ("XDEF", "YDEF", "ZDEF"):
            n, kind = int(tok[1]), tok[2].upper()
            vals = tok[3:]
            while len(vals) < (2 if kind == "LINEAR" else n):
                i += 1
                vals += lines[i].split()
            if kind == "LINEAR":
                vals = float(vals[0]) + float(vals[1]) * np.arange(n)
            elif kind == "LEVELS":
                vals = np.array([float(v) for v in vals[:n]])
            else:
                raise ValueError(f"{key} {kind} not supported")
            ctl[key] = vals
        elif key == "TDEF":
            n, kind, start, incr = int(tok[1]), tok[2].upper(), tok[3], tok[4].lower()
            if kind != "LINEAR":
                raise ValueError("TDEF must be LINEAR")
            m = re.fullmatch(r"(?:(\d{1,2})(?::(\d{2}))?z)?(\d{1,2})?([a-z]{3})(\d{4})", start.lower())
            hh, mm, dd, mon, yyyy = m.groups()
            t0 = pd.Timestamp(f"{yyyy}-{mon}-{dd or 1}") + pd.Timedelta(hours=int(hh or 0), minutes=int(mm or 0))
            num, unit = re.fullmatch(r"(\d+)(mn|hr|dy|mo|yr)", incr).groups()
            if unit in ("mo", "yr"):
                step = pd.DateOffset(months=int(num) * (12 if unit == "yr" else 1))
                ctl["TDEF"] = pd.DatetimeIndex([t0 + k * step for k in range(n)])
            else:
                step = pd.Timedelta(**{{"mn": "minutes", "hr": "hours", "dy": "days"}[unit]: int(num)})
                ctl["TDEF"] = pd.DatetimeIndex([t0 + k * step for k in range(n)])
        elif key == "VARS":
            nv = int(tok[1])
            for j in range(nv):
                vt = lines[i + 1 + j].split(None, 3)
                vars_.append((vt[0], int(vt[1]), vt[2], vt[3] if len(vt) > 3 else ""))
            i += nv
        i += 1
    ctl["vars"] = vars_
    return ctl


def read_grads(ctl):
    """{name: array (time, nlev|1, y, x)} from a sequential GrADS binary (no Fortran records)."""
    if ctl["options"] & {"sequential", "template", "yrev", "zrev"}:
        raise ValueError(f"OPTIONS {ctl['options']} not supported by this small reader")
    dt = ">f4" if "big_endian" in ctl["options"] else "<f4"
    nx, ny, nt = len(ctl["XDEF"]), len(ctl["YDEF"]), len(ctl["TDEF"])
    per_t = sum(max(nl, 1) for _, nl, _, _ in ctl["vars"]) * nx * ny
    raw = np.fromfile(ctl["dset"], dtype=dt)
    assert raw.size == per_t * nt, (raw.size, per_t * nt)
    raw = raw.reshape(nt, per_t)
    out, off = {}, 0
    for name, nl, _, _ in ctl["vars"]:
        k = max(nl, 1)
        a = raw[:, off : off + k * nx * ny].reshape(nt, k, ny, nx).astype(np.float32)
        undef = ctl["undef"]
        a = np.where(np.isclose(a, undef, rtol=1e-5) | (np.abs(a) > abs(undef) * 0.5), np.nan, a)
        out[name.upper()] = a
        off += k * nx * ny
    return out


def build_grads(exdir):
    ctl = read_grads_ctl(exdir / "model.ctl")
    data = read_grads(ctl)
    zlev = list(ctl["ZDEF"])
    levels = keep_levels(zlev)
    idx = [zlev.index(l) for l in levels]
    D4, D3 = ("time", "level", "lat", "lon"), ("time", "lat", "lon")
    assert ctl["vars"][5][0].upper() == "Q" and ctl["vars"][5][1] == 5
    src_note = "units not stated by the source; inferred (see README)"
    ds = xr.Dataset(
        {
            "air_temperature": field(data["T"][:, idx], D4, "air_temperature", "K", "temperature (GrADS T)", comment=src_note),
            "specific_humidity": field(data["Q"][:, idx], D4, "specific_humidity", "kg kg-1", "specific humidity (GrADS Q)", comment=src_note),
            "eastward_wind": field(data["U"][:, idx], D4, "eastward_wind", "m s-1", "eastward wind (GrADS U)", comment=src_note),
            "northward_wind": field(data["V"][:, idx], D4, "northward_wind", "m s-1", "northward wind (GrADS V)", comment=src_note),
            "geopotential_height": field(data["Z"][:, idx], D4, "geopotential_height", "m", "geopotential height (GrADS Z)", comment=src_note),
            "surface_air_pressure": field(data["PS"][:, 0] * 100.0, D3, "surface_air_pressure", "Pa", "surface pressure (GrADS PS, hPa in the source, x100 here)", comment=src_note),
            "surface_temperature": field(data["TS"][:, 0], D3, "surface_temperature", "K", "surface temperature (GrADS TS)", comment=src_note),
        },
        coords={
            "level": pressure_levels(levels),
            "lat": ("lat", ctl["YDEF"], {"standard_name": "latitude", "units": "degrees_north", "axis": "Y"}),
            "lon": ("lon", ctl["XDEF"], {"standard_name": "longitude", "units": "degrees_east", "axis": "X"}),
        },
    )
    ds.attrs.update(
        title=f"GrADS example data: {ctl['title']}, subset",
        institution="GrADS example data set (COLA/IGES); originating model not stated",
        source="usr/share/doc/grads/examples/model.ctl + model.dat from Debian package grads 3:2.2.1-5+b1 (amd64)",
        comment=(
            "Points below ground are undefined (NaN) in the source. reference_time is the first valid time: "
            "the source does not say when the run started. Precipitation (P) left out: its units are not stated."
        ),
    )
    return finish(ds, ctl["TDEF"], ctl["TDEF"][0]), {"levels": levels}


# --------------------------------------------------------------------------- report
def below_ground_fraction(ds, level=850.0):
    if "surface_air_pressure" not in ds or level not in ds["level"].values:
        return None
    ps = ds["surface_air_pressure"]
    return float((ps < level * 100.0).mean())


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--cfgrib-sdist", required=True, help="cfgrib-0.9.15.1.tar.gz")
    ap.add_argument("--grads-deb", required=True, help="Debian grads_*.deb")
    ap.add_argument("--out", default=str(HERE), help="output folder (default: this script's folder)")
    ap.add_argument("--era5-global", action="store_true", help="write the whole ERA5 globe (about 2 MB) instead of the window")
    ap.add_argument("--no-grib-copy", action="store_true", help="do not copy the raw GRIB files to OUT/grib/")
    args = ap.parse_args(argv)
    out = Path(args.out)

    with tempfile.TemporaryDirectory(prefix="frontshift_realdata_") as tmp:
        tmp = Path(tmp)
        cf = unpack_cfgrib(args.cfgrib_sdist, tmp)
        gx = unpack_grads(args.grads_deb, tmp)

        results = []
        ds, info = build_nam(cf["nam"])
        results.append((write(ds, out / "nam_awp211_20180917T00Z.nc"), ds, info))
        ds, info = build_era5(cf["era5"], args.era5_global)
        results.append((write(ds, out / "era5_enda_members_20170101.nc"), ds, info))
        ds, info = build_grads(gx)
        results.append((write(ds, out / "grads_model_19870102.nc"), ds, info))

        if not args.no_grib_copy:
            for src in (cf["nam"], cf["era5"]):
                if src.stat().st_size <= GRIB_COPY_MAX:
                    (out / "grib").mkdir(parents=True, exist_ok=True)
                    shutil.copyfile(src, out / "grib" / src.name)
                else:
                    print(f"not copied (over {GRIB_COPY_MAX / 1e6} MB): {src.name}")
        leftovers = list(tmp.rglob("*.idx"))
        assert not leftovers, leftovers

    for path, ds, info in results:
        frac = below_ground_fraction(ds)
        print(f"{path.name}: {path.stat().st_size} bytes, dims {dict(ds.sizes)}")
        print(f"  levels {info['levels']}; 850 hPa below ground (ps < 850 hPa): "
              + ("n/a (no surface pressure)" if frac is None else f"{frac:.4f}"))
        for k, v in info.items():
            if k != "levels":
                print(f"  {k}: {v}")


if __name__ == "__main__":
    main()
