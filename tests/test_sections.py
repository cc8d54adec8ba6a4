"""Tests of kit.science.sections (computation) and kit.charts.sections (figure).

Sources of expected values are marked beside each check:
[pub] published formula or definition, [lib] reference library as a second
implementation (MetPy, pyproj), [trade] common practice, no source,
[derived] exact property of the method (e.g. bilinear interpolation
reproduces bilinear fields). The synthetic fields here are made up to
exercise the code; they are never used as reference values themselves.
"""

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import kit
import kit.science.sections as S
from kit.constants import EARTH_RADIUS_M
from kit.errors import InputError
from kit.model import Front
from kit.pipeline import analyse
from kit.products.sections import section
from kit.science.geo import local_east_north_km

LEVELS = np.array([1000.0, 925.0, 850.0, 700.0, 600.0, 500.0, 400.0, 300.0, 250.0, 200.0])
REF = np.datetime64("2027-01-13T18:00", "ns")
TIMES = np.array(["2027-01-14T00:00", "2027-01-14T03:00"], dtype="datetime64[ns]")
SAMPLE = Path(os.environ.get("FRONTSHIFT_SAMPLE_DIR",
                             Path(__file__).resolve().parents[1] / "sample_grids"))


def z_isa(p_hpa):
    """ICAO standard-atmosphere height of a pressure [m] (troposphere formula)."""
    return 44330.8 * (1.0 - (np.asarray(p_hpa) / 1013.25) ** 0.190263)


def t_isa(p_hpa):
    return np.maximum(288.15 - 0.0065 * z_isa(p_hpa), 216.65)


def make_run(fields, lat, lon, *, run="2027-01-13T18Z"):
    """Canonical Dataset (time, level, lat, lon) from callables f(P, LAT, LON)."""
    P, LA, LO = np.meshgrid(LEVELS, lat, lon, indexing="ij")
    data = {}
    for name, f in fields.items():
        a = np.asarray(f(P, LA, LO), float) * np.ones_like(P)
        data[name] = (("time", "level", "lat", "lon"), np.stack([a] * TIMES.size))
    return xr.Dataset(
        data,
        coords={"time": TIMES, "level": LEVELS, "lat": lat, "lon": lon, "reference_time": REF},
        attrs={"run": run, "source": "synthetic test fields", "grid": "latlon"},
    )


def smooth_fields():
    """Smooth, non-linear, invented fields (for library comparisons)."""
    return {
        "t": lambda P, LA, LO: t_isa(P)
        + 8 * np.sin(np.deg2rad(3 * LA)) * np.cos(np.deg2rad(2 * LO)) + 0.002 * LO * LA,
        "td": lambda P, LA, LO: t_isa(P)
        + 8 * np.sin(np.deg2rad(3 * LA)) * np.cos(np.deg2rad(2 * LO)) + 0.002 * LO * LA
        - 2 - 3 * np.cos(np.deg2rad(4 * LO)) ** 2,
        "u": lambda P, LA, LO: 15 + 20 * np.exp(-(((P - 300) / 150) ** 2))
        * np.cos(np.deg2rad(4 * (LA - 45))) + 3 * np.sin(np.deg2rad(5 * LO)),
        "v": lambda P, LA, LO: 5 * np.sin(np.deg2rad(6 * LO)) * np.cos(np.deg2rad(3 * LA))
        * (1000 / P) ** 0.3,
        "z": lambda P, LA, LO: z_isa(P) + 50 * np.sin(np.deg2rad(3 * LA)),
    }


def sloping_front_fields(n_slope=100.0, half_width_km=100.0, dT=10.0, lat0=50.0, south=False):
    """A tanh temperature zone whose centre moves 1 km toward the cold side per km up
    divided by 1/n_slope (cold side poleward), saturated-ish air (td = t - 1 K)."""
    sgn = -1.0 if south else 1.0

    def y0_km(P):
        return n_slope * z_isa(P) / 1000.0

    def t(P, LA, LO):
        y = sgn * (LA - sgn * lat0) * 111.195  # km poleward of the surface front base
        return t_isa(P) - 0.5 * dT * np.tanh((y - y0_km(P)) / half_width_km) - 0.004 * (y)

    return {
        "t": t,
        "td": lambda P, LA, LO: t(P, LA, LO) - 1.0,
        "u": lambda P, LA, LO: 10 + 40 * np.exp(-(((P - 300) / 120) ** 2)) + 0 * LA,
        "v": lambda P, LA, LO: 0 * LA,
        "z": lambda P, LA, LO: z_isa(P) + 0 * LA,
    }


@pytest.fixture(scope="module")
def smooth_run():
    return make_run(smooth_fields(), np.arange(30.0, 60.01, 0.5), np.arange(-20.0, 20.01, 0.5))


@pytest.fixture(scope="module")
def front_run():
    return make_run(sloping_front_fields(150.0), np.arange(38.0, 62.01, 0.25),
                    np.arange(-25.0, 5.01, 0.25))


def zonal_front(ds, lat=50.0, kind="warm", cold_north=True, time=TIMES[1]):
    lon = np.arange(-22.0, 2.01, 1.0)
    n = lon.size
    return Front(lon=lon, lat=np.full(n, lat), kind=kind, valid_time=time, level_hpa=850.0,
                 tfp=np.zeros(n), grad=np.zeros(n), normal_east=np.zeros(n),
                 normal_north=np.full(n, 1.0 if cold_north else -1.0), vn=np.zeros(n),
                 speed_ms=5.0, length_km=1700.0, run=ds.attrs["run"])


