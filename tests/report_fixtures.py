"""A plan document in the shape of ``tuning.plan.make_plan`` for report tests.

Every value here is INVENTED: plausible numbers for N bikes x M sessions at an invented mountain
site, made up so the report pipeline can be developed and tested without the physics. Nothing in
this file is a physical result and no test may treat it as one; tests only check that the report
shows what the document holds.
"""

from __future__ import annotations

import datetime as dt

FAMILY_SIZES = {
    "main-diameter": [140, 142, 145, 148, 150, 152, 155, 158, 160, 162, 165, 168, 170],
    "pilot-diameter": [35, 38, 40, 42, 45, 48, 50],
}


def _reference(elevation_m: float) -> dict:
    return {
        "elevation_m": elevation_m, "air_temperature_C": 20.0, "station_pressure_hPa": 1001.3,
        "relative_humidity_pct": 50.0, "dew_point_C": 9.3, "moist_air_density_kg_m3": 1.1861,
        "dry_air_density_kg_m3": 1.1763, "density_altitude_m": 250.0, "fuel": "E5 (invented)",
    }


def _jet(family: str, current: int, steps: int, stock: bool) -> dict:
    sizes = FAMILY_SIZES[family]
    index = sizes.index(current)
    recommended = sizes[max(0, min(len(sizes) - 1, index + steps))]
    real_steps = sizes.index(recommended) - index
    if real_steps == 0:
        change, direction = "no change", "no change"
    else:
        word = "larger" if real_steps > 0 else "smaller"
        direction = "richer" if real_steps > 0 else "leaner"
        n = abs(real_steps)
        change = f"{n} size{'s' if n > 1 else ''} {word}: {direction}"
    return {
        "family": family, "coding": "diameter", "current": current,
        "ideal": round(recommended + 0.4 * (1 if steps >= 0 else -1), 1),
        "ideal_range": [round(recommended - 0.6, 1), round(recommended + 0.9, 1)],
        "recommended": recommended, "in_stock": stock if real_steps else True,
        "stock_choice": recommended if stock else None, "steps": real_steps,
        "direction": direction, "change": change,
    }


