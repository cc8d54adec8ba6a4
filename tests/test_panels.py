"""Panels driven as a user would: set a control, check what it updated.

The run is invented (tests/charts_synthetic.py); it only exercises the panel.
"""

import json

import pandas as pd
import pytest
from charts_synthetic import make_run

from kit import CAUTION
from kit.ui import panels
from kit.science.fronts import FrontSettings, default_thresholds, effective_smoothing_km

PNG = b"\x89PNG\r\n\x1a\n"
SITES = pd.DataFrame({"name": ["Harrowby Field", "Kestrel Point"], "lat": [50.2, 55.0],
                      "lon": [-5.0, 2.0], "elevation_m": [40.0, 12.0]})


@pytest.fixture(scope="module")
def run():
    return make_run(lat0=38.0, lat1=62.0, lon0=-30.0, lon1=16.0, step=1.5, hours=(0, 6, 12))


@pytest.fixture
def panel(run, tmp_path):
    widget = panels.front_panel([run], SITES, out_dir=tmp_path / "exports")
    return widget.controller


def _error(panel):
    return "color:#a11d1d" in panel.message.value


def test_panel_opens_with_map_and_caution(panel):
    assert bytes(panel.map_image.value[:8]) == PNG
    assert panel.stats["analyses"] == 1 and panel.stats["map_draws"] == 1
    assert not _error(panel)
    banner = panel.widget.children[0].value
    assert CAUTION in banner
    assert len(panel.time_slider.options) == 3
    assert panel.level_pick.value == 850.0


def test_time_change_redraws_only_the_map(panel):
    first = panel.map_image.value
    panel.time_slider.value = panel.time_slider.options[2][1]
    assert panel.map_image.value != first
    assert panel.stats["analyses"] == 1  # analysis cached, only the map redrawn
    assert panel.stats["map_draws"] == 2
    assert "12:00 UTC" in panel.message.value


def test_thresholds_cached_and_bad_values(panel):
    image = panel.map_image.value
    old_k1 = panel.k1_text.value
    panel.k1_text.value = "abc"
    assert _error(panel) and "K1" in panel.message.value and "not a number" in panel.message.value
    assert "Traceback" not in panel.message.value
    assert panel.map_image.value == image  # nothing redrawn on a bad value
    panel.k1_text.value = "-1"
    assert _error(panel) and "out of range" in panel.message.value
    panel.k1_text.value = "5"
    assert not _error(panel) and panel.stats["analyses"] == 2
    panel.k1_text.value = old_k1
    assert panel.stats["analyses"] == 2  # the first analysis came back from the cache


def test_restore_defaults(panel, run):
    panel.smooth_text.value = "200"
    panel.minlen_text.value = "900"
    panel.k2_text.value = "9"
    panel.restore_button.click()
    d = FrontSettings()
    assert float(panel.smooth_text.value) == d.smoothing_km
    assert float(panel.minlen_text.value) == d.min_length_km
    # K1/K2 shown are the kit's defaults for the effective smoothing on this grid
    k1, k2 = default_thresholds(effective_smoothing_km(run, d))
    assert float(panel.k1_text.value) == pytest.approx(k1 / panels.K1_UNIT, rel=5e-3)
    assert float(panel.k2_text.value) == pytest.approx(k2 / panels.K2_UNIT, rel=5e-3)
    assert "restored" in panel.message.value


def test_bad_path_is_a_plain_message(panel):
    panel.path_text.value = "/no/such/run_folder"
    panel.open_button.click()
    assert _error(panel)
    assert "/no/such/run_folder" in panel.message.value
    assert len(panel.runs) == 1


def test_level_and_field_change(panel):
    panel.level_pick.value = 700.0
    assert panel.stats["analyses"] == 2 and not _error(panel)
    panel.field_pick.value = "theta"
    assert panel.stats["analyses"] == 3 and not _error(panel)
    key = next(k for k in panel._frames if k[2] == 700.0 and k[3] == "theta")
    assert key


def test_site_front_section_and_exports(panel, tmp_path):
    panel.site_pick.value = "Harrowby Field"
    fronts = [v for _, v in panel.front_pick.options if v is not None]
    assert fronts, "the invented run has fronts at the first time"
    panel.section_button.click()
    assert not _error(panel), panel.message.value
    assert bytes(panel.section_image.value[:8]) == PNG
    assert panel.stats["section_draws"] == 1
    first = panel.save_map()
    second = panel.save_map()
    assert first != second and first.exists() and second.exists()  # never overwritten
    assert first.read_bytes().startswith(PNG)
    sec = panel.save_section()
    assert sec.read_bytes().startswith(PNG)
    gj = json.loads(panel.save_fronts().read_text())
    assert gj["properties"]["caution"] == CAUTION
    assert len(gj["features"]) == len(panel.fronts())


def test_section_without_front_is_a_message(run, tmp_path):
    widget = panels.front_panel([run], None, out_dir=tmp_path)
    p = widget.controller
    p.front_pick.value = None
    p.section_button.click()
    assert _error(p) and "no front picked" in p.message.value


def test_arrivals_panel(run, tmp_path):
    widget = panels.arrivals_panel([run], SITES, out_dir=tmp_path)
    p = widget.controller
    assert "Harrowby Field" in p.message.value  # the first site is shown
    assert bytes(p.timeline_image.value[:8]) == PNG
    p.site_pick.value = "Kestrel Point"
    assert "Kestrel Point" in p.message.value
    csv_path, html_path = p.save()
    table = pd.read_csv(csv_path, keep_default_na=False)
    assert (table["caution"] == CAUTION).all() and CAUTION in html_path.read_text()
    again = p.save()
    assert again[0] != csv_path  # a new name, the first file kept


def test_rerun_and_briefing_panels_bad_paths(tmp_path):
    rerun = panels.rerun_panel(tmp_path / "no_event").controller
    assert "no such event folder" in rerun.message.value
    (tmp_path / "afile").write_text("x")
    brief = panels.briefing_panel([tmp_path / "no_run"], tmp_path / "sites.csv",
                                  out_dir=tmp_path / "afile").controller
    brief.write_button.click()
    assert "color:#a11d1d" in brief.message.value
    assert "Traceback" not in brief.message.value
    assert brief.folder is None


def test_briefing_panel_one_write_per_action(tmp_path, monkeypatch):
    # issue 16: notebook 05 wrote on "Run all" and again on its button
    calls = []

    def fake_write(runs, sites, out, **kw):
        folder = tmp_path / f"set{len(calls)}"
        folder.mkdir()
        (folder / "manifest.json").write_text('{"files": []}')
        calls.append(folder)
        return folder

    monkeypatch.setattr(panels, "write_shift_products", fake_write)
    brief = panels.briefing_panel(["run"], "sites.csv", out_dir=tmp_path).controller
    first = brief.written()  # the notebook's cell: writes once
    assert brief.written() == first and len(calls) == 1  # running it again: no new set
    brief.write_button.click()  # a press: one new set
    assert len(calls) == 2 and brief.written() == calls[-1]