# ----------------------------------------------------------------------------- geometry
def test_section_points_against_pyproj_geod():
    from pyproj import Geod

    lat, lon, dist, brg = S.section_points((52.0, -20.0), (45.0, 10.0), steps=41)
    g = Geod(a=EARTH_RADIUS_M, b=EARTH_RADIUS_M)
    az, _, total = g.inv(-20.0, 52.0, 10.0, 45.0)
    # [lib] pyproj Geod as independent implementation, on the kit's sphere: total length
    # and initial azimuth of the great circle
    np.testing.assert_allclose(dist[-1], total / 1000.0, rtol=1e-9)
    np.testing.assert_allclose(brg[0], az % 360.0, atol=1e-6)
    # [lib] Geod.npts spaces the points equally along it: the same points
    mid = np.array(g.npts(-20.0, 52.0, 10.0, 45.0, 39))
    np.testing.assert_allclose(lon[1:-1], mid[:, 0], atol=1e-9)
    np.testing.assert_allclose(lat[1:-1], mid[:, 1], atol=1e-9)
    # [lib] local bearing of the great circle at every point (forward azimuth of each
    # segment; back azimuth + 180 at the end)
    az12, az21, _ = g.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    np.testing.assert_allclose(brg, np.append(az12, az21[-1] + 180.0) % 360.0, atol=1e-6)
    np.testing.assert_allclose(np.diff(dist), total / 1000.0 / 40, rtol=1e-6)
    assert (lat[0], lon[0], lat[-1], lon[-1]) == (52.0, -20.0, 45.0, 10.0)
    # [lib] the WGS84 geodesic is within the expected ~0.5 % of the sphere
    _, _, total84 = Geod(ellps="WGS84").inv(-20.0, 52.0, 10.0, 45.0)
    np.testing.assert_allclose(dist[-1], total84 / 1000.0, rtol=5e-3)


def test_compass_points():
    # [derived] eight 45-degree sectors centred on N, NE, ...
    assert [S.compass_point(b) for b in (0, 22, 23, 90, 135, 200, 270, 315, 359)] == [
        "N", "N", "NE", "E", "SE", "S", "W", "NW", "N"]


# ----------------------------------------------------------------------------- interpolation
def test_section_matches_metpy_cross_section(smooth_run):
    from metpy.interpolate import cross_section

    sec = S.section_between(smooth_run, (35.0, -15.0), (55.0, 12.0), steps=60,
                            time="2027-01-14T03:00Z")
    for name in ("t", "u", "v", "z"):
        da = smooth_run[name].sel(time=TIMES[1]).metpy.assign_crs(
            grid_mapping_name="latitude_longitude", earth_radius=EARTH_RADIUS_M)
        ref = cross_section(da, (35.0, -15.0), (55.0, 12.0), steps=60)
        # [lib] MetPy cross_section: the geodesic of the same (spherical) Earth, bilinear values
        np.testing.assert_allclose(sec["lat"].values, ref["lat"].values, atol=1e-9)
        np.testing.assert_allclose(sec["lon"].values, ref["lon"].values, atol=1e-9)
        np.testing.assert_allclose(sec[name].transpose("level", "distance").values,
                                   ref.transpose("level", "index").values, rtol=1e-10, atol=1e-9)
    # PV is computed on a window of the grid around the section; it must equal PV of the
    # whole grid cut by MetPy's cross_section [lib] (same points, bilinear)
    from kit.science.thermo import potential_temperature

    one = smooth_run.sel(time=TIMES[1])
    pv = S.potential_vorticity(potential_temperature(one["t"], one["level"]), one["u"],
                               one["v"], one)
    ref = cross_section(pv.metpy.assign_crs(grid_mapping_name="latitude_longitude",
                                            earth_radius=EARTH_RADIUS_M),
                        (35.0, -15.0), (55.0, 12.0), steps=60)
    np.testing.assert_allclose(sec["pv"].values, ref.transpose("level", "index").values,
                               rtol=1e-9, atol=1e-12)


def test_section_across_the_dateline_contiguous_grid():
    # grid contiguous across the dateline (150E .. 150W as 150..210); field bilinear in lat/lon
    lat, lon = np.arange(30.0, 60.01, 1.0), np.arange(150.0, 210.01, 1.0)
    f = {k: (lambda P, LA, LO: 250.0 + 0.5 * LA + 0.2 * (LO - 180.0) + 0 * P)
         for k in ("t",)}
    f.update(td=lambda P, LA, LO: 245.0 + 0.5 * LA + 0.2 * (LO - 180.0),
             u=lambda P, LA, LO: 10.0 + 0 * LA, v=lambda P, LA, LO: 0 * LA,
             z=lambda P, LA, LO: z_isa(P) + 0 * LA)
    ds = make_run(f, lat, lon)
    sec = S.section_between(ds, (40.0, 170.0), (50.0, -165.0), steps=30, time=TIMES[0])
    lon_c = np.where(sec["lon"].values < 0, sec["lon"].values + 360.0, sec["lon"].values)
    expect = 250.0 + 0.5 * sec["lat"].values + 0.2 * (lon_c - 180.0)
    # [derived] bilinear interpolation reproduces a field linear in lat and lon exactly
    np.testing.assert_allclose(sec["t"].isel(level=0).values, expect, atol=1e-9)


def test_section_across_the_seam_of_a_global_grid():
    lat, lon = np.arange(-30.0, 30.01, 1.0), np.arange(-180.0, 179.51, 0.5)
    f = dict(t=lambda P, LA, LO: 280.0 + 0.1 * LA + 5.0 * np.cos(np.deg2rad(LO)),
             td=lambda P, LA, LO: 275.0 + 0 * LA, u=lambda P, LA, LO: 5.0 + 0 * LA,
             v=lambda P, LA, LO: 0 * LA, z=lambda P, LA, LO: z_isa(P) + 0 * LA)
    ds = make_run(f, lat, lon)
    sec = S.section_between(ds, (-10.0, 175.0), (10.0, -172.0), steps=40, time=TIMES[0])
    expect = 280.0 + 0.1 * sec["lat"].values + 5.0 * np.cos(np.deg2rad(sec["lon"].values))
    t0 = sec["t"].isel(level=0).values
    assert np.isfinite(t0).all()  # no gap at the seam
    # [derived] linear interpolation error of 5 cos(lon) on a 0.5 deg grid <= 5 (dlon)^2 / 8
    np.testing.assert_allclose(t0, expect, atol=5 * np.deg2rad(0.5) ** 2 / 8 + 1e-9)


