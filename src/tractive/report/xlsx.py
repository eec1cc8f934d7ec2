"""The study workbook: summary, attribution, time series, charts and inputs in one file.

:func:`write_workbook` writes a :class:`~tractive.study.results.StudyResult`
as an ``.xlsx`` workbook (Office Open XML, ECMA-376) with native charts, built
with openpyxl. Sheets, in order:

``Summary``
    Per profile or duty mix: the baseline and each variant with the headline
    metrics (value, change against the baseline, change in percent, the
    central Monte Carlo interval of the change and whether it excludes zero),
    then cost, annual saving, simple payback and net present value with their
    intervals.
``Attribution``
    For each variant, profile and attributed metric: the change split into
    parameter groups (Shapley values, which add up to the change), the change
    with only one group changed (one at a time) and the interaction.
``Energy parts``
    Wheel energy per distance split into rolling, aero, inertia and grade for
    every variant, with one stacked column chart per profile or mix.
``Range vs speed``
    Variants with a powertrain: range and battery energy or fuel per distance
    at constant speeds on a level road without wind, as the study computed
    them (:attr:`~tractive.study.results.StudyResult.range_curves`, from
    :func:`tractive.powertrain.range_curve`), with a chart; the speed of
    greatest range. Left out when no variant has a powertrain.
one sheet per profile
    The nominal time series of every variant side by side (speed in km/h,
    or in mph in US studies; wheel force in N, wheel power in kW and
    cumulative traction energy in kWh in every study) with charts of speed,
    power and cumulative energy over time.
``All results``
    Every metric of every row, one line per row and metric, with unit, value,
    change, Monte Carlo mean and interval bounds (filterable).
``Study``
    Study facts, uncertainty and economics as used, variants and what each
    changes, profiles and mixes, warnings, and the meaning of each column.
``Inputs``
    Every input value with its unit, where it came from and a note.

Numbers are stored unrounded, exactly as in
:meth:`~tractive.study.results.StudyResult.to_dict` (rounding only through
number formats, which carry the unit). Text cells are stored as strings, so
names beginning with ``=``, ``+``, ``-`` or ``@`` stay text and are never
evaluated (see :mod:`tractive.report.common`). The file is written
atomically and never over an input file.

References
----------
.. [1] ECMA-376 Part 1, Office Open XML File Formats (SpreadsheetML cells,
   number formats 18.8.31, DrawingML charts 21.2).
.. [2] L. S. Shapley, "A value for n-person games", Contributions to the
   Theory of Games II, Annals of Mathematics Studies 28, 1953 (the parts
   shown on the attribution sheet).
"""

from __future__ import annotations

import contextlib
import json
import math
import re
from pathlib import Path
from typing import Iterable

import numpy as np

from ..units import MILE_M
from .common import atomic_write, check_target, set_text_cell

__all__ = ["write_workbook", "build_workbook", "sheet_title"]

# ---------------------------------------------------------------------------
# metric selection and formats
# ---------------------------------------------------------------------------

#: headline metrics of the summary sheet, shown when present (metric and US keys)
SUMMARY_METRICS = ("positive_energy_wh_per_km", "positive_energy_wh_per_mi",
                   "battery_wh_per_km", "battery_wh_per_mi",
                   "fuel_l_per_100km", "fuel_economy_mpg", "co2_g_per_km", "co2_g_per_mi",
                   "range_km", "range_mi", "top_speed_kmh", "top_speed_mph",
                   "accel_0_100_kmh_s", "accel_0_60_mph_s", "annual_energy_cost")
#: money columns of the summary sheet (value with interval; change is not defined)
MONEY_METRICS = ("modification_cost", "annual_saving", "payback_years", "npv")
#: wheel-energy parts, per distance
PARTS = ("rolling", "aero", "inertia", "grade")

#: decimals shown per unit (the stored value keeps every digit)
_DECIMALS = {"Wh/km": 1, "Wh/mi": 1, "kWh": 3, "km": 1, "mi": 1, "L": 3, "US gal": 3,
             "L/100 km": 2, "mpg (US)": 1, "g/km": 1, "g/mi": 1, "km/h": 1, "mph": 1,
             "s": 2, "kg": 1, "years": 1, "N": 0, "kW": 2, "%": 1}
_MONEY_DECIMALS = 2

_ILLEGAL = re.compile(r"[\000-\010\013\014\016-\037]")
_BAD_TITLE = re.compile(r"[\\*?:/\[\]]")
_FIXED_SHEETS = ("Summary", "Attribution", "Energy parts", "Range vs speed", "All results",
                 "Study", "Inputs")


def _fmt_unit(unit: str) -> str:
    """A unit as a quoted number-format literal (quotes and backslashes dropped)."""
    unit = str(unit).replace('"', "").replace("\\", "")
    return f' "{unit}"' if unit else ""


def _decimals(unit: str, money: bool = False) -> int:
    return _MONEY_DECIMALS if money else _DECIMALS.get(unit, 3)


def number_format(unit: str, *, money: bool = False, signed: bool = False) -> str:
    """An Excel number format showing the unit after the number.

    ``signed`` shows an explicit ``+`` on positive values (for changes).
    """
    d = _decimals(unit, money)
    body = "#,##0" + ("." + "0" * d if d else "")
    u = _fmt_unit(unit)
    if signed:
        return f"+{body}{u};-{body}{u};{body}{u}"
    return f"{body}{u}"


_PCT_FORMAT = '+0.0" %";-0.0" %";0.0" %"'


# ---------------------------------------------------------------------------
# cells
# ---------------------------------------------------------------------------

def _clean_text(text: str) -> str:
    text = _ILLEGAL.sub("\ufffd", text)
    return text if len(text) <= 32767 else text[:32766] + "\u2026"


def _number(value):
    """A finite Python number, or None."""
    if value is None or isinstance(value, bool):
        return None
    if isinstance(value, (np.integer, np.floating)):
        value = value.item()
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    return None


