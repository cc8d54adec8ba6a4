"""Front passages over sites: site series, signed distance, passage time, weather sequence.

The science behind the arrival table (:func:`kit.products.arrivals.arrival_table`,
which assembles and formats it).

The model at a site (:func:`site_series`) is every field of the run
interpolated bilinearly to the site, plus what the passage needs from it:
surface pressure, relative humidity, wet-bulb temperature and theta-w, the 0 C
and wet-bulb 0 C levels, a cloud-base proxy, the warm layer aloft and the
10-m wind direction and speed.

For every site and every tracked front the passage time is the moment the
front line crosses the site (:func:`find_passages`). At each model step the
site's signed distance ``d`` from the line is measured along the front normal
(positive on the cold side; the nearest point of the polyline, extended
straight past its ends; :func:`signed_distance_km`). The front passes the site
where ``d`` changes sign between two steps; the time is interpolated linearly
in distance between the steps, which is the same as moving the line at its
tracked speed over the site. After a front's last step (the run's last step,
or where its track ends) the line is carried on at the tracked speed for at
most ``horizon_h`` hours and the passage is flagged ``extrapolated``. When the
crossing happens beyond an end of the line (farther than
``along_tolerance_km``) the front misses the site: the passage time is NaN and
the note says, for example, "cold front passes 240 km N of site (line ends
there)" (one such miss per front that never crosses the site, and only when
its end comes within ``miss_report_km``).

The locating line of the thermal front parameter lies on the warm edge of the
frontal zone (Hewson 1998). With ``zone_centre=True`` (default) the passage is
that of the zone's centre, the middle of the temperature change, which is also
where a station series shows the thermal step: the line is moved toward the
cold side by ``0.760 |grad tau| / TFP`` (exact for a tanh-shaped zone; see
:data:`kit.constants.ZONE_CENTRE_FACTOR`), given as ``zone_centre_offset_km``.
At 8 m/s a 100 km offset is 3.5 h, so the choice matters; ``zone_centre=False``
times the warm edge. :class:`ZoneCentre` measures the offset in the run's own
field.

Fronts found on a pressure level (850 hPa by default) lie ahead of or behind
the surface front because frontal surfaces slope: the surface front lies on the
warm side of the elevated line by ``h * N`` where ``h`` is the level's height
above the site and ``1:N`` the front's slope (``front.props["slope_1_in"]``,
else the typical 1:150 warm and 1:50 cold, common practice, no source). With
``surface=True`` (default) the passage is that of the surface front so
estimated; ``surface_offset_km`` says how far the line was moved toward the
warm side.

A thin run (no humidity on its levels; ``ds.attrs["thin"]`` says what it
lacks) gives a site series without invented humidity: relative humidity,
wet-bulb temperature, theta-w, the wet-bulb 0 C level and the cloud base are
NaN, and the passage's thermal change is read in theta (the field its fronts
were found in). Where the run has no wind of its own the near-ground wind is
the geostrophic wind of the lowest level above the site, and the series says
so (``attrs["wind_from"]``).

The weather sequence (:func:`weather_sequence`) comes from the site series:
precipitation start and end (rate at or above :data:`PRECIP_THRESHOLD_MMH`),
10-m wind before and after (``window_h`` either side) with the signed turn
(positive clockwise, i.e. veering in the northern hemisphere: the sense comes
from the data), temperature, dew point and theta-w change, the 0 C and wet-bulb
0 C levels, a cloud-base proxy (lowest level with relative humidity >= 95 %), a
freezing-rain / ice-pellet window (a layer above 0 C aloft over sub-zero air at
the ground) and a snow risk (wet-bulb 0 C level below 300 m above the site
while precipitating; common practice, no source). Beside the model sequence it
gives the rule of thumb from the front's speed (common practice, no source):
warm-front rain starts when the front is 200-300 nautical miles away; a cold
front's heaviest rain falls 50-100 nautical miles behind it.

Times inside are float hours since 1970-01-01 UTC (:func:`hours_since_epoch`);
cells and notes write them with :func:`format_utc`. Pure computation: no
plotting, no file formats.
"""

import math

import numpy as np
import pandas as pd
import xarray as xr
from scipy.ndimage import map_coordinates, spline_filter

from kit.constants import (
    FT_PER_M,
    G0,
    KT_PER_MS,
    NM_KM,
    RD,
    T0_K,
)
from kit.errors import InputError
from kit.science import fronts as kf
from kit.science import geo, sections, thermo
from kit.science.geo import (
    PointSampler,
    direction_bearing_deg,
    grid_extent_text,
    local_east_north_km,
)
from kit.timefmt import iso_minutes

__all__ = [
    "PRECIP_THRESHOLD_MMH",
    "CLOUD_RH",
    "SNOW_WBFL_M",
    "LIGHT_WIND_KT",
    "WARM_RAIN_AHEAD_NM",
    "COLD_HEAVY_BEHIND_NM",
    "hours_since_epoch",
    "format_utc",
    "round_or_nan",
    "site_series",
    "missing_steps",
    "signed_distance_km",
    "ZoneCentre",
    "SurfaceFront",
    "find_passages",
    "crossing_fraction",
    "weather_sequence",
]

#: precipitation rate that counts as "raining" [mm h-1] (common practice, no source)
PRECIP_THRESHOLD_MMH = 0.2
#: relative humidity of the cloud-base proxy [1] (common practice, no source)
CLOUD_RH = 0.95
#: wet-bulb 0 C level under which precipitation is likely snow [m above site]
#: (common practice, no source)
SNOW_WBFL_M = 300.0
#: wind speed under which a wind turn is flagged as uncertain [kt] (common practice, no source)
LIGHT_WIND_KT = 3.0
# typical slopes (TYPICAL_SLOPE_1_IN) and the line-to-zone-centre factor
# (ZONE_CENTRE_FACTOR) are in kit.constants, with their sources
_MAX_CENTRE_KM = sections.MAX_CENTRE_KM
#: rule of thumb distances [nautical miles] (REFERENCES.md, [trade])
WARM_RAIN_AHEAD_NM = (200.0, 300.0)
COLD_HEAVY_BEHIND_NM = (50.0, 100.0)

_MAX_FRONT_SPEED_KMH = 60.0 * 3.6  # faster than 60 m/s is a mismatched line, not motion


# ----------------------------------------------------------------------------- time


def hours_since_epoch(t):
    """Hours since 1970-01-01 of datetime64-like values [h] (float)."""
    return np.asarray(t, dtype="datetime64[ns]").astype("int64") / 3.6e12


def _from_hours(h):
    return np.datetime64(int(round(h * 3600.0)), "s").astype("datetime64[ns]")


def format_utc(value):
    """Format a time as UTC ISO 8601 with ``Z``, to the minute (``2027-01-14T06:30Z``).

    NaN, None or NaT give an empty string (an empty cell in the table).

    Examples
    --------
    >>> format_utc(np.datetime64("2027-01-14T06:29:40"))
    '2027-01-14T06:30Z'
    """
    if value is None:
        return ""
    if isinstance(value, float):
        if not math.isfinite(value):
            return ""
        value = _from_hours(value)
    ts = pd.Timestamp(value)
    if pd.isna(ts):
        return ""
    return iso_minutes(ts.round("min"))


# ------------------------------------------------------------------------- thermo


def _thermo():
    """Point thermodynamics of kit.science.thermo on numpy arrays.

    K and hPa in; K or a fraction out.
    """
    return {
        "rh": lambda t, td: np.asarray(thermo.relative_humidity(t, td), dtype=float),
        "tw": lambda t, td, p: np.asarray(thermo.wet_bulb_temperature(t, td, p), dtype=float),
        "thw": lambda t, td, p: np.asarray(
            thermo.wet_bulb_potential_temperature(t, td, p), dtype=float
        ),
    }


