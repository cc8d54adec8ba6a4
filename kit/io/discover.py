"""RUN arguments: which files a file path, glob or folder stands for.

A RUN argument of the command line (and of :func:`kit.io.runs.open_run`) is
one NetCDF file, a glob pattern or a folder holding the files of one model
run. :func:`expand_run_arg` turns it into the sorted list of files.
"""

import glob
import os
from pathlib import Path

from kit.io.messages import input_error, join_names

__all__ = ["expand_run_arg"]

#: file name endings a folder's NetCDF files are recognised by (compared lower case)
_NETCDF_SUFFIXES = (".nc", ".nc4", ".netcdf", ".cdf")


def expand_run_arg(arg):
    """Files of one RUN argument: a NetCDF file, a glob or a folder.

    Parameters
    ----------
    arg : str or os.PathLike
        A file path, a glob pattern (``*``, ``?``, ``[...]``) or a folder; a
        folder gives its ``.nc``/``.nc4``/``.netcdf``/``.cdf`` files (not
        hidden ones, not sub-folders).

    Returns
    -------
    list of pathlib.Path
        Sorted by name.

    Raises
    ------
    kit.errors.InputError
        The path does not exist, the glob matches nothing, or the folder holds
        no NetCDF file.

    Examples
    --------
    >>> expand_run_arg("/no/such/run.nc")  # doctest: +IGNORE_EXCEPTION_DETAIL
    Traceback (most recent call last):
    kit.errors.InputError: /no/such/run.nc: no such file or folder
    """
    if isinstance(arg, (list, tuple)):
        raise input_error(str(arg), "expected one file, glob or folder, got a list")
    text = os.path.expanduser(os.fspath(arg))
    path = Path(text)
    if path.is_dir():
        files = sorted(
            p
            for p in path.iterdir()
            if p.is_file() and not p.name.startswith(".") and p.suffix.lower() in _NETCDF_SUFFIXES
        )
        if not files:
            others = sorted(p.name for p in path.iterdir() if not p.name.startswith("."))
            raise input_error(
                text,
                f"folder holds no NetCDF file (*.nc, *.nc4); found {join_names(others, 6)}",
            )
        return files
    if path.is_file():
        return [path]
    if glob.has_magic(text):
        files = sorted(Path(p) for p in glob.glob(text) if Path(p).is_file())
        if not files:
            raise input_error(text, "glob matches no file; expected NetCDF files of one model run")
        return files
    raise input_error(text, "no such file or folder; expected a NetCDF file, a glob or a folder")
