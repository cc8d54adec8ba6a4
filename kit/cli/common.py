"""Argument helpers shared by the sub-commands."""

from pathlib import Path

from kit.errors import InputError
from kit.io.runs import open_run

__all__ = ["add_runs_argument", "add_output_arguments", "load_runs", "output_path"]


def add_runs_argument(parser, single=False):
    """Add the positional RUN argument(s): a GRIB or NetCDF file, a glob or a folder of one run."""
    if single:
        parser.add_argument(
            "run", metavar="RUN", help="GRIB or NetCDF file, glob or folder of one model run"
        )
    else:
        parser.add_argument(
            "runs",
            metavar="RUN",
            nargs="+",
            help="GRIB or NetCDF file, glob or folder of one model run; several = runs/members "
            "of one event",
        )


def add_output_arguments(parser, suffixes):
    """Add ``--out`` (required) and ``--overwrite``; ``suffixes`` are the accepted endings."""
    parser.add_argument(
        "--out", required=True, metavar="FILE", help=f"output file ({', '.join(suffixes)})"
    )
    parser.add_argument(
        "--overwrite", action="store_true", help="replace an existing output file (never silent)"
    )


def output_path(value, suffixes):
    """Check an output path's suffix against ``suffixes`` (e.g. ``(".csv", ".html")``)."""
    path = Path(value)
    if path.suffix.lower() not in suffixes:
        raise InputError(
            f"--out {value}: unknown file type '{path.suffix or '(none)'}'; expected one of "
            + ", ".join(suffixes)
        )
    return path


def load_runs(run_args, member=None):
    """Open every RUN argument with :func:`kit.io.runs.open_run`; list of canonical Datasets."""
    return [open_run(arg, member=member) for arg in run_args]
