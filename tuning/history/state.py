"""What the history says about the fleet now: settings still fitted, and what changed between plans.

:func:`fitted_state` reads, per bike, the latest event with outcomes: unless a row says the bike
was returned to its proven settings, the bike still wears that event's settings, which are the
latest plan's recommendation for the last session it rode there, with every setting an outcome
row says was fitted instead. A plan without outcome rows says nothing (nobody said it was fitted).

:func:`plan_changes` compares two plan documents of the same event (the morning-of re-run).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from tuning.history.outcomes import AFTER

__all__ = ["CIRCUITS", "Fitted", "fitted_settings", "fitted_state", "plan_changes", "recommended_settings"]

#: The settings compared between plans and kept as fleet state: (plan document key, value key,
#: outcome column).
CIRCUITS = (
    ("main_jet", "recommended", "main_jet"),
    ("pilot_jet", "recommended", "pilot_jet"),
    ("clip", "recommended", "clip"),
    ("mixture_screw", "recommended_turns", "mixture_screw_turns"),
)


@dataclass(frozen=True)
class Fitted:
    """The settings a bike still wears from an event (None where neither plan nor outcome says)."""

    bike: str
    event_key: str
    event: str
    main_jet: float | None
    pilot_jet: float | None
    clip: int | None
    mixture_screw_turns: float | None


def recommended_settings(plan: dict) -> dict[tuple[str, str], dict[str, float | int | None]]:
    """(bike, session) -> the plan's recommended value of each setting, keyed by outcome column."""
    return {
        (e["bike"], e["session"]): {column: e["settings"][key][value] for key, value, column in CIRCUITS}
        for e in plan["entries"]
    }


def fitted_state(history, fleet) -> dict[str, Fitted]:
    """Bike id -> what it still wears from its latest event, for the bikes of ``fleet`` not
    returned to their proven settings (see the module's text)."""
    rows = history.outcomes(fleet_name=fleet.name)
    latest: dict[str, str] = {}
    for row in rows:  # oldest event first: the last one seen is the latest
        latest[row["bike"]] = row["event_key"]
    plans: dict[str, dict | None] = {}
    state = {}
    for bike in fleet.bikes:
        key = latest.get(bike.id)
        if key is None:
            continue
        mine = [r for r in rows if r["bike"] == bike.id and r["event_key"] == key]
        if any(r["returned_to_proven"] for r in mine):
            continue
        if key not in plans:
            plans[key] = history.plan_ridden(key, fleet.name)  # not a re-plan made after the readings
        values = _planned(plans[key], bike.id, mine)
        order = _session_order(plans[key])
        for r in sorted(mine, key=lambda r: order.get(r["session"], len(order))):
            values.update({c: r[c] for _k, _v, c in CIRCUITS if r[c] is not None})
        if any(v is not None for v in values.values()):
            state[bike.id] = Fitted(bike.id, key, key.split(" | ")[0], **{c: values.get(c) for _k, _v, c in CIRCUITS})
    return state


def _session_order(plan) -> dict[str, int]:
    order = {s["name"]: i for i, s in enumerate(plan["sessions"])} if plan else {}
    order[AFTER] = len(order)
    return order


def _planned(plan, bike, rows) -> dict:
    """The plan's recommendation for the last session of the event that ``rows`` name (the last
    session of the plan where they name none)."""
    if plan is None:
        return {}
    recommended = recommended_settings(plan)
    sessions = [s["name"] for s in plan["sessions"] if (bike, s["name"]) in recommended]
    ridden = [s for s in sessions if any(r["session"] == s for r in rows)] or sessions
    return dict(recommended[(bike, ridden[-1])]) if ridden else {}


def fitted_settings(fleet, state: dict[str, Fitted]) -> dict:
    """Bike id -> its :class:`~tuning.config.model.Settings` with the fitted values of ``state``."""
    out = {}
    for bike in fleet.bikes:
        f = state.get(bike.id)
        if f is None:
            continue
        s = bike.settings
        screw = (
            s.mixture_screw
            if f.mixture_screw_turns is None
            else replace(s.mixture_screw, turns=float(f.mixture_screw_turns))
        )
        out[bike.id] = replace(
            s,
            main_jet=s.main_jet if f.main_jet is None else float(f.main_jet),
            pilot_jet=s.pilot_jet if f.pilot_jet is None else float(f.pilot_jet),
            clip=s.clip if f.clip is None or s.clip is None else int(f.clip),
            mixture_screw=screw,
        )
    return out


def plan_changes(before: dict, after: dict) -> dict[str, list[tuple[str, str, object, object]]]:
    """Bike -> [(setting, session, before, after)] for every recommendation that differs between
    two plans of the same event, bikes and sessions present in both; bikes in plan order."""
    old, new = recommended_settings(before), recommended_settings(after)
    changed: dict[str, list] = {}
    for (bike, session), values in new.items():
        was = old.get((bike, session))
        if was is None:
            continue
        for key, _v, column in CIRCUITS:
            if values[column] != was[column]:
                changed.setdefault(bike, []).append((key, session, was[column], values[column]))
    return changed
