"""The plan document (``carbfleet-plan/3``): the stages' records put into words and numbers.

JSON-ready: only str, int, float, bool, None, list and dict; floats rounded to their printed
precision; no clock. Described field by field in ``tuning/schemas/recommendations.schema.json``.
"""

from __future__ import annotations

import warnings as pywarnings
from dataclasses import dataclass
from datetime import UTC, datetime
from zoneinfo import ZoneInfo

import numpy as np

from tuning import __version__, air, circuits, constants, metering
from tuning.gcpause import gc_paused
from tuning.plan.calibrate import LAW_BASIS
from tuning.plan.clip import MODE_ASSUMED, MODE_NONE, THROTTLE
from tuning.plan.hours import air_at, epoch
from tuning.plan.notices import BIKE_CODES, printed, said, severity_rank, warning
from tuning.plan.policy import TURNS_NOISE, WORK_MINUTES
from tuning.plan.pool import KINDS
from tuning.plan.window import LEAN_GUARD

__all__ = ["FORMAT", "TARGET_BAND", "assemble", "rounded", "jet_number"]

FORMAT = "carbfleet-plan/3"
#: Acceptable mixture, × reference AFR: 5 % rich .. the lean guard (our choice).
TARGET_BAND = (0.95, 1.0 + LEAN_GUARD)
FACTOR_RANGE = (0.80, 1.15)  #: area factors the model is trusted in (our choice)
COLD_START_K = constants.ZERO_CELSIUS + 5.0  #: below this at the session start: cold-start warning
CHOKE_K = constants.ZERO_CELSIUS + 10.0  #: below this during the session: choke check
HOT_FUEL_K = constants.ZERO_CELSIUS + 30.0  #: above this: hot-fuel warning (from memory)
#: Icing band from which a note is given: only the serious one. The bands (tuning.air.ICING_BANDS)
#: are drawn from memory after light-aircraft charts, whose carburetors sit far from engine heat;
#: a motorcycle carburetor beside a warm engine ices less, so light and moderate are no warning.
ICING_WARN_LEVEL = 3
#: Float round-off ignored before the predicted mixture counts as leaner than the lean guard [1].
LEAN_NOTICE_ROUND_OFF = 1e-9

HOT_FUEL_C = int(round(HOT_FUEL_K - constants.ZERO_CELSIUS))  #: the same threshold as said in the words [°C]


def rounded(values, digits):
    """Round an array and return plain Python objects; NaN and ±inf become None."""
    arr = np.round(np.asarray(values, float), digits)
    if np.isfinite(arr).all():
        return arr.tolist()
    if arr.ndim == 0:
        return None
    return np.where(np.isfinite(arr), arr, None).tolist()


def jet_number(value):
    """A jet size for output: int when integral, else rounded to 2 decimals; None stays."""
    if value is None or value != value:
        return None
    value = float(value)
    return int(value) if value.is_integer() else round(value, 2)


def _iso(seconds, zone):
    return datetime.fromtimestamp(int(seconds), UTC).astimezone(zone).isoformat()


def _air_fields(state, index=None):
    pick = (lambda a: np.asarray(a, float)[index]) if index is not None else (lambda a: np.asarray(a, float))
    return {
        "air_temperature_C": rounded(pick(state.air_temperature) - constants.ZERO_CELSIUS, 2),
        "station_pressure_hPa": rounded(pick(state.station_pressure) / 100.0, 2),
        "relative_humidity_pct": rounded(pick(state.relative_humidity) * 100.0, 1),
        "dew_point_C": rounded(pick(state.dew_point) - constants.ZERO_CELSIUS, 2),
        "moist_air_density_kg_m3": rounded(pick(state.moist_air_density), 4),
        "dry_air_density_kg_m3": rounded(pick(state.dry_air_density), 4),
        "density_altitude_m": rounded(pick(state.density_altitude), 0),
    }


def _reference_dict(conditions, state):
    fields = _air_fields(state, 0)
    return {
        "elevation_m": rounded(conditions.elevation, 1),
        **{
            k: fields[k]
            for k in (
                "air_temperature_C",
                "station_pressure_hPa",
                "relative_humidity_pct",
                "dew_point_C",
                "moist_air_density_kg_m3",
                "dry_air_density_kg_m3",
                "density_altitude_m",
            )
        },
        "fuel": conditions.fuel,
    }


def _jet_words(steps):
    """(direction, text id, params) of a jet's change by ``steps`` sizes of its family."""
    if steps == 0:
        return "no change", "setting/no-change", {}
    if steps > 0:
        return "richer", "setting/jet-larger", {"count": abs(steps)}
    return "leaner", "setting/jet-smaller", {"count": abs(steps)}


def _quarters(turns):
    """An amount of turns rounded to the quarter said in the words (a parameter ``*_quarter_turns``)."""
    return int(round(abs(float(turns)) * 4)) / 4


