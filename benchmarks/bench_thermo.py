"""Theta-w and wet-bulb temperature: speed against MetPy, and on whole-run shapes.

Figures (issue 3 / issue 9 targets):

- wet-bulb temperature per point, ours against MetPy's ``wet_bulb_temperature``
  on the same 50 x 50 array (MetPy integrates each point, so it is timed on a
  small array): speed ratio, target >= 1000x, with the largest difference,
  target <= 0.1 K for moist air (dew-point depression <= 6 K; beyond that
  MetPy's simplified moist lapse rate drifts up to 0.3 K from the full
  pseudo-adiabat, which ours follows within 0.05 K: tests/test_thermo.py);
- theta-w on one 0.25-degree global level (721 x 1440), float32 and float64,
  target <= 0.1 s (half of the 0.2 s budget of a whole one-level analysis),
  with the speed ratio and largest difference against MetPy's vectorised
  ``wet_bulb_potential_temperature``;
- wet-bulb temperature on a whole 3-D run shape (10 levels x 721 x 1440),
  float32, in seconds, and theta-w of a dask-backed canonical dataset of that
  shape through ``kit.science.thermo.theta_w_of``.

The input fields are synthetic (smooth random temperature and humidity),
used only for timing and for comparing two implementations on the same
numbers.
"""

import time
import warnings

import numpy as np

from benchmarks import best_time, figure
from kit.science import thermo

T0 = 273.15


def _level_fields(shape, p_hpa, seed=0, dtype=np.float64):
    """Smooth synthetic temperature and dew point [K] on one pressure level."""
    rng = np.random.default_rng(seed)
    ny, nx = shape[-2:]
    lat = np.linspace(-90.0, 90.0, ny)[:, None]
    lon = np.linspace(0.0, 360.0, nx, endpoint=False)[None, :]
    # warmer near the equator, colder aloft; wavy structure plus small noise
    t_sfc = 300.0 - 45.0 * np.sin(np.radians(lat)) ** 2 + 4.0 * np.sin(np.radians(3 * lon))
    t = t_sfc * (p_hpa / 1000.0) ** 0.19 + rng.normal(0.0, 0.5, (ny, nx))
    dd = 1.0 + 9.0 * (0.5 + 0.5 * np.sin(np.radians(2 * lon + lat)))  # 1..10 K
    t = np.broadcast_to(t, shape)
    dd = np.broadcast_to(dd, shape)
    return t.astype(dtype), (t - dd).astype(dtype)


def _wet_bulb_against_metpy():
    import metpy.calc as mpcalc
    from metpy.units import units

    out = []
    n = 50
    p = np.linspace(1000.0, 500.0, n)[:, None] * np.ones((1, n))
    t = T0 + 20.0 - 45.0 * (1.0 - p / 1000.0) + np.linspace(-12.0, 6.0, n)[None, :]
    dd = np.linspace(0.0, 20.0, n)[None, :] * np.ones((n, 1))
    td = t - dd
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = mpcalc.wet_bulb_temperature(p * units.hPa, t * units.K, td * units.K).m_as("K")
    t_metpy = (time.perf_counter() - t0) / p.size
    t_ours = best_time(lambda: thermo.wet_bulb_temperature(t, td, p)) / p.size
    big_t, big_td = _level_fields((721, 1440), 850.0)
    t_big = best_time(lambda: thermo.wet_bulb_temperature(big_t, big_td, 850.0), repeat=3)
    t_big /= big_t.size
    ours = thermo.wet_bulb_temperature(t, td, p)
    moist = dd <= 6.0
    d_moist = float(np.max(np.abs(ours - ref)[moist]))
    d_all = float(np.max(np.abs(ours - ref)))
    out.append(figure("wet-bulb T, MetPy per point (50x50)", t_metpy * 1e6, "us"))
    out.append(figure("wet-bulb T, ours per point (same 50x50)", t_ours * 1e6, "us"))
    out.append(figure("wet-bulb T, ours per point (721x1440 level)", t_big * 1e6, "us"))
    ratio = t_metpy / t_ours
    out.append(
        figure("wet-bulb T speed vs MetPy (same array)", ratio, "x", ">= 1000", ratio >= 1000)
    )
    ratio_big = t_metpy / t_big
    out.append(
        figure(
            "wet-bulb T speed vs MetPy (per point, large)",
            ratio_big,
            "x",
            ">= 1000",
            ratio_big >= 1000,
        )
    )
    out.append(
        figure(
            "wet-bulb T max |ours - MetPy|, depression <= 6 K",
            d_moist,
            "K",
            "<= 0.1",
            d_moist <= 0.1,
        )
    )
    out.append(figure("wet-bulb T max |ours - MetPy|, depression <= 20 K", d_all, "K"))
    return out


def _theta_w_global_level():
    import metpy.calc as mpcalc
    from metpy.units import units

    out = []
    for dtype in (np.float32, np.float64):
        t, td = _level_fields((721, 1440), 850.0, dtype=dtype)
        sec = best_time(
            lambda t=t, td=td: thermo.wet_bulb_potential_temperature(t, td, 850.0), repeat=5
        )
        name = np.dtype(dtype).name
        out.append(
            figure(f"theta-w, one 0.25-deg global level ({name})", sec, "s", "<= 0.1", sec <= 0.1)
        )
    t, td = _level_fields((721, 1440), 850.0)
    p = np.full(t.shape, 850.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        args = (p * units.hPa, t * units.K, td * units.K)
        t_metpy = best_time(lambda: mpcalc.wet_bulb_potential_temperature(*args), repeat=2)
        ref = np.asarray(mpcalc.wet_bulb_potential_temperature(*args).m_as("K"))
    t_ours = best_time(lambda: thermo.wet_bulb_potential_temperature(t, td, 850.0), repeat=3)
    diff = float(np.max(np.abs(thermo.wet_bulb_potential_temperature(t, td, 850.0) - ref)))
    out.append(figure("theta-w speed vs MetPy (721x1440, float64)", t_metpy / t_ours, "x"))
    out.append(figure("theta-w max |ours - MetPy| (721x1440)", diff, "K", "<= 0.08", diff <= 0.08))
    return out


def _whole_run_shape():
    import xarray as xr

    out = []
    levels = np.array([1000, 925, 850, 700, 600, 500, 400, 300, 250, 200], dtype=np.float32)
    shape = (levels.size, 721, 1440)
    t = np.empty(shape, np.float32)
    td = np.empty(shape, np.float32)
    for k, lev in enumerate(levels):
        t[k], td[k] = _level_fields(shape[1:], float(lev), seed=k, dtype=np.float32)
    p = levels[:, None, None]
    sec = best_time(lambda: thermo.wet_bulb_temperature(t, td, p), repeat=2, min_time=0.0)
    out.append(figure("wet-bulb T, 10 x 721 x 1440 (float32)", sec, "s"))
    ds = xr.Dataset(
        {"t": (("level", "lat", "lon"), t), "td": (("level", "lat", "lon"), td)},
        coords={
            "level": levels.astype(float),
            "lat": np.linspace(-90, 90, 721),
            "lon": np.linspace(-180, 179.75, 1440),
        },
    ).chunk({"level": 1})
    sec = best_time(lambda: thermo.theta_w_of(ds).compute(), repeat=2, min_time=0.0)
    out.append(figure("theta_w_of, dask 10 x 721 x 1440 (float32)", sec, "s"))
    return out


def run():
    """All figures of this module (see the module docstring)."""
    return _wet_bulb_against_metpy() + _theta_w_global_level() + _whole_run_shape()
