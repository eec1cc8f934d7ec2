"""Speed and memory figures, each a ratio against a reference measured in the same run.

Run ``make bench`` (or ``python benchmarks/run.py``); it prints every figure with its
target and exits 1 when one is missed. ``--quick`` is a short run: the 10-million-row
CSV is left out, the study takes 500 draws instead of 2,000 and the fleet 10,000
trips instead of 100,000 (with the time target scaled). Nothing here is a test: the
suite has no timed tests.

Figures and references
----------------------
1. Wheel energy (tractive.demand.wheel_demand, UN GTR 15 Annex 7 sums with the
   rolling/aero/inertia/grade split) of N = 100, 1,000 and 20,000 vehicles on WLTC
   class 3b, against
   a. the same sums written as a plain Python loop over lists (one vehicle at a
      time; timed on up to 100 vehicles and scaled linearly to N, as a loop is):
      target at least 50x faster;
   b. one bare numpy multiply-add pass ``x * y + z`` over three (N, T-1) float64
      arrays: target at most 3x its time.
   The kernel keeps the per-trace work of recent traces (intervals, basis, grid
   pieces), so repeated calls on one cycle, as a study makes, reuse it; the time of
   a first call on a trace (that work included) is printed beside it.
2. Reading a speed CSV (tractive.profiles.read_speed_csv) of 10^6 and 10^7 rows
   against pandas.read_csv of the same file, each in a fresh process with pandas
   already imported (the reader parses with pandas' C engine; the import is not part
   of either read): time at most 3x, peak extra memory (peak resident set during the
   read, Linux VmHWM after a reset, minus the resident set before it) at most 3x.
3. ``tractive --help`` and ``tractive --version`` in a fresh process against
   importing the dependencies (numpy, scipy, pandas, click, yaml, openpyxl) in a
   fresh process: at most 0.3x. The processes may write bytecode (as an installed
   package has it) and one unmeasured run of each comes first.
4. The combustion powertrain of the fleet-tyres example study
   (examples/fleet-tyres/study.yaml, 2,000 Monte Carlo draws): every
   CombustionPowertrain.operation call the study makes is timed as it is now (only
   the gear the shift rule picks is evaluated) and with a faithful copy of the
   earlier evaluation in every gear (benchmarks/combustion_all_gears.py) on the same
   inputs (each call the best of two runs of each, in alternating order); target:
   all-gears / current at least 3x, with results equal within 1e-12 relative. The
   whole study's time is printed beside it.
5. The fleet (benchmarks/fleet.py): 100,000 synthetic trips of 20 minutes at 1 Hz
   through tractive.fleet.engine.trip_batch in at most 30 s; the ratio to a per-trip
   library loop (scaled from 300 trips) is printed.

Each time is the best of several runs (the machine may be shared); kernel and
reference runs are interleaved so that both see the same load.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
SRC = ROOT / "src"
for folder in (SRC, ROOT / "benchmarks"):
    if str(folder) not in sys.path:
        sys.path.insert(0, str(folder))

from tractive.demand import _TRACE_CACHE, wheel_demand  # noqa: E402
from tractive.profiles import load_cycle  # noqa: E402
from tractive.roadload import RoadLoad  # noqa: E402

G = 9.80665


class Figures:
    """Collects figures and prints each with its target."""

    def __init__(self):
        self.missed = []

    def check(self, label: str, value: float, target: float, at_least: bool, unit="x"):
        """Print one figure; remember it if it misses its target."""
        ok = value >= target if at_least else value <= target
        sign = ">=" if at_least else "<="
        print(f"  {label}: {value:.2f}{unit} (target {sign} {target:g}{unit}) "
              f"{'ok' if ok else 'MISSED'}", flush=True)
        if not ok:
            self.missed.append(label)


def best_pair(fn_a, fn_b, repeats: int) -> tuple:
    """Best times of two functions run alternately."""
    best_a = best_b = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn_a()
        t1 = time.perf_counter()
        fn_b()
        t2 = time.perf_counter()
        best_a = min(best_a, t1 - t0)
        best_b = min(best_b, t2 - t1)
    return best_a, best_b


# ---------------------------------------------------------------------------
# 1. wheel energy kernel
# ---------------------------------------------------------------------------

def loop_reference(f0, f1, f2, f2_aero, m_i, mass, t, v, grade):
    """GTR 15 Annex 7 sums for one vehicle, plain Python over lists."""
    pos = neg = rolling = aero = inertia = climb = 0.0
    for i in range(1, len(t)):
        dt = t[i] - t[i - 1]
        vm = 0.5 * (v[i] + v[i - 1])
        a = (v[i] - v[i - 1]) / dt
        g = 0.5 * (grade[i] + grade[i - 1])
        s = g / (1.0 + g * g) ** 0.5
        d = vm * dt
        f_roll = f0 + f1 * vm + (f2 - f2_aero) * vm * vm
        f_aero = f2_aero * vm * vm
        f_in = m_i * a
        f_gr = mass * G * s
        f = f_roll + f_aero + f_in + f_gr
        if f > 0.0:
            pos += f * d
            rolling += f_roll * d
            aero += f_aero * d
            inertia += f_in * d
            climb += f_gr * d
        elif f < 0.0:
            neg -= f * d
    return pos, neg, rolling, aero, inertia, climb


def wheel_kernel(fig: Figures) -> None:
    """Figure 1: wheel energy against a list loop and a bare numpy pass."""
    prof = load_cycle("wltc3b")
    t, v, grade = prof.time_s, prof.speed_ms, prof.grade_fraction
    steps = len(t) - 1
    t_list, v_list = t.tolist(), v.tolist()
    g_list = np.broadcast_to(grade, t.shape).tolist()
    print(f"1. wheel energy on WLTC class 3b ({steps} intervals)")
    for n in (100, 1000, 20000):
        rng = np.random.default_rng(n)
        f0 = 130.0 * rng.uniform(0.8, 1.2, n)
        f1 = 0.40 * 3.6 * rng.uniform(0.8, 1.2, n)
        f2 = 0.032 * 12.96 * rng.uniform(0.8, 1.2, n)
        mass = 1450.0 * rng.uniform(0.9, 1.2, n)
        m_i = mass * 1.03
        rl = RoadLoad(f0, f1, f2)
        x, y, z = (rng.random((n, steps)) for _ in range(3))
        reps = 30 if n <= 1000 else 8
        kernel, bare = best_pair(lambda: wheel_demand(rl, mass, m_i, t, v, grade),
                                 lambda: x * y + z, reps)
        cold = float("inf")
        for _ in range(3):
            _TRACE_CACHE.clear()              # a first call on this trace
            cold = min(cold, _timed(lambda: wheel_demand(rl, mass, m_i, t, v, grade)))
        looped = min(n, 100)
        t0 = time.perf_counter()
        for k in range(looped):
            loop_reference(f0[k], f1[k], f2[k], f2[k], m_i[k], mass[k], t_list, v_list,
                           g_list)
        loop = (time.perf_counter() - t0) * n / looped
        print(f"  N = {n}: kernel {kernel * 1e3:.2f} ms (first call on the trace "
              f"{cold * 1e3:.2f} ms), list loop {loop * 1e3:.0f} ms (timed on {looped} "
              f"vehicles), bare multiply-add {bare * 1e3:.2f} ms")
        fig.check(f"N = {n}: list loop / kernel", loop / kernel, 50, True)
        fig.check(f"N = {n}: kernel / bare multiply-add", kernel / bare, 3, False)


# ---------------------------------------------------------------------------
# 2. CSV reading
# ---------------------------------------------------------------------------

READ = """
import json, sys, time
sys.path.insert(0, {src!r})
which, path = sys.argv[1], sys.argv[2]
import pandas                     # both sides: the import is not part of the read
if which == "pandas":
    read = lambda: pandas.read_csv(path)
