"""The invented demo scenario: a deepening frontal depression, written as CF NetCDF.

``python -m tools.scenario [--out sample_grids]`` writes the sample event folder
described in DEVELOPERS.md (two forecast runs, verifying analyses, invented
sites, station series with noise, ``truth.json`` and a README). Everything is
invented: the sites, the dates (January 2027) and the weather. The fields are
built from a few analytic pieces so that the answers the kit should find are
known exactly and recorded in ``truth.json``:

* **Geometry.** Work is done on a conformal (oblique stereographic, spherical
  earth) plane centred at 51 N, 10 W with scale factor 0.993 at the centre, so
  lengths on the plane are within about 1 % of the great-circle lengths over
  the region the fronts cross (Snyder 1987, Eqs. 21-2 to 21-4 forward, 20-14,
  20-15 and 21-15 inverse). Both surface fronts are straight rays from the
  low centre (the apex of the warm sector): the warm front toward bearing
  100 deg, the cold front toward 190 deg. Each moves along its own normal at a
  constant prescribed speed on the plane, so the apex (the low centre) moves
  with the vector that satisfies both normal speeds.
* **Temperature.** A background with a meridional gradient, a 6.5 K/km lapse
  rate and an isothermal stratosphere above a tropopause that is lower on the
  cold (poleward) side, plus a warm sector of amplitude ``dt_warm_k`` shaped as
  the product of two tanh zones (half-widths ``l_warm_km``, ``l_cold_km``).
  The frontal surfaces lean: at height h [m] the zone centre lies 150 h toward
  the cold side of the surface warm front (1 in 150) and 50 h toward the cold
  side of the surface cold front (1 in 50) (common practice values, no source).
  The height used for the geometry of a pressure level is its height in the
  ICAO standard atmosphere. A tropopause fold (tropopause lowered by 1.5 km,
  stratospheric isothermal air below it, a stable return above) lies some
  600 km behind the surface cold front near the low, and a shallow
  cold pool ahead of the warm front gives a freezing-rain window at one site.
* **Pressure and heights.** Mean-sea-level pressure is a conical low whose
  centre deepens linearly, with shallow troughs along both fronts. Heights
  on pressure levels follow from the hypsometric equation (Wallace & Hobbs
  2006, Eq. 3.29; equation number from memory) with air temperature (no
  virtual-temperature correction), taking the temperature linear in ln p
  between the written levels and between the sea surface and 1000 hPa, so
  that the written heights satisfy the layer form of the equation exactly.
* **Winds** on the levels are geostrophic from the height field (centred
  differences on the sphere); the 10-m wind is 0.75 of the surface
  geostrophic wind backed by 20 deg (common practice, no source).
* **Humidity** is near-saturated over the frontal surfaces (the cloud wedge
  over the warm frontal surface out to 300 nm ahead, a band along the cold
  front), dry in a slot behind the cold front aloft; the 2-m dew point comes
  from the 2-m relative humidity (Bolton 1980, Eq. 10, inverted).
* **Precipitation** is a light-moderate shield from about 250 nm ahead of the
  surface warm front up to it, and a heavier band 50-100 nm behind the
  surface cold front (common practice, no source); files hold the amount
  accumulated since the forecast reference time [kg m-2].

Two forecast runs differ from the analyses only by a timing offset (their
fronts are early or late by a fixed number of hours). The verifying analyses
are written as one sequence whose ``forecast_reference_time`` is the start of
the window, so that their accumulated precipitation can be differenced like a
run's.
"""

import argparse
import json
import math
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

import netCDF4
import numpy as np

from kit import CAUTION

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
    # name, lat, lon, elevation_m
    ("Kelmarra", 45.13, -21.22, 28.0),
    ("Tavishore", 46.43, -15.50, 12.0),
    ("Lorvaine", 45.31, -11.75, 35.0),
    ("Quennock", 48.52, -12.20, 20.0),
    ("Eskerwick", 48.56, -6.18, 64.0),
    ("Drevanholm", 49.58, -5.82, 142.0),
)
#: the site where a shallow sub-zero surface layer sits ahead of the warm front
COLD_POOL_SITE = "Drevanholm"

