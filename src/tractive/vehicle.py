"""The vehicle: mass, inertia, road load, and optional powertrain and performance data.

A vehicle file is YAML with units in its key names (see
docs/vehicle-file.md). :func:`load_vehicle` reads and validates it into a :class:`Vehicle`.

Inertial mass
    m_inertial = mass_kg × (1 + rotating_mass_fraction). The fraction stands
    for the rotating parts (wheels, driveline); UN GTR No. 15 allows 3 % when
    it is not measured and SAE J2263 uses an effective mass of 1.03 × vehicle
    mass for light-duty vehicles, so 0.03 is the default.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from .atmosphere import ambient_air
from .demand import inertial_mass_kg
from .errors import InputError
from .limits import MAX_MASS_KG
from .roadload import (DEFAULT_FRONTAL_AREA_FACTOR, CoefficientRoadLoad, PhysicalRoadLoad,
                       RoadLoad, frontal_area_m2)
from .spec import Section, load_section
from .units import LBF_N, MPH_MS, KMH_MS

#: default rotating-mass allowance (UN GTR No. 15, from memory; SAE J2263 1.03 × mass)
DEFAULT_ROTATING_MASS_FRACTION = 0.03

COEFFICIENT_KEYS = ("f0_n", "f1_n_per_kmh", "f2_n_per_kmh2")
DYNO_KEYS = ("a_lbf", "b_lbf_per_mph", "c_lbf_per_mph2")
PHYSICAL_KEYS = ("cda_m2", "cd", "crr")


@dataclass(frozen=True)
class Vehicle:
    """A validated vehicle.

    Attributes
    ----------
    name : str
    mass_kg : float
        Test mass [kg]: the mass the tyres carry and grade acts on.
    rotating_mass_fraction : float
        Equivalent rotating mass as a fraction of ``mass_kg`` [-].
    road_load : PhysicalRoadLoad or CoefficientRoadLoad
        The road-load form as given.
    powertrain : object or None
        Parsed ``powertrain`` block (see :mod:`tractive.powertrain`).
    performance : object or None
        Parsed ``performance`` block (see :mod:`tractive.performance`).
    source : str
        File the vehicle came from ("" when built in code).
    notes, warnings : tuple of str
        What reading the file did that a user should know (a measured road
        load carried to the vehicle's mass) and what looks wrong (a rotating-mass
        fraction other than the coast-down's).
    """

    name: str
    mass_kg: float
    road_load: Any
    rotating_mass_fraction: float = DEFAULT_ROTATING_MASS_FRACTION
    powertrain: Any = None
    performance: Any = None
    source: str = ""
    extras: dict = field(default_factory=dict)
    notes: tuple = ()
    warnings: tuple = ()

    @property
    def inertial_mass_kg(self) -> float:
        """Mass for acceleration [kg] = mass_kg × (1 + rotating_mass_fraction)."""
        return inertial_mass_kg(self.mass_kg, self.rotating_mass_fraction)

    def resistance(self) -> RoadLoad:
        """The level-road resistance in SI coefficients."""
        return self.road_load.resolve(self.mass_kg)

    def with_changes(self, **changes) -> "Vehicle":
        return replace(self, **changes)

    def to_dict(self) -> dict:
        out = {"name": self.name, "source": self.source, "mass_kg": self.mass_kg,
               "rotating_mass_fraction": self.rotating_mass_fraction,
               "inertial_mass_kg": self.inertial_mass_kg,
               "road_load": self.road_load.to_dict(),
               "road_load_coefficients": self.resistance().coastdown_coefficients()}
        if self.powertrain is not None and hasattr(self.powertrain, "to_dict"):
            out["powertrain"] = self.powertrain.to_dict()
        if self.performance is not None and hasattr(self.performance, "to_dict"):
            out["performance"] = self.performance.to_dict()
        if self.notes:
            out["notes"] = list(self.notes)
        if self.warnings:
            out["warnings"] = list(self.warnings)
        return out


def load_vehicle(path: str | os.PathLike) -> Vehicle:
    """Read and validate a vehicle YAML file.

    Raises
    ------
    InputError
        Naming the file, the field and the line of the first mistake.
    """
    return vehicle_from_section(load_section(path))


def vehicle_from_section(sec: Section, *, name_default: str | None = None) -> Vehicle:
    """Build a :class:`Vehicle` from a mapping (a file's top level or an inline block)."""
    name = sec.string("name", required=name_default is None, default=name_default)
    mass_kg = sec.number("mass_kg", min=0.0, min_inclusive=False, unit="kg")
    if mass_kg > MAX_MASS_KG:
        raise sec.error(f"{mass_kg:g} kg is not a plausible road-vehicle mass; is the unit kg?",
                        "mass_kg")
    mass_std_kg = sec.number("mass_std_kg", required=False, default=0.0, min=0.0, unit="kg")
    rmf = sec.number("rotating_mass_fraction", required=False,
                     default=DEFAULT_ROTATING_MASS_FRACTION, min=0.0, max=1.0)
    road_load = parse_road_load(sec.section("road_load"))
    notes, warnings = (), ()
    if "test_mass_kg" in (getattr(road_load, "given", None) or {}):
        from .coastdown.mass import road_load_at_mass
        road_load, notes, warnings = road_load_at_mass(road_load, mass_kg, rmf)
    powertrain = None
    if sec.has("powertrain"):
        from .powertrain import parse_powertrain
        powertrain = parse_powertrain(sec.section("powertrain"))
    performance = None
    if sec.has("performance"):
        from .performance import parse_performance
        performance = parse_performance(sec.section("performance"))
    sec.raw("notes")  # free text, allowed
    sec.finish()
    return Vehicle(name=name, mass_kg=mass_kg, rotating_mass_fraction=rmf, road_load=road_load,
                   powertrain=powertrain, performance=performance, source=sec.file or "",
                   extras={"mass_std_kg": mass_std_kg} if mass_std_kg else {},
                   notes=tuple(notes), warnings=tuple(warnings))


def parse_road_load(sec: Section):
    """Parse a ``road_load`` block in exactly one of its three forms."""
    if sec.has("from_coastdown"):
        return _parse_from_coastdown(sec)
    form = sec.only_one_of(COEFFICIENT_KEYS, DYNO_KEYS, PHYSICAL_KEYS + ("cla_m2",),
                           what="road-load form (f0/f1/f2, A/B/C, or physical CdA and Crr)")
    if form is None:
        raise sec.error("give one road-load form: f0_n/f1_n_per_kmh/f2_n_per_kmh2, "
                        "a_lbf/b_lbf_per_mph/c_lbf_per_mph2, or cda_m2 (or cd) with crr")
    if form == 0:
        return _parse_coefficients(sec)
    if form == 1:
        return _parse_dyno(sec)
    return _parse_physical(sec)


def _parse_from_coastdown(sec: Section) -> CoefficientRoadLoad:
    """``road_load: {from_coastdown: FILE}``: coefficients and covariance from the file
    written by ``tractive coastdown -o`` (or its saved ``--json`` output, whose
    ``road_load`` entry is used), relative to this file."""
    others = [k for k in sec.keys() if k != "from_coastdown"]
    if others:
        raise sec.error("from_coastdown gives the whole road load; remove the other keys",
                        str(others[0]))
    path = sec.path("from_coastdown")
    sec.finish()
    line = sec.line_of("from_coastdown")
    origin = f"{sec.file}:{line}" if sec.file and line else (sec.file or "the vehicle")
    try:
        inner = load_section(path)
        test = {}
        if inner.has("road_load"):
            # the test mass beside the road load: test_* keys of the YAML block written by
            # ``coastdown -o``, mass_kg and rotating_mass_fraction of the JSON result
            yaml_keys = inner.has("test_mass_kg") or inner.has("test_rotating_mass_fraction")
            mass_key, rmf_key = (("test_mass_kg", "test_rotating_mass_fraction") if yaml_keys
                                 else ("mass_kg", "rotating_mass_fraction"))
            test = {"test_mass_kg": inner.number(mass_key, required=False, min=0.0,
                                                 min_inclusive=False, unit="kg"),
                    "test_rotating_mass_fraction": inner.number(rmf_key, required=False,
                                                                min=0.0, max=1.0)}
            inner = inner.section("road_load")
        rl = _parse_coefficients(inner)
    except InputError as exc:
        raise InputError(f"{exc.message} (file named by {sec.field('from_coastdown')} in "
                         f"{origin})", file=exc.file or str(path), field=exc.field,
                         line=exc.line) from None
    # the test mass and fraction go with the coefficients; tractive.coastdown.mass.
    # road_load_at_mass carries them to the vehicle's mass (f0, f1 × m / m_test)
    test = {k: v for k, v in test.items() if v is not None}
    return replace(rl, given={**rl.given, **test, "from_coastdown": str(path)})


def _parse_coefficients(sec: Section) -> CoefficientRoadLoad:
    f0 = sec.number("f0_n", unit="N")
    f1 = sec.number("f1_n_per_kmh", required=False, default=0.0, unit="N/(km/h)")
    f2 = sec.number("f2_n_per_kmh2", unit="N/(km/h)^2")
    if f0 < 0:
        raise sec.error(f"must not be negative, got {f0:g} N", "f0_n")
    if f2 <= 0:
        raise sec.error(f"must be positive (drag grows with speed squared), got {f2:g}",
                        "f2_n_per_kmh2")
    cov = _parse_uncertainty(sec, ("f0_std_n", "f1_std_n_per_kmh", "f2_std_n_per_kmh2"))
    rho_ref = _reference_air_density(sec)
    sec.finish()
    return CoefficientRoadLoad(f0, f1, f2, form="coastdown",
                               given={"f0_n": f0, "f1_n_per_kmh": f1, "f2_n_per_kmh2": f2},
                               covariance=cov, reference_air_density_kg_m3=rho_ref)


def _reference_air_density(sec: Section) -> float | None:
    """Optional ``reference_air_density_kg_m3``: the air density the coefficients hold at."""
    return sec.number("reference_air_density_kg_m3", required=False, min=0.3, max=1.6,
                      unit="kg/m^3")


def _parse_dyno(sec: Section) -> CoefficientRoadLoad:
    a = sec.number("a_lbf", unit="lbf")
    b = sec.number("b_lbf_per_mph", required=False, default=0.0, unit="lbf/mph")
    c = sec.number("c_lbf_per_mph2", unit="lbf/mph^2")
    if a < 0:
        raise sec.error(f"must not be negative, got {a:g} lbf", "a_lbf")
    if c <= 0:
        raise sec.error(f"must be positive (drag grows with speed squared), got {c:g}",
                        "c_lbf_per_mph2")
    std_keys = ("a_std_lbf", "b_std_lbf_per_mph", "c_std_lbf_per_mph2")
    cov = _parse_uncertainty(sec, std_keys)
    rho_ref = _reference_air_density(sec)
    sec.finish()
    rl = RoadLoad.from_dyno(a, b, c).coastdown_coefficients()
    if cov is not None:
        # covariance in lbf units → GTR 15 units with the exact linear map
        scale = np.diag([LBF_N, LBF_N / MPH_MS * KMH_MS, LBF_N / MPH_MS ** 2 * KMH_MS ** 2])
        cov = scale @ cov @ scale
    return CoefficientRoadLoad(rl["f0_n"], rl["f1_n_per_kmh"], rl["f2_n_per_kmh2"], form="dyno",
                               given={"a_lbf": a, "b_lbf_per_mph": b, "c_lbf_per_mph2": c},
                               covariance=cov, reference_air_density_kg_m3=rho_ref)


def _parse_uncertainty(sec: Section, std_keys) -> np.ndarray | None:
    """A 3×3 covariance from ``covariance`` or from per-coefficient std keys."""
    if sec.has("covariance"):
        for k in std_keys:
            if sec.has(k):
                raise sec.error("give either covariance or standard uncertainties, not both", k)
        cov = sec.table("covariance")
        if cov.shape != (3, 3):
            raise sec.error(f"must be a 3×3 matrix, got {cov.shape[0]}×{cov.shape[1]}",
                            "covariance")
        if not np.allclose(cov, cov.T, rtol=1e-9, atol=0.0):
            raise sec.error("must be symmetric", "covariance")
        if np.min(np.linalg.eigvalsh(cov)) < -1e-12 * max(1.0, float(np.max(np.abs(cov)))):
            raise sec.error("must be positive semi-definite (a valid covariance)", "covariance")
        return cov
    stds = [sec.number(k, required=False, default=0.0, min=0.0) for k in std_keys]
    if any(s > 0 for s in stds):
        return np.diag(np.square(stds))
    return None


def _parse_physical(sec: Section) -> PhysicalRoadLoad:
    crr = sec.number("crr", min=0.0, max=0.1)
    crr_per_kmh = sec.number("crr_per_kmh", required=False, default=0.0, min=0.0, max=1e-3,
                             unit="1/(km/h)")
    cla = sec.number("cla_m2", required=False, default=0.0, min=-5.0, max=20.0, unit="m^2")
    # drag area: cda_m2 | cd with frontal_area_m2 | cd with width_m and height_m
    if sec.has("cda_m2"):
        for k in ("cd", "frontal_area_m2", "width_m", "height_m", "frontal_area_factor"):
            if sec.has(k):
                raise sec.error("give cda_m2 alone, or cd with the frontal area, not both", k)
        cda = sec.number("cda_m2", min=0.0, min_inclusive=False, max=30.0, unit="m^2")
        cda_basis = "cda_m2 as given"
    else:
        cd = sec.number("cd", min=0.0, min_inclusive=False, max=3.0)
        if sec.has("frontal_area_m2"):
            for k in ("width_m", "height_m", "frontal_area_factor"):
                if sec.has(k):
                    raise sec.error("give frontal_area_m2 or width_m/height_m, not both", k)
            area = sec.number("frontal_area_m2", min=0.0, min_inclusive=False, max=30.0,
                              unit="m^2")
            cda_basis = f"cd {cd:g} × frontal_area_m2 {area:g}"
        elif sec.has("width_m") or sec.has("height_m"):
            width = sec.number("width_m", min=0.0, min_inclusive=False, max=5.0, unit="m")
            height = sec.number("height_m", min=0.0, min_inclusive=False, max=6.0, unit="m")
            factor = sec.number("frontal_area_factor", required=False,
                                default=DEFAULT_FRONTAL_AREA_FACTOR, min=0.5, max=1.0)
            area = float(frontal_area_m2(width, height, factor))
            cda_basis = (f"cd {cd:g} × {factor:g} × width {width:g} m × height {height:g} m "
                         f"(frontal-area factor, common practice 0.80-0.85)")
        else:
            raise sec.error("cd needs frontal_area_m2, or width_m and height_m", "cd")
        cda = cd * area
    # air
    if sec.has("air_density_kg_m3"):
        for k in ("air_temperature_c", "air_pressure_pa", "altitude_m"):
            if sec.has(k):
                raise sec.error("give air_density_kg_m3 or the air state, not both", k)
        rho = sec.number("air_density_kg_m3", min=0.3, max=1.6, unit="kg/m^3")
        air_basis = "air_density_kg_m3 as given"
    else:
        t_c = sec.number("air_temperature_c", required=False, min=-60.0, max=60.0, unit="°C")
        p_pa = sec.number("air_pressure_pa", required=False, min=30000.0, max=110000.0,
                          unit="Pa")
        alt = sec.number("altitude_m", required=False, min=-500.0, max=6000.0, unit="m")
        air = ambient_air(temperature_c=t_c, pressure_pa=p_pa, altitude_m=alt)
        rho = air["density_kg_m3"]
        air_basis = air["basis"]
        if t_c is None and p_pa is None and alt is None:
            air_basis = "ISA sea level (ICAO standard atmosphere), 15 °C, 101325 Pa"
    std = {}
    for k, unit in (("crr_std", ""), ("cda_std_m2", "m^2"), ("cla_std_m2", "m^2")):
        v = sec.number(k, required=False, min=0.0, unit=unit)
        if v:
            std[k] = v
    sec.finish()
    return PhysicalRoadLoad(cda_m2=float(cda), crr=crr, air_density_kg_m3=float(rho),
                            crr_per_kmh=crr_per_kmh, cla_m2=cla, air_basis=air_basis,
                            cda_basis=cda_basis, std=std)