else:
    from tractive.profiles import read_speed_csv
    read = lambda: read_speed_csv(path)

def status_kib(key):
    with open("/proc/self/status") as f:
        return next(int(line.split()[1]) for line in f if line.startswith(key))

with open("/proc/self/clear_refs", "w") as f:
    f.write("5")                  # Linux: reset the peak resident set (VmHWM) to now
before = status_kib("VmRSS:")
t0 = time.perf_counter()
result = read()
seconds = time.perf_counter() - t0
print(json.dumps({{"seconds": seconds, "peak_kib": status_kib("VmHWM:") - before}}))
"""


def write_speed_csv(path: Path, rows: int) -> None:
    """An invented 1 Hz urban-like speed trace of ``rows`` rows (time_s, speed_kmh)."""
    phase = np.arange(1000)
    pattern = [f"{x:.2f}" for x in 45.0 * (1.0 - np.cos(2 * np.pi * phase / 1000.0))]
    with open(path, "w", encoding="ascii") as out:
        out.write("time_s,speed_kmh\n")
        block = 100000
        for start in range(0, rows, block):
            out.write("".join(f"{i},{pattern[i % 1000]}\n"
                              for i in range(start, min(rows, start + block))))


def read_in_fresh_process(which: str, path: Path) -> dict:
    """Time and peak extra memory of one read in a new interpreter."""
    done = subprocess.run([sys.executable, "-c", READ.format(src=str(SRC)), which, str(path)],
                          capture_output=True, text=True, timeout=1800)
    if done.returncode != 0:
        return {"error": (done.stderr.strip().splitlines() or ["failed"])[-1]}
    return json.loads(done.stdout)


def csv_reading(fig: Figures, sizes) -> None:
    """Figure 2: read_speed_csv against pandas.read_csv."""
    print("2. reading a speed CSV, against pandas.read_csv of the same file")
    with tempfile.TemporaryDirectory() as folder:
        for rows in sizes:
            path = Path(folder) / f"speed_{rows}.csv"
            write_speed_csv(path, rows)
            ours = {"seconds": float("inf"), "peak_kib": float("inf")}
            ref = dict(ours)
            for _ in range(3):
                a = read_in_fresh_process("tractive", path)
                b = read_in_fresh_process("pandas", path)
                if "error" in a:
                    print(f"  {rows:.0e} rows: tractive reader failed: {a['error']}")
                    fig.missed.append(f"CSV {rows:.0e} rows")
                    break
                ours = {k: min(ours[k], a[k]) for k in ours}
                ref = {k: min(ref[k], b[k]) for k in ref}
            else:
                print(f"  {rows:.0e} rows ({path.stat().st_size / 2**20:.0f} MiB): "
                      f"tractive {ours['seconds']:.2f} s, {ours['peak_kib'] / 1024:.0f} MiB; "
                      f"pandas {ref['seconds']:.2f} s, {ref['peak_kib'] / 1024:.0f} MiB")
                fig.check(f"{rows:.0e} rows: time / pandas", ours["seconds"] / ref["seconds"],
                          3, False)
                fig.check(f"{rows:.0e} rows: peak memory / pandas",
                          ours["peak_kib"] / max(ref["peak_kib"], 1), 3, False)
            path.unlink()


# ---------------------------------------------------------------------------
# 3. start-up
# ---------------------------------------------------------------------------

def fresh_process_time(args, repeats=5) -> float:
    """Best wall time of a command in a new process (bytecode may be written)."""
    env = dict(os.environ, PYTHONPATH=str(SRC))
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run(args, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                       check=True, timeout=300)
        best = min(best, time.perf_counter() - t0)
    return best


def startup(fig: Figures) -> None:
    """Figure 3: tractive --help and --version against importing the dependencies."""
    print("3. start-up, each in a fresh process")
    commands = {"--help": [sys.executable, "-m", "tractive", "--help"],
                "--version": [sys.executable, "-m", "tractive", "--version"],
                "deps": [sys.executable, "-c",
                         "import numpy, scipy, pandas, click, yaml, openpyxl"]}
    for args in commands.values():                 # unmeasured: bytecode, file cache
        fresh_process_time(args, 1)
    best = dict.fromkeys(commands, float("inf"))
    for _ in range(7):
        for key, args in commands.items():
            best[key] = min(best[key], fresh_process_time(args, 1))
    print(f"  tractive --help {best['--help']:.3f} s, tractive --version "
          f"{best['--version']:.3f} s; import numpy, scipy, pandas, click, yaml, openpyxl "
          f"{best['deps']:.3f} s")
    for key in ("--help", "--version"):
        fig.check(f"{key} / dependency imports", best[key] / best["deps"], 0.3, False)


# ---------------------------------------------------------------------------
# 4. combustion powertrain in the example study
# ---------------------------------------------------------------------------

def combustion(fig: Figures, draws: int) -> None:
    """Figure 4: the study's powertrain evaluation, current against every gear."""
    from combustion_all_gears import operation_all_gears
    from tractive.powertrain.combustion import CombustionPowertrain
    from tractive.study.engine import run_study

    path = ROOT / "examples" / "fleet-tyres" / "study.yaml"
    print(f"4. fleet-tyres study, {draws} draws: combustion powertrain, the gear the shift "
          "rule picks against every gear (same inputs)")
    current = CombustionPowertrain.operation
    seconds = {"current": 0.0, "all gears": 0.0}
    worst = [0.0, 0, True]                         # relative difference, calls, same ints

    def both(self, force_n, speed_ms, *, accessory_scale=1.0):
        """Run both evaluations on this call's inputs; return the current one's result."""
        order = (("current", current), ("all gears", operation_all_gears))
        if worst[1] % 2:
            order = order[::-1]
        out, best = {}, {}
        for _ in range(2):                         # best of two, in turn
            for key, fn in order:
                t0 = time.perf_counter()
                out[key] = fn(self, force_n, speed_ms, accessory_scale=accessory_scale)
                best[key] = min(best.get(key, float("inf")), time.perf_counter() - t0)
        for key in seconds:
            seconds[key] += best[key]
        worst[1] += 1
        for name, new in out["current"].items():
            new, old = np.asarray(new), np.asarray(out["all gears"][name])
            if new.dtype.kind == "f":
                scale = np.maximum(np.abs(old), np.finfo(float).tiny)
                worst[0] = max(worst[0], float(np.max(np.abs(new - old) / scale, initial=0.0)))
            else:
                worst[2] &= bool(np.array_equal(new, old))
        return out["current"]

    run_study(path, draws=min(draws, 50))                # warm-up: lazy imports, caches
    study_s = _timed(lambda: run_study(path, draws=draws))
    CombustionPowertrain.operation = both
    try:
        run_study(path, draws=draws)
    finally:
        CombustionPowertrain.operation = current
    new_s, old_s = seconds["current"], seconds["all gears"]
    print(f"  {worst[1]} powertrain evaluations: current {new_s:.2f} s, all gears "
          f"{old_s:.2f} s; largest relative difference {worst[0]:.1e}, gears and flags "
          f"{'equal' if worst[2] else 'DIFFERENT'}")
    print(f"  whole study {study_s:.2f} s, of which the powertrain evaluation about "
          f"{new_s:.2f} s; with the all-gears evaluation about {study_s - new_s + old_s:.2f} s "
          f"({(study_s - new_s + old_s) / study_s:.2f}x)")
    fig.check("all-gears / current powertrain evaluation", old_s / new_s, 3, True)
    if worst[0] > 1e-12 or not worst[2]:
        print("  results differ beyond 1e-12 relative MISSED")
        fig.missed.append("combustion results equal")


