"""Degenerate but legal input, interrupted runs and the notebook panels.

A model run may be legal and still give nothing to find: a field without any
thermal contrast, a patch of missing values where the pressure level lies
below high ground, a single time step, a tiny grid, a last step that came
through empty. The promise (issue 10): the product then says so plainly -
an empty FeatureCollection with a note, a table row that says there is no
front or no data - never a traceback and never an answer that looks complete
but is not. Station series with gaps, repeated times and garbage rows are
reported in the verification products, not fatal. An interrupted command
leaves earlier products as they were. In the panels a bad path or threshold is
one plain message in the panel, never an exception.

All runs are invented (tests/charts_synthetic.py) and only exercise the tools.
"""

import errno
import json
import os
import sys
import warnings

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from charts_synthetic import make_run, write_cf_run

from kit import CAUTION
from kit.ui import panels
from kit.cli import main
from kit.pipeline import analyse

SITES = pd.DataFrame({"name": ["Harrowby Field", "Kestrel Point", "Tor Heights"],
                      "lat": [50.2, 55.0, 48.0], "lon": [-5.0, 2.0, -12.0],
                      "elevation_m": [40.0, 12.0, 610.0]})
#: a regional domain large enough for fronts away from its edge buffer
GRID = dict(lat0=34.0, lat1=66.0, lon0=-34.0, lon1=24.0, step=2.0)
#: the "high ground" where 1000, 925 and 850 hPa lie below the surface (NaN)
PATCH = dict(lat=slice(44.0, 52.0), lon=slice(-16.0, -8.0))


def _constant(ds):
    """No horizontal contrast at all: each level one temperature everywhere."""
    out = ds.copy(deep=True)
    for lev, value in zip(out["level"].values, (275.0, 270.0, 265.0, 255.0, 240.0),
                          strict=True):
        out["t"].loc[{"level": lev}] = value
        out["td"].loc[{"level": lev}] = value - 2.0
    return out


def _patched(ds):
    out = ds.copy(deep=True)
    for name in ("t", "td", "u", "v", "z"):
        for lev in (1000.0, 925.0, 850.0):
            out[name].loc[{"level": lev, **PATCH}] = np.nan
    return out


def _last_step_empty(ds):
    out = ds.copy(deep=True)
    for name in ("t", "td", "u", "v", "z"):
        out[name][-1] = np.nan
    return out


@pytest.fixture(scope="module")
def event(tmp_path_factory):
    root = tmp_path_factory.mktemp("degenerate")
    SITES.to_csv(root / "sites.csv", index=False)
    three = make_run(**GRID, hours=(0, 6, 12))
    write_cf_run(three, root / "good")
    write_cf_run(_constant(make_run(**GRID, hours=(0, 6))), root / "constant")
    write_cf_run(_patched(three), root / "patch")
    write_cf_run(_last_step_empty(three), root / "emptystep")
    write_cf_run(make_run(**GRID, hours=(0,)), root / "single")
    write_cf_run(make_run(lat0=49.0, lat1=53.0, lon0=-7.0, lon1=-3.0, step=2.0, hours=(0, 6)),
                 root / "grid3x3")
    return root


def _run_ok(argv, capsys):
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    assert status == 0, err
    assert "Traceback" not in out + err
    return out


def _fronts(event, name, tmp_path, capsys):
    out = tmp_path / f"{name}.geojson"
    stdout = _run_ok(["fronts", event / name, "--out", out], capsys)
    text = out.read_text()
    for bad in ("NaN", "Infinity"):
        assert bad not in text  # RFC 8259 JSON: missing values are null
    collection = json.loads(text)
    assert collection["type"] == "FeatureCollection"
    assert collection["properties"]["caution"] == CAUTION
    return collection, stdout


def _arrivals(event, name, tmp_path, capsys, sites="sites.csv"):
    out = tmp_path / f"{name}.csv"
    _run_ok(["arrivals", event / name, "--sites", event / sites, "--out", out], capsys)
    table = pd.read_csv(out, keep_default_na=False)
    assert (table["caution"] == CAUTION).all()
    for col in table.columns:
        assert not table[col].astype(str).str.fullmatch("nan|NaN|NaT|inf|-inf").any(), col
    assert set(table["site"]) == set(SITES["name"])  # every site has a row, passage or not
    return table


