"""Thermodynamics on pressure levels: theta, theta-e, theta-w, wet-bulb, dew point, 0 C levels.

Every function accepts numpy arrays (or scalars) and xarray objects alike,
broadcasts its arguments and returns the kind that came in. xarray inputs
backed by dask stay lazy (the work runs block by block through
:func:`xarray.apply_ufunc`). Units are fixed and documented: temperatures in
kelvin, pressure in hectopascals, relative humidity as a fraction 0..1,
specific humidity in kg kg-1, heights in metres.

Choices and accuracy (checked in tests/test_thermo.py):

- theta-e is Bolton's Eq. 39 with his own constants (Eq. 10 saturation
  vapour pressure, kappa = 0.2854). Against a numerical integration of the
  pseudo-adiabatic equation, theta-w from it is within 0.04 K over
  1000-300 hPa and -40..35 C. ``kappa=2/7`` reproduces libraries that take
  c_pd = 3.5 R_d (MetPy) to 0.001 K.
- theta-w and the wet-bulb temperature are exact inverses of that theta-e
  (Newton steps after [DaviesJones2008]; residual below 1e-6 K), so the
  remaining error is Bolton's formula itself.
- Freezing levels are heights [m] interpolated linearly between levels.

Speed: large numpy inputs are evaluated in cache-sized blocks on a few
threads; float32 inputs are computed in float32 (about twice as fast, within
0.02 K of float64). One 0.25-degree global level of theta-w takes well under
0.1 s (``python -m benchmarks``).

Computation only: this module never imports graphics libraries.

References
----------
.. [Bolton1980] Bolton, D., 1980: The computation of equivalent potential
   temperature. Mon. Wea. Rev., 108, 1046-1053.
.. [DaviesJones2008] Davies-Jones, R., 2008: An efficient and accurate method
   for computing the wet-bulb temperature along pseudoadiabats. Mon. Wea.
   Rev., 136, 2764-2785.
"""

import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import xarray as xr

from kit.constants import KAPPA, T0_K
from kit.errors import InputError

__all__ = [
    "KAPPA",
    "EPSILON",
    "T0C",
    "potential_temperature",
    "saturation_vapour_pressure",
    "vapour_pressure_from_dewpoint",
    "mixing_ratio_from_dewpoint",
    "dewpoint_from_vapour_pressure",
    "dewpoint_from_relative_humidity",
    "dewpoint_from_specific_humidity",
    "relative_humidity",
    "lcl_temperature",
    "equivalent_potential_temperature",
    "saturated_equivalent_potential_temperature",
    "wet_bulb_potential_temperature",
    "wet_bulb_temperature",
    "theta_w_of",
    "level_field",
    "level_crossing",
    "freezing_level",
    "wet_bulb_freezing_level",
    "warm_layer_aloft",
]

# KAPPA (R_d / c_pd = 0.2854 of Bolton 1980, Eq. 39) comes from kit.constants and keeps
# its public name here.
#: Ratio of the gas constants of dry air and water vapour, R_d / R_v [1].
EPSILON = 0.622
#: 0 C in kelvin [K] (:data:`kit.constants.T0_K`).
T0C = T0_K
_P0 = 1000.0  # reference pressure [hPa]

# Bolton (1980) Eq. 10 constants: es = 6.112 exp(17.67 Tc / (Tc + 243.5)) [hPa]
_ES0 = 6.112
_EA = 17.67
_EB = 243.5


# ---------------------------------------------------------------------------
# container handling
# ---------------------------------------------------------------------------
def _is_xr(x):
    return isinstance(x, (xr.DataArray, xr.Dataset))


def _float(x):
    """Numpy float array; keep float32, promote everything else to float64.

    Python scalars stay Python floats, so that they do not promote float32
    arrays to float64 (numpy's weak scalar rule).
    """
    if isinstance(x, (int, float)) and not isinstance(x, bool):
        return float(x)
    a = np.asarray(x)
    if a.dtype == np.float32:
        return a
    return a.astype(np.float64, copy=False)


def _is_dask(x):
    return _is_xr(x) and getattr(x, "chunks", None) is not None


def _apply(func, *args, name=None, attrs=None):
    """Run an element-wise numpy kernel on numpy or xarray arguments.

    xarray arguments are aligned and broadcast by :func:`xarray.apply_ufunc`
    (lazily with dask, which then runs the blocks in parallel); numpy
    arguments are broadcast by numpy, and large ones are cut into
    cache-sized blocks run on a few threads (:func:`_blockwise`). Scalars in
    give a numpy scalar out.
    """
    if any(_is_xr(a) for a in args):
        threads = not any(_is_dask(a) for a in args)  # dask already runs blocks in parallel
        out = xr.apply_ufunc(
            lambda *a: _blockwise(func, a, threads=threads),
            *args,
            dask="parallelized",
            output_dtypes=[_result_dtype(args)],
            keep_attrs=False,
        )
        if isinstance(out, xr.DataArray):
            if name is not None:
                out.name = name
            if attrs:
                out.attrs.update(attrs)
        return out
    res = _blockwise(func, args)
    if np.ndim(res) == 0:
        return res[()] if isinstance(res, np.ndarray) else np.float64(res)
    return res


def _result_dtype(args):
    dts = [getattr(a, "dtype", np.dtype(np.float64)) for a in args if hasattr(a, "dtype")]
    if dts and all(d == np.float32 for d in dts):
        return np.float32
    return np.float64


_BLOCK = 16384  # elements per block: the temporaries of a kernel stay in cache


