"""Turn the plan document into rows for the sheet and summary templates: formatting only."""

from __future__ import annotations

import datetime as dt
from collections import OrderedDict

from tuning.air import ICING_RISK_NAMES

CIRCUITS = (
    ("main_jet", "Main jet"),
    ("pilot_jet", "Pilot jet"),
    ("clip", "Needle clip"),
    ("mixture_screw", "Mixture screw"),
)
_DAYS = ("Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun")
_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
_QUARTERS = {0: "", 1: "¼", 2: "½", 3: "¾"}

#: What the sheets, the summary and ``carbfleet plan`` say where a fleet keeps no stock list.
NO_STOCK_LIST = "no stock list kept"


def number(value, digits: int = 0, unit: str = "", signed: bool = False) -> str:
    """Format a number for print with ``digits`` decimals; ``None`` shows as an en dash."""
    if value is None:
        return "–"
    text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"
    text = text.replace("-", "−")
    return f"{text} {unit}".rstrip() if unit else text


def turns(value) -> str:
    """Format mixture-screw turns in quarters where exact (1.5 -> "1½"), else with 2 decimals."""
    if value is None:
        return "–"
    quarters = round(abs(value) * 4)
    if abs(abs(value) * 4 - quarters) < 1e-6:
        whole, part = divmod(quarters, 4)
        text = (str(whole) if whole or not part else "") + _QUARTERS[part]
        return ("−" if value < 0 else "") + text
    return number(value, 2)


def clock(iso: str) -> str:
    """``2026-06-13T08:00:00+01:00`` -> ``08:00`` (site local time, as the plan gives it)."""
    return dt.datetime.fromisoformat(iso).strftime("%H:%M")


def day(iso: str) -> str:
    """``2026-06-13T08:00:00+01:00`` -> ``Sat 13 Jun 2026`` (no locale dependence)."""
    t = dt.datetime.fromisoformat(iso)
    return f"{_DAYS[t.weekday()]} {t.day} {_MONTHS[t.month - 1]} {t.year}"


def window(start: str, end: str) -> str:
    """A session window for print: ``Sat 13 Jun 2026 08:00–09:30``."""
    a, b = dt.datetime.fromisoformat(start), dt.datetime.fromisoformat(end)
    if a.date() == b.date():
        return f"{day(start)[:-5]} {clock(start)}–{clock(end)}"
    return f"{day(start)} {clock(start)} – {day(end)} {clock(end)}"


def entries_by_bike(plan: dict) -> "OrderedDict[str, list[dict]]":
    """Group the plan's entries by bike, keeping the fleet file's bike order and session order."""
    grouped: OrderedDict[str, list[dict]] = OrderedDict()
    for entry in plan["entries"]:
        grouped.setdefault(entry["bike"], []).append(entry)
    return grouped


def stock_kept(plan: dict) -> bool:
    """Whether the fleet keeps a stock list (``stock:`` with at least one entry).

    Without one the plan gives ``in_stock`` as null for every jet of every entry and in the pick
    list; with one, every entry's ``in_stock`` is true or false.
    """
    return any(e["settings"][key].get("in_stock") is not None
               for e in plan["entries"] for key in ("main_jet", "pilot_jet"))


def _text(value) -> str:
    """A plan value for print; ``None`` (not on record) shows as an en dash."""
    return "–" if value is None else f"{value}"


def _circuit_value(key: str, s: dict, which: str, unit: bool = True) -> str:
    """A circuit's ``which`` ("current" or "recommended") setting for print."""
    if key == "clip":
        return f"groove {_text(s[which])}" if unit else _text(s[which])
    if key == "mixture_screw":
        return f"{turns(s[which + '_turns'])} turns out" if unit else turns(s[which + "_turns"])
    return _text(s[which])


def _stock_text(key: str, s: dict) -> str:
    if key not in ("main_jet", "pilot_jet"):
        return ""
    if s.get("steps", 0) == 0:
        return ""
    if s.get("in_stock") is None:
        return f"take {s['recommended']} ({NO_STOCK_LIST})"
    if s["in_stock"]:
        return f"take {s['recommended']} from stock"
    if s.get("stock_choice") is not None:
        return f"NOT IN STOCK (shelf: {s['stock_choice']})"
    return "NOT IN STOCK: order"


def _changed(key: str, s: dict) -> bool:
    if key == "mixture_screw":
        return bool(s.get("change_turns"))
    return bool(s.get("steps"))


