"""Where sessions are ridden (issue 13): an elevation range or a GPX route, and the forecast's height.

The event file may give, for the whole event or per session (a session's own wins):

* ``elevation: {min: 1200 m, max: 2100 m}`` — ridden anywhere between, evenly (the time shares
  of :data:`RANGE_LEVELS` heights by the trapezoid rule);
* ``route: trail.gpx`` — a GPX 1.1 file relative to the event file (:mod:`tuning.config.route`).

and, for the event, ``weather_elevation`` (where the forecast holds; the site's elevation when left
out) and ``lapse_rate`` (the decrease of temperature with height; the standard atmosphere's 6.5 K/km
when left out). :func:`profile_of` turns the checked raw values into a
:class:`~tuning.config.model.HeightProfile`; the loader (:mod:`tuning.config.event`) calls it.
"""

from __future__ import annotations

from pathlib import Path

from tuning.config import model
from tuning.config.quantities import FILE_RANGES, Range
from tuning.config.route import RouteProblem, read_route
from tuning.config.spec import FileModel, Quantity, Text

__all__ = [
    "RANGE_LEVELS",
    "LAPSE_RATE_RANGE",
    "ElevationSpan",
    "ROUTE",
    "WEATHER_ELEVATION",
    "LAPSE_RATE",
    "profile_of",
    "levels_of_range",
]

RANGE_LEVELS = 5  #: heights a range is sampled at, ends included (our choice)
#: Accepted lapse rates: from a strong inversion to beyond the dry adiabat (9.8 K/km).
LAPSE_RATE_RANGE = Range("delta_degC/km", -10.0, 12.0)


class ElevationSpan(FileModel):
    """The heights the riding spans, ridden evenly between; settings are made for the lowest (densest) point."""

    min: Quantity(FILE_RANGES["elevation"], "Lowest point ridden.")
    max: Quantity(FILE_RANGES["elevation"], "Highest point ridden (at least min).")


ROUTE = Text(
    "A GPX 1.1 file of the route or track ridden (path relative to this file); every point needs an "
    "elevation. Time at each height from the points' times, else from distance."
)
WEATHER_ELEVATION = Quantity(
    FILE_RANGES["elevation"], "Elevation where the forecast holds (e.g. a valley station); the site's when left out."
)
LAPSE_RATE = Quantity(
    LAPSE_RATE_RANGE,
    "Decrease of air temperature with height, used to carry the forecast to the "
    "heights ridden; 6.5 K/km (the 1976 standard atmosphere) when left out; negative for an inversion.",
)


def levels_of_range(low: float, high: float) -> model.HeightProfile:
    """A range ridden evenly: :data:`RANGE_LEVELS` heights, ends included, trapezoid shares."""
    if high <= low:
        return model.HeightProfile(elevations=(float(low),), shares=(1.0,), source="range")
    n = RANGE_LEVELS
    step = (high - low) / (n - 1)
    levels = tuple(low + k * step for k in range(n - 1)) + (float(high),)
    weights = [0.5] + [1.0] * (n - 2) + [0.5]
    return model.HeightProfile(elevations=levels, shares=tuple(w / sum(weights) for w in weights), source="range")


def profile_of(raw: dict, path: str, event_file, ctx) -> model.HeightProfile | None:
    """The height profile of checked raw values ``raw`` (a session's, or the event's) at ``path``.

    None when neither ``elevation`` nor ``route`` is given; problems go to ``ctx`` (None is returned).
    """
    prefix = f"{path}." if path else ""
    if "elevation" in raw and "route" in raw:
        ctx.at_path(f"{prefix}route", "give either an elevation range or a route, not both")
        return None
    if "elevation" in raw:
        span = raw["elevation"]
        if not {"min", "max"} <= span.keys():
            return None
        if span["max"] < span["min"]:
            ctx.at_path(f"{prefix}elevation.max", f"max ({span['max']:g} m) is below min ({span['min']:g} m)")
            return None
        return levels_of_range(span["min"], span["max"])
    if "route" in raw:
        try:
            return read_route(Path(event_file).parent / raw["route"])
        except RouteProblem as exc:
            ctx.at_path(f"{prefix}route", str(exc))
    return None
