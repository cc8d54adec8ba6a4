"""Shared fixtures: small synthetic model runs, canonical or written as CF NetCDF.

The fields are smooth textbook shapes (a standard-atmosphere column with a
meridional temperature gradient and an optional tanh frontal zone), built here
for testing plumbing; they are NOT reference values for any science check.

Fixtures
--------
``canonical_run``
    factory -> in-memory canonical Dataset (numpy-backed), as
    :func:`kit.io.runs.open_run` returns it.
``make_latlon_run``
    factory -> writes a regular latitude/longitude run as CF NetCDF files under
    ``tmp_path`` (one file per step by default) and returns the folder (or
    the file with ``one_file=True``).
"""

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr

# the demo generator lives in tools/ (not installed): make it importable
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

LEVELS_HPA = (1000.0, 925.0, 850.0, 700.0, 500.0)

#: the canonical Dataset's units, stated here from DEVELOPERS.md ("The canonical
#: Dataset"), not taken from the code under test; tests/test_grids.py checks the
#: loader against this table
CANONICAL_UNITS = {
    "t": "K", "td": "K", "u": "m s-1", "v": "m s-1", "z": "m", "mslp": "Pa", "ps": "Pa",
    "zsfc": "m", "t2m": "K", "td2m": "K", "u10": "m s-1", "v10": "m s-1", "precip": "mm h-1",
}


def _isa_height_m(p_hpa):
    # ICAO standard atmosphere, troposphere (shape only)
    return 44330.8 * (1.0 - (np.asarray(p_hpa, dtype=np.float64) / 1013.25) ** 0.190263)


def _isa_temperature_k(p_hpa):
    return 288.15 - 0.0065 * _isa_height_m(p_hpa)