def _blockwise(func, args, threads=True, block=_BLOCK):
    """Evaluate an element-wise kernel block by block over the broadcast shape.

    A long chain of numpy operations on millions of points spends most of
    its time moving temporaries through memory; cut into blocks of about
    16k points it stays in cache, and the blocks run on a few threads (numpy
    releases the GIL inside its loops). Results are identical to one call.
    """
    arrs = [_float(a) for a in args]
    shape = np.broadcast_shapes(*(np.shape(a) for a in arrs))
    n = int(np.prod(shape, dtype=np.int64))
    if n <= 4 * block:
        res = func(*arrs)
        return np.asarray(res) if not np.isscalar(res) else res
    nd = len(shape)
    dtype = np.result_type(*arrs)
    arrs = [np.asarray(a, dtype=dtype if isinstance(a, float) else a.dtype) for a in arrs]
    arrs = [a.reshape((1,) * (nd - a.ndim) + a.shape) for a in arrs]
    # split axis: the outermost axis whose inner part still fits in a block
    inner, ax = 1, nd - 1
    while ax > 0 and inner * shape[ax] <= block:
        inner *= shape[ax]
        ax -= 1
    step = max(1, block // inner)
    tasks = []
    for idx in np.ndindex(*shape[:ax]):
        for s in range(0, shape[ax], step):
            tasks.append(idx + (slice(s, s + step),))
    out = np.empty(shape, dtype=dtype)

    def run(sl):
        subs = []
        for a in arrs:
            key = tuple(
                (0 if isinstance(k, int) else slice(0, 1)) if a.shape[i] == 1 else k
                for i, k in enumerate(sl)
            )
            subs.append(a[key])
        out[sl] = func(*subs)

    workers = min(len(tasks), os.cpu_count() or 1, 8) if threads else 1
    if workers > 1:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(run, tasks))
    else:
        for sl in tasks:
            run(sl)
    return out


# ---------------------------------------------------------------------------
# numpy kernels
# ---------------------------------------------------------------------------
_LN_P0 = float(np.log(_P0))


def _es(t):
    tc = t - T0C
    return _ES0 * np.exp(_EA * tc / (tc + _EB))


def _td_from_e(e):
    with np.errstate(divide="ignore", invalid="ignore"):
        v = np.log(e / _ES0)
        return T0C + _EB * v / (_EA - v)


def _theta(t, p, kappa=KAPPA):
    return t * (_P0 / p) ** kappa


def _tl(t, td):
    return 56.0 + 1.0 / (1.0 / (td - 56.0) + np.log(t / td) / 800.0)


def _ln_theta_e(t, td, p, kappa=KAPPA):
    """Natural log of Bolton's theta-e (Eqs. 10, 15, 24, 39): one exp and four logs."""
    tcd = td - T0C
    es = _ES0 * np.exp(_EA * tcd / (tcd + _EB))
    pd = p - es
    r = EPSILON * es / pd
    lnt = np.log(t)
    tl = 56.0 + 1.0 / (1.0 / (td - 56.0) + (lnt - np.log(td)) * (1.0 / 800.0))
    out = lnt + kappa * (_LN_P0 - np.log(pd))
    out += 0.28 * r * (lnt - np.log(tl))
    out += r * (1.0 + 0.448 * r) * (3036.0 / tl - 1.78)
    return out


def _theta_e(t, td, p, kappa=KAPPA):
    return np.exp(_ln_theta_e(t, td, p, kappa))


def _log_theta_es_and_slope(t, p, kappa=KAPPA):
    """Natural log of theta-e of saturated air at (t, p) and its derivative in t [K-1].

    Bolton (1980) Eq. 39 with T_L = T (saturated air): the pseudo-adiabat
    through (t, p) is labelled by this value.
    """
    tc = t - T0C
    den = tc + _EB
    es = _ES0 * np.exp(_EA * tc / den)
    dlnes = (_EA * _EB) / (den * den)
    pd = p - es
    r = EPSILON * es / pd
    inv_t = 1.0 / t
    g = 3036.0 * inv_t - 1.78
    rr = r * (1.0 + 0.448 * r)
    f = np.log(t) + kappa * (_LN_P0 - np.log(pd)) + rr * g
    # d/dT of the three terms; es/pd = r/epsilon and dr/dT = r (p/pd) dln(es)/dT
    df = inv_t * (1.0 - 3036.0 * rr * inv_t) + r * dlnes * (
        kappa / EPSILON + (p / pd) * (1.0 + 0.896 * r) * g
    )
    return f, df


def _theta_w_first_guess(theta_e):
    # Davies-Jones (2008), Eq. 3.8: rational fit of theta_e - theta_w in x = theta_e / 273.15
    x = theta_e * (1.0 / T0C)
    a = 7.101574 + x * (-20.68208 + x * (16.11182 + x * (2.574631 - 5.205688 * x)))
    b = 1.0 + x * (-3.552497 + x * (3.781782 + x * (-0.6899655 - 0.5929340 * x)))
    return theta_e - np.exp(a / b)


def _wet_bulb_first_guess(t, td, p):
    """Isobaric (psychrometric) wet-bulb temperature, linearised: a first guess [K].

    Solves e_s(T_W) = e + A p (T - T_W) with e_s linearised about
    T_d + 0.3 (T - T_d) and A = 6.6e-4 K-1, the psychrometer coefficient
    c_p / (epsilon L_v) (Normand's construction, isobaric form).
    """
    tm = td + 0.3 * (t - td)
    tc = tm - T0C
    den = tc + _EB
    slope = _ES0 * np.exp(_EA * tc / den) * (_EA * _EB) / (den * den)
    gp = 6.6e-4 * p
    return (slope * td + gp * t) / (slope + gp)


