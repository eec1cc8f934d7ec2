"""Settings of a coast-down analysis: frozen dataclasses with defaults and checks.

One place holds every option of :func:`~tractive.coastdown.analyze_coastdown`
and checks it when the object is made:

* :class:`TestVehicle` — test mass, its uncertainty, rotating-mass allowance,
  frontal area;
* :class:`~tractive.coastdown.runs.DetectionSettings` — speed window, least
  speed span, longest gap (and the detection thresholds);
* :class:`FitSettings` — method, combination of runs, number of terms,
  smoothing window and the solver tolerances;
* :class:`CorrectionSettings` — reference conditions, test air, rolling
  temperature factor, grade from elevations;
* :class:`CoastdownSettings` — all of the above plus the user's choice of
  runs (``keep``, ``drop``) and the speed column.

:meth:`CoastdownSettings.from_options` builds the whole from the flat keyword
names the command line uses (``mass_kg=1500, combine="pairs"``), so a library
user can write ``analyze_coastdown(logs, mass_kg=1500)``.

Every check raises :class:`~tractive.errors.InputError` with ``field`` set to
the flat option name (``min_span_kmh``), which the command line maps to its
option (``--min-span-kmh``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace

from ..errors import InputError
from ..limits import MAX_MASS_KG
from .corrections import REFERENCES
from .runs import DetectionSettings

METHODS = ("speed-time", "deceleration")
COMBINES = ("joint", "pairs", "none")
#: default rotating-mass allowance (UN GTR No. 15, from memory; SAE J2263 1.03 × mass)
DEFAULT_ROTATING_MASS_FRACTION = 0.03
#: accepted frontal area [m²] (a small car about 2, a coach about 10; 30 leaves room)
FRONTAL_AREA_RANGE_M2 = (0.0, 30.0)
#: accepted test air temperature [°C] (the range of the log column)
AIR_TEMPERATURE_RANGE_C = (-60.0, 60.0, "°C")
#: accepted test (station) air pressure [Pa]: about 9 km altitude to a deep low-lying site
AIR_PRESSURE_RANGE_PA = (30000.0, 110000.0, "Pa")
#: accepted rolling-resistance temperature factor K0 [1/K]: 0 to a bit over twice the
#: UN GTR No. 15 value 8.6e-3/K (from memory); rolling resistance falls as tyres warm
ROLLING_FACTOR_RANGE_PER_K = (0.0, 0.02, "1/K")
#: accepted Savitzky-Golay window [s] of the deceleration method
SMOOTHING_RANGE_S = (0.5, 60.0)


def _finite(x) -> bool:
    try:
        return math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


@dataclass(frozen=True)
class TestVehicle:
    """The vehicle as tested.

    Attributes
    ----------
    mass_kg : float
        Test mass [kg].
    rotating_mass_fraction : float
        Rotating-mass allowance [-]; inertial mass = mass × (1 + fraction).
    mass_std_kg : float
        Standard uncertainty of the test mass [kg].
    frontal_area_m2 : float or None
        Frontal area [m²] for Cd.
    """

    __test__ = False            # not a pytest test class despite the name

    mass_kg: float
    rotating_mass_fraction: float = DEFAULT_ROTATING_MASS_FRACTION
    mass_std_kg: float = 0.0
    frontal_area_m2: float | None = None

    def __post_init__(self):
        m = self.mass_kg
        if not _finite(m) or not (0.0 < m <= MAX_MASS_KG):
            raise InputError(f"must be a plausible vehicle mass in kg, got {m:g}",
                             field="mass_kg")
        f = self.rotating_mass_fraction
        if not (_finite(f) and 0.0 <= f <= 1.0):
            raise InputError(f"must be between 0 and 1, got {f:g}",
                             field="rotating_mass_fraction")
        s = self.mass_std_kg
        if not (_finite(s) and 0.0 <= s < m):
            raise InputError(f"must be at least 0 and below the test mass {m:g} kg, got "
                             f"{s:g}", field="mass_std_kg")
        a = self.frontal_area_m2
        lo, hi = FRONTAL_AREA_RANGE_M2
        if a is not None and not (_finite(a) and lo < a <= hi):
            raise InputError(f"must be between {lo:g} and {hi:g} m², got {a:g}",
                             field="frontal_area_m2")


@dataclass(frozen=True)
class FitSettings:
    """How the runs are fitted.

    Attributes
    ----------
    method : {"speed-time", "deceleration"}
        Fit the speed-time solution to the speeds (default) or regress
        deceleration on speed.
    combine : {"joint", "pairs", "none"}
        All runs jointly with a steady wind and slope term (default), averages
        of opposite-direction pairs, or all runs without direction terms.
    terms : {3, 2}
        Fit f0 + f1·v + f2·v² (3) or f0 + f2·v² (2).
    smoothing_s : float
        Savitzky-Golay window [s] of the deceleration method (and of the start
        values of the speed-time fit).
    xtol, ftol, gtol : float
        Tolerances of ``scipy.optimize.least_squares`` in the speed-time fit
        (relative change of the parameters, of the cost, and the gradient
        measure), each in (0, 1e-2].
    max_nfev_per_parameter : int
        The speed-time fit stops after this many evaluations per parameter.
    """

    method: str = "speed-time"
    combine: str = "joint"
    terms: int = 3
    smoothing_s: float = 5.0
    xtol: float = 1e-10
    ftol: float = 1e-10
    gtol: float = 1e-10
    max_nfev_per_parameter: int = 100

    def __post_init__(self):
        if self.method not in METHODS:
            raise InputError(f"unknown method '{self.method}'; use {' or '.join(METHODS)}",
                             field="method")
        if self.combine not in COMBINES:
            raise InputError(f"unknown combine '{self.combine}'; use {', '.join(COMBINES)}",
                             field="combine")
        if isinstance(self.terms, str):
            terms = int(self.terms) if self.terms.strip() in ("2", "3") else None
        else:
            terms = int(self.terms) if self.terms in (2, 3) else None
        if terms is None:
            raise InputError(f"terms must be 2 or 3, got {self.terms}", field="terms")
        object.__setattr__(self, "terms", terms)
        lo, hi = SMOOTHING_RANGE_S
        if not (_finite(self.smoothing_s) and lo <= self.smoothing_s <= hi):
            raise InputError(f"must be between {lo:g} and {hi:g} s, got {self.smoothing_s:g}",
                             field="smoothing_s")
        for name in ("xtol", "ftol", "gtol"):
            v = getattr(self, name)
            if not (_finite(v) and 0.0 < v <= 1e-2):
                raise InputError(f"must be above 0 and at most 0.01, got {v:g}", field=name)
        n = self.max_nfev_per_parameter
        if not (isinstance(n, int) and 1 <= n <= 10000):
            raise InputError(f"must be a whole number from 1 to 10000, got {n}",
                             field="max_nfev_per_parameter")


@dataclass(frozen=True)
class CorrectionSettings:
    """Reference conditions and the test conditions they are corrected from.

    Attributes
    ----------
    reference : {"gtr15", "j2263", "none"}
        Reference conditions to correct to (see :mod:`.corrections`).
    air_temperature_c, air_pressure_pa : float or None
        Test air temperature [°C] and (station) pressure [Pa] for logs without
        those columns.
    rolling_factor_per_k : float or None
        Rolling-resistance temperature factor K0 [1/K] overriding the standard's.
    grade_from_elevation : bool
        Remove each run's mean grade from its ``elevation_m`` column.
    """

    reference: str = "gtr15"
    air_temperature_c: float | None = None
    air_pressure_pa: float | None = None
    rolling_factor_per_k: float | None = None
    grade_from_elevation: bool = False

    def __post_init__(self):
        if self.reference not in REFERENCES:
            raise InputError(f"unknown reference '{self.reference}'; use "
                             f"{', '.join(REFERENCES)}", field="reference")
        for name, (low, high, unit) in (
                ("air_temperature_c", AIR_TEMPERATURE_RANGE_C),
                ("air_pressure_pa", AIR_PRESSURE_RANGE_PA),
                ("rolling_factor_per_k", ROLLING_FACTOR_RANGE_PER_K)):
            value = getattr(self, name)
            if value is not None and not (_finite(value) and low <= value <= high):
                raise InputError(f"must be between {low:g} and {high:g} {unit}, got "
                                 f"{value:g}", field=name)


#: flat option name → group of :class:`CoastdownSettings` that holds it
_GROUPS = {"vehicle": TestVehicle, "detection": DetectionSettings, "fit": FitSettings,
           "corrections": CorrectionSettings}
_TOP = ("keep", "drop", "speed_column")


def _owner(name: str) -> str:
    for group, cls in _GROUPS.items():
        if name in {f.name for f in fields(cls)}:
            return group
    if name in _TOP:
        return ""
    raise TypeError(f"unknown coast-down option '{name}'")


@dataclass(frozen=True)
class CoastdownSettings:
    """Every setting of a coast-down analysis (see the module docstring).

    Attributes
    ----------
    vehicle : TestVehicle
    detection : DetectionSettings
    fit : FitSettings
    corrections : CorrectionSettings
    keep, drop : tuple of int
        Run numbers to use despite a rejection, or to leave out.
    speed_column : str or None
        Speed column to read when a CSV has several.
    """

    vehicle: TestVehicle
    detection: DetectionSettings = field(default_factory=DetectionSettings)
    fit: FitSettings = field(default_factory=FitSettings)
    corrections: CorrectionSettings = field(default_factory=CorrectionSettings)
    keep: tuple = ()
    drop: tuple = ()
    speed_column: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "keep", tuple(int(x) for x in (self.keep or ())))
        object.__setattr__(self, "drop", tuple(int(x) for x in (self.drop or ())))

    @classmethod
    def from_options(cls, **options) -> "CoastdownSettings":
        """Settings from flat option names (``mass_kg``, ``combine``, ``max_gap_s`` ...);
        ``mass_kg`` is required, everything else has its default."""
        if "mass_kg" not in options:
            raise TypeError("the test mass mass_kg is required")
        by_group = {g: {} for g in _GROUPS}
        top = {}
        for name, value in options.items():
            group = _owner(name)
            (by_group[group] if group else top)[name] = value
        if "speed_window_kmh" in by_group["detection"]:
            by_group["detection"]["speed_window_kmh"] = tuple(
                by_group["detection"]["speed_window_kmh"])
        built = {g: _GROUPS[g](**kw) for g, kw in by_group.items()}
        return cls(**built, **top)

    def with_options(self, **options) -> "CoastdownSettings":
        """A copy with some flat options changed (checked as when made)."""
        by_group = {}
        top = {}
        for name, value in options.items():
            group = _owner(name)
            if group:
                by_group.setdefault(group, {})[name] = value
            else:
                top[name] = value
        changed = {g: replace(getattr(self, g), **kw) for g, kw in by_group.items()}
        return replace(self, **changed, **top)

    def options(self) -> dict:
        """The flat option names and values (the inverse of :meth:`from_options`)."""
        out = {}
        for group in _GROUPS:
            obj = getattr(self, group)
            out.update({f.name: getattr(obj, f.name) for f in fields(obj)})
        out.update({name: getattr(self, name) for name in _TOP})
        return out
