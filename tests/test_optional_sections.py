"""Valid inputs with optional sections left out: `carbfleet plan` and `build` never crash on them.

Each case is a copy of the invented demo scenario (tuning/demo/demo-*.yaml and its weather
table) with one optional part taken away, as fleet_configs/FORMATS.md allows: no stock list, no
needles, only the reference fuel, no per-bike reference/overrides/notes, no accelerator pump, no
premix, four-strokes only, one bike and one session, no event fuel, no site time zone, and the
weather table in other pressure and humidity kinds and units. Every case is planned; a few are
built end to end (builds take several seconds each). Weather values derived below are INVENTED
(plausible numbers for the demo site), not physical results.

These tests check what a user sees: the exit code, the files, the words on the sheets.
"""

from __future__ import annotations

import csv
import html
import io
import json
import re
from pathlib import Path

import pypdf
import pytest
import yaml

from tuning.cli import main
from tuning.report.names import safe_file_names

ROOT = Path(__file__).resolve().parents[1]
FLEET = ROOT / "tuning" / "demo" / "demo-fleet.yaml"
EVENT = ROOT / "tuning" / "demo" / "demo-event.yaml"
WEATHER = ROOT / "tuning" / "demo" / "demo-weather.csv"

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")

HPA_PER_INHG = 33.8639  # conventional inch of mercury, 3386.389 Pa (from memory); only to invent inputs
SITE_OFFSET = "+02:00"  # the demo site's UTC offset in June (Europe/Vienna, CEST)


# --- the demo scenario as plain data --------------------------------------------------------
def demo() -> tuple[dict, dict, list[str], list[list[str]]]:
    """The demo fleet and event as dicts, and the weather table as header and rows (text)."""
    fleet = yaml.safe_load(FLEET.read_text(encoding="utf-8"))
    event = yaml.safe_load(EVENT.read_text(encoding="utf-8"))
    lines = [line for line in WEATHER.read_text(encoding="utf-8").splitlines() if line and not line.startswith("#")]
    rows = list(csv.reader(lines))
    return fleet, event, rows[0], rows[1:]


