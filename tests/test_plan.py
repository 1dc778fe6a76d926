"""Tests of tuning.plan against independent computation.

* Air densities for the expected jets come from CoolProp (HAPropsSI, humid-air model of
  Herrmann, Kretzschmar and Gatley, ASHRAE RP-1485), not from tuning.air.
* The metering law is written out here from DESIGN.md section 3, not taken from tuning.metering.
* Directions of change are facts of the trade (common practice).
"""

from __future__ import annotations

import json
import math
from dataclasses import replace
from pathlib import Path

import jsonschema
import numpy as np
import plan_fixtures as pf
import pytest
from CoolProp.HumidAirProp import HAPropsSI
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from tuning import plan
from tuning.errors import UserError

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")

SCHEMA = json.loads((Path(plan.__file__).parents[1] / "schemas" / "recommendations.schema.json").read_text())


def coolprop_densities(celsius, pressure, relative_humidity):
    """(moist-air density, dry-air partial density) [kg/m³] from CoolProp."""
    t = 273.15 + celsius
    moist = 1.0 / HAPropsSI("Vha", "T", t, "P", pressure, "R", relative_humidity)
    dry = 1.0 / HAPropsSI("Vda", "T", t, "P", pressure, "R", relative_humidity)
    return moist, dry


def isa_pressure(elevation):
    # ISA barometric formula (US Standard Atmosphere 1976, troposphere), station pressure [Pa]
    return 101325.0 * (1 - 2.25577e-5 * elevation) ** 5.25588


def expected_ideal_diameter_jet(current, reference, event):
    """DESIGN.md section 3: A_e/A_r = (rho_d,e/rho_d,r) sqrt(rho_m,r/rho_m,e); d ~ sqrt(A)."""
    m_r, d_r = coolprop_densities(*reference)
    m_e, d_e = coolprop_densities(*event)
    area_ratio = (d_e / d_r) * math.sqrt(m_r / m_e)
    return current * math.sqrt(area_ratio)


def one_bike_plan(bike_kwargs=None, reference=None, **event_kwargs):
    reference = reference or pf.conditions()
    bike = pf.bike("R01", "TS-250", reference, **(bike_kwargs or {}))
    return plan.make_plan(pf.fleet((bike,), reference=reference), pf.event(**event_kwargs))


# --- the ideal main jet against CoolProp -----------------------------------------------------
CASES = [
    # (reference C, Pa, RH), (event elevation m, C, RH); reference fixed at sea level, 20 °C
    pytest.param((20.0, 101325.0, 0.5), (1500.0, 15.0, 0.5), id="1500m-15C-50%"),
    pytest.param((20.0, 101325.0, 0.5), (2500.0, 5.0, 0.3), id="2500m-5C-30%"),
    pytest.param((20.0, 101325.0, 0.5), (800.0, 32.0, 0.8), id="800m-32C-80%"),
    pytest.param((20.0, 101325.0, 0.5), (0.0, 20.0, 0.5), id="same-as-reference"),
    pytest.param((10.0, 101325.0, 0.2), (3000.0, 25.0, 0.6), id="3000m-25C-60%"),
]


@pytest.mark.parametrize("reference, event", CASES)
def test_ideal_main_jet_matches_coolprop_and_the_metering_law(reference, event):
    elevation, celsius, rh = event
    pressure = isa_pressure(elevation)
    ref = pf.conditions(celsius=reference[0], pressure=reference[1], relative_humidity=reference[2])
    doc = one_bike_plan(reference=ref, elevation=elevation, celsius=celsius, relative_humidity=rh, pressure=pressure)
    main = doc["entries"][0]["settings"]["main_jet"]
    expected = expected_ideal_diameter_jet(160.0, reference, (celsius, pressure, rh))
    # tolerance: the document prints 0.1; CIPM-2007 and CoolProp agree to ~1e-4 in density
    assert main["ideal"] == pytest.approx(expected, abs=0.12)
    sizes = np.array(pf.FAMILIES["main-round"].sizes)
    below = sizes[sizes <= expected].max()
    above = sizes[sizes >= expected].min()
    assert main["recommended"] in (below, above)
    # never leaner than half a step below the ideal
    assert main["recommended"] >= expected - (above - below) / 2 - 1e-9


