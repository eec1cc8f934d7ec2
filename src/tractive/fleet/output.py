"""Writing a fleet result: the per-vehicle table (CSV, Parquet) or a workbook.

The workbook has a ``Fleet summary`` sheet (totals per variant and group,
left-out trips, warnings), a ``Per vehicle`` sheet and a ``Savings`` sheet
with each vehicle's saving of every variant sorted from the largest and a bar
chart of them. All files are written atomically, never over an input.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError
from ..report.common import all_or_nothing, atomic_write, check_target, set_cell, set_text_cell

#: file types the per-vehicle output may have
OUTPUT_SUFFIXES = (".csv", ".parquet", ".xlsx")


def check_output(path, inputs) -> None:
    """Refuse an output name before the run (type by ending, never an input)."""
    check_target(path, inputs, suffixes=OUTPUT_SUFFIXES)
    if str(path).lower().endswith(".parquet"):
        try:
            import pyarrow  # noqa: F401
        except ImportError:
            raise InputError("writing Parquet needs pyarrow: pip install 'tractive[scale]'",
                             file=str(path)) from None


def write_output(result, path, inputs) -> Path:
    """Write the result to ``path`` by its ending, atomically."""
    check_output(path, inputs)
    suffix = Path(path).suffix.lower()
    table = result.per_vehicle_table()
    with all_or_nothing():
        if suffix == ".csv":
            from ..report.common import csv_text

            def write(tmp):
                safe = table.copy()
                for c in ("vehicle_id", "group", "variant"):
                    safe[c] = [csv_text(x) for x in safe[c]]
                safe.to_csv(tmp, index=False)
            return atomic_write(path, write, inputs=inputs)
        if suffix == ".parquet":
            return atomic_write(path, lambda tmp: table.to_parquet(tmp, index=False),
                                inputs=inputs)
        return atomic_write(path, lambda tmp: _workbook(result, table).save(tmp), inputs=inputs)


def _sheet_rows(ws, header, rows) -> None:
    """Write a header and rows of values into a sheet."""
    for j, h in enumerate(header, 1):
        set_text_cell(ws.cell(row=1, column=j), str(h))
    for i, row in enumerate(rows, 2):
        for j, value in enumerate(row, 1):
            cell = ws.cell(row=i, column=j)
            if isinstance(value, str):
                set_text_cell(cell, value)
            else:
                set_cell(cell, value)


def _workbook(result, table):
    """The workbook: fleet summary, per-vehicle table, sorted savings with a bar chart."""
    from openpyxl import Workbook
    from openpyxl.chart import BarChart, Reference

    doc = result.to_dict()
    wb = Workbook()
    ws = wb.active
    ws.title = "Fleet summary"
    fleet = doc["fleet"]
    rows = [[k, v] for k, v in fleet.items()]
    rows.append(["study", doc["study"]])
    rows.append(["currency", doc["currency"]])
    keys = []
    for r in doc["totals"] + doc["groups"]:
        keys += [k for k in r if k not in keys and k not in ("change", "change_pct")]
    rows.append([])
    rows.append(keys + [f"change {k}" for k in doc["totals"][0]["change"]])
    for r in doc["totals"] + doc["groups"]:
        rows.append([r.get(k, "") if r.get(k) is not None else "" for k in keys]
                    + [r["change"].get(k) for k in doc["totals"][0]["change"]])
    rows.append([])
    rows.append(["left out", "vehicle_id", "trip_id", "file", "line", "reason"])
    rows += [["", x["vehicle_id"], x["trip_id"], x["file"], x["line"], x["reason"]]
             for x in doc["left_out"]]
    rows.append([])
    rows += [["warning", w] for w in doc["warnings"]]
    _sheet_rows(ws, ["fleet", ""], [[("" if v is None else v) for v in r] for r in rows])
    pv = wb.create_sheet("Per vehicle")
    _sheet_rows(pv, list(table.columns),
                [[None if isinstance(v, float) and not np.isfinite(v) else v for v in row]
                 for row in table.itertuples(index=False)])
    sv = wb.create_sheet("Savings")
    cur = doc["currency"]
    mods = [v for v in dict.fromkeys(table["variant"]) if v != "baseline"]
    if "saving" in table.columns and mods:
        first = mods[0]
        part = table[table["variant"] == first].sort_values("saving", ascending=False)
        order = list(part["vehicle_id"])
        cols = ["vehicle_id"] + [f"{m} saving [{cur}/year]" for m in mods]
        data = []
        for vid in order:
            r = [vid]
            for m in mods:
                s = table[(table["variant"] == m) & (table["vehicle_id"] == vid)]["saving"]
                val = float(s.iloc[0]) if len(s) else None
                r.append(val if val is not None and np.isfinite(val) else None)
            data.append(r)
        _sheet_rows(sv, cols, data)
        chart = BarChart()
        chart.type = "col"
        chart.title = f"Saving per vehicle, sorted ({cur} per year)"
        chart.y_axis.title = f"{cur} per year"
        chart.x_axis.title = "vehicle"
        ref = Reference(sv, min_col=2, max_col=1 + len(mods), min_row=1,
                        max_row=1 + len(data))
        chart.add_data(ref, titles_from_data=True)
        chart.set_categories(Reference(sv, min_col=1, min_row=2, max_row=1 + len(data)))
        chart.width, chart.height = 24, 12
        sv.add_chart(chart, f"{chr(ord('A') + len(mods) + 2)}2")
    else:
        _sheet_rows(sv, ["note"], [["no energy cost: give prices in economics to see savings"]])
    return wb
