"""The fleet file: reference conditions, fuels, jet families, needles, models, bikes, stock.

Every field is documented in its model below (the same text goes into the JSON Schema, see
``carbfleet schema fleet``). Bare numbers take the unit named in each description.

Defaults where the file is silent (each one is flagged on the resolved objects so the setup
sheet can say so):

* a needle without geometry gets :data:`DEFAULT_NEEDLE` (``Needle.assumed = True``); a needle
  with part of its geometry gets the rest from the same defaults, also ``assumed = True``;
* a mixture screw without ``usable_range`` gets 1..3 turns out (``range_assumed = True``);
* ``density_exponent`` 0.5 (the metering law), ``reference_afr`` 12.0;
* a two-stroke model without ``premix`` takes the fleet-wide ``premix``; without either it is
  taken as oil-injected (no oil in the fuel). Four-strokes may not have a premix.
* a bike's own ``reference`` may leave out ``fuel``: the fleet reference's fuel is used.
"""

import math
import warnings
from typing import Annotated

import numpy as np
from pydantic import Field, create_model

from tuning import air
from tuning.config import model
from tuning.config.limits import MAX_BIKES
from tuning.config.quantities import FILE_RANGES, PRESSURE_KEYS, PRESSURE_NAMES, STATION_PRESSURE_MIN, Range
from tuning.config.source import display_name, load_yaml
from tuning.config.spec import (
    Boolean,
    Choice,
    Context,
    Custom,
    Either,
    FileModel,
    Integer,
    Number,
    Quantity,
    Text,
    did_you_mean,
    known_list,
    plain,
    structural_problems,
    top_level_keys,
)
from tuning.constants import DEFAULT_REFERENCE_AFR, METERING_LAW_EXPONENT
from tuning.errors import ConfigError, Problem, WrongFileError
from tuning.fuel import blend

__all__ = ["load_fleet", "FleetFile", "DEFAULT_NEEDLE", "DEFAULT_SCREW_RANGE"]

#: Needle geometry used where the fleet file gives none [m, rad]. A generic needle of the
#: usual order of magnitude (from memory, no maker's part): sheets say it was assumed.
DEFAULT_NEEDLE = {
    "straight_diameter": 2.70e-3,
    "taper_start": 12.0e-3,
    "taper_angle": math.radians(1.0),
    "grooves": 5,
    "groove_pitch": 1.0e-3,
}
#: Usable mixture-screw range where the file gives none [turns out] (common practice: 1..3).
DEFAULT_SCREW_RANGE = (1.0, 3.0)


# --- the file model ------------------------------------------------------------------------
def _pressure(what: str):
    return Quantity(FILE_RANGES["pressure"], f"{what}.")


_CONDITIONS = (
    "Give exactly one of station_pressure / qnh / sea_level_pressure and one of relative_humidity / dew_point."
)


class Conditions(FileModel):
    """Conditions under which the recorded settings were proven."""

    one_of = (tuple(PRESSURE_KEYS), ("relative_humidity", "dew_point"))
    elevation: Quantity(FILE_RANGES["elevation"], "Elevation above mean sea level.")
    air_temperature: Quantity(FILE_RANGES["air_temperature"], "Air temperature (shade, about 2 m above ground).")
    station_pressure: _pressure("Absolute air pressure at the site (not reduced to sea level)") = None
    qnh: _pressure("QNH / altimeter setting, as airfields and METAR give it") = None
    sea_level_pressure: _pressure("Pressure reduced to mean sea level, as weather maps give it") = None
    relative_humidity: Quantity(FILE_RANGES["relative_humidity"], "Relative humidity over water.") = None
    dew_point: Quantity(FILE_RANGES["dew_point"], "Dew point.") = None
    fuel: Text("Name of a fuel under `fuels`.")


Conditions.__doc__ += " " + _CONDITIONS


class BikeConditions(Conditions):
    """This bike's own reference conditions (replaces the fleet's)."""

    fuel: Text("Name of a fuel under `fuels`; the fleet reference's fuel when left out.") = None