def test_rule_of_thumb_dry_density_ratio_081():
    # common practice worked example: dry-air density ratio 0.81 moves a diameter-coded 160
    # main to about 152 (0.81**0.25 * 160 = 151.8). Dry air (RH 0), same temperature, station
    # pressure ratio 0.81 gives the density ratio 0.81 (ideal gas; CIPM Z differs by < 1e-4).
    ref = pf.conditions(celsius=20.0, pressure=100000.0, relative_humidity=0.0)
    doc = one_bike_plan(reference=ref, elevation=1800.0, celsius=20.0, relative_humidity=0.0, pressure=81000.0)
    main = doc["entries"][0]["settings"]["main_jet"]
    assert main["ideal"] == pytest.approx(0.81**0.25 * 160, abs=0.1)
    assert main["recommended"] == 152  # between 150 and 152: the richer


# --- directions (common practice) --------------------------------------------------------------
def main_ideal(**kwargs):
    return one_bike_plan(**kwargs)["entries"][0]["settings"]["main_jet"]["ideal"]


def test_higher_site_needs_a_smaller_jet():
    assert main_ideal(elevation=2000.0) < main_ideal(elevation=500.0)


def test_hotter_air_needs_a_smaller_jet():
    assert main_ideal(celsius=30.0) < main_ideal(celsius=5.0)


def test_more_humid_air_needs_a_smaller_jet():
    assert main_ideal(relative_humidity=0.9) < main_ideal(relative_humidity=0.1)


def test_e10_instead_of_e0_needs_a_larger_jet():
    assert main_ideal(fuel="E10") > main_ideal(fuel=None)


def test_more_premix_oil_needs_a_larger_jet():
    # oil counted as non-fuel (the default): 20:1 carries less fuel than the proven 40:1
    from tuning import air

    state = air.air_state(288.15, 90000.0, relative_humidity=0.5)
    ref = air.air_state(293.15, 101325.0, relative_humidity=0.5)
    e0 = pf.FUELS["E0"]
    same = plan.required_area_factor(state, ref, e0, e0, premix_ratio=40.0)
    more_oil = plan.required_area_factor(state, ref, e0, e0, premix_ratio=20.0, reference_premix_ratio=40.0)
    assert more_oil > same


def test_between_two_sizes_the_richer():
    # the reference's own conditions: factor 1, so the ideal is the fitted 151 exactly halfway
    # between the family's 150 and 152
    doc = one_bike_plan(
        bike_kwargs={"main_jet": 151.0}, elevation=0.0, celsius=20.0, relative_humidity=0.5, pressure=101325.0
    )
    main = doc["entries"][0]["settings"]["main_jet"]
    assert main["ideal"] == pytest.approx(151.0, abs=0.05)
    assert main["recommended"] == 152
    assert main["direction"] == "richer"


def test_air_and_fuel_screws_turn_opposite_ways_for_the_same_need():
    moved = 0
    for elevation in (600.0, 900.0, 1200.0, 1700.0, 2300.0):
        air_bike = pf.bike(
            "A", "TS-250", pf.conditions(), mixture_screw=pf.settings(screw_kind="air", turns=2.0).mixture_screw
        )
        fuel_bike = pf.bike(
            "F", "TS-250", pf.conditions(), mixture_screw=pf.settings(screw_kind="fuel", turns=2.0).mixture_screw
        )
        doc = plan.make_plan(pf.fleet((air_bike, fuel_bike)), pf.event(elevation=elevation))
        a, f = (e["settings"]["mixture_screw"] for e in doc["entries"])
        assert a["change_turns"] == -f["change_turns"]
        assert a["direction"] == f["direction"]
        if a["change_turns"]:
            moved += 1
            assert ("out" in a["change"]) != ("out" in f["change"])
    assert moved >= 1


def test_clip_richer_when_the_needle_must_deliver_more():
    # at the reference's own elevation but much colder air, more fuel is needed: the clip never
    # moves leaner; higher groove numbers are richer (common practice)
    doc = one_bike_plan(elevation=0.0, celsius=-5.0, pressure=101325.0)
    clip = doc["entries"][0]["settings"]["clip"]
    assert clip["recommended"] >= clip["current"]
    assert clip["assumed_geometry"] is False


