"""GRIB input: real GRIB files read as the same canonical Dataset as NetCDF.

Outside references:
- the ``eccodes`` Python API read message by message, with multi-field support
  on, is a second implementation of the decoding (cfgrib is the first);
- pyproj's meridian convergence is a second implementation of the turning of
  grid-relative winds (the kit measures the grid's axis on the ellipsoid);
- the NAM run's CF NetCDF twin (tests/real_data/make_real_data.py, winds
  rotated there with the Lambert cone formula theta = n (lon - LoV), Snyder
  1987, eq. 15-1 and the convergence of a conic projection) must give the same
  fronts.

The real files are regression cases and invariants, never truth (provenance
and licences in tests/real_data/README.md). The synthetic GRIB runs
(tests/grib_synth.py) put invented fields on ecCodes' own grid templates.
"""

import os
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import eccodes
import numpy as np
import pytest
from grib_synth import LEVELS, U_EARTH, V_EARTH, fields_at, grid_of, write_run
from pyproj import CRS, Proj, Transformer
from test_badinput_loader import raises_one_line

import kit
from kit.cli import main
from kit.io.grib import open_grib, walk_messages

REAL = Path(__file__).resolve().parent / "real_data"
GRIB = REAL / "grib"
NAM_GRIB = GRIB / "nam.t00z.awp21100.tm00.grib2"
NAM_NC = REAL / "nam_awp211_20180917T00Z.nc"
ERA5_GRIB = GRIB / "era5_members_20170101_2an.grib"
ERA5_NC = REAL / "era5_enda_members_20170101.nc"
REPO = Path(__file__).resolve().parents[1]


def eccodes_fields(path, multi=True):
    """Every field of a GRIB file read with the eccodes API: list of (keys, values 2-D)."""
    out = []
    if multi:
        eccodes.codes_grib_multi_support_on()
    try:
        with open(path, "rb") as fh:
            while True:
                gid = eccodes.codes_grib_new_from_file(fh)
                if gid is None:
                    break
                try:
                    keys = {k: eccodes.codes_get(gid, k) for k in (
                        "shortName", "typeOfLevel", "level", "Nx", "Ny", "dataTime")}
                    keys["number"] = (eccodes.codes_get(gid, "number")
                                      if eccodes.codes_is_defined(gid, "number") else None)
                    shape = (keys["Ny"], keys["Nx"])
                    vals = eccodes.codes_get_values(gid).reshape(shape)
                    if eccodes.codes_get(gid, "bitmapPresent"):
                        vals = np.where(vals == eccodes.codes_get(gid, "missingValue"), np.nan,
                                        vals)
                    keys["lat"] = eccodes.codes_get_array(gid, "latitudes").reshape(shape)
                    keys["lon"] = eccodes.codes_get_array(gid, "longitudes").reshape(shape)
                    out.append((keys, vals))
                finally:
                    eccodes.codes_release(gid)
    finally:
        eccodes.codes_grib_multi_support_off()
    return out


@pytest.fixture(scope="module")
def nam():
    return kit.open_run(NAM_GRIB, chunks=None)


# --------------------------------------------------------------------------- NAM, real GRIB2
def test_nam_values_equal_eccodes_message_by_message(nam):
    raw = open_grib(NAM_GRIB, None)
    fields = eccodes_fields(NAM_GRIB)
    want = {(k["shortName"], float(k["level"])): v for k, v in fields
            if k["typeOfLevel"] == "isobaricInhPa"}
    points = [(0, 0), (10, 40), (32, 46), (64, 92), (50, 7)]
    for short, cname in (("t", "t"), ("gh", "z"), ("u", None), ("v", None), ("r", None)):
        for level in (1000.0, 850.0, 500.0, 250.0):
            ref = want[(short, level)]
            got = raw[short].sel({f"plev_{short}": level}).values
            for j, i in points:
                assert got[j, i] == pytest.approx(ref[j, i], rel=1e-6, abs=1e-5)  # float32
            if cname:  # canonical, unchanged values (K, gpm = m)
                can = nam[cname].sel(level=level).isel(time=0).values
                np.testing.assert_allclose(can, ref, rtol=1e-6, atol=1e-4)