BikeConditions.__doc__ += " " + _CONDITIONS


def _read_premix(value) -> float:
    """40, 40.0 or "40:1" -> 40.0 (fuel volume per oil volume)."""
    if isinstance(value, bool) or value is None:
        raise ValueError(f"expected a fuel:oil ratio such as 40 or '40:1', got {value!r}")
    if isinstance(value, str):
        text = value.replace(" ", "")
        parts = text.split(":")
        try:
            if len(parts) == 2 and float(parts[1]) == 1.0:
                value = float(parts[0])
            else:
                value = float(text)
        except ValueError:
            raise ValueError(f"expected a fuel:oil ratio such as 40 or '40:1', got {value!r}") from None
    ratio = float(value)
    if not 10.0 <= ratio <= 200.0:
        raise ValueError(f"premix {ratio:g}:1 is outside the accepted range 10:1..200:1")
    return ratio


PREMIX = Custom(
    _read_premix,
    {
        "anyOf": [
            {"type": "number", "minimum": 10, "maximum": 200},
            {"type": "string", "pattern": r"^\s*\d+(\.\d+)?\s*(:\s*1\s*)?$"},
        ]
    },
    'Two-stroke premix, fuel:oil by volume: 40 or "40:1" (10..200); an unquoted 40:1 is read as written too. '
    "A bike's value wins over its model's, a model's over the fleet's; a two-stroke with none is taken as "
    "oil-injected. Not allowed on four-strokes.",
    colon_as_text=True,
)
DENSITY_EXPONENT = Number(
    f"Exponent on the air-density ratio (0 < n <= 1.5); {METERING_LAW_EXPONENT:g} is the metering law, workshop rules "
    f"correct harder. A bike's value wins over its model's, a model's over the fleet's; {METERING_LAW_EXPONENT:g} when "
    "none is given.",
    0.0,
    1.5,
    exclusive_minimum=True,
)
CHANGE_POLICY = Choice(
    model.CHANGE_POLICIES,
    "How often settings change over an event: event (one setting per "
    "bike unless a change pays for its work; the default) or session (the best per session).",
)
CHANGE_THRESHOLD = Number(
    "Mixture improvement a main-jet change between sessions must bring, as a fraction "
    "(default 0.03, about one main-jet step); other changes are scaled by their work.",
    0.0,
    0.5,
)
JET_SIZE = Number(
    "Jet number as stamped (diameter-coded: orifice in 0.01 mm; flow-coded: proportional to flow).",
    0.0,
    exclusive_minimum=True,
)
SCREW_TURNS = Number("Turns out from lightly seated.", 0.0, 10.0)
_FAMILY = "Name of a family under `jet_families`."


class Jet(FileModel):
    """Main jet (3/4 to full throttle)."""

    family: Text(_FAMILY)
    size: JET_SIZE


class PilotJet(Jet):
    """Pilot (slow) jet (idle to about 1/4 throttle)."""


class NeedleSetting(FileModel):
    """Jet needle and clip position."""

    name: Text("Name of a needle under `needles`.")
    clip: Integer("Clip groove, 1 = top groove (needle lowest, leanest).", 1, 9)


class MixtureScrew(FileModel):
    """Idle mixture screw."""

    kind: Choice(("air", "fuel"), "air: turning out leans the idle mixture; fuel: turning out richens it.")
    turns: SCREW_TURNS
    usable_range: Annotated[
        list[SCREW_TURNS],
        Field(
            min_length=2,
            max_length=2,
            description="[min, max] turns out; outside it a pilot-jet change is due. Default [1, 3], marked 'assumed'.",
        ),
    ] = None


FLOAT_LEVEL = Quantity(Range("mm", 0, 60), "Float level as the service manual measures it.")


class Settings(FileModel):
    """Proven settings of the model."""

    main_jet: Jet
    pilot_jet: PilotJet
    needle: NeedleSetting = None
    mixture_screw: MixtureScrew
    float_level: FLOAT_LEVEL = None


