"""Site lists: read a forecaster's site CSV and place the sites on a model grid.

A site file is CSV with the header ``name,lat,lon`` and optionally
``elevation_m`` (DESIGN.md, "Sites CSV"). Latitude and longitude are in
degrees (north and east positive), elevation in metres above mean sea level.

Placing a site on a grid gives its *fractional grid position* (row and column
as real numbers), which the site time series (:func:`kit.science.passages.site_series`)
use for bilinear interpolation. It works on regular latitude/longitude grids
(including grids contiguous across the dateline and global grids that wrap)
and on projected grids with 2-D latitude/longitude, without needing the
projection itself.
"""

import csv
import io
import math
from pathlib import Path

import numpy as np
import pandas as pd

from kit.errors import InputError
from kit.science.geo import PointSampler, grid_extent_text

__all__ = [
    "read_sites",
    "check_sites_on_grid",
    "grid_position",
    "grid_positions",
    "grid_extent_text",
    "SITE_COLUMNS",
]

#: columns of the DataFrame :func:`read_sites` returns
SITE_COLUMNS = ["name", "lat", "lon", "elevation_m"]


def _number(text, what, where):
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise InputError(
            f"{where}: {what} '{text}' is not a number; expected degrees or metres"
        ) from None
    if not math.isfinite(value):
        raise InputError(f"{where}: {what} '{text}' is not a finite number")
    return value


