"""Tests of kit.io.runs: every file layout the loader accepts gives the canonical Dataset.

Sources beside each expected value:
[lib]   pint / MetPy unit conversions and thermodynamics, pyproj projections and
        geodesics, used as independent second implementations;
[pub]   published formulas (cited where used);
[regr]  round trip of the synthetic fields of conftest.py (plumbing, not science).
The synthetic fields are invented shapes; they only ever serve as round-trip
input, never as a reference value.
"""

import json
from pathlib import Path

import dask.array
import metpy.calc as mpcalc
import numpy as np
import pytest
import xarray as xr
from conftest import synthetic_fields
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from metpy.units import units
from pyproj import CRS, Geod, Proj, Transformer

from kit.constants import G0
from kit.errors import InputError
from kit.io.runs import expand_run_arg, open_run, open_runs, run_label, to_canonical

REPO = Path(__file__).resolve().parents[1]
CANON = ("t", "td", "u", "v", "z", "mslp", "t2m", "td2m", "u10", "v10", "precip")


# --------------------------------------------------------------------------- helpers
def pint_convert(values, src, dst):
    """[lib] pint (MetPy registry) conversion used as the reference."""
    return (np.asarray(values) * units(src)).to(dst).magnitude


def raw_variant(
    base,
    *,
    names=None,
    unit_of=None,
    std=True,
    level_name="level",
    level_unit="hPa",
    level_ascending=False,
    lat_name="lat",
    lon_name="lon",
    lat_desc=False,
    lon_360=False,
    humidity="td",
    z_kind="height",
    transpose=None,
    precip=True,
    time_style="cf",
):
    """A raw 'file' Dataset built from a canonical one, with names/units/orders varied.

    Values are converted INTO the variant units with pint [lib]; the loader must
    convert them back.
    """
    names = dict(names or {})
    unit_of = dict(unit_of or {})
    out = {}
    std_names = {
        "t": "air_temperature",
        "td": "dew_point_temperature",
        "u": "eastward_wind",
        "v": "northward_wind",
        "mslp": "air_pressure_at_mean_sea_level",
        "t2m": "air_temperature",
        "td2m": "dew_point_temperature",
        "u10": "eastward_wind",
        "v10": "northward_wind",
    }
    canon_units = {
        "t": "K",
        "td": "K",
        "u": "m/s",
        "v": "m/s",
        "mslp": "Pa",
        "t2m": "K",
        "td2m": "K",
        "u10": "m/s",
        "v10": "m/s",
    }
    for role in ("t", "u", "v", "mslp", "t2m", "td2m", "u10", "v10"):
        if role not in base:
            continue
        u_out = unit_of.get(role, canon_units[role])
        vals = pint_convert(base[role].values, canon_units[role], u_out)
        da = xr.DataArray(vals, dims=base[role].dims)
        da.attrs["units"] = u_out
        if std:
            da.attrs["standard_name"] = std_names[role]
        out[names.get(role, role)] = da
    # humidity
    t = base["t"].values * units.K
    td = base["td"].values * units.K
    if humidity == "td":
        u_out = unit_of.get("td", "K")
        da = xr.DataArray(
            pint_convert(base["td"].values, "K", u_out),
            dims=base["td"].dims,
            attrs={"units": u_out},
        )
        if std:
            da.attrs["standard_name"] = "dew_point_temperature"
        out[names.get("td", "td")] = da
    elif humidity == "rh":
        rh = mpcalc.relative_humidity_from_dewpoint(t, td).m_as("")  # [lib]
        u_out = unit_of.get("rh", "%")
        vals = rh * 100.0 if u_out in ("%", "percent") else rh
        da = xr.DataArray(vals, dims=base["t"].dims, attrs={"units": u_out})
        if std:
            da.attrs["standard_name"] = "relative_humidity"
        out[names.get("rh", "r")] = da
    elif humidity == "q":
        p = base["level"].values[None, :, None, None] * units.hPa
        q = mpcalc.specific_humidity_from_dewpoint(p, td).m_as("kg/kg")  # [lib]
        u_out = unit_of.get("q", "kg kg-1")
        da = xr.DataArray(
            pint_convert(q, "kg/kg", u_out.replace("kg-1", "/kg").replace(" ", "")),
            dims=base["t"].dims,
            attrs={"units": u_out},
        )
        if std:
            da.attrs["standard_name"] = "specific_humidity"
        out[names.get("q", "q")] = da
    # geopotential or height
    if z_kind == "geopotential":
        vals = base["z"].values * G0
        da = xr.DataArray(vals, dims=base["z"].dims, attrs={"units": unit_of.get("z", "m2 s-2")})
        if std:
            da.attrs["standard_name"] = "geopotential"
    else:
        u_out = unit_of.get("z", "m")
        vals = pint_convert(base["z"].values, "m", "m" if u_out == "gpm" else u_out)
        da = xr.DataArray(vals, dims=base["z"].dims, attrs={"units": u_out})
        if std:
            da.attrs["standard_name"] = "geopotential_height"
    out[names.get("z", "z")] = da
    if precip and "precip" in base:
        times = base["time"].values
        ref = base["reference_time"].values
        steps = np.diff(np.concatenate([[ref], times])) / np.timedelta64(1, "h")
        amount_mm = np.cumsum(base["precip"].values * steps[:, None, None], axis=0)
        u_out = unit_of.get("precip", "kg m-2")
        vals = amount_mm / 1000.0 if u_out == "m" else amount_mm
        da = xr.DataArray(vals, dims=base["precip"].dims, attrs={"units": u_out})
        if std:
            da.attrs["standard_name"] = "precipitation_amount"
        out[names.get("precip", "precip")] = da
    ds = xr.Dataset(out)
    # coordinates
    lev = base["level"].values
    lev_vals = pint_convert(lev, "hPa", level_unit)
    ds = ds.assign_coords(
        level=("level", lev_vals, {"units": level_unit, "standard_name": "air_pressure"}),
        lat=("lat", base["lat"].values, {"units": "degrees_north", "standard_name": "latitude"}),
        lon=("lon", base["lon"].values, {"units": "degrees_east", "standard_name": "longitude"}),
        time=("time", base["time"].values),
    )
    ds = ds.assign_coords(
        forecast_reference_time=(
            (),
            base["reference_time"].values,
            {"standard_name": "forecast_reference_time"},
        )
    )
    if time_style == "cfgrib":
        lead = base["time"].values - base["reference_time"].values
        ds = ds.rename({"time": "step"}).assign_coords(
            step=("step", lead), valid_time=("step", base["time"].values)
        )
        ds = ds.rename({"forecast_reference_time": "time"})
    if "member" in base.dims:
        ds = ds.assign_coords(member=("member", base["member"].values))
    if lon_360:
        ds = ds.assign_coords(lon=("lon", ds["lon"].values % 360.0, ds["lon"].attrs))
    if lat_desc:
        ds = ds.isel(lat=slice(None, None, -1))
    if level_ascending:
        ds = ds.isel(level=slice(None, None, -1))
    if transpose is not None:
        for n in ds.data_vars:
            dims = ds[n].dims
            ds[n] = ds[n].transpose(*[d for d in transpose if d in dims])
    ren = {}
    if level_name != "level":
        ren["level"] = level_name
    if lat_name != "lat":
        ren["lat"] = lat_name
    if lon_name != "lon":
        ren["lon"] = lon_name
    if ren:
        ds = ds.rename(ren)
    return ds


