"""Studies: a baseline vehicle, its modifications, the driving, and what each change costs or saves.

:func:`run_study` reads a study file and returns a
:class:`~tractive.study.results.StudyResult`.
"""

from __future__ import annotations

from .results import (AttributionRow, InputItem, METRICS, ProfileInfo, RangeCurveSeries,
                      ResultRow, StudyResult, TimeSeries, VariantInfo)

__all__ = ["AttributionRow", "InputItem", "METRICS", "ProfileInfo", "RangeCurveSeries",
           "ResultRow", "StudyResult", "TimeSeries", "VariantInfo", "run_study", "load_study"]


def run_study(path, **kwargs):
    """Read a study file and run it (see :func:`tractive.study.engine.run_study`)."""
    from .engine import run_study as _run
    return _run(path, **kwargs)


def load_study(path):
    """Read and validate a study file (see :func:`tractive.study.spec.load_study`)."""
    from .spec import load_study as _load
    return _load(path)
