"""Reading a study file: baseline, modifications, driving, prices, uncertainty.

A study file is YAML whose keys carry their units as suffixes (see
docs/study-file.md for every key). Every mistake raises
:class:`~tractive.errors.InputError` naming the study file, the dotted field
and the line, before anything is computed or written.

Changes are written as in a workshop note:

* ``crr: 0.0068``   – absolute: the new value;
* ``cda_m2: +0.12``, ``mass_kg: -180`` – relative: a signed amount added;
* ``crr: -15%``     – relative in percent of the current value;
* ``cla_m2: {set: -0.2}`` / ``{add: 0.3}`` / ``{percent: -10}`` – the long
  form (needed for a negative absolute value).

A leading sign is what makes a change relative, so the value is read from the
YAML text itself (a YAML reader would turn ``+0.12`` into ``0.12``).
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, field as dc_field, replace as dc_replace
from pathlib import Path

import yaml

from ..atmosphere import ambient_air
from ..errors import InputError
from ..limits import MAX_DRAWS, MAX_REPEAT
from ..spec import Section, load_section
from ..vehicle import Vehicle, vehicle_from_section
from ..roadload import CoefficientRoadLoad
from .modify import POWERTRAIN_STD_KEYS, reference_air_density
from .tyres import parse_tyre_label
from .results import InputItem

#: Monte Carlo draws when the study does not say
DEFAULT_DRAWS = 2000
#: Monte Carlo seed when the study does not say
DEFAULT_SEED = 20240601
#: confidence level of the reported intervals when the study does not say [%]
DEFAULT_CONFIDENCE_PCT = 95.0


@dataclass(frozen=True)
class Change:
    """One change to one vehicle key.

    Attributes
    ----------
    key : str
        Target key (``cda_m2``, ``crr``, ``mass_kg``, ``powertrain.<key>``,
        ``tyre_label``, ...).
    mode : str
        ``"set"`` (absolute value), ``"add"`` (signed amount) or ``"scale"``
        (factor, from a percentage).
    value : float or str
        The value, amount or factor; a label text for ``tyre_label``.
    std : float
        Standard uncertainty this change adds to the changed value, in the
        key's unit (0 when not given).
    text : str
        The change as written.
    file, field, line : location for errors.
    explicit : bool
        Written in the long form (``{set: ...}``, ``{add: ...}``,
        ``{percent: ...}``): an absolute value is then not checked for a
        forgotten sign.
    """

    key: str
    mode: str
    value: object
    std: float = 0.0
    text: str = ""
    file: str | None = None
    field: str | None = None
    line: int | None = None
    explicit: bool = False

    def error(self, message: str) -> InputError:
        return InputError(message, file=self.file, field=self.field, line=self.line)

    def describe(self) -> str:
        if self.std and self.text.startswith("±"):
            return f"{self.key} {self.text}"        # an uncertainty alone
        if self.std:
            return f"{self.key} {self.text} (± {self.std:g})"
        return f"{self.key} {self.text}"


@dataclass(frozen=True)
class ModificationSpec:
    """A modification: a name, its cost, and its changes or a whole other vehicle."""

    name: str
    cost: float | None
    changes: tuple
    vehicle: Vehicle | None = None
    cost_std: float = 0.0
    file: str | None = None
    field: str | None = None
    line: int | None = None
    raw: dict = dc_field(default_factory=dict)


@dataclass(frozen=True)
class CombinationSpec:
    """Several modifications applied together, in the order listed."""

    name: str
    members: tuple
    field: str | None = None
    line: int | None = None


@dataclass(frozen=True)
class ProfileSpec:
    """A profile of the study: its name and the text that names it (see
    :func:`tractive.profiles.resolve_profile`, or a lap: :func:`parse_lap_profile`)."""

    name: str
    text: str
    field: str | None = None
    line: int | None = None


#: prefix of a profile simulated per variant on a circuit (``lap:circuit.csv*15``)
LAP_PREFIX = "lap:"
_LAP = re.compile(r"^lap:\s*(?P<path>.*?)\s*(?:\*\s*(?P<laps>[^*]*?)\s*)?$", re.IGNORECASE)


def parse_lap_profile(text: str):
    """The track file and lap count of a ``lap:`` profile, or None for any other text.

    ``lap:TRACK`` is one flying lap of the track file (CSV or GPX, see
    :func:`tractive.lap.read_track`) simulated for every vehicle;
    ``lap:TRACK*N`` lays N laps end to end (a closed lap, N from 1 to
    :data:`~tractive.limits.MAX_REPEAT`). A path with spaces or ``*`` may be
    quoted (``lap:'my track.csv'*5``). A ``lap:`` profile stands alone: it
    cannot be joined to other terms with ``+``.

    Returns
    -------
    (str, int) or None
        Path as written (relative to the study folder) and number of laps.

    Raises
    ------
    InputError
        For a malformed ``lap:`` text.
    """
    if not isinstance(text, str) or not text.strip().lower().startswith(LAP_PREFIX):
        return None
    body = text.strip()[len(LAP_PREFIX):].strip()
    usage = ("write lap:<track file>[*<laps>], e.g. lap:circuit.csv or lap:circuit.csv*15 "
             "(a lap profile cannot be joined to others with '+')")
    if body[:1] in ("'", '"'):
        end = body.find(body[0], 1)
        if end < 0:
            raise InputError(f"unclosed quote in profile '{text.strip()}'")
        path, rest = body[1:end], body[end + 1:].strip()
        if rest and not rest.startswith("*"):
            raise InputError(f"cannot read '{text.strip()}': {usage}")
        count = rest[1:].strip() if rest else None
    else:
        m = _LAP.match(text.strip())
        path, count = m["path"], m["laps"]
        if "*" in path:
            raise InputError(f"profile '{text.strip()}': give one lap count; quote a path "
                             f"that contains '*'")
    if not path or "+" in (count or "") or (count is None and "+" in path and
                                            not path.lower().endswith((".csv", ".gpx"))):
        raise InputError(f"cannot read '{text.strip()}': {usage}")
    laps = 1
    if count is not None:
        if not count.isdigit() or not 1 <= int(count) <= MAX_REPEAT:
            raise InputError(f"profile '{text.strip()}': the number of laps must be a whole "
                             f"number from 1 to {MAX_REPEAT}, got '{count}'")
        laps = int(count)
    return path, laps


@dataclass(frozen=True)
class MixSpec:
    """A duty mix: distance shares [%] of named profiles."""

    name: str
    shares_pct: dict
    field: str | None = None
    line: int | None = None


@dataclass(frozen=True)
class EconomicsSpec:
    """Annual use and prices. Money is in the study currency."""

    annual_distance_km: float
    fuel_price_per_l: float | None = None
    electricity_price_per_kwh: float | None = None
    charging_efficiency: float | None = None
    electricity_co2_g_per_kwh: float | None = None
    fuel_co2_g_per_l: float | None = None
    discount_rate: float = 0.0
    service_life_years: float | None = None
    vehicles: int | None = None
    fuel_price_std_per_l: float = 0.0
    electricity_price_std_per_kwh: float = 0.0
    file: str | None = None
    fields: dict = dc_field(default_factory=dict)   # key -> (field, line) for errors

    def error(self, message: str, key: str) -> InputError:
        fld, line = self.fields.get(key, (f"economics.{key}", self.fields.get("", (None, None))[1]))
        return InputError(message, file=self.file, field=fld, line=line)


@dataclass(frozen=True)
class StudySpec:
    """A validated study."""

    name: str
    file: str
    units: str
    currency: str
    baseline: Vehicle
    baseline_changes: tuple
    baseline_raw: dict
    modifications: tuple
    combinations: tuple
    profiles: tuple
    mixes: tuple
    economics: EconomicsSpec | None
    air_density_kg_m3: float | None
    air_basis: str
    ambient_temperature_c: float | None
    draws: int
    seed: int
    confidence_pct: float
    dt_s: float
    inputs: tuple
    base_dir: str


# ---------------------------------------------------------------------------
# raw scalar text (signs survive)
# ---------------------------------------------------------------------------

def _raw_scalars(path: Path) -> dict:
    """Map (line, key) → the scalar value exactly as written in the file."""
    try:
        root = yaml.compose(Path(path).read_text(encoding="utf-8"), Loader=yaml.SafeLoader)
    except (OSError, UnicodeDecodeError, yaml.YAMLError):
        return {}
    out = {}
    stack = [root] if root is not None else []
    while stack:
        node = stack.pop()
        if isinstance(node, yaml.MappingNode):
            for k, v in node.value:
                if isinstance(k, yaml.ScalarNode) and isinstance(v, yaml.ScalarNode):
                    out[(k.start_mark.line + 1, k.value)] = v.value
                stack.append(v)
        elif isinstance(node, yaml.SequenceNode):
            stack.extend(node.value)
    return out


_NUMBER = r"(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
_PCT_RE = re.compile(rf"^\s*([-+])\s*({_NUMBER})\s*%\s*$")
_SIGNED_RE = re.compile(rf"^\s*([-+])\s*({_NUMBER})\s*$")


# ---------------------------------------------------------------------------
# the reader
# ---------------------------------------------------------------------------

class _Reader:
    def __init__(self, path: Path):
        self.path = Path(path)
        self.file = str(path)
        self.raw = _raw_scalars(self.path)
        self.inputs: list[InputItem] = []
        #: vehicle files read in this study: resolved path → (Vehicle, mapping as read)
        self.vehicles: dict = {}

    def src(self, sec: Section, key: str | None = None) -> str:
        line = sec.line_of(key)
        return f"{sec.file}:{line}" if line else str(sec.file)

    def echo(self, section: str, key: str, value, unit: str, source: str, note: str = ""):
        self.inputs.append(InputItem(section, key, value, unit, source, note))

    def num(self, sec: Section, key: str, section: str, unit: str, *, default=None,
            note: str = "", **kw):
        given = sec.has(key)
        value = sec.number(key, required=default is None, default=default, unit=unit, **kw)
        if value is not None:
            self.echo(section, key, value, unit, self.src(sec, key) if given else "default",
                      "" if given else note)
        return value


def load_study(path: str | os.PathLike) -> StudySpec:
    """Read and validate a study file.

    Raises
    ------
    InputError
        Naming the study file (or the vehicle file), the field and the line.
    """
    path = Path(path)
    sec = load_section(path)
    rd = _Reader(path)
    name = sec.string("name", required=False, default=path.stem)
    rd.echo("study", "name", name, "", rd.src(sec, "name") if sec.has("name") else "default",
            "" if sec.has("name") else "the study file name")
    units = sec.string("units", required=False, default="metric", choices=("metric", "us"))
    rd.echo("study", "units", units, "", rd.src(sec, "units") if sec.has("units") else "default")
    currency = sec.string("currency", required=False, default="EUR")
    rd.echo("study", "currency", currency, "",
            rd.src(sec, "currency") if sec.has("currency") else "default")
    sec.raw("notes")

    # ambient air (for physical road loads and for CdA changes on coefficients)
    rho, air_basis, t_amb = _read_ambient(sec, rd)

    baseline, base_changes, base_raw = _read_baseline(sec.section("baseline"), rd)
    modifications = _read_modifications(sec, rd)
    combinations = _read_combinations(sec, modifications)
    profiles, mixes, dt_s = _read_driving(sec.section("driving"), rd)
    economics = _read_economics(sec, rd)
    if economics is None:
        for m in modifications:
            if m.cost is not None:
                raise InputError("a modification cost needs an economics block with "
                                 "annual_distance_km and prices", file=m.file,
                                 field=f"{m.field}.cost", line=m.line)
    draws, seed, conf = _read_uncertainty(sec, rd)
    sec.finish()
    if rho is not None:
        rd.inputs = [InputItem(i.section, i.key, i.value, i.unit, i.source,
                               "not used: the study's ambient air applies")
                     if i.key == "road_load.air_density_kg_m3" else i for i in rd.inputs]
    return StudySpec(name=name, file=str(path), units=units, currency=currency,
                     baseline=baseline, baseline_changes=base_changes, baseline_raw=base_raw,
                     modifications=tuple(modifications), combinations=tuple(combinations),
                     profiles=tuple(profiles), mixes=tuple(mixes), economics=economics,
                     air_density_kg_m3=rho, air_basis=air_basis, ambient_temperature_c=t_amb,
                     draws=draws, seed=seed,
                     confidence_pct=conf, dt_s=dt_s, inputs=tuple(rd.inputs),
                     base_dir=str(path.parent))


def _read_ambient(sec: Section, rd: _Reader):
    amb = sec.section("ambient", required=False)
    if amb is None:
        rd.echo("ambient", "air_density_kg_m3", None, "kg/m^3", "default",
                "each vehicle keeps the air of its own file; measured coefficients (and "
                "CdA changes on them) keep their reference air density")
        return None, "", None
    if amb.has("air_density_kg_m3"):
        for k in ("air_temperature_c", "air_pressure_pa", "altitude_m"):
            if amb.has(k):
                raise amb.error("give air_density_kg_m3 or the air state, not both", k)
        rho = rd.num(amb, "air_density_kg_m3", "ambient", "kg/m^3", min=0.3, max=1.6)
        amb.finish()
        return rho, "air_density_kg_m3 as given", None
    t_c = rd.num(amb, "air_temperature_c", "ambient", "°C", default=math.nan,
                 min=-60.0, max=60.0)
    p_pa = rd.num(amb, "air_pressure_pa", "ambient", "Pa", default=math.nan,
                  min=30000.0, max=110000.0)
    alt = rd.num(amb, "altitude_m", "ambient", "m", default=math.nan, min=-500.0, max=6000.0)
    amb.finish()
    # the echo for missing values says "default" with NaN; replace with what ISA gives
    air = ambient_air(temperature_c=None if math.isnan(t_c) else t_c,
                      pressure_pa=None if math.isnan(p_pa) else p_pa,
                      altitude_m=None if math.isnan(alt) else alt)
    rd.inputs = [i for i in rd.inputs if not (i.section == "ambient" and i.source == "default")]
    rd.echo("ambient", "air_density_kg_m3", air["density_kg_m3"], "kg/m^3", "computed",
            air["basis"])
    return air["density_kg_m3"], air["basis"], (None if math.isnan(t_c) else t_c)


def _vehicle_from(sec: Section, key: str, rd: _Reader) -> tuple:
    """A vehicle given as a file path or inline under ``key``: (Vehicle, source, mapping).

    A file is read and parsed once per study (cached by its resolved path); the
    mapping as read is kept for the inputs echo only.
    """
    value = sec.raw(key)
    if value is None:
        raise sec.error("missing required key", key)
    if isinstance(value, dict):
        veh = vehicle_from_section(sec.section(key), name_default="baseline")
        return veh, rd.src(sec, key), value
    vpath = sec.path(key)
    if not vpath.is_file():
        raise sec.error(f"vehicle file not found: {vpath}", key)
    resolved = vpath.resolve()
    if resolved not in rd.vehicles:
        try:
            vsec = load_section(vpath)
            rd.vehicles[resolved] = (vehicle_from_section(vsec), vsec.data)
        except InputError as exc:
            if exc.file is None:
                raise exc.located(file=str(vpath)) from None
            raise
    veh, raw = rd.vehicles[resolved]
    if veh.source != str(vpath):
        veh = dc_replace(veh, source=str(vpath))   # the path as this study names it
    return veh, str(vpath), raw


def _read_baseline(sec: Section, rd: _Reader):
    veh, src, raw = _vehicle_from(sec, "vehicle", rd)
    rd.echo("baseline", "vehicle", veh.name, "", src)
    _echo_vehicle(rd, "baseline", veh, src, raw)
    changes = ()
    if sec.has("changes"):
        changes = _read_changes(sec.section("changes"), rd, "baseline", own_values=True)
    sec.finish()
    return veh, changes, raw


def _unit_of_key(key: str) -> str:
    """Unit text from a key's suffix (``battery_usable_kwh`` → ``kWh``)."""
    suffixes = (("_m2", "m^2"), ("_kg_m3", "kg/m^3"), ("_kwh", "kWh"), ("_kw", "kW"),
                ("_l_per_h", "L/h"), ("_kg_per_h", "kg/h"), ("_kg", "kg"), ("_kmh", "km/h"),
                ("_rpm", "rpm"),
                ("_nm", "N m"), ("_m", "m"), ("_l", "L"), ("_c", "°C"), ("_s", "s"),
                ("_pct", "%"), ("_kpa", "kPa"), ("_per_h", "1/h"))
    for suffix, unit in suffixes:
        if key.endswith(suffix):
            return unit
    return ""