def test_nam_multifield_winds_all_read():
    # u and v of this NCEP file share multi-field messages: without multi-field
    # support ecCodes sees no v at all (the trap), with it both on 19 levels
    def count(multi):
        fields = eccodes_fields(NAM_GRIB, multi=multi)
        return {s: sum(1 for k, _v in fields if k["shortName"] == s
                       and k["typeOfLevel"] == "isobaricInhPa") for s in ("u", "v")}

    plain, multi = count(False), count(True)
    assert plain == {"u": 19, "v": 0}
    assert multi == {"u": 19, "v": 19}
    raw = open_grib(NAM_GRIB, "auto")
    assert raw["u"].sizes["plev_u"] == raw["v"].sizes["plev_v"] == 19


def test_nam_winds_turned_as_pyproj_meridian_convergence(nam):
    raw = open_grib(NAM_GRIB, None)
    crs = CRS.from_cf(dict(raw["crs"].attrs))
    lat, lon = raw["latitude"].values, raw["longitude"].values
    gamma = np.deg2rad(Proj(crs).get_factors(lon, lat).meridian_convergence)
    assert nam.attrs["wind_rotation"].startswith("grid-relative winds rotated")
    for level in (850.0, 500.0):
        ug = raw["u"].sel(plev_u=level).values
        vg = raw["v"].sel(plev_v=level).values
        # pyproj's gamma: grid north east of true north; earth = grid turned by -gamma
        ue = ug * np.cos(gamma) + vg * np.sin(gamma)
        ve = -ug * np.sin(gamma) + vg * np.cos(gamma)
        np.testing.assert_allclose(nam["u"].sel(level=level).isel(time=0), ue, atol=1e-3)
        np.testing.assert_allclose(nam["v"].sel(level=level).isel(time=0), ve, atol=1e-3)
        speed = np.hypot(nam["u"].sel(level=level), nam["v"].sel(level=level)).isel(time=0)
        np.testing.assert_allclose(speed, np.hypot(ug, vg), rtol=1e-6)


def test_nam_projection_from_grib_keys(nam):
    assert nam.attrs["grid"] == "projected"
    assert nam.attrs["grid_mapping_name"] == "lambert_conformal_conic"
    assert nam.attrs["dx_m"] == pytest.approx(81271.0, rel=1e-4)
    # the canonical lat/lon are ecCodes' own, and the projection reproduces them
    ref = eccodes_fields(NAM_GRIB)[0]
    gid_lat, gid_lon = _latlon_of(NAM_GRIB)
    np.testing.assert_allclose(nam["lat"].values, gid_lat, atol=1e-6)
    lon = (gid_lon + 180.0) % 360.0 - 180.0
    np.testing.assert_allclose(nam["lon"].values, lon, atol=1e-6)
    crs = CRS.from_cf(dict(nam["crs"].attrs))
    back = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    xx, yy = np.meshgrid(nam["x"].values, nam["y"].values)
    plon, plat = back.transform(xx, yy)
    assert np.abs(plat - gid_lat).max() < 1e-3
    assert ref[0]["Nx"] == nam.sizes["x"]


def _latlon_of(path):
    with open(path, "rb") as fh:
        gid = eccodes.codes_grib_new_from_file(fh)
    try:
        ny, nx = eccodes.codes_get(gid, "Ny"), eccodes.codes_get(gid, "Nx")
        lat = eccodes.codes_get_array(gid, "latitudes").reshape(ny, nx)
        lon = eccodes.codes_get_array(gid, "longitudes").reshape(ny, nx)
    finally:
        eccodes.codes_release(gid)
    return lat, lon


def test_nam_fronts_equal_its_netcdf_twin(nam):
    twin = kit.open_run(NAM_NC, chunks=None)
    for name in twin.data_vars:
        a = twin[name]
        b = nam[name].sel(level=a["level"]) if "level" in a.dims else nam[name]
        np.testing.assert_allclose(np.squeeze(b.values), np.squeeze(a.values), atol=1e-4,
                                   err_msg=name)
    fg, fn = kit.analyse(nam).fronts, kit.analyse(twin).fronts
    assert len(fg) == len(fn) >= 1
    for a, b in zip(fg, fn, strict=True):
        assert a.kind == b.kind
        np.testing.assert_allclose(a.lat, b.lat, atol=1e-6)
        np.testing.assert_allclose(a.lon, b.lon, atol=1e-6)