# --------------------------------------------------------------------------- no contrast
def test_constant_field_fronts_is_empty_with_a_note(event, tmp_path, capsys):
    collection, stdout = _fronts(event, "constant", tmp_path, capsys)
    assert collection["features"] == []
    assert "wrote 0 fronts" in stdout
    # the empty file says why it is empty (analysed, nothing found), not just []
    note = str(collection["properties"].get("note", ""))
    assert "no front" in note.lower(), collection["properties"]


def test_constant_field_arrivals_row_says_no_front(event, tmp_path, capsys):
    table = _arrivals(event, "constant", tmp_path, capsys)
    assert (table["passage_utc"] == "").all()
    assert table["note"].str.startswith("no front passage").all()


def test_constant_field_section_is_marked_as_without_front(event, tmp_path, capsys):
    out = tmp_path / "section.nc"
    stdout = _run_ok(["section", event / "constant", "--site", "Harrowby Field", "--time",
                      "2031-02-03T06:00Z", "--sites", event / "sites.csv", "--out", out], capsys)
    assert "no front found" in stdout
    with xr.open_dataset(out) as sec:
        assert sec.attrs["caution"] == CAUTION
        assert not sec.attrs.get("front_kind")  # no front claimed


# --------------------------------------------------------------------------- tiny grid
def test_three_by_three_grid_gives_a_marked_empty_product(event, tmp_path, capsys):
    # 3 x 3 points (4 x 4 degrees) is the smallest grid the loader takes; a front
    # needs room, so an empty collection is right, but it must say so
    collection, _ = _fronts(event, "grid3x3", tmp_path, capsys)
    assert collection["features"] == []
    assert "no front" in str(collection["properties"].get("note", "")).lower()


# --------------------------------------------------------------------------- one step
def test_single_time_step_fronts_have_no_tracked_speed(event, tmp_path, capsys):
    collection, _ = _fronts(event, "single", tmp_path, capsys)
    feats = collection["features"]
    assert feats, "the invented run has fronts at its only step"
    for feat in feats:
        props = feat["properties"]
        assert props["valid_time"] == "2031-02-03T00:00:00Z"
        # a speed from tracking needs two steps: absent, not zero
        assert props["speed_tracked_ms"] is None
        assert props["track"] is not None


def test_single_time_step_arrivals_are_marked_or_extrapolated(event, tmp_path, capsys):
    table = _arrivals(event, "single", tmp_path, capsys)
    for _, row in table.iterrows():
        if row["passage_utc"]:
            # any passage after the only step is an extrapolation and says so
            assert "extrapolated" in row["note"] or row["passage_utc"] == "2031-02-03T00:00Z"
        else:
            assert row["note"], row.to_dict()


def test_single_time_step_timelines_all_or_nothing(event, tmp_path, capsys):
    # a timeline of one step may be drawn or refused, but a refusal must come
    # before anything is written: exit 2 with the table already on disk is a
    # partial product
    out = tmp_path / "products"
    argv = ["arrivals", event / "single", "--sites", event / "sites.csv", "--out",
            out / "arrivals.csv", "--timelines", out / "timelines"]
    status = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    if status == 2:
        assert err.startswith("error: ") and err.count("\n") == 1, err
        assert not out.exists() or not any(out.rglob("*")), sorted(out.rglob("*"))
    else:
        assert status == 0, err
        assert (out / "arrivals.csv").exists()
        assert len(list((out / "timelines").glob("*.png"))) == len(SITES)


