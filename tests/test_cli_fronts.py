"""Tests of ``frontshift fronts``: a tiny CF NetCDF run written here, the GeoJSON
contract of DESIGN.md (RFC 7946 FeatureCollection of LineStrings), and the
one-line ``error:`` / exit 2 rule for bad input.

The frontal zone in the file is an analytic tanh zone (not a reference value);
what is checked is the product format and the command's behaviour.
"""

import json

import numpy as np
import pytest
import xarray as xr

from kit import CAUTION
from kit.science import geo
from kit.cli import main

LEVELS = np.array([1000.0, 925.0, 850.0, 700.0, 500.0])
KAPPA = 0.2857


def write_run(
    path,
    *,
    ref="2030-01-14T00",
    shift_km=0.0,
    wind_to_cold=6.0,
    steps=2,
    contrast_k=7.0,
    empty_last=False,
):
    """A CF run: tanh theta-w zone near 50 N, 10 E, moving east 100 km per 6 h (toward
    its warm side), while the wind blows west (toward its cold side) at ``wind_to_cold``."""
    lat = np.arange(40.0, 60.01, 0.5)
    lon = np.arange(-5.0, 25.01, 0.5)
    lon2, lat2 = np.meshgrid(lon, lat)
    e, n = geo.local_east_north_km(lon2, lat2, 10.0, 50.0)
    times = np.datetime64(ref, "ns") + np.arange(steps) * np.timedelta64(6, "h")
    t = np.empty((steps, LEVELS.size) + lat2.shape)
    for it in range(steps):
        x = e - shift_km - it * 100.0
        theta = 285.0 + contrast_k * np.tanh(x / 120.0)
        for k, p in enumerate(LEVELS):
            t[it, k] = theta * (p / 1000.0) ** KAPPA
    if empty_last:
        t[-1] = np.nan  # a step that came through empty
    td = t - 2.0
    u = np.full(t.shape, -wind_to_cold)  # cold side is west: blowing west = toward cold
    # the flow signature of a real front: cyclonic shear of the along-front wind
    # and a height trough along the zone
    xs = np.stack([e - shift_km - it * 100.0 for it in range(steps)])[:, None]
    v = np.broadcast_to(5.0 * np.tanh(xs / 150.0), t.shape).copy()
    z = np.broadcast_to(
        (44330.8 * (1 - (LEVELS / 1013.25) ** 0.190263))[None, :, None, None], t.shape
    ) - 30.0 * np.exp(-((xs / 200.0) ** 2))
    dims = ("time", "isobaric", "latitude", "longitude")
    ds = xr.Dataset(
        {
            "temp": (dims, t.astype("f4"), {"standard_name": "air_temperature", "units": "K"}),
            "dewp": (
                dims,
                td.astype("f4"),
                {"standard_name": "dew_point_temperature", "units": "K"},
            ),
            "uwnd": (dims, u.astype("f4"), {"standard_name": "eastward_wind", "units": "m s-1"}),
            "vwnd": (dims, v.astype("f4"), {"standard_name": "northward_wind", "units": "m s-1"}),
            "hgt": (
                dims,
                np.array(z, "f4"),
                {"standard_name": "geopotential_height", "units": "m"},
            ),
        },
        coords={
            "time": ("time", times, {"standard_name": "time"}),
            "isobaric": ("isobaric", LEVELS, {"standard_name": "air_pressure", "units": "hPa"}),
            "latitude": ("latitude", lat, {"standard_name": "latitude", "units": "degrees_north"}),
            "longitude": (
                "longitude",
                lon,
                {"standard_name": "longitude", "units": "degrees_east"},
            ),
            "forecast_reference_time": (
                (),
                np.datetime64(ref, "ns"),
                {"standard_name": "forecast_reference_time"},
            ),
        },
        attrs={"Conventions": "CF-1.8", "title": "invented test run"},
    )
    ds.to_netcdf(path)
    return path


@pytest.fixture(scope="module")
def run_file(tmp_path_factory):
    return write_run(tmp_path_factory.mktemp("run") / "run.nc")


