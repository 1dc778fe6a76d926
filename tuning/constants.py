"""Every physical constant carbfleet uses, in SI, each with its source.

Derived values are computed from the base values here, never typed in twice. A value
written "from memory" was not checked against the printed source while writing this file;
a value marked "common practice" is a figure of the trade, not of a standard.
"""

from __future__ import annotations

import math

# --- Molar gas constant --------------------------------------------------------------------
#: Molar gas constant [J/(mol K)], CODATA 2018 (exact since the 2019 SI redefinition).
MOLAR_GAS_CONSTANT = 8.314_462_618

# --- CIPM-2007 moist-air density -----------------------------------------------------------
# Picard, Davis, Gläser, Fujii, "Revised formula for the density of moist air (CIPM-2007)",
# Metrologia 45 (2008) 149–155, doi:10.1088/0026-1394/45/2/004, section 2 and appendix A.

#: Molar gas constant as the CIPM-2007 formula uses it [J/(mol K)] (CODATA 2006 value).
CIPM_GAS_CONSTANT = 8.314_472
#: Mole fraction of CO2 assumed in dry air [1] (CIPM-2007 reference value).
CIPM_CO2_MOLE_FRACTION = 0.0004
#: Molar mass of dry air [kg/mol]: M_a = [28.965 46 + 12.011 (x_CO2 − 0.0004)] × 1e-3.
DRY_AIR_MOLAR_MASS = (28.965_46 + 12.011 * (CIPM_CO2_MOLE_FRACTION - 0.0004)) * 1e-3
#: Molar mass of water [kg/mol] (CIPM-2007).
WATER_MOLAR_MASS = 18.015_28e-3

#: Saturation vapour pressure over water, p_sv = 1 Pa · exp(A T² + B T + C + D/T) (CIPM-2007).
PSV_A = 1.237_884_7e-5  # [K^-2]
PSV_B = -1.912_131_6e-2  # [K^-1]
PSV_C = 33.937_110_47  # [1]
PSV_D = -6.343_164_5e3  # [K]

#: Enhancement factor f = α + β p + γ t², t in °C (CIPM-2007).
ENHANCEMENT_ALPHA = 1.000_62  # [1]
ENHANCEMENT_BETA = 3.14e-8  # [Pa^-1]
ENHANCEMENT_GAMMA = 5.6e-7  # [K^-2]

#: Compressibility factor coefficients (CIPM-2007), t in °C, T in K.
COMPRESSIBILITY_A0 = 1.581_23e-6  # [K Pa^-1]
COMPRESSIBILITY_A1 = -2.933_1e-8  # [Pa^-1]
COMPRESSIBILITY_A2 = 1.104_3e-10  # [K^-1 Pa^-1]
COMPRESSIBILITY_B0 = 5.707e-6  # [K Pa^-1]
COMPRESSIBILITY_B1 = -2.051e-8  # [Pa^-1]
COMPRESSIBILITY_C0 = 1.989_8e-4  # [K Pa^-1]
COMPRESSIBILITY_C1 = -2.376e-6  # [Pa^-1]
COMPRESSIBILITY_D = 1.83e-11  # [K² Pa^-2]
COMPRESSIBILITY_E = -0.765e-8  # [K² Pa^-2]

# --- Temperature scale ------------------------------------------------------------------
#: 0 °C in kelvin [K] (definition of the Celsius scale).
ZERO_CELSIUS = 273.15

# --- US Standard Atmosphere 1976 -----------------------------------------------------------
# U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562 (NOAA, NASA, USAF), part 1, section 1.2
# (constants) and table 4 (layer 0: lapse rate).

