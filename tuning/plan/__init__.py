"""The jetting plan: settings for every bike and session, never lean, few changes, jets shared.

:func:`make_plan` turns a resolved :class:`~tuning.config.model.Fleet` and
:class:`~tuning.config.model.Event` into the plan document (``carbfleet-plan/3``, JSON-ready,
described by ``tuning/schemas/recommendations.schema.json``); :func:`write_plan_files` writes
``recommendations.json``, ``recommendations.csv`` and ``pick-list.csv``. It is a recipe of stages,
each a function of plain inputs to a small record, vectorised over bikes × sessions × hours:

1. :mod:`~tuning.plan.hours` — the sessions' hours and the air at each, the references' air;
2. :mod:`~tuning.plan.factor` — the required area factor of every bike in every hour, and
   :mod:`~tuning.plan.calibrate` — per circuit, with a calibration where one is given;
3. :mod:`~tuning.plan.jets` — the main jet;
4. :mod:`~tuning.plan.idle` — pilot jet and mixture screw, the screw first;
5. :mod:`~tuning.plan.clip` — the needle clip, given the main jet;
6. :mod:`~tuning.plan.curve` — the predicted mixture across throttle openings;
7. :mod:`~tuning.plan.rejet` — how much colder or warmer before the main should change;
8. :mod:`~tuning.plan.pool` — the fleet's jets allocated to named bikes, the pick list;
9. :mod:`~tuning.plan.document` — warnings (:mod:`~tuning.plan.notices`) and work orders.

The rules: no recommendation leaves any hour, opening or circuit leaner than the lean guard
(:data:`~tuning.plan.window.LEAN_GUARD`); where nothing meets it the plan says so as a
``danger``. Each bike keeps one setting for the event unless a change pays for its work
(:mod:`~tuning.plan.policy`); the ``session`` policy gives the best setting per session.
"""

from __future__ import annotations

from tuning.plan import document, policy
from tuning.plan.calibrate import circuit_rows, guarded
from tuning.plan.clip import CLIP_LEAN_LIMIT, MID_RANGE_OPENINGS, THROTTLE, plan_clip
from tuning.plan.curve import mixture_curves
from tuning.plan.factor import metering, required_area_factor, rows_of
from tuning.plan.files import CSV_COLUMNS, PICK_LIST_COLUMNS, PLAN_FILE_SIGNATURES, plan_rows, write_plan_files
from tuning.plan.hours import event_hours, references, session_hours
from tuning.plan.idle import plan_idle
from tuning.plan.jets import plan_main
from tuning.plan.notices import BIKE_CODES, CODES
from tuning.plan.pool import allocate, pick_list
from tuning.plan.rejet import rejet_thresholds
from tuning.plan.window import LEAN_GUARD, LEAN_WEIGHT, RICH_WEIGHT, WindowLoss

__all__ = [
    "FORMAT",
    "LEAN_GUARD",
    "LEAN_WEIGHT",
    "RICH_WEIGHT",
    "CLIP_LEAN_LIMIT",
    "THROTTLE",
    "MID_RANGE_OPENINGS",
    "CODES",
    "BIKE_CODES",
    "CSV_COLUMNS",
    "PICK_LIST_COLUMNS",
    "PLAN_FILE_SIGNATURES",
    "WindowLoss",
    "session_hours",
    "required_area_factor",
    "make_plan",
    "plan_rows",
    "write_plan_files",
]

FORMAT = document.FORMAT


def make_plan(
    fleet, event, *, policy_name: str | None = None, change_threshold: float | None = None, calibration=None
) -> dict:
    """Plan the settings of every bike for every session of an event.

    Parameters
    ----------
    fleet : tuning.config.model.Fleet
    event : tuning.config.model.Event
    policy_name : {"event", "session"}, optional
        ``event``: one setting per bike unless a change pays for its work (default);
        ``session``: the best setting per session. Default: the event's, else the fleet's.
    change_threshold : float, optional
        Mixture improvement [1] a main-jet change must bring (other changes scaled by their
        work). Default: the event's, else the fleet's, else 0.03.

    Returns
    -------
    dict
        The plan document (format ``carbfleet-plan/3``).
    """
    if not fleet.bikes or not event.sessions:  # the loaders refuse both; plans of nothing are not made
        raise ValueError("make_plan needs at least one bike and one session")
    chosen_policy = policy_name or event.change_policy or fleet.change_policy or policy.DEFAULT_POLICY
    threshold = next(
        (t for t in (change_threshold, event.change_threshold, fleet.change_threshold) if t is not None),
        policy.DEFAULT_CHANGE_THRESHOLD,
    )
    penalties = policy.penalties(chosen_policy, float(threshold))

    hours = event_hours(event)
    refs = references(fleet)
    meter = metering(fleet, event)
    rows = rows_of(fleet, hours, refs, meter)
    settings = [fleet.bikes[b].settings for b in rows.bike]
    circuits = circuit_rows(fleet, rows, hours, refs, calibration)

    main, idle, clip = _circuits(fleet, circuits, settings, penalties)
    if circuits.calibrated:  # never leaner by the law than the guard or the law's own plan
        main, idle, clip = guarded(
            rows,
            circuits,
            (main, idle, clip),
            _circuits(fleet, circuit_rows(fleet, rows, hours, refs, None), settings, penalties),
        )
    curves = mixture_curves(rows, refs, hours, main, idle, clip, float(fleet.reference_afr), circuits.multiplier)
    rejet = rejet_thresholds(
        fleet, circuits.main, hours, refs, meter, main, circuits.multiplier["main"] if circuits.multiplier else None
    )
    fitted, planned = _jets_by_bike(rows, main, idle.pilot)
    stock = dict(fleet.stock) if fleet.stock else None
    allocation = allocate([b.id for b in fleet.bikes], fitted, planned, stock)
    picks = pick_list(fitted, planned, stock)
    return document.assemble(
        fleet,
        event,
        rows,
        hours,
        refs,
        main,
        idle,
        clip,
        curves,
        rejet,
        allocation,
        picks,
        chosen_policy,
        float(threshold),
        circuits,
    )


def _circuits(fleet, circuits, settings, penalties):
    """Main jet, idle circuit and clip, each planned on its circuit's rows."""
    main = plan_main(fleet, circuits.main, settings, penalties["main_jet"])
    idle = plan_idle(fleet, circuits.pilot, settings, penalties)
    clip = plan_clip(fleet, circuits.needle, settings, main, penalties["clip"])
    return main, idle, clip


def _jets_by_bike(rows, main, pilot):
    """Per bike the proven (family, size) of each jet, and per bike and session the planned ones."""
    shape = (rows.n_bikes, rows.n_sessions)
    keys = {}
    for kind, plan in (("main_jet", main), ("pilot_jet", pilot)):
        fam = plan.family.reshape(shape).tolist()
        keys[kind] = (fam, plan.current.reshape(shape).tolist(), plan.recommended.reshape(shape).tolist())
    fitted = [{kind: (keys[kind][0][b][0], keys[kind][1][b][0]) for kind in keys} for b in range(rows.n_bikes)]
    planned = [
        [{kind: (keys[kind][0][b][s], keys[kind][2][b][s]) for kind in keys} for s in range(rows.n_sessions)]
        for b in range(rows.n_bikes)
    ]
    return fitted, planned