def _steps(fleet, plan):
    """Family steps from the fitted to the recommended size, per row."""
    steps = np.zeros(len(plan.family), np.int64)
    for name in set(plan.family.tolist()):
        r = np.flatnonzero(plan.family == name)
        sizes = np.asarray(fleet.jet_families[name].sizes, float)
        cur, rec = plan.current[r], plan.recommended[r]
        up = np.searchsorted(sizes, rec, "right") - np.searchsorted(sizes, cur, "right")
        down = np.searchsorted(sizes, rec, "left") - np.searchsorted(sizes, cur, "left")
        steps[r] = np.where(rec > cur, up, np.where(rec < cur, down, 0))
    return steps


def _throttle_span(mask):
    """'25%–38% throttle' for the openings of THROTTLE where ``mask`` holds (first to last), as a
    text parameter ``{"id", "params"}``."""
    idx = np.flatnonzero(mask)
    lo, hi = float(THROTTLE[idx[0]]), float(THROTTLE[idx[-1]])
    if hi > lo:
        return {
            "id": "throttle/span",
            "params": {"low_pct": printed(lo * 100, ".0f"), "high_pct": printed(hi * 100, ".0f")},
        }
    return {"id": "throttle/one", "params": {"low_pct": printed(lo * 100, ".0f")}}


def assemble(
    fleet,
    event,
    rows,
    hours,
    refs,
    main,
    idle,
    clip,
    curves,
    rejet,
    allocation,
    pick_list,
    policy_name,
    threshold,
    circuit_rows=None,
) -> dict:
    """The plan document from the stages' records (see the schema for every field); ``circuit_rows``
    (:class:`tuning.plan.calibrate.CircuitRows`) the rows each circuit was planned on."""
    cols = _columns(fleet, event, rows, hours, refs, main, idle, clip, curves, allocation, circuit_rows)
    entries, bike_notices, in_danger = _entries(fleet, rows, hours, refs, main, idle, clip, curves, rejet, cols)
    bikes_out = _bikes(fleet, bike_notices, in_danger, circuit_rows)
    work_orders = _work_orders(fleet, rows, main, idle, clip, allocation, cols.sessions, cols.bike_ids)
    warnings_count = sum(len(e["warnings"]) for e in entries) + sum(len(b["notices"]) for b in bikes_out)
    return {
        "format": FORMAT,
        "carbfleet_version": __version__,
        "fleet": fleet.name,
        "event": event.name,
        "site": {
            "name": event.site.name,
            "elevation_m": rounded(event.site.elevation, 1),
            "time_zone": event.site.time_zone,
        },
        "reference": cols.ref_dicts[refs.fleet],
        "policy": {
            "name": policy_name,
            "change_threshold": threshold,
            "lean_guard": LEAN_GUARD,
            "work_minutes": dict(WORK_MINUTES),
        },
        "sessions": cols.session_dicts,
        "weather": _weather_rows(event, hours, refs, cols.zone),
        "pick_list": [dict(p, size=jet_number(p["size"])) for p in pick_list],
        "work_orders": work_orders,
        "bikes": bikes_out,
        "warnings_count": warnings_count,
        "entries": entries,
    }


@dataclass(frozen=True)
class _Columns:
    """What the entries read, worked out once for every row, session and hour (plain lists, rounded once)."""

    zone: ZoneInfo
    sessions: list
    session_dicts: list  # the document's sessions, with their SAE J1349 power
    ref_dicts: list  # per reference conditions
    stats: list  # per session (_session_stats)
    ridden: list  # per session: where it is ridden (_session_heights), or None at the site
    settings: list  # the proven settings, per row
    bike_ids: list
    hour_iso: list  # per session hour
    hour_base: list  # per session hour: the air fields of an entry's hours
    required: np.ndarray  # per row and hour, rounded
    f_min: list
    f_mean: list
    f_max: list
    power: list
    current_afr: list
    recommended_afr: list
    reference_afr: float
    band: list
    sources: dict
    main_cols: dict
    pilot_cols: dict
    delivered: list  # per row: each circuit's delivered area factor (_delivered_columns)
    has_stock: bool


