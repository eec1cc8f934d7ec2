"""Bundled drive cycles: the index of the bundle, loading a cycle or one of its phases.

The tables live in the package ``tractive.drive_cycles`` (the repository's
``drive-cycles/`` folder) and are read through :mod:`importlib.resources`,
so an installed package finds them. Each keeps the regulation's native 1 s
step (:data:`BUNDLED_STEP_S`) and its publisher's speed unit, converted
exactly to m/s on loading.
"""

from __future__ import annotations

import difflib
import functools
import io
from dataclasses import dataclass
from importlib import resources

import numpy as np

from ..errors import InputError
from ..plain import plain
from .model import SPEED_UNITS, Phase, Profile

__all__ = ["BUNDLED_STEP_S", "CycleInfo", "list_cycles", "cycle_info", "load_cycle",
           "cycle_names", "unknown_cycle"]

#: time step of every bundled cycle [s]: the regulations define them second by second
BUNDLED_STEP_S = 1.0

_PACKAGE = "tractive.drive_cycles"


@dataclass(frozen=True)
class CycleInfo:
    """What the bundle says about one drive cycle.

    Attributes
    ----------
    name : str
        Name to load it by (``udds``).
    title : str
        Full title.
    body : str
        Issuing body.
    document : str
        Regulation that defines it.
    file : str
        Table file inside the bundle.
    speed_unit : str
        Unit of the table's speed column: ``mph`` or ``kmh``.
    phases : tuple of Phase
        Named phases (may be empty).
    published : dict
        The regulator's published figures (``duration_s``, ``distance_mi`` or
        ``distance_km``, ``max_speed_mph`` or ``max_speed_kmh``, ...), and a
        ``basis`` text saying how firm they are.
    notes : str
        Remarks on the cycle and its table.
    sha256 : str
        Fingerprint of the table file as bundled.
    """

    name: str
    title: str
    body: str
    document: str
    file: str
    speed_unit: str
    phases: tuple
    published: dict
    notes: str = ""
    sha256: str = ""

    def to_dict(self) -> dict:
        """JSON-ready data."""
        return {"name": self.name, "title": self.title, "body": self.body,
                "document": self.document, "file": self.file, "speed_unit": self.speed_unit,
                "phases": [p.to_dict() for p in self.phases],
                "published": plain(self.published), "notes": self.notes,
                "sha256": self.sha256}



@functools.lru_cache(maxsize=None)
def _index() -> tuple:
    """The bundle's index.yaml as CycleInfo records (read once)."""
    from ..spec import load_section

    with resources.as_file(resources.files(_PACKAGE) / "index.yaml") as path:
        top = load_section(path)
        out = []
        for sec in top.sections("cycles"):
            phases = tuple(Phase(p.string("name"), p.number("start_s", min=0.0, unit="s"),
                                 p.number("end_s", min=0.0, unit="s"))
                           for p in (sec.sections("phases", required=False) or []))
            published = plain(sec.raw("published", {}))
            info = CycleInfo(
                name=sec.string("name"), title=sec.string("title"), body=sec.string("body"),
                document=sec.string("document"), file=sec.string("file"),
                speed_unit=sec.string("speed_unit", choices=("mph", "kmh")),
                phases=phases, published=published,
                notes=" ".join(sec.string("notes", default="").split()),
                sha256=sec.string("sha256", default=""))
            sec.finish()
            out.append(info)
        top.finish()
    return tuple(out)


def list_cycles() -> list[CycleInfo]:
    """The bundled drive cycles, in the order of the bundle's index."""
    return list(_index())


def cycle_names() -> list[str]:
    """Names of the bundled cycles, in index order."""
    return [c.name for c in _index()]


