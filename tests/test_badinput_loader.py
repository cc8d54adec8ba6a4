"""Bad input to the loader: one-line InputError naming what, where and what was expected.

Each case builds its broken file here from small arrays; the assertions check
that the message names the file (or argument), the thing that is wrong, and
what was expected, and that it is a single line.
"""

import numpy as np
import pytest
import xarray as xr
from conftest import synthetic_fields, to_cf, write_cf

from kit.cli import main as cli_main
from kit.errors import InputError
from kit.io.runs import expand_run_arg, open_run, open_runs


def small():
    return synthetic_fields(
        lat=[50.0, 51.0, 52.0, 53.0],
        lon=[0.0, 1.0, 2.0, 3.0],
        times=np.datetime64("2027-01-14T00") + np.arange(2) * np.timedelta64(3, "h"),
    )


def raises_one_line(func, *needles):
    with pytest.raises(InputError) as info:
        func()
    msg = str(info.value)
    assert "\n" not in msg, msg
    for n in needles:
        assert n.lower() in msg.lower(), f"{n!r} not in {msg!r}"
    return msg


# --------------------------------------------------------------------------- paths
def test_missing_path_empty_glob_empty_folder(tmp_path):
    raises_one_line(
        lambda: expand_run_arg(tmp_path / "nope.nc"), "nope.nc", "no such file", "expected"
    )
    raises_one_line(
        lambda: expand_run_arg(str(tmp_path / "*.nc")), "*.nc", "glob matches no file", "expected"
    )
    (tmp_path / "empty").mkdir()
    (tmp_path / "empty" / "readme.txt").write_text("x")
    raises_one_line(
        lambda: expand_run_arg(tmp_path / "empty"), "empty", "no GRIB or NetCDF file", "readme.txt"
    )
    raises_one_line(lambda: open_run([]), "no files given", "expected")
    raises_one_line(lambda: open_runs([]), "no runs given", "expected")


# --------------------------------------------------------------------------- not NetCDF / broken
def test_text_file_named_nc(tmp_path):
    p = tmp_path / "notes.nc"
    p.write_text("temperature 12 C at noon\n")
    raises_one_line(lambda: open_run(p), "notes.nc", "not a NetCDF file", "text", "expected NetCDF")


def test_empty_and_grib_files(tmp_path):
    (tmp_path / "zero.nc").write_bytes(b"")
    raises_one_line(lambda: open_run(tmp_path / "zero.nc"), "zero.nc", "empty file", "expected")
    (tmp_path / "g.nc").write_bytes(b"GRIB\x00\x00\x10\x02" + b"\x00" * 100)
    raises_one_line(lambda: open_run(tmp_path / "g.nc"), "g.nc", "truncated GRIB", "expected")


