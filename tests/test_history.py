"""The history store (tuning.history): plans and outcomes recorded once, in one transaction, on
SQLite and on PostgreSQL alike (``history_place`` runs each test on both), and migrations.

These are behaviour checks of the store's promises (nothing lost, nothing doubled, nothing half
written, old databases brought up to date), not physics: no published values apply.
"""

from __future__ import annotations

import json
import threading

import pytest
import sqlalchemy as sa
from scenarios import uphill

from tuning.config import load_event, load_fleet
from tuning.errors import ConfigError, UserError
from tuning.history import event_key, open_history, read_outcomes, schema
from tuning.history import store as store_module
from tuning.plan import make_plan

OUTCOMES = (
    "bike,session,throttle,wideband_afr,plug,remark,main_jet\n"
    "T01,Sat morning,100%,14.2,lean,bogs at the top,\n"
    "T01,Sat morning,50,12.5,,,\n"
    "K01,Sun afternoon,,,ok,,100\n"
)


@pytest.fixture(scope="module")
def demo_inputs(tmp_path_factory):
    fleet_path, event_path = uphill(tmp_path_factory.mktemp("demo"))
    fleet = load_fleet(fleet_path)
    event = load_event(event_path, fleet)
    return fleet_path, event_path, fleet, event


@pytest.fixture(scope="module")
def demo_plan(demo_inputs):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return make_plan(demo_inputs[2], demo_inputs[3])


def _outcomes_file(tmp_path, text=OUTCOMES, name="outcomes.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_a_plan_comes_back_as_it_was_recorded(history_place, demo_inputs, demo_plan):
    _fp, _ep, fleet, event = demo_inputs
    with open_history(history_place) as history:
        assert history.last_plan(event, fleet.name) is None
        history.record_plan(event, demo_plan, made_at="2026-06-12T16:00:00+00:00")
        made_at, document = history.last_plan(event, fleet.name)
        assert made_at == "2026-06-12T16:00:00+00:00"
        assert document == json.loads(json.dumps(demo_plan))
        assert history.plan_for(event_key(event), fleet.name) == document
        assert history.plan_for(event_key(event), "another fleet") is None


def test_the_same_file_twice_records_once(history_place, demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path)
    sha, rows = read_outcomes(path, fleet, event)
    with open_history(history_place) as history:
        first = history.record_outcomes(fleet, event, path, sha, rows)
        again = history.record_outcomes(fleet, event, path, sha, rows)
        recorded = history.outcomes(fleet_name=fleet.name)
        # the same rows in another file (exported again, one row added): only the new row is added
        other = _outcomes_file(tmp_path, OUTCOMES + "K02,after,,,,,\n".replace(",,,,,", ",,,,went well,"), "b.csv")
        sha2, rows2 = read_outcomes(other, fleet, event)
        third = history.record_outcomes(fleet, event, other, sha2, rows2)
        after = history.outcomes(fleet_name=fleet.name)
    assert (first.rows, first.again) == (3, False)
    assert (again.rows, again.again) == (0, True)
    assert (third.rows, third.again) == (1, False)
    assert len(recorded) == 3 and len(after) == 4
    assert [r["bike"] for r in recorded] == ["T01", "T01", "K01"]
    assert recorded[0] | {} == {
        "event_key": event_key(event),
        "fleet": fleet.name,
        "bike": "T01",
        "session": "Sat morning",
        "time": None,
        "throttle": 1.0,
        "wideband_afr": 14.2,
        "plug": "lean",
        "remark": "bogs at the top",
        "main_jet": None,
        "pilot_jet": None,
        "clip": None,
        "mixture_screw_turns": None,
        "returned_to_proven": None,
    }
    assert recorded[1]["throttle"] == pytest.approx(0.5)  # the file is in percent: 50 -> 0.5


def test_identical_rows_of_one_log_are_all_kept(history_place, demo_inputs, tmp_path):
    """A wideband log may repeat a reading; each copy is a reading (the n-th copy is its own row)."""
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path, "bike,session,throttle,wideband_afr\n" + "T02,Sat morning,1,13.1\n" * 3)
    sha, rows = read_outcomes(path, fleet, event)
    with open_history(history_place) as history:
        assert history.record_outcomes(fleet, event, path, sha, rows).rows == 3
        assert len(history.outcomes(bike="T02")) == 3