def _put(ws, row: int, col: int, value, fmt: str | None = None, *, font=None, fill=None,
         align=None):
    """Write one cell: text as a string (never a formula), numbers unrounded."""
    cell = ws.cell(row=row, column=col)
    if isinstance(value, str):
        set_text_cell(cell, _clean_text(value))
    elif isinstance(value, (bool, np.bool_)):
        set_text_cell(cell, "yes" if value else "no")
    elif value is None:
        cell.value = None
    else:
        num = _number(value)
        if num is None and not isinstance(value, (int, float, np.number)):
            set_text_cell(cell, _clean_text(_plain_text(value)))
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


def _plain_text(value) -> str:
    """Lists, tables and other values as compact JSON text."""
    def conv(v):
        if isinstance(v, np.ndarray):
            return v.tolist()
        if isinstance(v, (np.integer, np.floating, np.bool_)):
            return v.item()
        if isinstance(v, (tuple, set, frozenset)):
            return list(v)
        return str(v)
    try:
        return json.dumps(value, default=conv, ensure_ascii=False)
    except (TypeError, ValueError):
        return str(value)


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


# ---------------------------------------------------------------------------
# styles
# ---------------------------------------------------------------------------

class _Styles:
    def __init__(self):
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


def _header(ws, row, col, text, st, *, group=False):
    cell = _put(ws, row, col, text, font=st.head, fill=st.group_fill if group else st.head_fill,
                align=st.center)
    cell.border = st.bottom
    return cell


def _group_header(ws, row, col0, col1, text, st):
    _header(ws, row, col0, text, st, group=True)
    for c in range(col0 + 1, col1 + 1):
        _header(ws, row, c, None, st, group=True)
    if col1 > col0:
        ws.merge_cells(start_row=row, start_column=col0, end_row=row, end_column=col1)


def _widths(ws, widths: dict):
    from openpyxl.utils import get_column_letter

    for col, w in widths.items():
        ws.column_dimensions[get_column_letter(col)].width = w


_FORMAT_UNIT = re.compile(r'"([^"]*)"')


def _shown_length(value: float, fmt: str) -> int:
    """Characters a number takes when shown with an Excel format made by
    :func:`number_format` (or the percent format): digits with thousands
    separators, sign, and the quoted unit text."""
    section = fmt.split(";")[0]
    m = re.search(r"\.(0+)", section)
    decimals = len(m.group(1)) if m else 0
    digits = f"{abs(value):,.{decimals}f}"
    unit = "".join(_FORMAT_UNIT.findall(section))
    return len(digits) + len(unit) + 1                  # + sign


def _fit_number_columns(ws) -> None:
    """Widen any column whose numbers would not fit (a spreadsheet shows '###')."""
    need: dict = {}
    for row in ws.iter_rows():
        for cell in row:
            if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool) \
                    and isinstance(cell.number_format, str) and '"' in cell.number_format:
                n = _shown_length(float(cell.value), cell.number_format)
                col = cell.column_letter
                need[col] = max(need.get(col, 0), n)
    for col, n in need.items():
        dim = ws.column_dimensions[col]
        width = n * 1.1 + 2                              # characters → column width units
        if (dim.width or 0) < width:
            dim.width = width


def _text_width(values, lo=8, hi=42) -> float:
    n = max((len(str(v)) for v in values if v is not None), default=0)
    return float(min(max(n + 2, lo), hi))


def _print_setup(ws, *, title_rows: str | None = None, landscape=True):
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    if title_rows:
        ws.print_title_rows = title_rows


def _label(result, key: str) -> str:
    from ..study.results import METRICS

    info = METRICS.get(key)
    return info.label if info else key.replace("_", " ")


def _unit(result, key: str) -> str:
    return result.unit_of(key)


def _is_money(key: str) -> bool:
    from ..study.results import METRICS

    info = METRICS.get(key)
    return bool(info and info.unit == "money")


def _fmt_for(result, key: str, *, signed=False) -> str:
    return number_format(_unit(result, key), money=_is_money(key), signed=signed)


def _better(key: str) -> str:
    from ..study.results import METRICS

    info = METRICS.get(key)
    return info.better if info else ""


def _change_font(key, change, distinguishable, st):
    """Green when the change is an improvement clear of zero, red when worse, grey when
    the interval includes zero."""
    if change is None:
        return None
    if distinguishable is False:
        return st.unclear
    better = _better(key)
    if not better or change == 0:
        return None
    good = change < 0 if better == "lower" else change > 0
    return st.better if good else st.worse


# ---------------------------------------------------------------------------
# ordering helpers
# ---------------------------------------------------------------------------

def _profile_order(result) -> list:
    names = [p.name for p in result.profiles]
    for r in result.rows:
        if r.profile not in names:
            names.append(r.profile)
    return names


def _variant_order(result) -> list:
    names = [v.name for v in result.variants]
    for r in result.rows:
        if r.variant not in names:
            names.append(r.variant)
    return names


def _rows_by_profile(result) -> list:
    """(profile, [rows: baseline first, then variants in study order])."""
    vorder = {v: i for i, v in enumerate(_variant_order(result))}
    out = []
    for p in _profile_order(result):
        rows = [r for r in result.rows if r.profile == p]
        rows.sort(key=lambda r: (not r.is_baseline, vorder.get(r.variant, len(vorder))))
        if rows:
            out.append((p, rows))
    return out


def _confidence(result) -> float:
    try:
        return float(result.uncertainty.get("confidence_pct", 95.0))
    except (TypeError, ValueError):
        return 95.0


# ---------------------------------------------------------------------------
# sheets
# ---------------------------------------------------------------------------

