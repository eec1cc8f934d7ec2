"""Order of changes in combinations, signed numbers in YAML spellings, mix shares."""
from __future__ import annotations

from pathlib import Path

import pytest

from tractive.errors import InputError
from tractive.study.engine import run_study
from tractive.units import KMH_MS, STANDARD_GRAVITY_MS2

CAR = """\
name: plain car
mass_kg: 1500
rotating_mass_fraction: 0.0
road_load:
  cda_m2: 0.70
  crr: 0.010
  air_density_kg_m3: 1.2
"""

# the same car as measured coefficients, converted exactly: f0 = Crr m g,
# f1 = 0, f2 = 1/2 rho CdA / 3.6^2 (v in km/h, 1 km/h = 1/3.6 m/s exactly)
COEF = f"""\
name: measured car
mass_kg: 1500
rotating_mass_fraction: 0.0
road_load:
  f0_n: {0.010 * 1500 * STANDARD_GRAVITY_MS2!r}
  f1_n_per_kmh: 0
  f2_n_per_kmh2: {0.5 * 1.2 * 0.70 / 3.6 ** 2!r}
  reference_air_density_kg_m3: 1.2
"""

STEADY = "steady:90kmh:600s"
D_M = 90 * KMH_MS * 600          # distance of the steady profile [m]
G = STANDARD_GRAVITY_MS2


def _study(folder: Path, mods: str, combos: str = "", vehicle: str = CAR,
           driving: str = f'  profiles: ["{STEADY}"]\n') -> Path:
    (folder / "car.yaml").write_text(vehicle, encoding="utf-8")
    text = (f"name: probe\nbaseline:\n  vehicle: car.yaml\nmodifications:\n{mods}"
            f"{combos}driving:\n{driving}uncertainty:\n  draws: 0\n")
    (folder / "study.yaml").write_text(text, encoding="utf-8")
    return folder / "study.yaml"


def _rolling_kwh(crr: float, mass_kg: float) -> float:
    # road-load equation (Gillespie ch. 4, from memory): rolling force Crr m g,
    # energy at constant speed = force x distance
    return crr * mass_kg * G * D_M / 3.6e6


MODS = """\
  - name: plus50
    changes: {mass_kg: +50}
  - name: minus20
    changes: {mass_kg: -20}
  - name: set1600
    changes: {mass_kg: {set: 1600}}
  - name: crrpct
    changes: {crr: -10%}
  - name: label
    changes: {tyre_label: C1/B 2020/740}
"""


def test_combination_order_equals_applying_the_changes_by_hand(tmp_path):
    combos = """\
combinations:
  - {name: add_add, modifications: [plus50, minus20]}
  - {name: pct_label, modifications: [crrpct, label]}
  - {name: label_pct, modifications: [label, crrpct]}
  - {name: add_set, modifications: [plus50, set1600]}
  - {name: set_add, modifications: [set1600, plus50]}
"""
    res = run_study(_study(tmp_path, MODS, combos))
    # EU 2020/740 Annex I Part A, C1 class B: 6.6-7.7 kg/t, taken as (6.5, 7.7], middle
    # 7.1 kg/t (from memory; the label value in kg/t is 1000 x Crr)
    label_crr = 0.0071
    expected = {   # by hand, one change after the other, in the order listed
        "add_add": _rolling_kwh(0.010, 1500 + 50 - 20),
        "pct_label": _rolling_kwh(label_crr, 1500),
        "label_pct": _rolling_kwh(0.9 * label_crr, 1500),
        "add_set": _rolling_kwh(0.010, 1600),
        "set_add": _rolling_kwh(0.010, 1650),
    }
    for name, rolling in expected.items():
        row = res.row(name, STEADY)
        assert row.metrics["rolling_energy_kwh"] == pytest.approx(rolling, rel=1e-12), name
    # the result states that a later absolute value or label wipes out an earlier change
    notes = [w for w in res.warnings if w.startswith("combination ")]
    assert any("'pct_label'" in w and "crr -10%" in w and "tyre_label" in w for w in notes)
    assert any("'add_set'" in w and "mass_kg +50" in w for w in notes)
    assert not any(f"'{n}'" in w for w in notes for n in ("add_add", "label_pct",
                                                          "set_add"))
    changes = {v.name: v.changes for v in res.variants}
    assert changes["label_pct"][0].startswith("label: tyre_label")
    assert changes["label_pct"][1] == "crrpct: crr -10%"


