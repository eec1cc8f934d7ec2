"""The ``Range vs speed`` sheet: range and battery energy or fuel per distance at
constant speeds on a level road without wind, as the study computed them
(:attr:`~tractive.study.results.StudyResult.range_curves`, from
:func:`tractive.powertrain.range_curve`), with a chart and the speed of
greatest range. Left out when no variant has a powertrain."""

from __future__ import annotations

import numpy as np

from .cells import group_header, header, number_format, put, text_width
from .charts import colour, line_series, scatter
from .rows import label, unit, variant_order
from .sheet import Sheet

_H1, _H2, _R0 = 1, 2, 3


def _curve_columns(ws, curves, speeds, result, st) -> list:
    """Range and consumption of each variant at the swept speeds; returns the range
    column of each variant."""
    value_cols = []
    col = 2
    r_unit = unit(result, curves[0].range_key)
    for c in curves:
        c_key = c.consumption_key
        group_header(ws, _H1, col, col + 1, c.variant, st)
        header(ws, _H2, col, f"range [{r_unit}]", st)
        c_unit = unit(result, c_key)
        header(ws, _H2, col + 1, f"{label(c_key)} [{c_unit}]", st)
        sp = np.asarray(c.columns[c.speed_key], float)
        feasible = np.asarray(c.feasible, bool)
        idx = {float(v): i for i, v in enumerate(sp)}
        rows = [idx.get(float(v)) for v in speeds]
        ok = np.array([j is not None and bool(feasible[j]) for j in rows], bool)
        take = np.array([0 if j is None else j for j in rows], int)
        for k, fmt_unit_text in ((c.range_key, r_unit), (c_key, c_unit)):
            values = np.asarray(c.columns[k], float)[take] if len(sp) else \
                np.full(len(speeds), np.nan)
            ws.put_column(_R0, col + (k == c_key), np.where(ok, values, np.nan),
                          number_format(fmt_unit_text))
        value_cols.append(col)
        col += 2
    return value_cols


def _best_table(ws, curves, tc, sp_unit, r_unit, st) -> int:
    """The speed of greatest range of each variant; returns the row of the note."""
    header(ws, _H2, tc, "Variant", st)
    header(ws, _H2, tc + 1, f"speed of greatest range [{sp_unit}]", st)
    header(ws, _H2, tc + 2, f"greatest range [{r_unit}]", st)
    header(ws, _H2, tc + 3, "at the end of the swept speeds", st)
    for i, c in enumerate(curves):
        best = list(c.best.values())
        put(ws, _R0 + i, tc, c.variant)
        put(ws, _R0 + i, tc + 1, best[0] if best else None, number_format(sp_unit))
        put(ws, _R0 + i, tc + 2, best[1] if len(best) > 1 else None, number_format(r_unit))
        put(ws, _R0 + i, tc + 3, bool(c.best_at_edge), align=st.center)
    note_row = _R0 + len(curves) + 1
    put(ws, note_row, tc, "Constant speed on a level road without wind, nominal vehicles; "
                          "range = usable battery energy or tank over the consumption; "
                          "empty cells: the drive cannot hold that speed.", font=st.note)
    return note_row


def range_sheet(result, st) -> Sheet | None:
    """The Range vs speed sheet (see the module doc); None without range curves."""
    from openpyxl.utils import get_column_letter

    curves = list(result.range_curves)
    if not curves:
        return None
    ws = Sheet("Range vs speed")
    vorder = {v: i for i, v in enumerate(variant_order(result))}
    curves.sort(key=lambda c: vorder.get(c.variant, len(vorder)))
    sp_unit = "mph" if result.units == "us" else "km/h"
    r_unit = unit(result, curves[0].range_key)
    speeds = np.unique(np.concatenate([np.asarray(c.columns[c.speed_key], float)
                                       for c in curves]))
    header(ws, _H1, 1, None, st)
    header(ws, _H2, 1, f"constant speed [{sp_unit}]", st)
    ws.put_column(_R0, 1, speeds, number_format(sp_unit))
    value_cols = _curve_columns(ws, curves, speeds, result, st)
    last = value_cols[-1] + 1
    ws.freeze_panes = f"B{_R0}"
    ws.widths.update({c: 13 for c in range(1, last + 1)})
    ws.heights[_H2] = 45
    tc = last + 2
    note_row = _best_table(ws, curves, tc, sp_unit, r_unit, st)
    ws.widths.update({tc: text_width([c.variant for c in curves] + ["Variant"], 10, 30),
                      tc + 1: 14, tc + 2: 14, tc + 3: 13})
    chart = scatter("Range against constant speed", f"speed [{sp_unit}]",
                    f"range [{r_unit}]")
    r1 = _R0 + len(speeds) - 1
    for c in value_cols:
        chart.series.append(line_series(ws, 1, c, _R0, r1, f"${get_column_letter(c)}${_H1}"))
    colour(chart)
    chart.x_axis.scaling.min = 0.0
    ws.add_chart(chart, f"{get_column_letter(tc)}{note_row + 2}")
    ws.print_title_rows = f"{_H1}:{_H2}"
    return ws
