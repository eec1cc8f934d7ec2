"""Correcting fitted road load to reference conditions.

A coast-down measures the road load of the test day. To compare tests, or to
carry the result into a study, the coefficients are brought to a reference
state:

* **Aerodynamic term** to the reference air density: f2_ref = f2 · ρ_ref/ρ,
  with ρ from the measured temperature and pressure (ideal gas, dry air).
  With ideal-gas air this is the factor K2 = (T/T_ref)·(p_ref/p).
* **Rolling terms** to the reference temperature:
  f_ref = f · (1 + K0·(T − T_ref)) on f0 and f1 (rolling resistance falls as
  tyres warm, so a cold test day reads high). A factor outside 0.5-1.5 is
  refused: the linear correction does not reach that far.

Standards and reference values
------------------------------
``"gtr15"`` — UN GTR No. 15 (WLTP), Annex 4: reference 20 °C and 100 kPa
(K2 = (T / 293 K)·(100 kPa / p)); rolling factor K0 = 8.6·10⁻³ per K. These
values are from memory of the regulation, not checked against its text.

``"j2263"`` — SAE J2263 (also 40 CFR 1066 road-load practice): reference
20 °C and 98.21 kPa for the aerodynamic term. SAE J2263's own rolling
temperature correction is not implemented; the rolling terms stay at test
temperature unless a factor is given.

``"none"`` — no correction; coefficients are those of the test day.

Wind measured during the test is used inside the fit (air speed instead of
ground speed in the drag term), not here.

References
----------
.. [1] UN GTR No. 15, Worldwide harmonized Light vehicles Test Procedure,
   Annex 4 (road load correction to reference conditions).
.. [2] SAE J2263, Road Load Measurement Using Onboard Anemometry and Coastdown
   Techniques; 40 CFR 1066.805 (reference state 20 °C, 98.21 kPa).
"""

from __future__ import annotations

import numpy as np

from ..atmosphere import REFERENCE_STATES, ZERO_CELSIUS_K, ReferenceState, air_density_kg_m3  # noqa: F401
from ..errors import InputError

#: accepted range of the rolling correction factor 1 + K0·(T − T_ref) [-]: a linear
#: correction that changes f0 by half or more is no longer a correction (common practice)
ROLLING_CORRECTION_LIMITS = (0.5, 1.5)

REFERENCES = tuple(REFERENCE_STATES) + ("none",)


def correction_factors(reference: str, *, temperature_c=None, pressure_pa=None,
                       rolling_factor_per_k=None):
    """Factors that bring (f0, f1, f2) from test to reference conditions.

    Parameters
    ----------
    reference : {"gtr15", "j2263", "none"}
    temperature_c : float, optional
        Mean test air temperature [°C].
    pressure_pa : float, optional
        Mean test air pressure [Pa].
    rolling_factor_per_k : float, optional
        K0 [1/K] overriding the standard's.

    Returns
    -------
    (factors, info)
        ``factors`` a (3,) array multiplying f0, f1, f2; ``info`` a dict for
        the report (standard, reference and test values, what was applied and
        what could not be).

    References
    ----------
    .. [1] UN GTR No. 15 Annex 4 (K0, K2; from memory).
    .. [2] SAE J2263; 40 CFR 1066.805 (20 °C, 98.21 kPa).
    """
    factors = np.ones(3)
    info = {"standard": None, "reference_temperature_c": None, "reference_pressure_pa": None,
            "reference_air_density_kg_m3": None, "test_temperature_c": temperature_c,
            "test_pressure_pa": pressure_pa, "test_air_density_kg_m3": None,
            "rolling_factor_per_k": None, "rolling_factor": 1.0, "aero_factor": 1.0,
            "applied": [], "not_applied": [], "basis": ""}
    if temperature_c is not None and pressure_pa is not None:
        info["test_air_density_kg_m3"] = float(air_density_kg_m3(temperature_c, pressure_pa))
    if reference == "none":
        info["not_applied"].append("no correction asked for: coefficients at test conditions")
        return factors, info
    if reference not in REFERENCE_STATES:
        raise InputError(f"unknown reference '{reference}'; use {', '.join(REFERENCES)}",
                         field="reference")
    ref = REFERENCE_STATES[reference]
    info.update(standard=ref.standard, reference_temperature_c=ref.temperature_c,
                reference_pressure_pa=ref.pressure_pa,
                reference_air_density_kg_m3=ref.air_density_kg_m3, basis=ref.basis)
    k0 = rolling_factor_per_k if rolling_factor_per_k is not None else ref.rolling_factor_per_k
    if temperature_c is not None and pressure_pa is not None:
        k2 = ((temperature_c + ZERO_CELSIUS_K) / ref.temperature_k) * (ref.pressure_pa
                                                                       / pressure_pa)
        factors[2] = k2
        info["aero_factor"] = float(k2)
        info["applied"].append(f"f2 to the reference air density ({ref.temperature_k:g} K, "
                               f"{ref.pressure_pa / 1000:g} kPa; {ref.air_density_kg_m3:.4f} "
                               f"kg/m³): × {k2:.4f}")
    else:
        info["not_applied"].append("f2 not corrected: test air temperature and pressure "
                                   "unknown")
    if k0 is not None and temperature_c is not None:
        kr = 1.0 + k0 * (temperature_c - ref.temperature_c)
        if not (ROLLING_CORRECTION_LIMITS[0] <= kr <= ROLLING_CORRECTION_LIMITS[1]):
            field = ("rolling_factor_per_k" if rolling_factor_per_k is not None
                     else "air_temperature_c")
            raise InputError(
                f"the rolling correction factor 1 + K0·(T − T_ref) = {kr:.3f} is outside "
                f"{ROLLING_CORRECTION_LIMITS[0]:g}-{ROLLING_CORRECTION_LIMITS[1]:g} (K0 "
                f"{k0:g}/K, test {temperature_c:g} °C, reference {ref.temperature_c:g} °C): "
                "a linear correction cannot bridge that; test nearer the reference "
                "temperature or check the factor", field=field)
        factors[0] = factors[1] = kr
        info["rolling_factor_per_k"] = k0
        info["rolling_factor"] = float(kr)
        info["applied"].append(f"f0 and f1 to {ref.temperature_c:g} °C with K0 = {k0:g}/K: "
                               f"× {kr:.4f}")
    elif k0 is None:
        info["not_applied"].append(f"rolling terms not temperature-corrected ({ref.standard} "
                                   "rolling correction not implemented)")
    else:
        info["not_applied"].append("f0 and f1 not corrected: test air temperature unknown")
    return factors, info
