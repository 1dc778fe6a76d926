"""Typed, frozen objects that the loaders return: every number in SI.

This module is the contract between reading files (:mod:`tuning.config`) and planning
(:mod:`tuning.plan`). Units inside: m, K, Pa, kg/m³, m³, radians; ratios as fractions
(relative humidity 0.40, not 40). Times are timezone-aware :class:`datetime.datetime`.

Conventions of the trade kept here (common practice):

* Needle clip grooves are counted from the top of the needle: groove 1 is the top groove,
  which puts the needle lowest (leanest). A higher groove number raises the needle: richer.
* A mixture screw's position is given in turns out from lightly seated.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Literal

import numpy as np

from tuning.constants import DEFAULT_REFERENCE_AFR, METERING_LAW_EXPONENT

PressureKind = Literal["station", "qnh", "sea_level"]
HumidityKind = Literal["relative", "dew_point"]


@dataclass(frozen=True)
class Conditions:
    """Air and fuel under which a set of settings was proven (a *reference*).

    Exactly one humidity value is set, the other is ``None``.
    """

    elevation: float  # [m] above mean sea level
    air_temperature: float  # [K]
    pressure: float  # [Pa], of kind ``pressure_kind``
    pressure_kind: PressureKind
    relative_humidity: float | None  # [1] 0..1, over water
    dew_point: float | None  # [K]
    fuel: str  # name of a fuel in ``Fleet.fuels``


@dataclass(frozen=True)
class Fuel:
    """A fuel as pumped (before any premix oil)."""

    name: str
    stoichiometric_afr: float  # [1] air mass per fuel mass at stoichiometry
    density: float  # [kg/m³] at about 15 °C
    ethanol_volume_fraction: float = 0.0  # [1], as declared (0 when given explicitly)
    methanol_volume_fraction: float = 0.0  # [1]


@dataclass(frozen=True)
class JetFamily:
    """A family of interchangeable jets and the sizes it comes in."""

    name: str
    coding: Literal["diameter", "flow"]  # number = diameter in 0.01 mm, or ∝ flow
    sizes: tuple[float, ...]  # ascending, no duplicates


@dataclass(frozen=True)
class Needle:
    """Jet needle geometry.

    ``taper_start`` is the slide lift at which the needle's taper reaches the top of the
    needle jet with the clip in groove 1 (the top groove). Moving the clip down one groove
    raises the needle by ``groove_pitch``, so the taper reaches the jet ``groove_pitch``
    earlier in the lift. ``taper_angle`` is the included angle of the taper (both sides).
    ``assumed`` is True where the fleet file gave no geometry and documented defaults
    were used; sheets then say so.
    """

    name: str
    straight_diameter: float  # [m]
    taper_start: float  # [m] of slide lift, clip in groove 1
    taper_angle: float  # [rad], included angle
    grooves: int  # number of clip grooves, groove 1 at the top
    groove_pitch: float  # [m]
    assumed: bool = False


@dataclass(frozen=True)
class Carburetor:
    """A model's carburetor."""

    slide: Literal["round", "flat"]
    bore: float  # [m] venturi/slide bore; full slide lift is taken as equal to it
    needle_jet: float | None  # [m] bore of the needle jet; None = unknown
    accelerator_pump: bool = False


@dataclass(frozen=True)
class MixtureScrew:
    """Idle mixture screw. ``kind`` air: out leans; fuel: out richens."""

    kind: Literal["air", "fuel"]
    turns: float  # [turns out]
    usable_range: tuple[float, float]  # [turns out], (min, max)
    range_assumed: bool = False  # True where the default range (1..3 turns) was used


@dataclass(frozen=True)
class Settings:
    """Carburetor settings of a bike (resolved: model settings with the bike's overrides)."""

    main_jet: float
    main_jet_family: str
    pilot_jet: float
    pilot_jet_family: str
    needle: str | None  # name in ``Fleet.needles``
    clip: int | None  # groove number, 1 = top
    mixture_screw: MixtureScrew
    float_level: float | None = None  # [m], as the service manual measures it


@dataclass(frozen=True)
class Model:
    """A bike model of the fleet."""

    name: str
    strokes: Literal[2, 4]
    displacement: float  # [m³]
    carburetor: Carburetor
    premix_ratio: float | None  # fuel:oil by volume, e.g. 32.0 for 32:1; None for no premix
    settings: Settings
    density_exponent: float | None = None  # overrides the fleet's