def write(ds, path, **enc):
    path.parent.mkdir(parents=True, exist_ok=True)
    ds.to_netcdf(path, **enc)
    return path


def assert_canonical_equal(got, want, *, rtol=1e-6, atol=1e-6, skip=(), precip_from=1):
    """[regr] same canonical fields, coordinates and dimension order."""
    assert got.attrs["run"] == want.attrs["run"]
    np.testing.assert_allclose(got["level"].values, want["level"].values)
    np.testing.assert_allclose(got["lat"].values, want["lat"].values)
    np.testing.assert_allclose(got["lon"].values, want["lon"].values)
    assert np.array_equal(got["time"].values, want["time"].values)
    assert got["reference_time"].values == want["reference_time"].values
    for n in want.data_vars:
        if n in skip or n not in got:
            continue
        assert got[n].dims == want[n].dims, n
        a, b = got[n].values, want[n].values
        if n == "precip":
            a, b = a[precip_from:], b[precip_from:]
        np.testing.assert_allclose(a, b, rtol=rtol, atol=atol, err_msg=n)


@pytest.fixture
def base():
    return synthetic_fields(
        lat=np.arange(40.0, 56.01, 2.0),
        lon=np.arange(-10.0, 6.01, 2.0),
        times=np.datetime64("2027-01-14T00:00") + np.arange(4) * np.timedelta64(3, "h"),
    )


# --------------------------------------------------------------------------- files
def test_expand_run_arg_file_glob_folder(tmp_path):
    for name in ("step_006.nc", "step_000.nc", "step_003.nc4", "notes.txt", ".hidden.nc"):
        (tmp_path / name).write_bytes(b"x")
    (tmp_path / "sub").mkdir()
    got = expand_run_arg(tmp_path)
    assert [p.name for p in got] == ["step_000.nc", "step_003.nc4", "step_006.nc"]
    got = expand_run_arg(str(tmp_path / "step_0*.nc"))
    assert [p.name for p in got] == ["step_000.nc", "step_006.nc"]
    assert expand_run_arg(tmp_path / "step_000.nc") == [tmp_path / "step_000.nc"]


# --------------------------------------------------------------------------- round trip
def test_cf_folder_round_trip_is_canonical_and_lazy(make_latlon_run):
    path, want = make_latlon_run()
    got = open_run(path)
    assert_canonical_equal(got, want, rtol=1e-9, atol=1e-9)
    assert list(got.data_vars) == list(CANON)
    assert got["t"].dims == ("time", "level", "lat", "lon")
    assert got.attrs["grid"] == "latlon"
    assert got.attrs["run"] == "2027-01-14T00Z"
    assert got["level"].values[0] == 1000.0 and got["level"].dtype == np.float64
    assert got["time"].dtype == np.dtype("datetime64[ns]")
    # lazy: dask-backed until asked
    assert isinstance(got["t"].data, dask.array.Array)
    eager = open_run(path, chunks=None)
    assert isinstance(eager["t"].data, np.ndarray)
    # first precipitation step: run starts at the first valid time -> no accumulation start
    assert np.all(np.isnan(got["precip"].isel(time=0).values))
    for n in CANON:
        assert got[n].attrs["units"]


def test_one_file_netcdf3_and_list_of_files(make_latlon_run):
    path, want = make_latlon_run(one_file=True, fmt="NETCDF3_64BIT")
    assert_canonical_equal(open_run(path), want, rtol=1e-9, atol=1e-9)
    folder, want = make_latlon_run(name="steps")
    files = sorted(folder.glob("*.nc"))
    got = open_run([str(f) for f in files[::-1]])  # order given does not matter
    assert_canonical_equal(got, want, rtol=1e-9, atol=1e-9)
    got = open_run(str(folder / "step_*.nc"))
    assert_canonical_equal(got, want, rtol=1e-9, atol=1e-9)


def test_open_runs_gives_one_dataset_per_run(make_latlon_run):
    a, _ = make_latlon_run(name="a", reference_time="2027-01-14T00:00")
    b, _ = make_latlon_run(name="b", reference_time="2027-01-14T12:00")
    runs = open_runs([a, b])
    assert [r.attrs["run"] for r in runs] == ["2027-01-14T00Z", "2027-01-14T12Z"]


def test_run_label():
    assert run_label("2027-01-14T12:00") == "2027-01-14T12Z"
    assert run_label("2027-01-14T12:30") == "2027-01-14T1230Z"


# --------------------------------------------------------------------------- names and units
def test_reanalysis_style_names_units_and_orders(tmp_path, base):
    """Short names, geopotential m2 s-2, Pa levels ascending, lat descending, 0..360 lon,
    tp in metres accumulated since the run start, RH in percent."""
    raw = raw_variant(
        base,
        std=False,
        names={
            "t": "t",
            "rh": "r",
            "u": "u",
            "v": "v",
            "z": "z",
            "mslp": "msl",
            "t2m": "t2m",
            "td2m": "d2m",
            "u10": "u10",
            "v10": "v10",
            "precip": "tp",
        },
        unit_of={"precip": "m"},
        humidity="rh",
        z_kind="geopotential",
        level_name="pressure_level",
        level_unit="Pa",
        level_ascending=True,
        lat_name="latitude",
        lon_name="longitude",
        lat_desc=True,
        lon_360=True,
    )
    got = open_run(write(raw, tmp_path / "era.nc"))
    # td from RH: MetPy 1.7's saturation vapour pressure differs from Bolton (1980) Eq. 10
    # (used by kit.science.thermo) by a few hundredths of a kelvin in dew point [lib]
    assert_canonical_equal(got, base, skip=("td",), rtol=1e-6, atol=1e-6)
    np.testing.assert_allclose(got["td"].values, base["td"].values, atol=0.05)
    assert got.attrs["variables_from"].startswith("t<-t")


def test_grib_converted_style_names_and_units(tmp_path, base):
    """TMP in degC, UGRD/VGRD in knots, HGT in gpm, RH in %, PRMSL in hPa, APCP kg m-2."""
    raw = raw_variant(
        base,
        std=False,
        names={
            "t": "TMP",
            "rh": "RH",
            "u": "UGRD",
            "v": "VGRD",
            "z": "HGT",
            "mslp": "PRMSL",
            "t2m": "TMP_2maboveground",
            "td2m": "DPT_2maboveground",
            "u10": "UGRD_10maboveground",
            "v10": "VGRD_10maboveground",
            "precip": "APCP",
        },
        unit_of={
            "t": "degC",
            "u": "knots",
            "v": "knots",
            "z": "gpm",
            "mslp": "hPa",
            "t2m": "degC",
            "td2m": "degC",
            "u10": "knots",
            "v10": "knots",
        },
        humidity="rh",
        level_name="isobaric",
        level_unit="Pa",
    )
    got = open_run(write(raw, tmp_path / "grib.nc"))
    assert_canonical_equal(got, base, skip=("td",), rtol=1e-6, atol=1e-5)
    np.testing.assert_allclose(got["td"].values, base["td"].values, atol=0.05)


