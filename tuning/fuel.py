"""Fuel: stoichiometry from the elemental formula, alcohol blends, two-stroke premix.

Plain vectorised functions (numpy and :mod:`tuning.constants` only). Densities in kg/m³,
ratios as mass ratios (air–fuel) or volume fractions (blends), premix as fuel:oil by volume.
"""

from __future__ import annotations

import numpy as np

from tuning import constants as c

__all__ = ["stoichiometric_afr", "blend", "premix"]


def _result(value):
    return value[()] if isinstance(value, np.ndarray) and value.ndim == 0 else value


def stoichiometric_afr(carbon, hydrogen, oxygen=0.0):
    r"""Stoichiometric air–fuel mass ratio of a fuel of elemental formula CxHyOz.

    Parameters
    ----------
    carbon, hydrogen, oxygen : array_like
        Atoms of C, H and O per molecule (or per any formula unit) [1]; x > 0, y >= 0, z >= 0.

    Returns
    -------
    numpy.ndarray
        Mass of dry air per mass of fuel at stoichiometry [1].

    Notes
    -----
    Complete combustion :math:`\mathrm{C}_x\mathrm{H}_y\mathrm{O}_z + a\,(\mathrm{O_2} +
    3.773\,\mathrm{N_2}) \to x\,\mathrm{CO_2} + (y/2)\,\mathrm{H_2O} + 3.773\,a\,\mathrm{N_2}`
    with :math:`a = x + y/4 - z/2` (Heywood 1988, sec. 3.3, eq. 3.4 written for an
    oxygenated fuel), so

    .. math::

        (A/F)_s = \frac{a\,M_\mathrm{air}/x_{O_2}}{12.011x + 1.008y + 15.999z}

    where :math:`M_\mathrm{air}/x_{O_2}` is the mass of air (with its argon, counted in
    Heywood's "atmospheric nitrogen") that carries one mole of O2. Isooctane gives 15.13,
    ethanol 9.00, methanol 6.47, as in Heywood's table of fuel properties (appendix D).

    References
    ----------
    .. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988,
       section 3.3 (eqs. 3.3–3.4) and appendix D.
    """
    carbon = np.asarray(carbon, float)
    hydrogen = np.asarray(hydrogen, float)
    oxygen = np.asarray(oxygen, float)
    if np.any(carbon <= 0.0) or np.any(hydrogen < 0.0) or np.any(oxygen < 0.0):
        raise ValueError(
            f"an elemental formula needs carbon > 0 and hydrogen, oxygen >= 0; got C{carbon} H{hydrogen} O{oxygen}"
        )
    oxygen_moles = carbon + hydrogen / 4.0 - oxygen / 2.0
    if np.any(oxygen_moles <= 0.0):
        raise ValueError("the formula needs no air to burn (oxygen >= 2 carbon + hydrogen / 2)")
    fuel_mass = c.CARBON_MOLAR_MASS * carbon + c.HYDROGEN_MOLAR_MASS * hydrogen + c.OXYGEN_MOLAR_MASS * oxygen
    return _result(oxygen_moles * c.AIR_MASS_PER_MOLE_O2 / fuel_mass)


def _fraction(value, name):
    value = np.asarray(value, float)
    if np.any((value < 0.0) | (value > 1.0)):
        raise ValueError(
            f"{name} must be a fraction 0..1 (10 % as 0.10), got {np.ravel(value[(value < 0) | (value > 1)])[0]:g}"
        )
    return value


