"""Precipitation: amounts and rates in, a rate over the step ending at each time out.

Fluxes and rates (kg m-2 s-1, mm h-1, m s-1) are converted to mm h-1 at the
valid time. Accumulations (kg m-2, mm, m of water) become the mean rate over
the step ENDING at ``time`` [mm h-1]: with CF time bounds the accumulation
start of each step is known exactly (since run start, per step, or buckets
that restart); without bounds an accumulation that never decreases over the
run is taken as accumulated since ``reference_time``, otherwise as accumulated
over each output step. Where the start of the first step is unknown (a run
whose first valid time is its reference time) the first rate is NaN.
Deciding this reads the precipitation field (a 2-D field per step) once.
Precipitation without units is an error (mm, m and rates cannot be told apart).
"""

import numpy as np
import xarray as xr

from kit.io.cf_time import is_datetime, to_datetime64
from kit.io.cf_units import convert_units, unit_dimensionality, units_of
from kit.io.messages import input_error

__all__ = ["convert_precip", "accumulation_starts", "rate_from_accumulation"]


def convert_precip(da, where, name):
    """Precipitation in mm (an amount) or mm h-1 (a rate), decided by its units.

    Parameters
    ----------
    da : xarray.DataArray
        Precipitation amount (mm, m, kg m-2) or rate (mm h-1, m s-1, kg m-2 s-1).
    where, name : str
        File and variable, for error messages.

    Returns
    -------
    values : xarray.DataArray
        [mm] for an amount, [mm h-1] for a rate (1 kg m-2 of water = 1 mm).
    kind : str
        ``"amount"`` or ``"rate"``.

    Raises
    ------
    kit.errors.InputError
        No units, or units that are neither an amount nor a rate.
    """
    units = units_of(da)
    if units is None:
        raise input_error(
            where,
            f"precipitation '{name}' has no units; expected an amount (mm, m, kg m-2) "
            "or a rate (mm h-1, kg m-2 s-1)",
        )
    q, dim = unit_dimensionality(units, where, name, "mm, m, kg m-2, mm h-1 or kg m-2 s-1")
    expected = "an amount (mm, m, kg m-2) or a rate (mm h-1, kg m-2 s-1, m s-1)"
    water = 1.0  # kg m-2 of water per mm (density 1000 kg m-3)
    if dim == {"[length]": 1}:
        return convert_units(da, "mm", where, name, expected, units), "amount"
    if dim == {"[mass]": 1, "[length]": -2}:
        return convert_units(da, "kg/m**2", where, name, expected, units) / water, "amount"
    if dim == {"[length]": 1, "[time]": -1}:
        return convert_units(da, "mm/hour", where, name, expected, units), "rate"
    if dim == {"[mass]": 1, "[length]": -2, "[time]": -1}:
        return convert_units(da, "kg/m**2/hour", where, name, expected, units) / water, "rate"
    raise input_error(where, f"precipitation '{name}' has unit '{units}'; expected {expected}")


def accumulation_starts(ds_raw, where):
    """Start of each step's accumulation from the file's CF time bounds, if it gives them.

    Parameters
    ----------
    ds_raw : xarray.Dataset
        The file as opened (time bounds are dropped from the canonical one).
    where : str
        File named in error messages.

    Returns
    -------
    numpy.ndarray or None
        Lower time bounds [datetime64[ns]], one per step; None without bounds.
    """
    for cname in ("time", "valid_time"):
        if cname in ds_raw.variables:
            b = ds_raw[cname].attrs.get("bounds") or ds_raw[cname].encoding.get("bounds")
            if b and b in ds_raw.variables:
                vals = ds_raw[b].values
                if is_datetime(vals):
                    return to_datetime64(vals, where, b)[..., 0].ravel()
    for b in ("time_bnds", "time_bounds", "valid_time_bnds"):
        if b in ds_raw.variables and is_datetime(ds_raw[b].values):
            return to_datetime64(ds_raw[b].values, where, b)[..., 0].ravel()
    return None


def rate_from_accumulation(acc, times, ref, lower):
    r"""Rate over the step ending at each time [mm h-1] from an accumulation [mm].

    Parameters
    ----------
    acc : xarray.DataArray
        Accumulated precipitation [mm] on ``time`` (sorted).
    times : numpy.ndarray
        Valid times [datetime64[ns]].
    ref : numpy.datetime64 or None
        Reference time (run start); None when unknown.
    lower : numpy.ndarray or None
        Start of each step's accumulation from time bounds
        (:func:`accumulation_starts`); None to decide from the values.

    Returns
    -------
    xarray.DataArray
        [mm h-1], clipped at 0; NaN where a step's start is unknown.

    Notes
    -----
    With :math:`A_i` the amount at valid time :math:`t_i` accumulated since
    :math:`s_i`: when :math:`s_i = s_{i-1}` the rate is
    :math:`(A_i - A_{i-1}) / (t_i - t_{i-1})`, otherwise
    :math:`A_i / (t_i - s_i)`.
    """
    n = times.size
    if lower is not None and lower.size == n:
        starts = lower
    else:
        since_start = True
        if n > 1:
            d = acc.diff("time")
            mind = float(d.min().values) if d.size else 0.0
            scale = float(abs(acc).max().values) if acc.size else 0.0
            since_start = mind >= -max(1e-3, 1e-4 * scale)
        if since_start:
            starts = np.full(
                n, ref if ref is not None else np.datetime64("NaT"), dtype="datetime64[ns]"
            )
        else:
            starts = np.concatenate(
                [[ref if ref is not None else np.datetime64("NaT")], times[:-1]]
            ).astype("datetime64[ns]")
    hours = (times - starts) / np.timedelta64(1, "h")
    same = np.zeros(n, dtype=bool)
    same[1:] = (starts[1:] == starts[:-1]) & ~np.isnat(starts[1:])
    dt = np.full(n, np.nan)
    dt[1:] = (times[1:] - times[:-1]) / np.timedelta64(1, "h")
    with np.errstate(invalid="ignore", divide="ignore"):
        div = np.where(same, dt, np.where(np.isfinite(hours) & (hours > 0), hours, np.nan))
    prev = acc.isel(time=np.r_[0, np.arange(n - 1)]).assign_coords(time=acc["time"])
    base = prev * xr.DataArray(same.astype(np.float64), dims="time", coords={"time": acc["time"]})
    out = ((acc - base) / xr.DataArray(div, dims="time", coords={"time": acc["time"]})).clip(
        min=0.0
    )
    return out.assign_coords(time=times)
