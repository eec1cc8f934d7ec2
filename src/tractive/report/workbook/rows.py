"""What the sheets show and in which order: metric facts from the registry
(:mod:`tractive.metrics`) and the order of profiles, variants and rows."""

from __future__ import annotations

from ... import metrics as registry
from .cells import number_format


def label(key: str) -> str:
    """Human label of a metric key (the key with spaces when not in the registry)."""
    m = registry.lookup(key)
    return m.label if m else key.replace("_", " ")


def unit(result, key: str) -> str:
    """Unit text of a metric key in a result; money is the result's currency."""
    m = registry.lookup(key)
    return m.unit_text(result.currency) if m else ""


def is_money(key: str) -> bool:
    """True for a metric in the study currency."""
    m = registry.lookup(key)
    return bool(m and m.is_money)


def better(key: str) -> str:
    """``"lower"``, ``"higher"`` or ``""``: which direction of a metric is better."""
    m = registry.lookup(key)
    return m.better if m else ""


def has_change(key: str) -> bool:
    """False for economics and the modification's cost: compared with the baseline
    already (or a price), so no change against the baseline is shown."""
    m = registry.lookup(key)
    return not (m and (m.kind == registry.ECONOMICS or
                       (m.is_money and m.kind == registry.INDEPENDENT)))


def fmt_for(result, key: str, *, signed=False) -> str:
    """Number format of a metric (its unit, money decimals for money)."""
    return number_format(unit(result, key), money=is_money(key), signed=signed)


def present_keys(result) -> list:
    """Metric keys present in any row, in registry order (unknown keys last)."""
    seen = set()
    for r in result.rows:
        seen.update(r.metrics)
    return registry.ordered_keys(seen)


def headline_keys(result) -> list:
    """Headline keys of the result's unit system present in any row, in registry order."""
    present = set(present_keys(result))
    return [k for k in registry.headline_keys(result.units) if k in present]


def economics_keys(result) -> list:
    """Keys without a change against the baseline (see :func:`has_change`) present in
    any row, in registry order."""
    return [k for k in present_keys(result) if registry.lookup(k) and not has_change(k)]


def change_font(key, change, distinguishable, st):
    """Green when the change is an improvement clear of zero, red when worse, grey when
    the interval includes zero."""
    if change is None:
        return None
    if distinguishable is False:
        return st.unclear
    direction = better(key)
    if not direction or change == 0:
        return None
    good = change < 0 if direction == "lower" else change > 0
    return st.better if good else st.worse


def profile_order(result) -> list:
    """Profile and mix names in study order (names only seen in rows last)."""
    names = [p.name for p in result.profiles]
    for r in result.rows:
        if r.profile not in names:
            names.append(r.profile)
    return names


def variant_order(result) -> list:
    """Variant names in study order (names only seen in rows last)."""
    names = [v.name for v in result.variants]
    for r in result.rows:
        if r.variant not in names:
            names.append(r.variant)
    return names


def rows_by_profile(result) -> list:
    """(profile, [rows: baseline first, then variants in study order])."""
    vorder = {v: i for i, v in enumerate(variant_order(result))}
    out = []
    for p in profile_order(result):
        rows = [r for r in result.rows if r.profile == p]
        rows.sort(key=lambda r: (not r.is_baseline, vorder.get(r.variant, len(vorder))))
        if rows:
            out.append((p, rows))
    return out


def confidence(result) -> float:
    """Confidence of the intervals [%] (95 when the result does not say)."""
    try:
        return float(result.uncertainty.get("confidence_pct", 95.0))
    except (TypeError, ValueError):
        return 95.0