def test_model_intercomparison_style_names(tmp_path, base):
    """ta/hus/ua/va/zg on plev [Pa], psl, tas, pr as a flux kg m-2 s-1."""
    raw = raw_variant(
        base,
        std=True,
        names={
            "t": "ta",
            "q": "hus",
            "u": "ua",
            "v": "va",
            "z": "zg",
            "mslp": "psl",
            "t2m": "tas",
            "td2m": "tdps",
            "u10": "uas",
            "v10": "vas",
        },
        humidity="q",
        level_name="plev",
        level_unit="Pa",
        precip=False,
    )
    flux = base["precip"].values / 3600.0  # mm h-1 -> kg m-2 s-1 (1 mm water = 1 kg m-2) [pub, SI]
    raw["pr"] = xr.DataArray(
        flux,
        dims=("time", "lat", "lon"),
        attrs={"units": "kg m-2 s-1", "standard_name": "precipitation_flux"},
    )
    got = open_run(write(raw, tmp_path / "cmip.nc"))
    assert_canonical_equal(got, base, skip=("td",), precip_from=0)
    # td from q: Bolton (1980) Eq. 10 inverted vs MetPy's dewpoint [lib], within 0.05 K
    np.testing.assert_allclose(got["td"].values, base["td"].values, atol=0.05)


def test_unit_conversions_match_pint(tmp_path, base):
    """Each unit variant is converted as pint converts it [lib]."""
    cases = [
        ("t", "degF"),
        ("t", "celsius"),
        ("u", "km h-1"),
        ("u", "kt"),
        ("mslp", "mbar"),
        ("z", "dam"),
        ("q", "g kg-1"),
    ]
    for role, unit in cases:
        kw = dict(humidity="q" if role == "q" else "td", unit_of={role: unit})
        raw = raw_variant(base, **kw)
        got = open_run(write(raw, tmp_path / f"{role}_{unit.replace(' ', '')}.nc"), chunks=None)
        if role == "q":
            p = base["level"].values[None, :, None, None] * units.hPa
            q = mpcalc.specific_humidity_from_dewpoint(p, base["td"].values * units.K)
            want = mpcalc.dewpoint_from_specific_humidity(p, q).m_as("K")  # [lib]
            np.testing.assert_allclose(got["td"].values, want, atol=0.05)
        else:
            file_vals = raw[role].values
            want = pint_convert(
                file_vals, unit, {"t": "K", "u": "m/s", "mslp": "Pa", "z": "m"}[role]
            )
            np.testing.assert_allclose(got[role].values, want, rtol=1e-9, atol=1e-9, err_msg=unit)


def test_geopotential_and_height_give_the_same_z(tmp_path, base):
    a = open_run(write(raw_variant(base, z_kind="geopotential"), tmp_path / "phi.nc"))
    b = open_run(write(raw_variant(base, z_kind="height"), tmp_path / "gh.nc"))
    # z = Phi / g0, g0 = 9.80665 m s-2 (CGPM 1901 standard gravity) [pub]
    np.testing.assert_allclose(a["z"].values, b["z"].values, rtol=1e-12)
    # a variable called 'z' holding height in metres is height: units decide, not the name
    raw = raw_variant(base, z_kind="height", names={"z": "z"})
    c = open_run(write(raw, tmp_path / "z_is_height.nc"))
    np.testing.assert_allclose(c["z"].values, b["z"].values, rtol=1e-12)
    # no units at all: decided from the ratio to the standard-atmosphere height
    for kind in ("geopotential", "height"):
        raw = raw_variant(base, z_kind=kind, std=False)
        del raw["z"].attrs["units"]
        d = open_run(write(raw, tmp_path / f"nounits_{kind}.nc"))
        np.testing.assert_allclose(d["z"].values, b["z"].values, rtol=1e-12)


def test_rh_fraction_and_percent_and_missing_units(tmp_path, base):
    pct = open_run(write(raw_variant(base, humidity="rh", unit_of={"rh": "%"}), tmp_path / "p.nc"))
    frac = open_run(write(raw_variant(base, humidity="rh", unit_of={"rh": "1"}), tmp_path / "f.nc"))
    np.testing.assert_allclose(pct["td"].values, frac["td"].values, rtol=1e-12)
    raw = raw_variant(base, humidity="rh", unit_of={"rh": "%"})
    del raw["r"].attrs["units"]  # values up to 100: percent (documented rule)
    nou = open_run(write(raw, tmp_path / "n.nc"))
    np.testing.assert_allclose(nou["td"].values, pct["td"].values, rtol=1e-12)
    raw = raw_variant(base, humidity="rh", unit_of={"rh": "(0 - 1)"})
    alias = open_run(write(raw, tmp_path / "alias.nc"))
    np.testing.assert_allclose(alias["td"].values, pct["td"].values, rtol=1e-12)


def test_supersaturation_gives_td_equal_t(tmp_path, base):
    raw = raw_variant(base, humidity="rh", unit_of={"rh": "%"})
    raw["r"][:] = 103.0
    got = open_run(write(raw, tmp_path / "sat.nc"), chunks=None)
    # RH clipped at 100 %: Bolton (1980) Eq. 10 inverted at e = es(T) gives T [pub]
    np.testing.assert_allclose(got["td"].values, got["t"].values, atol=1e-9)


# --------------------------------------------------------------------------- coordinates
def test_descending_latitude_flips_the_field(tmp_path, base):
    raw = raw_variant(base, lat_desc=True)
    got = open_run(write(raw, tmp_path / "desc.nc"), chunks=None)
    assert np.all(np.diff(got["lat"].values) > 0)
    np.testing.assert_array_equal(got["t"].values, base["t"].values)


def test_global_0_360_longitudes_become_minus180_180(tmp_path):
    lon = np.arange(0.0, 360.0, 30.0)
    base = synthetic_fields(lat=np.arange(-30.0, 31.0, 15.0), lon=lon, front=False)
    base["t"] = base["t"] + xr.DataArray(lon / 100.0, dims="lon")  # mark each column
    raw = raw_variant(base)
    got = open_run(write(raw, tmp_path / "g.nc"), chunks=None)
    np.testing.assert_allclose(got["lon"].values, np.arange(-180.0, 180.0, 30.0))
    # the column stored at 330 E is the one at -30
    np.testing.assert_allclose(got["t"].sel(lon=-30.0).values, base["t"].sel(lon=330.0).values)
    # a duplicated cyclic column (0 and 360 both stored) is dropped
    raw2 = xr.concat([raw, raw.isel(lon=[0]).assign_coords(lon=[360.0])], dim="lon")
    raw2["lon"].attrs = raw["lon"].attrs
    got2 = open_run(write(raw2, tmp_path / "g2.nc"), chunks=None)
    np.testing.assert_allclose(got2["lon"].values, np.arange(-180.0, 180.0, 30.0))


