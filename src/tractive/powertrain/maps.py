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
    zf = np.ascontiguousarray(table, dtype=float).ravel()
    nx = len(xg)
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    shape = x.shape
    x, y = x.reshape(-1), y.reshape(-1)
    xc = np.minimum(np.maximum(x, xg[0]), xg[-1])
    yc = np.minimum(np.maximum(y, yg[0]), yg[-1])
    # cell indices: 0 ≤ i ≤ nx-2, 0 ≤ j ≤ ny-2 (the clamped value never lies below the grid)
    i = _cell(xg, xc)
    j = _cell(yg, yc)
    tx = xc - xg.take(i)
    tx /= np.diff(xg).take(i)
    ty = yc - yg.take(j)
    ty /= np.diff(yg).take(j)
    k = j * nx
    k += i
    lower = zf.take(k)                   # z[j, i]
    lower += tx * (zf.take(k + 1) - lower)
    k += nx
    upper = zf.take(k)                   # z[j + 1, i]
    upper += tx * (zf.take(k + 1) - upper)
    upper -= lower
    upper *= ty
    upper += lower
    return upper.reshape(shape)


def _cell(grid, values):
    """Index k of the cell grid[k] ≤ value < grid[k+1] (0 ≤ k ≤ len(grid) - 2) for
    values already clamped to the grid."""
    if len(grid) <= 32:
        # a few vector comparisons are faster than a binary search for short grids
        k = np.zeros(values.shape, dtype=np.intp)
        for g in grid[1:-1]:
            k += values >= g
        return k
    k = np.searchsorted(grid, values, side="right")
    k -= 1
    np.minimum(k, len(grid) - 2, out=k)
    return k


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
