"""Shared output helpers for the commands: JSON documents and text tables."""

from __future__ import annotations

import math

import click

from ..api import json_text


def emit_json(data) -> None:
    """Print one JSON document (numpy → Python, NaN/inf → null)."""
    click.echo(json_text(data))


def fmt(value, spec: str = ".1f") -> str:
    """A number formatted by ``spec``; "-" for None, NaN or infinity; text as is."""
    if value is None:
        return "-"
    if isinstance(value, str):
        return value
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "-"
    return format(v, spec)


def table(rows: list[dict], columns: list[tuple]) -> str:
    """Render rows as an aligned text table.

    ``columns`` is a list of ``(key, header, format_spec)``; text columns are
    left-aligned, numbers right-aligned.
    """
    headers = [c[1] for c in columns]
    cells = [[fmt(r.get(c[0]), c[2]) if c[2] else str(r.get(c[0], "")) for c in columns]
             for r in rows]
    widths = [max([len(h)] + [len(row[i]) for row in cells]) for i, h in enumerate(headers)]
    numeric = [bool(c[2]) for c in columns]

    def line(items):
        return "  ".join(s.rjust(w) if num else s.ljust(w)
                         for s, w, num in zip(items, widths, numeric)).rstrip()

    out = [line(headers), line(["-" * w for w in widths])]
    out += [line(row) for row in cells]
    return "\n".join(out)
