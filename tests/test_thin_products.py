"""Thin runs through every site product: arrivals, sections and the shift (issue 15).

A thin run has no humidity on its pressure levels (and perhaps no winds, no
mean-sea-level pressure). Its products must still be made, in theta where
theta-w would be used, with nothing invented for humidity, geostrophic winds
named as such, and every product saying what the run lacks and what was done
instead (``ds.attrs["thin"]``).

Material:

- the real ERA5 10-member sample (tests/real_data/README.md): analyses of t and
  z at 850 and 500 hPa only, so no humidity, no wind, no MSLP and only two
  levels. A regression case, never truth; the sites are INVENTED names placed
  inside its domain (21-78 N, 90 W-60 E, read from the file);
- the invented synthetic run of tests/conftest.py (``synthetic_fields``,
  written as CF by ``to_cf``/``write_cf``) with its dew points dropped (and, for
  the geostrophic case, its winds too). Invented weather, plumbing only.

Checks are labelled as in DEVELOPERS.md: [pub] published formula, [lib]
independent library, [regression] values of these files.
"""

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from conftest import synthetic_fields, to_cf, write_cf
from pypdf import PdfReader

import kit
from kit import CAUTION
from kit.charts.sections import section_figure
from kit.charts.style import stamp_texts, thin_line
from kit.charts.timelines import timeline_figure
from kit.cli import main
from kit.products.arrivals import arrival_table
from kit.products.sections import section
from kit.science import thermo
from kit.science.passages import hours_since_epoch
from kit.science.sections import check_section_levels, section_between

ERA5 = Path(__file__).resolve().parent / "real_data" / "era5_enda_members_20170101.nc"
#: invented sites inside the ERA5 window, near the sample's cold fronts of 1-2 Jan 2017
ERA5_SITES = pd.DataFrame({
    "name": ["Cobble Reach", "Norrin Flats", "Tassock Shoal"],
    "lat": [45.0, 55.0, 40.0],
    "lon": [-55.0, -60.0, -65.0],
    "elevation_m": [10, 30, 5],
})
#: invented sites of the synthetic run; its warm front (zone centre at 11 W at 00Z,
#: moving east 0.25 degree per hour) crosses the first two, at about 08Z and 16Z
SYN_SITES = pd.DataFrame({
    "name": ["Brindle Moor", "Sedge Hollow", "Quillan Head"],
    "lat": [50.0, 47.0, 55.0],
    "lon": [-9.0, -7.0, 5.0],
    "elevation_m": [40, 15, 20],
})
SYN_TIME = "2027-01-14T12:00Z"
#: the columns a run without humidity must leave empty (nothing invented)
HUMIDITY_COLUMNS = [
    "dewpoint_change_c",
    "thetaw_change_k",
    "wet_bulb_freezing_level_before_m",
    "wet_bulb_freezing_level_after_m",
    "cloud_base_before_ft_agl",
    "cloud_base_min_ft_agl",
    "cloud_base_min_utc",
    "cloud_base_low_ft_agl",
    "cloud_base_high_ft_agl",
]
KAPPA_BOLTON = 0.2854  # Bolton (1980), Eq. 7: theta = T (1000 / p) ** 0.2854


# --------------------------------------------------------------------------- material
@pytest.fixture(scope="module")
def era5_sites(tmp_path_factory):
    path = tmp_path_factory.mktemp("era5_sites") / "sites.csv"
    ERA5_SITES.to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def synthetic(tmp_path_factory):
    """The conftest run three ways: full, without humidity, without humidity and wind."""
    root = tmp_path_factory.mktemp("thin_synthetic")
    ref = np.datetime64("2027-01-14T00:00", "ns")
    ds = synthetic_fields(lat=np.arange(40.0, 60.01, 1.0), lon=np.arange(-20.0, 10.01, 1.0),
                          times=ref + np.arange(0, 25, 3) * np.timedelta64(1, "h"))
    cf = to_cf(ds)
    paths = {
        "full": write_cf(cf, root / "full"),
        "thin": write_cf(cf.drop_vars(["td", "td2m"]), root / "thin"),
        "bare": write_cf(cf.drop_vars(["td", "td2m", "u", "v", "u10", "v10"]), root / "bare"),
    }
    SYN_SITES.to_csv(root / "sites.csv", index=False)
    return root, paths


