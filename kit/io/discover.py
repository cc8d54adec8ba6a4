"""RUN arguments: which files a file path, glob or folder stands for, and their kind.

A RUN argument of the command line (and of :func:`kit.io.runs.open_run`) is
one NetCDF or GRIB file, a glob pattern or a folder holding the files of one
model run. :func:`expand_run_arg` turns it into the sorted list of files.

A file's kind is read from its first bytes, never from its name
(:func:`file_kind`): operational GRIB often has no suffix
(``...pgrb2.0p25.f006``), and a GRIB file named ``.nc`` is still GRIB. A
folder gives its files named like data (``.nc``, ``.grib2`` ...; a broken one
is reported, not skipped) and any other file whose bytes are GRIB or NetCDF;
index files, notes and hidden files are passed over. One run is one kind: a folder or glob
mixing GRIB and NetCDF is refused (:func:`check_one_kind`), because the two
are usually the same fields twice (a converted copy), and which one the
forecaster meant cannot be guessed.
"""

import glob
import os
from pathlib import Path

from kit.io.messages import input_error, join_names

__all__ = [
    "GRIB_MAGIC",
    "GRIB_SUFFIXES",
    "LEAD_IN_BYTES",
    "NETCDF_SUFFIXES",
    "check_one_kind",
    "expand_run_arg",
    "file_kind",
    "is_data_file",
    "is_grib_head",
    "is_netcdf_head",
]

#: name endings of data files: a folder always gives these (a broken one is then
#: reported, never skipped); other files only when their bytes are GRIB or NetCDF
NETCDF_SUFFIXES = (".nc", ".nc4", ".netcdf", ".cdf")
GRIB_SUFFIXES = (".grib", ".grib1", ".grib2", ".grb", ".grb1", ".grb2", ".gb1", ".gb2")

#: first bytes of NetCDF-3 (classic, 64-bit offset, 64-bit data) and of HDF5 (NetCDF-4)
NETCDF_MAGIC = (b"CDF\x01", b"CDF\x02", b"CDF\x05")
HDF5_MAGIC = b"\x89HDF\r\n\x1a\n"
#: section 0 of a GRIB message
GRIB_MAGIC = b"GRIB"
#: bytes read to tell a file's kind; how far into a file the first GRIB message
#: may start (a WMO abbreviated heading may precede it)
LEAD_IN_BYTES = 4096


def is_netcdf_head(head):
    r"""Whether a file's first bytes are NetCDF-3 or HDF5 (NetCDF-4; user block allowed).

    Examples
    --------
    >>> is_netcdf_head(b"CDF\x02rest"), is_netcdf_head(b"GRIB")
    (True, False)
    """
    return head[:4] in NETCDF_MAGIC or any(
        head[o : o + 8] == HDF5_MAGIC for o in (0, 512, 1024, 2048)
    )


def is_grib_head(head):
    r"""Whether the first bytes of a file are (or soon begin) a GRIB message.

    Parameters
    ----------
    head : bytes
        The file's first bytes (a WMO abbreviated heading may come before).

    Returns
    -------
    bool

    Examples
    --------
    >>> is_grib_head(b"GRIB\x00\x00\x00\x02"), is_grib_head(b"CDF\x01")
    (True, False)
    """
    return head[:4] == GRIB_MAGIC or GRIB_MAGIC in head[:LEAD_IN_BYTES]



def is_data_file(path):
    """Whether a folder's file is one of a run: not hidden, named like data or GRIB/NetCDF.

    A file named like data (``.nc``, ``.grib2`` ...) always counts, so a broken
    one is reported, never skipped; any other file counts when its bytes are
    GRIB or NetCDF (suffix-less operational GRIB).
    """
    path = Path(path)
    return (
        path.is_file()
        and not path.name.startswith(".")
        and (path.suffix.lower() in NETCDF_SUFFIXES + GRIB_SUFFIXES or file_kind(path) is not None)
    )


def file_kind(path):
    """Kind of a file from its first bytes: ``"grib"``, ``"netcdf"`` or None.

    Parameters
    ----------
    path : str or os.PathLike
        The file.

    Returns
    -------
    str or None
        None for anything else (empty, text, index files) or an unreadable file.

    Examples
    --------
    >>> file_kind("/no/such/file") is None
    True
    """
    try:
        with open(path, "rb") as fh:
            head = fh.read(LEAD_IN_BYTES)
    except OSError:
        return None
    if is_netcdf_head(head):
        return "netcdf"
    if is_grib_head(head):
        return "grib"
    return None


def _kind_by_name(path):
    """Kind a file's name promises when its bytes say nothing (it is then reported broken)."""
    return "grib" if Path(path).suffix.lower() in GRIB_SUFFIXES else "netcdf"


def check_one_kind(files, where):
    """Raise unless the files of one run are all GRIB or all NetCDF (unknown ones pass).

    Parameters
    ----------
    files : list of pathlib.Path
        The run's files.
    where : str
        RUN argument named in the message.

    Returns
    -------
    dict
        ``{path: kind}``.
    """
    kinds = {f: file_kind(f) or _kind_by_name(f) for f in files}
    grib = [f.name for f, k in kinds.items() if k == "grib"]
    netcdf = [f.name for f, k in kinds.items() if k == "netcdf"]
    if grib and netcdf:
        raise input_error(
            where,
            f"mixes GRIB ({join_names(grib, 3)}) and NetCDF ({join_names(netcdf, 3)}) files; "
            "expected the files of one run in one format (name them with a glob)",
        )
    return kinds


def expand_run_arg(arg):
    """Files of one RUN argument: a NetCDF or GRIB file, a glob or a folder.

    Parameters
    ----------
    arg : str or os.PathLike
        A file path, a glob pattern (``*``, ``?``, ``[...]``) or a folder; a
        folder gives its files named like NetCDF or GRIB (``.nc``, ``.grib2``
        ...) and the other files whose first bytes are GRIB or NetCDF (not
        hidden ones, not sub-folders).

    Returns
    -------
    list of pathlib.Path
        Sorted by name.

    Raises
    ------
    kit.errors.InputError
        The path does not exist, the glob matches nothing, or the folder holds
        no GRIB or NetCDF file.

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
        files = sorted(p for p in path.iterdir() if is_data_file(p))
        if not files:
            others = sorted(p.name for p in path.iterdir() if not p.name.startswith("."))
            raise input_error(
                text,
                f"folder holds no GRIB or NetCDF file; found {join_names(others, 6)}",
            )
        return files
    if path.is_file():
        return [path]
    if glob.has_magic(text):
        files = sorted(Path(p) for p in glob.glob(text) if Path(p).is_file())
        if not files:
            raise input_error(
                text, "glob matches no file; expected GRIB or NetCDF files of one model run"
            )
        return files
    raise input_error(
        text, "no such file or folder; expected a GRIB or NetCDF file, a glob or a folder"
    )