@pytest.mark.parametrize("stored", ["0..360", "-180..180 wrapped", "descending"])
def test_dateline_domain_is_contiguous(tmp_path, stored):
    east = np.arange(170.0, 190.01, 2.0)  # 170E .. 170W
    base = synthetic_fields(lat=np.arange(-50.0, -35.0, 2.5), lon=east)
    base["t"] = base["t"] + xr.DataArray(east / 100.0, dims="lon")
    raw = raw_variant(base)
    if stored == "0..360":
        raw = raw.assign_coords(lon=("lon", east % 360.0, raw["lon"].attrs))
    elif stored == "-180..180 wrapped":
        raw = raw.assign_coords(lon=("lon", (east + 180.0) % 360.0 - 180.0, raw["lon"].attrs))
    else:
        raw = raw.isel(lon=slice(None, None, -1))
        raw = raw.assign_coords(
            lon=("lon", (raw["lon"].values + 180.0) % 360.0 - 180.0, raw["lon"].attrs)
        )
    got = open_run(write(raw, tmp_path / "dl.nc"), chunks=None)
    # documented choice: western edge in -180..180, then eastward past 180
    np.testing.assert_allclose(got["lon"].values, east)
    np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


def test_regional_domain_west_of_greenwich_stored_0_360(tmp_path):
    lon = np.arange(300.0, 330.1, 5.0)
    base = synthetic_fields(lat=np.arange(40.0, 56.0, 5.0), lon=lon - 360.0)
    raw = raw_variant(base, lon_360=True)
    got = open_run(write(raw, tmp_path / "w.nc"))
    np.testing.assert_allclose(got["lon"].values, lon - 360.0)


def test_level_aliases_and_pa_units(tmp_path, base):
    for name, unit in (
        ("isobaricInhPa", "hPa"),
        ("plev", "Pa"),
        ("lev", "mbar"),
        ("pressure", "Pa"),
    ):
        raw = raw_variant(base, level_name=name, level_unit=unit, level_ascending=True)
        got = open_run(write(raw, tmp_path / f"{name}.nc"))
        np.testing.assert_allclose(got["level"].values, [1000.0, 925.0, 850.0, 700.0, 500.0])
        np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


def test_dimension_order_in_file_does_not_matter(tmp_path, base):
    raw = raw_variant(base, transpose=("lon", "lat", "level", "time"))
    got = open_run(write(raw, tmp_path / "tr.nc"))
    assert got["t"].dims == ("time", "level", "lat", "lon")
    np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


def test_cfgrib_style_time_step_valid_time(tmp_path, base):
    raw = raw_variant(base, time_style="cfgrib", names={"z": "gh"}, std=True)
    got = open_run(write(raw, tmp_path / "cfgrib.nc"))
    assert_canonical_equal(got, base)


def test_lead_time_with_reference_attribute(tmp_path, base):
    raw = raw_variant(base).drop_vars("forecast_reference_time")
    lead_h = (base["time"].values - base["reference_time"].values) / np.timedelta64(1, "h")
    raw = raw.rename({"time": "forecast_period"}).assign_coords(
        forecast_period=(
            "forecast_period",
            lead_h,
            {"units": "hours", "standard_name": "forecast_period"},
        )
    )
    raw.attrs["forecast_reference_time"] = "2027-01-14T00:00:00Z"
    got = open_run(write(raw, tmp_path / "lead.nc"))
    assert_canonical_equal(got, base)


def test_single_step_with_scalar_time(tmp_path, base):
    one = raw_variant(base.isel(time=[2])).isel(time=0)  # time becomes a scalar coordinate
    got = open_run(write(one, tmp_path / "one.nc"))
    assert got.sizes["time"] == 1
    assert got["time"].values[0] == base["time"].values[2]
    assert got.attrs["run"] == "2027-01-14T00Z"
    # accumulation since run start over 6 h -> mean rate [regr: conftest accumulates the rate]
    np.testing.assert_allclose(
        got["precip"].values[0], base["precip"].values[1:3].mean(axis=0), rtol=1e-9
    )


def test_three_by_three_grid_works(tmp_path):
    base = synthetic_fields(lat=[50.0, 51.0, 52.0], lon=[0.0, 1.0, 2.0])
    got = open_run(write(raw_variant(base), tmp_path / "tiny.nc"))
    assert got.sizes["lat"] == 3 and got.sizes["lon"] == 3


def test_regular_grid_given_as_2d_latlon_without_mapping(tmp_path, base):
    raw = raw_variant(base)
    lat2, lon2 = np.meshgrid(raw["lat"].values, raw["lon"].values, indexing="ij")
    raw = raw.rename({"lat": "rows", "lon": "cols"}).drop_vars(["rows", "cols"])
    raw = raw.assign_coords(
        lat=(("rows", "cols"), lat2, {"units": "degrees_north"}),
        lon=(("rows", "cols"), lon2, {"units": "degrees_east"}),
    )
    got = open_run(write(raw, tmp_path / "reg2d.nc"))
    assert got.attrs["grid"] == "latlon"
    np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


# --------------------------------------------------------------------------- precipitation
def _precip_file(tmp_path, base, amounts, name, bounds_lower=None, unit="kg m-2"):
    raw = raw_variant(base, precip=False)
    raw["precip"] = xr.DataArray(
        amounts,
        dims=("time", "lat", "lon"),
        attrs={"units": unit, "standard_name": "precipitation_amount", "cell_methods": "time: sum"},
    )
    enc = {}
    if bounds_lower is not None:
        bnds = np.stack([bounds_lower, base["time"].values], axis=1)
        raw["time_bnds"] = xr.DataArray(bnds, dims=("time", "nv"))
        raw["time"].attrs["bounds"] = "time_bnds"
        enc = {
            "time": {"units": "hours since 2027-01-14"},
            "time_bnds": {"units": "hours since 2027-01-14"},
        }
    return open_run(write(raw, tmp_path / name, encoding=enc), chunks=None)


def test_precip_accumulated_since_start_per_step_and_buckets(tmp_path):
    times = np.datetime64("2027-01-14T03:00") + np.arange(4) * np.timedelta64(3, "h")
    base = synthetic_fields(lat=[50.0, 51.0, 52.0], lon=[0.0, 1.0, 2.0], times=times)
    ones = np.ones((4, 3, 3))
    rate = np.array([1.0, 2.0, 0.5, 3.0])[:, None, None] * ones  # mm h-1 over each 3 h step
    per_step = rate * 3.0
    since_start = np.cumsum(per_step, axis=0)
    # run starts 03 h before the first valid time: the first step is known too
    got = _precip_file(tmp_path, base, since_start, "cum.nc")
    np.testing.assert_allclose(got["precip"].values, rate, rtol=1e-12)
    got = _precip_file(tmp_path, base, per_step, "step.nc")
    np.testing.assert_allclose(got["precip"].values, rate, rtol=1e-12)
    # 6-hour buckets restarting at 06 and 12 h, with CF time bounds
    lower = np.array(
        ["2027-01-14T00", "2027-01-14T00", "2027-01-14T06", "2027-01-14T06"], dtype="datetime64[ns]"
    )
    bucket = np.stack(
        [per_step[0], per_step[0] + per_step[1], per_step[2], per_step[2] + per_step[3]]
    )
    got = _precip_file(tmp_path, base, bucket, "bucket.nc", bounds_lower=lower)
    np.testing.assert_allclose(got["precip"].values, rate, rtol=1e-12)
    # metres of water: 1 m = 1000 mm [lib: pint]
    got = _precip_file(tmp_path, base, since_start / 1000.0, "m.nc", unit="m")
    np.testing.assert_allclose(got["precip"].values, rate, rtol=1e-9)
    assert pint_convert(1.0, "m", "mm") == 1000.0


