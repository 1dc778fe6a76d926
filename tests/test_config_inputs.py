"""Never crash on valid input; one located line for bad input (behaviour tests of the CLI).

Each test edits the invented demo files in a temporary folder and runs ``tuning.cli.main``
as a user would. What is checked is what the user sees: the exit code, the one line on
stderr (``file:line: field: problem``, the line found by searching the edited text), no
traceback, and no output folder written for bad input; for valid input, exit 0 and a plan
document without NaN or infinity.
"""

from __future__ import annotations

import json
import os
import threading
from pathlib import Path

import pytest

from tuning.cli import main

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
FLEET, EVENT, WEATHER, METAR = "demo-fleet.yaml", "demo-event.yaml", "demo-weather.csv", "demo-event-metar.yaml"

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")


def edit(path: Path, old: str, new: str, count: int = 1) -> str:
    text = path.read_text(encoding="utf-8")
    assert old in text, f"test set-up: {old!r} not in {path.name}"
    text = text.replace(old, new, count)
    path.write_text(text, encoding="utf-8")
    return text


def line_of(text: str, snippet: str) -> int:
    return text[: text.index(snippet)].count("\n") + 1


def run(capsys, *argv):
    """(exit code, stdout, stderr lines) of ``carbfleet *argv``."""
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err.splitlines()


def user_error(capsys, *argv) -> str:
    """Run a command that must fail on bad input: exit 2, one stderr line, no traceback."""
    code, out, err = run(capsys, *argv)
    assert code == 2, (out, err)
    assert len(err) == 1, err
    assert "Traceback" not in err[0] and "Error:" not in err[0]
    return err[0].removeprefix(f"carbfleet {argv[0]}: ")  # main() names the command on a single line


def check_fails(capsys, demo, *names) -> str:
    return user_error(capsys, "check", *(demo / n for n in names))


def plan_fails(capsys, demo, fleet=FLEET, event=EVENT) -> str:
    out = demo / "out"
    line = user_error(capsys, "plan", demo / fleet, demo / event, "--out", out)
    assert not out.exists()  # nothing written
    return line


def plan_works(capsys, demo, fleet=FLEET, event=EVENT) -> dict:
    out = demo / "out"
    code, stdout, err = run(capsys, "plan", demo / fleet, demo / event, "--out", out)
    assert code == 0, err
    text = (out / "recommendations.json").read_text(encoding="utf-8")
    return json.loads(text, parse_constant=lambda c: pytest.fail(f"{c} in recommendations.json"))


# --- files: only regular ones, bounded reads, bounded nesting ---------------------------------
def _guarded(target, seconds=20.0):
    """Run ``target`` in a thread; fail (instead of hanging the suite) if it does not return."""
    result = {}
    thread = threading.Thread(target=lambda: result.setdefault("value", target()), daemon=True)
    thread.start()
    thread.join(seconds)
    if thread.is_alive():
        pytest.fail("did not return: the reader blocked")
    return result.get("value")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need POSIX")
def test_named_pipe_as_weather_is_refused_without_opening_it(demo, capsys):
    os.mkfifo(demo / "pipe.csv")
    text = edit(demo / EVENT, "weather: demo-weather.csv", "weather: pipe.csv")
    line = _guarded(lambda: check_fails(capsys, demo, FLEET, EVENT))
    assert line.startswith(f"{demo / EVENT}:{line_of(text, 'weather: pipe.csv')}: weather: ")
    assert "named pipe, not a regular file" in line


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
@pytest.mark.parametrize("which", ["fleet", "event"])
def test_device_as_input_file_is_refused(demo, capsys, which):
    argv = ["/dev/zero", demo / EVENT] if which == "fleet" else [demo / FLEET, "/dev/zero"]
    line = _guarded(lambda: user_error(capsys, "check", *argv))
    assert line == "/dev/zero: is a device, not a regular file; save the data to a file and give its path"


def test_size_limit_counts_the_bytes_read(demo, capsys, monkeypatch):
    from tuning.config import source

    monkeypatch.setattr(source, "MAX_FILE_BYTES", 1000)
    line = check_fails(capsys, demo, FLEET)
    assert line == f"{demo / FLEET}: file is larger than 1,000 bytes (the limit); is it the right file?"


