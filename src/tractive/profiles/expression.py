"""Profile expressions: the text a user writes to name a profile.

Profile strings
---------------
:func:`resolve_profile` turns the text a user writes on the command line or
in a study file into a profile::

    udds                    a bundled cycle (see list_cycles(); case-insensitive)
    wltc3b:low              one phase of a bundled cycle, on its own, time from 0 s
                            (phase names are case-insensitive)
    trips/commute.csv       a speed file (see "Speed CSV files" below)
    ride.gpx                a GPS track (see "GPS tracks" below)
    steady:90kmh            constant speed for 3600 s; units kmh, mph or ms
    steady:55mph:600s       ... for 600 s (units s, min or h); the speed holds
                            from t = 0, without a run-up
    udds+hwfet              one after the other
    wltc3b*3                three times in a row
    udds*2+hwfet            ``*`` binds tighter than ``+``: (udds*2)+hwfet

Bundled cycles keep their native 1 s step whatever ``dt_s`` is (the
regulations define them second by second; resampling would change their
distance and energy); ``dt_s`` applies to files and ``steady:`` terms only,
and in a joined string that contains a bundled cycle every part is read at
1 s.

File paths are relative to ``base_dir`` when it is given (the folder of the
study file), else to the working directory. A path that contains ``+`` or
``*`` can be quoted with ``'...'`` or ``"..."``; a whole string that names an
existing ``.csv`` or ``.gpx`` file is always read as that file. A name that is
not bundled raises :class:`~tractive.errors.InputError` listing the bundled
cycles, with a did-you-mean hint.

"""

from __future__ import annotations

import os
import re
from pathlib import Path

from ..errors import InputError
from ..limits import MAX_REPEAT, MAX_USER_SPEED_KMH
from .cycles import BUNDLED_STEP_S, cycle_names, load_cycle, unknown_cycle
from .gpstrack import read_gpx
from .model import SPEED_UNITS, Profile, positive, whole
from .ops import concatenate, constant_speed, repeat
from ..reading import ReadOptions, current_options, reading
from .speedcsv import read_speed_csv

__all__ = ["resolve_profile"]


_STEADY = re.compile(
    r"^steady:\s*(?P<speed>(?:\d+\.?\d*|\.\d+)(?:e[+-]?\d+)?)\s*(?P<unit>kmh|km/h|mph|ms|m/s)"
    r"\s*(?::\s*(?P<dur>(?:\d+\.?\d*|\.\d+))\s*(?P<dunit>s|min|h))?\s*$", re.IGNORECASE)
_DURATION_S = {"s": 1.0, "min": 60.0, "h": 3600.0}


def _tokens(text: str) -> list[tuple[str, str]]:
    """Split a profile string into ('atom', text) / ('quoted', text) / ('+', '') / ('*', '')."""
    out, buf, i = [], [], 0

    def flush():
        """End the atom being read."""
        if buf:
            out.append(("atom", "".join(buf)))
            buf.clear()

    while i < len(text):
        c = text[i]
        if c in "'\"":
            end = text.find(c, i + 1)
            if end < 0:
                raise InputError(f"unclosed quote in profile '{text}'")
            if "".join(buf).strip():
                raise InputError(f"a quoted path must be a whole term in profile '{text}'")
            buf.clear()
            out.append(("quoted", text[i + 1:end]))
            i = end + 1
            continue
        if c in "+*":
            flush()
            out.append((c, ""))
        else:
            buf.append(c)
        i += 1
    flush()
    return [(k, v) for k, v in out if k != "atom" or v.strip()]


def _resolve_path(text: str, base_dir) -> Path:
    """A user path, relative to ``base_dir`` when given, ``~`` expanded."""
    p = Path(os.path.expanduser(text.strip()))
    if not p.is_absolute() and base_dir is not None:
        p = Path(base_dir) / p
    return p


def _resolve_atom(text: str, quoted: bool, base_dir, dt_s: float) -> Profile:
    """The profile one term names (file, steady: or bundled cycle)."""
    atom = text if quoted else text.strip()
    low = atom.lower()
    if quoted or low.endswith((".csv", ".gpx")):
        path = _resolve_path(atom, base_dir)
        opts = current_options()
        if low.endswith(".gpx"):
            return read_gpx(path, dt_s=dt_s, name=atom, **opts.gpx_kwargs())
        if low.endswith(".csv"):
            return read_speed_csv(path, dt_s=dt_s, name=atom, **opts.csv_kwargs())
        raise InputError(f"'{atom}': a speed file must end in .csv or .gpx")
    if low.startswith("steady:") or low == "steady":
        m = _STEADY.match(atom)
        if not m:
            raise InputError(f"cannot read '{atom}': write steady:<speed><unit>[:<duration>] "
                             f"with unit kmh, mph or ms and duration in s, min or h, "
                             f"e.g. steady:90kmh or steady:55mph:600s")
        unit = m["unit"].lower().replace("/", "")
        speed = float(SPEED_UNITS[unit](float(m["speed"])))
        if not speed * 3.6 <= MAX_USER_SPEED_KMH * (1 + 1e-12):
            raise InputError(f"'{atom}': {whole(speed * 3.6)} km/h is above the "
                             f"{MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds")
        duration = 3600.0
        if m["dur"] is not None:
            duration = float(m["dur"]) * _DURATION_S[m["dunit"].lower()]
        try:
            return constant_speed(speed, duration_s=duration, dt_s=dt_s, name=atom)
        except InputError as err:
            field = f"{err.field}: " if err.field else ""
            raise InputError(f"'{atom}': {field}{err.message}") from None
    cycle = atom.partition(":")[0].strip().lower()
    if cycle not in cycle_names():
        raise unknown_cycle(atom.partition(":")[0].strip(),
                             "; or give a .csv or .gpx file, or steady:<speed>, "
                             "e.g. steady:90kmh")
    return load_cycle(atom)       # at its native step, whatever dt_s is


