"""Every example's JSON output against the documents recorded before a change.

The cases are in ``tests/golden_cases.py``; they run in-process from the
repository root. Structure, keys, text and integers must be equal; floats
must be equal to within :data:`REL_TOL` relative or :data:`ABS_TOL` absolute
(0 and 0: to the last printed digit).
"""

from __future__ import annotations

import json
import math

import pytest

from golden_cases import CASES, GOLDEN, ROOT

#: relative tolerance on floats (0 = bit-identical, as printed); a new summation
#: order may move the last bits
REL_TOL = 1e-12
#: absolute tolerance on floats: a difference of nearly equal numbers (a change, an
#: attribution's interaction term that is rounding noise) keeps the absolute error of
#: its terms, not their relative one, when the last bits move
ABS_TOL = 1e-12


def _diff(a, b, path="$"):
    """First difference between two JSON documents, or None."""
    if isinstance(a, dict) and isinstance(b, dict):
        if list(a) != list(b):
            return f"{path}: keys {list(a)} != {list(b)}"
        for k in a:
            d = _diff(a[k], b[k], f"{path}.{k}")
            if d:
                return d
        return None
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return f"{path}: length {len(a)} != {len(b)}"
        for i, (x, y) in enumerate(zip(a, b)):
            d = _diff(x, y, f"{path}[{i}]")
            if d:
                return d
        return None
    if isinstance(a, float) and isinstance(b, float):
        if a == b or math.isclose(a, b, rel_tol=REL_TOL, abs_tol=ABS_TOL):
            return None
        return f"{path}: {a!r} != {b!r}"
    if type(a) is not type(b) or a != b:
        return f"{path}: {a!r} != {b!r}"
    return None


@pytest.mark.parametrize("name", sorted(CASES))
def test_output_unchanged(name, monkeypatch, cli_run):
    monkeypatch.chdir(ROOT)
    done = cli_run(*CASES[name], "--json")
    assert done.returncode == 0, done.stderr
    recorded = json.loads((GOLDEN / f"{name}.json").read_text())
    assert _diff(json.loads(done.stdout), recorded) is None, _diff(json.loads(done.stdout),
                                                                   recorded)