@pytest.mark.parametrize("depth", [41, 5000])
def test_deep_nesting_is_one_line(demo, capsys, depth):
    (demo / "deep.yaml").write_text("fleet: " + "[" * depth + "]" * depth + "\n")
    line = check_fails(capsys, demo, "deep.yaml")
    assert (
        line
        == f"{demo / 'deep.yaml'}:1: lists and mappings nested more than 40 deep (a fleet or event file needs about 5); is it the right file?"
    )


# --- 5. a missing weather table is said at the event file's line that names it ----------------
def test_missing_weather_file_is_located_in_the_event_file(demo, capsys):
    text = edit(demo / EVENT, "weather: demo-weather.csv", "weather: forecast.csv")
    line = plan_fails(capsys, demo)
    where = f"{demo / EVENT}:{line_of(text, 'weather: forecast.csv')}"
    assert line == f"{where}: weather: file not found (looked for {(demo / 'forecast.csv').resolve()})"


# --- 1. relative humidity 0 % is valid: the dew point is undefined (null), never -inf ----------
def test_dry_fleet_reference_plans(demo, capsys):
    edit(demo / FLEET, "relative_humidity: 50 %", "relative_humidity: 0 %")
    assert run(capsys, "check", demo / FLEET, demo / EVENT)[0] == 0
    doc = plan_works(capsys, demo)
    assert doc["reference"]["dew_point_C"] is None and doc["reference"]["relative_humidity_pct"] == 0.0


def test_dry_bike_reference_plans(demo, capsys):
    edit(demo / FLEET, "qnh: 1016 hPa, dew_point: 6 degC}", "qnh: 1016 hPa, relative_humidity: 0}")
    doc = plan_works(capsys, demo)
    own = [e["reference"] for e in doc["entries"] if e["bike"] == "E03"]
    assert own and all(r["dew_point_C"] is None for r in own)


def test_dry_weather_row_plans(demo, capsys):
    text = (demo / WEATHER).read_text()
    row = next(line for line in text.splitlines() if line.startswith("2026-06-13 10:00,"))
    edit(demo / WEATHER, row, row.rsplit(",", 1)[0] + ",0")
    doc = plan_works(capsys, demo)
    dry = [w for w in doc["weather"] if w["time"].startswith("2026-06-13T10:00")]
    assert dry and dry[0]["dew_point_C"] is None and dry[0]["relative_humidity_pct"] == 0.0


# --- 4. whatever check accepts, plan handles: the corners of every accepted range --------------
ELEVATIONS = (-500.0, 5000.0)  # tuning.config.fleet.ELEVATION_RANGE [m]
TEMPERATURES = (-40.0, 55.0)  # TEMPERATURE_RANGE [degC]
PRESSURES = (300.0, 1100.0)  # PRESSURE_RANGE [hPa], every kind
KINDS = {"station_pressure": "station", "qnh": "qnh", "sea_level_pressure": "sea_level"}


def _lowest_accepted(kind, elevation, celsius):
    """Lowest pressure [hPa] of ``kind`` that the loader accepts here: 300 hPa, or the value that
    converts to a station pressure of 300 hPa (tuning.config.fleet.STATION_PRESSURE_MIN)."""
    from tuning import air

    def station(hpa):
        return float(air.station_pressure(hpa * 100.0, KINDS[kind], elevation, 273.15 + celsius)) / 100.0

    if station(PRESSURES[0]) >= 300.0:
        return PRESSURES[0]
    low, high = PRESSURES
    for _ in range(60):
        mid = 0.5 * (low + high)
        low, high = (low, mid) if station(mid) >= 300.0 else (mid, high)
    return round(high + 0.005, 2)  # printed to 0.01 hPa, rounded up into the accepted side


def _corners(kind, humidity_kind, elevation):
    """(degC, hPa, humidity) at every corner of the accepted ranges at this elevation."""
    out = []
    for celsius in TEMPERATURES:
        pressures = sorted({_lowest_accepted(kind, elevation, celsius), PRESSURES[1]})
        humidities = (0.0, 100.0) if humidity_kind == "relative_humidity" else (-60.0, celsius)  # DEW_POINT_RANGE, T
        out += [(celsius, p, h) for p in pressures for h in humidities]
    return out


