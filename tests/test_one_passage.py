"""One surface front in every product (issue 16 item 1): table, section and timeline agree.

For every row of the arrival table of the sample event (the invented demo, two
runs, six sites, a warm and a cold front each), the cross-section through the
site across that front, drawn at the model steps either side of the passage,
puts the surface front where the table says it is: timed by the table's own
rule from the sections at the steps around it, the section's surface front
crosses the site within one grid length (at the front's speed) of the table's
passage. The section and the table share one definition
(:func:`kit.science.sections.surface_front_1d`, the centre of the 2-m theta-w
zone) and one profile geometry, so this is an invariant, not a tolerance game.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from kit.constants import NM_KM
from kit.errors import InputError
from kit.io.runs import open_run
from kit.pipeline import analyse
from kit.products.arrivals import arrival_table
from kit.products.sections import section
from kit.science.passages import crossing_fraction

SAMPLE = Path(__file__).resolve().parents[1] / "sample_grids"


@pytest.fixture(scope="module")
def event():
    analyses = [analyse(open_run(SAMPLE / "runs" / name))
                for name in ("2027-01-14T00Z", "2027-01-13T12Z")]
    table = arrival_table(analyses, SAMPLE / "sites.csv")
    sites = pd.read_csv(SAMPLE / "sites.csv")
    return {a.dataset.attrs["run"]: a for a in analyses}, table, sites


def _offset_km(analysis, site, time, kind, strict=True):
    """The section's surface front relative to the site [km], + toward the warm side.

    Not ``strict`` (an outer neighbouring step): None where the section finds no
    2-m zone centre (the table then uses its estimate there too)."""
    sec = section(analysis, site, time, front=kind)
    if not strict and "2 m theta-w" not in sec.attrs["surface_front_from"]:
        return None, None
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
        # the section's surface front at the steps either side and their outer
        # neighbours, timed by the table's own rule (kit.science.passages.
        # crossing_fraction: a parabola through the steps, else linear)
        picks = [j for j in range(k - 2, k + 2) if 0 <= j < times.size]
        offsets, hours = [], []
        for j in picks:
            inner = j in (k - 1, k)
            try:
                s_j, g_km = _offset_km(analysis, site, times[j], row["front_kind"], inner)
            except InputError:
                if inner:
                    raise
                continue
            if s_j is None:
                continue
            grid_km = g_km
            offsets.append(s_j)
            hours.append(float((times[j] - times[0]) / np.timedelta64(1, "h")))
        i = hours.index(float((times[k - 1] - times[0]) / np.timedelta64(1, "h")))
        w = crossing_fraction(hours, offsets, i)
        t_sec = hours[i] + w * (hours[i + 1] - hours[i])
        t_tab = float((tp - times[0]) / np.timedelta64(1, "h"))
        speed_kmh = float(row["speed_kt"]) * NM_KM
        gap_km = abs(t_sec - t_tab) * speed_kmh
        assert gap_km <= grid_km, (row["site"], row["run"], row["front_kind"],
                                   offsets, t_sec, t_tab, grid_km)
        checked += 1
        worst = max(worst, gap_km / grid_km)
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
