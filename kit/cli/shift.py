"""``frontshift shift RUN... --sites SITES.csv --out DIR``: every shift product, headless.

The products and the folder they go into are described in :mod:`kit.products.shift`.
A thin run is said on stdout (what it lacks, what was done instead), with any
product it could not carry and why.
"""

import json

from kit import CAUTION
from kit.cli.common import add_latest_argument, add_sites_argument, resolve_runs, sites_file
from kit.products.shift import write_shift_products

__all__ = ["add_parser", "run"]


def add_parser(subparsers):
    """Register the ``shift`` sub-command."""
    p = subparsers.add_parser(
        "shift",
        help="every shift product (fronts, maps, sections, arrivals, PDF pack) in a new folder",
        description="Analyse the runs and write every shift product into a new sub-folder of "
        "--out: fronts GeoJSON and table, frontal maps, cross-sections through the sites, the "
        "arrival table and timelines, a briefing pack PDF and an index. Earlier products are "
        "never overwritten.",
        epilog=CAUTION,
    )
    p.add_argument("runs", metavar="RUN", nargs="+",
                   help="GRIB or NetCDF file, glob or folder of one model run; several = "
                   "runs/members of one event")
    add_sites_argument(p)
    add_latest_argument(p)
    p.add_argument("--out", required=True, metavar="DIR",
                   help="parent folder; the products go into a new sub-folder of it")
    p.add_argument("--level", type=float, default=850.0, metavar="HPA",
                   help="pressure level of the fronts and the map shading [hPa] (default 850)")
    p.add_argument("--field", choices=("theta_w", "theta"), default="theta_w",
                   help="thermal field of the front analysis and the maps (default theta_w)")
    p.add_argument("--maps-every-h", type=float, default=6.0, metavar="H",
                   help="a frontal map every H hours of lead time (default 6; 0 = every step)")
    p.add_argument("--max-sections", type=int, default=24, metavar="N",
                   help="at most N cross-sections, nearest passages first (default 24)")
    p.add_argument("--overwrite", action="store_true",
                   help="replace the folder of the same runs (shift_<run>) once the new set is "
                   "complete, instead of adding shift_<run>-2; never a partial replacement")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=run)


def run(args):
    """Write every shift product; print the folder; return 0."""
    run_args = resolve_runs(args.runs, args.latest)
    sites_path = sites_file(args.sites, run_args)
    if not args.sites:
        print(f"sites from {sites_path}")
    folder = write_shift_products(
        run_args, sites_path, args.out, level=args.level, field=args.field,
        maps_every_h=args.maps_every_h, max_sections=args.max_sections,
        overwrite=args.overwrite, progress=not args.quiet,
    )
    files = sum(1 for p in folder.rglob("*") if p.is_file())
    print(f"{files} shift products written to {folder}")
    manifest = json.loads((folder / "manifest.json").read_text(encoding="utf-8"))
    for label, text in manifest.get("thin", {}).items():
        print(f"run {label} is thin: {text}")
    for skipped in manifest.get("skipped", []):
        print(f"not made: {skipped['product']}: {skipped['reason']}")
    print(CAUTION)
    return 0
