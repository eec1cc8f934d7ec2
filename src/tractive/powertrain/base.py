"""The interface every powertrain model implements.

A powertrain turns the wheel demand of a profile into what it costs at the
energy store (battery energy, fuel). The study engine, the ``energy`` and
``range-curve`` commands and the mixes call every model through this one
interface, without asking which model it is.
"""

from __future__ import annotations

from typing import Any, ClassVar, Protocol, runtime_checkable


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


__all__ = ["Powertrain"]
