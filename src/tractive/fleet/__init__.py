"""Fleets: what a modification would have saved over a fleet's recorded trips.

:func:`run_fleet` reads a study file with a ``fleet`` block (vehicles table,
trips table), streams the trips through the batch of :mod:`.engine` (in this
process, a process pool, or Dask) and returns a :class:`FleetResult`.
"""

from __future__ import annotations

from .engine import FleetModel, trip_batch
from .results import FleetResult
from .study import load_fleet_study, run_fleet

__all__ = ["run_fleet", "load_fleet_study", "FleetResult", "FleetModel", "trip_batch"]
