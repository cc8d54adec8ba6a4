"""The analysis of one run, once: find -> classify -> track -> speeds -> slopes.

:func:`analyse` is the single entry point the command line, the notebook panels
and every product use. It returns an :class:`kit.model.Analysis`; products take
that object and never run the front analysis again, so the map, the sections,
the arrival table and the timelines of one shift all show the same fronts.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from kit.errors import InputError
from kit.model import Analysis
from kit.science.centres import assign_lows, find_run_centres, track_centres
from kit.science.fronts import FrontSettings, find_fronts
from kit.science.motion import speeds_three_ways, track_fronts
from kit.science.structure import add_slopes

__all__ = ["IN_MEMORY_BYTES", "STEPS", "analyse"]

#: a lazy (dask) run smaller than this is read into memory once before the
#: analysis, which samples it many times; larger runs stay lazy [bytes]
IN_MEMORY_BYTES = 2_000_000_000

#: the steps of the analysis, in order
STEPS = ("find", "track", "speeds", "slopes")


def _in_memory_if_small(ds):
    """Read a lazy run into memory once when it is small enough (see IN_MEMORY_BYTES)."""
    lazy = any(getattr(v.variable, "chunks", None) is not None for v in ds.data_vars.values())
    if lazy and ds.nbytes <= IN_MEMORY_BYTES:
        return ds.load()
    return ds


def analyse(ds, *, level=850.0, settings=None, member=None, steps=STEPS):
    """Fronts of a run with tracks, speeds three ways and slopes, as one Analysis.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset of one run (:func:`kit.io.runs.open_run`).
    level : float
        Level the fronts are located on [hPa].
    settings : kit.science.fronts.FrontSettings, optional
        Front-finding settings (smoothing, thresholds, steering level,
        quasi-stationary speed, field); the documented defaults when None.
    member : int, optional
        One ensemble member; default every member of the run.
    steps : sequence of str
        Steps to run, a leading part of :data:`STEPS` (``("find",)`` gives
        located and typed fronts only, the quickest look).

    Returns
    -------
    kit.model.Analysis
        Every front at every valid time: ``track``/``link`` from
        :func:`kit.science.motion.track_fronts`, ``motion`` from
        :func:`kit.science.motion.speeds_three_ways` and ``structure`` from
        :func:`kit.science.structure.add_slopes`.
    """
    steps = tuple(steps)
    if steps != STEPS[: len(steps)] or not steps:
        raise InputError(
            f"analyse: steps {steps!r}; expected a leading part of {STEPS!r}, e.g. ('find',)"
        )
    settings = settings if settings is not None else FrontSettings()
    if not isinstance(settings, FrontSettings):
        raise InputError(
            f"analyse: settings of type {type(settings).__name__}; expected FrontSettings"
        )
    if settings.field == "theta_w" and "td" not in ds:
        # a thin run without humidity on its levels: theta (Thomas & Schultz 2019),
        # as ds.attrs["thin"] says in every product
        settings = dataclasses.replace(settings, field="theta")
    ds = _in_memory_if_small(ds)
    if member is not None:
        members = [member]
    elif "member" in ds.dims:
        members = [m.item() for m in ds["member"]]
    else:
        members = [None]
    run = ds.attrs.get("run")
    run = None if run is None else str(run)
    fronts = []
    for m in members:
        for fr in find_fronts(ds, level=level, member=m, settings=settings):
            changes = {}
            if fr.member is None and m is not None:
                changes["member"] = int(m)
            if fr.run is None and run is not None:
                changes["run"] = run
            fronts.append(fr.replace(**changes) if changes else fr)
    if "track" in steps:
        fronts = track_fronts(fronts)
    if "speeds" in steps:
        fronts = speeds_three_ways(
            fronts,
            ds,
            steering_level_hpa=float(settings.steering_level_hpa),
            qs_speed_ms=float(settings.qs_speed_ms),
        )
    if "slopes" in steps:
        fronts = add_slopes(fronts, ds, settings=settings)
    centres = ()
    if "mslp" in ds:
        # lows and highs of the same run; each front names the low it belongs to
        centres = tuple(track_centres(find_run_centres(ds)))
        fronts = assign_lows(fronts, centres)
    times = tuple(np.datetime64(t, "ns") for t in np.atleast_1d(ds["time"].values))
    return Analysis(
        fronts=tuple(fronts),
        run=run,
        level_hpa=float(level),
        settings=settings,
        valid_times=times,
        members=tuple(members),
        dataset=ds,
        steps=steps,
        centres=centres,
    )
