"""Weather for an event: an hourly CSV table, or a list of METAR reports.

CSV table
---------
One header row, then one row per sample (hourly is usual; samples may be at most 3 hours
apart inside a session, ``MAX_GAP``; every session must lie between the first and the last
sample: the plan interpolates, it never extrapolates). Columns, each with its unit in brackets (the default unit
when the brackets are left out):

* ``time`` — ISO 8601 (``2026-06-13 09:00`` or ``2026-06-13T09:00+02:00``). A time without
  an offset is in the site's time zone (``site.time_zone`` of the event).
* ``air_temperature [degC]`` (or degF, K),
* exactly one pressure: ``qnh [hPa]`` (or inHg), ``station_pressure [hPa]`` or
  ``sea_level_pressure [hPa]``,
* exactly one humidity: ``relative_humidity [%]`` or ``dew_point [degC]``.

Cells are bare numbers in the column's unit. Times must increase from row to row. Blank
lines and lines starting with ``#`` are skipped. Years 1900 to 2199 are accepted.

A dew point may lie above the air temperature of its row by at most 0.5 K (rounding), and the
station pressure (a QNH or sea-level pressure converted with the site elevation) must be at
least 300 hPa, about that of the highest summits: below it the air of a hot row would be
mostly water vapour. The number of rows is limited (see Limits).

Clock changes. In the hour that repeats when the clocks go back (e.g. 02:00–02:59 on
2026-10-25 in Europe/Vienna) a time without offset is read as the first (summer-time) one,
unless the row before is already at or after it: then it is the second. So a forecast that
lists 01:00, 02:00, 02:00, 03:00 in local time is read in order, as are rows with offsets
(``2026-10-25 02:00+02:00``, then ``2026-10-25 02:00+01:00``). A time that the clocks skip
when they go forward (02:00–02:59 on 2026-03-29 in Europe/Vienna) does not exist: leave the
row out or give it with its offset. Session times in the repeated hour are read as the first
one; give an offset to mean the second.

METAR
-----
Reports (WMO FM 15) carry the day of month and the UTC time only. carbfleet reads each report
in the month of the event's first session (in UTC), the month before and the month after, and
keeps the reading nearest to that session (so a report of the 31st before a session on the
1st is read in the previous month, and across a year end likewise). The sessions must lie
within the reports' times, as for a table. Temperature and dew point are
read from the ``TT/TdTd`` group and the pressure from the altimeter setting (``Q1018`` hPa or
``A3012`` inHg), kept as QNH. The same checks as for a table apply (dew point, station
pressure); the number of reports is limited (see Limits).
"""

from __future__ import annotations

import csv
import io
import math
import re
import warnings
import zoneinfo
from datetime import UTC, datetime, timedelta

import numpy as np

from tuning.air import DEW_POINT_ROUNDING_TOLERANCE
from tuning.config import model
from tuning.config.fleet import station_pressure_problem, station_pressures
from tuning.config.limits import MAX_WEATHER_ROWS
from tuning.config.quantities import FILE_RANGES, HUMIDITY_KEYS, PRESSURE_KEYS, STATION_PRESSURE_MIN
from tuning.config.source import display_name, read_text
from tuning.config.spec import Context, did_you_mean
from tuning.config.units import UnitProblem, convert_numbers, parse_quantity, pint_unit

__all__ = ["read_weather_csv", "read_metar", "parse_local_time", "MAX_GAP", "COLUMNS", "YEAR_RANGE"]

#: Longest accepted gap between two weather samples inside a session. Beyond it the
#: interpolated temperature can miss a real swing by several kelvin (a front, a shower).
MAX_GAP = timedelta(hours=3)

#: Years accepted in session and weather times (outside them the time-zone and calendar
#: arithmetic overflows, and no forecast exists).
YEAR_RANGE = (1900, 2199)

#: Known columns but time: name -> accepted range (whose unit is a bare number's).
COLUMNS = {
    "air_temperature": FILE_RANGES["air_temperature"],
    **{key: FILE_RANGES["pressure"] for key in PRESSURE_KEYS},
    "relative_humidity": FILE_RANGES["relative_humidity"],
    "dew_point": FILE_RANGES["dew_point"],
}

_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[\s*(.*?)\s*\])?\s*$")