@pytest.mark.parametrize("fmt", ["NETCDF4", "NETCDF3_64BIT"])
def test_truncated_file(tmp_path, fmt):
    full = tmp_path / "full.nc"
    to_cf(small()).to_netcdf(full, format=fmt)
    data = full.read_bytes()
    cut = tmp_path / "cut.nc"
    cut.write_bytes(data[: len(data) // 2])
    raises_one_line(lambda: open_run(cut), "cut.nc", "truncated or corrupt")


# --------------------------------------------------------------------------- content
def test_no_pressure_levels(tmp_path):
    ds = to_cf(small()).isel(level=0, drop=True)
    ds.to_netcdf(tmp_path / "sfc.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "sfc.nc"),
        "sfc.nc",
        "no pressure levels",
        "expected a pressure-level dimension",
        "found",
    )


def test_model_levels_are_not_pressure_levels(tmp_path):
    ds = to_cf(small())
    ds = ds.assign_coords(
        level=(
            "level",
            np.arange(1.0, 6.0),
            {"standard_name": "atmosphere_hybrid_sigma_pressure_coordinate"},
        )
    )
    ds.to_netcdf(tmp_path / "ml.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "ml.nc"),
        "ml.nc",
        "vertical coordinate 'level'",
        "hybrid",
        "expected pressure levels",
    )


def test_missing_humidity_is_a_thin_run_that_says_so(tmp_path):
    # issue 15: a run without humidity on its levels is read (no td); the
    # fronts are then found in theta and every product says the run is thin
    ds = to_cf(small()).drop_vars(["td", "td2m"])
    ds.to_netcdf(tmp_path / "run.nc")
    got = open_run(tmp_path / "run.nc")
    assert "td" not in got and {"t", "u", "v", "z"} <= set(got.data_vars)
    assert "no humidity on pressure levels: fronts found in theta" in got.attrs["thin"]


def test_missing_wind_component(tmp_path):
    # one wind component without the other stays an error: winds come in pairs
    ds = to_cf(small()).drop_vars(["u"])
    ds.to_netcdf(tmp_path / "run.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "run.nc"), "run.nc", "no u variable", "eastward_wind", "found"
    )


def test_missing_winds_give_geostrophic_winds(tmp_path):
    ds = to_cf(small()).drop_vars(["u", "v", "u10", "v10"], errors="ignore")
    ds.to_netcdf(tmp_path / "run.nc")
    got = open_run(tmp_path / "run.nc")
    assert got["u"].attrs["derived"] == "geostrophic"
    assert "geostrophic wind from the heights" in got.attrs["thin"]


def test_unknown_unit(tmp_path):
    ds = to_cf(small())
    ds["t"].attrs["units"] = "furlongs per fortnight squared"
    ds.to_netcdf(tmp_path / "u.nc")
    raises_one_line(lambda: open_run(tmp_path / "u.nc"), "u.nc", "'t'", "furlongs", "expected K")
    ds = to_cf(small())
    ds["u"].attrs["units"] = "K"
    ds.to_netcdf(tmp_path / "w.nc")
    raises_one_line(lambda: open_run(tmp_path / "w.nc"), "w.nc", "'u'", "'K'", "m s-1")


def test_mislabelled_units_caught_by_range(tmp_path):
    ds = to_cf(small())
    ds["t"] = ds["t"] - 273.15  # degrees Celsius labelled K
    ds["t"].attrs = {"standard_name": "air_temperature", "units": "K"}
    ds.to_netcdf(tmp_path / "c.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "c.nc"), "c.nc", "'t'", "median", "expected 150..350", "units"
    )
    ds = to_cf(small())
    ds["z"].attrs = {"units": "m2 s-2"}  # height labelled as geopotential
    ds.to_netcdf(tmp_path / "z.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "z.nc"),
        "z.nc",
        "geopotential height",
        "standard-atmosphere",
        "expected about 1",
    )


def test_precip_without_units(tmp_path):
    ds = to_cf(small())
    del ds["precip"].attrs["units"]
    ds.to_netcdf(tmp_path / "p.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "p.nc"),
        "p.nc",
        "precipitation",
        "no units",
        "expected an amount",
    )


def test_files_of_one_run_on_different_grids(tmp_path):
    a = small()
    b = synthetic_fields(
        lat=[50.0, 51.0, 52.0, 53.0, 54.0],
        lon=[0.0, 1.0, 2.0, 3.0],
        times=[np.datetime64("2027-01-14T06")],
    )
    write_cf(to_cf(a), tmp_path / "run")
    write_cf(to_cf(b), tmp_path / "run")
    msg = raises_one_line(
        lambda: open_run(tmp_path / "run"),
        "step_000.nc",
        "step_006.nc",
        "different grid",
        "lat",
        "expected",
    )
    assert "4 values" in msg and "5 values" in msg


def test_files_of_one_run_on_different_levels(tmp_path):
    a = small()
    b = synthetic_fields(
        lat=[50.0, 51.0, 52.0, 53.0],
        lon=[0.0, 1.0, 2.0, 3.0],
        levels=(1000.0, 850.0, 700.0, 500.0),
        times=[np.datetime64("2027-01-14T06")],
    )
    write_cf(to_cf(a), tmp_path / "run")
    write_cf(to_cf(b), tmp_path / "run")
    raises_one_line(
        lambda: open_run(tmp_path / "run"),
        "step_000.nc",
        "step_006.nc",
        "different levels",
        "hPa",
        "expected",
    )


def test_files_of_two_runs_in_one_folder(tmp_path):
    write_cf(to_cf(small()), tmp_path / "mix")
    b = synthetic_fields(
        lat=[50.0, 51.0, 52.0, 53.0],
        lon=[0.0, 1.0, 2.0, 3.0],
        reference_time="2027-01-14T12:00",
        times=[np.datetime64("2027-01-14T18")],
    )
    write_cf(to_cf(b), tmp_path / "mix")
    raises_one_line(
        lambda: open_run(tmp_path / "mix"),
        "different runs",
        "2027-01-14T00:00Z",
        "2027-01-14T12:00Z",
        "expected",
    )


def test_duplicate_valid_time_in_two_files(tmp_path):
    write_cf(to_cf(small()), tmp_path / "dup")
    src = tmp_path / "dup" / "step_003.nc"
    (tmp_path / "dup" / "step_003_copy.nc").write_bytes(src.read_bytes())
    raises_one_line(
        lambda: open_run(tmp_path / "dup"),
        "step_003.nc",
        "step_003_copy.nc",
        "duplicate valid time",
        "2027-01-14T03:00Z",
    )


def test_non_monotonic_and_duplicate_coordinates(tmp_path):
    ds = to_cf(small())
    ds.isel(lat=[0, 2, 1, 3]).to_netcdf(tmp_path / "nm.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "nm.nc"), "nm.nc", "latitude", "not monotonic", "expected"
    )
    ds.isel(lat=[0, 1, 1, 3]).to_netcdf(tmp_path / "dl.nc")
    raises_one_line(lambda: open_run(tmp_path / "dl.nc"), "dl.nc", "duplicate latitude", "expected")
    lev = ds["level"].values.copy()
    lev[1] = lev[0]
    ds.assign_coords(level=("level", lev, ds["level"].attrs)).to_netcdf(tmp_path / "lv.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "lv.nc"), "lv.nc", "duplicate pressure levels", "expected"
    )
    ds.isel(lon=[0, 2, 1, 3]).to_netcdf(tmp_path / "ln.nc")
    raises_one_line(lambda: open_run(tmp_path / "ln.nc"), "ln.nc", "longitude", "not monotonic")


def test_all_nan_required_field_is_an_error(tmp_path):
    ds = to_cf(small())
    ds["t"][:] = np.nan
    ds.to_netcdf(tmp_path / "nan.nc")
    raises_one_line(lambda: open_run(tmp_path / "nan.nc"), "nan.nc", "'t'", "all NaN", "expected")


def test_all_nan_optional_field_is_dropped_with_a_warning(tmp_path):
    ds = to_cf(small())
    ds["msl_"] = ds["mslp"] * np.nan
    ds = ds.drop_vars("mslp").rename({"msl_": "mslp"})
    ds["mslp"].attrs = {"units": "Pa", "standard_name": "air_pressure_at_mean_sea_level"}
    ds.to_netcdf(tmp_path / "nanmsl.nc")
    with pytest.warns(UserWarning, match="optional field 'mslp' is all NaN"):
        got = open_run(tmp_path / "nanmsl.nc")
    assert "mslp" not in got and "t" in got


def test_grid_too_small(tmp_path):
    ds = synthetic_fields(lat=[50.0, 51.0], lon=[0.0, 1.0, 2.0])
    to_cf(ds).to_netcdf(tmp_path / "2x3.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "2x3.nc"), "2x3.nc", "2 x 3 points", "expected at least 3 x 3"
    )


def test_2d_latlon_without_grid_mapping(tmp_path):
    ds = to_cf(small())
    lat2, lon2 = np.meshgrid(ds["lat"].values, ds["lon"].values, indexing="ij")
    lon2 = lon2 + 0.1 * lat2  # not a regular grid
    ds = ds.rename({"lat": "j", "lon": "i"}).drop_vars(["j", "i"])
    ds = ds.assign_coords(
        lat=(("j", "i"), lat2, {"units": "degrees_north"}),
        lon=(("j", "i"), lon2, {"units": "degrees_east"}),
    )
    ds.to_netcdf(tmp_path / "curv.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "curv.nc"),
        "curv.nc",
        "without a CF grid_mapping",
        "expected a grid_mapping",
    )


def test_member_not_there(tmp_path):
    ens = synthetic_fields(lat=[50.0, 51.0, 52.0], lon=[0.0, 1.0, 2.0], members=2)
    to_cf(ens).to_netcdf(tmp_path / "ens.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "ens.nc", member=5),
        "no ensemble member 5",
        "found members 0, 1",
    )
    to_cf(small()).to_netcdf(tmp_path / "det.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "det.nc", member=1),
        "det.nc",
        "member=1",
        "no ensemble member dimension",
    )


def test_time_not_decodable(tmp_path):
    ds = to_cf(small())
    ds = ds.assign_coords(time=("time", [0.0, 3.0], {"units": "fortnights after lunch"}))
    ds.to_netcdf(tmp_path / "tt.nc")
    raises_one_line(lambda: open_run(tmp_path / "tt.nc"), "tt.nc", "time", "expected CF units")


def test_valid_time_before_reference_time(tmp_path):
    ds = to_cf(small())
    ds = ds.assign_coords(forecast_reference_time=np.datetime64("2027-01-15T00", "ns"))
    ds.to_netcdf(tmp_path / "early.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "early.nc"),
        "early.nc",
        "before the reference time",
        "expected valid times at or after",
    )


def test_command_line_prints_one_error_line_and_exits_2(tmp_path, capsys):
    bad = tmp_path / "notes.nc"
    bad.write_text("not a grid\n")
    status = cli_main(["fronts", str(bad), "--out", str(tmp_path / "f.geojson")])
    err = capsys.readouterr().err
    assert status == 2
    assert err.startswith("error: ") and err.count("\n") == 1, err
    assert "notes.nc" in err and "not a NetCDF file" in err
    assert "Traceback" not in err


def test_one_file_holding_several_runs(tmp_path):
    ds = to_cf(small())
    lead = (ds["time"].values - ds["forecast_reference_time"].values).astype("timedelta64[ns]")
    runs = xr.concat(
        [
            ds.drop_vars("time").rename({"time": "step"}).assign_coords(step=("step", lead)),
            ds.drop_vars("time").rename({"time": "step"}).assign_coords(step=("step", lead)),
        ],
        dim="time",
    )
    refs = np.array(["2027-01-14T00", "2027-01-14T12"], dtype="datetime64[ns]")
    runs = runs.drop_vars("forecast_reference_time").assign_coords(time=("time", refs))
    runs = runs.assign_coords(valid_time=runs["time"] + runs["step"])
    runs.to_netcdf(tmp_path / "two.nc")
    raises_one_line(
        lambda: open_run(tmp_path / "two.nc"), "two.nc", "several runs", "expected one model run"
    )
