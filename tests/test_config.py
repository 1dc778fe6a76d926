"""Loading the fleet and event files: resolved values of the demo, and one test per kind of problem.

Each problem test edits the demo files in a temporary folder and checks the message and the
1-based line of the offending node (found by searching the edited text, not hard-coded).
"""

from __future__ import annotations

import math
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pytest

from tuning.config import display_for, load_event, load_fleet, model
from tuning.errors import ConfigError

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"


@pytest.fixture(scope="module")
def fleet():
    return load_fleet(DEMO / "demo-fleet.yaml")


def edit(path: Path, old: str, new: str) -> str:
    text = path.read_text(encoding="utf-8")
    assert old in text, f"test set-up: {old!r} not in {path.name}"
    text = text.replace(old, new, 1)
    path.write_text(text, encoding="utf-8")
    return text


def line_of(text: str, snippet: str) -> int:
    return text[: text.index(snippet)].count("\n") + 1


def problems(loader, *args) -> list:
    with pytest.raises(ConfigError) as info:
        loader(*args)
    for p in info.value.problems:
        assert "\n" not in str(p)
    return info.value.problems


def find(problem_list, field: str):
    hits = [p for p in problem_list if p.field == field]
    assert hits, f"no problem at {field}; got: {[str(p) for p in problem_list]}"
    return hits[0]


# --- the demo fleet, resolved -----------------------------------------------------------
def test_demo_fleet_resolves(fleet):
    assert len(fleet.bikes) >= 12 and len(fleet.models) >= 3
    assert {m.strokes for m in fleet.models.values()} == {2, 4}
    bikes = {b.id: b for b in fleet.bikes}
    assert bikes["T07"].settings.main_jet == 177.5  # bike override
    assert bikes["T01"].settings.main_jet == 172.5  # model's setting
    assert bikes["T04"].settings.clip == 4 and bikes["T04"].settings.needle == "needle-a"
    assert bikes["F03"].settings.mixture_screw.kind == "fuel" and bikes["F03"].settings.mixture_screw.turns == 2.0
    assert bikes["E03"].own_reference and bikes["E03"].reference.elevation == 900.0
    assert bikes["E03"].reference.fuel == fleet.reference.fuel  # fuel left out: the fleet's
    assert bikes["E01"].premix_ratio == 50.0  # "50:1"
    assert bikes["F01"].premix_ratio is None
    assert fleet.reference_afr == 12.5


def test_demo_fleet_units(fleet):
    ref = fleet.reference
    assert (ref.elevation, ref.air_temperature, ref.pressure, ref.pressure_kind) == (150.0, 293.15, 101300.0, "qnh")
    assert ref.relative_humidity == pytest.approx(0.50) and ref.dew_point is None
    needle = fleet.needles["needle-a"]
    assert needle.straight_diameter == pytest.approx(2.72e-3) and needle.taper_angle == pytest.approx(math.radians(0.9))
    assert not needle.assumed
    assert fleet.models["trail-250-2s"].displacement == pytest.approx(249e-6)
    assert fleet.models["trail-450-4s"].carburetor.accelerator_pump


def test_defaults_are_flagged(fleet):
    assert fleet.needles["needle-c"].assumed
    screw = fleet.models["enduro-300-2s"].settings.mixture_screw
    assert screw.range_assumed and screw.usable_range == (1.0, 3.0)
    assert not fleet.models["trail-250-2s"].settings.mixture_screw.range_assumed
    assert all(b.density_exponent == 0.5 for b in fleet.bikes)


def test_jet_family_from_range(fleet):
    sizes = fleet.jet_families["round-main"].sizes
    assert sizes[0] == 140 and sizes[-1] == 200 and len(sizes) == 25 and 172.5 in sizes


def test_fuel_blend(fleet):
    # Stoichiometric AFR of ethanol 9.0 and gasoline 14.7 (Heywood 1988, table D.4; from memory);
    # E10 about 14.1 is the figure commonly quoted (common practice).
    e10 = fleet.fuels["e10"]
    assert e10.stoichiometric_afr == pytest.approx(14.1, abs=0.05)
    assert e10.ethanol_volume_fraction == pytest.approx(0.10)
    assert fleet.fuels["race-fuel"].density == pytest.approx(720.0)