def _invert_theta_e(log_theta_e, p, t_guess, iterations, kappa=KAPPA):
    """Temperature [K] at p on the pseudo-adiabat labelled ln theta_e.

    Newton steps on X(T) = theta_es(T, p)^(-1/kappa) = X(theta_e), the
    variable in which Davies-Jones (2008, section 4) found the wet-bulb
    temperature nearly linear, so each step almost squares the error.
    """
    lam = 1.0 / kappa
    t = t_guess
    for _ in range(iterations):
        f, df = _log_theta_es_and_slope(t, p, kappa)
        t = t - np.expm1(lam * (f - log_theta_e)) / (lam * df)
    return t


def _bisect(log_theta_e, p, lo, hi, kappa=KAPPA, steps=60):
    """Bracketed solution of ln theta_es(T, p) = ln theta_e for T in [lo, hi] [K].

    The safeguard for the rare points the Newton steps are not made for
    (theta-e beyond 650 K, i.e. theta-w above 50 C, only found in bad
    data): ln theta_es rises monotonically with T; where e_s(T) >= p it is
    undefined and counts as too warm.
    """
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            f, _ = _log_theta_es_and_slope(mid, p, kappa)
        too_warm = ~(f < log_theta_e)  # NaN counts as too warm
        hi = np.where(too_warm, mid, hi)
        lo = np.where(too_warm, lo, mid)
    return 0.5 * (lo + hi)


def _safeguard(out, bad, log_theta_e, p, hi, kappa=KAPPA):
    """Replace ``out`` where ``bad`` by the bracketed solution."""
    if not np.any(bad):
        return out
    out = np.array(out, copy=True)
    le, pp, h = (np.broadcast_to(a, out.shape)[bad] for a in (log_theta_e, p, hi))
    out[bad] = _bisect(le, pp, np.full_like(le, 100.0), h, kappa)
    return out


def _theta_w(t, td, p, kappa=KAPPA, iterations=1):
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        log_te = _ln_theta_e(t, td, p, kappa)
        te = np.exp(log_te)
        p0 = np.asarray(_P0, dtype=te.dtype)
        out = _invert_theta_e(log_te, p0, _theta_w_first_guess(te), iterations, kappa)
        bad = ~(te < 650.0) | ~(out > 100.0)
        bad &= np.isfinite(te)
    return _safeguard(out, bad, log_te, p0, np.minimum(te, 373.0), kappa)


def _wet_bulb(t, td, p, iterations=2):
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        log_te = _ln_theta_e(t, td, p)
        tw = _invert_theta_e(log_te, p, _wet_bulb_first_guess(t, td, p), iterations)
        # the wet-bulb temperature lies between the dew point and the temperature
        bad = ~((tw >= td - 0.5) & (tw <= t + 1e-3)) & np.isfinite(log_te)
    tw = _safeguard(tw, bad, log_te, p, t + 1e-3)
    return np.minimum(tw, t)  # saturated air: T_W = T (rounding could exceed it)


# ---------------------------------------------------------------------------
# public element-wise functions
# ---------------------------------------------------------------------------
def potential_temperature(t, p, *, kappa=KAPPA):
    r"""Potential temperature.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].
    kappa : float, optional
        Poisson exponent R_d / c_pd [1]; Bolton's 0.2854 by default (the
        value his theta-e formula was fitted with, so that theta-e of dry air
        equals theta). ``2/7`` gives the value of libraries that take
        c_pd = 3.5 R_d.

    Returns
    -------
    same kind as the input
        Potential temperature theta [K].

    Notes
    -----
    .. math:: \theta = T (1000 / p)^{\kappa}

    (Eq. 7, [Bolton1980]: kappa = 0.2854 for dry air).

    Examples
    --------
    >>> round(float(potential_temperature(273.15, 850.0)), 2)
    286.12
    """
    return _apply(
        lambda t, p: _theta(t, p, kappa),
        t,
        p,
        name="theta",
        attrs={"units": "K", "long_name": "potential temperature"},
    )


def saturation_vapour_pressure(t):
    r"""Saturation vapour pressure over liquid water.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Temperature [K].

    Returns
    -------
    same kind as the input
        Saturation vapour pressure [hPa].

    Notes
    -----
    .. math:: e_s = 6.112 \exp\left(\frac{17.67 T_c}{T_c + 243.5}\right)

    with T_c in degrees Celsius (Eq. 10, [Bolton1980]; within 0.1 % for
    -35..35 C).

    Examples
    --------
    >>> round(float(saturation_vapour_pressure(273.15)), 3)
    6.112
    """
    return _apply(_es, t, attrs={"units": "hPa"})


def vapour_pressure_from_dewpoint(td):
    """Vapour pressure from the dew point [hPa] (Eq. 10, [Bolton1980] at the dew point).

    Parameters
    ----------
    td : array_like or xarray.DataArray
        Dew point [K].

    Returns
    -------
    same kind as the input
        Vapour pressure [hPa].
    """
    return _apply(_es, td, attrs={"units": "hPa"})


def mixing_ratio_from_dewpoint(td, p):
    r"""Water-vapour mixing ratio from dew point and pressure.

    Parameters
    ----------
    td : array_like or xarray.DataArray
        Dew point [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].

    Returns
    -------
    same kind as the input
        Mixing ratio [kg kg-1].

    Notes
    -----
    .. math:: r = \varepsilon e / (p - e), \quad e = e_s(T_d)

    Examples
    --------
    >>> round(float(mixing_ratio_from_dewpoint(283.15, 1000.0)), 5)
    0.00773
    """

    def k(td, p):
        e = _es(td)
        return EPSILON * e / (p - e)

    return _apply(k, td, p, name="mixing_ratio", attrs={"units": "kg kg-1"})


