"""The event file: name, site, sessions, optional fuel, and where the weather comes from.

Session times are ISO 8601 in the site's local time (``site.time_zone``, an IANA name); a
time with an offset (``2026-06-13T09:00+02:00``) is taken as written. ``site.time_zone`` may
be left out only when every session time (and every weather row) carries an offset.

``units`` (metric or us) and ``language`` (en or de) choose how the reports show numbers and
words; the command line's ``--units`` and ``--language`` win (:func:`tuning.config.display_for`).

``weather`` is either the path of a CSV table, relative to the event file (see
:mod:`tuning.config.weather`), or ``{metar: [report, ...]}``; it holds at ``weather_elevation``
(the site's elevation when left out).

Where the sessions are ridden (``elevation: {min, max}`` or ``route: file.gpx``, per session or for
the whole event) and ``lapse_rate``: :mod:`tuning.config.heights`.

Every session must lie inside the weather samples, with no gap longer than
:data:`tuning.config.weather.MAX_GAP` (3 hours) between samples inside the session: the plan
interpolates in time and never extrapolates.
"""

from __future__ import annotations

import zoneinfo
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from tuning.config import model
from tuning.config.fleet import CHANGE_POLICY, CHANGE_THRESHOLD, ELEVATION_RANGE, refuse_other_kind
from tuning.config.heights import LAPSE_RATE, WEATHER_ELEVATION, height_fields, profile_of
from tuning.config.limits import MAX_BIKE_HOURS, MAX_BIKE_SESSIONS, MAX_METAR_REPORTS, MAX_SESSIONS
from tuning.config.source import display_name, load_yaml
from tuning.config.spec import (
    INVALID,
    Choice,
    Context,
    Either,
    Field,
    Obj,
    Quantity,
    Sequence,
    Text,
    did_you_mean,
    known_list,
)
from tuning.config.weather import MAX_GAP, parse_local_time, read_metar, read_weather_csv
from tuning.display import LANGUAGES, UNIT_SYSTEMS
from tuning.errors import ConfigError

__all__ = ["load_event", "event_spec"]

SESSION = Obj(
    {
        "name": Field(Text("Name of the session, unique in the event."), True),
        "start": Field(Text("Start, ISO 8601 in the site's time zone unless an offset is given, e.g. '2026-06-13 09:00'."), True),
        "end": Field(Text("End, after the start."), True),
        **height_fields(),
    },
    description="A riding session.",
)

UNITS = Choice(UNIT_SYSTEMS, "Units of what people read (sheets, summary, index, terminal): metric (degC, m, hPa; "
               "the default) or us (degF, ft, inHg). The JSON and CSV files stay SI. The command line's --units wins.")
LANGUAGE = Choice(LANGUAGES, "Language of what people read: en (English, the default) or de (German, with a "
                  "decimal comma). The command line's --language wins.")


def event_spec() -> Obj:
    """The spec of the event file."""
    return Obj(
        {
            "event": Field(Text("Name of the event."), True),
            "site": Field(
                Obj(
                    {
                        "name": Field(Text("Name of the site."), True),
                        "elevation": Field(Quantity("m", "Elevation of the site above mean sea level.", *ELEVATION_RANGE), True),
                        "time_zone": Field(Text("IANA time zone of the site, e.g. Europe/Vienna; needed for times without an offset.")),
                    },
                    description="Where the event takes place.",
                ),
                True,
            ),
            "sessions": Field(Sequence(SESSION, "Sessions; they may not overlap.", 1), True),
            "fuel": Field(Text("Fuel used at the event (a name under the fleet's `fuels`); the reference fuel when left out.")),
            "change_policy": Field(CHANGE_POLICY),
            "change_threshold": Field(CHANGE_THRESHOLD),
            "weather": Field(
                Either(
                    scalar=Text("Path of the weather CSV table, relative to this file."),
                    mapping=Obj(
                        {"metar": Field(Sequence(Text("One METAR report (WMO FM 15)."), "METAR reports of the nearest station.", 1), True)},
                        description="METAR reports instead of a table.",
                    ),
                    description="Weather: a CSV path, or {metar: [reports]}.",
                    expected="a CSV path or a mapping {metar: [reports]}",
                ),
                True,
            ),
            "units": Field(UNITS),
            "language": Field(LANGUAGE),
            **height_fields(),
            "weather_elevation": Field(WEATHER_ELEVATION),
            "lapse_rate": Field(LAPSE_RATE),
        },
        description="A carbfleet event file.",
    )


