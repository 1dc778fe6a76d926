"""``carbfleet history``: what each bike ran, where, in what air, and what was seen (a rich table)."""

from __future__ import annotations

from rich.table import Table

from tuning.display import N_, Display
from tuning.history.state import CIRCUITS, recommended_settings

__all__ = ["history_table"]

_SHORT = {"main_jet": N_("main"), "pilot_jet": N_("pilot"), "clip": N_("clip"), "mixture_screw_turns": N_("screw")}


def history_table(history, fleet_name: str | None, bike: str | None, d: Display) -> Table | None:
    """One row per bike and event (oldest first), or None when nothing is recorded for them."""
    _ = d._
    rows = history.outcomes(fleet_name=fleet_name, bike=bike)
    by_event: dict[tuple[str, str], list[dict]] = {}
    for r in rows:
        by_event.setdefault((r["fleet"], r["event_key"]), []).append(r)
    plans = {}
    for fleet, key in {(r["fleet"], r["event_key"]) for r in rows} | set(_planned_keys(history, fleet_name)):
        plans[(fleet, key)] = history.plan_for(key, fleet)
    lines = []
    for (fleet, key), plan in plans.items():
        bikes = sorted(
            {e["bike"] for e in plan["entries"]}
            if plan
            else set() | {r["bike"] for r in by_event.get((fleet, key), [])}
        )
        for b in bikes:
            if bike is not None and b != bike:
                continue
            seen = [r for r in by_event.get((fleet, key), []) if r["bike"] == b]
            lines.append((b, key, _row(b, key, plan, seen, d)))
    if not lines:
        return None
    table = Table(title=_("History"), show_lines=True)
    for title in (_("bike"), _("event"), _("air"), _("planned"), _("fitted"), _("seen")):
        table.add_column(title, overflow="fold")
    order = {key: i for i, key in enumerate(e["key"] for e in _all_events(history, fleet_name))}
    for _b, _key, cells in sorted(lines, key=lambda x: (x[0], order.get(x[1], 0))):
        table.add_row(*cells)
    return table


def _planned_keys(history, fleet_name):
    for fleet in [fleet_name] if fleet_name else history.fleets():
        for e in history.events_of(fleet):
            yield fleet, e["key"]


def _all_events(history, fleet_name):
    events = []
    for fleet in [fleet_name] if fleet_name else history.fleets():
        events += history.events_of(fleet)
    return sorted(events, key=lambda e: (e["last_day"], e["id"]))


def _row(bike, key, plan, seen, d: Display) -> tuple[str, ...]:
    _ = d._
    name, site, days = (key.split(" | ") + ["", ""])[:3]
    event = f"{name}\n{site}\n{days.replace('..', ' – ')}"
    entries = [e for e in plan["entries"] if e["bike"] == bike] if plan else []
    if entries:
        s = [e["summary"] for e in entries]
        air = "\n".join(
            [
                _("density altitude {span}").format(
                    span=d.elevation_span(
                        min(x["density_altitude_m_min"] for x in s), max(x["density_altitude_m_max"] for x in s)
                    )
                ),
                d.temperature_span(
                    min(x["air_temperature_C_min"] for x in s), max(x["air_temperature_C_max"] for x in s)
                ),
            ]
        )
        recommended = recommended_settings(plan)
        planned = _settings_text(
            {c: sorted({recommended[(bike, e["session"])][c] for e in entries}, key=_order) for _k, _v, c in CIRCUITS},
            d,
        )
    else:
        air, planned = "–", _("no plan recorded")
    fitted = {c: sorted({r[c] for r in seen if r[c] is not None}, key=_order) for _k, _v, c in CIRCUITS}
    fitted_text = _settings_text(fitted, d) if any(fitted.values()) else (_("as planned") if seen else "–")
    if any(r["returned_to_proven"] for r in seen):
        fitted_text += "\n" + _("returned to proven settings")
    return bike, event, air, planned, fitted_text, _seen_text(seen, d)


def _order(value):
    return (value is None, value if value is not None else 0)


def _settings_text(values: dict, d: Display) -> str:
    parts = []
    for column, found in values.items():
        shown = [
            d.number(v, 2).rstrip("0").rstrip(".,") if isinstance(v, float) else d.number(v)
            for v in found
            if v is not None
        ]
        if shown:
            parts.append(f"{d._(_SHORT[column])} {'/'.join(shown)}")
    return ", ".join(parts) or "–"


def _seen_text(seen: list[dict], d: Display) -> str:
    _ = d._
    lines = []
    plugs = {}
    for r in seen:
        if r["plug"]:
            plugs[r["plug"]] = plugs.get(r["plug"], 0) + 1
    if plugs:
        words = {"lean": N_("lean"), "ok": N_("ok"), "rich": N_("rich")}
        lines.append(_("plug: {plugs}").format(plugs=", ".join(f"{_(words[p])} {n}" for p, n in plugs.items())))
    afr = [r for r in seen if r["wideband_afr"] is not None]
    if afr:
        full = [r["wideband_afr"] for r in afr if r["throttle"] is not None and r["throttle"] >= 0.75]
        text = d.n_(
            "{count} wideband reading, air-fuel {low}–{high}",
            "{count} wideband readings, air-fuel {low}–{high}",
            len(afr),
        ).format(
            count=len(afr),
            low=d.number(min(r["wideband_afr"] for r in afr), 1),
            high=d.number(max(r["wideband_afr"] for r in afr), 1),
        )
        if full:
            text += "; " + _("¾ to full throttle: up to {afr}").format(afr=d.number(max(full), 1))
        lines.append(text)
    lines += [f"“{r['remark']}” ({r['session']})" for r in seen if r["remark"]]
    return "\n".join(lines) or "–"
