"""The bad-input corpus: every command fed broken files, values and output paths.

Each case builds a real fault in a fresh folder and runs the command in-process.
The contract for a refused input (docs/commands.md, "Commands"):

* exit status 2 and exactly one line on stderr, ``tractive: error: ...``, naming
  the file and the field or line, or the option;
* no traceback;
* no output file created or replaced, no temporary ``.NAME.*.tmp`` left;
* inputs untouched (bytes and modification time compared before and after);
* no raw control character on stderr (ESC, BEL and C1 codes appear escaped);
* numbers in the message in a sensible precision (never hundreds of digits).

A few cases are accepted inputs that readers tend to get wrong (a byte-order mark,
CRLF line ends, text that looks like a spreadsheet formula); they check the result.
The classes are listed in tests/bad_inputs.md. The count of cases is printed by
``test_corpus_size`` (run pytest with ``-s`` to see it) and must stay at least 80.
"""

from __future__ import annotations

import errno
import os
import re
import shutil
import signal
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import pytest

from conftest import EXAMPLES, ROOT, run_cli
from tractive.limits import MEMORY_BUDGET_BYTES

AS_ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
#: C0 controls but tab and newline, DEL and C1: never raw on the terminal
CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")
#: the budget as the messages word it
BUDGET_TEXT = f"{MEMORY_BUDGET_BYTES / 2 ** 30:g} GiB"


# --------------------------------------------------------------------------- the folder

VEHICLE = (EXAMPLES / "vehicles" / "hatchback.yaml").read_text()
EV = (EXAMPLES / "vehicles" / "electric_van.yaml").read_text()
TRACK_CAR = (EXAMPLES / "vehicles" / "track_car.yaml").read_text()

STUDY = """\
name: corpus study
currency: EUR
baseline:
  vehicle: v.yaml
modifications:
  - name: ballast
    changes:
      mass_kg: +10
driving:
  profiles:
    - name: town
      profile: udds
uncertainty:
  draws: 0
"""

#: a road-load block as tractive coastdown -o writes it (numbers rounded)
ROAD_LOAD_BLOCK = """\
test_mass_kg: 1380.0
test_rotating_mass_fraction: 0.03
road_load:
  f0_n: 130.9
  f1_n_per_kmh: 0.525
  f2_n_per_kmh2: 0.0318
"""

TRIP = "time_s,speed_kmh\n" + "".join(
    f"{t},{v}\n" for t, v in enumerate([0, 4, 9, 14, 18, 21, 22, 22, 20, 15, 9, 4, 0]))

GPX_HEAD = ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<gpx version="1.1" creator="corpus" xmlns="http://www.topografix.com/GPX/1/1">\n')


def gpx_points(points) -> str:
    """A GPX track with one segment of (lat, lon, time text or None)."""
    rows = []
    for lat, lon, when in points:
        t = f"<time>{when}</time>" if when else ""
        rows.append(f'<trkpt lat="{lat}" lon="{lon}">{t}</trkpt>')
    return GPX_HEAD + "<trk><trkseg>\n" + "\n".join(rows) + "\n</trkseg></trk></gpx>\n"


GOOD_GPX = gpx_points([(46 + 0.0001 * i, 7.0, f"2024-05-01T08:00:{2 * i:02d}Z")
                       for i in range(20)])


def coast_log(rows=None, header="time_s,speed_kmh") -> str:
    """A small coast-down log: 60 s coasting from 110 km/h (errors come before the fit)."""
    if rows is None:
        rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f}" for t in range(120)]
    return header + "\n" + "\n".join(rows) + "\n"


def make_world(d: Path) -> None:
    """The good files every case starts from."""
    (d / "v.yaml").write_text(VEHICLE)
    (d / "ev.yaml").write_text(EV)
    (d / "track_car.yaml").write_text(TRACK_CAR)
    (d / "study.yaml").write_text(STUDY)
    (d / "trip.csv").write_text(TRIP)
    (d / "ride.gpx").write_text(GOOD_GPX)
    (d / "log.csv").write_text(coast_log())
    (d / "rl.yaml").write_text(ROAD_LOAD_BLOCK)
    shutil.copy(EXAMPLES / "track-wing" / "circuit.csv", d / "circuit.csv")


def snapshot(d: Path) -> dict:
    """Every entry under ``d``: bytes and modification time of regular files, the kind of
    the others (a FIFO is never opened)."""
    out = {}
    for p in sorted(d.rglob("*")):
        if p.is_symlink():
            out[str(p.relative_to(d))] = ("link", os.readlink(p))
        elif p.is_file():
            st = p.stat()
            out[str(p.relative_to(d))] = (p.read_bytes(), st.st_mtime_ns, st.st_mode)
        else:
            out[str(p.relative_to(d))] = ("dir" if p.is_dir() else "other",)
    return out


# --------------------------------------------------------------------------- the registry

@dataclass
class Case:
    """One corpus entry: its class, id, and how to build and run it."""

    klass: str
    name: str
    build: Callable
    root_only_skip: bool = False


CASES: list[Case] = []


def case(klass: str, name: str, *, skip_as_root: bool = False):
    """Register a refused-input case: the function writes its fault into the folder and
    returns (command arguments, texts the error line must contain)."""
    def deco(func):
        CASES.append(Case(klass, name, func, skip_as_root))
        return func
    return deco


@dataclass
class Bad:
    """A refused run: arguments and the texts (file, field, option) the line must name."""

    args: list
    names: list = field(default_factory=list)
    absent: list = field(default_factory=list)     # outputs that must not appear


def write(d: Path, name: str, text, mode: str = "w") -> Path:
    p = d / name
    if isinstance(text, bytes):
        p.write_bytes(text)
    else:
        with open(p, mode, newline="") as fh:
            fh.write(text)
    return p


def vehicle_with(d: Path, text: str, name: str = "bad.yaml") -> Bad:
    write(d, name, text)
    return Bad(["energy", name, "-c", "udds"], [name])


# =========================================================================== YAML

@case("yaml", "malformed: unclosed flow list")
def _(d):
    b = vehicle_with(d, "name: x\nmass_kg: [1450, 2\nroad_load: {}\n")
    b.names.append("not valid YAML")
    return b


@case("yaml", "malformed: tab indentation")
def _(d):
    return vehicle_with(d, "name: x\nroad_load:\n\tf0_n: 1\n")