def test_single_time_step_shift_is_complete(event, tmp_path, capsys):
    _run_ok(["shift", event / "single", "--sites", event / "sites.csv", "--out", tmp_path,
             "--quiet", "--maps-every-h", "0", "--max-sections", "1"], capsys)
    folder = tmp_path / "shift_2031-02-03T00Z"
    manifest = json.loads((folder / "manifest.json").read_text())
    kinds = {f["kind"] for f in manifest["files"]}
    assert {"fronts_geojson", "map", "arrivals_csv", "pack"} <= kinds
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_timeline_says_which_fields_the_run_lacks(event):
    # the invented step files carry no 2 m temperature and no precipitation: the
    # timeline's empty panels must say so, and drawing must not spill warnings
    import matplotlib

    matplotlib.use("Agg")
    from kit.products.arrivals import arrival_table
    from kit.charts.timelines import timeline_figure
    from kit.io.runs import open_run

    ds = open_run(event / "constant")
    assert "t2m" not in ds and "precip" not in ds
    table, series = arrival_table([analyse(ds)], SITES, return_series=True)
    key = next(k for k in series if k[2] == "Harrowby Field")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fig = timeline_figure(series[key], table[table["site"] == "Harrowby Field"])
    text = " ".join(t.get_text() for t in fig.findobj(matplotlib.text.Text)).lower()
    assert "no 2 m" in text or ("2 m temperature" in text and "not in this run" in text), text
    assert "no precipitation" in text or "precipitation not in this run" in text, text
    assert "no front passage" in text, text  # the empty timeline says it is empty
    assert not [w for w in caught if issubclass(w.category, UserWarning)], [
        str(w.message) for w in caught]


# --------------------------------------------------------------------------- missing patch
def test_nan_patch_fronts_stay_out_of_the_missing_data(event, tmp_path, capsys):
    collection, _ = _fronts(event, "patch", tmp_path, capsys)
    assert collection["features"], "fronts outside the patch are still found"
    inner = dict(lat=(PATCH["lat"].start + 2.0, PATCH["lat"].stop - 2.0),
                 lon=(PATCH["lon"].start + 2.0, PATCH["lon"].stop - 2.0))
    for feat in collection["features"]:
        lonlat = np.asarray(feat["geometry"]["coordinates"], float)
        inside = ((lonlat[:, 1] > inner["lat"][0]) & (lonlat[:, 1] < inner["lat"][1])
                  & (lonlat[:, 0] > inner["lon"][0]) & (lonlat[:, 0] < inner["lon"][1]))
        # one grid length (2 degrees) inside the patch, no line can be drawn from data
        assert not inside.any(), feat["properties"]["valid_time"]


def test_nan_patch_site_under_missing_data_is_not_told_no_front(event, tmp_path, capsys):
    # Tor Heights lies inside the patch: the kit cannot see a front there, so the
    # row must say the data are missing rather than claim "no front passage"
    table = _arrivals(event, "patch", tmp_path, capsys)
    rows = table[table["site"] == "Tor Heights"]
    assert len(rows) >= 1
    notes = " ".join(rows["note"]).lower()
    assert any(w in notes for w in ("missing", "no data", "no model data", "below ground")), notes


def test_empty_last_step_is_named_in_the_fronts_product(event, tmp_path, capsys):
    # the loader lets an all-NaN later step through (kit/io/runs.py docstring);
    # the product must not pass it over in silence
    collection, _ = _fronts(event, "emptystep", tmp_path, capsys)
    times = {f["properties"]["valid_time"] for f in collection["features"]}
    assert "2031-02-03T12:00:00Z" not in times
    note = str(collection["properties"].get("note", ""))
    assert "2031-02-03T12:00" in note, collection["properties"]


def test_section_at_an_empty_step_says_no_data(event, tmp_path, capsys):
    # the step exists but every value is missing: say so, not "outside the grid"
    out = tmp_path / "section.png"
    status = main([str(a) for a in (
        "section", event / "emptystep", "--site", "Harrowby Field", "--time",
        "2031-02-03T12:00Z", "--sites", event / "sites.csv", "--out", out)])
    err = capsys.readouterr().err
    assert status == 2 and err.count("\n") == 1 and err.startswith("error: "), err
    assert "2031-02-03T12:00" in err, err
    assert any(w in err.lower() for w in ("no data", "missing", "all nan")), err
    assert "outside the grid" not in err, err
    assert not out.exists()


