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

import zoneinfo
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated

import numpy as np
from pydantic import Field

from tuning.config import model
from tuning.config.fleet import CHANGE_POLICY, CHANGE_THRESHOLD, refuse_other_kind
from tuning.config.heights import LAPSE_RATE, ROUTE, WEATHER_ELEVATION, ElevationSpan, profile_of
from tuning.config.limits import MAX_BIKE_HOURS, MAX_BIKE_SESSIONS, MAX_METAR_REPORTS, MAX_SESSIONS
from tuning.config.quantities import FILE_RANGES
from tuning.config.source import display_name, load_yaml
from tuning.config.spec import (
    Choice,
    Context,
    Either,
    FileModel,
    Quantity,
    Text,
    did_you_mean,
    known_list,
    plain,
    structural_problems,
)
from tuning.config.weather import MAX_GAP, parse_local_time, read_metar, read_weather_csv
from tuning.display import LANGUAGES, UNIT_SYSTEMS
from tuning.errors import ConfigError

__all__ = ["load_event", "EventFile"]


# --- the file model (a new key is one line in its class) -------------------------------------
class Session(FileModel):
    """A riding session."""

    name: Text("Name of the session, unique in the event.")
    start: Text("Start, ISO 8601 in the site's time zone unless an offset is given, e.g. '2026-06-13 09:00'.")
    end: Text("End, after the start.")
    elevation: ElevationSpan = None
    route: ROUTE = None


class Site(FileModel):
    """Where the event takes place."""

    name: Text("Name of the site.")
    elevation: Quantity(FILE_RANGES["elevation"], "Elevation of the site above mean sea level.")
    time_zone: Text("IANA time zone of the site, e.g. Europe/Vienna; needed for times without an offset.") = None


class Metar(FileModel):
    """METAR reports instead of a table."""

    metar: Annotated[
        list[Text("One METAR report (WMO FM 15).")],
        Field(min_length=1, description="METAR reports of the nearest station."),
    ]


def _weather_form(value) -> str | None:
    return "metar" if isinstance(value, (dict, Metar)) else None if isinstance(value, list) else "path"


UNITS = Choice(
    UNIT_SYSTEMS,
    "Units of what people read (sheets, summary, index, terminal): metric (degC, m, hPa; "
    "the default) or us (degF, ft, inHg). The JSON and CSV files stay SI. The command line's --units wins.",
)
LANGUAGE = Choice(
    LANGUAGES,
    "Language of what people read: en (English, the default) or de (German, with a "
    "decimal comma). The command line's --language wins.",
)


