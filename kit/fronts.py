"""Objective fronts: thermal front parameter, locating line, masks, front type.

The method is Hewson (1998) on the thermal front parameter of Renard & Clarke
(1965); see docs in DEVELOPERS.md and the references page.
"""

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Front"]


@dataclass
class Front:
    """One front line at one valid time on one level.

    Vertex arrays all have the same length ``n``; east/north components are in
    the local tangent plane.

    Attributes
    ----------
    lon, lat : ndarray (n,)
        Vertices [degrees]; longitude in -180..180 unless the grid is contiguous
        across the dateline, then it follows the grid (wrap it when exporting).
    kind : str
        ``"warm"``, ``"cold"`` or ``"quasi-stationary"``.
    valid_time : numpy.datetime64
        Valid time (UTC).
    level_hpa : float
        Pressure level the front was located on [hPa].
    tfp : ndarray (n,)
        Thermal front parameter at each vertex [K m-2].
    grad : ndarray (n,)
        Magnitude of the smoothed thermal gradient at each vertex [K m-1].
    normal_east, normal_north : ndarray (n,)
        Unit normal pointing to the cold side [1].
    vn : ndarray (n,)
        Wind component along ``normal`` at the steering level [m s-1]; positive
        means the wind blows toward the cold side (warm advection).
    speed_ms : float
        Length-weighted mean of ``vn`` [m s-1]; sign as ``vn``.
    length_km : float
        Great-circle length of the line [km].
    run : str or None
        Run label (``ds.attrs["run"]``).
    member : int or None
        Ensemble member where the run has several.
    track : int or None
        Track id shared over lead times (set by :mod:`kit.motion`).
    props : dict
        Further per-front properties (speeds three ways, slopes...), exported
        into GeoJSON as they are.
    """

    lon: np.ndarray
    lat: np.ndarray
    kind: str
    valid_time: np.datetime64
    level_hpa: float
    tfp: np.ndarray
    grad: np.ndarray
    normal_east: np.ndarray
    normal_north: np.ndarray
    vn: np.ndarray
    speed_ms: float
    length_km: float
    run: str | None = None
    member: int | None = None
    track: int | None = None
    props: dict = field(default_factory=dict)
