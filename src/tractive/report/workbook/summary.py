"""The ``Summary`` sheet: per profile or duty mix, the baseline and each variant with
the headline metrics (value and its interval, change, change in percent, interval of
the change, whether it excludes zero), the annual fuel or electricity, CO2 and fleet
totals the same way, then cost and the economics with their intervals, the payback
verdict, and below the table one forwardable sentence per variant."""

from __future__ import annotations

import math

from .cells import PCT_FORMAT, group_header, header, put, text_width
from .rows import (change_font, confidence, economics_keys, fmt_for, headline_keys, label,
                   rows_by_profile, unit)
from .sheet import Sheet

_H1, _H2 = 3, 4


def _heads(ws, result, st) -> list:
    """Header rows; returns the layout [(key, kind, first column)]."""
    conf = confidence(result)
    for c, text in ((1, "Profile or duty mix"), (2, "Variant")):
        header(ws, _H1, c, None, st)
        header(ws, _H2, c, text, st)
    col = 3
    layout = []
    for k in summary_keys(result):
        group_header(ws, _H1, col, col + _BLOCK - 1, f"{label(k)} [{unit(result, k)}]", st)
        for j, text in enumerate(["value", f"value, low end of {conf:g} % interval",
                                  f"value, high end of {conf:g} % interval",
                                  "change", "change %",
                                  f"change, low end of {conf:g} % interval",
                                  f"change, high end of {conf:g} % interval",
                                  "change distinguishable from zero"]):
            header(ws, _H2, col + j, text, st)
        layout.append((k, "block", col))
        col += _BLOCK
    for k in economics_keys(result):
        n = 1 if k == "modification_cost" else 3
        group_header(ws, _H1, col, col + n - 1, f"{label(k)} [{unit(result, k)}]", st)
        subs = ["value"] if n == 1 else ["value", f"low end of {conf:g} % interval",
                                         f"high end of {conf:g} % interval"]
        for j, text in enumerate(subs):
            header(ws, _H2, col + j, text, st)
        layout.append((k, "cost" if n == 1 else "money", col))
        col += n
    if any(r.verdict for r in result.rows):
        group_header(ws, _H1, col, col + 2, "payback verdict", st)
        for j, text in enumerate(["payback beyond the service life", "NPV below zero",
                                  "draws that pay back within the service life [%]"]):
            header(ws, _H2, col + j, text, st)
        layout.append(("verdict", "verdict", col))
    return layout


#: columns of one metric's block
_BLOCK = 8
#: metrics of the Summary besides the headline ones, when present: annual amounts and
#: fleet totals (metric and US keys)
_ANNUAL = ("annual_fuel_l", "annual_fuel_gal", "annual_grid_energy_kwh", "annual_co2_kg",
           "fleet_annual_fuel_l", "fleet_annual_fuel_gal", "fleet_annual_grid_energy_kwh",
           "fleet_annual_co2_t", "fleet_annual_energy_cost")


def summary_keys(result) -> list:
    """Metrics with a change shown on the Summary: the headline keys, then annual fuel or
    electricity, CO2 and the fleet totals present."""
    econ = economics_keys(result)
    present = set(result.metric_keys())
    keys = [k for k in headline_keys(result) if k not in econ]
    return keys + [k for k in _ANNUAL if k in present and k not in keys]


def _block(ws, row, c, result, r, k, st, fill):
    """Value, change, change %, interval of the change and its flag of one metric."""
    fmt = fmt_for(result, k)
    put(ws, row, c, r.metrics.get(k), fmt, fill=fill)
    put(ws, row, c + 1, r.interval_low.get(k) if k in r.metrics else None, fmt, fill=fill)
    put(ws, row, c + 2, r.interval_high.get(k) if k in r.metrics else None, fmt, fill=fill)
    if r.is_baseline:
        for j in range(3, _BLOCK):
            put(ws, row, c + j, None, fill=fill)
        return
    ch, dist = r.change.get(k), r.distinguishable.get(k)
    font = change_font(k, ch, dist, st)
    signed = fmt_for(result, k, signed=True)
    put(ws, row, c + 3, ch, signed, font=font)
    put(ws, row, c + 4, r.change_pct.get(k), PCT_FORMAT, font=font)
    put(ws, row, c + 5, r.change_low.get(k), signed)
    put(ws, row, c + 6, r.change_high.get(k), signed)
    put(ws, row, c + 7, dist, align=st.center)