# --- properties (hypothesis, modest counts) ------------------------------------------------------
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(low=st.floats(0.0, 3000.0), step=st.floats(50.0, 1000.0), celsius=st.floats(-10.0, 35.0))
def test_recommended_main_is_monotone_in_elevation(low, step, celsius):
    a = one_bike_plan(elevation=low, celsius=celsius)["entries"][0]["settings"]["main_jet"]["recommended"]
    b = one_bike_plan(elevation=low + step, celsius=celsius)["entries"][0]["settings"]["main_jet"]["recommended"]
    assert b <= a


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(celsius=st.floats(-15.0, 35.0), warmer=st.floats(1.0, 20.0), elevation=st.floats(0.0, 3000.0))
def test_recommended_main_is_monotone_in_temperature(celsius, warmer, elevation):
    a = one_bike_plan(elevation=elevation, celsius=celsius)["entries"][0]["settings"]["main_jet"]["recommended"]
    b = one_bike_plan(elevation=elevation, celsius=celsius + warmer)["entries"][0]["settings"]["main_jet"][
        "recommended"
    ]
    assert b <= a


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    elevation=st.floats(0.0, 4500.0),
    celsius=st.floats(-15.0, 35.0),
    spread=st.floats(0.0, 30.0),
    main=st.sampled_from([110.0, 140.0, 160.0, 200.0, 218.0]),
)
def test_main_jet_never_leaner_than_the_guard_or_a_danger(elevation, celsius, spread, main):
    # err rich (common practice: a lean engine seizes): in every hour the predicted mixture of
    # the recommended main is at most the lean guard leaner than the proven one, or the plan
    # carries a danger saying nothing in the family is rich enough
    doc = one_bike_plan(bike_kwargs={"main_jet": main}, elevation=elevation, celsius=celsius, spread=spread)
    entry = doc["entries"][0]
    chosen = entry["settings"]["main_jet"]["recommended"]
    worst = max((main * math.sqrt(h["area_factor"]) / chosen) ** 2 for h in entry["hours"])  # diameter coding
    if worst > 1.0 + plan.LEAN_GUARD + 2e-4:
        assert any(w["code"] == "no-safe-jet" and w["severity"] == "danger" for w in entry["warnings"])


# --- warnings -----------------------------------------------------------------------------------
def codes(doc, i=0):
    return {w["code"] for w in doc["entries"][i]["warnings"]}


def test_factor_out_of_range_warns():
    assert "factor-out-of-range" in codes(one_bike_plan(elevation=3800.0, celsius=30.0))
    assert "factor-out-of-range" not in codes(one_bike_plan(elevation=500.0))


def test_wide_window_warns():
    assert "window-too-wide" in codes(one_bike_plan(elevation=1500.0, spread=35.0, hours=10))
    assert "window-too-wide" not in codes(one_bike_plan(elevation=1500.0, spread=0.0))


def test_stock_shortage_warns_and_fills_the_pick_list():
    bike = pf.bike("R01", "TS-250", pf.conditions())
    doc = plan.make_plan(pf.fleet((bike,), stock={("main-round", 120.0): 1}), pf.event(elevation=1500.0))
    entry = doc["entries"][0]
    main = entry["settings"]["main_jet"]
    assert "stock-shortage" in codes(doc) or "no-safe-jet" in codes(doc)
    assert main["in_stock"] is False and main["source"]["kind"] == "order"
    row = next(p for p in doc["pick_list"] if p["family"] == "main-round" and p["size"] == main["recommended"])
    assert row == {
        "family": "main-round",
        "size": main["recommended"],
        "fitted_now": 0,
        "in_stock": 0,
        "needed": 1,
        "to_order": 1,
    }
    assert doc["pick_list"][0]["to_order"] >= 1  # to order first


def test_cold_hot_and_icing_notes():
    cold = one_bike_plan(elevation=1000.0, celsius=1.0, relative_humidity=0.95)
    assert {"cold-start", "icing-risk"} <= codes(cold)
    assert any("Choke" in c["text"] for c in cold["entries"][0]["checks"])
    hot = one_bike_plan(elevation=500.0, celsius=36.0, relative_humidity=0.2)
    assert "hot-fuel" in codes(hot)


def test_assumed_needle_and_pump_checks():
    doc = plan.make_plan(pf.fleet(), pf.event(elevation=1500.0))
    by_bike = {e["bike"]: e for e in doc["entries"]}
    assert by_bike["R03"]["settings"]["clip"]["assumed_geometry"] is True
    notices = {b["bike"]: {w["code"] for w in b["notices"]} for b in doc["bikes"]}
    assert "assumed-needle-geometry" in notices["R03"]  # once per bike, not per session
    assert "assumed-needle-geometry" not in {w["code"] for w in by_bike["R03"]["warnings"]}
    assert any("Accelerator pump" in c["text"] for c in by_bike["R02"]["checks"])
    assert any("8.0 mm" in c["text"] for c in by_bike["R02"]["checks"])