# ------------------------------------------------------------------ column work


def _column(z_lev, x_lev, z_sfc, x_sfc):
    """Profile above the ground, bottom up: the surface point, then levels above it."""
    keep = np.isfinite(z_lev) & np.isfinite(x_lev) & (z_lev > z_sfc + 1.0)
    z, x = z_lev[keep], x_lev[keep]
    order = np.argsort(z)
    z, x = z[order], x[order]
    if np.isfinite(x_sfc):
        z, x = np.concatenate([[z_sfc], z]), np.concatenate([[x_sfc], x])
    return z, x


def _cross(z0, z1, x0, x1, level):
    if x1 == x0:
        return 0.5 * (z0 + z1)
    return z0 + (level - x0) * (z1 - z0) / (x1 - x0)


def _columns(z_lev, x_lev, z_sfc, x_sfc):
    """Profiles above the ground with the surface point first, for every column at once.

    ``z_lev``, ``x_lev`` are (..., level); ``x_sfc`` is (...). Levels at or
    below the ground (and missing values) become NaN, which the profile
    functions of :mod:`kit.science.thermo` skip. Returns (z, x) of shape
    (..., 1 + level).
    """
    keep = np.isfinite(z_lev) & np.isfinite(x_lev) & (z_lev > z_sfc + 1.0)
    x_sfc = np.broadcast_to(np.asarray(x_sfc, float), z_lev.shape[:-1])
    z0 = np.where(np.isfinite(x_sfc), float(z_sfc), np.nan)[..., None]
    z = np.concatenate([z0, np.where(keep, z_lev, np.nan)], axis=-1)
    x = np.concatenate([x_sfc[..., None], np.where(keep, x_lev, np.nan)], axis=-1)
    return z, x


def _cloud_band(z, rh, threshold):
    """Band the cloud base lies in, as the model column resolves it: (low, high) [m].

    Between the highest point below the lowest saturated point (RH >= the
    threshold) and that saturated point: the column's points are 2 m and the
    pressure levels above the ground, several hundred metres apart, so the
    base is known only to that band. Saturated at 2 m: from the ground to the
    first point at least 100 m above it (fog or cloud on the ground possible).
    (NaN, NaN) without a saturated point.
    """
    sat = np.flatnonzero(np.isfinite(rh) & (rh >= threshold))
    if z.size == 0 or sat.size == 0:
        return np.nan, np.nan
    k = int(sat[0])
    if k == 0:  # up to the first point at least 100 m above the ground (a level just
        # above the ground resolves nothing)
        above = np.flatnonzero(z >= z[0] + 100.0)
        return float(z[0]), float(z[above[0]] if above.size else z[-1])
    return float(z[k - 1]), float(z[k])


def _lowest_saturated(z, rh, threshold):
    """Height of the lowest level where RH reaches ``threshold`` [m]; NaN if none."""
    if z.size == 0:
        return np.nan
    if rh[0] >= threshold:
        return float(z[0])
    for k in range(z.size - 1):
        if rh[k] < threshold <= rh[k + 1]:
            return float(_cross(z[k], z[k + 1], rh[k], rh[k + 1], threshold))
    return np.nan


# ----------------------------------------------------------------- site series


def _site_fields(site):
    try:
        name = str(site["name"])
        lat, lon = float(site["lat"]), float(site["lon"])
    except (KeyError, TypeError, ValueError):
        raise InputError(
            f"site {site!r}: expected a mapping with name, lat, lon[, elevation_m] "
            "(a kit.io.sites.read_sites row)"
        ) from None
    elev = site.get("elevation_m", np.nan) if hasattr(site, "get") else np.nan
    elev = float(elev) if elev is not None and np.isfinite(float(elev)) else np.nan
    return name, lat, lon, elev


def _wind_dir(u, v):
    """Meteorological direction the wind blows FROM [degrees, 0..360)."""
    return np.mod(270.0 - np.degrees(np.arctan2(v, u)), 360.0)


def site_series(ds, site):
    """Time series of the model at a site: bilinear interpolation plus derived fields.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset of one run (kit.open_run), with or without ``member``.
    site : mapping or pandas.Series or pandas.DataFrame
        ``name``, ``lat``, ``lon`` [degrees] and optionally ``elevation_m`` [m
        above mean sea level; taken as 0 m when missing, noted in the attrs].
        A DataFrame of sites (kit.io.sites.read_sites) gives a dict
        ``{name: Dataset}``, read from the files in one pass.

    Returns
    -------
    xarray.Dataset
        Every horizontal field of ``ds`` at the site (``[member,] time[, level]``)
        plus: ``p_sfc`` [hPa] surface pressure (from ``mslp`` reduced with the
        hypsometric equation, else from ``z`` on levels); ``theta`` [K],
        ``rh`` [1], ``tw`` [K] and ``theta_w`` [K] on levels (the last three
        NaN on a thin run without humidity); ``rh2m`` [1], ``tw2m`` [K];
        ``freezing_level_m`` and ``wet_bulb_freezing_level_m`` [m above mean sea
        level] (highest 0 C crossing; the site elevation when the whole column is
        sub-zero; NaN when above 0 C to the top level); ``cloud_base_m`` [m above
        the site] (lowest height with RH >= :data:`CLOUD_RH`); ``warm_layer_max_c``
        [C], ``warm_layer_base_m``, ``warm_layer_top_m`` [m above mean sea level]
        and ``cold_layer_min_c`` [C] (a layer above 0 C aloft over sub-zero air at
        the ground, NaN where none); ``wind_dir_deg`` [degrees from],
        ``wind_speed_ms`` [m s-1], ``wind_u_ms``, ``wind_v_ms`` [m s-1] at 10 m
        (the lowest level above the site without 10-m wind; absent without
        any wind). ``attrs``: site, lat, lon,
        elevation_m, elevation_assumed, run, source; on a thin run also
        ``thin`` (``ds.attrs["thin"]``) and, where the wind is the geostrophic
        wind of a level, ``wind_from`` (e.g. "geostrophic wind at 850 hPa").

    Raises
    ------
    kit.errors.InputError
        The site is off the grid or the dataset lacks ``t`` or ``z``.
    """
    if isinstance(site, pd.DataFrame):
        return _series_many(ds, site)
    name = _site_fields(site)[0]
    return _series_many(ds, pd.DataFrame([dict(site)]))[name]


def _series_many(ds, sites):
    """Site series of every row of ``sites``: {name: Dataset}."""
    for var in ("t", "z"):
        if var not in ds:
            raise InputError(
                f"run {ds.attrs.get('run', '?')}: no variable '{var}'; "
                "expected the canonical dataset (DEVELOPERS.md)"
            )
    fields = [_site_fields(row) for _, row in sites.iterrows()]
    sampler = PointSampler(ds)
    rows, cols = sampler.index([f[2] for f in fields], [f[1] for f in fields])
    positions = np.column_stack([rows, cols])
    for (name, lat, lon, _), (row, col) in zip(fields, positions, strict=True):
        if not (np.isfinite(row) and np.isfinite(col)):
            raise InputError(
                f"site '{name}' ({lat:.3f}, {lon:.3f}) lies off the grid of "
                f"{ds.attrs.get('run', 'the run')} ({grid_extent_text(ds)}); "
                "expected a site inside the model domain"
            )
    # bilinear, NaN-aware (levels below the ground); reads only the corner columns
    at_sites = sampler.sample_dataset(ds, index=(rows, cols), nan="skip", dim="_site")
    at_sites = at_sites.drop_vars(
        [c for c in at_sites.coords if c not in ("time", "level", "member", "reference_time")]
    )
    at_sites.attrs = {}
    interpolated = [at_sites.isel(_site=k) for k in range(len(fields))]
    return {
        f[0]: _derive(ds, s, *f, *pos)
        for f, pos, s in zip(fields, positions, interpolated, strict=True)
    }


