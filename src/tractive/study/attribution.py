"""Attribution of a change to parameter groups: Shapley values and one-at-a-time changes.

A variant differs from the baseline in a set G of parameter groups (aero,
rolling, mass, downforce, powertrain). For a metric f evaluated with the
groups of a subset S ⊆ G taken from the variant and the rest from the
baseline, the Shapley value of group i is

    φ_i = Σ_{S ⊆ G∖{i}} |S|! (n − |S| − 1)! / n! · [f(S ∪ {i}) − f(S)],   n = |G|

Shapley's efficiency property makes the parts add up exactly to the total
change, Σ φ_i = f(G) − f(∅), however strongly the groups interact (mass and
rolling resistance multiply; downforce acts through Crr). Every subset is
evaluated exactly (2ⁿ ≤ 32 evaluations), no sampling.

The one-at-a-time change of group i is f({i}) − f(∅); their sum differs from
the total by the interaction, reported separately.

References
----------
.. [1] L. S. Shapley (1953), "A value for n-person games", in Contributions
   to the Theory of Games II, Annals of Mathematics Studies 28, 307-317.
.. [2] A. F. Shorrocks (2013), "Decomposition procedures for distributional
   analysis: a unified framework based on the Shapley value", Journal of
   Economic Inequality 11, 99-126.
.. [3] A. Saltelli et al. (2008), Global Sensitivity Analysis: The Primer,
   Wiley, ch. 1 (one-at-a-time sensitivities and their limits).
"""

from __future__ import annotations

import itertools
import math

import numpy as np


def subsets(groups) -> list:
    """Every subset of ``groups`` as a frozenset, the empty set first, the full set last."""
    groups = tuple(groups)
    out = []
    for r in range(len(groups) + 1):
        out.extend(frozenset(c) for c in itertools.combinations(groups, r))
    return out


def shapley_values(groups, value) -> dict:
    """Exact Shapley values of ``groups`` for a set function.

    Parameters
    ----------
    groups : sequence of str
        The players (parameter groups), at most about 10.
    value : mapping or callable
        f(S) for every frozenset S ⊆ groups (a dict keyed by frozenset, or a
        function); values may be numbers or numpy arrays.

    Returns
    -------
    dict group → φ_group; Σ φ = f(all) − f(∅).
    """
    groups = tuple(groups)
    f = value if callable(value) else value.__getitem__
    n = len(groups)
    out = {}
    for g in groups:
        others = [h for h in groups if h != g]
        total = 0.0
        for r in range(len(others) + 1):
            weight = math.factorial(r) * math.factorial(n - r - 1) / math.factorial(n)
            for combo in itertools.combinations(others, r):
                s = frozenset(combo)
                total = total + weight * (np.asarray(f(s | {g}), float) - np.asarray(f(s), float))
        out[g] = total
    return out


def one_at_a_time(groups, value) -> dict:
    """Change from each group alone: f({g}) − f(∅)."""
    f = value if callable(value) else value.__getitem__
    empty = np.asarray(f(frozenset()), float)
    return {g: np.asarray(f(frozenset({g})), float) - empty for g in groups}