def _echo_block(rd: _Reader, section: str, prefix: str, data, src: str):
    if isinstance(data, dict):
        for k, v in data.items():
            _echo_block(rd, section, f"{prefix}.{k}", v, src)
    else:
        value = data if isinstance(data, (int, float, str, bool)) or data is None else str(
            [float(x) if isinstance(x, (int, float)) else x for x in data]
            if isinstance(data, list) else data)
        rd.echo(section, prefix, value, _unit_of_key(prefix.rsplit(".", 1)[-1]), src)


def _echo_vehicle(rd: _Reader, section: str, veh: Vehicle, src: str, raw=None):
    rd.echo(section, "mass_kg", veh.mass_kg, "kg", src)
    rd.echo(section, "rotating_mass_fraction", veh.rotating_mass_fraction, "", src)
    units = {"cda_m2": "m^2", "crr": "", "crr_per_kmh": "1/(km/h)", "cla_m2": "m^2",
             "air_density_kg_m3": "kg/m^3", "f0_n": "N", "f1_n_per_kmh": "N/(km/h)",
             "f2_n_per_kmh2": "N/(km/h)^2", "crr_std": "", "cda_std_m2": "m^2",
             "cla_std_m2": "m^2", "a_lbf": "lbf", "b_lbf_per_mph": "lbf/mph",
             "c_lbf_per_mph2": "lbf/mph^2", "reference_air_density_kg_m3": "kg/m^3"}
    for k, v in veh.road_load.to_dict().items():
        if k in ("form", "air_basis", "cda_basis"):
            continue
        if k == "covariance":
            rd.echo(section, "road_load.covariance", str(v), "GTR 15 units", src)
            continue
        rd.echo(section, f"road_load.{k}", v, units.get(k, ""), src)
    if isinstance(veh.road_load, CoefficientRoadLoad) and \
            veh.road_load.reference_air_density_kg_m3 is None:
        rho_ref, basis = reference_air_density(veh.road_load)
        rd.echo(section, "road_load.reference_air_density_kg_m3", rho_ref, "kg/m^3", "default",
                basis)
    if veh.extras.get("mass_std_kg"):
        rd.echo(section, "mass_std_kg", veh.extras["mass_std_kg"], "kg", src)
    for block in ("powertrain", "performance"):
        if isinstance(raw, dict) and isinstance(raw.get(block), dict):
            _echo_block(rd, section, block, raw[block], src)