def test_fronts_command_writes_the_geojson_contract(run_file, tmp_path, capsys):
    out = tmp_path / "fronts.geojson"
    assert main(["fronts", str(run_file), "--out", str(out)]) == 0
    text = out.read_text()
    gj = json.loads(text)
    assert "NaN" not in text
    assert gj["type"] == "FeatureCollection" and gj["caution"] == CAUTION
    assert gj["features"], "no front found in an obvious frontal zone"
    times = set()
    for feat in gj["features"]:
        assert feat["type"] == "Feature" and feat["geometry"]["type"] == "LineString"
        coords = np.array(feat["geometry"]["coordinates"])
        assert coords.shape[1] == 2
        assert np.all(np.abs(coords[:, 0]) <= 180) and np.all(np.abs(coords[:, 1]) <= 90)
        p = feat["properties"]
        for key in (
            "kind",
            "valid_time",
            "level_hpa",
            "length_km",
            "speed_ms",
            "track",
            "run",
            "member",
        ):
            assert key in p
        assert p["kind"] == "warm" and p["level_hpa"] == 850.0
        # one speed for people (issue 16): tracked, 100 km in 6 h toward the warm side;
        # the front-normal wind is kept apart
        assert p["speed_source"] == "tracked" and p["moving_toward"] == "warm side"
        assert p["speed_ms"] == pytest.approx(-100e3 / 6 / 3600, abs=0.3)
        assert p["speed_kt"] == round(abs(p["speed_ms"]) * 3600 / 1852)
        assert p["speed_wind_ms"] == pytest.approx(6.0, abs=0.3)
        assert p["valid_time"].endswith("Z") and len(p["valid_time"]) == 20
        assert p["run"] == "2030-01-14T00Z"
        times.add(p["valid_time"])
    assert times == {"2030-01-14T00:00:00Z", "2030-01-14T06:00:00Z"}
    printed = capsys.readouterr().out
    assert "wrote" in printed and str(out) in printed and CAUTION in printed