def _summary_sheet(wb, result, st):
    ws = wb.create_sheet("Summary")
    conf = _confidence(result)
    keys = [k for k in SUMMARY_METRICS if any(k in r.metrics for r in result.rows)]
    money = [k for k in MONEY_METRICS if any(k in r.metrics for r in result.rows)]
    draws = result.uncertainty.get("draws", 0)
    _put(ws, 1, 1, f"{result.study}: baseline against each variant", font=st.title)
    _put(ws, 2, 1, f"Change = variant minus baseline on the same profile or duty mix. "
                   f"Intervals: central {conf:g} % of {draws} Monte Carlo draws. "
                   f"Green: better and clear of zero; red: worse and clear of zero; "
                   f"grey: the interval includes zero. Money in {result.currency}.",
         font=st.note)
    h1, h2 = 3, 4
    _header(ws, h1, 1, None, st)
    _header(ws, h1, 2, None, st)
    _header(ws, h2, 1, "Profile or duty mix", st)
    _header(ws, h2, 2, "Variant", st)
    col = 3
    layout = []          # (key, kind, column)
    for k in keys:
        unit = _unit(result, k)
        _group_header(ws, h1, col, col + 5, f"{_label(result, k)} [{unit}]", st)
        for j, text in enumerate(["value", "change", "change %",
                                  f"change, low end of {conf:g} % interval",
                                  f"change, high end of {conf:g} % interval",
                                  "change distinguishable from zero"]):
            _header(ws, h2, col + j, text, st)
        layout.append((k, "block", col))
        col += 6
    for k in money:
        unit = _unit(result, k)
        if k == "modification_cost":
            _group_header(ws, h1, col, col, f"{_label(result, k)} [{unit}]", st)
            _header(ws, h2, col, "value", st)
            layout.append((k, "cost", col))
            col += 1
            continue
        _group_header(ws, h1, col, col + 2, f"{_label(result, k)} [{unit}]", st)
        for j, text in enumerate(["value", f"low end of {conf:g} % interval",
                                  f"high end of {conf:g} % interval"]):
            _header(ws, h2, col + j, text, st)
        layout.append((k, "money", col))
        col += 3
    last_col = col - 1
    row = h2 + 1
    names_p, names_v = [], []
    for p, rows in _rows_by_profile(result):
        for r in rows:
            fill = st.base_fill if r.is_baseline else None
            _put(ws, row, 1, p, fill=fill)
            _put(ws, row, 2, r.variant, font=st.bold if r.is_baseline else None, fill=fill)
            names_p.append(p)
            names_v.append(r.variant)
            for k, kind, c in layout:
                if kind == "block":
                    _put(ws, row, c, r.metrics.get(k), _fmt_for(result, k), fill=fill)
                    if not r.is_baseline:
                        ch = r.change.get(k)
                        dist = r.distinguishable.get(k)
                        font = _change_font(k, ch, dist, st)
                        _put(ws, row, c + 1, ch, _fmt_for(result, k, signed=True), font=font)
                        _put(ws, row, c + 2, r.change_pct.get(k), _PCT_FORMAT, font=font)
                        _put(ws, row, c + 3, r.change_low.get(k),
                             _fmt_for(result, k, signed=True))
                        _put(ws, row, c + 4, r.change_high.get(k),
                             _fmt_for(result, k, signed=True))
                        _put(ws, row, c + 5, dist, align=st.center)
                    else:
                        for j in range(1, 6):
                            _put(ws, row, c + j, None, fill=fill)
                elif kind == "cost":
                    _put(ws, row, c, r.metrics.get(k), _fmt_for(result, k), fill=fill)
                else:
                    value = r.metrics.get(k)
                    if k == "payback_years" and value is None and k in r.metrics \
                            and r.metrics.get("modification_cost") is not None:
                        value = "never pays back"
                    _put(ws, row, c, value, _fmt_for(result, k), fill=fill)
                    _put(ws, row, c + 1, r.interval_low.get(k) if k in r.metrics else None,
                         _fmt_for(result, k), fill=fill)
                    _put(ws, row, c + 2, r.interval_high.get(k) if k in r.metrics else None,
                         _fmt_for(result, k), fill=fill)
            row += 1
    ws.freeze_panes = ws.cell(row=h2 + 1, column=3)
    widths = {1: _text_width(names_p + ["Profile or duty mix"], 12, 28),
              2: _text_width(names_v + ["Variant"], 10, 30)}
    for k, kind, c in layout:
        if kind == "block":
            widths.update({c: 12.5, c + 1: 12.5, c + 2: 10, c + 3: 13, c + 4: 13, c + 5: 15.5})
        else:
            widths.update({c + j: 13 for j in range(1 if kind == "cost" else 3)})
    _widths(ws, widths)
    ws.row_dimensions[h2].height = 58
    ws.row_dimensions[h1].height = 32
    _print_setup(ws, title_rows=f"{h1}:{h2}")
    ws.print_title_cols = "A:B"
    ws.page_setup.fitToWidth = max(1, math.ceil((last_col - 2) / 13))
    return ws


