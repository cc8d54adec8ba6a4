"""``frontshift fronts RUN... [--level 850] --out FILE.geojson``: objective fronts as GeoJSON.

Every RUN (a GRIB or NetCDF file, glob or folder of one model run; several are runs or
members of one event) is opened with :func:`kit.io.runs.open_run`; its fronts
are found at every valid time (:func:`kit.pipeline.analyse`: location,
type, tracks over lead time, speeds three ways, slopes) and written as one
RFC 7946 FeatureCollection of LineStrings (:func:`kit.products.fronts.fronts_to_geojson`)
that carries kit.CAUTION. A one-line summary goes to stdout.
"""

from pathlib import Path

import numpy as np

from kit import CAUTION
from kit.cli.common import add_latest_argument, load_runs, output_path, resolve_runs
from kit.errors import InputError, OutputError
from kit.pipeline import analyse
from kit.products.files import write_json
from kit.products.fronts import (
    fronts_to_geojson,
    plausibility,
    plausibility_metadata,
    plausibility_notes,
    plausibility_text,
)
from kit.science.fronts import FrontSettings, level_index

__all__ = ["add_parser", "run"]

_SUFFIXES = (".geojson", ".json")


def add_parser(subparsers):
    """Register the ``fronts`` sub-command."""
    p = subparsers.add_parser(
        "fronts",
        help="objective fronts (warm, cold, quasi-stationary) of each run as GeoJSON",
        description="Locate fronts on one pressure level with the thermal front parameter of "
        "smoothed wet-bulb potential temperature (or potential temperature), type them by the "
        "front-normal wind, track them over lead time and write every line, valid time, run "
        "and member to one GeoJSON file.",
        epilog=CAUTION,
    )
    p.add_argument(
        "runs",
        metavar="RUN",
        nargs="+",
        help="GRIB or NetCDF file, glob or folder of one model run; several = runs/members "
        "of one event",
    )
    p.add_argument(
        "--level",
        type=float,
        default=850.0,
        metavar="HPA",
        help="pressure level the fronts are located on [hPa] (default 850)",
    )
    p.add_argument(
        "--field",
        choices=("theta_w", "theta"),
        default="theta_w",
        help="thermal field: wet-bulb potential temperature (default) or potential "
        "temperature (marks moisture boundaries less in the subtropics)",
    )
    p.add_argument(
        "--member",
        type=int,
        metavar="N",
        help="analyse only ensemble member N (default: every member)",
    )
    add_latest_argument(p)
    p.add_argument(
        "--smoothing-km",
        type=float,
        default=None,
        metavar="KM",
        help=f"Gaussian smoothing scale [km] (default {FrontSettings().smoothing_km:g}, "
        "never under one grid length)",
    )
    p.add_argument(
        "--min-length-km",
        type=float,
        default=None,
        metavar="KM",
        help=f"drop lines shorter than this [km] (default {FrontSettings().min_length_km:g}, "
        f"never under {FrontSettings().min_length_grid_lengths:g} grid lengths)",
    )
    p.add_argument("--out", required=True, metavar="FILE.geojson", help="output GeoJSON file")
    p.add_argument(
        "--overwrite", action="store_true", help="replace an existing output file (never silent)"
    )
    p.set_defaults(func=run)


def _settings(args):
    kw = {"field": args.field}
    if args.smoothing_km is not None:
        kw["smoothing_km"] = args.smoothing_km
    if args.min_length_km is not None:
        kw["min_length_km"] = args.min_length_km
    return FrontSettings(**kw)


