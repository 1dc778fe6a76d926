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
lines and lines starting with ``#`` are skipped.

METAR
-----
Reports (WMO FM 15) carry the day of month and the UTC time only. carbfleet reads each report
in the month of the event's first session (in UTC), the month before and the month after, and
keeps the reading nearest to that session (so a report of the 31st before a session on the
1st is read in the previous month, and across a year end likewise). The sessions must lie
within the reports' times, as for a table. Temperature and dew point are
read from the ``TT/TdTd`` group and the pressure from the altimeter setting (``Q1018`` hPa or
``A3012`` inHg), kept as QNH.
"""

from __future__ import annotations

import csv
import io
import re
import warnings
import zoneinfo
from datetime import datetime, timedelta, timezone

import numpy as np

from tuning.config import model
from tuning.config.fleet import DEW_POINT_RANGE, HUMIDITY_RANGE, PRESSURE_RANGE, TEMPERATURE_RANGE
from tuning.config.source import display_name, read_text
from tuning.config.spec import Context, did_you_mean
from tuning.config.units import UnitProblem, parse_quantity

__all__ = ["read_weather_csv", "read_metar", "parse_local_time", "MAX_GAP", "COLUMNS"]

#: Longest accepted gap between two weather samples inside a session. Beyond it the
#: interpolated temperature can miss a real swing by several kelvin (a front, a shower).
MAX_GAP = timedelta(hours=3)

#: Known columns: name -> (default unit, pint unit of the range, accepted range).
COLUMNS = {
    "air_temperature": ("degC", TEMPERATURE_RANGE),
    "station_pressure": ("hPa", PRESSURE_RANGE),
    "qnh": ("hPa", PRESSURE_RANGE),
    "sea_level_pressure": ("hPa", PRESSURE_RANGE),
    "relative_humidity": ("percent", HUMIDITY_RANGE),
    "dew_point": ("degC", DEW_POINT_RANGE),
}
PRESSURE_COLUMNS = {"station_pressure": "station", "qnh": "qnh", "sea_level_pressure": "sea_level"}
HUMIDITY_COLUMNS = {"relative_humidity": "relative", "dew_point": "dew_point"}

_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[\s*(.*?)\s*\])?\s*$")


def parse_local_time(text: str, zone: zoneinfo.ZoneInfo | None) -> datetime:
    """ISO 8601 text -> aware datetime; a time without offset is taken in ``zone``.

    Raises ValueError with a one-line message (bad text, no zone, a time skipped by a
    clock change).
    """
    try:
        value = datetime.fromisoformat(str(text).strip())
    except ValueError:
        raise ValueError(f"expected an ISO 8601 date and time such as '2026-06-13 09:00', got {text!r}") from None
    if value.tzinfo is not None:
        return value
    if zone is None:
        raise ValueError(
            f"time {text!r} has no UTC offset and the event gives no site.time_zone; "
            "add site.time_zone (an IANA name such as Europe/Vienna) or an offset such as +02:00"
        )
    local = value.replace(tzinfo=zone)
    back = local.astimezone(timezone.utc).astimezone(zone)
    if back.replace(tzinfo=None) != value:
        raise ValueError(f"time {text!r} does not exist in {zone.key} (the clocks skip it); give an offset")
    return local


def _to_kelvin_range(unit: str, limits: tuple[float, float]) -> tuple[float, float]:
    return parse_quantity(limits[0], unit), parse_quantity(limits[1], unit)


def read_weather_csv(path, zone: zoneinfo.ZoneInfo | None) -> tuple[model.Weather | None, list]:
    """Read a weather table. Returns (weather or None, problems of the table)."""
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
    header_line, header = rows[0]
    columns: dict[str, tuple[int, str]] = {}
    for index, cell in enumerate(header):
        match = _HEADER.match(cell)
        if not match:
            ctx.add(header_line, f"column {index + 1}", f"expected a header such as 'air_temperature [degC]', got {cell!r}")
            continue
        key, unit = match.group(1), match.group(2)
        if key in columns:
            ctx.add(header_line, key, "column given twice")
            continue
        if key == "time":
            columns[key] = (index, "")
            continue
        if key not in COLUMNS:
            ctx.add(header_line, key, f"unknown column '{key}'{did_you_mean(key, [*COLUMNS, 'time'])} (known: time, {', '.join(COLUMNS)})")
            continue
        default_unit = COLUMNS[key][0]
        unit = {"%": "percent"}.get(unit or default_unit, unit or default_unit)
        try:
            parse_quantity(f"1 {unit}", default_unit)
        except UnitProblem as exc:
            ctx.add(header_line, key, f"unit [{match.group(2)}]: {exc}")
            continue
        columns[key] = (index, unit)
    pressure = [k for k in PRESSURE_COLUMNS if k in columns]
    humidity = [k for k in HUMIDITY_COLUMNS if k in columns]
    for needed in ("time", "air_temperature"):
        if needed not in columns and not any(p.field == needed for p in ctx.problems):
            ctx.add(header_line, needed, "missing column")
    if len(pressure) != 1:
        ctx.add(header_line, "", f"give exactly one pressure column of {', '.join(PRESSURE_COLUMNS)} (given: {', '.join(pressure) or 'none'})")
    if len(humidity) != 1:
        ctx.add(header_line, "", f"give exactly one humidity column of {', '.join(HUMIDITY_COLUMNS)} (given: {', '.join(humidity) or 'none'})")
    if ctx.problems:
        return None, ctx.problems

    wanted = ["air_temperature", pressure[0], humidity[0]]
    times: list[datetime] = []
    values: dict[str, list[float]] = {k: [] for k in wanted}
    for line, row in rows[1:]:
        if len(row) != len(header):
            ctx.add(line, "", f"expected {len(header)} cells as in the header, got {len(row)}")
            continue
        try:
            when = parse_local_time(row[columns["time"][0]], zone)
        except ValueError as exc:
            ctx.add(line, "time", str(exc))
            continue
        if times and when <= times[-1]:
            ctx.add(line, "time", f"{row[columns['time'][0]]} is not after the previous row's time; sort the rows, one per time")
            continue
        row_ok = True
        parsed = {}
        for key in wanted:
            index, unit = columns[key]
            cell = row[index].strip()
            try:
                number = float(cell)
                si = parse_quantity(number, unit)
            except (ValueError, UnitProblem):
                ctx.add(line, key, f"expected a number in {unit}, got {cell!r}")
                row_ok = False
                continue
            default_unit, limits = COLUMNS[key]
            low, high = _to_kelvin_range(default_unit, limits)
            if not low <= si <= high:
                ctx.add(line, key, f"{cell} {unit} is outside the accepted range {limits[0]:g}..{limits[1]:g} {default_unit}")
                row_ok = False
                continue
            parsed[key] = si
        if row_ok:
            times.append(when)
            for key in wanted:
                values[key].append(parsed[key])
    if not times and not ctx.problems:
        ctx.add(header_line, "", "the table has a header but no rows")
    if ctx.problems:
        return None, ctx.problems
    weather = model.Weather(
        time=_utc_array(times),
        air_temperature=np.array(values["air_temperature"]),
        pressure=np.array(values[pressure[0]]),
        pressure_kind=PRESSURE_COLUMNS[pressure[0]],
        humidity=np.array(values[humidity[0]]),
        humidity_kind=HUMIDITY_COLUMNS[humidity[0]],
        source=name,
    )
    return weather, []


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
    return np.array([t.astimezone(timezone.utc).replace(tzinfo=None) for t in times], dtype="datetime64[s]")


def read_metar(reports: list[str], near: datetime, ctx: Context, path: str) -> model.Weather | None:
    """Read METAR reports; month and year from ``near`` (the first session start).

    Problems go to ``ctx`` at ``path[i]``; returns None when any report has a problem.
    """
    from metar import Metar  # imported here: only needed for METAR lists

    near_utc = near.astimezone(timezone.utc)
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
            when = report.time.replace(tzinfo=timezone.utc)
            candidates.append((abs(when - near_utc), when, report))
        if not candidates:
            ctx.at_path(sub, f"cannot read this METAR report: {error or 'no day/time group (DDHHMMZ)'}")
            continue
        _, when, parsed = min(candidates, key=lambda c: c[0])
        missing = [
            what
            for what, value in (("temperature/dew point group (e.g. 08/03)", parsed.temp), ("altimeter setting (Q1018 or A3012)", parsed.press))
            if value is None
        ]
        if missing or parsed.dewpt is None:
            ctx.at_path(sub, f"report has no {' and no '.join(missing) or 'dew point'}; carbfleet needs temperature, dew point and pressure")
            continue
        temperature = parsed.temp.value("C")
        dew_point = parsed.dewpt.value("C")
        pressure = parsed.press.value("HPA")
        if not PRESSURE_RANGE[0] <= pressure <= PRESSURE_RANGE[1]:
            ctx.at_path(sub, f"altimeter setting {pressure:.1f} hPa is outside the accepted range {PRESSURE_RANGE[0]:g}..{PRESSURE_RANGE[1]:g} hPa")
            continue
        if not TEMPERATURE_RANGE[0] <= temperature <= TEMPERATURE_RANGE[1]:
            ctx.at_path(sub, f"temperature {temperature:g} degC is outside the accepted range {TEMPERATURE_RANGE[0]:g}..{TEMPERATURE_RANGE[1]:g} degC")
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