def _projected_run(with_crs):
    from pyproj import CRS, Transformer

    crs = CRS.from_dict({"proj": "lcc", "lat_1": 45, "lat_2": 55, "lat_0": 50, "lon_0": -5,
                         "ellps": "WGS84"})
    x = np.arange(-1_200_000.0, 1_200_001.0, 40_000.0)
    y = np.arange(-1_000_000.0, 1_000_001.0, 40_000.0)
    X, Y = np.meshgrid(x, y)
    lon2, lat2 = Transformer.from_crs(crs, "EPSG:4326", always_xy=True).transform(X, Y)
    P = LEVELS[:, None, None] * np.ones((1,) + X.shape)
    t = t_isa(P) + 2e-5 * X[None] - 1e-5 * Y[None]

    def four(a):
        return (("time", "level", "y", "x"), np.stack([a] * TIMES.size))

    ds = xr.Dataset({"t": four(t), "td": four(t - 3.0), "u": four(10.0 + 0 * P),
                     "v": four(0 * P), "z": four(z_isa(P))},
                    coords={"time": TIMES, "level": LEVELS, "y": y, "x": x,
                            "lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2),
                            "reference_time": REF},
                    attrs={"run": "proj", "source": "synthetic", "grid": "projected",
                           "dx_m": 40000.0, "dy_m": 40000.0})
    if with_crs:
        ds["crs"] = xr.DataArray(0, attrs=crs.to_cf())
        for n in ("t", "td", "u", "v", "z"):
            ds[n].attrs["grid_mapping"] = "crs"
    return ds, crs


@pytest.mark.parametrize("with_crs", [True, False])
def test_section_on_a_projected_grid(with_crs):
    from pyproj import Transformer

    ds, crs = _projected_run(with_crs)
    sec = S.section_between(ds, (47.0, -12.0), (54.0, 3.0), steps=50, time=TIMES[0])
    px, py = Transformer.from_crs("EPSG:4326", crs, always_xy=True).transform(
        sec["lon"].values, sec["lat"].values)
    expect = t_isa(1000.0) + 2e-5 * px - 1e-5 * py
    # [derived] bilinear in x/y is exact for a field linear in x and y. Through the CF
    # grid mapping (pyproj) the points are exact; without one they come from a
    # triangulation of the 2-D lat/lon: allow the positional error of linear
    # interpolation over 40 km cells of a conformal map (<~100 m -> 2.2e-5 K/m * 100 m)
    atol = 1e-6 if with_crs else 5e-3
    np.testing.assert_allclose(sec["t"].isel(level=0).values, expect, atol=atol)


# ----------------------------------------------------------------------------- PV
@pytest.mark.filterwarnings("ignore:Vertical dimension number not found")
def test_potential_vorticity_against_metpy(smooth_run):
    import metpy.calc as mpcalc
    from metpy.units import units

    from kit.science.thermo import potential_temperature

    one = smooth_run.sel(time=TIMES[0])
    theta = potential_temperature(one["t"], one["level"]).transpose("level", "lat", "lon")
    pv = S.potential_vorticity(theta, one["u"], one["v"], one)
    crs = {"grid_mapping_name": "latitude_longitude", "earth_radius": 6371008.8}

    def q(a, unit):
        a = a.copy()
        a.attrs = {"units": unit}
        return a.metpy.assign_crs(**crs)

    ref = mpcalc.potential_vorticity_baroclinic(
        q(theta, "K"), LEVELS[:, None, None] * units.hPa, q(one["u"], "m/s"),
        q(one["v"], "m/s"))
    ref = ref.metpy.convert_units("K * m**2 / kg / s").metpy.dequantify().values / 1e-6
    inner = (slice(None), slice(1, -1), slice(1, -1))
    # [lib] MetPy potential_vorticity_baroclinic (spherical grid, same earth radius);
    # interior points: both centred second-order differences (edges differ by design:
    # kit.science.geo is one-sided first order there)
    np.testing.assert_allclose(pv.values[inner], ref[inner], rtol=1e-4, atol=1e-3)
    assert np.nanmax(np.abs(ref)) > 1.0  # the comparison covers PV of tropopause size


def test_dynamic_tropopause_sign_flips_south_of_the_equator():
    f_n = sloping_front_fields(100.0)
    north = make_run(f_n, np.arange(38.0, 62.01, 0.5), np.arange(-10.0, 10.01, 0.5))
    south = make_run(sloping_front_fields(100.0, south=True), np.arange(-62.0, -37.99, 0.5),
                     np.arange(-10.0, 10.01, 0.5))
    sn = S.section_between(north, (42.0, 0.0), (58.0, 0.0), steps=41, time=TIMES[0])
    ss = S.section_between(south, (-42.0, 0.0), (-58.0, 0.0), steps=41, time=TIMES[0])
    # [pub] Hoskins, McIntyre & Robertson (1985): PV is positive in the northern and
    # negative in the southern hemisphere; the dynamic tropopause is +2 / -2 PVU
    assert np.nanmedian(sn["pv"].sel(level=250.0)) > 2.0
    assert np.nanmedian(ss["pv"].sel(level=250.0)) < -2.0
    # [derived] mirrored atmospheres have their tropopause at the same pressure
    np.testing.assert_allclose(ss["dynamic_tropopause_hpa"].values,
                               sn["dynamic_tropopause_hpa"].values, rtol=1e-6)
    assert np.isfinite(sn["dynamic_tropopause_hpa"].values).all()