def _columns(fleet, event, rows, hours, refs, main, idle, clip, curves, allocation, circuit_rows) -> _Columns:
    zone = ZoneInfo(event.site.time_zone)
    sessions = list(event.sessions)
    s_count = rows.n_sessions
    reference_afr = float(fleet.reference_afr)
    ref_dicts = [_reference_dict(c, s) for c, s in zip(refs.conditions, refs.states)]
    session_dicts = [
        {"name": s.name, "start": _iso(epoch(s.start), zone), "end": _iso(epoch(s.end), zone)} for s in sessions
    ]
    hour_iso = [_iso(t, zone) for t in hours.times]
    hour_air = _air_fields(hours.air)
    hour_base = [
        {
            "time": hour_iso[i],
            **{
                k: hour_air[k][i]
                for k in (
                    "air_temperature_C",
                    "station_pressure_hPa",
                    "relative_humidity_pct",
                    "moist_air_density_kg_m3",
                    "dry_air_density_kg_m3",
                    "density_altitude_m",
                )
            },
        }
        for i in range(len(hours.times))
    ]
    stats = _session_stats(hours, s_count)
    for d, stat in zip(session_dicts, stats):
        d.update(
            power_vs_sae_j1349_pct=stat["power_vs_sae_j1349_pct"], sae_j1349_within_range=stat["sae_j1349_within_range"]
        )
    ridden = _session_heights(event, hours, s_count)
    for d, where in zip(session_dicts, ridden):
        if where is not None:
            d["heights"] = {k: v for k, v in where.items() if k != "densest_level"}
    pilot = idle.pilot
    main_steps, pilot_steps = _steps(fleet, main), _steps(fleet, pilot)
    return _Columns(
        zone=zone,
        sessions=sessions,
        session_dicts=session_dicts,
        ref_dicts=ref_dicts,
        stats=stats,
        ridden=ridden,
        settings=[fleet.bikes[b].settings for b in rows.bike],
        bike_ids=[b.id for b in fleet.bikes],
        hour_iso=hour_iso,
        hour_base=hour_base,
        required=np.round(rows.required, 4),
        f_min=rounded(np.nanmin(rows.required, axis=1), 4),
        f_mean=rounded(np.nanmean(rows.required, axis=1), 4),
        f_max=rounded(np.nanmax(rows.required, axis=1), 4),
        power=rounded(curves["power"], 1),
        current_afr=np.round(curves["current_afr"], 2).tolist(),
        recommended_afr=np.round(curves["recommended_afr"], 2).tolist(),
        reference_afr=reference_afr,
        band=[round(reference_afr * TARGET_BAND[0], 2), round(reference_afr * TARGET_BAND[1], 2)],
        sources=_sources(allocation, rows),
        main_cols=_jet_columns(main, main_steps, rows if circuit_rows is None else circuit_rows.main),
        pilot_cols=_jet_columns(pilot, pilot_steps, rows if circuit_rows is None else circuit_rows.pilot),
        delivered=_delivered_columns(main, idle, clip),
        has_stock=bool(fleet.stock),
    )


def _entries(fleet, rows, hours, refs, main, idle, clip, curves, rejet, cols):
    """One entry per bike × session; the bike-level notices (first of each code) set aside per bike,
    and the bikes with a danger warning in some session."""
    s_count = rows.n_sessions
    with gc_paused():  # many small dicts, no cycles
        entries, bike_notices, in_danger = [], {bid: {} for bid in cols.bike_ids}, set()
        for r in range(len(rows.bike)):
            b, s = int(rows.bike[r]), int(rows.session[r])
            bike, st, stat = fleet.bikes[b], cols.settings[r], cols.stats[s]
            model = fleet.models[bike.model]
            found = []  # warnings of this entry, bike-level ones set aside
            settings_out = _settings_dict(fleet, main, idle, clip, curves, cols, r, s, st, found)
            _lean_check(curves, r, found, idle, clip, s_count)
            _weather_notes(stat, model, found)
            checks = _checks(st, model, stat)
            session_warnings = _set_aside(found, bike_notices[bike.id])
            if any(w["severity"] == "danger" for w in session_warnings):
                in_danger.add(bike.id)
            entries.append(
                _entry(
                    bike,
                    model,
                    rows,
                    hours,
                    refs,
                    main,
                    curves,
                    rejet,
                    cols,
                    r,
                    s,
                    settings_out,
                    checks,
                    session_warnings,
                )
            )
    return entries, bike_notices, in_danger


def _settings_dict(fleet, main, idle, clip, curves, cols, r, s, st, found) -> dict:
    """An entry's settings (main and pilot jet, clip, screw, float level); their warnings go to ``found``."""
    session_name = cols.sessions[s].name
    main_out = _jet_dict(fleet, main, cols.main_cols, r, "main_jet", cols.sources, cols.has_stock, session_name, found)
    pilot_out = _jet_dict(
        fleet, idle.pilot, cols.pilot_cols, r, "pilot_jet", cols.sources, cols.has_stock, session_name, found
    )
    if curves["factor_min"][r] < FACTOR_RANGE[0] or curves["factor_max"][r] > FACTOR_RANGE[1]:
        found.append(
            warning(
                "factor-out-of-range",
                params={
                    "factor_min": cols.f_min[r],
                    "factor_max": cols.f_max[r],
                    "range_low": FACTOR_RANGE[0],
                    "range_high": FACTOR_RANGE[1],
                },
            )
        )
    clip_out = _clip_dict(clip, r, st, found)
    screw_out = _screw_dict(idle, r, st, found)
    return {
        "main_jet": main_out,
        "pilot_jet": pilot_out,
        "clip": clip_out,
        "mixture_screw": screw_out,
        "float_level_mm": None if st.float_level is None else round(st.float_level * 1000.0, 2),
    }


def _set_aside(found, notices) -> list:
    """Move the bike-level warnings of ``found`` to the bike's ``notices`` (the first of each code) and
    return the session's own warnings, the most severe first."""
    for w in found:
        if w["code"] in BIKE_CODES:
            notices.setdefault(w["code"], w)
    return sorted((w for w in found if w["code"] not in BIKE_CODES), key=lambda w: severity_rank(w["severity"]))


