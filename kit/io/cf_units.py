"""Units of the run loader: parse a file's units with pint, convert once to the kit's.

Each variable's ``units`` attribute is parsed with pint (MetPy's registry) and
converted once, here, into the kit's units: K, m s-1, m, Pa, hPa (levels) and
kg kg-1 / fraction for humidity (precipitation: :mod:`kit.io.precip`).
Whether ``z`` is geopotential [m2 s-2] (divided by g0, :data:`kit.constants.G0`)
or geopotential height [m] is decided from its units, never from the name. A
unit that cannot be parsed or converted raises :class:`~kit.errors.InputError`.

Where a variable has NO units attribute the kit's unit for its role is assumed,
with documented exceptions decided from the values: relative humidity (any
value above 1.5 means percent), geopotential vs geopotential height (ratio to
the ICAO standard-atmosphere height of the level, about 1 or about 9.8) and
pressure (a median below 2000 means hPa).

:func:`check_sample_values` checks the converted fields on a small sample of
the first valid time: all-NaN fields and implausible values (a wrong units
attribute) are caught there.
"""

import functools
import warnings

import numpy as np
from metpy.units import units as ureg

from kit.constants import G0
from kit.io.messages import input_error

__all__ = [
    "CANONICAL_UNITS",
    "units_of",
    "parse_quantity",
    "parse_units",
    "unit_dimensionality",
    "linear_conversion",
    "convert_units",
    "sample_values",
    "to_kelvin",
    "to_metres_per_second",
    "to_pascal",
    "to_humidity_fraction",
    "to_specific_humidity",
    "to_geopotential_height",
    "check_sample_values",
]

#: Units of the canonical variables (pint-readable strings).
CANONICAL_UNITS = {
    "t": "K",
    "td": "K",
    "u": "m s-1",
    "v": "m s-1",
    "z": "m",
    "mslp": "Pa",
    "ps": "Pa",
    "zsfc": "m",
    "t2m": "K",
    "td2m": "K",
    "u10": "m s-1",
    "v10": "m s-1",
    "precip": "mm h-1",
}


# unit spellings pint does not read the CF/GRIB way
_UNIT_ALIASES = {
    "c": "degC",
    "deg c": "degC",
    "degc": "degC",
    "deg_c": "degC",
    "degrees c": "degC",
    "degrees_celsius": "degC",
    "degree_celsius": "degC",
    "celsius": "degC",
    "°c": "degC",
    "degrees celsius": "degC",
    "f": "degF",
    "degrees_fahrenheit": "degF",
    "(0 - 1)": "1",
    "0-1": "1",
    "(0-1)": "1",
    "fraction": "1",
    "proportion": "1",
    "1": "1",
    "dimensionless": "1",
    "-": "1",
    "none": "1",
    "mb": "mbar",
    "millibars": "mbar",
    "gp m": "m",
    "gpm": "m",
    "m gp": "m",
    "gpdm": "dam",
    "dagpm": "dam",
    "gp dam": "dam",
    "m of water equivalent": "m",
    "mm of water equivalent": "mm",
    "kg m**-2": "kg m-2",
    "kg/m^2": "kg m-2",
    "kg/m2": "kg m-2",
    "kg m^-2": "kg m-2",
    "kg/m^2/s": "kg m-2 s-1",
    "kg m^-2 s^-1": "kg m-2 s-1",
    "kg/m2/s": "kg m-2 s-1",
    "mm/h": "mm h-1",
    "mm/hr": "mm h-1",
    "mm hr-1": "mm h-1",
    "mm/hour": "mm h-1",
    "kt": "knot",
    "kts": "knot",
    "knots": "knot",
    "m2/s2": "m2 s-2",
}


# physical ranges used to check a sample after conversion (median of the sample)
_PLAUSIBLE = {
    "t": (150.0, 350.0, "K"),
    "td": (100.0, 350.0, "K"),
    "t2m": (180.0, 345.0, "K"),
    "td2m": (150.0, 340.0, "K"),
    "u": (-150.0, 150.0, "m s-1"),
    "v": (-150.0, 150.0, "m s-1"),
    "u10": (-80.0, 80.0, "m s-1"),
    "v10": (-80.0, 80.0, "m s-1"),
    "mslp": (85000.0, 110000.0, "Pa"),
    "ps": (30000.0, 110000.0, "Pa"),
    "zsfc": (-500.0, 6000.0, "m"),
    "rh": (0.0, 1.5, "fraction"),
    "rh2m": (0.0, 1.5, "fraction"),
    "q": (0.0, 0.1, "kg kg-1"),
    "q2m": (0.0, 0.1, "kg kg-1"),
    "precip": (0.0, 500.0, "mm h-1 (or mm per step)"),
}