# ----------------------------------------------------------------------------- 0 C levels
def test_freezing_level_of_a_linear_lapse_rate():
    gamma, t0 = 0.0065, 283.15  # K m-1, K
    f = dict(t=lambda P, LA, LO: t0 - gamma * z_isa(P) + 0.05 * (LA - 50),
             td=lambda P, LA, LO: t0 - gamma * z_isa(P) - 4.0,
             u=lambda P, LA, LO: 5 + 0 * LA, v=lambda P, LA, LO: 0 * LA,
             z=lambda P, LA, LO: z_isa(P) + 0 * LA)
    ds = make_run(f, np.arange(40.0, 60.01, 0.5), np.arange(-10.0, 10.01, 0.5))
    sec = S.section_between(ds, (45.0, 0.0), (55.0, 0.0), steps=21, time=TIMES[0])
    t_sfc = t0 + 0.05 * (sec["lat"].values - 50)
    # [pub, definition] T = T0 - gamma z crosses 0 C at z = (T0 - 273.15) / gamma;
    # linear interpolation in z is exact for a linear profile
    np.testing.assert_allclose(sec["freezing_level_m"].values, (t_sfc - 273.15) / gamma,
                               atol=1e-6)
    # (issue 17: no longer compared with kit.science.thermo, a second copy of the code)
    # [pub, definition] the wet-bulb temperature lies between dew point and temperature,
    # so the wet-bulb 0 C level is lower than the 0 C level in unsaturated air
    assert (sec["wet_bulb_freezing_level_m"] < sec["freezing_level_m"]).all()


def test_freezing_level_of_a_profile_that_bends_at_a_level():
    """[analytic] Issue 17: an outside reference for the 0 C level, not the kit's own
    thermo: a profile isothermal-ish (0.002 K/m) up to the 850-hPa height, then 0.008 K/m.
    The breakpoint sits on a level, so linear interpolation between levels is exact:
    T(z) = T850 - 0.008 (z - z850) crosses 0 C at z850 + (T850 - 273.15) / 0.008."""
    z850 = float(z_isa(850.0))
    t850 = 276.0 + 0.0 * z850

    def temp(P, LA, LO):
        z = z_isa(P)
        below = 276.0 + 0.002 * (z850 - z)
        above = 276.0 - 0.008 * (z - z850)
        return np.where(z <= z850, below, above) + 0 * LA

    f = dict(t=temp, td=lambda P, LA, LO: temp(P, LA, LO) - 3.0,
             u=lambda P, LA, LO: 5 + 0 * LA, v=lambda P, LA, LO: 0 * LA,
             z=lambda P, LA, LO: z_isa(P) + 0 * LA)
    ds = make_run(f, np.arange(40.0, 60.01, 0.5), np.arange(-10.0, 10.01, 0.5))
    sec = S.section_between(ds, (45.0, 0.0), (55.0, 0.0), steps=11, time=TIMES[0])
    want = z850 + (t850 - 273.15) / 0.008
    np.testing.assert_allclose(sec["freezing_level_m"].values, want, atol=1e-6)


# ----------------------------------------------------------------------------- frontal surface
def _tanh_section(n_slope, half_width_km, spacing=2.0):
    """theta-w = 285 + 5 tanh((s - s0(z)) / L) [K]: warm toward the end, the centre s0
    moving n_slope km toward the start (cold side) per km of height."""
    dist = np.arange(0.0, 1600.0 + spacing / 2, spacing)
    z = z_isa(LEVELS)
    pos = 1200.0 - n_slope * z / 1000.0
    tw = 285.0 + 5.0 * np.tanh((dist[None, :] - pos[:, None]) / half_width_km)
    sec = xr.Dataset({"theta_w": (("level", "distance"), tw),
                      "z": (("level", "distance"), np.repeat(z[:, None], dist.size, 1))},
                     coords={"level": LEVELS, "distance": dist})
    return sec, pos


@pytest.mark.parametrize("n_slope", [50.0, 100.0, 150.0])
def test_frontal_surface_of_an_analytic_tanh_zone(n_slope):
    L = 100.0
    sec, centre = _tanh_section(n_slope, L)
    pos, cold = S.locate_frontal_surface(sec, smoothing_km=4.0, top_hpa=500.0)
    ok = np.isfinite(pos)
    assert ok.sum() >= 5 and cold == -1
    # [pub definition, derived] tau = (dT/2) tanh(x/L): TFP peaks 0.658 L on the warm side
    # (Renard & Clarke 1965; Hewson 1998; REFERENCES.md analytic check); the smoothing of
    # 4 km shifts it by < 2 km
    np.testing.assert_allclose(pos[ok], centre[ok] + 0.658 * L, atol=3.0)
    fit = S.fit_frontal_slope(pos, z_isa(LEVELS))
    # task acceptance: slope within 10 %
    np.testing.assert_allclose(fit["slope_1_in"], n_slope, rtol=0.10)


def test_frontal_slope_end_to_end_through_the_grid(front_run):
    sec = S.section_between(front_run, (40.0, -10.0), (61.0, -10.0), spacing_km=10.0,
                            time=TIMES[1])
    # zone built at 1:150 (invented field); recovered within 10 % through interpolation,
    # theta-w and smoothing (task acceptance)
    np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"], 150.0, rtol=0.10)
    assert sec.attrs["frontal_surface_leans_over_cold_air"] == 1
    assert sec.attrs["cold_side"] == "end"  # cold air poleward, section runs north


