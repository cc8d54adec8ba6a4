"""CF time axes: valid time, reference time and lead time of a model run.

Valid time is taken from ``valid_time``, from ``time`` or from a reference
time plus a lead (``step``, ``forecast_period``, ``lead_time``). The run's
reference time comes from a ``forecast_reference_time``/``reference_time``
coordinate or global attribute. :func:`to_valid_time` brings any of these
layouts onto one ``time`` dimension of valid times [datetime64[ns], UTC].
"""

import cftime
import numpy as np
import pandas as pd
import xarray as xr

from kit.io.messages import input_error

__all__ = ["REF_NAMES", "LEAD_NAMES", "is_datetime", "to_datetime64", "to_valid_time"]

#: names of a reference-time (run start) coordinate, most common first
REF_NAMES = (
    "reference_time",
    "forecast_reference_time",
    "analysis_time",
    "init_time",
    "run_time",
    "initial_time",
    "initialization_time",
)
#: names of a lead-time (forecast period) coordinate
LEAD_NAMES = ("step", "forecast_period", "lead_time", "leadtime", "forecast_hour")


def is_datetime(values):
    """Whether decoded values are times (numpy datetime64 or cftime objects).

    Parameters
    ----------
    values : array_like
        Values of a decoded coordinate.

    Returns
    -------
    bool

    Examples
    --------
    >>> is_datetime(np.array(["2027-01-14T00"], dtype="datetime64[ns]"))
    True
    >>> is_datetime(np.array([0.0, 6.0]))
    False
    """
    v = np.asarray(values)
    if v.dtype.kind == "M":
        return True
    if v.dtype == object and v.size:
        return isinstance(v.ravel()[0], cftime.datetime)
    return False


def to_datetime64(values, where, what):
    """Convert decoded times (numpy or cftime) to ``datetime64[ns]``.

    Parameters
    ----------
    values : array_like
        Decoded times (see :func:`is_datetime`).
    where : str
        File or source named in an error message.
    what : str
        Name of the coordinate, for the error message.

    Returns
    -------
    numpy.ndarray
        Same shape, dtype ``datetime64[ns]``.

    Raises
    ------
    kit.errors.InputError
        The calendar cannot be mapped to the real (proleptic gregorian) one.
    """
    v = np.asarray(values)
    if v.dtype.kind == "M":
        return v.astype("datetime64[ns]")
    try:
        idx = xr.CFTimeIndex(v.ravel())
        out = np.asarray(idx.to_datetimeindex(time_unit="ns"), dtype="datetime64[ns]")
    except Exception:
        raise input_error(
            where,
            f"{what} uses a calendar that cannot be mapped to the real calendar; "
            "expected a standard (gregorian) calendar",
        ) from None
    return out.reshape(v.shape)


def _find_named(ds, names=(), standard_names=(), kinds=("coords", "data_vars")):
    """First variable with one of ``standard_names``, else one of ``names``, or None."""
    for kind in kinds:
        group = getattr(ds, kind)
        for n in group:
            if group[n].attrs.get("standard_name") in standard_names:
                return n
    for kind in kinds:
        group = getattr(ds, kind)
        for n in names:
            if n in group:
                return n
    return None


def _attr_time(ds, where):
    """Read the reference time from a global attribute [datetime64[ns]], or None."""
    for key in (
        "forecast_reference_time",
        "reference_time",
        "run_reference_time",
        "analysis_time",
        "initialization_time",
        "init_time",
    ):
        if key in ds.attrs:
            try:
                ts = pd.Timestamp(str(ds.attrs[key]))
            except Exception:
                raise input_error(
                    where,
                    f"global attribute {key}={ds.attrs[key]!r} is not a time; "
                    "expected ISO 8601 like 2027-01-14T00:00Z",
                ) from None
            if ts.tzinfo is not None:
                ts = ts.tz_convert("UTC").tz_localize(None)
            return np.datetime64(ts.to_datetime64(), "ns")
    return None