def test_stock(fleet):
    assert fleet.stock[("round-main", 165.0)] == 2
    assert fleet.stock[("hex-main", 100.0)] == 2


def test_demo_event(fleet):
    event = load_event(DEMO / "demo-event.yaml", fleet)
    assert event.site.elevation - fleet.reference.elevation >= 1200
    assert len(event.sessions) == 4 and event.fuel == "e10"
    first = event.sessions[0]
    # 09:00 CEST = 07:00 UTC (Europe/Vienna is UTC+2 in June)
    assert first.start.astimezone(UTC) == datetime(2026, 6, 13, 7, 0, tzinfo=UTC)
    w = event.weather
    assert w.time.dtype == np.dtype("datetime64[s]") and w.pressure_kind == "qnh" and w.humidity_kind == "relative"
    assert w.time[0] == np.datetime64("2026-06-12T22:00:00")  # 00:00 local
    assert w.air_temperature.max() - w.air_temperature.min() >= 15.0
    assert np.all((w.humidity > 0) & (w.humidity <= 1))
    assert 1000e2 < w.pressure.min() and w.pressure.max() < 1040e2


def test_demo_event_metar(fleet):
    event = load_event(DEMO / "demo-event-metar.yaml", fleet)
    assert event.weather.humidity_kind == "dew_point" and event.weather.source == "METAR"
    assert event.weather.time[0] == np.datetime64("2026-06-13T06:50:00")


# --- one test per kind of problem -------------------------------------------------------
FLEET, EVENT = "demo-fleet.yaml", "demo-event.yaml"


def test_wrong_type(demo):
    text = edit(demo / FLEET, "grooves: 5\n    groove_pitch: 1.0 mm", "grooves: five\n    groove_pitch: 1.0 mm")
    p = find(problems(load_fleet, demo / FLEET), "needles.needle-a.grooves")
    assert "expected a whole number" in p.message and p.line == line_of(text, "grooves: five")


def test_wrong_dimension(demo):
    text = edit(demo / FLEET, "elevation: 150 m", "elevation: 12 kg")
    p = find(problems(load_fleet, demo / FLEET), "reference.elevation")
    assert "is not a length" in p.message and p.line == line_of(text, "elevation: 12 kg")


@pytest.mark.parametrize(
    "old, new, field",
    [
        ("relative_humidity: 50 %", "relative_humidity: 120 %", "reference.relative_humidity"),
        ("qnh: 1013 hPa", "qnh: 1150 hPa", "reference.qnh"),
        ("air_temperature: 20 degC", "air_temperature: 140 degF", "reference.air_temperature"),
        ("elevation: 150 m", "elevation: 18000 ft", "reference.elevation"),
    ],
)
def test_range(demo, old, new, field):
    text = edit(demo / FLEET, old, new)
    p = find(problems(load_fleet, demo / FLEET), field)
    assert "outside the accepted range" in p.message and p.line == line_of(text, new)


def test_duplicate_bike_id(demo):
    text = edit(demo / FLEET, "{id: T02,", "{id: T01,")
    p = find(problems(load_fleet, demo / FLEET), "bikes[1].id")
    assert "duplicate bike id 'T01'" in p.message and p.line == line_of(
        text, "{id: T01, model: trail-250-2s}\n  - {id: T03"
    )


def test_unknown_model(demo):
    text = edit(demo / FLEET, "{id: K02, model: trail-125-4s}", "{id: K02, model: trail-125}")
    p = find(problems(load_fleet, demo / FLEET), "bikes[13].model")
    assert "unknown model 'trail-125'" in p.message and "known: " in p.message and "trail-125-4s" in p.message
    assert p.line == line_of(text, "{id: K02")