def test_fronts_command_never_overwrites_silently(run_file, tmp_path, capsys):
    out = tmp_path / "f.geojson"
    out.write_text("earlier product")
    assert main(["fronts", str(run_file), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "already exists" in err and err.count("\n") == 1
    assert out.read_text() == "earlier product"
    assert main(["fronts", str(run_file), "--out", str(out), "--overwrite"]) == 0
    assert json.loads(out.read_text())["type"] == "FeatureCollection"


@pytest.mark.parametrize(
    "extra,match",
    [
        (["--level", "300"], "300 hPa not in the dataset"),
        (["--out-suffix"], None),
    ],
)
def test_fronts_command_bad_level_is_one_line(run_file, tmp_path, capsys, extra, match):
    if match is None:  # wrong output type
        code = main(["fronts", str(run_file), "--out", str(tmp_path / "f.csv")])
        match = "unknown file type '.csv'"
    else:
        code = main(["fronts", str(run_file), "--out", str(tmp_path / "f.geojson"), *extra])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("error: ") and match in err and err.count("\n") == 1
    assert "Traceback" not in err


def test_fronts_command_missing_run(tmp_path, capsys):
    code = main(["fronts", str(tmp_path / "nothing_here.nc"), "--out", str(tmp_path / "f.geojson")])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("error: ") and err.count("\n") == 1
    assert not (tmp_path / "f.geojson").exists()


def test_fronts_command_two_runs_and_theta(tmp_path):
    a = write_run(tmp_path / "a.nc", ref="2030-01-14T00")
    b = write_run(
        tmp_path / "b.nc", ref="2030-01-14T06", shift_km=100.0, wind_to_cold=-6.0, steps=1
    )
    out = tmp_path / "two.geojson"
    assert main(["fronts", str(a), str(b), "--field", "theta", "--out", str(out)]) == 0
    gj = json.loads(out.read_text())
    by_run = {}
    for feat in gj["features"]:
        by_run.setdefault(feat["properties"]["run"], set()).add(feat["properties"]["kind"])
        assert feat["properties"]["field"] == "theta"
    assert by_run == {"2030-01-14T00Z": {"warm"}, "2030-01-14T06Z": {"cold"}}
    assert gj["properties"]["runs"] == ["2030-01-14T00Z", "2030-01-14T06Z"]


def test_fronts_command_on_a_lambert_cf_run(tmp_path):
    """A projected run (CF grid_mapping, Lambert conformal) goes through the same path."""
    from pyproj import CRS, Transformer

    R = geo.EARTH_RADIUS_M
    crs = CRS.from_proj4(f"+proj=lcc +lat_1=45 +lat_2=55 +lat_0=50 +lon_0=10 +R={R}")
    to_ll = Transformer.from_crs(crs, f"+proj=longlat +R={R}", always_xy=True)
    dx = 25e3
    x = (np.arange(81) - 40) * dx
    y = (np.arange(71) - 35) * dx
    lon, lat = to_ll.transform(*np.meshgrid(x, y))
    e, n = geo.local_east_north_km(lon, lat, 10.0, 50.0)
    a = np.deg2rad(60.0)
    theta = 285.0 + 7.0 * np.tanh((e * np.cos(a) + n * np.sin(a)) / 120.0)
    levels = np.array([1000.0, 850.0, 700.0])
    t = np.stack([theta * (p / 1000.0) ** KAPPA for p in levels])[None]
    # toward the warm side: a cold front; with the flow signature of a real
    # front: cyclonic shear of the along-front wind and a height trough
    across = (e * np.cos(a) + n * np.sin(a))[None, None]
    along = 5.0 * np.tanh(across / 150.0)
    u = np.broadcast_to(5.0 * np.cos(a) - np.sin(a) * along, t.shape)
    v = np.broadcast_to(5.0 * np.sin(a) + np.cos(a) * along, t.shape)
    z = np.broadcast_to(
        (44330.8 * (1 - (levels / 1013.25) ** 0.190263))[None, :, None, None], t.shape
    ) - 30.0 * np.exp(-((across / 200.0) ** 2))
    dims = ("time", "pressure", "y", "x")
    gm = {"grid_mapping": "lcc"}
    ds = xr.Dataset(
        {
            "ta": (dims, t.astype("f4"), {"standard_name": "air_temperature", "units": "K", **gm}),
            "tdew": (
                dims,
                (t - 1).astype("f4"),
                {"standard_name": "dew_point_temperature", "units": "K", **gm},
            ),
            "ua": (
                dims,
                u.astype("f4"),
                {"standard_name": "eastward_wind", "units": "m s-1", **gm},
            ),
            "va": (
                dims,
                v.astype("f4"),
                {"standard_name": "northward_wind", "units": "m s-1", **gm},
            ),
            "zg": (
                dims,
                np.array(z, "f4"),
                {"standard_name": "geopotential_height", "units": "m", **gm},
            ),
            "lcc": ((), 0, crs.to_cf()),
        },
        coords={
            "time": ("time", [np.datetime64("2030-02-01T00", "ns")]),
            "pressure": ("pressure", levels, {"standard_name": "air_pressure", "units": "hPa"}),
            "y": ("y", y, {"standard_name": "projection_y_coordinate", "units": "m"}),
            "x": ("x", x, {"standard_name": "projection_x_coordinate", "units": "m"}),
        },
    )
    path = tmp_path / "lambert.nc"
    ds.to_netcdf(path)
    out = tmp_path / "lambert.geojson"
    assert main(["fronts", str(path), "--out", str(out)]) == 0
    feats = json.loads(out.read_text())["features"]
    assert feats and {f["properties"]["kind"] for f in feats} == {"cold"}
    longest = max(feats, key=lambda f: f["properties"]["length_km"])
    assert longest["properties"]["speed_ms"] == pytest.approx(-5.0, abs=0.3)
    # the line lies where the same zone lies on a regular grid: about 0.658 L plus
    # the 50 km smoothing shift warmward of the zone centre (1-D check in test_fronts)
    lon_f, lat_f = np.array(longest["geometry"]["coordinates"]).T
    e_f, n_f = geo.local_east_north_km(lon_f, lat_f, 10.0, 50.0)
    x_f = e_f * np.cos(a) + n_f * np.sin(a)
    assert 60.0 < np.median(x_f) < 140.0


def test_fronts_command_says_why_a_product_is_empty_or_thin(tmp_path, capsys):
    flat = write_run(tmp_path / "flat.nc", contrast_k=0.0)
    out = tmp_path / "flat.geojson"
    assert main(["fronts", str(flat), "--out", str(out)]) == 0
    gj = json.loads(out.read_text())
    assert gj["features"] == [] and gj["properties"]["caution"] == CAUTION
    assert "no front found on 850 hPa at any of the 2 valid times" in gj["properties"]["note"]
    assert "note: no front found" in capsys.readouterr().out

    gap = write_run(tmp_path / "gap.nc", steps=3, empty_last=True)
    out = tmp_path / "gap.geojson"
    assert main(["fronts", str(gap), "--out", str(out)]) == 0
    gj = json.loads(out.read_text())
    times = {f["properties"]["valid_time"] for f in gj["features"]}
    assert times == {"2030-01-14T00:00:00Z", "2030-01-14T06:00:00Z"}
    note = gj["properties"]["note"]
    assert "no data on 850 hPa" in note and "2030-01-14T12:00Z" in note
    assert "no front found at" not in note  # the empty step is named once, as missing data


def test_help_defaults_are_the_code_defaults(capsys):
    # issue 16: the help once gave a smoothing default that was not the code's
    from kit.science.fronts import FrontSettings

    with pytest.raises(SystemExit):
        main(["fronts", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    s = FrontSettings()
    assert f"smoothing scale [km] (default {s.smoothing_km:g}," in text
    assert f"shorter than this [km] (default {s.min_length_km:g}," in text
    assert f"under {s.min_length_grid_lengths:g} grid lengths" in text
