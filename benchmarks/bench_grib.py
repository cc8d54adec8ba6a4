"""Opening a run from GRIB against opening its NetCDF twin (issue 15 target: at most 2x).

For each real GRIB run under ``tests/real_data/grib`` that the kit reads, its
twin is written once: the fields the kit takes from the GRIB file, as cfgrib
decodes them (same names, levels, grid, CF attributes), saved as CF NetCDF-4
without compression into a temporary folder. Both are then opened with
:func:`kit.open_run` and every field read (``.load()``): the figure is the
best of 5 wall-clock times each, and their ratio. Run:
``python -m benchmarks --only grib``.

The two real files are tiny (6 045 and 7 320 points per field), so their
figures are mostly cfgrib's fixed cost per message (building the index reads
about 25 keys of every field); a third, invented run on a 0.25-degree global
grid (1440 x 721 points, 6 levels x 5 fields, 16-bit packing, written here
with ecCodes) shows the cost at an operational size, where decoding dominates.
"""

import tempfile
from pathlib import Path

import numpy as np

import benchmarks
import kit
from kit.io.grib import open_grib

ROOT = Path(__file__).resolve().parents[1]
GRIB = ROOT / "tests" / "real_data" / "grib"
RUNS = {
    "NAM 81 km Lambert, 19 levels (GRIB2)": GRIB / "nam.t00z.awp21100.tm00.grib2",
    "ERA5 10 members x 2 analyses, global 3 deg (GRIB1)": GRIB / "era5_members_20170101_2an.grib",
}
TARGET = 2.0


def _twin(grib, folder):
    """The GRIB run's fields written as CF NetCDF (uncompressed)."""
    raw = open_grib(grib, None)
    raw.attrs = {}
    path = Path(folder) / (grib.stem + ".nc")
    for name in raw.variables:
        raw[name].encoding = {}
    raw.to_netcdf(path, engine="netcdf4", format="NETCDF4")
    return path


def _global_quarter_degree(path):
    """Write an invented run on a 0.25-degree global grid (GRIB2, 30 fields)."""
    import eccodes

    nx, ny = 1440, 721
    lat = np.linspace(90.0, -90.0, ny)[:, None]
    lon = np.arange(nx)[None, :] * 0.25
    grid = (("Ni", nx), ("Nj", ny), ("latitudeOfFirstGridPointInDegrees", 90.0),
            ("longitudeOfFirstGridPointInDegrees", 0.0),
            ("latitudeOfLastGridPointInDegrees", -90.0),
            ("longitudeOfLastGridPointInDegrees", 359.75),
            ("iDirectionIncrementInDegrees", 0.25), ("jDirectionIncrementInDegrees", 0.25))
    with open(path, "wb") as out:
        for level in (1000, 925, 850, 700, 500, 300):
            fields = {
                "t": 280.0 - 0.3 * np.abs(lat) + 0.0 * lon,
                "gh": 10.0 * (1000 - level) + 10.0 * np.sin(np.deg2rad(lon)) + 0.0 * lat,
                "r": 60.0 + 20.0 * np.cos(np.deg2rad(lon)) + 0.0 * lat,
                "u": 10.0 * np.cos(np.deg2rad(lat)) + 0.0 * lon,
                "v": 3.0 * np.sin(np.deg2rad(lon)) + 0.0 * lat,
            }
            for short, values in fields.items():
                gid = eccodes.codes_grib_new_from_samples("regular_ll_pl_grib2")
                try:
                    for key, val in grid:
                        eccodes.codes_set(gid, key, val)
                    eccodes.codes_set(gid, "centre", 255)  # no real centre's data
                    eccodes.codes_set(gid, "shortName", short)
                    eccodes.codes_set(gid, "typeOfLevel", "isobaricInhPa")
                    eccodes.codes_set(gid, "level", level)
                    eccodes.codes_set(gid, "bitsPerValue", 16)
                    eccodes.codes_set_values(gid, values.ravel())
                    eccodes.codes_write(gid, out)
                finally:
                    eccodes.codes_release(gid)
    return path


def run():
    rows = []
    with tempfile.TemporaryDirectory() as folder:
        runs = dict(RUNS)
        runs["invented 0.25 deg global, 30 fields (GRIB2, 62 MB)"] = _global_quarter_degree(
            Path(folder) / "global_0p25.grib2"
        )
        for label, grib in runs.items():
            twin = _twin(grib, folder)
            t_grib = benchmarks.best_time(lambda g=grib: kit.open_run(g).load(), repeat=5,
                                          min_time=0.0)
            t_nc = benchmarks.best_time(lambda n=twin: kit.open_run(n).load(), repeat=5,
                                        min_time=0.0)
            rows.append(benchmarks.figure(f"{label}: open GRIB", t_grib, "s"))
            rows.append(benchmarks.figure(f"{label}: open NetCDF twin", t_nc, "s"))
            ratio = t_grib / t_nc
            rows.append(benchmarks.figure(f"{label}: GRIB / NetCDF", ratio, "x",
                                          f"<= {TARGET:g}", ratio <= TARGET))
    return rows
