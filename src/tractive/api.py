"""The library face of every command: one function per command, typed results out.

Each function does what one ``tractive`` command does and returns a frozen
dataclass with ``to_dict()`` (the command's JSON document); the command line
only parses options, calls the function and formats what it gets.

=====================  =========================  ==========================
command                function                   result
=====================  =========================  ==========================
``cycles``             :func:`cycles`             :class:`CyclesReport`
``energy``             :func:`energy`             :class:`EnergyReport`
``performance``        :func:`performance`        :class:`PerformanceReport`
``range-curve``        :func:`range_curve`        :class:`RangeCurveReport`
``compare``            :func:`compare`            :class:`~tractive.study.results.StudyResult`
``coastdown``          :func:`coastdown`          (see the coast-down block below)
``coastdown-quick``    :func:`coastdown_quick`    (see the coast-down block below)
=====================  =========================  ==========================

Vehicles may be given as a :class:`~tractive.vehicle.Vehicle` or a path to a
vehicle YAML file; profiles as :class:`~tractive.profiles.Profile` objects or
profile expressions (``udds``, ``wltc3b:low``, ``trip.csv``,
``steady:90kmh:20min``, ``A+B``, ``A*3``).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Sequence

from typing import TYPE_CHECKING

from . import numfmt
from .errors import InputError
from .limits import MAX_DRAWS, MAX_MASS_KG, MAX_USER_SPEED_KMH
from .plain import json_text, plain

from .reading import ReadOptions, reading

if TYPE_CHECKING:                       # heavy modules are imported where they are used,
    from .vehicle import Vehicle        # so that `tractive --help` starts fast

__all__ = ["cycles", "energy", "energy_mix", "performance", "range_curve", "compare",
           "write_study_outputs", "check_outputs", "load_vehicle", "load_profiles",
           "CyclesReport", "EnergyReport", "EnergyResult", "PerformanceReport",
           "RangeCurveReport", "InputError", "json_text", "plain", "DEFAULT_ENERGY_CYCLES",
           "STUDY_OUTPUT_SUFFIXES", "MAX_DRAWS", "MAX_MASS_KG", "MAX_USER_SPEED_KMH",
           "headline_sentences", "metric_info", "numfmt", "key_in_units", "UNIT_SYSTEMS",
           "check_figure", "write_study_plot", "write_range_plot", "ReadOptions", "reading"]

#: cycles run by ``tractive energy`` when none is named
DEFAULT_ENERGY_CYCLES = ("wltc3b", "udds", "hwfet")
#: file types a study result can be written to
STUDY_OUTPUT_SUFFIXES = (".xlsx", ".csv", ".json")


def load_vehicle(path: str | os.PathLike) -> "Vehicle":
    """Read and check a vehicle YAML file (see :func:`tractive.vehicle.load_vehicle`)."""
    from .vehicle import load_vehicle as _load

    return _load(path)


def _vehicle(vehicle) -> "Vehicle":
    """A Vehicle from a Vehicle or a vehicle file path."""
    from .vehicle import Vehicle

    return vehicle if isinstance(vehicle, Vehicle) else load_vehicle(vehicle)


# ---------------------------------------------------------------------------
# cycles
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class CycleRow:
    """One bundled cycle with its computed statistics."""

    name: str
    title: str
    body: str
    document: str
    phases: tuple
    stats: object

    def to_dict(self) -> dict:
        """JSON-ready: name, title, issuing body, document, phase names, statistics."""
        out = {"name": self.name, "title": self.title, "issuing_body": self.body,
               "document": self.document, "phases": [p.name for p in self.phases]}
        out.update(self.stats.to_dict())
        return out


@dataclass(frozen=True)
class CyclesReport:
    """Statistics of the bundled cycles (``kind="cycles"``) or of named profiles
    (``kind="profiles"``: dicts with ``name``, ``source`` and the statistics)."""

    kind: str
    rows: tuple

    def to_dict(self) -> dict:
        """``{"cycles": [...]}`` or ``{"profiles": [...]}``."""
        return {self.kind: [r.to_dict() if hasattr(r, "to_dict") else dict(r)
                            for r in self.rows]}


def cycles(profiles: Sequence[str] = (), *, dt_s: float = 1.0,
           base_dir: str | os.PathLike | None = None,
           read: ReadOptions | None = None) -> CyclesReport:
    """Statistics of every bundled cycle, or of the profiles named.

    Parameters
    ----------
    profiles : sequence of str
        Profile expressions; empty for the bundled cycles.
    dt_s : float
        Time step [s] user files are resampled to (above 0, at most 60).
    base_dir : path, optional
        Folder that relative file names are read from.
    read : ReadOptions, optional
        How speed files and GPS tracks are read (columns, gaps, smoothing).
    """
    from .profiles import list_cycles, load_cycle, profile_statistics, resolve_profile

    if not 0 < dt_s <= 60:
        raise InputError(f"must be a time step above 0 and at most 60 s, got {dt_s:.4g}",
                         field="dt_s")
    if not profiles:
        rows = []
        for info in list_cycles():
            rows.append(CycleRow(info.name, info.title, info.body, info.document,
                                 tuple(info.phases), profile_statistics(load_cycle(info.name))))
        return CyclesReport("cycles", tuple(rows))
    rows = []
    for text in profiles:
        prof = resolve_profile(text, base_dir=base_dir, dt_s=dt_s, read=read)
        stats = profile_statistics(prof).to_dict()
        stats["name"] = text
        stats["source"] = prof.source
        rows.append(stats)
    return CyclesReport("profiles", tuple(rows))


# ---------------------------------------------------------------------------
# energy
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class EnergyResult:
    """Wheel energy (and, with a powertrain, fuel or battery use) on one profile."""

    profile: object
    wheel: object
    powertrain: object = None

    def to_dict(self) -> dict:
        """The wheel energy's keys, the profile name as ``cycle``, the powertrain's keys."""
        out = self.wheel.to_dict()
        out["cycle"] = self.profile.name
        if self.powertrain is not None:
            out.update(self.powertrain.to_dict())
        return out


@dataclass(frozen=True)
class EnergyReport:
    """A vehicle's results on each profile, and their mix when shares were given."""

    vehicle: "Vehicle"
    results: list = field(default_factory=list)
    mix: dict | None = None
    units: str = "metric"

    def to_dict(self) -> dict:
        """``{"vehicle", "results"[, "mix"]}``, in the report's units."""
        from .metrics import convert_document

        out = {"vehicle": self.vehicle.to_dict(),
               "results": [r.to_dict() for r in self.results]}
        if self.mix is not None:
            out["mix"] = dict(self.mix)
        if self.units != "metric":
            out["units"] = self.units
        return convert_document(out, self.units)


