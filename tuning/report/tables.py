"""Turn the plan document into rows for the sheet and summary templates: formatting only."""

from __future__ import annotations

import datetime as dt
from collections import OrderedDict

from tuning.air import ICING_RISK_NAMES
from tuning.plan.notices import CODES, SEVERITIES, severity_rank

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


def _source_text(key: str, entries: list[dict], i: int) -> tuple[str, bool]:
    """Where the jet of session ``i`` comes from, said where it is put in (not again while it stays).

    Returns (text, to_order): the plan's words (``off bike T07``, ``from the shelf``, ``to order``);
    empty where nothing is fitted for that session (the proven jet, or the jet of the session before).
    """
    if key not in ("main_jet", "pilot_jet"):
        return "", False
    s = entries[i]["settings"][key]
    source = s.get("source")
    before = entries[i - 1]["settings"][key]["recommended"] if i else s["current"]
    if not source or s["recommended"] == before or source["kind"] in ("fitted", "own"):
        return "", False
    text = source["text"]
    if source["kind"] == "shelf-or-order":
        text = f"{text} ({NO_STOCK_LIST})"
    return text, source["kind"] == "order"


def _changed(key: str, s: dict) -> bool:
    if key == "mixture_screw":
        return bool(s.get("change_turns"))
    return bool(s.get("steps"))


def _grouped_warnings(entries: list[dict]) -> "OrderedDict[tuple[str, str, str], list[str]]":
    """(severity, code, message) -> the sessions that carry it, in the plan's order."""
    grouped: OrderedDict[tuple[str, str, str], list[str]] = OrderedDict()
    for e in entries:
        for w in e["warnings"]:
            grouped.setdefault((w["severity"], w["code"], w["message"]), []).append(e["session"])
    return grouped


def _label(text: str) -> str:
    """A plan label as a heading: first letter capital (``before Sat morning`` -> ``Before Sat morning``)."""
    return text[:1].upper() + text[1:]


def minutes(value) -> str:
    """Work time for print: ``12 min``, ``3 h 16 min`` (whole minutes as the plan gives them)."""
    if value is None:
        return "–"
    m = int(round(value))
    return f"{m} min" if m < 60 else f"{m // 60} h {m % 60:02d} min"


def plan_index(plan: dict) -> dict:
    """Per bike: its record of ``plan["bikes"]`` and its rows of ``plan["work_orders"]``.

    ``{"records": {bike: record}, "work": {bike: [(order, bike_row), ...]}}``, transitions in order.
    """
    records = {b["bike"]: b for b in plan.get("bikes", [])}
    work: dict[str, list] = {}
    for order in plan.get("work_orders", []):
        for row in order["bikes"]:
            work.setdefault(row["bike"], []).append((order, row))
    return {"records": records, "work": work}


def warning_count(entries: list[dict], record: dict | None) -> int:
    """A bike's warnings: those of its sessions and the notices about its records."""
    return sum(len(e["warnings"]) for e in entries) + len((record or {}).get("notices", []))


#: How far a crowded sheet shortens its warnings (see :func:`condensed`): nothing, the
#: repeats of action and note warnings, the repeats of every warning; at the last level the
#: notes are given by code alone (the fleet summary and recommendations.csv keep their words).
CONDENSE_LEVELS = (frozenset(), frozenset({"action", "note"}), frozenset(SEVERITIES), frozenset(SEVERITIES))
NOTES_BY_CODE_LEVEL = 3


def condensed(rows: list[dict], severities) -> list[dict]:
    """Warning rows with the repeats of a code in later sessions named, not written out.

    For each code of a severity in ``severities``, the rows that hold in the code's first session
    stay in full (two jets may carry the same code there); a row only of later sessions becomes
    its session names in ``also`` of the code's last full row ("also in Sun morning"): the same
    warning with that session's own figures. Every session that carries the code stays named.
    """
    rows = [dict(row, also="") for row in rows]
    out: list[dict] = []
    first: dict[str, set] = {}
    also: OrderedDict[str, list[str]] = OrderedDict()
    for row in rows:
        code = row["code"]
        if row["severity"] not in severities or not row["session_list"]:
            out.append(row)
        elif code not in first:
            first[code] = set(row["session_list"])
            out.append(row)
        elif first[code] & set(row["session_list"]):
            out.append(row)
        else:
            also.setdefault(code, []).extend(n for n in row["session_list"] if n not in also.get(code, []))
    for code, names in also.items():
        last = next(r for r in reversed(out) if r["code"] == code)
        last["also"] = ", ".join(names)
    return out


