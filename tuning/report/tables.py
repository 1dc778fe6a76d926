"""Turn the plan document into rows for the sheet and summary templates: formatting only."""

from __future__ import annotations

import datetime as dt
from collections import OrderedDict

from tuning.display import METRIC_EN, N_, Display
from tuning.plan.notices import CODES, ICING_RISK_NAMES, SEVERITIES, say_item, severity_rank

CIRCUITS = (
    ("main_jet", N_("Main jet")),
    ("pilot_jet", N_("Pilot jet")),
    ("clip", N_("Needle clip")),
    ("mixture_screw", N_("Mixture screw")),
)
_DAYS = (N_("Mon"), N_("Tue"), N_("Wed"), N_("Thu"), N_("Fri"), N_("Sat"), N_("Sun"))
_MONTHS = (
    N_("Jan"),
    N_("Feb"),
    N_("Mar"),
    N_("Apr"),
    N_("May"),
    N_("Jun"),
    N_("Jul"),
    N_("Aug"),
    N_("Sep"),
    N_("Oct"),
    N_("Nov"),
    N_("Dec"),
)
_QUARTERS = {0: "", 1: "¼", 2: "½", 3: "¾"}
#: Turns within this of a quarter are that quarter [turns] (the document rounds turns to 2 decimals).
_QUARTER_EXACT = 1e-6
#: Float round-off ignored when a throttle opening or an air–fuel ratio of the document is
#: compared with a range's edge [1].
_ROUND_OFF = 1e-9


#: What the sheets, the summary and ``carbfleet plan`` say where a fleet keeps no stock list.
NO_STOCK_LIST = N_("no stock list kept")


def turns(value, display: Display = METRIC_EN) -> str:
    """Format mixture-screw turns in quarters where exact (1.5 -> "1½"), else with 2 decimals."""
    if value is None:
        return "–"
    quarters = round(abs(value) * 4)
    if abs(abs(value) * 4 - quarters) < _QUARTER_EXACT:
        whole, part = divmod(quarters, 4)
        text = (str(whole) if whole or not part else "") + _QUARTERS[part]
        return ("−" if value < 0 else "") + text
    return display.number(value, 2)


def clock(iso: str) -> str:
    """``2026-06-13T08:00:00+01:00`` -> ``08:00`` (site local time, as the plan gives it)."""
    return dt.datetime.fromisoformat(iso).strftime("%H:%M")


def day(iso: str, display: Display = METRIC_EN, year: bool = True) -> str:
    """``2026-06-13T08:00:00+01:00`` -> ``Sat 13 Jun 2026`` (the display's language, not the machine's)."""
    t = dt.datetime.fromisoformat(iso)
    text = f"{display._(_DAYS[t.weekday()])} {t.day} {display._(_MONTHS[t.month - 1])}"
    return f"{text} {t.year}" if year else text


def window(start: str, end: str, display: Display = METRIC_EN) -> str:
    """A session window for print: ``Sat 13 Jun 08:00–09:30``."""
    a, b = dt.datetime.fromisoformat(start), dt.datetime.fromisoformat(end)
    if a.date() == b.date():
        return f"{day(start, display, year=False)} {clock(start)}–{clock(end)}"
    return f"{day(start, display)} {clock(start)} – {day(end, display)} {clock(end)}"


def entries_by_bike(plan: dict) -> OrderedDict[str, list[dict]]:
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
    return any(
        e["settings"][key].get("in_stock") is not None for e in plan["entries"] for key in ("main_jet", "pilot_jet")
    )


def _text(value) -> str:
    """A plan value for print; ``None`` (not on record) shows as an en dash."""
    return "–" if value is None else f"{value}"


def _circuit_value(key: str, s: dict, which: str, unit: bool = True, display: Display = METRIC_EN) -> str:
    """A circuit's ``which`` ("current" or "recommended") setting for print."""
    if key == "clip":
        return display._("groove %(n)s") % {"n": _text(s[which])} if unit else _text(s[which])
    if key == "mixture_screw":
        value = turns(s[which + "_turns"], display)
        return display._("%(n)s turns out") % {"n": value} if unit else value
    return _text(s[which])