def _read_modifications(sec: Section, rd: _Reader, extra_keys=()) -> list:
    """Parse ``modifications``; ``extra_keys`` are further keys a caller reads itself
    (a fleet study's ``applies_to``)."""
    mods = []
    seen = {"baseline"}
    for m in sec.sections("modifications"):
        name = m.string("name")
        if name in seen:
            raise m.error(f"the name '{name}' is used twice (or is reserved)", "name")
        seen.add(name)
        cost = m.number("cost", required=False)
        if cost is not None:
            rd.echo(f"modification {name}", "cost", cost, "money", rd.src(m, "cost"))
        cost_std = 0.0
        if m.has("cost_std"):
            if cost is None:
                raise m.error("cost_std needs a cost", "cost_std")
            cost_std = rd.num(m, "cost_std", f"modification {name}", "money", min=0.0)
        vehicle = None
        raw = {}
        if m.has("vehicle"):
            vehicle, src, raw = _vehicle_from(m, "vehicle", rd)
            rd.echo(f"modification {name}", "vehicle", vehicle.name, "", src)
            _echo_vehicle(rd, f"modification {name}", vehicle, src, raw)
        changes = ()
        if m.has("changes"):
            changes = _read_changes(m.section("changes"), rd, f"modification {name}",
                                    own_values=vehicle is not None)
        if vehicle is None and not changes:
            raise m.error("a modification needs changes or a vehicle file", "changes")
        m.raw("notes")
        m.finish(allowed_extra=extra_keys)
        mods.append(ModificationSpec(name=name, cost=cost, changes=changes, vehicle=vehicle,
                                     cost_std=cost_std, file=m.file, field=m.prefix, line=m.line, raw=raw))
    if not mods:
        raise sec.error("list at least one modification", "modifications")
    return mods


