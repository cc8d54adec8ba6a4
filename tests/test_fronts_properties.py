"""Property-based checks of the front locator (hypothesis).

The locating line of Hewson (1998) is the zero of the derivative of the
thermal front parameter (Renard & Clarke 1965) along the thermal gradient.
From that definition [pub, derived]:
- adding a constant to the field changes no gradient, so the line stays put;
- multiplying the anomaly by a > 0 multiplies TFP and its derivative by a,
  so the zero line stays put (masks only let more of it through for a > 1);
- rotating the pattern rotates the line with it;
- missing data far from the zone touches no value the line depends on.
The zones are analytic fields built in tests/test_fronts.py, not reference
values.
"""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_fronts import line_x_km, longest, make_ds, zone_latlon
from test_fronts import settings as fsettings

from kit.science import fronts as F
from kit.science import geo

PROPS = settings(max_examples=6, deadline=None, derandomize=True,
                 suppress_health_check=[HealthCheck.too_slow])


def base():
    return zone_latlon(50.0, 0.0, 0.25, half_lat=6.0, half_lon=9.0)


def line_position(ds, angle=0.0):
    fr = longest(F.find_fronts(ds, level=1000.0, settings=fsettings()))
    return float(np.median(line_x_km(fr, 0.0, 50.0, angle))), fr


X0, FR0 = None, None


def reference():
    global X0, FR0
    if X0 is None:
        X0, FR0 = line_position(base())
    return X0, FR0


def with_tau(ds, tau):
    return make_ds(ds.lat, ds.lon, tau, ds.u.values[:, 0], ds.v.values[:, 0])


@PROPS
@given(shift=st.floats(-25.0, 25.0))
def test_adding_a_constant_does_not_move_the_front(shift):
    ds = base()
    x0, fr0 = reference()
    x, fr = line_position(with_tau(ds, ds.t.values[:, 0] + shift))
    assert x == pytest.approx(x0, abs=0.5)
    assert fr.kind == fr0.kind


@PROPS
@given(factor=st.floats(1.0, 4.0))
def test_scaling_the_contrast_does_not_move_the_front(factor):
    ds = base()
    tau = ds.t.values[:, 0]
    x0, _ = reference()
    x, _ = line_position(with_tau(ds, 285.0 + factor * (tau - 285.0)))
    assert x == pytest.approx(x0, abs=0.5)


@PROPS
@given(angle=st.floats(0.0, 360.0))
def test_rotating_the_pattern_rotates_the_line(angle):
    ds = zone_latlon(50.0, 0.0, 0.25, angle=angle, half_lat=6.0, half_lon=9.0)
    x0, _ = reference()
    x, fr = line_position(ds, angle)
    # the grid is not rotation-invariant: within one grid length
    assert abs(x - x0) < geo.grid_length_km(ds)
    assert fr.kind == "warm"


@PROPS
@given(corner=st.sampled_from(["nw", "ne", "sw", "se"]), size=st.integers(2, 8))
def test_nan_far_from_the_front_does_not_move_it(corner, size):
    ds = base()
    tau = ds.t.values[:, 0].copy()
    ny, nx = tau.shape[-2:]
    rows = slice(0, size) if corner[0] == "s" else slice(ny - size, ny)
    cols = slice(0, size) if corner[1] == "w" else slice(nx - size, nx)
    tau[..., rows, cols] = np.nan  # > 500 km from the zone (line near x = +100 km)
    x0, fr0 = reference()
    x, fr = line_position(with_tau(ds, tau))
    assert x == pytest.approx(x0, abs=0.5)
    assert fr.length_km == pytest.approx(fr0.length_km, rel=0.1)
