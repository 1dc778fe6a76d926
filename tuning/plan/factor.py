"""The required area factor of every bike in every hour of every session.

One row per bike × session (bike-major: the rows of a bike are its sessions in order), one
column per hour of the session (padded). The factor is the elementary carburetor's metering
law (:func:`tuning.metering.area_factor`) between the air and fuel at the event and at the bike's
reference, with the bike's density exponent and premix.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tuning import constants, fuel
from tuning.errors import UserError
from tuning.metering import area_factor
from tuning.plan.window import WindowLoss

__all__ = ["required_area_factor", "Metering", "metering", "Rows", "rows_of"]


def metered_liquid(fuel_record, premix_ratio):
    """(stoichiometric AFR [1], density [kg/m³]) of what the jets meter: fuel, with premix oil if any."""
    afr, density = fuel_record.stoichiometric_afr, fuel_record.density
    if premix_ratio is None:
        return float(afr), float(density)
    afr, density = fuel.premix(afr, density, premix_ratio)
    return float(afr), float(density)


def required_area_factor(
    event_air,
    reference_air,
    event_fuel,
    reference_fuel,
    *,
    premix_ratio=None,
    reference_premix_ratio=None,
    density_exponent=constants.METERING_LAW_EXPONENT,
):
    """Area factor that keeps the reference mixture (thin wrapper of :func:`tuning.metering.area_factor`).

    Parameters
    ----------
    event_air, reference_air : tuning.air.AirState
        Air at the event and at the reference (densities in kg/m³).
    event_fuel, reference_fuel : tuning.config.model.Fuel
        Fuel as pumped.
    premix_ratio : float or None
        Fuel:oil volume ratio at the event [1]; None = no premix.
    reference_premix_ratio : float or None
        At the reference; defaults to ``premix_ratio``.
    density_exponent : float
        Exponent on the air density ratio [1].

    Returns
    -------
    numpy.ndarray
        Required factor [1], shaped like the event air arrays.
    """
    if reference_premix_ratio is None:
        reference_premix_ratio = premix_ratio
    afr_e, rho_e = metered_liquid(event_fuel, premix_ratio)
    afr_r, rho_r = metered_liquid(reference_fuel, reference_premix_ratio)
    return area_factor(
        event_air.dry_air_density,
        reference_air.dry_air_density,
        event_air.moist_air_density,
        reference_air.moist_air_density,
        rho_e,
        rho_r,
        afr_e,
        afr_r,
        density_exponent,
    )


@dataclass(frozen=True)
class Metering:
    """Per bike (B,): stoichiometric AFR [1] and density [kg/m³] of the metered liquid at the
    event and at the reference, and the density exponent [1]."""

    afr_event: np.ndarray
    rho_event: np.ndarray
    afr_reference: np.ndarray
    rho_reference: np.ndarray
    exponent: np.ndarray


def _fuel(fleet, name, where):
    try:
        return fleet.fuels[name]
    except KeyError:
        known = ", ".join(sorted(fleet.fuels)) or "none"
        raise UserError(
            f"{where}: fuel {name!r} is not in the fleet's fuels (known: {known}); add it or fix the name"
        ) from None


def metering(fleet, event) -> Metering:
    """The metered liquid of every bike at the event and at its reference."""
    n = len(fleet.bikes)
    out = np.empty((4, n))
    cache = {}
    where_event = str(event.source or event.name)
    for i, bike in enumerate(fleet.bikes):
        ref_name = bike.reference.fuel
        key = (ref_name, event.fuel or ref_name, bike.premix_ratio)
        if key not in cache:
            where = f"{fleet.source or fleet.name}: bikes[{bike.id}]"
            ref_fuel = _fuel(fleet, ref_name, where + ".reference.fuel")
            ev_fuel = _fuel(fleet, key[1], f"{where_event}: fuel")
            cache[key] = (*metered_liquid(ev_fuel, bike.premix_ratio), *metered_liquid(ref_fuel, bike.premix_ratio))
        out[:, i] = cache[key]
    exponent = np.array([float(b.density_exponent) for b in fleet.bikes])
    return Metering(out[0], out[1], out[2], out[3], exponent)


@dataclass(frozen=True)
class Rows:
    """One row per bike × session, bike-major.

    ``bike`` and ``session`` (R,) index the fleet's bikes and the event's sessions; ``index``
    and ``valid`` (R, H) point into the event's hours; ``required`` (R, H) is the required area
    factor [1] (NaN at padding) and ``window`` its :class:`WindowLoss`. ``index`` points at
    samples (hours × heights, :class:`tuning.plan.hours.EventHours`); ``weight`` (R, H) holds
    their shares where some session is ridden over several heights, else None (every sample 1).
    """

    bike: np.ndarray
    session: np.ndarray
    index: np.ndarray
    valid: np.ndarray
    required: np.ndarray
    window: WindowLoss
    n_bikes: int
    n_sessions: int
    weight: np.ndarray | None = None

    @property
    def largest(self) -> np.ndarray:
        """The largest required factor of each row [1] (its densest hour)."""
        return self.window.largest


def rows_of(fleet, hours, refs, meter) -> Rows:
    """The rows and their required factors (vectorised over bikes × sessions × hours)."""
    n_bikes, n_sessions = len(fleet.bikes), len(hours.offsets) - 1
    bike = np.repeat(np.arange(n_bikes), n_sessions)
    session = np.tile(np.arange(n_sessions), n_bikes)
    index, valid = hours.index[session], hours.valid[session]
    ref = refs.of_bike[bike]
    dry = np.asarray(hours.air.dry_air_density, float)[index]
    moist = np.asarray(hours.air.moist_air_density, float)[index]
    required = area_factor(
        dry,
        refs.dry[ref][:, None],
        moist,
        refs.moist[ref][:, None],
        meter.rho_event[bike][:, None],
        meter.rho_reference[bike][:, None],
        meter.afr_event[bike][:, None],
        meter.afr_reference[bike][:, None],
        meter.exponent[bike][:, None],
    )
    required = np.where(valid, required, np.nan)
    weight = None
    if hours.weighted:
        weight = np.where(valid, np.asarray(hours.weight, float)[index], 0.0)
    window = WindowLoss(np.where(valid, required, 1.0), valid, weight)
    return Rows(bike, session, index, valid, required, window, n_bikes, n_sessions, weight)
