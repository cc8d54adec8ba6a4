"""Tests of kit.science.geo: grid lengths, gradients, smoothing, distances.

Sources beside each expected value:
[pub]  textbook spherical geometry (any text on the sphere: arc = R * angle,
       parallel length = R cos(lat) dlon, gradient in spherical coordinates);
[lib]  pyproj.Geod on a sphere of the same radius (and on WGS84), MetPy
       geospatial_gradient, scipy.ndimage.gaussian_filter as second
       implementations.
"""

import numpy as np
import pytest
import xarray as xr
from pyproj import CRS, Geod, Transformer

from kit.constants import EARTH_RADIUS_M
from kit.errors import InputError
from kit.science import geo

R = EARTH_RADIUS_M
SPHERE = Geod(a=R, b=R)
WGS84 = Geod(ellps="WGS84")


def latlon_ds(lat, lon):
    return xr.Dataset(coords={"lat": np.asarray(lat, float), "lon": np.asarray(lon, float)})


def lambert_ds(dx=25e3, nx=81, ny=65, lat0=50.0, lon0=10.0):
    crs = CRS.from_proj4(
        f"+proj=lcc +lat_1={lat0 - 5} +lat_2={lat0 + 5} +lat_0={lat0} +lon_0={lon0} +R={R}"
    )
    to_ll = Transformer.from_crs(crs, f"+proj=longlat +R={R}", always_xy=True)
    x = (np.arange(nx) - nx // 2) * dx
    y = (np.arange(ny) - ny // 2) * dx
    xx, yy = np.meshgrid(x, y)
    lon, lat = to_ll.transform(xx, yy)
    return xr.Dataset(
        coords={"y": y, "x": x, "lat": (("y", "x"), lat), "lon": (("y", "x"), lon)},
        attrs={"grid": "projected", "dx_m": dx, "dy_m": dx},
    )


# ----------------------------------------------------------------- distances [lib] pyproj
@pytest.mark.parametrize(
    "p1,p2",
    [
        ((10.0, 50.0), (-20.0, -30.0)),
        ((179.5, 10.0), (-179.5, 11.0)),
        ((0.0, 89.0), (180.0, 89.0)),
        ((5.0, 45.0), (5.01, 45.0)),
        ((-70.0, -40.0), (110.0, 40.0)),
    ],
)
def test_great_circle_and_bearing_match_pyproj_sphere(p1, p2):
    az, _, dist = SPHERE.inv(p1[0], p1[1], p2[0], p2[1])
    # [lib] pyproj Geod on a sphere of radius R: same quantity, independent code
    assert geo.great_circle_km(*p1, *p2) == pytest.approx(dist / 1000.0, rel=1e-9, abs=1e-6)
    if dist > 1.0 and dist < 0.99 * np.pi * R:
        assert geo.bearing_deg(*p1, *p2) == pytest.approx(az % 360.0, abs=1e-6)


def test_great_circle_within_half_percent_of_wgs84():
    # [lib] pyproj Geod on WGS84; the sphere is expected within ~0.5 % (flattening 1/298)
    rng = np.random.default_rng(1)
    lon1, lon2 = rng.uniform(-180, 180, (2, 200))
    lat1, lat2 = rng.uniform(-85, 85, (2, 200))
    _, _, d = WGS84.inv(lon1, lat1, lon2, lat2)
    np.testing.assert_allclose(geo.great_circle_km(lon1, lat1, lon2, lat2), d / 1000, rtol=6e-3)


def test_destination_matches_pyproj_fwd():
    lon, lat, az, dist = 170.0, -40.0, 45.0, 2000.0
    lon2, lat2, _ = SPHERE.fwd(lon, lat, az, dist * 1000)  # [lib]
    got = geo.destination(lon, lat, az, dist)
    assert got[0] == pytest.approx(lon2, abs=1e-7)
    assert got[1] == pytest.approx(lat2, abs=1e-7)
    assert -180 <= got[0] <= 180


def test_line_length_matches_pyproj_line_length():
    lon = np.array([170.0, 175.0, 179.9, 184.0, 190.0])  # contiguous across the dateline
    lat = np.array([40.0, 42.0, 45.0, 44.0, 41.0])
    # [lib] pyproj Geod.line_length on the same sphere
    assert geo.line_length_km(lon, lat) == pytest.approx(
        SPHERE.line_length(lon, lat) / 1000, rel=1e-9
    )
    assert geo.line_length_km([1.0], [2.0]) == 0.0


def test_local_plane_distances_and_round_trip():
    lon0, lat0 = -30.0, 60.0
    lon = np.array([-30.0, -20.0, -40.0, -30.0])
    lat = np.array([65.0, 60.0, 55.0, 60.0])
    e, n = geo.local_east_north_km(lon, lat, lon0, lat0)
    # [lib] azimuthal equidistant: distance from the origin is the geodesic distance
    _, _, d = SPHERE.inv(np.full(4, lon0), np.full(4, lat0), lon, lat)
    np.testing.assert_allclose(np.hypot(e, n), d / 1000, rtol=1e-9, atol=1e-9)
    assert e[0] == pytest.approx(0.0, abs=1e-9) and n[0] > 0  # due north
    assert e[1] > 0 and e[2] < 0
    lon_b, lat_b = geo.local_to_lonlat(e, n, lon0, lat0)
    np.testing.assert_allclose(lon_b, lon, atol=1e-9)
    np.testing.assert_allclose(lat_b, lat, atol=1e-9)


def test_sphere_functions_against_pyproj_geod_sphere_and_wgs84():
    """pyproj Geod as independent implementation, on the kit's sphere (radius
    kit.constants.EARTH_RADIUS_M) and on WGS84 (expected within ~0.5 %, the
    flattening 1/298 of the ellipsoid)."""
    rng = np.random.default_rng(7)
    lon1, lon2 = rng.uniform(-180, 180, (2, 300))
    lat1, lat2 = rng.uniform(-80, 80, (2, 300))
    az, _, d = SPHERE.inv(lon1, lat1, lon2, lat2)
    far = (d > 1.0) & (d < 0.99 * np.pi * R)
    # [lib] sphere: same quantity, independent code
    np.testing.assert_allclose(geo.great_circle_km(lon1, lat1, lon2, lat2), d / 1e3,
                               rtol=1e-9, atol=1e-6)
    np.testing.assert_allclose(geo.bearing_deg(lon1, lat1, lon2, lat2)[far], az[far] % 360.0,
                               atol=1e-6)
    brg, dist_km = rng.uniform(0, 360, 300), rng.uniform(0, 3000, 300)
    lon_f, lat_f, _ = SPHERE.fwd(lon1, lat1, brg, dist_km * 1e3)
    got_lon, got_lat = geo.destination(lon1, lat1, brg, dist_km)
    np.testing.assert_allclose(got_lat, lat_f, atol=1e-7)
    np.testing.assert_allclose((got_lon - lon_f + 180.0) % 360.0 - 180.0, 0.0, atol=1e-7)
    # [lib] WGS84: the sphere within ~0.5 % in distance for the same end points
    _, _, d84 = WGS84.inv(lon1, lat1, lon2, lat2)
    np.testing.assert_allclose(geo.great_circle_km(lon1, lat1, lon2, lat2), d84 / 1e3, rtol=6e-3)


def test_destination_negative_distance_and_continuous_longitude():
    # [derived] a negative distance is the same great circle the other way
    a = geo.destination(10.0, 50.0, 60.0, -500.0)
    b = geo.destination(10.0, 50.0, 240.0, 500.0)
    assert a == pytest.approx(b, abs=1e-9)
    # [lib] pyproj Geod on the sphere, east across the dateline, longitude kept continuous
    lon_f, lat_f, _ = SPHERE.fwd(179.0, 20.0, 80.0, 400e3)
    lon_c, lat_c = geo.destination(179.0, 20.0, 80.0, 400.0, wrap=False)
    assert lon_c > 180.0 and lon_c - 360.0 == pytest.approx(lon_f, abs=1e-7)
    assert lat_c == pytest.approx(lat_f, abs=1e-7)
    assert geo.direction_bearing_deg(0.0, -2.0) == pytest.approx(180.0)


def test_local_plane_broadcasts_over_origins_and_matches_pyproj_aeqd():
    # [lib] pyproj's azimuthal equidistant projection on the same sphere
    from pyproj import Proj

    lon0 = np.array([[-10.0], [5.0], [170.0]])
    lat0 = np.array([[45.0], [60.0], [-40.0]])
    lon = np.array([[-12.0, 0.0, 8.0, 175.0]])
    lat = np.array([[44.0, 50.0, 62.0, -38.0]])
    e, n = geo.local_east_north_km(lon, lat, lon0, lat0)
    assert e.shape == (3, 4)
    for k in range(3):
        proj = Proj(proj="aeqd", lon_0=lon0[k, 0], lat_0=lat0[k, 0], R=R)
        x, y = proj(lon[0], lat[0])
        np.testing.assert_allclose(e[k], x / 1e3, rtol=1e-8, atol=1e-6)
        np.testing.assert_allclose(n[k], y / 1e3, rtol=1e-8, atol=1e-6)
    back_lon, back_lat = geo.local_to_lonlat(e, n, lon0, lat0, wrap=False)
    np.testing.assert_allclose((back_lon - lon + 180.0) % 360.0 - 180.0, 0.0, atol=1e-9)
    np.testing.assert_allclose(back_lat, np.broadcast_to(lat, (3, 4)), atol=1e-9)


# ----------------------------------------------------------------- point sampler
def test_point_sampler_linear_field_regular_global_and_descending():
    # [derived] bilinear interpolation is exact for a field linear in lat and lon
    lat, lon = np.arange(30.0, 60.01, 1.0), np.arange(-20.0, 10.01, 1.0)
    ds = latlon_ds(lat, lon)
    f = 2.0 * lat[:, None] - 0.5 * lon[None, :]
    pts_lon, pts_lat = np.array([-19.5, 0.25, 9.9, 30.0]), np.array([30.5, 45.1, 59.0, 40.0])
    s = geo.PointSampler(ds)
    got = s.sample(np.stack([f, 2 * f]), pts_lon, pts_lat)
    expect = 2.0 * pts_lat - 0.5 * pts_lon
    np.testing.assert_allclose(got[0, :3], expect[:3], atol=1e-12)
    np.testing.assert_allclose(got[1, :3], 2 * expect[:3], atol=1e-12)
    assert np.isnan(got[:, 3]).all()  # off the grid
    # the same with latitude descending
    dsr = latlon_ds(lat[::-1], lon)
    np.testing.assert_allclose(geo.PointSampler(dsr).sample(f[::-1], pts_lon[:3], pts_lat[:3]),
                               expect[:3], atol=1e-12)
    # global grid: the cell between the last and first column wraps, any longitude convention
    g = latlon_ds(np.arange(-80.0, 80.1, 2.0), np.arange(-180.0, 180.0, 2.0))
    fg = np.cos(np.deg2rad(g.lon.values))[None, :] + 0 * g.lat.values[:, None]
    sg = geo.PointSampler(g)
    assert sg.periodic
    v = sg.sample(fg, [179.0, -181.0, 539.0], [0.0, 0.0, 0.0])
    # [derived] midway between 178 and -180: the mean of the two columns
    np.testing.assert_allclose(v, 0.5 * (np.cos(np.deg2rad(178.0)) - 1.0), atol=1e-12)


def test_point_sampler_projected_against_pyproj_and_nan_rules():
    # [lib] pyproj Transformer: the fractional index of a point on the Lambert grid
    ds = lambert_ds()
    to_xy = Transformer.from_crs(
        f"+proj=longlat +R={R}",
        CRS.from_proj4(f"+proj=lcc +lat_1=45 +lat_2=55 +lat_0=50 +lon_0=10 +R={R}"),
        always_xy=True,
    )
    rng = np.random.default_rng(3)
    lon, lat = rng.uniform(0.0, 20.0, 200), rng.uniform(44.0, 56.0, 200)
    j, i = geo.PointSampler(ds).index(lon, lat)
    x, y = to_xy.transform(lon, lat)
    # positional error of inverting bilinear lat/lon over 25 km cells: < 0.005 cell
    np.testing.assert_allclose(i, (x - ds.x.values[0]) / 25e3, atol=5e-3)
    np.testing.assert_allclose(j, (y - ds.y.values[0]) / 25e3, atol=5e-3)
    # [derived] NaN rules: one missing corner -> NaN, or the mean of the other three
    f = np.ones(ds.lat.shape)
    f[10, 10] = np.nan
    s = geo.PointSampler(ds)
    vals = s.sample_index(f, [10.5, 20.0], [10.5, 20.0])
    assert np.isnan(vals[0]) and vals[1] == 1.0
    assert s.sample_index(f, [10.5], [10.5], nan="skip")[0] == pytest.approx(1.0)
    assert np.isnan(s.sample_index(f, [10.4], [10.4], method="nearest")[0])  # the missing one
    assert s.sample_index(f, [10.6], [9.4], method="nearest")[0] == 1.0
    # dataset path (reads only the corners) equals the array path
    dsf = ds.assign(t=(("y", "x"), rng.normal(size=ds.lat.shape)))
    one = s.sample_dataset(dsf, lon[:7], lat[:7], nan="propagate")
    np.testing.assert_allclose(one["t"].values, s.sample(dsf["t"].values, lon[:7], lat[:7]),
                               rtol=1e-12)


# ----------------------------------------------------------------- grid lengths [pub]
def test_grid_spacing_latlon():
    ds = latlon_ds(np.arange(-60.0, 61.0, 0.5), np.arange(0.0, 30.0, 0.5))
    dx, dy = geo.grid_spacing(ds)
    lat = ds.lat.values
    # [pub] parallel arc R cos(lat) dlon, meridian arc R dlat
    np.testing.assert_allclose(dx[:, 3], R * np.cos(np.deg2rad(lat)) * np.deg2rad(0.5), rtol=1e-12)
    np.testing.assert_allclose(dy, R * np.deg2rad(0.5), rtol=1e-12)
    # [lib] the meridian step is a geodesic: pyproj agrees
    _, _, d = SPHERE.inv(0.0, 10.0, 0.0, 10.5)
    assert dy[0, 0] == pytest.approx(d, rel=1e-9)
    assert geo.grid_length_km(ds) == pytest.approx(
        np.median(np.sqrt(dx * dy)[np.abs(lat) < 60]) / 1000, rel=1e-12
    )


def test_grid_spacing_projected_and_map_factor():
    ds = lambert_ds()
    dx, dy = geo.grid_spacing(ds)
    assert np.all(dx == 25e3) and np.all(dy == 25e3)
    dx2, _ = geo.grid_spacing(ds, map_factor=np.full(dx.shape, 1.25))
    np.testing.assert_allclose(dx2, 20e3)  # physical = grid / m [pub, definition]


def test_periodic_detection():
    assert geo.is_periodic(latlon_ds([0, 1], np.arange(0, 360, 0.25)))
    assert geo.is_periodic(latlon_ds([0, 1], np.arange(-180, 180, 1.0)))
    assert not geo.is_periodic(latlon_ds([0, 1], np.arange(150, 250, 1.0)))


# ----------------------------------------------------------------- gradients
def _sphere_y(lat, lon):
    """f = cos(lat) sin(lon): grad_e = cos(lon)/R, grad_n = -sin(lat) sin(lon)/R [pub]."""
    la, lo = np.deg2rad(lat)[:, None], np.deg2rad(lon)[None, :]
    f = np.cos(la) * np.sin(lo)
    ge = np.cos(lo) / R * np.ones_like(la)
    gn = -np.sin(la) * np.sin(lo) / R
    return f, ge, gn


def test_gradient_on_global_sphere_wraps_and_is_nan_at_poles():
    lat = np.linspace(-90, 90, 181)
    lon = np.arange(0.0, 360.0, 1.0)
    ds = latlon_ds(lat, lon)
    f, ge, gn = _sphere_y(lat, lon)
    de, dn = geo.gradient(f, ds)
    inner = slice(1, -1)
    # [pub] analytic gradient on the sphere; centred differences on a 1-degree
    # grid are second order: relative error ~ (pi/180)^2/6 = 5e-5
    np.testing.assert_allclose(de[inner] * R, ge[inner] * R, atol=2e-4)
    np.testing.assert_allclose(dn[inner] * R, gn[inner] * R, atol=2e-4)
    # the seam column (lon 0) wraps: same accuracy as elsewhere
    np.testing.assert_allclose(de[inner, 0] * R, ge[inner, 0] * R, atol=2e-4)
    assert np.all(np.isnan(de[0])) and np.all(np.isnan(de[-1]))  # undefined at the poles


def test_gradient_matches_metpy_geospatial_gradient():
    import metpy.calc as mpcalc

    lat = np.arange(30.0, 60.01, 0.5)
    lon = np.arange(-20.0, 20.01, 0.5)
    f, _, _ = _sphere_y(lat, lon)
    f = f * 30.0 + np.cos(np.deg2rad(lat))[:, None] ** 2 * 10
    de, dn = geo.gradient(f, latlon_ds(lat, lon))
    from metpy.units import units

    mde, mdn = mpcalc.geospatial_gradient(
        units.Quantity(f, "K"),
        longitude=units.Quantity(lon, "degree"),
        latitude=units.Quantity(lat, "degree"),
        crs=CRS.from_proj4(f"+proj=longlat +R={R}"),
    )
    mde, mdn = mde.m_as("K/m"), mdn.m_as("K/m")
    # [lib] MetPy on the same sphere: interior agrees to the O(h^2) difference of
    # the two finite-difference schemes
    sl = (slice(1, -1), slice(1, -1))
    np.testing.assert_allclose(de[sl], np.asarray(mde)[sl], rtol=2e-3, atol=1e-10)
    np.testing.assert_allclose(dn[sl], np.asarray(mdn)[sl], rtol=2e-3, atol=1e-10)


def test_gradient_dateline_contiguous_equals_shifted():
    lat = np.arange(-10.0, 10.01, 0.5)
    a = latlon_ds(lat, np.arange(160.0, 200.01, 0.5))  # runs past 180
    b = latlon_ds(lat, np.arange(-20.0, 20.01, 0.5))
    fa, _, _ = _sphere_y(lat, a.lon.values - 180.0)
    fb, _, _ = _sphere_y(lat, b.lon.values)
    for ga, gb in zip(geo.gradient(fa, a), geo.gradient(fb, b), strict=True):
        np.testing.assert_allclose(ga, gb, rtol=1e-12, atol=1e-20)


def test_gradient_projected_is_earth_relative():
    ds = lambert_ds()
    lat, lon = ds.lat.values, ds.lon.values
    # f = latitude [deg]: north gradient 1 deg per R*pi/180 m, no east component [pub]
    inner = (slice(1, -1), slice(1, -1))  # edges are one-sided (first order)
    de, dn = (g[inner] for g in geo.gradient(lat, ds))
    lat = lat[inner]
    per_deg = R * np.pi / 180
    # tolerance: the map factor of the Lambert grid (ignored) is within 1 % here
    np.testing.assert_allclose(dn * per_deg, 1.0, atol=1.2e-2)
    np.testing.assert_allclose(de * per_deg, 0.0, atol=1e-3)
    de, dn = (g[inner] for g in geo.gradient(lon, ds))
    np.testing.assert_allclose(de * per_deg * np.cos(np.deg2rad(lat)), 1.0, atol=1.2e-2)
    np.testing.assert_allclose(dn * per_deg, 0.0, atol=1e-3)


def test_gradient_nan_aware_and_xarray_kind():
    lat = np.arange(40.0, 50.01, 0.5)
    lon = np.arange(0.0, 10.01, 0.5)
    ds = latlon_ds(lat, lon)
    f = np.broadcast_to(lon[None, :] * 2.0, (lat.size, lon.size)).copy()  # linear in lon
    f[5, 5] = np.nan
    de, _ = geo.gradient(f, ds)
    exact = 2.0 / (R * np.cos(np.deg2rad(lat)) * np.pi / 180)
    assert np.isnan(de[5, 5])
    # neighbours fall back to one-sided differences: exact for a linear field
    np.testing.assert_allclose(de[5, 4], exact[5], rtol=1e-12)
    np.testing.assert_allclose(de[5, 6], exact[5], rtol=1e-12)
    assert np.isfinite(de).sum() == de.size - 1
    da = xr.DataArray(f, dims=("lat", "lon"), coords={"lat": lat, "lon": lon}, attrs={"units": "K"})
    de_x, dn_x = geo.gradient(da, ds)
    assert isinstance(de_x, xr.DataArray) and de_x.dims == ("lat", "lon")
    assert de_x.attrs["units"] == "(K) m-1"


# ----------------------------------------------------------------- smoothing
def test_smooth_width_is_in_km_at_every_latitude():
    lat = np.arange(0.0, 70.01, 0.25)
    lon = np.arange(0.0, 40.0, 0.25)
    ds = latlon_ds(lat, lon)
    f = np.zeros((lat.size, lon.size))
    f[:, 80] = 1.0  # a meridional line: smoothing spreads it in x only
    s = geo.smooth(f, ds, 150.0)
    for row in (0, 120, 240):  # 0, 30, 60 N
        dx_km = R / 1000 * np.cos(np.deg2rad(lat[row])) * np.deg2rad(0.25)
        xk = (np.arange(lon.size) - 80) * dx_km
        w = s[row] / s[row].sum()
        # [pub] a Gaussian of standard deviation 150 km: second moment 150^2 km^2
        # (the 2 % row grouping and the finite kernel allow ~3 %)
        assert np.sqrt(np.sum(w * xk**2)) == pytest.approx(150.0, rel=3e-2)


def test_smooth_matches_scipy_on_uniform_grid_and_keeps_nan():
    from scipy import ndimage

    ds = lambert_ds(dx=20e3, nx=61, ny=51)
    rng = np.random.default_rng(0)
    f = rng.normal(size=(51, 61))
    s = geo.smooth(f, ds, 60.0)
    # [lib] scipy.ndimage.gaussian_filter, sigma = 60 km / 20 km = 3 points, with
    # the open edges normalised by the filtered weight (zero padding)
    ones = np.ones_like(f)
    ref = ndimage.gaussian_filter(f, 3.0, mode="constant", truncate=3.5) / ndimage.gaussian_filter(
        ones, 3.0, mode="constant", truncate=3.5
    )
    np.testing.assert_allclose(s, ref, rtol=1e-10, atol=1e-12)
    g = f.copy()
    g[10:14, 20:25] = np.nan
    sg = geo.smooth(g, ds, 60.0)
    assert np.isnan(sg[10:14, 20:25]).all() and np.isfinite(sg).sum() == g.size - 20
    # far from the gap nothing changes
    np.testing.assert_allclose(sg[40:, 45:], s[40:, 45:], atol=1e-9)
    # a constant field stays constant next to the gap and at the edges
    c = np.where(np.isnan(g), np.nan, 7.0)
    np.testing.assert_allclose(geo.smooth(c, ds, 60.0)[np.isfinite(g)], 7.0, rtol=1e-12)


def test_smooth_periodic_wraps():
    lat = np.arange(-30.0, 30.01, 1.0)
    lon = np.arange(0.0, 360.0, 1.0)
    f = np.zeros((lat.size, lon.size))
    f[:, 0] = 1.0
    s = geo.smooth(f, latlon_ds(lat, lon), 300.0)
    np.testing.assert_allclose(s[:, 1], s[:, -1], rtol=1e-12)  # symmetric across the seam
    np.testing.assert_allclose(s.sum(axis=1), 1.0, rtol=1e-9)  # nothing lost at the seam


# ----------------------------------------------------------------- bad input
@pytest.mark.parametrize(
    "ds,match",
    [
        (xr.Dataset(coords={"lat": [0.0, 1.0]}), "no 'lon' coordinate"),
        (latlon_ds([0.0, 1.0], [0.0, 2.0, 1.0]), "not monotonic"),
        (latlon_ds([0.0, 95.0], [0.0, 1.0]), "out of range"),
        (
            xr.Dataset(
                coords={
                    "lat": (("y", "x"), np.zeros((2, 2))),
                    "lon": (("y", "x"), np.zeros((2, 2))),
                },
                attrs={"grid": "projected"},
            ),
            "without grid lengths",
        ),
    ],
)
def test_bad_grids_raise_one_line(ds, match):
    with pytest.raises(InputError, match=match) as exc:
        geo.grid_spacing(ds)
    assert "\n" not in str(exc.value)


def test_bad_field_and_scale():
    ds = latlon_ds([0.0, 1.0, 2.0], [0.0, 1.0])
    with pytest.raises(InputError, match="grid shape"):
        geo.gradient(np.zeros((2, 2)), ds)
    with pytest.raises(InputError, match="scale_km"):
        geo.smooth(np.zeros((3, 2)), ds, -5)