def _zone(name: str | None, ctx: Context):
    if name is None:
        return None
    try:
        return zoneinfo.ZoneInfo(name)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, TypeError):
        hint = did_you_mean(name, zoneinfo.available_timezones())
        ctx.at_path("site.time_zone", f"unknown time zone '{name}'{hint}; give an IANA name such as Europe/Vienna")
        return False


def _fmt(t: datetime) -> str:
    return t.strftime("%Y-%m-%d %H:%M %z")


def load_event(path, fleet: model.Fleet | None = None) -> model.Event:
    """Read and check an event file and its weather.

    Parameters
    ----------
    path : str or os.PathLike
        The event YAML file. A weather CSV path in it is relative to this file.
    fleet : tuning.config.model.Fleet, optional
        When given, the event's ``fuel`` is checked against ``fleet.fuels``.

    Returns
    -------
    tuning.config.model.Event
        Sessions as aware datetimes, weather as UTC ``datetime64[s]`` and SI arrays.

    Raises
    ------
    tuning.errors.ConfigError
        Every problem of the event file and of its weather table, each ``file:line: field: problem``.
    """
    ctx = Context(display_name(path))
    root = load_yaml(path, {"sessions": (MAX_SESSIONS, "sessions")})
    refuse_other_kind(root, ctx.file, "event")
    ctx.lines[""] = root.start_mark.line + 1
    raw = event_spec().check(root, "", ctx)
    if raw is INVALID:
        raise ConfigError(ctx.problems)
    site = raw.get("site", {})
    zone = _zone(site.get("time_zone"), ctx)

    sessions: list[tuple[int, model.Session]] = []
    names: dict[str, int] = {}
    event_heights = profile_of(raw, "", path, ctx)
    for i, s in enumerate(raw.get("sessions", [])):
        if s is INVALID or not {"name", "start", "end"} <= s.keys():
            continue
        if s["name"] in names:
            ctx.at_path(f"sessions[{i}].name", f"session name '{s['name']}' is used twice (also sessions[{names[s['name']]}])")
        names.setdefault(s["name"], i)
        times = {}
        for key in ("start", "end"):
            try:
                # with an unknown zone (already reported) the order checks still run, in UTC
                times[key] = parse_local_time(s[key], zoneinfo.ZoneInfo("UTC") if zone is False else zone)
            except ValueError as exc:
                ctx.at_path(f"sessions[{i}].{key}", str(exc))
        if len(times) != 2:
            continue
        if times["end"] <= times["start"]:
            ctx.at_path(f"sessions[{i}].end", f"ends ({s['end']}) at or before it starts ({s['start']})")
            continue
        heights = profile_of(s, f"sessions[{i}]", path, ctx) if {"elevation", "route"} & s.keys() else event_heights
        sessions.append((i, model.Session(name=s["name"], start=times["start"], end=times["end"], heights=heights)))
    ordered = sorted(sessions, key=lambda item: item[1].start)
    for (i0, a), (i1, b) in zip(ordered, ordered[1:]):
        if b.start < a.end:
            later = max(i0, i1)
            ctx.at_path(f"sessions[{later}].start", f"sessions '{a.name}' and '{b.name}' overlap ({_fmt(b.start)} is before {_fmt(a.end)})")

    if fleet is not None and sessions:
        _check_size(len(fleet.bikes), [s for _, s in sessions], ctx)

    fuel = raw.get("fuel")
    if fuel is not None and fleet is not None and fuel not in fleet.fuels:
        ctx.at_path("fuel", f"unknown fuel '{fuel}'{did_you_mean(fuel, fleet.fuels)}; {known_list(fleet.fuels)}")

    weather, weather_problems = None, []
    source = raw.get("weather")
    forecast_elevation = raw.get("weather_elevation", site.get("elevation"))  # where the forecast holds
    if isinstance(source, str) and zone is not False:
        csv_path = Path(path).parent / source
        try:
            weather, weather_problems = read_weather_csv(csv_path, zone or None, forecast_elevation)
        except ConfigError as exc:  # missing or unreadable table: said at the line that names it
            for p in exc.problems:
                if p.line is None:
                    ctx.at_path("weather", p.message)
                else:
                    weather_problems.append(p)
    elif isinstance(source, dict) and "metar" in source and zone is not False:
        if len(source["metar"]) > MAX_METAR_REPORTS:
            ctx.at_path(f"weather.metar[{MAX_METAR_REPORTS}]", f"more than {MAX_METAR_REPORTS:,} METAR reports (the limit, "
                        "see FORMATS.md); give the reports around the event's sessions only")
        elif sessions:
            weather = read_metar(source["metar"], min(s.start for _, s in sessions), ctx, "weather.metar",
                                 forecast_elevation)
        elif not ctx.problems:
            ctx.at_path("weather.metar", "METAR reports carry no month; it is taken from the sessions, which are missing")

    if weather is not None and zone is not False:
        _check_coverage(weather, sessions, ctx)

    problems = sorted(ctx.problems, key=_line_key) + sorted(weather_problems, key=_line_key)
    if problems:
        raise ConfigError(problems)
    return model.Event(
        name=raw["event"],
        site=model.Site(name=site["name"], elevation=site["elevation"], time_zone=site.get("time_zone", "UTC")),
        sessions=tuple(s for _, s in sorted(sessions, key=lambda item: item[1].start)),
        weather=weather,
        fuel=fuel,
        source=Path(path),
        change_policy=raw.get("change_policy"),
        change_threshold=raw.get("change_threshold"),
        units=raw.get("units"),
        language=raw.get("language"),
        weather_elevation=raw.get("weather_elevation"),
        lapse_rate=raw.get("lapse_rate"),
    )


