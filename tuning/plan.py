"""The jetting plan: settings for every bike and session, chosen across the weather window.

:func:`make_plan` turns a resolved :class:`~tuning.config.model.Fleet` and
:class:`~tuning.config.model.Event` into the plan document (``carbfleet-plan/1``, JSON-ready,
described by ``tuning/schemas/recommendations.schema.json``); :func:`write_plan_files`
writes ``recommendations.json``, ``recommendations.csv`` and ``pick-list.csv``.

Everything is computed over arrays of shape (entries, hours), an entry being one
bike × session; a Python loop only formats the document.

Choices documented here (where DESIGN.md is silent)
----------------------------------------------------
* Loss. For a delivered area factor :math:`f_d` and the required factor :math:`f_r` of an
  hour, the predicted mixture deviates from the reference by :math:`\\delta = f_r/f_d - 1`
  (positive = lean). The loss of a size over the window is :math:`\\sum_h w\\,\\delta_h^2`
  with :data:`LEAN_WEIGHT` = 4 for lean and :data:`RICH_WEIGHT` = 1 for rich hours (our
  choice: err rich). Exact ties go to the richer size.
* Lean guard. Sizes whose number is below the family size nearest to the window's largest
  ideal (ties to the larger) are not considered, so no hour is leaner than half a jet step;
  where the family has no such size, ``ideal-outside-family`` is raised.
* The mixture curve is drawn for the session's *leanest* hour (largest required factor),
  named in ``mixture_curve.time``; circuits are blended in fuel flow (harmonic in AFR).
* Re-jet temperatures hold the session's mean station pressure and mean relative humidity;
  they are where the single-hour choice switches to the neighbouring size.
* ``power_vs_reference_pct`` is the expected power as a percentage of the power at the
  reference (100 × CF_ref / CF_event, SAE J1349 factors), averaged over the session.
* Premix: the bike's premix ratio applies both at the reference and at the event (it cancels
  unless :func:`required_area_factor` is given different ratios).
* Needle clip: chosen after the main jet, on the loss over the hours and the openings
  1/4, 3/8, 1/2, 5/8, 3/4 (:data:`MID_RANGE_OPENINGS`), the slide lift being the opening times
  the bore. With geometry (needle not ``assumed``, needle-jet bore known, diameter-coded main)
  the delivered factor is the series area (annulus, main jet) against the current one; else
  each groove changes the annulus by :data:`tuning.carb.ASSUMED_GROOVE_AREA_STEP` (10 %, from
  memory) and the annulus is taken equal in area to the main jet, so both count with
  exponent ½ (the series law for equal areas). A groove that would leave any of those
  openings, in any hour, more than :data:`CLIP_LEAN_LIMIT` (2 %) leaner than the reference
  mixture is not chosen, whatever its loss (the taper can make one groove lean at a single
  opening while rich elsewhere).
* Pilot jet and screw: the screw comes first, since turning it takes seconds and a pilot
  jet means taking the float bowl off. When the fitted pilot, trimmed with the screw in
  quarter turns (:data:`tuning.carb.ASSUMED_SCREW_EFFECT_PER_TURN`, 10 % per turn, from
  memory; air screw out = leaner, fuel screw out = richer), reaches the best mixture within
  the screw's usable range, the pilot stays. Otherwise the pilot size is chosen by the same
  loss as the main jet and the screw trims the rest; where that trim leaves the usable range,
  the next pilot size toward the need (with its best in-range screw) is taken if its loss is
  smaller; otherwise the screw stays at its best in-range position.
* Mixture curve: per circuit, reference AFR × required / delivered factor, with the circuits'
  delivered fuel blended by :func:`tuning.carb.circuit_weights`; the current settings deliver
  factor 1 in every circuit (they were proven at the reference).
* Stock: the fitted jet counts as available for ``stock_choice``. The pick list counts, per
  bike, each recommended (family, size) that differs from the fitted one, once across sessions.

Warning codes (stable)
----------------------
``factor-out-of-range``   area factor below 0.80 or above 1.15: beyond the model's tested range
``ideal-outside-family``  the ideal main or pilot size lies outside the family's sizes
``stock-shortage``        the best size on the shelf differs from the recommended one
``screw-out-of-range``    the screw would leave its usable range (pilot changed, or still out)
``window-too-wide``       the best size differs across the session's hours by more than one step
``icing-risk``            carburetor icing risk band 2 or more during the session
``cold-start``            air below 5 °C at the session start: choke (and pump) notes
``hot-fuel``              air above 30 °C: percolation / vapour risk (threshold from memory)
``assumed-needle-geometry`` clip chosen with the default per-groove effect, not geometry
``assumed-screw-range``   the screw's usable range is the default 1..3 turns
``no-needle``             no needle or clip on record: the clip is not planned
"""

from __future__ import annotations

import csv
import io
import json
import warnings as pywarnings
from datetime import datetime, timezone
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from tuning import __version__, air, carb, fuel
from tuning.errors import UserError
from tuning.gcpause import gc_paused
from tuning.output import write_file_set

__all__ = [
    "FORMAT",
    "LEAN_WEIGHT",
    "RICH_WEIGHT",
    "FACTOR_RANGE",
    "THROTTLE",
    "MID_RANGE_OPENINGS",
    "WARNING_CODES",
    "session_hours",
    "required_area_factor",
    "choose_sizes",
    "make_plan",
    "write_plan_files",
]

FORMAT = "carbfleet-plan/1"
LEAN_WEIGHT = 4.0  #: loss weight of a lean deviation (our choice: err rich)
RICH_WEIGHT = 1.0  #: loss weight of a rich deviation
FACTOR_RANGE = (0.80, 1.15)  #: area factors the model is trusted in (our choice)
THROTTLE = np.round(np.linspace(0.0, 1.0, 21), 2)  #: throttle openings of the mixture curve [1]
MID_RANGE_OPENINGS = np.array([0.25, 0.375, 0.5, 0.625, 0.75])  #: where the clip is judged [1]
#: Clip lean guard: a groove that leaves any mid-range opening, in any hour of the session,
#: leaner than the reference mixture by more than this fraction is not chosen (our choice:
#: err rich; about half a main-jet step). Where every groove does, the least lean one is.
CLIP_LEAN_LIMIT = 0.02
TARGET_BAND = (0.95, 1.02)  #: acceptable mixture, × reference AFR (5 % rich .. 2 % lean; our choice)
COLD_START_K = 273.15 + 5.0  #: below this at the session start: cold-start warning
CHOKE_K = 273.15 + 10.0  #: below this during the session: choke check
HOT_FUEL_K = 273.15 + 30.0  #: above this: hot-fuel warning (from memory)
ICING_WARN_LEVEL = 2  #: icing-risk band from which a warning is given
REJET_SEARCH_K = (273.15 - 30.0, 273.15 + 50.0)  #: temperatures searched for re-jet points
DEFAULT_REFERENCE_AFR = 12.0  #: mixture the proven settings are assumed to give

WARNING_CODES = (
    "factor-out-of-range",
    "ideal-outside-family",
    "stock-shortage",
    "screw-out-of-range",
    "window-too-wide",
    "icing-risk",
    "cold-start",
    "hot-fuel",
    "assumed-needle-geometry",
    "assumed-screw-range",
    "no-needle",
)

_HOUR = 3600


# --- small helpers ----------------------------------------------------------------------------
def _r(values, digits):
    """Round an array and return plain Python objects; NaN and ±inf become None.

    A value that is not finite is undefined for the reader (the dew point of perfectly dry
    air is -inf): JSON has no such numbers, so it is written as null.
    """
    arr = np.round(np.asarray(values, float), digits)
    if np.isfinite(arr).all():
        return arr.tolist()
    if arr.ndim == 0:
        return None
    return np.where(np.isfinite(arr), arr, None).tolist()


def _num(value):
    """A jet size for output: int when integral, else rounded to 2 decimals; None stays."""
    if value is None or value != value:
        return None
    value = float(value)
    return int(value) if value.is_integer() else round(value, 2)


def _nums(values):
    """:func:`_num` over an array, as a list."""
    return [None if v != v else (int(v) if v.is_integer() else round(v, 2)) for v in np.asarray(values, float).tolist()]


def _iso(seconds, zone):
    return datetime.fromtimestamp(int(seconds), timezone.utc).astimezone(zone).isoformat()


def _epoch(moment: datetime) -> int:
    if moment.tzinfo is None:
        raise UserError(f"session time {moment.isoformat()} has no time zone; give it with an offset")
    return int(round(moment.timestamp()))


