"""``frontshift arrivals RUN... --sites SITES.csv --out FILE.csv``: the site arrival table.

One row per site and front passage (per run and member), with the weather
sequence and the spread over runs (see :mod:`kit.products.arrivals`). ``--out`` ending
in ``.csv`` writes CSV (the last column, ``caution``, carries kit.CAUTION on
every row); ``.html`` writes a page with a title and the caution. A thin run
(no humidity or wind on its levels) is said in the ``thin_run`` column of the
CSV, under the caution of the page and on stdout.
``--timelines DIR`` also writes one timeline figure per site (PNG) of the
first RUN (first member).
"""

import re
from pathlib import Path

from kit import CAUTION
from kit.charts.timelines import timeline_figure
from kit.cli.common import (
    add_latest_argument,
    add_sites_argument,
    load_runs,
    output_path,
    resolve_runs,
    sites_file,
)
from kit.errors import InputError, OutputError
from kit.io.sites import check_sites_on_grid, read_sites
from kit.pipeline import analyse
from kit.products.arrivals import arrival_table, thin_notes
from kit.products.files import save_figure, write_csv, write_html_table

__all__ = ["add_parser", "run"]

_SUFFIXES = (".csv", ".html")


def add_parser(subparsers):
    """Register the ``arrivals`` sub-command."""
    p = subparsers.add_parser(
        "arrivals",
        help="site arrival table: front passage times and weather sequence per site",
        description="When does each front reach each site, at what speed, and with what "
        "rain, wind turn, temperature and freezing-level change; spread over several runs or "
        "members. --out ending in .csv writes CSV, .html a table page.",
        epilog=CAUTION,
    )
    p.add_argument(
        "runs",
        metavar="RUN",
        nargs="+",
        help="GRIB or NetCDF file, glob or folder of one model run; several = runs/members "
        "of one event (the timelines show the newest: the latest reference time)",
    )
    add_sites_argument(p)
    add_latest_argument(p)
    p.add_argument("--out", required=True, metavar="FILE", help="output table: .csv or .html")
    p.add_argument(
        "--overwrite", action="store_true", help="replace existing output files (never silent)"
    )
    p.add_argument(
        "--timelines", metavar="DIR", help="also write a timeline figure (PNG) per site into DIR"
    )
    p.add_argument(
        "--level",
        type=float,
        default=850.0,
        metavar="HPA",
        help="level the fronts are found on [hPa] (default 850)",
    )
    p.add_argument(
        "--horizon-h",
        type=float,
        default=12.0,
        metavar="H",
        help="longest extrapolation past a front's last step [h] (default 12)",
    )
    p.add_argument(
        "--at-level",
        action="store_true",
        help="time the passage of the line on --level itself instead of the "
        "surface front estimated from the slope",
    )
    p.add_argument(
        "--warm-edge",
        action="store_true",
        help="time the warm edge of the frontal zone (where the located line lies) "
        "instead of its centre, the middle of the temperature change",
    )
    p.set_defaults(func=run)


def _slug(name):
    slug = re.sub(r"[^A-Za-z0-9]+", "_", str(name)).strip("_").lower()
    return slug or "site"


def run(args):
    """Build the arrival table (and timelines) and write the products; return 0."""
    out = output_path(args.out, _SUFFIXES)
    if out.exists() and not args.overwrite:
        raise OutputError(f"{out}: already exists; choose a new name or pass --overwrite")
    if not 0.0 <= args.horizon_h <= 48.0:
        raise InputError(f"--horizon-h {args.horizon_h:g}: expected 0 to 48 hours")
    if not 100.0 <= args.level <= 1050.0:
        raise InputError(f"--level {args.level:g}: expected a pressure level 100 to 1050 hPa")
    tl_dir = Path(args.timelines) if args.timelines else None
    if tl_dir is not None and tl_dir.exists() and not tl_dir.is_dir():
        raise InputError(f"--timelines {tl_dir}: is a file; expected a folder")
    run_args = resolve_runs(args.runs, args.latest)
    sites_path = sites_file(args.sites, run_args)
    sites = read_sites(sites_path)
    if not args.sites:
        print(f"sites from {sites_path}")
    runs = load_runs(run_args)
    for ds in runs:
        check_sites_on_grid(sites, ds)
    analyses = [analyse(ds, level=args.level) for ds in runs]
    table, series = arrival_table(
        analyses,
        sites,
        surface=not args.at_level,
        zone_centre=not args.warm_edge,
        horizon_h=args.horizon_h,
        return_series=True,
    )
    labels = ", ".join(table.attrs.get("runs", []))
    if out.suffix.lower() == ".csv":
        frame = table.copy()
        frame["caution"] = CAUTION
        write_csv(out, frame, overwrite=args.overwrite)
    else:
        title = (
            f"Front arrivals at {len(sites)} sites: runs {labels} (times UTC, speeds kt, "
            "freezing levels m above sea level, cloud base ft above site)"
        )
        page = table.drop(columns=["thin_run"], errors="ignore")  # said once, above it
        write_html_table(out, page, title, CAUTION, overwrite=args.overwrite,
                         notes=thin_notes(table))
    n_pass = int((table["passage_utc"] != "").sum())
    print(f"{n_pass} passages at {len(sites)} sites from {len(runs)} run(s) written to {out}")
    for line in thin_notes(table):
        print(line)
    if tl_dir is not None:
        first = str(runs[-1].attrs.get("run", "run1"))  # the newest run
        for _, site in sites.iterrows():
            key = next(k for k in series if k[0] == first and k[2] == site["name"])
            rows = table[table["site"] == site["name"]]
            fig = timeline_figure(series[key], rows)
            path = save_figure(
                fig, tl_dir / f"timeline_{_slug(site['name'])}.png", overwrite=args.overwrite
            )
            print(f"timeline {path} (run {first}, the newest)")
    return 0