@dataclass(frozen=True)
class Bike:
    """One bike, fully resolved against its model and the fleet defaults."""

    id: str
    model: str
    settings: Settings  # model settings with this bike's overrides applied
    reference: Conditions  # the bike's own reference, or the fleet's
    premix_ratio: float | None  # the bike's, else the model's
    density_exponent: float  # bike's, else model's, else fleet's (default 0.5)
    notes: str = ""
    own_reference: bool = False  # True when the bike's reference is its own


#: How often settings change over an event: ``event`` keeps one setting per bike unless a change
#: pays for its work (the default); ``session`` gives the best setting per session (race teams).
CHANGE_POLICIES = ("event", "session")


@dataclass(frozen=True)
class Fleet:
    """A whole fleet file, resolved."""

    name: str
    reference: Conditions
    fuels: Mapping[str, Fuel]
    jet_families: Mapping[str, JetFamily]
    needles: Mapping[str, Needle]
    models: Mapping[str, Model]
    bikes: tuple[Bike, ...]
    stock: Mapping[tuple[str, float], int]  # (family, size) -> count on the shelf
    density_exponent: float = METERING_LAW_EXPONENT
    source: Path | None = None
    reference_afr: float = DEFAULT_REFERENCE_AFR  # [1] air-fuel mass ratio the proven settings are assumed to give
    change_policy: str | None = None  # one of CHANGE_POLICIES; None: the default (event)
    change_threshold: float | None = None  # [1] mixture gain a main-jet change must bring; None: default


@dataclass(frozen=True)
class Site:
    name: str
    elevation: float  # [m]
    time_zone: str  # IANA name, e.g. "Europe/Vienna"


@dataclass(frozen=True)
class HeightProfile:
    """Where a session is ridden: the heights it reaches and the share of the time at each.

    ``elevations`` [m] ascending, from the lowest point reached to the highest; ``shares`` [1]
    sum to 1 (a share may be 0: a route's top is kept so that the thinnest air is seen).
    ``source`` is ``range`` (an ``elevation: {min, max}``) or ``route`` (a GPX file, named in
    ``route``); ``profile`` holds a route's (distance [m], elevation [m]) points for its chart.
    """

    elevations: tuple[float, ...]
    shares: tuple[float, ...]
    source: Literal["range", "route"]
    route: str | None = None
    profile: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class Session:
    name: str
    start: datetime  # timezone-aware
    end: datetime  # timezone-aware, after start
    heights: HeightProfile | None = None  # None: ridden at the site's elevation


@dataclass(frozen=True, eq=False)
class Weather:
    """Hourly (or any spacing) weather samples, sorted by time, no duplicates.

    Pressure and humidity are kept in the kind they were given; the plan converts them
    with the site elevation (:mod:`tuning.air`).
    """

    time: np.ndarray  # datetime64[s], UTC
    air_temperature: np.ndarray  # [K]
    pressure: np.ndarray  # [Pa], of kind ``pressure_kind``
    pressure_kind: PressureKind
    humidity: np.ndarray  # relative [1] or dew point [K], by ``humidity_kind``
    humidity_kind: HumidityKind
    source: str = ""  # file name or "METAR"


@dataclass(frozen=True)
class Event:
    name: str
    site: Site
    sessions: tuple[Session, ...]
    weather: Weather
    fuel: str | None = None  # overrides the reference fuel for every bike
    source: Path | None = None
    change_policy: str | None = None  # overrides the fleet's
    change_threshold: float | None = None  # overrides the fleet's
    units: str | None = None  # display units of the reports: "metric" or "us"; None: metric (the command line wins)
    language: str | None = None  # language of the reports: "en" or "de"; None: en (the command line wins)
    weather_elevation: float | None = None  # [m] where the forecast holds; None: the site's elevation
    lapse_rate: float | None = None  # [K/m] decrease of temperature with height; None: the standard 0.0065

    @property
    def forecast_elevation(self) -> float:
        """Where the forecast holds [m]: ``weather_elevation``, else the site's elevation."""
        return self.site.elevation if self.weather_elevation is None else self.weather_elevation
