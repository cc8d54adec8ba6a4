"""Which runs a command takes: newest = latest reference time everywhere, ``--latest N``,
and the sites.csv found beside the runs when ``--sites`` is not given (issue 16 item 8).

The runs are small invented CF runs (tests/test_cli_fronts.write_run).
"""

import json

import pytest
from test_cli_fronts import write_run

from kit.cli import main
from kit.cli.common import load_runs, resolve_runs, sites_file
from kit.errors import InputError

REFS = ("2030-01-14T00", "2030-01-13T12", "2030-01-14T12")  # listed out of order


@pytest.fixture(scope="module")
def event(tmp_path_factory):
    """A folder of three run folders (listed out of time order) and a sites.csv above them."""
    root = tmp_path_factory.mktemp("event")
    runs = root / "runs"
    for ref in REFS:
        folder = runs / ref.replace(":", "")
        folder.mkdir(parents=True)
        write_run(folder / "run.nc", ref=ref)
    (root / "sites.csv").write_text("name,lat,lon,elevation_m\nTolley Gap,50.0,9.0,120\n"
                                    "Wrenmoor,51.0,12.0,80\n")
    return root


def test_load_runs_oldest_first_whatever_the_order_given(event):
    args = [str(event / "runs" / r) for r in REFS]
    labels = [ds.attrs["run"] for ds in load_runs(args)]
    assert labels == ["2030-01-13T12Z", "2030-01-14T00Z", "2030-01-14T12Z"]


def test_latest_keeps_the_newest_runs_of_a_folder_of_runs(event):
    got = resolve_runs([str(event / "runs")], latest=2)
    assert [p.rsplit("/", 1)[-1] for p in got] == ["2030-01-14T00", "2030-01-14T12"]
    assert resolve_runs(["a", "b"]) == ["a", "b"]  # without --latest: as given
    with pytest.raises(InputError, match="--latest 0"):
        resolve_runs([str(event / "runs")], latest=0)


def test_fronts_latest_one(event, tmp_path):
    out = tmp_path / "f.geojson"
    assert main(["fronts", str(event / "runs"), "--latest", "1", "--out", str(out)]) == 0
    runs = {f["properties"]["run"] for f in json.loads(out.read_text())["features"]}
    assert runs == {"2030-01-14T12Z"}


def test_arrivals_finds_sites_beside_the_runs_and_draws_the_newest(event, tmp_path, capsys):
    out = tmp_path / "a.csv"
    tl = tmp_path / "tl"
    args = [str(event / "runs" / r) for r in REFS]
    assert main(["arrivals", *args, "--out", str(out), "--timelines", str(tl)]) == 0
    printed = capsys.readouterr().out
    assert f"sites from {event / 'sites.csv'}" in printed
    text = out.read_text()
    assert "Tolley Gap" in text and "Wrenmoor" in text
    assert sorted(p.name for p in tl.glob("*.png")) == ["timeline_tolley_gap.png",
                                                        "timeline_wrenmoor.png"]
    # the timelines show the newest run (latest reference time), not the first listed
    assert printed.count("(run 2030-01-14T12Z, the newest)") == 2


def test_no_sites_anywhere_is_one_line(tmp_path):
    write_run(tmp_path / "run.nc")
    with pytest.raises(InputError, match="no sites.csv beside the run"):
        sites_file(None, [str(tmp_path / "run.nc")])
