"""The reference in docs/ covers every command, option and input key, and its links resolve.

Commands and options come from the click group itself (its lazy list_commands and
get_command), input keys from the YAML readers (every key a ``spec.Section`` is
asked for while the example vehicles and studies load), so a new option or key
fails here until it is documented.
"""

from __future__ import annotations

import re
from pathlib import Path

import click
import pytest

import tractive
from tractive.cli import cli
from tractive.spec import read_yaml, recording_keys
from tractive.study.spec import load_study
from tractive.vehicle import load_vehicle

REPO = Path(__file__).resolve().parents[1]
DOCS = REPO / "docs"
PACKAGE = Path(tractive.__file__).resolve().parent
INPUT_FOLDERS = (REPO / "examples", REPO / "tests" / "data")


def _commands():
    """(name, click.Command) of every command of the group, loaded lazily."""
    ctx = click.Context(cli)
    return [(name, cli.get_command(ctx, name)) for name in cli.list_commands(ctx)]


def _long_names(command: click.Command) -> list[str]:
    """Every long option name of a command, the help option excepted."""
    ctx = click.Context(command)
    help_names = set(command.get_help_option_names(ctx))
    names = []
    for param in command.params:
        if isinstance(param, click.Option):
            names += [o for o in param.opts + param.secondary_opts
                      if o.startswith("--") and o not in help_names]
    return names


def _sections(text: str) -> dict[str, str]:
    """Markdown text split at level-2 headings: heading → text up to the next one."""
    out, head, lines = {}, None, []
    for line in text.splitlines():
        if line.startswith("## "):
            if head is not None:
                out[head] = "\n".join(lines)
            head, lines = line[3:].strip(), []
        elif head is not None:
            lines.append(line)
    if head is not None:
        out[head] = "\n".join(lines)
    return out


def _command_section(sections: dict, name: str) -> str | None:
    """Text under the heading that names ``tractive NAME`` exactly."""
    for head, body in sections.items():
        if re.fullmatch(rf"`?tractive {re.escape(name)}`?", head):
            return body
    return None


def _has_option(text: str, option: str) -> bool:
    """True when ``option`` appears in ``text`` as a whole option name."""
    return re.search(rf"(?<![\w-]){re.escape(option)}(?![\w-])", text) is not None


def test_command_introspection_sees_the_commands():
    # the introspection itself must find commands and options (else every check
    # below would pass vacuously); energy has had --cycle since its first version
    commands = dict(_commands())
    assert "energy" in commands and "--cycle" in _long_names(commands["energy"])


def test_every_command_and_option_is_in_the_commands_page():
    sections = _sections((DOCS / "commands.md").read_text(encoding="utf-8"))
    missing = []
    for name, command in _commands():
        body = _command_section(sections, name)
        if body is None:
            missing.append(f"no '## tractive {name}' heading")
            continue
        missing += [f"{name} {opt}" for opt in _long_names(command)
                    if not _has_option(body, opt)]
    group_ctx = click.Context(cli)
    help_names = set(cli.get_help_option_names(group_ctx))
    text = (DOCS / "commands.md").read_text(encoding="utf-8")
    for param in cli.params:
        for opt in param.opts:
            if opt.startswith("--") and opt not in help_names and not _has_option(text, opt):
                missing.append(f"tractive {opt}")
    assert not missing, "undocumented in docs/commands.md: " + ", ".join(missing)


def _input_files():
    """Every YAML file of the examples and the test data."""
    return sorted(p for folder in INPUT_FOLDERS for pattern in ("*.yaml", "*.yml")
                  for p in folder.rglob(pattern))


def _string_values(data) -> set:
    """Every text value of a parsed YAML document (names the user defines)."""
    if isinstance(data, dict):
        return set().union(*(_string_values(v) for v in data.values())) if data else set()
    if isinstance(data, list):
        return set().union(*(_string_values(v) for v in data)) if data else set()
    return {data} if isinstance(data, str) else set()


