"""The one home of the input vocabulary: accepted ranges, pressure and humidity kinds.

The fleet and event files, the weather table, METAR reports and ``carbfleet air`` all import
their ranges and key names from here.

Two sets of ranges, on purpose:

* :data:`FILE_RANGES` — what a fleet or event file, a weather table or a METAR report may hold.
  Planning is checked up to these corners (tests/test_config_inputs.py plans every one), so a
  file outside them is refused before anything is planned.
* :data:`AIR_COMMAND_RANGES` — what ``carbfleet air`` accepts (unchanged from before this
  module): it only computes the state of the air, chooses no jets, and prints the formulas'
  own range notes (:class:`tuning.air.OutOfRangeWarning`) beside its figures, so it may reach
  further (to 9,000 m, above the highest summit at 8,849 m; -60..60 degC; dew points to
  -90 degC). A file is held to the corners the plan was tested at.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "Range",
    "FILE_RANGES",
    "AIR_COMMAND_RANGES",
    "PRESSURE_KEYS",
    "PRESSURE_NAMES",
    "HUMIDITY_KEYS",
    "STATION_PRESSURE_MIN",
]


@dataclass(frozen=True)
class Range:
    """Accepted values of one quantity: ``low``..``high`` in ``unit`` (as pint spells it)."""

    unit: str
    low: float
    high: float

    def text(self) -> str:
        """``-500..5000 m`` (the unit as people write it: ``%`` for percent)."""
        from tuning.config.units import unit_label

        return f"{self.low:g}..{self.high:g} {unit_label(self.unit)}"


#: Accepted in the files (fleet, event, weather table, METAR), by quantity.
FILE_RANGES = {
    "elevation": Range("m", -500.0, 5000.0),
    "air_temperature": Range("degC", -40.0, 55.0),
    "dew_point": Range("degC", -60.0, 55.0),
    "pressure": Range("hPa", 300.0, 1100.0),  # every pressure kind
    "relative_humidity": Range("percent", 0.0, 100.0),
}

#: Accepted by ``carbfleet air`` (wider on purpose: see the module's docstring).
AIR_COMMAND_RANGES = {
    "elevation": Range("m", -500.0, 9000.0),
    "air_temperature": Range("degC", -60.0, 60.0),
    "dew_point": Range("degC", -90.0, 60.0),
    "pressure": Range("hPa", 300.0, 1100.0),
    "relative_humidity": Range("percent", 0.0, 100.0),
}

#: Pressure keys of the files and columns of the weather table -> pressure kind of tuning.air.
PRESSURE_KEYS = {"station_pressure": "station", "qnh": "qnh", "sea_level_pressure": "sea_level"}
#: Pressure kind -> how messages name it.
PRESSURE_NAMES = {"station": "station pressure", "qnh": "QNH", "sea_level": "sea-level pressure"}
#: Humidity keys and columns -> humidity kind of the weather (tuning.config.model.Weather).
HUMIDITY_KEYS = {"relative_humidity": "relative", "dew_point": "dew_point"}

#: Lowest station pressure accepted once a QNH or sea-level pressure is converted with the
#: elevation [hPa]: about that on the highest summits (8,849 m: about 330 hPa in the standard
#: atmosphere). Below it the air of a hot day would be mostly water vapour (saturation at
#: 55 degC is about 158 hPa) and the moist-air formulas no longer apply.
STATION_PRESSURE_MIN = 300.0
