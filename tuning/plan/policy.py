"""The change policy: one setting per bike for the event unless a change is worth its work.

For each bike and circuit the settings of the sessions are chosen together, by dynamic
programming over the sessions in order: the total of the sessions' costs (lean-weighted RMS
mixture deviation, :mod:`tuning.plan.window`) plus a penalty for every change, the first
one (from the proven setting, before the first session) included. A change is made only where
it lowers the costs of the sessions it serves by more than its penalty, so a bike goes back and
forth (A→B→A) only when each step pays for itself. The penalty of a kind of change is the
change threshold (a mixture fraction, :data:`DEFAULT_CHANGE_THRESHOLD`, about one main-jet step)
scaled by the work it takes against a main-jet change (:data:`WORK_MINUTES`). Unsafe candidates
(leaner than the lean guard in some hour) cost infinity and are never chosen while a safe one
exists; where none exists the richest is taken and the plan warns.

The ``session`` policy (race teams) sets every penalty to zero: the best setting per session.
"""

from __future__ import annotations

import numpy as np

from tuning.config.model import CHANGE_POLICIES

__all__ = [
    "POLICIES",
    "DEFAULT_POLICY",
    "DEFAULT_CHANGE_THRESHOLD",
    "WORK_MINUTES",
    "SCREW_MIN_MOVE",
    "penalties",
    "flat_sequence",
    "idle_sequence",
]

POLICIES = CHANGE_POLICIES  #: ``event``: few changes (default); ``session``: best per session
DEFAULT_POLICY = "event"
#: A change between sessions must lower the mixture deviation it serves by more than this
#: fraction, scaled by its work (our choice: about one main-jet step, 2.5 on a 170 diameter-coded
#: jet is 2.9 % of area).
DEFAULT_CHANGE_THRESHOLD = 0.03
#: Workshop minutes per change in the pits (FROM MEMORY, not measured; a mechanic's rough
#: figures, added up when several changes fall together): the mixture screw (turn it, warm
#: idle check), the needle clip (slide out), a main jet (float bowl or bowl plug off), a pilot
#: jet (float bowl off, deeper in the body).
WORK_MINUTES = {"mixture_screw": 5, "clip": 15, "main_jet": 10, "pilot_jet": 15}
SCREW_MIN_MOVE = 0.5  #: smallest planned screw move [turns]; quarter-turn fiddling is not planned
#: Screw positions closer than this are the same position [turns]: float noise, not a move.
TURNS_NOISE = 1e-9
_BIG = 1.0e6  # cost standing in for "unsafe, but nothing else"


def penalties(policy: str, threshold: float) -> dict[str, float]:
    """Penalty [1] of each kind of change under ``policy`` (0 for the ``session`` policy)."""
    if policy not in POLICIES:
        raise ValueError(f"change policy must be one of {POLICIES}, got {policy!r}")
    if policy == "session":
        return dict.fromkeys(WORK_MINUTES, 0.0)
    main = WORK_MINUTES["main_jet"]
    return {kind: threshold * minutes / main for kind, minutes in WORK_MINUTES.items()}


def _safe_fallback(cost):
    """Where a row has no finite cost, give its richest (last) candidate a large finite one."""
    cost = np.array(cost, float)
    none = ~np.isfinite(cost).any(axis=-1)
    last = cost[..., -1]
    cost[..., -1] = np.where(none, _BIG, last)
    return cost, none


def flat_sequence(cost, start, penalty):
    """Choose one candidate per session for each bike, with a flat penalty per change.

    Parameters
    ----------
    cost : numpy.ndarray, shape (B, S, C)
        Cost of each candidate in each session [1]; ``inf`` = not allowed (unsafe or absent).
        Candidates are ordered from leanest to richest.
    start : numpy.ndarray of int, shape (B,)
        The fitted candidate before the event (-1 when the fitted setting is not a candidate).
    penalty : float
        Cost of one change [1].

    Returns
    -------
    choice : numpy.ndarray of int, shape (B, S)
    unsafe : numpy.ndarray of bool, shape (B, S)
        Sessions in which no candidate was allowed (the richest was taken).
    """
    cost, unsafe = _safe_fallback(cost)
    b, s_count, c_count = cost.shape
    cand = np.arange(c_count)
    rows = np.arange(b)
    value = cost[:, 0, :] + np.where(cand[None, :] == start[:, None], 0.0, penalty)
    came_from = np.zeros((b, s_count, c_count), np.int64)
    for s in range(1, s_count):
        best = _richest_argmin(value)
        switch = value[rows, best] + penalty
        stay = value <= switch[:, None]
        came_from[:, s, :] = np.where(stay, cand[None, :], best[:, None])
        value = cost[:, s, :] + np.minimum(value, switch[:, None])
    choice = np.zeros((b, s_count), np.int64)
    choice[:, -1] = _richest_argmin(value)
    for s in range(s_count - 1, 0, -1):
        choice[:, s - 1] = came_from[rows, s, choice[:, s]]
    return choice, unsafe


