"""Quasi-steady-state point-mass lap simulation.

The car is a point mass on the racing line (:class:`~tractive.lap.track.Track`).
At each point its tyres obey a friction ellipse on the normal load with
downforce,

    (Fx / (μx·N))² + (Fy / (μy·N))² ≤ 1,    N = m·g·cos θ + ½·ρ·ClA·v²,
    Fy = m·v²·κ,

with μy the cornering friction and μx the longitudinal one (driving: the
vehicle's ``tyre_road_friction``; braking: the braking friction). The lap
speed is the lowest of three limits:

1. **Cornering (apex) limit** v_lim: the highest speed at which the tyres
   give the lateral force m·v²·|κ| and, at the same time, the longitudinal
   force that holds the speed against the road load R(v) (steady state on
   the level), found by bisection in v. On a flat circle of radius r without
   drag and downforce this is √(μ·g·r); with downforce it solves
   m·v²/r = μ·(m·g + ½ρ·ClA·v²).
2. **Drive (forward integration)** from the start: m_inertial·dv/dt =
   Fx − R(v) − m·g·sin θ with Fx the smaller of the force the drive and the
   driven tyres give (:func:`tractive.performance.available_wheel_force_n`:
   best gear, power curve, traction of the driven axle with load transfer
   and downforce) and what the friction ellipse leaves after the lateral
   force.
3. **Braking (backward integration)** from the end: m_inertial·dv/dt =
   −(Fx,brake + R(v) + m·g·sin θ) with Fx,brake = μx,brake·N·√(1 − (Fy/(μy·N))²);
   the road load and an uphill help the brakes.

Both integrations advance v² over each distance step ds with Heun's method
(the slope at both ends of the step; exact for a constant acceleration,
second order otherwise) and clip at v_lim. A closed lap repeats the passes
with the speed at the finish as the new start speed until the two agree
(after one pass that touches a cornering limit they agree exactly); an open
stretch starts at ``start_speed_ms`` (default: from rest) and ends free (or
at ``end_speed_ms``). Time over a step is 2·ds / (v₁ + v₂), exact for a
constant acceleration.

Vehicle axis
------------
Every vehicle parameter may be an (N,) array (a parameter set with a vehicle
axis, e.g. study variants or Monte Carlo draws); the result then has (N, M)
speeds. The available drive force is tabulated once per vehicle on a speed
grid (:data:`FORCE_GRID_STEP_MS`) and a few grades, and read by linear
interpolation. The integration over the track points is a sequential loop:
the speed at each point follows from the speed at the point before (after,
braking) through a force that depends nonlinearly on that speed and on the
remaining grip, a recurrence with no closed form in general; each step of
the loop works on whole vehicle arrays.

Assumptions
-----------
Steady state at every point (no yaw or tyre transients), no load transfer
between axles or sides in corners (the driven-axle traction limit keeps the
longitudinal load transfer of :mod:`tractive.performance`), no tyre load
sensitivity (μ does not fall with load), gear changes without loss of drive
(the shift time is not counted), brakes strong enough to use all the grip,
no banking, the racing line fixed (not optimised), calm air.

References
----------
.. [1] D. L. Brayshaw, M. F. Harrison, "A quasi steady state approach to race
   car lap simulation in order to understand the effects of racing line and
   centre of gravity location", Proc. IMechE Part D 219(6), 725-739, 2005
   (from memory).
.. [2] B. Siegler, A. Deakin, D. Crolla, "Lap time simulation: comparison of
   steady state, quasi-static and transient racing car cornering
   strategies", SAE 2000-01-3563, 2000 (from memory).
.. [3] W. F. Milliken, D. L. Milliken, *Race Car Vehicle Dynamics*, SAE 1995,
   ch. 2 (friction circle, point-mass lap simulation; chapter from memory).
.. [4] T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 2
   and 4 (acceleration, braking, road load).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..limits import MAX_USER_SPEED_KMH
from ..units import KMH_MS, STANDARD_GRAVITY_MS2
from .track import Track

#: highest speed the simulation considers [m/s] (the plausibility limit of user speeds)
SPEED_CAP_MS = MAX_USER_SPEED_KMH * KMH_MS
#: speed step of the tabulated drive force [m/s]
FORCE_GRID_STEP_MS = 0.25
#: grades at which the drive force is tabulated on a track with slopes
FORCE_GRID_GRADES = 5
#: most passes of a closed lap before the start speed is taken as converged
MAX_PASSES = 40
#: start and finish speed of a closed lap agree within this [m/s]
PASS_TOLERANCE_MS = 1e-7
#: largest time step [s] of a simulated lap laid on a uniform time grid for the energy
#: models (:meth:`LapSimulation.to_profile`): 0.1 s is about 4 m at 150 km/h, two
#: distance steps of the simulation
TRACE_DT_S = 0.1
#: limit codes
DRIVE, BRAKING, CORNERING = 0, 1, 2
LIMIT_NAMES = ("drive", "braking", "cornering")
_BISECTIONS = 60


@dataclass(frozen=True, eq=False)
class LapSimulation:
    """Speeds along a track for one vehicle or a vehicle axis.

    Stations are the track's points, plus (closed lap) the finish, which is
    the start again: M = P + 1 for a closed lap, P for an open stretch.

    Attributes
    ----------
    track : Track
    distance_m : (M,) array
        Distance of each station [m].
    speed_ms : (M,) or (N, M) array
        Speed [m/s].
    time_s : (M,) or (N, M) array
        Time at each station from the start [s] (NaN where the car stalls).
    limit : (M,) or (N, M) int array
        Binding limit: 0 drive, 1 braking, 2 cornering (:data:`LIMIT_NAMES`).
    corner_speed_ms : (M,) or (N, M) array
        Cornering (apex) limit [m/s] (:data:`SPEED_CAP_MS` where none).
    lap_time_s : float or (N,) array
        Time over the track [s] (NaN: the car cannot complete it).
    """

    track: Track
    distance_m: np.ndarray
    speed_ms: np.ndarray
    time_s: np.ndarray
    limit: np.ndarray
    corner_speed_ms: np.ndarray
    lap_time_s: object
    passes: int = 1

    @property
    def batch(self) -> bool:
        """True with a vehicle axis."""
        return np.ndim(self.speed_ms) == 2

    def station_weights_m(self) -> np.ndarray:
        """Distance [m] each station stands for (sums to the track length)."""
        m = self.distance_m.size
        w = np.full(m, self.track.step_m)
        if self.track.closed:
            w[-1] = 0.0                                    # the finish is the start again
        else:
            w[0] = w[-1] = 0.5 * self.track.step_m
        return w

    def limits_share(self) -> dict:
        """Share of the distance [-] where each limit binds (vehicle axis: (N,) arrays)."""
        w = self.station_weights_m()
        total = float(np.sum(w))
        return {name: np.sum((self.limit == code) * w, axis=-1) / total
                for code, name in ((CORNERING, "cornering"), (BRAKING, "braking"),
                                   (DRIVE, "drive"))}

    def select(self, i: int) -> "LapSimulation":
        """Vehicle ``i`` of a batch as a one-vehicle simulation."""
        if not self.batch:
            return self
        return LapSimulation(self.track, self.distance_m, self.speed_ms[i], self.time_s[i],
                             self.limit[i], self.corner_speed_ms[i],
                             float(np.asarray(self.lap_time_s)[i]), self.passes)

    def to_profile(self, *, laps: int = 1, dt_s: float = TRACE_DT_S, name: str | None = None):
        """The simulated speed trace on a uniform time grid (one vehicle).

        The lap time is divided into whole steps of at most ``dt_s`` [s]
        (the step is ``lap_time_s / n``), speed is linear in time between
        stations (exact for the constant acceleration of a step), grade is
        the grade at that distance. ``laps`` closed laps are laid end to end.
        """
        from ..profiles import Profile

        if self.batch:
            raise ValueError("to_profile needs one vehicle; use select(i)")
        t_lap = float(self.lap_time_s)
        if not math.isfinite(t_lap):
            raise InputError("the car cannot complete the track (it stalls on a climb)",
                             field="track")
        if laps > 1 and not self.track.closed:
            raise InputError("an open track is driven once; --laps needs a closed lap",
                             field="laps")
        n = max(2, int(math.ceil(t_lap / dt_s - 1e-9)))
        tt = np.arange(n + 1) * (t_lap / n)
        v = np.interp(tt, self.time_s, self.speed_ms)
        dist = np.interp(tt, self.time_s, self.distance_m)
        tr = self.track
        s_grade = np.append(tr.distance_m, tr.length_m) if tr.closed else tr.distance_m
        g_nodes = np.append(tr.grade_fraction, tr.grade_fraction[0]) if tr.closed \
            else tr.grade_fraction
        g = np.interp(dist, s_grade, g_nodes)
        if laps > 1:
            v = np.concatenate([np.tile(v[:-1], laps), v[-1:]])
            g = np.concatenate([np.tile(g[:-1], laps), g[-1:]])
        time = np.arange(v.size) * (t_lap / n)
        label = name or f"lap:{tr.name}" + (f"*{laps}" if laps > 1 else "")
        return Profile(label, time, v, g, source=f"lap simulation on {tr.source}")


# ---------------------------------------------------------------------------
# vehicle parameters
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Car:
    """Per-vehicle values, each an (N,) array."""

    n: int
    batch: bool
    mass_kg: np.ndarray
    inertial_mass_kg: np.ndarray
    f0: np.ndarray
    f1: np.ndarray
    f2: np.ndarray
    downforce: np.ndarray          # ½ρ·ClA [N/(m/s)²]
    mu_drive: np.ndarray
    mu_corner: np.ndarray
    mu_brake: np.ndarray


def _car(vehicle, mu_cornering, mu_braking) -> _Car:
    """The vehicle's values on a common vehicle axis."""
    from ..roadload import PhysicalRoadLoad

    perf = vehicle.performance
    if perf is None:
        raise InputError("the vehicle has no performance block; a lap needs its drive "
                         "data and tyre_road_friction", file=vehicle.source or None,
                         field="performance")
    rl = vehicle.resistance()
    down = 0.0
    if isinstance(vehicle.road_load, PhysicalRoadLoad):
        down = 0.5 * np.asarray(vehicle.road_load.air_density_kg_m3, float) * \
            np.asarray(vehicle.road_load.cla_m2, float)
    mu = perf.tyre_road_friction
    for value, what in ((mu_cornering, "mu_cornering"), (mu_braking, "mu_braking")):
        if value is not None and not np.all((np.asarray(value, float) >= 0.05)
                                            & (np.asarray(value, float) <= 3.0)):
            raise InputError(f"must be from 0.05 to 3, got {value!r}", field=what)
    values = [vehicle.mass_kg, vehicle.inertial_mass_kg, rl.f0_n, rl.f1_n_per_ms,
              rl.f2_n_per_ms2, down, mu, mu if mu_cornering is None else mu_cornering,
              mu if mu_braking is None else mu_braking]
    arrays = [np.asarray(v, float) for v in values]
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
    except ValueError:
        raise InputError("vehicle-axis arrays of different lengths", field="vehicle") \
            from None
    if len(shape) > 1:
        raise InputError(f"vehicle parameters must be numbers or (N,) arrays, got shape "
                         f"{shape}", field="vehicle")
    n = shape[0] if shape else 1
    cols = [np.broadcast_to(a, (n,)).astype(float) for a in arrays]
    return _Car(n, bool(shape), *cols)


