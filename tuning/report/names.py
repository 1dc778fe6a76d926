"""Safe, stable file names from bike ids."""

from __future__ import annotations

import hashlib
import re
import unicodedata

_RESERVED = {"CON", "PRN", "AUX", "NUL", *(f"COM{i}" for i in range(1, 10)), *(f"LPT{i}" for i in range(1, 10))}
_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def safe_stem(bike_id: str) -> str:
    """Return a file-name stem for ``bike_id`` that is safe on Windows, macOS and Linux.

    Letters, digits, ``.``, ``_`` and ``-`` are kept (accents folded to ASCII); every other run of
    characters becomes ``_``; leading dots and trailing dots/spaces are removed (no ``..``, no
    hidden files); reserved device names (``CON``, ``NUL``, ``COM1`` ...) get a ``_`` suffix;
    at most 80 characters. An id left empty becomes ``bike``.
    """
    text = unicodedata.normalize("NFKD", str(bike_id)).encode("ascii", "ignore").decode("ascii")
    text = _UNSAFE.sub("_", text).strip("._- ")
    text = re.sub(r"\.{2,}", ".", text)[:80].rstrip(". ")
    if not text:
        text = "bike"
    base, dot, rest = text.partition(".")
    if base.upper() in _RESERVED:
        text = f"{base}_{dot}{rest}"
    return text


def safe_file_names(bike_ids: list[str]) -> dict[str, str]:
    """Map every bike id to a unique safe stem, in the order given.

    Stems are compared case-insensitively (case-insensitive file systems); a collision gets a
    short suffix made from a hash of the id, so the name does not depend on the order of bikes.
    """
    stems = {bike: safe_stem(bike) for bike in dict.fromkeys(bike_ids)}
    counts: dict[str, int] = {}
    for stem in stems.values():
        counts[stem.lower()] = counts.get(stem.lower(), 0) + 1
    names: dict[str, str] = {}
    used: set[str] = set()
    for bike, stem in stems.items():
        name = stem
        if counts[stem.lower()] > 1 or stem != bike:
            if counts[stem.lower()] > 1:
                name = f"{stem}-{hashlib.sha1(bike.encode('utf-8')).hexdigest()[:8]}"
        while name.lower() in used:
            name = f"{name}-{hashlib.sha1(name.encode('utf-8')).hexdigest()[:4]}"
        used.add(name.lower())
        names[bike] = name
    return names