def test_precip_flux_conversion_matches_pint(tmp_path, base):
    raw = raw_variant(base, precip=False)
    flux = np.full((4, base.sizes["lat"], base.sizes["lon"]), 2.5e-4)
    raw["prate"] = xr.DataArray(flux, dims=("time", "lat", "lon"), attrs={"units": "kg m-2 s-1"})
    got = open_run(write(raw, tmp_path / "flux.nc"))
    # kg m-2 s-1 of water = mm s-1 (density 1000 kg m-3): pint gives mm/h [lib]
    want = pint_convert(2.5e-4, "mm/s", "mm/h")
    np.testing.assert_allclose(got["precip"].values, want, rtol=1e-12)


# --------------------------------------------------------------------------- ensembles
def test_member_dimension_names_and_selection(tmp_path):
    base = synthetic_fields(lat=[50.0, 51.0, 52.0, 53.0], lon=[0.0, 1.0, 2.0], members=3)
    for name in ("number", "realization", "ens"):
        raw = raw_variant(base).rename({"member": name})
        got = open_run(write(raw, tmp_path / f"{name}.nc"))
        assert got["t"].dims == ("member", "time", "level", "lat", "lon")
        np.testing.assert_array_equal(got["member"].values, [0, 1, 2])
        np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)
    one = open_run(tmp_path / "ens.nc", member=2)
    assert "member" not in one["t"].dims and int(one["member"]) == 2
    np.testing.assert_allclose(one["t"].values, base["t"].isel(member=2).values, rtol=1e-12)


def test_one_file_per_member_is_combined(tmp_path):
    base = synthetic_fields(lat=[50.0, 51.0, 52.0], lon=[0.0, 1.0, 2.0], members=2)
    for m in (1, 0):
        raw = raw_variant(base.isel(member=m)).assign_coords(realization=m)
        raw["realization"].attrs["standard_name"] = "realization"
        write(raw, tmp_path / "ens" / f"mem{m}.nc")
    got = open_run(tmp_path / "ens")
    np.testing.assert_array_equal(got["member"].values, [0, 1])
    np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


# --------------------------------------------------------------------------- projected grids
def _projected_file(
    tmp_path,
    gm,
    x,
    y,
    name,
    *,
    native_deg=False,
    wind=None,
    grid_relative=False,
    with_latlon=True,
    std_wind=True,
):
    crs = CRS.from_cf(gm)
    xx, yy = np.meshgrid(x, y)
    if native_deg:
        geo = CRS.from_proj4("+proj=longlat +R=6371229 +no_defs")
    else:
        geo = CRS.from_proj4("+proj=longlat +R=6371229 +no_defs")
    lon2, lat2 = Transformer.from_crs(crs, geo, always_xy=True).transform(xx, yy)
    nt, nl = 2, 3
    lev = np.array([1000.0, 850.0, 500.0])
    shape = (nt, nl, y.size, x.size)
    t = np.broadcast_to((300.0 - 0.6 * (lat2 - 45.0))[None, None], shape).copy()
    z = np.broadcast_to(
        (44330.8 * (1 - (lev / 1013.25) ** 0.190263))[None, :, None, None], shape
    ).copy()
    ue, vn = wind if wind is not None else (np.full(shape, 10.0), np.zeros(shape))
    data = {
        "t": (("time", "level", "y", "x"), t, {"units": "K", "standard_name": "air_temperature"}),
        "td": (
            ("time", "level", "y", "x"),
            t - 5.0,
            {"units": "K", "standard_name": "dew_point_temperature"},
        ),
        "z": (
            ("time", "level", "y", "x"),
            z,
            {"units": "m", "standard_name": "geopotential_height"},
        ),
    }
    if grid_relative:
        data["u"] = (("time", "level", "y", "x"), ue, {"units": "m s-1", "standard_name": "x_wind"})
        data["v"] = (("time", "level", "y", "x"), vn, {"units": "m s-1", "standard_name": "y_wind"})
        if not std_wind:
            for k in ("u", "v"):
                data[k][2].pop("standard_name")
                data[k][2]["GRIB_uvRelativeToGrid"] = 1
    else:
        data["u"] = (
            ("time", "level", "y", "x"),
            ue,
            {"units": "m s-1", "standard_name": "eastward_wind"},
        )
        data["v"] = (
            ("time", "level", "y", "x"),
            vn,
            {"units": "m s-1", "standard_name": "northward_wind"},
        )
    ds = xr.Dataset({k: xr.Variable(*v) for k, v in data.items()})
    for k in ds.data_vars:
        ds[k].attrs["grid_mapping"] = "crs_info"
    xs = (
        {"units": "degrees", "standard_name": "grid_longitude"}
        if native_deg
        else {"units": "km", "standard_name": "projection_x_coordinate"}
    )
    ys = (
        {"units": "degrees", "standard_name": "grid_latitude"}
        if native_deg
        else {"units": "km", "standard_name": "projection_y_coordinate"}
    )
    coords = {
        "time": np.datetime64("2027-01-14T00:00") + np.arange(nt) * np.timedelta64(6, "h"),
        "level": ("level", lev, {"units": "hPa"}),
        "x": ("x", x if native_deg else x / 1000.0, xs),
        "y": ("y", y if native_deg else y / 1000.0, ys),
    }
    if with_latlon:
        coords["lat"] = (("y", "x"), lat2, {"units": "degrees_north", "standard_name": "latitude"})
        coords["lon"] = (("y", "x"), lon2, {"units": "degrees_east", "standard_name": "longitude"})
    ds = ds.assign_coords(coords)
    ds["crs_info"] = xr.DataArray(0, attrs=gm)
    return write(ds, tmp_path / name), crs, lon2, lat2


LCC = dict(
    grid_mapping_name="lambert_conformal_conic",
    standard_parallel=[50.0, 50.0],
    longitude_of_central_meridian=10.0,
    latitude_of_projection_origin=50.0,
    earth_radius=6371229.0,
)
PS = dict(
    grid_mapping_name="polar_stereographic",
    straight_vertical_longitude_from_pole=-45.0,
    latitude_of_projection_origin=90.0,
    standard_parallel=60.0,
    earth_radius=6371229.0,
)
ROT = dict(
    grid_mapping_name="rotated_latitude_longitude",
    grid_north_pole_latitude=40.0,
    grid_north_pole_longitude=-170.0,
    earth_radius=6371229.0,
)