def _unstuck(value, fallback):
    """Where a bike has no finite value (the moves allowed reach no allowed state: the only
    candidate left is a fallback the screw rule forbids), take ``fallback`` instead."""
    stuck = ~np.isfinite(value).reshape(value.shape[0], -1).any(axis=1)
    if stuck.any():
        value = np.where(stuck[:, None, None], fallback + _BIG, value)
    return value


def _richest_argmin(value):
    """Argmin along the last axis; exact ties go to the richer (later) candidate."""
    k = value.shape[-1]
    return k - 1 - np.argmin(value[..., ::-1], axis=-1)


def idle_sequence(cost, start_pilot, start_turns, screw_positions, pilot_penalty, screw_penalty):
    """Choose (pilot size, screw position) per session for each bike.

    Parameters
    ----------
    cost : numpy.ndarray, shape (B, S, P, Q)
        Cost of each pilot candidate ``p`` with screw position ``q`` [1]; ``inf`` not allowed.
        Candidates are ordered so that the flat index ``p * Q + q`` runs lean to rich only
        within a pilot; the fallback takes the richest pilot at its richest allowed screw.
    start_pilot : numpy.ndarray of int, shape (B,)
        Index of the fitted pilot among the candidates (-1 where it is not one).
    start_turns : numpy.ndarray, shape (B,)
        The fitted screw position [turns out] (not always a candidate: outside the usable
        range it must move).
    screw_positions : numpy.ndarray, shape (B, Q)
        Screw positions [turns out] (NaN where a bike has fewer).
    pilot_penalty, screw_penalty : float

    Returns
    -------
    pilot, screw : numpy.ndarray of int, shape (B, S)
    unsafe : numpy.ndarray of bool, shape (B, S)

    Notes
    -----
    A screw move is either none or at least :data:`SCREW_MIN_MOVE` turns. The transition cost
    is separable (pilot change, screw change), so each step costs O(P·Q²) per bike.
    """
    b, s_count, p_count, q_count = cost.shape
    flat, unsafe = _safe_fallback(cost.reshape(b, s_count, p_count * q_count))
    cost = flat.reshape(b, s_count, p_count, q_count)
    pos = np.asarray(screw_positions, float)
    movable = _screw_moves(pos)
    value = _unstuck(
        cost[:, 0] + _first_change_cost(p_count, start_pilot, start_turns, pos, pilot_penalty, screw_penalty),
        cost[:, 0],
    )
    from_p = np.zeros((b, s_count, p_count, q_count), np.int64)
    from_q = np.zeros((b, s_count, p_count, q_count), np.int64)
    for s in range(1, s_count):
        best, from_p[:, s], from_q[:, s] = _idle_transition(value, movable, pilot_penalty, screw_penalty)
        new = cost[:, s] + best
        stuck = ~np.isfinite(new).reshape(b, -1).any(axis=1)
        if stuck.any():  # no allowed move reaches an allowed state: come from the best previous state
            prev = np.argmin(value.reshape(b, -1), axis=1)
            from_p[stuck, s], from_q[stuck, s] = (x[stuck, None, None] for x in np.divmod(prev, q_count))
        value = _unstuck(
            new,
            cost[:, s] + np.nanmin(np.where(np.isfinite(value), value, np.inf).reshape(b, -1), axis=1)[:, None, None],
        )
    pilot, screw = _idle_trace_back(value, from_p, from_q)
    return pilot, screw, unsafe


def _screw_moves(pos):
    """(B, Q, Q): whether the screw may go to position q from q' (no move, or at least
    :data:`SCREW_MIN_MOVE` turns between positions that exist)."""
    q_count = pos.shape[1]
    gap = np.abs(pos[:, :, None] - pos[:, None, :])  # (B, Q, Q): to q from q'
    movable = (gap >= SCREW_MIN_MOVE - TURNS_NOISE) | np.eye(q_count, dtype=bool)[None]
    movable &= np.isfinite(gap)
    return movable