@pytest.mark.parametrize("humidity_kind", ["relative_humidity", "dew_point"])
@pytest.mark.parametrize("kind", list(KINDS))
@pytest.mark.parametrize("elevation", ELEVATIONS)
def test_plan_handles_weather_at_every_corner(demo, capsys, elevation, kind, humidity_kind):
    rows = _corners(kind, humidity_kind, elevation)
    unit = "%" if humidity_kind == "relative_humidity" else "degC"
    table = [f"time,air_temperature [degC],{kind} [hPa],{humidity_kind} [{unit}]"]
    table += [f"2026-06-13 {hour:02d}:00,{t:g},{p:g},{h:g}" for hour, (t, p, h) in enumerate(rows)]
    (demo / WEATHER).write_text("\n".join(table) + "\n")
    edit(demo / EVENT, "elevation: 1650 m", f"elevation: {elevation:g} m")
    text = (demo / EVENT).read_text()
    sessions = text[text.index("sessions:") : text.index("fuel: e10")]
    edit(
        demo / EVENT,
        sessions,
        f"sessions:\n  - {{name: all, start: 2026-06-13 00:00, end: 2026-06-13 {len(rows) - 1:02d}:00}}\n",
    )
    doc = plan_works(capsys, demo)
    assert len(doc["weather"]) == len(rows)


def test_plan_handles_references_at_every_corner(demo, capsys):
    bikes = []
    for elevation in ELEVATIONS:
        for kind in KINDS:
            for humidity_kind in ("relative_humidity", "dew_point"):
                for t, p, h in _corners(kind, humidity_kind, elevation):
                    reference = (
                        f"{{elevation: {elevation:g} m, air_temperature: {t:g} degC, {kind}: {p:g} hPa, "
                        f"{humidity_kind}: {h:g}{' %' if humidity_kind == 'relative_humidity' else ' degC'}}}"
                    )
                    bikes.append(f"  - {{id: X{len(bikes):03d}, model: trail-250-2s, reference: {reference}}}\n")
    edit(demo / FLEET, "\nstock:\n", "".join(bikes) + "\nstock:\n")
    doc = plan_works(capsys, demo)
    assert len({e["bike"] for e in doc["entries"]}) == 14 + len(bikes)


# The class of input that used to pass `check` and crash `plan`: a QNH or sea-level pressure that
# converts, at the site's elevation, to less than 300 hPa (hot air there would be mostly vapour).
def test_weather_row_below_the_station_pressure_floor_is_located(demo, capsys):
    (demo / WEATHER).write_text(
        "time,air_temperature [degC],qnh [hPa],relative_humidity [%]\n"
        + "".join(f"2026-06-13 {h:02d}:00,55,300,100\n" for h in range(24))
    )
    edit(demo / EVENT, "elevation: 1650 m", "elevation: 5000 m")
    lines = []
    for command in ("check", "plan"):
        code, out, err = run(
            capsys, command, demo / FLEET, demo / EVENT, *(["--out", demo / "out"] if command == "plan" else [])
        )
        assert code == 2 and "Traceback" not in "".join(err)
        lines.append(err)
    assert not (demo / "out").exists()
    first = lines[0][0]
    assert first == (
        f"{demo / WEATHER}:2: qnh: QNH 300 hPa at 5000 m elevation is a station pressure of 134 hPa, below "
        "the accepted 300 hPa (about that of the highest summits); check the value, its unit, which pressure "
        "it is and the elevation"
    )


def test_reference_below_the_station_pressure_floor_is_located(demo, capsys):
    text = edit(demo / FLEET, "  qnh: 1013 hPa\n", "  sea_level_pressure: 300 hPa\n")
    edit(demo / FLEET, "elevation: 150 m", "elevation: 5000 m")
    line = check_fails(capsys, demo, FLEET)
    assert line.startswith(
        f"{demo / FLEET}:{line_of(text, 'sea_level_pressure: 300')}: reference.sea_level_pressure: "
        "sea-level pressure 300 hPa at 5000 m elevation is a station pressure of "
    )


def test_metar_below_the_station_pressure_floor_is_located(demo, capsys):
    text = (demo / METAR).read_text().replace("elevation: 1650 m", "elevation: 5000 m").replace("Q1021", "Q0300")
    (demo / METAR).write_text(text)
    code, out, err = run(capsys, "check", demo / FLEET, demo / METAR)
    assert code == 2 and len(err) == text.count("Q0300")  # one line for each report with Q0300
    assert err[0].startswith(f"{demo / METAR}:{line_of(text, 'Q0300')}: weather.metar[0]: QNH 300 hPa at 5000 m")


