"""Shift products read as a briefer reads them: nothing cut, nothing "nan", one unit each.

A small invented event (two runs of tests/charts_synthetic.py, invented sites) is
made into shift products with ``frontshift shift``; the checks read the PDF
text (pypdf), the HTML pages and the CSV as a reader would. Every expected
value here is a presentation rule of the kit (issue 16), not a science value.
"""

import json
import re

import matplotlib
import numpy as np
import pandas as pd
import pytest
from charts_synthetic import make_run, write_cf_run
from pypdf import PdfReader

matplotlib.use("Agg")

from kit import CAUTION  # noqa: E402
from kit.cli import main  # noqa: E402
from kit.products import arrivals  # noqa: E402
from kit.products.briefing import PAGE_IN, TABLE_MARGIN_IN, table_figures  # noqa: E402

#: text that must never reach a people's product (a missing value printed as is)
MISSING = re.compile(r"<NA>|\bnan\b|\bNaN\b|\bNaT\b|\bNone\b")

#: "Valid Thu 14 Jan 2027 00:00 UTC" as the page headers write it
VALID_LONG = re.compile(r"Valid (?:\w{3} )?(\d{2} \w{3} \d{4} \d{2}:\d{2}) UTC")

KW = dict(lat0=38.0, lat1=62.0, lon0=-30.0, lon1=16.0, step=1.5, hours=(0, 6, 12))
RUNS = {"a": ("2031-02-02T18:00", "x"), "b": ("2031-02-03T00:00", "2031-02-03T00Z")}


@pytest.fixture(scope="module")
def shift(tmp_path_factory):
    """The shift products of the invented event (two runs) and their valid times."""
    root = tmp_path_factory.mktemp("briefer")
    valid = set()
    for name, (ref, run) in RUNS.items():
        ds = make_run(ref=ref, run=run, **KW)
        valid |= {pd.Timestamp(t) for t in ds["time"].values}
        write_cf_run(ds, root / "runs" / name)
    # invented sites: one in the path of the fronts, one far from them
    pd.DataFrame({"name": ["Harrowby Field", "Marrow Rock", "Sallow Cross"],
                  "lat": [50.2, 48.0, 60.5], "lon": [-5.0, -14.0, 14.0],
                  "elevation_m": [40, 25, 300]}).to_csv(root / "sites.csv", index=False)
    out = root / "out"
    assert main(["shift", str(root / "runs" / "a"), str(root / "runs" / "b"), "--sites",
                 str(root / "sites.csv"), "--out", str(out), "--quiet", "--maps-every-h", "12",
                 "--max-sections", "1"]) == 0
    folder = next(p for p in out.iterdir() if p.name.startswith("shift_"))
    return folder, valid


def _pack_texts(folder):
    return [p.extract_text() for p in PdfReader(folder / "briefing_pack.pdf").pages]


def _html(folder):
    return {n: (folder / n).read_text() for n in ("summary.html", "arrivals.html", "index.html")}


def test_summary_comes_first(shift):
    folder, _ = shift
    texts = _pack_texts(folder)
    assert "Shift briefing: summary" in texts[0]
    assert "At the sites" in texts[0] and "Harrowby Field" in texts[0]
    assert "Summary: passages and hazards" in texts[1]
    appendix = next(k for k, t in enumerate(texts) if "Appendix" in t.splitlines()[0:3] or
                    t.lstrip().startswith("Appendix"))
    assert appendix <= 4  # summary, its table, the map, then the contents
    assert "In this pack" in texts[appendix] and "p. " in texts[appendix]
    index = _html(folder)["index.html"]
    assert index.index("summary.html") < index.index("briefing_pack.pdf")
    for text in texts:
        assert CAUTION in " ".join(text.split())


#: pages checked glyph by glyph: text pages, tables and timelines (map pages draw isobar
#: labels clipped by the map frame, which pypdf reports at their unclipped positions)
TEXT_PAGES = ("Briefing summary", "Summary: passages", "Appendix", "Front arrivals per site",
              "Site timeline")