def _source_text(key: str, entries: list[dict], i: int, d: Display = METRIC_EN) -> tuple[str, bool]:
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
    text = say_item(source, d)
    if source["kind"] == "shelf-or-order":
        text = f"{text} ({d._(NO_STOCK_LIST)})"
    return text, source["kind"] == "order"


def _changed(key: str, s: dict) -> bool:
    if key == "mixture_screw":
        return bool(s.get("change_turns"))
    return bool(s.get("steps"))


def _grouped_warnings(entries: list[dict], d: Display = METRIC_EN) -> OrderedDict[tuple[str, str, str], list[str]]:
    """(severity, code, message) -> the sessions that carry it, in the plan's order."""
    grouped: OrderedDict[tuple[str, str, str], list[str]] = OrderedDict()
    for e in entries:
        for w in e["warnings"]:
            grouped.setdefault((w["severity"], w["code"], say_item(w, d)), []).append(e["session"])
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
    records = {b["bike"]: b for b in plan["bikes"]}
    work: dict[str, list] = {}
    for order in plan["work_orders"]:
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


def _checks(entries: list[dict], condense: int, d: Display = METRIC_EN) -> list[str]:
    """The sessions' checks, each once; condensed, a check of the same kind (the words before its
    first colon, e.g. ``Choke``) in later sessions is named, not written out again."""
    found: OrderedDict[str, list[str]] = OrderedDict()
    for e in entries:
        for c in e["checks"]:  # objects {"text", "id", "params"} (carbfleet-plan/3)
            found.setdefault(say_item(c, d), []).append(e["session"])
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
    return [
        d._("%(check)s (also in %(sessions)s, with its own figures)") % {"check": text, "sessions": ", ".join(later)}
        if later
        else text
        for text, later in out.items()
    ]


#: The boxes filled in by hand on a sheet, by their data names: the fleet types them back in
#: later. One home: the sheet's form and any reader of the filled-in sheets use these names.
FORM_FIELDS = {
    "changes_done": N_("changes done (tick each)"),
    "plug_colour": N_("plug colour"),
    "rider_remark": N_("rider remark"),
    "initials": N_("initials"),
    "fitted_main_jet": N_("main jet"),
    "fitted_pilot_jet": N_("pilot jet"),
    "fitted_clip": N_("clip groove"),
    "fitted_screw_turns": N_("screw, turns out"),
    "returned_to_proven": N_("returned to proven settings"),
}

#: Throttle ranges of the verdicts, with the circuit that mostly meters there (common practice,
#: a rough division: the circuits overlap).
THROTTLE_RANGES = (
    (0.0, 0.25, N_("closed to ¼"), N_("pilot, screw")),
    (0.25, 0.75, N_("¼ to ¾"), N_("needle, clip")),
    (0.75, 1.0, N_("¾ to full"), N_("main")),
)


def air_words(pct, d: Display) -> str:
    """How thin the air is against home (where the settings were proven): ``air 14 % thinner than home``."""
    if pct is None:
        return "–"
    if abs(pct) < 0.5:
        return d._("air as dense as at home")
    template = d._("air %(pct)s thinner than home") if pct < 0 else d._("air %(pct)s denser than home")
    return template % {"pct": d.percent(abs(pct))}


def change_headline(settings: dict, d: Display) -> list[str]:
    """The changes against the proven settings in a mechanic's words: ``main 2 sizes smaller``."""
    parts = []
    for key, word in (("main_jet", N_("main")), ("pilot_jet", N_("pilot"))):
        steps = settings[key].get("steps") or 0
        if steps:
            template = (
                d.n_("%(part)s %(n)s size larger", "%(part)s %(n)s sizes larger", abs(steps))
                if steps > 0
                else d.n_("%(part)s %(n)s size smaller", "%(part)s %(n)s sizes smaller", abs(steps))
            )
            parts.append(template % {"part": d._(word), "n": abs(steps)})
    clip = settings["clip"]
    if clip.get("steps"):
        n = abs(clip["steps"])
        template = (
            d.n_("clip %(n)s groove richer", "clip %(n)s grooves richer", n)
            if clip.get("direction") == "richer"
            else d.n_("clip %(n)s groove leaner", "clip %(n)s grooves leaner", n)
        )
        parts.append(template % {"n": n})
    screw = settings["mixture_screw"]
    turned = screw.get("change_turns") or 0
    if turned:
        kind = d._("air screw") if screw.get("kind") == "air" else d._("fuel screw")
        template = d._("%(screw)s %(turns)s out") if turned > 0 else d._("%(screw)s %(turns)s in")
        amount = d.n_("%(n)s turn", "%(n)s turns", 1 if abs(turned) <= 1 else 2) % {"n": turns(abs(turned), d)}
        parts.append(template % {"screw": kind, "turns": amount})
    return parts


