"""The history store: events, the plans made for them, and what was fitted and seen.

SQLite by default (a file, no server: write-ahead logging, a busy timeout, ``BEGIN IMMEDIATE`` so
two writers queue instead of failing), PostgreSQL for a history shared by several branches (a URL
``postgresql://user@host/db``, driver psycopg, ``pip install carbfleet[postgresql]``). Every write is
one transaction: an interrupted ``record`` leaves nothing of its file, a plan is recorded whole or
not at all. Nothing is ever deleted or overwritten: a new plan is a new row, an outcomes file
recorded again adds nothing (its content digest and each row's digest are unique).
"""

from __future__ import annotations

import json
from collections import Counter
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from zoneinfo import ZoneInfo

import sqlalchemy as sa

from tuning.errors import UserError
from tuning.history import schema
from tuning.history.outcomes import COLUMNS, row_key
from tuning.history.schema import events, imports, outcomes, plans

__all__ = ["History", "event_key", "open_history", "is_url"]

SQLITE_BUSY_TIMEOUT_MS = 30_000  #: how long a writer waits for another one [ms] (our choice)


def is_url(text: str) -> bool:
    """True when ``--history`` names a database server rather than a file."""
    return "://" in text


def event_key(event) -> str:
    """The event's identity in the history: name, site and the site-local dates of its sessions.

    The same event file planned again (a new forecast) has the same key; the same name at another
    site or on other days is another event.
    """
    first, last = _days(event)
    return f"{event.name} | {event.site.name} | {first}..{last}"


def _days(event) -> tuple[str, str]:
    zone = ZoneInfo(event.site.time_zone)
    if not event.sessions:
        return "", ""
    first = min(s.start for s in event.sessions).astimezone(zone).date().isoformat()
    last = max(s.end for s in event.sessions).astimezone(zone).date().isoformat()
    return first, last


def open_history(where: str | Path) -> History:
    """Open (and create or migrate) the history at a file path or a ``postgresql://`` URL.

    A file's folder must exist (UserError otherwise: carbfleet does not guess where a shared
    history should live). A database made by a newer carbfleet is refused, not changed.
    """
    where = str(where)
    if is_url(where):
        url = where
        if url.startswith(("postgresql://", "postgres://")):
            url = "postgresql+psycopg://" + url.split("://", 1)[1]
        if not url.startswith("postgresql+psycopg://"):
            raise UserError(f"--history: {_shown(where)}: only a file path or a postgresql:// URL is known")
        try:
            import psycopg  # noqa: F401
        except ImportError:
            raise UserError(
                "--history: a PostgreSQL history needs the driver: pip install 'carbfleet[postgresql]'"
            ) from None
        engine = sa.create_engine(url, pool_pre_ping=True)
    else:
        path = Path(where)
        if not path.parent.is_dir():
            raise UserError(f"--history: {path}: the folder {path.parent} does not exist; create it or name another")
        if path.is_dir():
            raise UserError(f"--history: {path} is a folder; name a file, e.g. {path / 'history.sqlite'}")
        engine = sa.create_engine(f"sqlite:///{path.resolve()}")
        _sqlite_transactions(engine)
    try:
        version = schema.migrate(engine)
    except sa.exc.OperationalError as exc:
        engine.dispose()
        raise UserError(
            f"--history: {_shown(where)}: cannot open it ({_reason(exc)}); name another with "
            "--history, or plan without one: --no-history"
        ) from None
    except sa.exc.DatabaseError as exc:
        engine.dispose()
        raise UserError(f"--history: {_shown(where)}: not a carbfleet history ({_reason(exc)})") from None
    if version > schema.SCHEMA_VERSION:
        engine.dispose()
        raise UserError(
            f"--history: {_shown(where)} was written by a newer carbfleet (schema {version}, this one "
            f"knows {schema.SCHEMA_VERSION}); update carbfleet"
        )
    return History(engine)


def _shown(where: str) -> str:
    """A URL without its password."""
    return sa.engine.make_url(where).render_as_string(hide_password=True) if is_url(where) else where


def _reason(exc) -> str:
    return (
        str(getattr(exc, "orig", exc)).strip().splitlines()[0]
        if str(getattr(exc, "orig", exc)).strip()
        else type(exc).__name__
    )


def _sqlite_transactions(engine) -> None:
    """SQLite: write-ahead log, busy timeout, foreign keys, and ``BEGIN IMMEDIATE`` for every transaction.

    Python's sqlite3 driver opens transactions lazily; SQLAlchemy's documented recipe takes that
    over so that a transaction takes the write lock at its start (a second writer waits, up to the
    busy timeout, instead of failing half-way).
    """

    @sa.event.listens_for(engine, "connect")
    def _connect(dbapi_connection, _record):
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA journal_mode = WAL")
        cursor.execute("PRAGMA foreign_keys = ON")
        cursor.close()

    @sa.event.listens_for(engine, "begin")
    def _begin(conn):
        conn.exec_driver_sql("BEGIN IMMEDIATE")


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="microseconds")  # orders a plan and an import made in one second


