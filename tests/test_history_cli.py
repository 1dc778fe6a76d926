"""The history through the command line: ``record``, ``history``, what ``plan`` and ``build`` record
and say (the morning-of re-run), and plans that start from the settings bikes still wear.

Behaviour checks on the invented demo; the one check of physics here is the dangerous direction:
a plan started from fitted jets keeps the metering law on the proven ones (see tuning.plan.fitted).
"""

from __future__ import annotations

import csv
import io
import json
import re
import warnings
from dataclasses import replace
from pathlib import Path

import pytest
from scenarios import uphill

from tuning.cli import main
from tuning.config import load_event, load_fleet
from tuning.history import Fitted, fitted_settings, fitted_state, open_history
from tuning.plan import make_plan
from tuning.plan.fitted import start_from_fitted
from tuning.plan.window import LEAN_GUARD

OUTCOMES = (
    "bike,session,throttle,wideband_afr,plug,remark,main_jet,clip\n"
    "T01,Sat morning,100%,14.2,lean,bogs at the top,,\n"
    "T01,Sun afternoon,,,,,165,2\n"
    "F01,Sat morning,80,12.6,ok,,,\n"
)
CIRCUITS = (
    ("main_jet", "recommended"),
    ("pilot_jet", "recommended"),
    ("clip", "recommended"),
    ("mixture_screw", "recommended_turns"),
)


def _plan(capsys, fleet, event, out, *options):
    code = main(["plan", str(fleet), str(event), "--out", str(out), *options])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads((Path(out) / "recommendations.json").read_text()), captured.out.splitlines()


def _colder(event: Path, by_degF: float) -> None:
    """The event's forecast made colder by ``by_degF`` (the morning's new forecast)."""
    weather = event.parent / "demo-weather.csv"
    rows = list(csv.reader(io.StringIO(weather.read_text(encoding="utf-8"))))
    column = rows[0].index("air_temperature [degF]")
    for row in rows[1:]:
        row[column] = f"{float(row[column]) - by_degF:.1f}"
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(rows)
    weather.write_text(buffer.getvalue(), encoding="utf-8")


def test_a_bad_outcomes_file_changes_nothing(capsys, tmp_path, history_place):
    fleet, event = uphill(tmp_path / "demo")
    _plan(capsys, fleet, event, tmp_path / "p0", "--history", history_place)
    good = tmp_path / "good.csv"
    good.write_text(OUTCOMES, encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(good), "--history", history_place]) == 0
    assert "recorded 3 rows" in capsys.readouterr().out
    before, _lines = _plan(capsys, fleet, event, tmp_path / "p1", "--history", history_place)
    with open_history(history_place) as history:
        rows_before = history.outcomes()
    bad = tmp_path / "bad.csv"
    bad.write_text("bike,session,plug,main_jet\nT02,Sat morning,ok,\nT03,Sat morning,lean,171\n", encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(bad), "--history", history_place]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err == [
        f"carbfleet record: {bad}:3: main_jet: '171' is not a size of jet family 'round-main' ("
        + ", ".join(f"{140 + 2.5 * i:g}" for i in range(25))
        + ")"
    ]
    with open_history(history_place) as history:
        assert history.outcomes() == rows_before  # T02's good row was not recorded either
    after, _lines = _plan(capsys, fleet, event, tmp_path / "p2", "--history", history_place)
    assert after == before


