"""Variable roles: which variable of a file is temperature, wind, height, humidity ...

A *role* is a canonical quantity (``t, td, rh, q, u, v, z`` on pressure
levels; ``t2m, td2m, rh2m, q2m, u10, v10, mslp, ps, precip`` near the
surface). Variables are found

1. by CF ``standard_name`` (``air_temperature``, ``relative_humidity``,
   ``geopotential``, ``x_wind`` ...);
2. then by the short names common in reanalyses and model output
   (``t, ta, TMP, r, hur, q, hus, z, gh, msl, prmsl, tp, t2m, 2t, u10 ...``),
   exact first, then ignoring case; a short name is not taken when the
   variable's own standard_name or units say it is another quantity.

A variable with a pressure-level dimension fills the upper-air role (``t``);
the same quantity without one (a 2 m or 10 m height coordinate or none) fills
the near-surface role (``t2m``).
"""

from kit.io.cf_levels import scalar_pressure_hpa, surface_height_m
from kit.io.cf_units import parse_quantity, units_of
from kit.io.messages import input_error, join_names

__all__ = [
    "CANONICAL_NAMES",
    "REQUIRED_ROLES",
    "UPPER_AIR_ROLES",
    "find_roles",
    "check_required_roles",
]

#: canonical variable -> (CF standard_name, long_name) written on the result
CANONICAL_NAMES = {
    "t": ("air_temperature", "air temperature"),
    "td": ("dew_point_temperature", "dew point"),
    "u": ("eastward_wind", "eastward wind (earth-relative)"),
    "v": ("northward_wind", "northward wind (earth-relative)"),
    "z": ("geopotential_height", "geopotential height"),
    "mslp": ("air_pressure_at_mean_sea_level", "mean sea-level pressure"),
    "ps": ("surface_air_pressure", "surface pressure"),
    "zsfc": ("surface_altitude", "height of the model surface above sea level"),
    "t2m": ("air_temperature", "2 m air temperature"),
    "td2m": ("dew_point_temperature", "2 m dew point"),
    "u10": ("eastward_wind", "10 m eastward wind (earth-relative)"),
    "v10": ("northward_wind", "10 m northward wind (earth-relative)"),
    "precip": ("lwe_precipitation_rate", "precipitation rate over the step ending at time"),
}


# role -> (standard names, short names); _LEVEL_ROLES are on pressure levels,
# _SURFACE_ROLES near the surface. Quantities decide the unit family.
_LEVEL_ROLES = {
    "t": (("air_temperature",), ("t", "ta", "T", "TMP", "temp", "air", "tmp", "TT", "tmpprs")),
    "td": (("dew_point_temperature",), ("d", "dpt", "td", "DPT", "dewpoint", "Td")),
    "rh": (("relative_humidity",), ("r", "rh", "hur", "RH", "rhum", "relhum", "rhprs")),
    "q": (("specific_humidity",), ("q", "hus", "QV", "SPFH", "shum", "qv", "spfhprs")),
    "u": (
        ("eastward_wind", "x_wind", "grid_eastward_wind"),
        ("u", "ua", "U", "UGRD", "uwnd", "ugrdprs"),
    ),
    "v": (
        ("northward_wind", "y_wind", "grid_northward_wind"),
        ("v", "va", "V", "VGRD", "vwnd", "vgrdprs"),
    ),
    "z": (
        ("geopotential_height", "geopotential"),
        (
            "z",
            "gh",
            "zg",
            "HGT",
            "hgt",
            "Z",
            "phi",
            "geopotential",
            "gph",
            "hgt_isobaric",
            "fi",
            "H",
            "hgtprs",
        ),
    ),
}

