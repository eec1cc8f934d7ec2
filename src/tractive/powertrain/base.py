"""The interface every powertrain model implements, and the values a study may change.

A powertrain turns the wheel demand of a profile into what it costs at the
energy store (battery energy, fuel). The study engine, the ``energy`` and
``range-curve`` commands and the mixes call every model through this one
interface, without asking which model it is.

Each parsed model (powertrain, performance data) declares in a class-level
table ``CHANGEABLE`` which of its values a study may change, keyed by the
vehicle-file key (``battery_usable_kwh``, ``regen.efficiency``): where the
value lives (an attribute path), its unit and the factor from the key's unit
to SI, the range the parser accepts, and, for a value that may carry a
standard uncertainty, the physical limits a drawn value is clipped to. A
change is then a :func:`dataclasses.replace` of the parsed object
(:func:`with_value`), checked by :func:`check_value` and the model's own
``check_changed`` for rules between values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, Callable, ClassVar, Protocol, runtime_checkable

import numpy as np

from ..errors import InputError
from ..spec import check_number


@dataclass(frozen=True)
class ParamField:
    """One value of a parsed model that a study may change.

    Attributes
    ----------
    path : tuple of str
        Attribute path from the model object to the value (``("regen", "efficiency")``).
    unit : str
        Unit of the key (as in the vehicle file), for messages.
    scale, divisor : float
        Model value [SI] = key value × scale / divisor (each applied only when not 1).
    min, max, min_inclusive :
        Range the vehicle-file parser accepts for the key [key unit].
    uncertain : (low, high) or None
        Physical limits a Monte Carlo draw of the value is clipped to [key unit];
        None when the value cannot carry a standard uncertainty.
    optional : bool
        The value may be set where the vehicle file does not give it (None).
    available : callable(obj) → bool, optional
        Whether the key exists for this object (a model form that has it).
    to_model, from_model : callable, optional
        Conversions (obj, value) when not a plain factor (e.g. by fuel density).
    setter : callable(obj, value [key unit]) → obj, optional
        Replaces the generic replace along ``path`` (values that depend on each other).
    """

    path: tuple
    unit: str = ""
    scale: float = 1.0
    divisor: float = 1.0
    min: float | None = None
    max: float | None = None
    min_inclusive: bool = True
    uncertain: tuple | None = None
    optional: bool = False
    available: Callable | None = None
    to_model: Callable | None = None
    from_model: Callable | None = None
    setter: Callable | None = None

    def model_value(self, obj, x):
        """Key value (float or (N,) array) [key unit] → model value [SI]."""
        if self.to_model is not None:
            return self.to_model(obj, x)
        if self.scale != 1.0:
            x = x * self.scale
        if self.divisor != 1.0:
            x = x / self.divisor
        return x


def changeable(obj) -> dict:
    """The ``CHANGEABLE`` table of a parsed model ({} for none)."""
    return getattr(type(obj), "CHANGEABLE", {}) if obj is not None else {}


def field_of(obj, key: str) -> ParamField | None:
    """The field of ``key`` if this object has it (its form included), else None."""
    fld = changeable(obj).get(key)
    if fld is None or (fld.available is not None and not fld.available(obj)):
        return None
    return fld


def current_value(obj, key: str):
    """The value of ``key`` [key unit], or None where the vehicle file does not give it."""
    fld = changeable(obj)[key]
    v = obj
    for part in fld.path:
        v = getattr(v, part)
        if v is None:
            return None
    if fld.from_model is not None:
        return fld.from_model(obj, v)
    if isinstance(v, float) and math.isinf(v):
        return None                      # "no limit" stands for a key not given
    if fld.divisor != 1.0:
        v = v * fld.divisor
    if fld.scale != 1.0:
        v = v / fld.scale
    return v


def with_value(obj, key: str, x):
    """``obj`` with the value of ``key`` replaced by ``x`` [key unit] (float or (N,) array)."""
    fld = changeable(obj)[key]
    if fld.setter is not None:
        return fld.setter(obj, x)
    return _replace_path(obj, fld.path, fld.model_value(obj, x))


def _replace_path(obj, path, value):
    """dataclasses.replace along an attribute path."""
    if len(path) == 1:
        return replace(obj, **{path[0]: value})
    inner = getattr(obj, path[0])
    return replace(obj, **{path[0]: _replace_path(inner, path[1:], value)})


def check_value(obj, key: str, x, *, field: str) -> None:
    """Raise :class:`InputError` (at ``field``) when ``x`` is outside the key's range."""
    fld = changeable(obj)[key]
    check_number(float(np.asarray(x).reshape(-1)[0]),
                 where=lambda msg: InputError(msg, field=field), min=fld.min, max=fld.max,
                 min_inclusive=fld.min_inclusive, unit=fld.unit)


@runtime_checkable
class Powertrain(Protocol):
    """What a powertrain model offers (electric and combustion alike).

    Attributes
    ----------
    kind : str
        ``"electric"`` or ``"combustion"``.
    """

    kind: ClassVar[str]

    def consume(self, vehicle, demand, profile=None, *,
                ambient_temperature_c: float | None = None) -> Any:
        """Energy-store use on one profile.

        Parameters
        ----------
        vehicle : Vehicle
            The vehicle the demand belongs to.
        demand : WheelDemand
            Wheel force per interval, shape (T-1,) or (N, T-1).
        profile : Profile, optional
            Only its name is used.
        ambient_temperature_c : float, optional
            Ambient temperature [°C] for temperature-dependent loads; a model
            without such a load ignores it.

        Returns
        -------
        A result with ``to_dict()`` (JSON-ready metrics).
        """
        ...

    def steady(self, vehicle, speed_ms, *, ambient_temperature_c: float | None = None) -> dict:
        """Consumption at constant speeds [m/s] on a level road (dict of (S,) arrays)."""
        ...

    def to_dict(self) -> dict:
        """The model's parameters, JSON-ready."""
        ...


__all__ = ["Powertrain", "ParamField", "changeable", "field_of", "current_value",
           "with_value", "check_value"]