_PACKING = {
    # name: (scale_factor, add_offset) for CF int16 packing; the scale is the
    # quantization step, chosen to keep the whole event under about 20 MB
    "t": (0.05, 250.0),
    "rh": (0.5, 50.0),
    "u": (0.1, 0.0),
    "v": (0.1, 0.0),
    "z": (1.0, 6000.0),
    "msl": (2.0, 100000.0),
    "t2m": (0.02, 270.0),
    "d2m": (0.02, 270.0),
    "u10": (0.05, 0.0),
    "v10": (0.05, 0.0),
    "precip": (0.01, 150.0),
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
# The scenario
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class ScenarioSpec:
    """Parameters of the invented event (all values invented for the demo).

    Attributes
    ----------
    start : str
        Start of the verifying window, ISO UTC (valid time of the first analysis).
    hours : int
        Length of the window [h]; ``step_h`` apart.
    step_h : int
        Time step of the files [h].
    lat_range, lon_range : tuple of float
        Grid extent [degrees]; ``resolution_deg`` spacing.
    warm_ray_bearing_deg, cold_ray_bearing_deg : float
        Direction in which each surface front runs out from the low centre [deg].
    warm_speed_ms, cold_speed_ms : float
        Prescribed front-normal speeds on the plane [m s-1], toward the cold side
        (warm front) and toward the warm side (cold front).
    apex0_km : tuple of float
        Plane position of the low centre at ``start`` [km].
    l_warm_km, l_cold_km : float
        Half-width L of the tanh zones, T = Tb + dT (1 + tanh(-d/L)) / 2 [km].
    warm_slope_1_in, cold_slope_1_in : float
        Frontal slopes [1 in N].
    dt_warm_k : float
        Warm-sector temperature excess below 5 km [K].
    p_centre_hpa : tuple of float
        Central pressure at the start and at the end of the window [hPa].
    cone_hpa_per_100km : float
        Radial pressure gradient of the conical low [hPa (100 km)-1].
    """

    start: str = "2027-01-14T00:00:00Z"
    hours: int = 48
    step_h: int = 3
    lat_range: tuple = (39.0, 63.0)
    lon_range: tuple = (-33.0, 13.0)
    resolution_deg: float = 0.25
    warm_ray_bearing_deg: float = 100.0
    cold_ray_bearing_deg: float = 190.0
    warm_speed_ms: float = 8.0
    cold_speed_ms: float = 12.0
    apex0_km: tuple = (-1500.0, -650.0)
    l_warm_km: float = 65.0
    l_cold_km: float = 50.0
    warm_slope_1_in: float = 150.0
    cold_slope_1_in: float = 50.0
    dt_warm_k: float = 7.0
    low_level_reduction: float = 0.2
    t_sfc_50n_k: float = 278.5
    t_sfc_gradient_k_per_deg: float = 0.35
    zone_gradient_k_per_deg: float = 0.6
    zone_half_width_deg: float = 8.0
    lapse_k_per_km: float = 6.5
    tropopause_38n_m: float = 11500.0
    tropopause_drop_m_per_deg: float = 150.0
    fold_depth_m: float = 1500.0
    fold_behind_km: float = 600.0
    fold_width_km: float = 250.0
    fold_return_k_per_km: float = 7.0
    strat_cooling_k: float = 4.0
    p_centre_hpa: tuple = (998.0, 974.0)
    p_cap_hpa: float = 1024.0
    cone_hpa_per_100km: float = 1.55
    core_km: float = 250.0
    east_rise_hpa_per_100km: float = 0.35
    warm_trough_hpa: float = 1.0
    warm_trough_km: float = 150.0
    cold_trough_hpa: float = 1.5
    cold_trough_km: float = 100.0
    cold_pool_k: float = 8.0
    cold_pool_radius_km: float = 350.0
    cold_pool_depth_m: float = 700.0
    shield_ahead_nm: float = 250.0
    band_behind_nm: tuple = (50.0, 100.0)
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
        self.a_w = _unit(s.warm_ray_bearing_deg)  # along the warm front, away from the low
        self.a_c = _unit(s.cold_ray_bearing_deg)
        # normals: warm front toward its cold side, cold front toward its warm side
        self.n_w = _unit(s.warm_ray_bearing_deg - 90.0)
        self.n_c = _unit(s.cold_ray_bearing_deg - 90.0)
        mat = np.array([self.n_w, self.n_c])
        self.apex_velocity = np.linalg.solve(mat, [s.warm_speed_ms, s.cold_speed_ms])  # [m s-1]
        self.apex0 = np.array(s.apex0_km) * 1e3
        self.start = np.datetime64(s.start.rstrip("Z"), "s")
        lat = np.round(np.arange(s.lat_range[0], s.lat_range[1] + 1e-9, s.resolution_deg), 6)
        lon = np.round(np.arange(s.lon_range[0], s.lon_range[1] + 1e-9, s.resolution_deg), 6)
        self.lat, self.lon = lat, lon
        self.lon2, self.lat2 = np.meshgrid(lon, lat)
        self.x2, self.y2 = self.proj.forward(self.lon2, self.lat2)
        self.h_levels = standard_atmosphere_height(np.array(LEVELS_HPA))
        site = {n: (la, lo) for n, la, lo, _ in SITES}[COLD_POOL_SITE]
        self.cold_pool_xy = np.array(self.proj.forward(site[1], site[0]))

    # ---- geometry -------------------------------------------------------
    def apex(self, tau):
        """Plane position of the low centre [m] at scenario time ``tau`` [s]."""
        return self.apex0 + self.apex_velocity * tau

    def distances(self, x, y, tau):
        """Signed distances from the surface fronts [m], positive toward the cold side.

        Returns
        -------
        d_w, d_c, along_w, along_c : ndarray
            Distance from the warm and the cold front lines (positive on the cold
            side of each), and distance along each ray from the low centre [m].
        """
        ax, ay = self.apex(tau)
        rx, ry = x - ax, y - ay
        d_w = rx * self.n_w[0] + ry * self.n_w[1]
        d_c = -(rx * self.n_c[0] + ry * self.n_c[1])
        along_w = rx * self.a_w[0] + ry * self.a_w[1]
        along_c = rx * self.a_c[0] + ry * self.a_c[1]
        return d_w, d_c, along_w, along_c

    def warm_sector(self, d_w, d_c, h):
        """Warm-sector weight 0..1 at height ``h`` [m] (product of two tanh zones)."""
        s = self.spec
        dw = d_w - s.warm_slope_1_in * h
        dc = d_c - s.cold_slope_1_in * h
        return _s(-dw / (s.l_warm_km * 1e3)) * _s(-dc / (s.l_cold_km * 1e3))

    # ---- temperature ----------------------------------------------------
    def tropopause(self, lat):
        """Background tropopause height [m]: lower on the cold (poleward) side."""
        s = self.spec
        return s.tropopause_38n_m - s.tropopause_drop_m_per_deg * (lat - 38.0)

    def fold_depth(self, d_w, d_c, along_c):
        """Depth [m] by which the tropopause folds down behind the cold front aloft."""
        s = self.spec
        near = _s((1500e3 - np.abs(along_c)) / 300e3) * _s((300e3 - d_w) / 150e3)
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
        """Air temperature [K] at height ``h`` [m] (scalar or broadcastable)."""
        s = self.spec
        d_w, d_c, along_w, along_c = self.distances(x, y, tau)
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
        fold = self.fold_depth(d_w, d_c, along_c)
        excess = lapse * (softmin(h, htr) - softmin(h, htr - fold))
        above = s.fold_return_k_per_km * 1e-3 * soft * np.logaddexp(0.0, (h - htr) / soft)
        t = t + np.maximum(excess - above, 0.0)
        w = self.warm_sector(d_w, d_c, h)
        # the warm sector's excess fades toward the tropopause and reverses above it
        # (and is a little smaller in the lowest kilometre, over the cooler sea)
        amp = s.dt_warm_k * (1.0 - s.low_level_reduction * _s((800.0 - h) / 300.0)) * _s(
            (7000.0 - h) / 1500.0
        ) - s.strat_cooling_k * _s((h - 9500.0) / 800.0)
        t = t + amp * w
        # shallow cold pool ahead of the warm front (scoured out in the warm sector)
        r2 = (x - self.cold_pool_xy[0]) ** 2 + (y - self.cold_pool_xy[1]) ** 2
        pool = np.exp(-r2 / (2 * (s.cold_pool_radius_km * 1e3) ** 2))
        # cold side of the warm front only, with the warm front's own zone
        # shape, so the zone stays an exact tanh profile (a larger contrast)
        ahead = _s((d_w - s.warm_slope_1_in * h) / (s.l_warm_km * 1e3)) * _s(
            -(d_c - s.cold_slope_1_in * h) / (s.l_cold_km * 1e3)
        )
        t = t - s.cold_pool_k * pool * _s((s.cold_pool_depth_m - h) / 150.0) * ahead
        return t

    # ---- pressure -------------------------------------------------------
    def central_pressure(self, tau):
        """Central pressure of the low [Pa] (linear deepening over the window)."""
        s = self.spec
        frac = tau / (s.hours * 3600.0)
        return 100.0 * (s.p_centre_hpa[0] + (s.p_centre_hpa[1] - s.p_centre_hpa[0]) * frac)

    def mslp(self, x, y, tau):
        """Mean-sea-level pressure [Pa]."""
        s = self.spec
        ax, ay = self.apex(tau)
        r = np.hypot(x - ax, y - ay)
        r0 = s.core_km * 1e3
        raw = self.central_pressure(tau) + s.cone_hpa_per_100km * 1e-3 * (
            np.sqrt(r**2 + r0**2) - r0
        )
        cap = s.p_cap_hpa * 100.0
        scale = 400.0
        p = cap - scale * np.logaddexp(0.0, (cap - raw) / scale)
        d_w, d_c, along_w, along_c = self.distances(x, y, tau)
        tw = (
            s.warm_trough_hpa
            * 100
            * np.exp(-((d_w / (s.warm_trough_km * 1e3)) ** 2))
            * _s(along_w / 100e3)
        )
        tc = (
            s.cold_trough_hpa
            * 100
            * np.exp(-((d_c / (s.cold_trough_km * 1e3)) ** 2))
            * _s(along_c / 100e3)
        )
        # a high over the east of the domain: a weak southerly geostrophic background
        return p - tw - tc + s.east_rise_hpa_per_100km * 1e-3 * x

    # ---- precipitation and humidity ------------------------------------
    def precip_rate(self, x, y, tau):
        """Surface precipitation rate [mm h-1]."""
        s = self.spec
        d_w, d_c, along_w, along_c = self.distances(x, y, tau)
        lead = s.shield_ahead_nm * NM
        ahead = _s((-d_c) / 60e3)  # east of (ahead of) the cold front
        ramp = 1.0 + 2.0 * np.clip(1 - d_w / lead, 0, 1)  # 1 mm/h at the edge, 3 at the front
        shield = ramp * _s(d_w / 15e3) * _s((lead - d_w) / 20e3) * ahead
        shield *= _s((2200e3 - along_w) / 200e3)
        lo, hi = (v * NM for v in s.band_behind_nm)
        mid, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
        band = 6.0 * np.exp(-(((d_c - mid) / (0.85 * half)) ** 2)) * _s((80e3 - d_w) / 60e3)
        band *= _s((2200e3 - along_c) / 200e3)
        warm = 0.2 * self.warm_sector(d_w, d_c, 0.0)
        return shield + band + warm

    def relative_humidity(self, x, y, h, tau, rate=None):
        """Relative humidity [%] at height ``h`` [m]."""
        s = self.spec
        d_w, d_c, along_w, along_c = self.distances(x, y, tau)
        hkm = h / 1000.0
        rh = np.clip(80.0 - 7.0 * hkm, 20.0, 80.0) + 0 * d_w

        def blend(rh, target, weight):
            return rh + (target - rh) * weight

        w = self.warm_sector(d_w, d_c, h)
        rh = blend(rh, 92.0, w * _s((2500.0 - h) / 500.0))
        lead = 300 * NM
        ahead = _s(-d_c / 60e3)
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
        )
        rh = blend(rh, 97.0, band)
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
        h = self.h_levels[:, None, None]
        t = self.temperature(x, y, lat, h, tau)
        rate = self.precip_rate(x, y, tau)
        rh = self.relative_humidity(x, y, h, tau, rate=rate)
        t_sea = self.temperature(x, y, lat, 0.0, tau)
        t2m = self.temperature(x, y, lat, 2.0, tau)
        rh2m = self.relative_humidity(x, y, 2.0, tau, rate=rate)
        msl = self.mslp(x, y, tau)
        z = hypsometric_heights(msl, t_sea, t, np.array(LEVELS_HPA))
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

    def accumulated_precip(self, tau0, tau1, sub_min=10):
        """Precipitation amount between scenario times tau0 and tau1 [kg m-2] (Simpson)."""
        if tau1 <= tau0:
            return np.zeros_like(self.x2)
        n = int(round((tau1 - tau0) / (sub_min * 60.0)))
        n += n % 2
        taus = np.linspace(tau0, tau1, n + 1)
        weights = np.ones(n + 1)
        weights[1:-1:2] = 4.0
        weights[2:-1:2] = 2.0
        total = np.zeros_like(self.x2)
        for wgt, tau in zip(weights, taus, strict=True):
            total += wgt * self.precip_rate(self.x2, self.y2, tau)
        return total * (taus[1] - taus[0]) / 3.0 / 3600.0

    # ---- truth ---------------------------------------------------------
    def front_line(self, kind, tau, h=0.0, shift_warm_km=0.0, length_km=2200.0, step_km=50.0):
        """(lon, lat) of a front line [deg] at height ``h`` [m].

        The line is the tanh-zone centre at that height, starting where the
        two leaning zone centres meet; ``shift_warm_km`` moves it toward the
        warm side (0.658 L for the objective locating line).
        """
        s = self.spec
        ax, ay = self.apex(tau)
        ow = s.warm_slope_1_in * h  # warm-front zone centre lies d_w = ow
        oc = s.cold_slope_1_in * h  # cold-front zone centre lies d_c = oc
        # apex at height h: d_w = ow and d_c = oc  ->  r.n_w = ow, r.n_c = -oc
        r = np.linalg.solve(np.array([self.n_w, self.n_c]), [ow, -oc])
        base = np.array([ax, ay]) + r
        dist = np.arange(0.0, length_km * 1e3 + 1, step_km * 1e3)
        if kind == "warm":
            pts = base[:, None] + self.a_w[:, None] * dist - self.n_w[:, None] * shift_warm_km * 1e3
        else:
            pts = base[:, None] + self.a_c[:, None] * dist + self.n_c[:, None] * shift_warm_km * 1e3
        lon, lat = self.proj.inverse(pts[0], pts[1])
        inside = (
            (lat >= s.lat_range[0])
            & (lat <= s.lat_range[1])
            & (lon >= s.lon_range[0])
            & (lon <= s.lon_range[1])
        )
        return lon[inside], lat[inside]

    def passage_tau(self, lon, lat):
        """Scenario times [s] of the surface warm and cold front at a point."""
        x, y = self.proj.forward(lon, lat)
        r = np.array([x, y]) - self.apex0
        return float(r @ self.n_w / self.spec.warm_speed_ms), float(
            r @ self.n_c / self.spec.cold_speed_ms
        )

    def earth_speed(self, kind, tau, along_km=600.0):
        """Front-normal speed on the earth [m s-1] at ``along_km`` from the low centre."""
        s = self.spec
        a, n, spd = (
            (self.a_w, self.n_w, s.warm_speed_ms)
            if kind == "warm"
            else (self.a_c, self.n_c, s.cold_speed_ms)
        )
        p = self.apex(tau) + a * along_km * 1e3
        lon, lat = self.proj.inverse(p[0], p[1])
        return float(spd / self.proj.scale(lon, lat))


