"""Tests of the benchmark runner frame (python -m benchmarks), not of any speed."""

import sys
import types

import pandas as pd
import pytest

import benchmarks
from benchmarks import __main__ as runner


def _fake_module(monkeypatch, name, run):
    mod = types.ModuleType(f"benchmarks.{name}")
    mod.run = run
    monkeypatch.setitem(sys.modules, f"benchmarks.{name}", mod)
    return f"benchmarks.{name}"


def test_discovers_bench_modules():
    names = runner.discover()
    assert "benchmarks.bench_thermo" in names
    assert all(n.split(".", 1)[1].startswith("bench_") for n in names)


def test_figure_helper_and_best_time():
    f = benchmarks.figure("x", 2, "s", "<= 3", True)
    assert f == {"name": "x", "value": 2.0, "unit": "s", "target": "<= 3", "met": True}
    calls = []
    sec = benchmarks.best_time(lambda: calls.append(1), repeat=2, min_time=0.0)
    assert sec >= 0.0 and len(calls) >= 3  # warm-up plus timed calls


def test_table_and_csv(monkeypatch, tmp_path, capsys):
    good = _fake_module(
        monkeypatch,
        "bench_fake_good",
        lambda: [
            benchmarks.figure("speed of a thing", 0.05, "s", "<= 0.1", True),
            benchmarks.figure("ratio", 12000.0, "x"),
        ],
    )

    def boom():
        raise RuntimeError("broken on purpose")

    bad = _fake_module(monkeypatch, "bench_fake_bad", boom)
    monkeypatch.setattr(runner, "discover", lambda: [good, bad])
    out = tmp_path / "figures.csv"
    status = runner.main(["--out", str(out)])
    captured = capsys.readouterr()
    assert status == 1  # one module raised: reported, the other still ran
    assert "error: bench_fake_bad: RuntimeError: broken on purpose" in captured.err
    assert "speed of a thing" in captured.out and "yes" in captured.out
    frame = pd.read_csv(out)
    assert list(frame.columns[:6]) == ["module", "name", "value", "unit", "target", "met"]
    assert frame["name"].tolist() == ["speed of a thing", "ratio"]
    assert frame["value"].tolist() == [0.05, 12000.0]
    # a second run replaces the artefact (it is not a product)
    monkeypatch.setattr(runner, "discover", lambda: [good])
    assert runner.main(["--out", str(out)]) == 0


def test_bad_arguments(monkeypatch, tmp_path, capsys):
    assert runner.main(["--out", str(tmp_path / "figures.txt")]) == 2
    assert "expected a .csv file name" in capsys.readouterr().err
    monkeypatch.setattr(runner, "discover", lambda: [])
    assert runner.main(["--only", "nothing", "--out", str(tmp_path / "f.csv")]) == 2


def test_malformed_figures_are_reported(monkeypatch, tmp_path, capsys):
    mod = _fake_module(monkeypatch, "bench_fake_malformed", lambda: [{"name": "x"}])
    monkeypatch.setattr(runner, "discover", lambda: [mod])
    assert runner.main(["--out", str(tmp_path / "f.csv")]) == 1
    assert "lacks value, unit, target, met" in capsys.readouterr().err


@pytest.mark.parametrize("value, text", [(0.0, "0"), (12345.678, "1.235e+04"), (1e-5, "1e-05")])
def test_value_format(value, text):
    assert runner._fmt_value(value) == text


def test_loose_figures_are_normalised():
    r = runner._normalise({"name": "x", "value": None, "unit": None, "target": None, "met": 1})
    assert r["target"] == "" and r["unit"] == "" and r["met"] is True
    assert r["value"] != r["value"]  # NaN
    assert "n/a" in runner.format_table([{"module": "m", **r}])
