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
.. [3] UN GTR No. 15, Annex 4: road-load reference state 20 °C (293 K in its
   K2 factor), 100 kPa; rolling-resistance temperature factor
   K0 = 8.6·10⁻³ per K (values from memory of the regulation).
"""

from __future__ import annotations

import numpy as np

from dataclasses import dataclass

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
#: UN GTR No. 15 Annex 4 reference temperature [°C] [3] (from memory)
GTR15_REFERENCE_TEMPERATURE_C = 20.0
#: UN GTR No. 15 Annex 4 reference temperature in its K2 factor [K] [3] (from memory)
GTR15_REFERENCE_TEMPERATURE_K = 293.0
#: UN GTR No. 15 Annex 4 reference pressure [Pa] [3] (from memory)
GTR15_REFERENCE_PRESSURE_PA = 100000.0
#: UN GTR No. 15 Annex 4 rolling-resistance temperature factor K0 [1/K] [3] (from memory)
GTR15_ROLLING_FACTOR_PER_K = 8.6e-3


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


@dataclass(frozen=True)
class ReferenceState:
    """A standard's reference conditions for road load.

    Attributes
    ----------
    key, standard : str
        Short key and the standard's name.
    temperature_c : float
        Reference air temperature [°C] for the rolling terms.
    temperature_k : float
        Reference temperature [K] in the aerodynamic factor.
    pressure_pa : float
        Reference air pressure [Pa].
    rolling_factor_per_k : float or None
        K0 [1/K]; None when the standard's rolling correction is not applied.
    basis : str
        Where the values come from.
    """

    key: str
    standard: str
    temperature_c: float
    temperature_k: float
    pressure_pa: float
    rolling_factor_per_k: float | None
    basis: str

    @property
    def air_density_kg_m3(self) -> float:
        """Reference dry-air density [kg/m³] (ideal gas)."""
        return float(air_density_kg_m3(self.temperature_k - ZERO_CELSIUS_K, self.pressure_pa))


#: the road-load reference states, by key: "gtr15" (f0/f1/f2 form) and "j2263"
#: (A/B/C form); the one definition that coast-down corrections and studies use
REFERENCE_STATES = {
    "gtr15": ReferenceState("gtr15", "UN GTR No. 15 Annex 4", GTR15_REFERENCE_TEMPERATURE_C,
                            GTR15_REFERENCE_TEMPERATURE_K, GTR15_REFERENCE_PRESSURE_PA,
                            GTR15_ROLLING_FACTOR_PER_K,
                            "20 °C, 100 kPa, K0 = 8.6e-3/K (values from memory of the "
                            "regulation)"),
    "j2263": ReferenceState("j2263", "SAE J2263", J2263_REFERENCE_TEMPERATURE_C,
                            J2263_REFERENCE_TEMPERATURE_C + ZERO_CELSIUS_K,
                            J2263_REFERENCE_PRESSURE_PA, None,
                            "20 °C, 98.21 kPa (SAE J2263, 40 CFR 1066.805); rolling terms "
                            "not temperature-corrected"),
}
