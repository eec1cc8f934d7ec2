"""Study-file reading: signed and percent changes, tyre-label classes, examples."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest

from tractive.cli import main
from tractive.study.tyres import (TYRE_CLASS_UPPER_KG_T, parse_tyre_label,
                                  tyre_class_interval_kg_t, tyre_label_crr)
from tractive.study.spec import load_study

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ["ev-van-conversion", "track-wing", "fleet-tyres"]


def test_change_forms(tmp_path):
    (tmp_path / "car.yaml").write_text("name: c\nmass_kg: 1000\nroad_load:\n  cda_m2: 0.6\n"
                                       "  crr: 0.01\n")
    (tmp_path / "study.yaml").write_text("""\
baseline: {vehicle: car.yaml}
modifications:
  - name: m
    changes:
      cda_m2: +0.12
      crr: -15%
      mass_kg: 950
      cla_m2: {set: -0.2}
      rotating_mass_fraction: "+2.5%"
driving:
  profiles: [udds]
""")
    spec = load_study(tmp_path / "study.yaml")
    ch = {c.key: c for c in spec.modifications[0].changes}
    assert (ch["cda_m2"].mode, ch["cda_m2"].value) == ("add", 0.12)
    assert ch["crr"].mode == "scale" and ch["crr"].value == pytest.approx(0.85)
    assert (ch["mass_kg"].mode, ch["mass_kg"].value) == ("set", 950.0)
    assert (ch["cla_m2"].mode, ch["cla_m2"].value) == ("set", -0.2)
    assert ch["rotating_mass_fraction"].value == pytest.approx(1.025)
    assert spec.name == "study" and spec.draws > 0


def test_tyre_label_classes_of_regulation_1222_2009():
    # Regulation (EC) No 1222/2009 Annex I Part A, C2 class B: 5.6-6.7 kg/t, i.e. the
    # interval above class A's limit 5.5 up to 6.7; middle 6.1 kg/t = Crr 0.0061; a value
    # known only to lie in an interval of width w has sd w / sqrt(12) (GUM 4.3.7, section
    # from memory)
    crr, sd = tyre_label_crr("C2/B 1222/2009")
    assert crr == pytest.approx(0.0061)
    assert sd == pytest.approx(0.0012 / math.sqrt(12))
    old = "1222/2009"
    assert tyre_class_interval_kg_t("C1", "E", old) == (9.0, 10.5)     # C1 E: 9.1-10.5
    assert tyre_class_interval_kg_t("C3", "D", old) == (6.0, 7.0)      # C3 D: 6.1-7.0
    assert tyre_class_interval_kg_t("C1", "A", old)[1] == 6.5          # C1 A: <= 6.5
    assert tyre_class_interval_kg_t("C2", "G", old)[0] == 10.5         # C2 G: >= 10.6
    with pytest.raises(ValueError, match="class D does not exist"):
        tyre_label_crr("C1/D 1222/2009")                               # no class D for C1
    for cat in ("C1", "C2", "C3"):
        mids = [tyre_label_crr(f"{cat}/{c} {old}")[0] for c in TYRE_CLASS_UPPER_KG_T[old][cat]]
        assert np.all(np.diff(mids) > 0)


def test_tyre_label_classes_of_regulation_2020_740():
    # Regulation (EU) 2020/740 Annex I Part A keeps classes A-E: the empty D of C1/C2 is
    # dropped, the old E becomes D and the old F/G merge into E (structure confirmed;
    # boundaries from memory: C1 D 9.1-10.5, E >= 10.6; C2 D 8.1-9.2, E >= 9.3;
    # C3 D 6.1-7.0, E >= 7.1; A-C as in (EC) 1222/2009)
    new, old = "2020/740", "1222/2009"
    for cat in ("C1", "C2", "C3"):
        assert list(TYRE_CLASS_UPPER_KG_T[new][cat]) == ["A", "B", "C", "D", "E"]
        for c in "ABC":
            assert tyre_class_interval_kg_t(cat, c, new) == tyre_class_interval_kg_t(cat, c, old)
    for cat in ("C1", "C2"):
        assert tyre_class_interval_kg_t(cat, "D", new) == tyre_class_interval_kg_t(cat, "E", old)
        assert tyre_class_interval_kg_t(cat, "E", new)[0] == \
            tyre_class_interval_kg_t(cat, "F", old)[0]
    assert tyre_class_interval_kg_t("C3", "D", new) == (6.0, 7.0)
    assert tyre_class_interval_kg_t("C3", "E", new)[0] == 7.0
    assert tyre_class_interval_kg_t("C2", "E", new)[0] == 9.2
    assert tyre_class_interval_kg_t("C1", "E", new)[0] == 10.5
    # a label without a regulation is read under 2020/740; three ways of writing it
    assert tyre_label_crr("C2/D") == tyre_label_crr("C2/D 2020/740") == \
        tyre_label_crr("C2/D (EU) 2020/740") == \
        tyre_label_crr({"category": "C2", "class": "D", "regulation": "2020/740"})
    assert tyre_label_crr("C2/D")[0] == pytest.approx(0.0086)        # (8.0 + 9.2) / 2 kg/t
    assert parse_tyre_label("C2/D").stated is False
    assert parse_tyre_label("c2/e 1222/2009") == parse_tyre_label(
        {"category": "C2", "class": "E", "regulation": "1222/2009"})


@pytest.mark.parametrize("text, words", [
    ("C1/F", ["class F does not exist", "2020/740", "C1/F 1222/2009"]),
    ("C2/G 2020/740", ["class G does not exist", "classes A, B, C, D, E"]),
    ("C2/D 1222/2009", ["class D does not exist", "C2/D 2020/740"]),
    ("C2/B 2021/999", ["unknown tyre-label regulation", "2020/740", "1222/2009"]),
    ("C4/B", ["write the tyre category and class"]),
])
def test_tyre_label_classes_that_do_not_exist(text, words):
    with pytest.raises(ValueError) as err:
        parse_tyre_label(text)
    for w in words:
        assert w in str(err.value)


def test_tyre_label_mistake_in_a_study_names_the_field(tmp_path):
    from tractive.errors import InputError

    (tmp_path / "car.yaml").write_text("name: c\nmass_kg: 1000\nroad_load:\n  cda_m2: 0.6\n"
                                       "  crr: 0.01\n")
    (tmp_path / "study.yaml").write_text("""\