def _force_table(vehicle, car: _Car, sin_levels: np.ndarray) -> np.ndarray:
    """Available wheel force [N] on the speed grid at each grade level, (N, G, K)."""
    from ..performance import available_wheel_force_n

    k = int(math.ceil(SPEED_CAP_MS / FORCE_GRID_STEP_MS)) + 1
    v = np.arange(k) * FORCE_GRID_STEP_MS
    g = sin_levels.size
    veh = vehicle
    if car.batch and np.ndim(vehicle.mass_kg) == 0:
        veh = vehicle.with_changes(mass_kg=np.full(car.n, float(vehicle.mass_kg)))
    f = available_wheel_force_n(veh, np.tile(v, g), np.repeat(sin_levels, k))
    f = np.broadcast_to(np.asarray(f, float).reshape(-1, g * k), (car.n, g * k))
    return np.ascontiguousarray(f).reshape(car.n, g, k)


def _grade_levels(sin_grade: np.ndarray):
    """Tabulated grade levels, and per point the lower level and its weight."""
    lo, hi = float(np.min(sin_grade)), float(np.max(sin_grade))
    if hi - lo <= 1e-12:
        return np.array([lo]), np.zeros(sin_grade.size, int), np.zeros(sin_grade.size)
    levels = np.linspace(lo, hi, FORCE_GRID_GRADES)
    pos = (sin_grade - lo) / (levels[1] - levels[0])
    i0 = np.clip(np.floor(pos).astype(int), 0, FORCE_GRID_GRADES - 2)
    return levels, i0, np.clip(pos - i0, 0.0, 1.0)