def parse_local_time(text: str, zone: zoneinfo.ZoneInfo | None) -> datetime:
    """ISO 8601 text -> aware datetime; a time without offset is taken in ``zone``.

    Raises ValueError with a one-line message (bad text, a year outside :data:`YEAR_RANGE`,
    no zone, a time skipped by a clock change). A time repeated by a clock change is the
    first of the two (``fold=0``).
    """
    try:
        value = datetime.fromisoformat(str(text).strip())
    except ValueError:
        raise ValueError(f"expected an ISO 8601 date and time such as '2026-06-13 09:00', got {text!r}") from None
    if not YEAR_RANGE[0] <= value.year <= YEAR_RANGE[1]:
        raise ValueError(
            f"year {value.year} in {text!r} is outside the accepted {YEAR_RANGE[0]}..{YEAR_RANGE[1]}; check the date"
        )
    if value.tzinfo is not None:
        return value
    if zone is None:
        raise ValueError(
            f"time {text!r} has no UTC offset and the event gives no site.time_zone; "
            "add site.time_zone (an IANA name such as Europe/Vienna) or an offset such as +02:00"
        )
    local = value.replace(tzinfo=zone)
    back = local.astimezone(UTC).astimezone(zone)
    if back.replace(tzinfo=None) != value:
        before = (local - timedelta(hours=12)).utcoffset()
        after = (local + timedelta(hours=12)).utcoffset()
        raise ValueError(
            f"time {text!r} does not exist in {zone.key} (the clocks skip it); "
            f"give it with an offset ({_offset(before)} before the change, {_offset(after)} after) or leave it out"
        )
    return local