def _partial(full: type[FileModel], doc: str) -> type[FileModel]:
    """``full`` with every key optional: a bike's deviations from its model (give only what differs)."""
    fields = {}
    for name, field in full.model_fields.items():
        annotation = field.annotation
        if isinstance(annotation, type) and issubclass(annotation, FileModel):
            annotation = _partial(annotation, annotation.__doc__)
        extra = [*field.metadata, *([Field(description=field.description)] if field.description else [])]
        fields[name] = (Annotated[annotation, *extra] if extra else annotation, None)
    return create_model("Bike" + full.__name__, __base__=FileModel, __doc__=doc, **fields)


BikeSettings = _partial(Settings, "This bike's deviations from its model's settings (give only what differs).")


class Fuel(FileModel):
    """A pump fuel: gasoline with ethanol/methanol by volume (0 % when left out), or explicit properties."""

    null_is_empty = True
    ethanol: Quantity(Range("percent", 0, 100), "Ethanol content by volume.") = None
    methanol: Quantity(Range("percent", 0, 100), "Methanol content by volume.") = None
    stoichiometric_afr: Number(
        "Stoichiometric air-fuel mass ratio; computed from the blend when left out.", 5.0, 20.0
    ) = None
    density: Quantity(Range("kg/L", 0.6, 1.0), "Density at about 15 degC; computed from the blend when left out.") = (
        None
    )


class SizeRange(FileModel):
    """Sizes from..to (both included) in equal steps."""

    start: JET_SIZE = Field(alias="from")
    to: JET_SIZE
    step: Number("Step between sizes.", 0.0, exclusive_minimum=True)


def _sizes_form(value) -> str | None:
    return "list" if isinstance(value, list) else "range" if isinstance(value, (dict, SizeRange)) else None


class JetFamily(FileModel):
    """A family of interchangeable jets."""

    coding: Choice(
        ("diameter", "flow"), "diameter: number = orifice diameter in 0.01 mm; flow: number proportional to flow."
    )
    sizes: Either(
        {
            "list": Annotated[
                list[JET_SIZE], Field(min_length=1, description="Every size available, e.g. [140, 142, 145].")
            ],
            "range": SizeRange,
        },
        _sizes_form,
        "expected a list of sizes or a mapping {from, to, step}",
        "Available sizes: a list, or {from, to, step}.",
    )


class Needle(FileModel):
    """Jet needle geometry. Anything left out takes a generic default (straight diameter 2.70 mm, taper start 12 mm, taper angle 1.0 deg, 5 grooves, groove pitch 1.0 mm) and the sheet says 'assumed'."""

    null_is_empty = True
    straight_diameter: Quantity(Range("mm", 0.5, 10.0), "Diameter of the straight (upper) part.") = None
    taper_start: Quantity(
        Range("mm", 0, 100), "Slide lift at which the taper reaches the needle jet, clip in groove 1."
    ) = None
    taper_angle: Quantity(Range("deg", 0, 10), "Included angle of the taper.") = None
    grooves: Integer("Number of clip grooves.", 1, 9) = None
    groove_pitch: Quantity(Range("mm", 0.1, 5.0), "Distance between clip grooves.") = None


class Carburetor(FileModel):
    """The model's carburetor."""

    slide: Choice(("round", "flat"), "Slide kind.")
    bore: Quantity(Range("mm", 10, 60), "Venturi/slide bore.")
    needle_jet: Quantity(Range("mm", 1, 6), "Bore of the needle jet (unknown when left out).") = None
    accelerator_pump: Boolean("Has an accelerator pump (default false).") = None


class Model(FileModel):
    """A bike model."""

    strokes: Choice((2, 4), "2 or 4.")
    displacement: Quantity(Range("cc", 10, 2000), "Displacement.")
    premix: PREMIX = None
    density_exponent: DENSITY_EXPONENT = None
    carburetor: Carburetor
    settings: Settings


