"""The elementary carburetor's metering law and jet numbers (numpy and constants only).

One venturi depression drives both the air and the fuel flow. For an unchanged equivalence
ratio between a reference state (where the settings were proven) and an event state, the
effective fuel-orifice area must change by the *area factor* computed here. How the fuel is
shared between the carburetor's circuits (pilot, needle, main) is :mod:`tuning.circuits`.
"""

from __future__ import annotations

import numpy as np

from tuning import constants as c

__all__ = ["area_factor", "jet_number_for_area_factor", "area_factor_between_jets", "DIAMETER_CODE_STEP"]

#: What one unit of a diameter-coded jet number is: its bore in 0.01 mm [m] (common practice).
DIAMETER_CODE_STEP = 1e-5


def area_factor(
    dry_air_density_event,
    dry_air_density_reference,
    moist_air_density_event,
    moist_air_density_reference,
    fuel_density_event=1.0,
    fuel_density_reference=1.0,
    stoichiometric_afr_event=1.0,
    stoichiometric_afr_reference=1.0,
    density_exponent=c.METERING_LAW_EXPONENT,
):
    r"""Effective jet-area factor that keeps the reference mixture at the event state.

    Parameters
    ----------
    dry_air_density_event, dry_air_density_reference : array_like
        Partial density of the dry air (the oxygen-carrying part) [kg/m³].
    moist_air_density_event, moist_air_density_reference : array_like
        Density of the moist air that passes the venturi [kg/m³].
    fuel_density_event, fuel_density_reference : array_like
        Density of the metered liquid (fuel, with premix oil where present) [kg/m³].
    stoichiometric_afr_event, stoichiometric_afr_reference : array_like
        Stoichiometric air–fuel mass ratio of the metered liquid [1].
    density_exponent : array_like
        Exponent :math:`n` on the air density ratio [1]; 0.5 by the metering law
        (:data:`tuning.constants.METERING_LAW_EXPONENT`).

    Returns
    -------
    numpy.ndarray
        :math:`A_\mathrm{event} / A_\mathrm{ref}` [1]. Below 1: a smaller jet.

    Notes
    -----
    With the same venturi depression :math:`\Delta p \propto \rho_m v^2`, the air mass flow
    goes as :math:`\sqrt{\rho_m}` and the fuel mass flow through an orifice of area
    :math:`A` as :math:`A\sqrt{\rho_f}`; only the dry air burns fuel. Keeping the
    equivalence ratio gives

    .. math::

        \frac{A_e}{A_r} = \frac{\rho_{d,e}}{\rho_{d,r}}
            \left(\frac{\rho_{m,e}}{\rho_{m,r}}\right)^{n-1}
            \sqrt{\frac{\rho_{f,r}}{\rho_{f,e}}}
            \frac{\mathrm{AFR}_{s,r}}{\mathrm{AFR}_{s,e}}

    which for :math:`n = 0.5` is the law of the elementary carburetor and for dry air and
    the same fuel reduces to :math:`(\rho_e/\rho_r)^{n}`. Workshop practice corrects harder
    than the law; :math:`n` is the parameter that fleet history can calibrate.

    References
    ----------
    .. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988,
       section 7.2 (the elementary carburetor), eqs. 7.5–7.10.
    """
    dry_ratio = np.asarray(dry_air_density_event, float) / np.asarray(dry_air_density_reference, float)
    moist_ratio = np.asarray(moist_air_density_event, float) / np.asarray(moist_air_density_reference, float)
    n = np.asarray(density_exponent, float)
    fuel_term = np.sqrt(np.asarray(fuel_density_reference, float) / np.asarray(fuel_density_event, float))
    afr_term = np.asarray(stoichiometric_afr_reference, float) / np.asarray(stoichiometric_afr_event, float)
    return dry_ratio * moist_ratio ** (n - 1.0) * fuel_term * afr_term


def jet_number_for_area_factor(jet_number, factor, coding):
    """Jet number that delivers ``factor`` times the area of ``jet_number``.

    Parameters
    ----------
    jet_number : array_like
        Current jet number [1] in the family's coding.
    factor : array_like
        Effective area factor [1].
    coding : {"diameter", "flow"}
        ``diameter``: the number is the orifice diameter in 0.01 mm, so it scales with
        the square root of the area; ``flow``: the number is proportional to flow, so it
        scales with the area itself.

    Returns
    -------
    numpy.ndarray
        The (continuous) ideal jet number [1].
    """
    jet_number = np.asarray(jet_number, float)
    factor = np.asarray(factor, float)
    if coding == "diameter":
        return jet_number * np.sqrt(factor)
    if coding == "flow":
        return jet_number * factor
    raise ValueError(f"jet coding must be 'diameter' or 'flow', got {coding!r}")


def area_factor_between_jets(jet_from, jet_to, coding):
    """Area factor delivered by changing from jet ``jet_from`` to ``jet_to`` [1].

    The inverse of :func:`jet_number_for_area_factor`.
    """
    ratio = np.asarray(jet_to, float) / np.asarray(jet_from, float)
    if coding == "diameter":
        return ratio**2
    if coding == "flow":
        return ratio
    raise ValueError(f"jet coding must be 'diameter' or 'flow', got {coding!r}")