#: standard-uncertainty keys and the key each belongs to (powertrain keys: see
#: :data:`tractive.study.modify.POWERTRAIN_UNCERTAIN`)
STD_KEYS = {"mass_std_kg": "mass_kg", "crr_std": "crr", "cda_std_m2": "cda_m2",
            "cla_std_m2": "cla_m2", **POWERTRAIN_STD_KEYS}


def _read_changes(sec: Section, rd: _Reader, section: str, own_values: bool = False) -> tuple:
    """Parse a ``changes`` mapping into :class:`Change` objects (targets unchecked).

    ``own_values``: a standard uncertainty without a change of its key states the
    uncertainty of the vehicle's own value (the baseline, or the vehicle of a
    whole-vehicle modification); elsewhere it needs a change of its key.
    """
    out = []
    stds = {}
    for key in sec.keys():
        key = str(key)
        line = sec.line_of(key)
        fld = sec.field(key)
        value = sec.raw(key)
        if key in STD_KEYS:
            stds[key] = sec.number(key, min=0.0)
            continue
        if key.startswith("powertrain.") and re.search(r"_std(_|$)", key.rsplit(".", 1)[-1]):
            raise sec.error("this powertrain key cannot carry a standard uncertainty; "
                            "possible: " + ", ".join(POWERTRAIN_STD_KEYS), key)
        if key == "tyre_label":
            try:
                label = parse_tyre_label(value)
            except ValueError as exc:
                raise sec.error(str(exc), key) from None
            text = label.text()
            out.append(Change(key, "set", label, 0.0, text, sec.file, fld, line,
                              isinstance(value, dict)))
            rd.echo(section, key, text, "", rd.src(sec, key),
                    "" if label.stated else "regulation not written: the one in force for "
                    "new labels")
            continue
        explicit = isinstance(value, dict)
        mode, val, text = _change_value(sec, key, value, rd.raw.get((line, key)))
        if mode == "scale" and val < 0:
            raise sec.error(f"a change of {text} would make the value negative", key)
        out.append(Change(key, mode, val, 0.0, text, sec.file, fld, line, explicit))
        rd.echo(section, key, text, _unit_of_key(key) if mode != "scale" else "%",
                rd.src(sec, key))
    final = _attach_stds(sec, rd, section, out, stds, own_values)
    if not final:
        raise sec.error("list at least one change")
    return tuple(final)


