"""The study table as people read it: narrow blocks that fit the terminal.

One block per profile or duty mix; variants as rows, each metric with its
Monte Carlo interval, and below each variant its change against the baseline
(``~0`` when the interval includes zero). Metrics that do not fit the width
go into a further table of the same block. The headline sentence of each
variant comes first. ``--wide`` keeps one row per variant and profile with
every column side by side.
"""

from __future__ import annotations

import os
import shutil
import sys
import textwrap

from ..api import headline_sentences, metric_info, numfmt

#: width when the output is not a terminal and COLUMNS is not set [characters]
DEFAULT_WIDTH = 100
#: narrowest layout the blocks are fitted to [characters]
MIN_WIDTH = 60
#: default metrics, first present wins within each group (metric and US keys)
DEFAULT_GROUPS = (
    ("lap_time_s",),
    ("battery_wh_per_km", "battery_wh_per_mi", "fuel_l_per_100km", "fuel_economy_mpg",
     "positive_energy_wh_per_km", "positive_energy_wh_per_mi"),
    ("range_km", "range_mi"),
    ("top_speed_kmh", "top_speed_mph"),
    ("annual_energy_cost",),
    ("fleet_annual_fuel_l", "fleet_annual_fuel_gal", "fleet_annual_grid_energy_kwh"),
    ("fleet_annual_co2_t",),
    ("payback_years",),
)


def output_width() -> int:
    """Columns to fit: $COLUMNS, else the terminal's width, else 100."""
    env = os.environ.get("COLUMNS", "")
    if env.isdigit() and int(env) > 0:
        return max(MIN_WIDTH, int(env))
    if sys.stdout.isatty():
        return max(MIN_WIDTH, shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns)
    return DEFAULT_WIDTH


def default_metrics(result) -> list:
    """The headline metrics present in the result (one per group), leaving out one that
    no variant changes at all (a governed top speed): it would fill a column with 0."""
    present = set(result.metric_keys())
    out = []
    for group in DEFAULT_GROUPS:
        key = next((k for k in group if k in present), None)
        if key is None:
            continue
        changes = [r.change.get(k) for r in result.rows for k in (key,) if k in r.change]
        if changes and all(c == 0 for c in changes):
            continue
        out.append(key)
    return out


def choose_metrics(result, metrics: str | None, show_all: bool) -> list:
    """The metrics to show: --metrics a,b,c (checked), --all, or the defaults."""
    present = result.metric_keys()
    if show_all:
        return present
    if not metrics:
        return default_metrics(result)
    wanted = [k.strip() for k in metrics.split(",") if k.strip()]
    unknown = [k for k in wanted if k not in present]
    if unknown:
        from ..api import InputError
        raise InputError(f"--metrics: {', '.join(unknown)} not in this result; available: "
                         f"{', '.join(present)}")
    return wanted


def _cell(value, low, high, *, signed=False, flag="") -> str:
    """A value with its interval and a flag."""
    text = numfmt.with_interval(value, low, high, signed=signed)
    return f"{text} {flag}".rstrip()


def _value_cell(row, key: str) -> str:
    """A variant's value of one metric; payback says "never" and flags "> life"."""
    if key not in row.metrics:
        return ""
    value = row.metrics[key]
    if key == "payback_years":
        exceeds = row.verdict.get("payback_exceeds_life")
        if value is None:
            cost = row.metrics.get("modification_cost") or 0
            return "never" if cost > 0 else "-"
        flag = "> life" if exceeds else ""
        return _cell(value, row.interval_low.get(key), row.interval_high.get(key), flag=flag)
    return _cell(value, row.interval_low.get(key), row.interval_high.get(key))


def _header(result, key: str) -> str:
    """Column header: label and unit."""
    info = metric_info(key)
    label = key if info is None else info.label
    unit = result.unit_of(key)
    return f"{label} [{unit}]" if unit else label


