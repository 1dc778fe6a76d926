"""The air over the hours of the sessions, and at each bike's reference.

Session hours are the start, every whole hour between, and the end; the weather is
interpolated linearly in time (never extrapolated) and converted to the station pressure with
the site's elevation (:func:`tuning.air.station_pressure`).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import numpy as np

from tuning import air
from tuning.errors import UserError

__all__ = ["HOUR", "session_hours", "EventHours", "event_hours", "References", "references", "epoch"]

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


def air_for_conditions(conditions):
    """Air state (arrays of one) at a set of reference conditions."""
    p_station = air.station_pressure(
        conditions.pressure, conditions.pressure_kind, conditions.elevation, conditions.air_temperature
    )
    humidity = ({"relative_humidity": np.atleast_1d(float(conditions.relative_humidity))}
                if conditions.relative_humidity is not None
                else {"dew_point": np.atleast_1d(float(conditions.dew_point))})
    return air.air_state(np.atleast_1d(float(conditions.air_temperature)), np.atleast_1d(p_station), **humidity)


@dataclass(frozen=True)
class EventHours:
    """Every session's hours, end to end, and the air at each.

    ``times`` (N,) [s UTC] holds the sessions' hours one session after another; session ``s``
    is ``times[offsets[s]:offsets[s+1]]``; ``index`` (S, H) and ``valid`` (S, H) pad them to the
    longest session. ``air`` is the :class:`tuning.air.AirState` at ``times``.
    """

    times: np.ndarray
    offsets: np.ndarray
    index: np.ndarray
    valid: np.ndarray
    air: object


def event_hours(event) -> EventHours:
    """The hours of every session of ``event`` and the air at each."""
    hours = [session_hours(s) for s in event.sessions]
    longest = max(len(h) for h in hours)
    times = np.concatenate(hours)
    offsets = np.cumsum([0] + [len(h) for h in hours])
    index = np.zeros((len(hours), longest), np.int64)
    valid = np.zeros((len(hours), longest), bool)
    for s, h in enumerate(hours):
        index[s, : len(h)] = offsets[s] + np.arange(len(h))
        valid[s, : len(h)] = True
    state = air_at(event.weather, event.site.elevation, times, str(event.source or event.name))
    return EventHours(times, offsets, index, valid, state)


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
        conditions=conditions, of_bike=of_bike, fleet=fleet_id,
        dry=np.array([float(s.dry_air_density[0]) for s in states]),
        moist=np.array([float(s.moist_air_density[0]) for s in states]),
        sae_cf=np.array([float(s.sae_j1349_cf[0]) for s in states]),
        states=states,
    )
