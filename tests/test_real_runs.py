"""Fronts on real model output (tests/real_data): invariants and stated bands.

The runs are regression cases and invariants, never truth (provenance and
licences in tests/real_data/README.md):
- NCEP NAM 81-km Lambert analysis, 2018-09-17 00 UTC (GRIB2 from the cfgrib
  source archive), surface pressure and surface height included;
- the GrADS example global run, 5 x 4 degrees, five days of January 1987
  (Debian's grads package), surface pressure included.
"""

import json
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import kit
from kit.cli import main
from kit.science import fronts as F
from kit.science import geo
from kit.science.domain import below_ground, edge_mask
from kit.science.plausibility import plausibility_report

REAL = Path(__file__).resolve().parent / "real_data"
NAM = REAL / "nam_awp211_20180917T00Z.nc"
GRADS = REAL / "grads_model_19870102.nc"


@pytest.fixture(scope="module", params=[NAM, GRADS], ids=["nam-81km", "grads-global"])
def real(request):
    ds = kit.open_run(request.param)
    return ds, kit.analyse(ds)


def test_real_runs_carry_the_model_surface():
    nam, grads = kit.open_run(NAM), kit.open_run(GRADS)
    assert "ps" in nam and "zsfc" in nam and "ps" in grads
    # 850 hPa below the model surface on the NAM grid (extrapolated values there)
    bg, source = below_ground(nam.isel(time=0), 850.0)
    assert source == "surface pressure" and 0.03 < bg.mean() < 0.12


def test_no_front_below_ground_in_the_tropics_or_at_the_edge(real):
    ds, analysis = real
    s = analysis.settings
    assert analysis.fronts, "a real run gave no front at all"
    sampler = geo.PointSampler(ds)
    grid = geo.grid_of(ds)
    edge = edge_mask(grid, s.edge_buffer_grid_lengths).astype(float)
    for f in analysis.fronts:
        assert np.all(np.abs(f.lat) >= s.tropics_lat)
        bg, _ = below_ground(ds.sel(time=f.valid_time), f.level_hpa)
        j, i = sampler.index(f.lon, f.lat)
        assert np.all(sampler.sample_index(bg.astype(float), j, i, method="nearest") == 0)
        assert np.all(sampler.sample_index(edge, j, i, method="nearest") == 0)


def test_every_piece_is_long_enough_and_has_a_frontal_flow_signature(real):
    ds, analysis = real
    shortest = F.min_length_km(ds, analysis.settings)
    assert shortest == pytest.approx(max(500.0, 3 * geo.grid_length_km(ds)))
    for f in analysis.fronts:
        assert f.length_km >= shortest
        d = f.detection
        assert d.signature_share >= analysis.settings.confirm_min_share
        for share in (d.cyclonic_vorticity_share, d.cyclonic_shear_share, d.trough_share):
            assert 0.0 <= share <= 1.0
        props = f.props
        assert {"trough_share", "cyclonic_vorticity_share", "cyclonic_shear_share"} <= set(props)


def test_thresholds_are_published_on_the_regional_grid_and_quantiles_on_the_global():
    nam, grads = kit.open_run(NAM), kit.open_run(GRADS)
    s = F.FrontSettings()
    assert F.threshold_rule(F.effective_smoothing_km(nam, s), s)[0] == "published"
    assert F.threshold_rule(F.effective_smoothing_km(grads, s), s)[0] == "quantiles"
    fr = kit.analyse(grads).fronts
    assert {f.detection.thresholds_from for f in fr} == {"quantiles"}


def test_plausibility_report_within_stated_bands(real):
    # [regression] bands around the figures measured when the method was set
    # (README plausibility table); a change outside them needs a look at the maps
    ds, analysis = real
    rep = plausibility_report(ds, analysis.fronts, settings=analysis.settings)
    assert len(rep) == ds.sizes["time"]
    assert (rep["tropical_share"].fillna(0) == 0).all()
    assert (rep["below_ground_share"].fillna(0) <= 0.01).all()
    assert (rep["short_share"].fillna(0) <= 0.20).all()
    assert (rep["fronts_per_1e7_km2"] < 5).all()  # not 140 fronts on a map
    with_fronts = rep[rep["n_fronts"] > 0]
    assert len(with_fronts) >= 1
    w = with_fronts["line_km"]
    for name, low in (("trough", 0.5), ("vorticity", 0.3)):
        lift = float(np.sum(w * with_fronts[f"{name}_lift"]) / np.sum(w))
        assert lift >= low, name
    assert rep["below_ground_source"].eq("surface pressure").all()


