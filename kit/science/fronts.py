"""Objective fronts: thermal front parameter, locating line, masks, front type.

The method is Hewson (1998) on the thermal front parameter of Renard & Clarke
(1965), as used for front climatologies by Berry, Reeder & Jakob (2011):

1. take a thermal field tau on one pressure level (wet-bulb potential
   temperature by default; potential temperature as the alternative that
   marks moisture boundaries less, Thomas & Schultz 2019);
2. smooth it with a Gaussian whose width is set in kilometres
   (:attr:`FrontSettings.smoothing_km`, never less than a number of grid
   lengths), so grids of different resolution give comparable fronts;
3. thermal front parameter ``TFP = -grad|grad tau| . grad tau / |grad tau|``
   [K m-2], largest on the warm edge of a frontal zone;
4. locating function ``LF = grad TFP . grad tau / |grad tau|`` [K m-3]; the
   front is its zero line where the two masks of Hewson (1998) hold:
   ``TFP > K1`` and ``|grad tau| + X / sqrt(2) |grad |grad tau|| > K2``
   (X the grid length);
5. the zero line is traced with contourpy on the masked locating function, so
   it stops at mask edges, at missing data and at points no front may use
   (below ground, tropics, domain edge: :mod:`kit.science.domain`); pieces of
   one line are joined (:func:`join_lines`);
6. each vertex gets TFP, |grad tau|, the unit normal toward the cold side and
   the wind component along it at the steering level (850 hPa); a vertex is
   warm where the wind blows toward the cold side faster than
   :attr:`FrontSettings.qs_speed_ms`, cold where it blows toward the warm side
   faster than that, and quasi-stationary in between; a line is split where
   its type changes over at least :attr:`FrontSettings.min_piece_km`;
7. pieces shorter than :func:`min_length_km` are dropped, and so are those
   without a frontal flow signature along
   :attr:`FrontSettings.confirm_min_share` of their length
   (:mod:`kit.science.signature`).

Speed: inside :func:`find_fronts` the field pipeline runs in float32 on the
anomaly from a reference value (rounding about 1e-6 K, far below the third
differences the locating function takes) in work arrays reused from one
valid time to the next; ``python -m benchmarks`` prints the figures.

Computation only: this module never imports graphics libraries.

References
----------
.. [RenardClarke1965] Renard, R. J., and L. C. Clarke, 1965: Experiments in
   numerical objective frontal analysis. Mon. Wea. Rev., 93, 547-556.
.. [Hewson1998] Hewson, T. D., 1998: Objective fronts. Meteorol. Appl., 5,
   37-65.
.. [Berry2011] Berry, G., M. J. Reeder, and C. Jakob, 2011: A global
   climatology of atmospheric fronts. Geophys. Res. Lett., 38.
.. [SansomCatto2024] Sansom, P. G., and J. L. Catto, 2024. Geosci. Model
   Dev., 17, 6137.
.. [ThomasSchultz2019] Thomas, C. M., and D. M. Schultz, 2019. Bull. Amer.
   Meteor. Soc., 100.

(Titles of the 1965 and 2011 papers from memory; the threshold values of
[Hewson1998] and the 1.5 m/s of [Berry2011] are from memory too, as said
where they are used.)
"""

import math
import threading
from dataclasses import dataclass

import contourpy
import numpy as np
import pandas as pd
import xarray as xr

from kit.errors import InputError
from kit.model import Front, FrontDetection
from kit.science import geo, thermo
from kit.science.domain import below_ground, cell_area_m2, dilate, edge_mask, tropics_mask
from kit.science.signature import FlowFields, signature_at
from kit.timefmt import iso_seconds

__all__ = [
    "FrontSettings",
    "KINDS",
    "effective_smoothing_km",
    "default_thresholds",
    "thermal_front_parameter",
    "locating_function",
    "front_masks",
    "front_fields",
    "find_fronts",
    "level_index",
]

#: front kinds, as in the public contract
KINDS = ("warm", "cold", "quasi-stationary")

# Hewson (1998) thresholds for 850 hPa theta-w, recalled from memory (not
# checked against the paper): K1 ~ 0.33 K (100 km)-2, K2 ~ 1.49 K (100 km)-1.
_K1_REF = 0.33 / (1e5) ** 2  # [K m-2]
_K2_REF = 1.49 / 1e5  # [K m-1]
# Smoothing length at which the recalled values are taken to apply [m]: an
# assumption of this kit (the paper's own smoothing is not recalled).
_REF_SMOOTHING_M = 100e3