def dewpoint_from_vapour_pressure(e):
    r"""Dew point from vapour pressure, inverting Eq. 10 of [Bolton1980].

    Parameters
    ----------
    e : array_like or xarray.DataArray
        Vapour pressure [hPa]; zero or negative gives NaN.

    Returns
    -------
    same kind as the input
        Dew point [K].

    Notes
    -----
    .. math:: T_d = 273.15 + \frac{243.5 \ln(e/6.112)}{17.67 - \ln(e/6.112)}
    """

    def k(e):
        return _td_from_e(np.where(e > 0, e, np.nan))

    return _apply(k, e, name="td", attrs={"units": "K"})


def dewpoint_from_relative_humidity(t, rh):
    r"""Dew point from temperature and relative humidity.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    rh : array_like or xarray.DataArray
        Relative humidity with respect to liquid water as a fraction 0..1
        (not percent). Zero or negative gives NaN.

    Returns
    -------
    same kind as the input
        Dew point [K].

    Notes
    -----
    :math:`e = RH\, e_s(T)`, then Eq. 10 of [Bolton1980] inverted.

    Examples
    --------
    >>> round(float(dewpoint_from_relative_humidity(293.15, 0.5)), 2)
    282.42
    """

    def k(t, rh):
        return _td_from_e(np.where(rh > 0, rh * _es(t), np.nan))

    return _apply(k, t, rh, name="td", attrs={"units": "K", "long_name": "dew point"})


def dewpoint_from_specific_humidity(q, p):
    r"""Dew point from specific humidity and pressure.

    Parameters
    ----------
    q : array_like or xarray.DataArray
        Specific humidity [kg kg-1]; zero or negative gives NaN.
    p : array_like or xarray.DataArray
        Pressure [hPa].

    Returns
    -------
    same kind as the input
        Dew point [K].

    Notes
    -----
    .. math:: e = \frac{q p}{\varepsilon + (1 - \varepsilon) q}

    then Eq. 10 of [Bolton1980] inverted.

    Examples
    --------
    >>> round(float(dewpoint_from_specific_humidity(0.008, 1000.0)), 2)
    283.78
    """

    def k(q, p):
        e = q * p / (EPSILON + (1.0 - EPSILON) * q)
        return _td_from_e(np.where(q > 0, e, np.nan))

    return _apply(k, q, p, name="td", attrs={"units": "K", "long_name": "dew point"})


def relative_humidity(t, td):
    r"""Relative humidity with respect to liquid water.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    td : array_like or xarray.DataArray
        Dew point [K].

    Returns
    -------
    same kind as the input
        Relative humidity as a fraction [1], :math:`e_s(T_d) / e_s(T)`.

    Examples
    --------
    >>> round(float(relative_humidity(293.15, 293.15)), 6)
    1.0
    """

    def k(t, td):
        return _es(td) / _es(t)

    return _apply(k, t, td, name="rh", attrs={"units": "1"})


def lcl_temperature(t, td):
    r"""Temperature at the lifting condensation level.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    td : array_like or xarray.DataArray
        Dew point [K].

    Returns
    -------
    same kind as the input
        T_L [K].

    Notes
    -----
    .. math:: T_L = \frac{1}{1/(T_d - 56) + \ln(T/T_d)/800} + 56

    (Eq. 15, [Bolton1980]; within 0.1 K).

    Examples
    --------
    >>> round(float(lcl_temperature(293.15, 283.15)), 2)
    280.93
    """
    return _apply(_tl, t, td, name="t_lcl", attrs={"units": "K"})


def equivalent_potential_temperature(t, td, p, *, kappa=KAPPA):
    r"""Equivalent potential temperature (pseudo-adiabatic), Bolton's formula.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    td : array_like or xarray.DataArray
        Dew point [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].
    kappa : float, optional
        Exponent of Eq. 24, [Bolton1980]: 0.2854 by default; see
        :func:`potential_temperature`.

    Returns
    -------
    same kind as the input
        theta-e [K].

    Notes
    -----
    .. math::

        \theta_{DL} = T \left(\frac{1000}{p - e}\right)^{0.2854}
                      \left(\frac{T}{T_L}\right)^{0.28 r}, \quad
        \theta_E = \theta_{DL} \exp\left[\left(\frac{3036}{T_L} - 1.78\right)
                      r (1 + 0.448 r)\right]

    with r in kg kg-1 (Eqs. 24 and 39, [Bolton1980]; T_L from Eq. 15, e from
    Eq. 10).

    Examples
    --------
    >>> round(float(equivalent_potential_temperature(293.15, 291.15, 850.0)), 1)
    353.9
    """
    return _apply(
        lambda t, td, p: _theta_e(t, td, p, kappa),
        t,
        td,
        p,
        name="theta_e",
        attrs={"units": "K", "long_name": "equivalent potential temperature"},
    )


def saturated_equivalent_potential_temperature(t, p):
    """Theta-e of saturated air at (t, p): the label of the pseudo-adiabat through it [K].

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].

    Returns
    -------
    same kind as the input
        Saturated theta-e [K] (Eq. 39, [Bolton1980] with T_d = T).
    """

    def k(t, p):
        return np.exp(_log_theta_es_and_slope(t, p)[0])

    return _apply(k, t, p, name="theta_es", attrs={"units": "K"})