def _derive(ds, s, name, lat, lon, elev, row, col):
    """Add the derived site fields to the interpolated series ``s``."""
    assumed = not np.isfinite(elev)
    z_sfc = 0.0 if assumed else elev
    th = _thermo()

    lev = s["level"].values.astype(float)
    t, z = s["t"], s["z"]
    # a thin run without humidity on its levels: NaN, never invented
    humid = "td" in s
    td = s["td"] if humid else None
    # surface pressure [hPa]
    if "mslp" in s:
        tmean = (s["t2m"] if "t2m" in s else t.isel(level=0)) + 0.0065 * z_sfc / 2.0
        p_sfc = s["mslp"] / 100.0 * np.exp(-G0 * z_sfc / (RD * tmean))
    else:
        lnp = np.log(lev)

        def _psfc(zc):
            ok = np.isfinite(zc)
            if ok.sum() < 2:
                return np.nan
            order = np.argsort(zc[ok])
            zz, pp = zc[ok][order], lnp[ok][order]
            if z_sfc <= zz[0]:
                return float(np.exp(pp[0] + (z_sfc - zz[0]) * (pp[1] - pp[0]) / (zz[1] - zz[0])))
            return float(np.exp(np.interp(z_sfc, zz, pp)))

        p_sfc = xr.apply_ufunc(_psfc, z, input_core_dims=[["level"]], vectorize=True)
    s["p_sfc"] = p_sfc.assign_attrs(units="hPa", long_name="surface pressure at the site")
    p3 = s["level"].astype(float).broadcast_like(t).transpose(*t.dims)
    s["theta"] = xr.DataArray(
        np.asarray(thermo.potential_temperature(t.values, p3.values), dtype=float),
        dims=t.dims,
        coords=t.coords,
        attrs={"units": "K"},
    )
    empty = np.full(t.shape, np.nan)
    for var, unit, value in (
        ("rh", "1", lambda: th["rh"](t.values, td.values)),
        ("tw", "K", lambda: th["tw"](t.values, td.values, p3.values)),
        ("theta_w", "K", lambda: th["thw"](t.values, td.values, p3.values)),
    ):
        s[var] = xr.DataArray(
            value() if humid else empty, dims=t.dims, coords=t.coords, attrs={"units": unit}
        )
    has_sfc = "t2m" in s and "td2m" in s
    if has_sfc:
        s["rh2m"] = (s["t2m"].dims, th["rh"](s["t2m"].values, s["td2m"].values))
        s["tw2m"] = (s["t2m"].dims, th["tw"](s["t2m"].values, s["td2m"].values, s["p_sfc"].values))

    # column products, looped over [member,] time
    lead = [d for d in t.dims if d != "level"]
    tt = t.transpose(*lead, "level").values - T0_K
    twv = s["tw"].transpose(*lead, "level").values - T0_K
    rhv = s["rh"].transpose(*lead, "level").values
    zz = z.transpose(*lead, "level").values
    shape = tt.shape[:-1]
    nan = np.full(shape, np.nan)
    t_s = s["t2m"].transpose(*lead).values - T0_K if has_sfc else nan
    tw_s = s["tw2m"].transpose(*lead).values - T0_K if has_sfc else nan
    rh_s = s["rh2m"].transpose(*lead).values if has_sfc else nan
    names = [
        "freezing_level_m",
        "wet_bulb_freezing_level_m",
        "cloud_base_m",
        "cloud_base_low_m",
        "cloud_base_high_m",
        "warm_layer_base_m",
        "warm_layer_top_m",
        "warm_layer_max_c",
        "cold_layer_min_c",
    ]
    res = {k: np.full(shape, np.nan) for k in names}
    # 0 C and wet-bulb 0 C levels and the warm layer aloft: kit.science.thermo, every column
    zc, tc = _columns(zz, tt, z_sfc, t_s)
    zw, twc = _columns(zz, twv, z_sfc, tw_s)
    res["freezing_level_m"][...] = thermo.freezing_level(tc + T0_K, zc, dim=-1)
    if humid:  # without humidity aloft there is no wet-bulb profile to cross 0 C
        res["wet_bulb_freezing_level_m"][...] = thermo.freezing_level(twc + T0_K, zw, dim=-1)
    top, base, tmax, tmin = thermo.warm_layer_aloft(tc + T0_K, zc, dim=-1, cold_min=True)
    res["warm_layer_base_m"][...], res["warm_layer_top_m"][...] = base, top
    res["warm_layer_max_c"][...] = np.asarray(tmax) - T0_K
    res["cold_layer_min_c"][...] = np.asarray(tmin) - T0_K
    for idx in np.ndindex(*shape) if humid else ():
        zr, rc = _column(zz[idx], rhv[idx], z_sfc, rh_s[idx])
        res["cloud_base_m"][idx] = _lowest_saturated(zr, rc, CLOUD_RH) - z_sfc
        res["cloud_base_low_m"][idx], res["cloud_base_high_m"][idx] = (
            np.asarray(_cloud_band(zr, rc, CLOUD_RH)) - z_sfc)
    units = {
        "freezing_level_m": "m above mean sea level",
        "wet_bulb_freezing_level_m": "m above mean sea level",
        "cloud_base_m": "m above site",
        "cloud_base_low_m": "m above site",
        "cloud_base_high_m": "m above site",
        "warm_layer_base_m": "m above mean sea level",
        "warm_layer_top_m": "m above mean sea level",
        "warm_layer_max_c": "degC",
        "cold_layer_min_c": "degC",
    }
    for k in names:
        s[k] = (lead, res[k], {"units": units[k]})
    u = v = None
    wind_from = ""
    if "u10" in s and "v10" in s:
        u, v = s["u10"], s["v10"]
    elif "u" in s and "v" in s:  # lowest level above the ground stands in for 10 m
        above = (s["z"] > z_sfc).argmax("level")
        u, v = s["u"].isel(level=above), s["v"].isel(level=above)
        if ds["u"].attrs.get("derived") == "geostrophic":
            wind_from = _geostrophic_words(u)
    if u is not None:  # a run without wind leaves the wind cells empty
        s["wind_u_ms"] = u.assign_attrs(units="m s-1", long_name="eastward wind near 10 m")
        s["wind_v_ms"] = v.assign_attrs(units="m s-1", long_name="northward wind near 10 m")
        s["wind_dir_deg"] = xr.apply_ufunc(_wind_dir, u, v).assign_attrs(units="degrees (from)")
        s["wind_speed_ms"] = np.hypot(u, v).assign_attrs(units="m s-1")
    s.attrs.update(
        site=name,
        lat=lat,
        lon=lon,
        elevation_m=z_sfc,
        elevation_assumed=int(assumed),
        run=str(ds.attrs.get("run", "")),
        source=str(ds.attrs.get("source", "")),
        grid_row=row,
        grid_col=col,
    )
    if ds.attrs.get("thin"):
        s.attrs["thin"] = str(ds.attrs["thin"])
    if wind_from:
        s.attrs["wind_from"] = wind_from
    return s