def _block_rows(result, profile: str, keys: list) -> list:
    """Text rows of one block: (first cell, cells...) per variant and change line."""
    lines = []
    for r in (r for r in result.rows if r.profile == profile):
        cells = [_value_cell(r, k) for k in keys]
        lines.append([r.variant] + cells)
        if r.is_baseline or not any(k in r.change for k in keys):
            continue
        change = []
        for k in keys:
            if k not in r.change:
                change.append("")
                continue
            mark = "" if r.distinguishable.get(k, True) or r.change[k] == 0 else "~0"
            change.append(_cell(r.change[k], r.change_low.get(k), r.change_high.get(k),
                                signed=True, flag=mark))
        lines.append(["  change"] + change)
    return lines


def _fit_groups(result, profile: str, keys: list, width: int) -> list:
    """Split the metrics into tables that each fit the width."""
    groups, current = [], []
    first = max([len("variant")] + [len(r.variant) for r in result.rows]) + 2
    used = first
    for k in keys:
        rows = _block_rows(result, profile, [k])
        w = max([len(_header(result, k))] + [len(row[1]) for row in rows]) + 2
        if current and used + w > width:
            groups.append(current)
            current, used = [], first
        current.append(k)
        used += w
    if current:
        groups.append(current)
    return groups


def _render(result, profile: str, keys: list) -> list:
    """Lines of one table: header, rule, rows; text left, numbers right."""
    rows = _block_rows(result, profile, keys)
    headers = ["variant"] + [_header(result, k) for k in keys]
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]

    def line(cells):
        first = cells[0].ljust(widths[0])
        rest = [c.rjust(w) for c, w in zip(cells[1:], widths[1:])]
        return "  ".join([first] + rest).rstrip()

    return [line(headers), line(["-" * w for w in widths])] + [line(r) for r in rows]


def _block_title(result, info) -> str:
    """``town deliveries: udds, 12.1 km, 23 min`` / ``florist week: mix of ...``."""
    if info.kind == "mix":
        shares = ", ".join(f"{numfmt.number(v)} % {k}" for k, v in info.shares_pct.items())
        return f"{info.name}: mix of {shares}"
    key, dist = info.distance()
    unit = "mi" if key.endswith("_mi") else "km"
    minutes = None if info.duration_s is None else info.duration_s / 60.0
    bits = [info.spec] if info.spec and info.spec != info.name else []
    if dist is not None:
        bits.append(f"{numfmt.number(dist)} {unit}")
    if minutes is not None:
        bits.append(f"{numfmt.number(minutes)} min")
    return f"{info.name}: {', '.join(bits)}" if bits else info.name


def summary_text(result, *, width: int | None = None, metrics: str | None = None,
                 show_all: bool = False) -> str:
    """The readable study output: heading, headline sentences, one block per profile."""
    width = output_width() if width is None else max(MIN_WIDTH, width)
    keys = choose_metrics(result, metrics, show_all)
    unc = result.uncertainty
    head = (f"{result.study}: {unc.get('draws', 0)} Monte Carlo draws, "
            f"{numfmt.number(unc.get('confidence_pct', 95))} % intervals in brackets, "
            f"{result.units} units; '~0' = change not distinguishable from zero")
    out = textwrap.wrap(head, width) + [""]
    for name, sentence in headline_sentences(result).items():
        out += textwrap.wrap(sentence, width, subsequent_indent="  ")
    for info in result.profiles:
        out += ["", *textwrap.wrap(_block_title(result, info), width)]
        here = [k for k in keys if any(k in r.metrics for r in result.rows
                                       if r.profile == info.name)]
        for group in _fit_groups(result, info.name, here, width):
            out += _render(result, info.name, group) + [""]
        out.pop()
    if result.warnings:
        out.append("")
        for w in result.warnings:
            out += textwrap.wrap(f"note: {w}", width, subsequent_indent="  ")
    return "\n".join(out)