#: Standard acceleration of gravity [m/s²] (USSA-1976; also the CGPM 1901 value).
STANDARD_GRAVITY = 9.806_65
#: Gas constant as USSA-1976 uses it, R* [J/(mol K)] (USSA-1976, note the older value).
USSA_GAS_CONSTANT = 8.314_32
#: Mean molar mass of sea-level air, M0 [kg/mol] (USSA-1976).
USSA_AIR_MOLAR_MASS = 28.964_4e-3
#: Sea-level temperature T0 [K] (USSA-1976).
ISA_SEA_LEVEL_TEMPERATURE = 288.15
#: Sea-level pressure P0 [Pa] (USSA-1976).
ISA_SEA_LEVEL_PRESSURE = 101_325.0
#: Temperature lapse rate of the first layer, 0–11 km geopotential [K/m] (USSA-1976 table 4).
ISA_LAPSE_RATE = -6.5e-3
#: Default lapse rate for carrying a forecast to other heights, as a decrease with height
#: Γ = −dT/dz [K/m]: the standard atmosphere's 6.5 K/km (USSA-1976 table 4, L = −6.5 K/km).
STANDARD_LAPSE_RATE = -ISA_LAPSE_RATE
#: Top of the first layer (the troposphere) [m, geopotential] (USSA-1976 table 4).
ISA_TROPOPAUSE = 11_000.0
#: Bottom of the tabulated standard atmosphere [m, geometric] (USSA-1976 tables start at -5 km).
ISA_LOWEST_ALTITUDE = -5_000.0
#: Effective Earth radius for geopotential altitude, r0 [m] (USSA-1976).
EARTH_RADIUS_USSA = 6_356_766.0
#: Specific gas constant of air R*/M0 [J/(kg K)] (derived from the USSA-1976 values).
ISA_SPECIFIC_GAS_CONSTANT = USSA_GAS_CONSTANT / USSA_AIR_MOLAR_MASS
#: Exponent −g0 M0 / (R* L) of p/P0 = (T/T0)^exponent in layer 0 [1] (derived, ≈ 5.2559).
ISA_PRESSURE_EXPONENT = -STANDARD_GRAVITY * USSA_AIR_MOLAR_MASS / (USSA_GAS_CONSTANT * ISA_LAPSE_RATE)
#: Sea-level density ρ0 = P0 M0 / (R* T0) [kg/m³] (derived; USSA-1976 prints 1.2250).
ISA_SEA_LEVEL_DENSITY = ISA_SEA_LEVEL_PRESSURE * USSA_AIR_MOLAR_MASS / (USSA_GAS_CONSTANT * ISA_SEA_LEVEL_TEMPERATURE)
#: The ISA sea-level density as printed, 1.225 kg/m³ (ICAO Doc 7488 / USSA-1976), used for
#: the density ratio shown to people; equal to the derived value to 4 digits (checked below).
ISA_SEA_LEVEL_DENSITY_PRINTED = 1.225
assert math.isclose(ISA_SEA_LEVEL_DENSITY, ISA_SEA_LEVEL_DENSITY_PRINTED, rel_tol=5e-5), ISA_SEA_LEVEL_DENSITY

# --- Altimeter setting (QNH) ---------------------------------------------------------------
# Smithsonian Meteorological Tables (List, 1951), p. 269, as the US National Weather Service
# applies it (and as MetPy documents it): p_station = (QNH^n − P0^n · a · H / T0)^(1/n) + 0.3 hPa.
# It predates USSA-1976 and keeps its own constants; they are used as printed.
#: Exponent n = a R_d / g of the altimeter-setting relation [1] (Smithsonian 1951 / NWS).
ALTIMETER_EXPONENT = 0.190284
#: Standard sea-level temperature of the relation [K] (Smithsonian 1951: 288 K).
ALTIMETER_TEMPERATURE = 288.0
#: Lapse rate a of the relation [K/m] (6.5 K/km, as USSA-1976).
ALTIMETER_LAPSE_RATE = 6.5e-3
#: Standard sea-level pressure of the relation [Pa] (1013.25 hPa).
ALTIMETER_PRESSURE = 101_325.0
#: The constant offset of the relation [Pa] (0.3 hPa; Smithsonian 1951 eq. 1 / NWS).
ALTIMETER_OFFSET = 30.0

