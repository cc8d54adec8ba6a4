"""Physical constants, unit factors and rules of thumb, each once, with its source.

Every module of the kit takes these from here; none writes its own copy (the
duplicates tool and ``tests/test_layering.py`` keep it so).
"""

from __future__ import annotations

import math

__all__ = [
    "EARTH_RADIUS_M",
    "EARTH_RADIUS_KM",
    "GRIB_SPHERE_RADIUS_M",
    "G0",
    "OMEGA",
    "RD",
    "CP",
    "KAPPA",
    "T0_K",
    "KT_PER_MS",
    "MS_PER_KT",
    "NM_KM",
    "FT_PER_M",
    "TYPICAL_SLOPE_1_IN",
    "ZONE_CENTRE_FACTOR",
]

#: mean Earth radius R1 = (2a + b) / 3 of GRS80 [m] (Moritz 2000, Geodetic Reference
#: System 1980, J. Geodesy 74); the sphere of every local plane and great circle here
EARTH_RADIUS_M = 6371008.8
#: the same in km
EARTH_RADIUS_KM = EARTH_RADIUS_M / 1000.0
#: radius of the spherical Earth that GRIB2 shape of the Earth 6 declares [m]
#: (WMO Manual on Codes, GRIB2 code table 3.2)
GRIB_SPHERE_RADIUS_M = 6371229.0
#: standard gravity [m s-2] (3rd CGPM 1901; WMO uses it to define geopotential metres);
#: the canonical ``z`` of a run is geopotential divided by it
G0 = 9.80665
#: Earth's angular velocity [rad s-1] (Moritz 2000, GRS80)
OMEGA = 7.292115e-5
#: gas constant of dry air [J kg-1 K-1] (Wallace & Hobbs 2006, Atmospheric Science, 2nd ed.)
RD = 287.04
#: specific heat of dry air at constant pressure [J kg-1 K-1] (Wallace & Hobbs 2006)
CP = 1004.0
#: Rd / cp of dry air [1] (Bolton 1980 uses 0.2854 with his theta-e formula)
KAPPA = 0.2854
#: 0 degC in kelvin (exact)
T0_K = 273.15
#: knots per metre per second (1 kt = 1852 m per 3600 s, exact)
KT_PER_MS = 3600.0 / 1852.0
#: metres per second per knot
MS_PER_KT = 1852.0 / 3600.0
#: one nautical mile [km] (exact)
NM_KM = 1.852
#: feet per metre (international foot = 0.3048 m, exact)
FT_PER_M = 1.0 / 0.3048
#: typical slopes of frontal surfaces, N of 1 in N, used where a front's own slope is
#: not resolved (common practice, no source; REFERENCES.md [trade])
TYPICAL_SLOPE_1_IN = {"warm": 150.0, "cold": 50.0}
#: distance from the locating line to the zone centre per |grad tau| / TFP [1]. For a
#: tanh zone the TFP peaks at x = atanh(1/sqrt 3) L = 0.658 L (REFERENCES.md, analytic
#: check) where |grad tau| / TFP = 0.5 / tanh(x / L) = (sqrt 3 / 2) L; ratio 0.7603
ZONE_CENTRE_FACTOR = math.atanh(1.0 / math.sqrt(3.0)) / (math.sqrt(3.0) / 2.0)