class Bike(FileModel):
    """One bike."""

    id: Text("Fleet number, unique.")
    model: Text("Name of a model under `models`.")
    settings: BikeSettings = None
    reference: BikeConditions = None
    premix: PREMIX = None
    density_exponent: DENSITY_EXPONENT = None
    notes: Text("Free text shown on the sheet.") = None


class StockItem(FileModel):
    """Jets on the shelf."""

    family: Text("Name of a jet family.")
    size: JET_SIZE
    count: Integer("Jets of this size on the shelf.", 0, 100000)


def _names(tp, description: str, least: int = 0):
    return Annotated[dict[str, tp], Field(min_length=least or None, description=description)]


class FleetFile(FileModel):
    """A carbfleet fleet file."""

    fleet: Text("Name of the fleet.")
    reference: Conditions
    density_exponent: DENSITY_EXPONENT = None
    reference_afr: Number(
        f"Air-fuel mass ratio the proven settings are assumed to give (default {DEFAULT_REFERENCE_AFR:.1f}).", 8.0, 20.0
    ) = None
    change_policy: CHANGE_POLICY = None
    change_threshold: CHANGE_THRESHOLD = None
    premix: PREMIX = None
    fuels: _names(Fuel, "Fuels by name.", 1)
    jet_families: _names(JetFamily, "Jet families by name.", 1)
    needles: _names(Needle, "Jet needles by name.") = None
    models: _names(Model, "Bike models by name.", 1)
    bikes: Annotated[list[Bike], Field(min_length=1, description="The bikes.")]
    stock: Annotated[list[StockItem], Field(description="Jets on the shelf (a size not listed counts as 0).")] = None


#: Top-level keys that only an event file has (tuning.config.event.EventFile), and only a fleet file.
EVENT_KEYS = ("event", "site", "sessions", "weather", "fuel")
FLEET_KEYS = (
    "fleet",
    "reference",
    "density_exponent",
    "reference_afr",
    "premix",
    "fuels",
    "jet_families",
    "needles",
    "models",
    "bikes",
    "stock",
)  # change_policy and change_threshold belong to both kinds


def refuse_other_kind(root, file: str, kind: str) -> None:
    """Raise WrongFileError where ``root`` has more keys of the other kind of file than of its own."""
    keys = top_level_keys(root)
    own, other = (FLEET_KEYS, EVENT_KEYS) if kind == "fleet" else (EVENT_KEYS, FLEET_KEYS)
    theirs = [k for k in keys if k in other]
    if len(theirs) > sum(k in own for k in keys):
        if kind == "fleet":
            message = f"looks like an event file (it has {', '.join(theirs)}); the fleet file comes first, then the event file"
        else:
            message = f"looks like a fleet file (it has {', '.join(theirs)}); the event file comes second, after the fleet file"
        raise WrongFileError(Problem(file, None, "", message))


# --- resolution --------------------------------------------------------------------------
def make_conditions(raw: dict, default_fuel: str | None) -> model.Conditions:
    (pressure_key,) = [k for k in PRESSURE_KEYS if k in raw]
    return model.Conditions(
        elevation=raw["elevation"],
        air_temperature=raw["air_temperature"],
        pressure=raw[pressure_key],
        pressure_kind=PRESSURE_KEYS[pressure_key],
        relative_humidity=raw.get("relative_humidity"),
        dew_point=raw.get("dew_point"),
        fuel=raw.get("fuel", default_fuel),
    )


def conditions_complete(raw) -> bool:
    return (
        isinstance(raw, dict)
        and {"elevation", "air_temperature"} <= raw.keys()
        and sum(k in raw for k in PRESSURE_KEYS) == 1
        and sum(k in raw for k in ("relative_humidity", "dew_point")) == 1
    )


def station_pressures(pressure, kind: str, elevation: float, air_temperature) -> np.ndarray:
    """Station pressure [Pa] of pressures [Pa] of ``kind`` at ``elevation`` [m] (no warnings)."""
    with warnings.catch_warnings():  # range notes of the formulas: the plan gives them where due
        warnings.simplefilter("ignore")
        return np.asarray(air.station_pressure(pressure, kind, elevation, air_temperature), float)


