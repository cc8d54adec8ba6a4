"""Tests of kit.science.motion: geostrophic wind, tracking, speeds three ways.

Where each expected value comes from is said beside it:
[pub] a published formula or worked example, [lib] a reference library as a
second implementation, [trade] common practice, no source, [derived] follows
exactly from the analytic set-up of the test (kinematics of a prescribed
motion), [regression] the invented demo scenario (not a science check).
"""

import doctest
import json
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import kit.science.motion as motion
from kit.constants import G0, KT_PER_MS, RD
from kit.model import Front, FrontMotion, TrackLink, motion_table
from kit.pipeline import analyse
from kit.science.geo import PointSampler, line_length_km
from kit.science.motion import (
    coriolis_parameter,
    geostrophic_speed,
    geostrophic_wind,
    speeds_three_ways,
    track_fronts,
)

R_KM = 6371.0088
ROOT = Path(__file__).resolve().parents[1]


# --------------------------------------------------------------------------
# builders
# --------------------------------------------------------------------------
def make_front(lon, lat, ne, nn, time, *, kind="warm", level=850.0, run="r1", member=None):
    lon = np.asarray(lon, float)
    lat = np.asarray(lat, float)
    n = lon.size
    return Front(
        lon=lon,
        lat=lat,
        kind=kind,
        valid_time=np.datetime64(time, "ns"),
        level_hpa=level,
        tfp=np.ones(n),
        grad=np.ones(n),
        normal_east=np.broadcast_to(np.asarray(ne, float), (n,)).copy(),
        normal_north=np.broadcast_to(np.asarray(nn, float), (n,)).copy(),
        vn=np.zeros(n),
        speed_ms=0.0,
        length_km=0.0,
        run=run,
        member=member,
    )


T0 = np.datetime64("2030-02-03T00:00", "ns")


def hours(h):
    return T0 + np.timedelta64(int(round(h * 3600)), "s")


def parallel_front(lat, t_h, *, lon0=-20.0, lon1=0.0, hemisphere=1, **kw):
    """A front along a parallel, cold side poleward (normal poleward)."""
    lon = np.arange(lon0, lon1 + 1e-9, 0.25)
    return make_front(lon, np.full(lon.size, lat), 0.0, float(hemisphere), hours(t_h), **kw)


def lat_after(lat0, dist_km):
    return lat0 + np.rad2deg(dist_km / R_KM)


def grid_dataset(lat, lon, times, levels=(1000.0, 925.0, 850.0, 700.0, 600.0, 500.0)):
    ds = xr.Dataset(
        coords={
            "time": np.asarray(times, "datetime64[ns]"),
            "level": np.asarray(levels, float),
            "lat": np.asarray(lat, float),
            "lon": np.asarray(lon, float),
        },
        attrs={"run": "test-run", "grid": "latlon", "source": "synthetic test field"},
    )
    return ds


# --------------------------------------------------------------------------
# geostrophic wind
# --------------------------------------------------------------------------
@pytest.mark.parametrize("lat, expected", [(45.0, 15.5), (50.0, 14.3), (55.0, 13.4)])
def test_geostrophic_speed_worked_example(lat, expected):
    # [pub] Vg = |grad p| / (rho f): 4 hPa over 200 km, rho = 1.25 kg m-3
    # (REFERENCES.md, Front motion); published to 0.1 m/s -> atol 0.05
    assert geostrophic_speed(400.0, 200.0, lat) == pytest.approx(expected, abs=0.05)
    assert geostrophic_speed(400.0, 200.0, -lat) == pytest.approx(expected, abs=0.05)


@pytest.mark.parametrize("lat, expected", [(45.0, 15.5), (50.0, 14.3), (55.0, 13.4)])
def test_geostrophic_wind_mslp_grid_worked_example(lat, expected):
    # [pub] the same worked example on a grid: MSLP falling 4 hPa per 200 km
    # northward gives a westerly of the published speed
    la = np.arange(lat - 3, lat + 3.01, 0.25)
    lo = np.arange(-5.0, 5.01, 0.25)
    ds = grid_dataset(la, lo, [T0])
    y_km = R_KM * np.deg2rad(la - lat)
    p = 101000.0 - 400.0 * (y_km / 200.0)
    mslp = xr.DataArray(
        np.broadcast_to(p[:, None], (la.size, lo.size)).copy(),
        dims=("lat", "lon"),
        coords={"lat": la, "lon": lo},
    )
    ug, vg = geostrophic_wind(mslp, ds, kind="mslp", rho=1.25)
    j = int(np.argmin(np.abs(la - lat)))
    assert isinstance(ug, xr.DataArray)
    assert float(ug[j, 20]) == pytest.approx(expected, abs=0.05)
    assert float(vg[j, 20]) == pytest.approx(0.0, abs=1e-9)


def _height_field(lat, lon):
    lo, la = np.meshgrid(lon, lat)
    return (
        1500.0
        - 180.0 * np.exp(-((lo + 10) ** 2 / 150 + (np.abs(la) - 52) ** 2 / 60))
        - 4.0 * (np.abs(la) - 50)
    )