@case("yaml", "wrong type: text mass")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("mass_kg: 1450", "mass_kg: heavy"))
    b.names += ["mass_kg", ":3:"]
    return b


@case("yaml", "wrong type: list for a coefficient")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("f0_n: 130.0", "f0_n: [1, 2]"))
    b.names.append("road_load.f0_n")
    return b


@case("yaml", "wrong type: road_load a number")
def _(d):
    text = VEHICLE.split("road_load:")[0] + "road_load: 5\n"
    b = vehicle_with(d, text)
    b.names.append("road_load")
    return b


@case("yaml", ".nan mass")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("mass_kg: 1450", "mass_kg: .nan"))
    b.names.append("mass_kg")
    return b


@case("yaml", ".inf coefficient")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("f0_n: 130.0", "f0_n: .inf"))
    b.names.append("road_load.f0_n")
    return b


@case("yaml", "-.inf coefficient")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("f2_n_per_kmh2: 0.032", "f2_n_per_kmh2: -.inf"))
    b.names.append("road_load.f2_n_per_kmh2")
    return b


@case("yaml", "NaN written as text")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("mass_kg: 1450", "mass_kg: NaN"))
    b.names.append("mass_kg")
    return b


@case("yaml", "negative mass")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("mass_kg: 1450", "mass_kg: -1450"))
    b.names.append("mass_kg")
    return b


@case("yaml", "huge mass 1e308")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("mass_kg: 1450", "mass_kg: 1e308"))
    b.names.append("mass_kg")
    return b


@case("yaml", "huge coefficient 1.7e308")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("f2_n_per_kmh2: 0.032", "f2_n_per_kmh2: 1.7e308"))
    b.names.append("f2_n_per_kmh2")
    return b


@case("yaml", "unknown key (typo)")
def _(d):
    b = vehicle_with(d, VEHICLE.replace("f0_n: 130.0", "fo_n: 130.0"))
    b.names.append("fo_n")
    return b


@case("yaml", "unknown top-level key")
def _(d):
    b = vehicle_with(d, VEHICLE + "colour: red\n")
    b.names.append("colour")
    return b


@case("yaml", "duplicate key")
def _(d):
    b = vehicle_with(d, VEHICLE + "mass_kg: 1500\n")
    b.names += ["mass_kg", "twice"]
    return b


@case("yaml", "alias bomb")
def _(d):
    lines = ['a0: &a0 ["x", "x", "x", "x", "x", "x", "x", "x", "x", "x"]']
    for i in range(1, 10):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]")
    b = vehicle_with(d, "\n".join(lines) + "\n")
    b.names.append("expands to more than")
    return b


@case("yaml", "flow nesting 1000 deep")
def _(d):
    b = vehicle_with(d, "mass_kg: " + "[" * 1000 + "]" * 1000 + "\n")
    b.names.append("nested deeper")
    return b


@case("yaml", "block nesting 1000 deep")
def _(d):
    text = "".join("  " * i + f"k{i}:\n" for i in range(1000)) + "  " * 1000 + "x: 1\n"
    b = vehicle_with(d, text)
    b.names.append("nested deeper")
    return b


@case("yaml", "empty file")
def _(d):
    return vehicle_with(d, "")


@case("yaml", "comments only")
def _(d):
    return vehicle_with(d, "# nothing here\n\n")


@case("yaml", "top level is a list")
def _(d):
    b = vehicle_with(d, "- mass_kg: 1450\n")
    b.names.append("top level")
    return b


@case("yaml", "binary garbage")
def _(d):
    write(d, "bad.yaml", bytes(range(256)) * 4)
    return Bad(["energy", "bad.yaml"], ["bad.yaml"])


@case("yaml", "/dev/zero behind the name")
def _(d):
    os.symlink("/dev/zero", d / "zero.yaml")
    return Bad(["energy", "zero.yaml"], ["zero.yaml", "not a regular file"])


@case("yaml", "a FIFO")
def _(d):
    os.mkfifo(d / "fifo.yaml")
    return Bad(["performance", "fifo.yaml"], ["fifo.yaml", "not a regular file"])


@case("yaml", "a directory")
def _(d):
    (d / "dir.yaml").mkdir()
    return Bad(["energy", "dir.yaml"], ["dir.yaml", "directory"])


@case("yaml", "missing file")
def _(d):
    return Bad(["energy", "nowhere.yaml"], ["nowhere.yaml"])


@case("yaml", "unreadable file", skip_as_root=True)
def _(d):
    p = write(d, "locked.yaml", VEHICLE)
    p.chmod(0)
    return Bad(["energy", "locked.yaml"], ["locked.yaml"])


@case("yaml", "control characters in a key")
def _(d):
    b = vehicle_with(d, VEHICLE + "\"col\\e[31mour\\a\": red\n")
    b.names.append("\\u001b")
    return b


@case("yaml", "study: unknown key with a hint")
def _(d):
    write(d, "s.yaml", STUDY.replace("currency: EUR", "curency: EUR"))
    return Bad(["compare", "s.yaml"], ["s.yaml", "curency"])


@case("yaml", "study: baseline vehicle file missing")
def _(d):
    write(d, "s.yaml", STUDY.replace("vehicle: v.yaml", "vehicle: gone.yaml"))
    return Bad(["compare", "s.yaml"], ["gone.yaml"])


@case("yaml", "study: draws far too many")
def _(d):
    write(d, "s.yaml", STUDY.replace("draws: 0", "draws: 1e9"))
    return Bad(["compare", "s.yaml"], ["s.yaml", "draws"])


@case("yaml", "study: .nan change")
def _(d):
    write(d, "s.yaml", STUDY.replace("mass_kg: +10", "mass_kg: .nan"))
    return Bad(["compare", "s.yaml"], ["s.yaml", "mass_kg"])


@case("yaml", "study: bad profile at its place")
def _(d):
    write(d, "s.yaml", STUDY.replace("profile: udds", "profile: uddz"))
    return Bad(["compare", "s.yaml"], ["s.yaml:", "driving.profiles[0]", "uddz"])


