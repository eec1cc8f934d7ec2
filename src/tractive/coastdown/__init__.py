"""Coast-down analysis: from raw speed logs to road-load coefficients with uncertainty.

Public functions:

* :func:`read_coastdown_log` — read a raw CSV or GPX log (no resampling).
* :func:`analyze_coastdown` — find runs, fit f0/f1/f2 with covariance,
  correct to reference conditions, derive CdA, Cd and Crr.
* :func:`two_interval_estimate` — the two-interval quick estimate.
* :func:`coast_speed_ms`, :func:`coast_time_s` — closed-form coasting.
* :func:`write_road_load` (by file ending: .yaml/.yml block or .json result),
  :func:`write_road_load_yaml`, :func:`plot_coastdown` — outputs.

Modules: ``logs`` (reading), ``runs`` (detection), ``motion`` (closed forms and
filters), ``fitting`` (methods and covariance), ``corrections`` (reference
conditions), ``quick`` (two-interval estimate), ``analysis`` (the whole
chain), ``output`` (YAML block and figure).
"""

from __future__ import annotations

import importlib

#: public name → submodule defining it; a submodule is imported when one of its names
#: is first used, so importing the package loads no scipy
_EXPORTS = {
    "CoastdownResult": "analysis", "RunReport": "analysis", "analyze_coastdown": "analysis",
    "REFERENCE_STATES": "corrections", "correction_factors": "corrections",
    "COMBINES": "fitting", "METHODS": "fitting",
    "CoastdownLog": "logs", "read_coastdown_log": "logs",
    "coast_speed_ms": "motion", "coast_time_s": "motion",
    "plot_coastdown": "output", "road_load_yaml": "output", "write_road_load": "output",
    "write_road_load_yaml": "output",
    "TwoIntervalEstimate": "quick", "two_interval_estimate": "quick",
    "DetectionSettings": "runs", "CoastdownSettings": "settings",
    "CorrectionSettings": "settings", "FitSettings": "settings", "TestVehicle": "settings",
}


def __getattr__(name):
    """Import the submodule that defines ``name`` on first use (PEP 562)."""
    if name in _EXPORTS:
        return getattr(importlib.import_module(f"{__name__}.{_EXPORTS[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_EXPORTS))

__all__ = ["CoastdownResult", "RunReport", "analyze_coastdown", "REFERENCE_STATES",
           "correction_factors", "COMBINES", "METHODS", "CoastdownLog", "read_coastdown_log",
           "coast_speed_ms", "coast_time_s", "plot_coastdown", "road_load_yaml",
           "write_road_load", "write_road_load_yaml", "TwoIntervalEstimate",
           "two_interval_estimate", "CoastdownSettings", "CorrectionSettings", "FitSettings",
           "TestVehicle", "DetectionSettings"]
