"""Physical constants used by layercalc, each defined once with its unit and source.

Every constant below is a plain float in SI units (the standard atmosphere's layer table
is a tuple of such floats). ``CONSTANTS`` is the read-only
table of the names the layers language exposes in formulas; each entry is a
``Constant(value, unit, source)`` named tuple.

Sources are stated as precisely as they were checked. "From memory" means the value
was written down from the cited publication without re-reading it while writing this
module; the tests in ``tests/test_physics.py`` check the derived quantities against
independent libraries.
"""

from types import MappingProxyType
from typing import NamedTuple

# --- Gravity -----------------------------------------------------------------------

# Standard acceleration of gravity [m s^-2]. Conventional value adopted by the
# 3rd CGPM (1901); SI Brochure, 9th edition (BIPM, 2019). Also the g0 of the
# U.S. Standard Atmosphere 1976, which defines geopotential metres with it.
G0 = 9.80665

# --- Gas constants (U.S. Standard Atmosphere 1976) ---------------------------------

# Universal gas constant R* [J kmol^-1 K^-1]. U.S. Standard Atmosphere, 1976
# (NOAA/NASA/USAF, Washington DC), adopted constants of Part 1 (from memory).
# Deliberately the 1976 value, not the current CODATA 8314.462618, so that heights
# agree with the standard atmosphere built on it.
UNIVERSAL_GAS_CONSTANT = 8314.32

# Mean molar mass of dry air at sea level M0 [kg kmol^-1]. U.S. Standard Atmosphere,
# 1976, adopted constants of Part 1 (from memory).
MOLAR_MASS_DRY_AIR = 28.9644

# Molar mass of water [kg kmol^-1] = 2 * 1.00794 (H) + 15.9994 (O), the IUPAC
# standard atomic weights of 1995/1999 (Coplen, 2001, Pure Appl. Chem. 73, 667-683;
# from memory). The sum is exact to the digits given.
MOLAR_MASS_WATER = 18.01528

# Specific gas constant of dry air Rd = R* / M0 [J kg^-1 K^-1] (= 287.05287...).
RD = UNIVERSAL_GAS_CONSTANT / MOLAR_MASS_DRY_AIR

# Specific gas constant of water vapour Rv = R* / M_water [J kg^-1 K^-1] (= 461.52...).
RV = UNIVERSAL_GAS_CONSTANT / MOLAR_MASS_WATER

# Ratio of gas constants epsilon = Rd / Rv = M_water / M0 [1] (= 0.621985...).
EPSILON = RD / RV

# --- Temperature scale -------------------------------------------------------------

# Celsius zero in kelvin [K]: t/degC = T/K - 273.15 by definition of the Celsius
# temperature (SI Brochure, 9th edition, BIPM 2019, section 2.3.1).
T_ZERO_CELSIUS = 273.15

# --- Bolton (1980) saturation vapour pressure over water ----------------------------
# Bolton, D., 1980: The computation of equivalent potential temperature.
# Mon. Wea. Rev., 108, 1046-1053, eq. 10: es = 6.112 hPa * exp(17.67 t / (t + 243.5)),
# t in degC. Bolton states it is accurate to 0.1 % for -30 degC <= t <= 35 degC
# (coefficients and accuracy statement from memory; metpy 1.7.1 uses the same three
# numbers in its Bolton eq. 11 dewpoint, and the tests check eq. 10 against IAPWS).

# Saturation vapour pressure at 0 degC in eq. 10 [Pa] (6.112 mb).
BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C = 611.2

# Dimensionless coefficient of eq. 10 [1].
BOLTON_EXPONENT_COEFFICIENT = 17.67

# Temperature offset of eq. 10 [K] (243.5 degC as a temperature difference).
BOLTON_TEMPERATURE_OFFSET = 243.5


# Mean radius of the Earth R1 = (2a + b) / 3 of the Geodetic Reference System 1980 [m]
# (Moritz, H., 2000: Geodetic Reference System 1980. J. Geodesy 74, 128-133; the IUGG
# mean radius, 6371.0088 km).
EARTH_MEAN_RADIUS = 6371008.7714

# --- Units of measurement outside the SI -------------------------------------------

# One international knot [m s^-1]: one nautical mile (1852 m, exact by definition, adopted
# by the International Hydrographic Conference of 1929) per hour. SI Brochure, 9th ed.
# (BIPM, 2019), table 8 (from memory). Upper winds in TEMP/PILOT come in knots when 50 is
# added to the day.
KNOT = 1852.0 / 3600.0

# --- U.S. Standard Atmosphere 1976, 0-47 km geopotential ---------------------------
# U.S. Standard Atmosphere, 1976 (NOAA/NASA/USAF, Washington DC), table 4 (from memory):
# layers of constant lapse rate by geopotential height. The base pressures of the upper
# layers are not stored: they follow from the sea-level pressure, the lapse rates and the
# hypsometric equation (layercalc.physics.sounding_profile), and agree with the table's
# 22632.06, 5474.889 and 868.0187 Pa to the digits given (tests/physics/test_physics.py).

# Sea-level pressure P0 [Pa], an adopted constant of the standard.
USSA_SEA_LEVEL_PRESSURE = 101325.0

# (base geopotential height [m], base temperature [K], lapse rate dT/dH [K m^-1]) of the
# four lowest layers: 0-11 km -6.5 K/km, 11-20 km isothermal, 20-32 km +1.0 K/km,
# 32-47 km +2.8 K/km.
USSA_LAYERS = ((0.0, 288.15, -0.0065), (11000.0, 216.65, 0.0),
               (20000.0, 216.65, 0.001), (32000.0, 228.65, 0.0028))


class Constant(NamedTuple):
    """One entry of the constants table: value in SI, unit text, source text."""

    value: float
    unit: str
    source: str


_USSA_1976 = "U.S. Standard Atmosphere, 1976 (NOAA/NASA/USAF), adopted constants"

CONSTANTS = MappingProxyType({
    "g0": Constant(G0, "m s^-2",
                   "standard gravity, 3rd CGPM (1901); SI Brochure 9th ed. (2019)"),
    "Rd": Constant(RD, "J kg^-1 K^-1",
                   f"R*/M0 with R* = 8314.32 J kmol^-1 K^-1, M0 = 28.9644 kg kmol^-1, "
                   f"{_USSA_1976}"),
    "Rv": Constant(RV, "J kg^-1 K^-1",
                   "R*/M_water with R* from the U.S. Standard Atmosphere 1976 and "
                   "M_water = 18.01528 kg kmol^-1 (IUPAC atomic weights, Coplen 2001)"),
    "epsilon": Constant(EPSILON, "1", "Rd/Rv = M_water/M0, from the two entries above"),
})
"""Read-only table name -> Constant(value, unit, source) of the names formulas may use."""