def test_without_the_surface_the_run_is_analysed_and_the_product_says_so(tmp_path, capsys):
    ds = kit.open_run(GRADS)
    thin = ds.drop_vars(["ps"])
    path = tmp_path / "no_surface.nc"
    raw = xr.open_dataset(GRADS).drop_vars("surface_air_pressure")
    raw.to_netcdf(path)
    out = tmp_path / "fronts.geojson"
    assert main(["fronts", str(path), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "below-ground masking was not possible" in text
    props = json.loads(out.read_text())["properties"]
    assert "below-ground masking was not possible" in props["note"]
    assert props["plausibility"]["rows"][0]["below_ground_source"] == "none"
    assert kit.analyse(thin).fronts  # NaN masking only, still an analysis


def test_a_run_of_the_tropics_only_gives_an_empty_product_that_says_why(tmp_path, capsys):
    raw = xr.open_dataset(GRADS)
    lat = [n for n in raw.coords if n.startswith("lat")][0]
    tropics = raw.sel({lat: slice(-18.0, 18.0)} if raw[lat][0] < raw[lat][-1]
                      else {lat: slice(18.0, -18.0)})
    path = tmp_path / "tropics.nc"
    tropics.to_netcdf(path)
    out = tmp_path / "fronts.geojson"
    assert main(["fronts", str(path), "--out", str(out)]) == 0
    gj = json.loads(out.read_text())
    assert gj["features"] == []
    assert "equatorward of the fronts' latitude limit" in gj["properties"]["note"]
    assert "equatorward" in capsys.readouterr().out


def test_global_map_lines_never_cross_the_map(tmp_path):
    import cartopy  # noqa: F401 - required: a missing one must fail

    from kit.charts import maps

    ds = kit.open_run(GRADS)
    analysis = kit.analyse(ds)
    for t in ds["time"].values:
        fig = maps.front_map(ds, analysis.fronts, time=t)
        ax = fig.axes[0]
        x0, x1 = ax.get_xlim()
        drawn = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("frontshift-front")]
        assert drawn
        for ln in drawn:
            x = np.asarray(ln.get_xdata(), float)
            assert np.all(np.abs(np.diff(x)) < 0.25 * (x1 - x0))
        import matplotlib.pyplot as plt

        plt.close(fig)


def test_thin_ensemble_run_end_to_end(tmp_path, capsys):
    # the ERA5 10-member sample has only t and z at 850 and 500 hPa: theta
    # fronts, geostrophic winds, members kept, and the product says it is thin
    era5 = REAL / "era5_enda_members_20170101.nc"
    ds = kit.open_run(era5)
    assert ds.sizes["member"] == 10 and "td" not in ds
    assert ds["u"].attrs["derived"] == "geostrophic"
    lat = np.broadcast_to(ds["lat"].values[:, None], ds["u"].shape[-2:])
    assert np.all(np.isnan(ds["u"].values[..., np.abs(lat) < 10.0]))
    analysis = kit.analyse(ds)
    assert analysis.settings.field == "theta"
    assert {f.member for f in analysis.fronts} <= set(range(10))
    assert len({f.member for f in analysis.fronts}) >= 5
    out = tmp_path / "fronts.geojson"
    assert main(["fronts", str(era5), "--out", str(out)]) == 0
    note = json.loads(out.read_text())["properties"]["note"]
    assert "is thin" in note and "theta" in note and "geostrophic" in note
    assert "is thin" in capsys.readouterr().out
    # the site products are made too, and say the run is thin
    # (tests/test_thin_products.py checks them in detail)
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,elevation_m\nNorrin Flats,52.0,0.0,50\n")
    assert main(["arrivals", str(era5), "--sites", str(sites),
                 "--out", str(tmp_path / "a.csv")]) == 0
    assert "no humidity on pressure levels" in capsys.readouterr().out


def test_panel_opens_a_thin_run_on_theta_and_says_it_is_thin():
    import ipywidgets  # noqa: F401 - required: a missing one must fail

    from kit.ui.panels import FrontPanel

    panel = FrontPanel([REAL / "era5_enda_members_20170101.nc"])
    assert panel.field_pick.value == "theta"
    assert panel.map_image.value  # a map was drawn
    assert "thin run" in panel.message.value and "theta" in panel.message.value