def _change_value(sec: Section, key: str, value, raw: str | None) -> tuple:
    """(mode, value, text) of one change: the long form ``{set|add|percent: x}`` or the
    short form as written (``raw``: the scalar text, so that a sign survives)."""
    if isinstance(value, dict):
        sub = sec.section(key)
        present = [k for k in ("set", "add", "percent") if sub.has(k)]
        if len(present) != 1:
            raise sub.error("give exactly one of set, add or percent")
        mode_key = present[0]
        v = sub.number(mode_key)
        sub.finish()
        if mode_key == "percent":
            mode, val, text = "scale", 1.0 + v / 100.0, f"{v:+g}%"
        elif mode_key == "add":
            mode, val, text = "add", v, f"{v:+g}"
        else:
            mode, val, text = "set", v, f"{v:g}"
    else:
        if raw is None:
            raw = str(value)
        if isinstance(value, bool) or value is None or isinstance(value, (list, dict)):
            raise sec.error(f"must be a number, a signed change (+0.1, -15%), got "
                            f"{value!r}", key)
        m_pct = _PCT_RE.match(raw)
        m_sign = _SIGNED_RE.match(raw)
        if m_pct:
            pct = float(m_pct.group(2)) * (-1.0 if m_pct.group(1) == "-" else 1.0)
            mode, val, text = "scale", 1.0 + pct / 100.0, f"{pct:+g}%"
        elif raw.strip().endswith("%"):
            raise sec.error(f"write a percent change with its sign, like -15% or +10%, "
                            f"got '{raw}'", key)
        elif m_sign:
            amount = float(m_sign.group(2)) * (-1.0 if m_sign.group(1) == "-" else 1.0)
            mode, val, text = "add", amount, f"{amount:+g}"
        elif isinstance(value, (int, float)) and raw.lstrip()[:1] in ("+", "-"):
            # a signed number in another YAML spelling (+1_000, +0x10): the sign
            # written makes it a signed amount; YAML has already applied it
            amount = float(value)
            mode, val, text = "add", amount, f"{amount:+g}"
        elif isinstance(value, (int, float)):
            mode, val, text = "set", float(value), f"{float(value):g}"
        else:
            raise sec.error(f"must be a number (new value), a signed amount (+0.12) or a "
                            f"signed percent (-15%), got '{raw}'", key)
        if not math.isfinite(float(val)):
            raise sec.error("must be finite", key)
    return mode, val, text