def read_sites(path):
    r"""Read a site list CSV (``name,lat,lon[,elevation_m]``).

    Parameters
    ----------
    path : str or Path
        CSV file with a header row. Extra columns are kept as they are.

    Returns
    -------
    pandas.DataFrame
        Columns ``name`` (str), ``lat`` [degrees north, -90..90], ``lon``
        [degrees east, -180..180 after wrapping 180..360], ``elevation_m``
        [m above mean sea level; NaN where not given], in file order.

    Raises
    ------
    kit.errors.InputError
        Missing file or column, empty list, a blank or duplicate name, a
        coordinate that is not a number or out of range; the message names the
        file, the row and the site.

    Examples
    --------
    >>> import tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "s.csv")
    >>> _ = open(p, "w").write("name,lat,lon\nBrackenholt,52.1,-3.4\n")
    >>> read_sites(p)[["name", "lat", "lon"]].values.tolist()
    [['Brackenholt', 52.1, -3.4]]
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(
            f"{path}: site file not found; expected a CSV file name,lat,lon[,elevation_m]"
        )
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the site file ({exc}); expected UTF-8 CSV") from None
    reader = csv.reader(io.StringIO(text))
    rows = [r for r in reader if any(cell.strip() for cell in r)]
    if not rows:
        raise InputError(
            f"{path}: site file is empty; expected a header name,lat,lon[,elevation_m]"
        )
    header = [h.strip().lower() for h in rows[0]]
    missing = [c for c in ("name", "lat", "lon") if c not in header]
    if missing:
        raise InputError(
            f"{path}: header has no column {', '.join(missing)} (found {','.join(header)}); "
            "expected name,lat,lon[,elevation_m]"
        )
    if len(set(header)) != len(header):
        raise InputError(f"{path}: header repeats a column ({','.join(header)})")
    if len(rows) == 1:
        raise InputError(f"{path}: site file has a header but no sites")
    records, seen = [], {}
    for lineno, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            raise InputError(
                f"{path} row {lineno}: {len(row)} fields where the header has {len(header)}"
            )
        rec = dict(zip(header, (c.strip() for c in row), strict=True))
        name = rec["name"]
        where = f"{path} row {lineno} (site '{name}')"
        if not name:
            raise InputError(f"{path} row {lineno}: site name is blank; expected a name")
        if name.lower() in seen:
            raise InputError(
                f"{where}: duplicate site name (first on row {seen[name.lower()]}); "
                "expected each name once"
            )
        seen[name.lower()] = lineno
        lat = _number(rec["lat"], "latitude", where)
        lon = _number(rec["lon"], "longitude", where)
        if not -90.0 <= lat <= 90.0:
            raise InputError(f"{where}: latitude {lat:g} out of range; expected -90..90 degrees")
        if not -180.0 <= lon <= 360.0:
            raise InputError(f"{where}: longitude {lon:g} out of range; expected -180..360 degrees")
        if lon > 180.0:
            lon -= 360.0
        elev = np.nan
        if rec.get("elevation_m", ""):
            elev = _number(rec["elevation_m"], "elevation_m", where)
            if not -500.0 <= elev <= 9000.0:
                raise InputError(
                    f"{where}: elevation_m {elev:g} out of range; "
                    "expected metres above sea level (-500..9000)"
                )
        rec.update(name=name, lat=lat, lon=lon, elevation_m=elev)
        records.append(rec)
    frame = pd.DataFrame.from_records(records)
    extra = [c for c in frame.columns if c not in SITE_COLUMNS]
    return frame[SITE_COLUMNS + extra].reset_index(drop=True)


def _grid_kind(ds):
    if "lat" in ds.dims and "lon" in ds.dims:
        return "latlon"
    if "y" in ds.dims and "x" in ds.dims and "lat" in ds.coords and "lon" in ds.coords:
        return "projected"
    raise InputError(
        "dataset: no lat/lon or y/x grid dimensions; expected the canonical dataset of kit.open_run"
    )


def grid_position(ds, lat, lon):
    """Fractional grid position of a point, for bilinear interpolation.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset (regular ``lat``/``lon`` or projected ``y``/``x`` with
        2-D ``lat``/``lon``).
    lat, lon : float
        Point [degrees]; any longitude convention.

    Returns
    -------
    tuple of float
        ``(row, col)``: fractional index along the Y and X dimensions, NaN when
        the point lies outside the grid. On a global latitude/longitude grid
        the column may lie in ``(n - 1, n)``: the cell that wraps to column 0.
    """
    return tuple(float(v) for v in grid_positions(ds, [lat], [lon])[0])


def grid_positions(ds, lats, lons):
    """Fractional grid positions of many points (see :func:`grid_position`).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset.
    lats, lons : array_like (n,)
        Points [degrees].

    Returns
    -------
    ndarray (n, 2)
        ``(row, col)`` per point, NaN outside the grid.
    """
    lats = np.atleast_1d(np.asarray(lats, dtype=float))
    lons = np.atleast_1d(np.asarray(lons, dtype=float))
    kind = _grid_kind(ds)
    if kind == "projected" and np.ndim(ds["lat"]) != 2:
        raise InputError(
            "dataset: projected grid without 2-D lat/lon coordinates; expected lat(y, x), lon(y, x)"
        )
    j, i = PointSampler(ds).index(lons, lats)
    return np.column_stack([j, i])


def check_sites_on_grid(sites, ds):
    """Check every site lies on the model grid; return the sites with grid positions.

    Parameters
    ----------
    sites : pandas.DataFrame
        As returned by :func:`read_sites`.
    ds : xarray.Dataset
        Canonical dataset of one run.

    Returns
    -------
    pandas.DataFrame
        Copy of ``sites`` with columns ``grid_row``, ``grid_col`` (fractional
        indices along Y and X [1]).

    Raises
    ------
    kit.errors.InputError
        A site lies outside the grid; the message names the site, its position
        and the grid's extent.
    """
    for col in ("name", "lat", "lon"):
        if col not in getattr(sites, "columns", ()):
            raise InputError(
                f"sites: no column '{col}'; expected a table from kit.io.sites.read_sites"
            )
    out = sites.copy()
    rows, cols = [], []
    run = ds.attrs.get("run", "the run")
    for _, site in out.iterrows():
        r, c = grid_position(ds, site["lat"], site["lon"])
        if not (np.isfinite(r) and np.isfinite(c)):
            raise InputError(
                f"site '{site['name']}' ({site['lat']:.3f}, {site['lon']:.3f}) "
                "lies off the grid of "
                f"{run} ({grid_extent_text(ds)}); expected a site inside the model domain"
            )
        rows.append(r)
        cols.append(c)
    out["grid_row"] = rows
    out["grid_col"] = cols
    return out