@pytest.mark.parametrize("hemisphere", [1, -1])
def test_geostrophic_wind_height_against_metpy(hemisphere):
    # [lib] MetPy's geostrophic_wind as a second implementation. MetPy measures
    # grid lengths on the WGS84 ellipsoid, the kit on a sphere: up to ~0.5 %
    # apart, so atol 0.15 m/s on winds up to ~20 m/s.
    import metpy.calc as metpy_calc  # required: a missing one must fail
    lat = np.sort(hemisphere * np.arange(30.0, 70.01, 0.5))
    lon = np.arange(-40.0, 20.01, 0.5)
    z = _height_field(lat, lon)
    da = xr.DataArray(
        z,
        dims=("lat", "lon"),
        coords={
            "lat": ("lat", lat, {"units": "degrees_north"}),
            "lon": ("lon", lon, {"units": "degrees_east"}),
        },
        attrs={"units": "m"},
    )
    ref_u, ref_v = metpy_calc.geostrophic_wind(da)
    ref_u = np.asarray(ref_u.metpy.dequantify())
    ref_v = np.asarray(ref_v.metpy.dequantify())
    ug, vg = geostrophic_wind(z, grid_dataset(lat, lon, [T0]), kind="height")
    inner = (slice(2, -2), slice(2, -2))
    assert np.nanmax(np.abs(ref_u)[inner]) > 10.0  # the field has a real flow to compare
    np.testing.assert_allclose(ug[inner], ref_u[inner], atol=0.15)
    np.testing.assert_allclose(vg[inner], ref_v[inner], atol=0.15)


def test_geostrophic_wind_nan_near_equator():
    # documented cut: NaN where |lat| < MIN_ABS_LAT_DEG (10 deg)
    lat = np.arange(-20.0, 20.01, 1.0)
    lon = np.arange(0.0, 10.01, 1.0)
    z = np.broadcast_to(1500.0 + 2.0 * lat[:, None], (lat.size, lon.size))
    ug, _ = geostrophic_wind(z, grid_dataset(lat, lon, [T0]))
    assert np.all(np.isnan(ug[np.abs(lat) < motion.MIN_ABS_LAT_DEG]))
    assert np.all(np.isfinite(ug[np.abs(lat) >= motion.MIN_ABS_LAT_DEG]))


def test_geostrophic_rho_from_temperature():
    # rho = p / (Rd T) (ideal gas law, any text), Rd = 287.04 J kg-1 K-1
    lat = np.arange(40.0, 60.01, 0.5)
    lon = np.arange(-10.0, 10.01, 0.5)
    ds = grid_dataset(lat, lon, [T0])
    p = xr.DataArray(
        np.broadcast_to(101325.0 - 50.0 * lat[:, None], (lat.size, lon.size)).copy(),
        dims=("lat", "lon"),
        coords={"lat": lat, "lon": lon},
    )
    ds["t2m"] = xr.full_like(p, 283.15)
    u_t, _ = geostrophic_wind(p, ds, kind="mslp", rho="from_t")
    u_c, _ = geostrophic_wind(p, ds, kind="mslp", rho=p.values / (RD * 283.15))
    assert float(p[0, 0]) / (RD * 283.15) == pytest.approx(
        1.2221, abs=1e-4
    )  # 99325 Pa, 283.15 K
    np.testing.assert_allclose(u_t[5:-5], u_c[5:-5], rtol=1e-3)
    with pytest.raises(motion.InputError):
        geostrophic_wind(p, ds, kind="pressure")


def test_coriolis():
    # f = 2 Omega sin(lat), Omega = 7.292115e-5 s-1 (any dynamics text)
    assert coriolis_parameter(45.0) == pytest.approx(1.03126e-4, rel=1e-4)
    assert coriolis_parameter(-45.0) == pytest.approx(-1.03126e-4, rel=1e-4)


# --------------------------------------------------------------------------
# tracking
# --------------------------------------------------------------------------
@pytest.mark.parametrize("hemisphere", [1, -1])
@pytest.mark.parametrize("speed", [10.0, -12.0])
def test_tracked_speed_uniform_motion(speed, hemisphere):
    # [derived] a line moved poleward (toward its cold side) by speed*dt every
    # 3 h: the tracked normal speed is that speed, positive toward the cold side
    dt_h = 3.0
    fronts = []
    for i in range(5):
        d = speed * i * dt_h * 3600 / 1e3
        lat = hemisphere * lat_after(45.0, d)
        fronts.append(parallel_front(lat, i * dt_h, hemisphere=hemisphere))
    fronts = track_fronts(fronts)
    assert len({f.track for f in fronts}) == 1
    for f in fronts:
        assert f.props["speed_tracked_ms"] == pytest.approx(speed, rel=0.01)
        vk = np.array([np.nan if v is None else v for v in f.props["vn_tracked"]])
        assert np.isfinite(vk).mean() > 0.9
    assert fronts[0].props["track_event"] == "new"
    assert fronts[1].props["track_event"] == "continues"


def test_centred_difference_on_accelerating_front():
    # [derived] position s = a t^2 along the normal: a centred difference is
    # exact at the middle step (2 a t), one-sided at the ends gives the mean
    # speed over the first/last interval.
    a = 0.5e-3 / 3600  # km s-2
    times_h = [0.0, 3.0, 6.0]
    fronts = []
    for th in times_h:
        ts = th * 3600
        fronts.append(parallel_front(lat_after(45.0, a * ts**2), th))
    fronts = track_fronts(fronts, max_gap_km=500.0)
    mid = fronts[1].props["speed_tracked_ms"]
    assert mid == pytest.approx(2 * a * 3 * 3600 * 1e3, rel=0.01)
    first = fronts[0].props["speed_tracked_ms"]
    assert first == pytest.approx(a * (3 * 3600) * 1e3, rel=0.01)  # (s(3h)-s(0))/3h
    last = fronts[2].props["speed_tracked_ms"]
    assert last == pytest.approx(a * (9 * 3600) * 1e3, rel=0.01)  # (s(6h)-s(3h))/3h