@pytest.mark.parametrize("gm", [LCC, PS], ids=["lambert", "polar_stereographic"])
def test_projected_grid_spacing_and_map_factor(tmp_path, gm):
    x = np.arange(-600e3, 600.1e3, 100e3)
    y = np.arange(-400e3, 400.1e3, 100e3)[::-1]  # stored north to south
    path, crs, lon2, lat2 = _projected_file(tmp_path, gm, x, y, "p.nc")
    got = open_run(path)
    assert got.attrs["grid"] == "projected"
    assert got["t"].dims == ("time", "level", "y", "x")
    assert got.attrs["dx_m"] == pytest.approx(100e3) and got.attrs["dy_m"] == pytest.approx(100e3)
    assert np.all(np.diff(got["y"].values) > 0)
    np.testing.assert_allclose(got["lat"].values, lat2[::-1], atol=1e-9)
    # map factor against pyproj's own scale factor (Snyder 1987 formulas inside PROJ) [lib]
    fac = Proj(crs).get_factors(got["lon"].values, got["lat"].values)
    np.testing.assert_allclose(got["map_factor"].values, fac.parallel_scale, rtol=1e-5)
    # physical spacing between neighbours from pyproj Geod [lib] ~ dx / map factor
    g = Geod(a=6371229.0, b=6371229.0)
    _, _, d = g.inv(
        got["lon"].values[:, :-1],
        got["lat"].values[:, :-1],
        got["lon"].values[:, 1:],
        got["lat"].values[:, 1:],
    )
    mf_mid = 0.5 * (got["map_factor"].values[:, 1:] + got["map_factor"].values[:, :-1])
    np.testing.assert_allclose(d, 100e3 / mf_mid, rtol=2e-3)


def test_projected_grid_latlon_computed_when_absent(tmp_path):
    x = np.arange(-300e3, 300.1e3, 100e3)
    y = np.arange(-300e3, 300.1e3, 100e3)
    path, crs, lon2, lat2 = _projected_file(tmp_path, LCC, x, y, "nolatlon.nc", with_latlon=False)
    got = open_run(path)
    np.testing.assert_allclose(got["lat"].values, lat2, atol=1e-8)  # pyproj [lib]
    np.testing.assert_allclose(got["lon"].values, lon2, atol=1e-8)


def test_rotated_pole_grid(tmp_path):
    rx = np.arange(-5.0, 5.01, 0.5)
    ry = np.arange(-4.0, 4.01, 0.5)
    path, crs, lon2, lat2 = _projected_file(tmp_path, ROT, rx, ry, "rot.nc", native_deg=True)
    got = open_run(path)
    assert got.attrs["grid"] == "projected"
    # spacing along the rotated equator: 0.5 degree of a great circle of R = 6371229 m;
    # pyproj Geod between two neighbours on it [lib]
    g = Geod(a=6371229.0, b=6371229.0)
    tr = Transformer.from_crs(
        crs, CRS.from_proj4("+proj=longlat +R=6371229 +no_defs"), always_xy=True
    )
    (lo1, lo2), (la1, la2) = tr.transform([0.0, 0.5], [0.0, 0.0])
    _, _, d = g.inv(lo1, la1, lo2, la2)
    assert got.attrs["dx_m"] == pytest.approx(d, rel=1e-9)
    assert got.attrs["dy_m"] == pytest.approx(d, rel=1e-9)
    # not conformal in the kit's sense: separate factors; along x it is 1 / cos(rotated lat)
    mfx = got["map_factor_x"].values
    np.testing.assert_allclose(
        mfx, 1.0 / np.cos(np.deg2rad(got["rlat"].values))[:, None] * np.ones_like(mfx), rtol=1e-6
    )
    np.testing.assert_allclose(got["map_factor_y"].values, 1.0, rtol=1e-6)


def test_grid_relative_winds_rotated_lambert(tmp_path):
    """An earth-relative westerly of 10 m/s stored grid-relative comes back as 10 m/s east."""
    x = np.arange(-800e3, 800.1e3, 200e3)
    y = np.arange(-600e3, 600.1e3, 200e3)
    crs = CRS.from_cf(LCC)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = Transformer.from_crs(
        crs, CRS.from_proj4("+proj=longlat +R=6371229 +no_defs"), always_xy=True
    ).transform(xx, yy)
    # Snyder (1987), USGS Prof. Paper 1395, Lambert conformal: convergence = n (lon - lon0),
    # n = sin(phi1) for one standard parallel [pub, equation number from memory]
    theta = np.deg2rad(np.sin(np.deg2rad(50.0)) * (lon2 - 10.0))
    # pyproj's meridian convergence agrees [lib]
    mc = Proj(crs).get_factors(lon2, lat2).meridian_convergence
    np.testing.assert_allclose(np.rad2deg(theta), mc, atol=1e-6)
    ue, vn = 10.0, 0.0
    # earth -> grid: the grid axes are turned clockwise by theta from east/north
    ug = ue * np.cos(theta) - vn * np.sin(theta)
    vg = ue * np.sin(theta) + vn * np.cos(theta)
    shape = (2, 3, y.size, x.size)
    wind = (np.broadcast_to(ug, shape).copy(), np.broadcast_to(vg, shape).copy())
    for std_wind in (True, False):
        path, *_ = _projected_file(
            tmp_path,
            LCC,
            x,
            y,
            f"gr{std_wind}.nc",
            wind=wind,
            grid_relative=True,
            std_wind=std_wind,
        )
        got = open_run(path, chunks=None)
        np.testing.assert_allclose(got["u"].values, 10.0, atol=1e-6)
        np.testing.assert_allclose(got["v"].values, 0.0, atol=1e-6)
        assert "rotated" in got.attrs["wind_rotation"]
    # earth-relative winds on the same grid are left alone
    path, *_ = _projected_file(tmp_path, LCC, x, y, "er.nc", wind=wind, grid_relative=False)
    got = open_run(path, chunks=None)
    np.testing.assert_allclose(got["u"].values, wind[0], atol=1e-12)


def test_grid_relative_winds_rotated_polar_stereographic(tmp_path):
    # the pole itself (x = y = 0) has no east/north: keep it between grid points
    x = np.arange(-1350e3, 1350.1e3, 300e3)
    y = np.arange(-1350e3, 1350.1e3, 300e3)
    crs = CRS.from_cf(PS)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = Transformer.from_crs(
        crs, CRS.from_proj4("+proj=longlat +R=6371229 +no_defs"), always_xy=True
    ).transform(xx, yy)
    # pyproj meridian convergence (angle of grid north from true north) [lib]
    theta = np.deg2rad(Proj(crs).get_factors(lon2, lat2).meridian_convergence)
    ue, vn = 3.0, -7.0
    ug = ue * np.cos(theta) - vn * np.sin(theta)
    vg = ue * np.sin(theta) + vn * np.cos(theta)
    shape = (2, 3, y.size, x.size)
    wind = (np.broadcast_to(ug, shape).copy(), np.broadcast_to(vg, shape).copy())
    path, *_ = _projected_file(tmp_path, PS, x, y, "ps.nc", wind=wind, grid_relative=True)
    got = open_run(path, chunks=None)
    np.testing.assert_allclose(got["u"].values, ue, atol=1e-5)
    np.testing.assert_allclose(got["v"].values, vn, atol=1e-5)


# --------------------------------------------------------------------------- in memory
def test_to_canonical_on_an_open_dataset(base):
    raw = raw_variant(base, names={"t": "ta"})
    got = to_canonical(raw, source="memory")
    assert_canonical_equal(got, base)
    with pytest.raises(InputError, match="memory"):
        to_canonical(raw.drop_vars("ta"), source="memory")