def station_pressure_problem(pressure: float, kind: str, elevation: float, station: float) -> str:
    """The message for a station pressure below :data:`STATION_PRESSURE_MIN` (pressures in Pa)."""
    return (
        f"{PRESSURE_NAMES[kind]} {pressure / 100:.6g} hPa at {elevation:.6g} m elevation is a station pressure of "
        f"{station / 100:.0f} hPa, below the accepted {STATION_PRESSURE_MIN:g} hPa (about that of the highest summits); "
        "check the value, its unit, which pressure it is and the elevation"
    )


def check_conditions(raw, path: str, fuels: dict, ctx: Context) -> None:
    if not isinstance(raw, dict):
        return
    if "dew_point" in raw and "air_temperature" in raw and raw["dew_point"] > raw["air_temperature"] + 1e-9:
        ctx.at_path(f"{path}.dew_point", "dew point above the air temperature; check the values and their units")
    given = [k for k in PRESSURE_KEYS if k in raw]
    if len(given) == 1 and {"elevation", "air_temperature"} <= raw.keys():
        kind = PRESSURE_KEYS[given[0]]
        station = float(station_pressures(raw[given[0]], kind, raw["elevation"], raw["air_temperature"]))
        if not station >= STATION_PRESSURE_MIN * 100.0:
            ctx.at_path(f"{path}.{given[0]}", station_pressure_problem(raw[given[0]], kind, raw["elevation"], station))
    fuel = raw.get("fuel")
    if fuel is not None and fuel not in fuels and fuel not in ctx.names.get("fuels", ()):
        ctx.at_path(f"{path}.fuel", f"unknown fuel '{fuel}'{did_you_mean(fuel, fuels)}; {known_list(fuels)}")


def make_fuel(name: str, raw: dict, path: str, ctx: Context) -> model.Fuel | None:
    ethanol, methanol = raw.get("ethanol", 0.0), raw.get("methanol", 0.0)
    if ethanol + methanol > 1.0 + 1e-9:
        ctx.at_path(path, "ethanol and methanol together exceed 100 %")
        return None
    afr, density = (float(v) for v in blend(ethanol, methanol))
    return model.Fuel(
        name=name,
        stoichiometric_afr=raw.get("stoichiometric_afr", afr),
        density=raw.get("density", density),
        ethanol_volume_fraction=ethanol,
        methanol_volume_fraction=methanol,
    )


def make_family(name: str, raw: dict, path: str, ctx: Context) -> model.JetFamily | None:
    sizes = raw["sizes"]
    if isinstance(sizes, dict):
        start, stop, step = sizes["from"], sizes["to"], sizes["step"]
        count = (stop - start) / step
        if stop <= start:
            ctx.at_path(f"{path}.sizes.to", f"'to' ({stop:g}) must be above 'from' ({start:g})")
            return None
        if count > 2000:
            ctx.at_path(f"{path}.sizes.step", f"{count:.0f} sizes is too many; check step")
            return None
        if abs(count - round(count)) > 1e-6:
            ctx.at_path(f"{path}.sizes.step", f"from {start:g} to {stop:g} is not a whole number of steps of {step:g}")
            return None
        values = [round(start + i * step, 6) for i in range(round(count) + 1)]
    else:
        values = sizes
        for i, s in enumerate(sizes):
            if sizes.index(s) != i:
                ctx.at_path(f"{path}.sizes[{i}]", f"size {s:g} is listed twice")
    return model.JetFamily(name=name, coding=raw["coding"], sizes=tuple(sorted(set(values))))


def make_needle(name: str, raw: dict) -> model.Needle:
    values = {k: raw.get(k, default) for k, default in DEFAULT_NEEDLE.items()}
    return model.Needle(name=name, assumed=not set(DEFAULT_NEEDLE) <= raw.keys(), **values)


