"""One sheet per profile: the nominal time series of every variant side by side
(speed in km/h, or mph in US studies; wheel force [N], wheel power [kW],
cumulative traction energy [kWh]) with charts of speed, power and energy.

A long series is thinned before it is written: at most :data:`MAX_SERIES_ROWS`
rows per sheet, keeping every ``step``-th interval counted back from the last
one (so the last row is the end of the profile and the cumulative energy
there is the total). The sheet says the step; the JSON of the result with its
series (``StudyResult.to_dict(include_series=True)``) holds every interval.
:func:`series_step` gives the step from a profile's number of intervals, so a
command knows before running the study what the workbook will hold.
"""

from __future__ import annotations

from typing import Mapping

import numpy as np

from ...units import MILE_M
from .cells import group_header, header, number_format, put, sheet_title
from .charts import colour, line_series, scatter
from .rows import profile_order, variant_order
from .sheet import Sheet

#: rows a worksheet can hold (Excel's limit; ECMA-376 allows 1,048,576 rows, from memory)
SHEET_ROW_LIMIT = 1_048_576
#: most data rows of time series written on one profile sheet
MAX_SERIES_ROWS = 10_000
_R0 = 3                     # first data row (two header rows above)
assert _R0 - 1 + MAX_SERIES_ROWS <= SHEET_ROW_LIMIT


def series_step(n_intervals: int, max_rows: int | None = None) -> int:
    """Every how many intervals a series of ``n_intervals`` is shown (1: all of them).

    The smallest step k with floor((n − 1) / k) + 1 ≤ ``max_rows`` (default
    :data:`MAX_SERIES_ROWS`).
    """
    max_rows = MAX_SERIES_ROWS if max_rows is None else int(max_rows)
    n = int(n_intervals)
    if n <= max_rows:
        return 1
    return (n - 1) // max_rows + 1


def series_steps(lengths: Mapping[str, int], max_rows: int | None = None) -> dict:
    """Step of each profile sheet from the profiles' numbers of intervals (name → n)."""
    return {name: series_step(n, max_rows) for name, n in lengths.items()}


def _kept(n: int, step: int) -> np.ndarray:
    """Indices kept from a series of n: every ``step``-th counted back from the last."""
    return np.arange(n - 1, -1, -step)[::-1] if n else np.arange(0)


def _series_speed(result):
    """Unit and getter of the speed column: km/h, or mph (km/h over 1.609344) in US studies."""
    if result.units == "us":
        km_per_mi = MILE_M / 1000.0
        return "mph", lambda s: np.asarray(s.speed_kmh, float) / km_per_mi
    return "km/h", lambda s: np.asarray(s.speed_kmh, float)


def _columns(ws, series, shared, step, v_unit, v_of, st) -> list:
    """Headers and data columns; returns per series (series, time, speed, force, power,
    energy columns, rows kept)."""
    first = series[0]
    if shared:
        keep = _kept(len(np.asarray(first.time_s)), step)
        header(ws, 1, 1, None, st)
        header(ws, 1, 2, None, st)
        header(ws, 2, 1, "time at the end of the interval [s]", st)
        header(ws, 2, 2, f"speed, interval mean [{v_unit}]", st)
        ws.put_column(_R0, 1, np.asarray(first.time_s, float)[keep], "0.0")
        ws.put_column(_R0, 2, v_of(first)[keep], number_format(v_unit))
    col = 3 if shared else 1
    cols = []
    for s in series:
        keep = _kept(len(np.asarray(s.time_s)), step)
        group_header(ws, 1, col, col + (3 if shared else 5) - 1, s.variant, st)
        if shared:
            t_col, v_col = 1, 2
        else:
            t_col, v_col = col, col + 1
            header(ws, 2, t_col, "time [s]", st)
            header(ws, 2, v_col, f"speed [{v_unit}]", st)
            ws.put_column(_R0, t_col, np.asarray(s.time_s, float)[keep], "0.0")
            ws.put_column(_R0, v_col, v_of(s)[keep], number_format(v_unit))
            col += 2
        for j, (text, values, unit) in enumerate((
                ("wheel force [N]", s.force_n, "N"), ("wheel power [kW]", s.power_kw, "kW"),
                ("cumulative traction energy [kWh]", s.cumulative_energy_kwh, "kWh"))):
            header(ws, 2, col + j, text, st)
            ws.put_column(_R0, col + j, np.asarray(values, float)[keep], number_format(unit))
        cols.append((s, t_col, v_col, col, col + 1, col + 2, keep.size))
        col += 3
    return cols


