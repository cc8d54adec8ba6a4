"""Tests of kit.io.sites: reading site lists and placing sites on grids."""

import numpy as np
import pytest
import xarray as xr

from kit.errors import InputError
from kit.io.sites import check_sites_on_grid, grid_position, read_sites


def write(tmp_path, text, name="sites.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def regular(lat=None, lon=None):
    lat = np.arange(40.0, 60.01, 0.5) if lat is None else lat
    lon = np.arange(-20.0, 20.01, 0.5) if lon is None else lon
    return xr.Dataset(
        {"t2m": (("lat", "lon"), np.add.outer(lat, lon))},
        coords={"lat": lat, "lon": lon},
        attrs={"run": "2027-01-14T00Z"},
    )


def test_read_sites_columns_and_wrap(tmp_path):
    p = write(
        tmp_path, "name,lat,lon,elevation_m\nBrackenholt,52.1,-3.4,112\nMorrow Fen,51.0,350.5,\n"
    )
    s = read_sites(p)
    assert list(s.columns[:4]) == ["name", "lat", "lon", "elevation_m"]
    assert s["name"].tolist() == ["Brackenholt", "Morrow Fen"]
    assert s["lon"].tolist() == [-3.4, -9.5]  # 350.5 E is 9.5 W
    assert s["elevation_m"].iloc[0] == 112.0 and np.isnan(s["elevation_m"].iloc[1])


def test_read_sites_without_elevation_and_bom(tmp_path):
    p = write(tmp_path, "\ufeffName,Lat,Lon\nA,1,2\n")
    s = read_sites(p)
    assert np.isnan(s["elevation_m"].iloc[0])


@pytest.mark.parametrize(
    "text, pattern",
    [
        ("name,lat\nA,1\n", r"no column lon"),
        ("name,lat,lon\nA,1,2\na,3,4\n", r"row 3 \(site 'a'\): duplicate site name"),
        ("name,lat,lon\nA,north,2\n", r"row 2 \(site 'A'\): latitude 'north' is not a number"),
        ("name,lat,lon\nA,91,2\n", r"row 2 \(site 'A'\): latitude 91 out of range"),
        ("name,lat,lon\nA,50,-181\n", r"longitude -181 out of range"),
        ("name,lat,lon\n,50,1\n", r"row 2: site name is blank"),
        ("name,lat,lon\nA,50\n", r"row 2: 2 fields where the header has 3"),
        ("name,lat,lon\n", r"header but no sites"),
        ("", r"site file is empty"),
        ("name,lat,lon,elevation_m\nA,50,1,12000\n", r"elevation_m 12000 out of range"),
        ("name,lat,lon\nA,nan,1\n", r"not a finite number"),
    ],
)
def test_read_sites_errors_are_one_line(tmp_path, text, pattern):
    p = write(tmp_path, text)
    with pytest.raises(InputError, match=pattern) as info:
        read_sites(p)
    assert "\n" not in str(info.value)
    assert str(p) in str(info.value)


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="site file not found"):
        read_sites(tmp_path / "nope.csv")


def test_check_sites_on_grid_and_off(tmp_path):
    ds = regular()
    s = read_sites(write(tmp_path, "name,lat,lon\nInside,50.25,1.25\nEdge,60,20\n"))
    out = check_sites_on_grid(s, ds)
    assert out["grid_row"].tolist() == pytest.approx([20.5, 40.0])
    assert out["grid_col"].tolist() == pytest.approx([42.5, 80.0])
    s = read_sites(write(tmp_path, "name,lat,lon\nInside,50,1\nFarside,35.0,1\n", "b.csv"))
    with pytest.raises(
        InputError,
        match=r"site 'Farside' \(35.000, 1.000\) lies off the grid of "
        r"2027-01-14T00Z \(lat 40.00..60.00, lon -20.00..20.00\)",
    ):
        check_sites_on_grid(s, ds)


def test_global_grid_wraps():
    """A global 0..359 grid: a site at 359.5 E / -0.5 lies in the cell that wraps to 0."""
    lon = np.arange(0.0, 360.0, 1.0)
    ds = regular(lat=np.arange(-10.0, 10.1, 1.0), lon=lon)
    r, c = grid_position(ds, 0.0, -0.5)
    assert r == pytest.approx(10.0) and c == pytest.approx(359.5)
    r, c = grid_position(ds, 0.0, 10.25)
    assert c == pytest.approx(10.25)


def test_dateline_contiguous_grid():
    ds = regular(lat=np.arange(-50.0, -30.0, 0.5), lon=np.arange(170.0, 200.01, 0.5))
    r, c = grid_position(ds, -40.0, -175.0)  # 185 E in the grid's own convention
    assert c == pytest.approx(30.0) and r == pytest.approx(20.0)
    r, c = grid_position(ds, -40.0, 160.0)
    assert np.isnan(c)


def test_projected_grid_position_matches_pyproj():
    """[lib] a Lambert conformal grid built with pyproj: the fractional position of a
    point equals the inverse projection within 1e-3 of a grid cell."""
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=lcc +lat_1=45 +lat_2=55 +lat_0=50 +lon_0=5 +R=6371000")
    tr = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-500e3, 500e3 + 1, 25e3)
    y = np.arange(-400e3, 400e3 + 1, 25e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = tr.transform(xx, yy)
    ds = xr.Dataset(
        {"t2m": (("y", "x"), xx * 0)},
        coords={"x": x, "y": y, "lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2)},
        attrs={"grid": "projected"},
    )
    px, py = 123.4e3, -210.7e3
    plon, plat = tr.transform(px, py)
    r, c = grid_position(ds, plat, plon)
    # the grid is linear in x, y; bilinear inverse of lat/lon is near-exact on a 25 km cell
    assert c == pytest.approx((px - x[0]) / 25e3, abs=2e-3)
    assert r == pytest.approx((py - y[0]) / 25e3, abs=2e-3)
    r, c = grid_position(ds, 20.0, 5.0)
    assert np.isnan(r) and np.isnan(c)