def size_problem(size: float, family: model.JetFamily) -> str | None:
    if any(abs(size - s) <= 1e-6 * max(1.0, abs(s)) for s in family.sizes):
        return None
    below = [s for s in family.sizes if s < size]
    above = [s for s in family.sizes if s > size]
    near = ", ".join(f"{s:g}" for s in (below[-1:] + above[:1]))
    return f"size {size:g} is not in family '{family.name}' (nearest: {near})"


def check_jet(raw, path, families, ctx) -> None:
    """Family known and size available; ``raw`` holds whatever of family/size is resolved."""
    family_name, size = raw.get("family"), raw.get("size")
    if family_name is None:
        return
    family = families.get(family_name)
    if family is None:
        if family_name in ctx.names.get("jet_families", ()):  # given, but with a problem said there
            return
        ctx.at_path(
            f"{path}.family",
            f"unknown jet family '{family_name}'{did_you_mean(family_name, families)}; {known_list(families)}",
        )
        return
    if size is not None:
        problem = size_problem(size, family)
        if problem:
            ctx.at_path(f"{path}.size", problem)


def merge_settings(base: dict, override: dict) -> dict:
    merged = dict(base)
    for key, value in override.items():
        if isinstance(value, dict) and isinstance(base.get(key), dict):
            merged[key] = {**base[key], **value}
        else:
            merged[key] = value
    return merged


def check_settings(settings: dict, given: dict, path: str, families, needles, ctx: Context) -> None:
    """Check the resolved ``settings``; report only parts present in ``given`` (the file's own keys)."""
    for jet in ("main_jet", "pilot_jet"):
        if jet in given and isinstance(settings.get(jet), dict):
            check_jet(settings[jet], f"{path}.{jet}", families, ctx)
    if "needle" in given and isinstance(settings.get("needle"), dict):
        needle = settings["needle"]
        name, clip = needle.get("name"), needle.get("clip")
        if name is None and clip is not None:
            ctx.at_path(f"{path}.needle", "a clip is given but no needle name (the model has none)")
        elif name is not None and name not in needles:
            ctx.at_path(
                f"{path}.needle.name", f"unknown needle '{name}'{did_you_mean(name, needles)}; {known_list(needles)}"
            )
        elif name is not None and clip is not None and clip > needles[name].grooves:
            ctx.at_path(
                f"{path}.needle.clip",
                f"clip {clip} is outside needle '{name}' which has grooves 1..{needles[name].grooves}",
            )
    screw = settings.get("mixture_screw")
    if "mixture_screw" in given and isinstance(screw, dict):
        usable, turns = screw.get("usable_range"), screw.get("turns")
        own = given["mixture_screw"] if isinstance(given["mixture_screw"], dict) else {}
        if isinstance(usable, list) and usable[0] >= usable[1]:
            ctx.at_path(f"{path}.mixture_screw.usable_range", f"expected [min, max] with min below max, got {usable}")
        elif isinstance(usable, list) and turns is not None and not usable[0] <= turns <= usable[1]:
            where = "turns" if "turns" in own else "usable_range" if "usable_range" in own else None
            if where is not None:  # else both come from the model, said there
                ctx.at_path(
                    f"{path}.mixture_screw.{where}",
                    f"{turns:g} turns out is outside the screw's usable range {usable[0]:g}..{usable[1]:g} turns; "
                    "a proven setting lies inside it: check the turns and the range (beyond it the pilot jet is changed)",
                )


