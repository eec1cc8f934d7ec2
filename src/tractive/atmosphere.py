"""Air density for the aerodynamic term.

Density of dry air from the ideal-gas law, and temperature and pressure of the
International Standard Atmosphere (ISA) troposphere for a given altitude.

References
----------
.. [1] ICAO Doc 7488/3, Manual of the ICAO Standard Atmosphere (1993);
   identical to the U.S. Standard Atmosphere 1976 below 11 km: sea level
   288.15 K, 101 325 Pa, 1.225 kg/m³, lapse rate 6.5 K/km, R = 287.05 J/(kg K).
.. [2] SAE J2263 and 40 CFR 1066.805: road-load reference state 20 °C,
   98.21 kPa.
"""

from __future__ import annotations

import numpy as np

from .units import STANDARD_GRAVITY_MS2

#: specific gas constant of dry air [J/(kg K)] as used by the ISA [1]
R_AIR_J_PER_KG_K = 287.05
#: ISA sea-level temperature [K] [1]
ISA_SEA_LEVEL_TEMPERATURE_K = 288.15
#: ISA sea-level pressure [Pa] [1]
ISA_SEA_LEVEL_PRESSURE_PA = 101325.0
#: ISA tropospheric lapse rate [K/m] [1]
ISA_LAPSE_RATE_K_PER_M = 0.0065
#: upper edge of the ISA troposphere [m] [1]
ISA_TROPOPAUSE_M = 11000.0
#: 0 °C in kelvin
ZERO_CELSIUS_K = 273.15
#: SAE J2263 / EPA road-load reference temperature [°C] and pressure [Pa] [2]
J2263_REFERENCE_TEMPERATURE_C = 20.0
J2263_REFERENCE_PRESSURE_PA = 98210.0


def isa_temperature_k(altitude_m):
    """ISA air temperature [K] at geopotential altitude ``altitude_m`` [m] (troposphere) [1]."""
    return ISA_SEA_LEVEL_TEMPERATURE_K - ISA_LAPSE_RATE_K_PER_M * np.asarray(altitude_m, float)


def isa_pressure_pa(altitude_m):
    """ISA static pressure [Pa] at altitude [m] (troposphere, barometric formula) [1].

    p = p0 (T/T0)^(g0 / (R L))
    """
    t_k = isa_temperature_k(altitude_m)
    exponent = STANDARD_GRAVITY_MS2 / (R_AIR_J_PER_KG_K * ISA_LAPSE_RATE_K_PER_M)
    return ISA_SEA_LEVEL_PRESSURE_PA * (t_k / ISA_SEA_LEVEL_TEMPERATURE_K) ** exponent


def air_density_kg_m3(temperature_c, pressure_pa):
    """Dry-air density [kg/m³] from temperature [°C] and pressure [Pa]: ρ = p / (R T) [1]."""
    return np.asarray(pressure_pa, float) / (
        R_AIR_J_PER_KG_K * (np.asarray(temperature_c, float) + ZERO_CELSIUS_K))


def ambient_air(*, temperature_c=None, pressure_pa=None, altitude_m=None):
    """Resolve ambient air from any subset of temperature, pressure and altitude.

    Missing temperature or pressure is taken from the ISA at ``altitude_m``
    (sea level when no altitude is given).

    Returns
    -------
    dict with ``temperature_c``, ``pressure_pa``, ``density_kg_m3`` and
    ``basis`` (a sentence saying where each value came from).
    """
    alt = 0.0 if altitude_m is None else float(altitude_m)
    parts = []
    if temperature_c is None:
        temperature_c = float(isa_temperature_k(alt)) - ZERO_CELSIUS_K
        parts.append(f"temperature from ISA at {alt:g} m")
    else:
        parts.append("temperature as given")
    if pressure_pa is None:
        pressure_pa = float(isa_pressure_pa(alt))
        parts.append(f"pressure from ISA at {alt:g} m")
    else:
        parts.append("pressure as given")
    density = float(air_density_kg_m3(temperature_c, pressure_pa))
    return {"temperature_c": float(temperature_c), "pressure_pa": float(pressure_pa),
            "density_kg_m3": density, "basis": "; ".join(parts) + "; dry air, ideal gas"}