def _entry(
    bike, model, rows, hours, refs, main, curves, rejet, cols, r, s, settings_out, checks, session_warnings
) -> dict:
    """One bike × session entry of the document."""
    stat = cols.stats[s]
    reference = int(refs.of_bike[int(rows.bike[r])])
    n_h = int(hours.hours_per_level[s])
    base = hours.offsets[s]
    where = cols.ridden[s]
    first = n_h * (where["densest_level"] if where is not None else 0)  # the hours at the densest height
    hours_out = [
        dict(h, area_factor=f)
        for h, f in zip(
            cols.hour_base[base + first : base + first + n_h], cols.required[r, first : first + n_h].tolist()
        )
    ]
    entry = {
        "bike": bike.id,
        "model": bike.model,
        "session": cols.sessions[s].name,
        "start": cols.session_dicts[s]["start"],
        "end": cols.session_dicts[s]["end"],
        "notes": bike.notes,
        "strokes": int(model.strokes),
        "premix_ratio": None if bike.premix_ratio is None else round(float(bike.premix_ratio), 2),
        "density_exponent": round(float(bike.density_exponent), 4),
        "reference": cols.ref_dicts[reference],
        "hours": hours_out,
        "summary": {
            "air_temperature_C_min": stat["air_temperature_C_min"],
            "air_temperature_C_max": stat["air_temperature_C_max"],
            "station_pressure_hPa_mean": stat["station_pressure_hPa_mean"],
            "relative_humidity_pct_mean": stat["relative_humidity_pct_mean"],
            "density_altitude_m_min": stat["density_altitude_m_min"],
            "density_altitude_m_max": stat["density_altitude_m_max"],
            "area_factor_min": cols.f_min[r],
            "area_factor_mean": cols.f_mean[r],
            "area_factor_max": cols.f_max[r],
            "power_vs_reference_pct": cols.power[r],
            "air_density_vs_reference_pct": round(
                100.0 * (stat["moist_air_density"] / float(refs.moist[reference]) - 1.0), 1
            ),
        },
        "settings": settings_out,
        "mixture_curve": {
            "throttle": THROTTLE.tolist(),
            "current_afr": cols.current_afr[r],
            "recommended_afr": cols.recommended_afr[r],
            "reference_afr": round(cols.reference_afr, 2),
            "target_band_afr": cols.band,
            "time": cols.hour_iso[base + int(curves["worst_hour"][r])],
            "basis": "leanest hour of the session (largest required area factor)",
            "delivered_area_factor": cols.delivered[r],
        },
        "rejet_temperatures_C": {k: rejet[k][r] for k in ("below", "below_jet", "above", "above_jet")},
        "power_vs_reference_pct": cols.power[r],
        "checks": checks,
        "warnings": session_warnings,
    }
    if where is not None:
        entry["heights"] = _entry_heights(where, rows, hours, refs, main, r, n_h)
    return entry


def _bikes(fleet, bike_notices, in_danger, circuit_rows) -> list:
    """Per bike: its notices (bike-level warnings), whether some session of it is in danger, and what
    its settings rest on."""
    bikes_out = []
    for i, bike in enumerate(fleet.bikes):
        notices = list(bike_notices[bike.id].values())
        bikes_out.append(
            {
                "bike": bike.id,
                "model": bike.model,
                "danger": bike.id in in_danger,
                "notices": notices,
                "basis": _basis_dict(circuit_rows.basis[i] if circuit_rows is not None else None),
            }
        )
    return bikes_out


def _delivered_columns(main, idle, clip) -> list[dict]:
    """Per row the area factor each circuit's recommended settings deliver against the proven ones
    [1] (the needle's over the curve's openings): what the law predicts a reading from, without any
    calibration (:func:`tuning.calibration.readings_from`)."""
    pilot, needle, main_f = rounded(idle.delivered, 4), rounded(clip.curve, 4), rounded(main.delivered, 4)
    return [{"pilot": pilot[r], "needle": needle[r], "main": main_f[r]} for r in range(len(pilot))]


def _basis_dict(basis) -> dict:
    """What a bike's settings rest on, with its words: the law, its model's calibration or its own."""
    if basis is None or basis["kind"] == "law":
        text_id = "basis/not-used" if basis is not None and basis.get("not_used") else "basis/law"
        return {**LAW_BASIS, **said(text_id)}
    pct = basis["uncertainty_pct"]
    params = {
        "sessions": {"id": "count/sessions", "params": {"count": basis["sessions"]}},
        "events": {"id": "count/events", "params": {"count": basis["events"]}},
        "uncertainty_pct": printed(pct, ".1f" if pct < 2 else ".0f"),
    }
    if basis["law_kept"]:
        return {**basis, **said("basis/law-kept", {k: params[k] for k in ("sessions", "events")})}
    return {**basis, **said(f"basis/{basis['kind']}", params)}


