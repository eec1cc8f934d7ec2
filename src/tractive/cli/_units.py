"""The --units option and unit-aware table columns shared by the commands."""

from __future__ import annotations

import click

from ..api import key_in_units

#: US header text for the metric header text of a column
_US_HEADERS = {"km": "mi", "Wh/km": "Wh/mi", "L/100km": "mpg", "range km": "range mi",
               "CO2 g/km": "CO2 g/mi", "km/h": "mph", "fuel L": "fuel gal",
               "wall Wh/km": "wall Wh/mi", "Wh/km battery": "Wh/mi battery",
               "Wh/km wall": "Wh/mi wall", "top km/h": "top mph",
               "km/h at rev/speed limit": "mph at rev/speed limit"}


def units_option(func):
    """``--units metric|us`` (default metric)."""
    return click.option("--units", type=click.Choice(["metric", "us"]), default="metric",
                        show_default=True,
                        help="Units of the output: metric, or US (miles, US gallons, mpg, "
                             "mph; exact factors).")(func)


def columns_in_units(cols: list, units: str) -> list:
    """Table columns (key, header, format) with keys and headers in a unit system;
    columns the system does not report are dropped."""
    if units == "metric":
        return cols
    out = []
    for key, header, spec in cols:
        new = key_in_units(key, units)
        if new is None:
            continue
        out.append((new, _US_HEADERS.get(header, header) if new != key else header, spec))
    return out
