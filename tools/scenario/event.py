"""The invented demo scenario: a frontal wave's life cycle, written as CF NetCDF.

``python -m tools.scenario [--out sample_grids]`` writes the sample event folder
described in DEVELOPERS.md (two forecast runs, verifying analyses, invented
sites, station series with noise, ``truth.json`` and a README). Everything is
invented: the sites, the dates (January 2027), the terrain and the weather;
only the land outline is real (Natural Earth 1:110 m, public domain, the one
the kit's maps draw). The fields are built from analytic pieces, so the
answers the kit should find are known, and the truth is measured on what the
files hold:

* **Geometry.** Work is done on a conformal (oblique stereographic, spherical
  earth) plane centred at 51 N, 10 W with scale factor 0.993 at the centre
  (Snyder 1987, Eqs. 21-2 to 21-4 forward, 20-14, 20-15 and 21-15 inverse).
  The low centre moves with a velocity that changes linearly in time (it
  slows and turns left). Until ``occlusion_start_h`` the low is the apex of
  the warm sector; after it the triple point moves away from the low along
  an occluded front that lengthens at a set rate. The warm front leaves the
  triple point and curves to the right, the cold front trails behind it and
  curves back; their headings at the triple point close in time, so the warm
  sector narrows. Each front is a smooth curve (headings integrated along
  arc length, sampled every 4 km); signed distances to it are exact
  projections on the sampled curve. Each front dies out beyond its length
  (its zone widens sixteenfold there).
* **Temperature.** A background with a meridional gradient, a 6.5 K/km lapse
  rate and an isothermal stratosphere above a tropopause that is lower on the
  cold (poleward) side, plus a warm sector of amplitude ``dt_warm_k`` shaped as
  the product of two tanh zones (half-widths ``l_warm_km``, ``l_cold_km``).
  The frontal surfaces lean: at height h [m] the zone centre lies 150 h toward
  the cold side of the surface warm front (1 in 150) and 50 h toward the cold
  side of the surface cold front (1 in 50) (common practice values, no source).
  Over the occluded front a warm tongue aloft (a trowal) leans 1 in 100. The
  height is the level's own written height: temperatures and heights are
  solved together (fixed-point iteration to 0.02 m), so the geometry the kit
  measures in the files is the geometry of the truth. A tropopause fold lies
  behind the surface cold front aloft, and a shallow cold pool ahead of the
  warm front gives a freezing-rain window at one upland site.
* **Land.** An invented terrain (a rise inland and a few hills) on the real
  land outline, written as ``orog`` (surface_altitude). The 2-m fields are on
  that surface; the sites are on land with the orography's height there.
* **Pressure and heights.** Mean-sea-level pressure is a conical low whose
  centre deepens fastest in the first day, with troughs along the fronts
  whose isobars kink at them (a rounded V, ``trough_kink_km``). Heights on
  pressure levels follow from the hypsometric equation (Wallace & Hobbs 2006,
  Eq. 3.29; equation number from memory) with air temperature (no
  virtual-temperature correction), taking the temperature linear in ln p
  between the written levels and between the sea surface and 1000 hPa, so
  that the written heights satisfy the layer form of the equation exactly.
* **Winds** on the levels are geostrophic from the height field (centred
  differences on the sphere); the 10-m wind is 0.75 of the surface
  geostrophic wind backed by 20 deg (common practice, no source).
* **Humidity** is near-saturated over the frontal surfaces (the cloud wedge
  over the warm frontal surface out to 300 nm ahead, a band along the cold
  front, deep cloud over the occlusion's warm tongue), dry in a slot behind
  the cold front aloft; the 2-m dew point comes from the 2-m relative
  humidity (Bolton 1980, Eq. 10, inverted).
* **Precipitation** is a light-moderate shield from about 250 nm ahead of the
  surface warm front up to it, a heavier band 50-100 nm behind the surface
  cold front, and steady rain wrapping round the low on the cold side of the
  occlusion (common practice, no source); files hold the amount accumulated
  since the forecast reference time [kg m-2] (trapezoid over 10-min steps).

Two forecast runs differ from the analyses only by a timing offset (their
fronts are early or late by a fixed number of hours). The verifying analyses
are written as one sequence whose ``forecast_reference_time`` is the start of
the window, so that their accumulated precipitation can be differenced like a
run's.
"""

import argparse
import json
import math
import re
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

import metpy.calc as mpcalc
import netCDF4
import numpy as np
import shapely
from metpy.units import units
from scipy.interpolate import RegularGridInterpolator
from scipy.ndimage import gaussian_filter
from scipy.optimize import minimize
from scipy.spatial import cKDTree

from kit import CAUTION
from kit.charts.coast import coast_geometries

__all__ = [
    "ScenarioSpec",
    "Scenario",
    "LEVELS_HPA",
    "SITES",
    "standard_atmosphere_height",
    "write_sample_event",
    "write_steps",
    "main",
]

#: pressure levels written [hPa], 1000 first
LEVELS_HPA = (1000.0, 925.0, 850.0, 700.0, 600.0, 500.0, 400.0, 300.0, 250.0, 200.0)

RD = 287.04749  # gas constant of dry air [J kg-1 K-1] (as MetPy's constants)
G0 = 9.80665  # standard gravity [m s-2] (WMO)
OMEGA = 7.292115e-5  # earth's angular velocity [s-1]
EARTH_RADIUS = 6371008.8  # mean earth radius [m] (IUGG)
KNOT = 0.514444  # [m s-1]
NM = 1852.0  # nautical mile [m]

#: invented site names (made-up syllable combinations), with plane positions
#: chosen so that both surface fronts cross every site inside the window
SITES = (
    # name, lat, lon, elevation_m (the written orography at the site, to 1 m)
    ("Kelmarra", 47.00, -1.60, 115.0),
    ("Tavishore", 43.10, -4.80, 449.0),
    ("Lorvaine", 42.90, -7.60, 259.0),
    ("Quennock", 52.20, -3.80, 414.0),
    ("Eskerwick", 49.20, -0.60, 70.0),
    ("Drevanholm", 46.20, 1.50, 612.0),
)
#: the site where a shallow sub-zero surface layer sits ahead of the warm front
COLD_POOL_SITE = "Drevanholm"

_PACKING = {
    # name: (scale_factor, add_offset) for CF int16 packing; the scale is the
    # quantization step, chosen to keep the whole event under about 20 MB
    "t": (0.05, 250.0),
    "rh": (1.0, 50.0),
    "u": (0.2, 0.0),
    "v": (0.2, 0.0),
    "z": (2.0, 6000.0),
    "msl": (2.0, 100000.0),
    "t2m": (0.02, 270.0),
    "d2m": (0.02, 270.0),
    "u10": (0.05, 0.0),
    "v10": (0.05, 0.0),
    "precip": (0.01, 150.0),
    "orog": (1.0, 0.0),
}


def _s(u):
    """Smooth step 0..1: (1 + tanh u) / 2."""
    return 0.5 * (1.0 + np.tanh(u))


def standard_atmosphere_height(p_hpa):
    r"""Height of a pressure in the ICAO standard atmosphere [m].

    Parameters
    ----------
    p_hpa : float or array_like
        Pressure [hPa], 1013.25 down to 54.75 hPa (troposphere and the
        isothermal layer up to 20 km).

    Returns
    -------
    ndarray
        Geopotential height [m].

    Notes
    -----
    Troposphere: :math:`h = (T_0/\\Gamma)(1 - (p/p_0)^{R_d \\Gamma / g_0})` with
    T0 = 288.15 K, Gamma = 6.5 K/km, p0 = 1013.25 hPa; above 11 km isothermal
    at 216.65 K (ICAO 1993, Manual of the ICAO Standard Atmosphere, Doc 7488).

    Examples
    --------
    >>> round(float(standard_atmosphere_height(500.0)))
    5574
    """
    p = np.asarray(p_hpa, dtype=float)
    t0, lapse, p0 = 288.15, 0.0065, 1013.25
    rd = 287.05287  # the ICAO value
    p11 = p0 * (1 - lapse * 11000.0 / t0) ** (G0 / (rd * lapse))
    trop = (t0 / lapse) * (1 - (p / p0) ** (rd * lapse / G0))
    strat = 11000.0 + rd * 216.65 / G0 * np.log(p11 / p)
    return np.where(p >= p11, trop, strat)


# --------------------------------------------------------------------------
# Plane <-> sphere (stereographic, spherical earth)
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Stereo:
    lat0: float = 51.0
    lon0: float = -10.0
    k0: float = 0.993
    radius: float = EARTH_RADIUS

    def forward(self, lon, lat):
        """Plane coordinates [m] of (lon, lat) [deg]; Snyder (1987) Eqs. 21-2..21-4."""
        lam = np.radians(np.asarray(lon, float) - self.lon0)
        phi = np.radians(np.asarray(lat, float))
        p1 = math.radians(self.lat0)
        k = (
            2
            * self.k0
            / (1 + math.sin(p1) * np.sin(phi) + math.cos(p1) * np.cos(phi) * np.cos(lam))
        )
        x = self.radius * k * np.cos(phi) * np.sin(lam)
        y = (
            self.radius
            * k
            * (math.cos(p1) * np.sin(phi) - math.sin(p1) * np.cos(phi) * np.cos(lam))
        )
        return x, y

    def inverse(self, x, y):
        """(lon, lat) [deg] of plane coordinates [m]; Snyder (1987) Eqs. 20-14, 20-15, 21-15."""
        x = np.asarray(x, float)
        y = np.asarray(y, float)
        p1 = math.radians(self.lat0)
        rho = np.hypot(x, y)
        c = 2 * np.arctan2(rho, 2 * self.radius * self.k0)
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = np.where(rho > 0, y * np.sin(c) / np.where(rho > 0, rho, 1.0), 0.0)
        phi = np.arcsin(np.cos(c) * math.sin(p1) + ratio * math.cos(p1))
        lam = np.arctan2(
            x * np.sin(c), rho * math.cos(p1) * np.cos(c) - y * math.sin(p1) * np.sin(c)
        )
        return self.lon0 + np.degrees(lam), np.degrees(phi)

    def scale(self, lon, lat):
        """Point scale factor k [1] (plane length / earth length)."""
        lam = np.radians(np.asarray(lon, float) - self.lon0)
        phi = np.radians(np.asarray(lat, float))
        p1 = math.radians(self.lat0)
        return (
            2
            * self.k0
            / (1 + math.sin(p1) * np.sin(phi) + math.cos(p1) * np.cos(phi) * np.cos(lam))
        )


def _unit(bearing_deg):
    b = math.radians(bearing_deg)
    return np.array([math.sin(b), math.cos(b)])  # (east, north)


