"""Verification reruns of past events: forecast passages and lines against observations.

An event folder holds ``runs/``, ``analyses/``, ``stations/`` and ``sites.csv``
(README). Each forecast run and the verifying analyses are analysed once
(:func:`kit.pipeline.analyse`); the arrival table of the runs is compared with
the passages found in the station series, and the forecast lines with the lines
on the verifying analyses (:mod:`kit.science.verification`).

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from kit.errors import InputError
from kit.io.runs import open_run
from kit.io.sites import read_sites
from kit.pipeline import analyse
from kit.products.arrivals import arrival_table
from kit.science.verification import (
    PASSAGE_COLUMNS,
    detect_passages,
    position_pairs,
    read_station_series,
    timing_pairs,
)
from kit.timefmt import iso_seconds

__all__ = ["find_events", "rerun_event", "rerun_events"]


# --------------------------------------------------------------------------
# Reruns
# --------------------------------------------------------------------------

def find_events(paths):
    """Expand arguments into event folders (a folder holding ``runs/`` or a parent of several).

    Raises
    ------
    InputError
        When an argument is not an event folder and holds none.
    """
    events = []
    for p in map(Path, paths):
        if (p / "runs").is_dir():
            events.append(p)
            continue
        found = sorted(d for d in p.iterdir() if (d / "runs").is_dir()) if p.is_dir() else []
        if not found:
            raise InputError(
                f"{p}: not an event folder; expected runs/, analyses/, stations/ and sites.csv "
                "inside it (or a folder of such folders)"
            )
        events.extend(found)
    return events


def _check_event(event):
    missing = [n for n in ("runs", "analyses", "stations", "sites.csv") if not (event / n).exists()]
    if missing:
        raise InputError(
            f"{event}: event folder lacks {', '.join(missing)}; expected runs/, analyses/, "
            "stations/ and sites.csv"
        )
    runs = sorted(d for d in (event / "runs").iterdir() if d.is_dir() or d.suffix == ".nc")
    if not runs:
        raise InputError(f"{event}/runs: no model runs; expected one folder or .nc file per run")
    return runs


def rerun_event(event_dir, *, level=850.0):
    """Verify one past event: observed passages, timing and position pairs.

    Parameters
    ----------
    event_dir : str or Path
        Event folder (module docstring).
    level : float
        Level the fronts are located on [hPa].

    Returns
    -------
    dict of pandas.DataFrame
        ``observed`` (passages found in the station series), ``station_problems``,
        ``timing`` (:func:`timing_pairs`) and ``position`` (:func:`position_pairs`).
    """
    event = Path(event_dir)
    run_paths = _check_event(event)
    name = event.name
    sites = read_sites(event / "sites.csv")
    observed, problems = [], []
    for _, site in sites.iterrows():
        path = event / "stations" / f"{site['name']}.csv"
        if not path.exists():
            problems.append({"event": name, "site": site["name"], "problem": "no station series"})
            continue
        series = read_station_series(path, name=site["name"])
        problems += [{"event": name, "site": site["name"], "problem": p} for p in series.problems]
        observed.append(detect_passages(series, latitude=float(site["lat"])))
    observed = (pd.concat(observed, ignore_index=True) if observed
                else pd.DataFrame(columns=PASSAGE_COLUMNS))
    runs = [open_run(p).load() for p in run_paths]
    refs = {ds.attrs["run"]: pd.Timestamp(ds["reference_time"].values) for ds in runs}
    analyses = [analyse(ds, level=level) for ds in runs]
    forecast = arrival_table(analyses, sites)
    verifying = list(analyse(open_run(event / "analyses"), level=level).fronts)
    fronts = [f for a in analyses for f in a.fronts]
    obs_out = observed.copy()
    obs_out.insert(0, "event", name)
    obs_out["passage_utc"] = obs_out["passage_utc"].map(iso_seconds)
    return {
        "observed": obs_out,
        "station_problems": pd.DataFrame(problems, columns=["event", "site", "problem"]),
        "timing": timing_pairs(forecast, observed, refs, event=name),
        "position": position_pairs(fronts, verifying, refs, event=name),
    }


def rerun_events(event_dirs, *, scheduler=None, workers=2, level=850.0, progress=None):
    """Verify several events in parallel with dask.distributed.

    Parameters
    ----------
    event_dirs : list of str or Path
    scheduler : str, optional
        Address of an existing dask scheduler (``tcp://host:port``); default a
        local cluster of ``workers`` processes on this machine.
    workers : int
        Worker processes of the local cluster.
    level : float
        Front level [hPa].
    progress : bool or None
        Show a progress bar (tqdm, on stderr); None shows it only when stderr
        is a terminal (so a logged, headless run gets no bar codes).

    Returns
    -------
    dict of pandas.DataFrame
        As :func:`rerun_event`, concatenated over events, plus ``workers_used``
        (how many distinct workers ran tasks).
    """
    # optional heavy dependencies (dask.distributed, tqdm): imported only for a rerun
    from dask.distributed import Client, LocalCluster, as_completed  # optional
    from tqdm.auto import tqdm  # optional

    events = find_events(event_dirs)
    for event in events:  # fail fast, before any worker starts
        _check_event(event)
    cluster = None
    if scheduler:
        try:
            client = Client(scheduler, timeout="10s")
        except OSError as exc:
            raise InputError(
                f"--scheduler {scheduler}: cannot reach the dask scheduler ({exc}); expected "
                "the address of a running scheduler, e.g. tcp://scheduler-host:8786"
            ) from None
    else:
        cluster = LocalCluster(n_workers=max(1, int(workers)), threads_per_worker=1,
                               processes=True, dashboard_address=":0")
        client = Client(cluster)
        client.wait_for_workers(max(1, int(workers)), timeout="120s")
    try:
        futures = {client.submit(_rerun_task, str(e), level, pure=False): e for e in events}
        results, where = [], set()
        bar = tqdm(total=len(futures), desc="events", unit="event", leave=False,
                   disable=None if progress is None else not progress)
        try:
            for fut in as_completed(futures):
                out, worker = fut.result()
                results.append(out)
                where.add(worker)
                bar.update(1)
        finally:
            bar.close()
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
    merged = {k: pd.concat([r[k] for r in results], ignore_index=True) for k in results[0]}
    merged["workers_used"] = len(where)
    return merged


def _rerun_task(event_dir, level):
    # optional heavy dependency, imported inside the worker process
    import dask  # optional
    from dask.distributed import get_worker  # optional

    try:
        worker = get_worker().address
    except ValueError:
        worker = "local"
    # the lazy arrays of one event are computed inside this worker process;
    # without this they would be sent back to the cluster as nested tasks
    with dask.config.set(scheduler="threads"):
        return rerun_event(event_dir, level=level), worker