@case("yaml", "study: duplicate modification key")
def _(d):
    write(d, "s.yaml", STUDY.replace("    changes:\n", "    changes:\n      cda_m2: +0.1\n"
                                     "      cda_m2: +0.2\n"))
    return Bad(["compare", "s.yaml"], ["s.yaml", "cda_m2", "twice"])


@case("yaml", "vehicle without a performance block")
def _(d):
    return Bad(["performance", "v.yaml"], ["v.yaml", "performance"])


@case("yaml", "vehicle without a powertrain for range-curve")
def _(d):
    return Bad(["range-curve", "v.yaml"], ["v.yaml", "powertrain"])


@case("yaml", "from_coastdown block with a NaN")
def _(d):
    write(d, "rl_bad.yaml", ROAD_LOAD_BLOCK.replace("f0_n: 130.9", "f0_n: .nan"))
    text = VEHICLE.split("road_load:")[0] + "road_load:\n  from_coastdown: rl_bad.yaml\n"
    b = vehicle_with(d, text)
    b.names = ["rl_bad.yaml", "f0_n"]
    return b


# =========================================================================== speed CSV

def speed_csv(d: Path, text, name: str = "bad.csv") -> Bad:
    write(d, name, text)
    return Bad(["cycles", name], [name])


@case("speed csv", "no speed column")
def _(d):
    b = speed_csv(d, "time_s,rpm\n0,800\n1,900\n2,1000\n")
    b.names.append("speed")
    return b


@case("speed csv", "no time column")
def _(d):
    b = speed_csv(d, "clock,speed_kmh\n0,0\n1,5\n2,10\n")
    b.names.append("time")
    return b


@case("speed csv", "speed column without a unit")
def _(d):
    b = speed_csv(d, "time_s,speed\n0,0\n1,5\n2,10\n")
    b.names.append("speed")
    return b


@case("speed csv", "text in a number")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,fourteen\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "NaN speed")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,nan\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "inf speed")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,inf\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "empty speed cell")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "negative speed")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,-14\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "speed 1e308")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,1e308\n"))
    b.names += ["bad.csv:5", "speed_kmh"]
    return b


@case("speed csv", "gap of 500 s")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n503,14\n").replace("\n4,", "\n504,")
                  .replace("\n5,", "\n505,").replace("\n6,", "\n506,").replace("\n7,", "\n507,")
                  .replace("\n8,", "\n508,").replace("\n9,", "\n509,")
                  .replace("\n10,", "\n510,").replace("\n11,", "\n511,")
                  .replace("\n12,", "\n512,"))
    b.names.append("gap")
    return b


@case("speed csv", "time going back")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n1.5,14\n"))
    b.names += ["bad.csv:5", "time_s"]
    return b


@case("speed csv", "repeated time")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n2,14\n"))
    b.names += ["bad.csv:5", "time_s"]
    return b


@case("speed csv", "mph values in a km/h column (0 to 300 km/h in 1 s)")
def _(d):
    b = speed_csv(d, "time_s,speed_kmh\n0,0\n1,0\n2,300\n3,300\n4,0\n")
    b.names += ["speed_kmh", "m/s²"]
    return b


@case("speed csv", "above 500 km/h")
def _(d):
    rows = "".join(f"{t},{min(600, 20 * t)}\n" for t in range(60))
    b = speed_csv(d, "time_s,speed_kmh\n" + rows)
    b.names += ["speed_kmh", "500"]
    return b


@case("speed csv", "empty file")
def _(d):
    return speed_csv(d, "")


@case("speed csv", "header only")
def _(d):
    return speed_csv(d, "time_s,speed_kmh\n")


@case("speed csv", "one row")
def _(d):
    return speed_csv(d, "time_s,speed_kmh\n0,10\n")


@case("speed csv", "mixed separators")
def _(d):
    b = speed_csv(d, "time_s;speed_kmh\n0;0\n1,5\n2;10\n3;12\n")
    b.names.append("bad.csv:3")
    return b


@case("speed csv", "binary garbage")
def _(d):
    return speed_csv(d, bytes(range(256)) * 8)


@case("speed csv", "/dev/zero behind the name")
def _(d):
    os.symlink("/dev/zero", d / "zero.csv")
    return Bad(["cycles", "zero.csv"], ["zero.csv", "not a regular file"])


@case("speed csv", "a FIFO")
def _(d):
    os.mkfifo(d / "fifo.csv")
    return Bad(["energy", "v.yaml", "-c", "fifo.csv"], ["fifo.csv", "not a regular file"])


@case("speed csv", "a directory")
def _(d):
    (d / "dir.csv").mkdir()
    return Bad(["cycles", "dir.csv"], ["dir.csv"])


@case("speed csv", "ESC in a header name")
def _(d):
    b = speed_csv(d, "time_s,speed\x1b[2J_x\n0,0\n1,5\n")
    b.names.append("\\u001b")
    return b


@case("speed csv", "BEL in a cell")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,1\x074\n"))
    b.names += ["bad.csv:5", "\\u0007"]
    return b


@case("speed csv", "C1 CSI in a cell")
def _(d):
    b = speed_csv(d, TRIP.replace("\n3,14\n", "\n3,\x9b31m\n"))
    b.names += ["bad.csv:5", "\\u009b"]
    return b


@case("speed csv", "file named with an ESC")
def _(d):
    write(d, "a\x1b]0;x\x07.csv", "time_s,speed_kmh\n0,0\n")
    return Bad(["cycles", "a\x1b]0;x\x07.csv"], ["a\\u001b]0;x\\u0007.csv"])


@case("speed csv", "bad trip inside a study, named at its place")
def _(d):
    write(d, "trip.csv", TRIP.replace("\n3,14\n", "\n3,abc\n"))
    write(d, "s.yaml", STUDY.replace("profile: udds", "profile: trip.csv"))
    return Bad(["compare", "s.yaml"], ["s.yaml:", "driving.profiles[0]", "trip.csv:5"])


# =========================================================================== coast-down logs

def coast(d: Path, text, name: str = "bad_log.csv") -> Bad:
    write(d, name, text)
    return Bad(["coastdown", name, "--mass-kg", "1380"], [name])


@case("coast-down log", "no speed column")
def _(d):
    b = coast(d, coast_log(header="time_s,velocity"))
    b.names.append("speed")
    return b


