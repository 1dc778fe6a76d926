"""The history's tables and the migrations that make them, one numbered step after another.

A database records its version in ``schema_version`` (one row). :func:`migrate` runs every step
above that number, each in the same transaction as the new number, so a database is always at a
whole version. A step only adds (tables, columns, indexes): no step drops or rewrites what a user
recorded. Add a step at the end of :data:`MIGRATIONS`; never edit one that has shipped. Each step
is frozen DDL of its own (not the current table objects), so an old database goes through the
same steps as the new one did.
"""

from __future__ import annotations

from collections.abc import Callable

import sqlalchemy as sa

__all__ = [
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "metadata",
    "events",
    "plans",
    "imports",
    "outcomes",
    "migrate",
    "version_of",
]

metadata = sa.MetaData()

schema_version = sa.Table(
    "schema_version",
    metadata,
    sa.Column("version", sa.Integer, nullable=False),
)


def _v1_tables(md: sa.MetaData) -> tuple[sa.Table, ...]:
    """The tables as version 1 made them (also the shape queried today: no step changed them yet;
    a later step that adds a column adds it here only after its own ALTER TABLE)."""
    #: One row per event: name, site and the dates of its first and last session (site local dates).
    events = sa.Table(
        "events",
        md,
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("key", sa.String(600), nullable=False, unique=True),
        sa.Column("name", sa.String(300), nullable=False),
        sa.Column("site", sa.String(300), nullable=False),
        sa.Column("elevation_m", sa.Float, nullable=False),
        sa.Column("first_day", sa.String(10), nullable=False),  # ISO date, site local
        sa.Column("last_day", sa.String(10), nullable=False),
    )

    #: Every plan made (``plan`` and ``build``): the whole plan document as JSON.
    plans = sa.Table(
        "plans",
        md,
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("event_id", sa.Integer, sa.ForeignKey("events.id"), nullable=False),
        sa.Column("fleet", sa.String(300), nullable=False),
        sa.Column("made_at", sa.String(32), nullable=False),  # ISO 8601, UTC
        sa.Column("document", sa.Text, nullable=False),
    )

    #: Every outcomes file recorded, by its content: the same file twice is recorded once.
    imports = sa.Table(
        "imports",
        md,
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("event_id", sa.Integer, sa.ForeignKey("events.id"), nullable=False),
        sa.Column("fleet", sa.String(300), nullable=False),
        sa.Column("file_name", sa.String(1000), nullable=False),
        sa.Column("sha256", sa.String(64), nullable=False),
        sa.Column("recorded_at", sa.String(32), nullable=False),
        sa.Column("rows", sa.Integer, nullable=False),
        sa.UniqueConstraint("event_id", "fleet", "sha256", name="imports_once"),
    )

    #: One row per reading, plug, remark or fitted setting. ``row_key`` is a digest of the row's values:
    #: the same row in another file (an export made again) is kept once.
    outcomes = sa.Table(
        "outcomes",
        md,
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("import_id", sa.Integer, sa.ForeignKey("imports.id"), nullable=False),
        sa.Column("event_id", sa.Integer, sa.ForeignKey("events.id"), nullable=False),
        sa.Column("fleet", sa.String(300), nullable=False),
        sa.Column("row_key", sa.String(64), nullable=False),
        sa.Column("line", sa.Integer, nullable=False),
        sa.Column("bike", sa.String(200), nullable=False),
        sa.Column("session", sa.String(300), nullable=False),
        sa.Column("time", sa.String(64)),
        sa.Column("throttle", sa.Float),  # [1] fraction 0..1
        sa.Column("wideband_afr", sa.Float),
        sa.Column("plug", sa.String(8)),
        sa.Column("remark", sa.Text),
        sa.Column("main_jet", sa.Float),
        sa.Column("pilot_jet", sa.Float),
        sa.Column("clip", sa.Integer),
        sa.Column("mixture_screw_turns", sa.Float),
        sa.Column("returned_to_proven", sa.Boolean),
        sa.UniqueConstraint("event_id", "fleet", "row_key", name="outcomes_once"),
    )
    return events, plans, imports, outcomes


events, plans, imports, outcomes = _v1_tables(metadata)


def _v1(conn) -> None:
    """Events, plans, outcome files and outcomes (from their own frozen definitions)."""
    frozen = sa.MetaData()
    frozen.create_all(conn, tables=list(_v1_tables(frozen)))


def _v2(conn) -> None:
    """Indexes for the questions asked most: a bike's outcomes, an event's plans."""
    conn.execute(sa.text("CREATE INDEX outcomes_by_bike ON outcomes (fleet, bike)"))
    conn.execute(sa.text("CREATE INDEX plans_by_event ON plans (event_id, fleet)"))


#: The steps, in order: step ``i`` (1-based) brings a database from version ``i - 1`` to ``i``.
MIGRATIONS: list[Callable] = [_v1, _v2]
SCHEMA_VERSION = len(MIGRATIONS)


def version_of(conn) -> int:
    """The schema version of the database on ``conn`` (0: empty, nothing of carbfleet's yet)."""
    if not sa.inspect(conn).has_table("schema_version"):
        return 0
    return int(conn.execute(sa.select(sa.func.max(schema_version.c.version))).scalar() or 0)


def migrate(engine, upto: int = SCHEMA_VERSION) -> int:
    """Bring the database to version ``upto``, one step per transaction; the version reached.

    Two processes migrating at once: each step re-reads the version inside its transaction, and
    SQLite's write lock (``BEGIN IMMEDIATE``) or PostgreSQL's lock on ``schema_version`` makes the
    second wait and then find the step done.
    """
    with engine.begin() as conn:
        metadata.create_all(conn, tables=[schema_version])
    while True:
        with engine.begin() as conn:
            if conn.dialect.name == "postgresql":
                conn.exec_driver_sql("LOCK TABLE schema_version IN EXCLUSIVE MODE")
            version = version_of(conn)
            if version >= upto:
                return version
            if version > len(MIGRATIONS):
                return version
            MIGRATIONS[version](conn)
            if version == 0:
                conn.execute(schema_version.insert().values(version=1))
            else:
                conn.execute(schema_version.update().values(version=version + 1))
