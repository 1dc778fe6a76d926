"""A plan document in the shape of ``tuning.plan.make_plan`` for report tests.

Every value here is INVENTED: plausible numbers for N bikes x M sessions at an invented mountain
site, made up so the report pipeline can be developed and tested without the physics. Nothing in
this file is a physical result and no test may treat it as one; tests only check that the report
shows what the document holds. Its words are the plan's own templates (tuning.plan.notices) filled
with invented parameters, so that every text carries its id and parameters as the plan's do.
"""

from __future__ import annotations

import datetime as dt

from tuning.plan.notices import said, warning

FAMILY_SIZES = {
    "main-diameter": [140, 142, 145, 148, 150, 152, 155, 158, 160, 162, 165, 168, 170],
    "pilot-diameter": [35, 38, 40, 42, 45, 48, 50],
}


def _reference(elevation_m: float) -> dict:
    return {
        "elevation_m": elevation_m,
        "air_temperature_C": 20.0,
        "station_pressure_hPa": 1001.3,
        "relative_humidity_pct": 50.0,
        "dew_point_C": 9.3,
        "moist_air_density_kg_m3": 1.1861,
        "dry_air_density_kg_m3": 1.1763,
        "density_altitude_m": 250.0,
        "fuel": "E5 (invented)",
    }


def _jet(family: str, current: int, steps: int, stock: bool | None, source: dict) -> dict:
    sizes = FAMILY_SIZES[family]
    index = sizes.index(current)
    recommended = sizes[max(0, min(len(sizes) - 1, index + steps))]
    real_steps = sizes.index(recommended) - index
    if real_steps == 0:
        change, direction = said("setting/no-change", key="change"), "no change"
    else:
        direction = "richer" if real_steps > 0 else "leaner"
        change = said(
            "setting/jet-larger" if real_steps > 0 else "setting/jet-smaller", {"count": abs(real_steps)}, key="change"
        )
    at_hand = source["kind"] not in ("order", "shelf-or-order")
    return {
        "family": family,
        "coding": "diameter",
        "current": current,
        "ideal": round(recommended + 0.4 * (1 if steps >= 0 else -1), 1),
        "ideal_range": [round(recommended - 0.6, 1), round(recommended + 0.9, 1)],
        "recommended": recommended,
        "in_stock": None if stock is None else at_hand,
        "stock_choice": None if stock is None else (recommended if at_hand else None),
        "steps": real_steps,
        "direction": direction,
        **change,
        "source": source,
    }


WORK_MINUTES = {"mixture_screw": 2, "clip": 15, "main_jet": 10, "pilot_jet": 15}  # invented


def _source(kind: str, origin: str | None = None) -> dict:
    """Where a jet comes from, in the plan's shape (kind, origin, text, id, params)."""
    return said(f"source/{kind}", {"origin": origin} if origin else {}, kind=kind, origin=origin)


def _value(part: str, settings: dict, which: str):
    if part == "mixture_screw":
        return settings[part][f"{which}_turns"]
    return settings[part][which]


def _change(part: str, old, new, source: dict | None, screw_kind: str) -> dict:
    if part == "mixture_screw":
        direction = "richer" if (new > old) == (screw_kind == "fuel") else "leaner"
        text = said(
            "work/screw-out" if new > old else "work/screw-in",
            {"screw": screw_kind, "by_quarter_turns": abs(new - old), "to_turns": new, "direction": direction},
        )
    elif part == "clip":
        direction = "richer" if new > old else "leaner"
        text = said("work/clip", {"from": old, "to": new, "direction": direction})
    else:
        direction = "richer" if new > old else "leaner"
        words = {"part": part, "from": str(old), "to": str(new), "direction": direction}
        text = (
            said("work/jet-from", {**words, "source": {"id": source["id"], "params": source["params"]}})
            if source
            else said("work/jet", words)
        )
    return {
        "part": part,
        "from": old,
        "to": new,
        "direction": direction,
        "minutes": WORK_MINUTES[part],
        "source": source,
        **text,
    }