def load_profiles(specs: Sequence[str], *, base_dir: str | os.PathLike | None = None,
                  dt_s: float = 1.0, read: ReadOptions | None = None) -> list:
    """Resolve profile expressions (cycle names, phases, files, ``steady:``, ``+``, ``*``),
    reading speed files with ``read`` (columns, gaps, smoothing) when given."""
    from .profiles import resolve_profile

    return [resolve_profile(s, base_dir=base_dir, dt_s=dt_s, read=read) for s in specs]


def energy(vehicle: "Vehicle | str | os.PathLike", profiles: Sequence = (), *,
           dt_s: float = 1.0, mix_shares: Sequence[float] | None = None,
           units: str = "metric") -> EnergyReport:
    """Wheel energy of a vehicle on each profile, plus fuel or battery use when the
    vehicle has a powertrain, and optionally their mix by distance share.

    Parameters
    ----------
    vehicle : Vehicle or path
        The vehicle, or a vehicle YAML file.
    profiles : sequence of Profile or str
        Profiles or profile expressions (default: :data:`DEFAULT_ENERGY_CYCLES`).
    dt_s : float
        Time step [s] for user files that need resampling.
    mix_shares : sequence of float, optional
        Distance shares [-] of the profiles (in order, adding up to 1): adds the
        mix (see :func:`energy_mix`).
    units : {"metric", "us"}
        Units of ``to_dict()`` (US: miles, gallons, mph; exact factors).
    """
    from .demand import vehicle_wheel_demand
    from .profiles import Profile, resolve_profile

    vehicle = _vehicle(vehicle)
    profiles = list(profiles) or list(DEFAULT_ENERGY_CYCLES)
    resolved = [p if isinstance(p, Profile) else resolve_profile(p, dt_s=dt_s)
                for p in profiles]
    results = []
    for prof in resolved:
        demand = vehicle_wheel_demand(vehicle, prof)
        pt = None
        if vehicle.powertrain is not None:
            pt = vehicle.powertrain.consume(vehicle, demand, prof)
        results.append(EnergyResult(prof, demand, pt))
    _check_units(units)
    report = EnergyReport(vehicle, results, units=units)
    if mix_shares is None:
        return report
    return EnergyReport(vehicle, results, energy_mix(report, mix_shares), units=units)


