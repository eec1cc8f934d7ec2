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



# ===========================================================================
# Coast-down: ``tractive coastdown`` and ``tractive coastdown-quick``
# (this block belongs to the coast-down code; the package is imported inside
# the functions, so importing tractive.api stays light)
# ===========================================================================

from .errors import InputError  # noqa: E402  (the one exception type, for the CLI)


def coastdown_choices() -> dict:
    """The fixed choices and limits of the coast-down options, for forms and commands:
    ``methods``, ``combines``, ``references``, ``road_load_suffixes``, ``plot_suffixes``,
    ``speed_columns``, ``max_mass_kg``, ``defaults`` (flat option → default value)."""
    from .coastdown.output import PLOT_SUFFIXES, ROAD_LOAD_SUFFIXES
    from .coastdown.settings import (COMBINES, DEFAULT_ROTATING_MASS_FRACTION, METHODS,
                                     CoastdownSettings)
    from .coastdown.corrections import REFERENCES
    from .limits import MAX_MASS_KG

    defaults = CoastdownSettings.from_options(mass_kg=1000.0).options()
    defaults.pop("mass_kg")
    defaults["rotating_mass_fraction"] = DEFAULT_ROTATING_MASS_FRACTION
    return {"methods": METHODS, "combines": COMBINES, "references": REFERENCES,
            "road_load_suffixes": ROAD_LOAD_SUFFIXES, "plot_suffixes": PLOT_SUFFIXES,
            "speed_columns": ("speed_kmh", "speed_mph", "speed_ms"),
            "max_mass_kg": MAX_MASS_KG, "defaults": defaults}


@dataclass(frozen=True)
class CoastdownReport:
    """A coast-down analysis and the files written from it.

    Attributes
    ----------
    result : tractive.coastdown.CoastdownResult
        Coefficients, covariance, runs, corrections, notes.
    written : tuple of str
        Files written (road-load block or JSON, figure), in that order.
    """

    result: object
    written: tuple = ()

    def to_dict(self) -> dict:
        """The result's JSON-ready dictionary, with ``written`` when files were written."""
        data = self.result.to_dict()
        if self.written:
            data["written"] = list(self.written)
        return data


def check_coastdown_outputs(logs: Sequence, *, output=None, plot=None) -> None:
    """Refuse output names before any work: an input log (also through a link), a
    missing or read-only folder, or an ending the writer does not produce.

    Raises
    ------
    InputError
        With ``field`` "output" or "plot" and ``file`` the output name.
    """
    from .coastdown.output import PLOT_SUFFIXES, ROAD_LOAD_SUFFIXES
    from .report.common import check_target

    inputs = [str(x) for x in logs if isinstance(x, (str, os.PathLike))]
    for name, path, suffixes in (("output", output, ROAD_LOAD_SUFFIXES),
                                 ("plot", plot, PLOT_SUFFIXES)):
        if path is not None:
            try:
                check_target(path, inputs, suffixes=suffixes)
            except InputError as exc:
                raise exc.located(field=name) from None


def coastdown(logs: Sequence, settings=None, *, output=None, plot=None,
              **options) -> CoastdownReport:
    """Road-load coefficients with covariance from coast-down logs (``tractive coastdown``).

    Parameters
    ----------
    logs : sequence of path or tractive.coastdown.CoastdownLog
        Raw logs (CSV or GPX).
    settings : tractive.coastdown.CoastdownSettings, optional
        Every option as checked dataclasses; or give flat ``options``
        (``mass_kg=1500, combine="pairs"``, see
        :func:`tractive.coastdown.analyze_coastdown`).
    output : path, optional
        Write the road load: ``.yaml``/``.yml`` block or ``.json`` result.
    plot : path, optional
        Write the figure: ``.png``, ``.pdf`` or ``.svg``.

    Returns
    -------
    CoastdownReport

    Raises
    ------
    InputError
        Bad options or logs, no usable run, or an output that cannot be
        written; output names are checked before the fit. The outputs are
        written all or nothing, never over a file the run read.
    """
    from .coastdown import analyze_coastdown, plot_coastdown, write_road_load
    from .readfiles import is_input, tracking
    from .report.common import all_or_nothing

    logs = list(logs)
    check_coastdown_outputs(logs, output=output, plot=plot)
    with tracking() as read:
        result = analyze_coastdown(logs, settings, **options)
    inputs = [str(x) for x in logs if isinstance(x, (str, os.PathLike))]
    for name, path in (("output", output), ("plot", plot)):
        hit = path is not None and is_input(path, read)
        if hit:
            raise InputError("refusing to overwrite an input file; choose another output "
                             "name", file=str(path), field=name)
    written = []
    with all_or_nothing():
        for name, path, writer in (("output", output, write_road_load),
                                   ("plot", plot, plot_coastdown)):
            if path is None:
                continue
            try:
                written.append(str(writer(result, path, inputs=inputs)))
            except InputError as exc:
                raise exc.located(field=name) from None
    return CoastdownReport(result, tuple(written))


def coastdown_quick(*, mass_kg: float, high_kmh, high_time_s: float, low_kmh,
                    low_time_s: float, rotating_mass_fraction: float = 0.03,
                    air_density_kg_m3: float | None = None):
    """Road load f0, f2 from two timed speed drops (``tractive coastdown-quick``).

    Speeds [km/h] as (start, end) pairs, times [s], test mass [kg], air density
    [kg/m³] for CdA; see :func:`tractive.coastdown.two_interval_estimate`.
    Returns a :class:`tractive.coastdown.TwoIntervalEstimate` (``to_dict()``).
    """
    from .coastdown import two_interval_estimate

    return two_interval_estimate(mass_kg=mass_kg, high_kmh=high_kmh, high_time_s=high_time_s,
                                 low_kmh=low_kmh, low_time_s=low_time_s,
                                 rotating_mass_fraction=rotating_mass_fraction,
                                 air_density_kg_m3=air_density_kg_m3)


def read_coastdown_log(path, *, speed_column: str | None = None):
    """One raw coast-down log (CSV or GPX) as a :class:`tractive.coastdown.CoastdownLog`."""
    from .coastdown import read_coastdown_log as _read

    return _read(path, speed_column=speed_column)
