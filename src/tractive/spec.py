"""Reading and validating YAML input with file, field and line in every error.

YAML is parsed with PyYAML's safe loader, extended so that every mapping and
list remembers the line of each of its entries. :class:`Section` wraps one
mapping and hands out typed, range-checked values; anything wrong becomes an
:class:`~tractive.errors.InputError` naming the file, the dotted field and the
line. Keys a reader never asked for are reported as unknown (with a "did you
mean" hint), so a typo such as ``fo_n`` never passes silently.

A hand-written reader is used instead of a schema library because errors must
point at YAML line numbers and at keys whose names carry their units, and
because the set of accepted keys depends on which road-load form or powertrain
kind the file chooses.
"""

from __future__ import annotations

import contextlib
import difflib
import math
import os
import re
from pathlib import Path
from typing import Any, Iterable

import yaml

from .errors import InputError
from .readfiles import check_regular, note_read

#: largest magnitude of any number in an input file: no quantity tractive reads comes
#: near it in its unit, and products of such numbers stay finite (common practice)
MAX_INPUT_MAGNITUDE = 1e12
#: largest YAML input file [bytes]
MAX_YAML_BYTES = 20 * 2 ** 20
#: most nodes a YAML document may expand to (aliases counted at each use)
MAX_YAML_NODES = 200_000
#: deepest nesting of mappings and lists in a YAML document
MAX_YAML_DEPTH = 64


class _LineDict(dict):
    """A dict that remembers the 1-based line of each key and of itself."""

    line: int | None = None
    key_lines: dict


class _LineList(list):
    """A list that remembers the 1-based line of each item and of itself."""

    line: int | None = None
    item_lines: list


class _LineLoader(yaml.SafeLoader):
    pass


def _construct_mapping(loader, node, deep=False):
    loader.flatten_mapping(node)
    out = _LineDict()
    out.line = node.start_mark.line + 1
    out.key_lines = {}
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        if not isinstance(key, (str, int, float, bool)) or key is None:
            raise InputError("mapping keys must be plain text", line=key_node.start_mark.line + 1)
        if key in out:
            raise InputError(f"key '{key}' appears twice", line=key_node.start_mark.line + 1,
                             field=str(key))
        out[key] = loader.construct_object(value_node, deep=True)
        out.key_lines[key] = key_node.start_mark.line + 1
    return out


def _construct_sequence(loader, node, deep=False):
    out = _LineList(loader.construct_object(child, deep=True) for child in node.value)
    out.line = node.start_mark.line + 1
    out.item_lines = [child.start_mark.line + 1 for child in node.value]
    return out


# YAML 1.2 floats: PyYAML follows YAML 1.1, where 1e-5 (exponent without a dot)
# is text. Engineering values are often written that way.
_LineLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    re.compile(r"^[-+]?(?:[0-9][0-9_]*(?:\.[0-9_]*)?|\.[0-9][0-9_]*)[eE][-+]?[0-9]+$"),
    list("-+0123456789."))
_LineLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)
_LineLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, _construct_sequence)


def read_input_text(path: str | os.PathLike, *, kind: str = "file",
                    max_bytes: int = MAX_YAML_BYTES) -> str:
    """The UTF-8 text of a regular input file, with located one-line errors.

    Refuses what is not a regular file (a folder, a FIFO, a device such as
    /dev/zero) and files larger than ``max_bytes``, and records the file as
    read (:func:`tractive.readfiles.note_read`).
    """
    path = Path(path)
    st = check_regular(path, kind)
    if st.st_size > max_bytes:
        raise InputError(f"is {st.st_size / 2 ** 20:.1f} MiB, more than the "
                         f"{max_bytes / 2 ** 20:.0f} MiB a {kind} may have", file=str(path))
    note_read(path)
    try:
        return path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read file ({exc.__class__.__name__})", file=str(path)) from None