def _timed(fn) -> float:
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


# ---------------------------------------------------------------------------
# 5. fleet
# ---------------------------------------------------------------------------

def fleet_figure(fig: Figures, trips: int) -> None:
    """Figure 5: benchmarks/fleet.py, 100,000 trips in at most 30 s."""
    import fleet

    print(f"5. fleet wheel energy, {trips} trips of 20 minutes at 1 Hz (benchmarks/fleet.py)")
    fleet_s, loop_s = fleet.measure(trips, 300)
    limit = fleet.TARGET_S * trips / 100_000
    print(f"  fleet {fleet_s:.1f} s; per-trip library loop (scaled from 300 trips) "
          f"{loop_s:.1f} s: {loop_s / fleet_s:.1f}x")
    fig.check(f"{trips} trips: seconds", fleet_s, limit, False, unit=" s")


def main(argv=None) -> int:
    """Run every figure; 1 when a target is missed."""
    quick = "--quick" in (sys.argv[1:] if argv is None else argv)
    fig = Figures()
    wheel_kernel(fig)
    csv_reading(fig, (10**6,) if quick else (10**6, 10**7))
    startup(fig)
    combustion(fig, 500 if quick else 2000)
    fleet_figure(fig, 10_000 if quick else 100_000)
    if fig.missed:
        print("missed: " + "; ".join(fig.missed))
        return 1
    print("all targets met")
    return 0


if __name__ == "__main__":
    sys.exit(main())
