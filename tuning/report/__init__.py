"""Reports: tables, charts, HTML/PDF rendering and the papermill build. No physics here.

The report formats the plan document returned by ``tuning.plan.make_plan`` (format
``carbfleet-plan/1``) and computes nothing physical of its own.

Public API
----------
CAUTIONS
    The cautions printed on every sheet, in the fleet summary and quoted by the README.
WARNING_CODES
    The stable warning codes a plan may carry, with what each means.
load_plan(fleet_path, event_path, plan_path="") -> dict
render_setup_sheets(plan, out_dir, bikes=(), paper="a4") -> SheetBatch
render_fleet_report(plan, out_dir, paper="a4") -> FleetReport
build(fleet_path, event_path, out_dir, paper="a4", quiet=False, workers=2) -> BuildResult
build_from_plan(plan, out_dir, paper="a4", quiet=False, workers=2, ...) -> BuildResult
"""

from __future__ import annotations

CAUTIONS = (
    "Estimates only: confirm by a plug reading or a wideband oxygen sensor before hard riding. "
    "Between two sizes, choose the richer: a lean engine can seize or hole a piston. "
    "Work on a cold engine, away from sparks and flames, with fuel caught and good ventilation. "
    "Follow the manufacturer's service manual, the event's rules and local fire and workshop codes, "
    "and leave safety-critical work to a qualified mechanic. "
    "Return to the baseline settings before riding at low altitude again."
)

WARNING_CODES = {
    "factor-out-of-range": "the required jet-area factor lies outside the range the method is meant for",
    "ideal-outside-family": "the ideal size lies beyond the largest or smallest size of the jet family",
    "stock-shortage": "the recommended size is not on the shelf (or not enough of it)",
    "screw-out-of-range": "the mixture screw would leave its usable range: change the pilot jet instead",
    "window-too-wide": "conditions change so much within the session that one setting does not fit it all",
    "icing-risk": "cool, humid air: carburetor icing is possible",
    "cold-start": "cold morning: choke and a full warm-up before load",
    "hot-fuel": "hot session: fuel may percolate or vapour-lock; keep the fuel cool and shaded",
    "assumed-needle-geometry": "the needle geometry was assumed, not given: clip advice is approximate",
    "assumed-screw-range": "the mixture screw's usable range was assumed, not given",
    "no-needle": "no needle or clip position on record: the clip is not planned",
}

from tuning.report.tables import turns as turns_text  # noqa: E402
from tuning.report.render import (  # noqa: E402
    FleetReport,
    SheetBatch,
    load_plan,
    render_fleet_report,
    render_setup_sheets,
)


def build(*args, **kwargs):
    """Build the whole output folder; see :func:`tuning.report.pipeline.build`."""
    from tuning.report.pipeline import build as _build

    return _build(*args, **kwargs)


def build_from_plan(*args, **kwargs):
    """Build the output folder from a plan document; see :func:`tuning.report.pipeline.build_from_plan`."""
    from tuning.report.pipeline import build_from_plan as _build_from_plan

    return _build_from_plan(*args, **kwargs)


__all__ = [
    "CAUTIONS", "WARNING_CODES", "FleetReport", "SheetBatch", "load_plan", "render_fleet_report",
    "render_setup_sheets", "build", "build_from_plan", "turns_text",
]