@case("coast-down log", "text in a number")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f}" for t in range(120)]
    rows[10] = "5.0,fast"
    b = coast(d, coast_log(rows))
    b.names += ["bad_log.csv:12", "speed_kmh"]
    return b


@case("coast-down log", "inf speed")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f}" for t in range(120)]
    rows[10] = "5.0,inf"
    b = coast(d, coast_log(rows))
    b.names += ["bad_log.csv:12", "speed_kmh"]
    return b


@case("coast-down log", "time going back")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f}" for t in range(120)]
    rows[10] = "1.0,105"
    b = coast(d, coast_log(rows))
    b.names += ["bad_log.csv:12", "time"]
    return b


@case("coast-down log", "NaN time")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f}" for t in range(120)]
    rows[10] = "nan,105"
    b = coast(d, coast_log(rows))
    b.names += ["bad_log.csv:12", "time"]
    return b


@case("coast-down log", "empty file")
def _(d):
    return coast(d, "")


@case("coast-down log", "header only")
def _(d):
    return coast(d, "time_s,speed_kmh\n")


@case("coast-down log", "one row")
def _(d):
    return coast(d, "time_s,speed_kmh\n0,100\n")


@case("coast-down log", "pressure in hPa")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f},1013" for t in range(120)]
    b = coast(d, coast_log(rows, header="time_s,speed_kmh,air_pressure_pa"))
    b.names += ["air_pressure_pa", "bad_log.csv:2"]
    return b


@case("coast-down log", "two speed columns")
def _(d):
    rows = [f"{t * 0.5:.1f},{110 - t * 0.5:.1f},{(110 - t * 0.5) / 3.6:.3f}"
            for t in range(120)]
    b = coast(d, coast_log(rows, header="time_s,speed_kmh,speed_ms"))
    b.names.append("speed")
    return b


@case("coast-down log", "ESC in a header name")
def _(d):
    b = coast(d, coast_log(header="time_s,sp\x1b[1meed"))
    b.names.append("\\u001b")
    return b


@case("coast-down log", "a FIFO")
def _(d):
    os.mkfifo(d / "fifo_log.csv")
    return Bad(["coastdown", "fifo_log.csv", "--mass-kg", "1380"],
               ["fifo_log.csv", "not a regular file"])


@case("coast-down log", "GPX latitude beyond 90")
def _(d):
    write(d, "bad_log.gpx", gpx_points([(95 + 0.0001 * i, 7.0, f"2024-05-01T08:00:{i:02d}Z")
                                        for i in range(30)]))
    return Bad(["coastdown", "bad_log.gpx", "--mass-kg", "1380"], ["bad_log.gpx", "lat"])


@case("coast-down log", "malformed GPX")
def _(d):
    write(d, "bad_log.gpx", GPX_HEAD + "<trk><trkseg><trkpt lat='1' lon='2'>\n")
    return Bad(["coastdown", "bad_log.gpx", "--mass-kg", "1380"], ["bad_log.gpx"])


# =========================================================================== GPX and tracks

def gpx(d: Path, text, name: str = "bad.gpx") -> Bad:
    write(d, name, text)
    return Bad(["cycles", name], [name])


@case("gpx", "malformed XML")
def _(d):
    return gpx(d, GOOD_GPX.replace("</trkseg>", ""))


@case("gpx", "not XML at all")
def _(d):
    return gpx(d, "time_s,speed_kmh\n0,0\n")


@case("gpx", "no track")
def _(d):
    return gpx(d, GPX_HEAD + "<metadata><name>x</name></metadata></gpx>\n")


@case("gpx", "no times")
def _(d):
    b = gpx(d, gpx_points([(46 + 0.0001 * i, 7.0, None) for i in range(20)]))
    b.names.append("time")
    return b


@case("gpx", "points out of order")
def _(d):
    pts = [(46 + 0.0001 * i, 7.0, f"2024-05-01T08:00:{2 * i:02d}Z") for i in range(20)]
    pts[5], pts[6] = pts[6], pts[5]
    b = gpx(d, gpx_points(pts))
    b.names.append("time")
    return b


@case("gpx", "latitude beyond 90")
def _(d):
    return gpx(d, gpx_points([(91 + 0.0001 * i, 7.0, f"2024-05-01T08:00:{2 * i:02d}Z")
                              for i in range(20)]))


@case("gpx", "track CSV latitude beyond 90")
def _(d):
    rows = "".join(f"{95 + 0.0001 * i:.4f},7.0\n" for i in range(200))
    write(d, "bad_track.csv", "latitude_deg,longitude_deg\n" + rows)
    return Bad(["lap", "track_car.yaml", "--track", "bad_track.csv"],
               ["bad_track.csv:2", "latitude"])


@case("gpx", "track CSV with text in a number")
def _(d):
    rows = "".join(f"{i * 5},{0 if i != 7 else 'x'}\n" for i in range(200))
    write(d, "bad_track.csv", "x_m,y_m\n" + rows)
    return Bad(["lap", "track_car.yaml", "--track", "bad_track.csv"],
               ["bad_track.csv:9", "y_m"])


@case("gpx", "lap track a FIFO")
def _(d):
    os.mkfifo(d / "fifo_track.gpx")
    return Bad(["lap", "track_car.yaml", "--track", "fifo_track.gpx"],
               ["fifo_track.gpx", "not a regular file"])


# =========================================================================== expressions

def expr(text: str, *more) -> Bad:
    return Bad(["cycles", text, *more], [])


@case("expression", "unknown cycle")
def _(d):
    b = expr("uddz")
    b.names.append("uddz")
    return b


@case("expression", "unknown phase")
def _(d):
    b = expr("wltc3b:nope")
    b.names.append("nope")
    return b


@case("expression", "bad steady: text")
def _(d):
    b = expr("steady:fast")
    b.names.append("steady:fast")
    return b


@case("expression", "steady: speed above 500 km/h")
def _(d):
    b = expr("steady:900kmh")
    b.names.append("500")
    return b


@case("expression", "repeat count 0")
def _(d):
    b = expr("udds*0")
    b.names.append("repeat count")
    return b


@case("expression", "repeat count above the limit")
def _(d):
    b = expr("udds*1001")
    b.names.append("1000")
    return b


@case("expression", "trailing +")
def _(d):
    b = expr("udds+")
    b.names.append("udds+")
    return b


