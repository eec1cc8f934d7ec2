"""Running a study: every variant on every profile and duty mix.

For each variant (the baseline, each modification, each combination) the
engine builds one parameter set with a leading vehicle axis of 1 + N entries
(index 0 nominal, 1 … N Monte Carlo draws, see
:mod:`tractive.study.uncertainty`) and computes, per profile, with one call
each:

* wheel energy by the UN GTR No. 15 Annex 7 method
  (:func:`tractive.demand.wheel_demand`): positive energy and its rolling,
  aero, inertia and grade parts, braking energy, per km;
* with a powertrain, its ``consume``: battery or fuel energy, per km, range,
  CO2;
* with performance data, top speed and acceleration times
  (:func:`tractive.performance.performance_summary`, all vehicles of the
  set in one vectorized call per chunk of :data:`PERFORMANCE_CHUNK`).

The draws are evaluated in chunks along the vehicle axis, each chunk in one
vectorized call, so that one call stays within a memory budget (see
:func:`chunk_size_for`); the chunk size changes no number.

Laps on a circuit
    A ``lap:TRACK`` profile (``lap:TRACK*N``: N laps end to end) is not a
    speed trace given in advance: the lap is simulated per variant and per
    Monte Carlo draw (:func:`tractive.lap.simulate_lap`, quasi-steady-state
    point mass, all vehicles of a chunk in one call along the vehicle axis),
    so a wing's grip in the corners and its drag on the straights both move
    the speed trace. Each vehicle then has its own trace, of its own
    duration: it is laid on its own uniform time grid of at most
    :data:`tractive.lap.TRACE_DT_S` (the study's ``dt_s`` does not apply) and
    the wheel energy and powertrain models run on it one vehicle at a time
    (the wheel-energy kernel and ``consume`` take a vehicle axis on the
    force, not on the time grid; about 0.5 ms per vehicle, 1 s for 2,000
    draws on a 2.7 km lap, against several seconds for the simulation
    itself). N laps of a closed lap repeat the flying lap (its start speed
    equals its finish speed), so totals (kWh, L, s beyond a limit, km) are
    N times those of one lap and the per-km figures are the lap's. The row
    gains ``lap_time_s`` (one lap) and ``lap_max_speed_kmh``. The simulation
    keeps within the drive and the tyres by construction, so the warnings
    about a profile a variant cannot follow are not raised for laps.

For every variant with a powertrain the engine also sweeps the nominal
vehicle over constant speeds (:func:`tractive.powertrain.range_curve`) and
keeps the range curve in the result, in the study's units.

Duty mixes
    A mix gives distance shares wᵢ (adding up to 100 %) of profiles. Every
    per-distance quantity of the mix is the share-weighted mean of the
    profiles' per-distance values,

        e_mix = Σ wᵢ · eᵢ        (Wh/km, L/100 km, g/km),

    which is the energy of driving wᵢ of the distance on profile i. For an
    economy (distance per energy, km/L or mpg) that is the harmonic
    combination 1 / Σ (wᵢ / economyᵢ): the 55 % city / 45 % highway combined
    fuel economy of 40 CFR 600 (Appendix II worked example: 27.7 and
    36.9 mpg → 31.2 mpg). Range, being stored energy over energy per km,
    combines the same way: 1 / Σ (wᵢ / rangeᵢ). Totals of a single run
    (kWh, L over the cycle) have no meaning for a mix and are not reported.

Economics (see :mod:`tractive.study.economics`), attribution (see
:mod:`tractive.study.attribution`) and Monte Carlo intervals are computed from
the same arrays; changes are variant minus baseline on the same profile, in
the output units.

References
----------
.. [1] UN GTR No. 15, Annex 7 (cycle energy demand).
.. [2] 40 CFR Part 600, Appendix II (combined fuel economy, 55/45 harmonic).
.. [3] US EPA (2009), EPA420-R-09-014, Appendix A (distance-weighted
   harmonic mean of fuel economies).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace

import numpy as np

from ..demand import COMPONENTS, wheel_demand
from ..errors import InputError
from ..metrics import TOTAL, attributed_keys, lookup, to_units
from ..powertrain._common import sustained_seconds
from ..progress import progress
from ..units import KMH_MS, KWH_J, MPH_MS
from . import modify
from .attribution import one_at_a_time, shapley_values, subsets
from .results import (BASELINE, COMBINATION, MODIFICATION, AttributionRow,
                      InputItem, ProfileInfo, RangeCurveSeries, StudyResult,
                      TimeSeries, VariantInfo)
from .spec import MAX_DRAWS, StudySpec, load_study, parse_lap_profile
from .money import (_KM_PER_MI, _KMH_PER_MPH, _check_money, _compare_economics, _cost_draws,
                    _derive, _economics_echo, _mix, _price_draws, _to_units)  # noqa: F401
from .rows import _row
from .uncertainty import (UNCERTAIN_PARAMS, clip, clip_powertrain, expand,
                          standard_normal_draws)

#: keys taken from a powertrain's consume(...).to_dict()
POWERTRAIN_KEYS = ("battery_energy_kwh", "battery_wh_per_km", "wall_wh_per_km", "fuel_l",
                   "fuel_l_per_100km", "co2_g_per_km", "range_km", "motor_limit_exceeded_s",
                   "engine_limit_exceeded_s")
#: time [s] the drive would need more than it has to follow a profile, and its wording
LIMIT_KEYS = {"motor_limit_exceeded_s": "the motor's peak power or torque",
              "engine_limit_exceeded_s": "the engine's full load or rev limit"}
#: keys taken from performance_summary(...).to_dict()
PERFORMANCE_KEYS = ("top_speed_kmh", "accel_0_100_kmh_s", "accel_80_120_kmh_s")
#: acceleration times of US studies: key -> (from, to) [mph], computed by
#: tractive.performance.acceleration_time_s with the exact mile (1 mi = 1609.344 m)
US_ACCEL_MPH = {"accel_0_60_mph_s": (0.0, 60.0), "accel_50_70_mph_s": (50.0, 70.0)}

def run_study(path: str | os.PathLike, *, draws: int | None = None, seed: int | None = None,
              series: bool = True, chunk_size: int | None = None,
              show_progress: bool = False) -> StudyResult:
    """Read a study file and run it.

    Parameters
    ----------
    path : str or path
        Study YAML file.
    draws : int, optional
        Monte Carlo draws (overrides the study file; 0 = nominal only).
    seed : int, optional
        Random seed (overrides the study file).
    series : bool
        Keep the nominal time series per variant and profile.
    chunk_size : int, optional
        Vehicles (nominal and draws) evaluated per vectorized call; default from
        the memory budget :data:`CHUNK_MEMORY_BYTES` (see :func:`chunk_size_for`).
        The results do not depend on it.
    show_progress : bool
        A progress bar over the variants on stderr (only when it is a terminal).
    """
    spec = load_study(path)
    return run_spec(spec, draws=draws, seed=seed, series=series, chunk_size=chunk_size,
                    show_progress=show_progress)


@dataclass(frozen=True)
class Variant:
    """A variant of the study as built: its parameter set and what defines it.

    Attributes
    ----------
    name, role : str
        Variant name and role (baseline, modification, combination).
    params : ParamSet
        Nominal vehicle (index 0) and its Monte Carlo draws along the vehicle axis.
    cost : float or None
        Cost of the modification in the study currency (None: not given).
    members : tuple of str
        Modification names (a combination's members; a modification's own name).
    changes : tuple of str
        Human-readable changes in the order they are applied.
    """

    name: str
    role: str
    params: object
    cost: float | None
    members: tuple
    changes: tuple


@dataclass(frozen=True)
class LapProfile:
    """A ``lap:`` profile: a circuit simulated per vehicle (see the module doc).

    Attributes
    ----------
    name : str
        Profile name in the study.
    track : Track
        The racing line (:func:`tractive.lap.read_track`).
    laps : int
        Laps laid end to end (1 for ``lap:TRACK``).
    """

    name: str
    track: object
    laps: int

    @property
    def stations(self) -> int:
        """Points of the simulated lap (the finish counted)."""
        return int(self.track.n_points) + 1


def run_spec(spec: StudySpec, *, draws: int | None = None, seed: int | None = None,
             series: bool = True, chunk_size: int | None = None,
             show_progress: bool = False) -> StudyResult:
    """Run a validated study (see :func:`run_study`)."""
    n, seed, inputs = _draw_settings(spec, draws, seed)
    rng = np.random.default_rng(seed)
    warnings: list[str] = []
    profiles, infos = _resolve_profiles(spec)
    variants, uncertain = _build_variants(spec, rng, n, warnings)
    prices = _price_draws(spec, rng, n, uncertain)
    costs = _cost_draws(spec, variants, rng, n, uncertain)

    raw_results, traces = {}, {}
    with progress(len(variants), f"{1 + n} vehicles per variant", quiet=not show_progress,
                  unit=" variants") as bar:
        for v in variants:
            raw_results[v.name], traces[v.name] = _evaluate(
                v.params, profiles, spec.ambient_temperature_c, chunk_size=chunk_size,
                units=spec.units)
            bar.update(1)
    laps = {p for p, prof in profiles if isinstance(prof, LapProfile)}
    _check_laps(spec, variants, raw_results, laps, n, warnings)
    infos = _lap_infos(spec, infos, traces[BASELINE], laps)
    for v in variants:
        # a simulated lap keeps within the drive and the tyres: nothing to warn about
        followed = {p: m for p, m in raw_results[v.name].items() if p not in laps}
        _note_limits(v.name, followed, n, warnings)
        if v.params.powertrain is None and v.params.performance is not None:
            _note_wheel_power(v.name, v.params,
                              {p: t[1] for p, t in traces[v.name].items() if p not in laps},
                              warnings)
    _check_money(spec, raw_results, warnings)
    derived = {v.name: _derive(spec, raw_results[v.name], prices) for v in variants}
    for v in variants:
        if v.role != BASELINE:
            _compare_economics(spec, derived[v.name], derived[BASELINE],
                               costs.get(v.name, v.cost))
    out_units = {name: {p: to_units(m, spec.units) for p, m in d.items()}
                 for name, d in derived.items()}

    order = [p for p, _ in profiles] + [mx.name for mx in spec.mixes]
    kinds = {p: "profile" for p, _ in profiles} | {mx.name: "mix" for mx in spec.mixes}
    rows = [_row(v.name, v.role, p, kinds[p], out_units[v.name][p], out_units[BASELINE][p],
                 n, spec.confidence_pct, spec.economics) for v in variants for p in order]
    variant_infos, attribution = _attribute_variants(spec, variants, profiles, order,
                                                     out_units, warnings)
    curves = [_range_curve(v.name, v.params, spec) for v in variants
              if v.params.powertrain is not None]
    series_out = [_series(v.name, p, *traces[v.name][p][:2])
                  for v in variants for p, _ in profiles] if series else []
    lap_runs = [(v.name, p, traces[v.name][p][2])
                for p, prof in profiles if isinstance(prof, LapProfile) for v in variants
                if traces[v.name].get(p) is not None]
    econ = {} if spec.economics is None else \
        _economics_echo(spec.economics, spec.units, spec.currency)
    return StudyResult(study=spec.name, source=spec.file, units=spec.units,
                       currency=spec.currency, rows=tuple(rows),
                       attribution=tuple(attribution), series=tuple(series_out),
                       range_curves=tuple(curves), inputs=tuple(inputs),
                       variants=tuple(variant_infos), profiles=tuple(infos),
                       uncertainty=_uncertainty_echo(n, seed, spec, uncertain),
                       economics=econ, warnings=tuple(dict.fromkeys(warnings)),
                       lap_runs=tuple(lap_runs))


def _draw_settings(spec: StudySpec, draws, seed) -> tuple:
    """Number of draws and seed (command line over the study file), and the inputs echo."""
    n = spec.draws if draws is None else int(draws)
    if n < 0:
        raise InputError("draws must not be negative", field="draws")
    if n > MAX_DRAWS:
        raise InputError(f"at most {MAX_DRAWS} Monte Carlo draws, got {n}", field="draws")
    inputs = list(spec.inputs)
    if draws is not None:
        inputs.append(InputItem("uncertainty", "draws", n, "", "command line"))
    if seed is not None:
        inputs.append(InputItem("uncertainty", "seed", int(seed), "", "command line"))
    return n, (spec.seed if seed is None else int(seed)), inputs


def _resolve_profiles(spec: StudySpec) -> tuple:
    """The study's profiles as ``[(name, Profile)]`` and a ProfileInfo per profile and mix."""
    from ..profiles import profile_statistics, resolve_profile

    profiles, infos = [], []
    for ps_ in spec.profiles:
        lap = parse_lap_profile(ps_.text)
        if lap is not None:
            profiles.append((ps_.name, _read_lap(spec, ps_, *lap)))
            # distance and duration: those of the baseline's lap (see _lap_infos)
            infos.append(ProfileInfo(ps_.name, "profile", ps_.text, None, None,
                                     units=spec.units))
            continue
        try:
            prof = resolve_profile(ps_.text, base_dir=spec.base_dir, dt_s=spec.dt_s)
        except InputError as exc:
            raise _profile_error(exc, spec, ps_) from None
        profiles.append((ps_.name, prof))
        stats = profile_statistics(prof).to_dict()
        infos.append(ProfileInfo(ps_.name, "profile", ps_.text, stats.get("distance_km"),
                                 stats.get("duration_s"), units=spec.units))
        if prof.distance_m <= 0:
            raise InputError("the profile covers no distance (the vehicle never moves)",
                             file=spec.file, field=ps_.field, line=ps_.line)
    for mx in spec.mixes:
        infos.append(ProfileInfo(mx.name, "mix", "", None, None, dict(mx.shares_pct),
                                 units=spec.units))
    return profiles, infos