def _attribution_sheet(wb, result, st):
    from ..study.modify import GROUPS

    ws = wb.create_sheet("Attribution")
    present = []
    for a in result.attribution:
        for g in list(a.parts) + list(a.one_at_a_time):
            if g not in present:
                present.append(g)
    groups = [g for g in GROUPS if g in present] + [g for g in present if g not in GROUPS]
    h1, h2 = 1, 2
    fixed = ["Variant", "Profile or duty mix", "Metric", "Unit", "Change (variant minus "
             "baseline)"]
    for j, text in enumerate(fixed, start=1):
        _header(ws, h1, j, None, st)
        _header(ws, h2, j, text, st)
    c_sh = len(fixed) + 1
    c_int = c_sh + len(groups)
    c_oat = c_int + 1
    c_key = c_oat + len(groups)
    if groups:
        _group_header(ws, h1, c_sh, c_int - 1, "share of the change by parameter group "
                      "(Shapley value; the shares add up to the change)", st)
        _group_header(ws, h1, c_oat, c_key - 1, "change with only this group changed "
                      "(one at a time)", st)
    _header(ws, h1, c_int, None, st)
    _header(ws, h2, c_int, "interaction (change minus the sum of the one-at-a-time "
                           "changes)", st)
    _header(ws, h1, c_key, None, st)
    _header(ws, h2, c_key, "metric key", st)
    for j, g in enumerate(groups):
        _header(ws, h2, c_sh + j, g, st)
        _header(ws, h2, c_oat + j, g, st)
    row = h2 + 1
    vorder = {v: i for i, v in enumerate(_variant_order(result))}
    porder = {p: i for i, p in enumerate(_profile_order(result))}
    items = sorted(enumerate(result.attribution),
                   key=lambda t: (vorder.get(t[1].variant, 1e9), porder.get(t[1].profile, 1e9),
                                  t[0]))
    texts = {1: ["Variant"], 2: ["Profile or duty mix"], 3: ["Metric"]}
    for _, a in items:
        fmt = _fmt_for(result, a.metric, signed=True)
        _put(ws, row, 1, a.variant)
        _put(ws, row, 2, a.profile)
        _put(ws, row, 3, _label(result, a.metric))
        _put(ws, row, 4, _unit(result, a.metric))
        _put(ws, row, 5, a.total, fmt, font=st.bold)
        for j, g in enumerate(groups):
            _put(ws, row, c_sh + j, a.parts.get(g), fmt)
            _put(ws, row, c_oat + j, a.one_at_a_time.get(g), fmt)
        _put(ws, row, c_int, a.interaction, fmt)
        _put(ws, row, c_key, a.metric)
        texts[1].append(a.variant)
        texts[2].append(a.profile)
        texts[3].append(_label(result, a.metric))
        row += 1
    if not result.attribution:
        _put(ws, row, 1, "No variant changes a parameter group, so there is nothing to "
                         "attribute.", font=st.note)
    ws.freeze_panes = ws.cell(row=h2 + 1, column=4)
    widths = {1: _text_width(texts[1], 10, 30), 2: _text_width(texts[2], 12, 28),
              3: _text_width(texts[3], 12, 34), 4: 10, 5: 14, c_int: 16, c_key: 30}
    for j in range(len(groups)):
        widths[c_sh + j] = 12
        widths[c_oat + j] = 12
    _widths(ws, widths)
    ws.row_dimensions[h2].height = 60
    ws.row_dimensions[h1].height = 45
    _print_setup(ws, title_rows=f"{h1}:{h2}")
    return ws


def _per_distance_suffix(result) -> str:
    return "_per_mi" if result.units == "us" else "_per_km"


def _energy_parts_sheet(wb, result, st):
    from openpyxl.chart import BarChart, Reference, Series
    from openpyxl.chart.series import SeriesLabel
    from openpyxl.chart.data_source import StrRef
    from openpyxl.utils import quote_sheetname, get_column_letter

    suffix = _per_distance_suffix(result)
    part_keys = [f"{p}_energy_wh{suffix}" for p in PARTS]
    total_key = f"positive_energy_wh{suffix}"
    if not any(k in r.metrics for r in result.rows for k in part_keys):
        return None
    ws = wb.create_sheet("Energy parts")
    unit = _unit(result, total_key) or ("Wh/mi" if suffix == "_per_mi" else "Wh/km")
    heads = ["Profile or duty mix", "Variant"] + \
        [f"{p} [{unit}]" for p in PARTS] + [f"total traction energy at the wheels [{unit}]"]
    for j, text in enumerate(heads, start=1):
        _header(ws, 1, j, text, st)
    fmt = number_format(unit)
    row = 2
    blocks = []
    names_p, names_v = [], []
    for p, rows in _rows_by_profile(result):
        r0 = row
        for r in rows:
            _put(ws, row, 1, p)
            _put(ws, row, 2, r.variant, font=st.bold if r.is_baseline else None)
            for j, k in enumerate(part_keys):
                _put(ws, row, 3 + j, r.metrics.get(k), fmt)
            _put(ws, row, 3 + len(part_keys), r.metrics.get(total_key), fmt)
            names_p.append(p)
            names_v.append(r.variant)
            row += 1
        blocks.append((p, r0, row - 1))
    ws.freeze_panes = "C2"
    _widths(ws, {1: _text_width(names_p + ["Profile or duty mix"], 12, 28),
                 2: _text_width(names_v + ["Variant"], 10, 30), 3: 12, 4: 12, 5: 12, 6: 12,
                 7: 18})
    ws.row_dimensions[1].height = 45
    qs = quote_sheetname(ws.title)
    chart_col = get_column_letter(len(heads) + 2)
    anchor_row = 2
    for p, r0, r1 in blocks:
        ch = BarChart()
        ch.type = "col"
        ch.grouping = "stacked"
        ch.overlap = 100
        ch.title = f"Wheel energy by part: {p}"
        ch.y_axis.title = f"traction energy at the wheels [{unit}]"
        ch.x_axis.title = "variant"
        _plain_axes(ch)
        cats = Reference(ws, min_col=2, min_row=r0, max_row=r1)
        for j in range(len(PARTS)):
            vals = Reference(ws, min_col=3 + j, min_row=r0, max_row=r1)
            s = Series(vals, title=None)
            col_letter = get_column_letter(3 + j)
            s.tx = SeriesLabel(strRef=StrRef(f"{qs}!${col_letter}$1"))
            ch.series.append(s)
        ch.set_categories(cats)
        ch.width, ch.height = 18, 8.5
        ch.legend.position = "r"
        ws.add_chart(ch, f"{chart_col}{anchor_row}")
        anchor_row += 18
    _print_setup(ws, title_rows="1:1")
    return ws


# ---------------------------------------------------------------------------
# time series per profile
# ---------------------------------------------------------------------------

#: line colours, told apart also with colour-vision deficiency (baseline black)
_PALETTE = ("000000", "E69F00", "56B4E9", "009E73", "D55E00", "0072B2", "CC79A7", "F0E442",
            "7F7F7F", "8C564B")


def _plain_axes(ch):
    """Axis labels as plain numbers (the unit is in the axis title), at the low edge."""
    from openpyxl.chart.data_source import NumFmt

    for ax in (ch.x_axis, ch.y_axis):
        ax.delete = False
        ax.numFmt = NumFmt(formatCode="General", sourceLinked=False)
    ch.x_axis.tickLblPos = "low"