def test_recording_a_file_twice_gives_the_plan_of_once(capsys, tmp_path):
    fleet, event = uphill(tmp_path / "demo")
    place = str(tmp_path / "h.sqlite")
    fresh, _lines = _plan(capsys, fleet, event, tmp_path / "p0", "--history", place)
    outcomes = tmp_path / "o.csv"
    outcomes.write_text(OUTCOMES, encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(outcomes), "--history", place]) == 0
    once, lines = _plan(capsys, fleet, event, tmp_path / "p1", "--history", place)
    assert main(["record", str(fleet), str(event), str(outcomes), "--history", place]) == 0
    assert "recorded before: nothing changed" in capsys.readouterr().out
    twice, _lines = _plan(capsys, fleet, event, tmp_path / "p2", "--history", place)
    assert twice == once
    assert once != fresh  # the file did something: T01 starts from its fitted main 165 and clip 2
    t01 = next(e for e in once["entries"] if e["bike"] == "T01")
    assert (t01["settings"]["main_jet"]["current"], t01["settings"]["clip"]["current"]) == (165, 2)
    # F01 rode the event too (its row has readings only): it wears what the plan recommended
    assert (
        "2 bikes start from the settings they still wear, not their proven ones (the event they wore them at "
        "in brackets): T01 (Ridge Camp Weekend), F01 (Ridge Camp Weekend)" in lines
    )


def _recommended(plan: dict) -> dict:
    return {(e["bike"], e["session"]): tuple(e["settings"][k][v] for k, v in CIRCUITS) for e in plan["entries"]}


@pytest.mark.parametrize("language", ["en", "de"])
def test_the_morning_rerun_names_the_bikes_that_changed(capsys, tmp_path, history_place, language):
    fleet, event = uphill(tmp_path / "demo")
    evening, lines = _plan(capsys, fleet, event, tmp_path / "p0", "--history", history_place, "--language", language)
    assert not any("changed since" in line or "seit dem Plan" in line for line in lines)  # the first plan
    _colder(event, 8.0)
    morning, lines = _plan(capsys, fleet, event, tmp_path / "p1", "--history", history_place, "--language", language)
    old, new = _recommended(evening), _recommended(morning)
    changed = sorted({bike for (bike, session), values in new.items() if old[(bike, session)] != values})
    assert changed, "the colder forecast must change some settings, or this test checks nothing"
    line = lines[-1]
    if language == "en":
        assert re.fullmatch(rf"{len(changed)} bikes? changed since the plan of \d\d:\d\d: .*", line), line
    else:
        assert re.fullmatch(rf"{len(changed)} (Motorrad|Motorräder) seit dem Plan von \d\d:\d\d geändert: .*", line), (
            line
        )
    named = [part.split(" ")[0] for part in line.split(": ", 1)[1].split(", ")]
    assert sorted(named) == changed
    again, lines = _plan(capsys, fleet, event, tmp_path / "p2", "--history", history_place, "--language", language)
    assert again == morning
    assert re.fullmatch(
        r"no bike changed since the plan of \d\d:\d\d"
        if language == "en"
        else r"kein Motorrad seit dem Plan von \d\d:\d\d geändert",
        lines[-1],
    ), lines[-1]


def test_the_default_history_lies_beside_the_fleet_file(capsys, tmp_path, monkeypatch):
    monkeypatch.delenv("CARBFLEET_HISTORY")
    fleet, event = uphill(tmp_path / "a")
    _plan(capsys, fleet, event, tmp_path / "a" / "out")
    assert (tmp_path / "a" / "history.sqlite").is_file()
    fleet, event = uphill(tmp_path / "b")
    _plan(capsys, fleet, event, tmp_path / "b" / "out", "--no-history")
    assert not (tmp_path / "b" / "history.sqlite").exists()


def test_a_history_in_a_missing_folder_is_one_line(capsys, tmp_path):
    fleet, event = uphill(tmp_path / "demo")
    code = main(
        ["plan", str(fleet), str(event), "--out", str(tmp_path / "out"), "--history", str(tmp_path / "no" / "h.sqlite")]
    )
    err = capsys.readouterr().err.splitlines()
    assert code == 2
    assert err == [
        f"carbfleet plan: --history: {tmp_path / 'no' / 'h.sqlite'}: the folder {tmp_path / 'no'} "
        "does not exist; create it or name another"
    ]
    assert not (tmp_path / "out").exists()  # refused before the work