def test_section_through_a_nan_patch_marks_the_gap(event):
    # the figure must say why part of the section is blank (level below ground /
    # no model data), not leave a white hole a reader may take for clear air
    import matplotlib

    matplotlib.use("Agg")
    from kit.charts.sections import section_figure
    from kit.io.runs import open_run
    from kit.products.sections import section

    ds = open_run(event / "patch")
    site = SITES[SITES["name"] == "Tor Heights"].iloc[0]
    sec = section(analyse(ds), site, "2031-02-03T06:00Z", front="nearest",
                  length_km=1200.0, spacing_km=10.0, member=None)
    assert float(sec["t"].isnull().mean()) > 0.2  # the patch is on the section
    fig = section_figure(sec)
    words = [t.get_text() for t in fig.findobj(matplotlib.text.Text)]
    for ax in fig.axes:
        words += [str(h.get_label()) for h in ax.get_legend_handles_labels()[0]]
        words += ax.get_legend_handles_labels()[1]
    text = " ".join(words).lower()
    assert any(w in text for w in ("no data", "no model data", "below ground", "missing")), text


# --------------------------------------------------------------------------- shift, no fronts
def test_shift_without_any_front_is_complete_and_says_so(event, tmp_path, capsys):
    _run_ok(["shift", event / "constant", "--sites", event / "sites.csv", "--out", tmp_path,
             "--quiet", "--maps-every-h", "6", "--max-sections", "1"], capsys)
    folder = tmp_path / "shift_2031-02-03T00Z"
    manifest = json.loads((folder / "manifest.json").read_text())
    assert manifest["caution"] == CAUTION
    kinds = {f["kind"] for f in manifest["files"]}
    assert {"fronts_geojson", "fronts_csv", "map", "arrivals_csv", "pack"} <= kinds
    assert json.loads((folder / "fronts.geojson").read_text())["features"] == []
    arrivals = pd.read_csv(folder / "arrivals.csv", keep_default_na=False)
    assert arrivals["note"].str.startswith("no front passage").all()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no leftovers


# --------------------------------------------------------------------------- station series
def _station_csv(path, *, garbage=True, seed=3):
    rng = np.random.default_rng(seed)
    n = 73  # 00 to 12 UTC every 10 minutes
    frame = pd.DataFrame({
        "time_utc": pd.date_range("2031-02-03T00:00", periods=n, freq="10min")
        .strftime("%Y-%m-%dT%H:%MZ"),
        "pressure_hpa": 1008 + rng.normal(0, 0.1, n),
        "temperature_c": 9 + rng.normal(0, 0.2, n),
        "dewpoint_c": 6 + rng.normal(0, 0.2, n),
        "wind_dir_deg": (220 + rng.normal(0, 10, n)) % 360,
        "wind_speed_kt": np.abs(14 + rng.normal(0, 2, n)),
    })
    lines = frame.to_csv(index=False, float_format="%.1f").splitlines()
    if garbage:
        lines.insert(12, "sensor reset,,,,,")
        lines.insert(20, lines[20])  # a repeated time
        del lines[40:62]  # a gap of about 3.5 h
        lines.append("2031-02-03T12:10Z,1008.0,85.0,6.0,220,14")  # 85 C: implausible
    path.write_text("\n".join(lines) + "\n")


def test_rerun_reports_station_gaps_duplicates_and_garbage(event, tmp_path, capsys):
    # the run has no fronts (no contrast): the rerun is quick and the product under
    # test is the station problem list
    ev = tmp_path / "past_event"
    (ev / "runs").mkdir(parents=True)
    (ev / "runs" / "constant").symlink_to(event / "constant", target_is_directory=True)
    (ev / "analyses").symlink_to(event / "constant", target_is_directory=True)
    (ev / "stations").mkdir()
    SITES.iloc[:2].to_csv(ev / "sites.csv", index=False)
    _station_csv(ev / "stations" / "Harrowby Field.csv", garbage=True)
    _station_csv(ev / "stations" / "Kestrel Point.csv", garbage=False, seed=4)
    out = tmp_path / "verification"
    _run_ok(["rerun", ev, "--out", out, "--workers", "1"], capsys)
    folder = next(out.iterdir())
    problems = pd.read_csv(folder / "station_problems.csv", keep_default_na=False)
    text = " | ".join(problems.loc[problems["site"] == "Harrowby Field", "problem"])
    assert "garbage" in text and "duplicate" in text and "gap" in text, text
    assert "lines 13" in text  # the garbage row is named by its line in the file
    assert "Kestrel Point" not in set(problems["site"])  # a clean series has no problems
    assert CAUTION in (folder / "timing_summary.html").read_text()