def _offset(delta) -> str:
    minutes = int(delta.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "-"
    return f"{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def _second_of_repeated(when: datetime, previous: datetime | None) -> datetime:
    """``when`` as the second occurrence of a repeated wall-clock time, where that puts it in order.

    For a time without offset inside the hour that a clock change repeats: when the row before
    is at or after its first occurrence, the second occurrence (``fold=1``) is meant.
    """
    if previous is None or when.tzinfo is None or not isinstance(when.tzinfo, zoneinfo.ZoneInfo):
        return when
    second = when.replace(fold=1)
    if second.utcoffset() == when.utcoffset():  # not a repeated time
        return when
    if when.astimezone(UTC) <= previous < second.astimezone(UTC):
        return second
    return when


def read_weather_csv(
    path, zone: zoneinfo.ZoneInfo | None, elevation: float | None = None
) -> tuple[model.Weather | None, list]:
    """Read a weather table. Returns (weather or None, problems of the table).

    ``elevation`` is the site's [m]; with it, every row's station pressure is checked (QNH and
    sea-level pressure are converted with it). Without it (the site's elevation has a
    problem of its own) that check is left out.
    """
    name = display_name(path)
    ctx = Context(name)
    text = read_text(path)
    try:
        rows = list(_rows(text))
    except csv.Error as exc:
        ctx.add(None, "", f"not a readable CSV table: {exc}")
        return None, ctx.problems
    if not rows:
        ctx.add(1, "", "the table is empty; expected a header row and one row per hour")
        return None, ctx.problems
    if len(rows) - 1 > MAX_WEATHER_ROWS:
        ctx.add(
            rows[MAX_WEATHER_ROWS + 1][0],
            "",
            f"more than {MAX_WEATHER_ROWS:,} rows (the limit, see FORMATS.md); "
            "give the hours around the event's sessions only",
        )
        return None, ctx.problems
    header_line, header = rows[0]
    columns = _header(header_line, header, ctx)
    if ctx.problems:
        return None, ctx.problems
    wanted = ["air_temperature", *(k for k in (*PRESSURE_KEYS, *HUMIDITY_KEYS) if k in columns)]
    lines, times, cells, numbers = _cells(rows[1:], len(header), columns, wanted, zone, ctx)
    if not times and not ctx.problems:
        ctx.add(header_line, "", "the table has a header but no rows")
    if not times:
        return None, ctx.problems
    values = {key: convert_numbers(numbers[key], columns[key][1], COLUMNS[key].unit) for key in wanted}
    _check_values(values, wanted, columns, cells, lines, elevation, ctx)
    if ctx.problems:
        return None, ctx.problems
    pressure, humidity = wanted[1], wanted[2]
    weather = model.Weather(
        time=_utc_array(times),
        air_temperature=values["air_temperature"],
        pressure=values[pressure],
        pressure_kind=PRESSURE_KEYS[pressure],
        humidity=values[humidity],
        humidity_kind=HUMIDITY_KEYS[humidity],
        source=name,
    )
    return weather, []


def _header(header_line: int, header: list[str], ctx: Context) -> dict[str, tuple[int, str]]:
    """Column name -> (index, unit as pint spells it) of the header; problems into ``ctx``."""
    columns: dict[str, tuple[int, str]] = {}
    for index, cell in enumerate(header):
        match = _HEADER.match(cell)
        if not match:
            ctx.add(
                header_line, f"column {index + 1}", f"expected a header such as 'air_temperature [degC]', got {cell!r}"
            )
            continue
        key, unit = match.group(1), match.group(2)
        if key in columns:
            ctx.add(header_line, key, "column given twice")
            continue
        if key == "time":
            columns[key] = (index, "")
            continue
        if key not in COLUMNS:
            ctx.add(
                header_line,
                key,
                f"unknown column '{key}'{did_you_mean(key, [*COLUMNS, 'time'])} (known: time, {', '.join(COLUMNS)})",
            )
            continue
        unit = pint_unit(unit or COLUMNS[key].unit)
        try:
            parse_quantity(f"1 {unit}", COLUMNS[key].unit)
        except UnitProblem as exc:
            ctx.add(header_line, key, f"unit [{match.group(2)}]: {exc}")
            continue
        columns[key] = (index, unit)
    pressure = [k for k in PRESSURE_KEYS if k in columns]
    humidity = [k for k in HUMIDITY_KEYS if k in columns]
    for needed in ("time", "air_temperature"):
        if needed not in columns and not any(p.field == needed for p in ctx.problems):
            ctx.add(header_line, needed, "missing column")
    if len(pressure) != 1:
        ctx.add(
            header_line,
            "",
            f"give exactly one pressure column of {', '.join(PRESSURE_KEYS)} (given: {', '.join(pressure) or 'none'})",
        )
    if len(humidity) != 1:
        ctx.add(
            header_line,
            "",
            f"give exactly one humidity column of {', '.join(HUMIDITY_KEYS)} (given: {', '.join(humidity) or 'none'})",
        )
    return columns


def _cells(rows, width: int, columns, wanted: list[str], zone, ctx: Context):
    """(lines, UTC times, cell texts by column, numbers by column) of the rows that read."""
    lines: list[int] = []
    times: list[datetime] = []  # UTC
    cells: dict[str, list[str]] = {k: [] for k in wanted}
    numbers: dict[str, list[float]] = {k: [] for k in wanted}
    for line, row in rows:
        if len(row) != width:
            ctx.add(line, "", f"expected {width} cells as in the header, got {len(row)}")
            continue
        try:
            when = parse_local_time(row[columns["time"][0]], zone)
        except ValueError as exc:
            ctx.add(line, "time", str(exc))
            continue
        when = _second_of_repeated(when, times[-1] if times else None).astimezone(UTC)
        if times and when <= times[-1]:
            ctx.add(
                line,
                "time",
                f"{row[columns['time'][0]]} is not after the previous row's time; sort the rows, one per time",
            )
            continue
        parsed = {}
        for key in wanted:
            index, unit = columns[key]
            cell = row[index].strip()
            try:
                number = float(cell)
            except ValueError:
                number = math.nan
            if not math.isfinite(number):
                ctx.add(line, key, f"expected a number in {unit}, got {cell!r}")
                continue
            parsed[key] = (cell, number)
        if len(parsed) == len(wanted):
            lines.append(line)
            times.append(when)
            for key in wanted:
                cells[key].append(parsed[key][0])
                numbers[key].append(parsed[key][1])
    return lines, times, cells, numbers


def _check_values(values, wanted, columns, cells, lines, elevation, ctx: Context) -> None:
    """Accepted ranges, dew point against temperature and the station-pressure floor, per row."""
    good = np.ones(len(lines), bool)
    for key in wanted:  # accepted ranges, per row
        accepted = COLUMNS[key]
        low, high = parse_quantity(accepted.low, accepted.unit), parse_quantity(accepted.high, accepted.unit)
        unit = columns[key][1]
        for i in np.flatnonzero(~((values[key] >= low) & (values[key] <= high))):
            ctx.add(
                lines[i],
                key,
                f"{cells[key][i]} {unit} is outside the accepted range {accepted.low:g}..{accepted.high:g} {accepted.unit}",
            )
            good[i] = False
    pressure, humidity = wanted[1], wanted[2]
    temperature = values["air_temperature"]
    if humidity == "dew_point":
        t_unit, d_unit = columns["air_temperature"][1], columns["dew_point"][1]
        for i in np.flatnonzero(good & (values[humidity] > temperature + DEW_POINT_ROUNDING_TOLERANCE)):
            ctx.add(
                lines[i],
                "dew_point",
                f"dew point {cells['dew_point'][i]} {d_unit} is above the air temperature "
                f"{cells['air_temperature'][i]} {t_unit}; check both values and their units",
            )
            good[i] = False
    if elevation is not None and good.any():
        kind = PRESSURE_KEYS[pressure]
        rows_ok = np.flatnonzero(good)  # rows whose values are in range (converting others could fail)
        station = station_pressures(values[pressure][rows_ok], kind, elevation, temperature[rows_ok])
        for i, p in zip(rows_ok, station):
            if not p >= STATION_PRESSURE_MIN * 100.0:
                ctx.add(lines[i], pressure, station_pressure_problem(values[pressure][i], kind, elevation, float(p)))


def _metar_range(pressure: float, temperature: float, dew_point: float) -> str | None:
    """The problem of a METAR report's values [hPa, degC, degC] outside the accepted ranges, if any."""
    for value, what, key, digits in (
        (pressure, "altimeter setting", "pressure", ".1f"),
        (temperature, "temperature", "air_temperature", "g"),
        (dew_point, "dew point", "dew_point", "g"),
    ):
        accepted = FILE_RANGES[key]  # in hPa and degC, the units the report is read in
        if not accepted.low <= value <= accepted.high:
            return f"{what} {value:{digits}} {accepted.unit} is outside the accepted range {accepted.text()}"
    return None


def _rows(text: str):
    """(line number, cells) of every non-blank, non-comment row."""
    reader = csv.reader(io.StringIO(text, newline=""))
    line = 1
    for cells in reader:
        start = line
        line = reader.line_num + 1
        if not cells or all(not c.strip() for c in cells) or cells[0].lstrip().startswith("#"):
            continue
        yield start, cells


def _utc_array(times: list[datetime]) -> np.ndarray:
    return np.array([t.astimezone(UTC).replace(tzinfo=None) for t in times], dtype="datetime64[s]")


def read_metar(
    reports: list[str], near: datetime, ctx: Context, path: str, elevation: float | None = None
) -> model.Weather | None:
    """Read METAR reports; month and year from ``near`` (the first session start).

    Problems go to ``ctx`` at ``path[i]``; returns None when any report has a problem.
    ``elevation`` is the site's [m]: with it, each report's QNH is checked to give a station
    pressure of at least :data:`~tuning.config.fleet.STATION_PRESSURE_MIN`.
    """
    from metar import Metar  # imported here: only needed for METAR lists

    near_utc = near.astimezone(UTC)
    samples = []
    for i, text in enumerate(reports):
        sub = f"{path}[{i}]"
        if not isinstance(text, str):
            continue
        parsed, error = None, None
        candidates = []
        for months in (0, -1, 1):
            year, month = near_utc.year, near_utc.month + months
            if month == 0:
                year, month = year - 1, 12
            elif month == 13:
                year, month = year + 1, 1
            try:
                with warnings.catch_warnings():  # groups it cannot read (outside what we use) only warn
                    warnings.simplefilter("ignore", RuntimeWarning)
                    report = Metar.Metar(text.strip(), month=month, year=year, strict=False)
            except Exception as exc:  # the metar package raises ParserError and plain errors
                error = error or str(exc).strip().splitlines()[0]
                continue
            if report.time is None:
                continue
            when = report.time.replace(tzinfo=UTC)
            candidates.append((abs(when - near_utc), when, report))
        if not candidates:
            ctx.at_path(sub, f"cannot read this METAR report: {error or 'no day/time group (DDHHMMZ)'}")
            continue
        _, when, parsed = min(candidates, key=lambda c: c[0])
        missing = [
            what
            for what, value in (
                ("temperature/dew point group (e.g. 08/03)", parsed.temp),
                ("altimeter setting (Q1018 or A3012)", parsed.press),
            )
            if value is None
        ]
        if missing or parsed.dewpt is None:
            ctx.at_path(
                sub,
                f"report has no {' and no '.join(missing) or 'dew point'}; carbfleet needs temperature, dew point and pressure",
            )
            continue
        temperature = parsed.temp.value("C")
        dew_point = parsed.dewpt.value("C")
        pressure = parsed.press.value("HPA")
        problem = _metar_range(pressure, temperature, dew_point)
        if problem:
            ctx.at_path(sub, problem)
            continue
        if dew_point > temperature + DEW_POINT_ROUNDING_TOLERANCE:
            ctx.at_path(
                sub,
                f"dew point {dew_point:g} degC is above the air temperature {temperature:g} degC "
                "(the TT/TdTd group); check the report",
            )
            continue
        if elevation is not None:
            station = float(station_pressures(pressure * 100.0, "qnh", elevation, None))
            if not station >= STATION_PRESSURE_MIN * 100.0:
                ctx.at_path(sub, station_pressure_problem(pressure * 100.0, "qnh", elevation, station))
                continue
        samples.append((when, i, temperature, dew_point, pressure))
    if len(samples) != len(reports):
        return None
    samples.sort()
    for (t0, i0, *_), (t1, i1, *_) in zip(samples, samples[1:]):
        if t0 == t1:
            ctx.at_path(f"{path}[{i1}]", f"two reports for the same time {t1:%d %H:%MZ} ({path}[{i0}]); keep one")
            return None
    return model.Weather(
        time=_utc_array([s[0] for s in samples]),
        air_temperature=np.array([parse_quantity(s[2], "degC") for s in samples]),
        pressure=np.array([s[4] * 100.0 for s in samples]),
        pressure_kind="qnh",
        humidity=np.array([parse_quantity(s[3], "degC") for s in samples]),
        humidity_kind="dew_point",
        source="METAR",
    )