def _read_csv(path):
    return pd.read_csv(path, keep_default_na=False)


def _empty(column):
    return all(str(v) == "" for v in column)


def _theta_change(series, passage_utc, level=850.0, window_h=3.0):
    """theta after minus before the passage, straight from t [K] (Bolton 1980, Eq. 7)."""
    t = series["t"].sel(level=level).values.astype(float)
    theta = t * (1000.0 / level) ** KAPPA_BOLTON
    hours = hours_since_epoch(series["time"].values)
    h = float(hours_since_epoch(np.datetime64(pd.Timestamp(passage_utc.rstrip("Z")))))
    return np.interp(h + window_h, hours, theta) - np.interp(h - window_h, hours, theta)


# ------------------------------------------------------------------- ERA5: arrivals
@pytest.fixture(scope="module")
def era5_arrivals(era5_sites, tmp_path_factory):
    out = tmp_path_factory.mktemp("era5_arrivals")
    csv, page, timelines = out / "arrivals.csv", out / "arrivals.html", out / "timelines"
    assert main(["arrivals", str(ERA5), "--sites", str(era5_sites), "--out", str(csv),
                 "--timelines", str(timelines)]) == 0
    assert main(["arrivals", str(ERA5), "--sites", str(era5_sites), "--out", str(page)]) == 0
    return _read_csv(csv), page.read_text(), timelines


@pytest.fixture(scope="module")
def era5_analysis():
    ds = kit.open_run(ERA5)
    analysis = kit.analyse(ds)
    table, series = arrival_table(analysis, ERA5_SITES, return_series=True)
    return ds, analysis, table, series


def test_era5_arrivals_keep_every_member_and_say_thin(era5_arrivals):
    table, _, _ = era5_arrivals
    assert set(ERA5_SITES["name"]) == set(table["site"])
    for _, rows in table.groupby("site"):
        assert sorted(rows["member"].astype(int).unique()) == list(range(10))
    passed = table[table["passage_utc"] != ""]
    assert len(passed) >= 3  # [regression] 6 passages in the sample on these sites
    assert passed["runs_with_passage"].str.endswith("/10").all()  # spread over members
    assert (table["caution"] == CAUTION).all()
    thin = table["thin_run"].unique()
    assert len(thin) == 1
    assert "no humidity on pressure levels: fronts found in theta, not theta-w" in thin[0]
    assert "geostrophic wind from the heights" in thin[0]
    assert list(table.columns[-2:]) == ["thin_run", "caution"]


def test_era5_arrivals_invent_no_humidity(era5_arrivals):
    table, _, _ = era5_arrivals
    for column in HUMIDITY_COLUMNS:
        assert _empty(table[column]), column
    assert _empty(table["snow_risk"])  # needs a wet spell and a wet-bulb profile


def test_era5_thermal_change_is_theta(era5_arrivals, era5_analysis):
    table, _, _ = era5_arrivals
    _, analysis, api_table, series = era5_analysis
    assert analysis.settings.field == "theta"
    cols = list(table.columns)
    assert cols.index("theta_change_k") == cols.index("thetaw_change_k") + 1
    checked = 0
    for _, row in table[(table["passage_utc"] != "") & (table["theta_change_k"] != "")].iterrows():
        s = series[(row["run"], int(row["member"]), row["site"])]
        # [pub] Bolton (1980) Eq. 7 on the run's own 850 hPa temperature, linear in
        # time as the table is; the cell is rounded to 0.1 K
        expected = _theta_change(s, row["passage_utc"], float(row["level_hpa"]))
        assert float(row["theta_change_k"]) == pytest.approx(expected, abs=0.051)
        # the site series' theta is kit.science.thermo's
        np.testing.assert_allclose(
            s["theta"].values,
            thermo.potential_temperature(s["t"], s["level"].astype(float)).values, rtol=1e-12)
        checked += 1
    assert checked >= 3
    # the command and the API give the same table
    assert table["passage_utc"].tolist() == api_table["passage_utc"].tolist()