def write_case(folder: Path, fleet: dict, event: dict, header: list[str], rows: list[list[str]]) -> tuple[str, str]:
    """Write the case's fleet, event and weather files into ``folder``; return the two YAML paths."""
    folder.mkdir(parents=True, exist_ok=True)
    event = dict(event, weather="weather.csv")
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows([header, *rows])
    (folder / "weather.csv").write_text(buffer.getvalue(), encoding="utf-8")
    fleet_path, event_path = folder / "fleet.yaml", folder / "event.yaml"
    fleet_path.write_text(yaml.safe_dump(fleet, sort_keys=False, allow_unicode=True), encoding="utf-8")
    event_path.write_text(yaml.safe_dump(event, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return str(fleet_path), str(event_path)


def column(header: list[str], name: str) -> int:
    return next(i for i, h in enumerate(header) if h.split("[")[0].strip() == name)


# --- edits: each takes (fleet, event, header, rows) and changes them in place ------------------
def no_stock(fleet, event, header, rows):
    del fleet["stock"]


def empty_stock(fleet, event, header, rows):
    fleet["stock"] = []


def no_needles(fleet, event, header, rows):
    del fleet["needles"]
    for model in fleet["models"].values():
        model["settings"].pop("needle", None)
    for bike in fleet["bikes"]:
        bike.get("settings", {}).pop("needle", None)
    for bike in fleet["bikes"]:
        if bike.get("settings") == {}:
            del bike["settings"]


def needles_without_geometry(fleet, event, header, rows):
    fleet["needles"] = {name: {} for name in fleet["needles"]}


def reference_fuel_only(fleet, event, header, rows):
    fleet["fuels"] = {fleet["reference"]["fuel"]: fleet["fuels"][fleet["reference"]["fuel"]]}
    event.pop("fuel")


def plain_gasoline(fleet, event, header, rows):
    """One fuel with every field left out: gasoline without alcohol."""
    fleet["fuels"] = {"pump": {}}
    fleet["reference"]["fuel"] = "pump"
    event.pop("fuel")


def no_own_reference(fleet, event, header, rows):
    for bike in fleet["bikes"]:
        bike.pop("reference", None)


def no_overrides_or_notes(fleet, event, header, rows):
    for bike in fleet["bikes"]:
        bike.pop("settings", None)
        bike.pop("notes", None)


def no_accelerator_pump(fleet, event, header, rows):
    for model in fleet["models"].values():
        model["carburetor"].pop("accelerator_pump", None)


def no_premix(fleet, event, header, rows):
    """Oil-injected two-strokes: no premix anywhere."""
    fleet.pop("premix", None)
    for model in fleet["models"].values():
        model.pop("premix", None)


def four_strokes_only(fleet, event, header, rows):
    fleet["models"] = {k: m for k, m in fleet["models"].items() if m["strokes"] == 4}
    fleet["bikes"] = [b for b in fleet["bikes"] if b["model"] in fleet["models"]]


def single_bike_single_session(fleet, event, header, rows):
    fleet["bikes"] = [fleet["bikes"][0]]
    event["sessions"] = [event["sessions"][0]]


def no_event_fuel(fleet, event, header, rows):
    event.pop("fuel")


def no_site_time_zone(fleet, event, header, rows):
    """Times carry their UTC offset instead of the site naming its time zone."""
    del event["site"]["time_zone"]
    for session in event["sessions"]:
        session["start"] += SITE_OFFSET
        session["end"] += SITE_OFFSET
    for row in rows:
        row[0] = row[0].replace(" ", "T") + SITE_OFFSET


def no_optional_model_fields(fleet, event, header, rows):
    """No fleet density exponent or reference AFR; models without needle-jet bore, screw range, float level."""
    for key in ("density_exponent", "reference_afr"):
        fleet.pop(key, None)
    for model in fleet["models"].values():
        model["carburetor"].pop("needle_jet", None)
        model["settings"]["mixture_screw"].pop("usable_range", None)
        model["settings"].pop("float_level", None)


def _dew_point_f(header, rows):
    t, rh = column(header, "air_temperature"), column(header, "relative_humidity")
    header[rh] = "dew_point [degF]"
    for row in rows:  # invented: a dew point 9 degF below the air, drier at noon
        row[rh] = f"{float(row[t]) - 9.0 - (100.0 - float(row[rh])) / 10.0:.1f}"


def weather_fahrenheit_inhg(fleet, event, header, rows):
    """The demo's own table: air temperature in degF, QNH in inHg (kept as it is)."""
    assert {"air_temperature [degF]", "qnh [inHg]"} <= set(header), header


def weather_dew_point(fleet, event, header, rows):
    _dew_point_f(header, rows)


def weather_station_pressure_hpa(fleet, event, header, rows):
    p = column(header, "qnh")
    header[p] = "station_pressure [hPa]"
    for row in rows:  # invented: about 18 % below the sea-level value at 1650 m
        row[p] = f"{float(row[p]) * HPA_PER_INHG * 0.8235:.1f}"


def weather_station_pressure_inhg(fleet, event, header, rows):
    p = column(header, "qnh")
    header[p] = "station_pressure [inHg]"
    for row in rows:
        row[p] = f"{float(row[p]) * 0.8235:.2f}"


def weather_sea_level_pressure(fleet, event, header, rows):
    p = column(header, "qnh")
    header[p] = "sea_level_pressure [hPa]"
    for row in rows:
        row[p] = f"{float(row[p]) * HPA_PER_INHG:.1f}"


def weather_celsius_hpa(fleet, event, header, rows):
    t, p = column(header, "air_temperature"), column(header, "qnh")
    header[t], header[p] = "air_temperature [degC]", "qnh [hPa]"
    for row in rows:
        row[t] = f"{(float(row[t]) - 32.0) / 1.8:.1f}"
        row[p] = f"{float(row[p]) * HPA_PER_INHG:.1f}"


def weather_default_units(fleet, event, header, rows):
    """Columns without brackets take the default units (degC, hPa, %)."""
    weather_celsius_hpa(fleet, event, header, rows)
    header[:] = [h.split("[")[0].strip() for h in header]


def reference_in_other_units(fleet, event, header, rows):
    fleet["reference"] = {
        "elevation": "490 ft",
        "air_temperature": "68 degF",
        "sea_level_pressure": "29.92 inHg",
        "dew_point": "48 degF",
        "fuel": fleet["reference"]["fuel"],
    }


def everything_optional_absent(fleet, event, header, rows):
    """Every optional part at once, on one two-stroke and one four-stroke."""
    for edit in (
        no_stock,
        no_needles,
        plain_gasoline,
        no_own_reference,
        no_overrides_or_notes,
        no_accelerator_pump,
        no_premix,
        no_optional_model_fields,
        no_site_time_zone,
    ):
        edit(fleet, event, header, rows)
    keep = {"trail-250-2s", "trail-450-4s"}
    fleet["models"] = {k: m for k, m in fleet["models"].items() if k in keep}
    fleet["bikes"] = [next(b for b in fleet["bikes"] if b["model"] == k) for k in sorted(keep)]
    used = {m["settings"][j]["family"] for m in fleet["models"].values() for j in ("main_jet", "pilot_jet")}
    fleet["jet_families"] = {k: f for k, f in fleet["jet_families"].items() if k in used}
    event["sessions"] = [event["sessions"][0]]
    _dew_point_f(header, rows)


PLAN_CASES = [
    no_stock,
    empty_stock,
    no_needles,
    needles_without_geometry,
    reference_fuel_only,
    plain_gasoline,
    no_own_reference,
    no_overrides_or_notes,
    no_accelerator_pump,
    no_premix,
    four_strokes_only,
    single_bike_single_session,
    no_event_fuel,
    no_site_time_zone,
    no_optional_model_fields,
    weather_fahrenheit_inhg,
    weather_dew_point,
    weather_station_pressure_hpa,
    weather_station_pressure_inhg,
    weather_sea_level_pressure,
    weather_celsius_hpa,
    weather_default_units,
    reference_in_other_units,
    everything_optional_absent,
]


def make_case(folder: Path, edit) -> tuple[str, str, dict]:
    fleet, event, header, rows = demo()
    edit(fleet, event, header, rows)
    fleet_path, event_path = write_case(folder, fleet, event, header, rows)
    return fleet_path, event_path, fleet


@pytest.mark.parametrize("edit", PLAN_CASES, ids=lambda f: f.__name__)
def test_plan_runs_without_the_optional_part(edit, tmp_path, capsys):
    fleet_path, event_path, fleet = make_case(tmp_path / "in", edit)
    assert main(["check", fleet_path, event_path]) == 0, capsys.readouterr().err
    checked = capsys.readouterr().out
    assert main(["plan", fleet_path, event_path, "--out", str(tmp_path / "out")]) == 0, capsys.readouterr().err
    printed = capsys.readouterr().out
    assert "None" not in checked + printed  # a value not on record is never shown as Python's None
    planned = printed.splitlines()[0]
    if fleet.get("stock"):
        assert re.search(r"\b\d+ jets? to order\b", planned) and "no stock list kept" not in checked + planned
    else:  # nothing can be short without a list of what is on the shelf
        assert "no stock list kept" in checked and "in stock" not in checked
        assert planned.endswith(", no stock list kept") and "to order" not in planned
    doc = json.loads((tmp_path / "out" / "recommendations.json").read_text(encoding="utf-8"))
    with open(tmp_path / "out" / "recommendations.csv", encoding="utf-8", newline="") as handle:
        bikes = {row["bike"] for row in csv.DictReader(handle)}
    assert bikes == {b["id"] for b in fleet["bikes"]}
    assert len(doc["entries"]) == len(bikes) * len(doc["sessions"])


# --- end-to-end builds (a few: each takes several seconds) -----------------------------------
def one_bike_per_model(fleet, event, header, rows):
    """Keep one bike of each model: one with overrides or its own reference where there is one."""

    def special(bike):
        return "settings" in bike or "reference" in bike

    models = {bike["model"] for bike in fleet["bikes"]}
    chosen = [
        next(
            (b for b in fleet["bikes"] if b["model"] == m and special(b)),
            next(b for b in fleet["bikes"] if b["model"] == m),
        )
        for m in models
    ]
    fleet["bikes"] = [b for b in fleet["bikes"] if any(b is c for c in chosen)]


def both(*edits):
    def edit(fleet, event, header, rows):
        for e in edits:
            e(fleet, event, header, rows)

    edit.__name__ = "+".join(e.__name__ for e in edits)
    return edit


BUILD_CASES = [
    both(no_stock, one_bike_per_model),  # `stock: []` takes the same path: planned above
    both(no_needles, one_bike_per_model),
    single_bike_single_session,
    everything_optional_absent,
]


def visible_text(page: str) -> str:
    """The words of an HTML page (no style, no chart, no tags, entities decoded)."""
    page = re.sub(r"<(style|svg)\b.*?</\1>", " ", page, flags=re.S)
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page)))


