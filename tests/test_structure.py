"""Tests of kit.science.structure: slope from the 3-D field and the Margules slope.

Sources beside each expected value: [pub] published formula or worked
example, [trade] common practice, no source, [derived] follows exactly from
the analytic set-up of the test, [regression] the invented demo scenario.
"""

import doctest
from types import SimpleNamespace

import numpy as np
import pytest
import xarray as xr

import kit.science.structure as structure
from kit.model import Front
from kit.constants import G0, TYPICAL_SLOPE_1_IN
from kit.science.motion import coriolis_parameter
from kit.science.structure import add_slopes, front_margules_slope, front_slope, margules_slope

R_KM = 6371.0088
T0 = np.datetime64("2030-02-03T00:00", "ns")
Z_STD = {1000.0: 110.0, 925.0: 760.0, 850.0: 1460.0, 700.0: 3010.0, 600.0: 4200.0, 500.0: 5570.0}
KAPPA = 0.2854  # Rd/cp of Bolton (1980) Eq. 7, as kit.science.thermo uses


def make_front(lon, lat, ne, nn, *, kind="warm", level=850.0, time=T0):
    lon = np.asarray(lon, float)
    n = lon.size
    return Front(
        lon=lon,
        lat=np.broadcast_to(np.asarray(lat, float), (n,)).copy(),
        kind=kind,
        valid_time=np.datetime64(time, "ns"),
        level_hpa=level,
        tfp=np.ones(n),
        grad=np.ones(n),
        normal_east=np.full(n, float(ne)),
        normal_north=np.full(n, float(nn)),
        vn=np.zeros(n),
        speed_ms=0.0,
        length_km=0.0,
        run="test",
    )


def sloping_zone(
    n_slope, *, hemisphere=1, lat0=45.0, dtheta=8.0, l_km=100.0, grid=0.25, lon_span=(-25.0, 5.0)
):
    """Potential-temperature zone, cold side poleward, centre at y = n_slope * z.

    theta = theta_bg(p) - dtheta/2 tanh((y - N z)/L), y poleward distance [km]
    from lat0, z the (level-constant) height [km]: a frontal surface of slope
    1 in N rising over the cold air.
    """
    lat = np.sort(hemisphere * np.arange(lat0 - 10, lat0 + 12.01, grid))
    lon = np.arange(lon_span[0], lon_span[1] + 1e-9, grid)
    levels = np.array(list(Z_STD))
    y_km = R_KM * np.deg2rad(np.abs(lat) - lat0)
    t = np.empty((1, levels.size, lat.size, lon.size))
    for k, lv in enumerate(levels):
        theta = (
            285.0
            + 4.0 * Z_STD[lv] / 1e3
            - dtheta / 2 * np.tanh((y_km - n_slope * Z_STD[lv] / 1e3) / l_km)
        )
        t[0, k] = (theta * (lv / 1000.0) ** KAPPA)[:, None]
    ds = xr.Dataset(
        coords={"time": [T0], "level": levels, "lat": lat, "lon": lon},
        attrs={"run": "test", "grid": "latlon"},
    )
    dims = ("time", "level", "lat", "lon")
    ds["t"] = (dims, t)
    ds["td"] = (dims, t - 5.0)
    ds["z"] = (
        dims,
        np.broadcast_to(np.array(list(Z_STD.values()))[None, :, None, None], t.shape).copy(),
    )
    return ds


SETTINGS = SimpleNamespace(field="theta", smoothing_km=50.0)


# --------------------------------------------------------------------------
# Margules
# --------------------------------------------------------------------------
def test_margules_worked_example():
    # [pub formula, Margules 1906; example derived, REFERENCES.md Front
    # structure] 50 N, Tmean 280 K, dv 10 m/s, dT 5 K: tan(alpha) = 0.0064,
    # about 1 in 157 (the example is given to 2 significant figures)
    tan = margules_slope(277.5, 282.5, -5.0, 5.0, 50.0)
    assert tan == pytest.approx(0.0064, abs=0.00005)
    assert 1.0 / tan == pytest.approx(157.0, abs=1.0)
    # the approximation (f Tmean / g) dv/dT of the same reference
    f = coriolis_parameter(50.0)
    assert tan == pytest.approx(f * 280.0 / G0 * 10.0 / 5.0, rel=1e-9)


