"""Command lines whose JSON output is recorded in ``tests/data/golden/``.

Each case is run from the repository root. ``tests/test_golden.py`` runs them
again and compares with the recorded documents; ``python tests/golden_cases.py
--record`` writes the records anew (only after a deliberate change of a
result, stated in the commit).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = ROOT / "tests" / "data" / "golden"

#: name → arguments of ``tractive`` (each case adds --json itself)
CASES = {
    "cycles": ["cycles"],
    "energy_hatchback": ["energy", "examples/vehicles/hatchback.yaml", "--cycle", "udds",
                         "--cycle", "hwfet", "--cycle", "wltc3b"],
    "energy_electric_van": ["energy", "examples/vehicles/electric_van.yaml"],
    "energy_diesel_truck": ["energy", "examples/vehicles/diesel_light_truck.yaml",
                            "--cycle", "udds", "--cycle", "hwfet"],
    "energy_petrol_map": ["energy", "examples/vehicles/petrol_hatchback_map.yaml"],
    "energy_track_lap": ["energy", "examples/track-wing/club_racer.yaml", "--cycle",
                         "examples/track-wing/lap.csv"],
    "performance_track_car": ["performance", "examples/vehicles/track_car.yaml"],
    "performance_electric_van": ["performance", "examples/vehicles/electric_van.yaml"],
    "performance_diesel_truck": ["performance", "examples/vehicles/diesel_light_truck.yaml"],
    "range_curve_electric_van": ["range-curve", "examples/vehicles/electric_van.yaml"],
    "range_curve_diesel_truck": ["range-curve", "examples/vehicles/diesel_light_truck.yaml"],
    "compare_ev_van": ["compare", "examples/ev-van-conversion/study.yaml", "--draws", "300"],
    "compare_fleet_tyres": ["compare", "examples/fleet-tyres/study.yaml", "--draws", "300"],
    "compare_track_wing": ["compare", "examples/track-wing/study.yaml", "--draws", "300"],
    "compare_ev_van_us": ["compare", "tests/data/golden-studies/ev-van-conversion-us.yaml",
                          "--draws", "200"],
    "compare_fleet_tyres_us": ["compare", "tests/data/golden-studies/fleet-tyres-us.yaml",
                               "--draws", "200"],
    "energy_mix_electric_van": ["energy", "examples/vehicles/electric_van.yaml", "--cycle",
                                "udds", "--cycle", "hwfet", "--mix-shares", "0.55,0.45"],
    "energy_mix_diesel_truck": ["energy", "examples/vehicles/diesel_light_truck.yaml",
                                "--cycle", "udds", "--cycle", "hwfet", "--mix-shares",
                                "0.55,0.45"],
    "coastdown_example": ["coastdown", "examples/coastdown/coastdown_log.csv", "--mass-kg",
                          "1380", "--frontal-area-m2", "2.2"],
    "coastdown_quick": ["coastdown-quick", "--mass-kg", "1400", "--high", "100", "90",
                        "4.9", "--low", "40", "30", "8.0"],
}


def record() -> None:
    GOLDEN.mkdir(parents=True, exist_ok=True)
    for name, args in CASES.items():
        done = subprocess.run([sys.executable, "-m", "tractive", *args, "--json"], cwd=ROOT,
                              capture_output=True, text=True)
        if done.returncode != 0:
            raise SystemExit(f"{name}: exit {done.returncode}: {done.stderr}")
        json.loads(done.stdout)
        (GOLDEN / f"{name}.json").write_text(done.stdout)
        print(f"recorded {name}")


if __name__ == "__main__":
    if sys.argv[1:] != ["--record"]:
        raise SystemExit("usage: python tests/golden_cases.py --record")
    record()