# --- 2. a dew point above the air temperature: located at load, in a table or a METAR report ---
def test_dew_point_above_temperature_in_a_weather_row(demo, capsys):
    table = ["time,air_temperature [degC],qnh [hPa],dew_point [degC]"]
    table += [f"2026-06-13 {h:02d}:00,10.0,1015,{13.0 if h == 10 else 5.0}" for h in range(24)]
    (demo / WEATHER).write_text("\n".join(table) + "\n")
    line = plan_fails(capsys, demo)
    assert line == (
        f"{demo / WEATHER}:12: dew_point: dew point 13.0 degC is above the air temperature 10.0 degC; "
        "check both values and their units"
    )
    assert check_fails(capsys, demo, FLEET, EVENT) == line


def test_dew_point_within_rounding_of_the_temperature_plans(demo, capsys):
    # tuning.air.DEW_POINT_ROUNDING_TOLERANCE (0.5 K): a dew point rounded above the temperature
    table = ["time,air_temperature [degC],qnh [hPa],dew_point [degC]"]
    table += [f"2026-06-{d} {h:02d}:00,10.0,1015,{10.4 if h == 10 else 5.0}" for d in (13, 14) for h in range(24)]
    (demo / WEATHER).write_text("\n".join(table) + "\n")
    plan_works(capsys, demo)


def test_dew_point_above_temperature_in_a_metar_report(demo, capsys):
    text = edit(demo / METAR, "FEW030 07/05 Q1021", "FEW030 05/13 Q1021")
    line = user_error(capsys, "plan", demo / FLEET, demo / METAR, "--out", demo / "out")
    assert not (demo / "out").exists()
    assert line == (
        f"{demo / METAR}:{line_of(text, '05/13')}: weather.metar[0]: dew point 13 degC is above the air "
        "temperature 5 degC (the TT/TdTd group); check the report"
    )


# --- 15. clock changes: the repeated autumn hour, the skipped spring hour ----------------------
def _event_on(demo, day, start, end, times):
    """The demo event moved to one session on ``day`` with a weather row at each of ``times``."""
    table = ["time,air_temperature [degC],qnh [hPa],relative_humidity [%]"]
    table += [f"{t},{8.0 + 0.5 * i:g},1015,70" for i, t in enumerate(times)]
    (demo / WEATHER).write_text("\n".join(table) + "\n")
    text = (demo / EVENT).read_text()
    sessions = text[text.index("sessions:") : text.index("fuel: e10")]
    return edit(
        demo / EVENT, sessions, f"sessions:\n  - {{name: night, start: {day} {start}, end: {day} {end}}}\n"
    ), table


# Europe/Vienna leaves summer time on 2026-10-25 at 03:00 CEST (01:00 UTC): 02:00-02:59 comes
# twice, first at UTC+02:00, then at UTC+01:00 (EU Directive 2000/84/EC: last Sunday of October,
# 01:00 UTC; the tz database's Europe/Vienna follows it).
AUTUMN = "2026-10-25"


def test_repeated_autumn_hour_without_offsets_is_read_in_order(demo, capsys):
    times = [f"{AUTUMN} {h}" for h in ("00:00", "01:00", "02:00", "02:00", "03:00", "04:00")]
    _event_on(demo, AUTUMN, "01:30", "03:30", times)
    doc = plan_works(capsys, demo)
    assert [w["time"] for w in doc["weather"]] == [
        f"{AUTUMN}T01:00:00+02:00",
        f"{AUTUMN}T02:00:00+02:00",
        f"{AUTUMN}T02:00:00+01:00",
        f"{AUTUMN}T03:00:00+01:00",
        f"{AUTUMN}T04:00:00+01:00",
    ]
    hours = [h["time"] for h in doc["entries"][0]["hours"]]
    assert hours == [
        f"{AUTUMN}T01:30:00+02:00",
        f"{AUTUMN}T02:00:00+02:00",
        f"{AUTUMN}T02:00:00+01:00",
        f"{AUTUMN}T03:00:00+01:00",
        f"{AUTUMN}T03:30:00+01:00",
    ]