def check_needle_fit(settings: dict, given: dict, model_raw: dict, needles_raw: dict, path: str, ctx: Context) -> None:
    """The needle's straight part must be thinner than the model's needle-jet bore (else no fuel passes).

    Checked where both are given in the file (an assumed default diameter is not the user's
    value); reported where ``given`` names the needle, so a model's problem is said once.
    """
    needle = settings.get("needle") if isinstance(settings, dict) else None
    own = given.get("needle") if isinstance(given, dict) else None
    carburetor = model_raw.get("carburetor") if isinstance(model_raw, dict) else None
    if not (isinstance(needle, dict) and isinstance(own, dict) and "name" in own and isinstance(carburetor, dict)):
        return
    name, bore = needle.get("name"), carburetor.get("needle_jet")
    geometry = needles_raw.get(name)
    diameter = geometry.get("straight_diameter") if isinstance(geometry, dict) else None
    if bore is None or diameter is None or diameter < bore:
        return
    ctx.at_path(
        f"{path}.needle.name",
        f"needle '{name}' is {diameter * 1000:g} mm thick (needles.{name}.straight_diameter), not thinner than this "
        f"model's needle jet of {bore * 1000:g} mm (carburetor.needle_jet); no fuel could pass: check both values",
    )


def make_settings(raw: dict, needles) -> model.Settings:
    screw = raw["mixture_screw"]
    usable = screw.get("usable_range")
    needle = raw.get("needle") or {}
    return model.Settings(
        main_jet=raw["main_jet"]["size"],
        main_jet_family=raw["main_jet"]["family"],
        pilot_jet=raw["pilot_jet"]["size"],
        pilot_jet_family=raw["pilot_jet"]["family"],
        needle=needle.get("name"),
        clip=needle.get("clip"),
        mixture_screw=model.MixtureScrew(
            kind=screw["kind"],
            turns=screw["turns"],
            usable_range=tuple(usable) if usable else DEFAULT_SCREW_RANGE,
            range_assumed=not usable,
        ),
        float_level=raw.get("float_level"),
    )


def load_fleet(path) -> model.Fleet:
    """Read, check and resolve a fleet file.

    Parameters
    ----------
    path : str or os.PathLike
        The fleet YAML file.

    Returns
    -------
    tuning.config.model.Fleet
        Every number in SI; every bike resolved against its model and the fleet.

    Raises
    ------
    tuning.errors.ConfigError
        With every problem of the file, each ``file:line: field: problem``: first every
        problem of its structure (keys, types, units, ranges) at once; when there is none,
        every problem between its parts (names, sizes, needle fit, screw range, pressures).
    """
    ctx = Context(display_name(path))
    root = load_yaml(path, {"bikes": (MAX_BIKES, "bikes")})
    refuse_other_kind(root, ctx.file, "fleet")
    keys: list = []
    checked = structural_problems(FleetFile, plain(root, ctx, "", keys), ctx, keys)
    if checked is None:
        raise ConfigError(sorted(ctx.problems, key=lambda p: p.line or 0))
    raw = checked.model_dump(by_alias=True, exclude_unset=True)
    ctx.names = {key: set(raw[key]) for key in ("fuels", "jet_families")}
    fuels = {n: f for n, r in raw["fuels"].items() if (f := make_fuel(n, r, f"fuels.{n}", ctx))}
    families = {n: f for n, r in raw["jet_families"].items() if (f := make_family(n, r, f"jet_families.{n}", ctx))}
    needles = {n: make_needle(n, r) for n, r in raw.get("needles", {}).items()}
    check_conditions(raw["reference"], "reference", fuels, ctx)
    check_models(raw, families, needles, ctx)
    check_bikes(raw, families, needles, fuels, ctx)
    stock = read_stock(raw.get("stock", []), families, ctx)
    if ctx.problems:
        raise ConfigError(sorted(ctx.problems, key=lambda p: p.line or 0))
    return _build(raw, fuels, families, needles, stock, path)


def check_models(raw: dict, families, needles, ctx: Context) -> None:
    for name, m in raw["models"].items():
        path_m = f"models.{name}"
        settings = m["settings"]
        check_settings(settings, settings, f"{path_m}.settings", families, needles, ctx)
        check_needle_fit(settings, settings, m, raw.get("needles", {}), f"{path_m}.settings", ctx)
        if m["strokes"] == 4 and "premix" in m:
            ctx.at_path(f"{path_m}.premix", "a four-stroke takes no premix; remove it")