def test_era5_wind_cells_are_labelled_geostrophic(era5_arrivals, era5_analysis):
    table, _, _ = era5_arrivals
    ds, _, _, series = era5_analysis
    assert ds["u"].attrs["derived"] == "geostrophic"
    with_wind = table[table["wind_before_deg"] != ""]
    assert len(with_wind) >= 3
    assert with_wind["note"].str.contains("geostrophic wind at 850 hPa, not 10-m wind").all()
    # a row without wind cells says nothing about the wind
    assert not table[table["wind_before_deg"] == ""]["note"].str.contains("geostrophic").any()
    s = next(iter(series.values()))
    assert s.attrs["wind_from"] == "geostrophic wind at 850 hPa"
    # the stand-in is the run's geostrophic 850 hPa wind at the site, untouched
    np.testing.assert_allclose(s["wind_u_ms"].values, s["u"].sel(level=850.0).values)


def test_era5_html_page_says_thin_once(era5_arrivals):
    _, page, _ = era5_arrivals
    assert CAUTION in page
    assert page.count("Thin run 2017-01-01T00Z: no wind on pressure levels") == 1
    assert "<th>thin_run</th>" not in page  # said once above the table, not in every row
    assert "<th>theta_change_k</th>" in page


def test_era5_timelines_say_thin_and_draw_no_humidity(era5_arrivals, era5_analysis):
    _, _, timelines = era5_arrivals
    assert sorted(p.name for p in timelines.glob("*.png")) == [
        "timeline_cobble_reach.png", "timeline_norrin_flats.png", "timeline_tassock_shoal.png"]
    _, _, table, series = era5_analysis
    s = series[("2017-01-01T00Z", 0, "Norrin Flats")]
    fig = timeline_figure(s, table[table["site"] == "Norrin Flats"])
    texts = stamp_texts(fig)
    header = fig._frontshift["artists"]["thin"].get_text()
    assert header.startswith("Thin run: ") and "theta, not theta-w" in header
    assert "geostrophic\n[deg/kt]" in texts
    assert any("geostrophic wind at 850 hPa (the run has no wind), not 10-m wind" in t
               for t in texts)
    assert any(t.startswith("no humidity on the levels") for t in texts)
    ax_h = fig.axes[3]
    labels = [ln.get_label() for ln in ax_h.lines]
    assert "0 C level" in labels
    assert not any("wet-bulb" in lab or "cloud base" in lab for lab in labels)
    assert CAUTION in texts


# ------------------------------------------------------------------- ERA5: section
def test_era5_section_is_refused_in_one_line(era5_sites, tmp_path, capsys):
    out = tmp_path / "section.png"
    status = main(["section", str(ERA5), "--site", "Norrin Flats", "--time",
                   "2017-01-01T12:00Z", "--sites", str(era5_sites), "--out", str(out)])
    err = capsys.readouterr().err
    assert status == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert "only 2 pressure levels (850, 500 hPa)" in lines[0]
    assert "at least 3" in lines[0] and "expected" in lines[0]
    assert "member" not in lines[0]  # the levels are the problem, said before anything else
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_section_levels_check_names_the_levels():
    ds = kit.open_run(ERA5)
    with pytest.raises(kit.errors.InputError, match=r"only 2 pressure levels \(850, 500 hPa\)"):
        check_section_levels(ds)
    check_section_levels(synthetic_fields())  # five levels: no error


# --------------------------------------------------------------------- ERA5: shift
@pytest.fixture(scope="module")
def era5_shift(era5_sites, tmp_path_factory):
    out = tmp_path_factory.mktemp("era5_shift")
    status = main(["shift", str(ERA5), "--sites", str(era5_sites), "--out", str(out),
                   "--quiet", "--maps-every-h", "12"])
    assert status == 0
    (folder,) = [p for p in out.iterdir() if p.is_dir() and not p.name.startswith(".")]
    return folder


