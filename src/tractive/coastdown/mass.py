"""A measured road load carried to another vehicle mass.

A coast-down measures the road load of the vehicle at its test mass. Rolling
resistance is close to proportional to the load on the tyres, aerodynamic drag
does not depend on mass; so for a vehicle of mass m the terms are taken as

    f0' = f0 · m / m_test,   f1' = f1 · m / m_test,   f2' = f2

(common practice, e.g. for the WLTP road-load family and interpolation
method of UN GTR No. 15, where the rolling part is re-scaled with test mass;
from memory). The covariance rows and columns of f0 and f1 scale the same way.

The fitted coefficients are the inertial mass times the deceleration, so they
hold for the rotating-mass fraction the fit assumed; a vehicle file with
another fraction gets a warning with the size of the difference (the
coefficients are not changed: which fraction is right is the user's call).

References
----------
.. [1] UN GTR No. 15 (WLTP), Annex 4 (road load of a vehicle family; rolling
   resistance proportional to test mass; from memory).
.. [2] Wong, J. Y., Theory of Ground Vehicles, 4th ed., Wiley (2008), ch. 1
   (rolling resistance force = coefficient × normal load).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

#: relative mass difference below which no scaling is done (the same vehicle)
SAME_MASS_REL = 1e-9


def road_load_at_mass(road_load, mass_kg: float, rotating_mass_fraction: float):
    """The road load read from a coast-down file, carried to a vehicle's mass.

    Parameters
    ----------
    road_load : tractive.roadload.CoefficientRoadLoad
        As read by ``road_load: {from_coastdown: FILE}``; its ``given`` holds
        ``test_mass_kg`` and ``test_rotating_mass_fraction`` when the file
        records them.
    mass_kg : float
        Vehicle mass [kg].
    rotating_mass_fraction : float
        Vehicle rotating-mass fraction [-].

    Returns
    -------
    (road_load, notes, warnings)
        The road load with f0 and f1 (and their covariance) scaled by
        m / m_test and f2 unchanged; notes saying what was done; warnings when
        the rotating-mass fraction differs from the test's.

    References
    ----------
    See the module docstring.
    """
    given = getattr(road_load, "given", {}) or {}
    m_test = given.get("test_mass_kg")
    rmf_test = given.get("test_rotating_mass_fraction")
    notes, warnings = [], []
    source = given.get("from_coastdown", "the coast-down file")
    if m_test is None:
        return road_load, tuple(notes), tuple(warnings)
    m_ref = given.get("mass_scaled_to_kg", m_test)      # already carried to a mass
    ratio = float(mass_kg) / float(m_ref)
    if abs(ratio - 1.0) > SAME_MASS_REL:
        scale = np.array([ratio, ratio, 1.0])
        cov = road_load.covariance
        if cov is not None:
            cov = np.asarray(cov, float) * np.outer(scale, scale)
        road_load = replace(road_load, f0_n=road_load.f0_n * ratio,
                            f1_n_per_kmh=road_load.f1_n_per_kmh * ratio, covariance=cov,
                            given={**given, "mass_scaled_to_kg": float(mass_kg)})
        notes.append(f"road load from {source} measured at {float(m_test):g} kg, vehicle "
                     f"{float(mass_kg):g} kg: rolling terms f0 and f1 scaled by "
                     f"{ratio:.4g} (rolling resistance proportional to mass, common "
                     "practice); aerodynamic f2 unchanged")
    if rmf_test is not None and abs(float(rmf_test) - float(rotating_mass_fraction)) > 1e-9:
        factor = (1.0 + float(rotating_mass_fraction)) / (1.0 + float(rmf_test))
        warnings.append(f"the coast-down of {source} assumed a rotating-mass fraction of "
                        f"{float(rmf_test):g}, the vehicle has {float(rotating_mass_fraction):g}: "
                        "the fitted road load is inertial mass × deceleration, so with the "
                        f"vehicle's fraction all three terms would be {factor:.4g} times as "
                        "large; refit the logs with the same fraction (not changed here)")
    return road_load, tuple(notes), tuple(warnings)
