"""The plan with a calibration: readings make the bike that runs lean richer and leave other models alone,
the same readings twice change nothing, and no calibration ever leaves a setting leaner than the lean guard
under the metering law itself — tested hardest in the direction that hurts engines (proven high, ridden low
and cold, a calibration that says "runs rich").

The check values are the plan's own rule (LEAN_GUARD, our choice) and the jet-number relation of
tuning.metering (orifice area ∝ diameter², ∝ flow number: Heywood 1988, section 7.2); the readings are
generated from the law plan's own predicted curve times a known factor (invented data).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import scenarios
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tuning import circuits, metering
from tuning.calibration import NOT_USED, Calibration, Estimate, estimate, readings_from
from tuning.config import load_event, load_fleet
from tuning.display import Display
from tuning.plan import LEAN_GUARD, MID_RANGE_OPENINGS, make_plan
from tuning.report import tables

LEAN_FACTOR = 1.08  # the invented bike's full-throttle mixture: 8 % leaner than the law predicts


@pytest.fixture(scope="module")
def uphill(tmp_path_factory):
    fleet_path, event_path = scenarios.uphill(tmp_path_factory.mktemp("up"))
    fleet = load_fleet(fleet_path)
    return fleet, load_event(event_path, fleet)


@pytest.fixture(scope="module")
def downhill(tmp_path_factory):
    fleet_path, event_path = scenarios.downhill(tmp_path_factory.mktemp("down"))
    fleet = load_fleet(fleet_path)
    return fleet, load_event(event_path, fleet)


def lean_at_full_throttle(plan, bike, factor=LEAN_FACTOR):
    """Wideband readings of ``bike`` at ¾..full throttle in every session, at the session's leanest hour,
    ``factor`` times the AFR the law plan predicts there (its recommended curve)."""
    out = []
    for e in plan["entries"]:
        if e["bike"] != bike:
            continue
        curve = e["mixture_curve"]
        for t in (0.8, 0.9, 1.0):
            afr = curve["recommended_afr"][curve["throttle"].index(t)] * factor
            out.append(
                {
                    "event": "ridge-2026",
                    "bike": bike,
                    "session": e["session"],
                    "time": curve["time"],
                    "throttle": t,
                    "wideband_afr": afr,
                    "plug": None,
                    "remark": None,
                    "main_jet": None,
                    "pilot_jet": None,
                    "clip": None,
                    "mixture_screw_turns": None,
                    "returned_to_proven": False,
                }
            )
    return out


def settings_of(plan, bike):
    return [
        {
            k: (e["settings"][k].get("recommended"), e["settings"][k].get("recommended_turns"))
            for k in ("main_jet", "pilot_jet", "clip", "mixture_screw")
        }
        for e in plan["entries"]
        if e["bike"] == bike
    ]


def test_an_empty_calibration_plans_exactly_as_the_law(uphill):
    """Regression check: no readings at all gives the law's document, byte for byte."""
    fleet, event = uphill
    law = json.dumps(make_plan(fleet, event), sort_keys=True)
    assert json.dumps(make_plan(fleet, event, calibration=Calibration()), sort_keys=True) == law
    assert json.dumps(make_plan(fleet, event, calibration=estimate([], fleet)), sort_keys=True) == law


def test_lean_bike_gets_a_richer_main_and_other_models_stay(uphill):
    fleet, event = uphill
    law = make_plan(fleet, event)
    outcomes = lean_at_full_throttle(law, "F01")
    readings = readings_from(law, outcomes)
    assert len(readings) == len(outcomes) and {r.circuit for r in readings} == {"main"}
    for r in readings:  # the readings are 8 % lean of the law's prediction (curve printed to 0.01 AFR)
        assert r.log_ratio == pytest.approx(math.log(LEAN_FACTOR), abs=0.002)
    cal = estimate(readings, fleet)
    plan = make_plan(fleet, event, calibration=cal)
    law_main = [s["main_jet"][0] for s in settings_of(law, "F01")]
    cal_main = [s["main_jet"][0] for s in settings_of(plan, "F01")]
    assert all(c > w for c, w in zip(cal_main, law_main)), (law_main, cal_main)
    model_of = {b.id: b.model for b in fleet.bikes}
    for bike in model_of:
        if model_of[bike] != model_of["F01"]:
            assert settings_of(plan, bike) == settings_of(law, bike), bike
            for a, b in zip(law["entries"], plan["entries"]):
                if a["bike"] == bike:
                    assert (a["mixture_curve"], a["rejet_temperatures_C"]) == (
                        b["mixture_curve"],
                        b["rejet_temperatures_C"],
                    )
    basis = {b["bike"]: b["basis"] for b in plan["bikes"]}
    assert basis["F01"]["kind"] == "calibrated" and basis["F02"]["kind"] == "model"
    assert basis["T01"]["kind"] == "law" and basis["T01"]["text"] == "no readings yet: the law"
    assert basis["F01"]["sessions"] == 4 and basis["F01"]["events"] == 1
    assert basis["F01"]["offsets_pct"]["main"] > 3.0 and basis["F01"]["offsets_pct"]["pilot"] is None
    assert basis["F01"]["text"].startswith("calibrated from 4 sessions at 1 event, ±")
    german = tables.basis_words(next(b for b in plan["bikes"] if b["bike"] == "F01"), Display("metric", "de"))
    assert german.startswith("kalibriert aus 4 Turns bei 1 Veranstaltung, ±")