# ---------------------------------------------------------------------------
# the simulation
# ---------------------------------------------------------------------------

def corner_speed_ms(car: _Car, curvature, sin_grade):
    """Cornering (apex) limit [m/s], shape (N, P), by bisection (module doc, limit 1).

    Only the points whose limit lies below :data:`SPEED_CAP_MS` are bisected (on a
    circuit most points are on straights or gentle bends, free up to the cap); each
    value is the same as bisecting the whole (N, P) array.
    """
    kappa = np.abs(np.asarray(curvature, float))[None, :]
    cos_t = np.sqrt(1.0 - np.asarray(sin_grade, float) ** 2)[None, :]
    cols = [car.mass_kg, car.f0, car.f1, car.f2, car.downforce, car.mu_drive,
            car.mu_corner]
    full = [c[:, None] for c in cols] + [kappa, cos_t]
    shape = (car.n, kappa.shape[1])
    hi = np.full(shape, SPEED_CAP_MS)
    free = _excess(hi, *full) <= 0
    rows, pts = np.nonzero(~free)
    part = [c[rows] for c in cols] + [kappa[0, pts], cos_t[0, pts]]
    lo = np.zeros(rows.size)
    hi = np.full(rows.size, SPEED_CAP_MS)
    for _ in range(_BISECTIONS):          # bisection steps on whole arrays
        mid = 0.5 * (lo + hi)
        ok = _excess(mid, *part) <= 0
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    out = np.full(shape, SPEED_CAP_MS)
    out[rows, pts] = lo
    return out


