"""NetCDF files: check that a file is a whole NetCDF file, then open it lazily.

A file that is empty, not NetCDF (GRIB, text, other bytes) or truncated gives
a one-line :class:`~kit.errors.InputError` before xarray sees it. Files of
64 MiB or more are chunked one step (or member) at a time, so checking the
first step or reading one level never reads the whole file.
"""

import gc
import re
import warnings

import xarray as xr

from kit.io.cf_time import LEAD_NAMES, REF_NAMES
from kit.io.discover import is_netcdf_head
from kit.io.members import MEMBER_NAMES
from kit.io.messages import input_error

__all__ = ["SMALL_FILE_BYTES", "open_netcdf"]



def _check_netcdf_file(path):
    """Raise a one-line InputError unless ``path`` looks like a whole NetCDF file."""
    try:
        size = path.stat().st_size
        with open(path, "rb") as fh:
            head = fh.read(2048 + 8)
    except OSError as exc:
        raise input_error(path, f"cannot be read ({exc.strerror or exc})") from None
    if size == 0:
        raise input_error(path, "empty file (0 bytes); expected a NetCDF file")
    if is_netcdf_head(head):
        if head[:4] in (b"CDF\x01", b"CDF\x02"):
            _check_classic_complete(path)
        return
    if head[:4] == b"GRIB":
        found = "a GRIB file"
    else:
        printable = head[:24].decode("latin-1")
        if all(ch.isprintable() or ch in "\r\n\t" for ch in printable):
            found = "text starting " + repr(" ".join(printable.split())[:20])
        else:
            found = f"bytes {head[:8]!r}"
    raise input_error(
        path, f"not a NetCDF file: found {found}; expected NetCDF-3 or NetCDF-4 (HDF5)"
    )


def _check_classic_complete(path):
    """Raise unless a NetCDF-3 file is as long as its header says (truncation check)."""
    from scipy.io import netcdf_file  # optional: only NetCDF-3 files need it, imported here

    failure = None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            # mapping the variables fails when the file is shorter than its header says
            nc = netcdf_file(path, "r", mmap=True)
            nc.variables.clear()
            nc.close()
        except Exception as exc:  # scipy raises ValueError/TypeError/IndexError here
            failure = f"{type(exc).__name__}: {exc}"
        if failure is not None:
            gc.collect()  # release the half-built file object while warnings are silenced
    if failure is not None:
        raise input_error(
            path, f"truncated or corrupt NetCDF-3 file ({failure}); expected a complete file"
        )


#: files smaller than this [bytes] are chunked as stored (one dask chunk per
#: variable and file) when chunks="auto": cheaper to set up, same laziness
SMALL_FILE_BYTES = 64 * 2**20


def _step_dims(ds):
    """Dimensions that index steps or members (chunked one by one for large files)."""
    names = {"time", "valid_time", "Time", "t", *LEAD_NAMES, *MEMBER_NAMES, *REF_NAMES}
    out = []
    for dim in ds.dims:
        c = ds.coords.get(dim)
        attrs = c.attrs if c is not None else {}
        if (
            dim in names
            or attrs.get("axis") == "T"
            or attrs.get("standard_name") in ("time", "forecast_period", "realization")
        ):
            out.append(dim)
    return out


def _short_reason(exc, path):
    """Return the library's reason without the repeated path and errno noise."""
    text = str(exc).replace(f"'{path}'", "").replace(str(path), "")
    text = re.sub(r"\[Errno -?\d+\]\s*", "", text).strip(" :")
    return text or type(exc).__name__


def open_netcdf(path, chunks):
    """Open one NetCDF file of a run as an xarray Dataset, after checking it.

    Parameters
    ----------
    path : pathlib.Path
        The file.
    chunks : "auto", dict or None
        ``"auto"``: one dask chunk per variable for files under 64 MiB, one
        step or member per chunk for larger ones; a dict is passed to
        :func:`xarray.open_dataset`; None reads numpy arrays.

    Returns
    -------
    xarray.Dataset
        As stored (CF decoded, masked and scaled); not yet canonical.

    Raises
    ------
    kit.errors.InputError
        The file is unreadable, empty, not NetCDF, truncated or corrupt.
    """
    _check_netcdf_file(path)
    kwargs = dict(engine="netcdf4", decode_timedelta=True, mask_and_scale=True)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", category=xr.SerializationWarning)
            ds = xr.open_dataset(path, chunks=None if chunks == "auto" else chunks, **kwargs)
            if isinstance(chunks, str) and chunks == "auto":
                if path.stat().st_size < SMALL_FILE_BYTES:
                    ds = ds.chunk({})
                else:
                    # one step/member per chunk, dask sizes the rest: reading the
                    # first step (value checks) or one level never reads the file whole
                    plan = {d: "auto" for d in ds.dims}
                    plan.update({d: 1 for d in _step_dims(ds)})
                    ds = ds.chunk(plan)
    except Exception as exc:
        raise input_error(
            path,
            "cannot be read as NetCDF, truncated or corrupt "
            f"({_short_reason(exc, path)}); expected a complete NetCDF file (copy it again)",
        ) from None
    return ds