def test_calibration_not_used_plans_the_law_and_says_so(uphill):
    """--no-calibration: the law's settings, and a sheet that does not claim there are no readings."""
    fleet, event = uphill
    law = make_plan(fleet, event)
    off = make_plan(fleet, event, calibration=NOT_USED)
    assert [e["settings"] for e in off["entries"]] == [e["settings"] for e in law["entries"]]
    assert {b["basis"]["id"] for b in off["bikes"]} == {"basis/not-used"}
    assert (
        tables.basis_words(off["bikes"][0], Display("metric", "de"))
        == "das Zumessgesetz: Kalibrierung für diesen Plan nicht verwendet"
    )


def test_recording_the_same_outcomes_twice_gives_the_same_plan(uphill):
    fleet, event = uphill
    law = make_plan(fleet, event)
    outcomes = lean_at_full_throttle(law, "F01") + lean_at_full_throttle(law, "T03", 1.05)
    once = make_plan(fleet, event, calibration=estimate(readings_from(law, outcomes), fleet))
    twice = make_plan(fleet, event, calibration=estimate(readings_from(law, outcomes + outcomes), fleet))
    assert json.dumps(once, sort_keys=True) == json.dumps(twice, sort_keys=True)


def test_fitted_settings_that_differ_from_the_plan_change_the_prediction(uphill):
    """A bigger main fitted than planned delivers more fuel: the same AFR read means a leaner engine
    against that richer jet (area ratio by the jet's coding, tuning.metering)."""
    fleet, event = uphill
    law = make_plan(fleet, event)
    o = lean_at_full_throttle(law, "F01")[0]
    entry = next(e for e in law["entries"] if e["bike"] == "F01" and e["session"] == o["session"])
    planned = entry["settings"]["main_jet"]
    bigger = dict(
        o, main_jet=planned["recommended"] * 1.05 if planned["coding"] == "flow" else planned["recommended"] + 5
    )
    base, fitted = readings_from(law, [o])[0], readings_from(law, [bigger])[0]
    ratio = float(metering.area_factor_between_jets(planned["recommended"], bigger["main_jet"], planned["coding"]))
    w_main = float(circuits.circuit_weights(np.array([o["throttle"]]))[0, 2])
    assert fitted.log_ratio > base.log_ratio
    assert fitted.log_ratio - base.log_ratio == pytest.approx(math.log(1 + w_main * (ratio - 1)), rel=0.3)
    back = readings_from(law, [dict(o, returned_to_proven=True)])[0]
    assert back.predicted_log_deviation == pytest.approx(
        math.log(max(h["area_factor"] for h in entry["hours"])), abs=1e-3
    )


def confident(fleet, mean, sd=0.001):
    """Every bike calibrated with ``mean`` (pilot, needle, main offsets, exponent shift) and a small spread."""
    cov = np.eye(4) * sd**2
    return Calibration(
        {
            b.id: Estimate(
                np.asarray(mean, float), cov, "calibrated", (True, True, True), float(b.density_exponent), 10, 5, 2
            )
            for b in fleet.bikes
        }
    )


def law_leanness(entry):
    """Per circuit, the leanest deviation by the LAW of the recommended settings over the session's hours:
    the main jet through tuning.metering's jet-number relation; pilot and needle through the document's delivered
    factors (the needle at the mid-range openings where the clip is judged)."""
    largest = max(h["area_factor"] for h in entry["hours"])
    main = entry["settings"]["main_jet"]
    main_delivered = float(metering.area_factor_between_jets(main["current"], main["recommended"], main["coding"]))
    d = entry["mixture_curve"]["delivered_area_factor"]
    needle = np.interp(MID_RANGE_OPENINGS, entry["mixture_curve"]["throttle"], d["needle"])
    return {
        "main": largest / main_delivered - 1.0,
        "pilot": largest / d["pilot"] - 1.0,
        "needle": float(np.max(largest / needle - 1.0)),
    }


def assert_never_past_the_guard_by_the_law(law, plan):
    """Where the law's own plan met the guard, the calibrated one does too (by the law); where nothing
    could (the law plan flags it), the calibrated setting is no leaner than the law's."""
    tol = 5e-4  # the document's factors are rounded to 4 decimals
    for e_law, e_cal in zip(law["entries"], plan["entries"]):
        lean_law, lean_cal = law_leanness(e_law), law_leanness(e_cal)
        for circuit in ("main", "pilot", "needle"):
            if lean_law[circuit] <= LEAN_GUARD + tol:
                assert lean_cal[circuit] <= LEAN_GUARD + tol, (e_cal["bike"], e_cal["session"], circuit, lean_cal)
            else:
                assert lean_cal[circuit] <= lean_law[circuit] + tol, (e_cal["bike"], e_cal["session"], circuit)