def _excess(v, m, f0, f1, f2, d, mux, muy, kappa, cos_t):
    """Friction-ellipse use minus 1 [-] at speed v [m/s] in steady cornering (limit 1)."""
    normal = m * STANDARD_GRAVITY_MS2 * cos_t + d * v * v
    road = f0 + v * (f1 + f2 * v)
    return (road / (mux * normal)) ** 2 + (m * v * v * kappa / (muy * normal)) ** 2 - 1.0


class _Forces:
    """Acceleration and deceleration at a point for whole vehicle arrays."""

    def __init__(self, car: _Car, table: np.ndarray, kappa, sin_g, g_i0, g_w):
        self.car = car
        n, g, k = table.shape
        self.flat = table.reshape(-1)
        self.k = k
        self.rows = np.arange(n) * (g * k)
        self.two = g > 1
        self.kappa = np.abs(kappa)
        self.sin = sin_g
        self.cos = np.sqrt(1.0 - sin_g ** 2)
        self.g_off = g_i0 * k
        self.g_w = g_w
        self.weight = car.mass_kg * STANDARD_GRAVITY_MS2

    def _common(self, v, j):
        """Normal load [N], grip share left for Fx [-], road load [N]."""
        c = self.car
        v2 = v * v
        normal = self.weight * self.cos[j] + c.downforce * v2
        lat = c.mass_kg * v2 * self.kappa[j] / (c.mu_corner * normal)
        left = np.sqrt(np.maximum(1.0 - lat * lat, 0.0))
        road = c.f0 + v * (c.f1 + c.f2 * v)
        return normal, left, road

    def drive_force(self, v, j):
        """Tabulated available wheel force [N] at speed v and point j."""
        x = v * (1.0 / FORCE_GRID_STEP_MS)
        i0 = np.minimum(x.astype(np.intp), self.k - 2)
        f = np.minimum(x - i0, 1.0)
        base = self.rows + self.g_off[j] + i0
        out = (1.0 - f) * self.flat[base] + f * self.flat[base + 1]
        if self.two:
            base = base + self.k
            upper = (1.0 - f) * self.flat[base] + f * self.flat[base + 1]
            out = out + self.g_w[j] * (upper - out)
        return out

    def accel(self, v, j):
        """Largest acceleration [m/s²] at speed v [m/s] at point j (drive, module doc)."""
        c = self.car
        normal, left, road = self._common(v, j)
        fx = np.minimum(self.drive_force(v, j), c.mu_drive * normal * left)
        return (fx - road - self.weight * self.sin[j]) / c.inertial_mass_kg

    def decel(self, v, j):
        """Largest deceleration [m/s²] at speed v [m/s] at point j (braking, module doc)."""
        c = self.car
        normal, left, road = self._common(v, j)
        return (c.mu_brake * normal * left + road + self.weight * self.sin[j]) / \
            c.inertial_mass_kg


