"""Argument helpers shared by the sub-commands: runs, ``--latest``, ``--sites``, ``--out``.

"Newest" means the latest reference time, everywhere: :func:`load_runs` returns
the runs oldest first, so the last is the newest whatever order they were
listed in; ``--latest N`` keeps the N newest runs of the RUN arguments (a
folder of run folders gives each of its run folders).
"""

import glob
from pathlib import Path

from kit.errors import InputError
from kit.io.discover import is_data_file
from kit.io.runs import oldest_first, open_run

__all__ = [
    "add_latest_argument",
    "add_runs_argument",
    "add_output_arguments",
    "add_sites_argument",
    "find_sites_file",
    "load_runs",
    "output_path",
    "resolve_runs",
    "sites_file",
]


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


def add_latest_argument(parser):
    """Add ``--latest N``: only the N newest runs (latest reference times) of the RUNs."""
    parser.add_argument(
        "--latest", type=int, metavar="N", default=None,
        help="only the N newest runs (latest reference time) of the RUN arguments; a folder "
        "of run folders gives each run folder",
    )


def add_sites_argument(parser):
    """Add ``--sites``: default the first sites.csv beside the runs or in a folder above."""
    parser.add_argument(
        "--sites", metavar="SITES.csv", default=None,
        help="site list CSV (name,lat,lon[,elevation_m]); default: the first sites.csv beside "
        "the first RUN or in the folders above it",
    )


def load_runs(run_args, member=None):
    """Open every RUN with :func:`kit.io.runs.open_run`, oldest first (the last is newest).

    Runs are ordered by reference time; runs of the same reference time (members
    in separate folders) keep the order given.
    """
    runs = [open_run(arg, member=member) for arg in run_args]
    return [runs[i] for i in oldest_first(runs)]


def _has_data_files(folder):
    return any(is_data_file(p) for p in folder.iterdir())


def _run_folders(arg):
    """List the runs one RUN argument names: itself, or each run folder of a folder of runs."""
    path = Path(arg)
    if path.is_dir() and not _has_data_files(path):
        subs = sorted(p for p in path.iterdir() if p.is_dir() and not p.name.startswith("."))
        runs = [str(p) for p in subs if _has_data_files(p)]
        if runs:
            return runs
    return [str(arg)]


def resolve_runs(run_args, latest=None):
    """Return the RUN arguments to open: as given, or the ``latest`` newest of them, oldest first.

    Parameters
    ----------
    run_args : list of str
        RUN arguments (files, globs, folders, or folders of run folders).
    latest : int, optional
        Keep only this many runs, those with the latest reference times.

    Returns
    -------
    list of str
    """
    if latest is None:
        return list(run_args)
    if latest < 1:
        raise InputError(f"--latest {latest}: expected a whole number of runs, 1 or more")
    cands = [r for arg in run_args for r in _run_folders(arg)]
    order = oldest_first([open_run(r) for r in cands])
    return [cands[i] for i in order][-latest:]


def _start_folder(run_arg):
    """Return the folder to start the sites.csv search from (file, folder or glob)."""
    path = Path(run_arg)
    if path.is_dir():
        return path.resolve()
    if path.is_file():
        return path.resolve().parent
    if glob.has_magic(str(run_arg)):
        head = Path(run_arg)
        while glob.has_magic(str(head)) and head != head.parent:
            head = head.parent
        if head.is_dir():
            return head.resolve()
    raise InputError(f"RUN {run_arg}: no such file, folder or matching files; expected a GRIB "
                     "or NetCDF file, a glob or a folder of one model run")


def find_sites_file(run_arg, max_up=5):
    """Find the first ``sites.csv`` in the RUN folder or up to ``max_up`` folders above.

    Parameters
    ----------
    run_arg : str
        The RUN argument (file, folder or glob).
    max_up : int
        How many parent folders to look in.

    Returns
    -------
    pathlib.Path
    """
    folder = _start_folder(run_arg)
    for _ in range(max_up + 1):
        cand = folder / "sites.csv"
        if cand.is_file():
            return cand
        if folder.parent == folder:
            break
        folder = folder.parent
    raise InputError(f"RUN {run_arg}: no sites.csv beside the run or in the folders above it; "
                     "pass --sites SITES.csv")


def sites_file(sites_arg, run_args):
    """Return the site list to use: ``--sites``, else the sites.csv found for the first RUN."""
    if sites_arg:
        return Path(sites_arg)
    return find_sites_file(run_args[0])