def run(args):
    """Find the fronts of every RUN and write the GeoJSON; return 0."""
    out = output_path(args.out, _SUFFIXES)
    if out.exists() and not args.overwrite:
        raise OutputError(
            f"{out}: already exists; choose a new name or pass --overwrite to replace it"
        )
    if not (args.level > 0):
        raise InputError(f"--level {args.level:g}: expected a pressure level in hPa above 0")
    settings = _settings(args)
    runs = load_runs(resolve_runs(args.runs, args.latest), member=args.member)
    fronts = []
    analyses = []
    for ds in runs:
        analyses.append(analyse(ds, level=args.level, settings=settings))
        fronts.extend(analyses[-1].fronts)
    collection = fronts_to_geojson(fronts)
    pairs = list(zip(args.runs, runs, strict=True))
    report = plausibility(analyses)
    notes = _notes(runs, fronts, args.level, settings) + plausibility_notes(report)
    collection["properties"] = {
        "product": "frontshift fronts",
        "level_hpa": float(args.level),
        "field": settings.field,
        "runs": [str(ds.attrs.get("run", Path(str(a)).name)) for a, ds in pairs],
        "source": "; ".join(str(ds.attrs.get("source", a)) for a, ds in pairs),
        "valid_times_analysed": sum(int(ds.sizes.get("time", 1)) for ds in runs),
        "plausibility": plausibility_metadata(report),
        "caution": CAUTION,
    }
    if notes:
        collection["properties"]["note"] = "; ".join(notes)
    write_json(out, collection, overwrite=args.overwrite)
    kinds = {k: sum(f.kind == k for f in fronts) for k in ("warm", "cold", "quasi-stationary")}
    times = len({str(f.valid_time) for f in fronts})
    print(
        f"wrote {len(fronts)} fronts ({kinds['warm']} warm, {kinds['cold']} cold, "
        f"{kinds['quasi-stationary']} quasi-stationary) at {times} valid times "
        f"on {args.level:g} hPa to {out}"
    )
    for note in notes:
        print(f"note: {note}")
    print("plausibility of the fronts (lift: 0 chance, 1 every point; shares of line length):")
    print(plausibility_text(report))
    print(CAUTION)
    return 0


def _iso_minutes(t):
    return np.datetime_as_string(np.datetime64(t, "m"), unit="m") + "Z"


def _empty_steps(ds, level):
    """List the valid times (and members) whose analysis level holds no value at all."""
    t = ds["t"].isel(level=level_index(ds, level, "level"))
    spatial = [d for d in t.dims if d not in ("time", "member")]
    empty = t.isnull().all(dim=spatial).compute()
    out = []
    if "member" in empty.dims:
        for m in empty["member"].values:
            for tt in empty["time"].values[np.asarray(empty.sel(member=m).values, dtype=bool)]:
                out.append(f"{_iso_minutes(tt)} (member {int(m)})")
    else:
        for tt in empty["time"].values[np.atleast_1d(np.asarray(empty.values, dtype=bool))]:
            out.append(_iso_minutes(tt))
    return out


def _notes(runs, fronts, level, settings):
    """Write plain-words notes for the product: empty steps, times without fronts."""
    notes = []
    for ds in runs:
        run = ds.attrs.get("run", "?")
        if ds.attrs.get("thin"):
            notes.append(f"run {run} is thin: {ds.attrs['thin']}")
        empty = _empty_steps(ds, level)
        if empty:
            notes.append(
                f"run {run}: no data on {level:g} hPa (every value missing) at "
                + ", ".join(empty)
                + "; those steps could not be analysed"
            )
    if not fronts:
        n = sum(int(ds.sizes.get("time", 1)) for ds in runs)
        notes.append(
            f"no front found on {level:g} hPa at any of the {n} valid times analysed "
            f"(no line of {settings.min_length_km:g} km or more passed the masks "
            "and the flow-signature check)"
        )
    else:
        for ds in runs:
            run = ds.attrs.get("run")
            have = {np.datetime64(f.valid_time, "m") for f in fronts if f.run == run}
            empty = set(_empty_steps(ds, level))
            without = [
                _iso_minutes(t)
                for t in ds["time"].values
                if np.datetime64(t, "m") not in have and _iso_minutes(t) not in empty
            ]
            if without:
                notes.append(f"run {run}: no front found at " + ", ".join(without))
    return notes
