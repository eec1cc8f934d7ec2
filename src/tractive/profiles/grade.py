"""Road grade from elevation along the road.

Grade from elevation
--------------------
Where elevation is given instead of grade (``elevation_m`` columns, GPS
tracks), elevation is first taken as a function of distance travelled, then
smoothed: the grade at a distance is the slope of a least-squares straight
line fitted to the elevation over a centred window of ``grade_window_m``
metres (default 100 m) on a 1 %-of-window distance grid, which is a first-
derivative Savitzky-Golay filter of order 1 [1]_; near the ends of the trip
the window is the first or last ``grade_window_m`` of road. Samples taken
while the vehicle stands still share one distance; their elevations are
averaged, and a stopped vehicle keeps the grade of the spot where it stands
(there is no division by a zero distance). The result is clipped to
+-``max_grade_fraction`` (default 0.30: public roads steeper than about 30 %
are rare, common practice) to stop elevation noise turning into impossible
grades. A trip with no distance at all has zero grade.

The slope of elevation over distance is the grade, rise over run (tan theta
of the slope angle), only when the distance is horizontal; over a distance
measured along the road it is sin theta, and is converted to
tan theta = sin theta / sqrt(1 - sin² theta) (a 15 % grade read as its sine,
0.1483, would be 1.1 % low). GPS tracks give horizontal distance; speed files
give distance along the road (the vehicle's speed).

References
----------
.. [1] A. Savitzky and M. J. E. Golay, "Smoothing and Differentiation of Data
   by Simplified Least Squares Procedures", Analytical Chemistry 36(8),
   1627-1639, 1964.
"""

from __future__ import annotations

import math

import numpy as np

from ..limits import MAX_GRADE_FRACTION

__all__ = ["GRADE_WINDOW_M", "MAX_GRADE_FRACTION", "grade_from_elevation"]

#: default window for grade from elevation [m]
GRADE_WINDOW_M = 100.0


def grade_from_elevation(distance_m: np.ndarray, elevation_m: np.ndarray, window_m: float,
                         max_grade: float, along: str = "horizontal") -> np.ndarray:
    """Grade [-] (rise over run, tan theta) per sample from elevation [m] over
    cumulative distance [m].

    Least-squares slope of elevation over a centred ``window_m`` of distance
    (Savitzky-Golay, order 1, first derivative); see the module docstring.

    Parameters
    ----------
    along : str
        ``"horizontal"`` when the distance is measured on the map (GPS
        positions, speed over ground): the slope dz/dx is the grade itself.
        ``"road"`` when it is measured along the road surface (a vehicle's
        speed integrated): the slope dz/ds is sin theta, turned into
        tan theta = sin / sqrt(1 - sin²) before the limit ``max_grade`` applies.
    """
    from scipy.signal import savgol_filter

    s = np.asarray(distance_m, float)
    z = np.asarray(elevation_m, float)
    total = float(s[-1] - s[0])
    if not total > 0:
        return np.zeros_like(s)
    s = s - s[0]
    # one elevation per distinct distance: samples while stopped are averaged
    s_u, inverse = np.unique(s, return_inverse=True)
    z_u = np.bincount(inverse, weights=z) / np.bincount(inverse)
    n_grid = int(math.ceil(total / (window_m / 100.0))) + 1
    grid = np.linspace(0.0, total, n_grid)
    step = grid[1] - grid[0]
    z_grid = np.interp(grid, s_u, z_u)
    w = 2 * int(round(window_m / step / 2.0)) + 1
    w = min(w, n_grid if n_grid % 2 else n_grid - 1)
    if w >= 3:
        slope = savgol_filter(z_grid, w, 1, deriv=1, delta=step, mode="interp")
    else:
        slope = np.full(n_grid, (z_grid[-1] - z_grid[0]) / total)
    slope = np.interp(s, grid, slope)
    if along == "road":
        sine = np.clip(slope, -0.999, 0.999)     # |dz/ds| <= 1 for any real road
        slope = sine / np.sqrt(1.0 - sine * sine)
    elif along != "horizontal":
        raise ValueError(f"along must be 'road' or 'horizontal', got {along!r}")
    return np.clip(slope, -max_grade, max_grade)