@dataclass
class FrontSettings:
    """Choices of the objective front analysis.

    Attributes
    ----------
    field : {"theta_w", "theta"}
        Thermal field tau: wet-bulb potential temperature (default, as
        [Berry2011]) or potential temperature (marks moisture boundaries less
        in the subtropics, [ThomasSchultz2019]).
    smoothing_km : float
        Gaussian smoothing scale (standard deviation) [km], default 50 km.
        The scale used is ``max(smoothing_km, smoothing_grid_lengths * X)``
        with X the grid length (:func:`effective_smoothing_km`): 50 km on
        grids of 0.5 degree and finer, about one grid length on coarser ones,
        so the same front comes out at the same place on different grids.
        Smoothing moves the located line toward the warm side: for a tanh
        zone of half-width 65 km by about 28 km at 50 km and 71 km at 100 km
        (a one-dimensional check with scipy in tests/test_fronts.py), which
        is why the default is not larger.
    smoothing_grid_lengths : float
        Lower bound of the smoothing scale in grid lengths [1], default 1.
    k1 : float or None
        TFP mask threshold [K m-2]; None: :func:`default_thresholds`.
    k2 : float or None
        Gradient mask threshold [K m-1]; None: :func:`default_thresholds`.
    k1_quantile, k2_quantile : float or None
        Give the thresholds instead as quantiles (0..1) of the TFP and of the
        gradient-mask quantity over the analysed fields (all times and points,
        area-weighted), as [SansomCatto2024] propose so that grids of
        different resolution compare. Overrides ``k1``/``k2``.
    min_length_km, min_length_grid_lengths : float
        Pieces shorter than ``max(min_length_km, min_length_grid_lengths * X)``
        are dropped [km], [1], default max(500 km, 3 grid lengths), applied to
        the final pieces after the split by type (published climatologies keep
        lines of several grid points, from memory; the numbers are this kit's).
    min_piece_km : float or None
        A line is split where its type changes only if each piece is at least
        this long [km]; None (default): the minimum length, so a type split
        never makes a piece that would then be dropped.
    join_gap_grid_lengths : float
        Line ends closer than this many grid lengths [1], default 2, whose
        directions agree within 60 degrees are joined into one line (a mask
        hole or the grid seam must not cut one front into pieces).
    tropics_lat : float
        No fronts equatorward of this latitude [degrees], default 25; 0 keeps
        them (then consider ``field="theta"`` there, [ThomasSchultz2019]).
    edge_buffer_grid_lengths : float
        No front within this many grid lengths of a regional domain's edge (or
        a pole row) [1], default 3: derivatives there are one-sided.
    below_ground_margin_hpa, below_ground_margin_m : float
        The level is missing where the surface pressure is below the level
        plus this margin [hPa], default 25, or, with only the surface height,
        where the level's height is below the surface plus this margin [m],
        default 250 (common practice, no source: the lowest 25 hPa above
        ground are boundary layer, and extrapolated values sit under them).
    confirm_min_share : float
        Keep a line only where at least this share of its length [0..1],
        default 0.5, has a frontal flow signature at the steering level
        (:mod:`kit.science.signature`): cyclonic relative vorticity or
        cyclonic along-front shear, and a pressure trough. 0 keeps every line.
    published_max_smoothing_km : float
        The published thresholds are used up to this effective smoothing [km],
        default 150; coarser grids (more smoothing) use the quantiles
        ``DEFAULT_K1_QUANTILE``/``DEFAULT_K2_QUANTILE`` instead (never a
        scaled published value).
    qs_speed_ms : float
        Quasi-stationary below this front-normal wind speed [m s-1], default
        1.5 ([Berry2011], the number from memory).
    steering_level_hpa : float
        Level of the wind that moves the front [hPa], default 850.
    """

    field: str = "theta_w"
    smoothing_km: float = 50.0
    smoothing_grid_lengths: float = 1.0
    k1: float | None = None
    k2: float | None = None
    k1_quantile: float | None = None
    k2_quantile: float | None = None
    min_length_km: float = 500.0
    min_length_grid_lengths: float = 3.0
    min_piece_km: float | None = None
    join_gap_grid_lengths: float = 2.0
    tropics_lat: float = 25.0
    edge_buffer_grid_lengths: float = 3.0
    below_ground_margin_hpa: float = 25.0
    below_ground_margin_m: float = 250.0
    confirm_min_share: float = 0.5
    published_max_smoothing_km: float = 150.0
    qs_speed_ms: float = 1.5
    steering_level_hpa: float = 850.0

    def __post_init__(self):
        if self.field not in ("theta_w", "theta"):
            raise InputError(f"FrontSettings.field={self.field!r}; expected 'theta_w' or 'theta'")
        for name in (
            "smoothing_km",
            "smoothing_grid_lengths",
            "min_length_km",
            "min_length_grid_lengths",
            "join_gap_grid_lengths",
            "tropics_lat",
            "edge_buffer_grid_lengths",
            "below_ground_margin_hpa",
            "below_ground_margin_m",
            "confirm_min_share",
            "published_max_smoothing_km",
            "qs_speed_ms",
            "steering_level_hpa",
        ):
            value = getattr(self, name)
            try:
                value = float(value)
            except (TypeError, ValueError):
                raise InputError(f"FrontSettings.{name}={value!r}; expected a number") from None
            if not math.isfinite(value) or value < 0:
                raise InputError(f"FrontSettings.{name}={value}; expected a finite number >= 0")
            setattr(self, name, value)
        for name in ("k1", "k2", "k1_quantile", "k2_quantile", "min_piece_km"):
            value = getattr(self, name)
            if value is None:
                continue
            try:
                value = float(value)
            except (TypeError, ValueError):
                raise InputError(
                    f"FrontSettings.{name}={value!r}; expected a number or None"
                ) from None
            setattr(self, name, value)
        for name in ("k1", "k2"):
            value = getattr(self, name)
            if value is not None and (not np.isfinite(value) or value < 0):
                raise InputError(f"FrontSettings.{name}={value}; expected a threshold >= 0 or None")
        if self.min_piece_km is not None and not (
            math.isfinite(self.min_piece_km) and self.min_piece_km >= 0
        ):
            raise InputError(
                f"FrontSettings.min_piece_km={self.min_piece_km}; expected a length >= 0 or None"
            )
        if self.confirm_min_share > 1.0:
            raise InputError(
                f"FrontSettings.confirm_min_share={self.confirm_min_share}; expected a share 0..1"
            )
        if self.tropics_lat >= 90.0:
            raise InputError(
                f"FrontSettings.tropics_lat={self.tropics_lat}; expected a latitude below 90"
            )
        for name in ("k1_quantile", "k2_quantile"):
            value = getattr(self, name)
            if value is not None and not 0.0 <= float(value) < 1.0:
                raise InputError(f"FrontSettings.{name}={value}; expected a quantile in [0, 1)")


# --------------------------------------------------------------------------- thresholds
def effective_smoothing_km(ds, settings=None):
    """Smoothing scale used on a grid [km]: max(smoothing_km, smoothing_grid_lengths * X).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical Dataset (its grid length X, :func:`kit.science.geo.grid_length_km`).
    settings : FrontSettings, optional

    Returns
    -------
    float
        Gaussian standard deviation [km].
    """
    s = settings or FrontSettings()
    return max(s.smoothing_km, s.smoothing_grid_lengths * geo.grid_length_km(ds))


def default_thresholds(smoothing_km=None):
    r"""Return the published mask thresholds K1, K2 (never scaled).

    Parameters
    ----------
    smoothing_km : float, optional
        Accepted for the record only: the published values are returned as
        they are at any smoothing. Whether they apply is decided by
        :func:`threshold_rule`.

    Returns
    -------
    k1 : float
        [K m-2]
    k2 : float
        [K m-1]

    Notes
    -----
    850 hPa theta-w values recalled (from memory) from [Hewson1998]:
    K1 = 0.33 K (100 km)-2, K2 = 1.49 K (100 km)-1, taken to hold at a
    smoothing of about 100 km (an assumption). The first round of this kit
    divided them by (s/100 km)^2 and s/100 km for larger smoothing s; on a
    2.5-degree grid that passed about 15 % of the globe as frontal, so it was
    dropped: beyond ``published_max_smoothing_km`` quantiles are used instead.
    """
    return _K1_REF, _K2_REF


#: default quantiles (area-weighted, over extratropical above-ground points of
#: every time and member analysed) for grids smoothed beyond the published
#: setting: calibrated so that on a real 81-km regional analysis, where the
#: published values apply, the quantiles and the published values mark about
#: the same share of the domain (tests/real_data; regression, not truth):
#: measured there, TFP > K1 on 19.7 % and the K2 quantity > K2 on 28.1 % of the
#: area-weighted extratropical above-ground points inside the edge buffer
DEFAULT_K1_QUANTILE = 0.80
DEFAULT_K2_QUANTILE = 0.72