def _attach_stds(sec: Section, rd: _Reader, section: str, changes: list, stds: dict,
                 own_values: bool) -> list:
    """Standard uncertainties attached to the changes of their keys; a lone one states the
    uncertainty of the vehicle's own value where ``own_values`` allows it."""
    # attach standard uncertainties to their changes
    final = []
    for ch in changes:
        std_key = next((s for s, k in STD_KEYS.items() if k == ch.key), None)
        if std_key and std_key in stds:
            ch = dc_replace(ch, std=stds.pop(std_key))
            rd.echo(section, std_key, ch.std, _unit_of_key(std_key), rd.src(sec, std_key))
        final.append(ch)
    for std_key, v in stds.items():
        target = STD_KEYS[std_key]
        if own_values:
            # on the baseline (or a whole other vehicle) a standard uncertainty alone
            # states the uncertainty of the vehicle's own value
            final.append(Change(target, "add", 0.0, v, f"± {v:g}", sec.file,
                                sec.field(std_key), sec.line_of(std_key)))
            rd.echo(section, std_key, v, _unit_of_key(std_key), rd.src(sec, std_key))
            continue
        raise sec.error(f"{std_key} needs a change of {target} in the same modification "
                        "(alone it is allowed on the baseline and with a vehicle file)",
                        std_key)
    return final


def _read_combinations(sec: Section, mods: list) -> list:
    names = [m.name for m in mods]
    out = []
    if not sec.has("combinations"):
        return out
    seen = set(names) | {"baseline"}
    for c in sec.sections("combinations"):
        name = c.string("name")
        if name in seen:
            raise c.error(f"the name '{name}' is used twice (or is reserved)", "name")
        seen.add(name)
        raw = c.raw("modifications")
        if raw == "all":
            members = tuple(names)
        else:
            entries = c.items("modifications")
            members = []
            for item, fld, line in entries:
                if not isinstance(item, str) or item not in names:
                    hint = f"; known: {', '.join(names)}"
                    raise InputError(f"no modification named {item!r}{hint}", file=c.file,
                                     field=fld, line=line)
                if item in members:
                    raise InputError(f"'{item}' is listed twice", file=c.file, field=fld,
                                     line=line)
                members.append(item)
            if len(members) < 2:
                raise c.error("a combination needs at least two modifications",
                              "modifications")
            members = tuple(members)
        if len(members) < 2:
            raise c.error("a combination needs at least two modifications", "modifications")
        c.finish()
        out.append(CombinationSpec(name, members, c.prefix, c.line))
    return out