def test_era5_shift_makes_every_other_product_and_lists_the_section(era5_shift):
    manifest = json.loads((era5_shift / "manifest.json").read_text())
    kinds = {f["kind"] for f in manifest["files"]}
    assert {"fronts_geojson", "fronts_csv", "map", "overview", "through_run", "arrivals_csv",
            "arrivals_html", "timeline", "pack"} <= kinds
    assert "section" not in kinds
    (skipped,) = manifest["skipped"]
    assert skipped["product"] == "section"
    assert "only 2 pressure levels (850, 500 hPa)" in skipped["reason"]
    assert manifest["field"] == "theta"
    assert "fronts found in theta, not theta-w" in manifest["thin"]["2017-01-01T00Z"]
    assert manifest["caution"] == CAUTION
    index = (era5_shift / "index.html").read_text()
    assert "Thin run 2017-01-01T00Z" in index and "Not made: section" in index
    assert "on theta" in index


def test_era5_shift_fronts_keep_members_and_say_thin(era5_shift):
    collection = json.loads((era5_shift / "fronts.geojson").read_text())
    props = collection["properties"]
    assert props["field"] == "theta" and "2017-01-01T00Z" in props["thin"]
    members = {f["properties"]["member"] for f in collection["features"]}
    assert len(members) >= 5 and members <= set(range(10))
    fronts = _read_csv(era5_shift / "fronts.csv")
    assert fronts["thin_run"].str.contains("no humidity on pressure levels").all()
    arrivals = _read_csv(era5_shift / "arrivals.csv")
    assert sorted(arrivals["member"].astype(int).unique()) == list(range(10))
    for column in HUMIDITY_COLUMNS:
        assert _empty(arrivals[column]), column


def test_era5_shift_pack_says_thin_on_every_page(era5_shift):
    pages = [p.extract_text() for p in PdfReader(era5_shift / "briefing_pack.pdf").pages]
    assert len(pages) >= 6
    for text in pages:
        flat = " ".join(text.split())
        assert "Thin run: no wind" in flat
        assert "Decision support only" in flat
    cover = " ".join(pages[0].split())
    assert "Run 2017-01-01T00Z is thin" in cover
    assert "Cross-sections not made" in cover and "2 pressure levels" in cover
    # map pages: shaded in theta, without an isobar key (the run has no MSLP)
    maps = [" ".join(t.split()) for t in pages if "Fronts at 850 hPa on" in t]
    assert maps and all("on θ" in t and "MSLP every" not in t for t in maps)


def test_era5_shift_says_thin_on_stdout(era5_sites, tmp_path, capsys):
    assert main(["shift", str(ERA5), "--sites", str(era5_sites), "--out", str(tmp_path),
                 "--quiet", "--maps-every-h", "36"]) == 0
    out = capsys.readouterr().out
    assert "run 2017-01-01T00Z is thin: no wind on pressure levels" in out
    assert "not made: section: run 2017-01-01T00Z: only 2 pressure levels" in out
    assert CAUTION in out


# ----------------------------------------------------------- synthetic: no humidity
@pytest.fixture(scope="module")
def synthetic_arrivals(synthetic, tmp_path_factory):
    root, paths = synthetic
    out = tmp_path_factory.mktemp("syn_arrivals")
    tables = {}
    for name in ("full", "thin"):
        assert main(["arrivals", str(paths[name]), "--sites", str(root / "sites.csv"),
                     "--out", str(out / f"{name}.csv")]) == 0
        tables[name] = _read_csv(out / f"{name}.csv")
    return tables