def synthetic_fields(
    *,
    lat=None,
    lon=None,
    levels=LEVELS_HPA,
    times=None,
    reference_time="2027-01-14T00:00",
    members=None,
    front=True,
    front_speed_deg_per_h=0.25,
    seed=None,
):
    """Canonical-layout Dataset of plausible fields (numpy, SI units).

    Parameters
    ----------
    lat, lon : 1-D array_like, optional
        Grid [degrees] (default 40..60 N, 20 W..10 E every 2 degrees); lon may
        run past 180 (a contiguous dateline domain).
    levels : sequence of float
        Pressure levels [hPa].
    times : sequence of datetime-like, optional
        Valid times (default 3-hourly, 5 steps from ``reference_time``).
    reference_time : datetime-like
        Run start.
    members : int, optional
        Number of ensemble members (adds a ``member`` dimension).
    front : bool
        Add a north-south tanh frontal zone of 8 K moving east.
    seed : int, optional
        Add small reproducible noise (0.1 K) so fields are not exactly smooth.
    """
    lat = np.arange(40.0, 60.01, 2.0) if lat is None else np.asarray(lat, dtype=np.float64)
    lon = np.arange(-20.0, 10.01, 2.0) if lon is None else np.asarray(lon, dtype=np.float64)
    lev = np.asarray(levels, dtype=np.float64)
    ref = np.datetime64(pd.Timestamp(reference_time).to_datetime64(), "ns")
    if times is None:
        times = ref + np.arange(5) * np.timedelta64(3, "h")
    times = np.asarray(times, dtype="datetime64[ns]")
    lead_h = (times - ref) / np.timedelta64(1, "h")
    la = lat[None, None, :, None]
    lo = lon[None, None, None, :]
    pl = lev[None, :, None, None]
    hh = lead_h[:, None, None, None]
    t = _isa_temperature_k(pl) + 10.0 - 0.6 * (la - lat.mean()) + 0.0 * lo + 0.0 * hh
    if front:
        x0 = lon.min() + 0.3 * (lon.max() - lon.min()) + front_speed_deg_per_h * hh
        t = t + 4.0 * np.tanh((x0 - lo) / 2.0)
    td = t - 3.0 - 0.5 * (1000.0 - pl) / 100.0
    z = _isa_height_m(pl) + 8.0 * (la - lat.mean()) * (pl < 950) + 0.0 * lo + 0.0 * hh
    u = 8.0 + 0.02 * (1000.0 - pl) + 0.0 * la + 0.0 * lo + 0.0 * hh
    v = 2.0 + 0.5 * np.cos(np.deg2rad(lo)) + 0.0 * la + 0.0 * pl + 0.0 * hh
    sfc = (times.size, lat.size, lon.size)
    mslp = 101000.0 + 150.0 * np.sin(np.deg2rad(lo[:, 0] * 4)) + 0.0 * la[:, 0] + np.zeros(sfc)
    if front:
        # the flow signature of a real front: a pressure trough along the zone and
        # cyclonic shear of the along-front wind across it
        mslp = mslp - 400.0 * np.exp(-(((lo[:, 0] - x0[:, 0]) / 3.0) ** 2))
        v = v + 4.0 * np.tanh((lo - x0) / 2.0)
    precip = np.maximum(0.0, 2.0 * np.exp(-(((lo[:, 0] - lon.mean()) / 4.0) ** 2))) + np.zeros(sfc)
    rng = np.random.default_rng(seed) if seed is not None else None
    if rng is not None:
        t = t + rng.normal(0.0, 0.1, t.shape)
    shape4 = (times.size, lev.size, lat.size, lon.size)
    data = {
        "t": (("time", "level", "lat", "lon"), np.broadcast_to(t, shape4).copy()),
        "td": (("time", "level", "lat", "lon"), np.broadcast_to(td, shape4).copy()),
        "u": (("time", "level", "lat", "lon"), np.broadcast_to(u, shape4).copy()),
        "v": (("time", "level", "lat", "lon"), np.broadcast_to(v, shape4).copy()),
        "z": (("time", "level", "lat", "lon"), np.broadcast_to(z, shape4).copy()),
        "mslp": (("time", "lat", "lon"), mslp),
        "t2m": (("time", "lat", "lon"), np.broadcast_to(t, shape4)[:, 0] - 1.0),
        "td2m": (("time", "lat", "lon"), np.broadcast_to(td, shape4)[:, 0] - 1.0),
        "u10": (("time", "lat", "lon"), np.broadcast_to(u, shape4)[:, 0] * 0.7),
        "v10": (("time", "lat", "lon"), np.broadcast_to(v, shape4)[:, 0] * 0.7),
        "precip": (("time", "lat", "lon"), precip),
    }
    ds = xr.Dataset(
        data,
        coords={"time": times, "level": lev, "lat": lat, "lon": lon, "reference_time": ref},
    )
    if members:
        offs = xr.DataArray(np.linspace(-0.5, 0.5, members), dims="member")
        ds = ds + 0.0 * offs
        ds["t"] = ds["t"] + offs
        ds = ds.assign_coords(member=("member", np.arange(members)))
        order = ["member", "time", "level", "lat", "lon"]
        for n in ds.data_vars:
            ds[n] = ds[n].transpose(*[d for d in order if d in ds[n].dims])
    for n, u in CANONICAL_UNITS.items():
        if n in ds:  # optional fields (ps, zsfc) the synthetic run does not carry
            ds[n].attrs["units"] = u
    ds.attrs["run"] = pd.Timestamp(ref).strftime("%Y-%m-%dT%HZ")
    ds.attrs["grid"] = "latlon"
    ds.attrs["source"] = "synthetic"
    return ds


_CF = {
    "t": ("air_temperature", "K"),
    "td": ("dew_point_temperature", "K"),
    "u": ("eastward_wind", "m s-1"),
    "v": ("northward_wind", "m s-1"),
    "z": ("geopotential_height", "m"),
    "mslp": ("air_pressure_at_mean_sea_level", "Pa"),
    "t2m": ("air_temperature", "K"),
    "td2m": ("dew_point_temperature", "K"),
    "u10": ("eastward_wind", "m s-1"),
    "v10": ("northward_wind", "m s-1"),
}