def _work_orders(entries_of: dict[str, list[dict]], sessions: list[dict]) -> list[dict]:
    """Per transition, every bike's changes: proven -> first session, session to session, last -> proven."""
    orders = []
    n = len(sessions)
    for t in range(n + 1):
        if t == 0:
            label = said("order/before", {"session": sessions[0]["name"]}, key="label")
        elif t == n:
            label = said("order/after-event", key="label")
        else:
            label = said(
                "order/between", {"previous": sessions[t - 1]["name"], "next": sessions[t]["name"]}, key="label"
            )
        bikes = []
        for bike, entries in entries_of.items():
            changes = []
            for part in ("main_jet", "pilot_jet", "clip", "mixture_screw"):
                settings = entries[0]["settings"]
                old = (
                    _value(part, settings, "current")
                    if t == 0
                    else _value(part, entries[t - 1]["settings"], "recommended")
                )
                new = (
                    _value(part, settings, "current") if t == n else _value(part, entries[t]["settings"], "recommended")
                )
                if old == new:
                    continue
                source = None
                if part in ("main_jet", "pilot_jet"):
                    source = _source("own") if t == n else entries[t]["settings"][part]["source"]
                changes.append(_change(part, old, new, source, settings["mixture_screw"]["kind"]))
            if changes:
                bikes.append({"bike": bike, "minutes": sum(c["minutes"] for c in changes), "changes": changes})
        orders.append(
            {
                "transition": t,
                **label,
                "after_session": sessions[t - 1]["name"] if t else None,
                "before_session": sessions[t]["name"] if t < n else None,
                "minutes": sum(b["minutes"] for b in bikes),
                "bikes": bikes,
            }
        )
    return orders


def _pick_list(entries_of: dict[str, list[dict]], stock: bool) -> list[dict]:
    """One row per (family, size) fitted or planned: fitted now, on the invented shelf, needed, to order."""
    fitted: dict[tuple, int] = {}
    needed: dict[tuple, int] = {}
    for entries in entries_of.values():
        for part in ("main_jet", "pilot_jet"):
            jet = entries[0]["settings"][part]
            fitted[(jet["family"], jet["current"])] = fitted.get((jet["family"], jet["current"]), 0) + 1
    n_sessions = len(next(iter(entries_of.values())))
    for s in range(n_sessions):
        count: dict[tuple, int] = {}
        for entries in entries_of.values():
            for part in ("main_jet", "pilot_jet"):
                jet = entries[s]["settings"][part]
                if jet["steps"]:
                    count[(jet["family"], jet["recommended"])] = count.get((jet["family"], jet["recommended"]), 0) + 1
        for key, c in count.items():
            needed[key] = max(needed.get(key, 0), c)
    rows = []
    for family, size in sorted(set(fitted) | set(needed)):
        in_stock = (3 if size % 2 == 0 else 0) if stock else None
        need, now = needed.get((family, size), 0), fitted.get((family, size), 0)
        rows.append(
            {
                "family": family,
                "size": size,
                "fitted_now": now,
                "in_stock": in_stock,
                "needed": need,
                "to_order": max(0, need - now - in_stock) if stock else None,
            }
        )
    rows.sort(key=lambda r: -(r["to_order"] or 0))  # to order first (stable)
    return rows


def _basis(b):
    """Bike 0 calibrated from its own readings, bike 1 from its model's, the others on the law (invented)."""
    if b > 1:
        return {
            "kind": "law",
            "readings": 0,
            "sessions": 0,
            "events": 0,
            "uncertainty_pct": None,
            "density_exponent": None,
            "density_exponent_sd": None,
            "offsets_pct": None,
            "law_kept": False,
            **said("basis/law"),
        }
    kind = "calibrated" if b == 0 else "model"
    params = {
        "sessions": {"id": "count/sessions", "params": {"count": 6}},
        "events": {"id": "count/events", "params": {"count": 3}},
        "uncertainty_pct": 2,
    }
    return {
        "kind": kind,
        "readings": 40,
        "sessions": 6,
        "events": 3,
        "uncertainty_pct": 2.0,
        "density_exponent": 0.62,
        "density_exponent_sd": 0.05,
        "offsets_pct": {"pilot": None, "needle": 1.2, "main": 4.8},
        "law_kept": False,
        **said(f"basis/{kind}", params),
    }