def test_unknown_family(demo):
    text = edit(demo / FLEET, "main_jet: {family: hex-main, size: 110}", "main_jet: {family: hex-mian, size: 110}")
    p = find(problems(load_fleet, demo / FLEET), "models.trail-125-4s.settings.main_jet.family")
    assert "unknown jet family 'hex-mian' (did you mean 'hex-main'?)" in p.message
    assert p.line == line_of(text, "hex-mian")


def test_unknown_needle(demo):
    text = edit(demo / FLEET, "needle: {name: needle-f, clip: 4}", "needle: {name: needle-z, clip: 4}")
    p = find(problems(load_fleet, demo / FLEET), "models.trail-450-4s.settings.needle.name")
    assert "unknown needle 'needle-z'" in p.message and p.line == line_of(text, "needle-z")


def test_unknown_fuel(demo):
    text = edit(demo / FLEET, "  fuel: e5\n", "  fuel: e7\n")
    p = find(problems(load_fleet, demo / FLEET), "reference.fuel")
    assert "unknown fuel 'e7'" in p.message and p.line == line_of(text, "fuel: e7")


def test_unknown_event_fuel(demo, fleet):
    text = edit(demo / EVENT, "fuel: e10", "fuel: e15")
    p = find(problems(load_event, demo / EVENT, fleet), "fuel")
    assert "unknown fuel 'e15'" in p.message and p.line == line_of(text, "fuel: e15")


def test_jet_size_not_in_family(demo):
    text = edit(demo / FLEET, "settings: {main_jet: {size: 177.5}}", "settings: {main_jet: {size: 176}}")
    p = find(problems(load_fleet, demo / FLEET), "bikes[5].settings.main_jet.size")
    assert "size 176 is not in family 'round-main' (nearest: 175, 177.5)" in p.message
    assert p.line == line_of(text, "size: 176")


def test_stock_size_not_in_family(demo):
    text = edit(demo / FLEET, "{family: hex-main, size: 105, count: 2}", "{family: hex-main, size: 107, count: 2}")
    p = find(problems(load_fleet, demo / FLEET), "stock[6].size")
    assert "not in family 'hex-main'" in p.message and p.line == line_of(text, "size: 107")


def test_clip_outside_grooves(demo):
    text = edit(demo / FLEET, "settings: {needle: {clip: 4}}", "settings: {needle: {clip: 6}}")
    p = find(problems(load_fleet, demo / FLEET), "bikes[3].settings.needle.clip")
    assert "clip 6 is outside needle 'needle-a' which has grooves 1..5" in p.message
    assert p.line == line_of(text, "clip: 6")


def test_screw_kind(demo):
    text = edit(demo / FLEET, "mixture_screw: {kind: fuel, turns: 1.75", "mixture_screw: {kind: idle, turns: 1.75")
    p = find(problems(load_fleet, demo / FLEET), "models.trail-450-4s.settings.mixture_screw.kind")
    assert "expected one of air, fuel, got 'idle'" in p.message and p.line == line_of(text, "kind: idle")


def test_event_display_settings_are_read(demo, fleet):
    event = load_event(DEMO / EVENT, fleet)
    assert event.units is None and event.language is None  # left out: the command decides
    edit(demo / EVENT, "fuel: e10", "units: us\nlanguage: de\nfuel: e10")
    event = load_event(demo / EVENT, fleet)
    assert (event.units, event.language) == ("us", "de")


@pytest.mark.parametrize("key, bad, choices", [("units", "imperial", "metric, us"), ("language", "fr", "en, de")])
def test_event_display_setting_outside_its_choices(demo, fleet, key, bad, choices):
    text = edit(demo / EVENT, "fuel: e10", f"{key}: {bad}\nfuel: e10")
    found = problems(load_event, demo / EVENT, fleet)
    p = find(found, key)
    assert len(found) == 1 and p.line == line_of(text, f"{key}: {bad}")
    assert f"expected one of {choices}, got '{bad}'" in p.message
    assert str(p).startswith(f"{demo / EVENT}:{p.line}: {key}: ")


