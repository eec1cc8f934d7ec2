"""Study-file reading: signed and percent changes, tyre-label classes, examples."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest

from tractive.cli import main
from tractive.study.modify import tyre_class_interval_kg_t, tyre_label_crr
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


def test_tyre_label_classes():
    # Regulation (EC) No 1222/2009 Annex I Part A, C2 class B: 5.6-6.7 kg/t, i.e. the
    # interval above class A's limit 5.5 up to 6.7; middle 6.1 kg/t = Crr 0.0061; a value
    # known only to lie in an interval of width w has sd w / sqrt(12) (GUM 4.3.7)
    crr, sd = tyre_label_crr("C2/B")
    assert crr == pytest.approx(0.0061)
    assert sd == pytest.approx(0.0012 / math.sqrt(12))
    assert tyre_class_interval_kg_t("C1", "E") == (9.0, 10.5)     # C1 E: 9.1-10.5
    assert tyre_class_interval_kg_t("C3", "D") == (6.0, 7.0)      # C3 D: 6.1-7.0
    assert tyre_class_interval_kg_t("C1", "A")[1] == 6.5          # C1 A: <= 6.5
    assert tyre_class_interval_kg_t("C2", "G")[0] == 10.5         # C2 G: >= 10.6
    with pytest.raises(ValueError):
        tyre_label_crr("C1/D")                                    # no class D for C1
    # class order: every class middle above the one before
    for cat in ("C1", "C2", "C3"):
        from tractive.study.modify import TYRE_CLASS_UPPER_KG_T
        mids = [tyre_label_crr(f"{cat}/{c}")[0] for c in TYRE_CLASS_UPPER_KG_T[cat]]
        assert np.all(np.diff(mids) > 0)


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
    # model: corner speed <= sqrt(mu g R) (point-mass lateral limit, Milliken ch. 2)
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
    assert dv2.max() <= make_lap.ACCEL_MS2 + 1e-9
    assert dv2.min() >= -make_lap.BRAKE_MS2 - 1e-9
    r_min = min(seg[2] for seg in make_lap.CIRCUIT if seg[2])
    assert v.min() == pytest.approx(math.sqrt(make_lap.MU_LATERAL * 9.80665 * r_min))
