"""Cost of front motion and structure: tracking, speeds three ways, slopes.

Times each stage of :func:`kit.science.motion.analyse_run` after the fronts are found,
on a synthetic event (a sloping frontal zone moving 10 m/s on a 0.25-degree
grid, 17 valid times, 6 levels) and, where it exists, on one run of the sample
event. Targets are this kit's own: the motion and structure stages should not
add more than the front finding costs a shift (0.5 s per valid time).
"""

import time
from pathlib import Path

import numpy as np
import xarray as xr

ROOT = Path(__file__).resolve().parents[1]
R_KM = 6371.0088
Z_STD = {1000.0: 110.0, 925.0: 760.0, 850.0: 1460.0, 700.0: 3010.0, 600.0: 4200.0, 500.0: 5570.0}


def _synthetic_event(n_times=17, grid=0.25):
    lat = np.arange(35.0, 65.01, grid)
    lon = np.arange(-35.0, 15.01, grid)
    t0 = np.datetime64("2030-02-03T00:00", "ns")
    times = t0 + np.arange(n_times) * np.timedelta64(3, "h")
    levels = np.array(list(Z_STD))
    y_km = R_KM * np.deg2rad(lat - 45.0)
    t = np.empty((n_times, levels.size, lat.size, lon.size), dtype=np.float32)
    for i in range(n_times):
        for k, lv in enumerate(levels):
            yc = 10.0 * i * 10.8 + 150.0 * Z_STD[lv] / 1e3
            theta = 285.0 + 4.0 * Z_STD[lv] / 1e3 - 6.0 * np.tanh((y_km - yc) / 100.0)
            t[i, k] = (theta * (lv / 1000.0) ** 0.2854)[:, None]
    dims = ("time", "level", "lat", "lon")
    z_lev = np.array(list(Z_STD.values()))
    ds = xr.Dataset(
        {
            "t": (dims, t),
            "td": (dims, t - 1.0),
            "u": (dims, np.full(t.shape, 5.0, np.float32)),
            "v": (dims, np.full(t.shape, 15.0, np.float32)),
            "z": (dims, np.broadcast_to(z_lev[None, :, None, None], t.shape).astype(np.float32)),
        },
        coords={"time": times, "level": levels, "lat": lat, "lon": lon},
        attrs={"run": "bench", "grid": "latlon", "source": "synthetic bench event"},
    )
    x_km = R_KM * np.cos(np.deg2rad(lat))[:, None] * np.deg2rad(lon + 10.0)[None, :]
    ds["mslp"] = (
        ("time", "lat", "lon"),
        np.broadcast_to(101000.0 + 2.0 * x_km, (n_times,) + x_km.shape),
    )
    return ds


def _stages(ds, label):
    from kit.science.fronts import FrontSettings, find_fronts
    from kit.science.motion import speeds_three_ways, track_fronts
    from kit.science.structure import add_slopes

    ds = ds.load()
    nt = ds.sizes["time"]
    settings = FrontSettings()
    t = time.perf_counter()
    fronts = find_fronts(ds, settings=settings)
    t_find = time.perf_counter() - t
    t = time.perf_counter()
    track_fronts(fronts)
    t_track = time.perf_counter() - t
    t = time.perf_counter()
    speeds_three_ways(fronts, ds)
    t_speed = time.perf_counter() - t
    t = time.perf_counter()
    add_slopes(fronts, ds, settings=settings)
    t_slope = time.perf_counter() - t
    per_step = (t_track + t_speed + t_slope) / nt
    return [
        {
            "name": f"{label}: fronts found",
            "value": len(fronts),
            "unit": "fronts",
            "target": None,
            "met": None,
        },
        {
            "name": f"{label}: find_fronts per valid time",
            "value": t_find / nt,
            "unit": "s",
            "target": None,
            "met": None,
        },
        {
            "name": f"{label}: tracking per valid time",
            "value": t_track / nt,
            "unit": "s",
            "target": None,
            "met": None,
        },
        {
            "name": f"{label}: speeds three ways per valid time",
            "value": t_speed / nt,
            "unit": "s",
            "target": None,
            "met": None,
        },
        {
            "name": f"{label}: slopes per valid time",
            "value": t_slope / nt,
            "unit": "s",
            "target": None,
            "met": None,
        },
        {
            "name": f"{label}: motion + structure per valid time",
            "value": per_step,
            "unit": "s",
            "target": "<= 0.5",
            "met": per_step <= 0.5,
        },
    ]


def run():
    """Return the figures (name, value, unit, target, met)."""
    rows = _stages(_synthetic_event(), "synthetic 0.25 deg, 17 steps")
    runs = sorted((ROOT / "sample_grids" / "runs").glob("*"))
    if runs:
        import kit

        rows += _stages(kit.open_run(runs[-1]), f"sample run {runs[-1].name}")
    return rows


if __name__ == "__main__":
    for row in run():
        print(row)
