"""A GPX 1.1 route or track (an open standard) turned into the heights a session is ridden at.

Read with gpxpy, from the local file only (nothing is fetched). Track points (``trkpt``, every
segment on its own) and route points (``rtept``) count; waypoints do not. Every point needs an
elevation (``<ele>``). The time at each height is taken from the points' times when every
point has one (and they never go backwards), else from the distance between the points
(riding at an even pace).

Each stretch between two points gives half its time (or distance) to each end's height. With
at most :data:`MAX_LEVELS` distinct heights they are kept as they are; otherwise the heights are
put into :data:`BINS` bands of equal width, each counted at its *lowest* height (denser air:
errs rich), and the highest point is kept with a share of 0 so that the thinnest air is seen.
"""

from __future__ import annotations

from pathlib import Path

import gpxpy
import gpxpy.gpx
import numpy as np

from tuning.config.model import HeightProfile
from tuning.config.source import read_text
from tuning.errors import ConfigError

__all__ = ["MAX_LEVELS", "BINS", "RouteProblem", "read_route", "route_profile"]

MAX_LEVELS = 12  #: distinct heights kept as they are (our choice: keeps the plan small)
BINS = 10  #: height bands otherwise (our choice)
PROFILE_POINTS = 200  #: points of the chart's profile at most


class RouteProblem(ValueError):
    """A GPX file that cannot give heights; the message is one line."""


def read_route(path) -> HeightProfile:
    """The heights and time shares of a GPX file's tracks and routes.

    Parameters
    ----------
    path : str or os.PathLike
        The GPX file.

    Returns
    -------
    tuning.config.model.HeightProfile
        ``source="route"``, ``route`` the file's name.

    Raises
    ------
    RouteProblem
        Unreadable file, not GPX, fewer than 2 points, a point without elevation, times going backwards.
    """
    path = Path(path)
    lines = _read(path)
    elevations, weights, profile = route_profile(lines)
    levels, shares = _levels(elevations, weights)
    return HeightProfile(
        elevations=tuple(levels), shares=tuple(shares), source="route", route=path.name, profile=tuple(profile)
    )


def _read(path: Path) -> list[list]:
    try:
        text = read_text(path)  # the same limits as every input file: regular file, size, UTF-8
    except ConfigError as exc:
        raise RouteProblem(f"route file {path.name}: {exc.problems[0].message}") from None
    try:
        gpx = gpxpy.parse(text)
    except (gpxpy.gpx.GPXException, ValueError) as exc:
        raise RouteProblem(f"route file {path.name} is not readable GPX ({_first_line(exc)})") from None
    lines = [list(seg.points) for track in gpx.tracks for seg in track.segments]
    lines += [list(r.points) for r in gpx.routes]
    lines = [pts for pts in lines if pts]
    count = sum(len(pts) for pts in lines)
    if count < 2:
        raise RouteProblem(f"route file {path.name} has {count} track or route point(s); a route needs at least 2")
    missing = sum(p.elevation is None for pts in lines for p in pts)
    if missing:
        raise RouteProblem(
            f"route file {path.name}: {missing} of {count} points have no elevation (<ele>); "
            "give every point its elevation"
        )
    return lines


def _first_line(exc) -> str:
    text = str(exc).strip().splitlines()
    return text[0] if text else type(exc).__name__


def route_profile(lines):
    """Per point: elevation [m] and weight (time [s] or distance [m]); the chart's profile.

    Weights come from the points' times when every point has one, else from distances.
    """
    timed = all(p.time is not None for pts in lines for p in pts)
    elevations, weights, profile = [], [], []
    travelled = 0.0
    for pts in lines:
        z = np.array([p.elevation for p in pts], float)
        step = np.array([_distance(a, b) for a, b in zip(pts, pts[1:])], float)
        if timed:
            seconds = np.array([(b.time - a.time).total_seconds() for a, b in zip(pts, pts[1:])], float)
            if np.any(seconds < 0):
                k = int(np.argmax(seconds < 0))
                raise RouteProblem(
                    f"the route's times go backwards after point {k + 1} ({pts[k].time.isoformat()}); "
                    "fix the times or remove them (distances are used then)"
                )
            gaps = seconds
        else:
            gaps = step
        w = np.zeros(len(z))
        w[:-1] += gaps / 2.0
        w[1:] += gaps / 2.0
        elevations.append(z)
        weights.append(w)
        along = travelled + np.concatenate([[0.0], np.cumsum(step)])
        profile.extend(zip(along.tolist(), z.tolist()))
        travelled = float(along[-1])
    z_all, w_all = np.concatenate(elevations), np.concatenate(weights)
    if not w_all.sum() > 0:
        raise RouteProblem(
            "the route's points "
            + ("all have the same time" if timed else "all lie at one place")
            + "; the time at each height cannot be told"
        )
    return z_all, w_all, _thin(profile)


def _distance(a, b) -> float:
    return float(a.distance_2d(b) or 0.0)


def _thin(profile):
    if len(profile) <= PROFILE_POINTS:
        return [(round(d, 1), round(z, 1)) for d, z in profile]
    keep = np.unique(np.linspace(0, len(profile) - 1, PROFILE_POINTS).round().astype(int))
    return [(round(profile[i][0], 1), round(profile[i][1], 1)) for i in keep]


def _levels(elevations, weights):
    """Heights (ascending) and their shares, as the module describes."""
    z = np.round(np.asarray(elevations, float), 1)
    w = np.asarray(weights, float) / float(np.sum(weights))
    distinct, group = np.unique(z, return_inverse=True)
    if len(distinct) <= MAX_LEVELS:
        shares = np.bincount(group, weights=w, minlength=len(distinct))
        return distinct.tolist(), shares.tolist()
    edges = np.linspace(z.min(), z.max(), BINS + 1)
    band = np.clip(np.searchsorted(edges, z, side="right") - 1, 0, BINS - 1)
    shares = np.bincount(band, weights=w, minlength=BINS)
    used = shares > 0
    levels = [float(e) for e in edges[:-1][used]] + [float(z.max())]
    return levels, shares[used].tolist() + [0.0]