def _check_expansion(node) -> None:
    """Refuse a YAML node graph that expands too far or nests too deep.

    Aliases reuse a node, so a small file can stand for a huge document (an
    "alias bomb"); the expanded size is counted with memoisation over the node
    graph (each node's size once), iteratively, before anything is built.
    """
    sizes: dict = {}
    stack = [(node, 1, False)]
    while stack:
        current, depth, done = stack.pop()
        if depth > MAX_YAML_DEPTH:
            raise InputError(f"nested deeper than {MAX_YAML_DEPTH} levels",
                             line=current.start_mark.line + 1)
        key = id(current)
        children = []
        if isinstance(current, yaml.MappingNode):
            for k, v in current.value:
                children += [k, v]
        elif isinstance(current, yaml.SequenceNode):
            children = list(current.value)
        if done:
            sizes[key] = 1 + sum(sizes[id(c)] for c in children)
            if sizes[key] > MAX_YAML_NODES:
                raise InputError(f"expands to more than {MAX_YAML_NODES} values (through "
                                 f"aliases); write the values out instead",
                                 line=current.start_mark.line + 1)
            continue
        if key in sizes:
            continue
        stack.append((current, depth, True))
        stack += [(c, depth + 1, False) for c in children if id(c) not in sizes]


def read_yaml(path: str | os.PathLike) -> Any:
    """Parse a YAML file; every mapping and list in the result knows its lines.

    Raises :class:`InputError` naming the file (and line) when the file cannot
    be read, is not valid YAML, nests too deep or expands too far through
    aliases (see :func:`_check_expansion`).
    """
    path = Path(path)
    text = read_input_text(path, kind="YAML file")
    try:
        loader = _LineLoader(text)
        try:
            node = loader.get_single_node()
            if node is None:
                return None
            _check_expansion(node)
            return loader.construct_document(node)
        finally:
            loader.dispose()
    except InputError as exc:
        raise exc.located(file=str(path)) from None
    except RecursionError:
        raise InputError(f"nested deeper than {MAX_YAML_DEPTH} levels", file=str(path)) \
            from None
    except yaml.MarkedYAMLError as exc:
        line = exc.problem_mark.line + 1 if exc.problem_mark is not None else None
        raise InputError(f"not valid YAML: {exc.problem or exc.context}", file=str(path),
                         line=line) from None
    except yaml.YAMLError as exc:
        raise InputError(f"not valid YAML: {exc}", file=str(path)) from None


def load_section(path: str | os.PathLike) -> "Section":
    """Read a YAML file whose top level must be a mapping, as a :class:`Section`."""
    data = read_yaml(path)
    if not isinstance(data, dict):
        raise InputError("the top level must be a mapping of keys to values", file=str(path),
                         line=1)
    return Section(data, file=str(path))


#: While :func:`recording_keys` is active: the list that every key a reader asks
#: for is appended to; ``None`` otherwise (the accessors then record nothing).
_KEY_RECORD: list | None = None


@contextlib.contextmanager
def recording_keys():
    """Record every key the readers ask a :class:`Section` for, while active.

    Yields a list that fills with ``(file, field, key, listed)`` tuples: the file
    and dotted field of the key, the key itself, and ``listed`` true when the
    reader had first taken the key from the mapping's own list of keys (a name
    the user chose, such as a change target or a mix share) rather than asking
    for it by name. For documentation checks; reading is otherwise unchanged.
    """
    global _KEY_RECORD
    outer, _KEY_RECORD = _KEY_RECORD, []
    try:
        yield _KEY_RECORD
    finally:
        _KEY_RECORD = outer


