"""Altair charts of the plan, and their static SVG (vl-convert) for print. No physics here."""

from __future__ import annotations

import base64
import datetime as dt
import json
from functools import lru_cache

import altair as alt
import vl_convert

from tuning.config.spec import one_line

# Black-and-white readable: current and recommended differ by dash, not only by colour.
_SETTING_DASH = alt.Scale(domain=["current", "recommended"], range=[[6, 3], [1, 0]])
_GREYS = ["#111111", "#555555", "#888888", "#333333", "#777777", "#222222"]


_LO, _HI = -98765.0, 98765.0  # placeholders for the y domain in the cached specification


@lru_cache(maxsize=8)
def _mixture_template(sessions: tuple[str, ...], width: int, height: int) -> str:
    """The mixture chart built once with Altair for these session names, data left out (JSON)."""
    x = alt.X("throttle:Q", title="throttle opening", axis=alt.Axis(format="%", tickCount=5),
              scale=alt.Scale(domain=[0, 1], nice=False))
    scale = alt.Scale(domain=[_LO, _HI], nice=False, zero=False)
    band = alt.Chart(alt.NamedData(name="band")).mark_rect(color="#dddddd").encode(
        y=alt.Y("lo:Q", scale=scale), y2="hi:Q")
    reference = alt.Chart(alt.NamedData(name="reference")).mark_rule(
        color="#000000", strokeWidth=0.8, strokeDash=[2, 2]).encode(y="afr:Q")
    lines = alt.Chart(alt.NamedData(name="curves")).mark_line(strokeWidth=1.6).encode(
        x=x, y=alt.Y("afr:Q", title="air–fuel ratio", scale=scale),
        strokeDash=alt.StrokeDash("setting:N", scale=_SETTING_DASH, title="setting"),
        color=alt.Color("session:N", scale=alt.Scale(range=_GREYS), title="session", sort=list(sessions)),
        detail="session:N",
    )
    chart = alt.layer(band, reference, lines).properties(
        width=width, height=height, padding={"left": 2, "top": 4, "right": 16, "bottom": 2}).configure_axis(
        labelFontSize=9, titleFontSize=9).configure_legend(labelFontSize=9, titleFontSize=9).configure_view(
        strokeWidth=0.5)
    return json.dumps(chart.to_dict(validate=False))


def _mixture_rows(entries: list[dict]) -> tuple[list[dict], float, float]:
    """The plan's ``mixture_curve`` of each entry as chart rows, and the target band."""
    rows = []
    for e in entries:
        curve = e["mixture_curve"]
        for setting, key in (("current", "current_afr"), ("recommended", "recommended_afr")):
            for throttle, afr in zip(curve["throttle"], curve[key]):
                rows.append({"throttle": throttle, "afr": afr, "setting": setting, "session": e["session"]})
    lo, hi = entries[0]["mixture_curve"]["target_band_afr"]
    return rows, lo, hi


def mixture_spec(entries: list[dict], width: int = 400, height: int = 95) -> dict:
    """Vega-Lite specification: air–fuel ratio against throttle opening, current and recommended.

    Draws the plan's ``mixture_curve`` of each entry (one bike, every session) over the target
    band ``target_band_afr`` and the bike's reference mixture ``reference_afr``. The Altair
    objects are built once per set of session names (building them costs ~0.3 s) and only the
    data change from bike to bike.
    """
    rows, lo, hi = _mixture_rows(entries)
    values = [r["afr"] for r in rows] + [lo, hi]
    text = _mixture_template(tuple(e["session"] for e in entries), width, height)
    text = text.replace(repr(_LO), repr(min(values) - 0.3)).replace(repr(_HI), repr(max(values) + 0.3))
    spec = json.loads(text)
    spec["datasets"] = {"curves": rows, "band": [{"lo": lo, "hi": hi}],
                        "reference": [{"afr": entries[0]["mixture_curve"]["reference_afr"]}]}
    return spec


def weather_chart(plan: dict, width: int = 560, height: int = 110) -> alt.VConcatChart:
    """Density altitude and required jet-area factor over time, with the sessions shaded."""
    def stamp(iso: str) -> str:  # Vega-Lite reads naive local time: keep the site's clock
        return dt.datetime.fromisoformat(iso).replace(tzinfo=None).isoformat()

    rows = [{"time": stamp(w["time"]), "density_altitude_m": w["density_altitude_m"],
             "area_factor": w["area_factor"]} for w in plan["weather"]]
    windows = [{"start": stamp(s["start"]), "end": stamp(s["end"]), "session": s["name"]} for s in plan["sessions"]]
    x = alt.X("time:T", title="site local time", axis=alt.Axis(format="%a %H:%M", labelFontSize=9))

    def panel(field: str, title: str) -> alt.LayerChart:
        shade = alt.Chart(alt.Data(values=windows)).mark_rect(color="#e4e4e4").encode(x="start:T", x2="end:T")
        line = alt.Chart(alt.Data(values=rows)).mark_line(color="#000000", point=alt.OverlayMarkDef(
            color="#000000", size=14)).encode(x=x, y=alt.Y(f"{field}:Q", title=title, scale=alt.Scale(zero=False)))
        return alt.layer(shade, line).properties(width=width, height=height)

    return alt.vconcat(
        panel("density_altitude_m", "density altitude [m]"),
        panel("area_factor", "required jet-area factor"),
    ).properties(title=alt.TitleParams("Weather across the sessions (shaded)", fontSize=10, anchor="start")
                 ).configure_axis(labelFontSize=9, titleFontSize=9).configure_view(strokeWidth=0.5)


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


def svg_data_uri(svg: str) -> str:
    """The SVG as a ``data:`` URL for an ``<img>``: WeasyPrint lays it out about 15 % faster per
    sheet than the same SVG inline (its elements stay out of the page's style cascade)."""
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


@lru_cache(maxsize=256)
def _svg_of(spec_json: str) -> str:
    svg = vl_convert.vegalite_to_svg(json.loads(spec_json))
    # Drop the XML prolog if any, so the SVG can sit inline in HTML.
    return svg[svg.find("<svg"):] if "<svg" in svg else svg
