"""Generate circuit.csv: the racing line of an invented circuit ("Heron Flats").

The line is a closed-form layout driven anticlockwise (left-hand bends have
positive angles): straights, and bends of constant radius entered and left
over a transition in which the curvature changes linearly with distance
(a clothoid, as on roads and racing lines), so the curvature has no jumps.
A bend of radius R turning by the angle φ has transitions of
``min(25 m, 0.4·R·φ)`` and an arc of R·φ minus one transition in between
(the heading then changes by exactly φ). The curvature κ(s) is integrated
to heading and position on a 5 cm grid (midpoint rule). Two of the
straights are left free and solved for (a 2 × 2 linear system: the end
point is linear in their lengths) so that the line ends where it starts;
the bends add up to one full turn (360°). Elevation is a smooth closed
function of distance,

    z(s) = 6 sin(2π s / L) + 2.5 sin(6π s / L + 0.7)   [m]

(at most about 3 % grade). The line is written every 4 m as x_m, y_m,
elevation_m (rounded to 1 cm). Nothing is random.

Run:  python make_circuit.py   (writes circuit.csv next to this script)
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

#: (kind, length_m or None for a solved straight, radius_m, angle_deg)
LAYOUT = [
    ("straight", 640.0, None, None),   # main straight
    ("bend", None, 35.0, 80.0),        # turn 1, tight left
    ("straight", None, None, None),    # solved
    ("bend", None, 120.0, 40.0),       # turn 2, fast sweeper
    ("straight", 300.0, None, None),
    ("bend", None, 18.0, 120.0),       # turn 3, hairpin
    ("straight", 260.0, None, None),
    ("bend", None, 60.0, -80.0),       # turn 4, right-hander
    ("bend", None, 45.0, 60.0),        # turn 5, linked left
    ("straight", None, None, None),    # back straight, solved
    ("bend", None, 80.0, 50.0),        # turn 6, kink
    ("straight", 150.0, None, None),
    ("bend", None, 50.0, 90.0),        # final corner onto the main straight
]
#: output spacing [m] and integration step [m]
STEP_M = 4.0
FINE_M = 0.05
#: longest curvature transition [m]
TRANSITION_M = 25.0
NAME = "Heron Flats (invented)"


def curvature_pieces(free_lengths):
    """(length [m], curvature at start [1/m], at end [1/m]) of every piece."""
    pieces, it = [], iter(free_lengths)
    for kind, length, radius, angle in LAYOUT:
        if kind == "straight":
            pieces.append((length if length is not None else next(it), 0.0, 0.0))
            continue
        phi = math.radians(angle)
        k = math.copysign(1.0 / radius, phi)
        turn = radius * abs(phi)                     # R·φ
        ramp = min(TRANSITION_M, 0.4 * turn)
        pieces += [(ramp, 0.0, k), (turn - ramp, k, k), (ramp, k, 0.0)]
    return pieces


def integrate(pieces, step_m=FINE_M):
    """Distance, x, y [m] and heading [rad] along the pieces (midpoint rule)."""
    s_parts, k_parts, start = [], [], 0.0
    for length, k0, k1 in pieces:
        n = max(1, int(round(length / step_m)))
        u = (np.arange(n) + 0.5) / n
        s_parts.append(start + u * length)
        k_parts.append(k0 + (k1 - k0) * u)
        start += length
    ds = np.concatenate([np.full(len(p), pc[0] / len(p)) for p, pc in zip(s_parts, pieces)])
    k = np.concatenate(k_parts)
    heading = np.concatenate([[0.0], np.cumsum(k * ds)])
    mid = 0.5 * (heading[1:] + heading[:-1])
    x = np.concatenate([[0.0], np.cumsum(np.cos(mid) * ds)])
    y = np.concatenate([[0.0], np.cumsum(np.sin(mid) * ds)])
    s = np.concatenate([[0.0], np.cumsum(ds)])
    return s, x, y, heading


def solve_free():
    """Lengths [m] of the free straights that close the line."""
    base = np.array([a[-1] for a in integrate(curvature_pieces([0.0, 0.0]))[1:3]])
    cols = []
    for e in ([1000.0, 0.0], [0.0, 1000.0]):
        end = np.array([a[-1] for a in integrate(curvature_pieces(e))[1:3]])
        cols.append((end - base) / 1000.0)
    return np.linalg.solve(np.column_stack(cols), -base)


def sample(step_m=STEP_M):
    """Points of the closed line every ``step_m`` [m]: x, y, elevation [m], length [m]."""
    free = list(solve_free())
    if min(free) <= 0:
        raise ValueError(f"layout does not close with positive straights: {free}")
    s, x, y, _ = integrate(curvature_pieces(free))
    total = float(s[-1])
    n = int(round(total / step_m))
    sp = np.arange(n) * (total / n)
    z = 6.0 * np.sin(2 * np.pi * sp / total) + 2.5 * np.sin(6 * np.pi * sp / total + 0.7)
    return np.interp(sp, s, x), np.interp(sp, s, y), z, total


def main():
    xs, ys, z, total = sample()
    out = Path(__file__).with_name("circuit.csv")
    lines = [f"# racing line of {NAME}, {total:.1f} m, anticlockwise; made by make_circuit.py",
             "x_m,y_m,elevation_m"]
    lines += [f"{a:.2f},{b:.2f},{c:.2f}" for a, b, c in zip(xs, ys, z)]
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out


if __name__ == "__main__":
    print(main())