_SURFACE_ROLES = {
    "t2m": (
        ("air_temperature",),
        ("t2m", "2t", "tas", "T2", "TMP_2maboveground", "t2", "tmp2m", "t_2m"),
    ),
    "td2m": (
        ("dew_point_temperature",),
        ("d2m", "2d", "tdps", "td2m", "DPT_2maboveground", "td2", "dpt2m", "td_2m"),
    ),
    "rh2m": (
        ("relative_humidity",),
        ("r2", "rh2m", "hurs", "RH_2maboveground", "rh2", "relhum_2m"),
    ),
    "q2m": (("specific_humidity",), ("q2", "q2m", "huss", "SPFH_2maboveground", "QV2M", "qv_2m")),
    "u10": (
        ("eastward_wind", "x_wind", "grid_eastward_wind"),
        ("u10", "10u", "uas", "U10", "UGRD_10maboveground", "u10m", "ugrd10m", "u_10m"),
    ),
    "v10": (
        ("northward_wind", "y_wind", "grid_northward_wind"),
        ("v10", "10v", "vas", "V10", "VGRD_10maboveground", "v10m", "vgrd10m", "v_10m"),
    ),
    "mslp": (
        ("air_pressure_at_mean_sea_level", "air_pressure_at_sea_level"),
        (
            "msl",
            "mslp",
            "prmsl",
            "PRMSL",
            "slp",
            "MSLP",
            "PMSL",
            "MSL",
            "psl",
            "mslet",
            "pmsl",
            "prmslmsl",
            "pres_msl",
        ),
    ),
    "ps": (
        ("surface_air_pressure",),
        ("sp", "ps", "PRES_surface", "psfc", "PSFC", "pres_sfc", "PS", "pressfc"),
    ),
    "zsfc": (
        ("surface_altitude", "surface_geopotential"),
        ("orog", "zsfc", "HGT_surface", "hgtsfc", "hsurf", "HSURF", "oro", "topo", "FIS"),
    ),
    "precip": (
        (
            "precipitation_amount",
            "lwe_thickness_of_precipitation_amount",
            "precipitation_flux",
            "lwe_precipitation_rate",
            "thickness_of_rainfall_amount",
            "rainfall_flux",
            "lwe_thickness_of_precipitation_amount_accumulated",
        ),
        (
            "tp",
            "pr",
            "precip",
            "apcp",
            "APCP",
            "prate",
            "PRATE",
            "tprate",
            "precipitation",
            "TP",
            "apcpsfc",
            "pratesfc",
            "tot_prec",
            "PRECTOT",
            "PRECTOTCORR",
        ),
    ),
}


# names that mean "this quantity near the surface" for level-role short names
# found without a level dimension
_SURFACE_OF = {
    "t": "t2m",
    "td": "td2m",
    "rh": "rh2m",
    "q": "q2m",
    "u": "u10",
    "v": "v10",
    "z": "zsfc",
}

#: roles on pressure levels (t's levels): temperature, humidity, wind, height
UPPER_AIR_ROLES = tuple(_LEVEL_ROLES)
#: roles a run must have; humidity (td, rh or q) and the winds (u and v, both
#: or neither) may be absent: a thin run (theta fronts, geostrophic winds)
REQUIRED_ROLES = ("t", "z")

_ROLE_DIMENSIONS = {
    "temperature": [{"[temperature]": 1}],
    "fraction": [{}],
    "speed": [{"[length]": 1, "[time]": -1}],
    "height": [{"[length]": 1}, {"[length]": 2, "[time]": -2}],
    "pressure": [{"[mass]": 1, "[length]": -1, "[time]": -2}],
    "precip": [
        {"[length]": 1},
        {"[mass]": 1, "[length]": -2},
        {"[length]": 1, "[time]": -1},
        {"[mass]": 1, "[length]": -2, "[time]": -1},
    ],
}


_ROLE_QUANTITY = {
    "t": "temperature",
    "td": "temperature",
    "t2m": "temperature",
    "td2m": "temperature",
    "rh": "fraction",
    "q": "fraction",
    "rh2m": "fraction",
    "q2m": "fraction",
    "u": "speed",
    "v": "speed",
    "u10": "speed",
    "v10": "speed",
    "z": "height",
    "mslp": "pressure",
    "ps": "pressure",
    "zsfc": "height",
    "precip": "precip",
}


