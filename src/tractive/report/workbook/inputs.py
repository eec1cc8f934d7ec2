"""The ``Inputs`` sheet: every input value with its unit, where it came from and a note."""

from __future__ import annotations

import numpy as np

from .cells import finite_number, fmt_unit, header, plain_text, put, text_width
from .sheet import Sheet

_HEADS = ["Section", "Key", "Value", "Unit", "Source", "Note"]


def inputs_sheet(result, st) -> Sheet:
    """The Inputs sheet, one line per :class:`~tractive.study.results.InputItem`."""
    ws = Sheet("Inputs")
    for j, h in enumerate(_HEADS, start=1):
        header(ws, 1, j, h, st)
    row = 2
    cols = {j: [h] for j, h in enumerate(_HEADS, start=1)}
    for item in result.inputs:
        value = item.value
        unit = str(item.unit or "")
        if isinstance(value, (bool, np.bool_)):
            value = "true" if value else "false"
        elif value is not None and finite_number(value) is None and not isinstance(value, str):
            value = plain_text(value)
        fmt = f"General{fmt_unit(unit)}" if unit else None
        for j, v in enumerate([item.section, item.key, value, unit, str(item.source),
                               item.note], start=1):
            put(ws, row, j, v, fmt if j == 3 else None)
            cols[j].append(v)
        row += 1
    if not result.inputs:
        put(ws, row, 1, "The study result carries no input echo.", font=st.note)
    ws.freeze_panes = "C2"
    if row > 2:
        ws.auto_filter = f"A1:F{row - 1}"
    bounds = {1: (10, 24), 2: (10, 40), 3: (12, 40), 4: (6, 14), 5: (10, 30), 6: (10, 70)}
    ws.widths.update({j: text_width(cols[j], *b) for j, b in bounds.items()})
    ws.print_title_rows = "1:1"
    return ws
