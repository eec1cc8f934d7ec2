"""Coasting motion under a quadratic road load, in closed form.

A vehicle coasting in neutral on a level road obeys

    m_inertial · dv/dt = −(a + b·v + c·v²)

with a [N], b [N/(m/s)], c [N/(m/s)²] ≥ 0 and the inertial mass m_inertial [kg]
(test mass plus the rotating-mass allowance). The equation separates; with
D = 4ac − b² its solution is an arctangent (D > 0), an inverse hyperbolic
tangent (D < 0) or a rational function (D = 0). Written as below, the three
cases are one formula whose only special function is tan(√z)/√z (which becomes
tanh(√−z)/√−z for z < 0), and nothing divides by c, so pure rolling
resistance (c = 0) and pure drag (a = b = 0) are covered too:

    speed after time t:
        v(t) = v0 − (F0·t/m) · H(z) / (1 + u0·t·H(z)/(2m))
        F0 = a + b·v0 + c·v0²,  u0 = 2c·v0 + b,  z = D·t²/(4m²),
        H(z) = tan(√z)/√z

    time to slow from v1 to v2:
        t = 2m · y · G(D·y²),   y = (v1 − v2) / (2c·v1·v2 + b·(v1 + v2) + 2a),
        G(z) = arctan(√z)/√z

For F = A + C·V² (b = 0) the time formula is the one behind the coast-down
time tables of 40 CFR 86.529-98, t = (m/3.6)∫dV/(A + C·V²) with V in km/h.

References
----------
.. [1] White, R. A. and Korst, H. H., "The Determination of Vehicle Drag
   Contributions from Coast-Down Tests", SAE Technical Paper 720099 (1972):
   speed-time solution of the coasting equation with constant rolling
   resistance and quadratic drag.
.. [2] 40 CFR 86.529-98, road load force and inertia weight determination
   (coast-down time table for F = A + C·V²).
.. [3] Savitzky, A. and Golay, M. J. E., "Smoothing and Differentiation of
   Data by Simplified Least Squares Procedures", Analytical Chemistry 36 (1964)
   1627-1639 (the smoothing and derivative filters below).
"""

from __future__ import annotations

import numpy as np
from .._lazy import LazyModule, lazy_function

sp = LazyModule("scipy.sparse")
savgol_coeffs = lazy_function("scipy.signal", "savgol_coeffs")

#: below this |z| the series expansions of H and G are used
_SERIES_LIMIT = 1e-4
#: π²/4: tan(√z) has its pole here; beyond it the model speed has passed zero
_TAN_POLE = np.pi ** 2 / 4.0


def _tan_ratio(z):
    """H(z) = tan(√z)/√z for z > 0, tanh(√−z)/√−z for z < 0, 1 at 0 (NaN past the pole)."""
    z = np.asarray(z, float)
    out = np.full(z.shape, np.nan)
    small = np.abs(z) < _SERIES_LIMIT
    zs = z[small]
    out[small] = 1.0 + zs / 3.0 + 2.0 * zs ** 2 / 15.0 + 17.0 * zs ** 3 / 315.0
    pos = (z >= _SERIES_LIMIT) & (z < _TAN_POLE)
    r = np.sqrt(z[pos])
    out[pos] = np.tan(r) / r
    neg = z <= -_SERIES_LIMIT
    r = np.sqrt(-z[neg])
    out[neg] = np.tanh(r) / r
    return out


def _atan_ratio(z):
    """G(z) = arctan(√z)/√z for z > 0, artanh(√−z)/√−z for −1 < z < 0, 1 at 0."""
    z = np.asarray(z, float)
    out = np.full(z.shape, np.nan)
    small = np.abs(z) < _SERIES_LIMIT
    zs = z[small]
    out[small] = 1.0 - zs / 3.0 + zs ** 2 / 5.0 - zs ** 3 / 7.0
    pos = z >= _SERIES_LIMIT
    r = np.sqrt(z[pos])
    out[pos] = np.arctan(r) / r
    neg = (z <= -_SERIES_LIMIT) & (z > -1.0)
    r = np.sqrt(-z[neg])
    out[neg] = np.arctanh(r) / r
    return out