def test_whole_vehicle_member_is_listed_where_it_is_applied(tmp_path):
    (tmp_path / "other.yaml").write_text(CAR.replace("mass_kg: 1500", "mass_kg: 1400"),
                                         encoding="utf-8")
    mods = """\
  - name: rack
    changes: {mass_kg: +30}
  - name: other
    vehicle: other.yaml
    changes: {crr: -0.001}
"""
    combos = "combinations:\n  - {name: both, modifications: [rack, other]}\n"
    res = run_study(_study(tmp_path, mods, combos))
    # the whole vehicle first, then the changes in the order listed (by hand:
    # 1400 kg + 30 kg, Crr 0.010 - 0.001)
    assert res.row("both", STEADY).metrics["rolling_energy_kwh"] == \
        pytest.approx(_rolling_kwh(0.009, 1430), rel=1e-12)
    both = [v for v in res.variants if v.name == "both"][0]
    assert both.changes[0].startswith("other: vehicle ")
    assert both.changes[1:] == ("rack: mass_kg +30", "other: crr -0.001")


@pytest.mark.parametrize("written, amount", [
    ("+.12", 0.12), ("+5.", 5.0), ("+1e-2", 0.01), ("+1_0", 10.0), ("+ 0.2", 0.2),
    ("-.1", -0.1), ('"+0.1"', 0.1)])
def test_signed_yaml_spellings_are_signed_amounts(tmp_path, written, amount):
    # aero term 1/2 rho dCdA v^2 x distance (drag equation, from memory)
    res = run_study(_study(tmp_path, f"  - name: m\n    changes:\n      cda_m2: {written}\n"))
    change = res.row("m", STEADY).change["aero_energy_kwh"]
    assert change == pytest.approx(0.5 * 1.2 * amount * (90 * KMH_MS) ** 2 * D_M / 3.6e6,
                                   rel=1e-12)
    assert not any("absolute value" in w for w in res.warnings)


@pytest.mark.parametrize("written, factor", [("-15 %", 0.85), ("+5.%", 1.05),
                                             ("-.5%", 0.995)])
def test_percent_spellings(tmp_path, written, factor):
    res = run_study(_study(tmp_path, f"  - name: m\n    changes:\n      crr: {written}\n"))
    assert res.row("m", STEADY).metrics["rolling_energy_kwh"] == \
        pytest.approx(_rolling_kwh(0.010 * factor, 1500), rel=1e-12)


CHANGES = ["{cda_m2: +0.1}", "{crr: -10%}", "{crr: +0.001}", "{mass_kg: +100}",
           "{crr: +0.001, mass_kg: +100}", "{mass_kg: +100, crr: +0.001}",
           "{crr: -10%, mass_kg: -80}", "{crr_per_kmh: +0.00001}"]


@pytest.mark.parametrize("changes", CHANGES)
def test_coefficient_and_physical_forms_agree(tmp_path, changes):
    # the same physical change on the same car in both forms gives the same wheel
    # energy: 1/2 rho dCdA v^2 d and dCrr m g d (road-load equation), the coefficient
    # rules of docs/study-file.md (f0 proportional to mass) being exact for f0 = Crr m g
    out = []
    for form, text in (("phys", CAR), ("coef", COEF)):
        folder = tmp_path / form
        folder.mkdir()
        mods = f"  - name: m\n    changes: {changes}\n"
        res = run_study(_study(folder, mods, vehicle=text,
                               driving=f'  profiles: ["{STEADY}", udds]\n'))
        out.append([res.row("m", p).metrics["positive_energy_kwh"] for p in (STEADY, "udds")])
    assert out[0] == pytest.approx(out[1], rel=1e-12)


def test_mix_shares_rounded_to_99_99_are_refused(tmp_path):
    driving = ('  profiles: ["steady:50kmh:600s", "steady:90kmh:600s"]\n  mixes:\n'
               '    - name: m\n      shares_pct: {"steady:50kmh:600s": 33.33, '
               '"steady:90kmh:600s": 66.66}\n')
    with pytest.raises(InputError, match=r"add up to 99\.99 %") as info:
        run_study(_study(tmp_path, "  - name: m\n    changes: {mass_kg: +1}\n",
                         driving=driving))
    assert info.value.field.endswith("shares_pct")
    # 33.33 + 66.67 = 100 (to float rounding) is read; weights are distance shares:
    # e_mix = sum w_i e_i (docs/equations.md, Duty mixes)
    res = run_study(_study(tmp_path, "  - name: m\n    changes: {mass_kg: +1}\n",
                           driving=driving.replace("66.66", "66.67")))
    e = [res.row("baseline", p).metrics["positive_energy_wh_per_km"]
         for p in ("steady:50kmh:600s", "steady:90kmh:600s")]
    assert res.row("baseline", "m").metrics["positive_energy_wh_per_km"] == \
        pytest.approx(0.3333 * e[0] + 0.6667 * e[1], rel=1e-12)
