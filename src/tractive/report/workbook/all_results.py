"""The ``All results`` sheet: every metric of every row, one line per row and metric,
with unit, value, change, Monte Carlo mean and interval bounds (filterable)."""

from __future__ import annotations

from .cells import PCT_FORMAT, header, put, text_width
from .rows import confidence, fmt_for, label, present_keys, rows_by_profile, unit
from .sheet import Sheet


def _heads(conf: float) -> list:
    """Column headers."""
    return ["Profile or duty mix", "Variant", "Metric", "Unit", "Value", "Change",
            "Change %", "Monte Carlo mean", f"Low end of {conf:g} % interval",
            f"High end of {conf:g} % interval", "Change, Monte Carlo mean",
            f"Change, low end of {conf:g} % interval",
            f"Change, high end of {conf:g} % interval", "Change distinguishable from zero",
            "Kind", "Role", "Metric key"]


def all_results_sheet(result, st) -> Sheet:
    """The All results sheet (see the module doc)."""
    from openpyxl.utils import get_column_letter

    ws = Sheet("All results")
    heads = _heads(confidence(result))
    for j, text in enumerate(heads, start=1):
        header(ws, 1, j, text, st)
    keys = present_keys(result)
    row = 2
    texts = {1: [], 2: [], 3: []}
    for p, rows in rows_by_profile(result):
        for r in rows:
            for k in keys:
                if k not in r.metrics:
                    continue
                fmt, sfmt = fmt_for(result, k), fmt_for(result, k, signed=True)
                values = [(p, None), (r.variant, None), (label(k), None),
                          (unit(result, k), None), (r.metrics.get(k), fmt),
                          (r.change.get(k), sfmt), (r.change_pct.get(k), PCT_FORMAT),
                          (r.mean.get(k), fmt), (r.interval_low.get(k), fmt),
                          (r.interval_high.get(k), fmt), (r.change_mean.get(k), sfmt),
                          (r.change_low.get(k), sfmt), (r.change_high.get(k), sfmt)]
                for c, (value, f) in enumerate(values, start=1):
                    put(ws, row, c, value, f)
                put(ws, row, 14, r.distinguishable.get(k), align=st.center)
                put(ws, row, 15, r.profile_kind)
                put(ws, row, 16, r.role)
                put(ws, row, 17, k)
                texts[1].append(p)
                texts[2].append(r.variant)
                texts[3].append(label(k))
                row += 1
    ws.freeze_panes = "D2"
    if row > 2:
        ws.auto_filter = f"A1:{get_column_letter(len(heads))}{row - 1}"
    ws.widths.update({1: text_width(texts[1] + ["Profile or duty mix"], 12, 28),
                      2: text_width(texts[2] + ["Variant"], 10, 30),
                      3: text_width(texts[3], 12, 34), 4: 9, 15: 9, 16: 13, 17: 30})
    ws.widths.update({c: 13 for c in range(5, 15)})
    ws.heights[1] = 45
    ws.print_title_rows = "1:1"
    return ws