#: output unit systems
UNIT_SYSTEMS = ("metric", "us")


def _check_units(units: str) -> None:
    """Refuse an unknown unit system."""
    if units not in UNIT_SYSTEMS:
        raise InputError(f"units must be 'metric' or 'us', got '{units}'", field="units")


def energy_mix(report: EnergyReport, shares: Sequence[float]) -> dict:
    """Weighted mix of an energy report's profiles by distance share.

    Every per-distance value of the mix is the share-weighted mean of the
    profiles' per-distance values (wheel Wh/km, battery or wall Wh/km,
    L/100 km, CO2 g/km), which is the harmonic combination of economies used
    by 40 CFR 600 (55 % city / 45 % highway); range follows from the mixed
    consumption (:mod:`tractive.metrics`).

    Parameters
    ----------
    report : EnergyReport
    shares : sequence of float
        Distance shares [-], one per result, ≥ 0, adding up to 1.
    """
    from .metrics import check_shares, mix

    results = list(report.results)
    shares = check_shares(shares, len(results), "cycle")
    for r in results:
        if not r.wheel.distance_km > 0:
            raise InputError(f"profile '{r.profile.name}' has no distance; it cannot be part "
                             "of a mix by distance", field="shares")
    rows = [r.to_dict() for r in results]
    wheel = mix([{k: row[k] for k in ("positive_energy_wh_per_km",
                                      "negative_energy_wh_per_km")} for row in rows], shares)
    out = {"cycle": "mix", "profiles": [r.profile.name for r in results], "shares": shares}
    out.update(wheel)
    if report.vehicle.powertrain is not None:
        from .powertrain import mix_results

        out.update(mix_results([r.powertrain for r in results], shares).to_dict())
        out["cycle"] = "mix"
        if all(row.get("wall_wh_per_km") is not None for row in rows):
            out.update(mix([{"wall_wh_per_km": row["wall_wh_per_km"]} for row in rows],
                           shares))
    return out


# ---------------------------------------------------------------------------
# performance
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class PerformanceReport:
    """Top speed, acceleration and gradeability of a vehicle (see
    :func:`tractive.performance.performance_summary`)."""

    vehicle: "Vehicle"
    result: object
    units: str = "metric"
    us_times: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """The performance result's document, in the report's units (US: mph, and the
        0-60 and 50-70 mph times instead of 0-100 and 80-120 km/h)."""
        from .metrics import convert_document

        out = self.result.to_dict()
        if self.units == "metric":
            return out
        out = convert_document(out, self.units)
        out.pop("shifts_0_100", None)       # counted on 0-100 km/h
        out.update(self.us_times)
        out["units"] = self.units
        return out


def performance(vehicle: "Vehicle | str | os.PathLike", *, grade_pct: float = 0.0,
                wind_kmh: float = 0.0, gradeability_speed_kmh: float | None = None,
                units: str = "metric") -> PerformanceReport:
    """Top speed in every gear with the binding limit, 0-100 and 80-120 km/h times,
    and gradeability.

    Parameters
    ----------
    vehicle : Vehicle or path
        With a ``performance`` block.
    grade_pct : float
        Road grade [%] (negative downhill).
    wind_kmh : float
        Head wind [km/h] (negative: tail wind).
    gradeability_speed_kmh : float, optional
        Speed of the gradeability figure [km/h] (default: the vehicle file's).
    units : {"metric", "us"}
        Units of ``to_dict()``.
    """
    from .metrics import KM_PER_MI
    from .performance import acceleration_time_s, performance_summary

    _check_units(units)
    vehicle = _vehicle(vehicle)
    res = performance_summary(vehicle, grade_pct=grade_pct, wind_kmh=wind_kmh,
                              gradeability_speed_kmh=gradeability_speed_kmh)
    times = {}
    if units == "us":
        for key, (lo, hi) in (("accel_0_60_mph_s", (0.0, 60.0)),
                              ("accel_50_70_mph_s", (50.0, 70.0))):
            t, _ = acceleration_time_s(vehicle, lo * KM_PER_MI, hi * KM_PER_MI,
                                       grade_pct=grade_pct, wind_kmh=wind_kmh)
            times[key] = None if t is None else plain(t)
    return PerformanceReport(vehicle, res, units, times)


