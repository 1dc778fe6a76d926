"""Altair charts of the plan (the fleet summary's weather), and their static SVG (vl-convert) for print.

No physics here. The setup sheets carry no chart: a verdict per throttle range reads quicker.
"""

from __future__ import annotations

import datetime as dt
import json
from functools import lru_cache

import altair as alt
import vl_convert

from tuning.config.spec import one_line
from tuning.display import METRIC_EN, Display


def weather_chart(plan: dict, display: Display = METRIC_EN, width: int = 560, height: int = 110) -> alt.VConcatChart:
    """Density altitude (display units) and the air-only jet-area factor over time, sessions shaded."""
    d = display

    def stamp(iso: str) -> str:  # Vega-Lite reads naive local time: keep the site's clock
        return dt.datetime.fromisoformat(iso).replace(tzinfo=None).isoformat()

    rows = [
        {
            "time": stamp(w["time"]),
            "density_altitude": d.elevation_value(w["density_altitude_m"]),
            "area_factor": w["area_factor"],
        }
        for w in plan["weather"]
    ]
    windows = [{"start": stamp(s["start"]), "end": stamp(s["end"]), "session": s["name"]} for s in plan["sessions"]]
    x = alt.X(
        "time:T",
        title=d._("site local time"),
        axis=alt.Axis(format="%d.%m. %H:%M" if d.language == "de" else "%a %H:%M", labelFontSize=9),
    )

    spans = _height_spans(plan, d, stamp)

    def panel(field: str, title: str, spans=()) -> alt.LayerChart:
        shade = alt.Chart(alt.Data(values=windows)).mark_rect(color="#e4e4e4").encode(x="start:T", x2="end:T")
        line = (
            alt.Chart(alt.Data(values=rows))
            .mark_line(color="#000000", point=alt.OverlayMarkDef(color="#000000", size=14))
            .encode(x=x, y=alt.Y(f"{field}:Q", title=title, scale=alt.Scale(zero=False)))
        )
        layers = [shade, line]
        if spans:  # sessions ridden over a range of heights: the density altitude over every height reached
            layers.insert(
                1,
                alt.Chart(alt.Data(values=list(spans)))
                .mark_rect(color="#9a9a9a", opacity=0.55)
                .encode(x="start:T", x2="end:T", y="low:Q", y2="high:Q"),
            )
        return alt.layer(*layers).properties(width=width, height=height)

    title = d._("Weather across the sessions (shaded)")
    if spans:
        title += " · " + d._("grey bars: density altitude over the heights ridden")
    return (
        alt.vconcat(
            panel("density_altitude", d._("density altitude [%(unit)s]") % {"unit": d.elevation_unit}, spans),
            panel("area_factor", d._("jet-area factor, air only")),
        )
        .properties(title=alt.TitleParams(title, fontSize=10, anchor="start"))
        .configure_axis(labelFontSize=9, titleFontSize=9)
        .configure_view(strokeWidth=0.5)
    )


def _height_spans(plan: dict, d: Display, stamp) -> list[dict]:
    """Per session ridden over a range of heights: its window and its density altitude's range
    over every height and hour (from the plan's entries, the same for every bike)."""
    ranged = {s["name"]: s for s in plan["sessions"] if s.get("heights")}
    spans, seen = [], set()
    for e in plan["entries"]:
        if e["session"] in ranged and e["session"] not in seen:
            seen.add(e["session"])
            s, sm = ranged[e["session"]], e["summary"]
            spans.append(
                {
                    "start": stamp(s["start"]),
                    "end": stamp(s["end"]),
                    "low": d.elevation_value(sm["density_altitude_m_min"]),
                    "high": d.elevation_value(sm["density_altitude_m_max"]),
                }
            )
    return spans


def route_chart(plan: dict, display: Display = METRIC_EN, width: int = 560, height: int = 90):
    """The profile of each session's GPX route (elevation over distance), or None when no session has a route."""
    d = display
    rows, seen = [], set()
    for s in plan["sessions"]:
        h = s.get("heights") or {}
        if h.get("source") != "route" or not h.get("profile_m") or h.get("route") in seen:
            continue
        seen.add(h["route"])
        rows += [
            {
                "distance": dist / (1609.344 if d.units == "us" else 1000.0),
                "elevation": d.elevation_value(z),
                "route": h["route"],
            }
            for dist, z in h["profile_m"]
        ]
    if not rows:
        return None
    distance_unit = "mi" if d.units == "us" else "km"
    line = (
        alt.Chart(alt.Data(values=rows))
        .mark_line(color="#000000")
        .encode(
            x=alt.X("distance:Q", title=d._("distance along the route [%(unit)s]") % {"unit": distance_unit}),
            y=alt.Y(
                "elevation:Q",
                title=d._("elevation [%(unit)s]") % {"unit": d.elevation_unit},
                scale=alt.Scale(zero=False),
            ),
            strokeDash=alt.StrokeDash(
                "route:N", title=d._("route"), legend=alt.Legend(orient="bottom") if len(seen) > 1 else None
            ),
        )
    )
    title = d._("Route profile") + ("" if len(seen) > 1 else f": {next(iter(seen))}")
    return (
        line.properties(width=width, height=height, title=alt.TitleParams(title, fontSize=10, anchor="start"))
        .configure_axis(labelFontSize=9, titleFontSize=9)
        .configure_view(strokeWidth=0.5)
    )


def to_svg(chart) -> str:
    """Static SVG of an Altair chart (or its Vega-Lite dict) via vl-convert (no browser, no network).

    Identical specifications (bikes of one model with the same plan) are converted once. Text in
    the chart (session names come from the user's files) has its control characters escaped, as
    on the terminal: XML cannot hold them, and vl-convert aborts the whole process on one.
    """
    spec = chart if isinstance(chart, dict) else chart.to_dict(validate=False)
    return _svg_of(json.dumps(_printable(spec), sort_keys=True))


def _printable(value):
    """``value`` (a chart specification) with control characters in every text escaped."""
    if isinstance(value, str):
        return one_line(value)
    if isinstance(value, dict):
        return {key: _printable(item) for key, item in value.items()}
    if isinstance(value, list):
        return [_printable(item) for item in value]
    return value


@lru_cache(maxsize=256)
def _svg_of(spec_json: str) -> str:
    svg = vl_convert.vegalite_to_svg(json.loads(spec_json))
    # Drop the XML prolog if any, so the SVG can sit inline in HTML.
    return svg[svg.find("<svg") :] if "<svg" in svg else svg
