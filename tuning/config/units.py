"""Values with units at the edge: "1340 m", "4400 ft", "62 degF", "29.92 inHg", "40 %".

pint is used here and nowhere else. Everything returned is a float in SI (m, K, Pa, kg/m³,
m³, rad) or a plain fraction (40 % -> 0.40).
"""

from __future__ import annotations

import functools
import math
import re

import numpy as np
import pint

__all__ = [
    "UnitProblem",
    "parse_quantity",
    "convert_numbers",
    "registry",
    "SI_UNITS",
    "UNIT_LABELS",
    "unit_label",
    "pint_unit",
    "schema_pattern",
]

#: The SI unit each dimension is converted to, by the default-unit's dimensionality.
SI_UNITS = {
    "[length]": "m",
    "[temperature]": "K",
    "[mass] / [length] / [time] ** 2": "Pa",
    "[mass] / [length] ** 3": "kg/m**3",
    "[length] ** 3": "m**3",
    "": "dimensionless",
}

#: How a unit is written for people where pint spells it otherwise (the one home of ``%``).
UNIT_LABELS = {"percent": "%", "delta_degC/km": "K/km"}
_PINT_UNITS = {label: unit for unit, label in UNIT_LABELS.items()}

#: Common spellings of the units of each default unit's dimension, for the JSON Schema's pattern
#: (an editor then flags ``elevation: 150 degC``). The loader accepts any unit pint knows of the
#: right dimension; tests/test_units.py checks that each spelling here is accepted.
UNIT_SPELLINGS = {
    "[length]": ("m", "km", "cm", "mm", "ft", "feet", "foot", "in", "inch", "meter", "metre", "meters", "metres"),
    "[temperature]": ("degC", "degF", "K", "kelvin", "celsius", "fahrenheit", "degree_Celsius", "degree_Fahrenheit"),
    "[mass] / [length] / [time] ** 2": ("hPa", "Pa", "kPa", "mbar", "millibar", "bar", "inHg", "mmHg", "psi", "atm"),
    "[mass] / [length] ** 3": ("kg/L", "kg/l", "g/mL", "g/ml", "g/cm**3", "g/cc", "kg/m**3"),
    "[length] ** 3": ("cc", "cm**3", "mL", "ml", "L", "l", "in**3"),
    "[temperature] / [length]": ("K/km", "K/m", "delta_degC/km"),
    "percent": ("%", "percent"),
    "angle": ("deg", "degree", "degrees", "rad", "radian", "radians"),
}

_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


