"""The ``tractive`` command: a thin layer over :mod:`tractive.api`.

Every command prints a readable table, or with ``--json`` one JSON document.
User mistakes (:class:`~tractive.errors.InputError`, bad options) print one
line on stderr and exit with status 2, with no traceback.
"""

from __future__ import annotations

import importlib
import sys

import click

from .. import __version__
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

    def format_commands(self, ctx, formatter):
        """The command list of ``tractive --help`` without importing the command
        modules: a command not loaded yet is described by :func:`_described` from
        its module's source (the same short help click would make)."""
        commands = []
        for name in self.list_commands(ctx):
            cmd = self.commands.get(name) or _described(name) or self.get_command(ctx, name)
            if cmd is not None and not cmd.hidden:
                commands.append((name, cmd))
        if commands:
            limit = formatter.width - 6 - max(len(name) for name, _ in commands)
            with formatter.section("Commands"):
                formatter.write_dl([(name, cmd.get_short_help_str(limit))
                                    for name, cmd in commands])

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
@click.version_option(__version__, prog_name="tractive")   # no package metadata scan
def cli():
    """What a vehicle modification costs or saves.

    Road load, wheel energy over drive cycles and your own speed profiles,
    fuel or battery use, range, performance and lap time; baselines against
    modifications with uncertainty and money; fleets on their recorded trips;
    road load from coast-down logs. Run a command with --help for its options;
    every command takes --json. Reference: docs/ of the project.
    """


def _described(name: str):
    """A stand-in :class:`click.Command` carrying only the help text of command
    ``name``, read from its module's source without importing the module; None
    when the text is not a plain literal there (then the module is imported).

    The help is the ``help=`` text of ``@cli.command(name, ...)`` (a string, or
    an f-string whose literal start holds the whole first paragraph) or else the
    decorated function's docstring.
    """
    import ast
    from pathlib import Path

    if name not in COMMAND_MODULES:
        return None
    try:
        source = Path(__file__).with_name(COMMAND_MODULES[name] + ".py").read_text("utf-8")
        tree = ast.parse(source)
    except (OSError, SyntaxError, ValueError):
        return None
    for node in tree.body:
        if not isinstance(node, ast.FunctionDef):
            continue
        for deco in node.decorator_list:
            if (isinstance(deco, ast.Call) and isinstance(deco.func, ast.Attribute)
                    and deco.func.attr == "command" and deco.args
                    and isinstance(deco.args[0], ast.Constant) and deco.args[0].value == name):
                keywords = {k.arg: k.value for k in deco.keywords}
                if set(keywords) - {"help", "epilog"}:
                    return None
                text = _literal_start(keywords["help"]) if "help" in keywords \
                    else ast.get_docstring(node, clean=False)
                return click.Command(name, help=text) if text else None
    return None


def _literal_start(node):
    """A string literal's text; an f-string's text before its first placeholder when
    that holds a whole paragraph (enough for the short help); else None."""
    import ast

    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return node.value
    if isinstance(node, ast.JoinedStr):
        text = ""
        for part in node.values:
            if not (isinstance(part, ast.Constant) and isinstance(part.value, str)):
                break
            text += part.value
        return text if "\n\n" in text.strip() else None
    return None


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
