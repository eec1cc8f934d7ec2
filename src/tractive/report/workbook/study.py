"""The ``Study`` sheet: study facts, uncertainty and economics as used, variants and
what each changes, profiles and mixes, warnings, and the meaning of each column."""

from __future__ import annotations

import math

from .cells import finite_number, fmt_unit, header, number_format, plain_text, put
from .sheet import Sheet

#: the meaning of the workbook's terms, shown at the end of the sheet
DEFINITIONS = (
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


class _Writer:
    """Writes the sheet top to bottom: sections, key-value pairs, tables."""

    def __init__(self, ws: Sheet, st):
        """Start below the title."""
        self.ws, self.st, self.row = ws, st, 3

    def section(self, title, gap=True):
        """A bold section title (after an empty row unless ``gap`` is False)."""
        self.row += 1 if gap else 0
        put(self.ws, self.row, 1, title, font=self.st.bold)
        self.row += 1

    def pair(self, key, value, fmt=None):
        """A key and its value (long text runs over the empty cells to its right)."""
        put(self.ws, self.row, 1, key)
        put(self.ws, self.row, 2, value, fmt, align=self.st.left)
        self.row += 1

    def heads(self, texts):
        """A table header row."""
        for j, h in enumerate(texts, start=1):
            header(self.ws, self.row, j, h, self.st)
        self.row += 1


def _scalar(v):
    """A value as a cell shows it: numbers and text as they are, others as JSON text."""
    return v if (finite_number(v) is not None or isinstance(v, str) or v is None) \
        else plain_text(v)


def _facts(w: _Writer, result) -> None:
    """Study file, units, uncertainty and economics as used."""
    w.section("Study", gap=False)
    w.pair("study file", result.source)
    w.pair("units", result.units)
    w.pair("currency", result.currency)
    unc = dict(result.uncertainty)
    w.pair("Monte Carlo draws", unc.pop("draws", None))
    w.pair("random seed", unc.pop("seed", None))
    w.pair("confidence of the intervals [%]", unc.pop("confidence_pct", None),
           number_format("%"))
    for k in ("method", "note"):
        if k in unc:
            w.pair(k, unc.pop(k))
    params = unc.pop("uncertain_parameters", None) or []
    w.pair("uncertain inputs (standard uncertainty)", "; ".join(map(str, params)) or "none")
    for k, v in unc.items():
        w.pair(k.replace("_", " "), _scalar(v))
    if result.economics:
        w.section(f"Economics as used (money in {result.currency})")
        for k, v in result.economics.items():
            w.pair(k, _scalar(v))


def _variants(w: _Writer, result) -> None:
    """One line per variant: role, cost, changes, groups, members, vehicle."""
    w.section("Variants")
    w.heads(["Name", "Role", f"Cost [{result.currency}]", "Changes", "Parameter groups",
             "Members", "Vehicle"])
    ws, st = w.ws, w.st
    for v in result.variants:
        texts = [", ".join(map(str, v.groups)), ", ".join(map(str, v.members))]
        text = "; ".join(map(str, v.changes))
        row = w.row
        put(ws, row, 1, v.name, align=st.top)
        put(ws, row, 2, v.role, align=st.top)
        put(ws, row, 3, v.cost, number_format(result.currency, money=True), align=st.top)
        put(ws, row, 4, text, align=st.wrap)
        put(ws, row, 5, texts[0], align=st.wrap)
        put(ws, row, 6, texts[1], align=st.wrap)
        put(ws, row, 7, v.vehicle_name, align=st.top)
        lines = max(1, math.ceil(len(text) / 46), *(math.ceil(len(t) / 20) for t in texts))
        if lines > 1:
            ws.heights[row] = 15.0 * lines
        w.row += 1


def _profiles(w: _Writer, result) -> None:
    """One line per profile or duty mix: kind, definition, distance, duration, shares."""
    w.section("Profiles and duty mixes")
    dist_unit = "mi" if result.units == "us" else "km"
    w.heads(["Name", "Kind", "Profile", f"Distance [{dist_unit}]", "Duration [s]",
             "Shares [%]"])
    for p in result.profiles:
        shares = "; ".join(f"{k} {v:g} %" for k, v in p.shares_pct.items()) \
            if p.shares_pct else None
        for c, value, fmt in ((1, p.name, None), (2, p.kind, None), (3, p.spec, None),
                              (4, p.distance()[1], f'#,##0.000{fmt_unit(dist_unit)}'),
                              (5, p.duration_s, f'#,##0.0{fmt_unit("s")}'),
                              (6, shares, None)):
            put(w.ws, w.row, c, value, fmt)
        w.row += 1


def study_sheet(result, st, notes) -> Sheet:
    """The Study sheet (see the module doc); ``notes`` are added to the warnings."""
    ws = Sheet("Study")
    put(ws, 1, 1, result.study, font=st.title)
    w = _Writer(ws, st)
    _facts(w, result)
    _variants(w, result)
    _profiles(w, result)
    warnings = list(result.warnings) + list(notes)
    if warnings:
        w.section("Warnings and notes")
        for text in warnings:
            put(ws, w.row, 1, text)
            w.row += 1
    w.section("How to read the workbook")
    for k, text in DEFINITIONS:
        w.pair(k, text)
    ws.freeze_panes = "A2"
    ws.widths.update({1: 34, 2: 44, 3: 16, 4: 48, 5: 22, 6: 22, 7: 24})
    return ws