def test_nam_near_surface_fields_and_model_surface(nam):
    fields = eccodes_fields(NAM_GRIB)
    orog = next(v for k, v in fields if k["shortName"] == "orog")
    prmsl = next(v for k, v in fields if k["shortName"] == "prmsl")
    np.testing.assert_allclose(np.squeeze(nam["zsfc"].values), orog, atol=1e-3)
    np.testing.assert_allclose(nam["mslp"].isel(time=0), prmsl, atol=1e-2)
    assert "mslp<-prmsl" in nam.attrs["variables_from"]
    assert nam.attrs["thin"] == ""


def test_grib_named_nc_is_read_as_grib(tmp_path, nam):
    p = tmp_path / "run.nc"
    shutil.copy(NAM_GRIB, p)
    ds = kit.open_run(p, chunks=None)
    np.testing.assert_array_equal(ds["t"].values, nam["t"].values)


def test_read_only_folder_gets_no_index_file(tmp_path):
    folder = tmp_path / "ro"
    folder.mkdir()
    shutil.copy(NAM_GRIB, folder / "nam.grib2")
    before = sorted(os.listdir(folder))
    folder.chmod(stat.S_IRUSR | stat.S_IXUSR | stat.S_IRGRP | stat.S_IXGRP)
    try:
        ds = kit.open_run(folder, chunks=None)
        assert ds.sizes["level"] == 19
        assert sorted(os.listdir(folder)) == before  # no .idx beside the data
    finally:
        folder.chmod(0o755)
    assert not list(Path.cwd().glob("*.idx"))


# --------------------------------------------------------------------------- ERA5, real GRIB1
def test_era5_members_become_the_member_dimension():
    ds = kit.open_run(ERA5_GRIB, chunks=None)
    assert ds.sizes["member"] == 10 and ds.sizes["time"] == 2
    assert ds["member"].values.tolist() == list(range(10))
    assert ds.attrs.get("kind") == "analyses"
    assert "no humidity" in ds.attrs["thin"] and "geostrophic" in ds.attrs["thin"]
    twin = kit.open_run(ERA5_NC, chunks=None).isel(time=[0, 1])
    sub = ds.sel(lat=twin["lat"], lon=twin["lon"])
    np.testing.assert_allclose(sub["t"].values, twin["t"].values, atol=1e-3)
    np.testing.assert_allclose(sub["z"].values, twin["z"].values, atol=1e-2)
    # one member against ecCodes directly (member 7, 500 hPa, first analysis), by point
    keys, ref = next((k, v) for k, v in eccodes_fields(ERA5_GRIB)
                     if k["shortName"] == "t" and k["level"] == 500 and k["number"] == 7
                     and k["dataTime"] == 0)
    got = ds["t"].sel(member=7, level=500.0).isel(time=0)
    for j, i in [(0, 0), (10, 17), (30, 100), (60, 119), (45, 3)]:
        lon = (keys["lon"][j, i] + 180.0) % 360.0 - 180.0  # kit: -180..180, lat ascending
        at = got.sel(lat=keys["lat"][j, i], lon=lon, method="nearest", tolerance=1e-6)
        assert float(at) == pytest.approx(ref[j, i], rel=1e-6)


def test_era5_grib_runs_through_fronts_command(tmp_path):
    out = tmp_path / "era5.geojson"
    assert main(["fronts", str(ERA5_GRIB), "--out", str(out)]) == 0
    text = out.read_text()
    assert '"member"' in text and "theta" in text


# --------------------------------------------------------------------------- levels in Pa
def test_levels_in_hpa_and_pa_join_in_hpa():
    raw = open_grib(GRIB / "hpa_and_pa.grib", None)
    fields = eccodes_fields(GRIB / "hpa_and_pa.grib")
    levels = raw["t"]["plev_t"].values
    want = sorted(
        (k["level"] / (100.0 if k["typeOfLevel"] == "isobaricInPa" else 1.0), v)
        for k, v in fields
    )
    np.testing.assert_allclose(np.sort(levels), [lv for lv, _v in want])
    assert any(k["typeOfLevel"] == "isobaricInPa" for k, _v in fields)
    for lv, ref in want:
        np.testing.assert_allclose(raw["t"].sel(plev_t=lv).values, ref, rtol=1e-6, atol=1e-4)