def _read_lap(spec: StudySpec, ps_, path: str, laps: int) -> LapProfile:
    """The track of a ``lap:`` profile, read relative to the study folder."""
    from pathlib import Path

    from ..lap import read_track

    file = Path(os.path.expanduser(path))
    if not file.is_absolute() and spec.base_dir is not None:
        file = Path(spec.base_dir) / file
    try:
        track = read_track(file)
        if laps > 1 and not track.closed:
            raise InputError(f"'{path}' is an open stretch, driven once; more laps need a "
                             f"closed lap (its ends within 50 m)")
    except InputError as exc:
        raise _profile_error(exc, spec, ps_) from None
    return LapProfile(ps_.name, track, laps)


def _check_laps(spec: StudySpec, variants, raw_results, laps: set, n: int,
                warnings: list) -> None:
    """A variant whose nominal car cannot complete a lap is refused; draws that cannot
    are noted (their lap figures are left out of the intervals)."""
    where = {p.name: p for p in spec.profiles}
    for v in variants:
        for p in laps:
            t = np.asarray(raw_results[v.name][p]["lap_time_s"], float)
            if not np.isfinite(t[0]):
                ps_ = where[p]
                raise InputError(f"{v.name} cannot complete the lap '{ps_.text}' (it stalls "
                                 f"on a climb)", file=spec.file, field=ps_.field,
                                 line=ps_.line)
            if n > 0 and not np.all(np.isfinite(t[1:])):
                share = float(np.mean(~np.isfinite(t[1:]))) * 100.0
                warnings.append(f"{v.name}: {share:.2g} % of the Monte Carlo draws cannot "
                                f"complete the lap '{p}' (they stall on a climb); its "
                                f"intervals are not given")


