"""Offline coastlines: bundled files, no network, geometry drawn on the map."""

import socket
import urllib.request

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

import cartopy.crs as ccrs  # noqa: E402
import cartopy.feature as cfeature  # noqa: E402
import shapely  # noqa: E402

from kit.charts import coast  # noqa: E402
from kit.errors import InputError  # noqa: E402


@pytest.fixture
def no_network(monkeypatch):
    """Any attempt to open a connection fails the test loudly."""
    calls = []

    def refuse(*args, **kwargs):
        calls.append(args)
        raise AssertionError("network access attempted while drawing a map")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(urllib.request, "urlopen", refuse)
    return calls


def test_bundled_files_present_and_small():
    total = 0
    for name in coast.BUNDLED:
        path = coast.bundled_path(name)
        for suffix in (".shp", ".shx", ".dbf", ".prj"):
            assert path.with_suffix(suffix).exists()
        total += sum(path.with_suffix(s).stat().st_size for s in (".shp", ".shx", ".dbf"))
    assert total < 1_000_000  # bundled set stays small (bytes)


def test_unknown_layer_is_one_line_error():
    with pytest.raises(InputError) as err:
        coast.bundled_path("rivers")
    assert "\n" not in str(err.value) and "coastline" in str(err.value)


def test_coastline_geometry_matches_known_land():
    # [trade] land/sea facts any atlas shows: Iceland (64.1 N, 21.9 W) and
    # central Australia (25 S, 134 E) are land; 45 N 30 W (mid-Atlantic) is sea.
    land = shapely.union_all(coast.coast_geometries("land"))
    assert land.contains(shapely.Point(-18.5, 64.9))
    assert land.contains(shapely.Point(134.0, -25.0))
    assert not land.contains(shapely.Point(-30.0, 45.0))
    # coastline lies on the land boundary (within rounding of 1e-4 deg)
    lines = shapely.union_all(coast.coast_geometries("coastline"))
    assert lines.length > 1000.0  # [degrees of arc] the world's 110 m coastline
    assert land.boundary.buffer(1e-3).contains(lines)
    # no artificial edges along the dateline or the South Pole
    coords = np.concatenate([np.asarray(g.coords) for g in
                             getattr(lines, "geoms", [lines])])
    assert not np.any(coords[:, 1] < -89.9)
    # land borders are not coastline: under 1 % of their length runs along a coast
    borders = shapely.union_all(coast.coast_geometries("borders"))
    assert borders.intersection(lines.buffer(0.01)).length < 0.01 * borders.length


@pytest.mark.parametrize(
    "extent",
    [(-40.0, 20.0, 35.0, 70.0), (150.0, 215.0, -55.0, -25.0), (100.0, 140.0, -10.0, 20.0)],
    ids=["north-atlantic", "south-pacific-dateline", "tropics"],
)
def test_map_renders_offline_with_coastline_geometry(no_network, extent):
    from kit.charts.style import map_projection, new_figure

    fig, ax = new_figure(projection=map_projection(extent))
    ax.set_extent(extent, ccrs.PlateCarree())
    artists = coast.add_coastlines(ax, land=True)
    # cartopy's own feature must also resolve offline (our downloader)
    ax.add_feature(cfeature.COASTLINE, linewidth=0.3)
    fig.canvas.draw()
    assert no_network == []
    for name in ("coastline", "borders", "land"):
        paths = artists[name].get_paths()
        assert len(paths) > 0, name
        assert sum(len(p.vertices) for p in paths) > 20
    geoms = list(artists["coastline"]._feature.intersecting_geometries(
        ax.get_extent(ccrs.PlateCarree())))
    assert geoms


def test_unbundled_layer_never_downloads(no_network):
    from cartopy.io import shapereader

    coast.use_offline_cartopy()
    with pytest.raises(InputError, match="never download"):
        shapereader.natural_earth("50m", "physical", "rivers_lake_centerlines")
    assert no_network == []
