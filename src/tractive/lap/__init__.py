"""Lap time on a circuit: the racing line (:mod:`.track`) and a quasi-steady-state
point-mass simulation (:mod:`.simulate`), per vehicle or along a vehicle axis.

>>> from tractive.lap import read_track, simulate_lap        # doctest: +SKIP
>>> sim = simulate_lap(vehicle, read_track("circuit.csv"))   # doctest: +SKIP
>>> sim.lap_time_s                                           # doctest: +SKIP
"""

from .simulate import (BRAKING, CORNERING, DRIVE, LIMIT_NAMES, SPEED_CAP_MS, TRACE_DT_S,
                       LapSimulation,
                       corner_speed_ms, simulate_lap)
from .track import (DEFAULT_SMOOTHING_M, DEFAULT_STEP_M, MAX_CURVATURE_1_PER_M, MAX_GAP_M,
                    MIN_POINTS, Track, circle_track, read_track, straight_track,
                    track_from_curvature, track_from_points)

__all__ = ["Track", "read_track", "track_from_points", "track_from_curvature",
           "circle_track", "straight_track", "LapSimulation", "simulate_lap",
           "corner_speed_ms", "LIMIT_NAMES", "SPEED_CAP_MS", "TRACE_DT_S", "DRIVE", "BRAKING", "CORNERING",
           "DEFAULT_SMOOTHING_M", "DEFAULT_STEP_M", "MAX_GAP_M", "MIN_POINTS",
           "MAX_CURVATURE_1_PER_M"]
