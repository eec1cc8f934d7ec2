"""Start-up: listing the commands (what ``tractive --help`` does) loads no heavy library;
``tractive --help`` and ``--version`` load neither numpy nor a command module."""

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


HELP = """
import sys
from tractive.cli import main
try:
    main([sys.argv[1]])
except SystemExit:
    pass
loaded = [m for m in sys.modules if m == "numpy" or m.startswith("tractive.cli.")
          and m not in ("tractive.cli._safe",)]
print("LOADED:" + " ".join(sorted(loaded)))
"""


def _fresh(option):
    done = subprocess.run([sys.executable, "-c", HELP, option], capture_output=True, text=True,
                          env={"PYTHONPATH": SRC, "PATH": ""}, timeout=120)
    assert done.returncode == 0, done.stderr
    text, loaded = done.stdout.rsplit("LOADED:", 1)
    return text, loaded.split()


def test_help_and_version_load_no_numpy_and_no_command_module():
    # a fresh interpreter: the command list of --help is read from the modules' source
    for option in ("--help", "--version"):
        text, loaded = _fresh(option)
        assert loaded == [], f"{option} loaded {loaded}"


def test_help_lists_what_click_makes_from_the_loaded_commands():
    # consistency, not an outside reference: the command list made without importing
    # the command modules equals click's own list from the imported commands
    import click

    from tractive.cli import COMMAND_MODULES, cli
    text, _ = _fresh("--help")
    ctx = click.Context(cli, info_name="tractive")
    for name in COMMAND_MODULES:                   # load every command
        cli.get_command(ctx, name)
    formatter = ctx.make_formatter()
    click.Group.format_commands(cli, ctx, formatter)
    eager = formatter.getvalue()
    assert eager.strip() and eager in text


def test_version_is_the_installed_distribution_version():
    # --version prints tractive.__version__ (no package-metadata scan at start-up);
    # it must be the version the installed distribution declares (pyproject.toml)
    from importlib.metadata import version

    import tractive
    text, _ = _fresh("--version")
    assert tractive.__version__ == version("tractive")
    assert text.strip() == f"tractive, version {tractive.__version__}"