def to_valid_time(ds, where):
    """Give ``ds`` one ``time`` dimension of valid times.

    Parameters
    ----------
    ds : xarray.Dataset
        One opened file (CF time, cfgrib-style ``time``/``step``/``valid_time``,
        or a reference time plus a lead).
    where : str
        File or source named in error messages.

    Returns
    -------
    ds : xarray.Dataset
        With a ``time`` dimension coordinate of valid times [datetime64[ns]];
        reference, lead and other time variables dropped.
    reference : numpy.datetime64 or tuple or None
        The run's reference time; ``("analyses", times)`` when every step is its
        own reference time (a sequence of analyses); None when the file gives none.

    Raises
    ------
    kit.errors.InputError
        No decodable valid time, a lead without a reference time, or several runs
        in one file.
    """
    # cfgrib style: time = reference, step = lead, valid_time = time + step
    ref_name = _find_named(ds, REF_NAMES, ("forecast_reference_time",))
    valid_name = "valid_time" if "valid_time" in ds.variables else None
    lead_name = _find_named(ds, LEAD_NAMES, ("forecast_period",))
    if valid_name and ref_name is None and "time" in ds.variables and "time" != valid_name:
        if lead_name is not None or ds["time"].ndim == 0:
            ref_name = "time"
    if valid_name is None:
        cand = [
            n
            for n in ds.variables
            if n != ref_name
            and (
                n == "time"
                or ds[n].attrs.get("standard_name") == "time"
                or ds[n].attrs.get("axis") == "T"
            )
        ]
        cand += [
            n for n in ds.variables if n not in cand and n != ref_name and n in ("Time", "t_valid")
        ]
        valid_name = cand[0] if cand else None

    ref = None
    ref_values = None
    if ref_name is not None:
        rv = ds[ref_name].values
        if not is_datetime(rv):
            raise input_error(
                where, f"'{ref_name}' is not a decodable time; expected CF time units"
            )
        ref_values = to_datetime64(rv, where, ref_name)
    attr_ref = _attr_time(ds, where)

    valid = None
    if valid_name is not None:
        vv = ds[valid_name].values
        if is_datetime(vv):
            valid = to_datetime64(vv, where, valid_name)
            vdims = ds[valid_name].dims
        elif np.asarray(vv).dtype.kind == "m":
            lead_name = valid_name
            valid_name = None
        else:
            raise input_error(
                where,
                f"time coordinate '{valid_name}' is not a decodable time (units "
                f"{ds[valid_name].attrs.get('units', 'missing')!r}); expected CF units like "
                "'hours since 2027-01-14 00:00'",
            )
    if valid is None:
        if lead_name is None or np.asarray(ds[lead_name].values).dtype.kind != "m":
            raise input_error(
                where,
                "no valid time: expected a CF time coordinate 'time' or 'valid_time', or a "
                "reference time with a lead 'step'/'forecast_period'",
            )
        base = (
            ref_values
            if ref_values is not None
            else (np.array(attr_ref) if attr_ref is not None else None)
        )
        if base is None:
            raise input_error(
                where,
                f"lead '{lead_name}' without a reference time; expected forecast_reference_time",
            )
        lead = ds[lead_name]
        vda = (
            xr.DataArray(
                np.asarray(base).reshape(()) if np.ndim(base) == 0 else base,
                dims=ds[ref_name].dims if ref_name else (),
            )
            + lead
        )
        valid = np.asarray(vda.values, dtype="datetime64[ns]")
        vdims = vda.dims
        ds = ds.assign_coords(_valid=(vdims, valid))
        valid_name = "_valid"
    else:
        if valid_name != "_valid":
            ds = ds.assign_coords(_valid=(vdims, valid))
            valid_name = "_valid"

    # bring the valid time onto one dimension called time
    vdims = ds["_valid"].dims
    if len(vdims) == 2:
        big = [d for d in vdims if ds.sizes[d] > 1]
        if len(big) == 2:
            raise input_error(
                where,
                f"holds several runs ({ds.sizes[vdims[0]]} reference times x {ds.sizes[vdims[1]]} "
                "leads); expected one model run per RUN argument",
            )
        drop = [d for d in vdims if d not in big] if big else [vdims[0]]
        ds = ds.isel({d: 0 for d in drop})
        vdims = ds["_valid"].dims
    if ref_values is not None and ref_values.ndim == 1 and ref_name in ds.dims:
        # several reference times along their own dimension; only ok if also valid times
        if ds.sizes[ref_name] > 1 and ref_name not in vdims:
            raise input_error(
                where, f"holds {ds.sizes[ref_name]} reference times; expected one run"
            )
    if len(vdims) == 0:
        ds = ds.expand_dims("_tdim")
        ds = ds.assign_coords(_valid=("_tdim", np.atleast_1d(ds["_valid"].values)))
        vdims = ("_tdim",)
    tdim = vdims[0]
    ref_per_time = None
    if ref_name is not None:
        rda = ds[ref_name] if ref_name in ds.variables else None
        if rda is not None and rda.ndim == 1 and rda.dims[0] == tdim:
            ref_per_time = to_datetime64(rda.values, where, ref_name)
        elif rda is not None and rda.ndim == 0:
            ref = to_datetime64(rda.values, where, ref_name).reshape(())
        elif rda is not None:
            ref = to_datetime64(rda.values, where, ref_name).ravel()[0]
    drop_vars = [
        n
        for n in (ref_name, lead_name, "valid_time", "time", "step")
        if n and n in ds.variables and n != tdim
    ]
    ds = ds.drop_vars(drop_vars)
    if tdim != "_valid":
        ds = ds.swap_dims({tdim: "_valid"})
        if tdim in ds.variables:
            ds = ds.drop_vars(tdim)
    ds = ds.rename({"_valid": "time"})
    if ref_per_time is not None:
        uniq = np.unique(ref_per_time)
        if uniq.size == 1:
            ref = uniq[0]
        elif np.array_equal(ref_per_time, ds["time"].values):
            ref = ("analyses", ref_per_time)
        else:
            raise input_error(
                where, f"holds {uniq.size} different reference times; expected one run"
            )
    if ref is None and attr_ref is not None:
        ref = attr_ref
    if ref is not None and not isinstance(ref, tuple):
        ref = np.asarray(ref, dtype="datetime64[ns]").reshape(())[()]
    return ds, ref
