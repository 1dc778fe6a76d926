"""The calibration a history holds for a fleet: its recorded outcomes against the plans ridden.

:func:`calibration_of` gathers, event by event, the outcomes of the fleet's bikes and the plan each
event was ridden on (:meth:`~tuning.history.store.History.plan_ridden`), turns them into readings
(:func:`tuning.calibration.readings_from`) and estimates the pooled calibration
(:func:`tuning.calibration.estimate`).
"""

from __future__ import annotations

from itertools import groupby

from tuning.calibration import Calibration, estimate, readings_from
from tuning.history.outcomes import AFTER

__all__ = ["calibration_of"]


def calibration_of(history, fleet) -> Calibration | None:
    """The calibration of ``fleet`` from ``history``, or None when it holds no readings of it.

    Rows of bikes no longer in the fleet are left out; so are the rows written after an event, rows
    of a bike or session the plan ridden does not hold (a bike added to the fleet since) and events
    whose plan was not recorded (nothing to compare the readings with).
    """
    bikes = {b.id for b in fleet.bikes}
    rows = [r for r in history.outcomes(fleet_name=fleet.name) if r["bike"] in bikes and r["session"] != AFTER]
    readings = []
    for key, group in groupby(rows, key=lambda r: r["event_key"]):
        plan = history.plan_ridden(key, fleet.name)
        if plan is None:
            continue
        planned = {(e["bike"], e["session"]) for e in plan["entries"]}
        readings += readings_from(plan, [dict(r, event=key) for r in group if (r["bike"], r["session"]) in planned])
    return estimate(readings, fleet) if readings else None
