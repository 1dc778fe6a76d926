"""Tests of the circuit functions in tuning.circuits: needle annulus, series orifices, bands, screw.

Expected values are computed here from plane geometry and the orifice equation written out
in the test, not by calling the function under test a second time.
"""

import math

import numpy as np
import pytest

from tuning import circuits

# An invented needle (typical magnitudes, from memory): 2.50 mm straight, 2.62 mm needle jet,
# taper reaching the jet at 9 mm lift in groove 1, 1.5° included taper angle, 1 mm pitch.
GEOMETRY = dict(
    needle_jet=2.62e-3,
    straight_diameter=2.50e-3,
    taper_start=9.0e-3,
    taper_angle=math.radians(1.5),
    groove_pitch=1.0e-3,
)


def test_annulus_on_the_straight_part_is_the_ring_between_two_circles():
    # plane geometry: pi/4 (D^2 - d^2)
    expected = math.pi / 4 * (2.62e-3**2 - 2.50e-3**2)
    assert circuits.needle_annulus_area(2.0e-3, clip=1, **GEOMETRY) == pytest.approx(expected, rel=1e-12)


def test_annulus_on_the_taper_follows_the_cone():
    # clip 3: taper starts 2 mm earlier, at 7 mm; at 19 mm lift, 12 mm of taper pass the jet;
    # the diameter shrinks by 2 * 12 mm * tan(0.75°)
    d = 2.50e-3 - 2 * 12e-3 * math.tan(math.radians(0.75))
    expected = math.pi / 4 * (2.62e-3**2 - d**2)
    assert circuits.needle_annulus_area(19e-3, clip=3, **GEOMETRY) == pytest.approx(expected, rel=1e-12)


def test_lower_groove_is_richer_at_mid_throttle():
    # common practice: clip lower on the needle (higher groove number) raises the needle: richer
    areas = circuits.needle_annulus_area(0.5 * 38e-3, clip=np.arange(1, 6), **GEOMETRY)
    assert np.all(np.diff(areas) > 0)


def test_needle_too_thick_for_the_jet_raises():
    with pytest.raises(ValueError, match="needle"):
        circuits.needle_annulus_area(
            0.01,
            needle_jet=2.4e-3,
            straight_diameter=2.5e-3,
            taper_start=9e-3,
            taper_angle=0.02,
            groove_pitch=1e-3,
            clip=1,
        )


@pytest.mark.parametrize(
    "a1, a2, expected",
    [
        (1.0, 1.0, 1 / math.sqrt(2)),  # equal orifices: A/sqrt(2) from 1/A^2 = 2/A^2
        (3.0, 4.0, 12.0 / 5.0),  # 1/A^2 = 1/9 + 1/16 = 25/144
        (2.0, 1e12, 2.0),  # a huge second orifice does not restrict
        (0.0, 1.0, 0.0),  # a closed orifice passes nothing
    ],
)
def test_series_orifices_add_inverse_squares(a1, a2, expected):
    assert circuits.series_orifice_area(a1, a2) == pytest.approx(expected, rel=1e-9)


def test_circuit_weights_follow_the_throttle_bands():
    throttle = np.linspace(0, 1, 21)
    w = circuits.circuit_weights(throttle)
    assert w.shape == (21, 3)
    np.testing.assert_allclose(w.sum(axis=1), 1.0, rtol=1e-12)
    # common practice: pilot to about 1/4, needle 1/4..3/4, main 3/4..full
    assert np.argmax(w[0]) == 0 and np.argmax(w[10]) == 1 and np.argmax(w[20]) == 2
    # the pilot keeps flowing at larger openings
    assert w[20, 0] > 0


@pytest.mark.parametrize("turns", [0.25, 0.5, 1.0, 2.0])
def test_air_and_fuel_screws_work_in_reverse(turns):
    # common practice: an air screw turned out leans, a fuel screw turned out richens
    air_out = circuits.mixture_screw_area_factor(turns, "air")
    fuel_out = circuits.mixture_screw_area_factor(turns, "fuel")
    assert air_out < 1.0 < fuel_out
    assert air_out * fuel_out == pytest.approx(1.0)


def test_screw_kind_is_checked():
    with pytest.raises(ValueError, match="air' or 'fuel"):
        circuits.mixture_screw_area_factor(1.0, "idle")
