"""Display units and language at the command line: ``--units`` and ``--language`` on ``air``,
``plan`` and ``build``, the event file's ``units:`` and ``language:``, and the files staying SI.

Check values come from outside the project, each with its source beside it:
NIST SP 811 (2008), appendix B.8 (1 ft = 0.3048 m exactly; 1 inHg = 3386.389 Pa) and the ICAO
standard atmosphere (sea level 1013.25 hPa = 29.92 inHg and 15 °C = 59 °F).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import tuning.report
from tuning.cli import main
from tuning.display import Display

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
FLEET, EVENT = "demo-fleet.yaml", "demo-event.yaml"

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")

ROW = re.compile(r"^(?P<label>\S.*?)\s{2,}(?P<value>\S+)(?: (?P<unit>\S+))?$")


def air_rows(capsys, *options) -> dict[str, tuple[str, str]]:
    """``carbfleet air *options`` as {label: (value, unit)}; exit 0 asserted."""
    code = main(["air", *options])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    rows = {}
    for line in captured.out.splitlines():
        match = ROW.match(line)
        if match:
            rows[match["label"]] = (match["value"], match["unit"] or "")
    return rows


def number(text: str) -> float:
    return float(text.replace(",", ".").replace("−", "-"))


# ICAO standard atmosphere at sea level, dry air; the elevation 1219.2 m = 4000 ft exactly (NIST SP 811, B.8).
STANDARD_BARE = [
    "--elevation",
    "1219.2",
    "--temperature",
    "15",
    "--station-pressure",
    "1013.25",
    "--relative-humidity",
    "0",
]
STANDARD_US = [
    "--elevation",
    "4000 ft",
    "--temperature",
    "59 degF",
    "--station-pressure",
    "29.92 inHg",
    "--relative-humidity",
    "0 %",
]


def test_air_in_us_units_shows_degf_ft_inhg_and_no_metric_unit(capsys):
    code = main(["air", *STANDARD_BARE, "--units", "us"])
    out = capsys.readouterr().out
    assert code == 0
    assert "°F" in out and " ft" in out and "inHg" in out
    assert "hPa" not in out and "°C" not in out
    rows = air_rows(capsys, *STANDARD_BARE, "--units", "us")
    assert rows["station pressure"] == ("29.92", "inHg")  # 1013.25 hPa = 29.92 inHg (ICAO standard)
    assert rows["air temperature"] == ("59.0", "°F")  # 15 °C = 59 °F (ICAO standard sea-level temperature)
    assert rows["site elevation"] == ("4000", "ft")  # 1219.2 m / 0.3048 m (NIST SP 811, B.8)
    assert (
        rows["pressure altitude"][1] == "ft" and abs(number(rows["pressure altitude"][0])) <= 1
    )  # ISA: 1013.25 hPa is 0 ft


def test_air_pressure_altitude_in_feet_against_the_standard_atmosphere(capsys):
    # ICAO standard atmosphere: 843.1 hPa at 5000 ft (table value, from memory; the ISA formula
    # with NIST's foot gives 843.07 hPa). 0.05 hPa of printed precision is about 2 ft there.
    rows = air_rows(
        capsys, "--temperature", "5", "--station-pressure", "843.1", "--relative-humidity", "0", "--units", "us"
    )
    value, unit = rows["pressure altitude"]
    assert unit == "ft" and number(value) == pytest.approx(5000, abs=3)


def test_air_bare_numbers_keep_their_meaning_whatever_the_units(capsys):
    # bare numbers are m, degC and hPa under --units us too: the same table as with the units written out
    bare = air_rows(capsys, *STANDARD_BARE, "--units", "us")
    given = air_rows(capsys, *STANDARD_US, "--units", "us")
    for label in ("site elevation", "air temperature", "station pressure"):
        assert bare[label] == given[label]


def test_air_json_stays_si_whatever_the_units(capsys):
    outputs = []
    for extra in ([], ["--units", "us"], ["--units", "us", "--language", "de"]):
        assert main(["air", *STANDARD_BARE, "--json", *extra]) == 0
        outputs.append(capsys.readouterr().out)
    assert outputs[0] == outputs[1] == outputs[2]
    assert '"station_pressure_hPa": 1013.25' in outputs[0]


def test_air_in_german_has_a_decimal_comma(capsys):
    de = Display("metric", "de")._  # the rows' names in German, from the catalogue
    rows = air_rows(capsys, *STANDARD_BARE, "--language", "de")
    assert rows[de("air temperature")] == ("15,0", "°C")
    assert rows[de("moist-air density")][0].startswith("1,")
    assert not any(re.search(r"\d\.\d", value) for value, _unit in rows.values())
    rows = air_rows(capsys, *STANDARD_BARE, "--units", "us", "--language", "de")
    assert rows[de("station pressure")] == ("29,92", "inHg")  # 1013.25 hPa = 29.92 inHg (ICAO standard)


def test_air_help_says_bare_numbers_ignore_units(capsys):
    with pytest.raises(SystemExit):
        main(["air", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "whatever --units says" in out and "--language" in out


@pytest.mark.parametrize("option", [["--units", "imperial"], ["--language", "fr"]])
def test_unknown_choice_on_the_command_line_is_refused(capsys, option):
    with pytest.raises(SystemExit) as info:
        main(["air", *STANDARD_BARE, *option])
    assert info.value.code == 2
    assert "invalid choice" in capsys.readouterr().err


# --- plan ----------------------------------------------------------------------------------
def plan(capsys, demo, out: str, *options) -> tuple[str, str]:
    code = main(["plan", str(demo / FLEET), str(demo / EVENT), "--out", str(demo / out), *options])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return captured.out, captured.err


def add_to_event(demo, lines: str) -> None:
    path = demo / EVENT
    path.write_text(path.read_text(encoding="utf-8").replace("fuel: e10", f"{lines}\nfuel: e10", 1), encoding="utf-8")


def test_plan_in_us_units_prints_feet_and_no_metric_unit_and_writes_si_files(demo, capsys):
    metric_out, _ = plan(capsys, demo, "metric")
    us_out, us_err = plan(capsys, demo, "us", "--units", "us")
    assert "(Kesselalm Training Ground, 1650 m)" in metric_out.splitlines()[0]
    assert "(Kesselalm Training Ground, 5413 ft)" in us_out.splitlines()[0]  # 1650 m / 0.3048 (NIST SP 811, B.8)
    for text in (us_out, us_err):
        assert "hPa" not in text and "°C" not in text and " m)" not in text
    # regression check, not validation: the files are the same whatever the display units
    for name in ("recommendations.json", "recommendations.csv", "pick-list.csv"):
        assert (demo / "us" / name).read_bytes() == (demo / "metric" / name).read_bytes(), name


def test_plan_in_german_has_a_decimal_comma(demo, capsys):
    out, _ = plan(capsys, demo, "de", "--language", "de")
    rows = [line for line in out.splitlines() if line.startswith("  ") and re.search(r"\b(factor|Faktor) ", line)]
    assert rows and all(re.search(r"(factor|Faktor) \d+,\d+", line) for line in rows)
    assert not any(re.search(r"(factor|Faktor) \d+\.\d", line) for line in rows)


def test_plan_takes_the_event_files_units_and_the_command_line_wins(demo, capsys):
    add_to_event(demo, "units: us\nlanguage: de")
    out, _ = plan(capsys, demo, "from-file")
    assert "5413 ft" in out.splitlines()[0] and re.search(r"(factor|Faktor) \d+,\d+", out)
    out, _ = plan(capsys, demo, "from-flags", "--units", "metric", "--language", "en")
    assert "1650 m" in out.splitlines()[0] and "ft" not in out.splitlines()[0]
    assert not re.search(r"(factor|Faktor) \d+,\d+", out)


@pytest.mark.parametrize(
    "setting, field, choices", [("units: imperial", "units", "metric, us"), ("language: fr", "language", "en, de")]
)
def test_bad_event_setting_is_one_line_with_file_and_line(demo, capsys, setting, field, choices):
    add_to_event(demo, setting)
    text = (demo / EVENT).read_text(encoding="utf-8")
    line = text[: text.index(setting)].count("\n") + 1
    code = main(["plan", str(demo / FLEET), str(demo / EVENT), "--out", str(demo / "out")])
    captured = capsys.readouterr()
    assert code == 2 and captured.out == ""
    assert captured.err.splitlines() == [
        f"carbfleet plan: {demo / EVENT}:{line}: {field}: expected one of {choices}, got '{setting.split()[1]}'"
    ]
    assert not (demo / "out").exists()


# --- build: what the command line passes on ------------------------------------------------
class _Built:
    def summary_line(self) -> str:
        return "built"


@pytest.mark.parametrize(
    "options, expected",
    [
        ([], (None, None)),
        (["--units", "us"], ("us", None)),
        (["--units", "metric", "--language", "de"], ("metric", "de")),
    ],
)
def test_build_passes_units_and_language_on(monkeypatch, capsys, tmp_path, options, expected):
    calls = []
    monkeypatch.setattr(tuning.report, "build", lambda *args, **kwargs: calls.append(kwargs) or _Built())
    assert main(["build", str(DEMO / FLEET), str(DEMO / EVENT), "--out", str(tmp_path / "out"), *options]) == 0
    assert capsys.readouterr().out == "built\n"
    (kwargs,) = calls
    assert (kwargs.get("units"), kwargs.get("language")) == expected


def test_build_takes_the_event_files_units_and_the_command_lines_language(demo, capsys):
    """End to end: ``units: us`` in the event file and ``--language de`` on the command line give
    German sheets in feet and inHg, a German closing line, and SI files."""
    add_to_event(demo, "units: us")
    out = demo / "out"
    code = main(
        ["build", str(demo / FLEET), str(demo / EVENT), "--out", str(out), "--language", "de", "--workers", "1"]
    )
    captured = capsys.readouterr()
    assert code == 0, captured.err
    assert "Einstellblätter" in captured.out and "built" not in captured.out  # the closing line in German
    import pypdf

    text = " ".join(pypdf.PdfReader(sorted((out / "sheets").glob("*.pdf"))[0]).pages[0].extract_text().split())
    assert "5413 ft" in text and "inHg" in text and "hPa" not in text  # 1650 m / 0.3048 (NIST SP 811)
    assert "Hauptdüse" in text
    assert "station_pressure_hPa" in (out / "recommendations.csv").read_text(encoding="utf-8").splitlines()[0]
