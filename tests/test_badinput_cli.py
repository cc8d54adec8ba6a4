"""Every sub-command against bad input: one ``error:`` line, exit 2, nothing left behind.

The promise (DESIGN.md, public contract): on bad input ``frontshift`` exits
with status 2 and writes exactly one line ``error: ...`` on stderr that names
what was wrong (the file, variable, site or argument) and what was expected,
never a traceback; no partial product is left behind and no earlier product
is changed.

Each broken input is built here from a small invented run
(tests/charts_synthetic.py) by breaking ONE thing in it. The loader's own
cases (empty/GRIB files, model levels, time units, members...) live in
tests/test_badinput_loader.py; this file drives the commands end to end.
Degenerate but legal inputs (constant or NaN-patched fields, one time step,
a 3 x 3 grid) are in tests/test_badinput_products.py.
"""

import errno
import hashlib
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from charts_synthetic import make_run, write_cf_run

from kit.cli import main

REPO = Path(__file__).resolve().parents[1]
SITE = "Harrowby Field"
TIME = "2031-02-03T06:00Z"
COMMANDS = ("fronts", "arrivals", "section", "shift")
SUFFIX = {"fronts": ".geojson", "arrivals": ".csv", "section": ".png"}


# --------------------------------------------------------------------------- the material
def _small_run(**kw):
    args = dict(lat0=40.0, lat1=60.0, lon0=-20.0, lon1=10.0, step=2.0, hours=(0, 6))
    args.update(kw)
    return make_run(**args)


@pytest.fixture(scope="module")
def event(tmp_path_factory):
    """A good run (two steps), a good site list, and a cache of broken runs."""
    root = tmp_path_factory.mktemp("badinput_event")
    write_cf_run(_small_run(), root / "good")
    pd.DataFrame({"name": [SITE, "Kestrel Point"], "lat": [50.2, 55.0],
                  "lon": [-5.0, 2.0], "elevation_m": [40, 12]}).to_csv(root / "sites.csv",
                                                                      index=False)
    return root


def _steps(event):
    return sorted((event / "good").glob("step_*.nc"))


def _rewrite(event, name, change):
    """A run folder ``name`` whose step files are the good ones passed through ``change``."""
    folder = event / name
    if folder.exists():
        return folder
    folder.mkdir()
    for path in _steps(event):
        with xr.open_dataset(path) as src:
            ds = src.load()
        change(ds).to_netcdf(folder / path.name)
    return folder


def _text_named_nc(event):
    path = event / "notes.nc"
    path.write_text("850 hPa front near the coast at noon, rain behind it\n")
    return path


