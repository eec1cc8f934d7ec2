"""Numbers for people: sensible significant digits, signs and intervals.

One rule for every figure a person reads (tables, headlines, messages):
thousands grouped with no decimals, 100-999 with none, 10-99 with one, 1-9.99
with two, below 1 three significant digits. JSON and files keep full
precision; this is for text only.
"""

from __future__ import annotations

import math

#: the character between the bounds of an interval
ELLIPSIS = "…"


def _decimals(x: float) -> int | None:
    """Decimals shown for a magnitude (None: three significant digits)."""
    a = abs(x)
    if a >= 100:
        return 0
    if a >= 10:
        return 1
    if a >= 1:
        return 2
    return None


def number(x, *, signed: bool = False, like=None) -> str:
    """A number with sensible digits ("-" for None, NaN; "∞" for infinity).

    ``like``: format with the decimals of this magnitude instead of the
    number's own (so that an interval's bounds line up with its value).
    """
    if x is None:
        return "-"
    try:
        x = float(x)
    except (TypeError, ValueError):
        return str(x)
    if math.isnan(x):
        return "-"
    if math.isinf(x):
        return ("+" if signed and x > 0 else "") + ("∞" if x > 0 else "-∞")
    sign = "+" if signed and x > 0 else ""
    if x == 0:
        return "0"
    d = _decimals(x if like is None or not math.isfinite(like) or like == 0 else like)
    if like is None and x == round(x) and abs(x) < 1e15:
        d = 0                       # a whole number reads best without decimals
    if d is None:
        text = f"{x:.3g}"
        if "e" in text:
            text = f"{x:.2e}"
    elif d == 0:
        text = f"{x:,.0f}"
    else:
        text = f"{x:.{d}f}"
    if text.lstrip("+-") in ("0", "0.0", "0.00", "0.000"):
        return "0"
    return sign + text


def _largest(*values):
    """Largest finite magnitude among the values (None when there is none)."""
    finite = []
    for v in values:
        try:
            f = abs(float(v))
        except (TypeError, ValueError):
            continue
        if math.isfinite(f):
            finite.append(f)
    return max(finite) if finite else None


def interval(low, high, *, signed: bool = False, like=None) -> str:
    """``(low … high)``; empty when either bound is unknown or both are equal."""
    if low is None or high is None:
        return ""
    try:
        if float(low) == float(high):
            return ""
    except (TypeError, ValueError):
        return ""
    like = _largest(low, high) if like is None else like
    return (f"({number(low, signed=signed, like=like)} {ELLIPSIS} "
            f"{number(high, signed=signed, like=like)})")


def with_interval(value, low=None, high=None, *, signed: bool = False) -> str:
    """``value (low … high)``, or the value alone without a distinct interval; all three
    with the decimals of the largest of them."""
    like = _largest(value, low, high)
    text = number(value, signed=signed, like=like)
    rng = interval(low, high, signed=signed, like=like)
    return f"{text} {rng}" if rng else text