@functools.lru_cache(maxsize=256)
def _pint_quantity(text):
    parsed = ureg(text)
    return ureg.Quantity(1.0, parsed.units) * float(parsed.magnitude)


@functools.lru_cache(maxsize=256)
def _pint_scale_offset(text, target):
    q = _pint_quantity(text)
    zero = ureg.Quantity(0.0, q.units).to(target).magnitude
    one = ureg.Quantity(float(q.magnitude), q.units).to(target).magnitude
    return float(one - zero), float(zero)


def _unit_text(units_str):
    """Pint-readable spelling of a CF/GRIB units string."""
    raw = str(units_str).strip()
    text = _UNIT_ALIASES.get(raw.lower(), _UNIT_ALIASES.get(raw, raw))
    return text.replace("^", "**")


def parse_quantity(units_str):
    """Pint quantity of a units string as CF and GRIB files spell it.

    Parameters
    ----------
    units_str : str
        A ``units`` attribute (``"K"``, ``"degC"``, ``"gpm"``, ``"kg m**-2"`` ...).

    Returns
    -------
    pint.Quantity
        One unit of it (magnitude 1 unless the string carries a factor).

    Raises
    ------
    Exception
        Whatever pint raises for a string it cannot read; see :func:`parse_units`
        for the one-line InputError.

    Examples
    --------
    >>> dict(parse_quantity("gpm").dimensionality)
    {'[length]': 1}
    """
    return _pint_quantity(_unit_text(units_str))


def parse_units(units_str, where, name, expected):
    """Pint quantity of a units string, or a one-line InputError naming what was found.

    Parameters
    ----------
    units_str : str
        The variable's ``units`` attribute.
    where : str
        File named in the error message.
    name : str
        Variable named in the error message.
    expected : str
        The units expected, for the error message (``"K or degC"``).

    Returns
    -------
    pint.Quantity
        As :func:`parse_quantity`.

    Raises
    ------
    kit.errors.InputError
        The string is not understood.
    """
    try:
        return parse_quantity(units_str)
    except Exception:  # pint raises several types for unreadable strings
        raise input_error(
            where,
            f"variable '{name}' has unit '{str(units_str).strip()}' which is not understood; "
            f"expected {expected}",
        ) from None


def linear_conversion(q_from, target, where, name, expected):
    """Scale and offset that convert values into ``target`` units.

    Parameters
    ----------
    q_from : str or pint.Quantity
        Units of the values (a units string, or a quantity from :func:`parse_units`).
    target : str
        Pint units to convert into (``"hPa"``, ``"m"`` ...).
    where, name, expected : str
        File, variable and expected units, for the error message.

    Returns
    -------
    scale, offset : float
        ``value_in_target = scale * value + offset``.

    Raises
    ------
    kit.errors.InputError
        The units cannot be converted into ``target``.
    """
    text = q_from if isinstance(q_from, str) else f"{q_from.units}"
    try:
        if isinstance(q_from, str):
            return _pint_scale_offset(_unit_text(q_from), target)
        scale, offset = _pint_scale_offset(text, target)
        return scale * float(q_from.magnitude), offset
    except Exception:
        raise input_error(
            where,
            f"variable '{name}' has unit '{text}' which cannot be converted to "
            f"{target}; expected {expected}",
        ) from None


def convert_units(da, target, where, name, expected, units_str):
    """Lazily convert a DataArray from ``units_str`` into ``target``.

    Parameters
    ----------
    da : xarray.DataArray
        Values in ``units_str``; a float dtype is kept.
    target : str
        Pint units to convert into.
    where, name, expected : str
        File, variable and expected units, for the error message.
    units_str : str
        Units of ``da``.

    Returns
    -------
    xarray.DataArray
        In ``target`` units (``da`` itself when no change is needed).

    Raises
    ------
    kit.errors.InputError
        The units are not understood or cannot be converted.
    """
    parse_units(units_str, where, name, expected)
    scale, offset = linear_conversion(str(units_str), target, where, name, expected)
    if scale == 1.0 and offset == 0.0:
        return da
    out = da * scale + offset if offset else da * scale
    return out.astype(da.dtype) if da.dtype.kind == "f" else out


def unit_dimensionality(units_str, where, name, expected):
    """Pint quantity and dimensionality of a units string.

    Parameters
    ----------
    units_str : str
        The variable's units.
    where, name, expected : str
        File, variable and expected units, for the error message.

    Returns
    -------
    quantity : pint.Quantity
    dimensionality : dict
        Pint dimensions and powers, e.g. ``{"[length]": 1, "[time]": -1}``.

    Raises
    ------
    kit.errors.InputError
        The units are not understood.
    """
    q = parse_units(units_str, where, name, expected)
    return q, dict(q.dimensionality)


