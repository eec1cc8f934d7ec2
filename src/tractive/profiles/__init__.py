"""Speed profiles: bundled drive cycles, user CSV files, GPS tracks, statistics.

A :class:`Profile` is a speed trace on a uniform time grid that starts at
0 s: time [s], speed [m/s] (never negative) and road grade [rise/run] per
sample, with optional named phases and a note on where it came from. Every
source is turned into that one shape at the edge, in SI units.

Modules, by concern:

==============  ==============================================================
``model``       :class:`Profile`, :class:`Phase`, checks shared by the readers
``ops``         :func:`constant_speed`, :func:`resample`, :func:`concatenate`,
                :func:`repeat`
``cycles``      the bundled drive cycles: :func:`list_cycles`,
                :func:`cycle_info`, :func:`load_cycle`, :class:`CycleInfo`
``speedcsv``    speed files: :func:`read_speed_csv`
``gpstrack``    GPS tracks: :func:`read_gpx` (positions and distances from
                :mod:`tractive.geo`)
``grade``       road grade from elevation
``expression``  the profile grammar: :func:`resolve_profile` (``udds*2+hwfet``,
                ``steady:90kmh``, file names)
``stats``       :func:`profile_statistics`, :class:`ProfileStats`
==============  ==============================================================

Plausibility bounds (speed, acceleration, grade, repeat count) come from
:mod:`tractive.limits`; they are re-exported here for older imports.
"""

from __future__ import annotations

from ..geo import EARTH_RADIUS_M, haversine_distance_m
from ..limits import MAX_GRADE_FRACTION, MAX_REPEAT, MAX_USER_ACCEL_MS2, MAX_USER_SPEED_KMH
from .cycles import BUNDLED_STEP_S, CycleInfo, cycle_info, list_cycles, load_cycle
from .expression import resolve_profile
from .gpstrack import PAUSE_RADIUS_M, SPEED_WINDOW_S, STOP_SPEED_MS, read_gpx
from .grade import GRADE_WINDOW_M
from .model import Phase, Profile
from .ops import concatenate, constant_speed, repeat, resample
from ..reading import ReadOptions, reading
from .speedcsv import read_speed_csv
from .stats import IDLE_SPEED_MS, ProfileStats, profile_statistics

__all__ = [
    "EARTH_RADIUS_M", "IDLE_SPEED_MS", "GRADE_WINDOW_M", "MAX_GRADE_FRACTION",
    "SPEED_WINDOW_S", "STOP_SPEED_MS", "PAUSE_RADIUS_M", "MAX_REPEAT", "MAX_USER_SPEED_KMH",
    "MAX_USER_ACCEL_MS2", "BUNDLED_STEP_S",
    "Phase", "Profile", "CycleInfo", "ProfileStats",
    "list_cycles", "cycle_info", "load_cycle", "read_speed_csv", "read_gpx",
    "constant_speed", "resample", "repeat", "concatenate", "profile_statistics",
    "resolve_profile", "haversine_distance_m", "ReadOptions", "reading",
]
