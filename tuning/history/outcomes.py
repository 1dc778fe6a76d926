"""The outcomes file: what was fitted and seen, per bike and session, read and checked.

One home of its column names (:data:`COLUMNS`); :data:`FORM_FIELD_OF` names the box of the setup
sheet's "work and record" form (``tuning.report.tables.FORM_FIELDS``) that each column copies.

A row names a ``bike`` of the fleet and a ``session`` of the event (or ``after``: after the event,
for the row that says the bike was returned to its proven settings). Any of: ``throttle`` (a
fraction 0..1, or percent 0..100: a file whose throttle column holds any value above 1, or a
``%`` sign, is read in percent, and a value between 0 and 1 in it is refused as ambiguous) with ``wideband_afr``; ``plug`` (``lean``, ``ok``, ``rich``);
``remark``; the settings fitted where they differ from the plan (``main_jet``, ``pilot_jet``,
``clip``, ``mixture_screw_turns``); ``returned_to_proven`` (yes/no); ``time`` for the many rows of
a wideband log (seconds, or an ISO 8601 time). Every row is checked before anything is recorded;
each bad cell is one :class:`~tuning.errors.Problem` (``file:line: column: problem``).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
from datetime import datetime
from pathlib import Path

from tuning.errors import ConfigError, Problem

__all__ = ["AFTER", "COLUMNS", "FORM_FIELD_OF", "PLUG_WORDS", "AFR_RANGE", "read_outcomes"]

#: The columns of an outcomes file, in the order the docs list them.
COLUMNS = (
    "bike",
    "session",
    "time",
    "throttle",
    "wideband_afr",
    "plug",
    "remark",
    "main_jet",
    "pilot_jet",
    "clip",
    "mixture_screw_turns",
    "returned_to_proven",
)
#: The sheet's form box (``tuning.report.tables.FORM_FIELDS``) each column copies.
FORM_FIELD_OF = {
    "plug": "plug_colour",
    "remark": "rider_remark",
    "main_jet": "fitted_main_jet",
    "pilot_jet": "fitted_pilot_jet",
    "clip": "fitted_clip",
    "mixture_screw_turns": "fitted_screw_turns",
    "returned_to_proven": "returned_to_proven",
}
#: The session name of a row written after the event (the return to the proven settings).
AFTER = "after"
PLUG_WORDS = ("lean", "ok", "rich")
#: Air-fuel ratios a wideband reading may hold. Gasoline engines run from about 10:1 (full rich) to
#: about 17:1 (lean cruise); wideband controllers read roughly lambda 0.65 to 1.4 and more, so a value
#: outside 8..20 is a typing or unit slip (a lambda value, a percent) rather than a reading. Common
#: practice, from memory.
AFR_RANGE = (8.0, 20.0)
SCREW_TURNS_RANGE = (0.0, 10.0)  #: [turns out] a screw fitted outside this is a typing slip (our choice)
MAX_BYTES = 5_000_000
MAX_ROWS = 200_000
_YES, _NO = ("yes", "y", "true", "1", "x"), ("no", "n", "false", "0", "")
_SETTINGS = ("main_jet", "pilot_jet", "clip", "mixture_screw_turns")


def _number(text: str) -> float:
    value = float(text.replace(",", ".") if text.count(",") == 1 and "." not in text else text)
    if not math.isfinite(value):
        raise ValueError(text)
    return value


def read_outcomes(path, fleet, event) -> tuple[str, list[dict]]:
    """Read and check an outcomes file against ``fleet`` and ``event``: (sha256 of the bytes, rows).

    Each row is a dict of :data:`COLUMNS` (``throttle`` as a fraction, numbers as floats, ``clip``
    an int, ``returned_to_proven`` a bool or None, empty cells None) plus ``line``. Raises
    :class:`~tuning.errors.ConfigError` with every problem of the file, one per bad cell.
    """
    path = Path(path)
    name = str(path)
    try:
        with open(path, "rb") as handle:
            data = handle.read(MAX_BYTES + 1)
    except OSError as exc:
        raise ConfigError([Problem(name, None, "", f"cannot read the file ({exc.strerror or exc})")]) from None
    if len(data) > MAX_BYTES:
        raise ConfigError([Problem(name, None, "", f"larger than {MAX_BYTES:,} bytes; split it into several files")])
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ConfigError(
            [Problem(name, None, "", f"not UTF-8 text (byte {exc.start}); save it as UTF-8 CSV")]
        ) from None
    raw, problems = _rows(name, text)
    if not problems:
        rows, problems = _check(name, raw, fleet, event)
    if problems:
        raise ConfigError(problems)
    return hashlib.sha256(data).hexdigest(), rows


def _rows(name: str, text: str) -> tuple[list[tuple[int, dict]], list[Problem]]:
    """The header checked and the rows as (line, {column: text})."""
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except StopIteration:
        return [], [Problem(name, 1, "", "the file is empty; the first line names the columns, e.g. bike,session,plug")]
    except csv.Error as exc:
        return [], [Problem(name, 1, "", f"not a CSV header ({exc})")]
    columns = [h.strip().lower() for h in header]
    problems = [
        Problem(name, 1, c or f"column {i + 1}", f"unknown column; known: {', '.join(COLUMNS)}")
        for i, c in enumerate(columns)
        if c not in COLUMNS
    ]
    problems += [Problem(name, 1, c, "named twice") for i, c in enumerate(columns) if c in columns[:i]]
    problems += [
        Problem(name, 1, c, "missing; every row names its bike and session")
        for c in ("bike", "session")
        if c not in columns
    ]
    if problems:
        return [], problems
    rows, line = [], 1
    try:
        for cells in reader:
            start, line = line + 1, reader.line_num
            if not any(c.strip() for c in cells):
                continue
            if len(cells) != len(columns):
                problems.append(Problem(name, start, "", f"{len(cells)} cells where the header has {len(columns)}"))
                continue
            rows.append((start, {c: v.strip() for c, v in zip(columns, cells)}))
            if len(rows) > MAX_ROWS:
                return [], [Problem(name, start, "", f"more than {MAX_ROWS:,} rows; split the file")]
    except csv.Error as exc:
        problems.append(Problem(name, line + 1, "", f"not CSV ({exc})"))
    if not rows and not problems:
        problems.append(Problem(name, 2, "", "no rows below the header"))
    return rows, problems


def _check(name, raw, fleet, event) -> tuple[list[dict], list[Problem]]:
    bikes = {b.id: b for b in fleet.bikes}
    sessions = {s.name for s in event.sessions}
    percent = any(r.get("throttle", "").endswith("%") or _above_one(r.get("throttle", "")) for _line, r in raw)
    rows, problems = [], []
    for line, cells in raw:
        row, bad = {"line": line}, []

        def fail(column, message, line=line, bad=bad):
            bad.append(Problem(name, line, column, message))

        bike = bikes.get(cells["bike"])
        if bike is None:
            fail("bike", f"{cells['bike']!r} is not a bike of fleet {fleet.name!r}" if cells["bike"] else "empty")
        if cells["session"] not in sessions and cells["session"] != AFTER:
            known = ", ".join(repr(s.name) for s in event.sessions)
            fail(
                "session",
                f"{cells['session']!r} is not a session of {event.name!r} (its sessions: {known}; "
                f"or {AFTER!r} for a row after the event)",
            )
        row["bike"], row["session"] = cells["bike"], cells["session"]
        row["time"] = _time(cells.get("time", ""), fail)
        row["throttle"] = _throttle(cells.get("throttle", ""), percent, fail)
        row["wideband_afr"] = _ranged(
            cells.get("wideband_afr", ""),
            "wideband_afr",
            AFR_RANGE,
            fail,
            "an air-fuel ratio such as 12.8 (a lambda value times 14.7 for gasoline)",
        )
        if row["wideband_afr"] is not None and row["throttle"] is None and not any(p.field == "throttle" for p in bad):
            fail("wideband_afr", "a wideband reading needs the throttle opening it was taken at (column throttle)")
        plug = cells.get("plug", "").lower()
        row["plug"] = plug or None
        if plug and plug not in PLUG_WORDS:
            fail("plug", f"{cells['plug']!r}: expected one of {', '.join(PLUG_WORDS)}")
        row["remark"] = cells.get("remark", "") or None
        row["returned_to_proven"] = _yes_no(cells.get("returned_to_proven", ""), fail)
        for key in _SETTINGS:
            row[key] = _setting(key, cells.get(key, ""), bike, fleet, fail)
        if not bad and all(
            row[k] in (None, False)
            for k in ("throttle", "wideband_afr", "plug", "remark", "returned_to_proven", *_SETTINGS)
        ):
            fail("", "the row says nothing: give a reading, a plug, a remark, a fitted setting or returned_to_proven")
        problems += bad
        rows.append(row)
    return rows, problems


def _above_one(text: str) -> bool:
    try:
        return _number(text) > 1.0
    except ValueError:
        return False


def _time(text, fail):
    if not text:
        return None
    try:
        seconds = _number(text)
    except ValueError:
        try:
            return datetime.fromisoformat(text).isoformat()
        except ValueError:
            fail("time", f"{text!r}: expected seconds (12.5) or an ISO 8601 time (2026-06-13T10:15:00)")
            return None
    if seconds < 0:
        fail("time", f"{text!r}: seconds cannot be negative")
        return None
    return f"{seconds:g}"


def _throttle(text, percent, fail):
    if not text:
        return None
    try:
        value = _number(text.removesuffix("%").strip())
    except ValueError:
        fail("throttle", f"{text!r}: expected a fraction 0..1 or a percent 0..100")
        return None
    high = 100.0 if percent else 1.0
    if percent and 0.0 < value < 1.0 and not text.endswith("%"):
        fail(
            "throttle",
            f"{text!r} is a fraction, but other rows of this file give percent (above 1): write "
            f"{value * 100:g} for {value * 100:g} %, or all rows as fractions",
        )
        return None
    if not 0.0 <= value <= high:
        fail(
            "throttle",
            f"{text!r}: expected 0 to {high:g}{' %' if percent else ''}"
            + ("" if percent else " (a fraction; a file in percent has values above 1)"),
        )
        return None
    return value / 100.0 if percent else value


def _ranged(text, column, limits, fail, example):
    if not text:
        return None
    try:
        value = _number(text)
    except ValueError:
        fail(column, f"{text!r}: expected a number, {example}")
        return None
    if not limits[0] <= value <= limits[1]:
        fail(column, f"{text!r}: expected {limits[0]:g} to {limits[1]:g}, {example}")
        return None
    return value


def _yes_no(text, fail):
    word = text.lower()
    if word in _YES:
        return True
    if word in _NO:
        return False if word else None
    fail("returned_to_proven", f"{text!r}: expected yes or no")
    return None


def _setting(key, text, bike, fleet, fail):
    """A fitted setting, checked against the bike's jet family or needle (None: not given or bad)."""
    if not text:
        return None
    try:
        value = _number(text)
    except ValueError:
        fail(key, f"{text!r}: expected a number")
        return None
    if bike is None:
        return None
    s = bike.settings
    if key in ("main_jet", "pilot_jet"):
        family = fleet.jet_families[getattr(s, f"{key}_family")]
        if not any(abs(value - size) < 1e-9 for size in family.sizes):
            sizes = ", ".join(f"{x:g}" for x in family.sizes)
            fail(key, f"{text!r} is not a size of jet family {family.name!r} ({sizes})")
            return None
        return value
    if key == "clip":
        if s.needle is None:
            fail(key, f"bike {bike.id} has no needle on record; leave clip empty or add the needle to the fleet file")
            return None
        grooves = fleet.needles[s.needle].grooves
        if value != int(value) or not 1 <= value <= grooves:
            fail(key, f"{text!r}: expected a groove 1 to {grooves} (needle {s.needle}, groove 1 at the top)")
            return None
        return int(value)
    if not SCREW_TURNS_RANGE[0] <= value <= SCREW_TURNS_RANGE[1]:
        fail(key, f"{text!r}: expected {SCREW_TURNS_RANGE[0]:g} to {SCREW_TURNS_RANGE[1]:g} turns out")
        return None
    return value


def row_key(row: dict) -> str:
    """A digest of a row's values (not its line): the same row from another file has the same key."""
    values = {k: row.get(k) for k in COLUMNS}
    return hashlib.sha256(json.dumps(values, sort_keys=True).encode()).hexdigest()