def verdicts(entry: dict, d: Display) -> list[dict]:
    """One verdict per throttle range for the recommended settings, in the session's leanest hour:
    in the target band, richer than it (safe), or leaner than it (act before riding hard)."""
    curve = entry["mixture_curve"]
    lo, hi = curve["target_band_afr"]
    out = []
    for start, end, name, circuit in THROTTLE_RANGES:
        afr = [
            a
            for t, a in zip(curve["throttle"], curve["recommended_afr"])
            if start - _ROUND_OFF <= t <= end + _ROUND_OFF
        ]
        out.append(dict(_verdict(min(afr), max(afr), lo, hi, d), range=d._(name), circuit=d._(circuit)))
    proven = curve["current_afr"]
    out.append(dict(_verdict(min(proven), max(proven), lo, hi, d), range=d._("proven settings"), circuit=""))
    return out


def _verdict(richest: float, leanest: float, lo: float, hi: float, d: Display) -> dict:
    """``LEAN 13.1`` (leaner than the band somewhere: the leanest ratio), ``rich 11.6`` (richer
    than the band: the richest), or ``ok 12.0…12.4`` (within it)."""
    if leanest > hi + _ROUND_OFF:
        return {"kind": "lean", "text": d._("LEAN %(afr)s") % {"afr": d.number(leanest, 1)}}
    if richest < lo - _ROUND_OFF:
        return {"kind": "rich", "text": d._("rich %(afr)s") % {"afr": d.number(richest, 1)}}
    low, high = d.number(richest, 1), d.number(leanest, 1)
    return {"kind": "ok", "text": d._("ok %(afr)s") % {"afr": low if low == high else f"{low}…{high}"}}


def _form_rows(entries: list[dict], work, d: Display) -> tuple[list[dict], list[dict]]:
    """The hand-filled form: per session the changes planned before it (a tick each), and the
    changes back to the proven settings after the event."""

    def ticks(row) -> list[dict]:
        return [{"text": say_item(c, d), "minutes": minutes(c["minutes"])} for c in row["changes"]] if row else []

    before = {order.get("before_session"): row for order, row in (work or ())}
    rows = [{"session": e["session"], "changes": ticks(before.get(e["session"]))} for e in entries]
    return rows, ticks(before.get(None))  # the transition after the last session comes before none


def sheet_rows(
    entries: list[dict],
    record: dict | None = None,
    work=None,
    condense: int = 0,
    display: Display = METRIC_EN,
    plan_sessions=(),
) -> dict:
    """Everything one bike's setup sheet shows, formatted, from that bike's plan entries.

    ``record`` is the bike's item of the plan's ``bikes`` (its notices, its danger flag) and
    ``work`` its rows of the plan's ``work_orders`` as :func:`plan_index` gives them. ``condense``
    (an index of :data:`CONDENSE_LEVELS`) shortens repeated warnings on a crowded sheet.
    ``plan_sessions`` are the plan's ``sessions`` (their power against SAE J1349's standard air).
    """
    d = display
    first = entries[0]
    sessions = _session_rows(entries, plan_sessions, d)
    float_levels = [e["settings"]["float_level_mm"] for e in entries]
    checks = _checks(entries, condense, d)
    warning_rows = _warning_rows(entries, record, condense, d)
    danger = [w for w in warning_rows if w["severity"] == "danger"]
    form, back = _form_rows(entries, work, d)
    return {
        "bike": first["bike"],
        "model": first["model"],
        "notes": first["notes"] or "",
        "strokes": first["strokes"],
        "premix_ratio": first["premix_ratio"],
        "density_exponent": d.number(first["density_exponent"], 2),
        "reference": first["reference"],
        "basis": basis_words(record, d),
        "sessions": sessions,
        "circuits": _circuit_rows(entries, d),
        "power_out_of_range": not all(x["power_in_range"] for x in sessions),
        "float_level": d.number(float_levels[0], 1, "mm") if float_levels[0] is not None else d._("not given"),
        "rejet": _rejet_rows(entries, d),
        "checks": checks,
        "danger": danger,
        "notes_by_code": condense >= NOTES_BY_CODE_LEVEL,
        "warnings": [w for w in warning_rows if w["severity"] != "danger"],
        "form": form,
        "back_to_proven": back,
        "fields": FORM_FIELDS,
        "band": first["mixture_curve"]["target_band_afr"],
        "stock_kept": any(
            e["settings"][k].get("in_stock") is not None for e in entries for k in ("main_jet", "pilot_jet")
        ),
    }