# The rule: the command line, else the event file, else metric and English.
@pytest.mark.parametrize(
    "in_file, given, expected",
    [
        ((None, None), (None, None), ("metric", "en")),
        (("us", "de"), (None, None), ("us", "de")),
        (("us", "de"), ("metric", "en"), ("metric", "en")),
        ((None, "de"), ("us", None), ("us", "de")),
    ],
)
def test_display_for_command_line_then_event_file_then_default(fleet, in_file, given, expected):
    from dataclasses import replace

    event = replace(load_event(DEMO / EVENT, fleet), units=in_file[0], language=in_file[1])
    display = display_for(event, units=given[0], language=given[1])
    assert (display.units, display.language) == expected
    assert display_for(None, *given) == display_for(replace(event, units=None, language=None), *given)


def test_unknown_key_did_you_mean(demo):
    text = edit(demo / FLEET, "    displacement: 124 cc", "    displacment: 124 cc")
    found = problems(load_fleet, demo / FLEET)
    p = find(found, "models.trail-125-4s.displacment")
    assert "unknown key 'displacment' (did you mean 'displacement'?)" in p.message
    assert p.line == line_of(text, "displacment")
    assert find(found, "models.trail-125-4s.displacement").message.startswith("missing")


def test_exactly_one_pressure(demo):
    text = edit(demo / FLEET, "  qnh: 1013 hPa\n", "  qnh: 1013 hPa\n  station_pressure: 995 hPa\n")
    p = find(problems(load_fleet, demo / FLEET), "reference")
    assert "give exactly one of station_pressure, qnh, sea_level_pressure (given: station_pressure, qnh)" in p.message
    assert p.line == line_of(text, "  elevation: 150 m")


def test_duplicate_key(demo):
    text = edit(demo / FLEET, "fleet: Invented Riding School\n", "fleet: Invented Riding School\nfleet: Again\n")
    p = find(problems(load_fleet, demo / FLEET), "fleet")
    assert "given twice" in p.message and p.line == line_of(text, "fleet: Again")


def test_aliases_refused(demo):
    text = edit(demo / FLEET, "  e5: {ethanol: 5 %}", "  e5: &blend {ethanol: 5 %}\n  e5b: *blend")
    p = problems(load_fleet, demo / FLEET)[0]
    assert "aliases" in p.message and p.line == line_of(text, "*blend")


def test_yaml_syntax(demo):
    text = edit(demo / FLEET, "  - {id: T03, model: trail-250-2s}", "  - {id: T03, model: trail-250-2s")
    p = problems(load_fleet, demo / FLEET)[0]
    assert p.message.startswith("YAML syntax") and p.line >= line_of(text, "{id: T03")


@pytest.mark.parametrize(
    "edits",
    [
        # problems of the structure (keys, units, ranges), all said at once
        (
            ("elevation: 150 m", "elevation: 12 kg"),
            ("reference_afr: 12.5", "referense_afr: 12.5"),
            ("settings: {needle: {clip: 4}}", "settings: {needle: {clip: 12}}"),
        ),
        # problems between the parts (ids, names, needle grooves), all said at once when the structure is sound
        (
            ("{id: T02,", "{id: T01,"),
            ("{id: K02, model: trail-125-4s}", "{id: K02, model: trail-125-s4}"),
            ("settings: {needle: {clip: 4}}", "settings: {needle: {clip: 6}}"),
        ),
    ],
    ids=["structure", "between-parts"],
)
def test_all_problems_at_once(demo, edits):
    for old, new in edits:
        edit(demo / FLEET, old, new)
    with pytest.raises(ConfigError) as info:
        load_fleet(demo / FLEET)
    assert len(info.value.problems) == 3
    lines = str(info.value).splitlines()
    assert all(line.startswith(f"{demo / FLEET}:") for line in lines)
    assert [p.line for p in info.value.problems] == sorted(p.line for p in info.value.problems)


def test_session_ends_before_start(demo):
    text = edit(demo / EVENT, "end: 2026-06-13 12:00", "end: 2026-06-13 08:00")
    p = find(problems(load_event, demo / EVENT), "sessions[0].end")
    assert "at or before it starts" in p.message and p.line == line_of(text, "Sat morning")


