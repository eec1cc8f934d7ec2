"""Shared fixtures: the command run in-process, example files, the invented vehicles."""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
sys.path.insert(0, str(Path(__file__).resolve().parent))


@dataclass
class Done:
    """What a command run left: exit status, standard output and standard error."""

    returncode: int
    stdout: str
    stderr: str


def run_cli(*args, cwd=None, env=None) -> Done:
    """Run ``tractive ARGS`` in this process (click's CliRunner) like the console script.

    Returns the exit status and both streams, as ``subprocess.run`` would.
    """
    import os

    from click.testing import CliRunner

    from tractive.cli import main

    runner = CliRunner()
    old = os.getcwd()
    if cwd is not None:
        os.chdir(cwd)
    try:
        res = runner.invoke(_Main(main), [str(a) for a in args], env=env,
                            catch_exceptions=True)
    finally:
        os.chdir(old)
    if res.exception is not None and not isinstance(res.exception, SystemExit):
        raise res.exception
    return Done(res.exit_code, res.stdout, res.stderr)


class _Main:
    """Adapter so CliRunner calls the console-script entry point (``main``)."""

    def __init__(self, func):
        self.func = func
        self.name = "tractive"

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True,
             **extra):
        return self.func(args)


@pytest.fixture
def cli_run():
    """The ``tractive`` command run in-process: ``cli_run("energy", path, "--json")``."""
    return run_cli


def pytest_terminal_summary(terminalreporter):
    """Report the size of the bad-input corpus at the end of every run (also when the
    tests run in several worker processes, whose own output is not shown)."""
    try:
        import test_bad_inputs as corpus
    except Exception:       # the corpus module itself failed: its tests report that
        return
    n = (len(corpus.CASES) + len(corpus.ACCEPTED) + len(corpus.INJECTED)
         + len(corpus.CONTROL_NAMES) + len(corpus.WRITE_FAULTS))
    classes = {c.klass for c in corpus.CASES}
    terminalreporter.write_line(
        f"bad-input corpus: {n} cases ({len(corpus.CASES)} refused inputs in {len(classes)} "
        f"classes, {len(corpus.ACCEPTED)} accepted forms, "
        f"{len(corpus.INJECTED) + len(corpus.CONTROL_NAMES)} name-escaping checks, "
        f"{len(corpus.WRITE_FAULTS)} write faults)")
