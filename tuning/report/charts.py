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

    rows = [{"time": stamp(w["time"]), "density_altitude": d.elevation_value(w["density_altitude_m"]),
             "area_factor": w["area_factor"]} for w in plan["weather"]]
    windows = [{"start": stamp(s["start"]), "end": stamp(s["end"]), "session": s["name"]} for s in plan["sessions"]]
    x = alt.X("time:T", title=d._("site local time"), axis=alt.Axis(format="%d.%m. %H:%M" if d.language == "de" else "%a %H:%M", labelFontSize=9))

    def panel(field: str, title: str) -> alt.LayerChart:
        shade = alt.Chart(alt.Data(values=windows)).mark_rect(color="#e4e4e4").encode(x="start:T", x2="end:T")
        line = alt.Chart(alt.Data(values=rows)).mark_line(color="#000000", point=alt.OverlayMarkDef(
            color="#000000", size=14)).encode(x=x, y=alt.Y(f"{field}:Q", title=title, scale=alt.Scale(zero=False)))
        return alt.layer(shade, line).properties(width=width, height=height)

    return alt.vconcat(
        panel("density_altitude", d._("density altitude [%(unit)s]") % {"unit": d.elevation_unit}),
        panel("area_factor", d._("jet-area factor, air only")),
    ).properties(title=alt.TitleParams(d._("Weather across the sessions (shaded)"), fontSize=10, anchor="start")
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


@lru_cache(maxsize=256)
def _svg_of(spec_json: str) -> str:
    svg = vl_convert.vegalite_to_svg(json.loads(spec_json))
    # Drop the XML prolog if any, so the SVG can sit inline in HTML.
    return svg[svg.find("<svg"):] if "<svg" in svg else svg
