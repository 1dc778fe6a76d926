"""The plan's warnings: one home for their codes, severities and wording.

Severities: ``danger`` (the engine may run lean: act before riding hard), ``action`` (something
to order or do), ``note`` (an assumption or an information). Codes in :data:`BIKE_CODES` hold for
a bike whatever the session (its records), so they are given once per bike, not per session.
"""

from __future__ import annotations

__all__ = ["CODES", "SEVERITIES", "BIKE_CODES", "warning", "severity_rank"]

SEVERITIES = ("danger", "action", "note")

#: code -> (severity, what it means). Stable: the CSV's ``warnings`` column carries the codes.
CODES = {
    "no-safe-jet": ("danger", "nothing at hand is rich enough: the size to fit must be ordered or found before riding hard"),
    "predicted-lean": ("danger", "the predicted mixture is leaner than the target band at some opening and hour"),
    "stock-shortage": ("action", "the size to fit is neither on the shelf nor coming off another bike: order it"),
    "ideal-outside-family": ("action", "the ideal size lies beyond the largest or smallest size of the jet family"),
    "screw-out-of-range": ("action", "the mixture screw would leave the middle of its range: the pilot jet changes instead"),
    "cold-start": ("action", "cold morning: choke and a full warm-up before load"),
    "hot-fuel": ("action", "hot session: fuel may percolate or vapour-lock; keep the fuel cool and shaded"),
    "factor-out-of-range": ("note", "the required jet-area factor lies outside the range the method is meant for"),
    "window-too-wide": ("note", "conditions change so much within the session that one setting does not fit it all"),
    "icing-risk": ("note", "cool, humid air: carburetor icing is possible"),
    "assumed-needle-geometry": ("note", "the needle geometry was assumed, not given: the clip only moves richer"),
    "assumed-screw-range": ("note", "the mixture screw's usable range was assumed, not given"),
    "no-needle": ("note", "no needle or clip position on record: the clip is not planned"),
}

#: Codes about a bike's records rather than a session: given once per bike.
BIKE_CODES = frozenset({"assumed-needle-geometry", "assumed-screw-range", "no-needle"})


def warning(code: str, message: str) -> dict:
    """A warning of the plan document: ``{"code", "severity", "message"}``."""
    return {"code": code, "severity": CODES[code][0], "message": message}


def severity_rank(severity: str) -> int:
    """0 for danger, 1 for action, 2 for note (for sorting)."""
    return SEVERITIES.index(severity)
