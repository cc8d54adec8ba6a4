"""``frontshift section RUN --site NAME --time ISO --out FILE``: a cross-section product.

The section runs through the site, normal to the chosen front at that valid
time (cold side on the left). ``--out`` ending in ``.png``, ``.svg`` or
``.pdf`` writes the figure; ``.nc`` writes the section data as CF NetCDF.
The site comes from ``--sites`` or, by default, from the first ``sites.csv``
found walking up from the RUN folder.

A thin run without humidity on its levels gives a section in theta, without
humidity shading, and says so in the figure, the NetCDF attributes and the
line printed; a run with fewer than three pressure levels is refused in one
line before any analysis (its fronts and arrival table can still be made).
"""

import os
import tempfile
from pathlib import Path

from kit import CAUTION
from kit.charts.sections import section_figure
from kit.cli.common import find_sites_file, output_path
from kit.errors import InputError, OutputError
from kit.io.runs import open_run
from kit.io.sites import check_sites_on_grid, read_sites
from kit.pipeline import analyse
from kit.products.files import save_figure, write_bytes
from kit.products.sections import section
from kit.science.sections import check_section_levels, select_time, thermal_field

__all__ = ["add_parser", "run", "find_sites_file", "lookup_site", "section_to_netcdf_bytes"]

_SUFFIXES = (".png", ".svg", ".pdf", ".nc")

#: CF standard names of the section's fields
_STANDARD_NAMES = {
    "t": "air_temperature",
    "td": "dew_point_temperature",
    "tw": "wet_bulb_temperature",
    "theta": "air_potential_temperature",
    "theta_w": "wet_bulb_potential_temperature",
    "rh": "relative_humidity",
    "u": "eastward_wind",
    "v": "northward_wind",
    "wind_speed": "wind_speed",
    "z": "geopotential_height",
    "pv": "ertel_potential_vorticity",
    "precip": "lwe_precipitation_rate",
}


def add_parser(subparsers):
    """Register the ``section`` sub-command."""
    p = subparsers.add_parser(
        "section",
        help="vertical cross-section through a site across a front (png/svg/pdf or .nc)",
        description="Cut a vertical section through a site, normal to the chosen front at one "
        "valid time, from the cold side to the warm side. --out ending in .png, .svg or .pdf "
        "writes the figure, .nc the section data (CF NetCDF).",
        epilog=CAUTION,
    )
    p.add_argument("run", metavar="RUN",
                   help="GRIB or NetCDF file, glob or folder of one model run")
    p.add_argument("--site", required=True, metavar="NAME", help="site name in the sites CSV")
    p.add_argument("--time", required=True, metavar="ISO",
                   help="valid time (UTC), e.g. 2027-01-14T06:00Z")
    p.add_argument("--sites", metavar="SITES.csv",
                   help="site list (name,lat,lon[,elevation_m]); default: the first sites.csv "
                   "found walking up from RUN")
    p.add_argument("--front", choices=("warm", "cold", "nearest"), default="nearest",
                   help="front to cut across (default: the nearest to the site)")
    p.add_argument("--length-km", type=float, default=1200.0, metavar="KM",
                   help="section length [km] (default 1200)")
    p.add_argument("--spacing-km", type=float, default=10.0, metavar="KM",
                   help="point spacing along the section [km] (default 10)")
    p.add_argument("--level", type=float, default=850.0, metavar="HPA",
                   help="level the fronts are found on [hPa] (default 850)")
    p.add_argument("--member", type=int, metavar="N",
                   help="ensemble member (required when the run has several)")
    p.add_argument("--out", required=True, metavar="FILE", help="output: .png, .svg, .pdf or .nc")
    p.add_argument("--overwrite", action="store_true",
                   help="replace an existing output file (never silent)")
    p.set_defaults(func=run)


