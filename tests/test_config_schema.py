"""JSON Schema round trip, the committed schema files, and `carbfleet check` / `carbfleet schema`."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest
import yaml

from tuning.cli import main
from tuning.config import event_schema, fleet_schema, load_event, load_fleet

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
DOCS = Path(__file__).resolve().parent.parent / "fleet_configs"
PAIRS = [("demo-fleet.yaml", fleet_schema), ("demo-event.yaml", event_schema), ("demo-event-metar.yaml", event_schema)]


@pytest.mark.parametrize("name, schema", PAIRS, ids=[p[0] for p in PAIRS])
def test_demo_validates_against_exported_schema(name, schema):
    # round trip: load with our loader, export the schema as JSON text, validate the file with jsonschema
    (load_fleet if schema is fleet_schema else load_event)(DEMO / name)
    exported = json.loads(json.dumps(schema()))
    jsonschema.Draft202012Validator.check_schema(exported)
    jsonschema.Draft202012Validator(exported).validate(yaml.safe_load((DEMO / name).read_text()))


@pytest.mark.parametrize(
    "document",
    [
        {"fleet": "x"},  # required keys missing
        {"fleet": "x", "reference": {}, "fuels": {}, "jet_families": {}, "models": {}, "bikes": [], "colour": 1},
    ],
)
def test_schema_rejects_what_the_loader_rejects(document):
    assert list(jsonschema.Draft202012Validator(fleet_schema()).iter_errors(document))


def test_schema_rejects_unknown_key_and_two_pressures():
    doc = yaml.safe_load((DEMO / "demo-fleet.yaml").read_text())
    validator = jsonschema.Draft202012Validator(fleet_schema())
    doc["reference"]["station_pressure"] = 990
    assert list(validator.iter_errors(doc))
    del doc["reference"]["station_pressure"]
    doc["bikes"][0]["colour"] = "red"
    assert list(validator.iter_errors(doc))


@pytest.mark.parametrize("which, schema", [("fleet", fleet_schema), ("event", event_schema)])
def test_committed_schema_files_are_current(which, schema):
    # consistency check (not validation): the files editors point at equal the generated schema
    assert json.loads((DOCS / f"{which}.schema.json").read_text()) == schema()


def test_every_field_is_documented():
    def walk(s, where):
        for key, sub in s.get("properties", {}).items():
            assert sub.get("description"), f"{where}.{key} has no description"
            walk(sub, f"{where}.{key}")
        for sub in s.get("anyOf", []):
            walk(sub, where)
        for key in ("items", "additionalProperties"):
            if isinstance(s.get(key), dict):
                walk(s[key], where)

    walk(fleet_schema(), "fleet")
    walk(event_schema(), "event")


def test_check_command_valid(capsys):
    assert main(["check", str(DEMO / "demo-fleet.yaml"), str(DEMO / "demo-event.yaml")]) == 0
    out = capsys.readouterr().out
    assert "trail-250-2s: 6 bikes" in out and "session Sat afternoon" in out and "every session covered" in out


def test_check_command_problems(tmp_path, capsys):
    bad = tmp_path / "f.yaml"
    bad.write_text((DEMO / "demo-fleet.yaml").read_text().replace("elevation: 150 m", "elevation: 12 kg"))
    assert main(["check", str(bad)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    # one problem: tuning.cli.main prefixes the command's name
    assert (
        captured.err.strip()
        == f"carbfleet check: {bad}:7: reference.elevation: '12 kg' is not a length (it is a mass); give it in m or a unit of the same kind"
    )
    assert "Traceback" not in captured.err


def test_check_command_missing_file(tmp_path, capsys):
    assert main(["check", str(tmp_path / "none.yaml")]) == 2
    assert "file not found" in capsys.readouterr().err


@pytest.mark.parametrize(
    "args, keys", [([], {"fleet", "event"}), (["fleet"], {"$schema", "properties"}), (["event"], {"$schema"})]
)
def test_schema_command(capsys, args, keys):
    assert main(["schema", *args]) == 0
    printed = json.loads(capsys.readouterr().out)
    assert keys <= printed.keys()


def test_committed_field_reference_is_current():
    # consistency check (not validation): fleet_configs/FORMATS.md is generated from the file models
    from tuning.config.docs import field_reference

    assert (DOCS / "FORMATS.md").read_text() == field_reference()


# The schema carries units and ranges, not only words (issue 11): an editor flags a value of the
# wrong kind or out of range as the loader does.
@pytest.mark.parametrize(
    "where, value, valid",
    [
        (("reference", "elevation"), "150 degC", False),  # a temperature where a length is due
        (("reference", "elevation"), "150 kg", False),
        (("reference", "elevation"), 6000, False),  # above 5000 m (tuning.config.quantities.FILE_RANGES)
        (("reference", "elevation"), "4400 ft", True),
        (("reference", "elevation"), -500, True),
        (("reference", "air_temperature"), "20 m", False),
        (("reference", "air_temperature"), "68 degF", True),
        (("reference", "qnh"), "29.92 inHg", True),
        (("reference", "relative_humidity"), 101, False),
        (("reference", "relative_humidity"), "50 %", True),
    ],
)
def test_schema_knows_units_and_ranges(where, value, valid):
    doc = yaml.safe_load((DEMO / "demo-fleet.yaml").read_text())
    doc[where[0]][where[1]] = value
    errors = list(jsonschema.Draft202012Validator(fleet_schema()).iter_errors(doc))
    assert (not errors) == valid, errors


def test_event_schema_refuses_a_site_elevation_in_degrees():
    doc = yaml.safe_load((DEMO / "demo-event.yaml").read_text())
    doc["site"]["elevation"] = "1650 degC"
    assert list(jsonschema.Draft202012Validator(event_schema()).iter_errors(doc))


def test_every_quantity_names_its_unit_and_bounds():
    from tuning.config.quantities import FILE_RANGES

    site = event_schema()["properties"]["site"]["properties"]["elevation"]
    assert site["x-unit"] == "m"
    number = next(form for form in site["anyOf"] if form["type"] == "number")
    assert (number["minimum"], number["maximum"]) == (FILE_RANGES["elevation"].low, FILE_RANGES["elevation"].high)
    reference = fleet_schema()["properties"]["reference"]["properties"]
    assert reference["relative_humidity"]["x-unit"] == "%" and reference["air_temperature"]["x-unit"] == "degC"
