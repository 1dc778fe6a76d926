"""The fleet's jets as one pool: physical jets allocated to named bikes, none claimed twice.

Between two sessions (and before the first, and after the last when every bike goes back to
its proven settings) each bike whose jet changes gives up the jet it wore and needs another.
Jets given up are supply for the others. Each needed jet is taken, in the fleet's bike order,
from: the bike's own jet if it is back in the pool, a jet coming off another bike at the same
transition, the shelf, a jet that came off a bike earlier and was not used since, or else it is
to order. Jets ordered stay in the pool. So the number ordered of a size is the most bikes
running it in any one session less the jets of that size in the fleet and on the shelf.
Without a stock list the shelf is unknown: such jets come "from the shelf or to order".
"""

from __future__ import annotations

from collections import Counter, defaultdict, deque
from dataclasses import dataclass

__all__ = ["Move", "allocate", "pick_list", "KINDS"]

KINDS = ("main_jet", "pilot_jet")


@dataclass(frozen=True)
class Move:
    """One jet fitted to one bike at one transition, and where it comes from.

    ``source`` is ``own`` (the bike's own jet, kept), ``bike`` (coming off ``origin`` now),
    ``shelf``, ``spare`` (came off ``origin`` earlier), ``order`` or ``shelf-or-order`` (no
    stock list kept).
    """

    transition: int
    bike: int
    kind: str
    family: str
    old: float
    new: float
    source: str
    origin: str | None = None
    waits: bool = False  # the origin bike's own new jet is to order: this jet comes off when that one is in


def allocate(bike_ids, fitted, plan, stock):
    """Allocate jets over the transitions.

    Parameters
    ----------
    bike_ids : list of str
    fitted : list of dict
        Per bike, ``kind -> (family, size)`` of the proven settings.
    plan : list of list of dict
        Per bike, per session, ``kind -> (family, size)`` to fit.
    stock : mapping or None
        ``(family, size) -> count`` on the shelf; None when the fleet keeps no stock list.

    Returns
    -------
    moves : list of list of Move
        Per transition (0 = before the first session, S = back to the proven settings).
    ordered : collections.Counter
        Jets to order per (family, size).
    """
    n_sessions = len(plan[0]) if plan else 0
    targets = [[plan[b][s] for b in range(len(bike_ids))] for s in range(n_sessions)] + [list(fitted)]
    state = [dict(f) for f in fitted]
    shelf = Counter(stock) if stock is not None else None
    spare: dict[tuple, deque] = defaultdict(deque)
    ordered: Counter = Counter()
    moves_by_transition = []
    for t, target in enumerate(targets):
        changes = [(b, kind) for b in range(len(bike_ids)) for kind in KINDS if state[b][kind] != target[b][kind]]
        coming_off: dict[tuple, deque] = defaultdict(deque)
        for b, kind in changes:
            coming_off[state[b][kind]].append(bike_ids[b])
        moves = []
        for b, kind in changes:
            key = target[b][kind]
            source, origin = _take(key, bike_ids[b], coming_off, shelf, spare)
            if source == "order":
                ordered[key] += 1
            moves.append(Move(t, b, kind, key[0], state[b][kind][1], key[1], source, origin))
        awaiting = {(bike_ids[m.bike], m.kind) for m in moves if m.source in ("order", "shelf-or-order")}
        moves = [
            Move(
                m.transition,
                m.bike,
                m.kind,
                m.family,
                m.old,
                m.new,
                m.source,
                m.origin,
                waits=m.source in ("bike", "spare") and (m.origin, m.kind) in awaiting,
            )
            for m in moves
        ]
        for key, origins in coming_off.items():
            spare[key].extend(origins)  # not used at this transition: back in the pool
        for b, kind in changes:
            state[b][kind] = target[b][kind]
        moves_by_transition.append(moves)
    return moves_by_transition, ordered


def _take(key, bike, coming_off, shelf, spare):
    """Where the next jet of ``key`` for ``bike`` comes from: (source, origin bike or None)."""
    if bike in spare[key]:
        spare[key].remove(bike)
        return "own", bike
    if coming_off[key]:
        return "bike", coming_off[key].popleft()
    if shelf is not None and shelf[key] > 0:
        shelf[key] -= 1
        return "shelf", None
    if spare[key]:
        return "spare", spare[key].popleft()
    return ("order" if shelf is not None else "shelf-or-order"), None


def pick_list(fitted, plan, stock):
    """One row per (family, size) any bike fits or gives up.

    ``fitted_now`` jets of that size in the bikes before the event, ``in_stock`` on the shelf
    (None without a stock list), ``needed`` the most bikes running it in any one session,
    ``to_order`` = max(0, needed - fitted_now - in_stock) (None without a stock list).
    """
    fitted_now = Counter(f[kind] for f in fitted for kind in KINDS)
    keys = set()
    for b, per_session in enumerate(plan):
        for chosen in per_session:
            for kind in KINDS:
                if chosen[kind] != fitted[b][kind]:
                    keys.add(chosen[kind])
                    keys.add(fitted[b][kind])
    n_sessions = len(plan[0]) if plan else 0
    usage = [Counter(per[s][kind] for per in plan for kind in KINDS) for s in range(n_sessions)]
    rows = []
    for key in keys:
        needed = max((u[key] for u in usage), default=0)
        in_stock = None if stock is None else int(stock.get(key, 0))
        to_order = None if stock is None else max(0, needed - fitted_now[key] - in_stock)
        rows.append(
            {
                "family": key[0],
                "size": key[1],
                "fitted_now": fitted_now[key],
                "in_stock": in_stock,
                "needed": needed,
                "to_order": to_order,
            }
        )
    rows.sort(key=lambda p: (0 if (p["to_order"] or 0) > 0 else 1, p["family"], float(p["size"])))
    return rows
