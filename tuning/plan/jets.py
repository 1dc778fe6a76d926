"""The main jet: per bike, one size for each session, never lean, few changes.

Candidates are the family's sizes. A size is safe in a session when no hour is leaner than the
lean guard; the policy (:func:`tuning.plan.policy.flat_sequence`) picks among safe sizes per
session with a penalty per change. Also the jets' ideal (continuous) numbers, which the
document reports, and where the ideal lies outside the family.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tuning import metering
from tuning.errors import UserError
from tuning.plan.policy import flat_sequence
from tuning.plan.window import GUARD_ROUND_OFF, LEAN_GUARD

__all__ = ["JetPlan", "family_of", "jet_factor", "jet_ideals", "nearest_index", "plan_main"]


def family_of(fleet, name, where):
    """The jet family ``name`` of ``fleet`` (UserError when unknown or empty)."""
    try:
        family = fleet.jet_families[name]
    except KeyError:
        known = ", ".join(sorted(fleet.jet_families)) or "none"
        raise UserError(
            f"{where}: jet family {name!r} is not in the fleet (known: {known}); add it or fix the name"
        ) from None
    if len(family.sizes) == 0:
        raise UserError(f"{where}: jet family {name!r} has no sizes; list its sizes")
    return family


def nearest_index(sizes, values) -> np.ndarray:
    """Index of the nearest of the ascending ``sizes`` for each of ``values`` (ties to the smaller)."""
    sizes = np.asarray(sizes, float)
    j = (
        np.clip(np.searchsorted(sizes, values), 1, max(len(sizes) - 1, 1))
        if len(sizes) > 1
        else np.zeros(len(values), int)
    )
    if len(sizes) == 1:
        return j
    return np.where(np.abs(sizes[j - 1] - values) <= np.abs(sizes[j] - values), j - 1, j)


@dataclass
class JetPlan:
    """A jet circuit per row (bike × session): what is fitted and what to fit.

    Arrays of shape (R,): ``family`` and ``coding`` (objects), ``current`` and ``recommended``
    jet numbers, ``index`` of the recommended size in its family, ``unsafe`` (no size of the
    family met the lean guard: the richest is given), ``ideal_mean``/``ideal_min``/``ideal_max``
    the continuous ideal numbers over the session's hours, ``out_of_family`` (the ideal lies
    more than half a step beyond the family), ``too_wide`` (the ideal spans more than one step
    within the session), ``delivered`` the area factor of the recommended size [1].
    """

    family: np.ndarray
    coding: np.ndarray
    current: np.ndarray
    recommended: np.ndarray
    index: np.ndarray
    unsafe: np.ndarray
    ideal_mean: np.ndarray
    ideal_min: np.ndarray
    ideal_max: np.ndarray
    out_of_family: np.ndarray
    too_wide: np.ndarray
    delivered: np.ndarray


def jet_ideals(fleet, rows, settings, family_attr, size_attr) -> JetPlan:
    """The fitted jets and their ideal numbers per row; ``recommended`` starts as the fitted one."""
    n = len(rows.bike)
    family = np.array([getattr(s, family_attr) for s in settings], object)
    current = np.array([getattr(s, size_attr) for s in settings], float)
    coding = np.empty(n, object)
    ideal_mean, ideal_min, ideal_max = (np.full(n, np.nan) for _ in range(3))
    out_of_family = np.zeros(n, bool)
    too_wide = np.zeros(n, bool)
    index = np.zeros(n, np.int64)
    for name in sorted(set(family.tolist())):
        r = np.flatnonzero(family == name)
        fam = family_of(fleet, name, f"{fleet.source or fleet.name}: bike {fleet.bikes[rows.bike[r[0]]].id}")
        sizes = np.asarray(fam.sizes, float)
        coding[r] = fam.coding
        req = rows.required[r]
        with np.errstate(invalid="ignore"):
            ideal = metering.jet_number_for_area_factor(current[r][:, None], req, fam.coding)
        ideal_min[r] = np.nanmin(ideal, axis=1)
        ideal_max[r] = np.nanmax(ideal, axis=1)
        ideal_mean[r] = metering.jet_number_for_area_factor(current[r], np.nanmean(req, axis=1), fam.coding)
        half_up = (sizes[-1] - sizes[-2]) / 2.0 if len(sizes) > 1 else 0.0
        half_down = (sizes[1] - sizes[0]) / 2.0 if len(sizes) > 1 else 0.0
        out_of_family[r] = (ideal_max[r] > sizes[-1] + half_up) | (ideal_min[r] < sizes[0] - half_down)
        lo = np.searchsorted(sizes, ideal_min[r])
        hi = np.searchsorted(sizes, ideal_max[r])
        too_wide[r] = (hi - lo) > 1
        index[r] = nearest_index(sizes, current[r])
    return JetPlan(
        family,
        coding,
        current,
        current.copy(),
        index,
        np.zeros(n, bool),
        ideal_mean,
        ideal_min,
        ideal_max,
        out_of_family,
        too_wide,
        np.ones(n),
    )


def jet_factor(plan: JetPlan) -> np.ndarray:
    """Area factor [1] of each row's recommended jet against its fitted one."""
    ratio = plan.recommended / plan.current
    return np.where(plan.coding == "diameter", ratio * ratio, ratio)


def plan_main(fleet, rows, settings, penalty) -> JetPlan:
    """Choose the main jet of every row: safe in every hour, changed only where it pays."""
    plan = jet_ideals(fleet, rows, settings, "main_jet_family", "main_jet")
    s_count = rows.n_sessions
    for name in sorted(set(plan.family.tolist())):
        r = np.flatnonzero(plan.family == name)  # whole bikes: all sessions of a bike share its family
        fam = fleet.jet_families[name]
        sizes = np.asarray(fam.sizes, float)
        delivered = metering.area_factor_between_jets(plan.current[r][:, None], sizes[None, :], fam.coding)  # (R, K)
        cost = rows.window.rms(delivered, r)
        cost = np.where(rows.window.leanest(delivered, r) <= LEAN_GUARD + GUARD_ROUND_OFF, cost, np.inf)
        b = len(r) // s_count
        start = plan.index[r].reshape(b, s_count)[:, 0]
        start = np.where(sizes[start] == plan.current[r].reshape(b, s_count)[:, 0], start, -1)  # fitted not a size
        choice, unsafe = flat_sequence(cost.reshape(b, s_count, -1), start, penalty)
        plan.index[r] = choice.ravel()
        plan.recommended[r] = sizes[choice.ravel()]
        plan.unsafe[r] = unsafe.ravel()
        plan.delivered[r] = np.take_along_axis(delivered, choice.reshape(-1, 1), axis=1)[:, 0]
    return plan