def threshold_rule(smoothing_km, settings=None):
    """How the thresholds are set at an effective smoothing scale.

    Returns
    -------
    rule : {"given", "published", "quantiles"}
    k1, k2 : float or None
        Thresholds [K m-2], [K m-1] where known without the data (given or
        published); None where a quantile is to be taken.
    q1, q2 : float or None
        Quantiles to take, where any.
    """
    s = settings or FrontSettings()
    k1p, k2p = default_thresholds()
    # a threshold given as a number, else the published one
    k1 = k1p if s.k1 is None else s.k1
    k2 = k2p if s.k2 is None else s.k2
    q1, q2 = s.k1_quantile, s.k2_quantile
    if q1 is None and q2 is None:
        if s.k1 is not None or s.k2 is not None:
            return "given", k1, k2, None, None
        if float(smoothing_km) <= s.published_max_smoothing_km:
            return "published", k1, k2, None, None
        q1, q2 = DEFAULT_K1_QUANTILE, DEFAULT_K2_QUANTILE
    # a threshold taken as a quantile is not known before the data
    return "quantiles", (None if q1 is not None else k1), (None if q2 is not None else k2), q1, q2


def min_length_km(ds, settings=None):
    """Shortest front piece kept on a grid [km]: max(min_length_km, n * X)."""
    s = settings or FrontSettings()
    return max(s.min_length_km, s.min_length_grid_lengths * geo.grid_length_km(ds))


# --------------------------------------------------------------------------- fields
_N_WORK = 11  # work arrays of the field pipeline
_WORK_DTYPE = np.float32  # precision of the field pipeline inside find_fronts


def _tau_fields(tau, grid, ws=None):
    """Gradient, TFP, locating function and the K2 quantity of a (smoothed) field.

    ``ws`` is an optional list of work arrays shaped and typed like ``tau``
    (reused between valid times, so large grids do not allocate anew).
    """
    if ws is None:
        ws = [np.empty(tau.shape, dtype=tau.dtype) for _ in range(_N_WORK)]
    gx, gy, mag, mx, my, ux, uy, tfp, loc, k2q, tmp = ws[:_N_WORK]
    geo.gradient_np(tau, grid, out=(gx, gy))
    np.multiply(gx, gx, out=mag)  # |grad tau| (sqrt of squares: faster than hypot)
    np.multiply(gy, gy, out=tmp)
    mag += tmp
    np.sqrt(mag, out=mag)
    geo.gradient_np(mag, grid, out=(mx, my))
    np.multiply(mx, mx, out=k2q)
    np.multiply(my, my, out=tmp)
    k2q += tmp
    np.sqrt(k2q, out=k2q)
    k2q *= grid.length_m / math.sqrt(2.0)
    k2q += mag
    with np.errstate(invalid="ignore", divide="ignore"):
        np.divide(gx, mag, out=ux)
        np.divide(gy, mag, out=uy)
    np.multiply(mx, ux, out=tfp)
    np.multiply(my, uy, out=tmp)
    tfp += tmp
    np.negative(tfp, out=tfp)
    geo.gradient_np(tfp, grid, out=(mx, my))  # mx, my now hold grad TFP
    np.multiply(mx, ux, out=loc)
    np.multiply(my, uy, out=tmp)
    loc += tmp
    return {
        "gx": gx,
        "gy": gy,
        "grad": mag,
        "tfp": tfp,
        "loc": loc,
        "k2q": k2q,
        "ux": ux,
        "uy": uy,
        "tmp": tmp,
    }


def _as_numpy_with_grid(tau, ds, what):
    grid = geo.grid_of(ds)
    if isinstance(tau, xr.DataArray):
        arr = np.asarray(tau.values, dtype=np.float64)
    else:
        arr = np.asarray(tau, dtype=np.float64)
    if arr.ndim < 2 or arr.shape[-2:] != tuple(grid.shape):
        raise InputError(
            f"{what}: field of shape {arr.shape} does not end in the grid shape "
            f"{tuple(grid.shape)}; expected (..., Y, X)"
        )
    return arr, grid


def _rewrap(template, arr, name, units):
    if isinstance(template, xr.DataArray):
        out = template.copy(data=arr)
        out.name = name
        out.attrs = {"units": units}
        return out
    return arr


def front_fields(tau, ds):
    """Every field of the method for a (smoothed) thermal field.

    Parameters
    ----------
    tau : ndarray or xarray.DataArray (..., Y, X)
        Smoothed thermal field [K].
    ds : xarray.Dataset
        Canonical Dataset carrying the grid.

    Returns
    -------
    dict of ndarray
        ``gx``, ``gy`` (east/north gradient [K m-1]), ``grad`` (|grad tau|
        [K m-1]), ``tfp`` [K m-2], ``loc`` (locating function [K m-3]) and
        ``k2q`` (the quantity compared with K2 [K m-1]).
    """
    arr, grid = _as_numpy_with_grid(tau, ds, "front_fields")
    f = _tau_fields(arr, grid)
    return {k: f[k] for k in ("gx", "gy", "grad", "tfp", "loc", "k2q")}


def thermal_front_parameter(tau, ds):
    r"""Thermal front parameter of a (smoothed) thermal field.

    Parameters
    ----------
    tau : ndarray or xarray.DataArray (..., Y, X)
        Thermal field [K], usually smoothed theta-w on one level.
    ds : xarray.Dataset
        Canonical Dataset carrying the grid.

    Returns
    -------
    same kind as ``tau``
        TFP [K m-2]; positive on the warm edge of a frontal zone.

    Notes
    -----
    The definition of [RenardClarke1965] (equation number not checked):
    .. math:: \mathrm{TFP} = -\nabla|\nabla\tau| \cdot \frac{\nabla\tau}{|\nabla\tau|}

    For tau = (dT/2) tanh(x/L) it peaks at 0.385 dT/L^2 at x = 0.658 L.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(coords={"lat": np.linspace(-5, 5, 201), "lon": np.linspace(-5, 5, 201)})
    >>> x_km = ds.lon.values * 111.195
    >>> tau = np.broadcast_to(5.0 * np.tanh(x_km / 100.0), (201, 201))
    >>> tfp = thermal_front_parameter(tau, ds)
    >>> round(float(tfp[100].max()) / 1e-10, 1)  # 0.385 * 10 K / (100 km)^2
    3.8
    """
    arr, grid = _as_numpy_with_grid(tau, ds, "thermal_front_parameter")
    return _rewrap(tau, _tau_fields(arr, grid)["tfp"], "tfp", "K m-2")


def locating_function(tau, ds):
    r"""Hewson's locating function: derivative of TFP along the thermal gradient.

    Parameters
    ----------
    tau : ndarray or xarray.DataArray (..., Y, X)
        Thermal field [K], usually smoothed.
    ds : xarray.Dataset
        Canonical Dataset carrying the grid.

    Returns
    -------
    same kind as ``tau``
        [K m-3]; its zero line inside the masks is the front, [Hewson1998].

    Notes
    -----
    .. math:: \mathrm{LF} = \nabla\mathrm{TFP} \cdot \frac{\nabla\tau}{|\nabla\tau|}
    """
    arr, grid = _as_numpy_with_grid(tau, ds, "locating_function")
    return _rewrap(tau, _tau_fields(arr, grid)["loc"], "locating_function", "K m-3")