# ---------------------------------------------------------------------------
# range curve
# ---------------------------------------------------------------------------

#: most speeds one range curve may have
MAX_RANGE_SPEEDS = 10000


@dataclass(frozen=True)
class RangeCurveReport:
    """Range and consumption against constant speed, with the ambient temperature used.

    Attributes
    ----------
    vehicle : Vehicle
    curve : RangeCurve
    ambient_temperature_c : float or None
        Ambient temperature [°C] of a temperature-dependent auxiliary load
        (None when the vehicle has none).
    notes : tuple of str
    row_notes : tuple of str
        Per speed: why the drive cannot hold it ("" where it can).
    """

    vehicle: "Vehicle"
    curve: object
    ambient_temperature_c: float | None
    notes: tuple = ()
    row_notes: tuple = ()
    units: str = "metric"

    def to_dict(self) -> dict:
        """The curve's document with ``ambient_temperature_c`` and ``notes``, in the
        report's units."""
        from .metrics import convert_document

        data = self.curve.to_dict()
        data["ambient_temperature_c"] = self.ambient_temperature_c
        data["notes"] = list(self.notes)
        if self.units != "metric":
            data["units"] = self.units
        return convert_document(data, self.units)


def range_speeds_kmh(from_kmh: float, to_kmh: float, step_kmh: float):
    """Speeds [km/h] from ``from_kmh`` to ``to_kmh`` (inclusive) every ``step_kmh``."""
    import numpy as np

    if not to_kmh >= from_kmh:
        raise InputError("must be at least --from-kmh", field="to_kmh")
    if (to_kmh - from_kmh) / step_kmh > MAX_RANGE_SPEEDS:
        raise InputError(f"gives more than {MAX_RANGE_SPEEDS} speeds", field="step_kmh")
    return np.arange(from_kmh, to_kmh + 1e-9 * max(1.0, to_kmh), step_kmh)


def range_curve(vehicle: "Vehicle | str | os.PathLike", speeds_kmh=None, *,
                ambient_temperature_c: float | None = None,
                units: str = "metric") -> RangeCurveReport:
    """Range and consumption at constant speeds on a level road without wind, and the
    speed of greatest range.

    Parameters
    ----------
    vehicle : Vehicle or path
        With a powertrain block.
    speeds_kmh : sequence of float, optional
        Speeds [km/h] (default 20 to 160 every 10).
    ambient_temperature_c : float, optional
        Ambient temperature [°C] for a temperature-dependent auxiliary load
        (default: the vehicle file's).
    units : {"metric", "us"}
        Units of ``to_dict()`` (the speeds are still given in km/h).
    """
    from .powertrain.curve import DEFAULT_SPEEDS_KMH
    from .powertrain.curve import range_curve as _curve

    vehicle = _vehicle(vehicle)
    speeds = DEFAULT_SPEEDS_KMH if speeds_kmh is None else speeds_kmh
    curve = _curve(vehicle, speeds, ambient_temperature_c=ambient_temperature_c)
    used, notes = _ambient(vehicle, ambient_temperature_c)
    gov = getattr(vehicle.performance, "governor_kmh", None)
    row_notes = tuple("" if ok else (
        "above the governor" if gov is not None and v > gov * (1 + 1e-12)
        else "beyond the drive's limits")
        for v, ok in zip(curve.speed_kmh, curve.feasible))
    _check_units(units)
    return RangeCurveReport(vehicle, curve, used, tuple(notes), row_notes, units)


def _ambient(vehicle, ambient_c) -> tuple:
    """The ambient temperature the curve used [°C] (None when none is used) and notes."""
    pt = vehicle.powertrain
    table_aux = (getattr(pt, "kind", None) == "electric"
                 and getattr(pt, "auxiliary_power_table_w", None) is not None)
    if table_aux:
        used = ambient_c if ambient_c is not None else pt.ambient_temperature_c
        return used, []
    if ambient_c is None:
        return None, []
    why = ("a combustion powertrain has no temperature-dependent auxiliary load here"
           if getattr(pt, "kind", None) == "combustion"
           else "the vehicle's auxiliary power is a constant (auxiliary_power_kw), not a "
                "table over temperature")
    return None, [f"--ambient-c {ambient_c:g} °C is not used: {why}"]


