"""One surface front in every product (issue 16 item 1): table, section and timeline agree.

For every row of the arrival table of the sample event (the invented demo, two
runs, six sites, a warm and a cold front each), the cross-section through the
site across that front, drawn at the model steps either side of the passage,
puts the surface front where the table says it is: interpolated in time to the
table's passage, the section's surface front lies within one grid length of
the site. The section and the table share one definition
(:func:`kit.science.sections.surface_front_1d`, the centre of the 2-m theta-w
zone) and one profile geometry, so this is an invariant, not a tolerance game.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from kit.io.runs import open_run
from kit.pipeline import analyse
from kit.products.arrivals import arrival_table
from kit.products.sections import section

SAMPLE = Path(__file__).resolve().parents[1] / "sample_grids"


@pytest.fixture(scope="module")
def event():
    analyses = [analyse(open_run(SAMPLE / "runs" / name))
                for name in ("2027-01-14T00Z", "2027-01-13T12Z")]
    table = arrival_table(analyses, SAMPLE / "sites.csv")
    sites = pd.read_csv(SAMPLE / "sites.csv")
    return {a.dataset.attrs["run"]: a for a in analyses}, table, sites


def _offset_km(analysis, site, time, kind):
    """The section's surface front relative to the site [km], + toward the warm side."""
    sec = section(analysis, site, time, front=kind)
    assert "2 m theta-w" in sec.attrs["surface_front_from"], sec.attrs["surface_front_from"]
    return sec.attrs["surface_front_km"] - sec.attrs["site_km"], sec.attrs["grid_km"]


@pytest.mark.slow
def test_section_puts_the_surface_front_at_the_site_at_the_table_passage(event):
    analyses, table, sites = event
    checked, worst = 0, 0.0
    for _, row in table.iterrows():
        if not row["passage_utc"] or row["extrapolated"] == "yes":
            continue
        analysis = analyses[row["run"]]
        site = sites[sites["name"] == row["site"]].iloc[0].to_dict()
        tp = np.datetime64(row["passage_utc"][:-1], "ns")
        times = analysis.dataset["time"].values.astype("datetime64[ns]")
        k = int(np.searchsorted(times, tp))
        t0, t1 = times[max(k - 1, 0)], times[min(k, times.size - 1)]
        s0, grid_km = _offset_km(analysis, site, t0, row["front_kind"])
        s1, _ = _offset_km(analysis, site, t1, row["front_kind"])
        w = 0.0 if t1 == t0 else float((tp - t0) / (t1 - t0))
        at_passage = (1 - w) * s0 + w * s1
        assert abs(at_passage) <= grid_km, (row["site"], row["run"], row["front_kind"],
                                            s0, s1, at_passage, grid_km)
        checked += 1
        worst = max(worst, abs(at_passage) / grid_km)
    assert checked >= 20  # 2 runs x 6 sites x 2 fronts, less any extrapolated
    print(f"worst section-table gap: {worst:.2f} grid lengths over {checked} passages")


def test_one_definition_is_stated_in_the_table():
    from kit.products.arrivals import COLUMN_NOTES
    from kit.science.sections import surface_front_1d

    assert "one definition of the surface front" in COLUMN_NOTES["passage_from"]
    assert "THE definition" in surface_front_1d.__doc__
    # a tanh zone's centre is the gradient maximum, found where it is (no smoothing shift)
    x = np.arange(-400.0, 400.1, 10.0)
    tau = 280.0 + 4.0 * np.tanh((x - 37.0) / 80.0)
    assert surface_front_1d(tau, x, 25.0, 0.0, +1) == pytest.approx(37.0, abs=1.0)
    # wrong orientation (warm side the other way) or too far from the guess: nothing
    assert np.isnan(surface_front_1d(tau, x, 25.0, 0.0, -1))
    assert np.isnan(surface_front_1d(tau, x, 25.0, 390.0, +1, window_km=100.0))