# --------------------------------------------------------------------------
# Curves on the plane
# --------------------------------------------------------------------------

_VERTEX_KM = 4.0  # vertex spacing of the sampled curves [km]


def _angle_diff(a, b):
    """Return a - b wrapped to (-180, 180] [deg]."""
    return (a - b + 180.0) % 360.0 - 180.0


def _smoothstep(u):
    u = np.clip(u, 0.0, 1.0)
    return u * u * (3.0 - 2.0 * u)


class _Curve:
    """A smooth plane curve sampled every ``_VERTEX_KM``, with arc length 0 at its anchor.

    ``points`` (N, 2) [m] run in the curve's direction; ``s`` (N,) [m] is the
    arc length from the anchor (negative before it). :meth:`locate` gives the
    signed distance of points from the curve (positive on its LEFT) and the
    arc length of their foot points (exact projection on the polyline).
    """

    def __init__(self, points, s):
        self.points = np.asarray(points, float)
        self.s = np.asarray(s, float)
        seg = np.diff(self.points, axis=0)
        self.seg_len = np.hypot(seg[:, 0], seg[:, 1])
        self.seg_dir = seg / self.seg_len[:, None]
        tang = np.empty_like(self.points)
        tang[0], tang[-1] = self.seg_dir[0], self.seg_dir[-1]
        mid = self.seg_dir[:-1] + self.seg_dir[1:]
        tang[1:-1] = mid / np.hypot(mid[:, 0], mid[:, 1])[:, None]
        self.vertex_dir = tang
        self.tree = cKDTree(self.points)

    @classmethod
    def from_headings(cls, anchor, forward, backward, length_fwd, length_back):
        """Integrate headings [deg] away from ``anchor`` [m].

        ``forward(s)`` is the heading at arc length s >= 0; ``backward(u)`` the
        heading (in the curve's forward sense) at arc length -u, u >= 0.
        """
        ds = _VERTEX_KM * 1e3
        sf = np.arange(0.0, length_fwd + ds / 2, ds)
        sb = np.arange(0.0, length_back + ds / 2, ds)

        def walk(s, heading, sign):
            mid = 0.5 * (s[1:] + s[:-1])
            b = np.radians(heading(mid))
            step = sign * ds * np.column_stack([np.sin(b), np.cos(b)])
            return np.vstack([[0.0, 0.0], np.cumsum(step, axis=0)])

        fwd = walk(sf, forward, 1.0)
        bwd = walk(sb, backward, -1.0)
        pts = np.vstack([bwd[:0:-1], fwd]) + np.asarray(anchor, float)
        s = np.concatenate([-sb[:0:-1], sf])
        return cls(pts, s)

    def locate(self, x, y):
        """(signed distance [m], positive left; arc length of the foot point [m])."""
        shape = np.shape(x)
        q = np.column_stack([np.ravel(x), np.ravel(y)])
        _, i = self.tree.query(q)
        best_d = np.full(len(q), np.inf)
        best_sign = np.zeros(len(q))
        best_s = np.zeros(len(q))
        n_seg = len(self.seg_len)
        for k in (i - 1, i):  # the two segments meeting at the nearest vertex
            k = np.clip(k, 0, n_seg - 1)
            p0 = self.points[k]
            dvec = self.seg_dir[k]
            rel = q - p0
            t = np.clip(np.einsum("ij,ij->i", rel, dvec), 0.0, self.seg_len[k])
            foot = p0 + dvec * t[:, None]
            off = q - foot
            dist = np.hypot(off[:, 0], off[:, 1])
            # at a segment end the side comes from the vertex's mean direction
            tang = np.where(
                (t <= 0.0)[:, None],
                self.vertex_dir[k],
                np.where((t >= self.seg_len[k])[:, None], self.vertex_dir[k + 1], dvec),
            )
            cross = tang[:, 0] * off[:, 1] - tang[:, 1] * off[:, 0]
            better = dist < best_d
            best_d = np.where(better, dist, best_d)
            best_sign = np.where(better, np.sign(cross), best_sign)
            best_s = np.where(better, self.s[k] + t, best_s)
        return (best_sign * best_d).reshape(shape), best_s.reshape(shape)

    def between(self, s0, s1, step_km=50.0):
        """Points [m] of the curve from arc length s0 to s1 [m], every ``step_km``."""
        s = np.arange(s0, s1 + 1.0, step_km * 1e3)
        return np.column_stack([np.interp(s, self.s, self.points[:, k]) for k in (0, 1)]), s

    def normal_left(self, s):
        """Return the unit left normals at arc lengths ``s`` [m]."""
        tx = np.interp(s, self.s[:-1] + 0.5 * self.seg_len, self.seg_dir[:, 0])
        ty = np.interp(s, self.s[:-1] + 0.5 * self.seg_len, self.seg_dir[:, 1])
        norm = np.hypot(tx, ty)
        return np.column_stack([-ty / norm, tx / norm])


@dataclass(frozen=True)
class _Geometry:
    """The frontal geometry at one scenario time (plane metres, degrees)."""

    low: np.ndarray
    triple: np.ndarray
    occluded_m: float
    warm: _Curve  # low-side ray, occluded front, triple point (s = 0), warm front
    cold: _Curve  # back ray, triple point (s = 0), cold front
    warm_end_m: float
    cold_end_m: float


# --------------------------------------------------------------------------
# The scenario
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class ScenarioSpec:
    """Parameters of the invented event (all values invented for the demo).

    Angles are bearings on the conformal plane [deg clockwise from north];
    scenario time ``tau`` runs from 0 at ``start`` to ``hours``.

    Attributes
    ----------
    low_start_km : tuple of float
        Plane position of the low centre at ``start`` [km].
    low_velocity_start_ms, low_velocity_end_ms : tuple of float
        (east, north) velocity of the low at the start and the end of the
        window [m s-1], linear in time between (it slows and turns left as it
        occludes).
    occlusion_start_h, occlusion_rate_ms : float
        When the triple point starts to move away from the low centre [h] and
        how fast the occluded front lengthens [m s-1].
    occlusion_bearing_deg : tuple of float
        Bearing from the low centre to the triple point at the occlusion's
        start and at the end of the window [deg].
    warm_heading_deg, cold_heading_deg : tuple of float
        Heading of each surface front where it leaves the triple point, at the
        start and the end of the window [deg]: the warm sector narrows.
    warm_turn_deg_per_1000km, cold_turn_deg_per_1000km : float
        Curvature of the fronts: heading change per 1000 km along them [deg].
    warm_length_km, cold_length_km : float
        Distance from the triple point at which each front's contrast has
        fallen to half (frontolysis beyond) [km].
    l_warm_km, l_cold_km : float
        Half-width L of the tanh zones, T = Tb + dT (1 + tanh(-d/L)) / 2 [km].
    warm_slope_1_in, cold_slope_1_in, occluded_slope_1_in : float
        Frontal slopes [1 in N] (common practice values, no source).
    p_centre_start_hpa, deepening_hpa, deepening_efold_h : float
        Central pressure p(t) = p0 - D (1 - exp(-t/T)) / (1 - exp(-48/T)).
    """

    start: str = "2027-01-14T00:00:00Z"
    hours: int = 48
    step_h: int = 3
    lat_range: tuple = (39.0, 63.0)
    lon_range: tuple = (-33.0, 13.0)
    resolution_deg: float = 0.25
    low_start_km: tuple = (-1250.0, -520.0)
    low_velocity_start_ms: tuple = (13.5, 5.0)
    low_velocity_end_ms: tuple = (6.5, 7.0)
    occlusion_start_h: float = 21.0
    occlusion_rate_ms: float = 6.0
    occlusion_bearing_deg: tuple = (125.0, 105.0)
    warm_heading_deg: tuple = (98.0, 112.0)
    cold_heading_deg: tuple = (205.0, 190.0)
    warm_turn_deg_per_1000km: float = 14.0
    cold_turn_deg_per_1000km: float = 16.0
    warm_length_km: float = 1700.0
    cold_length_km: float = 2100.0
    fade_km: float = 150.0
    l_warm_km: float = 65.0
    l_cold_km: float = 50.0
    warm_slope_1_in: float = 150.0
    cold_slope_1_in: float = 50.0
    occluded_slope_1_in: float = 100.0
    dt_warm_k: float = 7.0
    trowal_k: float = 3.0
    trowal_km: float = 90.0
    low_level_reduction: float = 0.2
    t_sfc_50n_k: float = 278.5
    t_sfc_gradient_k_per_deg: float = 0.35
    zone_gradient_k_per_deg: float = 0.6
    zone_half_width_deg: float = 8.0
    lapse_k_per_km: float = 6.5
    tropopause_38n_m: float = 11500.0
    tropopause_drop_m_per_deg: float = 150.0
    fold_depth_m: float = 1500.0
    fold_behind_km: float = 550.0
    fold_width_km: float = 250.0
    fold_return_k_per_km: float = 7.0
    strat_cooling_k: float = 4.0
    p_centre_start_hpa: float = 1000.0
    deepening_hpa: float = 28.0
    deepening_efold_h: float = 24.0
    p_cap_hpa: float = 1024.0
    cone_hpa_per_100km: float = 1.55
    core_km: float = 250.0
    east_rise_hpa_per_100km: float = 0.35
    trough_hpa: tuple = (1.5, 2.0, 2.0)  # warm, cold, occluded
    trough_decay_km: float = 250.0
    trough_kink_km: float = 10.0
    cold_pool_k: float = 9.0
    cold_pool_radius_km: float = 90.0
    cold_pool_top_m: float = 650.0
    shield_ahead_nm: float = 250.0
    band_behind_nm: tuple = (50.0, 100.0)
    plateau_m: float = 150.0
    hills: tuple = (  # (lat, lon, height m, radius km): invented terrain on real land
        (56.9, -4.6, 520.0, 110.0),
        (52.6, -3.7, 330.0, 80.0),
        (54.5, -2.8, 260.0, 60.0),
        (45.4, 2.6, 650.0, 150.0),
        (43.1, -5.2, 380.0, 130.0),
        (61.3, 8.0, 900.0, 160.0),
        (52.9, -8.9, 180.0, 70.0),
    )
    runs: tuple = (
        ("2027-01-14T00Z", "2027-01-14T00:00:00Z", 1.5),
        ("2027-01-13T12Z", "2027-01-13T12:00:00Z", -2.0),
    )


