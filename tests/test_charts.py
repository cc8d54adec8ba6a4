"""Charts by content: stamp, projection choice, WMO symbols, coastlines, isobars, keys.

Figures are checked through their artists and texts, never "it did not raise".
The run drawn is invented (tests/charts_synthetic.py); it is only material to
draw, never a reference value.
"""

import importlib
import sys

import matplotlib
import numpy as np
import pandas as pd
import pytest

matplotlib.use("Agg")

from charts_synthetic import make_run  # noqa: E402
from metpy.plots import ColdFront, StationaryFront, WarmFront  # noqa: E402

from kit import CAUTION  # noqa: E402
from kit.charts import maps, style  # noqa: E402
from kit.errors import InputError  # noqa: E402
from kit.model import Front  # noqa: E402

SITES = pd.DataFrame({"name": ["Harrowby Field", "Kestrel Point", "Sallow Cross"],
                      "lat": [50.2, 55.0, 47.5], "lon": [-5.0, 2.0, -12.0]})


@pytest.fixture(scope="module")
def run():
    return make_run()


@pytest.fixture(scope="module")
def fronts(run):
    from kit.science.fronts import find_fronts

    found = find_fronts(run, level=850.0)
    assert found, "the invented run must hold fronts to draw"
    return found


def _front(kind, lon, lat, normal=(0.0, 1.0), t="2031-02-03T12:00"):
    n = len(lon)
    return Front(lon=np.asarray(lon, float), lat=np.asarray(lat, float), kind=kind,
                 valid_time=np.datetime64(t, "ns"), level_hpa=850.0, tfp=np.ones(n),
                 grad=np.ones(n), normal_east=np.full(n, normal[0]),
                 normal_north=np.full(n, normal[1]), vn=np.full(n, 5.0), speed_ms=5.0,
                 length_km=500.0, run="2031-02-03T00Z")


# --- style ----------------------------------------------------------------------------------

def test_stamp_header_and_footer():
    fig, ax = style.new_figure()
    ax.plot([0, 1], [0, 1])
    texts = style.stamp(fig, run="2031-02-03T00Z", valid_time=np.datetime64("2031-02-03T12:00"),
                        lead_h=12, source="demo source", extra="Test product")
    title = texts["title"].get_text()
    assert "2031-02-03T00Z" in title
    assert "Mon 03 Feb 2031 12:00 UTC" in title  # 3 Feb 2031 is a Monday [calendar]
    assert "T+12 h" in title
    assert texts["caution"].get_text() == CAUTION
    assert texts["source"].get_text() == "Source: demo source"
    # stamping again replaces, never duplicates
    style.stamp(fig, run="2031-02-03T12Z", valid_time="2031-02-04T00:00Z", lead_h=12,
                source="x")
    all_text = style.stamp_texts(fig)
    assert sum(CAUTION in t for t in all_text) == 1
    assert not any("2031-02-03T00Z" in t for t in all_text)


def test_stamp_lead_and_range_formats():
    assert style.format_lead(0) == "T+0 h"
    assert style.format_lead(-3) == "T-3 h"
    assert style.format_lead(7.5) == "T+7.5 h"
    assert style.format_lead((0, 48)) == "T+0 h to +48 h"
    fig, _ = style.new_figure()
    texts = style.stamp(fig, run="r", valid_time=("2031-02-03T00", "2031-02-05T00"),
                        lead_h=(0, 48), source="s")
    assert "to Wed 05 Feb 2031 00:00 UTC" in texts["title"].get_text()


def test_stamp_bad_input_is_one_line():
    fig, _ = style.new_figure()
    with pytest.raises(InputError) as err:
        style.stamp(fig, run="r", valid_time="not a time", lead_h=0, source="s")
    assert "\n" not in str(err.value) and "valid_time" in str(err.value)
    with pytest.raises(InputError):
        style.stamp(fig, run="", valid_time="2031-01-01", lead_h=0, source="s")
    with pytest.raises(InputError):
        style.new_figure(figsize=(4, 1))


def test_source_text_shortens_step_lists():
    files = ", ".join(f"/data/runs/r1/step_{h:03d}.nc" for h in range(0, 49, 3))
    assert style.source_text(files) == "r1/step_000.nc ... step_048.nc (17 files)"


