"""Verification reruns on a local dask cluster: speed-up from 1 to 2 workers.

Copies the sample event into a temporary folder several times and reruns them all with
:func:`kit.products.rerun.rerun_events` on a local cluster of 1 and then 2 worker
processes. Target (issue 9, the kit's own): the second worker pays, i.e. a
speed-up above 1.5 on a 2-core machine.
"""

import shutil
import tempfile
import time
from pathlib import Path

from benchmarks import figure

ROOT = Path(__file__).resolve().parents[1]
COPIES = 4


def _copy_event(src, dst):
    shutil.copytree(src, dst)


def run():
    from kit.products.rerun import rerun_events

    with tempfile.TemporaryDirectory() as tmp:
        events = []
        for i in range(COPIES):
            dst = Path(tmp) / f"event_{i + 1}"
            _copy_event(ROOT / "sample_grids", dst)
            events.append(dst)
        times, used = {}, {}
        for workers in (1, 2):
            t0 = time.perf_counter()
            res = rerun_events(events, workers=workers, progress=False)
            times[workers] = time.perf_counter() - t0
            used[workers] = res["workers_used"]
    speedup = times[1] / times[2]
    return [
        figure(f"rerun of {COPIES} sample events, 1 worker", times[1], "s"),
        figure(f"rerun of {COPIES} sample events, 2 workers", times[2], "s"),
        figure("rerun speed-up 1 -> 2 workers", speedup, "x", ">= 1.5", speedup >= 1.5),
        figure("workers that ran tasks (2-worker cluster)", used[2], "", ">= 2", used[2] >= 2),
    ]
