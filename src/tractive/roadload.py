"""Road load: the level-road resistance of a vehicle as a function of speed.

Three published ways of stating the same force are supported, and conversions
between them are exact (linear maps with exact unit factors):

* **Coast-down coefficients** (UN GTR No. 15, Annex 4):
  F = f0 + f1·v + f2·v², with f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²].
* **Dynamometer target coefficients** (40 CFR Part 1066, Subpart D):
  F = A + B·V + C·V², with A [lbf], B [lbf/mph], C [lbf/mph²].
* **Physical parameters**: rolling resistance plus aerodynamic drag,

  F = Crr·m·g + k·m·g·v_kmh + Crr·½ρ·ClA·v² + ½ρ·CdA·v²

  with rolling-resistance coefficient Crr [-], its optional speed slope
  k [1/(km/h)], downforce area ClA [m²] (downforce adds to the wheel load and
  so to rolling resistance; the downforce load is taken at the constant Crr),
  drag area CdA [m²] and air density ρ [kg/m³]. This is the classical
  road-load equation (Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992,
  ch. 4; Wong, *Theory of Ground Vehicles*, ch. 1 and 3).

Inside, a :class:`RoadLoad` keeps SI coefficients (N, N/(m/s), N/(m/s)²) with
the v² term split into its aerodynamic part and the rolling part caused by
downforce, so that wheel energy can be attributed to "rolling" and "aero".
For coefficient input (coast-down or dynamometer) the convention is:
f0 + f1·v is rolling, f2·v² is aero.

The road-load force is for a level road: on a grade the rolling term is not
reduced by cos(θ) (below 0.5 % of rolling force up to 10 % grade); the grade
force m·g·sin(θ) is added separately (see :mod:`tractive.demand`).

Every coefficient may be a numpy array (a leading vehicle axis), so one
RoadLoad can describe N vehicles for a sweep or a Monte Carlo draw.

References
----------
.. [1] UN GTR No. 15 (WLTP), Annex 4, road load and dynamometer setting.
.. [2] 40 CFR 1066.305 / 1066.310, road-load coefficients A, B, C.
.. [3] NIST SP 811, Appendix B: 1 lbf = 4.4482216152605 N, 1 mph = 0.44704 m/s.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .plain import plain_number
from .units import KMH_MS, LBF_N, MPH_MS, STANDARD_GRAVITY_MS2

#: frontal area ≈ factor × overall width × overall height (common practice for
#: passenger cars, 0.80-0.85; some practitioners use 0.9)
DEFAULT_FRONTAL_AREA_FACTOR = 0.84

# exact unit factors between coefficient systems
_F1_KMH_TO_MS = 1.0 / KMH_MS            # N/(km/h) → N/(m/s): ×3.6
_F2_KMH_TO_MS = 1.0 / KMH_MS ** 2       # N/(km/h)² → N/(m/s)²: ×12.96
_B_MPH_TO_MS = LBF_N / MPH_MS           # lbf/mph → N/(m/s)
_C_MPH_TO_MS = LBF_N / MPH_MS ** 2      # lbf/mph² → N/(m/s)²


@dataclass(frozen=True)
class RoadLoad:
    """Level-road resistance F(v) = f0 + f1·v + (f2_aero + f2_rolling)·v² in SI.

    Parameters
    ----------
    f0_n : float or array
        Constant term [N] (rolling).
    f1_n_per_ms : float or array
        Linear term [N/(m/s)] (rolling).
    f2_aero_n_per_ms2 : float or array
        Aerodynamic drag term [N/(m/s)²]; ½·ρ·CdA for physical input.
    f2_rolling_n_per_ms2 : float or array
        Rolling resistance caused by downforce [N/(m/s)²]; Crr·½·ρ·ClA.
    """

    f0_n: np.ndarray | float
    f1_n_per_ms: np.ndarray | float = 0.0
    f2_aero_n_per_ms2: np.ndarray | float = 0.0
    f2_rolling_n_per_ms2: np.ndarray | float = 0.0

    # -- constructors -----------------------------------------------------
    @classmethod
    def from_coastdown(cls, f0_n, f1_n_per_kmh, f2_n_per_kmh2) -> "RoadLoad":
        """From UN GTR No. 15 coefficients f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²]."""
        return cls(np.asarray(f0_n, float) * 1.0,
                   np.asarray(f1_n_per_kmh, float) * _F1_KMH_TO_MS,
                   np.asarray(f2_n_per_kmh2, float) * _F2_KMH_TO_MS)

    @classmethod
    def from_dyno(cls, a_lbf, b_lbf_per_mph, c_lbf_per_mph2) -> "RoadLoad":
        """From 40 CFR 1066 target coefficients A [lbf], B [lbf/mph], C [lbf/mph²]."""
        return cls(np.asarray(a_lbf, float) * LBF_N,
                   np.asarray(b_lbf_per_mph, float) * _B_MPH_TO_MS,
                   np.asarray(c_lbf_per_mph2, float) * _C_MPH_TO_MS)

    @classmethod
    def from_physical(cls, *, mass_kg, crr, cda_m2, air_density_kg_m3,
                      crr_per_kmh=0.0, cla_m2=0.0) -> "RoadLoad":
        """From physical parameters (classical road-load equation).

        Parameters
        ----------
        mass_kg : float or array
            Vehicle test mass [kg] carried by the tyres.
        crr : float or array
            Rolling-resistance coefficient [-] (force / wheel load).
        cda_m2 : float or array
            Drag area Cd × frontal area [m²].
        air_density_kg_m3 : float or array
            Air density [kg/m³].
        crr_per_kmh : float or array
            Increase of the rolling coefficient per km/h [1/(km/h)], applied to
            the static load m·g.
        cla_m2 : float or array
            Downforce area Cl × reference area [m²], positive for downforce.
        """
        weight_n = np.asarray(mass_kg, float) * STANDARD_GRAVITY_MS2
        q_per_v2 = 0.5 * np.asarray(air_density_kg_m3, float)
        crr = np.asarray(crr, float)
        return cls(crr * weight_n,
                   np.asarray(crr_per_kmh, float) * weight_n * _F1_KMH_TO_MS,
                   q_per_v2 * np.asarray(cda_m2, float),
                   crr * q_per_v2 * np.asarray(cla_m2, float))

    # -- views --------------------------------------------------------------
    @property
    def f2_n_per_ms2(self):
        """Whole v² coefficient [N/(m/s)²] (aero plus downforce rolling)."""
        return np.asarray(self.f2_aero_n_per_ms2) + np.asarray(self.f2_rolling_n_per_ms2)

    def coastdown_coefficients(self) -> dict:
        """f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²] (UN GTR No. 15 form)."""
        return {"f0_n": plain_number(self.f0_n),
                "f1_n_per_kmh": plain_number(np.asarray(self.f1_n_per_ms) / _F1_KMH_TO_MS),
                "f2_n_per_kmh2": plain_number(self.f2_n_per_ms2 / _F2_KMH_TO_MS)}

    def dyno_coefficients(self) -> dict:
        """A [lbf], B [lbf/mph], C [lbf/mph²] (40 CFR 1066 form)."""
        return {"a_lbf": plain_number(np.asarray(self.f0_n) / LBF_N),
                "b_lbf_per_mph": plain_number(np.asarray(self.f1_n_per_ms) / _B_MPH_TO_MS),
                "c_lbf_per_mph2": plain_number(self.f2_n_per_ms2 / _C_MPH_TO_MS)}

    # -- forces -------------------------------------------------------------
    def rolling_force_n(self, speed_ms):
        """Rolling part of the road load [N] at speed [m/s] (f0 + f1·v + f2_rolling·v²)."""
        v = np.asarray(speed_ms, float)
        return _col(self.f0_n) + _col(self.f1_n_per_ms) * v + _col(self.f2_rolling_n_per_ms2) * v * v

    def aero_force_n(self, speed_ms):
        """Aerodynamic part of the road load [N] at speed [m/s] (f2_aero·v²)."""
        v = np.asarray(speed_ms, float)
        return _col(self.f2_aero_n_per_ms2) * v * v

    def force_n(self, speed_ms):
        """Total level-road resistance [N] at speed [m/s].

        Coefficients with a leading vehicle axis of shape (N,) broadcast against
        a speed array of shape (T,) to (N, T).
        """
        return self.rolling_force_n(speed_ms) + self.aero_force_n(speed_ms)

    def power_w(self, speed_ms):
        """Road-load power [W] = F(v)·v at steady speed [m/s]."""
        return self.force_n(speed_ms) * np.asarray(speed_ms, float)


def _col(x):
    """Give a vehicle-axis coefficient a trailing axis so it broadcasts over time."""
    x = np.asarray(x, float)
    return x[..., None] if x.ndim >= 1 else x




# ---------------------------------------------------------------------------
# Road-load forms as the user wrote them (kept for echo and for modifications)
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class PhysicalRoadLoad:
    """Road load from physical parameters (see module docstring).

    Attributes carry their units; ``air_basis`` says how the density was found
    and ``cda_basis`` how the drag area was found.
    """

    cda_m2: float
    crr: float
    air_density_kg_m3: float
    crr_per_kmh: float = 0.0
    cla_m2: float = 0.0
    air_basis: str = ""
    cda_basis: str = ""
    std: dict = field(default_factory=dict)

    form = "physical"

    def resolve(self, mass_kg) -> RoadLoad:
        return RoadLoad.from_physical(mass_kg=mass_kg, crr=self.crr, cda_m2=self.cda_m2,
                                      air_density_kg_m3=self.air_density_kg_m3,
                                      crr_per_kmh=self.crr_per_kmh, cla_m2=self.cla_m2)

    def to_dict(self) -> dict:
        out = {"form": self.form, "cda_m2": self.cda_m2, "crr": self.crr,
               "crr_per_kmh": self.crr_per_kmh, "cla_m2": self.cla_m2,
               "air_density_kg_m3": self.air_density_kg_m3, "air_basis": self.air_basis,
               "cda_basis": self.cda_basis}
        out.update({k: v for k, v in self.std.items()})
        return out


@dataclass(frozen=True)
class CoefficientRoadLoad:
    """Road load given as measured coefficients, stored in GTR 15 units.

    Attributes
    ----------
    f0_n, f1_n_per_kmh, f2_n_per_kmh2 : float
        Coefficients [N], [N/(km/h)], [N/(km/h)²].
    form : str
        ``"coastdown"`` (given as f0/f1/f2) or ``"dyno"`` (given as A/B/C).
    given : dict
        The values exactly as written, with their keys.
    covariance : numpy.ndarray or None
        3×3 covariance of (f0, f1, f2) in [N², N²/(km/h), ...] GTR 15 units.
    reference_air_density_kg_m3 : float or None
        Air density [kg/m³] at which the coefficients hold (the reference state
        they were corrected to); None when not stated.
    """

    f0_n: float
    f1_n_per_kmh: float
    f2_n_per_kmh2: float
    form: str = "coastdown"
    given: dict = field(default_factory=dict)
    covariance: np.ndarray | None = None
    reference_air_density_kg_m3: float | None = None

    def resolve(self, mass_kg=None) -> RoadLoad:
        return RoadLoad.from_coastdown(self.f0_n, self.f1_n_per_kmh, self.f2_n_per_kmh2)

    def to_dict(self) -> dict:
        out = {"form": self.form, "f0_n": self.f0_n, "f1_n_per_kmh": self.f1_n_per_kmh,
               "f2_n_per_kmh2": self.f2_n_per_kmh2}
        if self.form == "dyno":
            out.update(self.given)
        if self.covariance is not None:
            out["covariance"] = np.asarray(self.covariance).tolist()
        if self.reference_air_density_kg_m3 is not None:
            out["reference_air_density_kg_m3"] = self.reference_air_density_kg_m3
        return out


def frontal_area_m2(width_m, height_m, factor=DEFAULT_FRONTAL_AREA_FACTOR):
    """Frontal area [m²] ≈ factor × width [m] × height [m] (common practice)."""
    return factor * np.asarray(width_m, float) * np.asarray(height_m, float)