# ---------------------------------------------------------------------------
# compare (studies)
# ---------------------------------------------------------------------------

def compare(study: str | os.PathLike, *, draws: int | None = None, seed: int | None = None,
            series: bool = False, read: ReadOptions | None = None,
            show_progress: bool = False):
    """Run a study file: the baseline and its modifications on every profile and mix.

    Parameters
    ----------
    study : path
        Study YAML file.
    draws : int, optional
        Monte Carlo draws (overrides the study; 0 = nominal only).
    seed : int, optional
        Random seed (overrides the study).
    series : bool
        Keep the nominal time series (for the workbook's profile sheets).
    read : ReadOptions, optional
        How the study's speed files and GPS tracks are read (columns, gaps,
        smoothing), at any depth of its profile expressions.
    show_progress : bool
        A progress bar on stderr while the variants run (terminal only).

    Returns
    -------
    StudyResult
    """
    from dataclasses import replace

    from .readfiles import tracking
    from .study.engine import run_study

    if draws is not None and not 0 <= draws <= MAX_DRAWS:
        raise InputError(f"--draws must be from 0 to {MAX_DRAWS}, got {draws}")
    if seed is not None and seed < 0:
        raise InputError(f"--seed must not be negative, got {seed}")
    with tracking() as files, reading(read):
        result = run_study(study, draws=draws, seed=seed, series=series,
                           show_progress=show_progress)
    return replace(result, input_files=tuple(sorted({r.path for r in files})))


def check_outputs(paths: Sequence[str], inputs: Sequence = ()) -> None:
    """Refuse output names that cannot be written or would replace an input, before a
    long run (type by extension: .xlsx, .csv or .json)."""
    from .report.common import check_target

    for out in paths:
        check_target(out, list(inputs), suffixes=STUDY_OUTPUT_SUFFIXES)


def write_study_outputs(result, paths: Sequence[str]) -> list:
    """Write a study result to every path (by extension), all or nothing, never over one
    of the study's input files. Returns the paths written."""
    from .report.common import all_or_nothing, check_target
    from .report.output import study_inputs, write_output

    inputs = study_inputs(result)
    for out in paths:
        check_target(out, inputs)
    with all_or_nothing():
        return [write_output(result, out, inputs=inputs) for out in paths]


def headline_sentences(result) -> dict:
    """Variant → one sentence a person can forward (:mod:`tractive.study.headline`)."""
    from .study.headline import headlines

    return headlines(result)


def metric_info(key: str):
    """The registry entry of a metric key (:func:`tractive.metrics.lookup`), or None."""
    from .metrics import lookup

    return lookup(key)


def key_in_units(key: str, units: str) -> str | None:
    """The key a metric has in a unit system (None when that system does not report it)."""
    from .metrics import lookup

    m = lookup(key)
    if units == "metric" or m is None or m.system == "us" or (m.us is None and
                                                              not m.metric_only):
        return key
    return None if m.us is None else m.us.key


#: metrics drawn by :func:`write_study_plot` when none are named (first present per group)
PLOT_GROUPS = (("lap_time_s",), ("battery_wh_per_km", "battery_wh_per_mi", "fuel_l_per_100km",
                "fuel_economy_mpg", "positive_energy_wh_per_km", "positive_energy_wh_per_mi"),
               ("range_km", "range_mi"), ("top_speed_kmh", "top_speed_mph"),
               ("annual_energy_cost",))


def check_figure(path, inputs: Sequence = ()) -> None:
    """Refuse a figure name before a long run (.png, .svg or .pdf; never an input)."""
    from .report.figures import check_figure_target

    check_figure_target(path, inputs)


def write_study_plot(result, path, keys: Sequence[str] | None = None):
    """Draw a study's changes against the baseline with their intervals, one panel per
    profile or mix (see :func:`tractive.report.figures.plot_study_changes`)."""
    from .report.figures import plot_study_changes
    from .report.output import study_inputs

    if keys is None:
        present = set(result.metric_keys())
        keys = [next(k for k in g if k in present) for g in PLOT_GROUPS
                if any(k in present for k in g)]
    return plot_study_changes(result, keys, path, inputs=study_inputs(result))