@pytest.mark.parametrize("edit", BUILD_CASES, ids=lambda f: f.__name__)
def test_build_runs_without_the_optional_part(edit, tmp_path, capsys):
    fleet_path, event_path, fleet = make_case(tmp_path / "in", edit)
    out = tmp_path / "out"
    code = main(["build", fleet_path, event_path, "--out", str(out), "--quiet", "--workers", "1"])
    assert code == 0, capsys.readouterr().err
    bikes = [b["id"] for b in fleet["bikes"]]
    names = safe_file_names(bikes)
    for bike in bikes:
        assert len(pypdf.PdfReader(out / "sheets" / f"{names[bike]}.pdf").pages) == 1, bike
        assert bike in visible_text((out / "sheets" / f"{names[bike]}.html").read_text(encoding="utf-8"))
    summary = visible_text((out / "fleet-summary.html").read_text(encoding="utf-8"))
    pages = [summary, visible_text((out / "index.html").read_text(encoding="utf-8"))]
    pages += [visible_text((out / "sheets" / f"{names[b]}.html").read_text(encoding="utf-8")) for b in bikes]
    assert not any(re.search(r"\bNone\b", page) for page in pages)  # nothing on record shows as a dash or in words
    doc = json.loads((out / "recommendations.json").read_text(encoding="utf-8"))
    if not fleet.get("stock"):
        # Without a stock list nothing can be called short: the summary says there is no list,
        # and so does every sheet where a jet changes.
        assert "no stock list kept" in summary and "SHORT" not in summary
        assert "jet sizes short" not in summary
        changed = {
            e["bike"]
            for e in doc["entries"]
            if e["settings"]["main_jet"]["steps"] or e["settings"]["pilot_jet"]["steps"]
        }
        assert changed  # the demo site is high: every case changes some jet
        for bike in changed:
            sheet = visible_text((out / "sheets" / f"{names[bike]}.html").read_text(encoding="utf-8"))
            assert "no stock list kept" in sheet and "NOT IN STOCK" not in sheet, bike
    else:
        assert "no stock list kept" not in summary