def _read_driving(sec: Section, rd: _Reader):
    profiles = []
    names = set()
    entries = sec.items("profiles")
    if not entries:
        raise sec.error("list at least one profile", "profiles")
    for item, fld, line in entries:
        if isinstance(item, (str, int, float)) and not isinstance(item, bool):
            text = str(item)
            name = text
        elif isinstance(item, dict):
            p = Section(item, file=sec.file, prefix=fld, line=line)
            text = p.string("profile")
            name = p.string("name", required=False, default=text)
            line = p.line_of("profile")
            p.finish()
        else:
            raise InputError("must be a profile (cycle name, file, steady:90kmh, ...) or a "
                             "mapping with name and profile", file=sec.file, field=fld,
                             line=line)
        if name in names:
            raise InputError(f"the profile name '{name}' is used twice", file=sec.file,
                             field=fld, line=line)
        names.add(name)
        try:
            parse_lap_profile(text)
        except InputError as exc:
            raise InputError(exc.message, file=sec.file, field=fld, line=line) from None
        profiles.append(ProfileSpec(name, text, fld, line))
        rd.echo("driving", f"profile {name}", text, "", f"{sec.file}:{line}")
    mixes = []
    for m in sec.sections("mixes", required=False) or []:
        name = m.string("name")
        if name in names:
            raise m.error(f"the name '{name}' is already a profile or mix", "name")
        names.add(name)
        shares_sec = m.section("shares_pct")
        shares = {}
        for key in shares_sec.keys():
            v = shares_sec.number(str(key), min=0.0, max=100.0, unit="%")
            shares[str(key)] = v
        if not shares:
            raise m.error("list the profiles and their distance shares", "shares_pct")
        total = sum(shares.values())
        if abs(total - 100.0) > 1e-6:
            # no rounding tolerance: shares that add up to 99.99 % would silently
            # weight the mix differently from what is written
            raise m.error(f"shares must add up to 100 %, they add up to {total:.10g} %; "
                          "round one share so that they do (33.33 + 66.67)", "shares_pct")
        profile_names = [p.name for p in profiles]
        for key in shares:
            if key not in profile_names:
                # a share may name any profile text not listed: run it as a profile too
                try:
                    parse_lap_profile(key)
                except InputError as exc:
                    raise InputError(exc.message, file=sec.file, field=shares_sec.field(key),
                                     line=shares_sec.line_of(key)) from None
                profiles.append(ProfileSpec(key, key, shares_sec.field(key),
                                            shares_sec.line_of(key)))
                profile_names.append(key)
                names.add(key)
        m.finish()
        mixes.append(MixSpec(name, shares, m.prefix, m.line))
        rd.echo("driving", f"mix {name}",
                ", ".join(f"{k} {v:g} %" for k, v in shares.items()), "% of distance",
                rd.src(m, "shares_pct"))
    dt_s = rd.num(sec, "dt_s", "driving", "s", default=1.0, min=0.01, max=60.0,
                  note="time step for user profiles")
    sec.finish()
    return profiles, mixes, dt_s