def _lap_infos(spec: StudySpec, infos: list, base_traces: dict, laps: set) -> list:
    """ProfileInfo of each lap profile with the distance and duration of the baseline's
    nominal lap(s)."""
    from ..profiles import profile_statistics

    out = []
    for info in infos:
        if info.name in laps and info.kind == "profile":
            stats = profile_statistics(base_traces[info.name][0]).to_dict()
            info = replace(info, distance_km=stats.get("distance_km"),
                           duration_s=stats.get("duration_s"))
        out.append(info)
    return out


def _uncertainty_echo(n: int, seed: int, spec: StudySpec, uncertain) -> dict:
    """The result's ``uncertainty`` entry: draws, seed, level, uncertain inputs, method."""
    unc = {"draws": n, "seed": seed, "confidence_pct": spec.confidence_pct,
           "uncertain_parameters": sorted(set(uncertain)),
           "method": "Monte Carlo (JCGM 101:2008), common random numbers across variants"}
    if n == 0:
        unc["note"] = "no draws: intervals are the nominal values"
    elif not uncertain:
        unc["note"] = "no input carries an uncertainty: every interval has zero width"
    return unc


def _build_variants(spec: StudySpec, rng, n: int, warnings: list) -> tuple:
    """The baseline, each modification and each combination, with their draws.

    Standard normal draws are taken in a fixed order (baseline parameters, then
    each owner's changes), so that every variant shares them (common random
    numbers). Returns the variants and the list of uncertain inputs.
    """
    z_base = {name: standard_normal_draws(rng, n)
              for name in UNCERTAIN_PARAMS + ("coef0", "coef1", "coef2")}
    z_changes = {}
    for owner, changes in [("baseline", spec.baseline_changes)] + \
            [(m.name, m.changes) for m in spec.modifications]:
        z_changes[owner] = [standard_normal_draws(rng, n) for _ in changes]
    base_mc, uncertain = _build_baseline(spec, z_base, z_changes, n, warnings)
    for label, vehicle in [("baseline", spec.baseline)] + \
            [(f"modification '{m.name}'", m.vehicle) for m in spec.modifications
             if m.vehicle is not None]:
        warnings += [f"{label}: {t}" for t in tuple(vehicle.notes) + tuple(vehicle.warnings)]
    for owner, changes in [("baseline", spec.baseline_changes)] + \
            [(f"modification '{m.name}'", m.changes) for m in spec.modifications]:
        for ch in changes:
            if ch.key == "tyre_label":
                note = modify.tyre_label_note(ch.value)
                if note:
                    warnings.append(f"{owner}: {note}")

    mods = {m.name: m for m in spec.modifications}
    variants = [Variant(BASELINE, BASELINE, base_mc, None, (), ())]
    for m in spec.modifications:
        ps, unc = _build_variant(spec, [m], base_mc, z_base, z_changes, n, warnings, m.name)
        uncertain += unc
        variants.append(Variant(m.name, MODIFICATION, ps, m.cost, (m.name,), _describe([m])))
    for c in spec.combinations:
        members = [mods[k] for k in c.members]
        if sum(1 for m in members if m.vehicle is not None) > 1:
            raise InputError("a combination can hold at most one whole-vehicle modification",
                             file=spec.file, field=f"{c.field}.modifications", line=c.line)
        ps, _ = _build_variant(spec, members, base_mc, z_base, z_changes, n, warnings,
                               c.name)
        warnings += _override_notes(c.name, members)
        costs = [m.cost for m in members]
        cost = None if any(x is None for x in costs) else float(sum(costs))
        variants.append(Variant(c.name, COMBINATION, ps, cost, tuple(c.members),
                                _describe(members)))
    return variants, uncertain


