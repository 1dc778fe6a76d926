"""The needle clip: chosen after the main jet, judged at the mid-range openings.

With the needle's geometry (straight diameter, taper, groove pitch), the needle jet's bore and
a diameter-coded main jet, the delivered factor at an opening is the series area of the needle
annulus and the main jet against the fitted pair (:func:`tuning.circuits.needle_annulus_area`,
:func:`tuning.circuits.series_orifice_area`; slide lift = opening × bore). Without them each groove
changes the annulus by :data:`tuning.circuits.ASSUMED_GROOVE_AREA_STEP` (10 %, from memory), the
annulus taken equal in area to the main jet, and the clip never moves leaner than fitted: an
assumed effect is no ground for leaning an engine. A groove is safe when no opening of
:data:`MID_RANGE_OPENINGS` in any hour is leaner than the lean guard; the policy picks among
safe grooves per session with the clip's penalty.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tuning import circuits, metering
from tuning.errors import UserError
from tuning.plan.policy import flat_sequence
from tuning.plan.window import GUARD_ROUND_OFF, LEAN_GUARD

__all__ = ["MID_RANGE_OPENINGS", "THROTTLE", "CLIP_LEAN_LIMIT", "ClipPlan", "plan_clip"]

MID_RANGE_OPENINGS = np.array([0.25, 0.375, 0.5, 0.625, 0.75])  #: where the clip is judged [1]
THROTTLE = np.round(np.linspace(0.0, 1.0, 21), 2)  #: throttle openings of the mixture curve [1]
MODE_NONE, MODE_GEOMETRY, MODE_ASSUMED = 0, 1, 2
CLIP_LEAN_LIMIT = LEAN_GUARD  #: the clip answers to the same lean guard as every circuit


@dataclass
class ClipPlan:
    """Per row: ``current`` and ``recommended`` groove (-1 where none on record), ``mode``
    (0 no needle, 1 geometry, 2 assumed), ``grooves`` of the needle, ``unsafe`` (no groove met
    the guard: the richest allowed is given), ``curve`` (R, len(THROTTLE)) the needle circuit's
    delivered factor [1] at the recommended setting."""

    current: np.ndarray
    recommended: np.ndarray
    mode: np.ndarray
    grooves: np.ndarray
    unsafe: np.ndarray
    curve: np.ndarray


def plan_clip(fleet, rows, settings, main, penalty) -> ClipPlan:
    """Choose the clip groove of every row, given the main jet plan ``main``."""
    n, s_count = len(rows.bike), rows.n_sessions
    current = np.array([s.clip if s.clip is not None else -1 for s in settings], np.int64)
    recommended = current.copy()
    mode = np.zeros(n, np.int64)
    grooves = np.zeros(n, np.int64)
    unsafe = np.zeros(n, bool)
    main_delivered = main.delivered
    curve = np.repeat(np.sqrt(main_delivered)[:, None], len(THROTTLE), axis=1)
    for r, s in enumerate(settings):
        if s.needle is None or s.clip is None:
            continue
        needle = fleet.needles.get(s.needle)
        if needle is None:
            raise UserError(
                f"{fleet.source or fleet.name}: bike {fleet.bikes[rows.bike[r]].id}: needle {s.needle!r} "
                "is not in the fleet's needles; add it or fix the name"
            )
        grooves[r] = needle.grooves
        model = fleet.models[fleet.bikes[rows.bike[r]].model]
        known = not needle.assumed and model.carburetor.needle_jet is not None and main.coding[r] == "diameter"
        mode[r] = MODE_GEOMETRY if known else MODE_ASSUMED
    g_max = int(grooves.max(initial=1))
    numbers = np.arange(1, g_max + 1)
    for which in (MODE_GEOMETRY, MODE_ASSUMED):
        r = np.flatnonzero(mode == which)
        if not len(r):
            continue
        factor = (
            _geometry_factor(fleet, rows, settings, main, r, current)
            if which == MODE_GEOMETRY
            else _assumed_factor(main_delivered[r], current[r])
        )
        delivered = factor(MID_RANGE_OPENINGS, np.broadcast_to(numbers[None, :], (len(r), g_max)))  # (R, G, O)
        openings = len(MID_RANGE_OPENINGS)
        loss = rows.window(delivered, r).sum(axis=-1)
        cost = np.sqrt(np.maximum(loss, 0.0) / (np.maximum(rows.window.count[r], 1)[:, None] * openings))
        leanest = rows.window.leanest(delivered, r).max(axis=-1)
        allowed = numbers[None, :] <= grooves[r][:, None]
        if which == MODE_ASSUMED:
            allowed &= numbers[None, :] >= current[r][:, None]  # never leaner on an assumed effect
        cost = np.where(allowed & (leanest <= LEAN_GUARD + GUARD_ROUND_OFF), cost, np.inf)
        b = len(r) // s_count
        start = current[r].reshape(b, s_count)[:, 0] - 1
        choice, bad = flat_sequence(cost.reshape(b, s_count, g_max), start, penalty)
        choice = choice.ravel()
        # where nothing was safe, flat_sequence gave the last candidate: keep it within the needle
        choice = np.minimum(choice, grooves[r] - 1)
        recommended[r] = numbers[choice]
        unsafe[r] = bad.ravel()
        curve[r] = factor(THROTTLE, recommended[r][:, None])[:, 0, :]
    return ClipPlan(current, recommended, mode, grooves, unsafe, curve)


def _assumed_factor(main_delivered, current):
    """Needle-circuit factor for grooves without geometry: (R, G) grooves -> (R, G, O)."""
    step = 1.0 + circuits.ASSUMED_GROOVE_AREA_STEP

    def factor(openings, groove):
        moves = groove - current[:, None]
        per_groove = np.sqrt(main_delivered)[:, None] * step ** (0.5 * moves)
        return np.repeat(per_groove[:, :, None], len(openings), axis=2)

    return factor


def _geometry_factor(fleet, rows, settings, main, r, current):
    """Needle-circuit factor from the needle's geometry: (R, G) grooves -> (R, G, O)."""
    needles = [fleet.needles[settings[i].needle] for i in r]
    carbs = [fleet.models[fleet.bikes[rows.bike[i]].model].carburetor for i in r]
    nj = np.array([c.needle_jet for c in carbs])[:, None, None]
    bore = np.array([c.bore for c in carbs])[:, None, None]
    sd = np.array([x.straight_diameter for x in needles])[:, None, None]
    ts = np.array([x.taper_start for x in needles])[:, None, None]
    ta = np.array([x.taper_angle for x in needles])[:, None, None]
    gp = np.array([x.groove_pitch for x in needles])[:, None, None]
    a_main_now = np.pi / 4.0 * (main.current[r] * metering.DIAMETER_CODE_STEP) ** 2
    a_main_new = np.pi / 4.0 * (main.recommended[r] * metering.DIAMETER_CODE_STEP) ** 2
    clip_now = current[r]

    def factor(openings, groove):
        lift = np.asarray(openings)[None, None, :] * bore
        a_new = circuits.series_orifice_area(
            circuits.needle_annulus_area(lift, nj, sd, ts, ta, gp, groove[:, :, None]), a_main_new[:, None, None]
        )
        a_now = circuits.series_orifice_area(
            circuits.needle_annulus_area(lift, nj, sd, ts, ta, gp, clip_now[:, None, None]), a_main_now[:, None, None]
        )
        return a_new / a_now

    return factor