def test_sessions_overlap(demo):
    text = edit(demo / EVENT, "start: 2026-06-14 13:00", "start: 2026-06-14 11:00")
    p = find(problems(load_event, demo / EVENT), "sessions[3].start")
    assert "'Sun morning' and 'Sun afternoon' overlap" in p.message and p.line == line_of(text, "Sun afternoon")


def test_time_without_zone(demo):
    text = edit(demo / EVENT, "  time_zone: Europe/Vienna\n", "")
    found = problems(load_event, demo / EVENT)
    p = find(found, "sessions[0].start")
    assert "has no UTC offset and the event gives no site.time_zone" in p.message and p.line == line_of(
        text, "Sat morning"
    )


def test_time_with_offset_needs_no_zone(demo):
    text = (demo / "demo-event-metar.yaml").read_text()
    text = text.replace("  time_zone: Europe/Vienna\n", "").replace("2026-06-13 09:00", "2026-06-13T09:00+02:00")
    text = text.replace("2026-06-13 12:00", "2026-06-13T12:00+02:00")
    (demo / "x.yaml").write_text(text)
    event = load_event(demo / "x.yaml")
    assert event.sessions[0].start.astimezone(UTC).hour == 7


def test_unknown_time_zone(demo):
    text = edit(demo / EVENT, "time_zone: Europe/Vienna", "time_zone: Europe/Viena")
    p = find(problems(load_event, demo / EVENT), "site.time_zone")
    assert "did you mean 'Europe/Vienna'" in p.message and p.line == line_of(text, "Europe/Viena")


def test_session_not_covered(demo):
    text = edit(demo / EVENT, "end: 2026-06-14 16:30", "end: 2026-06-15 16:30")
    p = find(problems(load_event, demo / EVENT), "sessions[3]")
    assert "is not covered by the weather" in p.message and p.line == line_of(text, "Sun afternoon")


def test_weather_gap_in_session(demo):
    csv = demo / "demo-weather.csv"
    lines = csv.read_text().splitlines(keepends=True)
    kept = [line for line in lines if not any(f"2026-06-13 {h:02d}:00" in line for h in (10, 11, 12, 13))]
    csv.write_text("".join(kept))
    text = (demo / EVENT).read_text()
    p = find(problems(load_event, demo / EVENT), "sessions[0]")
    assert "5 h gap" in p.message and "at most 3 h apart" in p.message and p.line == line_of(text, "Sat morning")


def test_csv_value_problems(demo):
    csv = demo / "demo-weather.csv"
    text = csv.read_text().replace("2026-06-13 10:00,", "2026-06-13 10:00,150.0,30.15,64\n#", 1)
    text = text.replace("2026-06-13 20:00,", "2026-06-13 20:00,xx,", 1)
    csv.write_text(text)
    found = problems(load_event, demo / EVENT)
    assert all(p.file == str(csv) for p in found)
    hot = find(found, "air_temperature")
    assert "150.0 degF is outside the accepted range -40..55 degC" in hot.message and hot.line == line_of(text, "150.0")
    assert any("expected 4 cells" in p.message and p.line == line_of(text, "2026-06-13 20:00") for p in found)


def test_csv_header_problems(demo):
    csv = demo / "demo-weather.csv"
    text = csv.read_text().replace("relative_humidity [%]", "relative_humidty [%]").replace("[inHg]", "[inch]")
    csv.write_text(text)
    found = problems(load_event, demo / EVENT)
    assert "did you mean 'relative_humidity'" in find(found, "relative_humidty").message
    assert "is not a pressure" in find(found, "qnh").message
    assert all(p.line == 1 for p in found)


def test_csv_time_not_increasing(demo):
    csv = demo / "demo-weather.csv"
    text = csv.read_text().replace("2026-06-13 05:00,", "2026-06-13 03:00,", 1)
    csv.write_text(text)
    p = find(problems(load_event, demo / EVENT), "time")
    assert "is not after the previous row's time" in p.message and p.line == 7  # header + rows 00..05 h