def make_plan(n_bikes: int = 3, n_sessions: int = 2, bike_ids: list[str] | None = None, stock: bool = True) -> dict:
    """Return an invented plan document for ``n_bikes`` bikes x ``n_sessions`` sessions.

    All numbers are made up (see the module docstring). ``bike_ids`` overrides the generated ids
    (to test awkward ids such as ``../x`` or ``<b>T1</b>``); ``stock=False`` is a fleet without a
    stock list. Every fourth bike (the 4th, 8th, ...) is in danger: its main jet must be ordered
    (with a stock list) and its first session is predicted lean; the second bike takes its main
    jet off the first.
    """
    ids = list(bike_ids) if bike_ids else [f"T{i + 1:03d}" for i in range(n_bikes)]
    tz = dt.timezone(dt.timedelta(hours=1))
    day = dt.datetime(2026, 6, 13, 8, 0, tzinfo=tz)
    sessions = []
    for s in range(n_sessions):
        start = day + dt.timedelta(hours=2 * s)
        sessions.append(
            {
                "name": f"Session {chr(65 + s)}",
                "start": start.isoformat(),
                "end": (start + dt.timedelta(hours=1, minutes=30)).isoformat(),
                "power_vs_sae_j1349_pct": round(84.0 - s, 1),
                "sae_j1349_within_range": False,
            }
        )  # invented
    n_hours = 2 * n_sessions + 1
    weather = []
    for h in range(n_hours):
        t = 6.0 + 2.5 * h
        weather.append(
            {
                "time": (day + dt.timedelta(hours=h)).isoformat(),
                "air_temperature_C": round(t, 1),
                "station_pressure_hPa": round(842.0 - 0.3 * h, 1),
                "relative_humidity_pct": round(80 - 6 * h, 1),
                "dew_point_C": round(3.0 + 0.2 * h, 1),
                "moist_air_density_kg_m3": round(1.05 - 0.008 * h, 4),
                "dry_air_density_kg_m3": round(1.045 - 0.008 * h, 4),
                "density_altitude_m": round(1650 + 90 * h, 0),
                "area_factor": round(0.945 - 0.004 * h, 4),
                "sae_j1349_cf": round(1.17 + 0.01 * h, 3),
                "icing_risk": 3 if t < 10 else 1,
            }
        )
    entries = []
    entries_of: dict[str, list[dict]] = {}
    bikes = []
    for b, bike in enumerate(ids):
        strokes = 2 if b % 2 == 0 else 4
        main_current = FAMILY_SIZES["main-diameter"][6 + b % 3]
        pilot_current = FAMILY_SIZES["pilot-diameter"][3]
        in_danger = b % 4 == 3
        main_kind = "order" if in_danger else "bike" if b % 4 == 1 else "shelf"
        if not stock and main_kind != "bike":
            main_kind = "shelf-or-order"
        changed_before = {"main_jet": False, "pilot_jet": False}
        for s, session in enumerate(sessions):
            hours = weather[2 * s : 2 * s + 3]
            main_steps = -2 - (s % 2) + (b % 2)
            pilot_steps = -1 if s < 2 else 0
            sources = {}
            for part, steps in (("main_jet", main_steps), ("pilot_jet", pilot_steps)):
                if steps:
                    kind = main_kind if part == "main_jet" else ("shelf" if stock else "shelf-or-order")
                    sources[part] = _source(kind, ids[b - 1] if kind == "bike" else None)
                    changed_before[part] = True
                else:
                    sources[part] = _source("own" if changed_before[part] else "fitted")
            main = _jet("main-diameter", main_current, main_steps, True if stock else None, sources["main_jet"])
            pilot = _jet("pilot-diameter", pilot_current, pilot_steps, True if stock else None, sources["pilot_jet"])
            screw_kind = "air" if strokes == 2 else "fuel"
            warnings = []
            if in_danger and stock and main["steps"]:
                warnings.append(
                    warning(
                        "no-safe-jet",
                        "no-safe-jet/order",
                        {
                            "part": "main_jet",
                            "size": str(main["recommended"]),
                            "family": main["family"],
                            "fitted": str(main["current"]),
                            "lean_pct": 6,
                        },
                    )
                )
            if in_danger and s == 0:
                warnings.append(
                    warning(
                        "predicted-lean",
                        params={
                            "lean_pct": 6,
                            "throttle": {"id": "throttle/span", "params": {"low_pct": 20, "high_pct": 40}},
                            "cure": {"id": "cure/clip-lower", "params": {}},
                        },
                    )
                )
            if hours[0]["air_temperature_C"] < 10:
                warnings.append(warning("cold-start", params={"start_C": hours[0]["air_temperature_C"]}))
            warnings.append(warning("icing-risk"))
            af = [h["area_factor"] for h in hours]
            entry = {
                "bike": bike,
                "model": f"Trail {125 if strokes == 2 else 250} {'2T' if strokes == 2 else '4T'} (invented)",
                "session": session["name"],
                "start": session["start"],
                "end": session["end"],
                "notes": "new top end last month (invented)" if b == 0 else "",
                "strokes": strokes,
                "premix_ratio": 40.0 if strokes == 2 else None,
                "density_exponent": 0.5,
                "reference": _reference(120.0),
                "hours": [
                    {
                        k: h[k]
                        for k in (
                            "time",
                            "air_temperature_C",
                            "station_pressure_hPa",
                            "relative_humidity_pct",
                            "moist_air_density_kg_m3",
                            "dry_air_density_kg_m3",
                            "density_altitude_m",
                            "area_factor",
                        )
                    }
                    for h in hours
                ],
                "summary": {
                    "air_temperature_C_min": min(h["air_temperature_C"] for h in hours),
                    "air_temperature_C_max": max(h["air_temperature_C"] for h in hours),
                    "station_pressure_hPa_mean": round(sum(h["station_pressure_hPa"] for h in hours) / 3, 1),
                    "relative_humidity_pct_mean": round(sum(h["relative_humidity_pct"] for h in hours) / 3, 1),
                    "density_altitude_m_min": min(h["density_altitude_m"] for h in hours),
                    "density_altitude_m_max": max(h["density_altitude_m"] for h in hours),
                    "area_factor_min": min(af),
                    "area_factor_mean": round(sum(af) / 3, 4),
                    "area_factor_max": max(af),
                    "power_vs_reference_pct": round(85.5 - s, 1),
                    "air_density_vs_reference_pct": round(-13.0 - s, 1),  # invented
                },
                "settings": {
                    "main_jet": main,
                    "pilot_jet": pilot,
                    "clip": {
                        "needle": "N-6 (invented)",
                        "current": 3,
                        "recommended": 2 if s % 2 == 0 else 3,
                        "steps": -1 if s % 2 == 0 else 0,
                        "direction": "leaner" if s % 2 == 0 else "no change",
                        **(
                            said("setting/clip-higher", {"count": 1, "from": 3, "to": 2}, key="change")
                            if s % 2 == 0
                            else said("setting/no-change", key="change")
                        ),
                        "assumed_geometry": True,
                        "grooves": 5,
                    },
                    "mixture_screw": {
                        "kind": screw_kind,
                        "current_turns": 1.5,
                        "recommended_turns": 2.0 if screw_kind == "air" else 1.0,
                        "change_turns": 0.5 if screw_kind == "air" else -0.5,
                        "direction": "leaner",
                        **said(
                            "setting/screw-out" if screw_kind == "air" else "setting/screw-in",
                            {"screw": screw_kind, "by_quarter_turns": 0.5, "direction": "leaner"},
                            key="change",
                        ),
                        "usable_range": [1.0, 3.0],
                        "range_assumed": True,
                    },
                    "float_level_mm": 8.0 if strokes == 4 else None,
                },
                "mixture_curve": {
                    "throttle": [round(0.05 * i, 2) for i in range(21)],
                    "current_afr": [round(12.9 - 0.9 + 0.02 * i, 2) for i in range(21)],
                    "recommended_afr": [round(12.8 + 0.01 * (i % 3), 2) for i in range(21)],
                    "reference_afr": 12.8,
                    "target_band_afr": [12.3, 13.2],
                    "time": session["start"],
                    "basis": "leanest hour of the session (largest required area factor)",
                    "delivered_area_factor": {
                        "pilot": 0.97,
                        "needle": [round(0.96 + 0.001 * i, 4) for i in range(21)],
                        "main": 0.95,
                    },
                },
                "rejet_temperatures_C": {
                    "below": 2.0,
                    "below_jet": main["recommended"] + 3,
                    "above": 31.0,
                    "above_jet": None,
                },
                "power_vs_reference_pct": round(85.5 - s, 1),
                "checks": [
                    said("check/float-level", {"float_level_mm": 8.0})
                    if strokes == 4
                    else said("check/float-level-unknown"),
                    said("check/plug"),
                    said("check/choke", {"t_min_C": min(h["air_temperature_C"] for h in hours)}),
                ],
                "warnings": warnings,  # danger first, as the plan sorts them
            }
            entries.append(entry)
            entries_of.setdefault(bike, []).append(entry)
        notices = [
            warning("assumed-needle-geometry", params={"groove_area_step": 10}),
            warning("assumed-screw-range", params={"usable_low_turns": 1, "usable_high_turns": 3}),
        ]
        bikes.append(
            {
                "bike": bike,
                "model": entries_of[bike][0]["model"],
                "danger": any(w["severity"] == "danger" for e in entries_of[bike] for w in e["warnings"]),
                "notices": notices,
                "basis": _basis(b),
            }
        )
    warnings_count = sum(len(e["warnings"]) for e in entries) + sum(len(b["notices"]) for b in bikes)
    return {
        "format": "carbfleet-plan/3",
        "carbfleet_version": "0.0.0+invented",
        "fleet": "Invented school fleet",
        "event": "Invented hill day",
        "site": {"name": "Invented Ridge", "elevation_m": 1540.0, "time_zone": "Europe/Paris"},
        "reference": _reference(120.0),
        "policy": {"name": "event", "change_threshold": 0.03, "lean_guard": 0.02, "work_minutes": dict(WORK_MINUTES)},
        "sessions": sessions,
        "weather": weather,
        "pick_list": _pick_list(entries_of, stock),
        "work_orders": _work_orders(entries_of, sessions),
        "bikes": bikes,
        "warnings_count": warnings_count,
        "entries": entries,
    }
