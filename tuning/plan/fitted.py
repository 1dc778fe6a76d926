"""A plan that starts from the settings a bike still wears from an earlier event.

The metering law is always applied to a bike's *proven* settings at its reference conditions:
that is what the fleet file records and what the required area factor is measured against. A
bike that was not returned after an event wears other jets, but they were never proven anywhere,
so treating them as the base of the law would be wrong, and wrong in the dangerous direction:
jets fitted for a high site, taken as proven at home, would be kept for the next low event
(lean). So the plan is made on the proven settings as always, and :func:`start_from_fitted` then
changes only where it starts: every setting's ``current`` becomes the fitted one, with the steps,
the words, the first work order and the lean warnings of the fitted jets said again, and the
bike gets the ``fitted-not-proven`` notice. What is recommended does not change.

Known limit: the jet pool and the pick list still count from the proven jets (a fitted jet that
must change is not counted as a jet coming off the bike).
"""

from __future__ import annotations

import copy

import numpy as np

from tuning.plan.document import _jet_words, _quarters, jet_number, work_change
from tuning.plan.notices import printed, said, warning
from tuning.plan.pool import KINDS
from tuning.plan.window import LEAN_GUARD

__all__ = ["start_from_fitted"]

_JETS = KINDS


def start_from_fitted(plan: dict, fleet, fitted: dict) -> dict:
    """The plan document started from fitted settings (a new document; ``plan`` is not changed).

    Parameters
    ----------
    plan : dict
        A plan document made on the proven settings (``make_plan``).
    fleet : tuning.config.model.Fleet
        The fleet it was made for (jet families, screw kinds).
    fitted : dict
        Bike id -> an object with ``event`` (name), ``main_jet``, ``pilot_jet``, ``clip`` and
        ``mixture_screw_turns`` (None: as proven), e.g. :class:`tuning.history.Fitted`.
    """
    if not fitted:
        return plan
    plan = copy.deepcopy(plan)
    bikes = {b.id: b for b in fleet.bikes}
    for bike_id, f in fitted.items():
        bike = bikes.get(bike_id)
        entries = [e for e in plan["entries"] if e["bike"] == bike_id]
        if bike is None or not entries:
            continue
        now = _fitted_values(bike, f)
        lean = {
            kind: _fitted_lean(entries, _delivered(entries[0]["settings"][kind], bike, kind, now[kind]))
            for kind in _JETS
        }
        for e in entries:
            for kind in _JETS:
                _rebase_jet(e["settings"][kind], now[kind], fleet.jet_families[e["settings"][kind]["family"]].sizes)
            _rebase_clip(e["settings"]["clip"], now["clip"])
            _rebase_screw(e["settings"]["mixture_screw"], now["mixture_screw"])
            e["warnings"] = _rewarn(e["warnings"], now, lean)
        _rebase_first_order(plan, bike_id, entries[0], now, bike.settings.mixture_screw.kind)
        for b in plan["bikes"]:
            if b["bike"] == bike_id:
                b["notices"].append(warning("fitted-not-proven", params={"event": f.event}))
                b["danger"] = any(w["severity"] == "danger" for e in entries for w in e["warnings"])
    plan["warnings_count"] = sum(len(e["warnings"]) for e in plan["entries"]) + sum(
        len(b["notices"]) for b in plan["bikes"]
    )
    return plan


def _fitted_values(bike, f) -> dict:
    s = bike.settings
    return {
        "main_jet": s.main_jet if f.main_jet is None else float(f.main_jet),
        "pilot_jet": s.pilot_jet if f.pilot_jet is None else float(f.pilot_jet),
        "clip": s.clip if f.clip is None else int(f.clip),
        "mixture_screw": s.mixture_screw.turns if f.mixture_screw_turns is None else float(f.mixture_screw_turns),
    }


def _delivered(setting: dict, bike, kind: str, value: float) -> float:
    """Area factor [1] the fitted jet delivers against the proven one (diameter coding: squared)."""
    ratio = float(value) / float(getattr(bike.settings, kind))
    return ratio * ratio if setting["coding"] == "diameter" else ratio


def _fitted_lean(entries, delivered: float) -> float:
    """The fitted jet's leanest deviation [1] over every hour of the bike's sessions."""
    required = [h["area_factor"] for e in entries for h in e["hours"] if h.get("area_factor") is not None]
    return float(np.max(required)) / delivered - 1.0 if required else 0.0