def test_frontal_slope_southern_hemisphere():
    ds = make_run(sloping_front_fields(100.0, south=True), np.arange(-62.0, -37.99, 0.25),
                  np.arange(-10.0, 10.01, 0.5))
    sec = S.section_between(ds, (-40.0, 0.0), (-61.0, 0.0), spacing_km=10.0, time=TIMES[0])
    np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"], 100.0, rtol=0.10)
    assert sec.attrs["cold_side"] == "end"


def test_fit_needs_three_levels():
    fit = S.fit_frontal_slope([100.0, 50.0, np.nan], [100.0, 1500.0, 3000.0])
    assert np.isnan(fit["slope_1_in"]) and fit["n_levels"] == 2


# ----------------------------------------------------------------------------- across a front
def test_section_across_front_orientation_and_rule_zone(front_run):
    f = zonal_front(front_run, lat=51.5, kind="warm")
    site = {"name": "Harrowmere", "lat": 50.0, "lon": -10.0}
    sec = S.section_across_front(front_run, f, site, length_km=1200.0)
    from pyproj import Geod

    g = Geod(a=EARTH_RADIUS_M, b=EARTH_RADIUS_M)  # the kit's sphere
    # [derived] normal to a zonal front with cold air to the north: the section runs
    # north to south (cold side first) and passes through the site
    np.testing.assert_allclose(sec.attrs["section_bearing_deg"], 180.0, atol=0.5)
    assert (sec.attrs["compass_start"], sec.attrs["compass_end"]) == ("N", "S")
    _, _, d_site = g.inv(sec.attrs["start_lon"], sec.attrs["start_lat"], -10.0, 50.0)
    np.testing.assert_allclose(sec.attrs["site_km"], d_site / 1000.0, atol=1.0)  # [lib] pyproj
    _, _, d_front = g.inv(sec.attrs["start_lon"], sec.attrs["start_lat"], -10.0, 51.5)
    np.testing.assert_allclose(sec.attrs["front_km"], d_front / 1000.0, atol=2.0)
    tw850 = sec["theta_w"].sel(level=850.0).values
    assert tw850[:10].mean() < tw850[-10:].mean()  # cold side at the start
    # [trade] common practice, no source: rain begins 200-300 nm ahead of a warm front,
    # ahead = toward the cold air = toward the start of the section
    sfc = sec.attrs["surface_front_km"]
    np.testing.assert_allclose(sec.attrs["rule_zone_near_km"], sfc - 200 * 1.852, atol=1e-9)
    np.testing.assert_allclose(sec.attrs["rule_zone_far_km"], sfc - 300 * 1.852, atol=1e-9)
    z = sec["rule_zone"].values
    d = sec["distance"].values
    assert (z[(d < sfc - 300 * 1.852)] == 0).all() and (z[d > sfc + 1] == 0).all()
    assert (z[(d < sfc - 1) & (d > sfc - 199 * 1.852)] == 2).all()


def test_cold_front_rule_zone_lies_behind(front_run):
    f = zonal_front(front_run, lat=51.5, kind="cold")
    sec = S.section_across_front(front_run, f, (50.0, -10.0))
    sfc = sec.attrs["surface_front_km"]
    # [trade] common practice, no source: main band 50-100 nm behind a cold front (cold side)
    np.testing.assert_allclose(sec.attrs["rule_zone_near_km"], sfc - 50 * 1.852, atol=1e-9)
    np.testing.assert_allclose(sec.attrs["rule_zone_far_km"], sfc - 100 * 1.852, atol=1e-9)
    z = sec["rule_zone"].values
    off = sfc - sec["distance"].values  # km behind (cold side)
    assert (z[(off > 50 * 1.852 + 1) & (off < 100 * 1.852 - 1)] == 2).all()
    assert (z[(off < 50 * 1.852 - 1) | (off > 100 * 1.852 + 1)] == 0).all()


def test_pick_front_by_kind_and_distance(front_run):
    near_warm = zonal_front(front_run, lat=51.0, kind="warm")
    far_warm = zonal_front(front_run, lat=58.0, kind="warm")
    cold = zonal_front(front_run, lat=47.0, kind="cold")
    fronts = [far_warm, cold, near_warm]
    assert S.pick_front(fronts, (50.0, -10.0), kind="warm") is near_warm
    assert S.pick_front(fronts, (47.5, -10.0), kind="nearest") is cold
    with pytest.raises(InputError, match="no quasi-stationary front"):
        S.pick_front(fronts, (50.0, -10.0), kind="quasi-stationary")


def test_wind_components_along_and_across(front_run):
    sec = S.section_between(front_run, (45.0, -20.0), (45.0, 0.0), steps=30, time=TIMES[0])
    # eastward wind only; the section runs east: along = u (to within the geodesic's
    # turning away from due east, <~7 deg here), across (to the right = south) small
    u = sec["u"].values
    b = np.deg2rad(sec["bearing"].values)
    np.testing.assert_allclose(sec["v_along"].values, u * np.sin(b), rtol=1e-12)
    np.testing.assert_allclose(np.hypot(sec["v_along"], sec["v_across"]),
                               sec["wind_speed"].values, rtol=1e-12)
    assert sec.attrs["jet_core_hpa"] == 300.0
    # [memory] WMO: a jet has a core speed of at least 30 m/s
    assert sec.attrs["jet_core_is_jet"] == int(sec.attrs["jet_core_speed_ms"] >= 30.0)


# ----------------------------------------------------------------------------- bad input
def test_time_not_in_run_names_the_span(smooth_run):
    with pytest.raises(InputError) as e:
        S.section_between(smooth_run, (35.0, 0.0), (55.0, 0.0), time="2027-02-01T00:00Z")
    msg = str(e.value)
    assert "\n" not in msg and "2027-01-14T00:00Z" in msg and "2027-01-14T03:00Z" in msg