def _forward(fz: _Forces, v_lim, start, ds, geo):
    """Speeds [m/s] (N, M) of the drive pass from ``start`` (Heun's method in v²)."""
    n, m = v_lim.shape
    out = np.empty((n, m))
    v = np.minimum(start, v_lim[:, 0])
    out[:, 0] = v
    u = v * v
    for j in range(m - 1):                # sequential over points (see module doc)
        a1 = fz.accel(v, geo[j])
        up = np.maximum(u + 2.0 * ds * a1, 0.0)
        a2 = fz.accel(np.sqrt(up), geo[j + 1])
        u = np.maximum(u + ds * (a1 + a2), 0.0)
        v = np.minimum(np.sqrt(u), v_lim[:, j + 1])
        u = v * v
        out[:, j + 1] = v
    return out


def _backward(fz: _Forces, v_lim, end, ds, geo):
    """Speeds [m/s] (N, M) of the braking pass back from ``end`` (Heun's method in v²)."""
    n, m = v_lim.shape
    out = np.empty((n, m))
    v = np.minimum(end, v_lim[:, -1])
    out[:, -1] = v
    u = v * v
    for j in range(m - 1, 0, -1):         # sequential over points (see module doc)
        b1 = fz.decel(v, geo[j])
        up = np.maximum(u + 2.0 * ds * b1, 0.0)
        b2 = fz.decel(np.sqrt(up), geo[j - 1])
        u = np.maximum(u + ds * (b1 + b2), 0.0)
        v = np.minimum(np.sqrt(u), v_lim[:, j - 1])
        u = v * v
        out[:, j - 1] = v
    return out


