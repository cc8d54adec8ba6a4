"""Tests of ``frontshift arrivals``: products, contract columns, one-line errors.

The run is the analytic moving front of tests/test_arrivals.py written as CF
NetCDF and read back through kit.io.runs; the tracked fronts come from the same
analytic construction (kit.pipeline.analyse, as the command calls it, is replaced by them here, so the
command's plumbing is tested independently of front finding).
"""

import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from conftest import to_cf, write_cf
from test_arrivals import EDGE_X, ZONE_L_KM, analysis_of, hours_of, make_run

import kit.cli.arrivals
from kit import CAUTION
from kit.products.arrivals import CONTRACT_COLUMNS
from kit.cli import main

HOURS = np.arange(0, 25, 3)  # 9 steps on a 1-degree grid keep the loader quick


@pytest.fixture(scope="module")
def written_run(tmp_path_factory):
    ds, fronts = make_run(
        kind="cold", passage_h=12.0, run="2027-01-14T00Z", grid_step=1.0, hours=HOURS
    )
    return write_cf(to_cf(ds), tmp_path_factory.mktemp("cli") / "run"), fronts


@pytest.fixture
def run_dir(written_run, monkeypatch):
    path, fronts = written_run
    monkeypatch.setattr(kit.cli.arrivals, "analyse", lambda ds, **kw: analysis_of(ds, fronts))
    return path


@pytest.fixture
def sites_csv(tmp_path):
    p = tmp_path / "sites.csv"
    p.write_text("name,lat,lon,elevation_m\nKessock Moor,50.0,0.0,0\nAbbersly,52.0,-1.5,95\n")
    return p


def test_csv_contract_and_timelines(run_dir, sites_csv, tmp_path, capsys):
    out = tmp_path / "arrivals.csv"
    out.write_text("an earlier product\n")
    rc = main(
        [
            "arrivals",
            str(run_dir),
            "--sites",
            str(sites_csv),
            "--out",
            str(out),
            "--at-level",
            "--timelines",
            str(tmp_path / "tl"),
            "--overwrite",
        ]
    )
    assert rc == 0
    table = pd.read_csv(out, keep_default_na=False)
    assert list(table.columns[: len(CONTRACT_COLUMNS)]) == CONTRACT_COLUMNS
    assert (table["caution"] == CAUTION).all()
    assert table["site"].tolist() == ["Kessock Moor", "Abbersly"]
    for col in [c for c in table.columns if c.endswith("_utc")]:
        assert all(v.endswith("Z") for v in table[col] if v), col
    # [analytic] the prescribed passage at Kessock Moor is 12:00Z (tolerance 10 min)
    assert abs(hours_of(table["passage_utc"].iloc[0]) - 12.0) <= 10 / 60
    assert table["speed_kt"].iloc[0] == pytest.approx(10 * 3600 / 1852, abs=0.6)
    # empty cell where a value does not apply: one run -> no spread
    assert table["spread_h"].iloc[0] == ""
    pngs = sorted(p.name for p in (tmp_path / "tl").glob("*.png"))
    assert pngs == ["timeline_abbersly.png", "timeline_kessock_moor.png"]
    assert "passages at 2 sites" in capsys.readouterr().out


def test_html_and_no_silent_overwrite(run_dir, sites_csv, tmp_path, capsys):
    out = tmp_path / "arrivals.html"
    assert main(["arrivals", str(run_dir), "--sites", str(sites_csv), "--out", str(out)]) == 0
    page = out.read_text()
    assert CAUTION in page and "Front arrivals at 2 sites" in page and "passage_utc" in page
    capsys.readouterr()
    assert main(["arrivals", str(run_dir), "--sites", str(sites_csv), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "already exists" in err and err.count("\n") == 1
    assert out.read_text() == page  # untouched


@pytest.mark.parametrize(
    "text, expect",
    [
        ("name,lat\nA,50\n", "no column lon"),
        ("name,lat,lon\nA,50,0\nA,51,0\n", "duplicate site name"),
        ("name,lat,lon\nFarside,10.0,0\n", "site 'Farside' (10.000, 0.000) lies off the grid"),
    ],
)
def test_bad_sites_exit_2_one_line(run_dir, tmp_path, capsys, text, expect):
    bad = tmp_path / "bad.csv"
    bad.write_text(text)
    rc = main(["arrivals", str(run_dir), "--sites", str(bad), "--out", str(tmp_path / "a.csv")])
    err = capsys.readouterr().err
    assert rc == 2
    assert err.startswith("error: ") and expect in err and err.count("\n") == 1
    assert not (tmp_path / "a.csv").exists()


def test_bad_suffix_and_subprocess_no_traceback(tmp_path, sites_csv):
    """Through the real command line: exit status 2, one line, no traceback."""
    res = subprocess.run(
        [
            sys.executable,
            "-m",
            "kit",
            "arrivals",
            str(tmp_path / "nothing"),
            "--sites",
            str(sites_csv),
            "--out",
            str(tmp_path / "x.txt"),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert res.returncode == 2
    assert res.stderr.startswith("error: --out") and res.stderr.count("\n") == 1
    assert "Traceback" not in res.stderr


def test_member_run_spread_through_cli(tmp_path, sites_csv, monkeypatch):
    """[analytic] members 0, +1.5, -2 h apart: spread 3.5 h in the product; with
    --warm-edge the cold front's warm edge, 0.658 L = 39.5 km ahead of the zone
    centre, passes 1.10 h before 12:00Z (member 0)."""
    ds, fronts = make_run(
        kind="cold", passage_h=12.0, members=[0.0, 1.5, -2.0], grid_step=1.0, hours=HOURS
    )
    path = write_cf(to_cf(ds), tmp_path / "ens")
    monkeypatch.setattr(kit.cli.arrivals, "analyse", lambda ds, **kw: analysis_of(ds, fronts))
    out = tmp_path / "ens.csv"
    assert (
        main(
            [
                "arrivals",
                str(path),
                "--sites",
                str(sites_csv),
                "--out",
                str(out),
                "--at-level",
                "--warm-edge",
            ]
        )
        == 0
    )
    table = pd.read_csv(out, keep_default_na=False)
    kessock = table[table["site"] == "Kessock Moor"]
    assert sorted(kessock["member"].tolist()) == [0, 1, 2]
    assert np.allclose(kessock["spread_h"].astype(float), 3.5, atol=10 / 60)
    first = kessock[kessock["member"] == 0].iloc[0]
    lag = EDGE_X * ZONE_L_KM / 36.0  # km over km/h at 10 m/s
    assert abs(hours_of(first["passage_utc"]) - (12.0 - lag)) <= 10 / 60