def _describe(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "..."


class Section:
    """One YAML mapping with typed accessors that raise located errors.

    Parameters
    ----------
    data : dict
        The mapping (ideally as produced by :func:`read_yaml`, which keeps lines).
    file : str, optional
        File the mapping came from; relative paths inside resolve against it.
    prefix : str
        Dotted path of this mapping inside the file (``""`` at the top).
    line : int, optional
        Line of the mapping itself.
    """

    def __init__(self, data: dict, *, file: str | None = None, prefix: str = "",
                 line: int | None = None):
        self.data = data
        self.file = file
        self.prefix = prefix
        self.line = line if line is not None else getattr(data, "line", None)
        self._used: set = set()
        self._listed: set = set()

    def _record(self, key: Any) -> None:
        """Note ``key`` as asked for while :func:`recording_keys` is active."""
        if _KEY_RECORD is not None:
            _KEY_RECORD.append((self.file, self.field(str(key)), str(key),
                                key in self._listed))

    # -- locating --------------------------------------------------------
    def field(self, key: str | None = None) -> str:
        if key is None:
            return self.prefix or None
        return f"{self.prefix}.{key}" if self.prefix else str(key)

    def line_of(self, key: str | None = None) -> int | None:
        if key is not None:
            lines = getattr(self.data, "key_lines", None)
            if lines and key in lines:
                return lines[key]
        return self.line

    def error(self, message: str, key: str | None = None) -> InputError:
        """An :class:`InputError` located at ``key`` of this section."""
        return InputError(message, file=self.file, field=self.field(key), line=self.line_of(key))

    # -- presence --------------------------------------------------------
    def has(self, key: str) -> bool:
        """True when ``key`` is present with a value."""
        self._record(key)
        return key in self.data and self.data[key] is not None

    def keys(self) -> list:
        """The keys as written, in file order."""
        if _KEY_RECORD is not None:
            self._listed.update(self.data.keys())
        return list(self.data.keys())

    def raw(self, key: str, default: Any = None) -> Any:
        """The value as written (marks the key as known)."""
        self._record(key)
        self._used.add(key)
        return self.data.get(key, default)

    def _get(self, key: str, required: bool) -> Any:
        self._record(key)
        self._used.add(key)
        if key not in self.data or self.data[key] is None:
            if required:
                close = difflib.get_close_matches(str(key), [str(k) for k in self.data], n=1)
                if close:
                    raise InputError(f"missing required key (is '{close[0]}' a misspelling of "
                                     f"it?)", file=self.file, field=self.field(key),
                                     line=self.line_of(close[0]))
                raise self.error("missing required key", key)
            return None
        return self.data[key]

    # -- typed values ----------------------------------------------------
    def number(self, key: str, *, required: bool = True, default: float | None = None,
               min: float | None = None, max: float | None = None,
               min_inclusive: bool = True, unit: str = "") -> float | None:
        """A finite real number, optionally range-checked.

        ``unit`` only improves the message ("must be a number in kg").
        """
        value = self._get(key, required and default is None)
        if value is None:
            return default
        return check_number(value, where=lambda msg: self.error(msg, key), min=min, max=max,
                            min_inclusive=min_inclusive, unit=unit)

    def integer(self, key: str, *, required: bool = True, default: int | None = None,
                min: int | None = None, max: int | None = None) -> int | None:
        value = self._get(key, required and default is None)
        if value is None:
            return default
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(f"must be a whole number, got {_describe(value)}", key)
        if min is not None and value < min:
            raise self.error(f"must be at least {min}, got {value}", key)
        if max is not None and value > max:
            raise self.error(f"must be at most {max}, got {value}", key)
        return value

    def string(self, key: str, *, required: bool = True, default: str | None = None,
               choices: Iterable[str] | None = None) -> str | None:
        value = self._get(key, required and default is None)
        if value is None:
            return default
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise self.error(f"must be text, got {_describe(value)}", key)
        value = str(value)
        if choices is not None:
            choices = list(choices)
            if value not in choices:
                raise self.error(f"must be one of {', '.join(choices)}; got '{value}'", key)
        return value

    def boolean(self, key: str, *, default: bool | None = None) -> bool | None:
        value = self._get(key, default is None)
        if value is None:
            return default
        if not isinstance(value, bool):
            raise self.error(f"must be true or false, got {_describe(value)}", key)
        return value

    def section(self, key: str, *, required: bool = True) -> "Section | None":
        value = self._get(key, required)
        if value is None:
            return None
        if not isinstance(value, dict):
            raise self.error(f"must be a mapping of keys to values, got {_describe(value)}", key)
        return Section(value, file=self.file, prefix=self.field(key), line=self.line_of(key))

    def items(self, key: str, *, required: bool = True) -> list | None:
        """A list; returns ``[(item, field, line), ...]``."""
        value = self._get(key, required)
        if value is None:
            return None
        if not isinstance(value, list):
            raise self.error(f"must be a list, got {_describe(value)}", key)
        lines = getattr(value, "item_lines", [self.line_of(key)] * len(value))
        return [(item, f"{self.field(key)}[{i}]", lines[i]) for i, item in enumerate(value)]

    def sections(self, key: str, *, required: bool = True) -> list | None:
        """A list of mappings, each as a :class:`Section`."""
        out = []
        entries = self.items(key, required=required)
        if entries is None:
            return None
        for item, field, line in entries:
            if not isinstance(item, dict):
                raise InputError(f"must be a mapping, got {_describe(item)}", file=self.file,
                                 field=field, line=line)
            out.append(Section(item, file=self.file, prefix=field, line=line))
        return out

    def numbers(self, key: str, *, required: bool = True, min_length: int = 1,
                min: float | None = None, max: float | None = None,
                increasing: bool = False, unit: str = ""):
        """A list of finite numbers as a float numpy array."""
        import numpy as np

        entries = self.items(key, required=required)
        if entries is None:
            return None
        values = []
        for item, field, line in entries:
            values.append(check_number(
                item, where=lambda msg, f=field, ln=line: InputError(msg, file=self.file, field=f,
                                                                     line=ln),
                min=min, max=max, unit=unit))
        if len(values) < min_length:
            raise self.error(f"needs at least {min_length} values, got {len(values)}", key)
        arr = np.asarray(values, dtype=float)
        if increasing and np.any(np.diff(arr) <= 0):
            raise self.error("values must be strictly increasing", key)
        return arr

    def table(self, key: str, *, required: bool = True, unit: str = ""):
        """A rectangular list of lists of finite numbers as a 2-D float array."""
        import numpy as np

        entries = self.items(key, required=required)
        if entries is None:
            return None
        rows = []
        for item, field, line in entries:
            if not isinstance(item, list):
                raise InputError(f"each row must be a list of numbers, got {_describe(item)}",
                                 file=self.file, field=field, line=line)
            row = [check_number(v, where=lambda msg, f=field, ln=line: InputError(
                msg, file=self.file, field=f, line=ln), unit=unit) for v in item]
            if rows and len(row) != len(rows[0]):
                raise InputError(f"row has {len(row)} values, the first row has {len(rows[0])}",
                                 file=self.file, field=field, line=line)
            rows.append(row)
        if not rows:
            raise self.error("must not be empty", key)
        return np.asarray(rows, dtype=float)

    def path(self, key: str, *, required: bool = True) -> Path | None:
        """A file path; relative paths resolve against the YAML file's folder."""
        text = self.string(key, required=required)
        if text is None:
            return None
        return self.resolve_path(text)

    def resolve_path(self, text: str) -> Path:
        p = Path(os.path.expanduser(text))
        if not p.is_absolute() and self.file:
            p = Path(self.file).parent / p
        return p

    # -- closing ---------------------------------------------------------
    def only_one_of(self, *groups: Iterable[str], what: str) -> int | None:
        """Index of the single group (a set of keys) present, or error if several."""
        present = [i for i, g in enumerate(groups) if any(self.has(k) for k in g)]
        if len(present) > 1:
            names = [" / ".join(groups[i]) for i in present]
            raise self.error(f"give only one {what}, found: {'; '.join(names)}")
        return present[0] if present else None

    def finish(self, allowed_extra: Iterable[str] = ()) -> None:
        """Raise for any key that no accessor asked for."""
        for key in allowed_extra:
            self._record(key)
        known = self._used | set(allowed_extra)
        for key in self.data:
            if key not in known:
                hint = difflib.get_close_matches(str(key), [str(k) for k in known], n=1)
                extra = f"; did you mean '{hint[0]}'?" if hint else ""
                raise self.error(f"unknown key{extra}", str(key))


def check_number(value: Any, *, where, min: float | None = None, max: float | None = None,
                 min_inclusive: bool = True, unit: str = "") -> float:
    """Validate one number; ``where(message)`` builds the located error."""
    unit_text = f" in {unit}" if unit else ""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise where(f"must be a number{unit_text}, got {_describe(value)}")
    value = float(value)
    if math.isnan(value):
        raise where("must be a number, got NaN")
    if math.isinf(value):
        raise where("must be finite, got infinity")
    if abs(value) > MAX_INPUT_MAGNITUDE:
        raise where(f"{value:.4g} is beyond any plausible value (|x| at most "
                    f"{MAX_INPUT_MAGNITUDE:.0e}{(' ' + unit) if unit else ''}); is the unit "
                    f"right?")
    if min is not None and (value < min or (not min_inclusive and value == min)):
        rel = "at least" if min_inclusive else "greater than"
        raise where(f"must be {rel} {min:g}{(' ' + unit) if unit else ''}, got {value:g}")
    if max is not None and value > max:
        raise where(f"must be at most {max:g}{(' ' + unit) if unit else ''}, got {value:g}")
    return value
