"""Print what `carbfleet check` says for many bad inputs (one block per case), to compare two versions.

Not a test and not timed: a record of the user-facing problem lines of the file loaders, made to
compare the loaders before and after a change (issue 11: the file models moved to pydantic):

    .venv/bin/python benchmarks/config_messages.py > /tmp/new.txt
    git stash; .venv/bin/python benchmarks/config_messages.py > /tmp/old.txt; git stash pop
    diff /tmp/old.txt /tmp/new.txt

Each case edits a copy of the invented demo files (tuning/demo/) in a temporary folder; the
folder's path is printed as ``DIR``. Every case but "yaml tag" (a tag constructs nothing: the text is read) should fail with exit 2;
a case that passes says so (``EXIT 0``).
"""

from __future__ import annotations

import contextlib
import io
import shutil
import sys
import tempfile
from pathlib import Path

from tuning.cli import main

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
F, E, W, M = "demo-fleet.yaml", "demo-event.yaml", "demo-weather.csv", "demo-event-metar.yaml"

#: (case name, file edited, old text, new text, files given to `check`)
CASES = [
    # misspelt keys and names
    ("key misspelt top", F, "reference_afr:", "referense_afr:", (F,)),
    ("key misspelt nested", F, "  air_temperature: 20 degC", "  air_temprature: 20 degC", (F,)),
    ("key misspelt flow", F, "{slide: round, bore: 38 mm, needle_jet", "{slde: round, bore: 38 mm, needle_jet", (F,)),
    ("key misspelt bike", F, "{id: T01, model: trail-250-2s}", "{id: T01, modle: trail-250-2s}", (F,)),
    ("key misspelt event", E, "time_zone:", "timezone:", (F, E)),
    (
        "key given twice",
        F,
        "  air_temperature: 20 degC\n",
        "  air_temperature: 20 degC\n  air_temperature: 21 degC\n",
        (F,),
    ),
    ("name given twice", F, "  e10: {ethanol: 10 %}\n", "  e10: {ethanol: 10 %}\n  e10: {ethanol: 11 %}\n", (F,)),
    ("unknown fuel", F, "  fuel: e5", "  fuel: e55", (F,)),
    ("unknown family", F, "{family: round-main, size: 172.5}", "{family: rund-main, size: 172.5}", (F,)),
    ("unknown needle", F, "{name: needle-a, clip: 3}", "{name: needle-q, clip: 3}", (F,)),
    ("unknown model", F, "{id: T01, model: trail-250-2s}", "{id: T01, model: trail-250-s2}", (F,)),
    ("unknown event fuel", E, "fuel: e10", "fuel: e100", (F, E)),
    ("unknown time zone", E, "Europe/Vienna", "Europe/Viena", (F, E)),
    ("unknown choice", F, "coding: diameter", "coding: diametre", (F,)),
    ("unknown units word", E, "fuel: e10", "fuel: e10\nunits: imperial", (F, E)),
    # wrong units, out of range, wrong types
    ("wrong unit elevation", F, "elevation: 150 m", "elevation: 150 degC", (F,)),
    ("wrong unit temperature", F, "air_temperature: 20 degC", "air_temperature: 20 m", (F,)),
    ("temperature difference", F, "air_temperature: 20 degC", "air_temperature: 20 delta_degC", (F,)),
    ("unknown unit", F, "qnh: 1013 hPa", "qnh: 1013 hPaa", (F,)),
    ("percent squared", F, "relative_humidity: 50 %", "relative_humidity: 50 %%", (F,)),
    ("not a number", F, "elevation: 150 m", "elevation: high", (F,)),
    ("number is a list", F, "elevation: 150 m", "elevation: [150]", (F,)),
    ("number is null", F, "elevation: 150 m", "elevation:", (F,)),
    ("elevation too high", F, "elevation: 150 m", "elevation: 6000 m", (F,)),
    ("elevation in ft too high", E, "elevation: 1650 m", "elevation: 17000 ft", (F, E)),
    ("temperature too low", F, "air_temperature: 20 degC", "air_temperature: -50 degC", (F,)),
    ("humidity over 100", F, "relative_humidity: 50 %", "relative_humidity: 150", (F,)),
    ("exponent zero", F, "density_exponent: 0.5", "density_exponent: 0", (F,)),
    ("exponent a word", F, "density_exponent: 0.5", "density_exponent: half", (F,)),
    ("clip out of range", F, "{name: needle-a, clip: 3}", "{name: needle-a, clip: 12}", (F,)),
    ("clip not whole", F, "{name: needle-a, clip: 3}", "{name: needle-a, clip: 2.5}", (F,)),
    ("clip beyond needle", F, "{name: needle-a, clip: 3}", "{name: needle-a, clip: 7}", (F,)),
    ("strokes 3", F, "strokes: 2\n    displacement: 249", "strokes: 3\n    displacement: 249", (F,)),
    ("bool not bool", F, "accelerator_pump: true", "accelerator_pump: sometimes", (F,)),
    ("text is a mapping", F, "fleet: Invented Riding School", "fleet: {a: 1}", (F,)),
    ("text empty", F, "fleet: Invented Riding School", "fleet: ''", (F,)),
    ("premix out of range", F, "premix: 40 ", "premix: 400 ", (F,)),
    ("premix a word", F, 'premix: "50:1"', "premix: lots", (F,)),
    (
        "premix on four-stroke",
        F,
        "strokes: 4\n    displacement: 449 cc\n",
        "strokes: 4\n    displacement: 449 cc\n    premix: 40\n",
        (F,),
    ),
    (
        "usable range one entry",
        F,
        "usable_range: [1, 3]}\n      float_level: 16",
        "usable_range: [1]}\n      float_level: 16",
        (F,),
    ),
    (
        "usable range backwards",
        F,
        "usable_range: [1, 3]}\n      float_level: 16",
        "usable_range: [3, 1]}\n      float_level: 16",
        (F,),
    ),
    (
        "screw outside range",
        F,
        "{kind: air, turns: 1.5, usable_range: [1, 3]}",
        "{kind: air, turns: 3.5, usable_range: [1, 3]}",
        (F,),
    ),
    ("needle too thick", F, "straight_diameter: 2.72 mm", "straight_diameter: 2.9 mm", (F,)),
    ("fuel blend over 100", F, "  e5: {ethanol: 5 %}", "  e5: {ethanol: 95 %, methanol: 10 %}", (F,)),
    ("size not in family", F, "{family: round-main, size: 172.5}", "{family: round-main, size: 173}", (F,)),
    (
        "stock twice",
        F,
        "  - {family: pilot-a, size: 40, count: 4}",
        "  - {family: pilot-a, size: 40, count: 4}\n  - {family: pilot-a, size: 40, count: 1}",
        (F,),
    ),
    (
        "stock count negative",
        F,
        "{family: pilot-a, size: 40, count: 4}",
        "{family: pilot-a, size: 40, count: -4}",
        (F,),
    ),
    ("duplicate bike id", F, "{id: T02, model", "{id: T01, model", (F,)),
    ("dew point above temp", F, "dew_point: 6 degC}", "dew_point: 16 degC}", (F,)),
    ("two pressures", F, "  qnh: 1013 hPa\n", "  qnh: 1013 hPa\n  station_pressure: 990 hPa\n", (F,)),
    ("no humidity", F, "  relative_humidity: 50 %\n", "", (F,)),
    ("below station floor", F, "  qnh: 1013 hPa\n", "  sea_level_pressure: 300 hPa\n", (F,)),
    # malformed sizes
    ("sizes to a word", F, "sizes: {from: 140, to: 200, step: 2.5}", "sizes: {from: 140, to: abc, step: 2.5}", (F,)),
    ("sizes a word", F, "sizes: {from: 140, to: 200, step: 2.5}", 'sizes: "big"', (F,)),
    ("sizes backwards", F, "sizes: {from: 140, to: 200, step: 2.5}", "sizes: {from: 200, to: 140, step: 2.5}", (F,)),
    ("sizes missing step", F, "sizes: {from: 140, to: 200, step: 2.5}", "sizes: {from: 140, to: 200}", (F,)),
    ("sizes uneven step", F, "sizes: {from: 140, to: 200, step: 2.5}", "sizes: {from: 140, to: 200, step: 7}", (F,)),
    ("sizes too many", F, "sizes: {from: 140, to: 200, step: 2.5}", "sizes: {from: 140, to: 200, step: 0.01}", (F,)),
    (
        "sizes extra key",
        F,
        "sizes: {from: 140, to: 200, step: 2.5}",
        "sizes: {from: 140, to: 200, step: 2.5, by: 1}",
        (F,),
    ),
    ("sizes list with word", F, "sizes: [90, 95, 100,", "sizes: [90, x95, 100,", (F,)),
    ("sizes list twice", F, "sizes: [90, 95, 100,", "sizes: [90, 95, 95, 100,", (F,)),
    ("sizes empty list", F, "sizes: [30, 32, 35, 38, 40, 42, 45, 48, 50, 52, 55]", "sizes: []", (F,)),
    # sections missing, empty, of the wrong kind
    (
        "fuels missing",
        F,
        "fuels:\n  e5: {ethanol: 5 %}\n  e10: {ethanol: 10 %}\n  race-fuel: {stoichiometric_afr: 14.6, density: 0.720 kg/L}\n",
        "",
        (F,),
    ),
    (
        "fuels a list",
        F,
        "fuels:\n  e5: {ethanol: 5 %}\n  e10: {ethanol: 10 %}\n  race-fuel: {stoichiometric_afr: 14.6, density: 0.720 kg/L}\n",
        "fuels: [e5]\n",
        (F,),
    ),
    ("bikes empty", F, "bikes:\n", "bikes: []\nold_bikes:\n", (F,)),
    (
        "bikes a mapping",
        F,
        "bikes:\n  - {id: T01, model: trail-250-2s}\n",
        "bikes: {T01: 1}\nold_bikes:\n  - {id: T01, model: trail-250-2s}\n",
        (F,),
    ),
    ("bike a word", F, "  - {id: T01, model: trail-250-2s}", "  - T01", (F,)),
    (
        "needle not a mapping",
        F,
        "  needle-a:              # measured in the workshop\n",
        "  needle-a: 12\n  needle-unused:\n",
        (F,),
    ),
    (
        "reference a word",
        F,
        "reference:\n  elevation: 150 m\n  air_temperature: 20 degC\n  qnh: 1013 hPa\n  relative_humidity: 50 %\n  fuel: e5\n",
        "reference: home\n",
        (F,),
    ),
    ("file a list", F, "fleet: Invented Riding School", "- fleet: Invented Riding School", (F,)),
    ("sessions empty", E, "sessions:  ", "sessions: []\nold:  ", (F, E)),
    ("session end before start", E, "end: 2026-06-13 12:00", "end: 2026-06-13 08:00", (F, E)),
    ("session bad time", E, "start: 2026-06-13 09:00", "start: 13.6.2026 9h", (F, E)),
    ("session overlap", E, "start: 2026-06-13 13:30", "start: 2026-06-13 11:30", (F, E)),
    ("session names twice", E, "name: Sat afternoon", "name: Sat morning", (F, E)),
    ("session missing end", E, ", end: 2026-06-13 12:00}", "}", (F, E)),
    ("weather a list", E, "weather: demo-weather.csv", "weather: [demo-weather.csv]", (F, E)),
    ("weather missing file", E, "weather: demo-weather.csv", "weather: nothing.csv", (F, E)),
    ("yaml syntax", F, "fleet: Invented Riding School", "fleet: [Invented Riding School", (F,)),
    ("yaml alias", F, "  e10: {ethanol: 10 %}", "  e10: &x {ethanol: 10 %}\n  e11: *x", (F,)),
    ("yaml tag", F, "fleet: Invented Riding School", "fleet: !!python/object:os.system Invented", (F,)),
    ("wrong file kind", E, "event: Ridge Camp Weekend", "event: Ridge Camp Weekend", (E,)),
    (
        "several at once",
        F,
        "elevation: 150 m\n  air_temperature: 20 degC",
        "elevation: 150 kg\n  air_temprature: 20 degC",
        (F,),
    ),
    # weather table
    ("csv unknown column", W, "relative_humidity [%]", "relativ_humidity [%]", (F, E)),
    ("csv wrong unit", W, "air_temperature [degF]", "air_temperature [m]", (F, E)),
    ("csv two pressures", W, "qnh [inHg],", "qnh [inHg],station_pressure [hPa],", (F, E)),
    ("csv bad cell", W, "2026-06-13 01:00,45.9,", "2026-06-13 01:00,warm,", (F, E)),
    ("csv short row", W, "2026-06-13 01:00,45.9,30.16,83", "2026-06-13 01:00,45.9,30.16", (F, E)),
    ("csv bad time", W, "2026-06-13 01:00,45.9,", "yesterday,45.9,", (F, E)),
    ("csv out of order", W, "2026-06-13 01:00,45.9,", "2026-06-12 01:00,45.9,", (F, E)),
    ("csv out of range", W, "2026-06-13 01:00,45.9,", "2026-06-13 01:00,145.9,", (F, E)),
    ("csv missing time", W, "time,air_temperature", "when,air_temperature", (F, E)),
    # METAR
    ("metar garbage", M, "XKSL 130650Z 27004KT 9999 FEW030 07/05 Q1021", "hello world", (F, M)),
    (
        "metar no pressure",
        M,
        "XKSL 130650Z 27004KT 9999 FEW030 07/05 Q1021",
        "XKSL 130650Z 27004KT 9999 FEW030 07/05",
        (F, M),
    ),
    ("metar dew above", M, "FEW030 07/05 Q1021", "FEW030 05/13 Q1021", (F, M)),
    (
        "metar twice",
        M,
        "XKSL 130720Z 27005KT 9999 FEW030 08/05 Q1021",
        "XKSL 130650Z 27005KT 9999 FEW030 08/05 Q1021",
        (F, M),
    ),
    ("metar pressure range", M, "07/05 Q1021", "07/05 Q1200", (F, M)),
    ("metar not text", M, "    - XKSL 130650Z 27004KT 9999 FEW030 07/05 Q1021", "    - {a: 1}", (F, M)),
    ("metar empty list", M, "  metar:   #", "  metar: []\n  old:   #", (F, M)),
]


def run_case(folder: Path, edited: str, old: str, new: str, files) -> list[str]:
    for f in DEMO.iterdir():
        if f.is_file():
            shutil.copy(f, folder / f.name)
    path = folder / edited
    text = path.read_text(encoding="utf-8")
    if old not in text:
        return [f"SET-UP: {old!r} not in {edited}"]
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(["check", *(str(folder / f) for f in files)])
    lines = err.getvalue().replace(str(folder), "DIR").splitlines()
    return ([] if code == 2 else [f"EXIT {code}"]) + lines


def main_() -> int:
    import warnings

    warnings.simplefilter("ignore")
    for name, edited, old, new, files in CASES:
        with tempfile.TemporaryDirectory() as tmp:
            lines = run_case(Path(tmp), edited, old, new, files)
        print(f"## {name}")
        print("\n".join(lines) if lines else "(nothing said)")
    return 0


if __name__ == "__main__":
    sys.exit(main_())