def simulate_lap(vehicle, track: Track, *, mu_cornering=None, mu_braking=None,
                 start_speed_ms: float | None = None,
                 end_speed_ms: float | None = None) -> LapSimulation:
    """Simulate the quickest run of a vehicle over a track (module doc).

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block (drive data and ``tyre_road_friction``);
        numeric parameters may be (N,) arrays along a vehicle axis.
    track : Track
    mu_cornering, mu_braking : float or (N,) array, optional
        Tyre-road friction [-] for cornering and for braking (default: the
        vehicle's ``tyre_road_friction``, which is also used for driving).
    start_speed_ms : float, optional
        Speed at the start of an open track [m/s] (default 0: from rest);
        not used on a closed lap.
    end_speed_ms : float, optional
        Speed at the end of an open track [m/s] (default: free).

    Returns
    -------
    LapSimulation
        (M,) arrays for a vehicle without a vehicle axis, else (N, M).
    """
    car = _car(vehicle, mu_cornering, mu_braking)
    closed = track.closed
    for value, what in ((start_speed_ms, "start_speed_ms"), (end_speed_ms, "end_speed_ms")):
        if value is not None and not 0.0 <= float(value) <= SPEED_CAP_MS:
            raise InputError(f"must be from 0 to {SPEED_CAP_MS:.1f} m/s, got {value!r}",
                             field=what)
    p = track.n_points
    geo = np.arange(p + 1) % p if closed else np.arange(p)
    dist = np.append(track.distance_m, track.length_m) if closed else track.distance_m
    levels, g_i0, g_w = _grade_levels(track.sin_grade)
    table = _force_table(vehicle, car, levels)
    fz = _Forces(car, table, track.curvature_1_per_m, track.sin_grade, g_i0, g_w)
    v_lim = corner_speed_ms(car, track.curvature_1_per_m, track.sin_grade)[:, geo]
    ds = track.step_m
    passes = 1
    if closed:
        start = v_lim[:, 0].copy()
        for passes in range(1, MAX_PASSES + 1):
            fwd = _forward(fz, v_lim, start, ds, geo)
            new = np.minimum(fwd[:, -1], v_lim[:, 0])
            if np.all(np.abs(new - start) <= PASS_TOLERANCE_MS):
                break
            start = new
        end = v_lim[:, -1].copy()
        for _ in range(MAX_PASSES):
            bwd = _backward(fz, v_lim, end, ds, geo)
            new = np.minimum(bwd[:, 0], v_lim[:, -1])
            if np.all(np.abs(new - end) <= PASS_TOLERANCE_MS):
                break
            end = new
    else:
        v0 = 0.0 if start_speed_ms is None else float(start_speed_ms)
        v1 = SPEED_CAP_MS if end_speed_ms is None else float(end_speed_ms)
        fwd = _forward(fz, v_lim, np.full(car.n, v0), ds, geo)
        bwd = _backward(fz, v_lim, np.full(car.n, v1), ds, geo)
    v = np.minimum(fwd, bwd)
    cap = SPEED_CAP_MS * (1 - 1e-12)
    limit = np.where((v >= v_lim * (1 - 1e-9)) & (v_lim < cap), CORNERING,
                     np.where(bwd < fwd * (1 - 1e-12), BRAKING, DRIVE))
    vs = v[:, 1:] + v[:, :-1]
    with np.errstate(divide="ignore"):
        dt = np.where(vs > 0, 2.0 * ds / vs, np.inf)
    # a stop inside the track (a climb the car cannot make) is a stall
    inner = v[:, 1:-1] <= 0 if v.shape[1] > 2 else np.zeros((car.n, 0), bool)
    stalled = np.any(inner, axis=1) | np.any(~np.isfinite(dt), axis=1)
    t = np.concatenate([np.zeros((car.n, 1)), np.cumsum(dt, axis=1)], axis=1)
    t[stalled] = np.nan
    lap = t[:, -1]
    if not car.batch:
        return LapSimulation(track, dist, v[0], t[0], limit[0], v_lim[0], float(lap[0]),
                             passes)
    return LapSimulation(track, dist, v, t, limit, v_lim, lap, passes)


__all__ = ["LapSimulation", "simulate_lap", "corner_speed_ms", "LIMIT_NAMES",
           "SPEED_CAP_MS", "TRACE_DT_S", "DRIVE", "BRAKING", "CORNERING"]