def test_not_utf8(demo):
    raw = (demo / FLEET).read_bytes().replace(b"Invented Riding School", "Riding Sch\xf6ol".encode("latin-1"))
    (demo / FLEET).write_bytes(raw)
    p = problems(load_fleet, demo / FLEET)[0]
    assert "not UTF-8" in p.message and p.line == 4


@pytest.mark.parametrize("loader", [load_fleet, load_event])
def test_missing_file(tmp_path, loader):
    p = problems(loader, tmp_path / "nowhere.yaml")[0]
    assert "file not found" in p.message and p.file == str(tmp_path / "nowhere.yaml")


def test_missing_weather_table(demo):
    text = edit(demo / EVENT, "weather: demo-weather.csv", "weather: forecast.csv")
    p = problems(load_event, demo / EVENT)[0]
    assert p.file == str(demo / EVENT) and p.line == line_of(text, "weather: forecast.csv") and p.field == "weather"
    assert p.message == f"file not found (looked for {(demo / 'forecast.csv').resolve()})"


def test_metar_report_unreadable(demo):
    text = edit(demo / "demo-event-metar.yaml", "XKSL 130820Z 28007KT 9999 SCT040 11/05 Q1021", "XKSL 13082 garbled")
    p = find(problems(load_event, demo / "demo-event-metar.yaml"), "weather.metar[3]")
    assert "cannot read this METAR report" in p.message and p.line == line_of(text, "garbled")


def test_empty_file(tmp_path):
    (tmp_path / "f.yaml").write_text("# nothing\n")
    assert "empty" in problems(load_fleet, tmp_path / "f.yaml")[0].message


def test_returns_contract_types(fleet):
    assert isinstance(fleet, model.Fleet) and all(isinstance(b, model.Bike) for b in fleet.bikes)
    assert all(isinstance(b.settings.mixture_screw, model.MixtureScrew) for b in fleet.bikes)


def test_time_skipped_by_clock_change(demo):
    # 2026-03-29 02:00..03:00 does not exist in Europe/Vienna (EU summer time starts 01:00 UTC)
    text = edit(demo / EVENT, "start: 2026-06-13 09:00", "start: 2026-03-29 02:30")
    p = find(problems(load_event, demo / EVENT), "sessions[0].start")
    assert "does not exist in Europe/Vienna" in p.message and p.line == line_of(text, "Sat morning")


def test_four_stroke_premix(demo):
    text = edit(demo / FLEET, "{id: F02, model: trail-450-4s}", "{id: F02, model: trail-450-4s, premix: 40}")
    p = find(problems(load_fleet, demo / FLEET), "bikes[10].premix")
    assert "four-stroke" in p.message and p.line == line_of(text, "{id: F02")


def test_jet_range_not_whole_steps(demo):
    text = edit(demo / FLEET, "{from: 140, to: 200, step: 2.5}", "{from: 140, to: 201, step: 2.5}")
    p = find(problems(load_fleet, demo / FLEET), "jet_families.round-main.sizes.step")
    assert "not a whole number of steps" in p.message and p.line == line_of(text, "step: 2.5")


def test_dew_point_above_air_temperature(demo):
    text = edit(demo / FLEET, "dew_point: 6 degC", "dew_point: 18 degC")
    p = find(problems(load_fleet, demo / FLEET), "bikes[8].reference.dew_point")
    assert "dew point above the air temperature" in p.message and p.line == line_of(text, "dew_point: 18")


def test_pressure_keys_name_the_kinds_the_physics_knows():
    # consistency check (not validation): the files' pressure keys (tuning.config.quantities) map onto
    # tuning.air's pressure kinds and model.py's PressureKind, which the physics layer keeps on its own
    from typing import get_args

    from tuning import air
    from tuning.config.model import PressureKind
    from tuning.config.quantities import PRESSURE_KEYS, PRESSURE_NAMES

    assert set(PRESSURE_KEYS.values()) == set(air.PRESSURE_KINDS) == set(get_args(PressureKind)) == set(PRESSURE_NAMES)