def sample_values(da):
    """Small numpy sample of a field: first time/member, strided in space.

    Parameters
    ----------
    da : xarray.DataArray
        A field, numpy- or dask-backed.

    Returns
    -------
    numpy.ndarray
        float64 values of the first member and time, every level, and at most
        about 48 points along each other dimension.
    """
    d = da
    for dim in ("member", "time"):
        if dim in d.dims:
            d = d.isel({dim: 0})
    sel = {}
    for dim in d.dims:
        if dim != "level" and d.sizes[dim] > 48:
            sel[dim] = slice(None, None, int(np.ceil(d.sizes[dim] / 48)))
    return np.asarray(d.isel(sel).values, dtype=np.float64)


def _isa_height_m(p_hpa):
    """ICAO standard-atmosphere height of a pressure [m] (troposphere formula)."""
    return 44330.8 * (1.0 - (np.asarray(p_hpa, dtype=np.float64) / 1013.25) ** 0.190263)


def units_of(da):
    """Return a variable's ``units`` attribute (or encoding), None when absent or blank.

    Parameters
    ----------
    da : xarray.DataArray

    Returns
    -------
    str or None
    """
    u = da.attrs.get("units", da.encoding.get("units"))
    if u is None:
        return None
    u = str(u).strip()
    return u if u else None


def to_kelvin(da, where, name, role):
    """Temperature [K] from K, degC or degF (K when the file gives no units).

    Parameters
    ----------
    da : xarray.DataArray
        Temperature or dew point.
    where, name : str
        File and variable, for error messages.
    role : str
        Canonical role (``t``, ``td``, ``t2m``, ``td2m``), for error messages.

    Returns
    -------
    xarray.DataArray
        [K].

    Raises
    ------
    kit.errors.InputError
        The units are not a temperature.
    """
    units = units_of(da)
    if units is None:
        units = "K"
    q, dim = unit_dimensionality(units, where, name, "K or degC")
    if dim != {"[temperature]": 1}:
        raise input_error(
            where, f"variable '{name}' ({role}) has unit '{units}'; expected K or degC"
        )
    return convert_units(da, "K", where, name, "K or degC", units)


def to_metres_per_second(da, where, name):
    """Wind component [m s-1] from any speed unit (m s-1 when the file gives none).

    Parameters
    ----------
    da : xarray.DataArray
        A wind component.
    where, name : str
        File and variable, for error messages.

    Returns
    -------
    xarray.DataArray
        [m s-1].
    """
    units = units_of(da) or "m s-1"
    return convert_units(da, "m/s", where, name, "m s-1 (or knots, km h-1)", units)


def to_pascal(da, where, name):
    """Pressure [Pa]; without units a median below 2000 is taken as hPa, else Pa.

    Parameters
    ----------
    da : xarray.DataArray
        Mean sea-level or surface pressure.
    where, name : str
        File and variable, for error messages.

    Returns
    -------
    xarray.DataArray
        [Pa].
    """
    units = units_of(da)
    if units is None:
        s = sample_values(da)
        med = np.nanmedian(s) if np.any(np.isfinite(s)) else np.nan
        units = "hPa" if med < 2000.0 else "Pa"
    return convert_units(da, "Pa", where, name, "Pa or hPa", units)


def to_humidity_fraction(da, where, name):
    """Relative humidity as a fraction [1]; without units any value above 1.5 means percent.

    Parameters
    ----------
    da : xarray.DataArray
        Relative humidity in % or as a fraction.
    where, name : str
        File and variable, for error messages.

    Returns
    -------
    xarray.DataArray
        [1] (not clipped).
    """
    units = units_of(da)
    if units is None:
        s = sample_values(da)
        finite = s[np.isfinite(s)]
        if finite.size and np.nanmax(finite) > 1.5:
            return da / 100.0
        return da
    return convert_units(da, "dimensionless", where, name, "% or fraction (0..1)", units)


def to_specific_humidity(da, where, name):
    """Specific humidity [kg kg-1] from kg kg-1 or g kg-1 (kg kg-1 without units).

    Parameters
    ----------
    da : xarray.DataArray
        Specific humidity.
    where, name : str
        File and variable, for error messages.

    Returns
    -------
    xarray.DataArray
        [kg kg-1].
    """
    units = units_of(da) or "kg kg-1"
    return convert_units(da, "dimensionless", where, name, "kg kg-1 or g kg-1", units)


