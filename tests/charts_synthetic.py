"""A small invented canonical run for the chart, panel and shift-command tests.

A low with a cold front and a warm front on a regular latitude/longitude grid,
geostrophic winds from the MSLP field. Invented weather: never a reference
value in a science test, only material to draw and to push through the tools.
"""

import numpy as np
import xarray as xr

G0 = 9.80665


def make_run(lat0=35.0, lat1=65.0, lon0=-35.0, lon1=25.0, step=1.0, hours=(0, 6, 12, 18, 24),
             run="2031-02-03T00Z", levels=(1000.0, 925.0, 850.0, 700.0, 500.0), south=False,
             ref="2031-02-03T00:00"):
    """Build the canonical Dataset (DEVELOPERS.md) of an invented run."""
    lat = np.arange(lat0, lat1 + step / 2, step)
    lon = np.arange(lon0, lon1 + step / 2, step)
    ref = np.datetime64(ref, "ns")
    times = ref + np.array(hours, dtype="timedelta64[h]").astype("timedelta64[ns]")
    lon2, lat2 = np.meshgrid(lon, lat)
    alat = np.abs(lat2)
    lev = np.array(levels, dtype=float)
    nt, nz, ny, nx = len(times), len(lev), len(lat), len(lon)
    t = np.empty((nt, nz, ny, nx))
    mslp = np.empty((nt, ny, nx))
    cy, cx = (abs(lat0) + abs(lat1)) / 2, (lon0 + lon1) / 2
    for i, h in enumerate(hours):
        xc = cx - 8 + 0.4 * h  # the low and its cold front move east
        dist = (lon2 - xc) * np.cos(np.deg2rad(alat)) - 0.5 * (alat - cy)
        warm_sector = np.tanh(-dist / 1.5)
        y = (alat - (cy + 3 + 0.1 * h)) / 2.5
        base = (285 - 0.6 * (alat - cy) + 9.0 * warm_sector
                + 7.0 * np.tanh(-y) * (0.5 + 0.5 * np.tanh((lon2 - xc) / 2.0)))
        for k, p in enumerate(lev):
            t[i, k] = base - 52.0 * np.log(1000.0 / p)
        r2 = ((lon2 - (xc - 2)) * np.cos(np.deg2rad(alat))) ** 2 + (alat - (cy + 3)) ** 2
        mslp[i] = 101300 - 3000 * np.exp(-r2 / 120.0) + 20 * (alat - cy)
    td = t - 1.5
    z = np.broadcast_to((8000 * np.log(1000 / lev))[None, :, None, None], t.shape).copy()
    # geostrophic wind of the MSLP field on every level (rough, enough to type the fronts)
    f = 2 * 7.292e-5 * np.sin(np.deg2rad(np.clip(lat2, 10, 90) if not south
                                         else np.clip(lat2, -90, -10)))
    dy = np.deg2rad(step) * 6.371e6
    dx = dy * np.cos(np.deg2rad(lat2))
    dpdy = np.gradient(mslp, axis=1) / dy
    dpdx = np.gradient(mslp, axis=2) / dx
    ug = np.clip(-dpdy / (1.25 * f), -40, 40)
    vg = np.clip(dpdx / (1.25 * f), -40, 40)
    u = np.broadcast_to(ug[:, None], t.shape).copy()
    v = np.broadcast_to(vg[:, None], t.shape).copy()
    dims4 = ("time", "level", "lat", "lon")
    ds = xr.Dataset(
        {"t": (dims4, t), "td": (dims4, td), "u": (dims4, u), "v": (dims4, v), "z": (dims4, z),
         "mslp": (("time", "lat", "lon"), mslp),
         "t2m": (("time", "lat", "lon"), t[:, 0] + 1.0),
         "td2m": (("time", "lat", "lon"), td[:, 0] + 1.0),
         "u10": (("time", "lat", "lon"), ug * 0.7), "v10": (("time", "lat", "lon"), vg * 0.7),
         "precip": (("time", "lat", "lon"), np.clip(2.0 - np.abs(t[:, 2] - 280) / 3, 0, None))},
        coords={"time": times, "level": lev, "lat": lat, "lon": lon, "reference_time": ref},
        attrs={"run": run, "source": "synthetic test run (invented)", "grid": "latlon"},
    )
    return ds


def write_cf_run(ds, folder):
    """Write ``ds`` as CF NetCDF step files (one per valid time) under ``folder``."""
    from pathlib import Path

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    ref = ds["reference_time"].values
    paths = []
    for i, tv in enumerate(ds["time"].values):
        one = ds.isel(time=[i]).drop_vars("reference_time")
        out = xr.Dataset(coords={
            "time": ("time", one["time"].values, {"standard_name": "time"}),
            "pressure": ("pressure", one["level"].values,
                         {"standard_name": "air_pressure", "units": "hPa", "positive": "down"}),
            "latitude": ("latitude", one["lat"].values,
                         {"standard_name": "latitude", "units": "degrees_north"}),
            "longitude": ("longitude", one["lon"].values,
                          {"standard_name": "longitude", "units": "degrees_east"}),
            "forecast_reference_time": ((), ref, {"standard_name": "forecast_reference_time"}),
        })
        d4 = ("time", "pressure", "latitude", "longitude")
        d3 = ("time", "latitude", "longitude")
        meta = {
            "t": ("air_temperature", "K", d4), "td": ("dew_point_temperature", "K", d4),
            "u": ("eastward_wind", "m s-1", d4), "v": ("northward_wind", "m s-1", d4),
            "mslp": ("air_pressure_at_mean_sea_level", "Pa", d3),
        }
        for name, (std, units, dims) in meta.items():
            out[name] = (dims, one[name].values, {"standard_name": std, "units": units})
        out["z"] = (d4, one["z"].values * G0, {"standard_name": "geopotential",
                                               "units": "m2 s-2"})
        step_h = int((tv - ref) / np.timedelta64(1, "h"))
        path = folder / f"step_{step_h:03d}.nc"
        out.attrs = {"Conventions": "CF-1.8", "title": "invented test run"}
        out.to_netcdf(path)
        paths.append(path)
    return paths