def test_synthetic_thin_arrivals_in_theta(synthetic, synthetic_arrivals):
    root, paths = synthetic
    thin, full = synthetic_arrivals["thin"], synthetic_arrivals["full"]
    # a full run's table is the contract and extra columns only
    assert "thin_run" not in full and "theta_change_k" not in full
    assert (thin["thin_run"] == "no humidity on pressure levels: fronts found in theta, "
            "not theta-w").all()
    for column in HUMIDITY_COLUMNS:
        assert _empty(thin[column]), column
    assert not _empty(full["dewpoint_change_c"])  # the full run has them (same fields)
    passed = thin[thin["passage_utc"] != ""]
    assert {"Brindle Moor", "Sedge Hollow"} <= set(passed["site"])
    ds = kit.open_run(paths["thin"])
    analysis = kit.analyse(ds)
    assert analysis.settings.field == "theta"
    _, series = arrival_table(analysis, SYN_SITES, return_series=True)
    for _, row in passed.iterrows():
        s = series[(row["run"], None, row["site"])]
        expected = _theta_change(s, row["passage_utc"], float(row["level_hpa"]))
        assert float(row["theta_change_k"]) == pytest.approx(expected, abs=0.051)  # [pub]
        assert np.isnan(s["theta_w"].values).all() and np.isnan(s["rh"].values).all()


@pytest.fixture(scope="module")
def synthetic_sections(synthetic):
    _, paths = synthetic
    out = {}
    for name in ("full", "thin"):
        ds = kit.open_run(paths[name])
        out[name] = section(kit.analyse(ds), SYN_SITES.iloc[1], SYN_TIME)
    return out


def test_synthetic_thin_section_is_in_theta(synthetic_sections):
    sec = synthetic_sections["thin"]
    assert sec.attrs["front_kind"] == "warm"  # the section crosses the analysed front
    assert sec.attrs["thermal_field"] == "theta"
    assert "no humidity on pressure levels" in sec.attrs["thin"]
    for name in ("td", "tw", "theta_w", "rh", "wet_bulb_freezing_level_m", "theta_w_surface"):
        assert name not in sec, name
    # [pub] theta of the section is Bolton's (1980) Eq. 7 on its own temperature
    p = sec["level"].astype(float)
    np.testing.assert_allclose(sec["theta"].values,
                               (sec["t"] * (1000.0 / p) ** KAPPA_BOLTON).values, rtol=1e-12)
    assert "theta gradient zone" in sec["frontal_surface_km"].attrs["long_name"]
    assert np.isfinite(sec["frontal_surface_km"].values).sum() >= 2
    assert sec.attrs["surface_front_from"].startswith(("centre of the 2 m theta zone",
                                                      "lowest located level"))
    assert "wind" not in sec.attrs  # the synthetic run has its own winds
    full = synthetic_sections["full"]
    assert "thermal_field" not in full.attrs and "thin" not in full.attrs
    assert {"td", "theta_w", "rh"} <= set(full.data_vars)


def test_synthetic_thin_section_figure(synthetic_sections):
    fig = section_figure(synthetic_sections["thin"])
    art = fig._frontshift["artists_section"]
    assert "theta" in art and "theta-w" not in art and "rh" not in art
    assert "wet-bulb-0c" not in art
    texts = stamp_texts(fig)
    assert any(t.startswith("No humidity on the levels") for t in texts)
    header = fig._frontshift["artists"]["thin"].get_text()
    assert header == "Thin run: no humidity: fronts found in theta, not theta-w"
    legend = [t.get_text() for lg in fig.legends for t in lg.get_texts()]
    assert "theta [K], every 4 K (no humidity: not theta-w)" in legend
    assert not any("theta-w [" in t for t in legend)
    # contour labels in K (290 ... 330), not degrees C
    labels = [float(t.get_text()) for t in fig.axes[0].texts
              if re.fullmatch(r"\d{3}", t.get_text())]
    assert labels and all(260 <= v <= 360 for v in labels)
    assert CAUTION in texts
    # the full run keeps its figure: theta-w, humidity shading and key, no thin line
    full = section_figure(synthetic_sections["full"])
    art_full = full._frontshift["artists_section"]
    assert "theta-w" in art_full and "rh" in art_full
    assert "thin" not in full._frontshift["artists"]
    assert any(a.get_gid() == "rh-colourbar" for a in full.axes)


