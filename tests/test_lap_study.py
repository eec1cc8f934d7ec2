"""Studies on a simulated lap (``lap:TRACK`` profiles): lap time per variant and per
Monte Carlo draw, energy on each car's own lap, attribution, the profile syntax."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from tractive import api
from tractive.errors import InputError
from tractive.metrics import PER_PROFILE, lookup, mix
from tractive.study.engine import run_study
from tractive.study.spec import parse_lap_profile

ROOT = Path(__file__).resolve().parents[1]
WING = ROOT / "examples" / "track-wing"
CAR = WING / "club_racer.yaml"
CIRCUIT = WING / "circuit.csv"
VAN = ROOT / "examples" / "vehicles" / "electric_van.yaml"

WING_CHANGES = """    changes:
      cda_m2: +0.13
      cda_std_m2: 0.03
      cla_m2: +1.05
      cla_std_m2: 0.15
      mass_kg: +7
"""


def _study(tmp_path, profiles: str, *, vehicle=CAR, mods: str | None = None,
           draws: int = 0, extra: str = "") -> Path:
    """A study file in tmp_path (the track copied beside it, so paths are relative)."""
    (tmp_path / "circuit.csv").write_text(CIRCUIT.read_text())
    mods = mods if mods is not None else "  - name: wing\n" + WING_CHANGES
    text = (f"name: lap study\nbaseline:\n  vehicle: {vehicle}\nmodifications:\n{mods}"
            f"driving:\n  profiles:\n{profiles}{extra}"
            f"uncertainty:\n  draws: {draws}\n  seed: 5\n")
    path = tmp_path / "study.yaml"
    path.write_text(text)
    return path


@pytest.fixture(scope="module")
def wing_result(tmp_path_factory):
    """The club racer with and without a wing on the circuit, 40 draws."""
    tmp = tmp_path_factory.mktemp("lapwing")
    path = _study(tmp, "    - name: lap\n      profile: lap:circuit.csv\n"
                       "    - name: race\n      profile: lap:circuit.csv*3\n"
                       "    - steady:100kmh:60s\n", draws=40)
    return run_study(path)


def _row(result, variant, profile):
    return next(r for r in result.rows if r.variant == variant and r.profile == profile)


def test_wing_laps_faster_with_lower_top_speed(wing_result):
    # physical property (point-mass lap; Milliken & Milliken 1995, ch. 2, from memory):
    # downforce raises the grip-limited corner speed, v = sqrt(mu·N/(m·kappa)) with
    # N = m·g + ½·rho·ClA·v², so a twisty lap gets quicker, while the drag area caps the
    # speed reached at the end of the straights
    base, wing = _row(wing_result, "baseline", "lap"), _row(wing_result, "wing", "lap")
    assert wing.metrics["lap_time_s"] < base.metrics["lap_time_s"]
    assert wing.metrics["lap_max_speed_kmh"] < base.metrics["lap_max_speed_kmh"]
    assert wing.change["lap_time_s"] == pytest.approx(
        wing.metrics["lap_time_s"] - base.metrics["lap_time_s"], rel=1e-12)
    # the speed trace is each car's own: more drag at higher corner speeds costs wheel
    # energy (aero part grows), unlike a trace followed as given
    assert wing.change["aero_energy_kwh"] > 0


def test_baseline_lap_time_equals_lap_command(wing_result):
    # consistency: the study's nominal baseline is the vehicle file as written (no
    # ambient block), so its lap is the one `tractive lap` simulates
    report = api.lap(CAR, CIRCUIT).to_dict()
    base = _row(wing_result, "baseline", "lap").metrics
    assert base["lap_time_s"] == pytest.approx(report["lap_time_s"], rel=1e-12)
    assert base["lap_max_speed_kmh"] == pytest.approx(report["top_speed_kmh"], rel=1e-12)
    assert base["positive_energy_kwh"] == pytest.approx(report["positive_energy_kwh"],
                                                        rel=1e-12)
    # N closed laps repeat the flying lap: N times the energy of `tractive lap --laps N`
    report3 = api.lap(CAR, CIRCUIT, laps=3).to_dict()
    race = _row(wing_result, "baseline", "race").metrics
    assert race["positive_energy_kwh"] == pytest.approx(report3["positive_energy_kwh"],
                                                        rel=1e-9)
    assert race["lap_time_s"] == base["lap_time_s"]
    info = {p.name: p for p in wing_result.profiles}
    assert info["race"].duration_s == pytest.approx(3 * report["lap_time_s"], rel=1e-9)
    assert info["lap"].distance_km == pytest.approx(report["distance_m"] / 1000.0, rel=1e-3)


def test_intervals_with_draws(wing_result):
    base, wing = _row(wing_result, "baseline", "lap"), _row(wing_result, "wing", "lap")
    for row in (base, wing):
        lo, hi = row.interval_low["lap_time_s"], row.interval_high["lap_time_s"]
        assert lo < row.metrics["lap_time_s"] < hi          # uncertain mass, CdA, ClA, Crr
    lo, hi = wing.change_low["lap_time_s"], wing.change_high["lap_time_s"]
    assert lo < wing.change["lap_time_s"] < hi
    assert wing.distinguishable["lap_time_s"] is True       # the wing is clearly quicker
    assert wing.interval_low["positive_energy_kwh"] < wing.interval_high["positive_energy_kwh"]


def test_attribution_adds_up(wing_result):
    # Shapley values are efficient (Shapley 1953): the parts add up to the total change
    rows = [a for a in wing_result.attribution
            if a.metric == "lap_time_s" and a.profile == "lap"]
    assert len(rows) == 1
    a = rows[0]
    assert set(a.parts) == {"aero", "downforce", "mass"}
    assert sum(a.parts.values()) == pytest.approx(a.total, rel=1e-12, abs=1e-12)
    assert a.total == pytest.approx(_row(wing_result, "wing", "lap").change["lap_time_s"],
                                    rel=1e-12)
    assert a.parts["downforce"] < 0 < a.parts["aero"]       # grip gains, drag costs
    assert a.parts["mass"] > 0                              # 7 kg more to accelerate


def test_no_follow_warnings_for_laps(wing_result):
    # the simulation keeps within the drive and the tyres by construction
    assert not [w for w in wing_result.warnings if "cannot follow" in w]


def test_other_profiles_unchanged_by_a_lap(tmp_path, wing_result):
    alone = run_study(_study(tmp_path, "    - steady:100kmh:60s\n", draws=40))
    for variant in ("baseline", "wing"):
        a = _row(alone, variant, "steady:100kmh:60s")
        b = _row(wing_result, variant, "steady:100kmh:60s")
        assert a.metrics == b.metrics
        assert a.interval_low == b.interval_low


def test_lap_time_is_not_mixed():
    # a per-profile figure: a distance share of a lap time has no meaning
    assert lookup("lap_time_s").kind == PER_PROFILE
    assert lookup("lap_time_s").us is None                  # seconds in both systems
    out = mix([{"lap_time_s": 70.0, "positive_energy_wh_per_km": 800.0},
               {"lap_time_s": 90.0, "positive_energy_wh_per_km": 200.0}], [0.5, 0.5])
    assert "lap_time_s" not in out
    assert out["positive_energy_wh_per_km"] == pytest.approx(500.0)


def test_lap_in_a_mix_and_us_units(tmp_path):
    extra = ("  mixes:\n    - name: day\n      shares_pct:\n        lap: 40\n"
             "        steady:80kmh:60s: 60\n")
    path = _study(tmp_path, "    - name: lap\n      profile: lap:circuit.csv\n", extra=extra)
    res = run_study(path)
    lap = _row(res, "baseline", "lap").metrics
    steady = _row(res, "baseline", "steady:80kmh:60s").metrics
    day = _row(res, "baseline", "day").metrics
    assert "lap_time_s" not in day
    # distance-share weighted mean (40 CFR 600 Appendix II mixing of per-distance amounts)
    assert day["positive_energy_wh_per_km"] == pytest.approx(
        0.4 * lap["positive_energy_wh_per_km"] + 0.6 * steady["positive_energy_wh_per_km"],
        rel=1e-12)
    text = path.read_text().replace("name: lap study\n", "name: lap study\nunits: us\n")
    path.write_text(text)
    us = _row(run_study(path), "baseline", "lap").metrics
    assert us["lap_time_s"] == lap["lap_time_s"]
    # exact mile, NIST SP 811: 1 mi = 1.609344 km
    assert us["lap_max_speed_mph"] == pytest.approx(lap["lap_max_speed_kmh"] / 1.609344,
                                                    rel=1e-12)


def test_battery_energy_on_the_simulated_lap(tmp_path):
    # an electric van with its powertrain: battery energy on its own simulated lap equals
    # the powertrain run on `tractive lap`'s trace (same models, same trace)
    mods = "  - name: lighter\n    changes:\n      mass_kg: -200\n"
    path = _study(tmp_path, "    - name: lap\n      profile: lap:circuit.csv*2\n",
                  vehicle=VAN, mods=mods, draws=8)
    res = run_study(path)
    base = _row(res, "baseline", "lap")
    report = api.lap(VAN, CIRCUIT, laps=2).to_dict()
    assert base.metrics["lap_time_s"] == pytest.approx(report["lap_time_s"], rel=1e-12)
    assert base.metrics["battery_energy_kwh"] == pytest.approx(
        report["battery_energy_kwh"], rel=1e-9)
    lighter = _row(res, "lighter", "lap")
    assert lighter.change["lap_time_s"] < 0                 # less mass: quicker
    assert lighter.change["battery_energy_kwh"] < 0
    assert lighter.interval_low["battery_wh_per_km"] <= lighter.metrics["battery_wh_per_km"]
    assert not [w for w in res.warnings if "cannot follow" in w]
    series = [s for s in res.series if s.variant == "baseline" and s.profile == "lap"][0]
    assert series.time_s[-1] == pytest.approx(2 * report["lap_time_s"], rel=1e-9)


@pytest.mark.parametrize("text, expected", [
    ("lap:circuit.csv", ("circuit.csv", 1)),
    ("lap: circuit.csv * 15", ("circuit.csv", 15)),
    ("LAP:ring.gpx*2", ("ring.gpx", 2)),
    ("lap:'odd*name.csv'*3", ("odd*name.csv", 3)),
    ("udds", None),
    ("circuit.csv", None),
])
def test_lap_syntax(text, expected):
    assert parse_lap_profile(text) == expected


@pytest.mark.parametrize("text, words", [
    ("lap:", "lap:<track file>"),
    ("lap:circuit.csv*0", "from 1 to"),
    ("lap:circuit.csv*1001", "from 1 to"),
    ("lap:circuit.csv*x", "whole number"),
    ("lap:circuit.csv*2*3", "one lap count"),
    ("lap:circuit.csv+udds", "cannot be joined"),
])
def test_lap_syntax_errors(text, words):
    with pytest.raises(InputError, match=words.replace("*", r"\*")):
        parse_lap_profile(text)


def test_errors_name_the_study_line(tmp_path):
    path = _study(tmp_path, "    - name: lap\n      profile: lap:circuit.csv*0\n")
    with pytest.raises(InputError) as err:
        run_study(path)
    assert err.value.file and err.value.file.endswith("study.yaml") and err.value.line
    path = _study(tmp_path, "    - name: lap\n      profile: lap:nowhere.csv\n")
    with pytest.raises(InputError) as err:
        run_study(path)
    assert err.value.line is not None and "nowhere.csv" in err.value.one_line()


def test_open_stretch_refuses_laps(tmp_path):
    lines = ["x_m,y_m"] + [f"{4.0 * i:.1f},0.0" for i in range(60)]
    (tmp_path / "straight.csv").write_text("\n".join(lines) + "\n")
    path = _study(tmp_path, "    - name: s\n      profile: lap:straight.csv*2\n")
    with pytest.raises(InputError, match="open stretch"):
        run_study(path)
    res = run_study(_study(tmp_path, "    - name: s\n      profile: lap:straight.csv\n"))
    t = _row(res, "baseline", "s").metrics["lap_time_s"]
    assert math.isfinite(t) and t > 0
    assert np.isfinite(_row(res, "wing", "s").metrics["positive_energy_kwh"])


def test_command_line(cli_run, tmp_path):
    path = _study(tmp_path, "    - name: lap\n      profile: lap:circuit.csv\n")
    done = cli_run("compare", str(path), "--metrics", "lap_time_s")
    assert done.returncode == 0, done.stderr
    assert "lap time [s]" in done.stdout