def _build_baseline(spec: StudySpec, z_base, z_changes, n: int, warnings: list) -> tuple:
    """The baseline's parameter set with its draws and changes, and its uncertain inputs."""
    base_nom, stds, cov = modify.nominal_params(spec.baseline,
                                                air_density_kg_m3=spec.air_density_kg_m3)
    uncertain = [f"baseline {k} ± {v:g}" for k, v in stds.items()]
    if cov is not None:
        uncertain.append("baseline road-load coefficients (covariance)")
    base_mc, clipped = expand(base_nom, stds, cov, z_base, n)
    for ch, z in zip(spec.baseline_changes, z_changes["baseline"]):
        base_mc = _apply(base_mc, ch, z, "baseline", warnings)
        if ch.std:
            uncertain.append(f"baseline {ch.key} ± {ch.std:g}")
        if ch.key == "tyre_label":
            uncertain.append(f"baseline {_label_uncertainty(ch.value)}")
    base_pt = dict(base_mc.pt_values)
    _note_clipped(warnings, "baseline", {**clipped, **clip(base_mc.params),
                                         **clip_powertrain(base_pt)})
    return replace(base_mc, pt_values=base_pt), uncertain


def _attribute_variants(spec, variants, profiles, order, out_units, warnings) -> tuple:
    """VariantInfo of every variant and the attribution rows of those that change groups."""
    attribution = []
    infos = [VariantInfo(BASELINE, BASELINE, None, (), (), vehicle_name=spec.baseline.name)]
    base_nominal = variants[0].params.take([0])
    for v in variants[1:]:
        var_nominal = v.params.take([0])
        groups = modify.differing_groups(base_nominal, var_nominal)
        infos.append(VariantInfo(v.name, v.role, v.cost, v.changes, groups,
                                 v.members if v.role == COMBINATION else (),
                                 vehicle_name=v.params.template.name))
        if groups:
            attribution += _attribute(spec, v.name, groups, base_nominal, var_nominal,
                                      profiles, order, out_units, warnings)
    return infos, attribution


# ---------------------------------------------------------------------------
# building variants
# ---------------------------------------------------------------------------

def _describe(members) -> tuple:
    """The changes of a variant in the order they are applied.

    A whole-vehicle member is applied first, wherever it is listed; then every
    member's changes in the order listed (those of the whole-vehicle member too).
    """
    out = []
    for m in members:
        if m.vehicle is not None:
            prefix = f"{m.name}: " if len(members) > 1 else ""
            out.append(f"{prefix}vehicle {m.vehicle.name} ({m.vehicle.source or 'inline'})")
    for m in members:
        prefix = f"{m.name}: " if len(members) > 1 else ""
        out += [prefix + ch.describe() for ch in m.changes]
    return tuple(out)


def _override_notes(label, members) -> list:
    """Warnings for a combination in which a new value replaces another member's change.

    An absolute value (``mass_kg: 1600``, ``crr: 0.007``) or a tyre label (a new
    Crr) wipes out what an earlier member did to the same value: that member's
    change has no effect in the combination, although its cost is counted.
    """
    notes = []
    last = {}
    for m in members:
        for ch in m.changes:
            if ch.mode == "add" and ch.value == 0.0:
                continue        # a lone standard uncertainty: no change of the value
            key = "crr" if ch.key == "tyre_label" else ch.key
            earlier = last.get(key)
            if ch.mode == "set" and earlier is not None and earlier[0] != m.name:
                notes.append(f"combination '{label}': {ch.key} {ch.text} of '{m.name}' "
                             f"replaces {earlier[1]} of '{earlier[0]}' made before it; "
                             f"that change has no effect in the combination")
            last[key] = (m.name, f"{ch.key} {ch.text}")
    return notes


