"""Where a pressure level can carry fronts: below ground, tropics, domain edge.

Model output fills pressure levels below the model surface with extrapolated
values (NCEP grids) or leaves them missing (others); a front found there is
an artefact of the extrapolation. Fronts in the deep tropics are moisture
boundaries rather than baroclinic zones (Thomas & Schultz 2019), and lines
along a regional domain's edge are made by the one-sided derivatives there.
This module gives the masks of those points, for one valid time, and the
shares of an area or a line that they cover.

Computation only: no graphics.

References
----------
Thomas, C. M., and D. M. Schultz, 2019: Bull. Amer. Meteor. Soc., 100.
"""

import math

import numpy as np

__all__ = [
    "TROPICS_LAT",
    "grid_lat",
    "grid_lon",
    "below_ground",
    "tropics_mask",
    "edge_mask",
    "dilate",
    "cell_area_m2",
]

#: latitude of the tropics of Cancer and Capricorn [degrees] (for shares reported)
TROPICS_LAT = 23.44


def grid_lat(grid):
    """Latitude of every grid point [degrees], shape (Y, X)."""
    lat = np.asarray(grid.lat, float)
    if lat.ndim == 1:
        return np.broadcast_to(lat[:, None], tuple(grid.shape))
    return lat


def grid_lon(grid):
    """Longitude of every grid point [degrees], shape (Y, X)."""
    lon = np.asarray(grid.lon, float)
    if lon.ndim == 1:
        return np.broadcast_to(lon[None, :], tuple(grid.shape))
    return lon


def below_ground(ds_t, level_hpa, *, margin_hpa=0.0, margin_m=0.0):
    """Points where a pressure level lies below the model surface (plus a margin).

    Parameters
    ----------
    ds_t : xarray.Dataset
        Canonical Dataset at one valid time (and member); uses ``ps``
        [Pa] when present, else ``zsfc`` [m] with ``z`` on the level.
    level_hpa : float
        Pressure level [hPa].
    margin_hpa : float
        The level counts as below ground where the surface pressure is below
        ``level + margin`` [hPa].
    margin_m : float
        With only the surface height: where the level's height is below the
        surface height plus this margin [m].

    Returns
    -------
    mask : ndarray of bool (Y, X) or None
        True below ground; None when the run carries neither field.
    source : str
        ``"surface pressure"``, ``"surface height"`` or ``"none"``.
    """
    if "ps" in ds_t:
        ps = np.asarray(ds_t["ps"].values, float).reshape(ds_t["ps"].shape[-2:])
        with np.errstate(invalid="ignore"):
            return ps / 100.0 < float(level_hpa) + float(margin_hpa), "surface pressure"
    if "zsfc" in ds_t and "z" in ds_t:
        zs = np.asarray(ds_t["zsfc"].values, float)
        zs = zs.reshape(zs.shape[-2:]) if zs.ndim > 2 else zs
        zl = ds_t["z"].sel(level=float(level_hpa), method="nearest")
        zl = np.asarray(zl.values, float).reshape(zl.shape[-2:])
        with np.errstate(invalid="ignore"):
            return zl < zs + float(margin_m), "surface height"
    return None, "none"


def tropics_mask(grid, lat_limit):
    """Points equatorward of ``lat_limit`` [degrees]; none when the limit is 0."""
    if not lat_limit or lat_limit <= 0:
        return np.zeros(tuple(grid.shape), dtype=bool)
    return np.abs(grid_lat(grid)) < float(lat_limit)


def edge_mask(grid, n_cells):
    """Points within ``n_cells`` rows/columns of a grid edge (not across a periodic seam)."""
    m = np.zeros(tuple(grid.shape), dtype=bool)
    n = int(math.ceil(max(float(n_cells), 0.0)))
    if n == 0:
        return m
    m[:n, :] = True
    m[-n:, :] = True
    if not grid.periodic:
        m[:, :n] = True
        m[:, -n:] = True
    return m


def dilate(mask, n_cells, periodic=False):
    """Grow a boolean mask by ``n_cells`` grid points in each direction (a square)."""
    out = mask.copy()
    n = int(math.ceil(max(float(n_cells), 0.0)))
    for _ in range(n):  # separable: rows, then columns, gives the square
        grown = out.copy()
        grown[1:, :] |= out[:-1, :]
        grown[:-1, :] |= out[1:, :]
        out = grown.copy()
        if periodic:
            out |= np.roll(grown, 1, axis=1) | np.roll(grown, -1, axis=1)
        else:
            out[:, 1:] |= grown[:, :-1]
            out[:, :-1] |= grown[:, 1:]
    return out


def cell_area_m2(grid):
    """Area each grid point stands for [m2], shape (Y, X).

    From the grid spacing of :mod:`kit.science.geo` (dx, dy in metres);
    on a regular grid this is R^2 cos(lat) dlat dlon.
    """
    dx = np.abs(np.asarray(grid.dx, float))
    dy = np.abs(np.asarray(grid.dy, float))
    area = np.broadcast_to(dx * dy, tuple(grid.shape)).astype(float)
    # a spacing that is not finite (degenerate rows) stands for no area
    return np.where(np.isfinite(area), area, 0.0)
