"""The metering law of tuning.metering (area_factor, jet_number_for_area_factor,
area_factor_between_jets), checked against the elementary-carburetor law (Heywood 1988,
sec. 7.2) worked by hand, and its direction for humidity, alcohol and premix oil."""

from __future__ import annotations

import numpy as np
import pytest

from tuning import air, constants, fuel, metering


def test_dry_density_ratio_081_needs_area_factor_090():
    # Elementary carburetor (Heywood 1988, sec. 7.2): same fuel, dry air, A_e/A_r = sqrt(rho_e/rho_r);
    # sqrt(0.81) = 0.90 exactly.
    factor = metering.area_factor(0.81, 1.0, 0.81, 1.0)
    assert factor == pytest.approx(0.90, rel=1e-12)


def test_diameter_coded_160_becomes_151_8():
    # Diameter-coded number (0.01 mm) scales with sqrt(area): 160 · 0.81^0.25 = 151.79.
    factor = metering.area_factor(0.81, 1.0, 0.81, 1.0)
    assert metering.jet_number_for_area_factor(160, factor, "diameter") == pytest.approx(151.8, abs=0.05)


def test_flow_coded_number_scales_with_area():
    # Flow-coded number scales with the area itself: 160 · 0.90 = 144.
    factor = metering.area_factor(0.81, 1.0, 0.81, 1.0)
    assert metering.jet_number_for_area_factor(160, factor, "flow") == pytest.approx(144.0)


@pytest.mark.parametrize("coding", ["diameter", "flow"])
def test_area_factor_between_jets_inverts_jet_number(coding):
    factor = np.array([0.7, 0.9, 1.0, 1.15])
    jet = metering.jet_number_for_area_factor(150.0, factor, coding)
    assert np.allclose(metering.area_factor_between_jets(150.0, jet, coding), factor)


def test_unknown_coding_raises():
    with pytest.raises(ValueError, match="coding"):
        metering.jet_number_for_area_factor(150, 0.9, "size")
    with pytest.raises(ValueError, match="coding"):
        metering.area_factor_between_jets(150, 140, "size")


def test_density_exponent_for_dry_air():
    # For dry air and the same fuel the law reduces to (rho_e/rho_r)^n (tuning.metering Notes);
    # n = 1 is the "correct harder" end of workshop practice.
    ratio = np.array([0.7, 0.85, 1.1])
    for n in (0.5, 0.75, 1.0):
        assert np.allclose(metering.area_factor(ratio, 1.0, ratio, 1.0, density_exponent=n), ratio**n)


def _same_moist_density_humid_state(target_density, air_temperature, relative_humidity):
    """Station pressure at which humid air has the given total density (fixed point)."""
    pressure = 90_000.0
    for _ in range(6):
        vapour = air.vapour_pressure_from_relative_humidity(relative_humidity, air_temperature)
        pressure *= target_density / air.moist_air_density(pressure, air_temperature, vapour)
    return pressure, vapour


def test_humid_air_at_the_same_total_density_needs_a_smaller_jet():
    # From the law: the same moist density gives the same venturi air flow, but water vapour
    # displaces oxygen-carrying dry air, so less fuel is wanted: factor below 1.
    temperature = 303.15
    dry_density = air.moist_air_density(90_000.0, temperature, 0.0)
    pressure, vapour = _same_moist_density_humid_state(dry_density, temperature, 0.9)
    humid_moist = air.moist_air_density(pressure, temperature, vapour)
    humid_dry = air.dry_air_partial_density(pressure, temperature, vapour)
    assert humid_moist == pytest.approx(dry_density, rel=1e-9)
    factor = metering.area_factor(humid_dry, dry_density, humid_moist, dry_density)
    assert factor < 1.0
    # by the law: exactly the dry-air fraction of the humid mixture.
    assert factor == pytest.approx(humid_dry / humid_moist, rel=1e-12)


def test_e10_instead_of_e0_needs_a_larger_jet():
    # Ethanol carries its own oxygen (AFR 9.0): E10 needs more fuel mass per air mass, so the
    # factor is above 1 despite the denser fuel.
    e0_afr, e0_density = fuel.blend(0.0)
    e10_afr, e10_density = fuel.blend(0.10)
    factor = metering.area_factor(1.0, 1.0, 1.0, 1.0, e10_density, e0_density, e10_afr, e0_afr)
    assert factor > 1.0
    assert factor == pytest.approx(np.sqrt(e0_density / e10_density) * e0_afr / e10_afr)


def test_more_premix_oil_needs_a_larger_jet():
    # Oil counted as non-fuel (the default): a 32:1 liquid carries less fuel than 50:1.
    reference = fuel.premix(constants.GASOLINE_AFR, constants.GASOLINE_DENSITY, 50)
    event = fuel.premix(constants.GASOLINE_AFR, constants.GASOLINE_DENSITY, 32)
    factor = metering.area_factor(1.0, 1.0, 1.0, 1.0, event[1], reference[1], event[0], reference[0])
    assert factor > 1.0


def test_area_factor_broadcasts_over_hours_and_bikes():
    hours = np.linspace(0.85, 0.95, 48)[None, :]
    bikes = np.linspace(1.0, 1.1, 10)[:, None]
    assert metering.area_factor(hours, bikes, hours, bikes).shape == (10, 48)
