"""Powertrains: what the wheel demand costs in battery energy or fuel.

A vehicle file's ``powertrain:`` block chooses a model with ``kind``:

* ``electric`` — :class:`~tractive.powertrain.electric.ElectricPowertrain`
  (battery, drive efficiency or motor map, regenerative braking, auxiliaries,
  charging);
* ``combustion`` — :class:`~tractive.powertrain.combustion.CombustionPowertrain`
  (fuel table, Willans line or BSFC map, gears and shift rule with a lowest
  pulling speed, accessory load, idle, fuel cut-off).

Both implement :class:`~tractive.powertrain.base.Powertrain`:
``consume(vehicle, demand, profile, *, ambient_temperature_c=None)``
returning a result with ``to_dict()``, ``steady(vehicle, speed_ms, *,
ambient_temperature_c=None)`` for constant-speed consumption, and
``to_dict()``. :func:`range_curve` sweeps constant speeds and
:func:`mix_results` combines profiles by distance share.
"""

from __future__ import annotations

from ..spec import Section
from .base import Powertrain
from .combustion import (BsfcEngine, CombustionPowertrain, CombustionResult, WillansEngine,
                         parse_combustion)
from .curve import RangeCurve, range_curve
from .drive import FullLoadCurve, Gearing, MotorEnvelope
from .electric import ElectricPowertrain, ElectricResult, Regeneration, parse_electric
from .fuels import FUELS, Fuel, get_fuel
from .mix import MixResult, mix_results

KINDS = ("electric", "combustion")


def parse_powertrain(sec: Section):
    """Read a ``powertrain`` block into an electric or combustion powertrain.

    Raises
    ------
    InputError
        Naming the file, field and line of the first mistake.
    """
    kind = sec.string("kind", choices=KINDS)
    if kind == "electric":
        return parse_electric(sec)
    return parse_combustion(sec)


__all__ = ["Powertrain", "parse_powertrain", "ElectricPowertrain", "ElectricResult", "Regeneration",
           "CombustionPowertrain", "CombustionResult", "WillansEngine", "BsfcEngine",
           "FUELS", "Fuel", "get_fuel", "Gearing", "FullLoadCurve", "MotorEnvelope",
           "RangeCurve", "range_curve", "MixResult", "mix_results", "KINDS"]
