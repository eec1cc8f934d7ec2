"""Annual energy, cost and CO2; simple payback; net present value.

All functions are vectorized: arguments may be numpy arrays (a Monte Carlo
vehicle axis).

* Annual energy = consumption per km × annual distance.
* Simple payback [years] = cost / annual saving (no discounting), for a
  positive cost and a positive saving. A modification that costs nothing or
  lowers the purchase price (cost ≤ 0) and does not raise the running cost
  (saving ≥ 0) pays back at once (0 years); one whose saving is not positive
  while it costs money never pays back (no value).
* Net present value of a modification bought at time 0 for ``cost`` and
  saving ``s`` at the end of each year 1 … L, discounted at rate r:

      NPV = −cost + s · a(r, L),   a(r, L) = (1 − (1 + r)^−L) / r,   a(0, L) = L

  a(r, L) is the present value of an ordinary annuity; a fractional service
  life L uses the same formula (continuous in L).

References
----------
.. [1] R. A. Brealey, S. C. Myers, F. Allen, Principles of Corporate
   Finance, ch. 2 (present value of an annuity; payback period).
.. [2] NIST Handbook 135 (1995), Life-Cycle Costing Manual for the Federal
   Energy Management Program, uniform present value factor and simple
   payback.
"""

from __future__ import annotations

import numpy as np


def annuity_factor(rate, years):
    """Present value of 1 per year for ``years`` years at discount ``rate`` [-/year].

    a(r, L) = (1 − (1 + r)^−L) / r, and L where r = 0.
    """
    rate = np.asarray(rate, float)
    years = np.asarray(years, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = -np.expm1(-years * np.log1p(rate)) / rate
    return np.where(rate == 0.0, years, factor)


def simple_payback_years(cost, annual_saving):
    """Simple payback [years] = cost / annual saving.

    0 where cost ≤ 0 and saving ≥ 0 (pays back at once); NaN where the
    modification costs money and saves none, or costs nothing and loses money.

    Parameters
    ----------
    cost : float or array
        Up-front cost [money].
    annual_saving : float or array
        Saving per year [money/year].
    """
    cost = np.asarray(cost, float)
    saving = np.asarray(annual_saving, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(saving > 0, cost / np.where(saving > 0, saving, 1.0), np.nan)
    return np.where((cost <= 0) & (saving >= 0), 0.0, out)


def net_present_value(cost, annual_saving, rate, years):
    """NPV [money] = −cost + annual saving × a(rate, years) (ordinary annuity)."""
    return -np.asarray(cost, float) + np.asarray(annual_saving, float) * annuity_factor(rate,
                                                                                         years)


def annual_amount(per_km, annual_distance_km):
    """Annual quantity = per-km quantity × annual distance [km/year]."""
    return np.asarray(per_km, float) * float(annual_distance_km)
