"""How a number or a word is shown to people: the units (metric or US) and the language.

The plan document and its JSON and CSV files stay SI with the unit in each field name; only what
people read (sheets, summary, index, terminal) goes through a :class:`Display`. This module is the
one home of the display units, their conversion factors and the message catalogue.

Languages: English (the source text) and German (``tuning/locale/de/LC_MESSAGES/carbfleet.po``,
a gettext catalogue read with Babel). Numbers follow the language: decimal comma in German.
Text marked with :func:`N_` (a no-op) is extracted into the catalogue and translated when shown.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from functools import cache
from importlib import resources

UNIT_SYSTEMS = ("metric", "us")
LANGUAGES = ("en", "de")
DEFAULT_UNITS = "metric"
DEFAULT_LANGUAGE = "en"
DOMAIN = "carbfleet"

#: International foot, exactly 0.3048 m (NIST SP 811, 2008, appendix B.8).
M_PER_FT = 0.3048
#: Inch of mercury, conventional: 3.386389e3 Pa (NIST SP 811, 2008, appendix B.8).
HPA_PER_INHG = 33.86389
#: Inch, exactly 25.4 mm (NIST SP 811, 2008, appendix B.8).
MM_PER_IN = 25.4


def N_(text: str) -> str:
    """Mark ``text`` for the message catalogue without translating it here (translated when shown)."""
    return text


@cache
def translations(language: str):
    """The Babel translations of ``language``, compiled in memory from the shipped ``.po`` file."""
    from babel.messages.mofile import write_mo
    from babel.messages.pofile import read_po
    from babel.support import NullTranslations, Translations

    if language == "en":
        return NullTranslations()
    source = resources.files("tuning") / "locale" / language / "LC_MESSAGES" / f"{DOMAIN}.po"
    with source.open("rb") as handle:
        catalog = read_po(handle, locale=language, domain=DOMAIN)
    buffer = io.BytesIO()
    write_mo(buffer, catalog)
    buffer.seek(0)
    return Translations(buffer, domain=DOMAIN)


def check_choice(what: str, value: str, choices: tuple[str, ...], hint: str) -> str:
    """``value`` when it is one of ``choices``; else a :class:`tuning.errors.UserError` in one line."""
    from tuning.errors import UserError

    if value not in choices:
        raise UserError(f"{what}: expected one of {', '.join(choices)}, got {value!r}; {hint}")
    return value


@dataclass(frozen=True)
class Display:
    """Units and language for what people read. ``Display()`` is metric and English."""

    units: str = DEFAULT_UNITS
    language: str = DEFAULT_LANGUAGE

    def __post_init__(self):
        check_choice("units", self.units, UNIT_SYSTEMS, "use --units metric or --units us")
        check_choice("language", self.language, LANGUAGES, "use --language en or --language de")

    # --- words -------------------------------------------------------------------------------
    def _(self, text: str) -> str:
        """``text`` in this display's language (English text is its own message id)."""
        return translations(self.language).ugettext(text) if text else text

    def n_(self, singular: str, plural: str, count: int) -> str:
        """The singular or plural form for ``count`` in this display's language."""
        return translations(self.language).ungettext(singular, plural, count)

    # --- numbers -----------------------------------------------------------------------------
    def number(self, value, digits: int = 0, unit: str = "", signed: bool = False) -> str:
        """``value`` with ``digits`` decimals in the language's way (decimal comma in German),
        a true minus sign, no thousands separator; ``None`` shows as an en dash."""
        if value is None:
            return "–"
        if round(value, digits) == 0:
            value = 0.0  # no "−0" for a small negative value
        text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
        text = text.replace("-", "−")
        if self.language == "de":
            text = text.replace(".", ",")
        return f"{text} {unit}".rstrip() if unit else text

    # --- quantities (SI in, display units out) -----------------------------------------------
    @property
    def temperature_unit(self) -> str:
        return "°F" if self.units == "us" else "°C"

    @property
    def elevation_unit(self) -> str:
        return "ft" if self.units == "us" else "m"

    @property
    def pressure_unit(self) -> str:
        return "inHg" if self.units == "us" else "hPa"

    def temperature_value(self, celsius):
        """A temperature [°C] in display units (a number, or ``None``)."""
        if celsius is None:
            return None
        return celsius * 9.0 / 5.0 + 32.0 if self.units == "us" else celsius

    def temperature_step(self, kelvin_or_celsius_difference):
        """A temperature difference [K] in display units (°F differences are 9/5 as large)."""
        if kelvin_or_celsius_difference is None:
            return None
        return kelvin_or_celsius_difference * 9.0 / 5.0 if self.units == "us" else kelvin_or_celsius_difference

    def elevation_value(self, metres):
        """A height [m] (elevation, density altitude) in display units."""
        if metres is None:
            return None
        return metres / M_PER_FT if self.units == "us" else metres

    def pressure_value(self, hpa):
        """A pressure [hPa] in display units."""
        if hpa is None:
            return None
        return hpa / HPA_PER_INHG if self.units == "us" else hpa

    def temperature(self, celsius, digits: int = 0, unit: bool = True) -> str:
        """``12 °C`` or ``54 °F``."""
        return self.number(self.temperature_value(celsius), digits, self.temperature_unit if unit else "")

    def temperature_span(self, low_c, high_c) -> str:
        """``8…14 °C`` (one unit for both ends); one value where both round the same."""
        low, high = self.temperature(low_c, unit=False), self.temperature(high_c, unit=False)
        return f"{low} {self.temperature_unit}" if low == high else f"{low}…{high} {self.temperature_unit}"

    def elevation(self, metres, unit: bool = True) -> str:
        """``1250 m`` or ``4101 ft`` (whole units)."""
        return self.number(self.elevation_value(metres), 0, self.elevation_unit if unit else "")

    def elevation_span(self, low_m, high_m) -> str:
        low, high = self.elevation(low_m, unit=False), self.elevation(high_m, unit=False)
        return f"{low} {self.elevation_unit}" if low == high else f"{low}…{high} {self.elevation_unit}"

    def pressure(self, hpa, unit: bool = True, digits: int | None = None) -> str:
        """``1013 hPa`` or ``29.92 inHg`` (inHg with two decimals, as altimeters show it)."""
        if digits is None:
            digits = 2 if self.units == "us" else 0
        return self.number(self.pressure_value(hpa), digits, self.pressure_unit if unit else "")

    @property
    def small_length_unit(self) -> str:
        return "in" if self.units == "us" else "mm"

    def small_length(self, mm, digits: int = 1) -> str:
        """A small length [mm] (float level): ``8.0 mm`` or ``0.315 in`` (inches with two more
        decimals than the millimetres, so that the step shown stays about as fine)."""
        if mm is None:
            return self.number(None)
        if self.units == "us":
            return self.number(mm / MM_PER_IN, digits + 2, "in")
        return self.number(mm, digits, "mm")

    def lapse_rate(self, k_per_km) -> str:
        """A decrease of temperature with height: ``6.5 K/km`` or ``3.6 °F/1000 ft``."""
        if self.units == "us":
            return self.number(self.temperature_step(k_per_km) * M_PER_FT, 1, "°F/1000 ft")
        return self.number(k_per_km, 1, "K/km")

    def percent(self, value, digits: int = 0, signed: bool = False) -> str:
        """``12 %`` from 12 (not from 0.12)."""
        return self.number(value, digits, "%", signed)


METRIC_EN = Display()