# --------------------------------------------------------------------------- other grids
@pytest.mark.parametrize("kind, tol", [("south_polar", 1e-3), ("rotated", 0.1)])
def test_synthetic_grids_take_projection_and_turn_winds(tmp_path, kind, tol):
    p = tmp_path / f"{kind}.grib2"
    lat, lon = write_run(p, kind, hours=(0, 6))
    ds = kit.open_run(p, chunks=None)
    assert ds.attrs["grid"] == "projected"
    np.testing.assert_allclose(ds["lat"].values, lat, atol=1e-6)
    np.testing.assert_allclose((ds["lon"].values - lon + 180.0) % 360.0 - 180.0, 0.0, atol=1e-6)
    # the winds were written grid-relative with pyproj's meridian convergence
    assert float(abs(ds["u"] - U_EARTH).max()) < tol
    assert float(abs(ds["v"] - V_EARTH).max()) < tol
    t = fields_at(lat, lon, 850.0, 6)["t"]
    np.testing.assert_allclose(ds["t"].sel(level=850.0).isel(time=1), t, atol=2e-3)
    assert ds.sizes["level"] == len(LEVELS)


def test_rotated_grid_coordinates_give_eccodes_latitudes(tmp_path):
    p = tmp_path / "rot.grib2"
    lat, lon = write_run(p, "rotated")
    ds = kit.open_run(p, chunks=None)
    _lat, _lon, crs = grid_of("rotated")
    rlon, rlat = np.meshgrid(ds["rlon"].values, ds["rlat"].values)
    sphere = CRS.from_proj4("+proj=longlat +R=6371229 +no_defs")
    back = Transformer.from_crs(crs, sphere, always_xy=True)
    plon, plat = back.transform(rlon, rlat)
    np.testing.assert_allclose(plat, lat, atol=1e-6)
    np.testing.assert_allclose((plon - lon + 180.0) % 360.0 - 180.0, 0.0, atol=1e-6)


def test_south_polar_run_is_analysed(tmp_path):
    p = tmp_path / "sp.grib2"
    write_run(p, "south_polar", hours=(0, 6))
    analysis = kit.analyse(kit.open_run(p))
    assert analysis.dataset.attrs["grid"] == "projected"
    assert all(np.all(np.asarray(f.lat) < 0) for f in analysis.fronts)


# --------------------------------------------------------------------------- precipitation
def test_accumulation_since_start_becomes_rates(tmp_path):
    p = tmp_path / "acc.grib2"
    write_run(p, "south_polar", hours=(0, 6, 12))
    ds = kit.open_run(p, chunks=None)
    # 0.5 kg m-2 per hour since the start: 0.5 mm h-1 over each 6-hour step
    np.testing.assert_allclose(ds["precip"].isel(time=[1, 2]).values, 0.5, atol=1e-3)


def test_accumulation_buckets_become_rates(tmp_path):
    p = tmp_path / "bucket.grib2"
    write_run(p, "south_polar", hours=(0, 6, 12), buckets=True)
    ds = kit.open_run(p, chunks=None)
    # each step's amount over its own 6 hours (a since-start reading would give 0 at 12 h)
    np.testing.assert_allclose(ds["precip"].isel(time=[1, 2]).values, 0.5, atol=1e-3)


# --------------------------------------------------------------------------- folders
def test_folder_of_step_files_without_suffix(tmp_path):
    folder = tmp_path / "run"
    folder.mkdir()
    for h in (0, 6):
        write_run(folder / f"synth.t00z.f{h:03d}", "south_polar", hours=(h,))
    (folder / "README.txt").write_text("invented run for a test\n")
    (folder / "synth.t00z.f000.5b7b6.idx").write_bytes(b"\x80\x04index")
    one = tmp_path / "one.grib2"
    write_run(one, "south_polar", hours=(0, 6))
    a, b = kit.open_run(folder, chunks=None), kit.open_run(one, chunks=None)
    assert a.sizes["time"] == 2
    np.testing.assert_array_equal(a["t"].values, b["t"].values)


