"""Wheel demand: force, power and energy at the wheels along a speed trace.

Implements the cycle energy demand of UN GTR No. 15 (WLTP), Annex 7: a trace
sampled at times t_0..t_{T-1} is split into T-1 intervals; for interval i
(between samples i-1 and i)

    v_i = (v_i + v_{i-1}) / 2           mean speed [m/s]
    a_i = (v_i - v_{i-1}) / Δt_i        acceleration [m/s²]
    d_i = v_i · Δt_i                    distance [m]
    F_i = f0 + f1·v_i + f2·v_i² + m_inertial·a_i + m·g·sin(θ_i)     [N]

with θ_i the road angle from the mean of the two samples' grades
(grade = tan θ). The positive energy is Σ F_i·d_i over intervals with
F_i > 0; the negative (braking) energy is Σ −F_i·d_i over intervals with
F_i < 0, reported as a positive number. The same terms are listed in SAE
J2951 (drive-quality metrics, cycle energy).

Attribution of the positive energy: over the intervals with F_i > 0, each
force part times distance is summed separately, so

    rolling + aero + inertia + grade = positive energy   (exactly)

where rolling = f0 + f1·v (+ the downforce share of f2·v² for physical
input), aero = f2·v² (drag only), inertia = m_inertial·a, grade =
m·g·sin θ. A part can be negative inside a positive interval (e.g. a
downhill grade while the vehicle still pulls).

All functions take whole arrays; vehicle parameters may carry a leading
vehicle axis of shape (N,), giving results of shape (N, T-1) or (N,).

References
----------
.. [1] UN GTR No. 15, Worldwide harmonized Light vehicles Test Procedure,
   Annex 7 (cycle energy demand).
.. [2] SAE J2951, Drive Quality Evaluation for Chassis Dynamometer Testing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .plain import plain_number
from .roadload import RoadLoad, _col
from .units import KWH_J, STANDARD_GRAVITY_MS2

COMPONENTS = ("rolling", "aero", "inertia", "grade")


def inertial_mass_kg(mass_kg, rotating_mass_fraction):
    """Mass for acceleration [kg] = mass_kg × (1 + rotating_mass_fraction).

    The rotating parts (wheels, driveline) store kinetic energy as if the
    vehicle were heavier by their equivalent mass, stated as a fraction of the
    test mass (UN GTR No. 15 Annex 4 uses 3 % of the test mass when it is not
    measured; from memory). Scalars or arrays of any matching shape.
    """
    return mass_kg * (1.0 + rotating_mass_fraction)


@dataclass(frozen=True)
class Intervals:
    """Kinematics of the T-1 intervals of a sampled trace (GTR 15 Annex 7).

    Attributes
    ----------
    dt_s : (T-1,) interval durations [s]
    speed_ms : (T-1,) mean speeds [m/s]
    accel_ms2 : (T-1,) accelerations [m/s²]
    distance_m : (T-1,) distances [m]
    sin_grade : (T-1,) sine of the road angle [-]
    """

    dt_s: np.ndarray
    speed_ms: np.ndarray
    accel_ms2: np.ndarray
    distance_m: np.ndarray
    sin_grade: np.ndarray


def interval_kinematics(time_s, speed_ms, grade_fraction=0.0) -> Intervals:
    """Split a sampled trace into intervals.

    Parameters
    ----------
    time_s : (T,) array
        Sample times [s], strictly increasing.
    speed_ms : (T,) array
        Speeds [m/s].
    grade_fraction : float or (T,) array
        Road grade rise/run [-] at each sample (0.05 = 5 %).
    """
    t = np.asarray(time_s, float)
    v = np.asarray(speed_ms, float)
    # in place where a temporary would be made: the same operations, fewer passes
    dt = t[1:] - t[:-1]
    v_mean = v[1:] + v[:-1]
    v_mean *= 0.5
    accel = v[1:] - v[:-1]
    accel /= dt
    g = np.asarray(grade_fraction, float)
    if g.ndim == 0:                              # one grade: the same sine everywhere
        sin_grade = np.full(dt.shape, float(g / np.sqrt(1.0 + g * g)))
    else:
        g = np.broadcast_to(g, t.shape)
        g_mean = g[1:] + g[:-1]
        g_mean *= 0.5
        sin_grade = g_mean * g_mean
        sin_grade += 1.0
        np.sqrt(sin_grade, out=sin_grade)
        np.divide(g_mean, sin_grade, out=sin_grade)
    return Intervals(dt, v_mean, accel, v_mean * dt, sin_grade)


def wheel_force_parts_n(road_load: RoadLoad, mass_kg, inertial_mass_kg, speed_ms, accel_ms2,
                        sin_grade) -> dict:
    """Force parts at the wheels [N].

    Parameters
    ----------
    road_load : RoadLoad
        Level-road resistance (coefficients may have a vehicle axis (N,)).
    mass_kg : float or (N,) array
        Test mass [kg] (grade force).
    inertial_mass_kg : float or (N,) array
        Mass for acceleration [kg] (including rotating-mass allowance).
    speed_ms, accel_ms2, sin_grade : (T-1,) arrays
        Interval mean speed [m/s], acceleration [m/s²], sin of road angle [-].

    Returns
    -------
    dict of arrays (broadcast to (N, T-1) or (T-1,)) keyed by
    ``rolling``, ``aero``, ``inertia``, ``grade``.
    """
    v = np.asarray(speed_ms, float)
    rolling = road_load.rolling_force_n(v)
    aero = road_load.aero_force_n(v)
    inertia = _col(inertial_mass_kg) * np.asarray(accel_ms2, float)
    grade = _col(mass_kg) * STANDARD_GRAVITY_MS2 * np.asarray(sin_grade, float)
    shape = np.broadcast_shapes(np.shape(rolling), np.shape(aero), np.shape(inertia),
                                np.shape(grade))
    return {name: np.broadcast_to(part, shape)
            for name, part in zip(COMPONENTS, (rolling, aero, inertia, grade))}


@dataclass(frozen=True)
class WheelDemand:
    """Wheel force and energy over one profile (GTR 15 Annex 7 method).

    Per-interval arrays have shape (T-1,) or (N, T-1); totals () or (N,).

    Attributes
    ----------
    profile : str
        Profile name.
    intervals : Intervals
        Interval kinematics.
    force_n : array
        Total wheel force [N] per interval (computed when first read).
    positive_energy_j, negative_energy_j : array
        Traction energy and braking energy [J], both ≥ 0.
    components_j : dict
        Parts of the positive energy [J]; they add up to it exactly.
    distance_m : float
        Profile distance [m].
    """

    profile: str
    intervals: Intervals
    road_load: RoadLoad
    mass_kg: object
    inertial_mass_kg: object
    positive_energy_j: np.ndarray
    negative_energy_j: np.ndarray
    components_j: dict
    distance_m: float

    @cached_property
    def force_n(self) -> np.ndarray:
        """Total wheel force [N] per interval, computed on first use (:func:`wheel_force_n`)."""
        coeffs = force_coefficients(self.road_load, self.mass_kg, self.inertial_mass_kg)
        return wheel_force_n(coeffs, self.intervals)

    @cached_property
    def force_parts_n(self) -> dict:
        """Force parts [N] per interval (rolling, aero, inertia, grade), computed on demand."""
        iv = self.intervals
        return wheel_force_parts_n(self.road_load, self.mass_kg, self.inertial_mass_kg,
                                   iv.speed_ms, iv.accel_ms2, iv.sin_grade)

    @property
    def power_w(self):
        """Wheel power per interval [W] = F · v_mean."""
        return self.force_n * self.intervals.speed_ms

    @property
    def distance_km(self) -> float:
        return self.distance_m / 1000.0

    @property
    def positive_energy_kwh(self):
        return self.positive_energy_j / KWH_J

    @property
    def negative_energy_kwh(self):
        return self.negative_energy_j / KWH_J

    def to_dict(self) -> dict:
        """Totals as JSON-ready data (energies in kWh and Wh/km)."""
        km = self.distance_km

        def per_km(e_j):
            return plain_number(np.asarray(e_j) / 3600.0 / km) if km > 0 else None

        return {
            "cycle": self.profile,
            "distance_km": km,
            "positive_energy_kwh": plain_number(self.positive_energy_kwh),
            "negative_energy_kwh": plain_number(self.negative_energy_kwh),
            "positive_energy_wh_per_km": per_km(self.positive_energy_j),
            "negative_energy_wh_per_km": per_km(self.negative_energy_j),
            "components_kwh": {k: plain_number(np.asarray(v) / KWH_J)
                               for k, v in self.components_j.items()},
        }




def wheel_demand(road_load: RoadLoad, mass_kg, inertial_mass_kg, time_s, speed_ms,
                 grade_fraction=0.0, *, profile: str = "") -> WheelDemand:
    """Wheel force and positive/negative energy along a trace (GTR 15 Annex 7).

    The energies come from per-vehicle sums over the intervals (see
    :func:`interval_sums`); the force per interval is only computed when
    :attr:`WheelDemand.force_n` is read.

    Parameters
    ----------
    road_load : RoadLoad
        Level-road resistance [SI coefficients], optionally with a vehicle axis.
    mass_kg : float or (N,) array
        Test mass [kg].
    inertial_mass_kg : float or (N,) array
        Inertial mass [kg].
    time_s, speed_ms : (T,) arrays
        The trace: times [s] and speeds [m/s].
    grade_fraction : float or (T,) array
        Grade rise/run [-] at each sample.
    profile : str
        Name carried into the result.
    """
    trace = _trace(time_s, speed_ms, grade_fraction)
    coeffs = force_coefficients(road_load, mass_kg, inertial_mass_kg)   # (..., 5)
    traction, braking = _interval_sums(coeffs, trace)                   # (..., 5) each
    f2_rolling = np.asarray(road_load.f2_rolling_n_per_ms2, float)
    f2_aero = np.asarray(road_load.f2_aero_n_per_ms2, float)
    c0, c1, _, c3, c4 = (coeffs[..., k] for k in range(5))
    s0, s1, s2, s3, s4 = (traction[..., k] for k in range(5))
    components = {
        "rolling": c0 * s0 + c1 * s1 + f2_rolling * s2,
        "aero": f2_aero * s2,
        "inertia": c3 * s3,
        "grade": c4 * s4,
    }
    positive = components["rolling"] + components["aero"] + components["inertia"] + \
        components["grade"]
    negative = 0.0 - np.sum(coeffs * braking, axis=-1)   # 0.0 - x: no negative zero
    return WheelDemand(profile=profile, intervals=trace.intervals, road_load=road_load,
                       mass_kg=mass_kg, inertial_mass_kg=inertial_mass_kg,
                       positive_energy_j=positive, negative_energy_j=negative,
                       components_j=components, distance_m=trace.distance_m)


def force_coefficients(road_load: RoadLoad, mass_kg, inertial_mass_kg) -> np.ndarray:
    """Coefficients C = [f0, f1, f2, m_inertial, m·g] of the wheel force, shape (..., 5).

    The force on interval i is F_i = C · [1, v_i, v_i², a_i, sin θ_i] with f0 [N],
    f1 [N/(m/s)], f2 [N/(m/s)²] (aero plus downforce rolling), m_inertial [kg] and
    m·g [N] (GTR 15 Annex 7 force with the grade term).
    """
    f2 = np.asarray(road_load.f2_aero_n_per_ms2, float) + \
        np.asarray(road_load.f2_rolling_n_per_ms2, float)
    parts = (np.asarray(road_load.f0_n, float), np.asarray(road_load.f1_n_per_ms, float), f2,
             np.asarray(inertial_mass_kg, float),
             np.asarray(mass_kg, float) * STANDARD_GRAVITY_MS2)
    out = np.empty(np.broadcast_shapes(*(p.shape for p in parts)) + (5,))
    for k, part in enumerate(parts):
        out[..., k] = part
    return out


def wheel_force_n(coeffs, intervals: Intervals) -> np.ndarray:
    """Total wheel force [N] per interval, shape (..., T-1), from :func:`force_coefficients`.

    Evaluated as ((f0 + f2·v²) + m·g·sin θ) + (f1·v + m_inertial·a), one fixed
    order for every vehicle, so a vehicle's force does not depend on the batch
    it is computed in; the sign tests of :func:`interval_sums` use the same order.
    """
    c = np.asarray(coeffs, float)
    col = [c[..., k, None] for k in range(5)]
    v = intervals.speed_ms
    force = col[2] * (v * v)
    force += col[0]
    force += col[4] * intervals.sin_grade
    rest = col[1] * v
    rest += col[3] * intervals.accel_ms2
    force += rest
    return force


#: vehicles whose coefficient ranges bound the force signs together (see :func:`interval_sums`)
VEHICLE_CHUNK = 1024

#: elements of the (vehicles, intervals) working arrays of the per-vehicle sign test:
#: four such float64 arrays (256 KiB) stay in a core's cache between the passes, and
#: the mask product of a chunk (2·8192 × 10 multiply-adds) stays below the size at
#: which a threaded BLAS splits it across threads, which costs far more than it
#: saves when the other cores are busy
CHUNK_ELEMENTS = 1 << 13

#: grid pieces per weight in the exact interval sums (see :func:`_grid_pieces`)
_PIECES = 2

#: a force bound this far (relative to the sum of the terms' magnitudes) from zero
#: fixes the sign of the computed force: far above its rounding error (about 1e-15)
_SIGN_MARGIN = 1e-12


def interval_sums(coeffs, intervals: Intervals) -> tuple:
    """Sums Σ d_i·b_i over the traction and the braking intervals of each vehicle.

    With the basis b_i = [1, v_i, v_i², a_i, sin θ_i] and d_i the interval
    distance, returns ``(traction, braking)``, each of shape (..., 5): the sums
    over the intervals with F_i > 0 and with F_i < 0 (F as :func:`wheel_force_n`
    computes it). Energies follow as C · sums (GTR 15 Annex 7).

    Method. For a group of vehicles the coefficient ranges bound the force of
    every interval; where the bounds are clear of zero (by far more than the
    rounding of F) every vehicle of the group has the same sign there — an
    interval that accelerates or cruises on a level or rising road always pulls
    when f0 > 0 and f1, f2 ≥ 0, a hard braking always brakes — and its
    weights d·b enter one sum shared by the group. Only the remaining intervals
    are tested vehicle by vehicle. The weights are first rounded to one common
    grid per basis term (pre-rounding, [2]_, [3]_), so every partial sum is exact
    and the result depends only on which intervals are summed, not on the order
    or grouping of the additions: a vehicle's sums are the same alone and in a
    batch of any size, to the last bit, and a matrix product may do them.

    References
    ----------
    .. [1] UN GTR No. 15, Annex 7 (cycle energy demand).
    .. [2] J. Demmel and H. D. Nguyen, "Fast reproducible floating-point
       summation", Proc. 21st IEEE Symposium on Computer Arithmetic (2013).
    .. [3] S. M. Rump, T. Ogita and S. Oishi, "Accurate floating-point summation
       part I: faithful rounding", SIAM J. Sci. Comput. 31 (2008).
    """
    return _interval_sums(coeffs, _Trace(intervals))


class _Trace:
    """The per-trace work of :func:`interval_sums`, which depends only on the samples.

    Attributes: ``intervals``; ``basis`` (5, M) terms [1, v, v², a, sin θ] and
    ``size`` their magnitudes; ``weights`` d·basis; ``pieces`` (M, P·5) their grid
    pieces (:func:`_grid_pieces`, transposed and contiguous, so that every matrix
    product of the sums reads contiguous operands; only when every weight is finite);
    ``graded`` (any
    sin θ ≠ 0); ``distance_m`` (float).
    """

    __slots__ = ("key", "intervals", "basis", "size", "weights", "pieces", "graded",
                 "distance_m")

    def __init__(self, iv: Intervals, key=None):
        self.key = key
        self.intervals = iv
        basis = np.empty((5, len(iv.speed_ms)))
        basis[0] = 1.0
        basis[1] = iv.speed_ms
        np.multiply(iv.speed_ms, iv.speed_ms, out=basis[2])
        basis[3] = iv.accel_ms2
        basis[4] = iv.sin_grade
        self.basis = basis
        self.size = np.abs(basis)
        self.weights = iv.distance_m * basis
        # a NaN or infinity anywhere (also in a basis term with d = 0: 0·inf is NaN)
        # reaches the sums: then plain masked sums, no grid
        self.pieces = np.ascontiguousarray(_grid_pieces(self.weights).T) \
            if np.isfinite(np.sum(self.weights)) else None
        self.graded = bool(np.any(iv.sin_grade != 0.0))
        self.distance_m = float(np.sum(iv.distance_m))


#: traces kept by :func:`_trace` (most recent first), and the longest trace kept
_TRACE_CACHE: list = []
_TRACE_CACHE_SIZE = 8
_TRACE_CACHE_MAX_SAMPLES = 100_000


def _trace(time_s, speed_ms, grade_fraction) -> _Trace:
    """:class:`_Trace` of a sampled trace, reused while the same samples come again.

    A few recent traces of at most :data:`_TRACE_CACHE_MAX_SAMPLES` samples are
    kept with a copy of their samples; a call with equal samples (compared byte
    for byte) gets the kept work, whose arrays are read-only. Results are the
    same as without the cache, to the last bit.
    """
    t = np.asarray(time_s, float)
    v = np.asarray(speed_ms, float)
    g = np.asarray(grade_fraction, float)
    if t.size > _TRACE_CACHE_MAX_SAMPLES:
        return _Trace(interval_kinematics(t, v, g))
    key = (t.shape, v.shape, g.shape, t.tobytes(), v.tobytes(), g.tobytes())
    for k, kept in enumerate(_TRACE_CACHE):
        if kept.key == key:
            if k:
                _TRACE_CACHE.insert(0, _TRACE_CACHE.pop(k))
            return kept
    trace = _Trace(interval_kinematics(t, v, g), key)
    for a in (*vars(trace.intervals).values(), trace.basis, trace.size, trace.weights,
              trace.pieces):
        if a is not None:
            a.flags.writeable = False
    _TRACE_CACHE.insert(0, trace)
    del _TRACE_CACHE[_TRACE_CACHE_SIZE:]
    return trace


def _interval_sums(coeffs, trace: _Trace) -> tuple:
    """:func:`interval_sums` on the prepared work of a trace."""
    c = np.asarray(coeffs, float)
    lead = c.shape[:-1]
    c = c.reshape(-1, 5)
    basis, pieces = trace.basis, trace.pieces
    traction = np.empty_like(c)
    braking = np.empty_like(c)
    if pieces is None or not np.isfinite(np.sum(c)):
        force = wheel_force_n(c, trace.intervals)
        weights_t = trace.weights.T
        traction[:] = np.where(force > 0.0, 1.0, 0.0) @ weights_t
        braking[:] = np.where(force < 0.0, 1.0, 0.0) @ weights_t
        return traction.reshape(lead + (5,)), braking.reshape(lead + (5,))
    for start in range(0, len(c), VEHICLE_CHUNK):
        cc = c[start:start + VEHICLE_CHUNK]
        shared, unsure = _shared_sums(cc, basis, trace.size, pieces)  # (2, P·5)
        rows = slice(start, start + len(cc))
        if len(unsure):
            tested = _tested_sums(cc, basis[:, unsure], pieces[unsure],
                                  trace.graded)                          # (2, n, P·5)
            tested += shared[:, None, :]                        # exact: one grid
            traction[rows] = _combine(tested[0])
            braking[rows] = _combine(tested[1])
        else:
            both = _combine(shared)
            traction[rows] = both[0]
            braking[rows] = both[1]
    return traction.reshape(lead + (5,)), braking.reshape(lead + (5,))


def _shared_sums(c, basis, size, pieces) -> tuple:
    """Sums of the intervals whose force sign is the same for all vehicles of c.

    c : (n, 5) coefficients; basis : (5, M) terms [1, v, v², a, sin θ] and size
    their magnitudes; pieces : (M, P·5) grid pieces of the weights. With the
    coefficients in [mid − half, mid + half], F lies within mid·b ± half·|b|;
    the sign is sure where that range stays clear of zero by
    :data:`_SIGN_MARGIN` of (|mid| + half)·|b|, which also covers the rounding of
    these bounds and of F itself. Returns the grid sums over the surely pulling and the surely
    braking intervals as a (2, P·5) array, and the indices of the intervals
    left to test.
    """
    lo = c.min(axis=0)
    hi = c.max(axis=0)
    mid = 0.5 * (lo + hi)
    half = 0.5 * (hi - lo)
    center = mid @ basis
    margin = (_SIGN_MARGIN * np.abs(mid) + (1.0 + _SIGN_MARGIN) * half) @ size
    sure = np.empty((2, len(center)))
    np.greater(center, margin, out=sure[0], casting="unsafe")    # 1.0: pulls
    np.less(center, -margin, out=sure[1], casting="unsafe")      # 1.0: brakes
    unsure = np.flatnonzero(np.abs(center) <= margin)
    # exact grid sums (any order), so a matrix product may form them
    return sure @ pieces, unsure


def _tested_sums(c, basis, pieces, graded=True) -> np.ndarray:
    """Grid sums over the intervals with F > 0 and with F < 0, vehicle by vehicle.

    c : (n, 5) coefficients; basis : (5, U) and pieces : (U, P·5) of the tested
    intervals; graded False when every sin θ is 0 (m·g·sin θ would add only
    zeros). F is computed in the order of :func:`wheel_force_n`. Works in
    chunks of about :data:`CHUNK_ELEMENTS` elements. Returns (2, n, P·5): the
    traction sums, then the braking sums.
    """
    n, count = len(c), basis.shape[1]
    v, v2, accel, sin_grade = basis[1], basis[2], basis[3], basis[4]
    out = np.empty((2, n, pieces.shape[1]))
    step = max(1, CHUNK_ELEMENTS // count)
    buf = np.empty((4, min(step, n), count))
    for start in range(0, n, step):
        cc = c[start:start + step]
        m = len(cc)
        if m < buf.shape[1]:
            buf = buf[:, :m].copy()
        f, rest, masks = buf[0], buf[1], buf[2:]
        # ((f0 + f2·v²) + m·g·sin θ) + (f1·v + m_inertial·a), as wheel_force_n
        np.multiply(cc[:, 2:3], v2, out=f)
        f += cc[:, 0:1]
        if graded:
            np.multiply(cc[:, 4:5], sin_grade, out=rest)
            f += rest
        np.multiply(cc[:, 1:2], v, out=rest)
        np.multiply(cc[:, 3:4], accel, out=masks[0])
        rest += masks[0]
        f += rest
        np.greater(f, 0.0, out=masks[0], casting="unsafe")   # 1.0 where F > 0
        np.less(f, 0.0, out=masks[1], casting="unsafe")      # 1.0 where F < 0
        sums = masks.reshape(2 * m, count) @ pieces            # exact: grid values
        out[:, start:start + m] = sums.reshape(2, m, -1)
    return out


def _grid_pieces(w) -> np.ndarray:
    """Split each row of w (K, M) into :data:`_PIECES` parts on common grids.

    Row j is written as w = q_1·u_1 + q_2·u_2 + r with integers |q_p| ≤ 2^b,
    grid steps u_1 = 2^(e−b) (2^e above the row's largest |w|), u_2 = u_1·2^−b,
    and b = 52 − bit_length(M): a sum of any of the M pieces of one grid is exact
    in float64 whatever the order (pre-rounding, Demmel and Nguyen 2013). The
    dropped r is below u_2/2 = 2^−2b of the largest weight (2^−82 on a
    1,800-step cycle, 2^−64 on a million steps).
    Returns (P·K, M): row p·K + j holds piece p of row j.
    """
    k, cols = w.shape
    bits = 52 - cols.bit_length()
    unit = np.zeros((_PIECES, k, 1))
    inverse = np.zeros((_PIECES, k, 1))
    for j, top in enumerate(np.max(np.abs(w), axis=1, initial=0.0).tolist()):
        exponent = math.frexp(top)[1]
        for p in range(_PIECES):
            e = exponent - bits * (p + 1)
            if top > 0.0 and e >= -1022:         # a grid in the normal range; else dropped
                unit[p, j] = math.ldexp(1.0, e)
                inverse[p, j] = math.ldexp(1.0, -e)
    out = np.empty((_PIECES, k, cols))
    rest = w
    for p in range(_PIECES):
        piece = out[p]
        np.multiply(rest, inverse[p], out=piece)     # exact: a power of two
        np.rint(piece, out=piece)
        piece *= unit[p]
        if p + 1 < _PIECES:
            rest = rest - piece                      # exact: |rest| ≤ unit/2
    return out.reshape(_PIECES * k, cols)


def _combine(sums) -> np.ndarray:
    """Add the grid pieces of each term, (n, P·K) → (n, K), in one fixed order."""
    parts = sums.reshape(len(sums), _PIECES, -1)
    out = parts[:, 0].copy()
    for p in range(1, _PIECES):
        out += parts[:, p]
    return out


def vehicle_wheel_demand(vehicle, profile) -> WheelDemand:
    """:func:`wheel_demand` for a :class:`~tractive.vehicle.Vehicle` on a
    :class:`~tractive.profiles.Profile`."""
    return wheel_demand(vehicle.resistance(), vehicle.mass_kg, vehicle.inertial_mass_kg,
                        profile.time_s, profile.speed_ms, profile.grade_fraction,
                        profile=profile.name)