def test_repeated_autumn_hour_with_offsets_is_read_as_written(demo, capsys):
    times = [
        f"{AUTUMN} 00:00",
        f"{AUTUMN} 01:00",
        f"{AUTUMN} 02:00+02:00",
        f"{AUTUMN} 02:00+01:00",
        f"{AUTUMN} 03:00",
        f"{AUTUMN} 04:00",
    ]
    _event_on(demo, AUTUMN, "01:30", "03:30", times)
    doc = plan_works(capsys, demo)
    assert f"{AUTUMN}T02:00:00+01:00" in [w["time"] for w in doc["weather"]]


def test_rows_out_of_order_outside_a_clock_change_are_still_refused(demo, capsys):
    times = [f"{AUTUMN} 00:00", f"{AUTUMN} 01:00", f"{AUTUMN} 04:00", f"{AUTUMN} 03:00", f"{AUTUMN} 05:00"]
    _event_on(demo, AUTUMN, "01:30", "02:30", times)
    line = plan_fails(capsys, demo)
    assert line == (
        f"{demo / WEATHER}:5: time: {AUTUMN} 03:00 is not after the previous row's time; sort the rows, one per time"
    )


# Europe/Vienna starts summer time on 2026-03-29 at 02:00 CET (01:00 UTC): 02:00-02:59 does not
# exist that day (same directive, last Sunday of March).
def test_skipped_spring_hour_in_the_weather_is_one_located_line(demo, capsys):
    times = [f"2026-03-29 {h}" for h in ("00:00", "01:00", "02:30", "03:00", "04:00")]
    _event_on(demo, "2026-03-29", "03:00", "04:00", times)
    line = plan_fails(capsys, demo)
    assert line == (
        f"{demo / WEATHER}:4: time: time '2026-03-29 02:30' does not exist in Europe/Vienna (the clocks "
        "skip it); give it with an offset (+01:00 before the change, +02:00 after) or leave it out"
    )


def test_skipped_spring_hour_as_a_session_start_is_one_located_line(demo, capsys):
    times = [f"2026-03-29 {h}" for h in ("00:00", "01:00", "03:00", "04:00")]
    text, _ = _event_on(demo, "2026-03-29", "02:30", "04:00", times)
    line = plan_fails(capsys, demo)
    assert line.startswith(
        f"{demo / EVENT}:{line_of(text, 'name: night')}: sessions[0].start: time '2026-03-29 02:30' "
        "does not exist in Europe/Vienna"
    )


# --- 11. years far off: one located line (no overflow in time-zone arithmetic) -----------------
@pytest.mark.parametrize("day", ["0001-01-01", "9999-12-31"])
def test_session_in_a_far_year_is_one_located_line(demo, capsys, day):
    text = edit(demo / EVENT, "start: 2026-06-13 09:00", f"start: {day} 00:30")
    line = check_fails(capsys, demo, FLEET, EVENT)
    year = int(day[:4])
    assert line.startswith(
        f"{demo / EVENT}:{line_of(text, day)}: sessions[0].start: year {year} in '{day} 00:30' is "
        "outside the accepted 1900..2199; check the date"
    )


@pytest.mark.parametrize("stamp", ["0001-01-01 00:30", "9999-12-31 23:30", "9999-12-31T23:30-05:00"])
def test_weather_row_in_a_far_year_is_one_located_line(demo, capsys, stamp):
    text = (demo / WEATHER).read_text()
    row = text.splitlines()[1]
    edit(demo / WEATHER, row, stamp + row[len("2026-06-13 00:00") :])
    line = check_fails(capsys, demo, FLEET, EVENT)
    assert line.startswith(
        f"{demo / WEATHER}:2: time: year {int(stamp[:4])} in '{stamp}' is outside the accepted 1900..2199"
    )


# --- 13. size limits, checked when loading (tuning.config.limits) -----------------------------
def _with_bikes(demo, count):
    bikes = "".join(f"  - {{id: G{i:06d}, model: trail-125-4s}}\n" for i in range(count))
    return edit(demo / FLEET, "\nstock:\n", bikes + "\nstock:\n")