def _charts(ws, p, cols, shared, v_unit, last_col):
    """Speed, power and cumulative energy over time, to the right of the data."""
    from openpyxl.utils import get_column_letter

    gx = get_column_letter(last_col + 2)
    name_cell = lambda c: f"${get_column_letter(c)}$1"  # noqa: E731
    speed = scatter(f"Speed over time: {p}", "time [s]", f"speed [{v_unit}]")
    power = scatter(f"Wheel power over time: {p}", "time [s]", "wheel power [kW]")
    energy = scatter(f"Cumulative traction energy at the wheels: {p}", "time [s]",
                     "energy [kWh]")
    if shared:
        speed.series.append(line_series(ws, 1, 2, _R0, _R0 + cols[0][6] - 1, "$B$2"))
        speed.legend = None
    for s, t_col, v_col, f_col, p_col, e_col, n in cols:
        end = _R0 + n - 1
        head = name_cell(f_col if shared else f_col - 2)
        if not shared:
            speed.series.append(line_series(ws, t_col, v_col, _R0, end, head))
        power.series.append(line_series(ws, t_col, p_col, _R0, end, head))
        energy.series.append(line_series(ws, t_col, e_col, _R0, end, head))
    t_end = max(float(np.asarray(c[0].time_s)[-1]) for c in cols)
    for i, ch in enumerate((speed, power, energy)):
        colour(ch)
        ch.x_axis.scaling.min = 0.0
        ch.x_axis.scaling.max = t_end
        ws.add_chart(ch, f"{gx}{1 + 18 * i}")
    ws.print_area = f"{gx}1:{get_column_letter(last_col + 2 + 13)}54"


def profile_sheets(result, st, taken: list) -> list:
    """One Sheet per profile with a time series in the result (see the module doc);
    titles are added to ``taken``."""
    by_profile: dict = {}
    for s in result.series:
        by_profile.setdefault(s.profile, []).append(s)
    vorder = {v: i for i, v in enumerate(variant_order(result))}
    v_unit, v_of = _series_speed(result)
    made = []
    for p in profile_order(result):
        series = sorted(by_profile.get(p, []), key=lambda s: vorder.get(s.variant, 1e9))
        if not series:
            continue
        title = sheet_title(f"Profile {p}", taken)
        taken.append(title)
        ws = Sheet(title)
        first = series[0]
        shared = all(np.array_equal(np.asarray(s.time_s), np.asarray(first.time_s)) and
                     np.array_equal(np.asarray(s.speed_kmh), np.asarray(first.speed_kmh))
                     for s in series)
        n = max(len(np.asarray(s.time_s)) for s in series)
        step = series_step(n)
        cols = _columns(ws, series, shared, step, v_unit, v_of, st)
        last_col = cols[-1][5]
        ws.freeze_panes = "C3"
        ws.widths.update({c: 12.5 for c in range(1, last_col + 1)})
        ws.heights[2] = 45
        _charts(ws, p, cols, shared, v_unit, last_col)
        if step > 1:
            put(ws, 56, last_col + 2,
                f"Thinned to at most {MAX_SERIES_ROWS:,} rows: every {step}th of the "
                f"{n:,} intervals is shown, counted back from the last. The JSON of the "
                f"result with its series (StudyResult.to_dict(include_series=True)) holds "
                f"every interval.", font=st.note)
        ws.landscape = False
        made.append(ws)
    return made