def _build_variant(spec, members, base_mc, z_base, z_changes, n, warnings, label):
    """A modification or combination built on the baseline's draws: a whole-vehicle
    member first (its rolling terms stated at the baseline mass), then every change in the
    order listed. Returns the parameter set and the uncertain inputs it adds."""
    uncertain = []
    whole = [m for m in members if m.vehicle is not None]
    if whole:
        m0 = whole[0]
        nom, stds, cov = modify.nominal_params(m0.vehicle,
                                               air_density_kg_m3=spec.air_density_kg_m3)
        if nom.form == modify.COEFFICIENT and base_mc.form == modify.COEFFICIENT:
            # state the variant's rolling coefficients at the baseline mass, so that the
            # mass rule (rolling ∝ mass) applies to the mass change alone
            p = dict(nom.params)
            ratio = base_mc.params["mass_kg"][:1] / p["mass_kg"]
            p["f0_n"] = p["f0_n"] * ratio
            p["f1_n_per_kmh"] = p["f1_n_per_kmh"] * ratio
            p["mass_base_kg"] = base_mc.params["mass_kg"][:1].copy()
            nom = replace(nom, params=p)
            if cov is not None:
                scale = np.diag([ratio[0], ratio[0], 1.0])
                cov = scale @ cov @ scale
        ps, clipped = expand(nom, stds, cov, z_base, n)
        _note_clipped(warnings, label, clipped)
        uncertain += [f"{m0.name} vehicle {k} ± {v:g}" for k, v in stds.items()]
    else:
        ps = base_mc
    for m in members:
        for ch, z in zip(m.changes, z_changes[m.name]):
            ps = _apply(ps, ch, z, f"modification '{m.name}'", warnings)
            if ch.std:
                uncertain.append(f"{m.name}: {ch.key} ± {ch.std:g}")
            if ch.key == "tyre_label":
                uncertain.append(f"{m.name}: {_label_uncertainty(ch.value)}")
    p = dict(ps.params)
    pt_values = dict(ps.pt_values)
    _note_clipped(warnings, label, {**clip(p), **clip_powertrain(pt_values)})
    return replace(ps, params=p, pt_values=pt_values), uncertain


def _profile_error(exc: InputError, spec: StudySpec, ps_) -> InputError:
    """A profile that cannot be resolved, named at its place in the study file.

    One line: ``study.yaml:LINE: driving.profiles[i]: <the profile's own error>``,
    the profile's error keeping its file and line (``nope.csv: file not found``).
    """
    if exc.file and exc.field and os.path.abspath(exc.file) == os.path.abspath(spec.file):
        return exc                  # already located in the study file
    return InputError(exc.one_line(), file=spec.file, field=ps_.field, line=ps_.line)


def _label_uncertainty(label) -> str:
    """How a tyre-label class enters the Monte Carlo (for the uncertainty summary)."""
    lo, hi = label.interval_kg_t()
    _, std = modify.tyre_label_crr(label)
    return (f"tyre_label {label.text()}: crr uniform over {lo / 1000:g} to {hi / 1000:g} "
            f"(standard deviation {std:.3g} = width / √12)")


def _apply(ps, change, z, owner, warnings):
    """Apply one change, noting an absolute value that looks like a forgotten sign."""
    out = modify.apply_change(ps, change, z)
    note = modify.absolute_change_note(ps, out, change)
    if note:
        warnings.append(f"{owner}: {note}")
    return out


def _note_clipped(warnings, label, clipped):
    """Warn for each parameter whose draws fell outside its physical limits."""
    for k, share in clipped.items():
        warnings.append(f"{label}: {share * 100:.2g} % of the Monte Carlo draws of {k} fell "
                        f"outside its physical limits and were clipped; the uncertainty is "
                        f"large against the value")


# ---------------------------------------------------------------------------
# evaluation
# ---------------------------------------------------------------------------

#: memory the Monte Carlo evaluation of one variant on one profile may take at a time [bytes]
CHUNK_MEMORY_BYTES = 256 * 2 ** 20
#: float64 values per time step and vehicle held at the peak of one evaluation: wheel
#: demand with an electric powertrain (measured with tracemalloc: about 30) or with a
#: combustion powertrain on the ``speeds`` shift rule, which evaluates the engine in the
#: one gear the rule picks (about 20 with a Willans line); and per gear of a combustion
#: powertrain on the ``efficient`` rule, which evaluates every gear at every step (about
#: 17 with a Willans line, 22 with a BSFC map); with a margin, checked by
#: tests/test_study_engine.py and benchmarks/run.py
_ARRAYS_PER_STEP = 40
_ARRAYS_PER_STEP_AND_GEAR = 24


