"""tractive: what a vehicle modification costs or saves.

The library computes road load, wheel energy over drive cycles and user speed
profiles, fuel or battery use, range and performance, compares a baseline
vehicle with its modifications, and fits road load to coast-down logs. The
``tractive`` command is a thin layer over :mod:`tractive.api`, whose
functions are exported here::

    import tractive
    report = tractive.energy("van.yaml", ["udds", "hwfet"])
    study = tractive.compare("study.yaml", draws=2000)

Names are imported on first use, so ``import tractive`` stays light. The api
functions named like a subpackage (``performance``, ``lap``, ``fleet``,
``coastdown``) are reached as ``tractive.api.performance`` and so on, since
``tractive.performance`` is the module.
"""

__version__ = "0.1.0"

#: public name → module that defines it (imported on first use)
_EXPORTS = {
    "cycles": "api", "energy": "api", "energy_mix": "api",
    "range_curve": "api", "compare": "api", "coastdown_quick": "api",
    "load_vehicle": "api", "load_profiles": "api", "write_study_outputs": "api",
    "InputError": "errors", "Vehicle": "vehicle", "Profile": "profiles",
    "resolve_profile": "profiles", "RoadLoad": "roadload", "wheel_demand": "demand",
    "StudyResult": "study.results", "METRICS": "metrics", "Metric": "metrics",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name):
    """Import an exported name from its module on first use."""
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'tractive' has no attribute '{name}'")
    import importlib

    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value
    return value
