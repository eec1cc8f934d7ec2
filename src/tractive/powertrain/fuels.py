"""Fuels: lower heating value, density and tailpipe CO2, each with its source.

Every number is stored as it is published (Btu per US gallon, g CO2 per US
gallon, MJ/kg, kg CO2 per TJ) and converted with the exact factors of
:mod:`tractive.units`, so a reader can hold each line against its source.
Values marked "from memory" were not re-read in the primary text when this
table was written; they agree with the confirmed values of the other fuels and
with the IPCC defaults to within a few per cent (see ``tests/test_fuels.py``).

CO2 is the tailpipe CO2 from burning all the carbon in the fuel (no upstream
emissions, biogenic carbon of ethanol counted like fossil carbon).

References
----------
.. [1] US EPA, tailpipe CO2 of 8,887 g per gallon of gasoline and 10,180 g per
   gallon of diesel (the factors of 40 CFR 600.113 and 600.210-12; EPA fact
   sheet "Greenhouse Gas Emissions from a Typical Passenger Vehicle").
.. [2] US DOE Alternative Fuels Data Center (AFDC), Fuel Properties
   Comparison, lower heating values from Argonne National Laboratory's GREET
   model: gasoline/E10 112,114-116,090 Btu/gal; ultra-low-sulfur diesel
   128,488 Btu/gal.
.. [3] 40 CFR Part 600, Appendix II(b): example test fuel with specific
   gravity 0.745, carbon mass fraction 0.868, net heating value 18,478 Btu/lb.
.. [4] IPCC 2006 Guidelines for National Greenhouse Gas Inventories, Vol. 2
   (Energy), ch. 1, Tables 1.2 (net calorific values) and 1.4 (default CO2
   emission factors): gas/diesel oil 43.0 MJ/kg, 74,100 kg CO2/TJ; motor
   gasoline 44.3 MJ/kg, 69,300 kg CO2/TJ (from memory); LPG 47.3 MJ/kg,
   63,100 kg CO2/TJ (from memory); natural gas 48.0 MJ/kg, 56,100 kg CO2/TJ
   (from memory).
.. [5] IUPAC standard atomic weights (conventional values): C 12.011,
   H 1.008, O 15.999.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..errors import InputError
from ..units import BTU_J, US_GALLON_L

#: IUPAC conventional atomic weights [g/mol] [5]
ATOMIC_WEIGHT_C = 12.011
ATOMIC_WEIGHT_H = 1.008
ATOMIC_WEIGHT_O = 15.999
#: molar mass of CO2 [g/mol] [5]
MOLAR_MASS_CO2 = ATOMIC_WEIGHT_C + 2 * ATOMIC_WEIGHT_O

# -- published inputs (as published) ------------------------------------------
#: tailpipe CO2 per US gallon of gasoline [g/gal] [1]
EPA_CO2_GASOLINE_G_PER_GAL = 8887.0
#: tailpipe CO2 per US gallon of diesel [g/gal] [1]
EPA_CO2_DIESEL_G_PER_GAL = 10180.0
#: lower heating value of gasoline without ethanol, the upper end of the AFDC
#: gasoline/E10 range [Btu/gal] [2] (AFDC gives the range; that its upper end is
#: the ethanol-free fuel is from memory)
AFDC_LHV_GASOLINE_BTU_PER_GAL = 116090.0
#: lower heating value of E10, the lower end of the AFDC gasoline/E10 range
#: [Btu/gal] [2] (attribution of the lower end to E10 from memory)
AFDC_LHV_E10_BTU_PER_GAL = 112114.0
#: lower heating value of ultra-low-sulfur diesel [Btu/gal] [2]
AFDC_LHV_DIESEL_BTU_PER_GAL = 128488.0
#: specific gravity of the EPA example gasoline test fuel [-] [3]; taken as kg/L
#: (water at 60 °F is 0.999 kg/L, so the error is below 0.1 %)
EPA_GASOLINE_SPECIFIC_GRAVITY = 0.745
#: density of diesel [kg/L]: 3,167 g per US gallon in GREET (from memory), inside
#: the EN 590 band 0.820-0.845 kg/L (from memory)
DIESEL_DENSITY_KG_PER_L = 3167.0 / 1000.0 / US_GALLON_L
#: density of ethanol at 20 °C [kg/L] (CRC Handbook of Chemistry and Physics,
#: from memory)
ETHANOL_DENSITY_KG_PER_L = 0.789
#: density of automotive LPG (propane-rich) liquid at 15 °C [kg/L]: 1,923 g per
#: US gallon in GREET (from memory)
LPG_DENSITY_KG_PER_L = 1923.0 / 1000.0 / US_GALLON_L
#: IPCC 2006 net calorific values [MJ/kg] and CO2 factors [kg CO2/TJ] [4]
IPCC_NCV_MJ_PER_KG = {"gas_diesel_oil": 43.0, "motor_gasoline": 44.3, "lpg": 47.3,
                      "natural_gas": 48.0}
IPCC_CO2_KG_PER_TJ = {"gas_diesel_oil": 74100.0, "motor_gasoline": 69300.0, "lpg": 63100.0,
                      "natural_gas": 56100.0}

# -- derived ----------------------------------------------------------------------
_MJ = 1.0e6


def _btu_per_gal_to_mj_per_l(btu_per_gal: float) -> float:
    return btu_per_gal * BTU_J / US_GALLON_L / _MJ


def _g_per_gal_to_kg_per_l(g_per_gal: float) -> float:
    return g_per_gal / 1000.0 / US_GALLON_L


#: CO2 from burning ethanol C2H5OH completely [kg CO2 / kg] (stoichiometry, [5])
ETHANOL_CO2_KG_PER_KG = (2 * MOLAR_MASS_CO2) / (
    2 * ATOMIC_WEIGHT_C + 6 * ATOMIC_WEIGHT_H + ATOMIC_WEIGHT_O)


@dataclass(frozen=True)
class Fuel:
    """One fuel of the table.

    Attributes
    ----------
    name : str
        Key used in vehicle files (``gasoline``, ``e10``, ``diesel``, ``lpg``, ``cng``).
    title : str
        Plain description.
    lhv_mj_per_kg : float
        Lower heating value [MJ/kg].
    density_kg_per_l : float or None
        Density of the liquid fuel [kg/L]; None for a gas sold by mass (CNG).
    co2_kg_per_kg : float
        Tailpipe CO2 per mass of fuel burnt [kg/kg].
    sources : dict
        Where each of the three values comes from.
    """

    name: str
    title: str
    lhv_mj_per_kg: float
    density_kg_per_l: float | None
    co2_kg_per_kg: float
    sources: dict = field(default_factory=dict)

    @property
    def liquid(self) -> bool:
        """True when the fuel is sold and stored by volume (has a density)."""
        return self.density_kg_per_l is not None

    @property
    def lhv_j_per_kg(self) -> float:
        return self.lhv_mj_per_kg * _MJ

    @property
    def lhv_mj_per_l(self) -> float | None:
        return None if self.density_kg_per_l is None else self.lhv_mj_per_kg * self.density_kg_per_l

    @property
    def co2_kg_per_l(self) -> float | None:
        return None if self.density_kg_per_l is None else self.co2_kg_per_kg * self.density_kg_per_l

    def to_dict(self) -> dict:
        return {"name": self.name, "title": self.title, "lhv_mj_per_kg": self.lhv_mj_per_kg,
                "lhv_mj_per_l": self.lhv_mj_per_l, "density_kg_per_l": self.density_kg_per_l,
                "co2_kg_per_kg": self.co2_kg_per_kg, "co2_kg_per_l": self.co2_kg_per_l,
                "sources": dict(self.sources)}


def _liquid(name, title, lhv_mj_per_l, density, co2_kg_per_l, sources) -> Fuel:
    return Fuel(name, title, lhv_mj_per_l / density, density, co2_kg_per_l / density, sources)


def _build_table() -> dict:
    gasoline_density = EPA_GASOLINE_SPECIFIC_GRAVITY
    gasoline_co2_kg_per_l = _g_per_gal_to_kg_per_l(EPA_CO2_GASOLINE_G_PER_GAL)
    e10_density = 0.9 * gasoline_density + 0.1 * ETHANOL_DENSITY_KG_PER_L
    e10_co2_kg_per_l = (0.9 * gasoline_co2_kg_per_l
                        + 0.1 * ETHANOL_DENSITY_KG_PER_L * ETHANOL_CO2_KG_PER_KG)
    table = {
        "gasoline": _liquid(
            "gasoline", "gasoline without ethanol (E0)",
            _btu_per_gal_to_mj_per_l(AFDC_LHV_GASOLINE_BTU_PER_GAL), gasoline_density,
            gasoline_co2_kg_per_l,
            {"lhv": "US DOE AFDC / ANL GREET, 116,090 Btu/gal (upper end of the gasoline/E10 "
                    "range; E0 attribution from memory)",
             "density": "40 CFR 600 Appendix II(b) example test fuel, specific gravity 0.745",
             "co2": "US EPA, 8,887 g CO2 per US gallon (40 CFR 600.210-12)"}),
        "e10": _liquid(
            "e10", "gasoline with 10 % ethanol by volume (E10)",
            _btu_per_gal_to_mj_per_l(AFDC_LHV_E10_BTU_PER_GAL), e10_density, e10_co2_kg_per_l,
            {"lhv": "US DOE AFDC / ANL GREET, 112,114 Btu/gal (lower end of the gasoline/E10 "
                    "range; E10 attribution from memory)",
             "density": "volume blend 90 % gasoline (0.745 kg/L, 40 CFR 600 App. II) + 10 % "
                        "ethanol (0.789 kg/L, CRC Handbook, from memory)",
             "co2": "volume blend: 90 % of EPA 8,887 g/gal gasoline + 10 % ethanol burnt "
                    "completely (stoichiometry, IUPAC atomic weights)"}),
        "diesel": _liquid(
            "diesel", "ultra-low-sulfur diesel",
            _btu_per_gal_to_mj_per_l(AFDC_LHV_DIESEL_BTU_PER_GAL), DIESEL_DENSITY_KG_PER_L,
            _g_per_gal_to_kg_per_l(EPA_CO2_DIESEL_G_PER_GAL),
            {"lhv": "US DOE AFDC / ANL GREET, 128,488 Btu/gal (ULSD)",
             "density": "ANL GREET 3,167 g/gal (from memory)",
             "co2": "US EPA, 10,180 g CO2 per US gallon (40 CFR 600.113, 600.210-12)"}),
        "lpg": Fuel(
            "lpg", "liquefied petroleum gas (autogas)", IPCC_NCV_MJ_PER_KG["lpg"],
            LPG_DENSITY_KG_PER_L,
            IPCC_CO2_KG_PER_TJ["lpg"] * IPCC_NCV_MJ_PER_KG["lpg"] / _MJ,
            {"lhv": "IPCC 2006 Guidelines vol. 2 Table 1.2, LPG 47.3 MJ/kg (from memory)",
             "density": "ANL GREET 1,923 g/gal, liquid at 15 °C (from memory)",
             "co2": "IPCC 2006 Guidelines vol. 2 Table 1.4, LPG 63,100 kg CO2/TJ "
                    "(from memory)"}),
        "cng": Fuel(
            "cng", "compressed natural gas (sold and stored by mass)",
            IPCC_NCV_MJ_PER_KG["natural_gas"], None,
            IPCC_CO2_KG_PER_TJ["natural_gas"] * IPCC_NCV_MJ_PER_KG["natural_gas"] / _MJ,
            {"lhv": "IPCC 2006 Guidelines vol. 2 Table 1.2, natural gas 48.0 MJ/kg "
                    "(from memory)",
             "density": "none: a gas, stored and sold by mass",
             "co2": "IPCC 2006 Guidelines vol. 2 Table 1.4, natural gas 56,100 kg CO2/TJ "
                    "(from memory)"}),
    }
    return table


#: the fuel table, keyed by the name used in vehicle files
FUELS: dict = _build_table()


def get_fuel(name: str, *, where=None) -> Fuel:
    """The fuel called ``name``; raises :class:`InputError` naming the choices.

    ``where(message)`` builds a located error (as :meth:`Section.error` does).
    """
    key = str(name).strip().lower()
    if key in FUELS:
        return FUELS[key]
    msg = f"unknown fuel '{name}'; choose one of {', '.join(FUELS)}"
    raise where(msg) if where is not None else InputError(msg)