def test_an_interrupted_record_leaves_nothing(history_place, demo_inputs, tmp_path, monkeypatch):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path)
    sha, rows = read_outcomes(path, fleet, event)
    real = store_module._insert_new

    def fail_on_outcomes(conn, table, values, keys):
        if table is schema.outcomes:
            raise KeyboardInterrupt("stopped half-way")
        return real(conn, table, values, keys)

    with open_history(history_place) as history:
        monkeypatch.setattr(store_module, "_insert_new", fail_on_outcomes)
        with pytest.raises(KeyboardInterrupt):
            history.record_outcomes(fleet, event, path, sha, rows)
        monkeypatch.setattr(store_module, "_insert_new", real)
        with history.engine.connect() as conn:
            assert conn.execute(sa.select(sa.func.count()).select_from(schema.imports)).scalar() == 0
        assert history.outcomes() == []
        assert history.record_outcomes(fleet, event, path, sha, rows).rows == 3  # and it can be recorded after


def test_two_people_recording_at_once_record_once(history_place, demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path)
    sha, rows = read_outcomes(path, fleet, event)
    open_history(history_place).close()  # created and migrated once
    results, errors = [], []

    def one():
        try:
            with open_history(history_place) as history:
                results.append(history.record_outcomes(fleet, event, path, sha, rows))
        except Exception as exc:  # noqa: BLE001 - collected and shown below
            errors.append(exc)

    threads = [threading.Thread(target=one) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    if history_place.startswith("postgresql"):  # the unique constraint may stop a racing second one
        errors = [e for e in errors if not isinstance(e, sa.exc.IntegrityError)]
    assert errors == []
    assert sum(r.rows for r in results) == 3
    with open_history(history_place) as history:
        assert len(history.outcomes()) == 3


def test_an_old_database_is_migrated_and_keeps_its_data(history_place, demo_inputs, demo_plan):
    _fp, _ep, fleet, event = demo_inputs
    with open_history(history_place) as history:
        engine = history.engine
    old = sa.create_engine(engine.url)
    with old.begin() as conn:  # back to an empty database, then to version 1 only
        for table in ("outcomes", "imports", "plans", "events", "schema_version"):
            conn.execute(sa.text(f"DROP TABLE IF EXISTS {table}"))
    assert schema.migrate(old, upto=1) == 1
    with old.connect() as conn:
        assert schema.version_of(conn) == 1
        assert "outcomes_by_bike" not in {i["name"] for i in sa.inspect(conn).get_indexes("outcomes")}
    old.dispose()
    with open_history(history_place) as history:  # version 1 -> current
        history.record_plan(event, demo_plan)
    with open_history(history_place) as history:
        with history.engine.connect() as conn:
            assert schema.version_of(conn) == schema.SCHEMA_VERSION == 2
            assert "outcomes_by_bike" in {i["name"] for i in sa.inspect(conn).get_indexes("outcomes")}
        assert history.last_plan(event, fleet.name) is not None


def test_a_newer_database_is_refused_not_changed(history_place):
    with open_history(history_place) as history:
        with history.engine.begin() as conn:
            conn.execute(schema.schema_version.update().values(version=schema.SCHEMA_VERSION + 1))
    with pytest.raises(UserError, match="newer carbfleet"):
        open_history(history_place)


def test_sqlite_runs_with_a_write_ahead_log(tmp_path):
    with open_history(tmp_path / "h.sqlite") as history, history.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == store_module.SQLITE_BUSY_TIMEOUT_MS


def test_a_history_in_a_missing_folder_is_refused(tmp_path):
    with pytest.raises(UserError, match="does not exist"):
        open_history(tmp_path / "nowhere" / "history.sqlite")
    assert not (tmp_path / "nowhere").exists()


def test_a_file_that_is_not_a_database_is_refused_and_kept(tmp_path):
    path = tmp_path / "notes.sqlite"
    path.write_text("my notes, not a database\n" * 100)
    with pytest.raises(UserError, match="--history"):
        open_history(path)
    assert path.read_text() == "my notes, not a database\n" * 100


# --- reading and checking the outcomes file ------------------------------------------------
@pytest.mark.parametrize(
    ("row", "expected"),
    [
        ("X9,Sat morning,,,ok", "2: bike: 'X9' is not a bike of fleet"),
        ("T01,Sat evening,,,ok", "2: session: 'Sat evening' is not a session of"),
        ("T01,Sat morning,150,13,", "2: throttle: '150': expected 0 to 100 %"),
        ("T01,Sat morning,-0.1,13,", "2: throttle: '-0.1': expected 0 to 1 (a fraction"),
        ("T01,Sat morning,,13,", "2: wideband_afr: a wideband reading needs the throttle"),
        ("T01,Sat morning,1,21,", "2: wideband_afr: '21': expected 8 to 20"),
        ("T01,Sat morning,1,0.92,", "2: wideband_afr: '0.92': expected 8 to 20"),  # a lambda value typed
        ("T01,Sat morning,,,burnt", "2: plug: 'burnt': expected one of lean, ok, rich"),
        ("T01,Sat morning,,,", "2: the row says nothing"),
        ("T01,Sat morning,full,13,", "2: throttle: 'full': expected a fraction 0..1 or a percent 0..100"),
    ],
)
def test_a_bad_row_is_one_located_line(demo_inputs, tmp_path, row, expected):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path, "bike,session,throttle,wideband_afr,plug\n" + row + "\n")
    with pytest.raises(ConfigError) as caught:
        read_outcomes(path, fleet, event)
    assert len(caught.value.problems) == 1
    assert str(caught.value).startswith(f"{path}:{expected}")


