"""The profile: a speed trace on a uniform time grid, its phases, and the checks
shared by the readers.

A :class:`Profile` is a speed trace on a uniform time grid that starts at
0 s: time [s], speed [m/s] (never negative) and road grade [rise/run] per
sample, with optional named phases and a note on where it came from. Every
source is turned into that one shape at the edge, in SI units.

Plausibility: a step on the final time grid of a user's trace whose
acceleration exceeds :data:`~tractive.limits.MAX_USER_ACCEL_MS2` is refused
(see :func:`first_implausible_step`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..limits import MAX_USER_ACCEL_MS2, MEMORY_BUDGET_BYTES
from ..units import kmh_to_ms, mph_to_ms

#: speed units a user may name, and their conversion to m/s (exact, NIST SP 811)
SPEED_UNITS = {"kmh": kmh_to_ms, "mph": mph_to_ms, "ms": lambda v: np.asarray(v, float)}
#: standard gravity [m/s²] (CGPM 1901, exact), for accelerations worded in g
STANDARD_GRAVITY_MS2 = 9.80665
_STEP_RTOL = 1e-6
#: memory one sample of a profile takes while it is built and used [bytes]: its time,
#: speed and grade and the dozen or so float64 arrays of the same length that the
#: wheel-demand and powertrain models derive from it (an estimate with a margin,
#: common practice)
BYTES_PER_SAMPLE = 16 * 8


@dataclass(frozen=True)
class Phase:
    """A named part of a profile, from ``start_s`` to ``end_s`` [s] (both samples included)."""

    name: str
    start_s: float
    end_s: float

    @property
    def duration_s(self) -> float:
        """Phase duration [s]."""
        return self.end_s - self.start_s

    def to_dict(self) -> dict:
        """JSON-ready data."""
        return {"name": self.name, "start_s": float(self.start_s), "end_s": float(self.end_s)}



def _frozen(values, what: str, n: int | None = None) -> np.ndarray:
    """A read-only one-dimensional float copy of ``values`` (a number repeated ``n`` times)."""
    """A read-only float copy of ``values`` (a number repeated ``n`` times), one-dimensional."""
    arr = np.array(values, dtype=float)  # always a copy
    if n is not None and arr.ndim == 0:
        x = float(arr)
        # +0.0: zeroed pages from the system, touched only when read
        arr = np.zeros(n) if x == 0.0 and not math.copysign(1.0, x) < 0 else np.full(n, x)
    if arr.ndim != 1:
        raise InputError(f"must be a one-dimensional array, got shape {arr.shape}", field=what)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True, eq=False)
class Profile:
    """A speed trace on a uniform time grid starting at 0 s.

    Parameters
    ----------
    name : str
        Short name (``udds``, ``wltc3b:low``, ``commute.csv``).
    time_s : (T,) array
        Sample times [s]: 0, dt, 2 dt, ... (T >= 2).
    speed_ms : (T,) array
        Speed [m/s], finite and >= 0.
    grade_fraction : (T,) array or float
        Road grade [rise/run] at each sample (0.05 = 5 % uphill); a number is
        used for every sample.
    phases : tuple of Phase
        Named parts, within the profile's time span.
    source : str
        Where the profile came from, in words.

    Notes
    -----
    The arrays are copied and made read-only. Profiles compare by identity.
    """

    name: str
    time_s: np.ndarray
    speed_ms: np.ndarray
    grade_fraction: np.ndarray
    phases: tuple = ()
    source: str = ""

    def __post_init__(self):
        """Copy, freeze and check the arrays and phases."""
        where = f"profile '{self.name}'"
        t = _frozen(self.time_s, "time_s")
        v = _frozen(self.speed_ms, "speed_ms")
        g = _frozen(self.grade_fraction, "grade_fraction", n=len(v))
        if not (len(t) == len(v) == len(g)):
            raise InputError(f"{where}: time_s, speed_ms and grade_fraction must have the same "
                             f"length, got {len(t)}, {len(v)}, {len(g)}")
        if len(t) < 2:
            raise InputError(f"{where}: needs at least 2 samples, got {len(t)}", field="time_s")
        for arr, what in ((t, "time_s"), (v, "speed_ms"), (g, "grade_fraction")):
            if not np.all(np.isfinite(arr)):
                raise InputError(f"{where}: values must be finite", field=what)
        if t[0] != 0.0:
            raise InputError(f"{where}: must start at 0 s, starts at {t[0]:g} s", field="time_s")
        if not _equal_steps(t):
            raise InputError(f"{where}: time steps must be equal and positive", field="time_s")
        if np.any(v < 0):
            raise InputError(f"{where}: speed must not be negative (min {v.min():g} m/s)",
                             field="speed_ms")
        phases = tuple(self.phases)
        end = t[-1] * (1 + _STEP_RTOL)
        for ph in phases:
            if not isinstance(ph, Phase):
                raise InputError(f"{where}: phases must be Phase objects", field="phases")
            if not (0 <= ph.start_s < ph.end_s <= end):
                raise InputError(f"{where}: phase '{ph.name}' ({ph.start_s:g}-{ph.end_s:g} s) "
                                 f"is outside 0-{t[-1]:g} s", field="phases")
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "speed_ms", v)
        object.__setattr__(self, "grade_fraction", g)
        object.__setattr__(self, "phases", phases)

    @property
    def dt_s(self) -> float:
        """Time step [s]."""
        return float(self.time_s[1] - self.time_s[0])

    @property
    def duration_s(self) -> float:
        """Duration [s] = last sample time."""
        return float(self.time_s[-1])

    @property
    def distance_m(self) -> float:
        """Distance [m]: sum over steps of the mean of the two end speeds times dt (trapezoid)."""
        v = self.speed_ms
        return float(np.sum(0.5 * (v[1:] + v[:-1])) * self.dt_s)

    @property
    def speed_kmh(self) -> np.ndarray:
        """Speed [km/h] (a new array)."""
        return self.speed_ms * 3.6

    def __len__(self) -> int:
        """Number of samples."""
        return len(self.time_s)

    def to_dict(self) -> dict:
        """The whole trace as JSON-ready data."""
        return {"name": self.name, "source": self.source, "dt_s": self.dt_s,
                "duration_s": self.duration_s, "distance_m": self.distance_m,
                "phases": [p.to_dict() for p in self.phases],
                "time_s": self.time_s.tolist(), "speed_ms": self.speed_ms.tolist(),
                "grade_fraction": self.grade_fraction.tolist()}



#: samples per block of the step check (small temporaries on long traces)
_BLOCK = 1 << 18


def _equal_steps(t: np.ndarray) -> bool:
    """True when every step of ``t`` equals the first, positive one within
    :data:`_STEP_RTOL`; checked block by block."""
    dt = t[1] - t[0]
    if dt <= 0:
        return False
    for a in range(0, len(t) - 1, _BLOCK):
        steps = np.diff(t[a:a + _BLOCK + 1])
        steps -= dt
        if np.any(np.abs(steps, out=steps) > _STEP_RTOL * dt):
            return False
    return True


def positive(value, what: str) -> float:
    """``value`` as a positive finite float; InputError naming ``what`` otherwise."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"must be a number, got {value!r}", field=what) from None
    if not math.isfinite(x) or x <= 0:
        raise InputError(f"must be a positive finite number, got {value!r}", field=what)
    return x