@case("expression", "unclosed quote")
def _(d):
    b = expr("'trip.csv+udds")
    b.names.append("quote")
    return b


@case("expression", "steady:90kmh:1000000h needs more than the memory budget")
def _(d):
    b = expr("steady:90kmh:1000000h")
    b.names += ["steady:90kmh:1000000h", BUDGET_TEXT]
    return b


@case("expression", "steady: at a step of 1e-300 s")
def _(d):
    b = expr("steady:90kmh", "--dt-s", "1e-300")
    b.names.append(BUDGET_TEXT)
    return b


@case("expression", "very fine --dt-s on a long file")
def _(d):
    rows = "".join(f"{t},50\n" for t in range(0, 36000, 10))
    write(d, "long.csv", "time_s,speed_kmh\n" + rows)
    b = expr("long.csv", "--dt-s", "1e-6")
    b.names += ["long.csv", "dt_s", BUDGET_TEXT]
    return b


@case("expression", "joined repeats beyond the memory budget")
def _(d):
    b = expr("+".join(["udds*1000"] * 30))
    b.names.append(BUDGET_TEXT)
    return b


@case("expression", "energy with a long GPX at a fine step")
def _(d):
    return Bad(["energy", "v.yaml", "-c", "ride.gpx", "--dt-s", "0.001"], ["--dt-s"])


@case("expression", "a profile file with another ending")
def _(d):
    write(d, "trip.txt", TRIP)
    b = Bad(["cycles", "'trip.txt'"], ["trip.txt"])
    return b


# =========================================================================== outputs

def study_run(*more) -> Bad:
    return Bad(["compare", "study.yaml", *more], [])


@case("outputs", "-o onto the study")
def _(d):
    return Bad(["compare", "study.yaml", "-o", "study.yaml"], ["study.yaml", "input"])


@case("outputs", "-o onto the vehicle file")
def _(d):
    write(d, "v.json", VEHICLE)
    write(d, "study.yaml", STUDY.replace("vehicle: v.yaml", "vehicle: v.json"))
    return Bad(["compare", "study.yaml", "-o", "out.csv", "-o", "v.json"], ["v.json", "input"],
               ["out.csv"])


@case("outputs", "-o onto a profile CSV inside trip.csv*2")
def _(d):
    write(d, "s.yaml", STUDY.replace("profile: udds", "profile: trip.csv*2"))
    return Bad(["compare", "s.yaml", "-o", "trip.csv"], ["trip.csv", "input"])


@case("outputs", "-o onto a profile CSV inside udds+trip.csv")
def _(d):
    write(d, "s.yaml", STUDY.replace("profile: udds", "profile: udds+trip.csv"))
    return Bad(["compare", "s.yaml", "-o", "trip.csv"], ["trip.csv", "input"])


@case("outputs", "-o onto a coast-down block read by from_coastdown")
def _(d):
    write(d, "rl.json", ROAD_LOAD_BLOCK)
    write(d, "v.yaml", VEHICLE.split("road_load:")[0] + "road_load:\n  from_coastdown: rl.json\n")
    return Bad(["compare", "study.yaml", "-o", "rl.json"], ["rl.json", "input"])


@case("outputs", "-o onto a hard link to the study")
def _(d):
    os.link(d / "study.yaml", d / "hard.json")
    return Bad(["compare", "study.yaml", "-o", "hard.json"], ["hard.json", "input"])


@case("outputs", "-o onto a symbolic link to the vehicle")
def _(d):
    os.symlink("v.yaml", d / "soft.csv")
    return Bad(["compare", "study.yaml", "-o", "soft.csv"], ["soft.csv", "input"])


@case("outputs", "unknown suffix")
def _(d):
    return Bad(["compare", "study.yaml", "-o", "out.txt"], ["out.txt", ".xlsx"])


@case("outputs", "folder that does not exist")
def _(d):
    return Bad(["compare", "study.yaml", "-o", "nodir/out.csv"], ["nodir/out.csv", "folder"])


@case("outputs", "output is a folder")
def _(d):
    (d / "out.json").mkdir()
    return Bad(["compare", "study.yaml", "-o", "out.json"], ["out.json", "folder"])


@case("outputs", "read-only target", skip_as_root=True)
def _(d):
    p = write(d, "old.csv", "kept\n")
    p.chmod(0o444)
    return Bad(["compare", "study.yaml", "-o", "old.csv"], ["old.csv"])


@case("outputs", "plot with an unknown suffix")
def _(d):
    return Bad(["compare", "study.yaml", "--plot", "fig.gif"], ["fig.gif"])


@case("outputs", "range-curve --plot onto the vehicle")
def _(d):
    os.symlink("ev.yaml", d / "ev.png")
    return Bad(["range-curve", "ev.yaml", "--plot", "ev.png"], ["ev.png", "input"])


@case("outputs", "lap --plot onto the track")
def _(d):
    os.link(d / "circuit.csv", d / "circuit.png")
    return Bad(["lap", "track_car.yaml", "--track", "circuit.csv", "--plot", "circuit.png"],
               ["circuit.png", "input"])


@case("outputs", "coastdown -o onto the log")
def _(d):
    os.symlink("log.csv", d / "log.yaml")
    return Bad(["coastdown", "log.csv", "--mass-kg", "1380", "-o", "log.yaml"],
               ["log.yaml", "input"])


@case("outputs", "coastdown -o with an unknown suffix")
def _(d):
    return Bad(["coastdown", "log.csv", "--mass-kg", "1380", "-o", "rl.txt"], ["rl.txt"])


@case("outputs", "coastdown --plot into a missing folder")
def _(d):
    return Bad(["coastdown", "log.csv", "--mass-kg", "1380", "-o", "new.yaml", "--plot",
                "nodir/p.png"], ["nodir/p.png"], ["new.yaml"])


@case("outputs", "fleet -o onto its vehicles table")
def _(d):
    fleet_world(d)
    return Bad(["fleet", "fleet.yaml", "--quiet", "-o", "vehicles.csv"], ["vehicles.csv", "input"])


# =========================================================================== fleet tables

