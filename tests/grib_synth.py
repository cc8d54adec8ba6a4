"""Write small synthetic GRIB2 runs with ecCodes, for the loader's grid and trap tests.

Invented fields on real GRIB grid templates (ecCodes' own samples): a polar
stereographic grid over the southern hemisphere, a rotated latitude/longitude
grid, several steps with accumulated precipitation. The fields are simple
functions of latitude and longitude so a test can say what each point must
hold; they are not weather.
"""

import eccodes
import numpy as np
from pyproj import CRS, Proj

LEVELS = (1000.0, 850.0, 700.0, 500.0)
#: earth-relative wind every synthetic run carries [m s-1]
U_EARTH, V_EARTH = 12.0, -5.0


def _grid_message(kind):
    """A GRIB2 message of the grid ``kind`` ("south_polar" or "rotated")."""
    if kind == "south_polar":
        gid = eccodes.codes_grib_new_from_samples("polar_stereographic_pl_grib2")
        for key, val in (
            ("shapeOfTheEarth", 6),
            ("Nx", 41),
            ("Ny", 33),
            ("DxInMetres", 150000.0),
            ("DyInMetres", 150000.0),
            ("projectionCentreFlag", 128),
            ("LaDInDegrees", -60.0),
            ("orientationOfTheGridInDegrees", 140.0),
            ("latitudeOfFirstGridPointInDegrees", -35.0),
            ("longitudeOfFirstGridPointInDegrees", 100.0),
        ):
            eccodes.codes_set(gid, key, val)
    elif kind == "rotated":
        gid = eccodes.codes_grib_new_from_samples("rotated_ll_pl_grib2")
        for key, val in (
            ("shapeOfTheEarth", 6),
            ("Ni", 46),
            ("Nj", 36),
            ("iDirectionIncrementInDegrees", 0.5),
            ("jDirectionIncrementInDegrees", 0.5),
            ("latitudeOfFirstGridPointInDegrees", -10.0),
            ("longitudeOfFirstGridPointInDegrees", -12.0),
            ("latitudeOfLastGridPointInDegrees", 7.5),
            ("longitudeOfLastGridPointInDegrees", 10.5),
            ("iScansNegatively", 0),
            ("jScansPositively", 1),
            ("latitudeOfSouthernPoleInDegrees", -40.0),
            ("longitudeOfSouthernPoleInDegrees", 10.0),
        ):
            eccodes.codes_set(gid, key, val)
    else:
        raise ValueError(kind)
    _set_grid_relative(gid, True)
    n = eccodes.codes_get(gid, "Nx") * eccodes.codes_get(gid, "Ny")
    eccodes.codes_set_values(gid, np.zeros(n))
    return gid


def _set_grid_relative(gid, on):
    """Set GRIB2 flag bit 5 of resolutionAndComponentFlags (u/v relative to the grid)."""
    flags = eccodes.codes_get(gid, "resolutionAndComponentFlags")
    eccodes.codes_set(gid, "resolutionAndComponentFlags", (flags | 8) if on else (flags & ~8))


def grid_of(kind):
    """``(lat, lon, crs)`` of a synthetic grid as ecCodes computes it (2-D, data order)."""
    gid = _grid_message(kind)
    try:
        nx, ny = eccodes.codes_get(gid, "Nx"), eccodes.codes_get(gid, "Ny")
        lat = eccodes.codes_get_array(gid, "latitudes").reshape(ny, nx)
        lon = eccodes.codes_get_array(gid, "longitudes").reshape(ny, nx)
        if kind == "rotated":
            # ecCodes gives no projString for rotated grids: the CF mapping of the pole
            sp_lat = eccodes.codes_get(gid, "latitudeOfSouthernPoleInDegrees")
            sp_lon = eccodes.codes_get(gid, "longitudeOfSouthernPoleInDegrees")
            crs = CRS.from_cf({
                "grid_mapping_name": "rotated_latitude_longitude",
                "grid_north_pole_latitude": -sp_lat,
                "grid_north_pole_longitude": sp_lon - 180.0,
                "earth_radius": 6371229.0,
            })
        else:
            crs = CRS.from_proj4(eccodes.codes_get(gid, "projString"))
    finally:
        eccodes.codes_release(gid)
    return lat, lon, crs