def sheet_rows(entries: list[dict]) -> dict:
    """Everything one bike's setup sheet shows, formatted, from that bike's plan entries."""
    first = entries[0]
    sessions = []
    for e in entries:
        sm = e["summary"]
        sessions.append({
            "name": e["session"], "window": window(e["start"], e["end"]),
            "air_temperature": f"{number(sm['air_temperature_C_min'], 0)}…{number(sm['air_temperature_C_max'], 0)} °C",
            "station_pressure": number(sm["station_pressure_hPa_mean"], 0, "hPa"),
            "relative_humidity": number(sm["relative_humidity_pct_mean"], 0, "%"),
            "density_altitude": f"{number(sm['density_altitude_m_min'], 0)}…{number(sm['density_altitude_m_max'], 0)} m",
            "area_factor": f"{number(sm['area_factor_min'], 3)}…{number(sm['area_factor_max'], 3)}",
            "area_factor_mean": number(sm["area_factor_mean"], 3),
            "power": number(e["power_vs_reference_pct"], 0, "%"),
        })
    circuits = []
    for key, label in CIRCUITS:
        s0 = first["settings"][key]
        title, detail = label, ""
        if key in ("main_jet", "pilot_jet"):
            detail = f"family {s0['family']}"
        elif key == "clip":
            title = "Needle clip groove"
            detail = (f"needle {_text(s0.get('needle'))}, {s0['grooves']} grooves, 1 = top" if s0.get("grooves")
                      else f"needle {_text(s0.get('needle'))}, grooves not on record")
        elif key == "mixture_screw":
            title = f"{'Air' if s0['kind'] == 'air' else 'Fuel'} screw, turns out"
            low, high = (s0.get("usable_range") or [None, None])[:2]
            detail = f"usable {turns(low)}–{turns(high)} turns"
        cells = []
        for e in entries:
            s = e["settings"][key]
            cells.append({
                "recommended": _circuit_value(key, s, "recommended", unit=False), "change": s["change"],
                "changed": _changed(key, s), "stock": _stock_text(key, s),
                "short": key in ("main_jet", "pilot_jet") and s.get("steps", 0) != 0 and s.get("in_stock") is False,
            })
        circuits.append({"key": key, "label": title, "detail": detail, "current": _circuit_value(key, s0, "current", unit=False), "cells": cells})
    float_levels = [e["settings"].get("float_level_mm") for e in entries]
    rejet = []
    for e in entries:
        r = e["rejet_temperatures_C"]
        parts = []
        if r.get("below") is not None:
            parts.append(f"below {number(r['below'], 0)} °C fit {r['below_jet'] if r.get('below_jet') is not None else 'the next larger size'}")
        if r.get("above") is not None:
            parts.append(f"above {number(r['above'], 0)} °C fit {r['above_jet'] if r.get('above_jet') is not None else 'the next smaller size'}")
        rejet.append({"session": e["session"], "text": "; ".join(parts) if parts else "no change within the forecast"})
    checks = list(dict.fromkeys(c for e in entries for c in e["checks"]))
    warnings: OrderedDict[tuple[str, str], list[str]] = OrderedDict()
    for e in entries:
        for w in e["warnings"]:
            warnings.setdefault((w["code"], w["message"]), []).append(e["session"])
    all_sessions = [e["session"] for e in entries]
    warning_rows = [{"code": code, "message": message,
                     "sessions": "all sessions" if names == all_sessions else ", ".join(names)}
                    for (code, message), names in warnings.items()]
    return {
        "bike": first["bike"], "model": first["model"], "notes": first.get("notes") or "",
        "strokes": first["strokes"], "premix_ratio": first.get("premix_ratio"),
        "density_exponent": first["density_exponent"], "reference": first["reference"],
        "sessions": sessions, "circuits": circuits,
        "float_level": number(float_levels[0], 1, "mm") if float_levels[0] is not None else "not given",
        "rejet": rejet, "checks": checks, "warnings": warning_rows,
    }


def change_set(entries: list[dict]) -> tuple:
    """The work a mechanic does on one bike: (session, circuit, current, recommended) for every change."""
    work = []
    for e in entries:
        for key, _label in CIRCUITS:
            s = e["settings"][key]
            if _changed(key, s):
                work.append((e["session"], key, _circuit_value(key, s, "current"), _circuit_value(key, s, "recommended")))
    return tuple(work)


