"""The Python face of the command line: one function per command, plain data out.

Each function here does what one ``tractive`` command does and returns a
frozen dataclass with ``to_dict()``; the CLI only formats what it gets.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Sequence

from .demand import WheelDemand, vehicle_wheel_demand
from .profiles import Profile, ProfileStats, list_cycles, load_cycle, profile_statistics, \
    resolve_profile
from .vehicle import Vehicle, load_vehicle

#: cycles run by ``tractive energy`` when none is named
DEFAULT_ENERGY_CYCLES = ("wltc3b", "udds", "hwfet")


@dataclass(frozen=True)
class CycleRow:
    """One bundled cycle with its computed statistics."""

    name: str
    title: str
    body: str
    document: str
    phases: tuple
    stats: ProfileStats

    def to_dict(self) -> dict:
        out = {"name": self.name, "title": self.title, "issuing_body": self.body,
               "document": self.document, "phases": [p.name for p in self.phases]}
        out.update(self.stats.to_dict())
        return out


def cycles_table() -> list[CycleRow]:
    """Every bundled cycle with its statistics (duration, distance, speeds, ...)."""
    rows = []
    for info in list_cycles():
        prof = load_cycle(info.name)
        rows.append(CycleRow(info.name, info.title, info.body, info.document,
                             tuple(info.phases), profile_statistics(prof)))
    return rows


def profile_table(specs: Sequence[str], *, base_dir=None, dt_s: float = 1.0) -> list:
    """Statistics of any profiles (bundled names, phases, files, ``steady:``, ``+``, ``*``)."""
    rows = []
    for text in specs:
        prof = resolve_profile(text, base_dir=base_dir, dt_s=dt_s)
        stats = profile_statistics(prof).to_dict()
        stats["name"] = text
        stats["source"] = prof.source
        rows.append(stats)
    return rows


@dataclass(frozen=True)
class EnergyResult:
    """Wheel energy (and, with a powertrain, fuel or battery use) on one profile."""

    profile: Profile
    wheel: WheelDemand
    powertrain: object = None

    def to_dict(self) -> dict:
        out = self.wheel.to_dict()
        out["cycle"] = self.profile.name
        if self.powertrain is not None:
            out.update(self.powertrain.to_dict())
        return out


@dataclass(frozen=True)
class EnergyReport:
    vehicle: Vehicle
    results: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"vehicle": self.vehicle.to_dict(),
                "results": [r.to_dict() for r in self.results]}


def load_profiles(specs: Sequence[str], *, base_dir: str | os.PathLike | None = None,
                  dt_s: float = 1.0) -> list[Profile]:
    """Resolve profile strings (cycle names, phases, files, ``steady:``, ``+``, ``*``)."""
    return [resolve_profile(s, base_dir=base_dir, dt_s=dt_s) for s in specs]


def energy(vehicle: Vehicle | str | os.PathLike, profiles: Sequence[Profile | str] = (),
           *, dt_s: float = 1.0) -> EnergyReport:
    """Wheel energy of a vehicle on each profile, plus fuel or battery use when
    the vehicle has a powertrain.

    Parameters
    ----------
    vehicle : Vehicle or path
        The vehicle, or a vehicle YAML file.
    profiles : sequence of Profile or str
        Profiles, or strings for :func:`tractive.profiles.resolve_profile`
        (default: :data:`DEFAULT_ENERGY_CYCLES`).
    dt_s : float
        Time step [s] for user files that need resampling.
    """
    if not isinstance(vehicle, Vehicle):
        vehicle = load_vehicle(vehicle)
    profiles = list(profiles) or list(DEFAULT_ENERGY_CYCLES)
    resolved = [p if isinstance(p, Profile) else resolve_profile(p, dt_s=dt_s) for p in profiles]
    results = []
    for prof in resolved:
        demand = vehicle_wheel_demand(vehicle, prof)
        pt = None
        if vehicle.powertrain is not None:
            pt = vehicle.powertrain.consume(vehicle, demand, prof)
        results.append(EnergyResult(prof, demand, pt))
    return EnergyReport(vehicle, results)


def energy_mix(report: EnergyReport, shares: Sequence[float]) -> dict:
    """Weighted mix of an energy report's profiles by distance share.

    Every per-distance value of the mix is the share-weighted mean of the
    profiles' per-distance values (wheel Wh/km, battery or wall Wh/km, L/100 km,
    CO2 g/km), which is the harmonic combination of economies used by
    40 CFR 600 (55 % city / 45 % highway); range follows from the mixed
    consumption.

    Parameters
    ----------
    report : EnergyReport
    shares : sequence of float
        Distance shares [-], one per result, ≥ 0, adding up to 1.
    """
    from .errors import InputError

    shares = [float(x) for x in shares]
    results = list(report.results)
    if len(shares) != len(results):
        raise InputError(f"needs one share per cycle ({len(results)}), got {len(shares)}",
                         field="shares")
    if any(not (x >= 0) or x == float("inf") for x in shares) or abs(sum(shares) - 1.0) > 1e-6:
        raise InputError("shares must be 0 or more and add up to 1", field="shares")
    for r in results:
        if not r.wheel.distance_km > 0:
            raise InputError(f"profile '{r.profile.name}' has no distance; it cannot be part "
                             "of a mix by distance", field="shares")
    rows = [r.to_dict() for r in results]
    out = {"cycle": "mix", "profiles": [r.profile.name for r in results], "shares": shares}
    for key in ("positive_energy_wh_per_km", "negative_energy_wh_per_km"):
        out[key] = sum(x * row[key] for x, row in zip(shares, rows))
    if report.vehicle.powertrain is not None:
        from .powertrain import mix_results

        out.update(mix_results([r.powertrain for r in results], shares).to_dict())
        out["cycle"] = "mix"
        if all(row.get("wall_wh_per_km") is not None for row in rows):
            out["wall_wh_per_km"] = sum(x * row["wall_wh_per_km"] for x, row in zip(shares, rows))
    return out