def test_synthetic_thin_section_command_and_netcdf(synthetic, tmp_path, capsys):
    root, paths = synthetic
    png, nc = tmp_path / "section.png", tmp_path / "section.nc"
    for out in (png, nc):
        assert main(["section", str(paths["thin"]), "--site", "Sedge Hollow", "--time", SYN_TIME,
                     "--sites", str(root / "sites.csv"), "--out", str(out)]) == 0
    stdout = capsys.readouterr().out
    assert "across the warm front" in stdout
    assert "is thin: no humidity on pressure levels" in stdout
    assert png.stat().st_size > 10_000
    with xr.open_dataset(nc) as sec:
        assert sec.attrs["thermal_field"] == "theta" and sec.attrs["caution"] == CAUTION
        assert "no humidity" in sec.attrs["thin"]
        assert "theta" in sec and "td" not in sec and "theta_w" not in sec and "rh" not in sec


# ------------------------------------------------ synthetic: no humidity, no wind
def test_geostrophic_section_says_so(synthetic):
    _, paths = synthetic
    ds = kit.open_run(paths["bare"])
    assert ds["u"].attrs["derived"] == "geostrophic"
    sec = section_between(ds, (44.0, -9.0), (56.0, -9.0), time=SYN_TIME)
    assert sec.attrs["wind"] == "geostrophic"
    assert sec["u"].attrs["long_name"] == "eastward geostrophic wind"
    assert sec["wind_speed"].attrs["long_name"] == "geostrophic wind speed"
    assert "PV of the geostrophic wind" in sec["dynamic_tropopause_m"].attrs["long_name"]
    fig = section_figure(sec)
    texts = stamp_texts(fig)
    assert any(t.endswith("kt geostrophic") for t in texts)  # the wind maximum
    assert fig._frontshift["artists"]["thin"].get_text().startswith(
        "Thin run: no wind: geostrophic wind from the heights")


# ------------------------------------------------------------ synthetic: the shift
def test_synthetic_thin_shift_makes_sections_too(synthetic, tmp_path):
    root, paths = synthetic
    assert main(["shift", str(paths["thin"]), "--sites", str(root / "sites.csv"), "--out",
                 str(tmp_path), "--quiet", "--maps-every-h", "12", "--max-sections", "2"]) == 0
    (folder,) = [p for p in tmp_path.iterdir() if p.is_dir() and not p.name.startswith(".")]
    manifest = json.loads((folder / "manifest.json").read_text())
    sections = [f for f in manifest["files"] if f["kind"] == "section"]
    arrivals = _read_csv(folder / "arrivals.csv")
    n_pass = int((arrivals["passage_utc"] != "").sum())
    assert n_pass >= 1 and len(sections) == min(2, n_pass) and "skipped" not in manifest
    assert manifest["field"] == "theta" and "2027-01-14T00Z" in manifest["thin"]
    assert "theta_change_k" in arrivals and (arrivals["thin_run"] != "").all()


def test_full_shift_carries_no_thin_marks(synthetic, tmp_path):
    root, paths = synthetic
    assert main(["shift", str(paths["full"]), "--sites", str(root / "sites.csv"), "--out",
                 str(tmp_path), "--quiet", "--maps-every-h", "24", "--max-sections", "1"]) == 0
    (folder,) = [p for p in tmp_path.iterdir() if p.is_dir() and not p.name.startswith(".")]
    manifest = json.loads((folder / "manifest.json").read_text())
    assert "thin" not in manifest and "skipped" not in manifest
    assert manifest["field"] == "theta_w"
    assert "thin" not in json.loads((folder / "fronts.geojson").read_text())["properties"]
    for name in ("arrivals.csv", "fronts.csv"):
        assert "thin_run" not in _read_csv(folder / name)
    assert "Thin run" not in (folder / "index.html").read_text()
    for page in PdfReader(folder / "briefing_pack.pdf").pages:
        assert "Thin run" not in page.extract_text()


def test_thin_line_keeps_every_item():
    # the loader's text for the ERA5 sample, shortened for one header line
    text = kit.open_run(ERA5).attrs["thin"]
    line = thin_line(text)
    assert line == ("Thin run: no wind: geostrophic wind from the heights; no humidity: fronts "
                    "found in theta, not theta-w; no mean-sea-level pressure: troughs looked "
                    "for in the 850-hPa height")
    assert thin_line("") == "" and thin_line(None) == ""
