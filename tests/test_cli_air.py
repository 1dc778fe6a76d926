"""The ``carbfleet air`` command: JSON contents checked against CoolProp and MetPy, units at
the edge, and one stderr line with exit code 2 for every bad value."""

from __future__ import annotations

import json

import numpy as np
import pytest

from tuning.cli import main

CoolProp = pytest.importorskip("CoolProp.HumidAirProp")
metpy_calc = pytest.importorskip("metpy.calc")
metpy_units = pytest.importorskip("metpy.units").units

# Conversion factors typed from NIST SP 811 (2008), appendix B, not from pint:
INCH_OF_MERCURY = 3386.389  # Pa, conventional inch of mercury (0 °C)
FOOT = 0.3048  # m, exact


def fahrenheit_to_kelvin(value):
    return (value - 32.0) * 5.0 / 9.0 + 273.15


def run_json(capsys, *options):
    code = main(["air", *options, "--json"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out)


REQUIRED_KEYS = {
    "station_pressure_hPa",
    "vapour_pressure_hPa",
    "dew_point_C",
    "relative_humidity_pct",
    "moist_air_density_kg_m3",
    "dry_air_density_kg_m3",
    "density_ratio_isa",
    "pressure_altitude_m",
    "density_altitude_m",
    "sae_j1349_cf",
    "icing_risk",
    "pressure_kind",
}


def test_json_keys_present(capsys):
    result = run_json(
        capsys, "--elevation", "1340 m", "--temperature", "24 degC", "--qnh", "1016 hPa", "--relative-humidity", "40 %"
    )
    assert REQUIRED_KEYS <= set(result)
    assert result["pressure_kind"] == "qnh"
    assert result["density_ratio_isa"] == pytest.approx(result["moist_air_density_kg_m3"] / 1.225, abs=1e-5)
    assert result["relative_humidity_pct"] == pytest.approx(40.0)


def test_table_output(capsys):
    code = main(["air", "--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--relative-humidity", "40"])
    out = capsys.readouterr().out
    assert code == 0
    for label in ("station pressure", "moist-air density", "density altitude", "SAE J1349", "icing risk"):
        assert label in out


def test_bare_numbers_are_m_degc_hpa_percent(capsys):
    bare = run_json(capsys, "--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--relative-humidity", "40")
    units = run_json(
        capsys, "--elevation", "1340 m", "--temperature", "24 degC", "--qnh", "1016 hPa", "--relative-humidity", "40 %"
    )
    assert bare == units


# Random conditions from a fixed random state (reproducible): 0..40 °C, where CoolProp's
# relative humidity is over water like ours, so CoolProp gets the relative humidity directly
# and computes its own saturation pressure and enhancement factor (fully independent).
RANDOM = np.random.default_rng(20261202)
CONDITIONS = [
    (
        float(RANDOM.uniform(32.0, 104.0)),
        float(RANDOM.uniform(18.0, 31.0)),
        float(RANDOM.uniform(0.0, 100.0)),
        float(RANDOM.uniform(0.0, 14_000.0)),
    )
    for _ in range(6)
]


@pytest.mark.parametrize("fahrenheit, inches, percent, feet", CONDITIONS)
def test_moist_density_against_coolprop_in_us_units(capsys, fahrenheit, inches, percent, feet):
    result = run_json(
        capsys,
        "--elevation",
        f"{feet:.1f} ft",
        "--temperature",
        f"{fahrenheit:.3f} degF",
        "--station-pressure",
        f"{inches:.4f} inHg",
        "--relative-humidity",
        f"{percent:.3f} %",
    )
    temperature = fahrenheit_to_kelvin(float(f"{fahrenheit:.3f}"))
    pressure = float(f"{inches:.4f}") * INCH_OF_MERCURY
    expected = 1.0 / CoolProp.HAPropsSI("Vha", "T", temperature, "P", pressure, "R", float(f"{percent:.3f}") / 100.0)
    assert result["station_pressure_hPa"] == pytest.approx(pressure / 100.0, abs=0.006)
    assert result["moist_air_density_kg_m3"] == pytest.approx(expected, rel=3e-4)


def test_qnh_in_inches_against_metpy(capsys):
    # MetPy altimeter_to_station_pressure; 0.05 hPa for the exponent MetPy computes itself.
    result = run_json(
        capsys, "--elevation", "4400 ft", "--temperature", "75 degF", "--qnh", "29.92 inHg", "--dew-point", "50 degF"
    )
    expected = (
        metpy_calc.altimeter_to_station_pressure(
            metpy_units.Quantity(29.92, "inHg"), metpy_units.Quantity(4400 * FOOT, "m")
        )
        .to("hPa")
        .magnitude
    )
    assert result["station_pressure_hPa"] == pytest.approx(expected, abs=0.05)
    assert result["dew_point_C"] == pytest.approx(10.0, abs=0.01)


def test_sea_level_pressure_is_reduced_with_elevation(capsys):
    # Forgetting the elevation would erase the altitude effect: at 1340 m the station
    # pressure must be far below the sea-level value.
    result = run_json(
        capsys,
        "--elevation",
        "1340 m",
        "--temperature",
        "15",
        "--sea-level-pressure",
        "1013.25",
        "--relative-humidity",
        "50",
    )
    assert result["pressure_kind"] == "sea_level"
    assert 860.0 < result["station_pressure_hPa"] < 880.0


def test_help_states_units(capsys):
    with pytest.raises(SystemExit) as exit_info:
        main(["air", "--help"])
    out = capsys.readouterr().out
    assert exit_info.value.code == 0
    for unit in ("m", "degC", "hPa", "%", "inHg"):
        assert unit in out


BAD = {
    "unknown unit": [
        "--elevation",
        "1340 m",
        "--temperature",
        "24 degK2",
        "--qnh",
        "1016",
        "--relative-humidity",
        "40",
    ],
    "wrong dimension": ["--elevation", "1340 m", "--temperature", "24 m", "--qnh", "1016", "--relative-humidity", "40"],
    "not a number": ["--elevation", "high", "--temperature", "24", "--qnh", "1016", "--relative-humidity", "40"],
    "humidity over 100 %": [
        "--elevation",
        "1340",
        "--temperature",
        "24",
        "--qnh",
        "1016",
        "--relative-humidity",
        "140 %",
    ],
    "pressure below 300 hPa": [
        "--elevation",
        "1340",
        "--temperature",
        "24",
        "--qnh",
        "25 kPa",
        "--relative-humidity",
        "40",
    ],
    "pressure above 1100 hPa": [
        "--elevation",
        "1340",
        "--temperature",
        "24",
        "--station-pressure",
        "35 inHg",
        "--relative-humidity",
        "40",
    ],
    "two pressure kinds": [
        "--elevation",
        "1340",
        "--temperature",
        "24",
        "--qnh",
        "1016",
        "--station-pressure",
        "870",
        "--relative-humidity",
        "40",
    ],
    "no pressure": ["--elevation", "1340", "--temperature", "24", "--relative-humidity", "40"],
    "two humidity kinds": [
        "--elevation",
        "1340",
        "--temperature",
        "24",
        "--qnh",
        "1016",
        "--relative-humidity",
        "40",
        "--dew-point",
        "10",
    ],
    "no humidity": ["--elevation", "1340", "--temperature", "24", "--qnh", "1016"],
    "no temperature": ["--elevation", "1340", "--qnh", "1016", "--relative-humidity", "40"],
    "no elevation with qnh": ["--temperature", "24", "--qnh", "1016", "--relative-humidity", "40"],
    "dew point above temperature": ["--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--dew-point", "27"],
    "temperature far out": [
        "--elevation",
        "1340",
        "--temperature",
        "400 K",
        "--qnh",
        "1016",
        "--relative-humidity",
        "40",
    ],
}


@pytest.mark.parametrize("options", BAD.values(), ids=BAD.keys())
def test_bad_value_is_one_line_and_exit_2(capsys, options):
    code = main(["air", *options])
    captured = capsys.readouterr()
    assert code == 2
    assert captured.out == ""
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1, captured.err
    assert lines[0].startswith("carbfleet air: ")


@pytest.mark.parametrize(
    "option, value, expected",
    [
        (
            "--relative-humidity",
            "50 %%",
            "carbfleet air: --relative-humidity: '50 %%' is not a plain number or percentage; write it as '50 %'",
        ),
        (
            "--temperature",
            "20 delta_degC",
            "carbfleet air: --temperature: '20 delta_degC' is a temperature "
            "difference, not a temperature; give a temperature such as '20 degC'",
        ),
        (
            "--dew-point",
            "5 delta_degF",
            "carbfleet air: --dew-point: '5 delta_degF' is a temperature difference, "
            "not a temperature; give a temperature such as '5 degC'",
        ),
    ],
)
def test_unit_of_the_wrong_kind_is_one_line(capsys, option, value, expected):
    options = {"--elevation": "1340", "--temperature": "24", "--qnh": "1016", "--relative-humidity": "40"}
    if option == "--dew-point":
        del options["--relative-humidity"]
    options[option] = value
    code = main(["air", *[x for pair in options.items() for x in pair]])
    captured = capsys.readouterr()
    assert code == 2 and captured.out == ""
    assert captured.err.splitlines() == [expected]


def test_bare_relative_humidity_below_one_is_read_as_percent_with_a_note(capsys):
    result = run_json(
        capsys, "--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--relative-humidity", "0.4"
    )
    assert result["relative_humidity_pct"] == pytest.approx(0.4)  # read as 0.4 %, as documented
    main(["air", "--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--relative-humidity", "0.4"])
    assert capsys.readouterr().err.splitlines() == [
        "carbfleet air: note: --relative-humidity 0.4 was read as 0.4 %; for a fraction of 0.4 write 40"
    ]


@pytest.mark.parametrize("value", ["40", "0.4 %", "0", "1"])
def test_no_note_for_a_percentage_given_as_such(capsys, value):
    main(["air", "--elevation", "1340", "--temperature", "24", "--qnh", "1016", "--relative-humidity", value])
    assert capsys.readouterr().err == ""