def unknown_cycle(name: str, extra: str = "") -> InputError:
    """The error for a cycle name not in the bundle, listing them with a did-you-mean hint."""
    names = cycle_names()
    hint = difflib.get_close_matches(name.lower(), names, n=1, cutoff=0.5)
    did = f"did you mean '{hint[0]}'? " if hint else ""
    return InputError(f"unknown drive cycle '{name}'; {did}bundled cycles: {', '.join(names)}"
                      f"{extra}")


def cycle_info(name: str) -> CycleInfo:
    """The :class:`CycleInfo` of a bundled cycle (name case-insensitive)."""
    key = str(name).strip().lower()
    for info in _index():
        if info.name == key:
            return info
    raise unknown_cycle(str(name).strip())


@functools.lru_cache(maxsize=None)
def _bundled_profile(name: str) -> Profile:
    """A whole bundled cycle, read from its table (cached)."""
    info = cycle_info(name)
    where = f"{_PACKAGE}/{info.file}"
    text = (resources.files(_PACKAGE) / info.file).read_text(encoding="utf-8")
    header = [h.strip() for h in text.split("\n", 1)[0].split(",")]
    if header != ["time_s", f"speed_{info.speed_unit}"]:
        raise InputError(f"header must be time_s,speed_{info.speed_unit}", file=where, line=1)
    data = np.loadtxt(io.StringIO(text), delimiter=",", skiprows=1, ndmin=2)
    t, v = data[:, 0], data[:, 1]
    if not np.array_equal(t, np.arange(len(t), dtype=float)):
        raise InputError("time_s must be 0, 1, 2, ... s", file=where, field="time_s")
    speed_ms = SPEED_UNITS[info.speed_unit](v)
    return Profile(info.name, t, speed_ms, np.zeros_like(t), info.phases,
                   f"{info.title}; {info.document}; {info.body}")


def load_cycle(name: str) -> Profile:
    """A bundled drive cycle, or one of its phases on its own.

    Parameters
    ----------
    name : str
        ``wltc3b`` for the whole cycle, ``wltc3b:low`` for one phase (time
        restarting at 0 s, samples from the phase start to the phase end
        inclusive). Cycle and phase names are case-insensitive.

    Returns
    -------
    Profile
        1 s time step, level road, speed converted exactly to m/s from the
        table's unit.

    Raises
    ------
    InputError
        Unknown cycle (listing the bundled ones) or unknown phase (listing
        the cycle's phases).
    """
    text = str(name).strip()
    cycle, sep, phase_name = text.partition(":")
    prof = _bundled_profile(cycle_info(cycle).name)
    if not sep:
        return prof
    info = cycle_info(cycle)
    wanted = phase_name.strip().lower()
    match = [p for p in info.phases if p.name.lower() == wanted]
    if not match:
        listing = ", ".join(p.name for p in info.phases) or "none"
        hint = difflib.get_close_matches(wanted, [p.name for p in info.phases], n=1, cutoff=0.5)
        did = f"did you mean '{hint[0]}'? " if hint else ""
        raise InputError(f"unknown phase '{phase_name.strip()}' of drive cycle '{info.name}'; "
                         f"{did}its phases: {listing}")
    return _bundled_phase(info.name, match[0].name)


@functools.lru_cache(maxsize=None)
def _bundled_phase(cycle: str, phase: str) -> Profile:
    """One phase of a bundled cycle, time from 0 s (cached)."""
    info = cycle_info(cycle)
    prof = _bundled_profile(cycle)
    ph = next(p for p in info.phases if p.name == phase)
    i0, i1 = int(round(ph.start_s / prof.dt_s)), int(round(ph.end_s / prof.dt_s))
    n = i1 - i0 + 1
    return Profile(f"{info.name}:{ph.name}", np.arange(n) * prof.dt_s,
                   prof.speed_ms[i0:i1 + 1], prof.grade_fraction[i0:i1 + 1], (),
                   f"{info.title}, phase {ph.name} ({ph.start_s:g}-{ph.end_s:g} s); "
                   f"{info.document}; {info.body}")