def _geostrophic_words(u):
    """Say which level the geostrophic stand-in for the 10-m wind comes from."""
    levels = np.unique(np.asarray(u["level"].values, dtype=float))
    where = " or ".join(f"{p:g}" for p in levels[::-1])
    return f"geostrophic wind at {where} hPa"


# -------------------------------------------------------------------- passages


def _nearest_on_line(x, y):
    """Nearest point to the origin on a polyline, extended straight past its ends.

    Returns (px, py, seg, frac, overshoot_km, tangent) where ``frac`` is the
    position along segment ``seg`` (may fall outside 0..1 on an end segment).
    """
    ax, ay, bx, by = x[:-1], y[:-1], x[1:], y[1:]
    dx, dy = bx - ax, by - ay
    l2 = dx * dx + dy * dy
    l2 = np.where(l2 > 0, l2, np.nan)
    f = -(ax * dx + ay * dy) / l2
    fc = np.clip(f, 0.0, 1.0)
    px, py = ax + fc * dx, ay + fc * dy
    k = int(np.nanargmin(px * px + py * py))
    frac = f[k]
    over = 0.0
    n = x.size - 1
    if (k == 0 and frac < 0.0) or (k == n - 1 and frac > 1.0):
        over = float(abs(frac - fc[k]) * math.sqrt(l2[k]))
    else:
        frac = fc[k]
    seglen = math.sqrt(l2[k])
    return (
        ax[k] + frac * dx[k],
        ay[k] + frac * dy[k],
        k,
        frac,
        over,
        (dx[k] / seglen, dy[k] / seglen),
    )


def signed_distance_km(front, lat, lon):
    """Signed distance of a point from a front line along its normal [km].

    Parameters
    ----------
    front : kit.science.fronts.Front
    lat, lon : float
        Point (the site) [degrees].

    Returns
    -------
    dict
        ``d_km``: distance along the front normal, positive on the cold side;
        ``overshoot_km``: how far beyond an end of the line the nearest point
        lies (0 when the site is abreast of the line); ``bearing_deg``: from
        the site to the nearest point of the line (or its end) [degrees].

    Notes
    -----
    Distances are measured in an azimuthal equidistant plane centred on the
    site (exact for distances from the site). The normal is the segment's
    perpendicular, turned to agree with ``front.normal_east/north``.
    """
    lon_v = np.asarray(front.lon, dtype=float)
    lat_v = np.asarray(front.lat, dtype=float)
    ok = np.isfinite(lon_v) & np.isfinite(lat_v)
    lon_v, lat_v = lon_v[ok], lat_v[ok]
    ne = np.asarray(front.normal_east, dtype=float)[ok]
    nn = np.asarray(front.normal_north, dtype=float)[ok]
    if lon_v.size < 2:
        raise InputError(f"front at {front.valid_time}: fewer than 2 vertices; expected a line")
    x, y = local_east_north_km(lon_v, lat_v, float(lon), float(lat))
    px, py, k, frac, over, (tx, ty) = _nearest_on_line(x, y)
    nx_, ny_ = ty, -tx  # a perpendicular of the segment
    w = min(max(frac, 0.0), 1.0)
    ref_e, ref_n = (1 - w) * ne[k] + w * ne[k + 1], (1 - w) * nn[k] + w * nn[k + 1]
    if not np.isfinite(ref_e) or (nx_ * ref_e + ny_ * ref_n) < 0:
        nx_, ny_ = -nx_, -ny_
    d = -(px * nx_ + py * ny_)
    if over > 0.0:  # bearing to the end of the line, where it stops
        ex, ey = (x[0], y[0]) if k == 0 and frac < 0 else (x[-1], y[-1])
    else:
        ex, ey = px, py
    bearing = float(np.mod(np.degrees(np.arctan2(ex, ey)), 360.0))
    return {
        "d_km": float(d),
        "overshoot_km": over,
        "bearing_deg": bearing,
        "end_distance_km": float(math.hypot(ex, ey)),
    }


_COMPASS = ["N", "NE", "E", "SE", "S", "SW", "W", "NW"]


