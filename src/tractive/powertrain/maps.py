"""Tables over speed and torque: bilinear interpolation and their YAML form.

A map is a rectangular table with one row per torque value and one column per
speed value (as printed with torque on the vertical axis). Inside the grid the
value is interpolated bilinearly; outside it the nearest edge value is used
(the grid is clamped), which :func:`bilinear` documents for every caller.

References
----------
.. [1] W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge 2007,
   §3.6 "Interpolation in two or more dimensions" (bilinear interpolation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..spec import Section


def bilinear(x_grid, y_grid, table, x, y):
    """Bilinear interpolation on a rectangular grid, clamped at the edges [1].

    Parameters
    ----------
    x_grid : (nx,) array
        Strictly increasing column coordinates (e.g. speed [rpm]).
    y_grid : (ny,) array
        Strictly increasing row coordinates (e.g. torque [N m]).
    table : (ny, nx) array
        Values; ``table[j, i]`` belongs to ``(x_grid[i], y_grid[j])``.
    x, y : arrays
        Query points (broadcast together); values outside the grid are moved
        to its nearest edge.

    Returns
    -------
    array
        Interpolated values with the broadcast shape of ``x`` and ``y``.
    """
    xg = np.asarray(x_grid, float)
    yg = np.asarray(y_grid, float)
    z = np.asarray(table, float)
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    xc = np.clip(x, xg[0], xg[-1])
    yc = np.clip(y, yg[0], yg[-1])
    i = np.clip(np.searchsorted(xg, xc, side="right") - 1, 0, len(xg) - 2)
    j = np.clip(np.searchsorted(yg, yc, side="right") - 1, 0, len(yg) - 2)
    tx = (xc - xg[i]) / (xg[i + 1] - xg[i])
    ty = (yc - yg[j]) / (yg[j + 1] - yg[j])
    z00 = z[j, i]
    z01 = z[j, i + 1]
    z10 = z[j + 1, i]
    z11 = z[j + 1, i + 1]
    return ((1 - ty) * ((1 - tx) * z00 + tx * z01) + ty * ((1 - tx) * z10 + tx * z11))


@dataclass(frozen=True)
class SpeedTorqueMap:
    """A table over speed [rpm] (columns) and torque [N m] (rows)."""

    speed_rpm: np.ndarray
    torque_nm: np.ndarray
    values: np.ndarray
    value_key: str

    def __call__(self, speed_rpm, torque_nm):
        """Bilinear value at ``speed_rpm`` [rpm] and ``torque_nm`` [N m] (clamped)."""
        return bilinear(self.speed_rpm, self.torque_nm, self.values, speed_rpm, torque_nm)

    def to_dict(self) -> dict:
        return {"speed_rpm": self.speed_rpm.tolist(), "torque_nm": self.torque_nm.tolist(),
                self.value_key: self.values.tolist()}


def parse_speed_torque_map(sec: Section, value_key: str, *, unit: str, value_min: float,
                           value_max: float | None, value_min_inclusive: bool = True,
                           torque_min: float | None = None) -> SpeedTorqueMap:
    """Read ``{speed_rpm: [...], torque_nm: [...], <value_key>: [[...], ...]}``.

    ``<value_key>`` has one row per torque value, each with one value per speed.
    """
    speed = sec.numbers("speed_rpm", min_length=2, min=0.0, increasing=True, unit="rpm")
    torque = sec.numbers("torque_nm", min_length=2, min=torque_min, increasing=True,
                         unit="N m")
    values = sec.table(value_key, unit=unit)
    if values.shape != (len(torque), len(speed)):
        raise sec.error(f"must have {len(torque)} rows (one per torque_nm value) of "
                        f"{len(speed)} values (one per speed_rpm value), got "
                        f"{values.shape[0]} rows of {values.shape[1]}", value_key)
    bad_low = values < value_min if value_min_inclusive else values <= value_min
    if np.any(bad_low) or (value_max is not None and np.any(values > value_max)):
        j, i = np.argwhere(bad_low | ((values > value_max) if value_max is not None
                                      else np.zeros_like(bad_low)))[0]
        rel = "at least" if value_min_inclusive else "greater than"
        upper = f" and at most {value_max:g}" if value_max is not None else ""
        raise sec.error(f"values must be {rel} {value_min:g}{upper} {unit}; row {j + 1} "
                        f"value {i + 1} is {values[j, i]:g}", value_key)
    sec.finish()
    return SpeedTorqueMap(speed, torque, values, value_key)