def test_tilted_line_moving_along_its_normal():
    # [derived] a straight line (in a local tangent plane) oriented 30 deg east
    # of north, moved 100 km per 3 h along its normal (27.8 km/h = 9.26 m/s);
    # plane-to-sphere distortion over 600 km is < 1 %, tolerance 3 %
    from kit.science.geo import local_to_lonlat

    ang = np.deg2rad(30.0)
    tx, ty = np.sin(ang), np.cos(ang)  # along the line
    nx, ny = ty, -tx  # normal (to the south-east), cold side
    s = np.linspace(-600, 600, 121)
    fronts = []
    for i in range(4):
        e = s * tx + nx * 100.0 * i
        n = s * ty + ny * 100.0 * i
        lon, lat = local_to_lonlat(e, n, -15.0, 50.0)
        fronts.append(make_front(lon, lat, nx, ny, hours(3 * i), kind="cold"))
    fronts = track_fronts(fronts)
    for f in fronts:
        assert f.props["speed_tracked_ms"] == pytest.approx(100e3 / (3 * 3600), rel=0.03)
    assert len({f.track for f in fronts}) == 1


def test_tracking_across_the_dateline():
    # [derived] a line from 170 E to 170 W (longitudes given -180..180, jumping
    # at the antimeridian) moving poleward at 8 m/s
    lon = np.concatenate([np.arange(170.0, 180.0, 0.5), np.arange(-180.0, -169.99, 0.5)])
    fronts = []
    for i in range(3):
        lat = lat_after(48.0, 8.0 * i * 3 * 3600 / 1e3)
        fronts.append(make_front(lon, np.full(lon.size, lat), 0.0, 1.0, hours(3 * i)))
    fronts = track_fronts(fronts)
    for f in fronts:
        assert f.props["speed_tracked_ms"] == pytest.approx(8.0, rel=0.01)


def test_split_keeps_id_on_largest_overlap():
    a = parallel_front(50.0, 0.0, lon0=-20.0, lon1=0.0)
    b1 = parallel_front(50.3, 3.0, lon0=-20.0, lon1=-8.0)  # 12 deg of overlap
    b2 = parallel_front(50.3, 3.0, lon0=-6.0, lon1=0.0)  # 6 deg
    a, b1, b2 = track_fronts([a, b1, b2])
    assert b1.track == a.track
    assert b2.track != a.track
    assert b2.props["track_event"] == "split"
    assert b2.props["track_parent"] == a.track


def test_merge_keeps_older_id():
    old = parallel_front(49.7, 0.0, lon0=-20.0, lon1=-10.0)
    a1 = parallel_front(50.0, 3.0, lon0=-20.0, lon1=-10.0)  # continues `old`
    a2 = parallel_front(50.0, 3.0, lon0=-9.0, lon1=2.75)  # a new line, longer
    b = parallel_front(50.3, 6.0, lon0=-20.0, lon1=3.0)
    old, a1, a2, b = track_fronts([old, a1, a2, b])
    assert a1.track == old.track
    assert a2.track != a1.track
    assert b.track == old.track  # the older id, though a2 overlaps more
    assert b.props["track_event"] == "merge"


def test_opposite_polarity_lines_are_not_linked():
    # a line whose cold side faces the other way is another front
    a = parallel_front(50.0, 0.0)
    b = parallel_front(50.2, 3.0)
    b = b.replace(normal_north=-b.normal_north)
    a, b = track_fronts([a, b])
    assert a.track != b.track
    assert a.props["speed_tracked_ms"] is None
    assert b.props["track_event"] == "new"


def test_runs_members_and_levels_tracked_apart():
    fronts = []
    for run in ("r1", "r2"):
        for member in (None, 3):
            for i in range(2):
                fronts.append(
                    parallel_front(lat_after(45.0, 36.0 * i), 3 * i, run=run, member=member)
                )
    fronts = track_fronts(fronts)
    ids = {(f.run, f.member): set() for f in fronts}
    for f in fronts:
        ids[(f.run, f.member)].add(f.track)
    assert all(len(v) == 1 for v in ids.values())
    assert len(set.union(*ids.values())) == 4
    for f in fronts:
        assert f.props["speed_tracked_ms"] == pytest.approx(36e3 / (3 * 3600), rel=0.01)


def test_far_lines_start_new_tracks():
    # 1500 km in 3 h would be 139 m/s: beyond any front (max_speed_ms 30)
    a = parallel_front(45.0, 0.0)
    b = parallel_front(lat_after(45.0, 1500.0), 3.0)
    a, b = track_fronts([a, b])
    assert a.track != b.track