def front_masks(tau, ds, k1, k2):
    r"""Compute the two masks of [Hewson1998].

    Parameters
    ----------
    tau : ndarray or xarray.DataArray (..., Y, X)
        Thermal field [K], usually smoothed.
    ds : xarray.Dataset
        Canonical Dataset carrying the grid.
    k1 : float
        TFP threshold [K m-2].
    k2 : float
        Gradient threshold [K m-1].

    Returns
    -------
    mask1, mask2 : same kind as ``tau`` (bool)
        ``TFP > K1`` and :math:`|\nabla\tau| + X/\sqrt{2}\,|\nabla|\nabla\tau|| > K_2`,
        X the grid length [m]; False where the field is missing.
    """
    arr, grid = _as_numpy_with_grid(tau, ds, "front_masks")
    f = _tau_fields(arr, grid)
    with np.errstate(invalid="ignore"):
        m1 = f["tfp"] > float(k1)
        m2 = f["k2q"] > float(k2)
    if isinstance(tau, xr.DataArray):
        return tau.copy(data=m1).rename("mask_tfp"), tau.copy(data=m2).rename("mask_gradient")
    return m1, m2


# --------------------------------------------------------------------------- line extraction
def _seam_shift(z_valid):
    """Column to start a periodic grid at so that no contour crosses the seam."""
    counts = z_valid.sum(axis=0)
    return int(np.argmin(counts)), int(counts.min())


_F64 = threading.local()


def _as_float64(z):
    """Copy into a reused float64 buffer (contourpy works in float64)."""
    buf = getattr(_F64, "buf", None)
    if buf is None or buf.size < z.size:
        buf = np.empty(max(z.size, 1), dtype=np.float64)
        _F64.buf = buf
    out = buf[: z.size].reshape(z.shape)
    np.copyto(out, z)
    return out


def _trace_zero_lines(loc_masked, periodic):
    """Zero lines of a masked locating field in (fractional) index space.

    Returns a list of (x_index, y_index) arrays; x may exceed nx - 1 on a
    periodic grid (take it modulo nx). Only the rows (and, on a regional
    grid, the columns) holding valid values are handed to contourpy.
    """
    valid = np.isfinite(loc_masked)
    rows = np.flatnonzero(valid.any(axis=1))
    if rows.size < 2:
        return []
    r0, r1 = int(rows[0]), int(rows[-1]) + 1
    valid = valid[r0:r1]
    c0 = 0
    shift = 0
    if periodic:
        shift, n_left = _seam_shift(valid)
        z = np.roll(loc_masked[r0:r1], -shift, axis=1)
        if n_left:
            z[:, 0] = np.nan  # break the few lines that cross the chosen seam
    else:
        cols = np.flatnonzero(valid.any(axis=0))
        c0, c1 = int(cols[0]), int(cols[-1]) + 1
        z = loc_masked[r0:r1, c0:c1]
    if z.shape[0] < 2 or z.shape[1] < 2:
        return []
    gen = contourpy.contour_generator(
        z=_as_float64(z),
        line_type="Separate",
        corner_mask=False,
        name="serial",
    )
    out = []
    for xy in gen.lines(0.0):
        if len(xy) < 2:
            continue
        out.append((xy[:, 0] + shift + c0, xy[:, 1] + r0))
    return out


def _masked_zero_lines(f, grid, k1, k2, min_length_km=0.0, excluded=None):
    """Zero lines of the locating function where both masks hold, in index space.

    Traced lines that cannot reach ``min_length_km`` even at the largest
    grid spacing are dropped before the masks are checked at their vertices.

    The zero line is traced where the masks hold loosely (half the thresholds),
    then the masks are applied exactly at its vertices and the line is cut
    where they fail, at the interpolated crossing. Tracing only inside the
    strict masks would shred a line that runs along a mask edge.
    """
    with np.errstate(invalid="ignore"):
        outside = np.less_equal(f["tfp"], 0.5 * k1)
        outside |= np.less_equal(f["k2q"], 0.5 * k2)
    if excluded is not None:
        outside |= excluded
        banned = excluded.astype(np.float64)
    loc = f.get("tmp")
    if loc is None:
        loc = np.empty_like(f["loc"])
    np.copyto(loc, f["loc"])
    loc[outside] = np.nan
    step_km = float(np.nanmax(np.maximum(np.abs(grid.dx), np.abs(grid.dy)))) / 1000.0
    for xi, yi in _trace_zero_lines(loc, grid.periodic):
        if np.sum(np.hypot(np.diff(xi), np.diff(yi))) * step_km < min_length_km:
            continue
        tfp, k2q = _sample([f["tfp"], f["k2q"]], xi, yi, grid.periodic)
        with np.errstate(invalid="ignore", divide="ignore"):
            margin = np.minimum(tfp / max(k1, 1e-300) - 1.0, k2q / max(k2, 1e-300) - 1.0)
        margin = np.where(np.isfinite(margin), margin, -1.0)
        if excluded is not None:  # excluded points (tropics, edge, ground) cut the line
            (ban,) = _sample([banned], xi, yi, grid.periodic)
            margin = np.where(ban > 0.5, np.minimum(margin, -1.0), margin)
        keep = margin > 0
        if not keep.any():
            continue
        edges = np.flatnonzero(np.diff(keep.astype(np.int8)))
        starts = [0] if keep[0] else []
        ends = []
        for e in edges:
            if keep[e + 1]:
                starts.append(e + 1)
            else:
                ends.append(e)
        if keep[-1]:
            ends.append(keep.size - 1)
        for a, b in zip(starts, ends, strict=True):
            px, py = list(xi[a : b + 1]), list(yi[a : b + 1])
            if a > 0:  # cut at the mask edge between vertices a-1 and a
                t = margin[a - 1] / (margin[a - 1] - margin[a])
                px.insert(0, xi[a - 1] + t * (xi[a] - xi[a - 1]))
                py.insert(0, yi[a - 1] + t * (yi[a] - yi[a - 1]))
            if b < keep.size - 1:
                t = margin[b] / (margin[b] - margin[b + 1])
                px.append(xi[b] + t * (xi[b + 1] - xi[b]))
                py.append(yi[b] + t * (yi[b + 1] - yi[b]))
            if len(px) >= 2:
                yield np.asarray(px), np.asarray(py)