def test_missing_time_and_bad_points(smooth_run):
    with pytest.raises(InputError, match="no valid time given"):
        S.section_between(smooth_run, (35.0, 0.0), (55.0, 0.0))
    with pytest.raises(InputError, match="latitude -90..90"):
        S.section_between(smooth_run, (95.0, 0.0), (55.0, 0.0), time=TIMES[0])
    with pytest.raises(InputError, match="outside the grid"):
        S.section_between(smooth_run, (-40.0, 100.0), (-30.0, 120.0), time=TIMES[0])
    # (a run without td is a thin run and gets a section in theta: tests/test_thin_products.py)
    with pytest.raises(InputError, match="variable"):
        S.section_between(smooth_run.drop_vars("u"), (35.0, 0.0), (55.0, 0.0), time=TIMES[0])


def test_members_must_be_chosen(smooth_run):
    ens = xr.concat([smooth_run, smooth_run], dim=pd.Index([0, 1], name="member"))
    with pytest.raises(InputError, match="has 2 members"):
        S.section_between(ens, (35.0, 0.0), (55.0, 0.0), time=TIMES[0])
    sec = S.section_between(ens, (35.0, 0.0), (55.0, 0.0), time=TIMES[0], member=1, steps=11)
    assert sec.attrs["member"] == 1


# ----------------------------------------------------------------------------- figure
@pytest.fixture(scope="module")
def figure_and_section(front_run):
    from kit.charts.sections import section_figure

    ds = front_run.copy()
    lat = ds["lat"].values[None, :, None] * np.ones((TIMES.size, 1, ds["lon"].size))
    ds["precip"] = (("time", "lat", "lon"), 2.0 * np.exp(-(((lat - 51.0) / 1.5) ** 2)))
    sec = S.section_across_front(ds, zonal_front(ds, 51.5), {"name": "Harrowmere",
                                                           "lat": 50.5, "lon": -10.0})
    return section_figure(sec), sec


def _gids(fig):
    out = set()
    for ax in fig.axes:
        for a in ax.get_children():
            if a.get_gid():
                out.add(a.get_gid())
    return out


def test_figure_content(figure_and_section):
    from kit.charts.style import stamp_texts

    fig, sec = figure_and_section
    texts = stamp_texts(fig)
    labels = " ".join(t for ax in fig.axes for t in (ax.get_xlabel(), ax.get_ylabel()))
    for ax in fig.axes:  # secondary axes keep their label on the child axis
        for child in ax.child_axes:
            labels += " " + child.get_xlabel()
    assert "[km]" in labels and "[nm]" in labels and "[hPa]" in labels
    assert "Relative humidity [%]" in labels
    gids = _gids(fig)
    for gid in ("rh", "theta-w", "isotherm-0c", "wet-bulb-0c", "pv2", "frontal-surface",
                "surface-front", "site", "rule-zone", "precip", "jet-core", "isotachs"):
        assert gid in gids, gid
    title = next(t for t in fig.texts if t.get_gid() == "frontshift-title").get_text()
    assert "Run 2027-01-13T18Z" in title and "14 Jan 2027 03:00 UTC" in title and "T+9 h" in title
    assert kit.CAUTION in texts
    assert any(t.startswith("slope 1:") for t in texts)
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "2 PVU (dynamic tropopause)" in legend and "0 °C isotherm" in legend
    assert "wet-bulb 0 °C" in legend and "frontal surface" in legend
    assert {"N", "S"} <= set(texts)
    assert any("Harrowmere" in t for t in texts)
    assert any("Source: synthetic test fields" == t for t in texts)
    main = fig.axes[0]
    assert main.get_yscale() == "log" and main.get_ylim()[0] == 1000.0  # 1000 hPa at the bottom


def test_figure_svg_keeps_the_marks(figure_and_section, tmp_path):
    from kit.products.files import save_figure

    fig, _ = figure_and_section
    out = save_figure(fig, tmp_path / "s.svg")
    svg = out.read_text()
    for gid in ("isotherm-0c", "pv2", "surface-front", "frontal-surface"):
        assert f'id="{gid}' in svg, gid


# ----------------------------------------------------------------------------- sample event
# Consistency checks of the whole chain on the invented sample event: the expected
# positions come from truth.json, i.e. from how tools.scenario built the fields (scenario
# regression values, not science references); the physical expectations are [trade].
_HAVE_SAMPLE = (SAMPLE / "truth.json").exists()
_no_sample = pytest.mark.skipif(not _HAVE_SAMPLE, reason="sample_grids/ not generated yet "
                                "(python -m tools.scenario); synthetic tests above cover the code")


