"""The ``frontshift section`` command: products by suffix, errors, no silent overwrite.

The run is a small invented sloping frontal zone (tests/test_sections.py
builds the fields) written as CF NetCDF steps, so the command goes through
the real loader, front finder, section and export.
"""

import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import kit
from kit.cli import main

sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_sections import make_run, sloping_front_fields  # noqa: E402

_CF = {"t": ("air_temperature", "K"), "td": ("dew_point_temperature", "K"),
       "u": ("eastward_wind", "m s-1"), "v": ("northward_wind", "m s-1"),
       "z": ("geopotential_height", "m")}


@pytest.fixture(scope="module")
def event(tmp_path_factory):
    root = tmp_path_factory.mktemp("event")
    ds = make_run(sloping_front_fields(150.0), np.arange(38.0, 62.01, 0.5),
                  np.arange(-25.0, 5.01, 0.5))
    for name, (std, unit) in _CF.items():
        ds[name].attrs = {"standard_name": std, "units": unit}
    ds["level"].attrs = {"units": "hPa", "standard_name": "air_pressure"}
    ds = ds.rename(reference_time="forecast_reference_time")
    ds["forecast_reference_time"].attrs["standard_name"] = "forecast_reference_time"
    runs = root / "runs" / "r1"
    runs.mkdir(parents=True)
    for i in range(ds.sizes["time"]):
        ds.isel(time=[i]).to_netcdf(runs / f"step_{i:03d}.nc")
    (root / "sites.csv").write_text(
        "name,lat,lon,elevation_m\nHarrowmere,50.5,-10.0,20\nCaldstone Point,47.0,-12.0,5\n")
    return root


def _run(argv, capsys):
    rc = main(argv)
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf", ".nc"])
def test_products_by_suffix(event, tmp_path, capsys, suffix):
    out = tmp_path / f"section{suffix}"
    rc, so, se = _run(["section", str(event / "runs" / "r1"), "--site", "Harrowmere",
                       "--time", "2027-01-14T03:00Z", "--out", str(out)], capsys)
    assert rc == 0, se
    assert "Harrowmere" in so and str(out) in so
    data = out.read_bytes()
    if suffix == ".png":
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
    elif suffix == ".svg":
        text = data.decode()
        for gid in ("frontshift-caution", "frontshift-title", "pv2", "frontal-surface", "site"):
            assert f'id="{gid}' in text, gid
    elif suffix == ".pdf":
        from pypdf import PdfReader

        text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(out).pages)
        assert "Decision support only" in text and "2027-01-13T18Z" in text
    else:
        sec = xr.open_dataset(out)
        assert sec.attrs["caution"] == kit.CAUTION
        assert sec.attrs["Conventions"].startswith("CF-")
        assert sec.attrs["valid_time"] == "2027-01-14T03:00Z"
        assert sec.attrs["site_name"] == "Harrowmere"
        assert sec["theta_w"].dims == ("level", "distance")
        assert sec["level"].attrs["units"] == "hPa" and sec["distance"].attrs["units"] == "km"
        assert sec["t"].attrs["standard_name"] == "air_temperature"
        # zone built at 1:150 (invented field), recovered within 10 %
        np.testing.assert_allclose(sec.attrs["frontal_slope_1_in"], 150.0, rtol=0.10)
        sec.close()


def test_unknown_site_lists_the_known_ones(event, tmp_path, capsys):
    rc, _, se = _run(["section", str(event / "runs" / "r1"), "--site", "Nowhere",
                      "--time", "2027-01-14T03:00Z", "--out", str(tmp_path / "x.png")], capsys)
    assert rc == 2
    lines = se.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: --site Nowhere")
    assert "Harrowmere" in lines[0] and "Caldstone Point" in lines[0]
    assert "Traceback" not in se
    assert not (tmp_path / "x.png").exists()


def test_time_not_in_the_run(event, tmp_path, capsys):
    rc, _, se = _run(["section", str(event / "runs" / "r1"), "--site", "harrowmere",
                      "--time", "2027-01-15T00:00Z", "--out", str(tmp_path / "x.png")], capsys)
    assert rc == 2
    line = se.strip()
    assert "\n" not in line and "2027-01-14T00:00Z" in line and "2027-01-14T03:00Z" in line


def test_existing_file_is_not_overwritten(event, tmp_path, capsys):
    out = tmp_path / "keep.png"
    out.write_bytes(b"earlier product")
    argv = ["section", str(event / "runs" / "r1"), "--site", "Harrowmere",
            "--time", "2027-01-14T03:00Z", "--out", str(out)]
    rc, _, se = _run(argv, capsys)
    assert rc == 2 and "already exists" in se and "--overwrite" in se
    assert out.read_bytes() == b"earlier product"
    rc, _, se = _run(argv + ["--overwrite"], capsys)
    assert rc == 0, se
    assert out.read_bytes()[:4] == b"\x89PNG"


def test_sites_file_found_above_the_run_or_required(event, tmp_path, capsys):
    # found: the default run folder is runs/r1, sites.csv sits two folders up (above)
    # not found: a run copied elsewhere without a sites.csv
    lone = tmp_path / "lone"
    lone.mkdir()
    for f in (event / "runs" / "r1").glob("*.nc"):
        (lone / f.name).write_bytes(f.read_bytes())
    rc, _, se = _run(["section", str(lone), "--site", "Harrowmere", "--time",
                      "2027-01-14T03:00Z", "--out", str(tmp_path / "y.png")], capsys)
    assert rc == 2 and "--sites" in se and len(se.strip().splitlines()) == 1
    rc, _, se = _run(["section", str(lone / "step_*.nc"), "--site", "Harrowmere", "--sites",
                      str(event / "sites.csv"), "--time", "2027-01-14T03:00Z",
                      "--out", str(tmp_path / "y.nc")], capsys)
    assert rc == 0, se


def test_bad_suffix_and_missing_front_kind(event, tmp_path, capsys):
    rc, _, se = _run(["section", str(event / "runs" / "r1"), "--site", "Harrowmere",
                      "--time", "2027-01-14T03:00Z", "--out", str(tmp_path / "x.jpg")], capsys)
    assert rc == 2 and ".png" in se and ".nc" in se
    rc, _, se = _run(["section", str(event / "runs" / "r1"), "--site", "Harrowmere",
                      "--time", "2027-01-14T03:00Z", "--front", "cold",
                      "--out", str(tmp_path / "x.png")], capsys)
    # the invented zone has no cross-front wind: its front is quasi-stationary, so asking
    # for a cold front is a one-line input error naming what was found
    assert rc == 2 and "no cold front" in se and len(se.strip().splitlines()) == 1