def _checks(entries: list[dict], condense: int) -> list[str]:
    """The sessions' checks, each once; condensed, a check of the same kind (the words before its
    first colon, e.g. ``Choke``) in later sessions is named, not written out again."""
    found: OrderedDict[str, list[str]] = OrderedDict()
    for e in entries:
        for c in e["checks"]:  # objects {"text", "id", "params"} (carbfleet-plan/3)
            found.setdefault(c["text"], []).append(e["session"])
    if not condense:
        return list(found)
    out: OrderedDict[str, list[str]] = OrderedDict()  # kept text -> later sessions of its kind
    kinds: dict[str, str] = {}
    for text, names in found.items():
        kind = text.split(":", 1)[0] if ":" in text else text
        if kind in kinds:
            out[kinds[kind]].extend(n for n in names if n not in out[kinds[kind]])
        else:
            kinds[kind] = text
            out[text] = []
    return [f"{text} (also in {', '.join(later)}, with its own figures)" if later else text
            for text, later in out.items()]


def sheet_rows(entries: list[dict], record: dict | None = None, work=None, condense: int = 0) -> dict:
    """Everything one bike's setup sheet shows, formatted, from that bike's plan entries.

    ``record`` is the bike's item of the plan's ``bikes`` (its notices, its danger flag) and
    ``work`` its rows of the plan's ``work_orders`` as :func:`plan_index` gives them. ``condense``
    (an index of :data:`CONDENSE_LEVELS`) shortens repeated warnings on a crowded sheet.
    """
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
        for i, e in enumerate(entries):
            s = e["settings"][key]
            source, to_order = _source_text(key, entries, i)
            cells.append({
                "recommended": _circuit_value(key, s, "recommended", unit=False), "change": s["change"],
                "changed": _changed(key, s), "source": source, "to_order": to_order,
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
    checks = _checks(entries, condense)
    all_sessions = [e["session"] for e in entries]
    grouped = _grouped_warnings(entries)
    warning_rows = []
    for (severity, code, message), names in grouped.items():
        warning_rows.append({"severity": severity, "code": code, "message": message, "session_list": names,
                             "sessions": "all sessions" if names == all_sessions else ", ".join(names)})
    for w in (record or {}).get("notices", []):  # about the bike's records: once, whatever the session
        warning_rows.append({"severity": w["severity"], "code": w["code"], "message": w["message"],
                             "session_list": [], "sessions": "the bike's records"})
    warning_rows.sort(key=lambda w: severity_rank(w["severity"]))  # stable: danger, action, note
    warning_rows = condensed(warning_rows, CONDENSE_LEVELS[condense])
    if condense >= NOTES_BY_CODE_LEVEL:
        warning_rows = [dict(w, message="") if w["severity"] == "note" else w for w in warning_rows]
    danger = [w for w in warning_rows if w["severity"] == "danger"]
    return {
        "bike": first["bike"], "model": first["model"], "notes": first.get("notes") or "",
        "strokes": first["strokes"], "premix_ratio": first.get("premix_ratio"),
        "density_exponent": first["density_exponent"], "reference": first["reference"],
        "sessions": sessions, "circuits": circuits,
        "float_level": number(float_levels[0], 1, "mm") if float_levels[0] is not None else "not given",
        "rejet": rejet, "checks": checks, "danger": danger, "notes_by_code": condense >= NOTES_BY_CODE_LEVEL,
        "warnings": [w for w in warning_rows if w["severity"] != "danger"],
        "work": [{"label": _label(order["label"]), "minutes": minutes(row["minutes"]),
                  "changes": [{"text": c["text"], "minutes": minutes(c["minutes"])} for c in row["changes"]]}
                 for order, row in (work or ())],
        "stock_kept": any(e["settings"][k].get("in_stock") is not None for e in entries for k in ("main_jet", "pilot_jet")),
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
    index = plan_index(plan)
    records = index["records"]
    bikes = []
    batches: OrderedDict[tuple, list[str]] = OrderedDict()
    batch_words: dict[tuple, list[str]] = {}
    for bike, entries in by_bike.items():
        words = change_words(entries)
        record = records.get(bike)
        bikes.append({"bike": bike, "model": entries[0]["model"], "changes": words,
                      "warnings": warning_count(entries, record), "danger": bool(record and record["danger"]),
                      "file": file_names[bike]})
        key = (entries[0]["model"],) + change_set(entries)
        batches.setdefault(key, []).append(bike)
        batch_words.setdefault(key, words)
    batch_rows = [{"model": key[0], "changes": batch_words[key], "bikes": members,
                   "count": len(members)} for key, members in batches.items()]
    batch_rows.sort(key=lambda r: -r["count"])  # stable: first-seen order among equal sizes
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
    to_order = sum(p["to_order"] or 0 for p in plan["pick_list"])
    pick_list = [dict(p, in_stock_text=_text(p["in_stock"]), to_order_text=_text(p["to_order"]))
                 for p in plan["pick_list"]]
    pick_list.sort(key=lambda p: -(p["to_order"] or 0))  # to order first, else the plan's order
    return {"bikes": bikes, "batches": batch_rows, "danger": danger_rows(plan, by_bike, file_names),
            "warning_groups": warning_groups(plan, by_bike), "work_orders": work_order_rows(plan, file_names),
            "weather": weather, "sessions": sessions, "pick_list": pick_list, "stock_kept": kept,
            "to_order": to_order,
            "stock_status": to_order_text(to_order) if kept else NO_STOCK_LIST}


def to_order_text(count: int) -> str:
    """``3 jets to order``, ``1 jet to order``: the pick list's to_order, summed."""
    return f"{count} {'jet' if count == 1 else 'jets'} to order"


def danger_rows(plan: dict, by_bike: dict, file_names: dict[str, str]) -> list[dict]:
    """The bikes in danger, one row each, in fleet order: the sessions concerned, the danger
    warnings of the first such session in full, and the codes of the others (the warnings list
    and the sheet give them in full)."""
    rows = []
    for record in plan.get("bikes", []):
        if not record["danger"]:
            continue
        entries = by_bike.get(record["bike"], [])
        per_session = [(e["session"], [w for w in e["warnings"] if w["severity"] == "danger"]) for e in entries]
        per_session = [(name, found) for name, found in per_session if found]
        if not per_session:
            continue
        first_session, first = per_session[0]
        others = []
        for name, found in per_session[1:]:
            codes = OrderedDict()
            for w in found:
                codes[w["code"]] = codes.get(w["code"], 0) + 1
            others.append(f"{name}: " + ", ".join(c if n == 1 else f"{c} ×{n}" for c, n in codes.items()))
        names = [name for name, _ in per_session]
        rows.append({"bike": record["bike"], "model": record["model"], "file": file_names.get(record["bike"], ""),
                     "sessions": ["all sessions"] if len(entries) > 1 and names == [e["session"] for e in entries] else names, "first_session": first_session,
                     "messages": [{"code": w["code"], "message": w["message"]} for w in first], "others": others})
    return rows


def warning_groups(plan: dict, by_bike: dict) -> dict:
    """The warnings by severity (danger, action, note), each distinct warning once with the bikes
    (and sessions, where not all of that bike's) it concerns; the bike notices among them.

    ``{"groups": [...], "legend": [...]}``: ``count`` of a group is the number of warnings it
    stands for, so the groups add up to the plan's ``warnings_count``; the legend gives the meaning
    of every code listed (from :data:`tuning.plan.notices.CODES`).
    """
    found: OrderedDict[tuple[str, str, str], OrderedDict[str, list[str] | None]] = OrderedDict()
    count = {severity: 0 for severity in SEVERITIES}
    for e in plan["entries"]:
        for w in e["warnings"]:
            found.setdefault((w["severity"], w["code"], w["message"]), OrderedDict()).setdefault(e["bike"], []).append(e["session"])
            count[w["severity"]] += 1
    for record in plan.get("bikes", []):
        for w in record["notices"]:
            found.setdefault((w["severity"], w["code"], w["message"]), OrderedDict())[record["bike"]] = None
            count[w["severity"]] += 1
    groups = []
    for severity in SEVERITIES:
        rows = []
        for (sev, code, message), bikes_sessions in found.items():
            if sev != severity:
                continue
            where = []
            for bike, names in bikes_sessions.items():
                every = [e["session"] for e in by_bike.get(bike, [])]
                where.append(bike if names is None or names == every else f"{bike} ({', '.join(names)})")
            rows.append({"code": code, "message": message, "where": where, "count": len(where)})
        groups.append({"severity": severity, "title": severity.capitalize(), "count": count[severity], "rows": rows})
    codes = list(dict.fromkeys(r["code"] for g in groups for r in g["rows"]))
    return {"groups": groups, "legend": [{"code": c, "meaning": CODES[c][1]} for c in codes if c in CODES]}


def work_order_rows(plan: dict, file_names: dict[str, str]) -> list[dict]:
    """The plan's work orders for print: per transition its label and total time, then one row
    per bike with its minutes and the plan's words for each change."""
    danger = {b["bike"] for b in plan.get("bikes", []) if b["danger"]}
    orders = []
    for order in plan.get("work_orders", []):
        rows = [{"bike": row["bike"], "file": file_names.get(row["bike"], ""), "danger": row["bike"] in danger,
                 "minutes": minutes(row["minutes"]), "changes": [c["text"] for c in row["changes"]]}
                for row in order["bikes"]]
        orders.append({"label": _label(order["label"]), "minutes": minutes(order["minutes"]),
                       "count": len(rows), "bikes": rows})
    return orders