def _first_change_cost(p_count, start_pilot, start_turns, pos, pilot_penalty, screw_penalty):
    """(B, P, Q): the penalty of going into the first session from the fitted state (``start_pilot``
    -1: the fitted pilot is not a candidate); ``inf`` where the screw would move less than
    :data:`SCREW_MIN_MOVE`."""
    pilot_change = np.arange(p_count)[None, :] != start_pilot[:, None]  # (B, P)
    moved = np.abs(pos - np.asarray(start_turns, float)[:, None])  # (B, Q)
    screw_change = moved > TURNS_NOISE
    screw_ok = ~screw_change | (moved >= SCREW_MIN_MOVE - TURNS_NOISE)
    return (
        pilot_penalty * pilot_change[:, :, None]
        + screw_penalty * screw_change[:, None, :]
        + np.where(screw_ok, 0.0, np.inf)[:, None, :]
    )


def _idle_transition(value, movable, pilot_penalty, screw_penalty):
    """Best previous state for each (p, q) of a session: (cost, previous p, previous q), each (B, P, Q).
    A step keeps both, moves the screw only, changes the pilot only, or both; staying wins ties."""
    b, p_count, q_count = value.shape
    rows = np.arange(b)
    # screw only (same pilot): min over q' with an allowed move
    masked = np.where(movable[:, None, :, :], value[:, :, None, :], np.inf)  # (B, P, Q, Q')
    same_q_eye = np.eye(q_count, dtype=bool)[None, None]
    screw_only = np.where(same_q_eye, np.inf, masked)
    sq_arg = np.argmin(screw_only, axis=-1)  # (B, P, Q)
    sq_val = np.take_along_axis(screw_only, sq_arg[..., None], axis=-1)[..., 0] + screw_penalty
    # pilot only (same screw position)
    pj_arg = np.argmin(value, axis=1)  # (B, Q)
    pj_val = np.take_along_axis(value, pj_arg[:, None, :], axis=1)[:, 0, :] + pilot_penalty  # (B, Q)
    # both: best over pilots first, then over allowed screw moves
    both = np.where(movable & ~np.eye(q_count, dtype=bool)[None], pj_val[:, None, :] - pilot_penalty, np.inf)
    bq_arg = np.argmin(both, axis=-1)  # (B, Q)
    bq_val = np.take_along_axis(both, bq_arg[..., None], axis=-1)[..., 0] + pilot_penalty + screw_penalty
    options = np.stack(
        [
            value,
            sq_val,
            np.broadcast_to(pj_val[:, None, :], value.shape),
            np.broadcast_to(bq_val[:, None, :], value.shape),
        ]
    )  # (4, B, P, Q)
    which = np.argmin(options, axis=0)  # stay wins ties: fewer changes
    best = np.take_along_axis(options, which[None], axis=0)[0]
    p_idx = np.broadcast_to(np.arange(p_count)[None, :, None], value.shape)
    q_idx = np.broadcast_to(np.arange(q_count)[None, None, :], value.shape)
    prev_p = np.select(
        [which == 0, which == 1, which == 2],
        [p_idx, p_idx, np.broadcast_to(pj_arg[:, None, :], value.shape)],
        np.broadcast_to(pj_arg[rows[:, None], bq_arg][:, None, :], value.shape),
    )
    prev_q = np.select(
        [which == 0, which == 1, which == 2], [q_idx, sq_arg, q_idx], np.broadcast_to(bq_arg[:, None, :], value.shape)
    )
    return best, prev_p, prev_q


def _idle_trace_back(value, from_p, from_q):
    """(pilot, screw) per bike and session, each (B, S): the best last state and the way back to it."""
    b, s_count, _p_count, q_count = from_p.shape
    rows = np.arange(b)
    pilot = np.zeros((b, s_count), np.int64)
    screw = np.zeros((b, s_count), np.int64)
    last = _richest_argmin(value.reshape(b, -1))
    pilot[:, -1], screw[:, -1] = np.divmod(last, q_count)
    for s in range(s_count - 1, 0, -1):
        p, q = pilot[:, s], screw[:, s]
        pilot[:, s - 1] = from_p[rows, s, p, q]
        screw[:, s - 1] = from_q[rows, s, p, q]
    return pilot, screw
