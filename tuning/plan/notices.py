"""The plan's words: one home for its warning codes, severities and every sentence it writes.

Severities: ``danger`` (the engine may run lean: act before riding hard), ``action`` (something
to order or do), ``note`` (an assumption or an information). Codes in :data:`BIKE_CODES` hold for
a bike whatever the session (its records), so they are given once per bike, not per session.

Every text of the plan document (warnings, checks, the settings' change words, where a jet comes
from, the work orders' labels and changes) is a template of :data:`TEXTS`, marked for the message
catalogue with :func:`tuning.display.N_` and keyed by a text id. The document stores each text
three ways: its English words as before (JSON and CSV readers rely on them), its ``id`` and its
``params``; :func:`say` and :func:`say_item` say it again for any :class:`tuning.display.Display`.

Parameters are plain JSON values, stored at the precision the English text prints them:

- a number is shown according to the end of its name: ``_C`` a temperature [°C], ``_m`` a height
  [m], ``_hPa`` a pressure [hPa], ``_mm`` a small length [mm], ``_pct`` a percentage (12 for
  12 %), ``_quarter_turns`` an amount of turns said in quarters with its unit (``1½ turns``);
  any other number (``_turns``, an area factor, a groove, a count) is shown as stored. A float
  shows the decimals of its shortest representation, an int none (``3.0`` -> ``3.0``, ``3`` -> ``3``).
- ``part`` (``main_jet``, ``pilot_jet``, ``clip``, ``mixture_screw``), ``screw`` (``air``,
  ``fuel``) and ``direction`` (``richer``, ``leaner``) are keys of words that are translated;
  ``Part`` in a template is the part's word with a capital first letter.
- any other string (a jet size, a jet family, a session name, a bike id) is shown as it is.
- an object ``{"id", "params"}`` is a text of its own, said in the same display.
- ``count`` chooses between the singular and the plural of a template given as a pair.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache, lru_cache

from tuning.display import N_, Display

__all__ = [
    "CODES",
    "SEVERITIES",
    "ICING_RISK_NAMES",
    "BIKE_CODES",
    "TEXTS",
    "DOCUMENT",
    "warning",
    "said",
    "say",
    "say_item",
    "printed",
    "severity_rank",
]

SEVERITIES = (N_("danger"), N_("action"), N_("note"))

#: Names of the carburetor icing-risk bands the document gives as numbers (``icing_risk`` of its
#: weather rows; index = band of :func:`tuning.air.icing_risk`).
ICING_RISK_NAMES = (N_("none"), N_("light"), N_("moderate"), N_("serious"))

#: code -> (severity, what it means). Stable: the CSV's ``warnings`` column carries the codes.
CODES = {
    "no-safe-jet": (
        "danger",
        N_("nothing at hand is rich enough: the size to fit must be ordered or found before riding hard"),
    ),
    "predicted-lean": ("danger", N_("the predicted mixture is leaner than the target band at some opening and hour")),
    "stock-shortage": ("action", N_("the size to fit is neither on the shelf nor coming off another bike: order it")),
    "ideal-outside-family": ("action", N_("the ideal size lies beyond the largest or smallest size of the jet family")),
    "screw-out-of-range": (
        "action",
        N_("the mixture screw would leave the middle of its range: the pilot jet changes instead"),
    ),
    "cold-start": ("action", N_("cold morning: choke and a full warm-up before load")),
    "hot-fuel": ("action", N_("hot session: fuel may percolate or vapour-lock; keep the fuel cool and shaded")),
    "factor-out-of-range": ("note", N_("the required jet-area factor lies outside the range the method is meant for")),
    "window-too-wide": (
        "note",
        N_("conditions change so much within the session that one setting does not fit it all"),
    ),
    "icing-risk": ("note", N_("cool, humid air: carburetor icing is possible")),
    "assumed-needle-geometry": ("note", N_("the needle geometry was assumed, not given: the clip only moves richer")),
    "assumed-screw-range": ("note", N_("the mixture screw's usable range was assumed, not given")),
    "no-needle": ("note", N_("no needle or clip position on record: the clip is not planned")),
    "fitted-not-proven": ("action", N_("the bike still wears the settings of an earlier event, not its proven ones")),
}

#: Codes about a bike's records rather than a session: given once per bike.
BIKE_CODES = frozenset({"assumed-needle-geometry", "assumed-screw-range", "no-needle", "fitted-not-proven"})

#: Words named by a key in the parameters (``part``, ``screw``, ``direction``); ``no change`` is
#: the direction of a setting that stays.
WORDS = {
    "part": {
        "main_jet": N_("main jet"),
        "pilot_jet": N_("pilot jet"),
        "clip": N_("needle clip"),
        "mixture_screw": N_("mixture screw"),
    },
    "screw": {"air": N_("air screw"), "fuel": N_("fuel screw")},
    "direction": {"richer": N_("richer"), "leaner": N_("leaner"), "no change": N_("no change")},
}

#: text id -> template (or a (singular, plural) pair chosen by ``count``). A warning's id is its
#: code, or its code and a variant after a slash.
TEXTS = {
    # --- warnings ------------------------------------------------------------------------------
    "no-safe-jet/shelf-or-order": N_(
        "Fit %(part)s %(size)s (%(family)s) before riding hard, from the shelf or ordered (the fleet keeps "
        "no stock list): the %(part)s fitted today (%(fitted)s) would run up to %(lean_pct)s lean at this "
        "event — a lean engine can seize."
    ),
    "no-safe-jet/order": N_(
        "Fit %(part)s %(size)s (%(family)s) before riding hard: none is at hand, so order it now. The "
        "%(part)s fitted today (%(fitted)s) would run up to %(lean_pct)s lean at this event — a lean "
        "engine can seize."
    ),
    "no-safe-jet/none-rich-enough": N_(
        "No %(part)s of the %(family)s sizes (%(smallest)s..%(largest)s) is rich enough for %(session)s: "
        "%(size)s, the richest planned, is still leaner than the guard. Get a %(part)s of about "
        "%(about)s before riding hard."
    ),
    "stock-shortage": N_(
        "%(Part)s %(size)s (%(family)s) is neither on the shelf nor coming off another bike: order it; "
        "until it comes, the fitted %(fitted)s stays safe (not leaner than the guard)."
    ),
    "ideal-outside-family": N_(
        "The ideal %(part)s (%(ideal_low)s..%(ideal_high)s) lies outside the %(family)s sizes "
        "(%(smallest)s..%(largest)s); %(size)s is the nearest safe one — read the plug before riding hard."
    ),
    "window-too-wide": N_(
        "The ideal main jet changes by more than one size across %(session)s; %(size)s is safe (rich "
        "enough) for its leanest hour and richer in the others."
    ),
    "factor-out-of-range": N_(
        "Required area factor %(factor_min)s..%(factor_max)s is outside the model's range "
        "%(range_low)s..%(range_high)s: treat the settings as a starting point and make a test run with "
        "a plug reading first."
    ),
    "fitted-not-proven": N_(
        "Starts from the settings fitted for %(event)s, not the proven ones: nothing recorded says the bike "
        "was returned. Check what is fitted before the work; the jets to pick still count from the proven ones."
    ),
    "no-needle": N_(
        "No needle or clip position on record: the clip is not planned; record the needle and clip in the fleet file."
    ),
    "assumed-needle-geometry": N_(
        "Needle geometry or needle-jet bore not on record: the clip is judged with an assumed "
        "%(groove_area_step)s %% annulus area per groove (from memory) and only ever moved richer; confirm "
        "mid-throttle by feel and plug reading."
    ),
    "screw-out-of-range": N_(
        "The %(screw)s alone would leave the middle of its usable range (%(usable_low_turns)s.."
        "%(usable_high_turns)s turns) or not be safe: the pilot jet is changed instead."
    ),
    "assumed-screw-range": N_(
        "The screw's usable range is the default %(usable_low_turns)s..%(usable_high_turns)s turns out "
        "(common practice); record the service manual's range."
    ),
    "predicted-lean": N_(
        "Predicted mixture up to %(lean_pct)s leaner than the proven one at %(throttle)s in the densest "
        "hour of this event: %(cure)s before riding hard."
    ),
    "icing-risk": N_(
        "Carburetor icing possible in cool, humid air (the serious band of charts made for aircraft, from "
        "memory): if it runs rough or loses power at part throttle, let it idle warm before riding on."
    ),
    "cold-start": N_("Cold start (%(start_C)s at the session start): use the choke and warm the engine before riding."),
    "cold-start/accelerator-pump": N_(
        "Cold start (%(start_C)s at the session start): use the choke and warm the engine before riding. "
        "Accelerator-pump model: check the pump squirt before the first start."
    ),
    "hot-fuel": N_(
        "Hot session (air up to %(t_max_C)s): fuel above about %(hot_fuel_C)s can percolate or vapour-lock "
        "(threshold from memory); keep fuel and bikes shaded."
    ),
    # --- parts of predicted-lean: the throttle openings and the cure -----------------------------
    "throttle/span": N_("%(low_pct)s–%(high_pct)s throttle"),
    "throttle/one": N_("%(low_pct)s throttle"),
    "cure/pilot-beyond-plan": N_("fit a larger pilot jet than the planned ones (none within reach is rich enough)"),
    "cure/idle-circuit": N_("richen the idle circuit (larger pilot jet or the screw richer)"),
    "cure/no-needle": N_("no needle is on record to plan the clip: check the needle and move its clip lower (richer)"),
    "cure/richest-groove": N_("the clip is already in its richest groove: fit a richer needle or a larger needle jet"),
    "cure/clip-lower": N_("move the needle clip one groove lower (richer)"),
    "cure/main-jet": N_("fit a larger main jet"),
    # --- what a bike's settings rest on (a calibration from recorded outcomes, or the law) ---------
    "basis/law": N_("no readings yet: the law"),
    "basis/model": N_(
        "no readings of its own yet: its model's calibration from %(sessions)s at %(events)s, ±%(uncertainty_pct)s"
    ),
    "basis/calibrated": N_("calibrated from %(sessions)s at %(events)s, ±%(uncertainty_pct)s"),
    "basis/not-used": N_("the law: calibration not used for this plan"),
    "basis/law-kept": N_(
        "the law: the calibration from %(sessions)s at %(events)s would leave a circuit leaner "
        "than the guard by the law, so its settings are not used"
    ),
    "count/sessions": (N_("%(count)s session"), N_("%(count)s sessions")),
    "count/events": (N_("%(count)s event"), N_("%(count)s events")),
    # --- checks ----------------------------------------------------------------------------------
    "check/float-level": N_("Float level: check %(float_level_mm)s (value from the settings)."),
    "check/float-level-unknown": N_("Float level: not on record; check it against the service manual."),
    "check/plug": N_("Plug reading after the first run, before riding hard."),
    "check/accelerator-pump": N_("Accelerator pump: check the squirt (timing and amount)."),
    "check/choke": N_("Choke: cold air (%(t_min_C)s minimum): choke for the first start."),
    "check/hot-fuel": N_(
        "Hot fuel: keep cans and bikes in the shade; if it stalls hot or will not restart, suspect vapour "
        "in the fuel (from memory: above about %(hot_fuel_C)s)."
    ),
    # --- the settings' change words ---------------------------------------------------------------
    "setting/no-change": N_("no change"),
    "setting/jet-larger": (N_("%(count)s size larger: richer"), N_("%(count)s sizes larger: richer")),
    "setting/jet-smaller": (N_("%(count)s size smaller: leaner"), N_("%(count)s sizes smaller: leaner")),
    "setting/clip-lower": (
        N_("clip %(count)s groove lower (groove %(from)s → %(to)s, needle up): richer"),
        N_("clip %(count)s grooves lower (groove %(from)s → %(to)s, needle up): richer"),
    ),
    "setting/clip-higher": (
        N_("clip %(count)s groove higher (groove %(from)s → %(to)s, needle down): leaner"),
        N_("clip %(count)s grooves higher (groove %(from)s → %(to)s, needle down): leaner"),
    ),
    "setting/clip-not-planned": N_("no needle or clip on record: not planned"),
    "setting/screw-out": N_("%(screw)s %(by_quarter_turns)s out: %(direction)s"),
    "setting/screw-in": N_("%(screw)s %(by_quarter_turns)s in: %(direction)s"),
    # --- where a jet comes from --------------------------------------------------------------------
    "source/own": N_("its own jet, kept from before"),
    "source/bike": N_("off bike %(origin)s"),
    "source/bike/waits": N_("off bike %(origin)s once %(origin)s's own new jet (to order) is in"),
    "source/shelf": N_("from the shelf"),
    "source/spare": N_("spare, came off bike %(origin)s"),
    "source/spare/waits": N_("spare, came off bike %(origin)s once %(origin)s's own new jet (to order) is in"),
    "source/order": N_("to order"),
    "source/shelf-or-order": N_("from the shelf or to order"),
    "source/fitted": N_("already fitted"),
    # --- work orders: their labels and changes ----------------------------------------------------
    "order/before": N_("before %(session)s"),
    "order/between": N_("between %(previous)s and %(next)s"),
    "order/after-event": N_("after the event: back to the proven settings"),
    "work/jet": N_("%(part)s %(from)s → %(to)s (%(direction)s)"),
    "work/jet-from": N_("%(part)s %(from)s → %(to)s (%(direction)s), %(source)s"),
    "work/clip": N_("needle clip groove %(from)s → %(to)s (%(direction)s)"),
    "work/screw-out": N_("%(screw)s %(by_quarter_turns)s out to %(to_turns)s turns (%(direction)s)"),
    "work/screw-in": N_("%(screw)s %(by_quarter_turns)s in to %(to_turns)s turns (%(direction)s)"),
}

_QUARTER_TURNS = (N_("%(turns)s turn"), N_("%(turns)s turns"))  # up to one turn, more than one
_FRACTIONS = {0: "", 1: "¼", 2: "½", 3: "¾"}


@dataclass(frozen=True)
class StoredWords(Display):
    """Metric and English as the plan document stores its texts (plain ASCII minus, ``12%``).

    The words in ``recommendations.json`` and ``.csv`` stay what the document wrote before it
    carried text ids; a :class:`~tuning.display.Display` shows the same words with a true minus
    and ``12 %`` like every other number on a sheet.
    """

    def number(self, value, digits: int = 0, unit: str = "", signed: bool = False) -> str:
        if value is None:
            return "–"
        text = f"{value:+.{digits}f}" if signed else f"{value:.{digits}f}"  # Python's own, "-0.0" too
        return f"{text} {unit}".rstrip() if unit else text

    def percent(self, value, digits: int = 0, signed: bool = False) -> str:
        return self.number(value, digits, signed=signed) + "%"


#: The display of the document's own words (:func:`say` without a display).
DOCUMENT = StoredWords()


def printed(value, spec: str):
    """``value`` at the precision ``format(value, spec)`` prints it, as a JSON number of a text's
    parameters: an int when it prints without decimals (``printed(3.24, ".1f")`` -> 3.2,
    ``printed(12.5, ".0f")`` -> 12, ``printed(2.0, "g")`` -> 2)."""
    text = format(value, spec)
    return float(text) if "." in text else int(text)


def _decimals(value) -> int:
    """The decimals a stored number shows: none for an int, those of its shortest repr for a float."""
    if isinstance(value, int):
        return 0
    text = repr(float(value))
    return len(text.split(".", 1)[1]) if "." in text and "e" not in text else 0


def _quarter_turns(turns, display: Display) -> str:
    quarters = int(round(abs(turns) * 4))
    whole, rest = divmod(quarters, 4)
    text = (str(whole) if whole else "") + _FRACTIONS[rest]
    template = _QUARTER_TURNS[0] if quarters <= 4 else _QUARTER_TURNS[1]
    return display._(template) % {"turns": text or "0"}


def _shown(name: str, value, display: Display) -> str:
    """One parameter as ``display`` shows it (see the module's docstring for the rules)."""
    if isinstance(value, str):
        words = WORDS.get(name)
        return display._(words[value]) if words is not None else value
    if isinstance(value, dict):
        return say(value["id"], value.get("params"), display)
    if value is None or isinstance(value, bool):
        return display.number(None)
    digits = _decimals(value)
    unit = "quarter_turns" if name.endswith("_quarter_turns") else name.rpartition("_")[2]
    if unit == "C":
        return display.temperature(value, digits)
    if unit == "m":
        return display.elevation(value)
    if unit == "hPa":
        return display.pressure(value)
    if unit == "mm":
        return display.small_length(value, digits)
    if unit == "pct":
        return display.percent(value, digits)
    if unit == "quarter_turns":
        return _quarter_turns(value, display)
    return display.number(value, digits)


def say(text_id: str, params: dict | None = None, display: Display = DOCUMENT) -> str:
    """The text ``text_id`` with ``params`` filled in, in ``display``'s units and language.

    Parameters
    ----------
    text_id : str
        A key of :data:`TEXTS`.
    params : dict, optional
        Its parameters, plain JSON values (see the module's docstring for how each is shown).
    display : tuning.display.Display, optional
        Units and language; by default the document's own words (:data:`DOCUMENT`: metric, English,
        as stored in ``recommendations.json``).

    Returns
    -------
    str
    """
    if not params:
        return _said_alone(text_id, display)
    if display is DOCUMENT:  # the plan's own words, many alike: remembered by what they print
        try:  # (repr: 3 and 3.0, 0.0 and -0.0 are equal keys but print differently)
            return _said_in_document(text_id, tuple((k, v, repr(v)) for k, v in params.items()))
        except TypeError:  # a nested text (a dict) among the parameters
            pass
    return _say(text_id, params, display)


def _say(text_id: str, params: dict, display: Display) -> str:
    template = TEXTS[text_id]
    if isinstance(template, tuple):  # (one, more): each its own catalogue entry; English and German
        text = display._(template[0] if params["count"] == 1 else template[1])  # both use one for 1 only
    else:
        text = display._(template)
    values = {name: _shown(name, value, display) for name, value in params.items()}
    if "part" in values:
        values["Part"] = values["part"][:1].upper() + values["part"][1:]
    return text % values


@cache
def _said_alone(text_id: str, display: Display) -> str:
    return _say(text_id, {}, display)


@lru_cache(maxsize=4096)
def _said_in_document(text_id: str, items: tuple) -> str:
    return _say(text_id, {name: value for name, value, _printed in items}, DOCUMENT)


def said(text_id: str, params: dict | None = None, **fields) -> dict:
    """A document object carrying a text: ``fields`` and ``{"id", "params"}``; the English words go
    into ``fields`` under the name given as ``key`` (``text`` unless said otherwise)."""
    key = fields.pop("key", "text")
    params = params or {}
    return {**fields, key: say(text_id, params), "id": text_id, "params": params}


def say_item(item, display: Display = DOCUMENT) -> str:
    """The words of a document object carrying ``id`` and ``params`` (a warning, a check, a jet's
    source, a setting, a work order or one of its changes) in ``display``; an object without an
    id gives its English text (``text``, ``message``, ``label`` or ``change``), a string itself."""
    if isinstance(item, str):
        return item
    if item.get("id") in TEXTS:
        return say(item["id"], item.get("params"), display)
    for key in ("text", "message", "label", "change"):
        if isinstance(item.get(key), str):
            return item[key]
    raise KeyError(f"say_item: the object has no id and no text: {sorted(item)}")


def warning(code: str, text_id: str | None = None, params: dict | None = None) -> dict:
    """A warning of the plan document: ``{"code", "severity", "message", "id", "params"}``; the
    text id is the code itself or the code and a variant (``no-safe-jet/order``)."""
    text_id = text_id or code
    if text_id.split("/", 1)[0] != code:
        raise ValueError(f"warning: text id {text_id!r} is not one of code {code!r}")
    return said(text_id, params, key="message", code=code, severity=CODES[code][0])


def severity_rank(severity: str) -> int:
    """0 for danger, 1 for action, 2 for note (for sorting)."""
    return SEVERITIES.index(severity)
