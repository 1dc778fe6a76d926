"""The idle circuit: pilot jet and mixture screw together, the screw first.

Candidates per bike: the family's pilot sizes within :data:`PILOT_REACH` steps of the fitted
one, and screw positions in quarter turns inside the inner part of the screw's usable range
(:data:`SCREW_INNER_SHARE`, the middle half by default), plus the fitted position. The screw is
trimmed before the pilot is changed because the penalties follow the work (a screw turn takes
minutes, a pilot jet the float bowl off); a screw move is none or at least half a turn. The
screw's effect is :data:`tuning.circuits.ASSUMED_SCREW_EFFECT_PER_TURN` (10 % of idle fuel per
turn, from memory); an air screw turned out leans, a fuel screw turned out richens.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from tuning import circuits, metering
from tuning.plan.jets import JetPlan, jet_factor, jet_ideals
from tuning.plan.policy import TURNS_NOISE, idle_sequence
from tuning.plan.window import GUARD_ROUND_OFF, LEAN_GUARD

__all__ = ["PILOT_REACH", "SCREW_INNER_SHARE", "IdlePlan", "plan_idle"]

PILOT_REACH = 3  #: pilot sizes considered on each side of the fitted one [steps]
#: Share of the screw's usable range, centred, in which a screw change may land (our choice:
#: the middle half keeps room to trim at the pits either way).
SCREW_INNER_SHARE = 0.5
_QUARTER = 0.25  # screw positions are planned in quarter turns [turns]
_FALLBACK_COST = 1.0e6  # an unsafe candidate taken only where nothing else is allowed


@dataclass
class IdlePlan:
    """Pilot jet (a :class:`JetPlan`) and screw per row: ``screw_now``, ``screw_new`` [turns out],
    ``unsafe`` (nothing met the lean guard), ``delivered`` the idle circuit's area factor [1]."""

    pilot: JetPlan
    screw_now: np.ndarray
    screw_new: np.ndarray
    unsafe: np.ndarray
    delivered: np.ndarray


def _screw_positions(screws) -> np.ndarray:
    """(B, Q) candidate screw positions per bike [turns out], richest last, NaN-padded."""
    rows = []
    for ms in screws:
        lo, hi = ms.usable_range
        margin = (hi - lo) * (1.0 - SCREW_INNER_SHARE) / 2.0
        first = np.ceil((lo + margin) / _QUARTER - TURNS_NOISE) * _QUARTER
        inner = np.arange(first, hi - margin + TURNS_NOISE, _QUARTER)
        fitted = (
            [ms.turns] if lo - TURNS_NOISE <= ms.turns <= hi + TURNS_NOISE else []
        )  # outside its range: brought back
        positions = np.unique(np.round(np.append(inner, fitted), 4))
        rows.append(positions if ms.kind == "fuel" else positions[::-1])  # richest last
    width = max((len(r) for r in rows), default=1)
    out = np.full((len(rows), width), np.nan)
    for i, r in enumerate(rows):
        out[i, : len(r)] = r
    return out


def plan_idle(fleet, rows, settings, penalties) -> IdlePlan:
    """Choose pilot jet and screw position of every row (vectorised per pilot family)."""
    pilot = jet_ideals(fleet, rows, settings, "pilot_jet_family", "pilot_jet")
    n, s_count = len(rows.bike), rows.n_sessions
    screw_now = np.array([s.mixture_screw.turns for s in settings], float)
    screw_new = screw_now.copy()
    unsafe = np.zeros(n, bool)
    delivered_all = np.ones(n)
    for name in sorted(set(pilot.family.tolist())):
        r = np.flatnonzero(pilot.family == name)
        fam = fleet.jet_families[name]
        sizes = np.asarray(fam.sizes, float)
        b = len(r) // s_count
        first = r.reshape(b, s_count)[:, 0]
        fitted = pilot.index[first]  # (b,)
        offsets = np.arange(-PILOT_REACH, PILOT_REACH + 1)
        cand = fitted[:, None] + offsets[None, :]  # (b, P)
        exists = (cand >= 0) & (cand < len(sizes))
        cand_size = sizes[np.clip(cand, 0, len(sizes) - 1)]
        positions = _screw_positions([settings[i].mixture_screw for i in first])  # (b, Q)
        kinds = np.array([settings[i].mixture_screw.kind for i in first])
        pilot_factor = metering.area_factor_between_jets(pilot.current[first][:, None], cand_size, fam.coding)  # (b, P)
        screw_factor = circuits.mixture_screw_area_factor(
            positions - screw_now[first][:, None], kinds[:, None]
        )  # (b, Q)
        delivered = pilot_factor[:, :, None] * screw_factor[:, None, :]  # (b, P, Q)
        ok = exists[:, :, None] & np.isfinite(positions)[:, None, :]
        safe_value = np.where(ok, delivered, 1.0)
        per_row = np.repeat(safe_value, s_count, axis=0).reshape(len(r), -1)  # rows of a bike share candidates
        cost = rows.window.rms(per_row, r)
        lean = rows.window.leanest(per_row, r)
        cost = np.where(
            (lean <= LEAN_GUARD + GUARD_ROUND_OFF) & np.repeat(ok, s_count, axis=0).reshape(len(r), -1), cost, np.inf
        )
        # where nothing is safe in a session, the richest candidate that exists is taken (and flagged):
        # the largest pilot within reach with the screw at its richest position
        cost = cost.reshape(len(r), len(offsets), positions.shape[1])
        nothing = ~np.isfinite(cost).any(axis=(1, 2))
        if nothing.any():
            rich_p = len(offsets) - 1 - np.argmax(exists[:, ::-1], axis=1)  # (b,)
            rich_q = positions.shape[1] - 1 - np.argmax(np.isfinite(positions)[:, ::-1], axis=1)
            rows_b = np.repeat(np.arange(b), s_count)
            idx = np.flatnonzero(nothing)
            cost[idx, rich_p[rows_b[idx]], rich_q[rows_b[idx]]] = _FALLBACK_COST
        start_pilot = np.where(sizes[fitted] == pilot.current[first], PILOT_REACH, -1)  # fitted not a size: -1
        p_choice, q_choice, _ = idle_sequence(
            cost.reshape(b, s_count, len(offsets), positions.shape[1]),
            start_pilot,
            screw_now[first],
            positions,
            penalties["pilot_jet"],
            penalties["mixture_screw"],
        )
        bikes = np.repeat(np.arange(b), s_count)
        pc, qc = p_choice.ravel(), q_choice.ravel()
        pilot.index[r] = cand[bikes, pc]
        pilot.recommended[r] = cand_size[bikes, pc]
        screw_new[r] = positions[bikes, qc]
        unsafe[r] = nothing
        delivered_all[r] = delivered[bikes, pc, qc]
    pilot.unsafe = unsafe
    pilot.delivered = jet_factor(pilot)
    return IdlePlan(pilot, screw_now, screw_new, unsafe, delivered_all)