def wet_bulb_potential_temperature(t, td, p, *, kappa=KAPPA):
    r"""Wet-bulb potential temperature theta-w.

    The temperature air reaches when lifted dry-adiabatically to its lifting
    condensation level and then brought pseudo-adiabatically to 1000 hPa.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    td : array_like or xarray.DataArray
        Dew point [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].
    kappa : float, optional
        Exponent of Eq. 24, [Bolton1980]: 0.2854 by default; see
        :func:`potential_temperature`.

    Returns
    -------
    same kind as the input
        theta-w [K].

    Notes
    -----
    theta-e from Eq. 39 of [Bolton1980] labels the pseudo-adiabat. The first
    guess of theta-w is the rational fit Eq. 3.8 of [DaviesJones2008]; one
    Newton step then solves

    .. math:: \theta_E^{sat}(\theta_W, 1000\,\mathrm{hPa})^{-1/\kappa}
              = \theta_E^{-1/\kappa}

    with the analytic derivative (the power -1/kappa is the variable in which
    [DaviesJones2008] found the solution nearly linear). The fit alone is
    within 0.013 K of the exact inverse of Bolton's formula and one step
    brings that below 1e-5 K over 100-1050 hPa for theta-w below 40 C (our
    measurement). What remains is the accuracy of Bolton's theta-e itself:
    against a numerical integration of the pseudo-adiabatic equation it is
    within 0.04 K over 1000-300 hPa and -40..35 C (tests/test_thermo.py).

    Examples
    --------
    >>> round(float(wet_bulb_potential_temperature(293.15, 291.15, 850.0)), 2)
    297.41
    """
    return _apply(
        lambda t, td, p: _theta_w(t, td, p, kappa),
        t,
        td,
        p,
        name="theta_w",
        attrs={"units": "K", "long_name": "wet-bulb potential temperature"},
    )


def wet_bulb_temperature(t, td, p):
    r"""Pseudo-adiabatic wet-bulb temperature.

    The temperature air reaches when lifted to its lifting condensation level
    and brought back pseudo-adiabatically to its own pressure.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K].
    td : array_like or xarray.DataArray
        Dew point [K].
    p : array_like or xarray.DataArray
        Pressure [hPa].

    Returns
    -------
    same kind as the input
        Wet-bulb temperature [K].

    Notes
    -----
    Following [DaviesJones2008]: theta-e of the air (Eq. 39, [Bolton1980])
    labels its pseudo-adiabat; the wet-bulb temperature T_W solves
    :math:`\theta_E^{sat}(T_W, p)^{-1/\kappa} = \theta_E^{-1/\kappa}`.
    First guess: the isobaric (psychrometric) wet-bulb temperature with the
    saturation curve linearised, within a few kelvin; then two Newton steps
    with the analytic derivative, which converge to within 1e-6 K of the
    exact inverse over 100-1050 hPa (our measurement). The pseudo-adiabatic
    wet-bulb temperature differs slightly from the isobaric (psychrometer)
    one; this function returns the pseudo-adiabatic one.

    Examples
    --------
    >>> round(float(wet_bulb_temperature(293.15, 283.15, 1000.0)), 1)
    287.2
    """
    return _apply(
        _wet_bulb, t, td, p, name="tw", attrs={"units": "K", "long_name": "wet-bulb temperature"}
    )


# ---------------------------------------------------------------------------
# dataset conveniences
# ---------------------------------------------------------------------------
def _pressure_of(ds, da):
    if "level" not in da.coords:
        raise InputError("dataset: no 'level' coordinate [hPa]; expected pressure-level fields")
    return da["level"].astype(da.dtype if da.dtype == np.float32 else np.float64)


def _select_level(ds, da, level, what):
    if level is None:
        return da
    if "level" not in da.dims:
        raise InputError(
            f"dataset variable '{what}': no 'level' dimension; expected pressure levels"
        )
    levels = np.asarray(da["level"].values, dtype=float)
    hit = np.isclose(levels, float(level), rtol=0, atol=1e-6)
    if not hit.any():
        avail = ", ".join(f"{v:g}" for v in levels)
        raise InputError(f"level {float(level):g} hPa not in the dataset; available: {avail} hPa")
    return da.isel(level=int(np.flatnonzero(hit)[0]))


def _need(ds, *names):
    for n in names:
        if n not in ds:
            have = ", ".join(sorted(map(str, ds.data_vars))) or "none"
            raise InputError(
                f"dataset: variable '{n}' missing (have: {have}); expected the canonical fields"
            )


def theta_w_of(ds, level=None):
    """Theta-w of a canonical dataset (``t``, ``td`` on pressure ``level``).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset (see DEVELOPERS.md): ``t`` and ``td`` [K] on the
        ``level`` coordinate [hPa].
    level : float, optional
        One pressure level [hPa]; all levels when None.

    Returns
    -------
    xarray.DataArray
        theta-w [K], named ``theta_w``, lazy when the dataset is.
    """
    _need(ds, "t", "td")
    t = _select_level(ds, ds["t"], level, "t")
    td = _select_level(ds, ds["td"], level, "td")
    p = _pressure_of(ds, t)
    out = wet_bulb_potential_temperature(t, td, p)
    out.name = "theta_w"
    return out


_DERIVED = {
    "theta": lambda t, td, p: potential_temperature(t, p),
    "theta_e": equivalent_potential_temperature,
    "theta_w": wet_bulb_potential_temperature,
    "tw": wet_bulb_temperature,
    "rh": lambda t, td, p: relative_humidity(t, td),
}


def level_field(ds, name, level):
    """One field on one pressure level, stored or derived.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical dataset.
    name : str
        A variable of the dataset, or a derived one: ``theta``, ``theta_e``,
        ``theta_w``, ``tw`` (wet-bulb temperature) [K] or ``rh`` [1].
    level : float
        Pressure level [hPa].

    Returns
    -------
    xarray.DataArray
        The field on that level.
    """
    if name in ds:
        return _select_level(ds, ds[name], level, name)
    if name not in _DERIVED:
        have = ", ".join(sorted(list(map(str, ds.data_vars)) + list(_DERIVED)))
        raise InputError(
            f"field '{name}': not in the dataset nor derivable; expected one of: {have}"
        )
    if name == "theta":  # needs no humidity (thin runs)
        _need(ds, "t")
        t = _select_level(ds, ds["t"], level, "t")
        td = None
    else:
        _need(ds, "t", "td")
        t = _select_level(ds, ds["t"], level, "t")
        td = _select_level(ds, ds["td"], level, "td")
    out = _DERIVED[name](t, td, _pressure_of(ds, t))
    out.name = name
    return out


