"""Flow signature, domain masks and line joining (kit.science.signature, domain, fronts).

[lib] MetPy's ``vorticity`` is an independent implementation of relative
vorticity on a latitude/longitude grid (spherical metric terms included).
[derived] solid-body and shear flows have known vorticity signs.
"""

import numpy as np
import pytest
import xarray as xr

from kit.science import fronts as F
from kit.science import geo
from kit.science.domain import below_ground, dilate, edge_mask, tropics_mask
from kit.science.signature import (
    FlowFields,
    baseline_points,
    relative_vorticity_np,
    signature_at,
)


def grid_ds(lat, lon):
    return xr.Dataset(coords={"lat": np.asarray(lat, float), "lon": np.asarray(lon, float)})


def test_relative_vorticity_against_metpy():
    import metpy.calc as mpcalc  # required: a missing one must fail
    from metpy.units import units

    lat = np.arange(30.0, 70.01, 1.0)
    lon = np.arange(-40.0, 40.01, 1.0)
    lo, la = np.meshgrid(lon, lat)
    u = 10 * np.cos(np.deg2rad(2 * la)) + 3 * np.sin(np.deg2rad(3 * lo))
    v = 5 * np.sin(np.deg2rad(4 * lo)) * np.cos(np.deg2rad(la))
    ds = grid_ds(lat, lon)
    mine = relative_vorticity_np(u, v, geo.grid_of(ds))
    da_u = xr.DataArray(u, coords={"lat": lat, "lon": lon}, dims=("lat", "lon"))
    da_v = xr.DataArray(v, coords={"lat": lat, "lon": lon}, dims=("lat", "lon"))
    ref = mpcalc.vorticity(
        da_u.metpy.quantify() * units("m/s") / units(""),
        da_v.metpy.quantify() * units("m/s") / units(""),
        latitude=da_u["lat"], longitude=da_u["lon"],
    )
    ref = np.asarray(ref.metpy.dequantify().values, float)
    inner = (slice(2, -2), slice(2, -2))
    scale = np.nanmax(np.abs(ref[inner]))
    assert np.nanmax(np.abs(mine[inner] - ref[inner])) < 0.02 * scale


@pytest.mark.parametrize("hemi", [1, -1])
def test_signature_of_a_shear_line_with_a_trough(hemi):
    # an east-west front at 50 N (or S), cold side poleward; the along-front
    # (eastward) wind falls poleward: cyclonic shear in either hemisphere when
    # it is u = -hemi * tanh(y); a pressure minimum on the line
    lat = np.sort(hemi * np.arange(35.0, 65.01, 0.5))
    lon = np.arange(-30.0, 30.01, 0.5)
    lo, la = np.meshgrid(lon, lat)
    y = (np.abs(la) - 50.0) / 2.0
    u = -4.0 * np.tanh(y) * hemi * hemi  # falls poleward, in both hemispheres
    v = np.zeros_like(u)
    p = 101000.0 - 500.0 * np.exp(-(y**2))
    ds = grid_ds(lat, lon)
    grid = geo.grid_of(ds)
    flow = FlowFields(u, v, p, "mslp", grid, 50.0, geo.PointSampler(ds))
    pts_lon = np.linspace(-10, 10, 5)
    pts_lat = np.full(5, hemi * 50.0)
    sig = signature_at(flow, pts_lon, pts_lat, np.zeros(5), np.full(5, float(hemi)))
    assert sig["valid"].all() and sig["trough"].all()
    assert sig["shear"].all() and sig["vorticity"].all()
    # the same line with the shear reversed is anticyclonic
    flow2 = FlowFields(-u, v, -p + 2 * 101000.0, "mslp", grid, 50.0, geo.PointSampler(ds))
    sig2 = signature_at(flow2, pts_lon, pts_lat, np.zeros(5), np.full(5, float(hemi)))
    assert not sig2["shear"].any() and not sig2["vorticity"].any() and not sig2["trough"].any()


def test_baseline_points_follow_the_vertex_gradient_distribution():
    rng = np.random.default_rng(1)
    grad = np.tile(np.linspace(0, 1, 100), (50, 1))
    allowed = np.ones_like(grad, bool)
    vertex = np.linspace(0.6, 0.9, 200)
    pick = baseline_points(grad, allowed, np.ones_like(grad), vertex, rng, n=500)
    g = grad.ravel()[pick]
    assert pick.size >= 400 and g.min() >= 0.59 and g.max() <= 0.91
    assert np.median(g) == pytest.approx(0.75, abs=0.03)
    assert baseline_points(grad, ~allowed, np.ones_like(grad), [0.5], rng).size == 0


def test_domain_masks():
    ds = grid_ds(np.arange(-30.0, 30.1, 5.0), np.arange(0.0, 355.1, 5.0))
    grid = geo.grid_of(ds)
    assert grid.periodic
    trop = tropics_mask(grid, 25.0)
    assert trop[:, 0].tolist() == [False, False] + [True] * 9 + [False, False]
    assert not tropics_mask(grid, 0).any()
    e = edge_mask(grid, 2)
    assert e[:2].all() and e[-2:].all() and not e[2:-2].any()  # no edge across the seam
    m = np.zeros((5, 5), bool)
    m[2, 2] = True
    assert dilate(m, 1).sum() == 9
    run = xr.Dataset(
        {"ps": (("lat", "lon"), np.full((2, 2), 84000.0)),
         "z": (("level", "lat", "lon"), np.full((1, 2, 2), 1500.0))},
        coords={"level": [850.0], "lat": [40.0, 41.0], "lon": [0.0, 1.0]},
    )
    bg, src = below_ground(run, 850.0, margin_hpa=25.0)
    assert src == "surface pressure" and bg.all()  # 840 hPa < 850 + 25
    bg, _ = below_ground(run, 850.0)
    assert bg.all()  # 840 < 850: below the ground itself
    run2 = run.drop_vars("ps").assign(zsfc=(("lat", "lon"), np.full((2, 2), 1400.0)))
    bg, src = below_ground(run2, 850.0, margin_m=250.0)
    assert src == "surface height" and bg.all()  # 1500 < 1400 + 250
    assert below_ground(run2.drop_vars("zsfc"), 850.0) == (None, "none")


def test_join_lines_joins_a_broken_front_and_not_a_crossing_one():
    a = (np.arange(0.0, 10.0), np.zeros(10))
    b = (np.arange(10.5, 20.0), np.zeros(10))  # 1.5 cells further on, same direction
    c = (np.full(5, 25.0), np.arange(-2.0, 3.0))  # far away
    joined = F.join_lines([a, c, b], 2.0)
    assert len(joined) == 2
    longest = max(joined, key=lambda xy: xy[0].size)
    assert longest[0].size == 20 and np.all(np.diff(longest[0]) > 0)
    # an end that turns back (a hairpin) is not joined
    d = (np.arange(9.0, -1.0, -1.0) + 0.0, np.full(10, 1.0))
    assert len(F.join_lines([a, d], 2.0)) == 2
    # across the seam of a periodic grid of 40 columns
    e = (np.arange(30.0, 39.5), np.zeros(10))
    f = (np.arange(0.5, 8.0), np.zeros(8))
    (one,) = F.join_lines([e, f], 2.0, nx=40)
    assert np.all(np.diff(one[0]) > 0) and one[0][-1] > 40
