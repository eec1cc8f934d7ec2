"""The coast-down library face (tractive.api): typed results, outputs all or nothing,
never over an input; the command only formats what the library returns."""

from __future__ import annotations

import ast
import json
import os
from pathlib import Path

import pytest

from conftest import ROOT, run_cli
from test_coastdown import MASS, as_log, simulate
from tractive import api
from tractive.coastdown import CoastdownResult, TwoIntervalEstimate


@pytest.fixture(scope="module")
def log_file(tmp_path_factory):
    log = as_log(simulate(pairs=2, rate_hz=2.0), seed=41)
    path = tmp_path_factory.mktemp("cdapi") / "log.csv"
    path.write_text("time_s,speed_kmh,heading_deg\n" + "\n".join(
        f"{t:.1f},{v * 3.6:.3f},{h:.0f}" for t, v, h in
        zip(log.time_s, log.speed_ms, log.heading_deg)) + "\n")
    return path


def test_coastdown_returns_a_typed_report_equal_to_the_command_json(log_file):
    report = api.coastdown([log_file], mass_kg=MASS, reference="none")
    assert isinstance(report.result, CoastdownResult) and report.written == ()
    done = run_cli("coastdown", log_file, "--mass-kg", MASS, "--reference", "none", "--json")
    assert done.returncode == 0, done.stderr
    # the command prints the library's dictionary (JSON round trip, json module)
    assert json.loads(done.stdout) == json.loads(json.dumps(
        _plain(report.to_dict())))


def _plain(data):
    from tractive.plain import plain

    return plain(data)


def test_coastdown_quick_returns_the_estimate():
    est = api.coastdown_quick(mass_kg=1400, high_kmh=(100, 90), high_time_s=4.9,
                              low_kmh=(40, 30), low_time_s=8.0)
    assert isinstance(est, TwoIntervalEstimate)
    done = run_cli("coastdown-quick", "--mass-kg", "1400", "--high", "100", "90", "4.9",
                   "--low", "40", "30", "8.0", "--json")
    assert json.loads(done.stdout) == json.loads(json.dumps(_plain(est.to_dict())))


def test_command_module_reaches_the_library_only_through_api():
    tree = ast.parse((ROOT / "src" / "tractive" / "cli" / "coastdown.py").read_text())
    imported = set()
    package = ["tractive", "cli"]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            base = package[:len(package) - node.level + 1] if node.level else []
            base = ".".join(base + ([node.module] if node.module else []))
            imported |= ({base} if node.module else {f"{base}.{a.name}" for a in node.names})
        elif isinstance(node, ast.Import):
            imported |= {a.name for a in node.names}
    inside = {m for m in imported if m.startswith("tractive")}
    # tractive.cli.cli is the command group the commands attach to
    assert inside == {"tractive.api", "tractive.cli.cli", "tractive.cli._checks",
                      "tractive.cli._output"}, inside


def test_outputs_are_all_or_nothing(monkeypatch, tmp_path, log_file):
    import tractive.coastdown as cd
    from tractive.errors import InputError

    def broken(result, path, *, inputs=()):
        raise InputError("cannot write: disk full", file=str(path))

    monkeypatch.setattr(cd, "plot_coastdown", broken)
    out, png = tmp_path / "rl.yaml", tmp_path / "fit.png"
    out.write_text("old: 1\n")
    with pytest.raises(InputError) as err:
        api.coastdown([log_file], mass_kg=MASS, output=out, plot=png)
    assert err.value.field == "plot"
    assert out.read_text() == "old: 1\n"                  # the first output kept its content
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rl.yaml"]   # no temporary left


def test_a_hard_link_to_the_log_is_never_overwritten(tmp_path, log_file):
    link = tmp_path / "link.yaml"
    os.link(log_file, link)
    before = Path(log_file).read_bytes()
    done = run_cli("coastdown", log_file, "--mass-kg", MASS, "-o", link, "--plot",
                   tmp_path / "fit.png")
    assert done.returncode == 2
    assert "--output" in done.stderr and "input file" in done.stderr
    assert Path(log_file).read_bytes() == before
    assert not (tmp_path / "fit.png").exists()            # nothing written at all
    with pytest.raises(api.InputError):
        api.coastdown([log_file], mass_kg=MASS, output=link)
    assert Path(log_file).read_bytes() == before


def test_both_outputs_are_written_together(tmp_path, log_file):
    out, png = tmp_path / "rl.yaml", tmp_path / "fit.png"
    report = api.coastdown([log_file], mass_kg=MASS, output=out, plot=png)
    assert report.written == (str(out), str(png))
    assert out.exists() and png.read_bytes()[:4] == b"\x89PNG"   # PNG signature (PNG spec)
    assert report.to_dict()["written"] == [str(out), str(png)]