class Scenario:
    """Analytic fields of the invented event.

    Parameters
    ----------
    spec : ScenarioSpec, optional

    Notes
    -----
    ``tau`` is scenario time [s] since ``spec.start``: the analyses are the
    scenario at ``tau = valid - start``; a run with timing offset ``o`` hours
    (positive = fronts early) shows the scenario at ``tau + o * 3600``.
    """

    def __init__(self, spec=None):
        self.spec = spec or ScenarioSpec()
        s = self.spec
        self.proj = _Stereo()
        self.start = np.datetime64(s.start.rstrip("Z"), "s")
        lat = np.round(np.arange(s.lat_range[0], s.lat_range[1] + 1e-9, s.resolution_deg), 6)
        lon = np.round(np.arange(s.lon_range[0], s.lon_range[1] + 1e-9, s.resolution_deg), 6)
        self.lat, self.lon = lat, lon
        self.lon2, self.lat2 = np.meshgrid(lon, lat)
        self.x2, self.y2 = self.proj.forward(self.lon2, self.lat2)
        self.orog2 = self._orography_grid()
        self._orog_interp = RegularGridInterpolator(
            (lat, lon), self.orog2, bounds_error=False, fill_value=0.0
        )
        site = {n: (la, lo) for n, la, lo, _ in SITES}[COLD_POOL_SITE]
        self.cold_pool_xy = np.array(self.proj.forward(site[1], site[0]))
        self._geo = {}

    # ---- land ----------------------------------------------------------
    def _orography_grid(self):
        """Invented terrain [m] on the grid, on the real land outline.

        Land is where the Natural Earth 1:110 m land polygons (public domain,
        bundled with the kit for its maps) cover a grid point, so the maps'
        coastlines match the model's land; the heights are invented: a rise
        inland to ``plateau_m`` and a few Gaussian hills (``hills``), going to
        0 m at the coast.
        """
        s = self.spec
        land = shapely.union_all(coast_geometries("land"))
        mask = shapely.contains_xy(land, self.lon2, self.lat2).astype(float)
        inland = gaussian_filter(mask, 2.0, mode="nearest")
        coast = gaussian_filter(mask, 0.7, mode="nearest")
        height = s.plateau_m * _smoothstep((inland - 0.5) / 0.5)
        for hlat, hlon, hm, hr in s.hills:
            r2 = ((self.lat2 - hlat) * 111.0) ** 2 + (
                (self.lon2 - hlon) * 111.0 * np.cos(np.radians(hlat))
            ) ** 2
            height = height + hm * np.exp(-r2 / (2 * hr**2))
        height = height * mask * _smoothstep(coast / 0.8)
        return np.round(np.where(height < 1.0, 0.0, height), 1)

    def orography(self, x, y):
        """Height of the model surface [m] at plane points: the grid's, bilinearly."""
        lon, lat = self.proj.inverse(np.ravel(x), np.ravel(y))
        return self._orog_interp(np.column_stack([lat, lon])).reshape(np.shape(x))

    # ---- geometry -------------------------------------------------------
    def _frac(self, tau):
        return float(np.clip(tau / (self.spec.hours * 3600.0), 0.0, 1.0))

    def low_centre(self, tau):
        """Plane position of the low centre [m] (velocity linear in time)."""
        s = self.spec
        v0, v1 = np.array(s.low_velocity_start_ms), np.array(s.low_velocity_end_ms)
        big_t = s.hours * 3600.0
        return np.array(s.low_start_km) * 1e3 + v0 * tau + (v1 - v0) * tau**2 / (2 * big_t)

    def occluded_length(self, tau):
        """Length of the occluded front [m] (0 before the occlusion starts)."""
        s = self.spec
        return max(0.0, tau - s.occlusion_start_h * 3600.0) * s.occlusion_rate_ms

    def geometry(self, tau):
        """Return the :class:`_Geometry` at scenario time ``tau`` [s] (cached)."""
        key = round(float(tau), 3)
        if key in self._geo:
            return self._geo[key]
        s = self.spec
        f = self._frac(tau)
        low = self.low_centre(tau)
        ell = self.occluded_length(tau)
        frac_o = np.clip(
            (tau - s.occlusion_start_h * 3600) / ((s.hours - s.occlusion_start_h) * 3600), 0, 1
        )
        b_occ = s.occlusion_bearing_deg[0] + frac_o * (
            s.occlusion_bearing_deg[1] - s.occlusion_bearing_deg[0]
        )
        triple = low + ell * _unit(b_occ)
        hw0 = s.warm_heading_deg[0] + f * (s.warm_heading_deg[1] - s.warm_heading_deg[0])
        hc0 = s.cold_heading_deg[0] + f * (s.cold_heading_deg[1] - s.cold_heading_deg[0])
        g = float(_smoothstep(ell / 250e3))
        kw = s.warm_turn_deg_per_1000km / 1e6
        kc = s.cold_turn_deg_per_1000km / 1e6
        wend, cend = s.warm_length_km * 1e3, s.cold_length_km * 1e3
        bend = _angle_diff(b_occ, hw0)

        def warm_fwd(sv):
            line = hw0 + kw * np.clip(sv, 0.0, wend + 400e3)
            return line + g * bend * (1.0 - _smoothstep(sv / 300e3))

        beyond = hw0 + g * bend  # the ray beyond the low, on from the occluded front

        def warm_back(u):
            return np.where(u <= ell, b_occ if ell > 0 else hw0, beyond)

        def cold_fwd(sv):
            return hc0 + kc * np.clip(sv, 0.0, cend + 400e3)

        warm = _Curve.from_headings(triple, warm_fwd, warm_back, 6000e3, 4000e3)
        cold = _Curve.from_headings(triple, cold_fwd, lambda u: hc0 + 0 * u, 6000e3, 4000e3)
        geo = _Geometry(low, triple, ell, warm, cold, wend, cend)
        self._geo[key] = geo
        return geo

    def distances(self, x, y, tau):
        """Signed distances from the surface fronts [m], positive toward the cold side.

        Returns
        -------
        d_w, d_c, s_w, s_c : ndarray
            Distance from the warm-front curve (which runs on from the triple
            point back along the occluded front to the low) and from the
            cold-front curve, positive on the cold side of each, and the arc
            length of the foot point from the triple point [m] (negative on
            the occluded front for ``s_w``).
        """
        geo = self.geometry(tau)
        d_w, s_w = geo.warm.locate(x, y)  # cold side of the warm front: left
        d_c, s_c = geo.cold.locate(x, y)  # cold side of the cold front: right
        return d_w, -d_c, s_w, s_c

    def warm_sector(self, d_w, d_c, h):
        """Warm-sector weight 0..1 at height ``h`` [m] (product of two tanh zones)."""
        s = self.spec
        dw = d_w - s.warm_slope_1_in * h
        dc = d_c - s.cold_slope_1_in * h
        return _s(-dw / (s.l_warm_km * 1e3)) * _s(-dc / (s.l_cold_km * 1e3))

    def fades(self, s_w, s_c):
        """Weights 0..1 of each front's frontolysis beyond its length (1 = zone spread out)."""
        s = self.spec
        fk = s.fade_km * 1e3
        return _s((s_w - s.warm_length_km * 1e3) / fk), _s((s_c - s.cold_length_km * 1e3) / fk)

    def occluded_weight(self, s_w, tau):
        """Weight 0..1 of the occluded stretch (between the low and the triple point)."""
        ell = self.occluded_length(tau)
        if ell <= 0:
            return np.zeros_like(s_w)
        return _s((s_w + ell - 60e3) / 50e3) * _s((60e3 - s_w) / 60e3) * min(1.0, ell / 150e3)

    # ---- temperature ----------------------------------------------------
    def tropopause(self, lat):
        """Background tropopause height [m]: lower on the cold (poleward) side."""
        s = self.spec
        return s.tropopause_38n_m - s.tropopause_drop_m_per_deg * (lat - 38.0)

    def fold_depth(self, d_w, d_c, s_c):
        """Depth [m] by which the tropopause folds down behind the cold front aloft."""
        s = self.spec
        near = _s((1300e3 - np.abs(s_c - 300e3)) / 300e3) * _s((300e3 - d_w) / 150e3)
        return (
            s.fold_depth_m
            * near
            * np.exp(-(((d_c - s.fold_behind_km * 1e3) / (s.fold_width_km * 1e3)) ** 2))
        )

    def surface_background(self, lat):
        """Background sea-level temperature [K]: a broad baroclinic zone centred on 50 N."""
        s = self.spec
        return (
            s.t_sfc_50n_k
            - s.t_sfc_gradient_k_per_deg * (lat - 50.0)
            - s.zone_gradient_k_per_deg
            * s.zone_half_width_deg
            * np.tanh((lat - 50.0) / s.zone_half_width_deg)
        )

    def temperature(self, x, y, lat, h, tau):
        """Air temperature [K] at height ``h`` [m] above sea level (broadcastable)."""
        s = self.spec
        d_w, d_c, s_w, s_c = self.distances(x, y, tau)
        t_sfc = self.surface_background(lat)
        htr = self.tropopause(lat)
        soft = 250.0
        lapse = s.lapse_k_per_km * 1e-3

        def softmin(a, b):
            return -soft * np.logaddexp(-a / soft, -b / soft)

        t = t_sfc - lapse * softmin(h, htr)
        # tropopause fold: stratospheric (isothermal) air below the background
        # tropopause; above it the column returns to the background at a stable
        # lapse rate (fold_return_k_per_km < dry adiabatic), so potential
        # temperature rises with height everywhere
        fold = self.fold_depth(d_w, d_c, s_c)
        excess = lapse * (softmin(h, htr) - softmin(h, htr - fold))
        above = s.fold_return_k_per_km * 1e-3 * soft * np.logaddexp(0.0, (h - htr) / soft)
        t = t + np.maximum(excess - above, 0.0)
        # the warm sector's excess fades toward the tropopause and reverses above it
        # (and is a little smaller in the lowest kilometre, over the cooler sea)
        amp = s.dt_warm_k * (1.0 - s.low_level_reduction * _s((800.0 - h) / 300.0)) * _s(
            (7000.0 - h) / 1500.0
        ) - s.strat_cooling_k * _s((h - 9500.0) / 800.0)
        fw, fc = self.fades(s_w, s_c)
        # frontolysis: beyond each front's length its zone widens sixteenfold, so
        # the contrast is spread over a broad baroclinic zone with no front in it
        ww = _s(-(d_w - s.warm_slope_1_in * h) / (s.l_warm_km * 1e3 * (1 + 15 * fw)))
        wc = _s(-(d_c - s.cold_slope_1_in * h) / (s.l_cold_km * 1e3 * (1 + 15 * fc)))
        t = t + amp * ww * wc
        # the warm air lifted over the occluded front: a warm tongue (trowal),
        # leaning 1 in occluded_slope_1_in toward the cold side of the warm
        # front, strongest near 1.5 km, weak at the ground
        occ = self.occluded_weight(s_w, tau)
        lean = d_w - s.occluded_slope_1_in * h
        tongue = np.exp(-((lean / (s.trowal_km * 1e3)) ** 2))
        vert = (0.45 + 0.55 * _s((h - 700.0) / 400.0)) * _s((6500.0 - h) / 1200.0)
        t = t + s.trowal_k * occ * tongue * vert
        # shallow cold pool ahead of the warm front (scoured out in the warm sector)
        r2 = (x - self.cold_pool_xy[0]) ** 2 + (y - self.cold_pool_xy[1]) ** 2
        pool = np.exp(-r2 / (2 * (s.cold_pool_radius_km * 1e3) ** 2))
        ahead = (1 - ww) * wc
        t = t - s.cold_pool_k * pool * _s((s.cold_pool_top_m - h) / 150.0) * ahead
        return t

    # ---- pressure -------------------------------------------------------
    def central_pressure(self, tau):
        """Central pressure of the low's cone [Pa] (deepening that slows as it occludes)."""
        s = self.spec
        big = s.deepening_efold_h * 3600.0
        norm = 1.0 - math.exp(-s.hours * 3600.0 / big)
        return 100.0 * (s.p_centre_start_hpa - s.deepening_hpa * (1 - np.exp(-tau / big)) / norm)

    def mslp(self, x, y, tau):
        """Mean-sea-level pressure [Pa]: a low with troughs kinked at the fronts."""
        s = self.spec
        low = self.low_centre(tau)
        r = np.hypot(x - low[0], y - low[1])
        r0 = s.core_km * 1e3
        raw = self.central_pressure(tau) + s.cone_hpa_per_100km * 1e-3 * (
            np.sqrt(r**2 + r0**2) - r0
        )
        cap = s.p_cap_hpa * 100.0
        scale = 400.0
        p = cap - scale * np.logaddexp(0.0, (cap - raw) / scale)
        d_w, d_c, s_w, s_c = self.distances(x, y, tau)
        fw, fc = self.fades(s_w, s_c)
        lam, eps = s.trough_decay_km * 1e3, s.trough_kink_km * 1e3

        def vee(d):  # a trough with a kink (a rounded V) on the front
            return np.exp(-np.sqrt(d**2 + eps**2) / lam)

        occ = self.occluded_weight(s_w, tau)
        on_warm = _s(s_w / 60e3) * (1 - fw)
        on_cold = _s(s_c / 60e3) * (1 - fc) * _s((200e3 - d_w) / 100e3)
        aw, ac, ao = (100.0 * a for a in s.trough_hpa)
        p = p - aw * on_warm * vee(d_w) - ac * on_cold * vee(d_c) - ao * occ * vee(d_w)
        # a high over the east of the domain: a weak southerly geostrophic background
        return p + s.east_rise_hpa_per_100km * 1e-3 * x

    # ---- precipitation and humidity ------------------------------------
    def precip_rate(self, x, y, tau):
        """Surface precipitation rate [mm h-1]."""
        s = self.spec
        d_w, d_c, s_w, s_c = self.distances(x, y, tau)
        fw, fc = self.fades(s_w, s_c)
        lead = s.shield_ahead_nm * NM
        ahead = _s((-d_c) / 60e3)  # ahead of the cold front
        ramp = 1.0 + 2.0 * np.clip(1 - d_w / lead, 0, 1)  # 1 mm/h at the edge, 3 at the front
        shield = ramp * _s(d_w / 15e3) * _s((lead - d_w) / 20e3) * ahead * _s(s_w / 80e3)
        shield *= 1 - fw
        lo, hi = (v * NM for v in s.band_behind_nm)
        mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
        band = 6.0 * np.exp(-(((d_c - mid) / (0.85 * half)) ** 2)) * _s((80e3 - d_w) / 60e3)
        band *= (1 - fc) * _s(s_c / 60e3)
        # the occlusion: steady rain from the warm tongue aloft, wrapping round the
        # low on the cold side of the occluded front
        occ = self.occluded_weight(s_w, tau)
        wrap = 2.5 * occ * _s((d_w + 40e3) / 20e3) * _s((220e3 - d_w) / 40e3)
        warm = 0.2 * self.warm_sector(d_w, d_c, 0.0)
        return shield + band + wrap + warm

    def relative_humidity(self, x, y, h, tau, rate=None):
        """Relative humidity [%] at height ``h`` [m]."""
        s = self.spec
        d_w, d_c, s_w, s_c = self.distances(x, y, tau)
        fw, fc = self.fades(s_w, s_c)
        hkm = h / 1000.0
        rh = np.clip(80.0 - 7.0 * hkm, 20.0, 80.0) + 0 * d_w

        def blend(rh, target, weight):
            return rh + (target - rh) * weight

        w = self.warm_sector(d_w, d_c, h)
        rh = blend(rh, 92.0, w * _s((2500.0 - h) / 500.0))
        lead = 300 * NM
        ahead = _s(-d_c / 60e3) * _s(s_w / 80e3) * (1 - fw)
        wedge = (
            _s(d_w / 40e3)
            * _s((lead - d_w) / 60e3)
            * _s((s.warm_slope_1_in * h + 40e3 - d_w) / 30e3)
            * _s((7500.0 - h) / 600.0)
            * ahead
        )
        under = _s(d_w / 40e3) * _s((lead - d_w) / 60e3) * _s((2000.0 - h) / 400.0) * ahead
        rh = blend(rh, 90.0, under)
        rh = blend(rh, 98.0, wedge)
        # cloud band over the cold frontal surface, reaching back over the
        # heavy rain band 50-100 nm behind the surface front
        band = (
            _s((d_c + 60e3) / 25e3)
            * _s((300e3 - d_c) / 150e3)
            * _s((s.cold_slope_1_in * h + 200e3 - d_c) / 150e3)
            * _s((6500.0 - h) / 600.0)
            * _s((150e3 - d_w) / 80e3)
            * (1 - fc)
            * _s(s_c / 60e3)
        )
        rh = blend(rh, 97.0, band)
        # the occlusion's cloud: deep over the warm tongue and on its cold side
        occ = self.occluded_weight(s_w, tau)
        head = (
            occ
            * _s((d_w - s.occluded_slope_1_in * h + 60e3) / 30e3)
            * _s((260e3 - d_w) / 60e3)
            * _s((7000.0 - h) / 700.0)
        )
        rh = blend(rh, 97.0, head)
        dry = (
            _s((d_c - s.cold_slope_1_in * h - 150e3) / 50e3)
            * _s((h - 2000.0) / 500.0)
            * _s((200e3 - d_w) / 100e3)
        )
        rh = blend(rh, 12.0, dry)
        if rate is not None:
            rh = blend(rh, 96.0, np.clip(rate / 3.0, 0, 1) * _s((1500.0 - h) / 300.0))
        return np.clip(rh, 5.0, 100.0)

    # ---- gridded fields ------------------------------------------------
    def level_fields(self, tau):
        """Temperature [K] and height [m] on the levels, consistent with each other.

        The temperature of a level is taken at the level's own height, and
        the heights follow from the temperatures (hypsometric), so the pair is
        solved by fixed-point iteration from the standard-atmosphere heights
        until the heights change by less than ``HEIGHT_TOLERANCE_M`` (the last
        change is kept in ``self.height_residual_m``).
        """
        x, y, lat = self.x2, self.y2, self.lat2
        t, z, msl, t_sea, self.height_residual_m = _solve_levels(self, x, y, lat, tau)
        return t, z, msl, t_sea

    def fields(self, tau):
        """Every written field on the grid at scenario time ``tau`` [s] (no precip amount).

        Returns
        -------
        dict of ndarray
            ``t`` [K], ``rh`` [%], ``z`` [m], ``u``, ``v`` [m s-1] on the levels
            (level, lat, lon); ``msl`` [Pa], ``t2m``, ``d2m`` [K], ``u10``,
            ``v10`` [m s-1], ``rate`` [mm h-1] (lat, lon).
        """
        x, y, lat = self.x2, self.y2, self.lat2
        t, z, msl, t_sea = self.level_fields(tau)
        rate = self.precip_rate(x, y, tau)
        rh = self.relative_humidity(x, y, z, tau, rate=rate)
        h2 = self.orog2 + 2.0
        t2m = self.temperature(x, y, lat, h2, tau)
        rh2m = self.relative_humidity(x, y, h2, tau, rate=rate)
        u, v = geostrophic_from_height(z, self.lat, self.lon)
        us, vs = geostrophic_from_pressure(msl, msl / (RD * t_sea), self.lat, self.lon)
        ang = math.radians(20.0)  # back by 20 deg (counter-clockwise rotation)
        u10 = 0.75 * (us * math.cos(ang) - vs * math.sin(ang))
        v10 = 0.75 * (us * math.sin(ang) + vs * math.cos(ang))
        return {
            "t": t,
            "rh": rh,
            "z": z,
            "u": u,
            "v": v,
            "msl": msl,
            "t2m": t2m,
            "d2m": dewpoint_from_rh(t2m, rh2m),
            "u10": u10,
            "v10": v10,
            "rate": rate,
        }

    def accumulations(self, tau_ref, taus, sub_min=10):
        """Return the precipitation amounts since ``tau_ref`` at ``taus`` [kg m-2] (trapezoid)."""
        out = {}
        total = np.zeros_like(self.x2)
        dt = sub_min * 60.0
        tau = tau_ref
        prev = self.precip_rate(self.x2, self.y2, tau)
        for target in sorted(taus):
            while tau < target - 1e-6:
                step = min(dt, target - tau)
                nxt = self.precip_rate(self.x2, self.y2, tau + step)
                total = total + 0.5 * (prev + nxt) * step / 3600.0
                tau, prev = tau + step, nxt
            out[target] = total.copy()
        return out