def _session_heights(event, hours, s_count):
    """Per session where it is ridden, or None where at the site's elevation with the forecast
    holding there (the document as before): the heights, their shares, the densest height, the
    route's profile, where the forecast holds and the lapse rate used."""
    forecast = event.forecast_elevation
    carried = forecast != event.site.elevation
    lapse = constants.STANDARD_LAPSE_RATE if event.lapse_rate is None else event.lapse_rate
    dry = np.asarray(hours.air.dry_air_density, float)
    out = []
    for s in range(s_count):
        profile = event.sessions[s].heights
        if profile is None and not carried:
            out.append(None)
            continue
        levels, n_h, base = hours.levels[s], hours.hours_per_level[s], hours.offsets[s]
        shares = profile.shares if profile is not None else (1.0,)
        densest = int(np.argmax([dry[base + k * n_h : base + (k + 1) * n_h].max() for k in range(len(levels))]))
        out.append(
            {
                "source": profile.source if profile is not None else "site",
                "route": profile.route if profile is not None else None,
                "elevation_m_min": rounded(min(levels), 1),
                "elevation_m_max": rounded(max(levels), 1),
                "set_for_elevation_m": rounded(levels[densest], 1),
                "weather_elevation_m": rounded(forecast, 1),
                "lapse_rate_K_per_km": rounded(lapse * 1000.0, 2),
                "levels": [{"elevation_m": rounded(z, 1), "share": rounded(w, 4)} for z, w in zip(levels, shares)],
                "profile_m": [
                    [rounded(d, 0), rounded(z, 1)] for d, z in (profile.profile if profile is not None else ())
                ],
                "densest_level": densest,
            }
        )
    return out


def _entry_heights(where, rows, hours, refs, main, r, n_h):
    """A bike's session over its heights: the range, the height its settings are made for (the
    densest), and at the highest point how rich the main jet runs and the power against the bike's
    reference (means over the session's hours)."""
    top = int(np.argmax(hours.levels[int(rows.session[r])]))
    cols = slice(top * n_h, (top + 1) * n_h)
    f_top = rows.required[r, cols]
    cf_top = np.asarray(hours.air.sae_j1349_cf, float)[rows.index[r, cols]]
    ref_cf = refs.sae_cf[refs.of_bike[rows.bike[r]]]
    return {
        "source": where["source"],
        "elevation_m_min": where["elevation_m_min"],
        "elevation_m_max": where["elevation_m_max"],
        "set_for_elevation_m": where["set_for_elevation_m"],
        "rich_at_highest_pct": rounded(100.0 * np.mean(main.delivered[r] / f_top - 1.0), 1),
        "power_at_highest_pct": rounded(100.0 * np.mean(ref_cf / cf_top), 1),
    }


def _session_stats(hours, s_count):
    out = []
    t_all = np.asarray(hours.air.air_temperature, float)
    icing = np.asarray(hours.air.icing_risk)
    for s in range(s_count):
        sl = slice(hours.offsets[s], hours.offsets[s + 1])
        out.append(
            {
                "t_min": float(t_all[sl].min()),
                "t_max": float(t_all[sl].max()),
                "t_start": float(t_all[hours.offsets[s]]),
                "icing": int(np.max(icing[sl])),
                "air_temperature_C_min": rounded(t_all[sl].min() - constants.ZERO_CELSIUS, 2),
                "air_temperature_C_max": rounded(t_all[sl].max() - constants.ZERO_CELSIUS, 2),
                "station_pressure_hPa_mean": rounded(np.mean(hours.air.station_pressure[sl]) / 100.0, 2),
                "relative_humidity_pct_mean": rounded(np.mean(hours.air.relative_humidity[sl]) * 100.0, 1),
                "density_altitude_m_min": rounded(np.min(hours.air.density_altitude[sl]), 0),
                "density_altitude_m_max": rounded(np.max(hours.air.density_altitude[sl]), 0),
                "moist_air_density": float(np.mean(hours.air.moist_air_density[sl])),
                **_j1349_power(hours.air, sl),
            }
        )
    return out


def _j1349_power(state, sl) -> dict:
    """One base for the whole fleet: the power the air allows against SAE J1349's standard
    conditions (25 °C, 99 kPa dry air) [%], the mean of 1 / correction factor over the hours,
    and whether every hour lies within the range the standard is stated for."""
    cf = np.asarray(state.sae_j1349_cf, float)[sl]
    t = np.asarray(state.air_temperature, float)[sl]
    p_dry = (np.asarray(state.station_pressure, float) - np.asarray(state.vapour_pressure, float))[sl]
    (t_lo, t_hi), (p_lo, p_hi) = constants.SAE_J1349_AIR_TEMPERATURE_RANGE, constants.SAE_J1349_DRY_AIR_PRESSURE_RANGE
    within = bool(np.all((t >= t_lo) & (t <= t_hi) & (p_dry >= p_lo) & (p_dry <= p_hi)))
    return {"power_vs_sae_j1349_pct": rounded(100.0 * np.mean(1.0 / cf), 1), "sae_j1349_within_range": within}


def _sources(allocation, rows):
    """(kind, row) -> (put in now, the jet's provenance): the move that puts the session's jet in
    before it (None where the jet of the session before, or the proven one, stays) and the move that
    last put in the jet the bike wears (None: the proven jet)."""
    moves_by_t, _ordered = allocation
    s_count = rows.n_sessions
    last = {}
    out = {}
    for t in range(s_count):
        now = {}
        for m in moves_by_t[t]:
            now[(m.kind, m.bike)] = m
            last[(m.kind, m.bike)] = m
        for b in range(rows.n_bikes):
            for kind in KINDS:
                out[(kind, b * s_count + t)] = (now.get((kind, b)), last.get((kind, b)))
    return out