def test_history_shows_what_a_bike_ran_and_what_was_seen(capsys, tmp_path, history_place, monkeypatch):
    monkeypatch.setenv("COLUMNS", "300")  # the table's cells unwrapped
    fleet, event = uphill(tmp_path / "demo")
    _plan(capsys, fleet, event, tmp_path / "p0", "--history", history_place)
    outcomes = tmp_path / "o.csv"
    outcomes.write_text(OUTCOMES, encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(outcomes), "--history", history_place]) == 0
    capsys.readouterr()
    assert main(["history", "T01", "--history", history_place]) == 0
    shown = capsys.readouterr().out
    text = " ".join(shown.replace("│", " ").split())
    for words in (
        "T01",
        "Ridge Camp",
        "Kesselalm",
        "main 167.5",
        "main 165",
        "clip 2",
        "plug: lean 1",
        "1 wideband reading, air-fuel 14.2–14.2",
        "bogs at the top",
    ):
        assert words in text, words
    assert "F01" not in text


def test_history_reads_only(capsys, tmp_path):
    missing = tmp_path / "none.sqlite"
    assert main(["history", "--history", str(missing)]) == 2
    assert "no history at" in capsys.readouterr().err
    assert not missing.exists()


# --- fleet state: where a plan starts ----------------------------------------------------
def _low_cold(tmp_path) -> tuple[Path, Path]:
    """The demo fleet (proven at 150 m, 20 °C) at a site at its own height on a day 30 °F colder:
    denser air than proven, the direction that hurts engines."""
    fleet, event = uphill(tmp_path / "cold")
    event.write_text(
        event.read_text(encoding="utf-8").replace("  elevation: 1650 m\n", "  elevation: 150 m\n", 1), encoding="utf-8"
    )
    _colder(event, 30.0)
    return fleet, event


def test_fitted_jets_do_not_move_the_law_off_the_proven_ones(tmp_path):
    """T01 wears the small jets of a mountain event (main 160, pilot 38, clip 2; proven 172.5, 42, 3).
    Planned from them, the recommendation is the one made from the proven settings; taking the
    fitted jets as if proven at home would recommend a leaner main in air denser than home."""
    fleet_path, event_path = _low_cold(tmp_path)
    fleet = load_fleet(fleet_path)
    event = load_event(event_path, fleet)
    state = {"T01": Fitted("T01", "key", "Mountain Days", 160.0, 38.0, 2, 1.5)}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        proven = make_plan(fleet, event)
        started = start_from_fitted(proven, fleet, state)
        fitted = fitted_settings(fleet, state)
        naive_fleet = replace(
            fleet, bikes=tuple(replace(b, settings=fitted.get(b.id, b.settings)) for b in fleet.bikes)
        )
        naive = make_plan(naive_fleet, event)
    assert _recommended(started) == _recommended(proven)
    t01 = [e for e in started["entries"] if e["bike"] == "T01"]
    assert [e["settings"]["main_jet"]["current"] for e in t01] == [160] * len(t01)
    assert all(e["settings"]["main_jet"]["recommended"] >= 172.5 for e in t01)  # denser than home: not leaner
    naive_main = [e["settings"]["main_jet"]["recommended"] for e in naive["entries"] if e["bike"] == "T01"]
    assert all(n < e["settings"]["main_jet"]["recommended"] for n, e in zip(naive_main, t01))
    first = next(b for b in started["work_orders"][0]["bikes"] if b["bike"] == "T01")
    main_change = next(c for c in first["changes"] if c["part"] == "main_jet")
    assert (main_change["from"], main_change["to"]) == (160, t01[0]["settings"]["main_jet"]["recommended"])
    notices = next(b for b in started["bikes"] if b["bike"] == "T01")["notices"]
    assert [n["code"] for n in notices if n["code"] == "fitted-not-proven"] == ["fitted-not-proven"]
    assert started["warnings_count"] == proven["warnings_count"] + 1 + sum(
        len(e["warnings"]) - len(p["warnings"]) for e, p in zip(started["entries"], proven["entries"])
    )