# --------------------------------------------------------------------------
# Physics helpers (numpy)
# --------------------------------------------------------------------------


def hypsometric_heights(msl_pa, t_sea_k, t_levels_k, levels_hpa):
    r"""Heights of pressure levels [m] from sea-level pressure and temperatures.

    Parameters
    ----------
    msl_pa : ndarray (...)
        Mean-sea-level pressure [Pa] (height 0 m).
    t_sea_k : ndarray (...)
        Air temperature at sea level [K].
    t_levels_k : ndarray (level, ...)
        Air temperature on the levels [K], 1000 hPa first.
    levels_hpa : ndarray (level,)
        Pressure levels [hPa], decreasing.

    Returns
    -------
    ndarray (level, ...)
        Geopotential height [m].

    Notes
    -----
    Layer form of the hypsometric equation with the layer-mean temperature
    of a profile linear in ln p (Wallace & Hobbs 2006, Eq. 3.29; number from
    memory): :math:`z_2 - z_1 = (R_d / g_0) (T_1 + T_2)/2 \\ln(p_1/p_2)`.
    """
    t_levels_k = np.asarray(t_levels_k, float)
    p = np.asarray(levels_hpa, float).reshape((-1,) + (1,) * (t_levels_k.ndim - 1)) * 100.0
    z = np.empty_like(t_levels_k)
    z[0] = RD / G0 * 0.5 * (t_sea_k + t_levels_k[0]) * np.log(msl_pa / p[0])
    for k in range(1, len(p)):
        z[k] = z[k - 1] + RD / G0 * 0.5 * (t_levels_k[k - 1] + t_levels_k[k]) * np.log(
            p[k - 1] / p[k]
        )
    return z