def lookup_site(sites, name, where):
    """Return the row of ``sites`` named ``name`` (exact, else case-insensitive).

    Parameters
    ----------
    sites : pandas.DataFrame
        From :func:`kit.io.sites.read_sites`.
    name : str
        Site name.
    where : str or Path
        The site file, for the message.

    Returns
    -------
    pandas.Series
    """
    names = [str(n) for n in sites["name"]]
    hit = [i for i, n in enumerate(names) if n == name]
    if not hit:
        hit = [i for i, n in enumerate(names) if n.strip().lower() == name.strip().lower()]
    if not hit:
        shown = ", ".join(names[:25]) + (f" ... ({len(names)} sites)" if len(names) > 25 else "")
        raise InputError(f"--site {name}: not in {where}; known sites: {shown}")
    return sites.iloc[hit[0]]


def section_to_netcdf_bytes(sec):
    """Encode the section as CF NetCDF-4 bytes (via a temporary file).

    Parameters
    ----------
    sec : xarray.Dataset
        A section from :mod:`kit.science.sections`.

    Returns
    -------
    bytes
    """
    out = sec.copy()
    out.attrs = {k: v for k, v in sec.attrs.items() if v is not None}
    out.attrs.update(Conventions="CF-1.8", caution=CAUTION,
                     history="written by frontshift section")
    out["level"].attrs.update(standard_name="air_pressure", positive="down")
    out["lat"].attrs.update(standard_name="latitude")
    out["lon"].attrs.update(standard_name="longitude")
    for name, std in _STANDARD_NAMES.items():
        if name in out:
            out[name].attrs["standard_name"] = std
    with tempfile.TemporaryDirectory(prefix="frontshift-section-") as tmp:
        path = os.path.join(tmp, "section.nc")
        out.to_netcdf(path, engine="netcdf4", format="NETCDF4")
        with open(path, "rb") as fh:
            return fh.read()


def run(args):
    """Build the section and write the product; return 0."""
    out = output_path(args.out, _SUFFIXES)
    if out.exists() and not args.overwrite:
        raise OutputError(f"{out}: already exists; choose a new name or pass --overwrite")
    if not (50.0 <= args.length_km <= 10000.0):
        raise InputError(f"--length-km {args.length_km}: expected 50 to 10000 km")
    if not (0.5 <= args.spacing_km <= args.length_km / 2.0):
        raise InputError(f"--spacing-km {args.spacing_km}: expected 0.5 km to half the length")
    sites_path = Path(args.sites) if args.sites else find_sites_file(args.run)
    sites = read_sites(sites_path)
    site = lookup_site(sites, args.site, sites_path)
    ds = open_run(args.run, member=args.member)
    check_section_levels(ds)  # before the member question and the analysis
    member = None
    if "member" in ds.dims:
        member = args.member
    check_sites_on_grid(site.to_frame().T.reset_index(drop=True), ds)
    t = select_time(ds, args.time)
    analysis = analyse(ds, level=args.level, member=member)
    sec = section(analysis, site, t, front=args.front, length_km=args.length_km,
                  spacing_km=args.spacing_km, member=member)
    if out.suffix.lower() == ".nc":
        write_bytes(out, section_to_netcdf_bytes(sec), overwrite=args.overwrite)
    else:
        save_figure(section_figure(sec), out, overwrite=args.overwrite)
    kind = sec.attrs.get("front_kind")
    words = "theta-w" if thermal_field(sec) == "theta_w" else "theta"
    across = f"across the {kind} front" if kind else f"(no front found; along the {words} gradient)"
    slope = sec.attrs.get("frontal_slope_1_in")
    slope_text = f", frontal slope 1:{slope:.0f}" if slope == slope and slope else ""
    print(f"section through {site['name']} {across} at {sec.attrs['valid_time']}{slope_text} "
          f"written to {out}")
    if sec.attrs.get("thin"):
        print(f"run {sec.attrs.get('run', '?')} is thin: {sec.attrs['thin']}")
    return 0
