"""Coast-down analysis: from raw speed logs to road-load coefficients with uncertainty.

Public functions:

* :func:`read_coastdown_log` — read a raw CSV or GPX log (no resampling).
* :class:`CoastdownSettings` (with :class:`TestVehicle`, :class:`DetectionSettings`,
  :class:`FitSettings`, :class:`CorrectionSettings`) — every option, checked.
* :func:`analyze_coastdown` — find runs, fit f0/f1/f2 with covariance,
  correct to reference conditions, derive CdA, Cd and Crr.
* :func:`two_interval_estimate` — the two-interval quick estimate.
* :func:`coast_speed_ms`, :func:`coast_time_s` — closed-form coasting.
* :func:`write_road_load` (by file ending: .yaml/.yml block or .json result),
  :func:`write_road_load_yaml`, :func:`plot_coastdown` — outputs.

Modules: ``logs`` (reading), ``runs`` (detection), ``motion`` (closed forms and
filters), ``fitting`` (methods and covariance), ``corrections`` (reference
conditions), ``settings`` (options), ``quick`` (two-interval estimate), ``analysis`` (the whole
chain), ``output`` (YAML block and figure).
"""

from __future__ import annotations

from .analysis import CoastdownResult, RunReport, analyze_coastdown
from .corrections import REFERENCE_STATES, correction_factors
from .fitting import COMBINES, METHODS
from .logs import CoastdownLog, read_coastdown_log
from .motion import coast_speed_ms, coast_time_s
from .runs import DetectionSettings
from .settings import CoastdownSettings, CorrectionSettings, FitSettings, TestVehicle
from .output import plot_coastdown, road_load_yaml, write_road_load, write_road_load_yaml
from .quick import TwoIntervalEstimate, two_interval_estimate

__all__ = ["CoastdownResult", "RunReport", "analyze_coastdown", "REFERENCE_STATES",
           "correction_factors", "COMBINES", "METHODS", "CoastdownLog", "read_coastdown_log",
           "coast_speed_ms", "coast_time_s", "plot_coastdown", "road_load_yaml",
           "write_road_load", "write_road_load_yaml", "TwoIntervalEstimate",
           "two_interval_estimate", "CoastdownSettings", "CorrectionSettings", "FitSettings",
           "TestVehicle", "DetectionSettings"]