def fleet_world(d: Path) -> None:
    """A two-vehicle fleet over three short trips."""
    write(d, "vehicles.csv", "vehicle_id,vehicle_file\nA,v.yaml\nB,v.yaml\n")
    rows = []
    for vid, trip in (("A", 1), ("A", 2), ("B", 3)):
        rows += [f"{vid},{trip},{t},{v}" for t, v in enumerate(
            [0, 4, 9, 14, 18, 21, 22, 22, 20, 15, 9, 4, 0])]
    write(d, "trips.csv", "vehicle_id,trip_id,time_s,speed_kmh\n" + "\n".join(rows) + "\n")
    write(d, "fleet.yaml", "name: corpus fleet\ncurrency: EUR\nfleet:\n  vehicles: vehicles.csv\n"
          "  trips: trips.csv\nmodifications:\n  - name: tyres\n    cost: 100\n"
          "    changes:\n      crr: -10%\neconomics:\n  fuel_price_per_l: 1.6\n")


@case("fleet", "vehicles table without vehicle_id")
def _(d):
    fleet_world(d)
    write(d, "vehicles.csv", "id,vehicle_file\nA,v.yaml\nB,v.yaml\n")
    return Bad(["fleet", "fleet.yaml", "--quiet"], ["vehicles.csv", "vehicle_id"])


@case("fleet", "trip with time going back")
def _(d):
    fleet_world(d)
    text = (d / "trips.csv").read_text().replace("\nA,1,3,14\n", "\nA,1,1,14\n")
    write(d, "trips.csv", text)
    return Bad(["fleet", "fleet.yaml", "--quiet"], ["trips.csv:5", "time_s"])


@case("fleet", "unknown vehicle id in the trips")
def _(d):
    fleet_world(d)
    text = (d / "trips.csv").read_text().replace("B,3,", "Z,3,")
    write(d, "trips.csv", text)
    return Bad(["fleet", "fleet.yaml", "--quiet"], ["trips.csv", "Z"])


@case("fleet", "text in a trip's speed")
def _(d):
    fleet_world(d)
    text = (d / "trips.csv").read_text().replace("\nA,1,3,14\n", "\nA,1,3,x14\n")
    write(d, "trips.csv", text)
    return Bad(["fleet", "fleet.yaml", "--quiet"], ["trips.csv:5", "speed_kmh"])


# =========================================================================== options

def option(*args, name: str) -> Bad:
    return Bad(list(args), [name])


OPTION_CASES = [
    ("cycles --dt-s nan", ["cycles", "udds", "--dt-s", "nan"], "--dt-s"),
    ("cycles --dt-s -1", ["cycles", "udds", "--dt-s", "-1"], "--dt-s"),
    ("cycles --dt-s inf", ["cycles", "trip.csv", "--dt-s", "inf"], "--dt-s"),
    ("energy --dt-s nan", ["energy", "v.yaml", "--dt-s", "nan"], "--dt-s"),
    ("energy --mix-shares with nan", ["energy", "v.yaml", "-c", "udds", "-c", "hwfet",
                                      "--mix-shares", "0.5,nan"], "--mix-shares"),
    ("energy --mix-shares not adding to 1", ["energy", "v.yaml", "-c", "udds", "-c", "hwfet",
                                             "--mix-shares", "0.3,0.3"], "--mix-shares"),
    ("energy --units imperial", ["energy", "v.yaml", "--units", "imperial"], "--units"),
    ("performance --grade-pct nan", ["performance", "track_car.yaml", "--grade-pct", "nan"],
     "--grade-pct"),
    ("performance --wind-kmh 1e308", ["performance", "track_car.yaml", "--wind-kmh", "1e308"],
     "--wind-kmh"),
    ("performance --grade-speed-kmh -5", ["performance", "track_car.yaml",
                                          "--grade-speed-kmh", "-5"], "--grade-speed-kmh"),
    ("range-curve --from-kmh 0", ["range-curve", "ev.yaml", "--from-kmh", "0"], "--from-kmh"),
    ("range-curve --step-kmh 1e-9", ["range-curve", "ev.yaml", "--step-kmh", "1e-9"],
     "--step-kmh"),
    ("range-curve --to below --from", ["range-curve", "ev.yaml", "--from-kmh", "100",
                                       "--to-kmh", "50"], "--to-kmh"),
    ("range-curve --ambient-c nan", ["range-curve", "ev.yaml", "--ambient-c", "nan"],
     "--ambient-c"),
    ("compare --draws -1", ["compare", "study.yaml", "--draws", "-1"], "--draws"),
    ("compare --draws 200001", ["compare", "study.yaml", "--draws", "200001"], "--draws"),
    ("compare --draws 1e300", ["compare", "study.yaml", "--draws", "1e300"], "--draws"),
    ("compare --seed -1", ["compare", "study.yaml", "--seed", "-1"], "--seed"),
    ("compare --metrics unknown", ["compare", "study.yaml", "--metrics", "nosuch_metric"],
     "nosuch_metric"),
    ("coastdown --mass-kg nan", ["coastdown", "log.csv", "--mass-kg", "nan"], "--mass-kg"),
    ("coastdown --mass-kg -5", ["coastdown", "log.csv", "--mass-kg", "-5"], "--mass-kg"),
    ("coastdown --mass-kg 1e308", ["coastdown", "log.csv", "--mass-kg", "1e308"], "--mass-kg"),
    ("coastdown --speed-window-kmh reversed", ["coastdown", "log.csv", "--mass-kg", "1380",
                                               "--speed-window-kmh", "100", "50"],
     "--speed-window-kmh"),
    ("coastdown --air-pressure-pa in hPa", ["coastdown", "log.csv", "--mass-kg", "1380",
                                            "--air-pressure-pa", "1013"], "--air-pressure-pa"),
    ("coastdown --terms 4", ["coastdown", "log.csv", "--mass-kg", "1380", "--terms", "4"],
     "--terms"),
    ("coastdown --max-gap-s inf", ["coastdown", "log.csv", "--mass-kg", "1380",
                                   "--max-gap-s", "inf"], "--max-gap-s"),
    ("coastdown-quick start below end", ["coastdown-quick", "--mass-kg", "1400", "--high",
                                         "50", "60", "10", "--low", "40", "20", "12"],
     "--high"),
    ("coastdown-quick --mass-kg inf", ["coastdown-quick", "--mass-kg", "inf", "--high",
                                       "110", "90", "10", "--low", "40", "20", "12"],
     "--mass-kg"),
    ("lap --laps 0", ["lap", "track_car.yaml", "--track", "circuit.csv", "--laps", "0"],
     "--laps"),
    ("lap --mu-cornering nan", ["lap", "track_car.yaml", "--track", "circuit.csv",
                                "--mu-cornering", "nan"], "--mu-cornering"),
    ("lap --step-m 0.01", ["lap", "track_car.yaml", "--track", "circuit.csv", "--step-m",
                           "0.01"], "--step-m"),
    ("fleet --workers 0", ["fleet", "study.yaml", "--workers", "0"], "--workers"),
]