@pytest.mark.parametrize(
    ("extent", "kind", "lon0"),
    [((-35.0, 25.0, 35.0, 65.0), "LambertConformal", -5.0),
     ((150.0, 215.0, -65.0, -35.0), "LambertConformal", -177.5),
     ((100.0, 140.0, -10.0, 20.0), "PlateCarree", 120.0),
     ((-180.0, 180.0, 60.0, 90.0), "NorthPolarStereo", 0.0)],
)
def test_map_projection_fits_domain(extent, kind, lon0):
    proj = style.map_projection(extent)
    assert type(proj).__name__ == kind
    params = proj.proj4_params
    assert np.isclose(params.get("lon_0", params.get("pm", 0.0)), lon0, atol=1e-6)
    if kind == "LambertConformal":
        # standard parallels inside the domain, on the domain's hemisphere
        lat1, lat2 = params["lat_1"], params["lat_2"]
        assert extent[2] < lat1 < extent[3] and extent[2] < lat2 < extent[3]


def test_charts_missing_package_message(monkeypatch):
    import kit.charts as charts

    real = importlib.import_module

    def fake(name, *args, **kwargs):
        if name == "cartopy":
            raise ImportError("No module named 'cartopy'")
        return real(name, *args, **kwargs)

    monkeypatch.setattr(importlib, "import_module", fake)
    monkeypatch.delitem(sys.modules, "kit.charts.maps", raising=False)
    with pytest.raises(ImportError) as err:
        charts.__getattr__("maps")
    msg = str(err.value)
    assert "\n" not in msg and "pip install cartopy" in msg


# --- WMO symbol side ------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("kind", "reversed_"),
    # line drawn west->east, cold air to the north: MetPy puts symbols on the left (north).
    # WMO: warm-front semicircles point to the cold air (north: keep the order); cold-front
    # and quasi-stationary triangles point to the warm air (south: reverse) [pub: WMO symbols]
    [("warm", False), ("cold", True), ("quasi-stationary", True)],
)
def test_symbol_side(kind, reversed_):
    f = _front(kind, [-10.0, -5.0, 0.0, 5.0], [50.0, 50.0, 50.0, 50.0], normal=(0.0, 1.0))
    lon, _ = maps.symbol_side(f)
    assert (lon[0] > lon[-1]) == reversed_


# --- maps -----------------------------------------------------------------------------------

def _draw(fig):
    fig.canvas.draw()
    return fig


def test_front_map_content(run, fronts):
    valid = run["time"].values[2]
    fig = _draw(maps.front_map(run, fronts, time=valid, sites=SITES))
    texts = style.stamp_texts(fig)
    title = next(t for t in fig.texts if t.get_gid() == "frontshift-title").get_text()
    assert "Run 2031-02-03T00Z" in title and "12:00 UTC" in title and "T+12 h" in title
    assert CAUTION in texts
    assert any(t.startswith("Source: synthetic test run") for t in texts)
    ax = fig.axes[0]
    # fronts drawn with the WMO path effects, one line per front at that time
    at_time = [f for f in fronts if f.valid_time == valid]
    lines = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("frontshift-front-")]
    assert len(lines) == len(at_time) > 0
    effect = {"cold": ColdFront, "warm": WarmFront, "quasi-stationary": StationaryFront}
    for ln in lines:
        kind = ln.get_gid().replace("frontshift-front-", "")
        assert any(isinstance(pe, effect[kind]) for pe in ln.get_path_effects())
    # coastlines: feature artists with geometry after drawing
    from cartopy.mpl.feature_artist import FeatureArtist

    feats = [a for a in ax.get_children() if isinstance(a, FeatureArtist)]
    assert feats and sum(len(a.get_paths()) for a in feats) > 0
    # isobars every 4 hPa, labelled with whole hPa
    cs = next(c for c in ax.collections if c.get_gid() == "frontshift-isobars")
    assert np.allclose(np.diff(cs.levels), 4.0)
    assert np.allclose(cs.levels % 4.0, 0.0)
    labels = [t.get_text() for t in cs.labelTexts]
    assert labels and all(int(t) % 4 == 0 for t in labels)
    # sites marked and named
    for name in SITES["name"]:
        assert name in texts
    # colour key names the field, level and unit
    assert any("at 850 hPa [\u00b0C]" in t for t in texts)
    # graticule labelled
    fig.canvas.draw()
    gl = ax._frontshift_gridliner
    shown = [a.get_text() for a in gl.bottom_label_artists + gl.left_label_artists
             if a.get_visible()]
    assert any(t.endswith("\u00b0N") for t in shown) and any("\u00b0" in t for t in shown)