def _spherical_gradient(field, lat, lon):
    """(d/dx, d/dy) of a (..., lat, lon) field on the sphere [unit m-1], centred."""
    phi = np.radians(lat)
    dlam = np.radians(lon[1] - lon[0])
    dphi = np.radians(lat[1] - lat[0])
    d_dlam = np.gradient(field, dlam, axis=-1, edge_order=2)
    d_dphi = np.gradient(field, dphi, axis=-2, edge_order=2)
    return d_dlam / (EARTH_RADIUS * np.cos(phi)[:, None]), d_dphi / EARTH_RADIUS


def geostrophic_from_height(z, lat, lon):
    r"""Geostrophic wind [m s-1] from geopotential height [m] on (..., lat, lon).

    Notes
    -----
    :math:`u_g = -(g_0/f) \\partial z/\\partial y`, :math:`v_g = (g_0/f) \\partial z/\\partial x`,
    :math:`f = 2\\Omega\\sin\\phi` (Holton & Hakim 2013, Eq. 3.12; number from memory).
    """
    dzdx, dzdy = _spherical_gradient(z, lat, lon)
    f = 2 * OMEGA * np.sin(np.radians(lat))[:, None]
    return -G0 / f * dzdy, G0 / f * dzdx


def geostrophic_from_pressure(p, rho, lat, lon):
    """Geostrophic wind [m s-1] from pressure [Pa] on a level surface; rho [kg m-3]."""
    dpdx, dpdy = _spherical_gradient(p, lat, lon)
    f = 2 * OMEGA * np.sin(np.radians(lat))[:, None]
    return -dpdy / (rho * f), dpdx / (rho * f)


def dewpoint_from_rh(t_k, rh_pct):
    """Dew point [K] from temperature [K] and relative humidity [%] (Bolton 1980, Eq. 10)."""
    tc = t_k - 273.15
    e = rh_pct / 100.0 * 6.112 * np.exp(17.67 * tc / (tc + 243.5))
    ln = np.log(e / 6.112)
    return 243.5 * ln / (17.67 - ln) + 273.15


# --------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------

_VARS = {
    # name: (dims, standard_name, long_name, units, extra attributes)
    "t": ("3d", "air_temperature", "air temperature", "K", {}),
    "rh": ("3d", "relative_humidity", "relative humidity (over water)", "%", {}),
    "u": ("3d", "eastward_wind", "eastward wind (geostrophic)", "m s-1", {}),
    "v": ("3d", "northward_wind", "northward wind (geostrophic)", "m s-1", {}),
    "z": ("3d", "geopotential_height", "geopotential height", "m", {}),
    "msl": ("2d", "air_pressure_at_mean_sea_level", "mean sea level pressure", "Pa", {}),
    "t2m": (
        "2d",
        "air_temperature",
        "2 m air temperature",
        "K",
        {"height": "2 m", "coordinates": "height_2m"},
    ),
    "d2m": (
        "2d",
        "dew_point_temperature",
        "2 m dew point temperature",
        "K",
        {"height": "2 m", "coordinates": "height_2m"},
    ),
    "u10": (
        "2d",
        "eastward_wind",
        "10 m eastward wind",
        "m s-1",
        {"height": "10 m", "coordinates": "height_10m"},
    ),
    "v10": (
        "2d",
        "northward_wind",
        "10 m northward wind",
        "m s-1",
        {"height": "10 m", "coordinates": "height_10m"},
    ),
    "orog": (
        "static",
        "surface_altitude",
        "height of the model surface above mean sea level",
        "m",
        {},
    ),
    "precip": (
        "2d",
        "precipitation_amount",
        "precipitation amount accumulated since the forecast reference time",
        "kg m-2",
        {"cell_methods": "time: sum"},
    ),
}


def _iso(t64):
    return str(np.datetime64(t64, "s")) + "Z"


def pack(name, values):
    """CF int16 packing used in the files: (packed int16, scale_factor, add_offset)."""
    scale, offset = _PACKING[name]
    packed = np.round((np.asarray(values, float) - offset) / scale)
    if np.any(np.abs(packed) > 32766):
        raise ValueError(f"{name}: value out of the int16 packing range")
    return packed.astype(np.int16), scale, offset


def _write_file(path, scen, fields, accum, valid, reference, label, kind):
    s = scen.spec
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".part")
    with netCDF4.Dataset(tmp, "w", format="NETCDF4") as nc:
        nc.Conventions = "CF-1.8"
        nc.title = f"frontshift invented demo scenario: {kind} {label}"
        nc.source = (
            "frontshift invented demo scenario (tools.scenario): analytic fields, "
            "invented weather, not a real model run"
        )
        nc.institution = "frontshift demo (invented)"
        nc.forecast_reference_time = _iso(reference)
        nc.run = label
        nc.product = kind
        nc.comment = CAUTION
        nc.references = "see sample_grids/README.md and truth.json"
        nc.createDimension("time", 1)
        nc.createDimension("level", len(LEVELS_HPA))
        nc.createDimension("lat", len(scen.lat))
        nc.createDimension("lon", len(scen.lon))
        units = "hours since " + s.start[:10] + " 00:00:00"
        tv = nc.createVariable("time", "f8", ("time",))
        tv.setncatts(
            {
                "standard_name": "time",
                "long_name": "valid time",
                "units": units,
                "calendar": "standard",
                "axis": "T",
            }
        )
        hours = (valid - scen.start) / np.timedelta64(1, "h")
        tv[:] = [hours]
        rv = nc.createVariable("forecast_reference_time", "f8", ())
        rv.setncatts(
            {
                "standard_name": "forecast_reference_time",
                "units": units,
                "calendar": "standard",
                "long_name": "run start",
            }
        )
        rv.assignValue((reference - scen.start) / np.timedelta64(1, "h"))
        pv = nc.createVariable("forecast_period", "f8", ("time",))
        pv.setncatts(
            {"standard_name": "forecast_period", "units": "hours", "long_name": "lead time"}
        )
        pv[:] = [(valid - reference) / np.timedelta64(1, "h")]
        lv = nc.createVariable("level", "f8", ("level",))
        lv.setncatts(
            {
                "standard_name": "air_pressure",
                "long_name": "pressure level",
                "units": "hPa",
                "positive": "down",
                "axis": "Z",
            }
        )
        lv[:] = LEVELS_HPA
        la = nc.createVariable("lat", "f8", ("lat",))
        la.setncatts({"standard_name": "latitude", "units": "degrees_north", "axis": "Y"})
        la[:] = scen.lat
        lo = nc.createVariable("lon", "f8", ("lon",))
        lo.setncatts({"standard_name": "longitude", "units": "degrees_east", "axis": "X"})
        lo[:] = scen.lon
        for hname, hval in (("height_2m", 2.0), ("height_10m", 10.0)):
            hv = nc.createVariable(hname, "f8", ())
            hv.setncatts({"standard_name": "height", "units": "m", "positive": "up", "axis": "Z"})
            hv.assignValue(hval)
        values = dict(fields, precip=accum, orog=scen.orog2)
        for name, (kind_dims, std, long, unit, extra) in _VARS.items():
            dims = {
                "3d": ("time", "level", "lat", "lon"),
                "2d": ("time", "lat", "lon"),
                "static": ("lat", "lon"),
            }[kind_dims]
            chunks = (
                (1, len(LEVELS_HPA), len(scen.lat), len(scen.lon)) if kind_dims == "3d" else None
            )
            var = nc.createVariable(
                name,
                "i2",
                dims,
                zlib=True,
                complevel=9,
                shuffle=True,
                chunksizes=chunks,
                fill_value=-32767,
            )
            packed, scale, offset = pack(name, values[name])
            var.setncatts(
                {
                    "standard_name": std,
                    "long_name": long,
                    "units": unit,
                    "scale_factor": scale,
                    "add_offset": offset,
                    **extra,
                }
            )
            var.set_auto_maskandscale(False)
            var[:] = packed if kind_dims == "static" else packed[None]
    tmp.replace(path)


def _sets(spec):
    """(folder, label, reference datetime64, timing offset [h], kind) of every file set."""
    start = np.datetime64(spec.start.rstrip("Z"), "s")
    out = [("analyses", "analysis", start, 0.0, "verifying analysis")]
    for label, ref, offset in spec.runs:
        out.append(
            (f"runs/{label}", label, np.datetime64(ref.rstrip("Z"), "s"), offset, "forecast run")
        )
    return out


def _file_name(folder, valid, reference):
    if folder == "analyses":
        return f"valid_{str(valid)[:13].replace('-', '').replace('T', '')}.nc"
    lead = int((valid - reference) / np.timedelta64(1, "h"))
    return f"step_{lead:03d}.nc"


def write_steps(out, steps=None, spec=None):
    """Write the gridded files of the sample event (all, or a selection).

    Parameters
    ----------
    out : str or Path
        Event folder (``sample_grids``).
    steps : iterable of (str, int), optional
        Pairs (set, valid hour since the window start) to write, set being
        ``"analyses"`` or a run label such as ``"2027-01-14T00Z"``; default all.
    spec : ScenarioSpec, optional

    Returns
    -------
    list of Path
        The files written.
    """
    scen = Scenario(spec)
    s = scen.spec
    out = Path(out)
    wanted = None if steps is None else {(a, int(b)) for a, b in steps}
    written = []
    for folder, label, reference, offset, kind in _sets(s):
        set_name = "analyses" if folder == "analyses" else label
        hours = [
            h for h in range(0, s.hours + 1, s.step_h) if wanted is None or (set_name, h) in wanted
        ]
        if not hours:
            continue
        tau_ref = (reference - scen.start) / np.timedelta64(1, "s") + offset * 3600.0
        taus = {h: h * 3600.0 + offset * 3600.0 for h in hours}
        amounts = scen.accumulations(tau_ref, list(taus.values()))
        for hour in hours:
            valid = scen.start + np.timedelta64(hour, "h")
            fields = scen.fields(taus[hour])
            path = out / folder / _file_name(folder, valid, reference)
            _write_file(path, scen, fields, amounts[taus[hour]], valid, reference, label, kind)
            written.append(path)
    return written