def _session_rows(entries, plan_sessions, d) -> list[dict]:
    """Per session: its time, air, what to do and the verdicts (the sheet's session table)."""
    by_name = {x["name"]: x for x in plan_sessions}
    sessions = []
    for e in entries:
        sm = e["summary"]
        common = by_name.get(e["session"], {})
        changes = change_headline(e["settings"], d)
        sessions.append(
            {
                "name": e["session"],
                "window": window(e["start"], e["end"], d),
                "air_words": air_words(sm["air_density_vs_reference_pct"], d),
                "do": ", ".join(changes) if changes else d._("proven settings, nothing to change"),
                "changed": bool(changes),
                "air_temperature": d.temperature_span(sm["air_temperature_C_min"], sm["air_temperature_C_max"]),
                "station_pressure": d.pressure(sm["station_pressure_hPa_mean"]),
                "relative_humidity": d.percent(sm["relative_humidity_pct_mean"]),
                "density_altitude": d.elevation_span(sm["density_altitude_m_min"], sm["density_altitude_m_max"]),
                "air_vs_home": d.percent(sm["air_density_vs_reference_pct"], signed=True),
                "factor": f"{d.number(sm['area_factor_mean'], 3)} ({d.number(sm['area_factor_min'], 3)}…{d.number(sm['area_factor_max'], 3)})",
                "power": d.percent(common.get("power_vs_sae_j1349_pct")),
                "power_in_range": common.get("sae_j1349_within_range", True),
                "verdicts": verdicts(e, d),
                "ridden": ridden_words(e, common.get("heights"), d),
            }
        )
    return sessions


def _circuit_rows(entries, d) -> list[dict]:
    """Per circuit: its label, the proven setting and a cell per session (the sheet's settings table)."""
    first = entries[0]
    circuits = []
    for key, label in CIRCUITS:
        s0 = first["settings"][key]
        title, detail = d._(label), ""
        if key in ("main_jet", "pilot_jet"):
            detail = d._("family %(family)s") % {"family": s0["family"]}
        elif key == "clip":
            title = d._("Needle clip groove")
            detail = (
                d._("needle %(needle)s, %(n)s grooves, 1 = top")
                % {"needle": _text(s0.get("needle")), "n": s0["grooves"]}
                if s0.get("grooves")
                else d._("needle %(needle)s, grooves not on record") % {"needle": _text(s0.get("needle"))}
            )
        elif key == "mixture_screw":
            title = d._("Air screw, turns out") if s0["kind"] == "air" else d._("Fuel screw, turns out")
            low, high = (s0.get("usable_range") or [None, None])[:2]
            detail = d._("usable %(low)s–%(high)s turns") % {"low": turns(low, d), "high": turns(high, d)}
        cells = []
        for i, e in enumerate(entries):
            s = e["settings"][key]
            source, to_order = _source_text(key, entries, i, d)
            value = _circuit_value(key, s, "recommended", unit=False)
            repeat = i > 0 and cells[-1]["recommended"] == value  # the words once, where it changes
            cells.append(
                {
                    "recommended": value,
                    "change": "" if repeat else say_item(s, d),
                    "changed": _changed(key, s),
                    "source": source,
                    "to_order": to_order,
                }
            )
        circuits.append(
            {
                "key": key,
                "label": title,
                "detail": detail,
                "current": _circuit_value(key, s0, "current", unit=False),
                "cells": cells,
            }
        )
    return circuits