# --------------------------------------------------------------------------
# Physics helpers (numpy)
# --------------------------------------------------------------------------


def hypsometric_heights(msl_pa, t_sea_k, t_levels_k, levels_hpa):
    r"""Heights of pressure levels [m] from sea-level pressure and temperatures.

    Parameters
    ----------
    msl_pa : ndarray (Y, X)
        Mean-sea-level pressure [Pa] (height 0 m).
    t_sea_k : ndarray (Y, X)
        Air temperature at sea level [K].
    t_levels_k : ndarray (level, Y, X)
        Air temperature on the levels [K], 1000 hPa first.
    levels_hpa : ndarray (level,)
        Pressure levels [hPa], decreasing.

    Returns
    -------
    ndarray (level, Y, X)
        Geopotential height [m].

    Notes
    -----
    Layer form of the hypsometric equation with the layer-mean temperature
    of a profile linear in ln p (Wallace & Hobbs 2006, Eq. 3.29; number from
    memory): :math:`z_2 - z_1 = (R_d / g_0) (T_1 + T_2)/2 \\ln(p_1/p_2)`.
    """
    p = np.asarray(levels_hpa, float)[:, None, None] * 100.0
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
        values = dict(fields, precip=accum)
        for name, (kind_dims, std, long, unit, extra) in _VARS.items():
            dims = ("time", "level", "lat", "lon") if kind_dims == "3d" else ("time", "lat", "lon")
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
                    "scale_factor": np.float32(scale) if False else scale,
                    "add_offset": offset,
                    **extra,
                }
            )
            var.set_auto_maskandscale(False)
            var[:] = packed[None]
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
        for hour in range(0, s.hours + 1, s.step_h):
            if wanted is not None and (set_name, hour) not in wanted:
                continue
            valid = scen.start + np.timedelta64(hour, "h")
            tau = hour * 3600.0 + offset * 3600.0
            tau_ref = (reference - scen.start) / np.timedelta64(1, "s") + offset * 3600.0
            fields = scen.fields(tau)
            accum = scen.accumulated_precip(tau_ref, tau)
            path = out / folder / _file_name(folder, valid, reference)
            _write_file(path, scen, fields, accum, valid, reference, label, kind)
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


