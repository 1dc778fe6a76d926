"""The air over the hours of the sessions, and at each bike's reference.

Session hours are the start, every whole hour between, and the end; the weather is
interpolated linearly in time (never extrapolated) and converted to the station pressure with
the elevation where it holds (:func:`tuning.air.station_pressure`; the site's unless the event
gives ``weather_elevation``).

A session ridden over a range of heights (``Session.heights``) has a *sample* for every hour at
every height of its profile, weighted by the share of the time spent at that height: the air is
carried from the forecast's elevation to each height (:func:`tuning.air.temperature_at_height`,
:func:`tuning.air.pressure_at_height`, :func:`tuning.air.vapour_pressure_at_height`, with the
event's lapse rate). A session without one is ridden at the site's elevation, one sample an hour
of weight 1, exactly as before.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import numpy as np

from tuning import air, constants
from tuning.errors import UserError

__all__ = ["HOUR", "session_hours", "EventHours", "event_hours", "air_at_heights", "References", "references", "epoch"]

HOUR = 3600  #: [s]


def epoch(moment: datetime) -> int:
    """Seconds since 1970 (UTC) of an aware datetime."""
    if moment.tzinfo is None:
        raise UserError(f"session time {moment.isoformat()} has no time zone; give it with an offset")
    return int(round(moment.timestamp()))


def session_hours(session) -> np.ndarray:
    """Times of a session's hours [s since 1970, UTC]: start, every whole hour between, end."""
    start, end = epoch(session.start), epoch(session.end)
    if end <= start:
        raise UserError(f"session {session.name!r}: end {session.end.isoformat()} is not after start")
    first = -(-start // HOUR) * HOUR
    inner = np.arange(first, end, HOUR, dtype=np.int64)
    inner = inner[(inner > start) & (inner < end)]
    return np.concatenate([[start], inner, [end]]).astype(np.int64)


def air_at(weather, elevation, times, where):
    """Air state at ``times`` [s UTC], weather interpolated linearly in time."""
    wt = np.asarray(weather.time).astype("datetime64[s]").astype(np.int64)
    if len(wt) == 0:
        raise UserError(f"{where}: the weather table has no rows; give an hourly forecast covering the sessions")
    if times.min() < wt[0] or times.max() > wt[-1]:
        have = f"{np.datetime64(int(wt[0]), 's')}Z..{np.datetime64(int(wt[-1]), 's')}Z"
        need = f"{np.datetime64(int(times.min()), 's')}Z..{np.datetime64(int(times.max()), 's')}Z"
        raise UserError(
            f"{where}: the weather covers {have} but the sessions need {need}; "
            "extend the weather table (carbfleet does not extrapolate)"
        )
    temperature = np.interp(times, wt, np.asarray(weather.air_temperature, float))
    pressure = np.interp(times, wt, np.asarray(weather.pressure, float))
    humidity = np.interp(times, wt, np.asarray(weather.humidity, float))
    p_station = air.station_pressure(pressure, weather.pressure_kind, elevation, temperature)
    if weather.humidity_kind == "relative":
        return air.air_state(temperature, p_station, relative_humidity=humidity)
    return air.air_state(temperature, p_station, dew_point=humidity)


def air_at_heights(weather, forecast_elevation, times, elevations, lapse_rate, where):
    """Air state at ``times`` [s UTC] and ``elevations`` [m] (one each per sample), the forecast
    holding at ``forecast_elevation`` and carried along ``lapse_rate`` [K/m].

    Samples at the forecast's own elevation get exactly :func:`air_at`'s values.
    """
    elevations = np.asarray(elevations, float)
    at_forecast = air_at(weather, forecast_elevation, times, where)
    moved = elevations != forecast_elevation
    if not moved.any():
        return at_forecast
    t0, p0 = at_forecast.air_temperature[moved], at_forecast.station_pressure[moved]
    z = elevations[moved]
    t1 = air.temperature_at_height(t0, forecast_elevation, z, lapse_rate)
    p1 = air.pressure_at_height(p0, t0, forecast_elevation, z, lapse_rate)
    e1 = air.vapour_pressure_at_height(at_forecast.vapour_pressure[moved], p0, p1, t1)
    carried = air.air_state(t1, p1, dew_point=np.maximum(air.dew_point_from_vapour_pressure(e1), 1.0))
    merged = {}
    for name in at_forecast.__dataclass_fields__:
        value = np.array(getattr(at_forecast, name), copy=True)
        value[moved] = getattr(carried, name)
        merged[name] = value
    return type(at_forecast)(**merged)


def air_for_conditions(conditions):
    """Air state (arrays of one) at a set of reference conditions."""
    p_station = air.station_pressure(
        conditions.pressure, conditions.pressure_kind, conditions.elevation, conditions.air_temperature
    )
    humidity = (
        {"relative_humidity": np.atleast_1d(float(conditions.relative_humidity))}
        if conditions.relative_humidity is not None
        else {"dew_point": np.atleast_1d(float(conditions.dew_point))}
    )
    return air.air_state(np.atleast_1d(float(conditions.air_temperature)), np.atleast_1d(p_station), **humidity)


@dataclass(frozen=True)
class EventHours:
    """Every session's samples (hours × heights), end to end, and the air at each.

    ``times`` (N,) [s UTC] holds the sessions' samples one session after another, height by
    height (all hours at the profile's first height, then at the next); session ``s`` is
    ``times[offsets[s]:offsets[s+1]]``; ``index`` (S, H) and ``valid`` (S, H) pad them to the
    longest session. ``elevation`` (N,) [m] and ``weight`` (N,) [1] give each sample's height
    and share of its hour (1 where a session is ridden at one height). ``levels[s]`` are the
    heights of session ``s`` and ``hours_per_level[s]`` its hours. ``air`` is the
    :class:`tuning.air.AirState` of the samples. ``weighted`` is False when every weight is 1.
    """

    times: np.ndarray
    offsets: np.ndarray
    index: np.ndarray
    valid: np.ndarray
    air: object
    elevation: np.ndarray | None = None
    weight: np.ndarray | None = None
    levels: tuple = ()
    hours_per_level: tuple = ()
    weighted: bool = False


def _profile(session, site_elevation):
    """(heights [m], shares [1]) where ``session`` is ridden."""
    heights = session.heights
    if heights is None:
        return np.array([float(site_elevation)]), np.array([1.0])
    return np.asarray(heights.elevations, float), np.asarray(heights.shares, float)


def event_hours(event) -> EventHours:
    """The samples (hours × heights) of every session of ``event`` and the air at each."""
    hours = [session_hours(s) for s in event.sessions]
    profiles = [_profile(s, event.site.elevation) for s in event.sessions]
    samples = [np.tile(h, len(z)) for h, (z, _) in zip(hours, profiles)]
    elevation = np.concatenate([np.repeat(z, len(h)) for h, (z, _) in zip(hours, profiles)])
    weight = np.concatenate([np.repeat(w, len(h)) for h, (_, w) in zip(hours, profiles)])
    longest = max(len(t) for t in samples)
    times = np.concatenate(samples)
    offsets = np.cumsum([0] + [len(t) for t in samples])
    index = np.zeros((len(samples), longest), np.int64)
    valid = np.zeros((len(samples), longest), bool)
    for s, t in enumerate(samples):
        index[s, : len(t)] = offsets[s] + np.arange(len(t))
        valid[s, : len(t)] = True
    lapse = constants.STANDARD_LAPSE_RATE if event.lapse_rate is None else event.lapse_rate
    where = str(event.source or event.name)
    state = air_at_heights(event.weather, event.forecast_elevation, times, elevation, lapse, where)
    return EventHours(
        times,
        offsets,
        index,
        valid,
        state,
        elevation,
        weight,
        tuple(tuple(z.tolist()) for z, _ in profiles),
        tuple(len(h) for h in hours),
        not bool(np.all(weight == 1.0)),
    )


@dataclass(frozen=True)
class References:
    """The distinct reference conditions of a fleet and the air at each.

    ``conditions`` lists them; ``of_bike`` (B,) indexes each bike's; ``fleet`` is the fleet's
    own; ``dry``, ``moist`` [kg/m³] and ``sae_cf`` [1] hold the air at each.
    """

    conditions: list
    of_bike: np.ndarray
    fleet: int
    dry: np.ndarray
    moist: np.ndarray
    sae_cf: np.ndarray
    states: list


def references(fleet) -> References:
    """The fleet's distinct reference conditions (equal ones counted once)."""
    conditions: list = []
    known: dict = {}  # frozen dataclasses: equal conditions hash alike

    def find(c) -> int:
        if c not in known:
            known[c] = len(conditions)
            conditions.append(c)
        return known[c]

    fleet_id = find(fleet.reference)
    of_bike = np.array([find(b.reference) for b in fleet.bikes], np.int64)
    states = [air_for_conditions(c) for c in conditions]
    return References(
        conditions=conditions,
        of_bike=of_bike,
        fleet=fleet_id,
        dry=np.array([float(s.dry_air_density[0]) for s in states]),
        moist=np.array([float(s.moist_air_density[0]) for s in states]),
        sae_cf=np.array([float(s.sae_j1349_cf[0]) for s in states]),
        states=states,
    )