def _read_economics(sec: Section, rd: _Reader, *,
                    distance_required: bool = True) -> EconomicsSpec | None:
    """Parse ``economics``; without ``distance_required`` the annual distance may be
    left out (None: a fleet study takes each vehicle's from its table)."""
    e = sec.section("economics", required=False)
    if e is None:
        return None
    fields = {"": (e.prefix, e.line)}

    def loc(key):
        fields[key] = (e.field(key), e.line_of(key))

    if e.has("annual_distance_km") and e.has("annual_distance_mi"):
        raise e.error("give annual_distance_km or annual_distance_mi, not both",
                      "annual_distance_mi")
    if e.has("annual_distance_mi"):
        from ..units import MILE_M
        dist = rd.num(e, "annual_distance_mi", "economics", "mi", min=0.0,
                      min_inclusive=False) * MILE_M / 1000.0
    elif distance_required or e.has("annual_distance_km"):
        dist = rd.num(e, "annual_distance_km", "economics", "km", min=0.0, min_inclusive=False)
    else:
        dist = None
    loc("annual_distance_km")
    if e.has("fuel_price_per_l") and e.has("fuel_price_per_gal"):
        raise e.error("give fuel_price_per_l or fuel_price_per_gal, not both",
                      "fuel_price_per_gal")
    fuel = None
    if e.has("fuel_price_per_gal"):
        from ..units import US_GALLON_L
        fuel = rd.num(e, "fuel_price_per_gal", "economics", "money/US gal", min=0.0) \
            / US_GALLON_L
    elif e.has("fuel_price_per_l"):
        fuel = rd.num(e, "fuel_price_per_l", "economics", "money/L", min=0.0)
    loc("fuel_price_per_l")
    elec = None
    if e.has("electricity_price_per_kwh"):
        elec = rd.num(e, "electricity_price_per_kwh", "economics", "money/kWh", min=0.0)
    loc("electricity_price_per_kwh")
    charge = None
    if e.has("charging_efficiency"):
        charge = rd.num(e, "charging_efficiency", "economics", "", min=0.3, max=1.0)
    loc("charging_efficiency")
    grid_co2 = None
    if e.has("electricity_co2_g_per_kwh"):
        grid_co2 = rd.num(e, "electricity_co2_g_per_kwh", "economics", "g/kWh", min=0.0)
    loc("electricity_co2_g_per_kwh")
    if e.has("fuel_co2_g_per_l") and e.has("fuel_co2_g_per_gal"):
        raise e.error("give fuel_co2_g_per_l or fuel_co2_g_per_gal, not both",
                      "fuel_co2_g_per_gal")
    fuel_co2 = None
    if e.has("fuel_co2_g_per_gal"):
        from ..units import US_GALLON_L
        fuel_co2 = rd.num(e, "fuel_co2_g_per_gal", "economics", "g/US gal", min=0.0) \
            / US_GALLON_L
    elif e.has("fuel_co2_g_per_l"):
        fuel_co2 = rd.num(e, "fuel_co2_g_per_l", "economics", "g/L", min=0.0)
    loc("fuel_co2_g_per_l")
    rate = rd.num(e, "discount_rate_pct", "economics", "%/year", default=0.0, min=-50.0,
                  max=100.0, note="no discounting")
    loc("discount_rate_pct")
    life = None
    if e.has("service_life_years"):
        life = rd.num(e, "service_life_years", "economics", "years", min=0.0,
                      min_inclusive=False, max=100.0)
    loc("service_life_years")
    fleet = None
    if e.has("vehicles"):
        fleet = e.integer("vehicles", min=1, max=10_000_000)
        rd.echo("economics", "vehicles", fleet, "", rd.src(e, "vehicles"))
    loc("vehicles")
    fuel_std, elec_std = _price_stds(e, rd, fuel, elec)
    e.finish()
    return EconomicsSpec(annual_distance_km=dist, fuel_price_per_l=fuel,
                         electricity_price_per_kwh=elec, charging_efficiency=charge,
                         electricity_co2_g_per_kwh=grid_co2, fuel_co2_g_per_l=fuel_co2,
                         discount_rate=rate / 100.0, service_life_years=life, vehicles=fleet,
                         fuel_price_std_per_l=fuel_std, electricity_price_std_per_kwh=elec_std,
                         file=e.file, fields=fields)


def _price_stds(e: Section, rd: _Reader, fuel, elec) -> tuple:
    """Standard uncertainties of the fuel price [money/L] and electricity price
    [money/kWh] (0 when not given); each needs its price."""
    if e.has("fuel_price_std_per_l") and e.has("fuel_price_std_per_gal"):
        raise e.error("give fuel_price_std_per_l or fuel_price_std_per_gal, not both",
                      "fuel_price_std_per_gal")
    fuel_std = elec_std = 0.0
    for key, unit in (("fuel_price_std_per_l", "money/L"),
                      ("fuel_price_std_per_gal", "money/US gal")):
        if e.has(key):
            if fuel is None:
                raise e.error(f"{key} needs a fuel price", key)
            fuel_std = rd.num(e, key, "economics", unit, min=0.0)
            if key.endswith("_gal"):
                from ..units import US_GALLON_L
                fuel_std /= US_GALLON_L
    if e.has("electricity_price_std_per_kwh"):
        if elec is None:
            raise e.error("electricity_price_std_per_kwh needs electricity_price_per_kwh",
                          "electricity_price_std_per_kwh")
        elec_std = rd.num(e, "electricity_price_std_per_kwh", "economics", "money/kWh",
                          min=0.0)
    return fuel_std, elec_std


def _read_uncertainty(sec: Section, rd: _Reader):
    u = sec.section("uncertainty", required=False)
    if u is None:
        u = Section({}, file=sec.file, prefix="uncertainty", line=sec.line)
    draws = u.integer("draws", required=False, default=DEFAULT_DRAWS, min=0, max=MAX_DRAWS)
    rd.echo("uncertainty", "draws", draws, "", rd.src(u, "draws") if u.has("draws")
            else "default")
    seed = u.integer("seed", required=False, default=DEFAULT_SEED, min=0)
    rd.echo("uncertainty", "seed", seed, "", rd.src(u, "seed") if u.has("seed") else "default")
    conf = rd.num(u, "confidence_pct", "uncertainty", "%", default=DEFAULT_CONFIDENCE_PCT,
                  min=50.0, max=99.9)
    u.finish()
    return draws, seed, conf