@pytest.mark.parametrize(
    ("column", "value", "expected"),
    [
        ("main_jet", "171", "'171' is not a size of jet family 'round-main'"),  # sizes step 2.5 from 140
        ("pilot_jet", "43", "'43' is not a size of jet family 'pilot-a'"),
        ("clip", "6", "'6': expected a groove 1 to 5 (needle needle-a"),
        ("clip", "0", "'0': expected a groove 1 to 5"),
        ("mixture_screw_turns", "-1", "'-1': expected 0 to 10 turns out"),
        ("returned_to_proven", "maybe", "'maybe': expected yes or no"),
    ],
)
def test_a_fitted_setting_must_exist_for_the_bike(demo_inputs, tmp_path, column, value, expected):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path, f"bike,session,{column}\nT01,after,{value}\n")
    with pytest.raises(ConfigError) as caught:
        read_outcomes(path, fleet, event)
    assert str(caught.value) == f"{path}:2: {column}: {expected}" or str(caught.value).startswith(
        f"{path}:2: {column}: {expected}"
    )


def test_a_clip_for_a_bike_without_needle_is_refused(demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path, "bike,session,clip\nK01,after,2\n")  # trail-125-4s: no needle on record
    with pytest.raises(ConfigError, match=r":2: clip: bike K01 has no needle on record"):
        read_outcomes(path, fleet, event)


def test_every_bad_row_is_reported_with_its_own_line(demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    text = 'bike,session,plug,remark\nT01,Sat morning,ok,"two\nlines"\nT02,Sat morning,bad,\nX1,after,ok,\n'
    path = _outcomes_file(tmp_path, text)
    with pytest.raises(ConfigError) as caught:
        read_outcomes(path, fleet, event)
    assert [(p.line, p.field) for p in caught.value.problems] == [(4, "plug"), (5, "bike")]


def test_the_header_is_checked(demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(tmp_path, "bike,sesion,plug\nT01,Sat morning,ok\n")
    with pytest.raises(ConfigError) as caught:
        read_outcomes(path, fleet, event)
    assert [str(p) for p in caught.value.problems] == [
        f"{path}:1: sesion: unknown column; known: bike, session, time, throttle, wideband_afr, plug, remark, "
        "main_jet, pilot_jet, clip, mixture_screw_turns, returned_to_proven",
        f"{path}:1: session: missing; every row names its bike and session",
    ]


def test_a_fraction_among_percent_is_refused_as_ambiguous(demo_inputs, tmp_path):
    """A fraction slipped into a file in percent would otherwise be read as almost closed."""
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(
        tmp_path, "bike,session,throttle,wideband_afr\nT01,Sat morning,0.5,13\nT01,Sat morning,80,13\n"
    )
    with pytest.raises(ConfigError) as caught:
        read_outcomes(path, fleet, event)
    assert str(caught.value).startswith(
        f"{path}:2: throttle: '0.5' is a fraction, but other rows of this file give percent"
    )


def test_throttle_in_fractions_stays_fractions(demo_inputs, tmp_path):
    _fp, _ep, fleet, event = demo_inputs
    path = _outcomes_file(
        tmp_path,
        "bike,session,time,throttle,wideband_afr\n"
        "T01,Sat morning,0.5,1,13.0\nT01,Sat morning,2026-06-13T10:15:00,0.25,12.4\n",
    )
    _sha, rows = read_outcomes(path, fleet, event)
    assert [(r["time"], r["throttle"]) for r in rows] == [("0.5", 1.0), ("2026-06-13T10:15:00", 0.25)]


def test_the_columns_copy_the_sheet_boxes():
    """One home of the outcome columns; each box of the sheet's form that holds something seen or
    fitted has its column, of the same meaning."""
    from tuning.history import COLUMNS, FORM_FIELD_OF
    from tuning.report.tables import FORM_FIELDS

    assert set(FORM_FIELD_OF) <= set(COLUMNS)
    assert set(FORM_FIELD_OF.values()) <= set(FORM_FIELDS)
    assert set(FORM_FIELDS) - set(FORM_FIELD_OF.values()) == {"changes_done", "initials"}  # work done, who did it