def test_margules_hemispheres_and_sense():
    # f < 0 in the south: the mirrored (anticyclonic-looking) shear of the
    # southern hemisphere gives the same slope; the wrong shear a negative one
    n = margules_slope(277.5, 282.5, 5.0, -5.0, -50.0)
    assert n == pytest.approx(margules_slope(277.5, 282.5, -5.0, 5.0, 50.0), rel=1e-12)
    assert margules_slope(277.5, 282.5, 5.0, -5.0, 50.0) < 0


@pytest.mark.parametrize("hemisphere", [1, -1])
def test_front_margules_slope_samples_both_air_masses(hemisphere):
    # [pub formula] Margules (1906) with T and geostrophic winds prescribed on
    # both sides: a front along 50 N/S, cold air poleward, along-front
    # geostrophic wind from z with dz/dy = -a(y) (gradient changing across a
    # 60 km zone), T 270 K / 275 K on the two sides.
    lat0 = 50.0
    lat = np.sort(hemisphere * np.arange(40.0, 60.01, 0.1))
    lon = np.arange(-15.0, 5.01, 0.25)
    y = R_KM * 1e3 * np.deg2rad(np.abs(lat) - lat0)  # poleward [m]
    w = 60e3
    f_abs = np.abs(coriolis_parameter(lat))
    # zonal geostrophic wind wanted: 9 m/s on the warm (equatorward) side,
    # -1 m/s on the cold side, times the hemisphere so the shear is cyclonic
    u_w, u_c = 9.0, -1.0
    u_target = 0.5 * (u_w + u_c) - 0.5 * (u_w - u_c) * np.tanh(y / w)
    # u = -(g/f) dz/dy_north; y_north = hemisphere * y -> dz/dy = -u f hemisphere / g
    dzdy = -u_target * f_abs / G0  # per poleward metre, any hemisphere
    z = 1460.0 + np.concatenate([[0.0], np.cumsum(0.5 * (dzdy[1:] + dzdy[:-1]) * np.diff(y))])
    if hemisphere < 0:
        z = z - z[-1]  # any constant
    tt = 272.5 - 2.5 * np.tanh(y / w)
    ds = xr.Dataset(
        coords={"time": [T0], "level": [850.0], "lat": lat, "lon": lon}, attrs={"grid": "latlon"}
    )
    ds["z"] = (
        ("time", "level", "lat", "lon"),
        np.broadcast_to(z[:, None], (lat.size, lon.size))[None, None].copy(),
    )
    ds["t"] = (
        ("time", "level", "lat", "lon"),
        np.broadcast_to(tt[:, None], (lat.size, lon.size))[None, None].copy(),
    )
    fr = make_front(np.arange(-8.0, -2.0, 0.25), hemisphere * lat0, 0.0, hemisphere)
    n = front_margules_slope(fr, ds, offset_km=250.0)
    # expected: the formula with the values at +-250 km (tanh saturated)
    lat_c = lat0 + np.rad2deg(250.0 / R_KM)
    lat_w = lat0 - np.rad2deg(250.0 / R_KM)
    tan = margules_slope(
        270.0 + 2.5 * (1 - np.tanh(250e3 / w)),
        275.0 - 2.5 * (1 - np.tanh(250e3 / w)),
        u_c,
        u_w,
        lat0,
    )
    assert np.isfinite(n)
    # 2 %: bilinear sampling and centred differences on a 0.1 deg grid
    assert n == pytest.approx(1.0 / tan, rel=0.02)
    del lat_c, lat_w


# --------------------------------------------------------------------------
# slope from the 3-D field
# --------------------------------------------------------------------------
@pytest.mark.parametrize("hemisphere", [1, -1])
@pytest.mark.parametrize("n_slope", [150.0, 50.0, 300.0])
def test_slope_of_analytic_sloping_zone(n_slope, hemisphere):
    # [derived] the zone centre is n_slope * z toward the cold side on every
    # level, so the warm-edge (TFP-maximum) line has the same slope: 1 in
    # n_slope recovered within 10 %
    ds = sloping_zone(n_slope, hemisphere=hemisphere)
    yf = n_slope * Z_STD[850.0] / 1e3
    lat_f = hemisphere * (45.0 + np.rad2deg(yf / R_KM))
    kind = "cold" if n_slope < 100 else "warm"
    fr = make_front(np.arange(-15.0, -5.0, 0.25), lat_f, 0.0, hemisphere, kind=kind)
    res = front_slope(fr, ds, settings=SETTINGS)
    assert res["slope_1_in"] == pytest.approx(n_slope, rel=0.10)
    assert res["n_vertices"] >= 10
    assert res["scatter"] < 0.05 * n_slope  # a uniform zone: vertices agree