def _code_words(text: str) -> set:
    """Identifier-like words inside inline code and fenced code blocks."""
    code = re.findall(r"```.*?```", text, flags=re.S)
    rest = re.sub(r"```.*?```", "", text, flags=re.S)
    code += re.findall(r"`([^`\n]+)`", rest)
    return set(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", "\n".join(code)))


def _load_fleet_example(path: Path) -> None:
    """Read a fleet study whose trips table is made on demand: a copy that points at
    its vehicles table and at one generated trip per van in a temporary folder."""
    import subprocess
    import sys
    import tempfile

    from tractive.fleet.study import load_fleet_study

    text = path.read_text(encoding="utf-8")
    with tempfile.TemporaryDirectory() as tmp:
        trips = Path(tmp) / "trips.csv"
        subprocess.run([sys.executable, str(path.parent / "make_trips.py"), "--trips", "1",
                        "--out", str(trips)], check=True, capture_output=True)
        copy = Path(tmp) / path.name
        copy.write_text(text.replace("vehicles: vehicles.csv",
                                     f"vehicles: {path.parent / 'vehicles.csv'}")
                        .replace("trips: trips.csv", f"trips: {trips}"), encoding="utf-8")
        load_fleet_study(copy)


def _recorded_keys():
    """(file, field, key) of every key the readers ask for, over all inputs."""
    found = []
    files = [p for p in _input_files() if isinstance(read_yaml(p), dict)]
    assert files, "no example vehicle or study found"
    for path in files:
        data = read_yaml(path)
        user_names = _string_values(data)
        with recording_keys() as record:
            if "fleet" in data:
                _load_fleet_example(path)
            elif "baseline" in data:
                load_study(path)
            else:
                load_vehicle(path)
        for file, field, key, listed in record:
            if file and Path(file).resolve().is_relative_to(PACKAGE):
                continue             # bundled data (the cycle index), not user input
            if listed and key in user_names:
                continue             # a name the file defines itself (a mix share)
            found.append((file, field, key))
    return found


def test_every_input_key_is_in_the_docs():
    records = _recorded_keys()
    keys = {key for _, _, key in records}
    # the recorder must see the keys of both kinds of file (else the check is empty)
    assert {"mass_kg", "road_load", "baseline", "modifications"} <= keys
    words = set()
    for page in DOCS.glob("*.md"):
        words |= _code_words(page.read_text(encoding="utf-8"))
    missing = sorted({f"{field} ({Path(file).name if file else '?'})"
                      for file, field, key in records
                      if key.rsplit(".", 1)[-1] not in words})
    assert not missing, "input keys not documented in docs/: " + ", ".join(missing)


def _markdown_files():
    """README.md and every page of docs/."""
    return [REPO / "README.md", *sorted(DOCS.glob("*.md"))]


def _slug(heading: str) -> str:
    """The anchor a Markdown renderer gives a heading (GitHub's rule)."""
    text = re.sub(r"[`*_]", "", heading.strip().lower())
    text = re.sub(r"[^\w\- ]", "", text)
    return text.replace(" ", "-")


def _anchors(path: Path) -> set:
    """Anchors of every heading of a Markdown file."""
    text = re.sub(r"```.*?```", "", path.read_text(encoding="utf-8"), flags=re.S)
    return {_slug(m) for m in re.findall(r"^#{1,6} (.+)$", text, flags=re.M)}


@pytest.mark.parametrize("page", _markdown_files(), ids=lambda p: p.name)
def test_relative_links_resolve(page):
    text = re.sub(r"```.*?```", "", page.read_text(encoding="utf-8"), flags=re.S)
    broken = []
    links = re.findall(r"\]\(([^)\s]+)\)", text)
    for link in links:
        if re.match(r"[a-z]+:", link):
            continue                 # absolute URL
        target, _, anchor = link.partition("#")
        path = (page.parent / target).resolve() if target else page
        if not path.exists():
            broken.append(link)
        elif anchor and path.suffix == ".md" and anchor not in _anchors(path):
            broken.append(link)
    assert not broken, f"{page.name}: broken links {broken}"


def test_docs_pages_exist_and_readme_is_short():
    for name in ("index", "commands", "vehicle-file", "study-file", "profiles", "coastdown",
                 "equations", "sources"):
        assert (DOCS / f"{name}.md").is_file(), name
    assert len((REPO / "README.md").read_text(encoding="utf-8").splitlines()) <= 220
