"""A plain (non-editable) ``pip install .`` carries the bundled drive cycles.

The package is built from a copy of the repository in a temporary folder (so no
build/ or egg-info folder appears in the repository) and installed into a fresh
virtual environment. That environment's python then runs with PYTHONPATH set to
this interpreter's site-packages, so numpy, scipy and the other dependencies
resolve from there while tractive itself can only come from the fresh install.
"""

from __future__ import annotations

import json
import os
import shutil
import site
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
CYCLES = ["udds", "ftp75", "hwfet", "us06", "nycc", "wltc3b", "wltc2lmh"]

SUBPACKAGES = sorted(
    ".".join(("tractive",) + p.parent.relative_to(REPO / "src" / "tractive").parts)
    for p in (REPO / "src" / "tractive").rglob("__init__.py"))

CHECK = """
import importlib, json, sys, tractive
from importlib import resources
for name in sys.argv[1:]:
    importlib.import_module(name)
import tractive.cli
from tractive.profiles import list_cycles, load_cycle
data = resources.files("tractive.drive_cycles")
print(json.dumps({
    "tractive": tractive.__file__,
    "data": str(data),
    "udds_samples": len(load_cycle("udds").time_s),
    "low_samples": len(load_cycle("wltc3b:low").time_s),
    "cycles": [c.name for c in list_cycles()],
    "notes": sorted(p.name for p in data.iterdir() if p.name.endswith(".md")),
}))
"""


def _leftovers(root: Path) -> set:
    found = {p for p in (root / "build", root / "dist") if p.exists()}
    found |= set(root.glob("*.egg-info")) | set((root / "src").glob("*.egg-info"))
    return {str(p) for p in found}


def _run(cmd, env, cwd):
    done = subprocess.run(cmd, env=env, cwd=cwd, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, f"{cmd} failed:\n{done.stdout}\n{done.stderr}"
    return done.stdout


@pytest.mark.slow
def test_non_editable_install_finds_bundled_cycles(tmp_path):
    before = _leftovers(REPO)
    copy = tmp_path / "repo"
    copy.mkdir()
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.egg-info")
    for folder in ("src", "drive-cycles"):
        shutil.copytree(REPO / folder, copy / folder, ignore=ignore)
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(REPO / name, copy / name)

    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True, timeout=600)
    py = venv / ("Scripts/python.exe" if os.name == "nt" else "bin/python")

    env = {k: v for k, v in os.environ.items() if not k.startswith(("PYTHON", "PIP_"))}
    # build requirements (setuptools) and dependencies come from this interpreter
    env["PYTHONPATH"] = os.pathsep.join(site.getsitepackages())
    env["PIP_DISABLE_PIP_VERSION_CHECK"] = "1"
    env["PIP_NO_INPUT"] = "1"
    _run([str(py), "-m", "pip", "install", "--no-deps", "--no-build-isolation", "--no-index",
          str(copy)], env, tmp_path)
    out = json.loads(_run([str(py), "-c", CHECK, *SUBPACKAGES], env,
                          tmp_path).strip().splitlines()[-1])
    # the console script of the fresh install runs a command on bundled data
    script = venv / ("Scripts/tractive.exe" if os.name == "nt" else "bin/tractive")
    cycles = json.loads(_run([str(script), "cycles", "--json"], env, tmp_path))
    assert [c["name"] for c in cycles["cycles"]] == CYCLES

    venv_root = venv.resolve()
    assert Path(out["tractive"]).resolve().is_relative_to(venv_root)
    assert Path(out["data"]).resolve().is_relative_to(venv_root)
    assert not list(venv_root.glob("lib*/**/__editable__*"))
    # the bundled tables: UDDS 0-1369 s at 1 Hz and the WLTC low phase 0-589 s
    # (SOURCES.md; phase boundaries of UN GTR No. 15 Annex 1)
    assert out["udds_samples"] == 1370
    assert out["low_samples"] == 590
    assert out["cycles"] == CYCLES
    assert out["notes"] == sorted([f"{c}.md" for c in CYCLES] + ["README.md"])
    assert _leftovers(REPO) == before
