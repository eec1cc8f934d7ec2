"""The ``Attribution`` sheet: each variant's change split into parameter groups
(Shapley values, which add up to the change), the change with one group changed
at a time, and the interaction.

References
----------
.. [1] L. S. Shapley, "A value for n-person games", Contributions to the
   Theory of Games II, Annals of Mathematics Studies 28, 1953.
"""

from __future__ import annotations

from .cells import group_header, header, put, text_width
from .rows import fmt_for, label, profile_order, unit, variant_order
from .sheet import Sheet

_H1, _H2 = 1, 2
_FIXED = ["Variant", "Profile or duty mix", "Metric", "Unit",
          "Change (variant minus baseline)"]


def _groups(result) -> list:
    """Parameter groups present in the attribution, in the study's group order."""
    from ...study.modify import GROUPS

    present = []
    for a in result.attribution:
        for g in list(a.parts) + list(a.one_at_a_time):
            if g not in present:
                present.append(g)
    return [g for g in GROUPS if g in present] + [g for g in present if g not in GROUPS]


def _heads(ws, groups, st) -> tuple:
    """Header rows; returns the first Shapley, interaction, one-at-a-time and key columns."""
    for j, text in enumerate(_FIXED, start=1):
        header(ws, _H1, j, None, st)
        header(ws, _H2, j, text, st)
    c_sh = len(_FIXED) + 1
    c_int = c_sh + len(groups)
    c_oat = c_int + 1
    c_key = c_oat + len(groups)
    if groups:
        group_header(ws, _H1, c_sh, c_int - 1, "share of the change by parameter group "
                     "(Shapley value; the shares add up to the change)", st)
        group_header(ws, _H1, c_oat, c_key - 1, "change with only this group changed "
                     "(one at a time)", st)
    header(ws, _H1, c_int, None, st)
    header(ws, _H2, c_int, "interaction (change minus the sum of the one-at-a-time "
                           "changes)", st)
    header(ws, _H1, c_key, None, st)
    header(ws, _H2, c_key, "metric key", st)
    for j, g in enumerate(groups):
        header(ws, _H2, c_sh + j, g, st)
        header(ws, _H2, c_oat + j, g, st)
    return c_sh, c_int, c_oat, c_key


def attribution_sheet(result, st) -> Sheet:
    """The Attribution sheet (see the module doc), one line per variant, profile and
    attributed metric."""
    ws = Sheet("Attribution")
    groups = _groups(result)
    c_sh, c_int, c_oat, c_key = _heads(ws, groups, st)
    row = _H2 + 1
    vorder = {v: i for i, v in enumerate(variant_order(result))}
    porder = {p: i for i, p in enumerate(profile_order(result))}
    items = sorted(enumerate(result.attribution),
                   key=lambda t: (vorder.get(t[1].variant, 1e9), porder.get(t[1].profile, 1e9),
                                  t[0]))
    texts = {1: ["Variant"], 2: ["Profile or duty mix"], 3: ["Metric"]}
    for _, a in items:
        fmt = fmt_for(result, a.metric, signed=True)
        for c, value in enumerate((a.variant, a.profile, label(a.metric),
                                   unit(result, a.metric)), start=1):
            put(ws, row, c, value)
        put(ws, row, 5, a.total, fmt, font=st.bold)
        for j, g in enumerate(groups):
            put(ws, row, c_sh + j, a.parts.get(g), fmt)
            put(ws, row, c_oat + j, a.one_at_a_time.get(g), fmt)
        put(ws, row, c_int, a.interaction, fmt)
        put(ws, row, c_key, a.metric)
        texts[1].append(a.variant)
        texts[2].append(a.profile)
        texts[3].append(label(a.metric))
        row += 1
    if not result.attribution:
        put(ws, row, 1, "No variant changes a parameter group, so there is nothing to "
                        "attribute.", font=st.note)
    ws.freeze_panes = f"D{_H2 + 1}"
    ws.widths.update({1: text_width(texts[1], 10, 30), 2: text_width(texts[2], 12, 28),
                      3: text_width(texts[3], 12, 34), 4: 10, 5: 14, c_int: 16, c_key: 30})
    for j in range(len(groups)):
        ws.widths[c_sh + j] = ws.widths[c_oat + j] = 12
    ws.heights.update({_H2: 60, _H1: 45})
    ws.print_title_rows = f"{_H1}:{_H2}"
    return ws
