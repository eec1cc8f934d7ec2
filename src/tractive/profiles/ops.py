"""Building and combining profiles: constant speed, resampling, joining, repeating.

Joining profiles
----------------
:func:`concatenate` (and :func:`repeat`) put profiles end to end. When a part
starts with exactly the speed and grade at which the previous part ends (true
of every bundled cycle, which start and end at standstill) the two instants
are the same sample: this is how the FTP-75 table joins the UDDS and its
first 505 s. Otherwise the next part starts one time step later, and the
speed changes from one value to the other over that step. All parts must
have the same time step.
"""

from __future__ import annotations

import math
from typing import Iterable

import numpy as np

from ..errors import InputError
from ..limits import MAX_REPEAT
from .model import Phase, Profile, check_samples, positive, uniform_grid

__all__ = ["constant_speed", "resample", "concatenate", "repeat"]


def constant_speed(speed_ms: float, duration_s: float = 3600.0, dt_s: float = 1.0,
                   grade_fraction: float = 0.0, name: str | None = None) -> Profile:
    """A constant speed from t = 0 (no run-up).

    Parameters
    ----------
    speed_ms : float
        Speed [m/s], >= 0.
    duration_s : float
        Duration [s], a whole number of time steps.
    dt_s : float
        Time step [s].
    grade_fraction : float
        Grade [rise/run].
    name : str, optional
        Default ``steady:<speed>ms``.
    """
    dt_s = positive(dt_s, "dt_s")
    duration_s = positive(duration_s, "duration_s")
    try:
        v = float(speed_ms)
        g = float(grade_fraction)
    except (TypeError, ValueError):
        raise InputError(f"speed and grade must be numbers, got {speed_ms!r}, "
                         f"{grade_fraction!r}") from None
    if not math.isfinite(v) or v < 0:
        raise InputError(f"must be a finite number >= 0, got {speed_ms!r}", field="speed_ms")
    if not math.isfinite(g):
        raise InputError(f"must be finite, got {grade_fraction!r}", field="grade_fraction")
    steps = duration_s / dt_s
    check_samples(steps + 1, f"a {duration_s:.6g} s profile at a time step of {dt_s:.6g} s")
    n = int(round(steps))
    if abs(steps - n) > 1e-9 * max(1.0, steps):
        raise InputError(f"duration {duration_s:g} s is not a whole number of time steps of "
                         f"{dt_s:g} s", field="duration_s")
    t = np.arange(n + 1) * dt_s
    label = name if name is not None else f"steady:{v:g}ms"
    return Profile(label, t, np.full(n + 1, v), np.full(n + 1, g), (),
                   f"constant speed {v:g} m/s ({v * 3.6:g} km/h) for {duration_s:g} s"
                   + (f" on a {g * 100:g} % grade" if g else ""))


def resample(profile: Profile, dt_s: float) -> Profile:
    """The profile on another time step, by linear interpolation of speed and grade.

    The new grid runs from 0 to the last point not after the profile's end;
    each new sample is the interpolated value at its time (no averaging), so
    a coarser step can miss short peaks. Phases keep their times (cut at the
    new end). Returns the same profile when the step is already ``dt_s``.
    """
    dt_s = positive(dt_s, "dt_s")
    if abs(profile.dt_s - dt_s) <= 1e-12 * dt_s:
        return profile
    grid = uniform_grid(profile.duration_s, dt_s)
    if len(grid) < 2:
        raise InputError(f"profile '{profile.name}' lasts {profile.duration_s:g} s, less than "
                         f"one time step dt_s = {dt_s:g} s", field="dt_s")
    end = grid[-1]
    phases = tuple(Phase(p.name, p.start_s, min(p.end_s, end)) for p in profile.phases
                   if p.start_s < end)
    return Profile(profile.name, grid, np.interp(grid, profile.time_s, profile.speed_ms),
                   np.interp(grid, profile.time_s, profile.grade_fraction), phases,
                   profile.source)


