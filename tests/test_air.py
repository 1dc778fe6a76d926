"""tuning.air against published tables and independent libraries (CoolProp, psychrolib, MetPy).

Every check value names its source. "From memory" marks a table value recalled, not copied
from the printed page while writing the test.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from tuning import air, constants

CoolProp = pytest.importorskip("CoolProp.HumidAirProp")
psychrolib = pytest.importorskip("psychrolib")
metpy_calc = pytest.importorskip("metpy.calc")
metpy_units = pytest.importorskip("metpy.units").units

HAPropsSI = CoolProp.HAPropsSI
psychrolib.SetUnitSystem(psychrolib.SI)
C0 = constants.ZERO_CELSIUS


# --- US Standard Atmosphere 1976 -----------------------------------------------------------
# U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), table I, by geometric altitude: T [K],
# p [Pa], rho [kg/m³] as printed (from memory). Tolerance: one unit in the last printed digit.
USSA_TABLE = [
    # geometric altitude, T (3 decimals), p (5 digits), rho (5 digits)
    (0.0, 288.150, 1.01325e5, 1.2250, 1e-4),
    (1000.0, 281.651, 8.9876e4, 1.1117, 1e-4),
    (2000.0, 275.154, 7.9501e4, 1.0066, 1e-4),
    (3000.0, 268.659, 7.0121e4, 0.90925, 1e-5),
    (5000.0, 255.676, 5.4048e4, 0.73643, 1e-5),
    (11000.0, 216.774, 2.2700e4, 0.36480, 1e-5),
]


@pytest.mark.parametrize(
    "elevation, temperature, pressure, density, density_step",
    USSA_TABLE,
    ids=[f"USSA-1976 table I, Z={row[0]:.0f} m" for row in USSA_TABLE],
)
def test_standard_atmosphere_table(elevation, temperature, pressure, density, density_step):
    height = air.geopotential_altitude(elevation)
    pressure_step = 10 ** (np.floor(np.log10(pressure)) - 4)  # 5 significant digits printed
    assert air.isa_temperature(height) == pytest.approx(temperature, abs=1e-3)
    assert air.isa_pressure(height) == pytest.approx(pressure, abs=pressure_step)
    assert air.isa_density(height) == pytest.approx(density, abs=density_step)


def test_tropopause_values():
    # USSA-1976, base of layer 1 (table 4): H = 11 km geopotential, T = 216.65 K,
    # p = 22 632.06 Pa (printed 2.2632e4), rho = 0.36392 kg/m³ (from memory).
    assert air.isa_temperature(11_000.0) == pytest.approx(216.65, abs=1e-9)
    assert air.isa_pressure(11_000.0) == pytest.approx(22_632.0, abs=1.0)
    assert air.isa_density(11_000.0) == pytest.approx(0.36392, abs=1e-5)


def test_sea_level_density_derived_from_base_constants():
    # ISA sea-level density, printed 1.2250 kg/m³ (USSA-1976; ICAO Doc 7488).
    assert constants.ISA_SEA_LEVEL_DENSITY == pytest.approx(1.2250, abs=5e-5)
    assert air.isa_density(0.0) == pytest.approx(1.2250, abs=5e-5)


@pytest.mark.parametrize(
    "pressure_hpa, altitude",
    [(850.0, 1457.0), (700.0, 3012.0), (500.0, 5574.0), (300.0, 9164.0)],
    ids=[
        "ICAO std isobar 850 hPa: 1457 m (from memory)",
        "700 hPa: 3012 m (from memory)",
        "500 hPa: 5574 m (from memory)",
        "300 hPa: 9164 m (from memory)",
    ],
)
def test_pressure_altitude_of_standard_isobars(pressure_hpa, altitude):
    # Heights of the standard isobaric surfaces in the ICAO / US standard atmosphere, whole metres.
    assert air.pressure_altitude(pressure_hpa * 100.0) == pytest.approx(altitude, abs=1.0)


def test_density_altitude_inverts_isa_density():
    # Self-consistency (not validation): density altitude of the ISA density at H is H.
    heights = np.linspace(-1000.0, 10_000.0, 23)
    assert np.allclose(air.density_altitude(air.isa_density(heights)), heights, atol=1e-6)
    assert np.allclose(air.pressure_altitude(air.isa_pressure(heights)), heights, atol=1e-6)


def test_density_altitude_of_table_density():
    # USSA-1976 table I at Z = 3000 m geometric (H = 2998.6 m geopotential): rho = 0.90925.
    assert air.density_altitude(0.90925) == pytest.approx(air.geopotential_altitude(3000.0), abs=1.0)


def test_outside_troposphere_warns_and_still_computes():
    with pytest.warns(air.OutOfRangeWarning, match="first layer"):
        temperature = air.isa_temperature(12_000.0)
    assert temperature == pytest.approx(288.15 - 6.5 * 12.0)  # the same line, not clipped


# --- pressure reduction ----------------------------------------------------------------------
QNH_GRID = [
    (qnh, elevation)
    for qnh in (950.0, 990.0, 1013.25, 1035.0)
    for elevation in (-400.0, 0.0, 800.0, 1340.0, 2500.0, 4500.0)
]


@pytest.mark.parametrize("qnh_hpa, elevation", QNH_GRID)
def test_station_pressure_from_qnh_against_metpy(qnh_hpa, elevation):
    # MetPy altimeter_to_station_pressure (Smithsonian 1951 relation). MetPy computes the
    # exponent from its own R_d and g (0.190261) where we use the printed 0.190284: up to
    # 4 Pa at 4500 m, so the tolerance is 5 Pa (0.05 hPa).
    expected = (
        metpy_calc.altimeter_to_station_pressure(
            metpy_units.Quantity(qnh_hpa, "hPa"), metpy_units.Quantity(elevation, "m")
        )
        .to("Pa")
        .magnitude
    )
    assert air.station_pressure_from_qnh(qnh_hpa * 100.0, elevation) == pytest.approx(expected, abs=5.0)


def test_station_pressure_from_qnh_is_vectorised():
    qnh = np.array([1000e2, 1010e2, 1020e2])
    result = air.station_pressure_from_qnh(qnh[:, None], np.array([0.0, 1000.0]))
    assert result.shape == (3, 2)
    assert np.all(result[:, 1] < result[:, 0])


@pytest.mark.parametrize("elevation", [1000.0, 2000.0, 3000.0, 5000.0])
def test_sea_level_reduction_in_the_standard_atmosphere(elevation):
    # In the standard atmosphere (sea-level pressure 101 325 Pa, station at the ISA
    # temperature) the reduction must give the USSA-1976 table pressure (USSA_TABLE above).
    row = next(r for r in USSA_TABLE if r[0] == elevation)
    result = air.station_pressure_from_sea_level_pressure(101_325.0, elevation, row[1])
    assert result == pytest.approx(row[2], abs=10 ** (np.floor(np.log10(row[2])) - 4))


@pytest.mark.parametrize("elevation, celsius", [(500.0, 15.0), (1500.0, -20.0), (1500.0, 40.0), (3000.0, 0.0)])
def test_sea_level_reduction_against_psychrolib(elevation, celsius):
    # psychrolib GetStationPressure (ASHRAE Handbook Fundamentals 2017 ch. 1, same assumption:
    # a column at the station temperature plus the standard lapse, integrated with its mean
    # temperature and g = 9.807): within 5 Pa.
    expected = psychrolib.GetStationPressure(101_325.0, elevation, celsius)
    result = air.station_pressure_from_sea_level_pressure(101_325.0, elevation, celsius + C0)
    assert result == pytest.approx(expected, abs=5.0)


def test_station_pressure_dispatch():
    assert air.station_pressure(86_000.0, "station", 1340.0) == 86_000.0
    assert air.station_pressure(101_600.0, "qnh", 1340.0) == air.station_pressure_from_qnh(101_600.0, 1340.0)
    assert air.station_pressure(101_600.0, "sea_level", 1340.0, 290.0) == air.station_pressure_from_sea_level_pressure(
        101_600.0, 1340.0, 290.0
    )
    with pytest.raises(ValueError, match="pressure_kind"):
        air.station_pressure(101_600.0, "altimeter", 1340.0)


# --- vapour pressure and dew point -------------------------------------------------------------
@pytest.mark.parametrize("celsius", np.arange(0.5, 50.01, 2.5))
def test_saturation_vapour_pressure_against_psychrolib(celsius):
    # psychrolib GetSatVapPres: ASHRAE Handbook Fundamentals (Hyland–Wexler), over water
    # above 0.01 °C. CIPM-2007 p_sv agrees to 3e-4 relative.
    expected = psychrolib.GetSatVapPres(float(celsius))
    assert air.saturation_vapour_pressure(celsius + C0) == pytest.approx(expected, rel=3e-4)


@pytest.mark.parametrize("celsius", [-40.0, -30.0, -20.0, -10.0, -5.0])
def test_saturation_vapour_pressure_below_freezing_is_over_water(celsius):
    # Over supercooled water, as weather reports use it: MetPy saturation_vapor_pressure with
    # phase="liquid" (Ambaum 2020 formula, an approximation good to a few 1e-3): 0.3 %.
    # Over ice it would be 5–40 % lower (at -5 to -40 °C), so this also catches an ice formula.
    expected = metpy_calc.saturation_vapor_pressure(metpy_units.Quantity(celsius, "degC"), phase="liquid")
    assert air.saturation_vapour_pressure(celsius + C0) == pytest.approx(expected.to("Pa").magnitude, rel=3e-3)
    ice = psychrolib.GetSatVapPres(celsius)  # psychrolib is over ice below 0.01 °C
    assert air.saturation_vapour_pressure(celsius + C0) > 1.04 * ice


@pytest.mark.parametrize("vapour_pressure", np.geomspace(650.0, 12_000.0, 12))
def test_dew_point_against_psychrolib(vapour_pressure):
    # psychrolib GetTDewPointFromVapPres (ASHRAE, over water above 0 °C): within 0.01 K.
    expected = psychrolib.GetTDewPointFromVapPres(60.0, float(vapour_pressure))
    assert air.dew_point_from_vapour_pressure(vapour_pressure) - C0 == pytest.approx(expected, abs=0.01)


@pytest.mark.parametrize("celsius, relative_humidity", [(5.0, 0.9), (20.0, 0.5), (35.0, 0.2)])
def test_vapour_pressure_from_relative_humidity_against_psychrolib(celsius, relative_humidity):
    # psychrolib GetVapPresFromRelHum (ASHRAE definition e = RH · p_ws over water).
    expected = psychrolib.GetVapPresFromRelHum(celsius, relative_humidity)
    assert air.vapour_pressure_from_relative_humidity(relative_humidity, celsius + C0) == pytest.approx(
        expected, rel=3e-4
    )


def test_dew_point_round_trip_including_below_freezing():
    # Self-consistency (not validation): the Newton inverse of p_sv.
    dew_point = np.linspace(-39.0, 49.0, 89) + C0
    back = air.dew_point_from_vapour_pressure(air.vapour_pressure_from_dew_point(dew_point))
    assert np.max(np.abs(back - dew_point)) < 1e-8
    assert air.dew_point_from_vapour_pressure(0.0) == -np.inf


def test_relative_humidity_round_trip():
    temperature = np.array([263.15, 283.15, 303.15])
    relative_humidity = np.array([0.1, 0.55, 1.0])
    vapour = air.vapour_pressure_from_relative_humidity(relative_humidity, temperature)
    assert np.allclose(air.relative_humidity_from_vapour_pressure(vapour, temperature), relative_humidity)


def test_enhancement_factor_near_one_and_rising_with_pressure():
    # CIPM-2007 eq. A1.3 by hand: 1.00062 + 3.14e-8 · 101 325 + 5.6e-7 · 20² = 1.004026.
    assert air.enhancement_factor(101_325.0, 293.15) == pytest.approx(1.004026, abs=1e-6)
    assert air.enhancement_factor(60_000.0, 293.15) < air.enhancement_factor(101_325.0, 293.15)


# --- CIPM-2007 density against CoolProp --------------------------------------------------------
def coolprop_density(temperature, pressure, vapour_mole_fraction):
    """CoolProp humid air (ASHRAE RP-1485, Herrmann et al. 2009) at the same water mole fraction.

    CoolProp defines relative humidity against ice below 0 °C, while we (like weather
    reports) use water. So we give CoolProp the water mole fraction x_v our side computed
    from e = RH · p_sv,water and the enhancement factor: both sides then describe the same
    gas, and the comparison tests the density law itself (Z, molar masses), not the choice
    of saturation reference. CoolProp refuses psi_w = 0 exactly; dry air goes in as R = 0.
    """
    if vapour_mole_fraction == 0.0:
        return 1.0 / HAPropsSI("Vha", "T", temperature, "P", pressure, "R", 0.0)
    return 1.0 / HAPropsSI("Vha", "T", temperature, "P", pressure, "psi_w", vapour_mole_fraction)


DENSITY_GRID = [
    (celsius, hpa, rh)
    for celsius in (-10.0, 0.0, 10.0, 20.0, 30.0, 40.0)
    for hpa in (600.0, 750.0, 900.0, 1050.0)
    for rh in (0.0, 0.5, 1.0)
]


@pytest.mark.parametrize("celsius, hpa, relative_humidity", DENSITY_GRID)
def test_moist_air_density_against_coolprop(celsius, hpa, relative_humidity):
    # CoolProp HAPropsSI 'Vha' (volume per kg humid air), 3e-4 relative (the task's tolerance).
    temperature, pressure = celsius + C0, hpa * 100.0
    vapour = air.vapour_pressure_from_relative_humidity(relative_humidity, temperature)
    x_v = float(air.vapour_mole_fraction(vapour, pressure, temperature))
    expected = coolprop_density(temperature, pressure, x_v)
    assert air.moist_air_density(pressure, temperature, vapour) == pytest.approx(expected, rel=3e-4)


@pytest.mark.parametrize(
    "celsius, hpa, relative_humidity",
    [(-40.0, 600.0, 1.0), (-25.0, 1100.0, 0.5), (50.0, 600.0, 1.0), (50.0, 1100.0, 1.0)],
)
def test_moist_air_density_against_coolprop_at_the_edges(celsius, hpa, relative_humidity):
    # The edges of the range in which this module uses CIPM-2007 without a warning.
    temperature, pressure = celsius + C0, hpa * 100.0
    vapour = air.vapour_pressure_from_relative_humidity(relative_humidity, temperature)
    x_v = float(air.vapour_mole_fraction(vapour, pressure, temperature))
    with warnings.catch_warnings():
        warnings.simplefilter("error", air.OutOfRangeWarning)  # inside the range: no warning
        result = air.moist_air_density(pressure, temperature, vapour)
    assert result == pytest.approx(coolprop_density(temperature, pressure, x_v), rel=3e-4)


@pytest.mark.parametrize(
    "celsius, hpa, relative_humidity", [(-5.0, 700.0, 0.8), (20.0, 1013.25, 0.5), (35.0, 850.0, 0.9)]
)
def test_dry_air_partial_density_and_compressibility_against_coolprop(celsius, hpa, relative_humidity):
    # CoolProp 'Vda' is the volume per kg of dry air: its inverse is the dry-air partial
    # density. CoolProp 'Z' is the mixture's compressibility factor.
    temperature, pressure = celsius + C0, hpa * 100.0
    vapour = air.vapour_pressure_from_relative_humidity(relative_humidity, temperature)
    x_v = float(air.vapour_mole_fraction(vapour, pressure, temperature))
    dry = air.dry_air_partial_density(pressure, temperature, vapour)
    assert dry == pytest.approx(1.0 / HAPropsSI("Vda", "T", temperature, "P", pressure, "psi_w", x_v), rel=3e-4)
    z = air.compressibility_factor(pressure, temperature, x_v)
    assert z == pytest.approx(HAPropsSI("Z", "T", temperature, "P", pressure, "psi_w", x_v), abs=1e-4)
    assert dry < air.moist_air_density(pressure, temperature, vapour)


def test_outside_published_range_warns_not_clips():
    with pytest.warns(air.OutOfRangeWarning, match="moist-air density"):
        low = air.moist_air_density(50_000.0, 288.15, 0.0)
    assert low == pytest.approx(50_000.0 / 101_325.0 * air.moist_air_density(101_325.0, 288.15, 0.0), rel=2e-3)


# --- errors ----------------------------------------------------------------------------
def test_impossible_input_raises():
    with pytest.raises(ValueError, match="air_temperature must be positive"):
        air.moist_air_density(101_325.0, -5.0, 0.0)
    with pytest.raises(ValueError, match="station_pressure must be positive"):
        air.air_state(290.0, -1.0, relative_humidity=0.5)
    with pytest.raises(ValueError, match="fraction 0..1"):
        air.air_state(290.0, 90_000.0, relative_humidity=40.0)
    with pytest.raises(ValueError, match="fraction 0..1"):
        air.vapour_pressure_from_relative_humidity(-0.1, 290.0)
    with pytest.raises(ValueError, match="dew point cannot exceed"):
        air.air_state(290.0, 90_000.0, dew_point=291.0)
    with pytest.raises(ValueError, match="exactly one"):
        air.air_state(290.0, 90_000.0, relative_humidity=0.5, dew_point=280.0)
    with pytest.raises(ValueError, match="exactly one"):
        air.air_state(290.0, 90_000.0)


@pytest.mark.filterwarnings("ignore::tuning.air.OutOfRangeWarning")  # SAE J1349 range, not the subject
def test_dew_point_rounded_above_air_temperature_is_accepted():
    state = air.air_state(290.0, 90_000.0, dew_point=290.3)  # within 0.5 K of rounding
    assert 1.0 < state.relative_humidity < 1.03  # reported as given, not clipped


@pytest.mark.filterwarnings("ignore::tuning.air.OutOfRangeWarning")  # SAE J1349 range, not the subject
def test_missing_data_passes_through():
    state = air.air_state(np.array([290.0, np.nan]), 90_000.0, relative_humidity=0.5)
    assert np.isfinite(state.moist_air_density[0]) and np.isnan(state.moist_air_density[1])


# --- SAE J1349 and icing ----------------------------------------------------------------------
def test_sae_j1349_formula():
    # SAE J1349 Aug 2004: CF = 1.18 (99/p_d) sqrt(T/298) − 0.18; 1 at 99 kPa dry, 298 K.
    assert air.sae_j1349_correction_factor(99_000.0, 298.0) == pytest.approx(1.0, abs=1e-12)
    assert air.sae_j1349_correction_factor(99_000.0 / 1.05, 298.0) == pytest.approx(1.18 * 1.05 - 0.18)
    with pytest.warns(air.OutOfRangeWarning, match="SAE J1349"):
        mountain = air.sae_j1349_correction_factor(85_000.0, 298.0)
    assert mountain > 1.15  # less power in thin air: a correction above 1


@pytest.mark.parametrize(
    "celsius, dew_point_celsius, band",
    [(10.0, 9.0, 3), (15.0, 8.0, 2), (30.0, 16.0, 1), (35.0, 5.0, 0), (-20.0, -21.0, 0), (0.0, -3.0, 3)],
)
def test_carburetor_icing_bands(celsius, dew_point_celsius, band):
    # Our own bands (air.ICING_BANDS, from memory after the light-aircraft charts): the
    # points are chosen inside each band, so this checks the band logic, not the chart.
    assert air.carburetor_icing_risk(celsius + C0, dew_point_celsius + C0) == band


# --- air_state ----------------------------------------------------------------------------
@pytest.mark.filterwarnings("ignore::tuning.air.OutOfRangeWarning")  # SAE J1349 range, not the subject
def test_air_state_fields_and_broadcasting():
    temperature = np.linspace(270.0, 305.0, 48)[None, :]
    pressure = np.linspace(70_000.0, 101_000.0, 5)[:, None]
    state = air.air_state(temperature, pressure, relative_humidity=0.6)
    for name in air.AirState.__dataclass_fields__:
        value = getattr(state, name)
        assert isinstance(value, np.ndarray) and value.shape == (5, 48), name
    assert state.icing_risk.dtype.kind == "i"
    assert np.all(state.dry_air_density < state.moist_air_density)
    # Relative-humidity and dew-point inputs describe the same air.
    again = air.air_state(temperature, pressure, dew_point=state.dew_point)
    assert np.allclose(again.moist_air_density, state.moist_air_density, rtol=1e-12)
    assert np.allclose(again.relative_humidity, 0.6, rtol=1e-9)


@pytest.mark.filterwarnings("ignore::tuning.air.OutOfRangeWarning")  # SAE J1349 range, not the subject
def test_air_state_against_coolprop_one_point():
    # 1340 m site, 24 °C, 40 % (the CLI example): CoolProp at the same station pressure and
    # mole fraction.
    state = air.air_state(297.15, 86_500.0, relative_humidity=0.4)
    x_v = float(air.vapour_mole_fraction(state.vapour_pressure, 86_500.0, 297.15))
    assert float(state.moist_air_density) == pytest.approx(coolprop_density(297.15, 86_500.0, x_v), rel=3e-4)
    assert float(state.density_altitude) > float(state.pressure_altitude)  # warm air: thinner than ISA


# --- the air at another height (issue 13) --------------------------------------------------
# Carrying the table's air from one height to another must land on the table again: USSA_TABLE
# above (U.S. Standard Atmosphere 1976, table I, from memory), layer 0 (lapse 6.5 K/km).
_HEIGHT_PAIRS = [(a, b) for a in (0.0, 1000.0, 2000.0, 3000.0) for b in (0.0, 1000.0, 2000.0, 3000.0, 5000.0) if a != b]


def _table_row(z):
    return next(row for row in USSA_TABLE if row[0] == z)


@pytest.mark.parametrize(("from_z", "to_z"), _HEIGHT_PAIRS)
def test_carried_temperature_and_pressure_against_ussa_1976(from_z, to_z):
    """USSA-1976 table I (from memory): start from the table's T and p at one height, carry them
    with the standard lapse rate, and read the other height's printed T (±0.001 K, 3 decimals)
    and p (± one unit in the 5th digit)."""
    _, t0, p0, _, _ = _table_row(from_z)
    _, t1, p1, _, _ = _table_row(to_z)
    t = air.temperature_at_height(t0, from_z, to_z)
    p = air.pressure_at_height(p0, t0, from_z, to_z)
    assert t == pytest.approx(t1, abs=1.5e-3)  # both ends rounded to 3 decimals
    digit = 10.0 ** (np.floor(np.log10(p1)) - 4)
    assert p == pytest.approx(p1, abs=1.5 * digit)  # both ends rounded to 5 digits


@pytest.mark.parametrize(
    ("pressure_hpa", "rise_m"), [(1013.25, 500.0), (900.0, 1000.0), (850.0, -800.0), (800.0, 1500.0)]
)
def test_carried_pressure_against_metpy_add_height_to_pressure(pressure_hpa, rise_m):
    """MetPy's ``add_height_to_pressure`` (its standard atmosphere: 288 K at 1013.25 hPa, 6.5 K/km):
    start at the pressure's standard-atmosphere height and temperature. Tolerance 0.02 %: MetPy takes
    the heights as geopotential, we convert geometric ones (0.6 m in 1000 m at 2 km)."""
    p0 = metpy_units.Quantity(pressure_hpa, "hPa")
    z0 = metpy_calc.pressure_to_height_std(p0).m_as("m")
    t0 = 288.0 - 6.5e-3 * z0
    expected = metpy_calc.add_height_to_pressure(p0, metpy_units.Quantity(rise_m, "m")).m_as("Pa")
    got = air.pressure_at_height(pressure_hpa * 100.0, t0, z0, z0 + rise_m)
    assert got == pytest.approx(expected, rel=2e-4)


def test_carried_air_below_the_station_is_warmer_and_denser():
    """The direction that hurts engines: a route 500 m below the weather station is warmer by
    6.5 K/km × 0.5 km = 3.25 K (USSA-1976 lapse, table 4) yet denser, so it needs richer settings."""
    t, p, rh = 288.15 - 9.75, 84_559.0, 0.5  # USSA-1976 at 1500 m (from memory), half saturated
    t_low = air.temperature_at_height(t, 1500.0, 1000.0)
    p_low = air.pressure_at_height(p, t, 1500.0, 1000.0)
    assert t_low - t == pytest.approx(3.25, abs=0.002)  # 6.5 K/km; geopotential shortens 500 m by 0.2 m
    e = air.vapour_pressure_from_relative_humidity(rh, t)
    e_low = air.vapour_pressure_at_height(e, p, p_low, t_low)
    high, low = (
        air.air_state(t, p, dew_point=air.dew_point_from_vapour_pressure(e)),
        air.air_state(t_low, p_low, dew_point=air.dew_point_from_vapour_pressure(e_low)),
    )
    assert p_low > p
    assert low.dry_air_density[()] > high.dry_air_density[()] * 1.04  # USSA-1976: 1.1117 / 1.0581 - 1 = 5 %


def test_isothermal_lapse_rate_is_the_limit_of_small_ones():
    """Eq. 33b (Γ = 0) continues eq. 33a (USSA-1976): a lapse rate of 1e-7 K/m gives the same pressure."""
    tiny = air.pressure_at_height(90_000.0, 280.0, 1000.0, 2500.0, lapse_rate=1e-7)
    flat = air.pressure_at_height(90_000.0, 280.0, 1000.0, 2500.0, lapse_rate=0.0)
    assert tiny == pytest.approx(flat, rel=1e-7)
    # hypsometric equation by hand: scale height R T / g = 287.05 × 280 / 9.80665 = 8195.8 m (USSA constants)
    assert flat == pytest.approx(90_000.0 * np.exp(-1500.0 * 0.99976 / 8195.8), rel=2e-4)


@pytest.mark.parametrize(
    ("t_c", "rh", "rise_m"),
    [(10.0, 0.9, 1000.0), (25.0, 0.8, 2000.0), (5.0, 1.0, 800.0), (20.0, 0.3, -600.0), (0.0, 0.6, 1500.0)],
)
def test_carried_humidity_keeps_the_mixing_ratio_until_saturation(t_c, rh, rise_m):
    """MetPy's ``mixing_ratio_from_relative_humidity`` (independent): the mixing ratio is kept where
    the air stays unsaturated; where it would not, the relative humidity is 100 % (never more)."""
    t0, p0 = C0 + t_c, 90_000.0
    e0 = air.vapour_pressure_from_relative_humidity(rh, t0)
    t1 = air.temperature_at_height(t0, 1000.0, 1000.0 + rise_m)
    p1 = air.pressure_at_height(p0, t0, 1000.0, 1000.0 + rise_m)
    e1 = air.vapour_pressure_at_height(e0, p0, p1, t1)
    rh1 = air.relative_humidity_from_vapour_pressure(e1, t1)
    assert rh1 <= 1.0 + 1e-12

    def mixing(p, t, r):
        return metpy_calc.mixing_ratio_from_relative_humidity(
            metpy_units.Quantity(p, "Pa"), metpy_units.Quantity(t, "K"), metpy_units.Quantity(r, "")
        ).m_as("")

    w0 = mixing(p0, t0, air.relative_humidity_from_vapour_pressure(e0, t0))
    if rh1 < 1.0 - 1e-9:
        assert mixing(p1, t1, rh1) == pytest.approx(w0, rel=1e-3)  # MetPy's e_s differs slightly from CIPM's p_sv
    else:
        assert mixing(p1, t1, 1.0) < w0  # the surplus condensed