def grid_relative(kind, u, v):
    """Grid-relative components of earth-relative winds, by pyproj's meridian convergence.

    pyproj's ``meridian_convergence`` gamma is the angle of grid north east of
    true north, so the grid components are the earth ones turned by +gamma.
    """
    lat, lon, crs = grid_of(kind)
    gamma = np.deg2rad(Proj(crs).get_factors(lon, lat).meridian_convergence)
    ug = u * np.cos(gamma) - v * np.sin(gamma)
    vg = u * np.sin(gamma) + v * np.cos(gamma)
    return ug, vg


def fields_at(lat, lon, level, hour):
    """The invented fields at points [K, gpm, %, m s-1, Pa, kg m-2]."""
    t = 290.0 - 0.0065 * (1000.0 - level) * 8.0 - 0.4 * np.abs(lat) + 0.01 * lon + 0.1 * hour
    gh = 110.0 + 8.0 * (1000.0 - level) + 2.0 * lat
    return {
        "t": t,
        "gh": gh,
        "r": 50.0 + 30.0 * np.cos(np.deg2rad(lon)) + 0.0 * lat,
        "prmsl": 101000.0 + 10.0 * lat + 0.0 * lon,
        "tp": 0.5 * hour + 0.0 * lat,  # amount since the run start [kg m-2]
    }


def write_run(path, kind, *, hours=(0,), grid_relative_winds=True, buckets=False):
    """Write a synthetic run (t, gh, r, u, v on LEVELS; prmsl; tp) to one GRIB2 file.

    ``tp`` is accumulated since the run start, or with ``buckets`` over each
    step since the previous one (the same 0.5 kg m-2 h-1 either way).
    Returns ``(lat, lon)`` of the grid.
    """
    lat, lon, _crs = grid_of(kind)
    if grid_relative_winds:
        ug, vg = grid_relative(kind, U_EARTH + 0.0 * lat, V_EARTH + 0.0 * lat)
    else:
        ug, vg = U_EARTH + 0.0 * lat, V_EARTH + 0.0 * lat
    with open(path, "wb") as out:
        for hour in hours:
            for level in LEVELS:
                vals = fields_at(lat, lon, level, hour)
                for short, data in (("t", vals["t"]), ("gh", vals["gh"]), ("r", vals["r"]),
                                    ("u", ug), ("v", vg)):
                    _write(out, kind, short, "isobaricInhPa", level, hour, data,
                           grid_relative_winds)
            vals = fields_at(lat, lon, 1000.0, hour)
            _write(out, kind, "prmsl", "meanSea", 0, hour, vals["prmsl"], grid_relative_winds)
            if hour > 0:
                start = 0
                if buckets:
                    start = max([h for h in hours if h < hour], default=0)
                amount = fields_at(lat, lon, 1000.0, hour - start)["tp"]
                _write(out, kind, "tp", "surface", 0, hour, amount, grid_relative_winds,
                       accum_from=start)
    return lat, lon


def _write(out, kind, short, level_type, level, hour, data, grid_rel, accum_from=None):
    gid = _grid_message(kind)
    try:
        _set_grid_relative(gid, grid_rel)
        eccodes.codes_set(gid, "centre", 255)  # "missing": no real centre's data
        eccodes.codes_set(gid, "dataDate", 20270114)
        eccodes.codes_set(gid, "dataTime", 0)
        if accum_from is not None:
            eccodes.codes_set(gid, "productDefinitionTemplateNumber", 8)
            eccodes.codes_set(gid, "shortName", short)
            eccodes.codes_set(gid, "typeOfLevel", level_type)
            eccodes.codes_set(gid, "stepType", "accum")
            eccodes.codes_set(gid, "startStep", accum_from)
            eccodes.codes_set(gid, "endStep", hour)
        else:
            eccodes.codes_set(gid, "shortName", short)
            eccodes.codes_set(gid, "typeOfLevel", level_type)
            if level_type == "isobaricInhPa":
                eccodes.codes_set(gid, "level", int(level))
            eccodes.codes_set(gid, "step", hour)
        eccodes.codes_set(gid, "bitsPerValue", 24)
        eccodes.codes_set_values(gid, np.asarray(data, dtype=np.float64).ravel())
        eccodes.codes_write(gid, out)
    finally:
        eccodes.codes_release(gid)