def _end_direction(x, y, at_start, n=3):
    """Return the unit direction (index space) pointing out of a line at one end."""
    if at_start:
        dx, dy = x[0] - x[min(n, x.size - 1)], y[0] - y[min(n, y.size - 1)]
    else:
        dx, dy = x[-1] - x[max(-n - 1, -x.size)], y[-1] - y[max(-n - 1, -y.size)]
    h = math.hypot(dx, dy)
    return (dx / h, dy / h) if h > 0 else (0.0, 0.0)


def join_lines(lines, gap_cells, nx=None, max_turn_deg=60.0):
    """Join lines (index space) whose ends are close and continue each other.

    Two ends join when they are at most ``gap_cells`` apart and each line,
    leaving through that end, points toward the other within
    ``max_turn_deg``; the closest pair is joined first. On a periodic grid
    (``nx`` columns) x distances are taken across the seam and the joined
    line's x stays continuous.

    Parameters
    ----------
    lines : list of (x, y) arrays
    gap_cells : float
    nx : int or None
        Columns of a periodic grid; None for a regional one.

    Returns
    -------
    list of (x, y) arrays
    """
    lines = [(np.asarray(x, float), np.asarray(y, float)) for x, y in lines]
    cos_max = math.cos(math.radians(max_turn_deg))
    if gap_cells <= 0:
        return lines
    while True:
        best = None
        ends = []
        for k, (x, y) in enumerate(lines):
            if x.size < 2:
                continue
            for at_start in (True, False):
                i = 0 if at_start else -1
                ends.append((k, at_start, x[i], y[i], _end_direction(x, y, at_start)))
        for ia in range(len(ends)):
            ka, sa, xa, ya, da = ends[ia]
            for ib in range(ia + 1, len(ends)):
                kb, sb, xb, yb, db = ends[ib]
                if ka == kb:
                    continue
                dx = xb - xa
                if nx:
                    dx = (dx + nx / 2.0) % nx - nx / 2.0
                dy = yb - ya
                gap = math.hypot(dx, dy)
                if gap > gap_cells:
                    continue
                if gap > 1e-9:
                    ux, uy = dx / gap, dy / gap
                    if da[0] * ux + da[1] * uy < cos_max or -(db[0] * ux + db[1] * uy) < cos_max:
                        continue
                elif -(da[0] * db[0] + da[1] * db[1]) < cos_max:
                    continue
                if best is None or gap < best[0]:
                    best = (gap, ka, sa, kb, sb)
        if best is None:
            return lines
        _, ka, sa, kb, sb = best
        xa, ya = lines[ka]
        xb, yb = lines[kb]
        if sa:  # make line a end at its end
            xa, ya = xa[::-1], ya[::-1]
        if not sb:  # make line b start at the joint
            xb, yb = xb[::-1], yb[::-1]
        if nx:
            xb = xb + nx * round((xa[-1] - xb[0]) / nx)
        joined = (np.concatenate([xa, xb]), np.concatenate([ya, yb]))
        lines = [ln for k, ln in enumerate(lines) if k not in (ka, kb)] + [joined]


def _sample(arrays, xi, yi, periodic):
    """Bilinear values [float64] of 2-D arrays at fractional indices (x, y).

    Corners with zero weight are ignored, so a vertex on a cell edge next to
    a missing value still gets the value interpolated along that edge.
    """
    ny, nx = arrays[0].shape
    x = np.asarray(xi, dtype=np.float64)
    y = np.asarray(yi, dtype=np.float64)
    if periodic:
        x = np.mod(x, nx)
        j0 = np.minimum(np.floor(x).astype(np.intp), nx - 1)
        j1 = (j0 + 1) % nx
    else:
        x = np.clip(x, 0, nx - 1)
        j0 = np.clip(np.floor(x).astype(np.intp), 0, max(nx - 2, 0))
        j1 = np.minimum(j0 + 1, nx - 1)
    y = np.clip(y, 0, ny - 1)
    i0 = np.clip(np.floor(y).astype(np.intp), 0, max(ny - 2, 0))
    i1 = np.minimum(i0 + 1, ny - 1)
    fx = np.clip(x - j0, 0.0, 1.0)
    fy = np.clip(y - i0, 0.0, 1.0)
    weights = ((1 - fx) * (1 - fy), fx * (1 - fy), (1 - fx) * fy, fx * fy)
    corners = ((i0, j0), (i0, j1), (i1, j0), (i1, j1))
    out = []
    for a in arrays:
        acc = np.zeros(x.shape)
        for w, (ii, jj) in zip(weights, corners, strict=True):
            v = a[ii, jj].astype(np.float64)
            acc += np.where(w > 0, v, 0.0) * w
        out.append(acc)
    return out