def _scatter(title, x_title, y_title):
    from openpyxl.chart import ScatterChart

    ch = ScatterChart()
    ch.title = title
    ch.style = 2
    ch.x_axis.title = x_title
    ch.y_axis.title = y_title
    _plain_axes(ch)
    ch.legend.position = "r"
    ch.width, ch.height = 22, 8.5
    return ch


def _line_series(ws, x_col, y_col, r0, r1, title_cell):
    from openpyxl.chart import Reference, Series
    from openpyxl.chart.data_source import StrRef
    from openpyxl.chart.series import SeriesLabel
    from openpyxl.utils import quote_sheetname

    x = Reference(ws, min_col=x_col, min_row=r0, max_row=r1)
    y = Reference(ws, min_col=y_col, min_row=r0, max_row=r1)
    s = Series(y, x)
    s.tx = SeriesLabel(strRef=StrRef(f"{quote_sheetname(ws.title)}!{title_cell}"))
    s.marker.symbol = "none"
    s.smooth = False
    s.graphicalProperties.line.width = 15875      # 1.25 pt in EMU
    return s


def _colour(chart):
    """Give each line of a chart its own colour (the first, the baseline, black)."""
    for i, s in enumerate(chart.series):
        s.graphicalProperties.line.solidFill = _PALETTE[i % len(_PALETTE)]


def _profile_sheets(wb, result, st, taken):
    from openpyxl.utils import get_column_letter

    by_profile: dict = {}
    for s in result.series:
        by_profile.setdefault(s.profile, []).append(s)
    vorder = {v: i for i, v in enumerate(_variant_order(result))}
    v_unit, v_of = _series_speed(result)
    made = []
    for p in _profile_order(result):
        series = sorted(by_profile.get(p, []), key=lambda s: vorder.get(s.variant, 1e9))
        if not series:
            continue
        title = sheet_title(f"Profile {p}", taken)
        taken.append(title)
        ws = wb.create_sheet(title)
        first = series[0]
        shared = all(np.array_equal(np.asarray(s.time_s), np.asarray(first.time_s)) and
                     np.array_equal(np.asarray(s.speed_kmh), np.asarray(first.speed_kmh))
                     for s in series)
        h1, h2, r0 = 1, 2, 3
        cols = []        # per series: (time col, speed col, force, power, cumulative)
        if shared:
            _header(ws, h1, 1, None, st)
            _header(ws, h1, 2, None, st)
            _header(ws, h2, 1, "time at the end of the interval [s]", st)
            _header(ws, h2, 2, f"speed, interval mean [{v_unit}]", st)
            _write_column(ws, r0, 1, first.time_s, "0.0")
            _write_column(ws, r0, 2, v_of(first), number_format(v_unit))
            col = 3
        else:
            col = 1
        for s in series:
            width = 3 if shared else 5
            _group_header(ws, h1, col, col + width - 1, s.variant, st)
            if shared:
                t_col, v_col = 1, 2
            else:
                t_col, v_col = col, col + 1
                _header(ws, h2, t_col, "time [s]", st)
                _header(ws, h2, v_col, f"speed [{v_unit}]", st)
                _write_column(ws, r0, t_col, s.time_s, "0.0")
                _write_column(ws, r0, v_col, v_of(s), number_format(v_unit))
                col += 2
            _header(ws, h2, col, "wheel force [N]", st)
            _header(ws, h2, col + 1, "wheel power [kW]", st)
            _header(ws, h2, col + 2, "cumulative traction energy [kWh]", st)
            _write_column(ws, r0, col, s.force_n, number_format("N"))
            _write_column(ws, r0, col + 1, s.power_kw, number_format("kW"))
            _write_column(ws, r0, col + 2, s.cumulative_energy_kwh, number_format("kWh"))
            cols.append((s, t_col, v_col, col, col + 1, col + 2))
            col += 3
        last_col = col - 1
        n = max(len(np.asarray(s.time_s)) for s in series)
        r1 = r0 + n - 1
        ws.freeze_panes = ws.cell(row=r0, column=3)
        widths = {c: 12.5 for c in range(1, last_col + 1)}
        _widths(ws, widths)
        ws.row_dimensions[h2].height = 45
        for c in range(1, last_col + 1):
            ws.cell(row=h1, column=c).alignment = st.center
        # charts to the right of the data
        gx = get_column_letter(last_col + 2)
        name_cell = lambda c: f"${get_column_letter(c)}${h1}"  # noqa: E731
        speed = _scatter(f"Speed over time: {p}", "time [s]", f"speed [{v_unit}]")
        if shared:
            sp = _line_series(ws, 1, 2, r0, r1, f"${get_column_letter(2)}${h2}")
            speed.series.append(sp)
            speed.legend = None
        else:
            for s, t_col, v_col, f_col, p_col, e_col in cols:
                speed.series.append(_line_series(ws, t_col, v_col, r0,
                                                 r0 + len(np.asarray(s.time_s)) - 1,
                                                 name_cell(f_col - 2)))
        power = _scatter(f"Wheel power over time: {p}", "time [s]", "wheel power [kW]")
        energy = _scatter(f"Cumulative traction energy at the wheels: {p}", "time [s]",
                          "energy [kWh]")
        for s, t_col, v_col, f_col, p_col, e_col in cols:
            end = r0 + len(np.asarray(s.time_s)) - 1
            head = name_cell(f_col if shared else f_col - 2)
            power.series.append(_line_series(ws, t_col, p_col, r0, end, head))
            energy.series.append(_line_series(ws, t_col, e_col, r0, end, head))
        t_end = max(float(np.asarray(s.time_s)[-1]) for s in series)
        for ch in (speed, power, energy):
            _colour(ch)
            ch.x_axis.scaling.min = 0.0
            ch.x_axis.scaling.max = t_end
        ws.add_chart(speed, f"{gx}1")
        ws.add_chart(power, f"{gx}19")
        ws.add_chart(energy, f"{gx}37")
        gx_end = get_column_letter(last_col + 2 + 13)
        ws.print_area = f"{gx}1:{gx_end}54"
        _print_setup(ws, landscape=False)
        made.append(ws)
    return made


