"""Display units and languages: conversions against published values, the message catalogue
complete, and the sheets in US units and in German."""

from __future__ import annotations

from pathlib import Path

import pypdf
import pytest
from babel.messages.frontend import CommandLineInterface
from babel.messages.pofile import read_po

from tuning.display import HPA_PER_INHG, M_PER_FT, Display
from tuning.report import render, tables

ROOT = Path(__file__).resolve().parents[1]
CATALOGUE = ROOT / "tuning" / "locale" / "de" / "LC_MESSAGES" / "carbfleet.po"


@pytest.mark.parametrize(
    "hpa, inhg",
    [
        (1013.25, "29.92"),  # ICAO standard atmosphere at sea level: 1013.25 hPa = 29.92 inHg
        (33.86389, "1.00"),  # NIST SP 811 (2008) B.8: 1 inHg (conventional) = 3.386389e3 Pa
    ],
)
def test_pressure_in_inches_of_mercury(hpa, inhg):
    assert Display("us").pressure(hpa) == f"{inhg} inHg"


def test_conversion_factors_are_nists():
    assert M_PER_FT == 0.3048  # NIST SP 811 (2008) B.8: international foot, exact
    assert HPA_PER_INHG == pytest.approx(33.86389, abs=1e-5)  # NIST SP 811 B.8
    assert Display("us").elevation(1524.0) == "5000 ft"  # 5000 ft x 0.3048 = 1524 m exactly
    assert Display("us").temperature(15.0) == "59 °F"  # ICAO standard sea-level temperature, 15 °C = 59 °F
    assert Display("us").temperature(-40.0) == "−40 °F"  # the scales cross at −40 (definition of the scales)


def test_german_numbers_have_a_decimal_comma_and_english_a_point():
    assert Display("metric", "de").number(0.943, 3) == "0,943"
    assert Display("metric", "en").number(0.943, 3) == "0.943"
    assert Display("metric", "de").number(-2.5, 1) == "−2,5"


def test_unknown_units_or_language_say_so_in_one_line():
    from tuning.errors import UserError

    with pytest.raises(UserError, match="units: expected one of metric, us"):
        Display("imperial")
    with pytest.raises(UserError, match="language: expected one of en, de"):
        Display("metric", "fr")


def test_every_marked_text_has_a_german_translation(tmp_path):
    """The catalogue is complete: every text marked in the code and templates (extracted afresh
    with Babel, as `make messages` does) has a German translation, with the same placeholders."""
    pot = tmp_path / "carbfleet.pot"
    CommandLineInterface().run(
        [
            "pybabel",
            "-q",
            "extract",
            "-F",
            str(ROOT / "tuning" / "locale" / "babel.cfg"),
            "-k",
            "_",
            "-k",
            "N_",
            "-k",
            "n_:1,2",
            "--no-location",
            "-o",
            str(pot),
            str(ROOT),
        ]
    )
    extracted = {m.id for m in read_po(pot.open("rb")) if m.id}
    with CATALOGUE.open("rb") as handle:
        german = {m.id: m.string for m in read_po(handle, locale="de") if m.id}
    missing = sorted(
        str(i) for i in extracted if not german.get(i) or (isinstance(german[i], tuple) and not all(german[i]))
    )
    assert not missing, f"{len(missing)} texts without German, e.g. {missing[:3]}; run make messages and translate"
    import re

    pattern = re.compile(r"%\(\w+\)s|\{\w+\}")
    for key, text in german.items():
        if key not in extracted:
            continue
        source = key if isinstance(key, str) else key[0]
        for form in text if isinstance(text, tuple) else (text,):
            assert sorted(pattern.findall(form)) == sorted(pattern.findall(source)), (source, form)


def _sheet_text(plan, bike, display, tmp_path) -> str:
    entries = tables.entries_by_bike(plan)[bike]
    html = render.sheet_html(plan, entries, "a4", "normal", 0, display=display)
    render.write_pdf(html, tmp_path / "s.pdf", tmp_path)
    return " ".join(p.extract_text() for p in pypdf.PdfReader(tmp_path / "s.pdf").pages)


def test_us_sheet_shows_fahrenheit_feet_and_inches_of_mercury_and_no_hpa(demo_plan, tmp_path):
    bike = demo_plan["entries"][0]["bike"]
    text = _sheet_text(demo_plan, bike, Display("us"), tmp_path)
    for unit in ("°F", "ft", "inHg"):
        assert unit in text
    assert "hPa" not in text and "°C" not in text
    site_ft = round(demo_plan["site"]["elevation_m"] / 0.3048)  # NIST SP 811: 1 ft = 0.3048 m
    assert f"{site_ft} ft" in text


def test_us_summary_shows_no_metric_units(demo_plan, tmp_path):
    render.write_pdf(render.summary_html(demo_plan, links=False, display=Display("us")), tmp_path / "s.pdf", tmp_path)
    text = " ".join(p.extract_text() for p in pypdf.PdfReader(tmp_path / "s.pdf").pages)
    assert "inHg" in text and "°F" in text
    assert "hPa" not in text and "°C" not in text


@pytest.mark.parametrize("which", [0, -1])
def test_german_sheet_is_german_with_decimal_commas(demo_plan, tmp_path, which):
    bike = demo_plan["entries"][which]["bike"]
    text = _sheet_text(demo_plan, bike, Display("metric", "de"), tmp_path)
    assert "Hauptdüse" in text
    assert "0,9" in text  # the jet-area factor with a decimal comma
    in_english = _sheet_text(demo_plan, bike, Display(), tmp_path)
    assert "smaller" in in_english or "larger" in in_english  # the same sheet in English has them
    for english in (
        "In short",
        "Air at the sessions",
        "Change again if",
        "Cautions",
        "smaller",
        "larger",
        "leaner",
        "richer",
        "from the shelf",
        "off bike",
        "no change",
        "sheet",
    ):
        assert english not in text, english