def _rejet_rows(entries, d) -> list[dict]:
    """The change-again temperatures in words, one line for sessions in a row that say the same."""
    rejet = []
    for e in entries:
        r = e["rejet_temperatures_C"]
        parts = []
        if r.get("below") is not None:
            jet = r["below_jet"] if r.get("below_jet") is not None else d._("the next larger size")
            parts.append(d._("below %(t)s fit %(jet)s") % {"t": d.temperature(r["below"]), "jet": jet})
        if r.get("above") is not None:
            jet = r["above_jet"] if r.get("above_jet") is not None else d._("the next smaller size")
            parts.append(d._("above %(t)s fit %(jet)s") % {"t": d.temperature(r["above"]), "jet": jet})
        text = "; ".join(parts) if parts else d._("no change within the forecast")
        if rejet and rejet[-1]["text"] == text:  # the same as the session before: one line for both
            rejet[-1]["names"].append(e["session"])
        else:
            rejet.append({"names": [e["session"]], "text": text})
    for r in rejet:
        r["session"] = d._("all sessions") if len(r["names"]) == len(entries) > 1 else ", ".join(r["names"])
    return rejet


def _warning_rows(entries, record, condense, d) -> list[dict]:
    """The session warnings grouped over sessions and the bike's notices, the most severe first,
    shortened as ``condense`` asks."""
    all_sessions = [e["session"] for e in entries]
    grouped = _grouped_warnings(entries, d)
    warning_rows = []
    for (severity, code, message), names in grouped.items():
        warning_rows.append(
            {
                "severity": severity,
                "code": code,
                "message": message,
                "session_list": names,
                "sessions": d._("all sessions") if names == all_sessions else ", ".join(names),
            }
        )
    for w in (record or {}).get("notices", []):  # about the bike's records: once, whatever the session
        warning_rows.append(
            {
                "severity": w["severity"],
                "code": w["code"],
                "message": say_item(w, d),
                "session_list": [],
                "sessions": d._("the bike's records"),
            }
        )
    warning_rows.sort(key=lambda w: severity_rank(w["severity"]))  # stable: danger, action, note
    warning_rows = condensed(warning_rows, CONDENSE_LEVELS[condense])
    if condense >= NOTES_BY_CODE_LEVEL:
        warning_rows = [dict(w, message="") if w["severity"] == "note" else w for w in warning_rows]
    for w in warning_rows:
        w["severity_text"] = d._(w["severity"])
    return warning_rows


def basis_words(record: dict | None, display: Display = METRIC_EN) -> str:
    """What the bike's settings rest on, in words (its calibration from recorded outcomes, or the law);
    empty for a plan without the field."""
    basis = (record or {}).get("basis")
    return say_item(basis, display) if basis else ""


def change_set(entries: list[dict]) -> tuple:
    """The work a mechanic does on one bike: (session, circuit, current, recommended) for every change."""
    work = []
    for e in entries:
        for key, _label in CIRCUITS:
            s = e["settings"][key]
            if _changed(key, s):
                work.append(
                    (e["session"], key, _circuit_value(key, s, "current"), _circuit_value(key, s, "recommended"))
                )
    return tuple(work)


def change_words(entries: list[dict], display: Display = METRIC_EN) -> list[str]:
    """One short line per session: ``Session A: main 155 → 150, clip groove 3 → 2`` (or no change)."""
    d = display
    short = {"main_jet": N_("main"), "pilot_jet": N_("pilot"), "clip": N_("clip"), "mixture_screw": N_("screw")}
    lines = []
    for e in entries:
        parts = []
        for key, _label in CIRCUITS:
            s = e["settings"][key]
            if _changed(key, s):
                parts.append(
                    f"{d._(short[key])} {_circuit_value(key, s, 'current', display=d)} → "
                    f"{_circuit_value(key, s, 'recommended', display=d)}"
                )
        lines.append(f"{e['session']}: {', '.join(parts) if parts else d._('no change')}")
    return lines


