"""METAR lists in the event file: values read, month/year rule, problems."""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
import pytest

from tuning.config import load_event
from tuning.config.spec import Context
from tuning.config.weather import read_metar
from tuning.errors import ConfigError

NEAR = datetime(2026, 6, 13, 9, 0, tzinfo=UTC)


def read(reports, near=NEAR):
    ctx = Context("event.yaml")
    weather = read_metar(reports, near, ctx, "weather.metar")
    return weather, ctx.problems


def test_values_from_the_report_groups():
    # WMO No. 306 FM 15: "07/05" = air temperature 7 °C, dew point 5 °C; "Q1021" = QNH 1021 hPa
    weather, found = read(
        ["XKSL 130650Z 27004KT 9999 FEW030 07/05 Q1021", "XKSL 130720Z 27005KT 9999 FEW030 M02/M05 Q0998"]
    )
    assert not found
    assert weather.air_temperature == pytest.approx([280.15, 271.15])
    assert weather.humidity == pytest.approx([278.15, 268.15]) and weather.humidity_kind == "dew_point"
    assert weather.pressure == pytest.approx([102100.0, 99800.0]) and weather.pressure_kind == "qnh"
    assert weather.time[0] == np.datetime64("2026-06-13T06:50:00")


def test_altimeter_in_inches():
    # "A3012" = 30.12 inHg; 1 inHg = 3386.389 Pa (NIST SP 811, B.8); the package's own
    # conversion factor may differ in the 7th digit
    weather, found = read(["XKSL 130650Z 27004KT 10SM FEW030 07/05 A3012"])
    assert not found
    assert weather.pressure[0] == pytest.approx(30.12 * 3386.389, rel=1e-5)


def test_reports_are_sorted_by_time():
    weather, _ = read(["XKSL 130720Z 27005KT 9999 08/05 Q1021", "XKSL 130650Z 27004KT 9999 07/05 Q1021"])
    assert weather.time[0] < weather.time[1] and weather.air_temperature[0] == pytest.approx(280.15)


def test_previous_month_when_day_is_far_ahead():
    # a report of the 31st before a session on 1 June is from 31 May, not from a 31 June
    near = datetime(2026, 6, 1, 8, 0, tzinfo=UTC)
    weather, found = read(["XKSL 312350Z 27004KT 9999 07/05 Q1021"], near)
    assert not found and weather.time[0] == np.datetime64("2026-05-31T23:50:00")


def test_year_turn():
    near = datetime(2027, 1, 1, 9, 0, tzinfo=UTC)
    weather, _ = read(["XKSL 312350Z 27004KT 9999 M07/M09 Q1021"], near)
    assert weather.time[0] == np.datetime64("2026-12-31T23:50:00")


def test_missing_groups():
    _, found = read(["XKSL 130650Z 27004KT 9999 FEW030 Q1021"])
    assert "no temperature/dew point group" in found[0].message and found[0].field == "weather.metar[0]"
    _, found = read(["XKSL 130650Z 27004KT 9999 FEW030 07/05"])
    assert "no altimeter setting" in found[0].message


def test_duplicate_time():
    _, found = read(["XKSL 130650Z 27004KT 9999 07/05 Q1021", "XKSL 130650Z 27004KT 9999 08/05 Q1021"])
    assert "two reports for the same time" in found[0].message


def test_session_outside_reports(tmp_path):
    text = """event: e
site: {name: s, elevation: 1650 m, time_zone: Europe/Vienna}
sessions:
  - {name: morning, start: 2026-06-13 09:00, end: 2026-06-13 12:00}
weather:
  metar:
    - XKSL 130650Z 27004KT 9999 07/05 Q1021
    - XKSL 130850Z 27004KT 9999 09/05 Q1021
"""
    (tmp_path / "e.yaml").write_text(text)
    with pytest.raises(ConfigError) as info:
        load_event(tmp_path / "e.yaml")
    (p,) = info.value.problems
    assert p.field == "sessions[0]" and p.line == 4 and "not covered" in p.message