def check_bikes(raw: dict, families, needles, fuels, ctx: Context) -> None:
    models_raw = raw["models"]
    seen_ids: dict[str, int] = {}
    for i, b in enumerate(raw["bikes"]):
        path_b = f"bikes[{i}]"
        bike_id = b["id"]
        if bike_id in seen_ids:
            ctx.at_path(f"{path_b}.id", f"duplicate bike id '{bike_id}' (first used by bikes[{seen_ids[bike_id]}])")
        else:
            seen_ids[bike_id] = i
        model_name = b["model"]
        if model_name not in models_raw:
            ctx.at_path(
                f"{path_b}.model",
                f"unknown model '{model_name}'{did_you_mean(model_name, models_raw)}; {known_list(models_raw)}",
            )
            continue
        override = b.get("settings", {})
        merged = merge_settings(models_raw[model_name]["settings"], override)
        check_settings(merged, override, f"{path_b}.settings", families, needles, ctx)
        check_needle_fit(merged, override, models_raw[model_name], raw.get("needles", {}), f"{path_b}.settings", ctx)
        check_conditions(b.get("reference"), f"{path_b}.reference", fuels, ctx)
        if "premix" in b and models_raw[model_name]["strokes"] == 4:
            ctx.at_path(f"{path_b}.premix", "this bike's model is a four-stroke, which takes no premix; remove it")


def read_stock(items: list[dict], families, ctx: Context) -> dict[tuple[str, float], int]:
    stock: dict[tuple[str, float], int] = {}
    for i, item in enumerate(items):
        before = len(ctx.problems)
        check_jet(item, f"stock[{i}]", families, ctx)
        if len(ctx.problems) > before:
            continue
        key = (item["family"], item["size"])
        if key in stock:
            ctx.at_path(f"stock[{i}]", f"{item['family']} size {item['size']:g} is listed twice; give one count")
        stock[key] = item["count"]
    return stock


def _build(raw, fuels, families, needles, stock, path) -> model.Fleet:
    """Assemble the typed objects (only called on a file without problems)."""
    reference = make_conditions(raw["reference"], None)
    fleet_exponent = raw.get("density_exponent", METERING_LAW_EXPONENT)
    fleet_premix = raw.get("premix")
    models = {}
    for name, m in raw["models"].items():
        carb = m["carburetor"]
        premix = m.get("premix", fleet_premix if m["strokes"] == 2 else None)
        models[name] = model.Model(
            name=name,
            strokes=m["strokes"],
            displacement=m["displacement"],
            carburetor=model.Carburetor(
                slide=carb["slide"],
                bore=carb["bore"],
                needle_jet=carb.get("needle_jet"),
                accelerator_pump=carb.get("accelerator_pump", False),
            ),
            premix_ratio=premix,
            settings=make_settings(m["settings"], needles),
            density_exponent=m.get("density_exponent"),
        )
    bikes = []
    for b in raw["bikes"]:
        m = models[b["model"]]
        merged = merge_settings(raw["models"][b["model"]]["settings"], b.get("settings", {}))
        own = "reference" in b
        exponent = b.get("density_exponent", m.density_exponent if m.density_exponent is not None else fleet_exponent)
        bikes.append(
            model.Bike(
                id=b["id"],
                model=b["model"],
                settings=make_settings(merged, needles),
                reference=make_conditions(b["reference"], reference.fuel) if own else reference,
                premix_ratio=b.get("premix", m.premix_ratio),
                density_exponent=exponent,
                notes=b.get("notes", ""),
                own_reference=own,
            )
        )
    extra = {key: raw[key] for key in ("reference_afr", "change_policy", "change_threshold") if key in raw}
    return model.Fleet(
        name=raw["fleet"],
        reference=reference,
        fuels=fuels,
        jet_families=families,
        needles=needles,
        models=models,
        bikes=tuple(bikes),
        stock=stock,
        density_exponent=fleet_exponent,
        source=_as_path(path),
        **extra,
    )


def _as_path(path):
    from pathlib import Path

    return Path(path)
