"""The readable study output: narrow blocks, headline sentences, intervals on values.

References: none outside the project — these check the layout contract (width and
content), not physics; the numbers printed are the JSON's, rounded (checked below
against the JSON of the same run).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ["ev-van-conversion", "fleet-tyres", "track-wing"]


@pytest.mark.parametrize("example", EXAMPLES)
@pytest.mark.parametrize("width", [100, 80])
def test_every_line_fits_and_each_variant_has_its_headline(example, width):
    study = ROOT / "examples" / example / "study.yaml"
    done = run_cli("compare", study, "--draws", "200", env={"COLUMNS": str(width)})
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert max(len(line) for line in lines) <= width
    data = json.loads(run_cli("compare", study, "--draws", "200", "--json").stdout)
    text = done.stdout
    for v in data["variants"]:
        if v["role"] == "baseline":
            continue
        # the headline sentence starts with the variant's name and carries an interval
        start = next(i for i, line in enumerate(lines) if line.startswith(v["name"] + " ")
                     or line.startswith(v["name"] + ":"))
        sentence = [lines[start]]
        for line in lines[start + 1:]:
            if not line.startswith("  "):
                break
            sentence.append(line)
        assert "…" in " ".join(sentence)
    assert "change" in text and "baseline" in text


def test_metrics_option_and_all_and_wide():
    study = ROOT / "examples" / "ev-van-conversion" / "study.yaml"
    done = run_cli("compare", study, "--draws", "0", "--metrics", "range_km,npv",
                   env={"COLUMNS": "100"})
    assert done.returncode == 0, done.stderr
    assert "range [km]" in done.stdout and "net present value" in done.stdout
    assert "battery energy per km" not in done.stdout
    bad = run_cli("compare", study, "--draws", "0", "--metrics", "nope_kmh")
    assert bad.returncode == 2 and "nope_kmh" in bad.stderr and "available" in bad.stderr
    assert len(bad.stderr.strip().splitlines()) == 1
    every = run_cli("compare", study, "--draws", "0", "--all", env={"COLUMNS": "100"})
    assert "braking energy" in every.stdout
    assert max(len(x) for x in every.stdout.splitlines()) <= 100
    wide = run_cli("compare", study, "--draws", "0", "--wide")
    assert "positive_energy_wh_per_km" in wide.stdout


def test_values_shown_are_the_json_values_rounded():
    study = ROOT / "examples" / "ev-van-conversion" / "study.yaml"
    data = json.loads(run_cli("compare", study, "--draws", "100", "--json").stdout)
    text = run_cli("compare", study, "--draws", "100", env={"COLUMNS": "100"}).stdout
    row = next(r for r in data["rows"] if r["variant"] == "baseline"
               and r["profile"] == "town deliveries")
    lo, hi = row["interval_low"]["range_km"], row["interval_high"]["range_km"]
    assert f"{row['range_km']:,.0f} ({lo:,.0f} … {hi:,.0f})" in text


def test_payback_beyond_life_is_flagged_in_the_table(tmp_path):
    study = ROOT / "examples" / "ev-van-conversion" / "study.yaml"
    text = run_cli("compare", study, "--draws", "0", env={"COLUMNS": "100"}).stdout
    # the roof rack raises the energy cost: it never pays back
    assert "never" in text