def write_range_plot(reports: Sequence[RangeCurveReport], path):
    """Draw the range curves of several vehicles on one figure (range and consumption
    against speed; see :func:`tractive.report.figures.plot_range_curves`)."""
    from .report.figures import plot_range_curves

    inputs = [r.vehicle.source for r in reports if getattr(r.vehicle, "source", "")]
    return plot_range_curves([r.to_dict() for r in reports], path, inputs=inputs)


# ===========================================================================
# Coast-down: ``tractive coastdown`` and ``tractive coastdown-quick``
# (this block belongs to the coast-down code; the package is imported inside
# the functions, so importing tractive.api stays light)
# ===========================================================================

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


# ---------------------------------------------------------------------------
# lap (lap-time simulation on a circuit; see tractive.lap)
# ---------------------------------------------------------------------------

#: most laps one ``lap`` run may lay end to end for the energy figures
MAX_LAPS = 1000


@dataclass(frozen=True)
class LapReport:
    """Lap time and speeds of one vehicle on a track, with the wheel energy and, when the
    vehicle has a powertrain, fuel or battery use over ``laps`` laps.

    Attributes
    ----------
    vehicle : Vehicle
    track : tractive.lap.Track
    simulation : tractive.lap.LapSimulation
    laps : int
    energy : EnergyResult or None
        Energy over the laps (None when the car cannot complete the track).
    trace : bool
        Include the per-point trace in ``to_dict()``.
    units : {"metric", "us"}
    """

    vehicle: "Vehicle"
    track: object
    simulation: object
    laps: int = 1
    energy: object = None
    trace: bool = False
    units: str = "metric"

    def to_dict(self) -> dict:
        """``lap_time_s``, speeds, energy, ``limits_share`` (and ``trace``), in the
        report's units (US: mph, miles, feet in the trace, US gallons)."""
        from .lap.report import lap_document

        return lap_document(self)


def read_track(path, *, closed: bool | None = None, smoothing_length_m: float | None = None,
               step_m: float | None = None):
    """Read a racing line (CSV or GPX) into a :class:`tractive.lap.Track` (see
    :func:`tractive.lap.read_track`; None keeps a default)."""
    from .lap import read_track as _read

    opts = {k: v for k, v in (("smoothing_length_m", smoothing_length_m), ("step_m", step_m))
            if v is not None}
    return _read(path, closed=closed, **opts)


def lap(vehicle: "Vehicle | str | os.PathLike", track, *, laps: int = 1,
        closed: bool | None = None, mu_cornering: float | None = None,
        mu_braking: float | None = None, start_speed_kmh: float | None = None,
        smoothing_length_m: float | None = None, step_m: float | None = None,
        trace: bool = False, units: str = "metric") -> LapReport:
    """Simulate the quickest lap of a vehicle on a circuit (quasi-steady-state point
    mass; see :mod:`tractive.lap.simulate`) and the energy it takes.

    Parameters
    ----------
    vehicle : Vehicle or path
        With a ``performance`` block (drive data, ``tyre_road_friction``).
    track : Track or path
        A :class:`tractive.lap.Track` or a track file (CSV or GPX, see
        :mod:`tractive.lap.track`).
    laps : int
        Laps laid end to end for the energy figures (closed laps only), 1 to
        :data:`MAX_LAPS`.
    closed : bool, optional
        Closed lap or open stretch (default: from the file, by whether the ends meet).
    mu_cornering, mu_braking : float, optional
        Tyre-road friction for cornering and braking [-] (default: the vehicle's).
    start_speed_kmh : float, optional
        Start speed of an open stretch [km/h] (default: from rest).
    smoothing_length_m, step_m : float, optional
        Spline knot spacing and simulation step [m] for a track file.
    trace : bool
        Keep the per-point trace in ``to_dict()``.
    units : {"metric", "us"}
    """
    import numpy as np

    from .lap import Track, read_track, simulate_lap
    from .lap.simulate import TRACE_DT_S

    _check_units(units)
    if not 1 <= int(laps) <= MAX_LAPS or int(laps) != laps:
        raise InputError(f"must be a whole number from 1 to {MAX_LAPS}, got {laps}",
                         field="laps")
    vehicle = _vehicle(vehicle)
    if not isinstance(track, Track):
        opts = {k: v for k, v in (("smoothing_length_m", smoothing_length_m),
                                  ("step_m", step_m)) if v is not None}
        track = read_track(track, closed=closed, **opts)
    elif closed is not None and closed != track.closed:
        raise InputError("the track object is already closed or open; read the file "
                         "again with closed=", field="closed")
    if laps > 1 and not track.closed:
        raise InputError("an open track is driven once; more laps need a closed lap",
                         field="laps")
    if np.ndim(vehicle.mass_kg) != 0:
        raise InputError("api.lap takes one vehicle; use tractive.lap.simulate_lap for a "
                         "vehicle axis", field="vehicle")
    start = None if start_speed_kmh is None else float(start_speed_kmh) / 3.6
    sim = simulate_lap(vehicle, track, mu_cornering=mu_cornering, mu_braking=mu_braking,
                       start_speed_ms=start)
    result = None
    if np.isfinite(sim.lap_time_s):
        prof = sim.to_profile(laps=int(laps), dt_s=TRACE_DT_S)
        result = energy(vehicle, [prof]).results[0]
    return LapReport(vehicle, track, sim, int(laps), result, bool(trace), units)