def test_front_map_bad_time_is_one_line(run, fronts):
    with pytest.raises(InputError) as err:
        maps.front_map(run, fronts, time="2031-03-01T00:00")
    assert "\n" not in str(err.value) and "not a valid time" in str(err.value)
    with pytest.raises(InputError):
        maps.front_map(run, fronts, time=run["time"].values[0], field="humidity")


def test_front_map_southern_dateline():
    south = make_run(lat0=-65.0, lat1=-35.0, lon0=150.0, lon1=215.0, south=True,
                     hours=(0, 12))
    fig = _draw(maps.front_map(south, [], time=south["time"].values[1]))
    ax = fig.axes[0]
    assert type(ax.projection).__name__ == "LambertConformal"
    assert ax.projection.proj4_params["lat_1"] < 0
    from cartopy.mpl.feature_artist import FeatureArtist

    feats = [a for a in ax.get_children() if isinstance(a, FeatureArtist)]
    assert sum(len(a.get_paths()) for a in feats) > 0  # New Zealand's coast is in the domain
    assert "no fronts found" in " ".join(style.stamp_texts(fig))


def test_fronts_through_time_panels(run, fronts):
    fig = _draw(maps.fronts_through_time(run, fronts, sites=SITES, max_panels=9))
    maps_drawn = [ax for ax in fig.axes if hasattr(ax, "projection") and ax.get_title(loc="left")]
    assert len(maps_drawn) == run.sizes["time"]  # 5 times, all shown
    assert maps_drawn[0].get_title(loc="left").startswith("T+0 h")
    assert maps_drawn[-1].get_title(loc="left").startswith("T+24 h")
    n_lines = sum(1 for ax in maps_drawn for ln in ax.lines
                  if (ln.get_gid() or "").startswith("frontshift-front-"))
    assert n_lines == len(fronts)
    assert CAUTION in style.stamp_texts(fig)


def test_fronts_overview_tracks(run, fronts):
    from kit.science.motion import track_fronts

    tracked = track_fronts(fronts)
    fig = _draw(maps.fronts_overview(run, tracked, sites=SITES))
    ax = fig.axes[0]
    lines = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("frontshift-track-")]
    assert len(lines) == len(tracked)
    # colour follows lead time: the first and last lines differ in colour
    first = min(tracked, key=lambda f: f.valid_time)
    colours = {tuple(np.round(ln.get_color(), 3)) if not isinstance(ln.get_color(), str)
               else ln.get_color() for ln in lines}
    assert len(colours) >= 2 and first is not None
    track_ids = {f"#{f.track}" for f in tracked if f.track is not None}
    assert track_ids <= set(style.stamp_texts(fig))
    assert any("lead time [h]" in t for t in style.stamp_texts(fig))


def test_map_series_redraws_weather_only(run, fronts):
    series = maps.MapSeries(run, sites=SITES)
    t0, t1 = run["time"].values[0], run["time"].values[2]
    png0 = series.draw(t0, fronts)
    overlay = series._overlay
    png1 = series.draw(t1, fronts)
    assert png0[:8] == png1[:8] == b"\x89PNG\r\n\x1a\n" and png0 != png1
    assert series._overlay is overlay  # coast, graticule and keys rendered once
    title = next(t for t in series.fig.texts if t.get_gid() == "frontshift-title").get_text()
    assert "12:00 UTC" in title and "T+12 h" in title
    lines = [ln for ln in series.ax.lines if (ln.get_gid() or "").startswith("frontshift-front")]
    assert len(lines) == sum(f.valid_time == t1 for f in fronts)  # only this time's fronts
    assert CAUTION in style.stamp_texts(series.fig)
    # the same colour levels at every time
    levels = series.levels.copy()
    series.draw(t0, fronts)
    np.testing.assert_array_equal(series.levels, levels)