def test_folder_mixing_grib_and_netcdf_is_refused(tmp_path):
    folder = tmp_path / "mixed"
    folder.mkdir()
    shutil.copy(NAM_GRIB, folder / "nam.grib2")
    shutil.copy(NAM_NC, folder / "nam.nc")
    raises_one_line(lambda: kit.open_run(folder), "mixes GRIB", "NetCDF", "expected")


# --------------------------------------------------------------------------- bad input
def _grib1_without_gds(path):
    """The first ERA5 GRIB1 message rebuilt without its grid description section."""
    data = ERA5_GRIB.read_bytes()
    length = int.from_bytes(data[4:7], "big")
    msg = data[:length]
    pds_len = int.from_bytes(msg[8:11], "big")
    pds = bytearray(msg[8 : 8 + pds_len])
    assert pds[7] & 0x80
    gds_len = int.from_bytes(msg[8 + pds_len : 11 + pds_len], "big")
    pds[7] &= 0x7F
    body = bytes(pds) + msg[8 + pds_len + gds_len : -4]
    total = 8 + len(body) + 4
    path.write_bytes(b"GRIB" + total.to_bytes(3, "big") + b"\x01" + body + b"7777")
    return path


def _truncated(path):
    data = NAM_GRIB.read_bytes()
    path.write_bytes(data[: int(len(data) * 0.6)])
    return path


BAD = {
    "model-levels-only": (lambda t: GRIB / "regular_gg_ml.grib", ["no pressure-level", "hybrid"]),
    "surface-only": (lambda t: GRIB / "regular_ll_sfc.grib", ["no pressure-level", "surface"]),
    "truncated": (lambda t: _truncated(t / "cut.grib2"), ["truncated GRIB", "message"]),
    "corrupt-length": (lambda t: GRIB / "era5-levels-corrupted.grib", ["7777", "corrupt"]),
    "grib1-no-grid": (lambda t: _grib1_without_gds(t / "nogds.grib"),
                      ["no grid description section", "predefined grid"]),
    "reduced-gaussian": (lambda t: GRIB / "reduced_gg.grib", ["reduced", "Gaussian", "expected"]),
    "u-v-levels-differ": (lambda t: GRIB / "uv_on_different_levels.grib",
                          ["u and v on different pressure levels"]),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_grib_one_line(tmp_path, case):
    make, needles = BAD[case]
    raises_one_line(lambda: kit.open_run(make(tmp_path)), *needles, "expected")


@pytest.mark.parametrize("case", ["truncated", "grib1-no-grid", "surface-only"])
def test_bad_grib_through_the_command_exit_2(tmp_path, case):
    path = BAD[case][0](tmp_path)
    out = tmp_path / "out.geojson"
    proc = subprocess.run(
        [sys.executable, "-m", "kit", "fronts", str(path), "--out", str(out)],
        capture_output=True, text=True, cwd=REPO, timeout=300,
    )
    assert proc.returncode == 2, proc.stderr
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:"), proc.stderr
    assert not out.exists()


def test_walk_counts_messages_not_fields():
    msgs = walk_messages(NAM_GRIB)
    assert len(msgs) == 154  # 181 fields: u and v share 27 messages
    assert {e for *_x, e in msgs} == {2}


# --------------------------------------------------------------------------- every command
@pytest.mark.slow
def test_every_command_accepts_a_grib_run(tmp_path):
    sites = tmp_path / "sites.csv"
    sites.write_text("name,lat,lon,elevation_m\nNorrin Flats,45.0,-95.0,350\n"
                     "Cobble Reach,47.0,-85.0,200\n")
    run = str(NAM_GRIB)
    assert main(["fronts", run, "--out", str(tmp_path / "f.geojson")]) == 0
    assert main(["arrivals", run, "--sites", str(sites), "--out", str(tmp_path / "a.csv")]) == 0
    assert main(["section", run, "--sites", str(sites), "--site", "Cobble Reach",
                 "--time", "2018-09-17T00:00Z", "--out", str(tmp_path / "s.png")]) == 0
    assert main(["shift", run, "--sites", str(sites), "--out", str(tmp_path / "shift")]) == 0
    assert (tmp_path / "s.png").stat().st_size > 10_000
    assert "Cobble Reach" in (tmp_path / "a.csv").read_text()
    manifest = next((tmp_path / "shift").glob("shift_*/manifest.json")).read_text()
    assert "nam.t00z.awp21100.tm00.grib2" in manifest