def find_roles(ds, level_dims, where):
    """Find which variable of a file fills each canonical role.

    Parameters
    ----------
    ds : xarray.Dataset
        One file (time already canonical).
    level_dims : dict
        Its pressure-level dimensions [hPa] (:func:`kit.io.cf_levels.pressure_level_dims`).
    where : str
        File named in error messages.

    Returns
    -------
    roles : dict
        ``{role: (variable name, "standard_name" or "name")}``; the first
        variable found keeps the role.
    candidates : list of str
        The data variables that could fill a role (not grid mappings, bounds
        or 0-/1-D variables), for messages.
    """
    roles = {}
    skip = set()
    for n, v in ds.data_vars.items():
        if "grid_mapping_name" in v.attrs or n.endswith(("_bnds", "_bounds")) or v.ndim < 2:
            skip.add(n)
    candidates = [n for n in ds.data_vars if n not in skip]

    surface_names = {x.lower() for _s, names in _SURFACE_ROLES.values() for x in names}

    def on_levels(n):
        v = ds[n]
        if any(d in level_dims for d in v.dims):
            return True
        # a single-level file: its scalar pressure coordinate is shared by every
        # variable, so near-surface fields are told apart by height or name
        if surface_height_m(v) is not None or n.lower() in surface_names:
            return False
        return scalar_pressure_hpa(v, where) is not None

    def assign(role, n, via):
        if role not in roles:
            roles[role] = (n, via)

    # 1. standard names
    for n in candidates:
        std = ds[n].attrs.get("standard_name")
        if not std:
            continue
        lev = on_levels(n)
        table = _LEVEL_ROLES if lev else _SURFACE_ROLES
        for role, (stds, _names) in table.items():
            if std in stds:
                assign(role, n, "standard_name")
                break
    used = {v[0] for v in roles.values()}
    # 2. short names, exact then case-insensitive
    for exact in (True, False):
        for n in candidates:
            if n in used:
                continue
            lev = on_levels(n)
            hit = None
            for table, is_level_table in ((_LEVEL_ROLES, True), (_SURFACE_ROLES, False)):
                for role, (_stds, names) in table.items():
                    match = n in names if exact else n.lower() in {x.lower() for x in names}
                    if match:
                        hit = (role, is_level_table)
                        break
                if hit:
                    break
            if hit is None:
                continue
            role, is_level_table = hit
            if is_level_table and not lev:
                role = _SURFACE_OF.get(role)
                if role is None:
                    continue
            elif not is_level_table and lev and role in _SURFACE_OF.values():
                continue
            if role in roles or not _name_match_allowed(ds[n], role):
                continue
            assign(role, n, "name")
            used.add(n)
    return roles, candidates


def _name_match_allowed(da, role):
    """Whether a short-name match may fill ``role``.

    Not when the variable's own standard_name says it is something else
    (ERA5's ``d`` is divergence, not dew point), nor when its units cannot be
    the role's quantity. A standard_name or unit that fits, or none, is fine.
    """
    std = da.attrs.get("standard_name")
    if std:
        stds = (_LEVEL_ROLES.get(role) or _SURFACE_ROLES.get(role) or ((),))[0]
        if std not in stds:
            return False
    units = units_of(da)
    if units is None:
        return True
    try:
        dims = dict(parse_quantity(units).dimensionality)
    except Exception:  # unreadable unit: let the conversion report it
        return True
    return dims in _ROLE_DIMENSIONS[_ROLE_QUANTITY[role]]


def check_required_roles(ds, roles, candidates, level_dims, where):
    """Raise unless a file has pressure levels, ``t`` and ``z``, and winds in pairs.

    Humidity and winds may be missing (a thin run): the loader then gives no
    ``td`` and geostrophic ``u``, ``v`` (:func:`kit.io.runs.open_run`).

    Parameters
    ----------
    ds : xarray.Dataset
        One file.
    roles : dict
        ``{role: (variable name, how found)}`` from :func:`find_roles`.
    candidates : list of str
        The file's data variables that could fill a role.
    level_dims : dict
        Its pressure-level dimensions [hPa].
    where : str
        File named in error messages.

    Raises
    ------
    kit.errors.InputError
        Naming the first thing missing and the variables found.
    """
    found = ", ".join(candidates) if candidates else "no data variables"
    missing = [r for r in REQUIRED_ROLES if r not in roles]
    need = {
        "t": "air_temperature on pressure levels (t, ta, TMP)",
        "u": "eastward_wind on pressure levels (u, ua, UGRD)",
        "v": "northward_wind on pressure levels (v, va, VGRD)",
        "z": "geopotential or geopotential_height on pressure levels (z, gh, zg, HGT)",
    }
    if not level_dims and not any(
        scalar_pressure_hpa(ds[n], where) is not None for n in candidates
    ):
        raise input_error(
            where,
            f"no pressure levels: expected a pressure-level dimension (level, isobaricInhPa, "
            f"plev, pressure; standard_name air_pressure) on t, u, v, z; found variables {found} "
            f"with dimensions {join_names(ds.dims)}",
        )
    if missing:
        r = missing[0]
        raise input_error(where, f"no {r} variable: need {need[r]}; found {found}")
    for a, b in (("u", "v"), ("v", "u")):
        if a in roles and b not in roles:
            raise input_error(
                where,
                f"no {b} variable: need {need[b]} with {roles[a][0]} (the winds come in "
                f"pairs, or neither for a thin run); found {found}",
            )