def _line_lonlat(grid, xi, yi):
    if grid.kind == "latlon":
        n = grid.shape[1]
        if grid.periodic:
            step = grid.lon[1] - grid.lon[0]
            lon = grid.lon[0] + step * xi
        else:
            lon = np.interp(xi, np.arange(n), grid.lon)
        lat = np.interp(yi, np.arange(grid.shape[0]), grid.lat)
    else:
        lon2 = np.rad2deg(np.unwrap(grid.lon_rad, axis=1))
        lon2 = np.rad2deg(np.unwrap(np.deg2rad(lon2), axis=0))
        lon, lat = _sample([lon2, grid.lat], xi, yi, False)
    # keep the line contiguous, with its middle in -180..180
    lon = np.rad2deg(np.unwrap(np.deg2rad(lon)))
    mid = lon[len(lon) // 2]
    lon = lon - 360.0 * np.round(mid / 360.0)
    return lon, lat


def _segments_km(lon, lat):
    return geo.great_circle_km(lon[:-1], lat[:-1], lon[1:], lat[1:])


def _vertex_weights(seg):
    w = np.zeros(seg.size + 1)
    w[:-1] += 0.5 * seg
    w[1:] += 0.5 * seg
    return w


def _tangents(lon, lat, window_km):
    """Return the unit tangent (east, north) at each vertex, over about +-window_km."""
    seg = _segments_km(lon, lat)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    lo = np.searchsorted(s, s - window_km, side="left")
    hi = np.searchsorted(s, s + window_km, side="right") - 1
    lo = np.minimum(lo, np.arange(s.size))
    hi = np.maximum(hi, np.arange(s.size))
    same = lo == hi
    lo[same] = np.maximum(lo[same] - 1, 0)
    hi[same] = np.minimum(hi[same] + 1, s.size - 1)
    latm = np.deg2rad(0.5 * (lat[lo] + lat[hi]))
    de = np.deg2rad(lon[hi] - lon[lo]) * np.cos(latm)
    dn = np.deg2rad(lat[hi] - lat[lo])
    norm = np.hypot(de, dn)
    norm[norm == 0] = 1.0
    return de / norm, dn / norm


def _classify(vn, qs):
    c = np.zeros(vn.shape, dtype=int)
    c[vn > qs] = 1  # warm
    c[vn < -qs] = -1  # cold
    return c


_KIND_OF = {1: "warm", -1: "cold", 0: "quasi-stationary"}


def _kind_of_speed(speed, qs):
    if not np.isfinite(speed):
        return "quasi-stationary"
    return _KIND_OF[int(_classify(np.array([speed]), qs)[0])]


def _split_by_type(vn, w, seg, qs, min_piece_km):
    """Split vertex indices into pieces of one type; returns [(i0, i1)] inclusive."""
    n = vn.size
    vnf = np.where(np.isfinite(vn), vn, 0.0)
    cls = _classify(vnf, qs)
    # runs of equal class as vertex ranges; pieces share their end vertices
    bounds = np.flatnonzero(np.diff(cls)) + 1
    starts = np.concatenate([[0], bounds])
    ends = np.concatenate([bounds, [n]])
    pieces = [[int(a), int(b)] for a, b in zip(starts, ends, strict=True)]  # [a, b) vertices
    cum = np.concatenate([[0.0], np.cumsum(seg)])

    def length(p):
        a, b = p
        return cum[min(b, n - 1)] - cum[a]

    def mean_class(p):
        a, b = p
        ww = w[a:b]
        sp = float(np.sum(ww * vnf[a:b]) / np.sum(ww)) if np.sum(ww) > 0 else 0.0
        return int(_classify(np.array([sp]), qs)[0])

    while len(pieces) > 1:
        lens = [length(p) for p in pieces]
        i = int(np.argmin(lens))
        if lens[i] >= min_piece_km:
            break
        # merge the shortest piece into its longer neighbour
        if i == 0:
            j = 1
        elif i == len(pieces) - 1:
            j = i - 1
        else:
            j = i - 1 if lens[i - 1] >= lens[i + 1] else i + 1
        a, b = min(i, j), max(i, j)
        pieces[a : b + 1] = [[pieces[a][0], pieces[b][1]]]
        # merge neighbours that now share a type
        merged = [pieces[0]]
        for p in pieces[1:]:
            if mean_class(merged[-1]) == mean_class(p):
                merged[-1] = [merged[-1][0], p[1]]
            else:
                merged.append(p)
        pieces = merged
    # inclusive vertex ranges that share the boundary vertex
    return [(a, min(b, n - 1)) for a, b in pieces]


# --------------------------------------------------------------------------- dataset handling
def _check_dataset(ds, what="find_fronts"):
    if not isinstance(ds, xr.Dataset):
        raise InputError(
            f"{what}: got {type(ds).__name__}; expected the canonical xarray Dataset "
            "(kit.io.runs.open_run)"
        )
    for name in ("t", "u", "v"):
        if name not in ds:
            have = ", ".join(sorted(map(str, ds.data_vars))) or "none"
            raise InputError(
                f"{what}: variable '{name}' missing (have: {have}); expected the canonical "
                "fields t, td, u, v on pressure levels"
            )
    if "level" not in ds.coords:
        raise InputError(f"{what}: no 'level' coordinate; expected pressure levels [hPa]")
    if "time" not in ds.dims:
        raise InputError(f"{what}: no 'time' dimension; expected (time, level, Y, X) fields")


def level_index(ds, level, what):
    """Index of pressure level ``level`` [hPa] in ``ds``; one-line error naming ``what`` if absent."""
    levels = np.asarray(ds["level"].values, dtype=float)
    hit = np.flatnonzero(np.isclose(levels, float(level), rtol=0, atol=0.01))
    if not hit.size:
        avail = ", ".join(f"{v:g}" for v in levels)
        raise InputError(f"{what} {float(level):g} hPa not in the dataset; available: {avail} hPa")
    return int(hit[0])


def _select_times(ds, times):
    if times is None:
        return ds
    items = [times] if isinstance(times, (str, np.datetime64, pd.Timestamp)) else times
    try:
        stamps = pd.to_datetime(list(np.atleast_1d(np.asarray(items, dtype=object))), utc=True)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"find_fronts: times={times!r} not understood ({exc}); expected ISO 8601 UTC times"
        ) from None
    wanted = stamps.tz_convert(None).values.astype("datetime64[ns]")
    have = ds["time"].values.astype("datetime64[ns]")
    idx = []
    for t in wanted:
        hit = np.flatnonzero(have == t)
        if not hit.size:
            raise InputError(
                f"find_fronts: valid time {iso_seconds(t)} not in the run; expected one of "
                f"{iso_seconds(have[0])} .. {iso_seconds(have[-1])}"
            )
        idx.append(int(hit[0]))
    return ds.isel(time=idx)


def _tau_of(ds, level, settings):
    if settings.field == "theta_w":
        if "td" not in ds:
            raise InputError(
                "find_fronts: variable 'td' missing; theta-w needs dew point "
                "(or use FrontSettings(field='theta'))"
            )
        return thermo.theta_w_of(ds, level)
    return thermo.level_field(ds, "theta", level)


def _weighted_quantile(values, weights, q):
    order = np.argsort(values)
    v, w = values[order], weights[order]
    cw = np.cumsum(w)
    return float(np.interp(q * cw[-1], cw, v))


def _line_signature(flow, lon, lat, ne, nn, w):
    """Length-weighted shares of the flow signature along a line (dict, or None)."""
    if flow is None:
        return None
    sig = signature_at(flow, lon, lat, ne, nn)
    wv = np.where(sig["valid"], w, 0.0)
    total = float(wv.sum())
    if total <= 0:
        return None
    confirm = (sig["vorticity"] | sig["shear"]) & sig["trough"]
    return {
        "cyclonic_vorticity_share": float(np.sum(wv * sig["vorticity"]) / total),
        "cyclonic_shear_share": float(np.sum(wv * sig["shear"]) / total),
        "trough_share": float(np.sum(wv * sig["trough"]) / total),
        "signature_share": float(np.sum(wv * confirm) / total),
        "trough_field": flow.pressure_name,
    }