# --------------------------------------------------------------------------
# Sites, stations, truth, README
# --------------------------------------------------------------------------


def _write_sites(out):
    lines = ["name,lat,lon,elevation_m"] + [
        f"{n},{la:.2f},{lo:.2f},{el:.0f}" for n, la, lo, el in SITES
    ]
    (out / "sites.csv").write_text("\n".join(lines) + "\n")


#: the level heights are solved until they change by less than this [m]
HEIGHT_TOLERANCE_M = 0.02


def _solve_levels(scen, x, y, lat, tau, max_iterations=30):
    """(t, z, msl, t_sea, last change [m]) on the levels at points (see Scenario.level_fields)."""
    levels = np.array(LEVELS_HPA)
    msl = scen.mslp(x, y, tau)
    t_sea = scen.temperature(x, y, lat, 0.0, tau)
    shape = (len(levels),) + np.shape(x)
    z = np.broadcast_to(
        standard_atmosphere_height(levels).reshape((-1,) + (1,) * np.ndim(x)), shape
    )
    change = np.inf
    for _ in range(max_iterations):
        t = scen.temperature(x, y, lat, z, tau)
        z_new = hypsometric_heights(msl, t_sea, t, levels)
        change = float(np.max(np.abs(z_new - z)))
        z = z_new
        if change < HEIGHT_TOLERANCE_M:
            break
    t = scen.temperature(x, y, lat, z, tau)
    return t, hypsometric_heights(msl, t_sea, t, levels), msl, t_sea, change


def _point_levels(scen, x, y, lat, tau):
    """Level temperatures and heights at points, solved as in :meth:`Scenario.level_fields`."""
    x, y, lat = (np.atleast_1d(np.asarray(v, float)) for v in (x, y, lat))
    t, z, *_ = _solve_levels(scen, x, y, lat, tau)
    return t, z


def _point_fields(scen, lon, lat, elevation, tau):
    """Surface values at one point from the analytic fields (the site at its elevation)."""
    x, y = scen.proj.forward(lon, lat)
    t2 = scen.temperature(x, y, lat, elevation + 2.0, tau)
    rate = scen.precip_rate(x, y, tau)
    rh = scen.relative_humidity(x, y, elevation + 2.0, tau, rate=rate)
    p = scen.mslp(x, y, tau)
    # geostrophic wind by centred differences over +-0.05 deg
    dl = 0.05
    xe, ye = scen.proj.forward(lon + dl, lat)
    xw, yw = scen.proj.forward(lon - dl, lat)
    xn, yn = scen.proj.forward(lon, lat + dl)
    xs, ys = scen.proj.forward(lon, lat - dl)
    dx = EARTH_RADIUS * math.cos(math.radians(lat)) * math.radians(2 * dl)
    dy = EARTH_RADIUS * math.radians(2 * dl)
    dpdx = (scen.mslp(xe, ye, tau) - scen.mslp(xw, yw, tau)) / dx
    dpdy = (scen.mslp(xn, yn, tau) - scen.mslp(xs, ys, tau)) / dy
    t_sea = scen.temperature(x, y, lat, 0.0, tau)
    rho = p / (RD * t_sea)
    f = 2 * OMEGA * math.sin(math.radians(lat))
    ug, vg = -dpdy / (rho * f), dpdx / (rho * f)
    ang = math.radians(20.0)
    u = 0.75 * (ug * math.cos(ang) - vg * math.sin(ang))
    v = 0.75 * (ug * math.sin(ang) + vg * math.cos(ang))
    return {"p": p, "t": t2, "td": dewpoint_from_rh(t2, rh), "u": u, "v": v, "rate": rate}


def _write_stations(scen, out):
    rng = np.random.default_rng(20270114)
    folder = out / "stations"
    folder.mkdir(parents=True, exist_ok=True)
    s = scen.spec
    times = scen.start + np.arange(0, s.hours * 60 + 1, 10).astype("timedelta64[m]")
    for i, (name, lat, lon, elev) in enumerate(SITES):
        rows = []
        for t in times:
            tau = (t - scen.start) / np.timedelta64(1, "s")
            v = _point_fields(scen, lon, lat, elev, tau)
            pres = float(v["p"]) / 100.0 + rng.normal(0, 0.15)
            temp = float(v["t"]) - 273.15 + rng.normal(0, 0.25)
            dew = min(float(v["td"]) - 273.15 + rng.normal(0, 0.25), temp)
            speed = math.hypot(float(v["u"]), float(v["v"]))
            wdir = (
                math.degrees(math.atan2(-float(v["u"]), -float(v["v"]))) + rng.normal(0, 8)
            ) % 360
            spd_kt = max(0.0, speed / KNOT + rng.normal(0, 1.5))
            rate = float(v["rate"]) * float(np.exp(rng.normal(0, 0.25)))
            rate = round(rate, 1) if rate >= 0.1 else 0.0
            rows.append(
                [
                    _iso(t),
                    f"{pres:.1f}",
                    f"{temp:.1f}",
                    f"{dew:.1f}",
                    f"{wdir:.0f}",
                    f"{spd_kt:.0f}",
                    f"{rate:.1f}",
                ]
            )
        # gaps: every site loses a few readings; two sites a longer outage
        drop = set(rng.choice(len(rows), size=4, replace=False).tolist())
        if i in (1, 4):
            first = 60 + 37 * i
            drop |= set(range(first, first + 7))  # a 70-min outage
        rows = [r for k, r in enumerate(rows) if k not in drop]
        if name == "Lorvaine":  # one garbage row in one file
            stamp = _iso(np.datetime64(rows[150][0].rstrip("Z")) + np.timedelta64(5, "m"))
            rows.insert(151, [stamp, "-9999", "ERR", "", "999", "-5", "x"])
        text = [
            "time_utc,pressure_hpa,temperature_c,dewpoint_c,wind_dir_deg,wind_speed_kt,precip_mm_h"
        ]
        text += [",".join(r) for r in rows]
        (folder / f"{name}.csv").write_text("\n".join(text) + "\n")


# ---- the truth: where the written fields put the fronts ------------------

#: distances from the triple point at which the truth gives front-normal speeds [km]
ALONG_KM = (300.0, 600.0, 900.0, 1200.0, 1500.0, 1800.0)

#: kinds of front line in the truth, with the stretch of curve each is on
TRUTH_KINDS = ("warm", "cold", "occluded")


def _stretch(scen, kind, tau):
    """(curve, s0, s1 [m], slope 1 in N, cold-side sign) of one kind of front at ``tau``."""
    geo = scen.geometry(tau)
    s = scen.spec
    if kind == "warm":
        return geo.warm, 0.0, geo.warm_end_m, s.warm_slope_1_in, 1.0
    if kind == "cold":
        return geo.cold, 0.0, geo.cold_end_m, s.cold_slope_1_in, -1.0
    return geo.warm, -geo.occluded_m, 0.0, s.occluded_slope_1_in, 1.0


def _level_sampler(scen, z_level):
    """Bilinear sampler of a written level-height field at plane points."""
    interp = RegularGridInterpolator((scen.lat, scen.lon), z_level, bounds_error=False)

    def height(x, y):
        lon, lat = scen.proj.inverse(x, y)
        return interp(np.column_stack([lat, lon]))

    return height


def front_line(scen, kind, tau, height=None, shift_warm_km=0.0, step_km=50.0):
    """(lon, lat) [deg] of a front line: the zone centre at a surface of given height.

    Parameters
    ----------
    kind : {"warm", "cold", "occluded"}
    height : callable (x, y) -> height [m], optional
        The surface the line lies on: a written level's height field
        (:func:`_level_sampler`); default the 2-m surface over the orography.
        The zone centre lies ``slope * height`` toward the cold side of the
        surface-front curve, solved along the curve's normal (three fixed-point
        steps, each moving it less than a metre after the first two).
    shift_warm_km : float
        Move the line toward the warm side (0.658 L for the objective locating line).

    Returns
    -------
    lon, lat : ndarray
        Points every ``step_km`` along the front, inside the domain; empty
        where the front does not exist (an occlusion not yet formed).
    """
    curve, s0, s1, slope, side = _stretch(scen, kind, tau)
    if s1 - s0 < step_km * 1e3:
        return np.array([]), np.array([])
    pts, sv = curve.between(s0, s1, step_km)
    normal = side * curve.normal_left(sv)  # toward the cold side
    if height is None:

        def height(x, y):
            return scen.orography(x, y) + 2.0

    offset = np.zeros(len(sv))
    for _ in range(3):
        q = pts + normal * offset[:, None]
        offset = slope * np.asarray(height(q[:, 0], q[:, 1]), float)
    q = pts + normal * (offset - shift_warm_km * 1e3)[:, None]
    lon, lat = scen.proj.inverse(q[:, 0], q[:, 1])
    sp = scen.spec
    inside = (
        (lat >= sp.lat_range[0])
        & (lat <= sp.lat_range[1])
        & (lon >= sp.lon_range[0])
        & (lon <= sp.lon_range[1])
        & np.isfinite(lon)
    )
    return lon[inside], lat[inside]


def earth_speed(scen, kind, tau, along_km=600.0, dt=600.0):
    """Front-normal speed on the earth [m s-1] at ``along_km`` from the triple point.

    Measured from the geometry: the change of the signed distance of a fixed
    point over +-``dt`` [s], divided by the map scale factor.
    """
    curve, _, _, _, _ = _stretch(scen, kind, tau)
    p = curve.between(along_km * 1e3, along_km * 1e3)[0][0]
    before = scen.distances(p[0:1], p[1:2], tau - dt)
    after = scen.distances(p[0:1], p[1:2], tau + dt)
    k = 0 if kind == "warm" else 1
    rate = float((after[k][0] - before[k][0]) / (2 * dt))
    speed = -rate if kind == "warm" else rate  # toward the cold / the warm side
    lon, lat = scen.proj.inverse(p[0], p[1])
    return speed / float(scen.proj.scale(lon, lat))