def test_slope_of_a_rotated_zone():
    # [derived] the same sloping zone (1 in 100) lying SW-NE with the cold air
    # to the north-west, built in a local azimuthal-equidistant plane; the
    # vertex normals are the plane's normal carried to each vertex
    from kit.science.geo import local_east_north_km, local_to_lonlat

    n_slope, l_km = 100.0, 100.0
    beta = np.deg2rad(-50.0)
    n_e, n_n = np.sin(beta), np.cos(beta)
    lat = np.arange(33.0, 62.01, 0.25)
    lon = np.arange(-32.0, 12.01, 0.25)
    lo2, la2 = np.meshgrid(lon, lat)
    e, n = local_east_north_km(lo2, la2, -10.0, 47.0)
    xi = e * n_e + n * n_n
    levels = np.array(list(Z_STD))
    t = np.empty((1, levels.size) + lo2.shape)
    for k, lv in enumerate(levels):
        theta = (
            285.0 + 4.0 * Z_STD[lv] / 1e3 - 4.0 * np.tanh((xi - n_slope * Z_STD[lv] / 1e3) / l_km)
        )
        t[0, k] = theta * (lv / 1000.0) ** KAPPA
    ds = xr.Dataset(
        coords={"time": [T0], "level": levels, "lat": lat, "lon": lon}, attrs={"grid": "latlon"}
    )
    dims = ("time", "level", "lat", "lon")
    ds["t"] = (dims, t)
    ds["td"] = (dims, t - 5.0)
    ds["z"] = (
        dims,
        np.broadcast_to(np.array(list(Z_STD.values()))[None, :, None, None], t.shape).copy(),
    )
    s_along = np.arange(-400.0, 400.1, 25.0)
    xi0 = n_slope * Z_STD[850.0] / 1e3
    pe = xi0 * n_e - s_along * n_n
    pn = xi0 * n_n + s_along * n_e
    vlon, vlat = local_to_lonlat(pe, pn, -10.0, 47.0)
    qlon, qlat = local_to_lonlat(pe + n_e, pn + n_n, -10.0, 47.0)
    ve, vn = zip(
        *[
            local_east_north_km(a, b, c, d)
            for a, b, c, d in zip(qlon, qlat, vlon, vlat, strict=True)
        ],
        strict=True,
    )
    ve, vn = np.array(ve), np.array(vn)
    norm = np.hypot(ve, vn)
    fr = make_front(vlon, vlat, 0.0, 1.0, kind="warm")
    fr = fr.replace(normal_east=ve / norm, normal_north=vn / norm)
    res = front_slope(fr, ds, settings=SETTINGS)
    assert res["slope_1_in"] == pytest.approx(n_slope, rel=0.10)
    assert res["n_vertices"] >= 10


def test_slope_of_a_zone_leaning_over_the_warm_side_is_missing():
    # a surface rising over the warm air is not a front: no slope (NaN)
    ds = sloping_zone(-100.0)
    fr = make_front(np.arange(-15.0, -5.0, 0.25), 45.0 - np.rad2deg(146.0 / R_KM), 0.0, 1.0)
    res = front_slope(fr, ds, settings=SETTINGS)
    assert np.isnan(res["slope_1_in"])


def test_slope_needs_three_levels():
    ds = sloping_zone(150.0).sel(level=[850.0, 700.0])
    fr = make_front(np.arange(-15.0, -5.0, 0.25), 47.0, 0.0, 1.0)
    res = front_slope(fr, ds, settings=SETTINGS)
    assert np.isnan(res["slope_1_in"]) and res["n_vertices"] == 0


def test_add_slopes_props():
    ds = sloping_zone(150.0)
    lat_f = 45.0 + np.rad2deg(150.0 * 1.46 / R_KM)
    warm = make_front(np.arange(-15.0, -5.0, 0.25), lat_f, 0.0, 1.0, kind="warm")
    qs = make_front(np.arange(-15.0, -5.0, 0.25), lat_f, 0.0, 1.0, kind="quasi-stationary")
    warm, qs = add_slopes([warm, qs], ds, settings=SETTINGS)
    for fr in (warm, qs):
        assert fr.props["slope_1_in"] == pytest.approx(150.0, rel=0.10)
        assert fr.props["slope_scatter"] is not None
        # z is level-constant here: no geostrophic shear, so no Margules slope
        assert fr.props["slope_margules_1_in"] is None
    # [trade] warm front about 1 in 150, cold front about 1 in 50 (common
    # practice, no source); none given for a quasi-stationary front
    assert warm.props["slope_typical_1_in"] == 150.0
    assert qs.props["slope_typical_1_in"] is None
    assert TYPICAL_SLOPE_1_IN["cold"] == 50.0