def check_samples(n_samples: float, what: str = "the profile") -> int:
    """``n_samples`` as an int; InputError when that many samples of
    :data:`BYTES_PER_SAMPLE` would exceed :data:`~tractive.limits.MEMORY_BUDGET_BYTES`.

    Called before a profile's arrays are allocated, so that a profile too long
    for its time step is refused at once with the budget in the message, never
    after minutes with a MemoryError.
    """
    n = float(n_samples)
    if not math.isfinite(n) or n * BYTES_PER_SAMPLE > MEMORY_BUDGET_BYTES:
        need = f"{n * BYTES_PER_SAMPLE / 2 ** 30:.3g} GiB" if math.isfinite(n) else "unbounded"
        count = f"{n:.3g}" if math.isfinite(n) else "unbounded"
        raise InputError(f"{what} would have {count} samples ({need} at "
                         f"{BYTES_PER_SAMPLE} bytes each), more than the memory budget of "
                         f"{MEMORY_BUDGET_BYTES / 2 ** 30:g} GiB; use a larger time step "
                         f"(dt_s) or a shorter profile")
    return int(n)


def grid_length(span_s: float, dt_s: float) -> int:
    """Number of points of :func:`uniform_grid` (``span_s``, ``dt_s``); refused up front
    when that many samples would exceed the memory budget (:func:`check_samples`)."""
    return check_samples(math.floor(span_s / dt_s + 1e-9) + 1,
                         f"a {span_s:.6g} s profile at a time step of {dt_s:.6g} s")


def uniform_grid(span_s: float, dt_s: float) -> np.ndarray:
    """0, dt, 2 dt, ... up to the last point not after ``span_s`` (within rounding)."""
    grid = np.arange(grid_length(span_s, dt_s), dtype=float)   # whole numbers, exact
    grid *= dt_s                       # in place: the values of np.arange(n) * dt_s
    return grid


def first_implausible_step(speed_ms: np.ndarray, dt_s: float):
    """Index k of the first step k → k+1 whose |acceleration| exceeds
    :data:`~tractive.limits.MAX_USER_ACCEL_MS2`, with that acceleration [m/s²];
    None when there is none."""
    accel = np.diff(speed_ms) / dt_s
    bad = np.flatnonzero(np.abs(accel) > MAX_USER_ACCEL_MS2)
    if not bad.size:
        return None
    return int(bad[0]), float(accel[bad[0]])


def whole(x: float, sign: bool = False) -> str:
    """``x`` rounded to a whole number for a message; in 4 significant digits when it is
    huge (never hundreds of digits)."""
    if abs(x) < 1e7:
        return f"{x:+.0f}" if sign else f"{x:.0f}"
    return f"{x:+.4g}" if sign else f"{x:.4g}"


def accel_message(speed_ms, k: int, accel: float, dt_s: float, t_s: float,
                  rows: str = "rows") -> str:
    """The words for an implausible step k → k+1 found by :func:`first_implausible_step`."""
    dv_kmh = (speed_ms[k + 1] - speed_ms[k]) * 3.6
    return (f"speed changes by {dv_kmh:+.1f} km/h within {dt_s:g} s near {t_s:g} s "
            f"({whole(accel, True)} m/s², about "
            f"{whole(abs(accel) / STANDARD_GRAVITY_MS2)} g), more than the "
            f"{MAX_USER_ACCEL_MS2:g} m/s² any road vehicle can reach; a logging glitch or a "
            f"unit mistake? check the {rows} near here")