def _session_hours(session: model.Session) -> int:
    """How many hours the plan computes for a session: start, every whole hour between, end."""
    start, end = int(round(session.start.timestamp())), int(round(session.end.timestamp()))
    return 2 + max(0, (end - 1) // 3600 - start // 3600)


def _check_size(bikes: int, sessions: list[model.Session], ctx: Context) -> None:
    """The plan's size limits (tuning.config.limits), said at the ``sessions`` line."""
    entries = bikes * len(sessions)
    if entries > MAX_BIKE_SESSIONS:
        ctx.at_path("sessions", f"{bikes:,} bikes × {len(sessions):,} sessions is {entries:,} bike-sessions, more than "
                    f"the limit of {MAX_BIKE_SESSIONS:,} (see FORMATS.md); plan fewer bikes or sessions at a time")
        return
    hours = sum(_session_hours(s) * (len(s.heights.elevations) if s.heights else 1) for s in sessions)
    if bikes * hours > MAX_BIKE_HOURS:
        ctx.at_path("sessions", f"{bikes:,} bikes × {hours:,} session hours is {bikes * hours:,} bike-hours, more than "
                    f"the limit of {MAX_BIKE_HOURS:,} (see FORMATS.md); plan fewer bikes or shorter sessions at a time")


def _line_key(problem) -> int:
    return problem.line or 0


def _utc64(t: datetime) -> np.datetime64:
    return np.datetime64(t.astimezone(UTC).replace(tzinfo=None), "s")


def _check_coverage(weather: model.Weather, sessions, ctx: Context) -> None:
    times = weather.time
    first, last = times[0], times[-1]
    for i, s in sessions:
        start, end = _utc64(s.start), _utc64(s.end)
        if start < first or end > last:
            ctx.at_path(
                f"sessions[{i}]",
                f"session '{s.name}' ({_fmt(s.start)} to {_fmt(s.end)}) is not covered by the weather "
                f"({weather.source}: {first} to {last} UTC); add samples before and after the session",
            )
            continue
        gaps = np.diff(times)
        inside = (times[1:] > start) & (times[:-1] < end) & (gaps > np.timedelta64(MAX_GAP))
        if inside.any():
            k = int(np.argmax(inside))
            hours = gaps[k] / np.timedelta64(1, "h")
            ctx.at_path(
                f"sessions[{i}]",
                f"session '{s.name}' has a {hours:g} h gap in the weather ({times[k]} to {times[k + 1]} UTC); "
                f"samples may be at most {MAX_GAP.total_seconds() / 3600:g} h apart inside a session",
            )