def _compass(bearing):
    return _COMPASS[int(((bearing % 360.0) + 22.5) // 45.0) % 8]


class ZoneCentre:
    """Distance from a locating line to the frontal zone's centre, from the run's field.

    The centre is the maximum of the smoothed thermal gradient along the front
    normal on the cold side of the line (where the thermal front parameter
    changes sign), sampled with cubic interpolation every 2 km out to
    ``max_km``; the smoothing and thermal field are those of the front finder
    (kit.science.fronts.FrontSettings). Falls back to the tanh estimate
    (:func:`kit.science.sections.zone_centre_offset_km`) where no maximum is found.
    """

    def __init__(self, ds, settings=None, max_km=_MAX_CENTRE_KM, step_km=2.0):
        self.ds = ds
        self.sampler = PointSampler(ds)
        self.settings = settings if settings is not None else kf.FrontSettings()
        self.max_km, self.step_km = max_km, step_km
        self._cache, self._levels = {}, {}

    def _grad(self, level, time):
        key = (float(level), np.datetime64(time, "ns"))
        if key not in self._cache:
            if key[0] not in self._levels:  # read the level once for every time
                keep = [v for v in ("t", "td") if v in self.ds]
                self._levels[key[0]] = self.ds[keep].sel(level=[key[0]]).load()
            one = self._levels[key[0]].sel(time=[key[1]])
            if getattr(self.settings, "field", "theta_w") == "theta":
                tau = thermo.level_field(one, "theta", key[0])
            else:
                tau = thermo.theta_w_of(one, key[0])
            tau = tau.isel(time=0) if "time" in getattr(tau, "dims", ()) else tau
            tau = geo.smooth(tau, one, kf.effective_smoothing_km(one, self.settings))
            gx, gy = geo.gradient(tau, one)
            g = np.hypot(np.asarray(gx, dtype=float), np.asarray(gy, dtype=float))
            self._cache[key] = spline_filter(np.nan_to_num(g, nan=0.0), order=3)
        return self._cache[key]

    def offset_km(self, front, lat, lon):
        """Offset [km] toward the cold side at the vertex nearest to (lat, lon); NaN if none."""
        if front.level_hpa is None:
            return np.nan
        lon_v = np.asarray(front.lon, dtype=float)
        lat_v = np.asarray(front.lat, dtype=float)
        x, y = local_east_north_km(lon_v, lat_v, float(lon), float(lat))
        k = int(np.nanargmin(x * x + y * y))
        ne, nn = float(front.normal_east[k]), float(front.normal_north[k])
        if not (np.isfinite(ne) and np.isfinite(nn)) or ne == nn == 0:
            return np.nan
        bearing = direction_bearing_deg(ne, nn)
        dist = np.arange(0.0, self.max_km + self.step_km / 2, self.step_km)
        plon, plat = geo.destination(
            np.full(dist.size, lon_v[k]),
            np.full(dist.size, lat_v[k]),
            np.full(dist.size, bearing),
            dist,
        )
        pos = np.column_stack(self.sampler.index(plon, plat))
        ok = np.all(np.isfinite(pos), axis=1)
        if ok.sum() < 5 or not ok[0]:
            return np.nan
        coeffs = self._grad(front.level_hpa, front.valid_time)
        vals = np.full(dist.size, np.nan)
        vals[ok] = map_coordinates(coeffs, pos[ok].T, order=3, prefilter=False, mode="nearest")
        last = int(np.nonzero(~ok)[0][0]) if (~ok).any() else dist.size
        vals = vals[:last]
        j = int(np.nanargmax(vals))
        if j == vals.size - 1:  # still rising at the end: no centre found
            return np.nan
        if 0 < j:  # parabolic refinement of the maximum
            a, b, c = vals[j - 1], vals[j], vals[j + 1]
            den = a - 2 * b + c
            frac = 0.5 * (a - c) / den if den < 0 else 0.0
            return float(dist[j] + frac * self.step_km)
        return 0.0


_FIELD_WORDS = {"theta_w": "theta-w", "theta": "theta"}


def _estimate_words(front, surface, zone_centre):
    """How a passage is placed when the 2-m field does not place it (for the table)."""
    level = f"{front.level_hpa:.0f} hPa" if front.level_hpa is not None else "the front's level"
    parts = [f"{level} line"]
    if zone_centre:
        parts.append("moved to its zone centre")
    if surface:
        parts.append("and down its slope" if zone_centre else "moved down its slope")
    return "estimated: " + " ".join(parts)


class SurfaceFront:
    """Where the surface front lies relative to a site, measured in the run's 2-m field.

    The one definition of the surface front (:func:`kit.science.sections.
    surface_front_1d`): the centre of the near-surface thermal gradient zone
    (2-m theta-w; 2-m theta on a thin run), found on the same profile a
    cross-section through the site would cut (normal to the line's nearest
    segment, through the site, 10 km spacing, the same interpolation and
    smoothing), nearest the estimate from the front's level (its zone centre
    moved by the slope). A run without 2-m fields has no measurement: the
    estimate is used and the table says so.
    """

    #: profile half-length either side of the estimate [km], and its spacing [km]
    HALF_KM, SPACING_KM = 450.0, 10.0

    def __init__(self, ds, settings=None):
        self.ds = ds
        field = getattr(settings, "field", "theta_w")  # theta-w needs the 2-m dew point
        self.field = "theta" if field == "theta_w" and "td2m" not in ds else field
        self.grid_km = float(sections.grid_km(ds))
        self._one = {}

    @property
    def available(self):
        """Whether the run has the 2-m fields the measurement needs."""
        need = ("t2m", "td2m") if self.field == "theta_w" else ("t2m",)
        return all(n in self.ds for n in need)

    def _at(self, time, member):
        key = (np.datetime64(time, "ns"), member)
        if key not in self._one:
            ds = self.ds
            if "member" in ds.dims and member is not None:
                ds = ds.sel(member=member)
            keep = [n for n in ("t2m", "td2m", *sections.SURFACE_PRESSURE_FIELDS) if n in ds]
            keep += sorted({ds[n].attrs["grid_mapping"] for n in keep
                            if ds[n].attrs.get("grid_mapping") in ds.variables})
            one = ds[keep].sel(time=key[0]) if "time" in ds.dims else ds[keep]
            self._one[key] = one.load()
        return self._one[key]

    def distance_km(self, front, lat, lon, guess_km):
        """Signed distance of the site from the surface front [km], + on the cold side.

        ``guess_km`` is the estimate (same sign convention); NaN when the run
        has no 2-m fields or no zone centre lies within 300 km of the estimate.
        """
        if not self.available or not np.isfinite(guess_km) or len(front.lon) < 2:
            return np.nan
        bearing, _crossing = sections.normal_through(front, lat, lon)
        # along the normal toward the warm side a point at s puts the site on its
        # cold side by s: the site's signed distance is the front's position s
        s_km = np.arange(guess_km - self.HALF_KM, guess_km + self.HALF_KM + 1e-6,
                         self.SPACING_KM)
        plon, plat = geo.destination(np.full(s_km.size, float(lon)),
                                     np.full(s_km.size, float(lat)),
                                     np.full(s_km.size, bearing), s_km)
        one = self._at(front.valid_time, front.member)
        # the site itself is sampled last: its ground is the height the
        # profile is referred to (the frontal surface meets the ground there)
        tau, ground = sections.near_surface_profile(
            one, np.append(plat, float(lat)), np.append(plon, float(lon)), self.field,
            with_ground=True)
        if tau is None:
            return np.nan
        site_m = ground[-1] if ground is not None else np.nan
        return sections.surface_front_1d(
            tau[:-1], s_km, sections.surface_smoothing_km(self.grid_km), float(guess_km), +1,
            ground_m=None if ground is None else ground[:-1], reference_m=site_m,
            slope_1_in=sections.front_slope_1_in(front)[0])


def _level_height(zlev, level, time):
    """Height of ``level`` at the site at ``time`` [m] (linear in time; NaN outside)."""
    zl = zlev.sel(level=level, method="nearest")
    vals = np.asarray(zl.values, dtype=float).ravel()
    if "time" not in zl.dims or vals.size == 1:
        return float(vals[0])
    return _interp(hours_since_epoch(zl["time"].values), vals, float(hours_since_epoch(time)))


def find_passages(
    fronts,
    series,
    *,
    surface=True,
    zone_centre=True,
    horizon_h=12.0,
    along_tolerance_km=100.0,
    miss_report_km=500.0,
    centre_finder=None,
    surface_finder=None,
):
    """Passages of tracked fronts over one site.

    Parameters
    ----------
    fronts : list of kit.science.fronts.Front
        Fronts of ONE run and member, with ``track`` ids (kit.science.motion).
    series : xarray.Dataset
        :func:`site_series` of the same run (member already selected); gives the
        site position, elevation and the height of the front's level.
    surface : bool
        Estimate the surface front's passage from the slope (module notes).
    zone_centre : bool
        Time the passage of the frontal zone's centre (the middle of the
        temperature change) rather than of its warm edge, where the locating
        line lies (module notes).
    horizon_h : float
        Longest extrapolation past the front's last step at its tracked speed [h].
    along_tolerance_km : float
        How far beyond an end of the line a crossing still counts [km].
    miss_report_km : float
        A front whose end passes farther from the site than this is not
        reported as a miss [km].
    centre_finder : object with ``offset_km(front, lat, lon)``, optional
        Measures the line-to-centre distance in the run's own field (as
        :func:`kit.products.arrivals.arrival_table` does); without it the tanh estimate from the
        front's ``grad`` and ``tfp`` is used.
    surface_finder : SurfaceFront, optional
        Measures where the surface front lies in the run's 2-m field (the one
        definition of the surface front, shared with the sections); the
        estimate from the level (slope and zone centre) is its first guess and
        is used alone where nothing is measured.

    Returns
    -------
    list of dict
        One per passage or miss: ``track``, ``front_kind``, ``passage`` (float
        hours since 1970, NaN for a miss), ``speed_kt`` (tracked speed of the
        line over the site [kt]), ``extrapolated`` (bool), ``surface_offset_km``
        (slope shift toward the warm side [km]), ``zone_centre_offset_km``
        (shift toward the cold side [km]), ``passage_from`` (how the surface
        front was placed), ``level_hpa``, ``note``. A track that
        passes the site gives no miss; a track that does not gives at most one.
    """
    lat, lon = series.attrs["lat"], series.attrs["lon"]
    elev = float(series.attrs.get("elevation_m", 0.0))
    tracks = {}
    for f in fronts:
        if f.track is None:
            raise InputError(
                f"front {f.kind} at {format_utc(f.valid_time)}: no track id; expected fronts "
                "from kit.science.motion.analyse_run (tracked over lead time)"
            )
        tracks.setdefault(f.track, []).append(f)
    zlev = series["z"] if "z" in series else None
    out = []
    for tid in sorted(tracks):
        by_time = {}
        for f in tracks[tid]:
            h = float(hours_since_epoch(f.valid_time))
            g = signed_distance_km(f, lat, lon)
            shift = 0.0
            if surface and zlev is not None and f.level_hpa is not None:
                n, _ = sections.front_slope_1_in(f)
                if np.isfinite(n):
                    zl = _level_height(zlev, float(f.level_hpa), f.valid_time)
                    if np.isfinite(zl):
                        shift = max(zl - elev, 0.0) * n / 1000.0
            centre = np.nan
            near = abs(g["d_km"] + shift) < 3.0 * _MAX_CENTRE_KM and g["overshoot_km"] < 1000.0
            if zone_centre and centre_finder is not None and near:
                centre = centre_finder.offset_km(f, lat, lon)
            if zone_centre and not np.isfinite(centre):
                centre = sections.zone_centre_offset_km(f)
            centre = 0.0 if not np.isfinite(centre) else centre
            # d is positive on the cold side: moving the line toward the warm side
            # by `shift` puts the site farther on its cold side, and vice versa
            g["d_km"] += shift - centre
            g["shift"], g["centre"] = shift, centre
            g["from"] = _estimate_words(f, surface, zone_centre)
            if surface and surface_finder is not None and near and g["overshoot_km"] < 300.0:
                measured = surface_finder.distance_km(f, lat, lon, g["d_km"])
                if np.isfinite(measured):
                    g["d_km"] = measured
                    g["from"] = f"centre of the 2 m {_FIELD_WORDS.get(surface_finder.field)} zone"
            # a split track may hold several lines at one time: keep the nearest
            if (
                h not in by_time
                or abs(g["d_km"]) + g["overshoot_km"]
                < abs(by_time[h][1]["d_km"]) + by_time[h][1]["overshoot_km"]
            ):
                by_time[h] = (f, g)
        times = sorted(by_time)
        steps = [(h, *by_time[h]) for h in times]
        hits, misses = [], []
        for i, ((h0, f0, g0), (h1, f1, g1)) in enumerate(zip(steps[:-1], steps[1:],
                                                              strict=True)):
            d0, d1 = g0["d_km"], g1["d_km"]
            if d0 == d1 or d0 * d1 > 0 or (d0 == 0 and h0 != times[0]):
                continue
            rate = abs(d1 - d0) / (h1 - h0)
            if rate > _MAX_FRONT_SPEED_KMH:
                continue
            w = crossing_fraction(times, [st[2]["d_km"] for st in steps], i)
            tp = h0 + w * (h1 - h0)
            kind = f0.kind if w < 0.5 else f1.kind
            placed = g0["from"] if g0["from"] == g1["from"] else (
                f"{g0['from']} at {format_utc(h0)}, {g1['from']} at {format_utc(h1)}")
            over = (1 - w) * g0["overshoot_km"] + w * g1["overshoot_km"]
            shift = (1 - w) * g0["shift"] + w * g1["shift"]
            centre = (1 - w) * g0["centre"] + w * g1["centre"]
            if over > along_tolerance_km:
                g = g0 if w < 0.5 else g1
                misses.append(_miss(tid, kind, f0, g, tp, shift, centre))
                continue
            note = "quasi-stationary: timing uncertain" if kind == "quasi-stationary" else ""
            if f0.kind != f1.kind:
                note = (note + "; " if note else "") + f"type changes {f0.kind} -> {f1.kind}"
            hits.append(
                {
                    "track": tid,
                    "front_kind": kind,
                    "passage": tp,
                    "speed_kt": rate / NM_KM,
                    "extrapolated": False,
                    "surface_offset_km": shift,
                    "zone_centre_offset_km": centre,
                    "passage_from": placed,
                    "level_hpa": f0.level_hpa,
                    "note": note,
                }
            )
        if steps and not hits and not misses:
            hK, fK, gK = steps[-1]
            if len(steps) >= 2:
                hJ, _, gJ = steps[-2]
                rate = (gK["d_km"] - gJ["d_km"]) / (hK - hJ)  # km h-1
            else:  # one step: the front's one speed (tracked, else the front-normal wind)
                sp = fK.speed_best_ms
                rate = -float(sp) * 3.6 if sp is not None and np.isfinite(sp) else 0.0
            dK = gK["d_km"]
            if rate != 0 and dK * rate < 0 and abs(rate) <= _MAX_FRONT_SPEED_KMH:
                dt = -dK / rate
                if dt <= horizon_h:
                    tp = hK + dt
                    if gK["overshoot_km"] > along_tolerance_km:
                        misses.append(
                            _miss(tid, fK.kind, fK, gK, tp, gK["shift"], gK["centre"], True)
                        )
                    else:
                        hits.append(
                            {
                                "track": tid,
                                "front_kind": fK.kind,
                                "passage": tp,
                                "speed_kt": abs(rate) / NM_KM,
                                "extrapolated": True,
                                "surface_offset_km": gK["shift"],
                                "zone_centre_offset_km": gK["centre"],
                                "passage_from": gK["from"],
                                "level_hpa": fK.level_hpa,
                                "note": f"extrapolated {dt:.1f} h past the front's last "
                                f"step ({format_utc(hK)}) at "
                                + ("its tracked speed" if len(steps) >= 2 else
                                   f"its speed ({fK.speed_source}: one step only)"),
                            }
                        )
        out.extend(hits)
        if not hits:
            near = [m for m in misses if m["_end_km"] <= miss_report_km]
            out.extend(near[:1])
    for r in out:
        r.pop("_end_km", None)
    out.sort(key=lambda r: (np.nan_to_num(r["passage"], nan=1e18), r["track"]))
    return out


def crossing_fraction(hours, distance_km, i):
    """Where between steps ``i`` and ``i + 1`` a site's distance from a front is zero (0..1).

    The distance is fitted with a parabola in time through the two steps and
    their outer neighbours where there are any (a front that speeds up or
    slows down between 3-hourly steps, as a deepening wave's do), else
    interpolated linearly; the parabola is used only where it crosses zero
    once between the two steps. The arrival table times passages with it;
    the one-passage test reads the sections with it.

    Parameters
    ----------
    hours : array_like
        Step times [h], increasing.
    distance_km : array_like
        Signed distance at each step [km]; steps ``i`` and ``i + 1`` differ in sign.
    i : int
        The step before the crossing.
    """
    h = np.asarray(hours, float)
    d = np.asarray(distance_km, float)
    h0, h1, d0, d1 = h[i], h[i + 1], d[i], d[i + 1]
    w = d0 / (d0 - d1)
    sl = slice(max(i - 1, 0), min(i + 3, h.size))
    hs, ds = h[sl] - h0, d[sl]
    if hs.size < 3 or not np.isfinite(ds).all():
        return float(w)
    a, b, c = np.polyfit(hs, ds, 2)
    roots = np.roots([a, b, c]) if abs(a) > 1e-12 else np.array([-c / b])
    inside = [r.real for r in roots if abs(r.imag) < 1e-9 and 0.0 <= r.real <= h1 - h0]
    return float(inside[0] / (h1 - h0)) if len(inside) == 1 else float(w)


def _miss(tid, kind, front, g, tp, shift, centre, extrap=False):
    side = _compass(g["bearing_deg"])
    note = (
        f"{kind} front passes {g['end_distance_km']:.0f} km {side} of site "
        f"(line ends there) near {format_utc(tp)}; no passage"
    )
    if extrap:
        note += " (extrapolated)"
    return {
        "track": tid,
        "front_kind": kind,
        "passage": np.nan,
        "speed_kt": np.nan,
        "extrapolated": extrap,
        "surface_offset_km": shift,
        "zone_centre_offset_km": centre,
        "passage_from": g.get("from", ""),
        "level_hpa": front.level_hpa,
        "note": note,
        "_end_km": g["end_distance_km"],
    }


# ------------------------------------------------------------ weather sequence


def _interp(series_h, values, h):
    """Linear interpolation in time; NaN outside the series or next to a NaN."""
    if not np.isfinite(h) or h < series_h[0] - 1e-9 or h > series_h[-1] + 1e-9:
        return np.nan
    k = int(np.searchsorted(series_h, h))
    if k < series_h.size and abs(series_h[k] - h) < 1e-9:
        return float(values[k])
    k = min(max(k, 1), series_h.size - 1)
    h0, h1 = series_h[k - 1], series_h[k]
    w = (h - h0) / (h1 - h0)
    v0, v1 = values[k - 1], values[k]
    return float((1 - w) * v0 + w * v1)


def _spell(series_h, rate, h, threshold, before_h, after_h):
    """Contiguous wet spell nearest to time ``h``: (start, end, total_mm, peak, peak_time)."""
    dt = np.diff(series_h)
    dt = np.concatenate([[dt[0] if dt.size else 1.0], dt])
    start_i = series_h - dt  # each rate covers (t - dt, t]
    wet = np.isfinite(rate) & (rate >= threshold)
    inwin = (series_h > h - before_h) & (start_i < h + after_h)
    cand = np.nonzero(wet & inwin)[0]
    if cand.size == 0:
        return None
    # distance of each wet step's interval from h
    dist = np.where(
        (start_i[cand] <= h) & (series_h[cand] >= h),
        0.0,
        np.minimum(abs(start_i[cand] - h), abs(series_h[cand] - h)),
    )
    k = cand[int(np.argmin(dist))]
    a = b = k
    while a - 1 >= 0 and wet[a - 1]:
        a -= 1
    while b + 1 < rate.size and wet[b + 1]:
        b += 1
    seg = slice(a, b + 1)
    total = float(np.nansum(rate[seg] * dt[seg]))
    j = a + int(np.nanargmax(rate[seg]))
    return start_i[a], series_h[b], total, float(rate[j]), series_h[j]


def _block(series_h, flag, h, lo_h, hi_h):
    """Find the block of True steps in [h - lo_h, h + hi_h] nearest to h: (first, last) or None."""
    inwin = (series_h >= h - lo_h) & (series_h <= h + hi_h)
    cand = np.nonzero(flag & inwin)[0]
    if cand.size == 0:
        return None
    k = cand[int(np.argmin(abs(series_h[cand] - h)))]
    a = b = k
    while a - 1 >= 0 and flag[a - 1] and inwin[a - 1]:
        a -= 1
    while b + 1 < flag.size and flag[b + 1] and inwin[b + 1]:
        b += 1
    return a, b


def round_or_nan(x, nd=0):
    """``x`` rounded to ``nd`` decimals (as :func:`round`); NaN when ``x`` is None or not finite."""
    return round(float(x), nd) if x is not None and np.isfinite(x) else np.nan


def _precip_type(th, spell, warm_layer_max_c, series):
    """Type of the precipitation spell, step by step in order: ``"snow then rain"``.

    At each wet step: freezing rain or ice pellets where a layer above 0 C
    aloft lies over sub-zero air at the ground (the FZRA/PL window), else
    snow where the wet-bulb 0 C level is under :data:`SNOW_WBFL_M` above the
    site, else rain (common practice, no source); "" without precipitation,
    "precipitation" where the run has no humidity to tell (thin run).
    """
    if not spell:
        return ""
    wet = (th > spell[0] - 1e-9) & (th <= spell[1] + 1e-9)
    wb = np.asarray(series["wet_bulb_freezing_level_m"].values, dtype=float) - float(
        series.attrs.get("elevation_m", 0.0)
    )
    if not np.isfinite(wb[wet]).any():
        return "precipitation"
    kinds = []
    for k in np.nonzero(wet)[0]:
        if np.isfinite(warm_layer_max_c[k]):
            kind = "freezing rain or ice pellets"
        elif np.isfinite(wb[k]) and wb[k] < SNOW_WBFL_M:
            kind = "snow"
        else:
            kind = "rain"
        if not kinds or kinds[-1] != kind:
            kinds.append(kind)
    return " then ".join(kinds)


def _wind_times(th, passage_h, window_h):
    """When to read the wind before and after a passage: ``(before_h, after_h, note)``.

    ``window_h`` either side, interpolated in time, where the run's steps are
    closer than ``window_h`` around the passage. On sparse output (steps
    farther apart, or a passage within ``window_h`` of the run's start or end)
    interpolating would mix the winds of both sides, or there is nothing to
    interpolate: the nearest model steps before and after the passage are
    taken instead, and the note says which.
    """
    hb, ha = passage_h - window_h, passage_h + window_h
    th = np.asarray(th, dtype=float)
    before = th[th < passage_h - 1e-6]
    after = th[th > passage_h + 1e-6]
    if before.size == 0 or after.size == 0:
        return hb, ha, ""
    nb, na = float(before.max()), float(after.min())
    sparse = na - nb > window_h + 1e-6  # interpolating would mix both sides
    if sparse:
        wb, wa = nb, na
    else:  # dense: window_h either side, cut to the run's steps at its start and end
        wb = hb if hb >= th[0] else nb
        wa = ha if ha <= th[-1] else na
    if (wb, wa) == (hb, ha):
        return hb, ha, ""
    return wb, wa, (f"wind before/after from {format_utc(wb)} and {format_utc(wa)} (the "
                    f"nearest model steps; {window_h:g} h either side is not in the run)"
                    if not sparse else
                    f"wind before/after from the model steps at {format_utc(wb)} and "
                    f"{format_utc(wa)} (output every {na - nb:g} h)")


def weather_sequence(
    series,
    passage_h,
    front_kind,
    speed_kt,
    *,
    window_h=3.0,
    precip_threshold_mmh=PRECIP_THRESHOLD_MMH,
    level_hpa=850.0,
):
    """Weather at a site around one passage, from its model series.

    Parameters
    ----------
    series : xarray.Dataset
        :func:`site_series` (one member).
    passage_h : float
        Passage time [hours since 1970-01-01 UTC].
    front_kind : str
        ``warm``, ``cold`` or ``quasi-stationary``.
    speed_kt : float
        Speed of the front over the site [kt] (for the rule of thumb).
    window_h : float
        "Before" and "after" are this long either side of the passage [h].
    precip_threshold_mmh : float
        Rate counted as precipitating [mm h-1].
    level_hpa : float
        Level of the theta-w and theta change [hPa].

    Returns
    -------
    dict
        Table cells (see :data:`kit.products.arrivals.CONTRACT_COLUMNS`,
        :data:`kit.products.arrivals.EXTRA_COLUMNS` and ``theta_change_k``);
        NaN or "" where a value does not apply. Wind turn is signed, positive
        clockwise (a veer in the northern hemisphere). ``wind_note`` says when
        the wind is under :data:`LIGHT_WIND_KT` (turn uncertain), else "".
    """
    th = hours_since_epoch(series["time"].values)
    hb, ha = passage_h - window_h, passage_h + window_h
    row = {}

    def at(var, h):
        if var not in series:
            return np.nan
        return _interp(th, np.asarray(series[var].values, dtype=float), h)

    # wind: interpolate the components in time, never the direction; on sparse
    # output the nearest model steps either side of the passage
    wb, wa, wind_from = _wind_times(th, passage_h, window_h)
    ub, vb = at("wind_u_ms", wb), at("wind_v_ms", wb)
    ua, va = at("wind_u_ms", wa), at("wind_v_ms", wa)
    db, da_ = float(_wind_dir(ub, vb)), float(_wind_dir(ua, va))
    sb, sa = float(np.hypot(ub, vb)), float(np.hypot(ua, va))
    turn = np.nan
    if np.isfinite(db) and np.isfinite(da_):
        turn = (da_ - db + 180.0) % 360.0 - 180.0
    row["wind_before_deg"] = (
        round_or_nan(360.0 if round(db) == 0 else db) if np.isfinite(db) else np.nan
    )
    row["wind_after_deg"] = (
        round_or_nan(360.0 if round(da_) == 0 else da_) if np.isfinite(da_) else np.nan
    )
    row["wind_turn_deg"] = round_or_nan(turn)
    # a direction in light air means little (common practice, no source)
    light = min(sb, sa) * KT_PER_MS < LIGHT_WIND_KT if np.isfinite(turn) else False
    row["wind_before_kt"] = round_or_nan(sb * KT_PER_MS)
    row["wind_after_kt"] = round_or_nan(sa * KT_PER_MS)
    # temperatures
    row["temp_change_c"] = round_or_nan(at("t2m", ha) - at("t2m", hb), 1)
    row["dewpoint_change_c"] = round_or_nan(at("td2m", ha) - at("td2m", hb), 1)
    for key, var in (("thetaw_change_k", "theta_w"), ("theta_change_k", "theta")):
        if var not in series:
            row[key] = np.nan
            continue
        at_level = series[var].sel(level=float(level_hpa), method="nearest").values
        row[key] = round_or_nan(_interp(th, at_level, ha) - _interp(th, at_level, hb), 1)
    for key, var in (
        ("freezing_level", "freezing_level_m"),
        ("wet_bulb_freezing_level", "wet_bulb_freezing_level_m"),
    ):
        row[f"{key}_before_m"] = round_or_nan(at(var, hb), -1)
        row[f"{key}_after_m"] = round_or_nan(at(var, ha), -1)
    # precipitation
    sp = None
    if "precip" in series:
        rate = np.asarray(series["precip"].values, dtype=float)
        sp = _spell(th, rate, passage_h, precip_threshold_mmh, 30.0, 18.0)
    if sp:
        row["precip_start_utc"], row["precip_end_utc"] = format_utc(sp[0]), format_utc(sp[1])
        row["precip_total_mm"], row["precip_peak_mm_h"] = (
            round_or_nan(sp[2], 1),
            round_or_nan(sp[3], 1),
        )
    else:
        row.update(
            precip_start_utc="", precip_end_utc="", precip_total_mm=np.nan, precip_peak_mm_h=np.nan
        )
    # cloud base [ft above site], as the band the column resolves (_cloud_band)
    row["cloud_base_before_ft_agl"] = round_or_nan(at("cloud_base_low_m", hb) * FT_PER_M, -2)
    # the lowest band from 12 h before to window_h after: never finer than the
    # column resolves (kit.science.passages._cloud_band), rounded to 100 ft
    lo_m = np.asarray(series["cloud_base_low_m"].values, dtype=float)
    hi_m = np.asarray(series["cloud_base_high_m"].values, dtype=float)
    win = (th >= passage_h - 12.0) & (th <= passage_h + window_h) & np.isfinite(hi_m)
    if win.any():
        idx = np.nonzero(win)[0]
        k = idx[int(np.lexsort((lo_m[idx], hi_m[idx]))[0])]
        row["cloud_base_min_ft_agl"] = round_or_nan(lo_m[k] * FT_PER_M, -2)
        row["cloud_base_low_ft_agl"] = round_or_nan(lo_m[k] * FT_PER_M, -2)
        row["cloud_base_high_ft_agl"] = round_or_nan(hi_m[k] * FT_PER_M, -2)
        row["cloud_base_min_utc"] = format_utc(series["time"].values[k])
    else:
        row["cloud_base_min_ft_agl"], row["cloud_base_min_utc"] = np.nan, ""
        row["cloud_base_low_ft_agl"] = row["cloud_base_high_ft_agl"] = np.nan
    # freezing rain / ice pellets: warm layer aloft over sub-zero ground air
    wl = np.asarray(series["warm_layer_max_c"].values, dtype=float)
    lo, hi = (24.0, window_h) if front_kind in ("warm", "quasi-stationary") else (window_h, 12.0)
    blk = _block(th, np.isfinite(wl), passage_h, lo, hi)
    row.update(fzra_start_utc="", fzra_end_utc="", fzra_warm_layer_max_c=np.nan)
    if blk:
        a, b = blk
        row["fzra_start_utc"] = format_utc(series["time"].values[a])
        row["fzra_end_utc"] = format_utc(series["time"].values[b])
        row["fzra_warm_layer_max_c"] = round_or_nan(np.nanmax(wl[a : b + 1]), 1)
    # snow risk while precipitating
    row["snow_risk"] = ""
    if sp:
        wet = (th > sp[0]) & (th <= sp[1] + 1e-9)
        wb = np.asarray(series["wet_bulb_freezing_level_m"].values, dtype=float) - float(
            series.attrs.get("elevation_m", 0.0)
        )
        low = wet & np.isfinite(wb) & (wb < SNOW_WBFL_M)
        row["snow_risk"] = (
            f"yes from {format_utc(series['time'].values[np.nonzero(low)[0][0]])}"
            if low.any()
            else "no"
        )
    row["precip_type"] = _precip_type(th, sp, wl, series)
    notes = [wind_from] if wind_from else []
    if light:
        notes.append(f"wind under {LIGHT_WIND_KT:g} kt: turn uncertain")
    row["wind_note"] = "; ".join(notes)
    # rule of thumb (common practice, no source)
    row.update(rule_rain_what="", rule_rain_from_utc="", rule_rain_to_utc="")
    if np.isfinite(speed_kt) and speed_kt >= 5.0:
        if front_kind == "warm":
            row["rule_rain_what"] = "rain onset, 200-300 nm ahead (rule of thumb)"
            row["rule_rain_from_utc"] = format_utc(passage_h - WARM_RAIN_AHEAD_NM[1] / speed_kt)
            row["rule_rain_to_utc"] = format_utc(passage_h - WARM_RAIN_AHEAD_NM[0] / speed_kt)
        elif front_kind == "cold":
            row["rule_rain_what"] = "heaviest rain, 50-100 nm behind (rule of thumb)"
            row["rule_rain_from_utc"] = format_utc(passage_h + COLD_HEAVY_BEHIND_NM[0] / speed_kt)
            row["rule_rain_to_utc"] = format_utc(passage_h + COLD_HEAVY_BEHIND_NM[1] / speed_kt)
    return row


# ------------------------------------------------------------------ missing data


def missing_steps(series, level):
    """Count the steps where the model has no data at the site: (missing, total).

    A step is missing when the site's temperature or dew point (where the run
    has humidity) on the fronts' ``level`` [hPa] is NaN, or its whole
    temperature column, or its 2-m temperature (where the run has one).
    """
    t = np.asarray(series["t"].transpose("time", ...).values, dtype=float)
    bad = ~np.isfinite(t.reshape(t.shape[0], -1)).any(axis=1)
    for var in [v for v in ("t", "td") if v in series]:
        at_level = series[var].sel(level=float(level), method="nearest")
        bad |= ~np.isfinite(np.asarray(at_level.transpose("time", ...).values, dtype=float))
    if "t2m" in series:
        bad |= ~np.isfinite(np.asarray(series["t2m"].values, dtype=float).reshape(t.shape[0]))
    return int(bad.sum()), int(bad.size)