def _insert_new(conn, table, rows: list[dict], keys: list[str]):
    """Insert the rows whose unique ``keys`` are not there yet (SQLite and PostgreSQL alike)."""
    if not rows:
        return 0
    if conn.dialect.name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        from sqlalchemy.dialects.sqlite import insert
    statement = insert(table).on_conflict_do_nothing(index_elements=keys).returning(table.c[keys[-1]])
    return len(conn.execute(statement, rows).all())  # rowcount is -1 for many rows on some drivers


@dataclass(frozen=True)
class Recorded:
    """What ``record`` did: ``rows`` new rows recorded of ``total`` in the file; ``again`` the file
    had been recorded before (nothing added)."""

    rows: int
    total: int
    again: bool


class History:
    """One history database (see the module's text). Close it with :meth:`close` or ``with``."""

    def __init__(self, engine):
        self.engine = engine

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self) -> None:
        self.engine.dispose()

    # --- writing ---------------------------------------------------------------------------
    def _event_id(self, conn, event) -> int:
        first, last = _days(event)
        key = event_key(event)
        _insert_new(
            conn,
            events,
            [
                {
                    "key": key,
                    "name": event.name,
                    "site": event.site.name,
                    "elevation_m": float(event.site.elevation),
                    "first_day": first,
                    "last_day": last,
                }
            ],
            ["key"],
        )
        return conn.execute(sa.select(events.c.id).where(events.c.key == key)).scalar_one()

    def record_plan(self, event, plan: dict, made_at: str | None = None) -> int:
        """Record a plan document made for ``event`` (one transaction); the new plan's id."""
        with self.engine.begin() as conn:
            event_id = self._event_id(conn, event)
            return conn.execute(
                plans.insert().values(
                    event_id=event_id,
                    fleet=plan["fleet"],
                    made_at=made_at or _now(),
                    document=json.dumps(plan, sort_keys=True, ensure_ascii=False),
                )
            ).inserted_primary_key[0]

    def record_outcomes(self, fleet, event, file_name: str, sha256: str, rows: list[dict]) -> Recorded:
        """Record checked outcome rows (from :func:`tuning.history.outcomes.read_outcomes`) in one
        transaction. A file recorded before (same content, event and fleet) adds nothing; a row
        recorded before from another file is kept once (its n-th copy in a file counts as another row)."""
        with self.engine.begin() as conn:
            event_id = self._event_id(conn, event)
            found = conn.execute(
                sa.select(imports.c.id).where(
                    imports.c.event_id == event_id, imports.c.fleet == fleet.name, imports.c.sha256 == sha256
                )
            ).first()
            if found is not None:
                return Recorded(0, len(rows), True)
            import_id = conn.execute(
                imports.insert().values(
                    event_id=event_id,
                    fleet=fleet.name,
                    file_name=str(file_name)[:1000],
                    sha256=sha256,
                    recorded_at=_now(),
                    rows=len(rows),
                )
            ).inserted_primary_key[0]
            seen = Counter()
            values = []
            for row in rows:
                key = row_key(row)
                seen[key] += 1
                values.append(
                    {
                        **{c: row.get(c) for c in COLUMNS},
                        "line": row["line"],
                        "import_id": import_id,
                        "event_id": event_id,
                        "fleet": fleet.name,
                        "row_key": f"{key[:56]}#{seen[key]}",
                    }
                )
            added = _insert_new(conn, outcomes, values, ["event_id", "fleet", "row_key"])
        return Recorded(added, len(rows), False)

    # --- reading ---------------------------------------------------------------------------
    def last_plan(self, event, fleet_name: str) -> tuple[str, dict] | None:
        """The latest plan recorded for this event and fleet: (made_at, document), or None."""
        with self.engine.connect() as conn:
            found = conn.execute(
                sa.select(plans.c.made_at, plans.c.document)
                .join(events, events.c.id == plans.c.event_id)
                .where(events.c.key == event_key(event), plans.c.fleet == fleet_name)
                .order_by(plans.c.id.desc())
                .limit(1)
            ).first()
        return None if found is None else (found.made_at, json.loads(found.document))

    def plan_for(self, event_key: str, fleet_name: str | None = None) -> dict | None:
        """The plan document of the latest plan made for an event, or None if none was recorded.

        Parameters
        ----------
        event_key : str
            The event's key (:func:`event_key`; also the ``event_key`` of every outcome row).
        fleet_name : str, optional
            Only plans made for this fleet (several fleets may share a history).

        Returns
        -------
        dict or None
            The plan document (``carbfleet-plan/3``) exactly as ``make_plan`` returned it, JSON
            types (lists, not tuples). "Latest" is the last recorded: the plan that was printed
            last before the event, whose settings the mechanics fitted unless an outcome row says
            otherwise.
        """
        query = (
            sa.select(plans.c.document)
            .join(events, events.c.id == plans.c.event_id)
            .where(events.c.key == event_key)
            .order_by(plans.c.id.desc())
            .limit(1)
        )
        if fleet_name is not None:
            query = query.where(plans.c.fleet == fleet_name)
        with self.engine.connect() as conn:
            found = conn.execute(query).scalar()
        return None if found is None else json.loads(found)

    def plan_ridden(self, event_key: str, fleet_name: str) -> dict | None:
        """The plan the bikes were set up from for an event: the last one recorded before the event's
        first outcomes file (a plan made after the readings came in, a re-plan with them, is not
        what was ridden); the earliest when every plan is newer; None when no plan was recorded.
        """
        with self.engine.connect() as conn:
            event_id = conn.execute(sa.select(events.c.id).where(events.c.key == event_key)).scalar()
            if event_id is None:
                return None
            first_import = conn.execute(
                sa.select(sa.func.min(imports.c.recorded_at)).where(
                    imports.c.event_id == event_id, imports.c.fleet == fleet_name
                )
            ).scalar()
            query = sa.select(plans.c.document).where(plans.c.event_id == event_id, plans.c.fleet == fleet_name)
            before = None
            if first_import is not None:
                before = conn.execute(
                    query.where(plans.c.made_at <= first_import).order_by(plans.c.id.desc()).limit(1)
                ).scalar()
            found = before if before is not None else conn.execute(query.order_by(plans.c.id).limit(1)).scalar()
        return None if found is None else json.loads(found)

    def outcomes(
        self, fleet_name: str | None = None, bike: str | None = None, event_key: str | None = None
    ) -> list[dict]:
        """Every outcome row recorded, as plain dicts, oldest event first, then in file order.

        Parameters
        ----------
        fleet_name, bike, event_key : str, optional
            Only rows of this fleet, bike, event.

        Returns
        -------
        list of dict
            Keys: ``event_key`` (str, see :func:`event_key`), ``fleet``, ``bike``, ``session`` (a
            session name of the event's plan, or ``"after"`` for a row written after the event),
            ``time`` (str: seconds ``"12.5"`` or an ISO 8601 time; None), ``throttle`` (fraction
            0..1 or None; a file in percent was converted), ``wideband_afr`` (air-fuel mass ratio
            or None; every row with one has a throttle), ``plug`` (``"lean"``, ``"ok"``,
            ``"rich"`` or None), ``remark`` (str or None), the settings fitted where they differed
            from the plan: ``main_jet``, ``pilot_jet`` (jet numbers of the bike's families, float
            or None), ``clip`` (groove, int or None), ``mixture_screw_turns`` (float or None), and
            ``returned_to_proven`` (True, False or None: not said). Numbers are SI-free as typed.
        """
        query = (
            sa.select(events.c.key.label("event_key"), events.c.last_day, outcomes)
            .join(events, events.c.id == outcomes.c.event_id)
            .order_by(events.c.last_day, events.c.id, outcomes.c.import_id, outcomes.c.line, outcomes.c.id)
        )
        if fleet_name is not None:
            query = query.where(outcomes.c.fleet == fleet_name)
        if bike is not None:
            query = query.where(outcomes.c.bike == bike)
        if event_key is not None:
            query = query.where(events.c.key == event_key)
        with self.engine.connect() as conn:
            found = conn.execute(query).mappings().all()
        keys = ("event_key", "fleet", *COLUMNS)
        return [{k: r[k] for k in keys} for r in found]

    def fleets(self) -> list[str]:
        """The names of the fleets with plans or outcomes in this history, sorted."""
        with self.engine.connect() as conn:
            return sorted(
                set(conn.execute(sa.select(plans.c.fleet).distinct()).scalars())
                | set(conn.execute(sa.select(outcomes.c.fleet).distinct()).scalars())
            )

    def events_of(self, fleet_name: str) -> list[dict]:
        """The events this fleet has plans or outcomes for, oldest first: key, name, site, days, elevation."""
        used = sa.union(
            sa.select(plans.c.event_id).where(plans.c.fleet == fleet_name),
            sa.select(outcomes.c.event_id).where(outcomes.c.fleet == fleet_name),
        ).subquery()
        with self.engine.connect() as conn:
            found = (
                conn.execute(
                    sa.select(events)
                    .where(events.c.id.in_(sa.select(used.c.event_id)))
                    .order_by(events.c.last_day, events.c.id)
                )
                .mappings()
                .all()
            )
        return [dict(r) for r in found]