baseline: {vehicle: car.yaml}
modifications:
  - name: m
    changes:
      tyre_label: C1/G
driving:
  profiles: [udds]
""")
    with pytest.raises(InputError) as err:
        load_study(tmp_path / "study.yaml")
    assert err.value.field == "modifications[0].changes.tyre_label" and err.value.line == 5
    assert "class G does not exist" in err.value.message


@pytest.mark.parametrize("name", EXAMPLES)
def test_examples_run_with_json(name, capsys):
    study = ROOT / "examples" / name / "study.yaml"
    with pytest.raises(SystemExit) as e:
        main(["compare", str(study), "--json", "--draws", "40"])
    assert e.value.code == 0
    data = json.loads(capsys.readouterr().out)
    assert data["rows"][0]["variant"] == "baseline"
    for row in data["rows"]:
        assert "change" in row and "change_pct" in row


def test_lap_trace_is_reproducible_and_within_its_limits(tmp_path):
    # make_lap.py rebuilds the committed lap.csv exactly, and the trace honours its own
    # model: corner speed <= sqrt(mu g R) (point-mass lateral limit, Milliken ch. 2,
    # chapter from memory), v dv/ds <= a(v) forward and >= -a_brake backward
    folder = ROOT / "examples" / "track-wing"
    sys.path.insert(0, str(folder))
    try:
        import make_lap
    finally:
        sys.path.pop(0)
    t, v_kmh = make_lap.make_lap()
    committed = np.loadtxt(folder / "lap.csv", delimiter=",", skiprows=2)
    assert np.allclose(committed[:, 0], np.round(t, 1)) and \
        np.allclose(committed[:, 1], np.round(v_kmh, 2))
    s, v_lim = make_lap.speed_limit_ms()
    v = make_lap.lap_speed_ms(s, v_lim)
    assert np.all(v <= v_lim + 1e-9)
    dv2 = np.diff(v ** 2) / make_lap.STEP_M / 2
    car = make_lap.load_car()
    bound = np.maximum(make_lap.acceleration_limit_ms2(car, v[:-1]),
                       make_lap.acceleration_limit_ms2(car, v[1:]))
    # relative 1e-4: linear interpolation of S(v) on its 4001-point speed grid
    assert np.all(dv2 <= bound * (1 + 1e-4))
    assert dv2.max() <= make_lap.ACCEL_MS2 * (1 + 1e-4)
    assert dv2.min() >= -make_lap.BRAKE_MS2 - 1e-9
    r_min = min(seg[2] for seg in make_lap.CIRCUIT if seg[2])
    assert v.min() == pytest.approx(math.sqrt(make_lap.MU_LATERAL * 9.80665 * r_min))


def test_lap_trace_asks_no_more_than_the_club_racer_can_give():
    # the wheel force the committed lap asks, from Newton's second law with the road load
    # (tractive's wheel demand, UN GTR 15 Annex 7 intervals, annex from memory), stays
    # below the full-load force of club_racer.yaml at every step: F_avail = eta P(n) / v in
    # the best gear, n = v i / r (gear kinematics), P(n) read from the full-load table
    # with numpy.interp; and its power F v stays below the peak wheel power of tractive.performance
    import yaml

    from tractive.demand import wheel_demand
    from tractive.performance import performance_summary
    from tractive.profiles import resolve_profile
    from tractive.vehicle import load_vehicle

    folder = ROOT / "examples" / "track-wing"
    car = load_vehicle(folder / "club_racer.yaml")
    perf = yaml.safe_load((folder / "club_racer.yaml").read_text())["performance"]
    prof = resolve_profile("lap.csv", base_dir=str(folder), dt_s=0.5)
    d = wheel_demand(car.resistance(), car.mass_kg, car.inertial_mass_kg, prof.time_s,
                     prof.speed_ms, prof.grade_fraction)
    force = np.asarray(d.force_n)
    v = np.asarray(d.intervals.speed_ms)
    ratios = np.asarray(perf["gear_ratios"])[:, None] * perf["final_drive_ratio"]
    rpm = v[None, :] * ratios / perf["tyre_radius_m"] * 60 / (2 * math.pi)
    power_w = 1000 * np.interp(rpm, perf["full_load"]["speed_rpm"],
                               perf["full_load"]["power_kw"])
    ok = (rpm >= perf["full_load"]["speed_rpm"][0]) & (rpm <= perf["rev_limit_rpm"])
    available = np.max(np.where(ok, perf["driveline_efficiency"] * power_w / v, 0.0), axis=0)
    moving = v > 60 / 3.6                    # every gear is above its lowest speed here
    assert moving.all()
    assert np.all(force <= available)
    peak_kw = performance_summary(car).peak_wheel_power_kw
    assert np.max(force * v) / 1000 <= peak_kw


def test_label_without_regulation_is_warned_where_the_letter_differs(tmp_path):
    # C2 class E: >= 9.3 kg/t under Regulation (EU) 2020/740 (from memory), 8.1-9.2 kg/t
    # under Regulation (EC) No 1222/2009 (read in the regulation); class B is the same in
    # both, so it needs no note
    from tractive.study.engine import run_study

    (tmp_path / "car.yaml").write_text("name: c\nmass_kg: 3000\nroad_load:\n  cda_m2: 1.6\n"
                                       "  crr: 0.008\n")
    (tmp_path / "study.yaml").write_text("""\