@pytest.mark.parametrize("elevation", [0.0, 1400.0, 2500.0])
def test_screw_left_outside_its_range_is_brought_back_with_a_warning(elevation):
    # a fuel screw found at 5 turns out, usable range 1..3 (common practice): never recommend
    # a position outside the range; say so
    screw = pf.settings(screw_kind="fuel", turns=5.0).mixture_screw
    doc = one_bike_plan(bike_kwargs={"mixture_screw": screw}, elevation=elevation)
    s = doc["entries"][0]["settings"]["mixture_screw"]
    assert 1.5 <= s["recommended_turns"] <= 2.5  # the middle half of the usable range
    assert s["change"].startswith("fuel screw") and " in: leaner" in s["change"]


def test_assumed_screw_range_is_flagged():
    screw = pf.settings(range_assumed=True).mixture_screw
    doc = one_bike_plan(bike_kwargs={"mixture_screw": screw})
    assert "assumed-screw-range" in {w["code"] for w in doc["bikes"][0]["notices"]}
    assert doc["entries"][0]["settings"]["mixture_screw"]["range_assumed"] is True


def test_rejet_temperatures_bracket_the_session_and_hold():
    doc = one_bike_plan(elevation=1500.0, celsius=15.0)
    entry = doc["entries"][0]
    rj = entry["rejet_temperatures_C"]
    assert rj["below"] < 15.0 < rj["above"]
    colder = one_bike_plan(elevation=1500.0, celsius=rj["below"] - 0.3)
    warmer = one_bike_plan(elevation=1500.0, celsius=rj["above"] + 0.3)
    assert colder["entries"][0]["settings"]["main_jet"]["recommended"] == rj["below_jet"]
    assert warmer["entries"][0]["settings"]["main_jet"]["recommended"] == rj["above_jet"]


def test_mixture_curve_shape_and_current_leaner_at_altitude():
    entry = one_bike_plan(elevation=2000.0)["entries"][0]
    curve = entry["mixture_curve"]
    assert curve["throttle"] == pytest.approx([i / 20 for i in range(21)])
    assert len(curve["current_afr"]) == len(curve["recommended_afr"]) == 21
    # at altitude the unchanged settings run rich (lower AFR than the reference)
    assert max(curve["current_afr"]) < curve["reference_afr"]
    assert 0 < entry["power_vs_reference_pct"] < 100


def test_weather_not_covering_a_session_is_a_user_error():
    ev = pf.event()
    late = replace(ev.sessions[0], end=ev.sessions[0].end.replace(hour=23))
    with pytest.raises(UserError, match="extend the weather table"):
        plan.make_plan(pf.fleet(), replace(ev, sessions=(late,)))


def test_session_hours_are_whole_hours_plus_the_ends():
    ev = pf.event()
    s = replace(ev.sessions[0], start=ev.sessions[0].start.replace(minute=30))
    hours = plan.session_hours(s)
    assert hours[0] == int(s.start.timestamp()) and hours[-1] == int(s.end.timestamp())
    assert np.all(hours[1:-1] % 3600 == 0)
    assert np.all(np.diff(hours) > 0)


# --- the document and the files ----------------------------------------------------------------------
def test_document_validates_against_the_schema():
    fleet = pf.fleet(stock={("main-round", 150.0): 1, ("pilot", 37.5): 2})
    ev = pf.event(elevation=1800.0, hours=5, spread=6.0)
    doc = plan.make_plan(fleet, ev)
    jsonschema.validate(doc, SCHEMA, format_checker=jsonschema.FormatChecker())
    assert doc["format"] == "carbfleet-plan/3"
    assert [e["bike"] for e in doc["entries"]] == ["R01", "R02", "R03"]
    assert doc["warnings_count"] == sum(len(e["warnings"]) for e in doc["entries"]) + sum(
        len(b["notices"]) for b in doc["bikes"]
    )
    assert doc["entries"][0]["start"].endswith("-06:00")  # site local time with offset


