"""The ``tractive`` command: a thin layer over :mod:`tractive.api`.

Every command prints a readable table, or with ``--json`` one JSON document.
User mistakes (:class:`~tractive.errors.InputError`, bad options) print one
line on stderr and exit with status 2, with no traceback.
"""

from __future__ import annotations

import importlib
import sys

import click

from ..api import InputError


#: command name → module of this package that defines it. Modules are imported
#: only when their command is used (or help lists them), so a quick command does
#: not pay for the imports of a heavy one.
COMMAND_MODULES = {
    "cycles": "cycles",
    "energy": "energy",
    "performance": "performance",
    "range-curve": "range_curve",
    "compare": "compare",
    "coastdown": "coastdown",
    "coastdown-quick": "coastdown",
    "lap": "lap",
    "fleet": "fleet",
}


class _Group(click.Group):
    def list_commands(self, ctx):
        return sorted(set(super().list_commands(ctx)) | set(COMMAND_MODULES))

    def get_command(self, ctx, name):
        if name not in self.commands and name in COMMAND_MODULES:
            importlib.import_module(f"{__name__}.{COMMAND_MODULES[name]}")
        return super().get_command(ctx, name)

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except InputError as exc:
            click.echo(f"tractive: error: {exc.one_line()}", err=True, color=True)
            sys.exit(2)


#: ``color``: click would strip ANSI sequences from text written off a terminal; every
#: stream is a :class:`~tractive.cli._safe.SafeStream` instead, which writes each
#: control character as a visible escape, on a terminal or not
@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"],
                                           "color": True})
@click.version_option(package_name="tractive", prog_name="tractive")
def cli():
    """What a vehicle modification costs or saves.

    Road load, wheel energy over drive cycles and your own speed profiles,
    fuel or battery use, range and performance. Run a command with --help
    for its options; every command takes --json.
    """


#: the process's own standard error, for progress bars that draw with control sequences
RAW_STDERR = sys.stderr


def main(argv=None):
    """Console-script entry point; returns only through sys.exit.

    Standard output and error are wrapped so that no control character from a
    name, key or file reaches the terminal (see :mod:`tractive.cli._safe`).
    """
    from ._safe import SafeStream

    global RAW_STDERR
    out, err = sys.stdout, sys.stderr
    RAW_STDERR = err
    sys.stdout, sys.stderr = SafeStream(out), SafeStream(err)
    try:
        _run(argv)
    finally:
        sys.stdout, sys.stderr = out, err


def _run(argv):
    """Run the command line; one line on stderr and exit 2 for a user mistake."""
    try:
        rv = cli.main(args=argv, prog_name="tractive", standalone_mode=False)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except click.ClickException as exc:
        click.echo(f"tractive: error: {' '.join(exc.format_message().split())}", err=True,
                   color=True)
        sys.exit(exc.exit_code)
    except click.exceptions.Abort:
        click.echo("tractive: aborted", err=True, color=True)
        sys.exit(1)
    except InputError as exc:
        click.echo(f"tractive: error: {exc.one_line()}", err=True, color=True)
        sys.exit(2)
    sys.exit(rv if isinstance(rv, int) else 0)
