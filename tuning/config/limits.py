"""Size limits of the inputs, checked when the files are loaded (before any planning).

A plan grows with bikes × sessions (one entry each) and with bikes × session hours (one hour
record each). Without limits a 5 MB fleet file (120,000 bikes) would be planned for minutes
and then run out of memory. At these limits ``carbfleet plan`` took at most about 10 s and
0.7 GB of memory on a 2-core machine (figures and commands in DEVELOPERS.md), within the
1 GB and 30 s aimed at. A larger fleet is planned in parts (one fleet file per workshop or
per model).
"""

from __future__ import annotations

__all__ = [
    "MAX_BIKES",
    "MAX_SESSIONS",
    "MAX_BIKE_SESSIONS",
    "MAX_BIKE_HOURS",
    "MAX_WEATHER_ROWS",
    "MAX_METAR_REPORTS",
    "limits_text",
]

#: Most bikes in a fleet file.
MAX_BIKES = 2_000
#: Most sessions in an event file.
MAX_SESSIONS = 100
#: Most bikes × sessions (entries of the plan).
MAX_BIKE_SESSIONS = 10_000
#: Most bikes × session hours, a session counting its start, its end and every whole hour
#: between (a 09:00–12:00 session counts 4).
MAX_BIKE_HOURS = 100_000
#: Most rows of a weather table (two years of hourly rows fit).
MAX_WEATHER_ROWS = 20_000
#: Most METAR reports in an event file (a month of half-hourly reports fits).
MAX_METAR_REPORTS = 2_000


def limits_text() -> str:
    """The limits as a Markdown list (for FORMATS.md)."""
    from tuning.config.source import MAX_FILE_BYTES, MAX_NESTING, MAX_NODES

    rows = [
        (MAX_FILE_BYTES, "bytes in any input file"),
        (MAX_NODES, "YAML values (scalars, lists, mappings) in a fleet or event file"),
        (MAX_NESTING, "levels of nested lists and mappings in a YAML file"),
        (MAX_BIKES, "bikes in a fleet file"),
        (MAX_SESSIONS, "sessions in an event file"),
        (MAX_BIKE_SESSIONS, "bikes × sessions (entries of one plan)"),
        (
            MAX_BIKE_HOURS,
            "bikes × session hours (a session counts its start, its end and every whole hour between, times the heights it is ridden at)",
        ),
        (MAX_WEATHER_ROWS, "rows of a weather table"),
        (MAX_METAR_REPORTS, "METAR reports in an event file"),
    ]
    return "\n".join(f"* at most {n:,} {what}" for n, what in rows)