def test_a_shortage_is_not_called_safe_when_the_fitted_jet_is_lean(tmp_path):
    """Where the plan's size must be ordered, the proven jet may be safe to ride meanwhile; a
    fitted jet smaller than the proven one may not: then the sheet says so as a danger."""
    fleet_path, event_path = uphill(tmp_path / "demo")  # the demo's shelf runs short of 165s
    fleet = load_fleet(fleet_path)
    event = load_event(event_path, fleet)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        proven = make_plan(fleet, event)
    short = [
        (e["bike"], w)
        for e in proven["entries"]
        for w in e["warnings"]
        if w["code"] == "stock-shortage" and w["params"]["part"] == "main_jet"
    ]
    assert short, "the scenario must have a main jet to order, or this test checks nothing"
    bike = short[0][0]
    small = fleet.jet_families["round-main"].sizes[0]  # the smallest main: far leaner than proven
    started = start_from_fitted(proven, fleet, {bike: Fitted(bike, "key", "Mountain Days", small, None, None, None)})
    found = [
        w
        for e in started["entries"]
        if e["bike"] == bike
        for w in e["warnings"]
        if w["params"].get("part") == "main_jet"
    ]
    assert not [w for w in found if w["code"] == "stock-shortage"]
    danger = [w for w in found if w["code"] == "no-safe-jet"]
    assert danger and all(w["params"]["fitted"] == f"{small:g}" for w in danger)
    required = max(h["area_factor"] for e in started["entries"] if e["bike"] == bike for h in e["hours"])
    proven_main = next(b for b in fleet.bikes if b.id == bike).settings.main_jet
    lean = required / (small / proven_main) ** 2 - 1  # diameter-coded: area ∝ number² (the family's coding)
    assert lean > LEAN_GUARD
    assert danger[0]["params"]["lean_pct"] == round(lean * 100)


def test_a_bike_returned_to_proven_starts_from_proven(capsys, tmp_path):
    fleet, event = uphill(tmp_path / "demo")
    place = str(tmp_path / "h.sqlite")
    fresh, _lines = _plan(capsys, fleet, event, tmp_path / "p0", "--history", place)
    outcomes = tmp_path / "o.csv"
    outcomes.write_text(OUTCOMES + "T01,after,,,,,,\n".replace(",,,,,,", ",,,,,,"), encoding="utf-8")
    returned = tmp_path / "r.csv"
    returned.write_text("bike,session,returned_to_proven\nT01,after,yes\n", encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(outcomes), "--history", place]) == 2  # the empty row
    assert main(["record", str(fleet), str(event), str(tmp_path / "o.csv"), "--history", place]) == 2
    outcomes.write_text(OUTCOMES, encoding="utf-8")
    assert main(["record", str(fleet), str(event), str(outcomes), "--history", place]) == 0
    with open_history(place) as history:
        assert set(fitted_state(history, load_fleet(fleet))) == {"T01", "F01"}
    assert main(["record", str(fleet), str(event), str(returned), "--history", place]) == 0
    with open_history(place) as history:
        assert set(fitted_state(history, load_fleet(fleet))) == {"F01"}
    capsys.readouterr()
    after, _lines = _plan(capsys, fleet, event, tmp_path / "p1", "--history", place)
    t01 = [e["settings"]["main_jet"]["current"] for e in after["entries"] if e["bike"] == "T01"]
    assert t01 == [172.5] * len(t01)


def test_the_tests_write_no_history_into_the_checkout(capsys, tmp_path):
    """Planning the shipped demo (in the checkout) records into this test's own history file."""
    import os

    shipped = Path(__file__).resolve().parents[1] / "tuning" / "demo"
    place = Path(os.environ["CARBFLEET_HISTORY"])
    assert shipped.parents[1] not in place.parents
    _plan(capsys, shipped / "demo-fleet.yaml", shipped / "demo-event.yaml", tmp_path / "out")
    assert place.is_file() and not (shipped / "history.sqlite").exists()
