"""Applying modifications to a vehicle: absolute, relative and percent changes.

A vehicle is turned into a flat set of *parameters* (arrays with a leading
vehicle axis, so one set can hold a Monte Carlo sample), each belonging to one
*group* that attribution splits by:

========== =====================================================================
group      parameters
========== =====================================================================
aero       ``cda_m2`` and the air density (physical road load); ``f2_n_per_kmh2``
           and drag-area changes (measured coefficients)
rolling    ``crr``, ``crr_per_kmh`` (physical); ``f0_n``, ``f1_n_per_kmh`` and
           rolling-resistance changes (measured coefficients)
mass       ``mass_kg``, ``rotating_mass_fraction``
downforce  ``cla_m2``
powertrain any ``powertrain.<key>`` or ``performance.<key>``; a different
           powertrain block in a whole-vehicle replacement
========== =====================================================================

Physical road load (``cda_m2``, ``crr``, ...): a change acts on the parameter
itself, and the road-load equation does the rest (mass changes the rolling
force Crr·m·g and the inertia; downforce adds Crr·½ρ·ClA·v²). A tyre's
rolling coefficient changes as a whole (common practice): a percentage of
``crr`` multiplies ``crr_per_kmh`` too, and a new tyre's Crr (an absolute
``crr`` or a ``tyre_label``) scales ``crr_per_kmh`` by Crr_new / Crr_before; a
signed amount on ``crr`` adds to the constant part only.

Measured coefficients (``f0_n``/``f1_n_per_kmh``/``f2_n_per_kmh2``, or A/B/C
converted to them) carry no Crr or CdA, so physical changes follow these
rules (common practice: the rolling part of a coast-down load is taken to be
f0 + f1·v, the aerodynamic part f2·v²):

* the coefficients hold at a reference air density ρ_ref: the road load's
  ``reference_air_density_kg_m3`` when stated (a coast-down result states
  the reference it was corrected to), else the reference state of the
  standard of the form they are written in: f0/f1/f2 at UN GTR No. 15
  (293 K, 100 kPa, 1.1890 kg/m³; from memory), A/B/C at SAE J2263 /
  40 CFR 1066.805 (20 °C, 98.21 kPa, 1.1671 kg/m³);
* the air of the study, ρ (its ambient block, else ρ_ref), scales the
  measured aerodynamic term: f2 → f2 · ρ / ρ_ref;
* ``cda_m2: +Δ`` adds ½·ρ·Δ to f2 (the same air);
* ``crr: -15%`` multiplies the rolling part f0 and f1 by 0.85;
* ``crr: +Δ`` adds Δ·m·g to f0 (``crr_per_kmh: +Δ`` adds Δ·m·g to f1);
* ``mass_kg`` changes scale f0 and f1 by m_new / m_baseline, since rolling
  force is proportional to wheel load;
* an absolute ``crr`` or ``cda_m2``, and any ``cla_m2`` change, need the
  physical form (the measured coefficients do not say how much of f0 is tyre
  and how much is driveline drag, nor the drag area) and are refused.

Order: the changes of one variant apply in the order written (for a
combination: the modifications in the order listed, each in its own order).
An absolute value replaces, a signed amount adds, a percentage multiplies.
An absolute mass, CdA or Crr written in the short form that moves the value
by more than 50 % gets a warning (:func:`absolute_change_note`): it is
likely a forgotten sign.

Tyre-label input (``tyre_label: C2/B``): the class tables and the Crr a
class stands for live in :mod:`tractive.study.tyres`; a label sets Crr to the
class middle and the Monte Carlo draws it uniformly over the class.

References
----------
.. [1] UN GTR No. 15, Annex 4 (road load as f0 + f1·v + f2·v²; reference
   state for the aerodynamic term).
.. [2] Regulation (EC) No 1222/2009 on the labelling of tyres, Annex I Part A.
.. [3] Regulation (EU) 2020/740 on the labelling of tyres, Annex I Part A.
.. [4] JCGM 100:2008, Evaluation of measurement data - Guide to the
   expression of uncertainty in measurement, 4.3.7.
.. [5] JCGM 101:2008, Supplement 1 to the GUM - Propagation of
   distributions using a Monte Carlo method, 6.4.2 (rectangular
   distribution).
.. [6] SAE J2263; 40 CFR 1066.805 (road-load reference state).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..atmosphere import REFERENCE_STATES
from ..demand import inertial_mass_kg
from ..errors import InputError
from ..limits import MAX_MASS_KG
from ..roadload import CoefficientRoadLoad, PhysicalRoadLoad, RoadLoad
from ..units import KMH_MS, STANDARD_GRAVITY_MS2
from ..plain import plain
from ..powertrain.base import changeable, check_value, current_value, field_of, with_value
from ..vehicle import Vehicle
from .tyres import (DEFAULT_TYRE_REGULATION, TYRE_CLASS_UPPER_KG_T,  # noqa: F401 (re-exported)
                    TYRE_REGULATIONS, TyreLabel, parse_tyre_label, tyre_class_interval_kg_t,
                    tyre_label_crr, tyre_label_note)

GROUPS = ("aero", "rolling", "mass", "downforce", "powertrain")

PHYSICAL = "physical"
COEFFICIENT = "coefficient"

#: parameter → group, physical road load
PHYSICAL_PARAMS = {"mass_kg": "mass", "rotating_mass_fraction": "mass",
                   "cda_m2": "aero", "air_density_kg_m3": "aero",
                   "crr": "rolling", "crr_per_kmh": "rolling", "cla_m2": "downforce"}
#: parameter → group, measured coefficients (mass_base_kg never changes)
COEFFICIENT_PARAMS = {"mass_kg": "mass", "rotating_mass_fraction": "mass",
                      "mass_base_kg": None,
                      "f0_n": "rolling", "f1_n_per_kmh": "rolling", "rolling_scale": "rolling",
                      "crr_add": "rolling", "crr_per_kmh_add": "rolling",
                      "f2_n_per_kmh2": "aero", "cda_add_m2": "aero",
                      "air_density_kg_m3": "aero", "reference_air_density_kg_m3": "aero"}

#: keys a change may target, per road-load form
TARGETS_PHYSICAL = ("mass_kg", "rotating_mass_fraction", "cda_m2", "crr", "crr_per_kmh",
                    "cla_m2", "tyre_label")
TARGETS_COEFFICIENT = ("mass_kg", "rotating_mass_fraction", "f0_n", "f1_n_per_kmh",
                       "f2_n_per_kmh2", "cda_m2", "crr", "crr_per_kmh")

#: plausible ranges of changed values (a change outside is a mistake)
_LIMITS = {"mass_kg": (1e-6, MAX_MASS_KG), "rotating_mass_fraction": (0.0, 1.0),
           "cda_m2": (1e-6, 30.0), "crr": (0.0, 0.1), "crr_per_kmh": (0.0, 1e-3),
           "cla_m2": (-5.0, 20.0), "f0_n": (0.0, 1e6), "f2_n_per_kmh2": (1e-9, 1e3)}


# ---------------------------------------------------------------------------
# parameter sets
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class ParamSet:
    """A vehicle as flat parameters with a leading vehicle axis.

    Attributes
    ----------
    form : str
        ``"physical"`` or ``"coefficient"``.
    params : dict of str → (N,) arrays
        See :data:`PHYSICAL_PARAMS` / :data:`COEFFICIENT_PARAMS`.
    powertrain, performance : objects or None
        Parsed blocks (not varied by Monte Carlo).
    template : Vehicle
        The vehicle the set came from (name, source).
    pt_values : dict of str → (N,) arrays
        Powertrain keys that carry a standard uncertainty (see
        :data:`POWERTRAIN_UNCERTAIN`): the value of each vehicle, in the key's
        unit; index 0 is the nominal value of the parsed block.
    """

    form: str
    params: dict
    powertrain: Any
    performance: Any
    template: Vehicle
    pt_values: dict = field(default_factory=dict)

    @property
    def size(self) -> int:
        return int(np.shape(next(iter(self.params.values())))[0])

    def group_of(self, name: str):
        table = PHYSICAL_PARAMS if self.form == PHYSICAL else COEFFICIENT_PARAMS
        return table[name]

    def take(self, index) -> "ParamSet":
        """The subset along the vehicle axis (an index array or slice)."""
        return replace(self, params={k: np.asarray(v)[index] for k, v in self.params.items()},
                       pt_values={k: np.asarray(v)[index] for k, v in self.pt_values.items()})

    def effective_powertrain(self, index: int | None = None):
        """The powertrain with its uncertain keys set per vehicle.

        Parameters
        ----------
        index : int, optional
            One vehicle of the set (scalar parameters); None for (N,) arrays.
        """
        if self.powertrain is None or not self.pt_values:
            return self.powertrain
        values = self.pt_values if index is None else \
            {k: float(np.asarray(v)[index]) for k, v in self.pt_values.items()}
        return powertrain_with(self.powertrain, values)

    # -- physics views ------------------------------------------------------
    def mass_kg(self):
        return self.params["mass_kg"]

    def inertial_mass_kg(self):
        return inertial_mass_kg(self.params["mass_kg"], self.params["rotating_mass_fraction"])

    def coefficients(self):
        """Effective f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²] of a coefficient set.

        f2 = f2_measured · ρ / ρ_ref + ½ · ρ · ΔCdA (in N/(km/h)²), ρ being the
        air of the study and ρ_ref the reference density of the measured
        coefficients (see the module docstring).
        """
        p = self.params
        ratio = p["mass_kg"] / p["mass_base_kg"]
        weight = p["mass_kg"] * STANDARD_GRAVITY_MS2
        f0 = p["f0_n"] * ratio * p["rolling_scale"] + p["crr_add"] * weight
        f1 = p["f1_n_per_kmh"] * ratio * p["rolling_scale"] + p["crr_per_kmh_add"] * weight
        rho = p["air_density_kg_m3"]
        f2 = p["f2_n_per_kmh2"] * (rho / p["reference_air_density_kg_m3"]) \
            + 0.5 * rho * p["cda_add_m2"] * KMH_MS ** 2
        return f0, f1, f2

    def road_load(self) -> RoadLoad:
        """Level-road resistance in SI coefficients, arrays of shape (N,)."""
        p = self.params
        if self.form == PHYSICAL:
            return RoadLoad.from_physical(mass_kg=p["mass_kg"], crr=p["crr"], cda_m2=p["cda_m2"],
                                          air_density_kg_m3=p["air_density_kg_m3"],
                                          crr_per_kmh=p["crr_per_kmh"], cla_m2=p["cla_m2"])
        f0, f1, f2 = self.coefficients()
        return RoadLoad.from_coastdown(f0, f1, f2)

    def vehicle(self, index: int | None = None) -> Vehicle:
        """A :class:`Vehicle`: scalar at ``index``, or with array fields (vehicle axis).

        With ``index=None`` every numeric field (mass, road load, uncertain
        powertrain keys) is an (N,) array, as the vectorized models take it; its
        road load resolves to exactly :meth:`road_load`.
        """
        p = self.params if index is None else {k: float(np.asarray(v)[index])
                                               for k, v in self.params.items()}
        tpl = self.template
        if index is not None:
            if self.form == PHYSICAL:
                base_rl = tpl.road_load if isinstance(tpl.road_load, PhysicalRoadLoad) else \
                    PhysicalRoadLoad(cda_m2=p["cda_m2"], crr=p["crr"],
                                     air_density_kg_m3=p["air_density_kg_m3"])
                rl = replace(base_rl, cda_m2=p["cda_m2"], crr=p["crr"],
                             crr_per_kmh=p["crr_per_kmh"], cla_m2=p["cla_m2"],
                             air_density_kg_m3=p["air_density_kg_m3"])
            else:
                f0, f1, f2 = self.take([index]).coefficients()
                rl = CoefficientRoadLoad(float(f0[0]), float(f1[0]), float(f2[0]),
                                         form="coastdown",
                                         reference_air_density_kg_m3=p["air_density_kg_m3"])
        elif self.form == PHYSICAL:
            rl = PhysicalRoadLoad(cda_m2=p["cda_m2"], crr=p["crr"],
                                  air_density_kg_m3=p["air_density_kg_m3"],
                                  crr_per_kmh=p["crr_per_kmh"], cla_m2=p["cla_m2"])
        else:
            f0, f1, f2 = self.coefficients()
            rl = CoefficientRoadLoad(f0, f1, f2, form="coastdown",
                                     reference_air_density_kg_m3=p["air_density_kg_m3"])
        return replace(tpl, mass_kg=p["mass_kg"], rotating_mass_fraction=p["rotating_mass_fraction"],
                       road_load=rl, powertrain=self.effective_powertrain(index),
                       performance=self.performance)


def gtr15_air_density_kg_m3() -> float:
    """Dry-air density [kg/m³] at the UN GTR No. 15 reference state (293 K, 100 kPa)."""
    return REFERENCE_STATES["gtr15"].air_density_kg_m3


def j2263_air_density_kg_m3() -> float:
    """Dry-air density [kg/m³] at the SAE J2263 reference state (20 °C, 98.21 kPa)."""
    return REFERENCE_STATES["j2263"].air_density_kg_m3


def reference_air_density(rl) -> tuple:
    """Air density [kg/m³] at which measured coefficients hold, and where it comes from.

    The road-load block's ``reference_air_density_kg_m3`` when given (a
    coast-down result states the reference it was corrected to); otherwise the
    reference state of the standard whose form the coefficients are written
    in: f0/f1/f2 (UN GTR No. 15 form) at the GTR 15 reference 20 °C (293 K),
    100 kPa, 1.1890 kg/m³; A/B/C (40 CFR 1066 form) at the SAE J2263 /
    40 CFR 1066.805 reference 20 °C, 98.21 kPa, 1.1671 kg/m³.
    """
    given = getattr(rl, "reference_air_density_kg_m3", None)
    if given is not None:
        return float(given), "reference_air_density_kg_m3 of the road load"
    if getattr(rl, "form", "") == "dyno":
        return j2263_air_density_kg_m3(), ("SAE J2263 reference state 20 °C, 98.21 kPa "
                                           "(A/B/C coefficients, none stated)")
    return gtr15_air_density_kg_m3(), ("UN GTR No. 15 reference state 293 K, 100 kPa "
                                       "(f0/f1/f2 coefficients, none stated)")


def nominal_params(vehicle: Vehicle, raw: dict | None = None, *,
                   air_density_kg_m3: float | None) -> tuple:
    """Parameters of a vehicle (vehicle axis of length 1) and their uncertainties.

    Parameters
    ----------
    vehicle : Vehicle
    raw : dict, optional
        Not used: changes act on the parsed blocks (accepted for older callers).
    air_density_kg_m3 : float or None
        Study air density [kg/m³]; None keeps the vehicle file's own air (a
        physical road load) or the reference density of measured coefficients
        (see :func:`reference_air_density`).

    Returns
    -------
    (ParamSet, stds, covariance)
        ``stds`` maps parameter → standard uncertainty; ``covariance`` is the
        3×3 covariance of (f0, f1, f2) or None.
    """
    rl = vehicle.road_load
    one = lambda x: np.array([float(x)])  # noqa: E731
    stds = {}
    cov = None
    if vehicle.extras.get("mass_std_kg"):
        stds["mass_kg"] = float(vehicle.extras["mass_std_kg"])
    if isinstance(rl, PhysicalRoadLoad):
        rho = rl.air_density_kg_m3 if air_density_kg_m3 is None else air_density_kg_m3
        params = {"mass_kg": one(vehicle.mass_kg),
                  "rotating_mass_fraction": one(vehicle.rotating_mass_fraction),
                  "cda_m2": one(rl.cda_m2), "air_density_kg_m3": one(rho),
                  "crr": one(rl.crr), "crr_per_kmh": one(rl.crr_per_kmh),
                  "cla_m2": one(rl.cla_m2)}
        for key, param in (("crr_std", "crr"), ("cda_std_m2", "cda_m2"),
                           ("cla_std_m2", "cla_m2")):
            if rl.std.get(key):
                stds[param] = float(rl.std[key])
        form = PHYSICAL
    elif isinstance(rl, CoefficientRoadLoad):
        rho_ref, _ = reference_air_density(rl)
        rho = rho_ref if air_density_kg_m3 is None else air_density_kg_m3
        params = {"mass_kg": one(vehicle.mass_kg), "mass_base_kg": one(vehicle.mass_kg),
                  "rotating_mass_fraction": one(vehicle.rotating_mass_fraction),
                  "f0_n": one(rl.f0_n), "f1_n_per_kmh": one(rl.f1_n_per_kmh),
                  "f2_n_per_kmh2": one(rl.f2_n_per_kmh2), "rolling_scale": one(1.0),
                  "crr_add": one(0.0), "crr_per_kmh_add": one(0.0), "cda_add_m2": one(0.0),
                  "air_density_kg_m3": one(rho), "reference_air_density_kg_m3": one(rho_ref)}
        if rl.covariance is not None:
            cov = np.asarray(rl.covariance, float)
        form = COEFFICIENT
    else:
        raise InputError("this road-load form cannot be used in a study", file=vehicle.source,
                         field="road_load")
    return (ParamSet(form, params, vehicle.powertrain, vehicle.performance, vehicle),
            stds, cov)


def change_group(ps: ParamSet, change) -> str:
    """The attribution group a change acts on (checks the target exists)."""
    key = change.key
    if key.startswith("powertrain.") or key.startswith("performance."):
        return "powertrain"
    targets = TARGETS_PHYSICAL if ps.form == PHYSICAL else TARGETS_COEFFICIENT
    if key not in targets:
        other = TARGETS_COEFFICIENT if ps.form == PHYSICAL else TARGETS_PHYSICAL
        form_text = ("physical road load (cda_m2, crr)" if ps.form == PHYSICAL
                     else "measured road-load coefficients (f0/f1/f2)")
        if key in other:
            raise change.error(f"the vehicle has {form_text}; '{key}' cannot be changed on it")
        raise change.error(f"no such key to change; possible: {', '.join(targets)}, "
                           f"powertrain.<key>, performance.<key>")
    if key == "tyre_label":
        return "rolling"
    if ps.form == PHYSICAL:
        return PHYSICAL_PARAMS[key]
    return {"mass_kg": "mass", "rotating_mass_fraction": "mass", "f0_n": "rolling",
            "f1_n_per_kmh": "rolling", "crr": "rolling", "crr_per_kmh": "rolling",
            "f2_n_per_kmh2": "aero", "cda_m2": "aero"}[key]


def apply_change(ps: ParamSet, change, z=None) -> ParamSet:
    """Apply one change to every vehicle of a parameter set.

    Parameters
    ----------
    ps : ParamSet
    change : tractive.study.spec.Change
    z : (N,) array, optional
        Standard-normal draws for the change's own uncertainty (0 at nominal).

    Returns
    -------
    ParamSet with the change applied.
    """
    change_group(ps, change)
    key = change.key
    if key.startswith("powertrain.") or key.startswith("performance."):
        return _apply_block_change(ps, change, z)
    p = dict(ps.params)
    noise = 0.0 if (z is None or not change.std) else change.std * np.asarray(z, float)
    mode, value = change.mode, change.value
    if key == "tyre_label":
        return replace(ps, params=_set_tyre_crr(p, _label_crr(p["crr"], change, z)))
    if ps.form == PHYSICAL and key == "crr" and mode in ("set", "scale"):
        # a new tyre (an absolute Crr) or a percent change scales the tyre's rolling
        # coefficient as a whole: the speed slope crr_per_kmh with it
        crr_new = _operate(p["crr"], mode, value) + noise
        lo, hi = _LIMITS["crr"]
        nominal = float(np.asarray(crr_new)[0])
        if not (lo <= nominal <= hi):
            raise change.error(f"gives crr = {nominal:g}, outside {lo:g} to {hi:g}")
        if mode == "scale":
            p["crr_per_kmh"] = np.asarray(p["crr_per_kmh"], float) * float(value)
            p["crr"] = crr_new
            return replace(ps, params=p)
        return replace(ps, params=_set_tyre_crr(p, crr_new))
    if ps.form == PHYSICAL or key in ("mass_kg", "rotating_mass_fraction"):
        p[key] = _operate(p[key], mode, value) + noise
        lo, hi = _LIMITS.get(key, (-math.inf, math.inf))
        nominal = float(np.asarray(p[key])[0])
        if not (lo <= nominal <= hi):
            raise change.error(f"gives {key} = {nominal:g}, outside {lo:g} to {hi:g}")
        return replace(ps, params=p)
    return _apply_coefficient_change(ps, p, change, z, noise)


def _apply_coefficient_change(ps: ParamSet, p: dict, change, z, noise) -> ParamSet:
    """A change to measured coefficients (f0/f1/f2), by the rules of the module docstring."""
    key, mode, value = change.key, change.mode, change.value
    if key in ("f0_n", "f1_n_per_kmh", "f2_n_per_kmh2"):
        p[key] = _operate(p[key], mode, value) + noise
        lo, hi = _LIMITS.get(key, (-math.inf, math.inf))
        nominal = float(np.asarray(p[key])[0])
        if not (lo <= nominal <= hi):
            raise change.error(f"gives {key} = {nominal:g}, outside {lo:g} to {hi:g}")
        return replace(ps, params=p)
    if key == "cda_m2":
        if mode != "add":
            raise change.error("on measured coefficients a drag-area change must be a signed "
                               "amount (cda_m2: +0.12): the coefficients do not give CdA")
        p["cda_add_m2"] = p["cda_add_m2"] + value + noise
        return replace(ps, params=p)
    if key == "crr":
        if mode == "scale":
            p["rolling_scale"] = p["rolling_scale"] * value
            p["crr_add"] = p["crr_add"] * value
            if z is not None and change.std:
                raise change.error("crr_std with a percent change needs a physical road load; "
                                   "give the change as a signed amount (crr: -0.001)")
            return replace(ps, params=p)
        if mode == "add":
            p["crr_add"] = p["crr_add"] + value + noise
            return replace(ps, params=p)
        raise change.error("on measured coefficients an absolute crr is unknown (f0 holds "
                           "tyre and driveline drag); give a percent (-15%) or a signed "
                           "amount (-0.001)")
    if key == "crr_per_kmh":
        if mode != "add":
            raise change.error("on measured coefficients crr_per_kmh changes must be a "
                               "signed amount")
        p["crr_per_kmh_add"] = p["crr_per_kmh_add"] + value + noise
        return replace(ps, params=p)
    raise change.error("cannot be changed")  # unreachable: change_group checked the key


def _label_crr(crr, change, z):
    """Crr of a tyre-label change: the class middle at nominal, and per draw uniform over
    the class (Φ(z) of the change's standard-normal draw)."""
    value = change.value
    try:
        label = value if isinstance(value, TyreLabel) else parse_tyre_label(value)
    except ValueError as exc:
        raise change.error(str(exc)) from None
    lo, hi = label.interval_kg_t()
    if z is None:
        share = 0.5
    else:
        # the class is known, the value within it is not: a rectangular distribution
        # over the class, drawn as Φ(z) (uniform on (0, 1) for a standard-normal z;
        # z = 0, the nominal vehicle, gives the class middle)
        from scipy.special import ndtr
        share = ndtr(np.asarray(z, float))
    return np.zeros_like(crr) + (lo + (hi - lo) * share) / 1000.0


#: keys whose absolute value, written in the short form, is checked for a forgotten sign
ABSOLUTE_CHECK_KEYS = {"mass_kg": "kg", "cda_m2": "m²", "crr": ""}
#: relative move of an absolute value beyond which it is taken as a possible mistake
ABSOLUTE_CHECK_SHARE = 0.5


def absolute_change_note(before: ParamSet, after: ParamSet, change) -> str | None:
    """A warning when a short-form absolute value moves mass, CdA or Crr by more than 50 %.

    ``mass_kg: 25`` meant as +25 kg makes a 25 kg vehicle; the long form
    ``{set: 25}`` states that the absolute value is meant and gives no note.
    The comparison is with the nominal value just before the change.
    """
    key = change.key
    if change.mode != "set" or getattr(change, "explicit", False) or \
            key not in ABSOLUTE_CHECK_KEYS or key not in before.params:
        return None
    old = float(np.asarray(before.params[key])[0])
    new = float(np.asarray(after.params[key])[0])
    if not old > 0.0:
        return None
    rel = (new - old) / old
    if abs(rel) <= ABSOLUTE_CHECK_SHARE:
        return None
    unit = f" {ABSOLUTE_CHECK_KEYS[key]}" if ABSOLUTE_CHECK_KEYS[key] else ""
    value = float(change.value)
    return (f"{key}: {change.text} is an absolute value: it makes {key} {new:g}{unit}, "
            f"{abs(rel) * 100:.0f} % {'below' if rel < 0 else 'above'} the {old:g}{unit} "
            f"before the change. For a change by that amount write {key}: +{value:g} "
            f"(or -{value:g}); to keep the absolute value without this note write "
            f"{key}: {{set: {value:g}}}")


def _set_tyre_crr(p: dict, crr_new) -> dict:
    """Parameters with a new tyre's Crr and its speed slope scaled by the same ratio.

    The slope keeps its ratio to the nominal Crr (index 0 of the set):
    crr_per_kmh_new = crr_per_kmh × crr_new / crr_nominal (unchanged when the
    nominal Crr is 0).
    """
    old = float(np.asarray(p["crr"])[0])
    if old > 0.0:
        p["crr_per_kmh"] = np.asarray(p["crr_per_kmh"], float) * (np.asarray(crr_new) / old)
    p["crr"] = np.asarray(crr_new, float)
    return p


def _operate(current, mode, value):
    current = np.asarray(current, float)
    if mode == "set":
        return np.zeros_like(current) + float(value)
    if mode == "add":
        return current + float(value)
    return current * float(value)


def _apply_block_change(ps: ParamSet, change, z=None) -> ParamSet:
    """A ``powertrain.<key>`` or ``performance.<key>`` change: a replace on the parsed block.

    The key's entry in the block's ``CHANGEABLE`` table says where the value
    lives and which range it must keep; the block's ``check_changed`` checks
    the rules between values. A key that carries a standard uncertainty also
    moves its per-vehicle values (``pt_values``).
    """
    block, _, path = change.key.partition(".")
    obj = ps.powertrain if block == "powertrain" else ps.performance
    if obj is None:
        raise change.error(f"the vehicle has no {block} block to change")
    if change.std:
        _check_uncertain_key(ps, block, path, change)
    if field_of(obj, path) is None:
        keys = ", ".join(k for k in changeable(obj) if field_of(obj, k) is not None)
        raise change.error(f"the vehicle's {block} block has no key '{path}' to change "
                           f"(possible: {keys})")
    current = current_value(obj, path)
    if current is None and (change.mode != "set" or not changeable(obj)[path].optional):
        raise change.error(f"the vehicle's {block} block has no key '{path}' to change")
    if change.mode == "set":
        nominal = float(change.value)
    else:
        nominal = float(_operate(np.array([float(current)]), change.mode, change.value)[0])
    try:
        check_value(obj, path, nominal, field=f"{block}.{path}")
        out_obj = with_value(obj, path, nominal)
        broken = out_obj.check_changed()
        if broken:
            raise InputError(broken[1], field=f"{block}.{broken[0]}")
    except InputError as exc:
        raise change.error(f"the changed {block} block is not valid: "
                           f"{exc.field + ': ' if exc.field else ''}{exc.message}") from None
    out = replace(ps, **{block: out_obj})
    if block == "powertrain" and (change.std or path in ps.pt_values):
        # the per-vehicle values follow the change like any parameter array: a new value
        # replaces, an amount adds, a percentage multiplies; the change's own
        # uncertainty adds on top
        values = dict(out.pt_values)
        if path in values:
            arr = _operate(values[path], change.mode, change.value)
        else:
            arr = np.full(ps.size, nominal)
        if change.std and z is not None:
            arr = arr + change.std * np.asarray(z, float)
        values[path] = arr
        out = replace(out, pt_values=values)
    if out.pt_values:
        try:       # the changed block still takes every uncertain key (checked early)
            powertrain_with(out.powertrain, out.pt_values)
        except InputError as exc:
            raise change.error(exc.message) from None
    return out


# ---------------------------------------------------------------------------
# powertrain keys with a standard uncertainty
# ---------------------------------------------------------------------------

def _uncertain_table() -> dict:
    """key → (powertrain kind, setter, clip limits) from the models' change tables."""
    from ..powertrain import CombustionPowertrain, ElectricPowertrain

    out = {}
    for cls in (ElectricPowertrain, CombustionPowertrain):
        for key, fld in cls.CHANGEABLE.items():
            if fld.uncertain is not None:
                out[key] = (cls.kind, lambda pt, x, key=key: with_value(pt, key, x),
                            fld.uncertain)
    return out


#: powertrain keys (paths in the ``powertrain`` block) whose value may carry a standard
#: uncertainty, with the powertrain kind, how the value (in the key's unit) enters the
#: model (its ``consume`` takes these as per-vehicle arrays), and the physical limits a
#: drawn value is clipped to; built from the models' ``CHANGEABLE`` tables
POWERTRAIN_UNCERTAIN = _uncertain_table()


def std_key_of(path: str) -> str:
    """The standard-uncertainty key of a powertrain key: ``_std`` before the unit suffix.

    ``auxiliary_power_kw`` → ``auxiliary_power_std_kw``, ``drive_efficiency`` →
    ``drive_efficiency_std``, ``idle_fuel_l_per_h`` → ``idle_fuel_std_l_per_h``
    (the vehicle files' convention: ``cda_std_m2``, ``f1_std_n_per_kmh``).
    """
    head, dot, leaf = path.rpartition(".")
    for suffix in ("_l_per_h", "_kg_per_h", "_kwh", "_kpa", "_kw"):
        if leaf.endswith(suffix):
            leaf = leaf[:-len(suffix)] + "_std" + suffix
            break
    else:
        leaf = leaf + "_std"
    return head + dot + leaf


#: ``powertrain.<std key>`` → ``powertrain.<key>`` for every uncertain powertrain key
POWERTRAIN_STD_KEYS = {f"powertrain.{std_key_of(k)}": f"powertrain.{k}"
                       for k in POWERTRAIN_UNCERTAIN}


def _check_uncertain_key(ps: ParamSet, block: str, path: str, change) -> None:
    entry = POWERTRAIN_UNCERTAIN.get(path) if block == "powertrain" else None
    kind = getattr(ps.powertrain, "kind", None)
    if entry is None or entry[0] != kind:
        keys = [k for k, e in POWERTRAIN_UNCERTAIN.items() if e[0] == kind]
        hint = f"; possible with this {kind} powertrain: {', '.join(keys)}" if keys else ""
        raise change.error(f"{block}.{path} cannot carry a standard uncertainty{hint}")
    if field_of(ps.powertrain, path) is None or current_value(ps.powertrain, path) is None:
        raise change.error(f"the vehicle's {block} block has no key '{path}' whose "
                           "uncertainty could be stated")


def powertrain_with(powertrain, values: dict):
    """A powertrain with the given keys replaced by values (floats or (N,) arrays).

    Parameters
    ----------
    powertrain : ElectricPowertrain or CombustionPowertrain
    values : dict
        Powertrain key (see :data:`POWERTRAIN_UNCERTAIN`) → value in the key's unit.
    """
    pt = powertrain
    for path, value in values.items():
        entry = POWERTRAIN_UNCERTAIN.get(path)
        if entry is None or entry[0] != getattr(pt, "kind", None):
            raise InputError(f"powertrain.{path} cannot carry a standard uncertainty with "
                             f"this powertrain")
        if field_of(pt, path) is None or current_value(pt, path) is None:
            raise InputError(f"powertrain.{path} cannot carry a standard uncertainty with "
                             f"this powertrain model")
        try:
            pt = entry[1](pt, value)
        except (AttributeError, TypeError):
            raise InputError(f"powertrain.{path} cannot carry a standard uncertainty with "
                             f"this powertrain model") from None
    return pt


def merge_groups(base: ParamSet, variant: ParamSet, groups) -> ParamSet:
    """Baseline parameters with those of ``groups`` taken from the variant.

    Both sets must have the same form and vehicle-axis length.
    """
    params = {}
    for name, value in base.params.items():
        g = base.group_of(name)
        params[name] = variant.params[name] if g in groups else value
    pt = variant.powertrain if "powertrain" in groups else base.powertrain
    perf = variant.performance if "powertrain" in groups else base.performance
    pt_values = variant.pt_values if "powertrain" in groups else base.pt_values
    return replace(base, params=params, powertrain=pt, performance=perf, pt_values=pt_values)


def differing_groups(base: ParamSet, variant: ParamSet) -> tuple:
    """Groups whose nominal parameters (or blocks) differ between two sets."""
    if base.form != variant.form:
        return ("vehicle",)
    out = set()
    for name, value in base.params.items():
        g = base.group_of(name)
        if g is None:
            if not np.array_equal(np.asarray(value)[:1], np.asarray(variant.params[name])[:1]):
                return ("vehicle",)
            continue
        if not np.array_equal(np.asarray(value)[:1], np.asarray(variant.params[name])[:1]):
            out.add(g)
    if _block(base.powertrain) != _block(variant.powertrain) or \
            _block(base.performance) != _block(variant.performance):
        out.add("powertrain")
    return tuple(g for g in GROUPS if g in out)


def _block(obj):
    """A parsed block as comparable plain data (None for none)."""
    return None if obj is None else plain(obj.to_dict())