def _lines_at_time(rec, grid, k1, k2, rule, s, min_len_km, run):
    """Front objects at one valid time of :func:`analysis_fields`."""
    f = rec.fields
    smoothing_km = rec.smoothing_km
    fronts = []
    uv = None
    window_km = max(grid.length_m / 1000.0, 0.5 * smoothing_km)
    min_piece = min_len_km if s.min_piece_km is None else s.min_piece_km
    lines = list(_masked_zero_lines(f, grid, k1, k2, grid.length_m / 1000.0, rec.excluded))
    lines = join_lines(
        lines, s.join_gap_grid_lengths, grid.shape[1] if grid.periodic else None
    )
    for xi, yi in lines:
        lon, lat = _line_lonlat(grid, xi, yi)
        seg = _segments_km(lon, lat)
        length = float(np.sum(seg))
        if length < min_len_km or lon.size < 2:
            continue
        if uv is None:
            uv = rec.steering_wind()[:2]
        tfp, mag, gx, gy, uu, vv = _sample(
            [f["tfp"], f["grad"], f["ux"], f["uy"], uv[0], uv[1]], xi, yi, grid.periodic
        )
        te, tn = _tangents(lon, lat, window_km)
        ne, nn = -tn, te  # left-hand normal
        with np.errstate(invalid="ignore"):
            cold_dot = -(ne * gx + nn * gy)
        w = _vertex_weights(seg)
        if np.nansum(w * np.sign(cold_dot)) < 0:  # make the cold side the left side
            lon, lat, tfp, mag, gx, gy, uu, vv, xi, yi = (
                a[::-1] for a in (lon, lat, tfp, mag, gx, gy, uu, vv, xi, yi)
            )
            seg = seg[::-1]
            w = w[::-1]
            te, tn = _tangents(lon, lat, window_km)
            ne, nn = -tn, te
        vn = uu * ne + vv * nn
        for a, b in _split_by_type(vn, w, seg, s.qs_speed_ms, min_piece):
            sl = slice(a, b + 1)
            plon, plat = lon[sl], lat[sl]
            if plon.size < 2:
                continue
            pseg = seg[a:b]
            plen = float(np.sum(pseg))
            if plen < min_len_km:
                continue
            pw = _vertex_weights(pseg)
            sig = _line_signature(rec.flow(), plon, plat, ne[sl], nn[sl], pw)
            if (
                s.confirm_min_share > 0
                and sig is not None
                and sig["signature_share"] < s.confirm_min_share
            ):
                continue
            pvn = vn[sl]
            ok = np.isfinite(pvn)
            speed = float(np.sum(pw[ok] * pvn[ok]) / np.sum(pw[ok])) if pw[ok].sum() > 0 else np.nan
            ptfp, pmag = tfp[sl], mag[sl]
            detection = FrontDetection(
                field=s.field,
                smoothing_km=round(float(smoothing_km), 1),
                tfp_mean_K_100km2=float(np.nansum(pw * ptfp) / pw.sum() * 1e10),
                grad_mean_K_100km=float(np.nansum(pw * pmag) / pw.sum() * 1e5),
                steering_level_hpa=float(s.steering_level_hpa),
                k1_K_100km2=float(k1 * 1e10),  # finite: a line passed it
                k2_K_100km=float(k2 * 1e5),
                thresholds_from=rule,
                **(sig or {}),
            )
            fronts.append(
                Front(
                    lon=plon.copy(),
                    lat=plat.copy(),
                    kind=_kind_of_speed(speed, s.qs_speed_ms),
                    valid_time=np.datetime64(rec.time, "ns"),
                    level_hpa=float(rec.level),
                    tfp=ptfp.copy(),
                    grad=pmag.copy(),
                    normal_east=ne[sl].copy(),
                    normal_north=nn[sl].copy(),
                    vn=pvn.copy(),
                    speed_ms=speed,
                    length_km=plen,
                    run=run,
                    member=rec.member,
                    detection=detection,
                )
            )
    return fronts