def _money(ws, row, c, result, r, k, fill):
    """Value and interval of an economics metric ("never pays back" when it does not)."""
    value = r.metrics.get(k)
    if k == "payback_years" and value is None and k in r.metrics \
            and r.metrics.get("modification_cost") is not None:
        value = "never pays back"
    fmt = fmt_for(result, k)
    put(ws, row, c, value, fmt, fill=fill)
    put(ws, row, c + 1, r.interval_low.get(k) if k in r.metrics else None, fmt, fill=fill)
    put(ws, row, c + 2, r.interval_high.get(k) if k in r.metrics else None, fmt, fill=fill)


def _verdict(ws, row, c, r, st, fill) -> None:
    """Payback beyond the service life, NPV below zero, share of draws in time."""
    v = r.verdict
    if not v:
        for j in range(3):
            put(ws, row, c + j, None, fill=fill)
        return
    put(ws, row, c, "yes" if v.get("payback_exceeds_life") else "no", align=st.center,
        font=st.worse if v.get("payback_exceeds_life") else None)
    npv = v.get("npv_negative")
    put(ws, row, c + 1, None if npv is None else ("yes" if npv else "no"), align=st.center,
        font=st.worse if npv else None)
    put(ws, row, c + 2, v.get("pays_back_within_life_pct"), "0.0")


def _headlines(ws, row: int, result, st) -> None:
    """One forwardable sentence per variant, below the table (column C on, so the
    profile and variant columns stay a clean index of the table above)."""
    from ...study.headline import headlines

    sentences = headlines(result)
    if not sentences:
        return
    put(ws, row + 1, 3, "In one sentence each", font=st.bold)
    for i, text in enumerate(sentences.values()):
        put(ws, row + 2 + i, 3, text)


def summary_sheet(result, st) -> Sheet:
    """The Summary sheet (see the module doc); metrics are the registry's headline
    keys and the keys without a change (economics, cost)."""
    ws = Sheet("Summary")
    conf = confidence(result)
    draws = result.uncertainty.get("draws", 0)
    put(ws, 1, 1, f"{result.study}: baseline against each variant", font=st.title)
    put(ws, 2, 1, f"Change = variant minus baseline on the same profile or duty mix. "
                  f"Intervals: central {conf:g} % of {draws} Monte Carlo draws. "
                  f"Green: better and clear of zero; red: worse and clear of zero; "
                  f"grey: the interval includes zero. Money in {result.currency}.",
        font=st.note)
    layout = _heads(ws, result, st)
    row = _H2 + 1
    names_p, names_v = [], []
    for p, rows in rows_by_profile(result):
        for r in rows:
            fill = st.base_fill if r.is_baseline else None
            put(ws, row, 1, p, fill=fill)
            put(ws, row, 2, r.variant, font=st.bold if r.is_baseline else None, fill=fill)
            names_p.append(p)
            names_v.append(r.variant)
            for k, kind, c in layout:
                if kind == "block":
                    _block(ws, row, c, result, r, k, st, fill)
                elif kind == "cost":
                    put(ws, row, c, r.metrics.get(k), fmt_for(result, k), fill=fill)
                elif kind == "verdict":
                    _verdict(ws, row, c, r, st, fill)
                else:
                    _money(ws, row, c, result, r, k, fill)
            row += 1
    _headlines(ws, row + 1, result, st)
    ws.freeze_panes = f"C{_H2 + 1}"
    ws.widths.update({1: text_width(names_p + ["Profile or duty mix"], 12, 28),
                      2: text_width(names_v + ["Variant"], 10, 30)})
    for k, kind, c in layout:
        if kind == "block":
            ws.widths.update({c: 12.5, c + 1: 12.5, c + 2: 12.5, c + 3: 12.5, c + 4: 10,
                              c + 5: 13, c + 6: 13, c + 7: 15.5})
        else:
            ws.widths.update({c + j: 13 for j in range(1 if kind == "cost" else 3)})
    ws.heights.update({_H2: 58, _H1: 32})
    ws.print_title_rows, ws.print_title_cols = f"{_H1}:{_H2}", "A:B"
    last_col = max([2] + [c + (_BLOCK - 1 if kind == "block" else 0 if kind == "cost" else 2)
                          for _, kind, c in layout])
    ws.fit_to_width = max(1, math.ceil((last_col - 2) / 13))
    return ws