# --------------------------------------------------------------------------
# speeds three ways
# --------------------------------------------------------------------------
def speed_dataset(lat0, *, hemisphere=1, u=3.0, v=15.0, dpdx_pa_per_km=400.0 / 200.0, times=(T0,)):
    lat = np.sort(hemisphere * np.arange(lat0 - 8, lat0 + 8.01, 0.25))
    lon = np.arange(-30.0, 10.01, 0.25)
    ds = grid_dataset(lat, lon, list(times))
    shape4 = (len(times), ds.level.size, lat.size, lon.size)
    dims4 = ("time", "level", "lat", "lon")
    ds["u"] = (dims4, np.full(shape4, u))
    ds["v"] = (dims4, np.full(shape4, hemisphere * v))
    ds["z"] = (
        dims4,
        np.zeros(shape4) + np.array([110, 760, 1460, 3010, 4200, 5570.0])[None, :, None, None],
    )
    x_km = R_KM * np.cos(np.deg2rad(lat))[:, None] * np.deg2rad(lon - lon.mean())[None, :]
    p = 101000.0 + dpdx_pa_per_km * x_km
    ds["mslp"] = (
        ("time", "lat", "lon"),
        np.broadcast_to(p, (len(times), lat.size, lon.size)).copy(),
    )
    return ds


@pytest.mark.parametrize("hemisphere", [1, -1])
@pytest.mark.parametrize("lat0, vg_pub", [(45.0, 15.5), (50.0, 14.3), (55.0, 13.4)])
def test_speeds_three_ways_wind_and_rule(lat0, vg_pub, hemisphere):
    ds = speed_dataset(lat0, hemisphere=hemisphere)
    lon = np.arange(-12.0, -7.99, 0.1)
    warm = make_front(lon, np.full(lon.size, hemisphere * lat0), 0.0, hemisphere, T0, kind="warm")
    cold = make_front(lon, np.full(lon.size, hemisphere * lat0), 0.0, hemisphere, T0, kind="cold")
    warm, cold = speeds_three_ways([warm, cold], ds)
    # [derived] uniform 15 m/s poleward wind (toward the cold side): the
    # front-normal wind is exactly 15 m/s; bilinear sampling is exact
    assert warm.props["speed_wind_ms"] == pytest.approx(15.0, abs=1e-6)
    # [pub] pressure rising 4 hPa per 200 km eastward: geostrophic wind of the
    # worked example (REFERENCES.md) blowing toward the cold side
    assert warm.props["speed_geostrophic_normal_ms"] == pytest.approx(vg_pub, abs=0.06)
    # [trade] warm front at 2/3, cold front at the full normal component
    # (common practice, no source)
    assert warm.props["speed_geostrophic_rule_ms"] == pytest.approx(2 / 3 * vg_pub, abs=0.05)
    assert cold.props["speed_geostrophic_rule_ms"] == pytest.approx(vg_pub, abs=0.06)
    assert warm.props["speed_rule_source"] == "mslp"
    # no track: tracked speed missing, no motion hint from it
    assert warm.props["speed_tracked_ms"] is None


def test_rule_from_1000_hpa_heights_without_mslp():
    # [pub] Vg = (g/f) |grad z|: with no MSLP in the run, the isobar rule reads
    # the 1000 hPa height gradient along the front; 32.6 m per 200 km is the
    # height equivalent of 4 hPa (dz = dp / (rho g), rho 1.25) -> 15.5 m/s at
    # 45 N as the worked example (REFERENCES.md)
    ds = speed_dataset(45.0).drop_vars("mslp")
    lat, lon = ds["lat"].values, ds["lon"].values
    x_km = R_KM * np.cos(np.deg2rad(lat))[:, None] * np.deg2rad(lon - lon.mean())[None, :]
    dz = 400.0 / (1.25 * G0) * x_km / 200.0
    z = ds["z"].values.copy()
    z[:, 0] = 110.0 + dz
    ds["z"] = (ds["z"].dims, z)
    lon_f = np.arange(-12.0, -7.99, 0.1)
    fr = make_front(lon_f, np.full(lon_f.size, 45.0), 0.0, 1.0, T0, kind="cold")
    [fr] = speeds_three_ways([fr], ds)
    assert fr.props["speed_rule_source"] == "z1000"
    assert fr.props["speed_geostrophic_rule_ms"] == pytest.approx(15.5, abs=0.06)


def test_missing_steering_level_is_one_line_input_error():
    ds = speed_dataset(50.0)
    lon_f = np.arange(-12.0, -7.99, 0.1)
    fr = make_front(lon_f, np.full(lon_f.size, 50.0), 0.0, 1.0, T0)
    with pytest.raises(motion.InputError) as err:
        [fr] = speeds_three_ways([fr], ds, steering_level_hpa=300.0)
    msg = str(err.value)
    assert "\n" not in msg and "300 hPa" in msg and "levels" in msg


def test_speed_flags_in_plain_words():
    ds = speed_dataset(50.0, v=0.5, dpdx_pa_per_km=0.05)
    lon = np.arange(-12.0, -7.99, 0.1)
    qs = make_front(lon, np.full(lon.size, 50.0), 0.0, 1.0, T0, kind="quasi-stationary")
    [qs] = speeds_three_ways([qs], ds)
    assert "quasi-stationary" in qs.props["speed_flag"]

    ds = speed_dataset(50.0, v=15.0)
    slow = make_front(lon, np.full(lon.size, 50.0), 0.0, 1.0, T0, kind="warm")
    slow = slow.replace(link=TrackLink("continues", 1, 4.0))
    agree = make_front(lon, np.full(lon.size, 50.0), 0.0, 1.0, T0, kind="warm")
    agree = agree.replace(link=TrackLink("continues", 2, 12.0))
    slow, agree = speeds_three_ways([slow, agree], ds, disagree_frac=0.35)
    assert "well below the steering wind" in slow.props["speed_flag"]
    # the track is held against 2/3 of the 15 m/s wind for a warm front
    # (common practice, no source): 4 vs 10 flagged, 12 vs 10 not; the rule
    # 2/3 * 14.3 = 9.5 against 12: within 35 %
    assert agree.props["speed_flag"] == ""


