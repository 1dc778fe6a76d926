"""Sessions ridden over a range of heights (issue 13): the densest point governs, never lean.

The invented demo fleet and forecast (tuning/demo/) with the demo event's sessions moved to
ranges of heights. The checks are the rules of the design (DESIGN.md §3 and §8): the lean guard
holds at every height reached, so a range's main jets are never smaller than its highest point
alone needs and never leaner than the guard at its lowest point; the direction that hurts engines
(riding below the weather station: warmer but denser air) asks for richer settings. The lapse
rate and the hypsometric equation themselves are checked against USSA-1976 in tests/test_air.py.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import jsonschema
import pytest

from tuning import metering
from tuning.config import load_event, load_fleet
from tuning.config.heights import levels_of_range
from tuning.constants import STANDARD_LAPSE_RATE
from tuning.plan import LEAN_GUARD, make_plan

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"
SCHEMA_PATH = Path(__file__).resolve().parent.parent / "tuning" / "schemas" / "recommendations.schema.json"
SITE = 1650.0  # the demo site's elevation [m]


@pytest.fixture(scope="module")
def demo():
    fleet = load_fleet(DEMO / "demo-fleet.yaml")
    return fleet, load_event(DEMO / "demo-event.yaml", fleet)


def plan_over(demo, low, high, **event_changes):
    """The demo planned with every session ridden between ``low`` and ``high`` [m], setting per session."""
    fleet, event = demo
    profile = levels_of_range(low, high)
    sessions = tuple(replace(s, heights=profile) for s in event.sessions)
    return make_plan(fleet, replace(event, sessions=sessions, **event_changes), policy_name="session")


def by_key(doc):
    return {(e["bike"], e["session"]): e for e in doc["entries"]}


def delivered(fleet, entry):
    """Area factor [1] of the recommended main jet against the fitted one (tuning.metering's jet law)."""
    main = entry["settings"]["main_jet"]
    family = fleet.bikes[[b.id for b in fleet.bikes].index(entry["bike"])].settings.main_jet_family
    return float(
        metering.area_factor_between_jets(main["current"], main["recommended"], fleet.jet_families[family].coding)
    )


@pytest.mark.parametrize(("low", "high"), [(1150.0, 2150.0), (1650.0, 2450.0), (850.0, 1650.0)])
def test_a_range_needs_mains_never_smaller_than_its_highest_point(demo, low, high):
    ranged, top = by_key(plan_over(demo, low, high)), by_key(plan_over(demo, high, high))
    for key, entry in ranged.items():
        assert entry["settings"]["main_jet"]["recommended"] >= top[key]["settings"]["main_jet"]["recommended"], key


@pytest.mark.parametrize(("low", "high"), [(1150.0, 2150.0), (850.0, 1650.0), (650.0, 2650.0)])
def test_a_range_is_never_leaner_than_the_guard_at_its_lowest_point(demo, low, high):
    """What the lowest point alone needs (its largest required area factor, from the plan at that
    height alone) is met by the range's main jet within the lean guard, unless the plan says danger."""
    fleet, _ = demo
    ranged, bottom = by_key(plan_over(demo, low, high)), by_key(plan_over(demo, low, low))
    for key, entry in ranged.items():
        if entry["settings"]["main_jet"].get("unsafe") or any(w["severity"] == "danger" for w in entry["warnings"]):
            continue
        need = bottom[key]["summary"]["area_factor_max"]
        assert need / delivered(fleet, entry) - 1.0 <= LEAN_GUARD + 1e-4, key  # 1e-4: the factor printed to 4 places
        assert entry["heights"]["set_for_elevation_m"] == low


def test_below_the_weather_station_is_warmer_denser_and_richer(demo):
    """The direction that hurts engines: ridden 500 m below where the forecast holds, the air is
    3.25 K warmer (6.5 K/km, USSA-1976) yet denser, so every bike needs a larger area factor."""
    below, at = by_key(plan_over(demo, SITE - 500.0, SITE - 500.0)), by_key(plan_over(demo, SITE, SITE))
    for key, entry in below.items():
        warmer = entry["hours"][0]["air_temperature_C"] - at[key]["hours"][0]["air_temperature_C"]
        assert warmer == pytest.approx(500.0 * STANDARD_LAPSE_RATE, abs=0.02)  # printed to 0.01 °C
        assert entry["summary"]["area_factor_max"] > at[key]["summary"]["area_factor_max"] * 1.02, key
        assert entry["settings"]["main_jet"]["recommended"] >= at[key]["settings"]["main_jet"]["recommended"], key


def test_a_station_in_the_valley_carries_the_forecast_up(demo):
    """The same forecast (QNH and temperature) said to hold 800 m lower, at a valley station: QNH
    gives nearly the same pressure at the site either way (it is reduced with the standard
    atmosphere), but the valley's temperature is 5.2 K warmer than the site's (6.5 K/km), so the
    site's air is colder and denser than when the forecast holds at the site: no main shrinks."""
    fleet, event = demo
    valley = make_plan(fleet, replace(event, weather_elevation=SITE - 800.0), policy_name="session")
    here = make_plan(fleet, event, policy_name="session")
    for key, entry in by_key(valley).items():
        assert entry["heights"]["source"] == "site"
        other = by_key(here)[key]
        assert entry["summary"]["area_factor_max"] > other["summary"]["area_factor_max"], key
        assert entry["summary"]["air_temperature_C_max"] == pytest.approx(
            other["summary"]["air_temperature_C_max"] - 5.2, abs=0.02
        )
        assert entry["settings"]["main_jet"]["recommended"] >= other["settings"]["main_jet"]["recommended"], key
    assert all("heights" not in e for e in here["entries"])  # the old document, unchanged


def test_the_document_with_heights_follows_its_schema(demo):
    import json

    doc = plan_over(demo, 1150.0, 2150.0)
    jsonschema.validate(doc, json.loads(SCHEMA_PATH.read_text()), format_checker=jsonschema.FormatChecker())
    heights = doc["entries"][0]["heights"]
    assert heights["elevation_m_min"] == 1150.0 and heights["elevation_m_max"] == 2150.0
    assert heights["power_at_highest_pct"] < doc["entries"][0]["power_vs_reference_pct"]  # thinner air at the top
    assert heights["rich_at_highest_pct"] > 0  # set for the bottom: rich at the top
