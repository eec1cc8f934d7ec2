"""The ``Energy parts`` sheet: traction energy at the wheels per distance split into
rolling, aero, inertia and grade for every variant, with one stacked column chart
per profile or duty mix (parts as in UN GTR No. 15 Annex 7 road-load terms)."""

from __future__ import annotations

from ... import metrics as registry
from .cells import header, number_format, put, text_width
from .charts import plain_axes, series_label
from .rows import rows_by_profile, unit
from .sheet import Sheet

#: wheel-energy parts, per distance
PARTS = ("rolling", "aero", "inertia", "grade")


def _part_keys(result) -> tuple:
    """(part keys, total key) per distance in the result's unit system, from the registry."""
    names = [f"{p}_energy_wh_per_km" for p in PARTS] + ["positive_energy_wh_per_km"]
    keys = []
    for k in names:
        m = registry.lookup(k)
        keys.append(m.us.key if result.units == "us" and m.us is not None else k)
    return keys[:-1], keys[-1]


def _chart(ws, p, unit_text, r0, r1):
    """A stacked column chart of the parts of one profile's rows r0..r1."""
    from openpyxl.chart import BarChart, Reference, Series
    from openpyxl.utils import get_column_letter

    ch = BarChart()
    ch.type = "col"
    ch.grouping = "stacked"
    ch.overlap = 100
    ch.title = f"Wheel energy by part: {p}"
    ch.y_axis.title = f"traction energy at the wheels [{unit_text}]"
    ch.x_axis.title = "variant"
    plain_axes(ch)
    for j in range(len(PARTS)):
        s = Series(Reference(ws, min_col=3 + j, min_row=r0, max_row=r1), title=None)
        s.tx = series_label(ws, f"${get_column_letter(3 + j)}$1")
        ch.series.append(s)
    ch.set_categories(Reference(ws, min_col=2, min_row=r0, max_row=r1))
    ch.width, ch.height = 18, 8.5
    ch.legend.position = "r"
    return ch


def energy_parts_sheet(result, st) -> Sheet | None:
    """The Energy parts sheet (see the module doc); None when no row has the parts."""
    from openpyxl.utils import get_column_letter

    part_keys, total_key = _part_keys(result)
    if not any(k in r.metrics for r in result.rows for k in part_keys):
        return None
    ws = Sheet("Energy parts")
    unit_text = unit(result, total_key)
    heads = ["Profile or duty mix", "Variant"] + [f"{p} [{unit_text}]" for p in PARTS] + \
        [f"total traction energy at the wheels [{unit_text}]"]
    for j, text in enumerate(heads, start=1):
        header(ws, 1, j, text, st)
    fmt = number_format(unit_text)
    row = 2
    names_p, names_v = [], []
    chart_col = get_column_letter(len(heads) + 2)
    anchor_row = 2
    for p, rows in rows_by_profile(result):
        r0 = row
        for r in rows:
            put(ws, row, 1, p)
            put(ws, row, 2, r.variant, font=st.bold if r.is_baseline else None)
            for j, k in enumerate(part_keys + [total_key]):
                put(ws, row, 3 + j, r.metrics.get(k), fmt)
            names_p.append(p)
            names_v.append(r.variant)
            row += 1
        ws.add_chart(_chart(ws, p, unit_text, r0, row - 1), f"{chart_col}{anchor_row}")
        anchor_row += 18
    ws.freeze_panes = "C2"
    ws.widths.update({1: text_width(names_p + ["Profile or duty mix"], 12, 28),
                      2: text_width(names_v + ["Variant"], 10, 30), 3: 12, 4: 12, 5: 12,
                      6: 12, 7: 18})
    ws.heights[1] = 45
    ws.print_title_rows = "1:1"
    return ws