def coast_speed_ms(time_s, v0_ms, f0_n, f1_n_per_ms, f2_n_per_ms2, inertial_mass_kg):
    """Speed of a coasting vehicle after time t (closed-form solution).

    Parameters
    ----------
    time_s : array
        Time since the start speed [s], t ≥ 0.
    v0_ms : float or array
        Speed at t = 0 [m/s].
    f0_n, f1_n_per_ms, f2_n_per_ms2 : float or array
        Road-load coefficients a [N], b [N/(m/s)], c [N/(m/s)²] of
        F = a + b·v + c·v² (all broadcast against ``time_s``).
    inertial_mass_kg : float or array
        Mass for acceleration [kg] (test mass plus rotating-mass allowance).

    Returns
    -------
    array
        Speed [m/s]; NaN where the model vehicle would already have stopped and
        reversed (beyond the pole of the arctangent solution).

    References
    ----------
    .. [1] White and Korst, SAE 720099 (1972), speed-time solution of the
       coasting equation.
    """
    t = np.asarray(time_s, float)
    v0 = np.asarray(v0_ms, float)
    a = np.asarray(f0_n, float)
    b = np.asarray(f1_n_per_ms, float)
    c = np.asarray(f2_n_per_ms2, float)
    m = np.asarray(inertial_mass_kg, float)
    force0 = a + b * v0 + c * v0 * v0
    u0 = 2.0 * c * v0 + b
    disc = 4.0 * a * c - b * b
    h = _tan_ratio(disc * t * t / (4.0 * m * m))
    den = 1.0 + u0 * t * h / (2.0 * m)
    with np.errstate(divide="ignore", invalid="ignore"):
        v = v0 - force0 * t * h / (m * den)
    return np.where(den > 0.0, v, np.nan)


def _tan_ratio_derivative(z, h):
    """dH/dz = (1 − H + z·H²)/(2z), from H = tan(r)/r, r = √z (series near 0)."""
    z = np.asarray(z, float)
    small = np.abs(z) < _SERIES_LIMIT
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (1.0 - h + z * h * h) / (2.0 * z)
    series = 1.0 / 3.0 + 4.0 * z / 15.0 + 17.0 * z * z / 105.0
    return np.where(small, series, out)


def coast_speed_gradient(time_s, v0_ms, f0_n, f1_n_per_ms, f2_n_per_ms2, inertial_mass_kg):
    """Speed after time t and its derivatives with respect to (a, b, c, v0).

    Same model and parameters as :func:`coast_speed_ms` (scalars for the
    coefficients and start speed, an array of times). With Q = τ·H(D·τ²),
    τ = t/(2m), the speed is v = v0 − 2·F0·Q/(1 + u0·Q); the derivatives follow
    by the chain rule through F0, u0 and D, using dH/dz = (1 − H + z·H²)/(2z).

    Returns
    -------
    (speed, gradient)
        ``speed`` (n,) [m/s]; ``gradient`` (n, 4): ∂v/∂a [m/s/N],
        ∂v/∂b, ∂v/∂c, ∂v/∂v0 [-].

    References
    ----------
    .. [1] White and Korst, SAE 720099 (1972), speed-time solution.
    """
    t = np.asarray(time_s, float)
    a, b, c, v0, m = (float(x) for x in (f0_n, f1_n_per_ms, f2_n_per_ms2, v0_ms,
                                          inertial_mass_kg))
    tau = t / (2.0 * m)
    disc = 4.0 * a * c - b * b
    z = disc * tau * tau
    h = _tan_ratio(z)
    q = tau * h
    dq_dd = tau ** 3 * _tan_ratio_derivative(z, h)
    force0 = a + b * v0 + c * v0 * v0
    u0 = 2.0 * c * v0 + b
    num = force0 * q
    den = 1.0 + u0 * q
    with np.errstate(divide="ignore", invalid="ignore"):
        v = v0 - 2.0 * num / den
        # partials of (F0, u0, D) with respect to (a, b, c, v0)
        d_f = np.array([1.0, v0, v0 * v0, u0])
        d_u = np.array([0.0, 1.0, 2.0 * v0, 2.0 * c])
        d_d = np.array([4.0 * c, -2.0 * b, 4.0 * a, 0.0])
        dq = dq_dd[:, None] * d_d[None, :]
        dnum = d_f[None, :] * q[:, None] + force0 * dq
        dden = d_u[None, :] * q[:, None] + u0 * dq
        grad = -2.0 * (dnum * den[:, None] - num[:, None] * dden) / (den * den)[:, None]
    grad[:, 3] += 1.0
    bad = ~(den > 0.0) | ~np.isfinite(v)
    v = np.where(bad, np.nan, v)
    grad[bad] = np.nan
    return v, grad


def coast_time_s(v_start_ms, v_end_ms, f0_n, f1_n_per_ms, f2_n_per_ms2, inertial_mass_kg):
    """Time for a coasting vehicle to slow from one speed to another (closed form).

    Parameters
    ----------
    v_start_ms, v_end_ms : float or array
        Start and end speed [m/s], v_start > v_end ≥ 0.
    f0_n, f1_n_per_ms, f2_n_per_ms2 : float or array
        Road-load coefficients [N], [N/(m/s)], [N/(m/s)²]; the force must stay
        positive between the two speeds.
    inertial_mass_kg : float or array
        Mass for acceleration [kg].

    Returns
    -------
    array
        Coast time [s] = m ∫ dv / F(v) from v_end to v_start.

    References
    ----------
    .. [1] White and Korst, SAE 720099 (1972).
    .. [2] 40 CFR 86.529-98 (coast-down time for F = A + C·V²).
    """
    v1 = np.asarray(v_start_ms, float)
    v2 = np.asarray(v_end_ms, float)
    a = np.asarray(f0_n, float)
    b = np.asarray(f1_n_per_ms, float)
    c = np.asarray(f2_n_per_ms2, float)
    m = np.asarray(inertial_mass_kg, float)
    disc = 4.0 * a * c - b * b
    y = (v1 - v2) / (2.0 * c * v1 * v2 + b * (v1 + v2) + 2.0 * a)
    return 2.0 * m * y * _atan_ratio(disc * y * y)