def test_speeds_on_a_projected_grid_match_latlon():
    # the same uniform wind and pressure gradient on a Lambert conformal grid:
    # the sampler and the rule agree with the regular-grid answer
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=lcc +lat_1=45 +lat_2=55 +lat_0=50 +lon_0=-10 +R=6371008.8")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-900e3, 900.1e3, 25e3)
    y = np.arange(-900e3, 900.1e3, 25e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = tr.transform(xx, yy)
    ds = xr.Dataset(
        coords={
            "time": [T0],
            "level": [850.0],
            "y": y,
            "x": x,
            "lat": (("y", "x"), lat2),
            "lon": (("y", "x"), lon2),
        },
        attrs={"grid": "projected", "dx_m": 25e3, "dy_m": 25e3, "run": "lcc"},
    )
    xk = R_KM * np.cos(np.deg2rad(lat2)) * np.deg2rad(lon2 + 10.0)
    ds["mslp"] = (("time", "y", "x"), (101000.0 + 2.0 * xk)[None])
    ds["u"] = (("time", "level", "y", "x"), np.full((1, 1) + xx.shape, 3.0))
    ds["v"] = (("time", "level", "y", "x"), np.full((1, 1) + xx.shape, 15.0))
    lon = np.arange(-12.0, -7.99, 0.1)
    fr = make_front(lon, np.full(lon.size, 50.0), 0.0, 1.0, T0, kind="warm")
    [fr] = speeds_three_ways([fr], ds)
    assert fr.props["speed_wind_ms"] == pytest.approx(15.0, abs=1e-6)
    # [pub] worked example at 50 N, 14.3 m/s; 2/3 of it for a warm front [trade]
    assert fr.props["speed_geostrophic_normal_ms"] == pytest.approx(14.3, abs=0.06)


def test_point_sampler_projected_grid_inverts_coordinates():
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=stere +lat_0=90 +lat_ts=60 +lon_0=0 +R=6371008.8")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-2000e3, 2000.1e3, 50e3)
    y = np.arange(-4000e3, -1000e3 + 1, 50e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = tr.transform(xx, yy)
    ds = xr.Dataset(
        coords={"y": y, "x": x, "lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2)},
        attrs={"grid": "projected"},
    )
    smp = PointSampler(ds)
    plon = np.array([-10.0, 5.0, 12.5])
    plat = np.array([55.0, 60.3, 66.0])
    # x coordinate of the points from pyproj [lib] versus the sampled x field
    px, py = tr.transform(plon, plat, direction="INVERSE")
    np.testing.assert_allclose(smp.sample(xx, plon, plat), px, atol=100.0)
    np.testing.assert_allclose(smp.sample(yy, plon, plat), py, atol=100.0)
    assert np.isnan(smp.sample(xx, np.array([100.0]), np.array([10.0])))[0]


def test_point_sampler_polar_grid_across_the_antimeridian():
    # a polar stereographic grid centred on the North Pole, whose 2-D
    # longitudes jump from 180 to -180: points on both sides of the jump and
    # near the pole are located as pyproj puts them [lib]
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=stere +lat_0=90 +lat_ts=60 +lon_0=0 +R=6371008.8")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-2500e3, 2500.1e3, 50e3)
    xx, yy = np.meshgrid(x, x)
    lon2, lat2 = tr.transform(xx, yy)
    ds = xr.Dataset(
        coords={"y": x, "x": x, "lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2)},
        attrs={"grid": "projected"},
    )
    smp = PointSampler(ds)
    plon = np.array([179.7, -179.7, 180.0, 90.0, -45.0])
    plat = np.array([72.0, 72.0, 80.0, 88.5, 65.0])
    px, py = tr.transform(plon, plat, direction="INVERSE")
    np.testing.assert_allclose(smp.sample(xx, plon, plat), px, atol=100.0)
    np.testing.assert_allclose(smp.sample(yy, plon, plat), py, atol=100.0)


def test_point_sampler_periodic_global_grid():
    lat = np.arange(-90.0, 90.01, 1.0)
    lon = np.arange(0.0, 360.0, 1.0)
    ds = xr.Dataset(coords={"lat": lat, "lon": lon})
    f = np.broadcast_to(np.cos(np.deg2rad(lon))[None, :], (lat.size, lon.size))
    smp = PointSampler(ds)
    # between 359 and 0 (=360): linear interpolation of cos [derived]
    val = smp.sample(f, np.array([-0.5, 359.5, 179.5]), np.array([10.0, 10.0, 10.0]))
    exp359 = 0.5 * (np.cos(np.deg2rad(359.0)) + 1.0)
    np.testing.assert_allclose(val[:2], [exp359, exp359], atol=1e-12)
    np.testing.assert_allclose(val[2], 0.5 * (np.cos(np.deg2rad(179.0)) - 1.0), atol=1e-12)


# --------------------------------------------------------------------------
# the whole run on an analytic translating frontal zone (needs kit.science.fronts)
# --------------------------------------------------------------------------
Z_STD = {1000.0: 110.0, 925.0: 760.0, 850.0: 1460.0, 700.0: 3010.0, 600.0: 4200.0, 500.0: 5570.0}


DPDX = 1.5  # MSLP gradient of the zone runs [Pa km-1], pushing the way the wind blows


def saturated_t_for_theta_w(theta_w, p_hpa):
    """Temperature [K] of saturated air at p with the given theta-w (inverted by table)."""
    from kit.science.thermo import wet_bulb_potential_temperature

    t_tab = np.linspace(210.0, 320.0, 2201)
    tw_tab = np.asarray(wet_bulb_potential_temperature(t_tab, t_tab, np.full_like(t_tab, p_hpa)))
    return np.interp(theta_w, tw_tab, t_tab)


def zone_dataset(
    *,
    c_ms,
    n_slope,
    v_wind,
    hemisphere=1,
    lat0=45.0,
    n_times=5,
    dt_h=3.0,
    dtheta=8.0,
    l_km=100.0,
    grid=0.25,
):
    """Frontal zone tanh in theta-w, cold side poleward, moving poleward at c_ms.

    Zone centre on a level at height z: y = c t + n_slope * z (poleward km).
    """
    lat = np.sort(hemisphere * np.arange(lat0 - 12, lat0 + 14.01, grid))
    lon = np.arange(-30.0, 10.01, grid)
    times = [hours(i * dt_h) for i in range(n_times)]
    levels = list(Z_STD)
    ds = grid_dataset(lat, lon, times, levels)
    y_km = R_KM * np.deg2rad(np.abs(lat) - lat0)
    t = np.empty((n_times, len(levels), lat.size, lon.size))
    u = np.empty_like(t)
    trough = np.empty((n_times, lat.size, lon.size))
    for i in range(n_times):
        for k, lv in enumerate(levels):
            yf = c_ms * i * dt_h * 3.6 + n_slope * Z_STD[lv] / 1e3
            tw = 284.0 - dtheta / 2 * np.tanh((y_km - yf) / l_km)
            t[i, k] = saturated_t_for_theta_w(tw, lv)[:, None]
            # the flow signature of a real front: cyclonic shear of the
            # along-front wind across the zone (either hemisphere: y is poleward)
            u[i, k] = (2.0 - 4.0 * np.tanh((y_km - yf) / l_km))[:, None]
        y_sfc = c_ms * i * dt_h * 3.6
        trough[i] = (-300.0 * np.exp(-(((y_km - y_sfc) / 200.0) ** 2)))[:, None]
    dims4 = ("time", "level", "lat", "lon")
    ds["t"] = (dims4, t)
    ds["td"] = (dims4, t.copy())
    ds["u"] = (dims4, u)
    ds["v"] = (dims4, np.full(t.shape, hemisphere * v_wind))
    ds["z"] = (
        dims4,
        np.broadcast_to(np.array(list(Z_STD.values()))[None, :, None, None], t.shape).copy(),
    )
    x_km = R_KM * np.cos(np.deg2rad(lat))[:, None] * np.deg2rad(lon + 10.0)[None, :]
    ds["mslp"] = (
        ("time", "lat", "lon"),
        np.broadcast_to(101000.0 + DPDX * np.sign(v_wind) * x_km, (n_times,) + x_km.shape)
        + trough,  # and a pressure trough along it
    )
    ds = ds.assign_coords(reference_time=np.datetime64(T0, "ns"))
    return ds


@pytest.mark.parametrize("hemisphere", [1, -1])
@pytest.mark.parametrize(
    "kind, c_ms, v_wind, n_slope", [("warm", 9.0, 13.5, 150.0), ("cold", -13.0, -13.0, 50.0)]
)
def test_analyse_translating_zone(kind, c_ms, v_wind, n_slope, hemisphere):

    ds = zone_dataset(c_ms=c_ms, n_slope=n_slope, v_wind=v_wind, hemisphere=hemisphere)
    fronts = analyse(ds).fronts
    main = [f for f in fronts if f.length_km > 1500]
    assert len(main) == ds.time.size  # one long line per valid time
    assert len({f.track for f in main}) == 1
    for f in main:
        # type right: warm where the normal wind blows toward the cold side
        assert f.kind == kind
        # [derived] the zone moves at c_ms along its normal: tracked speed
        # within 5 %
        assert f.props["speed_tracked_ms"] == pytest.approx(c_ms, rel=0.05)
        # [derived] uniform prescribed wind: normal component exact
        assert f.props["speed_wind_ms"] == pytest.approx(v_wind, abs=1e-3)
        # [derived] zone shifted n_slope * z toward the cold side: within 10 %
        assert f.props["slope_1_in"] == pytest.approx(n_slope, rel=0.10)
        assert f.props["slope_typical_1_in"] == {"warm": 150.0, "cold": 50.0}[kind]
        # [pub] Vg = |dp/dx| / (rho |f|) at the line's latitude, times 2/3 for
        # a warm front, 1 for a cold one [trade: common practice, no source]
        vg = DPDX * 1e-3 / (1.25 * abs(coriolis_parameter(float(np.mean(f.lat)))))
        factor = 2 / 3 if kind == "warm" else 1.0
        expected = factor * vg * np.sign(v_wind)
        assert f.props["speed_geostrophic_rule_ms"] == pytest.approx(expected, rel=0.01)
        # the three estimates agree within 35 %: no flag
        assert f.props["speed_flag"] == ""
    feats = json.dumps(main[0].props)  # props are JSON-clean (no NaN)
    assert "NaN" not in feats


def test_motion_table_knots():
    fr = parallel_front(45.0, 0.0)
    fr = fr.replace(
        link=TrackLink("new", None, 10.0, (10.0,)),
        motion=FrontMotion(10.0, 15.0, None, None, "mslp", ""),
    )
    df = motion_table([fr])
    # 1 kt = 1852 m / 3600 s (definition of the nautical mile); whole knots for people
    assert df["speed_tracked_kt"].iloc[0] == 19.0  # 19.44 kt
    assert df["speed_wind_kt"].iloc[0] == round(15.0 * KT_PER_MS)
    assert np.isnan(df["speed_geostrophic_rule_kt"].iloc[0])
    assert "Decision support only" in df.attrs["caution"]
    assert "vn_tracked" not in df.columns


# --------------------------------------------------------------------------
# the invented demo scenario (regression, not a science check)
# --------------------------------------------------------------------------
TRUTH = ROOT / "sample_grids" / "truth.json"


def test_doctests():
    res = doctest.testmod(motion)
    assert res.attempted >= 2 and res.failed == 0


def test_analyse_members_tracked_apart():
    # two members of one run moving at different speeds: one track each, each
    # with its own speed [derived]

    a = zone_dataset(c_ms=8.0, n_slope=150.0, v_wind=12.0, n_times=3)
    b = zone_dataset(c_ms=11.0, n_slope=150.0, v_wind=16.0, n_times=3)
    ds = xr.concat([a, b], dim=xr.DataArray([0, 1], dims="member", name="member"))
    ds = ds.transpose("member", "time", "level", "lat", "lon")
    fronts = [f for f in analyse(ds).fronts if f.length_km > 1500]
    assert sorted({f.member for f in fronts}) == [0, 1]
    for m, c in ((0, 8.0), (1, 11.0)):
        mine = [f for f in fronts if f.member == m]
        assert len(mine) == 3 and len({f.track for f in mine}) == 1
        for f in mine:
            assert f.props["speed_tracked_ms"] == pytest.approx(c, rel=0.05)
    assert len({f.track for f in fronts}) == 2


def test_tracked_speed_is_robust_to_a_stuck_end():
    # [derived] 80 % of the line moves 108 km poleward in 3 h (10 m/s), the
    # western 20 % stays put (the bend near a low centre): the length-weighted
    # median gives the speed of the bulk of the line, 10 m/s (a mean would
    # give about 8)
    a = parallel_front(45.0, 0.0)
    lon = a.lon.copy()
    lat = np.where(lon < -16.0, 45.0, lat_after(45.0, 108.0))
    b = make_front(lon, lat, 0.0, 1.0, hours(3.0))
    a, b = track_fronts([a, b])
    assert a.props["speed_tracked_ms"] == pytest.approx(10.0, rel=0.01)
    vk = np.array([np.nan if v is None else v for v in a.props["vn_tracked"]])
    assert np.nanmin(vk) == pytest.approx(0.0, abs=0.05)


# --------------------------------------------------------------------------
# the invented demo scenario: regression against sample_grids/truth.json
# (the scenario's own prescribed values, NOT a science check)
# --------------------------------------------------------------------------
SAMPLE = ROOT / "sample_grids"


@pytest.fixture(scope="module")
def sample_truth():
    return json.loads((SAMPLE / "truth.json").read_text())


@pytest.fixture(scope="module")
def sample_run_fronts(sample_truth):
    import kit

    run = sorted(sample_truth["timing_offsets_h"].keys() - {"analyses"})[-1]  # the newest run
    ds = kit.open_run(SAMPLE / sample_truth["sets"][run]["folder"])
    ds = ds.isel(time=slice(0, 9)).load()  # the first 24 h keep the test quick
    return run, analyse(ds).fronts


def test_sample_event_speeds_regression(sample_truth, sample_run_fronts):
    # [regression] invented scenario: the fronts move at prescribed normal
    # speeds (truth.json speed_earth_ms_along per valid time; the warm front toward
    # its cold side, +, the cold front toward its warm side, -): tracked
    # speed within 10 % at every valid time, one track per front
    run, fronts = sample_run_fronts
    times = sample_truth["sets"][run]["times"]
    assert {f.kind for f in fronts} == {"warm", "cold"}
    for kind, sign in (("warm", 1.0), ("cold", -1.0)):
        mine = [f for f in fronts if f.kind == kind]
        # one line per valid time of the first 24 h
        assert len(mine) == 9
        assert len({f.track for f in mine}) == 1
        for f in mine:
            key = str(np.datetime_as_string(f.valid_time, unit="s")) + "Z"
            # the front turns, so its normal speed varies along it: the line's
            # tracked speed against the truth's mean along the found line; the
            # tracked speed is a difference over the neighbouring steps, so the
            # truth's is averaged over the step and its neighbours (it jumps when
            # the occlusion starts, at +21 h)
            length = line_length_km(f.lon, f.lat)
            means = []
            for dh in (-3, 0, 3):
                near = str(np.datetime_as_string(
                    f.valid_time + np.timedelta64(dh, "h"), unit="s")) + "Z"
                if near not in times:
                    continue
                along = times[near]["speed_earth_ms_along"][kind]
                within = [v for km, v in along.items() if float(km) <= length]
                means.append(np.mean(within or list(along.values())))
            expected = sign * float(np.mean(means))
            assert f.props["speed_tracked_ms"] == pytest.approx(expected, rel=0.10), key
            # the 850 hPa wind pushes the same way as the front moves
            assert np.sign(f.props["speed_wind_ms"]) == sign
    # the fronts' own timing estimate in knots for the table
    df = motion_table(fronts)
    assert set(df["kind"]) == {"warm", "cold"}
    assert df["speed_tracked_kt"].notna().all()


def test_empty_inputs():
    assert track_fronts([]) == []
    assert speeds_three_ways([], speed_dataset(50.0)) == []
    from kit.science.structure import add_slopes

    assert add_slopes([], speed_dataset(50.0)) == []


def test_speeds_across_the_dateline():
    # a grid contiguous across 180 (150..210 E) and a front given in
    # -180..180 longitudes: the steering wind is sampled on both sides [derived]
    lat = np.arange(40.0, 60.01, 0.5)
    lon = np.arange(150.0, 210.01, 0.5)
    ds = grid_dataset(lat, lon, [T0], levels=(1000.0, 850.0))
    shape = (1, 2, lat.size, lon.size)
    dims = ("time", "level", "lat", "lon")
    # the wind's poleward component grows eastward: 10 m/s at 170 E, 12 at 190 E
    v = np.broadcast_to(10.0 + (lon - 170.0) / 10.0, shape).copy()
    ds["u"] = (dims, np.zeros(shape))
    ds["v"] = (dims, v)
    ds["z"] = (dims, np.zeros(shape))
    ds["mslp"] = (("time", "lat", "lon"), np.full((1, lat.size, lon.size), 101000.0))
    flon = np.concatenate([np.arange(170.0, 180.0, 0.25), np.arange(-180.0, -169.99, 0.25)])
    fr = make_front(flon, np.full(flon.size, 50.0), 0.0, 1.0, T0)
    [fr] = speeds_three_ways([fr], ds)
    # mean over the line 170 E..170 W of a wind linear in longitude: 11 m/s
    assert fr.props["speed_wind_ms"] == pytest.approx(11.0, abs=0.01)
    assert fr.props["speed_geostrophic_normal_ms"] == pytest.approx(0.0, abs=1e-9)


def test_analyse_on_a_projected_grid():
    # the translating, sloping theta-w zone of test_analyse_translating_zone
    # on a Lambert conformal grid (2-D lat/lon, 30 km): same answers [derived]
    import pyproj  # required: a missing one must fail

    crs = pyproj.CRS.from_proj4("+proj=lcc +lat_1=40 +lat_2=55 +lat_0=48 +lon_0=-10 +R=6371008.8")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-1500e3, 1500.1e3, 30e3)
    y = np.arange(-900e3, 1500.1e3, 30e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = tr.transform(xx, yy)
    n_times, c_ms, v_wind, n_slope = 4, 9.0, 13.5, 150.0
    levels = list(Z_STD)
    y_km = R_KM * np.deg2rad(lat2 - 45.0)
    t = np.empty((n_times, len(levels)) + xx.shape)
    u = np.empty_like(t)
    trough = np.empty((n_times,) + xx.shape)
    for i in range(n_times):
        for k, lv in enumerate(levels):
            yf = c_ms * i * 3 * 3.6 + n_slope * Z_STD[lv] / 1e3
            t[i, k] = saturated_t_for_theta_w(284.0 - 4.0 * np.tanh((y_km - yf) / 100.0), lv)
            u[i, k] = 2.0 - 4.0 * np.tanh((y_km - yf) / 100.0)  # cyclonic shear across it
        trough[i] = -300.0 * np.exp(-(((y_km - c_ms * i * 3 * 3.6) / 200.0) ** 2))
    dims = ("time", "level", "y", "x")
    x_km = R_KM * np.cos(np.deg2rad(lat2)) * np.deg2rad(lon2 + 10.0)
    ds = xr.Dataset(
        {
            "t": (dims, t),
            "td": (dims, t.copy()),
            "u": (dims, u),
            "v": (dims, np.full(t.shape, v_wind)),
            "z": (
                dims,
                np.broadcast_to(np.array(list(Z_STD.values()))[None, :, None, None], t.shape),
            ),
            "mslp": (
                ("time", "y", "x"),
                np.broadcast_to(101000.0 + DPDX * x_km, (n_times,) + xx.shape) + trough,
            ),
        },
        coords={
            "time": [hours(3 * i) for i in range(n_times)],
            "level": levels,
            "y": y,
            "x": x,
            "lat": (("y", "x"), lat2),
            "lon": (("y", "x"), lon2),
            "reference_time": np.datetime64(T0, "ns"),
        },
        attrs={"grid": "projected", "dx_m": 30e3, "dy_m": 30e3, "run": "lcc-test"},
    )
    fronts = [f for f in analyse(ds).fronts if f.length_km > 1000]
    assert len(fronts) == n_times and len({f.track for f in fronts}) == 1
    for f in fronts:
        assert f.kind == "warm"
        assert f.props["speed_tracked_ms"] == pytest.approx(c_ms, rel=0.05)
        assert f.props["speed_wind_ms"] == pytest.approx(v_wind, rel=0.01)
        assert f.props["slope_1_in"] == pytest.approx(n_slope, rel=0.10)