def _source_dict(source, origin, waits=False):
    text_id = f"source/{source}" + ("/waits" if waits else "")
    return said(text_id, {"origin": origin} if origin is not None else {}, kind=source, origin=origin)


def _jet_columns(plan, steps, rows) -> dict:
    """The per-row values of a jet plan as plain lists (rounded once, not row by row)."""
    return {
        "current": [jet_number(v) for v in plan.current.tolist()],
        "recommended": [jet_number(v) for v in plan.recommended.tolist()],
        "ideal": rounded(plan.ideal_mean, 1),
        "ideal_min": rounded(plan.ideal_min, 1),
        "ideal_max": rounded(plan.ideal_max, 1),
        "steps": steps.tolist(),
        "fitted_lean": (rows.largest - 1.0).tolist(),  # the proven jet's leanest deviation per session
        # ... and over all the bike's sessions: the warning's words are the same in every session
        "fitted_lean_event": np.repeat(
            (rows.largest - 1.0).reshape(rows.n_bikes, -1).max(axis=1), rows.n_sessions
        ).tolist(),
        "unsafe": plan.unsafe.tolist(),
        "out_of_family": plan.out_of_family.tolist(),
        "too_wide": plan.too_wide.tolist(),
    }


def _jet_dict(fleet, plan, cols, r, kind, sources, has_stock, session_name, found):
    family = plan.family[r]
    sizes = fleet.jet_families[family].sizes
    rec, cur = cols["recommended"][r], cols["current"][r]
    put_in, provenance = sources[(kind, r)]
    source = provenance.source if provenance is not None else "fitted"
    at_hand = source not in ("order", "shelf-or-order")
    fitted_lean = cols["fitted_lean"][r]
    worst = cols["fitted_lean_event"][r]
    words = {"part": kind, "size": str(rec), "family": family}
    family_sizes = {"smallest": str(jet_number(sizes[0])), "largest": str(jet_number(sizes[-1]))}
    if source == "shelf-or-order" and fitted_lean > LEAN_GUARD:
        found.append(
            warning(
                "no-safe-jet",
                "no-safe-jet/shelf-or-order",
                {**words, "fitted": str(cur), "lean_pct": printed(worst * 100, ".0f")},
            )
        )
    if source == "order":
        if fitted_lean > LEAN_GUARD:
            found.append(
                warning(
                    "no-safe-jet",
                    "no-safe-jet/order",
                    {**words, "fitted": str(cur), "lean_pct": printed(worst * 100, ".0f")},
                )
            )
        else:
            found.append(warning("stock-shortage", params={**words, "fitted": str(cur)}))
    if cols["unsafe"][r]:
        found.append(
            warning(
                "no-safe-jet",
                "no-safe-jet/none-rich-enough",
                {**words, **family_sizes, "session": session_name, "about": str(cols["ideal_max"][r])},
            )
        )
    elif cols["out_of_family"][r]:
        found.append(
            warning(
                "ideal-outside-family",
                params={
                    **words,
                    **family_sizes,
                    "ideal_low": str(cols["ideal_min"][r]),
                    "ideal_high": str(cols["ideal_max"][r]),
                },
            )
        )
    if cols["too_wide"][r] and kind == "main_jet":
        found.append(warning("window-too-wide", params={"session": session_name, "size": str(rec)}))
    steps = cols["steps"][r]
    direction, change_id, change_params = _jet_words(steps)
    change = said(change_id, change_params, key="change")
    return {
        "family": family,
        "coding": plan.coding[r],
        "current": cur,
        "ideal": cols["ideal"][r],
        "ideal_range": [cols["ideal_min"][r], cols["ideal_max"][r]],
        "recommended": rec,
        "in_stock": (at_hand if has_stock else None),
        "stock_choice": (rec if at_hand else cur if fitted_lean <= LEAN_GUARD else None) if has_stock else None,
        "steps": steps,
        "direction": direction,
        **change,
        "source": (
            _source_dict(put_in.source, put_in.origin, put_in.waits)
            if put_in is not None
            else _source_dict("fitted", None)
        ),
    }


def _clip_dict(clip, r, st, found):
    if clip.mode[r] == MODE_NONE:
        found.append(warning("no-needle"))
        return {
            "needle": st.needle,
            "current": st.clip,
            "recommended": st.clip,
            "steps": 0,
            "direction": "no change",
            **said("setting/clip-not-planned", key="change"),
            "assumed_geometry": True,
            "grooves": None,
        }
    c_now, c_new = int(clip.current[r]), int(clip.recommended[r])
    d = c_new - c_now
    if d == 0:
        direction, change = "no change", said("setting/no-change", key="change")
    else:
        direction = "richer" if d > 0 else "leaner"
        change = said(
            "setting/clip-lower" if d > 0 else "setting/clip-higher",
            {"count": abs(d), "from": c_now, "to": c_new},
            key="change",
        )
    if clip.mode[r] == MODE_ASSUMED:
        found.append(
            warning(
                "assumed-needle-geometry", params={"groove_area_step": int(circuits.ASSUMED_GROOVE_AREA_STEP * 100)}
            )
        )
    return {
        "needle": st.needle,
        "current": c_now,
        "recommended": c_new,
        "steps": d,
        "direction": direction,
        **change,
        "assumed_geometry": bool(clip.mode[r] == MODE_ASSUMED),
        "grooves": int(clip.grooves[r]),
    }