def summary_rows(plan: dict, file_names: dict[str, str], display: Display = METRIC_EN) -> dict:
    """Everything the fleet summary shows, formatted, from the plan document."""
    d = display
    by_bike = entries_by_bike(plan)
    index = plan_index(plan)
    records = index["records"]
    bikes = []
    batches: OrderedDict[tuple, list[str]] = OrderedDict()
    batch_words: dict[tuple, list[str]] = {}
    for bike, entries in by_bike.items():
        words = change_words(entries, d)
        record = records.get(bike)
        bikes.append(
            {
                "bike": bike,
                "model": entries[0]["model"],
                "changes": words,
                "warnings": warning_count(entries, record),
                "danger": bool(record and record["danger"]),
                "file": file_names[bike],
            }
        )
        key = (entries[0]["model"],) + change_set(entries)
        batches.setdefault(key, []).append(bike)
        batch_words.setdefault(key, words)
    batch_rows = [
        {"model": key[0], "changes": batch_words[key], "bikes": members, "count": len(members)}
        for key, members in batches.items()
    ]
    batch_rows.sort(key=lambda r: -r["count"])  # stable: first-seen order among equal sizes
    windows = [
        (dt.datetime.fromisoformat(x["start"]), dt.datetime.fromisoformat(x["end"]), x["name"])
        for x in plan["sessions"]
    ]

    def session_of(time: str) -> str | None:
        moment = dt.datetime.fromisoformat(time)
        return next((name for start, end, name in windows if start <= moment <= end), None)

    weather = [
        {
            "session": session_of(w["time"]),
            "time": f"{day(w['time'], d, year=False)} {clock(w['time'])}",
            "air_temperature": d.temperature(w["air_temperature_C"], 1, unit=False),
            "station_pressure": d.pressure(w["station_pressure_hPa"], unit=False, digits=2 if d.units == "us" else 1),
            "relative_humidity": d.number(w["relative_humidity_pct"], 0),
            "dew_point": d.temperature(w["dew_point_C"], 1, unit=False),
            "density_altitude": d.elevation(w["density_altitude_m"], unit=False),
            "area_factor": d.number(w["area_factor"], 3),
            "power": d.number(100.0 / w["sae_j1349_cf"], 0) if w.get("sae_j1349_cf") else "–",
            "icing_risk": f"{w['icing_risk']} ({d._(ICING_RISK_NAMES[w['icing_risk']])})",
        }
        for w in plan["weather"]
        if session_of(w["time"])
    ]
    sessions = [
        {
            "name": s["name"],
            "window": window(s["start"], s["end"], d),
            "power": d.percent(s["power_vs_sae_j1349_pct"]),
            "power_in_range": s["sae_j1349_within_range"],
        }
        for s in plan["sessions"]
    ]
    kept = stock_kept(plan)
    to_order = sum(p["to_order"] or 0 for p in plan["pick_list"])
    pick_list = [
        dict(p, in_stock_text=_text(p["in_stock"]), to_order_text=_text(p["to_order"])) for p in plan["pick_list"]
    ]
    pick_list.sort(key=lambda p: -(p["to_order"] or 0))  # to order first, else the plan's order
    return {
        "bikes": bikes,
        "batches": batch_rows,
        "danger": danger_rows(plan, by_bike, file_names, d),
        "warning_groups": warning_groups(plan, by_bike, d),
        "work_orders": work_order_rows(plan, file_names, d),
        "weather": weather,
        "sessions": sessions,
        "pick_list": pick_list,
        "stock_kept": kept,
        "heights": heights_rows(plan, d),
        "to_order": to_order,
        "stock_status": to_order_text(to_order, d) if kept else d._(NO_STOCK_LIST),
    }


def ridden_words(entry: dict, session_heights: dict | None, d: Display) -> str:
    """Where a bike's session is ridden and what its settings are made for, in one line
    ("ridden 1200–2100 m; set for 1200 m; at 2100 m 5 % rich, 78 % power"); empty where the
    session is ridden at the site's elevation with the forecast holding there."""
    h = entry.get("heights")
    if not h:
        return ""
    low, high = h["elevation_m_min"], h["elevation_m_max"]
    if d.elevation(low) == d.elevation(high):
        forecast = (session_heights or {}).get("weather_elevation_m")
        return d._("ridden at %(elevation)s, the forecast carried from %(forecast)s") % {
            "elevation": d.elevation(low),
            "forecast": d.elevation(forecast),
        }
    rich = h.get("rich_at_highest_pct")
    mixture = (d._("%(pct)s rich") if rich is None or rich >= 0 else d._("%(pct)s lean")) % {
        "pct": d.percent(None if rich is None else abs(rich))
    }
    words = d._("ridden %(range)s; set for %(set_for)s; at %(high)s %(mixture)s, %(power)s power") % {
        "range": d.elevation_span(low, high),
        "set_for": d.elevation(h["set_for_elevation_m"]),
        "high": d.elevation(high),
        "mixture": mixture,
        "power": d.percent(h.get("power_at_highest_pct")),
    }
    route = (session_heights or {}).get("route")
    return words + (" " + d._("(route %(file)s)") % {"file": route} if route else "")