for _title, _args, _name in OPTION_CASES:
    CASES.append(Case("options", _title,
                      (lambda a, n: lambda d: Bad(list(a), [n]))(_args, _name)))


# =========================================================================== the runner

def _timeout(signum, frame):
    raise TimeoutError("a case ran for more than 60 s (a blocking read?)")


def run_case(d: Path, bad: Bad):
    """Run the case under a watchdog; return the finished run."""
    old = signal.signal(signal.SIGALRM, _timeout)
    signal.alarm(60)
    try:
        return run_cli(*bad.args, cwd=d)
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def assert_refused(d: Path, before: dict, done, bad: Bad) -> None:
    """The contract for a refused input (module docstring)."""
    err = done.stderr
    assert "Traceback" not in err + done.stdout, err
    assert done.returncode == 2, (done.returncode, err, done.stdout[-500:])
    lines = err.strip("\n").split("\n")
    assert len(lines) == 1, err
    assert lines[0].startswith("tractive: error: "), err
    for name in bad.names:
        assert name in lines[0], f"{name!r} not named in: {lines[0]}"
    assert not CONTROL.search(err), f"raw control character on stderr: {err!r}"
    # numbers in a sensible precision: never a run of more than 20 digits
    assert not re.search(r"\d{21,}", err), err
    assert snapshot(d) == before, "an input changed or an output/temporary file appeared"
    for out in bad.absent:
        assert not (d / out).exists()


@pytest.mark.parametrize("item", CASES, ids=[f"{c.klass}: {c.name}" for c in CASES])
def test_refused(item: Case, tmp_path):
    if item.root_only_skip and AS_ROOT:
        pytest.skip("permissions do not bind root")
    make_world(tmp_path)
    bad = item.build(tmp_path)
    before = snapshot(tmp_path)
    done = run_case(tmp_path, bad)
    assert_refused(tmp_path, before, done, bad)


# =========================================================================== accepted forms
# A byte-order mark (spreadsheet programs write one) and CRLF line ends (Windows) are
# ordinary CSV and YAML (RFC 4180 section 2 uses CRLF; the Unicode Standard, 23.8, allows
# U+FEFF at the start of a UTF-8 file): the numbers must be those of the plain file.

def _bom(text: str) -> bytes:
    return "\ufeff".encode() + text.encode()


def _crlf(text: str) -> bytes:
    return text.replace("\n", "\r\n").encode()


ACCEPTED = [
    ("speed csv with a BOM", "csv", _bom),
    ("speed csv with CRLF", "csv", _crlf),
    ("speed csv with a BOM and CRLF", "csv", lambda t: _bom(t.replace("\n", "\r\n"))),
    ("vehicle YAML with a BOM", "yaml", _bom),
    ("vehicle YAML with CRLF", "yaml", _crlf),
    ("coast-down log with a BOM and CRLF", "log", lambda t: _bom(t.replace("\n", "\r\n"))),
]


def _json_of(done) -> dict:
    import json

    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


@pytest.mark.parametrize("title, kind, form", ACCEPTED, ids=[a[0] for a in ACCEPTED])
def test_accepted(title, kind, form, tmp_path):
    make_world(tmp_path)
    if kind == "csv":
        write(tmp_path, "odd.csv", form(TRIP))
        plain = _json_of(run_cli("cycles", "trip.csv", "--json", cwd=tmp_path))
        odd = _json_of(run_cli("cycles", "odd.csv", "--json", cwd=tmp_path))
        for key in ("duration_s", "distance_km", "max_speed_kmh", "mean_speed_kmh"):
            assert odd["profiles"][0][key] == plain["profiles"][0][key]
    elif kind == "yaml":
        write(tmp_path, "odd.yaml", form(VEHICLE))
        plain = _json_of(run_cli("energy", "v.yaml", "-c", "udds", "--json", cwd=tmp_path))
        odd = _json_of(run_cli("energy", "odd.yaml", "-c", "udds", "--json", cwd=tmp_path))
        assert odd["results"] == plain["results"]
    else:
        text = (EXAMPLES / "coastdown" / "coastdown_log.csv").read_text()
        write(tmp_path, "plain.csv", text)
        write(tmp_path, "odd.csv", form(text))
        args = ("--mass-kg", "1380", "--json")
        plain = _json_of(run_cli("coastdown", "plain.csv", *args, cwd=tmp_path))
        odd = _json_of(run_cli("coastdown", "odd.csv", *args, cwd=tmp_path))
        assert odd["road_load"] == plain["road_load"]


# =========================================================================== CSV injection
# Text a spreadsheet would take as a formula (OWASP, "CSV Injection") is stored with a
# leading apostrophe in the CSV and as a string cell (ECMA-376 data type "s") in the
# workbook, where the name keeps its exact text.

INJECTED = ["=1+1", "a;=cmd", '"=x', "\t=x", "@x", "-x"]


@pytest.fixture(scope="module")
def injected_outputs(tmp_path_factory):
    import json

    d = tmp_path_factory.mktemp("inject")
    make_world(d)
    mods = "".join(f"  - name: {json.dumps(n)}\n    changes:\n      mass_kg: +{i + 1}\n"
                   for i, n in enumerate(INJECTED))
    text = STUDY.split("modifications:")[0] + "modifications:\n" + mods + \
        "driving:" + STUDY.split("driving:")[1]
    write(d, "inject.yaml", text)
    done = run_cli("compare", "inject.yaml", "-o", "out.csv", "-o", "out.xlsx", cwd=d)
    assert done.returncode == 0, done.stderr
    return d