def passages(scen, lon, lat, elevation, offset_h, step_min=5):
    """Return the valid times [s since start] the 2-m zone centre of each front crosses a site.

    The site is on its own elevation (the written 2-m surface there); a
    crossing counts where the site lies on that stretch of front (the warm
    sector's side of the other front, inside the front's length). Searched
    from 6 h before to 6 h after the window, on ``step_min`` steps, refined
    linearly.
    """
    sp = scen.spec
    x, y = scen.proj.forward(lon, lat)
    h = elevation + 2.0
    valid = np.arange(-6 * 3600.0, (sp.hours + 6) * 3600.0 + 1, step_min * 60.0)
    rows = []
    for v in valid:
        d_w, d_c, s_w, s_c = (
            float(a[0]) for a in scen.distances(np.array([x]), np.array([y]), v + offset_h * 3600)
        )
        rows.append((d_w, d_c, s_w, s_c, scen.occluded_length(v + offset_h * 3600)))
    arr = np.array(rows)
    out = {}
    slopes = {
        "warm": sp.warm_slope_1_in,
        "cold": sp.cold_slope_1_in,
        "occluded": sp.occluded_slope_1_in,
    }
    for kind in TRUTH_KINDS:
        col = 1 if kind == "cold" else 0
        g = arr[:, col] - slopes[kind] * h
        found = None
        for i in np.nonzero(np.sign(g[:-1]) != np.sign(g[1:]))[0]:
            frac = g[i] / (g[i] - g[i + 1])
            here = arr[i] + frac * (arr[i + 1] - arr[i])
            d_w, d_c, s_w, s_c, ell = here
            if kind == "warm":
                ok = (
                    0.0 <= s_w <= sp.warm_length_km * 1e3
                    and d_c - sp.cold_slope_1_in * h < -sp.l_cold_km * 1e3
                )
            elif kind == "cold":
                ok = (
                    0.0 <= s_c <= sp.cold_length_km * 1e3
                    and d_w - sp.warm_slope_1_in * h < -sp.l_warm_km * 1e3
                )
            else:
                ok = ell >= 150e3 and -ell + 60e3 <= s_w <= 0.0
            if ok:
                found = valid[i] + frac * (valid[i + 1] - valid[i])
                break
        if found is not None and kind in STEP_SIGN:
            found = _station_step(scen, lon, lat, elevation, offset_h, found, STEP_SIGN[kind])
        out[kind] = found
    return out


#: the sign of a site's 2-m theta-w step at each front's passage
STEP_SIGN = {"warm": +1, "cold": -1}


def _station_step(scen, lon, lat, elevation, offset_h, near_s, sign, half_h=3.0, step_s=120.0):
    """Return the time a site's 2-m theta-w changes fastest [s since start], nearest ``near_s``.

    What a station on the site sees (the middle of its temperature change,
    Sanders 1999): the site's own 2-m air at its elevation in the analytic
    event, on 2-minute steps within ``half_h`` of the frontal surface's
    crossing ``near_s``, its theta-w from MetPy (an implementation outside the
    kit), the surface pressure MSLP reduced to the elevation hypsometrically.
    Where the zone is spread out (a dying front) this is where its change is
    steepest, which the crossing of the zone's geometric centre is not.
    """
    ts = near_s + np.arange(-half_h * 3600.0, half_h * 3600.0 + 1.0, step_s)
    x, y = scen.proj.forward(np.full(ts.size, lon), np.full(ts.size, lat))
    lat_a = np.full(ts.size, lat)
    h = elevation + 2.0
    tau = ts + offset_h * 3600.0
    t2 = np.array([float(scen.temperature(x[k:k + 1], y[k:k + 1], lat_a[k:k + 1], h, tau[k])[0])
                   for k in range(ts.size)])
    rh = np.array([float(scen.relative_humidity(
        x[k:k + 1], y[k:k + 1], h, tau[k],
        rate=scen.precip_rate(x[k:k + 1], y[k:k + 1], tau[k]))[0]) for k in range(ts.size)])
    msl = np.array([float(scen.mslp(x[k:k + 1], y[k:k + 1], tau[k])[0]) for k in range(ts.size)])
    t_sea = np.array([float(scen.temperature(x[k:k + 1], y[k:k + 1], lat_a[k:k + 1], 0.0,
                                             tau[k])[0]) for k in range(ts.size)])
    ps = msl * np.exp(-G0 * h / (RD * 0.5 * (t_sea + t2)))
    td = dewpoint_from_rh(t2, rh)
    thw = mpcalc.wet_bulb_potential_temperature(
        ps * units.Pa, t2 * units.K, td * units.K).to("K").magnitude
    rate = sign * np.gradient(thw, ts)
    m = int(np.argmax(rate))
    if 0 < m < ts.size - 1:
        a, b, c = rate[m - 1], rate[m], rate[m + 1]
        den = a - 2.0 * b + c
        return float(ts[m] + (0.5 * (a - c) / den * step_s if den < 0 else 0.0))
    return float(ts[m])


def _pressure_minimum(scen, first_guess, tau):
    """Plane position [m] and pressure [Pa] of the low's mean-sea-level pressure minimum.

    The minimum of the written field's analytic form (Nelder-Mead from the
    cone's centre, to 10 m), not the cone's centre: the background gradient
    and the troughs move it by some tens of km.
    """

    def p(xy):
        return float(scen.mslp(np.array([xy[0]]), np.array([xy[1]]), tau)[0])

    res = minimize(
        p,
        np.asarray(first_guess, float),
        method="Nelder-Mead",
        options={"xatol": 10.0, "fatol": 0.01, "initial_simplex": None},
    )
    return res.x, float(res.fun)


def _iso_seconds(scen, seconds):
    if seconds is None:
        return None
    return _iso(scen.start + np.timedelta64(int(round(seconds / 60.0)), "m"))


def _readme(scen, facts):
    """Return the event description written beside the files (README.md)."""
    s = scen.spec
    ana = facts["sets"]["analyses"]

    def when(v):
        return "-" if v is None else f"{v[:16]}Z"

    rows = []
    for name, lat, lon, elev in SITES:
        p = ana["passages"][name]
        rows.append(
            f"| {name} | {lat:.2f} | {lon:.2f} | {elev:.0f} "
            f"| {when(p['warm'])} | {when(p['cold'])} | {when(p['occluded'])} |"
        )
    lines = []
    for label, ref, off in s.runs:
        first = int((scen.start - np.datetime64(ref.rstrip("Z"), "s")) / np.timedelta64(1, "h"))
        lines.append(
            f"- `runs/{label}/step_XXX.nc`: run started {ref}, leads {first} to "
            f"{first + s.hours} h; its fronts are {abs(off)} h "
            f"{'early' if off > 0 else 'late'} against the analyses"
        )
    runs = "\n".join(lines)
    t0, t1 = facts["valid_times"][0], facts["valid_times"][-1]
    p0 = ana["times"][t0]["low"]["central_pressure_hpa"]
    p1 = ana["times"][t1]["low"]["central_pressure_hpa"]
    fz = ana["freezing_rain_window"]
    fz_words = "none" if fz is None else f"{fz['start']} to {fz['end']}"
    return (
        f"""# sample_grids: the invented frontshift demo event

> {CAUTION}
> Everything here is invented: the sites, the dates and the weather. It is not
> a real model run and not real data. It was written by `python -m tools.scenario`
> (regenerate with `python -m tools.scenario --out sample_grids --overwrite`).

## The event
A frontal wave over the ocean west of an invented coast deepens into a mature low
while it crosses the domain ({s.lat_range[0]:g}-{s.lat_range[1]:g} N,
{abs(s.lon_range[0]):g} W-{s.lon_range[1]:g} E, {s.resolution_deg} deg grid) toward the
north-east between {t0} and {t1}: central pressure {p0:g} hPa at the start, {p1:g} hPa at
the end, deepening fastest in the first day and slowing as it occludes. The low slows and
turns left. The warm front runs east-south-east from the triple point and curves to the
right; the cold front trails south-south-west and curves back toward the south-west. The
warm sector narrows: the angle between the fronts closes and, from {ana["occlusion_forms"]},
the triple point moves away from the low along an occluded front that lengthens at
{s.occlusion_rate_ms:g} m/s, with a warm tongue aloft (a trowal, {s.trowal_k:g} K) leaning
over it. The isobars kink in troughs along all three fronts. Both fronts are tanh zones
(half-widths {s.l_warm_km:g} and {s.l_cold_km:g} km) leaning 1 in {s.warm_slope_1_in:g} and 1 in
{s.cold_slope_1_in:g} toward their cold sides; each dies out beyond about
{s.warm_length_km:g} km (warm) and {s.cold_length_km:g} km (cold) from the triple point. A
light-moderate rain shield starts about {s.shield_ahead_nm:g} nm ahead of the surface warm
front, a heavier band lies {s.band_behind_nm[0]:g}-{s.band_behind_nm[1]:g} nm behind the surface
cold front, and steady rain wraps round the low on the cold side of the occlusion. A shallow
sub-zero layer sits ahead of the warm front over the hills around {COLD_POOL_SITE}, which gets a
freezing-rain window (warm air aloft over sub-zero air) before the warm front passes
(analyses: {fz_words}). A tropopause fold lies some {s.fold_behind_km:g} km behind the surface
cold front aloft, under a jet.

The land east of the coast rises to a plateau of about {s.plateau_m:g} m with invented hills;
the sites are on land at their elevations (`orog` in every file, the model surface), and the
fronts cross them at different stages of the life cycle.

## Files
{runs}
- `analyses/valid_YYYYMMDDHH.nc`: verifying analyses every {s.step_h} h of the window (written as
  one sequence whose forecast_reference_time is the window start, so that their accumulated
  precipitation can be differenced like a run's)
- `sites.csv`: the invented sites (`name,lat,lon,elevation_m`), all on land
- `stations/<site>.csv`: 10-min station series drawn from the analyses with noise (pressure
  reduced to mean sea level, temperature at the site's elevation); a few readings are missing,
  two sites have a 70-min outage and one file holds a garbage row
- `truth.json`: front lines (warm, cold, occluded) on the 2-m surface and on the written 850 hPa
  heights (zone centre and the expected objective locating line), low centre and triple point,
  speeds, slopes, the occlusion's start, site passages per run, timing offsets

Every NetCDF file is CF-1.8 with standard names and units, CF int16 packing (scale_factor =
quantization step) and zlib compression. Variables: `t`, `rh` (%), `u`, `v` (geostrophic),
`z` on {len(LEVELS_HPA)} pressure levels; `msl`, `t2m`, `d2m`, `u10`, `v10`, `precip`
(accumulated since forecast_reference_time, kg m-2) and `orog` (m).

## Site passages in the analyses (UTC)
| site | lat | lon | elevation m | warm front | cold front | occluded front |
|---|---|---|---|---|---|---|
"""
        + "\n".join(rows)
        + "\n"
    )


def _compact_json(obj):
    """JSON with one line per list of numbers (smaller, still readable)."""
    text = json.dumps(obj, indent=1)
    return (
        re.sub(
            r"\[\s*([-0-9.eE,\s]+?)\s*\]",
            lambda m: "[" + ", ".join(v.strip() for v in m.group(1).split(",")) + "]",
            text,
        )
        + "\n"
    )