def _is_bundled_atom(kind: str, text: str) -> bool:
    """True for a term that names a bundled cycle (or one of its phases)."""
    if kind != "atom":
        return False
    low = text.strip().lower()
    if low.endswith((".csv", ".gpx")) or low.startswith("steady"):
        return False
    return low.partition(":")[0].strip() in cycle_names()


def resolve_profile(text: str, base_dir=None, dt_s: float = 1.0,
                    read: ReadOptions | None = None) -> Profile:
    """The profile a user names in a string (grammar in the module docstring).

    Parameters
    ----------
    text : str
        ``udds``, ``wltc3b:low``, ``trip.csv``, ``ride.gpx``,
        ``steady:90kmh[:600s]``, ``A+B``, ``A*3``.
    base_dir : str or path, optional
        Folder that relative file paths are relative to.
    dt_s : float
        Time step [s] that speed files, GPS tracks and ``steady:`` terms are
        read at. Bundled cycles are never resampled: the regulations define
        them second by second, so they keep their native step of
        :data:`BUNDLED_STEP_S` (1 s) whatever ``dt_s`` is, and give their
        regulated distance and energy. When a joined string (``A+B``) contains
        a bundled cycle, its other terms are read at that 1 s step too, so
        that the parts can be joined (whatever ``dt_s`` is).
    read : ReadOptions, optional
        How speed files and GPS tracks are read (default: the options in force,
        see :func:`tractive.reading.reading`).

    Returns
    -------
    Profile
        Named after the text (without spaces) when it combines several terms.

    Raises
    ------
    InputError
        For unknown names, malformed strings and every problem of a file
        (naming the file, column and line); also for a speed above
        :data:`~tractive.limits.MAX_USER_SPEED_KMH` in a user file or ``steady:`` term, or an
        acceleration above :data:`~tractive.limits.MAX_USER_ACCEL_MS2` in a user file on its
        final time grid.
    """
    if read is not None:
        with reading(read):
            return resolve_profile(text, base_dir, dt_s)
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty profile: name a drive cycle, a .csv or .gpx file, or "
                         f"steady:<speed>; bundled cycles: {', '.join(cycle_names())}")
    dt_s = positive(dt_s, "dt_s")
    whole = text.strip()
    if whole.lower().endswith((".csv", ".gpx")) and _resolve_path(whole, base_dir).is_file():
        return _resolve_atom(whole, False, base_dir, dt_s)

    tokens = _tokens(text)
    if any(_is_bundled_atom(kind, value) for kind, value in tokens):
        dt_s = BUNDLED_STEP_S     # user parts joined to a bundled cycle are read at its step
    # term := atom ['*' count] ; expr := term ('+' term)*
    terms: list[tuple[Profile, int, str]] = []
    i = 0
    expect_term = True
    while i < len(tokens):
        kind, value = tokens[i]
        if expect_term:
            if kind not in ("atom", "quoted"):
                raise InputError(f"profile '{text}': expected a cycle, file or steady:<speed> "
                                 f"before or after '{kind}'")
            prof = _resolve_atom(value, kind == "quoted", base_dir, dt_s)
            count = 1
            if i + 1 < len(tokens) and tokens[i + 1][0] == "*":
                if i + 2 >= len(tokens) or tokens[i + 2][0] != "atom":
                    raise InputError(f"profile '{text}': '*' must be followed by a count")
                count_text = tokens[i + 2][1].strip()
                if not count_text.isdigit() or not 1 <= int(count_text) <= MAX_REPEAT:
                    raise InputError(f"profile '{text}': repeat count must be a whole number "
                                     f"from 1 to {MAX_REPEAT}, got '{count_text}'")
                count = int(count_text)
                i += 2
                if i + 1 < len(tokens) and tokens[i + 1][0] == "*":
                    raise InputError(f"profile '{text}': give one repeat count per term")
            label = prof.name if count == 1 else f"{prof.name}*{count}"
            terms.append((prof, count, label))
            expect_term = False
        else:
            if kind != "+":
                raise InputError(f"profile '{text}': expected '+' between terms")
            expect_term = True
        i += 1
    if expect_term:
        raise InputError(f"profile '{text}': ends with '+'; name another term after it")
    if len(terms) == 1 and terms[0][1] == 1:
        return terms[0][0]
    if len(terms) == 1:
        return repeat(terms[0][0], terms[0][1])
    flat = [p for p, count, _ in terms for _ in range(count)]
    return concatenate(flat, name="+".join(label for _, _, label in terms))
