"""Cell values, number formats, styles and layout helpers of the study workbook.

Numbers are stored unrounded; rounding happens only through number formats,
which carry the unit (ECMA-376 Part 1, 18.8.31 numFmt). Text is stored as a
string cell (type ``s``), never as a formula (see
:func:`tractive.report.common.set_text_cell`).
"""

from __future__ import annotations

import json
import math
import re
from typing import Iterable

import numpy as np

from ..common import set_text_cell

#: decimals shown per unit (the stored value keeps every digit)
DECIMALS = {"Wh/km": 1, "Wh/mi": 1, "kWh": 3, "km": 1, "mi": 1, "L": 3, "US gal": 3,
            "L/100 km": 2, "mpg (US)": 1, "g/km": 1, "g/mi": 1, "km/h": 1, "mph": 1,
            "s": 2, "kg": 1, "years": 1, "N": 0, "kW": 2, "%": 1}
#: decimals shown for money
MONEY_DECIMALS = 2
#: number format of a change in percent
PCT_FORMAT = '+0.0" %";-0.0" %";0.0" %"'

_ILLEGAL = re.compile(r"[\000-\010\013\014\016-\037]")
_BAD_TITLE = re.compile(r"[\\*?:/\[\]]")
_FORMAT_UNIT = re.compile(r'"([^"]*)"')


def fmt_unit(unit: str) -> str:
    """A unit as a quoted number-format literal (quotes and backslashes dropped)."""
    unit = str(unit).replace('"', "").replace("\\", "")
    return f' "{unit}"' if unit else ""


def number_format(unit: str, *, money: bool = False, signed: bool = False) -> str:
    """An Excel number format showing the unit after the number.

    ``signed`` shows an explicit ``+`` on positive values (for changes).
    """
    d = MONEY_DECIMALS if money else DECIMALS.get(unit, 3)
    body = "#,##0" + ("." + "0" * d if d else "")
    u = fmt_unit(unit)
    if signed:
        return f"+{body}{u};-{body}{u};{body}{u}"
    return f"{body}{u}"


def clean_text(text: str) -> str:
    """Text without the control characters XML forbids, cut to a cell's 32,767 characters."""
    text = _ILLEGAL.sub("\ufffd", text)
    return text if len(text) <= 32767 else text[:32766] + "\u2026"


def finite_number(value):
    """A finite Python number, or None (booleans, text, NaN and ±inf give None)."""
    if value is None or isinstance(value, (bool, np.bool_)):
        return None
    if isinstance(value, (np.integer, np.floating)):
        value = value.item()
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    return None


def plain_text(value) -> str:
    """Lists, tables and other values as compact JSON text."""
    from ...plain import plain

    try:
        return json.dumps(plain(value), ensure_ascii=False, default=str)
    except (TypeError, ValueError):
        return str(value)


def set_number_cell(cell, value: float, fmt: str | None) -> None:
    """Store a finite number with its number format in an openpyxl cell."""
    cell.value = value
    if fmt:
        cell.number_format = fmt


def put(ws, row: int, col: int, value, fmt: str | None = None, *, font=None, fill=None,
        align=None):
    """Write one cell of a :class:`~.sheet.Sheet`: text as a string (never a formula),
    booleans as yes/no, numbers unrounded with ``fmt``, other values as JSON text."""
    cell = ws.cell(row, col)
    if isinstance(value, str):
        set_text_cell(cell, clean_text(value))
    elif isinstance(value, (bool, np.bool_)):
        set_text_cell(cell, "yes" if value else "no")
    elif value is None:
        cell.value = None
    else:
        num = finite_number(value)
        if num is None and not isinstance(value, (int, float, np.number)):
            set_text_cell(cell, clean_text(plain_text(value)))
        else:
            cell.value = num
            if fmt and num is not None:
                cell.number_format = fmt
    if font is not None:
        cell.font = font
    if fill is not None:
        cell.fill = fill
    if align is not None:
        cell.alignment = align
    return cell


def sheet_title(base: str, taken: Iterable[str] = ()) -> str:
    """A sheet name valid for Excel and unique among ``taken`` (case-insensitive).

    Excel refuses ``\\ / * ? : [ ]``, a leading or trailing apostrophe, an
    empty name and names longer than 31 characters; ``History`` is reserved.
    """
    used = {t.casefold() for t in taken}
    name = _BAD_TITLE.sub("_", _ILLEGAL.sub("", str(base))).strip().strip("'").strip()
    if not name or name.casefold() == "history":
        name = (name + " sheet").strip() if name else "Sheet"
    name = name[:31].strip()
    candidate, k = name, 2
    while candidate.casefold() in used:
        suffix = f" ({k})"
        candidate = name[:31 - len(suffix)].rstrip() + suffix
        k += 1
    return candidate


class Styles:
    """Fonts, fills, borders and alignments shared by every sheet."""

    def __init__(self):
        """Create the style objects once per workbook."""
        from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

        self.title = Font(bold=True, size=14)
        self.bold = Font(bold=True)
        self.head = Font(bold=True, color="1F1F1F")
        self.head_fill = PatternFill("solid", fgColor="DCE6F0")
        self.group_fill = PatternFill("solid", fgColor="B8CCE4")
        self.base_fill = PatternFill("solid", fgColor="F2F2F2")
        self.wrap = Alignment(wrap_text=True, vertical="top")
        self.left = Alignment(horizontal="left")
        self.top = Alignment(vertical="top")
        self.center = Alignment(horizontal="center", vertical="center", wrap_text=True)
        self.better = Font(color="006100")
        self.worse = Font(color="9C0006")
        self.unclear = Font(color="7F7F7F")
        self.note = Font(italic=True, color="595959")
        self.bottom = Border(bottom=Side(style="thin", color="7F7F7F"))


def header(ws, row, col, text, st, *, group=False):
    """A header cell: bold, shaded, centred, with a line below."""
    cell = put(ws, row, col, text, font=st.head, fill=st.group_fill if group else st.head_fill,
               align=st.center)
    cell.border = st.bottom
    return cell


def group_header(ws, row, col0, col1, text, st):
    """A header spanning columns ``col0`` to ``col1`` (merged)."""
    header(ws, row, col0, text, st, group=True)
    for c in range(col0 + 1, col1 + 1):
        header(ws, row, c, None, st, group=True)
    if col1 > col0:
        ws.merge(row, col0, col1)


def shown_length(value: float, fmt: str) -> int:
    """Characters a number takes when shown with a format made by :func:`number_format`
    (or the percent format): digits with separators, sign and the quoted unit."""
    section = fmt.split(";")[0]
    m = re.search(r"\.(0+)", section)
    decimals = len(m.group(1)) if m else 0
    digits = f"{abs(value):,.{decimals}f}"
    unit = "".join(_FORMAT_UNIT.findall(section))
    return len(digits) + len(unit) + 1                  # + sign


def text_width(values, lo=8, hi=42) -> float:
    """Column width for the longest of ``values``, kept within [lo, hi]."""
    n = max((len(str(v)) for v in values if v is not None), default=0)
    return float(min(max(n + 2, lo), hi))


def coordinate(row: int, col: int) -> str:
    """A cell reference such as ``"C5"``."""
    from openpyxl.utils import get_column_letter

    return f"{get_column_letter(col)}{row}"
