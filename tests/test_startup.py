"""Start-up: listing the commands (what ``tractive --help`` does) loads no heavy library."""

import subprocess
import sys
from pathlib import Path

SRC = str(Path(__file__).resolve().parents[1] / "src")

LIST_COMMANDS = """
import sys
import click
from tractive.cli import cli
ctx = click.Context(cli)
names = cli.list_commands(ctx)
assert all(cli.get_command(ctx, name) is not None for name in names)
print(" ".join(names))
print(" ".join(m for m in ("scipy", "pandas", "matplotlib") if m in sys.modules))
"""


def test_listing_commands_imports_no_scipy_pandas_or_matplotlib():
    # a fresh interpreter: modules a test run has already imported would hide a load
    done = subprocess.run([sys.executable, "-c", LIST_COMMANDS], capture_output=True,
                          text=True, env={"PYTHONPATH": SRC, "PATH": ""}, timeout=120)
    assert done.returncode == 0, done.stderr
    names, heavy = (done.stdout.split("\n") + [""])[:2]
    assert "compare" in names.split() and "coastdown" in names.split()
    assert heavy == "", f"loaded at start-up: {heavy}"


def test_written_out_normal_quantile_equals_scipy():
    # the coast-down fit keeps z(0.975) as a number so that importing it loads no scipy;
    # it must be scipy.stats.norm.ppf(0.975) to the last bit
    from scipy import stats

    from tractive.coastdown import fitting
    assert fitting._Z95 == float(stats.norm.ppf(0.975))


def test_lazy_names_still_import():
    # public names of tractive.coastdown stay importable (now loaded on first use)
    from tractive.coastdown import COMBINES, analyze_coastdown, two_interval_estimate
    assert callable(analyze_coastdown) and callable(two_interval_estimate)
    assert "joint" in COMBINES