def change_words(entries: list[dict]) -> list[str]:
    """One short line per session: ``Session A: main 155 → 150, clip groove 3 → 2`` (or no change)."""
    short = {"main_jet": "main", "pilot_jet": "pilot", "clip": "clip", "mixture_screw": "screw"}
    lines = []
    for e in entries:
        parts = []
        for key, _label in CIRCUITS:
            s = e["settings"][key]
            if _changed(key, s):
                parts.append(f"{short[key]} {_circuit_value(key, s, 'current')} → {_circuit_value(key, s, 'recommended')}")
        lines.append(f"{e['session']}: {', '.join(parts) if parts else 'no change'}")
    return lines


def summary_rows(plan: dict, file_names: dict[str, str]) -> dict:
    """Everything the fleet summary shows, formatted, from the plan document."""
    by_bike = entries_by_bike(plan)
    bikes = []
    batches: OrderedDict[tuple, list[str]] = OrderedDict()
    batch_words: dict[tuple, list[str]] = {}
    for bike, entries in by_bike.items():
        words = change_words(entries)
        n_warn = sum(len(e["warnings"]) for e in entries)
        bikes.append({"bike": bike, "model": entries[0]["model"], "changes": words,
                      "warnings": n_warn, "file": file_names[bike]})
        key = (entries[0]["model"],) + change_set(entries)
        batches.setdefault(key, []).append(bike)
        batch_words.setdefault(key, words)
    batch_rows = [{"model": key[0], "changes": batch_words[key], "bikes": members,
                   "count": len(members)} for key, members in batches.items()]
    batch_rows.sort(key=lambda r: -r["count"])  # stable: first-seen order among equal sizes
    # Each distinct warning once, with the bikes it concerns; sessions named only where the
    # warning does not hold for all of that bike's sessions (the sheets give the detail).
    found: OrderedDict[tuple[str, str], OrderedDict[str, list[str]]] = OrderedDict()
    for e in plan["entries"]:
        for w in e["warnings"]:
            found.setdefault((w["code"], w["message"]), OrderedDict()).setdefault(e["bike"], []).append(e["session"])
    warning_rows = []
    for (c, m), bikes_sessions in found.items():
        where = []
        for bike, names in bikes_sessions.items():
            every = [e["session"] for e in by_bike[bike]]
            where.append(bike if names == every else f"{bike} ({', '.join(names)})")
        warning_rows.append({"code": c, "message": m, "where": where, "count": len(where)})
    windows = [(dt.datetime.fromisoformat(x["start"]), dt.datetime.fromisoformat(x["end"]), x["name"])
               for x in plan["sessions"]]

    def session_of(time: str) -> str | None:
        moment = dt.datetime.fromisoformat(time)
        return next((name for start, end, name in windows if start <= moment <= end), None)

    weather = [{
        "session": session_of(w["time"]),
        "time": f"{day(w['time'])[:-5]} {clock(w['time'])}",
        "air_temperature": number(w["air_temperature_C"], 1),
        "station_pressure": number(w["station_pressure_hPa"], 1),
        "relative_humidity": number(w["relative_humidity_pct"], 0),
        "dew_point": number(w["dew_point_C"], 1),
        "density_altitude": number(w["density_altitude_m"], 0),
        "area_factor": number(w["area_factor"], 3),
        "sae_j1349_cf": number(w["sae_j1349_cf"], 3),
        "icing_risk": f"{w['icing_risk']} ({ICING_RISK_NAMES[w['icing_risk']]})",
    } for w in plan["weather"] if session_of(w["time"])]
    sessions = [{"name": s["name"], "window": window(s["start"], s["end"])} for s in plan["sessions"]]
    kept = stock_kept(plan)
    shortages = sum(1 for r in plan["pick_list"] if (r["short"] or 0) > 0)
    pick_list = [dict(p, in_stock_text=_text(p["in_stock"]),
                      short_text="–" if p["short"] is None else f"{p['short']} SHORT" if p["short"] else "0")
                 for p in plan["pick_list"]]
    return {"bikes": bikes, "batches": batch_rows, "warnings": warning_rows, "weather": weather,
            "sessions": sessions, "pick_list": pick_list, "stock_kept": kept, "shortages": shortages,
            "stock_status": f"{shortages} jet sizes short" if kept else NO_STOCK_LIST}