# --------------------------------------------------------------------------- property based
_T_NAMES = ["t", "ta", "T", "TMP", "temp"]
_U_NAMES = ["u", "ua", "U", "UGRD"]
_V_NAMES = ["v", "va", "V", "VGRD"]
_Z_NAMES = ["z", "gh", "zg", "HGT"]
_LEVEL_NAMES = ["level", "isobaricInhPa", "pressure", "plev", "lev", "pressure_level"]
_HUM = [
    ("td", "d", "K"),
    ("td", "dpt", "degC"),
    ("rh", "r", "%"),
    ("rh", "hur", "1"),
    ("q", "q", "kg kg-1"),
    ("q", "hus", "g kg-1"),
]


@settings(
    max_examples=12,
    deadline=None,
    derandomize=True,
    print_blob=True,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(
    std=st.booleans(),
    tname=st.sampled_from(_T_NAMES),
    uname=st.sampled_from(_U_NAMES),
    vname=st.sampled_from(_V_NAMES),
    zname=st.sampled_from(_Z_NAMES),
    hum=st.sampled_from(_HUM),
    t_unit=st.sampled_from(["K", "degC", "degF"]),
    wind_unit=st.sampled_from(["m s-1", "knots", "km h-1"]),
    z_kind=st.sampled_from(["height", "geopotential"]),
    level_name=st.sampled_from(_LEVEL_NAMES),
    level_unit=st.sampled_from(["hPa", "Pa", "mbar"]),
    level_ascending=st.booleans(),
    lat_desc=st.booleans(),
    lon_360=st.booleans(),
    order=st.permutations(["time", "level", "lat", "lon"]),
)
def test_property_any_accepted_layout_gives_the_same_canonical_dataset(
    tmp_path_factory,
    std,
    tname,
    uname,
    vname,
    zname,
    hum,
    t_unit,
    wind_unit,
    z_kind,
    level_name,
    level_unit,
    level_ascending,
    lat_desc,
    lon_360,
    order,
):
    base = synthetic_fields(
        lat=np.arange(40.0, 49.0, 2.0),
        lon=np.arange(-8.0, 4.1, 3.0),
        times=np.datetime64("2027-01-14T06:00") + np.arange(2) * np.timedelta64(6, "h"),
    )
    role, hname, hunit = hum
    # names that are also surface/other roles in some tables must stay distinguishable
    names = {"t": tname, "u": uname, "v": vname, "z": zname, role: hname}
    if len(set(names.values())) < len(names):
        return
    raw = raw_variant(
        base,
        std=std,
        names=names,
        humidity=role,
        unit_of={
            "t": t_unit,
            "u": wind_unit,
            "v": wind_unit,
            role: hunit,
            **({"td": hunit} if role == "td" else {}),
        },
        z_kind=z_kind,
        level_name=level_name,
        level_unit=level_unit,
        level_ascending=level_ascending,
        lat_desc=lat_desc,
        lon_360=lon_360,
        transpose=order,
    )
    path = write(raw, tmp_path_factory.mktemp("prop") / "x.nc")
    got = open_run(path, chunks=None)
    assert_canonical_equal(got, base, skip=("td", "precip"), rtol=1e-6, atol=1e-6)
    # humidity: exact for td, MetPy-vs-Bolton tolerance for rh and q [lib]
    np.testing.assert_allclose(got["td"].values, base["td"].values, atol=0.05)
    np.testing.assert_allclose(got["precip"].values[1:], base["precip"].values[1:], rtol=1e-9)


# --------------------------------------------------------------------------- the sample event
SAMPLE = REPO / "sample_grids"


def test_sample_event_runs_and_analyses_open():
    """[regr] the invented sample event (sample_grids/, truth.json) opens canonically.

    The dew point derived from the files' relative humidity is checked against
    MetPy [lib] (Bolton 1980 Eq. 10 vs MetPy's saturation formula: 0.05 K).
    """
    truth = json.loads((SAMPLE / "truth.json").read_text())
    valid = np.array([np.datetime64(v.rstrip("Z"), "ns") for v in truth["valid_times"]])
    for name, info in truth["sets"].items():
        ds = open_run(SAMPLE / info["folder"])
        ref = np.datetime64(info["reference_time"].rstrip("Z"), "ns")
        assert ds["reference_time"].values == ref
        assert ds.attrs["run"] == run_label(ref)
        if name != "analyses":
            assert ds.attrs["run"] == name
        np.testing.assert_array_equal(ds["time"].values, valid)
        np.testing.assert_allclose(ds["level"].values, truth["levels_hpa"])
        # the event writes its orography (surface_altitude): canonical zsfc
        assert list(ds.data_vars) == [*CANON[:6], "zsfc", *CANON[6:]]
        assert ds["t"].dims == ("time", "level", "lat", "lon")
        assert np.all(np.diff(ds["lat"].values) > 0) and np.all(np.diff(ds["lon"].values) > 0)
        step = ds.isel(time=4, level=[0, 2, 5], lat=slice(None, None, 8), lon=slice(None, None, 8))
        raw = xr.open_dataset(sorted((SAMPLE / info["folder"]).glob("*.nc"))[4])
        rh = raw["rh"].isel(level=[0, 2, 5], lat=slice(None, None, 8), lon=slice(None, None, 8))
        want = mpcalc.dewpoint_from_relative_humidity(
            step["t"].values * units.K, np.clip(rh.values[0] / 100.0, 0.001, 1.0)
        ).m_as("K")
        np.testing.assert_allclose(step["td"].values, want, atol=0.05)
        raw.close()
        rate = ds["precip"].values
        assert np.nanmin(rate) >= 0.0
        first_lead_h = (valid[0] - ref) / np.timedelta64(1, "h")
        # accumulation since the run start: the first step has a rate only if the
        # first valid time is after the run start
        assert np.all(np.isnan(rate[0])) == (first_lead_h == 0)


# --------------------------------------------------------------------------- more layouts
def test_single_level_file_with_scalar_pressure(tmp_path, base):
    raw = raw_variant(base).isel(level=2)  # 850 hPa kept as a scalar coordinate
    got = open_run(write(raw, tmp_path / "850.nc"), chunks=None)
    np.testing.assert_allclose(got["level"].values, [850.0])
    np.testing.assert_allclose(got["t"].values, base["t"].sel(level=[850.0]).values, rtol=1e-12)
    # near-surface fields share the scalar 850 hPa coordinate but stay near-surface
    np.testing.assert_allclose(got["t2m"].values, base["t2m"].values, rtol=1e-12)
    np.testing.assert_allclose(got["u10"].values, base["u10"].values, rtol=1e-12)


def test_humidity_on_fewer_levels_is_put_on_the_temperature_levels(tmp_path, base):
    raw = raw_variant(base, humidity="rh", unit_of={"rh": "%"}, precip=False)
    rh = raw["r"].isel(level=[0, 1, 2]).rename({"level": "level_rh"})
    raw = raw.drop_vars("r")
    raw["r"] = rh
    got = open_run(write(raw, tmp_path / "rh3.nc"), chunks=None)
    assert got["td"].dims == ("time", "level", "lat", "lon")
    assert np.all(np.isfinite(got["td"].sel(level=[1000.0, 925.0, 850.0]).values))
    assert np.all(np.isnan(got["td"].sel(level=[700.0, 500.0]).values))


def test_noleap_calendar_times_are_mapped(tmp_path, base):
    raw = raw_variant(base)
    path = tmp_path / "noleap.nc"
    enc = {"time": {"units": "hours since 2027-01-14 00:00", "calendar": "noleap"}}
    raw.to_netcdf(path, encoding=enc)
    # mapped onto the real calendar, with xarray's warning about it passed on
    with pytest.warns(RuntimeWarning, match="non-standard calendar"):
        got = open_run(path)
    np.testing.assert_array_equal(got["time"].values, base["time"].values)


def _rotated_x_axis_angle(crs, rx, ry):
    """Angle of the rotated grid's x axis, counter-clockwise from true east [rad].

    Exact spherical geometry: the rotation matrix from rotated to true
    Cartesian axes is built from three points transformed by pyproj [lib];
    the rotated-east unit vector is rotated and projected on true east/north.
    """
    geo = CRS.from_proj4("+proj=longlat +R=6371229 +no_defs")
    tr = Transformer.from_crs(crs, geo, always_xy=True)

    def vec(lon, lat):
        lo, la = np.deg2rad(lon), np.deg2rad(lat)
        return np.array([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)])

    rot = np.stack(
        [
            vec(*tr.transform(0.0, 0.0)),
            vec(*tr.transform(90.0, 0.0)),
            vec(*tr.transform(0.0, 90.0)),
        ],
        axis=1,
    )
    lr = np.deg2rad(rx)
    east_r = np.stack([-np.sin(lr), np.cos(lr), np.zeros_like(lr)])
    e = np.tensordot(rot, east_r, axes=1)
    lon, lat = tr.transform(rx, ry)
    lo, la = np.deg2rad(lon), np.deg2rad(lat)
    east = np.stack([-np.sin(lo), np.cos(lo), np.zeros_like(lo)])
    north = np.stack([-np.sin(la) * np.cos(lo), -np.sin(la) * np.sin(lo), np.cos(la)])
    return np.arctan2((e * north).sum(0), (e * east).sum(0))