def _point_fields(scen, lon, lat, elevation, tau):
    """Surface values at one point from the analytic fields."""
    x, y = scen.proj.forward(lon, lat)
    t2 = scen.temperature(x, y, lat, 2.0, tau) - 0.0065 * elevation
    rate = scen.precip_rate(x, y, tau)
    rh = scen.relative_humidity(x, y, 2.0, tau, rate=rate)
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


def truth(spec=None):
    """Return the answers the kit should find in the sample event (a JSON-ready dict)."""
    scen = Scenario(spec)
    s = scen.spec
    h850 = float(standard_atmosphere_height(850.0))
    locating_shift = {"warm": 0.658 * s.l_warm_km, "cold": 0.658 * s.l_cold_km}
    out = {
        "description": (
            "Invented frontshift demo event (January 2027): a frontal depression crossing the "
            "domain toward the east-north-east while deepening, with a warm front running out "
            "from the low toward bearing 100 deg and a cold front toward 190 deg. All names, "
            "dates and weather are invented. Lines are (lon, lat) lists in degrees; times UTC."
        ),
        "caution": CAUTION,
        "generator": "python -m tools.scenario",
        "valid_times": [
            _iso(scen.start + np.timedelta64(h, "h")) for h in range(0, s.hours + 1, s.step_h)
        ],
        "levels_hpa": list(LEVELS_HPA),
        "prescribed": {
            "warm": {
                "normal_speed_ms": s.warm_speed_ms,
                "normal_speed_note": (
                    "constant normal speed on the conformal plane of tools.scenario; "
                    "the earth speed differs by the map scale factor (< 1 %), "
                    "see speed_earth_ms per time"
                ),
                "ray_bearing_deg": s.warm_ray_bearing_deg,
                "normal_bearing_deg": s.warm_ray_bearing_deg - 90.0,
                "slope_1_in": s.warm_slope_1_in,
                "zone_half_width_l_km": s.l_warm_km,
                "zone_width_10_90_km": round(2 * math.atanh(0.8) * s.l_warm_km, 1),
            },
            "cold": {
                "normal_speed_ms": s.cold_speed_ms,
                "ray_bearing_deg": s.cold_ray_bearing_deg,
                "normal_bearing_deg": s.cold_ray_bearing_deg - 90.0,
                "slope_1_in": s.cold_slope_1_in,
                "zone_half_width_l_km": s.l_cold_km,
                "zone_width_10_90_km": round(2 * math.atanh(0.8) * s.l_cold_km, 1),
            },
            "warm_sector_excess_k": s.dt_warm_k,
            "tropopause_fold": {
                "behind_surface_cold_front_km": s.fold_behind_km,
                "depth_m": s.fold_depth_m,
                "width_km": s.fold_width_km,
            },
            "low_velocity_ms": [round(float(v), 3) for v in scen.apex_velocity],
            "central_pressure_hpa": list(s.p_centre_hpa),
            "level_heights_m_for_geometry": {
                str(int(p)): round(float(h), 1)
                for p, h in zip(LEVELS_HPA, scen.h_levels, strict=True)
            },
        },
        "notes": {
            "lines": (
                "'surface' lines are the tanh-zone centres at the surface; '850hPa' the zone "
                "centres at the 850 hPa level (150 h toward the cold side for the warm front, "
                "50 h for the cold front, h the ICAO standard-atmosphere height of 850 hPa); "
                "'850hPa_locating' is where the thermal front parameter of a tanh zone peaks "
                "and the locating function of Hewson (1998) is zero: 0.658 L on the warm side "
                "of the zone centre (analytic, no smoothing; the linear background gradient "
                "and the humidity change across the zone move it by a few km, and smoothing "
                "before the parameter is computed moves it further toward the warm side). "
                "Within about 200 km of the low centre the product of the two zones rounds "
                "the corner of the warm sector."
            ),
            "theta_w": (
                "the lines are temperature-zone centres; the 850 hPa theta-w zone (MetPy "
                "theta-w of the written fields) lies within about 5 km of the warm-front line "
                "and 10-20 km toward the cold side of the cold-front line, the humidity "
                "change across the cold front widening its theta-w zone (half-width 60-75 "
                "km against 50 km); theta-w contrast across the zones about 6.5 K (warm) "
                "and 7-8 K (cold) at 850 hPa"
            ),
            "speeds": (
                "normal speeds are prescribed on the conformal plane (speeds_ms); the "
                "earth speeds per time (speed_earth_ms, 600 km from the low along each "
                "front) differ by the map scale factor, under 1 %. The 850 hPa wind "
                "component across the warm front is about 1.5 x its speed (warm to cold "
                "side) and across the cold front about 1 x its speed (cold to warm side)"
            ),
            "timing_offset_h": "positive: the run's fronts are early (the run shows the event "
            "that many hours ahead of the analyses)",
            "passages": "time the surface front line crosses the site",
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
        for hour in range(0, s.hours + 1, s.step_h):
            valid = scen.start + np.timedelta64(hour, "h")
            tau = (hour + offset) * 3600.0
            ax, ay = scen.apex(tau)
            alon, alat = scen.proj.inverse(ax, ay)
            rec = {
                "low": {
                    "lon": round(float(alon), 3),
                    "lat": round(float(alat), 3),
                    "central_pressure_hpa": round(scen.central_pressure(tau) / 100.0, 2),
                }
            }
            for lvl, h, shift in (
                ("surface", 0.0, None),
                ("850hPa", h850, None),
                ("850hPa_locating", h850, locating_shift),
            ):
                rec[lvl] = {}
                for kindf in ("warm", "cold"):
                    lon, lat = scen.front_line(
                        kindf, tau, h=h, shift_warm_km=0.0 if shift is None else shift[kindf]
                    )
                    rec[lvl][kindf] = {
                        "lon": [round(float(v), 3) for v in lon],
                        "lat": [round(float(v), 3) for v in lat],
                    }
            rec["speed_earth_ms"] = {
                k: round(scen.earth_speed(k, tau), 3) for k in ("warm", "cold")
            }
            entry["times"][_iso(valid)] = rec
        for name, lat, lon, _ in SITES:
            tw, tc = scen.passage_tau(lon, lat)
            entry["passages"][name] = {
                "warm": _iso(
                    scen.start + np.timedelta64(int(round((tw - offset * 3600) / 60.0)), "m")
                ),
                "cold": _iso(
                    scen.start + np.timedelta64(int(round((tc - offset * 3600) / 60.0)), "m")
                ),
            }
        entry["freezing_rain_window"] = _freezing_rain_window(scen, offset)
        set_name = "analyses" if folder == "analyses" else label
        out["sets"][set_name] = entry
    out["speeds_ms"] = {"warm": s.warm_speed_ms, "cold": s.cold_speed_ms}
    out["slopes_1_in"] = {"warm": s.warm_slope_1_in, "cold": s.cold_slope_1_in}
    out["timing_offsets_h"] = {k: v["timing_offset_h"] for k, v in out["sets"].items()}
    out["freezing_rain_site"] = COLD_POOL_SITE
    return out


def _readme(scen, facts):
    """Return the event description written beside the files (README.md)."""
    s = scen.spec
    rows = []
    for name, lat, lon, elev in SITES:
        p = facts["sets"]["analyses"]["passages"][name]
        rows.append(
            f"| {name} | {lat:.2f} | {lon:.2f} | {elev:.0f} "
            f"| {p['warm'][:16]}Z | {p['cold'][:16]}Z |"
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
    return (
        f"""# sample_grids: the invented frontshift demo event

> {CAUTION}
> Everything here is invented: the sites, the dates and the weather. It is not
> a real model run and not real data. It was written by `python -m tools.scenario`
> (regenerate with `python -m tools.scenario --out sample_grids --overwrite`).

## The event
A frontal depression crosses the domain ({s.lat_range[0]:g}-{s.lat_range[1]:g} N,
{abs(s.lon_range[0]):g} W-{s.lon_range[1]:g} E, {s.resolution_deg} deg grid) toward the
east-north-east at about {np.hypot(*scen.apex_velocity):.1f} m/s between {facts["valid_times"][0]}
and {facts["valid_times"][-1]}, deepening from {s.p_centre_hpa[0]:g} to {s.p_centre_hpa[1]:g} hPa.
The warm front runs out from the low toward bearing {s.warm_ray_bearing_deg:g} deg and moves
north-north-east at {s.warm_speed_ms:g} m/s; the cold front runs out toward bearing
{s.cold_ray_bearing_deg:g} deg and moves east at {s.cold_speed_ms:g} m/s. Both are tanh zones
(half-widths {s.l_warm_km:g} and {s.l_cold_km:g} km); at 850 hPa the theta-w contrast across
the warm-front zone itself is about 6.5 K (about 10 K between points 300 km either side, where
the background north-south gradient adds) and 7-8 K across the cold front. The fronts lean
1 in {s.warm_slope_1_in:g} and
1 in {s.cold_slope_1_in:g} toward their cold sides. A light-moderate rain shield starts about
{s.shield_ahead_nm:g} nm ahead of the surface warm front; a heavier band lies
{s.band_behind_nm[0]:g}-{s.band_behind_nm[1]:g} nm behind the surface cold front. A shallow
sub-zero surface layer sits ahead of the warm front around {COLD_POOL_SITE}, which gets a
freezing-rain window (warm air aloft over sub-zero air) before the warm front passes
(analyses: {facts["sets"]["analyses"]["freezing_rain_window"]["start"]} to
{facts["sets"]["analyses"]["freezing_rain_window"]["end"]}). A
tropopause fold lies some {s.fold_behind_km:g} km behind the surface cold front aloft, near the low.

## Files
{runs}
- `analyses/valid_YYYYMMDDHH.nc`: verifying analyses every {s.step_h} h of the window (written as
  one sequence whose forecast_reference_time is the window start, so that their accumulated
  precipitation can be differenced like a run's)
- `sites.csv`: the invented sites (`name,lat,lon,elevation_m`); some are offshore installations
- `stations/<site>.csv`: 10-min station series drawn from the analyses with noise (pressure
  reduced to mean sea level); a few readings are missing, two sites have a 70-min outage and
  one file holds a garbage row
- `truth.json`: front lines at the surface and at 850 hPa (zone centre and the expected
  objective locating line), low centre, speeds, slopes, site passages per run, timing offsets

Every NetCDF file is CF-1.8 with standard names and units, CF int16 packing (scale_factor =
quantization step) and zlib compression. Variables: `t`, `rh` (%), `u`, `v` (geostrophic),
`z` on {len(LEVELS_HPA)} pressure levels; `msl`, `t2m`, `d2m`, `u10`, `v10`, `precip`
(accumulated since forecast_reference_time, kg m-2).

## Site passages in the analyses (UTC)
| site | lat | lon | elevation m | warm front | cold front |
|---|---|---|---|---|---|
"""
        + "\n".join(rows)
        + "\n"
    )


def _compact_json(obj):
    """JSON with one line per list of numbers (smaller, still readable)."""
    import re

    text = json.dumps(obj, indent=1)
    return (
        re.sub(
            r"\[\s*([-0-9.eE,\s]+?)\s*\]",
            lambda m: "[" + ", ".join(v.strip() for v in m.group(1).split(",")) + "]",
            text,
        )
        + "\n"
    )


def _freezing_rain_window(scen, offset):
    """First and last time (UTC ISO) of freezing rain at the cold-pool site, 10-min steps.

    Freezing rain here: 2-m temperature (sea level, no elevation correction)
    below 0 C, the warmest of 925, 850 and 700 hPa above 0 C, and a
    precipitation rate of at least 0.1 mm/h.
    """
    lat, lon = {n: (la, lo) for n, la, lo, _ in SITES}[COLD_POOL_SITE]
    x, y = scen.proj.forward(lon, lat)
    heights = standard_atmosphere_height(np.array([925.0, 850.0, 700.0]))
    hits = []
    for minute in range(0, scen.spec.hours * 60 + 1, 10):
        tau = minute * 60.0 + offset * 3600.0
        t2 = scen.temperature(x, y, lat, 2.0, tau)
        aloft = np.max(scen.temperature(x, y, lat, heights, tau))
        if t2 < 273.15 and aloft > 273.15 and scen.precip_rate(x, y, tau) >= 0.1:
            hits.append(minute)
    if not hits:
        return None
    return {
        "site": COLD_POOL_SITE,
        "start": _iso(scen.start + np.timedelta64(hits[0], "m")),
        "end": _iso(scen.start + np.timedelta64(hits[-1], "m")),
    }


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