def _rebase_jet(s: dict, value: float, sizes) -> None:
    cur, rec = jet_number(value), s["recommended"]
    sizes = np.asarray(sizes, float)
    if rec > cur:
        steps = int(np.searchsorted(sizes, rec, "right") - np.searchsorted(sizes, cur, "right"))
    elif rec < cur:
        steps = int(np.searchsorted(sizes, rec, "left") - np.searchsorted(sizes, cur, "left"))
    else:
        steps = 0
    direction, change_id, params = _jet_words(steps)
    s.update({"current": cur, "steps": steps, "direction": direction, **said(change_id, params, key="change")})


def _rebase_clip(s: dict, groove) -> None:
    if s.get("grooves") is None or groove is None:  # no needle on record: the clip is not planned
        return
    d = int(s["recommended"]) - int(groove)
    if d == 0:
        direction, change = "no change", said("setting/no-change", key="change")
    else:
        direction = "richer" if d > 0 else "leaner"
        change = said(
            "setting/clip-lower" if d > 0 else "setting/clip-higher",
            {"count": abs(d), "from": int(groove), "to": int(s["recommended"])},
            key="change",
        )
    s.update({"current": int(groove), "steps": d, "direction": direction, **change})


def _rebase_screw(s: dict, turns: float) -> None:
    ch = round(float(s["recommended_turns"]) - float(turns), 2)
    if abs(ch) < 1e-9:
        direction, change = "no change", said("setting/no-change", key="change")
    else:
        direction = "richer" if (ch > 0) == (s["kind"] == "fuel") else "leaner"
        change = said(
            "setting/screw-out" if ch > 0 else "setting/screw-in",
            {"screw": s["kind"], "by_quarter_turns": _quarters(ch), "direction": direction},
            key="change",
        )
    s.update({"current_turns": round(float(turns), 2), "change_turns": ch, "direction": direction, **change})


def _rewarn(warnings: list[dict], now: dict, lean: dict) -> list[dict]:
    """The jets' warnings said of the fitted jet: its size, how lean it runs here; a shortage whose
    fitted jet is not safe any more becomes ``no-safe-jet``."""
    out = []
    for w in warnings:
        kind = w.get("params", {}).get("part")
        if kind in _JETS and "fitted" in w["params"]:
            params = {**w["params"], "fitted": str(jet_number(now[kind]))}
            if w["code"] == "stock-shortage" and lean[kind] > LEAN_GUARD:
                w = warning(
                    "no-safe-jet", "no-safe-jet/order", {**params, "lean_pct": printed(lean[kind] * 100, ".0f")}
                )
            elif w["code"] == "no-safe-jet":
                w = warning("no-safe-jet", w["id"], {**params, "lean_pct": printed(lean[kind] * 100, ".0f")})
            else:
                w = warning(w["code"], w["id"], params)
        out.append(w)
    return out


def _rebase_first_order(plan, bike_id, first, now, screw_kind) -> None:
    """The work before the first session: from the fitted settings to the first session's."""
    if not plan["work_orders"]:
        return
    order = plan["work_orders"][0]
    kept = [b for b in order["bikes"] if b["bike"] == bike_id]
    sources = {c["part"]: c.get("source") for b in kept for c in b["changes"]}
    changes = []
    for part in ("main_jet", "pilot_jet", "clip", "mixture_screw"):
        s = first["settings"][part]
        new = s["recommended_turns"] if part == "mixture_screw" else s["recommended"]
        old = now[part]
        if old is None or new is None or (part == "clip" and s.get("grooves") is None):
            continue
        if abs(float(new) - float(old)) < 1e-9:
            continue
        source = sources.get(part) or (s.get("source") if part in _JETS else None)
        if source is not None and source.get("kind") == "fitted":  # the proven size: where it is, nobody recorded
            source = None
        changes.append(work_change(part, old, new, source, screw_kind))
    order["bikes"] = [b for b in order["bikes"] if b["bike"] != bike_id]
    if changes:
        at = next((i for i, b in enumerate(plan["bikes"]) if b["bike"] == bike_id), len(order["bikes"]))
        ids = [b["bike"] for b in plan["bikes"]]
        order["bikes"].append({"bike": bike_id, "minutes": sum(c["minutes"] for c in changes), "changes": changes})
        order["bikes"].sort(key=lambda b: ids.index(b["bike"]) if b["bike"] in ids else at)
    order["minutes"] = sum(b["minutes"] for b in order["bikes"])