def test_timing_figure_with_only_false_alarms():
    # a forecast passage that no station saw (a calm series): the figure must still
    # be drawn, with the counts, the window and the caution
    import matplotlib

    matplotlib.use("Agg")
    from kit.charts.verification import timing_error_figure
    from kit.science.verification import timing_pairs

    forecast = pd.DataFrame({"site": ["Harrowby Field", "Kestrel Point"],
                             "front_kind": ["warm", "cold"], "run": ["2031-02-03T00Z"] * 2,
                             "passage_utc": ["2031-02-03T07:54Z", "2031-02-03T10:35Z"]})
    observed = pd.DataFrame(columns=["site", "passage_utc", "front_kind"])
    pairs = timing_pairs(forecast, observed, {"2031-02-03T00Z": "2031-02-03T00:00"},
                         event="calm")
    assert list(pairs["outcome"]) == ["false alarm", "false alarm"]
    fig = timing_error_figure(pairs, title_run="calm", source="invented test event")
    texts = " ".join(t.get_text() for t in fig.findobj(matplotlib.text.Text))
    assert "0 hits, 0 misses, 2 false alarms" in texts
    assert "Decision support only" in texts


# --------------------------------------------------------------------------- interrupted
@pytest.mark.parametrize("command", ["fronts", "arrivals"])
def test_interrupted_command_keeps_the_earlier_product(event, tmp_path, capsys, monkeypatch,
                                                       command):
    import kit.products.files

    earlier = b"earlier product, still wanted\n"
    out = tmp_path / ("f.geojson" if command == "fronts" else "a.csv")
    out.write_bytes(earlier)

    def interrupted(fd):  # Ctrl-C while the new product is being flushed to disk
        raise KeyboardInterrupt

    monkeypatch.setattr(kit.products.files.os, "fsync", interrupted)
    argv = ["fronts", event / "good", "--out", out, "--overwrite"] if command == "fronts" else [
        "arrivals", event / "good", "--sites", event / "sites.csv", "--out", out, "--overwrite"]
    status = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert status == 130 and "interrupted" in err and "Traceback" not in err
    assert out.read_bytes() == earlier
    assert sorted(p.name for p in tmp_path.iterdir()) == [out.name]  # no temporary file left