def _screw_dict(idle, r, st, found):
    ms = st.mixture_screw
    ch = float(idle.screw_new[r] - idle.screw_now[r])
    if abs(ch) < TURNS_NOISE:
        s_dir, s_change = "no change", said("setting/no-change", key="change")
    else:
        richer = (ch > 0) == (ms.kind == "fuel")
        s_dir = "richer" if richer else "leaner"
        s_change = said(
            "setting/screw-out" if ch > 0 else "setting/screw-in",
            {"screw": ms.kind, "by_quarter_turns": _quarters(ch), "direction": s_dir},
            key="change",
        )
    usable = {
        "usable_low_turns": printed(ms.usable_range[0], "g"),
        "usable_high_turns": printed(ms.usable_range[1], "g"),
    }
    if idle.pilot.recommended[r] != idle.pilot.current[r]:
        found.append(warning("screw-out-of-range", params={"screw": ms.kind, **usable}))
    if ms.range_assumed:
        found.append(warning("assumed-screw-range", params=usable))
    return {
        "kind": ms.kind,
        "current_turns": round(float(idle.screw_now[r]), 2),
        "recommended_turns": round(float(idle.screw_new[r]), 2),
        "change_turns": round(ch, 2),
        "direction": s_dir,
        **s_change,
        "usable_range": [round(float(ms.usable_range[0]), 2), round(float(ms.usable_range[1]), 2)],
        "range_assumed": bool(ms.range_assumed),
    }


def _lean_check(curves, r, found, idle, clip, s_count):
    """``predicted-lean`` where the predicted mixture at some opening and hour leaves the band's lean edge,
    naming the throttle range and the cure (in the same words in every lean session of the bike:
    the worst over its sessions)."""
    if not curves["leanest_by_throttle"][r].max() > LEAN_GUARD + LEAN_NOTICE_ROUND_OFF:
        return
    first = r - r % s_count
    lean = curves["leanest_by_throttle"][first : first + s_count].max(axis=0)  # (T,) over the bike's sessions
    bad = lean > LEAN_GUARD + LEAN_NOTICE_ROUND_OFF
    weights = circuits.circuit_weights(THROTTLE[bad])  # which circuit meters most there
    circuit = int(np.argmax(weights.sum(axis=0)))
    if circuit == 0:
        cure = "cure/pilot-beyond-plan" if idle.unsafe[r] else "cure/idle-circuit"
    elif circuit == 1 and clip.mode[r] == MODE_NONE:
        cure = "cure/no-needle"
    elif circuit == 1:
        cure = "cure/richest-groove" if clip.unsafe[r] else "cure/clip-lower"
    else:
        cure = "cure/main-jet"
    found.append(
        warning(
            "predicted-lean",
            params={
                "lean_pct": printed(float(lean.max()) * 100, ".0f"),
                "throttle": _throttle_span(bad),
                "cure": {"id": cure, "params": {}},
            },
        )
    )


def _weather_notes(stat, model, found):
    if stat["icing"] >= ICING_WARN_LEVEL:
        found.append(warning("icing-risk"))
    if stat["t_start"] < COLD_START_K:
        found.append(
            warning(
                "cold-start",
                "cold-start/accelerator-pump" if model.carburetor.accelerator_pump else "cold-start",
                {"start_C": printed(stat["t_start"] - constants.ZERO_CELSIUS, ".1f")},
            )
        )
    if stat["t_max"] > HOT_FUEL_K:
        found.append(
            warning(
                "hot-fuel",
                params={"t_max_C": printed(stat["t_max"] - constants.ZERO_CELSIUS, ".1f"), "hot_fuel_C": HOT_FUEL_C},
            )
        )


def _checks(st, model, stat):
    """The checks of a session: objects ``{"text", "id", "params"}``."""
    checks = [
        said("check/float-level", {"float_level_mm": printed(st.float_level * 1000.0, ".1f")})
        if st.float_level is not None
        else said("check/float-level-unknown"),
        said("check/plug"),
    ]
    if model.carburetor.accelerator_pump:
        checks.append(said("check/accelerator-pump"))
    if stat["t_min"] < CHOKE_K:
        checks.append(said("check/choke", {"t_min_C": printed(stat["t_min"] - constants.ZERO_CELSIUS, ".1f")}))
    if stat["t_max"] > HOT_FUEL_K:
        checks.append(said("check/hot-fuel", {"hot_fuel_C": HOT_FUEL_C}))
    return checks


