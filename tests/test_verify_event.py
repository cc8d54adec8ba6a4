"""The sample event rerun end to end (regression against the invented scenario).

These are not science checks: the scenario is invented. They check that the
rerun recovers what the scenario generator built in (truth.json): the station
passages at the analysis passage times and each run's timing offset.
"""

import json
import shutil
from pathlib import Path

import pandas as pd
import pytest

from kit.products.rerun import rerun_events
from kit.science.verification import summarise_position, summarise_timing

EVENT = Path(__file__).resolve().parents[1] / "sample_grids"


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    """Two copies of the sample event rerun on a 2-worker local cluster."""
    top = tmp_path_factory.mktemp("events")
    for name in ("event_a", "event_b"):
        shutil.copytree(EVENT, top / name)
    return rerun_events([top], workers=2, progress=True)


@pytest.fixture(scope="module")
def rerun(both):
    return {k: v[v["event"] == "event_a"].reset_index(drop=True)
            for k, v in both.items() if k != "workers_used"}


@pytest.mark.slow
def test_events_run_in_parallel_on_more_than_one_worker(both):
    assert both["workers_used"] == 2
    assert set(both["timing"]["event"]) == {"event_a", "event_b"}
    # the same event twice gives the same answer
    a = both["timing"][both["timing"]["event"] == "event_a"].drop(columns="event")
    b = both["timing"][both["timing"]["event"] == "event_b"].drop(columns="event")
    sort = ["run", "site", "front_kind"]
    pd.testing.assert_frame_equal(a.sort_values(sort).reset_index(drop=True),
                                  b.sort_values(sort).reset_index(drop=True))


@pytest.fixture(scope="module")
def truth():
    return json.loads((EVENT / "truth.json").read_text())


@pytest.mark.slow
def test_observed_passages_match_the_analysis_truth(rerun, truth):
    obs = rerun["observed"]
    expected = truth["sets"]["analyses"]["passages"]
    n = 0
    first = pd.Timestamp(truth["valid_times"][0])
    last = pd.Timestamp(truth["valid_times"][-1])
    window = pd.Timedelta(hours=3)  # detect_passages' before/after windows
    for site, kinds in expected.items():
        for kind, when in kinds.items():
            # the station detector knows warm and cold (no occluded kind yet,
            # issue 19), and needs its 3-h windows of air before and after
            if when is None or kind == "occluded":
                continue
            if not first + window <= pd.Timestamp(when) <= last - window:
                continue
            got = obs[(obs["site"] == site) & (obs["front_kind"] == kind)]
            assert len(got) == 1, f"{site} {kind}: {len(got)} observed passages"
            err = pd.Timestamp(got.iloc[0]["passage_utc"]) - pd.Timestamp(when)
            # station noise and 10-min sampling: within 45 minutes
            assert abs(err / pd.Timedelta(minutes=1)) <= 45, (site, kind, err)
            n += 1
    assert n >= 8


@pytest.mark.slow
def test_timing_errors_reproduce_the_built_in_offsets(rerun, truth):
    pairs = rerun["timing"]
    ana = truth["sets"]["analyses"]["passages"]
    last = pd.Timestamp(truth["valid_times"][-1])

    def in_truth(row):
        when = ana[row["site"]].get(row["front_kind"])
        return when is not None and pd.Timestamp(when) <= last

    expected = pairs.apply(in_truth, axis=1)
    assert expected.sum() >= 12
    assert (pairs.loc[expected, "outcome"] == "hit").all()
    # the rest are explained: lines through the occlusion, which the kit times as
    # warm or cold (no occluded kind yet, issue 19), and a dying front's passage
    # extrapolated past the window; nothing else
    explained = {s for s, k in ana.items() if k["occluded"] is not None}
    explained |= {s for s, k in ana.items() if k["cold"] and pd.Timestamp(k["cold"]) > last}
    assert pairs.loc[~expected, "site"].isin(explained).all(), pairs.loc[~expected]
    first = pd.Timestamp(truth["valid_times"][0])
    window = pd.Timedelta(hours=3)  # detect_passages' before/after windows

    def seen(row):
        # a passage the truth has of this kind, which the station detector can
        # see (3 h of record either side, as in the test above)
        when = ana[row["site"]].get(row["front_kind"])
        return when is not None and first + window <= pd.Timestamp(when) <= last - window

    visible = pairs.apply(seen, axis=1)
    for run, spec in truth["sets"].items():
        if run == "analyses":
            continue
        # truth.json: a positive offset means the run's fronts come early, so
        # forecast minus observed is minus the offset. Each front kind on its own
        # (issue 17: warm and cold biases must not cancel), over the passages the
        # truth has of that kind: the occlusion site's lines, which the kit times
        # as warm or cold (issue 19), are checked above as explained, not here
        for kind in ("warm", "cold"):
            sel = (pairs["run"] == run) & (pairs["front_kind"] == kind) & visible
            assert sel.sum() >= 3, (run, kind)
            mean_err = pairs.loc[sel, "error_h"].mean()
            # measured 2026-12 on the life-cycle event: within 0.12 h of the offset
            # for both kinds and both runs (the newest run's cold -2.17 h of
            # earlier notes was the occlusion site's line, 4.5 h early)
            assert mean_err == pytest.approx(-spec["timing_offset_h"], abs=0.3), (run, kind)


@pytest.mark.slow
def test_position_errors_and_summaries(rerun):
    pos = rerun["position"]
    hits = pos[pos["outcome"] == "hit"]
    assert len(hits) >= 0.8 * len(pos)
    # a 2 h timing offset at ~10-15 m/s is 70-110 km of displacement
    assert hits["mean_distance_km"].median() < 200
    ts, ps = summarise_timing(rerun["timing"]), summarise_position(pos)
    assert set(ts["front_kind"]) >= {"warm", "cold"}
    assert (ps["n"].fillna(0) > 0).any()
    assert rerun["station_problems"]["problem"].str.contains("garbage|gap").any()