def test_rich_calibration_proven_high_ridden_low_and_cold_never_past_the_guard(downhill):
    """The direction that hurts engines: proven at 1650 m, ridden at 120 m in freezing air, and a confident
    calibration saying every circuit runs 10 % rich and the bike responds less to density (exponent 0.3)."""
    fleet, event = downhill
    law = make_plan(fleet, event)
    plan = make_plan(fleet, event, calibration=confident(fleet, [-0.10, -0.10, -0.10, -0.2]))
    assert_never_past_the_guard_by_the_law(law, plan)
    leaner = [
        (a["bike"], a["session"], c)
        for a, b in zip(law["entries"], plan["entries"])
        for c, v in law_leanness(b).items()
        if v > law_leanness(a)[c] + 5e-4
    ]
    assert leaner, "the rich calibration leaned nothing: the test would prove nothing"
    kept = {b["bike"] for b in plan["bikes"] if b["basis"]["law_kept"]}
    for a, b in zip(law["entries"], plan["entries"]):  # a bike whose calibration would go past keeps the law
        if a["bike"] in kept:
            assert a["settings"] == b["settings"]
    for e in plan["entries"]:  # the sheet's predicted curve may show the calibration, the lean check follows the law
        assert all(a > 0 for a in e["mixture_curve"]["recommended_afr"])


def test_lean_calibration_downhill_goes_richer_than_the_law(downhill):
    fleet, event = downhill
    law = make_plan(fleet, event)
    plan = make_plan(fleet, event, calibration=confident(fleet, [0.06, 0.06, 0.06, 0.2]))
    for a, b in zip(law["entries"], plan["entries"]):
        assert b["settings"]["main_jet"]["recommended"] >= a["settings"]["main_jet"]["recommended"]
    assert any(
        b["settings"]["main_jet"]["recommended"] > a["settings"]["main_jet"]["recommended"]
        for a, b in zip(law["entries"], plan["entries"])
    )


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(offset=st.floats(-0.25, 0.0), exponent_shift=st.floats(-0.4, 0.0), sd=st.floats(0.0, 0.05))
def test_any_rich_calibration_stays_within_the_guard_by_the_law(downhill, offset, exponent_shift, sd):
    fleet, event = downhill
    law = make_plan(fleet, event)
    plan = make_plan(fleet, event, calibration=confident(fleet, [offset, offset / 2, offset, exponent_shift], sd))
    assert_never_past_the_guard_by_the_law(law, plan)


def test_calibrated_plans_keep_the_documents_schema(uphill, downhill):
    """Consistency check (not validation): calibrated documents as tuning/schemas/recommendations.schema.json
    states them, with a bike that keeps the law's settings saying so."""
    import jsonschema

    from tuning import plan as plan_package

    schema = json.loads(
        (Path(plan_package.__file__).parents[1] / "schemas" / "recommendations.schema.json").read_text()
    )
    fleet, event = uphill
    law = make_plan(fleet, event)
    calibrated = make_plan(
        fleet, event, calibration=estimate(readings_from(law, lean_at_full_throttle(law, "F01")), fleet)
    )
    jsonschema.Draft202012Validator(schema).validate(calibrated)
    fleet, event = downhill
    rich = make_plan(fleet, event, calibration=confident(fleet, [-0.10, -0.10, -0.10, -0.2]))
    jsonschema.Draft202012Validator(schema).validate(rich)
    kept = [b for b in rich["bikes"] if b["basis"]["law_kept"]]
    assert kept and all(b["basis"]["id"] == "basis/law-kept" for b in kept)


def test_bad_outcomes_are_one_clear_line(uphill):
    from tuning.errors import UserError

    fleet, event = uphill
    law = make_plan(fleet, event)
    good = lean_at_full_throttle(law, "F01")[0]
    cases = [
        (dict(good, bike="X99"), "not in the plan"),
        (dict(good, throttle=None), "needs the throttle"),
        (dict(good, wideband_afr=None, plug="white"), "plug: 'white'"),
        (dict(good, time="noon"), "time: 'noon'"),
        (dict(good, throttle=1.4), "throttle: 1.4"),
    ]
    for outcome, words in cases:
        with pytest.raises(UserError, match=words) as caught:
            readings_from(law, [good, outcome])
        assert str(caught.value).startswith("outcome 2 (bike ") and "\n" not in str(caught.value)


def test_plug_without_opening_reads_the_main_and_ok_is_no_news(uphill):
    """A plug read after a full-throttle run (common practice) speaks for the main circuit; 'ok' says the
    mixture is the proven one, so its reading is the law's prediction turned round."""
    fleet, event = uphill
    law = make_plan(fleet, event)
    o = dict(lean_at_full_throttle(law, "K01")[0], throttle=None, wideband_afr=None, plug="ok")
    (r,) = readings_from(law, [o])
    assert r.kind == "plug" and r.circuit == "main" and r.y == pytest.approx(-r.predicted_log_deviation)