def heights_rows(plan: dict, d: Display) -> list[dict]:
    """The summary's rows on where the sessions are ridden; empty when every session is ridden at
    the site's elevation with the forecast holding there."""
    source_words = {"range": N_("elevation range"), "route": N_("route"), "site": N_("site")}
    rows = []
    for s in plan["sessions"]:
        h = s.get("heights")
        if not h:
            continue
        rows.append(
            {
                "session": s["name"],
                "source": d._(source_words[h["source"]]) + (f" {h['route']}" if h.get("route") else ""),
                "heights": d.elevation_span(h["elevation_m_min"], h["elevation_m_max"]),
                "set_for": d.elevation(h["set_for_elevation_m"]),
                "forecast": d.elevation(h["weather_elevation_m"]),
                "lapse_rate": d.lapse_rate(h["lapse_rate_K_per_km"]),
            }
        )
    return rows


def to_order_text(count: int, display: Display = METRIC_EN) -> str:
    """``3 jets to order``, ``1 jet to order``: the pick list's to_order, summed."""
    return display.n_("%(n)s jet to order", "%(n)s jets to order", count) % {"n": count}


def danger_rows(plan: dict, by_bike: dict, file_names: dict[str, str], d: Display = METRIC_EN) -> list[dict]:
    """The bikes in danger, one row each, in fleet order: the sessions concerned, the danger
    warnings of the first such session in full, and the codes of the others (the warnings list
    and the sheet give them in full)."""
    rows = []
    for record in plan["bikes"]:
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
        rows.append(
            {
                "bike": record["bike"],
                "model": record["model"],
                "file": file_names.get(record["bike"], ""),
                "sessions": [d._("all sessions")]
                if len(entries) > 1 and names == [e["session"] for e in entries]
                else names,
                "first_session": first_session,
                "messages": [{"code": w["code"], "message": say_item(w, d)} for w in first],
                "others": others,
            }
        )
    return rows


def warning_groups(plan: dict, by_bike: dict, display: Display = METRIC_EN) -> dict:
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
            found.setdefault((w["severity"], w["code"], say_item(w, display)), OrderedDict()).setdefault(
                e["bike"], []
            ).append(e["session"])
            count[w["severity"]] += 1
    for record in plan["bikes"]:
        for w in record["notices"]:
            found.setdefault((w["severity"], w["code"], say_item(w, display)), OrderedDict())[record["bike"]] = None
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
        groups.append(
            {"severity": severity, "title": display._(severity).capitalize(), "count": count[severity], "rows": rows}
        )
    codes = list(dict.fromkeys(r["code"] for g in groups for r in g["rows"]))
    return {"groups": groups, "legend": [{"code": c, "meaning": display._(CODES[c][1])} for c in codes if c in CODES]}


def work_order_rows(plan: dict, file_names: dict[str, str], d: Display = METRIC_EN) -> list[dict]:
    """The plan's work orders for print: per transition its label and total time, then one row
    per bike with its minutes and the plan's words for each change."""
    danger = {b["bike"] for b in plan["bikes"] if b["danger"]}
    orders = []
    for order in plan["work_orders"]:
        rows = [
            {
                "bike": row["bike"],
                "file": file_names.get(row["bike"], ""),
                "danger": row["bike"] in danger,
                "minutes": minutes(row["minutes"]),
                "changes": [say_item(c, d) for c in row["changes"]],
            }
            for row in order["bikes"]
        ]
        orders.append(
            {
                "label": _label(say_item(order, d)),
                "minutes": minutes(order["minutes"]),
                "count": len(rows),
                "bikes": rows,
            }
        )
    return orders