def chunk_size_for(ps, profiles, memory_bytes: int = CHUNK_MEMORY_BYTES) -> int:
    """Vehicles evaluated per call so that one call stays within a memory budget.

    The evaluation of N vehicles on a profile of T steps holds about
    N · T · (a + b · G) float64 values at its peak, G being the number of
    gears of a combustion powertrain whose shift rule compares every gear
    (``efficient``; 0 otherwise); a and b are
    :data:`_ARRAYS_PER_STEP` and :data:`_ARRAYS_PER_STEP_AND_GEAR`, measured
    with a margin. The chunk is the largest N whose peak fits
    ``memory_bytes`` (at least 1).

    Parameters
    ----------
    ps : ParamSet
        The variant (its powertrain decides G).
    profiles : list of (name, Profile)
    memory_bytes : int
        Memory budget [bytes].
    """
    steps = max((prof.stations if isinstance(prof, LapProfile) else len(prof.time_s)
                 for _, prof in profiles), default=1)
    gears = 0
    pt = ps.powertrain
    if getattr(pt, "kind", "") == "combustion" and getattr(pt, "shift_rule", "") != "speeds":
        gears = int(getattr(getattr(pt, "gearing", None), "n_gears", 1) or 1)
    per_vehicle = 8 * steps * (_ARRAYS_PER_STEP + _ARRAYS_PER_STEP_AND_GEAR * gears)
    return max(1, int(memory_bytes // per_vehicle))


def _evaluate(ps, profiles, ambient_temperature_c=None, chunk_size=None,
              units: str = "metric") -> tuple:
    """Metric arrays (vehicle axis) per profile, and the nominal traces.

    The vehicles are evaluated in chunks along the vehicle axis of at most
    ``chunk_size`` vehicles (default: :func:`chunk_size_for`), each chunk in
    one vectorized call per profile; the metric arrays are joined again. The
    traces returned, profile name → (Profile, WheelDemand), are those of the
    first chunk (which holds the nominal vehicle, index 0); for a lap, the
    nominal vehicle's simulated trace over all its laps, and its LapSimulation
    as a third item (for the figures).
    """
    size = ps.size
    perf = _performance(ps, units=units)
    step = chunk_size_for(ps, profiles) if chunk_size is None else max(1, int(chunk_size))
    if step >= size:
        out, traces = _evaluate_chunk(ps, profiles, ambient_temperature_c)
    else:
        pieces = []
        traces = None
        for start in range(0, size, step):
            out_c, tr_c = _evaluate_chunk(ps.take(slice(start, start + step)), profiles,
                                          ambient_temperature_c, nominal=start == 0)
            pieces.append(out_c)
            if traces is None:
                traces = tr_c
        out = {name: {key: np.concatenate([piece[name][key] for piece in pieces])
                      for key in pieces[0][name]} for name in pieces[0]}
    for met in out.values():
        met.update({k: v.copy() for k, v in perf.items()})
    return out, traces


def _evaluate_chunk(ps, profiles, ambient_temperature_c=None, nominal: bool = True) -> tuple:
    """Metrics of every vehicle of ``ps`` on every profile: one vectorized call per
    profile given as a trace, one lap simulation per lap profile (see :func:`_lap_metrics`).

    Returns the metric arrays per profile and, per profile, the trace and wheel demand
    of the chunk's first vehicle (for a lap: only when ``nominal``, else None).
    """
    view = _View(ps)
    out, traces = {}, {}
    for name, prof in profiles:
        if isinstance(prof, LapProfile):
            out[name], traces[name] = _lap_metrics(ps, name, prof, ambient_temperature_c,
                                                   nominal)
        else:
            out[name], d = _trace_metrics(view, name, prof, ambient_temperature_c)
            traces[name] = (prof, d)
    return out, traces


class _View:
    """Road load, masses and vehicle of a parameter set, computed once."""

    def __init__(self, ps):
        self.size = ps.size
        self.road_load = ps.road_load()
        self.mass_kg = ps.mass_kg()
        self.inertial_mass_kg = ps.inertial_mass_kg()
        self.vehicle = ps.vehicle()


def _trace_metrics(view: _View, name: str, prof, ambient_temperature_c=None) -> tuple:
    """Wheel energy and powertrain metrics of every vehicle of a view on one trace.

    Returns the metric arrays, each of shape (N,), and the wheel demand.
    """
    size = view.size
    powertrain = view.vehicle.powertrain

    def full(x):
        return np.broadcast_to(np.asarray(x, float), (size,)).copy()

    d = wheel_demand(view.road_load, view.mass_kg, view.inertial_mass_kg, prof.time_s,
                     prof.speed_ms, prof.grade_fraction, profile=name)
    km = d.distance_m / 1000.0
    met = {"distance_km": full(km),
           "positive_energy_kwh": full(d.positive_energy_j / KWH_J),
           "negative_energy_kwh": full(d.negative_energy_j / KWH_J)}
    for comp in COMPONENTS:
        met[f"{comp}_energy_kwh"] = full(d.components_j[comp] / KWH_J)
    met["positive_energy_wh_per_km"] = full(d.positive_energy_j / 3600.0 / km)
    for comp in COMPONENTS:
        met[f"{comp}_energy_wh_per_km"] = full(d.components_j[comp] / 3600.0 / km)
    if powertrain is not None:
        res = powertrain.consume(view.vehicle, d, prof,
                                 ambient_temperature_c=ambient_temperature_c)
        data = res.to_dict() if hasattr(res, "to_dict") else dict(res)
        for key in POWERTRAIN_KEYS:
            value = data.get(key)
            if value is None:
                continue
            arr = np.asarray(value, float)
            if arr.ndim > 1 or (arr.ndim == 1 and arr.shape[0] != size):
                continue
            met[key] = full(arr)
    return met, d


def _lap_metrics(ps, name: str, lp: LapProfile, ambient_temperature_c=None,
                 nominal: bool = True) -> tuple:
    """Lap time and the energy metrics of every vehicle of ``ps`` on its simulated lap.

    One :func:`tractive.lap.simulate_lap` call for all vehicles (vehicle axis);
    then each vehicle's trace on its own time grid (:data:`tractive.lap.TRACE_DT_S`)
    through :func:`_trace_metrics`, one vehicle at a time (see the module doc).
    Totals are those of ``lp.laps`` laps (the lap's times ``laps``); a vehicle that
    cannot complete the lap gets NaN. Returns the metric arrays and, when
    ``nominal``, the first vehicle's trace over all laps and its wheel demand.
    """
    from ..lap import TRACE_DT_S, simulate_lap

    sim = simulate_lap(ps.vehicle(), lp.track)
    size = ps.size
    lap_s = np.asarray(sim.lap_time_s, float).reshape(size)
    speed_ms = np.asarray(sim.speed_ms, float).reshape(size, -1)
    rows: list = []
    trace = None
    for i in range(size):          # one trace per vehicle, each of its own duration
        if not np.isfinite(lap_s[i]):
            rows.append(None)
            continue
        one = sim.select(i)
        prof = one.to_profile(dt_s=TRACE_DT_S, name=name)
        met, d = _trace_metrics(_View(ps.take([i])), name, prof, ambient_temperature_c)
        rows.append(met)
        if i == 0 and nominal:
            trace = (prof, d, one)
            if lp.laps > 1:
                prof = one.to_profile(laps=lp.laps, dt_s=TRACE_DT_S, name=name)
                view = _View(ps.take([0]))
                trace = (prof, wheel_demand(view.road_load, view.mass_kg,
                                            view.inertial_mass_kg, prof.time_s,
                                            prof.speed_ms, prof.grade_fraction,
                                            profile=name), one)
    keys = next((list(r) for r in rows if r is not None), [])
    out = {}
    for key in keys:
        arr = np.array([np.nan if r is None or key not in r else float(r[key][0])
                        for r in rows])
        m = lookup(key)
        out[key] = arr * lp.laps if m is not None and m.kind == TOTAL else arr
    out["lap_time_s"] = lap_s
    out["lap_max_speed_kmh"] = np.where(np.isfinite(lap_s), np.max(speed_ms, axis=1) * 3.6,
                                        np.nan)
    return out, trace


#: vehicles per vectorized performance call: the top-speed and acceleration model holds
#: about 9 KiB per vehicle at its peak (6-gear engine, measured with tracemalloc), so
#: 4096 vehicles take about 40 MiB
PERFORMANCE_CHUNK = 4096


def _performance(ps, chunk_size: int | None = None, units: str = "metric") -> dict:
    """Top speed and acceleration arrays of every vehicle of the set (vehicle axis).

    All vehicles (nominal and draws) go through
    :func:`tractive.performance.performance_summary` with their fields as (N,)
    arrays, in chunks of at most ``chunk_size`` (default
    :data:`PERFORMANCE_CHUNK`) vehicles; entry i equals the one-vehicle
    result of vehicle i. A time not reached is NaN; a metric not reached by
    any vehicle is left out. In US studies (``units="us"``) the 0-60 and
    50-70 mph times of :data:`US_ACCEL_MPH` are added, from
    :func:`tractive.performance.acceleration_time_s` with the speeds in km/h
    by the exact mile.
    """
    if ps.performance is None:
        return {}
    from ..performance import acceleration_time_s, performance_summary

    size = ps.size
    step = PERFORMANCE_CHUNK if chunk_size is None else max(1, int(chunk_size))
    keys = PERFORMANCE_KEYS + (tuple(US_ACCEL_MPH) if units == "us" else ())
    out = {key: np.full(size, np.nan) for key in keys}
    for start in range(0, size, step):
        part = ps if step >= size else ps.take(slice(start, start + step))
        vehicle = part.vehicle()
        res = performance_summary(vehicle)
        for key in PERFORMANCE_KEYS:
            value = getattr(res, key)
            if value is None:
                continue
            out[key][start:start + part.size] = np.asarray(value, float)
        if units == "us":
            for key, (lo_mph, hi_mph) in US_ACCEL_MPH.items():
                t, _ = acceleration_time_s(vehicle, lo_mph * _KMH_PER_MPH,
                                           hi_mph * _KMH_PER_MPH)
                if t is not None:
                    out[key][start:start + part.size] = np.asarray(t, float)
    return {k: v for k, v in out.items() if not np.all(np.isnan(v))}


def _note_wheel_power(name, ps, demands: dict, warnings) -> None:
    """Warn where a profile asks more wheel force than the drive and tyres give.

    For a vehicle with performance data but no powertrain block: on each
    interval the nominal vehicle's wheel force is compared with the largest
    force its drive (best gear of the full-load curve or motor envelope) and
    its tyres (traction limit) give at that speed and grade
    (:func:`tractive.performance.available_wheel_force_n`).
    """
    from ..performance import available_wheel_force_n

    vehicle = ps.vehicle(0)
    for profile, d in demands.items():
        force = _nominal_force_n(d)
        iv = d.intervals
        speed = np.asarray(iv.speed_ms, float)
        avail = available_wheel_force_n(vehicle, speed, iv.sin_grade)
        over = (force > 0.0) & (force > avail * (1.0 + 1e-9) + 1e-9)
        secs = float(sustained_seconds(over, np.asarray(iv.dt_s, float)))
        if secs > 0:
            worst = float(np.max(np.where(over, force - avail, 0.0)))
            warnings.append(
                f"{name} cannot follow the profile '{profile}': for {secs:.1f} s it asks "
                f"more wheel force than its drive and tyres give at that speed (up to "
                f"{worst:.0f} N more); its energy figures are for the profile as written, "
                f"which it cannot drive")


def _note_limits(name, per_profile: dict, n: int, warnings) -> None:
    """Warn where a variant's drive cannot follow a profile (nominal vehicle or draws)."""
    for key, what in LIMIT_KEYS.items():
        in_draws = []
        for profile, met in per_profile.items():
            if key not in met:
                continue
            arr = np.asarray(met[key], float)
            nominal = float(arr[0])
            if nominal > 0.0:
                warnings.append(
                    f"{name} cannot follow the profile '{profile}': for {nominal:.1f} s it "
                    f"would need more than {what}; its energy and fuel figures are for the "
                    f"profile as written, which it cannot drive")
            elif n > 0 and np.any(arr[1:] > 0.0):
                share = float(np.mean(arr[1:] > 0.0)) * 100.0
                in_draws.append(f"'{profile}' in {share:.2g} %")
        if in_draws:
            warnings.append(f"{name}: some Monte Carlo draws cannot follow a profile (they "
                            f"would need more than {what}): {', '.join(in_draws)} of the "
                            f"draws")

# ---------------------------------------------------------------------------
# attribution
# ---------------------------------------------------------------------------

def _attribute(spec, name, groups, base_nominal, var_nominal, profiles, order, out_units,
               warnings) -> list:
    """Shapley and one-at-a-time attribution of a variant's changes to its parameter
    groups: every inner subset of groups evaluated on the nominal vehicle, batched
    along the vehicle axis."""
    all_sets = subsets(groups)
    inner = [s for s in all_sets if 0 < len(s) < len(groups)]
    values = {}
    # batch the inner subsets along the vehicle axis, one batch per powertrain/performance
    batches = {}
    for s in inner:
        merged = modify.merge_groups(base_nominal, var_nominal, s)
        key = (id(merged.powertrain), id(merged.performance), tuple(sorted(merged.pt_values)))
        batches.setdefault(key, []).append((s, merged))
    for items in batches.values():
        first = items[0][1]
        params = {k: np.concatenate([m.params[k] for _, m in items]) for k in first.params}
        pt_values = {k: np.concatenate([m.pt_values[k] for _, m in items])
                     for k in first.pt_values}
        batch = replace(first, params=params, pt_values=pt_values)
        per_profile, _ = _evaluate(batch, profiles, spec.ambient_temperature_c,
                                   units=spec.units)
        for j, (s, _) in enumerate(items):
            one = {p: {k: v[j:j + 1] for k, v in met.items()} for p, met in per_profile.items()}
            derived = _derive(spec, one)
            values[s] = {p: _to_units(m, spec.units) for p, m in derived.items()}
    values[frozenset()] = out_units[BASELINE]
    values[frozenset(groups)] = out_units[name]
    rows = []
    for p in order:
        for metric in _attributed_keys(spec.units):
            if not all(metric in values[s][p] for s in all_sets):
                continue
            f = {s: float(np.asarray(values[s][p][metric])[0]) for s in all_sets}
            if not all(np.isfinite(v) for v in f.values()):
                continue
            total = f[frozenset(groups)] - f[frozenset()]
            parts = {g: float(v) for g, v in shapley_values(groups, f).items()}
            oat = {g: float(v) for g, v in one_at_a_time(groups, f).items()}
            rows.append(AttributionRow(name, p, metric, total, parts, oat,
                                       total - sum(oat.values())))
    return rows


def _attributed_keys(units: str) -> tuple:
    """Metrics split into parameter groups, in the study's units (registry order)."""
    return attributed_keys(units)


# ---------------------------------------------------------------------------
# range against speed
# ---------------------------------------------------------------------------

#: swept constant speeds: 10 … 160 km/h every 5 km/h (metric studies) [km/h]
RANGE_SPEEDS_KMH = tuple(float(v) for v in range(10, 161, 5))
#: swept constant speeds: 5 … 100 mph every 2.5 mph (US studies) [mph]
RANGE_SPEEDS_MPH = tuple(5.0 + 2.5 * i for i in range(39))


def _range_curve(name, ps, spec) -> RangeCurveSeries:
    """Range and consumption of a variant's nominal vehicle at constant speeds.

    Uses :func:`tractive.powertrain.range_curve` on the nominal vehicle (index 0
    of the parameter set: every change applied, no draw) and states the result
    in the study's output units.
    """
    from ..powertrain import range_curve

    us = spec.units == "us"
    speeds_kmh = np.asarray(RANGE_SPEEDS_MPH) * _KMH_PER_MPH if us \
        else np.asarray(RANGE_SPEEDS_KMH)
    vehicle = ps.vehicle(0)
    curve = range_curve(vehicle, speeds_kmh, ambient_temperature_c=spec.ambient_temperature_c)
    met = {"range_km": np.asarray(curve.range_km, float)}
    if curve.kind == "electric":
        wanted = ("battery_wh_per_km", "wall_wh_per_km")
    else:
        fuel = "fuel_l_per_100km" if curve.columns.get("fuel_l_per_100km") is not None \
            else "fuel_kg_per_100km"
        wanted = (fuel, "co2_g_per_km")
    for key in wanted:
        if curve.columns.get(key) is not None:
            met[key] = np.asarray(curve.columns[key], float)
    speed = np.asarray(curve.speed_kmh, float)
    best_v, best_r = curve.best_speed_kmh, curve.best_range_km
    if us:
        columns = {"speed_mph": speed * (KMH_MS / MPH_MS), **_to_units(met, "us")}
        best = {"best_speed_mph": None if best_v is None else best_v * (KMH_MS / MPH_MS),
                "best_range_mi": None if best_r is None else best_r / _KM_PER_MI}
    else:
        columns = {"speed_kmh": speed, **met}
        best = {"best_speed_kmh": best_v, "best_range_km": best_r}
    return RangeCurveSeries(variant=name, powertrain=curve.kind, vehicle=curve.vehicle,
                            columns=columns, feasible=np.asarray(curve.feasible, bool),
                            best=best, best_at_edge=bool(curve.best_at_edge))


# ---------------------------------------------------------------------------
# time series
# ---------------------------------------------------------------------------

def _nominal_force_n(d) -> np.ndarray:
    """Wheel force [N] per interval of the nominal vehicle (index 0) of a wheel demand."""
    force = np.asarray(d.force_n)
    return force[0] if force.ndim == 2 else force


def _series(name, profile, prof, d) -> TimeSeries:
    """The nominal vehicle's time series on one profile (its own trace on a lap)."""
    force = _nominal_force_n(d)
    iv = d.intervals
    positive = np.where(force > 0, force * iv.distance_m, 0.0)
    return TimeSeries(variant=name, profile=profile, time_s=np.asarray(prof.time_s[1:], float),
                      speed_kmh=iv.speed_ms * 3.6, force_n=force.copy(),
                      power_kw=force * iv.speed_ms / 1000.0,
                      cumulative_energy_kwh=np.cumsum(positive) / KWH_J)