class FieldRecord:
    """The analysed fields of one member and valid time (:func:`analysis_fields`).

    Attributes
    ----------
    member : int or None
    time : numpy.datetime64
    level : float
        [hPa]
    fields : dict of ndarray
        ``grad``, ``tfp``, ``loc``, ``k2q``, ``ux``, ``uy`` ... of the smoothed
        thermal field (work arrays: valid until the next record).
    excluded : ndarray of bool
        Points no front may use: below ground (grown by one grid length),
        tropics, domain edge.
    below_ground : ndarray of bool or None
        The level below the surface plus the margin (None: not known).
    below_ground_strict : ndarray of bool or None
        The level below the surface itself.
    below_ground_source : str
    tropics, edge : ndarray of bool
    smoothing_km : float
    cell_area : ndarray
        Area each grid point stands for [m2] (:func:`kit.science.domain.cell_area_m2`).
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)
        self._flow = None
        self._wind = None

    def steering_wind(self):
        """Return ``(u, v, below_ground)`` at the steering level, loaded once per record.

        ``u``, ``v`` [m s-1] are NaN below ground; ``below_ground`` is the
        steering level's mask (None: not known).
        """
        if self._wind is None:
            self._wind = self.wind_loader()
        return self._wind

    def flow(self):
        """Return the steering-level flow fields (:class:`kit.science.signature.FlowFields`).

        None when the run has no trough field (neither ``mslp`` nor ``z``).
        """
        if self._flow is None:
            self._flow = self.flow_loader(self)
        return self._flow


def analysis_fields(ds, level, settings, members):
    """Yield a :class:`FieldRecord` for every member and valid time of a run.

    The thermal field is masked below ground before smoothing (surface
    pressure below the level plus ``below_ground_margin_hpa``, or the
    level's height below the surface height plus ``below_ground_margin_m``);
    the steering wind and the trough field are masked the same way.
    """
    s = settings
    grid = geo.grid_of(ds)
    smoothing_km = effective_smoothing_km(ds, s)
    steer = level_index(ds, s.steering_level_hpa, "steering level")
    steer_hpa = float(ds["level"].values[steer])
    tropics = tropics_mask(grid, s.tropics_lat)
    edge = edge_mask(grid, s.edge_buffer_grid_lengths)
    sampler = geo.PointSampler(ds)
    cell_area = cell_area_m2(grid)
    ws = cbuf = None
    for m in members:
        dm = ds.sel(member=m) if m is not None else ds
        member_id = None if m is None else int(m)
        if member_id is None and "member" in ds.coords and ds["member"].size == 1:
            member_id = int(ds["member"].values)
        for it in range(dm.sizes["time"]):
            dt_ = dm.isel(time=it)
            tau = np.array(_tau_of(dt_, level, s).values, dtype=np.float64)
            if tau.shape != tuple(grid.shape):
                raise InputError(
                    f"find_fronts: field of shape {tau.shape} per time; expected the grid "
                    f"shape {tuple(grid.shape)} (dimensions time, level, Y, X)"
                )
            bg, source = below_ground(
                dt_, level, margin_hpa=s.below_ground_margin_hpa, margin_m=s.below_ground_margin_m
            )
            bg0, _ = below_ground(dt_, level)
            if bg is not None:
                tau[bg] = np.nan
            # missing points (below ground included) grown by one cell, then
            # the fixed tropics and edge masks
            banned = tropics | edge
            excluded = dilate(~np.isfinite(tau) & ~banned, 1, grid.periodic) | banned
            if ws is None:
                ws = [np.empty(grid.shape, dtype=_WORK_DTYPE) for _ in range(_N_WORK + 3)]
                cbuf = np.empty((grid.shape[0], grid.shape[1] // 2 + 1), dtype=np.complex64)
            # work in float32 on the anomaly from a reference value: the
            # rounding (1e-6 K) stays far below third differences of tau
            sub = tau[::7, ::7]
            ref = float(np.nanmean(sub)) if np.isfinite(sub).any() else 0.0
            np.subtract(tau, ref, out=ws[-3], casting="unsafe")
            geo.smooth_np(ws[-3], grid, smoothing_km, out=ws[-2], tmp=ws[-1], cbuf=cbuf)
            f = _tau_fields(ws[-2], grid, ws[:_N_WORK])

            def wind(dt_=dt_):
                bs, _ = below_ground(
                    dt_,
                    steer_hpa,
                    margin_hpa=s.below_ground_margin_hpa,
                    margin_m=s.below_ground_margin_m,
                )
                out = []
                for name in ("u", "v"):
                    a = dt_[name].isel(level=steer).transpose(*dt_[name].dims[-2:]).values
                    a = np.array(a, dtype=np.float64)
                    if bs is not None:
                        a[bs] = np.nan
                    out.append(a)
                return out[0], out[1], bs

            def flow(rec, dt_=dt_):
                if "mslp" not in dt_ and "z" not in dt_:
                    return None  # no trough field: the signature is not evaluated
                u, v, bs = rec.steering_wind()
                if "mslp" in dt_:
                    p = np.array(dt_["mslp"].values, dtype=np.float64).reshape(grid.shape)
                    name = "mslp"
                else:
                    p = dt_["z"].isel(level=steer).transpose(*dt_["z"].dims[-2:]).values
                    p = np.array(p, dtype=np.float64)
                    if bs is not None:
                        p[bs] = np.nan
                    name = f"z{steer_hpa:g}"
                return FlowFields(u, v, p, name, grid, smoothing_km, sampler)

            yield FieldRecord(
                member=member_id,
                time=dm["time"].values[it],
                level=float(level),
                fields=f,
                excluded=excluded,
                below_ground=bg,
                below_ground_strict=bg0,
                below_ground_source=source,
                tropics=tropics,
                edge=edge,
                smoothing_km=smoothing_km,
                cell_area=cell_area,
                wind_loader=wind,
                flow_loader=flow,
            )


def _members_of(ds, member, what="find_fronts"):
    if "member" in ds.dims:
        members = list(np.asarray(ds["member"].values))
        if member is not None:
            if member not in members:
                raise InputError(
                    f"{what}: member {member} not in the run; available: "
                    + ", ".join(str(m) for m in members)
                )
            members = [member]
        return members
    if member is not None and "member" in ds.coords and ds["member"].size == 1:
        if int(ds["member"].values) != int(member):
            raise InputError(
                f"{what}: member {member} not in the run; it holds member "
                f"{int(ds['member'].values)}"
            )
    return [None]


def calibrate_thresholds(records, q1, q2):
    """Area-weighted quantiles of TFP and the K2 quantity over analysable points.

    Parameters
    ----------
    records : iterable of FieldRecord
        Every time, member (and run) to pool: thresholds from one map's own
        quantiles would make a fixed share of every map frontal.
    q1, q2 : float or None
        Quantiles [0..1) of TFP and of ``|grad tau| + X/sqrt(2) |grad |grad tau||``.

    Returns
    -------
    k1, k2 : float or None
        [K m-2], [K m-1]; None where the quantile was None; infinite where no
        point is analysable.
    """
    tf, kq, ww = [], [], []
    for rec in records:
        f = rec.fields
        w_area = rec.cell_area
        a, b = f["tfp"][::2, ::2].ravel(), f["k2q"][::2, ::2].ravel()
        ok = np.isfinite(a) & np.isfinite(b) & ~rec.excluded[::2, ::2].ravel()
        tf.append(a[ok].astype(np.float64))
        kq.append(b[ok].astype(np.float64))
        ww.append(w_area[::2, ::2].ravel()[ok])
    tf, kq, ww = np.concatenate(tf), np.concatenate(kq), np.concatenate(ww)
    if tf.size == 0:
        # nothing analysable (a run of the tropics only, a constant field ...):
        # thresholds nothing passes, so the product is empty; the plausibility
        # report (kit.science.plausibility) says what was masked
        return (None if q1 is None else math.inf), (None if q2 is None else math.inf)
    k1 = None if q1 is None else _weighted_quantile(tf, ww, float(q1))
    k2 = None if q2 is None else _weighted_quantile(kq, ww, float(q2))
    return k1, k2


def find_fronts(ds, *, level=850.0, times=None, member=None, settings=None):
    """Objective fronts of a model run on one pressure level.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical Dataset (DEVELOPERS.md) with ``t``, ``td`` (for theta-w),
        ``u``, ``v`` on pressure levels; regular latitude/longitude (either
        hemisphere, contiguous across the dateline or global) or projected.
        ``ps`` or ``zsfc`` (optional) mask the level below ground.
    level : float
        Pressure level of the analysis [hPa], default 850.
    times : datetime-like or sequence, optional
        Valid times to analyse; all when None.
    member : int, optional
        Ensemble member to analyse; all members (each front carrying its
        ``member``) when None and the run has a ``member`` dimension.
    settings : FrontSettings, optional
        Method choices; defaults documented in :class:`FrontSettings`.

    Returns
    -------
    list of Front
        In order of member, valid time, then length (longest first).
        ``run`` is ``ds.attrs["run"]``; ``track`` is left None (set by
        :mod:`kit.science.motion`).

    Notes
    -----
    See the module docstring for the steps, [Hewson1998] for the masks and
    [Berry2011] for the typing by the 850 hPa front-normal wind. Quantile
    thresholds are pooled over every member and time of ``ds``.
    """
    s = settings or FrontSettings()
    if not isinstance(s, FrontSettings):
        raise InputError(
            f"find_fronts: settings of type {type(s).__name__}; expected FrontSettings"
        )
    _check_dataset(ds)
    try:
        level = float(level)
    except (TypeError, ValueError):
        raise InputError(f"find_fronts: level={level!r}; expected a pressure in hPa") from None
    level_index(ds, level, "level")
    level_index(ds, s.steering_level_hpa, "steering level")
    ds = _select_times(ds, times)
    grid = geo.grid_of(ds)
    smoothing_km = effective_smoothing_km(ds, s)
    min_len = min_length_km(ds, s)
    rule, k1, k2, q1, q2 = threshold_rule(smoothing_km, s)
    members = _members_of(ds, member)
    if q1 is not None or q2 is not None:
        c1, c2 = calibrate_thresholds(analysis_fields(ds, level, s, members), q1, q2)
        k1 = k1 if c1 is None else c1
        k2 = k2 if c2 is None else c2

    run = ds.attrs.get("run")
    if run is not None:
        run = str(run)
    fronts = []
    for rec in analysis_fields(ds, level, s, members):
        found = _lines_at_time(rec, grid, k1, k2, rule, s, min_len, run)
        found.sort(key=lambda fr: -fr.length_km)
        fronts.extend(found)
    return fronts
