"""One analysis per shift: the map, the sections, the arrival table and the timelines
of one ``frontshift shift`` are made from the same :class:`kit.model.Analysis`.

The run is invented (tests/charts_synthetic.py); the test watches what each
product is handed (spies on the functions the shift assembly calls) and reads
the files back, and holds them to the one analysis made per run.
"""

import json

import numpy as np
import pandas as pd
from test_cli_shift import event  # noqa: F401  (the same invented two-run event)

import kit.pipeline
import kit.products.shift as shift
from kit.charts import maps
from kit.model import Analysis


def _spy(monkeypatch, owner, name, calls):
    real = getattr(owner, name)

    def spy(*args, **kwargs):
        out = real(*args, **kwargs)
        calls.append((args, kwargs, out))
        return out

    monkeypatch.setattr(owner, name, spy)


def test_every_product_of_a_shift_comes_from_one_analysis(event, tmp_path, monkeypatch):  # noqa: F811
    calls = {k: [] for k in ("analyse", "find", "arrivals", "section", "overview", "through",
                             "draw", "timeline")}
    _spy(monkeypatch, shift, "analyse", calls["analyse"])
    _spy(monkeypatch, kit.pipeline, "find_fronts", calls["find"])
    _spy(monkeypatch, shift, "arrival_table", calls["arrivals"])
    _spy(monkeypatch, shift, "section_across_front", calls["section"])
    _spy(monkeypatch, shift, "timeline_figure", calls["timeline"])
    _spy(monkeypatch, maps, "fronts_overview", calls["overview"])
    _spy(monkeypatch, maps, "fronts_through_time", calls["through"])
    _spy(monkeypatch, maps.MapSeries, "draw", calls["draw"])

    folder = shift.write_shift_products(
        [event / "runs" / "a", event / "runs" / "b"], event / "sites.csv", tmp_path,
        maps_every_h=6.0, max_sections=4, progress=False)

    # one analysis per run, and the fronts found once per run (no product looked again)
    analyses = [out for _, _, out in calls["analyse"]]
    assert len(analyses) == 2 and all(isinstance(a, Analysis) for a in analyses)
    assert len(calls["find"]) == 2
    by_id = {id(f): (k, f) for k, a in enumerate(analyses) for f in a.fronts}
    newest = analyses[-1]
    assert len(newest.fronts) > 0

    # the arrival table was handed exactly these analyses
    (args, kwargs, _), = calls["arrivals"]
    handed = args[0]
    assert [id(a) for a in handed] == [id(a) for a in analyses]

    # every map is drawn from the fronts of its run's analysis, the same objects
    for name in ("overview", "through"):
        assert len(calls[name]) == 2
        for args, _, _ in calls[name]:
            ds, fronts = args[0], args[1]
            k = {id(a.dataset): i for i, a in enumerate(analyses)}[id(ds)]
            assert [id(f) for f in fronts] == [id(f) for f in analyses[k].fronts]
    assert calls["draw"]
    for args, _, _ in calls["draw"]:
        fronts = args[2]  # draw(self, time, fronts, ...)
        assert fronts and all(id(f) in by_id for f in fronts)
        assert len({by_id[id(f)][0] for f in fronts}) == 1  # one run's analysis per map

    # every section crosses a front of the newest run's analysis, the same object
    assert calls["section"], "no section was made: the test would prove nothing"
    for args, _, _ in calls["section"]:
        front = args[1]
        assert by_id[id(front)][0] == len(analyses) - 1

    # and the files say the same: the GeoJSON holds exactly the analyses' fronts ...
    gj = json.loads((folder / "fronts.geojson").read_text())
    got = sorted((p["properties"]["run"], p["properties"]["track"], p["properties"]["kind"],
                  p["properties"]["valid_time"], tuple(p["geometry"]["coordinates"][0]))
                 for p in gj["features"] if p["properties"].get("part", 0) == 0)
    want = sorted((f.run, f.track, f.kind, pd.Timestamp(f.valid_time).strftime(
        "%Y-%m-%dT%H:%M:%SZ"), (round(float(f.lon[0]), 4), round(float(f.lat[0]), 4)))
        for a in analyses for f in a.fronts)
    assert [g[:4] for g in got] == [w[:4] for w in want]
    np.testing.assert_allclose([g[4] for g in got], [w[4] for w in want], atol=1e-4)

    # ... the arrival table's tracks are the analyses' tracks of that run ...
    table = pd.read_csv(folder / "arrivals.csv")
    tracks = {(a.run, int(f.track)) for a in analyses for f in a.fronts if f.track is not None}
    passed = table.dropna(subset=["track"])
    assert len(passed) > 0
    for _, row in passed.iterrows():
        assert (str(row["run"]), int(row["track"])) in tracks

    # ... and each section named in the manifest is of a front of the newest analysis
    manifest = json.loads((folder / "manifest.json").read_text())
    sections = [f for f in manifest["files"] if f["kind"] == "section"]
    assert len(sections) == len(calls["section"])
    newest_ids = {(int(f.track), pd.Timestamp(f.valid_time).strftime("%Y-%m-%dT%H:%M:%SZ"),
                   f.kind) for f in newest.fronts}
    for s in sections:
        assert (s["track"], s["valid_time"], s["front_kind"]) in newest_ids