def _crossing_km(sec, lon, lat):
    """Distance along the section where the polyline (lon, lat) crosses it [km]."""
    lat0, lon0 = float(sec["lat"].mean()), float(sec["lon"].values[len(sec["lon"]) // 2])
    xs, ys = local_east_north_km(sec["lon"].values, sec["lat"].values, lon0, lat0)
    xf, yf = local_east_north_km(np.asarray(lon, float), np.asarray(lat, float), lon0, lat0)
    d = sec["distance"].values
    hits = []
    for i in range(xs.size - 1):
        px, py, rx, ry = xs[i], ys[i], xs[i + 1] - xs[i], ys[i + 1] - ys[i]
        qx, qy = xf[:-1], yf[:-1]
        sx, sy = xf[1:] - qx, yf[1:] - qy
        den = rx * sy - ry * sx
        with np.errstate(divide="ignore", invalid="ignore"):
            t = ((qx - px) * sy - (qy - py) * sx) / den
            u = ((qx - px) * ry - (qy - py) * rx) / den
        ok = (den != 0) & (t >= 0) & (t <= 1) & (u >= 0) & (u <= 1)
        hits += [d[i] + tt * (d[i + 1] - d[i]) for tt in t[ok]]
    assert hits, "truth line does not cross the section"
    return float(hits[0])


_OPENED = {}


def _sample_case(kind):
    """(ds, truth, set entry, site row, valid time) for a section before a passage."""
    from kit.io.runs import open_run
    from kit.io.sites import read_sites

    truth = json.loads((SAMPLE / "truth.json").read_text())
    sites = read_sites(SAMPLE / "sites.csv")
    for entry in truth["sets"].values():
        if entry.get("kind") == "analysis" or entry["folder"] == "analyses":
            continue
        times = sorted(pd.Timestamp(t).tz_localize(None) for t in entry["times"])
        for _, site in sites.iterrows():
            p = entry["passages"].get(site["name"], {}).get(kind)
            if not p:
                continue
            p = pd.Timestamp(p).tz_localize(None)
            ok = [t for t in times if pd.Timedelta(hours=2) <= p - t <= pd.Timedelta(hours=6)]
            if ok:
                if entry["folder"] not in _OPENED:
                    _OPENED[entry["folder"]] = open_run(SAMPLE / entry["folder"])
                return _OPENED[entry["folder"]], truth, entry, site, ok[-1]
    pytest.fail(f"sample event: no site with a {kind} passage 2-6 h after a valid time")


def _truth_line(entry, valid, kind, level="surface"):
    rec = entry["times"][valid.strftime("%Y-%m-%dT%H:%M:%SZ")][level][kind]
    return rec["lon"], rec["lat"]


@_no_sample
@pytest.mark.slow
def test_sample_event_warm_front_section():
    ds, truth, entry, site, valid = _sample_case("warm")
    sec = section(analyse(ds), site, valid, front="warm")
    assert sec.attrs["front_kind"] == "warm"
    L = truth["prescribed"]["warm"]["zone_half_width_l_km"]
    centre = _crossing_km(sec, *_truth_line(entry, valid, "warm"))
    # the surface front of every product is the centre of the 2 m zone (issue 16: one
    # definition), the maximum of its gradient, referred to the site's ground (issue 17):
    # where the scenario's frontal surface (its surface line meets the ground along the
    # section) would meet ground at the site's height, i.e. the truth crossing moved
    # toward the warm side (the section's end) by slope x (ground there - ground at the
    # site); smoothing a symmetric tanh zone does not move its maximum (tolerance: half
    # a grid length of 0.5 degree and the 10 km section spacing)
    assert L > 0
    dist, ground = sec["distance"].values, sec["ground_m"].values
    n = truth["prescribed"]["warm"]["slope_1_in"]
    referred = centre + n * (np.interp(centre, dist, ground)
                             - np.interp(sec.attrs["site_km"], dist, ground)) / 1000.0
    np.testing.assert_allclose(sec.attrs["surface_front_km"], referred, atol=25.0)
    assert sec.attrs["surface_front_from"] == "centre of the 2 m theta-w zone"
    # [trade] the 0 C level is higher in the warm sector than ahead of the warm front
    d, fl = sec["distance"].values, sec["freezing_level_m"].values
    sfc = sec.attrs["surface_front_km"]
    warm_sector = np.nanmedian(fl[(d > sfc + 100) & (d < sfc + 400)])
    ahead = np.nanmedian(fl[(d < sfc - 150) & (d > sfc - 500)])
    assert warm_sector > ahead + 300.0, (warm_sector, ahead)
    # scenario regression: the event is built with a 1:150 warm frontal surface; the
    # section's fit through the zone centres of its levels and the 2-m surface front
    # is within 25 % (as the slopes of kit.science.structure, test_structure.py): at
    # the coastal site the 2-m zone is bent by the ground (measured 1:118, 2026-12)
    np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"],
                               truth["prescribed"]["warm"]["slope_1_in"], rtol=0.25)


@_no_sample
@pytest.mark.slow
def test_sample_event_cold_front_section():
    ds, truth, entry, site, valid = _sample_case("cold")
    sec = section(analyse(ds), site, valid, front="cold")
    assert sec.attrs["front_kind"] == "cold"
    L = truth["prescribed"]["cold"]["zone_half_width_l_km"]
    centre = _crossing_km(sec, *_truth_line(entry, valid, "cold"))
    assert L > 0
    np.testing.assert_allclose(sec.attrs["surface_front_km"], centre, atol=25.0)
    # [derived] front-normal wind = minus the along-section wind (section runs cold to warm)
    np.testing.assert_allclose(sec["wind_normal_to_front"], -sec["v_along"], rtol=0)
    # [trade] the 0 C level falls behind the cold front
    d, fl = sec["distance"].values, sec["freezing_level_m"].values
    sfc = sec.attrs["surface_front_km"]
    behind = np.nanmedian(fl[(d < sfc - 150) & (d > sfc - 400)])
    warm_sector = np.nanmedian(fl[(d > sfc + 100) & (d < sfc + 400)])
    assert warm_sector > behind + 300.0, (warm_sector, behind)
    # scenario regression: the event is built with a 1:50 cold frontal surface
    np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"],
                               truth["prescribed"]["cold"]["slope_1_in"], rtol=0.15)


