"""Unit factors used where data enters or leaves tractive.

Inside, tractive works in SI: m/s, N, J, W, kg, m. Conversions happen only at
the edges (input files, reports). Every factor below is an exact definition
unless marked otherwise.

References
----------
.. [1] NIST Special Publication 811 (2008), Guide for the Use of the
   International System of Units, Appendix B.
.. [2] 40 CFR 1066.210 and ISO 2533 (standard gravity).
.. [3] Weights and Measures Act 1985 (UK), Schedule 1 (imperial gallon).
"""

from __future__ import annotations

import numpy as np

#: standard acceleration of gravity [m/s²] (exact, [2])
STANDARD_GRAVITY_MS2 = 9.80665
#: pound (avoirdupois) [kg] (exact, [1])
LB_KG = 0.45359237
#: pound-force [N] = lb × g_n (exact, [1])
LBF_N = LB_KG * STANDARD_GRAVITY_MS2
#: international mile [m] (exact, [1])
MILE_M = 1609.344
#: mile per hour [m/s] (exact, [1])
MPH_MS = MILE_M / 3600.0
#: kilometre per hour [m/s] (exact)
KMH_MS = 1000.0 / 3600.0
#: US liquid gallon [L] (exact, [1])
US_GALLON_L = 3.785411784
#: imperial gallon [L] (exact, [3])
UK_GALLON_L = 4.54609
#: kilowatt-hour [J] (exact)
KWH_J = 3.6e6
#: British thermal unit (International Table) [J] (exact, [1])
BTU_J = 1055.05585262


def kmh_to_ms(speed_kmh):
    """Speed [km/h] → [m/s]."""
    return np.asarray(speed_kmh, dtype=float) / 3.6


def ms_to_kmh(speed_ms):
    """Speed [m/s] → [km/h]."""
    return np.asarray(speed_ms, dtype=float) * 3.6


def mph_to_ms(speed_mph):
    """Speed [mph] → [m/s] (exact factor 0.44704, NIST SP 811)."""
    return np.asarray(speed_mph, dtype=float) * MPH_MS


def ms_to_mph(speed_ms):
    """Speed [m/s] → [mph]."""
    return np.asarray(speed_ms, dtype=float) / MPH_MS


def j_to_kwh(energy_j):
    """Energy [J] → [kWh]."""
    return np.asarray(energy_j, dtype=float) / KWH_J


def kwh_to_j(energy_kwh):
    """Energy [kWh] → [J]."""
    return np.asarray(energy_kwh, dtype=float) * KWH_J
