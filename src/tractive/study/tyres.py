"""EU tyre-label rolling-resistance classes and the Crr they stand for.

``tyre_label: C2/B`` sets Crr from an EU label class of Regulation (EU)
2020/740 (labels since May 2021, classes A–E) or, written ``C2/B 1222/2009``,
of the older Regulation (EC) No 1222/2009 (classes A–G; D only for C3); a
label without a regulation is read under 2020/740. The class is known, the
value inside it is not: the nominal Crr is the class middle, and a Monte Carlo
draw is uniform over the class (a rectangular distribution, JCGM 101:2008
6.4.2), whose standard deviation is class width / √12 (JCGM 100:2008, 4.3.7).
The open-ended best and worst classes are taken one neighbouring-class width
wide (an assumption of this tool).

References
----------
.. [1] Regulation (EC) No 1222/2009 on the labelling of tyres, Annex I Part A.
.. [2] Regulation (EU) 2020/740 on the labelling of tyres, Annex I Part A.
.. [3] JCGM 100:2008, Evaluation of measurement data - Guide to the
   expression of uncertainty in measurement, 4.3.7.
.. [4] JCGM 101:2008, Supplement 1 to the GUM - Propagation of
   distributions using a Monte Carlo method, 6.4.2 (rectangular
   distribution).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

# ---------------------------------------------------------------------------
# tyre label classes [kg/t]
# ---------------------------------------------------------------------------

#: regulation key → its name; labels since May 2021 follow (EU) 2020/740
TYRE_REGULATIONS = {"2020/740": "Regulation (EU) 2020/740",
                    "1222/2009": "Regulation (EC) No 1222/2009"}
#: regulation of a label whose regulation is not written (the one in force for new labels)
DEFAULT_TYRE_REGULATION = "2020/740"

#: upper class limits (RRC in kg/t = N/kN = 1000 × Crr), continuous form, per regulation
#: and tyre category; the last class of each category is open-ended (None).
#: (EC) 1222/2009 Annex I Part A (read in the regulation); (EU) 2020/740 Annex I Part A
#: keeps A-E: the empty D of C1/C2 is dropped, the old E becomes D and the old F/G (C3:
#: E/F) merge into E (structure confirmed, boundaries from memory)
TYRE_CLASS_UPPER_KG_T = {
    "1222/2009": {
        "C1": {"A": 6.5, "B": 7.7, "C": 9.0, "E": 10.5, "F": 12.0, "G": None},
        "C2": {"A": 5.5, "B": 6.7, "C": 8.0, "E": 9.2, "F": 10.5, "G": None},
        "C3": {"A": 4.0, "B": 5.0, "C": 6.0, "D": 7.0, "E": 8.0, "F": None},
    },
    "2020/740": {
        "C1": {"A": 6.5, "B": 7.7, "C": 9.0, "D": 10.5, "E": None},
        "C2": {"A": 5.5, "B": 6.7, "C": 8.0, "D": 9.2, "E": None},
        "C3": {"A": 4.0, "B": 5.0, "C": 6.0, "D": 7.0, "E": None},
    },
}

_LABEL_RE = re.compile(
    r"^\s*(C[123])\s*[/:\- ]\s*([A-Za-z])"
    r"(?:\s*[,;]?\s*\(?\s*(?:(?:regulation|reg\.?)\s*)?(?:\(?(?:EU|EC)\)?\s*)?"
    r"(?:No\.?\s*)?([0-9]+\s*/\s*[0-9]+)\s*\)?)?\s*$", re.IGNORECASE)


@dataclass(frozen=True)
class TyreLabel:
    """An EU tyre-label rolling-resistance class.

    Attributes
    ----------
    category : str
        ``C1`` (car), ``C2`` (van) or ``C3`` (truck) tyres.
    cls : str
        Class letter.
    regulation : str
        ``"2020/740"`` or ``"1222/2009"`` (a key of :data:`TYRE_REGULATIONS`).
    stated : bool
        True when the regulation was written, False when it is the default.
    """

    category: str
    cls: str
    regulation: str = DEFAULT_TYRE_REGULATION
    stated: bool = True

    def interval_kg_t(self) -> tuple:
        """Class interval (low, high] [kg/t] (see :func:`tyre_class_interval_kg_t`)."""
        return tyre_class_interval_kg_t(self.category, self.cls, self.regulation)

    def text(self) -> str:
        return f"{self.category}/{self.cls} ({TYRE_REGULATIONS[self.regulation]})"


def _check_label(category: str, cls: str, regulation: str, stated: bool) -> TyreLabel:
    category = category.upper()
    cls = cls.upper()
    regulation = re.sub(r"\s+", "", regulation)
    if regulation not in TYRE_CLASS_UPPER_KG_T:
        raise ValueError(f"unknown tyre-label regulation '{regulation}'; use 2020/740 "
                         f"(labels since May 2021) or 1222/2009 (older labels)")
    if category not in TYRE_CLASS_UPPER_KG_T[regulation]:
        raise ValueError(f"unknown tyre category '{category}'; use C1 (car), C2 (van) or "
                         f"C3 (truck)")
    table = TYRE_CLASS_UPPER_KG_T[regulation][category]
    if cls not in table:
        other = [r for r, t in TYRE_CLASS_UPPER_KG_T.items()
                 if r != regulation and cls in t[category]]
        hint = ""
        if other:
            hint = (f"; class {cls} exists on labels of {TYRE_REGULATIONS[other[0]]}: "
                    f"write {category}/{cls} {other[0]}")
        raise ValueError(f"class {cls} does not exist for {category} tyres under "
                         f"{TYRE_REGULATIONS[regulation]} (classes {', '.join(table)})"
                         f"{hint}")
    return TyreLabel(category, cls, regulation, stated)


def parse_tyre_label(value) -> TyreLabel:
    """A :class:`TyreLabel` from ``"C2/B"``, ``"C2/B 1222/2009"`` or a mapping.

    The mapping form is ``{category: C2, class: B, regulation: "2020/740"}``
    (``regulation`` optional). Without a regulation the label is read under
    :data:`DEFAULT_TYRE_REGULATION`.

    Raises
    ------
    ValueError
        With a message naming what is wrong (unknown category or regulation, a
        class that the regulation does not have).
    """
    if isinstance(value, dict):
        unknown = set(value) - {"category", "class", "regulation"}
        if unknown:
            raise ValueError(f"unknown key '{sorted(unknown)[0]}' in the tyre label; "
                             f"give category, class and (optional) regulation")
        if "category" not in value or "class" not in value:
            raise ValueError("give the tyre category and class, like "
                             "{category: C2, class: B, regulation: \"2020/740\"}")
        reg = value.get("regulation")
        stated = reg is not None
        return _check_label(str(value["category"]), str(value["class"]),
                            str(reg) if stated else DEFAULT_TYRE_REGULATION, stated)
    m = _LABEL_RE.match(str(value))
    if not m:
        raise ValueError("write the tyre category and class, like C1/B or C2/A, optionally "
                         "with the regulation: C2/B 2020/740 (labels since May 2021) or "
                         "C2/B 1222/2009 (older labels)")
    reg = m.group(3)
    return _check_label(m.group(1), m.group(2), reg if reg else DEFAULT_TYRE_REGULATION,
                        reg is not None)


def tyre_class_interval_kg_t(category: str, cls: str,
                             regulation: str = DEFAULT_TYRE_REGULATION) -> tuple:
    """Interval (low, high] of the rolling-resistance coefficient [kg/t] of a label class.

    Parameters
    ----------
    category : str
        ``C1``, ``C2`` or ``C3``.
    cls : str
        Class letter of the regulation.
    regulation : str
        ``"2020/740"`` (Regulation (EU) 2020/740, Annex I Part A; boundaries from
        memory) or ``"1222/2009"`` (Regulation (EC) No 1222/2009, Annex I Part A).

    The best class is taken to start one width of the next class below its
    limit, the worst to end one width of the class before above its lower
    limit (an assumption of this tool: both are open-ended in the regulations).
    """
    table = TYRE_CLASS_UPPER_KG_T[regulation][category]
    names = list(table)
    i = names.index(cls)
    if i == 0:
        upper = table[names[0]]
        width = table[names[1]] - upper
        return upper - width, upper
    lower = table[names[i - 1]]
    upper = table[cls]
    if upper is None:
        prev_lower = table[names[i - 2]] if i >= 2 else lower
        width = lower - prev_lower
        return lower, lower + width
    return lower, upper


def tyre_label_crr(label, regulation: str | None = None) -> tuple:
    """Crr [-] and its standard uncertainty [-] of a label class.

    Parameters
    ----------
    label : str, mapping or TyreLabel
        ``"C2/B"``, ``"C2/B 1222/2009"``, a mapping (see :func:`parse_tyre_label`)
        or a parsed label.
    regulation : str, optional
        Overrides the label's regulation.

    Returns the class middle and the standard deviation of the rectangular
    distribution over the class, width / √12 (JCGM 100:2008 4.3.7), both
    converted from kg/t by /1000.
    """
    lab = label if isinstance(label, TyreLabel) else parse_tyre_label(label)
    if regulation is not None:
        lab = _check_label(lab.category, lab.cls, regulation, True)
    lo, hi = lab.interval_kg_t()
    return (lo + hi) / 2000.0, (hi - lo) / 1000.0 / math.sqrt(12.0)


def tyre_label_note(label: TyreLabel) -> str | None:
    """A warning when an unstated regulation changes what the class letter means."""
    if label.stated:
        return None
    here = label.interval_kg_t()
    for reg, table in TYRE_CLASS_UPPER_KG_T.items():
        if reg == label.regulation or label.cls not in table[label.category]:
            continue
        there = tyre_class_interval_kg_t(label.category, label.cls, reg)
        if there != here:
            return (f"tyre label {label.category}/{label.cls} has no regulation written and "
                    f"is read under {TYRE_REGULATIONS[label.regulation]} "
                    f"({_interval_text(label.category, label.cls, label.regulation)} kg/t); "
                    f"under {TYRE_REGULATIONS[reg]} the same letter means "
                    f"{_interval_text(label.category, label.cls, reg)} kg/t: write "
                    f"{label.category}/{label.cls} {label.regulation} or "
                    f"{label.category}/{label.cls} {reg}")
    return None


def _interval_text(category, cls, regulation) -> str:
    table = TYRE_CLASS_UPPER_KG_T[regulation][category]
    names = list(table)
    i = names.index(cls)
    if i == 0:
        return f"≤ {table[cls]:.1f}"
    lower = table[names[i - 1]] + 0.1       # the regulation's one-decimal steps
    return f"≥ {lower:.1f}" if table[cls] is None else f"{lower:.1f}–{table[cls]:.1f}"


__all__ = ["TYRE_REGULATIONS", "DEFAULT_TYRE_REGULATION", "TYRE_CLASS_UPPER_KG_T", "TyreLabel",
           "parse_tyre_label", "tyre_class_interval_kg_t", "tyre_label_crr", "tyre_label_note"]