@pytest.mark.parametrize("name", INJECTED, ids=[repr(n) for n in INJECTED])
def test_formula_like_names_stay_text(name, injected_outputs):
    import csv

    import openpyxl

    with open(injected_outputs / "out.csv", newline="", encoding="utf-8-sig") as fh:
        cells = [c for row in csv.reader(fh) for c in row]
    assert "'" + name in cells
    assert name not in cells
    book = openpyxl.load_workbook(injected_outputs / "out.xlsx")
    found = [c for ws in book.worksheets for row in ws.iter_rows() for c in row
             if c.value == name]
    assert found, f"{name!r} not in the workbook"
    assert all(c.data_type == "s" for c in found)


CONTROL_NAMES = [("ESC", "car\x1b[31mred"), ("BEL", "bell\x07"), ("C1 CSI", "csi\x9b2J")]


@pytest.mark.parametrize("title, name", CONTROL_NAMES, ids=[c[0] for c in CONTROL_NAMES])
def test_control_characters_in_names_are_escaped(title, name, tmp_path):
    import json

    make_world(tmp_path)
    write(tmp_path, "s.yaml", STUDY.replace("name: ballast", f"name: {json.dumps(name)}"))
    done = run_cli("compare", "s.yaml", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert not CONTROL.search(done.stdout + done.stderr)
    # the escape of the first control character of the name is shown
    ctl = CONTROL.search(name).group()
    assert f"\\u{ord(ctl):04x}" in done.stdout
    data = _json_of(run_cli("compare", "s.yaml", "--json", cwd=tmp_path))
    # the JSON document keeps the exact text (its escape is valid JSON, RFC 8259 section 7)
    assert json.dumps(name)[1:-1] in json.dumps(data)


# =========================================================================== write faults

def _temporaries(d: Path) -> list:
    return sorted(p.name for p in d.rglob(".*.tmp"))


WRITE_FAULTS = ["disk full with two outputs", "disk full writing a workbook",
                "stale temporary of a killed run", "run killed between two outputs",
                "coastdown plot failing after the road-load block"]


def test_disk_full_with_two_outputs(tmp_path, monkeypatch):
    make_world(tmp_path)
    write(tmp_path, "out.csv", "old csv\n")
    before = snapshot(tmp_path)
    calls = []

    def full(fd, data):
        calls.append(len(data))
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, "write", full)
    done = run_cli("compare", "study.yaml", "-o", "out.csv", "-o", "out.json", cwd=tmp_path)
    monkeypatch.undo()
    assert calls, "the writers did not go through os.write"
    bad = Bad([], ["out.", "no space left on device"])
    assert_refused(tmp_path, before, done, bad)
    assert not _temporaries(tmp_path)


def test_disk_full_writing_a_workbook(tmp_path, monkeypatch):
    make_world(tmp_path)
    before = snapshot(tmp_path)
    real = os.write
    count = []

    def full_later(fd, data):
        count.append(1)
        if len(count) > 3:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real(fd, data)

    monkeypatch.setattr(os, "write", full_later)
    done = run_cli("compare", "study.yaml", "-o", "out.json", "-o", "out.xlsx", cwd=tmp_path)
    monkeypatch.undo()
    assert_refused(tmp_path, before, done, Bad([], ["no space left on device"]))


def test_stale_temporary_of_a_killed_run_is_removed(tmp_path):
    make_world(tmp_path)
    stale = write(tmp_path, ".out.csv.0123456789ab.tmp", "half a table")
    other = write(tmp_path, ".other.csv.0123456789ab.tmp", "not ours")
    done = run_cli("compare", "study.yaml", "-o", "out.csv", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert not stale.exists()
    assert other.exists()          # only the temporaries of the target written
    assert (tmp_path / "out.csv").stat().st_size > 0


KILL_SECOND = """
import os, signal, sys
from tractive.report import common
real = common._new_temp_file
made = []
def new_temp_file(folder, target):
    tmp = real(folder, target)
    made.append(tmp)
    if len(made) == 2:                      # the first output is written in full
        os.kill(os.getpid(), signal.SIGKILL)
    return tmp
common._new_temp_file = new_temp_file
from tractive.cli import main
main(sys.argv[1:])
"""


def test_run_killed_between_two_outputs(tmp_path):
    import subprocess
    import sys

    make_world(tmp_path)
    write(tmp_path, "out.json", "{}\n")
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    killed = subprocess.run([sys.executable, "-c", KILL_SECOND, "compare", "study.yaml",
                             "-o", "out.csv", "-o", "out.json"], cwd=tmp_path, env=env,
                            capture_output=True, text=True, timeout=300)
    assert killed.returncode == -signal.SIGKILL, killed.stderr
    assert not (tmp_path / "out.csv").exists()
    assert (tmp_path / "out.json").read_text() == "{}\n"
    assert len(_temporaries(tmp_path)) == 2        # what the killed run left
    done = run_cli("compare", "study.yaml", "-o", "out.csv", "-o", "out.json", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert not _temporaries(tmp_path)
    assert (tmp_path / "out.json").read_text().startswith("{\n")
    assert (tmp_path / "out.csv").exists()


def test_coastdown_plot_failing_leaves_no_road_load_block(tmp_path, monkeypatch):
    import matplotlib.figure

    make_world(tmp_path)
    write(tmp_path, "log.csv", (EXAMPLES / "coastdown" / "coastdown_log.csv").read_text())
    write(tmp_path, "old.yaml", "kept: 1\n")
    before = snapshot(tmp_path)

    def savefig(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", savefig)
    done = run_cli("coastdown", "log.csv", "--mass-kg", "1380", "-o", "old.yaml",
                   "--plot", "fig.png", cwd=tmp_path)
    assert_refused(tmp_path, before, done, Bad([], ["fig.png", "no space left on device"]))


# =========================================================================== the count

def test_corpus_size(capsys):
    """At least 80 cases across all commands; the count is printed."""
    n = (len(CASES) + len(ACCEPTED) + len(INJECTED) + len(CONTROL_NAMES)
         + len(WRITE_FAULTS))
    classes = {c.klass for c in CASES}
    with capsys.disabled():
        print(f"\nbad-input corpus: {n} cases ({len(CASES)} refused inputs in "
              f"{len(classes)} classes, {len(ACCEPTED)} accepted forms, "
              f"{len(INJECTED) + len(CONTROL_NAMES)} name-escaping checks, "
              f"{len(WRITE_FAULTS)} write faults)")
    assert n >= 80