def to_geopotential_height(da, where, name, level_hpa):
    r"""Geopotential height [m] from geopotential or height, decided by units.

    Parameters
    ----------
    da : xarray.DataArray
        Geopotential [m2 s-2] or geopotential height [m] on ``level``.
    where, name : str
        File and variable, for error messages.
    level_hpa : array_like or None
        Pressure of each level [hPa]; without units the values are compared
        with the standard-atmosphere height of these levels.

    Returns
    -------
    xarray.DataArray
        [m]; geopotential is divided by g0.

    Raises
    ------
    kit.errors.InputError
        The units are neither a length nor a geopotential, or absent and not
        decidable from the values.

    Notes
    -----
    .. math:: z = \Phi / g_0
    """
    units = units_of(da)
    if units is None:
        std = da.attrs.get("standard_name")
        s = sample_values(da)
        if "level" in da.dims and level_hpa is not None:
            lev_axis = da.dims.index("level") - sum(
                d in ("time", "member") for d in da.dims[: da.dims.index("level")]
            )
            isa = _isa_height_m(level_hpa)
            use = isa > 700.0
            if np.any(use) and np.any(np.isfinite(s)):
                prof = np.nanmedian(np.moveaxis(s, lev_axis, 0).reshape(len(level_hpa), -1), axis=1)
                ratio = np.nanmedian(prof[use] / isa[use])
                if 0.5 < ratio < 2.0:
                    units = "m"
                elif 0.5 * G0 < ratio < 2.0 * G0:
                    units = "m2 s-2"
        if units is None and std == "geopotential":
            units = "m2 s-2"
        if units is None and std == "geopotential_height":
            units = "m"
        if units is None:
            raise input_error(
                where,
                f"variable '{name}' (geopotential/height) has no units; expected m (height) "
                "or m2 s-2 (geopotential)",
            )
    q, dim = unit_dimensionality(units, where, name, "m or m2 s-2")
    if dim == {"[length]": 1}:
        return convert_units(da, "m", where, name, "m or m2 s-2", units)
    if dim == {"[length]": 2, "[time]": -2}:
        return convert_units(da, "m**2/s**2", where, name, "m or m2 s-2", units) / G0
    raise input_error(
        where,
        f"variable '{name}' has unit '{units}'; expected m (geopotential height) or m2 s-2 "
        "(geopotential)",
    )


def check_sample_values(ds, where):
    """Sample-based checks on the first valid time: all-NaN and plausible ranges.

    Parameters
    ----------
    ds : xarray.Dataset
        Converted fields of one file (canonical names; ``_rh``, ``_q`` ... for
        humidity not yet turned into dew point).
    where : str
        File named in messages.

    Returns
    -------
    xarray.Dataset
        ``ds`` without the optional fields that are all NaN (each dropped with a
        warning).

    Raises
    ------
    kit.errors.InputError
        A required field is all NaN, or a field is implausible in its unit.
    """
    for role in list(ds.data_vars):
        key = role.lstrip("_")
        s = sample_values(ds[role])
        finite = s[np.isfinite(s)]
        if finite.size == 0:
            if key in ("t", "u", "v", "z", "rh", "q", "td"):
                raise input_error(
                    where,
                    f"field '{key}' is missing everywhere (all NaN / fill value) at the first "
                    "valid time; expected data",
                )
            warnings.warn(
                f"{where}: optional field '{key}' is all NaN at the first valid time; dropped",
                UserWarning,
                stacklevel=3,
            )
            ds = ds.drop_vars(role)
            continue
        if key == "z":
            levels = ds["level"].values
            isa = _isa_height_m(levels)
            use = isa > 700.0
            if np.any(use):
                lev_axis = (
                    list(ds[role].dims[-3:]).index("level") if "level" in ds[role].dims else None
                )
                if lev_axis is not None:
                    prof = np.nanmedian(np.moveaxis(s, 0, 0).reshape(levels.size, -1), axis=1)
                    ratio = np.nanmedian(prof[use] / isa[use])
                    if not 0.5 < ratio < 2.0:
                        raise input_error(
                            where,
                            f"geopotential height is {ratio:.2f} times the standard-atmosphere "
                            "height of its levels after unit conversion; expected about 1: check "
                            "the units attribute (m for height, m2 s-2 for geopotential)",
                        )
            continue
        rng = _PLAUSIBLE.get(key)
        if rng is None:
            continue
        med = float(np.median(finite))
        if key == "precip":
            med = float(np.max(finite))
            if med < -0.5 or med > 2000.0:
                raise input_error(
                    where,
                    f"precipitation reaches {med:g} after unit conversion; expected "
                    "0..2000 (mm per hour or per step): check the units attribute",
                )
            continue
        if not rng[0] <= med <= rng[1]:
            raise input_error(
                where,
                f"field '{key}' has median {med:.4g} {rng[2]} after unit conversion; expected "
                f"{rng[0]:g}..{rng[1]:g} {rng[2]}: check its units attribute",
            )
    return ds