def test_grid_relative_winds_rotated_pole(tmp_path):
    rx = np.arange(-10.0, 10.01, 2.5)
    ry = np.arange(-8.0, 8.01, 2.0)
    crs = CRS.from_cf(ROT)
    xx, yy = np.meshgrid(rx, ry)
    alpha = _rotated_x_axis_angle(crs, xx, yy)
    # the rotated meridian through the pole (rlon = 0) is a true meridian: no turn [pub, geometry]
    np.testing.assert_allclose(alpha[:, rx == 0.0], 0.0, atol=1e-9)
    ue, vn = -4.0, 9.0
    # earth -> grid components: project on the grid axes (x at alpha from east)
    ug = ue * np.cos(alpha) + vn * np.sin(alpha)
    vg = -ue * np.sin(alpha) + vn * np.cos(alpha)
    shape = (2, 3, ry.size, rx.size)
    wind = (np.broadcast_to(ug, shape).copy(), np.broadcast_to(vg, shape).copy())
    path, *_ = _projected_file(
        tmp_path, ROT, rx, ry, "rotw.nc", native_deg=True, wind=wind, grid_relative=True
    )
    got = open_run(path, chunks=None)
    np.testing.assert_allclose(got["u"].values, ue, atol=1e-5)
    np.testing.assert_allclose(got["v"].values, vn, atol=1e-5)


def test_precipitation_missing_at_lead_zero(tmp_path, make_latlon_run):
    folder, want = make_latlon_run(name="nolead0")
    first = folder / "step_000.nc"
    ds = xr.open_dataset(first).load()
    ds.close()
    ds.drop_vars("precip").to_netcdf(first)
    got = open_run(folder, chunks=None)
    # an accumulation is 0 at the run start by definition, so the next step is complete
    np.testing.assert_allclose(got["precip"].values[1:], want["precip"].values[1:], rtol=1e-12)
    assert np.all(np.isnan(got["precip"].values[0]))


def test_large_files_are_chunked_one_step_at_a_time(tmp_path, base, monkeypatch):
    import kit.io.netcdf as netcdf

    path = write(raw_variant(base), tmp_path / "big.nc")
    monkeypatch.setattr(netcdf, "SMALL_FILE_BYTES", 0)  # treat the file as large
    got = open_run(path)
    # one valid time per chunk: the value checks read the first step only
    assert got["t"].chunks[0] == (1,) * base.sizes["time"]
    assert isinstance(got["t"].data, dask.array.Array)


def test_short_name_not_taken_when_standard_name_or_units_say_otherwise(tmp_path, base):
    """ERA5's 'd' is divergence: a short-name match must not make it the dew point."""
    raw = raw_variant(base, humidity="rh", unit_of={"rh": "%"}, std=False)
    div = xr.zeros_like(raw["t"]) + 1e-5
    raw["d"] = div.assign_attrs(units="s**-1", standard_name="divergence_of_wind")
    got = open_run(write(raw, tmp_path / "div.nc"))
    assert "td<-" not in got.attrs["variables_from"] and "rh<-r" in got.attrs["variables_from"]
    np.testing.assert_allclose(got["td"].values, base["td"].values, atol=0.05)  # MetPy [lib]
    raw["d"].attrs = {"units": "s-1"}  # no standard name, units still say it is not a dew point
    got = open_run(write(raw, tmp_path / "div2.nc"))
    assert "rh<-r" in got.attrs["variables_from"]


def test_grads_style_short_names(tmp_path, base):
    """GrADS-style names (tmpprs, rhprs, ugrdprs, vgrdprs, hgtprs, prmslmsl, apcpsfc)."""
    raw = raw_variant(
        base,
        std=False,
        humidity="rh",
        names={
            "t": "tmpprs",
            "rh": "rhprs",
            "u": "ugrdprs",
            "v": "vgrdprs",
            "z": "hgtprs",
            "mslp": "prmslmsl",
            "t2m": "tmp2m",
            "td2m": "dpt2m",
            "u10": "ugrd10m",
            "v10": "vgrd10m",
            "precip": "apcpsfc",
        },
        level_name="lev",
        level_unit="millibar",
    )
    got = open_run(write(raw, tmp_path / "grads.nc"))
    assert_canonical_equal(got, base, skip=("td",))


def test_folder_of_analyses_each_its_own_reference_time(tmp_path, base):
    for i in range(base.sizes["time"]):
        one = raw_variant(base.isel(time=[i]), precip=False)
        one = one.assign_coords(forecast_reference_time=base["time"].values[i])
        write(one, tmp_path / "an" / f"an_{i}.nc")
    got = open_run(tmp_path / "an")
    assert got.attrs["kind"] == "analyses"
    assert got["reference_time"].values == base["time"].values[0]
    np.testing.assert_array_equal(got["time"].values, base["time"].values)
    np.testing.assert_allclose(got["t"].values, base["t"].values, rtol=1e-12)


def test_loader_units_are_the_stated_contract():
    # issue 17: the unit contract is stated in the tests (conftest), not imported from kit
    from conftest import CANONICAL_UNITS as STATED

    from kit.io.runs import CANONICAL_UNITS

    assert CANONICAL_UNITS == STATED