def test_fleet_of_five_megabytes_is_refused_at_the_first_bike_over_the_limit(demo, capsys):
    from tuning.config.limits import MAX_BIKES

    text = _with_bikes(demo, 110_000)  # about 4.7 MB, under the file-size limit
    assert (demo / FLEET).stat().st_size < 5_000_000
    line = plan_fails(capsys, demo)
    over = text.index(f"id: G{MAX_BIKES - 14:06d}")  # the demo has 14 bikes before these
    assert line == (
        f"{demo / FLEET}:{text[:over].count(chr(10)) + 1}: bikes: more than {MAX_BIKES:,} bikes (the limit, "
        f"see FORMATS.md); split the file into parts of at most {MAX_BIKES:,}"
    )


def test_fleet_at_the_bike_limit_is_accepted(demo, capsys):
    from tuning.config.limits import MAX_BIKES

    _with_bikes(demo, MAX_BIKES - 14)
    code, out, err = run(capsys, "check", demo / FLEET)
    assert code == 0 and f"{MAX_BIKES} bikes" in out


def test_too_many_sessions(demo, capsys):
    from tuning.config.limits import MAX_SESSIONS

    text = (demo / EVENT).read_text()
    sessions = text[text.index("sessions:") : text.index("fuel: e10")]
    many = "".join(
        f"  - {{name: s{i}, start: 2026-06-13 09:00, end: 2026-06-13 09:01}}\n" for i in range(MAX_SESSIONS + 1)
    )
    text = edit(demo / EVENT, sessions, "sessions:\n" + many)
    line = check_fails(capsys, demo, FLEET, EVENT)
    assert line == (
        f"{demo / EVENT}:{line_of(text, f'name: s{MAX_SESSIONS},')}: sessions: more than {MAX_SESSIONS} "
        f"sessions (the limit, see FORMATS.md); split the file into parts of at most {MAX_SESSIONS}"
    )


def test_too_many_bike_sessions(demo, capsys, monkeypatch):
    from tuning.config import event

    monkeypatch.setattr(event, "MAX_BIKE_SESSIONS", 50)  # the demo: 14 bikes x 4 sessions = 56
    text = (demo / EVENT).read_text()
    line = plan_fails(capsys, demo)
    assert line == (
        f"{demo / EVENT}:{line_of(text, 'sessions:')}: sessions: 14 bikes × 4 sessions is 56 bike-sessions, "
        "more than the limit of 50 (see FORMATS.md); plan fewer bikes or sessions at a time"
    )


def test_too_many_bike_hours(demo, capsys, monkeypatch):
    from tuning.config import event

    # the demo's sessions 09:00-12:00, 13:30-17:00, 08:30-11:30, 13:00-16:30 count 4 + 5 + 5 + 5 hours
    monkeypatch.setattr(event, "MAX_BIKE_HOURS", 14 * 19 - 1)
    text = (demo / EVENT).read_text()
    assert user_error(capsys, "check", demo / FLEET, demo / EVENT) == (
        f"{demo / EVENT}:{line_of(text, 'sessions:')}: sessions: 14 bikes × 19 session hours is 266 bike-hours, more "
        "than the limit of 265 (see FORMATS.md); plan fewer bikes or shorter sessions at a time"
    )
    monkeypatch.setattr(event, "MAX_BIKE_HOURS", 14 * 19)
    assert run(capsys, "check", demo / FLEET, demo / EVENT)[0] == 0


def test_too_many_weather_rows(demo, capsys):
    from tuning.config.limits import MAX_WEATHER_ROWS

    rows = "".join(f"2027-01-01 00:00,{i % 50},30.1,50\n" for i in range(MAX_WEATHER_ROWS))
    (demo / WEATHER).write_text((demo / WEATHER).read_text() + rows)
    line = check_fails(capsys, demo, FLEET, EVENT)
    assert line == (
        f"{demo / WEATHER}:{MAX_WEATHER_ROWS + 2}: more than {MAX_WEATHER_ROWS:,} rows (the limit, see "
        "FORMATS.md); give the hours around the event's sessions only"
    )


def test_too_many_metar_reports(demo, capsys):
    from tuning.config.limits import MAX_METAR_REPORTS

    report = "    - XKSL 130650Z 27004KT 9999 FEW030 07/05 Q1021\n"
    text = edit(demo / METAR, report, report * (MAX_METAR_REPORTS + 1))
    line = check_fails(capsys, demo, FLEET, METAR)
    assert line == (
        f"{demo / METAR}:{line_of(text, report) + MAX_METAR_REPORTS}: weather.metar[{MAX_METAR_REPORTS}]: "
        f"more than {MAX_METAR_REPORTS:,} METAR reports (the limit, see FORMATS.md); give the reports "
        "around the event's sessions only"
    )


