"""Small invented fleets and events built directly as model objects, for the plan tests.

Every name and number here is invented for the tests (no real product). Jet sizes follow
common practice for the coding: diameter-coded mains in steps of 2 or 2.5, pilots in steps
of 2.5.
"""

from __future__ import annotations

import math
from dataclasses import replace
from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np

from tuning.config import model as m

ZONE = "America/Denver"


def conditions(
    elevation=0.0, celsius=20.0, pressure=101325.0, kind="station", relative_humidity=0.5, dew_point=None, fuel="E0"
):
    return m.Conditions(
        elevation=elevation,
        air_temperature=273.15 + celsius,
        pressure=pressure,
        pressure_kind=kind,
        relative_humidity=None if dew_point is not None else relative_humidity,
        dew_point=None if dew_point is None else 273.15 + dew_point,
        fuel=fuel,
    )


FUELS = {
    # gasoline 14.7 (the trade's figure), density ~0.745 kg/L (from memory); E10 with ethanol
    # 9.0 and 0.789 kg/L (from memory) mixed by volume through mass fractions
    "E0": m.Fuel("E0", 14.7, 745.0),
    "E10": m.Fuel("E10", 14.08, 749.4, ethanol_volume_fraction=0.10),
}

FAMILIES = {
    "main-round": m.JetFamily("main-round", "diameter", tuple(float(s) for s in np.arange(100, 222, 2))),
    "main-flat": m.JetFamily("main-flat", "diameter", tuple(float(s) for s in np.arange(120, 200.1, 2.5))),
    "main-flow": m.JetFamily("main-flow", "flow", tuple(float(s) for s in range(200, 601, 10))),
    "pilot": m.JetFamily("pilot", "diameter", tuple(float(s) for s in np.arange(20, 60.1, 2.5))),
}

NEEDLES = {
    "N-taper": m.Needle(
        name="N-taper",
        straight_diameter=2.50e-3,
        taper_start=9.0e-3,
        taper_angle=math.radians(1.5),
        grooves=5,
        groove_pitch=1.0e-3,
    ),
    "N-unknown": m.Needle(
        name="N-unknown",
        straight_diameter=2.50e-3,
        taper_start=9.0e-3,
        taper_angle=math.radians(1.5),
        grooves=5,
        groove_pitch=1.0e-3,
        assumed=True,
    ),
}


def settings(
    main=160.0,
    main_family="main-round",
    pilot=40.0,
    needle="N-taper",
    clip=3,
    screw_kind="air",
    turns=1.5,
    usable=(1.0, 3.0),
    float_level=None,
    range_assumed=False,
):
    return m.Settings(
        main_jet=main,
        main_jet_family=main_family,
        pilot_jet=pilot,
        pilot_jet_family="pilot",
        needle=needle,
        clip=clip,
        mixture_screw=m.MixtureScrew(screw_kind, turns, usable, range_assumed),
        float_level=float_level,
    )


MODELS = {
    "TS-250": m.Model(
        name="TS-250",
        strokes=2,
        displacement=249e-6,
        carburetor=m.Carburetor("round", 38e-3, 2.62e-3),
        premix_ratio=40.0,
        settings=settings(),
    ),
    "FS-450": m.Model(
        name="FS-450",
        strokes=4,
        displacement=449e-6,
        carburetor=m.Carburetor("flat", 40e-3, 2.62e-3, accelerator_pump=True),
        premix_ratio=None,
        settings=settings(
            main=170.0, main_family="main-flat", pilot=42.5, screw_kind="fuel", turns=2.0, float_level=8.0e-3
        ),
    ),
    "TX-125": m.Model(
        name="TX-125",
        strokes=2,
        displacement=124e-6,
        carburetor=m.Carburetor("round", 36e-3, None),
        premix_ratio=32.0,
        settings=settings(main=400.0, main_family="main-flow", pilot=35.0, needle="N-unknown", clip=2),
    ),
}


def bike(bike_id, model_name, reference, **overrides):
    mod = MODELS[model_name]
    premix = overrides.pop("premix_ratio", mod.premix_ratio)
    exponent = overrides.pop("density_exponent", 0.5)
    st = replace(mod.settings, **overrides) if overrides else mod.settings
    return m.Bike(
        id=bike_id, model=model_name, settings=st, reference=reference, premix_ratio=premix, density_exponent=exponent
    )


def fleet(bikes=None, reference=None, stock=None, name="test-fleet"):
    reference = reference or conditions()
    if bikes is None:
        bikes = (
            bike("R01", "TS-250", reference),
            bike("R02", "FS-450", reference),
            bike("R03", "TX-125", reference),
        )
    return m.Fleet(
        name=name,
        reference=reference,
        fuels=FUELS,
        jet_families=FAMILIES,
        needles=NEEDLES,
        models=MODELS,
        bikes=tuple(bikes),
        stock=dict(stock or {}),
    )


def event(
    elevation=1500.0,
    celsius=15.0,
    relative_humidity=0.5,
    pressure=None,
    hours=6,
    spread=0.0,
    fuel=None,
    sessions=None,
    start_local=datetime(2026, 7, 11, 9, 0),
):
    """An event with hourly weather in station pressure (ISA at ``elevation`` unless given).

    ``spread`` [K] adds a linear warming across the weather rows (from -spread/2 to +spread/2).
    """
    zone = ZoneInfo(ZONE)
    start = start_local.replace(tzinfo=zone)
    n = hours + 3
    t0 = start - timedelta(hours=1)
    times = np.array(
        [np.datetime64((t0 + timedelta(hours=i)).astimezone(UTC).replace(tzinfo=None), "s") for i in range(n)]
    )
    if pressure is None:
        pressure = 101325.0 * (1 - 2.25577e-5 * elevation) ** 5.25588  # ISA barometric formula
    temperature = 273.15 + celsius + np.linspace(-spread / 2, spread / 2, n)
    weather = m.Weather(
        time=times,
        air_temperature=temperature,
        pressure=np.full(n, float(pressure)),
        pressure_kind="station",
        humidity=np.full(n, float(relative_humidity)),
        humidity_kind="relative",
        source="test",
    )
    if sessions is None:
        sessions = (m.Session("practice", start, start + timedelta(hours=hours)),)
    return m.Event(
        name="test-event",
        site=m.Site("Test Ridge", elevation, ZONE),
        sessions=tuple(sessions),
        weather=weather,
        fuel=fuel,
    )
