"""``frontshift rerun EVENT_DIR... --out DIR``: verification of past events."""

from pathlib import Path

import pandas as pd

from kit import CAUTION
from kit.charts.verification import position_error_figure, timing_error_figure
from kit.errors import InputError
from kit.products.files import new_product_dir, save_figure, write_csv, write_html_table
from kit.products.rerun import rerun_events
from kit.science.verification import summarise_position, summarise_timing

__all__ = ["add_parser", "run"]


def add_parser(subparsers):
    """Register the ``rerun`` sub-command."""
    p = subparsers.add_parser(
        "rerun",
        help="verify past events: observed passages, timing and position errors",
        description="Rerun the kit on past events and compare with station series and "
        "verifying analyses. Writes a new sub-folder of --out each time.",
        epilog=CAUTION,
    )
    p.add_argument("events", metavar="EVENT_DIR", nargs="+",
                   help="event folder (runs/, analyses/, stations/, sites.csv) or a folder of them")
    p.add_argument("--out", required=True, metavar="DIR", help="products folder")
    p.add_argument("--level", type=float, default=850.0, help="front level [hPa] (default 850)")
    p.add_argument("--workers", type=int, default=2, help="local dask worker processes")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="use an existing dask scheduler (tcp://host:port) instead of a local one")
    p.set_defaults(func=run)


def run(args):
    """Run the verification and write its products; return 0."""
    if args.workers < 1:
        raise InputError(f"--workers {args.workers}: expected 1 or more")
    events = [Path(e) for e in args.events]
    for e in events:
        if not e.is_dir():
            raise InputError(
                f"{e}: no such event folder; expected a folder holding runs/, analyses/, "
                "stations/ and sites.csv (or a folder of such folders)"
            )
    res = rerun_events(events, scheduler=args.scheduler, workers=args.workers, level=args.level)
    stamp_name = "rerun-" + pd.Timestamp.now("UTC").strftime("%Y%m%dT%H%MZ")
    out = new_product_dir(args.out, stamp_name)
    timing, position = res["timing"], res["position"]
    write_csv(out / "timing_pairs.csv", timing)
    write_csv(out / "position_pairs.csv", position)
    write_csv(out / "observed_passages.csv", res["observed"])
    write_csv(out / "station_problems.csv", res["station_problems"])
    t_sum, p_sum = summarise_timing(timing), summarise_position(position)
    write_csv(out / "timing_summary.csv", t_sum)
    write_csv(out / "position_summary.csv", p_sum)
    label = ", ".join(e.resolve().name for e in events)
    write_html_table(out / "timing_summary.html", t_sum,
                     f"Passage timing errors by lead time and front kind: {label}", CAUTION)

    source = f"frontshift rerun of {label}: forecast runs vs station series and analyses"
    save_figure(timing_error_figure(timing, title_run=label, source=source),
                out / "timing_errors.png")
    save_figure(position_error_figure(position, title_run=label, source=source),
                out / "position_errors.png")
    print(f"verification of {len(events)} event folder(s) on {res['workers_used']} worker(s) "
          f"written to {out}")
    return 0