def test_files_and_csv_rows(tmp_path):
    doc = plan.make_plan(pf.fleet(), pf.event(elevation=1500.0))
    paths = plan.write_plan_files(doc, tmp_path)
    assert [p.name for p in paths] == ["recommendations.json", "recommendations.csv", "pick-list.csv"]
    assert json.loads(paths[0].read_text(encoding="utf-8")) == doc
    rows = paths[1].read_text(encoding="utf-8").splitlines()
    assert rows[0].split(",")[:3] == ["bike", "model", "session"]
    assert "station_pressure_hPa_mean" in rows[0] and "main_jet_recommended" in rows[0]
    assert len(rows) == 1 + len(doc["entries"])
    assert paths[2].read_text(encoding="utf-8").splitlines()[0] == "family,size,fitted_now,in_stock,needed,to_order"


def test_regression_two_runs_are_byte_identical(tmp_path):
    # regression/determinism check (not validation): same inputs, same bytes
    fleet = pf.fleet(stock={("main-round", 150.0): 1})
    outputs = []
    for run in ("a", "b"):
        doc = plan.make_plan(fleet, pf.event(elevation=1700.0, spread=8.0))
        paths = plan.write_plan_files(doc, tmp_path / run)
        outputs.append([p.read_bytes() for p in paths])
    assert outputs[0] == outputs[1]


def test_sessions_of_different_lengths_keep_their_own_hours():
    from datetime import timedelta

    ev = pf.event(hours=8, spread=12.0)
    s0 = ev.sessions[0]
    sessions = (
        replace(s0, name="short", end=s0.start + timedelta(hours=2, minutes=30)),
        replace(s0, name="long", start=s0.start + timedelta(hours=3), end=s0.start + timedelta(hours=8)),
    )
    doc = plan.make_plan(pf.fleet(), replace(ev, sessions=sessions))
    for entry in doc["entries"]:
        factors = [h["area_factor"] for h in entry["hours"]]
        assert len(factors) == (4 if entry["session"] == "short" else 6)  # start, whole hours, end
        assert entry["summary"]["area_factor_min"] == min(factors)
        assert entry["summary"]["area_factor_max"] == max(factors)


@settings(max_examples=30, deadline=None)
@given(
    factors=st.lists(st.floats(0.6, 1.4), min_size=1, max_size=12),
    delivered=st.lists(st.floats(0.5, 1.5), min_size=1, max_size=6),
)
def test_sorted_window_loss_equals_the_sum_over_hours(factors, delivered):
    # the loss written out: sum of w * (f/D - 1)^2, w = 4 lean (f > D), 1 rich
    expected = [sum((4.0 if f > d else 1.0) * (f / d - 1.0) ** 2 for f in factors) for d in delivered]
    required = np.array([factors + [0.9, 1.1]])  # two padding hours
    valid = np.array([[True] * len(factors) + [False, False]])
    got = plan.WindowLoss(required, valid)(np.array([delivered]))[0]
    np.testing.assert_allclose(got, expected, rtol=1e-9, atol=1e-12)