def to_cf(ds, *, accumulate_precip=True):
    """CF-style Dataset of a canonical one: standard names, time units, accumulations.

    Precipitation becomes ``precipitation_amount`` [kg m-2] accumulated since
    the reference time (rate times hours, summed step by step).
    """
    out = ds.copy()
    for n, (std, units) in _CF.items():
        if n in out:
            out[n].attrs = {"standard_name": std, "units": units}
    for n in ("t2m", "td2m"):
        if n in out:
            out[n] = out[n].assign_coords(height=2.0)
    for n in ("u10", "v10"):
        if n in out:
            out[n] = out[n].assign_coords(height=10.0)
    if "precip" in out:
        if accumulate_precip:
            times = out["time"].values
            ref = out["reference_time"].values
            steps = np.diff(np.concatenate([[ref], times])) / np.timedelta64(1, "h")
            steps = xr.DataArray(steps, dims="time", coords={"time": times})
            amount = (out["precip"] * steps).cumsum("time")
            out["precip"] = amount.transpose(*out["precip"].dims)
            out["precip"].attrs = {
                "standard_name": "precipitation_amount",
                "units": "kg m-2",
                "cell_methods": "time: sum",
            }
        else:
            out["precip"].attrs = {"standard_name": "lwe_precipitation_rate", "units": "mm h-1"}
    out["level"].attrs = {"standard_name": "air_pressure", "units": "hPa", "positive": "down"}
    out["lat"].attrs = {"standard_name": "latitude", "units": "degrees_north"}
    out["lon"].attrs = {"standard_name": "longitude", "units": "degrees_east"}
    out["reference_time"].attrs = {"standard_name": "forecast_reference_time"}
    out = out.rename({"reference_time": "forecast_reference_time"})
    out.attrs = {"Conventions": "CF-1.8", "title": "synthetic test run (invented)"}
    return out


def write_cf(ds, folder, *, one_file=False, fmt="NETCDF4"):
    """Write a CF Dataset into ``folder`` (a file per step, or ``run.nc``); return the path."""
    folder.mkdir(parents=True, exist_ok=True)
    ref = pd.Timestamp(ds["forecast_reference_time"].values)
    enc_time = {"units": f"hours since {ref:%Y-%m-%d %H:%M:%S}", "calendar": "proleptic_gregorian"}
    if one_file:
        path = folder / "run.nc"
        ds.to_netcdf(
            path, format=fmt, encoding={"time": enc_time, "forecast_reference_time": enc_time}
        )
        return path
    for i in range(ds.sizes["time"]):
        step = ds.isel(time=[i])
        lead = int(round((step["time"].values[0] - ref.to_datetime64()) / np.timedelta64(1, "h")))
        step.to_netcdf(
            folder / f"step_{lead:03d}.nc",
            format=fmt,
            encoding={"time": enc_time, "forecast_reference_time": enc_time},
        )
    return folder


@pytest.fixture
def canonical_run():
    """Factory: in-memory canonical Dataset (see :func:`synthetic_fields`)."""
    return synthetic_fields


@pytest.fixture
def make_latlon_run(tmp_path):
    """Factory: write a synthetic CF run under tmp_path and return its path.

    Call as ``make_latlon_run(name="run", one_file=False, **synthetic_fields_kwargs)``;
    returns ``(path, canonical_dataset)`` where ``canonical_dataset`` is what
    :func:`kit.io.runs.open_run` should give back (precipitation as a rate, NaN
    where the first step has no accumulation start).
    """

    def make(name="run", *, one_file=False, fmt="NETCDF4", **kwargs):
        ds = synthetic_fields(**kwargs)
        path = write_cf(to_cf(ds), tmp_path / name, one_file=one_file, fmt=fmt)
        return path, ds

    return make