# ---------------------------------------------------------------------------
# vertical profiles: 0 C levels and warm layers aloft
# ---------------------------------------------------------------------------
def _column_args(dim, *arrays):
    """Resolve the vertical dimension/axis; return (is_xr, core dim or axis)."""
    if any(_is_xr(a) for a in arrays):
        if not isinstance(dim, str):
            raise InputError(
                f"vertical dimension {dim!r}: expected a dimension name for xarray input"
            )
        for a in arrays:
            if _is_xr(a) and dim not in a.dims:
                raise InputError(
                    f"vertical dimension '{dim}' not in {tuple(a.dims)}; pass dim=<name>"
                )
        return True, dim
    nd = max(np.ndim(a) for a in arrays)
    if isinstance(dim, str):
        if nd == 1:
            return False, 0
        raise InputError(
            f"vertical dimension '{dim}': numpy input of {nd} dimensions needs dim=<axis number>"
        )
    if not -nd <= int(dim) < nd:
        raise InputError(f"vertical axis {dim}: out of range for {nd}-dimensional input")
    return False, int(dim)


def _profile_like(x, t, dim, what):
    """Turn a 1-D numpy profile (heights, pressures) into a DataArray on the vertical dim."""
    if not _is_xr(t) or _is_xr(x) or np.ndim(x) == 0:
        return x
    arr = np.asarray(x)
    if arr.ndim == 1 and isinstance(dim, str) and dim in t.dims and arr.size == t.sizes[dim]:
        return xr.DataArray(arr, dims=(dim,))
    raise InputError(
        f"{what}: numpy array of shape {arr.shape} beside xarray temperature; expected a "
        f"DataArray or a 1-D array of {t.sizes.get(dim, '?')} values along '{dim}'"
    )


def _sorted_columns(t, z):
    """Move the vertical axis last and sort each column by height (NaNs last)."""
    order = np.argsort(np.where(np.isfinite(z), z, np.inf), axis=-1, kind="stable")
    return np.take_along_axis(t, order, -1), np.take_along_axis(z, order, -1)