# --- 3. a needle at least as thick as its needle jet --------------------------------------------
@pytest.mark.parametrize("thickness", ["2.80 mm", "3.1 mm"])  # trail-250-2s: needle jet 2.80 mm
def test_needle_not_thinner_than_the_needle_jet_is_located(demo, capsys, thickness):
    text = edit(demo / FLEET, "straight_diameter: 2.72 mm", f"straight_diameter: {thickness}")
    line = plan_fails(capsys, demo)
    where = line_of(text, "needle: {name: needle-a, clip: 3}")
    assert line == (
        f"{demo / FLEET}:{where}: models.trail-250-2s.settings.needle.name: needle 'needle-a' is "
        f"{float(thickness.split()[0]):g} mm thick (needles.needle-a.straight_diameter), not thinner than "
        "this model's needle jet of 2.8 mm (carburetor.needle_jet); no fuel could pass: check both values"
    )


def test_bike_fitted_with_a_needle_too_thick_for_its_model_is_located(demo, capsys):
    text = edit(demo / FLEET, "  needle-c: {}", "  needle-c: {}\n  needle-x: {straight_diameter: 2.9 mm}")
    text = edit(
        demo / FLEET,
        "{id: E02, model: enduro-300-2s}",
        "{id: E02, model: enduro-300-2s, settings: {needle: {name: needle-x}}}",
    )
    line = plan_fails(capsys, demo)
    assert line.startswith(
        f"{demo / FLEET}:{line_of(text, '{id: E02')}: bikes[7].settings.needle.name: needle 'needle-x' is 2.9 mm thick"
    )


# --- 7. a proven mixture-screw setting outside its own usable range -----------------------------
def test_model_screw_outside_its_usable_range_is_located(demo, capsys):
    text = edit(
        demo / FLEET, "{kind: air, turns: 1.5, usable_range: [1, 3]}", "{kind: air, turns: 3.5, usable_range: [1, 3]}"
    )
    line = plan_fails(capsys, demo)
    assert line == (
        f"{demo / FLEET}:{line_of(text, 'turns: 3.5')}: models.trail-250-2s.settings.mixture_screw.turns: "
        "3.5 turns out is outside the screw's usable range 1..3 turns; a proven setting lies inside it: "
        "check the turns and the range (beyond it the pilot jet is changed)"
    )


def test_bike_screw_outside_its_usable_range_is_located(demo, capsys):
    text = edit(demo / FLEET, "settings: {mixture_screw: {turns: 2.0}}", "settings: {mixture_screw: {turns: 0.5}}")
    line = check_fails(capsys, demo, FLEET)
    assert line.startswith(
        f"{demo / FLEET}:{line_of(text, 'turns: 0.5')}: bikes[11].settings.mixture_screw.turns: "
        "0.5 turns out is outside the screw's usable range 1..3 turns"
    )


def test_bike_range_that_excludes_the_model_turns_is_located_at_the_range(demo, capsys):
    text = edit(
        demo / FLEET, "settings: {mixture_screw: {turns: 2.0}}", "settings: {mixture_screw: {usable_range: [2, 3]}}"
    )
    line = check_fails(capsys, demo, FLEET)  # trail-450-4s: 1.75 turns
    assert line.startswith(
        f"{demo / FLEET}:{line_of(text, 'usable_range: [2, 3]')}: bikes[11].settings.mixture_screw."
        "usable_range: 1.75 turns out is outside the screw's usable range 2..3 turns"
    )


# --- 8. premix: 32:1 unquoted (YAML 1.1 reads it as the base-60 number 1921) -----------------------
def test_unquoted_premix_ratio_is_read_as_written(demo, capsys):
    edit(demo / FLEET, "    premix: 40           # fuel:oil 40:1", "    premix: 32:1")
    code, out, err = run(capsys, "check", demo / FLEET)
    assert code == 0 and "premix 32:1" in out and "1921" not in out
    doc = plan_works(capsys, demo)
    assert {e["premix_ratio"] for e in doc["entries"] if e["model"] == "trail-250-2s"} == {32.0}