# ----------------------------------------------------------------------------- no front
def test_section_for_site_without_a_front_runs_along_the_gradient():
    f = dict(t=lambda P, LA, LO: t_isa(P) - 0.5 * (LA - 45.0),  # colder to the north
             td=lambda P, LA, LO: t_isa(P) - 0.5 * (LA - 45.0) - 5.0,
             u=lambda P, LA, LO: 10.0 + 0 * LA, v=lambda P, LA, LO: 0 * LA,
             z=lambda P, LA, LO: z_isa(P) + 0 * LA)
    ds = make_run(f, np.arange(35.0, 55.01, 0.5), np.arange(-15.0, 15.01, 0.5))
    site = {"name": "Orrin Cross", "lat": 45.0, "lon": 0.0}
    sec = S.section_for_site(ds, site, TIMES[0], fronts=[])
    # [derived] theta-w increases southward, so the cold-to-warm section runs N -> S
    np.testing.assert_allclose(sec.attrs["section_bearing_deg"], 180.0, atol=1.0)
    assert sec.attrs["front_kind"] == "" and "no front" in sec.attrs["note"]
    np.testing.assert_allclose(sec.attrs["site_km"], 600.0, atol=1e-6)
    assert (sec["rule_zone"].values == 0).all()
    with pytest.raises(InputError, match="no warm front"):
        S.section_for_site(ds, site, TIMES[0], front="warm", fronts=[])
    # the section never looks for fronts of its own (one analysis per shift)
    with pytest.raises(InputError, match="no fronts given"):
        S.section_for_site(ds, site, TIMES[0], fronts=None)

    from kit.charts.sections import section_figure

    fig = section_figure(sec)
    sub = next(t for t in fig.texts if t.get_gid() == "frontshift-subtitle").get_text()
    assert "through Orrin Cross" in sub and "no front" in sub
    assert "rule-zone" not in _gids(fig) and "site" in _gids(fig)


def test_section_partly_outside_the_grid_is_marked(front_run):
    from kit.charts.sections import section_figure

    # grid spans 25 W .. 5 E; the section starts 10 deg west of it
    sec = S.section_between(front_run, (50.0, -35.0), (50.0, -5.0), spacing_km=20.0,
                            time=TIMES[0])
    lon = sec["lon"].values
    outside = lon < -25.0
    assert sec.attrs["points_outside_grid"] == int(outside.sum()) > 0
    assert np.isnan(sec["t"].values[:, outside]).all()
    assert np.isfinite(sec["t"].values[:, ~outside]).all()
    fig = section_figure(sec)
    assert "outside-grid" in _gids(fig)
    assert any(t.get_text() == "outside the model grid" for t in fig.axes[0].texts)


def test_section_across_front_southern_hemisphere_and_dateline():
    # a zonal front at 50 S on a grid contiguous across the dateline (160 E .. 150 W as
    # 160..210), cold air to the south; the front's vertices run past 180
    ds = make_run(sloping_front_fields(100.0, south=True), np.arange(-62.0, -37.99, 0.25),
                  np.arange(160.0, 210.01, 0.5))
    lon = np.arange(170.0, 200.01, 1.0)
    n = lon.size
    front = Front(lon=lon, lat=np.full(n, -50.0), kind="cold", valid_time=TIMES[0],
                  level_hpa=850.0, tfp=np.zeros(n), grad=np.zeros(n), normal_east=np.zeros(n),
                  normal_north=np.full(n, -1.0), vn=np.zeros(n), speed_ms=8.0, length_km=2100.0)
    site = {"name": "Wirrandel", "lat": -49.0, "lon": -175.0}  # 185 E written as -175
    sec = S.section_across_front(ds, front, site, length_km=1000.0)
    # [derived] cold side south: the section runs S -> N through the site
    np.testing.assert_allclose((sec.attrs["section_bearing_deg"] + 180.0) % 360.0 - 180.0, 0.0,
                               atol=0.5)
    assert (sec.attrs["compass_start"], sec.attrs["compass_end"]) == ("S", "N")
    assert np.isfinite(sec["t"].values).all()
    from pyproj import Geod

    _, _, d = Geod(a=EARTH_RADIUS_M, b=EARTH_RADIUS_M).inv(
        sec.attrs["start_lon"], sec.attrs["start_lat"], -175.0, -49.0)
    np.testing.assert_allclose(sec.attrs["site_km"], d / 1000.0, atol=1.0)  # [lib] pyproj
    # PV is negative in the southern hemisphere; the tropopause is found at -2 PVU
    assert np.nanmedian(sec["pv"].sel(level=250.0)) < -2.0
    assert np.isfinite(sec["dynamic_tropopause_hpa"].values).all()
    # zone built at 1:100 (invented field), recovered within 10 %
    np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"], 100.0, rtol=0.10)
    from kit.charts.sections import section_figure

    fig = section_figure(sec)
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "-2 PVU (dynamic tropopause)" in legend  # [pub] Hoskins et al. (1985), south


def test_profile_referred_to_the_site_ground_is_the_frontal_surface_at_the_site():
    """[analytic] a tanh zone of half-width 60 km on a frontal surface of slope
    1:150 over a 400 m hill: the point at s on ground h(s) sees the zone centred where
    s - s0 + 150 h(s) = 0. Referred to the site's ground (0 m at s = 0), the zone's
    gradient maximum is s0 - 150 h_site = s0 within one 10-km spacing; unreferred it is
    bent off by the hill."""
    from kit.science.sections import refer_to_height, surface_front_1d

    s = np.arange(-400.0, 401.0, 10.0)
    ground = 400.0 * np.exp(-(((s - 60.0) / 50.0) ** 2))  # [m], 0 at the site (s = 0)
    s0, n = 40.0, 150.0
    tau = 280.0 + 3.0 * (1.0 + np.tanh((s - s0 + n * ground / 1000.0) / 60.0))
    got = surface_front_1d(tau, s, 25.0, 0.0, +1, ground_m=ground, reference_m=0.0,
                           slope_1_in=n)
    assert got == pytest.approx(s0, abs=10.0)
    bent = surface_front_1d(tau, s, 25.0, 0.0, +1)
    assert abs(bent - s0) > 20.0, bent
    # flat ground, or no slope: unchanged
    assert np.array_equal(refer_to_height(tau, s, np.zeros_like(s), 0.0, n, +1), tau)
    assert np.array_equal(refer_to_height(tau, s, ground, 0.0, np.nan, +1), tau)