def _freezing_rain_window(scen, offset, need_precip=True):
    """First and last valid time (UTC ISO) of freezing rain at the cold-pool site, 10-min steps.

    Freezing rain here: the 2-m temperature at the site's elevation below
    0 C, the warmest of the levels above the site above 0 C (the written
    temperatures and heights), and a precipitation rate of at least 0.1 mm/h
    (without ``need_precip``: the warm nose over sub-zero air alone).
    """
    lat, lon, elev = {n: (la, lo, el) for n, la, lo, el in SITES}[COLD_POOL_SITE]
    x, y = scen.proj.forward(lon, lat)
    hits = []
    for minute in range(0, scen.spec.hours * 60 + 1, 10):
        tau = minute * 60.0 + offset * 3600.0
        t2 = scen.temperature(x, y, lat, elev + 2.0, tau)
        t_lev, z_lev = _point_levels(scen, x, y, lat, tau)
        above = z_lev[:, 0] > elev
        aloft = np.max(t_lev[above, 0]) if above.any() else -np.inf
        wet = not need_precip or scen.precip_rate(x, y, tau) >= 0.1
        if t2 < 273.15 and aloft > 273.15 and wet:
            hits.append(minute)
    if not hits:
        return None
    return {
        "site": COLD_POOL_SITE,
        "start": _iso(scen.start + np.timedelta64(hits[0], "m")),
        "end": _iso(scen.start + np.timedelta64(hits[-1], "m")),
    }


def truth(spec=None):
    """Return the answers the kit should find in the sample event (a JSON-ready dict).

    Everything is measured on what the files hold: the 850 hPa lines on the
    written 850 hPa heights, the surface lines and passages on the 2-m surface
    over the written orography at the sites' elevations.
    """
    scen = Scenario(spec)
    s = scen.spec
    locating_shift = {"warm": 0.658 * s.l_warm_km, "cold": 0.658 * s.l_cold_km, "occluded": 0.0}
    k850 = LEVELS_HPA.index(850.0)
    out = {
        "description": (
            "Invented frontshift demo event (January 2027): a frontal wave deepening into a "
            "mature low while it crosses the domain toward the north-east; its warm sector "
            "narrows and an occlusion forms in the second day. All names, dates and weather "
            "are invented. Lines are (lon, lat) lists in degrees; times UTC."
        ),
        "caution": CAUTION,
        "generator": "python -m tools.scenario",
        "valid_times": [
            _iso(scen.start + np.timedelta64(h, "h")) for h in range(0, s.hours + 1, s.step_h)
        ],
        "levels_hpa": list(LEVELS_HPA),
        "prescribed": {
            "warm": {
                "slope_1_in": s.warm_slope_1_in,
                "zone_half_width_l_km": s.l_warm_km,
                "zone_width_10_90_km": round(2 * math.atanh(0.8) * s.l_warm_km, 1),
                "length_km": s.warm_length_km,
            },
            "cold": {
                "slope_1_in": s.cold_slope_1_in,
                "zone_half_width_l_km": s.l_cold_km,
                "zone_width_10_90_km": round(2 * math.atanh(0.8) * s.l_cold_km, 1),
                "length_km": s.cold_length_km,
            },
            "occluded": {
                "slope_1_in": s.occluded_slope_1_in,
                "warm_tongue_k": s.trowal_k,
                "warm_tongue_half_width_km": s.trowal_km,
                "starts": _iso(scen.start + np.timedelta64(int(s.occlusion_start_h * 60), "m")),
                "lengthens_ms": s.occlusion_rate_ms,
            },
            "warm_sector_excess_k": s.dt_warm_k,
            "tropopause_fold": {
                "behind_surface_cold_front_km": s.fold_behind_km,
                "depth_m": s.fold_depth_m,
                "width_km": s.fold_width_km,
            },
        },
        "notes": {
            "lines": (
                "'surface' lines are the tanh-zone centres on the 2-m surface over the written "
                "orography (slope x height toward the cold side of the sea-level curve), "
                "'850hPa' the zone centres on the written 850 hPa heights, "
                "'850hPa_locating' where the thermal front parameter of a tanh zone peaks and "
                "the locating function of Hewson (1998) is zero: 0.658 L on the warm side of "
                "the zone centre (analytic, no smoothing; the background gradient and the "
                "humidity change across the zone move it by a few km, and smoothing before "
                "the parameter is computed moves it further toward the warm side). Warm and "
                "cold lines run from the triple point to where the front's contrast has "
                "fallen to half (length_km); beyond it the front dies out over about "
                f"{s.fade_km:g} km. The occluded line runs from the low centre to the triple "
                "point and is the axis of the warm tongue (trowal) leaning over it; it is "
                "given once it is 150 km long. 'low' is the minimum of the mean-sea-level "
                "pressure (the background gradient and the troughs move it some tens of km "
                "from the centre of the low's cone, where the occluded front starts). Within "
                "about 200 km of the triple point the product of the two zones rounds the "
                "corner of the warm sector."
            ),
            "speeds": (
                "speed_earth_ms: the front-normal speed 600 km along each front from the "
                "triple point (warm toward its cold side, cold toward its warm side), "
                "measured on the geometry and divided by the map scale factor; "
                "speed_earth_ms_along the same at the distances along each front (km) "
                "where the front has its full contrast"
            ),
            "timing_offset_h": "positive: the run's fronts are early (the run shows the event "
            "that many hours ahead of the analyses)",
            "passages": (
                "time the 2-m zone centre of each front crosses the site at its elevation; "
                "null where that front does not cross the site between 6 h before and 6 h "
                "after the window"
            ),
            "analyses": "one sequence with forecast_reference_time at the window start, so that "
            "its accumulated precipitation can be differenced like a run's",
        },
        "sets": {},
    }
    for folder, label, reference, offset, kind in _sets(s):
        entry = {
            "folder": folder,
            "kind": kind,
            "reference_time": _iso(reference),
            "timing_offset_h": offset,
            "times": {},
            "passages": {},
        }
        formed = s.occlusion_start_h - offset
        entry["occlusion_forms"] = _iso(scen.start + np.timedelta64(int(round(formed * 60)), "m"))
        for hour in range(0, s.hours + 1, s.step_h):
            valid = scen.start + np.timedelta64(hour, "h")
            tau = (hour + offset) * 3600.0
            geo = scen.geometry(tau)
            low_xy, low_p = _pressure_minimum(scen, geo.low, tau)
            alon, alat = scen.proj.inverse(*low_xy)
            tlon, tlat = scen.proj.inverse(*geo.triple)
            rec = {
                "low": {  # the MSLP minimum
                    "lon": round(float(alon), 3),
                    "lat": round(float(alat), 3),
                    "central_pressure_hpa": round(low_p / 100.0, 2),
                },
                "triple_point": {"lon": round(float(tlon), 3), "lat": round(float(tlat), 3)},
                "occluded_length_km": round(geo.occluded_m / 1e3, 1),
            }
            _, z = scen.level_fields(tau)[:2]
            z850 = _level_sampler(scen, z[k850])
            for lvl, height, shift in (
                ("surface", None, None),
                ("850hPa", z850, None),
                ("850hPa_locating", z850, locating_shift),
            ):
                rec[lvl] = {}
                for kindf in TRUTH_KINDS:
                    lon, lat = front_line(
                        scen,
                        kindf,
                        tau,
                        height=height,
                        shift_warm_km=0.0 if shift is None else shift[kindf],
                    )
                    if kindf == "occluded" and geo.occluded_m < 150e3:
                        lon, lat = lon[:0], lat[:0]
                    rec[lvl][kindf] = {
                        "lon": [round(float(v), 3) for v in lon],
                        "lat": [round(float(v), 3) for v in lat],
                    }
            rec["speed_earth_ms"] = {
                k: round(earth_speed(scen, k, tau), 3) for k in ("warm", "cold")
            }
            rec["speed_earth_ms_along"] = {
                k: {
                    str(km): round(earth_speed(scen, k, tau, along_km=km), 3)
                    for km in ALONG_KM
                    if km < (s.warm_length_km if k == "warm" else s.cold_length_km)
                }
                for k in ("warm", "cold")
            }
            entry["times"][_iso(valid)] = rec
        for name, lat, lon, elev in SITES:
            found = passages(scen, lon, lat, elev, offset)
            entry["passages"][name] = {k: _iso_seconds(scen, v) for k, v in found.items()}
        entry["freezing_rain_window"] = _freezing_rain_window(scen, offset)
        entry["warm_nose_window"] = _freezing_rain_window(scen, offset, need_precip=False)
        set_name = "analyses" if folder == "analyses" else label
        out["sets"][set_name] = entry
    out["slopes_1_in"] = {
        "warm": s.warm_slope_1_in,
        "cold": s.cold_slope_1_in,
        "occluded": s.occluded_slope_1_in,
    }
    out["timing_offsets_h"] = {k: v["timing_offset_h"] for k, v in out["sets"].items()}
    out["freezing_rain_site"] = COLD_POOL_SITE
    return out


def write_sample_event(out="sample_grids", spec=None, overwrite=False):
    """Write the whole sample event folder.

    Parameters
    ----------
    out : str or Path
        Folder to write (``sample_grids``).
    spec : ScenarioSpec, optional
    overwrite : bool
        Replace the gridded files of an existing event folder.

    Returns
    -------
    Path
        The folder.
    """
    out = Path(out)
    if (out / "runs").exists() and not overwrite:
        from kit.errors import OutputError

        raise OutputError(f"{out}: sample event already there; pass --overwrite to regenerate it")
    for sub in ("runs", "analyses", "stations"):
        if (out / sub).exists():
            shutil.rmtree(out / sub)
    out.mkdir(parents=True, exist_ok=True)
    scen = Scenario(spec)
    write_steps(out, spec=spec)
    _write_sites(out)
    _write_stations(scen, out)
    facts = truth(spec)
    (out / "truth.json").write_text(_compact_json(facts))
    (out / "README.md").write_text(_readme(scen, facts))
    return out


def main(argv=None):
    """Command line: ``python -m tools.scenario [--out sample_grids] [--overwrite]``."""
    parser = argparse.ArgumentParser(
        prog="python -m tools.scenario",
        description="Write the invented frontshift demo event.",
        epilog=CAUTION,
    )
    parser.add_argument("--out", default="sample_grids", help="event folder (default sample_grids)")
    parser.add_argument("--overwrite", action="store_true", help="replace an existing event")
    args = parser.parse_args(argv)
    from kit.errors import FrontshiftError

    try:
        path = write_sample_event(args.out, overwrite=args.overwrite)
    except FrontshiftError as exc:
        sys.stderr.write(f"error: {exc}\n")
        return 2
    print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