@settings(max_examples=30, deadline=None)
@given(
    samples=st.lists(st.tuples(st.floats(0.6, 1.4), st.floats(0.0, 1.0)), min_size=1, max_size=12),
    delivered=st.lists(st.floats(0.5, 1.5), min_size=1, max_size=6),
)
def test_weighted_window_loss_equals_the_weighted_sum_over_samples(samples, delivered):
    """Samples of a session ridden over several heights count by their share of the hour; the
    leanest deviation still sees every sample, even one of share 0 (the densest point governs)."""
    factors, shares = [f for f, _ in samples], [w for _, w in samples]
    expected = [sum(w * (4.0 if f > d else 1.0) * (f / d - 1.0) ** 2 for f, w in samples) for d in delivered]
    required = np.array([factors + [0.9, 1.1]])  # two padding samples
    valid = np.array([[True] * len(factors) + [False, False]])
    weights = np.array([shares + [5.0, 5.0]])  # padding weights must not count
    window = plan.WindowLoss(required, valid, weights)
    np.testing.assert_allclose(window(np.array([delivered]))[0], expected, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(window.leanest(np.array([delivered]))[0], [max(factors) / d - 1.0 for d in delivered])


@pytest.mark.parametrize("screw_kind", ["air", "fuel"])
def test_screw_before_pilot_when_the_screw_can_reach(screw_kind):
    # Workshop order (common practice): trim with the mixture screw; change the pilot jet only
    # when the screw would leave its usable range (about 1..3 turns out).
    screw = pf.settings(screw_kind=screw_kind, turns=2.0).mixture_screw
    small = one_bike_plan(bike_kwargs={"mixture_screw": screw}, elevation=1700.0)["entries"][0]["settings"]
    assert small["pilot_jet"]["recommended"] == small["pilot_jet"]["current"]
    assert small["mixture_screw"]["change_turns"] != 0
    assert 1.0 <= small["mixture_screw"]["recommended_turns"] <= 3.0
    large = one_bike_plan(bike_kwargs={"mixture_screw": screw}, elevation=3000.0)["entries"][0]["settings"]
    assert large["pilot_jet"]["recommended"] < large["pilot_jet"]["current"]
    assert 1.0 <= large["mixture_screw"]["recommended_turns"] <= 3.0


def _worst_mid_range_lean(doc):
    worst = -1.0
    for e in doc["entries"]:
        c = e["mixture_curve"]
        mid = [a for t, a in zip(c["throttle"], c["recommended_afr"]) if 0.25 <= t <= 0.75]
        worst = max(worst, max(mid) / c["reference_afr"] - 1.0)
    return worst


def test_recommended_clip_never_leaves_mid_range_lean_on_the_demo():
    # Safety (common practice: err rich; a lean engine seizes): across 1/4..3/4 throttle the
    # recommended settings' predicted mixture, at each session's leanest hour, stays within
    # the clip's lean limit plus the screw's quarter-turn resolution (2.5 % of pilot area,
    # diluted by the circuit blend) of the reference mixture. The demo's needle taper made one
    # groove 6 % lean at 3/8 throttle before the clip lean guard existed.
    from tuning.config import load_event, load_fleet

    root = Path(__file__).parents[1] / "tuning" / "demo"
    fleet = load_fleet(root / "demo-fleet.yaml")
    doc = plan.make_plan(fleet, load_event(root / "demo-event.yaml", fleet))
    assert _worst_mid_range_lean(doc) <= plan.CLIP_LEAN_LIMIT + 0.01


@settings(max_examples=25, deadline=None)
@given(elevation=st.floats(0.0, 3000.0), celsius=st.floats(-5.0, 35.0), clip=st.integers(1, 5))
# cold sea-level air with the clip already in the richest groove: 3.1 % lean at 3/8 throttle,
# nothing at hand richer (found by hypothesis): the plan must say so
@example(elevation=0.0, celsius=-4.0, clip=5)
def test_recommended_clip_never_leaves_mid_range_lean_unwarned(elevation, celsius, clip):
    # same property on the invented tapered needle, over sites and temperatures; where no
    # groove is rich enough the plan may not meet it, but then it warns (danger)
    doc = one_bike_plan(bike_kwargs={"clip": clip}, elevation=elevation, celsius=celsius)
    for i, entry in enumerate(doc["entries"]):
        if _worst_mid_range_lean({"entries": [entry]}) > plan.CLIP_LEAN_LIMIT + 0.01:
            assert "predicted-lean" in codes(doc, i)


def test_power_against_the_j1349_standard_is_one_base_for_every_bike():
    """The sessions' power figure has one base for the whole fleet: SAE J1349's standard
    conditions (25 degC, 99 kPa dry air; SAE J1349 Aug 2004). At exactly those conditions the
    correction factor is 1 (the standard's definition), so the figure is 100 % and within range;
    at 1650 m the dry-air pressure (about 83 kPa) lies below the standard's 90 kPa."""
    import numpy as np

    from tuning import air
    from tuning.plan.document import _j1349_power

    standard = air.air_state(np.array([298.15]), np.array([99_000.0]), relative_humidity=np.array([0.0]))
    got = _j1349_power(standard, slice(0, 1))
    assert got["power_vs_sae_j1349_pct"] == pytest.approx(100.0, abs=0.15)  # the formula uses 298 K, not 298.15 K
    assert got["sae_j1349_within_range"] is True
    with pytest.warns(air.OutOfRangeWarning):
        high = air.air_state(np.array([288.15]), np.array([83_500.0]), relative_humidity=np.array([0.5]))
    got = _j1349_power(high, slice(0, 1))
    assert got["sae_j1349_within_range"] is False
    assert got["power_vs_sae_j1349_pct"] < 90.0


def test_a_plan_of_no_bikes_or_no_sessions_is_refused_in_one_place():
    # the loaders refuse an empty fleet or event (at least one bike, one session); make_plan says
    # so once instead of every stage guarding against empty arrays
    with pytest.raises(ValueError, match="at least one bike and one session"):
        plan.make_plan(pf.fleet(bikes=()), pf.event())
    with pytest.raises(ValueError, match="at least one bike and one session"):
        plan.make_plan(pf.fleet(), replace(pf.event(), sessions=()))