def test_no_text_outside_the_page(shift):
    folder, _ = shift
    reader = PdfReader(folder / "briefing_pack.pdf")
    checked = 0
    for n, page in enumerate(reader.pages):
        if not any(k in page.extract_text() for k in TEXT_PAGES):
            continue
        checked += 1
        box = page.mediabox
        w, h = float(box.width), float(box.height)
        where = []

        def visit(text, cm, tm, font, size, where=where):
            if text.strip():
                x = tm[4] * cm[0] + tm[5] * cm[2] + cm[4]
                y = tm[4] * cm[1] + tm[5] * cm[3] + cm[5]
                where.append((x, y, text))

        page.extract_text(visitor_text=visit)
        assert where, f"page {n + 1}: no text found"
        for x, y, text in where:
            assert -0.5 <= x <= w and -0.5 <= y <= h, (n + 1, x, y, text)
    assert checked >= 5


def test_table_pages_fit_as_measured(shift):
    # the whole arrival table, read back from its CSV, laid out as the pack does
    folder, _ = shift
    table = pd.read_csv(folder / "arrivals.csv", keep_default_na=False)
    table["note"] = table["note"] + " and a long remark " * 6  # wraps, never cut
    figs = table_figures(table, title="arrivals", run="2031-02-03T00Z",
                         valid_time=("2031-02-02T18:00", "2031-02-03T12:00"), source="test")
    room = PAGE_IN[0] - 2 * TABLE_MARGIN_IN
    for fig in figs:
        layout = fig._frontshift["table_layout"]
        for group in layout.groups:
            assert layout.group_width_in(group) <= room + 1e-6
        fig.canvas.draw()
        renderer = fig.canvas.get_renderer()
        for text in fig.texts:
            if not text.get_text():
                continue
            ext = text.get_window_extent(renderer)
            assert ext.x0 >= -1 and ext.x1 <= fig.bbox.width + 1, text.get_text()[:40]
            assert ext.y0 >= -1 and ext.y1 <= fig.bbox.height + 1, text.get_text()[:40]
        for t in fig.texts:
            assert not MISSING.search(t.get_text()), t.get_text()


def test_no_missing_value_text_anywhere(shift):
    folder, _ = shift
    for n, text in enumerate(_pack_texts(folder)):
        assert not MISSING.search(text), (n + 1, MISSING.search(text).group(0))
    for name, page in _html(folder).items():
        assert not MISSING.search(page), (name, MISSING.search(page).group(0))
    csv = pd.read_csv(folder / "arrivals.csv", keep_default_na=False)
    for note in csv["note"]:
        assert not MISSING.search(note), note


def test_valid_times_are_the_runs_own(shift):
    folder, valid = shift
    texts = _pack_texts(folder)
    found = 0
    for text in texts:
        for hit in VALID_LONG.finditer(" ".join(text.split())):
            when = pd.Timestamp(hit.group(1))
            assert when in valid, hit.group(0)
            found += 1
    assert found >= len(texts)  # every page states its valid time
    day_hours = {t.strftime("%d/%HZ") for t in valid}
    summary = _html(folder)["summary.html"]
    stated = re.findall(r"valid (\d{2}/\d{2}Z) to (\d{2}/\d{2}Z)", summary)
    assert stated and all(a in day_hours and b in day_hours for a, b in stated)
    newest = re.search(r"Valid \(newest run\): (\d{2}/\d{2}Z) to (\d{2}/\d{2}Z)",
                       " ".join(texts[0].split()))
    assert newest and set(newest.groups()) <= day_hours
    # a "no front passage" window never runs past the run's valid times
    for text in texts + list(_html(folder).values()):
        for a, b in re.findall(r"no front passage (\d{2}/\d{2}Z) to (\d{2}/\d{2}Z)", text):
            assert a in day_hours and b in day_hours


def test_one_unit_per_quantity(shift):
    folder, _ = shift
    pack = " ".join(" ".join(t.split()) for t in _pack_texts(folder))
    html = _html(folder)
    for product in (pack, html["summary.html"], html["arrivals.html"]):
        assert "0 C level [ft AMSL]" in product
        assert not re.search(r"\[m\]|\bm AMSL\b|\[m/s\]|m s-1", product)
    for product in (pack, html["arrivals.html"]):
        assert "Speed [kt]" in product
    # the CSV keeps its own units, unchanged (DESIGN.md contract)
    csv = pd.read_csv(folder / "arrivals.csv", keep_default_na=False)
    assert {"freezing_level_before_m", "speed_kt", "passage_utc"} <= set(csv.columns)