def make_plan(n_bikes: int = 3, n_sessions: int = 2, bike_ids: list[str] | None = None) -> dict:
    """Return an invented plan document for ``n_bikes`` bikes x ``n_sessions`` sessions.

    All numbers are made up (see the module docstring). ``bike_ids`` overrides the generated ids
    (to test awkward ids such as ``../x`` or ``<b>T1</b>``).
    """
    ids = list(bike_ids) if bike_ids else [f"T{i + 1:03d}" for i in range(n_bikes)]
    tz = dt.timezone(dt.timedelta(hours=1))
    day = dt.datetime(2026, 6, 13, 8, 0, tzinfo=tz)
    sessions = []
    for s in range(n_sessions):
        start = day + dt.timedelta(hours=2 * s)
        sessions.append({"name": f"Session {chr(65 + s)}", "start": start.isoformat(),
                         "end": (start + dt.timedelta(hours=1, minutes=30)).isoformat()})
    n_hours = 2 * n_sessions + 1
    weather = []
    for h in range(n_hours):
        t = 6.0 + 2.5 * h
        weather.append({
            "time": (day + dt.timedelta(hours=h)).isoformat(), "air_temperature_C": round(t, 1),
            "station_pressure_hPa": round(842.0 - 0.3 * h, 1), "relative_humidity_pct": round(80 - 6 * h, 1),
            "dew_point_C": round(3.0 + 0.2 * h, 1), "moist_air_density_kg_m3": round(1.05 - 0.008 * h, 4),
            "dry_air_density_kg_m3": round(1.045 - 0.008 * h, 4),
            "density_altitude_m": round(1650 + 90 * h, 0), "area_factor": round(0.945 - 0.004 * h, 4),
            "sae_j1349_cf": round(1.17 + 0.01 * h, 3), "icing_risk": 3 if t < 10 else 1,
        })
    entries = []
    warnings_count = 0
    shelf_needed: dict[tuple[str, int], int] = {}
    for b, bike in enumerate(ids):
        strokes = 2 if b % 2 == 0 else 4
        main_current = FAMILY_SIZES["main-diameter"][6 + b % 3]
        pilot_current = FAMILY_SIZES["pilot-diameter"][3]
        for s, session in enumerate(sessions):
            hours = weather[2 * s: 2 * s + 3]
            main = _jet("main-diameter", main_current, -2 - (s % 2) + (b % 2), stock=(b % 4 != 3))
            pilot = _jet("pilot-diameter", pilot_current, -1 if s < 2 else 0, stock=True)
            screw_kind = "air" if strokes == 2 else "fuel"
            warnings = [{"code": "assumed-needle-geometry",
                         "message": "needle geometry assumed from the model default (invented)"}]
            if main["in_stock"] is False:
                warnings.append({"code": "stock-shortage",
                                 "message": f"main jet {main['recommended']} not on the shelf (invented)"})
            if hours[0]["air_temperature_C"] < 10:
                warnings.append({"code": "cold-start",
                                 "message": "cold morning: use the choke, warm up fully (invented)"})
            warnings_count += len(warnings)
            for circuit in (main, pilot):
                if circuit["steps"]:
                    key = (circuit["family"], circuit["recommended"])
                    shelf_needed[key] = shelf_needed.get(key, 0) + 1
            af = [h["area_factor"] for h in hours]
            entries.append({
                "bike": bike, "model": f"Trail {125 if strokes == 2 else 250} {'2T' if strokes == 2 else '4T'} (invented)",
                "session": session["name"], "start": session["start"], "end": session["end"],
                "notes": "new top end last month (invented)" if b == 0 else "",
                "strokes": strokes, "premix_ratio": 40.0 if strokes == 2 else None,
                "density_exponent": 0.5, "reference": _reference(120.0),
                "hours": [{k: h[k] for k in ("time", "air_temperature_C", "station_pressure_hPa",
                                               "relative_humidity_pct", "moist_air_density_kg_m3",
                                               "dry_air_density_kg_m3", "density_altitude_m",
                                               "area_factor")} for h in hours],
                "summary": {
                    "air_temperature_C_min": min(h["air_temperature_C"] for h in hours),
                    "air_temperature_C_max": max(h["air_temperature_C"] for h in hours),
                    "station_pressure_hPa_mean": round(sum(h["station_pressure_hPa"] for h in hours) / 3, 1),
                    "relative_humidity_pct_mean": round(sum(h["relative_humidity_pct"] for h in hours) / 3, 1),
                    "density_altitude_m_min": min(h["density_altitude_m"] for h in hours),
                    "density_altitude_m_max": max(h["density_altitude_m"] for h in hours),
                    "area_factor_min": min(af), "area_factor_mean": round(sum(af) / 3, 4),
                    "area_factor_max": max(af), "power_vs_reference_pct": round(85.5 - s, 1),
                },
                "settings": {
                    "main_jet": main, "pilot_jet": pilot,
                    "clip": {"needle": "N-6 (invented)", "current": 3, "recommended": 2 if s % 2 == 0 else 3,
                             "steps": -1 if s % 2 == 0 else 0,
                             "direction": "leaner" if s % 2 == 0 else "no change",
                             "change": "clip 1 groove higher: leaner" if s % 2 == 0 else "no change",
                             "assumed_geometry": True, "grooves": 5},
                    "mixture_screw": {"kind": screw_kind, "current_turns": 1.5,
                                      "recommended_turns": 2.0 if screw_kind == "air" else 1.0,
                                      "change_turns": 0.5 if screw_kind == "air" else -0.5,
                                      "direction": "leaner",
                                      "change": "screw ½ turn out: leaner" if screw_kind == "air" else "screw ½ turn in: leaner",
                                      "usable_range": [1.0, 3.0], "range_assumed": True},
                    "float_level_mm": 8.0 if strokes == 4 else None,
                },
                "mixture_curve": {
                    "throttle": [round(0.05 * i, 2) for i in range(21)],
                    "current_afr": [round(12.9 - 0.9 + 0.02 * i, 2) for i in range(21)],
                    "recommended_afr": [round(12.8 + 0.01 * (i % 3), 2) for i in range(21)],
                    "reference_afr": 12.8, "target_band_afr": [12.3, 13.2],
                    "time": session["start"], "basis": "leanest hour of the session (largest required area factor)",
                },
                "rejet_temperatures_C": {"below": 2.0, "below_jet": main["recommended"] + 3,
                                         "above": 31.0, "above_jet": None},
                "power_vs_reference_pct": round(85.5 - s, 1),
                "checks": ["check float level before fitting (invented)", "read the plug after the first session (invented)",
                           "choke on a cold morning (invented)"],
                "warnings": warnings,
            })
    pick_list = []
    for (family, size), needed in shelf_needed.items():
        in_stock = 3 if size % 2 == 0 else 0
        pick_list.append({"family": family, "size": size, "needed": needed, "in_stock": in_stock,
                          "short": max(0, needed - in_stock)})
    pick_list.sort(key=lambda r: (r["short"] == 0, r["family"], r["size"]))
    return {
        "format": "carbfleet-plan/1",
        "carbfleet_version": "0.0.0+invented", "fleet": "Invented school fleet", "event": "Invented hill day",
        "site": {"name": "Invented Ridge", "elevation_m": 1540.0, "time_zone": "Europe/Paris"},
        "reference": _reference(120.0), "sessions": sessions, "weather": weather,
        "pick_list": pick_list, "warnings_count": warnings_count, "entries": entries,
    }
