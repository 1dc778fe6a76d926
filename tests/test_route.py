"""Where sessions are ridden: GPX routes and elevation ranges in the event file (tuning.config.route,
tuning.config.heights).

The GPX files here are written by hand (GPX 1.1, topografix.com/GPX/1/1), with heights, times and
positions chosen so that the expected shares can be worked out on paper (shown beside each check).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tuning.cli import main
from tuning.config import load_event
from tuning.config.heights import levels_of_range
from tuning.config.route import BINS, MAX_LEVELS, RouteProblem, read_route
from tuning.errors import ConfigError

pytestmark = pytest.mark.filterwarnings("ignore::UserWarning")

HEAD = '<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="hand" xmlns="http://www.topografix.com/GPX/1/1">\n'


def gpx(points, tag="trk"):
    """A GPX text of (lat, lon, ele or None, ISO time or None) points in one track segment or route."""

    def one(lat, lon, ele, time, name):
        inner = (f"<ele>{ele}</ele>" if ele is not None else "") + (f"<time>{time}</time>" if time else "")
        return f'<{name} lat="{lat}" lon="{lon}">{inner}</{name}>\n'

    if tag == "trk":
        body = "<trk><trkseg>\n" + "".join(one(*p, "trkpt") for p in points) + "</trkseg></trk>\n"
    else:
        body = "<rte>\n" + "".join(one(*p, "rtept") for p in points) + "</rte>\n"
    return HEAD + body + "</gpx>\n"


def write(tmp_path, text, name="route.gpx") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_shares_by_the_tracks_times(tmp_path):
    """10 min at 1000 m, then 20 min climbing to 1200 m: the climb's time goes half to each end,
    so 1000 m holds 10 + 10 = 20 of 30 min (2/3) and 1200 m 10 of 30 (1/3). Worked by hand."""
    path = write(
        tmp_path,
        gpx(
            [
                (47.00, 11.0, 1000, "2026-06-13T07:00:00Z"),
                (47.01, 11.0, 1000, "2026-06-13T07:10:00Z"),
                (47.02, 11.0, 1200, "2026-06-13T07:30:00Z"),
            ]
        ),
    )
    profile = read_route(path)
    assert profile.source == "route" and profile.route == "route.gpx"
    assert profile.elevations == (1000.0, 1200.0)
    assert profile.shares == pytest.approx((2 / 3, 1 / 3), abs=1e-12)


def test_shares_by_distance_without_times(tmp_path):
    """Points 0.01° of latitude apart along a meridian (equal distances): the flat stretch gives
    1000 m one stretch, the climb half a stretch to each end: 1.5 : 0.5 = 3/4 and 1/4. Worked by hand."""
    path = write(
        tmp_path, gpx([(47.00, 11.0, 1000, None), (47.01, 11.0, 1000, None), (47.02, 11.0, 1200, None)], "rte")
    )
    profile = read_route(path)
    assert profile.elevations == (1000.0, 1200.0)
    assert profile.shares == pytest.approx((0.75, 0.25), abs=1e-6)


def test_times_on_only_some_points_fall_back_to_distance(tmp_path):
    """As above: one point without a time, so distances count (3/4, 1/4 by hand), not the times (2/3, 1/3)."""
    path = write(
        tmp_path,
        gpx(
            [
                (47.00, 11.0, 1000, "2026-06-13T07:00:00Z"),
                (47.01, 11.0, 1000, None),
                (47.02, 11.0, 1200, "2026-06-13T07:30:00Z"),
            ]
        ),
    )
    assert read_route(path).shares == pytest.approx((0.75, 0.25), abs=1e-6)


def test_many_heights_are_banded_never_above_what_they_stand_for(tmp_path):
    """A climb of 40 evenly spaced points from 800 to 1580 m (by hand: min 800, max 1580): put in
    bands counted at their lowest height (richer air), the top kept with no time."""
    points = [(47.0 + 0.001 * k, 11.0, 800 + 20 * k, None) for k in range(40)]
    profile = read_route(write(tmp_path, gpx(points)))
    assert len(set(range(800, 1600, 20))) > MAX_LEVELS
    assert profile.elevations[0] == 800.0 and profile.elevations[-1] == 1580.0
    assert profile.shares[-1] == 0.0 and sum(profile.shares) == pytest.approx(1.0, abs=1e-12)
    assert len(profile.elevations) <= BINS + 1
    assert list(profile.elevations) == sorted(profile.elevations)
    # each band's share: the points it holds (20 m steps into 78 m bands: 3 or 4 points, end points half)
    assert all(0.05 < s < 0.11 for s in profile.shares[:-1])


@pytest.mark.parametrize(
    ("points", "problem"),
    [
        ([(47.0, 11.0, 1000, None)], "has 1 track or route point(s); a route needs at least 2"),
        ([(47.0, 11.0, None, None), (47.01, 11.0, 1000, None)], "1 of 2 points have no elevation"),
        ([(47.0, 11.0, 1000, None), (47.0, 11.0, 1100, None)], "all lie at one place"),
        (
            [(47.0, 11.0, 1000, "2026-06-13T08:00:00Z"), (47.01, 11.0, 1100, "2026-06-13T07:00:00Z")],
            "times go backwards",
        ),
    ],
)
def test_routes_that_cannot_give_heights_are_refused(tmp_path, points, problem):
    with pytest.raises(RouteProblem, match=problem.replace("(", r"\(").replace(")", r"\)")):
        read_route(write(tmp_path, gpx(points)))


def test_a_range_is_ridden_evenly_ends_included():
    """An even spread between min and max by the trapezoid rule: ends 1/8, inner heights 1/4 (by hand)."""
    profile = levels_of_range(1200.0, 2000.0)
    assert profile.elevations == (1200.0, 1400.0, 1600.0, 1800.0, 2000.0)
    assert profile.shares == (0.125, 0.25, 0.25, 0.25, 0.125)


# --- in the event file ----------------------------------------------------------------------
def _event(demo, extra_top="", session_extra=""):
    path = demo / "demo-event.yaml"
    text = path.read_text(encoding="utf-8")
    first = "  - {name: Sat morning, start: 2026-06-13 09:00, end: 2026-06-13 12:00}"
    assert first in text, "test set-up: the demo's first session changed"
    text = text.replace(first, first[:-1] + session_extra + "}") + extra_top
    path.write_text(text, encoding="utf-8")
    return path, text


def test_event_and_session_heights_are_read(demo):
    write(demo, gpx([(47.00, 11.0, 1000, None), (47.01, 11.0, 1000, None), (47.02, 11.0, 1200, None)]), "loop.gpx")
    path, _ = _event(
        demo,
        "route: loop.gpx\nweather_elevation: 1500 m\nlapse_rate: 5.5 K/km\n",
        ", elevation: {min: 1200 m, max: 2100 m}",
    )
    event = load_event(path)
    first, *others = event.sessions
    assert first.heights.source == "range" and first.heights.elevations[0] == 1200.0
    assert all(s.heights.source == "route" and s.heights.route == "loop.gpx" for s in others)
    assert event.weather_elevation == 1500.0 and event.lapse_rate == pytest.approx(5.5e-3)


@pytest.mark.parametrize(
    ("top", "session", "field", "problem"),
    [
        ("route: nothing.gpx\n", "", "route", "route file nothing.gpx"),
        ("", ", elevation: {min: 2100 m, max: 1200 m}", "sessions[0].elevation.max", "is below min"),
        ("", ", elevation: {min: 1200 m, max: 2100 m}, route: x.gpx", "sessions[0].route", "not both"),
        ("lapse_rate: 30 K/km\n", "", "lapse_rate", "outside the accepted range"),
    ],
)
def test_bad_heights_are_one_located_line(demo, capsys, top, session, field, problem):
    path, text = _event(demo, top, session)
    with pytest.raises(ConfigError) as info:
        load_event(path)
    assert len(info.value.problems) == 1, info.value.problems
    p = info.value.problems[0]
    assert p.field == field and problem in p.message
    key = field.rsplit(".", 1)[-1].split("[")[0]
    assert p.line == next(
        i
        for i, line in enumerate(text.splitlines(), 1)
        if (key + ":") in line and (field.startswith("sessions") == line.startswith("  - "))
    )


def test_a_gpx_without_elevations_stops_the_plan_with_exit_2(demo, capsys):
    write(demo, gpx([(47.00, 11.0, None, None), (47.01, 11.0, None, None)]), "flat.gpx")
    path, text = _event(demo, "route: flat.gpx\n")
    out = demo / "out"
    code = main(["plan", str(demo / "demo-fleet.yaml"), str(path), "--out", str(out)])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    line = text.splitlines().index("route: flat.gpx") + 1
    assert f"demo-event.yaml:{line}: route: route file flat.gpx: 2 of 2 points have no elevation" in err[0]
    assert not out.exists()