def _series_speed(result):
    """Unit and getter of the profile sheets' speed: km/h, or mph in US studies.

    The mph values are the km/h values over 1.609344 (the exact mile). Wheel
    force stays in N, power in kW and energy in kWh in every study.
    """
    if result.units == "us":
        km_per_mi = MILE_M / 1000.0
        return "mph", lambda s: np.asarray(s.speed_kmh, float) / km_per_mi
    return "km/h", lambda s: np.asarray(s.speed_kmh, float)


def _write_column(ws, r0, col, values, fmt):
    for i, v in enumerate(np.asarray(values, float).tolist()):
        _put(ws, r0 + i, col, v, fmt)


# ---------------------------------------------------------------------------
# every number
# ---------------------------------------------------------------------------

def _all_results_sheet(wb, result, st):
    ws = wb.create_sheet("All results")
    conf = _confidence(result)
    heads = ["Profile or duty mix", "Variant", "Metric", "Unit", "Value", "Change",
             "Change %", "Monte Carlo mean", f"Low end of {conf:g} % interval",
             f"High end of {conf:g} % interval", "Change, Monte Carlo mean",
             f"Change, low end of {conf:g} % interval",
             f"Change, high end of {conf:g} % interval", "Change distinguishable from zero",
             "Kind", "Role", "Metric key"]
    for j, text in enumerate(heads, start=1):
        _header(ws, 1, j, text, st)
    keys = result.metric_keys()
    row = 2
    texts = {1: [], 2: [], 3: []}
    for p, rows in _rows_by_profile(result):
        for r in rows:
            for k in keys:
                if k not in r.metrics:
                    continue
                fmt = _fmt_for(result, k)
                sfmt = _fmt_for(result, k, signed=True)
                _put(ws, row, 1, p)
                _put(ws, row, 2, r.variant)
                _put(ws, row, 3, _label(result, k))
                _put(ws, row, 4, _unit(result, k))
                _put(ws, row, 5, r.metrics.get(k), fmt)
                _put(ws, row, 6, r.change.get(k), sfmt)
                _put(ws, row, 7, r.change_pct.get(k), _PCT_FORMAT)
                _put(ws, row, 8, r.mean.get(k), fmt)
                _put(ws, row, 9, r.interval_low.get(k), fmt)
                _put(ws, row, 10, r.interval_high.get(k), fmt)
                _put(ws, row, 11, r.change_mean.get(k), sfmt)
                _put(ws, row, 12, r.change_low.get(k), sfmt)
                _put(ws, row, 13, r.change_high.get(k), sfmt)
                _put(ws, row, 14, r.distinguishable.get(k), align=st.center)
                _put(ws, row, 15, r.profile_kind)
                _put(ws, row, 16, r.role)
                _put(ws, row, 17, k)
                texts[1].append(p)
                texts[2].append(r.variant)
                texts[3].append(_label(result, k))
                row += 1
    ws.freeze_panes = "D2"
    if row > 2:
        from openpyxl.utils import get_column_letter
        ws.auto_filter.ref = f"A1:{get_column_letter(len(heads))}{row - 1}"
    widths = {1: _text_width(texts[1] + ["Profile or duty mix"], 12, 28),
              2: _text_width(texts[2] + ["Variant"], 10, 30),
              3: _text_width(texts[3], 12, 34), 4: 9, 15: 9, 16: 13, 17: 30}
    for c in range(5, 15):
        widths[c] = 13
    _widths(ws, widths)
    ws.row_dimensions[1].height = 45
    _print_setup(ws, title_rows="1:1")
    return ws


# ---------------------------------------------------------------------------
# study facts and inputs
# ---------------------------------------------------------------------------

_DEFINITIONS = (
    ("Change", "variant minus baseline on the same profile or duty mix, in the unit of "
               "the metric; change % is 100 × change / baseline value."),
    ("Interval", "the central Monte Carlo interval of the stated confidence: the range "
                 "holding that share of the draws, leaving equal shares below and above "
                 "(JCGM 101:2008)."),
    ("Distinguishable from zero", "yes when the interval of the change excludes zero; "
                                  "no when the change could be zero at that confidence."),
    ("Shapley value", "the part of a change due to one parameter group, averaged over "
                      "every order of switching the groups from baseline to variant; "
                      "the parts add up to the change."),
    ("One at a time", "the change when only that group is changed from the baseline; "
                      "interaction = change minus the sum of these."),
    ("Duty mix", "distance-weighted combination of profiles; per-distance values are "
                 "share-weighted means, range combines harmonically; totals over a "
                 "single run are not given for a mix."),
    ("Time series", "nominal values (no Monte Carlo) per interval of the sampled "
                    "profile: mean speed (km/h, or mph in US studies), wheel force [N], "
                    "wheel power = force × mean speed [kW], "
                    "running sum of the positive (traction) wheel energy."),
)