def write_lap_plot(reports: Sequence[LapReport], path):
    """Draw speed against distance for one or several lap reports (the limiting regime
    shaded) over the curvature (see :func:`tractive.lap.plot.plot_laps`)."""
    from .lap.plot import plot_laps

    inputs = [r.vehicle.source for r in reports if getattr(r.vehicle, "source", "")]
    inputs += [r.track.source for r in reports if r.track.source]
    return plot_laps(reports, path, inputs=inputs)


__all__ += ["lap", "read_track", "LapReport", "write_lap_plot", "MAX_LAPS"]


# ---------------------------------------------------------------------------
# fleet
# ---------------------------------------------------------------------------

#: file types the per-vehicle fleet output may have
FLEET_OUTPUT_SUFFIXES = (".csv", ".parquet", ".xlsx")


def fleet(study: str | os.PathLike, *, workers: int | None = None,
          scheduler: str | None = None, chunk_rows: int | None = None,
          units: str = "metric", show_progress: bool = False):
    """Run a fleet study: every vehicle over its recorded trips, as it is and with each
    modification (see :mod:`tractive.fleet`).

    Parameters
    ----------
    study : path
        Study YAML file with a ``fleet: {vehicles: FILE, trips: FILE}`` block.
    workers : int, optional
        Local worker processes (default: this process).
    scheduler : str, optional
        Run under Dask: ``threads``, ``processes``, ``synchronous`` or a
        scheduler address.
    chunk_rows : int, optional
        Trip rows per batch (default from the memory budget).
    units : {"metric", "us"}
        Units of ``to_dict()`` and of the per-vehicle table.
    show_progress : bool
        Progress on stderr when stderr is a terminal.

    Returns
    -------
    tractive.fleet.FleetResult
    """
    from .fleet import run_fleet

    _check_units(units)
    if workers is not None and not 1 <= workers <= 256:
        raise InputError(f"--workers must be from 1 to 256, got {workers}", field="workers")
    if chunk_rows is not None and chunk_rows < 2:
        raise InputError(f"chunk_rows must be at least 2, got {chunk_rows}", field="chunk_rows")
    result = run_fleet(study, workers=workers, scheduler=scheduler, chunk_rows=chunk_rows,
                       show_progress=show_progress)
    return result.with_units(units)


def check_fleet_output(path, study: str | os.PathLike) -> None:
    """Refuse a fleet output name before the run (.csv, .parquet or .xlsx; never an input)."""
    from .fleet.output import check_output
    from .fleet.study import load_fleet_study, study_inputs

    check_output(path, study_inputs(load_fleet_study(study)))


def write_fleet_output(result, path):
    """Write a fleet result's per-vehicle table (.csv, .parquet) or workbook (.xlsx),
    atomically and never over an input. Returns the path written."""
    from .fleet.output import write_output
    from .fleet.study import study_inputs

    return write_output(result, path, study_inputs(result.spec))


__all__ += ["fleet", "check_fleet_output", "write_fleet_output", "FLEET_OUTPUT_SUFFIXES"]