def test_disk_full_midway_keeps_the_earlier_product(tmp_path, monkeypatch):
    # kit.products.files's own promise, checked with a real OSError from the operating system
    import kit.products.files
    from kit.errors import OutputError

    out = tmp_path / "table.csv"
    out.write_text("earlier\n")

    def no_space(fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(kit.products.files.os, "fsync", no_space)
    with pytest.raises(OutputError, match="No space left"):
        kit.products.files.write_csv(out, pd.DataFrame({"a": [1]}), overwrite=True)
    assert out.read_text() == "earlier\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]


# --------------------------------------------------------------------------- panels
ERROR_STYLE = "color:#a11d1d"


def _plain_error(message_html, *needles):
    assert ERROR_STYLE in message_html, message_html
    assert "Traceback" not in message_html
    assert "unexpected problem" not in message_html, message_html  # a known, worded case
    for needle in needles:
        assert needle in message_html, (needle, message_html)


@pytest.fixture(scope="module")
def small_run():
    return make_run(**GRID, hours=(0, 6))


@pytest.fixture(scope="module")
def front_panel(small_run, tmp_path_factory):
    out = tmp_path_factory.mktemp("panel_exports")
    return panels.front_panel([small_run], SITES, out_dir=out).controller


@pytest.mark.parametrize(
    ("kind", "needles"),
    [("text-file-named-nc", ["notes.nc", "not a NetCDF file"]),
     ("truncated", ["cut.nc", "truncated"]),
     ("empty-glob", ["*.nc4", "matches no file"]),
     ("blank", ["no path typed"])],
)
def test_panel_bad_run_path_is_a_plain_message(event, front_panel, tmp_path, kind, needles):
    if kind == "text-file-named-nc":
        path = tmp_path / "notes.nc"
        path.write_text("a note, not a grid\n")
    elif kind == "truncated":
        data = next((event / "good").glob("step_*.nc")).read_bytes()
        path = tmp_path / "cut.nc"
        path.write_bytes(data[: len(data) // 3])
    elif kind == "empty-glob":
        path = tmp_path / "*.nc4"
    else:
        path = "  "
    image = front_panel.map_image.value
    runs = len(front_panel.runs)
    front_panel.path_text.value = str(path)
    front_panel.open_button.click()
    _plain_error(front_panel.message.value, *needles)
    assert len(front_panel.runs) == runs  # the open run stays, the map is unchanged
    assert front_panel.map_image.value == image


@pytest.mark.parametrize("box", ["k1_text", "k2_text", "smooth_text", "minlen_text"])
def test_panel_bad_threshold_is_a_plain_message(front_panel, box):
    widget = getattr(front_panel, box)
    good = widget.value
    image = front_panel.map_image.value
    analyses = front_panel.stats["analyses"]
    # an empty K1/K2 box is no error: it means the kit's rule (published values
    # or, on coarse grids, quantiles); an empty smoothing or length box is one
    bad = ("nan", "inf", "1e400", "-0.5", "5 km") + (() if box in ("k1_text", "k2_text")
                                                      else ("",))
    for value in bad:
        widget.value = value
        _plain_error(front_panel.message.value, "expected")
        assert front_panel.map_image.value == image, value  # nothing redrawn
        assert front_panel.stats["analyses"] == analyses, value
    widget.value = good  # the good value brings the same analysis back from the cache
    assert ERROR_STYLE not in front_panel.message.value
    assert front_panel.stats["analyses"] == analyses
    if box in ("k1_text", "k2_text"):
        widget.value = ""
        assert ERROR_STYLE not in front_panel.message.value
        assert getattr(front_panel.settings(), box[:2]) is None
        widget.value = good


def test_arrivals_panel_bad_run_path_is_a_plain_message(tmp_path):
    bad = tmp_path / "notes.nc"
    bad.write_text("not a grid\n")
    # building the panel must not raise into the notebook: the panel shows the line
    widget = panels.arrivals_panel([bad], SITES, out_dir=tmp_path)
    _plain_error(widget.controller.message.value, "notes.nc", "not a NetCDF file")


def test_arrivals_panel_missing_site_file_is_a_plain_message(small_run, tmp_path):
    widget = panels.arrivals_panel([small_run], tmp_path / "no_sites.csv", out_dir=tmp_path)
    _plain_error(widget.controller.message.value, "no_sites.csv")


def test_section_panel_unknown_site_is_a_message_not_another_site(small_run, tmp_path):
    widget = panels.section_panel([small_run], SITES, site="Nowhere Bay", out_dir=tmp_path)
    msg = widget.controller.message.value
    # never a section through a different site presented as if asked for
    _plain_error(msg, "Nowhere Bay")


def test_rerun_panel_file_instead_of_event_folder(tmp_path):
    bad = tmp_path / "event.nc"
    bad.write_text("x\n")
    ctl = panels.rerun_panel(bad).controller
    _plain_error(ctl.message.value, "event.nc", "no such event folder")
    assert ctl.result is None


def test_briefing_panel_missing_site_file(event, tmp_path):
    ctl = panels.briefing_panel([event / "good"], tmp_path / "no_sites.csv",
                                out_dir=tmp_path / "out").controller
    ctl.write_button.click()
    _plain_error(ctl.message.value, "no_sites.csv", "site file not found")
    assert ctl.folder is None
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(pytest.main([__file__, "-q"]))