def _study_sheet(wb, result, st, notes):
    ws = wb.create_sheet("Study")
    _put(ws, 1, 1, result.study, font=st.title)
    row = 3

    def section(title):
        nonlocal row
        _put(ws, row, 1, title, font=st.bold)
        row += 1

    def pair(key, value, fmt=None):
        # long text runs over the empty cells to its right
        nonlocal row
        _put(ws, row, 1, key)
        _put(ws, row, 2, value, fmt, align=st.left)
        row += 1

    section("Study")
    pair("study file", result.source)
    pair("units", result.units)
    pair("currency", result.currency)
    unc = dict(result.uncertainty)
    pair("Monte Carlo draws", unc.pop("draws", None))
    pair("random seed", unc.pop("seed", None))
    conf = unc.pop("confidence_pct", None)
    pair("confidence of the intervals [%]", conf, number_format("%"))
    for k in ("method", "note"):
        if k in unc:
            pair(k, unc.pop(k))
    params = unc.pop("uncertain_parameters", None) or []
    pair("uncertain inputs (standard uncertainty)", "; ".join(map(str, params)) or "none")
    for k, v in unc.items():
        pair(k.replace("_", " "), v if _number(v) is not None or isinstance(v, str)
             else _plain_text(v))
    if result.economics:
        row += 1
        section(f"Economics as used (money in {result.currency})")
        for k, v in result.economics.items():
            pair(k, v if (_number(v) is not None or isinstance(v, str) or v is None)
                 else _plain_text(v))
    # variants
    row += 1
    section("Variants")
    heads = ["Name", "Role", f"Cost [{result.currency}]", "Changes", "Parameter groups",
             "Members", "Vehicle"]
    for j, h in enumerate(heads, start=1):
        _header(ws, row, j, h, st)
    row += 1
    for v in result.variants:
        texts = [", ".join(map(str, v.groups)), ", ".join(map(str, v.members))]
        text = "; ".join(map(str, v.changes))
        _put(ws, row, 1, v.name, align=st.top)
        _put(ws, row, 2, v.role, align=st.top)
        _put(ws, row, 3, v.cost, number_format(result.currency, money=True), align=st.top)
        _put(ws, row, 4, text, align=st.wrap)
        _put(ws, row, 5, texts[0], align=st.wrap)
        _put(ws, row, 6, texts[1], align=st.wrap)
        _put(ws, row, 7, v.vehicle_name, align=st.top)
        lines = max(1, math.ceil(len(text) / 46), *(math.ceil(len(t) / 20) for t in texts))
        if lines > 1:
            ws.row_dimensions[row].height = 15.0 * lines
        row += 1
    # profiles
    row += 1
    section("Profiles and duty mixes")
    dist_unit = "mi" if result.units == "us" else "km"
    heads = ["Name", "Kind", "Profile", f"Distance [{dist_unit}]", "Duration [s]",
             "Shares [%]"]
    for j, h in enumerate(heads, start=1):
        _header(ws, row, j, h, st)
    row += 1
    for p in result.profiles:
        _put(ws, row, 1, p.name)
        _put(ws, row, 2, p.kind)
        _put(ws, row, 3, p.spec)
        _put(ws, row, 4, p.distance()[1], f'#,##0.000{_fmt_unit(dist_unit)}')
        _put(ws, row, 5, p.duration_s, f'#,##0.0{_fmt_unit("s")}')
        shares = "; ".join(f"{k} {v:g} %" for k, v in p.shares_pct.items()) \
            if p.shares_pct else None
        _put(ws, row, 6, shares)
        row += 1
    warnings = list(result.warnings) + list(notes)
    if warnings:
        row += 1
        section("Warnings and notes")
        for w in warnings:
            _put(ws, row, 1, w, align=None)
            row += 1
    row += 1
    section("How to read the workbook")
    for k, text in _DEFINITIONS:
        pair(k, text)
    ws.freeze_panes = "A2"
    _widths(ws, {1: 34, 2: 44, 3: 16, 4: 48, 5: 22, 6: 22, 7: 24})
    _print_setup(ws)
    return ws


def _inputs_sheet(wb, result, st):
    ws = wb.create_sheet("Inputs")
    heads = ["Section", "Key", "Value", "Unit", "Source", "Note"]
    for j, h in enumerate(heads, start=1):
        _header(ws, 1, j, h, st)
    row = 2
    cols = {j: [h] for j, h in enumerate(heads, start=1)}
    for item in result.inputs:
        value = item.value
        unit = str(item.unit or "")
        if isinstance(value, (bool, np.bool_)):
            value = "true" if value else "false"
        elif value is not None and _number(value) is None and not isinstance(value, str):
            value = _plain_text(value)
        fmt = f"General{_fmt_unit(unit)}" if unit else None
        vals = [item.section, item.key, value, unit, str(item.source), item.note]
        for j, v in enumerate(vals, start=1):
            _put(ws, row, j, v, fmt if j == 3 else None)
            cols[j].append(v)
        row += 1
    if not result.inputs:
        _put(ws, row, 1, "The study result carries no input echo.", font=st.note)
    ws.freeze_panes = "C2"
    if row > 2:
        ws.auto_filter.ref = f"A1:F{row - 1}"
    _widths(ws, {1: _text_width(cols[1], 10, 24), 2: _text_width(cols[2], 10, 40),
                 3: _text_width(cols[3], 12, 40), 4: _text_width(cols[4], 6, 14),
                 5: _text_width(cols[5], 10, 30), 6: _text_width(cols[6], 10, 70)})
    _print_setup(ws, title_rows="1:1")
    return ws


# ---------------------------------------------------------------------------
# range against speed
# ---------------------------------------------------------------------------

#: header text of the consumption column of a range curve, by key
_CONSUMPTION_LABELS = {"battery_wh_per_km": ("battery energy", "Wh/km"),
                       "battery_wh_per_mi": ("battery energy", "Wh/mi"),
                       "fuel_l_per_100km": ("fuel", "L/100 km"),
                       "fuel_economy_mpg": ("fuel economy", "mpg (US)"),
                       "fuel_kg_per_100km": ("fuel", "kg/100 km")}
#: header text of the speed and range columns, by key
_AXIS_UNITS = {"speed_kmh": "km/h", "speed_mph": "mph", "range_km": "km", "range_mi": "mi",
               "best_speed_kmh": "km/h", "best_speed_mph": "mph", "best_range_km": "km",
               "best_range_mi": "mi"}


