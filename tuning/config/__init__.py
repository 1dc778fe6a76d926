"""Reading fleet, event and weather files: pint at this edge only, SI floats out.

Public API
----------
load_fleet(path) -> model.Fleet
load_event(path, fleet=None) -> model.Event
fleet_schema() -> dict, event_schema() -> dict   (JSON Schema, draft 2020-12)
summarize(fleet, event=None) -> str              (what ``carbfleet check`` prints)
display_for(event=None, units=None, language=None) -> tuning.display.Display

Every problem of a file is raised at once as :class:`tuning.errors.ConfigError`, one line
each: ``file:line: path.to.field: problem``.
"""

from __future__ import annotations

from collections import Counter
from datetime import UTC
from zoneinfo import ZoneInfo

import numpy as np

from tuning.config import model
from tuning.config.event import EventFile, load_event
from tuning.config.fleet import FleetFile, load_fleet
from tuning.config.spec import json_schema, one_line
from tuning.constants import ZERO_CELSIUS
from tuning.display import DEFAULT_LANGUAGE, DEFAULT_UNITS, Display

__all__ = ["load_fleet", "load_event", "fleet_schema", "event_schema", "summarize", "display_for", "model"]

_DIALECT = "https://json-schema.org/draft/2020-12/schema"


def fleet_schema() -> dict:
    """JSON Schema (draft 2020-12) of the fleet file."""
    return {"$schema": _DIALECT, "title": "carbfleet fleet file", **json_schema(FleetFile)}


def event_schema() -> dict:
    """JSON Schema (draft 2020-12) of the event file (the weather CSV is described in its docs)."""
    return {"$schema": _DIALECT, "title": "carbfleet event file", **json_schema(EventFile)}


def display_for(event: model.Event | None = None, units: str | None = None, language: str | None = None) -> Display:
    """The display units and language of a command: the command line's, else the event file's,
    else metric and English. The one home of that rule.

    Parameters
    ----------
    event : tuning.config.model.Event, optional
        The loaded event; its ``units`` and ``language`` (``None`` when the file leaves them out)
        are used where the command line gives none.
    units : {"metric", "us"}, optional
        ``--units`` from the command line; ``None`` when not given.
    language : {"en", "de"}, optional
        ``--language`` from the command line; ``None`` when not given.

    Returns
    -------
    tuning.display.Display
    """
    return Display(
        units=units or (event.units if event is not None else None) or DEFAULT_UNITS,
        language=language or (event.language if event is not None else None) or DEFAULT_LANGUAGE,
    )


def _celsius(kelvin: float) -> float:
    return kelvin - ZERO_CELSIUS


def summarize(fleet: model.Fleet, event: model.Event | None = None) -> str:
    """A short plain-text summary of a checked fleet (and event), as ``carbfleet check`` prints it.

    Names come from the user's files: control characters in them (an escape sequence, a carriage
    return, a bell) are shown escaped, as in problem lines, so they cannot act on the terminal.
    """
    lines = [f"fleet: {fleet.name} — {len(fleet.bikes)} bikes, {len(fleet.models)} models"]
    ref = fleet.reference
    lines.append(
        f"  reference: {ref.elevation:.0f} m, {_celsius(ref.air_temperature):.1f} degC, "
        f"{ref.pressure / 100:.1f} hPa ({ref.pressure_kind}), fuel {ref.fuel}, reference AFR {fleet.reference_afr:g}"
    )
    per_model = Counter(b.model for b in fleet.bikes)
    for name, m in fleet.models.items():
        carb = m.carburetor
        extras = [f"{carb.slide} slide {carb.bore * 1000:.0f} mm"]
        if carb.accelerator_pump:
            extras.append("accelerator pump")
        extras.append(f"{m.settings.mixture_screw.kind} screw")
        if m.premix_ratio:
            extras.append(f"premix {m.premix_ratio:g}:1")
        lines.append(
            f"  {name}: {per_model.get(name, 0)} bikes, {m.strokes}-stroke {m.displacement * 1e6:.0f} cc, {', '.join(extras)}"
        )
    own = [b.id for b in fleet.bikes if b.own_reference]
    deviating = [b.id for b in fleet.bikes if b.settings != fleet.models[b.model].settings]
    if deviating:
        lines.append(f"  bikes with their own settings: {', '.join(deviating)}")
    if own:
        lines.append(f"  bikes with their own reference: {', '.join(own)}")
    assumed = [n.name for n in fleet.needles.values() if n.assumed]
    if assumed:
        lines.append(f"  needles with assumed geometry: {', '.join(assumed)}")
    ranged = sorted({b.model for b in fleet.bikes if b.settings.mixture_screw.range_assumed})
    if ranged:
        lines.append(f"  mixture-screw range assumed 1..3 turns for: {', '.join(ranged)}")
    for name, family in fleet.jet_families.items():
        on_shelf = {size: count for (f, size), count in fleet.stock.items() if f == name}
        sizes = f"{len(family.sizes)} sizes {family.sizes[0]:g}..{family.sizes[-1]:g}"
        stock = ", ".join(f"{s:g}×{c}" for s, c in sorted(on_shelf.items())) or "none listed"
        lines.append(
            f"  jets {name} ({family.coding}-coded, {sizes}): "
            + (f"in stock {stock}" if fleet.stock else "no stock list kept")
        )
    if event is None:
        return "\n".join(one_line(line) for line in lines)

    site = event.site
    zone = ZoneInfo(site.time_zone)
    lines.append(f"event: {event.name} at {site.name}, {site.elevation:.0f} m ({site.time_zone})")
    if event.fuel:
        lines.append(f"  fuel at the event: {event.fuel}")
    for s in event.sessions:
        start, end = s.start.astimezone(zone), s.end.astimezone(zone)
        lines.append(f"  session {s.name}: {start:%Y-%m-%d %H:%M}–{end:%H:%M} {start:%Z}")
    w = event.weather
    first = w.time[0].astype("datetime64[s]").item().replace(tzinfo=UTC).astimezone(zone)
    last = w.time[-1].astype("datetime64[s]").item().replace(tzinfo=UTC).astimezone(zone)
    t = _celsius(np.asarray(w.air_temperature))
    lines.append(
        f"  weather: {w.source}, {len(w.time)} samples {first:%Y-%m-%d %H:%M}..{last:%Y-%m-%d %H:%M} {last:%Z}, "
        f"air temperature {t.min():.1f}..{t.max():.1f} degC, pressure as {w.pressure_kind}; every session covered"
    )
    return "\n".join(one_line(line) for line in lines)