# ---------------------------------------------------------------------------
# Linear operators: Savitzky-Golay filters and linear interpolation as sparse
# matrices, so that noise can be propagated exactly through them.
# ---------------------------------------------------------------------------

def savgol_operator(n, window, polyorder, *, deriv=0, delta=1.0):
    """The Savitzky-Golay filter on n uniform samples as a sparse (n, n) matrix.

    Row i holds the weights that give the smoothed value (``deriv=0``) or the
    derivative (``deriv=1``) at sample i; the first and last ``window // 2``
    rows fit one polynomial to the first (last) ``window`` samples, as
    ``scipy.signal.savgol_filter(..., mode="interp")`` does, so that
    ``savgol_operator(...) @ x`` equals that filter.

    Parameters
    ----------
    n : int
        Number of samples (≥ window).
    window : int
        Odd window length [samples].
    polyorder : int
        Polynomial order (< window).
    deriv : int
        Order of the derivative.
    delta : float
        Sample spacing [s]; derivatives are per second.

    References
    ----------
    .. [1] Savitzky and Golay, Analytical Chemistry 36 (1964) 1627-1639.
    """
    if window % 2 != 1 or window > n or polyorder >= window:
        raise ValueError("window must be odd, ≤ n and > polyorder")
    half = window // 2
    inner = savgol_coeffs(window, polyorder, deriv=deriv, delta=delta, use="dot")
    # edge rows: least-squares polynomial through the first/last window samples
    x = np.arange(window, dtype=float)
    vander = np.vander(x, polyorder + 1, increasing=True)
    fit = np.linalg.pinv(vander)                     # (p+1, window): coefficients
    powers = np.arange(polyorder + 1)
    deriv_factor = np.ones(polyorder + 1)
    for k in range(deriv):
        deriv_factor = deriv_factor * np.clip(powers - k, 0, None)
    ex = np.clip(powers - deriv, 0, None)

    def edge_rows(pos):
        basis = deriv_factor[None, :] * np.power(pos[:, None], ex[None, :])
        basis[:, powers < deriv] = 0.0
        return basis @ fit / delta ** deriv

    head = edge_rows(np.arange(half, dtype=float))
    tail = edge_rows(np.arange(window - half, window, dtype=float))
    n_inner = n - 2 * half
    rows = np.concatenate([np.repeat(np.arange(half), window),
                           np.repeat(np.arange(half, n - half), window),
                           np.repeat(np.arange(n - half, n), window)])
    cols = np.concatenate([np.tile(np.arange(window), half),
                           (np.arange(n_inner)[:, None] + np.arange(window)[None, :]).ravel(),
                           np.tile(np.arange(n - window, n), half)])
    vals = np.concatenate([head.ravel(), np.tile(inner, n_inner), tail.ravel()])
    return sp.csr_matrix((vals, (rows, cols)), shape=(n, n))


def interpolation_operator(time_s, grid_s):
    """Linear interpolation from samples at ``time_s`` onto ``grid_s`` as a sparse matrix.

    ``interpolation_operator(t, g) @ x`` equals ``numpy.interp(g, t, x)`` for
    grid points inside [t[0], t[-1]].

    Parameters
    ----------
    time_s : (n,) array
        Strictly increasing sample times [s].
    grid_s : (m,) array
        Times to interpolate to [s], within the sample span.
    """
    t = np.asarray(time_s, float)
    g = np.asarray(grid_s, float)
    right = np.clip(np.searchsorted(t, g, side="right"), 1, len(t) - 1)
    left = right - 1
    w = (g - t[left]) / (t[right] - t[left])
    w = np.clip(w, 0.0, 1.0)
    rows = np.concatenate([np.arange(len(g)), np.arange(len(g))])
    cols = np.concatenate([left, right])
    vals = np.concatenate([1.0 - w, w])
    return sp.csr_matrix((vals, (rows, cols)), shape=(len(g), len(t)))


def odd_window(window_s, dt_s, polyorder, n_max=None):
    """An odd Savitzky-Golay window [samples] covering about ``window_s`` [s]."""
    n = int(round(window_s / dt_s))
    n = max(n, polyorder + 2)
    if n % 2 == 0:
        n += 1
    if n_max is not None and n > n_max:
        n = n_max if n_max % 2 == 1 else n_max - 1
    return n