def _unique_names(names: list[str]) -> list[str]:
    """The names with a repeated one numbered #1, #2, ..."""
    counts: dict = {}
    for n in names:
        counts[n] = counts.get(n, 0) + 1
    seen: dict = {}
    out = []
    for n in names:
        if counts[n] > 1:
            seen[n] = seen.get(n, 0) + 1
            out.append(f"{n}#{seen[n]}")
        else:
            out.append(n)
    return out


def concatenate(profiles: Iterable[Profile], name: str | None = None) -> Profile:
    """Profiles one after the other.

    A part that starts with exactly the speed and grade at which the
    previous part ends shares that sample with it; otherwise it starts one
    time step later. Phases: with more than one part, a part with phases
    contributes them as ``<part>:<phase>``, a part without phases one phase
    named after the part; repeated names get ``#1``, ``#2``, ...

    Parameters
    ----------
    profiles : iterable of Profile
        All with the same time step (use :func:`resample` first).
    name : str, optional
        Default: the part names joined by ``+``.
    """
    parts = list(profiles)
    if not parts:
        raise InputError("nothing to join: no profiles given")
    for p in parts:
        if not isinstance(p, Profile):
            raise InputError(f"can only join Profile objects, got {type(p).__name__}")
    label = name if name is not None else "+".join(p.name for p in parts)
    if len(parts) == 1:
        p = parts[0]
        return p if label == p.name else Profile(label, p.time_s, p.speed_ms,
                                                 p.grade_fraction, p.phases, p.source)
    dt = parts[0].dt_s
    for p in parts[1:]:
        if abs(p.dt_s - dt) > 1e-9 * dt:
            raise InputError(f"cannot join profiles with different time steps: "
                             f"'{parts[0].name}' has {dt:g} s, '{p.name}' has {p.dt_s:g} s; "
                             f"resample first")
    check_samples(sum(len(p) for p in parts), f"'{label}'")
    speeds, grades, starts = [parts[0].speed_ms], [parts[0].grade_fraction], [0]
    end_index = len(parts[0]) - 1
    for p in parts[1:]:
        if p.speed_ms[0] == speeds[-1][-1] and p.grade_fraction[0] == grades[-1][-1]:
            speeds.append(p.speed_ms[1:])
            grades.append(p.grade_fraction[1:])
            start = end_index
        else:
            speeds.append(p.speed_ms)
            grades.append(p.grade_fraction)
            start = end_index + 1
        starts.append(start)
        end_index = start + len(p) - 1
    labels, bounds = [], []
    for p, start in zip(parts, starts):
        off = start * dt
        if p.phases:
            for ph in p.phases:
                labels.append(f"{p.name}:{ph.name}")
                bounds.append((ph.start_s + off, ph.end_s + off))
        else:
            labels.append(p.name)
            bounds.append((off, off + p.duration_s))
    phases = tuple(Phase(n, a, b) for n, (a, b) in zip(_unique_names(labels), bounds))
    sources = list(dict.fromkeys(p.source for p in parts if p.source))
    speed = np.concatenate(speeds)
    return Profile(label, np.arange(len(speed)) * dt, speed, np.concatenate(grades), phases,
                   " + ".join(sources))


def repeat(profile: Profile, n: int) -> Profile:
    """The profile ``n`` times in a row (see :func:`concatenate` for the joins).

    Parameters
    ----------
    profile : Profile
        The profile to repeat.
    n : int
        Count, 1 to :data:`~tractive.limits.MAX_REPEAT`.
    """
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
        raise InputError(f"repeat count must be a whole number, got {n!r}")
    if not 1 <= n <= MAX_REPEAT:
        raise InputError(f"repeat count must be between 1 and {MAX_REPEAT}, got {n}")
    if n == 1:
        return profile
    return concatenate([profile] * int(n), name=f"{profile.name}*{int(n)}")