def blend(
    ethanol_volume_fraction=0.0, methanol_volume_fraction=0.0, base_afr=c.GASOLINE_AFR, base_density=c.GASOLINE_DENSITY
):
    r"""Stoichiometric air–fuel ratio and density of gasoline blended with alcohols by volume.

    Parameters
    ----------
    ethanol_volume_fraction, methanol_volume_fraction : array_like
        Volume fraction of ethanol and of methanol in the blend [1] (E10: 0.10).
    base_afr : array_like
        Stoichiometric air–fuel ratio of the alcohol-free base fuel [1] (gasoline 14.7,
        common practice).
    base_density : array_like
        Density of the base fuel [kg/m³].

    Returns
    -------
    stoichiometric_afr : numpy.ndarray
        Of the blend [1].
    density : numpy.ndarray
        Of the blend [kg/m³].

    Notes
    -----
    Volumes become masses with each component's density; the air needed is the mass-weighted
    sum, :math:`(A/F)_s = \sum_i w_i (A/F)_{s,i}`, with the alcohols' ratios from
    :func:`stoichiometric_afr`. The blend's density is the volume-weighted sum (ideal mixing;
    the excess volume of ethanol–gasoline blends is a few parts per thousand and is
    neglected). Alcohol densities at 20 °C from the CRC Handbook.

    References
    ----------
    .. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988,
       section 3.3 and appendix D.
    """
    ethanol = _fraction(ethanol_volume_fraction, "ethanol_volume_fraction")
    methanol = _fraction(methanol_volume_fraction, "methanol_volume_fraction")
    base = 1.0 - ethanol - methanol
    if np.any(base < -1e-12):
        raise ValueError("ethanol and methanol volume fractions add up to more than 1")
    base = np.maximum(base, 0.0)  # only removes round-off below -1e-12 checked above
    base_afr = np.asarray(base_afr, float)
    base_density = np.asarray(base_density, float)
    if np.any(base_afr <= 0.0) or np.any(base_density <= 0.0):
        raise ValueError("base_afr and base_density must be positive")
    masses = (base * base_density, ethanol * c.ETHANOL_DENSITY, methanol * c.METHANOL_DENSITY)
    afrs = (base_afr, stoichiometric_afr(*c.ETHANOL_FORMULA), stoichiometric_afr(*c.METHANOL_FORMULA))
    total_mass = masses[0] + masses[1] + masses[2]
    afr = (masses[0] * afrs[0] + masses[1] * afrs[1] + masses[2] * afrs[2]) / total_mass
    return _result(afr), _result(np.asarray(total_mass))


def premix(
    stoichiometric_afr,
    fuel_density,
    premix_ratio,
    *,
    oil_density=c.PREMIX_OIL_DENSITY,
    oil_counts_as_fuel=False,
    oil_stoichiometric_afr=None,
):
    r"""Stoichiometric ratio and density of the liquid a two-stroke carburetor meters.

    Parameters
    ----------
    stoichiometric_afr : array_like
        Of the fuel before oil is added [1].
    fuel_density : array_like
        Of the fuel [kg/m³].
    premix_ratio : array_like or None
        Fuel : oil by volume [1], 32 for 32:1; ``None`` or 0 for no oil (four-strokes,
        oil-injected engines).
    oil_density : array_like, keyword-only
        Density of the premix oil [kg/m³] (typical 870, from memory).
    oil_counts_as_fuel : bool, keyword-only
        False (default): the oil is carried through unburnt as far as the mixture is
        concerned, so a liquid with more oil holds less fuel and needs a larger jet. True:
        the oil burns with the air, at ``oil_stoichiometric_afr``.
    oil_stoichiometric_afr : array_like, optional, keyword-only
        Used only when ``oil_counts_as_fuel``; defaults to the fuel's own ratio.

    Returns
    -------
    stoichiometric_afr : numpy.ndarray
        Air per mass of the metered liquid at stoichiometry [1].
    density : numpy.ndarray
        Of the metered liquid [kg/m³].

    Notes
    -----
    Oil volume fraction :math:`v_o = 1/(r+1)`; oil mass fraction
    :math:`w_o = v_o\rho_o / ((1-v_o)\rho_f + v_o\rho_o)`; liquid density
    :math:`(1-v_o)\rho_f + v_o\rho_o`. Oil as non-fuel: :math:`(A/F)_{s,liquid} =
    (1-w_o)(A/F)_{s,fuel}`; oil as fuel: :math:`(1-w_o)(A/F)_{s,fuel} + w_o(A/F)_{s,oil}`.
    Whether premix oil takes part in the combustion that sets the mixture is not settled;
    the default errs rich (a larger jet for more oil).
    """
    afr = np.asarray(stoichiometric_afr, float)
    density = np.asarray(fuel_density, float)
    if premix_ratio is None:
        return _result(afr), _result(density)
    ratio = np.asarray(premix_ratio, float)
    if np.any(ratio < 0.0):
        raise ValueError(f"premix_ratio is fuel:oil by volume (32 for 32:1), 0 or None for none; got {np.min(ratio):g}")
    oil_density = np.asarray(oil_density, float)
    with np.errstate(divide="ignore"):
        oil_volume = np.where(ratio > 0.0, 1.0 / (ratio + 1.0), 0.0)
    oil_mass = oil_volume * oil_density
    liquid_density = (1.0 - oil_volume) * density + oil_mass
    oil_mass_fraction = oil_mass / liquid_density
    liquid_afr = (1.0 - oil_mass_fraction) * afr
    if oil_counts_as_fuel:
        oil_afr = afr if oil_stoichiometric_afr is None else np.asarray(oil_stoichiometric_afr, float)
        liquid_afr = liquid_afr + oil_mass_fraction * oil_afr
    return _result(liquid_afr), _result(liquid_density)