class UnitProblem(ValueError):
    """A value that cannot be read as a quantity of the expected kind (message: one line)."""


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The one unit registry of the project (built once; about 0.2 s)."""
    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=None)
    return ureg


def unit_label(unit: str) -> str:
    """``unit`` as people write it (``percent`` -> ``%``)."""
    return UNIT_LABELS.get(unit, unit)


def pint_unit(label: str) -> str:
    """A unit as written by people, as pint spells it (``%`` -> ``percent``)."""
    return _PINT_UNITS.get(label, label)


def schema_pattern(default_unit: str) -> str:
    """Regular expression of "number, optional unit" for a field whose bare numbers are in ``default_unit``."""
    default = registry().Quantity(1.0, default_unit)
    names = set(dict(default.unit_items()))
    key = "angle" if names & _ANGLE_UNITS else "percent" if default.dimensionless else str(default.dimensionality)
    units = "|".join(re.escape(u) for u in UNIT_SPELLINGS[key])
    return rf"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*({units})?\s*$"


def _dimension_name(dim) -> str:
    names = {
        "[length]": "a length",
        "[temperature]": "a temperature",
        "[mass] / [length] / [time] ** 2": "a pressure",
        "[mass] / [length] ** 3": "a density",
        "[length] ** 3": "a volume",
        "dimensionless": "a plain number or percentage",
        "[mass]": "a mass",
        "[time]": "a time",
        "[length] ** 2": "an area",
    }
    return names.get(str(dim), f"a quantity of dimension {dim}")


def parse_quantity(value, default_unit: str, to_unit: str | None = None) -> float:
    """Read ``value`` (a number, or a string of number and unit) and return it in SI.

    The same text read again is answered from a cache (a fleet repeats its values: reading
    8,000 of them through pint took about 4 s, see DEVELOPERS.md).

    Parameters
    ----------
    value : float or int or str
        ``17.5`` (taken in ``default_unit``), or ``"62 degF"``, ``"1018 hPa"``, ``"40 %"``.
    default_unit : str
        The unit of a bare number, as pint spells it (``"m"``, ``"degC"``, ``"hPa"``,
        ``"percent"``). It also fixes the expected dimension.
    to_unit : str, optional
        The unit to return in; the SI unit of the dimension by default. Ratios (percent)
        come back as fractions.

    Raises
    ------
    UnitProblem
        Unknown unit, wrong dimension, not a number, or not finite.
    """
    if isinstance(value, str | int | float) and not isinstance(value, bool):
        return _parse_cached(type(value), value, default_unit, to_unit)
    return _parse(value, default_unit, to_unit)


@functools.lru_cache(maxsize=4096)
def _parse_cached(kind: type, value, default_unit: str, to_unit: str | None) -> float:
    # ``kind`` keeps 1 and 1.0 and True apart in the cache (they hash alike)
    return _parse(value, default_unit, to_unit)


def _parse(value, default_unit: str, to_unit: str | None) -> float:
    ureg = registry()
    default = ureg.Quantity(1.0, default_unit)
    if to_unit is None:
        to_unit = _si_unit(default)
    if isinstance(value, bool) or value is None:
        raise UnitProblem(f"expected a number with an optional unit (default {default_unit}), got {value!r}")
    if isinstance(value, (int, float)):
        magnitude, unit = float(value), default_unit
    elif isinstance(value, str):
        match = _NUMBER_UNIT.match(value)
        if not match:
            raise UnitProblem(f"expected a number and a unit such as '12 {default_unit}', got {value!r}")
        magnitude, unit = float(match.group(1)), match.group(2) or default_unit
        unit = pint_unit(unit)
    else:
        raise UnitProblem(f"expected a number with an optional unit (default {default_unit}), got {value!r}")
    if not math.isfinite(magnitude):
        raise UnitProblem(f"expected a finite number, got {value!r}")
    try:
        quantity = ureg.Quantity(magnitude, unit)
    except Exception:  # pint's parser raises many kinds (tokenize errors, syntax, undefined unit)
        raise UnitProblem(f"unknown unit {unit!r} in {value!r}") from None
    if quantity.dimensionality != default.dimensionality:
        raise UnitProblem(
            f"{value!r} is not {_dimension_name(default.dimensionality)} "
            f"(it is {_dimension_name(quantity.dimensionality)}); give it in {default_unit} or a unit of the same kind"
        )
    _check_kind(quantity, default, value, default_unit, magnitude)
    result = float(quantity.to(to_unit).magnitude)
    if not math.isfinite(result):
        raise UnitProblem(f"{value!r} is too large")
    return result


#: Units accepted for a plain number or percentage (pint would also read "%%" as percent²).
_RATIO_UNITS = {"percent", "dimensionless"}
#: Units accepted for an angle (angles are dimensionless to pint, like percentages).
_ANGLE_UNITS = {"degree", "radian", "arcminute", "arcsecond"}


def _si_unit(default) -> str:
    to_unit = "dimensionless" if default.dimensionless else str(default.to_base_units().units)
    return SI_UNITS.get(str(default.dimensionality), to_unit)


def _check_kind(quantity, default, value, default_unit: str, magnitude: float) -> None:
    """Refuse units of the right dimension but the wrong kind (a temperature difference, percent²)."""
    given = dict(quantity.unit_items())
    if any(name.startswith("delta_") for name in given) and not any(
        name.startswith("delta_") for name, _ in default.unit_items()
    ):
        raise UnitProblem(
            f"{value!r} is a temperature difference, not a temperature; give a temperature such as '{magnitude:g} {default_unit}'"
        )
    if default.dimensionless:
        angle = bool(set(dict(default.unit_items())) & _ANGLE_UNITS)
        allowed = _ANGLE_UNITS if angle else _RATIO_UNITS
        if not (set(given) <= allowed and all(power == 1 for power in given.values()) and len(given) <= 1):
            if angle:
                raise UnitProblem(f"{value!r} is not an angle; write it as '{magnitude:g} {default_unit}'")
            raise UnitProblem(f"{value!r} is not a plain number or percentage; write it as '{magnitude:g} %'")


def convert_numbers(values, unit: str, default_unit: str) -> np.ndarray:
    """Convert many numbers given in ``unit`` to SI at once (a table column).

    ``unit`` must already have been accepted by :func:`parse_quantity` for ``default_unit``
    (e.g. ``parse_quantity(f"1 {unit}", default_unit)``). Element by element the result is
    identical to :func:`parse_quantity` of each number; it is only faster.

    Returns
    -------
    numpy.ndarray
        Float values in the SI unit of ``default_unit``'s dimension (percent as a fraction).
    """
    ureg = registry()
    to_unit = _si_unit(ureg.Quantity(1.0, default_unit))
    return np.asarray(ureg.Quantity(np.asarray(values, float), unit).to(to_unit).magnitude, float)
