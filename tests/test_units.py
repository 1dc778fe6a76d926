"""tuning.config.units.parse_quantity against exact defined factors and pint's own definitions."""

import math

import pytest

from tuning.config.units import UnitProblem, parse_quantity, registry


@pytest.mark.parametrize(
    "value, default_unit, expected",
    [
        # exact by definition: 1 ft = 0.3048 m (international yard and pound, 1959; NIST SP 811, B.8)
        ("4400 ft", "m", 4400 * 0.3048),
        ("1 ft", "m", 0.3048),
        # conventional inch of mercury = 3386.389 Pa (NIST SP 811 (2008), appendix B.8, printed to 7 digits)
        ("1 inHg", "hPa", 3386.389),
        ("29.92 inHg", "hPa", 29.92 * 3386.389),
        # degree Fahrenheit: T/K = (t/°F + 459.67) × 5/9 (NIST SP 811, B.8, exact)
        ("62 degF", "degC", (62 + 459.67) * 5 / 9),
        ("-40 degF", "degC", 233.15),  # -40 °F = -40 °C (exact)
        # degree Celsius: T/K = t/°C + 273.15 (SI Brochure, 9th ed. 2019, exact)
        ("17 degC", "degC", 290.15),
        (17, "degC", 290.15),  # bare number in the default unit
        ("1018 hPa", "hPa", 101800.0),  # 1 hPa = 100 Pa (exact, SI)
        (1018, "hPa", 101800.0),
        ("40 %", "percent", 0.40),  # percent -> fraction
        ("249 cc", "cc", 249e-6),  # 1 cc = 1 cm³ = 1e-6 m³ (exact)
        ("0.745 kg/L", "kg/L", 745.0),  # 1 kg/L = 1000 kg/m³ (exact)
        ("0.9 deg", "deg", math.radians(0.9)),  # 1° = π/180 rad (exact)
        ("2.75 mm", "mm", 2.75e-3),
    ],
    ids=lambda v: str(v),
)
def test_exact_factors(value, default_unit, expected):
    # inHg: pint defines it as inch × 13595.1 kg/m³ × g0 = 3386.38816 Pa, 2.5e-7 below the
    # printed NIST figure; every other factor here is exact.
    tolerance = 3e-7 if "inHg" in str(value) else 1e-12
    assert parse_quantity(value, default_unit) == pytest.approx(expected, rel=tolerance)


@pytest.mark.parametrize(
    "unit, si", [("ft", "m"), ("inHg", "Pa"), ("degF", "K"), ("mile", "m"), ("psi", "Pa"), ("mmHg", "Pa")]
)
def test_agrees_with_pint_definitions(unit, si):
    # pint's own definition file is the independent reference here
    expected = registry().Quantity(3.5, unit).to(si).magnitude
    assert parse_quantity(f"3.5 {unit}", {"m": "m", "Pa": "hPa", "K": "degC"}[si]) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "value, default_unit, message",
    [
        ("12 kg", "m", "is not a length (it is a mass)"),
        ("20 m", "degC", "is not a temperature"),
        ("12 furlongz", "m", "unknown unit 'furlongz'"),
        ("tall", "m", "expected a number and a unit"),
        (True, "m", "expected a number"),
        (None, "m", "expected a number"),
        (float("nan"), "m", "finite"),
        ([1, 2], "m", "expected a number"),
        # pint reads "%%" as percent squared (50 %% = 0.005) and delta_degC as a temperature
        # dimension (20 delta_degC = 20 K): both would be wrong values, not errors
        ("50 %%", "percent", "'50 %%' is not a plain number or percentage; write it as '50 %'"),
        ("20 delta_degC", "degC", "is a temperature difference, not a temperature"),
        ("68 delta_degF", "degC", "is a temperature difference, not a temperature"),
        ("3 %", "deg", "is not an angle"),
    ],
)
def test_problems(value, default_unit, message):
    with pytest.raises(UnitProblem, match=None) as info:
        parse_quantity(value, default_unit)
    assert message in str(info.value)
    assert "\n" not in str(info.value)


# Consistency checks (not validation): the JSON Schema's unit pattern lists only spellings the loader reads.
DIMENSIONS = {
    "[length]": "m",
    "[temperature]": "degC",
    "[mass] / [length] / [time] ** 2": "hPa",
    "[mass] / [length] ** 3": "kg/L",
    "[length] ** 3": "cc",
    "percent": "percent",
    "angle": "deg",
}


@pytest.mark.parametrize("dimension, default_unit", DIMENSIONS.items(), ids=list(DIMENSIONS.values()))
def test_every_unit_the_schema_names_is_read(dimension, default_unit):
    import re

    from tuning.config.units import UNIT_SPELLINGS, schema_pattern

    pattern = re.compile(schema_pattern(default_unit))
    for spelling in UNIT_SPELLINGS[dimension]:
        assert pattern.match(f"12.5 {spelling}"), spelling
        assert math.isfinite(parse_quantity(f"12.5 {spelling}", default_unit)), spelling


@pytest.mark.parametrize(
    "value, default_unit", [("150 degC", "m"), ("20 m", "degC"), ("1013 kg", "hPa"), ("50 m", "percent")]
)
def test_the_schema_pattern_refuses_another_kind_of_unit(value, default_unit):
    import re

    from tuning.config.units import schema_pattern

    with pytest.raises(UnitProblem):
        parse_quantity(value, default_unit)
    assert not re.match(schema_pattern(default_unit), value)


def test_percent_label_has_one_home():
    from tuning.config.units import pint_unit, unit_label

    assert unit_label("percent") == "%" and pint_unit("%") == "percent"
    assert unit_label("hPa") == "hPa" and pint_unit("hPa") == "hPa"
    assert parse_quantity("40 %", "percent") == parse_quantity("40 percent", "percent") == pytest.approx(0.40)