def test_premix_ratio_other_than_to_one_is_still_refused(demo, capsys):
    text = edit(demo / FLEET, "    premix: 40           # fuel:oil 40:1", "    premix: 32:2")
    line = check_fails(capsys, demo, FLEET)
    assert line == (
        f"{demo / FLEET}:{line_of(text, 'premix: 32:2')}: models.trail-250-2s.premix: expected a fuel:oil "
        "ratio such as 40 or '40:1', got '32:2'"
    )


# --- 14. one malformed jet family (or fuel, model): one line, not one per reference --------------
@pytest.mark.parametrize(
    "old, new, field, message",
    [
        (
            "sizes: {from: 140, to: 200, step: 2.5}",
            "sizes: {from: 140, to: abc, step: 2.5}",
            "jet_families.round-main.sizes.to",
            "expected a number, got 'abc'",
        ),
        (
            "sizes: {from: 140, to: 200, step: 2.5}",
            'sizes: "big"',
            "jet_families.round-main.sizes",
            "expected a list of sizes or a mapping {from, to, step}, got 'big'",
        ),
        (
            "sizes: {from: 140, to: 200, step: 2.5}",
            "sizes: {from: 200, to: 140, step: 2.5}",
            "jet_families.round-main.sizes.to",
            "'to' (140) must be above 'from' (200)",
        ),
        (
            "  e5: {ethanol: 5 %}",
            "  e5: {ethanol: 95 %, methanol: 10 %}",
            "fuels.e5",
            "ethanol and methanol together exceed 100 %",
        ),
        (
            "  needle-a:              # measured in the workshop\n",
            "  needle-a: 12\n  needle-unused:\n",
            "needles.needle-a",
            "expected a mapping with keys straight_diameter, taper_start, taper_angle, grooves, groove_pitch, got 12",
        ),
    ],
    ids=["size-not-a-number", "sizes-a-word", "sizes-backwards", "fuel-blend", "needle-not-a-mapping"],
)
def test_one_malformed_entry_is_one_line(demo, capsys, old, new, field, message):
    text = edit(demo / FLEET, old, new)
    line = check_fails(capsys, demo, FLEET)
    assert line.split(": ", 2)[1:] == [field, message]
    assert line.startswith(f"{demo / FLEET}:{line_of(text, new.strip().splitlines()[0])}: ")


# --- 6. the fleet and event files in the wrong order -------------------------------------------
EVENT_FIRST = "looks like an event file (it has event, site, sessions, fuel, weather); the fleet file comes first, then the event file"


@pytest.mark.parametrize("command", ["check", "plan"])
def test_event_file_given_first_is_one_line(demo, capsys, command):
    out = ["--out", demo / "out"] if command == "plan" else []
    line = user_error(capsys, command, demo / EVENT, demo / FLEET, *out)
    assert line == f"{demo / EVENT}: {EVENT_FIRST}"
    assert not (demo / "out").exists()


def test_fleet_file_given_second_is_one_line(demo, capsys):
    line = user_error(capsys, "check", demo / FLEET, demo / FLEET)
    assert line == (
        f"{demo / FLEET}: looks like a fleet file (it has fleet, reference, density_exponent, reference_afr, "
        "fuels, jet_families, needles, models, bikes, stock); the event file comes second, after the fleet file"
    )


def test_a_fleet_file_with_one_misplaced_event_key_is_not_called_an_event_file(demo, capsys):
    text = edit(demo / FLEET, "fleet: Invented Riding School\n", "fleet: Invented Riding School\nsite: somewhere\n")
    line = check_fails(capsys, demo, FLEET)
    assert line.startswith(f"{demo / FLEET}:{line_of(text, 'site: somewhere')}: site: unknown key 'site'")


def test_a_long_scalar_in_a_message_is_shortened(demo, capsys):
    line = user_error(capsys, "check", demo / FLEET, demo / WEATHER)
    assert line.startswith(
        f"{demo / WEATHER}:1: expected a mapping with keys event, site, sessions, fuel, change_policy, change_threshold, weather, units, language, elevation, route, weather_elevation, lapse_rate, got "
    )
    assert line.endswith(" characters)") and len(line.split(" got ", 1)[1]) < 120  # the scalar, shortened
