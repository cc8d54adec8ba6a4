"""Shift products and panel redraw: wall time, CPU time, peak memory.

Figures (issue 8 targets):

- ``frontshift shift`` on the sample grids (both runs, the six sites), run in
  a fresh subprocess so imports count and memory is its own: wall time,
  target <= 60 s; CPU time of that process (a busy machine inflates the wall
  time, not this); peak resident memory (``resource`` ru_maxrss of the child),
  no target (``tracemalloc`` is left off: it slows the run several times over);
- the frontal-map panel: one redraw after a valid-time change (analysis
  cached, the map frame built), median over the run's times, wall and CPU,
  target < 0.5 s (wall);
- one briefing map drawn from scratch (``kit.charts.maps.front_map`` and
  PNG), for comparison with the redraw.

Needs ``sample_grids/`` (``python -m tools.scenario``); without it the figures
are reported as missing (NaN), not invented.
"""

import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from benchmarks import figure

REPO = Path(__file__).resolve().parents[1]
SAMPLE = REPO / "sample_grids"

# tracemalloc slows Python code several times over, so it is not switched on for the
# timed run: memory is the child's peak resident set (resource.ru_maxrss).
_CHILD = r"""
import json, resource, sys, time
t0, c0 = time.perf_counter(), time.process_time()
from kit.cli import main
status = main(["shift", *sys.argv[3:], "--sites", sys.argv[1], "--out", sys.argv[2], "--quiet"])
wall, cpu = time.perf_counter() - t0, time.process_time() - c0
rss_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({"status": status, "wall": wall, "cpu": cpu, "rss_mb": rss_kb / 1024}))
"""


def _runs():
    if not (SAMPLE / "runs").is_dir() or not (SAMPLE / "sites.csv").exists():
        return []
    return sorted(str(p) for p in (SAMPLE / "runs").iterdir() if p.is_dir())


def _shift_figures():
    runs = _runs()
    target = "<= 60 s"
    if not runs:
        nan = float("nan")
        return [figure("frontshift shift on the sample grids (missing)", nan, "s", target,
                       None)]
    with tempfile.TemporaryDirectory() as out:
        proc = subprocess.run([sys.executable, "-c", _CHILD, str(SAMPLE / "sites.csv"), out,
                               *runs], capture_output=True, text=True, cwd=REPO, check=False)
        line = proc.stdout.strip().splitlines()[-1] if proc.stdout.strip() else "{}"
        try:
            res = json.loads(line)
        except ValueError:
            res = {}
        if proc.returncode != 0 or res.get("status") != 0:
            sys.stderr.write(proc.stderr[-2000:])
            raise RuntimeError(f"frontshift shift failed (exit {proc.returncode})")
        folder = next(Path(out).glob("shift_*"))
        n_files = sum(1 for p in folder.rglob("*") if p.is_file())
    return [
        figure(f"frontshift shift, {len(runs)} sample runs, {n_files} products: wall",
               res["wall"], "s", target, res["wall"] <= 60.0),
        figure("frontshift shift: CPU time of the process", res["cpu"], "s", "", None),
        figure("frontshift shift: peak resident memory (ru_maxrss)", res["rss_mb"], "MiB", "",
               None),
    ]


def _redraw_figures():
    runs = _runs()
    target = "< 0.5 s"
    if not runs:
        return [figure("panel redraw after a time change (missing)", float("nan"), "ms",
                       target, None)]
    import io

    from kit.ui import panels
    from kit.charts import maps

    widget = panels.front_panel([runs[-1]], SAMPLE / "sites.csv",
                                out_dir=tempfile.mkdtemp())
    panel = widget.controller
    options = [v for _, v in panel.time_slider.options]
    walls, cpus = [], []
    for value in options[1:] + options[:1]:
        t0, c0 = time.perf_counter(), time.process_time()
        panel.time_slider.value = value
        walls.append(time.perf_counter() - t0)
        cpus.append(time.process_time() - c0)
    ds = panel.runs[-1]
    fronts = panel.fronts()
    t0 = time.perf_counter()
    fig = maps.front_map(ds, fronts, time=options[len(options) // 2], sites=panel.sites)
    fig.savefig(io.BytesIO(), format="png", dpi=80)
    scratch = time.perf_counter() - t0
    wall_ms = 1e3 * statistics.median(walls)
    return [
        figure(f"panel redraw after a time change, median of {len(walls)}: wall", wall_ms, "ms",
               target, wall_ms < 500.0),
        figure("panel redraw: CPU", 1e3 * statistics.median(cpus), "ms", "", None),
        figure("one briefing map from scratch (front_map + PNG)", 1e3 * scratch, "ms", "",
               None),
    ]


def run():
    """All figures of this module (see the module docstring)."""
    return _shift_figures() + _redraw_figures()


if __name__ == "__main__":
    for row in run():
        print(f"{row['name']:<70} {row['value']:10.1f} {row['unit']:<4} {row['target']}")