baseline:
  vehicle: car.yaml
  changes: {tyre_label: C2/E}
modifications:
  - name: b
    changes: {tyre_label: C2/B}
  - name: e old
    changes: {tyre_label: C2/E 1222/2009}
driving:
  profiles: ["steady:80kmh:60s"]
uncertainty: {draws: 0}
""")
    res = run_study(tmp_path / "study.yaml")
    notes = [w for w in res.warnings if "tyre label" in w]
    assert len(notes) == 1 and notes[0].startswith("baseline: tyre label C2/E")
    assert "≥ 9.3 kg/t" in notes[0] and "8.1–9.2 kg/t" in notes[0]
    # the old class E is the new class D: C2/E 1222/2009 gives the Crr of C2/D 2020/740
    crr_old_e = tyre_label_crr("C2/E 1222/2009")[0]
    assert crr_old_e == tyre_label_crr("C2/D")[0]


def test_reference_states_agree_with_the_coast_down_corrections():
    # consistency check: the study's default reference densities are the coast-down
    # module's reference states (UN GTR No. 15 Annex 4, from memory; SAE J2263 /
    # 40 CFR 1066.805 20 C, 98.21 kPa -> 1.1671 kg/m^3 in the reference table)
    from tractive.coastdown.corrections import REFERENCE_STATES
    from tractive.study import modify

    assert modify.gtr15_air_density_kg_m3() == pytest.approx(
        REFERENCE_STATES["gtr15"].air_density_kg_m3, rel=1e-12)
    assert modify.j2263_air_density_kg_m3() == pytest.approx(
        REFERENCE_STATES["j2263"].air_density_kg_m3, rel=1e-12)
    assert modify.j2263_air_density_kg_m3() == pytest.approx(1.1671, abs=5e-5)