def test_slope_with_theta_w_field():
    # the default field is theta-w (kit.science.thermo); a zone in theta with moist,
    # uniform dew-point depression keeps its slope in theta-w (within 10 %)
    ds = sloping_zone(150.0)
    lat_f = 45.0 + np.rad2deg(150.0 * 1.46 / R_KM)
    fr = make_front(np.arange(-15.0, -5.0, 0.25), lat_f, 0.0, 1.0)
    res = front_slope(fr, ds, settings=SETTINGS, field_name="theta_w")
    assert res["slope_1_in"] == pytest.approx(150.0, rel=0.10)
    # None follows the fronts' field
    res = front_slope(
        fr, ds, settings=SimpleNamespace(field="theta_w", smoothing_km=50.0), field_name=None
    )
    assert res["slope_1_in"] == pytest.approx(150.0, rel=0.10)


def test_doctests():
    res = doctest.testmod(structure)
    assert res.attempted >= 2 and res.failed == 0


def test_slope_on_a_projected_grid():
    # [derived] the 1 in 150 zone on a Lambert conformal grid (2-D lat/lon,
    # 25 km spacing): same slope as on the latitude/longitude grid, within 10 %
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=lcc +lat_1=40 +lat_2=55 +lat_0=48 +lon_0=-10 +R=6371008.8")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-1200e3, 1200.1e3, 25e3)
    y = np.arange(-1200e3, 1400.1e3, 25e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = tr.transform(xx, yy)
    levels = np.array(list(Z_STD))
    y_km = R_KM * np.deg2rad(lat2 - 45.0)
    t = np.empty((1, levels.size) + xx.shape)
    for k, lv in enumerate(levels):
        theta = 285.0 - 4.0 * np.tanh((y_km - 150.0 * Z_STD[lv] / 1e3) / 100.0)
        t[0, k] = theta * (lv / 1000.0) ** KAPPA
    ds = xr.Dataset(
        coords={
            "time": [T0],
            "level": levels,
            "y": y,
            "x": x,
            "lat": (("y", "x"), lat2),
            "lon": (("y", "x"), lon2),
        },
        attrs={"grid": "projected", "dx_m": 25e3, "dy_m": 25e3},
    )
    dims = ("time", "level", "y", "x")
    ds["t"] = (dims, t)
    ds["td"] = (dims, t - 5.0)
    zs = np.array(list(Z_STD.values()))[None, :, None, None]
    ds["z"] = (dims, np.broadcast_to(zs, t.shape).copy())
    lat_f = 45.0 + np.rad2deg(150.0 * 1.46 / R_KM)
    fr = make_front(np.arange(-16.0, -4.0, 0.25), lat_f, 0.0, 1.0)
    res = front_slope(fr, ds, settings=SETTINGS)
    assert res["slope_1_in"] == pytest.approx(150.0, rel=0.10)
    assert res["n_vertices"] >= 10


# --------------------------------------------------------------------------
# the invented demo scenario: regression against sample_grids/truth.json
# (the scenario's own prescribed values, NOT a science check)
# --------------------------------------------------------------------------
def test_sample_event_slopes_regression():
    # [regression] invented scenario: frontal surfaces prescribed at 1 in 150
    # (warm) and 1 in 50 (cold) (truth.json slopes_1_in); the slope traced in
    # the run's 3-D field within 25 % at three valid times of the older run
    import json
    from pathlib import Path

    import kit
    from kit.science.fronts import FrontSettings, find_fronts

    sample = Path(__file__).resolve().parents[1] / "sample_grids"
    truth = json.loads((sample / "truth.json").read_text())
    run = sorted(truth["timing_offsets_h"].keys() - {"analyses"})[0]  # the older run
    ds = kit.open_run(sample / truth["sets"][run]["folder"])
    ds = ds.isel(time=[0, ds.sizes["time"] // 2, ds.sizes["time"] - 1]).load()
    settings = FrontSettings()
    fronts = find_fronts(ds, settings=settings)
    fronts = add_slopes(fronts, ds, settings=settings)
    assert {f.kind for f in fronts} == {"warm", "cold"}
    for f in fronts:
        expected = truth["slopes_1_in"][f.kind]
        assert f.props["slope_1_in"] == pytest.approx(expected, rel=0.25), (f.kind, f.valid_time)
        assert f.props["slope_typical_1_in"] == expected  # the scenario uses the trade values


@pytest.mark.parametrize("hemisphere", [1, -1])
def test_two_air_mass_atmosphere_slope_and_margules_agree(hemisphere):
    # [pub] Margules (1906): two isothermal air masses, each in hydrostatic and
    # geostrophic balance with a uniform along-front wind, meet on a surface
    # where their pressures are equal; that surface has the Margules slope.
    # Built here exactly on the sphere: p_i = P exp(-g z/(R T_i) - F(y) u_i/(R T_i)),
    # F(y) = integral of f dy, cold air (T1, u1) poleward. The slope traced in
    # the 3-D field and the Margules slope read from T and z must both match
    # the interface [derived: secant between its 925 and 600 hPa crossings].
    # Mirrored into the southern hemisphere (f < 0, cold air to the south,
    # same u) the answers are the same.
    r_d, g = 287.04, G0
    t1, t2, u1, u2 = 270.0, 280.0, -8.0, 12.0
    phi_s = 47.0 * hemisphere
    lat = np.sort(hemisphere * np.arange(40.0, 62.0001, 0.05))
    lon = np.arange(-10.0, 0.001, 0.25)
    omega = 7.292115e-5
    big_f = 2 * omega * R_KM * 1e3 * (np.cos(np.deg2rad(phi_s)) - np.cos(np.deg2rad(lat)))
    z_int = -(big_f / r_d) * (u2 / t2 - u1 / t1) / ((g / r_d) * (1 / t2 - 1 / t1))
    p_int = 1e5 * np.exp(-g * z_int / (r_d * t2) - big_f * u2 / (r_d * t2))
    levels = np.array([1000.0, 925.0, 850.0, 700.0, 600.0, 500.0])
    t = np.empty((1, levels.size, lat.size, lon.size))
    z = np.empty_like(t)
    for k, lv in enumerate(levels):
        p = lv * 100.0
        cold = p > p_int
        z1 = (r_d * t1 / g) * (np.log(1e5 / p) - big_f * u1 / (r_d * t1))
        z2 = (r_d * t2 / g) * (np.log(1e5 / p) - big_f * u2 / (r_d * t2))
        t[0, k] = np.where(cold, t1, t2)[:, None]
        z[0, k] = np.where(cold, z1, z2)[:, None]
    ds = xr.Dataset(
        coords={"time": [T0], "level": levels, "lat": lat, "lon": lon}, attrs={"grid": "latlon"}
    )
    dims = ("time", "level", "lat", "lon")
    ds["t"] = (dims, t)
    ds["td"] = (dims, t - 8.0)
    ds["z"] = (dims, z)

    def crossing(lv):  # latitude [deg] and height [m] of the interface on a level
        j = int(np.argmin(np.abs(p_int - lv * 100.0)))
        return lat[j], z_int[j]

    lat_850, _ = crossing(850.0)
    (la_lo, z_lo), (la_hi, z_hi) = crossing(925.0), crossing(600.0)
    secant = R_KM * np.deg2rad(abs(la_hi - la_lo)) / ((z_hi - z_lo) / 1e3)
    # the Margules along-front wind is 90 deg left of the cold-to-warm axis:
    # east (u) in the north, west (-u) in the south
    tan = margules_slope(t1, t2, hemisphere * u1, hemisphere * u2, lat_850)
    assert secant == pytest.approx(1 / tan, rel=0.05)  # the construction holds
    fr = make_front(np.arange(-8.0, -2.0, 0.25), lat_850, 0.0, hemisphere, kind="warm")
    res = front_slope(fr, ds, levels=(925.0, 850.0, 700.0, 600.0), settings=SETTINGS)
    assert res["slope_1_in"] == pytest.approx(secant, rel=0.10)
    n_m = front_margules_slope(fr, ds, offset_km=250.0)
    assert n_m == pytest.approx(1 / tan, rel=0.05)