def _crossing_kernel(x, z, logp, value, sense, lowest_if_below):
    """Highest crossing of ``value`` by ``x`` in each column (vertical axis last).

    ``sense``: "falling" (x >= value below, x < value above), "rising" (the
    reverse) or "any". ``lowest_if_below``: a column with valid values all
    below ``value`` gives the lowest valid height (else NaN). Returns the
    height, and the pressure (interpolated in ``logp``) when ``logp`` is given.
    """
    arrays = [_float(x), _float(z)] + ([] if logp is None else [_float(logp)])
    arrays = np.broadcast_arrays(*arrays)
    order = np.argsort(np.where(np.isfinite(arrays[1]), arrays[1], np.inf), axis=-1,
                       kind="stable")
    x, z, *lp = (np.take_along_axis(a, order, -1) for a in arrays)
    d = x - value
    valid = np.isfinite(d) & np.isfinite(z)
    above = valid & (d >= 0)
    below = valid & (d < 0)
    falling = above[..., :-1] & below[..., 1:]
    rising = below[..., :-1] & above[..., 1:]
    cross = {"falling": falling, "rising": rising, "any": falling | rising}[sense]
    n = cross.shape[-1]
    # highest crossing: last True along the axis
    any_cross = cross.any(axis=-1)
    k = np.where(any_cross, n - 1 - np.argmax(cross[..., ::-1], axis=-1), 0)[..., None]
    d0 = np.take_along_axis(d, k, -1)[..., 0]
    d1 = np.take_along_axis(d, k + 1, -1)[..., 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        w = d0 / (d0 - d1)
    first_valid = np.argmax(valid, axis=-1)[..., None]
    all_below = valid.any(axis=-1) & ~above.any(axis=-1)
    fill = all_below if lowest_if_below else np.zeros_like(any_cross)
    outs = []
    for a in [z] + lp:
        a0 = np.take_along_axis(a, k, -1)[..., 0]
        a1 = np.take_along_axis(a, k + 1, -1)[..., 0]
        low = np.take_along_axis(a, first_valid, -1)[..., 0]
        outs.append(np.where(any_cross, a0 + w * (a1 - a0), np.where(fill, low, np.nan)))
    if logp is None:
        return outs[0]
    return outs[0], np.exp(outs[1])


def _crossing_call(x, z, value, dim, p, sense, lowest_if_below, names, attrs):
    """Shared front end of :func:`level_crossing` and :func:`freezing_level`."""
    z = _profile_like(z, x, dim, "heights")
    arrays = [x, z]
    if p is not None:
        p = _profile_like(p, x, dim, "pressure")
        arrays.append(np.log(p))
    n_out = 1 if p is None else 2

    def kernel(*a):
        return _crossing_kernel(a[0], a[1], a[2] if len(a) > 2 else None, value, sense,
                                lowest_if_below)

    out = _profile_apply(kernel, arrays, dim, n_out, names[:n_out],
                         attrs if p is None else {"long_name": attrs["long_name"]})
    if p is not None and isinstance(out[0], xr.DataArray):
        out[0].attrs["units"], out[1].attrs["units"] = "m", "hPa"
    return out


def _profile_apply(kernel, arrays, dim, n_out, names, attrs):
    is_xr, d = _column_args(dim, *arrays)
    if is_xr:
        core = [[d] if (_is_xr(a) and d in a.dims) else [] for a in arrays]
        out = xr.apply_ufunc(
            lambda *a: kernel(*a),
            *arrays,
            input_core_dims=core,
            output_core_dims=[[] for _ in range(n_out)],
            dask="parallelized",
            output_dtypes=[np.float64] * n_out,
            dask_gufunc_kwargs={"allow_rechunk": True},
        )
        outs = out if n_out > 1 else (out,)
        for o, nm in zip(outs, names, strict=True):
            o.name = nm
            o.attrs.update(attrs)
        return out
    moved = [np.moveaxis(_float(a), d, -1) if np.ndim(a) > 0 else _float(a) for a in arrays]
    res = kernel(*moved)
    if n_out == 1:
        return res[()] if np.ndim(res) == 0 else res
    return tuple(r[()] if np.ndim(r) == 0 else r for r in res)


def level_crossing(x, z, value, *, dim="level", p=None, sense="any"):
    """Height of the highest level at which a profile crosses a value, in each column.

    Parameters
    ----------
    x : array_like or xarray.DataArray
        Any quantity on levels (temperature [K], potential vorticity [PVU], ...).
    z : array_like or xarray.DataArray
        Height of each level [m], same shape as ``x`` or broadcastable to it.
    value : float
        The value crossed [unit of ``x``].
    dim : str or int
        Vertical dimension name (xarray) or axis number (numpy; may be omitted
        for a single 1-D profile). Levels may come in either order.
    p : array_like or xarray.DataArray, optional
        Pressure of each level [hPa]; when given the pressure of the crossing
        is returned too.
    sense : {"any", "falling", "rising"}
        Which crossings count: either way, ``x`` falling through ``value``
        going upward (at or above it below, under it above), or rising.

    Returns
    -------
    z_cross : same kind as the input, without the vertical dimension
        Height [m] of the highest crossing, linear in height between the two
        levels around it; NaN where the column does not cross. Missing values
        (NaN, e.g. levels below ground) are skipped.
    p_cross : same kind, only when ``p`` is given
        Pressure there [hPa], linear in log-pressure with the same weight.

    Examples
    --------
    The dynamic tropopause (2 PVU) of a profile rising from 0.5 to 4 PVU:

    >>> zc, pc = level_crossing(np.array([0.5, 1.0, 4.0]), np.array([5e3, 9e3, 11e3]), 2.0,
    ...                         p=np.array([500.0, 300.0, 200.0]))
    >>> round(float(zc)), round(float(pc), 1)
    (9667, 262.1)
    """
    if sense not in ("any", "falling", "rising"):
        raise InputError(f"level_crossing: sense={sense!r}; expected 'any', 'falling' or 'rising'")
    return _crossing_call(x, z, float(value), dim, p, sense, False,
                          ["z_cross_m", "p_cross_hpa"],
                          {"units": "m", "long_name": f"height of the highest crossing of {value}"})


def freezing_level(t, z, *, dim="level", p=None):
    """Height of the highest 0 C crossing in each column (the freezing level).

    The one 0 C level of the kit: sections, site series and products take it
    from here.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K] on levels (or wet-bulb temperature for the
        wet-bulb freezing level).
    z : array_like or xarray.DataArray
        Height of each level [m] (geopotential height), same shape as ``t``
        or broadcastable to it.
    dim : str or int
        Vertical dimension name (xarray) or axis number (numpy; may be
        omitted for a single 1-D profile). Levels may come in either order.
    p : array_like or xarray.DataArray, optional
        Pressure of each level [hPa]; when given the pressure of the freezing
        level is returned too (linear in log-pressure).

    Returns
    -------
    same kind as the input, without the vertical dimension
        Height [m] of the highest level where the temperature falls through
        0 C going upward, interpolated linearly in height between the two
        levels around it. Where the whole column is below 0 C, the height of
        the lowest level (the freezing level is at or below it). Where the
        whole column is at or above 0 C, NaN (above the top level). Missing
        values (NaN, e.g. levels below ground) are skipped. With ``p``, a pair
        (height [m], pressure [hPa]).

    Examples
    --------
    >>> float(freezing_level(np.array([283.15, 273.15 - 5.0]), np.array([0.0, 1500.0])))
    1000.0
    """
    return _crossing_call(t, z, T0C, dim, p, "falling", True,
                          ["freezing_level_m", "freezing_level_hpa"],
                          {"units": "m", "long_name": "height of the highest 0 C crossing"})


def wet_bulb_freezing_level(t, td, z, p, *, dim="level"):
    """Height of the highest wet-bulb 0 C crossing in each column.

    Parameters
    ----------
    t, td : array_like or xarray.DataArray
        Air temperature and dew point [K] on levels.
    z : array_like or xarray.DataArray
        Height of each level [m].
    p : array_like or xarray.DataArray
        Pressure [hPa] (the level coordinate, broadcastable).
    dim : str or int
        Vertical dimension name (xarray) or axis number (numpy).

    Returns
    -------
    same kind as the input, without the vertical dimension
        Height [m]; rules as in :func:`freezing_level` applied to the
        wet-bulb temperature (:func:`wet_bulb_temperature`).
    """
    p = _profile_like(p, t, dim, "pressure")
    tw = wet_bulb_temperature(t, td, p)
    out = freezing_level(tw, z, dim=dim)
    if isinstance(out, xr.DataArray):
        out.name = "wet_bulb_freezing_level_m"
        out.attrs["long_name"] = "height of the highest wet-bulb 0 C crossing"
    return out


def _warm_layer_kernel(t, z, t_sfc=None, z_sfc=None):
    t, z = np.broadcast_arrays(_float(t), _float(z))
    t, z = _sorted_columns(t, z)
    if t_sfc is not None:
        t_sfc = np.broadcast_to(_float(t_sfc), t.shape[:-1])
        if z_sfc is None:
            z_sfc = z[..., :1][..., 0]
        z_sfc = np.broadcast_to(_float(z_sfc), t.shape[:-1])
        # drop levels below the ground, then put the surface first
        below = z < z_sfc[..., None]
        t = np.where(below, np.nan, t)
        t = np.concatenate([t_sfc[..., None], t], axis=-1)
        z = np.concatenate([z_sfc[..., None], np.where(below, np.nan, z)], axis=-1)
        t, z = _sorted_columns(t, z)
    tc = t - T0C
    valid = np.isfinite(tc) & np.isfinite(z)
    shape = tc.shape[:-1]
    top = np.full(shape, np.nan)
    base = np.full(shape, np.nan)
    tmax = np.full(shape, np.nan)
    tmin = np.full(shape, np.nan)  # coldest level of the sub-zero ground layer
    # Walk the columns upward: state 0 = before the ground layer, 1 = in sub-zero
    # air near the ground, 2 = inside the warm layer aloft, 3 = done.
    state = np.zeros(shape, dtype=np.int8)
    prev_t = np.full(shape, np.nan)
    prev_z = np.full(shape, np.nan)
    for k in range(tc.shape[-1]):
        ok = valid[..., k]
        tk, zk = tc[..., k], z[..., k]
        start = ok & (state == 0)
        state = np.where(start & (tk < 0), 1, np.where(start, 3, state))  # warm ground: none
        tmin = np.where(ok & (state == 1) & (tk < 0), np.fmin(tmin, tk), tmin)
        enter = ok & (state == 1) & (tk >= 0) & np.isfinite(prev_t)
        with np.errstate(divide="ignore", invalid="ignore"):
            zc_in = prev_z + (zk - prev_z) * (0 - prev_t) / (tk - prev_t)
        base = np.where(enter, zc_in, base)
        tmax = np.where(enter, tk, tmax)
        inside = ok & (state == 2)
        leave = inside & (tk < 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            zc_out = prev_z + (zk - prev_z) * prev_t / (prev_t - tk)
        top = np.where(leave, zc_out, top)
        tmax = np.where(inside & ~leave, np.fmax(tmax, tk), tmax)
        state = np.where(enter, 2, np.where(leave, 3, state))
        prev_t = np.where(ok, tk, prev_t)
        prev_z = np.where(ok, zk, prev_z)
    # a warm layer still open at the top of the data has no known top: no layer
    unfinished = state == 2
    base = np.where(unfinished | np.isnan(top), np.nan, base)
    tmax = np.where(np.isnan(top), np.nan, tmax + T0C)
    tmin = np.where(np.isnan(top), np.nan, tmin + T0C)
    return top, base, tmax, tmin


def warm_layer_aloft(t, z, *, dim="level", t_surface=None, z_surface=None, cold_min=False):
    """Warm (above 0 C) layer lying over sub-zero air near the ground.

    The classic setting for freezing rain and ice pellets: snow melts in the
    warm layer and the drops refreeze (pellets) or freeze on contact
    (freezing rain) in the cold air below.

    Parameters
    ----------
    t : array_like or xarray.DataArray
        Air temperature [K] on levels.
    z : array_like or xarray.DataArray
        Height of each level [m].
    dim : str or int
        Vertical dimension name (xarray) or axis number (numpy).
    t_surface : array_like or xarray.DataArray, optional
        Near-surface (2 m) temperature [K]; when given it is the bottom of
        each column and levels below ``z_surface`` are ignored.
    z_surface : array_like or xarray.DataArray, optional
        Ground height [m]; defaults to the lowest level's height.
    cold_min : bool
        Also return the coldest temperature of the sub-zero layer below the
        warm layer [K] (how far a drop that melted aloft can refreeze).

    Returns
    -------
    top_m, base_m, max_t : same kind as the input, without the vertical dimension
        Heights [m] of the top and base of the lowest warm layer above the
        sub-zero ground layer (0 C crossings interpolated linearly in height)
        and the warmest level temperature inside it [K]. NaN where the air
        at the ground is not below 0 C, where no warm layer lies above it,
        or where the warm layer reaches the top of the data. With
        ``cold_min``, a fourth value: the coldest level below the warm layer [K].

    Examples
    --------
    -3 C at the ground, +3 C at 1000 m, -10 C at 3000 m:

    >>> top, base, tmax = warm_layer_aloft(
    ...     273.15 + np.array([-3.0, 3.0, -10.0]), np.array([0.0, 1000.0, 3000.0])
    ... )
    >>> round(float(base)), round(float(top)), round(float(tmax) - 273.15, 1)
    (500, 1462, 3.0)
    """
    z = _profile_like(z, t, dim, "heights")
    arrays = [t, z]
    if t_surface is not None:
        arrays.append(t_surface)
        if z_surface is not None:
            arrays.append(z_surface)
    is_xr, d = _column_args(dim, t, z)
    if is_xr:
        core = [[d] if (_is_xr(a) and d in a.dims) else [] for a in arrays]
        n_out = 4 if cold_min else 3
        return xr.apply_ufunc(
            lambda *a: _warm_layer_kernel(*a)[:n_out],
            *arrays,
            input_core_dims=core,
            output_core_dims=[[]] * n_out,
            dask="parallelized",
            output_dtypes=[np.float64] * n_out,
            dask_gufunc_kwargs={"allow_rechunk": True},
        )
    t_m = np.moveaxis(_float(t), d, -1)
    z_m = np.moveaxis(_float(z), d, -1) if np.ndim(z) > 0 else _float(z)
    res = _warm_layer_kernel(t_m, z_m, *arrays[2:])
    res = res if cold_min else res[:3]
    return tuple(r[()] if np.ndim(r) == 0 else r for r in res)