# --- SAE J1349 -----------------------------------------------------------------------------
# SAE J1349 (revised August 2004), "Engine Power Test Code — Spark Ignition and Compression
# Ignition — Net Power Rating": reference inlet air 99 kPa dry-air pressure, 25 °C.
#: Reference dry-air pressure [Pa] (SAE J1349 Aug 2004).
SAE_J1349_DRY_AIR_PRESSURE = 99_000.0
#: Reference air temperature [K] (25 °C; SAE J1349 Aug 2004). The formula uses 298 K.
SAE_J1349_AIR_TEMPERATURE = 298.15
#: Temperature in the correction formula's square root [K] (SAE J1349 Aug 2004 writes 298).
SAE_J1349_FORMULA_TEMPERATURE = 298.0
#: Coefficients of CF = 1.18 (99/p_d) sqrt(T/298) − 0.18 (SAE J1349 Aug 2004; mechanical
#: efficiency taken as 85 %).
SAE_J1349_SLOPE = 1.18
SAE_J1349_OFFSET = 0.18
#: The range over which SAE J1349 says its correction applies (from memory): inlet air
#: 15–35 °C and dry-air pressure 90–105 kPa.
SAE_J1349_AIR_TEMPERATURE_RANGE = (ZERO_CELSIUS + 15.0, ZERO_CELSIUS + 35.0)  # [K]
SAE_J1349_DRY_AIR_PRESSURE_RANGE = (90_000.0, 105_000.0)  # [Pa]

# --- Atomic masses -------------------------------------------------------------------------
# IUPAC conventional standard atomic weights (CIAAW, 2021) in kg/mol.
CARBON_MOLAR_MASS = 12.011e-3
HYDROGEN_MOLAR_MASS = 1.008e-3
OXYGEN_MOLAR_MASS = 15.999e-3
OXYGEN_MOLECULE_MOLAR_MASS = 2 * OXYGEN_MOLAR_MASS

# --- Air for combustion ------------------------------------------------------------------
# Heywood, Internal Combustion Engine Fundamentals (1988), section 3.3: air as 21 % O2 and
# 79 % "atmospheric nitrogen" by volume, 3.773 mol N2 per mol O2 (O2 fraction 0.2095).
#: Mole fraction of O2 in dry air [1] (Heywood 1988, sec. 3.3; also CIPM-2007 composition).
AIR_O2_MOLE_FRACTION = 0.2095
#: Moles of atmospheric nitrogen (N2 with Ar and the rest) per mole of O2 [1] (= 3.773).
AIR_N2_PER_O2 = (1.0 - AIR_O2_MOLE_FRACTION) / AIR_O2_MOLE_FRACTION
#: Mass of air that carries one mole of O2 [kg/mol]: M_a / x_O2 (derived, ≈ 0.13826).
AIR_MASS_PER_MOLE_O2 = DRY_AIR_MOLAR_MASS / AIR_O2_MOLE_FRACTION

# --- Fuels ---------------------------------------------------------------------------------
#: Stoichiometric air–fuel mass ratio of gasoline [1] (trade figure, common practice).
GASOLINE_AFR = 14.7
#: Density of gasoline at 15 °C [kg/m³] (typical, from memory; EN 228 allows 720–775).
GASOLINE_DENSITY = 740.0
#: Ethanol C2H6O: elemental formula and density at 20 °C [kg/m³] (CRC Handbook of
#: Chemistry and Physics, "Physical constants of organic compounds": 0.7893 g/cm³).
ETHANOL_FORMULA = (2.0, 6.0, 1.0)
ETHANOL_DENSITY = 789.3
#: Methanol CH4O: elemental formula and density at 20 °C [kg/m³] (CRC Handbook: 0.7914 g/cm³).
METHANOL_FORMULA = (1.0, 4.0, 1.0)
METHANOL_DENSITY = 791.4
#: Isooctane C8H18 (2,2,4-trimethylpentane), the reference hydrocarbon (Heywood 1988 table).
ISOOCTANE_FORMULA = (8.0, 18.0, 0.0)
#: Density of two-stroke premix oil at 15 °C [kg/m³] (typical, from memory: 0.85–0.89).
PREMIX_OIL_DENSITY = 870.0
#: A performance mixture for dirt bikes, air–fuel mass ratio [1] (about 12:1, common practice).
DEFAULT_REFERENCE_AFR = 12.0
#: Exponent on the air-density ratio in the metering law of the elementary carburetor [1]: fuel
#: flow through a jet goes as the square root of the venturi depression (Heywood, *Internal
#: Combustion Engine Fundamentals*, 1988, section 7.2, eqs. 7.5–7.10). The default where a fleet
#: gives no ``density_exponent``.
METERING_LAW_EXPONENT = 0.5