def _range_sheet(wb, result, st):
    """Range and consumption against constant speed, from ``result.range_curves``."""
    from openpyxl.utils import get_column_letter

    curves = list(result.range_curves)
    if not curves:
        return None
    ws = wb.create_sheet("Range vs speed")
    vorder = {v: i for i, v in enumerate(_variant_order(result))}
    curves.sort(key=lambda c: vorder.get(c.variant, len(vorder)))
    first = curves[0]
    sp_key, r_key = first.speed_key, first.range_key
    sp_unit, r_unit = _AXIS_UNITS.get(sp_key, ""), _AXIS_UNITS.get(r_key, "")
    h1, h2, r0 = 1, 2, 3
    speeds = np.unique(np.concatenate([np.asarray(c.columns[c.speed_key], float)
                                       for c in curves]))
    _header(ws, h1, 1, None, st)
    _header(ws, h2, 1, f"constant speed [{sp_unit}]", st)
    _write_column(ws, r0, 1, speeds, number_format(sp_unit))
    col = 2
    value_cols = []          # first column (range) of each variant
    for c in curves:
        c_key = c.consumption_key
        c_label, c_unit = _CONSUMPTION_LABELS.get(c_key, (c_key.replace("_", " "), ""))
        _group_header(ws, h1, col, col + 1, c.variant, st)
        _header(ws, h2, col, f"range [{r_unit}]", st)
        _header(ws, h2, col + 1, f"{c_label} [{c_unit}]", st)
        sp = np.asarray(c.columns[c.speed_key], float)
        feasible = np.asarray(c.feasible, bool)
        rng = np.asarray(c.columns[c.range_key], float)
        per = np.asarray(c.columns[c_key], float)
        idx = {float(v): i for i, v in enumerate(sp)}
        for i, v in enumerate(speeds):
            j = idx.get(float(v))
            ok = j is not None and feasible[j]
            _put(ws, r0 + i, col, rng[j] if ok else None, number_format(r_unit))
            _put(ws, r0 + i, col + 1, per[j] if ok else None, number_format(c_unit))
        value_cols.append(col)
        col += 2
    last = col - 1
    r1 = r0 + len(speeds) - 1
    ws.freeze_panes = ws.cell(row=r0, column=2)
    _widths(ws, {c: 13 for c in range(1, last + 1)})
    ws.row_dimensions[h2].height = 45
    # speed of greatest range
    tc = last + 2
    names = [c.variant for c in curves]
    _header(ws, h2, tc, "Variant", st)
    _header(ws, h2, tc + 1, f"speed of greatest range [{sp_unit}]", st)
    _header(ws, h2, tc + 2, f"greatest range [{r_unit}]", st)
    _header(ws, h2, tc + 3, "at the end of the swept speeds", st)
    for i, c in enumerate(curves):
        best = list(c.best.values())
        _put(ws, r0 + i, tc, c.variant)
        _put(ws, r0 + i, tc + 1, best[0] if best else None, number_format(sp_unit))
        _put(ws, r0 + i, tc + 2, best[1] if len(best) > 1 else None, number_format(r_unit))
        _put(ws, r0 + i, tc + 3, bool(c.best_at_edge), align=st.center)
    note_row = r0 + len(names) + 1
    _put(ws, note_row, tc, "Constant speed on a level road without wind, nominal vehicles; "
                           "range = usable battery energy or tank over the consumption; "
                           "empty cells: the drive cannot hold that speed.", font=st.note)
    _widths(ws, {tc: _text_width(names + ["Variant"], 10, 30), tc + 1: 14, tc + 2: 14,
                 tc + 3: 13})
    chart = _scatter("Range against constant speed", f"speed [{sp_unit}]",
                     f"range [{r_unit}]")
    for c in value_cols:
        chart.series.append(_line_series(ws, 1, c, r0, r1, f"${get_column_letter(c)}${h1}"))
    _colour(chart)
    chart.x_axis.scaling.min = 0.0
    ws.add_chart(chart, f"{get_column_letter(tc)}{note_row + 2}")
    _print_setup(ws, title_rows=f"{h1}:{h2}")
    return ws


# ---------------------------------------------------------------------------
# entry points
# ---------------------------------------------------------------------------

def build_workbook(result):
    """The study workbook as an :class:`openpyxl.Workbook` (not yet saved).

    Parameters
    ----------
    result : StudyResult
    """
    from openpyxl import Workbook

    st = _Styles()
    wb = Workbook()
    wb.remove(wb.active)
    notes = []
    taken = list(_FIXED_SHEETS)
    _summary_sheet(wb, result, st)
    _attribution_sheet(wb, result, st)
    _energy_parts_sheet(wb, result, st)
    _range_sheet(wb, result, st)
    if not result.series:
        notes.append("no time series in the result: the profile sheets are left out")
    _profile_sheets(wb, result, st, taken)
    _all_results_sheet(wb, result, st)
    _study_sheet(wb, result, st, notes)
    _inputs_sheet(wb, result, st)
    for ws in wb.worksheets:
        _fit_number_columns(ws)
    wb.active = 0
    wb.properties.title = _clean_text(str(result.study))[:255]
    wb.properties.creator = "tractive"
    return wb


def write_workbook(result, path, *, inputs: Iterable = ()) -> Path:
    """Write the study workbook atomically.

    Parameters
    ----------
    result : StudyResult
        A study result (run with time series for the profile sheets).
    path : str or path
        Target ``.xlsx`` file.
    inputs : iterable of paths
        Files the result was computed from; the target must not be one of them.

    Returns
    -------
    Path of the written file.

    Raises
    ------
    InputError
        When the target is an input file or a folder, or cannot be written.
    """
    inputs = list(inputs)
    check_target(path, inputs)
    wb = build_workbook(result)

    def _write(tmp: Path):
        with _full_precision():
            wb.save(tmp)

    return atomic_write(path, _write, inputs=inputs)


@contextlib.contextmanager
def _full_precision():
    """Store floats with every digit while saving.

    openpyxl writes numbers with 16 significant digits ("%.16g"), which can
    change the last bit of a double; the shortest text that reads back to the
    same double (``repr``, at most 17 digits) keeps each stored value equal to
    the JSON value.
    """
    from openpyxl.cell import _writer

    original = _writer.safe_string

    def exact(value):
        if isinstance(value, (float, np.floating)) and not isinstance(value, bool):
            v = float(value)
            if math.isfinite(v):
                return repr(v)
        return original(value)

    _writer.safe_string = exact
    try:
        yield
    finally:
        _writer.safe_string = original
