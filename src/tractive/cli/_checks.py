"""Checked numeric options: finite numbers within a physical range.

``click.FloatRange`` lets NaN through (every comparison with NaN is false), so
the commands use :class:`Number` instead: it refuses text, NaN, ±inf and
values outside ``[low, high]`` with click's usual one-line "Invalid value for
'--option'" message (exit status 2).
"""

from __future__ import annotations

import math

import click


def _g(x: float) -> str:
    return f"{x:g}"


class Number(click.ParamType):
    """A finite float within ``[low, high]`` (either bound may be open or absent).

    Parameters
    ----------
    low, high : float, optional
        Bounds, in the option's unit.
    low_open, high_open : bool
        Exclude the bound itself.
    unit : str
        Unit shown in messages and help (``kg``, ``km/h``).
    """

    name = "number"

    def __init__(self, low: float | None = None, high: float | None = None, *,
                 low_open: bool = False, high_open: bool = False, unit: str = ""):
        self.low, self.high = low, high
        self.low_open, self.high_open = low_open, high_open
        self.unit = unit

    def describe(self) -> str:
        """The accepted range in words, e.g. "above 0 and at most 100000 kg"."""
        parts = []
        if self.low is not None:
            parts.append(f"{'above' if self.low_open else 'at least'} {_g(self.low)}")
        if self.high is not None:
            parts.append(f"{'below' if self.high_open else 'at most'} {_g(self.high)}")
        text = " and ".join(parts) if parts else "any finite number"
        return f"{text} {self.unit}".rstrip()

    def convert(self, value, param, ctx):
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            x = float(value)
        else:
            try:
                x = float(str(value).strip())
            except ValueError:
                self.fail(f"must be a number, got '{value}'", param, ctx)
        if not math.isfinite(x):
            self.fail(f"must be a finite number ({self.describe()}), got {value}", param, ctx)
        too_low = self.low is not None and (x <= self.low if self.low_open else x < self.low)
        too_high = self.high is not None and (x >= self.high if self.high_open
                                              else x > self.high)
        if too_low or too_high:
            self.fail(f"must be {self.describe()}, got {_g(x)}", param, ctx)
        return x


def ranged(text: str, kind: Number) -> str:
    """Help text with the accepted range appended: "Vehicle mass [kg]; 1 to ..."."""
    return f"{text} Accepted: {kind.describe()}."