def session_hours(session) -> np.ndarray:
    """Times of a session's hours [s since 1970, UTC]: start, every whole hour between, end."""
    start, end = _epoch(session.start), _epoch(session.end)
    if end <= start:
        raise UserError(f"session {session.name!r}: end {session.end.isoformat()} is not after start")
    first = -(-start // _HOUR) * _HOUR
    inner = np.arange(first, end, _HOUR, dtype=np.int64)
    inner = inner[(inner > start) & (inner < end)]
    return np.concatenate([[start], inner, [end]]).astype(np.int64)


def _metered_liquid(fuel_record, premix_ratio):
    """(stoichiometric AFR, density) of what the jets meter: fuel, with premix oil if any."""
    afr, density = fuel_record.stoichiometric_afr, fuel_record.density
    if premix_ratio is None:
        return float(afr), float(density)
    afr, density = fuel.premix(afr, density, premix_ratio)
    return float(afr), float(density)


def required_area_factor(
    event_air,
    reference_air,
    event_fuel,
    reference_fuel,
    *,
    premix_ratio=None,
    reference_premix_ratio=None,
    density_exponent=0.5,
):
    """Area factor that keeps the reference mixture (thin wrapper of :func:`tuning.carb.area_factor`).

    Parameters
    ----------
    event_air, reference_air : tuning.air.AirState
        Air at the event and at the reference (densities in kg/m³).
    event_fuel, reference_fuel : tuning.config.model.Fuel
        Fuel as pumped.
    premix_ratio : float or None
        Fuel:oil volume ratio at the event [1]; None = no premix.
    reference_premix_ratio : float or None
        At the reference; defaults to ``premix_ratio``.
    density_exponent : float
        Exponent on the air density ratio [1].

    Returns
    -------
    numpy.ndarray
        Required factor [1], shaped like the event air arrays.
    """
    if reference_premix_ratio is None:
        reference_premix_ratio = premix_ratio
    afr_e, rho_e = _metered_liquid(event_fuel, premix_ratio)
    afr_r, rho_r = _metered_liquid(reference_fuel, reference_premix_ratio)
    return carb.area_factor(
        event_air.dry_air_density,
        reference_air.dry_air_density,
        event_air.moist_air_density,
        reference_air.moist_air_density,
        rho_e,
        rho_r,
        afr_e,
        afr_r,
        density_exponent,
    )


def _loss(required, delivered, valid):
    """Sum over the last axis (hours) of the lean-weighted squared mixture deviation (direct)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        deviation = required / delivered - 1.0
    weight = np.where(deviation > 0.0, LEAN_WEIGHT, RICH_WEIGHT)
    return np.where(valid, weight * deviation * deviation, 0.0).sum(axis=-1)


class WindowLoss:
    r"""The window loss of many candidate delivered factors, by a sorted search.

    For each entry (row) the required factors :math:`f_h` of its valid hours are sorted
    once, with prefix sums of :math:`f` and :math:`f^2`. For a delivered factor :math:`D`
    the hours split into rich (:math:`f \le D`) and lean (:math:`f > D`) ones, and

    .. math::

        \sum_h (f_h/D - 1)^2 = S_2/D^2 - 2 S_1/D + n

    over each part, weighted :data:`RICH_WEIGHT` and :data:`LEAN_WEIGHT`. Identical to
    :func:`_loss` but costs O(log H) per candidate instead of O(H).

    Parameters
    ----------
    required : numpy.ndarray, shape (R, H)
        Required area factors [1] (positive where valid).
    valid : numpy.ndarray of bool, shape (R, H)
    """

    _INVALID = 1.0e3  # stands in for padding hours; delivered factors must stay below it
    _ROW = 4.0e3  # row offset in the flattened search keys

    def __init__(self, required, valid):
        required = np.asarray(required, float)
        valid = np.asarray(valid, bool)
        rows, hours = required.shape
        f = np.sort(np.where(valid, required, self._INVALID), axis=1)
        self.count = valid.sum(axis=1)
        fz = np.where(f < self._INVALID, f, 0.0)
        zero = np.zeros((rows, 1))
        self.sum1 = np.concatenate([zero, np.cumsum(fz, axis=1)], axis=1)
        self.sum2 = np.concatenate([zero, np.cumsum(fz * fz, axis=1)], axis=1)
        self.offset = np.arange(rows) * self._ROW
        self.keys = (f + self.offset[:, None]).ravel()
        self.base = np.arange(rows) * hours
        self.rows = rows

    def __call__(self, delivered, rows=None):
        """Loss [1] for ``delivered`` of shape (R, ...) (or (len(rows), ...) for a subset)."""
        delivered = np.asarray(delivered, float)
        idx = np.arange(self.rows) if rows is None else np.asarray(rows)
        shape = delivered.shape
        d = delivered.reshape(len(idx), -1)
        if np.any(d >= self._INVALID) or np.any(d <= 0):
            raise ValueError("delivered area factors must lie in (0, 1000)")
        k = np.searchsorted(self.keys, d + self.offset[idx][:, None], side="right") - self.base[idx][:, None]
        n = self.count[idx][:, None]
        k = np.minimum(k, n)
        r = idx[:, None]
        s1_lo, s2_lo = self.sum1[r, k], self.sum2[r, k]
        s1_hi, s2_hi = self.sum1[r, n] - s1_lo, self.sum2[r, n] - s2_lo
        inv = 1.0 / d
        rich = s2_lo * inv * inv - 2.0 * s1_lo * inv + k
        lean = s2_hi * inv * inv - 2.0 * s1_hi * inv + (n - k)
        return (RICH_WEIGHT * rich + LEAN_WEIGHT * lean).reshape(shape)


def _clip_lean_guard(loss, leanest):
    """Rule out grooves leaner than :data:`CLIP_LEAN_LIMIT` anywhere; if all are, keep the least lean.

    ``loss`` and ``leanest`` are (rows, grooves); ``leanest`` is the largest lean deviation of
    the predicted mixture over the openings and hours (positive = lean).
    """
    leanest = np.where(np.isfinite(loss), leanest, np.inf)
    allowed = leanest <= CLIP_LEAN_LIMIT
    fallback = leanest <= leanest.min(axis=1, keepdims=True)
    return np.where(np.where(allowed.any(axis=1, keepdims=True), allowed, fallback), loss, np.inf)


def _argmin_richer(loss):
    """Index of the minimum along the last axis; exact ties go to the last (richer) index."""
    k = loss.shape[-1]
    return k - 1 - np.argmin(loss[..., ::-1], axis=-1)


def _nearest_richer(sizes, value):
    """Index of the family size nearest to ``value`` in number, ties to the larger size."""
    j = np.searchsorted(sizes, value, side="left")
    j = np.clip(j, 1, len(sizes) - 1) if len(sizes) > 1 else np.zeros_like(j)
    if len(sizes) == 1:
        return j
    lower, upper = sizes[j - 1], sizes[j]
    pick_upper = (upper - value) <= (value - lower)
    return np.where(pick_upper, j, j - 1)


def choose_sizes(current, required, valid, sizes, coding, allowed=None, window_loss=None, rows=None):
    """Choose a jet size per entry over a window of hours.

    Parameters
    ----------
    current : array_like, shape (R,)
        Fitted jet number of each entry [1] (proven at the reference).
    required : array_like, shape (R, H)
        Required area factor per hour [1]; padding hours are masked by ``valid``.
    valid : array_like of bool, shape (R, H)
    sizes : array_like, shape (K,)
        The family's sizes, ascending [1].
    coding : {"diameter", "flow"}
    allowed : array_like of bool, shape (R, K), optional
        Sizes that may be chosen (stock); default all.
    window_loss, rows : WindowLoss and its row indices, optional
        A prepared :class:`WindowLoss` (built from the same required factors) to reuse.

    Returns
    -------
    dict
        ``index`` (R,) chosen index into ``sizes`` (-1 where nothing allowed), ``ideal``
        (R, H) ideal numbers (NaN at padding), ``hour_spread`` (R,) how many family steps
        the single-hour best size spans over the window, ``out_of_family`` (R,) bool: the
        window's largest or smallest ideal lies more than half a step outside the family.

    Notes
    -----
    Minimises the window loss (lean ×4) over the sizes not leaner than the size nearest to
    the window's largest ideal (the lean guard, module notes); exact ties to the richer
    size. With ``allowed``, the guard applies among the allowed sizes where any passes it;
    otherwise the least-loss allowed size is taken.
    """
    sizes = np.asarray(sizes, float)
    current = np.asarray(current, float)
    required = np.asarray(required, float)
    valid = np.asarray(valid, bool)
    k = len(sizes)
    if window_loss is None:
        window_loss, rows = WindowLoss(required, valid), None
    ideal = carb.jet_number_for_area_factor(current[:, None], np.where(valid, required, 1.0), coding)
    ideal = np.where(valid, ideal, np.nan)
    ideal_max = np.nanmax(ideal, axis=1)
    ideal_min = np.nanmin(ideal, axis=1)
    floor_index = _nearest_richer(sizes, ideal_max)
    delivered = carb.area_factor_between_jets(current[:, None], sizes[None, :], coding)  # (R, K)
    loss = window_loss(delivered, rows)
    guard = np.arange(k)[None, :] >= floor_index[:, None]
    if allowed is not None:
        allowed = np.asarray(allowed, bool)
        feasible = allowed & guard
        use = np.where(feasible.any(axis=1)[:, None], feasible, allowed)
        index = _argmin_richer(np.where(use, loss, np.inf))
        index = np.where(use.any(axis=1), index, -1)
    else:
        index = _argmin_richer(np.where(guard, loss, np.inf))
    # single-hour best at the window's extremes (the choice is monotone in the factor)
    f_lo = np.nanmin(np.where(valid, required, np.nan), axis=1)
    f_hi = np.nanmax(np.where(valid, required, np.nan), axis=1)
    def single(f):
        return _argmin_richer(_loss(f[:, None, None], delivered[:, :, None], True))

    hour_spread = single(f_hi) - single(f_lo)
    half_up = (sizes[-1] - sizes[-2]) / 2.0 if k > 1 else 0.0
    half_down = (sizes[1] - sizes[0]) / 2.0 if k > 1 else 0.0
    out_of_family = (ideal_max > sizes[-1] + half_up) | (ideal_min < sizes[0] - half_down)
    return {"index": index, "ideal": ideal, "hour_spread": hour_spread, "out_of_family": out_of_family}


def _jet_change_words(steps):
    if steps == 0:
        return "no change", "no change"
    n = abs(steps)
    word = "size" if n == 1 else "sizes"
    if steps > 0:
        return "richer", f"{n} {word} larger: richer"
    return "leaner", f"{n} {word} smaller: leaner"


_FRACTIONS = {0: "", 1: "¼", 2: "½", 3: "¾"}


def _turns_words(turns):
    quarters = int(round(abs(turns) * 4))
    whole, rest = divmod(quarters, 4)
    text = (str(whole) if whole else "") + _FRACTIONS[rest]
    unit = "turn" if quarters <= 4 else "turns"
    return f"{text or '0'} {unit}"


# --- air --------------------------------------------------------------------------------------
def _air_for_conditions(conditions):
    p_station = air.station_pressure(
        conditions.pressure, conditions.pressure_kind, conditions.elevation, conditions.air_temperature
    )
    if conditions.relative_humidity is not None:
        return air.air_state(
            np.atleast_1d(float(conditions.air_temperature)),
            np.atleast_1d(p_station),
            relative_humidity=np.atleast_1d(float(conditions.relative_humidity)),
        )
    return air.air_state(
        np.atleast_1d(float(conditions.air_temperature)),
        np.atleast_1d(p_station),
        dew_point=np.atleast_1d(float(conditions.dew_point)),
    )


def _air_at(weather, elevation, times, where):
    """Air state at ``times`` [s UTC], weather interpolated linearly in time."""
    wt = np.asarray(weather.time).astype("datetime64[s]").astype(np.int64)
    if len(wt) == 0:
        raise UserError(f"{where}: the weather table has no rows; give an hourly forecast covering the sessions")
    if times.min() < wt[0] or times.max() > wt[-1]:
        have = f"{np.datetime64(int(wt[0]), 's')}Z..{np.datetime64(int(wt[-1]), 's')}Z"
        need = f"{np.datetime64(int(times.min()), 's')}Z..{np.datetime64(int(times.max()), 's')}Z"
        raise UserError(
            f"{where}: the weather covers {have} but the sessions need {need}; "
            "extend the weather table (carbfleet does not extrapolate)"
        )
    temperature = np.interp(times, wt, np.asarray(weather.air_temperature, float))
    pressure = np.interp(times, wt, np.asarray(weather.pressure, float))
    humidity = np.interp(times, wt, np.asarray(weather.humidity, float))
    p_station = air.station_pressure(pressure, weather.pressure_kind, elevation, temperature)
    if weather.humidity_kind == "relative":
        return air.air_state(temperature, p_station, relative_humidity=humidity)
    return air.air_state(temperature, p_station, dew_point=humidity)


def _air_fields(state, index=None):
    """Rounded output fields of an air state (optionally at ``index``)."""
    pick = (lambda a: np.asarray(a, float)[index]) if index is not None else (lambda a: np.asarray(a, float))
    return {
        "air_temperature_C": _r(pick(state.air_temperature) - 273.15, 2),
        "station_pressure_hPa": _r(pick(state.station_pressure) / 100.0, 2),
        "relative_humidity_pct": _r(pick(state.relative_humidity) * 100.0, 1),
        "dew_point_C": _r(pick(state.dew_point) - 273.15, 2),
        "moist_air_density_kg_m3": _r(pick(state.moist_air_density), 4),
        "dry_air_density_kg_m3": _r(pick(state.dry_air_density), 4),
        "density_altitude_m": _r(pick(state.density_altitude), 0),
    }


def _reference_dict(conditions, state):
    fields = _air_fields(state, 0)
    return {
        "elevation_m": _r(conditions.elevation, 1),
        "air_temperature_C": fields["air_temperature_C"],
        "station_pressure_hPa": fields["station_pressure_hPa"],
        "relative_humidity_pct": fields["relative_humidity_pct"],
        "dew_point_C": fields["dew_point_C"],
        "moist_air_density_kg_m3": fields["moist_air_density_kg_m3"],
        "dry_air_density_kg_m3": fields["dry_air_density_kg_m3"],
        "density_altitude_m": fields["density_altitude_m"],
        "fuel": conditions.fuel,
    }


def _fuel(fleet, name, where):
    try:
        return fleet.fuels[name]
    except KeyError:
        known = ", ".join(sorted(fleet.fuels)) or "none"
        raise UserError(f"{where}: fuel {name!r} is not in the fleet's fuels (known: {known}); add it or fix the name")


def _family(fleet, name, where):
    try:
        family = fleet.jet_families[name]
    except KeyError:
        known = ", ".join(sorted(fleet.jet_families)) or "none"
        raise UserError(f"{where}: jet family {name!r} is not in the fleet (known: {known}); add it or fix the name")
    if len(family.sizes) == 0:
        raise UserError(f"{where}: jet family {name!r} has no sizes; list its sizes")
    return family


# --- the plan ---------------------------------------------------------------------------------
def make_plan(fleet, event) -> dict:
    """Plan the settings of every bike for every session of an event.

    Parameters
    ----------
    fleet : tuning.config.model.Fleet
    event : tuning.config.model.Event

    Returns
    -------
    dict
        The plan document (format ``carbfleet-plan/1``), JSON-ready: only str, int, float,
        bool, None, list and dict; floats rounded to their printed precision.

    Raises
    ------
    tuning.errors.UserError
        Weather not covering a session, an unknown fuel or jet family, a session without
        a time zone.
    """
    zone = ZoneInfo(event.site.time_zone)
    reference_afr = float(getattr(fleet, "reference_afr", DEFAULT_REFERENCE_AFR))
    where_event = str(event.source or event.name)
    bikes = list(fleet.bikes)
    sessions = list(event.sessions)
    n_bikes, n_sessions = len(bikes), len(sessions)

    # ---- hours of every session (padded to H) and the event air --------------------------
    hours = [session_hours(s) for s in sessions]
    n_hours = max((len(h) for h in hours), default=1)
    all_times = np.concatenate(hours) if hours else np.zeros(0, np.int64)
    if n_sessions:
        event_air = _air_at(event.weather, event.site.elevation, all_times, where_event)
    offsets = np.cumsum([0] + [len(h) for h in hours])
    pad_index = np.zeros((max(n_sessions, 1), n_hours), np.int64)
    pad_valid = np.zeros((max(n_sessions, 1), n_hours), bool)
    for s, h in enumerate(hours):
        pad_index[s, : len(h)] = offsets[s] + np.arange(len(h))
        pad_valid[s, : len(h)] = True

    # ---- references (unique conditions) ---------------------------------------------------
    conditions_list, conditions_index = [], {}

    def _ref_id(conditions):
        key = id(conditions)
        if key not in conditions_index:
            for i, c in enumerate(conditions_list):
                if c == conditions:
                    conditions_index[key] = i
                    break
            else:
                conditions_index[key] = len(conditions_list)
                conditions_list.append(conditions)
        return conditions_index[key]

    fleet_ref_id = _ref_id(fleet.reference)
    bike_ref = np.array([_ref_id(b.reference) for b in bikes], np.int64)
    ref_states = [_air_for_conditions(c) for c in conditions_list]
    ref_dry = np.array([float(s.dry_air_density[0]) for s in ref_states])
    ref_moist = np.array([float(s.moist_air_density[0]) for s in ref_states])
    ref_cf = np.array([float(s.sae_j1349_cf[0]) for s in ref_states])
    ref_dicts = [_reference_dict(c, s) for c, s in zip(conditions_list, ref_states)]

    # ---- per-bike fuel, premix, exponent ---------------------------------------------------
    fuel_cache = {}
    afr_e = np.empty(n_bikes)
    afr_r = np.empty(n_bikes)
    rho_e = np.empty(n_bikes)
    rho_r = np.empty(n_bikes)
    for i, bike in enumerate(bikes):
        where = f"{fleet.source or fleet.name}: bikes[{bike.id}]"
        ref_fuel_name = bike.reference.fuel
        event_fuel_name = event.fuel or ref_fuel_name
        key = (ref_fuel_name, event_fuel_name, bike.premix_ratio)
        if key not in fuel_cache:
            ref_fuel = _fuel(fleet, ref_fuel_name, where + ".reference.fuel")
            ev_fuel = _fuel(fleet, event_fuel_name, f"{where_event}: fuel")
            fuel_cache[key] = (*_metered_liquid(ev_fuel, bike.premix_ratio), *_metered_liquid(ref_fuel, bike.premix_ratio))
        afr_e[i], rho_e[i], afr_r[i], rho_r[i] = fuel_cache[key]
    exponent = np.array([float(b.density_exponent) for b in bikes])

    # ---- entries: rows = bike-major, then session -------------------------------------------
    row_bike = np.repeat(np.arange(n_bikes), n_sessions)
    row_session = np.tile(np.arange(n_sessions), n_bikes)
    n_rows = len(row_bike)
    hour_index = pad_index[row_session] if n_rows else np.zeros((0, n_hours), np.int64)
    valid = pad_valid[row_session] if n_rows else np.zeros((0, n_hours), bool)

    def ev(field):
        return np.where(valid, np.asarray(getattr(event_air, field), float)[hour_index], np.nan)

    if n_rows:
        b_ref = bike_ref[row_bike]
        required = carb.area_factor(
            ev("dry_air_density"),
            ref_dry[b_ref][:, None],
            ev("moist_air_density"),
            ref_moist[b_ref][:, None],
            rho_e[row_bike][:, None],
            rho_r[row_bike][:, None],
            afr_e[row_bike][:, None],
            afr_r[row_bike][:, None],
            exponent[row_bike][:, None],
        )
        required = np.where(valid, required, np.nan)
    else:
        required = np.zeros((0, n_hours))
    req_fill = np.where(valid, required, 1.0)

    has_stock = bool(fleet.stock)
    settings = [bikes[b].settings for b in row_bike]

    # ---- main and pilot jets (grouped by family) ------------------------------------------
    def plan_jets(family_attr, size_attr):
        out = {
            "current": np.array([getattr(s, size_attr) for s in settings], float),
            "recommended": np.full(n_rows, np.nan),
            "stock_choice": np.full(n_rows, np.nan),
            "ideal_mean": np.full(n_rows, np.nan),
            "ideal_min": np.full(n_rows, np.nan),
            "ideal_max": np.full(n_rows, np.nan),
            "too_wide": np.zeros(n_rows, bool),
            "out_of_family": np.zeros(n_rows, bool),
            "index": np.zeros(n_rows, np.int64),
        }
        family_names = np.array([getattr(s, family_attr) for s in settings], object)
        for name in sorted(set(family_names.tolist())):
            rows = np.flatnonzero(family_names == name)
            family = _family(fleet, name, f"{fleet.source or fleet.name}: bike {bikes[row_bike[rows[0]]].id}")
            sizes = np.asarray(family.sizes, float)
            cur = out["current"][rows]
            res = choose_sizes(cur, required[rows], valid[rows], sizes, family.coding, window_loss=wl, rows=rows)
            idx = res["index"]
            out["index"][rows] = idx
            out["recommended"][rows] = sizes[idx]
            ideal = res["ideal"]
            out["ideal_mean"][rows] = carb.jet_number_for_area_factor(
                cur, np.nanmean(np.where(valid[rows], required[rows], np.nan), axis=1), family.coding
            )
            out["ideal_min"][rows] = np.nanmin(ideal, axis=1)
            out["ideal_max"][rows] = np.nanmax(ideal, axis=1)
            out["too_wide"][rows] = res["hour_spread"] > 1
            out["out_of_family"][rows] = res["out_of_family"]
            if has_stock:
                shelf = np.array([fleet.stock.get((name, float(sz)), 0) > 0 for sz in sizes])
                allowed = shelf[None, :] | (sizes[None, :] == cur[:, None])
                st = choose_sizes(cur, required[rows], valid[rows], sizes, family.coding, allowed=allowed,
                                  window_loss=wl, rows=rows)
                out["stock_choice"][rows] = np.where(st["index"] >= 0, sizes[np.maximum(st["index"], 0)], np.nan)
        out["family"] = family_names
        return out

    wl = WindowLoss(req_fill, valid)
    main = plan_jets("main_jet_family", "main_jet")
    pilot = plan_jets("pilot_jet_family", "pilot_jet")

    # ---- mixture screw: trim the pilot residual in quarter turns ---------------------------
    screw_kind = np.array([s.mixture_screw.kind for s in settings], object)
    screw_sign = np.where(screw_kind == "fuel", 1.0, -1.0)
    screw_now = np.array([s.mixture_screw.turns for s in settings], float)
    screw_lo = np.array([s.mixture_screw.usable_range[0] for s in settings], float)
    screw_hi = np.array([s.mixture_screw.usable_range[1] for s in settings], float)
    quarter = np.arange(-32, 33) / 4.0  # candidate changes [turns]
    effect = carb.ASSUMED_SCREW_EFFECT_PER_TURN
    richness = screw_sign[:, None] * quarter[None, :]  # larger = richer
    order = np.argsort(richness, axis=1, kind="stable")  # candidates from leanest to richest
    new_turns = screw_now[:, None] + quarter[None, :]
    in_range = (new_turns >= screw_lo[:, None] - 1e-9) & (new_turns <= screw_hi[:, None] + 1e-9)

    def trim(pilot_delivered, constrained):
        """Best quarter-turn change and its window loss; exact ties to the richer side."""
        screw_factor = (1.0 + effect) ** richness  # (R, Q)
        loss = wl(pilot_delivered[:, None] * screw_factor)
        if constrained:
            loss = np.where(in_range, loss, np.inf)
        loss = np.take_along_axis(loss, order, axis=1)
        best = _argmin_richer(loss)
        pick = np.take_along_axis(order, best[:, None], axis=1)[:, 0]
        return quarter[pick], loss[np.arange(len(pick)), best]

    pilot_coding = np.array([fleet.jet_families[f].coding for f in pilot["family"]], object) if n_rows else np.array([], object)

    def pilot_factor(current, recommended):
        return np.where(
            pilot_coding == "diameter", (recommended / current) ** 2, recommended / current
        )

    # Unconstrained trim first; where it leaves the usable range, compare the screw at its
    # best in-range position (A) with the next pilot size toward the need plus its best
    # in-range screw (B), and take the smaller loss. A warning names what happened.
    pilot_bumped = np.zeros(n_rows, bool)
    screw_clamped = np.zeros(n_rows, bool)
    if n_rows:
        # The screw first: keep the fitted pilot where the screw alone reaches the best trim
        # within its usable range.
        kept_trim, _ = trim(np.ones(n_rows), constrained=False)
        keep = (screw_now + kept_trim >= screw_lo - 1e-9) & (screw_now + kept_trim <= screw_hi + 1e-9)
        if keep.any():
            current_index = pilot["index"].copy()
            for r in np.flatnonzero(keep):
                sizes = np.asarray(fleet.jet_families[pilot["family"][r]].sizes, float)
                current_index[r] = int(np.argmin(np.abs(sizes - pilot["current"][r])))
            pilot["index"] = np.where(keep, current_index, pilot["index"])
            pilot["recommended"] = np.where(keep, pilot["current"], pilot["recommended"])
        base_delivered = pilot_factor(pilot["current"], pilot["recommended"])
        wanted, _ = trim(base_delivered, constrained=False)
        screw_wanted = screw_now + wanted
        outside = (screw_wanted < screw_lo - 1e-9) | (screw_wanted > screw_hi + 1e-9)
        screw_change, loss_a = trim(base_delivered, constrained=True)
        if outside.any():
            bumped_index = pilot["index"].copy()
            bumped_size = pilot["recommended"].copy()
            possible = np.zeros(n_rows, bool)
            for r in np.flatnonzero(outside):
                sizes = np.asarray(fleet.jet_families[pilot["family"][r]].sizes, float)
                j = pilot["index"][r] + (1 if screw_sign[r] * wanted[r] > 0 else -1)
                if 0 <= j < len(sizes):
                    bumped_index[r], bumped_size[r], possible[r] = j, sizes[j], True
            change_b, loss_b = trim(pilot_factor(pilot["current"], bumped_size), constrained=True)
            take_b = outside & possible & (loss_b < loss_a)
            pilot["index"] = np.where(take_b, bumped_index, pilot["index"])
            pilot["recommended"] = np.where(take_b, bumped_size, pilot["recommended"])
            screw_change = np.where(take_b, change_b, screw_change)
            pilot_bumped = take_b
            screw_clamped = outside & ~take_b & (np.abs(screw_now + screw_change - screw_wanted) > 0.5 + 1e-9)
        screw_new = screw_now + screw_change
    else:
        screw_change = screw_new = screw_wanted = np.zeros(0)
    if n_rows and has_stock:
        # The pilot was settled together with the screw: where that size is at hand (fitted
        # or on the shelf), it is also the stock choice.
        at_hand = (pilot["recommended"] == pilot["current"]) | np.array(
            [fleet.stock.get((f, float(v)), 0) > 0 for f, v in zip(pilot["family"], pilot["recommended"])], bool
        )
        pilot["stock_choice"] = np.where(at_hand, pilot["recommended"], pilot["stock_choice"])
    screw_delivered = (1.0 + effect) ** (screw_sign * screw_change) if n_rows else np.zeros(0)
    pilot_delivered = pilot_factor(pilot["current"], pilot["recommended"]) * screw_delivered if n_rows else np.zeros(0)

    # ---- needle clip --------------------------------------------------------------------------
    main_coding = np.array([fleet.jet_families[f].coding for f in main["family"]], object) if n_rows else np.array([], object)
    main_delivered = (
        np.where(main_coding == "diameter", (main["recommended"] / main["current"]) ** 2, main["recommended"] / main["current"])
        if n_rows
        else np.zeros(0)
    )
    clip_now = np.array([s.clip if s.clip is not None else -1 for s in settings], np.int64)
    clip_new = clip_now.copy()
    clip_mode = np.zeros(n_rows, np.int64)  # 0 none, 1 geometry, 2 assumed
    grooves = np.zeros(n_rows, np.int64)
    needle_curve = np.ones((n_rows, len(THROTTLE)))
    needle_mid = np.ones(n_rows)
    geo_rows = []
    for r, s in enumerate(settings):
        if s.needle is None or s.clip is None:
            continue
        needle = fleet.needles.get(s.needle)
        if needle is None:
            raise UserError(
                f"{fleet.source or fleet.name}: bike {bikes[row_bike[r]].id}: needle {s.needle!r} is not in the "
                "fleet's needles; add it or fix the name"
            )
        grooves[r] = needle.grooves
        model = fleet.models[bikes[row_bike[r]].model]
        if needle.assumed or model.carburetor.needle_jet is None or main_coding[r] != "diameter":
            clip_mode[r] = 2
        else:
            clip_mode[r] = 1
            geo_rows.append(r)
    g_max = int(grooves.max(initial=1))
    required_max = np.where(valid, req_fill, -np.inf).max(axis=1) if n_rows else np.zeros(0)
    groove_numbers = np.arange(1, g_max + 1)

    if geo_rows:
        gr = np.array(geo_rows)
        needles = [fleet.needles[settings[r].needle] for r in gr]
        carbs = [fleet.models[bikes[row_bike[r]].model].carburetor for r in gr]
        nj = np.array([c.needle_jet for c in carbs])[:, None, None]
        bore = np.array([c.bore for c in carbs])[:, None, None]
        sd = np.array([n.straight_diameter for n in needles])[:, None, None]
        ts = np.array([n.taper_start for n in needles])[:, None, None]
        ta = np.array([n.taper_angle for n in needles])[:, None, None]
        gp = np.array([n.groove_pitch for n in needles])[:, None, None]
        a_main_now = np.pi / 4.0 * (main["current"][gr] * 1e-5) ** 2
        a_main_new = np.pi / 4.0 * (main["recommended"][gr] * 1e-5) ** 2

        def needle_factor(openings, groove):  # groove (R, G) -> (R, G, T)
            lift = openings[None, None, :] * bore
            a_new = carb.series_orifice_area(
                carb.needle_annulus_area(lift, nj, sd, ts, ta, gp, groove[:, :, None]), a_main_new[:, None, None]
            )
            a_now = carb.series_orifice_area(
                carb.needle_annulus_area(lift, nj, sd, ts, ta, gp, clip_now[gr][:, None, None]),
                a_main_now[:, None, None],
            )
            return a_new / a_now

        groove_grid = np.broadcast_to(groove_numbers[None, :], (len(gr), g_max))
        delivered = needle_factor(MID_RANGE_OPENINGS, groove_grid)  # (R, G, T)
        loss = wl(delivered, gr).sum(axis=-1)
        loss = np.where(groove_numbers[None, :] <= grooves[gr][:, None], loss, np.inf)
        loss = _clip_lean_guard(loss, (required_max[gr][:, None, None] / delivered).max(axis=-1) - 1.0)
        clip_new[gr] = groove_numbers[_argmin_richer(loss)]
        chosen = clip_new[gr][:, None]
        needle_curve[gr] = needle_factor(THROTTLE, chosen)[:, 0, :]
        needle_mid[gr] = needle_factor(np.array([0.5]), chosen)[:, 0, 0]
    as_rows = np.flatnonzero(clip_mode == 2)
    if len(as_rows):
        step = 1.0 + carb.ASSUMED_GROOVE_AREA_STEP
        moves = groove_numbers[None, :] - clip_now[as_rows][:, None]
        delivered = np.sqrt(main_delivered[as_rows])[:, None] * step ** (0.5 * moves)  # (R, G)
        loss = wl(delivered, as_rows)
        loss = np.where(groove_numbers[None, :] <= grooves[as_rows][:, None], loss, np.inf)
        loss = _clip_lean_guard(loss, required_max[as_rows][:, None] / delivered - 1.0)
        clip_new[as_rows] = groove_numbers[_argmin_richer(loss)]
        chosen = np.sqrt(main_delivered[as_rows]) * step ** (0.5 * (clip_new[as_rows] - clip_now[as_rows]))
        needle_curve[as_rows] = chosen[:, None]
        needle_mid[as_rows] = chosen
    none_rows = np.flatnonzero(clip_mode == 0)
    needle_curve[none_rows] = np.sqrt(main_delivered[none_rows])[:, None] if len(none_rows) else needle_curve[none_rows]

    # ---- mixture curve at the leanest hour ---------------------------------------------------
    worst_hour = np.argmax(np.where(valid, required, -np.inf), axis=1) if n_rows else np.zeros(0, np.int64)
    worst_factor = required[np.arange(n_rows), worst_hour] if n_rows else np.zeros(0)
    weights = carb.circuit_weights(THROTTLE)  # (T, 3)
    delivered_curve = (
        weights[None, :, 0] * pilot_delivered[:, None]
        + weights[None, :, 1] * needle_curve
        + weights[None, :, 2] * main_delivered[:, None]
    )
    current_afr = np.repeat((reference_afr * worst_factor)[:, None], len(THROTTLE), axis=1)
    recommended_afr = reference_afr * worst_factor[:, None] / delivered_curve

    # ---- re-jet temperatures --------------------------------------------------------------------
    rejet = _rejet_temperatures(
        fleet, main, main_coding, event_air if n_rows else None, hour_index, valid, row_bike, b_ref if n_rows else None,
        ref_dry, ref_moist, rho_e, rho_r, afr_e, afr_r, exponent,
    )

    # ---- power -------------------------------------------------------------------------------
    if n_rows:
        cf_event = ev("sae_j1349_cf")
        power = 100.0 * np.nanmean(ref_cf[b_ref][:, None] / cf_event, axis=1)
    else:
        power = np.zeros(0)

    # ---- format ------------------------------------------------------------------------------
    session_dicts = [
        {"name": s.name, "start": _iso(_epoch(s.start), zone), "end": _iso(_epoch(s.end), zone)} for s in sessions
    ]
    hour_iso = [_iso(t, zone) for t in all_times]
    hour_air = _air_fields(event_air) if n_sessions else {}
    hour_base = [
        {
            "time": hour_iso[i],
            "air_temperature_C": hour_air["air_temperature_C"][i],
            "station_pressure_hPa": hour_air["station_pressure_hPa"][i],
            "relative_humidity_pct": hour_air["relative_humidity_pct"][i],
            "moist_air_density_kg_m3": hour_air["moist_air_density_kg_m3"][i],
            "dry_air_density_kg_m3": hour_air["dry_air_density_kg_m3"][i],
            "density_altitude_m": hour_air["density_altitude_m"][i],
        }
        for i in range(len(all_times))
    ]
    temperature_all = np.asarray(event_air.air_temperature, float) if n_sessions else np.zeros(0)
    icing_all = np.asarray(event_air.icing_risk) if n_sessions else np.zeros(0)
    session_stats = []
    for s in range(n_sessions):
        sl = slice(offsets[s], offsets[s + 1])
        session_stats.append(
            {
                "t_min": float(temperature_all[sl].min()),
                "t_max": float(temperature_all[sl].max()),
                "t_start": float(temperature_all[offsets[s]]),
                "icing": int(np.max(icing_all[sl])),
                "air_temperature_C_min": _r(temperature_all[sl].min() - 273.15, 2),
                "air_temperature_C_max": _r(temperature_all[sl].max() - 273.15, 2),
                "station_pressure_hPa_mean": _r(np.mean(event_air.station_pressure[sl]) / 100.0, 2),
                "relative_humidity_pct_mean": _r(np.mean(event_air.relative_humidity[sl]) * 100.0, 1),
                "density_altitude_m_min": _r(np.min(event_air.density_altitude[sl]), 0),
                "density_altitude_m_max": _r(np.max(event_air.density_altitude[sl]), 0),
            }
        )

    req_r = np.round(required, 4)
    f_min = _r(np.nanmin(required, axis=1), 4) if n_rows else []
    f_mean = _r(np.nanmean(required, axis=1), 4) if n_rows else []
    f_max = _r(np.nanmax(required, axis=1), 4) if n_rows else []
    f_min_raw = np.nanmin(required, axis=1) if n_rows else np.zeros(0)
    f_max_raw = np.nanmax(required, axis=1) if n_rows else np.zeros(0)
    power_r = _r(power, 1)
    cur_afr_r = np.round(current_afr, 2).tolist()
    rec_afr_r = np.round(recommended_afr, 2).tolist()
    throttle_list = THROTTLE.tolist()
    band = [round(reference_afr * TARGET_BAND[0], 2), round(reference_afr * TARGET_BAND[1], 2)]

    def jet_columns(plan):
        steps = np.zeros(n_rows, np.int64)
        names = plan["family"]
        for name in set(names.tolist()):
            rows = np.flatnonzero(names == name)
            sizes = np.asarray(fleet.jet_families[name].sizes, float)
            cur, rec = plan["current"][rows], plan["recommended"][rows]
            up = np.searchsorted(sizes, rec, "right") - np.searchsorted(sizes, cur, "right")
            down = np.searchsorted(sizes, rec, "left") - np.searchsorted(sizes, cur, "left")
            steps[rows] = np.where(rec > cur, up, np.where(rec < cur, down, 0))
        rec_list = plan["recommended"].tolist()
        return {
            "cur": _nums(plan["current"]),
            "rec": _nums(plan["recommended"]),
            "ideal": _r(plan["ideal_mean"], 1),
            "imin": _r(plan["ideal_min"], 1),
            "imax": _r(plan["ideal_max"], 1),
            "stock": _nums(plan["stock_choice"]) if has_stock else [None] * n_rows,
            "in_stock": [fleet.stock.get((f, v), 0) > 0 for f, v in zip(names.tolist(), rec_list)]
            if has_stock
            else [None] * n_rows,
            "steps": steps.tolist(),
            "coding": [fleet.jet_families[f].coding for f in names.tolist()],
        }

    main_cols = jet_columns(main)
    pilot_cols = jet_columns(pilot)
    # Building ~10^5..10^6 small dicts: pause the cyclic garbage collector meanwhile (they hold
    # no cycles); its repeated passes otherwise cost about a third of the planning time.
    with gc_paused():
        entries = []
        pick_needed: dict[tuple[str, float], int] = {}
        picked_by_bike: dict[tuple[int, str, float], bool] = {}
        warnings_count = 0
        for r in range(n_rows):
            b, s = int(row_bike[r]), int(row_session[r])
            bike = bikes[b]
            st = settings[r]
            model = fleet.models[bike.model]
            stats = session_stats[s]
            n_h = int(valid[r].sum())
            base = offsets[s]
            req_row = req_r[r, :n_h].tolist()
            hours_out = []
            for hour, factor in zip(hour_base[base : base + n_h], req_row):
                hour = hour.copy()
                hour["area_factor"] = factor
                hours_out.append(hour)
            warnings = []

            def jet_dict(plan, cols, label):
                fam_name = plan["family"][r]
                rec, stock_choice = cols["rec"][r], cols["stock"][r]
                if has_stock and stock_choice != rec:
                    warnings.append(
                        {
                            "code": "stock-shortage",
                            "message": f"{label} {rec} ({fam_name}) is not on the shelf; the best size in stock is "
                            f"{stock_choice if stock_choice is not None else 'none'}. Order it, or fit the stock size and "
                            "check the plug reading.",
                        }
                    )
                if plan["out_of_family"][r]:
                    sizes = fleet.jet_families[fam_name].sizes
                    warnings.append(
                        {
                            "code": "ideal-outside-family",
                            "message": f"The ideal {label} ({cols['imin'][r]}..{cols['imax'][r]}) lies outside the "
                            f"{fam_name} sizes ({_num(sizes[0])}..{_num(sizes[-1])}); {rec} is the nearest available — "
                            "test and read the plug before riding hard.",
                        }
                    )
                if plan["too_wide"][r]:
                    warnings.append(
                        {
                            "code": "window-too-wide",
                            "message": f"The best {label} changes by more than one size across {sessions[s].name}; "
                            f"{rec} is chosen to stay safe (rich) across the window — consider re-jetting mid-session.",
                        }
                    )
                direction, change = _jet_change_words(cols["steps"][r])
                return {
                    "family": fam_name,
                    "coding": cols["coding"][r],
                    "current": cols["cur"][r],
                    "ideal": cols["ideal"][r],
                    "ideal_range": [cols["imin"][r], cols["imax"][r]],
                    "recommended": rec,
                    "in_stock": cols["in_stock"][r],
                    "stock_choice": stock_choice,
                    "steps": cols["steps"][r],
                    "direction": direction,
                    "change": change,
                }

            if f_min_raw[r] < FACTOR_RANGE[0] or f_max_raw[r] > FACTOR_RANGE[1]:
                warnings.append(
                    {
                        "code": "factor-out-of-range",
                        "message": f"Required area factor {f_min[r]}..{f_max[r]} is outside the model's range "
                        f"{FACTOR_RANGE[0]}..{FACTOR_RANGE[1]}: treat the settings as a starting point and make a test run "
                        "with a plug reading first.",
                    }
                )
            main_out = jet_dict(main, main_cols, "main jet")
            pilot_out = jet_dict(pilot, pilot_cols, "pilot jet")

            # clip
            if clip_mode[r] == 0:
                clip_out = {
                    "needle": st.needle,
                    "current": st.clip,
                    "recommended": st.clip,
                    "steps": 0,
                    "direction": "no change",
                    "change": "no needle or clip on record: not planned",
                    "assumed_geometry": True,
                    "grooves": None,
                }
                warnings.append(
                    {"code": "no-needle", "message": "No needle or clip position on record: the clip is not planned; "
                     "record the needle and clip in the fleet file."}
                )
            else:
                c_now, c_new = int(clip_now[r]), int(clip_new[r])
                d = c_new - c_now
                if d == 0:
                    direction, change = "no change", "no change"
                else:
                    n = abs(d)
                    word = "groove" if n == 1 else "grooves"
                    if d > 0:
                        direction, change = "richer", f"clip {n} {word} lower (groove {c_now} → {c_new}, needle up): richer"
                    else:
                        direction, change = "leaner", f"clip {n} {word} higher (groove {c_now} → {c_new}, needle down): leaner"
                clip_out = {
                    "needle": st.needle,
                    "current": c_now,
                    "recommended": c_new,
                    "steps": d,
                    "direction": direction,
                    "change": change,
                    "assumed_geometry": bool(clip_mode[r] == 2),
                    "grooves": int(grooves[r]),
                }
                if clip_mode[r] == 2:
                    warnings.append(
                        {
                            "code": "assumed-needle-geometry",
                            "message": "Needle geometry or needle-jet bore not on record: the clip is chosen with an assumed "
                            f"effect of about {int(carb.ASSUMED_GROOVE_AREA_STEP * 100)} % annulus area per groove "
                            "(from memory); confirm mid-throttle by feel and plug reading.",
                        }
                    )

            # screw
            ms = st.mixture_screw
            ch = float(screw_change[r])
            if abs(ch) < 1e-9:
                s_dir, s_change = "no change", "no change"
            else:
                out_in = "out" if ch > 0 else "in"
                richer = (ch > 0) == (ms.kind == "fuel")
                s_dir = "richer" if richer else "leaner"
                s_change = f"{ms.kind} screw {_turns_words(ch)} {out_in}: {s_dir}"
            screw_out_dict = {
                "kind": ms.kind,
                "current_turns": round(float(screw_now[r]), 2),
                "recommended_turns": round(float(screw_new[r]), 2),
                "change_turns": round(ch, 2),
                "direction": s_dir,
                "change": s_change,
                "usable_range": [round(float(ms.usable_range[0]), 2), round(float(ms.usable_range[1]), 2)],
                "range_assumed": bool(ms.range_assumed),
            }
            if pilot_bumped[r]:
                warnings.append(
                    {
                        "code": "screw-out-of-range",
                        "message": f"The {ms.kind} screw would need {round(float(screw_wanted[r]), 2)} turns, outside its usable "
                        f"range {ms.usable_range[0]:g}..{ms.usable_range[1]:g}: the pilot jet is changed one size instead.",
                    }
                )
            if screw_clamped[r]:
                warnings.append(
                    {
                        "code": "screw-out-of-range",
                        "message": f"The {ms.kind} screw would need {round(float(screw_wanted[r]), 2)} turns, outside its usable "
                        f"range {ms.usable_range[0]:g}..{ms.usable_range[1]:g}, and no pilot size does better: it is set to "
                        f"{round(float(screw_new[r]), 2)} turns; the idle mixture may be off — check the idle.",
                    }
                )
            if ms.range_assumed:
                warnings.append(
                    {
                        "code": "assumed-screw-range",
                        "message": f"The screw's usable range is the default {ms.usable_range[0]:g}..{ms.usable_range[1]:g} turns "
                        "out (common practice); record the service manual's range.",
                    }
                )
            if stats["icing"] >= ICING_WARN_LEVEL:
                warnings.append(
                    {
                        "code": "icing-risk",
                        "message": f"Carburetor icing risk (band {stats['icing']} of 3) in cool, humid air: watch for rough "
                        "running or loss of power at part throttle.",
                    }
                )
            if stats["t_start"] < COLD_START_K:
                pump = " Accelerator-pump model: check the pump squirt before the first start." if model.carburetor.accelerator_pump else ""
                warnings.append(
                    {
                        "code": "cold-start",
                        "message": f"Cold start ({stats['t_start'] - 273.15:.1f} °C at the session start): use the choke and "
                        f"warm the engine before riding.{pump}",
                    }
                )
            if stats["t_max"] > HOT_FUEL_K:
                warnings.append(
                    {
                        "code": "hot-fuel",
                        "message": f"Hot session (air up to {stats['t_max'] - 273.15:.1f} °C): fuel above about 30 °C can "
                        "percolate or vapour-lock (threshold from memory); keep fuel and bikes shaded.",
                    }
                )

            checks = []
            if st.float_level is not None:
                checks.append(f"Float level: check {st.float_level * 1000.0:.1f} mm (value from the settings).")
            else:
                checks.append("Float level: not on record; check it against the service manual.")
            checks.append("Plug reading after the first run, before riding hard.")
            if model.carburetor.accelerator_pump:
                checks.append("Accelerator pump: check the squirt (timing and amount).")
            if stats["t_min"] < CHOKE_K:
                checks.append(f"Choke: cold morning ({stats['t_min'] - 273.15:.1f} °C minimum): choke for the first start.")
            if stats["t_max"] > HOT_FUEL_K:
                checks.append(
                    "Hot fuel: keep cans and bikes in the shade; if it stalls hot or will not restart, suspect "
                    "vapour in the fuel (from memory: above about 30 °C)."
                )
            warnings_count += len(warnings)

            for plan_ in (main, pilot):
                fam_name = plan_["family"][r]
                rec = float(plan_["recommended"][r])
                if rec != float(plan_["current"][r]) and not picked_by_bike.get((b, fam_name, rec)):
                    picked_by_bike[(b, fam_name, rec)] = True
                    pick_needed[(fam_name, rec)] = pick_needed.get((fam_name, rec), 0) + 1

            own_ref = ref_dicts[int(bike_ref[b])]
            entries.append(
                {
                    "bike": bike.id,
                    "model": bike.model,
                    "session": sessions[s].name,
                    "start": session_dicts[s]["start"],
                    "end": session_dicts[s]["end"],
                    "notes": bike.notes,
                    "strokes": int(model.strokes),
                    "premix_ratio": None if bike.premix_ratio is None else round(float(bike.premix_ratio), 2),
                    "density_exponent": round(float(bike.density_exponent), 4),
                    "reference": own_ref,
                    "hours": hours_out,
                    "summary": {
                        "air_temperature_C_min": stats["air_temperature_C_min"],
                        "air_temperature_C_max": stats["air_temperature_C_max"],
                        "station_pressure_hPa_mean": stats["station_pressure_hPa_mean"],
                        "relative_humidity_pct_mean": stats["relative_humidity_pct_mean"],
                        "density_altitude_m_min": stats["density_altitude_m_min"],
                        "density_altitude_m_max": stats["density_altitude_m_max"],
                        "area_factor_min": f_min[r],
                        "area_factor_mean": f_mean[r],
                        "area_factor_max": f_max[r],
                        "power_vs_reference_pct": power_r[r],
                    },
                    "settings": {
                        "main_jet": main_out,
                        "pilot_jet": pilot_out,
                        "clip": clip_out,
                        "mixture_screw": screw_out_dict,
                        "float_level_mm": None if st.float_level is None else round(st.float_level * 1000.0, 2),
                    },
                    "mixture_curve": {
                        "throttle": throttle_list,
                        "current_afr": cur_afr_r[r],
                        "recommended_afr": rec_afr_r[r],
                        "reference_afr": round(reference_afr, 2),
                        "target_band_afr": band,
                        "time": hour_iso[base + int(worst_hour[r])],
                        "basis": "leanest hour of the session (largest required area factor)",
                    },
                    "rejet_temperatures_C": {
                        "below": rejet["below"][r],
                        "below_jet": rejet["below_jet"][r],
                        "above": rejet["above"][r],
                        "above_jet": rejet["above_jet"][r],
                    },
                    "power_vs_reference_pct": power_r[r],
                    "checks": checks,
                    "warnings": warnings,
                }
            )

    # ---- pick list -------------------------------------------------------------------------------
    pick_list = []
    for (fam_name, size), needed in pick_needed.items():
        in_stock = int(fleet.stock.get((fam_name, size), 0)) if has_stock else None
        short = max(0, needed - in_stock) if has_stock else None
        pick_list.append({"family": fam_name, "size": _num(size), "needed": needed, "in_stock": in_stock, "short": short})
    pick_list.sort(key=lambda p: (0 if (p["short"] or 0) > 0 else 1, p["family"], float(p["size"])))

    # ---- weather over the sessions -----------------------------------------------------------------
    weather_out = []
    if n_sessions:
        wt = np.asarray(event.weather.time).astype("datetime64[s]").astype(np.int64)
        first = np.searchsorted(wt, all_times.min(), side="right") - 1
        last = np.searchsorted(wt, all_times.max(), side="left")
        idx = np.arange(max(first, 0), min(last, len(wt) - 1) + 1)
        with pywarnings.catch_warnings():  # the same air as the session hours: warned there already
            pywarnings.simplefilter("ignore", air.OutOfRangeWarning)
            w_air = _air_at(event.weather, event.site.elevation, wt[idx], where_event)
        w_factor = carb.area_factor(
            w_air.dry_air_density, ref_dry[fleet_ref_id], w_air.moist_air_density, ref_moist[fleet_ref_id],
            density_exponent=0.5,
        )
        fields = _air_fields(w_air)
        fac = _r(w_factor, 4)
        cf = _r(w_air.sae_j1349_cf, 4)
        icing = np.asarray(w_air.icing_risk).astype(int).tolist()
        for i, t in enumerate(wt[idx]):
            row = {"time": _iso(t, zone)}
            row.update({k: v[i] for k, v in fields.items()})
            row.update({"area_factor": fac[i], "sae_j1349_cf": cf[i], "icing_risk": icing[i]})
            weather_out.append(row)

    return {
        "format": FORMAT,
        "carbfleet_version": __version__,
        "fleet": fleet.name,
        "event": event.name,
        "site": {"name": event.site.name, "elevation_m": _r(event.site.elevation, 1), "time_zone": event.site.time_zone},
        "reference": ref_dicts[fleet_ref_id],
        "sessions": session_dicts,
        "weather": weather_out,
        "pick_list": pick_list,
        "warnings_count": warnings_count,
        "entries": entries,
    }


def _rejet_temperatures(fleet, main, main_coding, event_air, hour_index, valid, row_bike, b_ref,
                        ref_dry, ref_moist, rho_e, rho_r, afr_e, afr_r, exponent):
    """Air temperatures [°C] at which the single-hour best main jet switches to a neighbour.

    Holds each entry's mean station pressure and mean relative humidity. The switch between
    sizes :math:`a < b` under the loss (lean ×4) lies where :math:`2(u/a^p - 1) = 1 - u/b^p`,
    :math:`u = x^p` the ideal number to the power p (2 diameter, 1 flow coding), i.e.
    :math:`u = 3/(2/a^p + 1/b^p)`; the required factor :math:`(x/\\text{current})^p` is then
    found by bisection on temperature (the factor falls as the air warms).
    """
    n_rows = len(row_bike)
    out = {k: [None] * n_rows for k in ("below", "below_jet", "above", "above_jet")}
    if n_rows == 0:
        return out
    p = np.where(main_coding == "diameter", 2.0, 1.0)
    idx = main["index"]
    cur = main["current"]
    up_target = np.full(n_rows, np.nan)
    dn_target = np.full(n_rows, np.nan)
    up_jet = np.full(n_rows, np.nan)
    dn_jet = np.full(n_rows, np.nan)
    for r in range(n_rows):
        sizes = np.asarray(fleet.jet_families[main["family"][r]].sizes, float)
        i, pp = int(idx[r]), p[r]
        a = sizes[i]
        if i + 1 < len(sizes):
            b = sizes[i + 1]
            u = 3.0 / (2.0 / a**pp + 1.0 / b**pp)
            up_target[r], up_jet[r] = u / cur[r] ** pp, b
        if i - 1 >= 0:
            b = sizes[i - 1]
            u = 3.0 / (2.0 / b**pp + 1.0 / a**pp)
            dn_target[r], dn_jet[r] = u / cur[r] ** pp, b
    pressure = np.nanmean(np.where(valid, np.asarray(event_air.station_pressure, float)[hour_index], np.nan), axis=1)
    humidity = np.nanmean(np.where(valid, np.asarray(event_air.relative_humidity, float)[hour_index], np.nan), axis=1)
    b = row_bike

    def factor(temperature):
        state = air.air_state(temperature, pressure, relative_humidity=humidity)
        return carb.area_factor(
            state.dry_air_density, ref_dry[b_ref], state.moist_air_density, ref_moist[b_ref],
            rho_e[b], rho_r[b], afr_e[b], afr_r[b], exponent[b],
        )

    def solve(target):
        with pywarnings.catch_warnings():  # hypothetical temperatures: J1349 range notes are noise here
            pywarnings.simplefilter("ignore", air.OutOfRangeWarning)
            return _bisect(target)

    def _bisect(target):
        lo = np.full(n_rows, REJET_SEARCH_K[0])
        hi = np.full(n_rows, REJET_SEARCH_K[1])
        f_lo, f_hi = factor(lo), factor(hi)
        ok = np.isfinite(target) & (f_lo >= target) & (f_hi <= target)
        for _ in range(24):  # 80 K / 2**24: far below the printed 0.1 K
            mid = 0.5 * (lo + hi)
            above = factor(mid) > target
            lo = np.where(above, mid, lo)
            hi = np.where(above, hi, mid)
        return np.where(ok, 0.5 * (lo + hi) - 273.15, np.nan)

    below = solve(up_target)
    above = solve(dn_target)
    out["below"] = _r(below, 1)
    out["above"] = _r(above, 1)
    out["below_jet"] = [_num(j) if t is not None else None for j, t in zip(up_jet, out["below"])]
    out["above_jet"] = [_num(j) if t is not None else None for j, t in zip(dn_jet, out["above"])]
    return out


# --- files -----------------------------------------------------------------------------------------
CSV_COLUMNS = (
    "bike", "model", "session", "start", "end",
    "air_temperature_C_min", "air_temperature_C_max", "station_pressure_hPa_mean", "relative_humidity_pct_mean",
    "density_altitude_m_min", "density_altitude_m_max",
    "area_factor_min", "area_factor_mean", "area_factor_max", "power_vs_reference_pct",
    "main_jet_family", "main_jet_current", "main_jet_ideal", "main_jet_recommended", "main_jet_stock_choice",
    "main_jet_steps", "main_jet_change",
    "pilot_jet_family", "pilot_jet_current", "pilot_jet_ideal", "pilot_jet_recommended", "pilot_jet_stock_choice",
    "pilot_jet_steps", "pilot_jet_change",
    "needle", "clip_current", "clip_recommended", "clip_change", "clip_assumed_geometry",
    "mixture_screw_kind", "mixture_screw_current_turns", "mixture_screw_recommended_turns",
    "mixture_screw_change_turns", "mixture_screw_change", "float_level_mm",
    "rejet_below_C", "rejet_below_jet", "rejet_above_C", "rejet_above_jet", "warnings",
)


def _csv_value(value):
    """One CSV cell: null as empty, booleans as ``true``/``false``, numbers as they are.

    Text that a spreadsheet would take for a formula (it begins with ``=``, ``+``, ``-``, ``@``,
    a tab or a carriage return: a bike id, model, session or family name from the user's files)
    gets a leading ``'``, which spreadsheets read as "this cell is text" (OWASP, "CSV Injection").
    Numbers are never text here, so a negative number stays a number.
    """
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str) and value.startswith(("=", "+", "-", "@", "\t", "\r")):
        return "'" + value
    return value


def _csv_text(header, rows) -> str:
    r"""The CSV file: a header, then one record per row (cells by :func:`_csv_value`).

    Python 3.11's writer quotes a cell holding a line feed but not one holding a lone carriage
    return (the line terminator is ``\n``); a reader would split that record in two. A row with a
    carriage return in any cell is therefore written with every cell quoted: still one record.
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    quoted = csv.writer(buffer, lineterminator="\n", quoting=csv.QUOTE_ALL)
    writer.writerow(header)
    for row in rows:
        cells = [_csv_value(v) for v in row]
        (quoted if any(isinstance(c, str) and "\r" in c for c in cells) else writer).writerow(cells)
    return buffer.getvalue()


def plan_rows(plan: dict) -> list[list]:
    """The rows of ``recommendations.csv`` (one per bike × session), in :data:`CSV_COLUMNS` order."""
    rows = []
    for e in plan["entries"]:
        s, m, p, c, w = (e["summary"], e["settings"]["main_jet"], e["settings"]["pilot_jet"],
                         e["settings"]["clip"], e["settings"]["mixture_screw"])
        j = e["rejet_temperatures_C"]
        rows.append([
            e["bike"], e["model"], e["session"], e["start"], e["end"],
            s["air_temperature_C_min"], s["air_temperature_C_max"], s["station_pressure_hPa_mean"],
            s["relative_humidity_pct_mean"], s["density_altitude_m_min"], s["density_altitude_m_max"],
            s["area_factor_min"], s["area_factor_mean"], s["area_factor_max"], s["power_vs_reference_pct"],
            m["family"], m["current"], m["ideal"], m["recommended"], m["stock_choice"], m["steps"], m["change"],
            p["family"], p["current"], p["ideal"], p["recommended"], p["stock_choice"], p["steps"], p["change"],
            c["needle"], c["current"], c["recommended"], c["change"], c["assumed_geometry"],
            w["kind"], w["current_turns"], w["recommended_turns"], w["change_turns"], w["change"],
            e["settings"]["float_level_mm"],
            j["below"], j["below_jet"], j["above"], j["above_jet"],
            ";".join(x["code"] for x in e["warnings"]),
        ])
    return rows


def write_plan_files(plan: dict, out_dir) -> list[Path]:
    """Write ``recommendations.json``, ``recommendations.csv`` and ``pick-list.csv`` as one set.

    All three are new, or (when anything fails, a full disk included) all three are as they
    were; an existing file of the same name is replaced only when carbfleet wrote it
    (:func:`tuning.output.write_file_set`). Unwritable places raise a one-line error.

    Parameters
    ----------
    plan : dict
        A document from :func:`make_plan`.
    out_dir : path-like
        Output folder (created when missing).

    Returns
    -------
    list of pathlib.Path
        The files written, in the order above.
    """
    texts = {
        "recommendations.json": json.dumps(plan, sort_keys=False, indent=1, ensure_ascii=False, allow_nan=False) + "\n",
        "recommendations.csv": _csv_text(CSV_COLUMNS, plan_rows(plan)),
        "pick-list.csv": _csv_text(
            ("family", "size", "needed", "in_stock", "short"),
            [[p["family"], p["size"], p["needed"], p["in_stock"], p["short"]] for p in plan["pick_list"]],
        ),
    }
    return write_file_set(Path(out_dir), texts, PLAN_FILE_SIGNATURES)


#: How each plan file begins, so that an existing file is overwritten only when carbfleet wrote it.
PLAN_FILE_SIGNATURES = {
    "recommendations.json": '"format": "carbfleet-plan/',
    "recommendations.csv": "bike,model,session,",
    "pick-list.csv": "family,size,",
}