def _truncated(event):
    folder = event / "truncated"
    if not folder.exists():
        folder.mkdir()
        first, second = _steps(event)
        (folder / first.name).write_bytes(first.read_bytes())
        data = second.read_bytes()
        (folder / second.name).write_bytes(data[: len(data) // 2])
    return folder


def _corrupt(event):
    """A file that starts like NetCDF-4 (HDF5 signature) and then is noise."""
    path = event / "corrupt.nc"
    if not path.exists():
        noise = np.random.default_rng(7).integers(0, 256, 4096, dtype=np.uint8).tobytes()
        path.write_bytes(b"\x89HDF\r\n\x1a\n" + noise)
    return path


def _drop_humidity(ds):
    return ds.drop_vars("td")


def _rename_temperature(ds):
    ds = ds.rename({"t": "xq7"})
    ds["xq7"].attrs = {"units": "K"}  # no standard_name, a name nobody uses
    return ds


def _wind_in_kelvin(ds):
    ds["u"].attrs["units"] = "K"
    return ds


def _celsius_without_units(ds):
    ds["t"] = ds["t"] - 273.15
    ds["t"].attrs = {"standard_name": "air_temperature"}  # units attribute lost
    return ds


def _latitude_shuffled(ds):
    n = ds.sizes["latitude"]
    order = list(range(n))
    order[1], order[2] = order[2], order[1]
    return ds.isel(latitude=order)


def _latitude_repeated(ds):
    n = ds.sizes["latitude"]
    return ds.isel(latitude=[0, 1, 1] + list(range(3, n)))


def _all_nan_temperature(ds):
    ds["t"] = ds["t"] * np.nan
    return ds


def _too_small(ds):
    return ds.isel(latitude=[4, 5], longitude=[6, 7, 8])


def _mixed(event, name, change_second):
    """A run folder whose second step file differs from the first (grid or levels)."""
    folder = event / name
    if not folder.exists():
        folder.mkdir()
        first, second = _steps(event)
        (folder / first.name).write_bytes(first.read_bytes())
        with xr.open_dataset(second) as src:
            ds = src.load()
        change_second(ds).to_netcdf(folder / second.name)
    return folder


#: id -> (builder(event) -> RUN path, words the one line must contain)
BAD_RUNS = {
    "text-file-named-nc": (_text_named_nc, ["notes.nc", "not a NetCDF file"]),
    "truncated-file": (_truncated, ["step_006.nc", "truncated or corrupt"]),
    "corrupt-file": (_corrupt, ["corrupt.nc", "corrupt"]),
    "renamed-temperature": (lambda e: _rewrite(e, "renamed", _rename_temperature),
                            ["step_000.nc", "air_temperature"]),
    "wrong-units": (lambda e: _rewrite(e, "kelvinwind", _wind_in_kelvin),
                    ["step_000.nc", "'u'", "m s-1"]),
    "missing-units-celsius": (lambda e: _rewrite(e, "nounits", _celsius_without_units),
                              ["step_000.nc", "'t'"]),
    "non-monotonic-latitude": (lambda e: _rewrite(e, "shuffled", _latitude_shuffled),
                               ["step_000.nc", "latitude", "not monotonic"]),
    "duplicate-latitude": (lambda e: _rewrite(e, "repeated", _latitude_repeated),
                           ["step_000.nc", "duplicate latitude"]),
    "all-nan-field": (lambda e: _rewrite(e, "allnan", _all_nan_temperature),
                      ["step_000.nc", "'t'", "all NaN"]),
    "grid-2x3": (lambda e: _rewrite(e, "tiny", _too_small), ["2 x 3 points", "3 x 3"]),
    "steps-on-different-grids": (
        lambda e: _mixed(e, "twogrids", lambda ds: ds.isel(latitude=slice(0, -1))),
        ["step_000.nc", "step_006.nc", "different grid"]),
    "steps-on-different-levels": (
        lambda e: _mixed(e, "twolevels", lambda ds: ds.isel(pressure=[0, 2, 3, 4])),
        ["step_000.nc", "step_006.nc", "different levels"]),
    "no-such-folder": (lambda e: e / "no_such_run", ["no_such_run", "no such file"]),
    "empty-glob": (lambda e: str(e / "good" / "*.grib"), ["*.grib", "matches no file"]),
}


def _argv(command, run, out, event, *extra):
    if command == "fronts":
        return ["fronts", str(run), "--out", str(out), *extra]
    if command == "arrivals":
        return ["arrivals", str(run), "--sites", str(event / "sites.csv"), "--out", str(out),
                *extra]
    if command == "section":
        return ["section", str(run), "--site", SITE, "--time", TIME, "--sites",
                str(event / "sites.csv"), "--out", str(out), *extra]
    return ["shift", str(run), "--sites", str(event / "sites.csv"), "--out", str(out),
            "--quiet", "--maps-every-h", "0", "--max-sections", "1", *extra]


def _snapshot(folder):
    """Every file under ``folder`` (hidden ones too) with its checksum."""
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in Path(folder).rglob("*") if p.is_file()}


def _out_folder(tmp_path, command):
    """An output folder holding an earlier product; return (folder, --out value)."""
    folder = tmp_path / "products"
    folder.mkdir()
    if command == "shift":
        earlier = folder / "shift_2031-02-02T12Z"
        earlier.mkdir()
        (earlier / "manifest.json").write_text('{"earlier": true}\n')
        return folder, folder
    (folder / f"earlier{SUFFIX[command]}").write_bytes(b"earlier product\n")
    return folder, folder / f"new{SUFFIX[command]}"


def assert_one_line_error(status, capsys, *needles, says_expected=True):
    """Exit 2, exactly one stderr line starting ``error: `` with every needle, no traceback.

    With ``says_expected`` the line must also say what was expected (or what
    is available), as DESIGN.md asks of every bad-input message.
    """
    out, err = capsys.readouterr()
    assert status == 2, (status, err)
    lines = err.splitlines()
    assert len(lines) == 1, f"expected one line on stderr, got {len(lines)}: {err!r}"
    line = lines[0]
    assert line.startswith("error: "), line
    assert "Traceback" not in err + out
    for needle in needles:
        assert needle.lower() in line.lower(), f"{needle!r} not in {line!r}"
    if says_expected:
        words = ("expected", "available", "known sites", "need", "covers", "lacks")
        assert any(w in line.lower() for w in words), f"what was expected is not said: {line}"
    return line


# --------------------------------------------------------------------------- bad runs
@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("case", list(BAD_RUNS))
def test_bad_run_is_one_line_and_leaves_nothing(event, tmp_path, capsys, command, case):
    build, needles = BAD_RUNS[case]
    run = build(event)
    folder, out = _out_folder(tmp_path, command)
    before = _snapshot(folder)
    status = main(_argv(command, run, out, event))
    assert_one_line_error(status, capsys, *needles)
    assert _snapshot(folder) == before  # nothing new, nothing changed, no temporary file


@pytest.mark.parametrize("command", ["fronts", "arrivals", "section", "shift"])
def test_run_without_humidity_is_thin(event, tmp_path, capsys, command):
    # issue 15: a run without humidity on its levels is a thin run, not bad
    # input. Every product is made (in theta), says the run is thin, and the
    # earlier product beside it is untouched (tests/test_thin_products.py
    # checks the products themselves).
    run = _rewrite(event, "nohum", _drop_humidity)
    folder, out = _out_folder(tmp_path, command)
    before = _snapshot(folder)
    status = main(_argv(command, run, out, event))
    captured = capsys.readouterr()
    assert status == 0, captured.err
    assert captured.err == "" or "error" not in captured.err
    assert "is thin" in captured.out.lower() or "thin run" in captured.out.lower()
    assert "theta" in captured.out
    after = _snapshot(folder)
    assert {k: v for k, v in after.items() if k in before} == before  # nothing overwritten
    assert len(after) > len(before)  # the new product is there


@pytest.mark.parametrize("command", ["fronts", "arrivals", "section"])
def test_bad_run_with_overwrite_keeps_the_earlier_product(event, tmp_path, capsys, command):
    out = tmp_path / f"product{SUFFIX[command]}"
    out.write_bytes(b"the earlier product, still wanted\n")
    status = main(_argv(command, _truncated(event), out, event, "--overwrite"))
    assert_one_line_error(status, capsys, "step_006.nc", "truncated or corrupt")
    assert out.read_bytes() == b"the earlier product, still wanted\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == [out.name]


def test_rerun_event_with_a_broken_run(event, tmp_path, capsys):
    ev = tmp_path / "event"
    (ev / "runs").mkdir(parents=True)
    (ev / "stations").mkdir()
    (ev / "analyses").mkdir()
    (ev / "sites.csv").write_bytes((event / "sites.csv").read_bytes())
    (ev / "runs" / "notes.nc").write_text("not a grid\n")
    for p in _steps(event):
        (ev / "analyses" / p.name).write_bytes(p.read_bytes())
    out = tmp_path / "verif"
    status = main(["rerun", str(ev), "--out", str(out), "--workers", "1"])
    assert_one_line_error(status, capsys, "notes.nc", "not a NetCDF file")
    assert not out.exists()


@pytest.mark.parametrize(
    ("text", "needles"),
    [("time_utc,pressure_hpa,temperature_c,wind_dir_deg,wind_speed_kt\n"
      "2031-02-03T00:00Z,1008,9,220,14\n", ["Harrowby Field.csv", "dewpoint_<unit>"]),
     ("time_utc,pressure_hpa,temperature_c,dewpoint_c,wind_dir_deg,wind_speed_kt\n"
      "2031-02-03T00:00Z,1008,9,6,220,14\nsensor reset,,,,,\n2031-02-03T00:20Z,abc,9,6,220,14\n",
      ["Harrowby Field.csv", "usable rows", "at least 4"])],
    ids=["missing-column", "too-few-usable-rows"],
)
def test_rerun_unusable_station_series(event, tmp_path, capsys, text, needles):
    # gaps and garbage rows are reported, not fatal (test_badinput_products.py); a
    # series that cannot be read at all stops the rerun with one line naming it
    ev = tmp_path / "event"
    (ev / "runs").mkdir(parents=True)
    (ev / "stations").mkdir()
    (ev / "runs" / "good").symlink_to(event / "good", target_is_directory=True)
    (ev / "analyses").symlink_to(event / "good", target_is_directory=True)
    (ev / "sites.csv").write_text("name,lat,lon\nHarrowby Field,50.2,-5.0\n")
    (ev / "stations" / "Harrowby Field.csv").write_text(text)
    out = tmp_path / "verif"
    status = main(["rerun", str(ev), "--out", str(out), "--workers", "1"])
    assert_one_line_error(status, capsys, *needles)
    assert not out.exists()


@pytest.mark.parametrize(
    ("layout", "needles"),
    [("nothing", ["no such event folder"]),
     ("empty", ["not an event folder", "runs/"]),
     ("no-stations", ["lacks", "stations", "expected"])],
)
def test_rerun_bad_event_folders(tmp_path, capsys, layout, needles):
    ev = tmp_path / "event"
    if layout != "nothing":
        ev.mkdir()
    if layout == "no-stations":
        (ev / "runs" / "r1").mkdir(parents=True)
        (ev / "analyses").mkdir()
        (ev / "sites.csv").write_text("name,lat,lon\nHarrowby Field,50.2,-5.0\n")
    out = tmp_path / "verif"
    status = main(["rerun", str(ev), "--out", str(out), "--workers", "1"])
    assert_one_line_error(status, capsys, "event", *needles)
    assert not out.exists()


# --------------------------------------------------------------------------- sites
BAD_SITES = {
    "site-off-the-grid": ("name,lat,lon\nHarrowby Field,50.2,-5.0\nCape Morrow,-35.0,150.0\n",
                          ["Cape Morrow", "off the grid", "inside the model domain"]),
    "garbage-latitude": ("name,lat,lon\nHarrowby Field,fifty,-5.0\n", ["sites.csv", "fifty"]),
    "missing-column": ("name,latitude\nHarrowby Field,50.2\n", ["sites.csv", "lon"]),
    "empty-file": ("", ["sites.csv"]),
}


@pytest.mark.parametrize("command", ["arrivals", "section", "shift"])
@pytest.mark.parametrize("case", list(BAD_SITES))
def test_bad_site_list(event, tmp_path, capsys, command, case):
    text, needles = BAD_SITES[case]
    sites = tmp_path / "sites.csv"
    sites.write_text(text)
    folder, out = _out_folder(tmp_path, command)
    before = _snapshot(folder)
    argv = _argv(command, event / "good", out, event)
    argv[argv.index("--sites") + 1] = str(sites)
    if command == "section" and case == "site-off-the-grid":
        argv[argv.index("--site") + 1] = "Cape Morrow"  # the section's own site
    status = main(argv)
    assert_one_line_error(status, capsys, *needles)
    assert _snapshot(folder) == before


# --------------------------------------------------------------------------- arguments
BAD_ARGS = {
    "fronts": [(["--level", "300"], ["300", "hPa"]),
               (["--smoothing-km", "-5"], ["smoothing", "-5"]),
               (["--min-length-km", "nan"], ["min_length_km", "nan"]),
               (["--member", "3"], ["member", "3", "no ensemble member"])],
    "arrivals": [(["--level", "300"], ["300", "hPa"]),
                 (["--horizon-h", "-1"], ["--horizon-h", "0 to 48"])],
    "section": [(["--time", "2031-02-09T06:00Z"], ["2031-02-09"]),
                (["--time", "yesterday"], ["yesterday"]),
                (["--level", "300"], ["300", "hPa"]),
                (["--length-km", "5"], ["--length-km", "50 to 10000"]),
                (["--member", "3"], ["member", "3", "no ensemble member"])],
    "shift": [(["--level", "300"], ["300", "hPa"]),
              (["--maps-every-h", "-3"], ["--maps-every-h"])],
}


@pytest.mark.parametrize(
    ("command", "extra", "needles"),
    [(c, e, n) for c, cases in BAD_ARGS.items() for e, n in cases],
    ids=[f"{c}{'_'.join(e)}" for c, cases in BAD_ARGS.items() for e, _ in cases],
)
def test_bad_argument(event, tmp_path, capsys, command, extra, needles):
    folder, out = _out_folder(tmp_path, command)
    before = _snapshot(folder)
    argv = _argv(command, event / "good", out, event)
    if extra[0] in argv:  # replace a value the command line already gives
        i = argv.index(extra[0])
        argv[i : i + 2] = extra
    else:
        argv += extra
    status = main(argv)
    assert_one_line_error(status, capsys, *needles)
    assert _snapshot(folder) == before


# --------------------------------------------------------------------------- output folder
@pytest.mark.parametrize("command", COMMANDS)
def test_output_folder_is_a_file(event, tmp_path, capsys, command):
    blocker = tmp_path / "afile"
    blocker.write_text("not a folder\n")
    out = blocker / ("sub" + SUFFIX.get(command, ""))
    status = main(_argv(command, event / "good", out, event))
    assert_one_line_error(status, capsys, "afile")
    assert blocker.read_text() == "not a folder\n"


@pytest.mark.skipif(not Path("/sys").is_dir(), reason="needs Linux sysfs as a read-only folder")
@pytest.mark.parametrize("command", ["fronts", "arrivals", "section"])
def test_unwritable_output_folder(event, capsys, command):
    # /sys refuses new files even to root, where permission bits do not
    out = Path("/sys") / f"frontshift_test_product{SUFFIX[command]}"
    status = main(_argv(command, event / "good", out, event))
    assert_one_line_error(status, capsys, "/sys")
    assert not out.exists()


@pytest.mark.skipif(not Path("/sys").is_dir(), reason="needs Linux sysfs as a read-only folder")
def test_unwritable_output_folder_shift(event, capsys):
    out = Path("/sys") / "frontshift_test_products"
    status = main(_argv("shift", event / "good", out, event))
    assert_one_line_error(status, capsys, "/sys")
    assert not out.exists()


@pytest.fixture
def full_disk(monkeypatch):
    """Every product write ends in 'no space left on device' (as on a full disk)."""
    import kit.products.files

    def no_space(fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(kit.products.files.os, "fsync", no_space)


@pytest.mark.parametrize("command", ["fronts", "arrivals", "section"])
def test_full_disk_leaves_no_partial_file(event, tmp_path, capsys, command, full_disk):
    folder, out = _out_folder(tmp_path, command)
    before = _snapshot(folder)
    status = main(_argv(command, event / "good", out, event))
    # a full disk needs no "expected ..." (the cause is plain); the product is named
    assert_one_line_error(status, capsys, out.name, "no space left", says_expected=False)
    assert _snapshot(folder) == before


def test_full_disk_during_shift_keeps_earlier_products(event, tmp_path, capsys, full_disk):
    folder, out = _out_folder(tmp_path, "shift")
    before = _snapshot(folder)
    status = main(_argv("shift", event / "good", out, event))
    assert_one_line_error(status, capsys, "no space left", says_expected=False)
    # the earlier set is untouched and no folder named shift_... holds a partial set
    after = _snapshot(folder)
    assert {k: v for k, v in after.items() if k in before} == before
    assert not [p for p in folder.iterdir() if p.name.startswith("shift_")
                and p.name != "shift_2031-02-02T12Z"]


@pytest.mark.parametrize("command", ["fronts", "arrivals", "section"])
def test_unknown_output_type(event, tmp_path, capsys, command):
    out = tmp_path / "product.xlsx"
    status = main(_argv(command, event / "good", out, event))
    assert_one_line_error(status, capsys, "product.xlsx", ".xlsx")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- a real process
@pytest.mark.parametrize("command", COMMANDS + ("rerun",))
def test_real_process_prints_one_line_and_exits_2(event, tmp_path, command):
    """The installed entry point, as a forecaster runs it: no traceback, no warnings noise."""
    bad = _text_named_nc(event)
    if command == "rerun":
        argv = ["rerun", str(tmp_path / "no_event"), "--out", str(tmp_path / "verif")]
    else:
        folder, out = _out_folder(tmp_path, command)
        argv = _argv(command, bad, out, event)
    proc = subprocess.run([sys.executable, "-m", "kit", *argv], capture_output=True, text=True,
                          cwd=REPO, timeout=300)
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), proc.stderr
    assert "Traceback" not in proc.stderr + proc.stdout
    assert ("notes.nc" if command != "rerun" else "no_event") in lines[0]