def _work_orders(fleet, rows, main, idle, clip, allocation, sessions, bike_ids):
    """Per transition, the changes of every bike with the time they take."""
    moves_by_t, _ordered = allocation
    s_count = rows.n_sessions
    b_count = rows.n_bikes
    shape = (b_count, s_count)
    proven = {
        "main_jet": main.current.reshape(shape)[:, 0],
        "pilot_jet": idle.pilot.current.reshape(shape)[:, 0],
        "clip": clip.current.reshape(shape)[:, 0],
        "mixture_screw": idle.screw_now.reshape(shape)[:, 0],
    }
    planned = {
        "main_jet": main.recommended.reshape(shape),
        "pilot_jet": idle.pilot.recommended.reshape(shape),
        "clip": clip.recommended.reshape(shape),
        "mixture_screw": idle.screw_new.reshape(shape),
    }
    screw_kind = [fleet.bikes[b].settings.mixture_screw.kind for b in range(b_count)]
    orders = []
    for t in range(s_count + 1):
        if t == 0:
            label, before, after = (
                said("order/before", {"session": sessions[0].name}, key="label"),
                None,
                sessions[0].name,
            )
        elif t == s_count:
            label, before, after = said("order/after-event", key="label"), sessions[-1].name, None
        else:
            label = said("order/between", {"previous": sessions[t - 1].name, "next": sessions[t].name}, key="label")
            before, after = sessions[t - 1].name, sessions[t].name
        jet_moves = {(m.bike, m.kind): m for m in moves_by_t[t]}
        bikes = []
        for b in range(b_count):
            changes = []
            for part in ("main_jet", "pilot_jet", "clip", "mixture_screw"):
                old = proven[part][b] if t == 0 else planned[part][b, t - 1]
                new = proven[part][b] if t == s_count else planned[part][b, t]
                if part == "clip" and (old < 0 or new < 0):
                    continue
                if abs(float(new) - float(old)) < TURNS_NOISE:  # jet numbers, grooves, turns
                    continue
                changes.append(_change(part, old, new, jet_moves.get((b, part)), screw_kind[b]))
            if changes:
                bikes.append({"bike": bike_ids[b], "minutes": sum(c["minutes"] for c in changes), "changes": changes})
        orders.append(
            {
                "transition": t,
                **label,
                "after_session": before,
                "before_session": after,
                "minutes": sum(x["minutes"] for x in bikes),
                "bikes": bikes,
            }
        )
    return orders


def _change(part, old, new, move, screw_kind):
    source = _source_dict(move.source, move.origin, move.waits) if move is not None and part in KINDS else None
    return work_change(part, old, new, source, screw_kind)


def work_change(part, old, new, source, screw_kind) -> dict:
    """One change of a work order: ``part`` from ``old`` to ``new``, a jet from ``source`` (a
    source dict with its words, or None), the screw of kind ``screw_kind``."""
    if part in KINDS:
        old_v, new_v = jet_number(old), jet_number(new)
        direction = "richer" if new > old else "leaner"
        words = {"part": part, "from": str(old_v), "to": str(new_v), "direction": direction}
        text = (
            said("work/jet-from", {**words, "source": {k: source[k] for k in ("id", "params")}})
            if source
            else said("work/jet", words)
        )
    elif part == "clip":
        old_v, new_v = int(old), int(new)
        direction = "richer" if new > old else "leaner"
        source = None
        text = said("work/clip", {"from": old_v, "to": new_v, "direction": direction})
    else:
        old_v, new_v = round(float(old), 2), round(float(new), 2)
        turned = new - old
        direction = "richer" if (turned > 0) == (screw_kind == "fuel") else "leaner"
        source = None
        text = said(
            "work/screw-out" if turned > 0 else "work/screw-in",
            {
                "screw": screw_kind,
                "by_quarter_turns": _quarters(turned),
                "to_turns": printed(new_v, "g"),
                "direction": direction,
            },
        )
    return {
        "part": part,
        "from": old_v,
        "to": new_v,
        "direction": direction,
        "minutes": WORK_MINUTES[part],
        "source": source,
        **text,
    }


def _weather_rows(event, hours, refs, zone):
    """The forecast rows spanning the sessions, with the air-only area factor against the fleet's reference."""
    wt = np.asarray(event.weather.time).astype("datetime64[s]").astype(np.int64)
    first = np.searchsorted(wt, hours.times.min(), side="right") - 1
    last = np.searchsorted(wt, hours.times.max(), side="left")
    idx = np.arange(max(first, 0), min(last, len(wt) - 1) + 1)
    with pywarnings.catch_warnings():  # the same air as the session hours: warned there already
        pywarnings.simplefilter("ignore", air.OutOfRangeWarning)
        w_air = air_at(event.weather, event.forecast_elevation, wt[idx], str(event.source or event.name))
    w_factor = metering.area_factor(
        w_air.dry_air_density,
        refs.dry[refs.fleet],
        w_air.moist_air_density,
        refs.moist[refs.fleet],
        density_exponent=constants.METERING_LAW_EXPONENT,
    )
    fields = _air_fields(w_air)
    fac, cf = rounded(w_factor, 4), rounded(w_air.sae_j1349_cf, 4)
    icing = np.asarray(w_air.icing_risk).astype(int).tolist()
    out = []
    for i, t in enumerate(wt[idx]):
        row = {"time": _iso(t, zone), **{k: v[i] for k, v in fields.items()}}
        row.update({"area_factor": fac[i], "sae_j1349_cf": cf[i], "icing_risk": icing[i]})
        out.append(row)
    return out