class EventFile(FileModel):
    """A carbfleet event file."""

    event: Text("Name of the event.")
    site: Site
    sessions: Annotated[list[Session], Field(min_length=1, description="Sessions; they may not overlap.")]
    fuel: Text("Fuel used at the event (a name under the fleet's `fuels`); the reference fuel when left out.") = None
    change_policy: CHANGE_POLICY = None
    change_threshold: CHANGE_THRESHOLD = None
    weather: Either(
        {"path": Text("Path of the weather CSV table, relative to this file."), "metar": Metar},
        _weather_form,
        "expected a CSV path or a mapping {metar: [reports]}",
        "Weather: a CSV path, or {metar: [reports]}.",
    )
    units: UNITS = None
    language: LANGUAGE = None
    elevation: ElevationSpan = None
    route: ROUTE = None
    weather_elevation: WEATHER_ELEVATION = None
    lapse_rate: LAPSE_RATE = None


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
        Every problem of the event file and of its weather table, each ``file:line: field: problem``
        (the structure's problems first, all at once; then those between its parts and the weather's).
    """
    ctx = Context(display_name(path))
    root = load_yaml(path, {"sessions": (MAX_SESSIONS, "sessions")})
    refuse_other_kind(root, ctx.file, "event")
    keys: list = []
    checked = structural_problems(EventFile, plain(root, ctx, "", keys), ctx, keys)
    if checked is None:
        raise ConfigError(sorted(ctx.problems, key=_line_key))
    raw = checked.model_dump(exclude_unset=True)
    site = raw["site"]
    zone = _zone(site.get("time_zone"), ctx)
    event_heights = profile_of(raw, "", path, ctx)
    sessions = _sessions(raw["sessions"], zone, ctx, path, event_heights)
    if fleet is not None and sessions:
        _check_size(len(fleet.bikes), [s for _, s in sessions], ctx)
    fuel = raw.get("fuel")
    if fuel is not None and fleet is not None and fuel not in fleet.fuels:
        ctx.at_path("fuel", f"unknown fuel '{fuel}'{did_you_mean(fuel, fleet.fuels)}; {known_list(fleet.fuels)}")
    weather, weather_problems = None, []
    if zone is not False:
        forecast_elevation = raw.get("weather_elevation", site["elevation"])  # where the forecast holds
        weather, weather_problems = _weather(raw["weather"], Path(path), zone, forecast_elevation, sessions, ctx)
    if weather is not None:
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


def _sessions(raw: list[dict], zone, ctx: Context, path, event_heights) -> list[tuple[int, model.Session]]:
    """(index in the file, session) of every session whose times read; problems into ``ctx``. A
    session's own heights win over the event's ``event_heights``."""
    sessions: list[tuple[int, model.Session]] = []
    names: dict[str, int] = {}
    for i, s in enumerate(raw):
        if s["name"] in names:
            ctx.at_path(
                f"sessions[{i}].name", f"session name '{s['name']}' is used twice (also sessions[{names[s['name']]}])"
            )
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
            ctx.at_path(
                f"sessions[{later}].start",
                f"sessions '{a.name}' and '{b.name}' overlap ({_fmt(b.start)} is before {_fmt(a.end)})",
            )
    return sessions


def _weather(source, path: Path, zone, elevation: float, sessions, ctx: Context):
    """(weather or None, problems of the weather table) from the event's ``weather`` value."""
    if isinstance(source, str):
        try:
            return read_weather_csv(path.parent / source, zone or None, elevation)
        except ConfigError as exc:  # missing or unreadable table: said at the line that names it
            for p in exc.problems:
                if p.line is None:
                    ctx.at_path("weather", p.message)
            return None, [p for p in exc.problems if p.line is not None]
    reports = source["metar"]
    if len(reports) > MAX_METAR_REPORTS:
        ctx.at_path(
            f"weather.metar[{MAX_METAR_REPORTS}]",
            f"more than {MAX_METAR_REPORTS:,} METAR reports (the limit, "
            "see FORMATS.md); give the reports around the event's sessions only",
        )
    elif sessions:
        return read_metar(reports, min(s.start for _, s in sessions), ctx, "weather.metar", elevation), []
    elif not ctx.problems:
        ctx.at_path("weather.metar", "METAR reports carry no month; it is taken from the sessions, which are missing")
    return None, []


def _session_hours(session: model.Session) -> int:
    """How many hours the plan computes for a session: start, every whole hour between, end."""
    start, end = int(round(session.start.timestamp())), int(round(session.end.timestamp()))
    return 2 + max(0, (end - 1) // 3600 - start // 3600)


def _check_size(bikes: int, sessions: list[model.Session], ctx: Context) -> None:
    """The plan's size limits (tuning.config.limits), said at the ``sessions`` line."""
    entries = bikes * len(sessions)
    if entries > MAX_BIKE_SESSIONS:
        ctx.at_path(
            "sessions",
            f"{bikes:,} bikes × {len(sessions):,} sessions is {entries:,} bike-sessions, more than "
            f"the limit of {MAX_BIKE_SESSIONS:,} (see FORMATS.md); plan fewer bikes or sessions at a time",
        )
        return
    hours = sum(_session_hours(s) * (len(s.heights.elevations) if s.heights else 1) for s in sessions)
    if bikes * hours > MAX_BIKE_HOURS:
        ctx.at_path(
            "sessions",
            f"{bikes:,} bikes × {hours:,} session hours is {bikes * hours:,} bike-hours, more than "
            f"the limit of {MAX_BIKE_HOURS:,} (see FORMATS.md); plan fewer bikes or shorter sessions at a time",
        )


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