def test_arrivals_html_for_people(shift):
    folder, _ = shift
    page = _html(folder)["arrivals.html"]
    heads = re.findall(r"<th>([^<]*)</th>", page)
    assert heads[:4] == ["Site", "Front", "Run", "Passage"]
    assert not [h for h in heads if "_" in h]  # no snake_case column names
    assert "overflow-x:auto" in page and "<div class='wrap'>" in page
    assert "(newest)" in page and "class='newest'" in page
    assert re.search(r"<td>\d{2}/\d{2}Z</td>", page)  # short times, day/hour Z
    csv = pd.read_csv(folder / "arrivals.csv", keep_default_na=False)
    assert len(heads) < len(csv.columns)  # the full set stays in the CSV


def test_optional_columns_shown_when_present():
    base = {"site": "Harrowby Field", "front_kind": "warm", "run": "2031-02-03T00Z",
            "passage_utc": "2031-02-03T09:40Z", "precip_start_utc": "2031-02-03T06:00Z",
            "precip_end_utc": "2031-02-03T12:00Z", "note": ""}
    plain = arrivals.people_table(pd.DataFrame([base]))
    assert plain.loc[0, "Precipitation"] == "precipitation 03/06-12Z"
    assert plain.loc[0, "Passage"] == "03/10Z"
    rich = arrivals.people_table(pd.DataFrame([{
        **base, "precip_type": "freezing rain", "cloud_base_low_ft_agl": 1480.0,
        "cloud_base_high_ft_agl": 3210.0}]))
    assert rich.loc[0, "Precipitation"] == "freezing rain 03/06-12Z"
    assert rich.loc[0, "Lowest cloud [ft above site]"] == "1500-3200 ft"
    line = arrivals.site_lines(pd.DataFrame([{**base, "precip_type": "snow"}]))[0]
    assert "snow from 03/06Z" in line and "warm front about 03/10Z" in line
    for value in (np.nan, None, pd.NA, pd.NaT, "nan", "<NA>"):
        assert arrivals.clean_text(value) == ""


def test_one_step_run_gets_no_through_run_page(tmp_path):
    write_cf_run(make_run(hours=(12,), **{k: v for k, v in KW.items() if k != "hours"}),
                 tmp_path / "runs" / "one")
    pd.DataFrame({"name": ["Harrowby Field"], "lat": [50.2], "lon": [-5.0]}).to_csv(
        tmp_path / "sites.csv", index=False)
    assert main(["shift", str(tmp_path / "runs" / "one"), "--sites", str(tmp_path / "sites.csv"),
                 "--out", str(tmp_path / "out"), "--quiet", "--max-sections", "0"]) == 0
    folder = next(p for p in (tmp_path / "out").iterdir() if p.name.startswith("shift_"))
    manifest = json.loads((folder / "manifest.json").read_text())
    assert "through_run" not in {f["kind"] for f in manifest["files"]}
    assert any(s["product"].startswith("through_run") for s in manifest["skipped"])
    for text in _pack_texts(folder):
        assert "+12 h to +12 h" not in text


def test_same_passage_time_in_table_summary_and_pack(shift):
    # issue 16: one passage time everywhere (the section agrees with the table by
    # construction: tests/test_one_passage.py); here the CSV, summary.html and the pack
    folder, _valid = shift
    table = pd.read_csv(folder / "arrivals.csv", comment="#", keep_default_na=False)
    newest = arrivals.newest_run(table)
    rows = table[(table["run"].astype(str) == newest) & (table["passage_utc"] != "")]
    assert len(rows), "the invented event has passages in its newest run"
    summary = _html(folder)["summary.html"]
    first_pages = " ".join(_pack_texts(folder)[:2])
    for _, r in rows.iterrows():
        words = f"{r['front_kind']} front about {arrivals.day_hour(r['passage_utc'])}"
        assert words in summary, words
        assert words in " ".join(first_pages.split()), words


def test_extrapolated_passages_are_marked_for_people():
    # a passage beyond the run's last step (one-step analyses, the run's end) must not
    # read like a model-step passage in the summary or the tables
    row = {"site": "Sallow Cross", "front_kind": "cold", "run": "2031-02-03T00Z",
           "passage_utc": "2031-02-03T09:00Z", "extrapolated": "yes", "note": ""}
    table = pd.DataFrame([row])
    people = arrivals.people_table(table)
    assert people.loc[0, "Passage"] == "03/09Z (extrap.)"
    line = " ".join(arrivals.site_lines(table))
    assert "cold front about 03/09Z (extrapolated past the run's last step)" in line
