"""tuning.fuel against Heywood's tables and facts of the trade (each marked)."""

from __future__ import annotations

import numpy as np
import pytest

from tuning import constants, fuel


@pytest.mark.parametrize(
    "formula, expected, tolerance",
    [
        ((2, 6, 1), 9.0, 0.05),  # ethanol C2H6O: 9.0 (Heywood 1988, appendix D table; from memory)
        ((1, 4, 1), 6.47, 0.005),  # methanol CH4O: 6.47 (Heywood 1988, appendix D table; from memory)
        ((8, 18, 0), 15.1, 0.05),  # isooctane C8H18: 15.1 (Heywood 1988, appendix D table; from memory)
        ((1, 1.87, 0), 14.6, 0.05),  # "gasoline" CH1.87: 14.6 (Heywood 1988, sec. 3.3 example; from memory)
        ((1, 4, 0), 17.2, 0.05),  # methane CH4: 17.2 (Heywood 1988, appendix D table; from memory)
    ],
    ids=["ethanol", "methanol", "isooctane", "gasoline CH1.87", "methane"],
)
def test_stoichiometric_afr_against_heywood(formula, expected, tolerance):
    assert fuel.stoichiometric_afr(*formula) == pytest.approx(expected, abs=tolerance)


def test_stoichiometric_afr_vectorised():
    result = fuel.stoichiometric_afr(np.array([2.0, 1.0]), np.array([6.0, 4.0]), np.array([1.0, 1.0]))
    assert result.shape == (2,)
    assert result[0] > result[1]


def test_stoichiometric_afr_rejects_impossible_formulas():
    with pytest.raises(ValueError, match="carbon > 0"):
        fuel.stoichiometric_afr(0.0, 4.0)
    with pytest.raises(ValueError, match="needs no air"):
        fuel.stoichiometric_afr(1.0, 0.0, 2.0)  # CO2


def test_gasoline_trade_figure():
    # Gasoline 14.7:1 is the trade's figure (common practice); a real gasoline of H/C about
    # 1.8–2.0 lies within 1 % of it by the elemental formula (Heywood 1988, sec. 3.3).
    assert constants.GASOLINE_AFR == 14.7
    assert fuel.stoichiometric_afr(1.0, 1.8) < constants.GASOLINE_AFR * 1.01
    assert fuel.stoichiometric_afr(1.0, 2.0) > constants.GASOLINE_AFR * 0.99


def test_performance_target_is_rich():
    # About 12:1 for best power on a dirt bike (common practice): richer than stoichiometric,
    # an equivalence ratio between 1.1 and 1.3.
    assert constants.DEFAULT_REFERENCE_AFR == pytest.approx(12.0)
    assert 1.1 < constants.GASOLINE_AFR / constants.DEFAULT_REFERENCE_AFR < 1.3


def test_blend_without_alcohol_is_the_base_fuel():
    afr, density = fuel.blend()
    assert afr == pytest.approx(constants.GASOLINE_AFR)
    assert density == pytest.approx(constants.GASOLINE_DENSITY)


def test_pure_alcohols():
    # CRC Handbook densities at 20 °C: ethanol 789.3, methanol 791.4 kg/m³.
    afr, density = fuel.blend(ethanol_volume_fraction=1.0)
    assert density == pytest.approx(789.3)
    assert afr == pytest.approx(fuel.stoichiometric_afr(2, 6, 1))
    afr, density = fuel.blend(methanol_volume_fraction=1.0)
    assert density == pytest.approx(791.4)
    assert afr == pytest.approx(fuel.stoichiometric_afr(1, 4, 1))


def test_e10_by_mass_fractions():
    # E10 is about 14.1:1 (common practice). By hand: masses 0.9·740 = 666 and
    # 0.1·789.3 = 78.93 per litre-unit, w_E = 78.93/744.93 = 0.10596;
    # AFR = 0.89404·14.7 + 0.10596·9.0034 = 14.0964.
    afr, density = fuel.blend(0.10)
    assert afr == pytest.approx(14.1, abs=0.05)
    assert afr == pytest.approx(0.89404 * 14.7 + 0.10596 * 9.00345, abs=2e-4)
    assert density == pytest.approx(744.93)


def test_e85_common_practice_figure():
    # E85 about 9.8:1 (common practice).
    assert fuel.blend(0.85)[0] == pytest.approx(9.8, abs=0.1)


def test_blend_rejects_bad_fractions():
    with pytest.raises(ValueError, match="fraction 0..1"):
        fuel.blend(10.0)
    with pytest.raises(ValueError, match="more than 1"):
        fuel.blend(0.6, 0.6)


def test_premix_none_and_zero_leave_the_fuel_unchanged():
    assert fuel.premix(14.7, 740.0, None) == (14.7, 740.0)
    afr, density = fuel.premix(14.7, 740.0, 0)
    assert afr == pytest.approx(14.7) and density == pytest.approx(740.0)


def test_premix_32_to_1_by_hand():
    # 32:1 by volume: oil volume 1/33; oil mass 870/33 = 26.364, liquid 743.939 kg/m³,
    # oil mass fraction 0.035438; oil not burnt: AFR 14.7 · 0.964562 = 14.179.
    afr, density = fuel.premix(14.7, 740.0, 32, oil_density=870.0)
    assert density == pytest.approx((32 * 740.0 + 870.0) / 33)
    assert afr == pytest.approx(14.7 * (1 - 870.0 / (32 * 740.0 + 870.0)))


def test_more_oil_lowers_the_ratio_of_the_metered_liquid():
    afr, density = fuel.premix(14.7, 740.0, np.array([0.0, 100.0, 50.0, 32.0, 20.0]))
    assert np.all(np.diff(afr) < 0)
    assert np.all(np.diff(density) > 0)


def test_oil_counted_as_fuel():
    afr, _ = fuel.premix(14.7, 740.0, 32, oil_counts_as_fuel=True)
    assert afr == pytest.approx(14.7)  # burns like the fuel by default
    afr, _ = fuel.premix(14.7, 740.0, 32, oil_counts_as_fuel=True, oil_stoichiometric_afr=13.0)
    assert 14.6 < afr < 14.7


def test_premix_rejects_negative_ratio():
    with pytest.raises(ValueError, match="fuel:oil"):
        fuel.premix(14.7, 740.0, -32)
